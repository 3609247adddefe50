"""How every table of the report is made: one style, and the file's own text shown as text.

A table is plain data (`layout.ReportTable`); `plain_text` and `rich_view` draw it with a
rule under the header and nothing else, in plain ASCII (the report reads the same in a
terminal, a log and a file, where a byte is a column). Names, titles and parts come from
the chain file and are never read as markup. Columns wrap (fold) rather than crop, so that
a table keeps every figure and name at 80 columns.
"""

from __future__ import annotations

from chainbudget.report.layout import ReportTable

#: The widest a table is made to hold its title on one line.
TITLE_WIDTH = 80


def new_table(title: str, *columns: str, left: tuple[str, ...] = ()) -> ReportTable:
    """A table with the report's style: the first column and those named in ``left`` (text)
    left-aligned, the others (figures) right-aligned; at least as wide as its title, up to
    80 columns, so the title stays on one line."""
    justify = tuple(
        "left" if i == 0 or header in left else "right" for i, header in enumerate(columns)
    )
    return ReportTable(title, tuple(columns), justify)


def add_row(table: ReportTable, *cells: str) -> None:
    """One row; cells are shown as they are, never read as markup."""
    table.add_row(*cells)
