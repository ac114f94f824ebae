"""The risk of breaking the limits in the workbook, when the plan gives a count history
(or a spread of the work-zone capacity): extra columns on the Results and Permit
table sheets, a section on the Summary sheet with the method, and a fan chart of
the longest queue's percentiles by hour on the Charts sheet (a native chart over
cells, so it stays live and the Recalculate button rebuilds it in Excel).

Nothing here runs the engine: :func:`wzq.engine.risk.assess` did, and
:mod:`wzq.present.risk` words and rounds what it found. Each function adds to a
sheet its own module has written (:mod:`~wzq.io.workbook.results_sheet`,
:mod:`~wzq.io.workbook.permit_sheet`, :mod:`~wzq.io.workbook.summary_sheet`,
:mod:`~wzq.io.workbook.charts`), to the right of its table or below its last
printed row, and widens its print area to match.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pandas as pd
from openpyxl.chart import AreaChart, LineChart, Reference
from openpyxl.chart.axis import ChartLines
from openpyxl.utils import get_column_letter
from openpyxl.utils.cell import range_boundaries
from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.worksheet import Worksheet

from wzq import units as u
from wzq.engine.results import Result
from wzq.engine.risk import RiskResult
from wzq.io.workbook import charts as C
from wzq.io.workbook import writer as w
from wzq.present.risk import (
    any_interval_text,
    risk_columns,
    risk_method,
    risk_summary_lines,
    risk_values,
)
from wzq.present.tables import MAX_PANELS, Column, rounded

__all__ = [
    "BAND_COLOURS",
    "CONTEXT_HOURS",
    "DESIGN_COLOUR",
    "FAN_COL",
    "FAN_HEIGHT_CM",
    "FAN_ROWS",
    "WHOLE_HOURS",
    "add_risk",
    "add_risk_to_permit",
    "add_risk_to_results",
    "add_risk_to_summary",
    "fan_chart",
    "fan_spans",
    "place_fan_charts",
    "risk_note",
]

#: First column of the fan chart's data block on the Charts sheet (after the others).
FAN_COL = C.CUM_COL + 5
#: Characters of text on one printed line of the Summary sheet: a value (columns B-G),
#: a line of the method (A-G).
SUMMARY_VALUE_CHARS = 100
SUMMARY_LINE_CHARS = 130
#: Longest plan drawn as one fan chart (hours); longer ones get a chart per closure.
WHOLE_HOURS = 48
#: Height of a fan chart (the full printed width) and the rows it takes with a gap.
FAN_HEIGHT_CM = 7.0
FAN_ROWS = 15
#: Hours drawn before each closure's chart starts, and after its queues have cleared.
CONTEXT_HOURS = 2
#: Fills of the fan, from the median band (darkest) out to the 95th percentile (palest).
BAND_COLOURS = ("8C3B37", "C98A84", "EBCFCB")
#: The design demand's own longest queue, drawn over the fan.
DESIGN_COLOUR = "1F3A4D"


def _print_area(ws: Worksheet) -> tuple[int, int, int, int]:
    """(min_col, min_row, max_col, max_row) of the sheet's print area."""
    area = ws.print_area[0] if isinstance(ws.print_area, list) else ws.print_area
    return range_boundaries(area.split("!")[-1].replace("$", ""))


def _set_print_area(ws: Worksheet, min_col: int, min_row: int, max_col: int, max_row: int) -> None:
    ws.print_area = f"{get_column_letter(min_col)}{min_row}:{get_column_letter(max_col)}{max_row}"


def _add_columns(
    out: w.SheetWriter,
    table: w.TableRef,
    columns: list[Column],
    values: list[list],
    rows: np.ndarray,
    *,
    width: float = 11.5,
) -> int:
    """Write ``columns`` to the right of ``table``, one value per row of ``rows`` (the
    indices of the hours the table lists); returns the last column written."""
    ws = out.ws
    first_col = max(table.columns.values()) + 1
    looks = [
        out.style.prepare(
            number_format=w.NUMBER_FORMATS.get(c.decimals) if c.decimals is not None else None,
            fill=fill,
        )
        for c in columns
        for fill in (None, w.BAND_FILL)
    ]
    for j, col in enumerate(columns):
        c = first_col + j
        out.put(
            table.header_row, c, col.header,
            fill=w.HEADER_FILL, font=w.HEADER_FONT, alignment=w.HEADER_ALIGN,
            border=w.HEADER_BORDER,
        )  # fmt: skip
        for k, i in enumerate(rows):
            v = values[j][i]
            cell = w.put_text(ws, table.first_row + k, c, v)
            looks[2 * j + (k % 2)](cell)
            if isinstance(v, float) and col.decimals is not None and round(v, col.decimals) != v:
                cell.number_format = "General"  # a rare chance's digits (share_digits)
            w.align_unknown(cell)
        table.columns[col.source] = c
        ws.column_dimensions[get_column_letter(c)].width = w.header_width(col.header, width, 4)
    return first_col + len(columns) - 1


def risk_note(risk: RiskResult) -> str:
    """What the risk columns are, in one line, beside them."""
    level = f"{risk.options.confidence:.0%}"
    return (
        f"Chance: the share of {len(risk.runs):,} equally likely scenarios in which the hour "
        f"breaks a limit, with its {level} Clopper-Pearson interval; queue percentiles over the "
        "same scenarios. The Summary sheet states the method."
    )


def add_risk_to_results(out: w.SheetWriter, risk: RiskResult, table: w.TableRef) -> None:
    """The per-hour risk columns at the right of the Results table (every hour)."""
    ws = out.ws
    system = risk.plan.site.unit_system
    cols = risk_columns(risk, system)
    n = len(risk.hourly)
    last_col = _add_columns(out, table, cols, risk_values(risk, cols), np.arange(n))
    # above the new columns (rows 1-3 hold the title, the site and the units), ending at
    # the last of them so that it prints: right-aligned text runs to the left
    out.put(2, last_col, risk_note(risk), font=w.SMALL, alignment=w.RIGHT)
    if n:
        ws.auto_filter.ref = f"A{table.header_row}:{get_column_letter(last_col)}{table.last_row}"
    c0, r0, _, r1 = _print_area(ws)
    _set_print_area(ws, c0, r0, last_col, r1)


def add_risk_to_permit(
    out: w.SheetWriter, risk: RiskResult, result: Result, table: w.TableRef
) -> None:
    """The risk of each listed hour at the right of the permit table: the chance over each
    limit, over any limit with its interval, and the 85th and 95th percentiles of the
    longest queue; a line below the table says what they are."""
    ws = out.ws
    system = risk.plan.site.unit_system
    rows = np.flatnonzero(w.listed_hours(result))
    every = risk_columns(risk, system)
    by_source = {c.source: c for c in every}
    shares = [
        c for c in every if c.source.startswith("p_") and c.source[-4:] not in ("_low", "high")
    ]
    shares = [c for c in shares if c.source != "p_any"]
    queues = [by_source[s] for s in ("queue_length_p85_m", "queue_length_p95_m") if s in by_source]
    level = f"{risk.options.confidence:.0%}"
    any_col = Column(f"Chance over any limit ({level} interval)", "p_any_text", None)
    cols = [*shares, any_col, *queues]
    values = risk_values(risk, [*shares, *queues])
    texts = [any_interval_text(risk, i) for i in range(len(risk.hourly))]
    values = [*values[: len(shares)], texts, *values[len(shares) :]]
    last_col = _add_columns(out, table, cols, values, rows)
    for k in range(len(rows)):  # the interval text reads better centred
        ws.cell(table.first_row + k, table.columns["p_any_text"]).alignment = w.CENTRE
    ws.column_dimensions[get_column_letter(table.columns["p_any_text"])].width = 19
    # the row below the table is blank; with no hour listed, the one below its message
    below = table.last_row + 1 if len(rows) else table.header_row + 2
    out.put(below, 1, risk_note(risk), font=w.SMALL)
    c0, r0, _, r1 = _print_area(ws)
    _set_print_area(ws, c0, r0, last_col, r1)


def add_risk_to_summary(out: w.SheetWriter, risk: RiskResult) -> None:
    """A section on the Summary sheet: the headline risk and how it was found."""
    ws = out.ws
    c0, r0, c1, r1 = _print_area(ws)
    r = r1 + 2
    out.put(r, 1, "Risk of breaking the limits", font=w.SECTION_FONT)
    r += 1
    for label, text in risk_summary_lines(risk, risk.plan.site.unit_system):
        out.put(r, 1, label)
        for piece in w.wrapped_lines(text, SUMMARY_VALUE_CHARS):
            out.put(r, 2, piece, font=w.BOLD)
            r += 1
    r += 1
    out.put(r, 1, "Method", font=w.BOLD)
    r += 1
    for line in risk_method(risk):
        for k, piece in enumerate(w.wrapped_lines(line, SUMMARY_LINE_CHARS)):
            out.put(r, 1, piece if k == 0 else f"   {piece}")
            r += 1
    _set_print_area(ws, c0, r0, c1, r)


def fan_spans(risk: RiskResult) -> list[tuple[int, int]]:
    """The hours each fan chart covers, ``[first, stop)`` as hour indices.

    A plan of up to :data:`WHOLE_HOURS` hours (or with no closure) gets one chart of
    the whole period; a longer one a chart per closure, from
    :data:`CONTEXT_HOURS` hours before it starts until its queues have cleared in
    every scenario (at most until the next closure starts) plus as many again,
    spans that touch merged; at most :data:`wzq.present.tables.MAX_PANELS`, the
    ones with the longest 95th-percentile queue.
    """
    h = risk.hourly
    n = len(h)
    plan = risk.plan
    if n <= WHOLE_HOURS or not plan.closures:
        return [(0, n)]
    start = plan.demand.start
    hour = dt.timedelta(hours=1)
    p95 = h["queue_length_p95_m"].to_numpy()
    firsts = sorted(int((c.start - start) // hour) for c in plan.closures)
    ends = sorted(int(-((start - c.end) // hour)) for c in plan.closures)
    spans: list[list[int]] = []
    for k, (a, e) in enumerate(zip(firsts, ends, strict=True)):
        limit = firsts[k + 1] if k + 1 < len(firsts) else n
        stop = max(e, a + 1)
        while stop < limit and not p95[stop] <= 0:  # a queue, or one not known (NaN)
            stop += 1
        span = [max(0, a - CONTEXT_HOURS), min(n, stop + CONTEXT_HOURS)]
        if spans and span[0] <= spans[-1][1]:
            spans[-1][1] = max(spans[-1][1], span[1])
        else:
            spans.append(span)
    if len(spans) > MAX_PANELS:
        peaks = [float(np.nan_to_num(p95[a:b], nan=np.inf).max()) for a, b in spans]
        keep = sorted(np.argsort(peaks, kind="stable")[::-1][:MAX_PANELS])
        spans = [spans[i] for i in keep]
    return [(a, b) for a, b in spans]


def _fan_data(
    out: w.SheetWriter, risk: RiskResult, design: Result, span: tuple[int, int], row: int
) -> tuple[str, int, int, int]:
    """One fan chart's data block from ``row``: a title, then hour labels, the three
    bands, the design demand's longest queue and the limit. Returns the title, the
    header row, the last data row and the next free row."""
    ws = out.ws
    plan = risk.plan
    long_m = u.LONG_LENGTH[plan.site.unit_system][1]
    h = risk.hourly
    a, b = span
    limit = plan.thresholds.max_queue_length
    first_t, last_t = h["hour_start"].iloc[a], h["hour_start"].iloc[b - 1]
    title = (
        f"{first_t:%a %Y-%m-%d %H:%M} to {last_t + pd.Timedelta(hours=1):%a %H:%M}"
        if (a, b) != (0, len(h))
        else "The whole period"
    )
    out.put(row, FAN_COL, title, font=w.BOLD)
    head = row + 1
    heads = [
        "Hour",
        "Median",
        "To the 85th percentile",
        "To the 95th percentile",
        "Design demand",
    ] + (["Queue-length limit"] if limit is not None else [])
    for j, text in enumerate(heads):
        out.put(head, FAN_COL + j, text, font=w.BOLD, alignment=w.HEADER_ALIGN)
    ws.row_dimensions[head].height = 32
    q = [h[f"queue_length_p{p}_m"].to_numpy() / long_m for p in (50, 85, 95)]
    own = design.hourly["queue_length_max_m"].to_numpy() / long_m
    fmt = "%H:%M" if b - a <= 24 else "%a %H:%M"
    number = out.style.prepare(number_format=w.NUMBER_FORMATS[2])
    if limit is not None:  # every decimal of the limit, so its line is drawn where it is
        limit_value, look = C.limit_cell(limit / long_m)
        limit_number = out.style.prepare(number_format=look)
    skip = C.tick_hours(b - a)
    for k, i in enumerate(range(a, b)):
        r = head + 1 + k
        if k % skip == 0:
            out.put(r, FAN_COL, h["hour_start"].iloc[i].strftime(fmt))
        p50, p85, p95 = (rounded(float(x[i]), 2) for x in q)
        bands = (p50, round(p85 - p50, 2), round(p95 - p85, 2), rounded(float(own[i]), 2))
        for j, v in enumerate(bands, start=1):
            if not math.isnan(v):  # a percentile not known: left blank, a gap in the chart
                number(ws.cell(r, FAN_COL + j, v))
        if limit is not None:
            limit_number(ws.cell(r, FAN_COL + 5, limit_value))
    last = head + (b - a)
    return title, head, last, last + 2


def fan_chart(
    out: w.SheetWriter, risk: RiskResult, design: Result, span: tuple[int, int], row: int
) -> tuple[AreaChart, int]:
    """One fan chart over the hours ``span``, its data from ``row`` of the data block:
    the median, 85th and 95th percentiles of the longest queue by hour as stacked bands,
    the design demand's own longest queue and the agency's queue-length limit as lines.
    Returns the chart and the next free row of the data block."""
    ws = out.ws
    plan = risk.plan
    long_name = u.LONG_LENGTH[plan.site.unit_system][0]
    title, head, last, next_row = _fan_data(out, risk, design, span, row)
    chart = AreaChart()
    chart.grouping = "stacked"
    chart.title = C.small_title(title)
    chart.add_data(
        Reference(ws, min_col=FAN_COL + 1, max_col=FAN_COL + 3, min_row=head, max_row=last),
        titles_from_data=True,
    )
    cats = Reference(ws, min_col=FAN_COL, min_row=head + 1, max_row=last)
    chart.set_categories(cats)
    for s, colour in zip(chart.series, BAND_COLOURS, strict=True):
        s.graphicalProperties.solidFill = colour
        s.graphicalProperties.line.solidFill = colour
    lines = LineChart()
    lines.add_data(
        Reference(ws, min_col=FAN_COL + 4, min_row=head, max_row=last), titles_from_data=True
    )
    C._line(lines.series[0], DESIGN_COLOUR, 1.5)
    if plan.thresholds.max_queue_length is not None:
        lines.add_data(
            Reference(ws, min_col=FAN_COL + 5, min_row=head, max_row=last), titles_from_data=True
        )
        C._line(lines.series[1], C.LIMIT_COLOUR, 1.5, "dash")
    lines.set_categories(cats)
    chart += lines
    skip = C.tick_hours(last - head)
    chart.x_axis.tickLblSkip = skip
    chart.x_axis.tickMarkSkip = skip
    chart.x_axis.title = "Hour starting"
    chart.y_axis.title = f"Longest queue ({long_name})"
    chart.y_axis.number_format = "0.00"
    chart.y_axis.majorGridlines = ChartLines()
    chart.y_axis.scaling.min = 0
    C._style_axes(chart)
    chart.width = C.CHART_WIDTH_CM
    chart.height = FAN_HEIGHT_CM
    chart.legend.position = "r"
    return chart, next_row


def place_fan_charts(out: w.SheetWriter, risk: RiskResult, design: Result) -> None:
    """The fan charts on a printed page of their own below the Charts sheet's charts,
    two abreast, with a heading and what they show; the print area is extended to
    take them in."""
    ws = out.ws
    c0, r0, c1, r1 = _print_area(ws)
    ws.row_breaks.append(Break(id=r1))
    r = r1 + 2
    n = len(risk.runs)
    out.put(r, 1, f"Risk: the longest queue by hour over {n:,} scenarios", font=w.SECTION_FONT)
    spans = fan_spans(risk)
    lines = [
        "Darkest band: the longest queue in half of the scenarios is at most its top; with "
        "the middle band, in 85 %; with the palest, in 95 %.",
        "Solid line: the design demand's own longest queue (Results sheet); dashed: the "
        "agency's queue-length limit."
        + (" One chart per closure, from 2 hours before it." if len(spans) > 1 else ""),
    ]
    unknown = np.flatnonzero(np.isnan(risk.hourly["queue_length_p95_m"].to_numpy(float)))
    if len(unknown):
        first = risk.hourly["hour_start"].iloc[int(unknown[0])]
        lines.append(
            f"No band in {len(unknown)} hours from {first:%a %Y-%m-%d %H:%M}: a percentile "
            "there is not known, as some scenarios hold traffic beyond the approach (Summary "
            "sheet, method)."
        )
    for k, line in enumerate(lines, start=1):
        out.put(r + k, 1, line, font=w.SMALL)
    top = r + len(lines) + 1
    data_row = C.DATA_HEADER_ROW
    for k, span in enumerate(spans):
        chart, data_row = fan_chart(out, risk, design, span, data_row)
        ws.add_chart(chart, f"A{top + k * FAN_ROWS}")
    ws.column_dimensions[get_column_letter(FAN_COL)].width = 12
    for k in range(1, 6):
        ws.column_dimensions[get_column_letter(FAN_COL + k)].width = 13
    bottom = top + len(spans) * FAN_ROWS
    _set_print_area(ws, c0, r0, c1, bottom)


def add_risk(
    out: dict[str, w.SheetWriter], risk: RiskResult, result: Result, refs: dict[str, w.TableRef]
) -> None:
    """Every place the risk shows in the workbook: the Results and Permit table columns,
    the Summary section and the fan chart on the Charts sheet."""
    add_risk_to_results(out[w.RESULTS], risk, refs[w.RESULTS])
    add_risk_to_permit(out[w.PERMIT], risk, result, refs[w.PERMIT])
    add_risk_to_summary(out[w.SUMMARY], risk)
    place_fan_charts(out[w.CHARTS], risk, result)
