"""chainbudget: gain, headroom, noise, drive and supply budgets for small audio amplifiers.

The Python API, for notebooks and scripts (described in docs/api.md)::

    import chainbudget as cb

    chain = cb.load("chains/busking_amp.toml")      # or cb.loads(text, name="...")
    budget = cb.compute(chain)
    louder = chain.replace("pre.feedback", "22k")   # a new, validated chain
    for finding in cb.compute(louder).findings:
        print(finding.severity, finding.code, finding.message)

Every input error is a `ChainError` (and a `ValueError`) with a one-line message naming the
file and the table path. Importing the package is light: the names that need numpy, scipy,
pint or rich are imported on first use (module ``__getattr__``, PEP 562), so the command
line and ``import chainbudget`` start fast.
"""

from __future__ import annotations

import importlib
import types
from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"


class ChainError(Exception):
    """Base of every error chainbudget reports to the user about its input.

    Each concrete error is also a `ValueError`; its message is one line naming the file, the
    table path of the offending value, what was given and what was expected.
    """


# Public name -> (module, attribute) it is read from on first use.
_LAZY: dict[str, tuple[str, str]] = {
    "load": ("chainbudget.chainfile", "load_chain"),
    "loads": ("chainbudget.chainfile", "loads_chain"),
    "compute": ("chainbudget.budget", "compute"),
    "Chain": ("chainbudget.chainfile", "Chain"),
    "Budget": ("chainbudget.budget", "Budget"),
    "Finding": ("chainbudget.finding", "Finding"),
}

__all__ = [
    "Budget",
    "Chain",
    "ChainError",
    "Finding",
    "__version__",
    "compute",
    "load",
    "loads",
]

if TYPE_CHECKING:
    from chainbudget.budget import Budget, compute
    from chainbudget.chainfile import Chain
    from chainbudget.chainfile import load_chain as load
    from chainbudget.chainfile import loads_chain as loads
    from chainbudget.finding import Finding


def __getattr__(name: str) -> Any:
    """Import a public name's module on first use (PEP 562)."""
    try:
        module, attribute = _LAZY[name]
    except KeyError:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}") from None
    return getattr(importlib.import_module(module), attribute)


def __dir__() -> list[str]:
    """The public names and the submodules loaded so far."""
    loaded = (
        name
        for name, value in globals().items()
        if isinstance(value, types.ModuleType) and value.__name__.startswith(f"{__name__}.")
    )
    return sorted({*__all__, *loaded})
