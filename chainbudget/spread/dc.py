"""The DC operating point of a batch of trials: the check's own DC walk with the drawn
parts as arrays, each node's DC, the worst-case DC across the load and the DC rules per
trial.

Notes
-----
`chainbudget.budget.dcbias.dc_walk` carries the DC from the source to the load through
each kind's ``dc_output`` (V+ (1 + R_f/R_g) for a non-inverting stage, V_B - V_BE - I_B R
for a follower, Horowitz & Hill 3rd ed. sec. 4.2.1 and 2.2.5), all of them arithmetic on
the part values, so a (T, 1) array of drawn parts gives every trial's DC in one walk (the
follower's base current through its bias resistor follows its drawn beta). The walked
DC at each stage's input is what a DC-coupled stage is built at (`dc_inputs`), so the
signal figures follow the trial's own operating point as the check's do.

The rules are `chainbudget.findings.dcbias` on arrays: ``dc-operating-point`` where the
output's DC lies at or beyond the edge of its window, else ``dc-offset`` where it sits
more than `DC_OFFSET_FRACTION` of the room on its side from its bias point;
``pot-carries-dc``, ``dc-into-load`` (an error from `SPEAKER_DC_ERROR_V` on a
loudspeaker, a warning from `SPEAKER_DC_WARN_V`, a note on a line load) and
``offset-at-load`` (the worst case from the op-amps' offsets, where the DC as built is
not already past the limit); ``loop-open-at-dc`` is the loop's shape, the same in every
trial.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.dcbias import EDGE_TOLERANCE_V, DcPoint, dc_error_walk, dc_walk
from chainbudget.chainfile import Chain
from chainbudget.spread.flags import as_flag, flag_key
from chainbudget.stages.base import Environment
from chainbudget.thresholds import (
    DC_OFFSET_FRACTION,
    LINE_DC_NOTE_V,
    POT_DC_LIMIT_V,
    SPEAKER_DC_ERROR_V,
    SPEAKER_DC_WARN_V,
    SPEAKER_MAX_OHM,
)

Figures = dict[str, NDArray[np.float64]]


def walked(
    chain: Chain, envs: Sequence[Environment]
) -> tuple[tuple[DcPoint, ...], tuple[Environment, ...]]:
    """Every stage's DC point for the drawn parts, and the environments with the DC at each
    stage's input as that walk finds it (`Environment.dc_input_v`)."""
    points = dc_walk(chain, envs)
    inputs = [p.input_v for p in points] + [None] * (len(envs) - len(points))
    return points, tuple(replace(env, dc_input_v=dc) for env, dc in zip(envs, inputs, strict=True))


def _trials(array: Any, trials: int) -> NDArray[np.float64]:
    flat = np.asarray(array, dtype=float).reshape(-1)
    return np.broadcast_to(flat, (trials,)).copy() if flat.size == 1 else flat.reshape(trials)


def dc_figures(
    chain: Chain,
    envs: Sequence[Environment],
    points: Sequence[DcPoint],
    trials: int,
    nominal_offset_v: float | None,
) -> Figures:
    """Each node's ``dc_v``, the worst-case ``output.offset_v`` (where the nominal check
    gives one) and the DC rules' flags, per trial, shape (T,)."""
    figures: Figures = {}
    for point in points:
        if point.node_v is not None:
            figures[f"nodes.{point.stage}.dc_v"] = _trials(point.node_v, trials)
        figures.update(_point_flags(point, trials))
    if not points:
        return figures
    last = points[-1]
    load_ohm = chain.load.impedance
    figures.update(_load_flags(last, load_ohm, trials))
    error = dc_error_walk(chain, envs)[-1]
    if last.node_v is not None and error is not None and nominal_offset_v is not None:
        offset = _trials(np.abs(last.node_v) + np.asarray(error), trials)
        figures["output.offset_v"] = offset
        if load_ohm < SPEAKER_MAX_OHM:
            built = np.abs(_trials(last.node_v, trials))
            worst = (built < SPEAKER_DC_WARN_V) & (offset >= SPEAKER_DC_WARN_V)
            figures[flag_key("warning", "offset-at-load", last.stage)] = as_flag(worst, trials)
    return figures


def _point_flags(point: DcPoint, trials: int) -> Figures:
    """`chainbudget.findings.dcbias` on one stage's DC point, element-wise over trials."""
    flags: Figures = {}
    where = point.stage
    if point.loop_open_at_dc:
        flags[flag_key("error", "loop-open-at-dc", where)] = as_flag(True, trials)
    w, v = point.window, point.output_v
    if w is not None and v is not None:
        value = _trials(v, trials)
        low, high, bias = (_trials(x, trials) for x in (w.low_v, w.high_v, w.bias_v))
        outside = ~((low + EDGE_TOLERANCE_V < value) & (value < high - EDGE_TOLERANCE_V))
        offset = value - bias
        room = np.where(offset >= 0.0, high - bias, bias - low)
        with np.errstate(divide="ignore", invalid="ignore"):
            fraction = np.where(
                room <= 0.0,
                np.where(offset != 0.0, np.inf, 0.0),
                np.abs(offset) / np.where(room <= 0.0, 1.0, room),
            )
        flags[flag_key("error", "dc-operating-point", where)] = as_flag(outside, trials)
        flags[flag_key("warning", "dc-offset", where)] = as_flag(
            ~outside & (fraction > DC_OFFSET_FRACTION), trials
        )
    if point.pot_top_v is not None:
        top = np.abs(_trials(point.pot_top_v, trials))
        flags[flag_key("warning", "pot-carries-dc", where)] = as_flag(top > POT_DC_LIMIT_V, trials)
    return flags


def _load_flags(point: DcPoint, load_ohm: float, trials: int) -> Figures:
    """``dc-into-load``: the DC the last stage puts on the load."""
    if point.node_v is None:
        return {}
    dc = np.abs(_trials(point.node_v, trials))
    where = point.stage
    if load_ohm < SPEAKER_MAX_OHM:
        return {
            flag_key("error", "dc-into-load", where): as_flag(dc >= SPEAKER_DC_ERROR_V, trials),
            flag_key("warning", "dc-into-load", where): as_flag(
                (dc >= SPEAKER_DC_WARN_V) & (dc < SPEAKER_DC_ERROR_V), trials
            ),
        }
    return {flag_key("note", "dc-into-load", where): as_flag(dc >= LINE_DC_NOTE_V, trials)}
