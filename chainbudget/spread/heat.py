"""The output pair's heat per trial: the worst device dissipation and its junction
temperature, with the drawn emitter resistors as arrays.

Notes
-----
`chainbudget.stages.push_pull.heat.push_pull_dissipation` on arrays over the trial axis,
at the high-line rails (the nominal check's: no load at high line, which no drawn part
moves). Per device P = V_cc V_pk/(pi |Z|) - V_pk^2 cos(phi)/(4 |Z|) + V_cc I_q
(`outputmath.class_b_device_dissipation`), worst at V_pk = min(2 V_cc/(pi cos phi),
V_clip) with V_clip = (V_cc - V_drop) |Z|/|Z + R_E| (`outputmath.push_pull_clip_vpk`),
so R_E moves it where the clip sets the worst level; a reactive load is taken at the
band frequency where that dissipation is greatest, per trial. Junction: T_j = T_a + P
(theta_jc + theta_cs + theta_sa), through a shared heatsink carrying both devices, or
T_a + P theta_ja in free air (thermal Ohm's law, Horowitz & Hill 3rd ed. sec. 9.4).
Of the check's ``output.dissipation`` entries, those the drawn parts move: at the worst
sine, at the stage's own clip (which R_E moves) and the heatsink's (`_curve_figures`,
`_sink_figures`), and at the nominal level at the output (`nominal_heat_figures`, asked
by the output step, which works that level out). ``junction-over`` above
``max_junction``, ``junction-near`` within `JUNCTION_MARGIN_K` of it; ``heat-unknown``
without a thermal path (the same in every trial).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import cached_property
from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget import outputmath as om
from chainbudget.chainfile import Chain
from chainbudget.loudspeaker import is_reactive, load_impedance
from chainbudget.spread.flags import as_flag, flag_key
from chainbudget.stages.base import Environment, Stage
from chainbudget.stages.push_pull.crossover import pair_laws
from chainbudget.stages.push_pull.halves import halves
from chainbudget.stages.push_pull.heat import LOAD_POINTS_PER_DECADE
from chainbudget.stages.push_pull.thermal_loop import VBE_TEMPCO_V_PER_K
from chainbudget.thermal import junction_temperature
from chainbudget.thresholds import (
    JUNCTION_MARGIN_K,
    QUIESCENT_CLIMB_FACTOR,
    QUIESCENT_HIGH_FRACTION,
    QUIESCENT_LOW_FRACTION,
)

Figures = dict[str, NDArray[np.float64]]


def _trials(array: Any, trials: int) -> NDArray[np.float64]:
    flat = np.asarray(array).reshape(-1)
    return np.broadcast_to(flat, (trials,)).copy() if flat.size == 1 else flat.reshape(trials)


def heat_figures(
    chain: Chain,
    envs: Sequence[Environment],
    hot_envs: Sequence[Environment],
    trials: int,
) -> Figures:
    """Each push-pull stage's optimum quiescent current; for the one driving the load
    ``output.device_dissipation_w``, ``output.junction_degc`` (where a thermal path is
    given) and the ``output.dissipation`` entries the parts move; and the rules' flags,
    (T,). ``envs`` at low line, ``hot_envs`` at high line."""
    figures: Figures = {}
    for k, stage in enumerate(chain.stages):
        if stage.kind == "push_pull":
            figures.update(_optimum(stage, envs[k], trials))
    if not chain.stages or chain.stages[-1].kind != "push_pull":
        return figures
    stage, env = chain.stages[-1], hot_envs[-1]
    figures.update(_turn_on(stage, env, trials))
    worst = _worst_dissipation(chain, stage, env, trials)
    figures["output.device_dissipation_w"] = worst.hot_w
    figures.update(_curve_figures(chain, worst))
    junction = _junction(stage, chain.settings.ambient, worst.hot_w, worst.pair_w)
    where = stage.name
    if junction is None:
        figures[flag_key("note", "heat-unknown", where)] = as_flag(True, trials)
        return figures
    figures["output.junction_degc"] = junction
    figures.update(_sink_figures(stage, chain.settings.ambient, worst))
    top = stage.number("max_junction")
    over = junction > top
    figures[flag_key("error", "junction-over", where)] = as_flag(over, trials)
    figures[flag_key("warning", "junction-near", where)] = as_flag(
        ~over & (junction > top - JUNCTION_MARGIN_K), trials
    )
    figures.update(_thermal_loop(chain, stage, envs[-1], env, worst, trials))
    return figures


def _turn_on(stage: Stage, hot_env: Environment, trials: int) -> Figures:
    """``turn-on-thump``: a single-supply pair's output capacitor charging to the
    mid-point through the loudspeaker at switch-on
    (`chainbudget.stages.push_pull.drive.turn_on`, at high line)."""
    rails = hot_env.rails
    if stage.optional("output_cap") is None or rails is None:
        return {}
    thump = (np.asarray(rails.negative) == 0.0) & (np.asarray(rails.bias) > 0.0)
    return {flag_key("note", "turn-on-thump", stage.name): as_flag(thump, trials)}


def _optimum(stage: Stage, env: Environment, trials: int) -> Figures:
    """Oliver's optimum quiescent I_q R_E = V_T (B. M. Oliver, "Distortion in
    complementary-pair class-B amplifiers", Hewlett-Packard Journal, Feb. 1971) per trial,
    and ``quiescent-low`` / ``quiescent-high`` against it
    (`chainbudget.stages.push_pull.rules.crossover_rules`)."""
    r_e = _trials(np.asarray(stage.number("emitter_resistors"), dtype=float), trials)
    if not np.all(r_e > 0.0):
        return {}
    optimum = float(om.thermal_voltage(env.temperature_k)) / r_e
    i_q = stage.number("quiescent")
    low = i_q < QUIESCENT_LOW_FRACTION * optimum
    return {
        f"nodes.{stage.name}.optimum_quiescent_a": optimum,
        flag_key("warning", "quiescent-low", stage.name): as_flag(low, trials),
        flag_key("note", "quiescent-high", stage.name): as_flag(
            ~low & (i_q > QUIESCENT_HIGH_FRACTION * optimum), trials
        ),
    }


@dataclass(frozen=True)
class WorstHeat:
    """Per trial (T,): the hotter device's worst continuous dissipation (W), both devices'
    total there (W), that level (V peak), the load's impedance there (ohm), each half's
    rail from the output's bias point and the stage's own clip level into that load (V)."""

    hot_w: NDArray[np.float64]
    pair_w: NDArray[np.float64]
    vpk: NDArray[np.float64]
    z: NDArray[np.complex128]
    rails: tuple[NDArray[np.float64], NDArray[np.float64]]
    clip_vpk: NDArray[np.float64]
    i_q: float

    def devices(self, vpk: Any) -> NDArray[np.float64]:
        """Each device's dissipation at the level ``vpk`` into the load there, (2, T)."""
        return np.stack(
            [om.class_b_device_dissipation(v, vpk, self.z, self.i_q) for v in self.rails]
        )

    @cached_property
    def at_clip(self) -> NDArray[np.float64]:
        """`devices` at the stage's own clip (the clip figures' and its junction's)."""
        return self.devices(self.clip_vpk)


def _worst_dissipation(chain: Chain, stage: Stage, env: Environment, trials: int) -> WorstHeat:
    """The hotter device's worst continuous dissipation per trial (`WorstHeat`)."""
    upper, lower = halves(stage, env)
    i_q = stage.number("quiescent")
    r_e = _trials(np.asarray(stage.number("emitter_resistors"), dtype=float), trials)
    rails = [_trials(np.asarray(h.rail_v, dtype=float), trials) for h in (upper, lower)]
    drops = [_trials(np.asarray(h.drop_v, dtype=float), trials) for h in (upper, lower)]
    z = _worst_load(chain, rails, drops, r_e)
    if z is None:
        z = np.full(trials, chain.load.impedance * np.exp(1j * stage.number("load_phase")))
    phase = np.angle(z)
    clip = np.minimum(
        *(om.push_pull_clip_vpk(v, 0.0, d, r_e, z) for v, d in zip(rails, drops, strict=True))
    )
    candidates = [np.minimum(om.class_b_worst_vpk(v, phase), clip) for v in rails]
    values = np.stack(
        [
            om.class_b_device_dissipation(v, c, z, i_q)
            for v, c in zip(rails, candidates, strict=True)
        ]
    )
    hot = np.argmax(values, axis=0)  # the first half on a tie, as the check takes it
    rows = np.arange(trials)
    worst_vpk = np.stack(candidates)[hot, rows]
    pair = np.stack([om.class_b_device_dissipation(v, worst_vpk, z, i_q) for v in rails])
    return WorstHeat(
        values[hot, rows], pair.sum(axis=0), worst_vpk, z, (rails[0], rails[1]), clip, i_q
    )


DISSIPATION = "output.dissipation."


def nominal_heat_figures(
    chain: Chain, hot_envs: Sequence[Environment], output_nominal_vpk: Any, trials: int
) -> Figures:
    """The check's ``output.dissipation`` entries at the nominal level per trial, for the
    push-pull stage driving the load: the level ``nominal_vpk``, the nominal level at the
    output (``output_nominal_vpk``, (T,): the output step's, with the controls as set) no
    higher than the stage's own clip at high line; the hotter device there
    ``nominal_device_w`` and, with a thermal path, its junction ``nominal_junction_degc``
    (`push_pull_dissipation`'s formulas per trial, module notes)."""
    if not chain.stages or chain.stages[-1].kind != "push_pull":
        return {}
    stage = chain.stages[-1]
    worst = _worst_dissipation(chain, stage, hot_envs[-1], trials)
    level = np.minimum(_trials(np.asarray(output_nominal_vpk, dtype=float), trials), worst.clip_vpk)
    pair = worst.devices(level)
    figures: Figures = {
        DISSIPATION + "nominal_vpk": level,
        DISSIPATION + "nominal_device_w": pair.max(axis=0),
    }
    junction = _junction(stage, chain.settings.ambient, pair.max(axis=0), pair.sum(axis=0))
    if junction is not None:
        figures[DISSIPATION + "nominal_junction_degc"] = junction
    return figures


def _curve_figures(chain: Chain, worst: WorstHeat) -> Figures:
    """The check's ``output.dissipation`` entries the drawn parts move, per trial
    (`chainbudget.stages.push_pull.heat.push_pull_dissipation`, the same formulas on the
    trial axis): the worst sine's level ``worst_vpk``, the hotter device at the stage's own
    clip ``clip_device_w`` and the supply power there ``clip_supply_w`` (each rail V_cc
    times the rail's average current V_pk/(pi |Z|) and I_q), the worst into a resistor of
    |Z| ``resistive_worst_device_w`` (the clip the complex load's), and, where the load is
    reactive, the load's magnitude and phase at the frequency the heat is worst."""
    z, clip, rails, i_q = worst.z, worst.clip_vpk, worst.rails, worst.i_q
    at_clip = worst.at_clip
    supply = sum(v * (om.class_b_rail_average_current(clip, z) + i_q) for v in rails)
    resistive = np.abs(z)
    candidates = [np.minimum(om.class_b_worst_vpk(v, 0.0), clip) for v in rails]
    into_resistor = np.stack(
        [
            om.class_b_device_dissipation(v, c, resistive, i_q)
            for v, c in zip(rails, candidates, strict=True)
        ]
    )
    figures: Figures = {
        DISSIPATION + "worst_vpk": worst.vpk,
        DISSIPATION + "clip_device_w": at_clip.max(axis=0),
        DISSIPATION + "clip_supply_w": np.asarray(supply, dtype=float),
        DISSIPATION + "resistive_worst_device_w": into_resistor.max(axis=0),
    }
    if is_reactive(chain.load):
        figures[DISSIPATION + "load_abs_ohm"] = resistive
        figures[DISSIPATION + "load_phase_deg"] = np.degrees(np.angle(z))
    return figures


def _sink_figures(stage: Stage, ambient_degc: float, worst: WorstHeat) -> Figures:
    """Where a thermal path is given: the hotter junction at the stage's own clip
    ``clip_junction_degc`` and, on a heatsink, the heatsink's temperature at the worst sine
    ``heatsink_degc`` and the largest heatsink that keeps the junction at its maximum there
    ``max_heatsink_k_per_w``: (T_max - T_a)/P - theta_inner on a heatsink of its own,
    (T_max - T_a - P theta_inner)/(P_upper + P_lower) on a shared one (thermal Ohm's law,
    Horowitz & Hill 3rd ed. sec. 9.4; `push_pull_dissipation`'s formulas per trial)."""
    at_clip = worst.at_clip
    figures: Figures = {}
    junction = _junction(stage, ambient_degc, at_clip.max(axis=0), at_clip.sum(axis=0))
    if junction is not None:
        figures[DISSIPATION + "clip_junction_degc"] = junction
    theta_jc, heatsink = stage.optional("theta_jc"), stage.optional("heatsink")
    if theta_jc is None:
        return figures
    inner = theta_jc + stage.number("theta_cs")
    top = stage.number("max_junction")
    shared = bool(stage.values.get("heatsink_shared"))
    if np.all(worst.hot_w > 0.0):  # nothing dissipated: any heatsink will do (infinite)
        headroom = top - ambient_degc
        if shared:
            largest = (headroom - worst.hot_w * inner) / worst.pair_w
        else:
            largest = headroom / worst.hot_w - inner
        figures[DISSIPATION + "max_heatsink_k_per_w"] = largest
    if heatsink is not None:
        sink_w = worst.pair_w if shared else worst.hot_w
        figures[DISSIPATION + "heatsink_degc"] = junction_temperature(
            sink_w, heatsink, ambient_degc
        )
    return figures


def _worst_load(
    chain: Chain,
    rails: list[NDArray[np.float64]],
    drops: list[NDArray[np.float64]],
    r_e: NDArray[np.float64],
) -> NDArray[np.complex128] | None:
    """`chainbudget.stages.push_pull.heat._worst_load` per trial: the load's impedance at
    the band frequency where the hotter device's worst dissipation is greatest (T,); None
    for a plain load."""
    lo, hi = chain.settings.band
    f = np.geomspace(lo, hi, max(int(np.log10(hi / lo) * LOAD_POINTS_PER_DECADE), 2))
    z = load_impedance(chain.load, f)
    if np.allclose(z, chain.load.impedance, rtol=1e-12, atol=0.0):
        return None
    clip = np.min(
        [
            om.push_pull_clip_vpk(v[:, None], 0.0, d[:, None], r_e[:, None], z[None, :])
            for v, d in zip(rails, drops, strict=True)
        ],
        axis=0,
    )
    vcc = np.stack(rails)[:, :, None]
    worst_vpk = np.minimum(om.class_b_worst_vpk(vcc, np.angle(z)[None, None, :]), clip[None])
    device = om.class_b_device_dissipation(vcc, worst_vpk, z[None, None, :], 0.0)
    return np.asarray(z[np.argmax(device.max(axis=0), axis=1)], dtype=complex)


def _junction(
    stage: Stage,
    ambient_degc: float,
    hot_w: NDArray[np.float64],
    pair_w: NDArray[np.float64],
) -> NDArray[np.float64] | None:
    """The hotter junction at the worst level, degC (None: no thermal path given)."""
    theta_jc, theta_cs = stage.optional("theta_jc"), stage.number("theta_cs")
    heatsink, theta_ja = stage.optional("heatsink"), stage.optional("theta_ja")
    if heatsink is not None and theta_jc is not None:
        sink_w = pair_w if stage.values.get("heatsink_shared") else hot_w
        sink = junction_temperature(sink_w, heatsink, ambient_degc)
        return sink + hot_w * (theta_jc + theta_cs)
    if heatsink is None and theta_ja is not None:
        return junction_temperature(hot_w, theta_ja, ambient_degc)
    return None


def _thermal_loop(
    chain: Chain,
    stage: Stage,
    env: Environment,
    hot_env: Environment,
    worst: WorstHeat,
    trials: int,
) -> Figures:
    """``thermal-runaway`` and ``quiescent-climbs`` per trial: the bias's thermal loop of
    `chainbudget.stages.push_pull.thermal_loop.hot_bias` solved for every trial at once.

    Notes
    -----
    h(I) = m V_T ln(I/I_q) + (I - I_q) R - (1 - k)|TC| (a + b I), summed over the halves
    (the module's notes there), is concave with h(I_q) < 0 where the junctions warm. Where
    its slope R - (1 - k)|TC| b never turns negative the root lies below the first of the
    doubling ladder I_q 2^n where h >= 0; else below h's peak m V_T/((1 - k)|TC| b - R)
    when h reaches zero there, and otherwise the current runs away. Each root is found in
    its bracket by bisection on every trial together (a fixed 200 halvings: within a few
    ulps of the root), and the current runs away too where the junction at the root passes
    ``max_junction``.
    """
    heatsink, theta_jc = stage.optional("heatsink"), stage.optional("theta_jc")
    theta_cs, theta_ja = stage.number("theta_cs"), stage.optional("theta_ja")
    if heatsink is not None and theta_jc is not None:
        inner = theta_jc + theta_cs
        own, shared = (
            (inner, heatsink)
            if stage.values.get("heatsink_shared")
            else (
                inner + heatsink,
                0.0,
            )
        )
    elif heatsink is None and theta_ja is not None:
        own, shared = theta_ja, 0.0
    else:
        return {}
    tracking = stage.number("spreader_tracking")
    laws = pair_laws(stage, env)
    i_q = float(laws[0].i_q)
    v_t = float(om.thermal_voltage(env.temperature_k))
    vcc = np.stack(worst.rails)  # (2, T)
    z = worst.z
    # the check takes the load through its magnitude and phase in degrees
    z = np.abs(z) * np.exp(1j * np.radians(np.degrees(np.angle(z))))
    p_sig = np.stack([om.class_b_device_dissipation(v, worst.vpk, z, 0.0) for v in worst.rails])
    a = own * p_sig + shared * p_sig.sum(axis=0)
    b = own * vcc + shared * vcc.sum(axis=0)
    gain = (1.0 - tracking) * abs(VBE_TEMPCO_V_PER_K)
    r_sum = _trials(np.asarray(laws[0].r_ohm + laws[1].r_ohm, dtype=float), trials)
    m_sum = (laws[0].junctions + laws[1].junctions) * v_t
    a_sum, b_sum = a.sum(axis=0), b.sum(axis=0)

    def h(current: NDArray[np.float64]) -> NDArray[np.float64]:
        return np.asarray(
            m_sum * np.log(current / i_q)
            + (current - i_q) * r_sum
            - gain * (a_sum + b_sum * current)
        )

    at_rest = h(np.full(trials, i_q)) >= 0.0
    rising = r_sum - gain * b_sum >= 0.0
    ladder = i_q * 2.0 ** np.arange(1, 200)
    above = h(np.broadcast_to(ladder[:, None], (ladder.size, trials))) >= 0.0
    top_rising = ladder[np.argmax(above, axis=0)]
    with np.errstate(divide="ignore", invalid="ignore"):
        peak = m_sum / (gain * b_sum - r_sum)
    peak = np.where(rising, i_q, peak)
    reaches = ~rising & (peak > i_q) & (h(np.maximum(peak, i_q)) >= 0.0)
    top = np.where(rising, top_rising, np.where(reaches, peak, i_q))
    solvable = ~at_rest & (rising | reaches)
    low, high = np.full(trials, i_q), np.where(solvable, top, i_q)
    for _ in range(200):
        mid = 0.5 * (low + high)
        negative = h(mid) < 0.0
        low, high = np.where(negative, mid, low), np.where(negative, high, mid)
    found = np.where(at_rest, i_q, 0.5 * (low + high))
    rise = a + b * found
    runaway = ~(at_rest | solvable) | (
        chain.settings.ambient + rise.max(axis=0) > stage.number("max_junction")
    )
    climbs = ~runaway & (found > QUIESCENT_CLIMB_FACTOR * stage.number("quiescent"))
    return {
        flag_key("error", "thermal-runaway", stage.name): as_flag(runaway, trials),
        flag_key("note", "quiescent-climbs", stage.name): as_flag(climbs, trials),
    }
