"""The reported worst point among near-equal ones: of the points whose clip level is within
`TIE_DB` of the least, the one nearest the settings as set (rotation distance summed over
every swept control, plus one for leaving the reference frequency), the first in grid order
among equals (the rule the exhaustive grid applied).

Notes
-----
A node's clip level is a product of one figure per segment (`chainbudget.budget.segments`),
so a point is within the tie when its shortfalls, ln(segment figure / segment's best),
summed over the segments stay within the slack ln(P_tie / P_least(f)). Each segment's
candidates are kept on a Pareto front of (shortfall, distance) per frequency, and the
fronts are merged segment by segment; the distance of the settings as set, where they tie,
bounds the search.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.segments import (
    ComboBlock,
    Floats,
    Index,
    Objective,
    SectionGrid,
    View,
    blocks,
    digits,
    run_scores,
)

# Worst cases within this much of the least are taken as ties (dB).
TIE_DB = 0.01
TIE_LN = math.log(10.0) * TIE_DB / 20.0
# Rotation distances within this are equal (they are sums of a few multiples of 0.1).
DISTANCE_EPS = 1e-9


@dataclass(frozen=True)
class Table:
    """Candidate points: active-column index, summed shortfall (ln), rotation distance and
    the combination of every stage."""

    col: Index
    shortfall: Floats
    distance: Floats
    settings: Index  # (rows, stages)

    def rows(self, keep: NDArray[np.bool_] | Index) -> Table:
        return Table(self.col[keep], self.shortfall[keep], self.distance[keep], self.settings[keep])


def shortfall(score: Floats, best: Floats) -> Floats:
    """ln(score / best) for a figure to be made least (0 where both are 0 or both inf)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.log(score / best)
    return np.where(score == best, 0.0, ratio)


def _front_rows(col: Index, shortfall: Floats, distance: Floats, rank: Index) -> Index:
    """Rows on the Pareto front of each column: none has another row of its column with no
    greater shortfall that is nearer (by more than DISTANCE_EPS), or as near and earlier in
    grid order (``rank``, among rows that differ only where the table's stages do)."""
    if col.size == 0:
        return np.zeros(0, dtype=np.intp)
    level = np.round(distance / DISTANCE_EPS).astype(np.int64)
    order = np.lexsort((shortfall, rank, level, col))
    # Shortfalls are below 1 (the slack is at most ln of 0.01 dB), so subtracting the column
    # lets one running minimum serve every column at once.
    shifted = shortfall[order] - col[order]
    before = np.concatenate(([np.inf], np.minimum.accumulate(shifted)[:-1]))
    return np.asarray(order[shifted < before], dtype=np.intp)


def _grid_rank(settings: Index) -> Index:
    """Each row's place in grid order (the settings compared stage by stage, in order)."""
    order = np.lexsort(settings.T[::-1]) if settings.shape[1] else np.arange(settings.shape[0])
    rank = np.empty(order.size, dtype=np.intp)
    rank[order] = np.arange(order.size)
    return rank


def _front(table: Table) -> Table:
    """The table's rows on the Pareto front of each column (`_front_rows`)."""
    rank = _grid_rank(table.settings)
    return table.rows(_front_rows(table.col, table.shortfall, table.distance, rank))


def merge(
    a: Table, b: Table, stages_b: NDArray[np.bool_], slack: Floats, reach: Floats | None = None
) -> Table:
    """Every pair of rows of the same column, shortfalls and distances added, kept within
    the slack (and within ``reach`` of distance); ``stages_b`` marks the stages ``b`` sets."""
    n_cols = slack.size
    a = a.rows(np.argsort(a.col, kind="stable"))
    b = b.rows(np.argsort(b.col, kind="stable"))
    count_a = np.bincount(a.col, minlength=n_cols)
    count_b = np.bincount(b.col, minlength=n_cols)
    start_a = np.concatenate(([0], np.cumsum(count_a)[:-1]))
    start_b = np.concatenate(([0], np.cumsum(count_b)[:-1]))
    pairs = count_a * count_b
    col = np.repeat(np.arange(n_cols), pairs)
    within = np.arange(col.size) - np.repeat(np.concatenate(([0], np.cumsum(pairs)[:-1])), pairs)
    ia = start_a[col] + within // np.maximum(count_b[col], 1)
    ib = start_b[col] + within % np.maximum(count_b[col], 1)
    shortfall = a.shortfall[ia] + b.shortfall[ib]
    settings = np.where(stages_b, b.settings[ib], a.settings[ia])
    distance = a.distance[ia] + b.distance[ib]
    keep = shortfall <= slack[col]
    if reach is not None:
        keep &= distance <= reach[col] + DISTANCE_EPS
    return _front(Table(col, shortfall, distance, settings).rows(keep))


def segment_table(
    view: View,
    objective: Objective,
    best: Floats,
    slack: Floats,
    reach: Floats,
    optimum: Index,
    base: Index,
    runs: list[list[int]] | None,
) -> Table:
    """The segment's settings whose shortfall from ``best`` is within ``slack`` and whose
    distance is within ``reach`` (columns of ``view``); ``base`` is the combination of every
    stage elsewhere (stages,). With ``runs`` (runs of the segment's swept stages), a
    segment the search refined: `_refined_table` from its ``optimum``."""
    if runs is not None:
        table = _refined_table(view, objective, best, slack, reach, optimum, base, runs)
        return table.rows(table.distance <= reach[table.col] + DISTANCE_EPS)
    found: list[Table] = []
    for block in blocks(view.sizes, view.cols.size):
        ev = view.evaluate(dict(zip(view.swept, block.index, strict=True)))
        scores = block.rows(objective.score(ev))
        found.append(_near(view, block, scores, best, slack, base, (), reach=reach))
    return _front(_concat(found))


def _near(
    view: View,
    block: ComboBlock,
    scores: Floats,
    best: Floats,
    slack: Floats,
    base: Index,
    run: Sequence[int],
    held: Index | None = None,
    reach: Floats | None = None,
) -> Table:
    """A block's combinations within the slack (and ``reach`` of distance) and on the
    Pareto front, as rows of settings: the block's stages (the positions ``run`` among the
    swept, or all of them) filled into ``base`` or, per column, into ``held`` (stages,
    columns)."""
    grids = view.inp.grids
    positions = list(run) or list(range(len(view.swept)))
    moved = [view.swept[q] for q in positions]
    chosen = digits(block.numbers, [view.sizes[q] for q in positions])
    own = np.zeros(block.numbers.size)  # the block stages' own distance, per combination
    for i, j in enumerate(moved):
        own = own + grids[j].distance[chosen[i]]
    short = shortfall(scores, best)
    within = short <= slack
    if reach is not None:
        within &= own[:, None] <= reach + DISTANCE_EPS
    short = np.where(within, short, np.inf)
    if held is None:
        # Most combinations of a flat stretch tie: keep only those that beat every nearer
        # distance level of their column before listing any (a dense reduction, no sort).
        short = np.where(short < _nearer_least(own, short), short, np.inf)
    row, col = np.nonzero(np.isfinite(short))
    distance = own[row]
    if held is not None:
        for j, grid in enumerate(grids):
            if grid.size > 1 and j not in moved:
                distance = distance + grid.distance[held[j, col]]
    keep = _front_rows(col, short[row, col], distance, block.numbers[row])
    row, col, distance = row[keep], col[keep], distance[keep]
    if held is None:
        settings = np.repeat(base[None, :], row.size, axis=0)
    else:
        settings = held[:, col].T.copy()
    for i, j in enumerate(moved):
        settings[:, j] = chosen[i][row]
    return Table(col, short[row, col], distance, settings)


def _nearer_least(distance: Floats, short: Floats) -> Floats:
    """For each (combination, column), the least shortfall in that column among the
    combinations nearer by more than DISTANCE_EPS (inf where none)."""
    level = np.round(distance / DISTANCE_EPS).astype(np.int64)
    order = np.argsort(level, kind="stable")
    sorted_level = level[order]
    starts = np.flatnonzero(np.r_[True, sorted_level[1:] != sorted_level[:-1]])
    per_level = np.minimum.reduceat(short[order], starts, axis=0)  # (levels, columns)
    nearer = np.full_like(per_level, np.inf)
    nearer[1:] = np.minimum.accumulate(per_level, axis=0)[:-1]
    which = np.searchsorted(sorted_level[starts], level)
    return nearer[which]


def _refined_table(
    view: View,
    objective: Objective,
    best: Floats,
    slack: Floats,
    reach: Floats,
    optimum: Index,
    base: Index,
    runs: list[list[int]],
) -> Table:
    """As `segment_table` for a segment too large to solve outright: each run of stages
    moved alone from the refined optimum, the runs' moves combined (their shortfalls
    nearly add, the stages coupling weakly), and every combination checked exactly. A
    combination still farther than ``reach`` once the runs not yet combined are back at
    their settings as set is dropped as it forms."""
    grids = view.inp.grids
    n_cols = view.cols.size
    held = np.repeat(base[:, None], n_cols, axis=1)
    for q, j in enumerate(view.swept):
        held[j] = optimum[q]
    start = Table(np.arange(n_cols), np.zeros(n_cols), _distance(grids, held.T), held.T.copy())
    table = start
    # What each run's stages add to the distance at the optimum, and so what the runs after
    # each one could take off at most.
    at_optimum = [
        sum((grids[view.swept[q]].distance[optimum[q]] for q in run), np.zeros(n_cols))
        for run in runs
    ]
    later = np.cumsum([np.zeros(n_cols), *at_optimum[::-1]], axis=0)[::-1][1:]
    for r, run in enumerate(runs):
        moves = [
            _near(view, block, scores, best, slack, base, run, held)
            for block, scores in run_scores(view, objective, optimum, run)
        ]
        move = _front(_concat(moves))
        # Distances relative to the optimum, so that the runs' moves add.
        move = Table(
            move.col, move.shortfall, move.distance - start.distance[move.col], move.settings
        )
        marks = np.zeros(len(grids), dtype=bool)
        marks[[view.swept[q] for q in run]] = True
        table = merge(table, move, marks, slack, reach + later[r])
    # Check each combination of moves on the segment itself, each row at its own column.
    rows = View(view.inp, view.seg, view.cols[table.col], table.settings)
    exact = np.asarray(objective.score(rows.evaluate({}))).reshape(-1)
    short = shortfall(exact, best[table.col])
    checked = Table(table.col, short, _distance(grids, table.settings), table.settings)
    return _front(checked.rows(short <= slack[table.col]))


def _distance(grids: Sequence[SectionGrid], settings: Index) -> Floats:
    """Summed rotation distance of each row of settings (rows, stages) from as set."""
    total = np.zeros(settings.shape[0])
    for j, grid in enumerate(grids):
        if grid.size > 1:
            total = total + grid.distance[settings[:, j]]
    return total


def _concat(tables: Sequence[Table]) -> Table:
    return Table(
        np.concatenate([t.col for t in tables]),
        np.concatenate([t.shortfall for t in tables]),
        np.concatenate([t.distance for t in tables]),
        np.concatenate([t.settings for t in tables]),
    )


def exhaustive_distance(grids: Sequence[SectionGrid], setting: Index, off_reference: bool) -> float:
    """Rotation distance of a setting from as set, summed over the swept controls in grid
    order and then the frequency's, in the exhaustive grid's own float arithmetic."""
    total = 0.0
    for j, grid in enumerate(grids):
        for c, distances in enumerate(grid.rotation_distance):
            total = total + float(distances[grid.combos[setting[j], c]])
    return total + (1.0 if off_reference else 0.0)


def _grid_order(grids: Sequence[SectionGrid], setting: Index, col: int) -> tuple[int, ...]:
    """Position of a point in the exhaustive grid's C order: rotation indices, frequency."""
    found: list[int] = []
    for j, grid in enumerate(grids):
        found += [int(i) for i in grid.combos[setting[j]]]
    return (*found, col)


def nearest(grids: Sequence[SectionGrid], table: Table, active: Index) -> tuple[Index, int]:
    """The tied point nearest the settings as set, first in grid order among equals."""
    off = (active[table.col] != 0).astype(float)
    total = table.distance + off
    close = np.nonzero(total <= total.min() + 10.0 * DISTANCE_EPS)[0]
    ranked = sorted(
        close.tolist(),
        key=lambda r: (
            exhaustive_distance(grids, table.settings[r], bool(off[r])),
            _grid_order(grids, table.settings[r], int(active[table.col[r]])),
        ),
    )
    best = ranked[0]
    return table.settings[best].copy(), int(active[table.col[best]])
