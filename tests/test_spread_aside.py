"""Work run beside the rest in a forked child (`chainbudget.spread.aside`): its result is
the work's own, and where the child cannot give it (the work raises, the child dies) the
parent does the work itself, so that an error is raised where it would be without the
child. The same for the trials' batches in forked workers (`forked_map`). And the
spread's corner search run aside, and its trials in workers, give the figures they give
in the process."""

from __future__ import annotations

import os
import threading

import numpy as np
import pytest
from test_spread import TONE_AND_VOLUME, _chain

from chainbudget.budget import compute
from chainbudget.budget.analysis import frequency_axis
from chainbudget.budget.supplies import settle
from chainbudget.spread import aside, evaluate, run
from chainbudget.spread.aside import Aside, forked_map
from chainbudget.spread.parts import chain_parts

pytestmark = pytest.mark.skipif(not aside.can_fork(), reason="the platform does not fork")


def test_the_childs_result_is_the_works_and_comes_from_another_process() -> None:
    parent = os.getpid()

    def work() -> tuple[int, np.ndarray]:
        return os.getpid(), np.linspace(0.0, 1.0, 5) ** 2

    pid, values = Aside(work).result()
    assert pid != parent  # done in the child
    np.testing.assert_array_equal(values, np.linspace(0.0, 1.0, 5) ** 2)


def test_work_that_raises_in_the_child_is_done_again_here_and_raises_here() -> None:
    parent = os.getpid()
    calls = []

    def work() -> int:
        calls.append(os.getpid())  # the child's append stays in the child's memory
        raise ValueError(f"failed in {os.getpid()}")

    with pytest.raises(ValueError, match=f"failed in {parent}"):
        Aside(work).result()
    assert calls == [parent]


def test_a_child_that_dies_before_it_answers_leaves_the_work_to_the_parent() -> None:
    parent = os.getpid()

    def work() -> int:
        if os.getpid() != parent:
            os._exit(3)  # killed, as by the out-of-memory killer: no answer on the pipe
        return 7

    assert Aside(work).result() == 7


def test_no_fork_does_the_work_when_the_result_is_asked_for() -> None:
    calls = []
    found = Aside(lambda: calls.append(1) or 5, fork=False)
    assert calls == []
    assert found.result() == 5
    assert calls == [1]


def test_corners_searched_aside_equal_the_search_in_the_process(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """The spread of a tone and volume chain: every corner, the statistics and the yields
    with the corner search run aside equal those with it run in the process, exactly."""
    chain = _chain(TONE_AND_VOLUME)
    forked = run.run_spread(chain, 200, 3)
    monkeypatch.setattr(aside, "can_fork", lambda: False)
    here = run.run_spread(chain, 200, 3)
    assert forked.corners == here.corners
    assert forked.stats == here.stats
    assert forked.yield_by_code == here.yield_by_code


def test_corner_shares_hold_every_figure_once_and_each_step_whole() -> None:
    """`run._shares` splits the figures between the corner searches: each figure in one
    share, each step's figures together, and the corners of the spread equal one search
    over every figure at once (widened by the trials as the spread widens them)."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    chain = _chain(TONE_AND_VOLUME)
    parts, _ = chain_parts(chain)
    n = len(parts)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    centre = evaluate(np.full((1, n), 0.5))
    paths = sorted(centre)
    steps = evaluate.steps_of
    for count in (1, 2, 3, 5):
        shares = run._shares(paths, steps, count)
        assert sorted(p for share in shares for p in share) == paths
        for share in shares:
            others = {p for other in shares if other is not share for p in other}
            assert not {steps[p] for p in share} & {steps[p] for p in others}
    side = evaluate(run._one_at_a_time(n), shared=True)
    deltas = {p: side[p][1::2] - side[p][0::2] for p in paths}
    moving = {p: run._moving(side[p], float(centre[p][0]), steps[p]) for p in paths}
    whole = run._corners(evaluate, paths, deltas, moving, n)
    spread = run.run_spread(chain, 200, 3)
    for p in paths:
        low, high = whole.get(p, (float(centre[p][0]),) * 2)
        stats = spread.stats[p]
        assert spread.corners[p] == (min(low, stats["min"]), max(high, stats["max"])), p


def test_forked_map_gives_each_items_result_in_order_from_the_workers() -> None:
    """Seven items on two workers (every other item each): the results in the items'
    order, each worked out in a child (its process id is not the parent's, and the two
    workers are two processes)."""
    parent = os.getpid()

    def work(i: int) -> tuple[int, int, np.ndarray]:
        return i, os.getpid(), np.arange(i) ** 2

    found = list(forked_map(work, list(range(7)), 2))
    assert [i for i, _, _ in found] == list(range(7))
    for i, _, values in found:
        np.testing.assert_array_equal(values, np.arange(i) ** 2)
    pids = {pid for _, pid, _ in found}
    assert parent not in pids
    assert len(pids) == 2
    assert {pid for i, pid, _ in found if i % 2 == 0} != {pid for i, pid, _ in found if i % 2}


def test_an_item_a_worker_fails_on_is_done_here_and_raises_here() -> None:
    """Item 3 raises in its worker: items 0 to 2 still come, then item 3 is worked out in
    the parent, which raises the error as a plain map would."""
    parent = os.getpid()

    def work(i: int) -> int:
        if i == 3:
            raise ValueError(f"item 3 failed in {os.getpid()}")
        return i * 10

    found = []
    with pytest.raises(ValueError, match=f"item 3 failed in {parent}"):
        for value in forked_map(work, list(range(6)), 2):
            found.append(value)
    assert found == [0, 10, 20]


def test_the_items_of_a_worker_that_dies_are_done_here() -> None:
    """The worker of the odd items is killed at item 3 (as by the out-of-memory killer):
    item 1 came from it, items 3 and 5 are worked out in the parent; every result is
    there, in order."""
    parent = os.getpid()

    def work(i: int) -> tuple[int, bool]:
        if i == 3 and os.getpid() != parent:
            os._exit(3)
        return i, os.getpid() == parent

    found = list(forked_map(work, list(range(6)), 2))
    assert [i for i, _ in found] == list(range(6))
    here = {i for i, in_parent in found if in_parent}
    assert 3 in here and 5 in here
    assert not here & {0, 1, 2, 4}


def test_trials_in_forked_workers_equal_the_trials_in_threads(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """A spread of three batches of trials: every trial's figures with the batches in
    forked workers equal those with them in threads, exactly; the workers were used."""
    chain = _chain(TONE_AND_VOLUME)
    used = []
    real = aside.forked_map

    def spy(work, items, workers):  # noqa: ANN001, ANN202
        used.append(len(items))
        return real(work, items, workers)

    monkeypatch.setattr(aside, "forked_map", spy)
    monkeypatch.setattr(evaluate, "CHUNK_POINTS", 1 << 12)  # batches of a few trials
    trials = 3 * max(1, evaluate.CHUNK_POINTS // frequency_axis(chain).size)
    forked = run.run_spread(chain, trials, 3)
    assert used and max(used) >= 3
    monkeypatch.setattr(aside, "can_fork", lambda: False)
    threads = run.run_spread(chain, trials, 3)
    assert forked.samples.keys() == threads.samples.keys()
    for path, values in forked.samples.items():
        np.testing.assert_array_equal(values, threads.samples[path], err_msg=path)


def test_a_child_beside_other_work_takes_its_batches_in_turn_in_one_thread() -> None:
    """The corner search's child runs beside the trials' workers, which keep the cores
    busy: it maps its batches in its own thread, one after another, not in a pool of
    threads (which there only added CPU time); in this process the pool is used."""
    chain = _chain(TONE_AND_VOLUME)
    parts, _ = chain_parts(chain)
    evaluator = evaluate.Evaluator(
        chain, tuple(parts), compute(chain), settle(chain, "low").voltages
    )
    batches = [[np.full((1, len(parts)), 0.1 * k)] for k in range(4)]

    def threads() -> tuple[bool, list[bool]]:
        def batch(chunks: list[np.ndarray]) -> list[dict[str, np.ndarray]]:
            here.append(threading.get_ident() == threading.main_thread().ident)
            return [{"row": chunks[0][:, 0]}]

        here: list[bool] = []
        # ``record`` given: the evaluator's caches are not all filled, so no workers fork
        found = list(evaluator._mapped(batch, batches, {}))
        assert [f[0]["row"][0] for f in found] == [0.0, 0.1, 0.2, 0.30000000000000004]
        return aside.is_aside(), here

    assert threads() == (False, [False] * 4)
    assert Aside(threads).result() == (True, [True] * 4)
