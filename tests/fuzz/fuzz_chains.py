"""The long fuzz of chain files: at least 10,000 mutated example chains, by hand.

    .venv/bin/python tests/fuzz/fuzz_chains.py --cases 10000 --workers 2

Each worker draws its share of cases (tests/fuzzkit.py: mutated seeds, or with
``--extreme`` values anywhere in their hard range written with the prefix in full) with its own
hypothesis seed, runs each in-process (loader, compute, JSON and table views; warnings as
errors; a time limit) and every ``--command-every``-th one through the real command in a
subprocess, and counts how they ended. The run prints the counts by ending and a few
examples of each failure class, writes the failing cases' TOML to ``--keep`` for replay,
and exits 1 when any case failed. The address space of a worker is capped so that a huge
allocation shows as a MemoryError instead of exhausting the machine. Not collected by
pytest (``--ignore=tests/fuzz`` in pyproject's addopts); the default test run holds a few
hundred cases (tests/test_fuzz_chains.py).
"""

from __future__ import annotations

import argparse
import json
import multiprocessing
import resource
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path
from typing import Any

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

import fuzzkit  # noqa: E402
from hypothesis import HealthCheck, Phase, given, seed, settings  # noqa: E402

MEMORY_CAP_BYTES = 6 * 2**30


def _worker(job: tuple[int, int, int, float, str, bool]) -> dict[str, Any]:
    worker_seed, count, command_every, seconds, keep, extreme = job
    progress = Path(keep) / f"progress-{worker_seed}.json"
    resource.setrlimit(resource.RLIMIT_AS, (MEMORY_CAP_BYTES, MEMORY_CAP_BYTES))
    endings: Counter[str] = Counter()
    examples: dict[str, list[str]] = {}
    keep_dir = Path(keep)
    scratch = Path(tempfile.mkdtemp(prefix="chainfuzz-"))
    started = time.monotonic()

    @seed(worker_seed)
    @settings(
        max_examples=count,
        deadline=None,
        database=None,
        phases=[Phase.generate],
        suppress_health_check=list(HealthCheck),
    )
    @given(fuzzkit.extreme_cases() if extreme else fuzzkit.cases())
    def one(case: fuzzkit.Case) -> None:
        number = sum(endings.values())
        outcome = fuzzkit.run_case(case.text, seconds=seconds)
        ending = outcome.ending
        if command_every and number % command_every == 0 and not outcome.failed:
            status, out, err = fuzzkit.run_command(case.text, scratch)
            problem = fuzzkit.command_problem(status, out, err, str(scratch / fuzzkit.FILE))
            endings["command-run"] += 1
            if problem:
                ending, outcome = "command", fuzzkit.Outcome("command", problem)
        endings[ending] += 1
        if number % 100 == 0:
            progress.write_text(json.dumps(dict(endings)))
        if outcome.failed:
            shown = examples.setdefault(ending, [])
            if len(shown) < 5:
                shown.append(f"{case!r}: {outcome.detail}")
            name = f"{ending}-{worker_seed}-{endings[ending]}.toml"
            if endings[ending] <= 20:
                (keep_dir / name).write_text(case.text, encoding="utf-8")

    one()
    return {"endings": dict(endings), "examples": examples, "seconds": time.monotonic() - started}


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=10000)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--command-every", type=int, default=250)
    parser.add_argument("--time-limit", type=float, default=60.0, help="seconds per case")
    parser.add_argument("--keep", default="fuzz-failures", help="folder for failing cases")
    parser.add_argument("--json", help="also write the counts to this file")
    parser.add_argument(
        "--extreme",
        action="store_true",
        help="draw values anywhere in their hard range, prefixes written in full "
        "(fuzzkit.extreme_cases) instead of the mutated seeds",
    )
    args = parser.parse_args()
    Path(args.keep).mkdir(exist_ok=True)
    share = -(-args.cases // args.workers)
    jobs = [
        (args.seed * 1000 + k, share, args.command_every, args.time_limit, args.keep, args.extreme)
        for k in range(args.workers)
    ]
    with multiprocessing.get_context("spawn").Pool(args.workers) as pool:
        results = pool.map(_worker, jobs)
    endings: Counter[str] = Counter()
    examples: dict[str, list[str]] = {}
    for result in results:
        endings.update(result["endings"])
        for ending, shown in result["examples"].items():
            examples.setdefault(ending, []).extend(shown)
    commands = endings.pop("command-run", 0)
    total = sum(endings.values())
    failures = {k: v for k, v in endings.items() if k not in ("refused", "analysed")}
    print(f"cases: {total} ({commands} also through the command)")
    for ending, number in endings.most_common():
        print(f"  {ending:20} {number}")
    for ending, shown in sorted(examples.items()):
        print(f"\n{ending}:")
        for line in shown[:5]:
            print(f"  {line[:400]}")
    print(f"\nwall time per worker: {max(r['seconds'] for r in results):.0f} s")
    if args.json:
        Path(args.json).write_text(
            json.dumps({"cases": total, "commands": commands, "endings": dict(endings)}, indent=2)
        )
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
