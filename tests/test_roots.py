"""Brent's method (chainbudget.roots) against scipy.optimize.brentq, an independent
implementation of the same method, and against roots known in closed form."""

from __future__ import annotations

import math

import pytest
from scipy.optimize import brentq

from chainbudget.roots import NoBracket, bracketed_root

CASES = [
    (lambda x: x * x - 2.0, 0.0, 2.0, math.sqrt(2.0)),
    (lambda x: math.cos(x) - x, 0.0, 1.0, None),
    (lambda x: math.exp(x) - 10.0, -5.0, 5.0, math.log(10.0)),
    (lambda x: (x - 1e-3) * (1.0 + x * x), -1.0, 1.0, 1e-3),
    # A diode-like law: a steep exponential against a line (the bias loop's shape).
    (lambda x: 0.05 * math.log(x / 1e-3) + 0.2 * x - 0.3, 1e-3, 10.0, None),
    (lambda x: math.tanh(50.0 * (x - 0.3)), -1.0, 4.0, 0.3),
]


@pytest.mark.parametrize(("f", "a", "b", "exact"), CASES)
def test_roots_agree_with_scipy_and_closed_forms(f, a, b, exact) -> None:  # type: ignore[no-untyped-def]
    found = bracketed_root(f, a, b, xtol=1e-15, rtol=1e-13)
    reference = brentq(f, a, b, xtol=1e-15, rtol=1e-13)
    assert found == pytest.approx(reference, rel=1e-12, abs=1e-14)
    if exact is not None:
        assert found == pytest.approx(exact, rel=1e-12, abs=1e-14)
    assert bracketed_root(f, b, a, xtol=1e-15, rtol=1e-13) == pytest.approx(found, rel=1e-12)


def test_no_bracket_is_refused() -> None:
    with pytest.raises(NoBracket):
        bracketed_root(lambda x: x * x + 1.0, -1.0, 1.0)
