"""Benchmark: the command's time as ratios measured in one run (run by hand, not collected).

    .venv/bin/python tests/bench/bench_check.py [--rounds N]
        [--only start,pots,stages,points,before,report]

Machines are noisy and absolute times do not compare between runs, so everything here is a
ratio of medians taken in the same run, the runs of a comparison alternating so that any
drift of the machine falls on all of them alike:

* start: each command against the import floor ``python -c "import numpy, pint;
  pint.UnitRegistry()"`` (``--help``, ``blocks``, ``check`` on every example chain);
* pots: ``check`` on one chain of eight pots with the first N swept (the others
  ``sweep = false``), N = 1..8, against N = 1; once with the tone stages driving each other
  directly (one coupled stretch, refined by coordinates) and once buffered;
* stages: ``check`` on chains of 1..12 stages with one swept pot, against one stage;
* points: ``check`` on the largest example at 10..160 points per decade, against 40;
* before: ``check`` of the largest example (busking_amp.toml) on this tree against the
  same command on earlier commits of the project (``git archive`` of each into a temporary
  folder, run with the same Python and libraries; each commit's own copy of the example):
  main at f828a9c (the tree this work started from) and the last main commit before the
  supplies work was merged (d05204f^1);
* report: ``check`` of the largest example as a table on a pipe, as JSON and as a table in
  a pseudo-terminal (in colour), on this tree and on the tree before the report was drawn
  without rich (8d6eb65), against the floor; then the report alone (the import of the
  report stack and the drawing, timed inside a fresh process once the budget is made).

For pots, stages and points a second ratio is of the work alone, without the start-up: the
median of five budgets of the chain worked out in one process (``--compute FILE`` runs
that and prints it), the processes alternating the same way.

Each row also gives the peak memory: the command's largest resident set, ``ru_maxrss`` of
the child's resource usage (``os.wait4``, the standard library's ``getrusage`` record). The
package's bytecode is compiled first, as an installed package's is. Numbers go in
docs/performance.md with the date and the machine.
"""

from __future__ import annotations

import argparse
import compileall
import io
import os
import platform
import resource
import statistics
import subprocess
import sys
import tarfile
import tempfile
import time
import tomllib
from collections.abc import Callable
from pathlib import Path

import tomli_w

ROOT = Path(__file__).resolve().parents[2]
PYTHON = sys.executable
FLOOR = [PYTHON, "-c", "import numpy, pint; pint.UnitRegistry()"]
LARGEST = ROOT / "chains" / "busking_amp.toml"


# Earlier trees the ``before`` section compares the largest example's check against.
BEFORE = {"main at f828a9c": "f828a9c", "before the supplies work (d05204f^1)": "d05204f^1"}
# The tree before the report was drawn without rich (the ``report`` section).
REPORT_BEFORE = "8d6eb65"


#: Marks a command run with a pseudo-terminal as its stdin, stdout and stderr (a designer's
#: terminal; POSIX), its output read and dropped.
IN_TERMINAL = "<in a terminal>"


def _run_in_terminal(args: list[str]) -> tuple[float, float, float]:
    import pty

    leader, follower = pty.openpty()
    start = time.perf_counter()
    child = subprocess.Popen(args, stdin=follower, stdout=follower, stderr=follower)
    os.close(follower)
    while True:
        try:
            if not os.read(leader, 65536):
                break
        except OSError:  # the child closed its end
            break
    _pid, _status, usage = os.wait4(child.pid, 0)
    os.close(leader)
    return _usage(start, usage)


def _usage(start: float, usage: resource.struct_rusage) -> tuple[float, float, float]:
    """Wall time (s), peak resident memory (MB) and CPU time (s, user and system)."""
    return time.perf_counter() - start, usage.ru_maxrss / 1024.0, usage.ru_utime + usage.ru_stime


def _run(args: list[str]) -> tuple[float, float, float]:
    """Wall time (s), peak resident memory (MB) and CPU time (s) of one command."""
    if args[0] == IN_TERMINAL:
        return _run_in_terminal(args[1:])
    start = time.perf_counter()
    child = subprocess.Popen(args, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _pid, _status, usage = os.wait4(child.pid, 0)
    return _usage(start, usage)


def measure(
    commands: dict[str, list[str]], rounds: int, cpu: dict[str, float] | None = None
) -> dict[str, tuple[float, float]]:
    """Median time and peak memory of each command, the commands alternating each round;
    each one's median CPU time (user and system, less sensitive to other jobs on the
    machine than the wall time) into ``cpu`` when given."""
    times: dict[str, list[float]] = {name: [] for name in commands}
    peaks: dict[str, float] = dict.fromkeys(commands, 0.0)
    spents: dict[str, list[float]] = {name: [] for name in commands}
    for args in commands.values():  # one warm-up each (caches, bytecode)
        _run(args)
    for _ in range(rounds):
        for name, args in commands.items():
            took, peak, spent = _run(args)
            times[name].append(took)
            spents[name].append(spent)
            peaks[name] = max(peaks[name], peak)
    if cpu is not None:
        cpu.update({name: statistics.median(spents[name]) for name in commands})
    return {name: (statistics.median(times[name]), peaks[name]) for name in commands}


def compute_times(files: dict[str, Path], rounds: int) -> dict[str, float]:
    """Median time of the budget alone (`compute_median` in a fresh process per file), the
    files alternating each round."""
    times: dict[str, list[float]] = {name: [] for name in files}
    for _ in range(max(1, rounds // 3)):
        for name, path in files.items():
            done = subprocess.run(
                [PYTHON, __file__, "--compute", str(path)],
                capture_output=True,
                text=True,
                check=True,
            )
            times[name].append(float(done.stdout))
    return {name: statistics.median(t) for name, t in times.items()}


def compute_median(path: Path, repeats: int = 5) -> float:
    """Median time of load + budget + findings of a chain, after one warm-up."""
    from chainbudget.budget import compute
    from chainbudget.chainfile import load_chain
    from chainbudget.findings import findings

    chain = load_chain(path)
    findings(compute(chain))
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        findings(compute(load_chain(path)))
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def report(
    title: str,
    found: dict[str, tuple[float, float]],
    base: str,
    work: dict[str, float] | None = None,
) -> None:
    print(f"\n{title} (ratio to {base!r}; median of the rounds; peak memory)")
    header = f"  {'':34s} {'command':>7s} {'':>11s} {'peak':>9s}"
    print(header + ("   work alone" if work is not None else ""))
    for name, (median, peak) in found.items():
        ratio = median / found[base][0]
        line = f"  {name:34s} {ratio:6.2f}x   {median * 1e3:8.0f} ms   {peak:6.0f} MB"
        if work is not None:
            line += f"   {work[name] / work[base]:6.2f}x {work[name] * 1e3:7.0f} ms"
        print(line)


def check(path: Path) -> list[str]:
    return [PYTHON, "-m", "chainbudget", "check", str(path), "--format", "json"]


def compared(title: str, files: dict[str, Path], base: str, rounds: int) -> None:
    """``check`` on each file, and its budget alone, as ratios to ``base``."""
    found = measure({name: check(path) for name, path in files.items()}, rounds)
    report(title, found, base, compute_times(files, rounds))


# ---- generated chains -----------------------------------------------------------------

HEAD = {
    "chain": {"title": "bench"},
    "source": {"level": "-10 dBV", "max_level": "0 dBV", "impedance": "1 kohm"},
    "load": {"impedance": "10 kohm"},
    "supply": [
        {"name": "plus", "kind": "dc", "voltage": "15 V"},
        {"name": "minus", "kind": "dc", "voltage": "15 V"},
    ],
}
RAILS = {"positive": "plus", "negative": "minus"}


def _gain(name: str) -> dict[str, object]:
    return {
        "name": name,
        "kind": "opamp_gain",
        "topology": "non-inverting",
        "feedback": "10k",
        "ground_leg": "10k",
        **RAILS,
    }


def _two_band(name: str) -> dict[str, object]:
    return {
        "name": name,
        "kind": "tone_two_band",
        "bass_outer": "10k",
        "bass_pot": "100k",
        "bass_cap": "47n",
        "treble_pot": "100k",
        "treble_cap": "2n2",
        "treble_wiper": "4k7",
        "bass_position": 0.6,
        "treble_position": 0.45,
        **RAILS,
    }


def _bass(name: str) -> dict[str, object]:
    return {
        "name": name,
        "kind": "tone_bass",
        "outer": "10k",
        "pot": "100k",
        "cap": "47n",
        "position": 0.6,
        **RAILS,
    }


def _treble(name: str) -> dict[str, object]:
    return {
        "name": name,
        "kind": "tone_treble",
        "outer": "10k",
        "pot": "100k",
        "cap": "2n2",
        "wiper": "1k",
        "position": 0.4,
        **RAILS,
    }


def _volume(name: str, position: float) -> dict[str, object]:
    return {"name": name, "kind": "volume", "pot": "10k", "position": position}


def eight_pots(swept: int, buffered: bool) -> dict[str, object]:
    """An input buffer, a gain trim, two two-band tone stages, a bass and a treble stage, a
    volume and a driver: eight pots, the first ``swept`` of them swept."""
    pots: list[dict[str, object]] = [
        _volume("trim", 0.8),
        _two_band("tone_a"),
        _two_band("tone_b"),
        _bass("bass"),
        _treble("treble"),
        _volume("volume", 0.7),
    ]
    stages = [_gain("input")]
    left = swept
    for stage in pots:
        keys = [k for k in ("position", "bass_position", "treble_position") if k in stage]
        stage["sweep"] = left >= len(keys)  # a two-band stage's pots sweep together
        left -= len(keys) if stage["sweep"] else 0
        stages.append(stage)
        if buffered and stage["kind"] != "volume":
            stages.append(_gain(f"{stage['name']}_buffer"))
    stages.append(_gain("driver"))
    return {**HEAD, "stage": stages}


def stages_chain(count: int) -> dict[str, object]:
    """``count`` stages: gain stages with a volume (one swept pot) second."""
    stages = [_gain("s1")]
    if count > 1:
        stages.append(_volume("volume", 0.7))
    stages += [_gain(f"s{k}") for k in range(3, count + 1)]
    return {**HEAD, "stage": stages}


def with_points(path: Path, points: int) -> dict[str, object]:
    data = tomllib.loads(path.read_text())
    data["chain"]["points_per_decade"] = points
    return data


# ---- the sections -----------------------------------------------------------------------


def start(rounds: int, _folder: Path) -> None:
    commands = {
        "floor: import numpy, pint; registry": FLOOR,
        "--help": [PYTHON, "-m", "chainbudget", "--help"],
        "blocks": [PYTHON, "-m", "chainbudget", "blocks"],
    }
    for path in sorted((ROOT / "chains").glob("*.toml")):
        commands[f"check {path.name}"] = [PYTHON, "-m", "chainbudget", "check", str(path)]
    report("Start-up and check", measure(commands, rounds), "floor: import numpy, pint; registry")


def _written(folder: Path, name: str, data: dict[str, object]) -> Path:
    path = folder / f"{name}.toml"
    path.write_text(tomli_w.dumps(data))
    return path


def many_pots(count: int) -> dict[str, object]:
    """``count`` swept pots: bass and treble stages in turn behind an input buffer, each
    other one buffered (the memory check: peak memory for any number of pots)."""
    stages = [_gain("input")]
    for k in range(count):
        stages.append(_bass(f"bass{k}") if k % 2 == 0 else _treble(f"treble{k}"))
        if k % 2:
            stages.append(_gain(f"buffer{k}"))
    return {**HEAD, "stage": stages}


def pots(rounds: int, folder: Path) -> None:
    files = {
        f"{n} swept (memory)": _written(folder, f"many_{n}", many_pots(n)) for n in (1, 8, 16, 32)
    }
    found = measure({name: check(path) for name, path in files.items()}, max(3, rounds // 3))
    report("Many swept pots (peak memory)", found, "1 swept (memory)")
    for buffered in (False, True):
        layout = "buffered" if buffered else "direct"
        files = {
            f"{n} swept ({layout})": _written(folder, f"pots_{layout}_{n}", eight_pots(n, buffered))
            for n in range(1, 9)
        }
        compared(f"Swept pots, tone stages {layout}", files, f"1 swept ({layout})", rounds)


def stages(rounds: int, folder: Path) -> None:
    files = {
        f"{n} stages": _written(folder, f"stages_{n}", stages_chain(n))
        for n in (1, 2, 3, 4, 6, 8, 10, 12)
    }
    compared("Stages (gain stages; a swept volume second)", files, "1 stages", rounds)


def points(rounds: int, folder: Path) -> None:
    files = {
        f"{p} per decade": _written(folder, f"points_{p}", with_points(LARGEST, p))
        for p in (10, 20, 40, 80, 160)
    }
    compared(f"Points per decade ({LARGEST.name})", files, "40 per decade", rounds)


def _tree(commit: str, folder: Path) -> Path:
    """The project at ``commit``, written out into ``folder`` (``git archive``)."""
    archive = subprocess.run(
        ["git", "-C", str(ROOT), "archive", "--format=tar", commit],
        capture_output=True,
        check=True,
    ).stdout
    target = folder / commit.replace("^", "_")
    target.mkdir()
    with tarfile.open(fileobj=io.BytesIO(archive)) as tar:
        tar.extractall(target, filter="data")
    compileall.compile_dir(target / "chainbudget", quiet=1)
    return target


def _launch(tree: Path) -> str:
    """Python statements that make the interpreter import chainbudget from an earlier tree
    written out by `_tree` (first on the path, and not this one's editable install's
    finder)."""
    launch = (
        "import sys; "
        "sys.meta_path[:] = [f for f in sys.meta_path if 'editable' not in "
        "getattr(f, '__module__', '')]; "
        f"sys.path.insert(0, {str(tree)!r}); "
    )
    where = subprocess.run(
        [PYTHON, "-c", launch + "import chainbudget; print(chainbudget.__file__)"],
        capture_output=True,
        text=True,
        check=True,
    ).stdout.strip()
    assert where.startswith(str(tree)), where  # the earlier tree, not this one
    return launch


def _earlier(tree: Path, args: list[str]) -> list[str]:
    """The command ``chainbudget ARGS`` run from an earlier tree written out by `_tree`."""
    return [
        PYTHON,
        "-c",
        _launch(tree) + "from chainbudget.cli import main; sys.argv[0] = 'chainbudget'; main()",
        *args,
    ]


def before(rounds: int, folder: Path) -> None:
    commands: dict[str, list[str]] = {
        "this tree": [PYTHON, "-m", "chainbudget", "check", str(LARGEST), "--format", "json"]
    }
    for name, commit in BEFORE.items():
        tree = _tree(commit, folder)
        commands[name] = _earlier(
            tree, ["check", str(tree / "chains" / LARGEST.name), "--format", "json"]
        )
    found = measure(commands, rounds)
    print(f"\nCheck of {LARGEST.name}: earlier trees against this one (median; peak memory)")
    for name, (median, peak) in found.items():
        ratio = found["this tree"][0] / median
        print(
            f"  {name:40s} {median * 1e3:8.0f} ms   {peak:6.0f} MB   this tree / it: {ratio:5.2f}x"
        )


def report_views(rounds: int, folder: Path) -> None:
    """The table (on a pipe: stdout is /dev/null; and in a pseudo-terminal, in colour) and
    the JSON of the largest example, on this tree and on the tree before the report was
    drawn without rich (REPORT_BEFORE), all alternating with the floor."""
    tree = _tree(REPORT_BEFORE, folder)
    chain = str(tree / "chains" / LARGEST.name)
    floor = "floor: import numpy, pint; registry"
    commands: dict[str, list[str]] = {floor: FLOOR}
    views: tuple[tuple[str, list[str], list[str]], ...] = (
        ("table", [], []),
        ("json", ["--format", "json"], []),
        ("terminal", [], [IN_TERMINAL]),
    )
    for view, extra, where in views:
        here = [PYTHON, "-m", "chainbudget", "check", str(LARGEST), *extra]
        commands[f"{view}: this tree"] = [*where, *here]
        commands[f"{view}: {REPORT_BEFORE}"] = [*where, *_earlier(tree, ["check", chain, *extra])]
    cpu: dict[str, float] = {}
    found = measure(commands, rounds, cpu)
    report(f"Check of {LARGEST.name} by view", found, floor)
    print("  CPU time (user and system), ratio to the floor's:")
    for name, spent in cpu.items():
        print(f"  {name:34s} {spent / cpu[floor]:6.2f}x   {spent * 1e3:8.0f} ms")
    for view, _extra, _where in views:
        ours, theirs = f"{view}: this tree", f"{view}: {REPORT_BEFORE}"
        ratio, cpu_ratio = found[ours][0] / found[theirs][0], cpu[ours] / cpu[theirs]
        print(f"  {view}: this tree / {REPORT_BEFORE}: {ratio:5.2f}x (CPU time {cpu_ratio:5.2f}x)")
    report_alone(rounds, tree)


# The report alone, in a fresh process once the budget is worked out: the command's own
# ``_report_text`` (the import of the report stack, the drawing, the writing to stdout).
REPORT_ALONE = (
    "import sys, time\n"
    "from chainbudget.budget import compute\n"
    "from chainbudget.chainfile import load_chain\n"
    "from chainbudget import cli\n"
    "budget = compute(load_chain(sys.argv[1]))\n"
    "start = time.perf_counter()\n"
    "sys.stdout.write(cli._report_text(budget, sys.argv[2], False, False, True))\n"
    "sys.stdout.flush()\n"
    "sys.stderr.write(repr(time.perf_counter() - start))\n"
)


def report_alone(rounds: int, tree: Path) -> None:
    """The report's own time (table on a pipe, JSON) on this tree and on ``tree``, the
    processes alternating."""
    launch = _launch(tree)
    runs = {
        f"{view} alone: {where}": [PYTHON, "-c", code, str(path), view]
        for view in ("table", "json")
        for where, code, path in (
            ("this tree", "import sys\n" + REPORT_ALONE, LARGEST),
            (REPORT_BEFORE, launch + "\n" + REPORT_ALONE, tree / "chains" / LARGEST.name),
        )
    }
    times: dict[str, list[float]] = {name: [] for name in runs}
    for _ in range(rounds):
        for name, args in runs.items():
            done = subprocess.run(
                args, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True, check=True
            )
            times[name].append(float(done.stderr.strip().splitlines()[-1]))
    print("\n  The report alone, after the budget (median of the rounds):")
    for name, found in times.items():
        print(f"  {name:34s} {statistics.median(found) * 1e3:8.1f} ms")


SECTIONS: dict[str, Callable[[int, Path], None]] = {
    "start": start,
    "pots": pots,
    "stages": stages,
    "points": points,
    "before": before,
    "report": report_views,
}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=9)
    parser.add_argument("--only", default=",".join(SECTIONS))
    parser.add_argument("--compute", type=Path, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.compute is not None:
        print(compute_median(args.compute))
        return
    compileall.compile_dir(ROOT / "chainbudget", quiet=1)
    print(
        f"{time.strftime('%Y-%m-%d')}, {os.cpu_count()} cores ({platform.machine()}), "
        f"Python {platform.python_version()}, {args.rounds} rounds; load average "
        + " ".join(f"{x:.2f}" for x in os.getloadavg())
    )
    with tempfile.TemporaryDirectory() as tmp:
        for name in args.only.split(","):
            SECTIONS[name](args.rounds, Path(tmp))
    print(f"\nload average at the end: {' '.join(f'{x:.2f}' for x in os.getloadavg())}")


if __name__ == "__main__":
    main()
