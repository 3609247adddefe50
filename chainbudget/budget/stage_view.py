"""The solved chain as one stage kind sees it (`chainbudget.stages.base.StageContext`).

Every figure is at the reference frequency with the controls as set, from the nominal
cascade; the environment at high line is worked out once per chain.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from chainbudget.budget.analysis import Analysis
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.cascade import Cascade
from chainbudget.stages import KINDS
from chainbudget.stages.base import Environment, Limit, Stage, StageKind


def at_reference(a: ArrayLike) -> float:
    """Magnitude at the reference frequency (index 0 of the frequency axis)."""
    return float(np.abs(np.asarray(a)[..., 0]))


@dataclass(frozen=True)
class CascadeView:
    """Stage ``index`` of the nominal cascade, with what its kind may ask of the chain."""

    cascade: Cascade
    stage: Stage
    index: int
    env: Environment
    hot_env: Environment
    ambient_degc: float
    load_ohm: float
    is_last: bool
    output_nominal_vpk: float

    def gain(self, index: int) -> float:
        return at_reference(self.cascade.v_out[index])

    def probe(self, index: int, name: str) -> float:
        return at_reference(self.cascade.probe(index, name))

    def input_current(self, index: int) -> float:
        if index == 0:
            raise ValueError("the first stage's input current is the source's")
        return at_reference(self.cascade.v_in[index] * self.cascade.load_admittance[index - 1])

    def limits(self, index: int) -> list[Limit]:
        return self.cascade.stages[index].built.limits

    def source_clip(self, index: int) -> tuple[float, Limit] | None:
        clip = clip_source_peak(self.cascade, index)
        if clip is None:
            return None
        peak, which = np.asarray(clip[0]), np.asarray(clip[1])
        peak = np.broadcast_to(peak, np.broadcast_shapes(peak.shape, which.shape))
        which = np.broadcast_to(which, peak.shape)
        return float(peak[..., 0]), self.limits(index)[int(which[..., 0])]

    def limit_source_peak(self, index: int, name: str) -> float | None:
        for limit in self.limits(index):
            if limit.name == name:
                with np.errstate(divide="ignore"):
                    peak = float(np.asarray(limit.peak).flat[0]) / self.probe(index, limit.probe)
                return peak if np.isfinite(peak) else None
        return None

    def neighbour(self, index: int) -> tuple[Stage, StageKind]:
        stage = self.cascade.stages[index].stage
        return stage, KINDS[stage.kind]


def stage_views(analysis: Analysis, hot_envs: tuple[Environment, ...]) -> list[CascadeView]:
    """One view per stage of the nominal cascade."""
    chain = analysis.chain
    nominal = analysis.nominal
    last = len(chain.stages) - 1
    output_vpk = SQRT2 * chain.source.level * at_reference(nominal.v_out[last])
    return [
        CascadeView(
            cascade=nominal,
            stage=stage,
            index=k,
            env=analysis.envs[k],
            hot_env=hot_envs[k],
            ambient_degc=chain.settings.ambient,
            load_ohm=chain.load.impedance,
            is_last=k == last,
            output_nominal_vpk=output_vpk,
        )
        for k, stage in enumerate(chain.stages)
    ]
