"""Safety cautions a report shows when the chain involves mains, hot parts or loud sound."""

from __future__ import annotations

from collections.abc import Callable

from chainbudget.budget import Budget
from chainbudget.report import power

MAINS_CAUTION = (
    "Mains: this chain has a transformer-fed supply. Mains wiring, fusing, earthing and "
    "insulation are hazardous and are governed by local electrical codes; have that part "
    "built or checked by a licensed practitioner. These figures do not assess safety."
)


def _mains(budget: Budget) -> list[str]:
    return [MAINS_CAUTION] if budget.has_mains else []


# Each area adds a function here that returns the cautions its figures call for.
CAUTIONS: list[Callable[[Budget], list[str]]] = [_mains, power.cautions]


def cautions(budget: Budget) -> list[str]:
    """Every caution the budget calls for, in a fixed order."""
    return [text for rule in CAUTIONS for text in rule(budget)]
