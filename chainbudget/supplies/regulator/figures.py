"""A regulator's own figures: dropout at the input's trough, minimum load, heat at high line,
input limit, and preferred-value suggestions for what fails.

Notes
-----
Corners: the dropout check takes the input's ripple trough at low line and heaviest load;
the minimum-load check the output current at idle (divider and bleeder included); the
dissipation (V_in - V_out) I_out + V_in I_q (:func:`chainbudget.supplymath.regulator_dissipation`)
the mean input at high line, at heaviest load and at idle (the heaviest load held
continuously: conservative for heat, since programme averages far less); the input maximum
the crest at high line and no load. Junction: T_j = T_a + P theta (thermal Ohm's law,
Horowitz & Hill 3rd ed. sec. 9.4, via :mod:`chainbudget.thermal`); the largest
junction-to-ambient (or heatsink) allowed solves it for theta at T_j,max. The heat is
`regulator_heat`, element-wise: floats here, the spread's trials there
(`chainbudget.supplies.regulator.spread`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.eseries import best_divider
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.notation import eng
from chainbudget.supplies.base import Supply, SupplyContext
from chainbudget.supplymath import bleeder_suggestion, regulator_dissipation
from chainbudget.thermal import junction_temperature
from chainbudget.thresholds import BLEEDER_MARGIN

if TYPE_CHECKING:
    from chainbudget.supplies.regulator.kind import Regulator

BLEEDER_SERIES = "E24"
# Smallest resistor across the reference a suggested divider uses (12.5 mA at 1.25 V); the
# range reaches down to 1/1.5 of the given one so that it always holds a value of the coarsest
# series (adjacent E6 values are at most 1.5x apart, IEC 60063).
DIVIDER_LOWER_MIN_OHM = 100.0
# Relative slack of the minimum-load comparison: a bleeder picked to exactly close the
# shortfall must not be flagged again for a rounding residue.
MATCH_RTOL = 1e-9


@dataclass(frozen=True)
class BleederSuggestion:
    """A preferred-value bleeder across a regulator's output that meets its minimum load."""

    resistance_ohm: float
    current_a: float
    power_w: float
    series: str

    def __str__(self) -> str:
        return f"{eng(self.resistance_ohm, 'ohm')} {self.series}, {eng(self.power_w, 'W')}"


@dataclass(frozen=True)
class DividerSuggestion:
    """The best preferred-value divider for an adjustable regulator's target output."""

    target_v: float
    upper_ohm: float
    lower_ohm: float
    vout_v: float
    error_fraction: float
    series: str

    def __str__(self) -> str:
        return (
            f"{self.series}: upper {eng(self.upper_ohm, 'ohm')}, lower "
            f"{eng(self.lower_ohm, 'ohm')}, {eng(self.vout_v, 'V', 4)} ({self.error_fraction:+.2%})"
        )


@dataclass(frozen=True)
class DropoutSuggestion:
    """What it takes to keep a regulator in regulation at low line and heaviest load."""

    input_needed_v: float
    shortfall_v: float
    secondary_needed_vrms: float | None
    reservoir_needed_f: float | None
    parent: str

    def __str__(self) -> str:
        return (
            f"{eng(self.input_needed_v, 'V')} (secondary {eng(self.secondary_needed_vrms, 'Vrms')}"
            f", or reservoir {eng(self.reservoir_needed_f, 'F')})"
        )


@dataclass(frozen=True)
class RegulatorFigures(KindFigures):
    """A regulator's checks (V, A, W, K/W, degC)."""

    title = "regulator"

    input_min_v: float = figure("input trough, low line, heaviest load", "V")
    input_max_v: float = figure("input crest, high line, no load", "V")
    dropout_v: float = figure("dropout", "V")
    dropout_margin_v: float = figure("dropout margin", "V")
    in_regulation: bool = figure("in regulation at low line", "")
    divider_a: float = figure("divider current", "A")
    bleeder_a: float = figure("bleeder current", "A")
    bleeder_w: float | None = figure("bleeder power", "W")
    own_current_a: float = figure("own current from the input", "A")
    max_input_v: float | None = figure("input maximum", "V")
    target_v: float | None = figure("target output", "V")
    dissipation_w: float = figure("dissipation, high line (worst)", "W")
    dissipation_full_w: float = figure("dissipation, high line, heaviest load", "W")
    dissipation_idle_w: float = figure("dissipation, high line, idle", "W")
    max_junction_degc: float = figure("junction maximum", "degC")
    min_load_a: float | None = figure("minimum load", "A", default=None)
    min_load_margin_a: float | None = figure("minimum-load margin at idle", "A", default=None)
    theta_k_per_w: float | None = figure("junction to ambient", "K/W", default=None)
    junction_degc: float | None = figure("junction, heaviest load", "degC", default=None)
    junction_idle_degc: float | None = figure("junction, idle", "degC", default=None)
    theta_allowed_k_per_w: float | None = figure(
        "largest junction-to-ambient allowed", "K/W", default=None
    )
    heatsink_allowed_k_per_w: float | None = figure("largest heatsink allowed", "K/W", default=None)
    bleeder_suggestion: BleederSuggestion | None = figure("suggested bleeder", default=None)
    #: The best preferred-value pair for the target, where it comes closer than the file's.
    divider_suggestion: DividerSuggestion | None = figure("a closer divider", default=None)
    dropout_suggestion: DropoutSuggestion | None = figure("input needed", default=None)


def sink_thetas(
    power_w: ArrayLike, inner_k_per_w: float, ambient_degc: float, max_junction_degc: float
) -> NDArray[np.float64]:
    """The largest thermal resistance outside ``inner_k_per_w`` that keeps the junction at
    its maximum, K/W, element-wise: (T_j,max - T_a)/P - theta_inner, solving
    T_j = T_a + P (theta_inner + theta) for theta (:func:`chainbudget.thermal.largest_sink_theta`
    of each element); ``inf`` where nothing is dissipated, negative where no heatsink can
    keep the junction cool enough."""
    power = np.asarray(power_w, dtype=float)
    warm = power > 0.0
    allowed = (max_junction_degc - ambient_degc) / np.where(warm, power, 1.0) - inner_k_per_w
    return np.asarray(np.where(warm, allowed, np.inf), dtype=float)


@dataclass(frozen=True)
class RegulatorHeat:
    """A regulator's heat at high line (module notes): floats in the check, (T,) arrays
    over the spread's trials. ``power_w`` is the larger of ``full_w`` (heaviest load) and
    ``idle_w``; the junctions are None without a thermal resistance, ``heatsink_allowed``
    None without ``theta_jc``; ``theta_allowed`` and ``heatsink_allowed`` are ``inf`` where
    nothing is dissipated (the check reports None there)."""

    full_w: Any
    idle_w: Any
    power_w: Any
    junction_degc: Any | None
    junction_idle_degc: Any | None
    theta_allowed_k_per_w: Any
    heatsink_allowed_k_per_w: Any | None


def regulator_heat(
    kind: Regulator,
    supply: Supply,
    vout_v: ArrayLike,
    heavy_in_v: ArrayLike,
    idle_in_v: ArrayLike,
    heaviest_a: ArrayLike,
    idle_a: ArrayLike,
    ambient_degc: float,
) -> RegulatorHeat:
    """The dissipation (V_in - V_out) I_out + V_in I_q at high line under the heaviest and
    the idle output current (divider and bleeder included), the input its mean there
    (``heavy_in_v``, ``idle_in_v``) and the output V_out or the input less the dropout,
    whichever is lower (:func:`chainbudget.supplymath.regulator_dissipation`); the
    junctions and the thermal resistances allowed (module notes). Element-wise."""
    dropout = supply.number("dropout")
    own = kind.own_current(supply)
    vout = np.asarray(vout_v, dtype=float)
    out_heavy = np.minimum(vout, np.maximum(np.asarray(heavy_in_v, dtype=float) - dropout, 0.0))
    out_idle = np.minimum(vout, np.maximum(np.asarray(idle_in_v, dtype=float) - dropout, 0.0))
    full = regulator_dissipation(heavy_in_v, out_heavy, heaviest_a, own)
    idle = regulator_dissipation(idle_in_v, out_idle, idle_a, own)
    power = np.maximum(full, idle)
    theta = kind.theta(supply)
    max_junction = supply.number("max_junction")
    theta_jc = supply.optional("theta_jc")
    return RegulatorHeat(
        full_w=full,
        idle_w=idle,
        power_w=power,
        junction_degc=None if theta is None else junction_temperature(power, theta, ambient_degc),
        junction_idle_degc=None
        if theta is None
        else junction_temperature(idle, theta, ambient_degc),
        theta_allowed_k_per_w=sink_thetas(power, 0.0, ambient_degc, max_junction),
        heatsink_allowed_k_per_w=None
        if theta_jc is None
        else sink_thetas(power, theta_jc, ambient_degc, max_junction),
    )


def _warm(value: Any, power_w: float) -> float | None:
    """A thermal resistance allowed as the check reports it: None where nothing is
    dissipated."""
    return None if value is None or power_w <= 0.0 else float(value)


def regulator_figures(kind: Regulator, context: SupplyContext) -> RegulatorFigures:
    """Dropout, minimum load, heat, input limit and suggestions of one regulator."""
    supply, load = context.supply, context.load
    parent, parent_kind = context.parent, context.parent_kind
    parent_state, parent_load = context.parent_state, context.parent_load
    assert parent is not None and parent_kind is not None, "a regulator always has a parent"
    assert parent_state is not None and parent_load is not None
    vout = kind.set_output(supply)
    dropout = supply.number("dropout")
    delivered = kind.delivered(supply, load)
    own = kind.own_current(supply)
    bleeder_a = kind.bleeder_current(supply)
    in_regulation = parent_state.trough_v >= vout + dropout
    # dropout: the input trough needed, and what the parent would need to give it
    dropout_suggestion = None
    if not in_regulation:
        needed = vout + dropout
        remedy = parent_kind.trough_remedy(parent, needed, parent_load, supply.parent)
        dropout_suggestion = DropoutSuggestion(
            needed,
            needed - parent_state.trough_v,
            remedy.secondary_vrms,
            remedy.reservoir_f,
            parent.name,
        )
    # minimum load at idle: the divider and any bleeder count
    min_load = supply.number("min_load")
    min_load_a = min_load_margin = None
    bleeder = None
    if min_load > 0.0:
        min_load_a, min_load_margin = min_load, delivered.idle_a - min_load
        if min_load_margin < -MATCH_RTOL * min_load:
            wanted = -min_load_margin + BLEEDER_MARGIN * min_load
            resistance, power = bleeder_suggestion(vout, wanted, BLEEDER_SERIES)
            bleeder = BleederSuggestion(resistance, vout / resistance, power, BLEEDER_SERIES)
    # dissipation at high line: heaviest load and idle
    heat = regulator_heat(
        kind,
        supply,
        vout,
        parent_state.high_heavy_v,
        parent_state.high_idle_v,
        delivered.heaviest_a,
        delivered.idle_a,
        context.ambient_degc,
    )
    full, idle, power = float(heat.full_w), float(heat.idle_w), float(heat.power_w)
    divider = _divider_suggestion(kind, context)
    target = divider.target_v if divider is not None else vout
    theta = kind.theta(supply)
    return RegulatorFigures(
        input_min_v=parent_state.trough_v,
        input_max_v=parent_state.crest_v,
        dropout_v=dropout,
        dropout_margin_v=parent_state.trough_v - vout - dropout,
        in_regulation=in_regulation,
        divider_a=kind.divider_current(supply),
        bleeder_a=bleeder_a,
        bleeder_w=None if supply.optional("bleeder") is None else vout * bleeder_a,
        own_current_a=own,
        max_input_v=supply.optional("max_input"),
        target_v=kind.target(supply),
        dissipation_w=power,
        dissipation_full_w=full,
        dissipation_idle_w=idle,
        max_junction_degc=supply.number("max_junction"),
        min_load_a=min_load_a,
        min_load_margin_a=min_load_margin,
        theta_k_per_w=theta,
        junction_degc=None if heat.junction_degc is None else float(heat.junction_degc),
        junction_idle_degc=None
        if heat.junction_idle_degc is None
        else float(heat.junction_idle_degc),
        theta_allowed_k_per_w=_warm(heat.theta_allowed_k_per_w, power),
        heatsink_allowed_k_per_w=_warm(heat.heatsink_allowed_k_per_w, power),
        bleeder_suggestion=bleeder,
        divider_suggestion=divider
        if divider is not None and abs(divider.error_fraction) < abs((vout - target) / target)
        else None,
        dropout_suggestion=dropout_suggestion,
    )


def _divider_suggestion(kind: Regulator, context: SupplyContext) -> DividerSuggestion | None:
    """The best preferred-value divider for the target output, when one is given."""
    supply = context.supply
    target = kind.target(supply)
    reference = kind.reference(supply)
    if target is None or reference is None or target <= reference:
        return None
    series = str(supply.values["divider_series"])
    # No larger a lower resistor than the file's: the divider current, which counts toward
    # the minimum load, must not fall.
    given_lower = supply.number("lower")
    upper, lower, vout_best, error = best_divider(
        target,
        reference,
        supply.number("adjust_current"),
        series,
        lower_range=(min(DIVIDER_LOWER_MIN_OHM, given_lower / 1.5), given_lower),
    )
    return DividerSuggestion(target, upper, lower, vout_best, error, series)
