"""Supply kinds: one module each; this registry maps the contract's kind names to them."""

from __future__ import annotations

from chainbudget.supplies.base import SupplyKind
from chainbudget.supplies.dc import DcSupply
from chainbudget.supplies.divider import Divider
from chainbudget.supplies.rc_filter import RcFilter
from chainbudget.supplies.rectified import Rectified
from chainbudget.supplies.regulator import Regulator

KINDS: dict[str, SupplyKind] = {
    kind.kind: kind for kind in (DcSupply(), Rectified(), Regulator(), RcFilter(), Divider())
}
