"""Current each stage draws from its rails: at idle, at the nominal level and at clipping.

Notes
-----
A stage's quiescent current flows rail to rail: an op-amp's supply current per section, a
follower's bias current, a push-pull stage's quiescent current. The signal current a
class-B source (an op-amp output, a push-pull pair) sends into its load comes from the
positive rail on positive half-cycles and from the negative rail (or ground, single supply)
on negative ones; for a sine of peak I_pk the average from each rail is I_pk/pi, the mean of
a half-wave rectified sine (Boylestad & Nashelsky, Electronic Devices and Circuit Theory,
class B section: I_dc = (2/pi) I_pk for both halves together, from memory). For a push-pull
stage into Z_L that is V_pk/(pi |Z_L|) from each rail, 2 V_pk/(pi |Z_L|) from the two
together; a single-supply stage with an output capacitor draws V_pk/(pi |Z_L|) from its
one supply (the capacitor feeds the other half-cycle). A class-A follower's signal current
averages to zero over a cycle: it draws its bias current at every level short of clipping.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from chainbudget.budget.analysis import Analysis
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.stages import KINDS


@dataclass(frozen=True)
class StageCurrents:
    """Average current a stage draws from EACH of its rails, A.

    ``idle_a`` with no signal; ``nominal_a`` at the nominal source level; ``clip_a`` with a
    sine at the stage's own clip level (controls as set, reference frequency).
    """

    stage: str
    positive: str | None
    negative: str | None
    idle_a: float
    nominal_a: float
    clip_a: float


def stage_currents(analysis: Analysis) -> list[StageCurrents]:
    """Average current from each rail of every stage at idle, nominal level and its own clip
    level (see the module notes for the model of each kind)."""
    nominal = analysis.nominal
    found = []
    # A stage that clips limits the signal every later stage sees: the nominal source peak
    # that reaches stage k is capped by the clip levels of stage k and those before it.
    reaching = SQRT2 * analysis.chain.source.level
    for k, (sol, env) in enumerate(zip(nominal.stages, analysis.envs, strict=True)):
        stage = sol.stage
        idle = KINDS[stage.kind].supply_current(stage, env)
        clip = clip_source_peak(nominal, k)
        if clip is not None:
            reaching = min(reaching, float(clip[0][..., 0]))
        per_volt = sum(
            (float(np.abs(nominal.probe(k, probe)[..., 0])) for probe in sol.built.pulse_probes),
            0.0,
        )
        signal_nominal = per_volt * reaching / np.pi
        signal_clip = 0.0 if clip is None else per_volt * float(clip[0][..., 0]) / np.pi
        found.append(
            StageCurrents(
                stage=stage.name,
                positive=stage.values.get("positive"),
                negative=stage.values.get("negative"),
                idle_a=idle,
                nominal_a=idle + signal_nominal,
                clip_a=idle + signal_clip,
            )
        )
    return found
