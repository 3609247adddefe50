"""How every table of the report is made: one style, and the file's own text shown as text.

Names, titles and parts come from the chain file; rich would read ``[...]`` in them as
markup, so every title and cell is handed over as a `rich.text.Text`. Columns wrap (fold)
rather than crop, so that a table keeps every figure and name at 80 columns.
"""

from __future__ import annotations

from rich.box import Box
from rich.table import Table
from rich.text import Text

#: A rule under the header and nothing else, in plain ASCII: the report reads the same in a
#: terminal, a log and a file, where a byte is a column.
HEAD_RULE = Box("    \n    \n -- \n    \n    \n    \n    \n    \n", ascii=True)
#: The widest a table is made to hold its title on one line.
TITLE_WIDTH = 80


def new_table(title: str, *columns: str, left: tuple[str, ...] = ()) -> Table:
    """A table with the report's style: the first column and those named in ``left`` (text)
    left-aligned, the others (figures) right-aligned; at least as wide as its title, up to
    80 columns, so the title stays on one line."""
    table = Table(
        title=Text(title),
        box=HEAD_RULE,
        title_justify="left",
        pad_edge=False,
        collapse_padding=True,
        min_width=min(len(title), TITLE_WIDTH),
    )
    for i, header in enumerate(columns):
        justify = "left" if i == 0 or header in left else "right"
        table.add_column(Text(header), justify=justify, overflow="fold")  # type: ignore[arg-type]
    return table


def add_row(table: Table, *cells: str | Text) -> None:
    """One row; plain strings are shown as they are, never read as markup."""
    table.add_row(*(cell if isinstance(cell, Text) else Text(cell) for cell in cells))
