"""The spread of DC operating points, drive and heat, each check against a source outside
the model: every trial written into the file and checked on its own (brute force), a plain
numpy solve of the follower's bias loop (Horowitz & Hill), and analytic shares of trials
for chains built to sit on a DC limit and on the optimum-quiescent limit."""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from scipy import constants, integrate
from test_spread import _json_figure, trial_changes

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import load_chain, parse_chain
from chainbudget.report.json_view import budget_json
from chainbudget.spread.evaluate import Evaluator, failing
from chainbudget.spread.flags import flag_parts, is_flag
from chainbudget.spread.parts import chain_parts
from chainbudget.spread.run import run_spread

# An op-amp of ordinary open-loop gain and output resistance (so that its output current,
# a branch of the solve, is well conditioned), values of the trade's general-purpose parts
# (common practice, no source).
PLAIN = """
[opamp.plain]
gbw = "4 MHz"
slew_rate = "8 V/us"
noise_voltage = "10 nV/rtHz"
noise_current = "0.5 pA/rtHz"
open_loop_gain = "100 dB"
output_resistance = "60 ohm"
swing_margin = "1.5 V"
output_current = "20 mA"
supply_current = "2 mA"
"""

# A pre-amp, an emitter follower biased through its bias resistor from 0 V (its base
# current drops the base, so its emitter, and the DC-coupled output pair and the speaker
# after it, sit V_BE and a beta-dependent fraction of a volt below 0 V) and an output pair
# on a shared heatsink: the DC across the speaker straddles the 1 V error limit.
DC_DRIVE_HEAT = (
    """
[chain]
title = "dc, drive and heat spread"
[source]
level = "200 mV"
max_level = "700 mV"
impedance = "1k"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "5 %"
capacitors = "10 %"
beta = [0.5, 2]
[transistor.small_npn2]
polarity = "npn"
beta = 150
vbe = "0.65 V"
vce_sat = "0.2 V"
base_resistance = "100 ohm"
[transistor.out_npn]
polarity = "npn"
beta = 60
vbe = "0.7 V"
vce_sat = "0.5 V"
base_resistance = "10 ohm"
[transistor.out_pnp]
polarity = "pnp"
beta = 45
vbe = "0.7 V"
vce_sat = "0.5 V"
base_resistance = "10 ohm"
[transistor.mid_npn]
polarity = "npn"
beta = 150
vbe = "0.65 V"
vce_sat = "0.2 V"
base_resistance = "50 ohm"
[transistor.mid_pnp]
polarity = "pnp"
beta = 120
vbe = "0.65 V"
vce_sat = "0.2 V"
base_resistance = "50 ohm"
[[supply]]
name = "plus"
kind = "dc"
voltage = "18 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "18 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "33k"
ground_leg = "3k3"
input_cap = "1u"
bias_resistor = "47k"
opamp = "plain"
positive = "plus"
negative = "minus"
[[stage]]
name = "buffer"
kind = "follower"
transistor = "small_npn2"
bias = "resistor"
emitter_resistor = "2k2"
base_resistor = "1k"
input_cap = "10u"
bias_resistor = "6k8"
positive = "plus"
negative = "minus"
[[stage]]
name = "output"
kind = "push_pull"
upper = "out_npn"
lower = "out_pnp"
driver_upper = "mid_npn"
driver_lower = "mid_pnp"
emitter_resistors = "0R27"
quiescent = "47.5 mA"
theta_jc = "1.5 K/W"
theta_cs = "0.5 K/W"
heatsink = "2 K/W"
heatsink_shared = true
max_junction = "150 degC"
positive = "plus"
negative = "minus"
"""
    + PLAIN
)


def _chain(text: str):  # noqa: ANN202
    return parse_chain(tomllib.loads(text), "spread_dc.toml")


NEW_FIGURES = (
    "nodes.pre.dc_v",
    "nodes.buffer.dc_v",
    "nodes.output.dc_v",
    "output.offset_v",
    "nodes.pre.drive_current_a",
    "nodes.pre.drive_worst_current_a",
    "nodes.buffer.bias_current_a",
    "nodes.buffer.cut_off_vpk",
    "drive.followers.buffer.emitter_v",
    "drive.followers.buffer.dissipation_w",
    "nodes.output.base_current_a",
    "drive.handovers.output.needed_a",
    "nodes.output.optimum_quiescent_a",
    "output.device_dissipation_w",
    "output.junction_degc",
    "output.dissipation.worst_vpk",
    "output.dissipation.clip_device_w",
    "output.dissipation.clip_supply_w",
    "output.dissipation.resistive_worst_device_w",
    "output.dissipation.clip_junction_degc",
    "output.dissipation.heatsink_degc",
    "output.dissipation.max_heatsink_k_per_w",
    "output.dissipation.nominal_vpk",
    "output.dissipation.nominal_device_w",
    "output.dissipation.nominal_junction_degc",
)


def test_dc_drive_and_heat_of_each_trial_equal_the_check_of_that_trial() -> None:
    """Brute force, one trial at a time: each of eight trials written into the file and
    checked alone gives every batched figure (the DC walk, the offset at the load, the
    op-amp's current, the follower's bias, emitter and heat, the pair's base current and
    the driver's need, the optimum quiescent, the device dissipation and junction, and
    the dissipation at the worst sine and at the clip with the heatsink's), rtol
    1e-9; and whether each trial draws each DC, drive and heat code is whether the check
    of that trial finds it."""
    chain = _chain(DC_DRIVE_HEAT)
    parts, held = chain_parts(chain)
    assert held == []
    nominal = compute(chain)
    evaluate = Evaluator(chain, tuple(parts), nominal, settle(chain, "low").voltages)
    positions = np.random.default_rng(4).random((8, len(parts)))
    figures = evaluate(positions, flags=True)
    assert set(NEW_FIGURES) <= set(figures)
    # each moves with the parts (the drawn DC, beta, R_E), but the pre-amp's DC (its bias
    # point, 0 V) and the heat at the worst sine level (2 V_cc/pi, below the clip the
    # emitter resistors move); the heat at the clip moves with it
    still = ("nodes.pre.dc_v", "output.junction_degc", "output.device_dissipation_w")
    still += tuple(
        f"output.dissipation.{key}"
        for key in ("worst_vpk", "resistive_worst_device_w", "heatsink_degc")
        + ("max_heatsink_k_per_w",)
    )
    for path in NEW_FIGURES:
        assert (np.ptp(figures[path]) > 0.0) != (path in still), path
    thresholds = evaluate.thresholds(figures)
    masks = failing(thresholds, figures)
    errors = failing([t for t in thresholds if t.severity == "error"], figures)
    codes = {flag_parts(p)[1] for p in figures if is_flag(p)}
    assert {"dc-into-load", "offset-at-load", "follower-off", "drive-shortfall"} <= codes
    assert {"junction-over", "quiescent-low", "thermal-runaway", "dc-on-load"} <= codes
    # the chain sits on the speaker's DC error limit: some trials past it, some not (and
    # those draw the warning from 50 mV)
    assert 0 < errors["dc-into-load"].sum() < len(positions)
    assert masks["dc-into-load"].all()
    for t in range(len(positions)):
        budget = compute(
            chain.with_values(trial_changes(chain, parts, evaluate.values(positions[t : t + 1])))
        )
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        for path, values in figures.items():
            if is_flag(path):
                continue
            held_value = _json_figure(data, path, budget)
            assert values[t] == pytest.approx(held_value, rel=1e-9, abs=1e-12), path
        found = {f.code for f in budget.findings}
        found_errors = {f.code for f in budget.findings if f.severity == "error"}
        for code in codes:
            assert bool(masks[code][t]) == (code in found), (code, t)
            if code in errors:
                assert bool(errors[code][t]) == (code in found_errors), (code, t)


def test_follower_emitter_and_bias_current_against_a_plain_solve_of_its_bias_loop() -> None:
    """The follower's emitter voltage and bias current per trial against a plain numpy
    solve of its bias loop, one trial at a time (Horowitz & Hill, The Art of Electronics,
    3rd ed., sec. 2.2.5: the base current I_E/(beta + 1) drops across the DC resistance in
    the base lead): the base loop V_B0 = I_B R_dc + V_BE + V_E and the emitter
    (beta + 1) I_B R_E = V_E - V- as two linear equations in V_E and I_B, rtol 1e-12."""
    chain = _chain(DC_DRIVE_HEAT)
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(8).random((50, len(parts)))
    figures = evaluate(positions)
    drawn = {p.label: v for p, v in zip(parts, evaluate.values(positions), strict=True)}
    for t in range(len(positions)):  # a plain loop over trials: the reference
        beta = drawn["buffer.transistor beta"][t]
        r_e = drawn["buffer.emitter_resistor"][t]
        r_dc = drawn["buffer.base_resistor"][t] + drawn["buffer.bias_resistor"][t]
        v_b0, v_be, v_minus = 0.0, 0.65, -18.0  # 0 V bias point on split 18 V rails
        matrix = np.array([[1.0, r_dc], [1.0, -(beta + 1.0) * r_e]])
        v_e, i_b = np.linalg.solve(matrix, [v_b0 - v_be, v_minus])
        assert figures["drive.followers.buffer.emitter_v"][t] == pytest.approx(
            v_e, rel=1e-12, abs=0
        )
        assert figures["nodes.buffer.bias_current_a"][t] == pytest.approx(
            (beta + 1.0) * i_b, rel=1e-12, abs=0
        )
        # the output pair follows the emitter at DC: the speaker's DC is the emitter's
        assert figures["nodes.output.dc_v"][t] == pytest.approx(v_e, rel=1e-12, abs=0)


# Two op-amp stages on one 20 V rail: the first AC-coupled about its 10 V bias point with a
# DC gain of one, the second DC-coupled with a DC gain of 1 + Rf/Rg, so its output sits at
# 10 V (1 + Rf/Rg), an offset of 10 Rf/Rg from its bias point against 20 - 1 - 10 = 9 V of
# room (1 V swing margin): the dc-offset warning (over 10 % of the room) fires where
# Rf/Rg > 0.09. Rf = 910 ohm, Rg = 10 kohm at 5 % put that inside the parts' spread.
DC_OFFSET = """
[chain]
title = "dc offset spread"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "10k"
[tolerances]
resistors = "5 %"
capacitors = "0 %"
[opamp.swing1]
gbw = "4 MHz"
slew_rate = "8 V/us"
noise_voltage = "10 nV/rtHz"
noise_current = "0.5 pA/rtHz"
open_loop_gain = "100 dB"
output_resistance = "60 ohm"
swing_margin = "1 V"
output_current = "20 mA"
supply_current = "2 mA"
[[supply]]
name = "rail"
kind = "dc"
voltage = "20 V"
[[stage]]
name = "first"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
ground_cap = "100u"
input_cap = "1u"
bias_resistor = "100k"
opamp = "swing1"
positive = "rail"
[[stage]]
name = "second"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "910R"
ground_leg = "10k"
opamp = "swing1"
positive = "rail"
"""


def _share_ratio_above(x: float, rf: float, rg: float, t: float) -> float:
    """P(Rf/Rg > x) for Rf, Rg independent and uniform within +-t: the integral over Rg of
    P(Rf > x Rg), by scipy.integrate.quad."""
    lo_f, hi_f = rf * (1 - t), rf * (1 + t)

    def inner(r_g: float) -> float:
        return float(np.clip((hi_f - x * r_g) / (hi_f - lo_f), 0.0, 1.0))

    lo_g, hi_g = rg * (1 - t), rg * (1 + t)
    value, _ = integrate.quad(inner, lo_g, hi_g, limit=200)
    return value / (hi_g - lo_g)


def test_dc_offset_yield_against_the_analytic_share() -> None:
    """The share of trials drawing dc-offset equals P(Rf/Rg > 0.09) for uniform 5 % parts
    (numerical integration in the test), within 5 sigma of the sampling error; the second
    stage's DC figure spans 10 V (1 + Rf/Rg) over the parts' bounds."""
    chain = _chain(DC_OFFSET)
    trials = 20_000
    result = run_spread(chain, trials, 5)
    share = _share_ratio_above(0.09, 910.0, 10e3, 0.05)
    assert 0.2 < share < 0.8
    sigma = math.sqrt(share * (1 - share) / trials)
    assert abs((1.0 - result.yield_by_code["dc-offset"]) - share) < 5 * sigma
    low, high = result.corners["nodes.second.dc_v"]
    assert low == pytest.approx(10.0 * (1 + 910 * 0.95 / 10.5e3), rel=1e-6)
    assert high == pytest.approx(10.0 * (1 + 910 * 1.05 / 9.5e3), rel=1e-6)
    assert "dc-offset" not in result.codes_not_spread()


def test_quiescent_low_yield_against_the_analytic_share() -> None:
    """quiescent-low fires where I_q < V_T/(2 R_E) (Oliver's optimum I_q R_E = V_T, HP
    Journal, Feb. 1971), i.e. R_E < V_T/(2 I_q) with V_T = k T/q at 25 degC (CODATA
    constants, scipy.constants): for R_E uniform within 5 % of 0.27 ohm, the share is
    (V_T/(2 I_q) - 0.2565)/(0.2835 - 0.2565) exactly, matched within 5 sigma."""
    chain = _chain(DC_DRIVE_HEAT)
    trials = 10_000
    result = run_spread(chain, trials, 6)
    v_t = constants.k * (25.0 + constants.zero_Celsius) / constants.e
    limit = v_t / (2.0 * 0.0475)
    share = (limit - 0.27 * 0.95) / (0.27 * 0.10)
    assert 0.2 < share < 0.8
    sigma = math.sqrt(share * (1 - share) / trials)
    assert abs((1.0 - result.yield_by_code["quiescent-low"]) - share) < 5 * sigma


ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.parametrize("name", sorted(p.name for p in (ROOT / "chains").glob("*.toml")))
def test_every_example_at_nominal_draws_the_codes_the_check_finds(name: str) -> None:
    """Every example at its nominal parts (one trial at the centre of every bound): each
    code the spread evaluates per trial is drawn exactly when the check finds it (the
    check's own rules as the reference), and the new figures equal the check JSON's."""
    chain = load_chain(ROOT / "chains" / name)
    parts, _ = chain_parts(chain)
    budget = compute(chain)
    evaluate = Evaluator(chain, tuple(parts), budget, settle(chain, "low").voltages)
    figures = evaluate(np.full((1, len(parts)), 0.5), flags=True)
    masks = failing(evaluate.thresholds(figures), figures)
    found = {f.code for f in budget.findings}
    for code, mask in masks.items():
        assert bool(mask[0]) == (code in found), code
    data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
    for path, values in figures.items():
        if not is_flag(path):
            held = _json_figure(data, path)
            assert values[0] == pytest.approx(held, rel=1e-9, abs=1e-12), path


def test_the_output_pairs_heat_at_the_worst_sine_and_at_the_clip_against_class_b_by_hand() -> None:
    """The ``output.dissipation`` figures per trial against the class-B stage worked by
    hand (Boylestad & Nashelsky, Electronic Devices and Circuit Theory, class B power
    amplifier section, from memory): on 18 V rails into 8 ohm, the worst sine 2 V_cc/pi
    and each device's most V_cc^2/(pi^2 R) + V_cc I_q; the supply power at the clip
    2 V_cc (V_pk/(pi R) + I_q) and each device's share there, which together with the
    load's V_pk^2/(2 R) must account for it (conservation of energy: the two give the
    same V_pk); each device's V_cc V/(pi R) - V^2/(4 R) + V_cc I_q at the nominal level V at
    the output; the clip is the rail less a fixed drop shared by R_E and the load, so that
    V_pk (R + R_E)/R is one value over the trials; the heatsink shared by both devices at
    T_a + theta_sa (P_1 + P_2), the junction theta_jc + theta_cs above it, and the largest
    heatsink (T_max - T_a - P theta_inner)/(P_1 + P_2) (thermal Ohm's law, Horowitz &
    Hill, The Art of Electronics, 3rd ed., sec. 9.4, from memory): rtol 1e-12."""
    chain = _chain(DC_DRIVE_HEAT)
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(6).random((12, len(parts)))
    got = evaluate(positions)
    r_e = dict(zip([p.label for p in parts], evaluate.values(positions), strict=True))[
        "output.emitter_resistors"
    ]
    vcc, r, i_q, ambient = 18.0, 8.0, 47.5e-3, chain.settings.ambient
    theta_inner, theta_sa, t_max = 1.5 + 0.5, 2.0, 150.0

    def figure(key: str) -> np.ndarray:
        return got[f"output.dissipation.{key}"]

    np.testing.assert_allclose(figure("worst_vpk"), 2.0 * vcc / math.pi, rtol=1e-12)
    worst = vcc**2 / (math.pi**2 * r) + vcc * i_q
    np.testing.assert_allclose(figure("resistive_worst_device_w"), worst, rtol=1e-12)
    np.testing.assert_allclose(got["output.device_dissipation_w"], worst, rtol=1e-12)
    supply, device = figure("clip_supply_w"), figure("clip_device_w")
    vpk = math.pi * r * (supply / (2.0 * vcc) - i_q)
    np.testing.assert_allclose(np.sqrt(2.0 * r * (supply - 2.0 * device)), vpk, rtol=1e-12)
    assert np.ptp(vpk) > 0.0
    lifted = vpk * (r + r_e) / r
    np.testing.assert_allclose(lifted, lifted[0], rtol=1e-12)
    np.testing.assert_allclose(
        figure("heatsink_degc"), ambient + theta_sa * 2.0 * worst, rtol=1e-12
    )
    largest = (t_max - ambient - worst * theta_inner) / (2.0 * worst)
    np.testing.assert_allclose(figure("max_heatsink_k_per_w"), largest, rtol=1e-12)
    at_clip = ambient + theta_sa * 2.0 * device + device * theta_inner
    np.testing.assert_allclose(figure("clip_junction_degc"), at_clip, rtol=1e-12)
    # at the nominal level at the output (below the clip here), each device's
    # V_cc V/(pi R) - V^2/(4 R) + V_cc I_q
    level = got["output.nominal_vpk"]
    assert np.all(level < vpk)
    np.testing.assert_allclose(figure("nominal_vpk"), level, rtol=1e-12)
    nominal = vcc * level / (math.pi * r) - level**2 / (4.0 * r) + vcc * i_q
    np.testing.assert_allclose(figure("nominal_device_w"), nominal, rtol=1e-12)
    at_nominal = ambient + theta_sa * 2.0 * nominal + nominal * theta_inner
    np.testing.assert_allclose(figure("nominal_junction_degc"), at_nominal, rtol=1e-12)
