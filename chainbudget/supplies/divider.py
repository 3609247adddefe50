"""``divider``: two resistors across a parent rail, optionally with a capacitor across the
lower one: a bias reference for single-supply stages (a stage's ``bias`` may name it)."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import cast

import numpy as np
from numpy.typing import NDArray

from chainbudget import fields as f
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.supplies.base import (
    RippleRemedy,
    RippleSpread,
    Supply,
    SupplyBudget,
    SupplyContext,
    SupplyKind,
    SupplyLoad,
    SupplySpread,
    SupplyState,
)
from chainbudget.supplies.filter_spread import divider_spread
from chainbudget.supplies.rc_filter import smoothed_trough
from chainbudget.supplymath import (
    capacitor_for_attenuation,
    first_order_lowpass,
    microfarads,
    pulsed_sag,
)

# The parts a spread draws (chainbudget/spread): its resistors, and its capacitor if it has one.
SPREAD_FIELDS = ("upper", "lower", "capacitance")


@dataclass(frozen=True)
class DividerFigures(KindFigures):
    """The divider's ratio, source resistance, standing current and corner."""

    title = "divider"

    ratio: float = figure("ratio lower / (upper + lower)", "")
    thevenin_ohm: float = figure("source resistance (upper || lower)", "ohm")
    standing_a: float = figure("current through the divider", "A")
    corner_hz: float | None = figure("corner frequency with the capacitor", "Hz")
    ripple_attenuation_db: float | None = figure("ripple attenuation at its fundamental", "dB")


class Divider(SupplyKind):
    """``upper`` from the parent rail to the output, ``lower`` from the output to ground,
    ``capacitance`` (optional) across ``lower``.

    Notes
    -----
    Thevenin: V = V_parent k - R_th I, k = lower/(upper + lower), R_th = upper || lower;
    the load's pulses through the low-pass of R_th and the capacitor
    (:func:`chainbudget.supplymath.pulsed_sag`); the parent's ripple passed by
    k/(1 + j 2 pi f R_th C) (the contract's divider). From its parent it draws its standing
    current V_parent/(upper + lower) and the share k of its load the upper resistor carries
    (Kirchhoff's current law at the output).
    """

    kind = "divider"
    summary = "two-resistor divider from a parent rail (a bias reference)"
    needs_parent = True
    fields = (
        f.Field("upper", f.RESISTANCE, "resistor from the parent rail to the output"),
        f.Field("lower", f.RESISTANCE, "resistor from the output to ground"),
        f.Field("capacitance", f.CAPACITANCE, "capacitor across the lower resistor", None),
    )

    def ratio(self, supply: Supply) -> float:
        upper, lower = supply.number("upper"), supply.number("lower")
        return lower / (upper + lower)

    def thevenin(self, supply: Supply) -> float:
        upper, lower = supply.number("upper"), supply.number("lower")
        return upper * lower / (upper + lower)

    def gain(self, supply: Supply, hz: float) -> complex:
        return self.ratio(supply) * first_order_lowpass(
            hz, self.thevenin(supply), supply.optional("capacitance")
        )

    def input_load(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        return load.scaled(self.ratio(supply))

    def ripple_remedy(
        self, supply: Supply, attenuation: float, fundamental_hz: float
    ) -> RippleRemedy:
        """A larger capacitor across the lower leg (first-order low-pass with R_th)."""
        r, old = self.thevenin(supply), supply.optional("capacitance")
        c = capacitor_for_attenuation(attenuation, fundamental_hz, r, old)
        return RippleRemedy(
            "capacitance",
            c,
            microfarads(c),
            lambda hz: first_order_lowpass(hz, r, c) / first_order_lowpass(hz, r, old),
        )

    def standing_current(self, supply: Supply, parent: SupplyState) -> float:
        return parent.nominal_v / (supply.number("upper") + supply.number("lower"))

    def trial_draw(
        self,
        supply: Supply,
        drawn: Mapping[str, NDArray[np.float64]],
        load: SupplyLoad,
        parent: SupplyState,
    ) -> SupplyLoad | None:
        """`input_load` and `standing_current` with each trial's upper and lower legs."""
        if not drawn.keys() & {"upper", "lower"}:
            return None
        upper, lower = (drawn.get(key, supply.number(key)) for key in ("upper", "lower"))
        total = np.asarray(upper + lower, dtype=float)
        return load.scaled(cast(float, lower / total)).plus(cast(float, parent.nominal_v / total))

    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        assert parent is not None, "a divider always has a parent (the loader sees to it)"
        k, r = self.ratio(supply), self.thevenin(supply)
        fundamental = 1.0
        if parent.ripple_hz is not None:
            fundamental = abs(self.gain(supply, parent.ripple_hz)) / k
        crest_drop = pulsed_sag(
            r,
            supply.optional("capacitance"),
            load.heaviest_dc_a,
            load.heaviest_pulse_a,
            load.signal_hz,
        )
        trough = k * smoothed_trough(parent, fundamental) - crest_drop
        return SupplyState(
            trough_v=max(trough, 0.0),
            nominal_v=max(k * parent.nominal_v - r * load.nominal_a, 0.0),
            crest_v=k * parent.crest_v,
            high_heavy_v=max(k * parent.high_heavy_v - r * load.heaviest_a, 0.0),
            high_idle_v=max(k * parent.high_idle_v - r * load.idle_a, 0.0),
            ripple_vpp=None if parent.ripple_vpp is None else k * parent.ripple_vpp * fundamental,
            collapsed=parent.collapsed,
            ripple_hz=parent.ripple_hz,
            harmonics_vpk=parent.through(lambda hz: self.gain(supply, hz)),
        )

    def spread_fields(self, supply: Supply) -> tuple[str, ...]:
        return tuple(key for key in SPREAD_FIELDS if supply.values.get(key) is not None)

    def spread(
        self,
        supply: Supply,
        drawn: Mapping[str, NDArray[np.float64]],
        nominal: SupplyBudget,
        parent_low_v: NDArray[np.float64] | None = None,
        bounds: Mapping[str, tuple[float, float]] | None = None,
        parent_ripple: RippleSpread | None = None,
        *,
        ambient_degc: float | None = None,
    ) -> SupplySpread | None:
        """Its figures per trial with its resistors and capacitor drawn, from its parent's
        trough, ripple and mean as `state` takes the nominal ones, under ``nominal``'s load
        (the check's, or one per trial: (T,) currents)
        (`chainbudget.supplies.filter_spread.divider_spread`). Its trough is the bias point
        a stage naming it takes (the check takes a stage's bias point from its supply's
        output at the corner it analyses, the trough at low line), so the stages it biases
        follow it per trial. None where only the rules' limits are asked for (it has
        none)."""
        if parent_low_v is None or parent_ripple is None:
            return None

        def value(key: str) -> NDArray[np.float64] | float | None:
            return drawn[key] if key in drawn else supply.optional(key)

        upper, lower, capacitance = (value(key) for key in SPREAD_FIELDS)
        assert upper is not None and lower is not None, "required fields"
        return divider_spread(upper, lower, capacitance, nominal.load, parent_low_v, parent_ripple)

    def figures(self, context: SupplyContext) -> DividerFigures:
        supply, parent = context.supply, context.parent_state
        c = supply.optional("capacitance")
        r = self.thevenin(supply)
        attenuation = None
        if parent is not None and parent.ripple_hz is not None:
            attenuation = -20.0 * math.log10(
                abs(self.gain(supply, parent.ripple_hz)) / self.ratio(supply)
            )
        return DividerFigures(
            ratio=self.ratio(supply),
            thevenin_ohm=r,
            standing_a=0.0 if parent is None else self.standing_current(supply, parent),
            corner_hz=None if c is None else 1.0 / (2.0 * math.pi * r * c),
            ripple_attenuation_db=attenuation,
        )
