"""What the terminal report says, apart from how it is drawn: lines of text, tables, and
the findings' grid of a mark beside a wrapped text.

Plain data without any drawing library: the areas of the report build these, so that the
JSON and TOML views (which share the areas' modules) never load rich. `plain_text` draws
them as rich would (plain on a pipe or in a file, with escape codes on a terminal),
`rich_view` hands them to rich (whatever `plain_text` leaves), `html_view` writes the tables
as HTML.
"""

from __future__ import annotations

from dataclasses import dataclass, field

#: One run of text and its style (rich's style names; "" for none).
Span = tuple[str, str]


@dataclass(frozen=True)
class Line:
    """A paragraph of text, wrapped at the width where it is drawn. ``style`` covers the
    whole line, each span's own style adds to it."""

    spans: tuple[Span, ...] = ()
    style: str = ""

    @property
    def plain(self) -> str:
        return "".join(text for text, _style in self.spans)


def line(text: str, style: str = "") -> Line:
    """A line of one span."""
    return Line(((text, ""),), style)


#: An empty line between the parts of the report.
BLANK = Line()


@dataclass
class ReportTable:
    """A titled table of text cells: a header rule, no other lines; each column is
    justified left (text) or right (figures), and its cells wrap (long words folded)
    rather than crop."""

    title: str
    headers: tuple[str, ...]
    justify: tuple[str, ...]
    rows: list[tuple[str, ...]] = field(default_factory=list)

    def add_row(self, *cells: str) -> None:
        if len(cells) != len(self.headers):
            raise ValueError(f"a row of {len(cells)} cells in a table of {len(self.headers)}")
        self.rows.append(tuple(cells))

    @property
    def row_count(self) -> int:
        return len(self.rows)


@dataclass(frozen=True)
class Grid:
    """Rows of a mark (never wrapped) beside a text (wrapped, long words folded); no
    header, no lines: the findings."""

    rows: tuple[tuple[Line, Line], ...]


#: What the report is made of, in the order it is drawn.
Drawn = Line | ReportTable | Grid
