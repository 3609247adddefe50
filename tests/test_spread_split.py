"""The spread of a centre-tapped (``split``) rectified supply: its one reservoir field drawn,
both rails' troughs, ripple and spectra per trial, and the supplies and stages below each
rail following it. Checked by brute force (each trial written into the chain file's text
and checked alone), against the handbook's constant-current ripple, and in what the
report lists as held."""

from __future__ import annotations

import json
import tomllib
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from test_spread import _assert_same_figure, _grid_rtol, _json_figure

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import load_chain, parse_chain
from chainbudget.report.json_view import budget_json
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.flags import is_flag
from chainbudget.spread.parts import chain_parts
from chainbudget.spread.run import run_spread

ROOT = Path(__file__).resolve().parents[1]

# A centre-tapped supply, "rail" (+) and "rail.neg" (-), its reservoir the only part
# drawn (10 %, the default class tolerance), with a filter off each rail and three stages:
# a block on the filtered positive rail alone (so that the two rails carry different
# loads, 175 and 55 mA: a rail taking the other's figures shows), a current-biased
# follower on both raw rails (its swing limit, the sink's compliance, follows the negative
# rail's trough) and an op-amp on the two filtered rails, whose output current, not its
# rails, sets its clip (so its half-sine pulses at clip, which the rectifier is solved
# against at four phases of signal and mains, do not move with the rails). No load moves
# with the reservoir, so the check of a trial settles its power tree on the loads the
# spread holds (the nominal check's) and the two agree to rounding.
RESERVOIR = "1000 uF"
SPLIT = f"""
[chain]
title = "split rails and their reservoirs"
[source]
level = "100 mV"
max_level = "1 V"
impedance = "1k"
[load]
impedance = "600 ohm"
[tolerances]
resistors = "0 %"
capacitors = "10 %"
beta = [1, 1]
[[supply]]
name = "rail"
kind = "rectified"
split = true
secondary = "15 V"
mains_tolerance = "10 %"
line_frequency = "50 Hz"
bridge_drop = "0.9 V"
reservoir = "{RESERVOIR}"
winding_resistance = "1 ohm"
[[supply]]
name = "clean"
kind = "rc_filter"
from = "rail"
resistance = "4.7 ohm"
capacitance = "2200 uF"
tolerance = {{ resistance = "0 %", capacitance = "0 %" }}
[[supply]]
name = "quiet"
kind = "rc_filter"
from = "rail.neg"
resistance = "22 ohm"
capacitance = "470 uF"
tolerance = {{ resistance = "0 %", capacitance = "0 %" }}
[[stage]]
name = "pre"
kind = "block"
gain = "20 dB"
input_impedance = "20k"
output_impedance = "100 ohm"
supply_current = "120 mA"
psrr = "50 dB"
positive = "clean"
[[stage]]
name = "buffer"
kind = "follower"
transistor = "small_npn"
bias = "current"
current = "50 mA"
compliance = "0.5 V"
positive = "rail"
negative = "rail.neg"
[[stage]]
name = "line"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
opamp = "leaky"
positive = "clean"
negative = "quiet"
[opamp.leaky]
gbw = "10 MHz"
slew_rate = "10 V/us"
noise_voltage = "10 nV/rtHz"
noise_current = "0.1 pA/rtHz"
open_loop_gain = "110 dB"
output_resistance = "50 ohm"
swing_margin = "1.5 V"
output_current = "10 mA"
supply_current = "2 mA"
psrr = "66 dB"
psrr_corner = "100 Hz"
"""


def _evaluator(text: str) -> tuple[list[Any], Evaluator]:
    chain = parse_chain(tomllib.loads(text), "split.toml")
    parts, _ = chain_parts(chain)
    return parts, Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


def _checked_alone(text: str, reservoir_f: float) -> dict[str, Any]:
    """The check JSON of one trial: its reservoir written into the file's text, the file
    parsed and checked on its own."""
    written = text.replace(f'reservoir = "{RESERVOIR}"', f'reservoir = "{reservoir_f!r} F"', 1)
    assert written != text
    budget = compute(parse_chain(tomllib.loads(written), "trial.toml"))
    return dict(json.loads(json.dumps(budget_json(budget, list(budget.findings)))))


def test_both_rails_and_what_they_feed_equal_the_check_of_each_trial() -> None:
    """Brute force, one sample at a time: eight of 24 trials of the drawn reservoir, each
    written into the chain file's text and checked on its own. Solved alone (directly),
    every figure of the trial equals the check's at rtol 1e-9 (noise and hum in dB,
    1e-8 dB), as in the single-rail tests (tests/test_spread_hum.py): both rails' troughs,
    ripple and spectra, the filter below each rail, the follower's swing on both rails,
    the hum from each rail by path and by harmonic. The batch of 24 takes the rectifier
    from its grid of 17 reservoir values: within rtol 1e-8 (abs 1 nV) of each trial
    solved alone."""
    parts, evaluate = _evaluator(SPLIT)
    assert [p.label for p in parts] == ["rail.reservoir"]
    positions = np.linspace(0.01, 0.99, 24)[:, None]
    batched = evaluate(positions)
    for key in (
        "supplies.rail.trough_v",
        "supplies.rail.ripple_vpp",
        "supplies.rail.ripple_harmonics.100.vpk",
        "supplies.rail.neg.trough_v",
        "supplies.rail.neg.ripple_vpp",
        "supplies.rail.neg.ripple_harmonics.100.vpk",
        "supplies.rail.neg.ripple_harmonics.300.vpk",
        "supplies.clean.trough_v",
        "supplies.clean.ripple_harmonics.200.vpk",
        "supplies.quiet.trough_v",
        "supplies.quiet.ripple_vpp",
        "nodes.buffer.clip_vpk",
        "nodes.buffer.headroom_db",
        "hum.by_path.line.V- pin (PSRR).vrms",
        "hum.by_path.pre.V+ pin (PSRR).vrms",
        "hum.output_a_vrms",
    ):
        assert np.ptp(batched[key]) > 0.0, key
    # the rails carry different loads: each takes its own, in every trial
    for key in ("trough_v", "ripple_vpp"):
        gap = batched[f"supplies.rail.{key}"] - batched[f"supplies.rail.neg.{key}"]
        assert np.all(np.abs(gap) > 0.01), key
    reservoir = evaluate.values(positions)[0]
    for t in range(0, len(positions), 3):
        alone = evaluate(positions[t : t + 1])
        for path, values in batched.items():
            assert values[t] == pytest.approx(alone[path][0], rel=_grid_rtol(path), abs=1e-9), (
                path,
                t,
            )
        data = _checked_alone(SPLIT, float(reservoir[t]))
        for path in batched:
            assert not is_flag(path)
            want, got = _json_figure(data, path), alone[path][0]
            _assert_same_figure(path, got, want, 1e-8, t)


# Two rails under steady loads of different size (blocks drawing a constant current: no
# pulses), a reservoir large against the load, and a winding of 0.1 ohm.
STEADY = """
[chain]
title = "split rails, steady loads"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "0 %"
capacitors = "10 %"
[[supply]]
name = "rail"
kind = "rectified"
split = true
secondary = "15 V"
mains_tolerance = "10 %"
line_frequency = "50 Hz"
bridge_drop = "0.9 V"
reservoir = "10000 uF"
winding_resistance = "0.1 ohm"
[[stage]]
name = "both"
kind = "block"
gain = "20 dB"
input_impedance = "20k"
output_impedance = "0.1 ohm"
supply_current = "0.2 A"
positive = "rail"
negative = "rail.neg"
[[stage]]
name = "plus"
kind = "block"
gain = "0 dB"
input_impedance = "20k"
output_impedance = "0.1 ohm"
supply_current = "0.3 A"
positive = "rail"
"""


def test_each_rails_ripple_is_the_constant_current_estimate_at_the_reservoirs_bounds() -> None:
    """The handbook's estimate for a capacitor-input full-wave rectifier: the reservoir
    supplies the load I alone between charges, Vpp ~ I/(2 f C) (Horowitz & Hill, The Art
    of Electronics, 3rd ed., sec. 9.5.2, from memory), an upper bound that a large
    reservoir approaches (it recharges over part of each half cycle, here some 10 % to
    15 % through the 0.1 ohm winding). With 10,000 uF on each rail, each rail's ripple at
    the two corners of the drawn reservoir (C at its high bound gives the low corner) is
    within 20 % under the estimate with that rail's own load (0.5 A and 0.2 A), and the
    corners' ratio, where the estimate's error cancels (the recharge's share hardly moves
    with C), is C_high/C_low = 1.1/0.9 within 1 %; the Monte Carlo's ripple lies between
    them, and the two rails' ripple stands as their loads, 0.5/0.2, within 5 % in every
    trial (the heavier load recharges longer)."""
    result = run_spread(parse_chain(tomllib.loads(STEADY), "steady.toml"), 200, 3)
    assert [p.label for p in result.parts] == ["rail.reservoir"]
    c_low, c_high = 0.9 * 10e-3, 1.1 * 10e-3
    for rail, load_a in (("rail", 0.5), ("rail.neg", 0.2)):
        low, high = result.corners[f"supplies.{rail}.ripple_vpp"]
        for vpp, c in ((low, c_high), (high, c_low)):
            estimate = load_a / (2.0 * 50.0 * c)
            assert 0.8 * estimate < vpp <= estimate, (rail, c)
        assert high / low == pytest.approx(c_high / c_low, rel=0.01), rail
        samples = result.samples[f"supplies.{rail}.ripple_vpp"]
        assert low <= samples.min() and samples.max() <= high
    # the two rails' ripple in proportion to their loads, 0.5 A to 0.2 A, trial by trial
    ratio = (
        result.samples["supplies.rail.ripple_vpp"] / result.samples["supplies.rail.neg.ripple_vpp"]
    )
    assert ratio == pytest.approx(np.full(ratio.shape, 0.5 / 0.2), rel=0.05)


def test_the_split_reservoir_is_drawn_not_held() -> None:
    """The practice amplifier's centre-tapped supply: its reservoir is a drawn part (one
    for both rails, the file's one field) and no longer listed as held at nominal; at the
    nominal reservoir both rails' figures are the nominal check's own, under the push-pull
    stage's pulses (rtol 1e-9, as the brute-force tests take them)."""
    chain = load_chain(ROOT / "chains" / "practice_amp_mains.toml")
    parts, held = chain_parts(chain)
    assert "rail.reservoir" in {p.label for p in parts}
    assert not [h for h in held if h.label.startswith("rail.")]
    budget = compute(chain)
    evaluate = Evaluator(chain, tuple(parts), budget, settle(chain, "low").voltages)
    middle = evaluate(np.full((1, len(parts)), 0.5))
    data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
    assert budget.supply("rail").load.heaviest_pulse_a > 0.0
    for rail in ("rail", "rail.neg"):
        paths = [p for p in middle if p.startswith(f"supplies.{rail}.")]
        assert len(paths) >= 10
        for path in paths:
            assert middle[path][0] == pytest.approx(_json_figure(data, path), rel=1e-9, abs=0), path
