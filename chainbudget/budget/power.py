"""The power end: output figures, drive checks at each hand-over, dissipation and heat.

Reads the solved chain (`Analysis`) and returns plain numbers: the output power at clipping
and at the nominal level, SPL, damping factor and output-capacitor corner
(`OutputFigures`); each op-amp's peak output current at ``max_level`` (`OpAmpDrive`); the
drive an output stage needs from the stage before it (`HandOver`); each follower's bias
and cut-off (`FollowerFigures`); and an output stage's supply power, device dissipation
and junction temperature over output level (`Dissipation`).

Notes
-----
Output figures, sine into the load: P = V_pk^2 Re(1/Z_L)/2 (`outputmath.sine_power`),
SPL = sensitivity + 10 log10(P/1 W) (`outputmath.spl_at_1m`), damping factor
|Z_L|/|Z_out| (`outputmath.damping_factor`), an output capacitor's corner
1/(2 pi (Z_L + R_out) C) (`outputmath.highpass_corner`). Class-B/AB supply power and
device dissipation: Boylestad & Nashelsky, Electronic Devices and Circuit Theory, class B
section (from memory), as implemented and tested in `chainbudget.outputmath`. Junction
temperature: `chainbudget.thermal`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import outputmath as om
from chainbudget.budget.analysis import Analysis, environments
from chainbudget.budget.currents import StageCurrents, stage_currents
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.cascade import Cascade
from chainbudget.stages.base import opamp_part
from chainbudget.stages.follower import CUT_OFF, follower_bias
from chainbudget.stages.push_pull import halves
from chainbudget.thermal import junction_temperature, largest_sink_theta

#: Limits that bound a current (an op-amp's output current, a follower's bias current):
#: a stage that clips on one of these ran out of drive, not out of voltage.
CURRENT_LIMITS = ("current", CUT_OFF)
#: Output levels at which the dissipation curve is tabulated, 0 to the clip level.
CURVE_POINTS = 21


@dataclass(frozen=True)
class Dissipation:
    """Supply power, device dissipation and heat of a push-pull stage (W, V, K/W, degC).

    Device figures are for the hotter of the two output devices; ``levels_vpk``,
    ``supply_w`` and ``device_w`` tabulate them from idle to the chain's clip level.
    ``junction_degc`` is at the worst continuous sine level (``worst_vpk``); ``None`` when
    the thermal path is not given. ``max_heatsink_k_per_w`` is the largest heatsink
    (theta_sa) that keeps the junction at ``max_junction_degc`` at that level.
    """

    stage: str
    rail_upper_v: float
    rail_lower_v: float
    quiescent_a: float
    load_phase_deg: float
    levels_vpk: tuple[float, ...]
    supply_w: tuple[float, ...]
    device_w: tuple[float, ...]
    nominal_vpk: float
    idle_device_w: float
    nominal_device_w: float
    clip_device_w: float
    worst_device_w: float
    worst_vpk: float
    resistive_worst_device_w: float
    clip_supply_w: float
    theta_jc_k_per_w: float | None
    theta_cs_k_per_w: float
    heatsink_k_per_w: float | None
    heatsink_shared: bool
    theta_ja_k_per_w: float | None
    idle_junction_degc: float | None
    nominal_junction_degc: float | None
    junction_degc: float | None
    clip_junction_degc: float | None
    max_junction_degc: float
    max_heatsink_k_per_w: float | None
    heatsink_degc: float | None


@dataclass(frozen=True)
class OutputFigures:
    """What reaches the load (V peak, W, dB SPL at 1 m, ohm, Hz) at the reference frequency.

    ``clip_*``: the largest clean sine at the load with the volume fully up (if the chain
    has one) and the other controls as set; ``clip_stage`` is the stage that clips first
    there and so sets the maximum output. ``output_stage_clip_*``: what the stage driving
    the load could give on its own limit.
    """

    stage: str
    load_ohm: float
    clip_vpk: float
    clip_power_w: float
    clip_stage: str | None
    clip_limit: str | None
    output_stage_clip_vpk: float | None
    output_stage_clip_power_w: float | None
    nominal_vpk: float
    nominal_power_w: float
    max_spl_db: float | None
    nominal_spl_db: float | None
    zout_ohm: float
    damping_factor: float
    clip_current_a: float
    output_cap_f: float | None
    output_cap_corner_hz: float | None
    dissipation: Dissipation | None


@dataclass(frozen=True)
class OpAmpDrive:
    """An op-amp's peak output current at ``max_level`` against its rating, A.

    ``load_ohm`` is the magnitude of everything it drives (the next stage's input and its
    own feedback network) at the reference frequency.
    """

    stage: str
    opamp: str
    load_ohm: float
    peak_a: float
    worst_a: float
    worst_hz: float
    limit_a: float


@dataclass(frozen=True)
class HandOver:
    """The drive an output stage needs from the stage before it, at its own clip level.

    ``base_current_a`` is the output stage's peak input (base) current when it clips;
    ``needed_a`` the driver's peak current on its tightest current limit at that level,
    ``available_a`` that limit. ``shortfall``: the driver clips first, on that current limit.
    """

    stage: str
    driver: str
    driver_kind: str
    base_current_a: float
    needed_a: float | None
    available_a: float | None
    driver_limit: str | None
    driver_limited_by: str | None
    output_clip_vpk: float
    driver_clip_output_vpk: float | None
    shortfall: bool


@dataclass(frozen=True)
class FollowerFigures:
    """A follower's bias and swing (V, A), and its idle dissipation at high line (W)."""

    stage: str
    i_e_a: float
    emitter_v: float
    cut_off: bool
    limited_by: str | None
    cut_off_vpk: float
    dissipation_w: float


@dataclass(frozen=True)
class DriveBudget:
    """Drive checks: every op-amp node, every output-stage hand-over, every follower, and
    single-supply output stages left without an output capacitor; every stage's mean
    current from each rail (`chainbudget.budget.currents`)."""

    opamps: tuple[OpAmpDrive, ...]
    handovers: tuple[HandOver, ...]
    followers: tuple[FollowerFigures, ...]
    dc_on_load: tuple[str, ...]
    currents: tuple[StageCurrents, ...] = ()


def _at_reference(a: ArrayLike) -> float:
    return float(np.abs(np.asarray(a)[..., 0]))


def _source_clip(cas: Cascade, k: int, index: tuple[int, ...] = ()) -> tuple[float, int] | None:
    """Source peak at which stage k reaches its tightest limit, at the reference frequency
    (``index`` picks a point on the control axes), and that limit's index."""
    clip = clip_source_peak(cas, k)
    if clip is None:
        return None
    peak, which = np.asarray(clip[0]), np.asarray(clip[1])
    peak = np.broadcast_to(peak, np.broadcast_shapes(peak.shape, which.shape))
    which = np.broadcast_to(which, peak.shape)
    return float(peak[(*index, 0)]), int(which[(*index, 0)])


def _limit_source_peak(cas: Cascade, k: int, name: str) -> float | None:
    """Source peak at which limit ``name`` of stage k binds at the reference frequency."""
    for limit in cas.stages[k].built.limits:
        if limit.name == name:
            with np.errstate(divide="ignore"):
                return float(
                    np.asarray(limit.peak).flat[0] / _at_reference(cas.probe(k, limit.probe))
                )
    return None


def _max_output_cascade(analysis: Analysis) -> tuple[Cascade, tuple[int, ...]]:
    """The cascade with the volume fully up (the last rotation of the volume axis), or the
    nominal one when the chain has no volume control."""
    if analysis.volume_sweep is None:
        return analysis.nominal, ()
    return analysis.volume_sweep, (analysis.volume_rotations.size - 1,)


def output_figures(analysis: Analysis) -> OutputFigures:
    """Output power, SPL, damping factor and output-capacitor corner of the chain."""
    chain = analysis.chain
    z_load = chain.load.impedance
    nominal = analysis.nominal
    last = len(chain.stages) - 1
    cas, index = _max_output_cascade(analysis)
    gain_to_load = float(np.abs(np.asarray(cas.v_out[last])[(*index, 0)]))
    clips = [(k, _source_clip(cas, k, index)) for k in range(last + 1)]
    limited = [(k, c) for k, c in clips if c is not None]
    clip_stage = clip_limit = None
    clip_vpk = float("inf")
    output_stage_clip_vpk = None
    if limited:
        k_first, (peak, which) = min(limited, key=lambda item: item[1][0])
        clip_vpk = peak * gain_to_load
        clip_stage = chain.stages[k_first].name
        clip_limit = cas.stages[k_first].built.limits[which].what
        output_stage_clip_vpk = limited[-1][1][0] * gain_to_load
    nominal_vpk = SQRT2 * chain.source.level * _at_reference(nominal.v_out[last])
    clip_power = float(om.sine_power(clip_vpk, z_load))
    nominal_power = float(om.sine_power(nominal_vpk, z_load))
    sensitivity = chain.load.sensitivity
    z_out = complex(np.asarray(nominal.output_impedance[last])[..., 0])
    output_cap = chain.stages[last].optional("output_cap")
    corner = None
    if output_cap is not None:
        corner = float(om.highpass_corner(output_cap, z_load + z_out.real))
    dissipation = None
    if chain.stages[last].kind == "push_pull":
        dissipation = push_pull_dissipation(analysis, last, nominal_vpk)
    return OutputFigures(
        stage=chain.stages[last].name,
        load_ohm=z_load,
        clip_vpk=clip_vpk,
        clip_power_w=clip_power,
        clip_stage=clip_stage,
        clip_limit=clip_limit,
        output_stage_clip_vpk=output_stage_clip_vpk,
        output_stage_clip_power_w=None
        if output_stage_clip_vpk is None
        else float(om.sine_power(output_stage_clip_vpk, z_load)),
        nominal_vpk=nominal_vpk,
        nominal_power_w=nominal_power,
        max_spl_db=None if sensitivity is None else float(om.spl_at_1m(sensitivity, clip_power)),
        nominal_spl_db=None
        if sensitivity is None
        else float(om.spl_at_1m(sensitivity, nominal_power)),
        zout_ohm=abs(z_out),
        damping_factor=float(om.damping_factor(z_load, z_out)),
        clip_current_a=clip_vpk / z_load,
        output_cap_f=output_cap,
        output_cap_corner_hz=corner,
        dissipation=dissipation,
    )


def push_pull_dissipation(analysis: Analysis, k: int, nominal_vpk: float) -> Dissipation:
    """Supply power, dissipation of the hotter device and junction temperature of the
    push-pull stage k driving the load, from idle to its own clip level.

    Notes
    -----
    Worked at the high-line rails (each supply's ``high`` corner), the hottest case, up to
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
    chain = analysis.chain
    stage = chain.stages[k]
    env = environments(chain, "high", analysis.voltages)[k]
    upper, lower = halves(stage, env)
    i_q = stage.number("quiescent")
    phase = stage.number("load_phase")
    z = chain.load.impedance * np.exp(1j * phase)
    r_emitter = stage.number("emitter_resistors")
    clip = min(
        float(om.push_pull_clip_vpk(half.rail_v, 0.0, half.drop_v, r_emitter, z))
        for half in (upper, lower)
    )
    levels = np.linspace(0.0, clip, CURVE_POINTS)
    rails = np.array([upper.rail_v, lower.rail_v])

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
    resistive_w, _ = worst(complex(chain.load.impedance))
    theta_jc, theta_cs = stage.optional("theta_jc"), stage.number("theta_cs")
    heatsink, theta_ja = stage.optional("heatsink"), stage.optional("theta_ja")
    shared = bool(stage.values.get("heatsink_shared"))
    max_junction = stage.number("max_junction")
    ambient = chain.settings.ambient

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


def _voltage_clip_source_peak(cas: Cascade, k: int) -> NDArray[np.float64]:
    """Source peak at which stage k reaches its tightest limit other than a current limit,
    on the cascade's full shape (inf where it has none)."""
    shape = np.shape(cas.v_out[k])
    peak = np.full(shape, np.inf)
    with np.errstate(divide="ignore"):
        for limit in cas.stages[k].built.limits:
            if limit.name not in CURRENT_LIMITS:
                bound = np.asarray(limit.peak) / np.abs(cas.probe(k, limit.probe))
                peak = np.minimum(peak, np.broadcast_to(bound, shape))
    return peak


def opamp_drives(analysis: Analysis) -> list[OpAmpDrive]:
    """Peak output current of every op-amp at ``max_level``.

    ``peak_a``: at the reference frequency with the controls as set. ``worst_a``: the
    largest over the band and every swept control of the current at ``max_level`` or at the
    stage's voltage clip level (rails, slew), whichever is lower, i.e. the most the op-amp
    is asked to deliver before something else stops the signal.
    """
    chain = analysis.chain
    max_peak = SQRT2 * chain.source.max_level
    found = []
    for k, sol in enumerate(analysis.nominal.stages):
        for label, part in sol.built.opamps:
            probe = f"{label}.current"
            per_volt = _at_reference(analysis.nominal.probe(k, probe))
            swept = analysis.swept
            level = np.minimum(max_peak, _voltage_clip_source_peak(swept, k))
            asked = np.abs(np.broadcast_to(swept.probe(k, probe), level.shape)) * level
            band = asked[..., analysis.band_slice]
            at = np.unravel_index(int(np.argmax(band)), band.shape)
            v_out = _at_reference(analysis.nominal.v_out[k])
            found.append(
                OpAmpDrive(
                    stage=sol.stage.name,
                    opamp=opamp_part(sol.stage, analysis.envs[k]).name,
                    load_ohm=v_out / per_volt if per_volt > 0.0 else float("inf"),
                    peak_a=per_volt * max_peak,
                    worst_a=float(band[at]),
                    worst_hz=float(analysis.frequency[analysis.band_slice][at[-1]]),
                    limit_a=part.output_current,
                )
            )
    return found


def handovers(analysis: Analysis) -> list[HandOver]:
    """What each push-pull stage asks of the stage driving it, at its own clip level."""
    nominal = analysis.nominal
    chain = analysis.chain
    found = []
    for k, stage in enumerate(chain.stages):
        if stage.kind != "push_pull" or k == 0:
            continue
        own = _source_clip(nominal, k)
        assert own is not None, "a push-pull stage always declares its swing limit"
        source_peak = own[0]
        gain_here = _at_reference(nominal.v_out[k])
        base_current = _at_reference(nominal.v_in[k] * nominal.load_admittance[k - 1])
        driver = nominal.stages[k - 1]
        needed = available = None
        driver_limit = None
        for limit in driver.built.limits:
            if limit.name not in CURRENT_LIMITS:
                continue
            current = _at_reference(nominal.probe(k - 1, limit.probe)) * source_peak
            peak = float(np.asarray(limit.peak).flat[0])
            if needed is None or available is None or current / peak > needed / available:
                needed, available, driver_limit = current, peak, limit.name
        driver_clip = _source_clip(nominal, k - 1)
        driver_limited_by = (
            None if driver_clip is None else driver.built.limits[driver_clip[1]].name
        )
        shortfall = (
            driver_clip is not None
            and driver_limited_by in CURRENT_LIMITS
            and driver_clip[0] < source_peak
        )
        found.append(
            HandOver(
                stage=stage.name,
                driver=driver.stage.name,
                driver_kind=driver.stage.kind,
                base_current_a=base_current * source_peak,
                needed_a=needed,
                available_a=available,
                driver_limit=driver_limit,
                driver_limited_by=driver_limited_by,
                output_clip_vpk=source_peak * gain_here,
                driver_clip_output_vpk=None if driver_clip is None else driver_clip[0] * gain_here,
                shortfall=bool(shortfall),
            )
        )
    return found


def followers(analysis: Analysis) -> list[FollowerFigures]:
    """Bias, cut-off swing and dissipation of every follower."""
    nominal = analysis.nominal
    found = []
    # Heat at high line, where the collector-emitter voltage is largest.
    hot_envs = environments(analysis.chain, "high", analysis.voltages)
    for k, stage in enumerate(analysis.chain.stages):
        if stage.kind != "follower":
            continue
        env = analysis.envs[k]
        bias = follower_bias(stage, env)
        hot_env = hot_envs[k]
        hot = follower_bias(stage, hot_env)
        rails = hot_env.rails
        assert rails is not None
        collector = rails.positive if hot.polarity > 0 else rails.negative
        v_ce = abs(collector - hot.emitter_v)
        cut_source = _limit_source_peak(nominal, k, CUT_OFF)
        own = _source_clip(nominal, k)
        gain = _at_reference(nominal.v_out[k])
        found.append(
            FollowerFigures(
                stage=stage.name,
                i_e_a=bias.i_e,
                emitter_v=bias.emitter_v,
                cut_off=bias.cut_off,
                limited_by=None if own is None else nominal.stages[k].built.limits[own[1]].name,
                cut_off_vpk=float("inf") if cut_source is None else cut_source * gain,
                dissipation_w=v_ce * hot.small_signal.i_c,
            )
        )
    return found


def drive_budget(analysis: Analysis) -> DriveBudget:
    """All drive checks of the chain."""
    dc_on_load = tuple(
        stage.name
        for stage, env in zip(analysis.chain.stages, analysis.envs, strict=True)
        if stage.kind == "push_pull"
        and stage.values.get("output_cap") is None
        and env.rails is not None
        and abs(env.rails.bias) > 1e-9
    )
    return DriveBudget(
        opamps=tuple(opamp_drives(analysis)),
        handovers=tuple(handovers(analysis)),
        followers=tuple(followers(analysis)),
        dc_on_load=dc_on_load,
        currents=tuple(stage_currents(analysis)),
    )


__all__ = [
    "CURRENT_LIMITS",
    "Dissipation",
    "DriveBudget",
    "FollowerFigures",
    "HandOver",
    "OpAmpDrive",
    "OutputFigures",
    "drive_budget",
    "output_figures",
]
