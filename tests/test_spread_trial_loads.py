"""The load side of the power tree over a leading trial axis: the stages' currents of a chain
solved for a batch of trials, the loads summed up the tree, and the supply kinds' spreads
under one load per trial, each checked against the same functions run on every trial alone
(its drawn values written into the file and parsed: brute force) and against Ohm's law
worked by hand."""

from __future__ import annotations

import dataclasses
import tomllib
from collections.abc import Sequence

import numpy as np
import pytest
from test_spread import trial_changes

from chainbudget.budget import compute
from chainbudget.budget.analysis import environments, positions_as_set, solve_chain
from chainbudget.budget.currents import StageCurrents, currents_at
from chainbudget.budget.rails import external_loads, supply_states
from chainbudget.budget.steps import with_value
from chainbudget.budget.supplies import settle, stage_loads_of
from chainbudget.chainfile import Chain, parse_chain
from chainbudget.spread.dc import walked
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.parts import Part, chain_parts, with_beta
from chainbudget.supplies import KINDS
from chainbudget.supplies.base import Corners, RippleSpread, SupplyBudget, SupplyLoad

# An op-amp of ordinary figures for the trade's general-purpose parts (common practice, no
# source); transistors likewise.
PARTS = """
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
"""

# Two batteries with internal resistance (one with a reservoir), an RC filter and an
# adjustable regulator feeding the pre-amp, a divider across the filtered rail; a follower
# biased through its drawn resistors (its idle current moves per trial) and a class-AB pair
# whose pulses move with its drawn emitter resistors and the gain before it.
TREE = (
    """
[chain]
title = "per-trial loads"
[source]
level = "780 mV"
max_level = "1.2 V"
impedance = "1k"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "5 %"
capacitors = "10 %"
beta = [0.5, 2]
[[supply]]
name = "plus"
kind = "dc"
voltage = "18 V"
min_voltage = "16 V"
resistance = "0.4 ohm"
reservoir = "2200 uF"
[[supply]]
name = "minus"
kind = "dc"
voltage = "18 V"
resistance = "0.4 ohm"
[[supply]]
name = "pre_plus"
kind = "rc_filter"
from = "plus"
resistance = "100 ohm"
capacitance = "220 uF"
[[supply]]
name = "pre_minus"
kind = "regulator"
from = "minus"
reference = "1.25 V"
adjust_current = "50 uA"
upper = "2k2"
lower = "240 ohm"
min_load = "10 mA"
[[supply]]
name = "mid"
kind = "divider"
from = "pre_plus"
upper = "10k"
lower = "10k"
capacitance = "47 uF"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "33k"
ground_leg = "3k3"
input_cap = "1u"
bias_resistor = "47k"
opamp = "plain"
positive = "pre_plus"
negative = "pre_minus"
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
quiescent = "40 mA"
positive = "plus"
negative = "minus"
"""
    + PARTS
)

TRIALS = 5
CURRENT_FIELDS = ("idle_a", "nominal_a", "clip_a", "nominal_pulse_a", "clip_pulse_a")
LOAD_FIELDS = ("idle_a", "nominal_a", "heaviest_a", "nominal_pulse_a", "heaviest_pulse_a")


def _chain(text: str = TREE) -> Chain:
    return parse_chain(tomllib.loads(text), "trial_loads.toml")


def _stage_parts(chain: Chain) -> list[Part]:
    """The drawn parts of the stages (betas among them): the supplies' own parts are the
    kinds' spreads' business, checked below."""
    parts, _ = chain_parts(chain)
    return [p for p in parts if p.table == "stage"]


def _trial_rails(voltages: dict[str, Corners], trials: int) -> list[dict[str, Corners]]:
    """Each trial's rails: the settled tree's with the battery rails' low corner moved a
    little per trial (as a spread supply would move them)."""
    shifts = np.linspace(-0.3, 0.2, trials)
    return [
        {
            rail: dataclasses.replace(c, low=c.low + shifts[t]) if rail in ("plus", "minus") else c
            for rail, c in voltages.items()
        }
        for t in range(trials)
    ]


def _batched_rails(rails: Sequence[dict[str, Corners]]) -> dict[str, Corners]:
    """The trials' rails as one tree whose moving corners are (T, 1) arrays."""
    found = {}
    for rail, first in rails[0].items():
        lows = np.array([[r[rail].low] for r in rails])
        found[rail] = dataclasses.replace(first, low=lows) if np.ptp(lows) > 0.0 else first
    return found


def _batched_currents(
    chain: Chain, parts: list[Part], values: list[np.ndarray], voltages: dict[str, Corners]
) -> tuple[Chain, list[StageCurrents]]:
    """The currents of the chain with the trials' parts as (T, 1) arrays (as
    `chainbudget.spread.evaluate` builds them), solved once at the reference."""
    betas: dict[int, list[tuple[str, np.ndarray]]] = {}
    for part, value in zip(parts, values, strict=True):
        column = value.reshape(-1, 1)
        if part.is_beta:
            betas.setdefault(part.index, []).append(
                (chain.stages[part.index].values[part.key], column)
            )
        else:
            chain = with_value(chain, part.index, part.key, column)
    envs = list(environments(chain, "low", voltages, [None] * len(chain.stages)))
    for k, drawn in betas.items():
        for name, column in drawn:
            envs[k] = with_beta(envs[k], name, column)
    _, walked_envs = walked(chain, envs)
    reference = chain.settings.reference
    cascade = solve_chain(chain, walked_envs, np.array([reference]), positions_as_set(chain.stages))
    return chain, currents_at(chain, cascade, walked_envs, 0, reference)


def _alone_currents(chain: Chain, voltages: dict[str, Corners]) -> list[StageCurrents]:
    """The currents of one trial's chain, checked as the check solves it (floats)."""
    envs = environments(chain, "low", voltages)
    reference = chain.settings.reference
    cascade = solve_chain(chain, envs, np.array([reference]), positions_as_set(chain.stages))
    return currents_at(chain, cascade, envs, 0, reference)


def test_currents_and_loads_of_each_trial_equal_those_of_that_trial_alone() -> None:
    """Brute force: five trials of the drawn resistors, capacitors and betas on rails that
    differ per trial, solved at once, give every stage's currents and every rail's load
    (the stages' and what the filter, regulator and divider below draw) that each trial's
    chain, written into the file and solved alone, gives: rtol 1e-12. The nominal level sits
    at the pre-amp's clip, which some trials reach and others do not."""
    chain = _chain()
    parts = _stage_parts(chain)
    keys = {(p.owner, p.key) for p in parts}
    assert {("buffer", "bias_resistor"), ("buffer", "emitter_resistor")} <= keys
    assert ("output", "emitter_resistors") in keys
    positions = np.random.default_rng(11).random((TRIALS, len(parts)))
    values = [p.at(positions[:, i]) for i, p in enumerate(parts)]
    rails = _trial_rails(dict(settle(chain, "low").voltages), TRIALS)
    drawn, batched = _batched_currents(chain, parts, values, _batched_rails(rails))
    for sc in batched:
        for key in CURRENT_FIELDS:
            assert np.shape(getattr(sc, key)) == (TRIALS,), (sc.stage, key)
    by_stage = {sc.stage: sc for sc in batched}
    # the follower's bias resistors move its quiescent current per trial; the pair's and
    # the op-amp's pulses move with the gain and the emitter resistors
    assert np.ptp(by_stage["buffer"].idle_a) > 0.0
    assert np.ptp(by_stage["output"].clip_pulse_a) > 0.0
    assert np.ptp(by_stage["pre"].nominal_pulse_a) > 0.0
    # the nominal level clips the pre-amp in some trials and not in others: the level
    # reaching the pair is each trial's own
    clipped = by_stage["pre"].nominal_pulse_a == by_stage["pre"].clip_pulse_a
    assert 0 < clipped.sum() < TRIALS
    loads = external_loads(drawn, stage_loads_of(batched))
    assert set(loads) == {"plus", "minus", "pre_plus", "pre_minus", "mid"}
    for t in range(TRIALS):
        alone_chain = chain.with_values(trial_changes(chain, parts, [v[t : t + 1] for v in values]))
        alone = _alone_currents(alone_chain, rails[t])
        for sc, one in zip(batched, alone, strict=True):
            for key in CURRENT_FIELDS:
                expected = getattr(one, key)
                assert isinstance(expected, float)
                assert getattr(sc, key)[t] == pytest.approx(expected, rel=1e-12, abs=0), (
                    sc.stage,
                    key,
                    t,
                )
        alone_loads = external_loads(alone_chain, stage_loads_of(alone))
        for rail, load in loads.items():
            for key in LOAD_FIELDS:
                expected = getattr(alone_loads[rail], key)
                got = np.broadcast_to(getattr(load, key), (TRIALS,))[t]
                assert got == pytest.approx(expected, rel=1e-12, abs=0), (rail, key, t)


def test_a_quiescent_current_given_per_trial_is_the_idle_current_of_each_trial() -> None:
    """A push-pull stage's quiescent current given as a (T, 1) array (as a sweep or a drawn
    part would give it) is its idle current from each rail per trial: the current that
    flows rail to rail through both devices (the kind's model)."""
    chain = _chain()
    k = [s.name for s in chain.stages].index("output")
    quiescent = np.array([0.03, 0.035, 0.04, 0.045, 0.05])
    chain = with_value(chain, k, "quiescent", quiescent.reshape(-1, 1))
    rails = _trial_rails(dict(settle(_chain(), "low").voltages), TRIALS)
    _, currents = _batched_currents(chain, [], [], _batched_rails(rails))
    np.testing.assert_array_equal(currents[k].idle_a, quiescent)


def test_the_regulator_draws_its_load_divider_and_own_current_per_trial() -> None:
    """Kirchhoff's current law at the regulator: what it takes from its parent is its
    load plus V_ref/lower plus its own current, per trial (1.25 V / 240 ohm = 5.208 mA and
    the 50 uA adjust current, worked by hand); the RC filter passes its load on as it is;
    the divider draws its share lower/(upper + lower) = 1/2 of its load and its standing
    current (the unloaded parent's over 20 kohm)."""
    chain = _chain()
    owners = {s.name: s for s in chain.supplies}
    load = SupplyLoad(
        np.array([0.0, 0.01, 0.02]),
        np.array([0.0, 0.02, 0.03]),
        np.array([0.0, 0.05, 0.02]),
        np.array([0.0, 0.01, 0.04]),
        np.array([0.0, 0.03, 0.1]),
        1000.0,
    )
    drawn = KINDS["regulator"].input_load(owners["pre_minus"], load)
    extra = 1.25 / 240.0 + 50e-6
    np.testing.assert_allclose(drawn.idle_a, [extra, 0.01 + extra, 0.02 + extra], rtol=1e-15)
    np.testing.assert_allclose(drawn.heaviest_a, [extra, 0.05 + extra, 0.02 + extra], rtol=1e-15)
    np.testing.assert_array_equal(drawn.heaviest_pulse_a, load.heaviest_pulse_a)
    assert KINDS["rc_filter"].input_load(owners["pre_plus"], load) is load
    half = KINDS["divider"].input_load(owners["mid"], load)
    np.testing.assert_array_equal(half.nominal_a, 0.5 * load.nominal_a)
    # the steady part, the mean less the pulses' average, no lower than zero per trial
    # (the third: 20 mA less 100 mA / pi is below zero)
    np.testing.assert_array_equal(load.heaviest_dc_a, [0.0, 0.05 - 0.03 / np.pi, 0.0])
    unloaded = supply_states(chain)
    standing = KINDS["divider"].standing_current(owners["mid"], unloaded["pre_plus"])
    assert standing == pytest.approx(unloaded["pre_plus"].nominal_v / 20e3, rel=1e-15, abs=0)


# --- the supply kinds' spreads under one load per trial -----------------------------------

LOAD_FACTORS = np.array([0.0, 0.4, 1.0, 1.9, 3.5])


def _per_trial_load(load: SupplyLoad) -> SupplyLoad:
    """The check's load scaled by a factor per trial (none at all in the first)."""
    return load.scaled(LOAD_FACTORS)  # type: ignore[arg-type]


def _one(load: SupplyLoad, t: int) -> SupplyLoad:
    """Trial ``t``'s load as floats."""
    return SupplyLoad(
        *(float(np.broadcast_to(getattr(load, key), LOAD_FACTORS.shape)[t]) for key in LOAD_FIELDS),
        load.signal_hz,
    )


def _budgets() -> tuple[Chain, dict[str, SupplyBudget]]:
    chain = _chain()
    return chain, {s.name: s for s in compute(chain).supplies}


def _spread_against_each_trial(
    chain: Chain,
    budgets: dict[str, SupplyBudget],
    name: str,
    drawn: dict[str, np.ndarray],
    parent: str | None,
    ambient: float | None = None,
) -> dict[str, np.ndarray]:
    """The kind's spread with ``drawn`` parts and a load per trial; each of its figures,
    flags and its rail must equal, trial by trial, the spread of that trial's parts alone
    under that trial's load as floats (exactly: the same arithmetic element by element)."""
    supply = next(s for s in chain.supplies if s.name == name)
    kind = KINDS[supply.kind]
    nominal = budgets[name]
    per_trial = dataclasses.replace(nominal, load=_per_trial_load(nominal.load))
    low = ripple = None
    if parent is not None:
        low = np.asarray(budgets[parent].trough_v)
        ripple = RippleSpread.of(budgets[parent].state)
    batched = kind.spread(supply, drawn, per_trial, low, None, ripple, ambient_degc=ambient)
    assert batched is not None
    for t in range(LOAD_FACTORS.size):
        alone_nominal = dataclasses.replace(nominal, load=_one(per_trial.load, t))
        alone_drawn = {key: value[t : t + 1] for key, value in drawn.items()}
        alone = kind.spread(
            supply, alone_drawn, alone_nominal, low, None, ripple, ambient_degc=ambient
        )
        assert alone is not None
        assert set(alone.figures) == set(batched.figures)
        for key, value in batched.figures.items():
            # one value for every trial where neither the parts nor the load move it (a
            # crest with no load)
            assert np.shape(value) in ((), LOAD_FACTORS.shape), key
            one = np.broadcast_to(alone.figures[key], (1,))[0]
            assert np.broadcast_to(value, LOAD_FACTORS.shape)[t] == one, (name, key, t)
        for key, flag in batched.flags.items():
            assert (
                np.broadcast_to(flag, LOAD_FACTORS.shape)[t]
                == np.broadcast_to(alone.flags[key], (1,))[0]
            ), (name, key, t)
    return dict(batched.figures)


def test_battery_spread_under_a_load_per_trial() -> None:
    """A battery with a drawn resistance and reservoir under five loads: each trial's
    figures are those of that trial alone; its mean is E - I R per trial (Ohm's law for a
    Thevenin source, Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 1, from memory),
    and the unloaded trial's trough is the low end, 16 V."""
    chain, budgets = _budgets()
    r = np.array([0.35, 0.4, 0.42, 0.45, 0.38])
    c = np.array([2000e-6, 2200e-6, 2400e-6, 2100e-6, 2300e-6])
    figures = _spread_against_each_trial(
        chain, budgets, "plus", {"resistance": r, "reservoir": c}, None
    )
    nominal_a = budgets["plus"].load.nominal_a * LOAD_FACTORS
    np.testing.assert_allclose(figures["mean_v"], 18.0 - nominal_a * r, rtol=1e-15)
    assert figures["trough_v"][0] == 16.0
    assert np.all(np.diff(figures["sag_v"][1:] / r[1:]) > 0.0)  # more load, more drop per ohm
    # nothing drawn, the load alone per trial: the drop is R times the crest of the heaviest
    # load (no reservoir on this one), one per trial
    figures = _spread_against_each_trial(chain, budgets, "minus", {}, None)
    peak = budgets["minus"].load.heaviest_peak_a * LOAD_FACTORS
    assert figures["sag_v"].shape == LOAD_FACTORS.shape
    np.testing.assert_allclose(figures["sag_v"], 0.4 * peak, rtol=1e-14)


def test_rc_filter_spread_under_a_load_per_trial() -> None:
    """An RC filter with its parts drawn under five loads: each trial is that trial alone;
    its drop is R I_heaviest and its resistor's heat R I^2 per trial (Ohm's and Joule's
    laws)."""
    chain, budgets = _budgets()
    r = np.array([95.0, 100.0, 104.0, 99.0, 101.0])
    c = np.array([200e-6, 220e-6, 240e-6, 230e-6, 210e-6])
    figures = _spread_against_each_trial(
        chain, budgets, "pre_plus", {"resistance": r, "capacitance": c}, "plus"
    )
    heaviest = budgets["pre_plus"].load.heaviest_a * LOAD_FACTORS
    assert budgets["pre_plus"].load.heaviest_a > 1e-3
    np.testing.assert_allclose(figures["drop_v"], r * heaviest, rtol=1e-15)
    np.testing.assert_allclose(figures["resistor_w"], r * heaviest**2, rtol=1e-15)
    assert figures["drop_v"][0] == 0.0


def test_divider_spread_under_a_load_per_trial() -> None:
    """A divider with its resistors and capacitor drawn under five loads (its check's
    load is none: the loads are put on it by hand, 1 mA to 4 mA at the heaviest): each
    trial is that trial alone; its mean is k V_parent - R_th I (Thevenin)."""
    chain, budgets = _budgets()
    nominal = budgets["mid"]
    assert nominal.load.heaviest_a == 0.0
    handmade = SupplyLoad(1e-3, 2e-3, 4e-3, 1e-3, 3e-3, 1000.0)
    budgets["mid"] = dataclasses.replace(nominal, load=handmade)
    upper = np.array([9.5e3, 10e3, 10.4e3, 9.9e3, 10.2e3])
    lower = np.array([10.3e3, 9.6e3, 10e3, 10.1e3, 9.8e3])
    cap = np.array([45e-6, 47e-6, 50e-6, 44e-6, 48e-6])
    drawn = {"upper": upper, "lower": lower, "capacitance": cap}
    figures = _spread_against_each_trial(chain, budgets, "mid", drawn, "pre_plus")
    k = lower / (upper + lower)
    r_th = upper * lower / (upper + lower)
    parent_mean = budgets["pre_plus"].mean_v
    expected = np.maximum(k * parent_mean - r_th * 2e-3 * LOAD_FACTORS, 0.0)
    np.testing.assert_allclose(figures["mean_v"], expected, rtol=1e-14)


def test_regulator_spread_under_a_load_per_trial() -> None:
    """An adjustable regulator with a minimum load, its divider drawn, under five loads:
    each trial (its margins, heat and flags among them) is that trial alone; its
    minimum-load margin is the trial's external idle load plus V_ref/lower less the
    minimum (Kirchhoff's current law at the output, worked by hand)."""
    chain, budgets = _budgets()
    upper = np.array([2.1e3, 2.2e3, 2.3e3, 2.15e3, 2.25e3])
    lower = np.array([236.0, 240.0, 244.0, 238.0, 242.0])
    figures = _spread_against_each_trial(
        chain, budgets, "pre_minus", {"upper": upper, "lower": lower}, "minus", ambient=25.0
    )
    nominal = budgets["pre_minus"]
    # the load per trial is the delivered one (the nominal divider's current in it) scaled:
    # its external share is that less the nominal divider's current
    external_idle = nominal.load.idle_a * LOAD_FACTORS - nominal.own.divider_a
    np.testing.assert_allclose(
        figures["min_load_margin_a"], external_idle + 1.25 / lower - 0.01, rtol=1e-12
    )
    assert np.ptp(figures["dissipation_w"]) > 0.0
    # nothing drawn: the load alone moves the margin and the heat, one per trial
    figures = _spread_against_each_trial(chain, budgets, "pre_minus", {}, "minus", ambient=25.0)
    assert figures["min_load_margin_a"].shape == LOAD_FACTORS.shape
    assert np.all(np.diff(figures["dissipation_w"]) > 0.0)


# A 24 V battery (22 V at its low end) of 10 ohm feeding an unloaded divider of two 200 ohm
# legs and an adjustable regulator with a 470 ohm bleeder, both drawn (10 %, the reference
# 2 %), the regulator's output loaded by a block drawing a steady 0.1 A: the battery's load
# is the block's current, the regulator's own, and the divider's and bleeder's standing
# currents, which move with the drawn legs by tens of milliamps.
STANDING = """
[chain]
title = "standing currents drawn"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "10k"
[tolerances]
resistors = "10 %"
references = "2 %"
[[supply]]
name = "cell"
kind = "dc"
voltage = "24 V"
min_voltage = "22 V"
resistance = "10 ohm"
tolerance = { resistance = "0 %" }
[[supply]]
name = "mid"
kind = "divider"
from = "cell"
upper = "200 ohm"
lower = "200 ohm"
[[supply]]
name = "reg"
kind = "regulator"
from = "cell"
reference = "1.25 V"
adjust_current = "50 uA"
upper = "1.2k"
lower = "120 ohm"
bleeder = "470 ohm"
dropout = "2 V"
quiescent = "5 mA"
max_input = "30 V"
[[stage]]
name = "pre"
kind = "block"
gain = "0 dB"
input_impedance = "20k"
output_impedance = "100 ohm"
supply_current = "0.1 A"
positive = "reg"
"""


def test_standing_currents_of_drawn_dividers_load_the_parent_per_trial() -> None:
    """The battery's trough and mean, and each supply's loads out of its pin and into its
    input, per trial against Ohm's law worked here: the Thevenin
    source E - I R (Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 1, from memory)
    under I = 0.1 A + I_q + V_ref/lower + V_out/bleeder + 24 V/(upper + lower), the
    regulator's set output V_out = V_ref (1 + upper/lower) + I_adj upper and the divider's
    standing current at the battery's unloaded 24 V, each with the trial's drawn parts
    (rtol 1e-12); and against the check of each trial written into the file (brute force,
    rtol 1e-9). With the standing currents at the file's values instead, the trough was
    off by up to 0.053 V."""
    chain = parse_chain(tomllib.loads(STANDING), "standing.toml")
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(4).random((6, len(parts)))
    got = evaluate(positions, steps=frozenset({"supplies"}))
    values = evaluate.values(positions)
    v = {p.label: value for p, value in zip(parts, values, strict=True)}
    v_ref, upper, lower = v["reg.reference"], v["reg.upper"], v["reg.lower"]
    v_out = v_ref * (1.0 + upper / lower) + 50e-6 * upper
    current = (
        0.1
        + 5e-3
        + v_ref / lower
        + v_out / v["reg.bleeder"]
        + 24.0 / (v["mid.upper"] + v["mid.lower"])
    )
    np.testing.assert_allclose(got["supplies.cell.trough_v"], 22.0 - 10.0 * current, rtol=1e-12)
    np.testing.assert_allclose(got["supplies.cell.mean_v"], 24.0 - 10.0 * current, rtol=1e-12)
    # the loads as the check JSON carries them: out of each pin and into each input
    delivered = 0.1 + v_ref / lower + v_out / v["reg.bleeder"]
    standing = 24.0 / (v["mid.upper"] + v["mid.lower"])
    for key in ("idle_load_a", "nominal_load_a", "max_load_a"):
        np.testing.assert_allclose(got[f"supplies.reg.{key}"], delivered, rtol=1e-12)
        np.testing.assert_allclose(got[f"supplies.cell.{key}"], current, rtol=1e-12)
    for key in ("input_idle_a", "input_max_a"):
        np.testing.assert_allclose(got[f"supplies.reg.{key}"], delivered + 5e-3, rtol=1e-12)
        np.testing.assert_allclose(got[f"supplies.mid.{key}"], standing, rtol=1e-12)
    for t in range(len(positions)):
        budget = compute(
            chain.with_values(trial_changes(chain, parts, [x[t : t + 1] for x in values]))
        )
        want = budget.supply("cell")
        assert got["supplies.cell.trough_v"][t] == pytest.approx(want.trough_v, rel=1e-9), t
        assert got["supplies.reg.input_min_v"][t] == pytest.approx(want.trough_v, rel=1e-9), t
        for name in ("cell", "reg", "mid"):
            for key in ("idle_load_a", "max_load_a", "input_max_a"):
                value = getattr(budget.supply(name), key)
                if value is not None:
                    assert got[f"supplies.{name}.{key}"][t] == pytest.approx(value, rel=1e-9), t


def test_a_divider_under_a_drawn_regulator_draws_at_that_trials_set_output() -> None:
    """A divider fed from the adjustable regulator (a bias point): its standing current
    is V_out / (upper + lower) at the regulator's set output with that trial's drawn
    reference and divider, V_out = V_ref (1 + upper/lower) + I_adj upper (the regulator's
    output equation, any linear-regulator application text; from memory), rtol 1e-12, and
    it is part of the regulator's load out of its pin; against the check of each trial
    written into the file (brute force, rtol 1e-9). At the file's set output instead, the
    standing current was off by up to 15 % (10 % resistors, a 2 % reference)."""
    extra = """
[[supply]]
name = "half"
kind = "divider"
from = "reg"
upper = "1k"
lower = "1k"
"""
    chain = parse_chain(tomllib.loads(STANDING + extra), "standing.toml")
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(6).random((5, len(parts)))
    got = evaluate(positions, steps=frozenset({"supplies"}))
    values = evaluate.values(positions)
    v = {p.label: value for p, value in zip(parts, values, strict=True)}
    v_out = v["reg.reference"] * (1.0 + v["reg.upper"] / v["reg.lower"]) + 50e-6 * v["reg.upper"]
    standing = v_out / (v["half.upper"] + v["half.lower"])
    for key in ("input_idle_a", "input_max_a"):
        np.testing.assert_allclose(got[f"supplies.half.{key}"], standing, rtol=1e-12)
    delivered = 0.1 + v["reg.reference"] / v["reg.lower"] + v_out / v["reg.bleeder"] + standing
    np.testing.assert_allclose(got["supplies.reg.idle_load_a"], delivered, rtol=1e-12)
    for t in range(len(positions)):
        budget = compute(
            chain.with_values(trial_changes(chain, parts, [x[t : t + 1] for x in values]))
        )
        for name in ("cell", "reg", "half"):
            for key in ("idle_load_a", "max_load_a", "input_max_a"):
                value = getattr(budget.supply(name), key)
                if value is not None:
                    got_t = got[f"supplies.{name}.{key}"][t]
                    assert got_t == pytest.approx(value, rel=1e-9), (name, key, t)
