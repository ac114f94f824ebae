"""Copy a sheet written by openpyxl into a live Excel sheet through xlwings.

The live backend (:mod:`wzq.io.live.backend`) lets :mod:`wzq.io.workbook.writer`
write its output sheets into an in-memory openpyxl workbook and then walks
those sheets here, so the layout lives in one place only: whatever the writer
puts into a cell, a column width or a print area is carried over without a
second copy of its rules.

What is carried over: cell values (one 2-D block per sheet), formulas the
writer wrote as formulas, number formats, solid fills, bold / italic / size /
colour of the font, wrapped text, horizontal alignment, merged cells, column
widths, row heights, the print area, repeated header rows and hidden
gridlines. Borders, freeze panes, page orientation, fit-to-page, page breaks
and footers are not part of xlwings' portable object model; the file backend
(``wzq run``) writes them.

Text stays text: Excel reads a typed entry as a formula (``=``, ``+``, ``-``,
``@``), a number, a date, a time or a logical value. :func:`excel_literal`
puts Excel's own text prefix, an apostrophe, in front of any text Excel could
read as something else; Excel stores the text without the apostrophe.

Formatting calls are grouped into rectangles of equal look
(:func:`rectangles`), so the number of calls into Excel grows with the number
of distinct looks, not with the number of cells.
"""

from __future__ import annotations

import datetime as dt
import numbers
from collections import defaultdict
from collections.abc import Callable, Iterable
from typing import Any

from openpyxl.cell.cell import Cell
from openpyxl.utils import column_index_from_string, get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

__all__ = [
    "FORMULA_STARTS",
    "HORIZONTAL",
    "LOOKS",
    "Rect",
    "Skipped",
    "address",
    "column_widths",
    "entry",
    "excel_literal",
    "look_groups",
    "plain_value",
    "quote_sheet",
    "rectangles",
    "value_block",
    "write_sheet",
]

#: First characters that make Excel read an entry as a formula (or that Excel
#: itself swallows: a leading apostrophe).
FORMULA_STARTS = ("=", "+", "-", "@", "'")
#: Words Excel reads as logical values or error values when typed.
_SPECIAL_WORDS = {"TRUE", "FALSE"}

#: openpyxl's horizontal alignment -> xlwings' word.
HORIZONTAL = {
    "general": "general",
    "left": "left",
    "center": "center",
    "right": "right",
    "fill": "fill",
    "justify": "justify",
    "centerContinuous": "center_across_selection",
    "distributed": "distributed",
}

Rect = tuple[int, int, int, int]  # first row, first column, last row, last column (1-based)


def excel_literal(text: str) -> str:
    """``text`` as it must be entered so that Excel stores exactly this text.

    An apostrophe is put in front of text Excel would otherwise read as a
    formula, a number, a date, a time, a logical or an error value (anything
    starting with ``=``, ``+``, ``-``, ``@``, ``'`` or ``#``, anything with a
    digit, ``TRUE``/``FALSE``); Excel keeps the apostrophe out of the value.
    """
    if not text:
        return text
    stripped = text.strip()
    if (
        text.startswith(FORMULA_STARTS)
        or stripped.startswith((*FORMULA_STARTS, "#"))
        or any(ch.isdigit() for ch in text)
        or stripped.upper() in _SPECIAL_WORDS
    ):
        return "'" + text
    return text


def plain_value(value: Any) -> Any:
    """A cell value as a plain Python value xlwings writes as-is."""
    if value is None or isinstance(value, str | bool | dt.datetime):
        return value
    if isinstance(value, dt.date):
        return dt.datetime.combine(value, dt.time())
    if hasattr(value, "to_pydatetime"):  # pandas Timestamp
        return value.to_pydatetime()
    if isinstance(value, numbers.Integral):
        return int(value)
    if isinstance(value, numbers.Real):
        return float(value)
    return str(value)


def entry(cell: Cell | None) -> Any:
    """What to enter into Excel for one openpyxl cell (``None``: leave empty)."""
    if cell is None or cell.value is None:
        return None
    if cell.data_type == "f" and isinstance(cell.value, str):
        return cell.value  # a formula the writer meant as a formula
    value = plain_value(cell.value)
    if isinstance(value, str):
        return excel_literal(value) if value else None
    return value


def value_block(ws: Worksheet) -> list[list[Any]]:
    """The sheet's values from A1 as one rectangular 2-D list (empty cells ``None``)."""
    cells = ws._cells
    if not cells:
        return []
    last_row = max(r for r, _ in cells)
    last_col = max(c for _, c in cells)
    return [
        [entry(cells.get((r, c))) for c in range(1, last_col + 1)] for r in range(1, last_row + 1)
    ]


def rectangles(cells: Iterable[tuple[int, int]]) -> list[Rect]:
    """Cover a set of cells exactly with few rectangles.

    Runs of adjacent cells in a row are joined first; a run is then stretched
    down over the following rows that hold the very same run.
    """
    rows: dict[int, list[int]] = defaultdict(list)
    for r, c in cells:
        rows[r].append(c)
    runs: dict[int, list[tuple[int, int]]] = {}
    for r, cols in rows.items():
        cols = sorted(set(cols))
        spans = []
        start = prev = cols[0]
        for c in cols[1:]:
            if c != prev + 1:
                spans.append((start, prev))
                start = c
            prev = c
        spans.append((start, prev))
        runs[r] = spans
    out: list[Rect] = []
    open_: dict[tuple[int, int], int] = {}  # span -> first row of the rectangle growing down
    last_row: dict[tuple[int, int], int] = {}
    for r in sorted(runs):
        current = set(runs[r])
        for span in list(open_):
            if span not in current or last_row[span] != r - 1:
                out.append((open_[span], span[0], last_row[span], span[1]))
                del open_[span]
        for span in runs[r]:
            if span not in open_:
                open_[span] = r
            last_row[span] = r
    for span, first in open_.items():
        out.append((first, span[0], last_row[span], span[1]))
    return sorted(out)


def address(rect: Rect) -> str:
    """``A1:C3`` (or ``A1`` for one cell) of a rectangle."""
    r0, c0, r1, c1 = rect
    first = f"{get_column_letter(c0)}{r0}"
    return first if (r0, c0) == (r1, c1) else f"{first}:{get_column_letter(c1)}{r1}"


def _rgb(color: Any) -> tuple[int, int, int] | None:
    """An openpyxl colour as an (r, g, b) tuple (theme and indexed colours: ``None``)."""
    if color is None or getattr(color, "type", None) != "rgb":
        return None
    text = str(color.rgb)[-6:]
    try:
        return (int(text[0:2], 16), int(text[2:4], 16), int(text[4:6], 16))
    except ValueError:
        return None


def _fill(cell: Cell) -> tuple[int, int, int] | None:
    fill = cell.fill
    if fill is None or fill.fill_type != "solid":
        return None
    return _rgb(fill.fgColor)


#: Each look a cell can have: its xlwings target and how to read it off an openpyxl
#: cell (``None``: the default look, nothing to do).
LOOKS: dict[str, Callable[[Cell], Any]] = {
    "number_format": lambda c: None if c.number_format == "General" else c.number_format,
    "color": _fill,
    "font.bold": lambda c: True if c.font is not None and c.font.b else None,
    "font.italic": lambda c: True if c.font is not None and c.font.i else None,
    "font.size": lambda c: None if c.font is None or c.font.sz in (None, 11) else float(c.font.sz),
    "font.color": lambda c: None if c.font is None else _rgb(c.font.color),
    "wrap_text": lambda c: True if c.alignment is not None and c.alignment.wrap_text else None,
    "horizontal_alignment": lambda c: (
        None
        if c.alignment is None or c.alignment.horizontal in (None, "general")
        else HORIZONTAL.get(c.alignment.horizontal)
    ),
}


def look_groups(ws: Worksheet) -> dict[str, dict[Any, list[Rect]]]:
    """For each look: value -> the rectangles of cells that have it."""
    cells: dict[str, dict[Any, list[tuple[int, int]]]] = {k: defaultdict(list) for k in LOOKS}
    for (r, c), cell in ws._cells.items():
        for key, read in LOOKS.items():
            value = read(cell)
            if value is not None:
                cells[key][value].append((r, c))
    return {
        key: {value: rectangles(where) for value, where in groups.items()}
        for key, groups in cells.items()
    }


def _set_look(rng: Any, key: str, value: Any) -> None:
    if key.startswith("font."):
        setattr(rng.font, key.removeprefix("font."), value)
    else:
        setattr(rng, key, value)


class Skipped(list):
    """Formatting steps Excel refused (each a short text); the values are always written."""

    def attempt(self, what: str, step: Callable[[], Any]) -> None:
        try:
            step()
        except Exception as e:  # an older xlwings or a platform without the feature
            self.append(f"{what} ({type(e).__name__}: {e})")


def column_widths(ws: Worksheet) -> dict[int, float]:
    """Column index -> width in characters, for the columns the writer sized."""
    out = {}
    for key, dim in ws.column_dimensions.items():
        if dim.width is None or not dim.customWidth:
            continue
        first = dim.min or column_index_from_string(key)
        last = dim.max or first
        for c in range(first, last + 1):
            out[c] = float(dim.width)
    return out


def _runs(values: dict[int, float]) -> list[tuple[int, int, float]]:
    """(first, last, value) runs of consecutive indices with the same value."""
    out: list[tuple[int, int, float]] = []
    for i in sorted(values):
        v = values[i]
        if out and out[-1][1] == i - 1 and out[-1][2] == v:
            out[-1] = (out[-1][0], i, v)
        else:
            out.append((i, i, v))
    return out


def _local_area(area: str) -> str:
    """``'Results'!$A$1:$Q$76`` -> ``$A$1:$Q$76`` (print areas are given per sheet)."""
    return ",".join(part.rpartition("!")[2] for part in area.split(","))


def quote_sheet(name: str) -> str:
    """A sheet name as it appears in a reference: ``'Permit table'``."""
    return "'" + name.replace("'", "''") + "'"


def write_sheet(ws: Worksheet, sheet: Any, skipped: Skipped) -> None:
    """Write everything of openpyxl sheet ``ws`` except its charts into xlwings ``sheet``."""
    block = value_block(ws)
    if block:
        sheet.range("A1").value = block
    for key, groups in look_groups(ws).items():
        for value, rects in groups.items():
            for rect in rects:
                skipped.attempt(
                    f"{ws.title}: {key} of {address(rect)}",
                    lambda rect=rect, key=key, value=value: _set_look(
                        sheet.range(address(rect)), key, value
                    ),
                )
    for first, last, width in _runs(column_widths(ws)):
        cols = f"{get_column_letter(first)}:{get_column_letter(last)}"
        skipped.attempt(
            f"{ws.title}: width of columns {cols}",
            lambda cols=cols, width=width: setattr(sheet.range(cols), "column_width", width),
        )
    heights = {r: float(d.height) for r, d in ws.row_dimensions.items() if d.height is not None}
    for first, last, height in _runs(heights):
        rows = f"{first}:{last}"
        skipped.attempt(
            f"{ws.title}: height of rows {rows}",
            lambda rows=rows, height=height: setattr(sheet.range(rows), "row_height", height),
        )
    for merged in ws.merged_cells.ranges:
        skipped.attempt(
            f"{ws.title}: merge {merged.coord}",
            lambda merged=merged: sheet.range(merged.coord).merge(),
        )
    if ws.print_area:
        area = _local_area(ws.print_area)
        skipped.attempt(
            f"{ws.title}: print area",
            lambda: setattr(sheet.page_setup, "print_area", area),
        )
    if ws.print_title_rows:
        # Excel keeps repeated rows as the sheet's own name Print_Titles
        titles = f"={quote_sheet(ws.title)}!{ws.print_title_rows}"
        skipped.attempt(
            f"{ws.title}: rows repeated on each printed page",
            lambda: sheet.names.add("Print_Titles", titles),
        )
    if ws.sheet_view.showGridLines is False:
        skipped.attempt(
            f"{ws.title}: hide gridlines", lambda: setattr(sheet, "show_gridlines", False)
        )
