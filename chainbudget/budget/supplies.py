"""The power tree under load: the rails settled against the stages' currents, the clip at
the band's low edge, and one `SupplyBudget` per rail with its kind's own figures.

Notes
-----
Loads: each stage's current from each of its rails (:mod:`chainbudget.budget.currents`) at
idle, at the nominal level and at its own clip level, as a waveform: a steady part and the
half-wave sine pulses a class-B output draws at the signal frequency. A supply's heaviest
load has every stage at its own clip level at once, an upper bound. A supply kind adds what
it takes itself (a regulator its divider, bleeder and own current) through ``input_load``.
The loads are floats in the check; `stage_loads_of` and the tree's sums above it
(`chainbudget.budget.rails.external_loads`) take the (T,) currents of a chain solved over
the spread's trials as well, element-wise, one load per trial.

The rails and the loads depend on each other: a stage swings further on a higher rail and
draws more current, which sags the rail. `settle` finds the operating point where the rail
voltages a stage is analysed on are the ones the supplies give under the loads the stages
then draw: a fixed point x = F(x) of the rail voltages x at the analysed corner. F is
monotone decreasing (more rail, more load, less rail), so each rail's equation
x_i = F_i(x) has a single root between 0 and its unloaded voltage, which bracketing finds
whatever the slope; the rails are taken in turn (Gauss-Seidel) until every one agrees to
`RAIL_TOLERANCE_V`. Plain substitution is tried first while it converges fast (most trees:
a regulator's output and an ideal battery do not move at all). Each evaluation of F solves
the chain at the one signal frequency only, with the controls as set. Where the supply
cannot hold its load at any positive voltage its kind reports it collapsed.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.analysis import (
    Analysis,
    analyse,
    environments,
    master_volume,
    positions_as_set,
    solve_chain,
)
from chainbudget.budget.currents import StageCurrents, currents_at, stage_currents
from chainbudget.budget.levels import clip_source_peak
from chainbudget.budget.rails import (
    drawn_from_parent,
    external_loads,
    parents_first,
    rail_owners,
    rails_of,
    stage_rail_names,
    supply_states,
)
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.supplies import KINDS
from chainbudget.supplies.base import (
    GROUND_SUPPLY,
    NO_LOAD,
    Corners,
    SupplyBudget,
    SupplyContext,
    SupplyLoad,
    SupplyState,
    chosen,
    larger,
)

#: The rails are settled when each moves less than this between the voltage a stage is
#: analysed on and the supply's output under the load it then draws, V.
RAIL_TOLERANCE_V = 1e-8
#: Evaluations of the tree allowed to settle it (each solves the chain at one frequency).
MAX_EVALUATIONS = 400
# Plain substitution continues while each step shrinks the disagreement at least this much.
_FAST_CONTRACTION = 0.5


def stage_loads_of(currents: list[StageCurrents]) -> dict[str, SupplyLoad]:
    """Current the stages draw directly from each rail (both rails of split-rail stages):
    floats, or (T,) arrays where the currents are per trial (element-wise: a stage's
    heaviest load is the largest of its three per trial, with its pulses where that is the
    clip's)."""
    loads: dict[str, SupplyLoad] = {}
    for sc in currents:
        heaviest = larger(larger(sc.idle_a, sc.nominal_a), sc.clip_a)
        pulse = chosen(heaviest == sc.clip_a, larger(sc.clip_pulse_a, 0.0), 0.0)
        load = SupplyLoad(
            sc.idle_a,
            larger(sc.nominal_a, sc.idle_a),
            heaviest,
            chosen(sc.nominal_a >= sc.idle_a, larger(sc.nominal_pulse_a, 0.0), 0.0),
            pulse,
            sc.signal_hz,
        )
        for rail in {sc.positive, sc.negative} - {None, GROUND_SUPPLY}:
            assert rail is not None
            loads[rail] = loads.get(rail, NO_LOAD) + load
    return loads


def stage_loads(analysis: Analysis) -> dict[str, SupplyLoad]:
    """Current the stages of an analysed chain draw directly from each rail."""
    return stage_loads_of(stage_currents(analysis))


@dataclass(frozen=True)
class SettledTree:
    """The power tree at its operating point for a tone (Hz) at one corner.

    ``voltages`` are the rails the stages are analysed on; ``loads`` and ``states`` what the
    supplies give under the loads the stages then draw; ``residual_v`` the largest
    disagreement between the two on a rail a stage uses (within `RAIL_TOLERANCE_V` when
    ``settled``).
    """

    tone_hz: float
    corner: str
    voltages: dict[str, Corners]
    loads: dict[str, SupplyLoad]
    states: dict[str, SupplyState]
    residual_v: float
    evaluations: int
    settled: bool


def moving_rails(chain: Chain) -> list[str]:
    """The rails whose voltage a stage's analysis depends on."""
    names: dict[str, None] = {}
    for stage in chain.stages:
        if STAGE_KINDS[stage.kind].uses_rails:
            names.update(dict.fromkeys(stage_rail_names(stage)))
    return list(names)


class _Tree:
    """F(x): the rails' voltages at a corner under the load the stages draw on rails x."""

    def __init__(self, chain: Chain, corner: str, tone_hz: float) -> None:
        self.chain = chain
        self.corner = corner
        self.tone = np.array([tone_hz])
        self.positions = positions_as_set(chain.stages)
        self.evaluations = 0

    def voltages(self, states: Mapping[str, SupplyState], x: Mapping[str, float]) -> dict:
        corners = {rail: state.corners for rail, state in states.items()}
        for rail, value in x.items():
            corners[rail] = dataclasses.replace(corners[rail], **{self.corner: value})
        return corners

    def __call__(
        self, states: Mapping[str, SupplyState], x: Mapping[str, float]
    ) -> tuple[dict[str, float], dict[str, SupplyLoad], dict[str, SupplyState]]:
        self.evaluations += 1
        chain = self.chain
        envs = environments(chain, self.corner, self.voltages(states, x))
        cascade = solve_chain(chain, envs, self.tone, self.positions)
        currents = currents_at(chain, cascade, envs, 0, float(self.tone[0]))
        loads = external_loads(chain, stage_loads_of(currents))
        found = supply_states(chain, loads)
        y = {rail: float(getattr(found[rail].corners, self.corner)) for rail in x}
        return y, loads, found


def settle(
    chain: Chain,
    corner: str = "low",
    tone_hz: float | None = None,
    start: Mapping[str, Corners] | None = None,
) -> SettledTree:
    """The power tree's operating point with the stages analysed at ``corner`` and their
    currents worked out at the tone ``tone_hz`` (default: the reference frequency), the
    search started from the rails ``start`` (default: the unloaded tree's).

    Notes
    -----
    See the module notes: substitution while it contracts fast, then each rail's own
    bracketed root (Illinois regula falsi on x_i - F_i(x), bracketed by 0 and the unloaded
    voltage) in turn until all agree to `RAIL_TOLERANCE_V`.
    """
    tone = chain.settings.reference if tone_hz is None else tone_hz
    tree = _Tree(chain, corner, tone)
    unloaded = supply_states(chain)
    rails = moving_rails(chain)
    ceiling = {r: float(getattr(unloaded[r].corners, corner)) for r in rails}
    x = dict(ceiling)
    if start is not None:
        x = {r: min(float(getattr(start[r], corner)), ceiling[r]) for r in rails}
    y, loads, states = tree(unloaded, x)

    def residual(a: Mapping[str, float], b: Mapping[str, float]) -> float:
        return max((abs(a[r] - b[r]) for r in rails), default=0.0)

    gap = residual(x, y)
    # substitution, each rail's step scaled by the secant of its last two (a rail's F falls
    # as it rises, so the slope is taken no higher than zero), while it contracts fast
    previous: tuple[dict[str, float], dict[str, float]] | None = None
    while gap > RAIL_TOLERANCE_V and tree.evaluations < 8:
        x_new = {}
        for r in rails:
            slope = 0.0
            if previous is not None and x[r] != previous[0][r]:
                slope = min((y[r] - previous[1][r]) / (x[r] - previous[0][r]), 0.0)
            x_new[r] = min(max(x[r] + (y[r] - x[r]) / (1.0 - slope), 0.0), ceiling[r])
        y_new, loads_new, states_new = tree(states, x_new)
        gap_new = residual(x_new, y_new)
        if gap_new > _FAST_CONTRACTION * gap:
            break
        previous = (x, y)
        x, y, loads, states, gap = x_new, y_new, loads_new, states_new, gap_new
    # each rail's own bracketed root, in turn
    while gap > RAIL_TOLERANCE_V and tree.evaluations < MAX_EVALUATIONS:
        spent = tree.evaluations
        for rail in rails:
            if abs(y[rail] - x[rail]) <= RAIL_TOLERANCE_V:
                continue
            x, y, loads, states = _settle_one(tree, states, x, y, loads, rail, ceiling[rail])
        gap = residual(x, y)
        if tree.evaluations == spent:
            break  # every unsettled rail's bracket has shut: no steady point to find
    return SettledTree(
        tone_hz=tone,
        corner=corner,
        voltages=tree.voltages(states, x),
        loads=loads,
        states=states,
        residual_v=gap,
        evaluations=tree.evaluations,
        settled=gap <= RAIL_TOLERANCE_V,
    )


def _settle_one(
    tree: _Tree,
    states: dict[str, SupplyState],
    x: dict[str, float],
    y: dict[str, float],
    loads: dict[str, SupplyLoad],
    rail: str,
    ceiling: float,
) -> tuple[dict[str, float], dict[str, float], dict[str, SupplyLoad], dict[str, SupplyState]]:
    """Solve x_rail = F_rail(x) with the other rails held: h(t) = F_rail - t falls with t,
    h(0) >= 0 and h(ceiling) <= 0 (the supply's output is never negative nor above its
    unloaded value)."""
    best = (x, y, loads, states)
    lo, hi = 0.0, max(ceiling, 0.0)
    h_lo: float | None = None
    h_hi: float | None = None
    side = 0  # +1: lo moved last, -1: hi moved last
    t, h = x[rail], y[rail] - x[rail]
    for _ in range(60):
        if abs(h) <= RAIL_TOLERANCE_V or tree.evaluations >= MAX_EVALUATIONS:
            break
        # Illinois: the end that stays put a second time has its value halved
        if h > 0.0:
            if side == 1 and h_hi is not None:
                h_hi *= 0.5
            lo, h_lo, side = t, h, 1
        else:
            if side == -1 and h_lo is not None:
                h_lo *= 0.5
            hi, h_hi, side = t, h, -1
        if hi - lo <= 0.1 * RAIL_TOLERANCE_V:
            break
        if h_lo is None or h_hi is None:
            # one end known: substitute, kept within the bracket
            t_new = min(max(t + h, lo), hi)
            if t_new == t:
                t_new = 0.5 * (lo + hi)
        else:
            t_new = (lo * h_hi - hi * h_lo) / (h_hi - h_lo)
            if not lo < t_new < hi:
                t_new = 0.5 * (lo + hi)
        trial = dict(x)
        trial[rail] = t_new
        y_new, loads_new, states_new = tree(states, trial)
        t, h = t_new, y_new[rail] - t_new
        best = (trial, y_new, loads_new, states_new)
    return best


def loaded_analysis(chain: Chain, corner: str = "low") -> Analysis:
    """Analyse the chain with each stage's rails as the settled power tree gives them at
    the reference frequency (`settle`)."""
    return analyse(chain, corner, settle(chain, corner).voltages)


def max_output_positions(chain: Chain) -> list[dict[str, float]]:
    """Every control as set but the master volume, fully up (none: the controls as set)."""
    positions = positions_as_set(chain.stages)
    volume = master_volume(chain)
    if volume is not None:
        positions[volume]["position"] = 1.0
    return positions


def clip_peak_at_load(cascade: Cascade, column: int = 0) -> NDArray[np.float64] | None:
    """Peak at the load, V, at which the first stage clips, read at one column of the
    cascade's frequency axis: the least source peak at which a stage reaches a limit times
    the gain to the load (None: nothing limits it). Element-wise over any leading axes (a
    spread's trials: `chainbudget.spread`)."""
    last = len(cascade.stages) - 1
    gain = np.abs(np.asarray(cascade.v_out[last])[..., column])
    peaks = []
    for k in range(last + 1):
        clip = clip_source_peak(cascade, k)
        if clip is not None:
            peaks.append(np.asarray(clip[0])[..., column])
    if not peaks:
        return None
    return np.asarray(np.minimum.reduce(np.broadcast_arrays(*peaks)) * gain, dtype=float)


def clip_at_load(
    chain: Chain, voltages: Mapping[str, Corners], corner: str, tone_hz: float
) -> float | None:
    """Peak at the load, V, at which the first stage clips for a sine at ``tone_hz`` with
    the volume fully up and the other controls as set (None: nothing limits it)."""
    envs = environments(chain, corner, voltages)
    cascade = solve_chain(chain, envs, np.array([tone_hz]), max_output_positions(chain))
    peak = clip_peak_at_load(cascade)
    return None if peak is None else float(peak)


def low_edge_clip_vpk(analysis: Analysis) -> float | None:
    """The clip peak at the load for a tone at the band's low edge, V, with the power tree
    settled for that tone (the supplies have the longest to sag between charges)."""
    chain = analysis.chain
    low_hz = chain.settings.band[0]
    voltages: Mapping[str, Corners] = analysis.voltages
    if _sags(chain, analysis):
        voltages = low_edge_tree(chain, analysis.voltages).voltages
    return clip_at_load(chain, voltages, "low", low_hz)


def _sags(chain: Chain, analysis: Analysis) -> bool:
    """Whether any rail a stage's swing depends on moves under the analysed load (if none
    does, no tone can move it: the tree needs no settling for another)."""
    loaded = supply_states(chain, external_loads(chain, stage_loads(analysis)))
    return rails_sag(chain, loaded, supply_states(chain))


def rails_sag(
    chain: Chain, loaded: Mapping[str, SupplyState], unloaded: Mapping[str, SupplyState]
) -> bool:
    """Whether any rail a stage's swing depends on has a lower trough ``loaded`` than
    ``unloaded`` (`low_edge_clip_vpk` settles the tree again for its tone only then)."""
    return any(loaded[r].trough_v != unloaded[r].trough_v for r in moving_rails(chain))


def low_edge_tree(chain: Chain, start: Mapping[str, Corners]) -> SettledTree:
    """The tree settled for a tone at the band's low edge (`settle` at low line), its
    search started from the rails ``start`` (the check's settled at the reference)."""
    return settle(chain, "low", chain.settings.band[0], start=start)


def _sag_cost_db(
    analysis: Analysis,
    loads: Mapping[str, SupplyLoad],
    states: Mapping[str, SupplyState],
) -> dict[str, float]:
    """For each supply that can say what its own source resistance is: the output clip
    power its sag costs at the reference frequency, dB.

    Notes
    -----
    The clip with every such supply taken without its resistance (`SupplyKind.stiff_state`)
    against the clip with all of them so but this one, the rest of the tree under the same
    loads: what this supply's sag alone costs (two batteries feeding the two halves of a
    push-pull each cost their share, though the stage clips on the weaker half).
    """
    chain = analysis.chain
    reference = chain.settings.reference
    stiff: dict[str, SupplyState] = {}
    for supply in chain.supplies:
        parent = None if supply.parent is None else states[supply.parent]
        state = KINDS[supply.kind].stiff_state(supply, parent, loads.get(supply.name, NO_LOAD))
        if state is not None:
            stiff[supply.name] = state
    if not stiff:
        return {}
    ideal = clip_at_load(chain, _replaced(chain, stiff, loads, states), "low", reference)
    found: dict[str, float] = {}
    for name in stiff:
        others = {other: state for other, state in stiff.items() if other != name}
        sagging = (
            _reference_clip(analysis)
            if not others
            else clip_at_load(chain, _replaced(chain, others, loads, states), "low", reference)
        )
        if ideal is None or sagging is None or ideal <= 0.0 or sagging <= 0.0:
            continue
        found[name] = float(20.0 * np.log10(ideal / sagging))
    return found


def _replaced(
    chain: Chain,
    replaced: Mapping[str, SupplyState],
    loads: Mapping[str, SupplyLoad],
    states: Mapping[str, SupplyState],
) -> dict[str, Corners]:
    """Every rail's corners with the supplies ``replaced`` at the states given and every
    supply fed from them recomputed under the same loads."""
    changed = dict(replaced)
    for supply in parents_first(chain):
        if supply.name in replaced or supply.parent is None or supply.parent not in changed:
            continue
        mine = {r: loads.get(r, NO_LOAD) for r in rails_of(supply)}
        changed.update(KINDS[supply.kind].rail_states(supply, changed[supply.parent], mine))
    corners = {rail: state.corners for rail, state in states.items()}
    corners.update({rail: state.corners for rail, state in changed.items()})
    return corners


def _reference_clip(analysis: Analysis) -> float | None:
    """The analysis's own clip peak at the load at the reference frequency, volume fully
    up (as `clip_at_load` would solve it; read from the volume axis already solved)."""
    chain = analysis.chain
    last = len(chain.stages) - 1
    cascade = analysis.nominal
    index: tuple[int, ...] = ()
    if analysis.volume_sweep is not None:
        cascade, index = analysis.volume_sweep, (analysis.volume_rotations.size - 1,)
    gain = float(np.abs(np.asarray(cascade.v_out[last])[(*index, 0)]))
    peaks = []
    for k in range(last + 1):
        clip = clip_source_peak(cascade, k)
        if clip is not None:
            peak = np.asarray(clip[0])
            shape = np.broadcast_shapes(peak.shape, np.shape(cascade.v_out[k]))
            peaks.append(float(np.broadcast_to(peak, shape)[(*index, 0)]))
    return min(peaks) * gain if peaks else None


def supply_budgets(analysis: Analysis) -> tuple[SupplyBudget, ...]:
    """Every rail of the tree under the analysed chain's loads, with its kind's figures, in
    file order (a split supply's rails one after the other)."""
    chain = analysis.chain
    loads = external_loads(chain, stage_loads(analysis))
    states = supply_states(chain, loads)
    owners = rail_owners(chain)
    costs = _sag_cost_db(analysis, loads, states)
    found = []
    for supply in chain.supplies:
        kind = KINDS[supply.kind]
        parent = None if supply.parent is None else owners[supply.parent]
        mine = rails_of(supply)
        rail_loads = {rail: loads[rail] for rail in mine}
        for rail in mine:
            load, state = loads[rail], states[rail]
            context = SupplyContext(
                supply=supply,
                state=state,
                load=load,
                parent=parent,
                parent_kind=None if parent is None else KINDS[parent.kind],
                parent_state=None if supply.parent is None else states[supply.parent],
                parent_load=None if supply.parent is None else loads[supply.parent],
                ambient_degc=chain.settings.ambient,
                rail=rail,
                rail_loads=rail_loads,
            )
            found.append(
                SupplyBudget(
                    name=rail,
                    kind=supply.kind,
                    parent=supply.parent,
                    stages=tuple(
                        st.name
                        for st in chain.stages
                        if rail in (st.values.get("positive"), st.values.get("negative"))
                    ),
                    children=tuple(s.name for s in chain.supplies if s.parent == rail),
                    vout_v=kind.output_voltage(supply, state),
                    state=state,
                    load=kind.delivered(supply, load),
                    drawn=None if parent is None else drawn_from_parent(chain, supply, load),
                    own=kind.figures(context),
                    sag_cost_db=costs.get(rail),
                )
            )
    return tuple(found)
