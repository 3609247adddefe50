"""The power trees of a group of chunks settled together (`Evaluator.__call__`,
`Evaluator._settled_rails`), each chunk then evaluating its trees once on the rails its
trials settled on (`settle_trials`'s ``at``): every figure as each chunk settling its own
trees alone gives it, the way a batch did before (a trial's F does not depend on the
trials beside it, and a settled trial takes no further step while others do:
`chainbudget.spread.settle`, module notes). The mains practice amplifier settles four
rails at the reference and again at the band's low edge.

To round-off, not bit for bit: the push-pull stage's Newton solves (its bias and output,
`chainbudget.stages.push_pull.crossover`) stop when every point of the batch has
converged, so a trial's last bits can depend on the batch it sits in (a trial alone
against the same trial among three others: 2e-15 relative on its output stage's gain).
On the examples' chunks the spread JSON is the same bytes either way
(docs/performance.md).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pytest

from chainbudget.budget import compute
from chainbudget.budget.analysis import frequency_axis
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import load_chain
from chainbudget.spread import evaluate as evaluate_module
from chainbudget.spread.evaluate import Evaluator, _grouped
from chainbudget.spread.parts import chain_parts

ROOT = Path(__file__).resolve().parents[1]
CHAIN = ROOT / "chains" / "practice_amp_mains.toml"
TRIALS_PER_CHUNK = 3


def test_chunks_settled_in_groups_give_each_chunks_own_figures(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """13 trials (seed 5) in chunks of 3, the chunks in groups (the group settles its
    trees once, each chunk evaluates them once more): every figure and flag within 1e-12
    relative of each chunk's `_batch` settling alone; and the group's rails within 1e-12 V
    of those a chunk settles on alone (the settling's tolerance is 1e-9 V)."""
    chain = load_chain(CHAIN)
    parts, _ = chain_parts(chain)
    monkeypatch.setattr(
        evaluate_module, "CHUNK_POINTS", TRIALS_PER_CHUNK * frequency_axis(chain).size
    )
    monkeypatch.setattr(evaluate_module, "WORKERS", 1)
    monkeypatch.setattr(evaluate_module, "GROUPS_PER_WORKER", 2)  # the five chunks: 3 + 2
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain).voltages)
    evaluate(np.full((1, len(parts)), 0.5))  # the caches, as a spread fills them first
    positions = np.random.default_rng(5).random((13, len(parts)))
    groups: list[Any] = []
    grouped = Evaluator._settled_rails

    def spy(self: Evaluator, rows: np.ndarray, steps: Any) -> Any:
        found = grouped(self, rows, steps)
        groups.append((rows, found))
        return found

    monkeypatch.setattr(Evaluator, "_settled_rails", spy)
    together = evaluate(positions, flags=True)
    assert [len(rows) for rows, _ in groups] == [9, 4]  # chunks 3+3+3, then 3+1
    alone = [
        evaluate._batch(positions[i : i + TRIALS_PER_CHUNK])
        for i in range(0, len(positions), TRIALS_PER_CHUNK)
    ]
    assert set(together) == set(alone[0])
    for path, values in together.items():
        expected = np.concatenate([a[path] for a in alone])
        np.testing.assert_allclose(values, expected, rtol=1e-12, atol=0, err_msg=path)
    rows, rails = groups[1]
    assert rails.low_edge is not None  # the low edge's rails were settled too
    own = evaluate._settled_rails(rows[:3], None)
    mine = rails.rows(slice(0, 3))
    assert mine.low_edge is not None and own.low_edge is not None
    for rail, value in own.reference.items():
        np.testing.assert_allclose(mine.reference[rail], value, rtol=0, atol=1e-12)
    for rail, value in own.low_edge.items():
        np.testing.assert_allclose(mine.low_edge[rail], value, rtol=0, atol=1e-12)


def test_groups_cover_the_chunks_in_order() -> None:
    """Every chunk in exactly one group, in order; at least four groups a worker where there
    are chunks enough; no group much above `SETTLE_GROUP_TRIALS` trials."""
    for chunks, size, workers in ((62, 134, 2), (14, 134, 2), (3, 134, 4), (400, 151, 2)):
        batches = [np.zeros((size, 1))] * chunks
        groups = _grouped(batches, workers)
        assert [i for g in groups for i in g] == list(range(chunks))
        assert len(groups) >= min(chunks, evaluate_module.GROUPS_PER_WORKER * workers)
        limit = evaluate_module.SETTLE_GROUP_TRIALS + size
        assert max(len(g) for g in groups) * size <= limit
