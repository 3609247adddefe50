"""The power tree: loads summed up the tree, voltages solved down it, each stage's rails.

The supplies know their own physics (``chainbudget.supplies``); this module walks the tree
the chain file describes.

Supplies name their parent in ``from``; the loader has ruled out unknown parents and
cycles. Loads flow up (a regulator draws its load, divider, bleeder and own current from its
parent); voltages flow down (a regulator's input is its parent's output).
"""

from __future__ import annotations

from collections.abc import Mapping

from chainbudget.chainfile import Chain
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import Rails, Stage
from chainbudget.supplies import KINDS
from chainbudget.supplies.base import (
    GROUND_SUPPLY,
    NO_LOAD,
    Corners,
    Supply,
    SupplyLoad,
    SupplyState,
)


def parents_first(chain: Chain) -> list[Supply]:
    """The supplies ordered so that every parent comes before its children."""
    ordered: list[Supply] = []
    done: set[str] = set()
    pending = list(chain.supplies)
    while pending:
        for supply in list(pending):
            if supply.parent is None or supply.parent in done:
                ordered.append(supply)
                done.add(supply.name)
                pending.remove(supply)
    return ordered


def supply_state(supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
    """One supply's output state given its parent's state and its external load."""
    return KINDS[supply.kind].state(supply, parent, load)


def input_load(supply: Supply, load: SupplyLoad) -> SupplyLoad:
    """Current a supply draws from its parent given its external load (a root: none)."""
    return KINDS[supply.kind].input_load(supply, load)


def external_loads(chain: Chain, stage_loads: Mapping[str, SupplyLoad]) -> dict[str, SupplyLoad]:
    """Load on every supply's output: its stages plus what its child supplies draw.

    ``stage_loads`` maps a supply name to the current its stages draw from it directly.
    """
    order = parents_first(chain)
    loads = {s.name: stage_loads.get(s.name, NO_LOAD) for s in order}
    for supply in reversed(order):  # children before parents
        if supply.parent is not None:
            loads[supply.parent] = loads[supply.parent] + input_load(supply, loads[supply.name])
    return loads


def supply_states(
    chain: Chain, loads: Mapping[str, SupplyLoad] | None = None
) -> dict[str, SupplyState]:
    """Output state of every supply under ``loads`` (default: no load)."""
    loads = loads or {}
    found: dict[str, SupplyState] = {}
    for supply in parents_first(chain):
        load = loads.get(supply.name, NO_LOAD)
        parent = None if supply.parent is None else found[supply.parent]
        found[supply.name] = supply_state(supply, parent, load)
    return found


def supply_voltages(
    chain: Chain, loads: Mapping[str, SupplyLoad] | None = None
) -> dict[str, Corners]:
    """Output voltage magnitude of every supply at the three corners under ``loads``, V.

    ``low``: low line (low battery), heaviest load, ripple trough; ``nominal``: nominal line
    and load, mean; ``high``: high line, no load. Without loads: the no-load voltages.
    """
    return {name: state.corners for name, state in supply_states(chain, loads).items()}


def stage_rails(stage: Stage, voltages: Mapping[str, Corners], corner: str) -> Rails | None:
    """The rails of a stage at one corner (``"low"``, ``"nominal"`` or ``"high"``).

    A supply named as the negative rail sits below ground. The bias point is the stage's
    ``bias`` if given, else mid-rail for a single supply and ground for split rails.
    """
    positive_name = stage.values.get("positive")
    if positive_name is None:
        return None
    negative_name = stage.values.get("negative", GROUND_SUPPLY)

    def level(name: str) -> float:
        return 0.0 if name == GROUND_SUPPLY else float(getattr(voltages[name], corner))

    positive = level(positive_name)
    negative = -level(negative_name)
    bias = STAGE_KINDS[stage.kind].bias_point(stage)
    if bias is None:
        bias = (positive + negative) / 2.0 if negative_name == GROUND_SUPPLY else 0.0
    return Rails(positive=positive, negative=negative, bias=bias)
