"""The real command, driven through typer's CliRunner and as a subprocess."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tomllib
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest
from typer.testing import CliRunner

from chainbudget.cli import app

ROOT = Path(__file__).resolve().parents[1]
CHAINS = sorted((ROOT / "chains").glob("*.toml"))
runner = CliRunner()

# The keys the chain-format contract makes required in `check --format json`, and those
# the noise, power-end and supply issues add to them.
TOP_KEYS = {
    "title",
    "reference_hz",
    "band_hz",
    "nodes",
    "input_noise_vrms",
    "input_noise_a_vrms",
    "output",
    "supplies",
    "findings",
    "noise_sources",
}
NODE_KEYS = {
    "stage",
    "kind",
    "gain_db",
    "total_gain_db",
    "level_vrms",
    "clip_vpk",
    "headroom_db",
    "worst_headroom_db",
    "worst_at",
    "zout_ohm",
    "zload_ohm",
    "noise_vrms",
    "noise_a_vrms",
    "snr_db",
}
OUTPUT_KEYS = {
    "clip_power_w",
    "nominal_power_w",
    "max_spl_db",
    "damping_factor",
    "device_dissipation_w",
    "junction_degc",
}
SUPPLY_KEYS = {
    "name",
    "kind",
    "vout_v",
    "idle_load_a",
    "max_load_a",
    "dropout_margin_v",
    "min_load_margin_a",
    "dissipation_w",
    "junction_degc",
    "ripple_vpp",
    "input_min_v",
    "input_max_v",
}
FINDING_KEYS = {"severity", "code", "stage", "message"}


def test_there_are_at_least_three_example_chains() -> None:
    assert len(CHAINS) >= 3


# Every chain the project ships or tests with, run as the real command: typer's CliRunner
# catches an exception and reports exit status 1 without printing a traceback, so only a
# subprocess shows one.
REAL_CHAINS = [*CHAINS, *sorted((ROOT / "tests" / "data").glob("*.toml"))]
FORMATS = ("table", "json")


def _run_check(chain: Path, output_format: str) -> subprocess.CompletedProcess[str]:
    env = {**os.environ, "COLUMNS": "80"}
    return subprocess.run(
        [sys.executable, "-m", "chainbudget", "check", str(chain), "--format", output_format],
        capture_output=True,
        text=True,
        check=False,
        env=env,
        cwd=ROOT,
    )


@pytest.fixture(scope="module")
def real_checks() -> dict[tuple[str, str], subprocess.CompletedProcess[str]]:
    """One real `check` per chain and format, run side by side to keep the suite quick."""
    jobs = [(chain, fmt) for chain in REAL_CHAINS for fmt in FORMATS]
    with ThreadPoolExecutor(max_workers=os.cpu_count() or 2) as pool:
        done = list(pool.map(lambda job: _run_check(*job), jobs))
    return {(chain.stem, fmt): run for (chain, fmt), run in zip(jobs, done, strict=True)}


@pytest.mark.parametrize("output_format", FORMATS)
@pytest.mark.parametrize("chain", REAL_CHAINS, ids=lambda p: p.stem)
def test_every_example_checks_as_the_real_command_without_a_traceback(
    chain: Path,
    output_format: str,
    real_checks: dict[tuple[str, str], subprocess.CompletedProcess[str]],
) -> None:
    """`python -m chainbudget check FILE` (COLUMNS=80): exit status 0 or 1 (contract: 1 with
    an error finding), nothing on stderr, no traceback anywhere, and the report printed."""
    done = real_checks[(chain.stem, output_format)]
    assert "Traceback" not in done.stderr and "Traceback" not in done.stdout, done.stderr
    assert done.returncode in (0, 1), done.stderr
    assert done.stderr == ""
    if output_format == "table":
        assert "Levels at the reference" in done.stdout
        assert "\x1b[" not in done.stdout  # no colour codes when not writing to a terminal
    else:
        data = json.loads(done.stdout)
        assert [n["stage"] for n in data["nodes"]]
        has_error = any(f["severity"] == "error" for f in data["findings"])
        assert done.returncode == (1 if has_error else 0)


@pytest.mark.parametrize("chain", CHAINS, ids=lambda p: p.stem)
def test_every_example_prints_the_contract_json_keys(chain: Path) -> None:
    result = runner.invoke(app, ["check", str(chain), "--format", "json"])
    data = json.loads(result.stdout)
    assert TOP_KEYS <= data.keys()
    assert len(data["nodes"]) >= 1
    for node in data["nodes"]:
        assert NODE_KEYS <= node.keys()
        if node["worst_at"] is not None:
            assert {"frequency_hz", "controls"} <= node["worst_at"].keys()
    assert OUTPUT_KEYS <= data["output"].keys()
    assert len(data["supplies"]) >= 1
    for supply in data["supplies"]:
        assert SUPPLY_KEYS <= supply.keys()
    for finding in data["findings"]:
        assert FINDING_KEYS <= finding.keys()
        assert finding["severity"] in ("error", "warning", "caution", "note")
    # Exit status follows the findings (contract: 1 with at least one error).
    has_error = any(f["severity"] == "error" for f in data["findings"])
    assert result.exit_code == (1 if has_error else 0)


@pytest.mark.parametrize("chain", CHAINS, ids=lambda p: p.stem)
def test_every_example_prints_valid_toml(chain: Path) -> None:
    result = runner.invoke(app, ["check", str(chain), "--format", "toml"])
    data = tomllib.loads(result.stdout)
    assert data["title"]


def test_strict_turns_warnings_into_exit_one() -> None:
    chain = ROOT / "chains" / "tape_replay_module.toml"
    plain = runner.invoke(app, ["check", str(chain), "--format", "json"])
    findings = json.loads(plain.stdout)["findings"]
    assert not any(f["severity"] == "error" for f in findings)
    assert any(f["severity"] == "warning" for f in findings)
    assert plain.exit_code == 0
    assert runner.invoke(app, ["check", str(chain), "--strict"]).exit_code == 1


def test_the_floating_input_example_is_an_error() -> None:
    chain = ROOT / "chains" / "violin_piezo_preamp.toml"
    result = runner.invoke(app, ["check", str(chain), "--format", "json"])
    codes = {(f["severity"], f["code"], f["stage"]) for f in json.loads(result.stdout)["findings"]}
    assert ("error", "no-dc-path", "buffer") in codes
    assert result.exit_code == 1


GOOD = """
[chain]
title = "t"
[source]
level = "-10 dBV"
impedance = "1 kohm"
[load]
impedance = "10 kohm"
[[supply]]
name = "rail"
kind = "dc"
voltage = "24 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "1k"
[[stage]]
name = "bass"
kind = "tone_bass"
outer = "10k"
pot = "100k"
cap = "47n"
"""

BAD_CASES = {
    "wrong dimension": ('cap = "47n"', 'cap = "10 V"', 'stage[2] "bass".cap'),
    "bare number": ('outer = "10k"', "outer = 10000", 'stage[2] "bass".outer'),
    "negative resistance": ('feedback = "10k"', 'feedback = "-10 kohm"', 'stage[1] "pre".feedback'),
    "zero resistance": ('feedback = "10k"', 'feedback = "0 ohm"', 'stage[1] "pre".feedback'),
    "position out of range": (
        'cap = "47n"',
        'cap = "47n"\nposition = 1.5',
        'stage[2] "bass".position',
    ),
    "unknown field": ('cap = "47n"', 'cap = "47n"\ncapp = "1n"', 'stage[2] "bass".capp'),
    "unknown kind": ('kind = "tone_bass"', 'kind = "tone_bas"', 'stage[2] "bass".kind'),
    "missing field": ('pot = "100k"\n', "", 'stage[2] "bass".pot'),
    "undefined rail": (
        'ground_leg = "1k"',
        'ground_leg = "1k"\npositive = "rial"',
        'stage[1] "pre".positive',
    ),
    "undefined part": (
        'ground_leg = "1k"',
        'ground_leg = "1k"\nopamp = "nosuch"',
        'stage[1] "pre".opamp',
    ),
    "bad level": ('level = "-10 dBV"', 'level = "loud"', "source.level"),
    "bad temperature": ('title = "t"', 'title = "t"\nambient = "hot"', "chain.ambient"),
}


@pytest.mark.parametrize("case", sorted(BAD_CASES))
def test_every_error_class_is_one_line_with_its_path_and_exit_two(
    case: str, tmp_path: Path
) -> None:
    old, new, path = BAD_CASES[case]
    assert old in GOOD
    file = tmp_path / "bad.toml"
    file.write_text(GOOD.replace(old, new, 1), encoding="utf-8")
    result = runner.invoke(app, ["check", str(file)])
    assert result.exit_code == 2
    message = result.stderr.strip()
    assert "\n" not in message
    assert str(file) in message and path in message
    assert "Traceback" not in result.output


def test_the_good_fixture_is_good(tmp_path: Path) -> None:
    """The base of the error cases loads and checks: its two stages are reported, the
    pre-amp's gain 1 + 10k/1k = 11 (20.8 dB; Horowitz & Hill 3rd ed. sec. 4.2.1)."""
    file = tmp_path / "good.toml"
    file.write_text(GOOD, encoding="utf-8")
    result = runner.invoke(app, ["check", str(file), "--format", "json"])
    data = json.loads(result.stdout)
    assert [n["stage"] for n in data["nodes"]] == ["pre", "bass"]
    assert data["nodes"][0]["gain_db"] == pytest.approx(20.83, abs=0.01)


def test_did_you_mean_for_a_mistyped_kind(tmp_path: Path) -> None:
    file = tmp_path / "bad.toml"
    file.write_text(GOOD.replace('kind = "tone_bass"', 'kind = "tone_bas"'), encoding="utf-8")
    assert 'did you mean "tone_bass"' in runner.invoke(app, ["check", str(file)]).stderr


def test_missing_file_and_bad_toml_exit_two(tmp_path: Path) -> None:
    assert runner.invoke(app, ["check", str(tmp_path / "none.toml")]).exit_code == 2
    file = tmp_path / "broken.toml"
    file.write_text("[chain\n", encoding="utf-8")
    result = runner.invoke(app, ["check", str(file)])
    assert result.exit_code == 2 and "not valid TOML" in result.stderr


def test_unknown_format_is_a_usage_error() -> None:
    result = runner.invoke(app, ["check", str(CHAINS[0]), "--format", "xml"])
    assert result.exit_code == 2


def test_new_writes_a_starter_that_checks_and_refuses_to_overwrite(tmp_path: Path) -> None:
    file = tmp_path / "mine.toml"
    assert runner.invoke(app, ["new", str(file)]).exit_code == 0
    first = file.read_text(encoding="utf-8")
    # The starter is meant to be a working chain that checks clean: no error and no warning,
    # so even --strict passes.
    assert runner.invoke(app, ["check", str(file), "--strict"]).exit_code == 0
    file.write_text("# my own work\n", encoding="utf-8")
    refused = runner.invoke(app, ["new", str(file)])
    assert refused.exit_code == 2
    assert file.read_text(encoding="utf-8") == "# my own work\n"
    assert runner.invoke(app, ["new", str(file), "--force"]).exit_code == 0
    assert file.read_text(encoding="utf-8") == first


def test_blocks_lists_every_kind_and_the_fields_of_one() -> None:
    listing = runner.invoke(app, ["blocks"])
    assert listing.exit_code == 0
    for kind in (
        "opamp_gain",
        "tone_bass",
        "tone_treble",
        "tone_two_band",
        "volume",
        "block",
        "dc",
    ):
        assert kind in listing.output
    one = runner.invoke(app, ["blocks", "tone_two_band"])
    assert one.exit_code == 0 and "treble_cap" in one.output and "bass_outer" in one.output
    assert runner.invoke(app, ["blocks", "tone_bas"]).exit_code == 2


@pytest.mark.parametrize("output_format", FORMATS)
def test_the_check_path_does_not_load_matplotlib(output_format: str) -> None:
    """matplotlib is for `plot` only; a whole `check` (load, compute, findings, the view)
    runs without importing it (architecture guide). The real command's entry point runs in a
    fresh interpreter, which then reports what it has imported."""
    chain = ROOT / "chains" / "busking_amp.toml"
    code = (
        "import sys\n"
        "from chainbudget.cli import main\n"
        f"sys.argv = ['chainbudget', 'check', {str(chain)!r}, '--format', {output_format!r}]\n"
        "try:\n"
        "    main()\n"
        "except SystemExit as exc:\n"
        "    status = exc.code\n"
        "else:\n"
        "    status = 0\n"
        "loaded = sorted(m for m in sys.modules if m.split('.')[0] == 'matplotlib')\n"
        "print('MODULES', status, loaded, file=sys.stderr)\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=False)
    assert done.returncode == 0, done.stderr
    last = done.stderr.strip().splitlines()[-1]
    assert last.startswith("MODULES "), done.stderr
    assert last.split(" ", 2)[1] in ("0", "1"), done.stderr  # the check itself ran through
    assert last.endswith("[]"), last
    assert "Levels at the reference" in done.stdout or json.loads(done.stdout)["nodes"]


# --- small things, and files that are not chain files --------------------------------------


def test_version() -> None:
    """``--version`` prints the package's version (the one pyproject.toml declares)."""
    result = runner.invoke(app, ["--version"])
    declared = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert result.exit_code == 0
    assert result.stdout.strip() == f"chainbudget {declared['project']['version']}"


def test_help_shows_no_type_after_a_flag() -> None:
    """A flag takes no value: its help line shows no "<bool>"; an option with a value keeps
    its type."""
    for command in (["check", "--help"], ["new", "--help"], ["plot", "--help"], ["--help"]):
        result = runner.invoke(app, command, env={"COLUMNS": "120"})
        assert result.exit_code == 0
        assert "<bool>" not in result.stdout
    assert "<str>" in runner.invoke(app, ["check", "--help"], env={"COLUMNS": "120"}).stdout


def _command(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "chainbudget", *args],
        capture_output=True,
        text=True,
        check=False,
        timeout=120,
    )


def _one_line_refusal(done: subprocess.CompletedProcess[str], file: Path) -> str:
    assert done.returncode == 2, done.stderr
    assert "Traceback" not in done.stderr
    lines = done.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"chainbudget: {file}: ")
    assert lines[0].isprintable()
    return lines[0]


@pytest.mark.parametrize(
    ("form", "expected"),
    [
        ("directory", "cannot read the file"),
        ("binary", "binary file"),
        ("deep", "nest too deeply"),
        ("huge", "too large"),
        ("escape", "without control characters"),
    ],
)
def test_hostile_files_are_one_line_through_the_real_command(
    tmp_path: Path, form: str, expected: str
) -> None:
    """A directory, a binary file, TOML nested 100,000 deep, a 10 MB file and a name with a
    terminal escape: each is one printable line on stderr and exit 2, never a traceback."""
    file = tmp_path / "hostile.toml"
    if form == "directory":
        file.mkdir()
    elif form == "binary":
        file.write_bytes(bytes(range(256)))
    elif form == "deep":
        file.write_text("x = " + "[" * 100_000 + "]" * 100_000, encoding="utf-8")
    elif form == "huge":
        file.write_text("#" * 10_000_000, encoding="utf-8")
    else:
        file.write_text(GOOD.replace('name = "pre"', 'name = "pre\\u001b[2J"'), encoding="utf-8")
    assert expected in _one_line_refusal(_command("check", str(file)), file)


def test_a_title_in_square_brackets_reaches_the_json_as_written(tmp_path: Path) -> None:
    """Text the file supplies is data, not markup: a title and a stage name holding square
    brackets (rich's markup) come out unchanged in the JSON."""
    file = tmp_path / "brackets.toml"
    text = GOOD.replace('title = "t"', 'title = "Amp [/bold] [red]x"').replace(
        'name = "pre"', 'name = "pre[1]"'
    )
    file.write_text(text, encoding="utf-8")
    done = _command("check", str(file), "--format", "json")
    assert done.returncode in (0, 1), done.stderr
    data = json.loads(done.stdout)
    assert data["title"] == "Amp [/bold] [red]x"
    assert data["nodes"][0]["stage"] == "pre[1]"


def test_a_title_in_square_brackets_prints_as_a_table(tmp_path: Path) -> None:
    """The table view prints a title holding "[/bold]" as text (today rich reads it as
    markup and fails: a traceback)."""
    file = tmp_path / "brackets.toml"
    file.write_text(GOOD.replace('title = "t"', 'title = "Amp [/bold]"'), encoding="utf-8")
    done = _command("check", str(file))
    assert done.returncode in (0, 1) and "Traceback" not in done.stderr
    assert "Amp [/bold]" in done.stdout


def test_a_control_character_in_an_option_is_escaped(tmp_path: Path) -> None:
    """What the user typed is echoed escaped, too."""
    result = runner.invoke(app, ["check", str(CHAINS[0]), "--format", "js\x1bon"])
    assert result.exit_code == 2 and "\x1b" not in result.stderr and "\\x1b" in result.stderr
