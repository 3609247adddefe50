"""The spread's progress: reported as each batch of trials is solved (not once per chunk
of 8,192), rising to the number of trials."""

from __future__ import annotations

from test_spread import NON_INVERTING, _chain

from chainbudget.spread.run import CHUNK_TRIALS, run_spread


def test_progress_rises_batch_by_batch_to_the_trials() -> None:
    seen: list[tuple[int, int]] = []
    trials = 1000
    run_spread(_chain(NON_INVERTING), trials, 1, lambda done, total: seen.append((done, total)))
    done = [d for d, _ in seen]
    assert all(total == trials for _, total in seen)
    assert done == sorted(done) and done[-1] == trials
    assert len(done) > 2  # more than one report inside a chunk of CHUNK_TRIALS
    assert trials < CHUNK_TRIALS
