"""The gain-staging rules that compare stages, per trial: the clip order behind the volume
control (``clip-order``) and a tone stage's full boost against the headroom before it
(``boost-over-headroom``), as flags (`chainbudget.spread.flags`).

Notes
-----
The check's rules (`chainbudget.budget.staging.post_volume_headroom` and `tone_boosts`,
judged in `chainbudget.findings.levels`) read the nominal check's swept grid at two kinds
of setting: the master volume fully up with the other controls as set, and a tone stage's
swept controls fully up with the others as set; each over the whole frequency axis. The
held settings the other spread figures use (`chainbudget.spread.settings`) hold the volume
fully up at the reference only, so the chain is joined here at each such setting over the
whole axis: only the sections whose controls move are solved again (the trial axis in
their parts), every other section is the as-set cascade's own solution (a loop section,
whose inner terms that cascade does not keep, is solved once more as set).

The stages each rule looks at follow the chain's structure (which stages are limited, the
volume's place, which stages shape the response), not the parts' values: they are the
nominal check's.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.analysis import chain_ends, master_volume, positions_as_set
from chainbudget.budget.levels import SQRT2, clip_source_peak, db
from chainbudget.budget.staging import band_headroom_db, full_boost_db
from chainbudget.cascade import Cascade, SectionSolution, solve_section
from chainbudget.cascade import cascade as join_cascade
from chainbudget.chainfile import Chain
from chainbudget.findings.levels import boost_clips, clips_before_output
from chainbudget.loops import Section, sections
from chainbudget.spread.flags import as_flag, flag_key
from chainbudget.stages import KINDS
from chainbudget.stages.base import Environment
from chainbudget.thresholds import SAME_MARGIN_DB

Figures = dict[str, NDArray[np.float64]]
Positions = list[dict[str, float]]


def staging_flags(
    chain: Chain,
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    as_set: Cascade,
    trials: int,
    worst_headroom: Callable[[], Mapping[str, NDArray[np.float64]]],
) -> Figures:
    """The ``clip-order`` flag of every limited stage behind the master volume but the
    output stage, and the ``boost-over-headroom`` flag of every tone stage with a limited
    stage before it, per trial (``chain`` holds the drawn parts as (T, 1) arrays, ``envs``
    each stage's environment of the trial, ``as_set`` the chain solved with the controls
    as set on ``frequency``; ``worst_headroom`` gives the spread's
    ``nodes.STAGE.worst_headroom_db`` figures, asked for only where a tone stage has a
    boost to judge: a stage the check finds clipping in its worst case has no boost
    finding, `hidden_boosts`)."""
    joined = _Joiner(chain, envs, frequency, as_set)
    return {
        **_clip_order(chain, joined, trials),
        **_boosts(chain, joined, trials, worst_headroom),
    }


def needs_worst_headroom(nominal: Budget) -> bool:
    """Whether `staging_flags` asks for the worst headroom figures: where the chain has a
    tone stage with a limited stage before it (the nominal check's boosts)."""
    return bool(nominal.boosts)


def hidden_boosts(
    chain: Chain,
    headroom: Mapping[int, NDArray[np.float64]],
    worst: Mapping[str, NDArray[np.float64]],
    trials: int,
) -> dict[int, NDArray[np.bool_]]:
    """Per stage, the trials in which the check reports ``clip-worst-case`` there, so
    that its ``boost-over-headroom`` is not reported (`chainbudget.findings.levels.rules`:
    one cause, one finding).

    Notes
    -----
    As the rules find it: a stage ahead of the volume control whose worst headroom is
    below 0 dB while its headroom at the reference, controls as set, is not; of a run of
    such stages whose worst margins agree to within `SAME_MARGIN_DB` of the run's first,
    the first alone keeps the finding (`chainbudget.findings.levels._merge_carried`).
    ``headroom`` holds each limited stage's headroom at the reference per trial.
    """
    volume = master_volume(chain)
    ahead = len(chain.stages) if volume is None else volume
    first = np.zeros(trials)  # the worst margin of the run's first stage, per trial
    running = np.zeros(trials, dtype=bool)
    found: dict[int, NDArray[np.bool_]] = {}
    for k in range(ahead):
        path = f"nodes.{chain.stages[k].name}.worst_headroom_db"
        if k not in headroom or path not in worst:
            continue
        margin = np.asarray(worst[path], dtype=float)
        draws = (margin < 0.0) & (headroom[k] >= 0.0)
        echo = draws & running & (np.abs(first - margin) < SAME_MARGIN_DB)
        kept = draws & ~echo
        first = np.where(kept, margin, first)
        running |= kept
        found[k] = kept
    return found


def _swept(chain: Chain, k: int) -> dict[str, float]:
    """Stage ``k``'s swept controls fully up (the check moves only those)."""
    stage = chain.stages[k]
    return {c.key: 1.0 for c in KINDS[stage.kind].controls(stage) if c.sweep}


def _clip_order(chain: Chain, joined: _Joiner, trials: int) -> Figures:
    """`chainbudget.findings.levels` ``clip-order``: with the volume fully up (the check's
    `post_volume_headroom`), a limited stage behind the volume whose least headroom over
    the band is below the output stage's (the last limited stage's)."""
    volume = master_volume(chain)
    if volume is None:
        return {}
    cascade = joined.at({volume: _swept(chain, volume)})
    max_level = chain.source.max_level
    least = {}
    for k in range(volume + 1, len(chain.stages)):
        clip = clip_source_peak(cascade, k)
        if clip is not None:
            peak = np.broadcast_to(clip[0], np.shape(cascade.v_out[k]))
            least[k] = band_headroom_db(peak, max_level)[0]
    if not least:
        return {}
    output = max(least)
    limited = [k for k in range(len(chain.stages)) if clip_source_peak(joined.as_set, k)]
    if output != limited[-1]:  # the output stage sits ahead of the volume: no rule
        return {}
    return {
        flag_key("warning", "clip-order", chain.stages[k].name): as_flag(
            clips_before_output(least[output], headroom), trials
        )
        for k, headroom in least.items()
        if k != output
    }


def _boosts(
    chain: Chain,
    joined: _Joiner,
    trials: int,
    worst_headroom: Callable[[], Mapping[str, NDArray[np.float64]]],
) -> Figures:
    """`chainbudget.findings.levels` ``boost-over-headroom``: a tone stage's greatest gain
    |v_out/v_in| over the band with its swept controls fully up (the check's
    `tone_boosts`), above the headroom at the reference, controls as set, of the nearest
    limited stage before it; not where the check finds the stage itself clipping in its
    worst case (`hidden_boosts`)."""
    found: Figures = {}
    max_peak = SQRT2 * chain.source.max_level
    headroom = {}
    for j in range(len(chain.stages)):
        clip = clip_source_peak(joined.as_set, j)
        if clip is not None:
            at_reference = db(np.asarray(clip[0])[..., 0] / max_peak)
            headroom[j] = np.broadcast_to(at_reference.reshape(-1), (trials,))
    hidden: dict[int, NDArray[np.bool_]] | None = None
    for k, stage in enumerate(chain.stages):
        kind = KINDS[stage.kind]
        up = _swept(chain, k)
        if not up or not kind.shapes_response:
            continue
        upstream = next((j for j in range(k - 1, -1, -1) if j in headroom), None)
        if upstream is None:
            continue
        cascade = joined.at({k: up})
        boost = full_boost_db(cascade.v_out[k], cascade.v_in[k])[0]
        drawn = as_flag(boost_clips(boost, headroom[upstream]), trials) > 0.5
        if hidden is None:
            hidden = hidden_boosts(chain, headroom, worst_headroom(), trials)
        if k in hidden:
            drawn &= ~hidden[k]
        found[flag_key("warning", "boost-over-headroom", stage.name)] = drawn.astype(float)
    return found


class _Joiner:
    """The chain joined at settings that move a few stages' controls from as set, on the
    whole frequency axis, the unmoved sections taken from the as-set cascade."""

    def __init__(
        self,
        chain: Chain,
        envs: Sequence[Environment],
        frequency: NDArray[np.float64],
        as_set: Cascade,
    ) -> None:
        self.chain, self.envs, self.frequency, self.as_set = chain, envs, frequency, as_set
        self.units = sections(chain.stages)
        self.positions = positions_as_set(chain.stages)
        self._loops: dict[int, SectionSolution] = {}

    def _unmoved(self, unit: Section) -> SectionSolution:
        if not unit.is_loop:
            sol = self.as_set.stages[unit.first]
            return SectionSolution(unit, sol.two_port, (sol,))
        if unit.first not in self._loops:
            self._loops[unit.first] = solve_section(
                self.chain.stages, self.envs, self.frequency, self.positions, unit
            )
        return self._loops[unit.first]

    def at(self, moved: Mapping[int, Mapping[str, float]]) -> Cascade:
        """The cascade with stage k's controls at ``moved[k]`` (the others as set); the
        as-set cascade itself where nothing moves."""
        positions: Positions = [dict(p) for p in self.positions]
        changed = set()
        for k, controls in moved.items():
            for key, value in controls.items():
                if positions[k].get(key) != value:
                    positions[k][key] = value
                    changed.add(k)
        if not changed:
            return self.as_set
        solutions = [
            solve_section(self.chain.stages, self.envs, self.frequency, positions, unit)
            if any(k in changed for k in unit.indices)
            else self._unmoved(unit)
            for unit in self.units
        ]
        return join_cascade(solutions, *chain_ends(self.chain, self.frequency))
