"""Reading a Budget's kind-owned figures in tests: each kind's figures by their class."""

from __future__ import annotations

from chainbudget.budget import Budget
from chainbudget.budget.power import OpAmpDrive
from chainbudget.stages.follower import FollowerFigures
from chainbudget.stages.push_pull import Dissipation, HandOver


def cautions(budget: Budget) -> list[str]:
    """The texts of the budget's safety cautions (findings of severity ``caution``)."""
    return [fi.message for fi in budget.findings if fi.severity == "caution"]


def handovers(budget: Budget) -> list[HandOver]:
    return [own for node in budget.nodes for own in node.own if isinstance(own, HandOver)]


def followers(budget: Budget) -> list[FollowerFigures]:
    return [own for node in budget.nodes for own in node.own if isinstance(own, FollowerFigures)]


def dissipation(budget: Budget) -> Dissipation | None:
    """The heat of the push-pull stage driving the load, if the chain ends in one."""
    found = [own for own in budget.nodes[-1].own if isinstance(own, Dissipation)]
    return found[0] if found else None


def opamp_drives(budget: Budget) -> list[OpAmpDrive]:
    return [op for node in budget.nodes for op in node.opamps]


def load_block(name: str, rail: str, current: str) -> str:
    """A ``[[stage]]`` table: a black-box stage that draws a constant ``current`` from
    ``rail`` (unity gain, 10 kohm in, 100 ohm out), for loading a supply in a test chain."""
    return f"""
[[stage]]
name = "{name}"
kind = "block"
gain = 1
input_impedance = "10 kohm"
output_impedance = "100 ohm"
supply_current = "{current}"
positive = "{rail}"
"""
