"""Reading physical values and audio levels from text into plain SI floats.

The one pint registry of the project lives here. Everything downstream of the loader works
in SI floats (V, ohm, A, F, Hz, s, W, K/W; degC for temperatures), so pint appears only at
this edge and at the display edge. The units chain files write most (`KNOWN_UNITS`) are
converted here by pint's own factors without importing pint, which is then loaded only for
a value in any other unit.
"""

from __future__ import annotations

import math
import os
import re
import reprlib
import sys
from dataclasses import dataclass
from decimal import Decimal
from functools import lru_cache
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pint is imported when the first quantity is read, not at import
    import pint

from chainbudget import ChainError

# The audio dBu reference: 1 mW into 600 ohm, sqrt(0.6) V rms (common practice, no source).
DBU_REFERENCE_VRMS = math.sqrt(0.6)
DBV_REFERENCE_VRMS = 1.0
ABSOLUTE_ZERO_KELVIN_IN_DEGC = 273.15  # 0 K = -273.15 degC (SI Brochure, 9th ed., sec. 2.3.1)


# A message echoes what the file held, never more than this much of it.
_GIVEN_LIMIT = 60
_REPR = reprlib.Repr()
_REPR.maxstring = _GIVEN_LIMIT
_REPR.maxother = _GIVEN_LIMIT
_REPR.maxlevel = 2
_REPR.maxlist = _REPR.maxdict = 4


def shown(value: object) -> str:
    """A value from a file as a message shows it: its repr (control characters escaped),
    cut to a few dozen characters, safe for any depth of nesting."""
    return _REPR.repr(value)


class UnitParseError(ValueError, ChainError):
    """A value that could not be read as the quantity a field expects.

    The loader turns it into a `ChainFileError` that adds the file and the table path; it
    is a `ChainError` itself so that no input error of any layer escapes the user's
    ``except chainbudget.ChainError``.
    """

    def __init__(self, given: object, expected: str) -> None:
        super().__init__(f"got {shown(given)}, expected {expected}")
        self.given = given
        self.expected = expected


def registry_cache_folder() -> Path:
    """Where pint's parsed unit definitions are kept between runs.

    ``$XDG_CACHE_HOME/chainbudget`` (``~/.cache/chainbudget`` when the variable is unset or
    not absolute, as the XDG base directory specification says), in a folder named after
    the pint and Python versions, since the cache holds pickled pint objects.
    """
    import pint

    base = os.environ.get("XDG_CACHE_HOME", "")
    root = Path(base) if os.path.isabs(base) else Path.home() / ".cache"
    python = f"{sys.version_info.major}.{sys.version_info.minor}"
    return root / "chainbudget" / f"pint-{pint.__version__}-py{python}"


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """Return the project's single pint registry (created once per process).

    Parsing pint's definition files is most of the registry's cost, so the parsed form is
    kept in `registry_cache_folder` (pint's ``cache_folder``) and reused on the next run.
    A cache that cannot be made, written or read never fails the command: the registry is
    then built without one, and a cache that fails to load is cleared so the next run
    writes it afresh.
    """
    import pint

    folder: Path | None = None
    try:
        folder = registry_cache_folder()
        reg: pint.UnitRegistry = pint.UnitRegistry(
            cache_folder=folder, autoconvert_offset_to_baseunit=True
        )
    except Exception:  # no home, unwritable, a file in the way, a truncated pickle...
        if folder is not None:
            _clear_cache(folder)
        reg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return reg


def _clear_cache(folder: Path) -> None:
    """Remove what pint's cache left in ``folder`` (only its own .pickle and .json files)."""
    try:
        for entry in folder.iterdir():
            if entry.suffix in (".pickle", ".json"):
                entry.unlink()
    except OSError:
        pass


@dataclass(frozen=True)
class Dimension:
    """A kind of physical value: the SI unit its floats are in and how to name it."""

    si_unit: str
    description: str
    example: str


OHM = Dimension("ohm", "a resistance", '"10 kohm" or "4k7"')
FARAD = Dimension("farad", "a capacitance", '"47 nF" or "4n7"')
HERTZ = Dimension("hertz", "a frequency", '"1 kHz"')
VOLT = Dimension("volt", "a voltage", '"15 V"')
AMPERE = Dimension("ampere", "a current", '"25 mA"')
WATT = Dimension("watt", "a power", '"2 W"')
SLEW = Dimension("volt / second", "a slew rate", '"7 V/us"')
NOISE_VOLTAGE = Dimension("volt / hertz ** 0.5", "a noise voltage density", '"4.5 nV/rtHz"')
NOISE_CURRENT = Dimension("ampere / hertz ** 0.5", "a noise current density", '"0.7 pA/rtHz"')
THERMAL_RESISTANCE = Dimension("kelvin / watt", "a thermal resistance", '"50 K/W"')
CHARGE = Dimension("ampere * hour", "a battery capacity", '"2.2 Ah"')
DIMENSIONLESS = Dimension("dimensionless", "a plain number", "200")

_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"

# IEC 60062 letter-for-decimal code: the letter stands for the decimal point and the
# multiplier ("4k7" = 4.7e3, "470R" = 470, "2n2" = 2.2e-9). The field's base unit may follow
# ("4k7 ohm", "2u2F"), as some schematics print it.
_RESISTOR_CODE = {"R": 1.0, "r": 1.0, "k": 1e3, "K": 1e3, "M": 1e6, "G": 1e9}
_CAPACITOR_CODE = {"p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3}
_CODE_RE = re.compile(r"^\s*(\d+(?:\.\d+)?|\d*)([A-Za-zµμ])(\d*)\s*((?i:ohms?)|Ω|F)?\s*$")
_NUMBER_RE = re.compile(rf"^\s*({_NUMBER})\s*(.*?)\s*$", re.S)
_ROOT_HZ_RE = re.compile(
    r"(rt\s*\(?\s*Hz\s*\)?|√\s*\(?\s*Hz\s*\)?|sqrt\s*\(?\s*Hz\s*\)?|Hz\s*\*\*\s*\(?\s*0?\.5\s*\)?"
    r"|Hz\s*\^\s*\(?\s*(?:0?\.5|1/2)\s*\)?)",
    re.I,
)


def _letter_code(text: str, dimension: Dimension) -> float | None:
    """Read an IEC 60062 code such as ``4k7`` or ``2n2``; None when it is not one."""
    table = {OHM: _RESISTOR_CODE, FARAD: _CAPACITOR_CODE}.get(dimension)
    match = _CODE_RE.match(text)
    if table is None or match is None:
        return None
    whole, letter, fraction, unit = match.groups()
    if letter not in table or (not whole and not fraction):
        return None
    if unit is not None and (unit == "F") != (dimension is FARAD):
        return None  # "4k7 F" or "2n2 ohm": the unit contradicts the field
    if "." in whole:
        if fraction:  # "4.7k7" is no code
            return None
        return float(whole) * table[letter]  # "4.7k": the letter as a plain multiplier
    number = float(f"{whole or '0'}.{fraction or '0'}")
    return number * table[letter]


# --- unit spellings ---------------------------------------------------------------------------

# SI prefixes written in full. A value whose prefix is written out ("1 milliohm") is taken
# as meant even where it looks implausible for its field (see `chainbudget.plausible`).
_SPELLED_PREFIX = {
    "pico": -12,
    "nano": -9,
    "micro": -6,
    "milli": -3,
    "kilo": 3,
    "mega": 6,
    "giga": 9,
}
_SPELLED_UNIT = {OHM: "ohm", FARAD: "farad", HERTZ: "hertz", VOLT: "volt", AMPERE: "ampere"}
_SPELLED_RE = re.compile(
    rf"^\s*({_NUMBER})\s*({'|'.join(_SPELLED_PREFIX)})\s*-?\s*"
    r"(ohm|farad|hertz|volt|ampere|amp)s?\s*$",
    re.I,
)
# The trade's contractions of a spelled prefix and ohm ("megohm", "kilohm").
_CONTRACTIONS = {"megohm": "megaohm", "kilohm": "kiloohm", "gigohm": "gigaohm"}


def _word(match: re.Match[str]) -> str:
    """One word of a unit in the form pint reads: ohm in any case ("kOhm", "OHMS"), the
    trade's contractions ("megohm")."""
    word = match.group(0)
    lower = word.lower()
    if lower.rstrip("s") in _CONTRACTIONS:
        return _CONTRACTIONS[lower.rstrip("s")]
    parts = re.fullmatch(r"(.*?)(ohms?)", word, re.I)
    if parts is None:
        return word
    prefix = parts.group(1)
    return (prefix.lower() if prefix.lower() in _SPELLED_PREFIX else prefix) + "ohm"


_WORD_RE = re.compile(r"[A-Za-zµμ]+")


def _normalise_unit_text(unit: str, dimension: Dimension) -> str:
    """A unit as written on datasheets and schematics, in the form pint reads."""
    unit = _ROOT_HZ_RE.sub("(Hz**0.5)", unit)
    unit = unit.replace("%", "percent").replace("Ω", "ohm").replace("Ω", "ohm")
    unit = unit.replace("μ", "u").replace("µ", "u")
    unit = re.sub(r"[°º]\s*C", "degC", unit)
    unit = re.sub(r"[°º]\s*F", "degF", unit)
    unit = _WORD_RE.sub(_word, unit)
    if dimension is THERMAL_RESISTANCE:
        # A temperature difference per watt is written with degC (or a bare C) as often as K.
        unit = re.sub(r"^(deg\s*C|C)\s*/", "K/", unit)
    return unit


# Case folding for a unit pint did not take ("uf", "KHz", "V/uS"): the base unit in any
# case, a prefix letter whose other case is no SI prefix (k/K, u/U, n/N, G/g) folded.
# m/M (milli/mega) and p/P (pico/peta) stay as written: there the case is the meaning.
_FOLD_BASES = {"ohm": "ohm", "hz": "Hz", "ah": "Ah", "fd": "F", "f": "F", "v": "V"}
_FOLD_BASES |= {"a": "A", "w": "W", "s": "s", "h": "h"}
_FOLD_PREFIXES = {"": "", "k": "k", "K": "k", "u": "u", "U": "u", "n": "n", "N": "n"}
_FOLD_PREFIXES |= {"G": "G", "g": "G", "m": "m", "M": "M", "p": "p"}
_FOLD_RE = re.compile(r"^([kKuUnNGgmMp]?)((?i:ohm|hz|ah|fd|f|v|a|w|s|h))$")


def _fold(unit: str) -> str:
    def fold(match: re.Match[str]) -> str:
        word = match.group(0)
        parts = _FOLD_RE.match(word)
        if parts is None:
            return word
        prefix, base = parts.groups()
        if prefix == "" and base.lower() == "h" and word == "H":
            return word  # henry
        return _FOLD_PREFIXES[prefix] + _FOLD_BASES[base.lower()]

    return _WORD_RE.sub(fold, unit)


# Older schematics wrote microfarad as "mf" or "mfd": in a capacitance field, a lower-case
# or upper-case "mf" is ambiguous between that and the SI millifarad "mF".
_AMBIGUOUS_FARAD_RE = re.compile(r"^(?:mfd|MFD|Mfd|mf|MF|Mf)$")


# The units chain files write most, each as the normalised text pint reads and the factor
# pint converts it to the field's SI unit by: pint's prefixes are these float literals
# (pint's default_en.txt, e.g. "micro- = 1e-6") and it converts a magnitude by one
# multiplication with the unit's factor, so ``number * factor`` here is pint's answer to
# the last bit (held against pint itself for every entry, tests/test_units.py). A value in
# any other unit goes to pint; pint is then imported (about a third of a second here),
# which a chain written in these units never needs.
_SI_PREFIXES = {"p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3, "": 1.0, "k": 1e3, "M": 1e6}
_SI_PREFIXES |= {"G": 1e9}
_PLAIN_SYMBOLS = {"ohm": "ohm", "farad": "F", "hertz": "Hz", "volt": "V", "ampere": "A"}
_PLAIN_SYMBOLS |= {"watt": "W", "henry": "H"}
KNOWN_UNITS: dict[str, dict[str, float]] = {
    si: {prefix + symbol: factor for prefix, factor in _SI_PREFIXES.items()}
    for si, symbol in _PLAIN_SYMBOLS.items()
}
KNOWN_UNITS["volt / second"] = {"V/us": 1e6, "V/ms": 1e3, "V/s": 1.0}
KNOWN_UNITS["volt / hertz ** 0.5"] = {
    p + "V/(Hz**0.5)": _SI_PREFIXES[p] for p in ("p", "n", "u", "m", "")
}
KNOWN_UNITS["ampere / hertz ** 0.5"] = {
    p + "A/(Hz**0.5)": _SI_PREFIXES[p] for p in ("p", "n", "u", "")
} | {"fA/(Hz**0.5)": 1e-15}
KNOWN_UNITS["kelvin / watt"] = {"K/W": 1.0}
KNOWN_UNITS["ampere * hour"] = {"Ah": 1.0, "mAh": 1e-3}
KNOWN_UNITS["dimensionless"] = {"percent": 0.01}


def _in_si(number: float, unit: str, dimension: Dimension) -> float | None:
    """The quantity in SI: from `KNOWN_UNITS` when the unit is there, else through pint;
    None when neither reads it as ``dimension``."""
    factor = KNOWN_UNITS.get(dimension.si_unit, {}).get(unit)
    if factor is not None:
        return number * factor
    return _with_pint(number, unit, dimension)


def _with_pint(number: float, unit: str, dimension: Dimension) -> float | None:
    """The quantity in SI, or None when pint cannot read it as ``dimension``."""
    try:
        quantity = registry().Quantity(number, unit)
        return float(quantity.to(dimension.si_unit).magnitude)
    except Exception:  # pint's unit parser raises many types (tokenize errors, asserts...)
        return None


def _spelled_value(text: str, dimension: Dimension) -> float | None:
    """A value with its prefix written in full ("1 milliohm"), read exactly: the decimal
    number shifted by the prefix's power of ten, then rounded once to a float."""
    match = _SPELLED_RE.match(_CONTRACTION_RE.sub(_contract, text))
    if match is None or _SPELLED_UNIT.get(dimension) != _unit_word(match.group(3)):
        return None
    shifted = Decimal(match.group(1)).scaleb(_SPELLED_PREFIX[match.group(2).lower()])
    return float(shifted)


_CONTRACTION_RE = re.compile("|".join(_CONTRACTIONS), re.I)


def _contract(match: re.Match[str]) -> str:
    return _CONTRACTIONS[match.group(0).lower()]


def _unit_word(word: str) -> str:
    word = word.lower()
    return "ampere" if word == "amp" else word


def is_spelled_out(value: object) -> bool:
    """Whether a value's prefix is written in full (``"1 milliohm"``, ``"2 megohm"``)."""
    return isinstance(value, str) and bool(_SPELLED_RE.match(_CONTRACTION_RE.sub(_contract, value)))


def spelled_out(number: float, dimension: Dimension) -> str:
    """``number`` (SI) written with its prefix in full, so that it reads back exactly and is
    taken as meant: ``1e-3, OHM`` -> ``"1 milliohm"``."""
    unit = _SPELLED_UNIT[dimension]
    magnitude = abs(number)
    power = 3 * math.floor(math.log10(magnitude) / 3) if magnitude > 0 else -3
    power = min(max(power, -12), 9) or -3
    prefix = next(name for name, p in _SPELLED_PREFIX.items() if p == power)
    digits = Decimal(repr(number)).scaleb(-power).normalize()
    return f"{digits:f} {prefix}{unit}"


_PREFIX_SWAP_RE = re.compile(rf"^(\s*{_NUMBER}\s*)([mM])([A-Za-zΩ].*)$")


def case_readings(value: object) -> list[str]:
    """Other readings of a value whose prefix letter's case may be a slip: ``"1 mohm"`` ->
    ``["1 Mohm", "1 ohm"]`` (the prefix's other case, then no prefix)."""
    if not isinstance(value, str):
        return []
    match = _PREFIX_SWAP_RE.match(value)
    if match is None:
        return []
    head, letter, rest = match.groups()
    return [head + letter.swapcase() + rest, head + rest]


def parse_quantity(value: object, dimension: Dimension) -> float:
    """Read ``value`` as a quantity of ``dimension`` and return it in SI units.

    Parameters
    ----------
    value : str or number
        Text such as ``"10 kohm"``, ``"4k7"``, ``"4.7 kOhm"``, ``"2.2 uf"``, ``"7 V/us"``,
        ``"8 nV/rtHz"``, ``"1 milliohm"``; a bare number only where the dimension is
        dimensionless.
    dimension : Dimension
        What the field holds.

    Returns
    -------
    float
        The magnitude in ``dimension.si_unit``.

    Raises
    ------
    UnitParseError
        When the text is not a number with a unit of the right dimension.

    Notes
    -----
    Spellings: pint's own units; IEC 60062 letter codes for resistors and capacitors, a
    base unit after them allowed; ohm in any case ("kOhm", "OHMS", "Ω", "megohm");
    root-hertz as rtHz, √Hz, sqrt(Hz), sqrtHz, Hz^0.5, Hz**0.5; degC, °C or a bare C before
    "/W" in a thermal resistance. When pint takes none of that, the unit is read once more
    with its case folded where the case carries no meaning ("uf" -> uF, "KHz" -> kHz,
    "V/uS" -> V/us); m and M (milli, mega) and p and P (pico, peta) are never folded.
    """
    expected = f"{dimension.description} such as {dimension.example}"
    if isinstance(value, bool):
        raise UnitParseError(value, expected)
    if isinstance(value, int | float):
        if dimension is not DIMENSIONLESS:
            raise UnitParseError(value, expected + " (a bare number has no unit)")
        if not math.isfinite(value):  # TOML has nan and inf literals
            raise UnitParseError(value, expected + " (a finite number)")
        return float(value)
    if not isinstance(value, str):
        raise UnitParseError(value, expected)
    result = _letter_code(value, dimension)
    if result is None:
        result = _spelled_value(value, dimension)
    if result is None:
        match = _NUMBER_RE.match(value)
        if match is None:
            raise UnitParseError(value, expected)
        number, written = float(match.group(1)), match.group(2)
        if not written:
            if dimension is DIMENSIONLESS:
                return number
            raise UnitParseError(value, expected + " (a bare number has no unit)")
        if dimension is FARAD and _AMBIGUOUS_FARAD_RE.match(written):
            raise UnitParseError(
                value,
                'a capacitance in "uF" (microfarad) or "mF" (millifarad): "mf" has meant either',
            )
        unit = _normalise_unit_text(written, dimension)
        result = _in_si(number, unit, dimension)
        if result is None and _fold(unit) != unit:
            result = _in_si(number, _fold(unit), dimension)
        if result is None:
            raise UnitParseError(value, expected)
    if not math.isfinite(result):
        raise UnitParseError(value, expected + " (a finite number)")
    return result


# Temperatures: the units written on datasheets for degrees Celsius and Fahrenheit.
_CELSIUS_RE = re.compile(r"^(?:deg\s*C|[°º]\s*C|C|degrees?\s*C|celsius|centigrade)$", re.I)
_FAHRENHEIT_RE = re.compile(r"^(?:deg\s*F|[°º]\s*F|F|degrees?\s*F|fahrenheit)$", re.I)


def parse_temperature(value: object) -> float:
    """Read a temperature (``"30 degC"``, ``"40 C"``, ``"40 °C"``, ``"300 K"``,
    ``"86 degF"``) and return degC; a bare C or F is Celsius or Fahrenheit here, never the
    coulomb or the farad."""
    expected = 'a temperature such as "30 degC" or "300 K"'
    if not isinstance(value, str):
        raise UnitParseError(value, expected)
    match = _NUMBER_RE.match(value)
    if match is None or not match.group(2):
        raise UnitParseError(value, expected)
    unit = match.group(2)
    if _CELSIUS_RE.match(unit):
        unit = "degC"
        celsius = float(match.group(1))  # as pint reads degC in degC: unchanged
        if math.isfinite(celsius) and celsius >= -ABSOLUTE_ZERO_KELVIN_IN_DEGC:
            return celsius
    elif _FAHRENHEIT_RE.match(unit):
        unit = "degF"
    try:
        quantity = registry().Quantity(float(match.group(1)), unit)
        celsius = float(quantity.to("degC").magnitude)
    except Exception:  # pint's unit parser raises many types (tokenize errors, asserts...)
        raise UnitParseError(value, expected) from None
    if not math.isfinite(celsius) or celsius < -ABSOLUTE_ZERO_KELVIN_IN_DEGC:
        raise UnitParseError(value, expected + " (above absolute zero)")
    return celsius


def _finite_ratio(decibels: float, value: object, expected: str) -> float:
    """10^(dB/20), refusing figures too large for a float (``"1e6 dB"``)."""
    try:
        ratio = 10.0 ** (decibels / 20.0)
    except OverflowError:
        ratio = math.inf
    if not math.isfinite(ratio):
        raise UnitParseError(value, expected + " (a finite figure)")
    return ratio


_DB_RE = re.compile(rf"^\s*({_NUMBER})\s*dB\s*$")


def parse_db(value: object) -> float:
    """Read a plain decibel figure such as ``"65 dB"`` and return the number of dB."""
    if isinstance(value, str):
        match = _DB_RE.match(value)
        if match:
            return float(match.group(1))
    raise UnitParseError(value, 'a figure in decibels such as "65 dB"')


# No audio gain stage or open-loop gain comes near 200 dB; past it a figure is a typo and
# would overflow the network's arithmetic.
MAX_GAIN_RATIO = 1e10
# A ratio written as schematics and datasheets do: "x20", "×20", "20x", "20 V/V".
_TIMES_RE = re.compile(rf"^\s*(?:[x×X]\s*({_NUMBER})|({_NUMBER})\s*(?:[x×X]|V/V))\s*$")


def parse_gain(value: object) -> float:
    """Read a voltage gain given in dB (``"26 dB"``) or as a plain ratio (``20``, ``"x20"``,
    ``"20 V/V"``); a ratio of magnitude at most 1e10 (200 dB)."""
    expected = 'a voltage gain such as "26 dB", "x20" or a plain ratio such as 20, up to 200 dB'
    gain: float | None = None
    if isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value):
        gain = float(value)
    elif isinstance(value, str):
        match = _DB_RE.match(value)
        bare = _NUMBER_RE.match(value)
        times = _TIMES_RE.match(value)
        if match:
            gain = _finite_ratio(float(match.group(1)), value, expected)
        elif times:
            gain = float(times.group(1) or times.group(2))
        elif bare and not bare.group(2):
            gain = float(bare.group(1))
    if gain is None or not math.isfinite(gain) or abs(gain) > MAX_GAIN_RATIO:
        raise UnitParseError(value, expected)
    return gain


def parse_fraction(value: object) -> float:
    """Read a fraction given as a plain number (``0.1``) or a percentage (``"10 %"``)."""
    return parse_quantity(value, DIMENSIONLESS)


# Sine measures: every form of a voltage (or current) is named by how it is measured.
# rms (also "AC", as mains transformers and meters mark it), peak ("pk", "p", "peak") and
# peak-to-peak ("pp", "p-p", "pk-pk"); for a sine peak = rms sqrt(2) and pp = 2 peak
# (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 1.7.1).
RMS, PEAK, PEAK_TO_PEAK = "rms", "peak", "peak-to-peak"
_FORMS = {
    "rms": RMS, "ac": RMS, "pk": PEAK, "p": PEAK, "peak": PEAK, "pp": PEAK_TO_PEAK,
    "p-p": PEAK_TO_PEAK, "pk-pk": PEAK_TO_PEAK, "pkpk": PEAK_TO_PEAK,
}  # fmt: skip
_TO_PEAK = {RMS: math.sqrt(2.0), PEAK: 1.0, PEAK_TO_PEAK: 0.5}
_TO_RMS = {RMS: 1.0, PEAK: 1.0 / math.sqrt(2.0), PEAK_TO_PEAK: 0.5 / math.sqrt(2.0)}
_MEASURE_RE = re.compile(
    rf"^\s*({_NUMBER})\s*(?:(dBu|dBV)|([munµμkM]?)([VA])\s*"
    r"(?:\(?\s*(pk-pk|p-p|pkpk|peak|pp|pk|p|rms|ac)\s*\)?)?)\s*$",
    re.I,
)
_MEASURE_PREFIX = {"": 1.0, "m": 1e-3, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "n": 1e-9, "k": 1e3}
_MEASURE_PREFIX["M"] = 1e6
# Past these no signal of a small amplifier lies and the arithmetic of levels in dB would
# lose its meaning (a level of 1e-300 V is zero in all but name).
LEVEL_FLOOR_V, LEVEL_CEILING_V = 1e-12, 1e6


def _measure(value: str, base: str, expected: str) -> tuple[float, str | None] | None:
    """A voltage (``base`` "V") or current ("A") with its sine measure: (SI magnitude,
    rms/peak/peak-to-peak, or None when plain); dBu and dBV are rms. None when the text is
    not in that form."""
    match = _MEASURE_RE.match(value)
    if match is None:
        return None
    number, decibel, prefix, unit, form = match.groups()
    if decibel is not None:
        if base != "V" or decibel not in ("dBu", "dBV"):
            return None
        reference = DBU_REFERENCE_VRMS if decibel == "dBu" else DBV_REFERENCE_VRMS
        return reference * _finite_ratio(float(number), value, expected), RMS
    if unit.upper() != base or prefix not in _MEASURE_PREFIX:
        return None
    return float(number) * _MEASURE_PREFIX[prefix], None if form is None else _FORMS[form.lower()]


def _sine_measure(
    value: object, base: str, dimension: Dimension, expected: str
) -> tuple[float, str | None]:
    """A sine measure (`_measure`), or a plain quantity of ``dimension`` in any spelling
    `parse_quantity` takes ("300 millivolt")."""
    measured = _measure(value, base, expected) if isinstance(value, str) else None
    if measured is not None:
        return measured
    try:
        return parse_quantity(value, dimension), None
    except UnitParseError:
        raise UnitParseError(value, expected) from None


def parse_level(value: object) -> float:
    """Read an audio signal level and return the rms voltage of the equivalent sine.

    Notes
    -----
    ``V``, ``Vrms`` and ``VAC`` are rms; ``Vpk``/``Vp`` the peak, rms = pk / sqrt(2);
    ``Vpp`` the peak-to-peak, rms = pp / (2 sqrt(2)); ``dBV`` is re 1 V rms; ``dBu`` is re
    sqrt(0.6) V rms (0.7746 V, 1 mW in 600 ohm). pint's own ``dBu`` (decibel-microwatt) is
    deliberately not used.
    """
    expected = 'a signal level such as "300 mV", "1.4 Vpk", "2.8 Vpp", "-10 dBV" or "+4 dBu"'
    if not isinstance(value, str):
        raise UnitParseError(value, expected)
    volts, form = _sine_measure(value, "V", VOLT, expected)
    return _within_levels(volts * _TO_RMS[form or RMS], value, expected)


def parse_peak(value: object, dimension: Dimension = VOLT) -> float:
    """Read a peak voltage (or, with ``dimension`` AMPERE, a peak current): a plain
    ``"12 V"`` is the peak itself; ``"12 Vpk"``/``"12 Vp"`` too; ``"24 Vpp"`` is 12 V peak
    and ``"8.49 Vrms"`` (or a dBu/dBV level) is the peak of that sine, 8.49 sqrt(2) = 12.0 V
    (Horowitz & Hill, 3rd ed., sec. 1.7.1). Signed as written."""
    base = "A" if dimension is AMPERE else "V"
    what = "current" if base == "A" else "voltage"
    expected = (
        f'a peak {what} such as "12 {base}", "12 {base}pk", "24 {base}pp" or "8.49 {base}rms"'
    )
    magnitude, form = _sine_measure(value, base, dimension, expected)
    peak = magnitude * _TO_PEAK[form or PEAK]
    if not math.isfinite(peak):
        raise UnitParseError(value, expected + " (a finite number)")
    return peak


def _within_levels(level: float, value: object, expected: str) -> float:
    if not math.isfinite(level):
        raise UnitParseError(value, expected + " (a finite level)")
    if level <= 0.0:
        raise UnitParseError(value, expected + " (a level above zero)")
    if not LEVEL_FLOOR_V <= level <= LEVEL_CEILING_V:
        hint = ""
        for reading in case_readings(value):
            measured = _measure(reading, "V", expected)
            if measured is not None and LEVEL_FLOOR_V <= measured[0] <= LEVEL_CEILING_V:
                hint = f"; did you mean {reading!r}?"
                break
        raise UnitParseError(value, expected + f" (from 1 picovolt to 1 megavolt){hint}")
    return level


def vrms_to_dbu(vrms: float) -> float:
    """Express an rms voltage in dBu (re sqrt(0.6) V)."""
    return 20.0 * math.log10(vrms / DBU_REFERENCE_VRMS)


def vrms_to_dbv(vrms: float) -> float:
    """Express an rms voltage in dBV (re 1 V)."""
    return 20.0 * math.log10(vrms / DBV_REFERENCE_VRMS)
