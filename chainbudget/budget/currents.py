"""Current each stage draws from its rails: at idle, at the nominal level and at clipping.

Notes
-----
A stage's quiescent current flows rail to rail. The signal current it sources into its
load and feedback network comes from the positive rail on positive half-cycles and from
the negative rail (or ground, single supply) on negative ones; for a sine of peak I_pk the
average from each rail is I_pk/pi (the mean of a half-wave rectified sine, any circuits
text, e.g. Boylestad & Nashelsky, Electronic Devices and Circuit Theory, class B section).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from chainbudget.budget.analysis import Analysis
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.stages import KINDS


@dataclass(frozen=True)
class StageCurrents:
    """Average current a stage draws from each of its rails, A."""

    stage: str
    positive: str | None
    negative: str | None
    idle_a: float
    nominal_a: float
    clip_a: float


def stage_currents(analysis: Analysis) -> list[StageCurrents]:
    """Average rail current of every stage at idle, nominal level and its own clip level."""
    nominal = analysis.nominal
    found = []
    for k, (sol, env) in enumerate(zip(nominal.stages, analysis.envs, strict=True)):
        stage = sol.stage
        kind = KINDS[stage.kind]
        idle = kind.supply_current(stage, env)
        signal_nominal = signal_clip = 0.0
        clip = clip_source_peak(nominal, k)
        for label, _part in sol.built.opamps:
            per_volt = float(np.abs(nominal.probe(k, f"{label}.current")[..., 0]))
            signal_nominal += per_volt * SQRT2 * analysis.chain.source.level / np.pi
            if clip is not None:
                signal_clip += per_volt * float(clip[0][..., 0]) / np.pi
        found.append(StageCurrents(
            stage=stage.name,
            positive=stage.values.get("positive"),
            negative=stage.values.get("negative"),
            idle_a=idle,
            nominal_a=idle + signal_nominal,
            clip_a=idle + signal_clip,
        ))
    return found
