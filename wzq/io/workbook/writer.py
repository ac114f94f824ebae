"""The writer's primitives: shared styles, cells written as text (never a formula),
column widths, page set-up, the input fingerprint, and wzq's ownership of its output
sheets (the marker name :data:`wzq.io.workbook.layout.MARKER_NAME` lists the sheets
wzq wrote, so a user's sheet that happens to carry one of their names is never
deleted: :func:`check_output_sheets` refuses with a :class:`PlanError` instead).

One module per output sheet uses them (:mod:`~wzq.io.workbook.results_sheet`,
:mod:`~wzq.io.workbook.summary_sheet`, :mod:`~wzq.io.workbook.charts`,
:mod:`~wzq.io.workbook.permit_sheet`, :mod:`~wzq.io.workbook.windows_sheet`,
:mod:`~wzq.io.workbook.run_log_sheet`); :mod:`wzq.io.workbook.outputs` decides and
writes them all.
"""

from __future__ import annotations

import bisect
import datetime as dt
import hashlib
import json
import re
from collections.abc import Callable, Iterable, Sequence
from copy import copy
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE, Cell
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.worksheet import Worksheet

import wzq
from wzq.engine.plan import Closure, Plan, PlanError, Problem
from wzq.engine.results import Result
from wzq.io.jsonplan import plan_to_dict
from wzq.io.workbook import layout
from wzq.present.tables import (
    LENGTH_UNKNOWN,
    Column,
    hour_label,
    length_cells,
    limit_values,
    rounded_all,
)

__all__ = [
    "BAND_FILL",
    "BOLD",
    "BOLD_CHAR",
    "CAUTION_FILL",
    "CAUTION_FONT",
    "CELL_PADDING",
    "CELL_TEXT_LIMIT",
    "CENTRE",
    "CHARTS",
    "CHECKS",
    "DATE_FORMAT",
    "DETAIL_COLUMNS",
    "HEADER_ALIGN",
    "HEADER_BORDER",
    "HEADER_FILL",
    "HEADER_FONT",
    "ITALIC",
    "LANDMARK_CHECK",
    "LEFT",
    "NARROW_CHAR",
    "NUMBER_FORMATS",
    "OVER",
    "OVER_FILL",
    "PASS",
    "PERMIT",
    "PERMIT_ROWS_PER_PAGE",
    "RESULTS",
    "RESULTS_HEADER_ROW",
    "RIGHT",
    "ROW_BORDER",
    "RUN_LOG",
    "RUN_TIME_CELL",
    "SECTION_FONT",
    "SMALL",
    "STATUS_ALIGN",
    "SUMMARY",
    "TEXT_CHAR",
    "TITLE_FONT",
    "SheetWriter",
    "Styler",
    "TableRef",
    "align_unknown",
    "align_unknown_lengths",
    "cell_text",
    "check_output_sheets",
    "closure_text",
    "header_width",
    "hour_closures",
    "input_fingerprint",
    "label_rows",
    "limit_texts",
    "listed_hours",
    "number_looks",
    "number_width",
    "plan_checks",
    "plan_title",
    "print_setup",
    "put_text",
    "replace_sheets",
    "select",
    "site_text",
    "text_width",
    "title_block",
    "utc_now",
    "values",
    "wrapped_lines",
]

RESULTS, SUMMARY, CHARTS, PERMIT, RUN_LOG = (
    layout.RESULTS,
    layout.SUMMARY,
    layout.CHARTS,
    layout.PERMIT_TABLE,
    layout.RUN_LOG,
)

#: First rows of the tables (1-based); the charts refer to these.
RESULTS_HEADER_ROW = 4
#: The cell of the Run log that holds the run time (the one cell that changes
#: when the same plan is run twice).
RUN_TIME_CELL = "B4"

DATE_FORMAT = "ddd yyyy-mm-dd hh:mm"
NUMBER_FORMATS = {0: "#,##0", 1: "#,##0.0", 2: "#,##0.00"}
PASS, OVER = "pass", "OVER"
#: Hours per printed page of the permit table (a page break after every so many
#: rows keeps the page count the same on every machine and printer).
PERMIT_ROWS_PER_PAGE = 25


# --- styles: created once, shared by every cell -----------------------------------------


def _colour(key: str, default: str) -> str:
    return layout.COLOURS.get(key, default).lstrip("#").upper()


HEADER_FILL = PatternFill("solid", fgColor=_colour("header_fill", "1F3A4D"))
HEADER_FONT = Font(bold=True, color=_colour("header_text", "FFFFFF"))
#: Pale grey bands on every other row, light red on hours over a limit (the word
#: OVER beside it keeps the mark readable in black and white).
BAND_FILL = PatternFill("solid", fgColor="F1F3F5")
OVER_FILL = PatternFill("solid", fgColor="F4CCCC")
CAUTION_FILL = PatternFill("solid", fgColor=_colour("caution_fill", "FBE3D6"))
TITLE_FONT = Font(bold=True, size=14, color=_colour("title", "1F3A4D"))
SECTION_FONT = Font(bold=True, size=11, color=_colour("section_text", "1F3A4D"))
CAUTION_FONT = Font(bold=True, italic=True, color=_colour("caution_text", "7A2E0E"))
BOLD = Font(bold=True)
ITALIC = Font(italic=True, color=_colour("note_text", "5F6B73"))
SMALL = Font(size=9, color=_colour("note_text", "5F6B73"))
WRAP_TOP = Alignment(wrap_text=True, vertical="top")
#: Height of a line of wrapped text per point of font size (15 pt lines for the 11 pt
#: default font, as the spreadsheet programs set them).
LINE_POINTS_PER_FONT_POINT = 15 / 11
HEADER_ALIGN = Alignment(wrap_text=True, vertical="center", horizontal="center")
CENTRE = Alignment(horizontal="center")
LEFT = Alignment(horizontal="left")
RIGHT = Alignment(horizontal="right")
STATUS_ALIGN = Alignment(horizontal="left", indent=1)
_thin = Side(style="thin", color="8C96A0")
HEADER_BORDER = Border(bottom=Side(style="medium", color="2F3E4C"))
ROW_BORDER = Border(bottom=_thin)


def input_fingerprint(plan: Plan) -> str:
    """SHA-256 of the plan's input values (its JSON form, keys sorted).

    Two workbooks that give the same plan give the same fingerprint, whatever
    their layout or styling; ``wzq batch --resume`` uses it to skip plans whose
    results are already written.
    """
    text = json.dumps(plan_to_dict(plan), sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


#: The most characters a spreadsheet cell holds (Excel's documented limit); longer text
#: makes Excel offer to repair the file, so it is cut with an ellipsis.
CELL_TEXT_LIMIT = 32_767


def cell_text(text: str) -> str:
    """Text a cell can hold: characters XML cannot carry dropped, length capped."""
    text = ILLEGAL_CHARACTERS_RE.sub("", text)
    return text if len(text) <= CELL_TEXT_LIMIT else text[: CELL_TEXT_LIMIT - 1] + "…"


def put_text(ws: Worksheet, row: int, col: int, text: Any) -> Cell:
    """Write a value; a string always as text, never as a formula (``=``, ``+``, ``-``, ``@``)."""
    cell = ws.cell(row=row, column=col)
    if isinstance(text, str):
        cell.value = cell_text(text)
        cell.data_type = "s"
    else:
        cell.value = text
    return cell


@dataclass
class TableRef:
    """Where a table sits on a sheet, so charts and tests can find it."""

    sheet: str
    header_row: int
    first_row: int
    last_row: int
    columns: dict[str, int] = field(default_factory=dict)  # source column -> 1-based index


# --- marker and sheet replacement ------------------------------------------------------


def check_output_sheets(book: Workbook) -> None:
    """Refuse when a sheet with one of wzq's names exists that wzq did not write."""
    ours = set(layout.written_sheets(book))
    clash = [name for name in layout.OUTPUT_SHEETS if name in book.sheetnames and name not in ours]
    if clash:
        names = ", ".join(f"'{n}'" for n in layout.OUTPUT_SHEETS)
        raise PlanError(
            [
                Problem(
                    f"sheet '{name}'",
                    "this sheet was not written by wzq and would be replaced by its results; "
                    f"rename it (wzq writes its results to the sheets {names})",
                )
                for name in clash
            ]
        )


def replace_sheets(book: Workbook) -> dict[str, Worksheet]:
    """Remove wzq's old output sheets and append fresh, empty ones in a fixed order."""
    for name in layout.OUTPUT_SHEETS:
        if name in book.sheetnames:
            book.remove(book[name])
    sheets = {name: book.create_sheet(name) for name in layout.OUTPUT_SHEETS}
    quoted = '"' + layout.MARKER_SEPARATOR.join(layout.OUTPUT_SHEETS) + '"'
    book.defined_names[layout.MARKER_NAME] = DefinedName(
        layout.MARKER_NAME, attr_text=quoted, hidden=True
    )
    return sheets


def select(book: Workbook, ws: Worksheet) -> None:
    """Open the workbook on ``ws``, with no other tab selected (no grouped sheets)."""
    for sheet in book.worksheets:
        sheet.sheet_view.tabSelected = sheet is ws
    book.active = book.worksheets.index(ws)


# --- the per-hour data ------------------------------------------------------------------


def hour_closures(plan: Plan, hour_starts: Sequence[dt.datetime]) -> list[int | str | None]:
    """The closure number(s) in force during each hour (1-based; ``None`` when open).

    A closure is in force during the hour from ``t0`` when it starts before ``t0`` + 1 h
    and ends after ``t0``: each closure finds its hours by bisection in the sorted hour
    starts (a year of hours against hundreds of closures, without trying every pair).
    """
    hour = dt.timedelta(hours=1)
    starts = [_py_datetime(ts) for ts in hour_starts]
    order = sorted(range(len(starts)), key=starts.__getitem__)
    ordered = [starts[k] for k in order]
    ids: list[list[int]] = [[] for _ in starts]
    for i, c in enumerate(plan.closures, start=1):  # in closure order, so each list is sorted
        # c.start < t0 + hour  <=>  t0 > c.start - hour (exact: whole microseconds)
        first = bisect.bisect_right(ordered, c.start - hour)
        for k in order[first : bisect.bisect_left(ordered, c.end)]:
            ids[k].append(i)
    return [None if not n else n[0] if len(n) == 1 else ", ".join(map(str, n)) for n in ids]


def _py_datetime(t: Any) -> dt.datetime:
    """A datetime as itself; a pandas ``Timestamp`` (or ``datetime64``) as a datetime."""
    if type(t) is dt.datetime:
        return t
    import pandas as pd  # imported when met: slow to import

    return pd.Timestamp(t).to_pydatetime()


def listed_hours(result: Result) -> np.ndarray:
    """Hours the permit table lists: closure hours, hours with a queue, hours over a limit."""
    h = result.hours
    return np.asarray(h["closure"] | (h["queue_max_veh"] > 0) | (h["status"] != "ok"), dtype=bool)


#: Extra per-hour columns on the Results sheet, after the permit columns.
DETAIL_COLUMNS = [
    Column("Departures (veh)", "departures_veh", 0),
    Column("Queue delay (veh-h)", "queue_delay_veh_h", 1),
    Column("Work-zone delay (veh-h)", "work_zone_delay_veh_h", 1),
]

#: Checks against the thresholds: hourly column, header and the limit's text.
CHECKS = [
    ("queue_ok", "Queue length", "Queue limit"),
    ("delay_ok", "Average delay", "Delay limit"),
    ("demand_capacity_ok", "Demand / capacity", "D/C limit"),
]


#: The landmark limit's check (column, header, short name), only when a landmark is set.
LANDMARK_CHECK = ("landmark_ok", "Queue must not pass", "Not past")


def plan_checks(plan: Plan) -> list[tuple[str, str, str]]:
    """The checks a plan's outputs list: :data:`CHECKS`, and the landmark limit when set."""
    if plan.thresholds.queue_must_not_pass is None:
        return list(CHECKS)
    return [*CHECKS, LANDMARK_CHECK]


def limit_texts(plan: Plan) -> dict[str, str]:
    """Each threshold in the plan's units as text (``none`` when switched off); the
    landmark limit only when set."""
    shown = limit_values(plan)
    return {k: shown.get(k, "none") for k, _, _ in plan_checks(plan)}


def values(result: Result, columns: Iterable[Column]) -> list[list[float | int | str | None]]:
    """Rounded display values, column by column (NaN written as a blank; the longest
    queue of an hour holding traffic back as "unknown": :func:`length_cells`)."""
    h = result.hours
    return [
        length_cells(
            result,
            col,
            rounded_all(np.asarray(h[col.source], dtype=float) * col.scale, col.decimals),
        )
        for col in columns
    ]


# --- writing cells with shared styles ----------------------------------------------------


class Styler:
    """Gives cells their look through a few shared style records, one per kind of cell.

    openpyxl looks up every font, fill and border a cell is given in the
    workbook's style tables, which is slow in a workbook with many styles. The
    first cell of each kind is styled the ordinary way; every later cell of
    that kind gets a copy of its style record (the way openpyxl copies cells),
    so the work per cell is constant and no style object is made in a loop.
    One styler serves one workbook (the records index its style tables).
    """

    def __init__(self) -> None:
        self._records: dict[tuple, Any] = {}

    def prepare(self, **look: Any) -> Callable[[Cell], Cell]:
        """A function that gives a cell this look (attributes left ``None`` are not set)."""
        look = {k: v for k, v in look.items() if v is not None}
        if not look:
            return _unchanged
        key = tuple((k, v if isinstance(v, str) else id(v)) for k, v in sorted(look.items()))
        records = self._records

        def apply(cell: Cell) -> Cell:
            record = records.get(key)
            if record is None:
                for name, value in look.items():
                    setattr(cell, name, value)
                records[key] = copy(cell._style)
            else:
                cell._style = copy(record)
            return cell

        return apply

    def __call__(self, cell: Cell, **look: Any) -> Cell:
        return self.prepare(**look)(cell)


def _unchanged(cell: Cell) -> Cell:
    return cell


class SheetWriter:
    """Writes one output sheet: values (user text always as text) with shared styles."""

    def __init__(self, ws: Worksheet, style: Styler) -> None:
        self.ws = ws
        self.style = style

    def put(self, row: int, col: int, value: Any, **look: Any) -> Cell:
        cell = put_text(self.ws, row, col, value)
        if look:
            self.style(cell, **look)
        return cell

    def header(self, row: int, headers: Sequence[str], height: float | None = 45.0) -> None:
        for j, text in enumerate(headers, start=1):
            self.header_cell(row, j, text)
        if height:
            self.ws.row_dimensions[row].height = height

    def header_cell(self, row: int, col: int, text: str | None) -> Cell:
        """One cell of a table's header row, in the header's look."""
        return self.put(
            row, col, text, fill=HEADER_FILL, font=HEADER_FONT,
            alignment=HEADER_ALIGN, border=HEADER_BORDER,
        )  # fmt: skip

    def title(self, text: str, row: int = 1) -> None:
        self.put(row, 1, text, font=TITLE_FONT)

    def paragraph(
        self, row: int, col: int, text: str, widths: Sequence[float], **look: Any
    ) -> Cell:
        """``text`` in one cell wrapped across the columns of ``widths`` from ``col``
        (merged when more than one), its row as tall as its lines: a long line in one
        cell runs past the print area and is cut off on paper."""
        cell = self.put(row, col, text, alignment=WRAP_TOP, **look)
        if len(widths) > 1:
            self.ws.merge_cells(
                start_row=row, start_column=col, end_row=row, end_column=col + len(widths) - 1
            )
        lines = wrapped_lines(text, (sum(widths) - CELL_PADDING) / TEXT_CHAR)
        size = float(look["font"].size) if "font" in look and look["font"].size else 11.0
        self.ws.row_dimensions[row].height = LINE_POINTS_PER_FONT_POINT * size * len(lines)
        return cell

    def caution(self, row: int, ncols: int) -> None:
        """The caution line, shaded across the sheet's printed width."""
        self.put(row, 1, wzq.CAUTION, font=CAUTION_FONT, fill=CAUTION_FILL)
        for j in range(2, ncols + 1):
            self.style(self.ws.cell(row, j), fill=CAUTION_FILL)

    def widths(self, widths: Sequence[float]) -> None:
        for j, width in enumerate(widths, start=1):
            self.ws.column_dimensions[get_column_letter(j)].width = width


#: How many characters of text a column of width ``w`` (in the spreadsheet's unit, the
#: width of a digit of the default font) holds on a line: between
#: ``(w - CELL_PADDING) / BOLD_CHAR`` (wide letters in bold) and ``w / NARROW_CHAR``
#: (narrow ones); LibreOffice put the 11 characters "Delay (veh-" on one line of a
#: column 11 wide.
BOLD_CHAR = 1.15
NARROW_CHAR = 0.85
TEXT_CHAR = 1.05
CELL_PADDING = 1.5


def wrapped_lines(text: str, room: float) -> list[str]:
    """``text`` broken into lines of at most ``room`` characters the way a spreadsheet
    breaks wrapped text: between words, and after a hyphen inside a word."""
    lines: list[str] = []
    for word in text.split():
        pieces = re.findall(r"[^-]*-|[^-]+$", word) or [word]
        for k, piece in enumerate(pieces):
            glue = "" if k else " "
            if lines and len(lines[-1]) + len(glue) + len(piece) <= room:
                lines[-1] += glue + piece
            else:
                lines.append(piece)
    return lines or [""]


def header_width(header: str, least: float = 0.0, max_lines: int = 3) -> float:
    """The narrowest column width (at least ``least``) in which a wrapped bold header
    takes at most ``max_lines`` lines, never splits a word and never breaks one after
    a hyphen (``Delay (veh-`` / ``h)``), whatever the font's letters measure."""
    width = max(least, 6.0)
    while width < 60:
        rooms = np.arange((width - CELL_PADDING) / BOLD_CHAR, width / NARROW_CHAR, 0.25)
        ok = True
        for room in rooms:
            lines = wrapped_lines(header, float(room))
            too_long = any(len(x) > room for x in lines)
            if too_long or len(lines) > max_lines or any(x.endswith("-") for x in lines[:-1]):
                ok = False
                break
        if ok:
            return width
        width += 0.5
    return width


def text_width(texts: Iterable[str], *, bold: bool = False) -> float:
    """A column width that shows the longest of ``texts`` on one line."""
    longest = max((len(t) for t in texts), default=0)
    return longest * (BOLD_CHAR if bold else TEXT_CHAR) + CELL_PADDING


def align_unknown_lengths(ws: Worksheet, rows: tuple[int, int], columns: list[Column]) -> None:
    """Right-align, among the numbers of their column, the longest queues printed as
    "unknown" (:func:`length_cells`) in ``rows`` (first, last) of a table whose value
    ``columns`` start in column C."""
    j = 3 + [c.source for c in columns].index("queue_length_max_m")
    for (cell,) in ws.iter_rows(min_row=rows[0], max_row=rows[1], min_col=j, max_col=j):
        align_unknown(cell)


def align_unknown(cell: Cell) -> None:
    """Right-align a length printed as "unknown" (:data:`LENGTH_UNKNOWN`), so that it
    lines up with the numbers of its column; any other cell is left as it is."""
    if cell.value == LENGTH_UNKNOWN:
        cell.alignment = RIGHT


def number_width(values: Iterable[float | int | str | None], decimals: int) -> float:
    """A column width that shows the widest of ``values`` as formatted (``#,##0.0``; a
    text as it is)."""
    texts = [v if isinstance(v, str) else f"{v:,.{decimals}f}" for v in values if v is not None]
    return text_width(texts) + 1.0


def closure_text(i: int, c: Closure, lanes: int) -> str:
    span = f"{hour_label(c.start)} to {hour_label(c.end)}"
    barrier = layout.word_for(layout.BARRIER_WORDS, c.barrier)
    text = f"Closure {i}: {span}; {c.lanes_closed} of {lanes} lanes closed, {barrier}"
    if c.capacity_override_veh_h_ln is not None:
        text += f"; capacity set by user {c.capacity_override_veh_h_ln:,.0f} veh/h/ln"
    return f"{text}. {c.note}" if c.note else text


def plan_title(plan: Plan) -> str:
    """The plan's title for headings (title, else site name)."""
    return plan.meta.title or plan.site.name or "Lane-closure plan"


def site_text(plan: Plan) -> str:
    return ", ".join(x for x in (plan.site.name, plan.site.direction) if x)


def _footer_text(text: str, limit: int = 80) -> str:
    """User text made safe for a page header/footer (``&`` starts a code there)."""
    text = text if len(text) <= limit else text[: limit - 1] + "…"
    return text.replace("&", "&&")


def print_setup(
    ws: Worksheet,
    plan: Plan,
    area: str,
    header_row: int | None = None,
    *,
    landscape: bool = True,
    pages_high: int = 0,
) -> None:
    """One page wide (``pages_high`` 0: as many pages down as needed), header rows
    repeated, the plan's title and page numbers in the footer; Letter paper for
    US customary plans, A4 for metric ones.
    """
    ws.page_setup.orientation = "landscape" if landscape else "portrait"
    ws.page_setup.paperSize = (
        ws.PAPERSIZE_LETTER if plan.site.unit_system == "us" else ws.PAPERSIZE_A4
    )
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = pages_high
    if header_row is not None:
        ws.print_title_rows = f"{header_row}:{header_row}"
    ws.print_area = area
    ws.print_options.horizontalCentered = True
    ws.page_margins.left = ws.page_margins.right = 0.4
    ws.page_margins.top = 0.5
    ws.page_margins.bottom = 0.6
    ws.page_margins.header = 0.25
    ws.page_margins.footer = 0.3
    ws.oddFooter.left.text = _footer_text(plan_title(plan))
    ws.oddFooter.center.text = "Page &P of &N"
    ws.oddFooter.right.text = f"wzq {wzq.__version__}"
    for part in (ws.oddFooter.left, ws.oddFooter.center, ws.oddFooter.right):
        part.size = 8


def title_block(plan: Plan) -> list[tuple[str, str]]:
    """Project, route and site of a plan, as labelled lines of a sheet's head."""
    return [("Project", plan.meta.project), ("Route", plan.meta.route), ("Site", site_text(plan))]


def label_rows(out: SheetWriter, r: int, rows: Iterable[tuple[str, str]]) -> int:
    """Each ``(label, text)`` with a text on a row of its own from row ``r``, the label in
    bold in column A; returns the next free row."""
    for label, text in rows:
        if text:
            out.put(r, 1, label, font=BOLD)
            out.put(r, 2, text)
            r += 1
    return r


def number_looks(decimals: Sequence[int | None]) -> list[str | None]:
    return [None if d is None else NUMBER_FORMATS[d] for d in decimals]


def utc_now() -> str:
    """The current time in UTC, ISO 8601 to the second (``2027-05-03T21:00:00Z``)."""
    return dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
