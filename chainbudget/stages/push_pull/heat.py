"""A push-pull output stage's heat: supply power, dissipation of each device and junction
temperature over output level, at the high-line rails."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from chainbudget import outputmath as om
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.stages.base import StageContext
from chainbudget.stages.push_pull.halves import halves
from chainbudget.thermal import junction_temperature, largest_sink_theta

#: Output levels at which the dissipation curve is tabulated, 0 to the clip level.
CURVE_POINTS = 21


@dataclass(frozen=True)
class Dissipation(KindFigures):
    """Supply power, device dissipation and heat of a push-pull stage (W, V, K/W, degC).

    Device figures are for the hotter of the two output devices; ``levels_vpk``,
    ``supply_w`` and ``device_w`` tabulate them from idle to the chain's clip level.
    ``load_abs_ohm`` and ``load_phase_deg`` are the load's impedance there (with a driver's
    Thiele-Small impedance or a cable capacitance, at the frequency in the band where the
    dissipation is worst). ``junction_degc`` is at the worst continuous sine level
    (``worst_vpk``); ``None`` when the thermal path is not given. ``max_heatsink_k_per_w``
    is the largest heatsink (theta_sa) that keeps the junction at ``max_junction_degc`` at
    that level.
    """

    title = "power and heat per output device"
    json_place = "output.dissipation"

    stage: str
    rail_upper_v: float = figure("high-line rail, upper half", "V")
    rail_lower_v: float = figure("high-line rail, lower half", "V")
    quiescent_a: float = figure("quiescent current", "A")
    load_phase_deg: float = figure("load phase", "deg")
    load_abs_ohm: float = figure()
    levels_vpk: tuple[float, ...] = figure()
    supply_w: tuple[float, ...] = figure()
    device_w: tuple[float, ...] = figure()
    nominal_vpk: float = figure("nominal level", "Vpk")
    idle_device_w: float = figure("device dissipation, idle", "W")
    nominal_device_w: float = figure("device dissipation, nominal", "W")
    clip_device_w: float = figure("device dissipation, clip", "W")
    worst_device_w: float = figure(
        "device dissipation, worst sine", "W", output_key="device_dissipation_w"
    )
    worst_vpk: float = figure("worst sine level", "Vpk")
    resistive_worst_device_w: float = figure("worst, into a resistor of |Z|", "W")
    clip_supply_w: float = figure("supply power at clip", "W")
    theta_jc_k_per_w: float | None = figure("junction to case", "K/W")
    theta_cs_k_per_w: float = figure("case to heatsink", "K/W")
    heatsink_k_per_w: float | None = figure("heatsink", "K/W")
    heatsink_shared: bool = figure("heatsink shared by both devices")
    theta_ja_k_per_w: float | None = figure("junction to ambient, free air", "K/W")
    idle_junction_degc: float | None = figure("junction, idle", "degC")
    nominal_junction_degc: float | None = figure("junction, nominal", "degC")
    junction_degc: float | None = figure("junction, worst sine", "degC", output_key="junction_degc")
    clip_junction_degc: float | None = figure("junction, clip", "degC")
    max_junction_degc: float = figure("junction maximum", "degC")
    max_heatsink_k_per_w: float | None = figure("largest heatsink for it", "K/W")
    heatsink_degc: float | None = figure("heatsink, worst sine", "degC")


def push_pull_dissipation(context: StageContext) -> Dissipation:
    """Supply power, dissipation of the hotter device and junction temperature of the
    push-pull stage k driving the load, from idle to its own clip level.

    Notes
    -----
    Of the push-pull stage driving the load. Worked at the high-line rails (each supply's
    ``high`` corner), the hottest case, up to
    the stage's own clip level there, V_clip = (V_cc - V_drop) |Z_L|/|Z_L + R_E|
    (`outputmath.push_pull_clip_vpk`): the stages before are assumed able to drive it that
    far, the conservative assumption.
    Each half works from its rail's distance V_cc to the output's bias point (V_s/2 on a
    single supply with an output capacitor). Per device, P = V_cc V_pk/(pi |Z|)
    - V_pk^2 cos(phi)/(4 |Z|) + V_cc I_q: half of `outputmath.class_b_total_dissipation`
    with that half's own V_cc, which for a symmetric stage is P_2Q/2 with P_2Q(max) =
    2 V_cc^2/(pi^2 R_L) at V_pk = 2 V_cc/pi (Boylestad & Nashelsky, class B section, from
    memory). The worst continuous level is min(2 V_cc/(pi cos phi), clip). Supply power
    sum over halves V_cc (V_pk/(pi |Z|) + I_q). Junction: T_j = T_a + P (theta_jc +
    theta_cs + theta_sa) on a heatsink of its own; on a shared heatsink the sink runs at
    T_a + theta_sa (P_upper + P_lower) and T_j = T_s + P (theta_jc + theta_cs); in free air
    T_a + P theta_ja (thermal Ohm's law, Horowitz & Hill 3rd ed. sec. 9.4).
    """
    stage = context.stage
    nominal_vpk = context.output_nominal_vpk
    upper, lower = halves(stage, context.hot_env)
    i_q = stage.number("quiescent")
    r_emitter = stage.number("emitter_resistors")
    rails = np.array([upper.rail_v, lower.rail_v])
    drops = np.array([upper.drop_v, lower.drop_v])
    z = _worst_load(context, rails, drops, r_emitter, i_q)
    if z is None:
        z = context.load_ohm * np.exp(1j * stage.number("load_phase"))
    phase = float(np.angle(z))
    clip = min(
        float(om.push_pull_clip_vpk(half.rail_v, 0.0, half.drop_v, r_emitter, z))
        for half in (upper, lower)
    )
    levels = np.linspace(0.0, clip, CURVE_POINTS)

    def device(vpk: NDArray[np.float64] | float, load: complex = z) -> NDArray[np.float64]:
        """Per-device dissipation, shape (2, ...) for the two halves."""
        v = np.asarray(vpk, float)
        return np.stack([om.class_b_device_dissipation(vcc, v, load, i_q) for vcc in rails])

    def worst(load: complex) -> tuple[float, float]:
        candidates = np.minimum(om.class_b_worst_vpk(rails, np.angle(load)), clip)
        values = [float(device(v, load)[h]) for h, v in enumerate(candidates)]
        hot = int(np.argmax(values))
        return values[hot], float(candidates[hot])

    curve = device(levels).max(axis=0)
    supply = sum(vcc * (om.class_b_rail_average_current(levels, z) + i_q) for vcc in rails)
    worst_w, worst_vpk = worst(z)
    resistive_w, _ = worst(complex(abs(z)))
    theta_jc, theta_cs = stage.optional("theta_jc"), stage.number("theta_cs")
    heatsink, theta_ja = stage.optional("heatsink"), stage.optional("theta_ja")
    shared = bool(stage.values.get("heatsink_shared"))
    max_junction = stage.number("max_junction")
    ambient = context.ambient_degc

    def both(vpk: float) -> tuple[float, float]:
        pair = device(vpk)
        return float(pair.max()), float(pair.sum())

    def junction(vpk: float) -> tuple[float | None, float | None]:
        """(junction, heatsink) temperatures at a level, degC."""
        hot, total = both(vpk)
        if heatsink is not None and theta_jc is not None:
            sink_power = total if shared else hot
            sink = float(junction_temperature(sink_power, heatsink, ambient))
            return float(junction_temperature(hot, theta_jc + theta_cs, sink)), sink
        if heatsink is None and theta_ja is not None:
            return float(junction_temperature(hot, theta_ja, ambient)), None
        return None, None

    max_sink = None
    if theta_jc is not None:
        hot, total = both(worst_vpk)
        inner = theta_jc + theta_cs
        if shared:
            max_sink = (
                float("inf") if total <= 0.0 else (max_junction - ambient - hot * inner) / total
            )
        else:
            max_sink = largest_sink_theta(hot, inner, ambient, max_junction)
    idle_j, _ = junction(0.0)
    nominal_j, _ = junction(min(nominal_vpk, clip))
    worst_j, sink_t = junction(worst_vpk)
    return Dissipation(
        stage=stage.name,
        rail_upper_v=upper.rail_v,
        rail_lower_v=lower.rail_v,
        quiescent_a=i_q,
        load_phase_deg=float(np.degrees(phase)),
        load_abs_ohm=float(abs(z)),
        levels_vpk=tuple(float(v) for v in levels),
        supply_w=tuple(float(p) for p in supply),
        device_w=tuple(float(p) for p in curve),
        nominal_vpk=min(nominal_vpk, clip),
        idle_device_w=both(0.0)[0],
        nominal_device_w=both(min(nominal_vpk, clip))[0],
        clip_device_w=both(clip)[0],
        worst_device_w=worst_w,
        worst_vpk=worst_vpk,
        resistive_worst_device_w=resistive_w,
        clip_supply_w=float(supply[-1]),
        theta_jc_k_per_w=theta_jc,
        theta_cs_k_per_w=theta_cs,
        heatsink_k_per_w=heatsink,
        heatsink_shared=shared,
        theta_ja_k_per_w=theta_ja,
        idle_junction_degc=idle_j,
        nominal_junction_degc=nominal_j,
        junction_degc=worst_j,
        clip_junction_degc=junction(clip)[0],
        max_junction_degc=max_junction,
        max_heatsink_k_per_w=max_sink,
        heatsink_degc=sink_t,
    )


#: Points a decade on which a reactive load's worst frequency for the heat is sought.
LOAD_POINTS_PER_DECADE = 40


def _worst_load(
    context: StageContext,
    rails: NDArray[np.float64],
    drops: NDArray[np.float64],
    r_emitter: float,
    i_q: float,
) -> complex | None:
    """The load's impedance at the frequency in the band where the hotter device's worst
    continuous dissipation is greatest, when the load is more than a resistor (a driver's
    Thiele-Small impedance, cable capacitance); None for a plain load (``load_phase`` then
    stands for its phase).

    Notes
    -----
    At each frequency the worst level min(2 V_cc/(pi cos phi), clip) and the dissipation
    there (the formulas of `push_pull_dissipation`), all frequencies at once.
    """
    lo, hi = context.band_hz
    f = np.geomspace(lo, hi, max(int(np.log10(hi / lo) * LOAD_POINTS_PER_DECADE), 2))
    z = context.load_impedance(f)
    if np.allclose(z, context.load_ohm, rtol=1e-12, atol=0.0):
        return None
    clip = np.min(
        [om.push_pull_clip_vpk(v, 0.0, d, r_emitter, z) for v, d in zip(rails, drops, strict=True)],
        axis=0,
    )
    worst_vpk = np.minimum(om.class_b_worst_vpk(rails[:, None], np.angle(z)), clip)
    device = om.class_b_device_dissipation(rails[:, None], worst_vpk, z, i_q)
    return complex(z[int(np.argmax(device.max(axis=0)))])
