"""The sweep: one batched analysis whose every step equals a check of the edited file."""

from __future__ import annotations

import importlib
import json
import math
import re
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from typer.testing import CliRunner

from chainbudget.budget import steps as steps_module
from chainbudget.budget.sweep import (
    SweepError,
    stepped_control,
    stepped_value,
    sweep,
)
from chainbudget.chainfile import load_chain
from chainbudget.cli import app
from chainbudget.report.json_view import budget_json

CHAINS = Path(__file__).resolve().parents[1] / "chains"
runner = CliRunner()


def edit_stage(text: str, stage: str, key: str, toml_value: str) -> str:
    """The chain file's text with ``key`` of the ``[[stage]]`` named ``stage`` set to
    ``toml_value`` (the line replaced, or added after the stage's name)."""
    blocks = re.split(r"(?m)^(?=\[\[stage\]\])", text)
    for i, block in enumerate(blocks):
        if re.search(rf'(?m)^name\s*=\s*"{re.escape(stage)}"', block):
            line = f"{key} = {toml_value}"
            edited, count = re.subn(rf"(?m)^{re.escape(key)}\s*=.*$", line, block)
            if count == 0:
                edited = re.sub(r'(?m)^(name\s*=\s*".*")$', rf"\1\n{line}", block, count=1)
            blocks[i] = edited
            return "".join(blocks)
    raise AssertionError(f"no stage {stage}")


def checked(path: Path) -> dict[str, Any]:
    """The real ``check --format json`` of a file."""
    result = runner.invoke(app, ["check", str(path), "--format", "json"])
    assert result.exit_code in (0, 1), result.output
    data: dict[str, Any] = json.loads(result.output)
    return data


def assert_same(a: Any, b: Any, path: str = "") -> None:
    """Equal JSON data, floats to 1e-9 relative (the batched solve may round differently
    in the last digits)."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and set(a) == set(b), path
        for key in a:
            assert_same(a[key], b[key], f"{path}.{key}")
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            assert_same(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and isinstance(b, float):
        assert a == pytest.approx(b, rel=1e-9, abs=0.0), path
    else:
        assert a == b, path


# (chain, stage, field, pot?, values, TOML text of a value). The busking amp's battery sags
# with what its stages draw, so its steps settle on rails of their own.
CASES = [
    ("desk_speaker_preamp", "tone", "treble_position", True, (0.0, 0.37, 1.0), repr),
    ("busking_amp", "volume", "position", True, (0.2, 1.0), repr),
    ("field_recorder_battery", "trim", "position", True, (0.15, 0.9), repr),
    ("desk_speaker_preamp", "driver", "feedback", False, (10e3, 47e3), lambda v: f'"{v!r} ohm"'),
    # the follower's bias takes its base resistor as an array (chainbudget/spread needs it)
    ("busking_amp", "buffer", "base_resistor", False, (220.0, 4.7e3), lambda v: f'"{v!r} ohm"'),
    ("busking_amp", "output", "emitter_resistors", False, (0.1, 0.47), lambda v: f'"{v!r} ohm"'),
]


def test_a_model_that_takes_one_value_at_a_time_is_refused(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """A stage model with scalar arithmetic on the stepped value (here the output pair's
    conduction current worked out with the builtin max, as it once was) is refused with the
    reason, before the sweep's solve."""
    halves = importlib.import_module("chainbudget.stages.push_pull.halves")

    def scalar(stage: Any, env: Any) -> float:
        swing = min(half.swing_v for half in halves.halves(stage, env))
        return max(stage.number("quiescent"), swing / stage.number("emitter_resistors"))

    monkeypatch.setattr(halves, "conduction_current", scalar)
    chain = load_chain(CHAINS / "busking_amp.toml")
    with pytest.raises(SweepError, match="one value at a time"):
        stepped_value(chain, "output.emitter_resistors", "0.1 ohm", "0.47 ohm", 3)


@pytest.mark.parametrize(("name", "stage", "key", "pot", "values", "toml"), CASES)
def test_every_step_equals_a_check_of_the_edited_file(
    tmp_path: Path, name: str, stage: str, key: str, pot: bool, values: tuple[float, ...], toml: Any
) -> None:
    """Independent: the file's TOML text is edited to each value and checked by the real
    command; the whole JSON report of the step must match."""
    source = CHAINS / f"{name}.toml"
    chain = load_chain(source)
    if pot:
        stepped = stepped_control(chain, f"{stage}.{key}", 2)
    else:
        stepped = stepped_value(chain, f"{stage}.{key}", "1k", "2k", 2)
    stepped = type(stepped)(stepped.stage_index, key, pot, np.array(values))
    budgets = list(sweep(chain, stepped))
    text = source.read_text(encoding="utf-8")
    for value, budget in zip(values, budgets, strict=True):
        edited = tmp_path / f"{name}_{value:g}.toml"
        edited.write_text(edit_stage(text, stage, key, toml(value)), encoding="utf-8")
        expected = checked(edited)
        got = budget_json(budget, list(budget.findings))
        expected["file"] = got["file"]
        assert_same(got, expected)


def test_the_sweep_command_shows_the_checked_figures(tmp_path: Path) -> None:
    """The table's key figures, through the command's JSON, at both ends of a bass sweep."""
    source = CHAINS / "desk_speaker_preamp.toml"
    result = runner.invoke(
        app, ["sweep", str(source), "--control", "tone.bass_position", "--steps", "3", "-f", "json"]
    )
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["swept"]["values"] == [0.0, 0.5, 1.0]
    text = source.read_text(encoding="utf-8")
    for step in data["steps"]:
        edited = tmp_path / "edited.toml"
        edited.write_text(edit_stage(text, "tone", "bass_position", repr(step["value"])))
        report = checked(edited)
        nodes = report["nodes"]
        severities = [fi["severity"] for fi in report["findings"]]
        assert step["gain_db"] == pytest.approx(nodes[-1]["total_gain_db"], rel=1e-9)
        assert step["headroom_db"] == pytest.approx(
            min(n["headroom_db"] for n in nodes if n["headroom_db"] is not None), rel=1e-9
        )
        assert step["worst_headroom_db"] == pytest.approx(
            min(n["worst_headroom_db"] for n in nodes if n["worst_headroom_db"] is not None),
            rel=1e-9,
        )
        assert step["first_clip"] == report["first_clip"]
        assert step["snr_db"] == pytest.approx(nodes[-1]["snr_db"], rel=1e-9)
        assert step["clip_power_w"] == pytest.approx(report["output"]["clip_power_w"], rel=1e-9)
        assert (step["errors"], step["warnings"], step["notes"]) == tuple(
            severities.count(s) for s in ("error", "warning", "note")
        )
        assert step["codes"] == [fi["code"] for fi in report["findings"]]


def test_the_steps_are_one_batched_solve(monkeypatch: pytest.MonkeyPatch) -> None:
    """Nine steps of a pot cost the same two whole-chain solves as one analysis (nominal,
    volume axis): the step is an array axis, not a loop (the worst-case search, polynomial
    in the pots, runs on each step's sections as it is read out). The desk pre-amp's rails
    are bench supplies that do not sag, so no step is solved again."""
    calls: list[tuple[int, ...]] = []
    real = steps_module.solve_chain

    def counted(*args: Any, **kwargs: Any) -> Any:
        cascade = real(*args, **kwargs)
        calls.append(np.shape(cascade.v_out[0]))
        return cascade

    monkeypatch.setattr(steps_module, "solve_chain", counted)
    chain = load_chain(CHAINS / "desk_speaker_preamp.toml")
    for spec in ("tone.treble_position", "volume.position"):
        calls.clear()
        budgets = list(sweep(chain, stepped_control(chain, spec, 9)))
        assert len(budgets) == 9 and len(calls) == 2
        assert calls[0][0] == 9  # the nominal cascade carries the step axis
    calls.clear()
    list(sweep(chain, stepped_value(chain, "driver.feedback", "10k", "47k", 9)))
    assert len(calls) == 2 and all(shape[0] == 9 for shape in calls)


def test_a_log_sweep_of_a_part_value_is_geometric() -> None:
    chain = load_chain(CHAINS / "desk_speaker_preamp.toml")
    stepped = stepped_value(chain, "driver.feedback", "1k", "100k", 3, "log")
    assert stepped.values == pytest.approx([1e3, 1e4, 1e5], rel=1e-12)


@pytest.mark.parametrize(
    ("chain", "spec", "said"),
    [
        ("desk_speaker_preamp", "driver.opamp", "not a part value"),
        ("desk_speaker_preamp", "tone.bass_position", "is a pot"),
        ("desk_speaker_preamp", "tone.bas_cap", 'did you mean "bass_cap"'),
        ("desk_speaker_preamp", "tne.bass_cap", 'did you mean "tone"'),
    ],
)
def test_what_cannot_be_stepped_is_refused_with_a_reason(chain: str, spec: str, said: str) -> None:
    with pytest.raises(SweepError, match=said):
        stepped_value(load_chain(CHAINS / f"{chain}.toml"), spec, "1k", "2k", 3)


@pytest.mark.parametrize(
    "args",
    [
        ["--control", "tone.x"],
        ["--control", "tone.bass_position", "--from", "1k"],
        ["--value", "driver.feedback", "--from", "1k"],
        ["--value", "driver.feedback", "--from", "10 V", "--to", "2k"],
        ["--control", "tone.bass_position", "--steps", "1"],
        ["--control", "tone.bass_position", "--format", "xml"],
        [],
    ],
)
def test_bad_sweep_options_exit_2_on_one_line(args: list[str]) -> None:
    result = runner.invoke(app, ["sweep", str(CHAINS / "desk_speaker_preamp.toml"), *args])
    assert result.exit_code == 2
    assert "Traceback" not in result.output and len(result.output.strip().splitlines()) == 1


def test_the_sweep_table_and_csv() -> None:
    source = str(CHAINS / "violin_piezo_preamp.toml")
    table = runner.invoke(app, ["sweep", source, "--control", "bass.position", "--steps", "3"])
    assert table.exit_code == 0 and "bass.position swept" in table.output
    assert "rotation" in table.output
    csv_text = runner.invoke(
        app, ["sweep", source, "--value", "bass.cap", "--from", "10n", "--to", "47n", "-f", "csv"]
    )
    lines = csv_text.output.strip().splitlines()
    assert lines[0].startswith("value,gain_db,headroom_db") and len(lines) == 12
    assert math.isclose(float(lines[1].split(",")[0]), 10e-9, rel_tol=1e-12)


def test_a_step_the_loader_would_refuse_is_refused() -> None:
    """Stepping a block's gain linearly from -10 to 10 passes through 0, which a chain file
    may not hold: the sweep says which step, as the loader would."""
    chain = load_chain(CHAINS / "tape_replay_module.toml")
    with pytest.raises(SweepError, match="the step at 0 would not load"):
        stepped_value(chain, "replay.gain", "-10", "10", 3)
    assert stepped_value(chain, "replay.gain", "20 dB", "40 dB", 3).values == pytest.approx(
        [10.0, 55.0, 100.0], rel=1e-12
    )
