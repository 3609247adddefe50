"""A follower's DC operating point: the bias every figure of the follower starts from."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from chainbudget.parts import Transistor
from chainbudget.stages.base import Environment, Stage
from chainbudget.stages.hybrid_pi import SmallSignal, as_number, small_signal

#: Name of the limit on the emitter current (the follower cuts off on the bias side).
CUT_OFF = "cut-off"


@dataclass(frozen=True)
class FollowerBias:
    """DC operating point of a follower (V, A) and its swing room from there.

    Attributes
    ----------
    polarity : float
        +1 for an NPN follower (collector to the positive rail, bias to the negative),
        -1 for a PNP one (mirrored).
    base_drive_v : float
        Quiescent voltage the base is driven or biased from (before the base resistors).
    emitter_v : float
        Quiescent emitter voltage.
    i_e : float
        Quiescent emitter current (the bias current), A; 0 when cut off.
    collector_room_v : float
        Swing available towards the collector rail before saturation, V.
    bias_room_v : float
        Swing available towards the bias rail (a current sink's compliance taken off), V.
    small_signal : SmallSignal
        Hybrid-pi parameters at this bias.
    """

    polarity: float
    base_drive_v: float
    emitter_v: float
    i_e: float
    collector_room_v: float
    bias_room_v: float
    small_signal: SmallSignal

    @property
    def cut_off(self) -> Any:
        """True where the follower has no working current or room (element-wise over a
        trial axis; a plain bool for one follower)."""
        off = (
            (np.asarray(self.i_e) <= 0.0)
            | (np.asarray(self.collector_room_v) <= 0.0)
            | (np.asarray(self.bias_room_v) <= 0.0)
        )
        return bool(off) if off.ndim == 0 else off


def follower_bias(stage: Stage, env: Environment, base_drive: float | None = None) -> FollowerBias:
    """The follower's DC operating point from its rails, base bias and bias circuit.

    Notes
    -----
    NPN, resistor bias (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 2.2.5, from
    memory): the base sits at V_B0 less the drop of its base current I_B = I_E/(beta + 1)
    through the DC resistance R_dc in the base lead, so V_E = V_B0 - V_BE - I_B R_dc and
    I_E = (V_E - V-)/R_E, i.e. I_E = (V_B0 - V_BE - V-)/(R_E + R_dc/(beta + 1)). With a
    current sink I_E is its current. Room before saturation V+ - V_CE(sat) - V_E; room
    towards the bias rail V_E - V- (less the sink's compliance). A PNP follower is the
    mirror image (collector to V-, bias to V+). R_dc is the base resistor, plus the bias
    resistor when an input capacitor blocks the DC path from the stage before. The base
    is driven from ``base_drive`` when given, else from where the chain's DC walk puts it
    (`_base_drive`). The DC current of the next stage's input is left out (it is
    AC-coupled or a base current, a few percent of I_E).
    """
    rails = env.rails
    assert rails is not None, "a follower always has rails (the loader sees to it)"
    part = transistor_part(stage, env)
    sign = 1.0 if part.polarity == "npn" else -1.0
    collector_rail, bias_rail = (
        (rails.positive, rails.negative) if sign > 0 else (rails.negative, rails.positive)
    )
    if base_drive is None:
        base_drive = _base_drive(stage, env)
    r_dc = stage.number("base_resistor")
    # `is not None`: the resistor may be an array over trials (chainbudget/spread)
    if stage.values.get("input_cap") is not None and stage.values.get("bias_resistor") is not None:
        r_dc = r_dc + stage.number("bias_resistor")  # never in place: it may be a drawn array
    beta = part.beta
    if stage.values["bias"] == "resistor":
        r_e = stage.number("emitter_resistor")
        i_e = (sign * (base_drive - bias_rail) - part.vbe) / (r_e + r_dc / (beta + 1.0))
        i_e = as_number(np.maximum(i_e, 0.0))  # element-wise over any trial axis
        compliance = 0.0
    else:
        i_e = stage.number("current")
        compliance = stage.number("compliance")
    emitter = base_drive - sign * (part.vbe + i_e / (beta + 1.0) * r_dc)
    return FollowerBias(
        polarity=sign,
        base_drive_v=base_drive,
        emitter_v=emitter,
        i_e=i_e,
        collector_room_v=sign * (collector_rail - emitter) - part.vce_sat,
        bias_room_v=sign * (emitter - bias_rail) - compliance,
        small_signal=small_signal(part, i_e, env.temperature_k),
    )


def _base_drive(stage: Stage, env: Environment) -> float:
    """Where the base is driven from, V: ``base_bias`` when the file gives it (through
    ``bias_resistor`` behind an input capacitor; DC-coupled, the designer's statement of the
    DC the stage before sits at). Otherwise DC-coupled, the DC the chain's DC walk finds at
    the input (`Environment.dc_input_v`), the stage before taken as a stiff DC source; else
    the default bias point (mid-rail single supply, 0 V split)."""
    rails = env.rails
    assert rails is not None
    walked = env.dc_input_v
    if stage.values.get("input_cap") is None and stage.optional("base_bias") is None:
        return rails.bias if walked is None else walked
    return rails.bias


def transistor_part(stage: Stage, env: Environment) -> Transistor:
    return env.transistors[str(stage.values["transistor"])]
