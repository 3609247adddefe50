"""Part tolerances as a chain file states them: the ``[tolerances]`` table and a stage's or
supply's ``tolerance = { field = "..." }`` overrides.

A tolerance is a bound, not a standard deviation (the contract's "Extensions: Tolerances"):
a 1 % resistor of value R lies in [0.99 R, 1.01 R]. The trade writes it ``"1 %"``, ``"5%"``,
``"+/-10 %"`` or ``"±10 %"``. A transistor's current gain is given as a range of factors
on its stated beta, ``[0.5, 2]`` (the default: about the 2:1 spread a data sheet's minimum
and typical figures span either side, common practice, no source), or as a symmetric
percentage.

Which fields take a tolerance, and from which class default, is read off the field: a
`chainbudget.fields.Field` may name its class (``tolerance="pots"``); otherwise resistances
are ``resistors`` and capacitances ``capacitors``.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from chainbudget import fields as f
from chainbudget.units import UnitParseError

# Part classes and their defaults (contract): a fraction either side, beta a factor range.
CLASSES = ("resistors", "capacitors", "pots", "references", "beta")
DEFAULT_FRACTIONS = {"resistors": 0.01, "capacitors": 0.10, "pots": 0.20, "references": 0.02}
DEFAULT_BETA = (0.5, 2.0)
# Past this a "tolerance" is no longer a bound on a part of that value (common practice, no
# source: the widest catalogue tolerances are -20/+80 % electrolytics, written as ranges).
MAX_FRACTION = 0.9

_PERCENT = re.compile(r"^\s*(?:\+/-|±|\+-)?\s*([0-9]*\.?[0-9]+(?:[eE][-+]?[0-9]+)?)\s*%\s*$")
EXPECTED = 'a tolerance such as "1 %", "5%", "+/-10 %" or "±10 %" (under 90 %)'
EXPECTED_BETA = 'a range of factors such as [0.5, 2] (low below 1, high above 1), or "50 %"'


def read_fraction(value: object) -> float:
    """A tolerance in the trade's notation as a fraction (``"1 %"`` -> 0.01).

    Raises
    ------
    UnitParseError
        Anything else: a bare number, a unit other than %, a negative or huge percentage.
    """
    match = _PERCENT.match(value) if isinstance(value, str) else None
    if match is None:
        raise UnitParseError(value, EXPECTED)
    fraction = float(match.group(1)) / 100.0
    if not 0.0 <= fraction <= MAX_FRACTION:
        raise UnitParseError(value, EXPECTED)
    return fraction


def read_beta(value: object) -> tuple[float, float]:
    """A beta range as factors on the stated beta: ``[0.5, 2]`` or a symmetric ``"50 %"``."""
    if isinstance(value, str):
        fraction = read_fraction(value)
        return (1.0 - fraction, 1.0 + fraction)
    if (
        isinstance(value, list)
        and len(value) == 2
        and all(isinstance(v, int | float) and not isinstance(v, bool) for v in value)
        and 0.0 < value[0] <= 1.0 <= value[1] <= 100.0
    ):
        return (float(value[0]), float(value[1]))
    raise UnitParseError(value, EXPECTED_BETA)


def part_class(fld: f.Field) -> str | None:
    """The tolerance class of a field, or None for a field that takes no tolerance."""
    named = getattr(fld, "tolerance", None)
    if named is not None:
        return str(named)
    if fld.kind in (f.RESISTANCE, f.RESISTANCE_OR_ZERO):
        return "resistors"
    if fld.kind is f.CAPACITANCE:
        return "capacitors"
    return None


def toleranced_fields(schema: Iterable[f.Field]) -> dict[str, str]:
    """Each field of a kind that takes a tolerance, and its class."""
    return {fld.key: cls for fld in schema if (cls := part_class(fld)) is not None}


Bound = float | tuple[float, float]


@dataclass(frozen=True)
class Tolerances:
    """The class defaults and every stage's or supply's own overrides.

    ``fractions``: class -> fraction either side; ``beta``: (low, high) factors;
    ``overrides``: ((table, name), field) -> a fraction, or (low, high) factors for beta.
    """

    fractions: Mapping[str, float] = field(default_factory=lambda: dict(DEFAULT_FRACTIONS))
    beta: tuple[float, float] = DEFAULT_BETA
    overrides: tuple[tuple[tuple[str, str], str, Bound], ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "fractions", f.frozen(self.fractions))

    def __hash__(self) -> int:
        return hash((tuple(sorted(self.fractions.items())), self.beta, self.overrides))

    def bound(self, table: str, name: str, key: str, cls: str) -> Bound:
        """The bound of one field: its own override, else its class default."""
        for owner, field_key, bound in self.overrides:
            if owner == (table, name) and field_key == key:
                return bound
        return self.beta if cls == "beta" else self.fractions[cls]

    def is_default(self) -> bool:
        return self == Tolerances()


def read_bound(value: object, cls: str) -> Bound:
    return read_beta(value) if cls == "beta" else read_fraction(value)


def read_class_defaults(data: Mapping[str, Any]) -> tuple[dict[str, float], tuple[float, float]]:
    """The ``[tolerances]`` table's class defaults; raises KeyError (unknown class) or
    UnitParseError (bad value) for the loader to report with its table path."""
    fractions = dict(DEFAULT_FRACTIONS)
    beta = DEFAULT_BETA
    for key, value in data.items():
        if key not in CLASSES:
            raise KeyError(key)
        if key == "beta":
            beta = read_beta(value)
        else:
            fractions[key] = read_fraction(value)
    return fractions, beta


def write_bound(bound: Bound) -> object:
    """A bound as the file would hold it (for writing a chain back)."""
    if isinstance(bound, tuple):
        return [bound[0], bound[1]]
    return f"{bound * 100.0:.12g} %"


_PERCENT_KIND = f.FieldKind('% ("1 %", "+/-1 %")', read_fraction, write_bound)
_BETA_KIND = f.FieldKind("[low, high] factors", read_beta, write_bound)
#: The ``[tolerances]`` table as ``chainbudget blocks`` and docs/format.md list it.
TOLERANCE_FIELDS = (
    f.Field("resistors", _PERCENT_KIND, "every resistor's tolerance", "1 %"),
    f.Field("capacitors", _PERCENT_KIND, "every capacitor's tolerance", "10 %"),
    f.Field("pots", _PERCENT_KIND, "every pot's track resistance", "20 %"),
    f.Field("references", _PERCENT_KIND, "a regulator's reference voltage", "2 %"),
    f.Field("beta", _BETA_KIND, "a transistor's current gain, drawn log-uniformly", "0.5x to 2x"),
)


def tolerance_note(schema: Iterable[f.Field]) -> str | None:
    """One line naming the fields of a kind that take a tolerance, and their classes."""
    takes = toleranced_fields(schema)
    if not takes:
        return None
    listed = ", ".join(f"{key} ({cls})" for key, cls in takes.items())
    return f'Takes a tolerance (tolerance = {{ field = "1 %" }}): {listed}.'
