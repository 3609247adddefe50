"""The settling step of the spread's power tree (`chainbudget.spread.settle`): Broyden's
quasi-Newton update and step, against the properties the method is known by.

References: Broyden, "A class of methods for solving nonlinear simultaneous equations",
Math. Comp. 19 (1965) 577 (the "good" update: the new matrix maps the last step dx onto
the change dg it caused, the secant equation); Gay, "Some convergence properties of
Broyden's method", SIAM J. Numer. Anal. 16 (1979) 623 (on an affine map, Broyden's method
finds the root in at most 2n steps); both from memory.
"""

from __future__ import annotations

import numpy as np

from chainbudget.spread.settle import _broyden_update, _newton_steps

RAILS = ("rail", "pre", "half")


def _affine(x: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """F(x) of a little tree per trial: a rail that sags with the load its stages draw
    from all three rails, a filtered rail fed from it, a half rail divided from that;
    one set of coefficients per trial (three trials)."""
    k = np.array([0.02, 0.05, 0.11])  # the rail's sag per volt of each rail, per trial
    rail = 18.0 - k * (x["rail"] + 0.5 * x["pre"] + 0.2 * x["half"])
    pre = rail - 0.03 * x["pre"] - 0.01 * x["half"]
    half = 0.5 * pre - 0.002 * x["half"]
    return {"rail": rail, "pre": pre, "half": half}


def test_the_update_satisfies_the_secant_equation() -> None:
    """After one update, J dx = dg for the last step of every trial that moved (Broyden's
    defining property); a trial that did not move keeps its matrix; J starts at -I."""
    trials = 3
    x0 = {r: np.full(trials, 10.0) for r in RAILS}
    j0 = _broyden_update(None, RAILS, x0, _affine(x0), None)
    np.testing.assert_array_equal(j0, np.broadcast_to(-np.eye(3), (trials, 3, 3)))
    x1 = {
        "rail": np.array([11.0, 12.0, 10.0]),
        "pre": np.array([10.5, 9.0, 10.0]),
        "half": np.array([5.0, 5.5, 10.0]),
    }  # the third trial did not move
    y0, y1 = _affine(x0), _affine(x1)
    j1 = _broyden_update(j0, RAILS, x1, y1, (x0, y0))
    dx = np.stack([x1[r] - x0[r] for r in RAILS], axis=1)
    dg = np.stack([(y1[r] - x1[r]) - (y0[r] - x0[r]) for r in RAILS], axis=1)
    np.testing.assert_allclose(np.einsum("trs,ts->tr", j1, dx)[:2], dg[:2], rtol=1e-12)
    np.testing.assert_array_equal(j1[2], j0[2])


def test_broyden_finds_an_affine_trees_rails_within_twice_their_count_steps() -> None:
    """On the affine tree, x <- x + d with J d = -g(x) and Broyden's update reaches the
    root to 1e-9 V within 2 x 3 = 6 evaluations in every trial (Gay 1979), where each
    rail's own secant (the fallback) has not (a filtered rail reads its parent's move as
    its own slope)."""
    trials = 3
    x = {r: np.full(trials, 15.0) for r in RAILS}
    previous, jacobian = None, None
    for _ in range(6):
        y = _affine(x)
        jacobian = _broyden_update(jacobian, RAILS, x, y, previous)
        step = _newton_steps(jacobian, np.stack([y[r] - x[r] for r in RAILS], axis=1))
        assert np.all(np.isfinite(step))
        previous = (x, y)
        x = {r: x[r] + step[:, i] for i, r in enumerate(RAILS)}
    y = _affine(x)
    assert max(float(np.max(np.abs(y[r] - x[r]))) for r in RAILS) < 1e-9

    x = {r: np.full(trials, 15.0) for r in RAILS}
    last = None
    for _ in range(6):
        y = _affine(x)
        stepped = {}
        for r in RAILS:
            slope = np.zeros(trials)
            if last is not None:
                dx = x[r] - last[0][r]
                slope = np.minimum(
                    np.where(dx != 0, (y[r] - last[1][r]) / np.where(dx != 0, dx, 1), 0), 0
                )
            stepped[r] = x[r] + (y[r] - x[r]) / (1.0 - slope)
        last = (x, y)
        x = stepped
    y = _affine(x)
    assert max(float(np.max(np.abs(y[r] - x[r]))) for r in RAILS) > 1e-9


def test_a_near_singular_matrix_gives_no_step() -> None:
    """A trial whose matrix is (near) singular, or not finite, gets NaN (the settle then
    takes each rail's own secant for it); the others their Newton step, J d = -g."""
    jacobian = np.stack(
        [-np.eye(2), np.array([[1.0, 1.0], [1.0, 1.0 + 1e-14]]), np.full((2, 2), np.nan)]
    )
    g = np.array([[0.3, -0.2], [1.0, 1.0], [1.0, 1.0]])
    found = _newton_steps(jacobian, g)
    np.testing.assert_allclose(found[0], [0.3, -0.2], rtol=1e-15)
    assert np.all(np.isnan(found[1:]))
