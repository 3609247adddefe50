"""The spread of the hum, the rails' ripple, the noise at every node and the op-amp loops:
brute force, one trial at a time through the real check, closed forms of a textbook
stage, and a rectifier solved here by solve_ivp."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from numpy.typing import NDArray
from test_spread import (
    _assert_same_figure,
    _chain,
    _grid_rtol,
    _hz_key,
    _in_db,
    _json_figure,
    trial_changes,
)

from chainbudget.chainfile import Chain
from chainbudget.spread.flags import flag_key, is_flag

ROOT = Path(__file__).resolve().parents[1]

# The kitchen radio with its reservoir and its regulator's parts held exact, so that the
# rails' ripple moves only with the stages' loads (the power tree settled per trial): the
# hum of a trial then tests the stages' transfers and those loads, without the reservoir's
# interpolation over C (the ripple per trial with a drawn reservoir is tested below, on a
# chain whose reservoir alone is drawn).
KITCHEN = (ROOT / "chains" / "kitchen_radio_mains.toml").read_text()
KITCHEN_HELD_RIPPLE = KITCHEN.replace(
    'reservoir = "2200 uF"', 'reservoir = "2200 uF"\ntolerance = { reservoir = "0 %" }', 1
).replace(
    'bleeder = "5k6"',
    'bleeder = "5k6"\n'
    'tolerance = { reference = "0 %", upper = "0 %", lower = "0 %", bleeder = "0 %" }',
    1,
)

FAMILIES = ("hum", "nodes", "loop", "noise", "input_noise", "ein", "noise_figure", "dynamic")


def _evaluator(chain: Chain):  # noqa: ANN202
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    parts, _ = chain_parts(chain)
    return parts, Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


def test_hum_noise_and_loops_of_each_trial_equal_the_check_of_that_trial() -> None:
    """Brute force, one sample at a time: each of four trials of the kitchen radio written
    into the file (`Chain.with_values`, regulator and op-amp stages' parts drawn) and checked
    on its own gives the batched hum (every node, the output unweighted and A-weighted, the
    input-referred hum, hum over noise, hum at 1 m), the noise at every node, the
    input-referred noise and EIN, the noise figure, dynamic range, each stage's share of
    the output noise and the op-amp loops' gain, unity-gain frequency and phase margin:
    rtol 1e-9 (noise compared in dB, 1e-8 dB); the hum within 1e-5 dB (measured 1e-6:
    each trial's stages draw their own currents from the raw rail, whose ripple the
    spread takes under that load, the rectifier's figures to second order in it)."""
    from chainbudget.budget import compute
    from chainbudget.report.json_view import budget_json

    chain = _chain(KITCHEN_HELD_RIPPLE)
    parts, evaluate = _evaluator(chain)
    positions = np.random.default_rng(14).random((4, len(parts)))
    batched = evaluate(positions)
    wanted = [
        p
        for p in batched
        if p.startswith(("hum.", "noise.", "input_noise", "ein", "noise_figure", "dynamic"))
        or p.endswith(("hum_vrms", "noise_vrms", "noise_a_vrms", "noise_468_vrms"))
        or p.endswith(("noise_density_v_rthz", "snr_db", "snr_a_db"))
        or p.endswith(("loop_gain_db", "unity_gain_hz", "phase_margin_deg"))
    ]
    for key in ("hum.output_vrms", "hum.output_a_vrms", "hum.hum_to_noise_db", "hum.spl_a_db"):
        assert key in wanted
    assert "nodes.pre.hum_vrms" in wanted and "nodes.pre.noise_vrms" in wanted
    assert "nodes.tone.phase_margin_deg" in wanted and "ein_a_dbu" in wanted
    for path in wanted:  # the parts move every one of them but the output's clip (the
        # power block's rated swing, which no drawn part moves)
        assert (np.ptp(batched[path]) > 0.0) != (path == "noise.output_clip_vrms"), path
    for t in range(len(positions)):
        values = evaluate.values(positions[t : t + 1])
        edited = chain.with_values(trial_changes(chain, parts, values))
        budget = compute(edited)
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        for path in wanted:
            held = _json_figure(data, path)
            if _is_hum(path):
                # the whole check of the trial: its rails' ripple moves with the loads
                got, want = _db(path, batched[path][t]), _db(path, held)
                assert got == pytest.approx(want, rel=0, abs=1e-5), (path, t)
            elif _in_db(path):
                got, want = 20 * math.log10(batched[path][t]), 20 * math.log10(held)
                assert got == pytest.approx(want, rel=0, abs=1e-8), (path, t)
            else:
                assert batched[path][t] == pytest.approx(held, rel=1e-9, abs=1e-12), (path, t)


def _is_hum(path: str) -> bool:
    return path.startswith("hum.") or path.endswith(".hum_vrms")


def _db(path: str, value: float) -> float:
    """A figure in dB: a level as it is, a voltage as 20 log10 of it."""
    return float(value) if path.endswith("_db") else 20 * math.log10(value)


# One non-inverting stage on a raw rectified rail (its reservoir held, so that the ripple
# moves only with the stage's load), the op-amp ideal but for its supply rejection, single
# supply with an ideal bias point: the hum enters at the V+ pin alone.
PSRR_STAGE = """
[chain]
title = "hum through the noise gain"
[source]
level = "10 mV"
impedance = "0 ohm"
[load]
impedance = "10k"
sensitivity = "90 dB"
[tolerances]
resistors = "5 %"
[[supply]]
name = "raw"
kind = "rectified"
secondary = "15 V"
mains_tolerance = "10 %"
line_frequency = "50 Hz"
bridge_drop = "1.8 V"
reservoir = "1000 uF"
regulation = "12 %"
rated_current = "0.5 A"
tolerance = { reservoir = "0 %" }
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "9k"
ground_leg = "1k"
opamp = "ideal"
positive = "raw"
[opamp.ideal]
gbw = "100 gigahertz"
slew_rate = "1000 V/us"
noise_voltage = "1 nV/rtHz"
open_loop_gain = "200 dB"
output_resistance = "0 ohm"
swing_margin = "1 V"
output_current = "1 A"
supply_current = "1 mA"
psrr = "60 dB"
psrr_corner = "200 Hz"
"""


def test_hum_of_each_trial_is_the_rail_ripple_over_the_psrr_times_the_noise_gain() -> None:
    """A supply-rejection source is an input-referred voltage at the + input, amplified by
    the noise gain 1 + Rf/Rg (Franco, Design with Operational Amplifiers, 4th ed., sec. 5.5,
    from memory): per harmonic |v_out| = |v_rail| / PSRR(f) (1 + Rf/Rg), PSRR(f) =
    10^(60/20) / |1 + j f / 200 Hz|, harmonics adding as powers, v_rms^2 = sum |v|^2 / 2;
    A-weighting per IEC 61672-1 Annex E (the closed form written here); each trial's drawn
    Rf, Rg; rtol 1e-6 (the op-amp's 200 dB open-loop gain)."""
    chain = _chain(PSRR_STAGE)
    parts, evaluate = _evaluator(chain)
    positions = np.random.default_rng(7).random((16, len(parts)))
    figures = evaluate(positions)
    values = dict(zip([p.key for p in parts], evaluate.values(positions), strict=True))
    noise_gain = 1.0 + values["feedback"] / values["ground_leg"]
    # each trial's own ripple: the stage's current at clip, and so the rail's load, moves
    # with its drawn feedback network (the power tree settled per trial)
    ripple = evaluate.nominal.supply("raw").ripple_harmonics
    assert len(ripple) >= 3
    f = np.array([hz for hz, _ in ripple])
    v = np.array(
        [figures[f"supplies.raw.ripple_harmonics.{_hz_key(hz)}.vpk"] for hz, _ in ripple]
    ).T
    assert np.ptp(v[:, 0]) > 0.0
    per_volt = v * np.abs(1.0 + 1j * f / 200.0) / 10.0 ** (60.0 / 20.0)

    def a_weight(hz: np.ndarray) -> np.ndarray:  # IEC 61672-1 Annex E, 0 dB at 1 kHz
        f1, f2, f3, f4 = 20.598997, 107.65265, 737.86223, 12194.217
        r = (
            f4**2
            * hz**4
            / ((hz**2 + f1**2) * np.sqrt((hz**2 + f2**2) * (hz**2 + f3**2)) * (hz**2 + f4**2))
        )
        return r * 10 ** (2.0 / 20.0)

    flat = np.sqrt(np.sum(per_volt**2, axis=1) / 2.0) * noise_gain
    weighted = np.sqrt(np.sum((per_volt * a_weight(f)) ** 2, axis=1) / 2.0) * noise_gain
    assert np.ptp(noise_gain) > 0.05
    assert figures["hum.output_vrms"] == pytest.approx(flat, rel=1e-6)
    assert figures["nodes.pre.hum_vrms"] == pytest.approx(flat, rel=1e-6)
    assert figures["hum.output_a_vrms"] == pytest.approx(weighted, rel=1e-4)
    # at 1 m: L = 90 dB + 20 log10(V / sqrt(1 W x 10 kohm)), the definition of sensitivity
    spl = 90.0 + 20.0 * np.log10(weighted / math.sqrt(10e3))
    assert figures["hum.spl_a_db"] == pytest.approx(spl, abs=1e-3)


# The same stage on a clean rail with a single-pole op-amp: A(f) = A0 / (1 + j f A0/GBW).
LOOP_STAGE = """
[chain]
title = "one loop"
[source]
level = "10 mV"
impedance = "0 ohm"
[load]
impedance = "10k"
[tolerances]
resistors = "5 %"
[[supply]]
name = "bat"
kind = "dc"
voltage = "30 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "9k"
ground_leg = "1k"
opamp = "slow"
positive = "bat"
[opamp.slow]
gbw = "1 MHz"
slew_rate = "1 V/us"
open_loop_gain = "100 dB"
output_resistance = "0 ohm"
swing_margin = "1 V"
output_current = "0.1 A"
supply_current = "1 mA"
"""


def test_loop_figures_of_each_trial_are_the_single_pole_closed_forms() -> None:
    """Loop gain, unity-gain frequency and phase margin of a non-inverting stage with a
    single-pole op-amp, per trial, against the closed forms of T = A(f) beta with
    beta = Rg/(Rf + Rg) (Franco, Design with Operational Amplifiers, 4th ed., sec. 8.1, from
    memory): |T(f_ref)| = A0 beta / |1 + j f_ref A0/GBW|, f_u = (GBW/A0) sqrt((A0 beta)^2 - 1),
    margin = 180 deg - atan(f_u A0/GBW); loop gain to 1e-5 dB (the model's floors on an
    ideal termination leave parts in 1e7), the crossing within the interpolation of the
    stability axis (rtol 1e-4, 0.01 deg)."""
    chain = _chain(LOOP_STAGE)
    parts, evaluate = _evaluator(chain)
    positions = np.random.default_rng(8).random((16, len(parts)))
    figures = evaluate(positions)
    values = dict(zip([p.key for p in parts], evaluate.values(positions), strict=True))
    beta = values["ground_leg"] / (values["feedback"] + values["ground_leg"])
    a0, gbw, f_ref = 1e5, 1e6, 1e3
    gain_db = 20.0 * np.log10(a0 * beta / np.abs(1.0 + 1j * f_ref * a0 / gbw))
    unity = gbw / a0 * np.sqrt((a0 * beta) ** 2 - 1.0)
    margin = 180.0 - np.degrees(np.arctan(unity * a0 / gbw))
    assert np.ptp(beta) > 0.005
    assert figures["nodes.pre.loop_gain_db"] == pytest.approx(gain_db, rel=0, abs=1e-5)
    assert figures["nodes.pre.unity_gain_hz"] == pytest.approx(unity, rel=1e-4)
    assert figures["nodes.pre.phase_margin_deg"] == pytest.approx(margin, rel=0, abs=1e-2)


def test_loop_figures_on_the_reduced_axis_equal_those_on_the_whole_axis(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """The trials' loops are solved first on a reduced stability axis; with no window
    round the nominal crossings (every crossing then between coarse points, so the reduced
    axis cannot stand for the whole one) the figures come from the whole axis, and both
    give the same figures (the whole axis being the check's own): rtol 1e-12."""
    from chainbudget.spread import loops

    chain = _chain(KITCHEN_HELD_RIPPLE)
    parts, evaluate = _evaluator(chain)
    positions = np.random.default_rng(4).random((6, len(parts)))
    first = evaluate(positions)  # through the reduced axis
    calls: list[bool] = []
    original = loops._same_as_full

    def spy(kept: np.ndarray, t: np.ndarray) -> bool:
        calls.append(original(kept, t))
        return calls[-1]

    monkeypatch.setattr(loops, "_same_as_full", spy)
    monkeypatch.setattr(loops, "WINDOW", 1.0)
    whole = evaluate(positions)
    assert calls and not all(calls)  # the whole axis was used
    paths = [p for p in whole if p.endswith(("loop_gain_db", "unity_gain_hz", "margin_deg"))]
    assert len(paths) == 6
    for path in paths:
        assert first[path] == pytest.approx(whole[path], rel=1e-12, abs=0), path


# A rectified rail whose reservoir alone is drawn (20 %; every other part held): its ripple
# reaches one op-amp's V+ pin through an rc_filter; a fixed regulator off the same rail
# (nothing of its own drawn) sits 80 mV above its dropout at the nominal reservoir, so the
# smallest reservoirs take it out of regulation and its ripple then passes unrejected; a
# divider off the regulator biases both op-amps. The op-amps' supply rejection puts the hum
# 1 dB over the A-weighted noise at the nominal reservoir: the reservoir's spread carries
# trials across hum-over-noise, and out of regulation across hum-audible and
# regulator-dropout, the dominant path moving from the filtered V+ pin to the bias point.
DRAWN_RESERVOIR = """
[chain]
title = "hum on a drawn reservoir"
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
[source]
level = "20 mV"
max_level = "40 mV"
impedance = "1k"
[load]
impedance = "8 ohm"
sensitivity = "90 dB"
[tolerances]
resistors = "0 %"
capacitors = "0 %"
pots = "0 %"
references = "0 %"
[[supply]]
name = "raw"
kind = "rectified"
secondary = "15 V"
mains_tolerance = "10 %"
line_frequency = "50 Hz"
bridge_drop = "1.8 V"
reservoir = "2200 uF"
regulation = "12 %"
rated_current = "0.5 A"
tolerance = { reservoir = "20 %" }
[[supply]]
name = "clean"
kind = "regulator"
from = "raw"
output = "13.45 V"
dropout = "2 V"
ripple_rejection = "60 dB"
ripple_rejection_corner = "300 Hz"
[[supply]]
name = "quiet"
kind = "rc_filter"
from = "raw"
resistance = "47 ohm"
capacitance = "470 uF"
[[supply]]
name = "mid"
kind = "divider"
from = "clean"
upper = "10k"
lower = "10k"
capacitance = "10 uF"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "inverting"
input = "10k"
feedback = "47k"
input_cap = "2u2"
opamp = "leaky"
positive = "quiet"
bias = "mid"
[[stage]]
name = "drive"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
ground_cap = "100u"
input_cap = "1u"
bias_resistor = "100k"
opamp = "leaky"
positive = "clean"
bias = "mid"
[[stage]]
name = "amp"
kind = "block"
gain = "26 dB"
input_impedance = "20k"
output_impedance = "0.05 ohm"
max_output = "6 V"
supply_current = "0.25 A"
positive = "raw"
[opamp.leaky]
gbw = "10 MHz"
slew_rate = "10 V/us"
noise_voltage = "10 nV/rtHz"
noise_current = "0.1 pA/rtHz"
open_loop_gain = "110 dB"
output_resistance = "50 ohm"
swing_margin = "1.5 V"
output_current = "20 mA"
supply_current = "2 mA"
psrr = "66 dB"
psrr_corner = "100 Hz"
"""

HUM_CODES = (
    "regulator-dropout",
    "hum-over-noise",
    "hum-audible",
    "hum-dominant-path",
    "hum-remedy",
)


def _follows_the_ripple(path: str) -> bool:
    """The figures a trial's ripple alone moves: the hum and the rails' ripple spectra (the
    nominal load's, which the trial's own tree does not change)."""
    return _is_hum(path) or ".ripple_harmonics." in path


def test_ripple_and_hum_of_each_trial_equal_the_check_of_that_trial() -> None:
    """Brute force, one sample at a time: eight of 24 trials of a drawn reservoir, each
    written into the file (`Chain.with_values`) and checked on its own. Solved alone
    (directly), the trial's every figure equals the check's at rtol 1e-9 (hum in dB,
    1e-8 dB): the rails' troughs and ripple (the rectifier's, the rc_filter's, the
    regulator's with its rejection, the divider's), their spectra, the hum at every node,
    by root supply, by path and by harmonic. Out of regulation the check's tree moves its
    heaviest load with the regulator's output, which the spread holds (docs/tolerances.md;
    the divider's bias point follows the trial's): there the hum and the spectra (at the
    nominal load) still agree at rtol 1e-9 and the rest within 0.1 %. The batch of 24 takes
    the rectifier from its grid of 17 reservoir values: within rtol 1e-8 (abs 1 nV) of each
    trial solved alone. The per-trial codes (regulator-dropout, hum-over-noise, hum-audible,
    hum-dominant-path with its stage, hum-remedy) are the check's of each trial; each is
    drawn by some trials and not by others, and the dominant path by the spread's figures
    is the check's."""
    from chainbudget.budget import compute
    from chainbudget.report.json_view import budget_json
    from chainbudget.spread.evaluate import failing

    chain = _chain(DRAWN_RESERVOIR)
    parts, evaluate = _evaluator(chain)
    assert [p.label for p in parts] == ["raw.reservoir"]
    positions = np.linspace(0.01, 0.99, 24)[:, None]
    batched = evaluate(positions, flags=True)
    masks = failing(evaluate.thresholds(batched), batched)
    for code in HUM_CODES:
        assert 0 < masks[code].sum() < len(positions), code
    figures = [p for p in batched if not is_flag(p)]
    for key in (
        "supplies.clean.ripple_vpp",
        "supplies.quiet.trough_v",
        "supplies.mid.ripple_harmonics.100.vpk",
        "hum.by_rail.raw.a_vrms",
        "hum.by_path.pre.bias at + input.a_vrms",
        "hum.harmonics.200.vrms",
    ):
        assert np.ptp(batched[key]) > 0.0, key
    by_path = [p for p in figures if p.startswith("hum.by_path.") and p.endswith(".a_vrms")]
    out_of_regulation = 0
    for t in range(0, len(positions), 3):
        alone = evaluate(positions[t : t + 1], flags=True)
        for path, values in batched.items():
            rtol = _grid_rtol(path)
            assert values[t] == pytest.approx(alone[path][0], rel=rtol, abs=1e-9), (path, t)
        edited = chain.with_values(
            trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        )
        budget = compute(edited)
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        regulating = alone["supplies.clean.dropout_margin_v"][0] >= 0.0
        out_of_regulation += not regulating
        for path in figures:
            want, got = _json_figure(data, path), alone[path][0]
            if not regulating and not _follows_the_ripple(path):
                assert got == pytest.approx(want, rel=1e-3, abs=1e-9), (path, t)
            else:
                _assert_same_figure(path, got, want, 1e-8, t)
        codes = {f.code for f in budget.findings}
        for code in HUM_CODES:
            assert bool(masks[code][t]) == (code in codes), (code, t)
        dominant = [f.stage for f in budget.findings if f.code == "hum-dominant-path"]
        for stage in ("pre", "drive"):
            flag = batched[flag_key("note", "hum-dominant-path", stage)][t]
            assert bool(flag) == (dominant == [stage]), (stage, t)
        first = data["hum"]["by_path"][0]
        largest = max(by_path, key=lambda p: alone[p][0])
        assert largest == f"hum.by_path.{first['stage']}.{first['path']}.a_vrms", t
    assert out_of_regulation == 1  # the first trial's reservoir takes the regulator out


# One bridge rectifier with a constant load (a block stage): its winding resistance given,
# its open circuit the secondary (no regulation), so that the circuit is written out below.
RECTIFIER_ALONE = """
[chain]
title = "a rectifier and its reservoir"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "0 %"
capacitors = "20 %"
[[supply]]
name = "raw"
kind = "rectified"
secondary = "15 V"
mains_tolerance = "10 %"
line_frequency = "50 Hz"
bridge_drop = "1.8 V"
reservoir = "2200 uF"
winding_resistance = "2 ohm"
[[stage]]
name = "amp"
kind = "block"
gain = "20 dB"
input_impedance = "20k"
output_impedance = "0.1 ohm"
max_output = "5 V"
supply_current = "0.3 A"
positive = "raw"
"""


def _periodic_rectifier(
    peak: float, drop: float, r_s: float, c: float, load_a: float, line_hz: float
) -> tuple[float, NDArray]:
    """The periodic state of a full-wave capacitor-input rectifier written out here:
    C dv/dt = max(e - v, 0)/R_s - I, e = V |sin(2 pi f t)| - V_d (ideal diodes with a fixed
    drop, Kirchhoff's current law at the reservoir), solved by scipy's solve_ivp over one
    ripple period T = 1/(2 f) and shot for v(T) = v(0) by Brent's method; returns the
    ripple peak-to-peak and the reservoir's voltage on 2^14 even points of the period,
    starting at the line's zero crossing."""
    from scipy import integrate, optimize

    omega = 2.0 * math.pi * line_hz
    period = 1.0 / (2.0 * line_hz)

    def slope(t: float, v: NDArray) -> NDArray:
        e = peak * abs(math.sin(omega * t)) - drop
        return (max(e - v[0], 0.0) / r_s - load_a) / c * np.ones(1)

    def run(v0: float, dense: bool = False):  # noqa: ANN202
        return integrate.solve_ivp(
            slope,
            (0.0, period),
            [v0],
            method="DOP853",
            rtol=1e-11,
            atol=1e-11,
            max_step=period / 200,
            dense_output=dense,
        )

    # v(T) - v(0) falls through zero between the open circuit and the constant-current trough
    top = peak - drop
    low = top - 4.0 * load_a / (2.0 * line_hz * c)
    v0 = optimize.brentq(lambda v: run(v).y[0, -1] - v, low, top, xtol=1e-12)
    solved = run(v0, dense=True)
    t = np.arange(2**14) * period / 2**14
    v = solved.sol(t)[0]
    fine = np.linspace(0.0, period, 200001)
    values = solved.sol(fine)[0]
    return float(values.max() - values.min()), v


def test_ripple_per_trial_against_a_rectifier_solved_here_and_the_constant_current_rule() -> None:
    """The ripple of each trial's drawn reservoir (a batch of 25, from the grid of 17
    solves) against the circuit solved here by solve_ivp and shooting
    (`_periodic_rectifier`): the peak-to-peak at low line (0.9 x the open-circuit peak),
    rtol 1e-7 (the extremes, where v' = 0, read on a 200,001-point grid of the dense
    output), and each harmonic's magnitude at nominal line,
    |a_k| = 2 |mean(v exp(-j k 2 pi t / T))| on 2^14 points (the rectangle rule on a
    periodic function), within 1e-8 of the fundamental. The load is the check's (a
    block's constant current: no pulses). And the handbook's rule: Vpp ~ I/(2 f C) for a
    full-wave rectifier (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 9.5.2,
    from memory), a bound the ripple stays under as the reservoir recharges over part of
    each half cycle (here within 40 % of it, the 2 ohm winding stretching the recharge),
    falling as 1/C within 1 % across the trials (Vpp C the same in every one)."""
    chain = _chain(RECTIFIER_ALONE)
    parts, evaluate = _evaluator(chain)
    assert [p.label for p in parts] == ["raw.reservoir"]
    positions = np.linspace(0.0, 1.0, 25)[:, None]
    figures = evaluate(positions)
    reservoir = evaluate.values(positions)[0]
    load = evaluate.nominal.supply("raw").load
    assert load.heaviest_pulse_a == 0.0 and load.nominal_pulse_a == 0.0
    peak = math.sqrt(2.0) * 15.0
    fundamental = None
    for t in (0, 7, 12, 24):
        c = float(reservoir[t])
        vpp, _ = _periodic_rectifier(0.9 * peak, 1.8, 2.0, c, load.heaviest_a, 50.0)
        assert figures["supplies.raw.ripple_vpp"][t] == pytest.approx(vpp, rel=1e-7), t
        _, v = _periodic_rectifier(peak, 1.8, 2.0, c, load.nominal_a, 50.0)
        turn = 2.0 * math.pi * np.arange(v.size) / v.size
        for k in range(1, 9):
            a_k = 2.0 * abs(np.mean(v * np.exp(-1j * k * turn)))
            if k == 1:
                fundamental = a_k
            got = figures[f"supplies.raw.ripple_harmonics.{100 * k}.vpk"][t]
            assert got == pytest.approx(a_k, rel=0, abs=1e-8 * fundamental), (t, k)
    rule = load.heaviest_a / (2.0 * 50.0 * reservoir)
    ratio = figures["supplies.raw.ripple_vpp"] / rule
    assert np.all((ratio > 0.6) & (ratio < 1.0))
    assert np.ptp(ratio) / np.mean(ratio) < 0.01
    assert np.ptp(figures["supplies.raw.ripple_vpp"]) > 0.3 * np.mean(
        figures["supplies.raw.ripple_vpp"]
    )


def test_the_filter_remedy_reach_is_where_the_check_stops_finding_it(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """Where the supply filter is the only remedy the check would find for a path (no
    supply has a value of its own to change, the stage is on a regulator's rail), its
    reach is the attenuation at which the check's filter capacitor passes
    HUM_FILTER_MAX_CAP_F: the check finds the filter just under it and not just over."""
    from chainbudget.budget import compute
    from chainbudget.budget import hum_remedies as hr
    from chainbudget.budget.hum import hum_budget
    from chainbudget.budget.supplies import loaded_analysis
    from chainbudget.supplies import KINDS as SUPPLY_KINDS

    chain = _chain(DRAWN_RESERVOIR)
    budget = compute(chain)
    for name in ("rectified", "rc_filter", "divider"):
        monkeypatch.setattr(type(SUPPLY_KINDS[name]), "ripple_remedy", lambda *args: None)
    assert budget.hum is not None
    path = next(p for p in budget.hum.paths if p.stage == "drive" and p.supply == "clean")
    currents = [0.0 if n.currents is None else n.currents.nominal_a for n in budget.nodes]
    reach = hr.remedy_reach(chain, budget.supplies, currents, path)
    assert 10.0 < reach < math.inf
    _, field = hum_budget(loaded_analysis(chain, corner="low"), budget.supplies, None)
    ctx = hr._Context(chain, {s.name: s for s in budget.supplies}, field, currents)
    assert hr._rc_filter(ctx, path, reach * (1 - 1e-6)) is not None
    assert hr._rc_filter(ctx, path, reach * (1 + 1e-6)) is None
    other = next(p for p in budget.hum.paths if p.stage == "pre" and p.supply == "quiet")
    assert hr.remedy_reach(chain, budget.supplies, currents, other) == math.inf  # a regulator


def test_listed_entries_are_named_at_their_owner_in_the_table() -> None:
    """The table shows a listed entry of the check JSON at the stage or supply it belongs
    to, named in words (a path such as ``hum.by_path.driver.V+ pin (PSRR).a_vrms`` in a
    narrow column wrapped over five lines): a rail's ripple harmonic, the hum by path, by
    root supply and by harmonic, a decimal point in a harmonic's key written back."""
    from chainbudget.spread.view import _place_and_figure

    assert _place_and_figure("supplies.rail.neg.ripple_harmonics.100.vpk") == (
        "supply rail.neg",
        "ripple 100 Hz",
    )
    assert _place_and_figure("supplies.raw.ripple_harmonics.33_4.vpk") == (
        "supply raw",
        "ripple 33.4 Hz",
    )
    assert _place_and_figure("hum.by_path.driver.V+ pin (PSRR).a_vrms") == (
        "driver",
        "hum a via V+ pin (PSRR)",
    )
    assert _place_and_figure("hum.by_rail.rail.neg.vrms") == ("supply rail.neg", "hum from it")
    assert _place_and_figure("hum.harmonics.100.a_vrms") == ("hum", "hum a 100 Hz")
    # any other figure as before
    assert _place_and_figure("supplies.raw.trough_v") == ("supply raw", "trough")
