"""Every supply's state figures over the spread's trials (trough, mean, crest, the input's
range), a regulator's heat (its dissipation at high line, its junction, the thermal
resistance allowed) and the rules that read it, per trial. Checked by brute force (each
trial's drawn values written into the chain, `Chain.with_values`, and checked alone) and
against the textbook dissipation of a series regulator at the analytic bounds of its
set output."""

from __future__ import annotations

import json
from typing import Any

import numpy as np
import pytest
from test_spread import _grid_rtol, _json_figure, trial_changes

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import Chain, loads_chain
from chainbudget.report.json_view import budget_json
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.flags import flag_key, is_flag
from chainbudget.spread.parts import Part, chain_parts
from chainbudget.spread.run import run_spread

# A stiff battery pack (no internal resistance: its state does not move with its load) with
# a low and a high end, feeding an adjustable regulator whose reference (2 %), set
# resistors and bleeder (1 %) are drawn, its output loaded by a block drawing a fixed
# current (so no load moves with the drawn parts: the check of a trial settles its tree on
# the loads the spread holds). Its thermal resistance is set in the test so that the
# junction sits at its maximum at the nominal parts: the trials on either side of it draw
# `regulator-junction` or `regulator-junction-near`.
REGULATED = """
[chain]
title = "a regulator's heat"
ambient = "40 degC"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "10k"
[tolerances]
resistors = "1 %"
references = "2 %"
capacitors = "0 %"
[[supply]]
name = "pack"
kind = "dc"
voltage = "12 V"
min_voltage = "10 V"
max_voltage = "15 V"
[[supply]]
name = "reg"
kind = "regulator"
from = "pack"
reference = "1.25 V"
adjust_current = "50 uA"
upper = "720 ohm"
lower = "240 ohm"
dropout = "2 V"
quiescent = "5 mA"
bleeder = "2k2"
theta_ja = "THETA"
max_input = "20 V"
[[stage]]
name = "pre"
kind = "block"
gain = "0 dB"
input_impedance = "20k"
output_impedance = "100 ohm"
supply_current = "0.1 A"
positive = "reg"
"""

# A mains rectifier whose reservoir is drawn (20 %), an rc_filter off it (5 % resistor,
# 20 % capacitor) with a divider below it (5 % resistors, 20 % capacitor), and a fixed
# regulator straight off the rectifier (nothing of its own drawn: its output, ripple and
# heat follow the rectifier's trough, mean and high-line means per trial). Every stage is a
# block drawing a fixed current; the divider's two resistors are equal and drawn with the
# lower mirroring the upper (the test's positions), so that their sum, its standing
# current and with it the filter's load are the nominal check's (the spread holds the
# loads; the check of a trial settles them again).
MAINS = """
[chain]
title = "a rectifier, a filter, a divider and a regulator"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "10k"
[tolerances]
resistors = "5 %"
capacitors = "20 %"
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
name = "quiet"
kind = "rc_filter"
from = "raw"
resistance = "47 ohm"
capacitance = "470 uF"
[[supply]]
name = "mid"
kind = "divider"
from = "quiet"
upper = "22k"
lower = "22k"
capacitance = "10 uF"
[[supply]]
name = "fixed"
kind = "regulator"
from = "raw"
output = "12 V"
dropout = "2 V"
quiescent = "5 mA"
theta_ja = "60 K/W"
max_input = "35 V"
ripple_rejection = "60 dB"
[[stage]]
name = "amp"
kind = "block"
gain = "0 dB"
input_impedance = "20k"
output_impedance = "100 ohm"
supply_current = "0.2 A"
positive = "fixed"
[[stage]]
name = "line"
kind = "block"
gain = "0 dB"
input_impedance = "20k"
output_impedance = "100 ohm"
supply_current = "10 mA"
positive = "quiet"
"""

#: The figures this module adds, by supply, that some drawn part moves in each chain.
REGULATOR_MOVED = (
    "trough_v",
    "output_min_v",
    "mean_v",
    "crest_v",
    "output_max_v",
    "bleeder_w",
    "dissipation_w",
    "dissipation_full_w",
    "dissipation_idle_w",
    "junction_degc",
    "junction_idle_degc",
    "theta_allowed_k_per_w",
)
MAINS_MOVED = {
    "raw": ("output_min_v",),
    "quiet": ("output_min_v", "mean_v"),
    "mid": ("output_min_v", "mean_v", "crest_v", "output_max_v"),
    "fixed": (
        "input_min_v",
        "dissipation_w",
        "dissipation_full_w",
        "dissipation_idle_w",
        "junction_degc",
        "junction_idle_degc",
        "theta_allowed_k_per_w",
    ),
}


def _evaluator(chain: Chain) -> tuple[list[Part], Evaluator]:
    parts, _ = chain_parts(chain)
    return parts, Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


def _check_json(chain: Chain) -> dict[str, Any]:
    budget = compute(chain)
    return dict(json.loads(json.dumps(budget_json(budget, list(budget.findings)))))


def _ours(path: str) -> bool:
    """The figures and flags under test: every supply's, and the regulator's rules."""
    return path.startswith("supplies.") or (is_flag(path) and ":regulator-" in path)


def _regulated(theta: str) -> Chain:
    return loads_chain(REGULATED.replace("THETA", theta), "regulated.toml")


def _at_its_limit() -> Chain:
    """`REGULATED` with theta_ja such that the junction is at its maximum at the nominal
    parts (T_j = T_a + P theta)."""
    nominal = compute(_regulated("100 K/W")).supply("reg")
    theta = (nominal.max_junction_degc - 40.0) / nominal.dissipation_w
    return _regulated(f"{theta!r} K/W")


def test_a_regulators_figures_and_heat_equal_the_check_of_each_trial() -> None:
    """Brute force, one trial at a time: eight trials of the regulator's drawn reference,
    set resistors and bleeder, each written into the chain (`Chain.with_values`) and
    checked alone, give every supply figure of the batch at rtol 1e-9: its output, trough,
    mean and crest, the input's range, the bleeder's power, the dissipation at high line
    (heaviest load and idle), the junction at each, the thermal resistance allowed; and
    whether the trial draws `regulator-junction`, `regulator-junction-near` and
    `regulator-max-input` is whether the check of that trial finds it. Both junction
    codes are drawn by some trials and not by others."""
    chain = _at_its_limit()
    parts, evaluate = _evaluator(chain)
    drawn = {p.label for p in parts if p.table == "supply"}
    assert drawn == {"reg.reference", "reg.upper", "reg.lower", "reg.bleeder"}
    positions = np.random.default_rng(3).random((8, len(parts)))
    batched = evaluate(positions, flags=True)
    for key in REGULATOR_MOVED:
        assert np.ptp(batched[f"supplies.reg.{key}"]) > 0.0, key
    over = batched[flag_key("error", "regulator-junction", "reg")]
    near = batched[flag_key("warning", "regulator-junction-near", "reg")]
    assert 0.0 < over.mean() < 1.0 and 0.0 < near.mean() < 1.0
    assert np.all(over + near == 1.0)  # within 25 K of the maximum, one side or the other
    assert not np.any(batched[flag_key("error", "regulator-max-input", "reg")])
    values = evaluate.values(positions)
    for t in range(len(positions)):
        alone = chain.with_values(trial_changes(chain, parts, [v[t : t + 1] for v in values]))
        data = _check_json(alone)
        for path in filter(_ours, batched):
            want, got = _json_figure(data, path), float(batched[path][t])
            if is_flag(path):
                assert got == want, (path, t)
            else:
                assert got == pytest.approx(want, rel=1e-9, abs=0), (path, t)


def _mains_positions(parts: list[Part], count: int, seed: int) -> np.ndarray:
    """Random positions with the divider's lower resistor mirroring its upper one (their
    sum, and so its standing current, held at the nominal)."""
    labels = [p.label for p in parts]
    positions = np.random.default_rng(seed).random((count, len(parts)))
    positions[:, labels.index("mid.lower")] = 1.0 - positions[:, labels.index("mid.upper")]
    return positions


def test_the_filters_divider_and_regulator_below_a_drawn_reservoir_equal_each_trials_check() -> (
    None
):
    """Brute force, one trial at a time: eight trials of the reservoir, the filter's and
    the divider's parts, each written into the chain and checked alone, give every supply
    figure of the batch at rtol 1e-9 (the batch of eight solves the rectifier directly): the
    rectifier's trough as `output_min_v`; the filter's and the divider's `mean_v` (the
    same quantity as their `vout_v`), `crest_v` and `output_max_v` (the divider's k times
    the rectifier's crest) and `output_min_v`; the fixed regulator's input range and its
    heat from the rectifier's means at high line (under the heaviest load at the worst
    phase, and under the idle load) per trial. A batch of 24 (the rectifier's figures from
    its grid of reservoir values) equals each trial evaluated alone within the grid's
    accuracy (`_grid_rtol`)."""
    chain = loads_chain(MAINS, "mains.toml")
    parts, evaluate = _evaluator(chain)
    assert {p.label for p in parts if p.table == "supply"} == {
        "raw.reservoir",
        "quiet.resistance",
        "quiet.capacitance",
        "mid.upper",
        "mid.lower",
        "mid.capacitance",
    }
    positions = _mains_positions(parts, 8, 11)
    batched = evaluate(positions, flags=True)
    for name, keys in MAINS_MOVED.items():
        for key in keys:
            assert np.ptp(batched[f"supplies.{name}.{key}"]) > 0.0, (name, key)
    for name in ("quiet", "mid"):
        mean = batched[f"supplies.{name}.mean_v"]
        assert np.array_equal(mean, batched[f"supplies.{name}.vout_v"]), name
    values = evaluate.values(positions)
    for t in range(len(positions)):
        alone = chain.with_values(trial_changes(chain, parts, [v[t : t + 1] for v in values]))
        data = _check_json(alone)
        for path in filter(_ours, batched):
            want, got = _json_figure(data, path), float(batched[path][t])
            if is_flag(path):
                assert got == want, (path, t)
            else:
                assert got == pytest.approx(want, rel=1e-9, abs=1e-12), (path, t)
    grid = _mains_positions(parts, 24, 12)
    on_grid = evaluate(grid, flags=True)
    for t in range(0, len(grid), 5):
        alone_figures = evaluate(grid[t : t + 1], flags=True)
        for path in filter(_ours, on_grid):
            got, want = on_grid[path][t], alone_figures[path][0]
            assert got == pytest.approx(want, rel=_grid_rtol(path), abs=1e-9), (path, t)


# The pack's high end and the block's current (REGULATED), the regulator's own current.
V_IN_HIGH, I_LOAD, I_Q, I_ADJ = 15.0, 0.1, 5e-3, 50e-6


def _vout(v_ref: float, upper: float, lower: float) -> float:
    """V_out = V_ref (1 + R2/R1) + I_adj R2 (R1 across the reference, R2 to ground: the
    adjustable regulator's divider; Horowitz & Hill, The Art of Electronics, 3rd ed., ch.
    9, from memory)."""
    return v_ref * (1.0 + upper / lower) + I_ADJ * upper


def _dissipation(v_ref: float, upper: float, lower: float, bleeder: float) -> float:
    """The pass device's dissipation: the whole output current (the load, the divider's
    V_ref/R1 and the bleeder's V_out/R_b) across V_in - V_out, plus the regulator's own
    current, which flows from the input to ground, across V_in (power = voltage times
    current in each path; the heat budget of a linear series regulator, e.g. Horowitz &
    Hill, The Art of Electronics, 3rd ed., ch. 9, from memory). At high line, V_in the
    pack's high end."""
    vout = _vout(v_ref, upper, lower)
    output_a = I_LOAD + v_ref / lower + vout / bleeder
    return (V_IN_HIGH - vout) * output_a + V_IN_HIGH * I_Q


def test_the_dissipation_corners_are_the_textbook_heat_at_the_set_outputs_bounds() -> None:
    """The corner worst case of the regulator's dissipation against the textbook heat of a
    series regulator written out here (`_dissipation`) at the vertices of the analytic
    bounds of V_out = V_ref (1 + R2/R1) + I_adj R2: the least heat at the highest output
    (V_ref and R2 high, R1 low) with the largest bleeder, the most at the lowest output
    with the smallest (the heat falls with V_out in this design: the load current dwarfs
    the divider's), rtol 1e-12; the junction's corners T_a + P theta at both; and every
    Monte Carlo trial inside."""
    chain = _at_its_limit()
    theta = compute(chain).supply("reg").theta_k_per_w
    result = run_spread(chain, 2000, 5)
    least = _dissipation(1.25 * 1.02, 720 * 1.01, 240 * 0.99, 2200 * 1.01)
    most = _dissipation(1.25 * 0.98, 720 * 0.99, 240 * 1.01, 2200 * 0.99)
    for key, low_want, high_want in (
        ("dissipation_w", least, most),
        ("dissipation_full_w", least, most),
        ("junction_degc", 40.0 + least * theta, 40.0 + most * theta),
    ):
        path = f"supplies.reg.{key}"
        low, high = result.corners[path]
        assert low == pytest.approx(low_want, rel=1e-12, abs=0), path
        assert high == pytest.approx(high_want, rel=1e-12, abs=0), path
        stats = result.stats[path]
        assert low <= stats["min"] < stats["max"] <= high, path
    # the junction at its maximum at the nominal parts: about half the builds run over it
    assert 0.3 < 1.0 - result.yield_by_code["regulator-junction"] < 0.7
