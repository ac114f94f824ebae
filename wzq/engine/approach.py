"""The approach road: ramps that feed and drain the queue, and where the queue reaches.

The approach upstream of the closure is cut by its ramps into sections, each
with the site's lanes and fundamental diagram. The plan's demand is the
mainline flow upstream of every ramp; an entrance ramp adds its flow, an exit
ramp takes its flow (:func:`wzq.engine.plan.ramp_flows`), so the flow arriving at the
closure is the mainline plus the entrance ramps minus the exit ramps. Flows
are stated on the closure's clock (the traffic that would reach the closure,
or the ramp, in each hour in free flow), as the demand already is.

Two rules at the ramps:

* **merge** -- the entrance ramp's traffic enters in full: the merge rule of
  the cell transmission model for networks (Daganzo 1995) with the ramp's
  priority share of the merge's flow at least its own flow. Inside the queue
  the mainline upstream of the ramp then carries the queue's flow minus the
  ramp's; when the ramp's flow is more than the queue passes, the ramp itself
  would queue, which is not modelled (a warning says so);
* **diverge** -- first in, first out (Daganzo 1995; Newell 1993, part III):
  vehicles pass the diverge in their order of arrival, and a share of them
  leaves. While the queue covers the exit ramp, the exiting traffic waits in it
  with everyone else; the flow past the ramp is the through flow divided by
  the through share.

Exact solution by sections (Newell's simplified kinematic-wave method)
------------------------------------------------------------------------
On each section Newell's formula holds with the section's own boundary
counts (Newell 1993, part I): at ``delta`` metres upstream of its downstream
end, with ``e(t)`` the count that passes that end in free flow and ``b(s)``
the count carried upstream from it by the congested waves,

    N(delta, t) = min( e(t + delta/v_f),  b(t - delta/w) + n k_j delta ).

``b`` of the first section is the closure's departure curve ``D``. Across a
ramp the counts just downstream and just upstream are related by conservation
and, at a diverge, by first-in-first-out: with ``R`` the entrance ramp's count
and ``T`` the number of vehicles going on past the exit among the first ``m``
to arrive (``T(A_up(theta)) = A_down(theta)`` on the closure's clock),

    entrance:  N_up = N_down - R          exit:  N_down = T(N_up)

and both maps rise with the count, so they carry the minimum through the ramp
(Newell 1993, part III, for the destination counts). The congested count of the
next section is therefore ``b_up = T^-1(b_down(s - l/w) + n k_j l)`` (or ``... - R``),
capped by the road's capacity (no section carries more than ``n C``; the
running minimum ``b(s') + n C (s - s')`` of Daganzo's 2005 variational form),
and the free count passed down through the ramp is ``T(min(e_up, b_up))`` (or
``+ R``). Both passes are compositions, minima and shifts of piecewise-linear
curves, done exactly (no time step). In each section the back of the queue is
then the zero of ``g = e(t + delta/v_f) - b(t - delta/w) - n k_j delta`` found
by the level-curve construction of :mod:`wzq.models.newell`, and the back of the whole
queue is the farthest section whose own zero lies inside it.

When the queue covers an exit ramp and the flow it passes would need more than
the road's capacity upstream of the ramp (the closure discharges ``mu`` and the
exit takes a share ``beta``: ``mu / (1 - beta) > n C``, e.g. the recovery after a
closure with a capacity drop of 7 % and more than 7 % leaving), the section
upstream discharges at capacity, the through traffic past the ramp is only
``(1 - beta) n C`` and the queue near the closure drains from its upstream end.
The closure then receives its traffic later than in free flow; its point queue
is solved again with those arrivals (:func:`wzq.models.queueing.solve` on the knots of
the new arrival curve) and the passes are repeated until nothing changes (the
waves need ``l (1/v_f + 1/w)`` to go round, so this ends). The delay of the
through traffic counts the time it waits upstream of the ramp.

Single-state relation by sections
---------------------------------
With the single-state method (or a curved diagram) the queued vehicles fill the
sections from the closure: section ``i`` holds ``n (k_Q,i - k_A,i)`` vehicles per
metre beyond free flow, ``k_A,i`` at its own arriving flow and ``k_Q,i`` at its
own queued flow (the discharge minus the entrance ramps downstream, divided by
the through shares of the exits downstream), of which the share ``tau_i`` (the
product of those through shares) is traffic for the closure.

References (bibliographic details from memory where marked):

* Newell, G. F. (1993). A simplified theory of kinematic waves in highway
  traffic, part I: general theory; part II: queueing at freeway bottlenecks;
  part III: multi-destination flows. *Transportation Research B* 27(4),
  281-287, 289-303 and 303-313 (part III doi:10.1016/0191-2615(93)90040-H;
  the page ranges of parts II and III from memory).
* Daganzo, C. F. (1995). The cell transmission model, part II: network
  traffic. *Transportation Research B* 29(2), 79-93 (merge and first-in-
  first-out diverge; from memory).
* Daganzo, C. F. (2005). A variational formulation of kinematic waves: basic
  theory and complex boundary conditions. *Transportation Research B* 39(2),
  187-196 (the capacity of a stationary observer; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from wzq.engine.plan import Approach, Demand, Landmark, Plan, ramp_flows
from wzq.models import newell
from wzq.models.flow import PIECEWISE_LINEAR, FundamentalDiagram
from wzq.models.queueing import EMPTY, QueueRun, solve
from wzq.units import HOUR

__all__ = [
    "ExitDelay",
    "LandmarkResult",
    "Ramps",
    "SectionsRun",
    "by_sections",
    "landmark_results",
    "newell_queue",
    "ramps_for",
    "ramps_on_grid",
    "single_state",
    "trajectory_of_lengths",
]

#: Counts (veh) within which two curves are taken as equal (rounding of long sums).
COUNT_TOL = 1e-6
#: Most rounds of the passes when a ramp limits the flow (each adds a wave's round trip).
MAX_ROUNDS = 60


# --------------------------------------------------------------------------- the ramps


@dataclass(frozen=True)
class Ramps:
    """The ramps on the engine's grid (``m`` intervals), nearest the closure first.

    ``distance`` (m upstream of the taper), ``entrance`` (True for an entrance
    ramp), ``rate[j]`` the ramp's flow and ``section[i]`` the mainline flow in
    section ``i`` (veh/h per interval, closure clock): section 0 ends at the
    closure, section ``i`` runs from ramp ``i`` to ramp ``i + 1``.
    """

    names: tuple[str, ...]
    distance: np.ndarray
    entrance: np.ndarray
    rate: np.ndarray
    section: np.ndarray

    @property
    def count(self) -> int:
        return len(self.names)


def ramps_on_grid(plan: Plan, demand_index: np.ndarray) -> Ramps | None:
    """The plan's ramps on a grid whose intervals lie in the demand intervals
    ``demand_index``; ``None`` when the plan has no ramp."""
    return ramps_for(plan.demand, plan.approach, demand_index)


def ramps_for(demand: Demand, approach: Approach, demand_index: np.ndarray) -> Ramps | None:
    """:func:`ramps_on_grid` for a demand and an approach description."""
    if not approach.ramps:
        return None
    rf = ramp_flows(demand, approach)
    return Ramps(
        names=tuple(r.name for r in rf.ramps),
        distance=np.array([r.distance for r in rf.ramps], dtype=float),
        entrance=np.array([r.kind == "entrance-ramp" for r in rf.ramps]),
        rate=rf.rates[:, demand_index],
        section=rf.sections[:, demand_index],
    )


# --------------------------------------------------------------------------- curves
#
# A curve is a pair (x, y): knots strictly increasing in x, linear between
# them and extended linearly (with the end segments' slopes) beyond them.


def _at(x: np.ndarray, y: np.ndarray, q: np.ndarray | float) -> np.ndarray:
    """The curve through ``(x, y)`` at ``q``, extended linearly beyond its ends."""
    q = np.asarray(q, dtype=float)
    out = np.interp(q, x, y)
    if len(x) > 1:
        lo, hi = q < x[0], q > x[-1]
        if lo.any():
            out = np.where(lo, y[0] + (q - x[0]) * (y[1] - y[0]) / (x[1] - x[0]), out)
        if hi.any():
            out = np.where(hi, y[-1] + (q - x[-1]) * (y[-1] - y[-2]) / (x[-1] - x[-2]), out)
    return out


def _increasing(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Drop knots that do not move ``x`` forward (keeps the first of each run)."""
    keep = np.ones(len(x), dtype=bool)
    keep[1:] = np.diff(x) > 0
    if keep.all():
        return x, y
    # a later knot at the same x: keep a running maximum position
    xs = np.maximum.accumulate(x)
    keep[1:] = xs[1:] > xs[:-1]
    return x[keep], y[keep]


def _compose(ox: np.ndarray, oy: np.ndarray, ix: np.ndarray, iy: np.ndarray):
    """``outer(inner(x))`` exactly: the inner curve's knots and every instant at
    which the inner curve crosses a knot position of the outer one."""
    y0, y1 = iy[:-1], iy[1:]
    lo, hi = np.minimum(y0, y1), np.maximum(y0, y1)
    j0 = np.searchsorted(ox, lo, side="right")
    j1 = np.searchsorted(ox, hi, side="left")
    cnt = np.maximum(j1 - j0, 0)
    x = ix
    total = int(cnt.sum())
    if total:
        seg = np.repeat(np.arange(len(y0)), cnt)
        offs = np.arange(total) - np.repeat(np.cumsum(cnt) - cnt, cnt)
        j = j0[seg] + offs
        frac = (ox[j] - y0[seg]) / (y1[seg] - y0[seg])
        xc = ix[seg] + frac * (ix[seg + 1] - ix[seg])
        x = np.unique(np.concatenate((ix, xc)))
    return x, _at(ox, oy, _at(ix, iy, x))


def _add(
    x1: np.ndarray, y1: np.ndarray, x2: np.ndarray, y2: np.ndarray, sign: float = 1.0
) -> tuple[np.ndarray, np.ndarray]:
    """``y1 + sign * y2`` on the union of the knots."""
    x = np.union1d(x1, x2)
    return x, _at(x1, y1, x) + sign * _at(x2, y2, x)


def _minimum(
    x1: np.ndarray, y1: np.ndarray, x2: np.ndarray, y2: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """The lower of two curves, with the crossings as knots."""
    x = np.union1d(x1, x2)
    a, b = _at(x1, y1, x), _at(x2, y2, x)
    d = a - b
    k = np.flatnonzero(((d[:-1] > 0) & (d[1:] < 0)) | ((d[:-1] < 0) & (d[1:] > 0)))
    if len(k):
        xc = x[k] + d[k] / (d[k] - d[k + 1]) * (x[k + 1] - x[k])
        x = np.union1d(x, xc)
        a, b = _at(x1, y1, x), _at(x2, y2, x)
    return x, np.minimum(a, b)


def _capacity_cap(
    x: np.ndarray, y: np.ndarray, rate: float, span: tuple[float, float]
) -> tuple[np.ndarray, np.ndarray, bool]:
    """``min over x' <= x of y(x') + rate (x - x')``: a count can rise no faster than
    the capacity ``rate`` (Daganzo 2005, the stationary observer). Returns the
    curve and whether the cap changed it within ``span``."""
    g = rate * x - y
    if np.all(np.diff(g) >= 0):
        return x, y, False
    xs, gs = newell._envelope(x, g)
    ys = rate * xs - gs
    inside = (xs >= span[0]) & (xs <= span[1])
    changed = bool(np.any(_at(x, y, xs[inside]) - ys[inside] > COUNT_TOL))
    return xs, ys, changed


def _cumulative(t: np.ndarray, rate_veh_h: np.ndarray, lo: float, hi: float):
    """Cumulative count (veh) of a piecewise-constant flow on the grid ``t``,
    extended to ``[lo, hi]`` with the first and last flows."""
    rate = rate_veh_h / HOUR
    c = np.zeros(len(t))
    np.cumsum(rate * np.diff(t), out=c[1:])
    x = np.concatenate(([lo], t, [hi]))
    y = np.concatenate(([c[0] - rate[0] * (t[0] - lo)], c, [c[-1] + rate[-1] * (hi - t[-1])]))
    return x, y


def _departures(tk: np.ndarray, dk: np.ndarray, lo: float, hi: float):
    """Departure curve: held before its first knot (as :mod:`wzq.models.newell`), and after
    the last at half its last flow. Beyond the data the departures only set how far
    behind a ramp lies the zero of a section the queue has not reached, never
    whether it has (that is decided at the ramp itself, at a time within the data);
    half the flow keeps the level curves rising there, so they cover the run."""
    slope = 0.5 * (dk[-1] - dk[-2]) / (tk[-1] - tk[-2]) if len(tk) > 1 else 0.0
    x = np.concatenate(([lo], tk, [hi]))
    y = np.concatenate(([dk[0]], dk, [dk[-1] + slope * (hi - tk[-1])]))
    return x, y


# --------------------------------------------------------------------------- the result


@dataclass(frozen=True)
class ExitDelay:
    """The delay of the traffic leaving at one exit ramp while the queue holds it.

    ``delay_veh_s`` per hour of the run (at the ramp's clock), ``max_wait_s``
    the longest extra time one exiting vehicle spent (``None`` with the
    single-state relation, which follows no vehicle, or when no exiting vehicle
    both arrives and leaves within the run).
    """

    name: str
    distance: float
    delay_veh_s: np.ndarray
    max_wait_s: float | None

    @property
    def total_veh_h(self) -> float:
        return float(self.delay_veh_s.sum()) / HOUR


@dataclass(frozen=True)
class SectionsRun:
    """What :func:`by_sections` or :func:`single_state` found.

    ``queue``: the traffic for the closure -- its free-flow arrivals at the
    closure and its actual departures -- on the grid ``queue.t`` (the run's
    grid, or that grid with more knots when a ramp limited the flow);
    ``times``, ``distance``: the farthest queued point (m upstream of the
    taper), piecewise linear, with a repeated time where it jumps (a stretch of
    queue cut off upstream of an exit ramp ends); ``exits``: the delay of the
    exiting traffic per exit ramp; ``limited_by``: names of the exit ramps at
    which the exiting traffic held in the queue limited the traffic going on;
    ``ramp_over``: names of the entrance ramps whose flow was more than the
    queue passed there; ``capacity_limited``: a section was asked to carry more
    than the road's capacity.
    """

    queue: QueueRun
    times: np.ndarray
    distance: np.ndarray
    exits: tuple[ExitDelay, ...]
    limited_by: tuple[str, ...] = ()
    ramp_over: tuple[str, ...] = ()
    capacity_limited: bool = False
    settled: bool = True


# --------------------------------------------------------------------------- Newell by sections


def _section_track(
    sx: np.ndarray,
    b: np.ndarray,
    ux: np.ndarray,
    e: np.ndarray,
    nch: float,
    v: float,
    w: float,
    t0: float,
    t_end: float,
) -> tuple[np.ndarray, np.ndarray, bool]:
    """Zero of ``g`` in one section (distance from its downstream end, clipped at
    0, with the instants it crosses 0 as vertices), over ``[t0, t_end]``, by the
    level curves ``E(s) = n c s - b(s)`` and ``F(u) = n c u - e(u)`` of
    :mod:`wzq.models.newell` (``c`` the lane capacity of the triangle through the free
    and congested branches). Returns the vertices and whether the span was
    covered."""
    # both curves never fall (every count rises no faster than the capacity); the
    # running maximum only removes rounding
    ev = np.maximum.accumulate(nch * sx - b)
    fv = np.maximum.accumulate(nch * ux - e)
    lo, hi = max(ev[0], fv[0]), min(ev[-1], fv[-1])
    if lo > hi:
        # the ranges do not meet: F lies below E (the free count arriving at capacity
        # all along, below the congested one), so g < 0 throughout: no queue here
        return np.array([t0, t_end]), np.zeros(2), True
    levels = np.unique(np.concatenate((ev, fv, [lo, hi])))
    levels = levels[(levels >= lo) & (levels <= hi)]
    if np.all(np.diff(ev) > 0) and np.all(np.diff(fv) > 0):
        s = np.interp(levels, ev, sx)
        u = np.interp(levels, fv, ux)
        tt, dd = newell._clip_at_zero((v * u + w * s) / (v + w), v * w * (u - s) / (v + w))
    else:
        tt, dd = newell._vertices(ev, sx, fv, ux, levels, v, w)
    last = np.diff(tt, append=np.inf) > 0
    tt, dd = tt[last], dd[last]
    covered = bool(len(tt) and tt[0] <= t0 and tt[-1] >= t_end)
    inside = (tt > t0) & (tt < t_end)
    ends = np.interp([t0, t_end], tt, dd)
    times = np.concatenate(([t0], tt[inside], [t_end]))
    dist = np.concatenate(([ends[0]], dd[inside], [ends[1]]))
    dist[dist < newell.ZERO_M] = 0.0
    return times, dist, covered


def _farthest(
    tracks: list[tuple[np.ndarray, np.ndarray]], starts: np.ndarray, lengths: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """The farthest queued point over the sections.

    Section ``i`` starts ``starts[i]`` metres upstream of the taper and is
    ``lengths[i]`` long; its queue reaches ``starts[i] + min(delta_i, lengths[i])``
    while ``delta_i > 0``. The reaches of different sections lie in different
    ranges, so the farthest is that of the farthest section with a queue; where
    a section's queue appears or goes the result jumps (two vertices at one
    instant).
    """
    times = np.unique(np.concatenate([tt for tt, _ in tracks]))
    extra = []
    for (tt, dd), ell in zip(tracks, lengths, strict=True):
        if np.isfinite(ell):
            a, b = dd[:-1] - ell, dd[1:] - ell
            k = np.flatnonzero(((a > 0) & (b < 0)) | ((a < 0) & (b > 0)))
            if len(k):
                extra.append(tt[k] + a[k] / (a[k] - b[k]) * (tt[k + 1] - tt[k]))
    if extra:
        times = np.union1d(times, np.concatenate(extra))
    mids = 0.5 * (times[:-1] + times[1:])
    at = np.zeros(len(times))
    left = np.zeros(len(times))
    right = np.zeros(len(times))
    for (tt, dd), start, ell in zip(tracks, starts, lengths, strict=True):
        d_now = np.interp(times, tt, dd)
        reach = start + np.minimum(d_now, ell)
        active_mid = np.interp(mids, tt, dd) > 0
        act_left = np.concatenate(([d_now[0] > 0], active_mid))
        act_right = np.concatenate((active_mid, [d_now[-1] > 0]))
        at = np.maximum(at, np.where(d_now > 0, reach, 0.0))
        left = np.maximum(left, np.where(act_left, reach, 0.0))
        right = np.maximum(right, np.where(act_right, reach, 0.0))
    jump = left != right
    if not jump.any():
        return times, at
    k = np.flatnonzero(jump)
    t_out = np.insert(times, k, times[k])
    d_out = right.copy()
    d_out = np.insert(d_out, k, left[k])
    return t_out, d_out


def _queue_from_curves(
    t: np.ndarray, ax: np.ndarray, ay: np.ndarray, dx: np.ndarray, dy: np.ndarray, mu: np.ndarray
) -> QueueRun:
    """The traffic for the closure as a :class:`QueueRun` on the grid ``t``:
    free-flow arrivals ``(ax, ay)`` and actual departures ``(dx, dy)``, both
    linear between the knots of ``t``. ``mu`` is the discharge rate of each
    interval (veh/s), kept for intervals with no queue."""
    a = _at(ax, ay, t)
    d = np.minimum(_at(dx, dy, t), a)
    q = a - d
    q[q < EMPTY] = 0.0
    d = a - q
    dur = np.diff(t)
    arrivals = np.diff(a)
    departures = np.diff(d)
    busy = np.where((q[:-1] > 0) | (q[1:] > 0), dur, 0.0)
    delay = 0.5 * (q[:-1] + q[1:]) * busy
    rate = np.where(busy > 0, departures / dur, mu)
    return QueueRun(t, arrivals / dur, rate, q, busy, delay, arrivals, departures, a, d)


def _exit_delay(
    name: str,
    distance: float,
    free_x: np.ndarray,
    free_y: np.ndarray,
    act_x: np.ndarray,
    act_y: np.ndarray,
    bounds: np.ndarray,
) -> ExitDelay:
    """Area between the free-flow and the actual exit curves, hour by hour, and
    the longest horizontal gap between them (the wait of one exiting vehicle)."""
    x = np.union1d(np.union1d(free_x, act_x), bounds)
    x = x[(x >= bounds[0]) & (x <= bounds[-1])]
    # the gap is linear between these knots and never negative: trapezoids are exact
    gap = np.maximum(_at(free_x, free_y, x) - _at(act_x, act_y, x), 0.0)
    area = 0.5 * (gap[:-1] + gap[1:]) * np.diff(x)
    hour = np.clip(np.searchsorted(bounds, x[:-1], side="right") - 1, 0, len(bounds) - 2)
    per_hour = np.bincount(hour, weights=area, minlength=len(bounds) - 1)
    if gap.max() <= COUNT_TOL:
        return ExitDelay(name, distance, np.zeros(len(bounds) - 1), 0.0)
    fy = _at(free_x, free_y, x)
    ay = _at(act_x, act_y, x)
    levels = np.unique(np.concatenate((fy, ay)))
    levels = levels[(levels >= max(fy[0], ay[0])) & (levels <= min(fy[-1], ay[-1]))]
    if len(levels) == 0:  # no exiting vehicle both arrives and leaves within the run
        return ExitDelay(name, distance, per_hour, None)
    wait = _earliest(x, ay, levels) - _earliest(x, fy, levels)
    return ExitDelay(name, distance, per_hour, float(max(wait.max(), 0.0)))


def _earliest(x: np.ndarray, y: np.ndarray, levels: np.ndarray) -> np.ndarray:
    """Earliest ``x`` at which the non-decreasing curve ``(x, y)`` reaches each level."""
    j = np.clip(np.searchsorted(y, levels, side="left"), 1, len(y) - 1)
    y0, y1 = y[j - 1], y[j]
    rise = np.where(y1 > y0, y1 - y0, 1.0)
    frac = np.clip((levels - y0) / rise, 0.0, 1.0)
    return np.where(levels <= y[0], x[0], x[j - 1] + frac * (x[j] - x[j - 1]))


def by_sections(
    queue: QueueRun,
    ramps: Ramps,
    diagram: FundamentalDiagram,
    lanes: int,
    prebreakdown: np.ndarray,
    discharge: np.ndarray,
) -> SectionsRun:
    """The queue on an approach with ramps by Newell's method by sections (module notes).

    ``queue`` is the closure's point queue with the free-flow arrivals of
    section 0 (:func:`wzq.models.queueing.solve`, times in s, rates in veh/s);
    ``prebreakdown`` and ``discharge`` its capacities per interval (veh/s),
    used again when a ramp limits the flow; ``diagram`` the triangular (or
    trapezoidal) diagram per lane; ``lanes`` the approach's lanes.
    """
    if not isinstance(diagram, PIECEWISE_LINEAR):
        raise TypeError("Newell's method by sections needs the triangular diagram")
    v, w, k_j = diagram.free_speed, diagram.backward_wave_speed, diagram.jam_density
    n = float(lanes)
    nch = n * newell._lane_capacity(v, w, k_j)  # level curves: the triangle's capacity
    nc = n * float(diagram.capacity)  # what a section can carry
    t = queue.t
    t0, t_end = float(t[0]), float(t[-1])
    d = np.concatenate(([0.0], ramps.distance))  # downstream end of each section
    ell = np.append(np.diff(d), np.inf)
    margin = 2.0 * (d[-1] + 1000.0) * (1.0 / v + 1.0 / w) + 4.0 * HOUR
    for last in (False, False, True):
        out = _by_sections(
            queue, ramps, v, w, k_j, n, nch, nc, d, ell, t0, t_end, margin,
            prebreakdown, discharge, last,
        )  # fmt: skip
        if out is not None:
            return out
        margin *= 4.0
    raise AssertionError("unreachable")


def _by_sections(
    queue0: QueueRun,
    ramps: Ramps,
    v: float,
    w: float,
    k_j: float,
    n: float,
    nch: float,
    nc: float,
    d: np.ndarray,
    ell: np.ndarray,
    t0: float,
    t_end: float,
    margin: float,
    prebreakdown: np.ndarray,
    discharge: np.ndarray,
    last_try: bool,
) -> SectionsRun | None:
    """One attempt of :func:`by_sections` with curves ``margin`` seconds beyond the run;
    ``None`` when the level curves do not cover the run (unless ``last_try``: then
    the ends are held, as :mod:`wzq.models.newell` does, and the result is flagged)."""
    t = queue0.t
    lo, hi = t0 - margin, t_end + margin
    k_r = ramps.count
    # free-flow counts on the closure clock: sections, ramps
    sec = [_cumulative(t, ramps.section[i], lo, hi) for i in range(k_r + 1)]
    ramp = [_cumulative(t, ramps.rate[j], lo, hi) for j in range(k_r)]
    # first in, first out at each exit: label upstream -> count going on, and back
    through = []
    for j in range(k_r):
        if ramps.entrance[j]:
            through.append(None)
            continue
        up_x, up_y = sec[j + 1]
        dn_y = _at(sec[j][0], sec[j][1], up_x)
        fwd = _increasing(up_y, dn_y)  # T: upstream count -> through count
        back = _increasing(dn_y, up_y)  # T^-1
        through.append((fwd, back))
    limited: set[str] = set()
    over_cap = False
    queue = queue0
    arrivals0 = (sec[0][0], sec[0][1])
    eff0_prev: tuple[np.ndarray, np.ndarray] | None = None
    converged = False
    for _ in range(MAX_ROUNDS):
        tk, _ak, dk = newell.curves(queue)
        # downward pass: the congested count just upstream of each ramp
        b = [_departures(tk, dk, lo, hi)]
        raw_b = [b[0]]
        for j in range(1, k_r + 1):
            bx, by = b[j - 1]
            yx, yy = bx + ell[j - 1] / w, by + n * k_j * ell[j - 1]
            if ramps.entrance[j - 1]:
                rx, ry = ramp[j - 1]
                cx, cy = _add(yx, yy, rx - d[j] / v, ry, -1.0)
            else:
                _, (ix_, iy_) = through[j - 1]
                cx, cy = _compose(ix_, iy_, yx, yy)
            raw_b.append((cx, cy))
            b.append(_capacity_cap(cx, cy, nc, (t0, t_end))[:2])
        # upward pass: the count passed down through each ramp
        ex, ey = sec[k_r]
        eff: list[tuple[np.ndarray, np.ndarray]] = [None] * (k_r + 1)  # type: ignore[list-item]
        ex2, ey2, capped = _capacity_cap(ex - d[k_r] / v, ey, nc, (t0, t_end))
        over_cap |= capped
        eff[k_r] = (ex2, ey2)
        node_count: list[tuple[np.ndarray, np.ndarray]] = [None] * (k_r + 1)  # type: ignore[list-item]
        for j in range(k_r, 0, -1):
            nx, ny = _minimum(*eff[j], *b[j])
            node_count[j] = (nx, ny)
            if not ramps.entrance[j - 1]:
                # did the capacity cap on the congested count matter here?
                rx, ry = _minimum(*eff[j], *raw_b[j])
                inside = (nx >= t0) & (nx <= t_end)
                if np.any(_at(rx, ry, nx[inside]) - ny[inside] > COUNT_TOL):
                    limited.add(ramps.names[j - 1])
            if ramps.entrance[j - 1]:
                rx, ry = ramp[j - 1]
                ux, uy = _add(nx, ny, rx - d[j] / v, ry, 1.0)
            else:
                (fx, fy), _ = through[j - 1]
                ux, uy = _compose(fx, fy, nx, ny)
            ux2, uy2, capped = _capacity_cap(ux + ell[j - 1] / v, uy, nc, (t0, t_end))
            over_cap |= capped
            eff[j - 1] = (ux2, uy2)
        # section 0: what reaches the closure. Unless a cap held traffic back, the
        # closure's point queue stands as it is: where the queue covers a ramp the
        # count passed down is the congested one, but the closure still discharges
        # as long as its queue lasts, which is as long as the queue reaches it.
        if not limited and not over_cap:
            converged = True
            break
        e0x, e0y = eff[0]
        ref = arrivals0 if eff0_prev is None else eff0_prev
        knots = np.union1d(np.union1d(e0x, ref[0]), t)
        knots = knots[(knots >= t0) & (knots <= t_end)]
        if np.max(np.abs(_at(e0x, e0y, knots) - _at(*ref, knots))) <= COUNT_TOL:
            converged = True
            break
        eff0_prev = (e0x, e0y)
        queue = _closure_queue(t, e0x, e0y, prebreakdown, discharge)
    # the back of the queue in each section
    tracks = []
    for j in range(k_r + 1):
        sx, sy = b[j]
        ux, uy = eff[j]
        tt, dd, covered = _section_track(sx, sy, ux, uy, nch, v, w, t0, t_end)
        if not covered:
            if not last_try:
                return None
            over_cap = True  # only where flows reach the capacity all along
        tracks.append((tt, dd))
    times, dist = _farthest(tracks, d, ell)
    # the traffic for the closure: free-flow arrivals, actual departures
    if queue is queue0:
        through_queue = queue0
    else:
        tk, _ak, dk = newell.curves(queue)
        grid = np.union1d(t, tk)
        mu = discharge[np.clip(np.searchsorted(t, grid[:-1], side="right") - 1, 0, len(t) - 2)]
        through_queue = _queue_from_curves(grid, *arrivals0, tk, dk, mu)
    # exit ramps: delay of the exiting traffic held in the queue
    bounds = t0 + np.arange(max(round((t_end - t0) / HOUR), 1) + 1) * HOUR
    exits = []
    over: list[str] = []
    for j in range(1, k_r + 1):
        name = ramps.names[j - 1]
        reached = bool(np.any(tracks[j][1] > 0))
        if ramps.entrance[j - 1]:
            if reached and _falls_while_queued(raw_b[j], tracks[j]):
                over.append(name)
            continue
        up_x, up_y = sec[j]
        xx, xy = ramp[j - 1]
        label = _increasing(up_y, _at(xx, xy, up_x))  # upstream count -> exits among them
        free = (xx - d[j] / v, xy)
        nx, ny = node_count[j]
        act = _compose(label[0], label[1], nx, ny)
        exits.append(_exit_delay(name, float(d[j]), *free, *act, bounds))
    return SectionsRun(
        through_queue,
        times,
        dist,
        tuple(exits),
        tuple(nm for nm in ramps.names if nm in limited),
        tuple(over),
        over_cap,
        converged,
    )


def _falls_while_queued(
    curve: tuple[np.ndarray, np.ndarray], track: tuple[np.ndarray, np.ndarray]
) -> bool:
    """The congested count upstream of an entrance ramp falls while the queue
    stands there: the ramp's flow is more than the queue passes."""
    x, y = curve
    falling = np.diff(y) < -COUNT_TOL * np.diff(x)
    if not falling.any():
        return False
    tt, dd = track
    mids = 0.5 * (x[:-1] + x[1:])[falling]
    return bool(np.any(np.interp(mids, tt, dd) > 0))


def _closure_queue(
    t: np.ndarray, ex: np.ndarray, ey: np.ndarray, prebreakdown: np.ndarray, discharge: np.ndarray
) -> QueueRun:
    """The closure's point queue for the arrival curve ``(ex, ey)`` (free flow
    held back upstream), solved exactly on the grid refined at its knots."""
    grid = np.union1d(t, ex[(ex > t[0]) & (ex < t[-1])])
    idx = np.clip(np.searchsorted(t, grid[:-1], side="right") - 1, 0, len(t) - 2)
    dur = np.diff(grid)
    arr = _at(ex, ey, grid)
    arr = np.maximum.accumulate(arr)
    lam = np.maximum(np.diff(arr), 0.0) / dur
    return solve(dur, lam, prebreakdown[idx], discharge[idx], t=grid)


# --------------------------------------------------------------------------- single state


def single_state(
    queue: QueueRun,
    ramps: Ramps,
    diagram: FundamentalDiagram,
    lanes: int,
    queued_discharge_veh_h: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, SectionsRun]:
    """Queue lengths by the single-state relation, section by section (module notes).

    ``queued_discharge_veh_h``: the discharge that sets the queued state on
    each interval (:func:`wzq.engine.queue_length.queue_state_discharge`). Returns the
    lengths at the start and end of each interval (m) and a
    :class:`SectionsRun` with the trajectory (piecewise linear in time, jumps
    where the states change) and the exit ramps' delay.
    """
    t = queue.t
    m = len(t) - 1
    k_r = ramps.count
    cap = float(diagram.capacity)
    lam = ramps.section / HOUR / lanes  # (K+1, m) veh/s/ln
    mu = np.empty_like(lam)
    mu[0] = np.minimum(queued_discharge_veh_h / HOUR / lanes, cap)
    tau = np.ones_like(lam)
    short = np.zeros((k_r, m), dtype=bool)  # entrance ramp above the queue's flow
    over = np.zeros((k_r, m), dtype=bool)  # flow past an exit above capacity
    for j in range(1, k_r + 1):
        if ramps.entrance[j - 1]:
            q = mu[j - 1] - ramps.rate[j - 1] / HOUR / lanes
            short[j - 1] = q < 0
            mu[j] = np.maximum(q, 0.0)
            tau[j] = tau[j - 1]
        else:
            share = np.where(lam[j] > 0, lam[j - 1] / np.where(lam[j] > 0, lam[j], 1.0), 1.0)
            q = mu[j - 1] / np.where(share > 0, share, 1.0)
            over[j - 1] = q > cap * (1 + 1e-9)
            mu[j] = np.minimum(q, cap)
            tau[j] = tau[j - 1] * share
    k_a = np.asarray(diagram.density_free(np.minimum(lam, cap)), dtype=float)
    k_q = np.asarray(diagram.density_congested(mu), dtype=float)
    stored = lanes * np.maximum(k_q - k_a, 1e-9) * tau  # closure traffic per metre
    d = np.concatenate(([0.0], ramps.distance))
    ell = np.append(np.diff(d), np.inf)
    # the closure traffic held up to the start of each section (and beyond the last)
    fill = np.zeros((k_r + 2, m))
    fill[1:-1] = np.cumsum(stored[:-1] * ell[:-1, None], axis=0)
    fill[-1] = np.inf

    def length(nv: np.ndarray) -> np.ndarray:
        j = np.sum(nv[None, :] >= fill[1:-1], axis=0) if k_r else np.zeros(m, dtype=int)
        cols = np.arange(m)
        return d[j] + (nv - fill[j, cols]) / stored[j, cols]

    q0, q1 = queue.queue[:-1], queue.queue[1:]
    l_start = np.where(q0 > 0, length(q0), 0.0)
    l_end = np.where(q1 > 0, length(q1), 0.0)
    reached = (queue.busy > 0)[None, :] & (np.maximum(l_start, l_end)[None, :] > d[1:, None])
    times: list[float] = [float(t[0])]
    dist: list[float] = [0.0]
    bounds = t[0] + np.arange(max(round((t[-1] - t[0]) / HOUR), 1) + 1) * HOUR
    exit_area = np.zeros((k_r, len(bounds) - 1))
    exit_cols = [j for j in range(1, k_r + 1) if not ramps.entrance[j - 1]]
    for k in np.flatnonzero(queue.busy > 0):
        ta, busy = float(t[k]), float(queue.busy[k])
        clears = busy < float(t[k + 1]) - ta
        na = float(q0[k])
        nb = 0.0 if clears else float(q1[k])
        slope = (nb - na) / busy
        times.append(ta)
        dist.append(float(l_start[k]))
        levels = fill[1:-1, k]
        inside = np.flatnonzero((levels > min(na, nb)) & (levels < max(na, nb)))
        for j in inside if slope > 0 else inside[::-1]:
            times.append(ta + (levels[j] - na) / slope)
            dist.append(float(d[j + 1]))
        times.append(ta + busy)
        dist.append(0.0 if clears else float(l_end[k]))
        if clears:
            times.append(float(t[k + 1]))
            dist.append(0.0)
        # exiting traffic held upstream of each exit: its share of the excess there
        h = min(int((ta - t[0]) // HOUR), len(bounds) - 2)
        for j in exit_cols:
            beta = 1.0 - tau[j, k] / tau[j - 1, k]
            held = _positive_part_area(na - fill[j, k], slope, busy) / tau[j, k]
            exit_area[j - 1, h] += beta * held
    if times[-1] < t[-1]:
        times.append(float(t[-1]))
        dist.append(0.0)
    exits = tuple(
        ExitDelay(ramps.names[j - 1], float(d[j]), exit_area[j - 1], None) for j in exit_cols
    )
    hit = reached & (short | over)
    run = SectionsRun(
        queue,
        np.array(times),
        np.array(dist),
        exits,
        tuple(
            nm
            for nm, f, e in zip(ramps.names, hit.any(axis=1), ramps.entrance, strict=True)
            if f and not e
        ),
        tuple(
            nm
            for nm, f, e in zip(ramps.names, hit.any(axis=1), ramps.entrance, strict=True)
            if f and e
        ),
        bool(np.any(lam > cap * (1 + 1e-9))),
    )
    return l_start, l_end, run


def _positive_part_area(y0: float, slope: float, span: float) -> float:
    """Integral of ``max(y0 + slope x, 0)`` for ``x`` in ``[0, span]``."""
    y1 = y0 + slope * span
    if y0 >= 0 and y1 >= 0:
        return 0.5 * (y0 + y1) * span
    if y0 <= 0 and y1 <= 0:
        return 0.0
    x0 = -y0 / slope
    return 0.5 * y0 * x0 if y0 > 0 else 0.5 * y1 * (span - x0)


def trajectory_of_lengths(
    queue: QueueRun, length_start: np.ndarray, length_end: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """A piecewise-linear trajectory from single-state lengths at the interval
    ends: the queue is linear within an interval (its length too, the state
    being constant there) and clears at its exact instant; the length jumps
    where the state changes (a repeated time)."""
    t = queue.t
    k = np.flatnonzero(queue.busy > 0)
    if len(k) == 0:
        return t[[0, -1]].astype(float), np.zeros(2)
    clears = queue.busy[k] < t[k + 1] - t[k]
    end_d = np.where(clears, 0.0, length_end[k])
    tt = np.column_stack((t[k], t[k] + queue.busy[k], t[k + 1])).ravel()
    dd = np.column_stack((length_start[k], end_d, end_d)).ravel()
    tt = np.concatenate(([t[0]], tt))
    dd = np.concatenate(([0.0], dd))
    if tt[-1] < t[-1]:
        tt, dd = np.append(tt, t[-1]), np.append(dd, 0.0)
    return tt, dd


def coarsen(queue: QueueRun, t: np.ndarray) -> QueueRun:
    """A queue found on a refinement of the grid ``t``, summed back onto ``t``
    (exact totals per interval; ``queue.t`` must contain every knot of ``t``)."""
    if len(queue.t) == len(t):
        return queue
    at = np.searchsorted(queue.t, t)
    first = at[:-1]
    dur = np.diff(t)
    arrivals = np.add.reduceat(queue.arrivals, first)
    departures = np.add.reduceat(queue.departures, first)
    return QueueRun(
        t,
        arrivals / dur,
        np.add.reduceat(queue.discharge * np.diff(queue.t), first) / dur,
        queue.queue[at],
        np.add.reduceat(queue.busy, first),
        np.add.reduceat(queue.delay, first),
        arrivals,
        departures,
        queue.arrivals_cum[at],
        queue.departures_cum[at],
    )


def newell_queue(
    times: np.ndarray, dist: np.ndarray, grid: np.ndarray, limited: bool
) -> newell.NewellQueue:
    """A :class:`wzq.models.newell.NewellQueue` for a trajectory found by sections."""
    t0, t_end = float(grid[0]), float(grid[-1])
    n_hours = max(round((t_end - t0) / HOUR), 1)
    bounds = t0 + np.arange(n_hours + 1) * HOUR
    return newell.NewellQueue(
        times=times,
        distance=dist,
        at_boundaries=np.interp(grid, times, dist),
        hour_bounds=bounds,
        hourly_max_m=newell.hourly_max(times, dist, bounds),
        extent=newell.extent(times, dist),
        dissolved_s=newell.dissolve_times(times, dist),
        capacity_limited=limited,
    )


# --------------------------------------------------------------------------- landmarks


@dataclass(frozen=True)
class LandmarkResult:
    """Where the back of the queue stood against one landmark.

    ``first_reached_s``: the first instant the back of the queue reached the
    landmark (s from the run's start; ``None``: never); ``time_beyond_s``: the
    time it was beyond it; ``max_beyond_m``: how far beyond it it reached at
    most; ``hours_beyond``: per hour, whether it was beyond it at some instant.
    """

    landmark: Landmark
    first_reached_s: float | None
    time_beyond_s: float
    max_beyond_m: float
    hours_beyond: np.ndarray


#: Metres by which the back of the queue must pass a landmark to count as beyond
#: it (rounding of long sums; as the length limits of :mod:`wzq.engine.evaluate`).
BEYOND_TOL_M = 1e-9


def landmark_results(
    landmarks: tuple[Landmark, ...],
    times: np.ndarray,
    dist: np.ndarray,
    hourly_max_m: np.ndarray,
) -> tuple[LandmarkResult, ...]:
    """Per landmark: first reached, time beyond, longest distance beyond, hours beyond.

    Exact on a piecewise-linear trajectory (repeated times are jumps): within
    each segment the back moves linearly, so the crossing instant and the time
    spent beyond a distance follow by interpolation.
    """
    t0, t1 = times[:-1], times[1:]
    d0, d1 = dist[:-1], dist[1:]
    span = t1 - t0
    top = float(dist.max()) if len(dist) else 0.0
    out = []
    for lm in landmarks:
        x = lm.distance
        reach = np.flatnonzero(np.maximum(d0, d1) >= x)
        first = None
        if len(reach):
            k = reach
            rise = np.where(d1[k] != d0[k], d1[k] - d0[k], 1.0)
            at = np.where(d0[k] >= x, t0[k], t0[k] + np.clip((x - d0[k]) / rise, 0, 1) * span[k])
            first = float(at.min())
        lim = x + BEYOND_TOL_M
        a, b = d0 - lim, d1 - lim
        both = (a > 0) & (b > 0)
        one = (a > 0) ^ (b > 0)
        denom = np.where(one, np.abs(a - b), 1.0)
        part = np.where(a > 0, a, b) / denom
        beyond = float(np.sum(np.where(both, span, 0.0)) + np.sum(np.where(one, part * span, 0.0)))
        out.append(
            LandmarkResult(
                lm,
                first,
                beyond,
                max(top - x, 0.0) if top > lim else 0.0,
                np.asarray(hourly_max_m) > lim,
            )
        )
    return tuple(out)
