"""An op-amp stage's feedback loop: its loop gain, unity-gain frequency and phase margin,
and for a loop round later stages (``feedback_from``) the closed-loop gain, output
impedance and damping factor, in conduction and at idle; the stability findings with a
remedy worked out from the E-series.

Conventions (docs/power.md, "Global feedback"): T is Bode's return ratio of the op-amp's
controlled source, in the chain as built (its source, its load, a loudspeaker's impedance
and the cable capacitance); the unity-gain frequency is the lowest f above the reference
where |T| = 1; the phase margin is 180 deg + arg T there, unwrapped from the reference.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.loopmath import crossings
from chainbudget.stages.base import Isolation, StageContext
from chainbudget.thresholds import (
    PHASE_MARGIN_ERROR_DEG,
    PHASE_MARGIN_TARGET_DEG,
    PHASE_MARGIN_WARN_DEG,
)


@dataclass(frozen=True)
class Remedy:
    """What the stage that drives the load would need to bring the margin to the target."""

    stage: str
    fields: tuple[tuple[str, str], ...]
    margin_deg: float

    def text(self) -> str:
        given = ", ".join(f'{key} = "{value}"' for key, value in self.fields)
        return f'give "{self.stage}" {given} (the phase margin is then {self.margin_deg:.0f} deg)'


@dataclass(frozen=True)
class OwnLoop(KindFigures):
    """The op-amp's loop through its own feedback network (dB, Hz, deg)."""

    title = "op-amp loop"

    stage: str
    loop_gain_db: float = figure("loop gain at the reference", "dB", node_key="loop_gain_db")
    unity_gain_hz: float | None = figure("unity loop gain", "Hz", node_key="unity_gain_hz")
    phase_margin_deg: float | None = figure("phase margin", "deg", node_key="phase_margin_deg")
    remedy: Remedy | None = figure()


@dataclass(frozen=True)
class GlobalLoop(KindFigures):
    """A loop round later stages (dB, Hz, deg, ohm): the contract's JSON ``loop`` entry.

    ``closed_loop_zout_ohm`` is the impedance at the sensed stage's output with the load
    removed; ``damping_factor`` the nominal load over it, where that stage drives the load.
    The ``idle_`` figures are the same with the output stage at idle (both halves
    conducting), and ``idle_gain_step_db`` the closed-loop gain there over that in
    conduction.
    """

    title = "feedback loop round later stages"
    json_place = "loop[]"

    stage: str
    inside: tuple[str, ...]
    sensed: str = figure("feedback senses the output of")
    closed_loop_gain_db: float = figure("closed-loop gain", "dB")
    loop_gain_db: float = figure("loop gain at the reference", "dB")
    unity_gain_hz: float | None = figure("unity loop gain", "Hz")
    phase_margin_deg: float | None = figure("phase margin", "deg")
    closed_loop_zout_ohm: float = figure("closed-loop output impedance", "ohm")
    damping_factor: float | None = figure("damping factor at the load")
    idle_closed_loop_zout_ohm: float = figure("closed-loop output impedance, idle", "ohm")
    idle_damping_factor: float | None = figure("damping factor, idle")
    idle_gain_step_db: float = figure("closed-loop gain step, idle over conduction", "dB")
    remedy: Remedy | None = figure()

    def as_json(self) -> dict[str, object]:
        data = super().as_json()
        data["remedy"] = None if self.remedy is None else self.remedy.text()
        return data


def loop_figures(context: StageContext) -> OwnLoop | GlobalLoop:
    """The loop of the op-amp stage ``context.stage``: its own, or the loop it heads."""
    k = context.index
    first, last = context.loop_section(k)
    axis = context.stability_axis()
    t = context.return_ratio(k, axis)
    assert t is not None, "an op-amp stage always has an op-amp"
    found = crossings(axis, t)
    margin = _finite(float(found.phase_margin_deg))
    unity = _finite(float(found.unity_gain_hz))
    remedy = None
    if margin is not None and margin < PHASE_MARGIN_WARN_DEG:
        remedy = _remedy(context, last, axis)
    if last == first:
        return OwnLoop(
            stage=context.stage.name,
            loop_gain_db=float(found.loop_gain_db),
            unity_gain_hz=unity,
            phase_margin_deg=margin,
            remedy=remedy,
        )
    idle = context.at_idle()
    before = context.input_gain(first)
    gain = context.gain(last) / before
    idle_gain = idle.gain(last) / idle.input_gain(first)
    zout = abs(context.output_impedance(last))
    idle_zout = abs(idle.output_impedance(last))
    drives_load = last == context.last_index
    return GlobalLoop(
        stage=context.stage.name,
        inside=tuple(context.neighbour(j)[0].name for j in range(first + 1, last + 1)),
        sensed=context.neighbour(last)[0].name,
        closed_loop_gain_db=_db(gain),
        loop_gain_db=float(found.loop_gain_db),
        unity_gain_hz=unity,
        phase_margin_deg=margin,
        closed_loop_zout_ohm=zout,
        damping_factor=context.load_ohm / zout if drives_load else None,
        idle_closed_loop_zout_ohm=idle_zout,
        idle_damping_factor=context.load_ohm / idle_zout if drives_load else None,
        idle_gain_step_db=_db(idle_gain / gain),
        remedy=remedy,
    )


def _remedy(context: StageContext, last: int, axis: np.ndarray) -> Remedy | None:
    """The smallest of the load-driving stage's isolation networks that brings the loop's
    margin to `PHASE_MARGIN_TARGET_DEG`, all tried in one solve (a batch axis)."""
    if last != context.last_index:
        return None
    stage, kind = context.neighbour(last)
    options: tuple[Isolation, ...] = kind.isolation_options(stage, context.load_ohm)
    if not options:
        return None
    z_load = context.load_impedance(axis)
    seen = np.stack([option.impedance(axis, z_load) for option in options])
    t = context.return_ratio(context.index, axis, seen)
    if t is None:
        return None
    margins = crossings(axis, t).phase_margin_deg
    good = np.flatnonzero(~np.isfinite(margins) | (margins >= PHASE_MARGIN_TARGET_DEG))
    if good.size == 0:
        return None
    best = int(good[0])
    chosen = float(margins[best]) if np.isfinite(margins[best]) else 90.0
    return Remedy(stage.name, tuple(options[best].fields.items()), chosen)


def loop_rules(own: OwnLoop | GlobalLoop) -> list[Finding]:
    """Phase margin under 45 deg (warning) or 20 deg (error), with the remedy."""
    margin = own.phase_margin_deg
    if margin is None or margin >= PHASE_MARGIN_WARN_DEG:
        return []
    severity = "error" if margin < PHASE_MARGIN_ERROR_DEG else "warning"
    which = f"the loop round {', '.join(own.inside)}" if isinstance(own, GlobalLoop) else "its loop"
    if own.remedy is not None:
        cure = (
            "keep the capacitive load out of the loop: " + own.remedy.text() + "; the "
            "feedback stays before that network"
        )
    else:
        cure = (
            "keep a capacitive load out of the loop (an isolating resistor or inductor with "
            "a Zobel network at the output, the feedback taken before them), or slow the "
            "loop: more closed-loop gain, a feedback capacitor, a better-compensated op-amp"
        )
    return [
        Finding(
            severity,
            "phase-margin",
            own.stage,
            f"{which} has {margin:.0f} deg of phase margin at its unity-gain frequency of "
            f"{(own.unity_gain_hz or 0.0) / 1e3:.3g} kHz (under {PHASE_MARGIN_WARN_DEG:g} deg "
            f"it rings, under {PHASE_MARGIN_ERROR_DEG:g} deg it is close to oscillating); "
            f"{cure}",
            {
                "phase_margin_deg": margin,
                "unity_gain_hz": own.unity_gain_hz,
                "remedy_margin_deg": None if own.remedy is None else own.remedy.margin_deg,
            },
        )
    ]


def _finite(value: float) -> float | None:
    return value if np.isfinite(value) else None


def _db(ratio: float) -> float:
    return float(20.0 * np.log10(ratio))
