"""Field schemas: how each key of a chain file is read, checked, documented and written back.

A `Field` pairs a TOML key with a `FieldKind` (the reader into SI floats, the writer back to
TOML text and the unit shown in the docs). Stage, supply and part modules declare their
fields here once; the loader, `chainbudget blocks` and the TOML writer all read the same
declaration.
"""

from __future__ import annotations

import difflib
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass
from typing import Any, ClassVar, NoReturn, TypeVar

from chainbudget import units
from chainbudget.units import UnitParseError

_K = TypeVar("_K")
_V = TypeVar("_V")


def suggest(word: str, options: Iterable[str]) -> str:
    """A ``(did you mean "x"?)`` tail for a mistyped key or kind, or nothing."""
    close = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return f' (did you mean "{close[0]}"?)' if close else ""


class _Required:
    def __repr__(self) -> str:
        return "REQUIRED"


REQUIRED: Any = _Required()


@dataclass(frozen=True)
class FieldKind:
    """How a value of one kind is read from TOML and written back.

    Parameters
    ----------
    unit : str
        What the docs show as the unit or form ("ohm", "level", "0..1", ...).
    read : callable
        TOML value -> Python value (SI float, str, bool); raises UnitParseError.
    write : callable
        Python value -> TOML value that `read` turns back into an equal value.
    """

    unit: str
    read: Callable[[object], Any]
    write: Callable[[Any], Any]


@dataclass(frozen=True)
class Field:
    """One key of a table: its kind, its meaning and its default (REQUIRED when none)."""

    key: str
    kind: FieldKind
    meaning: str
    default: Any = REQUIRED

    @property
    def required(self) -> bool:
        return self.default is REQUIRED


def _positive(read: Callable[[object], float], what: str) -> Callable[[object], float]:
    def checked(value: object) -> float:
        number = read(value)
        if not number > 0.0:
            raise UnitParseError(value, f"{what} above zero")
        return number

    return checked


def _non_negative(read: Callable[[object], float], what: str) -> Callable[[object], float]:
    def checked(value: object) -> float:
        number = read(value)
        if number < 0.0:
            raise UnitParseError(value, f"{what} of zero or more")
        return number

    return checked


def _quantity(dimension: units.Dimension) -> Callable[[object], float]:
    return lambda value: units.parse_quantity(value, dimension)


def _with_unit(unit: str) -> Callable[[float], str]:
    return lambda number: f"{number!r} {unit}"


def _read_position(value: object) -> float:
    number = units.parse_quantity(value, units.DIMENSIONLESS)
    if not 0.0 <= number <= 1.0:
        raise UnitParseError(value, "a pot position from 0 to 1")
    return number


def _read_taper(value: object) -> str | float:
    if value in ("linear", "log"):
        return str(value)
    if isinstance(value, int | float) and not isinstance(value, bool) and 0.0 < value < 1.0:
        return float(value)
    raise UnitParseError(value, '"linear", "log" or the fraction at mid rotation (0 to 1)')


def _read_bool(value: object) -> bool:
    if isinstance(value, bool):
        return value
    raise UnitParseError(value, "true or false")


def _read_name(value: object) -> str:
    if isinstance(value, str) and value.strip():
        return value
    raise UnitParseError(value, "a name in quotes")


def _read_integer(value: object) -> int:
    if isinstance(value, int) and not isinstance(value, bool) and value > 0:
        return value
    raise UnitParseError(value, "a whole number above zero")


def _read_band(value: object) -> tuple[float, float]:
    expected = 'two frequencies, low first, such as ["20 Hz", "20 kHz"]'
    if not (isinstance(value, list) and len(value) == 2):
        raise UnitParseError(value, expected)
    lo, hi = (units.parse_quantity(item, units.HERTZ) for item in value)
    if not 0.0 < lo < hi:
        raise UnitParseError(value, expected)
    return lo, hi


def choice(*options: str) -> FieldKind:
    """A field that takes one of a fixed set of words."""

    def read(value: object) -> str:
        if isinstance(value, str) and value in options:
            return value
        listed = ", ".join(f'"{option}"' for option in options)
        raise UnitParseError(value, f"one of {listed}")

    return FieldKind(" | ".join(options), read, str)


RESISTANCE = FieldKind("ohm", _positive(_quantity(units.OHM), "a resistance"), _with_unit("ohm"))
RESISTANCE_OR_ZERO = FieldKind(
    "ohm", _non_negative(_quantity(units.OHM), "a resistance"), _with_unit("ohm")
)
CAPACITANCE = FieldKind(
    "F", _positive(_quantity(units.FARAD), "a capacitance"), _with_unit("farad")
)
FREQUENCY = FieldKind("Hz", _positive(_quantity(units.HERTZ), "a frequency"), _with_unit("Hz"))
VOLTAGE = FieldKind("V", _quantity(units.VOLT), _with_unit("V"))
POSITIVE_VOLTAGE = FieldKind("V", _positive(_quantity(units.VOLT), "a voltage"), _with_unit("V"))
VOLTAGE_OR_ZERO = FieldKind("V", _non_negative(_quantity(units.VOLT), "a voltage"), _with_unit("V"))
CURRENT = FieldKind("A", _non_negative(_quantity(units.AMPERE), "a current"), _with_unit("A"))
POSITIVE_CURRENT = FieldKind("A", _positive(_quantity(units.AMPERE), "a current"), _with_unit("A"))
SLEW_RATE = FieldKind("V/s", _positive(_quantity(units.SLEW), "a slew rate"), _with_unit("V/s"))
NOISE_VOLTAGE = FieldKind(
    "V/rtHz",
    _non_negative(_quantity(units.NOISE_VOLTAGE), "a noise density"),
    _with_unit("V/rtHz"),
)
NOISE_CURRENT = FieldKind(
    "A/rtHz",
    _non_negative(_quantity(units.NOISE_CURRENT), "a noise density"),
    _with_unit("A/rtHz"),
)
THERMAL_RESISTANCE = FieldKind(
    "K/W",
    _non_negative(_quantity(units.THERMAL_RESISTANCE), "a thermal resistance"),
    _with_unit("K/W"),
)
CHARGE = FieldKind("Ah", _positive(_quantity(units.CHARGE), "a capacity"), _with_unit("Ah"))
TEMPERATURE = FieldKind("degC", units.parse_temperature, _with_unit("degC"))
LEVEL = FieldKind("level (Vrms, Vpk, Vpp, dBV, dBu)", units.parse_level, _with_unit("Vrms"))
GAIN = FieldKind("dB or ratio", units.parse_gain, float)


def _read_nonzero_gain(value: object) -> float:
    gain = units.parse_gain(value)
    if gain == 0.0:
        raise UnitParseError(value, 'a voltage gain other than zero, such as "26 dB" or 20')
    return gain


NONZERO_GAIN = FieldKind("dB or ratio", _read_nonzero_gain, float)
DECIBELS = FieldKind("dB", units.parse_db, _with_unit("dB"))
FRACTION = FieldKind("fraction or %", _non_negative(units.parse_fraction, "a fraction"), float)
RATIO = FieldKind("number", _positive(units.parse_fraction, "a number"), float)
POSITION = FieldKind("0..1", _read_position, float)
TAPER = FieldKind('"linear" | "log" | fraction at mid', _read_taper, lambda v: v)
FLAG = FieldKind("true | false", _read_bool, bool)
NAME = FieldKind("name", _read_name, str)
COUNT = FieldKind("whole number", _read_integer, int)
BAND = FieldKind("[low, high] Hz", _read_band, lambda band: [f"{band[0]!r} Hz", f"{band[1]!r} Hz"])


class FrozenMapping(Mapping[_K, _V]):
    """A read-only mapping that keeps its insertion order, compares by value and hashes.

    A chain is a value: two chains read from the same text are equal, and a chain can key a
    cache or sit in a set. Its stage and supply values and its parts libraries are held in
    this type so that nothing downstream can change a validated chain in place. Reading is
    the `Mapping` interface (``m[key]``, ``m.get``, iteration, ``len``, ``in``); equality
    with any mapping holding the same items, as for a dict. Hashing needs every value to be
    hashable (the loader's values are floats, strings, bools, None and tuples).
    """

    __slots__ = ("_items", "_hash")
    _items: dict[_K, _V]
    _hash: int | None

    def __init__(self, items: Mapping[_K, _V] | Iterable[tuple[_K, _V]] = ()) -> None:
        object.__setattr__(self, "_items", dict(items))
        object.__setattr__(self, "_hash", None)

    def __getitem__(self, key: _K) -> _V:
        return self._items[key]

    def __iter__(self) -> Iterator[_K]:
        return iter(self._items)

    def __len__(self) -> int:
        return len(self._items)

    def __contains__(self, key: object) -> bool:
        return key in self._items

    def __eq__(self, other: object) -> bool:
        if isinstance(other, FrozenMapping):
            return self._items == other._items
        if isinstance(other, Mapping):
            return self._items == dict(other.items())
        return NotImplemented

    def __hash__(self) -> int:
        # Order-free, as equality is: {a, b} equals {b, a}.
        if self._hash is None:
            object.__setattr__(self, "_hash", hash(frozenset(self._items.items())))
        assert self._hash is not None
        return self._hash

    def __setattr__(self, name: str, value: object) -> NoReturn:
        raise AttributeError(f"{type(self).__name__} is read-only")

    def __delattr__(self, name: str) -> NoReturn:
        raise AttributeError(f"{type(self).__name__} is read-only")

    def __reduce__(self) -> tuple[type[FrozenMapping[_K, _V]], tuple[dict[_K, _V]]]:
        return type(self), (self._items,)

    def __repr__(self) -> str:
        return f"{type(self).__name__}({self._items!r})"


def frozen(items: Mapping[_K, _V]) -> FrozenMapping[_K, _V]:
    """``items`` as a `FrozenMapping` (itself when it is one already)."""
    return items if isinstance(items, FrozenMapping) else FrozenMapping(items)


def _short(value: object) -> str:
    """A value as a compact repr shows it: floats to six significant figures."""
    if isinstance(value, float):
        return f"{value:.6g}"
    return repr(value)


def brief(pairs: Iterable[tuple[str, object]], limit: int = 120) -> str:
    """``key=value`` pairs for a compact repr, unset (None) values left out, cut after about
    ``limit`` characters with a count of the pairs not shown."""
    shown = [f"{key}={_short(value)}" for key, value in pairs if value is not None]
    text = ""
    for count, pair in enumerate(shown):
        if text and len(text) + len(pair) > limit:
            return f"{text} ... (+{len(shown) - count} more)"
        text = f"{text} {pair}" if text else pair
    return text


@dataclass(frozen=True)
class TableEntry:
    """One validated entry of an array of tables (``[[stage]]``, ``[[supply]]``): its 1-based
    ``index`` as the table path in messages shows it, name, kind and SI values with defaults
    filled in, held read-only (a `FrozenMapping`, whatever mapping it was built from)."""

    table: ClassVar[str]
    index: int
    name: str
    kind: str
    values: Mapping[str, Any]

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", frozen(self.values))

    def __init_subclass__(cls, **kwargs: Any) -> None:
        # A subclass declared as a dataclass would get the generated repr, which prints
        # every value; placing this class's compact repr in the subclass's own namespace
        # before the decorator runs keeps it (dataclasses never replace a method a class
        # defines itself). A subclass that writes its own repr keeps that.
        super().__init_subclass__(**kwargs)
        if "__repr__" not in cls.__dict__:
            cls.__repr__ = TableEntry.__repr__  # type: ignore[method-assign]

    def __repr__(self) -> str:
        head = f"<{type(self).__name__} {self.path} {self.kind}"
        values = brief(self.values.items())
        return f"{head}: {values}>" if values else f"{head}>"

    def number(self, key: str) -> float:
        return float(self.values[key])

    def optional(self, key: str) -> float | None:
        value = self.values.get(key)
        return None if value is None else float(value)

    @property
    def path(self) -> str:
        return f'{self.table}[{self.index}] "{self.name}"'
