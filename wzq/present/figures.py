"""matplotlib helpers for the report's space-time picture and risk fan chart (no
pyplot, no global state): the charts' style (:data:`RC`), the clock labels of a time
axis, fixed margins, and :func:`render` to SVG or PNG bytes.

The report's demand, queue-length and cumulative charts are drawn without
matplotlib (:mod:`wzq.present.drawings`); the shades, margins and time-axis
spacing shared with them are defined there and imported here, so that every
chart of the report looks alike.
"""

from __future__ import annotations

import io

import matplotlib as mpl
import matplotlib.dates as mdates
import numpy as np
from matplotlib.figure import Figure

from wzq.engine.results import Result
from wzq.present.drawings import (  # noqa: F401  (the charts' shared look, re-exported)
    BOTTOM_IN,
    CLOCK_LABEL_IN,
    CLOSURE_FILL,
    CONTEXT_H,
    DAY_LABEL_IN,
    INK,
    LEFT_IN,
    LIGHT,
    MID,
    QUEUE_FILL,
    RIGHT_IN,
    TICK_STEPS_H,
    TOP_IN,
    tick_step_h,
)

__all__ = [
    "FONT_FAMILY",
    "RC",
    "render",
    "time_axis",
]

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


def _dates(result: Result, seconds: np.ndarray) -> np.ndarray:
    start = np.datetime64(result.plan.demand.start, "ms")
    stamps = start + (np.asarray(seconds, dtype=float) * 1000).round().astype("timedelta64[ms]")
    return mdates.date2num(stamps)


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


def _frame(ax) -> None:
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


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


def render(fig: Figure, fmt: str = "svg", dpi: int = 200) -> bytes:
    """The figure as SVG (text as text, stable ids) or PNG bytes."""
    buf = io.BytesIO()
    with mpl.rc_context(RC):
        fig.savefig(buf, format=fmt, dpi=dpi, metadata={"Date": None} if fmt == "svg" else None)
    return buf.getvalue()
