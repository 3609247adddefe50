"""A regulator's figures over a leading trial axis: its output, dropout margin and
minimum-load margin with the reference and the divider's resistors drawn within their
tolerances (chainbudget/spread).

Notes
-----
V_out = V_ref (1 + upper/lower) + I_adj upper (`chainbudget.supplymath.adjustable_output`);
the divider takes V_ref/lower and a bleeder V_out/bleeder from the output, counted toward
the minimum load. The input's trough is the parent's per trial where the parent spreads
it (a rectifier's reservoir), else the nominal one; the external load is the nominal
operating point's (the tree as settled for the nominal parts): the regulator's own current
changes by micro- to milliamperes over its tolerances, which moves a rectifier's trough by
far less than the reference's spread moves the output. Out of regulation the output follows the
input's trough less the dropout, as `Regulator.state` has it; its mean at nominal line
and load, V_out or the parent's mean less the dropout, whichever is lower, is passed on
with the ripple (a filter or divider below takes its own mean from it).

The output's ripple per trial follows the parent's (per trial where the parent spreads
it) as `Regulator.state` passes it: in regulation each harmonic times the rejection
10^(-rejection/20), rolled off above its corner (`rejection_roll_off`), a real factor;
out of regulation unrejected. Its peak-to-peak: the input's times the rejection, plus the
dip V_out - (trough - dropout) out of regulation (zero in regulation).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from chainbudget.supplies.base import (
    RippleSpread,
    SpreadThreshold,
    Supply,
    SupplyBudget,
    SupplySpread,
)
from chainbudget.supplies.regulator.figures import MATCH_RTOL, RegulatorFigures
from chainbudget.supplymath import adjustable_output, divider_current, ripple_after_regulator
from chainbudget.thresholds import THIN_DROPOUT_MARGIN_V

if TYPE_CHECKING:
    from chainbudget.supplies.regulator.kind import Regulator

SPREAD_FIELDS = ("reference", "upper", "lower", "bleeder")


def regulator_spread(
    kind: Regulator,
    supply: Supply,
    drawn: Mapping[str, NDArray[np.float64]],
    nominal: SupplyBudget,
    parent_low_v: NDArray[np.float64] | None = None,
    parent_ripple: RippleSpread | None = None,
) -> SupplySpread:
    """Output, divider and bleeder currents, dropout and minimum-load margins per trial, and
    the output's ripple (``ripple_vpp`` and the spectrum) where the regulator passes its
    parent's ``parent_ripple`` (a ripple rejection given)."""
    own = nominal.own
    assert isinstance(own, RegulatorFigures)

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
    bleeder = supply.optional("bleeder")
    bleeder_a = np.asarray(0.0) if bleeder is None else vout / value("bleeder")
    # the load as solved counts the divider and bleeder at their nominal values
    external_idle = nominal.load.idle_a - own.divider_a - own.bleeder_a
    trough = own.input_min_v if parent_low_v is None else np.asarray(parent_low_v, dtype=float)
    dropout = own.dropout_v
    size = max(np.size(vout), np.size(divider_a), np.size(bleeder_a), np.size(trough))
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
    rail = np.maximum(np.minimum(figures["vout_v"], trough - dropout), 0.0)
    ripple = _ripple(supply, parent_ripple, figures["vout_v"], rail)
    if ripple is not None and ripple.vpp is not None:
        figures["ripple_vpp"] = np.broadcast_to(ripple.vpp, (size,)).astype(float)
    if parent_ripple is not None and parent_ripple.mean_v is not None:
        # its mean at nominal line and load, for a filter or divider below it
        mean = np.maximum(np.minimum(figures["vout_v"], parent_ripple.mean_v - dropout), 0.0)
        if ripple is None:  # no ripple passed on (`Regulator.state` has none then)
            ripple = RippleSpread(None, None, np.zeros(0, dtype=complex))
        ripple = replace(ripple, mean_v=mean)
    return SupplySpread(figures, tuple(thresholds), rail, ripple)


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
