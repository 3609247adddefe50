"""The spread of an RC filter's and a divider's own parts (their resistors and capacitor
drawn within their tolerances), each check against a source outside the model: every
trial written into the chain file and checked on its own (brute force), and the
first-order RC low-pass and the divider's Thevenin equivalent in closed form."""

from __future__ import annotations

import json
import math
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from numpy.typing import NDArray
from test_spread import _assert_same_figure, _hz_key, _json_figure

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import Chain, load_chain, loads_chain
from chainbudget.report.json_view import budget_json
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.flags import flag_key, is_flag
from chainbudget.spread.parts import Part, chain_parts
from chainbudget.spread.run import run_spread

ROOT = Path(__file__).resolve().parents[1]

# A rectified rail, an rc_filter off it ("quiet": 5 % resistor, 20 % capacitor), a fixed
# regulator below the filter ("clean"), a divider with its capacitor off the filter ("mid",
# 5 % resistors, 20 % capacitor) biasing "pre", and a divider without one ("ref") off a
# bench supply biasing "line". Every stage is chosen so that its current does not move with
# the drawn parts (the spread holds the loads at the nominal check's; the check of a trial
# settles them again): "pre" and "line" run from the bench supply and swing down to their
# bias points' side (their clip follows the dividers' drawn troughs, their load lands on the
# stiff bench supply), "filtered" on the filter is biased from a fixed 5 V and clips on that
# side (its output's pulses reach the filter, fixed), the blocks draw a fixed current. The
# hum reaches the output through "pre"'s bias point (the divider's ripple), the op-amps'
# supply pins and the blocks' supply rejection; the bench supply's and "ref"'s paths carry
# none (no mains ripple: they need no remedy, `chainbudget.spread.hum.remedy_reach_of`).
FILTERS = """
[chain]
title = "filters and dividers drawn"
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
[[supply]]
name = "quiet"
kind = "rc_filter"
from = "raw"
resistance = "47 ohm"
capacitance = "470 uF"
tolerance = { resistance = "5 %", capacitance = "20 %" }
[[supply]]
name = "clean"
kind = "regulator"
from = "quiet"
output = "9 V"
dropout = "2 V"
ripple_rejection = "60 dB"
ripple_rejection_corner = "300 Hz"
[[supply]]
name = "mid"
kind = "divider"
from = "quiet"
upper = "22k"
lower = "22k"
capacitance = "10 uF"
tolerance = { upper = "5 %", lower = "5 %", capacitance = "20 %" }
[[supply]]
name = "bench"
kind = "dc"
voltage = "24 V"
[[supply]]
name = "ref"
kind = "divider"
from = "bench"
upper = "27k"
lower = "22k"
tolerance = { upper = "5 %", lower = "5 %" }
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "inverting"
input = "10k"
feedback = "47k"
input_cap = "2u2"
opamp = "leaky"
positive = "bench"
bias = "mid"
[[stage]]
name = "filtered"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
ground_cap = "100u"
input_cap = "1u"
bias_resistor = "100k"
opamp = "leaky"
positive = "quiet"
bias = "5 V"
[[stage]]
name = "regulated"
kind = "block"
gain = "0 dB"
input_impedance = "10k"
output_impedance = "100 ohm"
max_output = "3 V"
supply_current = "10 mA"
psrr = "40 dB"
positive = "clean"
[[stage]]
name = "line"
kind = "opamp_gain"
topology = "inverting"
input = "10k"
feedback = "10k"
input_cap = "1u"
opamp = "leaky"
positive = "bench"
bias = "ref"
[[stage]]
name = "amp"
kind = "block"
gain = "20 dB"
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

# The same with the reservoir drawn too (20 %): the filter follows its parent's trough and
# ripple per trial on top of its own parts.
FILTERS_ON_A_DRAWN_RESERVOIR = FILTERS.replace(
    'rated_current = "0.5 A"', 'rated_current = "0.5 A"\ntolerance = { reservoir = "20 %" }'
)

# The divider off the regulator instead: a stiff rail with ripple, where the divider's
# trough (the ripple smoothed about its mean) lies above its unloaded output, which the
# check's settled rails never exceed (`chainbudget.budget.supplies.settle`): the bias point
# "pre" takes is held there in every trial, the ratio's draw moving it.
DIVIDER_ON_A_REGULATOR = FILTERS.replace(
    'name = "mid"\nkind = "divider"\nfrom = "quiet"',
    'name = "mid"\nkind = "divider"\nfrom = "clean"',
)

# The filters' and dividers' own figures (the check JSON's keys), and what follows them:
# the regulator below the filter, the stages the dividers bias, the hum through them.
OWN = {
    "quiet": (
        "trough_v",
        "vout_v",
        "ripple_vpp",
        "ripple_harmonics.100.vpk",
        "ripple_harmonics.300.vpk",
        "drop_v",
        "crest_drop_v",
        "corner_hz",
        "ripple_attenuation_db",
        "resistor_w",
    ),
    "mid": (
        "trough_v",
        "vout_v",
        "ripple_vpp",
        "ripple_harmonics.100.vpk",
        "ratio",
        "thevenin_ohm",
        "standing_a",
        "corner_hz",
        "ripple_attenuation_db",
    ),
    "ref": ("trough_v", "vout_v", "ratio", "thevenin_ohm", "standing_a"),
}
FOLLOWING = (
    "supplies.clean.dropout_margin_v",
    "supplies.clean.ripple_harmonics.100.vpk",
    "nodes.pre.dc_v",
    "nodes.pre.clip_vpk",
    "nodes.line.dc_v",
    "nodes.line.clip_vpk",
    "hum.by_path.pre.bias at + input.a_vrms",
    "hum.by_path.filtered.V+ pin (PSRR).a_vrms",
    "hum.output_a_vrms",
)


def _evaluator(chain: Chain) -> tuple[list[Part], Evaluator]:
    parts, _ = chain_parts(chain)
    return parts, Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


def _written(text: str, edits: dict[tuple[str, str], str]) -> str:
    """The chain file's text with each (supply, field)'s line rewritten to ``edits``'s
    text: the trial's values written into the file as a designer would write them."""
    blocks = re.split(r"(?m)^(?=\[)", text)
    done = 0
    for i, block in enumerate(blocks):
        name = re.search(r'(?m)^name = "([^"]*)"', block)
        if not block.startswith("[[supply]]") or name is None:
            continue
        for (owner, key), value in edits.items():
            if owner == name.group(1):
                block, count = re.subn(rf'(?m)^{key} = "[^"]*"', f'{key} = "{value}"', block)
                done += count
        blocks[i] = block
    assert done == len(edits)
    return "".join(blocks)


def _trial_text(text: str, parts: list[Part], values: list[NDArray[np.float64]], t: int) -> str:
    unit = {"capacitors": "F", "resistors": "ohm"}
    return _written(
        text,
        {
            (p.owner, p.key): f"{float(v[t])!r} {unit[p.part_class]}"
            for p, v in zip(parts, values, strict=True)
        },
    )


@pytest.mark.parametrize(
    "text",
    [FILTERS, FILTERS_ON_A_DRAWN_RESERVOIR, DIVIDER_ON_A_REGULATOR],
    ids=["filter", "on-a-drawn-reservoir", "divider-on-a-regulator"],
)
def test_every_figure_of_each_trial_equals_the_check_of_that_trial_written_into_the_file(
    text: str, tmp_path: Path
) -> None:
    """Brute force, one trial at a time: eight trials of the filter's and the dividers'
    parts (and of the reservoir in one case), each written into the chain file and checked
    alone (`load_chain`, `compute`, the check JSON), give every batched figure at rtol 1e-9
    (noise and hum within 1e-9 dB): the filter's and the dividers' own figures, their
    troughs, means, ripple and its spectrum, and what follows them (the regulator below the
    filter, the stages the dividers bias, the hum). The batch of eight solves the rectifier
    directly (no interpolation). The divider "mid" is drawn with upper + lower at its
    nominal sum, so that its standing current, and with it the load the check of a trial
    settles, is the nominal check's (the spread holds the loads); "ref", on a stiff bench
    supply, is drawn freely. Below a drawn reservoir the means follow the rectifier's mean
    per trial."""
    chain = loads_chain(text, "filters.toml")
    parts, evaluate = _evaluator(chain)
    labels = [p.label for p in parts]
    reservoir = "raw.reservoir" in labels
    assert set(labels) - {"raw.reservoir"} == {
        "quiet.resistance",
        "quiet.capacitance",
        "mid.upper",
        "mid.lower",
        "mid.capacitance",
        "ref.upper",
        "ref.lower",
    }
    positions = np.random.default_rng(20).random((8, len(parts)))
    positions[:, labels.index("mid.lower")] = 1.0 - positions[:, labels.index("mid.upper")]
    batched = evaluate(positions)
    values = evaluate.values(positions)
    means = ("supplies.quiet.vout_v", "supplies.mid.vout_v", "supplies.mid.standing_a")
    # off the regulator, "mid"'s standing current is its stiff parent over the nominal sum
    still = {"supplies.mid.standing_a"} if text is DIVIDER_ON_A_REGULATOR else set()
    for name, keys in OWN.items():
        for key in keys:
            path = f"supplies.{name}.{key}"
            # below a drawn reservoir the means follow the rectifier's mean per trial
            moved = reservoir and path in means
            assert (np.ptp(batched[path]) == 0.0) == (path in still and not moved), path
    for path in FOLLOWING:
        assert np.ptp(batched[path]) > 0.0, path
    # the drawn capacitor reaches the drop at the load's crest, not only the resistor
    per_ohm = batched["supplies.quiet.crest_drop_v"] / values[labels.index("quiet.resistance")]
    assert np.ptp(per_ohm) > 1e-6 * np.mean(per_ohm)
    figures = [p for p in batched if not is_flag(p)]
    for t in range(len(positions)):
        file = tmp_path / f"trial{t}.toml"
        file.write_text(_trial_text(text, parts, values, t))
        budget = compute(load_chain(file))
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        for path in figures:
            want, got = _json_figure(data, path, budget), float(batched[path][t])
            _assert_same_figure(path, got, want, 1e-9, t)


# A filter and a divider with their capacitors off a rectified rail whose reservoir is held:
# the ripple they are given moves only with the divider's standing current (by about
# 1e-4), so that what they pass on is their own networks' doing.
LOWPASS = """
[chain]
title = "first-order low-pass"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "10k"
[tolerances]
resistors = "5 %"
capacitors = "20 %"
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
tolerance = { reservoir = "0 %" }
[[supply]]
name = "quiet"
kind = "rc_filter"
from = "raw"
resistance = "47 ohm"
capacitance = "470 uF"
[[supply]]
name = "mid"
kind = "divider"
from = "raw"
upper = "22k"
lower = "10k"
capacitance = "10 uF"
[[stage]]
name = "amp"
kind = "block"
gain = "20 dB"
input_impedance = "20k"
output_impedance = "100 ohm"
supply_current = "0.2 A"
positive = "quiet"
bias = "mid"
"""
RIPPLE_HZ = 100.0  # a bridge on 50 Hz mains: the ripple's fundamental


def _lowpass(hz: float | NDArray[np.float64], r: NDArray[np.float64], c: NDArray[np.float64]):  # noqa: ANN202
    """|1/(1 + j 2 pi f R C)| = 1/sqrt(1 + (2 pi f R C)^2), the first-order RC low-pass
    (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 1.7; from memory)."""
    return 1.0 / np.sqrt(1.0 + (2.0 * math.pi * hz * r * c) ** 2)


def test_each_trial_passes_the_ripple_as_the_first_order_lowpass_and_the_thevenin_divider() -> None:
    """Per trial, against the closed forms written here: the filter's ripple attenuation at
    the 100 Hz fundamental is 10 log10(1 + (2 pi f R C)^2) dB, its corner 1/(2 pi R C), and
    each harmonic it passes its parent's times 1/sqrt(1 + (2 pi h R C)^2) (the first-order
    RC low-pass, Horowitz & Hill 3rd ed. sec. 1.7); the divider's ratio L/(U + L), its
    source resistance U L/(U + L) (Thevenin's theorem, Horowitz & Hill 3rd ed. ch. 1, from
    memory) and each harmonic its parent's times k/sqrt(1 + (2 pi h R_th C)^2): rtol 1e-12
    (the harmonics 1e-10: a complex product's magnitude against the magnitudes'
    product). The parent's harmonics are its own per trial: its reservoir is held, but
    the divider's drawn legs move the standing current it carries, and with it its ripple
    by about 1e-4."""
    chain = loads_chain(LOWPASS, "lowpass.toml")
    parts, evaluate = _evaluator(chain)
    labels = [p.label for p in parts]
    positions = np.random.default_rng(5).random((64, len(parts)))
    batched = evaluate(positions)
    drawn = dict(zip(labels, evaluate.values(positions), strict=True))
    r, c = drawn["quiet.resistance"], drawn["quiet.capacitance"]
    upper, lower, c_mid = drawn["mid.upper"], drawn["mid.lower"], drawn["mid.capacitance"]
    ratio, thevenin = lower / (upper + lower), upper * lower / (upper + lower)
    got = batched["supplies.quiet.ripple_attenuation_db"]
    assert got == pytest.approx(-20.0 * np.log10(_lowpass(RIPPLE_HZ, r, c)), rel=1e-12, abs=0)
    got = batched["supplies.quiet.corner_hz"]
    assert got == pytest.approx(1.0 / (2.0 * math.pi * r * c), rel=1e-12, abs=0)
    assert batched["supplies.mid.ratio"] == pytest.approx(ratio, rel=1e-12, abs=0)
    assert batched["supplies.mid.thevenin_ohm"] == pytest.approx(thevenin, rel=1e-12, abs=0)
    got = batched["supplies.mid.ripple_attenuation_db"]
    want = -20.0 * np.log10(_lowpass(RIPPLE_HZ, thevenin, c_mid))
    assert got == pytest.approx(want, rel=1e-12, abs=0)
    parent = compute(chain).supply("raw").ripple_harmonics
    assert len(parent) > 3
    for hz, _ in parent:
        key = f"ripple_harmonics.{_hz_key(hz)}.vpk"
        vpk = batched[f"supplies.raw.{key}"]
        got = batched[f"supplies.quiet.{key}"]
        assert got == pytest.approx(vpk * _lowpass(hz, r, c), rel=1e-10, abs=0), hz
        got = batched[f"supplies.mid.{key}"]
        want = vpk * ratio * _lowpass(hz, thevenin, c_mid)
        assert got == pytest.approx(want, rel=1e-10, abs=0), hz


def test_corner_worst_case_of_the_ripple_is_the_analytic_bound() -> None:
    """The corner worst case against the closed forms' bounds: the filter's attenuation
    10 log10(1 + (2 pi f R C)^2) rises with R and with C, so its least is at the low R and
    the low C and its most at the high ones; the divider's fundamental, k/sqrt(1 + (2 pi f
    R_th C)^2) = 1/sqrt((U/L + 1)^2 + (2 pi f U C)^2) times its parent's, falls with U and C
    and rises with L (the first-order low-pass, Horowitz & Hill 3rd ed. sec. 1.7, with the
    divider's Thevenin equivalent): rtol 1e-12. The divider's: rtol 1e-8, its parent's
    fundamental taken from the check of the chain with the vertex's legs written in (they
    move the standing current the rectifier carries, and its ripple by about 1e-4; the
    spread takes the rectifier under a moved load by its second-order expansion, measured
    3e-9 off the check at the vertex, chainbudget/supplies/rectified/spread.py). Its
    lower leg moves its own fundamental by as little (the capacitor's reactance, not the
    lower leg, sets it), so the vertex is the further of the lower leg's two bounds. The
    Monte Carlo's trials inside both."""
    chain = loads_chain(LOWPASS, "lowpass.toml")
    result = run_spread(chain, 2000, 3)
    r_lo, r_hi, c_lo, c_hi = 47 * 0.95, 47 * 1.05, 470e-6 * 0.8, 470e-6 * 1.2

    def attenuation_db(r: float, c: float) -> float:
        return 10.0 * math.log10(1.0 + (2.0 * math.pi * RIPPLE_HZ * r * c) ** 2)

    path = "supplies.quiet.ripple_attenuation_db"
    low, high = result.corners[path]
    assert low == pytest.approx(attenuation_db(r_lo, c_lo), rel=1e-12, abs=0)
    assert high == pytest.approx(attenuation_db(r_hi, c_hi), rel=1e-12, abs=0)
    assert low <= result.stats[path]["min"] <= result.stats[path]["max"] <= high

    def passed(u: float, lower: float, c: float) -> float:
        legs = {("mid", "upper"): f"{u!r} ohm", ("mid", "lower"): f"{lower!r} ohm"}
        parent = compute(loads_chain(_written(LOWPASS, legs), "vertex.toml")).supply("raw")
        w = 2.0 * math.pi * RIPPLE_HZ
        fundamental = abs(parent.ripple_harmonics[0][1])
        return fundamental / math.sqrt((u / lower + 1.0) ** 2 + (w * u * c) ** 2)

    path = "supplies.mid.ripple_harmonics.100.vpk"
    low, high = result.corners[path]
    legs = (10e3 * 0.95, 10e3 * 1.05)
    least = min(passed(22e3 * 1.05, lower, 10e-6 * 1.2) for lower in legs)
    most = max(passed(22e3 * 0.95, lower, 10e-6 * 0.8) for lower in legs)
    assert low == pytest.approx(least, rel=1e-8, abs=0)
    assert high == pytest.approx(most, rel=1e-8, abs=0)
    assert low <= result.stats[path]["min"] <= result.stats[path]["max"] <= high


def test_the_filters_and_dividers_parts_are_drawn_not_held(tmp_path: Path) -> None:
    """The contract (chain-format.md, "Extensions: Tolerances") makes resistors and
    capacitors toleranced part classes: an rc_filter's resistance and capacitance and a
    divider's upper, lower and capacitance are drawn, and the held list names none of them
    (the practice amplifier's, whose centre-tapped reservoir is still held, and, through the
    real command's JSON, a chain of a filter and a divider)."""
    ours = {"pre.resistance", "pre.capacitance", "half.upper", "half.lower", "half.capacitance"}
    drawn, held = chain_parts(load_chain(ROOT / "chains" / "practice_amp_mains.toml"))
    assert ours <= {p.label for p in drawn}
    assert not ours & {h.label for h in held}
    file = tmp_path / "lowpass.toml"
    file.write_text(LOWPASS)
    run = subprocess.run(
        [sys.executable, "-m", "chainbudget", "spread", str(file), "--trials", "4"]
        + ["--format", "json"],
        capture_output=True,
        text=True,
        timeout=600,
        check=False,
    )
    assert run.returncode == 0, run.stderr
    data = json.loads(run.stdout)
    assert data["held"] == []
    assert {p["part"] for p in data["parts"]} >= {
        "quiet.resistance",
        "quiet.capacitance",
        "mid.upper",
        "mid.lower",
        "mid.capacitance",
    }


# A stiff 12 V battery (10 V at its low end) under an rc_filter of 50 ohm (10 %) feeding a
# block that draws a steady 0.2 A: the filter's drop R I takes the whole of the 10 V at
# R = 50 ohm (Ohm's law), inside the drawn 45 to 55 ohm.
FILTER_AT_THE_EDGE = """
[chain]
title = "a filter at the edge of its load"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "10k"
[tolerances]
resistors = "0 %"
capacitors = "0 %"
[[supply]]
name = "cell"
kind = "dc"
voltage = "12 V"
min_voltage = "10 V"
[[supply]]
name = "quiet"
kind = "rc_filter"
from = "cell"
resistance = "50 ohm"
capacitance = "100 uF"
tolerance = { resistance = "10 %" }
[[stage]]
name = "pre"
kind = "block"
gain = "0 dB"
input_impedance = "20k"
output_impedance = "100 ohm"
supply_current = "0.2 A"
positive = "quiet"
"""


def test_an_rc_filter_that_cannot_hold_its_load_collapses_in_the_trials_the_check_finds() -> None:
    """The ``supply-collapse`` flag of an rc_filter per trial: with a steady 0.2 A through
    R from a 10 V low end, the trough 10 V - 0.2 A R (Ohm's law) is none from R = 50 ohm
    up, so the trials drawn above the middle of 45 to 55 ohm collapse and those below do
    not; each trial's flag also equals the check of that trial written into the file, and
    the real command's yield for the code is the share of trials drawn below 50 ohm."""
    chain = loads_chain(FILTER_AT_THE_EDGE, "edge.toml")
    parts, evaluate = _evaluator(chain)
    assert [p.label for p in parts] == ["quiet.resistance"]
    positions = np.array([[0.1], [0.3], [0.45], [0.55], [0.7], [0.9]])
    batched = evaluate(positions, flags=True)
    flag = batched[flag_key("error", "supply-collapse", "quiet")]
    r = evaluate.values(positions)[0]
    assert flag.tolist() == (10.0 - 0.2 * r <= 0.0).astype(float).tolist()
    assert flag.tolist() == [0.0, 0.0, 0.0, 1.0, 1.0, 1.0]
    for t in range(len(positions)):
        written = _trial_text(FILTER_AT_THE_EDGE, parts, evaluate.values(positions), t)
        budget = compute(loads_chain(written, "trial.toml"))
        found = any(f.code == "supply-collapse" for f in budget.findings)
        assert found == bool(flag[t]), t
    result = run_spread(chain, trials=400, seed=3)
    share = result.yield_by_code["supply-collapse"]
    # each trial holds where its drop R I stays under the 10 V; R uniform in 45..55 ohm:
    # about half of them (the sampling error of a share at 400 trials is 0.025)
    held = np.count_nonzero(result.samples["supplies.quiet.drop_v"] < 10.0)
    assert share == pytest.approx(held / 400, rel=1e-12)
    assert share == pytest.approx(0.5, abs=0.1)
