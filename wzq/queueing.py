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

import numpy as np

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


def _lindley(net: np.ndarray, q0: float) -> np.ndarray:
    """Queue at boundaries for increments ``net`` with reflection at zero.

    Lindley's recursion ``Q[k+1] = max(0, Q[k] + net[k])`` in closed form:
    ``Q[k] = S[k] - min(-q0, min_{1<=j<=k} S[j])`` with ``S`` the running sum.
    """
    s = np.empty(len(net) + 1)
    s[0] = 0.0
    np.cumsum(net, out=s[1:])
    floor = s.copy()
    floor[0] = -q0
    np.minimum.accumulate(floor, out=floor)
    q = s - floor
    q[q < EMPTY] = 0.0
    return q


def _run_starts(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First index and run id (per element, -1 outside) of the runs of True in ``mask``."""
    m = mask.astype(np.int8)
    edges = np.diff(np.concatenate(([0], m)))
    starts = np.flatnonzero(edges == 1)
    run_id = np.cumsum(edges == 1) - 1
    run_id = np.where(mask, run_id, -1)
    return starts, run_id


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
    Runs of such intervals are switched on only when the queue entering them is
    not empty, found by a fixed point that only ever switches runs on (so it
    ends after at most as many passes as there are such runs, usually one or
    two).
    """
    net = (arrival_rate - discharge) * duration
    hyst = (arrival_rate > discharge) & (arrival_rate <= prebreakdown)
    if not hyst.any():
        return _lindley(net, q0)
    starts, run_id = _run_starts(hyst)
    active = np.zeros(len(starts), dtype=bool)
    while True:
        eff = np.where(hyst & ~active[run_id], 0.0, net) if len(starts) else net
        q = _lindley(eff, q0)
        now = q[starts] > 0
        if np.array_equal(now, active):
            return q
        active = now


def solve(
    duration: np.ndarray,
    arrival_rate: np.ndarray,
    prebreakdown: np.ndarray,
    discharge: np.ndarray | None = None,
    q0: float = 0.0,
) -> QueueRun:
    """Solve the deterministic queue on intervals of given ``duration``.

    ``arrival_rate``, ``prebreakdown`` and ``discharge`` are rates per unit of
    time, constant on each interval (``discharge`` defaults to
    ``prebreakdown``: no capacity drop). Returns a :class:`QueueRun`; the
    total delay is the exact area between the cumulative curves.
    """
    duration = np.asarray(duration, dtype=float)
    lam = np.asarray(arrival_rate, dtype=float)
    pre = np.asarray(prebreakdown, dtype=float)
    mu = pre if discharge is None else np.minimum(np.asarray(discharge, dtype=float), pre)
    q = queue_at_boundaries(duration, lam, pre, mu, q0)
    qa, qb = q[:-1], q[1:]
    # time a queue stands inside each interval
    starts_busy = (qa == 0) & (qb > 0)
    clears = (qa > 0) & (qb == 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_clear = np.where(clears, qa / (mu - lam), 0.0)
    t_clear = np.minimum(t_clear, duration)
    busy = np.where((qa > 0) & (qb > 0) | starts_busy, duration, np.where(clears, t_clear, 0.0))
    area = np.where(clears, 0.5 * qa * t_clear, 0.5 * (qa + qb) * duration)
    arrivals = lam * duration
    departures = arrivals - (qb - qa)
    t = np.empty(len(duration) + 1)
    t[0] = 0.0
    np.cumsum(duration, out=t[1:])
    a_cum = np.empty_like(t)
    a_cum[0] = q0
    np.cumsum(arrivals, out=a_cum[1:])
    a_cum[1:] += q0
    d_cum = a_cum - q
    return QueueRun(t, lam, mu, q, busy, area, arrivals, departures, a_cum, d_cum)


def _inverse(cum: np.ndarray, t: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Earliest time at which a non-decreasing piecewise-linear curve reaches ``y``."""
    j = np.searchsorted(cum, y, side="left")
    j = np.clip(j, 1, len(cum) - 1)
    c0, c1 = cum[j - 1], cum[j]
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(c1 > c0, (y - c0) / (c1 - c0), 1.0)
    return t[j - 1] + np.clip(frac, 0.0, 1.0) * (t[j] - t[j - 1])


def waits(run: QueueRun) -> tuple[np.ndarray, np.ndarray]:
    """Arrival instants and the exact first-in-first-out wait of a vehicle arriving then.

    The wait ``w(t) = D^-1(A(t)) - t`` is piecewise linear between the arrival
    curve's breaks and the instants at which ``A`` reaches a break of ``D``, so
    its maximum over any period is found among these candidates.
    """
    a, d, t = run.arrivals_cum, run.departures_cum, run.t
    busy = np.flatnonzero(run.busy > 0)
    if len(busy) == 0:
        return t.copy(), np.zeros_like(t)
    # outside busy intervals the wait is zero: only their boundaries matter
    ends = np.unique(np.concatenate((busy, busy + 1)))
    cand = np.concatenate((t[ends], _inverse(a, t, d[ends])))
    cand.sort()
    level = np.interp(cand, t, a)
    w = _inverse(d, t, level) - cand
    return cand, np.maximum(w, 0.0)
