"""The kinds' own figures in the report, rendered from their field metadata alone: a table of
labelled figures per stage and per supply, and their places in the JSON."""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from chainbudget.kindfigures import KindFigures
from chainbudget.notation import figure_text
from chainbudget.report.layout import ReportTable
from chainbudget.report.tables import add_row, new_table


def figures_table(title: str, figures: Iterable[KindFigures]) -> ReportTable | None:
    """One two-column table (figure, value) of one stage's or supply's own figures; the
    figures that are not known (None) are left out."""
    table = new_table(title, "figure", "value")
    for own in figures:
        for row in own.rows():
            if row.value is not None:
                add_row(table, row.label, figure_text(row.value, row.unit))
    return table if table.row_count else None


def place(data: dict[str, Any], own: KindFigures) -> None:
    """Put one kind's figures where its class says (``"a.b[]"``: appended to the list
    ``data["a"]["b"]``; ``"a.b"``: set as that object), creating the way there."""
    if own.json_place is None:
        return
    *path, last = own.json_place.split(".")
    target = data
    for key in path:
        target = target.setdefault(key, {})
    if last.endswith("[]"):
        target.setdefault(last[:-2], []).append(own.as_json())
    else:
        target[last] = own.as_json()
