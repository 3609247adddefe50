"""The worst-case search held against the exhaustive grid it replaced.

The reference is written out here, independent of `chainbudget.budget.search`: every swept
pot on its own axis of one Cartesian grid, the whole chain cascaded over it, and the worst
case, the per-frequency least, the op-amp drive and the staging figures reduced over the
grid exactly as the code before the search did (the least clip level, ties within 0.01 dB
resolved to the point nearest the settings as set, then the first in grid order). Random
chains from fixed seeds with 1 to 4 swept tone and volume pots, among gain stages and
blocks, some inside a ``feedback_from`` loop (a loop section, searched as one unit through
its own network), are compared figure by figure: headroom to 1e-9 dB, the same frequency, the same
reported settings, the same binding limit, the least headroom at every frequency to 1e-9 dB,
each op-amp's largest output current to DRIVE_RTOL.

The frequency of that largest current is held to be one at which the grid's own largest is
within DRIVE_RTOL of it: where a stage clips, the demand is flat in frequency and in the gain
ahead of it up to the rounding of the current probe (DRIVE_RTOL), so the grid's own choice
among those frequencies is rounding.

The search runs three ways: every segment solved outright (exact by construction), as
shipped (a segment of four pots refined by coordinates), and every segment refined. Refined,
the worst cases must still be the grid's; the least headroom per frequency may miss the
grid's by a sliver where stages of a segment couple (never below it, at most
REFINED_CURVE_DB above).
"""

from __future__ import annotations

import tomllib
from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np
import pytest
from numpy.typing import NDArray

from chainbudget.budget import search
from chainbudget.budget.analysis import Analysis, analyse, positions_as_set, solve_chain
from chainbudget.budget.levels import SQRT2, clip_source_peak, db, headroom_curves, node_levels
from chainbudget.budget.power import opamp_drives
from chainbudget.budget.staging import post_volume_headroom, tone_boosts
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain, parse_chain

OPAMPS = ("jfet_input", "low_noise_bipolar", "legacy_bipolar")
POSITIONS = (0.0, 0.25, 0.3, 0.5, 0.65, 0.8, 1.0)  # on and off the 0.1 rotation grid
N_CHAINS = 16
# What coordinate refinement may miss of the least headroom at a frequency (dB): the most
# seen over 400 random chains of this generator was 7e-5 dB.
REFINED_CURVE_DB = 1e-4
# An op-amp's output current is g1 V_in + g2 V_out with g2 of the order of the loop gain over
# R_o: the sum cancels, and settings whose currents agree in exact arithmetic differ by up to
# about 1e-9 in the grid's own (the most seen over 450 chains: 1.03e-9).
DRIVE_RTOL = 1e-8


def _pick(rng: np.random.Generator, options: tuple[object, ...]) -> object:
    return options[int(rng.integers(len(options)))]


def random_chain(seed: int, pots: int) -> Chain:
    """A chain of gain stages, blocks and tone and volume stages with ``pots`` swept pots."""
    rng = np.random.default_rng(seed)
    text = f"""
[chain]
title = "random {seed}"
points_per_decade = {_pick(rng, (4, 6, 8))}
[source]
level = "-10 dBV"
max_level = "{_pick(rng, ("0 dBV", "+4 dBu", "-6 dBV"))}"
impedance = "{_pick(rng, ("100 ohm", "1 kohm", "10 kohm"))}"
[load]
impedance = "{_pick(rng, ("10 kohm", "600 ohm", "47 kohm"))}"
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"
"""
    rails = 'positive = "plus"\nnegative = "minus"\n'
    left, k = pots, 0
    while left > 0 or k == 0:
        k += 1
        name = f"s{k}"
        opamp = f'opamp = "{_pick(rng, OPAMPS)}"\n'
        position = f"position = {_pick(rng, POSITIONS)}\n"
        taper = f'taper = "{_pick(rng, ("linear", "log"))}"\n'
        kind = str(_pick(rng, ("gain", "inverting", "block", "pot", "pot", "pot", "loop")))
        if left == 0:
            kind = "gain"
        if kind == "loop":
            # An op-amp whose feedback senses the buffer after a pot stage: the three are one
            # loop section, the pot searched through the loop's own network.
            pot = str(_pick(rng, ("volume", "bass")))
            inner = (
                f'kind = "volume"\npot = "10k"\n{position}{taper}'
                if pot == "volume"
                else f'kind = "tone_bass"\nouter = "10k"\npot = "100k"\ncap = "47n"\n'
                f"{position}{taper}{opamp}{rails}"
            )
            text += (
                f'[[stage]]\nname = "{name}"\nkind = "opamp_gain"\ntopology = "non-inverting"\n'
                f'feedback = "10k"\nground_leg = "10k"\nfeedback_from = "{name}c"\n{opamp}{rails}'
                f'[[stage]]\nname = "{name}b"\n{inner}'
                f'[[stage]]\nname = "{name}c"\nkind = "block"\ngain = "0 dB"\n'
                'input_impedance = "100k"\noutput_impedance = "10 ohm"\nnoise = "10 nV/rtHz"\n'
                'max_output = "10 V"\n'
            )
            left -= 1
            continue
        if kind == "gain":
            body = (
                'kind = "opamp_gain"\ntopology = "non-inverting"\n'
                f'feedback = "{_pick(rng, ("10k", "22k"))}"\nground_leg = "10k"\n{opamp}{rails}'
            )
        elif kind == "inverting":
            body = (
                'kind = "opamp_gain"\ntopology = "inverting"\nfeedback = "10k"\n'
                f'input = "{_pick(rng, ("4k7", "10k"))}"\n{opamp}{rails}'
            )
        elif kind == "block":
            body = (
                'kind = "block"\ngain = "6 dB"\ninput_impedance = "20k"\n'
                f'output_impedance = "{_pick(rng, ("100 ohm", "0.05 ohm"))}"\n'
                'noise = "10 nV/rtHz"\nmax_output = "10 V"\n'
            )
        else:
            choices = ["volume", "bass", "treble"] + (["two_band"] if left >= 2 else [])
            pot_kind = str(_pick(rng, tuple(choices)))
            if pot_kind == "volume":
                extra = str(_pick(rng, ("", 'series = "1k"\n', 'shunt = "100k"\n')))
                body = (
                    f'kind = "volume"\npot = "{_pick(rng, ("10k", "50k"))}"\n'
                    f"{position}{taper}{extra}"
                )
                left -= 1
            elif pot_kind == "bass":
                body = (
                    f'kind = "tone_bass"\nouter = "10k"\npot = "{_pick(rng, ("50k", "100k"))}"\n'
                    f'cap = "{_pick(rng, ("22n", "47n"))}"\n{position}{taper}{opamp}{rails}'
                )
                left -= 1
            elif pot_kind == "treble":
                body = (
                    'kind = "tone_treble"\nouter = "10k"\npot = "100k"\n'
                    f'cap = "{_pick(rng, ("2n2", "4n7"))}"\n'
                    f'wiper = "{_pick(rng, ("0 ohm", "1k"))}"\n{position}{opamp}{rails}'
                )
                left -= 1
            else:
                body = (
                    'kind = "tone_two_band"\nbass_outer = "10k"\nbass_pot = "100k"\n'
                    'bass_cap = "47n"\ntreble_pot = "100k"\ntreble_cap = "2n2"\n'
                    f'treble_wiper = "4k7"\nbass_position = {_pick(rng, POSITIONS)}\n'
                    f"treble_position = {_pick(rng, POSITIONS)}\n{opamp}{rails}"
                )
                left -= 2
        text += f'[[stage]]\nname = "{name}"\n{body}'
    return parse_chain(tomllib.loads(text), f"random_{seed}.toml")


# ---- the exhaustive reference -------------------------------------------------------------


def full_grid(analysis: Analysis) -> Cascade:
    """The chain on the Cartesian grid of every swept pot's rotations (one axis each)."""
    chain = analysis.chain
    n_axes = len(analysis.swept_controls)
    positions: list[dict[str, object]] = [dict(p) for p in positions_as_set(chain.stages)]
    for sc in analysis.swept_controls:
        shape = [1] * (n_axes + 1)
        shape[sc.axis] = sc.rotations.size
        positions[sc.stage_index][sc.control.key] = sc.rotations.reshape(shape)
    return solve_chain(chain, analysis.envs, analysis.frequency, positions)


@dataclass(frozen=True)
class ReferenceWorst:
    headroom_db: float
    frequency_hz: float
    controls: dict[tuple[str, str], float]
    limited_by: str
    curve_db: NDArray[np.float64]


def reference_worst(analysis: Analysis, grid: Cascade, k: int) -> ReferenceWorst | None:
    clip = clip_source_peak(grid, k)
    if clip is None:
        return None
    peak, which = clip
    shape = np.shape(grid.v_out[k])
    peak, which = np.broadcast_to(peak, shape), np.broadcast_to(which, shape)
    tied = peak <= peak.min() * 10.0 ** (0.01 / 20.0)
    distance = np.zeros(shape)
    for sc in analysis.swept_controls:
        axis = [1] * len(shape)
        axis[sc.axis] = shape[sc.axis]
        distance = distance + np.abs(sc.rotations - sc.control.position).reshape(axis)
    off_reference = np.ones(shape[-1])
    off_reference[0] = 0.0
    distance = distance + off_reference
    where = np.unravel_index(int(np.argmin(np.where(tied, distance, np.inf))), shape)
    max_peak = SQRT2 * analysis.chain.source.max_level
    return ReferenceWorst(
        headroom_db=float(db(peak[where] / max_peak)),
        frequency_hz=float(analysis.frequency[where[-1]]),
        controls={
            (analysis.chain.stages[sc.stage_index].name, sc.control.key): float(
                sc.rotations[where[sc.axis]]
            )
            for sc in analysis.swept_controls
            if sc.stage_index <= k
        },
        limited_by=grid.stages[k].built.limits[int(which[where])].name,
        curve_db=db(peak.reshape(-1, shape[-1]).min(axis=0)[1:] / max_peak),
    )


def reference_drives(analysis: Analysis, grid: Cascade) -> list[tuple[float, dict[float, float]]]:
    """Each op-amp's largest output current over band and grid, and the largest at each
    frequency of the band."""
    max_peak = SQRT2 * analysis.chain.source.max_level
    found = []
    for k, sol in enumerate(grid.stages):
        shape = np.shape(grid.v_out[k])
        level = np.full(shape, max_peak)
        with np.errstate(divide="ignore"):
            for limit in sol.built.limits:
                if not limit.bounds_current:
                    bound = np.asarray(limit.peak) / np.abs(grid.probe(k, limit.probe))
                    level = np.minimum(level, np.broadcast_to(bound, shape))
        for label, _part in sol.built.opamps:
            asked = np.abs(np.broadcast_to(grid.probe(k, f"{label}.current"), shape)) * level
            band = asked[..., 1:].reshape(-1, shape[-1] - 1).max(axis=0)
            found.append(
                (
                    float(band.max()),
                    dict(zip(analysis.frequency[1:].tolist(), band.tolist(), strict=True)),
                )
            )
    return found


def reference_index(analysis: Analysis, overrides: dict[str, float]) -> tuple[int | slice, ...]:
    return (
        *(
            int(
                np.argmin(
                    np.abs(sc.rotations - overrides.get(sc.control.label, sc.control.position))
                )
            )
            for sc in analysis.swept_controls
        ),
        slice(None),
    )


# ---- the comparison -------------------------------------------------------------------


@pytest.fixture(params=["outright", "as shipped", "refined"])
def budgets(request: pytest.FixtureRequest, monkeypatch: pytest.MonkeyPatch) -> Iterator[str]:
    """Every segment solved outright; as shipped (four pots of one segment refined); every
    segment refined."""
    if request.param == "outright":
        monkeypatch.setattr(search, "SEGMENT_BUDGET", 12**4)
    if request.param == "refined":
        monkeypatch.setattr(search, "SEGMENT_BUDGET", 1)
    yield request.param


@pytest.mark.parametrize("seed", range(N_CHAINS))
def test_the_search_finds_what_the_exhaustive_grid_finds(seed: int, budgets: str) -> None:
    chain = random_chain(7000 + seed, pots=1 + seed % 4)
    analysis = analyse(chain)
    n_pots = len(analysis.swept_controls)
    assert n_pots == 1 + seed % 4
    grid = full_grid(analysis)
    nodes = node_levels(analysis)
    curves = {c.stage: c for c in headroom_curves(analysis).nodes}
    for k, node in enumerate(nodes):
        ref = reference_worst(analysis, grid, k)
        if ref is None:
            assert node.worst is None
            continue
        assert node.worst is not None
        where = f"chain {seed} ({budgets}), node {node.stage}"
        assert abs(node.worst.headroom_db - ref.headroom_db) <= 1e-9, where
        assert node.worst.frequency_hz == ref.frequency_hz, where
        assert node.worst.controls == ref.controls, where
        assert node.worst.limited_by == ref.limited_by, where
        curve = np.array(curves[node.stage].worst_db)
        same = (curve == ref.curve_db) | (np.abs(curve - ref.curve_db) <= 1e-9)
        if budgets != "outright":
            same |= (curve >= ref.curve_db) & (curve <= ref.curve_db + REFINED_CURVE_DB)
        assert np.all(same), where
    drives = opamp_drives(analysis)
    for drive, (_largest, per_hz) in zip(drives, reference_drives(analysis, grid), strict=True):
        largest = max(per_hz.values())
        assert drive.worst_a == pytest.approx(largest, rel=DRIVE_RTOL, abs=0.0)
        assert per_hz[drive.worst_hz] >= largest * (1.0 - DRIVE_RTOL)
    # The staging checks read the search's candidates at fixed settings.
    for found in post_volume_headroom(analysis):
        k = [s.name for s in chain.stages].index(found.stage)
        volume = chain.stages[analysis.volume_index or 0]
        index = reference_index(analysis, {f"{volume.name}.position": 1.0})
        clip = clip_source_peak(grid, k)
        assert clip is not None
        peak = np.broadcast_to(clip[0], np.shape(grid.v_out[k]))[index]
        max_peak = SQRT2 * chain.source.max_level
        assert found.headroom_db == pytest.approx(float(db(peak.min() / max_peak)), abs=1e-9)
    for boost in tone_boosts(analysis, nodes):
        k = [s.name for s in chain.stages].index(boost.stage)
        labels = [sc.control.label for sc in analysis.swept_controls if sc.stage_index == k]
        index = reference_index(analysis, dict.fromkeys(labels, 1.0))
        gain = np.abs(grid.v_out[k] / grid.v_in[k])
        gain = np.broadcast_to(gain, np.shape(grid.v_out[k]))[index]
        assert boost.boost_db == pytest.approx(float(db(gain.max())), abs=1e-9)


def test_the_random_chains_are_what_they_say() -> None:
    """The generator gives the pot counts asked, with segments the search must refine."""
    kinds = set()
    for seed in range(N_CHAINS):
        chain = random_chain(7000 + seed, pots=1 + seed % 4)
        kinds |= {stage.kind for stage in chain.stages}
    assert {"volume", "tone_bass", "tone_treble", "opamp_gain"} <= kinds
    loops = [
        seed
        for seed in range(N_CHAINS)
        if any(
            stage.values.get("feedback_from")
            for stage in random_chain(7000 + seed, pots=1 + seed % 4).stages
        )
    ]
    assert len(loops) >= 3, loops
