"""Benchmark: a batched sweep against one check per step (run by hand).

    .venv/bin/python tests/bench/bench_sweep.py [STEPS]

For a few pots and part values of the example chains, times `sweep_rows` (one batched
analysis) and `compute` of the chain edited to each step, in the same run, and prints the
ratio (checks / sweep). Both give the same budgets (tests/test_sweep.py). Numbers go in
docs/pictures.md.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

from chainbudget.budget import compute
from chainbudget.budget.sweep import stepped_control, stepped_value, sweep_rows
from chainbudget.chainfile import load_chain

ROOT = Path(__file__).resolve().parents[2]

CASES = [
    ("desk_speaker_preamp", "tone.bass_position", None),
    ("desk_speaker_preamp", "volume.position", None),
    ("desk_speaker_preamp", "driver.feedback", ("10k", "47k")),
    ("busking_amp", "tone.treble_position", None),
    ("busking_amp", "pre.feedback", ("5k", "20k")),
    ("violin_piezo_preamp", "bass.cap", ("10n", "47n")),
]


def main() -> None:
    steps = int(sys.argv[1]) if len(sys.argv) > 1 else 11
    for name, spec, ends in CASES:
        chain = load_chain(ROOT / "chains" / f"{name}.toml")
        if ends is None:
            stepped = stepped_control(chain, spec, steps)
        else:
            stepped = stepped_value(chain, spec, ends[0], ends[1], steps)
        start = time.perf_counter()
        sweep_rows(chain, stepped)
        batched = time.perf_counter() - start
        start = time.perf_counter()
        for step in range(steps):
            compute(stepped.edited(chain, step))
        separate = time.perf_counter() - start
        print(
            f"{name:22s} {spec:22s} sweep {batched:6.2f} s   {steps} checks {separate:6.2f} s"
            f"   ratio {separate / batched:4.1f}"
        )


if __name__ == "__main__":
    main()
