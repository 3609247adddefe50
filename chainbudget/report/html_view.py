"""The budget as one self-contained HTML page: the thing a designer attaches to a review.

Inline CSS, the pictures as inline SVG, no script and nothing fetched from the network: the
page reads the same offline, printed or mailed. It holds the verdict, the safety cautions,
the findings, every table of the terminal report (the same tables, as HTML tables)
and the pictures with their one-line summaries. No date is written, so the same chain gives
the same page.
"""

from __future__ import annotations

from collections.abc import Sequence
from html import escape

from chainbudget import __version__
from chainbudget.budget import Budget
from chainbudget.finding import Finding
from chainbudget.notation import eng
from chainbudget.report.layout import ReportTable
from chainbudget.report.pictures import Picture
from chainbudget.report.pictures.style import svg_markup
from chainbudget.report.table_view import (
    TABLES,
    headroom_table,
    levels_table,
    loading_table,
    reactive_source_text,
    verdict_lines,
)

CAUTION = "caution"

STYLE = """
body { font-family: "DejaVu Sans", Verdana, sans-serif; margin: 1.5em auto; max-width: 72em;
  padding: 0 1em; color: #111; background: #fff; line-height: 1.4; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; }
h2 { font-size: 1.2em; border-bottom: 1px solid #999; margin-top: 1.6em; }
p.meta { color: #333; margin-top: 0; }
.verdict { border: 2px solid #111; padding: 0.6em 0.9em; font-size: 1.1em; }
.verdict.fails { border-style: double; border-width: 4px; }
.cautions { border-left: 6px solid #111; padding: 0.3em 0.9em; background: #f2f2f2; }
table { border-collapse: collapse; margin: 0.6em 0 1.2em; font-size: 0.9em; }
caption { text-align: left; font-weight: bold; padding-bottom: 0.3em; }
th, td { border-bottom: 1px solid #ccc; padding: 0.2em 0.7em; vertical-align: top; }
th { border-bottom: 2px solid #555; text-align: left; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.severity { font-weight: bold; text-transform: uppercase; white-space: nowrap; }
figure { margin: 1em 0 2em; }
figure svg { max-width: 100%; height: auto; }
figcaption { font-size: 0.9em; color: #222; }
ul.worst { font-size: 0.9em; }
footer { margin-top: 2em; font-size: 0.8em; color: #555; }
@media print { h2 { break-after: avoid; } figure, table { break-inside: avoid; } }
"""


def table_html(table: ReportTable) -> str:
    """A report table as an HTML table: its title the caption, right-justified columns as
    numbers."""
    numeric = [' class="num"' if justify == "right" else "" for justify in table.justify]
    head = "".join(
        f'<th scope="col"{num}>{escape(header)}</th>'
        for header, num in zip(table.headers, numeric, strict=True)
    )
    rows = [
        "<tr>"
        + "".join(f"<td{num}>{escape(cell)}</td>" for cell, num in zip(cells, numeric, strict=True))
        + "</tr>"
        for cells in table.rows
    ]
    caption = f"<caption>{escape(table.title)}</caption>" if table.title else ""
    return f"<table>{caption}<thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


def verdict(found: Sequence[Finding]) -> tuple[str, str]:
    """The one-sentence verdict and its class (``fails``, ``margin`` or ``passes``), the
    same reading as the exit status of ``check``."""
    count = {s: sum(1 for fi in found if fi.severity == s) for s in ("error", "warning", "note")}

    def told(n: int, word: str) -> str:
        return f"{n} {word}{'' if n == 1 else 's'}"

    if count["error"]:
        return (
            f"Does not work as described: {told(count['error'], 'error')}, "
            f"{told(count['warning'], 'warning')}.",
            "fails",
        )
    if count["warning"]:
        return (
            f"Works, with little margin: {told(count['warning'], 'warning')}, no error.",
            "margin",
        )
    return "Works as described: no error and no warning.", "passes"


def _findings_html(found: Sequence[Finding]) -> str:
    told = [fi for fi in found if fi.severity != CAUTION]
    if not told:
        return "<p>No findings.</p>"
    rows = "".join(
        f'<tr><td class="severity">{escape(fi.severity)}</td><td>{escape(fi.code)}</td>'
        f"<td>{escape(fi.stage or fi.supply or '')}</td><td>{escape(fi.message)}</td></tr>"
        for fi in told
    )
    return (
        "<table><caption>Findings, most pressing first</caption><thead><tr>"
        '<th scope="col">severity</th><th scope="col">code</th><th scope="col">where</th>'
        f'<th scope="col">finding</th></tr></thead><tbody>{rows}</tbody></table>'
    )


def _picture_html(picture: Picture) -> str:
    svg = svg_markup(picture.figure, picture.name)
    label = escape(picture.summary, quote=True)
    svg = svg.replace("<svg ", f'<svg role="img" aria-label="{label}" ', 1)
    return (
        f'<figure id="picture-{picture.name}">{svg}'
        f"<figcaption>{escape(picture.summary)}</figcaption></figure>"
    )


def html_page(budget: Budget, pictures: Sequence[Picture]) -> str:
    """The whole report as one HTML document."""
    found = list(budget.findings)
    sentence, kind = verdict(found)
    cautions = [fi for fi in found if fi.severity == CAUTION]
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{escape(budget.title)}: chain budget</title>",
        f"<style>{STYLE}</style>",
        "</head>",
        "<body>",
        "<header>",
        f"<h1>{escape(budget.title)}</h1>",
        f'<p class="meta">{escape(budget.file)}: reference {escape(eng(budget.reference_hz, "Hz"))}'
        f", band {escape(eng(budget.band_hz[0], 'Hz'))} to {escape(eng(budget.band_hz[1], 'Hz'))}"
        f", ambient {budget.ambient_degc:g} degC; source "
        f"{escape(eng(budget.source_level_vrms, 'Vrms'))} nominal, "
        f"{escape(eng(budget.source_max_level_vrms, 'Vrms'))} max"
        f"{escape(reactive_source_text(budget))}.</p>",
        "</header>",
        "<main>",
        f'<section id="verdict"><h2>Verdict</h2><p class="verdict {kind}">{escape(sentence)}</p>',
    ]
    # the same summary the terminal report opens with (its first line is the sentence above)
    summary = "".join(
        f"<li>{escape(line.plain.strip())}</li>" for line in verdict_lines(budget, found)[1:]
    )
    if summary:
        parts.append(f'<ul class="summary">{summary}</ul>')
    if cautions:
        items = "".join(f"<li>{escape(fi.message)}</li>" for fi in cautions)
        parts.append(
            f'<div class="cautions"><p><strong>Cautions</strong></p><ul>{items}</ul></div>'
        )
    parts.append("</section>")
    parts.append(f'<section id="findings"><h2>Findings</h2>{_findings_html(found)}</section>')
    parts.append('<section id="tables"><h2>Tables</h2>')
    for table in (levels_table(budget), headroom_table(budget), loading_table(budget)):
        parts.append(table_html(table))
    for tables in TABLES:
        parts += [table_html(table) for table in tables(budget)]
    parts.append("</section>")
    if pictures:
        parts.append('<section id="pictures"><h2>Pictures</h2>')
        parts += [_picture_html(picture) for picture in pictures]
        parts.append("</section>")
    parts += [
        "</main>",
        f"<footer>chainbudget {escape(__version__)}: a design aid, not a safety assessment."
        "</footer>",
        "</body>",
        "</html>",
    ]
    return "\n".join(parts) + "\n"
