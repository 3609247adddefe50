"""A capacitor-input rectifier integrated directly: the independent check of
`chainbudget.rectifier`.

Nothing here is shared with the model: the circuit's ODE is written out and integrated with
scipy's solve_ivp (explicit Runge-Kutta 4(5), rtol 1e-10, atol 1e-12, a step no longer than
1/4000 of the period), and the periodic state found by shooting on the reservoir voltage at
the start of the period with Brent's method. Ideal diodes with a fixed drop: the winding
current is max(e - v, 0)/R_s. Figures are read from the dense solution on a fine grid.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq


@dataclass(frozen=True)
class Circuit:
    """Source peak V (V), diode drop (V), winding resistance (ohm), reservoir (F), line
    (Hz), load: steady current (A), half-sine pulses of peak ``pulse_a`` at ``signal_hz``
    with phase ``phase`` at t = 0, conductance (S); ``period_s`` the common period."""

    peak_v: float
    drop_v: float
    resistance_ohm: float
    reservoir_f: float
    line_hz: float
    dc_a: float
    pulse_a: float = 0.0
    signal_hz: float | None = None
    phase: float = 0.0
    conductance_s: float = 0.0
    half_wave: bool = False
    period_s: float | None = None


@dataclass(frozen=True)
class Figures:
    trough_v: float
    crest_v: float
    mean_v: float
    winding_rms_a: float
    diode_peak_a: float
    diode_mean_a: float
    reservoir_ripple_a: float


def source(c: Circuit, t: float) -> float:
    s = math.sin(2.0 * math.pi * c.line_hz * t)
    return c.peak_v * (max(s, 0.0) if c.half_wave else abs(s)) - c.drop_v


def load(c: Circuit, t: float, v: float) -> float:
    pulse = 0.0
    if c.signal_hz:
        pulse = c.pulse_a * max(math.sin(2.0 * math.pi * c.signal_hz * t + c.phase), 0.0)
    return c.dc_a + pulse + c.conductance_s * v


def diode(c: Circuit, t: float, v: float) -> float:
    return max(source(c, t) - v, 0.0) / c.resistance_ohm


def period(c: Circuit) -> float:
    if c.period_s is not None:
        return c.period_s
    return 1.0 / c.line_hz if c.half_wave else 0.5 / c.line_hz


def _run(c: Circuit, v0: float, dense: bool = False):  # type: ignore[no-untyped-def]
    length = period(c)

    def rhs(t: float, y: np.ndarray) -> list[float]:
        v = float(y[0])
        return [(diode(c, t, v) - load(c, t, v)) / c.reservoir_f]

    return solve_ivp(
        rhs,
        (0.0, length),
        [v0],
        method="RK45",
        rtol=1e-10,
        atol=1e-12,
        max_step=length / 4000.0,
        dense_output=dense,
    )


def steady_state(c: Circuit, samples: int = 40000) -> Figures:
    """The periodic steady state's figures, by shooting on v(0)."""
    top = c.peak_v - c.drop_v

    def miss(v0: float) -> float:
        return float(_run(c, v0).y[0, -1]) - v0

    v0 = brentq(miss, 0.0, top, xtol=1e-12, rtol=1e-14)
    solution = _run(c, v0, dense=True)
    length = period(c)
    t = np.linspace(0.0, length, samples + 1)
    v = solution.sol(t)[0]
    i_d = np.array([diode(c, tt, vv) for tt, vv in zip(t, v, strict=True)])
    i_l = np.array([load(c, tt, vv) for tt, vv in zip(t, v, strict=True)])

    def mean(values: np.ndarray) -> float:
        return float(np.trapezoid(values, t) / length)

    return Figures(
        trough_v=float(v.min()),
        crest_v=float(v.max()),
        mean_v=mean(v),
        winding_rms_a=math.sqrt(mean(i_d * i_d)),
        diode_peak_a=float(i_d.max()),
        diode_mean_a=mean(i_d),
        reservoir_ripple_a=math.sqrt(mean((i_d - i_l) ** 2)),
    )


def first_charge_peak(c: Circuit, switch_on_s: float) -> float:
    """Largest winding current in the first line cycle after switching on at
    ``switch_on_s`` with the reservoir empty."""
    length = 1.0 / c.line_hz

    def rhs(t: float, y: np.ndarray) -> list[float]:
        v = float(y[0])
        return [(diode(c, t, v) - load(c, t, v)) / c.reservoir_f]

    solution = solve_ivp(
        rhs,
        (switch_on_s, switch_on_s + length),
        [0.0],
        method="RK45",
        rtol=1e-10,
        atol=1e-12,
        max_step=length / 8000.0,
        dense_output=True,
    )
    t = np.linspace(switch_on_s, switch_on_s + length, 40001)
    v = solution.sol(t)[0]
    return max(diode(c, tt, vv) for tt, vv in zip(t, v, strict=True))
