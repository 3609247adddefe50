"""The spread of a battery (``dc`` supply): its internal resistance drawn, its trough, sag
and mean per trial, and the supplies and stages below it following them. Checked by brute
force (each trial written into the chain file's text and checked alone) and against the
Thevenin source's terminal voltage."""

from __future__ import annotations

import json
import re
import tomllib
from typing import Any

import numpy as np
import pytest
from test_spread import _assert_same_figure, _json_figure

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import parse_chain
from chainbudget.report.json_view import budget_json
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.flags import flag_key, is_flag
from chainbudget.spread.parts import chain_parts
from chainbudget.spread.run import run_spread

# A battery with a reservoir across its terminals, its internal resistance the only part
# drawn (20 %), feeding: a current-biased follower straight off it (its swing limit
# follows the battery's trough; its load, the bias current, does not), an rc_filter with
# an op-amp on it whose output current, not its rail, sets its clip (so its half-sine
# pulses at clip, which the battery's sag at the crest takes through the reservoir, do not
# move with the rail), and a fixed regulator with no stage on it, set so that its dropout
# margin crosses zero within the resistance's range (its load, its own quiescent current,
# does not move out of regulation). No load moves with the resistance, so the check of a
# trial settles its power tree on the loads the spread holds (the nominal check's).
RESISTANCE = "4.7 ohm"
BATTERY = f"""
[chain]
title = "a battery under pulses"
[source]
level = "100 mV"
max_level = "1 V"
impedance = "1k"
[load]
impedance = "600 ohm"
[tolerances]
resistors = "0 %"
capacitors = "0 %"
beta = [1, 1]
[[supply]]
name = "cell"
kind = "dc"
voltage = "12 V"
min_voltage = "10 V"
max_voltage = "13 V"
resistance = "{RESISTANCE}"
reservoir = "470 uF"
capacity = "2 Ah"
tolerance = {{ resistance = "20 %" }}
[[supply]]
name = "quiet"
kind = "rc_filter"
from = "cell"
resistance = "10 ohm"
capacitance = "1000 uF"
[[supply]]
name = "held"
kind = "regulator"
from = "cell"
output = "9 V"
dropout = "REGULATOR_DROPOUT"
quiescent = "5 mA"
[[stage]]
name = "buffer"
kind = "follower"
transistor = "small_npn"
bias = "current"
current = "50 mA"
compliance = "0.5 V"
input_cap = "10 uF"
bias_resistor = "1k"
output_cap = "470 uF"
positive = "cell"
[[stage]]
name = "line"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
ground_cap = "100 uF"
input_cap = "10 uF"
bias_resistor = "47k"
opamp = "leaky"
positive = "quiet"
[opamp.leaky]
gbw = "10 MHz"
slew_rate = "10 V/us"
noise_voltage = "10 nV/rtHz"
noise_current = "0.1 pA/rtHz"
open_loop_gain = "110 dB"
output_resistance = "50 ohm"
swing_margin = "1.5 V"
output_current = "4 mA"
supply_current = "2 mA"
"""

#: The battery's own figures the resistance moves, and what follows its trough and mean.
OWN = ("resistance_ohm", "sag_v", "trough_v", "output_min_v", "vout_v", "mean_v")
FOLLOWING = (
    "supplies.quiet.trough_v",
    "supplies.quiet.vout_v",
    "supplies.held.dropout_margin_v",
    "nodes.buffer.clip_vpk",
    "nodes.buffer.headroom_db",
)


def _text(dropout: str) -> str:
    return BATTERY.replace("REGULATOR_DROPOUT", dropout)


def _evaluator(text: str) -> tuple[list[Any], Evaluator]:
    chain = parse_chain(tomllib.loads(text), "battery.toml")
    parts, _ = chain_parts(chain)
    return parts, Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


def _checked_alone(text: str, resistance_ohm: float) -> dict[str, Any]:
    """The check JSON of one trial: its resistance written into the file's text, the file
    parsed and checked on its own."""
    written, count = re.subn(
        rf'(?m)^resistance = "{RESISTANCE}"$', f'resistance = "{resistance_ohm!r} ohm"', text
    )
    assert count == 1
    budget = compute(parse_chain(tomllib.loads(written), "trial.toml"))
    return dict(json.loads(json.dumps(budget_json(budget, list(budget.findings)))))


def test_the_battery_and_what_it_feeds_equal_the_check_of_each_trial() -> None:
    """Brute force, one trial at a time: eight trials of the drawn resistance (4.7 ohm,
    20 %), each written into the chain file's text and checked on its own, give every
    batched figure at rtol 1e-9 (noise in dB, 1e-9 dB): the battery's resistance, sag,
    trough and mean, the filter's trough and mean below it, the regulator's dropout margin,
    the follower's clip and headroom on the battery's trough; and the flags of
    ``supply-collapse`` (none) and ``regulator-dropout`` (some trials) as the check of the
    trial finds them. The regulator's dropout is set from the nominal check so that its
    margin is zero at the nominal resistance: the trials on either side of it drop out or
    do not."""
    nominal = compute(parse_chain(tomllib.loads(_text("0.5 V")), "battery.toml"))
    dropout = nominal.supply("cell").trough_v - 9.0
    text = _text(f"{dropout!r} V")
    parts, evaluate = _evaluator(text)
    assert [p.label for p in parts] == ["cell.resistance"]
    positions = np.linspace(0.05, 0.95, 8)[:, None]
    batched = evaluate(positions, flags=True)
    for key in OWN:
        assert np.ptp(batched[f"supplies.cell.{key}"]) > 0.0, key
    for path in FOLLOWING:
        assert np.ptp(batched[path]) > 0.0, path
    dropped = batched["supplies.held.dropout_margin_v"] < 0.0
    assert 0 < np.count_nonzero(dropped) < len(positions)
    collapse = flag_key("error", "supply-collapse", "cell")
    assert collapse in batched and not np.any(batched[collapse])
    resistance = evaluate.values(positions)[0]
    for t in range(len(positions)):
        data = _checked_alone(text, float(resistance[t]))
        codes = {f["code"] for f in data["findings"]}
        assert ("regulator-dropout" in codes) == bool(dropped[t]), t
        for path, values in batched.items():
            want, got = _json_figure(data, path), float(values[t])
            if is_flag(path):
                assert got == want, (path, t)
            else:
                _assert_same_figure(path, got, want, 1e-9, t)


def test_a_battery_that_cannot_hold_its_load_collapses_in_the_trials_the_check_finds() -> None:
    """The ``supply-collapse`` flag per trial against the check of each trial: a battery
    whose sag at the crest is the whole of its low end at a resistance inside the drawn
    range (a steady 0.2 A from a block; 10 V low end, so the collapse sets in at 50 ohm, the
    part drawn 45 to 55 ohm) draws the error in exactly the trials where the check of that
    trial, written into the file, finds it."""
    text = """
[chain]
title = "a flat battery"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "10k"
[tolerances]
resistors = "0 %"
[[supply]]
name = "cell"
kind = "dc"
voltage = "12 V"
min_voltage = "10 V"
resistance = "50 ohm"
tolerance = { resistance = "10 %" }
[[stage]]
name = "pre"
kind = "block"
gain = "0 dB"
input_impedance = "20k"
output_impedance = "100 ohm"
supply_current = "0.2 A"
"""
    parts, evaluate = _evaluator(text)
    assert [p.label for p in parts] == ["cell.resistance"]
    positions = np.array([[0.1], [0.3], [0.45], [0.55], [0.7], [0.9]])
    batched = evaluate(positions, flags=True)
    flag = batched[flag_key("error", "supply-collapse", "cell")]
    assert flag.tolist() == [0.0, 0.0, 0.0, 1.0, 1.0, 1.0]
    for t, r in enumerate(evaluate.values(positions)[0]):
        written = text.replace('resistance = "50 ohm"', f'resistance = "{float(r)!r} ohm"')
        budget = compute(parse_chain(tomllib.loads(written), "trial.toml"))
        found = any(f.code == "supply-collapse" for f in budget.findings)
        assert found == bool(flag[t]), t
        assert float(batched["supplies.cell.trough_v"][t]) == pytest.approx(
            budget.supply("cell").trough_v, rel=1e-9, abs=1e-12
        )


# A battery of emf E and internal resistance R0 (20 %) under a steady load I: a block
# drawing a constant supply current, no pulses, no reservoir, its low end the nominal emf.
EMF, R0, TOL, CURRENT = 9.0, 3.3, 0.2, 0.25
THEVENIN = f"""
[chain]
title = "a battery under a steady load"
[source]
level = "10 mV"
impedance = "1k"
[load]
impedance = "10k"
[tolerances]
resistors = "0 %"
[[supply]]
name = "cell"
kind = "dc"
voltage = "{EMF} V"
resistance = "{R0} ohm"
tolerance = {{ resistance = "{TOL * 100:g} %" }}
[[stage]]
name = "pre"
kind = "block"
gain = "0 dB"
input_impedance = "20k"
output_impedance = "100 ohm"
supply_current = "{CURRENT} A"
"""


def test_the_terminal_voltage_is_the_thevenin_sources_within_the_resistances_range() -> None:
    """A battery of emf E and internal resistance R under a steady load current I gives
    V = E - I R at its terminals (Thevenin's theorem; Horowitz & Hill, The Art of
    Electronics, 3rd ed., sec. 1.2.6, from memory). With R uniform in [R0 (1 - t),
    R0 (1 + t)], the Monte Carlo's terminal voltage (its mean under the nominal load and
    its trough under the heaviest, here both I) lies within [E - I R0 (1 + t),
    E - I R0 (1 - t)] and the corner worst case equals those bounds (rtol 1e-12); each
    trial's sag is I R of its own drawn R."""
    chain = parse_chain(tomllib.loads(THEVENIN), "thevenin.toml")
    result = run_spread(chain, 400, 5)
    low_bound = EMF - CURRENT * R0 * (1.0 + TOL)
    high_bound = EMF - CURRENT * R0 * (1.0 - TOL)
    for key in ("vout_v", "trough_v"):
        path = f"supplies.cell.{key}"
        low, high = result.corners[path]
        assert low == pytest.approx(low_bound, rel=1e-12, abs=0), path
        assert high == pytest.approx(high_bound, rel=1e-12, abs=0), path
        stats = result.stats[path]
        assert low_bound <= stats["min"] < stats["max"] <= high_bound, path
        # uniform R: 400 trials reach within 2 % of the range of each end
        assert stats["min"] - low_bound < 0.02 * (high_bound - low_bound), path
        assert high_bound - stats["max"] < 0.02 * (high_bound - low_bound), path
    parts, evaluate = _evaluator(THEVENIN)
    positions = np.random.default_rng(7).random((16, 1))
    batched = evaluate(positions)
    r = evaluate.values(positions)[0].reshape(-1)
    assert batched["supplies.cell.sag_v"] == pytest.approx(CURRENT * r, rel=1e-12, abs=0)
    assert batched["supplies.cell.vout_v"] == pytest.approx(EMF - CURRENT * r, rel=1e-12, abs=0)
