"""``rc_filter``: a series resistor from a parent rail and a shunt capacitor (a supply
decoupling filter)."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.notation import amps, eng
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
from chainbudget.supplies.filter_spread import rc_filter_spread, smoothed_troughs
from chainbudget.supplymath import (
    capacitor_for_attenuation,
    first_order_lowpass,
    microfarads,
    pulsed_sag,
)

# The parts a spread draws (chainbudget/spread): both of its own.
SPREAD_FIELDS = ("resistance", "capacitance")


@dataclass(frozen=True)
class RcFilterFigures(KindFigures):
    """The filter's drop, corner and attenuation (V, Hz, dB, W)."""

    title = "RC filter"

    drop_v: float = figure("drop at heaviest load (mean)", "V")
    crest_drop_v: float = figure("drop at the crest of the heaviest load", "V")
    corner_hz: float = figure("corner frequency", "Hz")
    ripple_attenuation_db: float | None = figure("ripple attenuation at its fundamental", "dB")
    resistor_w: float = figure("resistor dissipation, heaviest load", "W")


def smoothed_trough(parent: SupplyState, gain: float) -> float:
    """The parent's trough with its ripple passed at ``gain`` (0..1) about its mean, V: of
    one state, `chainbudget.supplies.filter_spread.smoothed_troughs` (which says how)."""
    return float(smoothed_troughs(parent.trough_v, parent.ripple_vpp or 0.0, gain))


class RcFilter(SupplyKind):
    """A resistor R from the parent rail and a capacitor C to ground at the output.

    Notes
    -----
    Output: the parent less R times the load current (Ohm's law), the load's pulses seen
    through the low-pass the capacitor makes (:func:`chainbudget.supplymath.pulsed_sag`);
    the parent's ripple at f passed by 1/(1 + j 2 pi f R C)
    (:func:`chainbudget.supplymath.first_order_lowpass`), its spectrum harmonic by harmonic
    (the contract's rc_filter). What it draws from its parent is its load.
    """

    kind = "rc_filter"
    summary = "series resistor and shunt capacitor from a parent rail (decoupling)"
    needs_parent = True
    fields = (
        f.Field("resistance", f.RESISTANCE, "series resistor from the parent"),
        f.Field("capacitance", f.CAPACITANCE, "capacitor from the output to ground"),
    )

    def gain(self, supply: Supply, hz: float) -> complex:
        return first_order_lowpass(hz, supply.number("resistance"), supply.number("capacitance"))

    def input_load(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        return load

    def ripple_remedy(
        self, supply: Supply, attenuation: float, fundamental_hz: float
    ) -> RippleRemedy:
        """A larger capacitor (the resistor, and so the drop, kept)."""
        r, old = supply.number("resistance"), supply.number("capacitance")
        c = capacitor_for_attenuation(attenuation, fundamental_hz, r, old)
        return RippleRemedy(
            "capacitance",
            c,
            microfarads(c),
            lambda hz: first_order_lowpass(hz, r, c) / first_order_lowpass(hz, r, old),
        )

    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        assert parent is not None, "an rc_filter always has a parent (the loader sees to it)"
        r = supply.number("resistance")
        fundamental = 1.0 if parent.ripple_hz is None else abs(self.gain(supply, parent.ripple_hz))
        crest_drop = pulsed_sag(
            r,
            supply.number("capacitance"),
            load.heaviest_dc_a,
            load.heaviest_pulse_a,
            load.signal_hz,
        )
        trough = smoothed_trough(parent, fundamental) - crest_drop
        return SupplyState(
            trough_v=max(trough, 0.0),
            nominal_v=max(parent.nominal_v - r * load.nominal_a, 0.0),
            crest_v=parent.crest_v,
            high_heavy_v=max(parent.high_heavy_v - r * load.heaviest_a, 0.0),
            high_idle_v=max(parent.high_idle_v - r * load.idle_a, 0.0),
            ripple_vpp=None if parent.ripple_vpp is None else parent.ripple_vpp * fundamental,
            collapsed=parent.collapsed or (trough <= 0.0 and load.heaviest_a > 0.0),
            ripple_hz=parent.ripple_hz,
            harmonics_vpk=parent.through(lambda hz: self.gain(supply, hz)),
        )

    def spread_fields(self, supply: Supply) -> tuple[str, ...]:
        return SPREAD_FIELDS

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
        """Its figures per trial with its resistor and capacitor drawn, from its parent's
        trough, ripple and mean as `state` takes the nominal ones, under ``nominal``'s load
        (the check's, or one per trial: (T,) currents)
        (`chainbudget.supplies.filter_spread.rc_filter_spread`); None where only the
        rules' limits are asked for (it has none)."""
        if parent_low_v is None or parent_ripple is None:
            return None
        resistance, capacitance = (
            drawn[key] if key in drawn else supply.number(key) for key in SPREAD_FIELDS
        )
        return rc_filter_spread(
            supply.name, resistance, capacitance, nominal.load, parent_low_v, parent_ripple
        )

    def figures(self, context: SupplyContext) -> RcFilterFigures:
        supply, load, parent = context.supply, context.load, context.parent_state
        r, c = supply.number("resistance"), supply.number("capacitance")
        attenuation = None
        if parent is not None and parent.ripple_hz is not None:
            attenuation = -20.0 * math.log10(abs(self.gain(supply, parent.ripple_hz)))
        return RcFilterFigures(
            drop_v=r * load.heaviest_a,
            crest_drop_v=pulsed_sag(
                r, c, load.heaviest_dc_a, load.heaviest_pulse_a, load.signal_hz
            ),
            corner_hz=1.0 / (2.0 * math.pi * r * c),
            ripple_attenuation_db=attenuation,
            resistor_w=r * load.heaviest_a**2,
        )

    def rules(self, supply: SupplyBudget, ambient_degc: float) -> list[Finding]:
        own = supply.own
        assert isinstance(own, RcFilterFigures)
        if not supply.collapsed:
            return []
        return [
            Finding(
                "error",
                "supply-collapse",
                None,
                f'rc_filter "{supply.name}" cannot hold its load: {amps(supply.max_load_a)} '
                f"drops {eng(own.crest_drop_v, 'V')} across its resistor at the crest of the "
                "load, the whole of what its parent gives; a smaller resistor would hold it",
                {"max_load_a": supply.max_load_a, "crest_drop_v": own.crest_drop_v},
            )
        ]
