"""A scalar root in a bracket, by Brent's method, without importing scipy.optimize.

scipy.optimize's import costs a command's start-up about half the import floor
(docs/performance.md), for the few scalar roots a check needs (the bias's thermal loop, a
rectifier's suggested winding); `bracketed_root` finds them with the same method.
"""

from __future__ import annotations

import sys
from collections.abc import Callable

_EPS = sys.float_info.epsilon


class NoBracket(ValueError):
    """The function has the same sign at both ends of the interval."""


def bracketed_root(
    f: Callable[[float], float],
    a: float,
    b: float,
    *,
    xtol: float = 2e-12,
    rtol: float = 4.0 * _EPS,
    max_steps: int = 200,
) -> float:
    """A root of ``f`` between ``a`` and ``b`` (where ``f`` changes sign), to within
    ``xtol + rtol |x|``.

    Notes
    -----
    Brent's method (R. P. Brent, Algorithms for Minimization without Derivatives, 1973,
    ch. 4; the "zeroin" of Forsythe, Malcolm & Moler, Computer Methods for Mathematical
    Computations, 1977, sec. 7.2, from memory): inverse quadratic interpolation or the
    secant step while they shrink the bracket fast enough, bisection otherwise, so it
    never needs more steps than bisection would, by much. tests/test_roots.py holds it
    against ``scipy.optimize.brentq``.
    """
    fa, fb = float(f(a)), float(f(b))
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0.0) == (fb > 0.0):
        raise NoBracket(f"f({a}) = {fa} and f({b}) = {fb} have the same sign")
    c, fc = a, fa
    d = e = b - a
    for _ in range(max_steps):
        if (fb > 0.0) == (fc > 0.0):
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):  # b is the best estimate so far
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 0.5 * (xtol + rtol * abs(b)) + 2.0 * _EPS * abs(b)
        m = 0.5 * (c - b)
        if abs(m) <= tol or fb == 0.0:
            return b
        if abs(e) < tol or abs(fa) <= abs(fb):
            d = e = m  # bisection
        else:
            s = fb / fa
            if a == c:  # secant
                p, q = 2.0 * m * s, 1.0 - s
            else:  # inverse quadratic interpolation
                q, r = fa / fc, fb / fc
                p = s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0.0:
                q = -q
            else:
                p = -p
            if 2.0 * p < min(3.0 * m * q - abs(tol * q), abs(e * q)):
                e, d = d, p / q
            else:
                d = e = m
        a, fa = b, fb
        b += d if abs(d) > tol else (tol if m > 0.0 else -tol)
        fb = float(f(b))
    return b
