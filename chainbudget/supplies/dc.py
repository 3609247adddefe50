"""``dc``: a battery or bench supply."""

from __future__ import annotations

from chainbudget import fields as f
from chainbudget.supplies.base import Corners, Supply, SupplyKind


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

    def output(self, supply: Supply, parent: Corners | None) -> Corners:
        nominal = abs(supply.number("voltage"))
        low, high = supply.optional("min_voltage"), supply.optional("max_voltage")
        return Corners(
            low=nominal if low is None else abs(low),
            nominal=nominal,
            high=nominal if high is None else abs(high),
        )
