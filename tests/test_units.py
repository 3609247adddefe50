"""Tests for chainbudget.units: quantities, letter codes, noise densities, levels, temperatures.

References: the audio dBu (1 mW into 600 ohm, sqrt(0.6) V rms) and dBV (re 1 V rms) are
common practice, no source; the resistor and capacitor letter code is IEC 60062 (quoted
from memory: the letter stands for the decimal point and carries the multiplier); sine
peak/rms/peak-to-peak ratios are the textbook sqrt(2) and 2 sqrt(2) (Horowitz & Hill, The
Art of Electronics, 3rd ed., sec. 1.7.1).
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from chainbudget import units
from chainbudget.units import (
    FARAD,
    NOISE_CURRENT,
    NOISE_VOLTAGE,
    OHM,
    THERMAL_RESISTANCE,
    VOLT,
    UnitParseError,
    parse_gain,
    parse_level,
    parse_quantity,
    parse_temperature,
)

# --- levels ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "vrms"),
    [
        # 0 dBu = 1 mW into 600 ohm: sqrt(1e-3 * 600) = sqrt(0.6) = 0.774597 V (common practice).
        ("0 dBu", 0.7745967),
        # +4 dBu professional line level: 0.7746 * 10^(4/20) = 1.2277 V (common practice).
        ("+4 dBu", 1.2276530),
        # -10 dBV consumer line level: 10^(-10/20) = 0.31623 V (common practice).
        ("-10 dBV", 0.3162278),
        ("0 dBV", 1.0),
        ("-20 dBu", 0.0774597),
    ],
)
def test_decibel_levels_match_the_audio_references(text: str, vrms: float) -> None:
    """dBu re sqrt(0.6) V and dBV re 1 V rms (common practice, no source); rtol 1e-6."""
    assert parse_level(text) == pytest.approx(vrms, rel=1e-6, abs=0)


def test_dbu_reference_is_one_milliwatt_in_600_ohm() -> None:
    """P = V^2/R: (0 dBu)^2 / 600 ohm = 1 mW (common practice, no source); rtol 1e-12."""
    assert parse_level("0 dBu") ** 2 / 600.0 == pytest.approx(1e-3, rel=1e-12, abs=0)


def test_pint_own_dbu_is_not_the_audio_dbu() -> None:
    """pint's ``dBu`` is decibel-microwatt, a power: +4 of it is 2.51 uW (10^0.4 uW), not
    1.2277 V. The level parser must give the audio value, and a voltage field must not
    quietly accept pint's power unit. Tolerance rtol 1e-6."""
    pint_dbu = parse_quantity("4 dBu", units.WATT)
    assert pint_dbu == pytest.approx(1e-6 * 10**0.4, rel=1e-6, abs=0)
    assert parse_level("+4 dBu") == pytest.approx(1.2276530, rel=1e-6, abs=0)
    with pytest.raises(UnitParseError):
        parse_quantity("4 dBu", VOLT)


@pytest.mark.parametrize(
    ("text", "vrms"),
    [
        ("300 mV", 0.3),
        ("1 Vrms", 1.0),
        ("1 V", 1.0),
        ("250 uV", 250e-6),
        # A sine's rms is its peak over sqrt(2) (Horowitz & Hill 3rd ed. sec. 1.7.1).
        ("1.4142136 Vpk", 1.0),
        ("12 Vpk", 12.0 / math.sqrt(2.0)),
        # ... and its peak-to-peak over 2 sqrt(2).
        ("2.8284271 Vpp", 1.0),
        ("2.8284271 Vp-p", 1.0),
        ("100 mVpp", 0.1 / (2.0 * math.sqrt(2.0))),
    ],
)
def test_rms_peak_and_peak_to_peak_forms(text: str, vrms: float) -> None:
    """Sine forms: rms = pk/sqrt(2) = pp/(2 sqrt(2)) (H&H 3rd ed. sec. 1.7.1); rtol 1e-6."""
    assert parse_level(text) == pytest.approx(vrms, rel=1e-6, abs=0)


@pytest.mark.parametrize("text", ["0 V", "-1 V", "1 A", "loud", "1e400 V", "20000 dBu"])
def test_unusable_levels_are_refused(text: str) -> None:
    """A level must be a finite voltage above zero (contract, "Values")."""
    with pytest.raises(UnitParseError):
        parse_level(text)


def test_level_is_refused_as_a_bare_number() -> None:
    """A bare number has no level form (contract, "Values")."""
    with pytest.raises(UnitParseError):
        parse_level(0.3)  # type: ignore[arg-type]


# --- IEC 60062 letter codes --------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "ohm"),
    [
        ("4k7", 4.7e3),
        ("2M2", 2.2e6),
        ("470R", 470.0),
        ("1R5", 1.5),
        ("R47", 0.47),
        ("10k", 10e3),
        ("1K5", 1.5e3),
        ("4.7k", 4.7e3),
        ("10 kohm", 10e3),
        ("10 Ω", 10.0),
        ("1e3 ohm", 1e3),
    ],
)
def test_resistor_letter_codes(text: str, ohm: float) -> None:
    """IEC 60062 resistor code: R, k, M mark the decimal point and multiplier; rtol 1e-12."""
    assert parse_quantity(text, OHM) == pytest.approx(ohm, rel=1e-12, abs=0)


@pytest.mark.parametrize(
    ("text", "farad"),
    [
        ("4n7", 4.7e-9),
        ("100p", 100e-12),
        ("2u2", 2.2e-6),
        ("2µ2", 2.2e-6),
        ("n47", 0.47e-9),
        ("9.9µ", 9.9e-6),  # once escaped as a float() error
        ("47 nF", 47e-9),
        ("4700 uF", 4700e-6),
        ("4700 µF", 4700e-6),
    ],
)
def test_capacitor_letter_codes(text: str, farad: float) -> None:
    """IEC 60062 capacitor code: p, n, u (µ) mark the decimal point and multiplier; rtol
    1e-12."""
    assert parse_quantity(text, FARAD) == pytest.approx(farad, rel=1e-12, abs=0)


def test_letter_code_follows_the_fields_dimension() -> None:
    """The field's dimension decides the table (contract): "4n7" is no resistance and
    "4k7" no capacitance."""
    with pytest.raises(UnitParseError):
        parse_quantity("4n7", OHM)
    with pytest.raises(UnitParseError):
        parse_quantity("4k7", FARAD)


@given(
    whole=st.integers(min_value=1, max_value=999),
    decimal=st.integers(min_value=0, max_value=9),
    letter=st.sampled_from(["R", "k", "M", "p", "n", "u"]),
)
def test_letter_code_round_trip(whole: int, decimal: int, letter: str) -> None:
    """Property: "<whole><letter><digit>" reads as (whole + digit/10) times the letter's
    multiplier (IEC 60062); rtol 1e-12."""
    multiplier = {"R": 1.0, "k": 1e3, "M": 1e6, "p": 1e-12, "n": 1e-9, "u": 1e-6}[letter]
    dimension = OHM if letter in "RkM" else FARAD
    expected = (whole + decimal / 10.0) * multiplier
    assert parse_quantity(f"{whole}{letter}{decimal}", dimension) == pytest.approx(
        expected, rel=1e-12, abs=0
    )


# --- noise densities, slew rates, thermal resistance -------------------------------------


@pytest.mark.parametrize(
    "text", ["8 nV/rtHz", "8 nV/√Hz", "8 nV/sqrt(Hz)", "8 nV/Hz**0.5", "8 nV/Hz^0.5"]
)
def test_noise_voltage_density_spellings(text: str) -> None:
    """All root-hertz spellings of the contract mean 8e-9 V/sqrt(Hz); rtol 1e-12."""
    assert parse_quantity(text, NOISE_VOLTAGE) == pytest.approx(8e-9, rel=1e-12, abs=0)


@pytest.mark.parametrize("text", ["0.7 pA/rtHz", "0.7 pA/√Hz", "700 fA/sqrt(Hz)"])
def test_noise_current_density_spellings(text: str) -> None:
    """pA/rtHz and friends: 0.7e-12 A/sqrt(Hz); rtol 1e-12."""
    assert parse_quantity(text, NOISE_CURRENT) == pytest.approx(0.7e-12, rel=1e-12, abs=0)


def test_noise_density_is_not_a_plain_voltage() -> None:
    """V/rtHz and V differ in dimension; neither stands for the other."""
    with pytest.raises(UnitParseError):
        parse_quantity("8 nV", NOISE_VOLTAGE)
    with pytest.raises(UnitParseError):
        parse_quantity("8 nV/rtHz", VOLT)


def test_slew_rate_in_volts_per_microsecond() -> None:
    """7 V/us = 7e6 V/s (SI prefixes, SI Brochure 9th ed. Table 7); rtol 1e-12."""
    assert parse_quantity("7 V/us", units.SLEW) == pytest.approx(7e6, rel=1e-12, abs=0)


@pytest.mark.parametrize("text", ["50 K/W", "50 degC/W", "50 °C/W"])
def test_thermal_resistance_in_kelvin_or_degc_per_watt(text: str) -> None:
    """A temperature difference of 1 degC is 1 K (SI Brochure 9th ed. sec. 2.3.1); rtol
    1e-12."""
    assert parse_quantity(text, THERMAL_RESISTANCE) == pytest.approx(50.0, rel=1e-12, abs=0)


# --- temperatures (offset units) ----------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "celsius"),
    [
        ("30 degC", 30.0),
        ("-10 degC", -10.0),
        ("25 °C", 25.0),
        # T(degC) = T(K) - 273.15 (SI Brochure, 9th ed., sec. 2.3.1).
        ("300 K", 26.85),
        ("273.15 K", 0.0),
        # T(degC) = (T(degF) - 32) * 5/9 (common practice, no source).
        ("86 degF", 30.0),
    ],
)
def test_temperatures_with_offset_units(text: str, celsius: float) -> None:
    """Offset units convert to degC; atol 1e-9 degC."""
    assert parse_temperature(text) == pytest.approx(celsius, abs=1e-9)


@pytest.mark.parametrize("text", ["30", "-300 degC", "30 V"])
def test_unusable_temperatures_are_refused(text: str) -> None:
    """A temperature needs a unit, a temperature dimension, and to lie above 0 K."""
    with pytest.raises(UnitParseError):
        parse_temperature(text)


# --- dimension errors and bare numbers ----------------------------------------------------


@pytest.mark.parametrize(
    ("value", "dimension"),
    [
        ("10 V", OHM),  # a voltage where a resistance is expected
        ("10 kohm", VOLT),
        ("47 nF", OHM),
        ("1 kHz", FARAD),
        (10_000, OHM),  # a bare number where a unit is required
        ("10000", OHM),
        (4.7e-9, FARAD),
        (True, units.DIMENSIONLESS),
        ("", OHM),
        ("ten kohm", OHM),
        ("1e400 ohm", OHM),  # too large for a float
        (math.nan, units.DIMENSIONLESS),  # TOML has nan and inf literals
        ("01h/", OHM),  # once tripped an assert inside pint's parser
        (" 8)µ", OHM),  # once escaped as a tokenize error
        ("4.7k7", OHM),  # a decimal point and a code letter both: no code
    ],
)
def test_wrong_dimension_or_bare_number_raises_unit_parse_error(
    value: object, dimension: units.Dimension
) -> None:
    """Every unusable value is a UnitParseError (so the loader turns it into one line),
    never another exception."""
    with pytest.raises(UnitParseError) as info:
        parse_quantity(value, dimension)
    assert dimension.description in str(info.value)


def test_bare_number_message_says_the_unit_is_missing() -> None:
    """The message names what was given and why it fails (contract, "Values")."""
    with pytest.raises(UnitParseError, match=r"got 10000, expected a resistance.*no unit"):
        parse_quantity(10000, OHM)


def test_dimensionless_accepts_numbers_and_percent() -> None:
    """A plain number is fine where no unit is wanted; 10 % = 0.1 (rtol 1e-12)."""
    assert parse_quantity(200, units.DIMENSIONLESS) == 200.0
    assert parse_quantity("10 %", units.DIMENSIONLESS) == pytest.approx(0.1, rel=1e-12, abs=0)


@pytest.mark.parametrize(
    ("value", "ratio"),
    [
        # 20 log10(10) = 20 dB; 20 log10(2) = 6.0206 dB (common practice, no source).
        ("20 dB", 10.0),
        ("6.0206 dB", 2.0),
        ("-6.0206 dB", 0.5),
        (20, 20.0),
        ("20", 20.0),
        (-1, -1.0),
    ],
)
def test_gain_in_decibels_or_as_a_ratio(value: object, ratio: float) -> None:
    """Voltage gain: dB = 20 log10(ratio); rtol 1e-5 (6.0206 is rounded)."""
    assert parse_gain(value) == pytest.approx(ratio, rel=1e-5, abs=0)


@pytest.mark.parametrize("value", ["20000 dB", "20 V", math.inf, True])
def test_unusable_gains_are_refused(value: object) -> None:
    """A gain must be a finite ratio or dB figure."""
    with pytest.raises(UnitParseError):
        parse_gain(value)


def test_one_cached_registry() -> None:
    """Quantities from two registries don't mix: the module hands out one."""
    assert units.registry() is units.registry()


# --- the notation designers write (datasheets, schematics, catalogues) --------------------
# Each spelling below is one a designer writes and must mean the obvious thing. SI prefixes
# and their case: SI Brochure, 9th ed., Table 7 (k is kilo, M mega, m milli; K, U and N are
# no prefixes, so their case is a slip that cannot mislead).


@pytest.mark.parametrize(
    ("text", "dimension", "si"),
    [
        ("4.7 kOhm", OHM, 4.7e3),
        ("4.7 KOhm", OHM, 4.7e3),  # K is no SI prefix: only kilo is meant
        ("4k7 ohm", OHM, 4.7e3),  # IEC 60062 code followed by the unit
        ("4k7Ω", OHM, 4.7e3),
        ("10k ohms", OHM, 10e3),
        ("100 OHMS", OHM, 100.0),
        ("2 megohm", OHM, 2e6),  # the trade's contraction of megaohm
        ("47 kilohm", OHM, 47e3),
        ("2.2 uf", FARAD, 2.2e-6),
        ("2.2 UF", FARAD, 2.2e-6),
        ("220 pf", FARAD, 220e-12),
        ("2u2F", FARAD, 2.2e-6),
        ("10 ufd", FARAD, 10e-6),
        ("10 V/uS", units.SLEW, 10e6),  # uS would be microsiemens; a slew rate is per us
        ("20 KHz", units.HERTZ, 20e3),
        ("20 khz", units.HERTZ, 20e3),
        ("3 MHZ", units.HERTZ, 3e6),
        ("100 nV/sqrtHz", NOISE_VOLTAGE, 100e-9),
        ("4 nV/√(Hz)", NOISE_VOLTAGE, 4e-9),
        ("4 nV/rt(Hz)", NOISE_VOLTAGE, 4e-9),
        ("4 nV/Hz^1/2", NOISE_VOLTAGE, 4e-9),
        ("2 pA/sqrtHz", NOISE_CURRENT, 2e-12),
        ("65 C/W", THERMAL_RESISTANCE, 65.0),  # a difference of 1 degC is 1 K
        ("65 °C/W", THERMAL_RESISTANCE, 65.0),
        ("25 ma", units.AMPERE, 25e-3),
        ("2 mAH", units.CHARGE, 2e-3),
        ("1 milliohm", OHM, 1e-3),  # a prefix written in full
        ("10 microfarads", FARAD, 10e-6),
    ],
)
def test_datasheet_spellings(text: str, dimension: units.Dimension, si: float) -> None:
    """Unit spellings as printed on datasheets and schematics read as SI; rtol 1e-12."""
    assert parse_quantity(text, dimension) == pytest.approx(si, rel=1e-12)


@pytest.mark.parametrize("text", ["1 mf", "1 MF", "100 mfd"])
def test_mf_is_refused_as_ambiguous(text: str) -> None:
    """Older schematics wrote microfarad as "mf"/"mfd"; in SI "mF" is the millifarad. A
    lower- or upper-case "mf" is read as neither, and the message names both."""
    with pytest.raises(UnitParseError, match=r'"uF" \(microfarad\) or "mF" \(millifarad\)'):
        parse_quantity(text, FARAD)
    assert parse_quantity("1 mF", FARAD) == pytest.approx(1e-3, rel=1e-12)


@pytest.mark.parametrize(
    ("text", "si"),
    [("1 mohm", 1e-3), ("1 Mohm", 1e6), ("10 mA", 10e-3), ("10 MA", 10e6), ("3 mHz", 3e-3)],
)
def test_milli_and_mega_keep_their_case(text: str, si: float) -> None:
    """m and M are different prefixes (SI Brochure Table 7): their case is never folded;
    the loader's plausibility check, not the parser, catches a slip."""
    dimension = {"ohm": OHM, "A": units.AMPERE, "Hz": units.HERTZ}[text.split()[1][1:]]
    assert parse_quantity(text, dimension) == pytest.approx(si, rel=1e-12)


@pytest.mark.parametrize(
    ("text", "celsius"),
    [("40 C", 40.0), ("40 °C", 40.0), ("40 degrees C", 40.0), ("104 F", 40.0), ("104 °F", 40.0)],
)
def test_temperature_spellings(text: str, celsius: float) -> None:
    """In a temperature field a bare C is Celsius (never the coulomb), a bare F Fahrenheit:
    T(degC) = (T(degF) - 32) * 5/9 (common practice, no source); atol 1e-9 degC."""
    assert parse_temperature(text) == pytest.approx(celsius, abs=1e-9)


@pytest.mark.parametrize(
    ("text", "vrms"),
    [
        ("1.4142136 Vp", 1.0),  # "Vp": the peak
        ("1.4142136 V peak", 1.0),
        ("1.4142136 V(pk)", 1.0),
        ("2.8284271 Vpk-pk", 1.0),
        ("15 VAC", 15.0),  # mains transformers and meters mark rms as AC
        ("15 Vac", 15.0),
        ("15 V rms", 15.0),
        ("300 mv", 0.3),
        ("300 millivolt", 0.3),
    ],
)
def test_level_spellings(text: str, vrms: float) -> None:
    """Sine measures as written: rms = pk / sqrt(2) = pp / (2 sqrt(2)) (Horowitz & Hill,
    3rd ed., sec. 1.7.1); AC means rms; rtol 1e-6."""
    assert parse_level(text) == pytest.approx(vrms, rel=1e-6)


@pytest.mark.parametrize(
    ("text", "peak"),
    [
        ("12 V", 12.0),  # a peak field's own measure: the value itself
        ("12 Vpk", 12.0),
        ("12 Vp", 12.0),
        ("24 Vpp", 12.0),  # pp = 2 peak
        ("24 Vp-p", 12.0),
        ("8.485281 Vrms", 12.0),  # peak = rms sqrt(2)
        ("8.485281 VAC", 12.0),
        ("0 dBV", math.sqrt(2.0)),  # a level in dB is rms
    ],
)
def test_peak_voltage_forms(text: str, peak: float) -> None:
    """A peak field converts every sine measure to the peak: peak = rms sqrt(2), peak =
    pp / 2 (Horowitz & Hill, 3rd ed., sec. 1.7.1); rtol 1e-6."""
    assert units.parse_peak(text) == pytest.approx(peak, rel=1e-6)


def test_peak_current_forms() -> None:
    """A peak current the same way: 25 mApk = 50 mApp = 17.68 mArms; rtol 1e-6."""
    for text in ("25 mA", "25 mApk", "50 mApp", "17.677670 mArms"):
        assert units.parse_peak(text, units.AMPERE) == pytest.approx(25e-3, rel=1e-6)


@pytest.mark.parametrize(
    ("value", "ratio"),
    [("x20", 20.0), ("×20", 20.0), ("X 20", 20.0), ("20x", 20.0), ("20 V/V", 20.0), ("x0.5", 0.5)],
)
def test_gain_as_a_multiplier(value: str, ratio: float) -> None:
    """Gains written as schematics write them ("x20", "20 V/V") are plain ratios."""
    assert parse_gain(value) == pytest.approx(ratio, rel=1e-12)


def test_prefix_written_in_full_reads_back_exactly() -> None:
    """`spelled_out` writes a number with its prefix in full so that it reads back bit for
    bit (a decimal shift, rounded once) and is recognised as written in full."""
    for number, dimension in ((1e-3, OHM), (4.7e-3, OHM), (0.1 + 0.2, FARAD), (123e9, OHM)):
        text = units.spelled_out(number, dimension)
        assert units.is_spelled_out(text)
        assert parse_quantity(text, dimension) == number
    assert units.spelled_out(1e-3, OHM) == "1 milliohm"
    assert not units.is_spelled_out("1 mohm")


def test_case_readings_offer_the_other_case_then_no_prefix() -> None:
    """The readings a slip of case may hide: "1 mohm" -> "1 Mohm", then "1 ohm"."""
    assert units.case_readings("1 mohm") == ["1 Mohm", "1 ohm"]
    assert units.case_readings("10 MA") == ["10 mA", "10 A"]
    assert units.case_readings("4k7") == []


@given(st.text(max_size=30))
def test_any_text_is_a_value_or_a_unit_parse_error(text: str) -> None:
    """Property: no text escapes the parsers as anything but a UnitParseError."""
    for dimension in (OHM, FARAD, units.HERTZ, VOLT, units.SLEW, NOISE_VOLTAGE):
        try:
            parse_quantity(text, dimension)
        except UnitParseError:
            pass
    for parse in (parse_level, parse_temperature, parse_gain, units.parse_peak):
        try:
            parse(text)
        except UnitParseError:
            pass


# --- the units read without pint ---------------------------------------------------------

_KNOWN = [(si, unit) for si, table in units.KNOWN_UNITS.items() for unit in table]


@pytest.mark.parametrize(("si", "unit"), _KNOWN)
@given(
    number=st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)
    | st.sampled_from([4.7, 2.2, 0.1, 0.47, 6.8, 33.0, 1e-3, 470.0])
)
def test_a_known_unit_reads_as_pint_reads_it_to_the_last_bit(
    si: str, unit: str, number: float
) -> None:
    """Pint is the reference: the table answers exactly as pint's own conversion would."""
    expected = float(units.registry().Quantity(number, unit).to(si).magnitude)
    assert number * units.KNOWN_UNITS[si][unit] == expected


@pytest.mark.parametrize(
    ("text", "dimension"),
    [
        ("4.7 kOhm", units.OHM),
        ("2.2 uF", units.FARAD),
        ("100 nF", units.FARAD),
        ("1 kHz", units.HERTZ),
        ("7 V/us", units.SLEW),
        ("4.5 nV/rtHz", units.NOISE_VOLTAGE),
        ("0.7 pA/√Hz", units.NOISE_CURRENT),
        ("2.5 K/W", units.THERMAL_RESISTANCE),
        ("2.2 Ah", units.CHARGE),
        ("25 mA", units.AMPERE),
    ],
)
def test_a_value_in_a_known_unit_equals_the_pint_reading(
    text: str, dimension: units.Dimension
) -> None:
    """The whole reading (spelling normalised, then the table) against the same text read
    with the table emptied, that is by pint alone."""
    fast = units.parse_quantity(text, dimension)
    saved = dict(units.KNOWN_UNITS)
    units.KNOWN_UNITS.clear()
    try:
        assert units.parse_quantity(text, dimension) == fast
    finally:
        units.KNOWN_UNITS.update(saved)


@given(st.floats(min_value=-273.15, max_value=1e4, allow_nan=False))
def test_a_celsius_temperature_reads_as_pint_reads_it(celsius: float) -> None:
    text = f"{celsius!r} degC"
    expected = float(units.registry().Quantity(celsius, "degC").to("degC").magnitude)
    assert units.parse_temperature(text) == expected
