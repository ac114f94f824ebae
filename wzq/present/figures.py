"""Charts for the printed report, drawn with matplotlib (no pyplot, no global state).

Three figures, all in shades of grey with distinct line styles so that they
read the same on a black-and-white printer:

* demand and capacity by interval, closures shaded;
* queue length over time, with the agency's queue limit and the hours over a
  limit marked;
* cumulative arrivals and departures (the input-output diagram of deterministic
  D/D/1 queueing) around each queue, the vertical gap being the queue.

The curves are drawn exactly: the queue is piecewise linear between interval
boundaries and the instants at which it clears (:func:`queue_profile`,
:func:`cumulative_profile`), so a queue that clears inside an interval is not
cut short or stretched by joining boundary values.

Each figure is returned as a :class:`matplotlib.figure.Figure`;
:func:`render` turns one into SVG (for vector embedding) or PNG bytes.
"""

from __future__ import annotations

import io
from dataclasses import dataclass

import matplotlib as mpl
import matplotlib.dates as mdates
import numpy as np
from matplotlib.figure import Figure
from matplotlib.patches import Patch

from wzq import units as u
from wzq.engine.results import Result
from wzq.present.tables import (  # noqa: F401  (re-exported: the report's names)
    MAX_PANELS,
    Episode,
    charted_landmarks,
    episode_title,
    episode_window,
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
    "FONT_FAMILY",
    "INK",
    "LEFT_IN",
    "LIGHT",
    "MID",
    "QUEUE_FILL",
    "RC",
    "RIGHT_IN",
    "TICK_STEPS_H",
    "TOP_IN",
    "Profile",
    "cumulative_figure",
    "cumulative_profile",
    "demand_capacity_figure",
    "length_profile",
    "queue_length_figure",
    "queue_profile",
    "render",
    "tick_step_h",
    "time_axis",
]

#: Line and fill shades (grey levels, black and white printing).
INK = "0.0"
MID = "0.35"
LIGHT = "0.6"
CLOSURE_FILL = "0.90"
QUEUE_FILL = "0.78"

#: Hours of context drawn either side of a queue in the cumulative diagram.
CONTEXT_H = 1.0

#: The charts' font: shipped with matplotlib, and embedded by the report too.
FONT_FAMILY = "DejaVu Sans"

RC = {
    "font.family": FONT_FAMILY,
    "font.size": 8.0,
    "axes.titlesize": 8.5,
    "axes.labelsize": 8.0,
    "legend.fontsize": 7.5,
    "xtick.labelsize": 7.0,
    "ytick.labelsize": 7.0,
    "axes.linewidth": 0.6,
    "axes.edgecolor": INK,
    "axes.grid": True,
    "grid.color": "0.85",
    "grid.linewidth": 0.4,
    "svg.fonttype": "none",  # text stays text (the report maps the font)
    "svg.hashsalt": "wzq-report",
    "figure.dpi": 100,
}


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


def _dates(result: Result, seconds: np.ndarray) -> np.ndarray:
    start = np.datetime64(result.plan.demand.start, "ms")
    stamps = start + (np.asarray(seconds, dtype=float) * 1000).round().astype("timedelta64[ms]")
    return mdates.date2num(stamps)


#: Hours between time-axis labels (each divides a day, or whole days).
TICK_STEPS_H = (1, 2, 3, 4, 6, 12, 24, 48, 72, 168)
#: Room (inches) a time label needs on the axis, gap included: clock times, and
#: day names (``Wed 08 Sep``) at midnight, at the charts' tick font size.
CLOCK_LABEL_IN = 0.55
DAY_LABEL_IN = 0.85


def tick_step_h(span_h: float, width_in: float) -> int:
    """Hours between labels on a time axis ``width_in`` inches long spanning ``span_h``
    hours: the smallest step whose labels do not run into each other."""
    for step in TICK_STEPS_H:
        room = DAY_LABEL_IN if span_h > 24 or step >= 24 else CLOCK_LABEL_IN
        if span_h / step * room <= width_in:
            return step
    return TICK_STEPS_H[-1]


def time_axis(ax, span_h: float, width_in: float | None = None) -> None:
    """Clock labels on a time axis: hours, the day named at each midnight
    (``Wed 08 Sep``), spaced so that no two labels overlap on an axis ``width_in``
    inches long (default: the axes' width in the figure as laid out so far)."""
    if width_in is None:
        width_in = ax.get_position().width * ax.figure.get_figwidth()
    step = tick_step_h(span_h, width_in)
    if step < 24:
        locator = mdates.HourLocator(byhour=range(0, 24, step))
    else:
        locator = mdates.DayLocator(interval=step // 24)
    formatter = mdates.ConciseDateFormatter(
        locator,
        formats=["%Y", "%b", "%a %d %b", "%H:%M", "%H:%M", "%S"],
        zero_formats=["", "%Y", "%b", "%a %d %b", "%H:%M", "%H:%M"],
        offset_formats=["", "", "", "", "", ""],
    )
    ax.xaxis.set_major_locator(locator)
    ax.xaxis.set_major_formatter(formatter)


def _shade_closures(ax, result: Result) -> bool:
    """Shade the closure periods; True when there is at least one."""
    start = result.plan.demand.start
    for c in result.plan.closures:
        a = (c.start - start).total_seconds()
        b = (c.end - start).total_seconds()
        x0, x1 = _dates(result, np.array([a, b]))
        ax.axvspan(x0, x1, color=CLOSURE_FILL, lw=0, zorder=0)
    return bool(result.plan.closures)


def _frame(ax) -> None:
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


#: Fixed margins (inches) so the time axes of stacked charts line up.
LEFT_IN, RIGHT_IN, BOTTOM_IN, TOP_IN = 0.8, 0.2, 0.45, 0.35


def _margins(fig: Figure, *, top_in: float = TOP_IN, wspace: float = 0.2) -> None:
    w, h = fig.get_size_inches()
    fig.subplots_adjust(
        left=LEFT_IN / w,
        right=1 - RIGHT_IN / w,
        bottom=BOTTOM_IN / h,
        top=1 - top_in / h,
        wspace=wspace,
        hspace=0.45,
    )


def demand_capacity_figure(result: Result, width_in: float, height_in: float) -> Figure:
    """Demand, capacity before breakdown and queue discharge rate (veh/h) by interval."""
    iv = result.intervals
    x = _dates(result, result.boundaries_s)
    with mpl.rc_context(RC):
        fig = Figure(figsize=(width_in, height_in))
        ax = fig.add_subplot()
        closures = _shade_closures(ax, result)

        def step(values: np.ndarray, **kw) -> None:
            # a plain line drawn as steps (not a patch): converts cleanly to vector form
            ax.plot(x, np.append(values, values[-1]), drawstyle="steps-post", **kw)

        step(iv["demand_veh_h"].to_numpy(), color=INK, lw=1.4, label="Demand")
        step(
            iv["capacity_veh_h"].to_numpy(),
            color=MID,
            lw=1.1,
            ls=(0, (5, 2)),
            label="Capacity (before breakdown)",
        )
        discharge = iv["discharge_veh_h"].to_numpy()
        if np.any(discharge < iv["capacity_veh_h"].to_numpy() - 0.5):
            step(discharge, color=INK, lw=0.9, ls=(0, (1, 1.5)), label="Queue discharge rate")
        handles, labels = ax.get_legend_handles_labels()
        if closures:
            handles.append(Patch(facecolor=CLOSURE_FILL, edgecolor="0.7", lw=0.5))
            labels.append("Lane closure in force")
        ax.legend(
            handles, labels, loc="lower left", bbox_to_anchor=(0, 1.01), ncol=4, frameon=False
        )
        ax.set_ylabel("Flow (veh/h)")
        ax.set_ylim(bottom=0)
        ax.set_xlim(x[0], x[-1])
        ax.yaxis.set_major_formatter(mpl.ticker.StrMethodFormatter("{x:,.0f}"))
        _frame(ax)
        _margins(fig)
        time_axis(ax, result.duration_s / HOUR)
    return fig


def queue_length_figure(result: Result, width_in: float, height_in: float) -> Figure:
    """Queue length over time in the plan's long-distance unit, with the limit."""
    system = result.plan.site.unit_system
    long_name, long_m = u.LONG_LENGTH[system]
    prof = length_profile(result)
    x = _dates(result, prof.t)
    y = prof.values["queue_length_m"] / long_m
    limit = result.plan.thresholds.max_queue_length
    with mpl.rc_context(RC):
        fig = Figure(figsize=(width_in, height_in))
        ax = fig.add_subplot()
        closures = _shade_closures(ax, result)
        ax.fill_between(x, 0, y, color=QUEUE_FILL, lw=0, zorder=1)
        ax.plot(x, y, color=INK, lw=1.2, label="Queue length", zorder=3)
        top = float(y.max()) if len(y) else 0.0
        if limit is not None:
            lim = limit / long_m
            ax.axhline(
                lim,
                color=INK,
                lw=0.9,
                ls=(0, (6, 3)),
                label=f"Queue limit ({lim:,.2f} {long_name})",
            )
            top = max(top, lim)
        top = _landmark_lines(ax, result, top)
        ax.set_ylim(0, top * 1.18 if top > 0 else 1.0)
        h = result.hourly
        failing = h["status"].to_numpy() != "ok"
        if failing.any():
            starts = np.flatnonzero(failing) * HOUR
            trans = mpl.transforms.blended_transform_factory(ax.transData, ax.transAxes)
            for s in starts:
                x0, x1 = _dates(result, np.array([s, s + HOUR]))
                ax.add_patch(
                    mpl.patches.Rectangle(
                        (x0, 0.955), x1 - x0, 0.045, transform=trans, color=INK, lw=0, zorder=4
                    )
                )
        handles, labels = ax.get_legend_handles_labels()
        if failing.any():
            handles.append(Patch(facecolor=INK))
            labels.append("Hour over a limit (bar at top)")
        if closures:
            handles.append(Patch(facecolor=CLOSURE_FILL, edgecolor="0.7", lw=0.5))
            labels.append("Lane closure in force")
        ax.legend(
            handles, labels, loc="lower left", bbox_to_anchor=(0, 1.01), ncol=4, frameon=False
        )
        if top <= 0:
            ax.text(0.5, 0.5, "No queue forms", transform=ax.transAxes, ha="center", va="center")
        ax.set_ylabel(f"Queue length ({long_name})")
        ax.set_xlim(_dates(result, np.array([0.0, result.duration_s])))
        _frame(ax)
        _margins(fig)
        time_axis(ax, result.duration_s / HOUR)
    return fig


def _landmark_lines(ax, result: Result, top: float) -> float:
    """Each charted landmark (:func:`wzq.present.tables.charted_landmarks`) as a thin
    dash-dot line at its distance, named at the left end; returns the new top."""
    long_name, long_m = u.LONG_LENGTH[result.plan.site.unit_system]
    limit = result.plan.thresholds.queue_must_not_pass
    for k, lm in enumerate(charted_landmarks(result)):
        y = lm.distance / long_m
        label = "Landmark upstream (named)" if k == 0 else None
        is_limit = lm.name == limit
        ax.axhline(
            y,
            color=INK if is_limit else MID,
            lw=1.0 if is_limit else 0.6,
            ls=(0, (6, 2, 1, 2)),
            zorder=2,
            label=label,
        )
        ax.annotate(
            f"{lm.name} ({y:,.2f} {long_name})" + (": queue must not pass" if is_limit else ""),
            xy=(0.005, y),
            xycoords=("axes fraction", "data"),
            xytext=(0, 1.5),
            textcoords="offset points",
            ha="left",
            va="bottom",
            fontsize=6.5,
            color=INK,
            zorder=4,
        )
        top = max(top, y)
    return top


def cumulative_figure(result: Result, width_in: float, height_in: float) -> Figure:
    """Cumulative arrivals and departures around each queue (input-output diagram)."""
    prof = cumulative_profile(result)
    total = result.duration_s
    eps, _ = shown_episodes(result)
    windows = [(*episode_window(result, e, CONTEXT_H), e) for e in eps] or [(0.0, total, None)]
    n = len(windows)
    cols = n if n <= 3 else (2 if n == 4 else 3)
    rows = int(np.ceil(n / cols))
    with mpl.rc_context(RC):
        fig = Figure(figsize=(width_in, height_in))
        axes = fig.subplots(rows, cols, squeeze=False)
        for k, (a, b, ep) in enumerate(windows):
            ax = axes[k // cols][k % cols]
            t = np.concatenate(([a], prof.t[(prof.t > a) & (prof.t < b)], [b]))
            arr = np.interp(t, prof.t, prof.values["arrivals"])
            dep = np.interp(t, prof.t, prof.values["departures"])
            base = dep[0]  # count vehicles from the window start
            x = _dates(result, t)
            ax.fill_between(x, dep - base, arr - base, color=QUEUE_FILL, lw=0, label="Queue")
            ax.plot(x, arr - base, color=INK, lw=1.2, label="Cumulative arrivals")
            ax.plot(x, dep - base, color=INK, lw=1.1, ls=(0, (4, 2)), label="Cumulative departures")
            if ep is not None:
                xm = _dates(result, np.array([ep.max_at]))[0]
                ym_a = np.interp(ep.max_at, prof.t, prof.values["arrivals"]) - base
                ym_d = np.interp(ep.max_at, prof.t, prof.values["departures"]) - base
                ax.annotate(
                    "",
                    xy=(xm, ym_a),
                    xytext=(xm, ym_d),
                    arrowprops=dict(arrowstyle="<->", color=INK, lw=0.7, shrinkA=0, shrinkB=0),
                )
                ax.annotate(
                    f"{ep.max_queue_veh:,.0f} veh",
                    xy=(xm, 0.5 * (ym_a + ym_d)),
                    xytext=(4, 0),
                    textcoords="offset points",
                    ha="left",
                    va="center",
                    fontsize=7,
                    bbox=dict(boxstyle="square,pad=0.15", fc="white", ec="none"),
                )
                ax.set_title(episode_title(result, ep), loc="left")
            else:
                ax.set_title("No queue forms: departures follow arrivals", loc="left")
            ax.set_xlim(x[0], x[-1])
            ax.set_ylim(bottom=0)
            ax.yaxis.set_major_formatter(mpl.ticker.StrMethodFormatter("{x:,.0f}"))
            if k % cols == 0:
                ax.set_ylabel("Vehicles since window start")
            _frame(ax)
        for k in range(n, rows * cols):
            axes[k // cols][k % cols].set_visible(False)
        handles, labels = axes[0][0].get_legend_handles_labels()
        fig.legend(
            handles,
            labels,
            loc="upper left",
            bbox_to_anchor=(LEFT_IN / width_in, 1.0),
            ncol=3,
            frameon=False,
        )
        _margins(fig, top_in=0.6)
        for k, (a, b, _) in enumerate(windows):
            time_axis(axes[k // cols][k % cols], (b - a) / HOUR)
    return fig


def render(fig: Figure, fmt: str = "svg", dpi: int = 200) -> bytes:
    """The figure as SVG (text as text, stable ids) or PNG bytes."""
    buf = io.BytesIO()
    with mpl.rc_context(RC):
        fig.savefig(buf, format=fmt, dpi=dpi, metadata={"Date": None} if fmt == "svg" else None)
    return buf.getvalue()
