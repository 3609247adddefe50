"""Rules that read a Budget and emit findings; each area of the budget has its own module.

Adding a rule set: write ``findings/<area>.py`` with ``rules(budget) -> list[Finding]`` and
list it in `RULES`.
"""

from __future__ import annotations

from collections.abc import Callable

from chainbudget.budget import Budget
from chainbudget.findings import dcbias, levels, noise, power, supplies
from chainbudget.findings.base import SEVERITIES, Finding

RULES: list[Callable[[Budget], list[Finding]]] = [
    levels.rules,
    noise.rules,
    supplies.rules,
    power.rules,
    dcbias.rules,
]


# A finding that names the cause makes these findings of the same stage echoes: a follower
# with no bias current "clips" at every level because it is off.
SUPERSEDES: dict[str, frozenset[str]] = {
    "follower-off": frozenset({"clip-nominal", "clip-max", "thin-headroom", "clip-worst-case"}),
    "dc-on-load": frozenset({"dc-into-load"}),
}


def findings(budget: Budget) -> list[Finding]:
    """Every finding of a budget, errors first, in chain order within a severity; echoes of
    a finding that names the cause (`SUPERSEDES`) left out."""
    found = [finding for rule in RULES for finding in rule(budget)]
    hidden = {(fi.stage, code) for fi in found for code in SUPERSEDES.get(fi.code, frozenset())}
    kept = [fi for fi in found if (fi.stage, fi.code) not in hidden]
    return sorted(kept, key=lambda fi: SEVERITIES.index(fi.severity))


__all__ = ["Finding", "RULES", "SEVERITIES", "findings"]
