"""The output pair's heat per trial: the worst device dissipation and its junction
temperature, with the drawn emitter resistors as arrays.

Notes
-----
`chainbudget.stages.push_pull.heat.push_pull_dissipation` on arrays over the trial axis,
at the high-line rails (the nominal check's: the power tree is not settled again per
trial). Per device P = V_cc V_pk/(pi |Z|) - V_pk^2 cos(phi)/(4 |Z|) + V_cc I_q
(`outputmath.class_b_device_dissipation`), worst at V_pk = min(2 V_cc/(pi cos phi),
V_clip) with V_clip = (V_cc - V_drop) |Z|/|Z + R_E| (`outputmath.push_pull_clip_vpk`),
so R_E moves it where the clip sets the worst level; a reactive load is taken at the
band frequency where that dissipation is greatest, per trial. Junction: T_j = T_a + P
(theta_jc + theta_cs + theta_sa), through a shared heatsink carrying both devices, or
T_a + P theta_ja in free air (thermal Ohm's law, Horowitz & Hill 3rd ed. sec. 9.4).
``junction-over`` above ``max_junction``, ``junction-near`` within `JUNCTION_MARGIN_K`
of it; ``heat-unknown`` without a thermal path (the same in every trial).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget import outputmath as om
from chainbudget.chainfile import Chain
from chainbudget.loudspeaker import load_impedance
from chainbudget.spread.flags import as_flag, flag_key
from chainbudget.stages.base import Environment, Stage
from chainbudget.stages.push_pull.halves import halves
from chainbudget.stages.push_pull.heat import LOAD_POINTS_PER_DECADE
from chainbudget.thermal import junction_temperature
from chainbudget.thresholds import JUNCTION_MARGIN_K

Figures = dict[str, NDArray[np.float64]]


def _trials(array: Any, trials: int) -> NDArray[np.float64]:
    flat = np.asarray(array).reshape(-1)
    return np.broadcast_to(flat, (trials,)).copy() if flat.size == 1 else flat.reshape(trials)


def heat_figures(chain: Chain, hot_envs: tuple[Environment, ...], trials: int) -> Figures:
    """``output.device_dissipation_w`` and ``output.junction_degc`` (where a thermal path
    is given) of a push-pull stage driving the load, and the heat rules' flags, (T,)."""
    if not chain.stages or chain.stages[-1].kind != "push_pull":
        return {}
    stage, env = chain.stages[-1], hot_envs[-1]
    worst_w, pair_w = _worst_dissipation(chain, stage, env, trials)
    figures: Figures = {"output.device_dissipation_w": worst_w}
    junction = _junction(stage, chain.settings.ambient, worst_w, pair_w)
    where = stage.name
    if junction is None:
        figures[flag_key("note", "heat-unknown", where)] = as_flag(True, trials)
        return figures
    figures["output.junction_degc"] = junction
    top = stage.number("max_junction")
    over = junction > top
    figures[flag_key("error", "junction-over", where)] = as_flag(over, trials)
    figures[flag_key("warning", "junction-near", where)] = as_flag(
        ~over & (junction > top - JUNCTION_MARGIN_K), trials
    )
    return figures


def _worst_dissipation(
    chain: Chain, stage: Stage, env: Environment, trials: int
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """The hotter device's worst continuous dissipation per trial (T,), and both devices'
    total at that level (T,)."""
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
    return values[hot, rows], pair.sum(axis=0)


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
