"""The spread (Monte Carlo over the parts' tolerances), each check against a source outside
the model: a distribution worked out here by numerical integration, a closed-form bound,
or an analytic fraction of the trials."""

from __future__ import annotations

import json
import math
import subprocess
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate, optimize

from chainbudget.budget import Budget
from chainbudget.chainfile import Chain, parse_chain
from chainbudget.loudspeaker import is_reactive
from chainbudget.spread.flags import flag_parts, is_flag
from chainbudget.spread.run import run_spread
from chainbudget.supplies.rectified.spread import OWN_KEYS as RECTIFIER_OWN_KEYS

ROOT = Path(__file__).resolve().parents[1]

# An idealised op-amp (prefixes written in full to pass plausibility) so that the stage's
# gain is 1 + Rf/Rg to within parts per million.
IDEAL = """
[opamp.ideal]
gbw = "100 gigahertz"
slew_rate = "1000 V/us"
noise_voltage = "1 nV/rtHz"
noise_current = "0.1 pA/rtHz"
open_loop_gain = "200 dB"
output_resistance = "0 ohm"
swing_margin = "1 V"
output_current = "1 A"
supply_current = "1 mA"
"""

NON_INVERTING = (
    """
[chain]
title = "gain spread"
[source]
level = "10 mV"
impedance = "0 ohm"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "1 %"
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
opamp = "ideal"
positive = "bat"
"""
    + IDEAL
)


def _chain(text: str):  # noqa: ANN202
    return parse_chain(tomllib.loads(text), "spread.toml")


def _gain_cdf(g_db: float, rf: float, rg: float, t: float) -> float:
    """P(20 log10(1 + Rf/Rg) <= g) for Rf, Rg independent and uniform within +-t: the
    integral over Rg of P(Rf <= (10^(g/20) - 1) Rg), by scipy.integrate.quad."""
    ratio = 10.0 ** (g_db / 20.0) - 1.0
    lo_f, hi_f = rf * (1 - t), rf * (1 + t)

    def inner(r_g: float) -> float:
        return float(np.clip((ratio * r_g - lo_f) / (hi_f - lo_f), 0.0, 1.0))

    lo_g, hi_g = rg * (1 - t), rg * (1 + t)
    value, _ = integrate.quad(inner, lo_g, hi_g, limit=200)
    return value / (hi_g - lo_g)


def test_non_inverting_gain_spread_matches_the_exact_distribution() -> None:
    """Percentiles of 20 log10(1 + Rf/Rg), 1 % resistors: the exact quantiles by numerical
    integration of the uniform densities (scipy.integrate.quad, root found by brentq),
    within the sampling error of 20,000 trials (the quantile's standard error
    sqrt(p(1-p)/N)/f(x); 5 sigma in probability)."""
    trials = 20_000
    result = run_spread(_chain(NON_INVERTING), trials, 7)
    gain = result.samples["nodes.pre.gain_db"]
    for name, p in (("p1", 0.01), ("p50", 0.5), ("p99", 0.99)):
        exact = optimize.brentq(lambda g, p=p: _gain_cdf(g, 9e3, 1e3, 0.01) - p, 19.5, 20.5)
        # The trials' share below the exact quantile is p within sampling error.
        share = float(np.mean(gain <= exact))
        assert abs(share - p) < 5.0 * math.sqrt(p * (1 - p) / trials), name
        assert result.stats["nodes.pre.gain_db"][name] == pytest.approx(exact, abs=0.01)
    # corners: both resistors at their bounds, 20 log10(1 + 9 (1 +- t)/(1 -+ t))
    lo, hi = result.corners["nodes.pre.gain_db"]
    assert lo == pytest.approx(20 * math.log10(1 + 9 * 0.99 / 1.01), abs=1e-4)
    assert hi == pytest.approx(20 * math.log10(1 + 9 * 1.01 / 0.99), abs=1e-4)


REGULATOR = (
    """
[chain]
title = "regulator spread"
[source]
level = "10 mV"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "1 %"
references = "4 %"
[[supply]]
name = "raw"
kind = "dc"
voltage = "{raw}"
[[supply]]
name = "reg"
kind = "regulator"
from = "raw"
reference = "1.25 V"
adjust_current = "50 uA"
upper = "2k2"
lower = "240R"
dropout = "2 V"
min_load = "{min_load}"
tolerance = {{ upper = "2 %" }}
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
opamp = "ideal"
positive = "reg"
"""
    + IDEAL
)


def _vout(vref: float, upper: float, lower: float) -> float:
    return vref * (1 + upper / lower) + 50e-6 * upper


def test_adjustable_regulator_corners_are_the_analytic_bounds() -> None:
    """Vout = Vref (1 + R2/R1) + Iadj R2 (the adjustable regulator's divider, Horowitz & Hill
    3rd ed. ch. 9): highest with Vref and R2 high and R1 low, lowest the other way (the
    formula is monotonic in each part); the Monte Carlo's min/max inside those bounds; its
    median against a brute-force median of the same formula over 400,000 independent
    draws, within sampling error."""
    result = run_spread(_chain(REGULATOR.format(raw="30 V", min_load="0 A")), 20_000, 3)
    low_bound = _vout(1.25 * 0.96, 2200 * 0.98, 240 * 1.01)
    high_bound = _vout(1.25 * 1.04, 2200 * 1.02, 240 * 0.99)
    lo, hi = result.corners["supplies.reg.vout_v"]
    assert lo == pytest.approx(low_bound, rel=1e-12, abs=0)
    assert hi == pytest.approx(high_bound, rel=1e-12, abs=0)
    stats = result.stats["supplies.reg.vout_v"]
    assert low_bound <= stats["min"] <= stats["max"] <= high_bound
    rng = np.random.default_rng(12345)
    n = 400_000
    brute = _vout(
        rng.uniform(1.2, 1.3, n), rng.uniform(2156, 2244, n), rng.uniform(237.6, 242.4, n)
    )
    for name, q in (("p1", 1), ("p50", 50), ("p99", 99)):
        # quantile standard error over 20,000 trials is about 0.01 V at the tails here
        assert stats[name] == pytest.approx(np.percentile(brute, q), abs=0.03), name
    # the stage on that rail follows it: its swing limit is the rail less the margin
    clip = result.samples["nodes.pre.clip_vpk"]
    vout = result.samples["supplies.reg.vout_v"]
    assert np.allclose(clip, vout / 2 - 1.0, rtol=1e-9, atol=0)


def test_yield_against_the_analytic_share_failing_dropout() -> None:
    """A 15.1 V input and a 2 V dropout: the regulator falls out of regulation where
    Vout > 13.1 V. With R2, R1 held (0 %) the output is 1.25 (1 + 2200/240) + 0.11 V times
    the reference's draw, uniform within +-4 %: the share out of regulation is the
    uniform's share above 14 V (exact), the yield within 5 sigma of it; and every trial is
    below the regulator's minimum load (a warning) where the divider's 5.2 mA cannot make
    a 20 mA minimum. The stage is AC-coupled about its bias point into a line input, so
    that no trial draws a DC error (each trial's DC is spread too)."""
    text = (
        REGULATOR.format(raw="15.1 V", min_load="20 mA")
        .replace('resistors = "1 %"', 'resistors = "0 %"')
        .replace('tolerance = { upper = "2 %" }', "")
        .replace('impedance = "8 ohm"', 'impedance = "10k"')
        .replace(
            'ground_leg = "10k"',
            'ground_leg = "10k"\ninput_cap = "1u"\nbias_resistor = "100k"\nground_cap = "47u"',
        )
    )
    trials = 20_000
    result = run_spread(_chain(text), trials, 11)
    gain = 1 + 2200 / 240
    vref_fail = (13.1 - 50e-6 * 2200) / gain
    share = (1.25 * 1.04 - vref_fail) / (1.25 * 0.08)
    assert 0.05 < share < 0.95
    sigma = math.sqrt(share * (1 - share) / trials)
    assert abs((1 - result.yield_by_code["regulator-dropout"]) - share) < 5 * sigma
    assert abs((1 - result.yield_all) - share) < 5 * sigma
    assert result.yield_by_code["regulator-min-load"] == 0.0


def _run(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "chainbudget", *args],
        capture_output=True,
        text=True,
        cwd=ROOT,
        check=False,
    )


def test_same_seed_same_output_and_another_seed_differs(tmp_path: Path) -> None:
    """Reproducibility (the contract: trials with a fixed --seed are reproducible), through
    the real command; the JSON carries the contract's keys and no NaN/Infinity."""
    chain = tmp_path / "g.toml"
    chain.write_text(NON_INVERTING)
    one = _run("spread", str(chain), "--trials", "500", "--seed", "5", "--format", "json")
    two = _run("spread", str(chain), "--trials", "500", "--seed", "5", "--format", "json")
    other = _run("spread", str(chain), "--trials", "500", "--seed", "6", "--format", "json")
    assert one.returncode == 0, one.stderr
    assert one.stdout == two.stdout
    assert one.stdout != other.stdout
    data = json.loads(one.stdout, parse_constant=lambda c: pytest.fail(c))
    for key in ("trials", "seed", "figures", "yield", "yield_by_code", "corners", "sensitivity"):
        assert key in data
    assert set(data["figures"]["nodes.pre.gain_db"]) == {"p1", "p50", "p99", "min", "max"}
    assert set(data["corners"]["nodes.pre.gain_db"]) == {"low", "high"}


@pytest.mark.parametrize(
    ("edit", "where"),
    [
        ('resistors = "1 %"', 'resistors = "1"'),
        ('resistors = "1 %"', 'resistor = "1 %"'),
        ('ground_leg = "1k"', 'ground_leg = "1k"\ntolerance = { feedbak = "1 %" }'),
        ('ground_leg = "1k"', 'ground_leg = "1k"\ntolerance = { feedback = "-5 %" }'),
    ],
)
def test_bad_tolerance_is_one_line_exit_2(tmp_path: Path, edit: str, where: str) -> None:
    """Bad input never produces a traceback: one line naming file and table path, exit 2."""
    chain = tmp_path / "bad.toml"
    chain.write_text(NON_INVERTING.replace(edit, where))
    done = _run("spread", str(chain), "--trials", "10")
    assert done.returncode == 2
    assert done.stdout == ""
    assert len(done.stderr.strip().splitlines()) == 1
    assert "bad.toml" in done.stderr and "Traceback" not in done.stderr


def test_bad_trials_is_one_line_exit_2(tmp_path: Path) -> None:
    chain = tmp_path / "g.toml"
    chain.write_text(NON_INVERTING)
    done = _run("spread", str(chain), "--trials", "0")
    assert done.returncode == 2 and len(done.stderr.strip().splitlines()) == 1


def test_nominal_spread_figures_are_the_check_figures() -> None:
    """At the nominal parts, the spread's batched figures are the check's own (one source
    of truth; the example with a regulator feeding op-amp stages)."""
    from chainbudget.budget import compute
    from chainbudget.chainfile import load_chain
    from chainbudget.report.json_view import budget_json

    chain = load_chain(ROOT / "chains" / "kitchen_radio_mains.toml")
    result = run_spread(chain, 50, 1)
    budget = compute(chain)
    data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
    for path, value in result.nominal.items():
        held = _json_figure(data, path)
        assert value == pytest.approx(held, rel=1e-9, abs=1e-12), path


FOLLOWER = (
    """
[chain]
title = "follower spread"
[source]
level = "100 mV"
impedance = "10k"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "5 %"
capacitors = "20 %"
beta = [0.3, 3]
[transistor.buffer_npn]
polarity = "npn"
beta = 150
vbe = "0.65 V"
vce_sat = "0.2 V"
base_resistance = "100 ohm"
[[supply]]
name = "bat"
kind = "dc"
voltage = "18 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "inverting"
input = "10k"
feedback = "47k"
input_cap = "100n"
opamp = "ideal"
positive = "bat"
[[stage]]
name = "buffer"
kind = "follower"
transistor = "buffer_npn"
bias = "resistor"
emitter_resistor = "1k"
base_resistor = "2k2"
output_cap = "10u"
positive = "bat"
[[stage]]
name = "line"
kind = "block"
gain = "0 dB"
input_impedance = "600 ohm"
output_impedance = "50 ohm"
"""
    + IDEAL
)


def test_batched_trials_equal_the_check_of_each_trial_edited_into_the_file() -> None:
    """Brute force, one sample at a time: each of a few trials written into the file
    (`Chain.with_values`) and checked on its own gives the figures the batched trial axis
    gives (a follower's beta and bias resistors included: the transistor model and the
    follower's bias taken as arrays), rtol 1e-9."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.report.json_view import budget_json
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    chain = _chain(FOLLOWER)
    parts, held = chain_parts(chain)
    labels = {p.label for p in parts}
    assert {"buffer.transistor beta", "buffer.base_resistor", "line.output_impedance"} <= labels
    assert held == []
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(2).random((4, len(parts)))
    batched = evaluate(positions)
    for t in range(positions.shape[0]):
        changes: dict[str, object] = {}
        for part, value in zip(parts, evaluate.values(positions[t : t + 1]), strict=True):
            if part.is_beta:
                changes["transistor.buffer_npn.beta"] = float(value[0])
            else:
                changes[f"{part.owner}.{part.key}"] = f"{float(value[0])!r} {_si(part)}"
        edited = chain.with_values(changes)
        budget = compute(edited)
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        for path, values in batched.items():
            if _ideal_opamp_current(path):
                continue
            held = _json_figure(data, path, budget)
            assert values[t] == pytest.approx(held, rel=1e-9, abs=1e-12), path


def _ideal_opamp_current(path: str) -> bool:
    """An op-amp's output current (and a driver's current it sets) in a chain with the
    idealised op-amp (200 dB open-loop gain, no output resistance): the figures read the
    current on the load side (tests/test_opamp_current.py), but the check's worst-case
    search still ranks the settings by the branch current of the op-amp's source, whose
    1e10 coefficient leaves round-off there, so a trial's worst over the band differs from
    its check by about 2e-9; tests/test_spread_dc.py checks those figures with an op-amp
    of ordinary gain."""
    return path.endswith(("drive_current_a", "drive_worst_current_a", "needed_a"))


def _si(part) -> str:  # noqa: ANN001
    return "F" if part.part_class == "capacitors" else "ohm"


def trial_changes(chain: Chain, parts, values) -> dict[str, object]:  # noqa: ANN001
    """One trial's drawn parts (``values``: each part's value, shape (1,)) as edits of the
    file, for checking that trial alone (`Chain.with_values`). A transistor part named by
    two drawn betas (two devices) cannot be one edit: `trial_chain` writes those."""
    changes: dict[str, object] = {}
    for part, value in zip(parts, values, strict=True):
        if part.is_beta:
            name = chain.stages[part.index].values[part.key]
            assert f"transistor.{name}.beta" not in changes, f"{name}: use trial_chain"
            changes[f"transistor.{name}.beta"] = float(value[0])
        elif part.part_class == "references":
            changes[f"{part.table}.{part.owner}.{part.key}"] = f"{float(value[0])!r} V"
        else:
            changes[f"{part.table}.{part.owner}.{part.key}"] = f"{float(value[0])!r} {_si(part)}"
    return changes


def trial_chain(chain: Chain, parts, values) -> Chain:  # noqa: ANN001
    """One trial written into the file (as `trial_changes`), each drawn beta on a
    transistor part of its own stage's (``NAME_STAGE_FIELD``, a copy of the part the stage
    names with the drawn beta): two stages naming one part are two devices, each drawn
    on its own (docs/tolerances.md)."""
    from chainbudget.chainfile import chain_to_dict

    plain = [(p, v) for p, v in zip(parts, values, strict=True) if not p.is_beta]
    written = chain.with_values(trial_changes(chain, *zip(*plain, strict=True))) if plain else chain
    data = chain_to_dict(written)
    tables = data.setdefault("transistor", {})
    for part, value in zip(parts, values, strict=True):
        if not part.is_beta:
            continue
        stage = data["stage"][part.index]
        name, beta = stage[part.key], float(value[0])
        # the part's every field as the file writes it (a generic part's too)
        whole = chain_to_dict(chain.with_values({f"transistor.{name}.beta": beta}))
        own = f"{name}_{stage['name']}_{part.key}"
        tables[own] = {**whole["transistor"][name], "beta": beta}
        stage[part.key] = own
    return parse_chain(data, chain.file)


def test_small_signal_takes_an_array_beta_element_by_element() -> None:
    """The hybrid-pi parameters of an array of betas are those of each beta alone
    (r_pi = (beta + 1) r_e exactly, Horowitz & Hill 3rd ed. sec. 2.3, from memory)."""
    from dataclasses import replace

    from chainbudget.parts import GENERIC_TRANSISTORS
    from chainbudget.stages.hybrid_pi import small_signal

    part = GENERIC_TRANSISTORS["small_npn"]
    betas = np.array([[60.0], [150.0], [400.0]])
    batch = small_signal(replace(part, beta=betas), 2e-3, 300.0)  # type: ignore[arg-type]
    for i, beta in enumerate(betas[:, 0]):
        one = small_signal(replace(part, beta=float(beta)), 2e-3, 300.0)
        assert batch.r_pi[i, 0] == pytest.approx(one.r_pi, rel=1e-12, abs=0)
        assert batch.r_pi[i, 0] == pytest.approx((beta + 1) * one.r_e, rel=1e-12, abs=0)
        assert batch.g_m[i, 0] == pytest.approx(one.g_m, rel=1e-12, abs=0)


def test_plot_draws_the_histograms_of_the_trials(tmp_path: Path) -> None:
    """--plot writes a picture with the histograms of the figures the parts move most (the
    stage's gain among them); an existing file is kept."""
    chain = tmp_path / "g.toml"
    chain.write_text(NON_INVERTING)
    picture = tmp_path / "spread.svg"
    done = _run("spread", str(chain), "--trials", "300", "--plot", str(picture))
    assert done.returncode == 0, done.stderr
    text = picture.read_text()
    assert 'id="hist:nodes.pre.gain_db' in text
    again = _run("spread", str(chain), "--trials", "300", "--plot", str(picture))
    assert again.returncode == 2 and "--force" in again.stderr


def test_interpolated_rectifier_trough_equals_the_direct_solve() -> None:
    """A chunk of trials solves the rectifier on a grid of reservoir values and interpolates;
    each trial solved cycle by cycle on its own (a batch under the grid size) agrees to
    1 uV; the nominal reservoir gives the check's own trough."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.chainfile import load_chain
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    chain = load_chain(ROOT / "chains" / "kitchen_radio_mains.toml")
    parts, _ = chain_parts(chain)
    assert "raw.reservoir" in {p.label for p in parts}
    budget = compute(chain)
    evaluate = Evaluator(chain, tuple(parts), budget, settle(chain, "low").voltages)
    positions = np.random.default_rng(4).random((200, len(parts)))
    many = evaluate(positions)["supplies.raw.trough_v"]
    assert np.ptp(many) > 0.05  # the reservoir's 10 % moves it
    for t in (0, 57, 199):
        alone = evaluate(positions[t : t + 1])["supplies.raw.trough_v"][0]
        assert many[t] == pytest.approx(alone, abs=1e-6)
    middle = evaluate(np.full((1, len(parts)), 0.5))["supplies.raw.trough_v"][0]
    assert middle == pytest.approx(budget.supply("raw").trough_v, rel=1e-12, abs=0)


@pytest.mark.parametrize("name", sorted(p.name for p in (ROOT / "chains").glob("*.toml")))
def test_every_example_spreads_into_json_and_80_columns(name: str) -> None:
    """Every example chain: the JSON holds the contract's keys and no NaN or Infinity, the
    table reads at 80 columns in ASCII (the house rule for reports), and every number of
    its figures and every word of their names (up to eight letters, and "resistance" on
    the field recorder) stands whole on one line (a damping factor of 150,000 was folded,
    and with it "resistance")."""
    from chainbudget.chainfile import load_chain
    from chainbudget.report.plain_text import plain_text
    from chainbudget.spread.view import (
        _number,
        _place_and_figure,
        is_harmonic,
        moving,
        scaled,
        spread_json,
        spread_tables,
    )

    chain = load_chain(ROOT / "chains" / name)
    result = run_spread(chain, 64, 1)
    text = json.dumps(spread_json(result, chain.settings.title, chain.file), allow_nan=False)
    data = json.loads(text)
    for key in ("trials", "seed", "figures", "yield", "yield_by_code", "corners", "sensitivity"):
        assert key in data
    for path, (low, high) in result.corners.items():
        stats = result.stats[path]
        span = max(abs(low), abs(high), 1e-12) * 1e-9
        assert low - span <= stats["min"] <= stats["max"] <= high + span, path
    # drawn as the command draws it on a pipe (and as rich would: tests/test_plain_text.py)
    drawn = plain_text(spread_tables(result, chain.settings.title), 80)
    assert drawn is not None
    lines = drawn.splitlines()
    assert len(lines) > 20
    assert all(len(line.encode()) <= 80 for line in lines)
    # every number of the figures' table whole on its line (a column never folds one)
    for path in moving(result):
        if is_harmonic(path):
            continue
        scale, unit = scaled(path, result.stats[path]["p50"])
        for value in (result.stats[path]["p1"], *result.corners[path]):
            shown = _number(unit, value / scale)
            assert any(shown in line.split() for line in lines), (path, shown)
        # and each word of its name up to eight letters (the least the name's column is
        # left beside five columns of numbers of up to eight characters)
        for word in _place_and_figure(path)[1].split():
            if len(word) <= 8:
                assert any(word in line.split() for line in lines), (path, word)
    if name == "field_recorder_battery.toml":
        # a nine-character number (1.491e+05) widened every number column, and the names'
        # column, left the rest, folded "resistance"
        assert any("resistance" in line.split() for line in lines)


PUSH_PULL = (
    """
[chain]
title = "output pair spread"
[source]
level = "300 mV"
max_level = "1 V"
impedance = "1k"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "5 %"
beta = [0.4, 2.5]
[transistor.hot_npn]
polarity = "npn"
beta = 60
vbe = "0.7 V"
vce_sat = "0.5 V"
base_resistance = "10 ohm"
[transistor.hot_pnp]
polarity = "pnp"
beta = 45
vbe = "0.7 V"
vce_sat = "0.5 V"
base_resistance = "10 ohm"
[transistor.drive_npn]
polarity = "npn"
beta = 150
vbe = "0.65 V"
vce_sat = "0.2 V"
base_resistance = "50 ohm"
[transistor.drive_pnp]
polarity = "pnp"
beta = 120
vbe = "0.65 V"
vce_sat = "0.2 V"
base_resistance = "50 ohm"
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "22k"
ground_leg = "2k2"
opamp = "ideal"
positive = "plus"
negative = "minus"
[[stage]]
name = "output"
kind = "push_pull"
upper = "hot_npn"
lower = "hot_pnp"
driver_upper = "drive_npn"
driver_lower = "drive_pnp"
emitter_resistors = "0R47"
quiescent = "40 mA"
positive = "plus"
negative = "minus"
"""
    + IDEAL
)


def test_output_pair_betas_drawn_per_trial_equal_the_check_of_each_trial() -> None:
    """Brute force, one sample at a time, for the output pair: each trial's four betas and
    emitter resistors written into the file and checked alone give the batched figures
    (the half of lower gain chosen per trial), rtol 1e-9."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.report.json_view import budget_json
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    chain = _chain(PUSH_PULL)
    parts, held = chain_parts(chain)
    betas = {p.label for p in parts if p.is_beta}
    assert betas == {f"output.{k} beta" for k in ("upper", "lower", "driver_upper", "driver_lower")}
    assert held == []
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(9).random((6, len(parts)))
    batched = evaluate(positions)
    moved = np.ptp(batched["nodes.pre.zload_ohm"])
    assert moved > 0.0  # the pair's input impedance follows its betas
    for t in range(positions.shape[0]):
        changes = trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        budget = compute(chain.with_values(changes))
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        for path, values in batched.items():
            if _ideal_opamp_current(path):
                continue
            held = _json_figure(data, path, budget)
            assert values[t] == pytest.approx(held, rel=1e-9, abs=1e-12), path


@pytest.mark.parametrize(
    ("text", "fraction"),
    [("1 %", 0.01), ("5%", 0.05), ("+/-10 %", 0.10), ("±10 %", 0.10), ("0.1 %", 0.001)],
)
def test_the_trades_tolerance_notation(text: str, fraction: float) -> None:
    """The ways a tolerance is written on parts lists and in catalogues (common practice,
    no source) all read as the same bound, here through a stage's own override."""
    chain = _chain(
        NON_INVERTING.replace(
            'ground_leg = "1k"', f'ground_leg = "1k"\ntolerance = {{ feedback = "{text}" }}'
        )
    )
    assert chain.tolerances.bound("stage", "pre", "feedback", "resistors") == pytest.approx(
        fraction, rel=1e-12, abs=0
    )
    assert chain.tolerances.bound("stage", "pre", "ground_leg", "resistors") == 0.01


def test_beta_is_drawn_uniformly_in_log() -> None:
    """A log-uniform draw on [0.5 b, 2 b] (the contract): log(beta) is uniform, so a
    quarter of the trials fall below 0.5 b * 4**0.25 = b/sqrt(2) and half below b, within
    5 sigma of a binomial share over 40,000 draws."""
    from chainbudget.spread.parts import Part

    part = Part("stage", 0, "buffer", "transistor", "beta", 100.0, 50.0, 200.0)
    draws = part.at(np.random.default_rng(8).random(40_000))
    for below, share in (
        (100.0 / math.sqrt(2.0), 0.25),
        (100.0, 0.5),
        (200.0 / math.sqrt(2.0), 0.75),
    ):
        sigma = math.sqrt(share * (1 - share) / draws.size)
        assert abs(float(np.mean(draws < below)) - share) < 5 * sigma
    assert draws.min() >= 50.0 and draws.max() <= 200.0


TONE_AND_VOLUME = (
    """
[chain]
title = "tone and volume spread"
[source]
level = "100 mV"
max_level = "300 mV"
impedance = "2k2"
[load]
impedance = "8 ohm"
sensitivity = "86 dB"
[tolerances]
resistors = "2 %"
capacitors = "10 %"
pots = "20 %"
[[supply]]
name = "bat"
kind = "dc"
voltage = "24 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "22k"
ground_leg = "2k2"
ground_cap = "47u"
input_cap = "1u"
bias_resistor = "100k"
opamp = "ideal"
positive = "bat"
[[stage]]
name = "tone"
kind = "tone_two_band"
bass_outer = "47k"
bass_pot = "100k"
bass_cap = "47n"
bass_position = 0.5
treble_pot = "100k"
treble_cap = "2n2"
treble_wiper = "1k"
treble_position = 0.5
opamp = "ideal"
positive = "bat"
[[stage]]
name = "volume"
kind = "volume"
pot = "47k"
taper = "log"
position = 0.4
input_cap = "1u"
[[stage]]
name = "amp"
kind = "block"
gain = "26 dB"
input_impedance = "20k"
output_impedance = "0.05 ohm"
max_output = "6 V"
"""
    + IDEAL
)


def _in_db(path: str) -> bool:
    """Noise and hum (tiny voltages) are compared in dB."""
    return path.rsplit(".", 1)[-1].endswith(("_vrms", "_rthz"))


def _grid_rtol(path: str) -> float:
    """How close a batch's figure is to the same trial evaluated alone, where a rectifier's
    reservoir is drawn: a batch takes the rectifier's figures from its grid of reservoir
    values (`chainbudget.supplies.rectified.spread`), a trial alone from a direct solve.
    The voltages within 1e-8 (abs 1 nV); the currents within 1e-7, the reservoir's ripple
    current within 1e-4 (measured: 2e-5 on the practice amplifier, the solver's rms
    quadrature moving unevenly with C under pulsed loads)."""
    key = path.rsplit(".", 1)[-1]
    if key == "reservoir_ripple_a":
        return 1e-4
    if key in RECTIFIER_OWN_KEYS:
        return 1e-7
    return 1e-8


def _assert_same_figure(path: str, got: float, want: float, db_abs: float, trial: int) -> None:
    """A spread figure equal to the check's: noise and hum in dB within ``db_abs``, any
    other figure at rtol 1e-9."""
    if _in_db(path) and want > 0.0:
        assert 20 * math.log10(got) == pytest.approx(20 * math.log10(want), abs=db_abs)
    else:
        assert got == pytest.approx(want, rel=1e-9, abs=1e-12), (path, trial)


# Codes the spread draws for the chain as a whole, not at a stage: whether the hum has a
# remedy (the check names the stage of the remedy it picks) and whether a late stage sets
# the noise floor (the check names that stage); every other flag is drawn where the check
# finds it (its stage or supply).
_DRAWN_ANYWHERE = frozenset({"hum-remedy", "noise-set-late"})


def checked(chain: Chain) -> tuple[Budget, dict]:  # type: ignore[type-arg]
    """The check of ``chain`` and its JSON as a script reads it (written and read back)."""
    from chainbudget.budget import compute
    from chainbudget.report.json_view import budget_json

    budget = compute(chain)
    return budget, json.loads(json.dumps(budget_json(budget, list(budget.findings))))


def _json_figure(
    data: dict,  # type: ignore[type-arg]
    path: str,
    budget: Budget | None = None,
) -> float:
    """A spread figure's value in the check JSON (``nodes.NAME.KEY``, ``output.KEY``,
    ``supplies.RAIL.KEY``, ``noise_sources.LABEL.KEY``, ``noise.stage_shares.NAME.KEY`` or
    a top-level key such as ``hiss_spl_a_db``). The spread follows the generators the
    nominal check lists among its ten largest; a trial's check that ranks one of them lower
    does not list it in its JSON, and its value is read from that check's ``budget`` (the
    full list the JSON's ten are written from)."""
    group, *rest = path.split(".")
    if group == "output" and rest[0].endswith("_percent") and "thd_" in rest[0]:
        return float(_thd_entry(data["output"], rest[0]))
    if group == "output" and "_harmonic_" in rest[0]:
        return _harmonic_entry(data["output"], rest[0])
    if group == "output" and rest[0] == "dissipation":
        return float(data["output"]["dissipation"][rest[1]])
    if group == "nodes":
        name, key = rest
        return float(next(n for n in data["nodes"] if n["stage"] == name)[key])
    if group == "supplies":  # a split supply's negative rail holds a dot: ``rail.neg``
        return _supply_figure(data["supplies"], ".".join(rest))
    if group == "hum" and rest[0] in ("by_rail", "by_path", "harmonics"):
        return _hum_entry(data["hum"], rest)
    if group == "loop":
        name, key = rest
        return float(next(e for e in data["loop"] if e["stage"] == name)[key])
    if is_flag(path):  # a rule worked out per trial: whether the check finds its code there
        severity, code = flag_parts(path)
        where = path.rsplit(":", 1)[1]
        found = [
            f
            for f in data["findings"]
            if f["code"] == code and (code in _DRAWN_ANYWHERE or where in (f["stage"], f["supply"]))
        ]
        return float(any(f["severity"] == severity for f in found))
    if group == "noise" and rest[0] in ("stage_shares", "placement"):
        _, name, key = rest
        return float(next(s for s in data["noise"][rest[0]] if s["stage"] == name)[key])
    if group == "noise_sources":  # noise_sources.LABEL.KEY, a label holding dots
        label, key = ".".join(rest[:-1]), rest[-1]
        listed = [c for c in data["noise_sources"] if c["label"] == label]
        if listed:
            return float(listed[0][key])
        assert budget is not None and budget.noise is not None, f"{label} is not listed"
        return float(getattr(next(c for c in budget.noise.contributors if c.label == label), key))
    if group == "drive":  # drive.followers.NAME.KEY, drive.handovers.NAME.KEY
        place, name, key = rest
        return float(next(d for d in data["drive"][place] if d["stage"] == name)[key])
    return float(data[group][rest[0]] if rest else data[group])


def _supply_figure(supplies: list, rest: str) -> float:  # type: ignore[type-arg]
    """A supply's figure in the check JSON (``NAME.KEY`` or
    ``NAME.ripple_harmonics.HZ.vpk``): the supply whose name is the longest prefix of
    ``rest`` (a split supply's negative rail is ``rail.neg``)."""
    supply = max(
        (s for s in supplies if rest.startswith(s["name"] + ".")), key=lambda s: len(s["name"])
    )
    key = rest.removeprefix(supply["name"] + ".")
    if key.startswith("ripple_harmonics."):
        _, hz, entry = key.split(".")
        return float(next(h for h in supply["ripple_harmonics"] if _hz_key(h["hz"]) == hz)[entry])
    return float(supply[key])


def _hz_key(hz: float) -> str:
    """A harmonic's frequency as a spread figure's path names it (``100``, ``33_4``)."""
    return f"{hz:g}".replace(".", "_")


def _hum_entry(hum: dict, rest: list[str]) -> float:  # type: ignore[type-arg]
    """An entry of the check JSON's ``hum.by_rail`` (``by_rail.SUPPLY.KEY``), ``by_path``
    (``by_path.STAGE.PATH.KEY``) or ``harmonics`` (``harmonics.HZ.KEY``)."""
    place, *name, key = rest
    if place == "by_rail":
        return float(next(e for e in hum["by_rail"] if [e["supply"]] == name)[key])
    if place == "by_path":
        return float(next(e for e in hum["by_path"] if [e["stage"], e["path"]] == name)[key])
    return float(next(e for e in hum["harmonics"] if [_hz_key(e["hz"])] == name)[key])


def _thd_entry(output: dict, key: str) -> float:  # type: ignore[type-arg]
    """A THD figure of the check JSON's ``output.thd`` list (the reachable ones of the
    nominal level, 1 W and 1 dB below clip, in that order), found by its level:
    ``thd_one_watt_percent`` is the entry at sqrt(R_L) Vrms, ``open_loop_thd_...`` its open
    loop figure; 1 dB below clip is always reachable, so always the last entry."""
    open_loop = key.startswith("open_loop_")
    level = key.removeprefix("open_loop_").removeprefix("thd_").removesuffix("_percent")
    entry = _thd_level(output, level)
    return float(entry["open_loop_thd_percent" if open_loop else "thd_percent"])


def _thd_level(output: dict, level: str) -> dict:  # type: ignore[type-arg]
    """The check JSON's ``output.thd`` entry at a level (``nominal``, ``one_watt``,
    ``below_clip``; see `_thd_entry`)."""
    wanted = {
        "nominal": output["nominal_vpk"] / math.sqrt(2.0),
        "one_watt": math.sqrt(output["load_ohm"]),
    }
    entries = output["thd"]
    if level in wanted:
        return dict(next(e for e in entries if math.isclose(e["level_vrms"], wanted[level])))
    return dict(entries[-1])


# The check JSON's null harmonic: below this (dB re the fundamental) the check reports none;
# the spread's figure reads the floor itself there (docs/tolerances.md).
HARMONIC_FLOOR_DB = -200.0


def _harmonic_entry(output: dict, key: str) -> float:  # type: ignore[type-arg]
    """A harmonic of the check JSON's ``output.thd`` entry at a level
    (``thd_LEVEL_harmonic_N_db``: that entry's ``harmonics_db[N - 2]``), its null (none,
    below the floor) as the floor."""
    head, n = key.removesuffix("_db").rsplit("_harmonic_", 1)
    value = _thd_level(output, head.removeprefix("thd_"))["harmonics_db"][int(n) - 2]
    return HARMONIC_FLOOR_DB if value is None else float(value)


@pytest.mark.parametrize("text", [TONE_AND_VOLUME, FOLLOWER], ids=["tone-volume", "follower"])
def test_band_noise_and_power_of_each_trial_equal_the_check_of_that_trial(text: str) -> None:
    """Brute force, one sample at a time, for the figures over the band: each trial's
    parts written into the file and checked alone give the batched worst headroom over
    the band (the nominal check's worst control setting held), the output noise and SNR
    (unweighted and A-weighted; compared in dB) and the output power, rtol 1e-9. The
    tone chain's treble boost is its worst setting by a margin no trial closes (the
    spread holds the nominal check's worst setting: docs/tolerances.md)."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.report.json_view import budget_json
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    chain = _chain(text)
    parts, _ = chain_parts(chain)
    nominal = compute(chain)
    evaluate = Evaluator(chain, tuple(parts), nominal, settle(chain, "low").voltages)
    positions = np.random.default_rng(5).random((4, len(parts)))
    batched = evaluate(positions)
    out = chain.stages[-1].name
    new = [p for p in batched if p.startswith("output.")] + [
        f"nodes.{out}.{key}" for key in ("noise_vrms", "noise_a_vrms", "snr_db", "snr_a_db")
    ]
    new += [p for p in batched if p.endswith(".worst_headroom_db")]
    assert any(p.endswith(".worst_headroom_db") for p in new)
    assert "output.nominal_power_w" in new and "output.clip_power_w" in new
    # every new figure is moved by the parts (but the tone chain's clip power: its
    # amplifier block's rated swing sets it)
    fixed = (
        ("output.clip", "output.max_spl", "output.output_stage_clip")
        if text is TONE_AND_VOLUME
        else ()
    )
    for path in new:
        assert np.ptp(batched[path]) > 0.0 or path.startswith(fixed), path
    for t in range(positions.shape[0]):
        changes = trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        budget = compute(chain.with_values(changes))
        for node in nominal.nodes:  # the premise: each trial's worst setting is nominal's
            if node.worst is not None:
                assert budget.node(node.stage).worst.controls == node.worst.controls
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        for path in batched:
            if _ideal_opamp_current(path):
                continue
            held = _json_figure(data, path, budget)
            if path.endswith(("_vrms", "_rthz")):  # tiny voltages: compared in dB
                got, want = 20 * math.log10(batched[path][t]), 20 * math.log10(held)
                assert got == pytest.approx(want, rel=0, abs=1e-8), path
            else:
                assert batched[path][t] == pytest.approx(held, rel=1e-9, abs=1e-12), path


@pytest.mark.parametrize("name", sorted(p.name for p in (ROOT / "chains").glob("*.toml")))
def test_every_example_nominal_figures_are_the_check_figures(name: str) -> None:
    """Every example, every spread figure at the nominal parts equals the check JSON's
    (the worst headroom over band and controls included: the held setting and the
    check's tie-break reproduce its figure), rtol 1e-9; and every number the check JSON
    carries (top level, source, nodes, output, supplies, hum, noise, loops) is a spread
    figure or one of those no drawn part moves (`_unspread_numbers`)."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.chainfile import load_chain
    from chainbudget.report.json_view import budget_json
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    chain = load_chain(ROOT / "chains" / name)
    parts, _ = chain_parts(chain)
    budget = compute(chain)
    evaluate = Evaluator(chain, tuple(parts), budget, settle(chain, "low").voltages)
    figures = evaluate(np.full((1, len(parts)), 0.5))
    assert any(p.endswith("worst_headroom_db") for p in figures)
    assert any(p.endswith(".snr_a_db") for p in figures)
    data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
    for path, values in figures.items():
        held = _json_figure(data, path)
        assert values[0] == pytest.approx(held, rel=1e-9, abs=1e-12), path
    # and every number of the check JSON is spread, or one no drawn part moves
    assert _unspread_numbers(data, set(figures), is_reactive(chain.load)) == []


# The check JSON's numbers that no drawn part moves, each with its reason (docs/tolerances.md
# lists them): the file's settings, source and ratings, and what each supply kind keeps at
# the nominal check's.
SETTINGS = {"reference_hz", "band_hz", "ambient_degc", "noise_figure_hz"}
SOURCE_AS_FILED = {"level_vrms", "max_level_vrms", "impedance_ohm", "capacitance_f"}
SOURCE_AS_FILED |= {"inductance_h"}
# the source as the chain's input loads it: left out where the input has no DC path
SOURCE_AS_LOADED = {"input_impedance_ohm", "loss_db", "worst_loss_db", "worst_loss_hz"}
NODE_AS_FILED = {"drive_limit_a", "position", "bass_position", "treble_position"}
OUTPUT_AS_FILED = {"load_ohm", "output_cap_f"}
# an output capacitor's corner into a loudspeaker's impedance curve: the nominal check's
REACTIVE_CORNER = {"output_cap_corner_hz"}
# undefined in a trial that runs away: only its two codes are spread
OUTPUT_NOT_A_FIGURE = {"quiescent_hot_a"}
NOISE_AS_FILED = {"source_resistance_ohm"}
SUPPLY_NOMINAL = {
    "dc": {"crest_v", "output_max_v", "ripple_vpp", "capacity_ah", "runtime_idle_h"}
    | {"runtime_nominal_h", "peak_current_a"},
    "regulator": {"dropout_v", "own_current_a", "max_input_v", "target_v", "max_junction_degc"}
    | {"min_load_a", "theta_k_per_w"},
    "rectified": {"crest_v", "output_max_v", "inrush_a", "dc_load_a", "pulses_hz", "rated_a"}
    | {"open_circuit_vrms", "transformer_regulation", "winding_resistance_ohm"}
    | {"reservoir_ripple_rating_a"},
    "rc_filter": set(),
    "divider": set(),
}


def _unspread_numbers(data: dict, figures: set[str], reactive_load: bool) -> list[str]:  # type: ignore[type-arg]
    """The check JSON's numbers (top level, source, nodes, output, supplies, hum, noise,
    loops) that are neither a spread figure nor among those no drawn part moves. A supply
    of which nothing is spread (no part of it or above it drawn) and the hum of a chain with
    no ripple (none spread) are left out whole."""

    def number(value: object) -> bool:
        return isinstance(value, (int, float)) and not isinstance(value, bool)

    def missing(prefix: str, entry: dict, exempt: set[str]) -> list[str]:  # type: ignore[type-arg]
        return [
            prefix + key
            for key, value in entry.items()
            if number(value) and key not in exempt and prefix + key not in figures
        ]

    found = missing("", data, SETTINGS)
    loaded = any(f"source.{key}" in figures for key in SOURCE_AS_LOADED)
    found += missing(
        "source.", data["source"], SOURCE_AS_FILED | (set() if loaded else SOURCE_AS_LOADED)
    )
    hum = "hum.output_vrms" in figures
    for node in data["nodes"]:
        found += missing(
            f"nodes.{node['stage']}.", node, NODE_AS_FILED | (set() if hum else {"hum_vrms"})
        )
    corner = REACTIVE_CORNER if reactive_load else set()
    found += missing("output.", data["output"], OUTPUT_AS_FILED | OUTPUT_NOT_A_FIGURE | corner)
    for supply in data["supplies"]:
        prefix = f"supplies.{supply['name']}."
        if any(path.startswith(prefix) for path in figures):
            found += missing(prefix, supply, SUPPLY_NOMINAL[supply["kind"]])
    if hum:
        found += missing("hum.", data["hum"], set())
    found += missing("noise.", data["noise"] or {}, NOISE_AS_FILED)
    for loop in data.get("loop") or []:
        found += missing(f"loop.{loop['stage']}.", loop, set())
    return found


# The tone chain tuned so that its tone stage's worst case over band and controls, the
# output's SNR and the hiss at the loudspeaker each sit within a fraction of a dB of their
# rules' limits (0 dB, 60 dB, 20 dB SPL(A)): the tolerances carry trials across each.
ON_THE_EDGE = TONE_AND_VOLUME.replace(
    'level = "100 mV"\nmax_level = "300 mV"', 'level = "50 mV"\nmax_level = "82 mV"'
).replace('sensitivity = "86 dB"', 'sensitivity = "97 dB"').replace(
    'opamp = "ideal"\npositive = "bat"\n[[stage]]\nname = "tone"',
    'opamp = "hissy"\npositive = "bat"\n[[stage]]\nname = "tone"',
    1,
) + IDEAL.replace("[opamp.ideal]", "[opamp.hissy]").replace(
    'noise_voltage = "1 nV/rtHz"', 'noise_voltage = "345.9 nV/rtHz"'
)


def test_per_trial_findings_over_band_and_noise_are_the_check_findings_of_each_trial() -> None:
    """Brute force: for each of a dozen trials, whether the spread counts it as drawing
    clip-worst-case, snr-low or hiss-audible is whether the check of that trial, written
    into the file, finds it; each code is drawn by some trials and not by others."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.spread.evaluate import Evaluator, failing
    from chainbudget.spread.parts import chain_parts

    chain = _chain(ON_THE_EDGE)
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(3).random((12, len(parts)))
    figures = evaluate(positions)
    masks = failing(evaluate.thresholds(figures), figures)
    codes = ("clip-worst-case", "snr-low", "hiss-audible")
    for code in codes:
        assert 0 < masks[code].sum() < len(positions), code
    for t in range(len(positions)):
        changes = {
            f"{part.owner}.{part.key}": f"{float(value[0])!r} {_si(part)}"
            for part, value in zip(parts, evaluate.values(positions[t : t + 1]), strict=True)
        }
        found = {f.code for f in compute(chain.with_values(changes)).findings}
        for code in codes:
            assert bool(masks[code][t]) == (code in found), (code, t)


# The output pair inside the op-amp's loop (its feedback taken from the load side).
PUSH_PULL_IN_LOOP = PUSH_PULL.replace(
    'ground_leg = "2k2"\n', 'ground_leg = "2k2"\nfeedback_from = "output"\n', 1
)


@pytest.mark.parametrize("text", [PUSH_PULL, PUSH_PULL_IN_LOOP], ids=["open", "in-loop"])
def test_thd_of_each_trial_equals_the_check_of_that_trial(text: str) -> None:
    """Brute force, one sample at a time: each trial's emitter resistors and four betas
    written into the file (`Chain.with_values`) and checked alone give the batched THD at
    each level the check reports (nominal, 1 W, 1 dB below clip), rtol 1e-9; inside the
    loop the closed-loop THD (each trial's own return difference) and the open loop's.
    The parts move every THD figure."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.report.json_view import budget_json
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    chain = _chain(text)
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(11).random((5, len(parts)))
    batched = evaluate(positions)
    levels = ("nominal", "one_watt", "below_clip")
    paths = [f"output.thd_{level}_percent" for level in levels]
    if text is PUSH_PULL_IN_LOOP:
        paths += [f"output.open_loop_thd_{level}_percent" for level in levels]
    # the harmonics at each level beside them: tests/test_spread_thd_loops.py
    assert sorted(p for p in batched if "thd" in p and "_harmonic_" not in p) == sorted(paths)
    for path in paths:
        assert np.ptp(batched[path]) > 0.01 * np.mean(batched[path]), path
    for t in range(positions.shape[0]):
        changes = trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        budget = compute(chain.with_values(changes))
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        assert len(data["output"]["thd"]) == 3  # every level within reach in each trial
        for path in paths:
            held = _json_figure(data, path)
            assert batched[path][t] == pytest.approx(held, rel=1e-9, abs=0), (path, t)


@pytest.mark.parametrize(
    ("path", "unit"),
    [
        ("nodes.pre.noise_density_v_rthz", "V/rtHz"),
        ("nodes.pre.phase_margin_deg", "deg"),
        ("output.junction_degc", "degC"),
        ("ein_a_dbu", "dBu"),
        ("nodes.pre.noise_vrms", "Vrms"),
        ("nodes.pre.dc_v", "V"),
        # an entry of a list, its key a unit alone
        ("hum.by_path.pre.V+ pin (PSRR).vrms", "Vrms"),
        ("hum.harmonics.100.a_vrms", "Vrms"),
        ("supplies.raw.ripple_harmonics.100.vpk", "Vpk"),
    ],
)
def test_the_spread_table_names_each_figure_s_unit_from_its_check_json_suffix(
    path: str, unit: str
) -> None:
    from chainbudget.spread.view import _place_and_figure, _unit, scaled

    assert _unit(path) == unit
    place, figure = _place_and_figure(path)
    assert figure and not place.startswith("hum.hum")  # each row names its place once
    # decibels, angles and temperatures take no SI prefix
    assert scaled(path, 1234.0)[1] == (unit if unit in ("dBu", "deg", "degC") else "k" + unit)
