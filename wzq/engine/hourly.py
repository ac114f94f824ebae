"""The per-hour table, each hour's checks against the limits, and the summary of a run."""

from __future__ import annotations

import datetime as dt
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    import pandas as pd

from wzq.engine import costs as road_user_costs
from wzq.engine.plan import Plan, Thresholds
from wzq.engine.results import Run, Summary, clock, hourly_frame
from wzq.models.queueing import waits
from wzq.units import HOUR

__all__ = [
    "CHECK_COLUMNS",
    "DELAY_TOLERANCE_S",
    "HELD_QUEUE_VEH",
    "LENGTH_TOLERANCE_M",
    "RATIO_TOLERANCE",
    "hour_checks",
    "hour_columns",
    "hour_starts",
    "hourly_table",
    "landmark_limit",
    "length_unknown",
    "summarise",
]


#: Slack on the limits, absorbing rounding of long sums (m, s, ratio).
LENGTH_TOLERANCE_M = 1e-9
DELAY_TOLERANCE_S = 1e-9
RATIO_TOLERANCE = 1e-12
#: Vehicles held beyond the approach in an hour that make its length unknown
#: (:func:`hour_checks`); half a vehicle, which shows as one.
HELD_QUEUE_VEH = 0.5


#: The per-hour pass/fail columns :func:`hour_checks` may add to the table.
CHECK_COLUMNS = ("queue_ok", "delay_ok", "demand_capacity_ok", "landmark_ok")
_QUEUE_OK, _DELAY_OK, _DEMAND_CAPACITY_OK, _LANDMARK_OK = CHECK_COLUMNS


def length_unknown(held_veh: np.ndarray) -> np.ndarray:
    """Where the queue's length is unknown: :data:`HELD_QUEUE_VEH` or more vehicles held
    back, beyond the approach or at a section of it
    (:func:`wzq.engine.queue_length.held_back`).
    The one rule of the per-hour checks, their status text and the run's warning."""
    return held_veh >= HELD_QUEUE_VEH


def landmark_limit(plan: Plan) -> tuple[str, float] | None:
    """The landmark the queue must not pass, as ``(name, distance m)``, or ``None``."""
    name = plan.thresholds.queue_must_not_pass
    lm = None if name is None else plan.approach.landmark(name)
    return None if lm is None else (lm.name, lm.distance)


def hour_checks(
    th: Thresholds,
    arrivals: np.ndarray,
    capacity: np.ndarray,
    lmax: np.ndarray,
    delay_veh_h: np.ndarray,
    closed: np.ndarray,
    landmark: tuple[str, float] | None = None,
    held_veh: np.ndarray | None = None,
    closure_capacity: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray, list[tuple[str, str, np.ndarray]]]:
    """Average delay (min/veh), demand/capacity and each hour's checks against the limits.

    Longest queue ``<=`` limit; average delay (queue plus work-zone travel delay
    over the hour's arrivals) ``<=`` limit; demand/capacity ``<=`` limit in closure
    hours only; the back of the queue not beyond the landmark ``(name, distance
    m)`` the queue must not pass. ``held_veh``, the most vehicles in each hour
    that the approach could not admit (demand above its own capacity, held
    beyond its upstream end or at a section of it:
    :func:`wzq.engine.queue_length.held_back`): an hour
    holding :data:`HELD_QUEUE_VEH` or more fails the length and landmark checks,
    since the queue's length is then unknown, not the length shown. The one
    rule for the per-hour table, the scenarios and the closure-window search.
    ``closure_capacity`` (veh/h): the lowest capacity under a closure in each hour
    (``inf`` in an hour without one). Where given, an hour's demand/capacity in closure
    hours is its demand against that capacity, as though the closure were in force all
    the hour: the demand/capacity of a closure hour. An hour a closure starts or ends
    within is judged so too; the hour's average capacity, part open road, would dilute
    it (a closure from 20:30 passed a limit of 0.95 at 0.47, its demand 1.19 times the
    closure's capacity; the rule is common practice, no source). A whole hour under one
    closure gives the same ratio either way.
    Returns ``(average_delay_min, demand_capacity, [(column, label, ok), ...])``.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        avg = np.where(
            arrivals > 0, delay_veh_h * 60.0 / np.where(arrivals > 0, arrivals, 1.0), 0.0
        )
        dc = np.where(capacity > 0, arrivals / np.where(capacity > 0, capacity, 1.0), np.nan)
        if closure_capacity is not None:
            # only where the hour's average is above the closure's capacity (part open
            # road, or a second closure): a whole hour under one closure keeps its ratio
            # to the last bit
            # (a closure's capacity is never 0: at least one lane stays open, and a typed
            # capacity is 100 veh/h/ln or more; ``inf`` without a closure divides to 0)
            part = closure_capacity < capacity * (1 - 1e-9)
            dc = np.where(part, arrivals / closure_capacity, dc)
    checks: list[tuple[str, str, np.ndarray]] = []
    seen = True if held_veh is None else ~length_unknown(held_veh)
    if th.max_queue_length is not None:
        ok = (lmax <= th.max_queue_length + LENGTH_TOLERANCE_M) & seen
        checks.append((_QUEUE_OK, "queue length", ok))
    if th.max_average_delay is not None:
        ok = avg * 60.0 <= th.max_average_delay + DELAY_TOLERANCE_S
        checks.append((_DELAY_OK, "delay", ok))
    if th.max_demand_capacity is not None:
        ok = ~closed | (dc <= th.max_demand_capacity + RATIO_TOLERANCE)
        checks.append((_DEMAND_CAPACITY_OK, "demand/capacity", ok))
    if landmark is not None:
        ok = (lmax <= landmark[1] + LENGTH_TOLERANCE_M) & seen
        checks.append((_LANDMARK_OK, f"queue passes {landmark[0]}", ok))
    return avg, dc, checks


def _per_hour_identity(values: np.ndarray, _first: None) -> np.ndarray:
    """Per-hour sum, maximum or minimum when each interval is a whole hour."""
    return values


def hourly_table(r: Run) -> pd.DataFrame:
    """Per-hour demand, capacity, queue, length, delay and threshold checks."""
    return hourly_frame(hour_columns(r), r.plan.demand.start)


def hour_starts(start: dt.datetime, n_hours: int) -> np.ndarray:
    """The start of each hour from ``start`` (datetimes, an object array)."""
    hour = dt.timedelta(hours=1)
    return np.array([start + k * hour for k in range(n_hours)], dtype=object)


def hour_columns(r: Run) -> dict[str, np.ndarray]:
    """:func:`hourly_table`'s columns as numpy arrays, ``hour_start`` as datetimes: what a
    run writes reads these, without the table (pandas is slow to import)."""
    q = r.queue
    dur = r.duration
    n_hours = round(r.t[-1] / HOUR)
    bounds = np.arange(n_hours + 1) * HOUR
    if len(r.t) == n_hours + 1:  # the grid is the hours: each interval is its hour
        first = last_b = None
        add = top = low = _per_hour_identity
    else:
        first = np.searchsorted(r.t, bounds[:-1])
        last_b = np.searchsorted(r.t, bounds[1:])
        add, top, low = np.add.reduceat, np.maximum.reduceat, np.minimum.reduceat

    arrivals = add(q.arrivals, first)
    capacity = add(r.prebreakdown_veh_h * dur, first) / HOUR
    queue_delay = add(q.delay, first) / HOUR
    wz_delay = add(r.work_zone_delay, first) / HOUR
    delay = queue_delay + wz_delay
    if r.back_of_queue is not None:
        lmax = r.back_of_queue.hourly_max_m  # exact, peaks inside intervals included
    else:
        lmax = top(np.maximum(r.length_start, r.length_end), first)
    shut = r.closure >= 0
    closed = top(shut.view(np.int8), first).astype(bool)
    held = top(r.held_veh, first)
    avg, dc, checks = hour_checks(
        r.plan.thresholds,
        arrivals,
        capacity,
        lmax,
        delay,
        closed,
        landmark_limit(r.plan),
        held,
        closure_capacity=low(np.where(shut, r.prebreakdown_veh_h, np.inf), first),
    )
    exits = () if r.sections is None else r.sections.exits
    exit_delay = sum((e.delay_veh_s for e in exits), np.zeros(n_hours)) / HOUR
    max_wait = np.zeros(n_hours)
    if q.busy.any():
        cand, w = waits(q)
        hour_of = np.clip((cand // HOUR).astype(np.int64), 0, n_hours - 1)
        np.maximum.at(max_wait, hour_of, w / 60.0)
    cols: dict[str, np.ndarray] = {
        "hour_start": hour_starts(r.plan.demand.start, n_hours),
        "lanes_open": low(r.lanes_open, first),
        "closure": closed,
        "demand_veh_h": arrivals,
        "capacity_veh_h": capacity,
        "discharge_veh_h": add(r.discharge_veh_h * dur, first) / HOUR,
        "demand_capacity": dc,
        "arrivals_veh": arrivals,
        "departures_veh": add(q.departures, first),
        "queue_end_veh": q.queue[1:] if last_b is None else q.queue[last_b],
        "queue_max_veh": top(np.maximum(q.queue[:-1], q.queue[1:]), first),
        "queue_length_max_m": lmax,
        "queue_held_veh": held,
        "queue_delay_veh_h": queue_delay,
        "work_zone_delay_veh_h": wz_delay,
        "delay_veh_h": delay,
        "average_delay_min": avg,
        "max_queue_wait_min": max_wait,
        "road_user_cost": road_user_costs.plan_delay_cost(r.plan, delay + exit_delay),
    }
    if exits:  # the traffic for exit ramps held in the queue (not in the delay per vehicle)
        cols["exit_ramp_delay_veh_h"] = exit_delay
    code = np.zeros(n_hours, dtype=np.int64)
    for bit, (name, _, ok) in enumerate(checks):
        cols[name] = ok
        code |= (~ok).astype(np.int64) << bit
    labels = []
    for c in range(1 << len(checks)):
        failed = [label for bit, (_, label, _) in enumerate(checks) if c >> bit & 1]
        labels.append("over limit: " + ", ".join(failed) if failed else "ok")
    status = np.array(labels, dtype=object)[code]
    if r.plan.thresholds.max_queue_length is not None:
        # the length shown leaves out the traffic held back (hour_checks)
        unknown = length_unknown(held)
        status[unknown] = [
            s.replace("queue length", "queue length unknown", 1) for s in status[unknown]
        ]
    cols["status"] = status
    return cols


def _max(values: np.ndarray) -> float:
    """The largest value of a per-hour column of floats: a plan covers at least one whole
    hour, and the columns it is asked of hold no NaN (an hour without arrivals has an
    average delay of 0, an hour without a queue a longest wait of 0)."""
    return float(np.max(values))


def summarise(r: Run, hours: dict[str, np.ndarray]) -> Summary:
    """Maximum queue and when, totals, last clearance, failing hours (``hours``: the
    columns of :func:`hour_columns`)."""
    q = r.queue
    if r.back_of_queue is not None:
        ext = r.back_of_queue.extent
        lmax, lmax_at = ext.max_m, ext.at_s
    else:
        lengths = np.concatenate((r.length_start, r.length_end))
        times = np.concatenate((r.t[:-1], r.t[1:]))
        i = int(np.argmax(lengths))
        lmax, lmax_at = float(lengths[i]), float(times[i])
    j = int(np.argmax(q.queue))
    clears = q.clear_times()
    last_clear = None
    if len(clears) and q.queue[-1] == 0:
        last_clear = clock(r, float(clears.max()))
    over = np.zeros(len(hours["hour_start"]), dtype=bool)
    for name in CHECK_COLUMNS:
        if name in hours:
            over |= ~hours[name]  # the checks are boolean arrays
    failing = tuple(hours["hour_start"][over])  # () when no hour fails
    qd = float(q.delay.sum()) / HOUR
    wd = float(r.work_zone_delay.sum()) / HOUR
    xd = 0.0 if r.sections is None else float(sum(e.total_veh_h for e in r.sections.exits))
    return Summary(
        max_queue_length_m=lmax,
        max_queue_length_at=clock(r, lmax_at) if lmax > 0 and lmax_at is not None else None,
        max_queue_veh=float(q.queue[j]),
        max_queue_veh_at=clock(r, r.t[j]) if q.queue[j] > 0 else None,
        total_delay_veh_h=qd + wd + xd,
        queue_delay_veh_h=qd,
        work_zone_delay_veh_h=wd,
        vehicles_affected=float((q.arrival_rate * q.busy).sum()),
        max_average_delay_min=_max(hours["average_delay_min"]),
        max_queue_wait_min=_max(hours["max_queue_wait_min"]),
        last_queue_clears=last_clear,
        queue_at_end_veh=float(q.queue[-1]),
        hours_failing=failing,
        total_cost=float(road_user_costs.plan_delay_cost(r.plan, qd + wd + xd)),
        exit_ramp_delay_veh_h=xd,
    )
