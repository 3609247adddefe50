"""The spread's evaluation by steps: a corner row asks only for the step its figure comes
from (`Evaluator.steps_of`), and that step's figures must be the ones the whole
evaluation gives. The whole evaluation is itself checked against the check of each trial
written into the file (tests/test_spread.py and the other spread tests); here the claim
is only that leaving the other steps out changes nothing."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import load_chain
from chainbudget.spread.evaluate import STEPS, Evaluator
from chainbudget.spread.flags import is_flag
from chainbudget.spread.parts import chain_parts
from chainbudget.spread.run import _own_values

CHAINS = Path(__file__).resolve().parents[1] / "chains"


def _evaluator(name: str) -> Evaluator:
    chain = load_chain(CHAINS / name)
    parts, _ = chain_parts(chain)
    return Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


@pytest.mark.parametrize(
    "name", ["kitchen_radio_mains.toml", "busking_amp.toml", "violin_piezo_preamp.toml"]
)
def test_each_step_alone_gives_its_figures_as_the_whole_evaluation(name: str) -> None:
    """Six random rows: each step asked alone gives every figure `steps_of` gives it,
    equal to the whole evaluation's to 1e-12, and none of another step's (its solves
    were left out); every figure has a step."""
    evaluate = _evaluator(name)
    positions = np.random.default_rng(11).random((6, len(evaluate.parts)))
    whole = evaluate(positions, flags=True)
    steps = evaluate.steps_of
    assert set(steps) == set(whole)
    assert {"reference", "band", "noise", "drive"} <= set(steps.values())
    if name == "busking_amp.toml":  # its batteries' sag cost, its rails' low-edge clip
        assert {"low_edge", "sag_cost"} <= set(steps.values())
    if name == "violin_piezo_preamp.toml":  # its tone stages' boosts (a step of their own)
        assert "staging" in set(steps.values())
    for step in sorted(set(steps.values())):
        alone = evaluate(positions, flags=True, steps=frozenset((step,)))
        own = [p for p, s in steps.items() if s == step]
        for path in own:
            np.testing.assert_allclose(alone[path], whole[path], rtol=1e-12, atol=0, err_msg=path)
        # the supplies' figures come with every step, and the DC walk's with every step
        # past the supplies; no other step's figure is worked out
        carried = {"supplies"} if step == "supplies" else {"supplies", "dc"}
        assert {steps[p] for p in alone} <= carried | {step}, step
    assert set(steps.values()) <= STEPS | {"supplies", "dc"}


def test_own_values_are_each_rows_figure_of_the_whole_evaluation() -> None:
    """`_own_values` (what the corner search asks) gives, for rows owned by figures of
    different steps, the whole evaluation's value of each row's own figure (1e-9: the
    rows are solved in other batches, so round-off may differ)."""
    evaluate = _evaluator("kitchen_radio_mains.toml")
    steps = evaluate.steps_of
    owners = []
    for step in sorted(set(steps.values())):
        owners += [p for p, s in steps.items() if s == step and not is_flag(p)][:2]
    rows = np.random.default_rng(4).random((len(owners), len(evaluate.parts)))
    whole = evaluate(rows, flags=True)
    got = _own_values(evaluate, rows, owners)
    expected = np.array([whole[p][i] for i, p in enumerate(owners)])
    np.testing.assert_allclose(got, expected, rtol=1e-9, atol=1e-15)
