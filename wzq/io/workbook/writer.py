"""Writing a result back into the workbook: wzq's own output sheets, nothing else.

The writer removes and recreates only the sheets it owns (their names are
:data:`wzq.io.workbook.layout.OUTPUT_SHEETS`), at the end of the workbook in a fixed
order; every other sheet, name, style and the VBA project stay as they were.
Sheets it wrote are listed in a hidden workbook-scoped defined name
(:data:`MARKER_NAME`), so a user's own sheet that happens to carry one of those
names is never deleted: the writer refuses with a :class:`PlanError` instead.

The sheets:

* **Results**: every hour of the demand period, in the plan's units, rounded as
  shown everywhere else (:func:`wzq.present.tables.hourly_display`), numbers as numbers.
* **Summary**: the headline figures, the limits, the closures, the warnings.
* **Charts**: native spreadsheet charts (:mod:`wzq.io.workbook.charts`).
* **Permit table**: a print-ready table with a title block, pass/fail per hour
  against each limit, the caution line and a run stamp; landscape, one page
  wide, header rows repeated, page numbers in the footer.
* **Run log**: tool version, run time (UTC), source file, the input
  fingerprint (:func:`input_fingerprint`) and the warnings.

Text that came from the user (names, notes) is always written as text, never as
a formula, whatever its first character.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import re
from collections.abc import Callable, Iterable, Sequence
from copy import copy
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE, Cell
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.worksheet import Worksheet

import wzq
from wzq import units as u
from wzq.engine.plan import Closure, Plan, PlanError, Problem
from wzq.engine.results import Result
from wzq.io.jsonplan import plan_to_dict
from wzq.io.workbook import layout
from wzq.present.tables import Column, hour_label, hourly_columns, rounded, summary_lines

#: Hidden workbook-scoped defined name listing the sheets wzq wrote.
MARKER_NAME = "wzq_output_sheets"
_SEP = "|"

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
HEADER_ALIGN = Alignment(wrap_text=True, vertical="center", horizontal="center")
CENTRE = Alignment(horizontal="center")
LEFT = Alignment(horizontal="left")
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


def written_sheets(book: Workbook) -> list[str]:
    """The sheets the marker says wzq wrote (empty for a workbook never run)."""
    dn = book.defined_names.get(MARKER_NAME)
    if dn is None or not dn.attr_text:
        return []
    text = dn.attr_text.strip()
    if len(text) >= 2 and text[0] == text[-1] == '"':
        text = text[1:-1]
    return [s for s in text.split(_SEP) if s]


def check_output_sheets(book: Workbook) -> None:
    """Refuse when a sheet with one of wzq's names exists that wzq did not write."""
    ours = set(written_sheets(book))
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


def _replace_sheets(book: Workbook) -> dict[str, Worksheet]:
    """Remove wzq's old output sheets and append fresh, empty ones in a fixed order."""
    for name in layout.OUTPUT_SHEETS:
        if name in book.sheetnames:
            book.remove(book[name])
    sheets = {name: book.create_sheet(name) for name in layout.OUTPUT_SHEETS}
    quoted = '"' + _SEP.join(layout.OUTPUT_SHEETS) + '"'
    book.defined_names[MARKER_NAME] = DefinedName(MARKER_NAME, attr_text=quoted, hidden=True)
    return sheets


def _select(book: Workbook, ws: Worksheet) -> None:
    """Open the workbook on ``ws``, with no other tab selected (no grouped sheets)."""
    for sheet in book.worksheets:
        sheet.sheet_view.tabSelected = sheet is ws
    book.active = book.worksheets.index(ws)


# --- the per-hour data ------------------------------------------------------------------


def hour_closures(plan: Plan, hour_starts: Sequence[pd.Timestamp]) -> list[int | str | None]:
    """The closure number(s) in force during each hour (1-based; ``None`` when open)."""
    out: list[int | str | None] = []
    hour = dt.timedelta(hours=1)
    for ts in hour_starts:
        t0 = pd.Timestamp(ts).to_pydatetime()
        ids = [i + 1 for i, c in enumerate(plan.closures) if c.start < t0 + hour and c.end > t0]
        out.append(None if not ids else ids[0] if len(ids) == 1 else ", ".join(map(str, ids)))
    return out


def listed_hours(result: Result) -> np.ndarray:
    """Hours the permit table lists: closure hours, hours with a queue, hours over a limit."""
    h = result.hourly
    return (h["closure"] | (h["queue_max_veh"] > 0) | (h["status"] != "ok")).to_numpy()


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


def _limit_texts(plan: Plan) -> dict[str, str]:
    """Each threshold in the plan's units as text (``none`` when switched off)."""
    t = plan.thresholds
    long_name, long_m = u.LONG_LENGTH[plan.site.unit_system]
    return {
        "queue_ok": "none"
        if t.max_queue_length is None
        else f"{t.max_queue_length / long_m:,.2f} {long_name}",
        "delay_ok": "none"
        if t.max_average_delay is None
        else f"{t.max_average_delay / u.MINUTE:,.1f} min/veh",
        "demand_capacity_ok": "none"
        if t.max_demand_capacity is None
        else f"{t.max_demand_capacity:,.2f}",
    }


def _values(result: Result, columns: Iterable[Column]) -> list[list[float | int | None]]:
    """Rounded display values, column by column (NaN written as a blank)."""
    h = result.hourly
    out = []
    for col in columns:
        vals = []
        for v in h[col.source].to_numpy(dtype=float):
            vals.append(None if np.isnan(v) else rounded(v * col.scale, col.decimals))
        out.append(vals)
    return out


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
            self.put(
                row, j, text, fill=HEADER_FILL, font=HEADER_FONT,
                alignment=HEADER_ALIGN, border=HEADER_BORDER,
            )  # fmt: skip
        if height:
            self.ws.row_dimensions[row].height = height

    def title(self, text: str, row: int = 1) -> None:
        self.put(row, 1, text, font=TITLE_FONT)

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


def number_width(values: Iterable[float | int | None], decimals: int) -> float:
    """A column width that shows the widest of ``values`` as formatted (``#,##0.0``)."""
    texts = [f"{v:,.{decimals}f}" for v in values if v is not None]
    return text_width(texts) + 1.0


def _closure_text(i: int, c: Closure, lanes: int) -> str:
    span = f"{hour_label(c.start)} to {hour_label(c.end)}"
    barrier = layout.word_for(layout.BARRIER_WORDS, c.barrier)
    text = f"Closure {i}: {span}; {c.lanes_closed} of {lanes} lanes closed, {barrier}"
    if c.capacity_override_veh_h_ln is not None:
        text += f"; capacity set by user {c.capacity_override_veh_h_ln:,.0f} veh/h/ln"
    return f"{text}. {c.note}" if c.note else text


def plan_title(plan: Plan) -> str:
    """The plan's title for headings (title, else site name)."""
    return plan.meta.title or plan.site.name or "Lane-closure plan"


def _site_text(plan: Plan) -> str:
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


# --- the sheets -------------------------------------------------------------------------


def _number_looks(decimals: Sequence[int | None]) -> list[str | None]:
    return [None if d is None else NUMBER_FORMATS[d] for d in decimals]


def write_results_sheet(out: SheetWriter, result: Result) -> TableRef:
    """Every hour, in the plan's units, rounded as shown; failing hours marked."""
    ws = out.ws
    plan = result.plan
    system = plan.site.unit_system
    h = result.hourly
    cols = hourly_columns(system)
    details = DETAIL_COLUMNS
    out.title(f"Hourly results: {plan_title(plan)}")
    out.put(2, 1, _site_text(plan) or None, font=ITALIC)
    units = "US customary" if system == "us" else "metric"
    out.put(3, 1, f"Units: {units}. Numbers are rounded as shown. {wzq.CAUTION}", font=SMALL)
    headers = ["Hour", "Closure", *(c.header for c in cols), "Status", *(c.header for c in details)]
    hr = RESULTS_HEADER_ROW
    out.header(hr, headers)
    hours = [pd.Timestamp(t).to_pydatetime() for t in h["hour_start"]]
    closures = hour_closures(plan, h["hour_start"])
    main = _values(result, cols)
    extra = _values(result, details)
    status = h["status"].tolist()
    n = len(hours)
    first = hr + 1
    for i in range(n):
        ws.append([hours[i], closures[i], *(v[i] for v in main), status[i], *(v[i] for v in extra)])
    formats = [DATE_FORMAT, None, *_number_looks([c.decimals for c in cols]), None]
    formats += _number_looks([c.decimals for c in details])
    aligns: list[Alignment | None] = [None] * len(headers)
    aligns[1] = CENTRE
    status_col = 2 + len(cols)
    aligns[status_col] = STATUS_ALIGN
    looks = {
        kind: [
            out.style.prepare(
                number_format=f,
                alignment=a,
                fill=fill,
                font=BOLD if kind == "over" and j == status_col else None,
            )
            for j, (f, a) in enumerate(zip(formats, aligns, strict=True))
        ]
        for kind, fill in (("plain", None), ("band", BAND_FILL), ("over", OVER_FILL))
    }
    for i, row in enumerate(ws.iter_rows(min_row=first, max_row=first + n - 1)):
        kind = "over" if status[i] != "ok" else "band" if i % 2 else "plain"
        for apply, cell in zip(looks[kind], row, strict=True):
            apply(cell)
    status_width = text_width([*status, "Status"], bold=True)
    widths = [21, 8.5]
    widths += [
        header_width(c.header, number_width(v, c.decimals)) for c, v in zip(cols, main, strict=True)
    ]
    widths.append(status_width)
    widths += [
        header_width(c.header, number_width(v, c.decimals))
        for c, v in zip(details, extra, strict=True)
    ]
    out.widths(widths)
    ws.freeze_panes = ws.cell(first, 2)
    ncol = len(headers)
    if n:
        ws.auto_filter.ref = f"A{hr}:{get_column_letter(ncol)}{first + n - 1}"
    print_setup(ws, plan, f"A1:{get_column_letter(ncol)}{first + max(n, 1) - 1}", hr)
    sources = ["hour_start", "closure_no", *(c.source for c in cols), "status"]
    sources += [c.source for c in details]
    return TableRef(
        ws.title, hr, first, first + n - 1, {s: j for j, s in enumerate(sources, start=1)}
    )


def permit_columns(system: u.UnitSystem) -> list[Column]:
    """The numeric columns of the permit table (a subset of the display columns)."""
    keep = (
        "lanes_open",
        "demand_veh_h",
        "capacity_veh_h",
        "discharge_veh_h",
        "demand_capacity",
        "queue_max_veh",
        "queue_length_max_m",
        "delay_veh_h",
        "average_delay_min",
        "max_queue_wait_min",
    )
    by_source = {c.source: c for c in hourly_columns(system)}
    return [by_source[s] for s in keep]


def write_permit_sheet(out: SheetWriter, result: Result, stamp: str) -> TableRef:
    """The print-ready table: title block, limits, hours with pass/fail, caution, run stamp."""
    ws = out.ws
    plan = result.plan
    h = result.hourly
    system = plan.site.unit_system
    limits = _limit_texts(plan)
    checks = [(col, short) for col, _, short in CHECKS if col in h.columns]
    cols = permit_columns(system)
    headers = ["Hour", "Closure", *(c.header for c in cols)]
    headers += [f"{short} {limits[col]}" for col, short in checks]
    headers.append("Hour result")
    ncol = len(headers)
    ws.sheet_view.showGridLines = False

    out.title("Lane-closure permit table")
    r = 2
    for label, text in (
        ("Plan", plan_title(plan)),
        ("Project", plan.meta.project),
        ("Route", plan.meta.route),
        ("Site", _site_text(plan)),
    ):
        if text:
            out.put(r, 1, label, font=BOLD)
            out.put(r, 2, text)
            r += 1
    out.put(r, 1, "Closures", font=BOLD)
    if not plan.closures:
        out.put(r, 2, "none")
        r += 1
    for i, c in enumerate(plan.closures, start=1):
        out.put(r, 2, _closure_text(i, c, plan.site.lanes))
        r += 1
    out.put(r, 1, "Limits", font=BOLD)
    out.put(r, 2, "; ".join(f"{label}: {limits[col]}" for col, label, _ in CHECKS))
    r += 2

    header_row = r
    out.header(header_row, headers, height=62)
    keep = listed_hours(result)
    idx = np.flatnonzero(keep)
    hours = [hour_label(h["hour_start"].iloc[i]) for i in idx]
    closures = hour_closures(plan, h["hour_start"].iloc[idx])
    vals = [[v[i] for i in idx] for v in _values(result, cols)]
    flags = [h[col].to_numpy()[idx] for col, _ in checks]
    first = header_row + 1
    n = len(idx)
    for k in range(n):
        ok = [bool(f[k]) for f in flags]
        ws.append(
            [
                hours[k],
                closures[k],
                *(v[k] for v in vals),
                *(PASS if x else OVER for x in ok),
                (PASS if all(ok) else OVER) if checks else "no limits",
            ]
        )
    formats = [None, None, *_number_looks([c.decimals for c in cols])]
    over_look = out.style.prepare(font=BOLD, fill=OVER_FILL, alignment=CENTRE, border=ROW_BORDER)
    looks = {
        (band, failing): [
            out.style.prepare(
                number_format=f,
                fill=band,
                font=BOLD if failing and j == 0 else None,
                alignment=CENTRE if j == 1 else None,
                border=ROW_BORDER,
            )
            for j, f in enumerate(formats)
        ]
        + [out.style.prepare(fill=band, alignment=CENTRE, border=ROW_BORDER)]
        * (ncol - len(formats))
        for band in (None, BAND_FILL)
        for failing in (False, True)
    }
    last = first + n - 1
    for k, row in enumerate(ws.iter_rows(min_row=first, max_row=last, max_col=ncol)):
        row_looks = looks[(BAND_FILL if k % 2 else None, row[-1].value == OVER)]
        for apply, cell in zip(row_looks, row, strict=True):
            (over_look if cell.value == OVER else apply)(cell)
    for k in range(PERMIT_ROWS_PER_PAGE, n, PERMIT_ROWS_PER_PAGE):
        ws.row_breaks.append(Break(id=first + k - 1))

    r = max(last, header_row) + 2
    if n == 0:
        out.put(header_row + 1, 1, "No closure hours and no queue in the demand period.")
        r = header_row + 3
    hidden = int((~keep).sum())
    if hidden:
        out.put(
            r,
            1,
            f"{hidden} open-road hours without a queue are not listed; "
            "the Results sheet lists every hour.",
            font=SMALL,
        )
        r += 1
    failing = len(result.summary.hours_failing)
    out.put(r, 1, f"Hours over a limit: {failing} of {len(h)}.", font=BOLD)
    r += 1
    for warning in result.warnings:
        out.put(r, 1, f"Warning: {warning}", font=SMALL)
        r += 1
    out.caution(r, ncol)
    r += 1
    out.put(r, 1, stamp, font=SMALL)
    r += 2
    out.put(r, 1, "Prepared by", font=BOLD)
    out.put(r, 7, "Checked by", font=BOLD)
    for j in (3, 4, 5, 9, 10, 11):
        out.style(ws.cell(r, j), border=ROW_BORDER)
    out.put(r, 3, plan.meta.prepared_by or None, border=ROW_BORDER)
    out.put(r, 9, plan.meta.checked_by or None, border=ROW_BORDER)
    widths = [21, 8.5, *(header_width(c.header, 7.5 if k == 0 else 11) for k, c in enumerate(cols))]
    widths += [header_width(h, 11.5, max_lines=4) for h in headers[len(widths) : -1]]
    out.widths([*widths, 10])
    print_setup(ws, plan, f"A1:{get_column_letter(ncol)}{r}", header_row)
    sources = ["hour", "closure_no", *(c.source for c in cols), *(c for c, _ in checks), "result"]
    return TableRef(
        ws.title, header_row, first, last, {s: j for j, s in enumerate(sources, start=1)}
    )


def write_summary_sheet(out: SheetWriter, result: Result) -> None:
    """Headline figures, limits, closures, warnings and the caution."""
    ws = out.ws
    plan = result.plan
    ws.sheet_view.showGridLines = False
    out.title(f"Summary: {plan_title(plan)}")
    r = 2
    for label, text in (
        ("Project", plan.meta.project),
        ("Route", plan.meta.route),
        ("Site", _site_text(plan)),
    ):
        if text:
            out.put(r, 1, label, font=BOLD)
            out.put(r, 2, text)
            r += 1
    r += 1
    out.put(r, 1, "Results", font=SECTION_FONT)
    r += 1
    for label, text in summary_lines(result):
        out.put(r, 1, label)
        out.put(r, 2, text, font=BOLD)
        r += 1
    r += 1
    out.put(r, 1, "Limits", font=SECTION_FONT)
    r += 1
    limits = _limit_texts(plan)
    for col, label, _ in CHECKS:
        out.put(r, 1, label)
        out.put(r, 2, limits[col])
        r += 1
    r += 1
    out.put(r, 1, "Closures", font=SECTION_FONT)
    r += 1
    out.header(r, ["No.", "Start", "End", "Lanes closed", "Lanes open", "Barrier", "Note"], None)
    r += 1
    if not plan.closures:
        out.put(r, 1, "none")
        r += 1
    for i, c in enumerate(plan.closures, start=1):
        out.put(r, 1, i, alignment=CENTRE)
        out.put(r, 2, c.start, number_format=DATE_FORMAT, alignment=CENTRE)
        out.put(r, 3, c.end, number_format=DATE_FORMAT, alignment=CENTRE)
        out.put(r, 4, c.lanes_closed, alignment=CENTRE)
        out.put(r, 5, plan.site.lanes - c.lanes_closed, alignment=CENTRE)
        out.put(r, 6, layout.word_for(layout.BARRIER_WORDS, c.barrier))
        out.put(r, 7, c.note or None)
        r += 1
    r += 1
    out.put(r, 1, "Warnings", font=SECTION_FONT)
    r += 1
    for warning in result.warnings or ["none"]:
        out.put(r, 1, warning)
        r += 1
    if plan.meta.notes:
        r += 1
        out.put(r, 1, "Notes", font=SECTION_FONT)
        out.put(r + 1, 1, plan.meta.notes)
        r += 2
    r += 1
    out.caution(r, 7)
    out.widths([30, 22, 22, 12, 11, 16, 40])
    print_setup(ws, plan, f"A1:G{r}", landscape=False)


def write_run_log(
    out: SheetWriter,
    result: Result,
    *,
    source: str,
    fingerprint: str,
    run_time: str,
    notes: Sequence[str] = (),
) -> None:
    """Tool version, run time, source file, input fingerprint, warnings, notes on the run
    (e.g. that the results went to a copy of the workbook)."""
    ws = out.ws
    plan = result.plan
    d = plan.demand
    ws.sheet_view.showGridLines = False
    out.title("Run log")
    out.put(2, 1, "The latest run; each run replaces this sheet.", font=SMALL)
    rows: list[tuple[str, Any]] = [
        ("Tool", f"wzq {wzq.__version__}"),
        ("Run at (UTC)", run_time),
        ("Source file", source or None),
        ("Input fingerprint (SHA-256)", fingerprint),
        ("Plan", plan_title(plan)),
        ("Demand period", f"{hour_label(d.start)} to {hour_label(d.end)}"),
        ("Hours analysed", len(result.hourly)),
        ("Closures", len(plan.closures)),
        ("Hours over a limit", len(result.summary.hours_failing)),
        ("Warnings", len(result.warnings)),
    ]
    r = 3
    for label, value in rows:
        out.put(r, 1, label, font=BOLD)
        out.put(r, 2, value, alignment=LEFT)
        r += 1
    for warning in result.warnings:
        out.put(r, 2, warning)
        r += 1
    for note in notes:
        out.put(r, 1, "Note", font=BOLD)
        out.put(r, 2, note)
        r += 1
    r += 1
    out.caution(r, 2)
    out.widths([30, 100])
    print_setup(ws, plan, f"A1:B{r}", landscape=False)


# --- the whole write-back ---------------------------------------------------------------


def _windows_sheet(book: Workbook, result: Result, wanted: bool) -> None:
    """The allowable closure hours of each configuration on this plan's demand."""
    if not wanted:
        put_text(
            book[layout.WINDOWS],
            1,
            1,
            "Allowable closure hours were not computed in this run: set 'Closure windows "
            "sheet' to yes on the Limits sheet, or run `wzq run PLAN --windows`.",
        )
        return
    from wzq.engine.windows import plan_windows, too_long, too_long_text
    from wzq.io.workbook.windows_sheet import write_windows_sheet

    d = result.plan.demand
    if too_long(d):  # a long plan runs; its windows are left out, and the sheet says why
        where = result.plan.where("options.closure_windows")
        option = f"'Closure windows sheet' ({where}) to no, or run `wzq run PLAN --no-windows`"
        put_text(
            book[layout.WINDOWS], 1, 1, too_long_text(len(d.flows_veh_h), d.interval_s, option)
        )
        return
    # replaces the empty sheet made by _replace_sheets, at the same position
    write_windows_sheet(book, plan_windows(result.plan), result.plan)


def utc_now() -> str:
    """The current time in UTC, ISO 8601 to the second (``2027-05-03T21:00:00Z``)."""
    return dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def write_results(
    book: Workbook,
    result: Result,
    *,
    source: str = "",
    run_time: str | None = None,
    notes: Sequence[str] = (),
    windows: bool | None = None,
) -> dict[str, TableRef]:
    """Replace wzq's output sheets in ``book`` with the sheets for ``result``.

    Touches nothing else: no input cell, style, name or sheet of the user's.
    ``run_time`` (UTC, ISO 8601) defaults to now; ``notes`` go to the Run log;
    ``windows`` fills the Closure windows sheet (``None``: as the plan's options say).
    Returns where the Results and Permit tables sit.
    """
    from wzq.io.workbook.charts import write_charts  # charts import the table layout from here

    check_output_sheets(book)
    run_time = run_time or utc_now()
    fingerprint = input_fingerprint(result.plan)
    stamp = (
        f"Computed by wzq {wzq.__version__} at {run_time}"
        + (f" from {source}" if source else "")
        + f"; input fingerprint {fingerprint[:16]}."
    )
    sheets = _replace_sheets(book)
    style = Styler()
    out = {name: SheetWriter(ws, style) for name, ws in sheets.items()}
    refs = {RESULTS: write_results_sheet(out[RESULTS], result)}
    write_summary_sheet(out[SUMMARY], result)
    write_charts(out[CHARTS], result, refs[RESULTS])
    refs[PERMIT] = write_permit_sheet(out[PERMIT], result, stamp)
    write_run_log(
        out[RUN_LOG],
        result,
        source=source,
        fingerprint=fingerprint,
        run_time=run_time,
        notes=notes,
    )
    _windows_sheet(
        book, result, result.plan.options.closure_windows if windows is None else windows
    )
    _select(book, sheets[SUMMARY])
    return refs
