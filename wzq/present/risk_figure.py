"""The fan chart of the printed report: the longest queue's percentiles over the
scenarios of a risk assessment, hour by hour (:class:`wzq.engine.risk.RiskResult`).

Bands from zero to the median, to the 85th and to the 95th percentile of each
hour's longest queue across the scenarios, in grey shades that print in black
and white like the report's other charts (:mod:`wzq.present.figures`); over them
the design demand's own longest queue and the agency's queue-length limit.
"""

from __future__ import annotations

import matplotlib as mpl
import matplotlib.dates as mdates
import numpy as np
from matplotlib.figure import Figure
from matplotlib.patches import Patch

from wzq import units as u
from wzq.engine.results import Result
from wzq.engine.risk import RiskResult
from wzq.present import figures as F
from wzq.present.tables import limit_text

__all__ = ["BAND_SHADES", "CONTEXT_HOURS", "fan_figure"]

#: Grey of the bands, from the median (darkest) out to the 95th percentile (palest).
BAND_SHADES = ("0.25", "0.5", "0.72")


#: Hours drawn before the first closure and after the last queue (or closure) ends.
CONTEXT_HOURS = 2


def _span(risk: RiskResult) -> tuple[int, int]:
    """The hours drawn, ``[a, b)``: from :data:`CONTEXT_HOURS` before the first closure
    to as long after the last closure ends or the last 95th-percentile queue clears;
    the whole period when there is no closure and no queue."""
    h = risk.hourly
    n = len(h)
    start = risk.plan.demand.start
    hours = [(c.start - start).total_seconds() / 3600 for c in risk.plan.closures]
    ends = [(c.end - start).total_seconds() / 3600 for c in risk.plan.closures]
    queued = np.flatnonzero(~(h["queue_length_p95_m"].to_numpy(float) <= 0))  # NaN: not known
    if not hours and not len(queued):
        return 0, n
    first = min([*hours, *(queued[:1] if len(queued) else [])])
    last = max([*ends, *((queued[-1] + 1,) if len(queued) else ())])
    return max(0, int(first) - CONTEXT_HOURS), min(n, int(np.ceil(last)) + CONTEXT_HOURS)


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """The runs of consecutive true values of ``mask``, as ``[a, b)`` index pairs."""
    edges = np.flatnonzero(np.diff(np.concatenate(([0], mask.astype(np.int8), [0]))))
    return list(zip(edges[::2].tolist(), edges[1::2].tolist(), strict=True))


def fan_figure(risk: RiskResult, design: Result, width_in: float, height_in: float) -> Figure:
    """Longest queue by hour over the scenarios: median, 85th and 95th percentiles as
    stepped bands, the design demand's longest queue by hour, the queue-length limit."""
    plan = risk.plan
    long_name, long_m = u.LONG_LENGTH[plan.site.unit_system]
    h = risk.hourly
    starts = h["hour_start"].to_numpy(dtype="datetime64[ms]")
    edges = np.append(starts, starts[-1] + np.timedelta64(3600_000, "ms"))
    x = mdates.date2num(edges)

    def stepped(values: np.ndarray) -> np.ndarray:
        return np.append(values, values[-1]) / long_m

    bands = [stepped(h[f"queue_length_p{p}_m"].to_numpy(float)) for p in (50, 85, 95)]
    own = stepped(design.hourly["queue_length_max_m"].to_numpy(float))
    limit = plan.thresholds.max_queue_length
    n = len(risk.runs)
    with mpl.rc_context(F.RC):
        fig = Figure(figsize=(width_in, height_in))
        ax = fig.add_subplot()
        for c in plan.closures:
            a, b = (mdates.date2num(np.datetime64(t, "ms")) for t in (c.start, c.end))
            ax.axvspan(a, b, color=F.CLOSURE_FILL, lw=0, zorder=0)
        lower = np.zeros_like(bands[0])
        labels = ("Median", "To the 85th percentile", "To the 95th percentile")
        handles: list = []
        for band, shade, label in zip(bands, BAND_SHADES, labels, strict=True):
            ax.fill_between(x, lower, band, step="post", color=shade, lw=0, zorder=1)
            handles.append(Patch(facecolor=shade, label=label))
            lower = band
        # the 95th percentile is the first that a scenario holding traffic makes unknown
        unknown = np.isnan(h["queue_length_p95_m"].to_numpy(float))
        for a, b in _runs(unknown):
            ax.axvspan(x[a], x[b], facecolor="none", edgecolor=F.INK, ls=":", lw=0.8, zorder=2)
        if unknown.any():
            handles.append(
                Patch(facecolor="none", edgecolor=F.INK, ls=":", lw=0.8,
                      label="Percentile not known (traffic held beyond the approach)")
            )  # fmt: skip
        (line,) = ax.plot(
            x, own, drawstyle="steps-post", color=F.INK, lw=1.2, label="Design demand", zorder=3
        )
        handles.append(line)
        top = float(np.nanmax(np.append(bands[2], own)))
        if limit is not None:
            lim = limit / long_m
            handles.append(
                ax.axhline(
                    lim,
                    color=F.INK,
                    lw=0.9,
                    ls=(0, (6, 3)),
                    label=f"Queue limit ({limit_text(lim, 2)} {long_name})",
                )
            )
            top = max(top, lim)
        if plan.closures:
            handles.append(Patch(facecolor=F.CLOSURE_FILL, edgecolor="0.7", lw=0.5))
            handles[-1].set_label("Lane closure in force")
        ax.legend(
            handles=handles, loc="lower left", bbox_to_anchor=(0, 1.01), ncol=3, frameon=False
        )
        if top <= 0:
            ax.text(
                0.5,
                0.5,
                f"No queue forms in any of the {n:,} scenarios",
                transform=ax.transAxes,
                ha="center",
                va="center",
            )
        ax.set_ylim(0, top * 1.12 if top > 0 else 1.0)
        a, b = _span(risk)
        ax.set_xlim(x[a], x[b])
        ax.set_ylabel(f"Longest queue ({long_name})")
        F._frame(ax)
        F._margins(fig, top_in=0.62)
        F.time_axis(ax, float(b - a))
    return fig
