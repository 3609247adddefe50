"""Findings about the power end: drive at each hand-over, followers, output, heat."""

from __future__ import annotations

from chainbudget.budget import Budget
from chainbudget.budget.power import Dissipation, DriveBudget, OutputFigures
from chainbudget.findings.base import JUNCTION_MARGIN_K, THIN_HEADROOM_DB, Finding
from chainbudget.notation import amps, hertz, ohms, watts

# Drive current within this factor of the limit leaves a thin margin: 6 dB, the same
# allowance the contract asks of voltage headroom at max level (common practice, no source).
DRIVE_MARGIN = 0.5
# What a small-signal or driver transistor takes in free air without a heatsink (common
# practice, no source).
FOLLOWER_HOT_W = 0.5


def rules(budget: Budget) -> list[Finding]:
    """Drive shortfall and margin, follower cut-off, op-amp current, output capacitor, heat,
    and which stage sets the maximum output."""
    found: list[Finding] = []
    if budget.drive is not None:
        found += _drive(budget, budget.drive)
    if budget.output is not None:
        found += _output(budget, budget.output)
        if budget.output.dissipation is not None:
            found += _heat(budget.output.dissipation)
    return found


def _drive(budget: Budget, drive: DriveBudget) -> list[Finding]:
    found: list[Finding] = []
    short_drivers = {h.driver for h in drive.handovers if h.shortfall}
    for h in drive.handovers:
        figures = {
            "base_current_a": h.base_current_a,
            "needed_a": h.needed_a or 0.0,
            "available_a": h.available_a or 0.0,
            "output_clip_vpk": h.output_clip_vpk,
        }
        cure = (
            "raise its bias current (a smaller emitter resistor or a current sink)"
            if h.driver_kind == "follower"
            else "put an emitter follower between them"
        )
        if h.shortfall and h.available_a is not None:
            found.append(
                Finding(
                    "error",
                    "drive-shortfall",
                    h.driver,
                    f'runs out of current driving the output stage "{h.stage}": at the output '
                    f"stage's clip level of {h.output_clip_vpk:.3g} V peak it would have to "
                    f"deliver {amps(h.needed_a)} (the output stage's base current is "
                    f"{amps(h.base_current_a)}, I_pk/beta) but has {amps(h.available_a)}, so it "
                    f"clips first, at {h.driver_clip_output_vpk or 0.0:.3g} V peak at the "
                    f"output; {cure}, or use Darlington output devices",
                    {**figures, "driver_clip_output_vpk": h.driver_clip_output_vpk or 0.0},
                )
            )
        elif (
            h.needed_a is not None
            and h.available_a is not None
            and h.needed_a > DRIVE_MARGIN * h.available_a
        ):
            found.append(
                Finding(
                    "warning",
                    "drive-margin",
                    h.driver,
                    f'drives the output stage "{h.stage}" to its clip level with '
                    f"{amps(h.needed_a)} of its {amps(h.available_a)}: less than 6 dB of current "
                    f"in hand (the output stage's peak base current is "
                    f"{amps(h.base_current_a)}); {cure} for margin",
                    figures,
                )
            )
    for op in drive.opamps:
        if op.stage in short_drivers or op.peak_a > op.limit_a:
            continue  # the shortfall, or the clip-max finding (limited by current), says it
        figures = {
            "peak_a": op.peak_a,
            "worst_a": op.worst_a,
            "limit_a": op.limit_a,
            "load_ohm": op.load_ohm,
        }
        if op.worst_a > op.limit_a:
            found.append(
                Finding(
                    "warning",
                    "opamp-current",
                    op.stage,
                    f"at max_level the op-amp ({op.opamp}) must deliver {amps(op.worst_a)} peak "
                    f"at {hertz(op.worst_hz)} (worst over the band and the controls), over its "
                    f"{amps(op.limit_a)}; it clips on current there: raise the impedance it "
                    f"drives ({ohms(op.load_ohm)} at the reference, its feedback network "
                    "included) or buffer it",
                    {**figures, "frequency_hz": op.worst_hz},
                )
            )
        elif op.worst_a > DRIVE_MARGIN * op.limit_a:
            found.append(
                Finding(
                    "warning",
                    "opamp-current-margin",
                    op.stage,
                    f"at max_level the op-amp ({op.opamp}) delivers up to {amps(op.worst_a)} "
                    f"peak (at {hertz(op.worst_hz)}) of its {amps(op.limit_a)}: less than 6 dB "
                    f"in hand; raise the impedance it drives ({ohms(op.load_ohm)} at the "
                    "reference, feedback network included)",
                    figures,
                )
            )
    nodes = {n.stage: n for n in budget.nodes}
    for fo in drive.followers:
        if fo.dissipation_w >= FOLLOWER_HOT_W:
            found.append(
                Finding(
                    "warning",
                    "follower-hot",
                    fo.stage,
                    f"the follower's transistor dissipates {watts(fo.dissipation_w)} at idle and "
                    f"high line, more than the {watts(FOLLOWER_HOT_W)} a small transistor takes "
                    "in free air; give it a heatsink, a larger device, or less bias current",
                    {"dissipation_w": fo.dissipation_w},
                )
            )
    for fo in drive.followers:
        if fo.cut_off:
            found.append(
                Finding(
                    "error",
                    "follower-off",
                    fo.stage,
                    f"the follower has no working bias (emitter at {fo.emitter_v:.3g} V, "
                    f"{amps(fo.i_e_a)}): its base bias leaves no room to a rail; set base_bias "
                    "between the rails with room for V_BE and the swing",
                    {"i_e_a": fo.i_e_a, "emitter_v": fo.emitter_v},
                )
            )
            continue
        if fo.limited_by != "cut-off" or fo.stage in short_drivers:
            continue
        node = nodes.get(fo.stage)
        thin = (
            node is not None
            and node.headroom_db is not None
            and (node.headroom_db < THIN_HEADROOM_DB)
        )
        found.append(
            Finding(
                "warning" if thin else "note",
                "follower-cut-off",
                fo.stage,
                f"clips first on the bias side: with {amps(fo.i_e_a)} of bias current the "
                f"transistor cuts off at {fo.cut_off_vpk:.3g} V peak into its load "
                "(I_E times the emitter resistor in parallel with the load); raise the bias "
                "current or bias it with a current sink",
                {"i_e_a": fo.i_e_a, "cut_off_vpk": fo.cut_off_vpk},
            )
        )
    found += [
        Finding(
            "error",
            "dc-on-load",
            stage,
            "a single-supply output stage without an output capacitor puts half the supply "
            "across the load as DC; add output_cap in series with the load",
        )
        for stage in drive.dc_on_load
    ]
    return found


def _output(budget: Budget, out: OutputFigures) -> list[Finding]:
    found: list[Finding] = []
    low = budget.band_hz[0]
    corner = out.output_cap_corner_hz
    if corner is not None and out.output_cap_f is not None and corner > low:
        needed = out.output_cap_f * corner / low
        found.append(
            Finding(
                "warning",
                "output-cap-bass",
                out.stage,
                f"the output capacitor and the {out.load_ohm:g} ohm load make a high-pass "
                f"with its -3 dB corner at {corner:.3g} Hz, inside the band from {low:g} Hz; "
                f"use at least {needed * 1e6:.3g} uF for a corner at {low:g} Hz",
                {"corner_hz": corner, "needed_f": needed},
            )
        )
    if out.clip_stage is not None and out.dissipation is not None:
        own = ""
        if out.clip_stage != out.stage and out.output_stage_clip_power_w is not None:
            own = (
                f'; the output stage "{out.stage}" alone could give '
                f"{watts(out.output_stage_clip_power_w)}"
            )
        found.append(
            Finding(
                "note",
                "max-output",
                out.clip_stage,
                f"sets the maximum output: {watts(out.clip_power_w)} into {out.load_ohm:g} ohm "
                f"({out.clip_vpk:.3g} V peak, limited by {out.clip_limit}){own}",
                {"clip_power_w": out.clip_power_w, "clip_vpk": out.clip_vpk},
            )
        )
    return found


def _heat(d: Dissipation) -> list[Finding]:
    found = _thermal(d)
    if d.load_phase_deg != 0.0:
        found.append(
            Finding(
                "note",
                "reactive-load",
                d.stage,
                f"with the load's phase of {d.load_phase_deg:.0f} deg the worst dissipation "
                f"per device is {watts(d.worst_device_w)} against "
                f"{watts(d.resistive_worst_device_w)} into a resistor of the same "
                "impedance: the devices draw the same supply current while less of the "
                "power reaches the load",
                {"device_w": d.worst_device_w, "resistive_device_w": d.resistive_worst_device_w},
            )
        )
    return found


def _thermal(d: Dissipation) -> list[Finding]:
    figures = {"device_w": d.worst_device_w, "max_junction_degc": d.max_junction_degc}
    if d.junction_degc is None:
        sink = ""
        if d.max_heatsink_k_per_w is not None:
            sink = (
                f"; a heatsink of at most {d.max_heatsink_k_per_w:.3g} K/W per device keeps "
                f"the junction at {d.max_junction_degc:g} degC"
            )
        return [
            Finding(
                "note",
                "heat-unknown",
                d.stage,
                f"each output device dissipates up to {watts(d.worst_device_w)} (worst sine "
                f"level, {d.worst_vpk:.3g} V peak); give theta_jc and heatsink (or theta_ja) "
                f"to check its junction temperature{sink}",
                figures,
            )
        ]
    figures["junction_degc"] = d.junction_degc
    sink = ""
    if d.max_heatsink_k_per_w is not None:
        sink = (
            "; no heatsink can keep it there"
            if d.max_heatsink_k_per_w < 0.0
            else f"; a heatsink of at most {d.max_heatsink_k_per_w:.3g} K/W keeps it at "
            f"{d.max_junction_degc:g} degC"
        )
    if d.junction_degc > d.max_junction_degc:
        return [
            Finding(
                "error",
                "junction-over",
                d.stage,
                f"output device junction reaches {d.junction_degc:.0f} degC at the worst sine "
                f"level ({watts(d.worst_device_w)} per device, high-line rails), over its "
                f"{d.max_junction_degc:g} degC maximum{sink}, or lower the rails or the "
                "quiescent current",
                figures,
            )
        ]
    if d.junction_degc > d.max_junction_degc - JUNCTION_MARGIN_K:
        return [
            Finding(
                "warning",
                "junction-near",
                d.stage,
                f"output device junction reaches {d.junction_degc:.0f} degC at the worst sine "
                f"level ({watts(d.worst_device_w)} per device), within {JUNCTION_MARGIN_K:g} K "
                f"of its {d.max_junction_degc:g} degC maximum{sink}",
                figures,
            )
        ]
    return []
