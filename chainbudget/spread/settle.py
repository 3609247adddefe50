"""The power tree settled again for every trial: the rails a trial's stages run on are the
ones its supplies give under the currents those stages then draw (chainbudget/spread).

Notes
-----
The check settles the tree once for the nominal parts (`chainbudget.budget.supplies.settle`):
the rails x at low line are a fixed point x = F(x), F solving the chain at one tone with
the controls as set, reading each stage's currents (`chainbudget.budget.currents`) and
asking each supply for its state under the load they make. A trial's drawn parts move both
sides: a smaller reservoir sags further under the same load, and a stage whose clip follows
its rail draws less when the rail sags. `settle_trials` solves the same fixed point for
every trial at once (the trials one array axis of every solve), from the nominal check's
settled rails. With g(x) = F(x) - x over the R moving rails, each trial takes the
quasi-Newton step

    x_{k+1} = x_k - J_k^{-1} g(x_k),

J_0 the Jacobian of g for the nominal parts at the rails the search starts from
(`nominal_jacobian`, worked out once: the same start for every batch) and J_k Broyden's
rank-one update from the trial's last two steps (`_broyden_update`): the rails are
coupled (a filtered rail follows the rail it is fed from, and both move the stages'
currents), and a secant per rail, which reads its parent's move as its own slope, crawled
where one rail feeds another (the mains practice amplifier's filtered and divided rails:
nine evaluations at the reference instead of six). Where a trial's J is near singular,
that trial takes each rail's own secant step instead,

    x_{k+1} = x_k + (F(x_k) - x_k) / (1 - s_k),

s_k = (F(x_k) - F(x_{k-1})) / (x_k - x_{k-1}) taken no higher than zero (F falls as a rail
rises: more rail, more swing, more current, more sag); x stays between zero and the
rail's output with no load, as in the check. A trial whose every rail agrees with F to
`SETTLE_TOLERANCE_V` stays where it is while the others go on, so its figures do not
depend on the trials beside it in the batch; the loop stops once all agree or after
`MAX_SETTLE_STEPS` evaluations (``residual_v`` says which). Measured on one batch of
trials, settled at the band's low edge (the slower of the two tones): the kitchen radio
two evaluations (its stages sit behind regulators), the busking amp, the bench amplifier
and the shed amplifier four, the mains practice amplifier five (from J_0 = -I, the first
step plain substitution: two, four, four, five and six; with each rail's secant alone:
two, five, five, nine and nine). The busking amp gains nothing from its start: its
push-pull stage swings to the lower of its two battery rails, so at the nominal parts,
where the two are equal, F has a kink, and a forward difference reads one side of it.

A spread settles the trees of a group of chunks together (`Evaluator.__call__`: the
steps' cost on a chunk's hundred-odd trials is mostly the Python between numpy's
operations), and each chunk then evaluates F once on the rails its trials settled on
(``at``).

Each evaluation of F is the check's: the trial's chain solved at the tone alone on its
rails (with its own DC walk and drawn betas), `currents_at` and `external_loads` with
the trials an array axis, and the supplies' spread under those loads per trial
(`chainbudget.spread.tree.tree_spread`). What a supply with parts of its own drawn takes
from its parent is each trial's (`SupplyKind.trial_draw`): a divider's share of its load
and its standing current through its drawn legs, a regulator's load with its drawn adjust
divider and bleeder. A divider's standing current is taken at its parent's output with
no load in that trial (`TrialTree.unloaded_drawn`: a drawn regulator's own set output),
as the check of the trial takes it.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace
from functools import cached_property
from typing import cast

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.analysis import positions_as_set, solve_chain
from chainbudget.budget.currents import currents_at
from chainbudget.budget.rails import drawn_from_parent, external_loads, rail_owners
from chainbudget.budget.supplies import moving_rails, stage_loads_of
from chainbudget.chainfile import Chain
from chainbudget.spread.parts import Part
from chainbudget.spread.tree import TreeSpread, tree_spread, unloaded_per_trial
from chainbudget.stages.base import Environment
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.supplies.base import NO_LOAD, Corners, SupplyLoad, SupplyState

#: A trial's rails are settled when each moves less than this between the voltage its
#: stages are solved on and the supply's output under the load they then draw, V.
SETTLE_TOLERANCE_V = 1e-9
#: Evaluations of the tree allowed per batch (each solves the chain at one tone).
MAX_SETTLE_STEPS = 12

#: Each trial's stage environments on the rails given (drawn parts and DC walk in).
EnvsOn = Callable[[Mapping[str, Corners]], Sequence[Environment]]
Array = NDArray[np.float64]


@dataclass(frozen=True)
class SettledTrials:
    """The tree as settled per trial: its spread (`TreeSpread`), the loads per trial that
    settle it (each rail's `SupplyLoad`, fields (T,)), the largest disagreement left on
    any trial's rail, V, the evaluations spent, each supply's own drawn parts it was
    settled with (`supply_parts`), and the rails the trials' stages were solved on for
    that last evaluation (each moving rail's low-line value, (T,): `settle_trials`'s
    ``at``)."""

    tree: TreeSpread
    loads: dict[str, SupplyLoad]
    residual_v: float
    evaluations: int
    drawn: dict[str, dict[str, Array]]
    rails_v: dict[str, Array]
    #: the tree with no load per trial (`TrialTree.unloaded_drawn`)
    unloaded: dict[str, SupplyState]


def trial_loads(
    chain: Chain,
    nominal_chain: Chain,
    envs: Sequence[Environment],
    tone_hz: float,
    trials: int,
    drawn: Mapping[str, Mapping[str, Array]] | None = None,
    unloaded: Mapping[str, SupplyState] | None = None,
) -> dict[str, SupplyLoad]:
    """Each rail's load per trial (fields (T,)) with the stages on ``envs``: the trial's
    chain solved at ``tone_hz`` with the controls as set, its currents
    (`chainbudget.budget.currents.currents_at`) summed per rail, and what the supplies fed
    from each rail draw (`chainbudget.budget.rails.external_loads`), with ``drawn`` each
    supply's own drawn parts by name (module notes) and ``unloaded`` the tree's no-load
    states."""
    cascade = solve_chain(chain, envs, np.array([tone_hz]), positions_as_set(chain.stages))
    currents = currents_at(chain, cascade, envs, 0, tone_hz)
    loads = external_loads(nominal_chain, stage_loads_of(currents), drawn, unloaded)
    return {rail: _per_trial(load, trials) for rail, load in loads.items()}


def supply_parts(
    chain: Chain, parts: Sequence[Part], values: Sequence[Array]
) -> dict[str, dict[str, Array]]:
    """Each supply's own drawn parts per trial, field -> (T,) values, by supply name."""
    found: dict[str, dict[str, Array]] = {}
    for part, value in zip(parts, values, strict=True):
        if part.table == "supply":
            found.setdefault(chain.supplies[part.index].name, {})[part.key] = value
    return found


def _per_trial(load: SupplyLoad, trials: int) -> SupplyLoad:
    """A load with every field a (T,) array."""

    def flat(value: float) -> float:
        array = np.asarray(value, dtype=float).reshape(-1)
        # an array load: the supply kinds take one per trial (`chainbudget.spread.settle`)
        return cast(float, np.broadcast_to(array, (trials,)).copy() if array.size == 1 else array)

    return SupplyLoad(
        flat(load.idle_a),
        flat(load.nominal_a),
        flat(load.heaviest_a),
        flat(load.nominal_pulse_a),
        flat(load.heaviest_pulse_a),
        load.signal_hz,
    )


def load_figures(
    chain: Chain,
    loads: Mapping[str, SupplyLoad],
    drawn: Mapping[str, Mapping[str, Array]],
    unloaded: Mapping[str, SupplyState],
    trials: int,
) -> dict[str, Array]:
    """Each rail's loads per trial as the check JSON carries them
    (`chainbudget.budget.supplies.supply_budgets`), from ``loads``, the external load on
    each rail per trial (the tree as settled, `SettledTrials.loads`), and ``drawn``, each
    supply's own drawn parts by name: out of its pin (``idle_load_a``, ``nominal_load_a``,
    ``max_load_a``: the load as its kind delivers it, `SupplyKind.trial_delivered`, a
    regulator's drawn divider and bleeder in) and, below a parent, what it takes from
    that parent (``input_idle_a``, ``input_max_a``: `SupplyKind.trial_draw`, or the file's
    values where none of its own parts is drawn)."""
    found: dict[str, Array] = {}

    def put(rail: str, key: str, value: float) -> None:
        array = np.asarray(value, dtype=float).reshape(-1)
        found[f"supplies.{rail}.{key}"] = np.broadcast_to(array, (trials,)).copy()

    for supply in chain.supplies:
        kind = SUPPLY_KINDS[supply.kind]
        mine = drawn.get(supply.name, {})
        for rail in kind.rails(supply):
            load = loads.get(rail, NO_LOAD)
            out = kind.trial_delivered(supply, mine, load) if mine else None
            out = kind.delivered(supply, load) if out is None else out
            put(rail, "idle_load_a", out.idle_a)
            put(rail, "nominal_load_a", out.nominal_a)
            put(rail, "max_load_a", out.heaviest_a)
            if supply.parent is None:
                continue
            taken = drawn_from_parent(chain, supply, load, unloaded, mine)
            put(rail, "input_idle_a", taken.idle_a)
            put(rail, "input_max_a", taken.heaviest_a)
    return found


def with_loads(budget: Budget, chain: Chain, loads: Mapping[str, SupplyLoad]) -> Budget:
    """``budget`` with each supply's load the one given (out of its pin as its kind
    delivers it, `SupplyKind.delivered`, as `chainbudget.budget.supplies.supply_budgets`
    writes it); its state kept (what a supply no trial moves keeps)."""
    owners = rail_owners(chain)
    supplies = tuple(
        replace(
            s,
            load=SUPPLY_KINDS[s.kind].delivered(owners[s.name], loads.get(s.name, NO_LOAD)),
        )
        for s in budget.supplies
    )
    return replace(budget, supplies=supplies)


@dataclass(frozen=True)
class TrialTree:
    """F of the module notes for one batch of trials at one tone: the trials' chain
    (``chain``, drawn stage values in), the file's (``nominal_chain``), each stage's
    environment on given rails (``envs_on``: drawn betas and DC walk in), each part's
    values per trial, the nominal check settled for the tone (``budget``, ``voltages``:
    where the settling starts and what the rectifier's solves are kept about), the tree
    with no load, the tone and the trials' count."""

    chain: Chain
    nominal_chain: Chain
    envs_on: EnvsOn
    parts: tuple[Part, ...]
    values: list[Array]
    budget: Budget
    voltages: Mapping[str, Corners]
    unloaded: Mapping[str, SupplyState]
    tone_hz: float
    trials: int

    @cached_property
    def drawn(self) -> dict[str, dict[str, Array]]:
        """Each supply's own drawn parts by name (`supply_parts`)."""
        return supply_parts(self.nominal_chain, self.parts, self.values)

    @cached_property
    def unloaded_drawn(self) -> dict[str, SupplyState]:
        """The tree with no load per trial, where a divider's standing current is drawn
        (`chainbudget.spread.tree.unloaded_per_trial`)."""
        return unloaded_per_trial(
            self.nominal_chain, self.parts, self.values, self.budget, self.unloaded, self.trials
        )

    def at(self, x: Mapping[str, Array]) -> tuple[dict[str, SupplyLoad], TreeSpread]:
        """F at rails ``x`` (each moving rail's low-line value per trial, (T,)): the loads
        the trials' stages draw on them and the tree's spread under those loads."""
        trials = self.trials
        on = {
            r: replace(self.voltages[r], low=cast(float, v.reshape(trials, 1)))
            for r, v in x.items()
        }
        on = {**self.voltages, **on}
        loads = trial_loads(
            self.chain,
            self.nominal_chain,
            self.envs_on(on),
            self.tone_hz,
            trials,
            self.drawn,
            self.unloaded_drawn,
        )
        tree = tree_spread(
            self.nominal_chain,
            self.parts,
            self.values,
            with_loads(self.budget, self.nominal_chain, loads),
            on,
            self.unloaded,
            trials,
            about=self.budget,
        )
        return loads, tree


def settle_trials(
    tree: TrialTree,
    start: Array | None = None,
    at: Mapping[str, Array] | None = None,
) -> SettledTrials:
    """The tree settled per trial for its tone (module notes), from the nominal check's
    rails (``tree.voltages``); ``start`` the Jacobian of g there (`nominal_jacobian`; -I
    where not given). With ``at``, the rails these trials settled on already
    (`SettledTrials.rails_v` of a batch that held them, each rail's values for these
    trials), F is evaluated there once, with no step: the tree, loads and residual that
    batch's last evaluation gave them, to round-off (a trial's F depends on the trials
    beside it in its last bits alone: the push-pull stage's Newton solves stop once the
    whole batch has converged)."""
    rails = moving_rails(tree.nominal_chain)
    trials = tree.trials
    ceiling = {r: np.asarray(tree.unloaded[r].trough_v, dtype=float) for r in rails}
    # from the nominal check's rails: each step's supplies are then spread under loads
    # close to the nominal ones, about which the rectifier's solves are kept
    x = {r: _low(tree.voltages[r], trials) for r in rails} if at is None else dict(at)
    previous: tuple[dict[str, Array], dict[str, Array]] | None = None
    loads: dict[str, SupplyLoad] = {}
    residual = np.inf
    evaluations = 0
    jacobian: Array | None = None
    solved_on = x
    while evaluations < MAX_SETTLE_STEPS:
        loads, spread = tree.at(x)
        solved_on = x
        evaluations += 1
        y = {r: _low(spread.voltages[r], trials) for r in rails}
        gaps = np.max([np.abs(y[r] - x[r]) for r in rails], axis=0, initial=0.0)
        residual = float(np.max(gaps, initial=0.0))
        if residual <= SETTLE_TOLERANCE_V or at is not None:
            break
        # a trial already settled stays where it is: its figures then do not depend on how
        # many steps the others beside it in the batch take
        moving = gaps > SETTLE_TOLERANCE_V
        jacobian = _broyden_update(jacobian, rails, x, y, previous, start)
        newton = _newton_steps(jacobian, np.stack([y[r] - x[r] for r in rails], axis=1))
        usable = np.all(np.isfinite(newton), axis=1)
        step = {}
        for i, r in enumerate(rails):
            slope = np.zeros(trials)
            if previous is not None:
                dx = x[r] - previous[0][r]
                moved = dx != 0.0
                slope[moved] = (y[r] - previous[1][r])[moved] / dx[moved]
            slope = np.minimum(slope, 0.0)
            secant = x[r] + (y[r] - x[r]) / (1.0 - slope)
            # no higher than the rail with no load (a drawn regulator's own, per trial,
            # may lie above the nominal one: F's value is then its bound)
            top = np.maximum(ceiling[r], y[r])
            stepped = np.clip(np.where(usable, x[r] + newton[:, i], secant), 0.0, top)
            step[r] = np.where(moving, stepped, x[r])
        previous = (x, y)
        x = step
    return SettledTrials(
        spread, loads, residual, evaluations, tree.drawn, solved_on, tree.unloaded_drawn
    )


#: How far `nominal_jacobian` raises one rail at a time to read F's slopes, V: small
#: beside a rail's sag, large beside the settling's tolerance and F's round-off.
JACOBIAN_STEP_V = 1e-4


def nominal_jacobian(tree: TrialTree) -> Array:
    """The Jacobian of g(x) = F(x) - x over the moving rails, (R, R), at the nominal
    check's settled rails (``tree.voltages``) with the nominal parts, by forward
    differences (Dennis & Schnabel, sec. 5.4; from memory): ``tree`` holds R + 1 copies of
    the nominal parts as its trials, solved in one evaluation of F, copy i + 1 with rail i
    raised by `JACOBIAN_STEP_V`. Where `settle_trials` starts from it, a trial's first
    step is Newton's for the nominal parts rather than substitution; a trial's parts move
    J by their tolerances, and Broyden's updates take it from there."""
    rails = moving_rails(tree.nominal_chain)
    count = len(rails) + 1
    if not rails:  # nothing to settle
        return np.zeros((0, 0))
    assert tree.trials == count  # one copy of the nominal parts per rail, and one more
    raised = np.eye(count, len(rails), -1) * JACOBIAN_STEP_V  # row i + 1: rail i raised
    x = {r: _low(tree.voltages[r], count) + raised[:, i] for i, r in enumerate(rails)}
    _, spread = tree.at(x)
    y = np.stack([_low(spread.voltages[r], count) for r in rails], axis=1)  # (R + 1, R)
    slopes = (y[1:] - y[0]) / JACOBIAN_STEP_V  # row i: dF/dx_i
    return slopes.T - np.eye(len(rails))


#: A Broyden matrix whose condition number is above this gives no step: the rail's own
#: secant is taken instead (the columns of a rail that has stopped moving go stale).
MAX_CONDITION = 1e10


def _broyden_update(
    jacobian: Array | None,
    rails: Sequence[str],
    x: Mapping[str, Array],
    y: Mapping[str, Array],
    previous: tuple[Mapping[str, Array], Mapping[str, Array]] | None,
    start: Array | None = None,
) -> Array:
    """Each trial's estimate of the Jacobian of g(x) = F(x) - x over the rails, (T, R, R):
    ``start`` before the first step (`nominal_jacobian`; where not given -I, the first
    step then substitution, x + g), then
    Broyden's rank-one update J + (dg - J dx) dx^T / (dx^T dx) from the last two steps
    (Broyden, Math. Comp. 19 (1965) 577, his "good" update; Dennis & Schnabel, Numerical
    Methods for Unconstrained Optimization and Nonlinear Equations, sec. 8.1; from
    memory). A trial that did not move keeps its estimate."""
    trials = np.size(next(iter(x.values()))) if rails else 0
    if jacobian is None or previous is None:
        first = -np.eye(len(rails)) if start is None else start
        return np.broadcast_to(first, (trials, len(rails), len(rails))).copy()
    dx = np.stack([x[r] - previous[0][r] for r in rails], axis=1)
    dg = np.stack([(y[r] - x[r]) - (previous[1][r] - previous[0][r]) for r in rails], axis=1)
    length = np.einsum("tr,tr->t", dx, dx)
    moved = length > 0.0
    miss = dg[moved] - np.einsum("trs,ts->tr", jacobian[moved], dx[moved])
    updated = jacobian.copy()
    updated[moved] += np.einsum("tr,ts->trs", miss, dx[moved]) / length[moved, None, None]
    return updated


def _newton_steps(jacobian: Array, g: Array) -> Array:
    """Each trial's step d with J d = -g, (T, R); NaN in a trial whose J is near singular
    (`MAX_CONDITION`) or not finite."""
    found = np.full(g.shape, np.nan)
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        finite = np.all(np.isfinite(jacobian), axis=(1, 2)) & np.all(np.isfinite(g), axis=1)
        usable = finite.copy()
        if finite.any():
            usable[finite] = np.linalg.cond(jacobian[finite]) < MAX_CONDITION
        if usable.any():
            found[usable] = np.linalg.solve(jacobian[usable], -g[usable][..., None])[..., 0]
    return found


def _low(corners: Corners, trials: int) -> Array:
    """A rail's low-line value as a (T,) array."""
    return np.broadcast_to(np.asarray(corners.low, dtype=float).reshape(-1), (trials,)).copy()
