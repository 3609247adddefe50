"""Crossover: a push-pull stage's small-signal figures at idle beside those in conduction,
the quiescent current that keeps its gain flat through crossover, and the distortion of its
static transfer, open loop and inside a loop.

Notes
-----
The static transfer: each half from the drive node to the output is its chain of
base-emitter junctions and its emitter resistor, u(I) = m V_T ln(I/I_q) + (I - I_q) R,
with m the junctions (2 behind a Darlington driver, whose emitter current is the output
device's base current, so its V_BE moves with the same logarithm), R = R_E + r_bb'/(beta + 1)
(+ the driver's r_bb' over both betas) and the bias spreader holding both halves at I_q at
rest (the Ebers-Moll exponential, Horowitz & Hill, The Art of Electronics, 3rd ed., sec.
2.3.1; the class-AB pair of Oliver, "Distortion in complementary-pair class-B amplifiers",
Hewlett-Packard Journal, Feb. 1971; both from memory). For an output v_o and a drive v_in
the upper half carries I_u = u^-1(v_in - v_o), the lower I_l = u^-1(v_o - v_in), and the
load closes it: I_u - I_l = v_o/R_L. u^-1 is a Lambert W: I = (a/R) W((R I_q/a)
exp((y + I_q R)/a)), a = m V_T (I_q exp(y/a) when R = 0). The drive is taken as stiff (an
op-amp or a follower: its output impedance over the devices' current gain is milliohms).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, cast

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import outputmath as om
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.stages.base import Environment, Stage, StageContext
from chainbudget.stages.push_pull.halves import halves

#: Samples of one cycle of the static transfer (harmonics far above the twentieth fold back
#: only from above the 256th).
SAMPLES = 512
#: Harmonics reported, 2 to this one (the contract's "at least 20").
HARMONICS = 20
#: Newton steps (each kept inside a shrinking bracket) of the output per sample, at most.
#: They stop once every sample's step is within `ROUNDING_ULPS` units in the last place of
#: the drive's peak (the float's rounding: quadratic convergence reaches it in a handful),
#: or once the largest step, already under `SETTLED` of the peak, no longer halves (what is
#: left is the rounding of the currents, which no further step removes).
NEWTON_STEPS = 40
ROUNDING_ULPS = 8.0
SETTLED = 1e-10
#: Drive-amplitude corrections so that the fundamental at the load is the level asked for,
#: at most. They stop once every level is within `LEVEL_TOLERANCE` of it (relative), or once
#: the largest miss no longer shrinks (the rounding of the solve and the transform).
LEVEL_STEPS = 12
LEVEL_TOLERANCE = 1e-12
#: Harmonics below this (dB re the fundamental) are rounding, not distortion: the even ones
#: of a symmetric pair. They are reported as none (null in the JSON).
HARMONIC_FLOOR_DB = -200.0
#: Output levels besides the nominal: 1 W into the nominal load, and this far below clip (dB).
BELOW_CLIP_DB = 1.0


@dataclass(frozen=True)
class HalfLaw:
    """One half's junction law: ``junctions`` V_BE's in series and the resistance ``r_ohm``
    behind them, at the quiescent current ``i_q`` (A)."""

    junctions: int
    r_ohm: float
    i_q: float

    def current(
        self, y: NDArray[np.float64], v_t: float, near: NDArray[np.float64] | None = None
    ) -> NDArray[np.float64]:
        """I = u^-1(y), A (the module's notes); ``near``, currents close to the answer (the
        last step of an iteration), start the root finding there. ``r_ohm`` and ``i_q`` may
        be arrays broadcasting against ``y`` (the spread's trials), R = 0 in some of them."""
        a = self.junctions * v_t
        r = np.asarray(self.r_ohm, dtype=float)
        if not np.any(r > 0.0):
            return np.asarray(self.i_q * np.exp(np.minimum(y / a, 700.0)))
        resistive = np.all(r > 0.0)
        if not resistive:
            r = np.where(r > 0.0, r, 1.0)  # those trials take the exponential below
        x = np.log(r * self.i_q / a) + (y + self.i_q * r) / a
        start = None if near is None else near * (r / a)
        found = np.asarray(a / r * _w_of_exp(x, start))
        if resistive:
            return found
        exponential = self.i_q * np.exp(np.minimum(y / a, 700.0))
        return np.asarray(np.where(np.asarray(self.r_ohm) > 0.0, found, exponential))

    def slope(self, current: NDArray[np.float64], v_t: float) -> NDArray[np.float64]:
        """dI/dy = 1/u'(I), S. A half driven far off (rails of kilovolts) has a current
        that underflows to 0 or next to it: m V_T / I is then infinite and the slope its
        limit, 0, which is what the division gives without its warning."""
        with np.errstate(divide="ignore", over="ignore"):
            return np.asarray(1.0 / (self.junctions * v_t / current + self.r_ohm))


def _w_of_exp(
    x: NDArray[np.float64], start: NDArray[np.float64] | None = None
) -> NDArray[np.float64]:
    """W(e^x), the principal Lambert W of e^x, for any real x without overflow.

    Notes
    -----
    w = W(e^x) solves w + ln w = x (Corless et al., "On the Lambert W function",
    Adv. Comput. Math. 5 (1996) 329, from memory). In u = ln w that is g(u) = e^u + u - x,
    increasing and convex, so Newton's method converges from any start, monotonically
    once an iterate lies right of the root (a step from the left lands right of it):
    from u = ln(x) for x > e (the asymptote w ~ x) and u = x - 1 below (w ~ e^x, an
    iterate right of the root where e^x is small), a few steps reach the float's
    precision. Worked on the array at once: no per-point root finding, and no scipy on the
    start path (tests/test_crossover.py holds it against ``scipy.special.lambertw``).
    ``start`` (values of w near the answer, positive) starts Newton there instead. Every
    iterate is kept at or below ln max(x, e), which the root never exceeds (w <= x where
    x > 1, w < e below): far right of the root Newton's steps shrink to one unit each.
    """
    x = np.asarray(x, dtype=float)
    cap = np.log(np.maximum(x, np.e))
    if start is not None and np.all(np.asarray(start) > 0.0):
        u = np.minimum(np.log(np.asarray(start, dtype=float)), cap)
    else:
        u = np.where(x > np.e, cap, x - 1.0)
    for _ in range(_W_MAX_STEPS):
        # The same operations as e = exp(min(u, 700)), step = (e + u - x)/(e + 1), written
        # into the arrays in place (the solve runs some thousand times per check).
        e = np.minimum(u, 700.0)
        np.exp(e, out=e)
        step = e + u
        step -= x
        e += 1.0
        step /= e
        u = u - step
        np.minimum(u, cap, out=u)
        # Newton's next error is at most half this step squared (g''/2g' = e^u/(2(e^u + 1))
        # < 1/2): once that is within the rounding, u is the root to the float's precision.
        bound = np.abs(u)
        np.maximum(bound, 1.0, out=bound)
        bound *= 2.0 * _W_TOLERANCE
        np.sqrt(bound, out=bound)
        if not np.any(np.abs(step) > bound):
            break
    return np.asarray(np.exp(np.minimum(u, 709.0)))


# Newton steps at most for `_w_of_exp` (quadratic convergence takes a handful from its start).
_W_MAX_STEPS = 60
#: An error below this times max(1, |u|) is the float's rounding: the solve has converged.
_W_TOLERANCE = 4.0 * np.finfo(float).eps


def pair_laws(stage: Stage, env: Environment) -> tuple[HalfLaw, HalfLaw]:
    """The upper and lower halves' junction laws."""
    r_emitter = stage.number("emitter_resistors")
    i_q = stage.number("quiescent")
    found = []
    for half in halves(stage, env):
        out = half.output
        r = r_emitter + out.base_resistance / (out.beta + 1.0)
        junctions = 1
        if half.driver is not None:
            junctions = 2
            r += half.driver.base_resistance / ((out.beta + 1.0) * (half.driver.beta + 1.0))
        found.append(HalfLaw(junctions, r, i_q))
    return found[0], found[1]


def static_output(
    v_in: ArrayLike, upper: HalfLaw, lower: HalfLaw, r_load: float, v_t: float
) -> NDArray[np.float64]:
    """The pair's output for drive voltages ``v_in`` (any shape), V: every sample at once.

    Notes
    -----
    g(v_o) = I_u(v_in - v_o) - I_l(v_o - v_in) - v_o/R_L falls monotonically in v_o, and is
    positive at 0 and negative at v_in for v_in > 0 (the mirror for v_in < 0): Newton steps
    on g, each kept inside that bracket (halving it where a step would leave), converge to
    the root of every sample together.
    """
    return _solved_output(np.asarray(v_in, dtype=float), upper, lower, r_load, v_t).out


@dataclass(frozen=True)
class _Solved:
    """`static_output`'s answer with the halves' currents of its last step (A, within that
    step of the answer), which start the next solve of a drive close to this one."""

    out: NDArray[np.float64]
    i_u: NDArray[np.float64]
    i_l: NDArray[np.float64]


def _solved_output(
    v: NDArray[np.float64],
    upper: HalfLaw,
    lower: HalfLaw,
    r_load: float,
    v_t: float,
    near: _Solved | None = None,
) -> _Solved:
    """`static_output` of ``v``; ``near`` (the solve of a nearby drive, sample by sample)
    starts the Newton steps at its output and its currents."""
    lo, hi = np.minimum(v, 0.0), np.maximum(v, 0.0)
    if near is None:
        out = v * r_load / (r_load + 0.5 * (upper.r_ohm + lower.r_ohm))
        i_u: NDArray[np.float64] | None = None
        i_l: NDArray[np.float64] | None = None
    else:
        out = np.clip(near.out, lo, hi)
        i_u, i_l = near.i_u, near.i_l
    scale = float(np.max(np.abs(v), initial=0.0))
    rounding = ROUNDING_ULPS * float(np.spacing(scale))
    # Newton's next error is at most e^2 |g''|/(2|g'|) <= e^2/(2 m V_T) (each half's
    # dI/dy = 1/(m V_T/I + R) changes at most by itself over m V_T): a Newton step of all
    # samples below this leaves an error within the rounding (a factor 4 to spare).
    quadratic = float(np.sqrt(0.5 * min(upper.junctions, lower.junctions) * v_t * rounding))
    last = np.inf
    for _ in range(NEWTON_STEPS):
        # Each step's currents start the next step's root finding (they move less each time).
        i_u = upper.current(v - out, v_t, i_u)
        i_l = lower.current(out - v, v_t, i_l)
        g = i_u - i_l - out / r_load
        lo = np.where(g > 0.0, out, lo)
        hi = np.where(g > 0.0, hi, out)
        slope = upper.slope(i_u, v_t) + lower.slope(i_l, v_t) + 1.0 / r_load
        step = out + g / slope
        # A step may land on the bracket's end (a step of the rounding, with g's sign from
        # the rounding too): that is converged, not a cue to bisect.
        inside = (step >= lo) & (step <= hi)
        moved = np.where(inside, step, 0.5 * (lo + hi))
        largest = float(np.max(np.abs(moved - out), initial=0.0))
        out = moved
        if largest <= rounding or (last <= SETTLED * scale and largest > 0.5 * last):
            break
        # Newton's steps, not halvings (a sample at 0 V has a bracket of one point)
        if largest <= quadratic and not np.any(~inside & (hi > lo)):
            break
        last = largest
    assert i_u is not None and i_l is not None  # NEWTON_STEPS >= 1
    return _Solved(np.asarray(out), i_u, i_l)


#: Newton steps at most of `_refined_output`: a sample not settled by then is handed to the
#: bracketed solve (`_solved_output`).
JOINT_STEPS = 10
#: Largest rise of a half's log-current in one joint Newton step (a factor e^2 in current):
#: a start far below the answer climbs there in bounded steps instead of overflowing.
JOINT_MAX_STEP = 2.0


def _refined_output(
    v: NDArray[np.float64],
    upper: HalfLaw,
    lower: HalfLaw,
    r_load: float,
    v_t: float,
    near: _Solved,
) -> _Solved:
    """`static_output` of ``v`` from the currents of a nearby solve, by Newton's method on
    both halves' log-currents at once; a sample it does not settle is solved again by the
    bracketed solve (`_solved_output`) from the same start.

    Notes
    -----
    With p = ln(I_u/I_q), q = ln(I_l/I_q) each half's drive is f(p) = m V_T p +
    R (I_q e^p - I_q) (the module's notes), and the pair's state solves
    G1 = f_u(p) + f_l(q) = 0 (both halves see the same drive, with opposite signs) and
    G2 = f_u(p) + R_L (I_u - I_l) - v = 0 (the load closes it): two equations in two
    unknowns per sample, with the Jacobian [[f_u', f_l'], [f_u' + R_L I_u, -R_L I_l]],
    whose determinant is negative everywhere (every term of it has one sign), so each step
    is defined. Newton's method converges quadratically near the answer (Dennis &
    Schnabel, Numerical Methods for Unconstrained Optimization and Nonlinear Equations,
    1983, thm. 5.2.1, from memory). A sample is settled once both residuals, in volts, are
    within `ROUNDING_ULPS` of the drive's peak (the output is then v - f_u(p) to that
    rounding: the equations hold as well as floats can state them); the steps stop once
    every sample is, or once the largest residual no longer shrinks. No Lambert W inside:
    one exponential per half and step.
    """
    a_u, a_l = upper.junctions * v_t, lower.junctions * v_t
    r_u, r_l = np.asarray(upper.r_ohm, dtype=float), np.asarray(lower.r_ohm, dtype=float)
    q_u, q_l = np.asarray(upper.i_q, dtype=float), np.asarray(lower.i_q, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        p = np.log(near.i_u / q_u)
        q = np.log(near.i_l / q_l)
    rounding = ROUNDING_ULPS * float(np.spacing(np.max(np.abs(v), initial=0.0)))
    last = np.inf
    for k in range(JOINT_STEPS + 1):
        i_u = q_u * np.exp(p)
        i_l = q_l * np.exp(q)
        drive_u = a_u * p + r_u * (i_u - q_u)
        g1 = drive_u + a_l * q + r_l * (i_l - q_l)
        g2 = drive_u + r_load * (i_u - i_l) - v
        residual = np.maximum(np.abs(g1), np.abs(g2))
        largest = float(np.max(residual, initial=0.0))
        if largest <= rounding or not largest < last or k == JOINT_STEPS:
            break
        last = largest
        slope_u = a_u + r_u * i_u
        slope_l = a_l + r_l * i_l
        j21 = slope_u + r_load * i_u
        j22 = -r_load * i_l
        det = slope_u * j22 - slope_l * j21
        # a current rises by at most e^JOINT_MAX_STEP a step (no overflow); it may fall
        # freely (a half cutting off: its drive is then linear in its log-current)
        p = p - np.maximum((g1 * j22 - slope_l * g2) / det, -JOINT_MAX_STEP)
        q = q - np.maximum((slope_u * g2 - j21 * g1) / det, -JOINT_MAX_STEP)
    out = np.asarray(v - drive_u)
    astray = ~(residual <= rounding)
    if np.any(astray):
        shape = np.shape(out)
        out, i_u, i_l = (np.array(np.broadcast_to(x, shape)) for x in (out, i_u, i_l))
        pick = _picked(astray)
        again = _solved_output(
            v[astray],
            _picked_law(upper, astray),
            _picked_law(lower, astray),
            r_load,
            v_t,
            _Solved(*(pick(x) for x in (near.out, near.i_u, near.i_l))),
        )
        out[astray], i_u[astray], i_l[astray] = again.out, again.i_u, again.i_l
    return _Solved(out, i_u, i_l)


def _picked(where: NDArray[np.bool_]) -> Any:
    """A function giving an array's values (broadcast to ``where``'s shape) where it holds."""

    def pick(value: Any) -> Any:
        if np.ndim(value) == 0:
            return value
        return np.broadcast_to(value, where.shape)[where]

    return pick


def _picked_law(law: HalfLaw, where: NDArray[np.bool_]) -> HalfLaw:
    """``law`` with its arrays cut to the samples ``where`` holds (one value each)."""
    pick = _picked(where)
    return HalfLaw(law.junctions, pick(law.r_ohm), pick(law.i_q))


@dataclass(frozen=True)
class Distortion:
    """Harmonics of the pair's output at one level: peak of the fundamental (V), THD as a
    fraction, and harmonics 2 to `HARMONICS` in dB re the fundamental, open loop and with
    the loop's correction."""

    level_vpk: float
    open_thd: float
    open_harmonics_db: tuple[float, ...]
    thd: float
    harmonics_db: tuple[float, ...]


def _on_samples(law: HalfLaw) -> HalfLaw:
    """A law whose arrays (one value per trial) take one more axis, the samples'."""

    def trailing(value: float) -> float:
        return value if np.ndim(value) == 0 else cast(float, np.asarray(value)[..., None])

    return HalfLaw(law.junctions, trailing(law.r_ohm), trailing(law.i_q))


def harmonic_amplitudes(
    levels_vpk: ArrayLike, upper: HalfLaw, lower: HalfLaw, r_load: float, v_t: float
) -> NDArray[np.float64]:
    """Peak amplitudes of harmonics 1 to `HARMONICS` at the load (V) of the static transfer
    driven so that the fundamental is ``levels_vpk`` (any shape; the result has one more
    axis, the harmonics). The laws' ``r_ohm`` and ``i_q`` may be arrays broadcasting
    against the levels' shape (the spread's trials): every level of every trial is solved
    in the same array operations.

    Notes
    -----
    One cycle of a sine drive, `SAMPLES` points, through `static_output`; harmonics by the
    discrete Fourier transform (amplitude 2|X_n|/N). The drive amplitude is corrected until
    the fundamental is the level asked for to `LEVEL_TOLERANCE` (or no longer comes closer):
    first by the ratio of the fundamental asked for to the one obtained, then by the secant
    through the last two drives (`_next_drive`), at most `LEVEL_STEPS` times. The first
    drive is solved by the bracketed Newton steps (`_solved_output`); every later one, and
    a batch of trials started from its first trial's solve, by the joint Newton steps from
    the last solve (`_refined_output`), which need no Lambert W.
    """
    target = np.asarray(levels_vpk, dtype=float)
    up, lo = _on_samples(upper), _on_samples(lower)
    start = None
    if target.ndim >= 2 and target.shape[0] > SEEDED_BATCH:
        # Many trials of nearby parts: the first one solved alone starts them all (its
        # drive per volt of fundamental, moved by each trial's own resistive loss, and its
        # currents).
        first = _first_trial(up), _first_trial(lo)
        seed_drive, seed = _levels_solved(target[:1], *first, r_load, v_t)[1:]
        if np.all(target[:1] > 0.0) and np.all(seed_drive > 0.0):  # else start cold
            loss = _resistive_loss(upper, lower, r_load)
            start = seed_drive / target[:1] * loss / loss[:1], seed
    spectrum = _levels_solved(target, up, lo, r_load, v_t, start)[0]
    return np.asarray(np.abs(spectrum[..., 1 : HARMONICS + 1]))


def _resistive_loss(upper: HalfLaw, lower: HalfLaw, r_load: float) -> NDArray[np.float64]:
    """Drive per volt of output at large signal, 1 + R/R_L with R the halves' mean
    resistance (one half conducting, its junctions' drop small beside R I): where a
    trial's drive per volt of fundamental differs from the first trial's. Shape (T, 1)
    for the laws' per-trial arrays, (1,) for scalars."""
    r = 0.5 * (np.asarray(upper.r_ohm, dtype=float) + np.asarray(lower.r_ohm, dtype=float))
    return np.atleast_1d(1.0 + r / r_load)


#: A leading batch axis longer than this (the spread's trials) is started from its first.
SEEDED_BATCH = 1


def _first_trial(law: HalfLaw) -> HalfLaw:
    """A law of the first trial alone (its arrays' leading axis cut to one)."""

    def first(value: float) -> float:
        return value if np.ndim(value) == 0 else cast(float, np.asarray(value)[:1])

    return HalfLaw(law.junctions, first(law.r_ohm), first(law.i_q))


def _levels_solved(
    target: NDArray[np.float64],
    up: HalfLaw,
    lo: HalfLaw,
    r_load: float,
    v_t: float,
    start: tuple[NDArray[np.float64], _Solved] | None = None,
) -> tuple[NDArray[np.complex128], NDArray[np.float64], _Solved]:
    """The spectrum (2|X_n|/N, n = 0..N/2) of the static transfer's output with the
    fundamental at ``target``, the drive that gives it and the last solve (the notes of
    `harmonic_amplitudes`). ``start`` (drive per volt of fundamental, a solve and its
    drive, of nearby parts) starts the drive and the Newton steps there."""
    wave, cycle = _quarter_wave(SAMPLES)
    drive = target.copy()
    solved: _Solved | None = None
    if start is not None:
        per_volt, solved = start
        drive = target * per_volt
    spectrum = np.zeros((*target.shape, SAMPLES // 2 + 1), complex)
    missed = np.inf
    before: tuple[NDArray[np.float64], NDArray[np.float64]] | None = None
    for _ in range(LEVEL_STEPS):
        v = drive[..., None] * wave
        solved = (
            _solved_output(v, up, lo, r_load, v_t)
            if solved is None
            else _refined_output(v, up, lo, r_load, v_t, solved)
        )
        found = np.fft.rfft(solved.out[..., cycle], axis=-1) * 2.0 / SAMPLES
        fundamental = np.abs(found[..., 1])
        ratio = np.where(fundamental > 0.0, target / fundamental, 1.0)
        miss = float(np.max(np.abs(ratio - 1.0), initial=0.0))
        if miss >= missed:  # the rounding: the last drive's spectrum is as good
            break
        spectrum, missed = found, miss
        if miss <= LEVEL_TOLERANCE:
            break
        moved = _next_drive(drive, fundamental, target, ratio, before)
        before, drive = (drive, fundamental), moved
    assert solved is not None  # LEVEL_STEPS >= 1
    return spectrum, drive, solved


def _quarter_wave(samples: int) -> tuple[NDArray[np.float64], NDArray[np.intp]]:
    """The distinct values of one cycle of a unit sine on ``samples`` points, and where
    each point of the cycle takes its value from: sin(2 pi j/N) for j = 0..N/4 and their
    negatives (a sine's quarter-wave symmetry, N a multiple of 4), so the static transfer
    is solved on N/2 + 2 drive values instead of N."""
    if samples % 4:
        return np.sin(2.0 * np.pi * np.arange(samples) / samples), np.arange(samples)
    quarter = samples // 4
    rising = np.sin(2.0 * np.pi * np.arange(quarter + 1) / samples)
    j = np.arange(samples)
    # 0..N/4 rises, N/4..N/2 falls back (sin(pi - x) = sin x), then the negatives
    within = np.where(
        j % (samples // 2) <= quarter, j % (samples // 2), samples // 2 - j % (samples // 2)
    )
    where = np.where(j < samples // 2, within, quarter + 1 + within)
    return np.concatenate([rising, -rising]), where.astype(np.intp)


def closed_loop(
    amplitude: NDArray[np.float64], loop_factor: ArrayLike | None
) -> NDArray[np.float64]:
    """Harmonic amplitudes (last axis 1 to `HARMONICS`) inside a loop of return difference
    ``loop_factor`` = |1 + T(n f)| (last axis n = 1..`HARMONICS`, broadcasting; None: open
    loop). The fundamental stays the level asked for (the loop supplies the drive for it);
    each harmonic the pair generates is divided by the loop's return difference at its own
    frequency."""
    if loop_factor is None:
        return amplitude
    factor = np.asarray(loop_factor, dtype=float)
    closed = np.array(
        np.broadcast_to(amplitude, np.broadcast_shapes(amplitude.shape, factor.shape))
    )
    closed[..., 1:] = closed[..., 1:] / factor[..., 1:]
    return closed


def thd_of(amplitude: NDArray[np.float64]) -> NDArray[np.float64]:
    """THD = sqrt(sum_{n=2..20} H_n^2)/H_1 over the last axis (harmonics 1 to `HARMONICS`),
    a fraction (IEC 60268-3's definition over the harmonics, from memory)."""
    return np.asarray(np.sqrt(np.sum(amplitude[..., 1:] ** 2, axis=-1)) / amplitude[..., 0])


def harmonics(
    levels_vpk: ArrayLike,
    upper: HalfLaw,
    lower: HalfLaw,
    r_load: float,
    v_t: float,
    loop_factor: ArrayLike | None = None,
) -> list[Distortion]:
    """Distortion of the static transfer at output levels ``levels_vpk`` (peak of the
    fundamental at the load, V).

    ``loop_factor`` is |1 + T(n f)| for n = 1..`HARMONICS` (None: open loop); the first
    entry is not used (the fundamental is the level asked for).

    Notes
    -----
    The harmonics of `harmonic_amplitudes`, THD by `thd_of`. Inside a loop each harmonic
    is divided by |1 + T(n f)| (`closed_loop`: the distortion an output stage generates,
    reduced by the loop's return difference at its frequency).
    """
    target = np.atleast_1d(np.asarray(levels_vpk, dtype=float))
    amplitude = harmonic_amplitudes(target, upper, lower, r_load, v_t)
    closed = closed_loop(amplitude, loop_factor)

    def db(h: NDArray[np.float64]) -> NDArray[np.float64]:
        with np.errstate(divide="ignore"):
            found = 20.0 * np.log10(h[:, 1:] / h[:, :1])
        return np.asarray(np.where(found < HARMONIC_FLOOR_DB, -np.inf, found))

    open_thd, closed_thd = thd_of(amplitude), thd_of(closed)
    open_db, closed_db = db(amplitude), db(closed)
    return [
        Distortion(
            float(target[i]),
            float(open_thd[i]),
            tuple(float(x) for x in open_db[i]),
            float(closed_thd[i]),
            tuple(float(x) for x in closed_db[i]),
        )
        for i in range(target.size)
    ]


def _next_drive(
    drive: NDArray[np.float64],
    fundamental: NDArray[np.float64],
    target: NDArray[np.float64],
    ratio: NDArray[np.float64],
    before: tuple[NDArray[np.float64], NDArray[np.float64]] | None,
) -> NDArray[np.float64]:
    """The next drive amplitude: the secant through the last two (drive, fundamental)
    pairs where there are two and they differ, else the drive scaled by the ratio of the
    fundamental asked for to the one obtained (the transfer is near proportional)."""
    scaled = drive * ratio
    if before is None:
        return scaled
    last_drive, last_fundamental = before
    rise = fundamental - last_fundamental
    run = drive - last_drive
    with np.errstate(divide="ignore", invalid="ignore"):
        secant = drive + (target - fundamental) * run / rise
    usable = (rise != 0.0) & np.isfinite(secant) & (secant > 0.0)
    return np.asarray(np.where(usable, secant, scaled))


@dataclass(frozen=True)
class Crossover(KindFigures):
    """Crossover and bias of a push-pull stage (ohm, dB, A, V).

    The output impedance at the stage's output and the chain's gain to it, in conduction
    (the modelled half at its conduction current) and at idle (both halves at I_q); inside
    a loop those are the closed loop's. ``optimum_quiescent_a`` is Oliver's V_T/R_E.
    ``thd`` holds, for the output stage driving the load, the distortion at the nominal
    level, 1 W and 1 dB below the chain's clip (the contract's ``output.thd``; a level the
    chain cannot reach is left out).
    """

    title = "crossover and bias"

    stage: str
    in_loop: bool = figure("inside a feedback loop (closed-loop figures)")
    zout_ohm: float = figure("output impedance, conduction", "ohm")
    idle_zout_ohm: float = figure("output impedance, idle", "ohm", node_key="idle_zout_ohm")
    gain_step_db: float = figure("gain step, idle over conduction", "dB", node_key="gain_step_db")
    quiescent_a: float = figure()
    optimum_quiescent_a: float | None = figure(
        "optimum quiescent, I_q R_E = V_T", "A", node_key="optimum_quiescent_a"
    )
    thd_nominal: str | None = figure("THD, nominal level")
    thd_one_watt: str | None = figure("THD, 1 W")
    thd_below_clip: str | None = figure("THD, 1 dB below clip")
    thd: tuple[dict[str, Any], ...] = figure(output_key="thd")
    levels: tuple[Distortion, ...] = figure()


def crossover_figures(context: StageContext) -> Crossover:
    """The stage's idle and conduction figures, its optimum quiescent and its distortion."""
    stage, k = context.stage, context.index
    idle = context.at_idle()
    first, last = context.loop_section(k)
    in_loop = first < k <= last
    v_t = float(om.thermal_voltage(context.env.temperature_k))
    r_emitter = stage.number("emitter_resistors")
    optimum = v_t / r_emitter if r_emitter > 0.0 else None
    levels: list[Distortion] = []
    texts: list[str | None] = [None, None, None]
    entries: list[dict[str, Any]] = []
    if context.is_last:
        levels, texts, entries = _distortion(context, v_t, in_loop, first)
    return Crossover(
        stage=stage.name,
        in_loop=in_loop,
        zout_ohm=abs(context.output_impedance(k)),
        idle_zout_ohm=abs(idle.output_impedance(k)),
        gain_step_db=float(20.0 * np.log10(idle.gain(k) / context.gain(k))),
        quiescent_a=stage.number("quiescent"),
        optimum_quiescent_a=optimum,
        thd_nominal=texts[0],
        thd_one_watt=texts[1],
        thd_below_clip=texts[2],
        thd=tuple(entries),
        levels=tuple(levels),
    )


def _distortion(
    context: StageContext, v_t: float, in_loop: bool, first: int
) -> tuple[list[Distortion], list[str | None], list[dict[str, Any]]]:
    """Distortion at the nominal level, 1 W and 1 dB below the chain's clip level (the
    first stage to reach its limit, the controls as set)."""
    k = context.index
    r_load = context.load_ohm
    # The chain's clip with the controls as set: the first stage to reach its limit.
    clips = [context.source_clip(j) for j in range(context.last_index + 1)]
    peaks = [clip[0] for clip in clips if clip is not None]
    clip_vpk = min(peaks) * context.gain(k) if peaks else None
    wanted = [context.output_nominal_vpk, float(np.sqrt(2.0 * r_load))]
    if clip_vpk is not None:
        wanted.append(clip_vpk * 10.0 ** (-BELOW_CLIP_DB / 20.0))
    reachable = [v for v in wanted if clip_vpk is None or v < clip_vpk]
    factor = None
    if in_loop:
        n = np.arange(1, HARMONICS + 1, dtype=float)
        t = context.return_ratio(first, n * context.reference_hz)
        factor = None if t is None else np.abs(1.0 + t)
    upper, lower = pair_laws(context.stage, context.env)
    found = harmonics(reachable, upper, lower, r_load, v_t, factor) if reachable else []
    by_level = {d.level_vpk: d for d in found}
    texts: list[str | None] = []
    entries: list[dict[str, Any]] = []
    for v in wanted:
        d = by_level.get(float(v))
        texts.append(None if d is None else f"{100.0 * d.thd:.3g} % at {v / np.sqrt(2.0):.3g} Vrms")
        if d is not None:
            entries.append(
                {
                    "level_vrms": v / np.sqrt(2.0),
                    "thd_percent": 100.0 * d.thd,
                    "harmonics_db": list(d.harmonics_db),
                    "open_loop_thd_percent": 100.0 * d.open_thd,
                }
            )
    while len(texts) < 3:
        texts.append(None)
    return found, texts, entries
