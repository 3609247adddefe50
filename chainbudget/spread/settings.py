"""The control settings the spread searches or holds per trial: each limited node's
candidate settings for its worst case, those of each op-amp's largest output current, and
the master volume fully up (the output power).

Notes
-----
The check finds each node's worst headroom over the band and every swept control
(`chainbudget.budget.search`: every rotation of every swept control). Carrying that grid
through every trial would multiply the trial axis by up to 30,000 settings; the spread
instead solves every trial at a few candidate settings of each node (`node_candidates`:
the controls that shape it at their end stops, as set and at the nominal worst, in
combination; and the hollow a coordinate descent at the nominal parts reaches from each,
`downhill`; and, near the node's worst, the settings where the check's tie-break can stop
in a trial: on a descent's way down, and with the controls after the node's section
moved, `loaded_by_later`) and takes the least over them and the band, with the check's
tie-break (`worst_of_candidates`). Exact wherever a trial's worst point lies at one of those
settings (a tone control's worst is a boost at an end stop, and tolerances move it from
one boost to another); otherwise the spread figure is at most the check's margin above
it. A candidate is solved only at the frequency points where its clip level at the
nominal parts lies within `PRUNE_DB` of the node's worst (`HeldSettings.row_points`: a
boost's few points near its shelf, not the whole band), for the same reason a candidate
further above is dropped; an op-amp's current settings likewise near its largest current
(`current_candidates`: the nominal check's setting of its largest, its neighbours in
every control and each control's end stops, the end stops and settings as set of the
op-amp's own section's controls in combination, each with the earlier sections'
controls moved a rotation either side, and the nominal check's candidate settings with
their neighbours in those controls; and the summit a climb at the nominal parts reaches
from each, `downhill` on the negated current). A hollow or summit is followed from the
candidates within `CLIMB_DB` of the node's worst or the largest current only.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import partial
from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.analysis import (
    Analysis,
    SweptControl,
    analyse,
    master_volume,
    positions_as_set,
)
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.budget.power import asked_current, largest_asked
from chainbudget.budget.search import NodeWorst
from chainbudget.budget.ties import TIE_DB
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.loops import section_of, sections
from chainbudget.network import SOURCE_FLOOR_OHM
from chainbudget.supplies.base import Corners

# Candidate settings per node from the product of each control's few values at most
# (each distinct setting of a section is one more batched solve of it per chunk).
MAX_PRODUCT = 256
# Candidates, and points of them, whose clip level at the nominal parts lies more than
# this above the node's worst are not searched (dB): the parts' tolerances move a node's
# worst by a fraction of that (the bench amplifier's driver, with 20 % pots, by about
# +/-1 dB over its trials; a point 1.4 dB above its nominal worst was its worst in one
# trial of 40, so the margin is kept at four times that).
PRUNE_DB = 6.0
# Candidates within this of a node's worst (or an op-amp's largest current) at the nominal
# parts are followed to their hollow (summit) on the check's grid nearby (`downhill`).
CLIMB_DB = 3.0
# Rotations either side of an op-amp's nominal largest current that its own section's
# controls are moved to (a boost's largest inside the travel moves that far with the
# parts: a kitchen radio variant's tone stage from treble 0.9 to 0.7, 1.5 % above).
TOP_REACH = 2
# Where the check's tie-break (`TIE_DB`: among the points within it of the least, the one
# nearest the settings as set) can stop in a trial off the candidates and their hollows:
# - the settings a descent passes on its way to a hollow within `TIE_REACH_DB` of the
#   node's worst, at their points within `TIE_REACH_DB` of the hollow (a violin pre-amp
#   with a larger treble capacitor: along its treble boost, bass 0.4 at the nominal parts
#   and 0.3 in a trial, the hollow further down; the parts move the steps between them by
#   less than a tenth of a dB). A setting within `LOAD_MOVES_DB` of the hollow ties with
#   it in every trial, where the settings as set among the candidates are nearer (a flat
#   ridge, 1e-4 dB a step);
TIE_REACH_DB = 0.15
# - the controls after the node's section moved up to `LOAD_REACH` rotations either side,
#   and to their end stops and settings as set, from each such setting and each candidate
#   within `TIE_REACH_DB` of the node's worst (`loaded_by_later`), at their points within
#   `LOAD_TIE_DB` of the setting moved from: such a control moves the node's clip level
#   only through the load it presents, by about the tie, and not at all where it moves the
#   least by under `LOAD_MOVES_DB` (a pre-amp's flat clip level under the tone network
#   after it: 0.002 dB).
LOAD_REACH = 2
LOAD_TIE_DB = 3.0 * TIE_DB
LOAD_MOVES_DB = TIE_DB / 4.0
LOAD_MOVES_LN = math.log(10.0) * LOAD_MOVES_DB / 20.0
# A step of that descent lowers the value by more than this fraction of it: a current
# limited by max_level is flat over many settings, equal to round-off.
DESCENT_RTOL = 1e-9


@dataclass(frozen=True)
class HeldSettings:
    """Rows of control settings, each a rotation per varied control.

    ``keys`` are the (stage index, control key) pairs some row moves from its setting;
    ``rows`` one rotation per key each (none of them the settings as set); ``node_rows``
    each limited node's candidate settings for its worst case (by stage index), in the
    check's grid order, each a row (None: the settings as set) and its distance from the
    settings as set (the check's tie-break);
    ``volume_row`` the row with the master volume fully up (None: no volume control, or
    it is fully up as set).
    """

    keys: tuple[tuple[int, str], ...]
    rows: tuple[tuple[float, ...], ...]
    node_rows: dict[int, tuple[tuple[int | None, float], ...]]
    volume_row: int | None
    #: Each op-amp's (stage index, label) candidate settings for its largest output
    #: current over the band (`current_candidates`; None: as set), the nominal check's
    #: (`chainbudget.budget.power.opamp_drives`) among them.
    current_rows: dict[tuple[int, str], tuple[int | None, ...]] = field(default_factory=dict)
    #: Each row's frequency indices where some figure looks (ascending, the reference 0
    #: first): a node's candidate at the points within `PRUNE_DB` of the node's worst, an
    #: op-amp's current settings within `PRUNE_DB` of its largest current (an ideal
    #: op-amp's: the whole axis), the volume row at the reference. The
    #: rows are solved there only (`chainbudget.network.Netlist`'s ``points``) and each
    #: held cascade is joined on its row's points alone; empty: every row on the whole
    #: axis.
    row_points: tuple[NDArray[np.intp], ...] = ()

    def on_axis(self, row: int, values: NDArray[Any], size: int, fill: float) -> NDArray[Any]:
        """A figure of row ``row``'s held cascade (last axis: the row's points, which
        `chainbudget.spread.evaluate` joins it on) put back on the whole axis of ``size``
        points, ``fill`` where the row is not solved (the reference, index 0, is always
        the row's first point: `row_points`)."""
        if not self.row_points:
            return values
        found = np.full((*values.shape[:-1], size), fill, dtype=values.dtype)
        found[..., self.row_points[row]] = values
        return found

    @property
    def stages(self) -> frozenset[int]:
        """The stages whose controls some row moves."""
        return frozenset(k for k, _ in self.keys)

    def positions(self, chain: Chain, row: int) -> list[dict[str, float]]:
        """Every stage's control positions at one row."""
        positions = [dict(p) for p in positions_as_set(chain.stages)]
        for (k, key), value in zip(self.keys, self.rows[row], strict=True):
            positions[k][key] = value
        return positions


def held_settings(chain: Chain, voltages: Mapping[str, Corners]) -> HeldSettings:
    """The nominal check's worst setting of each limited node and the volume fully up.

    The nominal chain is analysed as `check` analyses it (low line, the settled tree's
    ``voltages``) and each node's worst setting taken where the check's worst-case search
    puts it (`chainbudget.budget.search`).
    """
    analysis = analyse(chain, "low", voltages)
    swept = analysis.swept_controls
    keys = [(sc.stage_index, sc.control.key) for sc in swept]
    volume = master_volume(chain)
    if volume is not None and (volume, "position") not in keys:
        keys.append((volume, "position"))
    as_set = positions_as_set(chain.stages)
    base = tuple(float(as_set[k][key]) for k, key in keys)
    rows: list[tuple[float, ...]] = []
    node_rows: dict[int, tuple[tuple[int | None, float], ...]] = {}

    solved: dict[tuple[int, ...], Cascade] = {}

    def nominal_at(rotations: tuple[int, ...]) -> Cascade:
        """The nominal chain at one setting (a rotation index per swept control): each
        section as the check solved it over its own controls' combinations
        (`Analysis.grids`), joined (each setting once)."""
        if rotations not in solved:
            solved[rotations] = analysis.at_settings(_combinations(analysis, rotations))
        return solved[rotations]

    # each row's points where some figure looks (the reference always)
    points: dict[tuple[float, ...], set[int]] = {}

    def row_of(row: tuple[float, ...], looks: NDArray[np.bool_] | None = None) -> int | None:
        if row == base:
            return None
        if row not in rows:
            rows.append(row)
        found = points.setdefault(row, {0})
        if looks is not None:
            found.update(int(i) for i in np.flatnonzero(looks))
        return rows.index(row)

    def row_at(rotations: tuple[int, ...]) -> tuple[float, ...]:
        """The row of a setting given as a rotation index per swept control."""
        row = list(base)
        for sc in swept:
            row[sc.axis] = float(sc.rotations[rotations[sc.axis]])
        return tuple(row)

    peaks: dict[tuple[int, tuple[int, ...]], NDArray[np.float64]] = {}

    def peak_at(k: int, rotations: tuple[int, ...]) -> NDArray[np.float64]:
        """Node ``k``'s clip level over the axis at one setting, the nominal parts."""
        if (k, rotations) not in peaks:
            clip = clip_source_peak(nominal_at(rotations), k)
            peaks[(k, rotations)] = np.asarray(clip[0])  # type: ignore[index]
        return peaks[(k, rotations)]

    def least_peak(k: int, rotations: tuple[int, ...]) -> float:
        return float(np.min(peak_at(k, rotations)))

    for k in range(len(chain.stages)):
        found = None if analysis.worst is None else analysis.worst.nodes[k]
        if clip_source_peak(analysis.swept, k) is None:
            continue
        if found is None or not swept:  # no control moves this node
            node_rows[k] = ((None, 0.0),)
            continue
        worst = analysis.setting_rotations(found.setting)
        candidates = node_candidates(analysis, k, found)
        least = partial(least_peak, k)
        # a setting, or a point of it, whose clip level at the nominal parts lies more than
        # PRUNE_DB above the node's worst is left out: no trial's parts move it that far
        lowest = min(least(r) for r in candidates)
        floor = lowest * 10.0 ** (PRUNE_DB / 20.0)
        # each kept candidate's hollow on the check's grid nearby at the nominal parts (a
        # treble boost at its end stop is least with the bass a rotation in, where its cut
        # meets the boost), where the parts' tolerances put the trials' worst too
        near = lowest * 10.0 ** (CLIMB_DB / 20.0)
        shaping = _shaping(analysis, k)
        # each setting's points solved in the trials: those whose clip level at the
        # nominal parts lies below its window
        window: dict[tuple[int, ...], float] = dict.fromkeys(candidates, floor)
        # where the check's tie-break can stop in a trial (see `TIE_REACH_DB`)
        tie_reach = 10.0 ** (TIE_REACH_DB / 20.0)
        steep = 10.0 ** (LOAD_MOVES_DB / 20.0)
        starts = [r for r in candidates if least(r) <= lowest * tie_reach]
        for r in candidates:
            if least(r) > near:
                continue
            path = downhill(r, shaping, least)
            _widen(window, path[-1], floor)
            if least(path[-1]) <= lowest * tie_reach:
                for on_way in path[:-1]:
                    if least(on_way) > least(path[-1]) * steep:
                        _widen(window, on_way, least(path[-1]) * tie_reach)
                starts += path
        for r in set(starts):
            below = least(r) * 10.0 ** (LOAD_TIE_DB / 20.0)
            for moved in loaded_by_later(analysis, k, r):
                if _moves(peak_at(k, moved), peak_at(k, r)):
                    _widen(window, moved, below)
        held: list[tuple[int | None, float]] = []
        for rotations in sorted(window):
            row = row_at(rotations)
            distance = sum(abs(row[sc.axis] - sc.control.position) for sc in swept)
            looks = peak_at(k, rotations) <= window[rotations]
            if rotations == worst or looks.any():
                held.append((row_of(row, looks), distance))
        node_rows[k] = tuple(held)
    current_rows: dict[tuple[int, str], tuple[int | None, ...]] = {}
    max_peak = SQRT2 * chain.source.max_level
    currents: dict[tuple[int, str, tuple[int, ...]], NDArray[np.float64]] = {}

    def asked_of(
        found_at: CurrentSetting, k: int, label: str, rotations: tuple[int, ...]
    ) -> NDArray[np.float64]:
        """An op-amp's current over the axis at one setting, the nominal parts (at its
        largest's setting, the nominal check's own)."""
        if rotations == found_at.rotations:
            return found_at.asked_a
        if (k, label, rotations) not in currents:
            cascade = nominal_at(rotations)
            asked = asked_current(cascade, k, label, max_peak)
            currents[(k, label, rotations)] = np.asarray(asked).reshape(-1)
        return currents[(k, label, rotations)]

    for (k, label), found_at in opamp_current_settings(analysis).items():
        # a setting, or a point of it, whose current at the nominal parts lies more than
        # PRUNE_DB below the largest is left out: no trial's parts move it that far
        largest = float(np.max(found_at.asked_a[1:]))
        floor = largest * 10.0 ** (-PRUNE_DB / 20.0)
        if not found_at.has_output_resistance:
            # an ideal op-amp's current is round-off where it is small, and moves by more
            # than that: its largest's setting alone, on the whole axis
            whole = np.ones(found_at.asked_a.shape, bool)
            current_rows[(k, label)] = (row_of(row_at(found_at.rotations), whole),)
            continue
        asked_at = partial(asked_of, found_at, k, label)
        below = partial(_below_largest, asked_at)
        kept = [
            r for r in current_candidates(analysis, k, found_at.rotations) if -below(r) >= floor
        ]
        # each kept candidate's summit on the check's grid nearby at the nominal parts (a
        # boost's largest a rotation inside a control's end stop), where the parts'
        # tolerances put the trials' largest too
        near = largest * 10.0 ** (-CLIMB_DB / 20.0)
        shaping = _shaping(analysis, k)
        summits = {downhill(r, shaping, below)[-1] for r in kept if -below(r) >= near}
        current_rows[(k, label)] = tuple(
            dict.fromkeys(
                row_of(row_at(r), asked_at(r) >= floor) for r in sorted({*kept, *summits})
            )
        )
    volume_row = None
    if volume is not None:
        up = list(base)
        up[keys.index((volume, "position"))] = 1.0
        volume_row = row_of(tuple(up))  # the output power: at the reference only
    if not rows:
        keys = []
    row_points = tuple(np.array(sorted(points[row]), dtype=np.intp) for row in rows)
    return HeldSettings(tuple(keys), tuple(rows), node_rows, volume_row, current_rows, row_points)


@dataclass(frozen=True)
class CurrentSetting:
    """Where the nominal check finds an op-amp's largest output current: the rotation
    index of each swept control, the current over the frequency axis there (A peak, the
    reference first) and whether the op-amp has an output resistance (an ideal one's
    current is the small difference of two large terms, `chainbudget.network`)."""

    rotations: tuple[int, ...]
    asked_a: NDArray[np.float64]
    has_output_resistance: bool


def opamp_current_settings(analysis: Analysis) -> dict[tuple[int, str], CurrentSetting]:
    """Each op-amp's (stage index, label) setting at which the nominal check finds its
    largest output current over the band (its ``worst_a``: the current at ``max_level`` or
    at the stage's voltage clip, whichever is lower)."""
    found: dict[tuple[int, str], CurrentSetting] = {}
    for k, sol in enumerate(analysis.swept.stages):
        for label, part in sol.built.opamps:
            asked, at = largest_asked(analysis, k, label)
            candidate = at[0] if asked.ndim > 1 else 0
            found[(k, label)] = CurrentSetting(
                tuple(int(i) for i in analysis.candidates[candidate]),
                asked[candidate] if asked.ndim > 1 else asked,
                part.output_resistance > SOURCE_FLOOR_OHM,
            )
    return found


def current_candidates(analysis: Analysis, k: int, top: tuple[int, ...]) -> list[tuple[int, ...]]:
    """The settings (a rotation index per swept control) at which the spread looks for the
    largest output current of an op-amp of stage ``k`` in every trial, in the check's grid
    order: the nominal check's largest, ``top``, and, each control that shapes the stage's
    gain (those of its own section and the sections before it) moved alone, its neighbours
    on the check's grid (one rotation either side; its own section's controls up to
    `TOP_REACH`) and its end stops (an own section's control's end stop with each other
    control of the section a rotation either side: a flat ridge along the first whose
    slope the parts turn round, at its far end a rotation aside; a kitchen radio on a
    low secondary, from bass 0.9, treble 0.2 to bass 0, treble 0.1). The current is the
    op-amp's gain times the lower of ``max_level`` and its stage's clip level: a boost
    raises one and lowers the other, so that the largest can sit inside a control's travel,
    where the parts' tolerances move it to the next rotation (a treble boost's 0.9 rather
    than its end stop); and a control that hardly moves it (the bass control under a treble
    boost: a flat ridge along its travel) leaves near-equal maxima far apart, between which
    the tolerances move it (bass 0.9 to bass 0). The controls after the section reach the
    op-amp only through its load, and stay at ``top``'s rotations but for ``top``'s own
    neighbours: the load moves the current directly (the kitchen radio's pre-amp drives the
    tone stage, whose treble control moves the load it presents; with a lighter tone network
    and 10 % resistors a trial's largest moved from the treble's end stop to a rotation in,
    8.7e-4 above). The controls of the op-amp's own section also take their end stops and
    their settings as set in combination: its own boosts trade places (with 40 % pots, the
    desk pre-amp's tone stage's largest moves from its treble boost to its bass boost with
    the treble as set, two controls away), each combination with the earlier sections'
    controls at ``top``'s rotations and at their end stops, and each of those moved alone
    one rotation either side (a bass stage before a tone stage: in a variant of the test
    chain of every kind, the largest moved from the tone stage's bass boost to both its
    controls at their lower end stops with the bass stage one rotation on, 0.85 % above
    that combination alone; a violin pre-amp whose buffer gains 5: its treble stage's
    largest moved with the bass stage from as set to 0.1, a rotation inside its end stop,
    0.04 % above); and so do the nominal check's own candidate
    settings, each with its own section's controls moved alone one rotation either side (a
    lower summit of the ridge the check lists beside the largest, which a trial's parts lift
    above it, or move a rotation from: the desk pre-amp with its driver's input halved, from
    bass 1 to bass 0.1; a busking amp on a smaller speaker, from bass 1, treble 0.9 to bass
    0.1, treble 0.9). `held_settings` then drops those more than `PRUNE_DB` below the
    largest at the nominal parts."""
    own = section_of(sections(analysis.chain.stages), k)
    last = own.last
    ordered: dict[tuple[int, ...], None] = {top: None}
    shaping = _shaping(analysis, k)
    own_controls = [sc for sc in shaping if sc.stage_index in own]

    def with_neighbours(
        summit: tuple[int, ...], controls: Sequence[SweptControl], reach: int = 1
    ) -> None:
        """``summit`` and each of ``controls`` moved alone up to ``reach`` rotations
        either side."""
        ordered[summit] = None
        for sc in controls:
            for step in range(1, reach + 1):
                for rotation in (summit[sc.axis] - step, summit[sc.axis] + step):
                    moved = list(summit)
                    moved[sc.axis] = min(max(rotation, 0), sc.rotations.size - 1)
                    ordered[tuple(moved)] = None

    with_neighbours(top, analysis.swept_controls)
    with_neighbours(top, own_controls, TOP_REACH)
    stops: list[list[int]] = []
    for sc in analysis.swept_controls:
        if sc.stage_index > last:
            stops.append([top[sc.axis]])
            continue
        end = sc.rotations.size - 1
        for rotation in (0, end):
            moved = list(top)
            moved[sc.axis] = rotation
            ordered[tuple(moved)] = None
            if sc.stage_index in own:  # the far end of a flat ridge, a rotation aside
                with_neighbours(tuple(moved), [o for o in own_controls if o is not sc])
        if sc.stage_index not in own:
            # an earlier section's control: at its end stops too, where this section has
            # controls of its own to combine with
            stops.append(sorted({0, top[sc.axis], end}) if own_controls else [top[sc.axis]])
            continue
        stops.append(sorted({0, sc.as_set, end}))
    if math.prod(len(v) for v in stops) <= MAX_PRODUCT:
        before = [sc for sc in shaping if sc.stage_index not in own]
        for combo in itertools.product(*stops):
            with_neighbours(tuple(int(i) for i in combo), before)
    # the nominal check's own candidates (as set, each stage's controls fully up, near
    # each op-amp's largest): a lower summit of the same ridge, which a trial's parts
    # lift above the largest
    for candidate in analysis.candidates:
        moved = list(top)
        for sc in shaping:
            moved[sc.axis] = int(candidate[sc.axis])
        with_neighbours(tuple(moved), own_controls)
    return sorted(ordered)


def _below_largest(
    asked_at: Callable[[tuple[int, ...]], NDArray[np.float64]], rotations: tuple[int, ...]
) -> float:
    """The negated largest over the band of an op-amp's current at a setting (the
    reference, index 0, left out): what `downhill` lowers to climb to its summit."""
    return -float(np.max(asked_at(rotations)[1:]))


def _last_of(analysis: Analysis, k: int) -> int:
    """The last stage of stage ``k``'s section (a stage, or a loop solved as one)."""
    return section_of(sections(analysis.chain.stages), k).last


def _shaping(analysis: Analysis, k: int) -> list[SweptControl]:
    """The swept controls that shape stage ``k``'s gain and clip: those of its own section
    and the sections before it."""
    last = _last_of(analysis, k)
    return [sc for sc in analysis.swept_controls if sc.stage_index <= last]


def downhill(
    start: tuple[int, ...],
    controls: Sequence[SweptControl],
    value: Callable[[tuple[int, ...]], float],
) -> list[tuple[int, ...]]:
    """The settings a coordinate descent of ``value`` passes from ``start`` (first) to
    where it ends (last): each of ``controls`` moved one rotation either side, the lowest
    of those taken while it is lower by more than `DESCENT_RTOL` of itself (a local least
    on the check's grid; the first in that order among equals; a flat ridge, equal to
    round-off, is not walked)."""
    current, least = start, value(start)
    path = [start]
    while True:
        best = current
        for sc in controls:
            for rotation in (current[sc.axis] - 1, current[sc.axis] + 1):
                if not 0 <= rotation < sc.rotations.size:
                    continue
                moved = list(current)
                moved[sc.axis] = rotation
                got = value(tuple(moved))
                if got < least - DESCENT_RTOL * abs(least):
                    best, least = tuple(moved), got
        if best == current:
            return path
        current = best
        path.append(current)


def loaded_by_later(analysis: Analysis, k: int, start: tuple[int, ...]) -> list[tuple[int, ...]]:
    """``start`` with each swept control after node ``k``'s section moved alone to its end
    stops, its setting as set and up to `LOAD_REACH` rotations either side of ``start``'s.
    Such a control reaches the node only through the load it presents, and moves its clip
    level by about the check's tie (`chainbudget.budget.ties.TIE_DB`): which rotation the
    check picks then turns on the trial's parts (a violin pre-amp's volume pot on its
    treble stage: from 0.9 to its end stop 1 in a trial with default tolerances)."""
    last = _last_of(analysis, k)
    found: list[tuple[int, ...]] = []
    for sc in analysis.swept_controls:
        if sc.stage_index <= last:
            continue
        end = sc.rotations.size - 1
        at = start[sc.axis]
        near = (min(max(r, 0), end) for r in range(at - LOAD_REACH, at + LOAD_REACH + 1))
        for rotation in sorted({0, end, sc.as_set, *near}):
            moved = list(start)
            moved[sc.axis] = rotation
            found.append(tuple(moved))
    return found


def _combinations(analysis: Analysis, rotations: tuple[int, ...]) -> NDArray[np.intp]:
    """Each section's combination (its row in `Analysis.grids`) at a setting given as a
    rotation index per swept control, as (sections, 1) for `Analysis.at_settings`."""
    found = []
    at = 0
    for grid in analysis.grids:
        width = grid.combos.shape[1]
        own = np.asarray(rotations[at : at + width], dtype=np.intp)
        found.append(int(np.flatnonzero(np.all(grid.combos == own, axis=1))[0]))
        at += width
    return np.array(found, dtype=np.intp)[:, None]


def _widen(window: dict[tuple[int, ...], float], rotations: tuple[int, ...], below: float) -> None:
    """A setting's points are those whose clip level lies under ``below`` or a wider window
    already asked of it."""
    window[rotations] = max(window.get(rotations, 0.0), below)


def _moves(peak: NDArray[np.float64], start: NDArray[np.float64]) -> bool:
    """Whether a later control's rotation moves a node's least clip level over the axis by
    more than `LOAD_MOVES_DB` (else its load hardly reaches the node, the trials' parts
    move it still less, and the check's tie-break keeps the rotation nearest as set)."""
    moved, before = float(np.min(peak)), float(np.min(start))
    if moved <= 0.0 or before <= 0.0:  # a node that clips at no level (its rail gone)
        return moved != before
    return abs(math.log(moved / before)) > LOAD_MOVES_LN


def node_candidates(analysis: Analysis, k: int, found: NodeWorst) -> list[tuple[int, ...]]:
    """The settings (a rotation index per swept control) at which the spread looks for node
    ``k``'s worst case in every trial, in the check's grid order (ascending rotation
    indices).

    The controls that shape the node, those of its own section and the sections before it,
    each take its end stops, its setting as set and its rotation at the nominal check's
    worst: every combination of them (at most `MAX_PRODUCT`; past it, the nominal worst
    with each control moved alone to those values). The controls after the node's section
    (which reach it only through the load they present) stay at the nominal worst's
    rotations: the check's tie-break keeps them there unless they move its clip level by
    more than `chainbudget.budget.ties.TIE_DB` (`held_settings` adds those moves near the
    node's worst, `loaded_by_later`). `held_settings` then drops those more than
    `PRUNE_DB` above the node's worst at the nominal parts.
    """
    swept = analysis.swept_controls
    worst = analysis.setting_rotations(found.setting)
    last = _last_of(analysis, k)
    values = []
    for sc in swept:
        if sc.stage_index > last:
            values.append([worst[sc.axis]])
            continue
        values.append(sorted({0, sc.rotations.size - 1, sc.as_set, worst[sc.axis]}))
    ordered: dict[tuple[int, ...], None] = {worst: None}
    if math.prod(len(v) for v in values) <= MAX_PRODUCT:
        for combo in itertools.product(*values):
            ordered[tuple(int(i) for i in combo)] = None
    else:
        for sc, options in zip(swept, values, strict=True):
            for option in options:
                moved = list(worst)
                moved[sc.axis] = option
                ordered[tuple(moved)] = None
    return sorted(ordered)


def worst_of_candidates(
    peak: NDArray[np.float64], distance: NDArray[np.float64]
) -> NDArray[np.float64]:
    """The clip peak the check reports as a node's worst, per trial, from its candidate
    settings: ``peak`` (T, C, F) at C candidates (in the check's grid order) over the
    frequency axis (index 0 the reference), ``distance`` (C,) each candidate's distance
    from the settings as set. As the check breaks near-ties (`chainbudget.budget.ties`):
    among the points within `TIE_DB` of the least, the one nearest the settings as set and
    the reference, the first in grid order among equals."""
    trials, count, points = peak.shape
    tied = peak <= peak.min(axis=(1, 2), keepdims=True) * 10.0 ** (TIE_DB / 20.0)
    off_reference = np.ones(points)
    off_reference[0] = 0.0
    cost = np.where(tied, (distance[:, None] + off_reference)[None], np.inf)
    index = np.argmin(cost.reshape(trials, count * points), axis=1)
    return peak.reshape(trials, count * points)[np.arange(trials), index]
