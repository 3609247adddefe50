"""``rc_filter``: a series resistor from a parent rail and a shunt capacitor (a supply
decoupling filter)."""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

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
from chainbudget.supplymath import (
    capacitor_for_attenuation,
    first_order_lowpass,
    microfarads,
    pulsed_sag,
)


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
    """The parent's trough with its ripple passed at ``gain`` (0..1) about its mean, V.

    Notes
    -----
    The parent's low-line mean is taken as trough + ripple/2 (its ripple treated as its
    fundamental, a sine about the mean: an approximation on the safe side for the sawtooth
    of a reservoir, whose fundamental is a little smaller than half its peak-to-peak).
    """
    return float(smoothed_troughs(parent.trough_v, parent.ripple_vpp or 0.0, gain))


def smoothed_troughs(trough_v: ArrayLike, ripple_vpp: ArrayLike, gain: float) -> NDArray[Any]:
    """`smoothed_trough` of a parent's trough and peak-to-peak ripple given as arrays (the
    spread's trials), V."""
    trough, ripple = np.asarray(trough_v, dtype=float), np.asarray(ripple_vpp, dtype=float)
    return np.asarray(trough + 0.5 * ripple * (1.0 - gain), dtype=float)


def ripple_spread(
    gain: Callable[[float], complex], parent: RippleSpread, scale: float = 1.0
) -> RippleSpread:
    """A parent's ripple per trial passed by a first-order network of complex gain
    ``gain(hz)`` (an RC filter, a divider's capacitor), as `RcFilter.state` passes the
    nominal one: each harmonic times the gain, the peak-to-peak times ``scale`` (a
    divider's ratio) and the gain's magnitude at the fundamental over ``scale``."""
    fundamental = 1.0 if parent.ripple_hz is None else abs(gain(parent.ripple_hz)) / scale
    vpp = None if parent.vpp is None else scale * parent.vpp * fundamental
    return RippleSpread(parent.ripple_hz, vpp, parent.through(gain))


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

    def spread(
        self,
        supply: Supply,
        drawn: Mapping[str, NDArray[np.float64]],
        nominal: SupplyBudget,
        parent_low_v: NDArray[np.float64] | None = None,
        bounds: Mapping[str, tuple[float, float]] | None = None,
        parent_ripple: RippleSpread | None = None,
    ) -> SupplySpread | None:
        """Its parent's trough and ripple per trial passed as `state` passes the nominal
        ones (its own parts held): the ripple harmonic by harmonic, the trough smoothed
        (`smoothed_trough`) less the nominal sag of the load's crest."""
        if parent_ripple is None:
            return None
        ripple = ripple_spread(lambda hz: self.gain(supply, hz), parent_ripple)
        figures: dict[str, NDArray[np.float64]] = {}
        if ripple.vpp is not None:
            figures["ripple_vpp"] = np.asarray(ripple.vpp, dtype=float)
        low = None
        own = nominal.own
        if parent_low_v is not None and isinstance(own, RcFilterFigures):
            fundamental = (
                1.0
                if parent_ripple.ripple_hz is None
                else abs(self.gain(supply, parent_ripple.ripple_hz))
            )
            vpp = 0.0 if parent_ripple.vpp is None else parent_ripple.vpp
            trough = smoothed_troughs(parent_low_v, vpp, fundamental) - own.crest_drop_v
            low = np.maximum(trough, 0.0)
            figures["trough_v"] = low
        return SupplySpread(figures, (), low, ripple)

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
