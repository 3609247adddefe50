"""The notation a designer writes, in chain files: sine measures in peak and rms fields,
taper names, datasheet spellings, and the case traps refused with a suggestion.

References: sine ratios peak = rms sqrt(2), pp = 2 peak (Horowitz & Hill, The Art of
Electronics, 3rd ed., sec. 1.7.1); SI prefixes and their case (SI Brochure, 9th ed.,
Table 7); the plausible ranges of `chainbudget.plausible` are common practice, no source.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from chainbudget import fields as f
from chainbudget import plausible
from chainbudget.budget import compute
from chainbudget.chainfile import ChainFileError, load_chain, loads_chain
from chainbudget.stages.base import taper_fraction
from chainbudget.units import UnitParseError

DATA = Path(__file__).resolve().parent / "data"
FIXTURE = (DATA / "every_kind.toml").read_text(encoding="utf-8")
PUSH_PULL = (DATA / "opamp_into_push_pull.toml").read_text(encoding="utf-8")
KITCHEN = (Path(__file__).resolve().parents[1] / "chains" / "kitchen_radio_mains.toml").read_text(
    encoding="utf-8"
)


def _changed(text: str, old: str, new: str) -> str:
    assert text.count(old) == 1, f"the chain no longer holds {old!r} once"
    return text.replace(old, new)


def _refused(text: str, old: str, new: str) -> ChainFileError:
    with pytest.raises(ChainFileError) as info:
        loads_chain(_changed(text, old, new), "trap.toml")
    message = str(info.value)
    assert "\n" not in message and message.startswith("trap.toml: ")
    return info.value


# --- case traps -----------------------------------------------------------------------------


def test_milliohm_feedback_is_refused_with_the_likely_meaning() -> None:
    """ "1 mohm" as a feedback resistor is a milliohm to pint (a gain of 0 dB, silently);
    the loader refuses it and suggests the megohm, naming the file and table path."""
    error = _refused(FIXTURE, 'feedback = "10 kohm"', 'feedback = "1 mohm"')
    assert error.path == 'stage[2] "gain".feedback'
    assert "did you mean '1 Mohm'?" in error.message
    assert "'1 milliohm'" in error.message  # how to keep it as written


def test_megaamp_quiescent_is_refused_with_the_likely_meaning() -> None:
    """ "10 MA" of quiescent current (megaamps: a junction of millions of degC) is refused
    with "did you mean '10 mA'?"."""
    error = _refused(PUSH_PULL, 'quiescent = "40 mA"', 'quiescent = "10 MA"')
    assert error.path == 'stage[2] "output".quiescent'
    assert "did you mean '10 mA'?" in error.message


@pytest.mark.parametrize(
    ("old", "new", "meant"),
    [
        ('impedance = "2k2"', 'impedance = "1 mohm"', "'1 Mohm'"),  # a piezo source
        ('impedance = "8 ohm"', 'impedance = "8 mohm"', "'8 ohm'"),  # a loudspeaker
        ('gbw = "10 MHz"', 'gbw = "10 mHz"', "'10 MHz'"),
        ('input_cap = "1u"', 'input_cap = "1 MF"', None),  # no case makes sense of it
        ('voltage = "15 V"\n\n[[supply]]\nname = "minus"', 'voltage = "15 MV"\n\n[[supply]]\n'
         'name = "minus"', "'15 mV'"),
    ],
)  # fmt: skip
def test_implausible_values_are_refused(old: str, new: str, meant: str | None) -> None:
    """Values orders of magnitude outside their field's range are refused; where another
    case of the prefix (or no prefix) is plausible, it is suggested."""
    error = _refused(FIXTURE, old, new)
    if meant is not None:
        assert f"did you mean {meant}?" in error.message
    else:
        assert "did you mean" not in error.message


def test_a_prefix_written_in_full_keeps_the_value() -> None:
    """The file marks an implausible value as meant by writing its prefix in full: a 1
    milliohm feedback resistor loads, and the chain writes it back the same way."""
    text = _changed(FIXTURE, 'feedback = "10 kohm"', 'feedback = "1 milliohm"')
    chain = loads_chain(text, "meant.toml")
    assert chain.stages[1].values["feedback"] == 1e-3
    again = chain.replace("gain.input", "4k7")  # written out and read back through the loader
    assert again.stages[1].values["feedback"] == 1e-3


def test_beyond_the_hard_range_nothing_is_taken() -> None:
    """Past the hard range even a prefix written in full is refused: the arithmetic of the
    analysis stops meaning anything there."""
    error = _refused(FIXTURE, 'feedback = "10 kohm"', 'feedback = "1e-9 milliohm"')
    assert "nothing outside" in error.message


@pytest.mark.parametrize(
    ("kind", "value"),
    [
        (f.OPEN_LOOP_GAIN, -1000),  # a negative open-loop gain
        (f.OPEN_LOOP_GAIN, "-20 dB"),  # below unity
        (f.LEVEL, "-inf dBV"),  # a level of zero
        (f.LEVEL, "-400 dBV"),
        (f.LOAD_IMPEDANCE, "inf ohm"),
        (f.RESISTANCE, "nan ohm"),
        (f.NONZERO_GAIN, "-300 dB"),
        (f.TEMPERATURE, "1e6 degC"),
        (f.RATIO, 1e300),
        (f.COUNT, 10**6),
        (f.DECIBELS, "1e300 dB"),
    ],
)
def test_nonsense_and_non_finite_values_are_refused(kind: f.FieldKind, value: object) -> None:
    """A negative or sub-unity open-loop gain, a source level of zero, an infinite load,
    and figures past every range are each a one-line refusal, not an analysis."""
    with pytest.raises(UnitParseError):
        kind.read(value)


def test_every_example_value_lies_in_its_plausible_range() -> None:
    """The ranges hold every value the example chains and the test chains use (each loads
    with no prefix written in full)."""
    root = Path(__file__).resolve().parents[1]
    for path in [*(root / "chains").glob("*.toml"), *DATA.glob("*.toml")]:
        assert "milli" not in path.read_text(encoding="utf-8")
        load_chain(path)


def test_the_ranges_are_ordered() -> None:
    """Each plausible range lies within its hard range."""
    for range_ in (
        plausible.PART_OHMS,
        plausible.SMALL_OHMS,
        plausible.SOURCE_OHMS,
        plausible.LOAD_OHMS,
        plausible.CAPACITANCE,
        plausible.FREQUENCY,
        plausible.VOLTAGE,
        plausible.CURRENT,
        plausible.LEVEL,
        plausible.SOURCE_INDUCTANCE,
    ):
        assert range_.floor <= range_.low < range_.high <= range_.ceiling


# --- sine measures in the file --------------------------------------------------------------


@pytest.mark.parametrize("written", ['"24 Vpp"', '"12 Vpk"', '"8.4852814 Vrms"', '"12 Vp"'])
def test_block_max_output_takes_any_sine_measure(written: str) -> None:
    """A block's ``max_output`` is a peak: "24 Vpp" and "8.49 Vrms" are the same 12 V peak
    (peak = pp/2 = rms sqrt(2), H&H sec. 1.7.1), and the budget is the one of "12 V"; rtol
    1e-6 on the value, the figures compared at rtol 1e-6."""
    plain = loads_chain(FIXTURE, "plain.toml")
    chain = loads_chain(_changed(FIXTURE, 'max_output = "12 V"', f"max_output = {written}"))
    assert chain.stages[-1].values["max_output"] == pytest.approx(12.0, rel=1e-6)
    assert compute(chain).node("amp").clip_vpk == pytest.approx(
        compute(plain).node("amp").clip_vpk, rel=1e-6
    )


@pytest.mark.parametrize("written", ['"15 VAC"', '"15 Vac"', '"15 Vrms"', '"15 V"'])
def test_transformer_secondary_as_marked(written: str) -> None:
    """A secondary marked "15 VAC" is 15 V rms, as "15 V" and "15 Vrms" are."""
    old = next(line for line in KITCHEN.splitlines() if line.startswith("secondary = "))
    chain = loads_chain(_changed(KITCHEN, old, f"secondary = {written}"))
    rectified = next(s for s in chain.supplies if s.kind == "rectified")
    assert rectified.values["secondary"] == pytest.approx(15.0, rel=1e-12)


def test_op_amp_output_current_is_a_peak() -> None:
    """An op-amp's ``output_current`` is documented as a peak: "25 mApk" and "50 mApp" are
    25 mA; "17.68 mArms" the peak of that sine; rtol 1e-6."""
    for written in ("25 mA", "25 mApk", "50 mApp", "17.677670 mArms"):
        text = _changed(FIXTURE, 'output_current = "25 mA"', f'output_current = "{written}"')
        chain = loads_chain(text)
        assert chain.opamps["quiet"].output_current == pytest.approx(25e-3, rel=1e-6)


# --- pot tapers -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("written", "read"),
    [
        ("A", "log"), ("a", "log"), ("audio", "log"), ("log", "log"), ("Log", "log"),
        ("logarithmic", "log"), ("B", "linear"), ("lin", "linear"), ("linear", "linear"),
        ("Linear", "linear"), ("10 %", 0.1), ("15%", 0.15), (0.2, 0.2),
    ],
)  # fmt: skip
def test_taper_names(written: object, read: object) -> None:
    """Catalogue names: A = audio (log), B = linear (the letters of pots made in Asia and
    sold in the US; common practice, no source); a fraction at mid, as a number or a %."""
    value = f.TAPER.read(written)
    assert value == (pytest.approx(read, rel=1e-12) if isinstance(read, float) else read)


@pytest.mark.parametrize("written", ["C", "reverse log", "Reverse-Log", "antilog", "anti-log"])
def test_reverse_log_taper_mirrors_the_log_taper(written: str) -> None:
    """C (reverse log) is the log law mirrored: f_C(x) = 1 - f_A(1 - x), checked at every
    rotation against the log law itself; atol 1e-12."""
    mid = f.TAPER.read(written)
    x = [i / 20 for i in range(21)]
    mirrored = [1.0 - float(taper_fraction(1.0 - xi, "log")) for xi in x]
    assert [float(taper_fraction(xi, mid)) for xi in x] == pytest.approx(mirrored, abs=1e-12)
    assert float(taper_fraction(0.5, mid)) == pytest.approx(1.0 - 1.0 / 11.0, abs=1e-12)


@pytest.mark.parametrize("written", ["D", "0 %", "100 %", "1.5", True, "exponential"])
def test_unknown_tapers_are_refused_with_the_forms(written: object) -> None:
    """Anything else is refused, and the message lists the forms taken."""
    with pytest.raises(UnitParseError, match=r'"log" \(or "A", "audio"\)'):
        f.TAPER.read(written)


def test_a_volume_pot_marked_a_is_the_log_pot() -> None:
    """taper = "A" in a file gives the budget of taper = "log"; rtol 1e-12."""
    chains = [
        loads_chain(_changed(FIXTURE, "taper = 0.15", f"taper = {taper}"))
        for taper in ('"A"', '"log"')
    ]
    gains = [compute(chain).node("vol").gain_db for chain in chains]
    assert gains[0] == pytest.approx(gains[1], rel=1e-12)
    assert math.isfinite(gains[0])


def test_a_singular_stage_network_names_the_stage(monkeypatch: pytest.MonkeyPatch) -> None:
    """Should a stage's network ever have no single solution, the budget reports it as an
    input error naming the file and the stage, not a traceback: here the volume pot's stage
    is given a second ideal source across its output (a singular matrix)."""
    from chainbudget.stages import KINDS

    volume = KINDS["volume"]
    build = type(volume).build

    def shorted(self, net, stage, env, node_in, node_out, positions):  # type: ignore[no-untyped-def]
        built = build(self, net, stage, env, node_in, node_out, positions)
        net.voltage_source(node_out, "0", label="short.one")
        net.voltage_source(node_out, "0", label="short.two")
        return built

    monkeypatch.setattr(type(volume), "build", shorted)
    with pytest.raises(ChainFileError) as info:
        compute(loads_chain(FIXTURE, "singular.toml"))
    assert str(info.value).startswith('singular.toml: stage[6] "vol": its network has no single')
