"""Findings about the output end and the op-amps' drive, whatever the kinds: op-amp output
current, the output capacitor's corner, the stage that sets the maximum output, and the
loudness caution. (A kind's own power figures - a push-pull stage's heat and drive, a
follower's bias - have their rules in the kind's module.)"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from chainbudget.finding import Finding
from chainbudget.notation import amps, eng, hertz, ohms, sig, watts
from chainbudget.thresholds import DRIVE_MARGIN, LOUD_SPL_DB

if TYPE_CHECKING:
    from chainbudget.budget import Budget
    from chainbudget.budget.power import OpAmpDrive, OutputFigures


def rules(budget: Budget) -> list[Finding]:
    """Op-amp current, output capacitor, the stage that sets the maximum output, loudness."""
    found = [fi for node in budget.nodes for op in node.opamps for fi in _opamp(op)]
    if budget.output is not None:
        found += _output(budget, budget.output)
        found += _loudness(budget.output)
    return found


def _opamp(op: OpAmpDrive) -> list[Finding]:
    if op.peak_a > op.limit_a:
        return []  # the clip-max finding (limited by current) says it
    figures: dict[str, float | None] = {
        "peak_a": op.peak_a,
        "worst_a": op.worst_a,
        "limit_a": op.limit_a,
        "load_ohm": op.load_ohm,
    }
    if op.worst_a > op.limit_a:
        return [
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
        ]
    if op.worst_a > DRIVE_MARGIN * op.limit_a:
        return [
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
        ]
    return []


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
                f"the output capacitor and the {sig(out.load_ohm, 'ohm')} load make a high-pass "
                f"with its -3 dB corner at {sig(corner, 'Hz')}, inside the band from {low:g} Hz; "
                f"use at least {eng(needed, 'F')} for a corner at {low:g} Hz",
                {"corner_hz": corner, "needed_f": needed},
            )
        )
    if out.clip_stage is not None and out.power_stage:
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
                f"sets the maximum output: {watts(out.clip_power_w)} into "
                f"{sig(out.load_ohm, 'ohm')} "
                f"({sig(out.clip_vpk, 'V')} peak, limited by {out.clip_limit}){own}",
                {"clip_power_w": out.clip_power_w, "clip_vpk": out.clip_vpk},
            )
        )
    return found


def _loudness(out: OutputFigures) -> list[Finding]:
    """The loudness caution near the maximum SPL (or the nominal one where nothing limits
    the output)."""
    spl = out.max_spl_db
    if spl is not None and not math.isfinite(spl):
        spl = out.nominal_spl_db
    if spl is None or not math.isfinite(spl) or spl < LOUD_SPL_DB:
        return []
    return [
        Finding(
            "caution",
            "loud",
            None,
            f"Loudness: this amplifier can reach about {spl:.0f} dB SPL at 1 m. "
            f"Sustained listening above about {LOUD_SPL_DB:g} dB(A) damages hearing; keep "
            "listening levels well below the maximum, and follow local rules on noise at "
            "work and in public places.",
            {"spl_db": spl},
        )
    ]
