"""The report's blocks (`layout`) drawn as rich draws them, without rich.

A pipe or a file gets the same characters rich gave them (`plain_text`), a terminal the same
with rich's escape codes for the styles (`styled_text`); tests/test_plain_text.py holds each
equal to rich on every example at several widths and on random blocks (so a rich that
draws differently shows there). This takes a fraction of rich's time: it draws only what
the report uses, text of single-width characters, where rich's general layout measures
every cell of every table through its renderable protocol several times and loads some
forty modules first. It follows rich's rules (as rich 15 draws; rich is MIT-licensed):

* a line of text wraps at word boundaries (a word keeps the spaces after it; a word wider
  than the line is folded), keeping the spaces at a break unless they pass the width;
* a table's columns start at their widest cell; while too wide for the width, the widest
  wrapping columns give up the excess to the next widest, and any excess left is taken
  from every column in proportion; a table narrower than its least width (its title, at
  most 80 columns) shares the difference out in proportion to the widths;
* a cell is padded one space on its right except in the last column; the table has an
  edge of one space each side, two spaces between columns and a rule of ``-`` under the
  header; headers sit at the bottom of their row, cells at the top; a table's title wraps
  at the table's width, filled with spaces to it;
* on a terminal, each run of text between two boundaries of styles is written in its own
  escape codes (ECMA-48 SGR: bold, then the colour), a table's headers in bold.

Both return None for what they do not draw (a character that is not printable ASCII, a
width under `MIN_WIDTH`, a style other than bold and the standard colours), which rich then
draws instead.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence

from chainbudget.report.layout import Drawn, Grid, Line, ReportTable
from chainbudget.report.tables import TITLE_WIDTH

#: Below this width rich draws the report (columns of a cell or less).
MIN_WIDTH = 20

_WORD = re.compile(r"\s*\S+\s*")
_TRAILING_SPACE = re.compile(r"\s+$")
#: Text drawn here: printable ASCII and the line break (one character, one column).
_DRAWABLE = re.compile(r"[\x20-\x7e\n]*")

Measure = tuple[int, int]


class _NotDrawn(Exception):
    """Something only rich draws (a cell too narrow to hold a character)."""


def _break_offsets(text: str, width: int, fold: bool) -> list[int]:
    """Where a line of text breaks to fit ``width`` columns (character offsets)."""
    breaks: list[int] = []
    offset = 0
    for match in _WORD.finditer(text):
        start = match.start()
        word = match.group(0)
        length = len(word.rstrip())
        if width - offset >= length:
            offset += len(word)
        elif length > width:
            if fold:
                pieces = [word[i : i + width] for i in range(0, len(word), width)]
                for k, piece in enumerate(pieces):
                    if start:
                        breaks.append(start)
                    if k == len(pieces) - 1:
                        offset = len(piece)
                    else:
                        start += len(piece)
            else:
                if start:
                    breaks.append(start)
                offset = len(word)
        elif offset and start:
            breaks.append(start)
            offset = len(word)
    return breaks


def _truncate(text: str, width: int, overflow: str, pad: bool = False) -> str:
    length = len(text)
    if length > width:
        text = text[: width - 1] + "\u2026" if overflow == "ellipsis" else text[:width]
    if pad and length < width:
        text += " " * (width - length)
    return text


def wrap(text: str, width: int, justify: str, overflow: str, no_wrap: bool = False) -> list[str]:
    """The lines of a text at ``width``: broken at words (or not, ``no_wrap``), justified
    ``left`` (filled with spaces), ``right`` or as they fall (``default``)."""
    lines: list[str] = []
    for paragraph in text.split("\n"):
        if no_wrap:
            pieces = [paragraph]
        else:
            cuts = [0, *_break_offsets(paragraph, width, overflow == "fold"), len(paragraph)]
            pieces = []
            for start, end in zip(cuts, cuts[1:], strict=False):
                piece = paragraph[start:end]
                if len(piece) > width:  # spaces past the width go, the others stay
                    space = _TRAILING_SPACE.search(piece)
                    if space is not None:
                        piece = piece[: len(piece) - min(len(space.group(0)), len(piece) - width)]
                pieces.append(piece)
        if justify == "left":
            pieces = [_truncate(piece, width, overflow, pad=True) for piece in pieces]
        elif justify == "right":
            pieces = [_truncate(piece.rstrip(), width, overflow) for piece in pieces]
            pieces = [" " * (width - len(piece)) + piece for piece in pieces]
        lines += [_truncate(piece, width, overflow) for piece in pieces]
    return lines


def _normal(measure: Measure) -> Measure:
    least, most = measure
    least = min(max(0, least), most)
    return max(0, least), max(0, least, most)


def _at_most(measure: Measure, width: int) -> Measure:
    return min(measure[0], width), min(measure[1], width)


def _text_measure(text: str, width: int) -> Measure:
    """A text's least width (its longest word) and its widest (its longest line), within
    ``width``."""
    if width < 1:
        return 0, 0
    lines = text.splitlines()
    most = max(map(len, lines)) if lines else 0
    words = text.split()
    least = max(map(len, words)) if words else most
    measure = _at_most(_normal((least, most)), width)
    return (0, 0) if measure[1] < 1 else _normal(measure)


def _cell_measure(text: str, right: int, width: int) -> Measure:
    """A cell's measure with its right padding, within ``width``."""
    if width < 1:
        return 0, 0
    if width - right < 1:
        measure = (width, width)
    else:
        least, most = _text_measure(text, width - right)
        measure = _at_most((least + right, most + right), width)
    measure = _at_most(_normal(measure), width)
    return (0, 0) if measure[1] < 1 else _normal(measure)


def _column_measure(cells: Sequence[str], right: int, width: int) -> Measure:
    if width < 1:
        return 0, 0
    measures = [_cell_measure(cell, right, width) for cell in cells]
    least = max((m[0] for m in measures), default=1)
    most = max((m[1] for m in measures), default=width)
    return _at_most((least, most), width)


def _reduce(total: int, ratios: list[int], maximums: list[int], values: list[int]) -> list[int]:
    """Take ``total`` off ``values`` in proportion to ``ratios``, each at most its maximum."""
    ratios = [ratio if most else 0 for ratio, most in zip(ratios, maximums, strict=True)]
    total_ratio = sum(ratios)
    if not total_ratio:
        return values[:]
    remaining = total
    result = []
    for ratio, most, value in zip(ratios, maximums, values, strict=True):
        if ratio and total_ratio > 0:
            taken = min(most, round(ratio * remaining / total_ratio))
            result.append(value - taken)
            remaining -= taken
            total_ratio -= ratio
        else:
            result.append(value)
    return result


def _distribute(total: int, ratios: list[int]) -> list[int]:
    """Share ``total`` out in proportion to ``ratios`` (rounding up as it goes)."""
    total_ratio = sum(ratios)
    if total_ratio <= 0:
        raise _NotDrawn
    remaining = total
    shares = []
    for ratio in ratios:
        share = -(-ratio * remaining // total_ratio) if total_ratio > 0 else remaining
        shares.append(share)
        total_ratio -= ratio
        remaining -= share
    return shares


def _collapse(widths: list[int], wraps: list[bool], max_width: int) -> list[int]:
    """Narrow the widest wrapping columns, a step at a time down to the next widest, until
    the columns fit."""
    total = sum(widths)
    excess = total - max_width
    if any(wraps):
        while total and excess > 0:
            widest = max(w for w, ok in zip(widths, wraps, strict=True) if ok)
            next_widest = max(
                w if ok and w != widest else 0 for w, ok in zip(widths, wraps, strict=True)
            )
            step = widest - next_widest
            ratios = [1 if w == widest and ok else 0 for w, ok in zip(widths, wraps, strict=True)]
            if not any(ratios) or not step:
                break
            widths = _reduce(excess, ratios, [min(excess, step)] * len(widths), widths)
            total = sum(widths)
            excess = total - max_width
    return widths


def _column_widths(
    columns: Sequence[Sequence[str]],
    pads: Sequence[int],
    no_wrap: Sequence[bool],
    max_width: int,
    min_width: int | None,
    extra: int,
) -> list[int]:
    """Each column's width with its padding (rich's ``Table._calculate_column_widths``
    for a table that does not expand and has no fixed widths)."""
    measures = [
        _column_measure(cells, pad, max_width) for cells, pad in zip(columns, pads, strict=True)
    ]
    widths = [most or 1 for _least, most in measures]
    table_width = sum(widths)
    if table_width > max_width:
        widths = _collapse(widths, [not n for n in no_wrap], max_width)
        table_width = sum(widths)
        if table_width > max_width:
            widths = _reduce(table_width - max_width, [1] * len(widths), widths, widths)
            table_width = sum(widths)
        widths = [
            _column_measure(cells, pad, width)[1] or 0
            for cells, pad, width in zip(columns, pads, widths, strict=True)
        ]
    if min_width is not None and table_width < min_width - extra:
        room = min(min_width - extra, max_width)
        shares = _distribute(room - table_width, widths)
        widths = [w + more for w, more in zip(widths, shares, strict=True)]
    return widths


def _cell_lines(
    cell: str | Line,
    width: int,
    right: int,
    justify: str,
    overflow: str,
    no_wrap: bool,
    styles: Styles | None,
) -> list[tuple[str, str]]:
    """A cell's lines at its column's width, each as its text and its right padding."""
    inner = width - right
    if inner < 1:
        raise _NotDrawn
    pad = " " * right
    if isinstance(cell, Line) and styles is not None:
        if justify != "left":
            raise _NotDrawn
        text, spans = _spans_of(cell)
        lines = []
        for piece, piece_spans in wrap_styled(text, spans, inner, justify, overflow, no_wrap):
            if cell.style:  # the cell's own style covers its line, padding and all
                piece_spans = [(0, len(piece), cell.style), *piece_spans]
            lines.append((styles.render(piece, piece_spans), pad))
        return lines
    plain = cell.plain if isinstance(cell, Line) else cell
    return [
        (_truncate(piece, inner, "crop", pad=True), pad)
        for piece in wrap(plain, inner, justify, overflow, no_wrap)
    ]


def _rows(
    rows: Sequence[Sequence[str | Line]],
    widths: Sequence[int],
    justify: Sequence[str],
    overflow: Sequence[str],
    no_wrap: Sequence[bool],
    header: bool,
    styles: Styles | None = None,
) -> list[list[tuple[str, str]]]:
    """Each row's lines, its cells side by side (a cell's text and its padding per line); a
    header's cells sit at the bottom of their row, others at the top."""
    last = len(widths) - 1
    drawn = []
    for row in rows:
        cells = [
            _cell_lines(
                text, width, 0 if k == last else 1, justify[k], overflow[k], no_wrap[k], styles
            )
            for k, (text, width) in enumerate(zip(row, widths, strict=True))
        ]
        height = max(len(cell) for cell in cells)
        for k, cell in enumerate(cells):
            blank = [(" " * widths[k], "")] * (height - len(cell))
            cells[k] = blank + cell if header else cell + blank
        drawn += [[cell[n] for cell in cells] for n in range(height)]
    return drawn


def table_lines(table: ReportTable, width: int, styles: Styles | None = None) -> list[str]:
    """A table at a console of ``width`` columns: title, header (bold where styled), rule,
    rows, and the blank edge rows above the header and below the last row."""
    count = len(table.headers)
    extra = 2 + count - 1
    pads = [0 if k == count - 1 else 1 for k in range(count)]
    columns = [[header, *(row[k] for row in table.rows)] for k, header in enumerate(table.headers)]
    widths = _column_widths(
        columns,
        pads,
        [False] * count,
        width - extra,
        min(len(table.title), TITLE_WIDTH),
        extra,
    )
    table_width = sum(widths) + extra
    lines = wrap(table.title, table_width, "left", "fold") if table.title else []
    lines.append(" " * table_width)
    overflow, no_wrap = ["fold"] * count, [False] * count
    for cells in _rows([table.headers], widths, table.justify, overflow, no_wrap, header=True):
        if styles is not None:  # the header's text and its padding, each in bold
            cells = [
                (styles.whole(text, HEADER_STYLE), styles.whole(pad, HEADER_STYLE))
                for text, pad in cells
            ]
        lines.append(" " + " ".join(text + pad for text, pad in cells) + " ")
    lines.append(" " + "-".join("-" * w for w in widths) + " ")
    for cells in _rows(table.rows, widths, table.justify, overflow, no_wrap, header=False):
        lines.append(" " + " ".join(text + pad for text, pad in cells) + " ")
    lines.append(" " * table_width)
    return lines


def grid_lines(grid: Grid, width: int, styles: Styles | None = None) -> list[str]:
    """The findings' grid: marks, then the texts folded at what is left."""
    columns = [[mark.plain for mark, _ in grid.rows], [body.plain for _, body in grid.rows]]
    widths = _column_widths(columns, [1, 0], [True, False], width, None, 0)
    drawn = _rows(
        grid.rows, widths, ["left", "left"], ["ellipsis", "fold"], [True, False], False, styles
    )
    return ["".join(text + pad for text, pad in cells) for cells in drawn]


# ---- styles, as rich writes them on a terminal --------------------------------------------

#: The style rich's default theme gives a table's header ("table.header").
HEADER_STYLE = "bold"
#: SGR codes of the styles the report uses (ECMA-48 sec. 8.3.117): attributes, then the
#: eight standard foreground colours.
_ATTRIBUTES = {"bold": "1"}
_COLOURS = {
    "black": "30",
    "red": "31",
    "green": "32",
    "yellow": "33",
    "blue": "34",
    "magenta": "35",
    "cyan": "36",
    "white": "37",
}

StyleSpan = tuple[int, int, str]


class Styles:
    """How styles are written: rich's escape codes (a style's attributes, then its colour;
    colours left out under ``NO_COLOR``), each run of text between two style boundaries
    wrapped on its own, as rich writes it."""

    def __init__(self, colour: bool) -> None:
        self.colour = colour
        self._codes: dict[tuple[str, ...], str] = {}

    @staticmethod
    def known(style: str) -> bool:
        return all(word in _ATTRIBUTES or word in _COLOURS for word in style.split())

    def codes(self, styles: tuple[str, ...]) -> str:
        """The SGR parameters of styles laid one over the other (the last colour wins)."""
        found = self._codes.get(styles)
        if found is None:
            words = [word for style in styles for word in style.split()]
            params = [_ATTRIBUTES[a] for a in _ATTRIBUTES if a in words]
            colours = [_COLOURS[w] for w in words if w in _COLOURS]
            if colours and self.colour:
                params.append(colours[-1])
            found = self._codes[styles] = ";".join(params)
        return found

    def whole(self, text: str, style: str) -> str:
        """The text in one style."""
        return self.render(text, [(0, len(text), style)])

    def render(self, text: str, spans: Sequence[StyleSpan]) -> str:
        """The text with its spans' styles: a run between any two boundaries of spans in
        the style of every span over it."""
        if not spans or not text:
            return text
        bounds = sorted({0, len(text), *(s for s, _e, _st in spans), *(e for _s, e, _st in spans)})
        out = []
        for start, end in zip(bounds, bounds[1:], strict=False):
            over = tuple(style for s, e, style in spans if s <= start and end <= e)
            codes = self.codes(over) if over else ""
            run = text[start:end]
            out.append(f"\x1b[{codes}m{run}\x1b[0m" if codes else run)
        return "".join(out)


def _spans_of(line: Line) -> tuple[str, list[StyleSpan]]:
    """A line's text and its spans' styles (the line's own style is not among them)."""
    spans = []
    offset = 0
    for text, style in line.spans:
        if style:
            spans.append((offset, offset + len(text), style))
        offset += len(text)
    return line.plain, spans


def _clipped(spans: Sequence[StyleSpan], start: int, end: int) -> list[StyleSpan]:
    """The spans over ``[start, end)``, counted from ``start``."""
    return [
        (max(s, start) - start, min(e, end) - start, style)
        for s, e, style in spans
        if min(e, end) > max(s, start)
    ]


def _trimmed(spans: Sequence[StyleSpan], length: int) -> list[StyleSpan]:
    """The spans of a text cut to ``length``."""
    return [(s, min(e, length), style) for s, e, style in spans if s < length]


def wrap_styled(
    text: str,
    spans: Sequence[StyleSpan],
    width: int,
    justify: str,
    overflow: str,
    no_wrap: bool = False,
) -> list[tuple[str, list[StyleSpan]]]:
    """`wrap` keeping each line's styles (justified ``left`` or ``default`` only)."""
    lines = []
    position = 0
    for paragraph in text.split("\n"):
        own = _clipped(spans, position, position + len(paragraph))
        position += len(paragraph) + 1
        cuts = [0, len(paragraph)]
        if not no_wrap:
            cuts[1:1] = _break_offsets(paragraph, width, overflow == "fold")
        for start, end in zip(cuts, cuts[1:], strict=False):
            piece, piece_spans = paragraph[start:end], _clipped(own, start, end)
            if not no_wrap and len(piece) > width:
                space = _TRAILING_SPACE.search(piece)
                if space is not None:
                    piece = piece[: len(piece) - min(len(space.group(0)), len(piece) - width)]
                    piece_spans = _trimmed(piece_spans, len(piece))
            for pad in (True, False) if justify == "left" else (False,):
                cut = _truncate(piece, width, overflow, pad=pad)
                if len(piece) > width:  # cut: the spans go with the text cut off
                    piece_spans = _trimmed(piece_spans, len(cut))
                piece = cut
            lines.append((piece, piece_spans))
    return lines


def styled_text(blocks: Sequence[Drawn], width: int, colour: bool) -> str | None:
    """The blocks as rich prints them on a terminal of ``width`` columns (styles as escape
    codes; colours only when ``colour``); None when this cannot draw them."""
    if width < MIN_WIDTH or not drawable(blocks):
        return None
    styles = Styles(colour)
    for block in blocks:
        lines = [block] if isinstance(block, Line) else []
        if isinstance(block, Grid):
            lines = [cell for row in block.rows for cell in row]
        styled = [line.style for line in lines] + [s for line in lines for _t, s in line.spans]
        if not all(Styles.known(style) for style in styled):
            return None
    out: list[str] = []
    try:
        for block in blocks:
            if isinstance(block, ReportTable):
                out += table_lines(block, width, styles)
            elif isinstance(block, Grid):
                out += grid_lines(block, width, styles)
            elif block.spans:
                text, spans = _spans_of(block)
                if block.style:
                    spans = [(0, len(text), block.style), *spans]
                out += [
                    styles.render(piece, piece_spans)
                    for piece, piece_spans in wrap_styled(text, spans, width, "default", "fold")
                ]
            else:
                out.append("")
    except _NotDrawn:
        return None
    return "".join(text + "\n" for text in out)


def _texts(blocks: Iterable[Drawn]) -> Iterable[str]:
    for block in blocks:
        if isinstance(block, ReportTable):
            yield block.title
            yield from block.headers
            for row in block.rows:
                yield from row
        elif isinstance(block, Grid):
            for mark, body in block.rows:
                yield mark.plain
                yield body.plain
        else:
            yield block.plain


def drawable(blocks: Sequence[Drawn]) -> bool:
    """Whether every text is printable ASCII (with line breaks): one character, one column."""
    return all(_DRAWABLE.fullmatch(text) for text in _texts(blocks))


def plain_text(blocks: Sequence[Drawn], width: int) -> str | None:
    """The blocks as the text rich prints on a console of ``width`` columns without styles;
    None when this cannot draw them (rich then does)."""
    if width < MIN_WIDTH or not drawable(blocks):
        return None
    out: list[str] = []
    try:
        for block in blocks:
            if isinstance(block, ReportTable):
                lines = table_lines(block, width)
            elif isinstance(block, Grid):
                lines = grid_lines(block, width)
            elif block.spans:
                lines = wrap(block.plain, width, "default", "fold")
            else:
                lines = [""]
            out += [text[:width] for text in lines]
    except _NotDrawn:
        return None
    return "".join(text + "\n" for text in out)
