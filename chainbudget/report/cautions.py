"""Safety cautions a report shows when the chain involves mains, hot parts or loud sound."""

from __future__ import annotations

import math
from collections.abc import Callable

from chainbudget.budget import Budget
from chainbudget.report import power

MAINS_CAUTION = (
    "Mains: this chain has a transformer-fed supply. Mains wiring, fusing, earthing and "
    "insulation are hazardous and are governed by local electrical codes; have that part "
    "built or checked by a licensed practitioner. These figures do not assess safety."
)


# A part dissipating about a watt in free air, or whose junction passes about 60 degC, is
# too hot to touch on its tab or heatsink (common practice, no source).
HOT_PART_W = 1.0
HOT_PART_DEGC = 60.0


def _mains(budget: Budget) -> list[str]:
    return [MAINS_CAUTION] if budget.has_mains else []


def _hot_regulators(budget: Budget) -> list[str]:
    found = []
    for s in budget.supplies:
        watts, junction = s.dissipation_w, s.junction_degc
        hot = (watts is not None and watts >= HOT_PART_W) or (
            junction is not None and junction >= HOT_PART_DEGC
        )
        if s.kind == "regulator" and hot:
            at = "" if junction is None else f", junction about {junction:.0f} degC"
            found.append(
                f'Hot parts: regulator "{s.name}" dissipates up to {watts or 0.0:.3g} W{at}; '
                "its tab and heatsink can burn on touch. Mount it where it cannot be touched "
                "or covered and check its temperature on the bench at high mains."
            )
    return found


def _hot_followers(budget: Budget) -> list[str]:
    drive = budget.drive
    if drive is None:
        return []
    return [
        f'Hot parts: follower "{fo.stage}" dissipates {fo.dissipation_w:.3g} W at idle; its '
        "transistor can burn on touch. Mount it where it cannot be touched and check its "
        "temperature on the bench."
        for fo in drive.followers
        if fo.dissipation_w >= HOT_PART_W
    ]


def _hot_output_block(budget: Budget) -> list[str]:
    out = budget.output
    last = budget.nodes[-1] if budget.nodes else None
    if out is None or last is None or last.kind != "block" or out.clip_power_w < HOT_PART_W:
        return []
    if not math.isfinite(out.clip_power_w):
        return [
            f'Hot parts: "{last.stage}" drives the load with no output limit given, so its '
            "heat cannot be estimated; power modules run hot enough to burn. Follow its "
            "maker's mounting and ventilation advice and check its temperature on the bench."
        ]
    return [
        f'Hot parts: "{last.stage}" delivers up to {out.clip_power_w:.3g} W into the load and '
        "turns a good part of that into heat; its heatsink can burn on touch. Follow its maker's "
        "mounting and ventilation advice and check its temperature on the bench."
    ]


# Each area adds a function here that returns the cautions its figures call for.
CAUTIONS: list[Callable[[Budget], list[str]]] = [
    _mains,
    power.cautions,
    _hot_regulators,
    _hot_followers,
    _hot_output_block,
]


def cautions(budget: Budget) -> list[str]:
    """Every caution the budget calls for, in a fixed order."""
    return [text for rule in CAUTIONS for text in rule(budget)]
