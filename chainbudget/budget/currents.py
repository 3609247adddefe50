"""Current each stage draws from its rails: at idle, at the nominal level and at clipping.

Notes
-----
A stage's quiescent current flows rail to rail: an op-amp's supply current per section, a
follower's bias current, a push-pull stage's quiescent current. The signal current a
class-B source (an op-amp output, a push-pull pair) sends into its load comes from the
positive rail on positive half-cycles and from the negative rail (or ground, single supply)
on negative ones, in half-wave sine pulses (the load on the supply as a waveform: the
rectifier model charges its reservoir against them); for a sine of peak I_pk the average
from each rail is I_pk/pi, the mean of
a half-wave rectified sine (Boylestad & Nashelsky, Electronic Devices and Circuit Theory,
class B section: I_dc = (2/pi) I_pk for both halves together, from memory). For a push-pull
stage into Z_L that is V_pk/(pi |Z_L|) from each rail, 2 V_pk/(pi |Z_L|) from the two
together; a single-supply stage with an output capacitor draws V_pk/(pi |Z_L|) from its
one supply (the capacitor feeds the other half-cycle). A class-A follower's signal current
averages to zero over a cycle: it draws its bias current at every level short of clipping.

Over the spread's trials (chainbudget/spread: a chain whose drawn stage values are (T, 1)
arrays, solved with a leading trial axis) every current is a (T,) array, one per trial, by
the same arithmetic element-wise (the smaller clip peak reaching a stage by
``numpy.minimum``); a drawn part that moves a stage's quiescent current (a follower's bias
resistor, a push-pull stage's quiescent current) moves its idle current per trial. A
cascade without a trial axis gives floats, as the check has them.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from chainbudget.budget.analysis import Analysis
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.stages import KINDS
from chainbudget.stages.base import Environment


@dataclass(frozen=True)
class StageCurrents:
    """Average current a stage draws from EACH of its rails, A, and the peaks of the
    half-sine pulses its class-B part draws (included in the averages at peak/pi).

    ``idle_a`` with no signal; ``nominal_a`` at the nominal source level; ``clip_a`` with a
    sine at the stage's own clip level (controls as set, at ``signal_hz``: the reference
    frequency unless the figures were worked out at another tone).
    """

    stage: str
    positive: str | None
    negative: str | None
    # each current a float, or a (T,) array over the spread's trials (module notes)
    idle_a: float
    nominal_a: float
    clip_a: float
    nominal_pulse_a: float = 0.0
    clip_pulse_a: float = 0.0
    signal_hz: float | None = None


def stage_currents(analysis: Analysis) -> list[StageCurrents]:
    """Average current from each rail of every stage at idle, nominal level and its own clip
    level, at the reference frequency (see the module notes for the model of each kind)."""
    return currents_at(
        analysis.chain, analysis.nominal, analysis.envs, 0, analysis.chain.settings.reference
    )


def _trial_shape(cascade: Cascade) -> tuple[int, ...]:
    """The cascade's batch shape (its arrays' shape less the frequency axis): () for the
    check's, (T,) over the spread's trials."""
    return np.broadcast_shapes(
        np.shape(cascade.input_admittance)[:-1], *(np.shape(v)[:-1] for v in cascade.v_out)
    )


def _per_trial(value: Any, trials: tuple[int, ...]) -> Any:
    """A current as a float (no trial axis), or as a (T,) array: a quiescent current worked
    out from (T, 1) stage values loses its length-1 frequency axis."""
    array = np.asarray(value, dtype=float)
    if not trials:
        # a cascade no trial moves, on rails that do (a follower's bias from its rail)
        return float(array.reshape(-1)[0]) if array.size == 1 else array.reshape(-1)
    if array.ndim > len(trials):
        array = array[..., 0]
    return np.broadcast_to(array, trials).astype(float)


def currents_at(
    chain: Chain,
    cascade: Cascade,
    envs: Sequence[Environment],
    column: int,
    signal_hz: float,
) -> list[StageCurrents]:
    """`stage_currents` from a cascade solved with the controls as set, read at one column
    of its frequency axis (the tone ``signal_hz``): floats, or (T,) arrays where the
    cascade has a leading trial axis (module notes)."""
    trials = _trial_shape(cascade)
    found = []
    # A stage that clips limits the signal every later stage sees: the nominal source peak
    # that reaches stage k is capped by the clip levels of stage k and those before it.
    reaching: Any = SQRT2 * chain.source.level
    for k, (sol, env) in enumerate(zip(cascade.stages, envs, strict=True)):
        stage = sol.stage
        idle = _per_trial(KINDS[stage.kind].supply_current(stage, env), trials)
        clip = clip_source_peak(cascade, k)
        clip_peak = None if clip is None else _per_trial(clip[0][..., column], trials)
        if clip_peak is not None:
            reaching = _per_trial(np.minimum(reaching, clip_peak), trials)
        per_volt: Any = 0.0
        for probe in sol.built.pulse_probes:
            per_volt = per_volt + _per_trial(np.abs(cascade.probe(k, probe)[..., column]), trials)
        per_volt = _per_trial(per_volt, trials)
        pulse_nominal = per_volt * reaching
        pulse_clip = _per_trial(0.0 if clip_peak is None else per_volt * clip_peak, trials)
        found.append(
            StageCurrents(
                stage=stage.name,
                positive=stage.values.get("positive"),
                negative=stage.values.get("negative"),
                idle_a=idle,
                nominal_a=idle + pulse_nominal / np.pi,
                clip_a=idle + pulse_clip / np.pi,
                nominal_pulse_a=pulse_nominal,
                clip_pulse_a=pulse_clip,
                signal_hz=signal_hz,
            )
        )
    return found
