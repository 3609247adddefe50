"""Gain staging and headroom at every node, nominally and in the worst case.

Notes
-----
Each stage declares swing limits as a peak bound on a linear probe of its network (output
voltage within the rails, op-amp output current, slew-limited voltage SR/(2 pi f), a
follower's emitter current, ...). With the probe q per volt of source voltage, the source
peak at which limit l is reached is L_l/|q_l|; the node's clip level is the tightest of
these carried to the node, and its headroom at ``max_level`` is
min_l(L_l/|q_l|) / (sqrt(2) V_max), in dB.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import cast

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.budget.analysis import Analysis
from chainbudget.cascade import Cascade

SQRT2 = float(np.sqrt(2.0))


@dataclass(frozen=True)
class WorstCase:
    """Where the worst-case headroom of a node occurs."""

    headroom_db: float
    frequency_hz: float
    #: Each control's setting there, keyed by (stage name, control key).
    controls: dict[tuple[str, str], float]
    limited_by: str


@dataclass(frozen=True)
class NodeLevels:
    """Level figures of one stage's output node (nominal controls, reference frequency)."""

    stage: str
    kind: str
    gain_db: float
    total_gain_db: float
    level_vrms: float
    max_level_vrms: float
    clip_vpk: float | None
    headroom_db: float | None
    nominal_headroom_db: float | None
    limited_by: str | None
    limit_what: str | None
    worst: WorstCase | None
    zout_ohm: float
    zload_ohm: float
    #: The binding limit bounds a current (the stage runs out of drive, not of voltage).
    limited_by_current: bool = False


# The floor of every level figure in dB: a ratio of zero (a node whose swing window has
# closed, its bias outside its rails; a silenced path) reads as this far below anything
# real instead of -inf, which no JSON can carry.
DB_FLOOR = -400.0


def db(ratio: ArrayLike) -> NDArray[np.float64]:
    """20 log10 of an amplitude ratio, floored at DB_FLOOR (zero included, no warning)."""
    with np.errstate(divide="ignore"):
        return np.maximum(np.asarray(20.0 * np.log10(np.abs(ratio)), dtype=float), DB_FLOOR)


def clip_source_peak(cas: Cascade, k: int) -> tuple[NDArray[np.float64], NDArray[np.intp]] | None:
    """Source open-circuit peak voltage at which stage k reaches its tightest limit.

    Returns the peak (shape ``batch + (F,)``) and the index of the binding limit, or None
    for a stage that declares no limit. Worked out once per cascade and stage (read-only
    arrays: every figure that needs a node's clip shares them).
    """
    if k in cas.clips:
        return cast(tuple[NDArray[np.float64], NDArray[np.intp]] | None, cas.clips[k])
    limits = cas.stages[k].built.limits
    found = None
    if limits:
        with np.errstate(divide="ignore"):
            peaks = [np.asarray(lim.peak) / np.abs(cas.probe(k, lim.probe)) for lim in limits]
        stacked = np.stack(np.broadcast_arrays(*peaks))
        peak, binding = stacked.min(axis=0), stacked.argmin(axis=0)
        peak.flags.writeable = binding.flags.writeable = False
        found = (peak, binding)
    cas.clips[k] = found
    return found


def set_point_index(analysis: Analysis, overrides: dict[str, float] | None = None) -> tuple:
    """Index into ``analysis.swept`` with every control as set, or with the controls of one
    stage fully up (``overrides`` of 1.0): the candidates hold no other setting away from
    the settings as set."""
    overrides = overrides or {}
    wanted = [
        int(np.argmin(np.abs(sc.rotations - overrides.get(sc.control.label, sc.control.position))))
        for sc in analysis.swept_controls
    ]
    return (analysis.candidate_row(wanted), slice(None))


def node_levels(analysis: Analysis) -> list[NodeLevels]:
    """Per-stage gain, level, clip level and headroom (nominal and worst case)."""
    chain = analysis.chain
    nominal = analysis.nominal
    max_peak = SQRT2 * chain.source.max_level
    found: list[NodeLevels] = []
    for k, sol in enumerate(nominal.stages):
        v_out = nominal.v_out[k][..., 0]
        gain = v_out / nominal.v_in[k][..., 0]
        clip = clip_source_peak(nominal, k)
        clip_vpk = headroom = nominal_headroom = None
        limited_by = limit_what = None
        worst = None
        by_current = False
        if clip is not None:
            peak, which = clip[0][..., 0], int(clip[1][..., 0])
            limit = sol.built.limits[which]
            clip_vpk = float(peak * abs(v_out))
            headroom = float(db(peak / max_peak))
            nominal_headroom = float(db(peak / (SQRT2 * chain.source.level)))
            limited_by, limit_what = limit.name, limit.what
            by_current = limit.bounds_current
            worst = _worst_case(analysis, k)
        found.append(
            NodeLevels(
                stage=sol.stage.name,
                kind=sol.stage.kind,
                gain_db=float(db(gain)),
                total_gain_db=float(db(v_out)),
                level_vrms=float(chain.source.level * abs(v_out)),
                max_level_vrms=float(chain.source.max_level * abs(v_out)),
                clip_vpk=clip_vpk,
                headroom_db=headroom,
                nominal_headroom_db=nominal_headroom,
                limited_by=limited_by,
                limit_what=limit_what,
                worst=worst,
                zout_ohm=float(abs(nominal.output_impedance[k][..., 0])),
                zload_ohm=float(abs(1.0 / nominal.load_admittance[k][..., 0])),
                limited_by_current=by_current,
            )
        )
    return found


def _worst_case(analysis: Analysis, k: int) -> WorstCase:
    """The worst case the search placed (`chainbudget.budget.search`), worked out exactly
    by the cascade at its setting."""
    assert analysis.worst is not None
    found = analysis.worst.nodes[k]
    assert found is not None
    rotations = analysis.setting_rotations(found.setting)
    col = found.frequency_index
    at_worst = analysis.at_settings(found.setting[:, None])
    clip = clip_source_peak(at_worst, k)
    assert clip is not None
    peak, which = (np.broadcast_to(a, at_worst.v_out[k].shape)[0, col] for a in clip)
    # Controls after this node matter only through loading; the search covers them, the
    # report names the settings of this stage and the ones before it.
    stages = analysis.chain.stages
    controls = {
        (stages[sc.stage_index].name, sc.control.key): float(sc.rotations[rotations[sc.axis]])
        for sc in analysis.swept_controls
        if sc.stage_index <= k
    }
    limit = at_worst.stages[k].built.limits[int(which)]
    return WorstCase(
        headroom_db=float(db(peak / (SQRT2 * analysis.chain.source.max_level))),
        frequency_hz=float(analysis.frequency[col]),
        controls=controls,
        limited_by=limit.name,
    )


@dataclass(frozen=True)
class VolumeClip:
    """Rotation of the volume pot at which the nominal level first clips the output stage."""

    stage: str
    output_stage: str
    rotation: float | None


def volume_clip_rotation(analysis: Analysis, output_index: int) -> VolumeClip | None:
    """Smallest volume rotation at which the nominal level reaches the output's clip level.

    ``rotation`` is None when even full rotation leaves the output short of clipping.
    """
    if analysis.volume_sweep is None or analysis.volume_index is None:
        return None
    if output_index < analysis.volume_index:
        return None
    clip = clip_source_peak(analysis.volume_sweep, output_index)
    assert clip is not None
    first = int(first_clip_index(clip[0][..., 0], analysis.chain.source.level))
    rotation = float(analysis.volume_rotations[first]) if first >= 0 else None
    stages = analysis.chain.stages
    return VolumeClip(stages[analysis.volume_index].name, stages[output_index].name, rotation)


def first_clip_index(peak: ArrayLike, level_vrms: float) -> NDArray[np.intp]:
    """Index of the first rotation on the volume grid (the last axis of ``peak``, rotations
    ascending) at which a sine of ``level_vrms`` clips the output stage, -1 where none does.

    ``peak`` is the source peak at which the output stage reaches its clip level at each
    rotation (`clip_source_peak` on the volume sweep; any leading axes, e.g. trials): the
    nominal level clips there when its peak sqrt(2) V_rms exceeds it. Shape ``peak`` without
    its last axis.
    """
    clipping = np.asarray(peak) < SQRT2 * level_vrms
    return np.where(clipping.any(axis=-1), np.argmax(clipping, axis=-1), -1)


@dataclass(frozen=True)
class HeadroomCurve:
    """A node's headroom of max_level across the band, dB: with the controls as set, and the
    least over every swept control at each frequency."""

    stage: str
    as_set_db: tuple[float, ...]
    worst_db: tuple[float, ...]


@dataclass(frozen=True)
class HeadroomCurves:
    """Headroom of every limited node over the band grid (the plot's data)."""

    frequency_hz: tuple[float, ...]
    nodes: tuple[HeadroomCurve, ...]


def headroom_curves(analysis: Analysis) -> HeadroomCurves:
    """Headroom against frequency for every node with a limit (band grid only): as set, and
    the least over every swept control at each frequency, worked out at the combination the
    search found there."""
    band = analysis.band_slice
    max_peak = SQRT2 * analysis.chain.source.max_level
    curves = []
    assert analysis.worst is not None
    for k, sol in enumerate(analysis.nominal.stages):
        as_set = clip_source_peak(analysis.nominal, k)
        found = analysis.worst.nodes[k]
        if as_set is None or found is None:
            continue
        least = clip_source_peak(analysis.at_settings(found.curve_settings), k)
        assert least is not None
        worst = np.broadcast_to(least[0], (1, analysis.frequency.size))[0]
        curves.append(
            HeadroomCurve(
                sol.stage.name,
                tuple(float(v) for v in db(as_set[0][..., band] / max_peak)),
                tuple(float(v) for v in db(worst[band] / max_peak)),
            )
        )
    return HeadroomCurves(tuple(float(f) for f in analysis.frequency[band]), tuple(curves))
