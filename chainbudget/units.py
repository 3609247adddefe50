"""Reading physical values and audio levels from text into plain SI floats.

The one pint registry of the project lives here. Everything downstream of the loader works
in SI floats (V, ohm, A, F, Hz, s, W, K/W; degC for temperatures), so pint appears only at
this edge and at the display edge.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache

import pint

from chainbudget import ChainError

# The audio dBu reference: 1 mW into 600 ohm, sqrt(0.6) V rms (common practice, no source).
DBU_REFERENCE_VRMS = math.sqrt(0.6)
DBV_REFERENCE_VRMS = 1.0
ABSOLUTE_ZERO_KELVIN_IN_DEGC = 273.15  # 0 K = -273.15 degC (SI Brochure, 9th ed., sec. 2.3.1)


class UnitParseError(ValueError, ChainError):
    """A value that could not be read as the quantity a field expects.

    The loader turns it into a `ChainFileError` that adds the file and the table path; it
    is a `ChainError` itself so that no input error of any layer escapes the user's
    ``except chainbudget.ChainError``.
    """

    def __init__(self, given: object, expected: str) -> None:
        super().__init__(f"got {given!r}, expected {expected}")
        self.given = given
        self.expected = expected


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """Return the project's single pint registry (created once, cached)."""
    reg: pint.UnitRegistry = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return reg


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

# IEC 60062 letter-for-decimal code: the letter stands for the decimal point and the
# multiplier ("4k7" = 4.7e3, "470R" = 470, "2n2" = 2.2e-9).
_RESISTOR_CODE = {"R": 1.0, "r": 1.0, "k": 1e3, "K": 1e3, "M": 1e6, "G": 1e9}
_CAPACITOR_CODE = {"p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3}
_CODE_RE = re.compile(r"^\s*(\d+(?:\.\d+)?|\d*)([A-Za-zµμ])(\d*)\s*$")
_NUMBER_RE = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")
_ROOT_HZ_RE = re.compile(r"(rtHz|√\s*Hz|sqrt\(\s*Hz\s*\)|Hz\s*\*\*\s*0?\.5|Hz\^0?\.5)")


def _letter_code(text: str, dimension: Dimension) -> float | None:
    """Read an IEC 60062 code such as ``4k7`` or ``2n2``; None when it is not one."""
    table = {OHM: _RESISTOR_CODE, FARAD: _CAPACITOR_CODE}.get(dimension)
    match = _CODE_RE.match(text)
    if table is None or match is None:
        return None
    whole, letter, fraction = match.groups()
    if letter not in table or (not whole and not fraction):
        return None
    if "." in whole:
        if fraction:  # "4.7k7" is no code
            return None
        return float(whole) * table[letter]  # "4.7k": the letter as a plain multiplier
    number = float(f"{whole or '0'}.{fraction or '0'}")
    return number * table[letter]


def _normalise_unit_text(unit: str) -> str:
    unit = _ROOT_HZ_RE.sub("(Hz**0.5)", unit)
    unit = unit.replace("%", "percent").replace("Ω", "ohm").replace("μ", "u")
    # A temperature difference per watt is written with degC as often as with K.
    return re.sub(r"deg\s*C\s*/", "K/", unit)


def parse_quantity(value: object, dimension: Dimension) -> float:
    """Read ``value`` as a quantity of ``dimension`` and return it in SI units.

    Parameters
    ----------
    value : str or number
        Text such as ``"10 kohm"``, ``"4k7"``, ``"7 V/us"``, ``"8 nV/rtHz"``; a bare number
        only where the dimension is dimensionless.
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
    coded = _letter_code(value, dimension)
    if coded is not None:
        return coded
    match = _NUMBER_RE.match(value)
    if match is None:
        raise UnitParseError(value, expected)
    number, unit = float(match.group(1)), _normalise_unit_text(match.group(2))
    if not unit:
        if dimension is DIMENSIONLESS:
            return number
        raise UnitParseError(value, expected + " (a bare number has no unit)")
    reg = registry()
    try:
        quantity = reg.Quantity(number, unit)
        result = float(quantity.to(dimension.si_unit).magnitude)
    except Exception:  # pint's unit parser raises many types (tokenize errors, asserts...)
        raise UnitParseError(value, expected) from None
    if not math.isfinite(result):
        raise UnitParseError(value, expected + " (a finite number)")
    return result


def parse_temperature(value: object) -> float:
    """Read a temperature (``"30 degC"``, ``"300 K"``, ``"86 degF"``) and return degC."""
    expected = 'a temperature such as "30 degC" or "300 K"'
    if not isinstance(value, str):
        raise UnitParseError(value, expected)
    match = _NUMBER_RE.match(value)
    if match is None or not match.group(2):
        raise UnitParseError(value, expected)
    reg = registry()
    try:
        quantity = reg.Quantity(float(match.group(1)), match.group(2))
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


_DB_RE = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*dB\s*$")


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


def parse_gain(value: object) -> float:
    """Read a voltage gain given in dB (``"26 dB"``) or as a plain ratio (``20``); a ratio
    of magnitude at most 1e10 (200 dB)."""
    expected = 'a voltage gain such as "26 dB" or a plain ratio such as 20, up to 200 dB'
    gain: float | None = None
    if isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value):
        gain = float(value)
    elif isinstance(value, str):
        match = _DB_RE.match(value)
        bare = _NUMBER_RE.match(value)
        if match:
            gain = _finite_ratio(float(match.group(1)), value, expected)
        elif bare and not bare.group(2) and math.isfinite(float(bare.group(1))):
            gain = float(bare.group(1))
    if gain is None or abs(gain) > MAX_GAIN_RATIO:
        raise UnitParseError(value, expected)
    return gain


def parse_fraction(value: object) -> float:
    """Read a fraction given as a plain number (``0.1``) or a percentage (``"10 %"``)."""
    return parse_quantity(value, DIMENSIONLESS)


# Audio levels: every form is reduced to the rms value of the equivalent sine.
_LEVEL_RE = re.compile(
    r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*"
    r"(?:(dBu|dBV)|([munµμk]?)V\s*(rms|pk|pp|p-p)?)\s*$"
)
_LEVEL_PREFIX = {"": 1.0, "m": 1e-3, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "n": 1e-9, "k": 1e3}
_LEVEL_FORM = {None: 1.0, "rms": 1.0, "pk": 1.0 / math.sqrt(2.0), "pp": 0.5 / math.sqrt(2.0)}
_LEVEL_FORM["p-p"] = _LEVEL_FORM["pp"]


def parse_level(value: object) -> float:
    """Read an audio signal level and return the rms voltage of the equivalent sine.

    Notes
    -----
    ``V``/``Vrms`` are rms; ``Vpk`` is the peak, rms = pk / sqrt(2); ``Vpp`` the
    peak-to-peak, rms = pp / (2 sqrt(2)); ``dBV`` is re 1 V rms; ``dBu`` is re sqrt(0.6) V rms
    (0.7746 V, 1 mW in 600 ohm). pint's own ``dBu`` (decibel-microwatt) is deliberately not
    used.
    """
    expected = 'a signal level such as "300 mV", "1.4 Vpk", "2.8 Vpp", "-10 dBV" or "+4 dBu"'
    if not isinstance(value, str):
        raise UnitParseError(value, expected)
    match = _LEVEL_RE.match(value)
    if match is None:
        raise UnitParseError(value, expected)
    number, decibel, prefix, form = match.groups()
    if decibel == "dBu":
        return DBU_REFERENCE_VRMS * _finite_ratio(float(number), value, expected)
    if decibel == "dBV":
        return DBV_REFERENCE_VRMS * _finite_ratio(float(number), value, expected)
    level = float(number) * _LEVEL_PREFIX[prefix] * _LEVEL_FORM[form]
    if not math.isfinite(level):
        raise UnitParseError(value, expected + " (a finite level)")
    if level <= 0.0:
        raise UnitParseError(value, expected + " (a level above zero)")
    return level


def vrms_to_dbu(vrms: float) -> float:
    """Express an rms voltage in dBu (re sqrt(0.6) V)."""
    return 20.0 * math.log10(vrms / DBU_REFERENCE_VRMS)


def vrms_to_dbv(vrms: float) -> float:
    """Express an rms voltage in dBV (re 1 V)."""
    return 20.0 * math.log10(vrms / DBV_REFERENCE_VRMS)
