"""The space-time check of a plan: the approach to a closure simulated by the LWR
solver of :mod:`wzq.engine.lwr.scheme` and compared with the engine.

:func:`simulate` takes the engine's demand as the inflow and the engine's capacity
schedule as the bottleneck, per lane of the approach (ramps as point sources and
sinks), and reports the back of the queue, the vehicles stored, the delay and an
hour-by-hour comparison with the engine's queue lengths (:mod:`wzq.models.newell`
or :mod:`wzq.models.shockwave`) and delay (:class:`Simulation`). Flows in the
engine's veh/h, counts over all lanes; the references are in the scheme's module.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from dataclasses import field as dataclass_field
from functools import cached_property
from typing import TYPE_CHECKING, Final

import numpy as np
import numpy.typing as npt

from wzq.engine import approach
from wzq.engine.evaluate import evaluate
from wzq.engine.hourly import hourly_table
from wzq.engine.lwr.scheme import (
    Field,
    FloatArray,
    Junction,
    max_wave_speed,
    solve,
)
from wzq.engine.plan import Plan
from wzq.engine.queue_length import queue_state_discharge
from wzq.engine.results import Result, Run
from wzq.models.flow import FundamentalDiagram
from wzq.models.shockwave import stored_density
from wzq.units import HOUR

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "DEFAULT_CFL",
    "Simulation",
    "busy_periods",
    "default_length",
    "focus_window",
    "simulate",
]

DEFAULT_CFL: Final = 0.9
"""Courant number used by :func:`simulate` (our own choice, below the limit of 1)."""

DEFAULT_CELLS_PER_LENGTH: Final = 100
"""Default cell count of :func:`simulate`: ``length / 100``, but cells no shorter
than :data:`MIN_DEFAULT_DX` (our own choice: fine enough for a picture, fast)."""

MIN_DEFAULT_DX: Final = 20.0
"""Shortest default cell (m) of :func:`simulate`."""

DEFAULT_RECORDS: Final = 1500
"""Most density snapshots :func:`simulate` keeps (enough for a picture)."""

WINDOW_MARGIN_S: Final = 1800.0
"""Time shown before and after the closures and queues in the automatic window."""

SPILL_VEH: Final = 0.5
"""An entrance queue above half a vehicle means the queue outgrew the stretch."""


# --------------------------------------------------------------------------- the plan


def busy_periods(run: Run) -> list[tuple[float, float]]:
    """``(start, end)`` seconds of each period in which the engine has a queue standing.

    A queue starts at the beginning of an interval (rates are constant on
    each); it ends at its exact clearing instant, or at the end of the plan.
    """
    q = run.queue
    busy = q.busy > 0
    out: list[tuple[float, float]] = []
    start: float | None = None
    for i, b in enumerate(busy):
        if b and start is None:
            start = float(run.t[i])
        if start is not None and (q.queue[i + 1] == 0 or not b):
            end = float(run.t[i] + q.busy[i]) if b else float(run.t[i])
            out.append((start, end))
            start = None
    if start is not None:
        out.append((start, float(run.t[-1])))
    return out


def focus_window(source: Result | Run, closure: int | None = None) -> tuple[float, float]:
    """A time window (s from the demand start) around the closures and their queues
    of a result (or the engine's run).

    All closures and queues (``closure`` ``None``) or closure number
    ``closure`` (0-based) and the queue it leaves, with
    :data:`WINDOW_MARGIN_S` either side, widened to whole hours and to any
    queue standing at either end, clipped to the demand period. With no
    closure and no queue, the whole demand period.
    """
    run = source.run if isinstance(source, Result) else source
    plan = run.plan
    total = float(run.t[-1])
    start0 = plan.demand.start
    periods = busy_periods(run)
    if closure is None:
        spans = [
            ((c.start - start0).total_seconds(), (c.end - start0).total_seconds())
            for c in plan.closures
        ]
        spans += periods
    else:
        if not 0 <= closure < len(plan.closures):
            raise ValueError(
                f"closure {closure + 1} does not exist; the plan has {len(plan.closures)}"
            )
        c = plan.closures[closure]
        spans = [((c.start - start0).total_seconds(), (c.end - start0).total_seconds())]
    if not spans:
        return 0.0, total
    a = min(s for s, _ in spans)
    b = max(e for _, e in spans)
    changed = True
    while changed:  # take in every queue that overlaps the window
        changed = False
        for s, e in periods:
            if s < b and e > a and (s < a or e > b):
                a, b = min(a, s), max(b, e)
                changed = True
    a = max(0.0, math.floor((a - WINDOW_MARGIN_S) / HOUR) * HOUR)
    b = min(total, math.ceil((b + WINDOW_MARGIN_S) / HOUR) * HOUR)
    return a, b


def _cumulative(t: FloatArray, rate: FloatArray) -> FloatArray:
    """Cumulative integral at the boundaries ``t`` of a piecewise-constant ``rate``."""
    out = np.zeros(len(t))
    np.cumsum(rate * np.diff(t), out=out[1:])
    return out


def _step_average(t: FloatArray, cum: FloatArray, times: FloatArray) -> FloatArray:
    """Average rate over each ``[times[n], times[n+1]]`` from a cumulative curve.

    Beyond the last boundary the last rate is held (the cumulative curve is
    extended linearly).
    """
    last = (cum[-1] - cum[-2]) / (t[-1] - t[-2]) if len(t) > 1 else 0.0
    inside = np.interp(times, t, cum)
    beyond = times > t[-1]
    inside[beyond] = cum[-1] + last * (times[beyond] - t[-1])
    return np.diff(inside) / np.diff(times)


@dataclass(frozen=True)
class Simulation:
    """The LWR run of a plan's approach and its comparison with the engine.

    Distances are metres *upstream of the closure* (the bottleneck at 0, the
    entrance of the stretch at ``length_m``); times are seconds from the
    demand start (``window`` is the simulated span); counts and delays are over
    all ``lanes`` of the approach.
    """

    run: Run
    field: Field
    lanes: int
    window: tuple[float, float]
    shift_s: float
    capacity_drop: bool
    warnings: list[str] = dataclass_field(default_factory=list)
    ramps: approach.Ramps | None = None

    @cached_property
    def exit_delay_veh_h(self) -> dict[str, float]:
        """Per exit ramp: the delay of the traffic leaving there (veh-h, all lanes),
        the area between its free-flow exit curve (the ramp's flow on the closure's
        clock, ``d / v0`` seconds earlier at the ramp) and the flow the simulation
        let off."""
        r, f = self.ramps, self.field
        if r is None or f.ramp_flow is None:
            return {}
        v0 = float(self.diagram.speed(0.0))
        lev = self.levels
        out = {}
        for j in range(r.count):
            if r.entrance[j]:
                continue
            free = np.interp(
                lev + r.distance[j] / v0, self.run.t, _cumulative(self.run.t, r.rate[j] / HOUR)
            )
            free -= free[0]
            actual = np.zeros(len(lev))
            np.cumsum(f.ramp_flow[j] * f.dt * self.lanes, out=actual[1:])
            gap = free - actual
            out[r.names[j]] = float(np.sum(0.5 * (gap[:-1] + gap[1:])) * f.dt) / HOUR
        return out

    # -- geometry and time --

    @property
    def length_m(self) -> float:
        """Length of the modelled approach (m)."""
        return self.field.length

    @property
    def diagram(self) -> FundamentalDiagram:
        return self.field.diagram

    @property
    def distance_m(self) -> FloatArray:
        """Cell centres as distance upstream of the closure (m), upstream end first."""
        return self.field.length - self.field.x

    @property
    def times(self) -> FloatArray:
        """Seconds from the demand start of the density snapshots."""
        return self.window[0] + self.field.t

    @property
    def levels(self) -> FloatArray:
        """Seconds from the demand start of every time level."""
        return self.window[0] + self.field.levels

    def clock(self, seconds: npt.ArrayLike) -> pd.DatetimeIndex:
        """Local clock of times given in seconds from the demand start."""
        import pandas as pd  # imported when used: slow to import

        start = pd.Timestamp(self.run.plan.demand.start)
        return start + pd.to_timedelta(np.atleast_1d(np.asarray(seconds, dtype=float)), unit="s")

    # -- fields --

    @property
    def density(self) -> FloatArray:
        """Density snapshots (veh/m/ln), one row per time in :attr:`times`."""
        return self.field.density

    @property
    def speed(self) -> FloatArray:
        """Speed snapshots (m/s), the shape of :attr:`density`."""
        return self.field.speed

    # -- queue and delay per time level --

    @cached_property
    def back_of_queue_m(self) -> FloatArray:
        """Distance (m) of the back of the queue upstream of the closure; 0 with no queue."""
        b = self.field.back
        assert b is not None
        return np.where(np.isnan(b), 0.0, self.field.length - np.nan_to_num(b))

    @cached_property
    def departures_veh(self) -> FloatArray:
        """Vehicles (all lanes) through the closure since the window start, per time level."""
        out = np.zeros(self.field.steps + 1)
        np.cumsum(self.field.outflow * self.field.dt * self.lanes, out=out[1:])
        return out

    @cached_property
    def arrivals_veh(self) -> FloatArray:
        """Vehicles (all lanes) that would have reached the closure in free flow, per level.

        The engine's cumulative demand at the bottleneck from the window start:
        the simulation feeds each vehicle in ``shift_s`` seconds early at the
        entrance, the free travel time of the stretch.
        """
        r = self.run
        cum = _cumulative(r.t, r.demand_veh_h / HOUR)
        levels = self.levels
        a = np.interp(levels, r.t, cum)
        return a - a[0]

    @cached_property
    def stored_veh(self) -> FloatArray:
        """Vehicles stored in the queue (all lanes) per level: arrivals minus departures.

        The point-queue count of the simulation (Newell's cumulative curves at
        the bottleneck), comparable with the engine's ``queue_veh``.
        """
        return np.maximum(self.arrivals_veh - self.departures_veh, 0.0)

    @property
    def entrance_queue_veh(self) -> FloatArray:
        """Vehicles (all lanes) waiting at the entrance of the stretch, per level."""
        return self.field.entrance_queue * self.lanes

    @cached_property
    def delay_rate(self) -> FloatArray:
        """Vehicles delayed per second (veh-s/s, all lanes) at every level.

        Total travel time minus distance travelled at the free speed ``v0``
        (the speed of the diagram at zero density), plus the entrance queue:
        ``n (int k dx - int q dx / v0 + queue_e)``. Zero in free flow on the
        triangular diagram; on the Greenshields family light traffic slower
        than ``v0`` also counts.
        """
        f = self.field
        assert f.vehicles is not None and f.travel is not None
        v0 = float(self.diagram.speed(0.0))
        return self.lanes * (f.vehicles - f.travel / v0 + f.entrance_queue)

    @cached_property
    def delay_cum_veh_s(self) -> FloatArray:
        """Cumulative delay (veh-s, all lanes) at every level, trapezoid rule."""
        rate = self.delay_rate
        out = np.zeros(len(rate))
        np.cumsum(0.5 * (rate[:-1] + rate[1:]) * self.field.dt, out=out[1:])
        return out

    # -- headline figures --

    @property
    def max_queue_extent_m(self) -> float:
        """Farthest reach (m) of the back of the queue upstream of the closure."""
        return float(self.back_of_queue_m.max())

    @property
    def max_queue_extent_at(self) -> dt.datetime | None:
        if self.max_queue_extent_m <= 0:
            return None
        i = int(np.argmax(self.back_of_queue_m))
        seconds = round(float(self.levels[i]), 3)
        return self.run.plan.demand.start + dt.timedelta(seconds=seconds)

    @property
    def max_stored_veh(self) -> float:
        return float(self.stored_veh.max())

    @property
    def total_delay_veh_h(self) -> float:
        """Delay over the window (veh-h, all lanes) from the space-time field."""
        return float(self.delay_cum_veh_s[-1]) / HOUR

    @property
    def max_entrance_queue_veh(self) -> float:
        return float(self.entrance_queue_veh.max())

    @property
    def spilled(self) -> bool:
        """The queue outgrew the modelled stretch (vehicles waited at its entrance)."""
        return self.max_entrance_queue_veh > SPILL_VEH

    # -- the engine's estimate --

    @property
    def engine_method(self) -> str:
        """How the engine found its queue lengths: ``"newell"`` or ``"shockwave"``."""
        return getattr(self.run, "length_method", "shockwave")

    def engine_queue_veh(self, seconds: npt.ArrayLike) -> FloatArray:
        """The engine's exact point queue (vehicles) at the given seconds."""
        r = self.run
        q = r.queue
        s = np.asarray(seconds, dtype=float)
        i = np.clip(np.searchsorted(r.t, s, side="right") - 1, 0, len(r.t) - 2)
        slope = np.where(q.busy[i] > 0, q.arrival_rate[i] - q.discharge[i], 0.0)
        return np.maximum(q.queue[i] + slope * (s - r.t[i]), 0.0)

    def engine_queue_length_m(self, seconds: npt.ArrayLike) -> FloatArray:
        """The engine's queue length (m) at the given seconds.

        Its back-of-queue trajectory when it followed the waves (Newell's
        method, :mod:`wzq.models.newell`), else the single-state shockwave relation
        ``N / (n (k_Q - k_A))`` (:mod:`wzq.models.shockwave`).
        """
        r = self.run
        s = np.asarray(seconds, dtype=float)
        newell = getattr(r, "back_of_queue", None)
        if newell is not None:
            return np.interp(s, newell.times, newell.distance)
        i = np.clip(np.searchsorted(r.t, s, side="right") - 1, 0, len(r.t) - 2)
        per_m = stored_density(
            r.model.diagram,
            r.demand_veh_h,
            queue_state_discharge(r.queue, r.discharge_veh_h),
            r.plan.site.lanes,
        )
        return self.engine_queue_veh(s) / per_m[i]

    # -- per hour --

    @cached_property
    def hourly(self) -> pd.DataFrame:
        """Hour by hour over the window: the engine's figures beside the LWR ones.

        ``engine_*`` columns are the engine's (:func:`wzq.engine.hourly.hourly_table`;
        its queue length by the method in :attr:`engine_method`; its delay here
        is the queueing delay only, without the extra travel time through the
        work zone, which the approach model does not see);
        ``lwr_*`` are this simulation's: the farthest back of queue and the
        most vehicles stored within the hour (both ends included) and the delay
        accumulated in it.
        """
        import pandas as pd  # imported when used: slow to import

        engine = hourly_table(self.run)
        a, b = self.window
        first, last = math.floor(a / HOUR + 1e-9), math.ceil(b / HOUR - 1e-9)
        eng = engine.iloc[first:last].reset_index(drop=True)
        bounds = np.arange(first, last + 1) * HOUR
        lev = self.levels
        hour = np.clip(((lev - 1e-9 * HOUR) // HOUR).astype(np.int64), first, last - 1)
        hour_after = np.clip((lev // HOUR).astype(np.int64), first, last - 1)

        def hour_max(v: FloatArray) -> FloatArray:
            out = np.zeros(last - first)
            np.maximum.at(out, hour - first, v)
            np.maximum.at(out, hour_after - first, v)
            return out

        cum = self.delay_cum_veh_s
        at_bounds = np.interp(bounds, lev, cum)
        return pd.DataFrame(
            {
                "hour_start": eng["hour_start"],
                "closure": eng["closure"],
                "demand_veh_h": eng["demand_veh_h"],
                "discharge_veh_h": eng["discharge_veh_h"],
                "engine_queue_max_veh": eng["queue_max_veh"],
                "lwr_queue_max_veh": hour_max(self.stored_veh),
                "engine_queue_length_max_m": eng["queue_length_max_m"],
                "lwr_queue_length_max_m": hour_max(self.back_of_queue_m),
                "engine_queue_delay_veh_h": eng["queue_delay_veh_h"],
                "lwr_delay_veh_h": np.diff(at_bounds) / HOUR,
                "lwr_entrance_queue_max_veh": hour_max(self.entrance_queue_veh),
            }
        )


def _run_ramps(run: Run) -> approach.Ramps | None:
    """The plan's ramps on the run's grid (``None`` without ramps)."""
    plan = run.plan
    if not plan.approach.ramps:
        return None
    mid = 0.5 * (run.t[:-1] + run.t[1:])
    n = len(plan.demand.flows_veh_h)
    di = np.minimum((mid // plan.demand.interval_s).astype(np.intp), n - 1)
    return approach.ramps_for(plan.demand, plan.approach, di)


def _bound_shares(ramps: approach.Ramps, exits: list[int], beyond: float) -> FloatArray:
    """Per exit (indices into the ramps) and grid interval: the share of the traffic
    passing the point ``beyond`` metres upstream that is bound for that exit -- its
    split there times the shares going on past the exits in between (first in,
    first out, every vehicle reaching an exit at a time leaves in the same share)."""
    beta = np.where(
        ramps.section[1:] > 0, ramps.rate / np.where(ramps.section[1:] > 0, ramps.section[1:], 1), 0
    )  # split of ramp j: its flow over the flow arriving there
    out = np.zeros((len(exits), ramps.rate.shape[1]))
    for e, j in enumerate(exits):
        if ramps.distance[j] >= beyond:
            continue
        share = beta[j].copy()
        for jj in exits:
            if ramps.distance[j] < ramps.distance[jj] < beyond:
                share *= 1.0 - beta[jj]
        out[e] = share
    return out


def _ramp_inputs(
    run: Run,
    ramps: approach.Ramps,
    fd: FundamentalDiagram,
    lanes: int,
    levels: FloatArray,
    length_m: float,
    dx: float,
    v0: float,
    reach: FloatArray,
) -> tuple[FloatArray, dict]:
    """Initial densities and the :func:`solve` arguments for the plan's ramps.

    Each ramp sits at the cell boundary nearest its distance; flows are stated on
    the closure's clock, so a ramp's traffic enters ``d / v0`` seconds before it
    would reach the closure. The road starts in free flow, each cell at the flow
    of its own section.
    """
    cells = len(reach)
    x = (np.arange(cells, dtype=np.float64) + 0.5) * dx
    upstream = length_m - x  # distance of each cell centre from the closure
    section = np.searchsorted(ramps.distance, upstream)  # ramps downstream of the cell
    flows = ramps.section[section, np.clip(np.searchsorted(run.t, reach, "right") - 1, 0,
                                           len(run.t) - 2)]  # fmt: skip
    k0 = np.asarray(fd.density_free(np.minimum(flows / HOUR / lanes, fd.capacity)), np.float64)
    exits = [j for j in range(ramps.count) if not ramps.entrance[j]]
    lead = levels[:-1]
    junctions = []
    for j in range(ramps.count):
        b = int(np.clip(round((length_m - ramps.distance[j]) / dx), 1, cells - 1))
        clock = lead + ramps.distance[j] / v0
        if ramps.entrance[j]:
            cum = _cumulative(run.t, ramps.rate[j] / HOUR)
            rate = _step_average(run.t, cum, levels + ramps.distance[j] / v0) / lanes
            shares = _bound_shares(ramps, exits, float(ramps.distance[j]))
            junctions.append(
                Junction(b, True, rate, _rate_at(run.t, shares.T, clock).T, ramps.names[j])
            )
        else:
            junctions.append(Junction(b, False, name=ramps.names[j]))
    # the traffic bound for each exit: at the upstream end and in the first cells
    far = float(ramps.distance[-1]) + length_m
    shares_far = _bound_shares(ramps, exits, far)
    shares_in = _rate_at(run.t, shares_far.T, lead + length_m / v0).T
    density0 = np.zeros((len(exits), cells))
    for s in np.unique(section):
        in_s = np.flatnonzero(section == s)
        shares = _bound_shares(ramps, exits, float(upstream[in_s[0]]))
        density0[:, in_s] = k0[in_s] * _rate_at(run.t, shares.T, reach[in_s]).T
    nodes = {
        "junctions": tuple(junctions),
        "exit_shares_in": shares_in if exits else None,
        "exit_density0": density0 if exits else None,
    }
    return k0, nodes


def _as_run(source: Plan | Result | Run) -> Run:
    """The engine's run of a plan, a result or a run."""
    if isinstance(source, Run):
        return source
    if isinstance(source, Result):
        return source.run
    if isinstance(source, Plan):
        return evaluate(source)
    raise TypeError(f"simulate needs a Plan, a Result or a Run, not {type(source).__name__}")


def _rate_at(t: FloatArray, rate: FloatArray, seconds: FloatArray) -> FloatArray:
    """A piecewise-constant rate (on intervals of ``t``) at given instants, last value held."""
    i = np.clip(np.searchsorted(t, seconds, side="right") - 1, 0, len(rate) - 1)
    return rate[i]


def default_length(run: Run, window: tuple[float, float]) -> float:
    """Approach length (m) for :func:`simulate`: room for the engine's longest queue.

    1.5 times the engine's longest queue in the window (or the farthest
    landmark of the approach, if farther) plus 1 km, rounded up to 500 m, at
    least 2 km (our own rule of thumb: room for a queue the engine's method
    underestimates, e.g. the single-state length after capacity returns, or a
    diagram other than the triangular).
    """
    a, b = window
    newell = getattr(run, "back_of_queue", None)
    longest = 0.0
    if newell is not None:
        inside = (newell.times >= a) & (newell.times <= b)
        if inside.any():
            longest = float(newell.distance[inside].max())
    else:
        sel = (run.t[1:] > a) & (run.t[:-1] < b)
        if sel.any():
            longest = float(max(run.length_start[sel].max(), run.length_end[sel].max()))
    farthest = max((lm.distance for lm in run.plan.approach.landmarks), default=0.0)
    longest = max(longest, farthest)
    return max(2000.0, math.ceil((1.5 * longest + 1000.0) / 500.0) * 500.0)


def simulate(
    source: Plan | Result | Run,
    *,
    length_m: float | None = None,
    cells: int | None = None,
    cfl: float = DEFAULT_CFL,
    window: str | tuple[float, float] = "auto",
    closure: int | None = None,
    capacity_drop: bool | None = None,
    diagram: FundamentalDiagram | None = None,
    records: int = DEFAULT_RECORDS,
) -> Simulation:
    """Simulate the approach to the closure with the LWR model (:func:`solve`).

    The approach is ``length_m`` metres of road with the site's lanes
    upstream of the closure, modelled per lane on the engine's fundamental
    diagram (or ``diagram``). Its downstream end is the closure: its receiving
    capacity per approach lane is the engine's capacity (all open lanes) over
    the approach's lanes, changing with the closure schedule and the capacity
    model. Its upstream end takes the engine's demand, fed in ``length/v0``
    seconds early (the free travel time of the stretch, ``v0`` the speed at
    zero density) so that traffic reaches the closure when the engine says it
    does; the road starts in the free-flow state of that demand. A queue
    longer than the stretch waits at the entrance as a point queue and is
    reported.

    ``window``: ``"auto"`` (the closures and their queues, or only closure
    number ``closure``, 0-based; :func:`focus_window`), ``"all"`` (the whole
    demand period), or ``(start, end)`` in seconds from the demand start.
    ``capacity_drop`` ``None`` follows the plan's option (see :func:`solve` for
    the rule; plain LWR has none). ``cells`` defaults to one per
    ``max(length/100, 20 m)``; the time step is the longest whole division of
    the window with Courant number at most ``cfl``.

    Raises ValueError for a malformed argument.
    """
    run = _as_run(source)
    plan = run.plan
    lanes = int(plan.site.lanes)
    fd = run.model.diagram if diagram is None else diagram
    total = float(run.t[-1])
    if window == "auto":
        a, b = focus_window(run, closure)
    elif window == "all":
        a, b = 0.0, total
    elif isinstance(window, str):
        raise ValueError(f"window must be 'auto', 'all' or (start, end) seconds, not {window!r}")
    else:
        a, b = (float(v) for v in window)
        if not (0.0 <= a < b <= total + 1e-9):
            raise ValueError(
                f"window ({a}, {b}) s must lie within the demand period, 0 to {total} s"
            )
    if length_m is None:
        length_m = default_length(run, (a, b))
    if not (math.isfinite(length_m) and length_m > 0):
        raise ValueError(f"length_m must be a positive length in metres, got {length_m!r}")
    if cells is None:
        dx_target = max(length_m / DEFAULT_CELLS_PER_LENGTH, MIN_DEFAULT_DX)
        cells = max(10, math.ceil(length_m / dx_target))
    if int(cells) != cells or cells < 2:
        raise ValueError(f"cells must be a whole number, 2 or more, got {cells!r}")
    if not (math.isfinite(cfl) and 0 < cfl <= 1):
        raise ValueError(f"cfl must be above 0 and at most 1, got {cfl!r}")
    cells = int(cells)
    dx = length_m / cells
    steps = max(1, math.ceil((b - a) * max_wave_speed(fd) / (cfl * dx)))
    dt = (b - a) / steps
    v0 = float(fd.speed(0.0))
    shift = length_m / v0
    levels = a + np.arange(steps + 1, dtype=np.float64) * dt

    ramps = _run_ramps(run)
    mainline = run.demand_veh_h if ramps is None else ramps.section[-1]
    cum_demand = _cumulative(run.t, mainline / HOUR)
    inflow = _step_average(run.t, cum_demand, levels + shift) / lanes
    pre = _step_average(run.t, _cumulative(run.t, run.prebreakdown_veh_h / HOUR), levels) / lanes
    dis = _step_average(run.t, _cumulative(run.t, run.discharge_veh_h / HOUR), levels) / lanes
    drop = plan.options.capacity_drop if capacity_drop is None else bool(capacity_drop)

    x = (np.arange(cells, dtype=np.float64) + 0.5) * dx
    reach = a + (length_m - x) / v0  # when the traffic now in each cell reaches the closure
    if ramps is None:
        q0 = np.minimum(_rate_at(run.t, run.demand_veh_h, reach) / HOUR / lanes, fd.capacity)
        k0 = np.asarray(fd.density_free(q0), dtype=np.float64)
        nodes: dict = {}
    else:
        k0, nodes = _ramp_inputs(run, ramps, fd, lanes, levels, length_m, dx, v0, reach)

    every = max(1, math.ceil(steps / max(int(records), 1)))
    result = solve(
        fd,
        k0,
        dx=dx,
        dt=dt,
        steps=steps,
        inflow=inflow,
        exit_capacity=pre,
        exit_discharge=dis if drop else None,
        record_every=every,
        track=True,
        **nodes,
    )
    sim = Simulation(run, result, lanes, (a, b), shift, drop, ramps=ramps)
    queued_at_start = float(sim.engine_queue_veh(np.array([a]))[0])
    if queued_at_start > 0:
        sim.warnings.append(
            f"the engine has {queued_at_start:,.0f} vehicles queued when the simulation starts; "
            "it starts from free-flowing traffic, so start the window earlier"
        )
    if sim.spilled:
        sim.warnings.append(
            f"the queue reached the upstream end of the modelled stretch ({length_m:,.0f} m); "
            f"up to {sim.max_entrance_queue_veh:,.0f} vehicles waited there as a point queue; "
            "model a longer stretch to see the whole queue"
        )
    return sim
