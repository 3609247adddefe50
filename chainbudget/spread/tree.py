"""The power tree over a batch of trials: each supply kind's spread figures, parents first,
and the rails and ripple the stages and the hum then take (chainbudget/spread).

Notes
-----
A supply is asked (`SupplyKind.spread`) when it draws parts of its own or its parent is
spread, with its parent's low-line trough, ripple and mean per trial where the parent
spreads them, else the nominal check's. What it passes on:

- to the supplies below, its trough (``rail_low_v``) and its ripple, mean and output at
  high line (`RippleSpread`, `HighLine`) as its state gives them; a kind that gives no
  mean (or no output at high line) passes none where a trial moves it, so the figures
  below that read it are not spread, and the nominal check's where none does;
- to the yields, the flags of its rules that it works out per trial (`SupplySpread.flags`,
  `chainbudget.spread.flags`);
- to its stages, its rail at low line per trial as the check's settled tree has it
  (`chainbudget.budget.supplies.settle`): the trough, kept no higher than the rail's
  output with no load at all, which is where the check's search for the settled rails
  starts and which it never goes above. That cap reaches only a rail whose trough under
  load lies above its unloaded output: a divider or filter on a stiff rail with ripple (a
  regulator's), whose ripple smoothed about its mean lifts the trough above the rippleless
  unloaded level. The unloaded output per trial is the kind's own spread with no load and
  its parent unloaded (a root's does not move: no load, no ripple, no drop);
- to the hum, its ripple per trial.

The loads are the budget's given: the nominal check's, or one per trial (with ``about``)
while `chainbudget.spread.settle` settles the tree again for each trial.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any, cast

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.rails import has_standing_current
from chainbudget.chainfile import Chain
from chainbudget.spread.flags import as_flag
from chainbudget.spread.hum import harmonic_key
from chainbudget.spread.parts import Part
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.supplies.base import (
    NO_LOAD,
    Corners,
    HighLine,
    RippleSpread,
    Supply,
    SupplyState,
)

Figures = dict[str, NDArray[np.float64]]


@dataclass(frozen=True)
class TreeSpread:
    """The supplies' figures per trial (``supplies.NAME.KEY``, shape (T,)), every rail's
    corners for the stages (a spread rail's low-line value a (T, 1) array) and each spread
    rail's ripple per trial."""

    figures: Figures
    voltages: dict[str, Corners]
    ripples: dict[str, RippleSpread]


@dataclass(frozen=True)
class _Walk:
    """What the supplies already spread pass down: their troughs, unloaded outputs and
    ripple per trial, and which of them some trial moves."""

    nominal: Budget
    unloaded: Mapping[str, SupplyState]
    lows: dict[str, NDArray[np.float64]]
    ceilings: dict[str, NDArray[np.float64]]
    ripples: dict[str, RippleSpread]
    moved: set[str]

    def parent_low(self, parent: str | None) -> NDArray[np.float64] | None:
        """The parent's low-line trough: per trial where it is spread, else the nominal
        check's (None for a root)."""
        if parent is None:
            return None
        if parent in self.lows:
            return self.lows[parent]
        return np.asarray(self.nominal.supply(parent).state.trough_v, dtype=float)

    def parent_ripple(self, parent: str | None) -> RippleSpread | None:
        """The parent's ripple and mean: per trial where it spreads them, else the nominal
        check's (None for a root)."""
        if parent is None:
            return None
        if parent in self.ripples:
            return self.ripples[parent]
        return RippleSpread.of(self.nominal.supply(parent).state)

    def with_mean(self, name: str, ripple: RippleSpread) -> RippleSpread:
        """A supply's ripple with its mean and its output at high line for the supplies
        below: the kind's own per trial; where it gives none, the nominal check's if no
        trial moves the supply, else none (module notes)."""
        if name in self.moved:
            return ripple
        state = self.nominal.supply(name).state
        if ripple.mean_v is None:
            ripple = replace(ripple, mean_v=np.asarray(state.nominal_v))
        if ripple.high is None:
            ripple = replace(ripple, high=HighLine.of(state))
        return ripple

    def ceiling(
        self,
        supply: Supply,
        rail: str,
        drawn: Mapping[str, NDArray[np.float64]],
        bounds: Mapping[str, tuple[float, float]],
    ) -> NDArray[np.float64]:
        """The output of ``supply``'s rail ``rail`` at low line with no load, per trial
        (module notes): the kind's spread under no load from its parent's unloaded output
        (a root's, a split supply's two rails among them, does not move)."""
        own = self.unloaded[rail]
        if supply.parent is None:
            return np.asarray(own.trough_v, dtype=float)
        parent = self.ceilings.get(supply.parent)
        if parent is None:
            parent = np.asarray(self.unloaded[supply.parent].trough_v, dtype=float)
        unloaded = replace(self.nominal.supply(supply.name), load=NO_LOAD, state=own)
        spread = SUPPLY_KINDS[supply.kind].spread(
            supply,
            drawn,
            unloaded,
            parent,
            bounds,
            RippleSpread.of(self.unloaded[supply.parent]),
        )
        if spread is None or spread.rail_low_v is None:
            return np.asarray(own.trough_v, dtype=float)
        return np.asarray(spread.rail_low_v, dtype=float)


def tree_spread(
    chain: Chain,
    parts: tuple[Part, ...],
    values: list[NDArray[np.float64]],
    nominal: Budget,
    voltages: Mapping[str, Corners],
    unloaded: Mapping[str, SupplyState],
    trials: int,
    *,
    about: Budget | None = None,
) -> TreeSpread:
    """Every supply spread for one batch of trials (module notes): ``values`` each part's
    drawn values, ``voltages`` the nominal check's settled rails, ``unloaded`` the nominal
    tree with no load (`chainbudget.budget.rails.supply_states`). With ``about`` (the
    nominal check's budget), ``nominal``'s supply loads are per trial
    (`chainbudget.spread.settle`), every supply is spread under its own, and a kind that
    expands its figures in the load expands them about ``about``'s."""
    loads_move = about is not None
    figures: Figures = {}
    rails = dict(voltages)
    walk = _Walk(nominal, unloaded, {}, {}, {}, set())
    spread_names: set[str] = set()
    for j in _parents_first(chain):
        supply = chain.supplies[j]
        drawn, bounds = _own_parts(parts, values, j)
        kind = SUPPLY_KINDS[supply.kind]
        # a supply with nothing of its own drawn still follows a spread parent
        if not loads_move and not kind.spread_fields(supply) and supply.parent not in spread_names:
            continue
        spreads = kind.rail_spreads(
            supply,
            drawn,
            {rail: nominal.supply(rail) for rail in kind.rails(supply)},
            walk.parent_low(supply.parent),
            bounds,
            walk.parent_ripple(supply.parent),
            ambient_degc=nominal.ambient_degc,
            about=None
            if about is None
            else {rail: about.supply(rail).load for rail in kind.rails(supply)},
        )
        # each rail under its own name (a split supply's ``.neg`` too), as the check JSON
        # names it and as the stages and supplies below it name their parent
        for name, spread in (spreads or {}).items():
            spread_names.add(name)
            if drawn or loads_move or supply.parent in walk.moved:
                walk.moved.add(name)
            for key, array in spread.figures.items():
                figures[f"supplies.{name}.{key}"] = _trials(array, trials)
            for key, mask in spread.flags.items():
                figures[key] = as_flag(mask, trials)
            if spread.ripple is not None:
                walk.ripples[name] = walk.with_mean(name, spread.ripple)
                figures.update(_ripple_figures(name, spread.ripple, trials))
            if spread.rail_low_v is not None and name in rails:
                walk.lows[name] = _trials(spread.rail_low_v, trials)
                walk.ceilings[name] = _trials(walk.ceiling(supply, name, drawn, bounds), trials)
                low = np.minimum(walk.lows[name], walk.ceilings[name])
                # an array rail: `chainbudget.budget.rails.stage_rails` keeps it one
                rail = cast(float, low.reshape(trials, 1))
                rails[name] = replace(rails[name], low=rail)
    return TreeSpread(figures, rails, walk.ripples)


def unloaded_per_trial(
    chain: Chain,
    parts: tuple[Part, ...],
    values: list[NDArray[np.float64]],
    nominal: Budget,
    unloaded: Mapping[str, SupplyState],
    trials: int,
) -> dict[str, SupplyState]:
    """The tree with no load, per trial where the drawn parts move it (a regulator's
    output over its reference and divider, and what a filter below passes on): parents
    first, each rail whose own parts are drawn, or whose parent moved, has as its mean
    (``nominal_v``) and trough its kind's spread under no load from its parent's
    no-load state per trial; every other rail keeps ``unloaded``, the nominal tree's.
    A divider's standing current is drawn at its parent's no-load mean
    (`chainbudget.budget.rails.drawn_from_parent`), as the check of each trial takes it
    from that trial's own tree (`chainbudget.budget.rails.supply_states`). A kind whose
    spread gives no mean keeps the nominal no-load state (a battery's, whose no-load
    output no drawn part moves)."""
    found = dict(unloaded)
    if not any(has_standing_current(SUPPLY_KINDS[s.kind]) for s in chain.supplies):
        return found  # nothing reads it
    moved: set[str] = set()
    for j in _parents_first(chain):
        supply = chain.supplies[j]
        drawn, bounds = _own_parts(parts, values, j)
        if not drawn and supply.parent not in moved:
            continue
        kind = SUPPLY_KINDS[supply.kind]
        parent = None if supply.parent is None else found[supply.parent]
        spreads = kind.rail_spreads(
            supply,
            drawn,
            {
                rail: replace(nominal.supply(rail), load=NO_LOAD, state=unloaded[rail])
                for rail in kind.rails(supply)
            },
            None if parent is None else np.asarray(parent.trough_v, dtype=float),
            bounds,
            None if parent is None else RippleSpread.of(parent),
            ambient_degc=nominal.ambient_degc,
        )
        for name, spread in (spreads or {}).items():
            if spread.ripple is None or spread.ripple.mean_v is None:
                continue
            trough = found[name].trough_v
            if spread.rail_low_v is not None:
                trough = cast(float, _trials(spread.rail_low_v, trials))
            mean = cast(float, _trials(spread.ripple.mean_v, trials))
            found[name] = replace(found[name], nominal_v=mean, trough_v=trough)
            moved.add(name)
    return found


def _own_parts(
    parts: tuple[Part, ...], values: list[NDArray[np.float64]], j: int
) -> tuple[dict[str, NDArray[np.float64]], dict[str, tuple[float, float]]]:
    """Supply ``j``'s own drawn parts, field -> values per trial, and their bounds."""
    mine = [
        (p, v) for p, v in zip(parts, values, strict=True) if p.table == "supply" and p.index == j
    ]
    return {p.key: v for p, v in mine}, {p.key: (p.low, p.high) for p, _ in mine}


def _parents_first(chain: Chain) -> list[int]:
    """The supplies' indices, each after the supply it is fed from (a rail of it)."""
    order: list[int] = []
    done: set[str] = set()
    while len(order) < len(chain.supplies):
        before = len(order)
        for j, supply in enumerate(chain.supplies):
            if j not in order and (supply.parent is None or supply.parent in done):
                order.append(j)
                done.update(SUPPLY_KINDS[supply.kind].rails(supply))  # ``.neg`` too
        if len(order) == before:  # a parent that is no supply's name (the loader refuses it)
            order += [j for j in range(len(chain.supplies)) if j not in order]
    return order


def _ripple_figures(name: str, ripple: RippleSpread, trials: int) -> Figures:
    """A supply's ripple spectrum per trial as the check JSON's ``ripple_harmonics``
    carries it, each harmonic's magnitude under ``supplies.NAME.ripple_harmonics.HZ.vpk``
    (`harmonic_key`)."""
    found: Figures = {}
    magnitude = np.abs(ripple.harmonics_vpk)
    for k, hz in enumerate(ripple.frequency):
        key = f"supplies.{name}.ripple_harmonics.{harmonic_key(float(hz))}.vpk"
        found[key] = _trials(magnitude[..., k], trials)
    return found


def _trials(array: Any, trials: int) -> NDArray[np.float64]:
    """A figure as a (T,) float array (a figure no trial moves is broadcast)."""
    flat = np.asarray(array, dtype=float).reshape(-1)
    return np.broadcast_to(flat, (trials,)).copy() if flat.size == 1 else flat.reshape(trials)
