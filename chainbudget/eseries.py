"""IEC 60063 preferred-number series (E6 to E96) and picking resistors from them."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

# Mantissas in hundredths of a decade (100 = 1.00). Integers, so decade scaling is exact.
# E24 is the standard's table: it departs from round(10**(i/24), 1) at 2.7, 3.0, 3.3, 3.6,
# 3.9, 4.3, 4.7 and 8.2 (the historical values were kept), so it is written out, not computed.
_E24_HUNDREDTHS = (
    100, 110, 120, 130, 150, 160, 180, 200, 220, 240, 270, 300,
    330, 360, 390, 430, 470, 510, 560, 620, 680, 750, 820, 910,
)  # fmt: skip

# E48 and E96 follow round(100 * 10**(i/n)) exactly (three significant figures).
_E96_HUNDREDTHS = tuple(int(round(100.0 * 10.0 ** (i / 96.0))) for i in range(96))

_SERIES_HUNDREDTHS: dict[str, tuple[int, ...]] = {
    "E6": _E24_HUNDREDTHS[::4],
    "E12": _E24_HUNDREDTHS[::2],
    "E24": _E24_HUNDREDTHS,
    "E48": _E96_HUNDREDTHS[::2],
    "E96": _E96_HUNDREDTHS,
}

# Relative slack when comparing a computed value against a series value, so that arithmetic
# residue (4699.999999999 for 4.7 kohm) does not skip the value it stands for.
_MATCH_RTOL = 1e-9
#: The same slack, for code that must know where a rounding to the series changes.
MATCH_RTOL = _MATCH_RTOL


def _hundredths(name: str) -> NDArray[np.int64]:
    key = name.strip().upper()
    if key not in _SERIES_HUNDREDTHS:
        known = ", ".join(_SERIES_HUNDREDTHS)
        raise ValueError(f"unknown E series {name!r}; known: {known}")
    return np.asarray(_SERIES_HUNDREDTHS[key], dtype=np.int64)


def _scale(hundredths: NDArray[np.int64], decade: NDArray[np.int64]) -> NDArray[np.float64]:
    """Series value ``hundredths/100 * 10**decade``, correctly rounded to the nearest float."""
    exponent = decade - 2
    power = 10.0 ** np.abs(exponent)  # exact for the exponents met in practice (|e| <= 22)
    return np.where(exponent >= 0, hundredths * power, hundredths / power)


def _candidates(values: NDArray[np.float64], name: str) -> NDArray[np.float64]:
    """Series values in the decades around each of ``values``, shape (..., 3 * n)."""
    mantissas = _hundredths(name)
    decade = np.floor(np.log10(values)).astype(np.int64)
    # One decade either side absorbs any floor(log10) error at decade boundaries.
    decades = decade[..., np.newaxis] + np.array([-1, 0, 1])
    grid = _scale(mantissas[np.newaxis, :], decades[..., np.newaxis])
    return grid.reshape(*values.shape, -1)


def _positive(value: ArrayLike) -> NDArray[np.float64]:
    arr = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(arr) & (arr > 0.0)):
        raise ValueError(f"E-series values are positive and finite, got {value!r}")
    return arr


def series(name: str) -> tuple[float, ...]:
    """One decade of a preferred-number series, 1.0 up to (not including) 10.

    Parameters
    ----------
    name : str
        ``"E6"``, ``"E12"``, ``"E24"``, ``"E48"`` or ``"E96"`` (case-insensitive).

    Returns
    -------
    tuple of float
        The series mantissas in ascending order.

    Notes
    -----
    IEC 60063 (preferred number series for resistors and capacitors). E6, E12 and E24 are
    the standard's tables; E12 is every second E24 value and E6 every fourth. E48 and E96
    are round(100 * 10**(i/n)) / 100, i = 0 .. n-1; E48 is every second E96 value.
    """
    return tuple(float(h) / 100.0 for h in _hundredths(name))


def values_between(name: str, lo: float, hi: float) -> NDArray[np.float64]:
    """All values of a series in the closed interval [lo, hi], across decades, ascending.

    Parameters
    ----------
    name : str
        Series name, see :func:`series`.
    lo, hi : float
        Interval ends (same unit as the result, e.g. ohm); ``0 < lo <= hi``.

    Returns
    -------
    ndarray
        Series values ``m * 10**k`` with ``lo <= value <= hi`` (ends matched to 1e-9
        relative, so 4.7e3 counts as inside [4.7e3, 1e4] even after arithmetic residue).

    Notes
    -----
    IEC 60063: each series repeats by decade, ``m * 10**k`` for every integer k.
    """
    lo_f = float(_positive(lo))
    hi_f = float(_positive(hi))
    if hi_f < lo_f:
        raise ValueError(f"empty interval [{lo_f}, {hi_f}]")
    mantissas = _hundredths(name)
    decades = np.arange(np.floor(np.log10(lo_f)) - 1, np.floor(np.log10(hi_f)) + 2, dtype=np.int64)
    grid = _scale(mantissas[np.newaxis, :], decades[:, np.newaxis]).ravel()
    keep = (grid >= lo_f * (1.0 - _MATCH_RTOL)) & (grid <= hi_f * (1.0 + _MATCH_RTOL))
    return np.asarray(grid[keep], dtype=float)


def nearest(value: float, name: str) -> float:
    """Series value closest to ``value`` on a logarithmic scale (smallest ratio error).

    Notes
    -----
    The E series are geometric (IEC 60063), so "closest" is measured as |log(v / value)|:
    the pick with the smallest relative error. An exact tie between two neighbours (value
    at their geometric mean) goes to the smaller one.
    """
    v = _positive(value)
    cands = _candidates(v[np.newaxis], name)[0]
    distance = np.abs(np.log(cands / v))
    return float(cands[np.argmin(distance)])  # argmin takes the first, i.e. smaller, on ties


def largest_at_most(value: float, name: str) -> float:
    """Largest series value not above ``value`` (1e-9 relative slack).

    Notes
    -----
    Used where a resistor must not exceed a bound (e.g. a bleeder that must draw at least
    a given current). Series per IEC 60063.
    """
    v = _positive(value)
    return float(_floor_to_series(v[np.newaxis], name)[0])


def smallest_at_least(value: float, name: str) -> float:
    """Smallest series value not below ``value`` (1e-9 relative slack).

    Notes
    -----
    Used where a part must meet at least a bound. Series per IEC 60063.
    """
    v = _positive(value)
    return float(_ceil_to_series(v[np.newaxis], name)[0])


def _floor_to_series(values: NDArray[np.float64], name: str) -> NDArray[np.float64]:
    cands = _candidates(values, name)
    ok = cands <= values[..., np.newaxis] * (1.0 + _MATCH_RTOL)
    return np.asarray(np.max(np.where(ok, cands, -np.inf), axis=-1), dtype=float)


def _ceil_to_series(values: NDArray[np.float64], name: str) -> NDArray[np.float64]:
    cands = _candidates(values, name)
    ok = cands >= values[..., np.newaxis] * (1.0 - _MATCH_RTOL)
    return np.asarray(np.min(np.where(ok, cands, np.inf), axis=-1), dtype=float)


def best_divider(
    target_v: float,
    vref: float,
    iadj: float,
    name: str = "E96",
    lower_range: tuple[float, float] = (100.0, 10e3),
) -> tuple[float, float, float, float]:
    """Feedback divider from one series that sets an adjustable regulator nearest a target.

    Parameters
    ----------
    target_v : float
        Wanted output voltage, V; must exceed ``vref``.
    vref : float
        Reference voltage between the output and adjust pins, V.
    iadj : float
        Current out of the adjust pin, A (>= 0); it flows to ground through ``upper``.
    name : str, optional
        Series for both resistors, default ``"E96"``.
    lower_range : (float, float), optional
        Allowed values of ``lower``, the resistor across the reference, ohm. The default 100 ohm to
        10 kohm keeps the divider current (Vref/lower, 0.1 to 12.5 mA at 1.25 V) large
        against ``iadj`` and not wasteful.

    Returns
    -------
    upper, lower : float
        Named as in the chain format: ``upper`` from the adjust pin to ground, ``lower``
        from the output to the adjust pin (across the reference), ohm.
    vout : float
        Output voltage with that pair, V (same equation as
        :func:`chainbudget.supplymath.adjustable_output`).
    error_fraction : float
        Signed relative error ``(vout - target_v) / target_v``.

    Notes
    -----
    Vout = Vref (1 + upper/lower) + Iadj * upper, the adjustable three-terminal regulator
    equation (e.g. Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 9, from memory).

    Search: for every allowed lower value (vectorised), the exact upper is
    (target - Vref) / (Vref/lower + Iadj); since Vout rises monotonically with upper, the
    best series upper for that lower is one of the two series values bracketing it. Those
    2 x N pairs therefore contain the optimum over all upper x lower pairs.

    Tie-break: among pairs whose |error| is within 1e-9 V of the best (equal ratios in
    different decades give equal Vout when Iadj = 0), the smallest lower resistor wins:
    more divider current, so Iadj and its spread matter least and more of a minimum-load
    requirement is met.
    """
    if not target_v > vref > 0.0:
        raise ValueError(f"need target_v > vref > 0, got target {target_v} V, vref {vref} V")
    if iadj < 0.0:
        raise ValueError(f"iadj must be >= 0, got {iadj} A")
    lowers = values_between(name, *lower_range)
    if lowers.size == 0:
        raise ValueError(f"no {name} value in lower_range {lower_range}")
    exact_upper = (target_v - vref) / (vref / lowers + iadj)
    upper_pair = np.stack([_floor_to_series(exact_upper, name), _ceil_to_series(exact_upper, name)])
    lower_pair = np.broadcast_to(lowers, upper_pair.shape)
    upper_flat = upper_pair.ravel()
    lower_flat = lower_pair.ravel()
    vout = vref * (1.0 + upper_flat / lower_flat) + iadj * upper_flat
    abs_err = np.abs(vout - target_v)
    near_best = abs_err <= abs_err.min() + 1e-9
    # lexsort: last key is primary. Among near-best pairs, smallest lower, then smallest error.
    order = np.lexsort((abs_err, lower_flat, ~near_best))
    k = int(order[0])
    return (
        float(upper_flat[k]),
        float(lower_flat[k]),
        float(vout[k]),
        float((vout[k] - target_v) / target_v),
    )
