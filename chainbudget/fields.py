"""Field schemas: how each key of a chain file is read, checked, documented and written back.

A `Field` pairs a TOML key with a `FieldKind` (the reader into SI floats, the writer back to
TOML text and the unit shown in the docs). Stage, supply and part modules declare their
fields here once; the loader, `chainbudget blocks` and the TOML writer all read the same
declaration.
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass
from typing import Any, ClassVar, NoReturn, TypeVar

from chainbudget import plausible, units
from chainbudget.plausible import Plausible
from chainbudget.units import UnitParseError, shown

_K = TypeVar("_K")
_V = TypeVar("_V")


def suggest(word: str, options: Iterable[str]) -> str:
    """A ``(did you mean "x"?)`` tail for a mistyped key or kind, or nothing."""
    close = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return f' (did you mean "{close[0]}"?)' if close else ""


def quoted(text: object, limit: int = 40) -> str:
    """Text from a file (a name, a key) as a message shows it, in double quotes: control
    characters escaped as Python does, cut to ``limit`` characters."""
    body = repr(str(text))[1:-1] if isinstance(text, str) else shown(text)
    if len(body) > limit:
        body = body[: limit - 3] + "..."
    return f'"{body}"'


def listing(options: Iterable[str], limit: int = 30) -> str:
    """Names for a message's "known: ..." list, each quoted safely, cut after ``limit``."""
    names = [str(option) for option in options]
    shownames = ", ".join(quoted(name, 30)[1:-1] for name in names[:limit])
    return shownames + (f", ... ({len(names) - limit} more)" if len(names) > limit else "")


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
    #: The tolerance class the field's part takes its default from ("pots", "beta"...);
    #: None: resistances and capacitances by their kind (chainbudget/tolerance.py).
    tolerance: str | None = None

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


def _with_unit(unit: str, within: Plausible | None = None) -> Callable[[float], str]:
    """The writer of a quantity: ``"4700.0 ohm"``; a value outside ``within``'s plausible
    range (kept because the file wrote its prefix in full) is written the same way, so that
    it reads back bit for bit and is still taken as meant."""

    def write(number: float) -> str:
        if within is None or within.dimension is None or within.holds(number):
            return f"{number!r} {unit}"
        return units.spelled_out(number, within.dimension)

    return write


def _within(read: Callable[[object], float], range_: Plausible) -> Callable[[object], float]:
    """``read``, then the plausibility check of `chainbudget.plausible` (after the sign rules,
    so that a negative value is told it must be positive)."""

    def checked(value: object) -> float:
        return range_.check(value, read(value), read)

    return checked


def _between(
    read: Callable[[object], float], low: float, high: float, expected: str
) -> Callable[[object], float]:
    """``read``, then a plain range check (no spelled-out escape: a gain, a temperature)."""

    def checked(value: object) -> float:
        number = read(value)
        if not low <= number <= high:
            raise UnitParseError(value, expected)
        return number

    return checked


def _read_position(value: object) -> float:
    number = units.parse_quantity(value, units.DIMENSIONLESS)
    if not 0.0 <= number <= 1.0:
        raise UnitParseError(value, "a pot position from 0 to 1")
    return number


# Pot tapers as catalogues mark them. The letters are the usage of pots made in Asia and
# sold in the US: A audio (log), B linear, C reverse log. European catalogues have used other
# letters (older ones marked linear with A and log with B or C; from memory, no source), so
# a letter is read in the first sense only: write "log" or "linear" where in doubt.
_TAPER_WORDS = {
    "linear": "linear", "lin": "linear", "b": "linear",
    "log": "log", "logarithmic": "log", "audio": "log", "a": "log",
}  # fmt: skip
# Reverse log (anti-log), the mirror image of the log law: 1 - g(1 - x) with
# g(x) = (10^(2x) - 1)/99 equals (1 - 100^-x)/0.99, which is the fraction-at-mid law
# (b^x - 1)/(b - 1) of `taper_fraction` with b = (1/m - 1)^2 = 0.01, i.e. m = 10/11.
REVERSE_LOG_MID = 10.0 / 11.0
_REVERSE_WORDS = ("c", "reverse log", "reverse audio", "anti log", "antilog", "reverse")
_TAPER_EXPECTED = (
    '"log" (or "A", "audio"), "linear" (or "B", "lin"), "reverse log" (or "C"), or the '
    'fraction at mid rotation, such as "10 %" or 0.1'
)


def _read_taper(value: object) -> str | float:
    if isinstance(value, str):
        word = " ".join(re.split(r"[\s_-]+", value.lower())).strip()
        if word in _TAPER_WORDS:
            return _TAPER_WORDS[word]
        if word in _REVERSE_WORDS:
            return REVERSE_LOG_MID
    if isinstance(value, bool):
        raise UnitParseError(value, _TAPER_EXPECTED)
    try:
        mid = units.parse_fraction(value)
    except UnitParseError:
        raise UnitParseError(value, _TAPER_EXPECTED) from None
    if not 0.0 < mid < 1.0:
        raise UnitParseError(value, _TAPER_EXPECTED + " (a fraction between 0 and 1)")
    return mid


def _read_bool(value: object) -> bool:
    if isinstance(value, bool):
        return value
    raise UnitParseError(value, "true or false")


# Characters a name or title may not hold: control characters, and the bidirectional
# overrides that make text show in another order than it reads.
_UNPRINTABLE_RE = re.compile(r"[\x00-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")


def _read_name(value: object) -> str:
    if not (isinstance(value, str) and value.strip()):
        raise UnitParseError(value, "a name in quotes")
    if _UNPRINTABLE_RE.search(value):
        raise UnitParseError(value, "a name in quotes without control characters")
    return value


def _read_integer(value: object) -> int:
    low, high = plausible.GRID_POINTS_PER_DECADE
    if isinstance(value, int) and not isinstance(value, bool) and low <= value <= high:
        return value
    raise UnitParseError(value, f"a whole number from {low} to {high}")


def _read_band(value: object) -> tuple[float, float]:
    expected = 'two frequencies, low first, such as ["20 Hz", "20 kHz"]'
    if not (isinstance(value, list) and len(value) == 2):
        raise UnitParseError(value, expected)
    lo, hi = (FREQUENCY.read(item) for item in value)
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


def _quantity_kind(
    unit: str,
    dimension: units.Dimension,
    range_: Plausible,
    sign: Callable[[Callable[[object], float], str], Callable[[object], float]] | None,
    what: str,
) -> FieldKind:
    """A quantity's field kind: read in ``dimension``, the sign rule, the plausible range."""
    read = _quantity(dimension)
    if sign is not None:
        read = sign(read, what)
    return FieldKind(unit, _within(read, range_), _with_unit(unit, range_))


RESISTANCE = _quantity_kind("ohm", units.OHM, plausible.PART_OHMS, _positive, "a resistance")
RESISTANCE_OR_ZERO = _quantity_kind(
    "ohm", units.OHM, plausible.SMALL_OHMS, _non_negative, "a resistance"
)
SOURCE_IMPEDANCE = _quantity_kind(
    "ohm", units.OHM, plausible.SOURCE_OHMS, _non_negative, "a source impedance"
)
LOAD_IMPEDANCE = _quantity_kind("ohm", units.OHM, plausible.LOAD_OHMS, _positive, "a load")
CAPACITANCE = FieldKind(
    "F",
    _within(_positive(_quantity(units.FARAD), "a capacitance"), plausible.CAPACITANCE),
    _with_unit("farad", plausible.CAPACITANCE),
)
FREQUENCY = _quantity_kind("Hz", units.HERTZ, plausible.FREQUENCY, _positive, "a frequency")
VOLTAGE = _quantity_kind("V", units.VOLT, plausible.VOLTAGE, None, "a voltage")
POSITIVE_VOLTAGE = _quantity_kind("V", units.VOLT, plausible.VOLTAGE, _positive, "a voltage")
VOLTAGE_OR_ZERO = _quantity_kind("V", units.VOLT, plausible.VOLTAGE, _non_negative, "a voltage")
CURRENT = _quantity_kind("A", units.AMPERE, plausible.CURRENT, _non_negative, "a current")
POSITIVE_CURRENT = _quantity_kind("A", units.AMPERE, plausible.CURRENT, _positive, "a current")
# Peaks: a plain "12 V" is the peak itself; "24 Vpp" and "8.49 Vrms" are converted to it.
PEAK_VOLTAGE = FieldKind(
    "V peak",
    _within(_positive(units.parse_peak, "a peak voltage"), plausible.VOLTAGE),
    _with_unit("V", plausible.VOLTAGE),
)
PEAK_CURRENT = FieldKind(
    "A peak",
    _within(
        _positive(lambda value: units.parse_peak(value, units.AMPERE), "a peak current"),
        plausible.CURRENT,
    ),
    _with_unit("A", plausible.CURRENT),
)
SLEW_RATE = _quantity_kind("V/s", units.SLEW, plausible.SLEW_RATE, _positive, "a slew rate")
NOISE_VOLTAGE = _quantity_kind(
    "V/rtHz", units.NOISE_VOLTAGE, plausible.NOISE_VOLTAGE, _non_negative, "a noise density"
)
NOISE_CURRENT = _quantity_kind(
    "A/rtHz", units.NOISE_CURRENT, plausible.NOISE_CURRENT, _non_negative, "a noise density"
)
THERMAL_RESISTANCE = _quantity_kind(
    "K/W",
    units.THERMAL_RESISTANCE,
    plausible.THERMAL_RESISTANCE,
    _non_negative,
    "a thermal resistance",
)
CHARGE = _quantity_kind("Ah", units.CHARGE, plausible.CHARGE, _positive, "a capacity")
TEMPERATURE = FieldKind(
    "degC",
    _between(units.parse_temperature, *plausible.TEMPERATURE_DEGC, plausible.TEMPERATURE_TEXT),
    _with_unit("degC"),
)
LEVEL = FieldKind(
    "level (Vrms, Vpk, Vpp, dBV, dBu)",
    _within(units.parse_level, plausible.LEVEL),
    _with_unit("Vrms", plausible.LEVEL),
)
GAIN = FieldKind("dB or ratio", units.parse_gain, float)


def _read_nonzero_gain(value: object) -> float:
    gain = units.parse_gain(value)
    low, _ = plausible.GAIN_RATIO
    if gain == 0.0:
        raise UnitParseError(value, 'a voltage gain other than zero, such as "26 dB" or 20')
    if abs(gain) < low:
        raise UnitParseError(value, "a voltage gain of at least -200 dB (a ratio of 1e-10)")
    return gain


def _read_open_loop_gain(value: object) -> float:
    gain = units.parse_gain(value)
    low, high = plausible.OPEN_LOOP_RATIO
    if not low <= gain <= high:
        raise UnitParseError(
            value, 'an open-loop gain from 0 to 200 dB, such as "100 dB" (a ratio of 1e5)'
        )
    return gain


NONZERO_GAIN = FieldKind("dB or ratio", _read_nonzero_gain, float)
OPEN_LOOP_GAIN = FieldKind("dB or ratio", _read_open_loop_gain, float)
DECIBELS = FieldKind(
    "dB",
    _between(units.parse_db, *plausible.DECIBELS, 'a figure from -200 to 200 dB, such as "65 dB"'),
    _with_unit("dB"),
)
FRACTION = FieldKind(
    "fraction or %",
    _between(
        _non_negative(units.parse_fraction, "a fraction"),
        *plausible.FRACTION,
        'a fraction from 0 to 10 (1000 %), such as 0.1 or "10 %"',
    ),
    float,
)
RATIO = FieldKind(
    "number",
    _between(
        _positive(units.parse_fraction, "a number"),
        *plausible.RATIO,
        "a number from 0.001 to 10 million",
    ),
    float,
)
POSITION = FieldKind("0..1", _read_position, float)
TAPER = FieldKind(
    '"log" (A) | "linear" (B) | "reverse log" (C) | fraction at mid', _read_taper, lambda v: v
)
FLAG = FieldKind("true | false", _read_bool, bool)
NAME = FieldKind("name", _read_name, str)
COUNT = FieldKind("whole number", _read_integer, int)
BAND = FieldKind(
    "[low, high] Hz", _read_band, lambda band: [FREQUENCY.write(band[0]), FREQUENCY.write(band[1])]
)


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
