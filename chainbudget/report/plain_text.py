"""The report's blocks (`layout`) drawn as plain text, without rich.

A pipe or a file gets the same characters rich gave them (tests/test_plain_text.py holds
the two equal on every example at several widths), in a fraction of the time: this draws
only what the report uses, text of single-width characters, where rich's general layout
measures every cell of every table through its renderable protocol several times and loads
some forty modules first. It follows rich's rules (rich 13-15; MIT licence):

* a line of text wraps at word boundaries (a word keeps the spaces after it; a word wider
  than the line is folded), keeping the spaces at a break unless they pass the width;
* a table's columns start at their widest cell; while too wide for the width, the widest
  wrapping columns give up the excess to the next widest, and any excess left is taken
  from every column in proportion; a table narrower than its least width (its title, at
  most 80 columns) shares the difference out in proportion to the widths;
* a cell is padded one space on its right except in the last column; the table has an
  edge of one space each side, two spaces between columns and a rule of ``-`` under the
  header; headers sit at the bottom of their row, cells at the top; a table's title wraps
  at the table's width, filled with spaces to it.

`plain_text` returns None for what it does not draw (a character that is not printable
ASCII, a width under `MIN_WIDTH`), which rich then draws instead.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence

from chainbudget.report.layout import Drawn, Grid, ReportTable
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
    text: str, width: int, right: int, justify: str, overflow: str, no_wrap: bool
) -> list[str]:
    inner = width - right
    if inner < 1:
        raise _NotDrawn
    return [
        _truncate(piece, inner, "crop", pad=True) + " " * right
        for piece in wrap(text, inner, justify, overflow, no_wrap)
    ]


def _rows(
    rows: Sequence[Sequence[str]],
    widths: Sequence[int],
    justify: Sequence[str],
    overflow: Sequence[str],
    no_wrap: Sequence[bool],
    header: bool,
) -> list[list[str]]:
    """Each row's lines, its cells side by side (a list of cell texts per line); a header's
    cells sit at the bottom of their row, others at the top."""
    last = len(widths) - 1
    drawn = []
    for row in rows:
        cells = [
            _cell_lines(text, width, 0 if k == last else 1, justify[k], overflow[k], no_wrap[k])
            for k, (text, width) in enumerate(zip(row, widths, strict=True))
        ]
        height = max(len(cell) for cell in cells)
        for k, cell in enumerate(cells):
            blank = [" " * widths[k]] * (height - len(cell))
            cells[k] = blank + cell if header else cell + blank
        drawn += [[cell[n] for cell in cells] for n in range(height)]
    return drawn


def table_lines(table: ReportTable, width: int) -> list[str]:
    """A table at a console of ``width`` columns: title, header, rule, rows, and the blank
    edge rows above the header and below the last row."""
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
        lines.append(" " + " ".join(cells) + " ")
    lines.append(" " + "-".join("-" * w for w in widths) + " ")
    for cells in _rows(table.rows, widths, table.justify, overflow, no_wrap, header=False):
        lines.append(" " + " ".join(cells) + " ")
    lines.append(" " * table_width)
    return lines


def grid_lines(grid: Grid, width: int) -> list[str]:
    """The findings' grid: marks, then the texts folded at what is left."""
    rows = [(mark.plain, body.plain) for mark, body in grid.rows]
    columns = [[mark for mark, _ in rows], [body for _, body in rows]]
    widths = _column_widths(columns, [1, 0], [True, False], width, None, 0)
    drawn = _rows(rows, widths, ["left", "left"], ["ellipsis", "fold"], [True, False], False)
    return ["".join(cells) for cells in drawn]


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
