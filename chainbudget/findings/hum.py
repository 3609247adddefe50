"""Findings about the hum budget: hum over the noise floor, audible hum, the path that
dominates it and what would lower it."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from chainbudget.finding import Finding
from chainbudget.notation import decibels, eng
from chainbudget.thresholds import HUM_AUDIBLE_SPL_A_DB

if TYPE_CHECKING:
    from chainbudget.budget import Budget
    from chainbudget.budget.hum import HumBudget, HumPath


def rules(budget: Budget) -> list[Finding]:
    """Hum over the A-weighted noise floor, audible hum at 1 m, and, where either holds,
    the dominant path and each remedy with the hum expected after it."""
    hum = budget.hum
    if hum is None or hum.dominant is None:
        return []
    found = [*_over_noise(hum), *_audible(hum)]
    if not found:
        return []
    return [*found, _dominant(hum, hum.dominant), *_remedies(hum)]


def _where(path: HumPath) -> str:
    return f'"{path.stage}" {path.path} from "{path.supply}"'


def _over_noise(hum: HumBudget) -> list[Finding]:
    over = hum.hum_to_noise_db
    if over is None or over <= 0.0:
        return []
    return [
        Finding(
            "warning",
            "hum-over-noise",
            None,
            f"the hum at the output, {eng(hum.output_a_vrms, 'V')} A-weighted, is "
            f"{decibels(over, signed=False)} dB over the A-weighted noise floor: hum, not "
            "hiss, is what a listener hears in a quiet passage; see the hum remedies",
            {"hum_a_vrms": hum.output_a_vrms, "hum_to_noise_db": over},
        )
    ]


def _audible(hum: HumBudget) -> list[Finding]:
    spl = hum.spl_a_db
    if spl is None or spl <= HUM_AUDIBLE_SPL_A_DB:
        return []
    return [
        Finding(
            "warning",
            "hum-audible",
            None,
            f"the hum reaches {decibels(spl, signed=False)} dB(A) SPL at 1 m, over the "
            f"{HUM_AUDIBLE_SPL_A_DB:g} dB(A) at which a steady hum is heard in a quiet room "
            "(common practice); see the hum remedies",
            {"spl_a_db": spl, "limit_db": HUM_AUDIBLE_SPL_A_DB},
        )
    ]


def _dominant(hum: HumBudget, path: HumPath) -> Finding:
    total = hum.output_a_vrms
    share = 0.0 if total <= 0.0 else min((path.a_vrms / total) ** 2, 1.0)
    return Finding(
        "note",
        "hum-dominant-path",
        path.stage,
        f"the largest hum path is {_where(path)}: alone it gives "
        f"{eng(path.a_vrms, 'V')} A-weighted at the output, {100.0 * share:.0f} % of the "
        "hum power",
        {"a_vrms": path.a_vrms, "share": share},
    )


def _remedies(hum: HumBudget) -> list[Finding]:
    found = []
    for remedy in hum.remedies:
        gain = hum.output_a_vrms / remedy.expected_a_vrms if remedy.expected_a_vrms > 0 else None
        lower = (
            "" if gain is None else f", {decibels(20.0 * math.log10(gain), signed=False)} dB lower"
        )
        found.append(
            Finding(
                "note",
                "hum-remedy",
                remedy.stage,
                f"to lower the hum: {remedy.text}; expected hum "
                f"{eng(remedy.expected_a_vrms, 'V')} A-weighted at the output{lower}",
                {
                    "expected_vrms": remedy.expected_vrms,
                    "expected_a_vrms": remedy.expected_a_vrms,
                    **remedy.values,
                },
                supply=None if remedy.stage is not None else remedy.supply,
            )
        )
    return found
