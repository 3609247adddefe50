"""The supply budget: loads summed up the power tree, every supply's figures and checks, and
preferred-value suggestions for what fails.

Notes
-----
Loads: each stage's mean current from each of its rails (:mod:`chainbudget.budget.currents`)
at idle, at the nominal level and at its own clip level; a supply's heaviest load has every
stage at its own clip level at once, an upper bound. A regulator adds its divider
(V_ref/lower), its bleeder and its own (quiescent or adjust) current to what it draws from
its parent.

Corners: the dropout check takes the input's ripple trough at low line and heaviest load;
the minimum-load check the output current at idle (divider and bleeder included); the
dissipation (V_in - V_out) I_out + V_in I_q (:func:`chainbudget.supplymath.regulator_dissipation`)
the mean input at high line, at heaviest load and at idle (the heaviest load held
continuously: conservative for heat, since programme averages far less); the input
maximum the crest at high line and no load.

The swing limits of every stage are taken at the low corner with the loaded tree:
`loaded_analysis` analyses the chain, sums the loads, and analyses again with rails sagged
under those loads until the rails agree to `RAIL_TOLERANCE_V`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from chainbudget.budget.analysis import Analysis, analyse
from chainbudget.budget.currents import stage_currents
from chainbudget.chainfile import Chain
from chainbudget.eseries import best_divider
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.supplies import KINDS
from chainbudget.supplies.base import (
    GROUND_SUPPLY,
    NO_LOAD,
    Corners,
    Supply,
    SupplyLoad,
    SupplyState,
)
from chainbudget.supplies.rectified import Rectified
from chainbudget.supplies.regulator import Regulator
from chainbudget.supplies.tree import (
    external_loads,
    input_load,
    stage_rails,
    supply_states,
    supply_voltages,
)
from chainbudget.supplymath import battery_runtime_h, bleeder_suggestion, regulator_dissipation
from chainbudget.thermal import junction_temperature, largest_sink_theta

# Rails that move less than this between two passes of `loaded_analysis` are settled.
RAIL_TOLERANCE_V = 1e-3
MAX_PASSES = 6
BLEEDER_SERIES = "E24"
# Smallest resistor across the reference a suggested divider uses (12.5 mA at 1.25 V); the
# range reaches down to 1/1.5 of the given one so that it always holds a value of the coarsest
# series (adjacent E6 values are at most 1.5x apart, IEC 60063).
DIVIDER_LOWER_MIN_OHM = 100.0
# Relative slack of the minimum-load comparison: a bleeder picked to exactly close the
# shortfall must not be flagged again for a rounding residue.
_MATCH_RTOL = 1e-9


@dataclass(frozen=True)
class BleederSuggestion:
    """A preferred-value bleeder across a regulator's output that meets its minimum load."""

    resistance_ohm: float
    current_a: float
    power_w: float
    series: str


@dataclass(frozen=True)
class DividerSuggestion:
    """The best preferred-value divider for an adjustable regulator's target output."""

    target_v: float
    upper_ohm: float
    lower_ohm: float
    vout_v: float
    error_fraction: float
    series: str


@dataclass(frozen=True)
class DropoutSuggestion:
    """What it takes to keep a regulator in regulation at low line and heaviest load."""

    input_needed_v: float
    shortfall_v: float
    secondary_needed_vrms: float | None
    reservoir_needed_f: float | None
    parent: str


@dataclass(frozen=True)
class SupplyFigures:
    """Every figure of one supply (SI units; degC for temperatures).

    Loads are mean currents out of the supply's output; a regulator's include its divider
    and bleeder. ``output_min_v`` is the low-line ripple trough at heaviest load,
    ``output_max_v`` the high-line no-load crest; ``vout_v`` is the nominal (line and load)
    mean output, and for a regulator its set output (``in_regulation`` and the output range
    say whether it holds it).
    """

    name: str
    kind: str
    parent: str | None
    stages: tuple[str, ...]
    children: tuple[str, ...]
    vout_v: float
    output_min_v: float
    output_max_v: float
    ripple_vpp: float | None
    idle_load_a: float
    nominal_load_a: float
    max_load_a: float
    input_idle_a: float | None = None
    input_max_a: float | None = None
    # regulator
    input_min_v: float | None = None
    input_max_v: float | None = None
    dropout_v: float | None = None
    dropout_margin_v: float | None = None
    in_regulation: bool | None = None
    min_load_a: float | None = None
    min_load_margin_a: float | None = None
    divider_a: float | None = None
    bleeder_a: float | None = None
    bleeder_w: float | None = None
    own_current_a: float | None = None
    max_input_v: float | None = None
    dissipation_w: float | None = None
    dissipation_idle_w: float | None = None
    dissipation_full_w: float | None = None
    theta_k_per_w: float | None = None
    junction_degc: float | None = None
    junction_idle_degc: float | None = None
    max_junction_degc: float | None = None
    theta_allowed_k_per_w: float | None = None
    heatsink_allowed_k_per_w: float | None = None
    target_v: float | None = None
    bleeder_suggestion: BleederSuggestion | None = None
    divider_suggestion: DividerSuggestion | None = None
    dropout_suggestion: DropoutSuggestion | None = None
    # rectified
    transformer_load_fraction: float | None = None
    transformer_regulation: float | None = None
    # dc
    sag_v: float | None = None
    capacity_ah: float | None = None
    runtime_idle_h: float | None = None
    runtime_nominal_h: float | None = None


# --- loads ------------------------------------------------------------------------------


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


# --- figures ----------------------------------------------------------------------------


def _regulator_figures(
    kind: Regulator,
    supply: Supply,
    parent: Supply,
    parent_state: SupplyState,
    parent_load: SupplyLoad,
    load: SupplyLoad,
    ambient_degc: float,
) -> dict[str, object]:
    vout = kind.set_output(supply)
    dropout = supply.number("dropout")
    delivered = kind.delivered(supply, load)
    own = kind.own_current(supply)
    divider = kind.divider_current(supply)
    bleeder_a = kind.bleeder_current(supply)
    bleeder = supply.optional("bleeder")
    found: dict[str, object] = {
        "input_min_v": parent_state.trough_v,
        "input_max_v": parent_state.crest_v,
        "dropout_v": dropout,
        "dropout_margin_v": parent_state.trough_v - vout - dropout,
        "in_regulation": parent_state.trough_v >= vout + dropout,
        "divider_a": divider,
        "bleeder_a": bleeder_a,
        "bleeder_w": None if bleeder is None else vout * bleeder_a,
        "own_current_a": own,
        "max_input_v": supply.optional("max_input"),
        "target_v": kind.target(supply),
    }
    # dropout: the input trough needed, and two ways to get it from a rectified parent
    if not found["in_regulation"]:
        needed = vout + dropout
        secondary = reservoir = None
        parent_kind = KINDS[parent.kind]
        if isinstance(parent_kind, Rectified):
            heavy = parent_load.heaviest_a
            secondary = parent_kind.secondary_for_trough(parent, needed, heavy)
            reservoir = parent_kind.reservoir_for_trough(parent, needed, heavy)
        found["dropout_suggestion"] = DropoutSuggestion(
            needed, needed - parent_state.trough_v, secondary, reservoir, parent.name
        )
    # minimum load at idle: the divider and any bleeder count
    min_load = supply.number("min_load")
    if min_load > 0.0:
        margin = delivered.idle_a - min_load
        found["min_load_a"] = min_load
        found["min_load_margin_a"] = margin
        if margin < -_MATCH_RTOL * min_load:
            resistance, power = bleeder_suggestion(vout, -margin, BLEEDER_SERIES)
            found["bleeder_suggestion"] = BleederSuggestion(
                resistance, vout / resistance, power, BLEEDER_SERIES
            )
    # dissipation at high line: heaviest load and idle
    out_heavy = min(vout, max(parent_state.high_heavy_v - dropout, 0.0))
    out_idle = min(vout, max(parent_state.high_idle_v - dropout, 0.0))
    full = float(
        regulator_dissipation(parent_state.high_heavy_v, out_heavy, delivered.heaviest_a, own)
    )
    idle = float(regulator_dissipation(parent_state.high_idle_v, out_idle, delivered.idle_a, own))
    power = max(full, idle)
    found.update(dissipation_w=power, dissipation_full_w=full, dissipation_idle_w=idle)
    theta = kind.theta(supply)
    max_junction = supply.number("max_junction")
    found["max_junction_degc"] = max_junction
    if theta is not None:
        found["theta_k_per_w"] = theta
        found["junction_degc"] = float(junction_temperature(power, theta, ambient_degc))
        found["junction_idle_degc"] = float(junction_temperature(idle, theta, ambient_degc))
    if power > 0.0:
        found["theta_allowed_k_per_w"] = largest_sink_theta(power, 0.0, ambient_degc, max_junction)
        theta_jc = supply.optional("theta_jc")
        if theta_jc is not None:
            found["heatsink_allowed_k_per_w"] = largest_sink_theta(
                power, theta_jc, ambient_degc, max_junction
            )
    # divider for a target output
    target = kind.target(supply)
    reference = kind.reference(supply)
    if target is not None and reference is not None and target > reference:
        series = str(supply.values["divider_series"])
        # No larger a lower resistor than the file's: the divider current, which counts
        # toward the minimum load, must not fall.
        given_lower = supply.number("lower")
        upper, lower, vout_best, error = best_divider(
            target,
            reference,
            supply.number("adjust_current"),
            series,
            lower_range=(min(DIVIDER_LOWER_MIN_OHM, given_lower / 1.5), given_lower),
        )
        found["divider_suggestion"] = DividerSuggestion(
            target, upper, lower, vout_best, error, series
        )
    return found


def supply_figures(analysis: Analysis) -> tuple[SupplyFigures, ...]:
    """Figures and checks of every supply, in file order."""
    chain = analysis.chain
    direct = stage_loads(analysis)
    loads = external_loads(chain, direct)
    states = supply_states(chain, loads)
    ambient = chain.settings.ambient
    found = []
    for supply in chain.supplies:
        load, state = loads[supply.name], states[supply.name]
        kind = KINDS[supply.kind]
        extra: dict[str, object] = {}
        parent = None if supply.parent is None else chain.supply(supply.parent)
        if parent is not None:
            drawn = input_load(supply, load)
            extra.update(input_idle_a=drawn.idle_a, input_max_a=drawn.heaviest_a)
        shown, vout = load, state.nominal_v
        if isinstance(kind, Regulator):
            assert parent is not None
            shown, vout = kind.delivered(supply, load), kind.set_output(supply)
            extra.update(
                _regulator_figures(
                    kind, supply, parent, states[parent.name], loads[parent.name], load, ambient
                )
            )
        elif isinstance(kind, Rectified):
            extra["transformer_regulation"] = supply.number("regulation")
            rated = supply.optional("rated_current")
            if rated is not None:
                extra["transformer_load_fraction"] = load.heaviest_a / rated
        elif supply.kind == "dc":
            extra["sag_v"] = supply.number("resistance") * load.heaviest_a
            capacity = supply.optional("capacity")
            if capacity is not None:
                extra.update(
                    capacity_ah=capacity,
                    runtime_idle_h=float(battery_runtime_h(capacity, load.idle_a)),
                    runtime_nominal_h=float(battery_runtime_h(capacity, load.nominal_a)),
                )
        found.append(
            SupplyFigures(
                name=supply.name,
                kind=supply.kind,
                parent=supply.parent,
                stages=tuple(
                    st.name
                    for st in chain.stages
                    if supply.name in (st.values.get("positive"), st.values.get("negative"))
                ),
                children=tuple(s.name for s in chain.supplies if s.parent == supply.name),
                vout_v=vout,
                output_min_v=state.trough_v,
                output_max_v=state.crest_v,
                ripple_vpp=state.ripple_vpp,
                idle_load_a=shown.idle_a,
                nominal_load_a=shown.nominal_a,
                max_load_a=shown.heaviest_a,
                **extra,  # type: ignore[arg-type]
            )
        )
    return tuple(found)
