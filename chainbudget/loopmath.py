"""Feedback-loop figures from a return ratio sampled on a frequency axis: the loop gain at
the reference, the unity-gain frequency and the phase margin."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray


@dataclass(frozen=True)
class Crossings:
    """Per row of a return ratio: loop gain at the axis' first point (dB), the frequency
    where |T| first falls through 1 (Hz) and the phase margin there (deg); NaN where |T|
    never falls through 1 on the axis (under 1 from the start: no loop gain to speak of)."""

    loop_gain_db: NDArray[np.float64]
    unity_gain_hz: NDArray[np.float64]
    phase_margin_deg: NDArray[np.float64]


def crossings(frequency: ArrayLike, t: ArrayLike) -> Crossings:
    """Loop gain, unity-gain frequency and phase margin of return ratios on an ascending axis.

    Parameters
    ----------
    frequency : array_like, shape (F,)
        Ascending frequencies, Hz; the first is the reference the phase is unwrapped from.
    t : array_like, shape (..., F)
        Return ratios; the figures have the leading shape.

    Notes
    -----
    The unity-gain frequency is the lowest f on the axis where |T| falls through 1,
    interpolated linearly in log |T| against log f between the grid points either side;
    the phase margin is 180 deg + arg T there, arg T unwrapped from the first point and
    interpolated the same way (the usual definition, e.g. Franco, Design with Operational
    Amplifiers and Analog Integrated Circuits, 4th ed., sec. 8.1; Ogata, Modern Control
    Engineering, 5th ed., sec. 7-6; both from memory).
    """
    f = np.asarray(frequency, dtype=float)
    ratio = np.asarray(t, dtype=complex)
    lead = ratio.shape[:-1]
    rows = ratio.reshape(-1, f.size)
    magnitude = np.abs(rows)
    above = magnitude >= 1.0
    falls = above[:, :-1] & ~above[:, 1:]
    found = falls.any(axis=1)
    i = np.argmax(falls, axis=1)[:, None]
    phase = np.unwrap(np.angle(rows), axis=1)

    def at(values: NDArray[np.float64], shift: int) -> NDArray[np.float64]:
        return np.take_along_axis(values, i + shift, axis=1)[:, 0]

    log_f = np.broadcast_to(np.log(f), rows.shape)
    with np.errstate(divide="ignore"):
        log_m = np.log(magnitude)
        loop_gain_db = 20.0 * np.log10(magnitude[:, 0])
    m_lo, m_hi = at(log_m, 0), at(log_m, 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(m_lo != m_hi, m_lo / (m_lo - m_hi), 0.0)
    # A row that never falls through unity has no crossing: its "share" is between two
    # arbitrary points and may be huge, so it is not carried into exp (an overflow).
    share = np.where(found, share, 0.0)
    unity = np.exp(at(log_f, 0) + share * (at(log_f, 1) - at(log_f, 0)))
    angle = at(phase, 0) + share * (at(phase, 1) - at(phase, 0))
    margin = 180.0 + np.degrees(angle)
    return Crossings(
        loop_gain_db.reshape(lead),
        np.where(found, unity, np.nan).reshape(lead),
        np.where(found, margin, np.nan).reshape(lead),
    )


def stability_axis(
    reference_hz: float, fastest_hz: float, per_decade: int = 40
) -> NDArray[np.float64]:
    """The axis loop margins are read on: from the reference frequency to 100 times the
    fastest op-amp's gain-bandwidth (or second pole), ``per_decade`` points a decade, Hz.

    Notes
    -----
    A loop's unity-gain frequency lies below its op-amp's gain-bandwidth product times the
    gain the rest of the loop adds; a hundredfold covers any loop an audio output stage
    adds gain to (ours: a buffer loop's own gain is at most unity)."""
    top = 100.0 * max(fastest_hz, reference_hz)
    decades = math.log10(top / reference_hz)
    points = max(int(math.ceil(decades * per_decade)) + 1, 2)
    return np.asarray(np.geomspace(reference_hz, top, points), dtype=float)
