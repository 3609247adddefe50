"""Benchmark: wall time of the whole budget of each example chain (run by hand).

    .venv/bin/python tests/bench/bench_check.py [REPEATS]

Prints the median and best of REPEATS runs of load + compute + findings per chain, and the
start-up time of the command itself. Numbers go in docs/performance.md.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

from chainbudget.budget import compute
from chainbudget.chainfile import load_chain
from chainbudget.findings import findings

ROOT = Path(__file__).resolve().parents[2]


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 5
    for chain_file in sorted((ROOT / "chains").glob("*.toml")):
        times = []
        for _ in range(repeats):
            start = time.perf_counter()
            findings(compute(load_chain(chain_file)))
            times.append(time.perf_counter() - start)
        print(
            f"{chain_file.name:36s} median {statistics.median(times) * 1e3:8.1f} ms   "
            f"best {min(times) * 1e3:8.1f} ms"
        )
    start = time.perf_counter()
    subprocess.run(
        [
            sys.executable,
            "-m",
            "chainbudget",
            "check",
            str(ROOT / "chains" / "desk_speaker_preamp.toml"),
        ],
        capture_output=True,
        check=False,
    )
    print(
        f"{'command, desk_speaker_preamp (cold)':36s} {(time.perf_counter() - start) * 1e3:8.1f} ms"
    )


if __name__ == "__main__":
    main()
