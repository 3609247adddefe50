"""The power tree: loads summed up the tree, voltages solved down it, each stage's rails.

The supplies know their own physics (``chainbudget.supplies``); this module walks the tree
the chain file describes.

Supplies name their parent in ``from``; the loader has ruled out unknown parents and
cycles. A supply defines one rail, by its name, or more (a centre-tapped supply's
``<name>`` and ``<name>.neg``); stages and child supplies name rails. Loads flow up (a
regulator draws its load, divider, bleeder and own current from its parent's rail);
voltages flow down (a regulator's input is its parent rail's output).

The loads summed up the tree (`external_loads`, `drawn_from_parent`) are floats in the
check, or `SupplyLoad`s of (T,) currents over the spread's trials (one load per trial):
every step is element-wise arithmetic, each kind's ``input_load`` and standing current
(taken at the parent's unloaded state, a float) added to each trial's own load; a supply
whose own parts are drawn gives both with each trial's values (`SupplyKind.trial_draw`).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import cast

import numpy as np
from numpy.typing import NDArray

from chainbudget.chainfile import Chain
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import Rails, Stage
from chainbudget.supplies import KINDS
from chainbudget.supplies.base import (
    GROUND_SUPPLY,
    NO_LOAD,
    Corners,
    Supply,
    SupplyKind,
    SupplyLoad,
    SupplyState,
)


def rails_of(supply: Supply) -> tuple[str, ...]:
    """The rails a supply defines (its own name first)."""
    return KINDS[supply.kind].rails(supply)


def rail_owners(chain: Chain) -> dict[str, Supply]:
    """Every rail of the chain and the supply that defines it, in file order."""
    return {rail: supply for supply in chain.supplies for rail in rails_of(supply)}


def parents_first(chain: Chain) -> list[Supply]:
    """The supplies ordered so that every parent comes before its children."""
    owners = rail_owners(chain)
    ordered: list[Supply] = []
    done: set[str] = set()
    pending = list(chain.supplies)
    while pending:
        for supply in list(pending):
            if supply.parent is None or owners[supply.parent].name in done:
                ordered.append(supply)
                done.add(supply.name)
                pending.remove(supply)
    return ordered


def supply_state(supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
    """One supply's output state (its first rail's) given its parent's state and its load."""
    return KINDS[supply.kind].state(supply, parent, load)


def input_load(supply: Supply, load: SupplyLoad) -> SupplyLoad:
    """Current a supply draws from its parent given its external load (a root: none)."""
    return KINDS[supply.kind].input_load(supply, load)


def has_standing_current(kind: SupplyKind) -> bool:
    """Whether the kind draws a current from its parent whatever its load (a divider)."""
    return type(kind).standing_current is not SupplyKind.standing_current


def drawn_from_parent(
    chain: Chain,
    supply: Supply,
    load: SupplyLoad,
    unloaded: Mapping[str, SupplyState] | None = None,
    parts: Mapping[str, NDArray[np.float64]] | None = None,
) -> SupplyLoad:
    """What a supply with a parent draws from it given its external load: its kind's
    ``input_load`` and any standing current (a divider's), the latter at the parent's
    unloaded state (``unloaded``: the tree's no-load states, if already worked out).
    ``parts``: its own parts drawn per trial (field -> (T,) values, the spread's); where
    they move what it draws, its kind gives that for each trial's values
    (`SupplyKind.trial_draw`), at the parent's unloaded state in ``unloaded`` (the
    spread's, per trial: `chainbudget.spread.tree.unloaded_per_trial`)."""
    kind = KINDS[supply.kind]
    if parts and supply.parent is not None:
        states = supply_states(chain) if unloaded is None else unloaded
        taken = kind.trial_draw(supply, parts, load, states[supply.parent])
        if taken is not None:
            return taken
    drawn = kind.input_load(supply, load)
    if supply.parent is not None and has_standing_current(kind):
        states = supply_states(chain) if unloaded is None else unloaded
        drawn = drawn.plus(kind.standing_current(supply, states[supply.parent]))
    return drawn


def external_loads(
    chain: Chain,
    stage_loads: Mapping[str, SupplyLoad],
    drawn: Mapping[str, Mapping[str, NDArray[np.float64]]] | None = None,
    unloaded: Mapping[str, SupplyState] | None = None,
) -> dict[str, SupplyLoad]:
    """Load on every rail: its stages plus what the supplies fed from it draw.

    ``stage_loads`` maps a rail to the current its stages draw from it directly. A supply
    that draws a standing current whatever its load (a divider) draws it at its parent's
    unloaded state (the small error is on the safe side: more current). ``drawn``: each
    supply's own parts drawn per trial, by supply name (the spread's: `drawn_from_parent`).
    ``unloaded``: the tree's no-load states where already worked out (`supply_states`;
    else worked out here when needed).
    """
    order = parents_first(chain)
    loads = {rail: stage_loads.get(rail, NO_LOAD) for s in order for rail in rails_of(s)}
    for supply in reversed(order):  # children before parents
        if supply.parent is None:
            continue
        mine = (drawn or {}).get(supply.name)
        if unloaded is None and (has_standing_current(KINDS[supply.kind]) or mine):
            unloaded = supply_states(chain)
        own = NO_LOAD
        for rail in rails_of(supply):
            own = own + loads[rail]
        loads[supply.parent] = loads[supply.parent] + drawn_from_parent(
            chain, supply, own, unloaded, mine
        )
    return loads


def supply_states(
    chain: Chain, loads: Mapping[str, SupplyLoad] | None = None
) -> dict[str, SupplyState]:
    """Output state of every rail under ``loads`` (default: no load)."""
    loads = loads or {}
    found: dict[str, SupplyState] = {}
    for supply in parents_first(chain):
        parent = None if supply.parent is None else found[supply.parent]
        mine = {rail: loads.get(rail, NO_LOAD) for rail in rails_of(supply)}
        found.update(KINDS[supply.kind].rail_states(supply, parent, mine))
    return found


def supply_voltages(
    chain: Chain, loads: Mapping[str, SupplyLoad] | None = None
) -> dict[str, Corners]:
    """Output voltage magnitude of every rail at the three corners under ``loads``, V.

    ``low``: low line (low battery), heaviest load, ripple trough; ``nominal``: nominal line
    and load, mean; ``high``: high line, no load. Without loads: the no-load voltages.
    """
    return {name: state.corners for name, state in supply_states(chain, loads).items()}


def stage_rail_names(stage: Stage) -> tuple[str, ...]:
    """The rails a stage's swing depends on: its positive and negative rails and the supply
    its bias names (ground left out)."""
    named = (
        stage.values.get("positive"),
        stage.values.get("negative"),
        STAGE_KINDS[stage.kind].bias_supply(stage),
    )
    return tuple(dict.fromkeys(n for n in named if n is not None and n != GROUND_SUPPLY))


def stage_rails(stage: Stage, voltages: Mapping[str, Corners], corner: str) -> Rails | None:
    """The rails of a stage at one corner (``"low"``, ``"nominal"`` or ``"high"``).

    A supply named as the negative rail sits below ground. The bias point is the stage's
    ``bias``: a voltage, or the output of the supply it names at the same corner; else
    mid-rail for a single supply and ground for split rails.
    """
    positive_name = stage.values.get("positive")
    if positive_name is None:
        return None
    negative_name = stage.values.get("negative", GROUND_SUPPLY)
    kind = STAGE_KINDS[stage.kind]

    def level(name: str) -> float:
        if name == GROUND_SUPPLY:
            return 0.0
        value = getattr(voltages[name], corner)
        # A rail that varies over a leading trial axis (chainbudget/spread) stays an array.
        return cast(float, value) if isinstance(value, np.ndarray) else float(value)

    positive = level(positive_name)
    negative = -level(negative_name)
    bias = kind.bias_point(stage)
    bias_supply = kind.bias_supply(stage)
    if bias_supply is not None:
        bias = level(bias_supply)
    if bias is None:
        bias = (positive + negative) / 2.0 if negative_name == GROUND_SUPPLY else 0.0
    return Rails(positive=positive, negative=negative, bias=bias)
