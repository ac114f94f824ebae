"""Back of the queue that follows the waves: Newell's simplified kinematic-wave method.

For the triangular fundamental diagram the kinematic-wave (LWR) model on the
approach to a bottleneck has an exact solution in cumulative counts (Newell,
1993, part I; the variational form is Daganzo, 2005). With ``d`` the distance
upstream of the bottleneck (m), ``n`` lanes, free-flow speed ``v_f``, backward
wave speed ``w`` (m/s, positive) and jam density ``k_j`` (veh/m/ln), the number
of vehicles that have passed the point ``d`` by time ``t`` is::

    N(d, t) = min( A(t + d/v_f),  D(t - d/w) + n k_j d )

where ``A`` is the virtual arrival curve at the bottleneck (arrivals that would
reach it under free flow) and ``D`` the departures from it, as in
:mod:`wzq.models.queueing`. The first term is the free-flow state carried downstream
at ``v_f``; the second the queued state carried upstream at ``-w``. The queue
occupies the points where the second term is the smaller, so with::

    g(d; t) = A(t + d/v_f) - D(t - d/w) - n k_j d

the back of the queue at time ``t`` is the first zero of ``g`` counted from the
bottleneck (``g(0; t) = A(t) - D(t)`` is the point queue).

Exact construction used here
----------------------------
Let ``c = k_j v_f w / (v_f + w)`` be the lane capacity of the triangular
diagram and define two non-decreasing curves (veh)::

    E(s) = n c s - D(s)          F(u) = n c u - A(u)

Because ``n k_j = n c (1/v_f + 1/w)``, ``g = 0`` at the point reached by the
free-flow characteristic from ``(0, u)`` and the backward characteristic from
``(0, s)`` exactly when ``F(u) = E(s)``. That point lies at::

    t = (v_f u + w s) / (v_f + w)        d = v_f w (u - s) / (v_f + w)

so the whole back-of-queue trajectory is traced by one level ``y``: ``s =
E^-1(y)``, ``u = F^-1(y)``. ``A`` and ``D`` are piecewise linear, hence so are
``E`` and ``F``, and between two consecutive breakpoint levels of either curve
the trajectory is a straight line in ``(t, d)``. Each breakpoint is where a
wave meets the back of the queue: a change of arrival flow travelling
downstream at ``v_f`` (a kink of ``A``) or a change of discharge travelling
upstream at ``w`` (a kink of ``D``, e.g. the recovery wave when a closure ends).
The trajectory, its maximum and the instant the queue has dissolved in space
are therefore found exactly, with no time step and no sampling.

Properties the construction relies on (and which the tests check):

* while the arrival and discharge flows stay at or below the approach capacity
  ``n c``, ``g`` never rises with ``d`` (its slope is ``-n (k_Q - k_A)``), so the
  queue is one stretch from the bottleneck to the back; in a single state its
  length is the single-state relation ``Q / (n (k_Q - k_A))`` of
  :mod:`wzq.models.shockwave`;
* the back reaches the bottleneck exactly when the point queue clears, so the
  queue dissolves in space at the same instant as in :mod:`wzq.models.queueing`, and the
  counts at ``d = 0`` are the point-queue curves (total delay unchanged);
* the back can keep moving upstream after a closure ends, until the recovery
  wave from the front meets it, so the longest queue may come after the closure;
* when the front discharges at exactly the approach capacity (no capacity drop
  on the open road) the traffic behind the recovery wave is at capacity and
  moves at ``v_f``; the second term still binds there, so that stretch counts
  as queue until the shock at ``v_f`` from its back reaches the bottleneck (at
  most ``d / v_f`` seconds). With the engine's default capacity drop the
  discharge state is strictly congested and this does not arise.

Only the busy periods matter: where no queue stands ``A = D``, so ``E`` and
``F`` coincide there, and with every flow below ``n c`` both rise strictly, so
each level of a quiet stretch gives ``u = s`` (no queue) and each level of a
busy period (which starts and ends with ``A = D``) gives ``s`` and ``u`` within
it. The construction therefore runs on the knots of the busy periods alone
(:func:`_busy_knots`, :func:`_queue_knots`), which for a year with a few busy
nights is a small fraction of the data, and gives the same trajectory.

Flows above the approach capacity ``n c`` cannot be carried by the approach.
Newell's variational form then replaces ``F`` and ``E`` by their running
maxima (the traffic the approach can admit, the excess waiting beyond its
upstream end); :attr:`NewellQueue.capacity_limited` says when that happened.
In such plans the analysis already warns that demand exceeds the open road's
own capacity.

Conventions: ``D`` before the first time is held at its first value; ``A``
beyond the last time is extended with the last arrival rate (``after_end="rate"``)
or held (``"hold"``). Times in seconds, distances in metres, counts in vehicles.

References (bibliographic details from memory):

* Newell, G. F. (1993). A simplified theory of kinematic waves in highway
  traffic, part I: general theory. *Transportation Research B* 27(4), 281-287.
* Daganzo, C. F. (2005). A variational formulation of kinematic waves: basic
  theory and complex boundary conditions. *Transportation Research B* 39(2),
  187-196.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from wzq.models.flow import PIECEWISE_LINEAR, FundamentalDiagram
from wzq.models.queueing import QueueRun, _clearing_knots, curves
from wzq.units import HOUR

__all__ = [
    "ZERO_M",
    "AfterEnd",
    "Extent",
    "NewellQueue",
    "back_of_queue",
    "counts",
    "curves",
    "dissolve_times",
    "extent",
    "from_queue",
    "hourly_max",
    "trajectory",
]

AfterEnd = Literal["rate", "hold"]

#: Back-of-queue distances below this (m) are rounding of long cumulative sums
#: and are reported as no queue.
ZERO_M = 1e-6

#: Vehicles by which the running-maximum envelope may move a curve before the
#: flows count as above the approach capacity (rounding of cumulative sums).
_ENVELOPE_TOL_VEH = 1e-6


@dataclass(frozen=True)
class Extent:
    """Longest queue of a trajectory and when it forms and dissolves.

    ``max_m`` is the greatest back-of-queue distance (m), ``at_s`` the first
    instant it is reached (s; ``None`` when no queue forms) and ``dissolved_s``
    the first instant after that at which the queue has gone in space (s;
    ``None`` when no queue forms or it still stands at the end).
    """

    max_m: float
    at_s: float | None
    dissolved_s: float | None


@dataclass(frozen=True)
class NewellQueue:
    """Everything :func:`from_queue` computes for one run.

    * ``times``, ``distance``: the exact back-of-queue trajectory (s, m),
      piecewise linear between these vertices, from the first to the last time
      of the run -- the curve the charts draw (distance upstream against time);
    * ``at_boundaries``: the distance (m) at each boundary of the run's grid;
    * ``hour_bounds``, ``hourly_max_m``: the hours (s from the run's start) and
      the largest distance (m) within each hour, after the closure included;
    * ``extent``: the longest queue, when, and when it dissolves;
    * ``dissolved_s``: every instant at which a standing queue has gone;
    * ``capacity_limited``: ``True`` when arrival or discharge flows exceeded
      the approach capacity and the excess was held beyond the approach.
    """

    times: np.ndarray
    distance: np.ndarray
    at_boundaries: np.ndarray
    hour_bounds: np.ndarray
    hourly_max_m: np.ndarray
    extent: Extent
    dissolved_s: np.ndarray
    capacity_limited: bool


# --------------------------------------------------------------------------- helpers


def _lane_capacity(free_speed: float, wave_speed: float, jam_density: float) -> float:
    """``c = k_j v_f w / (v_f + w)`` (veh/s/ln): the peak of the triangular diagram."""
    return jam_density * free_speed * wave_speed / (free_speed + wave_speed)


def _check(
    t: np.ndarray, a_cum: np.ndarray, d_cum: np.ndarray, speeds: tuple[float, ...]
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    t = np.asarray(t, dtype=float)
    a = np.asarray(a_cum, dtype=float)
    d = np.asarray(d_cum, dtype=float)
    if t.ndim != 1 or len(t) < 2 or a.shape != t.shape or d.shape != t.shape:
        raise ValueError("t, a_cum and d_cum must be 1-D arrays of the same length, at least 2")
    if np.any(np.diff(t) <= 0):
        raise ValueError("the times t must be strictly increasing")
    if not (np.all(np.isfinite(a)) and np.all(np.isfinite(d))):
        raise ValueError("cumulative counts must be finite")
    _check_positive(speeds)
    return t, a, d


def _check_positive(speeds: tuple[float, ...]) -> None:
    for v in speeds:
        if not (np.isfinite(v) and v > 0):
            raise ValueError("lanes, speeds and jam density must be finite and above zero")


def _envelope(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Running maximum of the piecewise-linear curve through ``(x, y)``, exactly.

    Where the curve falls below its earlier maximum the envelope stays flat and
    picks up the curve again at the exact crossing, which becomes a new knot.
    """
    m = np.maximum.accumulate(y)
    prev = m[:-1]
    y0, y1 = y[:-1], y[1:]
    cross = (y0 < prev) & (y1 > prev)
    if not cross.any():
        return x, m
    k = np.flatnonzero(cross)
    xc = x[k] + (prev[k] - y0[k]) / (y1[k] - y0[k]) * (x[k + 1] - x[k])
    xs = np.insert(x, k + 1, xc)
    ys = np.insert(m, k + 1, prev[k])
    return xs, ys


def _inverse(vals: np.ndarray, knots: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Left-most and right-most preimages of the levels ``y``.

    ``vals`` is non-decreasing at ``knots``; where the curve is flat at level
    ``y`` the two give the two ends of the flat stretch, elsewhere they agree.
    ``y`` outside the range is clamped to the end knots.
    """
    if np.all(vals[1:] > vals[:-1]):
        x = np.interp(y, vals, knots)
        return x, x
    out = []
    for side in ("left", "right"):
        j = np.searchsorted(vals, y, side=side)
        inner = np.minimum(np.maximum(j, 1), len(vals) - 1)
        v0, v1 = vals[inner - 1], vals[inner]
        x0, x1 = knots[inner - 1], knots[inner]
        rise = np.where(v1 > v0, v1 - v0, 1.0)
        x = x0 + (y - v0) / rise * (x1 - x0)
        if side == "left":  # hit the knot above exactly rather than through rounding
            x = np.where(y == v1, x1, x)  # (the knot below, y == v0, gives x0 + 0 already)
        x = np.where(j <= 0, knots[0], x)
        out.append(np.where(j >= len(vals), knots[-1], x))
    return out[0], out[1]


def _level_curves(
    t: np.ndarray,
    a: np.ndarray,
    d: np.ndarray,
    nc: float,
    v: float,
    w: float,
    after_end: AfterEnd,
    strict: bool,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, bool]:
    """Knots and values of ``E(s) = n c s - D(s)`` and ``F(u) = n c u - A(u)``.

    ``E`` gets one knot before the first time (``D`` held there), ``F`` one far
    beyond the last time (``A`` extended), far enough that every trajectory
    point whose ``u`` reaches it lies after the last time. Both are replaced by
    their running maxima (approach capacity; see the module notes), unless
    ``strict`` says every flow is below the approach capacity.
    """
    t0, t_end = float(t[0]), float(t[-1])
    s_neg = t0 - max(a[0] - d[0], 0.0) / nc - 1.0
    s_knots = np.concatenate(([s_neg], t))
    e_vals = np.concatenate(([nc * s_neg - d[0]], nc * t - d))
    if after_end == "rate":
        rate = (a[-1] - a[-2]) / (t[-1] - t[-2])
    elif after_end == "hold":
        rate = 0.0
    else:
        raise ValueError(f"after_end must be 'rate' or 'hold', got {after_end!r}")
    u_far = t_end + (w / v) * (t_end - s_neg) + 1.0
    u_knots = np.concatenate((t, [u_far]))
    f_vals = np.concatenate((nc * t - a, [nc * u_far - (a[-1] + rate * (u_far - t_end))]))
    if strict:  # every flow below n c: both curves rise strictly, no envelope needed
        return s_knots, e_vals, u_knots, f_vals, False
    s2, e2 = _envelope(s_knots, e_vals)
    u2, f2 = _envelope(u_knots, f_vals)
    arrivals_held = np.max(np.maximum.accumulate(f_vals) - f_vals) > _ENVELOPE_TOL_VEH
    if arrivals_held:  # F flat where arrivals exceed n c: see _snap_levels
        e2, f2 = _snap_levels(e2, f2)
    limited = bool(
        arrivals_held or np.max(np.maximum.accumulate(e_vals) - e_vals) > _ENVELOPE_TOL_VEH
    )
    return s2, e2, u2, f2, limited


def _snap_levels(e: np.ndarray, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Levels of ``e`` and ``f`` closer than the rounding of the counts made one.

    Where both flows stand at the approach capacity (arrivals above it held
    beyond the approach, the front discharging at exactly it: no capacity drop
    on the open road) both level curves are flat, and whether a flat stretch is
    one level or two a few 1e-12 vehicles apart, and which curve's lies above
    the other's, is decided by the rounding of long cumulative sums alone: one
    way the back of the queue stays at the bottleneck, another it runs up the
    whole flat stretch (tens of kilometres). Levels within the tolerance of the
    next lower one join it (each cluster takes its lowest value); the patch where
    ``g = 0`` is then resolved by :func:`_vertices` (its lower edge), the same
    on every path to the same plan. The map is non-decreasing, so the curves
    stay non-decreasing. Applied only when arrivals exceed the approach capacity
    (``F`` flat): with ``F`` rising a flat ``E`` is never ambiguous, and its
    results stay as they were to the last bit.
    """
    levels = np.unique(np.concatenate((e, f)))
    tol = max(_ENVELOPE_TOL_VEH, _LEVEL_RTOL * float(np.max(np.abs(levels))))
    gap = np.diff(levels) > tol
    if gap.all():
        return e, f
    head = np.concatenate(([True], gap))
    rep = levels[head][np.cumsum(head) - 1]
    return rep[np.searchsorted(levels, e)], rep[np.searchsorted(levels, f)]


#: Relative tolerance of two levels of the level curves being one (rounding of
#: cumulative counts of a long plan; a year at 4,600 veh/h counts 4e7 vehicles).
_LEVEL_RTOL = 1e-12


#: Relative margin below the approach capacity a flow must keep for the level
#: curves to count as rising strictly: a discharge equal to ``n c`` (no capacity
#: drop on the open road) can come out a rounding error below it, and the curve
#: is then flat for every purpose.
_STRICT_MARGIN = 1e-9


def _below_capacity(t: np.ndarray, a: np.ndarray, d: np.ndarray, nc: float) -> bool:
    """Every arrival and departure flow clearly below the approach capacity ``n c``."""
    dt = np.diff(t)
    top = nc * (1.0 - _STRICT_MARGIN)
    return bool(np.max(np.diff(a) / dt) < top and np.max(np.diff(d) / dt) < top)


def _busy_mask(queued: np.ndarray) -> np.ndarray:
    """Knots in or bounding a busy period, and the first and last two knots."""
    keep = queued.copy()
    keep[1:] |= queued[:-1]
    keep[:-1] |= queued[1:]
    keep[:2] = True
    keep[-2:] = True
    return keep


def _busy_knots(
    t: np.ndarray, a: np.ndarray, d: np.ndarray, nc: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray, bool]:
    """The knots the trajectory depends on: those of the busy periods.

    Where no queue stands (``A = D``) the two level curves coincide,
    ``E(s) = F(s)``; when every arrival and departure flow is strictly below
    the approach capacity ``n c`` both are strictly increasing, so every level
    of a stretch with no queue maps to ``s = u`` (distance 0), and every level
    of a busy period, which starts and ends with ``A = D``, maps to ``s`` and
    ``u`` inside that busy period. The trajectory therefore needs only the
    knots of the busy periods (and of their bounding instants); the stretches
    between them are straight lines on which ``E = F`` exactly, giving the
    same zero distance. The first and last two knots are kept for the
    conventions at the ends. When a flow reaches ``n c`` (flat or falling
    curves) every knot is kept. Returns the knots and whether the flows are
    strictly below ``n c``.
    """
    if not _below_capacity(t, a, d, nc):
        return t, a, d, False
    if len(t) <= 6:
        return t, a, d, True
    keep = _busy_mask((a - d) > 0)
    return t[keep], a[keep], d[keep], True


def _queue_knots(queue: QueueRun, nc: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, bool]:
    """:func:`curves` restricted as in :func:`_busy_knots`, straight from a queue run.

    The flows are the run's arrival rates and, while a queue stands, its
    discharge rates, so the test against ``n c`` needs no differencing; the
    clearing instants are added only inside the kept stretches.
    """
    k = queue.touched  # intervals with a queue at either end
    top = nc * (1.0 - _STRICT_MARGIN)
    strict = bool(queue.arrival_rate.max() < top) and not bool(
        len(k) and queue.discharge[k].max() >= top
    )
    m = len(queue.t) - 1
    if not strict or m <= 5:
        t, a, d = curves(queue)
        return t, a, d, strict
    idx = np.flatnonzero(_busy_mask(queue.queue > 0))
    t, a, d = queue.t[idx], queue.arrivals_cum[idx], queue.departures_cum[idx]
    k, tc, ac = _clearing_knots(queue, k)
    if len(k) == 0:
        return t, a, d, True
    at = np.searchsorted(idx, k) + 1  # position after knot k in the kept knots
    return np.insert(t, at, tc), np.insert(a, at, ac), np.insert(d, at, ac), True


def _vertices(
    e_v: np.ndarray,
    s_k: np.ndarray,
    f_v: np.ndarray,
    u_k: np.ndarray,
    levels: np.ndarray,
    v: float,
    w: float,
) -> tuple[np.ndarray, np.ndarray]:
    """Trajectory vertices ``(t, d)`` of the levels when the curves may be flat."""
    s_lo, s_hi = _inverse(e_v, s_k, levels)
    u_lo, u_hi = _inverse(f_v, u_k, levels)
    # Per level: (s_lo, u_lo) -> (s_hi, u_lo) -> (s_hi, u_hi). Both steps move
    # forward in time; taking s first keeps the lower edge when both curves are
    # flat at one level (both flows at capacity: g = 0 on a whole patch).
    s = np.column_stack((s_lo, s_hi, s_hi)).ravel()
    u = np.column_stack((u_lo, u_lo, u_hi)).ravel()
    tt = (v * u + w * s) / (v + w)
    dd = v * w * (u - s) / (v + w)
    # A step along a flat stretch can run below d = 0 (flows at capacity with no queue
    # at the bottleneck); the back is then max(edge, 0), kinked where the edge crosses 0.
    return _clip_at_zero(tt, dd)


def _clip_at_zero(tt: np.ndarray, dd: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``max(dd, 0)`` of a piecewise-linear curve, with its crossings of 0 as vertices."""
    cross = np.flatnonzero(((dd[:-1] > 0) & (dd[1:] < 0)) | ((dd[:-1] < 0) & (dd[1:] > 0)))
    if len(cross):
        frac = dd[cross] / (dd[cross] - dd[cross + 1])
        tc = tt[cross] + frac * (tt[cross + 1] - tt[cross])
        tt = np.insert(tt, cross + 1, tc)
        dd = np.insert(dd, cross + 1, 0.0)
    return tt, np.maximum(dd, 0.0)


def _trajectory(
    t: np.ndarray,
    a: np.ndarray,
    d: np.ndarray,
    lanes: float,
    v: float,
    w: float,
    k_j: float,
    after_end: AfterEnd,
    *,
    busy_only: bool = True,
    strict: bool = False,
) -> tuple[np.ndarray, np.ndarray, bool]:
    """The trajectory; ``busy_only`` drops the knots it does not depend on
    (:func:`_busy_knots`), ``strict`` says the caller already knows every flow
    is below the approach capacity."""
    nc = lanes * _lane_capacity(v, w, k_j)
    if busy_only:
        t, a, d, strict = _busy_knots(t, a, d, nc)
    s_k, e_v, u_k, f_v, limited = _level_curves(t, a, d, nc, v, w, after_end, strict)
    y_lo, y_hi = f_v[0], e_v[-1]
    levels = np.unique(np.concatenate((e_v, f_v, [y_lo, y_hi])))
    levels = levels[(levels >= y_lo) & (levels <= y_hi)]
    if strict:
        # both curves rise strictly: one (s, u) per level, and u >= s since A >= D
        # makes F <= E (flat patches, below, cannot occur)
        s = np.interp(levels, e_v, s_k)
        u = np.interp(levels, f_v, u_k)
        tt = (v * u + w * s) / (v + w)
        dd = np.maximum(v * w * (u - s) / (v + w), 0.0)
    else:
        tt, dd = _vertices(e_v, s_k, f_v, u_k, levels, v, w)
    last = np.diff(tt, append=np.inf) > 0  # one vertex per instant
    tt, dd = tt[last], dd[last]
    t0, t_end = float(t[0]), float(t[-1])
    inside = (tt > t0) & (tt < t_end)
    ends = np.interp([t0, t_end], tt, dd)
    times = np.concatenate(([t0], tt[inside], [t_end]))
    dist = np.concatenate(([ends[0]], dd[inside], [ends[1]]))
    dist[dist < ZERO_M] = 0.0
    # inside a stretch with no queue only the stretch's ends are needed
    idle = dist == 0.0
    keep = np.ones(len(dist), dtype=bool)
    keep[1:-1] = ~(idle[1:-1] & idle[:-2] & idle[2:])
    return times[keep], dist[keep], limited


# --------------------------------------------------------------------------- public API


def counts(
    t: np.ndarray,
    a_cum: np.ndarray,
    d_cum: np.ndarray,
    *,
    lanes: float,
    free_speed: float,
    wave_speed: float,
    jam_density: float,
    distance: np.ndarray | float,
    at: np.ndarray | float,
    after_end: AfterEnd = "rate",
) -> np.ndarray:
    """Newell's cumulative count ``N(d, t)`` (veh) at ``distance`` upstream, time ``at``.

    ``N = min(A(t + d/v_f), D(t - d/w) + n k_j d)`` (Newell 1993, part I), with
    ``A`` and ``D`` linear between the knots ``t`` and the conventions of the
    module notes. ``distance`` and ``at`` broadcast. No capacity envelope is
    applied here: this is the formula as published, for flows within capacity.
    """
    t, a, d = _check(t, a_cum, d_cum, (lanes, free_speed, wave_speed, jam_density))
    x = np.asarray(distance, dtype=float)
    tq = np.asarray(at, dtype=float)
    if after_end not in ("rate", "hold"):
        raise ValueError(f"after_end must be 'rate' or 'hold', got {after_end!r}")
    ta = tq + x / free_speed
    rate = (a[-1] - a[-2]) / (t[-1] - t[-2]) if after_end == "rate" else 0.0
    a_val = np.interp(ta, t, a) + rate * np.maximum(ta - t[-1], 0.0)
    d_val = np.interp(tq - x / wave_speed, t, d) + lanes * jam_density * x
    return np.minimum(a_val, d_val)


def trajectory(
    t: np.ndarray,
    a_cum: np.ndarray,
    d_cum: np.ndarray,
    *,
    lanes: float,
    free_speed: float,
    wave_speed: float,
    jam_density: float,
    after_end: AfterEnd = "rate",
) -> tuple[np.ndarray, np.ndarray]:
    """The exact back-of-queue trajectory: vertices ``(times s, distance m)``.

    ``t``, ``a_cum``, ``d_cum`` are the knots of the piecewise-linear arrival and
    departure curves at the bottleneck (use :func:`curves` for a
    :class:`~wzq.models.queueing.QueueRun`); ``lanes`` the lanes of the approach,
    ``free_speed`` ``v_f`` and ``wave_speed`` ``w`` in m/s, ``jam_density``
    veh/m/ln. The distance is linear in time between consecutive vertices and
    covers ``t[0]`` to ``t[-1]``; see the module notes for the construction.
    """
    t, a, d = _check(t, a_cum, d_cum, (lanes, free_speed, wave_speed, jam_density))
    times, dist, _ = _trajectory(t, a, d, lanes, free_speed, wave_speed, jam_density, after_end)
    return times, dist


def back_of_queue(
    t: np.ndarray,
    a_cum: np.ndarray,
    d_cum: np.ndarray,
    *,
    lanes: float,
    free_speed: float,
    wave_speed: float,
    jam_density: float,
    at: np.ndarray | float,
    after_end: AfterEnd = "rate",
) -> np.ndarray:
    """Back-of-queue distance upstream of the bottleneck (m) at the times ``at`` (s).

    Exact: the trajectory of :func:`trajectory` interpolated (it is linear
    between its vertices). ``at`` must lie within ``t[0]`` .. ``t[-1]``.
    """
    times, dist = trajectory(
        t,
        a_cum,
        d_cum,
        lanes=lanes,
        free_speed=free_speed,
        wave_speed=wave_speed,
        jam_density=jam_density,
        after_end=after_end,
    )
    q = np.asarray(at, dtype=float)
    if np.any(q < times[0]) or np.any(q > times[-1]):
        raise ValueError(
            f"times asked for must lie within {times[0]:g} to {times[-1]:g} s, the span of the data"
        )
    return np.interp(q, times, dist)


def extent(times: np.ndarray, distance: np.ndarray) -> Extent:
    """Longest queue of a piecewise-linear trajectory, its first instant, and when it dissolves.

    The maximum of a piecewise-linear curve lies on a vertex, so this is exact.
    """
    times = np.asarray(times)  # any real dtype: only compared with 0 and read by float()
    distance = np.asarray(distance)
    i = int(np.argmax(distance))
    top = float(distance[i])
    if top <= 0.0:
        return Extent(0.0, None, None)
    after = np.flatnonzero(distance[i:] <= 0.0)
    gone = float(times[i + after[0]]) if len(after) else None
    return Extent(top, float(times[i]), gone)


def dissolve_times(times: np.ndarray, distance: np.ndarray) -> np.ndarray:
    """Every instant (s) at which a standing queue has gone in space."""
    times = np.asarray(times, dtype=float)  # the instants returned are seconds as floats
    distance = np.asarray(distance)  # only compared with 0
    ends = (distance[1:] <= 0.0) & (distance[:-1] > 0.0)
    return times[1:][ends]


def hourly_max(times: np.ndarray, distance: np.ndarray, hour_bounds: np.ndarray) -> np.ndarray:
    """Largest distance within each period ``[b_k, b_k+1]`` of ``hour_bounds``.

    Exact for a piecewise-linear trajectory: the maximum over a period is at
    one of its ends or at a vertex inside it. Any increasing bounds work (hours,
    the run's intervals); periods outside the trajectory's span give 0.
    """
    times = np.asarray(times)  # any real dtype: np.interp and the comparisons take them
    distance = np.asarray(distance)
    b = np.asarray(hour_bounds)
    return _hourly_max(times, distance, b, np.interp(b, times, distance, left=0.0, right=0.0))


def _hourly_max(
    times: np.ndarray, distance: np.ndarray, b: np.ndarray, at_b: np.ndarray
) -> np.ndarray:
    """:func:`hourly_max` given the distances ``at_b`` at the bounds ``b``.

    A vertex inside a period raises that period's maximum; a vertex exactly on a
    bound has that bound's distance, which ``at_b`` holds for both periods it ends
    and starts, so the period it is counted in makes no difference.
    """
    out = np.maximum(at_b[:-1], at_b[1:])
    k = np.searchsorted(b, times) - 1  # the period whose open interior or end holds the vertex
    inside = (k >= 0) & (k < len(b) - 1)
    np.maximum.at(out, k[inside], distance[inside])
    return out


def from_queue(
    queue: QueueRun,
    diagram: FundamentalDiagram,
    lanes: int,
    *,
    after_end: AfterEnd = "rate",
) -> NewellQueue:
    """Newell back of queue for a point-queue run on a triangular diagram.

    ``queue`` from :func:`wzq.models.queueing.solve` (times in s, rates in veh/s),
    ``diagram`` the approach's :class:`~wzq.models.flow.Triangular` (or
    :class:`~wzq.models.flow.Trapezoidal`) diagram (per lane, SI), ``lanes`` the
    approach's lanes in normal operation. Hours are counted from ``queue.t[0]``.
    """
    if not isinstance(diagram, PIECEWISE_LINEAR):
        raise TypeError(
            "Newell's simplified kinematic-wave method needs the triangular diagram, "
            f"not {type(diagram).__name__}; use the single-state relation (wzq.models.shockwave)"
        )
    v, w, k_j = diagram.free_speed, diagram.backward_wave_speed, diagram.jam_density
    _check_positive((lanes, v, w, k_j))
    t, a, d, strict = _queue_knots(queue, lanes * _lane_capacity(v, w, k_j))
    t, a, d = _check(t, a, d, ())
    times, dist, limited = _trajectory(
        t, a, d, lanes, v, w, k_j, after_end, busy_only=False, strict=strict
    )
    n_hours = max(round((t[-1] - t[0]) / HOUR), 1)
    bounds = t[0] + np.arange(n_hours + 1) * HOUR
    at_boundaries = np.interp(queue.t, times, dist)
    hourly = (
        _hourly_max(times, dist, bounds, at_boundaries)
        if np.array_equal(bounds, queue.t)  # the run's grid is the hours
        else hourly_max(times, dist, bounds)
    )
    return NewellQueue(
        times=times,
        distance=dist,
        at_boundaries=at_boundaries,
        hour_bounds=bounds,
        hourly_max_m=hourly,
        extent=extent(times, dist),
        dissolved_s=dissolve_times(times, dist),
        capacity_limited=limited,
    )
