"""The report's charts drawn straight as reportlab vector drawings (no matplotlib).

Three charts, all in shades of grey with distinct line styles so that they
read the same on a black-and-white printer:

* demand and capacity by interval, closures shaded;
* queue length over time, with the agency's queue limit, the landmarks upstream
  of the taper and the hours over a limit marked;
* cumulative arrivals and departures (the input-output diagram of deterministic
  D/D/1 queueing) around each queue, the vertical gap being the queue.

The curves are drawn exactly: the queue is piecewise linear between interval
boundaries and the instants at which it clears (:func:`queue_profile`,
:func:`cumulative_profile`), so a queue that clears inside an interval is not
cut short or stretched by joining boundary values.

Each chart is a :class:`reportlab.graphics.shapes.Drawing`, which the report
places on its page as it is: lines stay lines and labels stay text in the
report's own font, with nothing to convert. Sizes are in points (1/72 inch).
The space-time picture and the risk fan chart are drawn with matplotlib
(:mod:`wzq.present.spacetime`, :mod:`wzq.present.risk_figure`), which imports
the shared shades, margins and time-axis spacing from here.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TypeVar

import numpy as np
from reportlab.graphics.shapes import Drawing, Group, Line, Polygon, PolyLine, Rect, String
from reportlab.lib.colors import Color, white
from reportlab.pdfbase.pdfmetrics import stringWidth

from wzq import units as u
from wzq.engine.results import Result
from wzq.present.tables import (  # noqa: F401  (re-exported: the report's names)
    MAX_PANELS,
    Episode,
    charted_landmarks,
    episode_title,
    episode_window,
    limit_values,
    queue_episodes,
    shown_episodes,
)
from wzq.units import HOUR

__all__ = [
    "BOTTOM_IN",
    "CLOCK_LABEL_IN",
    "CLOSURE_FILL",
    "CONTEXT_H",
    "DAY_LABEL_IN",
    "INK",
    "LEFT_IN",
    "LIGHT",
    "MID",
    "QUEUE_FILL",
    "RIGHT_IN",
    "TICK_STEPS_H",
    "TOP_IN",
    "Profile",
    "cumulative_drawing",
    "cumulative_profile",
    "demand_capacity_drawing",
    "length_profile",
    "queue_length_drawing",
    "queue_profile",
    "tick_step_h",
    "time_ticks",
    "value_ticks",
]

#: Line and fill shades (grey levels, black and white printing).
INK = "0.0"
MID = "0.35"
LIGHT = "0.6"
CLOSURE_FILL = "0.90"
QUEUE_FILL = "0.78"
GRID_SHADE = "0.85"
EDGE_SHADE = "0.7"

#: Hours of context drawn either side of a queue in the cumulative diagram.
CONTEXT_H = 1.0

#: Fixed margins (inches) so the time axes of stacked charts line up.
LEFT_IN, RIGHT_IN, BOTTOM_IN, TOP_IN = 0.8, 0.2, 0.45, 0.35

#: Hours between time-axis labels (each divides a day, or whole days).
TICK_STEPS_H = (1, 2, 3, 4, 6, 12, 24, 48, 72, 168)
#: Room (inches) a time label needs on the axis, gap included: clock times, and
#: day names (``Wed 08 Sep``) at midnight, at the charts' tick font size.
CLOCK_LABEL_IN = 0.55
DAY_LABEL_IN = 0.85

#: Font sizes (points): tick labels, axis titles, legend, panel titles, notes.
TICK_PT, LABEL_PT, LEGEND_PT, TITLE_PT, NOTE_PT = 7.0, 8.0, 7.5, 8.5, 6.5
#: Line widths (points): axes, grid, tick marks (3.5 pt long).
AXIS_LW, GRID_LW, TICK_LEN = 0.6, 0.4, 3.5
#: Room (points) between the top of a chart's plot area and its legend.
LEGEND_GAP = 6.0


LineShape = TypeVar("LineShape", Line, PolyLine)


def grey(level: str) -> Color:
    """A grey of the given level ("0.0" black to "1.0" white)."""
    v = float(level)
    return Color(v, v, v)


# --------------------------------------------------------------------------- what is drawn


@dataclass(frozen=True)
class Profile:
    """An exact polyline: times (s from the start of demand) and values per point."""

    t: np.ndarray
    values: dict[str, np.ndarray]


def queue_profile(result: Result) -> Profile:
    """Point queue (veh) and its single-state length (m) as an exact polyline
    (:attr:`wzq.Result.queue_profile`): each interval contributes its start, the
    instant its queue clears (when it clears inside the interval) and its end; a
    change of queued state at a boundary shows as a vertical step in the length. The
    length here is the single-state relation's; :func:`length_profile` gives the one
    the engine reports.
    """
    p = result.queue_profile
    return Profile(
        p["seconds"].to_numpy(),
        {"queue_veh": p["queue_veh"].to_numpy(), "queue_length_m": p["queue_length_m"].to_numpy()},
    )


def length_profile(result: Result) -> Profile:
    """Queue length (m) over time, as the engine computed it.

    With Newell's method this is the exact back-of-queue trajectory
    (:attr:`wzq.Result.back_of_queue`), which can outlast the point queue because the
    recovery wave takes time to reach the back; otherwise the single-state polyline
    of :func:`queue_profile`.
    """
    if result.length_method == "newell":
        b = result.back_of_queue
        return Profile(b["seconds"].to_numpy(), {"queue_length_m": b["distance_m"].to_numpy()})
    prof = queue_profile(result)
    return Profile(prof.t, {"queue_length_m": prof.values["queue_length_m"]})


def cumulative_profile(result: Result) -> Profile:
    """Cumulative arrivals and departures (veh) through their exact corner points
    (:attr:`wzq.Result.cumulative`)."""
    c = result.cumulative
    return Profile(
        c["seconds"].to_numpy(),
        {"arrivals": c["arrivals"].to_numpy(), "departures": c["departures"].to_numpy()},
    )


# --------------------------------------------------------------------------- axes


def tick_step_h(span_h: float, width_in: float) -> int:
    """Hours between labels on a time axis ``width_in`` inches long spanning ``span_h``
    hours: the smallest step whose labels do not run into each other."""
    for step in TICK_STEPS_H:
        room = DAY_LABEL_IN if span_h > 24 or step >= 24 else CLOCK_LABEL_IN
        if span_h / step * room <= width_in:
            return step
    return TICK_STEPS_H[-1]


def time_ticks(start: dt.datetime, a: float, b: float, width_in: float) -> list[tuple[float, str]]:
    """Labelled ticks of a time axis from ``a`` to ``b`` seconds after ``start``,
    ``width_in`` inches long: every :func:`tick_step_h` hours on the clock (whole
    days for a step of a day or more), labelled with the clock time, and with the
    day's name (``Wed 08 Sep``) at midnight."""
    step = tick_step_h((b - a) / HOUR, width_in)
    first = start + dt.timedelta(seconds=a)
    hour = first.replace(minute=0, second=0, microsecond=0)
    if hour < first:
        hour += dt.timedelta(hours=1)
    end = start + dt.timedelta(seconds=b)
    out = []
    while hour <= end:
        on = (
            hour.hour % step == 0
            if step < 24
            else hour.hour == 0 and hour.toordinal() % (step // 24) == 0
        )
        if on:
            label = hour.strftime("%a %d %b") if hour.hour == 0 else hour.strftime("%H:%M")
            out.append(((hour - start).total_seconds(), label))
        hour += dt.timedelta(hours=1)
    return out


#: Steps of a value axis within each power of ten.
NICE_STEPS = (1.0, 2.0, 2.5, 5.0, 10.0)


def value_ticks(top: float, length_pt: float) -> tuple[float, int]:
    """Step and decimals of a value axis from 0 to ``top``, ``length_pt`` long: the
    smallest step of 1, 2, 2.5 or 5 times a power of ten that makes at most one
    interval per two label heights, and at most nine."""
    most = max(2, min(9, int(length_pt / (2 * TICK_PT))))
    if top <= 0:
        return 1.0, 0
    power = 10.0 ** math.floor(math.log10(top / most))
    for m in NICE_STEPS:
        step = m * power
        if top / step <= most:
            break
    decimals = max(0, -math.floor(math.log10(step) + 1e-9)) + (1 if m == 2.5 and step < 10 else 0)
    return step, decimals


def _number(value: float, decimals: int) -> str:
    return f"{value:,.{decimals}f}"


@dataclass
class Axes:
    """A plot area of a drawing: ``x0, y0`` its lower-left corner and ``w, h`` its size
    (points), showing times ``a`` to ``b`` (s) across and values ``lo`` to ``hi`` up."""

    x0: float
    y0: float
    w: float
    h: float
    a: float
    b: float
    lo: float = 0.0
    hi: float = 1.0

    def x(self, t: np.ndarray | float) -> np.ndarray:
        return self.x0 + (np.asarray(t, dtype=float) - self.a) / (self.b - self.a) * self.w

    def y(self, v: np.ndarray | float) -> np.ndarray:
        return self.y0 + (np.asarray(v, dtype=float) - self.lo) / (self.hi - self.lo) * self.h

    def points(self, t: np.ndarray, v: np.ndarray) -> list[float]:
        """Flat x, y point list of a polyline in drawing coordinates."""
        xy = np.empty(2 * len(t))
        xy[0::2] = self.x(t)
        xy[1::2] = self.y(v)
        return xy.tolist()


@dataclass(frozen=True)
class Style:
    """How a line or a patch is drawn (and shown in a legend)."""

    shade: str
    width: float = 1.0
    dashes: tuple[float, ...] | None = None  # in line widths, as matplotlib scales them
    patch: bool = False
    edge: str | None = None

    def line(self, shape: LineShape) -> LineShape:
        """``shape`` stroked in this style (dashes scaled by the width, as matplotlib does)."""
        shape.strokeColor = grey(self.shade)
        shape.strokeWidth = self.width
        if self.dashes:
            shape.strokeDashArray = [d * self.width for d in self.dashes]
        shape.strokeLineJoin = 1
        shape.strokeLineCap = 0 if self.dashes else 1
        return shape


class Canvas:
    """A drawing being built, in the report's font."""

    def __init__(self, width: float, height: float, font: str) -> None:
        self.d = Drawing(width, height)
        self.font = font

    def text(
        self,
        x: float,
        y: float,
        s: str,
        size: float,
        anchor: str = "start",
        middle: bool = False,
        angle: float = 0.0,
        box: bool = False,
    ) -> None:
        """Text at ``(x, y)`` (its baseline, or its middle when ``middle``)."""
        base = -0.35 * size if middle else 0.0
        if box:  # a white box behind the text, as the chart's annotations have
            w = stringWidth(s, self.font, size)
            left = {"start": 0.0, "middle": -w / 2, "end": -w}[anchor]
            pad = 0.15 * size
            self.d.add(
                Rect(
                    x + left - pad,
                    y + base - 0.25 * size - pad,
                    w + 2 * pad,
                    size + 2 * pad,
                    fillColor=white,
                    strokeColor=None,
                )
            )
        string = String(0, base, s, fontName=self.font, fontSize=size, textAnchor=anchor)
        string.fillColor = grey(INK)
        if angle:
            c, s_ = math.cos(math.radians(angle)), math.sin(math.radians(angle))
            self.d.add(Group(string, transform=(c, s_, -s_, c, x, y)))
        else:
            string.x, string.y = x, y + base
            self.d.add(string)

    def width(self, s: str, size: float) -> float:
        return stringWidth(s, self.font, size)

    def line(self, style: Style, points: list[float]) -> None:
        if len(points) >= 4:
            self.d.add(style.line(PolyLine(points, fillColor=None)))

    def fill(self, shade: str, points: list[float]) -> None:
        if len(points) >= 6:
            self.d.add(Polygon(points, fillColor=grey(shade), strokeColor=None, strokeWidth=0))

    def rect(self, x: float, y: float, w: float, h: float, shade: str) -> None:
        if w > 0 and h > 0:
            self.d.add(Rect(x, y, w, h, fillColor=grey(shade), strokeColor=None, strokeWidth=0))

    def legend(self, x: float, y: float, entries: Sequence[tuple[Style, str]], ncol: int) -> None:
        """Legend entries, a sample and a label each, in rows of ``ncol`` from ``(x, y)``
        (the lower left of the last row; earlier rows above it, the first on top)."""
        rows = [entries[i : i + ncol] for i in range(0, len(entries), ncol)]
        step = 1.6 * LEGEND_PT
        for r, row in enumerate(rows):
            yy = y + (len(rows) - 1 - r) * step
            xx = x
            for style, label in row:
                mid = yy + 0.35 * LEGEND_PT
                if style.patch:
                    rect = Rect(xx, mid - 0.35 * LEGEND_PT, 2 * LEGEND_PT, 0.7 * LEGEND_PT)
                    rect.fillColor = grey(style.shade)
                    rect.strokeColor = grey(style.edge) if style.edge else None
                    rect.strokeWidth = 0.5
                    self.d.add(rect)
                else:
                    self.d.add(style.line(Line(xx, mid, xx + 2 * LEGEND_PT, mid)))
                xx += 2.8 * LEGEND_PT
                self.text(xx, yy, label, LEGEND_PT)
                xx += self.width(label, LEGEND_PT) + 2.0 * LEGEND_PT

    def frame(
        self,
        ax: Axes,
        start: dt.datetime,
        decimals: int,
        step: float,
        ylabel: str | None,
    ) -> None:
        """Grid, left and bottom axes, ticks and their labels, and the axis title."""
        times = time_ticks(start, ax.a, ax.b, ax.w / 72)
        values = np.arange(0, ax.hi * (1 + 1e-9) + 1e-12, step) if step > 0 else np.array([0.0])
        values = values[values >= ax.lo]
        grid = Style(GRID_SHADE, GRID_LW)
        for t, _ in times:
            x = float(ax.x(t))
            self.d.add(grid.line(Line(x, ax.y0, x, ax.y0 + ax.h)))
        for v in values:
            y = float(ax.y(v))
            self.d.add(grid.line(Line(ax.x0, y, ax.x0 + ax.w, y)))
        spine = Style(INK, AXIS_LW)
        self.d.add(spine.line(Line(ax.x0, ax.y0, ax.x0 + ax.w, ax.y0)))
        self.d.add(spine.line(Line(ax.x0, ax.y0, ax.x0, ax.y0 + ax.h)))
        for t, label in times:
            x = float(ax.x(t))
            self.d.add(spine.line(Line(x, ax.y0, x, ax.y0 - TICK_LEN)))
            self.text(x, ax.y0 - TICK_LEN - 2.5 - TICK_PT, label, TICK_PT, anchor="middle")
        widest = 0.0
        for v in values:
            y = float(ax.y(v))
            label = _number(float(v), decimals)
            widest = max(widest, self.width(label, TICK_PT))
            self.d.add(spine.line(Line(ax.x0, y, ax.x0 - TICK_LEN, y)))
            self.text(ax.x0 - TICK_LEN - 2.5, y, label, TICK_PT, anchor="end", middle=True)
        if ylabel:
            x = ax.x0 - TICK_LEN - 2.5 - widest - 4.0
            self.text(x, ax.y0 + ax.h / 2, ylabel, LABEL_PT, anchor="middle", angle=90)


def _closures(c: Canvas, ax: Axes, result: Result) -> bool:
    """Shade the closure periods; True when there is at least one."""
    start = result.plan.demand.start
    for cl in result.plan.closures:
        a = max((cl.start - start).total_seconds(), ax.a)
        b = min((cl.end - start).total_seconds(), ax.b)
        if b > a:
            x0, x1 = float(ax.x(a)), float(ax.x(b))
            c.rect(x0, ax.y0, x1 - x0, ax.h, CLOSURE_FILL)
    return bool(result.plan.closures)


def _axes(width: float, height: float, a: float, b: float, top_in: float = TOP_IN) -> Axes:
    return Axes(
        LEFT_IN * 72,
        BOTTOM_IN * 72,
        width - (LEFT_IN + RIGHT_IN) * 72,
        height - (BOTTOM_IN + top_in) * 72,
        a,
        b,
    )


def _top(values: Sequence[float]) -> float:
    """The top of a value axis from 0 over these values: 5 % above the largest."""
    m = max((float(v) for v in values), default=0.0)
    return 1.05 * m if m > 0 else 1.0


CLOSURE_KEY = Style(CLOSURE_FILL, patch=True, edge=EDGE_SHADE)


# --------------------------------------------------------------------------- the charts


def demand_capacity_drawing(
    result: Result, width: float, height: float, font: str = "Helvetica"
) -> Drawing:
    """Demand, capacity before breakdown and queue discharge rate (veh/h) by interval,
    ``width`` by ``height`` points."""
    iv = result.intervals
    t = np.asarray(result.boundaries_s, dtype=float)
    demand = iv["demand_veh_h"].to_numpy()
    capacity = iv["capacity_veh_h"].to_numpy()
    discharge = iv["discharge_veh_h"].to_numpy()
    c = Canvas(width, height, font)
    ax = _axes(width, height, float(t[0]), float(t[-1]))
    lines = [
        (Style(INK, 1.4), demand, "Demand"),
        (Style(MID, 1.1, (5, 2)), capacity, "Capacity (before breakdown)"),
    ]
    if np.any(discharge < capacity - 0.5):
        lines.append((Style(INK, 0.9, (1, 1.5)), discharge, "Queue discharge rate"))
    ax.hi = _top([v.max() for _, v, _ in lines if len(v)])
    step, _ = value_ticks(ax.hi, ax.h)
    closures = _closures(c, ax, result)
    c.frame(ax, result.plan.demand.start, 0, step, "Flow (veh/h)")
    for style, values, _ in lines:  # steps: each value held over its interval
        tt = np.repeat(t, 2)[1:-1]
        vv = np.repeat(values, 2)
        c.line(style, ax.points(tt, vv))
    keys = [(s, label) for s, _, label in lines]
    if closures:
        keys.append((CLOSURE_KEY, "Lane closure in force"))
    c.legend(ax.x0, ax.y0 + ax.h + LEGEND_GAP, keys, ncol=4)
    return c.d


def queue_length_drawing(
    result: Result, width: float, height: float, font: str = "Helvetica"
) -> Drawing:
    """Queue length over time in the plan's long-distance unit, with the limit, the
    landmarks upstream and the hours over a limit, ``width`` by ``height`` points."""
    system = result.plan.site.unit_system
    long_name, long_m = u.LONG_LENGTH[system]
    prof = length_profile(result)
    t = prof.t
    y = prof.values["queue_length_m"] / long_m
    limit = result.plan.thresholds.max_queue_length
    c = Canvas(width, height, font)
    ax = _axes(width, height, 0.0, float(result.duration_s))
    top = float(y.max()) if len(y) else 0.0
    keys: list[tuple[Style, str]] = [(Style(INK, 1.2), "Queue length")]
    limit_style = Style(INK, 0.9, (6, 3))
    if limit is not None:
        top = max(top, limit / long_m)
        keys.append((limit_style, f"Queue limit ({limit_values(result.plan)['queue_ok']})"))
    must_not = result.plan.thresholds.queue_must_not_pass
    marks = charted_landmarks(result)
    for lm in marks:
        top = max(top, lm.distance / long_m)
    if marks:
        keys.append((Style(MID, 0.6, (6, 2, 1, 2)), "Landmark upstream (named)"))
    ax.hi = top * 1.18 if top > 0 else 1.0
    step, decimals = value_ticks(ax.hi, ax.h)
    closures = _closures(c, ax, result)
    c.frame(ax, result.plan.demand.start, max(decimals, 1), step, f"Queue length ({long_name})")
    if len(t):
        base = [float(ax.x(t[-1])), ax.y0, float(ax.x(t[0])), ax.y0]
        c.fill(QUEUE_FILL, ax.points(t, y) + base)
    for lm in marks:
        yy = float(ax.y(lm.distance / long_m))
        here = lm.name == must_not
        style = Style(INK if here else MID, 1.0 if here else 0.6, (6, 2, 1, 2))
        c.line(style, [ax.x0, yy, ax.x0 + ax.w, yy])
        label = f"{lm.name} ({lm.distance / long_m:,.2f} {long_name})"
        label += ": queue must not pass" if here else ""
        c.text(ax.x0 + 0.005 * ax.w, yy + 1.5, label, NOTE_PT)
    if limit is not None:
        yy = float(ax.y(limit / long_m))
        c.line(limit_style, [ax.x0, yy, ax.x0 + ax.w, yy])
    c.line(Style(INK, 1.2), ax.points(t, y))
    failing = result.hourly["status"].to_numpy() != "ok"
    for s in np.flatnonzero(failing) * HOUR:
        a, b = max(float(s), ax.a), min(float(s) + HOUR, ax.b)
        if b > a:
            x0, x1 = float(ax.x(a)), float(ax.x(b))
            c.rect(x0, ax.y0 + 0.955 * ax.h, x1 - x0, 0.045 * ax.h, INK)
    if failing.any():
        keys.append((Style(INK, patch=True), "Hour over a limit (bar at top)"))
    if closures:
        keys.append((CLOSURE_KEY, "Lane closure in force"))
    if top <= 0:
        c.text(ax.x0 + ax.w / 2, ax.y0 + ax.h / 2, "No queue forms", LABEL_PT, "middle", True)
    c.legend(ax.x0, ax.y0 + ax.h + LEGEND_GAP, keys, ncol=4)
    return c.d


def _arrow(c: Canvas, x: float, y0: float, y1: float, width: float = 0.7) -> None:
    """A vertical double-headed arrow from ``y0`` to ``y1`` (points)."""
    c.line(Style(INK, width), [x, y0, x, y1])
    head = 3.0
    sign = 1.0 if y1 > y0 else -1.0
    for tip, back in ((y1, y1 - sign * head), (y0, y0 + sign * head)):
        wing = [x - head / 2.5, back, x + head / 2.5, back]
        c.d.add(Polygon([x, tip, *wing], fillColor=grey(INK), strokeColor=None, strokeWidth=0))


def cumulative_drawing(
    result: Result, width: float, height: float, font: str = "Helvetica"
) -> Drawing:
    """Cumulative arrivals and departures around each queue (input-output diagram), one
    panel per queue shown (:func:`wzq.present.tables.shown_episodes`), ``width`` by
    ``height`` points."""
    prof = cumulative_profile(result)
    total = result.duration_s
    eps, _ = shown_episodes(result)
    windows = [(*episode_window(result, e, CONTEXT_H), e) for e in eps] or [(0.0, total, None)]
    n = len(windows)
    cols = n if n <= 3 else (2 if n == 4 else 3)
    rows = math.ceil(n / cols)
    c = Canvas(width, height, font)
    left, right, bottom, top_m = LEFT_IN * 72, RIGHT_IN * 72, BOTTOM_IN * 72, 0.6 * 72
    wspace, hspace = 0.2, 0.45  # gaps, in shares of a panel's width and height
    pw = (width - left - right) / (cols + (cols - 1) * wspace)
    ph = (height - bottom - top_m) / (rows + (rows - 1) * hspace)
    arrivals, departures = prof.values["arrivals"], prof.values["departures"]
    start = result.plan.demand.start
    fill, arr_style, dep_style = (
        Style(QUEUE_FILL, patch=True),
        Style(INK, 1.2),
        Style(INK, 1.1, (4, 2)),
    )
    for k, (a, b, ep) in enumerate(windows):
        r, col = divmod(k, cols)
        x0 = left + col * pw * (1 + wspace)
        y0 = height - top_m - ph - r * ph * (1 + hspace)
        t = np.concatenate(([a], prof.t[(prof.t > a) & (prof.t < b)], [b]))
        arr = np.interp(t, prof.t, arrivals)
        dep = np.interp(t, prof.t, departures)
        base = dep[0]  # count vehicles from the window start
        ax = Axes(x0, y0, pw, ph, float(a), float(b), 0.0, _top([arr.max() - base]))
        step, _ = value_ticks(ax.hi, ax.h)
        c.frame(ax, start, 0, step, "Vehicles since window start" if col == 0 else None)
        c.fill(QUEUE_FILL, ax.points(t, dep - base) + ax.points(t[::-1], (arr - base)[::-1]))
        c.line(arr_style, ax.points(t, arr - base))
        c.line(dep_style, ax.points(t, dep - base))
        if ep is not None:
            xm = float(ax.x(ep.max_at))
            ya = float(ax.y(np.interp(ep.max_at, prof.t, arrivals) - base))
            yd = float(ax.y(np.interp(ep.max_at, prof.t, departures) - base))
            _arrow(c, xm, yd, ya)
            label = f"{ep.max_queue_veh:,.0f} veh"
            c.text(xm + 4, (ya + yd) / 2, label, TICK_PT, middle=True, box=True)
            title = episode_title(result, ep)
        else:
            title = "No queue forms: departures follow arrivals"
        c.text(x0, y0 + ph + 0.5 * TITLE_PT, title, TITLE_PT)
    keys = [
        (fill, "Queue"),
        (arr_style, "Cumulative arrivals"),
        (dep_style, "Cumulative departures"),
    ]
    c.legend(left, height - 1.8 * LEGEND_PT, keys, ncol=3)
    return c.d
