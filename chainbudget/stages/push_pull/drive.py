"""What a push-pull stage asks of the stage driving it, at its own clip level, and whether
its output sits at DC across the load.

Notes
-----
The output stage's input current per volt of source is the current into its input node
(the driver's load admittance times the node voltage); at the source peak where the output
stage reaches its own limit, that is the peak base current I_E/(beta + 1) of the conducting
half (times a further 1/(beta_d + 1) behind a Darlington driver). The driver's need is its
own current-bounded limit's probe at that source peak; it falls short when it reaches that
limit at a lower source peak than the output stage reaches its own.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from chainbudget.kindfigures import KindFigures, figure
from chainbudget.stages.base import StageContext


@dataclass(frozen=True)
class HandOver(KindFigures):
    """The drive an output stage needs from the stage before it, at its own clip level (A, V).

    ``base_current_a`` is the output stage's peak input (base) current when it clips;
    ``needed_a`` the driver's peak current on its tightest current limit at that level,
    ``available_a`` that limit. ``shortfall``: the driver clips first, on that current limit.
    ``driver_remedy`` is what the driver's kind says would let it deliver more.
    """

    title = "drive from the stage before"
    json_place = "drive.handovers[]"

    stage: str
    driver: str
    driver_kind: str
    driver_remedy: str
    base_current_a: float = figure("peak base current at clip", "A", node_key="base_current_a")
    needed_a: float | None = figure("driver's peak current needed", "A")
    available_a: float | None = figure("driver's current limit", "A")
    driver_limit: str | None = figure("driver's current limit is its")
    driver_limited_by: str | None = figure("driver clips first on")
    output_clip_vpk: float = figure("output stage's clip level", "Vpk")
    driver_clip_output_vpk: float | None = figure("driver's clip, at the output", "Vpk")
    shortfall: bool = figure("driver falls short")


@dataclass(frozen=True)
class OutputBias(KindFigures):
    """Where the pair's output rests (V) and whether that DC reaches the load."""

    title = "output bias"

    bias_v: float = figure("output at rest", "V")
    dc_on_load: bool = figure("DC across the load")


def hand_over(context: StageContext) -> HandOver | None:
    """The drive the push-pull stage ``context.stage`` needs from the stage before it (None
    for a first stage, driven by the source)."""
    k = context.index
    if k == 0:
        return None
    own = context.source_clip(k)
    assert own is not None, "a push-pull stage always declares its swing limit"
    source_peak = own[0]
    gain_here = context.gain(k)
    needed = available = None
    driver_limit = None
    for limit in context.limits(k - 1):
        if not limit.bounds_current:
            continue
        current = context.probe(k - 1, limit.probe) * source_peak
        peak = float(np.asarray(limit.peak).flat[0])
        if needed is None or available is None or current / peak > needed / available:
            needed, available, driver_limit = current, peak, limit.name
    driver_clip = context.source_clip(k - 1)
    driver_limited_by = None if driver_clip is None else driver_clip[1].name
    shortfall = (
        driver_clip is not None and driver_clip[1].bounds_current and driver_clip[0] < source_peak
    )
    driver, driver_kind = context.neighbour(k - 1)
    return HandOver(
        stage=context.stage.name,
        driver=driver.name,
        driver_kind=driver.kind,
        driver_remedy=driver_kind.drive_remedy,
        base_current_a=context.input_current(k) * source_peak,
        needed_a=needed,
        available_a=available,
        driver_limit=driver_limit,
        driver_limited_by=driver_limited_by,
        output_clip_vpk=source_peak * gain_here,
        driver_clip_output_vpk=None if driver_clip is None else driver_clip[0] * gain_here,
        shortfall=bool(shortfall),
    )


def output_bias(context: StageContext, output_cap: float | None) -> OutputBias:
    """A single-supply pair rests at mid-rail: without an output capacitor that DC is across
    the load (the load returns to 0 V)."""
    rails = context.env.rails
    bias = 0.0 if rails is None else rails.bias
    return OutputBias(bias_v=bias, dc_on_load=output_cap is None and abs(bias) > 1e-9)


@dataclass(frozen=True)
class TurnOn(KindFigures):
    """What a single-supply stage's output capacitor dumps into the loudspeaker at switch-on
    (V, J, A)."""

    title = "switch-on"

    stage: str
    mid_v: float = figure("mid-point the capacitor charges to", "V")
    energy_j: float = figure("energy into the capacitor through the speaker", "J")
    peak_a: float = figure("peak current through the speaker", "A")


def turn_on(context: StageContext, output_cap: float | None) -> TurnOn | None:
    """At switch-on the mid-point rises to V_s/2 and the output capacitor charges to it
    through the loudspeaker (None: split rails, or no capacitor).

    Notes
    -----
    Charging a capacitor C to V through a resistance stores C V^2/2 and dissipates as much
    again in the resistance, whatever its value (the RC charging energy, Horowitz & Hill
    3rd ed. sec. 1.4, from memory); a mid-point that rises faster than the R_L C time
    constant drives a peak current of V/R_L through the voice coil (the nominal load), the
    thump. At high line, where the mid-point is highest.
    """
    rails = context.hot_env.rails
    if output_cap is None or rails is None or rails.negative != 0.0 or rails.bias <= 0.0:
        return None
    mid = rails.bias
    return TurnOn(
        stage=context.stage.name,
        mid_v=mid,
        energy_j=output_cap * mid * mid / 2.0,
        peak_a=mid / context.load_ohm,
    )
