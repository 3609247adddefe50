"""The bias's thermal loop: the quiescent current of a push-pull stage as its output devices
warm, solved as a fixed point against the thermal path, and thermal runaway.

Notes
-----
A silicon junction's V_BE falls by about 2 mV per kelvin at a fixed current (Horowitz &
Hill, The Art of Electronics, 3rd ed., sec. 2.3.2, from memory). The bias spreader holds
a voltage across the two halves' junction chains and emitter resistors; it follows a
fraction k (``spreader_tracking``) of the output devices' fall. With each half's law
u(I) = m V_T ln(I/I_q) + (I - I_q) R (`crossover.HalfLaw`, I_q the set quiescent current
with every junction at ambient), the current I at junction rises dT_u, dT_l solves

    h(I) = u_u(I) + u_l(I) - (1 - k) |TC| (dT_u(I) + dT_l(I)) = 0,

and dT is linear in I: the junction's rise from its device's dissipation P = P_sig + V_cc I
through the thermal path (thermal Ohm's law, Horowitz & Hill sec. 9.4: its own heatsink
theta_jc + theta_cs + theta_sa; a shared heatsink's theta_sa carrying both devices' power;
or theta_ja in free air). The drivers of a Darlington pair are taken at ambient. h is
concave, negative at I_q; its lowest root above I_q is the stable point (above it the
spreader gives less than the junctions need, so the current falls back). When h has no
root - its slope sum R - (1 - k)|TC| sum dT/dI is negative past its peak and the peak is
below zero - or the junction at the root passes ``max_junction``, the current runs away.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import outputmath as om
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.roots import bracketed_root
from chainbudget.stages.base import StageContext
from chainbudget.stages.push_pull.crossover import HalfLaw, pair_laws
from chainbudget.stages.push_pull.halves import halves
from chainbudget.stages.push_pull.heat import Dissipation

#: Temperature coefficient of a silicon junction's V_BE at a fixed current, V/K (about
#: -2 mV/K; Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 2.3.2, from memory).
VBE_TEMPCO_V_PER_K = -2.0e-3


@dataclass(frozen=True)
class ThermalPath:
    """How a device's junction rises with dissipation: dT = own_k_per_w P_own +
    shared_k_per_w (P_upper + P_lower) (K/W; the shared term a common heatsink's)."""

    own_k_per_w: float
    shared_k_per_w: float


@dataclass(frozen=True)
class HotBias:
    """The fixed point: quiescent current (A) and each half's junction rise (K), or the
    runaway; ``stable_r_ohm`` and ``stable_tracking`` are the sum of the halves' resistance
    and the tracking at which the loop is stable at any current (h's slope never negative;
    None where the junctions do not warm with the current)."""

    current_a: float | None
    rise_k: tuple[float, float] | None
    runaway: bool
    stable_r_ohm: float
    stable_tracking: float | None


def hot_bias(
    laws: tuple[HalfLaw, HalfLaw],
    rails_v: tuple[float, float],
    signal_w: tuple[float, float],
    path: ThermalPath,
    tracking: float,
    v_t: float,
    ambient_degc: float,
    max_junction_degc: float,
) -> HotBias:
    """Solve the bias's thermal loop (the module's notes) for the stage's two halves.

    Parameters
    ----------
    laws : the upper and lower halves' junction laws at ambient (`pair_laws`).
    rails_v : each half's rail from the output's bias point, V.
    signal_w : each device's dissipation from the signal alone, W (0 at idle).
    path : the thermal path.
    tracking : the fraction k of the output devices' V_BE fall the spreader follows.
    v_t : thermal voltage, V.
    """
    i_q = laws[0].i_q
    vcc = np.asarray(rails_v, dtype=float)
    p_sig = np.asarray(signal_w, dtype=float)
    # dT_h = own (P_sig,h + V_cc,h I) + shared (sum P_sig + sum V_cc I) = a_h + b_h I.
    a = path.own_k_per_w * p_sig + path.shared_k_per_w * p_sig.sum()
    b = path.own_k_per_w * vcc + path.shared_k_per_w * vcc.sum()
    gain = (1.0 - tracking) * abs(VBE_TEMPCO_V_PER_K)
    r_sum = laws[0].r_ohm + laws[1].r_ohm
    m_sum = (laws[0].junctions + laws[1].junctions) * v_t
    a_sum, b_sum = float(a.sum()), float(b.sum())

    def h(current: ArrayLike) -> NDArray[np.float64]:
        i = np.asarray(current, dtype=float)
        return np.asarray(m_sum * np.log(i / i_q) + (i - i_q) * r_sum - gain * (a_sum + b_sum * i))

    def root(top: float) -> float:
        return bracketed_root(lambda i: float(h(i)), i_q, top, xtol=1e-15, rtol=1e-12)

    stable_r = gain * b_sum
    stable_tracking = None
    if b_sum > 0.0:
        stable_tracking = max(0.0, 1.0 - r_sum / (abs(VBE_TEMPCO_V_PER_K) * b_sum))
    found: float | None = None
    if h(i_q) >= 0.0:
        found = i_q  # nothing to make up: full tracking, or no rise at all
    elif r_sum - gain * b_sum >= 0.0:
        # h rises without bound: the first of a doubling ladder where it is positive.
        ladder = i_q * 2.0 ** np.arange(1, 200)
        found = root(float(ladder[int(np.argmax(h(ladder) >= 0.0))]))
    else:
        peak = m_sum / (gain * b_sum - r_sum)
        if peak > i_q and h(peak) >= 0.0:
            found = root(peak)
    if found is None:
        return HotBias(None, None, True, stable_r, stable_tracking)
    rise = a + b * found
    runaway = bool(ambient_degc + rise.max() > max_junction_degc)
    return HotBias(
        None if runaway else found,
        (float(rise[0]), float(rise[1])),
        runaway,
        stable_r,
        stable_tracking,
    )


@dataclass(frozen=True)
class ThermalBias(KindFigures):
    """The quiescent current hot (A, degC): at the heatsink's running temperature, the
    stage working at its worst continuous sine level at high line (the heat figures'
    case), the spreader following ``spreader_tracking`` of the output devices' V_BE."""

    title = "bias thermal loop"

    stage: str
    spreader_tracking: float = figure("spreader tracking", "%")
    quiescent_a: float = figure("quiescent current, cold", "A")
    quiescent_hot_a: float | None = figure(
        "quiescent current, running hot", "A", output_key="quiescent_hot_a"
    )
    junction_hot_degc: float | None = figure("junction, running hot", "degC")
    thermal_runaway: bool = figure("thermal runaway", output_key="thermal_runaway")
    stable_r_ohm: float = figure()
    stable_tracking: float | None = figure()
    pair_r_ohm: float = figure()
    emitter_resistor_ohm: float = figure()
    heatsink_k_per_w: float | None = figure()


def thermal_path(dissipation: Dissipation) -> ThermalPath | None:
    """The stage's thermal path from its heat figures (None: not given)."""
    d = dissipation
    if d.heatsink_k_per_w is not None and d.theta_jc_k_per_w is not None:
        inner = d.theta_jc_k_per_w + d.theta_cs_k_per_w
        if d.heatsink_shared:
            return ThermalPath(inner, d.heatsink_k_per_w)
        return ThermalPath(inner + d.heatsink_k_per_w, 0.0)
    if d.heatsink_k_per_w is None and d.theta_ja_k_per_w is not None:
        return ThermalPath(d.theta_ja_k_per_w, 0.0)
    return None


def thermal_bias(context: StageContext, dissipation: Dissipation) -> ThermalBias:
    """The bias's thermal loop of the push-pull stage driving the load."""
    stage = context.stage
    tracking = stage.number("spreader_tracking")
    path = thermal_path(dissipation)
    found = None
    laws = pair_laws(stage, context.env)
    if path is not None:
        upper, lower = halves(stage, context.hot_env)
        rails = (upper.rail_v, lower.rail_v)
        z = dissipation.load_abs_ohm * np.exp(1j * np.radians(dissipation.load_phase_deg))
        signal = [
            float(om.class_b_device_dissipation(vcc, dissipation.worst_vpk, z, 0.0))
            for vcc in rails
        ]
        found = hot_bias(
            laws,
            rails,
            (signal[0], signal[1]),
            path,
            tracking,
            float(om.thermal_voltage(context.env.temperature_k)),
            context.ambient_degc,
            dissipation.max_junction_degc,
        )
    hot = None
    if found is not None and found.rise_k is not None and not found.runaway:
        hot = context.ambient_degc + max(found.rise_k)
    return ThermalBias(
        stage=stage.name,
        spreader_tracking=tracking,
        quiescent_a=stage.number("quiescent"),
        quiescent_hot_a=None if found is None else found.current_a,
        junction_hot_degc=hot,
        thermal_runaway=False if found is None else found.runaway,
        stable_r_ohm=0.0 if found is None else found.stable_r_ohm,
        stable_tracking=None if found is None else found.stable_tracking,
        pair_r_ohm=laws[0].r_ohm + laws[1].r_ohm,
        emitter_resistor_ohm=stage.number("emitter_resistors"),
        heatsink_k_per_w=dissipation.heatsink_k_per_w,
    )
