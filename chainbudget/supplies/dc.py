"""``dc``: a battery or bench supply."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from chainbudget import fields as f
from chainbudget.supplies.base import Supply, SupplyKind, SupplyLoad, SupplyState
from chainbudget.supplymath import sag


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
