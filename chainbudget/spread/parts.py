"""The parts a spread draws: every toleranced field of the chain, its bounds, and whether the
batched models can take it as an array.

A part is one field of one stage or supply (``pre.feedback``), or the current gain of the
transistor a stage names (``buffer.transistor``, drawn per stage: two stages that name the
same part are two physical devices). Its bounds come from `chainbudget.tolerance`: a
fraction f gives [(1 - f) x, (1 + f) x]; beta a range of factors, drawn log-uniformly.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import cast

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.analysis import environments, frequency_axis
from chainbudget.budget.steps import with_value
from chainbudget.cascade import solve_stage
from chainbudget.chainfile import Chain
from chainbudget.network import SingularNetwork
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import Environment
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.tolerance import toleranced_fields


@dataclass(frozen=True)
class Part:
    """One drawn part: where it sits, its class, its nominal value and bounds (SI)."""

    table: str  # "stage" or "supply"
    index: int  # position in chain.stages or chain.supplies
    owner: str
    key: str
    part_class: str
    nominal: float
    low: float
    high: float

    @property
    def label(self) -> str:
        return f"{self.owner}.{self.key}" + (" beta" if self.is_beta else "")

    @property
    def is_beta(self) -> bool:
        return self.part_class == "beta"

    @property
    def tolerance_text(self) -> str:
        """The bound as the trade writes it."""
        if self.is_beta:
            return f"{self.low / self.nominal:.3g}x..{self.high / self.nominal:.3g}x"
        return f"{(self.high / self.nominal - 1.0) * 100.0:.3g} %"

    def at(self, position: NDArray[np.float64]) -> NDArray[np.float64]:
        """Values at positions 0..1 within the bounds: linear, beta in log (0.5: nominal
        only for a symmetric bound)."""
        if self.is_beta:
            return np.exp(np.log(self.low) + position * np.log(self.high / self.low))
        return self.low + position * (self.high - self.low)


@dataclass(frozen=True)
class HeldPart:
    """A toleranced field the spread leaves at its nominal value, and why."""

    label: str
    reason: str


def _bounds(nominal: float, bound: float | tuple[float, float]) -> tuple[float, float]:
    if isinstance(bound, tuple):
        return nominal * bound[0], nominal * bound[1]
    return nominal * (1.0 - bound), nominal * (1.0 + bound)


def with_beta(env: Environment, name: str, beta: object) -> Environment:
    """A stage's environment with its transistor ``name`` at ``beta`` (an array)."""
    part = env.transistors[name]
    # an array where the models read a float: they broadcast it (chainbudget/stages/hybrid_pi)
    drawn = replace(part, beta=cast(float, beta))
    return replace(env, transistors={**env.transistors, name: drawn})


def _stage_batches(chain: Chain, part: Part, envs: tuple[Environment, ...]) -> bool:
    """True when the stage's model takes the part as an array of trials: the stage built
    alone at the reference with its two bounds gives a two-port with a trial axis of 2."""
    k = part.index
    stage = chain.stages[k]
    ends = np.array([[part.low], [part.high]])
    env = envs[k]
    if part.is_beta:
        env = with_beta(env, str(stage.values[part.key]), ends)
        built_stage = stage
    else:
        built_stage = with_value(chain, k, part.key, ends).stages[k]
    positions = {c.key: c.position for c in STAGE_KINDS[stage.kind].controls(stage)}
    try:
        solved = solve_stage(built_stage, env, frequency_axis(chain)[:1], positions)
    except (TypeError, ValueError, SingularNetwork):  # scalar arithmetic on the value
        return False
    a = np.asarray(solved.two_port.a)
    return a.shape == (2, 1) and bool(np.all(np.isfinite(a)))


def chain_parts(chain: Chain) -> tuple[list[Part], list[HeldPart]]:
    """Every toleranced part of the chain: those drawn, and those held at nominal."""
    tol = chain.tolerances
    drawn: list[Part] = []
    held: list[HeldPart] = []
    envs = environments(chain)
    for k, stage in enumerate(chain.stages):
        kind = STAGE_KINDS[stage.kind]
        for key, cls in toleranced_fields(kind.fields).items():
            value = stage.values.get(key)
            if value is None:
                continue
            if cls == "beta":
                nominal = float(chain.transistors[str(value)].beta)
            else:
                nominal = float(value)
            if nominal == 0.0:
                continue  # a zero resistor is no part
            low, high = _bounds(nominal, tol.bound("stage", stage.name, key, cls))
            part = Part("stage", k, stage.name, key, cls, nominal, low, high)
            if low == high:
                continue
            if _stage_batches(chain, part, envs):
                drawn.append(part)
            else:
                held.append(
                    HeldPart(part.label, f"the {stage.kind} model takes it one value at a time")
                )
    for k, supply in enumerate(chain.supplies):
        supply_kind = SUPPLY_KINDS[supply.kind]
        spread = supply_kind.spread_fields(supply)
        for key, cls in toleranced_fields(supply_kind.fields).items():
            value = supply.values.get(key)
            if value is None:
                continue
            nominal = float(value)
            low, high = _bounds(nominal, tol.bound("supply", supply.name, key, cls))
            part = Part("supply", k, supply.name, key, cls, nominal, low, high)
            if low == high:
                continue
            if key in spread:
                drawn.append(part)
            else:
                held.append(
                    HeldPart(
                        part.label, f"the {supply.kind} supply's spread does not draw its {key}"
                    )
                )
    return drawn, held
