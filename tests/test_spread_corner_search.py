"""The corner search of `chainbudget.spread.run._corners` against a brute-force enumeration
of every vertex of the parts' box, on figures written in the test whose one-at-a-time
sensitivities point to the wrong corner (an interaction between parts turns the slopes
round at the far vertex)."""

from __future__ import annotations

from collections.abc import Callable
from itertools import product

import numpy as np
import pytest
from numpy.typing import NDArray

from chainbudget.spread.run import MAX_CONFIRM_ROUNDS, _corners, _one_at_a_time

# Parts beside the one that turns their slopes: more than the search's rounds, so that
# one flip a round cannot reach the far vertex.
OTHERS = MAX_CONFIRM_ROUNDS + 2


def _turned(rows: NDArray[np.float64]) -> NDArray[np.float64]:
    """f = 20 x0 + sum_i x_i (1 - 1.5 x0), positions x in 0..1: at x0 = 1/2 each other
    part raises f (slope 0.25), at x0 = 1 it lowers it (slope -0.5). The top vertex is
    x0 = 1 with every other part at 0 (f = 20); the low one x0 = 0, others 0 (f = 0)."""
    x0, others = rows[:, 0], rows[:, 1:]
    return np.asarray(20.0 * x0 + others.sum(axis=1) * (1.0 - 1.5 * x0))


def _paired(rows: NDArray[np.float64]) -> NDArray[np.float64]:
    """Pairs that pull against each other: f = sum_k (a_k - x_2k)(x_2k+1 - b_k) with
    a, b between 0 and 1, so that each part's slope (its partner's distance from a_k or
    b_k) changes sign across the box."""
    a = np.array([0.4, 0.7, 0.55])
    b = np.array([0.3, 0.6, 0.45])
    return np.asarray(((a - rows[:, 0::2]) * (rows[:, 1::2] - b)).sum(axis=1))


Figure = Callable[[NDArray[np.float64]], NDArray[np.float64]]


class _Figure:
    """An evaluator of one figure: the shape `_corners` asks for."""

    def __init__(self, figure: Figure) -> None:
        self.figure = figure
        self.steps_of = {"f": "reference"}
        self.rows_asked = 0

    def __call__(
        self, rows: NDArray[np.float64], steps: object = None, shared: bool = False
    ) -> dict[str, NDArray[np.float64]]:
        self.rows_asked += len(rows)
        return {"f": self.figure(rows)}


def _brute_force(figure: Figure, n: int) -> tuple[float, float]:
    vertices = np.array(list(product((0.0, 1.0), repeat=n)))
    values = figure(vertices)
    return float(values.min()), float(values.max())


@pytest.mark.parametrize(("figure", "n"), [(_turned, OTHERS + 1), (_paired, 6)])
def test_the_corner_search_reaches_the_extreme_vertices_of_a_figure_its_slopes_misjudge(
    figure: Figure, n: int
) -> None:
    """Both corners equal the brute force's extremes over all 2^n vertices (exact: the
    figure is evaluated at the same vertices). On the first figure the start corner is
    wrong in every part but one and every flip that helps alone is found in one round:
    trying them at once reaches the vertex, where flipping one a round would stop short
    after `MAX_CONFIRM_ROUNDS`."""
    evaluate = _Figure(figure)
    side = evaluate(_one_at_a_time(n))["f"]
    deltas = {"f": side[1::2] - side[0::2]}
    found = _corners(evaluate, ["f"], deltas, {"f": np.ones(n, dtype=bool)}, n)  # type: ignore[arg-type]
    assert found["f"] == _brute_force(figure, n)
    if n > OTHERS:  # far fewer rows than the vertices: a search, not an enumeration
        assert evaluate.rows_asked < 2**n // 4
