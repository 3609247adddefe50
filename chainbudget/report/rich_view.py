"""The report's blocks (`layout`) as rich renderables, the reference `plain_text` is held to.

Every title and cell is handed to rich as a `rich.text.Text`, never as markup (the chain
file's names could hold ``[...]``). Imported only where rich draws: what `plain_text` does
not (see `terminal`), and the tests.
"""

from __future__ import annotations

from collections.abc import Iterable

from rich.box import Box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from chainbudget.report.layout import Drawn, Grid, Line, ReportTable
from chainbudget.report.tables import TITLE_WIDTH

#: A rule under the header and nothing else, in plain ASCII.
HEAD_RULE = Box("    \n    \n -- \n    \n    \n    \n    \n    \n", ascii=True)


def rich_text(line: Line) -> Text:
    """A line as rich text: the line's style over the whole, each span's own on it."""
    text = Text(style=line.style)
    for part, style in line.spans:
        text.append(part, style=style)
    return text


def rich_table(table: ReportTable) -> Table:
    """A table at least as wide as its title (up to 80 columns), its cells wrapping."""
    drawn = Table(
        title=Text(table.title),
        box=HEAD_RULE,
        title_justify="left",
        pad_edge=False,
        collapse_padding=True,
        min_width=min(len(table.title), TITLE_WIDTH),
    )
    for header, justify in zip(table.headers, table.justify, strict=True):
        drawn.add_column(Text(header), justify=justify, overflow="fold")  # type: ignore[arg-type]
    for row in table.rows:
        drawn.add_row(*(Text(cell) for cell in row))
    return drawn


def rich_grid(grid: Grid) -> Table:
    """The findings: a mark column that never wraps, the text folded at the width."""
    drawn = Table.grid(padding=(0, 1))
    drawn.add_column(no_wrap=True)
    drawn.add_column(overflow="fold")
    for mark, body in grid.rows:
        drawn.add_row(rich_text(mark), rich_text(body))
    return drawn


def print_blocks(blocks: Iterable[Drawn], console: Console) -> None:
    """Print each block on the console (an empty line prints as one)."""
    for block in blocks:
        if isinstance(block, ReportTable):
            console.print(rich_table(block))
        elif isinstance(block, Grid):
            console.print(rich_grid(block))
        elif block.spans:
            console.print(rich_text(block))
        else:
            console.print()
