"""The volume rotation at which the nominal level first clips the output stage, per trial,
and from it the notes ``volume-clip-rotation`` and ``volume-never-clips`` as flags
(`chainbudget.spread.flags`).

Notes
-----
The check (`chainbudget.budget.levels.volume_clip_rotation`, judged in
`chainbudget.findings.levels`) solves the chain at the reference frequency with the master
volume on a grid of `VOLUME_POINTS` rotations evenly from 0 to 1 (the other controls as
set) and reads the smallest rotation at which the output stage's clip level, carried to
the source, falls below the nominal level's peak sqrt(2) V_rms (`first_clip_index`, the
same function). Here the same grid is one more array axis beside the trials: the volume's
position is an array of shape (R, 1, 1) against the drawn parts' (T, 1), so each section
holding the volume is solved on (R, T, 1) points and the rest on (T, 1), all in one
`solve_chain`; the output stage's clip peak is then read as (T, R). Memory: the batch's
T = `CHUNK_POINTS` / F trials (F the chain's frequency points) times the 401 rotations,
at one frequency, for the volume's section (a few nodes) and the stages behind it: some
65,000 points on a 100-point axis; on the 18-point axis of tests/test_spread_volume.py
(910 trials a batch) the step's peak is about 125 MB above the rest, measured once.

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
from chainbudget.budget.analysis import VOLUME_POINTS, master_volume, positions_as_set, solve_chain
from chainbudget.budget.levels import clip_source_peak, first_clip_index
from chainbudget.chainfile import Chain
from chainbudget.spread.flags import as_flag, flag_key
from chainbudget.stages.base import Environment

Figures = dict[str, NDArray[np.float64]]

#: The check's volume grid (`chainbudget.budget.analysis.analyse`: ``volume_rotations``).
ROTATIONS = np.linspace(0.0, 1.0, VOLUME_POINTS)


def volume_flags(
    chain: Chain,
    envs: Sequence[Environment],
    reference: NDArray[np.float64],
    nominal: Budget,
    trials: int,
) -> Figures:
    """The ``volume-clip-rotation`` and ``volume-never-clips`` flags (notes, at the volume
    stage) per trial: the first where the nominal level clips the output stage at some
    rotation of the grid, the second where it does not even at full rotation (``chain``
    holds the drawn parts as (T, 1) arrays, ``envs`` each stage's environment of the
    trial, ``reference`` the reference frequency as a (1,) axis). None where the nominal
    check has no volume note."""
    rotations = clip_rotations(chain, envs, reference, nominal, trials)
    if rotations is None:
        assert nominal.volume_clip is None
        return {}
    stage = nominal.volume_clip.stage if nominal.volume_clip is not None else ""
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
) -> NDArray[np.float64] | None:
    """The smallest rotation of the check's grid (`ROTATIONS`) at which the nominal level
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
    # rotations leading, trials next, frequency last: (R, 1, 1) against the parts' (T, 1)
    positions[volume]["position"] = ROTATIONS[:, None, None]
    sweep = solve_chain(chain, envs, reference, positions)
    clip = clip_source_peak(sweep, output)
    assert clip is not None  # the nominal check's output stage has a limit
    peak = np.broadcast_to(clip[0], (ROTATIONS.size, trials, 1))[..., 0].T
    first = first_clip_index(peak, chain.source.level)
    return np.where(first >= 0, ROTATIONS[np.maximum(first, 0)], np.nan)
