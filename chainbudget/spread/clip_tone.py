"""The clip at the load for one tone, per trial: the chain solved at a single frequency with
the master volume fully up on rails the spread's power tree gives (chainbudget/spread).

Notes
-----
Two figures of the check solve the chain again on rails other than its settled ones, at
one frequency with the volume fully up (`chainbudget.budget.supplies.clip_at_load`):

- ``output.clip_power_low_w`` (`low_edge_figures`): a tone at the band's low edge with
  the power tree settled for it (`low_edge_clip_vpk`). The spread settles that tree again
  per trial (`chainbudget.spread.settle`, from the nominal check's low-tone tree,
  `chainbudget.budget.supplies.low_edge_tree`) and solves the chain on its rails at the
  low edge. Where no rail a stage's swing depends on sags under the
  nominal load, the check does not settle again either: its rails are those at the
  reference, the trial's own (the main tree of the batch).
- ``supplies.NAME.sag_cost_db`` (`sag_cost_figures`): for each supply that can say what
  its own source resistance is (`SupplyKind.stiff_state`: a ``dc`` supply with a
  resistance), 20 log10(ideal / sagging) of the clip at the reference with every such
  supply taken stiff against the clip with all of them stiff but this one, the rest of
  the tree under the loads the trial's own tree settled to, as the check prices it under
  the loads it settled (`chainbudget.budget.supplies._sag_cost_db`).
  A stiff battery is the spread of its kind with no resistance (its trough the low end,
  the loads' drop gone); the supplies below it follow it per trial as for the trial's
  own. With one such supply the sagging clip is the trial's clip at the reference on the
  batch's own rails. ``battery-resistance`` is a threshold on this figure
  (`sag_cost_thresholds`): above `BATTERY_SAG_COST_DB`, where the supply has not
  collapsed (its trough is not zero).

Each solve is one batched network solve over the trials (a (T, 1, n, n) stack).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import replace

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.analysis import solve_chain
from chainbudget.budget.power import load_at_reference
from chainbudget.budget.supplies import (
    SettledTree,
    clip_peak_at_load,
    max_output_positions,
)
from chainbudget.chainfile import Chain
from chainbudget.outputmath import sine_power
from chainbudget.spread.parts import Part
from chainbudget.spread.settle import with_loads
from chainbudget.spread.tree import tree_spread
from chainbudget.stages.base import Environment
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.supplies.base import Corners, SupplyLoad, SupplyState
from chainbudget.thresholds import BATTERY_SAG_COST_DB

Figures = dict[str, NDArray[np.float64]]
# The least trough above zero: a supply whose trough is zero has collapsed (`collapses`).
_ANY_TROUGH_V = float(np.nextafter(0.0, 1.0))
#: Each trial's stage environments on the rails given (drawn parts and DC walk in).
EnvsOn = Callable[[Mapping[str, Corners]], Sequence[Environment]]


def clip_at_tone(
    chain: Chain, envs: Sequence[Environment], tone_hz: float, trials: int
) -> NDArray[np.float64] | None:
    """The clip peak at the load per trial, (T,), for a sine at ``tone_hz`` with the volume
    fully up and the other controls as set (None: nothing limits it): the check's
    `clip_at_load` with the trials an array axis."""
    cascade = solve_chain(chain, envs, np.array([tone_hz]), max_output_positions(chain))
    peak = clip_peak_at_load(cascade)
    if peak is None:
        return None
    return np.broadcast_to(np.asarray(peak, dtype=float).reshape(-1), (trials,)).copy()


def held_budget(nominal: Budget, chain: Chain, settled: SettledTree) -> Budget:
    """The nominal check with each supply's load and state those of ``settled`` (where
    `chainbudget.spread.settle` starts and what it expands the rectifier about): the load
    out of its pin as its kind delivers it (`chainbudget.spread.settle.with_loads`)."""
    states = tuple(replace(b, state=settled.states[b.name]) for b in nominal.supplies)
    return with_loads(replace(nominal, supplies=states), chain, settled.loads)


def low_edge_figures(
    chain: Chain,
    envs_on: EnvsOn,
    rails: Mapping[str, Corners],
    trials: int,
) -> Figures:
    """``output.clip_power_low_w`` per trial (module notes) on the rails ``rails`` (the
    low-tone tree's per trial, or the batch's own where the check settles none)."""
    peak = clip_at_tone(chain, envs_on(rails), chain.settings.band[0], trials)
    if peak is None:
        return {}
    return {"output.clip_power_low_w": sine_power(peak, load_at_reference(chain))}


def stiff_supplies(chain: Chain, nominal: Budget) -> dict[str, int]:
    """The supplies the check prices a sag for (a stiff state of their own), by name, with
    their index in the file."""
    found = {}
    for j, supply in enumerate(chain.supplies):
        parent = None if supply.parent is None else nominal.supply(supply.parent).state
        load = nominal.supply(supply.name).load
        if SUPPLY_KINDS[supply.kind].stiff_state(supply, parent, load) is not None:
            found[supply.name] = j
    return found


def _stiff_parts(stiff: Mapping[str, int]) -> list[Part]:
    """A battery's resistance at zero for each supply named (appended after the drawn
    parts, so that `tree_spread` takes it over the drawn one)."""
    return [
        Part("supply", j, name, "resistance", "resistors", 0.0, 0.0, 0.0)
        for name, j in stiff.items()
    ]


def sag_cost_figures(
    chain: Chain,
    parts: tuple[Part, ...],
    values: list[NDArray[np.float64]],
    nominal: Budget,
    loads: Mapping[str, SupplyLoad],
    unloaded: Mapping[str, SupplyState],
    envs_on: EnvsOn,
    own_rails: Mapping[str, Corners],
    trials: int,
) -> Figures:
    """``supplies.NAME.sag_cost_db`` per trial for each supply `stiff_supplies` names
    (module notes); ``loads`` each rail's load per trial as the batch's tree settled it
    (`chainbudget.spread.settle.SettledTrials.loads`), ``own_rails`` the batch's own rails
    (the sagging clip of a lone such supply)."""
    stiff = stiff_supplies(chain, nominal)
    if not stiff:
        return {}
    # the rest of the tree under each trial's own loads, spread per trial from the check's
    # states (not its settled rails), as the check prices it under the loads it settled
    states = {s.name: s.state.corners for s in nominal.supplies}
    trial_budget = with_loads(nominal, chain, loads)
    reference = chain.settings.reference

    def clip_with(stiffened: Mapping[str, int]) -> NDArray[np.float64] | None:
        zeros = _stiff_parts(stiffened)
        rails = tree_spread(
            chain,
            (*parts, *zeros),
            [*values, *(np.zeros(trials) for _ in zeros)],
            trial_budget,
            states,
            unloaded,
            trials,
            about=nominal,
        ).voltages
        return clip_at_tone(chain, envs_on(rails), reference, trials)

    ideal = clip_with(stiff)
    figures: Figures = {}
    for name in stiff:
        others = {other: j for other, j in stiff.items() if other != name}
        if others:
            sagging = clip_with(others)
        else:
            sagging = clip_at_tone(chain, envs_on(own_rails), reference, trials)
        if ideal is None or sagging is None:
            continue
        with np.errstate(divide="ignore", invalid="ignore"):
            cost = 20.0 * np.log10(ideal / sagging)
        # the check gives no figure where either clip is nothing: none is drawn there
        figures[f"supplies.{name}.sag_cost_db"] = np.where(
            (ideal > 0.0) & (sagging > 0.0), cost, 0.0
        )
    return figures


def sag_cost_thresholds(
    chain: Chain, figures: Mapping[str, object]
) -> list[tuple[str, float, str, str, tuple[str, float]]]:
    """``battery-resistance`` (warning) on each spread sag cost: above
    `BATTERY_SAG_COST_DB` (`DcSupply.rules`), only where the supply's trough is not zero
    (a collapsed supply draws ``supply-collapse`` instead): path, limit, code, severity and
    the figure that must stay at or above a floor."""
    found = []
    for supply in chain.supplies:
        path = f"supplies.{supply.name}.sag_cost_db"
        if path in figures and supply.kind == "dc":
            unless = (f"supplies.{supply.name}.trough_v", _ANY_TROUGH_V)
            found.append((path, BATTERY_SAG_COST_DB, "battery-resistance", "warning", unless))
    return found
