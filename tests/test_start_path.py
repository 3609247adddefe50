"""What a command loads before it starts: the cached unit registry and the lazy command line.

Speed itself is measured by ``tests/bench/`` (ratios in one run), never here; these tests
hold the mechanisms: that ``--help`` and ``blocks`` leave the analysis and the views
unloaded, and that pint's cache is used when it can be and never fails a command when it
cannot.
"""

from __future__ import annotations

import os
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path

import pytest
from typer.testing import CliRunner

from chainbudget import cli_coercion, units
from chainbudget.cli import app

ROOT = Path(__file__).resolve().parents[1]
BUSKING = ROOT / "chains" / "busking_amp.toml"
# Modules of the analysis and report stack that neither --help nor blocks needs.
HEAVY = (
    "chainbudget.budget",
    "chainbudget.findings",
    "chainbudget.report",
    "pint",
    "pydantic",
    "scipy",
    "matplotlib",
)


def _modules_after(
    args: list[str], prefix: str | tuple[str, ...], env: dict[str, str] | None = None
) -> set[str]:
    """Run the command in a fresh interpreter and list the loaded modules under ``prefix``
    (one prefix or several)."""
    code = (
        "import sys\n"
        "from chainbudget.cli import app\n"
        "try:\n"
        f"    app({args!r})\n"
        "except SystemExit:\n"
        "    pass\n"
        f"print(sorted(m for m in sys.modules if m.startswith({prefix!r})))\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True, env=env
    )
    return set(eval(done.stdout.strip().splitlines()[-1]))


def _loaded_after(args: list[str], env: dict[str, str] | None = None) -> set[str]:
    """Run the command in a fresh interpreter and list the heavy modules it loaded."""
    return _modules_after(args, HEAVY, env)


def test_help_loads_neither_the_analysis_nor_pint() -> None:
    assert _loaded_after(["--help"]) == set()


def test_blocks_loads_neither_the_analysis_nor_the_views() -> None:
    loaded = _loaded_after(["blocks"])
    assert not {m for m in loaded if m.startswith(("chainbudget.budget", "chainbudget.report"))}
    assert "pint" not in loaded  # the catalogue reads no quantity
    assert "pydantic" not in loaded  # no argument given, so typer validates nothing


def test_check_does_load_the_analysis() -> None:
    """The probe above would pass vacuously if it saw nothing at all."""
    loaded = _loaded_after(["check", str(BUSKING)])
    assert "chainbudget.budget" in loaded
    # every value of the example is in a unit `units.KNOWN_UNITS` reads as pint would
    assert not {m for m in loaded if m.startswith(("pint", "scipy"))}
    assert "pydantic" not in loaded  # the command line is read by cli_coercion
    # scipy's heavy packages (half the import floor) and matplotlib stay off a check's
    # path: roots by chainbudget.roots, W(e^x) by Newton, pictures only for plot and html.
    # (pint itself imports the bare scipy package when it is installed, floor included.)
    heavy = ("scipy.optimize", "scipy.special", "scipy.linalg", "scipy.integrate", "matplotlib")
    assert not {m for m in loaded if m.startswith(heavy)}


def test_a_count_on_the_command_line_is_read_without_pydantic() -> None:
    """``--trials`` and ``--seed`` are counts: read as typer would, without pydantic."""
    args = ["spread", str(BUSKING), "--trials", "2", "--seed", "5", "--format", "json"]
    assert "pydantic" not in _loaded_after(args)


@pytest.mark.parametrize(
    "args",
    [["--format", "json"], ["--format", "toml"], [], ["--noise-detail"]],
    ids=["json", "toml", "table", "detail"],
)
def test_a_check_that_prints_no_styles_loads_no_rich(args: list[str]) -> None:
    """The JSON and TOML views read the report's areas, which build their tables as plain
    data (chainbudget/report/layout.py); a table on a pipe is drawn by
    chainbudget/report/plain_text.py. rich loads only for a terminal (tests/test_plain_text.py
    holds the two drawings equal)."""
    # settings that hand the choice of styles to rich itself are not set here
    env = {k: v for k, v in os.environ.items() if k not in ("FORCE_COLOR", "TTY_COMPATIBLE")}
    loaded = _modules_after(["check", str(BUSKING), *args], "rich", env)
    assert loaded == set()


def test_the_rich_probe_sees_rich_where_it_draws() -> None:
    """The probe above would pass vacuously if it never saw rich: blocks draws with it."""
    assert "rich.table" in _modules_after(["blocks"], "rich")


# Kinds the battery-powered busking chain does not name, and the modules only they use.
UNNAMED_KINDS = (
    "chainbudget.supplies.rectified",
    "chainbudget.supplies.regulator",
    "chainbudget.supplies.rc_filter",
    "chainbudget.supplies.divider",
    "chainbudget.rectifier",
    "chainbudget.stages.block",
    "chainbudget.stages.tone_bass",
    "chainbudget.stages.tone_treble",
)


def test_a_check_loads_only_the_kinds_its_chain_names() -> None:
    """The kind registries import a kind's module on first use (chainbudget.lazykinds): a
    chain on batteries loads no mains rectifier, regulator or filter supply."""
    loaded = _modules_after(["check", str(BUSKING), "--format", "json"], "chainbudget.")
    assert {"chainbudget.supplies.dc", "chainbudget.stages.push_pull"} <= loaded
    assert not {m for m in loaded if m.startswith(UNNAMED_KINDS)}


def test_a_mains_chain_loads_its_rectifier() -> None:
    """The probe above would pass vacuously if no kind were ever loaded by name."""
    mains = ROOT / "chains" / "kitchen_radio_mains.toml"
    loaded = _modules_after(["check", str(mains), "--format", "json"], "chainbudget.")
    assert {"chainbudget.supplies.rectified", "chainbudget.rectifier"} <= loaded


def test_the_kind_registries_name_each_kind_as_its_class_does() -> None:
    """Every registered name loads a kind whose own ``kind`` is that name, in the order the
    registry lists them; an unknown name is a KeyError, as a dict's."""
    from chainbudget.stages import KINDS as STAGE_KINDS
    from chainbudget.supplies import KINDS as SUPPLY_KINDS

    for registry in (STAGE_KINDS, SUPPLY_KINDS):
        names = list(registry)
        assert [kind.kind for kind in registry.values()] == names
        assert len(registry) == len(names) == len(set(names))
        assert "no_such_kind" not in registry
        with pytest.raises(KeyError):
            registry["no_such_kind"]


def _answers(args: list[str], plain: bool, monkeypatch: pytest.MonkeyPatch) -> tuple[int, str]:
    monkeypatch.setattr(cli_coercion, "_typer_offers_the_hooks", lambda: plain)
    result = CliRunner().invoke(app, args)
    return result.exit_code, result.output


@pytest.mark.parametrize(
    "args",
    [
        ["check", "{busking}", "--format", "json", "--strict"],
        ["check", "{busking}", "-f=toml"],
        ["check", "--format=nope", "{busking}"],
        ["check", "{missing}"],
        ["check", "{folder}"],
        ["check", ""],
        ["check"],
        ["check", "{busking}", "--strict=yes"],
        ["check", "--help"],
        ["blocks"],
        ["blocks", "opamp"],
        ["blocks", "volumes"],
        ["new", "{busking}"],
        ["new"],
        ["plot", "{busking}"],
        ["plot", "{busking}", "-o", "{folder}/x.txt"],
        ["--help"],
        ["no-such-command"],
        ["spread", "{busking}", "--trials", "3", "--seed", "007", "--format", "json"],
        ["spread", "{busking}", "--trials", "x"],
        ["spread", "{busking}", "--trials", "0"],
        ["spread", "{busking}", "--trials", "+3"],
        ["spread", "{busking}", "--trials", "1e3"],
        ["spread", "{busking}", "--seed", "-1", "--trials", "2"],
        ["spread", "{busking}", "--trials", "٣"],
    ],
)
def test_the_command_line_answers_as_typer_alone_would(
    args: list[str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Every answer (exit status and text) is the same with typer's own pydantic coercion
    and with the plain one."""
    names = {"busking": BUSKING, "missing": tmp_path / "no.toml", "folder": tmp_path}
    filled = [a.format(**{k: str(v) for k, v in names.items()}) for a in args]
    assert _answers(filled, True, monkeypatch) == _answers(filled, False, monkeypatch)


def test_the_start_path_does_without_scipy_constants() -> None:
    """k, e and 273.15 are literals (chainbudget.spectrum); scipy.constants is not loaded
    by the analysis itself (pint may load scipy's top package for its own checks)."""
    code = (
        "import sys\n"
        "from chainbudget.budget import compute\n"
        "from chainbudget.chainfile import load_chain\n"
        f"compute(load_chain({str(BUSKING)!r}))\n"
        "print('scipy.constants' in sys.modules)\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert done.stdout.strip() == "False"


@pytest.fixture
def fresh_registry() -> Iterator[None]:
    """Let a test build the process's registry again, and rebuild it afterwards."""
    units.registry.cache_clear()
    yield
    units.registry.cache_clear()


def test_the_registry_keeps_its_parsed_definitions_in_the_user_cache(
    fresh_registry: None, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    folder = units.registry_cache_folder()
    assert folder.parent == tmp_path / "chainbudget"
    assert units.registry().cache_folder == folder
    assert list(folder.glob("*.pickle"))
    # A second registry reads what the first one wrote.
    units.registry.cache_clear()
    assert units.registry().cache_folder == folder
    assert units.parse_quantity("4k7", units.OHM) == 4700.0
    assert units.parse_quantity("10 kohm", units.OHM) == pytest.approx(1e4, rel=1e-15)


def test_a_relative_xdg_cache_home_is_ignored(
    monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    """The XDG base directory specification: a relative path is invalid and ignored."""
    monkeypatch.setenv("XDG_CACHE_HOME", "relative/cache")
    monkeypatch.setenv("HOME", str(tmp_path))
    assert units.registry_cache_folder().parent == tmp_path / ".cache" / "chainbudget"


def test_an_unusable_cache_folder_falls_back_to_no_cache(
    fresh_registry: None, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    blocker = tmp_path / "a_file"
    blocker.write_text("not a folder")
    monkeypatch.setenv("XDG_CACHE_HOME", str(blocker))
    assert units.registry().cache_folder is None
    assert units.parse_quantity("1 kHz", units.HERTZ) == pytest.approx(1e3, rel=1e-15)


def test_a_damaged_cache_is_cleared_and_the_registry_built_without_it(
    fresh_registry: None, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    units.registry()
    folder = units.registry_cache_folder()
    pickles = list(folder.glob("*.pickle"))
    assert pickles
    for pickle in pickles:  # what a run killed while writing would leave
        pickle.write_bytes(pickle.read_bytes()[:40])
    units.registry.cache_clear()
    assert units.registry().cache_folder is None
    assert units.parse_quantity("47 nF", units.FARAD) == pytest.approx(47e-9, rel=1e-15)
    assert not list(folder.glob("*.pickle"))  # cleared: the next run writes it afresh
    units.registry.cache_clear()
    assert units.registry().cache_folder == folder
    assert list(folder.glob("*.pickle"))


def _busking_in_a_rarer_unit(tmp_path: Path) -> Path:
    """The busking chain with its op-amp's slew rate in MV/s, a unit only pint reads."""
    text = BUSKING.read_text(encoding="utf-8")
    assert 'slew_rate = "10 V/us"' in text
    chain = tmp_path / "busking_mv_per_s.toml"
    chain.write_text(text.replace('slew_rate = "10 V/us"', 'slew_rate = "10 MV/s"'), "utf-8")
    return chain


def test_a_value_in_a_unit_outside_the_table_is_read_by_pint(tmp_path: Path) -> None:
    """The probe above would pass vacuously if pint were never reached; the same chain
    with one value in a rarer unit loads pint and checks to the same report."""
    chain = _busking_in_a_rarer_unit(tmp_path)
    assert "pint" in _loaded_after(["check", str(chain)])
    args = [sys.executable, "-m", "chainbudget", "check", "--format", "json"]
    rare = subprocess.run([*args, str(chain)], capture_output=True, text=True, check=False)
    plain = subprocess.run([*args, str(BUSKING)], capture_output=True, text=True, check=False)
    assert rare.stdout.replace(str(chain), str(BUSKING)) == plain.stdout


def test_check_runs_the_same_when_the_cache_cannot_be_written(tmp_path: Path) -> None:
    """Through the real command: a cache home that is a file changes nothing but speed."""
    blocker = tmp_path / "a_file"
    blocker.write_text("not a folder")
    chain = _busking_in_a_rarer_unit(tmp_path)  # so that pint and its cache are used
    args = [sys.executable, "-m", "chainbudget", "check", str(chain), "--format", "json"]
    plain = subprocess.run(args, capture_output=True, text=True, check=False)
    env = {**os.environ, "XDG_CACHE_HOME": str(blocker)}
    blocked = subprocess.run(args, capture_output=True, text=True, check=False, env=env)
    assert blocked.returncode == plain.returncode
    assert blocked.stderr == ""
    assert blocked.stdout == plain.stdout


def test_a_cache_written_by_another_pint_is_never_read(
    fresh_registry: None, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The cache holds pickled pint objects, so each pint and Python version has its own
    folder: another version's files (here garbage under its name) are left alone."""
    import pint

    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    other = tmp_path / "chainbudget" / "pint-0.1.0-py3.0"
    other.mkdir(parents=True)
    (other / "stale.pickle").write_bytes(b"not a pickle of this pint")
    folder = units.registry_cache_folder()
    assert folder != other and pint.__version__ in folder.name
    assert units.registry().cache_folder == folder
    assert units.parse_quantity("2.2 uF", units.FARAD) == pytest.approx(2.2e-6, rel=1e-15)
    assert (other / "stale.pickle").read_bytes() == b"not a pickle of this pint"


def test_the_command_freezes_what_its_start_up_made() -> None:
    """``main`` hands the objects of the start-up imports to ``gc.freeze`` (the collector
    stops scanning them) and collects the young generation less often; calling ``app`` in
    a process of one's own (as the tests here do) leaves the collector alone."""
    code = (
        "import gc, sys\n"
        "from chainbudget.cli import {name}\n"
        "sys.argv = ['chainbudget', '--help']\n"
        "try:\n"
        "    {name}()\n"
        "except SystemExit:\n"
        "    pass\n"
        "print(gc.get_freeze_count(), gc.get_threshold()[0])\n"
    )
    counts, thresholds = {}, {}
    for name in ("main", "app"):
        done = subprocess.run(
            [sys.executable, "-c", code.format(name=name)],
            capture_output=True,
            text=True,
            check=True,
        )
        count, threshold = done.stdout.strip().splitlines()[-1].split()
        counts[name], thresholds[name] = int(count), int(threshold)
    assert counts["main"] > 10_000  # numpy, typer and the loader at least
    assert counts["app"] == 0
    # the young generation collected every 50,000 allocations in the command, not 700
    assert thresholds == {"main": 50_000, "app": 700}
