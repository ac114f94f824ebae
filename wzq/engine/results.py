"""What the engine returns: the arrays on the time grid (:class:`Run`), the headline
figures (:class:`Summary`) and the result of an analysis (:class:`Result`), all frozen.

A :class:`Result` holds named outputs: the per-hour table (``hourly``), the
intervals of the exact solution (``intervals``), the back-of-queue trajectory
(``back_of_queue``), the summary, the warnings, and the landmark and exit-ramp
tables. Outputs (sheets, charts, report, terminal) read those.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, replace
from functools import cached_property
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    import pandas as pd

from wzq.engine import approach
from wzq.engine.plan import Plan
from wzq.engine.site import SiteModel
from wzq.models import newell
from wzq.models.queueing import QueueRun
from wzq.units import HOUR

__all__ = [
    "Result",
    "Run",
    "Summary",
    "clock",
    "hourly_frame",
    "landmark_results",
    "queue_trajectory",
]


@dataclass(frozen=True)
class Run:
    """The engine's arrays on the time grid (``m`` intervals, ``m+1`` boundaries).

    Times are seconds from the start of the demand; flows veh/h; queue in
    vehicles; lengths metres; delays vehicle-seconds.
    """

    plan: Plan
    model: SiteModel
    t: np.ndarray
    closure: np.ndarray  # index into plan.closures, -1 when open
    lanes_open: np.ndarray
    demand_veh_h: np.ndarray
    prebreakdown_veh_h: np.ndarray
    discharge_veh_h: np.ndarray
    queue: QueueRun
    length_start: np.ndarray
    length_end: np.ndarray
    work_zone_delay: np.ndarray
    held_veh: np.ndarray  # vehicles held back, most per interval (queue_length.held_back)
    back_of_queue: newell.NewellQueue | None = None
    sections: approach.SectionsRun | None = None  # the approach's ramps, when it has any

    @property
    def length_method(self) -> str:
        """``"newell"`` or ``"shockwave"``: how queue lengths were found."""
        return "shockwave" if self.back_of_queue is None else "newell"

    @property
    def duration(self) -> np.ndarray:
        return np.diff(self.t)

    def clock(self, seconds: np.ndarray | float) -> pd.DatetimeIndex:
        import pandas as pd  # imported when used: slow to import

        return pd.Timestamp(self.plan.demand.start) + pd.to_timedelta(seconds, unit="s")


@dataclass(frozen=True)
class Summary:
    """Headline figures of a run (SI; times as local clock)."""

    max_queue_length_m: float
    max_queue_length_at: dt.datetime | None
    max_queue_veh: float
    max_queue_veh_at: dt.datetime | None
    total_delay_veh_h: float
    queue_delay_veh_h: float
    work_zone_delay_veh_h: float
    vehicles_affected: float
    max_average_delay_min: float
    max_queue_wait_min: float
    last_queue_clears: dt.datetime | None
    queue_at_end_veh: float
    hours_failing: tuple[dt.datetime, ...]
    total_cost: float | None = None
    exit_ramp_delay_veh_h: float = 0.0  # traffic for exit ramps held in the queue


@dataclass(frozen=True, eq=False)
class Result:
    """What :func:`wzq.analyse` returns: the per-hour table, the summary and the
    warnings, and (computed when first asked for) the intervals, the back-of-queue
    trajectory and the landmark and exit-ramp tables.

    ``run`` holds the engine's arrays on its time grid; outputs read the named
    tables instead. Frozen: :meth:`with_warnings` gives a result with more warnings.
    """

    run: Run
    #: The per-hour columns (:func:`wzq.engine.hourly.hour_columns`: numpy arrays,
    #: ``hour_start`` as datetimes), what :attr:`hourly` shows as a table.
    hours: dict[str, np.ndarray]
    summary: Summary
    warnings: tuple[str, ...] = ()

    @cached_property
    def hourly(self) -> pd.DataFrame:
        """The per-hour table: demand, capacity, queue, length, delay and the checks
        against the limits (:func:`wzq.engine.hourly.hourly_table`)."""
        return hourly_frame(self.hours, self.run.plan.demand.start)

    @property
    def plan(self) -> Plan:
        return self.run.plan

    def with_warnings(self, more: list[str] | tuple[str, ...]) -> Result:
        """The same result with ``more`` warnings after its own (notes of a save ...)."""
        return replace(self, warnings=(*self.warnings, *more))

    @cached_property
    def back_of_queue(self) -> pd.DataFrame:
        """The back of the queue against time, piecewise linear: ``time`` (local clock),
        ``seconds`` (from the start of the demand) and ``distance_m`` upstream of the
        taper (Newell's trajectory, or the single-state lengths joined within each
        interval)."""
        import pandas as pd  # imported when used: slow to import

        times, dist = queue_trajectory(self.run)
        return pd.DataFrame({"time": self.run.clock(times), "seconds": times, "distance_m": dist})

    @property
    def duration_s(self) -> float:
        """Length of the analysed period (s, from the start of the demand)."""
        return float(self.run.t[-1])

    @property
    def boundaries_s(self) -> np.ndarray:
        """The boundaries of the intervals of :attr:`intervals` (s from the demand start)."""
        return self.run.t

    @property
    def interval_closure(self) -> np.ndarray:
        """Per row of :attr:`intervals`: the closure in force (index into
        ``plan.closures``), -1 on the open road."""
        return self.run.closure

    @property
    def length_method(self) -> str:
        """``"newell"`` or ``"shockwave"``: how queue lengths were found."""
        return self.run.length_method

    @property
    def site_model(self) -> SiteModel:
        """Values derived from the site: free-flow speed, factors, base capacity, jam
        density and the fundamental diagram."""
        return self.run.model

    def clock(self, seconds: np.ndarray | float) -> pd.DatetimeIndex:
        """Seconds from the start of the demand as local clock times."""
        return self.run.clock(seconds)

    def _clearing(self) -> tuple[np.ndarray, np.ndarray]:
        """Per interval: the instant (s) a standing queue clears inside it, else NaN; and a
        mask."""
        r = self.run
        q = r.queue
        q0, q1 = q.queue[:-1], q.queue[1:]
        inside = (q0 > 0) & (q1 == 0) & (q.busy < r.duration)
        return np.where(inside, r.t[:-1] + q.busy, np.nan), inside

    @cached_property
    def queue_profile(self) -> pd.DataFrame:
        """The point queue (``queue_veh``) and its single-state length
        (``queue_length_m``) against ``seconds``, as an exact polyline: each interval
        gives its start, the instant its queue clears (when it clears inside it) and its
        end; a change of queued state at a boundary is a vertical step in the length."""
        import pandas as pd  # imported when used: slow to import

        r = self.run
        q = r.queue
        tc, inside = self._clearing()
        zero_mid = np.where(inside, 0.0, np.nan)
        t = _interleave(r.t[:-1], tc, r.t[1:])
        veh = _interleave(q.queue[:-1], zero_mid, q.queue[1:])
        length = _interleave(r.length_start, zero_mid, r.length_end)
        keep = ~np.isnan(t)
        return pd.DataFrame(
            {"seconds": t[keep], "queue_veh": veh[keep], "queue_length_m": length[keep]}
        )

    @cached_property
    def cumulative(self) -> pd.DataFrame:
        """The exact corner points of the cumulative arrival and departure curves (veh)
        over the whole period, against ``seconds``: the interval boundaries and the
        instants a queue clears inside an interval (where the curves meet)."""
        import pandas as pd  # imported when used: slow to import

        names = ("seconds", "arrivals", "departures")
        return pd.DataFrame(dict(zip(names, self.cumulative_curves, strict=True)))

    @cached_property
    def cumulative_curves(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """:attr:`cumulative` as arrays: seconds, arrivals, departures."""
        r = self.run
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
        seconds = np.array(times, dtype=float)
        # in time order (the sort pandas' sort_values makes), the first of equal times kept
        order = seconds.argsort(kind="quicksort")
        seconds = seconds[order]
        first = np.concatenate(([True], seconds[1:] != seconds[:-1]))
        keep = order[first]
        return seconds[first], np.array(arr, dtype=float)[keep], np.array(dep, dtype=float)[keep]

    @cached_property
    def queues(self) -> pd.DataFrame:
        """Every busy period (from the instant a queue forms until it clears), in time
        order: ``start_s``, ``end_s``, ``max_queue_veh`` and ``max_at_s``."""
        import pandas as pd  # imported when used: slow to import

        columns = ["start_s", "end_s", "max_queue_veh", "max_at_s"]
        return pd.DataFrame(list(self.busy_periods), columns=columns)

    @cached_property
    def busy_periods(self) -> tuple[tuple[float, float, float, float], ...]:
        """:attr:`queues` as rows ``(start_s, end_s, max_queue_veh, max_at_s)``."""
        r = self.run
        q = r.queue
        busy = q.busy > 0
        rows: list[tuple[float, float, float, float]] = []
        if busy.any():
            edges = np.diff(np.concatenate(([0], busy.astype(np.int8), [0])))
            for a, b in zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1), strict=True):
                end = float(r.t[b - 1] + q.busy[b - 1])
                seg = q.queue[a : b + 1]
                j = int(np.argmax(seg))
                rows.append((float(r.t[a]), end, float(seg[j]), float(r.t[a + j])))
        return tuple(rows)

    @cached_property
    def intervals(self) -> pd.DataFrame:
        """One row per interval of the exact solution (for cumulative-curve charts)."""
        import pandas as pd  # imported when used: slow to import

        r = self.run
        q = r.queue
        return pd.DataFrame(
            {
                "start": r.clock(r.t[:-1]),
                "end": r.clock(r.t[1:]),
                "lanes_open": r.lanes_open,
                "demand_veh_h": r.demand_veh_h,
                "capacity_veh_h": r.prebreakdown_veh_h,
                "discharge_veh_h": r.discharge_veh_h,
                "queue_start_veh": q.queue[:-1],
                "queue_end_veh": q.queue[1:],
                "queue_length_start_m": r.length_start,
                "queue_length_end_m": r.length_end,
                "arrivals_cum_veh": q.arrivals_cum[1:],
                "departures_cum_veh": q.departures_cum[1:],
                "delay_veh_h": (q.delay + r.work_zone_delay) / HOUR,
            }
        )

    @cached_property
    def landmark_results(self) -> tuple[approach.LandmarkResult, ...]:
        """Per landmark of the approach: where the back of the queue stood against it."""
        return landmark_results(self.run, self.hours)

    @cached_property
    def landmarks(self) -> pd.DataFrame:
        """One row per landmark (nearest the closure first): ``name``, ``kind``,
        ``distance_m``, ``first_reached`` (local clock, ``NaT``: never),
        ``time_beyond_h``, ``max_beyond_m``, ``hours_beyond`` (how many hours
        the back of the queue was beyond it at some instant)."""
        import pandas as pd  # imported when used: slow to import

        rows = sorted(self.landmark_results, key=lambda r: r.landmark.distance)
        first = [
            None if r.first_reached_s is None else clock(self.run, r.first_reached_s) for r in rows
        ]
        return pd.DataFrame(
            {
                "name": [r.landmark.name for r in rows],
                "kind": [r.landmark.kind for r in rows],
                "distance_m": np.array([r.landmark.distance for r in rows], dtype=float),
                "first_reached": pd.to_datetime(pd.Series(first, dtype=object)),
                "time_beyond_h": np.array([r.time_beyond_s / HOUR for r in rows], dtype=float),
                "max_beyond_m": np.array([r.max_beyond_m for r in rows], dtype=float),
                "hours_beyond": np.array([int(r.hours_beyond.sum()) for r in rows], dtype=int),
            }
        )

    @cached_property
    def landmark_hours(self) -> pd.DataFrame:
        """Per hour, per landmark (a column named after it): the back of the queue
        was beyond it at some instant of the hour."""
        import pandas as pd  # imported when used: slow to import

        cols: dict[str, object] = {"hour_start": self.hourly["hour_start"]}
        for r in sorted(self.landmark_results, key=lambda r: r.landmark.distance):
            cols[r.landmark.name] = r.hours_beyond
        return pd.DataFrame(cols)

    @cached_property
    def exit_ramps(self) -> pd.DataFrame:
        """Per exit ramp the queue reached or not: ``name``, ``distance_m``,
        ``delay_veh_h`` (the exiting traffic held in the queue) and
        ``max_wait_min`` (the longest extra time of one exiting vehicle; NaN with
        the single-state relation)."""
        import pandas as pd  # imported when used: slow to import

        sec = self.run.sections
        exits = () if sec is None else sec.exits
        return pd.DataFrame(
            {
                "name": [e.name for e in exits],
                "distance_m": np.array([e.distance for e in exits], dtype=float),
                "delay_veh_h": np.array([e.total_veh_h for e in exits], dtype=float),
                "max_wait_min": np.array(
                    [np.nan if e.max_wait_s is None else e.max_wait_s / 60.0 for e in exits],
                    dtype=float,
                ),
            }
        )


def hourly_frame(columns: dict[str, np.ndarray], start: dt.datetime) -> pd.DataFrame:
    """The per-hour columns of :func:`wzq.engine.hourly.hour_columns` as a table, ``hour_start`` a
    ``DatetimeIndex`` (hourly from ``start``)."""
    import pandas as pd  # imported when used: slow to import

    n = len(columns["hour_start"])
    return pd.DataFrame({**columns, "hour_start": pd.date_range(start, periods=n, freq="h")})


_EPOCH = dt.datetime(1970, 1, 1)
_NS = 1_000_000_000


def clock_to_second(start: dt.datetime, seconds: np.ndarray) -> list[dt.datetime]:
    """The local clock of each time (s from ``start``), to the nearest second (half to
    even), as datetimes: what pandas gives for ``(Timestamp(start) + to_timedelta(
    seconds, unit="s")).round("s")``, the seconds counted in whole nanoseconds as it
    counts them, without importing it (slow to import)."""
    x = np.asarray(seconds, dtype=float)
    base = x.astype(np.int64)
    ns = base * _NS + (np.round(x - base, 9) * _NS).astype(np.int64)
    delta = start - _EPOCH
    ns += (delta.days * 86_400 + delta.seconds) * _NS + delta.microseconds * 1000
    whole, rest = np.divmod(ns, _NS)
    whole += (rest > _NS // 2) | ((rest == _NS // 2) & (whole % 2 == 1))
    return [_EPOCH + dt.timedelta(seconds=s) for s in whole.tolist()]


def _interleave(start: np.ndarray, mid: np.ndarray, end: np.ndarray) -> np.ndarray:
    """Rows ``(start_i, mid_i, end_i)`` flattened; ``mid`` is NaN where unused."""
    return np.column_stack((start, mid, end)).ravel()


def queue_trajectory(r: Run) -> tuple[np.ndarray, np.ndarray]:
    """The back of the queue against time (s, m), piecewise linear: Newell's
    trajectory, or the single-state lengths joined within each interval."""
    if r.back_of_queue is not None:
        return r.back_of_queue.times, r.back_of_queue.distance
    if r.sections is not None:
        return r.sections.times, r.sections.distance
    return approach.trajectory_of_lengths(r.queue, r.length_start, r.length_end)


def landmark_results(r: Run, hourly: Any) -> tuple[approach.LandmarkResult, ...]:
    """:func:`wzq.engine.approach.landmark_results` for a run and its per-hour columns
    (:attr:`Result.hours`, or the table)."""
    landmarks = r.plan.approach.landmarks
    if not landmarks:
        return ()
    times, dist = queue_trajectory(r)
    lmax = np.asarray(hourly["queue_length_max_m"], dtype=float)
    return approach.landmark_results(landmarks, times, dist, lmax)


def clock(r: Run, seconds: float) -> dt.datetime:
    return r.plan.demand.start + dt.timedelta(seconds=round(float(seconds), 3))
