"""``analyse(plan) -> Result``: the engine's one entry point.

Steps, all pure and vectorised:

1. a time grid: every demand interval boundary, every hour, every closure
   start and end (so demand, capacity and the day/night term are constant on
   each interval);
2. capacity per interval from the site and the closure in force
   (:mod:`wzq.models.capacity`), a user override winning over every model;
3. the exact deterministic queue with the capacity drop (:mod:`wzq.models.queueing`);
4. queue length by shockwave analysis (:mod:`wzq.models.shockwave`) on the chosen
   fundamental diagram (:mod:`wzq.models.flow`);
5. delay: queueing delay (area between the cumulative curves) plus the extra
   travel time through the work zone at its lower free-flow speed;
6. per-hour table, checks against the thresholds, summary and warnings.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from functools import cached_property, lru_cache
from typing import NamedTuple

import numpy as np
import pandas as pd

from wzq import units
from wzq.engine import approach, plausibility
from wzq.engine import costs as road_user_costs
from wzq.engine.plan import (
    HCM_DENSITY_AT_CAPACITY_PC_MI_LN,
    NIGHT_END_HOUR,
    NIGHT_START_HOUR,
    Closure,
    Plan,
    PlanError,
    Problem,
    Site,
    Thresholds,
)
from wzq.models import capacity as cap
from wzq.models import newell
from wzq.models.flow import PIECEWISE_LINEAR, FundamentalDiagram, Trapezoidal, make_diagram
from wzq.models.queueing import QueueRun, solve, waits
from wzq.models.shockwave import stored_density
from wzq.units import FOOT, HOUR, LONG_LENGTH, MILE, MPH, per_mile_to_per_m

#: HCM 7th ed. default jam density, pc/mi/ln (ch. 25; range 150-270).
JAM_DENSITY_PC_MI_LN = 190.0
#: Default free-flow speed above the speed limit, mi/h (HCM 7th ed. ch. 12).
FFS_ABOVE_LIMIT_MPH = 5.0
#: Consecutive hours of demand above capacity that earn a warning
#: (common practice, no source).
LONG_OVERLOAD_HOURS = 6
#: Reach of the advance warning signs of a freeway lane closure, m: the three signs
#: stand 1,000, 1,500 and 2,640 ft apart from the start of the taper upstream (MUTCD
#: 2009, Table 6H-3, expressway/freeway: 5,140 ft, about 1 mi). A queue reaching
#: beyond them earns a warning: drivers meet its back unwarned, and many divert from
#: queues that long, which deterministic queueing does not represent (using the sign
#: spacing as the trigger is common practice, no source).
ADVANCE_WARNING_REACH_M = (1000 + 1500 + 2640) * FOOT


@dataclass(frozen=True)
class SiteModel:
    """Values derived once from the site: speeds, factors, diagram."""

    ffs: float  # m/s
    heavy_factor: float
    driver_factor: float
    base_pc_h_ln: float
    jam_density: float  # veh/m/ln
    diagram: FundamentalDiagram

    @property
    def base_veh_h_ln(self) -> float:
        return self.base_pc_h_ln * self.heavy_factor * self.driver_factor


@lru_cache(maxsize=256)
def site_model(site: Site, diagram: str = "triangular") -> SiteModel:
    """Free-flow speed, heavy-vehicle and driver factors, base capacity and diagram."""
    ffs = site.free_flow_speed
    if ffs is None:
        ffs = site.speed_limit + FFS_ABOVE_LIMIT_MPH * MPH
    f_hv = cap.heavy_vehicle_factor(site.heavy_vehicle_share, cap.pce_trucks(site.terrain))
    f_p = cap.driver_population_factor(site.driver_population)
    base = site.base_capacity_pc_h_ln or cap.basic_freeway_capacity(ffs / MPH)
    k_j = site.jam_density
    if k_j is None:
        k_j = per_mile_to_per_m(JAM_DENSITY_PC_MI_LN) * f_hv
    c_ln = base * f_hv * f_p / HOUR  # veh/s/ln
    if diagram == "triangular" and site.congested_branch != "derived":
        fd = calibrated_diagram(site, ffs, k_j, c_ln, f_hv)
    elif diagram == "triangular":
        fd = make_diagram("triangular", free_speed=ffs, jam_density=k_j, capacity=c_ln)
    elif diagram == "greenshields":
        fd = make_diagram("greenshields", free_speed=ffs, jam_density=k_j)
    else:
        fd = make_diagram(
            "capped-greenshields",
            free_speed=ffs,
            jam_density=k_j,
            speed_cap=min(site.work_zone_speed_limit, ffs),
        )
    return SiteModel(ffs, f_hv, f_p, base, k_j, fd)


def calibrated_diagram(
    site: Site, ffs: float, k_j: float, c_ln: float, heavy_factor: float
) -> Trapezoidal:
    """The triangular diagram with the site's own congested branch (a trapezoid).

    The congested branch runs from the density at capacity ``k_c`` (at the
    capacity ``C``) to the jam density, so ``w = C / (k_j - k_c)`` and
    ``k_c = k_j - C / w``: ``k_c`` is the HCM basic-segment density at capacity,
    45 pc/mi/ln times the heavy-vehicle factor (HCM 7th ed. ch. 12), or the
    site's density at capacity, or follows from its backward wave speed.
    Capacity, free-flow speed and jam density stay as they are; where the
    free branch reaches the capacity before ``k_c`` the diagram has a plateau
    at capacity (:class:`wzq.models.flow.Trapezoidal`).

    Raises :class:`PlanError` when the branch cannot reach the capacity.
    """
    system = site.unit_system
    speed_unit = units.SPEED[system][0]
    density_unit = units.DENSITY[system][0]
    k_1 = c_ln / ffs
    if site.congested_branch == "wave-speed":
        w = float(site.wave_speed or 0.0)
        k_c = k_j - c_ln / w
        where = "site.wave_speed"
    else:
        if site.congested_branch == "hcm":
            k_c = units.per_mile_to_per_m(HCM_DENSITY_AT_CAPACITY_PC_MI_LN) * heavy_factor
        else:
            k_c = float(site.density_at_capacity or 0.0)
        where = (
            "site.density_at_capacity"
            if site.congested_branch != "hcm"
            else ("site.congested_branch")
        )
        if k_c >= k_j:
            raise PlanError(
                Problem(
                    where,
                    f"the density at capacity ({units.per_m_to_density(k_c, system):,.1f} "
                    f"{density_unit}) is not below the jam density "
                    f"({units.per_m_to_density(k_j, system):,.1f} {density_unit}); "
                    "lower it or raise the jam density",
                )
            )
        w = c_ln / (k_j - k_c)
    if k_c < k_1 * (1.0 - 1e-9):
        w_min = c_ln / (k_j - k_1)
        if site.congested_branch == "wave-speed":
            given = f"a backward wave speed of {units.mps_to_speed(w, system):,.1f} {speed_unit}"
        else:
            given = (
                f"{'the HCM ' if site.congested_branch == 'hcm' else 'a '}density at capacity "
                f"of {units.per_m_to_density(k_c, system):,.1f} {density_unit}"
            )
        raise PlanError(
            Problem(
                where,
                f"with {given} the congested branch meets the free-flow branch below the "
                "capacity, so the road could not carry its capacity (free-flowing traffic "
                f"reaches it at {units.per_m_to_density(k_1, system):,.1f} {density_unit}); "
                f"use a backward wave speed of at least {units.mps_to_speed(w_min, system):,.1f} "
                f"{speed_unit} (a density at capacity of at least "
                f"{units.per_m_to_density(k_1, system):,.1f} {density_unit}) or a higher jam "
                "density",
            )
        )
    return Trapezoidal(free_speed=ffs, capacity=c_ln, jam_density=k_j, backward_wave_speed=w)


def closure_capacity(
    site: Site, model: SiteModel, closure: Closure | None, night: bool
) -> cap.CapacityPair:
    """Pre-breakdown and queue-discharge capacity (veh/h, all open lanes)."""
    common = dict(
        n_normal=site.lanes,
        ffs_mph=model.ffs / MPH,
        heavy_share=site.heavy_vehicle_share,
        terrain=site.terrain,
        driver_population=site.driver_population,
        rural=site.area_type == "rural",
        lateral_ft=site.lateral_clearance / FOOT,
        night=night,
        alpha_wz_pct=site.capacity_drop_pct_work_zone,
        alpha_open_pct=site.capacity_drop_pct_open,
        work_intensity_pc_h_ln=site.work_intensity_pc_h_ln,
        ramp_adjustment_pc_h_ln=site.ramp_adjustment_pc_h_ln,
        base_capacity_pc_h_ln=site.base_capacity_pc_h_ln,
    )
    open_road = cap.section_capacity(method="open", n_open=site.lanes, soft_barrier=False, **common)
    if closure is None:
        return open_road
    pair = cap.section_capacity(
        method=site.capacity_method,
        n_open=site.lanes - closure.lanes_closed,
        soft_barrier=closure.barrier == "soft",
        override_veh_h_ln=closure.capacity_override_veh_h_ln,
        **common,
    )
    if closure.capacity_override_veh_h_ln is not None:
        return typed_capacity(pair.prebreakdown_veh_h, site)  # wins over every model
    # a closure never gives more than the open road (e.g. a shoulder closure
    # behind a hard barrier, whose HCM discharge rate can exceed the open road's)
    return cap.CapacityPair(
        min(pair.prebreakdown_veh_h, open_road.prebreakdown_veh_h),
        min(pair.discharge_veh_h, open_road.discharge_veh_h),
    )


def typed_capacity(typed_veh_h: float, site: Site) -> cap.CapacityPair:
    """Pre-breakdown capacity and discharge rate from a capacity typed for a closure
    (``override x open lanes``, veh/h), as ``site.capacity_override_is`` says it is meant.

    ``"both"``: the typed value is both (no capacity drop for that closure);
    ``"discharge"``: it is the queue discharge rate and the pre-breakdown capacity is
    ``100 QDR / (100 - alpha)``; ``"prebreakdown"``: it is the pre-breakdown capacity and
    the discharge rate is ``c (100 - alpha) / 100``; alpha is the work-zone capacity drop
    (HCM 6th/7th ed., Ch. 10: :func:`wzq.models.capacity.work_zone_prebreakdown_capacity`).
    """
    alpha = site.capacity_drop_pct_work_zone
    if site.capacity_override_is == "discharge":
        return cap.CapacityPair(
            cap.work_zone_prebreakdown_capacity(typed_veh_h, alpha), typed_veh_h
        )
    if site.capacity_override_is == "prebreakdown":
        return cap.CapacityPair(typed_veh_h, typed_veh_h * (100.0 - alpha) / 100.0)
    return cap.CapacityPair(typed_veh_h, typed_veh_h)


def work_zone_speed(site: Site, model: SiteModel, closure: Closure, night: bool) -> float:
    """Free-flow speed through the work zone (m/s).

    HCM 6th/7th ed. ch. 10 work-zone free-flow speed equation for the ``hcm7``
    method; for ``hcm2000`` the work-zone speed limit + 5 mi/h (the HCM's
    default free-flow speed rule applied to the work-zone limit; common
    practice), never above the normal free-flow speed.
    """
    ffs_mph = model.ffs / MPH
    if site.capacity_method == "hcm7":
        n_open = site.lanes - closure.lanes_closed
        v = cap.work_zone_free_flow_speed(
            speed_limit_ratio=site.speed_limit / site.work_zone_speed_limit,
            wz_speed_limit_mph=site.work_zone_speed_limit / MPH,
            lcsi=cap.lane_closure_severity_index(site.lanes, n_open),
            soft_barrier=closure.barrier == "soft",
            night=night,
            ramp_density_per_mi=site.ramp_density * MILE,
            ffs_cap_mph=ffs_mph,
        )
    else:
        v = min(ffs_mph, site.work_zone_speed_limit / MPH + FFS_ABOVE_LIMIT_MPH)
    return max(v, 1.0) * MPH


def night_by_clock(start_hour: int, hour: np.ndarray) -> np.ndarray:
    """Night flag of each interval (:func:`wzq.engine.plan.is_night`) from its hour index.

    ``hour`` counts whole hours from the start of the demand, which starts on
    the hour ``start_hour``; one day's pattern is repeated over the run.
    """
    clock = (start_hour + np.arange(24)) % 24
    pattern = (clock >= NIGHT_START_HOUR) | (clock < NIGHT_END_HOUR)
    return np.tile(pattern, int(hour[-1]) // 24 + 1)[hour]


def _config(closure: Closure) -> tuple:
    return (closure.lanes_closed, closure.barrier, closure.capacity_override_veh_h_ln)


@lru_cache(maxsize=4096)
def configuration(
    site: Site, diagram: str, config: tuple | None, night: bool
) -> tuple[float, float, float]:
    """Pre-breakdown capacity, discharge rate (veh/h) and extra seconds per vehicle.

    ``config`` is ``(lanes_closed, barrier, capacity_override_veh_h_ln)`` or
    ``None`` for the open road. Cached: plans and window searches meet the
    same few configurations again and again.
    """
    model = site_model(site, diagram)
    if config is None:
        pair = closure_capacity(site, model, None, night)
        return pair.prebreakdown_veh_h, pair.discharge_veh_h, 0.0
    lanes_closed, barrier, override = config
    closure = Closure(dt.datetime.min, dt.datetime.max, lanes_closed, barrier, night, override)
    pair = closure_capacity(site, model, closure, night)
    v_wz = work_zone_speed(site, model, closure, night)
    length = site.work_zone_length
    extra = max(length / v_wz - length / model.ffs, 0.0)
    return pair.prebreakdown_veh_h, pair.discharge_veh_h, extra


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
        return pd.Timestamp(self.plan.demand.start) + pd.to_timedelta(seconds, unit="s")


def _closure_table(plan: Plan) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[Closure]]:
    """The closures as arrays: starts and ends (s from the start of the
    demand), the configuration number of each, and one example per configuration.

    A configuration is what capacity depends on besides the clock: lanes
    closed, barrier, capacity override and a day/night given by the user.
    """
    origin = plan.demand.start
    starts: list[float] = []
    ends: list[float] = []
    conf_of: list[int] = []
    number: dict[tuple, int] = {}
    examples: list[Closure] = []
    for c in plan.closures:
        starts.append((c.start - origin).total_seconds())
        ends.append((c.end - origin).total_seconds())
        key = (c.lanes_closed, c.barrier, c.capacity_override_veh_h_ln, c.night)
        j = number.get(key)
        if j is None:
            j = number[key] = len(examples)
            examples.append(c)
        conf_of.append(j)
    return (
        np.array(starts, dtype=float),
        np.array(ends, dtype=float),
        np.array(conf_of, dtype=np.intp),
        examples,
    )


def _grid(
    plan: Plan, starts: np.ndarray, ends: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Boundaries (s), and per interval: hour (from the start of the demand),
    closure index (-1 when open) and demand index.

    Closures never overlap (:func:`wzq.engine.plan.validate`), so in time order the
    intervals alternate between open stretches and closures; the closure index
    is each stretch's label repeated over its intervals.
    """
    d = plan.demand
    n = len(d.flows_veh_h)
    step = float(d.interval_s)
    t = np.arange(n + 1, dtype=float) * step
    aligned = step == HOUR and bool(
        np.all(np.mod(starts, step) == 0) and np.all(np.mod(ends, step) == 0)
    )
    if aligned:  # hourly demand, closures on the hour: the grid is the hours
        demand_index = hour = np.arange(n, dtype=np.intp)
        first = (starts / step).astype(np.intp)
        stop = (ends / step).astype(np.intp)
    else:
        parts = [t, np.arange(0.0, n * step + 1, HOUR), starts, ends]
        t = np.unique(np.concatenate(parts))
        mid = 0.5 * (t[:-1] + t[1:])
        demand_index = np.minimum(np.floor(mid / step).astype(np.intp), n - 1)
        hour = np.floor(mid / HOUR).astype(np.intp)
        first = np.searchsorted(mid, starts, side="left")
        stop = np.searchsorted(mid, ends, side="left")
    m = len(t) - 1
    if len(starts):
        order = np.argsort(first, kind="stable")
        edges = np.empty(2 * len(order) + 2, dtype=np.intp)
        edges[0], edges[-1] = 0, m
        edges[1:-1:2], edges[2:-1:2] = first[order], stop[order]
        labels = np.full(2 * len(order) + 1, -1, dtype=np.intp)
        labels[1::2] = order
        closure_index = np.repeat(labels, np.diff(edges))
    else:
        closure_index = np.full(m, -1, dtype=np.intp)
    return t, hour, closure_index, demand_index


def queue_state_discharge(run: QueueRun, discharge: np.ndarray) -> np.ndarray:
    """The discharge flow that sets the queued state's density on each interval.

    Within one busy period (from the instant a queue forms until it clears) the
    queued vehicles keep the density of the most restrictive discharge since
    the queue formed: when the closure ends and capacity returns, vehicles
    already queued do not spread out at once, so the single-state length must
    not jump. This is the conservative reading of the single-state relation;
    the true extent after a change of state follows the waves.
    """
    busy = run.busy > 0
    if not busy.any():
        return discharge
    new = busy & (run.queue[:-1] == 0)
    group = np.cumsum(new | ~busy)
    offset = float(discharge.max()) + 1.0
    shifted = np.where(busy, discharge, 0.0) - offset * group
    running = np.minimum.accumulate(shifted) + offset * group
    return np.where(busy, running, discharge)


def _no_queue(t: np.ndarray) -> newell.NewellQueue:
    """Newell's result when no queue ever forms: the back of the queue stays at zero."""
    n_hours = max(round((t[-1] - t[0]) / HOUR), 1)
    return newell.NewellQueue(
        times=t[[0, -1]],
        distance=np.zeros(2),
        at_boundaries=np.zeros(len(t)),
        hour_bounds=t[0] + np.arange(n_hours + 1) * HOUR,
        hourly_max_m=np.zeros(n_hours),
        extent=newell.Extent(0.0, None, None),
        dissolved_s=np.empty(0),
        capacity_limited=False,
    )


class IntervalArrays(NamedTuple):
    """The plan's time grid and what holds on each interval, before any demand is applied.

    ``t`` boundaries (s); per interval: ``closure`` (index into ``plan.closures``,
    -1 when open), ``demand_index`` (into ``plan.demand.flows_veh_h``),
    pre-breakdown capacity and discharge rate (veh/h; equal without the capacity
    drop), ``extra_s`` (extra seconds per vehicle through the work zone) and
    ``lanes_open``. Shared by :func:`evaluate` and the scenario engine
    (:mod:`wzq.engine.risk`), which runs many demands on the same grid.
    """

    model: SiteModel
    t: np.ndarray
    closure: np.ndarray
    demand_index: np.ndarray
    prebreakdown_veh_h: np.ndarray
    discharge_veh_h: np.ndarray
    extra_s: np.ndarray
    lanes_open: np.ndarray


def interval_arrays(plan: Plan) -> IntervalArrays:
    """Grid, capacity, discharge rate and work-zone travel time per interval of a plan."""
    site = plan.site
    model = site_model(site, plan.options.diagram)
    starts, ends, conf_of, examples = _closure_table(plan)
    t, hour, ci, di = _grid(plan, starts, ends)
    clock_night = night_by_clock(plan.demand.start.hour, hour)
    # one capacity computation per distinct configuration and night flag, not
    # per interval: key = 2 x (configuration + 1) + night, looked up in a table
    conf = np.append(conf_of, -1)[ci] if len(conf_of) else np.full(len(ci), -1)
    keys = clock_night.view(np.int8) + 2 * (conf + 1)
    present = np.flatnonzero(np.bincount(keys, minlength=2 * len(examples) + 2))
    n_u = len(present)
    values = np.zeros((3, n_u))  # pre-breakdown, discharge, extra seconds per vehicle
    lanes_u = np.full(n_u, site.lanes, dtype=np.int64)
    for j, key in enumerate(present.tolist()):
        idx = key // 2 - 1
        closure = examples[idx] if idx >= 0 else None
        night = bool(key % 2) if closure is None or closure.night is None else closure.night
        config = None if closure is None else _config(closure)
        values[:, j] = configuration(site, plan.options.diagram, config, night)
        if closure is not None:
            lanes_u[j] = site.lanes - closure.lanes_closed
    table = np.zeros(2 * len(examples) + 2, dtype=np.intp)
    table[present] = np.arange(n_u)
    inv = table[keys]
    pre, qdr, extra = values[0].take(inv), values[1].take(inv), values[2].take(inv)
    lanes_open = lanes_u.take(inv)
    if not plan.options.capacity_drop:
        qdr = pre.copy()
    return IntervalArrays(model, t, ci, di, pre, qdr, extra, lanes_open)


def evaluate(plan: Plan) -> Run:
    """The engine's core: capacity, queue, lengths and delays as arrays."""
    site = plan.site
    model, t, ci, di, pre, qdr, extra, lanes_open = interval_arrays(plan)
    dur = np.diff(t)
    ramps = approach.ramps_on_grid(plan, di)
    # the flow arriving at the closure: the mainline plus the entrance ramps minus the exits
    lam = plan.demand.flows_veh_h[di] if ramps is None else ramps.section[0]
    run = solve(dur, lam / HOUR, pre / HOUR, qdr / HOUR, t=t)
    nq = None
    newell_ok = plan.options.queue_length_method == "newell" and isinstance(
        model.diagram, PIECEWISE_LINEAR
    )
    if ramps is not None:
        return _evaluate_with_ramps(
            plan, model, ramps, newell_ok, run, ci, lanes_open, lam, pre, qdr, extra
        )
    if newell_ok:
        nq = newell.from_queue(run, model.diagram, site.lanes) if run.busy.any() else _no_queue(t)
        length_start, length_end = nq.at_boundaries[:-1], nq.at_boundaries[1:]
    else:
        stored = stored_density(model.diagram, lam, queue_state_discharge(run, qdr), site.lanes)
        length_start = run.queue[:-1] / stored
        length_end = run.queue[1:] / stored
    wz_delay = run.departures * extra
    return Run(
        plan, model, t, ci, lanes_open, lam, pre, qdr, run, length_start, length_end, wz_delay, nq
    )


def _evaluate_with_ramps(
    plan: Plan,
    model: SiteModel,
    ramps: approach.Ramps,
    newell_ok: bool,
    run: QueueRun,
    ci: np.ndarray,
    lanes_open: np.ndarray,
    lam: np.ndarray,
    pre: np.ndarray,
    qdr: np.ndarray,
    extra: np.ndarray,
) -> Run:
    """:func:`evaluate`'s last steps on an approach with ramps (:mod:`wzq.engine.approach`).

    Newell's method by sections, or the single-state relation by sections. When
    a ramp holds the closure's traffic back (first in, first out at a diverge)
    the queue of the closure's traffic is found on a finer grid; the per-interval
    arrays then follow it.
    """
    lanes = plan.site.lanes
    if newell_ok:
        sec = approach.by_sections(run, ramps, model.diagram, lanes, pre / HOUR, qdr / HOUR)
        if sec.queue is not run:
            mid = 0.5 * (sec.queue.t[:-1] + sec.queue.t[1:])
            idx = np.clip(np.searchsorted(run.t, mid, side="right") - 1, 0, len(run.t) - 2)
            ci, lanes_open, lam = ci[idx], lanes_open[idx], lam[idx]
            pre, qdr, extra = pre[idx], qdr[idx], extra[idx]
            run = sec.queue
        # (a section over capacity has its own warning: _approach_warnings)
        nq = approach.newell_queue(sec.times, sec.distance, run.t, False)
        length_start, length_end = nq.at_boundaries[:-1], nq.at_boundaries[1:]
    else:
        nq = None
        state = queue_state_discharge(run, qdr)
        length_start, length_end, sec = approach.single_state(
            run, ramps, model.diagram, lanes, state
        )
    wz_delay = run.departures * extra
    return Run(
        plan, model, run.t, ci, lanes_open, lam, pre, qdr, run, length_start, length_end,
        wz_delay, nq, sec,
    )  # fmt: skip


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


@dataclass
class Result:
    """What :func:`analyse` returns: arrays, per-hour table, summary, warnings."""

    run: Run
    warnings: list[str] = field(default_factory=list)

    @property
    def plan(self) -> Plan:
        return self.run.plan

    @cached_property
    def intervals(self) -> pd.DataFrame:
        """One row per interval of the exact solution (for cumulative-curve charts)."""
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
    def hourly(self) -> pd.DataFrame:
        """The tidy per-hour table every writer reuses (units in column names)."""
        return hourly_table(self.run)

    @cached_property
    def summary(self) -> Summary:
        return summarise(self.run, self.hourly)

    @cached_property
    def landmark_results(self) -> tuple[approach.LandmarkResult, ...]:
        """Per landmark of the approach: where the back of the queue stood against it."""
        return landmark_results(self.run, self.hourly)

    @cached_property
    def landmarks(self) -> pd.DataFrame:
        """One row per landmark (nearest the closure first): ``name``, ``kind``,
        ``distance_m``, ``first_reached`` (local clock, ``NaT``: never),
        ``time_beyond_h``, ``max_beyond_m``, ``hours_beyond`` (how many hours
        the back of the queue was beyond it at some instant)."""
        rows = sorted(self.landmark_results, key=lambda r: r.landmark.distance)
        first = [
            None if r.first_reached_s is None else _clock(self.run, r.first_reached_s) for r in rows
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


#: Slack on the limits, absorbing rounding of long sums (m, s, ratio).
LENGTH_TOLERANCE_M = 1e-9
DELAY_TOLERANCE_S = 1e-9
RATIO_TOLERANCE = 1e-12


#: The per-hour pass/fail columns :func:`hour_checks` may add to the table.
CHECK_COLUMNS = ("queue_ok", "delay_ok", "demand_capacity_ok", "landmark_ok")
_QUEUE_OK, _DELAY_OK, _DEMAND_CAPACITY_OK, _LANDMARK_OK = CHECK_COLUMNS


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
) -> tuple[np.ndarray, np.ndarray, list[tuple[str, str, np.ndarray]]]:
    """Average delay (min/veh), demand/capacity and each hour's checks against the limits.

    Longest queue ``<=`` limit; average delay (queue plus work-zone travel delay
    over the hour's arrivals) ``<=`` limit; demand/capacity ``<=`` limit in closure
    hours only; the back of the queue not beyond the landmark ``(name, distance
    m)`` the queue must not pass. The one rule for the per-hour table and the
    closure-window search. Returns ``(average_delay_min, demand_capacity,
    [(column, label, ok), ...])``.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        avg = np.where(
            arrivals > 0, delay_veh_h * 60.0 / np.where(arrivals > 0, arrivals, 1.0), 0.0
        )
        dc = np.where(capacity > 0, arrivals / np.where(capacity > 0, capacity, 1.0), np.nan)
    checks: list[tuple[str, str, np.ndarray]] = []
    if th.max_queue_length is not None:
        ok = lmax <= th.max_queue_length + LENGTH_TOLERANCE_M
        checks.append((_QUEUE_OK, "queue length", ok))
    if th.max_average_delay is not None:
        ok = avg * 60.0 <= th.max_average_delay + DELAY_TOLERANCE_S
        checks.append((_DELAY_OK, "delay", ok))
    if th.max_demand_capacity is not None:
        ok = ~closed | (dc <= th.max_demand_capacity + RATIO_TOLERANCE)
        checks.append((_DEMAND_CAPACITY_OK, "demand/capacity", ok))
    if landmark is not None:
        ok = lmax <= landmark[1] + LENGTH_TOLERANCE_M
        checks.append((_LANDMARK_OK, f"queue passes {landmark[0]}", ok))
    return avg, dc, checks


def _per_hour_identity(values: np.ndarray, _first: None) -> np.ndarray:
    """Per-hour sum, maximum or minimum when each interval is a whole hour."""
    return values


def hourly_table(r: Run) -> pd.DataFrame:
    """Per-hour demand, capacity, queue, length, delay and threshold checks."""
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
    closed = top((r.closure >= 0).view(np.int8), first).astype(bool)
    avg, dc, checks = hour_checks(
        r.plan.thresholds, arrivals, capacity, lmax, delay, closed, landmark_limit(r.plan)
    )
    exits = () if r.sections is None else r.sections.exits
    exit_delay = sum((e.delay_veh_s for e in exits), np.zeros(n_hours)) / HOUR
    max_wait = np.zeros(n_hours)
    if q.busy.any():
        cand, w = waits(q)
        hour_of = np.clip((cand // HOUR).astype(np.int64), 0, n_hours - 1)
        np.maximum.at(max_wait, hour_of, w / 60.0)
    cols: dict[str, object] = {
        "hour_start": pd.date_range(r.plan.demand.start, periods=n_hours, freq="h"),
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
    cols["status"] = np.array(labels, dtype=object)[code]
    return pd.DataFrame(cols)


def summarise(r: Run, hourly: pd.DataFrame) -> Summary:
    """Maximum queue and when, totals, last clearance, failing hours."""
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
        last_clear = _clock(r, float(clears.max()))
    over = np.zeros(len(hourly), dtype=bool)
    for name in CHECK_COLUMNS:
        if name in hourly:
            over |= ~hourly[name].to_numpy(dtype=bool)
    failing = (
        tuple(pd.DatetimeIndex(hourly["hour_start"][over]).to_pydatetime()) if over.any() else ()
    )
    qd = float(q.delay.sum()) / HOUR
    wd = float(r.work_zone_delay.sum()) / HOUR
    xd = 0.0 if r.sections is None else float(sum(e.total_veh_h for e in r.sections.exits))
    return Summary(
        max_queue_length_m=lmax,
        max_queue_length_at=_clock(r, lmax_at) if lmax > 0 and lmax_at is not None else None,
        max_queue_veh=float(q.queue[j]),
        max_queue_veh_at=_clock(r, r.t[j]) if q.queue[j] > 0 else None,
        total_delay_veh_h=qd + wd + xd,
        queue_delay_veh_h=qd,
        work_zone_delay_veh_h=wd,
        vehicles_affected=float((q.arrival_rate * q.busy).sum()),
        max_average_delay_min=float(hourly["average_delay_min"].max()),
        max_queue_wait_min=float(hourly["max_queue_wait_min"].max()),
        last_queue_clears=last_clear,
        queue_at_end_veh=float(q.queue[-1]),
        hours_failing=failing,
        total_cost=float(road_user_costs.plan_delay_cost(r.plan, qd + wd + xd)),
        exit_ramp_delay_veh_h=xd,
    )


def queue_trajectory(r: Run) -> tuple[np.ndarray, np.ndarray]:
    """The back of the queue against time (s, m), piecewise linear: Newell's
    trajectory, or the single-state lengths joined within each interval."""
    if r.back_of_queue is not None:
        return r.back_of_queue.times, r.back_of_queue.distance
    if r.sections is not None:
        return r.sections.times, r.sections.distance
    return approach.trajectory_of_lengths(r.queue, r.length_start, r.length_end)


def landmark_results(r: Run, hourly: pd.DataFrame) -> tuple[approach.LandmarkResult, ...]:
    """:func:`wzq.engine.approach.landmark_results` for a run and its per-hour table."""
    landmarks = r.plan.approach.landmarks
    if not landmarks:
        return ()
    times, dist = queue_trajectory(r)
    lmax = hourly["queue_length_max_m"].to_numpy(dtype=float)
    return approach.landmark_results(landmarks, times, dist, lmax)


def _clock(r: Run, seconds: float) -> dt.datetime:
    return r.plan.demand.start + dt.timedelta(seconds=round(float(seconds), 3))


def _warnings(r: Run) -> list[str]:
    out: list[str] = []
    site = r.plan.site
    over = r.demand_veh_h > r.prebreakdown_veh_h
    if over.any():
        # longest stretch of consecutive overloaded intervals, in seconds
        edges = np.flatnonzero(np.diff(over.view(np.int8), prepend=0, append=0))
        longest = float((r.t[edges[1::2]] - r.t[edges[::2]]).max())
        if longest >= LONG_OVERLOAD_HOURS * HOUR:
            out.append(
                f"demand is above capacity for {longest / HOUR:.1f} hours in a row; "
                "deterministic queueing is least reliable for such long overloads"
            )
    long_queue = _long_queue_warning(r)
    if long_queue:
        out.append(long_queue)
    if r.queue.queue[-1] > 0:
        out.append(
            f"a queue of {r.queue.queue[-1]:,.0f} vehicles still stands at the end of the "
            "demand data; extend the demand to see it clear"
        )
    if r.back_of_queue is not None and r.back_of_queue.capacity_limited:
        out.append(
            "arrivals or discharge exceeded the approach road's capacity; the traffic it "
            "could not admit is held beyond the upstream end and not counted in the length"
        )
    for i, c in enumerate(r.plan.closures if site.terrain != "level" else ()):
        if site.lanes - c.lanes_closed == 1:
            out.append(
                f"closure {i + 1} leaves one lane open on {site.terrain} terrain; the HCM "
                "work-zone model advises caution for one open lane on upgrades"
            )
    return out


def _longest_queue(r: Run) -> tuple[float, float]:
    """The longest queue (m) and when (s from the start of the demand)."""
    if r.back_of_queue is not None:
        ext = r.back_of_queue.extent
        return ext.max_m, ext.at_s if ext.at_s is not None else 0.0
    lengths = np.concatenate((r.length_start, r.length_end))
    i = int(np.argmax(lengths))
    return float(lengths[i]), float(np.concatenate((r.t[:-1], r.t[1:]))[i])


def _long_queue_warning(r: Run) -> str | None:
    """A warning when the queue reaches beyond the advance warning signs
    (:data:`ADVANCE_WARNING_REACH_M`), whatever the agency's own limit. A plan whose
    approach names the end of its advance warning signing is checked against that
    site's own distance instead (:func:`_approach_warnings`), so only one is given."""
    if any(lm.kind == "warning-signs-end" for lm in r.plan.approach.landmarks):
        return None
    longest, at = _longest_queue(r)
    if longest <= ADVANCE_WARNING_REACH_M:
        return None
    name, per = LONG_LENGTH[r.plan.site.unit_system]
    return (
        f"the queue reaches {longest / per:,.1f} {name} upstream of the closure "
        f"({_clock(r, at):%a %Y-%m-%d %H:%M}), beyond the advance warning signs of a freeway "
        f"lane closure (about {ADVANCE_WARNING_REACH_M / per:,.1f} {name}, MUTCD 2009 "
        "Table 6H-3): drivers would meet its back unwarned, so extend the warning signs or "
        "add queue warning; many drivers divert from a queue that long, which this "
        "deterministic model does not represent"
    )


def input_warnings(plan: Plan) -> list[str]:
    """What the plan's reader noticed about the inputs (``plan.input_warnings``) and the
    plausibility checks of :mod:`wzq.engine.plausibility`, each naming where the value was typed."""
    model = site_model(plan.site, plan.options.diagram)
    open_cap = model.base_veh_h_ln * plan.site.lanes
    return [*plan.input_warnings, *plausibility.warnings(plan, open_cap), *_long_plan(plan)]


def _long_plan(plan: Plan) -> list[str]:
    """Said in advance: the closure windows the plan asks for are left out of a long plan."""
    from wzq.engine.windows import too_long, too_long_text  # the search imports this module

    if not plan.options.closure_windows or not too_long(plan.demand):
        return []
    key = "options.closure_windows"
    where = plan.where(key)
    option = f"'Closure windows sheet' ({where}) to no" if where != key else f"{key} to false"
    n = len(plan.demand.flows_veh_h)
    return [f"{where}: {too_long_text(n, plan.demand.interval_s, option)}"]


def _approach_warnings(result: Result) -> list[str]:
    """Warnings about the approach: ramps the model cannot follow, and a queue
    beyond the end of the advance warning signing."""
    out: list[str] = []
    r = result.run
    sec = r.sections
    system = r.plan.site.unit_system
    unit, per = units.LONG_LENGTH[system]
    if sec is not None:
        for name in sec.limited_by:
            out.append(
                f"exit ramp '{name}': the traffic leaving there is held in the queue with "
                "everyone else (first in, first out), and the flow the queue passes there "
                "would need more than the road's capacity upstream of the ramp; that stretch "
                "discharges at capacity and holds the traffic for the closure back (counted "
                "in its delay)"
            )
        for name in sec.ramp_over:
            out.append(
                f"entrance ramp '{name}': its flow is more than the queue lets through there, "
                "so traffic would queue on the ramp too; the model lets the ramp's traffic in "
                "and does not show that queue, so the queue upstream of the ramp is not reliable"
            )
        if sec.capacity_limited:
            out.append(
                "a section of the approach was given more traffic than the road's capacity "
                "(mainline and entrance ramps); the excess is held back and not shown as queue"
            )
        if not sec.settled:
            out.append(
                "the ramps' effect on the closure's arrivals did not settle; the queue near "
                "the closure and the delay may be off; please report this plan"
            )
    limit = r.plan.thresholds.queue_must_not_pass
    for lr in result.landmark_results:
        lm = lr.landmark
        if lm.kind != "warning-signs-end" or lm.name == limit or lr.first_reached_s is None:
            continue
        if lr.max_beyond_m <= 0:
            continue
        out.append(
            f"the queue passes the end of the advance warning signing ('{lm.name}', "
            f"{lm.distance / per:,.2f} {unit} upstream) from "
            f"{_clock(r, lr.first_reached_s):%Y-%m-%d %H:%M}, for {lr.time_beyond_s / HOUR:.1f} "
            f"h in all and up to {lr.max_beyond_m / per:,.2f} {unit} beyond it: drivers meet "
            "it without warning; extend the signing or change the closure (common practice, "
            "no source)"
        )
    return out


def analyse(plan: Plan) -> Result:
    """Analyse a plan: capacity, exact queue, queue length and delay, hour by hour.

    The result's warnings start with :func:`input_warnings`, then what the run
    itself shows (long overloads, a queue left standing at the end ...).
    """
    run = evaluate(plan)
    result = Result(run, [*input_warnings(plan), *_warnings(run)])
    if run.sections is not None or plan.approach.landmarks:
        result.warnings += _approach_warnings(result)
    return result
