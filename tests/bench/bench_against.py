"""Benchmark: this tree against an earlier commit, piece by piece (run by hand, not collected).

    .venv/bin/python tests/bench/bench_against.py [--commit REV] [--rounds N]
        [--only crossover,placement,check]

Everything here is a ratio of medians taken in one run, the two trees alternating round
after round so that any drift of the machine falls on both alike (docs/performance.md):

* crossover: the push-pull crossover's distortion (`harmonics`, as `check` calls it on the
  output stage of busking_amp.toml), timed in one process per tree (the median of 15 calls
  after a warm-up), the processes alternating;
* placement: the noise-placement what-if (`placement_costs`) of every example that reaches
  it, likewise in one process per tree;
* check: the whole ``check busking_amp.toml --format json`` of each tree (``git archive``
  of REV into a temporary folder, run with the same Python and libraries, its own copy of
  the example), alternating.

REV defaults to the commit this work started from.
"""

from __future__ import annotations

import argparse
import compileall
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from bench_check import _tree as archived_tree  # this folder is the script's path

ROOT = Path(__file__).resolve().parents[2]
PYTHON = sys.executable
LARGEST = "busking_amp.toml"
# The commit the crossover's stopping tests and the placement's reuse started from.
START = "8d6eb65"


def _launch(tree: Path) -> str:
    """Python source that puts ``tree`` first on the path (and not this tree's editable
    install's finder)."""
    return (
        "import sys; "
        "sys.meta_path[:] = [f for f in sys.meta_path if 'editable' not in "
        "getattr(f, '__module__', '')]; "
        f"sys.path.insert(0, {str(tree)!r}); "
    )


def _tree(commit: str, folder: Path) -> Path:
    """The project at ``commit``, written out into ``folder`` (`bench_check._tree`), and
    checked to import from there."""
    target = archived_tree(commit, folder)
    where = subprocess.run(
        [PYTHON, "-c", _launch(target) + "import chainbudget; print(chainbudget.__file__)"],
        capture_output=True,
        text=True,
        check=True,
    ).stdout.strip()
    assert where.startswith(str(target)), where  # the earlier tree, not this one
    return target


def _median_call(fn: object, repeats: int) -> float:
    assert callable(fn)
    fn()  # warm-up
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def crossover_time(tree: Path, repeats: int = 15) -> float:
    """Median time of the crossover's `harmonics` call on busking_amp.toml's output stage,
    with the arguments `check` gives it (caught on a budget's way through)."""
    from chainbudget.budget import compute
    from chainbudget.chainfile import load_chain
    from chainbudget.stages.push_pull import crossover

    caught: list[tuple[tuple[object, ...], dict[str, object]]] = []
    original = crossover.harmonics

    def catch(*args: object, **kwargs: object) -> object:
        caught.append((args, kwargs))
        return original(*args, **kwargs)  # type: ignore[arg-type]

    crossover.harmonics = catch  # type: ignore[assignment]
    compute(load_chain(tree / "chains" / LARGEST))
    crossover.harmonics = original
    args, kwargs = caught[0]
    return _median_call(lambda: original(*args, **kwargs), repeats)  # type: ignore[arg-type]


def placement_times(tree: Path, repeats: int = 7) -> dict[str, float]:
    """Median time of `placement_costs` on each example chain that moves a stage in it."""
    from chainbudget.budget import noise_placement
    from chainbudget.budget.analysis import analyse
    from chainbudget.budget.noise_spectra import noise_spectra
    from chainbudget.chainfile import load_chain

    found = {}
    for path in sorted((tree / "chains").glob("*.toml")):
        analysis = analyse(load_chain(path), corner="low")
        spectra = noise_spectra(
            analysis.chain,
            analysis.envs,
            analysis.frequency,
            analysis.nominal,
            analysis.temperature_k,
            analysis.band_slice,
        )
        if not noise_placement.placement_costs(analysis, spectra):
            continue
        found[path.name] = _median_call(
            lambda a=analysis, s=spectra: noise_placement.placement_costs(a, s), repeats
        )
    return found


def _in_tree(tree: Path, what: str) -> dict[str, float]:
    """Run ``what`` (crossover or placement) in a fresh process on ``tree``: its medians,
    by chain (the crossover's under ``busking_amp.toml``)."""
    call = f"{{{LARGEST!r}: b.crossover_time(b.Path({str(tree)!r}))}}"
    if what == "placement":
        call = f"b.placement_times(b.Path({str(tree)!r}))"
    source = (
        _launch(tree)
        + f"sys.path.insert(0, {str(Path(__file__).parent)!r}); "
        + f"import json, bench_against as b; print(json.dumps({call}))"
    )
    done = subprocess.run([PYTHON, "-c", source], capture_output=True, text=True, check=True)
    found: dict[str, float] = json.loads(done.stdout)
    return found


def in_process(what: str, trees: dict[str, Path], rounds: int) -> None:
    """``what`` timed in one process per tree, the processes alternating; medians."""
    found: dict[str, list[dict[str, float]]] = {name: [] for name in trees}
    for _ in range(rounds):
        for name, tree in trees.items():
            found[name].append(_in_tree(tree, what))
    names = list(trees)
    print(f"\n{what}: in-process medians over {rounds} alternating processes")
    for chain in sorted(found[names[0]][0]):
        med = {n: statistics.median(r[chain] for r in found[n]) for n in names}
        times = "   ".join(f"{n}: {med[n] * 1e3:7.2f} ms" for n in names)
        print(f"  {chain:32s} {times}   ratio: {med[names[0]] / med[names[1]]:.3f}")


def _run(args: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run(args, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True)
    return time.perf_counter() - start


def check(trees: dict[str, Path], rounds: int) -> None:
    commands = {
        name: [
            PYTHON,
            "-c",
            _launch(tree) + "from chainbudget.cli import main; sys.argv[0] = 'chainbudget'; main()",
            "check",
            str(tree / "chains" / LARGEST),
            "--format",
            "json",
        ]
        for name, tree in trees.items()
    }
    for args in commands.values():
        _run(args)  # warm-up
    times: dict[str, list[float]] = {name: [] for name in commands}
    for _ in range(rounds):
        for name, args in commands.items():
            times[name].append(_run(args))
    names = list(commands)
    med = {n: statistics.median(times[n]) for n in names}
    print(f"\ncheck {LARGEST}: {rounds} alternating rounds, medians")
    for n in names:
        ratio = med[n] / med[names[1]]
        print(f"  {n:22s} {med[n] * 1e3:8.0f} ms   ratio to {names[1]}: {ratio:.3f}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--commit", default=START)
    parser.add_argument("--rounds", type=int, default=9)
    parser.add_argument("--only", default="crossover,placement,check")
    args = parser.parse_args()
    print(
        f"{time.strftime('%Y-%m-%d %H:%M')}, {os.cpu_count()} cores ({platform.machine()}), "
        f"Python {platform.python_version()}, {args.rounds} rounds; load average "
        + " ".join(f"{x:.2f}" for x in os.getloadavg())
    )
    with tempfile.TemporaryDirectory() as tmp:
        compileall.compile_dir(ROOT / "chainbudget", quiet=1)
        trees = {"this tree": ROOT, f"at {args.commit}": _tree(args.commit, Path(tmp))}
        for what in args.only.split(","):
            if what == "check":
                check(trees, args.rounds)
            else:
                in_process(what, trees, max(3, args.rounds // 3))
    print(f"\nload average at the end: {' '.join(f'{x:.2f}' for x in os.getloadavg())}")


if __name__ == "__main__":
    main()
