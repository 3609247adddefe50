"""Rules that read a Budget and emit findings; each area of the budget has its own module.

Adding a rule set: write ``findings/<area>.py`` with ``rules(budget) -> list[Finding]`` and
list it in `RULES`.
"""

from __future__ import annotations

from collections.abc import Callable

from chainbudget.budget import Budget
from chainbudget.findings import levels, noise, power, supplies
from chainbudget.findings.base import SEVERITIES, Finding

RULES: list[Callable[[Budget], list[Finding]]] = [
    levels.rules,
    noise.rules,
    supplies.rules,
    power.rules,
]


def findings(budget: Budget) -> list[Finding]:
    """Every finding of a budget, errors first, in chain order within a severity."""
    found = [finding for rule in RULES for finding in rule(budget)]
    return sorted(found, key=lambda fi: SEVERITIES.index(fi.severity))


__all__ = ["Finding", "RULES", "SEVERITIES", "findings"]
