"""The volume rotation at which the nominal level first clips the output stage, per trial
(`chainbudget.spread.volume`), and its notes ``volume-clip-rotation`` and
``volume-never-clips`` as flags. Brute force, one trial at a time through the real check
(each trial's drawn parts written into the chain, `Chain.with_values`), and the share of
trials drawing ``volume-never-clips`` against the analytic share of a uniform draw."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from test_spread import IDEAL, _chain, trial_changes

import chainbudget.spread.volume as spread_volume
from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import Chain
from chainbudget.network import POT_END_FRACTION
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.flags import flag_key
from chainbudget.spread.parts import chain_parts
from chainbudget.spread.run import run_spread

# A source of our own, a non-inverting op-amp stage of gain 1 + Rf/Rg (the near-ideal
# op-amp of tests/test_spread.py: 200 dB open loop, no output resistance, on +/-15 V), a
# linear volume pot and a power block of gain 10 whose output may swing 8 V peak: with the
# volume fully up the nominal 100 mV reaches 8.06 V peak there at Rf = 47k, so the block
# clips from a rotation near 0.99 and a gain a few per cent lower never clips it.
VOLROT = (
    """
[chain]
title = "volume rotation spread"
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
points_per_decade = 5
[source]
level = "100 mV"
max_level = "200 mV"
impedance = "0 ohm"
[load]
impedance = "10 kohm"
[tolerances]
resistors = "{resistors}"
capacitors = "0 %"
pots = "{pots}"
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
feedback = "47k"
ground_leg = "10k"
opamp = "ideal"
positive = "plus"
negative = "minus"
{pre_tolerance}
[[stage]]
name = "volume"
kind = "volume"
pot = "10k"
taper = "linear"
position = 0.3
[[stage]]
name = "power"
kind = "block"
gain = 10
input_impedance = "1 Mohm"
output_impedance = "1 ohm"
max_output = "8 V"
"""
    + IDEAL
)

CLIPS = flag_key("note", "volume-clip-rotation", "volume")
NEVER = flag_key("note", "volume-never-clips", "volume")


def _volrot(resistors: str = "5 %", pots: str = "20 %", pre_tolerance: str = "") -> Chain:
    return _chain(VOLROT.format(resistors=resistors, pots=pots, pre_tolerance=pre_tolerance))


def _evaluator(chain: Chain) -> Evaluator:
    parts, _ = chain_parts(chain)
    return Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


def test_each_trials_rotation_and_flags_are_the_check_of_that_trial(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """Twelve trials (Rf, Rg at 5 %, the pot's track at 20 %), each written into the chain
    and checked alone: the batch's rotation (read beside the flags) is the rotation of
    that trial's ``volume-clip-rotation`` finding, exactly (the same grid), and NaN where
    the check finds ``volume-never-clips``; the two flags are those findings. The
    rotation moves over several grid steps and some trials never clip."""
    chain = _volrot()
    evaluate = _evaluator(chain)
    parts = evaluate.parts
    assert {(p.owner, p.key) for p in parts} >= {("pre", "feedback"), ("pre", "ground_leg")}
    seen: list[np.ndarray[Any, Any]] = []
    batched = spread_volume.clip_rotations

    def spy(*args: Any) -> Any:
        found = batched(*args)
        seen.append(found)
        return found

    monkeypatch.setattr(spread_volume, "clip_rotations", spy)
    positions = np.random.default_rng(11).random((12, len(parts)))
    flags = evaluate(positions, flags=True)
    (rotations,) = seen
    assert {p for p in flags if "volume-" in p} == {CLIPS, NEVER}
    checked = []
    for t in range(len(positions)):
        changes = trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        found = {f.code: f for f in compute(chain.with_values(changes)).findings}
        assert bool(flags[CLIPS][t]) == ("volume-clip-rotation" in found), t
        assert bool(flags[NEVER][t]) == ("volume-never-clips" in found), t
        if "volume-clip-rotation" in found:
            rotation = found["volume-clip-rotation"].figures["rotation"]
            assert rotations[t] == rotation, t  # both read off the same grid
            checked.append(rotation)
        else:
            assert np.isnan(rotations[t]), t
    assert 0 < flags[NEVER].sum() < len(positions)
    # the rotation moves across several steps of the 401-point grid
    assert round((max(checked) - min(checked)) * 400) >= 4, checked


def test_steps_alone_give_the_volume_flags_of_the_whole_evaluation() -> None:
    """The ``volume`` step asked alone gives the flags of the whole evaluation, and
    `Evaluator.steps_of` files them under it."""
    chain = _volrot()
    evaluate = _evaluator(chain)
    positions = np.random.default_rng(8).random((6, len(evaluate.parts)))
    whole = evaluate(positions, flags=True)
    alone = evaluate(positions, flags=True, steps=frozenset(("volume",)))
    for path in (CLIPS, NEVER):
        assert evaluate.steps_of[path] == "volume"
        np.testing.assert_array_equal(alone[path], whole[path])


def test_share_never_clipping_is_the_uniform_draws_share_below_the_threshold() -> None:
    """Only Rf drawn, uniformly within 5 % of 47k (Rg = 10k exact). At full rotation the
    pot's wiper sits at its top: its upper leg is the end stop e = POT_END_FRACTION P
    alone and its lower leg P + e is loaded by the block's 1 Mohm, so the wiper takes
    v = Z / (Z + e) of the pre stage's output, Z = (P + e) || R_in (the loaded potential
    divider, Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 1.2.3; the op-amp's
    output has no resistance and its closed-loop gain is G = (1 + Rf/Rg) / (1 + (1 +
    Rf/Rg)/A), Franco, Design with Operational Amplifiers, sec. 1.3, from memory). The
    block's 1 ohm into the 10 kohm load gives k = 10k / (10k + 1) of its 10 V/V at the
    terminals, where it may swing 8 V peak. The nominal 100 mV never clips it while
    sqrt(2) 0.1 G v 10 k < 8: G below g* = 8 / (sqrt(2) 0.1 v 10 k), i.e. Rf below
    Rf* = Rg (g*/(1 - g*/A) - 1). The share of 4000 trials drawing ``volume-never-clips``
    is P(Rf < Rf*) = (Rf* - Rf0 (1 - t)) / (2 t Rf0), within four standard errors of a
    binomial share; the others all draw ``volume-clip-rotation``."""
    rf0, rg, t = 47e3, 10e3, 0.05
    chain = _volrot(resistors="0 %", pots="0 %", pre_tolerance='tolerance = { feedback = "5 %" }')
    evaluate = _evaluator(chain)
    assert [(p.owner, p.key) for p in evaluate.parts] == [("pre", "feedback")]
    open_loop = 10.0 ** (200.0 / 20.0)
    track, r_in = 10e3, 1e6
    end = POT_END_FRACTION * track
    lower = 1.0 / (1.0 / (track + end) + 1.0 / r_in)
    wiper = lower / (lower + end)
    k = 10e3 / (10e3 + 1.0)
    g = 8.0 / (math.sqrt(2.0) * 0.1 * wiper * 10.0 * k)
    threshold = rg * (g / (1.0 - g / open_loop) - 1.0)
    expected = (threshold - rf0 * (1.0 - t)) / (2.0 * t * rf0)
    trials = 4000
    positions = np.random.default_rng(3).random((trials, len(evaluate.parts)))
    flags = evaluate(positions, flags=True, steps=frozenset(("volume",)))
    share = float(flags[NEVER].mean())
    sigma = math.sqrt(expected * (1.0 - expected) / trials)
    assert 0.3 < expected < 0.5  # the threshold lies inside the draw, off its centre
    assert abs(share - expected) < 4.0 * sigma, (share, expected, sigma)
    np.testing.assert_array_equal(flags[CLIPS], 1.0 - flags[NEVER])


def test_the_spread_counts_both_notes_and_no_longer_lists_them_as_not_spread() -> None:
    """Through `run_spread`: both notes have a yield, neither is among the codes the
    spread does not draw, and the nominal check's own note is among the codes it found."""
    result = run_spread(_volrot(), 64, 1)
    assert {"volume-clip-rotation", "volume-never-clips"} <= set(result.yield_by_code)
    assert "volume-clip-rotation" in result.nominal_codes
    assert not {"volume-clip-rotation", "volume-never-clips"} & set(result.codes_not_spread())
    assert result.severities["volume-never-clips"] == "note"
    share_never = 1.0 - result.yield_by_code["volume-never-clips"]
    assert share_never == pytest.approx(result.yield_by_code["volume-clip-rotation"], abs=0)


def test_a_drawn_series_resistor_ahead_of_a_dc_coupled_volume_is_each_trials_check() -> None:
    """A volume with a series resistor and no input capacitor (its DC divider is worked
    out per trial from the drawn series resistor and track, `VolumeKind._dc_divider`):
    every figure of four trials equals the check of that trial alone, rtol 1e-9 (brute
    force, as tests/test_spread.py does for every kind)."""
    import json

    from test_spread import _ideal_opamp_current, _json_figure

    from chainbudget.report.json_view import budget_json

    text = VOLROT.format(resistors="5 %", pots="20 %", pre_tolerance="").replace(
        "position = 0.3\n", 'position = 0.3\nseries = "2k2"\n'
    )
    chain = _chain(text)
    evaluate = _evaluator(chain)
    parts = evaluate.parts
    assert ("volume", "series") in {(p.owner, p.key) for p in parts}
    positions = np.random.default_rng(5).random((4, len(parts)))
    batched = evaluate(positions)
    for t in range(len(positions)):
        changes = trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        budget = compute(chain.with_values(changes))
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        for path, values in batched.items():
            if _ideal_opamp_current(path):
                continue
            want = _json_figure(data, path, budget)
            assert values[t] == pytest.approx(want, rel=1e-9, abs=1e-12), (path, t)


@pytest.mark.parametrize("max_output", ["8 V", "1 V"])
def test_the_grid_in_blocks_gives_the_whole_grids_rotation(
    monkeypatch: pytest.MonkeyPatch, max_output: str
) -> None:
    """The rotation grid solved block by block (here 7 rotations with the 12 trials, 58
    blocks) gives every trial the rotation the whole grid in one solve gives, exactly:
    with the block swinging 8 V some trials never clip and every block is solved; at 1 V
    every trial clips near a rotation of 0.12 and the rest of the grid is not solved."""
    text = VOLROT.format(resistors="5 %", pots="20 %", pre_tolerance="")
    chain = _chain(text.replace('max_output = "8 V"', f'max_output = "{max_output}"'))
    evaluate = _evaluator(chain)
    positions = np.random.default_rng(7).random((12, len(evaluate.parts)))
    original, solve = spread_volume.clip_rotations, spread_volume.solve_chain
    solves: list[int] = []
    found: list[tuple[Any, Any, int]] = []

    def counted(*args: Any) -> Any:
        solves.append(1)
        return solve(*args)

    def both(*args: Any) -> Any:
        solves.clear()
        blocks = original(*args[:-1], 7 * len(positions))
        in_blocks = len(solves)
        whole = original(*args[:-1], 1 << 40)
        found.append((blocks, whole, in_blocks))
        return blocks

    monkeypatch.setattr(spread_volume, "solve_chain", counted)
    monkeypatch.setattr(spread_volume, "clip_rotations", both)
    evaluate(positions, flags=True)
    ((blocks, whole, in_blocks),) = found
    assert np.array_equal(blocks, whole, equal_nan=True)
    if max_output == "8 V":
        assert np.isnan(whole).any() and in_blocks == math.ceil(401 / 7)
    else:
        assert np.isfinite(whole).all() and 1 < in_blocks < math.ceil(401 / 7)
