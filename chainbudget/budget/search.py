"""The worst-case search over every swept control, without a grid of every pot at once.

A node's worst headroom is the least, over the band and every combination of swept rotations,
of the source peak at which one of its limits binds. The search finds that combination (and
the ones the other figures need) segment by segment instead of solving the product of every
pot's rotations, so that its cost grows polynomially with the pots and its memory stays
bounded; the figures themselves are then worked out exactly, by the cascade, at the
combinations it found (`chainbudget.budget.analysis`).

Notes
-----
The clip level of node k at frequency f, P = min over its limits of L / |probe|, is
pi(own segment) prod |gamma|(earlier segments) (`chainbudget.budget.segments`), so its least
over every combination is the least pi of the own segment times the least |gamma| of each
earlier one. A segment of up to `SEGMENT_BUDGET` combinations is solved outright, in blocks;
a larger one by coordinate refinement: each run of its stages in turn over all the run's
combinations, the others held, until nothing moves. Within a segment the stages couple
through their impedances both ways, but weakly where an op-amp output (milliohms to ohms)
drives a kilohm input, and the refinement has found the exhaustive grid's worst cases on
every chain it was held against (tests/test_worst_search.py). The reported worst point among
near-equal ones follows `chainbudget.budget.ties`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.segments import (
    Evaluated,
    Floats,
    Index,
    Objective,
    Part,
    SearchInput,
    SectionGrid,
    Segment,
    View,
    blocks,
    digits,
    segments_of,
    windows,
)
from chainbudget.budget.ties import (
    DISTANCE_EPS,
    TIE_DB,
    TIE_LN,
    Table,
    merge,
    nearest,
    segment_table,
    shortfall,
)
from chainbudget.stages.base import Limit

__all__ = ["TIE_DB", "NodeWorst", "SearchInput", "SearchResult", "SectionGrid", "search"]

# Combinations of a segment's own rotations solved outright; past this, coordinate refinement.
# Any three pots of 12 rotations, or a two-band stage and one more pot, are solved outright.
SEGMENT_BUDGET = 2048
# Combinations of a run of stages the refinement tries at once.
WINDOW_BUDGET = 256
# Rounds of coordinate refinement (each tries every run once) before it stops regardless.
MAX_ROUNDS = 8
# Op-amp output current demands within this fraction of the largest are near-equal; the
# settings of the largest few are kept, for the cascade's own arithmetic to choose among.
DRIVE_RTOL = 1e-9
DRIVE_FREQUENCIES = 1


@dataclass(frozen=True)
class NodeWorst:
    """Where the search put one limited node's worst case."""

    setting: Index  # (stages,): combination of each stage at the reported worst point
    frequency_index: int
    curve_settings: Index  # (stages, F): combination of each stage at the least, per f


@dataclass(frozen=True)
class SearchResult:
    """The settings the worst-case figures are worked out at."""

    nodes: tuple[NodeWorst | None, ...]
    # The settings (stages, n) of the largest output current asked of each op-amp (stage,
    # label): one per frequency at which the demand comes within DRIVE_RTOL of its largest
    # (DRIVE_FREQUENCIES at most), so that the cascade's arithmetic picks among them.
    drives: tuple[tuple[int, str, Index], ...]


class Gain(Objective):
    """|gamma|: the segment's share of the chain's loss (least = most gain)."""

    def score(self, ev: Evaluated) -> Floats:
        return np.abs(ev.gamma)


def _limit_peak(limit: Limit, n_freq: int) -> Floats:
    return np.broadcast_to(np.asarray(limit.peak, dtype=float), (n_freq,))


class Clip(Objective):
    """pi: node k's clip level over its own segment, min over limits of L / |h|."""

    def __init__(self, k: int, limits: Sequence[Limit], n_freq: int) -> None:
        self.k = k
        self.limits = [(lim.probe, _limit_peak(lim, n_freq)) for lim in limits]

    def score(self, ev: Evaluated) -> Floats:
        cols = ev.view.cols
        least: Floats | None = None
        with np.errstate(divide="ignore"):
            for probe, peak in self.limits:
                value = peak[cols] / ev.size(self.k, probe)
                least = value if least is None else np.minimum(least, value)
        assert least is not None
        return least


class Drive(Objective):
    """Minus the output current asked of an op-amp at max_level or at its stage's voltage
    clip level, whichever is lower (the least is the largest demand); ``upstream`` is the
    greatest 1/|gamma| product of the segments before, per frequency."""

    def __init__(
        self,
        k: int,
        probe: str,
        voltage_limits: Sequence[Limit],
        upstream: Floats,
        max_peak: float,
    ) -> None:
        n_freq = upstream.size
        self.k, self.probe, self.max_peak, self.upstream = k, probe, max_peak, upstream
        self.limits = [(lim.probe, _limit_peak(lim, n_freq)) for lim in voltage_limits]

    def score(self, ev: Evaluated) -> Floats:
        cols = ev.view.cols
        current = ev.size(self.k, self.probe)
        level = self.max_peak * self.upstream[cols] * np.ones_like(current)
        with np.errstate(divide="ignore"):
            for probe, peak in self.limits:
                level = np.minimum(level, peak[cols] / ev.size(self.k, probe))
        with np.errstate(invalid="ignore"):
            asked = np.where(current == 0.0, 0.0, current * level)
        return -asked

    def tie_break(self, ev: Evaluated) -> Floats:
        """Minus the demand before any voltage clip: where the stage clips, the demand is
        flat in the gain ahead of it, and a refinement moving only that gain would stall
        short of the setting that clips later at a larger current."""
        return -ev.size(self.k, self.probe) * self.upstream[ev.view.cols]


def _least_of(scores: Floats, best: Floats, numbers: Index, where: Index) -> None:
    """Fold a block's scores (combinations, columns) into the running least and where."""
    at = np.argmin(scores, axis=0)
    value = scores[at, np.arange(scores.shape[1])]
    better = value < best
    best[better] = value[better]
    where[better] = numbers[at][better]


def _least(view: View, objectives: Sequence[Objective]) -> list[tuple[Floats, Index]]:
    """Each objective's least value per column and the setting (swept stages, columns)
    reaching it, over every combination of the segment (solved outright)."""
    n_cols = view.cols.size
    best = [np.full(n_cols, np.inf) for _ in objectives]
    where = [np.zeros(n_cols, dtype=np.intp) for _ in objectives]
    for block in blocks(view.sizes, n_cols):
        ev = view.evaluate(dict(zip(view.swept, block.index, strict=True)))
        for o, objective in enumerate(objectives):
            _least_of(block.rows(objective.score(ev)), best[o], block.numbers, where[o])
    return [(b, digits(w, view.sizes)) for b, w in zip(best, where, strict=True)]


def _runs_from(view: View, k: int) -> list[list[int]]:
    """The runs of stages in the order a refinement for stage k tries them: the runs at and
    after k first (its own pots and its load), then those before it, nearest first (the
    gain that drives it)."""
    runs = windows(view.sizes, WINDOW_BUDGET)
    unit = view.inp.unit_of[k] if k >= 0 else -1
    after = [run for run in runs if view.swept[run[-1]] >= unit]
    before = [run for run in runs if view.swept[run[-1]] < unit]
    return after + before[::-1]


def _refine(view: View, objective: Objective, start: Index) -> tuple[Floats, Index]:
    """Coordinate refinement from ``start`` (swept stages, columns): each run of stages in
    turn (`_runs_from`) takes, at each frequency, its best combination with the others
    held, until a round moves nothing. Where the objective is level, its tie-break
    decides."""
    n_cols = view.cols.size
    cols = np.arange(n_cols)
    setting = start.copy()
    held = view.held(setting)
    ev = view.evaluate(held)
    best = np.broadcast_to(objective.score(ev), (1, n_cols))[0].copy()
    second = objective.tie_break(ev)
    best2 = np.zeros(n_cols) if second is None else np.broadcast_to(second, (1, n_cols))[0].copy()
    for _ in range(MAX_ROUNDS):
        moved = False
        for run in _runs_from(view, objective.k):
            sizes = [view.sizes[q] for q in run]
            value, value2 = np.full(n_cols, np.inf), np.full(n_cols, np.inf)
            where = np.zeros(n_cols, dtype=np.intp)
            for block in blocks(sizes, n_cols):
                index: dict[int, Index | Part] = {
                    j: part for j, part in held.items() if j not in [view.swept[q] for q in run]
                }
                index.update({view.swept[q]: i for q, i in zip(run, block.index, strict=True)})
                ev = view.evaluate(index)
                scores = block.rows(objective.score(ev))
                tie = objective.tie_break(ev)
                seconds = np.zeros_like(scores) if tie is None else block.rows(tie)
                # Lexicographic least per column: the least score, then among the level
                # ones the least tie-break.
                least = scores.min(axis=0)
                level = scores <= least + _LEVEL_RTOL * np.abs(least)
                at = np.argmin(np.where(level, seconds, np.inf), axis=0)
                here, here2 = scores[at, cols], seconds[at, cols]
                better = _before(here, here2, value, value2)
                value[better], value2[better] = here[better], here2[better]
                where[better] = block.numbers[at][better]
            improved = _before(value, value2, best, best2)
            if improved.any():
                moved = True
                best[improved], best2[improved] = value[improved], value2[improved]
                chosen = digits(where, sizes)
                for i, q in enumerate(run):
                    setting[q][improved] = chosen[i][improved]
                    held[view.swept[q]] = view.part(view.swept[q], setting[q][None, :])
        if not moved:
            break
    return best, setting


# Scores within this fraction of each other are level for the refinement's tie-break.
_LEVEL_RTOL = 1e-12


def _before(a: Floats, a2: Floats, b: Floats, b2: Floats) -> NDArray[np.bool_]:
    """Where (a, a2) comes before (b, b2): a clearly less, or level and a2 less."""
    with np.errstate(invalid="ignore"):
        level = np.isfinite(a) & np.isfinite(b)
        level &= np.abs(a - b) <= _LEVEL_RTOL * np.maximum(np.abs(a), np.abs(b))
    return np.where(level, a2 < b2, a < b)


def least_over(view: View, objectives: Sequence[Objective]) -> list[tuple[Floats, Index]]:
    """Each objective's least per column and where, over the segment's combinations. The
    first objective must be the segment's `Gain`: a segment too large to solve outright
    refines it from the settings as set, and the others from the gain's optimum (a node's
    clip and an op-amp's demand are worst towards the most gain)."""
    if view.combinations <= SEGMENT_BUDGET:
        return _least(view, objectives)
    as_set = np.array(
        [np.full(view.cols.size, view.inp.grids[j].set_combo) for j in view.swept], dtype=np.intp
    )
    gain = _refine(view, objectives[0], as_set)
    return [gain, *(_refine(view, objective, gain[1]) for objective in objectives[1:])]


def search(inp: SearchInput, limited: Sequence[int]) -> SearchResult:
    """The worst-case settings of every limited node (``limited``) and of every op-amp's
    largest output current."""
    grids = inp.grids
    n = len(inp.unit_of)
    n_freq = grids[0].port.a.shape[-1]
    every = np.arange(n_freq)
    segs, cuts = segments_of(grids)
    own = {j: i for i, seg in enumerate(segs) for j in seg.units}
    # The segment a stage's probes live in: its section's, or the one after a cut.
    local = {k: own[j] if j in own else cuts.index(j) + 1 for k, j in enumerate(inp.unit_of)}
    set_combos = np.array([g.set_combo for g in grids], dtype=np.intp)

    gain: list[tuple[Floats, Index]] = []
    clip: dict[int, tuple[Floats, Index]] = {}
    drives: list[tuple[int, str, Floats, Index]] = []
    for i, seg in enumerate(segs):
        view = View(inp, seg, every)
        objectives: list[Objective] = [Gain()]
        nodes = [k for k in limited if local[k] == i]
        objectives += [Clip(k, inp.builts[k].limits, n_freq) for k in nodes]
        upstream = np.ones(n_freq)
        for s in range(i):
            upstream = upstream / gain[s][0]
        opamps = [
            (k, label) for k in range(n) if local[k] == i for label, _part in inp.builts[k].opamps
        ]
        for k, label in opamps:
            voltage = [lim for lim in inp.builts[k].limits if not lim.bounds_current]
            objectives.append(Drive(k, f"{label}.current", voltage, upstream, inp.max_peak))
        found = least_over(view, objectives)
        gain.append(found[0])
        clip.update(zip(nodes, found[1 : 1 + len(nodes)], strict=True))
        for (k, label), (value, where) in zip(opamps, found[1 + len(nodes) :], strict=True):
            drives.append((k, label, value, where))

    def assemble(parts: Sequence[tuple[int, Index]], col: int | Index) -> Index:
        """Set combinations, with each (segment, setting) part's swept stages filled in."""
        columns = np.atleast_1d(np.asarray(col))
        setting = np.repeat(set_combos[:, None], columns.size, axis=1)
        for i, where in parts:
            swept = [j for j in segs[i].units if grids[j].size > 1]
            for q, j in enumerate(swept):
                setting[j] = where[q][columns]
        return setting if np.ndim(col) else setting[:, 0]

    results: list[NodeWorst | None] = [None] * n
    for k in limited:
        upstream_segments = range(local[k])
        least = clip[k][0].copy()
        for s in upstream_segments:
            least = least * gain[s][0]
        parts = [(s, gain[s][1]) for s in upstream_segments] + [(local[k], clip[k][1])]
        curve = assemble(parts, every)
        setting, col = _tie(inp, segs, k, least, parts, clip[k], gain, set_combos)
        results[k] = NodeWorst(setting, col, curve)

    demands = []
    band = every[inp.band]
    for k, label, value, where in drives:
        asked = -value[band]
        top = float(asked.max())
        order = np.argsort(-asked, kind="stable")[:DRIVE_FREQUENCIES]
        near = band[order[asked[order] >= top * (1.0 - DRIVE_RTOL)]] if top > 0.0 else band[:1]
        parts = [(s, gain[s][1]) for s in range(local[k])] + [(local[k], where)]
        demands.append((k, label, assemble(parts, near)))
    return SearchResult(tuple(results), tuple(demands))


def _tie(
    inp: SearchInput,
    segs: Sequence[Segment],
    k: int,
    least: Floats,
    parts: Sequence[tuple[int, Index]],
    own: tuple[Floats, Index],
    gain: Sequence[tuple[Floats, Index]],
    set_combos: Index,
) -> tuple[Index, int]:
    """Node k's reported worst point (setting, frequency column): see the module Notes."""
    grids = inp.grids
    m = float(least.min())
    if not math.isfinite(m) or m == 0.0:
        # No clip anywhere (every point ties), or a limit of zero (every setting ties at the
        # frequencies where it holds): the settings as set, at the first tied frequency,
        # the reference if it is one.
        tied = np.nonzero(least <= m)[0]
        return set_combos.copy(), int(tied[0])
    with np.errstate(divide="ignore"):
        slack_all = (math.log(m) + TIE_LN) - np.log(least)
    active = np.nonzero(slack_all >= 0.0)[0]
    slack = slack_all[active]
    local = parts[-1][0]
    searched = []
    for i, where in parts:
        view = View(inp, segs[i], active)
        if not view.swept:
            continue
        if i == local:
            objective: Objective = Clip(k, inp.builts[k].limits, least.size)
            best = own[0][active]
        else:
            objective, best = Gain(), gain[i][0][active]
        searched.append((view, objective, best, where[:, active]))
    # The settings as set within the tie at the reference are the answer (no other point is
    # as near); within it at a band frequency, they bound how far any other point may be.
    off = (active != 0).astype(float)
    at_set = np.zeros(active.size)
    for view, objective, best, _where in searched:
        score = np.broadcast_to(objective.score(view.evaluate({})), (1, active.size))[0]
        at_set = at_set + shortfall(score, best)
    set_tied = at_set <= slack
    bound = float(off[set_tied].min()) if set_tied.any() else math.inf
    if bound == 0.0:
        return set_combos.copy(), 0
    # Each frequency's least is itself a tied point: its distance bounds the others' too.
    at_least = off.copy()
    for view, _objective, _best, where in searched:
        for q, j in enumerate(view.swept):
            at_least = at_least + grids[j].distance[where[q]]
    bound = min(bound, float(at_least.min()))
    reach_all = bound - off
    kept = np.nonzero(reach_all >= -DISTANCE_EPS)[0]
    active, slack, reach = active[kept], slack[kept], reach_all[kept]
    n_act = active.size
    table = Table(
        np.arange(n_act),
        np.zeros(n_act),
        np.zeros(n_act),
        np.repeat(set_combos[None, :], n_act, axis=0),
    )
    for view, objective, best, where in searched:
        narrow = View(inp, view.seg, active)
        runs = None if view.combinations <= SEGMENT_BUDGET else windows(view.sizes, WINDOW_BUDGET)
        found = segment_table(
            narrow, objective, best[kept], slack, reach, where[:, kept], set_combos, runs
        )
        marks = np.zeros(len(grids), dtype=bool)
        marks[narrow.swept] = True
        table = merge(table, found, marks, slack, reach)
    return nearest(grids, table, active)
