"""Findings about the DC operating point: outputs off their bias point, DC on pot tracks."""

from __future__ import annotations

from typing import TYPE_CHECKING

from chainbudget.finding import Finding
from chainbudget.notation import eng, sig
from chainbudget.thresholds import (
    DC_OFFSET_FRACTION,
    LINE_DC_NOTE_V,
    POT_DC_LIMIT_V,
    SPEAKER_DC_ERROR_V,
    SPEAKER_DC_WARN_V,
    SPEAKER_MAX_OHM,
)

if TYPE_CHECKING:
    from chainbudget.budget import Budget
    from chainbudget.budget.dcbias import DcPoint


def _output_text(point: DcPoint) -> str:
    return point.output_name


def _operating_point(point: DcPoint) -> list[Finding]:
    w, v = point.window, point.output_v
    if w is None or v is None:
        return []
    figures = {"dc_v": v, "bias_v": w.bias_v, "low_v": w.low_v, "high_v": w.high_v}
    source = "" if point.input_v is None else f"with its input at {sig(point.input_v, 'V')} DC, "
    if point.outside:
        edge = "bottom" if v < w.low_v else "top"
        return [
            Finding(
                "error",
                "dc-operating-point",
                point.stage,
                f"{source}{_output_text(point)} would sit at {sig(v, 'V')} DC, outside the "
                f"{sig(w.low_v, 'V')} to {sig(w.high_v, 'V')} it can reach (bias point "
                f"{sig(w.bias_v, 'V')}): "
                f"it sits at the {edge} of its range and passes no signal; {w.remedy}",
                figures,
            )
        ]
    fraction, loss, offset = point.offset_fraction, point.headroom_loss_db, point.offset_v
    if fraction is None or loss is None or offset is None or fraction <= DC_OFFSET_FRACTION:
        return []
    return [
        Finding(
            "warning",
            "dc-offset",
            point.stage,
            f"{source}{_output_text(point)} sits at {sig(v, 'V')} DC, {offset:+.3g} V from its "
            "bias "
            f"point {sig(w.bias_v, 'V')}: {100.0 * fraction:.0f} % of its swing room on that side "
            f"(more than {100.0 * DC_OFFSET_FRACTION:g} %), so it clips {loss:.1f} dB earlier "
            f"than the headroom figures say; {w.remedy}",
            {**figures, "offset_fraction": fraction, "headroom_loss_db": loss},
        )
    ]


def _loop_open(point: DcPoint) -> list[Finding]:
    if not point.loop_open_at_dc:
        return []
    return [
        Finding(
            "error",
            "loop-open-at-dc",
            point.stage,
            "its feedback is taken from beyond a series capacitor inside the loop, so at DC "
            "the op-amp has no feedback and its output runs to a rail; take the feedback from "
            "before the capacitor, or give the loop a DC path of its own",
            {},
        )
    ]


def _pot(point: DcPoint) -> list[Finding]:
    top = point.pot_top_v
    if top is None or abs(top) <= POT_DC_LIMIT_V:
        return []
    return [
        Finding(
            "warning",
            "pot-carries-dc",
            point.stage,
            f"the pot's track carries {sig(top, 'V')} DC from the stage before (more than "
            f"{POT_DC_LIMIT_V:g} V): it crackles as the wiper moves and the wiper hands DC "
            "steps on; add input_cap (a coupling capacitor ahead of the pot)",
            {"pot_top_v": top},
        )
    ]


def rules(budget: Budget) -> list[Finding]:
    """DC outside an output's reach (error), far off its bias point, DC on a pot track."""
    found: list[Finding] = []
    points = [node.dc for node in budget.nodes if node.dc is not None]
    for point in points:
        found += _loop_open(point)
        found += _operating_point(point)
        found += _pot(point)
    if points:
        found += _load(points[-1], budget.load_ohm)
        if budget.output is not None:
            found += _worst_offset(points[-1], budget.output.offset_v, budget.load_ohm)
    return found


def _worst_offset(point: DcPoint, offset: float | None, load_ohm: float) -> list[Finding]:
    """The worst-case DC across a loudspeaker, from the op-amps' offset voltages and bias
    currents on top of the DC as built, past the threshold (when the DC as built is not
    already past it: `dc-into-load` says that)."""
    nominal = point.node_v
    if offset is None or nominal is None or load_ohm >= SPEAKER_MAX_OHM:
        return []
    if abs(nominal) >= SPEAKER_DC_WARN_V or offset < SPEAKER_DC_WARN_V:
        return []
    return [
        Finding(
            "warning",
            "offset-at-load",
            point.stage,
            f"the DC across the loudspeaker can reach {offset * 1e3:.3g} mV at worst "
            f"({nominal * 1e3:+.3g} mV as built, the rest from the op-amps' offset voltage "
            "and bias currents through the DC gains and resistances of the stages that "
            f"couple it), over the {SPEAKER_DC_WARN_V * 1e3:g} mV a designer trims to "
            "(common practice); give the stage that sets it a DC gain of one (ground_cap "
            "in its ground leg), match the DC resistance at its two inputs, use a "
            "lower-offset op-amp, or add a DC servo",
            {"offset_v": offset, "dc_v": nominal, "load_ohm": load_ohm},
        )
    ]


def _load(point: DcPoint, load_ohm: float) -> list[Finding]:
    """DC the last stage puts on the load (the node is the load's own terminal)."""
    v = point.node_v
    if v is None:
        return []
    figures = {"dc_v": v, "load_ohm": load_ohm, "dc_current_a": v / load_ohm}
    if load_ohm < SPEAKER_MAX_OHM and abs(v) >= SPEAKER_DC_WARN_V:
        severity = "error" if abs(v) >= SPEAKER_DC_ERROR_V else "warning"
        return [
            Finding(
                severity,
                "dc-into-load",
                point.stage,
                f"puts {v:+.3g} V DC across the {sig(load_ohm, 'ohm')} loudspeaker "
                f"({eng(abs(v) / load_ohm, 'A')} through the voice coil); bring the output to "
                "0 V DC (re-bias the stage before it, add DC feedback) or couple the speaker "
                "through an output capacitor",
                figures,
            )
        ]
    if load_ohm >= SPEAKER_MAX_OHM and abs(v) >= LINE_DC_NOTE_V:
        return [
            Finding(
                "note",
                "dc-into-load",
                point.stage,
                f"the output sits at {v:+.3g} V DC: the input it feeds must be AC-coupled, or "
                "add a coupling capacitor at the output",
                figures,
            )
        ]
    return []
