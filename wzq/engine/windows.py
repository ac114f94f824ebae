"""Allowable closure windows: when may a lane configuration be in place at all?

For one site, one or more demand profiles ("day types") and the agency's limits,
this module finds, for each lane configuration (lanes closed out of the lanes
in normal operation, e.g. 1 of 3 and 2 of 3), every closure period ``(s, e)``
on the demand's time grid that keeps **the whole run** within the limits: the
closure's configuration is in force during ``[s, e)`` and all lanes are open
before and after, so the queue a closure leaves behind when it ends is counted
in the hours that follow. From that exact set it reports the hours in which a
closure may be in place, the longest allowable windows and, for a requested
duration (work plus set-up and take-down), every feasible start.

Method. Agencies publish hourly charts of permitted closure hours built from
demand against the capacity each configuration leaves, and a limit on queue
length, added delay or demand/capacity (FHWA work-zone fact sheets; see
REFERENCES.md, "Agency limits for allowing closures"). Here each candidate is
judged by the engine itself: capacity, discharge rate and work-zone travel time
from :func:`wzq.engine.site.configuration` (HCM 6th/7th ed. ch. 10 or HCM 2000
short-term work zones, the night-time term from the clock as :func:`wzq.analyse`
does), the exact deterministic queue with the capacity drop
(:func:`wzq.models.queueing.solve`), the queue length by the plan's method (Newell's
kinematic wave, :func:`newell_lengths`, or the single-state shockwave relation,
:func:`shockwave_lengths`) and the per-hour checks of
:func:`wzq.engine.hourly.hourly_table`. The verdict for a window is the verdict
:func:`wzq.analyse` gives a plan with that one closure.

Speed without approximation. Three facts about the run make testing every
start and end cheap while staying exact:

1. the run is causal: a closure ``(s, e)`` and the closure that starts at
   ``s`` and never ends, ``(s, end of data)``, have identical arrays before
   ``e``; so once that open-ended run fails an hour ending at or before ``e``,
   every closure ``(s, e')`` with ``e' >= e`` fails too (no monotonicity is
   assumed, only identity of the arrays);
2. after an instant at which both the closure's queue and the all-lanes-open
   queue are empty, the closure's run *is* the all-lanes-open run (the queue
   restarts from nothing; for Newell's method the back of the queue reaches
   the bottleneck when the point queue clears, and a queue that forms later
   reaches back less than ``w`` times its age);
3. only the closures that leave a queue standing when they end need a run of
   their own.

A queue-length function (:data:`LengthFn`) gives the longest queue within each
interval and must share these properties (causal, and forgetting the past once
the queue is empty); :data:`LENGTH_METHODS` maps the plan's
``queue_length_method`` to it. Newell's construction holds demand above the
approach's own capacity back beyond its upstream end, which breaks fact 2;
for such demand every candidate is run in full, as with ``exhaustive=True``
(slow; also for checking and for a length method without these properties).

Everything is pure (no I/O). Times inside are indices on the demand grid;
:class:`WindowSet` turns them into clock times.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    import pandas as pd

from wzq.engine import approach as ap
from wzq.engine import costs as rc
from wzq.engine.grid import night_by_clock
from wzq.engine.hourly import hour_checks
from wzq.engine.plan import (
    BARRIERS,
    Approach,
    Barrier,
    Costs,
    Demand,
    Options,
    Plan,
    PlanError,
    Problem,
    Site,
    Thresholds,
)
from wzq.engine.queue_length import (
    LengthFn,
    held_back,
    length_method,
    newell_lengths,
    queue_state_discharge,
)
from wzq.engine.site import SiteModel, configuration, site_model
from wzq.models import newell
from wzq.models.flow import FundamentalDiagram
from wzq.models.queueing import QueueRun, solve
from wzq.units import HOUR

__all__ = [
    "ALL_HOURS_RULE",
    "HOUR_COLUMNS",
    "MAX_INTERVALS",
    "SCREEN_MARGIN",
    "SYMBOLS",
    "Configuration",
    "DayType",
    "Window",
    "WindowSet",
    "WindowsResult",
    "day_rows",
    "days_allowed_by_hour",
    "days_allowed_counts",
    "default_configurations",
    "feasible_starts",
    "feasible_window_list",
    "find_windows",
    "held_per_hour",
    "intervals_for",
    "longest_window_list",
    "longest_windows",
    "plan_windows",
    "too_long",
    "too_long_text",
    "typical_days",
    "windows_table",
]

#: Longest demand series the search accepts, in intervals (the allowed set is an
#: ``n x (n+1)`` table; 4,032 is 24 weeks of hourly or 6 weeks of 15-minute data).
MAX_INTERVALS = 6 * 7 * 24 * 4


def too_long(demand: Demand) -> bool:
    """The demand is longer than the closure-window search takes (:data:`MAX_INTERVALS`)."""
    return len(demand.flows_veh_h) > MAX_INTERVALS


def too_long_text(n: int, interval_s: int, option: str) -> str:
    """Why the closure windows of a plan with ``n`` demand intervals are left out, and what
    to do; ``option`` says how to switch the search off (``'Closure windows sheet'
    (Limits!B30) to no``)."""
    span = n * interval_s / (24 * HOUR)
    weeks = MAX_INTERVALS * interval_s / (7 * 24 * HOUR)
    return (
        f"closure windows are left out: the demand has {n:,} intervals ({span:,.0f} days of "
        f"{interval_s // 60}-minute data), more than the {MAX_INTERVALS:,} the window search "
        f"takes ({weeks:g} weeks of this data). Search a few weeks at a time, or a typical "
        f"weekday and weekend day with `wzq windows PLAN --typical`. To leave them out "
        f"without this note, set {option}"
    )


#: Relative margin by which the jam-density screen of :func:`_evaluate` stays below
#: any queue length a method can give (rounding).
SCREEN_MARGIN = 1e-9

# ---------------------------------------------------------------------------------------------
# Inputs
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Configuration:
    """One way of closing lanes: how many, behind what, optionally at a given capacity.

    ``lanes_closed`` 0 is a shoulder closure (HCM N -> N). ``capacity_override_veh_h_ln``
    wins over every capacity model, as in :class:`wzq.engine.plan.Closure`.
    """

    lanes_closed: int
    barrier: Barrier = "soft"
    capacity_override_veh_h_ln: float | None = None

    def label(self, lanes: int) -> str:
        """``1 of 3 lanes closed`` (plus the barrier and an override when not the default)."""
        if self.lanes_closed == 0:
            text = f"shoulder closed, {lanes} lanes open"
        else:  # a lane closed leaves one open: two lanes at least
            text = f"{self.lanes_closed} of {lanes} lanes closed"
        if self.barrier == "hard":
            text += ", concrete barrier"
        if self.capacity_override_veh_h_ln is not None:
            text += f", {self.capacity_override_veh_h_ln:,.0f} veh/h/ln"
        return text


@dataclass(frozen=True)
class DayType:
    """A demand profile to search, and which window starts to report.

    ``first_start``/``stop_start`` bound the start indices that are reported
    (``stop_start`` exclusive, ``None``: every start). ``fold`` shows the hours
    chart as one row by hour of day (a typical day) instead of one row per
    calendar day.
    """

    name: str
    demand: Demand
    first_start: int = 0
    stop_start: int | None = None
    fold: bool = False


@dataclass(frozen=True)
class _Grid:
    """Arrays of one configuration on one demand profile (``n`` intervals)."""

    n: int
    dur: np.ndarray  # s
    lam: np.ndarray  # veh/h
    pre_open: np.ndarray  # veh/h
    qdr_open: np.ndarray
    pre_closed: np.ndarray
    qdr_closed: np.ndarray
    extra_closed: np.ndarray  # extra seconds per vehicle through the work zone
    first: np.ndarray  # first interval of each hour
    hour_end: np.ndarray  # one past the last interval of each hour
    hour_of: np.ndarray  # hour of each interval
    lanes: int
    model: SiteModel
    thresholds: Thresholds
    length_fn: LengthFn
    held: np.ndarray  # per hour, vehicles held back (held_per_hour)
    ramps: ap.Ramps | None = None  # the approach's ramps on this grid
    by_sections: bool = False  # Newell's method by sections (else the single-state relation)
    landmark: tuple[str, float] | None = None  # the landmark the queue must not pass


@dataclass(frozen=True)
class _Eval:
    """One run judged: queue at boundaries, per-interval parts, per-hour verdict."""

    queue: np.ndarray
    ok: np.ndarray  # per hour
    arrivals: np.ndarray  # per interval, veh
    capacity: np.ndarray  # per interval, veh (pre-breakdown rate x duration, veh/h x s)
    length: np.ndarray  # per interval, longest queue (m)
    queue_delay: np.ndarray  # per interval, veh-s
    wz_delay: np.ndarray  # per interval, veh-s
    under: np.ndarray  # per interval, capacity under the closure (veh/h; inf when open)

    @property
    def total_delay_veh_h(self) -> float:
        return float(self.queue_delay.sum()) / HOUR + float(self.wz_delay.sum()) / HOUR


def _checks(
    g: _Grid,
    arrivals: np.ndarray,
    capacity: np.ndarray,
    lmax: np.ndarray,
    delay_veh_h: np.ndarray,
    closed: np.ndarray,
    closure_capacity: np.ndarray,
    hours: np.ndarray | None = None,
) -> np.ndarray:
    """All of :func:`wzq.engine.hourly.hour_checks` passed, hour by hour (``hours``: the
    hours the arrays hold, when not every hour; ``closure_capacity``: the lowest capacity
    under the closure in each hour, veh/h, ``inf`` where none)."""
    ok = np.ones(len(arrivals), dtype=bool)
    held = g.held if hours is None else g.held[hours]
    checks = hour_checks(
        g.thresholds,
        arrivals,
        capacity,
        lmax,
        delay_veh_h,
        closed,
        g.landmark,
        held,
        closure_capacity=closure_capacity,
    )
    for _, _, passed in checks[2]:
        ok &= passed
    return ok


def _evaluate(g: _Grid, s: int, e: int, screen: bool = False) -> _Eval:
    """The run with the configuration in force on intervals ``[s, e)`` (``s == e``: none).

    ``screen``: skip the queue-length method and use the shortest length the
    queued vehicles can occupy, packed at jam density over every lane; an hour
    the screen fails then fails for certain (its delay and demand/capacity are
    exact), an hour it passes still needs the full run.
    """
    closed = np.zeros(g.n, dtype=bool)
    closed[s:e] = True
    pre = np.where(closed, g.pre_closed, g.pre_open)
    qdr = np.where(closed, g.qdr_closed, g.qdr_open)
    run = solve(g.dur, g.lam / HOUR, pre / HOUR, qdr / HOUR)
    if screen:
        # with ramps too: the closure's queued traffic holds at least this much road,
        # and the delay of the plain point queue is no more than with the ramps
        densest = g.lanes * float(g.model.diagram.jam_density) * (1.0 + SCREEN_MARGIN)
        length = np.maximum(run.queue[:-1], run.queue[1:]) / densest
    elif g.ramps is not None:
        run, length = _ramp_run(g, run, pre, qdr)
    else:
        length = g.length_fn(g.model, g.lanes, g.lam, qdr, run)
    wz = run.departures * np.where(closed, g.extra_closed, 0.0)
    cap_i = pre * g.dur
    first = g.first
    arrivals = np.add.reduceat(run.arrivals, first)
    capacity = np.add.reduceat(cap_i, first) / HOUR
    lmax = np.maximum.reduceat(length, first)
    delay = np.add.reduceat(run.delay, first) / HOUR + np.add.reduceat(wz, first) / HOUR
    closed_h = np.logical_or.reduceat(closed, first)
    under = np.where(closed, pre, np.inf)  # the capacity under the closure, veh/h
    ok = _checks(g, arrivals, capacity, lmax, delay, closed_h, np.minimum.reduceat(under, first))
    return _Eval(run.queue, ok, run.arrivals, cap_i, length, run.delay, wz, under)


def _ramp_run(
    g: _Grid, run: QueueRun, pre: np.ndarray, qdr: np.ndarray
) -> tuple[QueueRun, np.ndarray]:
    """The closure traffic's queue and the longest queue per interval on an approach
    with ramps, by :mod:`wzq.engine.approach` as :func:`wzq.engine.evaluate.evaluate` finds them."""
    assert g.ramps is not None
    if g.by_sections:
        sec = ap.by_sections(run, g.ramps, g.model.diagram, g.lanes, pre / HOUR, qdr / HOUR)
        return ap.coarsen(sec.queue, run.t), newell.hourly_max(sec.times, sec.distance, run.t)
    state = queue_state_discharge(run, qdr)
    l_start, l_end, _ = ap.single_state(run, g.ramps, g.model.diagram, g.lanes, state)
    return run, np.maximum(l_start, l_end)


def _mixed_hours_ok(
    g: _Grid, r: _Eval, b: _Eval, hours: np.ndarray, ends: np.ndarray
) -> np.ndarray:
    """Verdict of hours split by a closure end: run ``r`` before ``ends``, ``b`` from it on.

    Every such hour contains closure time (the closure ends inside it), so the
    demand/capacity check applies.
    """
    a = g.first[hours]
    z = g.hour_end[hours]
    k = int((z - a).max())
    idx = a[:, None] + np.arange(k)[None, :]
    valid = idx < z[:, None]
    idx = np.minimum(idx, g.n - 1)
    use_r = idx < ends[:, None]

    def pick(xr: np.ndarray, xb: np.ndarray, fill: float) -> np.ndarray:
        return np.where(valid, np.where(use_r, xr[idx], xb[idx]), fill)

    arrivals = np.where(valid, b.arrivals[idx], 0.0).sum(axis=1)
    capacity = pick(r.capacity, b.capacity, 0.0).sum(axis=1) / HOUR
    lmax = pick(r.length, b.length, -np.inf).max(axis=1)
    delay = (
        pick(r.queue_delay, b.queue_delay, 0.0).sum(axis=1) / HOUR
        + pick(r.wz_delay, b.wz_delay, 0.0).sum(axis=1) / HOUR
    )
    under = pick(r.under, b.under, np.inf).min(axis=1)
    closed = np.ones(len(hours), dtype=bool)
    return _checks(g, arrivals, capacity, lmax, delay, closed, under, hours)


def _first_failure_end(g: _Grid, ok: np.ndarray) -> int:
    """One past the last interval of the first failing hour; ``n + 1`` if none fails."""
    if ok.all():
        return g.n + 1
    return int(g.hour_end[int(np.argmin(ok))])


def _allowed(
    g: _Grid,
    exhaustive: bool,
    known: np.ndarray | None = None,
    starts: np.ndarray | None = None,
) -> tuple[np.ndarray, _Eval]:
    """``allowed[s, e]``: the closure ``[s, e)`` keeps every hour within the limits.

    ``known``: the table found before for the same inputs (a cache), used as it is.
    ``starts`` (a mask over the starts): judge only these rows; the others are left
    ``False`` (the search at a risk, :mod:`wzq.engine.risk_windows`, skips starts it
    has already decided).
    """
    n = g.n
    base = _evaluate(g, 0, 0)
    if known is not None:
        return known, base
    allowed = np.zeros((n, n + 1), dtype=bool)
    th = g.thresholds
    if (
        th.max_queue_length is None
        and th.max_average_delay is None
        and th.max_demand_capacity is None
        and g.landmark is None
    ):
        # no limit at all: every closure passes (the caller adds a note)
        return np.triu(np.ones((n, n + 1), dtype=bool), 1), base
    if exhaustive:
        for s in range(n):
            if starts is not None and not starts[s]:
                continue
            for e in range(s + 1, n + 1):
                allowed[s, e] = bool(_evaluate(g, s, e).ok.all())
        return allowed, base
    n_hours = len(g.first)
    # suffix_ok[h]: every all-lanes-open hour from h on passes (suffix_ok[n_hours] = True)
    suffix_ok = np.ones(n_hours + 1, dtype=bool)
    suffix_ok[:-1] = np.logical_and.accumulate(base.ok[::-1])[::-1]
    base_fail = _first_failure_end(g, base.ok)
    for s in range(min(n, base_fail)):
        if starts is not None and not starts[s]:
            continue
        # the closure from s that never ends; when even its screen fails by the end of
        # interval s, no closure starting at s can pass
        if _first_failure_end(g, _evaluate(g, s, n, screen=True).ok) <= s + 1:
            continue
        r = _evaluate(g, s, n)
        stop = _first_failure_end(g, r.ok)  # closures (s, e) with e >= stop fail
        if stop > n:
            allowed[s, n] = True
        ends = np.arange(s + 1, min(stop, n))
        if not len(ends):
            continue
        verdict = np.zeros(len(ends), dtype=bool)
        empty = (r.queue[ends] == 0) & (base.queue[ends] == 0)
        hours = g.hour_of[ends]
        aligned = g.first[hours] == ends
        sel = empty & aligned
        verdict[sel] = suffix_ok[hours[sel]]
        sel = empty & ~aligned
        if sel.any():
            verdict[sel] = suffix_ok[hours[sel] + 1] & _mixed_hours_ok(
                g, r, base, hours[sel], ends[sel]
            )
        for i in np.flatnonzero(~empty):
            e = int(ends[i])
            if _evaluate(g, s, e, screen=True).ok.all():
                verdict[i] = bool(_evaluate(g, s, e).ok.all())
        allowed[s, ends] = verdict
    return allowed, base


# ---------------------------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Window:
    """One closure period ``[start, end)`` with the delay it adds and what that costs."""

    configuration: str
    day_type: str
    start: dt.datetime
    end: dt.datetime
    added_delay_veh_h: float
    road_user_cost: float

    @property
    def hours(self) -> float:
        return (self.end - self.start).total_seconds() / HOUR


@dataclass(frozen=True)
class WindowSet:
    """Every allowable closure of one configuration on one day type.

    ``allowed[s, e]`` is True when the closure from grid boundary ``s`` to
    boundary ``e`` keeps every hour of the run within the limits (``s < e``).
    """

    configuration: Configuration
    label: str
    day_type: DayType
    allowed: np.ndarray
    open_road_failing: tuple[dt.datetime, ...]
    value_per_veh_h: float
    _grid: _Grid = field(repr=False, compare=False)
    _base: _Eval = field(repr=False, compare=False)

    # --- the grid -----------------------------------------------------------------------------
    @property
    def n(self) -> int:
        return self._grid.n

    @property
    def interval_s(self) -> int:
        return self.day_type.demand.interval_s

    def clock(self, i: int) -> dt.datetime:
        """Local clock time of grid boundary ``i``."""
        return self.day_type.demand.start + dt.timedelta(seconds=int(i) * self.interval_s)

    @property
    def start_range(self) -> range:
        stop = self.n if self.day_type.stop_start is None else self.day_type.stop_start
        return range(self.day_type.first_start, min(stop, self.n))

    def _reported(self) -> np.ndarray:
        """``allowed`` with rows outside the reported starts cleared."""
        rows = np.zeros(self.n, dtype=bool)
        rows[self.start_range.start : self.start_range.stop] = True
        return self.allowed & rows[:, None]

    # --- questions ------------------------------------------------------------------------------
    def maximal(self) -> list[tuple[int, int]]:
        """Reported windows that cannot be extended by one interval at either end.

        ``(s, e)`` is allowed, ``(s - 1, e)`` is not (or ``s`` is the first
        boundary) and ``(s, e + 1)`` is not (or ``e`` is the end of the data).
        """
        a = self.allowed
        earlier = np.zeros_like(a)
        earlier[1:] = a[:-1]
        later = np.zeros_like(a)
        later[:, :-1] = a[:, 1:]
        m = self._reported() & ~earlier & ~later
        return [(int(i), int(j)) for i, j in np.argwhere(m)]

    def longest(self, top: int | None = None) -> list[tuple[int, int]]:
        """Maximal windows, longest first (then earliest)."""
        out = sorted(self.maximal(), key=lambda w: (-(w[1] - w[0]), w[0]))
        return out if top is None else out[:top]

    def starts_for(self, duration_s: float) -> list[tuple[int, int]]:
        """Every reported ``(s, s + d)`` allowed, ``d`` the duration in intervals (rounded up)."""
        d = intervals_for(duration_s, self.interval_s)
        if d < 1 or d > self.n:
            return []
        s = np.arange(0, self.n - d + 1)
        ok = self._reported()[s, s + d]
        return [(int(i), int(i) + d) for i in s[ok]]

    def last_end(self) -> np.ndarray:
        """Per start, the latest allowed end (``-1`` when none), reported starts only."""
        a = self._reported()
        has = a.any(axis=1)
        last = a.shape[1] - 1 - np.argmax(a[:, ::-1], axis=1)
        return np.where(has, last, -1)

    def interval_flags(self) -> np.ndarray:
        """Intervals in which some reported allowed closure may be in place."""
        last = self.last_end()
        covered = np.zeros(self.n + 1)  # counts of +1 and -1: exact in float64
        for s in np.flatnonzero(last >= 0):
            covered[s] += 1
            covered[last[s]] -= 1
        return np.cumsum(covered)[:-1] > 0

    def hour_flags(self) -> pd.DataFrame:
        """Per hour of the data: ``whole`` (a closure may be in place all hour), ``part``."""
        import pandas as pd  # imported when used: slow to import

        starts, whole, part = self.hour_flag_arrays()
        return pd.DataFrame({"hour_start": starts, "whole": whole, "part": part})

    def hour_flag_arrays(self) -> tuple[list[dt.datetime], np.ndarray, np.ndarray]:
        """:meth:`hour_flags` as its columns: hour starts, ``whole``, ``part``."""
        g = self._grid
        last = self.last_end()
        reach = np.maximum.accumulate(last)  # latest end of a window starting at or before s
        whole = reach[g.first] >= g.hour_end
        part_any = np.logical_or.reduceat(self.interval_flags(), g.first)
        return [self.clock(i) for i in g.first], whole, part_any & ~whole

    def added_delay_veh_h(self, s: int, e: int) -> float:
        """Delay the closure ``[s, e)`` adds to the all-lanes-open run (veh-h), exactly.

        The delay of the traffic through the closure (queue and work zone); with
        exit ramps, the delay of the traffic leaving there is not counted."""
        return _evaluate(self._grid, s, e).total_delay_veh_h - self._base.total_delay_veh_h

    def window(self, s: int, e: int) -> Window:
        """A :class:`Window` for the closure ``[s, e)`` with its added delay and cost."""
        delay = self.added_delay_veh_h(s, e)
        return Window(
            self.label,
            self.day_type.name,
            self.clock(s),
            self.clock(e),
            delay,
            delay * self.value_per_veh_h,
        )


#: What an allowed closure is, in words (the sheet and the report say it).
ALL_HOURS_RULE = (
    "A closure is allowed only if every hour of the run passes, the queue left "
    "behind after it ends included; all lanes are open outside the closure."
)


@dataclass(frozen=True)
class WindowsResult:
    """What :func:`find_windows` returns: one :class:`WindowSet` per configuration and day type."""

    site: Site
    thresholds: Thresholds
    costs: Costs
    sets: tuple[WindowSet, ...]
    notes: tuple[str, ...] = ()
    #: What "allowed" means, in one sentence (the search at a risk states its own).
    rule: str = ALL_HOURS_RULE

    @property
    def configurations(self) -> list[str]:
        return list(dict.fromkeys(w.label for w in self.sets))


def intervals_for(duration_s: float, interval_s: int) -> int:
    """Whole grid intervals needed to hold ``duration_s`` (rounded up)."""
    return math.ceil(duration_s / interval_s - 1e-9)


# ---------------------------------------------------------------------------------------------
# The search
# ---------------------------------------------------------------------------------------------


def _grid(
    site: Site,
    model: SiteModel,
    demand: Demand,
    thresholds: Thresholds,
    config: Configuration,
    options: Options,
    length_fn: LengthFn,
    approach: Approach,
) -> _Grid:
    n = len(demand.flows_veh_h)
    step = demand.interval_s
    t = np.arange(n + 1, dtype=float) * step
    dur = np.diff(t)
    night = night_by_clock(demand.start.hour, (t[:-1] // HOUR).astype(np.intp))
    config_key = (config.lanes_closed, config.barrier, config.capacity_override_veh_h_ln)
    arrays = {k: np.empty(n) for k in ("po", "qo", "pc", "qc", "x")}
    for flag in (False, True):
        sel = night == flag
        if not sel.any():
            continue
        pre_o, qdr_o, _ = configuration(site, options.diagram, None, flag)
        pre_c, qdr_c, extra = configuration(site, options.diagram, config_key, flag)
        arrays["po"][sel] = pre_o
        arrays["qo"][sel] = qdr_o
        arrays["pc"][sel] = pre_c
        arrays["qc"][sel] = qdr_c
        arrays["x"][sel] = extra
    if not options.capacity_drop:
        arrays["qo"] = arrays["po"].copy()
        arrays["qc"] = arrays["pc"].copy()
    n_hours = round(t[-1] / HOUR)
    first = np.searchsorted(t, np.arange(n_hours) * HOUR).astype(np.int64)
    hour_end = np.append(first[1:], n).astype(np.int64)
    hour_of = np.searchsorted(first, np.arange(n), side="right") - 1
    ramps = ap.ramps_for(demand, approach, np.arange(n))
    limit = None
    if thresholds.queue_must_not_pass is not None:
        lm = approach.landmark(thresholds.queue_must_not_pass)
        limit = None if lm is None else (lm.name, lm.distance)
    lam = demand.flows_veh_h.astype(float) if ramps is None else ramps.section[0]
    flows = lam[None, :] if ramps is None else ramps.section
    held = held_per_hour(flows, dur, site.lanes, model.diagram, first)
    return _Grid(
        n,
        dur,
        lam,
        arrays["po"],
        arrays["qo"],
        arrays["pc"],
        arrays["qc"],
        arrays["x"],
        first,
        hour_end,
        hour_of,
        site.lanes,
        model,
        thresholds,
        length_fn,
        held,
        ramps,
        length_fn is newell_lengths,
        limit,
    )


def held_per_hour(
    flows: np.ndarray, dur: np.ndarray, lanes: int, diagram: FundamentalDiagram, first: np.ndarray
) -> np.ndarray:
    """Per hour (``first``: each hour's first interval), the most vehicles held back
    beyond the approach or at a section of it (:func:`wzq.engine.queue_length.held_back`,
    as a run finds them): ``flows`` one row per section (veh/h; one row without ramps)."""
    return np.maximum.reduceat(held_back(flows, dur, lanes, diagram), first)


def _check_inputs(
    site: Site,
    day_types: Sequence[DayType],
    thresholds: Thresholds,
    configs: Sequence[Configuration],
    options: Options,
    approach: Approach,
) -> None:
    problems: list[Problem] = []
    for d in day_types:
        try:
            Plan(site, d.demand, (), thresholds, options=options, approach=approach)
        except PlanError as e:
            problems += [Problem(f"{d.name}: {p.where}", p.message) for p in e.problems]
            continue
        # the plan refuses a demand that does not cover whole hours (plan.validate)
        n = len(d.demand.flows_veh_h)
        if n > MAX_INTERVALS:
            problems.append(
                Problem(
                    f"{d.name}: demand",
                    f"{n} demand intervals is more than the {MAX_INTERVALS} the window "
                    "search takes; search a few weeks at a time",
                )
            )
    if not configs:
        problems.append(Problem("lanes closed", "no lane configuration to search; give one"))
    for i, c in enumerate(configs):
        where = f"configurations[{i}]"
        if int(c.lanes_closed) != c.lanes_closed or not 0 <= c.lanes_closed < site.lanes:
            problems.append(
                Problem(
                    where,
                    f"{c.lanes_closed} lanes closed is not possible on a road with {site.lanes} "
                    f"lanes; use 1 to {site.lanes - 1} (0 for a shoulder closure)",
                )
            )
        if c.barrier not in BARRIERS:
            problems.append(
                Problem(where, f"barrier '{c.barrier}' is not one of {', '.join(BARRIERS)}")
            )
        ov = c.capacity_override_veh_h_ln
        if ov is not None and not 100 <= ov <= 3000:
            problems.append(Problem(where, "capacity override must be 100-3000 veh/h/ln or blank"))
    if problems:
        raise PlanError(problems)


def default_configurations(site: Site, barrier: Barrier = "soft") -> list[Configuration]:
    """Every lane closure that leaves at least one lane open: 1 .. lanes-1 closed."""
    return [Configuration(k, barrier) for k in range(1, site.lanes)]


def find_windows(
    site: Site,
    demand: Demand | Mapping[str, Demand | DayType] | Sequence[DayType],
    thresholds: Thresholds,
    configurations: Sequence[Configuration | int] | None = None,
    *,
    options: Options | None = None,
    costs: Costs | None = None,
    queue_length: LengthFn | None = None,
    exhaustive: bool = False,
    approach: Approach | None = None,
    known: Sequence[np.ndarray] | None = None,
) -> WindowsResult:
    """Every closure period that keeps the whole run within the limits, per configuration.

    Args:
        site: the site (lanes in normal operation, capacity inputs).
        demand: one demand series (searched whole, reported by calendar day),
            a mapping of day-type name to demand or :class:`DayType`, or a
            sequence of :class:`DayType` (e.g. from :func:`typical_days`).
        thresholds: the agency's limits (``None`` switches a check off).
        configurations: :class:`Configuration` or a number of lanes closed;
            default every closure leaving one lane open, behind cones.
        options: engine options (capacity drop, diagram, queue-length method).
        costs: road-user value of time; default :data:`wzq.engine.costs.DEFAULT_COSTS`.
        queue_length: the queue-length function; default by ``options``.
        exhaustive: judge every candidate with a full run (for checking).
        approach: the approach's landmarks and ramps (:class:`wzq.engine.plan.Approach`);
            the queue is then found as :func:`wzq.analyse` finds it
            (:mod:`wzq.engine.approach`), and the limit ``queue_must_not_pass`` is
            checked. Hourly ramp flows must cover every demand searched (one per
            hour); for typical days give ramp flows as a share of the mainline.
        known: the ``allowed`` tables a search of the same inputs found before (one
            per window set, day type by day type and configuration by configuration, as
            :attr:`WindowsResult.sets` lists them), used in place of the search; the
            caller vouches that the inputs are the same (a cache keyed by them). A
            table of the wrong shape, or a list of the wrong length, is not used.

    Raises:
        PlanError: the inputs cannot be searched (each problem says where and what to do).
    """
    options = options or Options()
    if isinstance(demand, Demand):
        day_types: list[DayType] = [DayType(_period_name(demand), demand)]
    elif isinstance(demand, Mapping):
        day_types = [v if isinstance(v, DayType) else DayType(str(k), v) for k, v in demand.items()]
    else:
        day_types = list(demand)
    if configurations is None:
        configurations = default_configurations(site)
    configs = [c if isinstance(c, Configuration) else Configuration(int(c)) for c in configurations]
    approach = approach or Approach()
    if approach.ramps and queue_length is not None:
        raise ValueError("a queue-length function of your own cannot follow the ramps")
    _check_inputs(site, day_types, thresholds, configs, options, approach)
    model = site_model(site, options.diagram)
    length_fn = queue_length or length_method(options, model)
    used_costs = rc.costs_or_default(costs)
    value = rc.value_per_veh_h(used_costs, site.heavy_vehicle_share)
    notes: list[str] = []
    if all(
        v is None
        for v in (
            thresholds.max_queue_length,
            thresholds.max_average_delay,
            thresholds.max_demand_capacity,
            thresholds.queue_must_not_pass,
        )
    ):
        notes.append("no limits are set, so every closure passes; enter the agency's limits")
    sets: list[WindowSet] = []
    if known is not None and len(known) != len(day_types) * len(configs):
        known = None
    for day in day_types:
        in_full_note = False
        for config in configs:
            g = _grid(site, model, day.demand, thresholds, config, options, length_fn, approach)
            table = None if known is None else known[len(sets)]
            if table is not None and (table.shape != (g.n, g.n + 1) or table.dtype != bool):
                table = None
            # Newell's construction holds flows above the approach's capacity back beyond
            # its upstream end; there the trajectory is not a function of the recent past
            # alone, so the search's shortcuts are off and every candidate is run in full.
            in_full = exhaustive or (length_fn is newell_lengths and _beyond_approach(g))
            if in_full and not exhaustive and not in_full_note:
                in_full_note = True
                notes.append(
                    f"{day.name}: demand or a closure's capacity exceeds the approach's own "
                    "capacity, so every candidate closure was run in full (slower)"
                )
            allowed, base = _allowed(g, in_full, table)
            failing = tuple(
                day.demand.start + dt.timedelta(seconds=int(g.first[h]) * day.demand.interval_s)
                for h in np.flatnonzero(~base.ok)
            )
            sets.append(
                WindowSet(
                    config,
                    config.label(site.lanes),
                    day,
                    allowed,
                    failing,
                    value,
                    g,
                    base,
                )
            )
        failing = sets[-1].open_road_failing
        if failing:
            notes.append(
                f"{day.name}: with all lanes open the road already exceeds the limits in "
                f"{len(failing)} hour{'s' if len(failing) != 1 else ''} (first "
                f"{failing[0]:%a %Y-%m-%d %H:%M}); every hour of the run must pass, so "
                "these hours rule out nearly every window"
            )
    return WindowsResult(site, thresholds, used_costs, tuple(sets), tuple(notes))


def _beyond_approach(g: _Grid) -> bool:
    """Demand at or above, or a closure's capacity above, the approach's capacity ``n c``."""
    n_c = float(g.model.diagram.capacity) * g.lanes * HOUR  # veh/h
    sections = g.lam if g.ramps is None else g.ramps.section
    return bool(np.any(sections >= n_c * (1.0 - 1e-9)) or np.any(g.pre_closed > n_c * (1.0 + 1e-9)))


def _period_name(demand: Demand) -> str:
    last = demand.end - dt.timedelta(seconds=1)
    if last.date() == demand.start.date():
        return f"{demand.start:%a %Y-%m-%d}"
    return f"{demand.start:%a %Y-%m-%d} to {last:%a %Y-%m-%d}"


def typical_days(demand: Demand) -> list[DayType]:
    """A typical weekday and weekend day, each averaged over the whole days of ``demand``.

    Only whole calendar days (00:00 to 24:00) are averaged: Monday to Friday
    into ``weekday``, Saturday and Sunday into ``weekend``. Each profile is laid
    out twice in a row, so a closure that starts in the evening may run past
    midnight into the same kind of day; starts are reported on the first day.

    Raises:
        PlanError: the demand holds no whole day.
    """
    step = int(demand.interval_s)
    per_day = 24 * 3600 // step
    offset = (-(demand.start.hour * 3600) // step) % per_day
    flows = demand.flows_veh_h
    n_days = (len(flows) - offset) // per_day
    groups: dict[str, list[np.ndarray]] = {"weekday": [], "weekend": []}
    first_date: dict[str, dt.date] = {}
    for d in range(max(n_days, 0)):
        i0 = offset + d * per_day
        date = (demand.start + dt.timedelta(seconds=i0 * demand.interval_s)).date()
        key = "weekend" if date.weekday() >= 5 else "weekday"
        groups[key].append(flows[i0 : i0 + per_day])
        first_date.setdefault(key, date)
    out = []
    for key, rows in groups.items():
        if not rows:
            continue
        profile = np.mean(rows, axis=0)
        start = dt.datetime.combine(first_date[key], dt.time())
        name = f"{key} (average of {len(rows)} day{'s' if len(rows) != 1 else ''})"
        out.append(
            DayType(
                name,
                Demand(start, demand.interval_s, np.concatenate((profile, profile))),
                0,
                per_day,
                fold=True,
            )
        )
    if not out:
        raise PlanError(
            "the demand holds no whole day from 00:00 to 24:00; a typical day needs at least one",
            where="demand",
        )
    return out


def plan_windows(
    plan: Plan,
    lanes_closed: Sequence[int] | None = None,
    *,
    barrier: Barrier = "soft",
    typical: bool = False,
    exhaustive: bool = False,
    known: Sequence[np.ndarray] | None = None,
) -> WindowsResult:
    """:func:`find_windows` for a plan's site, demand, limits, options and costs
    (``known``: tables found before for the same inputs, as there).

    The plan's own closures are not used: the search places the closure.
    """
    if lanes_closed is None:
        configs = default_configurations(plan.site, barrier)
    else:
        configs = [Configuration(int(k), barrier) for k in lanes_closed]
    demand: Demand | list[DayType] = typical_days(plan.demand) if typical else plan.demand
    return find_windows(
        plan.site,
        demand,
        plan.thresholds,
        configs,
        options=plan.options,
        costs=plan.costs,
        exhaustive=exhaustive,
        approach=plan.approach,
        known=known,
    )


# ---------------------------------------------------------------------------------------------
# Tables for the command line, the workbook and the printed report
# ---------------------------------------------------------------------------------------------

HOUR_COLUMNS: tuple[str, ...] = tuple(f"{h:02d}" for h in range(24))
#: Symbols of the text chart: whole hour allowed, part of the hour, not allowed, no data.
SYMBOLS = {"whole": "#", "part": "+", "no": ".", "none": " "}


def day_rows(ws: WindowSet) -> list[tuple[str, list[str]]]:
    """The hours chart of one window set: (row label, 24 states) per day.

    A state is ``whole``, ``part``, ``no`` or ``none`` (no data for that hour).
    Calendar days for a demand series; one row by hour of day for a typical day.
    """
    starts, whole, part = ws.hour_flag_arrays()
    state = np.where(whole, "whole", np.where(part, "part", "no"))
    if ws.day_type.fold:
        row = ["none"] * 24
        rank = {"none": 0, "no": 1, "part": 2, "whole": 3}
        for t, s in zip(starts, state, strict=True):
            h = t.hour
            if rank[s] > rank[row[h]]:
                row[h] = s
        return [(ws.day_type.name, row)]
    rows: dict[dt.date, list[str]] = {}
    for t, s in zip(starts, state, strict=True):
        rows.setdefault(t.date(), ["none"] * 24)[t.hour] = s
    return [(f"{d:%a %Y-%m-%d}", r) for d, r in rows.items()]


def windows_table(result: WindowsResult, symbols: bool = False) -> pd.DataFrame:
    """Configuration x hour: may a closure be in place for the whole hour?

    One row per configuration and day (or typical day), columns
    ``configuration``, ``day`` and ``00`` .. ``23``: booleans (``False`` also
    where there is no data), or with ``symbols`` the characters of
    :data:`SYMBOLS` (``+`` part of the hour).
    """
    import pandas as pd  # imported when used: slow to import

    records = []
    for ws in result.sets:
        for label, row in day_rows(ws):
            rec: dict[str, object] = {"configuration": ws.label, "day": label}
            for h, s in zip(HOUR_COLUMNS, row, strict=True):
                rec[h] = SYMBOLS[s] if symbols else s == "whole"
            records.append(rec)
    return pd.DataFrame.from_records(records, columns=["configuration", "day", *HOUR_COLUMNS])


def days_allowed_counts(result: WindowsResult) -> list[tuple[str, list[int]]]:
    """:func:`days_allowed_by_hour` as (configuration, days by hour 0-23) pairs, in the
    order the configurations first come."""
    counts: dict[str, list[int]] = {}
    for ws in result.sets:
        for _, row in day_rows(ws):
            days = counts.setdefault(ws.label, [0] * 24)
            for h, s in enumerate(row):
                days[h] += s == "whole"
    return list(counts.items())


def days_allowed_by_hour(result: WindowsResult) -> pd.DataFrame:
    """Hour of day (0-23) x configuration: days on which the whole hour may be closed."""
    import pandas as pd  # imported when used: slow to import

    table = windows_table(result)
    out = table.groupby("configuration", sort=False)[list(HOUR_COLUMNS)].sum().T
    out.index = pd.Index(range(24), name="hour")
    return out.astype(int)


def _windows_frame(windows: list[Window]) -> pd.DataFrame:
    import pandas as pd  # imported when used: slow to import

    cols = [
        "configuration",
        "day_type",
        "start",
        "end",
        "hours",
        "added_delay_veh_h",
        "road_user_cost",
    ]
    return pd.DataFrame.from_records(
        [
            (
                w.configuration,
                w.day_type,
                w.start,
                w.end,
                w.hours,
                w.added_delay_veh_h,
                w.road_user_cost,
            )
            for w in windows
        ],
        columns=cols,
    )


def longest_windows(
    result: WindowsResult, top: int | None = 5, configuration: str | None = None
) -> pd.DataFrame:
    """The longest allowable windows per configuration and day type, with delay and cost.

    Columns ``configuration``, ``day_type``, ``start``, ``end``, ``hours``,
    ``added_delay_veh_h`` (delay added to the all-lanes-open run) and
    ``road_user_cost`` (in ``result.costs.currency`` of ``result.costs.dollar_year``).
    """
    return _windows_frame(longest_window_list(result, top, configuration))


def longest_window_list(
    result: WindowsResult, top: int | None = 5, configuration: str | None = None
) -> list[Window]:
    """:func:`longest_windows` as its :class:`Window` rows."""
    out: list[Window] = []
    for ws in result.sets:
        if configuration is not None and ws.label != configuration:
            continue
        out += [ws.window(s, e) for s, e in ws.longest(top)]
    return out


def feasible_starts(result: WindowsResult, duration_h: float) -> pd.DataFrame:
    """Every allowed start for a closure of ``duration_h`` hours (rounded up to the grid).

    Same columns as :func:`longest_windows`.
    """
    return _windows_frame(feasible_window_list(result, duration_h))


def feasible_window_list(result: WindowsResult, duration_h: float) -> list[Window]:
    """:func:`feasible_starts` as its :class:`Window` rows."""
    out: list[Window] = []
    for ws in result.sets:
        out += [ws.window(s, e) for s, e in ws.starts_for(duration_h * HOUR)]
    return out
