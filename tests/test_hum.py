"""The hum budget: the ripple's spectrum, how it enters each stage, how it adds, and the
remedies the findings promise.

Outside checks, each named beside it: the Fourier series of a sawtooth; the definition of
power-supply rejection; the first-order RC low-pass; a plain nodal solve written here with
numpy (not the project's network code); and the chain solved again with a finding's remedy
applied to the file.
"""

from __future__ import annotations

import cmath
import json
import math
import tomllib
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from chainbudget.budget import Budget, compute
from chainbudget.budget.hum import HumBudget, hum_budget, solve_hum
from chainbudget.budget.supplies import loaded_analysis, supply_budgets
from chainbudget.chainfile import Chain, load_chain, parse_chain
from chainbudget.cli import app
from chainbudget.supplies.base import SupplyBudget

ROOT = Path(__file__).resolve().parents[1]
SHED = ROOT / "chains" / "shed_amp_mains.toml"
runner = CliRunner()

HEAD = """
[chain]
title = "hum test"
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
ambient = "25 degC"
points_per_decade = 10

[source]
level = "-20 dBV"
max_level = "-10 dBV"
impedance = "1k"

[load]
impedance = "8 ohm"
sensitivity = "90 dB"

# A near-ideal op-amp of our own (a demonstration part): its supply rejection 80 dB, falling
# from 100 Hz.
[opamp.ideal]
gbw = "100 gigahertz"
slew_rate = "1000 V/us"
open_loop_gain = "120 dB"
output_resistance = "50 ohm"
swing_margin = "1.5 V"
output_current = "100 mA"
psrr = "80 dB"
psrr_corner = "100 Hz"
"""


def chain_of(text: str) -> Chain:
    return parse_chain(tomllib.loads(HEAD + text), "hum-test.toml")


def with_ripple(
    supplies: tuple[SupplyBudget, ...], rail: str, hz: float, harmonics: list[complex]
) -> list[SupplyBudget]:
    """The solved supplies with ``rail`` given a ripple spectrum of our choosing."""
    return [
        replace(s, state=replace(s.state, ripple_hz=hz, harmonics_vpk=tuple(harmonics)))
        if s.name == rail
        else s
        for s in supplies
    ]


def hum_with_ripple(chain: Chain, rail: str, hz: float, harmonics: list[complex]) -> HumBudget:
    """The hum budget of ``chain`` with ``rail`` given a ripple spectrum of our choosing."""
    analysis = loaded_analysis(chain)
    supplies = with_ripple(supply_budgets(analysis), rail, hz, harmonics)
    hum, _ = hum_budget(analysis, supplies, None)
    return hum


def db20(x: float) -> float:
    return 20.0 * math.log10(x)


# --- the ripple's spectrum ------------------------------------------------------------------


def test_a_reservoir_under_a_steady_load_ripples_as_a_sawtooth_of_harmonics_vpp_over_pi_n() -> None:
    """Fourier series of a sawtooth of peak-to-peak V_pp: b_n = V_pp/(pi n) (Kreyszig,
    Advanced Engineering Mathematics, 10th ed., sec. 11.1, the sawtooth f(x) = x on
    (-pi, pi) with b_n = 2(-1)^(n+1)/n). A huge reservoir under a steady current recharges
    in an instant (conduction under 2 degrees), discharging linearly by V_pp = I/(2 f C)
    (constant-current ripple) in between: a sawtooth. Tolerance 3 %: the short recharge."""
    chain = chain_of(
        """
[[supply]]
name = "raw"
kind = "rectified"
secondary = "15 V"
mains_tolerance = "0 %"
line_frequency = "50 Hz"
bridge_drop = "1.8 V"
reservoir = "1 F"
winding_resistance = "0 ohm"

[[stage]]
name = "load"
kind = "block"
gain = 1
input_impedance = "10k"
output_impedance = "0 ohm"
supply_current = "1 A"
positive = "raw"
"""
    )
    budget = compute(chain)
    harmonics = budget.supply("raw").ripple_harmonics
    vpp = 1.0 / (2.0 * 50.0 * 1.0)
    assert len(harmonics) >= 5
    for n, (hz, v) in enumerate(harmonics[:5], start=1):
        assert hz == pytest.approx(100.0 * n, rel=1e-12)
        assert abs(v) == pytest.approx(vpp / (math.pi * n), rel=3e-2, abs=0.0)


# --- supply rejection -----------------------------------------------------------------------

FOLLOWER = """
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"

[[stage]]
name = "buffer"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10 ohm"
ground_leg = "10 Mohm"
opamp = "ideal"
positive = "plus"
"""


@pytest.mark.parametrize("fundamental_hz", [10.0, 1000.0])
def test_an_op_amp_follower_passes_its_rail_ripple_over_its_psrr(fundamental_hz: float) -> None:
    """Definition of power-supply rejection (the supply change over the input-referred change
    it causes; Franco, Design with Operational Amplifiers, 4th ed., sec. 5.5, from memory):
    a follower with 80 dB shows v x 1e-4 at its output at low frequency, rising 20 dB/decade
    above the 100 Hz corner, |1 + j f/f_c|. The follower's gain (1 + 10/1e7) and its 120 dB
    loop give the last 1e-5."""
    chain = chain_of(FOLLOWER)
    hum = hum_with_ripple(chain, "plus", fundamental_hz, [1.0 + 0.0j] * 8)
    assert [p.path for p in hum.paths] == ["V+ pin (PSRR)"]
    for n, harmonic in enumerate(hum.harmonics, start=1):
        f = n * fundamental_hz
        expected = 1e-4 * abs(1.0 + 1j * f / 100.0) / math.sqrt(2.0)
        assert db20(harmonic.vrms) == pytest.approx(db20(expected), abs=1e-3)
    if fundamental_hz == 1000.0:  # 1 kHz to 8 kHz, well above the corner: 20 dB/decade
        slope = db20(hum.harmonics[7].vrms / hum.harmonics[0].vrms) / math.log10(8.0)
        assert slope == pytest.approx(20.0, abs=0.1)
    else:  # 10 Hz: a tenth of the corner, within 0.05 dB of the flat 80 dB
        assert db20(hum.harmonics[0].vrms * math.sqrt(2.0)) == pytest.approx(-80.0, abs=0.05)


# --- a divider as the bias point ------------------------------------------------------------

DIVIDER = """
[[supply]]
name = "raw"
kind = "rectified"
secondary = "15 V"
line_frequency = "50 Hz"
reservoir = "2200 uF"
regulation = "10 %"
rated_current = "1 A"

[[supply]]
name = "half"
kind = "divider"
from = "raw"
upper = "47k"
lower = "47k"
capacitance = "10 uF"

[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "inverting"
input = "10k"
feedback = "47k"
opamp = "ideal"
positive = "raw"
bias = "half"
"""


def test_a_divider_with_a_capacitor_passes_half_the_ripple_through_a_first_order_low_pass() -> None:
    """First-order RC low-pass (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 1.7.1,
    from memory): R1 = R2 with C across R2 gives v/2 / (1 + j 2 pi f (R1||R2) C) at the bias
    point, phase included (the contract's divider). Then the inverting stage's + input sits
    at that point: it reaches the output times the noise gain 1 + R_f/(R_i + R_s)."""
    budget = compute(chain_of(DIVIDER))
    raw = dict(budget.supply("raw").ripple_harmonics)
    half = dict(budget.supply("half").ripple_harmonics)
    r = 47e3 / 2.0
    for hz, v in raw.items():
        expected = v / 2.0 / (1.0 + 2j * math.pi * hz * r * 10e-6)
        assert abs(half[hz] - expected) <= 1e-9 * abs(expected)
    hum = budget.hum
    assert hum is not None
    bias = next(p for p in hum.paths if p.path == "bias at + input")
    noise_gain = 1.0 + 47e3 / (10e3 + 1e3)
    alone = math.sqrt(sum(abs(v) ** 2 for v in half.values()) / 2.0) * noise_gain
    assert db20(bias.vrms) == pytest.approx(db20(alone), abs=0.01)


# --- a filter on a pre-amp's rail, and two stages on one rail: a plain nodal solve ------------

TWO_STAGES = """
[[supply]]
name = "raw"
kind = "rectified"
secondary = "15 V"
line_frequency = "50 Hz"
reservoir = "2200 uF"
regulation = "10 %"
rated_current = "1 A"
{filter}
[[stage]]
name = "first"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "20k"
ground_leg = "10k"
opamp = "ideal"
positive = "{rail}"
negative = "ground"
bias = "0 V"

[[stage]]
name = "second"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "40k"
ground_leg = "10k"
opamp = "ideal"
positive = "{rail}"
negative = "ground"
bias = "0 V"
"""
FILTER = """
[[supply]]
name = "clean"
kind = "rc_filter"
from = "raw"
resistance = "100 ohm"
capacitance = "470 uF"
"""


def plain_nodal_output(f: float, e: complex) -> complex:
    """The output of the two stages, each with a source e at its + input (its rail's ripple
    over its PSRR), by a plain nodal solve written here.

    Each op-amp: v_int = A(s)(v+ + e - v-), A(s) = A0/(1 + s A0/(2 pi GBW)), R_o = 50 ohm to
    its output; feedback R_f from the output to the summing node, R_g from there to ground;
    the source at rest (its 1 kohm to ground, no current into the + input, so stage 1's +
    sits at 0 V); an 8 ohm load. Unknowns: s1, o1, s2, o2 (the + input of stage 2 is o1).
    KCL at each node.
    """
    a0, gbw, r_o, r_load = 1e6, 100e9, 50.0, 8.0
    a = a0 / (1.0 + 2j * math.pi * f * a0 / (2.0 * math.pi * gbw))
    rf1, rg1, rf2, rg2 = 20e3, 10e3, 40e3, 10e3
    m = np.zeros((4, 4), complex)
    b = np.zeros(4, complex)
    # s1: (s1)/rg1 + (s1 - o1)/rf1 = 0
    m[0, 0] = 1 / rg1 + 1 / rf1
    m[0, 1] = -1 / rf1
    # o1: (o1 - a(0 + e - s1))/r_o + (o1 - s1)/rf1 = 0
    m[1, 1] = 1 / r_o + 1 / rf1
    m[1, 0] = a / r_o - 1 / rf1
    b[1] = a * e / r_o
    # s2: s2/rg2 + (s2 - o2)/rf2 = 0
    m[2, 2] = 1 / rg2 + 1 / rf2
    m[2, 3] = -1 / rf2
    # o2: (o2 - a(o1 + e - s2))/r_o + (o2 - s2)/rf2 + o2/r_load = 0
    m[3, 3] = 1 / r_o + 1 / rf2 + 1 / r_load
    m[3, 1] = -a / r_o
    m[3, 2] = a / r_o - 1 / rf2
    b[3] = a * e / r_o
    return complex(np.linalg.solve(m, b)[3])


def _two_stages(filtered: bool) -> tuple[Budget, str]:
    rail = "clean" if filtered else "raw"
    text = TWO_STAGES.format(filter=FILTER if filtered else "", rail=rail)
    return compute(chain_of(text)), rail


def test_two_stages_on_one_rail_add_in_phase_as_a_plain_nodal_solve_gives() -> None:
    """Both op-amps' PSRR sources come from one rail, one waveform: their output phasors add
    as a complex sum (the contract's "One root, one waveform"), checked harmonic by harmonic
    against the plain nodal solve above (rtol 1e-6), and here in phase: the sum of the two
    paths' magnitudes."""
    budget, rail = _two_stages(filtered=False)
    hum = budget.hum
    assert hum is not None
    ripple = budget.supply(rail).ripple_harmonics
    for (hz, v), harmonic in zip(ripple, hum.harmonics, strict=True):
        e = v * 1e-4 * abs(1.0 + 1j * hz / 100.0)
        expected = abs(plain_nodal_output(hz, e)) / math.sqrt(2.0)
        assert harmonic.vrms == pytest.approx(expected, rel=1e-6, abs=0.0)
    first, second = (next(p for p in hum.paths if p.stage == s) for s in ("first", "second"))
    assert hum.output_vrms == pytest.approx(first.vrms + second.vrms, rel=1e-4, abs=0.0)
    assert second.vrms / first.vrms == pytest.approx(1.0 / 3.0, rel=1e-4, abs=0.0)


def test_an_rc_filter_on_the_rail_lowers_the_hum_by_its_rc_ratio() -> None:
    """First-order RC low-pass: every harmonic of the output hum falls by |1 + j w R C| with
    100 ohm and 470 uF in the rail (both stages behind it), the plain solve again the
    reference for the filtered rail (its ripple the parent's times 1/(1 + j w R C))."""
    plain, _ = _two_stages(filtered=False)
    filtered, rail = _two_stages(filtered=True)
    assert plain.hum is not None and filtered.hum is not None
    raw = dict(filtered.supply("raw").ripple_harmonics)
    for hz, v in filtered.supply(rail).ripple_harmonics:
        lowpass = 1.0 / (1.0 + 2j * math.pi * hz * 100.0 * 470e-6)
        assert cmath.isclose(v, raw[hz] * lowpass, rel_tol=1e-9)
    for before, after in zip(plain.hum.harmonics, filtered.hum.harmonics, strict=True):
        # the rail's own spectrum moves a little with the filter's drop (same current, so
        # the rectifier's load is the same: the ratio is the filter's)
        ratio = abs(1.0 + 2j * math.pi * before.hz * 100.0 * 470e-6)
        assert db20(before.vrms / after.vrms) == pytest.approx(db20(ratio), abs=0.01)


# --- findings and their remedies ------------------------------------------------------------


def _check_json(path: Path) -> dict:
    done = runner.invoke(app, ["check", str(path), "--format", "json"])
    assert done.exit_code in (0, 1), done.output
    return json.loads(done.output)


def test_the_shed_amp_reports_its_hum_and_its_dominant_path() -> None:
    data = _check_json(SHED)
    hum = data["hum"]
    for key in ("output_vrms", "output_a_vrms", "spl_db", "spl_a_db", "hum_to_noise_db"):
        assert isinstance(hum[key], float)
    assert [r["supply"] for r in hum["by_rail"]] == ["raw"]
    assert hum["by_path"][0]["stage"] == "pre"
    assert hum["by_path"][0]["path"] == "bias at + input"
    assert [h["hz"] for h in hum["harmonics"]][:3] == [100.0, 200.0, 300.0]
    assert all("hum_vrms" in node for node in data["nodes"])
    codes = [(f["code"], f["severity"], f["stage"]) for f in data["findings"]]
    assert ("hum-over-noise", "warning", None) in codes
    assert ("hum-dominant-path", "note", "pre") in codes
    remedies = [f for f in data["findings"] if f["code"] == "hum-remedy"]
    assert len(remedies) == len(hum["remedies"]) >= 2
    over = next(f for f in data["findings"] if f["code"] == "hum-over-noise")
    assert over["figures"]["hum_to_noise_db"] == pytest.approx(hum["hum_to_noise_db"], abs=1e-9)


def test_loud_hum_at_one_metre_is_a_warning() -> None:
    """Hum at 1 m over 20 dB(A) (common practice, no source): the shed amp into a more
    sensitive speaker."""
    chain = load_chain(SHED).replace("load.sensitivity", "106 dB")
    budget = compute(chain)
    assert budget.hum is not None and budget.hum.spl_a_db is not None
    assert budget.hum.spl_a_db > 20.0
    audible = [fi for fi in budget.findings if fi.code == "hum-audible"]
    assert [(fi.severity, fi.figures["spl_a_db"]) for fi in audible] == [
        ("warning", pytest.approx(budget.hum.spl_a_db, abs=1e-9))
    ]
    assert "hum-audible" in {fi.code for fi in budget.findings}


@pytest.mark.parametrize("what", ["capacitance", "reservoir"])
def test_a_remedy_applied_to_the_file_lowers_the_hum_as_promised(what: str) -> None:
    """The chain solved again, from the file, with the remedy's values in it: the hum comes
    out as the finding promised, within 0.5 dB."""
    chain = load_chain(SHED)
    budget = compute(chain)
    assert budget.hum is not None
    remedy = next(r for r in budget.hum.remedies if r.what == what)
    assert remedy.edits
    after = compute(chain.with_values(dict(remedy.edits)))
    assert after.hum is not None
    promised = db20(budget.hum.output_a_vrms / remedy.expected_a_vrms)
    got = db20(budget.hum.output_a_vrms / after.hum.output_a_vrms)
    assert promised > 3.0
    assert got == pytest.approx(promised, abs=0.5)


def test_a_supply_filter_remedy_written_into_the_file_lowers_the_hum_as_promised(
    tmp_path: Path,
) -> None:
    """The practice amp's driver takes its hum from both rails through its supply rejection;
    the remedy puts an rc_filter in each. The file is edited as the finding says (two
    supplies added, the driver's rails moved) and solved again: within 0.5 dB."""
    path = ROOT / "chains" / "practice_amp_mains.toml"
    budget = compute(load_chain(path))
    assert budget.hum is not None
    remedy = next(r for r in budget.hum.remedies if r.what == "filter")
    r_text, c_text = (
        f"{remedy.values['resistance_ohm']:g} ohm",
        f"{remedy.values['capacitance_f'] * 1e6:g} uF",
    )
    assert f'resistance = "{r_text}"' in remedy.text
    text = path.read_text(encoding="utf-8")
    moved = dict(remedy.edits)
    added = ""
    for key, name in moved.items():
        role = key.split(".")[1]
        parent = "rail" if role == "positive" else "rail.neg"
        added += (
            f'\n[[supply]]\nname = "{name}"\nkind = "rc_filter"\nfrom = "{parent}"\n'
            f'resistance = "{r_text}"\ncapacitance = "{c_text}"\n'
        )
    head, stages = text.split("[[stage]]", 1)
    stages = "[[stage]]" + stages
    driver_at = stages.index('name = "driver"')
    end = stages.index("[[stage]]", driver_at)
    driver = stages[driver_at:end]
    driver = driver.replace('positive = "rail"', f'positive = "{moved["driver.positive"]}"')
    driver = driver.replace('negative = "rail.neg"', f'negative = "{moved["driver.negative"]}"')
    edited = tmp_path / "practice_filtered.toml"
    edited.write_text(head + added + "\n" + stages[:driver_at] + driver + stages[end:])
    after = compute(load_chain(edited))
    assert after.hum is not None
    promised = db20(budget.hum.output_a_vrms / remedy.expected_a_vrms)
    got = db20(budget.hum.output_a_vrms / after.hum.output_a_vrms)
    assert promised > 10.0
    assert got == pytest.approx(promised, abs=0.5)


def test_a_single_supply_stage_with_no_named_bias_is_reported_ideal() -> None:
    """The contract: an unnamed bias is an ideal, ripple-free point, and the report says so
    (the kitchen radio's op-amp stages sit at mid-rail with no divider named)."""
    data = _check_json(ROOT / "chains" / "kitchen_radio_mains.toml")
    assert data["hum"]["ideal_bias"] == ["pre", "tone"]
    done = runner.invoke(app, ["check", str(ROOT / "chains" / "kitchen_radio_mains.toml")])
    assert "bias point taken as ideal" in done.output


def test_a_chain_without_mains_ripple_has_no_hum_and_no_hum_table() -> None:
    data = _check_json(ROOT / "chains" / "busking_amp.toml")
    assert data["hum"]["output_vrms"] == 0.0
    assert data["hum"]["by_path"] == []
    done = runner.invoke(app, ["check", str(ROOT / "chains" / "busking_amp.toml")])
    assert "Hum by path" not in done.output


def test_a_regulator_rejects_the_ripple_as_given_at_its_fundamental_falling_above_its_corner() -> (
    None
):
    """The contract's regulator: ``ripple_rejection`` at twice the line frequency, falling at
    20 dB/decade above ``ripple_rejection_corner`` (a first-order roll-off, normalised at
    the fundamental), a real positive factor on each harmonic."""
    budget = compute(
        chain_of(
            """
[[supply]]
name = "raw"
kind = "rectified"
secondary = "15 V"
line_frequency = "50 Hz"
reservoir = "4700 uF"
regulation = "10 %"
rated_current = "1 A"

[[supply]]
name = "clean"
kind = "regulator"
from = "raw"
output = "12 V"
dropout = "2 V"
ripple_rejection = "60 dB"
ripple_rejection_corner = "50 Hz"

[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
opamp = "ideal"
positive = "clean"
"""
        )
    )
    raw = dict(budget.supply("raw").ripple_harmonics)
    for hz, v in budget.supply("clean").ripple_harmonics:
        factor = 1e-3 * abs(1.0 + 1j * hz / 50.0) / abs(1.0 + 1j * 100.0 / 50.0)
        assert cmath.isclose(v, raw[hz] * factor, rel_tol=1e-12)
    assert abs(budget.supply("clean").ripple_harmonics[0][1]) == pytest.approx(
        1e-3 * abs(raw[100.0]), rel=1e-12, abs=0.0
    )


def test_a_block_with_a_psrr_refers_its_rail_ripple_to_its_input() -> None:
    """A block's ``psrr``: v_ripple 10^(-psrr/20) at its input, times its open-circuit gain
    at its output (the Thevenin model; its output impedance into the load: 0.1 ohm into
    8 ohm loses 1/81.1)."""
    chain = chain_of(
        """
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"

[[stage]]
name = "module"
kind = "block"
gain = 10
input_impedance = "10k"
output_impedance = "0.1 ohm"
psrr = "60 dB"
positive = "plus"
"""
    )
    hum = hum_with_ripple(chain, "plus", 100.0, [2.0 + 0.0j])
    expected = 2.0 * 1e-3 * 10.0 * 8.0 / 8.1 / math.sqrt(2.0)
    assert db20(hum.output_vrms) == pytest.approx(db20(expected), abs=1e-4)
    assert [p.path for p in hum.paths] == ["V+ pin (PSRR)"]


def test_hum_travels_backwards_from_a_bias_point_through_the_input_resistor() -> None:
    """An inverting stage holds its summing node at its + input, here the ripple of a named
    bias divider: through its input resistor that drives the node before it, whose source
    resistance R_th (the volume's wiper: x P || ((1 - x) P + R_s)) divides it:
    v_before = v_b R_th / (R_th + R_i) (Ohm's law with a virtual short; rtol 1e-4 for the
    120 dB loop)."""
    chain = chain_of(
        """
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"

[[supply]]
name = "half"
kind = "divider"
from = "plus"
upper = "10k"
lower = "10k"

[[stage]]
name = "volume"
kind = "volume"
pot = "10k"
taper = "linear"
position = 0.3

[[stage]]
name = "inv"
kind = "opamp_gain"
topology = "inverting"
input = "10k"
feedback = "47k"
opamp = "ideal"
positive = "plus"
bias = "half"
"""
    )
    hum = hum_with_ripple(chain, "half", 100.0, [0.01 + 0.0j])
    x, pot, r_s, r_i = 0.3, 10e3, 1e3, 10e3
    lower, upper = x * pot, (1.0 - x) * pot + r_s
    r_th = lower * upper / (lower + upper)
    expected = 0.01 * r_th / (r_th + r_i) / math.sqrt(2.0)
    assert hum.node_vrms[0] == pytest.approx(expected, rel=1e-4, abs=0.0)


def test_a_follower_takes_its_negative_rails_ripple_inverted_through_its_emitter_resistor() -> None:
    """An NPN follower's emitter resistor returns to the negative rail: its ripple v reaches
    the emitter as the Norton current v/R_E into R_E || Z_e || R_L, Z_e = r_e + (R_s +
    r_bb')/(beta + 1) looking into the emitter (Horowitz & Hill, 3rd ed., sec. 2.2.3, from
    memory), and inverted: a resistor sees a negative rail's ripple as the circuit does."""
    chain = chain_of(
        """
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"

[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"

[[stage]]
name = "buffer"
kind = "follower"
transistor = "small_npn"
bias = "resistor"
emitter_resistor = "1k5"
base_bias = "0 V"
positive = "plus"
negative = "minus"
"""
    )
    analysis = loaded_analysis(chain)
    supplies = with_ripple(supply_budgets(analysis), "minus", 100.0, [0.1 + 0.0j])
    hum, _ = solve_hum(analysis, supplies)
    assert hum is not None
    (source, rail, _k), phasor = hum.sources[0], hum.at_nodes[0, -1, 0]
    assert (source.path, rail) == ("emitter resistor", "minus")
    node = budget_node_emitter_current(chain)
    vt = 1.380649e-23 * (25.0 + 273.15) / 1.602176634e-19
    beta, r_bb = 200.0, 100.0
    r_e = vt / node
    z_e = r_e + (1e3 + r_bb) / (beta + 1.0)
    r_e_bias, r_load = 1.5e3, 8.0
    shunt = 1.0 / (1.0 / r_e_bias + 1.0 / z_e + 1.0 / r_load)
    expected = -0.1 / r_e_bias * shunt
    assert phasor.real == pytest.approx(expected, rel=1e-3, abs=0.0)
    assert abs(phasor.imag) < 1e-6 * abs(expected)


def budget_node_emitter_current(chain: Chain) -> float:
    """The follower's bias current, I_E = (V_B - V_BE - V-)/R_E with its base driven at the
    0 V bias point and no resistor in its base lead (Horowitz & Hill sec. 2.2.5, from
    memory), A."""
    return (0.0 - 0.65 + 15.0) / 1.5e3
