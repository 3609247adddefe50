"""The report a designer reads: verdict first, 80 columns, the file's text as text, numbers
as people write them, and advice that fits the cause."""

from __future__ import annotations

import io
import math
import os
import re
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest
from rich.console import Console

import chainbudget as cb
from chainbudget.budget import compute
from chainbudget.chainfile import parse_chain
from chainbudget.report.table_view import render

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "chains").glob("*.toml"))
TEST_CHAINS = sorted((ROOT / "tests" / "data").glob("*.toml"))
E_NOTATION = re.compile(r"\d[eE][+-]?\d")


def run(*args: str, columns: int = 80, **env: str) -> subprocess.CompletedProcess[str]:
    """The real command, as a user at an 80-column terminal without colour runs it."""
    environ = {**os.environ, "COLUMNS": str(columns), "NO_COLOR": "1", **env}
    return subprocess.run(
        [sys.executable, "-m", "chainbudget", *args],
        capture_output=True,
        text=True,
        env=environ,
        check=False,
    )


@pytest.mark.parametrize("path", EXAMPLES + TEST_CHAINS, ids=lambda p: p.stem)
def test_every_chain_reads_at_80_columns_with_its_verdict_first(path: Path) -> None:
    done = run("check", str(path))
    assert done.returncode in (0, 1), done.stderr
    assert "Traceback" not in done.stdout + done.stderr
    lines = done.stdout.splitlines()
    too_wide = [line for line in lines if len(line.encode()) > 80]
    assert not too_wide, too_wide[:3]
    text = done.stdout
    verdict, tables = text.index("Verdict:"), text.index("Levels at the reference")
    assert verdict < tables
    if "Findings" in text:
        assert verdict < text.index("Findings") < tables


def test_brief_gives_the_verdict_and_the_findings_only() -> None:
    done = run("check", str(ROOT / "chains" / "busking_amp.toml"), "--brief")
    assert done.returncode in (0, 1), done.stderr
    assert "Verdict:" in done.stdout and "Findings" in done.stdout
    assert "Levels at the reference" not in done.stdout


def test_the_files_own_text_is_shown_as_text_never_as_markup(tmp_path: Path) -> None:
    """Square brackets are rich's markup; a title or a stage name holding them must print
    as written and never crash the report."""
    text = (ROOT / "chains" / "desk_speaker_preamp.toml").read_text(encoding="utf-8")
    data = tomllib.loads(text)
    title = "[bold red]Desk[/] amp [/x]"
    text = re.sub(r'(?m)^title = ".*"$', f'title = "{title}"', text, count=1)
    first = data["stage"][0]["name"]
    weird = "in[/put]"
    text = text.replace(f'name = "{first}"', f'name = "{weird}"', 1)
    file = tmp_path / "brackets.toml"
    file.write_text(text, encoding="utf-8")
    done = run("check", str(file))
    assert done.returncode in (0, 1), done.stderr
    assert "Traceback" not in done.stderr
    assert title in done.stdout and weird in done.stdout


def _render(chain_path: Path, **console_args: object) -> str:
    """What a console writes (escape codes and all) for a chain's report."""
    budget = compute(cb.load(chain_path))
    out = io.StringIO()
    console = Console(file=out, width=80, **console_args)  # type: ignore[arg-type]
    render(budget, list(budget.findings), console)
    return out.getvalue()


def test_findings_are_coloured_on_a_terminal_unless_no_color_is_set(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """The NO_COLOR convention (no-color.org): present and not empty, no colour (bold may
    stay: it is not a colour)."""
    path = ROOT / "chains" / "kitchen_radio_mains.toml"
    colour = re.compile(r"\x1b\[[\d;]*?(?:3[0-7]|9[0-7])(?:;[\d;]*)?m")
    monkeypatch.delenv("NO_COLOR", raising=False)
    assert colour.search(_render(path, force_terminal=True))
    monkeypatch.setenv("NO_COLOR", "1")
    assert not colour.search(_render(path, force_terminal=True))


@pytest.mark.parametrize("path", EXAMPLES + TEST_CHAINS, ids=lambda p: p.stem)
def test_no_message_writes_a_number_in_e_notation(path: Path) -> None:
    budget = compute(cb.load(path))
    for finding in budget.findings:
        assert not E_NOTATION.search(finding.message), finding.message


def test_a_milliohm_and_a_megohm_cannot_be_read_one_for_the_other() -> None:
    """ "mohm" and "Mohm" differ by case alone (a factor of 10^9); the report spells them."""
    done = run("check", str(ROOT / "chains" / "busking_amp.toml"))
    assert "milliohm" in done.stdout
    assert not re.search(r"\d (mohm|Mohm)\b", done.stdout)


def test_worst_cases_name_every_control_as_stage_dot_control() -> None:
    done = run("check", str(ROOT / "chains" / "busking_amp.toml"))
    assert "tone.bass_position=1" in done.stdout
    assert not re.search(r"(?<![.\w])(bass|position)=", done.stdout)


SOURCE_INTO_BLOCK = """
[source]
level = "-10 dBV"
impedance = "10 kohm"
[load]
impedance = "10 kohm"
[[stage]]
name = "eq"
kind = "block"
gain = "0 dB"
input_impedance = "{input}"
output_impedance = "100 ohm"
[[stage]]
name = "pre"
kind = "block"
gain = "20 dB"
input_impedance = "1 Mohm"
output_impedance = "100 ohm"
"""


def test_a_source_loaded_by_the_first_stage_is_named_with_its_cure() -> None:
    """10 kohm into 10 kohm halves the signal: 20 log10(10/(10 + 10)) = -6.02 dB (voltage
    divider, Ohm's law); the gain stage that could come first is named. 100 kohm bridges the
    source (ten times its impedance, common practice): no finding."""
    chain = parse_chain(tomllib.loads(SOURCE_INTO_BLOCK.format(input="10 kohm")), "t.toml")
    budget = compute(chain)
    (found,) = [f for f in budget.findings if f.code == "source-loaded"]
    assert found.severity == "warning" and found.stage == "eq"
    assert found.figures["loss_db"] == pytest.approx(20 * math.log10(0.5), rel=1e-6, abs=0)
    assert '"pre"' in found.message
    bridged = parse_chain(tomllib.loads(SOURCE_INTO_BLOCK.format(input="100 kohm")), "t.toml")
    assert not [f for f in compute(bridged).findings if f.code == "source-loaded"]


OPAMP_INTO_SPEAKER = """
[source]
level = "0 dBV"
impedance = "1 kohm"
[load]
impedance = "8 ohm"
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"
[[stage]]
name = "amp"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "1k"
positive = "plus"
negative = "minus"
"""


def test_an_op_amp_out_of_current_is_told_to_buffer_not_to_raise_its_rails() -> None:
    """11 V peak into 8 ohm asks 1.4 A of an op-amp good for tens of mA: it clips on
    current, and more rail would not help (Ohm's law)."""
    budget = compute(parse_chain(tomllib.loads(OPAMP_INTO_SPEAKER), "t.toml"))
    (clip,) = [f for f in budget.findings if f.stage == "amp" and f.code.startswith("clip-")]
    assert clip.severity == "error"
    assert "buffer" in clip.message and "raise its rails" not in clip.message


def test_behind_the_volume_the_report_says_how_far_it_may_turn() -> None:
    """The reach on the fine volume axis agrees with the chain re-checked at rotations
    either side of it (the file changed with `replace`, a separate solve each time)."""
    chain = cb.load(ROOT / "chains" / "kitchen_radio_mains.toml")
    reach = cb.compute(chain).node("amp").volume_reach
    assert reach is not None and 0.0 < reach < 1.0
    below = cb.compute(chain.replace("volume.position", reach)).node("amp").headroom_db
    above = cb.compute(chain.replace("volume.position", reach + 1 / 400)).node("amp")
    assert below is not None and below >= 0.0
    assert above.headroom_db is not None and above.headroom_db < 0.0
    done = run("check", str(ROOT / "chains" / "kitchen_radio_mains.toml"))
    assert f"the volume may turn to {reach:.2f}" in done.stdout


def test_a_cut_off_that_no_signal_reaches_is_not_printed() -> None:
    """The busking amp's buffer saturates long before its bias side would cut off: the
    JSON keeps the figure, the table does not show it as if it mattered."""
    budget = cb.compute(cb.load(ROOT / "chains" / "busking_amp.toml"))
    node = budget.node("buffer")
    assert node.cut_off_vpk is not None and node.cut_off_vpk > node.clip_vpk
    done = run("check", str(ROOT / "chains" / "busking_amp.toml"))
    assert "cuts off at" not in done.stdout
