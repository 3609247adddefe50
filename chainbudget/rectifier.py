"""The capacitor-input rectifier solved cycle by cycle: its periodic steady state.

The circuit: a sinusoidal source of open-circuit peak V (the transformer's secondary at a
mains corner), ideal diodes with a fixed forward drop V_d (two in a bridge's path, one in a
half-wave or centre-tapped rectifier), the winding resistance R_s in series, the reservoir C,
and the load: a constant current I_0, half-wave sine pulses of peak I_p at the signal
frequency (what a class-AB stage draws from one rail) and optionally a conductance G.

Safety: a rectified supply starts at the mains. The numbers here are a paper budget, not a
safety assessment; mains wiring, fusing and insulation follow local electrical codes and
licensed practice.

Notes
-----
In line phase theta = omega t (omega = 2 pi f_line), with lambda = 1/(omega C) and
kappa = 1/(omega R_s C), Kirchhoff's current law at the reservoir gives

    charging (diode on, i_d = (e - v)/R_s > 0):  dv/dtheta = kappa (e - v) - lambda i_L
    discharging (diode off):                     dv/dtheta = -lambda i_L

with e(theta) = V |sin theta| - V_d (full wave; V sin theta - V_d half wave) and
i_L = I_0 + I_p h(rho theta + phi) + G v, h(x) = max(sin x, 0), rho = f_signal / f_line.
Both are linear first-order equations dv/dtheta = -a v + u(theta), u a constant plus a
sinusoid of the line plus the pulse train, so within one interval the solution is closed
form: v = P(theta) + (v_s - P(theta_s)) exp(-a (theta - theta_s)) with P the sum of the
particular solutions (a first-order low-pass of each term: the sinusoid's steady response,
and the pulse train's periodic response, `pulse_response`); for a = 0 (no conductance,
diode off) it is the integral of u. With R_s = 0 the reservoir follows the source while the
diode conducts, v = e, and i_d = omega C de/dtheta + i_L.

The diode's switching instants are found by root finding on these closed forms (a grid
bracket, then the Illinois variant of regula falsi): charging starts where e rises to v,
and ends where i_d falls to zero. The periodic steady state is found by shooting: the
reservoir voltage v_0 at a line zero crossing is the root of v(Theta; v_0) - v_0 over one
common period Theta of the line and the signal, bracketed in [0, V - V_d] (the map is
monotone with slope in [0, 1)). Everything is vectorised over a batch of circuits (mains
corners, signal phases); the only Python loop is over the diode's switching events, a few
per line cycle. Figures (mean, rms, ripple harmonics) are Gauss-Legendre quadratures of the
closed forms over each interval, in panels that end where a pulse does (the load's kink);
extremes are found on a dense grid of the closed form and
refined by a parabola through the three best points.

A pulse train that is not commensurate with the line is replaced by the nearest one that
is within `MAX_SOURCE_PERIODS` source periods (a signal frequency within a few percent); the
trough is the lowest over `PHASES` relative phases of signal and line (the two are not
synchronised, and a stage clips on the worst). A periodic state whose reservoir voltage
falls to zero or below is reported ``collapsed``: no steady operating point holds the load.

The reference limits (tests/test_rectifier.py): as R_s -> 0 and C grows, the ripple
approaches the constant-current figure I/(2 f C) full wave, I/(f C) half wave (Horowitz &
Hill, The Art of Electronics, 3rd ed., sec. 9.5.2, from memory); for a resistive load the
output follows Schade's curves (O. H. Schade, "Analysis of rectifier operation", Proc. IRE
31, 1943).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[Any]

TWO_PI = 2.0 * np.pi
#: Source periods a commensurate pulse train may span (a half-line-cycle each full wave).
MAX_SOURCE_PERIODS = 12
#: Relative phases of signal and line tried for the worst trough.
PHASES = 4
#: Ripple harmonics reported (of the ripple fundamental: 2 f_line full wave, f_line half).
HARMONICS = 8
# Below this decay rate per radian the conductance's exponential is taken as linear.
_A_MIN = 1e-9
# Above this kappa = 1/(omega R_s C) a winding is taken as ideal (no resistance).
_KAPPA_IDEAL = 1e12
# Grid of the event search: a geometric start (short conduction) and an even spread.
_GEOMETRIC = np.array([1e-12, 1e-10, 1e-8, 1e-6, 1e-5, 1e-4, 1e-3, 3e-3])
_EVEN = np.linspace(0.0, 1.0, 97)[1:]
_SEARCH = np.concatenate((_GEOMETRIC, _EVEN))
# Gauss-Legendre nodes for the quadratures: composite, _PANELS panels of _NODES nodes.
_NODES = 8
_PANELS = 12
_GL_X, _GL_W = np.polynomial.legendre.leggauss(_NODES)
# Grid that brackets `pulse_response_peak`'s peak, and its Newton steps after it (each
# at least halves the bracket; from one grid step, pi/64, 40 reach round-off).
_PEAK_GRID = 65
_PEAK_STEPS = 40
# Dense grid for the extremes within a charging interval.
_DENSE = np.linspace(0.0, 1.0, 193)
_ROOT_XTOL = 1e-10
# The periodic state's start is found to this fraction of the peak.
_SHOOT_RTOL = 1e-11
# A gap between source and reservoir within this fraction of the peak at its largest grid
# point may close between grid points (a sine sags 1 - cos(pi/96) ~ 5e-4 between them).
_GRAZE = 2e-3
_ROOT_ITERATIONS = 60


def half_sine_integral(x: ArrayLike) -> Array:
    """Integral of h(s) = max(sin s, 0) from 0 to x (x >= 0), closed form.

    Notes
    -----
    Each full period contributes 2; within a period, 1 - cos r on the positive half and 2
    on the negative half (r = x mod 2 pi).
    """
    x = np.asarray(x, dtype=float)
    n = np.floor(x / TWO_PI)
    r = x - TWO_PI * n
    return np.asarray(2.0 * n + np.where(r < np.pi, 1.0 - np.cos(r), 2.0), dtype=float)


def _pulse_terms(tau: Array) -> tuple[Array, Array, Array, Array]:
    """`pulse_response`'s constants per time constant: tau (1 where it is 0, whose
    response is the half sine itself), g = 1/sqrt(1 + tau^2), psi = atan(tau) and
    A = g sin(psi)/(1 - exp(-pi/tau))."""
    safe = np.where(tau > 0.0, tau, 1.0)
    g = 1.0 / np.sqrt(1.0 + safe * safe)
    psi = np.arctan(safe)
    return safe, g, psi, g * np.sin(psi) / -np.expm1(-np.pi / safe)


def pulse_response(x: ArrayLike, tau: ArrayLike) -> Array:
    """Periodic response y of the first-order low-pass tau dy/dx = h(x) - y to the
    half-wave rectified sine h(x) = max(sin x, 0).

    Parameters
    ----------
    x : array_like
        Phase of the sine, rad.
    tau : array_like
        Time constant in radians of that sine (omega_s R C), >= 0.

    Returns
    -------
    ndarray
        y(x); its mean is 1/pi like h's, and tau = 0 gives h itself.

    Notes
    -----
    On the pulse (r = x mod 2 pi < pi) y = g sin(r - psi) + A exp(-r/tau), between pulses
    y = A exp(-(r - pi)/tau), with g = 1/sqrt(1 + tau^2), psi = atan(tau) the sinusoid's
    steady response, and A = g sin(psi)/(1 - exp(-pi/tau)) from continuity at r = pi and
    periodicity (the first-order step response of circuit theory; derived here).
    """
    x = np.asarray(x, dtype=float)
    tau = np.asarray(tau, dtype=float)
    r = np.mod(x, TWO_PI)
    safe, g, psi, amplitude = _pulse_terms(tau)
    on = r < np.pi
    with np.errstate(over="ignore"):
        decay = np.exp(-np.where(on, r, r - np.pi) / safe)
    y = np.where(on, g * np.sin(r - psi), 0.0) + amplitude * decay
    return np.asarray(np.where(tau > 0.0, y, np.maximum(np.sin(r), 0.0)), dtype=float)


def pulse_response_peak(tau: ArrayLike) -> Array:
    """Largest value of `pulse_response` over a period (1 for tau = 0).

    Notes
    -----
    The largest value lies on the pulse (r < pi; off it y only decays) where
    y'(r) = g cos(r - psi) - (A / tau) exp(-r / tau) falls through zero, y' and
    y'' = -g sin(r - psi) + (A / tau^2) exp(-r / tau) from `pulse_response`'s closed form.
    A grid of `_PEAK_GRID` points brackets it between the neighbours of its best point;
    Newton's steps on y' = 0 then close in, each kept inside the bracket, which every step
    narrows by the sign of y' (a bisection where Newton's step leaves it: the safeguarded
    Newton of Press et al., Numerical Recipes, 3rd ed., sec. 9.4, rtsafe; from memory).
    The largest of y there and the grid's best is returned.
    """
    tau = np.atleast_1d(np.asarray(tau, dtype=float))
    grid = np.linspace(0.0, np.pi, _PEAK_GRID)
    y = pulse_response(grid[None, :], tau[:, None])
    best = np.clip(np.argmax(y, axis=1), 1, grid.size - 2)
    lo, hi = grid[best - 1], grid[best + 1]
    safe, g, psi, amplitude = _pulse_terms(tau)
    r = grid[best]
    for _ in range(_PEAK_STEPS):
        decay = amplitude * np.exp(-r / safe) / safe
        slope = g * np.cos(r - psi) - decay
        bend = -g * np.sin(r - psi) + decay / safe
        rising = slope > 0.0
        lo, hi = np.where(rising, r, lo), np.where(rising, hi, r)
        with np.errstate(divide="ignore", invalid="ignore"):
            newton = r - slope / bend
        inside = (bend < 0.0) & (newton > lo) & (newton < hi)
        r = np.where(inside, newton, 0.5 * (lo + hi))
    peak = np.maximum(pulse_response(r, tau), y.max(axis=1))
    return np.asarray(np.where(tau > 0.0, peak, 1.0), dtype=float)


def commensurate(signal_hz: float, source_hz: float) -> tuple[int, int]:
    """(p, q): a pulse train of p/q times the source frequency, nearest to
    ``signal_hz / source_hz`` with q at most `MAX_SOURCE_PERIODS` (the common period is q
    source periods and p signal periods); p = 0 for a signal too slow to place."""
    ratio = Fraction(signal_hz / source_hz).limit_denominator(MAX_SOURCE_PERIODS)
    return ratio.numerator, ratio.denominator


@dataclass(frozen=True)
class SteadyState:
    """The periodic steady state of a batch of rectifiers (arrays over the batch).

    Voltages in V, currents in A, angles in degrees of the line cycle.
    """

    trough_v: Array
    crest_v: Array
    mean_v: Array
    ripple_vpp: Array
    diode_mean_a: Array
    winding_rms_a: Array
    diode_peak_a: Array
    reservoir_ripple_a: Array
    conduction_deg: Array
    collapsed: NDArray[np.bool_]
    #: Complex ripple harmonics, V peak, shape (batch, HARMONICS): the k-th is at k times
    #: `ripple_hz`, phase referred to the line's zero crossing.
    harmonics_vpk: NDArray[np.complex128]
    ripple_hz: float
    signal_hz: float | None
    #: The reservoir voltage at the line's zero crossing that starts the periodic state.
    start_v: Array


class _Batch:
    """The circuits of one batch: their parameters as arrays over the batch."""

    def __init__(
        self,
        peak_v: Array,
        drop_v: Array,
        resistance_ohm: Array,
        reservoir_f: Array,
        line_hz: float,
        half_wave: bool,
        dc_a: Array,
        pulse_a: Array,
        conductance_s: Array,
        rho: float,
        phase: Array,
    ) -> None:
        omega = TWO_PI * line_hz
        self.V = peak_v
        self.Vd = drop_v
        # a winding that would charge the reservoir within 1/_KAPPA_IDEAL of a radian is
        # taken as ideal (the reservoir follows the source): the same answer to within
        # round-off, and its exponentials stay finite
        self.ideal = resistance_ohm * TWO_PI * line_hz * reservoir_f <= 1.0 / _KAPPA_IDEAL
        self.R = np.where(self.ideal, 1.0, resistance_ohm)
        self.wC = omega * reservoir_f
        self.lam = 1.0 / self.wC
        self.kappa = np.where(self.ideal, 0.0, 1.0 / (self.wC * self.R))
        self.I0 = dc_a
        self.Ip = pulse_a if rho > 0.0 else np.zeros_like(pulse_a)
        self.G = conductance_s
        self.phi = phase
        self.rho = rho
        self.half_wave = half_wave
        self.pulsed = rho > 0.0 and bool(np.any(self.Ip > 0.0))

    def subset(self, rows: NDArray[np.intp]) -> _Batch:
        """The circuits ``rows`` of this batch as a batch of their own."""
        sub = _Batch.__new__(_Batch)
        for key, value in self.__dict__.items():
            sub.__dict__[key] = value[rows] if isinstance(value, np.ndarray) else value
        return sub

    def sign(self, window: Array) -> Array:
        """+1 on even half cycles, -1 on odd ones (|sin| = sign * sin); half wave: +1 on
        even, 0 (no charging) on odd."""
        odd = np.mod(window, 2.0) > 0.5
        if self.half_wave:
            return np.where(odd, 0.0, 1.0)
        return np.where(odd, -1.0, 1.0)


class _Piece:
    """The closed form of one interval for a set of rows of a batch: charging (diode on) or
    discharging, from (theta_s, v_s) in a window of sign s (|sin| = s sin there).

    Phases passed in have shape ``(rows,)`` or ``(rows, m)``.
    """

    def __init__(
        self,
        batch: _Batch,
        rows: NDArray[np.intp],
        theta_s: Array,
        v_s: Array,
        s: Array,
        charging: bool | NDArray[np.bool_],
    ) -> None:
        on = np.broadcast_to(np.asarray(charging, dtype=bool), rows.shape)
        self.batch = batch
        self.rows = rows
        self.on = on
        self.V, self.Vd = batch.V[rows], batch.Vd[rows]
        self.R, self.ideal = batch.R[rows], batch.ideal[rows]
        self.wC, self.lam = batch.wC[rows], batch.lam[rows]
        self.I0, self.Ip, self.G = batch.I0[rows], batch.Ip[rows], batch.G[rows]
        self.phi = batch.phi[rows]
        self.rho = batch.rho
        self.pulsed = batch.pulsed and bool((self.Ip > 0.0).any())
        self.ts, self.vs, self.s = theta_s, v_s, s
        kappa = np.where(on, batch.kappa[rows], 0.0)
        a = kappa + self.lam * self.G
        self.linear = a <= _A_MIN
        self.a = np.where(self.linear, 1.0, a)
        self.a0 = -self.lam * self.I0 - kappa * self.Vd
        self.a1 = kappa * self.V * s
        self.a2 = -self.lam * self.Ip
        self.lag = np.arctan2(1.0, self.a)
        self.m1 = 1.0 / np.sqrt(self.a * self.a + 1.0)
        self.sin_s = np.sin(theta_s - self.lag)
        self.cos_s = np.cos(theta_s)
        self.follow = on & self.ideal
        self.all_linear = bool(self.linear.all())
        self.any_linear = bool(self.linear.any())
        self.any_follow = bool(self.follow.any())
        self.any_ideal = bool(self.ideal.any())
        if self.pulsed:
            self.tau = self.rho / self.a
            x_s = self.rho * theta_s + self.phi
            self.y_s = pulse_response(x_s, self.tau)
            self.h_s = half_sine_integral(x_s)

    def _c(self, values: Array, theta: Array) -> Array:
        return values[:, None] if theta.ndim == 2 else values

    def voltage(self, theta: Array) -> Array:
        """v(theta), V."""
        c = self._c
        delta = theta - c(self.ts, theta)
        v_exp = v_lin = None
        if not self.all_linear:
            a = c(self.a, theta)
            decay = np.exp(-a * delta)
            v_exp = (
                c(self.vs, theta) * decay
                + c(self.a0, theta) * (-np.expm1(-a * delta) / a)
                + c(self.a1 * self.m1, theta)
                * (np.sin(theta - c(self.lag, theta)) - c(self.sin_s, theta) * decay)
            )
            if self.pulsed:
                x = self.rho * theta + c(self.phi, theta)
                v_exp = v_exp + c(self.a2, theta) / a * (
                    pulse_response(x, c(self.tau, theta)) - c(self.y_s, theta) * decay
                )
        if self.any_linear:
            v_lin = (
                c(self.vs, theta)
                + c(self.a0, theta) * delta
                + c(self.a1, theta) * (c(self.cos_s, theta) - np.cos(theta))
            )
            if self.pulsed:
                x = self.rho * theta + c(self.phi, theta)
                v_lin = v_lin + c(self.a2, theta) / self.rho * (
                    half_sine_integral(x) - c(self.h_s, theta)
                )
        if v_exp is None or v_lin is None:
            v = v_lin if v_exp is None else v_exp
        else:
            v = np.where(c(self.linear, theta), v_lin, v_exp)
        assert v is not None
        if self.any_follow:
            v = np.where(c(self.follow, theta), self.source(theta), v)
        return np.asarray(v, dtype=float)

    def decay(self, theta: Array) -> Array:
        """d v(theta) / d v_s: exp(-a (theta - theta_s)); 0 while an ideal source charges."""
        factor = np.where(self.linear, 1.0, np.exp(-self.a * (theta - self.ts)))
        return np.asarray(np.where(self.follow, 0.0, factor), dtype=float)

    def source(self, theta: Array) -> Array:
        """e(theta) = V s sin(theta) - V_d, V."""
        c = self._c
        return np.asarray(c(self.V * self.s, theta) * np.sin(theta) - c(self.Vd, theta))

    def load(self, theta: Array, v: Array) -> Array:
        """i_L = I_0 + I_p max(sin(rho theta + phi), 0) + G v, A."""
        c = self._c
        current = c(self.I0, theta) + c(self.G, theta) * v
        if self.pulsed:
            x = self.rho * theta + c(self.phi, theta)
            current = current + c(self.Ip, theta) * np.maximum(np.sin(x), 0.0)
        return np.asarray(current, dtype=float)

    def gap(self, theta: Array) -> Array:
        """e - v: where it reaches zero, a discharging reservoir starts to charge, V."""
        return self.source(theta) - self.voltage(theta)

    def current(self, theta: Array, v: Array | None = None) -> Array:
        """Diode (winding) current while charging, A: (e - v)/R_s, or with R_s = 0 the
        current that holds v on the source, omega C de/dtheta + i_L."""
        c = self._c
        if v is None:
            v = self.voltage(theta)
        resistive = (self.source(theta) - v) / c(self.R, theta)
        if not self.any_ideal:
            return resistive
        following = c(self.wC * self.V * self.s, theta) * np.cos(theta) + self.load(theta, v)
        return np.asarray(np.where(c(self.ideal, theta), following, resistive), dtype=float)

    def gap_and_slope(self, theta: Array) -> tuple[Array, Array]:
        """e - v and its derivative V s cos(theta) + lambda i_L (discharging: dv/dtheta =
        -lambda i_L)."""
        c = self._c
        v = self.voltage(theta)
        gap = self.source(theta) - v
        slope = c(self.V * self.s, theta) * np.cos(theta) + c(self.lam, theta) * self.load(theta, v)
        return gap, np.asarray(slope, dtype=float)

    def current_and_slope(self, theta: Array) -> tuple[Array, Array]:
        """The diode current while charging and its derivative: with R_s > 0,
        i_d' = (V s cos(theta) - lambda (i_d - i_L))/R_s (from C dv/dt = i_d - i_L); with
        R_s = 0, the derivative of omega C V s cos(theta) + i_L."""
        c = self._c
        v = self.voltage(theta)
        i_d = self.current(theta, v)
        e_slope = c(self.V * self.s, theta) * np.cos(theta)
        lam, R = c(self.lam, theta), c(self.R, theta)
        resistive = (e_slope - lam * (i_d - self.load(theta, v))) / R
        if not self.any_ideal:
            return i_d, np.asarray(resistive, dtype=float)
        pulse_slope: Array | float = 0.0
        if self.pulsed:
            x = self.rho * theta + c(self.phi, theta)
            pulse_slope = c(self.Ip, theta) * self.rho * np.where(np.sin(x) > 0.0, np.cos(x), 0.0)
        following = (
            -c(self.wC * self.V * self.s, theta) * np.sin(theta)
            + pulse_slope
            + c(self.G, theta) * e_slope
        )
        return i_d, np.asarray(np.where(c(self.ideal, theta), following, resistive), dtype=float)

    def take(self, keep: NDArray[np.intp]) -> _Piece:
        """The same interval for a subset of its rows."""
        return _Piece(
            self.batch, self.rows[keep], self.ts[keep], self.vs[keep], self.s[keep], self.on[keep]
        )


def _illinois(
    f: object,
    lo: Array,
    hi: Array,
    f_lo: Array,
    f_hi: Array,
    xtol: float | Array = _ROOT_XTOL,
) -> Array:
    """Roots of f (vectorised over rows) bracketed by [lo, hi], f of opposite signs at the
    two ends: the Illinois variant of regula falsi (Dowell & Jarratt, BIT 11, 1971), until
    the bracket is narrower than ``xtol``."""
    func = f  # callable(x) -> values of the same shape
    lo, hi, f_lo, f_hi = lo.copy(), hi.copy(), f_lo.copy(), f_hi.copy()
    tol = np.broadcast_to(np.asarray(xtol, dtype=float), lo.shape)
    kept = np.zeros(lo.shape, dtype=int)  # +1: lo moved last, -1: hi moved last
    for _ in range(_ROOT_ITERATIONS):
        open_ = np.abs(hi - lo) > tol
        if not open_.any():
            break
        denominator = f_hi - f_lo
        safe = np.where(denominator != 0.0, denominator, 1.0)
        x = (lo * f_hi - hi * f_lo) / safe
        inside = (x > np.minimum(lo, hi)) & (x < np.maximum(lo, hi)) & (denominator != 0.0)
        x = np.where(inside, x, 0.5 * (lo + hi))
        x = np.where(open_, x, lo)
        fx = np.asarray(func(x), dtype=np.float64)  # type: ignore[operator]
        move_lo = open_ & (np.sign(fx) == np.sign(f_lo))
        move_hi = open_ & ~move_lo
        # the end that stays put a second time has its value halved (Illinois)
        f_hi = np.where(move_lo & (kept == 1), 0.5 * f_hi, f_hi)
        f_lo = np.where(move_hi & (kept == -1), 0.5 * f_lo, f_lo)
        lo, f_lo = np.where(move_lo, x, lo), np.where(move_lo, fx, f_lo)
        hi, f_hi = np.where(move_hi, x, hi), np.where(move_hi, fx, f_hi)
        kept = np.where(move_lo, 1, np.where(move_hi, -1, kept))
        exact = open_ & (fx == 0.0)
        lo, hi = np.where(exact, x, lo), np.where(exact, x, hi)
    return np.asarray(0.5 * (lo + hi), dtype=float)


def _bracketed_roots(f: object, lo: Array, hi: Array, f_lo: Array, f_hi: Array) -> Array:
    """Roots of f in [lo, hi] where f changes sign there; ``hi`` where it does not (the
    crossing is then within rounding of it). ``f(x)`` returns the value and its derivative
    on all rows: Newton's method kept within the bracket, bisection when a step leaves it.
    """
    func = f
    proper = np.sign(f_lo) * np.sign(f_hi) < 0.0
    root = hi.copy()
    if not proper.any():
        return root
    k = np.flatnonzero(proper)
    a, b, fa = lo[k], hi[k], f_lo[k]
    base = hi.copy()
    # start at the secant point of the bracket (the grid's points are close)
    x = (lo[k] * f_hi[k] - hi[k] * f_lo[k]) / (f_hi[k] - f_lo[k])
    for _ in range(_ROOT_ITERATIONS):
        base[k] = x
        values, slopes = func(base)  # type: ignore[operator]
        fx, dfx = values[k], slopes[k]
        same = np.sign(fx) == np.sign(fa)
        a, fa = np.where(same, x, a), np.where(same, fx, fa)
        b = np.where(same, b, x)
        safe = np.where(dfx != 0.0, dfx, 1.0)
        step = np.where(dfx != 0.0, fx / safe, np.inf)
        new = x - step
        inside = (new > np.minimum(a, b)) & (new < np.maximum(a, b))
        new = np.where(inside, new, 0.5 * (a + b))
        done = (np.abs(new - x) <= _ROOT_XTOL) | (fx == 0.0) | (np.abs(b - a) <= _ROOT_XTOL)
        x = np.where(fx == 0.0, x, new)
        if done.all():
            break
    root[k] = x
    return root


def _golden_max(f: object, lo: Array, hi: Array, iterations: int = 40) -> Array:
    """Maximiser of a unimodal f on [lo, hi] (vectorised golden-section search)."""
    func = f
    ratio = (np.sqrt(5.0) - 1.0) / 2.0
    a, b = lo.copy(), hi.copy()
    c = b - ratio * (b - a)
    d = a + ratio * (b - a)
    fc, fd = func(c), func(d)  # type: ignore[operator]
    for _ in range(iterations):
        left = fc > fd
        b = np.where(left, d, b)
        a = np.where(left, a, c)
        c_new = b - ratio * (b - a)
        d_new = a + ratio * (b - a)
        c, d = np.where(left, c_new, d), np.where(left, c, d_new)
        probe = np.where(left, c, d)
        f_probe = func(probe)  # type: ignore[operator]
        fc, fd = np.where(left, f_probe, fd), np.where(left, fc, f_probe)
    return np.asarray(0.5 * (a + b), dtype=float)


def _charging_start(
    piece: _Piece, theta_e: Array, after_charge: NDArray[np.bool_]
) -> tuple[Array, NDArray[np.bool_]]:
    """First phase in (theta_s, theta_e] where the source reaches the discharging reservoir,
    and whether there is one in the window.

    Right after a charge ends the gap e - v is zero and opening: the charge that counts
    comes after it has opened. With no pulses it cannot close again in the same window (the
    gap closes only while the source rises faster than the load discharges the reservoir,
    and a charge ends after that), so such rows are not searched.
    """
    n = piece.rows.size
    found = np.zeros(n, dtype=bool)
    start = theta_e.copy()
    can = (piece.s != 0.0) & ~(after_charge & (piece.Ip <= 0.0))
    if not can.any():
        return start, found
    idx = np.flatnonzero(can)
    p = piece.take(idx)
    fresh = ~after_charge[idx]
    ts, te = p.ts, theta_e[idx]
    grid = ts[:, None] + (te - ts)[:, None] * _SEARCH[None, :]
    # the crest of the window, where a light load's charging starts, is always tried
    crest = np.clip(np.floor(ts / np.pi + 1e-9) * np.pi + 0.5 * np.pi, ts, te)
    grid = np.sort(np.concatenate((grid, crest[:, None]), axis=1), axis=1)
    values = p.gap(grid)
    m = idx.size
    scale = 1e-12 * (p.V + p.Vd + np.abs(p.vs))
    opened = np.maximum.accumulate(values < 0.0, axis=1) | fresh[:, None]
    before = np.concatenate((fresh[:, None], opened[:, :-1]), axis=1)
    closing = (values >= scale[:, None]) & before
    hit = np.asarray(closing.any(axis=1))
    first = np.argmax(closing, axis=1)
    rows = np.arange(m)
    lo = np.where(first > 0, grid[rows, np.maximum(first - 1, 0)], ts)
    hi = grid[rows, first]
    f_lo = np.where(first > 0, values[rows, np.maximum(first - 1, 0)], -1.0)
    f_hi = values[rows, first]
    # a light load grazes the crest between grid points (the largest open gap within the
    # sag of a sine between two of them): refine it
    largest = np.where(opened, values, -np.inf)
    best = np.argmax(largest, axis=1)
    inner = np.clip(best, 1, grid.shape[1] - 2)
    summit = (
        (best == inner)
        & opened[rows, inner - 1]
        & (values[rows, inner - 1] <= values[rows, inner])
        & (values[rows, inner + 1] <= values[rows, inner])
    )
    graze = ~hit & summit & (largest[rows, best] > -_GRAZE * p.V)
    if graze.any():
        g = np.flatnonzero(graze)
        q = p.take(g)
        left = grid[g, np.maximum(best[g] - 1, 0)]
        right = grid[g, np.minimum(best[g] + 1, grid.shape[1] - 1)]
        top = _golden_max(q.gap, left, right)
        top_gap = q.gap(top)
        ok = top_gap >= 0.0
        hit[g[ok]] = True
        lo[g[ok]], hi[g[ok]] = left[ok], top[ok]
        f_lo[g[ok]], f_hi[g[ok]] = -1.0, top_gap[ok]
    if hit.any():
        h = np.flatnonzero(hit)
        q = p.take(h)
        f_lo_h = np.where(f_lo[h] == -1.0, q.gap(lo[h]), f_lo[h])
        start[idx[h]] = _bracketed_roots(q.gap_and_slope, lo[h], hi[h], f_lo_h, f_hi[h])
        found[idx[h]] = True
    return start, found


def _charging_end(piece: _Piece, theta_e: Array) -> Array:
    """First phase in (theta_s, theta_e] where the charging current falls to zero (theta_e
    when it does not; theta_s for a charge that ends at once).

    The current falls to zero at the first point of the search grid where it is not
    positive after it has been: the charge's start is a root of the gap found to the
    solver's tolerance, so the current at the grid's first points (1e-12 of the window
    on) can be a round-off below zero on a charge that then flows. Taken as the end, it
    lost a whole charge of the period (a pulsed batch's plain row, its second window).
    A charge whose current is not positive anywhere on the grid ends at once."""
    ts = piece.ts
    grid = ts[:, None] + (theta_e - ts)[:, None] * _SEARCH[None, :]
    values = piece.current(grid)
    positive = values > 0.0
    stops = ~positive & np.maximum.accumulate(positive, axis=1)
    found = stops.any(axis=1)
    end = np.where(positive.any(axis=1), theta_e, ts)
    if found.any():
        f = np.flatnonzero(found)
        q = piece.take(f)
        j = np.argmax(stops[f], axis=1)  # >= 1, the point before it positive
        lo = grid[f, j - 1]
        hi = grid[f, j]
        end[f] = _bracketed_roots(q.current_and_slope, lo, hi, values[f, j - 1], values[f, j])
    return end


@dataclass
class _Intervals:
    """The intervals of a simulated period, flat over the batch."""

    row: list[NDArray[np.intp]]
    start: list[Array]
    end: list[Array]
    v_start: list[Array]
    sign: list[Array]
    charging: list[NDArray[np.bool_]]

    def add(self, piece: _Piece, end: Array, charging: bool) -> None:
        keep = end > piece.ts
        self.row.append(piece.rows[keep])
        self.start.append(piece.ts[keep])
        self.end.append(end[keep])
        self.v_start.append(piece.vs[keep])
        self.sign.append(piece.s[keep])
        self.charging.append(np.full(int(keep.sum()), charging))

    def flat(self, batch: _Batch) -> tuple[_Piece, Array]:
        """All intervals as one piece (mixed charging and discharging), and their ends."""
        on = np.concatenate(self.charging).astype(bool)
        piece = _Piece(
            batch,
            np.concatenate(self.row).astype(np.intp),
            np.concatenate(self.start),
            np.concatenate(self.v_start),
            np.concatenate(self.sign),
            on,
        )
        return piece, np.concatenate(self.end)


def _period(
    batch: _Batch, v0: Array, length: float, record: bool = False
) -> tuple[Array, Array, _Intervals]:
    """Simulate every circuit over [0, length] from v(0) = v0 at a line zero crossing
    (diode off): the reservoir voltage at the end, its derivative with respect to v0, and
    the intervals (when ``record``).

    Notes
    -----
    dv(end)/dv0 is the product of each interval's decay factor: the switching instants do
    not enter to first order, since dv/dtheta is continuous where the diode switches (the
    diode current is zero there).
    """
    n = v0.size
    theta = np.zeros(n)
    v = v0.astype(float).copy()
    slope = np.ones(n)
    charging = np.zeros(n, dtype=bool)
    after_charge = np.zeros(n, dtype=bool)
    intervals = _Intervals([], [], [], [], [], [])
    every = np.arange(n)
    end_tol = 1e-12 * max(length, 1.0)
    done = np.zeros(n, dtype=bool)
    for _ in range(8 * int(length / np.pi + 1) + 16):
        window = np.floor(theta / np.pi + 1e-9)
        window_end = np.minimum((window + 1.0) * np.pi, length)
        s = batch.sign(window)
        rows = every[~done & ~charging]
        if rows.size:
            piece = _Piece(batch, rows, theta[rows], v[rows], s[rows], False)
            start, found = _charging_start(piece, window_end[rows], after_charge[rows])
            stop = np.where(found, start, window_end[rows])
            if record:
                intervals.add(piece, stop, False)
            v[rows] = piece.voltage(stop)
            slope[rows] *= piece.decay(stop)
            theta[rows] = stop
            charging[rows] = found
            after_charge[rows] = False
        rows = every[~done & charging]
        if rows.size:
            piece = _Piece(batch, rows, theta[rows], v[rows], s[rows], True)
            stop = _charging_end(piece, window_end[rows])
            if record:
                intervals.add(piece, stop, True)
            v[rows] = piece.voltage(stop)
            slope[rows] *= piece.decay(stop)
            theta[rows] = stop
            charging[rows] = False
            after_charge[rows] = stop < window_end[rows]
        done = theta >= length - end_tol
        if done.all():
            break
    return v, slope, intervals


def _shoot(batch: _Batch, length: float, guess: Array) -> tuple[Array, NDArray[np.bool_]]:
    """v(0) of the periodic state of every circuit, and whether it collapsed (no periodic
    state with the reservoir above 0 V at the line's zero crossing).

    Notes
    -----
    g(v0) = v(length; v0) - v0 falls monotonically (the period map's slope lies in
    [0, 1)); g(V - V_d) <= 0 since no charge lifts the reservoir above the source's peak.
    Newton's method on g with the map's exact slope (`_period`), kept within the bracket
    found so far and falling back to bisection; g(0) <= 0 means the winding cannot carry
    the load at any positive voltage.
    """
    n = guess.size
    hi = np.maximum(batch.V - batch.Vd, 0.0)
    lo = np.full(n, -np.inf)
    tol = _SHOOT_RTOL * np.maximum(hi, 1.0)
    x = np.clip(guess, 0.0, hi)
    collapsed = np.zeros(n, dtype=bool)
    active = np.ones(n, dtype=bool)
    v0 = x.copy()
    for _ in range(40):
        rows = np.flatnonzero(active)
        if rows.size == 0:
            break
        sub = batch.subset(rows)
        end, slope, _ = _period(sub, x[rows], length)
        g = end - x[rows]
        up = g > 0.0
        lo[rows] = np.where(up, x[rows], lo[rows])
        hi[rows] = np.where(up, hi[rows], x[rows])
        finished = np.abs(g) <= tol[rows]
        # at zero with the period still ending lower: collapsed
        gone = (x[rows] <= 0.0) & ~up & ~finished
        collapsed[rows[gone]] = True
        step = g / np.maximum(1.0 - slope, 1e-12)
        newton = x[rows] + step
        # a Newton step this small lands on the root (the map is smooth there)
        finished |= (np.abs(step) <= tol[rows]) & ~gone
        lo_r = np.where(np.isfinite(lo[rows]), lo[rows], 0.0)
        inside = (newton > lo_r) & (newton < hi[rows])
        bisect = 0.5 * (lo_r + hi[rows])
        # below zero and nothing known below: try zero itself once
        new = np.where(
            inside, newton, np.where(np.isfinite(lo[rows]), bisect, np.minimum(bisect, 0.0))
        )
        new = np.where((new < 0.0) & ~np.isfinite(lo[rows]), 0.0, new)
        narrow = (hi[rows] - lo_r) <= tol[rows]
        v0[rows] = np.where(finished, newton, x[rows])
        x[rows] = new
        active[rows[finished | narrow | gone]] = False
    return np.where(collapsed, 0.0, v0), collapsed


def _figures(batch: _Batch, v0: Array, length: float, harmonic_step: float) -> dict[str, Array]:
    """Every figure of the periodic state from v(0) = v0 (see `SteadyState`)."""
    n = v0.size
    _, _, intervals = _period(batch, v0, length, record=True)
    piece, end = intervals.flat(batch)
    row, start = piece.rows, piece.ts
    # Gauss-Legendre nodes on every interval, composite, the panels' edges where the
    # integrands are not smooth (`_panel_edges`)
    edges = _panel_edges(piece, start, end)
    panel = np.diff(edges, axis=1)
    nodes = edges[:, :-1, None] + panel[:, :, None] * 0.5 * (_GL_X + 1.0)[None, None, :]
    nodes = nodes.reshape(row.size, -1)
    weights = (panel[:, :, None] * 0.5 * _GL_W[None, None, :]).reshape(row.size, -1)
    v = piece.voltage(nodes)
    i_load = piece.load(nodes, v)
    i_diode = np.where(piece.on[:, None], np.maximum(piece.current(nodes, v), 0.0), 0.0)

    def per_circuit(values: Array) -> Array:
        return np.bincount(row, weights=(weights * values).sum(axis=1), minlength=n) / length

    harmonics = np.empty((n, HARMONICS), dtype=complex)
    for k in range(1, HARMONICS + 1):
        turn = k * harmonic_step * nodes
        harmonics[:, k - 1] = 2.0 * (
            per_circuit(v * np.cos(turn)) - 1j * per_circuit(v * np.sin(turn))
        )
    # extremes: discharging intervals are monotone (the load only takes charge); charging
    # intervals are searched on a dense grid, refined by a parabola
    v_end = piece.voltage(end)
    low = np.minimum(piece.vs, v_end)
    high = np.maximum(piece.vs, v_end)
    peak_i = np.zeros(row.size)
    if piece.on.any():
        c = np.flatnonzero(piece.on)
        q = piece.take(c)
        grid = start[c, None] + (end - start)[c, None] * _DENSE[None, :]
        vc = q.voltage(grid)
        low[c] = np.minimum(low[c], -_summit(lambda x: -q.voltage(x), grid, -vc))
        high[c] = np.maximum(high[c], _summit(q.voltage, grid, vc))
        peak_i[c] = _summit(q.current, grid, q.current(grid, vc))
    trough = np.full(n, np.inf)
    crest = np.full(n, -np.inf)
    peak = np.zeros(n)
    np.minimum.at(trough, row, low)
    np.maximum.at(crest, row, high)
    np.maximum.at(peak, row, peak_i)
    conduction = np.bincount(row, weights=np.where(piece.on, end - start, 0.0), minlength=n)
    windows = length / (TWO_PI if batch.half_wave else np.pi)
    return {
        "trough_v": trough,
        "crest_v": crest,
        "mean_v": per_circuit(v),
        "diode_mean_a": per_circuit(i_diode),
        "winding_rms_a": np.sqrt(per_circuit(i_diode * i_diode)),
        "diode_peak_a": peak,
        "reservoir_ripple_a": np.sqrt(per_circuit((i_diode - i_load) ** 2)),
        "conduction_deg": np.degrees(conduction / windows),
        "harmonics_vpk": harmonics,
    }


def _panel_edges(piece: _Piece, start: Array, end: Array) -> Array:
    """The edges of each interval's quadrature panels, (rows, P + 1): `_PANELS` equal
    panels; under a pulsed load, also the pulses' ends inside the interval, where
    h(rho theta + phi) = max(sin, 0) has a kink (rho theta + phi a multiple of pi), so
    that every panel holds a smooth integrand and Gauss-Legendre keeps its order
    (Davis & Rabinowitz, Methods of Numerical Integration, 2nd ed., sec. 2.7: a
    derivative's jump inside a panel brings the error down to the panel's width
    squared; from memory). With m such ends in an interval at most, the equal panels
    number `_PANELS` - m (at least one): no panel then spans a pulse's end or more than
    a pulse's half period, and the panels outnumber `_PANELS` only where the pulses are
    dense (m + 1 of them). An interval with fewer ends than the most has its last edges
    at its end (panels of no width, no weight)."""
    fraction = np.linspace(0.0, 1.0, _PANELS + 1)
    width = end - start
    if not piece.pulsed:
        return start[:, None] + width[:, None] * fraction[None, :]
    # kinks at rho theta + phi = k pi, k from the first past the start to the last before
    # the end
    first = np.floor((piece.rho * start + piece.phi) / np.pi) + 1.0
    last = np.ceil((piece.rho * end + piece.phi) / np.pi) - 1.0
    count = np.maximum(last - first + 1.0, 0.0)
    most = int(count.max(initial=0.0))
    if most == 0:
        return start[:, None] + width[:, None] * fraction[None, :]
    k = np.arange(most)
    kinks = ((first[:, None] + k[None, :]) * np.pi - piece.phi[:, None]) / piece.rho
    kinks = np.where(k[None, :] < count[:, None], kinks, end[:, None])
    kinks = np.clip(kinks, start[:, None], end[:, None])
    fraction = np.linspace(0.0, 1.0, max(_PANELS - most, 1) + 1)
    equal = start[:, None] + width[:, None] * fraction[None, :]
    return np.sort(np.concatenate((equal, kinks), axis=1), axis=1)


def _summit(f: object, grid: Array, values: Array) -> Array:
    """Largest value of f along each row: the best grid point, refined by golden-section
    search between its neighbours (f is smooth and unimodal there)."""
    func = f
    best = np.argmax(values, axis=1)
    rows = np.arange(values.shape[0])
    left = grid[rows, np.maximum(best - 1, 0)]
    right = grid[rows, np.minimum(best + 1, grid.shape[1] - 1)]
    top = _golden_max(func, left, right, iterations=30)
    return np.asarray(np.maximum(func(top), values[rows, best]), dtype=float)  # type: ignore[operator]


def solve(
    peak_v: ArrayLike,
    drop_v: ArrayLike,
    resistance_ohm: ArrayLike,
    reservoir_f: ArrayLike,
    line_hz: float,
    dc_a: ArrayLike,
    pulse_a: ArrayLike = 0.0,
    signal_hz: float | None = None,
    phase: ArrayLike = 0.0,
    conductance_s: ArrayLike = 0.0,
    half_wave: bool = False,
    guess: ArrayLike | None = None,
) -> SteadyState:
    """Periodic steady state of a batch of capacitor-input rectifiers (arrays broadcast).

    Parameters
    ----------
    peak_v : array_like
        Open-circuit peak of the secondary (each half of a centre-tapped one), V.
    drop_v : array_like
        Diode drop in the conduction path, V.
    resistance_ohm : array_like
        Winding resistance referred to the secondary, ohm (0: ideal source).
    reservoir_f : array_like
        Reservoir capacitance, F.
    line_hz : float
        Mains frequency, Hz.
    dc_a : array_like
        Constant load current, A.
    pulse_a : array_like, optional
        Peak of the half-wave sine pulses the load draws at ``signal_hz``, A.
    signal_hz : float, optional
        Frequency of the pulses (replaced by the nearest one commensurate with the line,
        `commensurate`; a signal too slow to place has its pulses' crest held as a
        constant); None: no pulses.
    phase : array_like, optional
        Phase of the pulse train at the line's zero crossing, rad.
    conductance_s : array_like, optional
        Resistive part of the load, S.
    half_wave : bool, optional
        One charging pulse per line cycle instead of two.
    guess : array_like, optional
        The reservoir voltage at the line's zero crossing to start the shooting from (a
        nearby circuit's `SteadyState.start_v`); by default the constant-current estimate.

    Returns
    -------
    SteadyState
        The figures of each circuit (see the module notes for the method).
    """
    columns = np.broadcast_arrays(
        *(
            np.atleast_1d(np.asarray(a, dtype=float))
            for a in (
                peak_v,
                drop_v,
                resistance_ohm,
                reservoir_f,
                dc_a,
                pulse_a,
                phase,
                conductance_s,
            )
        )
    )
    peak, drop, r_s, cap, dc, pulse, phi, g = (np.array(a, dtype=float) for a in columns)
    source_hz = line_hz if half_wave else 2.0 * line_hz
    source_period = TWO_PI if half_wave else np.pi
    rho = 0.0
    used_hz = None
    cycles = 1
    if signal_hz is not None and signal_hz > 0.0 and np.any(pulse > 0.0):
        p, q = commensurate(signal_hz, source_hz)
        if p == 0:
            dc = dc + pulse
            pulse = np.zeros_like(pulse)
        else:
            used_hz = p / q * source_hz
            rho = used_hz / line_hz
            cycles = q
    length = cycles * source_period
    batch = _Batch(peak, drop, r_s, cap, line_hz, half_wave, dc, pulse, g, rho, phi)
    idle = (dc <= 0.0) & (pulse <= 0.0) & (g <= 0.0)
    # a first guess: the reservoir's mean under the constant-current discharge
    open_peak = np.maximum(peak - drop, 0.0)
    mean_load = dc + pulse / np.pi + g * open_peak
    start = open_peak - 0.5 * mean_load / (source_hz * cap)
    if guess is not None:
        given = np.broadcast_to(np.asarray(guess, dtype=float), start.shape)
        start = np.where(np.isfinite(given), given, start)
    v0, collapsed = _shoot(batch, length, start)
    found = _figures(batch, v0, length, source_hz / line_hz)
    collapsed = (collapsed | (found["trough_v"] <= 0.0)) & ~idle
    for key in ("trough_v", "crest_v", "mean_v"):
        found[key] = np.where(idle, open_peak, found[key])
    for key in (
        "diode_mean_a",
        "winding_rms_a",
        "diode_peak_a",
        "reservoir_ripple_a",
        "conduction_deg",
    ):
        found[key] = np.where(idle, 0.0, found[key])
    found["harmonics_vpk"] = np.where(idle[:, None], 0.0, found["harmonics_vpk"])
    return SteadyState(
        trough_v=found["trough_v"],
        crest_v=found["crest_v"],
        mean_v=found["mean_v"],
        ripple_vpp=found["crest_v"] - found["trough_v"],
        diode_mean_a=found["diode_mean_a"],
        winding_rms_a=found["winding_rms_a"],
        diode_peak_a=found["diode_peak_a"],
        reservoir_ripple_a=found["reservoir_ripple_a"],
        conduction_deg=found["conduction_deg"],
        collapsed=collapsed,
        harmonics_vpk=found["harmonics_vpk"],
        ripple_hz=source_hz,
        signal_hz=used_hz,
        start_v=v0,
    )


def inrush_peak(peak_v: ArrayLike, drop_v: ArrayLike, resistance_ohm: ArrayLike) -> Array:
    """Switch-on charging peak into an empty reservoir, A (inf for R_s = 0).

    Notes
    -----
    Switched on at the crest of the mains with the reservoir at 0 V, the first charging
    current is (V - V_d)/R_s: the winding resistance alone limits it (the worst phase; the
    reservoir's ESR, the mains' impedance and the transformer's own magnetising inrush are
    not modelled). Kirchhoff's voltage law around the charging loop.
    """
    r = np.asarray(resistance_ohm, dtype=float)
    drive = np.maximum(np.asarray(peak_v, dtype=float) - np.asarray(drop_v, dtype=float), 0.0)
    with np.errstate(divide="ignore"):
        return np.asarray(np.where(r > 0.0, drive / np.where(r > 0.0, r, 1.0), np.inf), dtype=float)


# The last periodic start of each circuit shape (everything but the load and the source's
# amplitude): the power tree asks for nearly the same circuit again and again as it
# settles, and Newton's method from there needs a step or two.
_WARM: dict[tuple[object, ...], Array] = {}


@lru_cache(maxsize=512)
def solve_cached(
    peak_v: tuple[float, ...],
    drop_v: float,
    resistance_ohm: float,
    reservoir_f: float,
    line_hz: float,
    dc_a: tuple[float, ...],
    pulse_a: tuple[float, ...],
    signal_hz: float | None,
    phase: tuple[float, ...],
    half_wave: bool,
) -> SteadyState:
    """`solve` memoised on plain arguments, started from the last solution of the same
    circuit shape (the power tree asks for nearly the same corner again and again while it
    settles)."""
    shape = (len(peak_v), drop_v, resistance_ohm, reservoir_f, line_hz, signal_hz, phase, half_wave)
    found = solve(
        np.array(peak_v),
        drop_v,
        resistance_ohm,
        reservoir_f,
        line_hz,
        np.array(dc_a),
        np.array(pulse_a),
        signal_hz,
        np.array(phase),
        half_wave=half_wave,
        guess=_WARM.get(shape),
    )
    if len(_WARM) > 256:
        _WARM.clear()
    _WARM[shape] = np.where(found.collapsed, np.nan, found.start_v)
    return found
