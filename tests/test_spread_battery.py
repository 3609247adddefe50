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
from numpy.typing import NDArray
from test_spread import _assert_same_figure, _json_figure

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import parse_chain
from chainbudget.report.json_view import budget_json
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.flags import flag_key, is_flag
from chainbudget.spread.parts import chain_parts
from chainbudget.spread.run import run_spread
from chainbudget.supplies.dc import DcFigures

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


# The battery of BATTERY with its reservoir drawn as well (20 %), beside its resistance.
RESERVOIR = "470 uF"
BOTH_DRAWN = 'tolerance = { resistance = "20 %", reservoir = "20 %" }'


def _both_text(dropout: str) -> str:
    text = _text(dropout).replace('tolerance = { resistance = "20 %" }', BOTH_DRAWN)
    assert BOTH_DRAWN in text
    return text


def _checked_alone_rc(text: str, resistance_ohm: float, reservoir_f: float) -> dict[str, Any]:
    """The check JSON of one trial: its resistance and its reservoir written into the
    file's text, the file parsed and checked on its own."""
    written, count = re.subn(
        rf'(?m)^reservoir = "{RESERVOIR}"$', f'reservoir = "{reservoir_f!r} F"', text
    )
    assert count == 1
    return _checked_alone(written, resistance_ohm)


def test_the_battery_with_its_reservoir_drawn_equals_the_check_of_each_trial() -> None:
    """Brute force, one trial at a time: the battery's resistance (4.7 ohm) and its
    reservoir (470 uF) both drawn (20 % each, the reservoir's bound the per-field override
    of the 0 % capacitor default), eight trials each written into the chain file's text
    and checked on its own, give every batched figure at rtol 1e-9 (noise in dB, 1e-9 dB):
    the battery's resistance, reservoir, sag, trough and mean, the filter, regulator and
    follower below, and the flags. Trials at one resistance and two reservoirs show the
    sag following the drawn reservoir (the op-amp's pulses at clip, seen through R C)."""
    nominal = compute(parse_chain(tomllib.loads(_text("0.5 V")), "battery.toml"))
    dropout = nominal.supply("cell").trough_v - 9.0
    text = _both_text(f"{dropout!r} V")
    parts, evaluate = _evaluator(text)
    assert [p.label for p in parts] == ["cell.resistance", "cell.reservoir"]
    reservoir = parts[1]
    assert (reservoir.part_class, reservoir.low, reservoir.high) == (
        "capacitors",
        pytest.approx(0.8 * 470e-6, rel=1e-12, abs=0),
        pytest.approx(1.2 * 470e-6, rel=1e-12, abs=0),
    )
    rng = np.random.default_rng(11)
    positions = np.column_stack([np.linspace(0.05, 0.95, 8), rng.permutation(8) / 7.0])
    batched = evaluate(positions, flags=True)
    for key in (*OWN, "reservoir_f"):
        assert np.ptp(batched[f"supplies.cell.{key}"]) > 0.0, key
    # one resistance, the reservoir at each end: the larger reservoir holds up more
    ends = evaluate(np.array([[0.5, 0.0], [0.5, 1.0]]))["supplies.cell.sag_v"]
    assert ends[0] > ends[1] * (1.0 + 1e-6)
    r, c = evaluate.values(positions)
    for t in range(len(positions)):
        data = _checked_alone_rc(text, float(r[t]), float(c[t]))
        for path, values in batched.items():
            want, got = _json_figure(data, path), float(values[t])
            if is_flag(path):
                assert got == want, (path, t)
            else:
                _assert_same_figure(path, got, want, 1e-9, t)


def test_a_battery_with_no_resistance_does_not_draw_its_reservoir() -> None:
    """With R = 0 the reservoir holds nothing up (the drop is R times the current whatever
    C): the spread lists the reservoir among the parts held at nominal, not drawn."""
    text = _both_text("0.5 V").replace(f'resistance = "{RESISTANCE}"', 'resistance = "0 ohm"')
    chain = parse_chain(tomllib.loads(text), "stiff.toml")
    drawn, held = chain_parts(chain)
    assert not [p for p in drawn if p.owner == "cell"]
    assert "cell.reservoir" in [h.label for h in held]


# A battery (E, R0 20 %, a reservoir C0 20 % across its terminals) feeding an op-amp stage
# straight off it, whose output draws half-wave sine pulses from the battery at the
# signal's frequency: omega R0 C0 near 1 at 1 kHz, where the reservoir's share of the sag
# moves most with C. The op-amp's clip is set by its output current (8 mA into 300 ohm,
# 2.4 V peak, under the swing its single rail less its margins allows, about 3.5 V), so
# its pulses do not move with the drawn parts and the check of each corner settles the
# same load as the spread holds.
R_PULSED, C_PULSED = 4.7, 33e-6
PULSED = f"""
[chain]
title = "a battery feeding pulses"
[source]
level = "100 mV"
max_level = "1 V"
impedance = "1k"
[load]
impedance = "300 ohm"
[tolerances]
resistors = "0 %"
capacitors = "0 %"
beta = [1, 1]
[[supply]]
name = "cell"
kind = "dc"
voltage = "12 V"
min_voltage = "10 V"
resistance = "{R_PULSED} ohm"
reservoir = "33 uF"
tolerance = {{ resistance = "20 %", reservoir = "20 %" }}
[[stage]]
name = "line"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
ground_cap = "100 uF"
input_cap = "10 uF"
bias_resistor = "47k"
opamp = "strong"
positive = "cell"
[opamp.strong]
gbw = "10 MHz"
slew_rate = "10 V/us"
noise_voltage = "10 nV/rtHz"
noise_current = "0.1 pA/rtHz"
open_loop_gain = "110 dB"
output_resistance = "5 ohm"
swing_margin = "1.5 V"
output_current = "8 mA"
supply_current = "1 mA"
"""


def _rc_source_sag(r: float, c: float, dc_a: float, pulse_a: float, hz: float) -> float:
    """The largest drop below the emf at the terminals of a Thevenin source (E, R) with C
    across its terminals, drawn on by I_dc + I_p max(sin 2 pi f t, 0), in the periodic
    steady state: C dv/dt = (E - v)/R - i(t) integrated with scipy's solve_ivp (Radau,
    rtol 1e-12), written for the drop d = E - v as R C dd/dt = R i(t) - d. The periodic
    start is found from one period from d = 0 (the ODE is linear: d(T) = d(0) k + d_0(T),
    k = exp(-T/(R C))); the maximum over the period from the dense solution, refined by a
    bounded scalar search."""
    from scipy.integrate import solve_ivp
    from scipy.optimize import minimize_scalar

    tau, period = r * c, 1.0 / hz

    def rate(t: float, d: NDArray[np.float64]) -> NDArray[np.float64]:
        current = dc_a + pulse_a * max(np.sin(2.0 * np.pi * hz * t), 0.0)
        return np.asarray((r * current - d) / tau)

    def over_period(d0: float) -> list[Any]:
        # two pieces: the pulse and the gap, so that the kink at T/2 is a piece's end
        pieces, start = [], d0
        for t0, t1 in ((0.0, period / 2.0), (period / 2.0, period)):
            sol = solve_ivp(
                rate, (t0, t1), [start], method="Radau", rtol=1e-12, atol=1e-15, dense_output=True
            )
            assert sol.success
            pieces.append(sol)
            start = float(sol.y[0, -1])
        return pieces

    from_zero = float(over_period(0.0)[-1].y[0, -1])
    d0 = from_zero / -np.expm1(-period / tau)
    best = 0.0
    for sol in over_period(d0):
        t0, t1 = float(sol.t[0]), float(sol.t[-1])
        grid = np.linspace(t0, t1, 2001)
        values = sol.sol(grid)[0]
        k = int(np.argmax(values))
        lo, hi = grid[max(k - 1, 0)], grid[min(k + 1, grid.size - 1)]
        found = minimize_scalar(
            lambda t, s=sol: -float(s.sol(t)[0]),
            bounds=(lo, hi),
            method="bounded",
            options={"xatol": 1e-14},
        )
        best = max(best, float(values[k]), -float(found.fun))
    return best


def test_the_sag_with_its_reservoir_is_the_rc_sources_integrated_in_time() -> None:
    """The sag at the crest against an independent integration: the battery modelled as
    a Thevenin source E, R with C across its terminals, driven by the check's own pulsed
    load (its steady current, the pulses' crest and their frequency, from the nominal
    check), integrated in time to its periodic steady state (`_rc_source_sag`). The check
    models exactly that circuit (the pulses through the first-order low-pass R C, solved
    in closed form and its peak found on a grid), so the two agree at rtol 1e-9 (measured
    2e-11): at the nominal parts, and at the spread's two corners of the sag, which sit at
    (R high, C low) and (R low, C high) and equal the check of the file with those bounds
    written in at rtol 1e-12. At the nominal resistance the sag falls as the reservoir
    rises, trial by trial, and follows the integration there too."""
    chain = parse_chain(tomllib.loads(PULSED), "pulsed.toml")
    load = compute(chain).supply("cell").load
    assert load.signal_hz is not None and load.heaviest_pulse_a > load.heaviest_dc_a > 0.0
    hz = load.signal_hz
    assert 0.5 < 2.0 * np.pi * hz * R_PULSED * C_PULSED < 2.0

    def integrated(r: float, c: float) -> float:
        return _rc_source_sag(r, c, load.heaviest_dc_a, load.heaviest_pulse_a, hz)

    nominal = compute(chain).supply("cell").own
    assert isinstance(nominal, DcFigures)
    assert nominal.sag_v == pytest.approx(integrated(R_PULSED, C_PULSED), rel=1e-9, abs=0)
    # without the reservoir the sag would be the pulses' whole crest: the reservoir matters
    assert nominal.sag_v < 0.9 * R_PULSED * (load.heaviest_dc_a + load.heaviest_pulse_a)

    result = run_spread(chain, 64, 3)
    low, high = result.corners["supplies.cell.sag_v"]
    r_lo, r_hi, c_lo, c_hi = 0.8 * R_PULSED, 1.2 * R_PULSED, 0.8 * C_PULSED, 1.2 * C_PULSED
    assert high == pytest.approx(integrated(r_hi, c_lo), rel=1e-9, abs=0)
    assert low == pytest.approx(integrated(r_lo, c_hi), rel=1e-9, abs=0)
    for value, r, c in ((high, r_hi, c_lo), (low, r_lo, c_hi)):
        alone = compute(parse_chain(tomllib.loads(_pulsed_at(r, c)), "corner.toml"))
        assert value == pytest.approx(alone.supply("cell").own.sag_v, rel=1e-12, abs=0)

    parts, evaluate = _evaluator(PULSED)
    assert [p.label for p in parts] == ["cell.resistance", "cell.reservoir"]
    rising = np.column_stack([np.full(9, 0.5), np.linspace(0.0, 1.0, 9)])
    sags = evaluate(rising)["supplies.cell.sag_v"]
    assert np.all(np.diff(sags) < 0.0)
    c = evaluate.values(rising)[1]
    for t in (0, 4, 8):
        want = integrated(R_PULSED, float(c[t]))
        assert float(sags[t]) == pytest.approx(want, rel=1e-9, abs=0), t


def _pulsed_at(resistance_ohm: float, reservoir_f: float) -> str:
    """PULSED with its battery's resistance and reservoir written as given."""
    text, n = re.subn(
        rf'(?m)^resistance = "{R_PULSED} ohm"$', f'resistance = "{resistance_ohm!r} ohm"', PULSED
    )
    text, m = re.subn(r'(?m)^reservoir = "33 uF"$', f'reservoir = "{reservoir_f!r} F"', text)
    assert n == m == 1
    return text
