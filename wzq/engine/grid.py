"""The time grid of a plan: every demand interval boundary, every hour, every closure
start and end, so that demand, capacity and the day/night term are constant on each
interval; and what holds on each interval before any demand is applied."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from wzq.engine.plan import NIGHT_END_HOUR, NIGHT_START_HOUR, Closure, Plan
from wzq.engine.site import SiteModel, config_of, configuration, site_model
from wzq.units import HOUR

__all__ = ["IntervalArrays", "interval_arrays", "night_by_clock"]


def night_by_clock(start_hour: int, hour: np.ndarray) -> np.ndarray:
    """Night flag of each interval (:func:`wzq.engine.plan.is_night`) from its hour index.

    ``hour`` counts whole hours from the start of the demand, which starts on
    the hour ``start_hour``; one day's pattern is repeated over the run.
    """
    clock = (start_hour + hour) % 24
    return (clock >= NIGHT_START_HOUR) | (clock < NIGHT_END_HOUR)


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
        np.array(starts),  # float64, empty too
        np.array(ends),
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
    t = np.arange(n + 1) * step
    aligned = step == HOUR and bool(
        np.all(np.mod(starts, step) == 0) and np.all(np.mod(ends, step) == 0)
    )
    if aligned:  # hourly demand, closures on the hour: the grid is the hours
        demand_index = hour = np.arange(n)
        first = (starts / step).astype(np.intp)
        stop = (ends / step).astype(np.intp)
    else:
        # the data interval divides an hour (plan check), so every hour is a boundary of t
        t = np.unique(np.concatenate([t, starts, ends]))
        mid = 0.5 * (t[:-1] + t[1:])
        # closures lie within the demand (plan check): every mid-point is before n * step
        demand_index = np.floor(mid / step).astype(np.intp)
        hour = np.floor(mid / HOUR)  # whole hours (as floats: only the clock hour is taken)
        first = np.searchsorted(mid, starts)
        stop = np.searchsorted(mid, ends)
    m = len(t) - 1
    if len(starts):
        order = np.argsort(first)  # closures never share a first interval
        inner = np.column_stack((first[order], stop[order])).ravel()  # start, stop, ...
        edges = np.concatenate(([0], inner, [m]))
        labels = np.full(2 * len(order) + 1, -1)
        labels[1::2] = order
        closure_index = np.repeat(labels, np.diff(edges))
    else:
        closure_index = np.full(m, -1)
    return t, hour, closure_index, demand_index


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
    # per interval: key = 2 x (configuration + 1) + night, found among the distinct keys
    conf = np.append(conf_of, -1)[ci]  # -1 (open road) stays -1
    keys = clock_night.view(np.int8) + 2 * (conf + 1)
    present, inv = np.unique(keys, return_inverse=True)  # sorted keys; each key's position
    n_u = len(present)
    values = np.zeros((3, n_u))  # pre-breakdown, discharge, extra seconds per vehicle
    lanes_u = np.full(n_u, site.lanes)
    for j, key in enumerate(present.tolist()):
        idx = key // 2 - 1
        closure = examples[idx] if idx >= 0 else None
        night = bool(key % 2) if closure is None or closure.night is None else closure.night
        config = None if closure is None else config_of(closure)
        values[:, j] = configuration(site, plan.options.diagram, config, night)
        if closure is not None:
            lanes_u[j] = site.lanes - closure.lanes_closed
    pre, qdr, extra = values[0].take(inv), values[1].take(inv), values[2].take(inv)
    lanes_open = lanes_u.take(inv)
    if not plan.options.capacity_drop:
        qdr = pre.copy()
    return IntervalArrays(model, t, ci, di, pre, qdr, extra, lanes_open)
