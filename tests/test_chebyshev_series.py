"""The reservoir interpolant's evaluation (`chainbudget.supplies.rectified.spread.
_chebyshev_series`): the Chebyshev series sum_k c_k T_k(x), against numpy's own
evaluation by Clenshaw's recurrence (`numpy.polynomial.chebyshev.chebval`, an
independent implementation) and against T_k(cos t) = cos(k t) (Abramowitz & Stegun,
Handbook of Mathematical Functions, 22.3.15, from memory); and a trial's values the same
bits whatever batch it is evaluated in."""

from __future__ import annotations

import numpy as np
from numpy.polynomial import chebyshev

from chainbudget.supplies.rectified.spread import GRID_POINTS, _chebyshev_series


def test_the_series_equals_clenshaws_evaluation() -> None:
    """17 coefficients (the grid's), 40 columns, 200 points across [-1, 1]: equal to
    chebval within 1e-13 of the columns' scale."""
    rng = np.random.default_rng(4)
    x = rng.uniform(-1.0, 1.0, 200)
    c = rng.normal(size=(GRID_POINTS, 40))
    found = _chebyshev_series(x, c)
    assert found.shape == (200, 40)
    np.testing.assert_allclose(found, chebyshev.chebval(x, c).T, rtol=0, atol=1e-13)


def test_each_basis_polynomial_is_cos_k_t() -> None:
    """A unit coefficient on T_k alone gives cos(k t) at x = cos t, for every k of the
    grid; atol 1e-13."""
    t = np.linspace(0.0, np.pi, 101)
    found = _chebyshev_series(np.cos(t), np.eye(GRID_POINTS))
    expected = np.cos(np.outer(t, np.arange(GRID_POINTS)))
    np.testing.assert_allclose(found, expected, rtol=0, atol=1e-13)


def test_a_trials_values_do_not_depend_on_the_batch_it_is_in() -> None:
    """Rows of a 151-point batch evaluated alone or in smaller batches are the same bits
    (a trial's figures do not depend on the trials beside it)."""
    rng = np.random.default_rng(5)
    x = rng.uniform(-1.0, 1.0, 151)
    c = rng.normal(size=(GRID_POINTS, 1860))
    whole = _chebyshev_series(x, c)
    for part in (slice(0, 1), slice(0, 7), slice(3, 100), slice(64, 151)):
        np.testing.assert_array_equal(_chebyshev_series(x[part], c), whole[part])
