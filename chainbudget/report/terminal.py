"""Where the report's blocks go, drawn by `plain_text` without loading rich: plain text
wherever nothing is styled (a pipe, a file, ``--output``), and on a terminal the same text
with rich's escape codes for its styles and colours (colours left out under ``NO_COLOR``).

Either is the text rich prints there: the same width (``COLUMNS`` when it is a number, else
the size of the terminal on stdin, stdout or stderr, else 80) and the same characters and
codes (tests/test_plain_text.py). Whatever may change how rich prints (``FORCE_COLOR``,
``TTY_COMPATIBLE``, a dumb terminal, a notebook, Windows' console), and anything
`plain_text` does not draw, is left to rich itself (`rich_view`).
"""

from __future__ import annotations

import builtins
import io
import os
import sys
from collections.abc import Sequence
from typing import Any

from chainbudget.report.layout import Drawn
from chainbudget.report.plain_text import plain_text, styled_text

#: The width of a report written to a file.
FILE_WIDTH = 80
#: Settings under which rich decides itself whether and how to style.
RICH_DECIDES = ("FORCE_COLOR", "TTY_COMPATIBLE", "TTY_INTERACTIVE")


def console_width() -> int:
    """The width rich gives a console on stdout that is not a terminal."""
    columns = os.environ.get("COLUMNS")
    if columns is not None and columns.isdigit():
        return int(columns)
    width = 0
    for descriptor in (0, 1, 2):
        try:
            width = os.get_terminal_size(descriptor).columns
        except (AttributeError, ValueError, OSError):
            continue
        break
    return width or 80


def _is_terminal(stream: Any) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


def _rich_decides() -> bool:
    """Settings under which rich's own rules decide how it prints."""
    return (
        sys.platform == "win32"
        or hasattr(builtins, "get_ipython")
        or any(name in os.environ for name in RICH_DECIDES)
    )


def plain_stdout() -> bool:
    """Whether rich would print on stdout without any style: not a terminal, and nothing
    that makes rich decide otherwise."""
    return not (_rich_decides() or _is_terminal(sys.stdout))


def styled_stdout() -> bool:
    """Whether rich would style stdout with the escape codes `styled_text` writes: a
    terminal that is not dumb, and nothing that makes rich decide otherwise."""
    dumb = os.environ.get("TERM", "").lower() in ("dumb", "unknown")
    return not (_rich_decides() or dumb) and _is_terminal(sys.stdout)


def shown(blocks: Sequence[Drawn], to_stdout: bool = True) -> str:
    """The blocks as text to print on stdout (or "" once rich has printed them there); for a
    file (``to_stdout`` false), plain text 80 columns wide."""
    if not to_stdout:
        text = plain_text(blocks, FILE_WIDTH)
        if text is not None:
            return text
        from rich.console import Console

        from chainbudget.report.rich_view import print_blocks

        console = Console(file=io.StringIO(), no_color=True, width=FILE_WIDTH, highlight=False)
        print_blocks(blocks, console)
        return console.file.getvalue()  # type: ignore[attr-defined]
    if plain_stdout():
        text = plain_text(blocks, console_width())
        if text is not None:
            return text
    elif styled_stdout():
        text = styled_text(blocks, console_width(), os.environ.get("NO_COLOR", "") == "")
        if text is not None:
            return text
    from rich.console import Console

    from chainbudget.report.rich_view import print_blocks

    print_blocks(
        blocks, Console(no_color=None if _is_terminal(sys.stdout) else True, highlight=False)
    )
    return ""
