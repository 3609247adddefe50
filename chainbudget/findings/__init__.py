"""Rules that read a Budget and emit findings.

Generic rule sets, one module per area (``levels``, ``noise``, ``power``, ``dcbias``), each
a ``rules(budget) -> list[Finding]`` listed in `RULES`; and each kind's own rules, gathered
from the stage and supply registries (`kind_rules`). Rules read the budget through its
fields only: they import its types for annotations alone.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from typing import TYPE_CHECKING

from chainbudget.finding import SEVERITIES, Finding
from chainbudget.findings import dcbias, hum, levels, noise, power
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import NodeFacts
from chainbudget.supplies import KINDS as SUPPLY_KINDS

if TYPE_CHECKING:
    from chainbudget.budget import Budget


def kind_rules(budget: Budget) -> list[Finding]:
    """Every stage's and every supply's own rules, in chain order."""
    found: list[Finding] = []
    last = len(budget.nodes) - 1
    for node in budget.nodes:
        output = budget.output
        facts = NodeFacts(
            stage=node.stage,
            headroom_db=node.headroom_db,
            output_power_w=output.clip_power_w
            if output is not None and node.index == last
            else None,
            ambient_degc=budget.ambient_degc,
            band_low_hz=budget.band_hz[0],
        )
        found += STAGE_KINDS[node.kind].rules(node.own, facts)
    for supply in budget.supplies:
        these = SUPPLY_KINDS[supply.kind].rules(supply, budget.ambient_degc)
        found += [replace(fi, supply=supply.name) for fi in these]
    return found


RULES: list[Callable[[Budget], list[Finding]]] = [
    levels.rules,
    noise.rules,
    hum.rules,
    power.rules,
    dcbias.rules,
    kind_rules,
]


# A finding that names the cause makes these findings of the same stage echoes: a follower
# with no bias current "clips" at every level because it is off; a driver that cannot
# deliver an output stage's base current is said to be short of it, not also to clip on
# its current limit or bias.
SUPERSEDES: dict[str, frozenset[str]] = {
    "follower-off": frozenset({"clip-nominal", "clip-max", "thin-headroom", "clip-worst-case"}),
    "dc-on-load": frozenset({"dc-into-load"}),
    "drive-shortfall": frozenset(
        {"follower-cut-off", "opamp-current", "opamp-current-margin", "thin-headroom"}
    ),
}


def _chain_order(budget: Budget) -> Callable[[Finding], tuple[int, int]]:
    """Sort key: severity first, then the stage's place in the chain, then the supply's in
    the file; chain-wide findings last within their severity."""
    stages = {n.stage: k for k, n in enumerate(budget.nodes)}
    supplies = {s.name: len(stages) + k for k, s in enumerate(budget.supplies)}
    beyond = len(stages) + len(supplies)

    def key(fi: Finding) -> tuple[int, int]:
        if fi.stage is not None and fi.stage in stages:
            place = stages[fi.stage]
        elif fi.supply is not None:
            place = supplies.get(fi.supply, beyond)
        else:
            place = beyond
        return SEVERITIES.index(fi.severity), place

    return key


def findings(budget: Budget) -> list[Finding]:
    """Every finding of a budget: by severity (errors first), then in chain order (stages,
    then supplies, then chain-wide ones); echoes of a finding that names the cause
    (`SUPERSEDES`) left out."""
    found = [finding for rule in RULES for finding in rule(budget)]
    hidden = {(fi.stage, code) for fi in found for code in SUPERSEDES.get(fi.code, frozenset())}
    kept = [fi for fi in found if (fi.stage, fi.code) not in hidden]
    return sorted(kept, key=_chain_order(budget))


__all__ = ["RULES", "SEVERITIES", "Finding", "findings"]
