"""The "Closure windows" sheet: allowed closure hours per lane configuration.

Written from a :class:`wzq.engine.windows.WindowsResult`: a title block with the
caution line, the limits and the cost basis; an hours table (one row per
configuration and day, one column per hour of the day, ``yes`` / ``part`` /
``no``); a native column chart of the days on which each hour may be closed,
by configuration; the longest windows and, when a duration is given, every
feasible start, each with the delay it adds and its road-user cost.

The sheet is replaced on every run (same position in the workbook); no other
sheet is touched. Text that came from the user is written as text, never as a
formula.
"""

from __future__ import annotations

from typing import Any

from openpyxl.chart import BarChart, Reference, Series
from openpyxl.chart.data_source import StrRef
from openpyxl.chart.series import SeriesLabel
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.worksheet import Worksheet

import wzq
from wzq.engine import costs as rc
from wzq.engine.plan import Plan
from wzq.engine.windows import (
    HOUR_COLUMNS,
    Window,
    WindowsResult,
    day_rows,
    days_allowed_counts,
    feasible_window_list,
    longest_window_list,
)
from wzq.io.workbook import layout
from wzq.io.workbook.writer import Styler, print_setup, put_text
from wzq.present.tables import limits_text, window_counts, windows_listed_text

__all__ = [
    "CAUTION_FILL",
    "CAUTION_FONT",
    "CHART_HEIGHT_CM",
    "CHART_ROWS",
    "CHART_WIDTH_CM",
    "DATETIME_FORMAT",
    "HEADER_FILL",
    "HEADER_FONT",
    "HOUR_COL_WIDTH",
    "NOTE_FONT",
    "PAGE_ROWS",
    "SECTION_FONT",
    "SERIES_COLOURS",
    "SHEET",
    "STATE_FILLS",
    "STATE_WORDS",
    "TITLE_FONT",
    "WINDOW_FIELDS",
    "WINDOW_FIELDS_ONE_DAY_TYPE",
    "Pages",
    "write_windows_sheet",
]

SHEET = "Closure windows"

#: Words and fills of the hours table (our own look).
STATE_WORDS = {"whole": "yes", "part": "part", "no": "no", "none": ""}
STATE_FILLS = {"whole": "BFE3CF", "part": "F5DFA8", "no": "E3E3E3", "none": "FFFFFF"}
#: Column colours of the chart, one per configuration (cycled).
SERIES_COLOURS = ("2E6B57", "C07A2C", "4F6D8A", "8A4F6D", "6D8A4F", "5F5F5F", "A05A2C")

DATETIME_FORMAT = "ddd yyyy-mm-dd hh:mm"
HOUR_COL_WIDTH = 5.0
CHART_WIDTH_CM = 24.0
CHART_HEIGHT_CM = 9.0
CHART_ROWS = 19


def _hex(key: str, default: str) -> str:
    return layout.COLOURS.get(key, default).lstrip("#")


HEADER_FILL = PatternFill("solid", fgColor=_hex("header_fill", "1F3A4D"))
HEADER_FONT = Font(bold=True, color=_hex("header_text", "FFFFFF"))
TITLE_FONT = Font(bold=True, size=14, color=_hex("title", "1F3A4D"))
SECTION_FONT = Font(bold=True, size=12, color=_hex("section_text", "1F3A4D"))
NOTE_FONT = Font(italic=True, color=_hex("note_text", "5F6B73"))
CAUTION_FILL = PatternFill("solid", fgColor=_hex("caution_fill", "FBE3D6"))
CAUTION_FONT = Font(bold=True, color=_hex("caution_text", "7A2E0E"))
# made once: a cell's look is given through a Styler, which shares one style record per
# kind of cell (making a Font, Fill or Alignment per cell is most of a sheet's cost)
_BOLD = Font(bold=True)
_CENTRE = Alignment(horizontal="center")
_HEADER_ALIGN = Alignment(horizontal="center", vertical="center", wrap_text=True)
_STATE_FILL = {state: PatternFill("solid", fgColor=colour) for state, colour in STATE_FILLS.items()}


def _header(ws: Worksheet, style: Styler, row: int, texts: list[str], first_col: int = 1) -> None:
    for i, text in enumerate(texts):
        cell = put_text(ws, row, first_col + i, text)
        style(cell, fill=HEADER_FILL, font=HEADER_FONT, alignment=_HEADER_ALIGN)


def _fresh_sheet(wb: Workbook) -> Worksheet:
    if SHEET in wb.sheetnames:
        index = wb.sheetnames.index(SHEET)
        wb.remove(wb[SHEET])
        return wb.create_sheet(SHEET, index)
    return wb.create_sheet(SHEET)


#: Windows tables: (heading, first column, last column) of each field; wide fields span
#: several of the narrow hour columns. The day type is shown only when the demand has
#: more than one (with one, it is the whole period, named once above the tables).
WINDOW_FIELDS = (
    ("Configuration", 1, 1),
    ("Day type", 2, 2),
    ("Start", 3, 6),
    ("End", 7, 10),
    ("Length (h)", 11, 12),
    ("Added delay (veh-h)", 13, 15),
    ("Road-user cost", 16, 19),
)
WINDOW_FIELDS_ONE_DAY_TYPE = (
    ("Configuration", 1, 1),
    ("Start", 2, 2),
    ("End", 3, 6),
    ("Length (h)", 7, 8),
    ("Added delay (veh-h)", 9, 11),
    ("Road-user cost", 12, 15),
)

#: Rows on a printed page (landscape, one page wide; LibreOffice fits about 60 of the
#: sheet's rows at the scale the 26 columns need, so this leaves room for the footer).
PAGE_ROWS = 50


class Pages:
    """Where the printed pages of a sheet break: a manual break before a block that
    would not fit on the current page, and before a table row that would not, with
    the table's header written again at the top of the new page."""

    def __init__(self, ws: Worksheet, style: Styler) -> None:
        self.ws = ws
        self.style = style
        self.top = 1  # first row of the current page

    def room(self, row: int) -> int:
        return PAGE_ROWS - (row - self.top)

    def keep(self, row: int, rows: int) -> None:
        """Start a new page at ``row`` unless ``rows`` rows fit on this one."""
        if rows > self.room(row) and row > self.top:
            self.ws.row_breaks.append(Break(id=row - 1))
            self.top = row


def _span_cells(ws: Worksheet, row: int, first: int, last: int) -> None:
    if last > first:
        ws.merge_cells(start_row=row, start_column=first, end_row=row, end_column=last)


def _window_header(
    ws: Worksheet, style: Styler, row: int, fields: tuple, currency: str, year: int
) -> None:
    for text, first, last in fields:
        if text == "Road-user cost":
            text = f"Road-user cost ({currency} of {year})"
        _header(ws, style, row, [text], first)
        _span_cells(ws, row, first, last)
    ws.row_dimensions[row].height = 30


def _windows_block(
    ws: Worksheet,
    pages: Pages,
    row: int,
    title: str,
    windows: list[Window],
    currency: str,
    year: int,
    fields: tuple = WINDOW_FIELDS,
) -> int:
    """A table of windows from :func:`longest_window_list` / :func:`feasible_window_list`;
    next free row. Its header is repeated at the top of every printed page it runs onto."""
    pages.keep(row, min(len(windows), 5) + 3)
    put_text(ws, row, 1, title).font = SECTION_FONT
    row += 1
    _window_header(ws, pages.style, row, fields, currency, year)
    row += 1
    if not windows:
        put_text(ws, row, 1, "none").font = NOTE_FONT
        return row + 2
    names = [name for name, _, _ in fields]
    for rec in windows:
        if pages.room(row) < 1:
            pages.keep(row, PAGE_ROWS)
            _window_header(ws, pages.style, row, fields, currency, year)
            row += 1
        values: dict[str, tuple[Any, str | None]] = {
            "Configuration": (rec.configuration, None),
            "Day type": (rec.day_type, None),
            "Start": (rec.start, DATETIME_FORMAT),
            "End": (rec.end, DATETIME_FORMAT),
            "Length (h)": (round(float(rec.hours), 2), "0.00"),
            "Added delay (veh-h)": (round(float(rec.added_delay_veh_h), 1), "#,##0.0"),
            "Road-user cost": (round(float(rec.road_user_cost)), "#,##0"),
        }
        for name, (_, first, last) in zip(names, fields, strict=True):
            value, fmt = values[name]
            if fmt is None:
                put_text(ws, row, first, value)
            else:
                cell = ws.cell(row=row, column=first, value=value)
                pages.style(cell, number_format=fmt, alignment=_CENTRE)
            _span_cells(ws, row, first, last)
        row += 1
    return row + 1


def write_windows_sheet(
    wb: Workbook,
    windows_result: WindowsResult,
    plan: Plan,
    *,
    duration_h: float | None = None,
    top: int = 10,
) -> Worksheet:
    """Add (or replace) the "Closure windows" sheet of ``wb`` and return it.

    ``duration_h`` adds the table of every feasible start for a closure that
    long; ``top`` caps the longest windows listed per configuration and day type.
    """
    ws = _fresh_sheet(wb)
    style = Styler()
    result = windows_result
    costs = result.costs
    n_cols = 2 + len(HOUR_COLUMNS)

    put_text(ws, 1, 1, "Closure windows").font = TITLE_FONT
    put_text(ws, 2, 1, plan.meta.title or plan.site.name or "Lane-closure plan").font = _BOLD
    site = f"{plan.site.name}, {plan.site.direction}".strip(", ")
    put_text(ws, 3, 1, site)
    style(put_text(ws, 4, 1, wzq.CAUTION), font=CAUTION_FONT, fill=CAUTION_FILL)
    for col in range(2, n_cols + 1):
        style(ws.cell(row=4, column=col), fill=CAUTION_FILL)
    put_text(ws, 5, 1, "Limits: " + limits_text(plan))
    put_text(ws, 6, 1, result.rule).font = NOTE_FONT
    put_text(
        ws, 7, 1, "Road-user cost in " + rc.cost_basis(costs, plan.site.heavy_vehicle_share)
    ).font = NOTE_FONT
    row = 8
    for note in result.notes:
        put_text(ws, row, 1, f"Note: {note}").font = NOTE_FONT
        row += 1
    day_types = {w.day_type.name for w in result.sets}
    fields = WINDOW_FIELDS if len(day_types) > 1 else WINDOW_FIELDS_ONE_DAY_TYPE
    if len(day_types) == 1:
        put_text(ws, row, 1, f"Demand period: {next(iter(day_types))}").font = NOTE_FONT
        row += 1
    row += 1
    pages = Pages(ws, style)

    # --- hours table -------------------------------------------------------------------------
    put_text(ws, row, 1, "Hours in which a closure may be in place").font = SECTION_FONT
    row += 1
    hours_head = ["Configuration", "Day", *HOUR_COLUMNS]
    _header(ws, style, row, hours_head)
    row += 1
    for w in result.sets:
        for label, states in day_rows(w):
            if pages.room(row) < 1:
                pages.keep(row, PAGE_ROWS)
                _header(ws, style, row, hours_head)
                row += 1
            put_text(ws, row, 1, w.label)
            put_text(ws, row, 2, label)
            for h, state in enumerate(states):
                c = put_text(ws, row, 3 + h, STATE_WORDS[state])
                style(c, fill=_STATE_FILL[state], alignment=_CENTRE)
            row += 1
    put_text(
        ws,
        row,
        1,
        "yes: a closure may be in place the whole hour; part: for part of the hour; "
        "no: not allowed; blank: no demand data.",
    ).font = NOTE_FONT
    row += 2

    # --- chart of days allowed by hour --------------------------------------------------------
    counts = days_allowed_counts(result)
    pages.keep(row, 3 + len(counts) + CHART_ROWS + 2)
    put_text(ws, row, 1, "Days on which the whole hour may be closed").font = SECTION_FONT
    row += 1
    head = row
    _header(ws, style, row, ["Configuration", "Days", *HOUR_COLUMNS])
    chart = BarChart()
    for k, (label, days) in enumerate(counts):
        r = head + 1 + k
        put_text(ws, r, 1, label)
        put_text(ws, r, 2, "days")
        for h in range(len(HOUR_COLUMNS)):
            ws.cell(row=r, column=3 + h, value=int(days[h]))
        series = Series(Reference(ws, min_col=3, max_col=n_cols, min_row=r))
        series.tx = SeriesLabel(strRef=StrRef(f"'{SHEET}'!$A${r}"))
        colour = SERIES_COLOURS[k % len(SERIES_COLOURS)]
        series.graphicalProperties.solidFill = colour
        series.graphicalProperties.line.solidFill = colour
        chart.series.append(series)
    row = head + 1 + len(counts)
    chart.set_categories(Reference(ws, min_col=3, max_col=n_cols, min_row=head))
    chart.type = "col"
    chart.grouping = "clustered"
    chart.title = "Days on which a closure may be in place, by hour"
    chart.y_axis.title = "days"
    chart.x_axis.title = "hour of day"
    chart.y_axis.majorUnit = 1
    chart.y_axis.scaling.min = 0
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.width = CHART_WIDTH_CM
    chart.height = CHART_HEIGHT_CM
    ws.add_chart(chart, f"A{row + 1}")
    row += CHART_ROWS + 2

    # --- windows ------------------------------------------------------------------------------
    row = _windows_block(
        ws,
        pages,
        row,
        "Longest allowable windows"
        + (f" ({cut})" if (cut := windows_listed_text(window_counts(result), top)) else ""),
        longest_window_list(result, top=top),
        costs.currency,
        costs.dollar_year,
        fields,
    )
    if duration_h is not None:
        row = _windows_block(
            ws,
            pages,
            row,
            f"Every allowed start for a {duration_h:g}-hour closure",
            feasible_window_list(result, duration_h),
            costs.currency,
            costs.dollar_year,
            fields,
        )

    # --- layout and printing ------------------------------------------------------------------
    ws.column_dimensions["A"].width = 30
    ws.column_dimensions["B"].width = 30
    for h in range(len(HOUR_COLUMNS)):
        ws.column_dimensions[get_column_letter(3 + h)].width = HOUR_COL_WIDTH
    # one page wide, the plan's title, page numbers and wzq's version in the footer, as
    # on every other sheet wzq prints
    print_setup(ws, plan, f"A1:{get_column_letter(n_cols)}{row}")
    return ws
