"""Native spreadsheet charts for the Charts sheet (they stay live: real chart objects
that read cells, not pictures).

The charts, each with axis titles and units:

1. demand, capacity and the queue discharge rate by interval of the run (the
   demand grid split at each closure's start and end), drawn as step lines
   against the clock (they are constant within each interval);
2. longest queue by hour (columns read straight from the Results sheet), with
   the agency's queue-length limit as a line when one is set, and the landmarks
   of the approach as named lines at their distances (those the queue reached, the
   next one beyond, and the one it must not pass; :func:`landmark_lines`);
3. one chart per queue (busy period, at most :data:`wzq.present.tables.MAX_PANELS`, the
   largest): cumulative arrivals and departures against the clock, counted from
   an hour before the queue forms, the input-output diagram of deterministic
   queueing (May, *Traffic Flow Fundamentals*, 1990, ch. 11, cited from
   memory), whose vertical gap is the queue and whose enclosed area is the
   queueing delay. One chart per queue keeps a queue of a few thousand
   vehicles visible in a week of traffic (on one axis for the week the two
   curves would lie on top of each other). The instants a queue clears are
   added as points, so the curves are exact (piecewise linear between them).
   The report draws the same panels (:mod:`wzq.present.figures`).

Printed, the Charts sheet is one page wide: the first two charts on page 1, the
queue charts two abreast on the next page, and the space-time picture, when
asked for, on a page of its own (:mod:`wzq.io.workbook.pictures`).

The data the charts read that is not on the Results sheet (step points, hour
labels, limit, cumulative counts) is written as plain values to a labelled
block at the right of the Charts sheet.
"""

from __future__ import annotations

import datetime as dt
import math
from typing import TYPE_CHECKING

import numpy as np
from openpyxl.chart import BarChart, LineChart, Reference, ScatterChart, Series
from openpyxl.chart.axis import ChartLines
from openpyxl.chart.label import DataLabel, DataLabelList
from openpyxl.chart.text import RichText, Text
from openpyxl.chart.title import Title
from openpyxl.drawing.text import (
    CharacterProperties,
    Paragraph,
    ParagraphProperties,
    RegularTextRun,
    RichTextProperties,
)
from openpyxl.utils import get_column_letter
from openpyxl.utils.datetime import to_excel
from openpyxl.worksheet.pagebreak import Break

import wzq
from wzq import units as u
from wzq.engine.results import Result, clock_to_second
from wzq.io.workbook import writer as w
from wzq.present.tables import (
    Episode,
    charted_landmarks,
    episode_title,
    episode_window,
    limit_decimals,
    rounded,
    shown_episodes,
    unknown_length_text,
)

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "ARRIVALS_COLOUR",
    "CAPACITY_COLOUR",
    "CHART_ANCHORS",
    "CHART_HEIGHT_CM",
    "CHART_ROWS",
    "CHART_WIDTH_CM",
    "CONTEXT_H",
    "CUM_COL",
    "DATA_HEADER_ROW",
    "DEMAND_COLOUR",
    "DEPARTURES_COLOUR",
    "DISCHARGE_COLOUR",
    "LABEL_COL",
    "LANDMARK_COL",
    "LANDMARK_COLOUR",
    "LANDMARK_EXTRA_CM",
    "LANDMARK_EXTRA_ROWS",
    "LIMIT_COLOUR",
    "MAX_LABELS",
    "PANEL_COLUMNS",
    "PANEL_HEIGHT_CM",
    "PANEL_LABELS",
    "PANEL_ROWS",
    "PANEL_WIDTH_CM",
    "PRINT_LAST_COL",
    "QUEUES_ROW",
    "QUEUE_COLOUR",
    "STEP_COL",
    "TICK_HOURS",
    "corner_points",
    "cumulative_chart",
    "cumulative_points",
    "demand_capacity_chart",
    "episode_points",
    "label_hour",
    "landmark_lines",
    "limit_cell",
    "queue_chart",
    "small_title",
    "tick_hours",
    "write_charts",
]

#: Columns of the data block (1-based) and where the charts sit.
STEP_COL = 18  # R: time, demand, capacity, queue discharge rate
LABEL_COL = 23  # W: hour label, queue-length limit
CUM_COL = 26  # Z: per queue: time, arrivals, departures
LANDMARK_COL = 30  # AD: one column per landmark drawn on the queue-length chart
DATA_HEADER_ROW = 3
CHART_ANCHORS = ("A3", "A23")
CHART_WIDTH_CM = 25.0
CHART_HEIGHT_CM = 9.5
#: Added to the queue-length chart's height when it draws landmarks (their names and
#: legend entries), and the rows that moves the queue charts down by.
LANDMARK_EXTRA_CM = 5.5
LANDMARK_EXTRA_ROWS = 11
#: Rows a chart covers at the default row height, and the last printed column.
CHART_ROWS = 19
PRINT_LAST_COL = "O"
#: The queue charts: a heading on this row (a new printed page), then two abreast.
QUEUES_ROW = 43
PANEL_COLUMNS = ("A", "H")
PANEL_WIDTH_CM = 12.2
PANEL_HEIGHT_CM = 8.6
PANEL_ROWS = 18
#: Hours of traffic drawn either side of a queue (as in the report).
CONTEXT_H = 1.0
#: Most labels on the time axis of a queue chart (half a page wide).
PANEL_LABELS = 5

DEMAND_COLOUR = "4F7CAC"
CAPACITY_COLOUR = "2F3E4C"
DISCHARGE_COLOUR = "7A8A99"
QUEUE_COLOUR = "B85450"
LIMIT_COLOUR = "000000"
LANDMARK_COLOUR = "5E6B3A"
ARRIVALS_COLOUR = "4F7CAC"
DEPARTURES_COLOUR = "C07A2C"


#: Hours between labelled ticks on a time axis, the smallest giving at most
#: :data:`MAX_LABELS` labels.
TICK_HOURS = (1, 2, 3, 4, 6, 12, 24, 48, 168)
MAX_LABELS = 8


def tick_hours(hours: float, most: int = MAX_LABELS) -> int:
    """Hours between labels so that an axis of ``hours`` carries at most ``most``."""
    return next((s for s in TICK_HOURS if hours / s <= most), math.ceil(hours / most))


def _time_axis(
    chart: ScatterChart, start: dt.datetime, end: dt.datetime, most: int = MAX_LABELS
) -> None:
    """An x axis of clock times from ``start`` to ``end`` with a readable tick step."""
    hours = (end - start).total_seconds() / 3600.0
    chart.x_axis.scaling.min = to_excel(start)
    chart.x_axis.scaling.max = to_excel(end)
    chart.x_axis.majorUnit = tick_hours(hours, most) / 24
    chart.x_axis.number_format = "hh:mm" if hours <= 24 else "ddd hh:mm"
    chart.x_axis.majorGridlines = ChartLines()
    chart.x_axis.title = "Time (local clock)"


def _style_axes(chart) -> None:
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.legend.position = "b"
    chart.width = CHART_WIDTH_CM
    chart.height = CHART_HEIGHT_CM


def _line(series: Series, colour: str, width_pt: float, dash: str | None = None) -> None:
    series.marker.symbol = "none"
    series.smooth = False
    line = series.graphicalProperties.line
    line.solidFill = colour
    line.width = int(width_pt * 12700)  # EMU
    if dash:
        line.dashStyle = dash


def small_title(text: str, points: float = 11.0) -> Title:
    """A chart title in ``points`` bold (the default 14 points wraps a queue's title in a
    chart half a page wide)."""
    run = RegularTextRun(t=text, rPr=CharacterProperties(sz=int(points * 100), b=True))
    para = Paragraph(pPr=ParagraphProperties(defRPr=CharacterProperties(sz=int(points * 100))),
                     r=[run])  # fmt: skip
    return Title(tx=Text(rich=RichText(p=[para])), overlay=False)


def _header(out: w.SheetWriter, col: int, texts: list[str]) -> None:
    for j, text in enumerate(texts):
        out.put(DATA_HEADER_ROW, col + j, text, font=w.BOLD, alignment=w.HEADER_ALIGN)
    out.ws.row_dimensions[DATA_HEADER_ROW].height = 32


def demand_capacity_chart(out: w.SheetWriter, result: Result) -> ScatterChart:
    """Demand, capacity and queue discharge rate per interval of the run (the demand
    grid split at every closure's start and end) as step lines, as the engine used
    them: an hourly average would hide a 15-minute peak above capacity, or a closure
    from half past the hour."""
    ws = out.ws
    run = result.run  # numpy arrays per interval (no pandas: a run need not import it)
    start = result.plan.demand.start
    edges = [start + dt.timedelta(seconds=float(s)) for s in result.boundaries_s]
    _header(
        out,
        STEP_COL,
        ["Time", "Demand (veh/h)", "Capacity (veh/h)", "Queue discharge rate (veh/h)"],
    )
    when = out.style.prepare(number_format=w.DATE_FORMAT)
    count = out.style.prepare(number_format=w.NUMBER_FORMATS[0])
    r = DATA_HEADER_ROW + 1
    flows = zip(
        np.asarray(run.demand_veh_h).tolist(),
        np.asarray(run.prebreakdown_veh_h).tolist(),
        np.asarray(run.discharge_veh_h).tolist(),
        strict=True,
    )
    for k, values in enumerate(flows):
        shown = [rounded(v, 0) for v in values]
        for tt in (edges[k], edges[k + 1]):
            when(ws.cell(r, STEP_COL, tt))
            for j, v in enumerate(shown, start=1):
                count(ws.cell(r, STEP_COL + j, v))
            r += 1
    first, last = DATA_HEADER_ROW + 1, r - 1
    chart = ScatterChart(scatterStyle="line")
    chart.title = "Demand, capacity and queue discharge rate"
    x = Reference(ws, min_col=STEP_COL, min_row=first, max_row=last)
    for col, colour, width, dash in (
        (STEP_COL + 1, DEMAND_COLOUR, 1.75, None),
        (STEP_COL + 2, CAPACITY_COLOUR, 2.5, "dash"),
        (STEP_COL + 3, DISCHARGE_COLOUR, 1.5, "sysDot"),
    ):
        y = Reference(ws, min_col=col, min_row=DATA_HEADER_ROW, max_row=last)
        s = Series(y, x, title_from_data=True)
        _line(s, colour, width, dash)
        chart.series.append(s)
    _time_axis(chart, edges[0], edges[-1])
    chart.y_axis.title = "Flow (veh/h)"
    chart.y_axis.number_format = "#,##0"
    chart.y_axis.scaling.min = 0
    _style_axes(chart)
    return chart


def queue_chart(out: w.SheetWriter, result: Result, table: w.TableRef) -> BarChart:
    """Longest queue in each hour (from the Results sheet), with the limit as a line."""
    ws = out.ws
    plan = result.plan
    long_name, long_m = u.LONG_LENGTH[plan.site.unit_system]
    h = result.hours
    n = len(h["hour_start"])
    limit = plan.thresholds.max_queue_length
    heads = ["Hour"] + ([f"Queue-length limit ({long_name})"] if limit is not None else [])
    _header(out, LABEL_COL, heads)
    fmt = "%H:%M" if n <= 24 else "%a %H:%M"
    # label every so many hours only (some programs ignore the axis's own label skip)
    skip = tick_hours(n)
    if limit is not None:
        limit_value, look = limit_cell(limit / long_m)
    for i, t in enumerate(h["hour_start"]):
        r = DATA_HEADER_ROW + 1 + i
        if i % skip == 0:
            out.put(r, LABEL_COL, t.strftime(fmt))
        if limit is not None:
            out.put(r, LABEL_COL + 1, limit_value, number_format=look)
    first, last = DATA_HEADER_ROW + 1, DATA_HEADER_ROW + n
    results = ws.parent[table.sheet]
    col = table.columns["queue_length_max_m"]
    chart = BarChart()
    chart.type = "col"
    chart.gapWidth = 30
    chart.title = "Longest queue by hour"
    unknown = unknown_length_text(result)
    if unknown:  # those cells read "unknown": no bar is drawn there, and the title says so
        chart.title = small_title(
            f"Longest queue by hour (no bar: length {unknown}, traffic held back; see the warnings)"
        )
    chart.add_data(
        Reference(results, min_col=col, min_row=table.header_row, max_row=table.last_row),
        titles_from_data=True,
    )
    cats = Reference(ws, min_col=LABEL_COL, min_row=first, max_row=last)
    chart.set_categories(cats)
    bars = chart.series[0]
    bars.graphicalProperties.solidFill = QUEUE_COLOUR
    bars.graphicalProperties.line.solidFill = QUEUE_COLOUR
    if limit is not None:
        line = LineChart()
        line.add_data(
            Reference(ws, min_col=LABEL_COL + 1, min_row=DATA_HEADER_ROW, max_row=last),
            titles_from_data=True,
        )
        line.set_categories(cats)
        _line(line.series[0], LIMIT_COLOUR, 1.5, "dash")
        chart += line
    landmarks = landmark_lines(out, result, cats)
    if landmarks is not None:
        chart += landmarks
    _style_axes(chart)
    if landmarks is not None:  # room for the lines and their names
        chart.height = CHART_HEIGHT_CM + LANDMARK_EXTRA_CM
    chart.x_axis.tickLblSkip = skip
    chart.x_axis.tickMarkSkip = skip
    chart.x_axis.title = "Hour starting"
    chart.y_axis.title = f"Longest queue ({long_name})"
    chart.y_axis.number_format = "0.00"
    chart.y_axis.majorGridlines = ChartLines()
    chart.y_axis.scaling.min = 0
    return chart


def limit_cell(value: float) -> tuple[float, str]:
    """A limit in the chart data as ``(value, number format)``: every decimal it holds
    (:func:`wzq.present.tables.limit_decimals`), so its line is drawn where it is."""
    d = limit_decimals(value, 2)
    return rounded(value, d), "#,##0." + "0" * d


def label_hour(result: Result) -> int:
    """The hour at which the landmarks are named on the queue-length chart: the middle
    of the longest run of hours without a queue (the ends of the chart count as queued,
    so a name does not run off its edge; the latest such hour), so the names sit clear
    of the bars."""
    n = len(result.hours["hour_start"])
    queued = np.flatnonzero(np.asarray(result.hours["queue_length_max_m"]) > 0)
    walls = np.concatenate(([-1], queued, [n]))
    gap = np.min(np.abs(np.arange(n)[:, None] - walls[None, :]), axis=1)
    return int(n - 1 - np.argmax(gap[::-1]))


def landmark_lines(out: w.SheetWriter, result: Result, cats: Reference) -> LineChart | None:
    """The charted landmarks (:func:`wzq.present.tables.charted_landmarks`) as horizontal
    lines over the hours of the queue-length chart, each named in the legend and on the
    chart (above the line at :func:`label_hour`); their values in a block of their own
    from :data:`LANDMARK_COL`. ``None`` when the plan has none to chart."""
    shown = charted_landmarks(result)
    if not shown:
        return None
    ws = out.ws
    plan = result.plan
    long_name, long_m = u.LONG_LENGTH[plan.site.unit_system]
    n = len(result.hours["hour_start"])
    limit = plan.thresholds.queue_must_not_pass
    heads = [
        f"{lm.name} ({rounded(lm.distance / long_m, 2):,.2f} {long_name})"
        + (": must not pass" if lm.name == limit else "")
        for lm in shown
    ]
    _header(out, LANDMARK_COL, heads)
    look = out.style.prepare(number_format=w.NUMBER_FORMATS[2])
    for j, lm in enumerate(shown):
        value = rounded(lm.distance / long_m, 2)
        for i in range(n):
            look(ws.cell(DATA_HEADER_ROW + 1 + i, LANDMARK_COL + j, value))
        ws.column_dimensions[get_column_letter(LANDMARK_COL + j)].width = 16
    at = label_hour(result)
    line = LineChart()
    for j, lm in enumerate(shown):
        line.add_data(
            Reference(
                ws,
                min_col=LANDMARK_COL + j,
                min_row=DATA_HEADER_ROW,
                max_row=DATA_HEADER_ROW + n,
            ),
            titles_from_data=True,
        )
        series = line.series[-1]
        is_limit = lm.name == limit
        colour, width = (LIMIT_COLOUR, 1.5) if is_limit else (LANDMARK_COLOUR, 1.0)
        _line(series, colour, width, "dashDot")
        # the landmark's name above its line, at the hour of label_hour
        off = dict(showVal=False, showCatName=False, showLegendKey=False, showPercent=False)
        text = RichText(
            bodyPr=RichTextProperties(wrap="none"),
            p=[Paragraph(pPr=ParagraphProperties(defRPr=CharacterProperties(sz=800)))],
        )
        series.dLbls = DataLabelList(
            dLbl=[DataLabel(idx=at, showSerName=True, dLblPos="t", txPr=text, **off)],
            showSerName=False,
            **off,
        )
    line.set_categories(cats)
    return line


def cumulative_points(result: Result) -> pd.DataFrame:
    """Exact corner points of the cumulative curves over the window in which queues stand.

    The curves are linear between interval boundaries except where a queue
    clears inside an interval; those instants are added. The window runs from
    one hour before the first queue forms to one hour after the last one
    clears, on whole hours (the whole period when no queue forms).
    """
    import pandas as pd  # imported when used: slow to import

    names = ("t", "arrivals", "departures")
    df = pd.DataFrame(dict(zip(names, corner_points(result), strict=True)))
    queues = result.queues
    t = result.boundaries_s
    if len(queues):
        first, last = float(queues["start_s"].iloc[0]), float(queues["end_s"].iloc[-1])
        lo = max(math.floor(first / u.HOUR - 1) * u.HOUR, t[0])
        hi = min(math.ceil(last / u.HOUR + 1) * u.HOUR, t[-1])
        df = df[(df["t"] >= lo - 1e-6) & (df["t"] <= hi + 1e-6)].reset_index(drop=True)
    df["time"] = result.clock(df["t"].to_numpy())
    return df


def corner_points(result: Result) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Exact corner points of the cumulative curves over the whole period: interval
    boundaries and the instants a queue clears inside an interval
    (:attr:`wzq.Result.cumulative`): seconds, arrivals, departures."""
    return result.cumulative_curves


def episode_points(result: Result, a: float, b: float) -> dict[str, np.ndarray]:
    """The exact corner points of the cumulative curves from ``a`` to ``b`` (s), counted
    from the departures at ``a`` (so a panel's axis starts at zero): ``t`` (s),
    ``arrivals`` and ``departures``."""
    t, arrivals, departures = corner_points(result)
    inside = (t > a) & (t < b)
    times = np.concatenate(([a], t[inside], [b]))
    arr = np.interp(times, t, arrivals)
    dep = np.interp(times, t, departures)
    base = dep[0]
    return {"t": times, "arrivals": arr - base, "departures": dep - base}


def cumulative_chart(
    out: w.SheetWriter, result: Result, ep: Episode | None, first_row: int
) -> tuple[ScatterChart, int]:
    """Cumulative arrivals and departures (veh) around one queue, against the clock;
    its data from ``first_row`` of the data block. Returns the chart and the next free row."""
    ws = out.ws
    total = result.duration_s
    a, b = (0.0, total) if ep is None else episode_window(result, ep, CONTEXT_H)
    pts = episode_points(result, a, b)
    times = clock_to_second(result.plan.demand.start, pts["t"])
    start = times[0]
    title = (
        "No queue forms: departures follow arrivals" if ep is None else episode_title(result, ep)
    )
    out.put(first_row, CUM_COL, title, font=w.BOLD)
    head = first_row + 1
    since = f"since {start:%a %H:%M}"
    for j, text in enumerate(["Time", f"Arrivals {since} (veh)", f"Departures {since} (veh)"]):
        out.put(head, CUM_COL + j, text, font=w.BOLD, alignment=w.HEADER_ALIGN)
    ws.row_dimensions[head].height = 32
    when = out.style.prepare(number_format=w.DATE_FORMAT)
    count = out.style.prepare(number_format=w.NUMBER_FORMATS[1])
    r = head + 1
    for t, arr, dep in zip(times, pts["arrivals"], pts["departures"], strict=True):
        when(ws.cell(r, CUM_COL, t))
        count(ws.cell(r, CUM_COL + 1, round(float(arr), 1)))
        count(ws.cell(r, CUM_COL + 2, round(float(dep), 1)))
        r += 1
    last = r - 1
    chart = ScatterChart(scatterStyle="line")
    chart.title = small_title(title)
    x = Reference(ws, min_col=CUM_COL, min_row=head + 1, max_row=last)
    for col, colour, width, dash in (
        (CUM_COL + 1, ARRIVALS_COLOUR, 2.0, None),
        (CUM_COL + 2, DEPARTURES_COLOUR, 2.0, "dash"),
    ):
        s = Series(Reference(ws, min_col=col, min_row=head, max_row=last), x, title_from_data=True)
        _line(s, colour, width, dash)
        chart.series.append(s)
    end = times[-1]
    _time_axis(chart, start, end, PANEL_LABELS)
    chart.y_axis.title = f"Vehicles {since}"
    chart.y_axis.number_format = "#,##0"
    chart.y_axis.scaling.min = 0
    chart.y_axis.majorGridlines = ChartLines()
    _style_axes(chart)
    chart.width = PANEL_WIDTH_CM
    chart.height = PANEL_HEIGHT_CM
    return chart, last + 2


def write_charts(out: w.SheetWriter, result: Result, table: w.TableRef) -> int:
    """Fill the Charts sheet: title, the charts, and their data block.

    Returns the first row below the printed charts (where a picture may go).
    """
    ws = out.ws
    out.title(f"Charts: {w.plan_title(result.plan)}")
    out.put(
        1,
        STEP_COL,
        f"Chart data written by wzq; the charts read these cells and the {table.sheet} sheet.",
        font=w.SMALL,
    )
    out.put(2, 1, wzq.CAUTION, font=w.SMALL)  # row 2 is free: the first chart sits at A3
    for chart, anchor in zip(
        (demand_capacity_chart(out, result), queue_chart(out, result, table)),
        CHART_ANCHORS,
        strict=True,
    ):
        ws.add_chart(chart, anchor)
    # the queue-length chart is taller when it names landmarks
    queues_row = QUEUES_ROW + (LANDMARK_EXTRA_ROWS if charted_landmarks(result) else 0)
    ws.row_breaks.append(Break(id=queues_row - 1))
    shown, total = shown_episodes(result)
    heading = "Cumulative arrivals and departures around each queue"
    out.put(queues_row, 1, heading, font=w.SECTION_FONT)
    note = (
        "The vertical gap between the curves is the number of vehicles queued; the area "
        f"between them is the queueing delay. Each chart starts {CONTEXT_H:.0f} h before its "
        "queue forms."
    )
    if total > len(shown):
        note += f" The {len(shown)} longest of {total} queues are shown."
    out.put(queues_row + 1, 1, note, font=w.SMALL)
    data_row = DATA_HEADER_ROW
    panels: list[Episode | None] = list(shown) or [None]
    for k, ep in enumerate(panels):
        chart, data_row = cumulative_chart(out, result, ep, data_row)
        row = queues_row + 2 + (k // 2) * PANEL_ROWS
        ws.add_chart(chart, f"{PANEL_COLUMNS[k % 2]}{row}")
    last_row = queues_row + 2 + math.ceil(len(panels) / 2) * PANEL_ROWS
    w.print_setup(ws, result.plan, f"A1:{PRINT_LAST_COL}{last_row}", landscape=False)
    for col, width in ((STEP_COL, 21), (CUM_COL, 21), (LABEL_COL, 12)):
        ws.column_dimensions[get_column_letter(col)].width = width
    for col in (*range(STEP_COL + 1, STEP_COL + 4), LABEL_COL + 1, CUM_COL + 1, CUM_COL + 2):
        ws.column_dimensions[get_column_letter(col)].width = 13
    return last_row + 1
