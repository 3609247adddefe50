"""Supply kinds: one module each; this registry maps the contract's kind names to them.

Each kind's module is imported when a chain first names the kind (`chainbudget.lazykinds`).
"""

from __future__ import annotations

from chainbudget.lazykinds import LazyKinds
from chainbudget.supplies.base import SupplyKind

KINDS: LazyKinds[SupplyKind] = LazyKinds(
    {
        "dc": ("chainbudget.supplies.dc", "DcSupply"),
        "rectified": ("chainbudget.supplies.rectified", "Rectified"),
        "regulator": ("chainbudget.supplies.regulator", "Regulator"),
        "rc_filter": ("chainbudget.supplies.rc_filter", "RcFilter"),
        "divider": ("chainbudget.supplies.divider", "Divider"),
    }
)
