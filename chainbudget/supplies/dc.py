"""``dc``: a battery or bench supply."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.notation import amps, sig
from chainbudget.supplies.base import (
    Supply,
    SupplyBudget,
    SupplyContext,
    SupplyKind,
    SupplyLoad,
    SupplyState,
)
from chainbudget.supplymath import battery_runtime_h, sag


@dataclass(frozen=True)
class DcFigures(KindFigures):
    """Sag at the heaviest load (V) and, with a capacity, the run time (Ah, h)."""

    title = "battery or bench supply"

    sag_v: float = figure("sag at heaviest load", "V")
    capacity_ah: float | None = figure("capacity", "Ah", default=None)
    runtime_idle_h: float | None = figure("run time at idle", "h", default=None)
    runtime_nominal_h: float | None = figure("run time at the nominal level", "h", default=None)


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
        Electronics, 3rd ed., ch. 1, from memory). The low end (``min_voltage``) sags under
        the heaviest load, the nominal voltage under the nominal load; the high end
        (``max_voltage``) is taken unloaded. No ripple.
        """
        nominal = abs(supply.number("voltage"))
        low = supply.optional("min_voltage")
        high = supply.optional("max_voltage")
        low_v = nominal if low is None else abs(low)
        high_v = nominal if high is None else abs(high)
        r = supply.number("resistance")

        def terminal(emf: float, current: float) -> float:
            return max(float(sag(emf, r, current)), 0.0)

        return SupplyState(
            trough_v=terminal(low_v, load.heaviest_a),
            nominal_v=terminal(nominal, load.nominal_a),
            crest_v=high_v,
            high_heavy_v=terminal(high_v, load.heaviest_a),
            high_idle_v=terminal(high_v, load.idle_a),
            ripple_vpp=0.0,
        )

    def figures(self, context: SupplyContext) -> DcFigures:
        """Sag I R at the heaviest load; run time = capacity / mean drain
        (:func:`chainbudget.supplymath.battery_runtime_h`)."""
        supply, load = context.supply, context.load
        capacity = supply.optional("capacity")
        return DcFigures(
            sag_v=supply.number("resistance") * load.heaviest_a,
            capacity_ah=capacity,
            runtime_idle_h=None
            if capacity is None
            else float(battery_runtime_h(capacity, load.idle_a)),
            runtime_nominal_h=None
            if capacity is None
            else float(battery_runtime_h(capacity, load.nominal_a)),
        )

    def rules(self, supply: SupplyBudget, ambient_degc: float) -> list[Finding]:
        """The run time, when the capacity is given."""
        own = supply.own
        assert isinstance(own, DcFigures)
        idle, nominal = own.runtime_idle_h, own.runtime_nominal_h
        if own.capacity_ah is None or idle is None or nominal is None:
            return []
        return [
            Finding(
                "note",
                "battery-runtime",
                None,
                f'battery "{supply.name}" ({own.capacity_ah:g} Ah) lasts about {sig(idle, "h")} at '
                f"idle and {sig(nominal, 'h')} at the nominal level ({amps(supply.idle_load_a)} "
                "and "
                f"{amps(supply.nominal_load_a)}); ideal figures: high drain and cold shorten them",
                {"runtime_idle_h": idle, "runtime_nominal_h": nominal},
            )
        ]
