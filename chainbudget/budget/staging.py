"""Gain-staging checks that compare nodes: clip order behind the volume, tone boost against
the headroom before it, op-amp supply range and DC paths of op-amp inputs."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.analysis import Analysis
from chainbudget.budget.dcbias import stages_at_dc
from chainbudget.budget.levels import SQRT2, NodeLevels, clip_source_peak, db, set_point_index
from chainbudget.budget.rails import stage_rails, supply_voltages
from chainbudget.stages import KINDS
from chainbudget.stages.base import opamp_part


@dataclass(frozen=True)
class StageHeadroom:
    """A stage's least headroom over the band at max level, in one control setting, dB."""

    stage: str
    headroom_db: float
    frequency_hz: float


@dataclass(frozen=True)
class VolumeReach:
    """How far the master volume can turn before a stage behind it clips at max_level (at
    the reference frequency, the other controls as set); 1 when it never does."""

    stage: str
    rotation: float


@dataclass(frozen=True)
class Boost:
    """A tone stage's greatest gain over the band at full boost, against the headroom of the
    node before it (dB)."""

    stage: str
    boost_db: float
    frequency_hz: float
    upstream_stage: str
    upstream_headroom_db: float


@dataclass(frozen=True)
class SupplyRange:
    """An op-amp stage's total supply, rail to rail, against its part's rated range, V.

    ``low_total_v`` is at the analysed (low-line, loaded) rails, ``high_total_v`` at high
    line with no load: the two ends the minimum and the maximum are checked against.
    """

    stage: str
    opamp: str
    low_total_v: float
    high_total_v: float
    min_v: float | None
    max_v: float | None


@dataclass(frozen=True)
class FloatingInput:
    """An op-amp input with no DC path to a defined potential."""

    stage: str
    pin: str


def post_volume_headroom(analysis: Analysis) -> list[StageHeadroom]:
    """Least headroom over the band of every limited stage behind the volume control, with the
    volume fully up and the other controls as set (the order in which they clip as the
    volume rises)."""
    if analysis.volume_index is None:
        return []
    volume = analysis.chain.stages[analysis.volume_index]
    index = set_point_index(analysis, {f"{volume.name}.position": 1.0})
    found = []
    for k in range(analysis.volume_index + 1, len(analysis.chain.stages)):
        clip = clip_source_peak(analysis.swept, k)
        if clip is None:
            continue
        peak = np.broadcast_to(clip[0], analysis.swept.v_out[k].shape)[index]
        headroom, at = band_headroom_db(peak, analysis.chain.source.max_level)
        found.append(
            StageHeadroom(
                analysis.chain.stages[k].name,
                float(headroom),
                float(analysis.frequency[int(at)]),
            )
        )
    return found


def band_headroom_db(
    peak: NDArray[np.float64], max_level: float
) -> tuple[NDArray[np.float64], NDArray[np.intp]]:
    """A stage's least headroom over the frequency axis (the last axis of ``peak``, the
    source peak at which it clips) at ``max_level``, dB, and where it lies: 20 log10 of
    the least clip peak over sqrt(2) max_level (the headroom of a sine whose rms is
    ``max_level``). Any leading axes (the spread's trials) are kept."""
    at = np.argmin(peak, axis=-1)
    least = np.take_along_axis(peak, at[..., None], axis=-1)[..., 0]
    return db(least / (SQRT2 * max_level)), at


def full_boost_db(
    v_out: NDArray[np.complexfloating[Any, Any]], v_in: NDArray[np.complexfloating[Any, Any]]
) -> tuple[NDArray[np.float64], NDArray[np.intp]]:
    """A stage's greatest gain 20 log10 |v_out/v_in| over the frequency axis (the last),
    dB, and where it lies (any leading axes kept)."""
    gain = np.abs(v_out / v_in)
    at = np.argmax(gain, axis=-1)
    return db(np.take_along_axis(gain, at[..., None], axis=-1)[..., 0]), at


def tone_boosts(analysis: Analysis, nodes: list[NodeLevels]) -> list[Boost]:
    """For each stage with tone controls: its gain at full boost against upstream headroom."""
    found = []
    swept = analysis.swept
    for k, stage in enumerate(analysis.chain.stages):
        kind = KINDS[stage.kind]
        controls = [c for c in kind.controls(stage) if c.sweep]
        if not controls or not kind.shapes_response:
            continue
        upstream = next(
            (nodes[j] for j in range(k - 1, -1, -1) if nodes[j].headroom_db is not None), None
        )
        if upstream is None or upstream.headroom_db is None:
            continue
        index = set_point_index(analysis, {c.label: 1.0 for c in controls})
        shape = swept.v_out[k].shape
        boost, at = full_boost_db(
            np.broadcast_to(swept.v_out[k], shape)[index],
            np.broadcast_to(swept.v_in[k], shape)[index],
        )
        found.append(
            Boost(
                stage.name,
                float(boost),
                float(analysis.frequency[int(at)]),
                upstream.stage,
                upstream.headroom_db,
            )
        )
    return found


def supply_ranges(analysis: Analysis) -> list[SupplyRange]:
    """Total supply of every op-amp stage at both ends, and its part's rated range."""
    crest = supply_voltages(analysis.chain)  # high line, no load
    found = []
    for stage, env in zip(analysis.chain.stages, analysis.envs, strict=True):
        high = stage_rails(stage, crest, "high")
        if KINDS[stage.kind].uses_opamp and env.rails is not None and high is not None:
            part = opamp_part(stage, env)
            found.append(
                SupplyRange(
                    stage.name,
                    part.name,
                    env.rails.total,
                    high.total,
                    part.min_supply,
                    part.max_supply,
                )
            )
    return found


def floating_inputs(analysis: Analysis) -> list[FloatingInput]:
    """Op-amp inputs with no DC path, following DC definition from the source onwards."""
    found = []
    # A resistive (or inductive) source gives the first input a DC path; a capacitive one
    # (a piezo) blocks DC like a series capacitor: the first stage must bias its own input.
    defined = analysis.chain.source.capacitance is None
    for stage in stages_at_dc(analysis.chain):
        kind = KINDS[stage.kind]
        found += [FloatingInput(stage.name, pin) for pin in kind.floating_inputs(stage, defined)]
        defined = kind.output_defined(stage)
    return found


def volume_reach(analysis: Analysis) -> list[VolumeReach]:
    """For every limited stage behind the master volume: the largest rotation of the volume
    at which ``max_level`` still passes it unclipped.

    Notes
    -----
    On the fine volume axis of the analysis (`VOLUME_POINTS` rotations at the reference
    frequency, other controls as set): the source peak at which the stage clips, against
    sqrt(2) max_level; the rotation is the last one before the first that clips, so it is
    exact to the axis's step (1/400).
    """
    sweep, v = analysis.volume_sweep, analysis.volume_index
    if sweep is None or v is None:
        return []
    max_peak = SQRT2 * analysis.chain.source.max_level
    rotations = analysis.volume_rotations
    found = []
    for k in range(v + 1, len(analysis.chain.stages)):
        clip = clip_source_peak(sweep, k)
        if clip is None:
            continue
        passes = np.broadcast_to(clip[0][..., 0], rotations.shape) >= max_peak
        first_fail = int(np.argmin(passes))
        reach = 1.0 if passes.all() else float(rotations[max(first_fail - 1, 0)])
        found.append(VolumeReach(analysis.chain.stages[k].name, reach))
    return found
