"""A rectified supply's own figures over the spread's trials with its reservoir drawn: the
mean at nominal line and load, the winding's, diodes' and reservoir's currents and the
rules that read them (``transformer-rating``, ``reservoir-ripple-current``), and the means
of the supplies below following the rectifier's. Checked by brute force (each trial's
reservoir written into the chain file's text and checked alone) and against the piecewise
analysis of a capacitor-input rectifier fed from an ideal source, solved in the test."""

from __future__ import annotations

import json
import math
import tomllib
from typing import Any

import numpy as np
import pytest
from scipy.optimize import brentq
from test_spread import _assert_same_figure, _grid_rtol, _json_figure
from test_spread_split import RESERVOIR, SPLIT

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import parse_chain
from chainbudget.report.json_view import budget_json
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.flags import flag_key, is_flag
from chainbudget.spread.parts import chain_parts

#: The rectifier's figures a drawn reservoir moves, on each rail (the crest, the inrush and
#: the dc load do not depend on it).
MOVED = (
    "trough_v",
    "ripple_vpp",
    "mean_v",
    "vout_v",
    "winding_rms_a",
    "rms_per_dc",
    "rating_current_a",
    "transformer_load_fraction",
    "diode_peak_a",
    "reservoir_ripple_a",
    "conduction_deg",
)


def _evaluator(text: str) -> tuple[list[Any], Evaluator]:
    chain = parse_chain(tomllib.loads(text), "rated.toml")
    parts, _ = chain_parts(chain)
    return parts, Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


def _check_json(text: str) -> dict[str, Any]:
    budget = compute(parse_chain(tomllib.loads(text), "trial.toml"))
    return dict(json.loads(json.dumps(budget_json(budget, list(budget.findings)))))


def _rated(text: str) -> str:
    """The split chain of tests/test_spread_split.py with a transformer rating and a
    reservoir ripple rating at the nominal check's own currents (rounded to four digits),
    so that some trials of the drawn reservoir draw each warning and some do not: the
    currents rise with the reservoir (its charging pulses grow shorter and taller)."""
    nominal = _check_json(text)["supplies"]
    rail = next(s for s in nominal if s["name"] == "rail")
    rated = f"{rail['winding_rms_a']:.4g}"
    ripple = f"{rail['reservoir_ripple_a']:.4g}"
    written = text.replace(
        'winding_resistance = "1 ohm"',
        f'winding_resistance = "1 ohm"\nrated_current = "{rated} A"\n'
        f'reservoir_ripple_rating = "{ripple} A"',
        1,
    )
    assert written != text
    return written


def _with_reservoir(text: str, reservoir_f: float) -> str:
    written = text.replace(f'reservoir = "{RESERVOIR}"', f'reservoir = "{reservoir_f!r} F"', 1)
    assert written != text
    return written


def test_each_rails_figures_and_warnings_equal_the_check_of_each_trial() -> None:
    """Brute force, one sample at a time: 24 trials of the drawn reservoir (the batch takes
    its troughs, ripple, means and currents from the grid of 17 reservoir values), eight
    of them evaluated alone (a direct solve) and written into the chain file's text and
    checked on their own. Every figure of both rails of the centre-tapped supply (the mean,
    ``vout_v``, each half-winding's rms, the diode peak, the reservoir's ripple current,
    the conduction angle, the rating's fraction) and the filter off each rail (its mean
    follows the rectifier's) of the trial alone equals the check's at rtol 1e-9, and the
    batch's equals the trial's alone within the grid's accuracy (`_grid_rtol`); whether
    the trial draws ``transformer-rating`` and ``reservoir-ripple-current`` is whether the
    check of that trial finds it, and both warnings are drawn by some trials and not by
    others."""
    text = _rated(SPLIT)
    parts, evaluate = _evaluator(text)
    assert [p.label for p in parts] == ["rail.reservoir"]
    positions = np.linspace(0.01, 0.99, 24)[:, None]
    batched = evaluate(positions, flags=True)
    for rail in ("rail", "rail.neg"):
        for key in MOVED:
            assert np.ptp(batched[f"supplies.{rail}.{key}"]) > 0.0, (rail, key)
    for path in ("supplies.clean.vout_v", "supplies.quiet.vout_v"):
        assert np.ptp(batched[path]) > 0.0, path
    rating = flag_key("warning", "transformer-rating", "rail")
    ripple = flag_key("warning", "reservoir-ripple-current", "rail")
    for flag in (rating, ripple):
        assert 0.0 < batched[flag].mean() < 1.0, flag
    # the transformer's warning is the positive rail's alone (the two share one winding)
    assert flag_key("warning", "transformer-rating", "rail.neg") not in batched
    reservoir = evaluate.values(positions)[0]
    for t in range(0, len(positions), 3):
        alone = evaluate(positions[t : t + 1], flags=True)
        for path, values in batched.items():
            assert values[t] == pytest.approx(alone[path][0], rel=_grid_rtol(path), abs=1e-9), (
                path,
                t,
            )
        data = _check_json(_with_reservoir(text, float(reservoir[t])))
        for path in batched:
            if is_flag(path) and path not in (rating, ripple):
                continue  # the other rules' flags: their own tests
            want, got = _json_figure(data, path), float(alone[path][0])
            if is_flag(path):
                assert got == want, (path, t)
            else:
                _assert_same_figure(path, got, want, 1e-8, t)


# An ideal transformer (no winding resistance) and a full-wave bridge into a reservoir
# under a steady 0.5 A: the textbook case, solvable in the test.
IDEAL = """
[chain]
title = "ideal source, steady load"
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
reservoir = "4700 uF"
winding_resistance = "0 ohm"
[[stage]]
name = "amp"
kind = "block"
gain = "20 dB"
input_impedance = "20k"
output_impedance = "0.1 ohm"
supply_current = "0.5 A"
positive = "raw"
"""


def _ideal_rectifier(peak_v: float, drop_v: float, c_f: float, load_a: float) -> dict[str, float]:
    """The periodic state of an ideal full-wave capacitor-input rectifier under a steady
    load, worked out piecewise in line phase theta (the textbook analysis of the capacitor
    filter: while the diodes conduct the reservoir follows the source, v = V sin(theta) -
    V_d, and the diode current is C dv/dt + I = omega C V cos(theta) + I, which falls to
    zero at cos(theta_e) = -I/(omega C V), just past the crest; then the reservoir
    discharges at I/C until the next half cycle's source rises to meet it at theta_s + pi;
    e.g. Millman & Halkias, Integrated Electronics, 1972, the chapter on rectifiers and
    capacitor filters, from memory). theta_s is found by root finding (Brent's method); the
    rms of the diode current over a half cycle in closed form. Returns the trough, the
    ripple (the crest V - V_d less the trough), the conduction angle in degrees, the diode
    peak (at theta_s, where cos is largest), the winding's rms and the reservoir's ripple
    current, whose square is the winding's less I^2 (the diode's mean is I: the reservoir's
    charge balances over a period)."""
    omega = 2.0 * math.pi * 50.0
    a = omega * c_f * peak_v
    theta_e = math.acos(-load_a / a)
    v_e = peak_v * math.sin(theta_e) - drop_v

    def meets(theta_s: float) -> float:
        discharged = v_e - load_a * (theta_s + math.pi - theta_e) / (omega * c_f)
        return peak_v * math.sin(theta_s) - drop_v - discharged

    theta_s = brentq(meets, 0.0, math.pi / 2.0, xtol=1e-15, rtol=1e-15)

    def integral(theta: float) -> float:  # of (a cos + I)^2
        return (
            a * a * (theta / 2.0 + math.sin(2.0 * theta) / 4.0)
            + 2.0 * a * load_a * math.sin(theta)
            + load_a * load_a * theta
        )

    rms = math.sqrt((integral(theta_e) - integral(theta_s)) / math.pi)
    trough = peak_v * math.sin(theta_s) - drop_v
    return {
        "trough_v": trough,
        "ripple_vpp": peak_v - drop_v - trough,
        "conduction_deg": math.degrees(theta_e - theta_s),
        "diode_peak_a": a * math.cos(theta_s) + load_a,
        "winding_rms_a": rms,
        "reservoir_ripple_a": math.sqrt(rms * rms - load_a * load_a),
    }


def test_the_currents_of_an_ideal_source_follow_the_piecewise_analysis_per_trial() -> None:
    """Each of 24 trials of a 20 % reservoir (the grid and the direct solves both) against
    `_ideal_rectifier` at that trial's reservoir: the trough and ripple at low line, and
    the currents at the corner the check reports (the larger of low and high line: the
    winding's rms and the conduction angle of the corner with the larger rms, the larger
    diode peak and reservoir ripple current), at rtol 1e-7; the conduction angle shortens
    and the diode peak and ripple current rise as the reservoir grows."""
    parts, evaluate = _evaluator(IDEAL)
    assert [p.label for p in parts] == ["raw.reservoir"]
    positions = np.linspace(0.0, 1.0, 24)[:, None]
    batched = evaluate(positions)
    reservoir = evaluate.values(positions)[0]
    order = np.argsort(reservoir)
    assert np.all(np.diff(batched["supplies.raw.conduction_deg"][order]) < 0.0)
    assert np.all(np.diff(batched["supplies.raw.diode_peak_a"][order]) > 0.0)
    assert np.all(np.diff(batched["supplies.raw.reservoir_ripple_a"][order]) > 0.0)
    peak = math.sqrt(2.0) * 15.0
    for t, c in enumerate(reservoir):
        low = _ideal_rectifier(0.9 * peak, 1.8, float(c), 0.5)
        high = _ideal_rectifier(1.1 * peak, 1.8, float(c), 0.5)
        hotter = high if high["winding_rms_a"] >= low["winding_rms_a"] else low
        want = {
            "trough_v": low["trough_v"],
            "ripple_vpp": low["ripple_vpp"],
            "winding_rms_a": hotter["winding_rms_a"],
            "conduction_deg": hotter["conduction_deg"],
            "diode_peak_a": max(low["diode_peak_a"], high["diode_peak_a"]),
            "reservoir_ripple_a": max(low["reservoir_ripple_a"], high["reservoir_ripple_a"]),
        }
        for key, value in want.items():
            got = batched[f"supplies.raw.{key}"][t]
            assert got == pytest.approx(value, rel=1e-7, abs=0), (key, t)


def test_currents_at_a_tie_of_two_phases_troughs_equal_the_check_of_each_trial() -> None:
    """The guitar amplifier of `tests/data/supplies` on a smaller, stiffer transformer
    (4 % regulation, 1 A rated) with 10 % parts: in the second trial drawn with seed 5
    two relative phases of signal and mains give near-equal troughs. The currents are the
    largest over the phases, in the check as in the spread, so each trial checked alone
    (brute force) gives the batched winding rms, diode peak, ripple current and
    conduction angle within 3e-4 (the grid's interpolation of a peak and of a charge the
    pulses interrupt). Read at the lowest trough's phase instead, the two disagreed by
    4 % in the conduction angle and 2 % in the diode peak, each taking the other phase."""
    from pathlib import Path

    from test_spread import checked, trial_chain

    path = Path(__file__).resolve().parent / "data" / "supplies" / "guitar_amp_470uf.toml"
    text = path.read_text()
    for old, new in (
        ('regulation = "8 %"', 'regulation = "4 %"'),
        ('rated_current = "2 A"', 'rated_current = "1 A"'),
    ):
        assert old in text, old
        text = text.replace(old, new)
    text = text.replace("\n[", '\n[tolerances]\nresistors = "10 %"\ncapacitors = "10 %"\n\n[', 1)
    chain = parse_chain(tomllib.loads(text), "guitar_stiff.toml")
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(5).random((2, len(parts)))
    got = evaluate(positions)
    for t in range(len(positions)):
        _, data = checked(trial_chain(chain, parts, evaluate.values(positions[t : t + 1])))
        for key in ("winding_rms_a", "diode_peak_a", "reservoir_ripple_a", "conduction_deg"):
            want = _json_figure(data, f"supplies.rail.{key}")
            assert got[f"supplies.rail.{key}"][t] == pytest.approx(want, rel=3e-4, abs=0), (t, key)
