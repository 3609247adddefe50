"""The report drawn without rich (chainbudget/report/plain_text.py) against rich.

The reference is rich itself, the library that drew the report before: each block handed to
rich (`rich_view`, the same tables, grid and styled lines rich was always given) on a
console that does not style (``no_color``, not a terminal), against `plain_text` at the
same width; and on a terminal's console (escape codes for the styles; colours or, under
NO_COLOR, none) against `styled_text`. Held on every example chain's ``check`` (with the
noise's spectral detail, and ``--brief``) and ``spread`` report at 80, 100 and 160 columns,
on random tables and styled texts at random widths (hypothesis), and through the command
line on a pipe and in a pseudo-terminal.
"""

from __future__ import annotations

import io
import os
import subprocess
import sys
from collections.abc import Sequence
from functools import cache
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from rich.console import Console

from chainbudget.budget import Budget, compute
from chainbudget.chainfile import load_chain
from chainbudget.report.layout import BLANK, Drawn, Grid, Line, ReportTable, line
from chainbudget.report.plain_text import plain_text, styled_text, wrap
from chainbudget.report.rich_view import print_blocks
from chainbudget.report.table_view import report_blocks
from chainbudget.report.terminal import console_width, plain_stdout
from chainbudget.spread.run import run_spread
from chainbudget.spread.view import spread_tables

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "chains").glob("*.toml"))
WIDTHS = (80, 100, 160)


def rich_text(blocks: Sequence[Drawn], width: int) -> str:
    """What rich prints for the blocks on a console of ``width`` that does not style."""
    out = io.StringIO()
    print_blocks(blocks, Console(file=out, width=width, no_color=True, highlight=False))
    return out.getvalue()


def rich_terminal(blocks: Sequence[Drawn], width: int, colour: bool) -> str:
    """What rich prints for the blocks on a terminal of ``width`` (colours unless not
    ``colour``, as under NO_COLOR)."""
    out = io.StringIO()
    console = Console(
        file=out,
        width=width,
        force_terminal=True,
        color_system="standard",
        no_color=not colour,
        highlight=False,
    )
    print_blocks(blocks, console)
    return out.getvalue()


@cache
def _budget(path: Path) -> Budget:
    return compute(load_chain(path))


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_every_check_report_is_drawn_as_rich_draws_it(path: Path) -> None:
    budget = _budget(path)
    found = list(budget.findings)
    for blocks in (
        report_blocks(budget, found, noise_detail=True),
        report_blocks(budget, found, brief=True),
    ):
        for width in WIDTHS:
            text = plain_text(blocks, width)
            assert text is not None
            assert text == rich_text(blocks, width), (path.name, width)
            if width == 80:  # the house rule for reports: 80 columns, ASCII
                assert text.isascii()
                assert max(len(row) for row in text.splitlines()) <= 80
            for colour in (True, False):
                styled = styled_text(blocks, width, colour)
                assert styled == rich_terminal(blocks, width, colour), (path.name, width, colour)
    # not vacuous: a warning's mark in yellow (a brief report holds the findings too)
    assert "\x1b[33mWARNING\x1b[0m" in (styled_text(blocks, 80, True) or "") or not any(
        fi.severity == "warning" for fi in found
    )


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_every_spread_report_is_drawn_as_rich_draws_it(path: Path) -> None:
    chain = load_chain(path)
    blocks = spread_tables(
        run_spread(chain, 32, 1),
        chain.settings.title,
        [f"nodes.{stage.name}." for stage in chain.stages],
    )
    assert any(isinstance(block, ReportTable) for block in blocks)
    for width in WIDTHS:
        text = plain_text(blocks, width)
        assert text is not None
        assert text == rich_text(blocks, width), (path.name, width)
        assert styled_text(blocks, width, True) == rich_terminal(blocks, width, True)


# ---- random tables and texts --------------------------------------------------------------

# Words of letters and signs, some long enough to be folded, spaces (runs of them too) and
# line breaks between them: what a title, a cell or a finding may hold.
_WORDS = st.text("abcdefghij0123456789.-+()[]:%=", min_size=1, max_size=30)
_GAPS = st.sampled_from([" ", " ", " ", "  ", "   ", "\n"])
_TEXT = st.lists(st.tuples(_WORDS, _GAPS), max_size=12).map(
    lambda pairs: "".join(word + gap for word, gap in pairs).strip(" ")
)
_HEADER = st.lists(_WORDS, min_size=1, max_size=3).map(" ".join)


@st.composite
def _tables(draw: st.DrawFn) -> ReportTable:
    count = draw(st.integers(1, 8))
    table = ReportTable(
        draw(_TEXT.filter(bool)),
        tuple(draw(_HEADER) for _ in range(count)),
        tuple(draw(st.sampled_from(["left", "right"])) for _ in range(count)),
    )
    for _ in range(draw(st.integers(0, 5))):
        table.add_row(*(draw(_TEXT) for _ in range(count)))
    return table


_STYLES = st.sampled_from(["", "", "bold", "green", "bold red", "yellow", "magenta", "cyan"])
# A line of runs of text, each in a style of its own, over the line's own style.
_LINES = st.builds(
    lambda spans, style: Line(tuple(spans), style),
    st.lists(st.tuples(_TEXT, _STYLES), max_size=4),
    _STYLES,
)


@st.composite
def _grids(draw: st.DrawFn) -> Grid:
    marks = st.sampled_from(["ERROR", "WARNING", "note", "CAUTION", "x"])
    rows = draw(st.lists(st.tuples(st.builds(line, marks, _STYLES), _LINES), min_size=1))
    return Grid(tuple(rows))


_BLOCKS = st.lists(st.one_of(_tables(), _grids(), _LINES, st.just(BLANK)), min_size=1, max_size=4)


@settings(max_examples=250)
@given(blocks=_BLOCKS, width=st.integers(20, 200))
def test_any_blocks_are_drawn_as_rich_draws_them(blocks: list[Drawn], width: int) -> None:
    """Column widths (collapsed, reduced, spread out to the title), wrapping, folding,
    justification and the header's alignment, whatever the cells hold."""
    text = plain_text(blocks, width)
    if text is not None:  # a cell too narrow to hold a character is left to rich
        assert text == rich_text(blocks, width)


@settings(max_examples=200)
@given(blocks=_BLOCKS, width=st.integers(20, 200), colour=st.booleans())
def test_any_styled_blocks_are_written_as_rich_writes_them(
    blocks: list[Drawn], width: int, colour: bool
) -> None:
    """On a terminal: each run between two style boundaries in its own escape codes, bold
    before the colour, colours dropped under NO_COLOR, the headers bold."""
    text = styled_text(blocks, width, colour)
    if text is not None:
        assert text == rich_terminal(blocks, width, colour)


def test_a_long_word_is_folded_and_spaces_kept_as_rich_keeps_them() -> None:
    """Small cases written out by hand (what rich prints, checked by eye)."""
    assert wrap("abcdefghij klm", 4, "default", "fold") == ["abcd", "efgh", "ij ", "klm"]
    assert wrap("ab  cd", 3, "default", "fold") == ["ab ", "cd"]
    assert wrap("ab cd", 4, "right", "fold") == ["  ab", "  cd"]
    assert wrap("ab\n\ncd", 10, "left", "fold") == ["ab" + 8 * " ", 10 * " ", "cd" + 8 * " "]


def test_what_is_not_printable_ascii_is_left_to_rich() -> None:
    """One character one column holds only for printable ASCII: anything else (a wide or
    combining character, a tab, a control code) and very narrow widths go to rich."""
    for odd in ("caf\u00e9", "\u4e2d\u6587", "a\tb", "a\x07b"):
        assert plain_text([line(odd)], 80) is None
        table = ReportTable("t", ("a",), ("left",))
        table.add_row(odd)
        assert plain_text([table], 80) is None
    assert plain_text([line("fine")], 10) is None
    assert plain_text([line("fine")], 80) == "fine\n"


# ---- the command on a pipe ------------------------------------------------------------------


def _run(args: list[str], **env: str) -> subprocess.CompletedProcess[str]:
    environ = {k: v for k, v in os.environ.items() if k not in ("FORCE_COLOR", "TTY_COMPATIBLE")}
    environ.update(env)
    return subprocess.run(
        [sys.executable, "-m", "chainbudget", *args],
        capture_output=True,
        text=True,
        check=False,
        env=environ,
    )


def test_the_piped_check_prints_rich_s_text_at_the_width_asked() -> None:
    path = ROOT / "chains" / "kitchen_radio_mains.toml"
    budget = _budget(path)
    blocks = report_blocks(budget, list(budget.findings))
    for width in (80, 123):
        done = _run(["check", str(path)], COLUMNS=str(width))
        assert done.returncode in (0, 1), done.stderr
        assert done.stdout == rich_text(blocks, width)


def test_the_width_is_rich_s() -> None:
    """COLUMNS when it is a number; otherwise a terminal's width or 80."""
    code = (
        "from chainbudget.report.terminal import console_width, plain_stdout; "
        "print(console_width(), plain_stdout())"
    )
    for columns, expected in (("97", "97 True"), ("wide", None)):
        environ = {k: v for k, v in os.environ.items() if k != "FORCE_COLOR"}
        environ["COLUMNS"] = columns
        done = subprocess.run(
            [sys.executable, "-c", code],
            capture_output=True,
            text=True,
            check=True,
            env=environ,
            stdin=subprocess.DEVNULL,
        )
        width, plain = done.stdout.split()
        if expected is not None:
            assert f"{width} {plain}" == expected
        else:  # no terminal on any of the three streams here
            assert width == "80"
    assert console_width() > 0
    assert isinstance(plain_stdout(), bool)


def _in_a_terminal(args: list[str], **env: str) -> bytes:
    """What a command writes to a pseudo-terminal (its line ends as the terminal's)."""
    import pty

    environ = {
        k: v
        for k, v in os.environ.items()
        if k not in ("FORCE_COLOR", "TTY_COMPATIBLE", "TTY_INTERACTIVE", "NO_COLOR", "COLUMNS")
    }
    environ.update(env)
    leader, follower = pty.openpty()
    child = subprocess.Popen(
        [sys.executable, *args], stdin=follower, stdout=follower, stderr=follower, env=environ
    )
    os.close(follower)
    chunks = []
    while True:
        try:
            chunk = os.read(leader, 65536)
        except OSError:  # the child closed its end
            break
        if not chunk:
            break
        chunks.append(chunk)
    child.wait()
    os.close(leader)
    return b"".join(chunks).replace(b"\r\n", b"\n")


@pytest.mark.skipif(sys.platform == "win32", reason="a pseudo-terminal of POSIX")
def test_a_terminal_gets_rich_s_escape_codes_without_rich() -> None:
    path = ROOT / "chains" / "busking_amp.toml"
    budget = _budget(path)
    blocks = report_blocks(budget, list(budget.findings))
    probe = (
        "import sys\n"
        "from chainbudget.cli import app\n"
        "try:\n"
        f"    app(['check', {str(path)!r}])\n"
        "except SystemExit:\n"
        "    pass\n"
        "print('rich' in sys.modules)\n"
    )
    for no_color in ("", "1"):
        env = {"COLUMNS": "97", "TERM": "xterm-256color", "NO_COLOR": no_color}
        done = _in_a_terminal(["-c", probe], **env).decode()
        assert done == rich_terminal(blocks, 97, not no_color) + "False\n"
    # a dumb terminal: rich decides (no styles, 80 columns)
    dumb = _in_a_terminal(["-m", "chainbudget", "check", str(path)], TERM="dumb").decode()
    assert dumb == rich_text(blocks, 80)


def test_a_forced_colour_is_left_to_rich() -> None:
    """FORCE_COLOR makes rich style a pipe: those escape codes are rich's to write."""
    path = ROOT / "chains" / "busking_amp.toml"
    done = _run(["check", str(path), "--brief"], FORCE_COLOR="1")
    assert "\x1b[" in done.stdout
    plain = _run(["check", str(path), "--brief"])
    assert "\x1b[" not in plain.stdout
