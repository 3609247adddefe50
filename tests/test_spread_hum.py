"""The spread of the hum, the noise at every node and the op-amp loops: brute force, one
trial at a time through the real check, and closed forms of a textbook stage."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from test_spread import _chain, _json_figure, trial_changes

from chainbudget.chainfile import Chain

ROOT = Path(__file__).resolve().parents[1]

# The kitchen radio with its reservoir held exact: the spread holds each rail's ripple
# spectrum at the nominal check's (docs/tolerances.md), so a brute force that draws the
# reservoir would move the ripple the spread holds.
KITCHEN = (ROOT / "chains" / "kitchen_radio_mains.toml").read_text()
# The regulator's parts held too: a drawn output moves its bleeder's and the stages'
# currents, and with them the raw rail's load and ripple, which the spread (settling the
# power tree once, for the nominal parts) holds.
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


def _in_db(path: str) -> bool:
    """Noise and hum (tiny voltages) are compared in dB."""
    key = path.rsplit(".", 1)[-1]
    return key.endswith("_vrms") or key.endswith("_rthz")


def test_hum_noise_and_loops_of_each_trial_equal_the_check_of_that_trial() -> None:
    """Brute force, one sample at a time: each of four trials of the kitchen radio written
    into the file (`Chain.with_values`, regulator and op-amp stages' parts drawn) and checked
    on its own gives the batched hum (every node, the output unweighted and A-weighted, the
    input-referred hum, hum over noise, hum at 1 m), the noise at every node, the
    input-referred noise and EIN, the noise figure, dynamic range, each stage's share of
    the output noise and the op-amp loops' gain, unity-gain frequency and phase margin:
    rtol 1e-9 (noise and hum compared in dB, 1e-8 dB)."""
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
    for path in wanted:  # the parts move every one of them
        assert np.ptp(batched[path]) > 0.0, path
    for t in range(len(positions)):
        values = evaluate.values(positions[t : t + 1])
        edited = chain.with_values(trial_changes(chain, parts, values))
        budget = compute(edited)
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        held_ripple = _hum_on_nominal_ripple(edited, evaluate.nominal, budget)
        for path in wanted:
            held = _json_figure(data, path)
            if _is_hum(path):
                # the check of the trial, its hum summed from the nominal check's ripple
                exact = held_ripple[path]
                got, want = _db(path, batched[path][t]), _db(path, exact)
                assert got == pytest.approx(want, rel=0, abs=1e-8), (path, t)
                # the whole check of the trial: its rails' ripple moves with the loads
                assert batched[path][t] == pytest.approx(held, rel=1e-3), (path, t)
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


def _hum_on_nominal_ripple(chain: Chain, nominal, budget) -> dict[str, float]:  # noqa: ANN001
    """The check's hum budget of one trial (`chainbudget.budget.hum.hum_budget`, the chain
    solved alone at its scalar parts) on the nominal check's rail ripple, keyed as the
    spread keys it."""
    from chainbudget.budget.hum import hum_budget
    from chainbudget.budget.supplies import loaded_analysis

    noise = budget.noise.output.noise_a_vrms
    hum, _ = hum_budget(loaded_analysis(chain, corner="low"), nominal.supplies, noise)
    found = {
        "hum.output_vrms": hum.output_vrms,
        "hum.output_a_vrms": hum.output_a_vrms,
        "hum.input_vrms": hum.input_vrms,
        "hum.input_a_vrms": hum.input_a_vrms,
        "hum.hum_to_noise_db": hum.hum_to_noise_db,
        "hum.spl_db": hum.spl_db,
        "hum.spl_a_db": hum.spl_a_db,
    }
    for stage, vrms in zip(chain.stages, hum.node_vrms, strict=True):
        found[f"nodes.{stage.name}.hum_vrms"] = vrms
    return found


# One non-inverting stage on a raw rectified rail (its reservoir held: the ripple the
# spread holds), the op-amp ideal but for its supply rejection, single supply with an
# ideal bias point: the hum enters at the V+ pin alone.
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
    ripple = evaluate.nominal.supply("raw").ripple_harmonics
    assert len(ripple) >= 3
    f = np.array([hz for hz, _ in ripple])
    v = np.abs(np.array([vpk for _, vpk in ripple]))
    per_volt = v * np.abs(1.0 + 1j * f / 200.0) / 10.0 ** (60.0 / 20.0)

    def a_weight(hz: np.ndarray) -> np.ndarray:  # IEC 61672-1 Annex E, 0 dB at 1 kHz
        f1, f2, f3, f4 = 20.598997, 107.65265, 737.86223, 12194.217
        r = (
            f4**2
            * hz**4
            / ((hz**2 + f1**2) * np.sqrt((hz**2 + f2**2) * (hz**2 + f3**2)) * (hz**2 + f4**2))
        )
        return r * 10 ** (2.0 / 20.0)

    flat = np.sqrt(np.sum(per_volt**2) / 2.0) * noise_gain
    weighted = np.sqrt(np.sum((per_volt * a_weight(f)) ** 2) / 2.0) * noise_gain
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
