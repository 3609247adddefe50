"""``dc``: a battery or bench supply."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.notation import amps, eng
from chainbudget.supplies.base import (
    RippleSpread,
    Supply,
    SupplyBudget,
    SupplyContext,
    SupplyKind,
    SupplyLoad,
    SupplySpread,
    SupplyState,
)
from chainbudget.supplymath import battery_runtime_h, pulsed_sag, pulsed_sags, sag
from chainbudget.thresholds import BATTERY_SAG_COST_DB


@dataclass(frozen=True)
class DcFigures(KindFigures):
    """Sag at the crest of the heaviest load (V, A) and, with a capacity, the run time (Ah,
    h)."""

    title = "battery or bench supply"

    sag_v: float = figure("sag at the crest of the heaviest load", "V")
    peak_current_a: float = figure("current at that crest", "A")
    capacity_ah: float | None = figure("capacity", "Ah", default=None)
    runtime_idle_h: float | None = figure("run time at idle", "h", default=None)
    runtime_nominal_h: float | None = figure("run time at the nominal level", "h", default=None)
    resistance_ohm: float = figure(default=0.0)
    reservoir_f: float | None = figure(default=None)


# The parts a spread draws (chainbudget/spread): its internal resistance and, with one, the
# reservoir across its terminals (with no resistance the reservoir holds nothing up).
SPREAD_FIELDS = ("resistance", "reservoir")


@dataclass(frozen=True)
class BatteryEnds:
    """A battery's emf at its three corners, V (magnitudes): nominal, low end (flat) and
    high end (fresh), the file's ``voltage``, ``min_voltage`` and ``max_voltage``."""

    nominal_v: float
    low_v: float
    high_v: float


def battery_ends(supply: Supply) -> BatteryEnds:
    """The emf at each corner; an end not given is the nominal voltage."""
    nominal = abs(supply.number("voltage"))
    low = supply.optional("min_voltage")
    high = supply.optional("max_voltage")
    return BatteryEnds(
        nominal, nominal if low is None else abs(low), nominal if high is None else abs(high)
    )


def terminal_v(emf: ArrayLike, resistance: ArrayLike, current: ArrayLike) -> NDArray[np.float64]:
    """The terminal voltage E - R I of a Thevenin source, no lower than zero, V,
    element-wise (:func:`chainbudget.supplymath.sag`; Horowitz & Hill, The Art of
    Electronics, 3rd ed., ch. 1, from memory)."""
    return np.maximum(sag(emf, resistance, current), 0.0)


def crest_drop_v(
    resistance: ArrayLike, reservoir_f: ArrayLike | None, load: SupplyLoad
) -> NDArray[np.float64]:
    """The drop across the internal resistance at the crest of the heaviest load, V,
    element-wise in the resistance and the reservoir (None: none)
    (:func:`chainbudget.supplymath.pulsed_sags`: the steady current and the crest of the
    pulses, less what a reservoir holds up over the time constant R C)."""
    return pulsed_sags(
        resistance, reservoir_f, load.heaviest_dc_a, load.heaviest_pulse_a, load.signal_hz
    )


def trough_v(low_v: float, drop_v: ArrayLike) -> NDArray[np.float64]:
    """The low end less the crest's drop, no lower than zero, V."""
    return np.maximum(low_v - np.asarray(drop_v, dtype=float), 0.0)


def collapses(low_v: float, drop_v: ArrayLike, load: SupplyLoad) -> NDArray[np.bool_]:
    """Whether the crest's drop takes the whole of the low end (under a load at all)."""
    return np.asarray((np.asarray(drop_v) >= low_v) & (load.heaviest_a > 0.0), dtype=bool)


class DcSupply(SupplyKind):
    """A DC source of fixed voltage, optionally with a low and high end and a resistance.

    Notes
    -----
    A negative value (``"-15 V"``) or use as a stage's ``negative`` rail places it below
    ground; its magnitude is what this returns.
    """

    kind = "dc"
    summary = "battery or bench supply"
    fields = (
        f.Field("voltage", f.VOLTAGE, "nominal voltage"),
        f.Field("min_voltage", f.VOLTAGE, "low end (low battery), default nominal", None),
        f.Field(
            "max_voltage", f.VOLTAGE, "high end (fresh battery, charger), default nominal", None
        ),
        f.Field("resistance", f.RESISTANCE_OR_ZERO, "internal resistance", 0.0),
        f.Field("capacity", f.CHARGE, "battery capacity, for run time", None),
        f.Field("reservoir", f.CAPACITANCE, "capacitor across the terminals", None),
    )

    def problems(self, values: Mapping[str, Any]) -> list[tuple[str, str]]:
        """The voltage is not zero; the low and high ends have its sign and bracket it."""
        nominal = values["voltage"]
        if nominal == 0.0:
            return [("voltage", "got 0 V, expected a voltage other than zero")]
        found = []
        for key, low_end in (("min_voltage", True), ("max_voltage", False)):
            end = values.get(key)
            if end is None:
                continue
            if end * nominal <= 0.0:
                found.append((key, f"got {end:g} V, expected the sign of voltage ({nominal:g} V)"))
            elif (abs(end) > abs(nominal)) if low_end else (abs(end) < abs(nominal)):
                side = "at most" if low_end else "at least"
                found.append((key, f"got {end:g} V, expected {side} voltage ({nominal:g} V)"))
        return found

    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        """Output of a battery or bench supply under load.

        Notes
        -----
        A Thevenin source, emf E in series with its internal resistance R, gives E - R I at
        the terminals (:func:`chainbudget.supplymath.sag`; Horowitz & Hill, The Art of
        Electronics, 3rd ed., ch. 1, from memory). The trough is the low end
        (``min_voltage``) at the crest of the heaviest load: the steady current plus the
        crest of the pulses a class-B stage draws, less what a ``reservoir`` across the
        terminals holds up over the signal period
        (:func:`chainbudget.supplymath.pulsed_sag`). The means: the nominal voltage under
        the nominal load, the high end (``max_voltage``) under the heaviest and the idle
        load; the crest is the high end unloaded. No mains ripple. The supply collapses
        when the sag would take the trough to zero. The arithmetic is `terminal_v`,
        `crest_drop_v`, `trough_v` and `collapses`, which the spread takes with the
        resistance and the reservoir arrays of trials (`chainbudget.supplies.dc_spread`).
        """
        return self._state(supply, load, supply.number("resistance"))

    def stiff_state(
        self, supply: Supply, parent: SupplyState | None, load: SupplyLoad
    ) -> SupplyState | None:
        """The same battery with no internal resistance (None when it has none)."""
        if supply.number("resistance") <= 0.0:
            return None
        return self._state(supply, load, 0.0)

    def _state(self, supply: Supply, load: SupplyLoad, r: float) -> SupplyState:
        ends = battery_ends(supply)
        drop = self.crest_sag(supply, load, r)
        return SupplyState(
            trough_v=float(trough_v(ends.low_v, drop)),
            nominal_v=float(terminal_v(ends.nominal_v, r, load.nominal_a)),
            crest_v=ends.high_v,
            high_heavy_v=float(terminal_v(ends.high_v, r, load.heaviest_a)),
            high_idle_v=float(terminal_v(ends.high_v, r, load.idle_a)),
            ripple_vpp=0.0,
            collapsed=bool(collapses(ends.low_v, drop, load)),
        )

    def crest_sag(self, supply: Supply, load: SupplyLoad, r: float | None = None) -> float:
        """Sag at the crest of the heaviest load, V (`crest_drop_v`)."""
        resistance = supply.number("resistance") if r is None else r
        return float(crest_drop_v(resistance, supply.optional("reservoir"), load))

    def spread_fields(self, supply: Supply) -> tuple[str, ...]:
        """Its internal resistance, where it has one (a zero resistance is no part), and
        then its reservoir, where it has one: with no resistance the reservoir holds up
        nothing (`pulsed_sags`: the drop is R times the current whatever C), so it is not
        drawn."""
        if supply.number("resistance") <= 0.0:
            return ()
        return SPREAD_FIELDS if supply.optional("reservoir") is not None else SPREAD_FIELDS[:1]

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
    ) -> SupplySpread:
        """Its figures per trial with its internal resistance and its reservoir drawn (each
        the nominal value where not drawn), under ``nominal``'s load: the nominal check's,
        or one per trial where its currents are (T,) arrays
        (`chainbudget.supplies.dc_spread.dc_spread`). A root: no parent's trough or ripple
        to take."""
        # imported here: that module imports this one's formulas
        from chainbudget.supplies.dc_spread import dc_spread

        resistance = drawn.get("resistance", np.asarray(supply.number("resistance")))
        reservoir = supply.optional("reservoir")
        held = None if reservoir is None else np.asarray(reservoir, dtype=float)
        return dc_spread(supply, resistance, nominal.load, drawn.get("reservoir", held))

    def figures(self, context: SupplyContext) -> DcFigures:
        """Sag at the crest of the heaviest load; run time = capacity / mean drain
        (:func:`chainbudget.supplymath.battery_runtime_h`)."""
        supply, load = context.supply, context.load
        capacity = supply.optional("capacity")
        r = supply.number("resistance")
        drop = self.crest_sag(supply, load)
        return DcFigures(
            sag_v=drop,
            peak_current_a=load.heaviest_peak_a,
            capacity_ah=capacity,
            runtime_idle_h=None
            if capacity is None
            else float(battery_runtime_h(capacity, load.idle_a)),
            runtime_nominal_h=None
            if capacity is None
            else float(battery_runtime_h(capacity, load.nominal_a)),
            resistance_ohm=r,
            reservoir_f=supply.optional("reservoir"),
        )

    def rules(self, supply: SupplyBudget, ambient_degc: float) -> list[Finding]:
        """Collapse, a sag that costs clip power, and the run time."""
        own = supply.own
        assert isinstance(own, DcFigures)
        found: list[Finding] = []
        if supply.collapsed:
            found.append(
                Finding(
                    "error",
                    "supply-collapse",
                    None,
                    f'supply "{supply.name}" cannot hold its load: {amps(supply.max_load_a)} '
                    f"through its {eng(own.resistance_ohm, 'ohm')} internal resistance drops "
                    f"the whole of its low-end voltage; a source of lower resistance or a "
                    "lighter load would hold it",
                    {"max_load_a": supply.max_load_a, "sag_v": own.sag_v},
                )
            )
        cost = supply.sag_cost_db
        if cost is not None and cost > BATTERY_SAG_COST_DB and not supply.collapsed:
            fix = battery_sag_fix(own, supply.load, cost)
            found.append(
                Finding(
                    "warning",
                    "battery-resistance",
                    None,
                    f'supply "{supply.name}" sags {own.sag_v:.3g} V at the crest of the '
                    f"heaviest load ({amps(own.peak_current_a)} through "
                    f"{eng(own.resistance_ohm, 'ohm')}): its internal resistance costs "
                    f"{cost:.2g} dB of clip power; {fix}",
                    {"sag_v": own.sag_v, "sag_cost_db": cost},
                )
            )
        idle, nominal = own.runtime_idle_h, own.runtime_nominal_h
        if own.capacity_ah is not None and idle is not None and nominal is not None:
            found.append(
                Finding(
                    "note",
                    "battery-runtime",
                    None,
                    f'battery "{supply.name}" ({own.capacity_ah:g} Ah) lasts about {idle:.3g} h '
                    f"at idle and {nominal:.3g} h at the nominal level "
                    f"({amps(supply.idle_load_a)} and {amps(supply.nominal_load_a)}); ideal "
                    "figures: high drain and cold shorten them",
                    {"runtime_idle_h": idle, "runtime_nominal_h": nominal},
                )
            )
        return found


# The fix aims a little under the estimate (ours: the estimate is first order).
FIX_ALLOWANCE = 0.95


def battery_sag_fix(own: DcFigures, load: SupplyLoad, cost_db: float) -> str:
    """What brings a battery's sag cost under `BATTERY_SAG_COST_DB`: the internal resistance
    that would, and (for a pulsed load) the reservoir across it that would.

    Notes
    -----
    First-order estimates. The swing falls with the sag, so the swing lost is e (1 -
    10^(-cost/20)) against the stiff swing e; the sag allowed is the present one scaled
    by the swing lost at the allowed cost over the swing lost now. At the larger swing the
    pulses are taller by 10^((cost - allowed)/20): the resistance allowed is the sag
    allowed over that current. A reservoir lowers the pulses' share of the sag towards
    their mean (`pulsed_sag`); the smallest one reaching the sag allowed is found by
    bisection in the capacitance. The sag allowed keeps `FIX_ALLOWANCE` of the estimate's
    (the swing is not quite linear in the sag), so that the fix clears the threshold.
    """

    def lost(db: float) -> float:
        return 1.0 - 10.0 ** (-db / 20.0)

    allowed = FIX_ALLOWANCE * own.sag_v * lost(BATTERY_SAG_COST_DB) / lost(cost_db)
    taller = 10.0 ** ((cost_db - BATTERY_SAG_COST_DB) / 20.0)
    r = own.resistance_ohm
    text = (
        f"a source of at most {eng(allowed / (own.peak_current_a * taller), 'ohm')} would "
        "keep it under 1 dB"
    )
    pulse = load.heaviest_pulse_a * taller
    if pulse <= 0.0 or load.signal_hz is None or r <= 0.0:
        return text
    dc = load.heaviest_dc_a
    if pulsed_sag(r, 1e9, dc, pulse, load.signal_hz) >= allowed:
        return text
    lo, hi = 1e-9, 1e3
    for _ in range(80):
        mid = (lo * hi) ** 0.5
        lo, hi = (mid, hi) if pulsed_sag(r, mid, dc, pulse, load.signal_hz) > allowed else (lo, mid)
    return text + f", or a reservoir of at least {eng(hi, 'F')} across it"
