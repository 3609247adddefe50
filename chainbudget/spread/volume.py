"""The volume rotation at which the nominal level first clips the output stage, per trial,
and from it the notes ``volume-clip-rotation`` and ``volume-never-clips`` as flags
(`chainbudget.spread.flags`).

Notes
-----
The check (`chainbudget.budget.levels.volume_clip_rotation`, judged in
`chainbudget.findings.levels`) solves the chain at the reference frequency with the master
volume on the grid `VOLUME_ROTATIONS` (401 rotations evenly from 0 to 1; the other controls as
set), and reads the smallest rotation at which the output stage's clip level, carried to
the source, falls below the nominal level's peak sqrt(2) V_rms (`first_clip_index`, the
same function). Here the same grid is one more array axis beside the trials: the volume's
position is an array of shape (R, 1, 1) against the drawn parts' (T, 1), so each section
holding the volume is solved on (R, T, 1) points and the rest on (T, 1), in one
`solve_chain` per block of rotations; the output stage's clip peak is then read as (T, R).
The grid is taken in blocks, lowest rotations first, of at most the batch's point budget
(`chainbudget.spread.evaluate.CHUNK_POINTS`, the T x F points of the chain's own solve)
over the trials, so the step's memory is bounded as the batch's is: on a 100-point axis
about 100 rotations a block (5 blocks), on a coarse 18-point one 18. A trial's first
clipping rotation is the first block's that has one, and once every trial of the batch
has one the rest of the grid is not solved (the check reads the first rotation only).

The stages the rule looks at (the master volume, the output stage: the last stage with a
swing limit, behind the volume) follow the chain's structure and are the nominal check's
(`Budget.volume_clip`): a chain whose check gives no volume note draws none.

The rotation itself is no spread figure: the check JSON carries it only in the finding's
``figures`` (a finding's data, not a figure path of the contract), as it does
``clip-order``'s ``margin_db``; the spread counts the two notes in ``yield_by_code``.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.analysis import (
    VOLUME_ROTATIONS,
    master_volume,
    positions_as_set,
    solve_chain,
)
from chainbudget.budget.levels import clip_source_peak, first_clip_index
from chainbudget.chainfile import Chain
from chainbudget.spread.flags import as_flag, flag_key
from chainbudget.stages.base import Environment

Figures = dict[str, NDArray[np.float64]]


def volume_flags(
    chain: Chain,
    envs: Sequence[Environment],
    reference: NDArray[np.float64],
    nominal: Budget,
    trials: int,
    points: int,
) -> Figures:
    """The ``volume-clip-rotation`` and ``volume-never-clips`` flags (notes, at the volume
    stage) per trial: the first where the nominal level clips the output stage at some
    rotation of the grid, the second where it does not even at full rotation (``chain``
    holds the drawn parts as (T, 1) arrays, ``envs`` each stage's environment of the
    trial, ``reference`` the reference frequency as a (1,) axis, ``points`` the most
    points a block of rotations solves with the trials: the batch's budget). None where
    the nominal check has no volume note."""
    rotations = clip_rotations(chain, envs, reference, nominal, trials, points)
    if rotations is None:
        assert nominal.volume_clip is None
        return {}
    assert nominal.volume_clip is not None  # what `clip_rotations` read the stages from
    stage = nominal.volume_clip.stage
    clips = np.isfinite(rotations)
    return {
        flag_key("note", "volume-clip-rotation", stage): as_flag(clips, trials),
        flag_key("note", "volume-never-clips", stage): as_flag(~clips, trials),
    }


def clip_rotations(
    chain: Chain,
    envs: Sequence[Environment],
    reference: NDArray[np.float64],
    nominal: Budget,
    trials: int,
    points: int,
) -> NDArray[np.float64] | None:
    """The smallest rotation of the check's grid (`VOLUME_ROTATIONS`) at which the nominal level
    clips the output stage, per trial, (T,); NaN in a trial where even full rotation does
    not (module notes). None where the nominal check has no volume note (no volume
    control, no limited stage, or the output stage ahead of the volume)."""
    found = nominal.volume_clip
    volume = master_volume(chain)
    if found is None or volume is None:
        return None
    names = [stage.name for stage in chain.stages]
    output = names.index(found.output_stage)
    positions: list[dict[str, object]] = [dict(p) for p in positions_as_set(chain.stages)]
    # The grid in blocks of rotations, lowest first, each block at most ``points`` points
    # with the trials (memory bounded as a batch's frequency axis is); a trial keeps the
    # first block's first clipping rotation, and once every trial has one the rest of the
    # grid cannot change it.
    block = max(1, points // max(trials, 1))
    first = np.full(trials, -1)
    for start in range(0, VOLUME_ROTATIONS.size, block):
        rotations = VOLUME_ROTATIONS[start : start + block]
        # rotations leading, trials next, frequency last: (R, 1, 1) against the parts' (T, 1)
        positions[volume]["position"] = rotations[:, None, None]
        sweep = solve_chain(chain, envs, reference, positions)
        clip = clip_source_peak(sweep, output)
        assert clip is not None  # the nominal check's output stage has a limit
        peak = np.broadcast_to(clip[0], (rotations.size, trials, 1))[..., 0].T
        here = first_clip_index(peak, chain.source.level)
        new = (first < 0) & (here >= 0)
        first[new] = start + here[new]
        if np.all(first >= 0):
            break
    return np.where(first >= 0, VOLUME_ROTATIONS[np.maximum(first, 0)], np.nan)
