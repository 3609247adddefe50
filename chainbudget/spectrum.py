"""Noise spectra: log-frequency grids, PSD integration and the elementary noise sources.

Everything is in plain SI floats and ndarrays: Hz, ohm, K, A, V^2/Hz, A^2/Hz. The book
section numbers cited in the Notes are quoted from memory.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

# Exact by definition since the 2019 revision of the SI (SI Brochure, 9th ed., sec. 2.2;
# CODATA 2018 lists them as exact): written out here rather than read from scipy.constants,
# whose import costs a command's start-up a tenth of a second (tests/test_spectrum.py holds
# them against scipy's CODATA tables).
boltzmann_k: float = 1.380649e-23  # J/K
elementary_charge: float = 1.602176634e-19  # C
zero_celsius_k: float = 273.15  # K: 0 degC, by the definition of the Celsius scale


def log_frequency_grid(f_lo: float, f_hi: float, points_per_decade: int) -> NDArray[np.float64]:
    """Logarithmically spaced frequencies from `f_lo` to `f_hi`, both ends exact.

    Parameters
    ----------
    f_lo, f_hi : float
        Band edges, Hz, with 0 < f_lo < f_hi.
    points_per_decade : int
        Minimum density of the grid, points per decade (>= 1).

    Returns
    -------
    ndarray of float64, shape (n,)
        Ascending frequencies, Hz, equally spaced in log f; ``grid[0] == f_lo`` and
        ``grid[-1] == f_hi`` exactly.

    Notes
    -----
    The number of intervals is ceil(points_per_decade * log10(f_hi / f_lo)) rounded up
    to an even number (at least 2), so the spacing is at most 1/points_per_decade decade
    and the composite Simpson rule of :func:`integrate_psd` pairs every interval (an odd
    count would leave an end interval integrated at one order lower). 20 Hz to 20 kHz at
    20 per decade: 60 intervals, 61 points; at 15 per decade: 46 intervals, 47 points.
    """
    if not (0.0 < f_lo < f_hi) or not math.isfinite(f_hi):
        raise ValueError(f"need 0 < f_lo < f_hi < inf, got f_lo={f_lo!r}, f_hi={f_hi!r}")
    if points_per_decade < 1:
        raise ValueError(f"points_per_decade must be >= 1, got {points_per_decade!r}")
    decades = math.log10(f_hi / f_lo)
    # The small allowance keeps an exact number of decades (e.g. 3.0000000000000004) from
    # gaining a spurious extra interval through rounding.
    intervals = math.ceil(points_per_decade * decades - 1e-9)
    # An even count (>= 2) lets integrate_psd pair every interval in its Simpson rule.
    intervals = max(2, intervals + intervals % 2)
    grid = np.geomspace(f_lo, f_hi, intervals + 1)
    grid[0], grid[-1] = f_lo, f_hi
    return grid


def integrate_psd(f: ArrayLike, psd: ArrayLike, axis: int = -1) -> NDArray[np.float64]:
    r"""Integrate a power spectral density over frequency.

    Parameters
    ----------
    f : array_like, shape (F,)
        Frequency grid, Hz, strictly ascending and positive; log spacing is intended but
        any spacing is accepted.
    psd : array_like, shape (..., F, ...)
        Power spectral density on that grid (e.g. V^2/Hz or A^2/Hz); the frequency axis
        is `axis`, every other axis is a batch axis.
    axis : int, optional
        Axis of `psd` that runs along `f`. Default: the last.

    Returns
    -------
    ndarray of float64
        :math:`\int_{f_0}^{f_{F-1}} S(f)\,df` (e.g. V^2: the mean-square value in the band),
        shape of `psd` without `axis` (0-d for a 1-D `psd`).

    Notes
    -----
    The integral is rewritten over u = ln f,

    .. math::

        \int S(f)\,df = \int f\,S(f)\,\mathrm{d}(\ln f),

    and the composite Simpson rule is applied to g(u) = f S(f) on the nodes u_i = ln f_i
    (Burden & Faires, Numerical Analysis, sec. 4.4). Pairs of intervals [u0, u2] with
    widths h0, h1 use the three-point rule for unequal spacing,

    .. math::

        \int_{u_0}^{u_2} g\,du \approx \frac{h_0 + h_1}{6}\left[\left(2 - \frac{h_1}{h_0}
        \right) g_0 + \frac{(h_0 + h_1)^2}{h_0 h_1} g_1 + \left(2 - \frac{h_0}{h_1}\right)
        g_2\right],

    which is the usual (h/3)(g0 + 4 g1 + g2) when h0 = h1; for g = c e^u (white noise)
    the relative error is about h^4/180, 1e-6 at 20 points per decade. An odd number of
    intervals leaves one at the top end; it is integrated exactly under the parabola
    through the last three nodes (the same treatment as ``scipy.integrate.simpson``,
    the reference in the tests), an error of order h^4 rather than h^5 on that interval.
    :func:`log_frequency_grid` always makes an even number of intervals, so its grids
    avoid that. A two-point grid falls back to the trapezoid in u.

    Why this rule: on a log grid the nodes are uniform in u, and the spectra of noise
    work (white, 1/f corner, RC poles and zeros, weighting curves) are smooth functions
    of u (a pole becomes a sigmoid about one unit of u wide), so a fourth-order rule
    converges fast. Against ``scipy.integrate.quad`` over 20 Hz-20 kHz at 20 points per
    decade the error is below 1e-5 dB for white, 1/f-corner, A-weighted white and
    RC-low-passed spectra. The alternative considered, a piecewise power law (log-log
    linear) integrated exactly per interval, is exact for pure power laws but only
    second order at corners: 6e-3 dB on A-weighted white noise at 20 points per decade,
    about a thousand times worse. Features narrower than the grid spacing (resonances
    with Q well above the points per decade) are not resolved by any rule on that grid.
    """
    f_arr = np.asarray(f, dtype=np.float64)
    psd_arr = np.moveaxis(np.asarray(psd, dtype=np.float64), axis, -1)
    if psd_arr.shape[-1] != f_arr.size:
        raise ValueError(
            f"psd has {psd_arr.shape[-1]} points along axis {axis}, f has {f_arr.size}"
        )
    return np.asarray(psd_arr @ psd_weights(f_arr), dtype=np.float64)


def psd_weights(f: ArrayLike) -> NDArray[np.float64]:
    """The weights q_i of `integrate_psd`'s rule on the grid ``f``: the integral of a PSD S
    sampled there is sum_i q_i S(f_i) (the rule is linear in S: its Simpson weights in
    u = ln f times f_i, see `integrate_psd`). One product with them integrates every batch
    of spectra on that grid at once; a weighting |W(f_i)|^2 folds into them."""
    f_arr = np.asarray(f, dtype=np.float64)
    if f_arr.ndim != 1 or f_arr.size < 2:
        raise ValueError(f"f must be 1-D with at least 2 points, got shape {f_arr.shape}")
    if not (f_arr[0] > 0.0 and np.all(np.diff(f_arr) > 0.0)):
        raise ValueError("f must be positive and strictly ascending")
    h = np.diff(np.log(f_arr))
    n_intervals = h.size
    w = np.zeros(f_arr.size)
    if n_intervals == 1:
        w[:] = 0.5 * h[0]
        return np.asarray(w * f_arr)
    paired = n_intervals - n_intervals % 2  # intervals covered by Simpson pairs
    h0 = h[0:paired:2]
    h1 = h[1:paired:2]
    span = h0 + h1
    w[0:paired:2] += span / 6.0 * (2.0 - h1 / h0)
    w[1 : paired + 1 : 2] += span / 6.0 * span * span / (h0 * h1)
    w[2 : paired + 1 : 2] += span / 6.0 * (2.0 - h0 / h1)
    if n_intervals % 2:
        # Last interval under the parabola through the last three nodes.
        a, b = h[-2], h[-1]
        w[-1] += (2.0 * b * b + 3.0 * a * b) / (6.0 * (a + b))
        w[-2] += (b * b + 3.0 * a * b) / (6.0 * a)
        w[-3] -= b**3 / (6.0 * a * (a + b))
    return np.asarray(w * f_arr)


def thermal_voltage_psd(resistance_ohm: ArrayLike, temperature_k: ArrayLike) -> NDArray[np.float64]:
    """Open-circuit thermal (Johnson-Nyquist) noise voltage PSD of a resistor, V^2/Hz.

    Parameters
    ----------
    resistance_ohm : array_like
        Resistance, ohm.
    temperature_k : array_like
        Absolute temperature, K. Broadcasts with `resistance_ohm`.

    Returns
    -------
    ndarray of float64
        One-sided PSD 4 k T R, V^2/Hz.

    Notes
    -----
    S_v = 4 k T R (Nyquist, Phys. Rev. 32, 110 (1928); e.g. Horowitz & Hill, The Art of
    Electronics, 3rd ed., sec. 8.1.1), valid while h f << k T, i.e. throughout audio.
    k is the Boltzmann constant, exact in the 2019 SI (`boltzmann_k`).
    """
    k = boltzmann_k
    return np.asarray(
        4.0 * k * np.asarray(temperature_k, dtype=np.float64) * np.asarray(resistance_ohm),
        dtype=np.float64,
    )


def thermal_current_psd(resistance_ohm: ArrayLike, temperature_k: ArrayLike) -> NDArray[np.float64]:
    """Short-circuit thermal noise current PSD of a resistor, A^2/Hz.

    Parameters
    ----------
    resistance_ohm : array_like
        Resistance, ohm (> 0).
    temperature_k : array_like
        Absolute temperature, K.

    Returns
    -------
    ndarray of float64
        One-sided PSD 4 k T / R, A^2/Hz.

    Notes
    -----
    The Norton equivalent of :func:`thermal_voltage_psd`: S_i = S_v / R^2 = 4 k T / R
    (e.g. Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 8.1.1).
    """
    k = boltzmann_k
    return np.asarray(
        4.0 * k * np.asarray(temperature_k, dtype=np.float64) / np.asarray(resistance_ohm),
        dtype=np.float64,
    )


def shot_current_psd(current_a: ArrayLike) -> NDArray[np.float64]:
    """Shot noise current PSD of a DC current, A^2/Hz.

    Parameters
    ----------
    current_a : array_like
        DC current, A; its sign is ignored.

    Returns
    -------
    ndarray of float64
        One-sided PSD 2 q |I|, A^2/Hz.

    Notes
    -----
    S_i = 2 q I (Schottky's formula; e.g. Horowitz & Hill, The Art of Electronics,
    3rd ed., sec. 8.1.2), for carriers crossing a barrier independently (junction
    currents), flat through audio. q is the elementary charge, exact in the 2019 SI
    (`elementary_charge`).
    """
    q = elementary_charge
    return np.asarray(2.0 * q * np.abs(np.asarray(current_a, dtype=np.float64)), dtype=np.float64)


def flicker_psd(
    white_density: ArrayLike, corner_hz: ArrayLike, f: ArrayLike
) -> NDArray[np.float64]:
    """PSD of a white noise density with a 1/f corner, (unit)^2/Hz.

    Parameters
    ----------
    white_density : array_like
        White (high-frequency) noise density, e.g. V/sqrt(Hz) or A/sqrt(Hz).
    corner_hz : array_like
        1/f corner frequency f_c, Hz (0 for pure white noise).
    f : array_like
        Frequency, Hz (> 0). The three arguments broadcast: give batch parameters a
        trailing axis of length 1 to combine them with a frequency grid.

    Returns
    -------
    ndarray of float64
        e_n(f)^2 = e_n^2 (1 + f_c / f), in the square of the density's unit per Hz.

    Notes
    -----
    The usual model of an amplifier's input noise: a white floor plus a 1/f term that
    equals it at the corner frequency, where the PSD is twice (+3 dB over) the white
    value (e.g. Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 8.1.3). Its
    band integral has the closed form e_n^2 [(f_hi - f_lo) + f_c ln(f_hi / f_lo)].
    """
    f_arr = np.asarray(f, dtype=np.float64)
    if np.any(f_arr <= 0.0):
        raise ValueError("flicker_psd needs f > 0")
    density = np.asarray(white_density, dtype=np.float64)
    return np.asarray(density * density * (1.0 + np.asarray(corner_hz) / f_arr), dtype=np.float64)


def celsius_to_kelvin(t_degc: ArrayLike) -> NDArray[np.float64]:
    """Convert a temperature from degrees Celsius to kelvin.

    Parameters
    ----------
    t_degc : array_like
        Temperature, degC.

    Returns
    -------
    ndarray of float64
        Temperature, K.

    Notes
    -----
    T/K = t/degC + 273.15 (definition of the Celsius scale, SI Brochure 9th ed.);
    273.15 is `zero_celsius_k`.
    """
    return np.asarray(np.asarray(t_degc, dtype=np.float64) + zero_celsius_k, dtype=np.float64)
