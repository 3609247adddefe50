"""The solved chain as one stage kind sees it (`chainbudget.stages.base.StageContext`).

Every figure is at the reference frequency with the controls as set, from the nominal
cascade; the environment at high line is worked out once per chain.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.budget.analysis import Analysis
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.budget.loops import LoopSolver
from chainbudget.cascade import Cascade
from chainbudget.loudspeaker import load_impedance
from chainbudget.network import Complex
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
    loops: LoopSolver

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

    @property
    def reference_hz(self) -> float:
        return self.loops.chain.settings.reference

    @property
    def band_hz(self) -> tuple[float, float]:
        return self.loops.chain.settings.band

    @property
    def last_index(self) -> int:
        return len(self.cascade.stages) - 1

    def input_gain(self, index: int) -> float:
        return at_reference(self.cascade.v_in[index])

    def output_impedance(self, index: int) -> complex:
        return complex(np.asarray(self.cascade.output_impedance[index])[..., 0])

    def source_impedance(self, index: int) -> complex:
        return complex(np.asarray(self.cascade.source_impedance[index])[..., 0])

    def loop_section(self, index: int) -> tuple[int, int]:
        section = self.loops.section(index)
        return section.first, section.last

    def stability_axis(self) -> NDArray[np.float64]:
        return self.loops.stability_axis()

    def return_ratio(
        self, index: int, frequency_hz: NDArray[np.float64], load_z: ArrayLike | None = None
    ) -> Complex | None:
        z = None if load_z is None else np.asarray(load_z, dtype=complex)
        return self.loops.return_ratio(index, np.asarray(frequency_hz, dtype=float), z)

    def load_impedance(self, frequency_hz: ArrayLike) -> Complex:
        return load_impedance(self.loops.chain.load, frequency_hz)

    def at_idle(self) -> CascadeView:
        return replace(self, cascade=self.loops.idle())


def stage_views(analysis: Analysis, hot_envs: tuple[Environment, ...]) -> list[CascadeView]:
    """One view per stage of the nominal cascade."""
    chain = analysis.chain
    nominal = analysis.nominal
    last = len(chain.stages) - 1
    loops = LoopSolver(chain, analysis.envs, chain.settings.reference)
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
            loops=loops,
        )
        for k, stage in enumerate(chain.stages)
    ]
