"""Benchmark: the cost of `spread` against the raw batched solve of its own matrices (run by
hand; never a timed assertion).

    .venv/bin/python tests/bench/bench_spread.py [CHAIN] [TRIALS] [ROUNDS]

Runs the spread's Monte Carlo (the chunked trials only: no corners, no sensitivities)
of CHAIN (default: chains/busking_amp.toml, the largest example) for TRIALS trials (default
10,000), recording every matrix and right-hand side `chainbudget.network` hands to its
batched solve (`chainbudget.sparse_lu`); then times ``np.linalg.solve`` of exactly those
arrays alone: the raw batched LAPACK solve the target is stated against. Prints
both CPU times and their ratio (the spread's target: at most 1.5x): each round's spread
against its raw solves right after it, the median of the rounds. Numbers go in
docs/performance.md.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path
from typing import Any

import numpy as np

from chainbudget import network
from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import load_chain
from chainbudget.spread import evaluate as evaluate_module
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.parts import chain_parts
from chainbudget.spread.run import CHUNK_TRIALS

ROOT = Path(__file__).resolve().parents[2]
REPEATS = 9  # rounds; a third argument sets another count


def main() -> None:
    chain_file = Path(sys.argv[1]) if len(sys.argv) > 1 else ROOT / "chains" / "busking_amp.toml"
    trials = int(sys.argv[2]) if len(sys.argv) > 2 else 10_000
    repeats = int(sys.argv[3]) if len(sys.argv) > 3 else REPEATS
    # one thread, as the baseline solves: the ratio compares like with like
    evaluate_module.WORKERS = 1
    chain = load_chain(chain_file)
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    rng = np.random.default_rng(1)
    draws = [
        rng.random((min(CHUNK_TRIALS, trials - s), len(parts)))
        for s in range(0, trials, CHUNK_TRIALS)
    ]
    evaluate(draws[0][:2])  # warm up imports and caches

    def run() -> float:
        start = time.process_time()
        for d in draws:
            evaluate(d)
        return time.process_time() - start

    recorded: list[tuple[Any, Any]] = []
    original = network.sparse_lu.solve

    def recording(entries: Any, pattern: Any, batch: Any, b: Any) -> Any:
        # the same matrices and right-hand sides, laid out as a plain C-ordered batch
        # (``batch + (N, N)``, ``batch + (N, K)``): what a batched np.linalg.solve takes
        dense = network.sparse_lu.dense(entries, pattern.nonzero.shape[0], batch)
        m = np.ascontiguousarray(np.moveaxis(dense, (0, 1), (-2, -1)))
        rhs = np.ascontiguousarray(np.broadcast_to(b, (*m.shape[:-1], np.shape(b)[-1])))
        recorded.append((m, rhs))
        return original(entries, pattern, batch, b)

    network.sparse_lu.solve = recording  # type: ignore[assignment]
    try:
        run()
    finally:
        network.sparse_lu.solve = original

    def raw() -> float:
        start = time.process_time()
        for m, b in recorded:
            np.linalg.solve(m, b)
        return time.process_time() - start

    # Interleaved, each round's spread against its own raw solves right after it, timed in
    # the process's CPU time (a shared machine's stolen time left out): the machine's
    # other load and its drifting speed fall on both of a pair alike, and the median of
    # the rounds' ratios is the figure (the best of each kind, paired apart, is printed
    # too).
    spread_times, raw_times = [], []
    for _ in range(repeats):
        spread_times.append(run())
        raw_times.append(raw())
    ratios = sorted(s / r for s, r in zip(spread_times, raw_times, strict=True))
    spread_s, raw_s = min(spread_times), min(raw_times)
    shapes = sorted({np.shape(m) for m, _ in recorded}, key=lambda s: -int(np.prod(s)))[:3]
    print(f"{chain_file.name}: {trials} trials, {len(parts)} parts drawn, {repeats} rounds")
    print(f"spread (trials only)      {spread_s * 1e3:9.1f} ms  (best round)")
    print(
        f"np.linalg.solve, same arrays {raw_s * 1e3:6.1f} ms  ({len(recorded)} calls; "
        f"largest {shapes})"
    )
    print(f"ratio of the bests        {spread_s / raw_s:9.2f} x")
    print(
        f"ratio, median of rounds   {ratios[len(ratios) // 2]:9.2f} x   (target <= 1.5; "
        f"rounds {ratios[0]:.2f} to {ratios[-1]:.2f})"
    )


if __name__ == "__main__":
    main()
