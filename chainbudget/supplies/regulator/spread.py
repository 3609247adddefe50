"""A regulator's figures over a leading trial axis: its output, dropout margin,
minimum-load margin and heat with the reference and the divider's resistors drawn within
their tolerances, and its parent's state per trial where the parent is spread
(chainbudget/spread).

Notes
-----
V_out = V_ref (1 + upper/lower) + I_adj upper (`chainbudget.supplymath.adjustable_output`);
the divider takes V_ref/lower and a bleeder V_out/bleeder from the output, counted toward
the minimum load. The input's trough is the parent's per trial where the parent spreads
it (a rectifier's reservoir), else the nominal one; the external load is the nominal
operating point's (the tree as settled for the nominal parts), or one per trial where the
budget ``nominal`` holds a load of (T,) currents (the tree settled for each trial): each
trial then takes its own in the minimum-load margin and the heat, element-wise. (The
regulator's own current changes by micro- to milliamperes over its tolerances, which moves
a rectifier's trough by far less than the reference's spread moves the output.) Out of
regulation the output follows the input's trough less the dropout, as `Regulator.state`
has it; its mean at nominal line and load, V_out or the parent's mean less the dropout,
whichever is lower, is passed on with the ripple (a filter or divider below takes its own
mean from it).

The output's ripple per trial follows the parent's (per trial where the parent spreads
it) as `Regulator.state` passes it: in regulation each harmonic times the rejection
10^(-rejection/20), rolled off above its corner (`rejection_roll_off`), a real factor;
out of regulation unrejected. Its peak-to-peak: the input's times the rejection, plus the
dip V_out - (trough - dropout) out of regulation (zero in regulation).

Its state's other figures follow its input as `Regulator.state` has them, V_out or the
input less the dropout, whichever is lower (`follow_input`): ``trough_v`` and
``output_min_v`` from the input's trough, ``mean_v`` from its mean, ``crest_v`` and
``output_max_v`` from its crest; ``input_min_v`` and ``input_max_v`` are the input's
trough and crest. Its heat is the check's (`chainbudget.supplies.regulator.figures.
regulator_heat`, the same code element-wise): the dissipation at high line under the
heaviest and the idle output current (the nominal external load plus the trial's divider
and bleeder currents) from the input's means there (`HighLine`, per trial where the parent
spreads them), the junctions and the thermal resistances allowed, and ``bleeder_w``
(V_out times the bleeder's current). The junction's and the input maximum's findings are
drawn per trial as flags with the check's own conditions (`chainbudget.supplies.regulator.
rules`): ``regulator-junction``, ``regulator-junction-near``, ``regulator-no-thermal``
(no thermal resistance given) and ``regulator-max-input``. The hot-parts caution counts
in no yield: it is the nominal check's.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.spread.flags import flag_key
from chainbudget.supplies.base import (
    HighLine,
    RippleSpread,
    SpreadThreshold,
    Supply,
    SupplyBudget,
    SupplySpread,
)
from chainbudget.supplies.regulator.figures import MATCH_RTOL, RegulatorFigures, regulator_heat
from chainbudget.supplies.regulator.rules import (
    dissipates,
    input_over,
    junction_near,
    junction_over,
)
from chainbudget.supplymath import adjustable_output, divider_current, ripple_after_regulator
from chainbudget.thresholds import THIN_DROPOUT_MARGIN_V

if TYPE_CHECKING:
    from chainbudget.supplies.regulator.kind import Regulator

SPREAD_FIELDS = ("reference", "upper", "lower", "bleeder")

Figures = dict[str, NDArray[np.float64]]


def follow_input(vout_v: ArrayLike, vin_v: ArrayLike, dropout_v: float) -> NDArray[np.float64]:
    """A regulator's output from an input ``vin_v``: V_out in regulation, the input less
    the dropout below it, never below zero, V, element-wise (`Regulator.state`)."""
    vout, vin = np.asarray(vout_v, dtype=float), np.asarray(vin_v, dtype=float)
    return np.maximum(np.minimum(vout, vin - dropout_v), 0.0)


def set_point(
    kind: Regulator, supply: Supply, drawn: Mapping[str, NDArray[np.float64]]
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """The set output, the divider's current and the bleeder's per trial with the parts
    ``drawn`` (module notes): V_out = V_ref (1 + upper/lower) + I_adj upper, V_ref/lower
    and V_out/bleeder (a fixed regulator: its set output and no divider; no bleeder:
    none), V and A."""

    def value(key: str) -> NDArray[np.float64]:
        if key in drawn:
            return np.asarray(drawn[key], dtype=float)
        return np.asarray(supply.number(key), dtype=float)

    if kind.adjustable(supply):
        reference = np.abs(value("reference"))
        iadj = supply.number("adjust_current")
        vout = adjustable_output(reference, iadj, value("upper"), value("lower"))
        divider_a = divider_current(reference, value("lower"))
    else:
        vout = np.asarray(kind.set_output(supply), dtype=float)
        divider_a = np.asarray(0.0)
    bleeder_a = np.asarray(0.0)
    if supply.optional("bleeder") is not None:
        bleeder_a = vout / value("bleeder")
    return vout, divider_a, bleeder_a


def regulator_spread(
    kind: Regulator,
    supply: Supply,
    drawn: Mapping[str, NDArray[np.float64]],
    nominal: SupplyBudget,
    parent_low_v: NDArray[np.float64] | None = None,
    parent_ripple: RippleSpread | None = None,
    ambient_degc: float | None = None,
) -> SupplySpread:
    """Output, divider and bleeder currents, dropout and minimum-load margins per trial
    (under ``nominal``'s load: the check's, or one per trial), the
    output's ripple (``ripple_vpp`` and the spectrum) where the regulator passes its
    parent's ``parent_ripple`` (a ripple rejection given), its state's figures and, given
    the parent's output at high line and ``ambient_degc``, its heat and the flags of the
    rules that read it (module notes)."""
    own = nominal.own
    assert isinstance(own, RegulatorFigures)
    vout, divider_a, bleeder_a = set_point(kind, supply, drawn)
    bleeder = supply.optional("bleeder")
    # the load as solved counts the divider and bleeder at their nominal values
    external_idle = nominal.load.idle_a - own.divider_a - own.bleeder_a
    external_heaviest = nominal.load.heaviest_a - own.divider_a - own.bleeder_a
    trough = own.input_min_v if parent_low_v is None else np.asarray(parent_low_v, dtype=float)
    dropout = own.dropout_v
    # the trial axis: the drawn parts', the parent's trough's or the load's (one per trial)
    size = max(
        np.size(vout),
        np.size(divider_a),
        np.size(bleeder_a),
        np.size(trough),
        np.size(external_idle),
        np.size(external_heaviest),
    )
    figures: dict[str, NDArray[np.float64]] = {
        "vout_v": np.broadcast_to(vout, (size,)).astype(float),
        "dropout_margin_v": np.broadcast_to(trough - vout - dropout, (size,)).astype(float),
        "divider_a": np.broadcast_to(divider_a, (size,)).astype(float),
        "bleeder_a": np.broadcast_to(bleeder_a, (size,)).astype(float),
    }
    thresholds = [
        SpreadThreshold("dropout_margin_v", 0.0, "regulator-dropout", "error"),
        SpreadThreshold(
            "dropout_margin_v", THIN_DROPOUT_MARGIN_V, "regulator-dropout-margin", "warning"
        ),
    ]
    min_load = supply.number("min_load")
    if min_load > 0.0:
        idle = external_idle + figures["divider_a"] + figures["bleeder_a"]
        figures["min_load_margin_a"] = idle - min_load
        thresholds.append(
            SpreadThreshold(
                "min_load_margin_a", -MATCH_RTOL * min_load, "regulator-min-load", "warning"
            )
        )
    if bleeder is not None:
        figures["bleeder_w"] = figures["vout_v"] * figures["bleeder_a"]
    rail = follow_input(figures["vout_v"], trough, dropout)
    figures["trough_v"] = figures["output_min_v"] = rail
    figures["input_min_v"] = np.broadcast_to(trough, (size,)).astype(float)
    ripple = _ripple(supply, parent_ripple, figures["vout_v"], rail)
    if ripple is not None and ripple.vpp is not None:
        figures["ripple_vpp"] = np.broadcast_to(ripple.vpp, (size,)).astype(float)
    flags: dict[str, NDArray[np.bool_]] = {}
    if parent_ripple is not None:
        if ripple is None:  # no ripple passed on (`Regulator.state` has none then)
            ripple = RippleSpread(None, None, np.zeros(0, dtype=complex))
        if parent_ripple.mean_v is not None:
            # its mean at nominal line and load, for a filter or divider below it
            figures["mean_v"] = follow_input(figures["vout_v"], parent_ripple.mean_v, dropout)
            ripple = replace(ripple, mean_v=figures["mean_v"])
        high = parent_ripple.high
        if high is not None:
            crest = follow_input(figures["vout_v"], high.crest_v, dropout)
            figures["crest_v"] = figures["output_max_v"] = crest
            figures["input_max_v"] = np.broadcast_to(high.crest_v, (size,)).astype(float)
            max_input = supply.optional("max_input")
            if max_input is not None:
                over = input_over(high.crest_v, max_input)
                flags[flag_key("error", "regulator-max-input", supply.name)] = over
            # its output at high line, for a regulator below it
            heavy = follow_input(figures["vout_v"], high.heavy_v, dropout)
            idle_v = follow_input(figures["vout_v"], high.idle_v, dropout)
            ripple = replace(ripple, high=HighLine(crest, heavy, idle_v))
            if ambient_degc is not None:
                current = figures["divider_a"] + figures["bleeder_a"]
                loads = (external_heaviest + current, external_idle + current)
                _heat(kind, supply, figures, flags, own, high, loads, ambient_degc)
    return SupplySpread(figures, tuple(thresholds), rail, ripple, flags)


def _heat(
    kind: Regulator,
    supply: Supply,
    figures: Figures,
    flags: dict[str, NDArray[np.bool_]],
    own: RegulatorFigures,
    high: HighLine,
    loads: tuple[NDArray[np.float64], NDArray[np.float64]],
    ambient_degc: float,
) -> None:
    """The heat's figures per trial into ``figures`` and its rules' flags into ``flags``
    (module notes): the check's `regulator_heat` with the trial's output, input and output
    currents (``loads``: at the heaviest and the idle load). A thermal resistance allowed
    is a figure where the check reports one (something dissipated)."""
    heaviest, idle = loads
    heat = regulator_heat(
        kind, supply, figures["vout_v"], high.heavy_v, high.idle_v, heaviest, idle, ambient_degc
    )
    size = figures["vout_v"].shape
    figures["dissipation_w"] = np.broadcast_to(heat.power_w, size).astype(float)
    figures["dissipation_full_w"] = np.broadcast_to(heat.full_w, size).astype(float)
    figures["dissipation_idle_w"] = np.broadcast_to(heat.idle_w, size).astype(float)
    if own.theta_allowed_k_per_w is not None:
        figures["theta_allowed_k_per_w"] = np.broadcast_to(heat.theta_allowed_k_per_w, size).astype(
            float
        )
    if own.heatsink_allowed_k_per_w is not None and heat.heatsink_allowed_k_per_w is not None:
        figures["heatsink_allowed_k_per_w"] = np.broadcast_to(
            heat.heatsink_allowed_k_per_w, size
        ).astype(float)
    name = supply.name
    if heat.junction_degc is None or heat.junction_idle_degc is None:
        flags[flag_key("note", "regulator-no-thermal", name)] = dissipates(heat.power_w)
        return
    figures["junction_degc"] = np.broadcast_to(heat.junction_degc, size).astype(float)
    figures["junction_idle_degc"] = np.broadcast_to(heat.junction_idle_degc, size).astype(float)
    max_junction = own.max_junction_degc
    flags[flag_key("error", "regulator-junction", name)] = junction_over(
        heat.junction_degc, max_junction
    )
    flags[flag_key("warning", "regulator-junction-near", name)] = junction_near(
        heat.junction_degc, max_junction
    )


def _ripple(
    supply: Supply,
    parent: RippleSpread | None,
    vout: NDArray[np.float64],
    rail: NDArray[np.float64],
) -> RippleSpread | None:
    """The output's ripple per trial (module notes); None without a rejection or a parent's
    ripple, as `Regulator.state` has none then."""
    rejection = supply.optional("ripple_rejection")
    if rejection is None or parent is None or parent.vpp is None:
        return None
    # imported here: the kind's module imports this one
    from chainbudget.supplies.regulator.kind import rejection_roll_off

    factor = float(ripple_after_regulator(1.0, rejection))
    # the rail's trough is V_out in regulation, the input's trough less the dropout out of it
    regulating = rail >= vout
    vpp = parent.vpp * factor + (vout - rail)
    corner = supply.optional("ripple_rejection_corner")
    rejected = parent.through(lambda hz: rejection_roll_off(factor, hz, parent.ripple_hz, corner))
    harmonics = np.where(regulating[..., None], rejected, parent.harmonics_vpk)
    if not harmonics.size:
        return RippleSpread(None, vpp, harmonics)
    return RippleSpread(parent.ripple_hz, vpp, harmonics)
