"""Native spreadsheet charts for the Charts sheet (they stay live: real chart objects
that read cells, not pictures).

Three charts, each with axis titles and units:

1. demand and capacity by hour, both drawn as step lines against the clock
   (demand and capacity are constant within each hour of the table);
2. longest queue by hour (columns read straight from the Results sheet), with
   the agency's queue-length limit as a line when one is set;
3. cumulative arrivals and departures against the clock: the input-output
   diagram of deterministic queueing (May, *Traffic Flow Fundamentals*, 1990,
   ch. 11, cited from memory), whose vertical gap is the queue and whose
   enclosed area is the queueing delay. It is drawn over the window in which
   queues stand, with the instants a queue clears added as points, so the
   curves are exact (they are piecewise linear between those points).

The data the charts read that is not on the Results sheet (step points, hour
labels, limit, cumulative counts) is written as plain values to a labelled
block at the right of the Charts sheet.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pandas as pd
from openpyxl.chart import BarChart, LineChart, Reference, ScatterChart, Series
from openpyxl.chart.axis import ChartLines
from openpyxl.utils import get_column_letter
from openpyxl.utils.datetime import to_excel

from wzq import units as u
from wzq.analysis import Result
from wzq.tables import rounded
from wzq.workbook import writer as w

#: Columns of the data block (1-based) and where the charts sit.
STEP_COL = 18  # R: time, demand, capacity
LABEL_COL = 22  # V: hour label, queue-length limit
CUM_COL = 25  # Y: time, arrivals, departures
DATA_HEADER_ROW = 3
CHART_ANCHORS = ("A3", "A23", "A43")
CHART_WIDTH_CM = 25.0
CHART_HEIGHT_CM = 9.5
#: Rows a chart covers at the default row height, and the last printed column.
CHART_ROWS = 19
PRINT_LAST_COL = "O"

DEMAND_COLOUR = "4F7CAC"
CAPACITY_COLOUR = "2F3E4C"
QUEUE_COLOUR = "B85450"
LIMIT_COLOUR = "000000"
ARRIVALS_COLOUR = "4F7CAC"
DEPARTURES_COLOUR = "C07A2C"


#: Hours between labelled ticks on a time axis, the smallest giving at most
#: :data:`MAX_LABELS` labels.
TICK_HOURS = (1, 2, 3, 4, 6, 12, 24, 48, 168)
MAX_LABELS = 8


def tick_hours(hours: float) -> int:
    """Hours between labels so that an axis of ``hours`` carries at most ``MAX_LABELS``."""
    return next((s for s in TICK_HOURS if hours / s <= MAX_LABELS), math.ceil(hours / MAX_LABELS))


def _time_axis(chart: ScatterChart, start: dt.datetime, end: dt.datetime) -> None:
    """An x axis of clock times from ``start`` to ``end`` with a readable tick step."""
    hours = (end - start).total_seconds() / 3600.0
    chart.x_axis.scaling.min = to_excel(start)
    chart.x_axis.scaling.max = to_excel(end)
    chart.x_axis.majorUnit = tick_hours(hours) / 24
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


def _nice_floor(low: float, high: float) -> float:
    """A round axis minimum just below ``low``, on the scale of the span ``high - low``."""
    span = max(high - low, 1.0)
    step = 10 ** math.floor(math.log10(span))
    return max(math.floor(low / step) * step, 0.0)


def _header(out: w.SheetWriter, col: int, texts: list[str]) -> None:
    for j, text in enumerate(texts):
        out.put(DATA_HEADER_ROW, col + j, text, font=w.BOLD, alignment=w.HEADER_ALIGN)
    out.ws.row_dimensions[DATA_HEADER_ROW].height = 32


def demand_capacity_chart(out: w.SheetWriter, result: Result) -> ScatterChart:
    """Demand and capacity per hour as step lines (values as shown in the Results sheet)."""
    ws = out.ws
    h = result.hourly
    starts = [pd.Timestamp(t).to_pydatetime() for t in h["hour_start"]]
    hour = dt.timedelta(hours=1)
    _header(out, STEP_COL, ["Time", "Demand (veh/h)", "Capacity (veh/h)"])
    when = out.style.prepare(number_format=w.DATE_FORMAT)
    count = out.style.prepare(number_format=w.NUMBER_FORMATS[0])
    r = DATA_HEADER_ROW + 1
    for t, d, c in zip(starts, h["demand_veh_h"], h["capacity_veh_h"], strict=True):
        d, c = rounded(d, 0), rounded(c, 0)
        for tt in (t, t + hour):
            when(ws.cell(r, STEP_COL, tt))
            count(ws.cell(r, STEP_COL + 1, d))
            count(ws.cell(r, STEP_COL + 2, c))
            r += 1
    first, last = DATA_HEADER_ROW + 1, r - 1
    chart = ScatterChart(scatterStyle="line")
    chart.title = "Demand and capacity by hour"
    x = Reference(ws, min_col=STEP_COL, min_row=first, max_row=last)
    for col, colour, width in (
        (STEP_COL + 1, DEMAND_COLOUR, 1.75),
        (STEP_COL + 2, CAPACITY_COLOUR, 2.5),
    ):
        y = Reference(ws, min_col=col, min_row=DATA_HEADER_ROW, max_row=last)
        s = Series(y, x, title_from_data=True)
        _line(s, colour, width, None if col == STEP_COL + 1 else "dash")
        chart.series.append(s)
    _time_axis(chart, starts[0], starts[-1] + hour)
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
    h = result.hourly
    n = len(h)
    limit = plan.thresholds.max_queue_length
    heads = ["Hour"] + ([f"Queue-length limit ({long_name})"] if limit is not None else [])
    _header(out, LABEL_COL, heads)
    fmt = "%H:%M" if n <= 24 else "%a %H:%M"
    # label every so many hours only (some programs ignore the axis's own label skip)
    skip = tick_hours(n)
    for i, t in enumerate(h["hour_start"]):
        r = DATA_HEADER_ROW + 1 + i
        if i % skip == 0:
            out.put(r, LABEL_COL, pd.Timestamp(t).strftime(fmt))
        if limit is not None:
            out.put(r, LABEL_COL + 1, rounded(limit / long_m, 2), number_format=w.NUMBER_FORMATS[2])
    first, last = DATA_HEADER_ROW + 1, DATA_HEADER_ROW + n
    results = ws.parent[table.sheet]
    col = table.columns["queue_length_max_m"]
    chart = BarChart()
    chart.type = "col"
    chart.gapWidth = 30
    chart.title = "Longest queue by hour"
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
    chart.x_axis.tickLblSkip = skip
    chart.x_axis.tickMarkSkip = skip
    chart.x_axis.title = "Hour starting"
    chart.y_axis.title = f"Longest queue ({long_name})"
    chart.y_axis.number_format = "0.00"
    chart.y_axis.majorGridlines = ChartLines()
    chart.y_axis.scaling.min = 0
    _style_axes(chart)
    return chart


def cumulative_points(result: Result) -> pd.DataFrame:
    """Exact corner points of the cumulative curves over the window in which queues stand.

    The curves are linear between interval boundaries except where a queue
    clears inside an interval; those instants are added. The window runs from
    one hour before the first queue forms to one hour after the last one
    clears, on whole hours (the whole period when no queue forms).
    """
    r = result.run
    q = r.queue
    t = r.t
    times = list(t)
    arr = list(q.arrivals_cum)
    dep = list(q.departures_cum)
    q0, q1 = q.queue[:-1], q.queue[1:]
    inside = np.flatnonzero((q0 > 0) & (q1 == 0) & (q.busy < np.diff(t)))
    extra_t = t[:-1][inside] + q.busy[inside]
    extra_a = q.arrivals_cum[:-1][inside] + q.arrival_rate[inside] * q.busy[inside]
    times += list(extra_t)
    arr += list(extra_a)
    dep += list(extra_a)  # the queue is empty at that instant
    df = pd.DataFrame({"t": times, "arrivals": arr, "departures": dep}).sort_values("t")
    df = df.drop_duplicates("t").reset_index(drop=True)
    busy = np.flatnonzero(q.busy > 0)
    if len(busy):
        lo = max(math.floor(t[busy[0]] / u.HOUR - 1) * u.HOUR, t[0])
        hi = min(math.ceil((t[busy[-1]] + q.busy[busy[-1]]) / u.HOUR + 1) * u.HOUR, t[-1])
        df = df[(df["t"] >= lo - 1e-6) & (df["t"] <= hi + 1e-6)].reset_index(drop=True)
    df["time"] = r.clock(df["t"].to_numpy())
    return df


def cumulative_chart(out: w.SheetWriter, result: Result) -> ScatterChart:
    """Cumulative arrivals and departures (veh) against the clock."""
    ws = out.ws
    pts = cumulative_points(result)
    _header(out, CUM_COL, ["Time", "Cumulative arrivals (veh)", "Cumulative departures (veh)"])
    when = out.style.prepare(number_format=w.DATE_FORMAT)
    count = out.style.prepare(number_format=w.NUMBER_FORMATS[0])
    r = DATA_HEADER_ROW + 1
    for t, a, d in zip(pts["time"], pts["arrivals"], pts["departures"], strict=True):
        when(ws.cell(r, CUM_COL, pd.Timestamp(t).round("s").to_pydatetime()))
        count(ws.cell(r, CUM_COL + 1, round(float(a), 1)))
        count(ws.cell(r, CUM_COL + 2, round(float(d), 1)))
        r += 1
    first, last = DATA_HEADER_ROW + 1, r - 1
    chart = ScatterChart(scatterStyle="line")
    chart.title = "Cumulative arrivals and departures"
    x = Reference(ws, min_col=CUM_COL, min_row=first, max_row=last)
    for col, colour, width, dash in (
        (CUM_COL + 1, ARRIVALS_COLOUR, 2.0, None),
        (CUM_COL + 2, DEPARTURES_COLOUR, 2.0, "dash"),
    ):
        s = Series(
            Reference(ws, min_col=col, min_row=DATA_HEADER_ROW, max_row=last),
            x,
            title_from_data=True,
        )
        _line(s, colour, width, dash)
        chart.series.append(s)
    t0 = pd.Timestamp(pts["time"].iloc[0]).to_pydatetime()
    t1 = pd.Timestamp(pts["time"].iloc[-1]).to_pydatetime()
    _time_axis(chart, t0, t1)
    chart.y_axis.title = "Cumulative vehicles (veh)"
    chart.y_axis.number_format = "#,##0"
    chart.y_axis.scaling.min = _nice_floor(
        float(pts["departures"].iloc[0]), float(pts["arrivals"].iloc[-1])
    )
    _style_axes(chart)
    return chart


def write_charts(out: w.SheetWriter, result: Result, table: w.TableRef) -> None:
    """Fill the Charts sheet: title, the three charts, and their data block."""
    ws = out.ws
    out.title(f"Charts: {w.plan_title(result.plan)}")
    out.put(
        1,
        STEP_COL,
        f"Chart data written by wzq; the charts read these cells and the {table.sheet} sheet.",
        font=w.SMALL,
    )
    charts = (
        demand_capacity_chart(out, result),
        queue_chart(out, result, table),
        cumulative_chart(out, result),
    )
    for chart, anchor in zip(charts, CHART_ANCHORS, strict=True):
        ws.add_chart(chart, anchor)
    last_row = int(CHART_ANCHORS[-1][1:]) + CHART_ROWS
    w.print_setup(ws, result.plan, f"A1:{PRINT_LAST_COL}{last_row}", landscape=False, pages_high=1)
    for col, width in ((STEP_COL, 21), (CUM_COL, 21), (LABEL_COL, 12)):
        ws.column_dimensions[get_column_letter(col)].width = width
    for col in (STEP_COL + 1, STEP_COL + 2, LABEL_COL + 1, CUM_COL + 1, CUM_COL + 2):
        ws.column_dimensions[get_column_letter(col)].width = 13
