"""chainbudget: gain, headroom, noise, drive and supply budgets for small audio amplifiers.

The Python API, for notebooks and scripts (described in docs/api.md)::

    import chainbudget as cb

    chain = cb.load("chains/busking_amp.toml")      # or cb.loads(text, name="...")
    budget = cb.compute(chain)
    louder = chain.replace("pre.feedback", "22k")   # a new, validated chain
    for finding in cb.findings(cb.compute(louder)):
        print(finding.severity, finding.code, finding.message)

Every input error is a `ChainError` (and a `ValueError`) with a one-line message naming the
file and the table path. Importing the package is light: the names that need numpy, scipy,
pint or rich are imported on first use (module ``__getattr__``, PEP 562), so the command
line and ``import chainbudget`` start fast.
"""

from __future__ import annotations

import importlib
import sys
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
    "findings": ("chainbudget.findings", "findings"),
    "Chain": ("chainbudget.chainfile", "Chain"),
    "Budget": ("chainbudget.budget", "Budget"),
    "Finding": ("chainbudget.findings", "Finding"),
}

__all__ = [
    "Budget",
    "Chain",
    "ChainError",
    "Finding",
    "__version__",
    "compute",
    "findings",
    "load",
    "loads",
]

if TYPE_CHECKING:
    from chainbudget.budget import Budget, compute
    from chainbudget.chainfile import Chain
    from chainbudget.chainfile import load_chain as load
    from chainbudget.chainfile import loads_chain as loads
    from chainbudget.findings import Finding, findings


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


class _Package(types.ModuleType):
    """The package module, keeping its public names when a submodule of the same name loads.

    Importing a submodule sets it as an attribute of its package; ``chainbudget.findings``
    (the package of rules) would then hide ``chainbudget.findings`` (the function of the
    API) once anything imported the rules. The submodule stays in ``sys.modules``, where
    ``from chainbudget.findings import ...`` finds it. (A module's class may be set to a
    subclass of ModuleType: Python Language Reference, "Customizing module attribute
    access".)
    """

    def __setattr__(self, name: str, value: object) -> None:
        if name in _LAZY and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package
