"""A rectified supply's own figures: its transformer, the winding's and diodes' currents,
the reservoir's ripple current, and what would hold a load it cannot.

Notes
-----
The currents are the larger of low and high line at the heaviest load (the charging
pulses are shortest and tallest at high line; the heaviest load is at low line's rails).
The winding's rms current heats the transformer (its rating is an rms current); for a
centre-tapped winding, each half's (its dc load then the mean of the two rails'). With no
winding resistance known the solved pulses are an ideal source's, narrower and taller than
any transformer's: the rating is then judged by the rule of thumb instead (rms about 1.8
times the dc load, common practice). Inrush: the first charging peak into an empty
reservoir switched on at the mains crest, (V_pk - V_d)/R_s at high line
(`chainbudget.rectifier.inrush_peak`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from chainbudget import rectifier
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.supplies.base import SupplyContext, SupplyLoad
from chainbudget.supplies.rectified.circuit import (
    Currents,
    Transformer,
    reservoir_for_trough,
    solve_rails,
    transformer,
    winding_for_trough,
)
from chainbudget.thresholds import RMS_PER_DC_AMP

# A collapsed rail is held again when its low-line trough reaches this fraction of the
# open-circuit peak the diodes leave (ours: a working rail, ripple well under the peak).
HOLD_FRACTION = 0.5


@dataclass(frozen=True)
class RectifiedFigures(KindFigures):
    """Transformer and rectifier figures of one rail (V, A, ohm, deg, fractions)."""

    title = "rectifier"

    winding_resistance_ohm: float = figure("winding resistance (secondary)", "ohm")
    open_circuit_vrms: float = figure("open-circuit secondary, nominal mains", "V")
    transformer_regulation: float = figure("transformer regulation", "%")
    dc_load_a: float = figure("dc load, heaviest", "A")
    winding_rms_a: float = figure("winding current, rms", "A")
    rms_per_dc: float | None = figure("winding rms over dc load", "")
    #: The rms current the transformer's rating is judged by: the solved winding current,
    #: or with no winding resistance known (an ideal source's pulses, too tall) the rule
    #: of thumb RMS_PER_DC_AMP times the dc load.
    rating_current_a: float = figure("rms current against the rating", "A")
    transformer_load_fraction: float | None = figure("transformer load (rms)", "%")
    diode_peak_a: float = figure("diode peak current", "A")
    reservoir_ripple_a: float = figure("reservoir ripple current, rms", "A")
    reservoir_ripple_rating_a: float | None = figure("reservoir ripple rating", "A")
    conduction_deg: float = figure("conduction per charge", "deg")
    inrush_a: float | None = figure("switch-on inrush peak", "A")
    pulses_hz: float | None = figure("signal the pulses were taken at", "Hz")
    rated_a: float | None = figure(default=None)
    #: Whether these figures' rail carries the transformer's findings (a split supply's
    #: positive rail: the two rails share one transformer).
    transformer_rail: bool = figure(default=True)
    winding_known: bool = figure(default=True)
    reservoir_to_hold_f: float | None = figure(
        "reservoir that would hold the load", "F", default=None
    )
    winding_to_hold_ohm: float | None = figure(
        "winding resistance that would hold it", "ohm", default=None
    )


def rectified_figures(context: SupplyContext) -> RectifiedFigures:
    """The figures of one rail of a rectified supply in the solved tree."""
    supply = context.supply
    tr = transformer(supply)
    rail = context.rail or supply.name
    loads = dict(context.rail_loads) or {rail: context.load}
    solved = solve_rails(tr, loads)
    worst = {name: worst_currents(s.low_line, s.high_line) for name, s in solved.items()}
    own = winding_figures(tr, worst, rail, loads, context.load)

    def optional(key: str) -> float | None:
        return None if own[key] is None else float(own[key])

    reservoir_hold = winding_hold = None
    if context.state.collapsed:
        target = HOLD_FRACTION * max(tr.source_peak(tr.lines[0], True) - tr.drop_v, 0.0)
        reservoir_hold = reservoir_for_trough(tr, context.load, target)
        winding_hold = winding_for_trough(tr, context.load, target)
    inrush = rectifier.inrush_peak(tr.source_peak(tr.lines[2], False), tr.drop_v, tr.winding_ohm)
    return RectifiedFigures(
        winding_resistance_ohm=tr.winding_ohm,
        open_circuit_vrms=tr.open_vrms if tr.winding_known else tr.secondary_vrms,
        transformer_regulation=tr.regulation,
        dc_load_a=float(own["dc_load_a"]),
        winding_rms_a=float(own["winding_rms_a"]),
        rms_per_dc=optional("rms_per_dc"),
        rating_current_a=float(own["rating_current_a"]),
        transformer_load_fraction=optional("transformer_load_fraction"),
        diode_peak_a=float(own["diode_peak_a"]),
        reservoir_ripple_a=float(own["reservoir_ripple_a"]),
        reservoir_ripple_rating_a=supply.optional("reservoir_ripple_rating"),
        conduction_deg=float(own["conduction_deg"]),
        inrush_a=float(inrush) if math.isfinite(float(inrush)) else None,
        pulses_hz=solved[rail].signal_hz,
        rated_a=tr.rated_a,
        transformer_rail=rail == supply.name,
        winding_known=tr.winding_known,
        reservoir_to_hold_f=reservoir_hold,
        winding_to_hold_ohm=winding_hold,
    )


def worst_currents(low: Currents, high: Currents) -> Currents:
    """The larger of low and high line: winding rms, diode peak, reservoir ripple current,
    and the conduction angle of the corner with the larger rms (element-wise: floats in the
    check, the spread's trials as arrays)."""
    hotter = np.asarray(high.winding_rms_a) >= np.asarray(low.winding_rms_a)
    return Currents(
        winding_rms_a=np.where(hotter, high.winding_rms_a, low.winding_rms_a),
        diode_peak_a=np.maximum(low.diode_peak_a, high.diode_peak_a),
        reservoir_ripple_a=np.maximum(low.reservoir_ripple_a, high.reservoir_ripple_a),
        conduction_deg=np.where(hotter, high.conduction_deg, low.conduction_deg),
    )


def winding_figures(
    tr: Transformer,
    worst: Mapping[str, Currents],
    rail: str,
    loads: Mapping[str, SupplyLoad],
    load: SupplyLoad,
) -> dict[str, Any]:
    """The winding's and reservoir's figures of ``rail`` from every rail's `worst_currents`
    (module notes): for a centre-tapped winding each half's rms, sqrt((I_+^2 + I_-^2)/2),
    against the mean of the two rails' dc loads; the rms the rating is judged by (the rule
    of thumb `RMS_PER_DC_AMP` times the dc load where no winding resistance is known) and
    its fraction of the rating. Element-wise over the spread's trials; None where the
    check's figure is null (no dc load, no rating)."""
    mine = worst[rail]
    rms = mine.winding_rms_a
    if tr.split:  # each half-winding carries one rail's pulses, then the other's
        rms = np.sqrt(sum(w.winding_rms_a**2 for w in worst.values()) / len(worst))
    dc = sum(ld.heaviest_a for ld in loads.values()) / len(loads)
    dc = load.heaviest_a if not tr.split else dc
    judged = rms if tr.winding_known else RMS_PER_DC_AMP * dc
    return {
        "dc_load_a": dc,
        "winding_rms_a": rms,
        "rms_per_dc": rms / dc if dc > 0.0 else None,
        "rating_current_a": judged,
        "transformer_load_fraction": None if tr.rated_a is None else judged / tr.rated_a,
        "diode_peak_a": mine.diode_peak_a,
        "reservoir_ripple_a": mine.reservoir_ripple_a,
        "conduction_deg": mine.conduction_deg,
    }
