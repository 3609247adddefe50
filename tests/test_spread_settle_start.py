"""Where the spread's settling of the power tree starts (`chainbudget.spread.settle`): the
Jacobian of g(x) = F(x) - x at the nominal check's settled rails, by forward differences
of the spread's own F over the nominal parts (`nominal_jacobian`), against central
differences of the check's F (`chainbudget.budget.supplies`, a separate path: one chain
solved per rail raised, its supplies' states worked out as the check does), the textbook
difference quotient (Dennis & Schnabel, Numerical Methods for Unconstrained Optimization
and Nonlinear Equations, sec. 5.4; from memory). And a batch of trials settled from it:
the same rails as from J = -I, in fewer evaluations.

The mains practice amplifier: four moving rails (a split rectified rail, a filtered
pre-amp rail fed from it and a divided half rail), coupled both ways.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from chainbudget.budget import compute
from chainbudget.budget import supplies as check_supplies
from chainbudget.chainfile import load_chain
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.parts import chain_parts
from chainbudget.spread.settle import settle_trials

ROOT = Path(__file__).resolve().parents[1]
CHAIN = ROOT / "chains" / "practice_amp_mains.toml"
#: The check's own step for its central differences, V.
STEP_V = 1e-3


def _evaluator() -> Evaluator:
    chain = load_chain(CHAIN)
    parts, _ = chain_parts(chain)
    return Evaluator(chain, tuple(parts), compute(chain), check_supplies.settle(chain).voltages)


def test_the_start_is_the_checks_own_jacobian() -> None:
    """Each entry of the spread's start within 1e-4 of the check's F differenced centrally
    (the entries run from 1e-4 to 1.13; the largest off-diagonal, the pre-amp rail's pull
    by the main rail, is 0.10): rows and columns in place, -I in."""
    evaluate = _evaluator()
    chain = evaluate.chain
    settled = check_supplies.settle(chain)
    rails = check_supplies.moving_rails(chain)
    tree = check_supplies._Tree(chain, "low", chain.settings.reference)
    x0 = {r: float(settled.voltages[r].low) for r in rails}
    expected = -np.eye(len(rails))
    for i, r in enumerate(rails):
        up = tree(settled.states, {**x0, r: x0[r] + STEP_V})[0]
        down = tree(settled.states, {**x0, r: x0[r] - STEP_V})[0]
        expected[:, i] += [(up[q] - down[q]) / (2.0 * STEP_V) for q in rails]
    assert abs(expected[0, 2]) > 0.05  # the coupling this test is about is there
    np.testing.assert_allclose(evaluate._reference_start, expected, rtol=0, atol=1e-4)


def test_trials_settled_from_the_start_land_where_they_did_from_substitution() -> None:
    """A batch of 40 trials (seed 7): every rail the same within twice the settling's
    tolerance from the nominal Jacobian as from J = -I (the first step plain
    substitution), in fewer evaluations."""
    evaluate = _evaluator()
    chain = evaluate.chain
    positions = np.random.default_rng(7).random((40, len(evaluate.parts)))
    values = evaluate.values(positions)
    drawn_chain, betas = evaluate._drawn_chain(values)

    def settled(start: np.ndarray | None):  # type: ignore[no-untyped-def]
        tree = evaluate._trial_tree(False, drawn_chain, betas, values, len(positions))
        assert tree is not None
        return settle_trials(tree, start)

    started, plain = settled(evaluate._reference_start), settled(None)
    assert started.residual_v <= 1e-9 and plain.residual_v <= 1e-9
    for rail in check_supplies.moving_rails(chain):
        np.testing.assert_allclose(
            started.tree.voltages[rail].low, plain.tree.voltages[rail].low, rtol=0, atol=2e-9
        )
    assert started.evaluations < plain.evaluations
