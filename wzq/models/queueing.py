"""Exact deterministic queueing for piecewise-constant demand and capacity.

The input-output (cumulative curve) model of a bottleneck: arrivals A(t) and
departures D(t); the queue is A(t) - D(t), the total delay the area between the
two curves (the deterministic D/D/1 queue of the traffic-engineering textbooks,
e.g. Mannering & Washburn, *Principles of Highway Engineering and Traffic
Analysis*, chapter on queueing; May, *Traffic Flow Fundamentals*, 1990, ch. 11
— cited from memory). With demand and capacity constant on each interval the
queue is piecewise linear, so it is solved exactly at interval boundaries with
no time step; a queue that clears inside an interval is found at its exact
instant.

Capacity drop (HCM 6th/7th ed., ch. 10 and 25): while no queue stands, the
section carries up to its pre-breakdown capacity; once demand exceeds it the
queue discharges at the lower queue-discharge rate until the queue is gone.
Each interval therefore has two rates, ``prebreakdown`` and ``discharge``.

Units: any consistent set; :func:`solve` is called with seconds and veh/s.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

__all__ = [
    "EMPTY",
    "QueueRun",
    "curves",
    "queue_at_boundaries",
    "solve",
    "waits",
]

#: Queues smaller than this (vehicles) are treated as empty, absorbing the
#: rounding of long cumulative sums.
EMPTY = 1e-6


@dataclass(frozen=True)
class QueueRun:
    """The exact queue on a grid of ``m`` intervals (``m + 1`` boundaries).

    ``queue`` at boundaries; per interval: ``busy`` (time a queue stands),
    ``delay`` (area between the curves), ``departures`` (vehicles served),
    ``queued`` (the discharge rate applies). ``arrivals_cum`` and
    ``departures_cum`` are the cumulative curves at the boundaries.
    """

    t: np.ndarray
    arrival_rate: np.ndarray
    discharge: np.ndarray
    queue: np.ndarray
    busy: np.ndarray
    delay: np.ndarray
    arrivals: np.ndarray
    departures: np.ndarray
    arrivals_cum: np.ndarray
    departures_cum: np.ndarray

    @cached_property
    def touched(self) -> np.ndarray:
        """Indices of the intervals with a queue at either end (elsewhere nothing
        waits: ``busy`` and ``delay`` are 0 and departures equal arrivals)."""
        return _touched(self.queue)

    @property
    def queued(self) -> np.ndarray:
        return self.busy > 0

    @property
    def total_delay(self) -> float:
        return float(self.delay.sum())

    def clear_times(self) -> np.ndarray:
        """Instants at which a standing queue empties (inside or at the end of an interval)."""
        q0, q1 = self.queue[:-1], self.queue[1:]
        ends = (q0 > 0) & (q1 == 0)
        return self.t[:-1][ends] + self.busy[ends]


def _touched(q: np.ndarray) -> np.ndarray:
    """Indices of the intervals with a queue at either end, from the queue at boundaries."""
    return np.flatnonzero((q[:-1] > 0) | (q[1:] > 0))


def _lindley(net: np.ndarray, q0: float) -> np.ndarray:
    """Queue at boundaries for increments ``net`` with reflection at zero.

    Lindley's recursion ``Q[k+1] = max(0, Q[k] + net[k])`` in closed form:
    ``Q[k] = S[k] - min(-q0, min_{1<=j<=k} S[j])`` with ``S`` the running sum.
    Along the last axis, so a 2-D ``net`` holds one independent run per row.
    """
    s = np.empty((*net.shape[:-1], net.shape[-1] + 1))
    s[..., 0] = 0.0
    np.cumsum(net, axis=-1, out=s[..., 1:])
    floor = s.copy()
    floor[..., 0] = -q0
    np.minimum.accumulate(floor, axis=-1, out=floor)
    q = s - floor
    q[q < EMPTY] = 0.0
    return q


def _fixed_point(net: np.ndarray, hyst: np.ndarray, q0: float) -> np.ndarray:
    """Queue at boundaries with the runs of ``hyst`` intervals switched on only when fed.

    A run is a stretch of consecutive ``hyst`` intervals. Runs are switched on
    only when the queue entering them is not empty; the loop only ever switches
    runs on, so it ends after at most as many passes as there are runs (usually
    one or two).
    """
    if not hyst.any():
        return _lindley(net, q0)
    first = hyst.copy()
    first[1:] &= ~hyst[:-1]
    starts = np.flatnonzero(first)
    run_id = np.cumsum(first) - 1
    active = np.zeros(len(starts), dtype=bool)
    while True:
        eff = np.where(hyst & ~active[run_id], 0.0, net)
        q = _lindley(eff, q0)
        now = q[starts] > 0
        if np.array_equal(now, active):
            return q
        active = now


def queue_at_boundaries(
    duration: np.ndarray,
    arrival_rate: np.ndarray,
    prebreakdown: np.ndarray,
    discharge: np.ndarray,
    q0: float = 0.0,
) -> np.ndarray:
    """The exact queue at every interval boundary (vectorised).

    A queue starts only in an interval whose demand exceeds the pre-breakdown
    capacity; once standing it changes at ``arrival - discharge``. An interval
    with ``discharge < arrival <= prebreakdown`` therefore keeps a standing
    queue growing but cannot start one (the hysteresis of the capacity drop).

    Lindley's recursion is monotone in its increments, so the queue never
    exceeds the one found with every such interval switched on; where that
    bound is zero the queue is zero. The runs of such intervals are therefore
    settled (a fixed point that switches a run on when the queue entering it is
    not empty) only on the intervals the bound touches: stretches that each
    begin and end with no queue, so they can be solved one after another. A
    run never joins two stretches: an interval of a run adds to the bound, so
    the interval after it starts with a queue and belongs to the same stretch.
    """
    net = (arrival_rate - discharge) * duration
    hyst = (net > 0) & (arrival_rate <= prebreakdown)
    if not hyst.any():
        return _lindley(net, q0)
    bound = _lindley(net, q0)
    touched = bound[:-1] > 0
    touched |= bound[1:] > 0
    k = np.flatnonzero(touched)
    q = np.zeros(len(net) + 1)
    if len(k) == 0:
        return q
    sub = _fixed_point(net[k], hyst[k], q0 if k[0] == 0 else 0.0)
    q[k + 1] = sub[1:]
    q[k[0]] = sub[0]
    return q


def solve(
    duration: np.ndarray,
    arrival_rate: np.ndarray,
    prebreakdown: np.ndarray,
    discharge: np.ndarray | None = None,
    q0: float = 0.0,
    *,
    t: np.ndarray | None = None,
) -> QueueRun:
    """Solve the deterministic queue on intervals of given ``duration``.

    ``arrival_rate``, ``prebreakdown`` and ``discharge`` are rates per unit of
    time, constant on each interval (``discharge`` defaults to
    ``prebreakdown``: no capacity drop). ``t``, the boundaries, may be given
    when the caller has them (they must start at 0 and differ by
    ``duration``); otherwise they are the cumulative durations. Returns a
    :class:`QueueRun`; the total delay is the exact area between the
    cumulative curves.
    """
    duration = np.asarray(duration, dtype=float)
    lam = np.asarray(arrival_rate, dtype=float)
    pre = np.asarray(prebreakdown, dtype=float)
    mu = pre if discharge is None else np.minimum(np.asarray(discharge), pre)  # float: pre is
    q = queue_at_boundaries(duration, lam, pre, mu, q0)
    # only the intervals with a queue at either end hold anyone up
    k = _touched(q)
    busy = np.zeros(len(duration))
    area = np.zeros(len(duration))
    if len(k):
        qa, qb, bk = q[k], q[k + 1], duration[k]  # bk: a copy (fancy indexing)
        # time a queue stands: all of the interval while the queue is not empty
        # at its end, up to the exact clearing instant when it empties
        c = qb == 0  # here qa > 0: the queue clears inside the interval
        if c.any():
            kc = k[c]
            bk[c] = np.minimum(qa[c] / (mu[kc] - lam[kc]), bk[c])
        busy[k] = bk
        # area between the curves: a trapezoid over the busy time (a triangle
        # when the queue clears, since it ends at zero)
        area[k] = 0.5 * (qa + qb) * bk
    arrivals = lam * duration
    departures = arrivals - np.diff(q)
    if t is None:
        t = np.empty(len(duration) + 1)
        t[0] = 0.0
        np.cumsum(duration, out=t[1:])
    a_cum = np.empty(len(duration) + 1)
    a_cum[0] = q0
    np.cumsum(arrivals, out=a_cum[1:])
    if q0:
        a_cum[1:] += q0
    d_cum = a_cum - q
    return QueueRun(t, lam, mu, q, busy, area, arrivals, departures, a_cum, d_cum)


def _inverse(cum: np.ndarray, t: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Earliest time at which a non-decreasing piecewise-linear curve reaches ``y``."""
    j = np.searchsorted(cum, y)  # the left side: the first index with cum >= y
    j = np.minimum(np.maximum(j, 1), len(cum) - 1)
    c0, c1 = cum[j - 1], cum[j]
    rise = c1 - c0
    flat = rise <= 0
    frac = (y - c0) / np.where(flat, 1.0, rise)
    frac[flat] = 1.0
    return t[j - 1] + np.minimum(np.maximum(frac, 0.0), 1.0) * (t[j] - t[j - 1])


def curves(queue: QueueRun) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Exact knots ``(t, A, D)`` of the point-queue cumulative curves.

    :class:`~wzq.models.queueing.QueueRun` gives ``A`` and ``D`` at interval
    boundaries. ``A`` is linear within each interval, but ``D`` has a kink where
    a queue clears inside an interval (discharge rate before, arrival rate
    after); those instants are added as knots so that linear interpolation
    between the returned knots is exact.
    """
    t, a, d = queue.t, queue.arrivals_cum, queue.departures_cum
    k, tc, ac = _clearing_knots(queue, queue.touched)
    if len(k) == 0:
        return t.copy(), a.copy(), d.copy()
    return np.insert(t, k + 1, tc), np.insert(a, k + 1, ac), np.insert(d, k + 1, ac)


def _clearing_knots(queue: QueueRun, k: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Of the intervals ``k``, those in which a queue clears strictly inside,
    with the clearing instant and the count then (``A = D`` at that instant)."""
    t = queue.t
    k = k[(queue.queue[k] > 0) & (queue.queue[k + 1] == 0) & (queue.busy[k] < t[k + 1] - t[k])]
    tc = t[k] + queue.busy[k]
    ac = queue.arrivals_cum[k] + queue.arrival_rate[k] * queue.busy[k]
    inside = (tc > t[k]) & (tc < t[k + 1])
    return k[inside], tc[inside], ac[inside]


def waits(run: QueueRun) -> tuple[np.ndarray, np.ndarray]:
    """Arrival instants and the exact first-in-first-out wait of a vehicle arriving then.

    The wait ``w(t) = D^-1(A(t)) - t`` is piecewise linear between the arrival
    curve's breaks and the instants at which ``A`` reaches a break of ``D`` (the
    interval boundaries and the instants a queue clears inside an interval, where
    ``D`` turns from the discharge rate to the arrival rate), so its maximum over
    any period is found among these candidates.
    """
    a, d, t = run.arrivals_cum, run.departures_cum, run.t
    busy = np.flatnonzero(run.busy > 0)
    if len(busy) == 0:
        return t.copy(), np.zeros_like(t)
    # outside busy intervals the wait is zero: only their boundaries matter
    mark = np.zeros(len(t), dtype=bool)
    mark[busy] = True
    mark[busy + 1] = True
    ends = np.flatnonzero(mark)
    # the departure curve has a corner where a queue clears inside an interval; a
    # vehicle arriving then (A = D there) is a candidate too
    td, _ad, dd = curves(run)
    _k, tc, _ac = _clearing_knots(run, run.touched)
    cand = np.concatenate((t[ends], _inverse(a, t, d[ends]), tc))
    cand.sort()
    level = np.interp(cand, t, a)
    w = _inverse(dd, td, level) - cand
    return cand, np.maximum(w, 0.0)
