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
from dataclasses import dataclass

from chainbudget import rectifier
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.supplies.base import SupplyContext
from chainbudget.supplies.rectified.circuit import (
    RailSolution,
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
    loads = dict(context.rail_loads) or {context.rail or supply.name: context.load}
    solved = solve_rails(tr, loads)
    mine = solved[context.rail or supply.name]
    rms, peak, ripple, conduction = _worst(mine)
    if tr.split:  # each half-winding carries one rail's pulses, then the other's
        rms = math.sqrt(sum(_worst(s)[0] ** 2 for s in solved.values()) / len(solved))
    dc = sum(load.heaviest_a for load in loads.values()) / len(loads)
    dc = context.load.heaviest_a if not tr.split else dc
    rated = tr.rated_a
    judged = rms if tr.winding_known else RMS_PER_DC_AMP * dc
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
        dc_load_a=dc,
        winding_rms_a=rms,
        rms_per_dc=rms / dc if dc > 0.0 else None,
        rating_current_a=judged,
        transformer_load_fraction=None if rated is None else judged / rated,
        diode_peak_a=peak,
        reservoir_ripple_a=ripple,
        reservoir_ripple_rating_a=supply.optional("reservoir_ripple_rating"),
        conduction_deg=conduction,
        inrush_a=float(inrush) if math.isfinite(float(inrush)) else None,
        pulses_hz=mine.signal_hz,
        rated_a=rated,
        transformer_rail=(context.rail or supply.name) == supply.name,
        winding_known=tr.winding_known,
        reservoir_to_hold_f=reservoir_hold,
        winding_to_hold_ohm=winding_hold,
    )


def _worst(solution: RailSolution) -> tuple[float, float, float, float]:
    """The larger of low and high line: winding rms, diode peak, reservoir ripple current,
    and the conduction angle of the corner with the larger rms."""
    low, high = solution.low_line, solution.high_line
    hotter = high if high.winding_rms_a >= low.winding_rms_a else low
    return (
        hotter.winding_rms_a,
        max(low.diode_peak_a, high.diode_peak_a),
        max(low.reservoir_ripple_a, high.reservoir_ripple_a),
        hotter.conduction_deg,
    )
