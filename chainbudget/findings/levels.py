"""Findings about gain staging and headroom."""

from __future__ import annotations

import math
from dataclasses import replace
from typing import TYPE_CHECKING, Any

from chainbudget.finding import Finding
from chainbudget.thresholds import (
    BRIDGING_RATIO,
    GAIN_STAGE_MIN_DB,
    SAME_MARGIN_DB,
    THIN_HEADROOM_DB,
)

if TYPE_CHECKING:
    from chainbudget.budget import Budget
from chainbudget.notation import hertz, settings_text, sig


def _limit_text(what: str | None) -> str:
    return f" (limited by {what})" if what else ""


def rules(budget: Budget) -> list[Finding]:
    """Clipping, thin margins, clip order, volume rotation, supply range and DC paths."""
    found: list[Finding] = []
    volume_at = next(
        (k for k, n in enumerate(budget.nodes) if n.stage == budget.volume_stage), None
    )
    for k, node in enumerate(n.levels for n in budget.nodes):
        if node.headroom_db is None or node.nominal_headroom_db is None:
            continue
        figures: dict[str, float | None] = {
            "headroom_db": node.headroom_db,
            "clip_vpk": node.clip_vpk,
        }
        limit = _limit_text(node.limit_what)
        if node.limited_by_current:
            # Out of current, not of voltage: less gain only hides it, more rail does nothing.
            cure = (
                "it cannot deliver the current its load asks for: drive the load through a "
                "buffer (an emitter follower) or an output stage, or raise the impedance it "
                "drives"
            )
        else:
            cure = ""
        if node.nominal_headroom_db < 0.0:
            found.append(
                Finding(
                    "error",
                    "clip-nominal",
                    node.stage,
                    f"clips at the nominal level: {sig(node.level_vrms * 2**0.5, 'V')} peak "
                    "against "
                    f"a clip level of {sig(node.clip_vpk, 'V')}{limit}, "
                    f"{-node.nominal_headroom_db:.1f} dB over; "
                    + (cure or "lower this stage's gain or the gain before it, or raise its rails"),
                    {**figures, "nominal_headroom_db": node.nominal_headroom_db},
                )
            )
        elif node.headroom_db < 0.0:
            found.append(
                Finding(
                    "error",
                    "clip-max",
                    node.stage,
                    "clips at max_level with the controls as set: "
                    f"{sig(node.max_level_vrms * 2**0.5, 'V')} peak against "
                    f"{sig(node.clip_vpk, 'V')}"
                    f"{limit}, {-node.headroom_db:.1f} dB over; "
                    + (
                        cure
                        or f"take {-node.headroom_db:.1f} dB of gain out of this stage or those "
                        "before it, or raise its swing limit"
                    ),
                    figures,
                )
            )
        elif node.headroom_db < THIN_HEADROOM_DB:
            found.append(
                Finding(
                    "warning",
                    "thin-headroom",
                    node.stage,
                    f"only {node.headroom_db:.1f} dB of headroom at max_level{limit}; "
                    f"{THIN_HEADROOM_DB:g} dB is the usual margin: "
                    + (
                        cure
                        or f"trim {THIN_HEADROOM_DB - node.headroom_db:.1f} dB of gain ahead of it"
                    ),
                    figures,
                )
            )
        ahead_of_volume = volume_at is None or k < volume_at
        worst = node.worst
        if ahead_of_volume and worst is not None and worst.headroom_db < 0.0 <= node.headroom_db:
            settings = settings_text(worst.controls)
            tail = (
                "turning the volume down cannot save it"
                if volume_at is not None
                else ("no volume control follows to save it")
            )
            found.append(
                Finding(
                    "warning",
                    "clip-worst-case",
                    node.stage,
                    f"clips at max_level by {-worst.headroom_db:.1f} dB at "
                    f"{hertz(worst.frequency_hz)} with {settings or 'the controls as set'} "
                    f"(limited by {worst.limited_by}); {tail}: reduce the gain before it or the "
                    "tone boost range",
                    {"worst_headroom_db": worst.headroom_db, "frequency_hz": worst.frequency_hz},
                )
            )
    found = _merge_carried(found)
    found += _clip_order(budget)
    found += _volume_rotation(budget)
    worst_flagged = {fi.stage for fi in found if fi.code == "clip-worst-case"}
    found += [fi for fi in _boosts(budget) if fi.stage not in worst_flagged]
    found += _supply_ranges(budget)
    found += _source_loading(budget)
    found += [
        Finding(
            "error",
            "no-dc-path",
            f.stage,
            f"the op-amp's {f.pin} has no DC path to a defined potential: its bias current "
            "has nowhere to come from and the output drifts to a rail; add a bias "
            "resistor to the bias point (common practice)",
        )
        for f in budget.floating
    ]
    return found


# Level findings of consecutive stages whose headroom agrees to within SAME_MARGIN_DB share
# one cause (unity-gain stages after the one that sets the level, on the same rails).
_CARRIED = {
    "clip-nominal": "headroom_db",
    "clip-max": "headroom_db",
    "thin-headroom": "headroom_db",
    "clip-worst-case": "worst_headroom_db",
}


def _same_margin(a: Finding, b: Finding) -> bool:
    here, there = a.figures[_CARRIED[a.code]], b.figures[_CARRIED[b.code]]
    return here is not None and there is not None and abs(here - there) < SAME_MARGIN_DB


def _merge_carried(found: list[Finding]) -> list[Finding]:
    """One finding per run of stages that carry the same margin: the first stage's, naming
    the others, so the designer sees one cause rather than a list of echoes."""
    merged: list[Finding] = []
    followers: dict[int, list[str]] = {}
    for fi in found:
        last = next((j for j in range(len(merged) - 1, -1, -1) if merged[j].code == fi.code), None)
        if (
            fi.code in _CARRIED
            and last is not None
            and _same_margin(merged[last], fi)
            and fi.stage is not None
        ):
            followers.setdefault(last, []).append(fi.stage)
            continue
        merged.append(fi)
    for j, stages in followers.items():
        names = ", ".join(f'"{name}"' for name in stages)
        first = merged[j]
        merged[j] = replace(
            first,
            message=f"{first.message} (the same margin carries to the stages after it: {names})",
        )
    return merged


def _clip_order(budget: Budget) -> list[Finding]:
    if not budget.post_volume or budget.output_stage is None:
        return []
    output = next((s for s in budget.post_volume if s.stage == budget.output_stage), None)
    if output is None:
        return []
    found = []
    for other in budget.post_volume:
        margin = output.headroom_db - other.headroom_db
        if other.stage != output.stage and clips_before_output(
            output.headroom_db, other.headroom_db
        ):
            found.append(
                Finding(
                    "warning",
                    "clip-order",
                    other.stage,
                    f"as the volume rises this stage clips {margin:.1f} dB before the output stage "
                    f'"{output.stage}" (at {hertz(other.frequency_hz)}); move gain from before it '
                    "to after it, or give it more swing",
                    {"margin_db": margin},
                )
            )
    return found


def _volume_rotation(budget: Budget) -> list[Finding]:
    vc = budget.volume_clip
    if vc is None:
        return []
    if vc.rotation is None:
        return [
            Finding(
                "note",
                "volume-never-clips",
                vc.stage,
                f"even at full rotation the nominal level does not reach the clip level of "
                f'"{vc.output_stage}": the chain has gain to spare only at max_level; add gain if '
                "full output is wanted from nominal programme",
            )
        ]
    return [
        Finding(
            "note",
            "volume-clip-rotation",
            vc.stage,
            f'the nominal level drives "{vc.output_stage}" to clipping from rotation '
            f"{vc.rotation:.2f} of the volume control upwards",
            {"rotation": vc.rotation},
        )
    ]


def _boosts(budget: Budget) -> list[Finding]:
    return [
        Finding(
            "warning",
            "boost-over-headroom",
            b.stage,
            f"full boost raises the gain to {b.boost_db:+.1f} dB at {hertz(b.frequency_hz)}, more "
            f'than the {b.upstream_headroom_db:.1f} dB of headroom at "{b.upstream_stage}": '
            "at max_level a full-boost setting clips; reduce the boost range or the gain ahead",
            {"boost_db": b.boost_db, "upstream_headroom_db": b.upstream_headroom_db},
        )
        for b in budget.boosts
        if boost_clips(b.boost_db, b.upstream_headroom_db)
    ]


def clips_before_output(output_headroom_db: Any, headroom_db: Any) -> Any:
    """``clip-order``'s condition: a stage behind the volume whose least headroom with the
    volume fully up is below the output stage's clips first as the volume rises (floats,
    or arrays over the spread's trials)."""
    return output_headroom_db - headroom_db > 0.0


def boost_clips(boost_db: Any, upstream_headroom_db: Any) -> Any:
    """``boost-over-headroom``'s condition: a full-boost gain above the headroom of the
    limited stage before the tone stage (floats, or arrays over the spread's trials)."""
    return boost_db > upstream_headroom_db


def _supply_ranges(budget: Budget) -> list[Finding]:
    found = []
    for r in budget.supply_ranges:
        figures = {"low_total_v": r.low_total_v, "high_total_v": r.high_total_v}
        if r.min_v is not None and r.low_total_v < r.min_v:
            found.append(
                Finding(
                    "error",
                    "opamp-supply-low",
                    r.stage,
                    f'op-amp "{r.opamp}" runs from {sig(r.low_total_v, "V")} in total at low line, '
                    f"below its minimum of {sig(r.min_v, 'V')}; raise the supply or choose a "
                    "low-voltage op-amp",
                    {**figures, "min_v": r.min_v},
                )
            )
        if r.max_v is not None and r.high_total_v > r.max_v:
            found.append(
                Finding(
                    "error",
                    "opamp-supply-high",
                    r.stage,
                    f'op-amp "{r.opamp}" runs from {sig(r.high_total_v, "V")} in total at high '
                    "line "
                    f"(no load), above its maximum of {sig(r.max_v, 'V')}; lower the supply or "
                    "choose a higher-voltage op-amp",
                    {**figures, "max_v": r.max_v},
                )
            )
    return found


def _source_loading(budget: Budget) -> list[Finding]:
    """The source loaded by the chain's input below a bridging ratio: level lost before the
    first stage, named with the stage that loads it and, where a gain stage comes later,
    the placement that would cure it."""
    if budget.source_capacitance_f is not None or budget.source_inductance_h is not None:
        return _reactive_source_loading(budget)
    z_s, z_in = budget.source_impedance_ohm, budget.input_impedance_ohm
    # (a relative slack of 1e-9 so that an input of exactly ten times is not flagged for a
    # rounding residue of the solve)
    if z_s <= 0.0 or z_in * (1.0 + 1e-9) >= BRIDGING_RATIO * z_s or not budget.nodes:
        return []
    first = budget.nodes[0]
    gain_stage = next((n.stage for n in budget.nodes[1:] if n.gain_db > GAIN_STAGE_MIN_DB), None)
    placement = (
        f'; with "{gain_stage}" first the source would see its input instead'
        if gain_stage is not None and first.gain_db <= GAIN_STAGE_MIN_DB
        else ""
    )
    return [
        Finding(
            "warning",
            "source-loaded",
            first.stage,
            f"loads the {sig(z_s, 'ohm')} source with {sig(z_in, 'ohm')} at "
            f"{hertz(budget.reference_hz)}: {-budget.source_loss_db:.1f} dB of the signal is "
            "lost before the first stage (no stage's gain shows it) while the source's own "
            f"noise is not; a bridging input is at least {BRIDGING_RATIO:g} times the source "
            f"impedance: put a stage with a high input impedance (a buffer or the gain "
            f"stage) first{placement}",
            {
                "source_ohm": z_s,
                "input_ohm": z_in,
                "loss_db": budget.source_loss_db,
            },
        )
    ]


def _reactive_source_loading(budget: Budget) -> list[Finding]:
    """A piezo or pickup source loaded by the chain's input: the level lost at the worst
    frequency of the band beyond what a bridging input would cost there.

    Notes
    -----
    A series capacitance C into an input resistance R_in is a first-order high-pass,
    corner 1/(2 pi R_in C); a series inductance L a low-pass, corner R_in/(2 pi L) (first-
    order RC and RL dividers). The bridging rule (`BRIDGING_RATIO`) judged at the worst
    frequency: a loss of more than 20 log10(r/(r+1)) dB there is flagged.
    """
    loss, at = budget.source_loss_worst_db, budget.source_loss_worst_hz
    allowed = 20.0 * math.log10(BRIDGING_RATIO / (BRIDGING_RATIO + 1.0))
    if loss >= allowed or not budget.nodes:
        return []
    z_in = budget.input_impedance_ohm
    c, ind = budget.source_capacitance_f, budget.source_inductance_h
    low, high = budget.band_hz
    figures = {"loss_db": loss, "at_hz": at, "input_ohm": z_in}
    if c is not None and at < math.sqrt(low * high):
        corner = 1.0 / (2.0 * math.pi * z_in * c)
        needed = 1.0 / (2.0 * math.pi * low * c)
        cure = (
            f"its {sig(c, 'F')} and the input's {sig(z_in, 'ohm')} make a high-pass corner "
            f"near {hertz(corner)}; a capacitive (piezo) source wants an input resistance well "
            f"above 1/(2 pi f C) = {sig(needed, 'ohm')} at the band's low edge: a larger bias "
            "resistor or a bootstrapped input (common practice)"
        )
    elif ind is not None:
        corner = z_in / (2.0 * math.pi * ind)
        needed = 2.0 * math.pi * high * ind
        cure = (
            f"its {sig(ind, 'H')} and the input's {sig(z_in, 'ohm')} make a low-pass corner "
            f"near {hertz(corner)}; an inductive source (pickup) wants an input resistance "
            f"well above 2 pi f L = {sig(needed, 'ohm')} at the band's high edge"
        )
    else:
        corner, cure = at, "raise the input impedance"
    return [
        Finding(
            "warning",
            "source-loaded",
            budget.nodes[0].stage,
            f"loads the reactive source: {-loss:.1f} dB of its voltage is lost before the "
            f"first stage at {hertz(at)} (no stage's gain shows it); {cure}",
            {**figures, "corner_hz": corner},
        )
    ]
