"""One fixed look for every picture, readable in greyscale, and byte-for-byte repeatable files.

Each curve of a picture differs from the others in its line style AND its marker, not in
colour alone (the colours, from the Okabe-Ito palette, only help on screen). Markers sit at
staggered points of each curve, so curves that coincide still show every marker.
matplotlib is imported here and only by the picture modules, which the command line loads
only on the ``plot`` and ``check --format html`` paths.
"""

from __future__ import annotations

import io
import re
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import matplotlib
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.legend import Legend
from matplotlib.ticker import EngFormatter, FuncFormatter, NullFormatter

# Fixed rcParams: no user matplotlibrc, no locale-dependent font, no salt from the clock.
STYLE: Any = {  # typed Any: matplotlib types each key as a literal
    "font.family": "DejaVu Sans",  # shipped with matplotlib: the same glyphs everywhere
    "font.size": 9.0,
    "axes.titlesize": 10.0,
    "axes.labelsize": 9.0,
    "legend.fontsize": 8.0,
    "legend.framealpha": 0.9,
    "axes.grid": True,
    "axes.grid.which": "both",
    "grid.linewidth": 0.3,
    "grid.color": "#b0b0b0",
    "lines.linewidth": 1.3,
    "lines.markersize": 5.0,
    "figure.dpi": 100.0,
    "savefig.dpi": 120.0,
    "svg.fonttype": "none",  # text stays text: selectable, and read by screen readers
    "pdf.fonttype": 42,
    "path.simplify": True,  # paths drop points a fraction of a pixel apart: small files
}

# Okabe & Ito, "Color Universal Design" (2008): distinguishable with colour-vision deficits.
COLOURS = ("#000000", "#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9")
LINE_STYLES: tuple[Any, ...] = ("-", "--", "-.", ":")
MARKERS = ("o", "s", "^", "v", "D", "x", "+", "*", "P", "<", ">")
# Markers along a curve (each curve's markers start at a different point).
MARKS_PER_CURVE = 12


def curve_style(index: int, count: int, points: int) -> dict[str, Any]:
    """Colour, line style, marker and marker positions of curve ``index`` of ``count``.

    4 line styles and 11 markers: (style, marker) pairs repeat only after 44 curves.
    """
    step = max(points // MARKS_PER_CURVE, 1)
    return {
        "color": COLOURS[index % len(COLOURS)],
        "linestyle": LINE_STYLES[index % len(LINE_STYLES)],
        "marker": MARKERS[index % len(MARKERS)],
        "markevery": ((index * step) // max(count, 1), step),
        "markerfacecolor": "none" if index % 2 else COLOURS[index % len(COLOURS)],
    }


@contextmanager
def drawing() -> Iterator[None]:
    """The fixed style, for building a figure."""
    with matplotlib.rc_context(STYLE):
        yield


def new_figure(width: float = 9.0, height: float = 5.0) -> Figure:
    """A figure outside pyplot (no global state, no display)."""
    return Figure(figsize=(width, height), layout="constrained")


def _metadata(fmt: str) -> dict[str, Any]:
    """No creation date in the file, so the same chain gives the same bytes."""
    if fmt == "svg":
        return {"Date": None}
    if fmt == "pdf":
        return {"CreationDate": None, "ModDate": None}
    return {}


def save(figure: Figure, target: Path | io.BytesIO, fmt: str, salt: str) -> None:
    """Write ``figure`` as ``fmt`` (png, svg or pdf); ``salt`` seeds the SVG's element ids
    (one per picture, so pictures inlined in one page never share an id)."""
    salted: Any = {**STYLE, "svg.hashsalt": f"chainbudget-{salt}"}
    with matplotlib.rc_context(salted):
        figure.savefig(target, format=fmt, metadata=_metadata(fmt))


def svg_markup(figure: Figure, salt: str) -> str:
    """The figure as an ``<svg>`` element to inline in a page (no XML prolog or DOCTYPE).

    matplotlib names its groups ``figure_1``, ``axes_1``... in every figure; each id, and
    each reference to one, is prefixed with ``salt`` so that pictures sharing a page never
    share an id.
    """
    buffer = io.BytesIO()
    save(figure, buffer, "svg", salt)
    text = buffer.getvalue().decode("utf-8")
    text = re.sub(r'\bid="', f'id="{salt}-', text[text.index("<svg") :])
    return text.replace("url(#", f"url(#{salt}-").replace('href="#', f'href="#{salt}-')


def legend_outside(axes: Axes, **options: Any) -> Legend:
    """A legend to the right of the axes, so it never hides a curve."""
    return axes.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0, **options)


def hertz_ticks(axes: Axes) -> None:
    """Frequency ticks as 20, 100, 1k, 10k rather than powers of ten."""
    axes.xaxis.set_major_formatter(EngFormatter(sep=""))
    axes.xaxis.set_minor_formatter(NullFormatter())


def plain_log_ticks(axes: Axes) -> None:
    """Values on a log y axis as plain numbers (60, not 6 x 10^1)."""
    axes.yaxis.set_major_formatter(FuncFormatter(lambda value, _pos: f"{value:g}"))
    axes.yaxis.set_minor_formatter(FuncFormatter(lambda value, _pos: f"{value:g}"))
