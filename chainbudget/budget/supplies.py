"""The power tree under load: loads summed up the tree, rails settled against the stages'
currents, and one `SupplyBudget` per supply with its kind's own figures.

Notes
-----
Loads: each stage's mean current from each of its rails (:mod:`chainbudget.budget.currents`)
at idle, at the nominal level and at its own clip level; a supply's heaviest load has every
stage at its own clip level at once, an upper bound. A supply kind adds what it takes itself
(a regulator its divider, bleeder and own current) through its ``input_load``.

The swing limits of every stage are taken at the low corner with the loaded tree:
`loaded_analysis` analyses the chain, sums the loads, and analyses again with rails sagged
under those loads until the rails agree to `RAIL_TOLERANCE_V`.
"""

from __future__ import annotations

from collections.abc import Mapping

from chainbudget.budget.analysis import Analysis, analyse
from chainbudget.budget.currents import stage_currents
from chainbudget.budget.rails import (
    external_loads,
    input_load,
    stage_rails,
    supply_states,
    supply_voltages,
)
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
)

# Rails that move less than this between two passes of `loaded_analysis` are settled.
RAIL_TOLERANCE_V = 1e-3
MAX_PASSES = 6


def stage_loads(analysis: Analysis) -> dict[str, SupplyLoad]:
    """Current the stages draw directly from each supply (both rails of split-rail stages)."""
    loads: dict[str, SupplyLoad] = {}
    for sc in stage_currents(analysis):
        load = SupplyLoad(sc.idle_a, sc.nominal_a, max(sc.idle_a, sc.nominal_a, sc.clip_a))
        for rail in {sc.positive, sc.negative} - {None, GROUND_SUPPLY}:
            assert rail is not None
            loads[rail] = loads.get(rail, NO_LOAD) + load
    return loads


def _rails_agree(
    chain: Chain, va: Mapping[str, Corners], vb: Mapping[str, Corners], corner: str
) -> bool:
    for stage in chain.stages:
        if not STAGE_KINDS[stage.kind].uses_rails:
            continue  # e.g. a block: it draws from its rail but its model ignores the voltage
        ra, rb = stage_rails(stage, va, corner), stage_rails(stage, vb, corner)
        if ra is None or rb is None:
            continue
        if max(abs(ra.positive - rb.positive), abs(ra.negative - rb.negative)) > RAIL_TOLERANCE_V:
            return False
    return True


def loaded_analysis(chain: Chain, corner: str = "low") -> Analysis:
    """Analyse the chain with each stage's rails as the loaded power tree gives them.

    Notes
    -----
    Fixed-point iteration: rails -> stage currents -> loads -> rails. A regulator's output
    and an unloaded battery do not move, so most chains settle in one pass; a rectified or
    resistive rail feeding stages directly sags with the load its stages draw at clip.
    """
    analysis = analyse(chain, corner)
    for _ in range(MAX_PASSES):
        loaded = supply_voltages(chain, external_loads(chain, stage_loads(analysis)))
        if _rails_agree(chain, analysis.voltages, loaded, corner):
            break
        analysis = analyse(chain, corner, loaded)
    return analysis


def supply_budgets(analysis: Analysis) -> tuple[SupplyBudget, ...]:
    """Every supply in the loaded tree, with its kind's figures, in file order."""
    chain = analysis.chain
    loads = external_loads(chain, stage_loads(analysis))
    states = supply_states(chain, loads)
    found = []
    for supply in chain.supplies:
        kind = KINDS[supply.kind]
        load, state = loads[supply.name], states[supply.name]
        parent = None if supply.parent is None else chain.supply(supply.parent)
        context = SupplyContext(
            supply=supply,
            state=state,
            load=load,
            parent=parent,
            parent_kind=None if parent is None else KINDS[parent.kind],
            parent_state=None if parent is None else states[parent.name],
            parent_load=None if parent is None else loads[parent.name],
            ambient_degc=chain.settings.ambient,
        )
        found.append(
            SupplyBudget(
                name=supply.name,
                kind=supply.kind,
                parent=supply.parent,
                stages=tuple(
                    st.name
                    for st in chain.stages
                    if supply.name in (st.values.get("positive"), st.values.get("negative"))
                ),
                children=tuple(s.name for s in chain.supplies if s.parent == supply.name),
                vout_v=kind.output_voltage(supply, state),
                state=state,
                load=kind.delivered(supply, load),
                drawn=None if parent is None else input_load(supply, load),
                own=kind.figures(context),
            )
        )
    return tuple(found)
