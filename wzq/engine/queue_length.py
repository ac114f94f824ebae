"""The queue-length method, chosen in one place for the analysis and the window search.

Newell's simplified kinematic-wave method (Newell 1993) needs the linear
congested branch of the triangular (or trapezoidal) diagram; otherwise, or
when the plan asks for it, the single-state shockwave relation is used
(:func:`uses_newell`). :func:`length_method` gives the window search's
per-interval function for the same choice.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from wzq.engine.plan import Options
from wzq.engine.results import Run
from wzq.engine.site import SiteModel
from wzq.models import newell
from wzq.models.flow import PIECEWISE_LINEAR, FundamentalDiagram
from wzq.models.queueing import QueueRun, _lindley
from wzq.models.shockwave import stored_density
from wzq.units import HOUR

__all__ = [
    "LENGTH_METHODS",
    "LengthFn",
    "held_back",
    "held_beyond",
    "length_method",
    "newell_lengths",
    "newell_of_run",
    "no_queue",
    "queue_state_discharge",
    "shockwave_lengths",
    "uses_newell",
]


def uses_newell(options: Options, diagram: FundamentalDiagram) -> bool:
    """Whether queue lengths follow Newell's method: the plan asks for it and the
    diagram has a linear congested branch (:data:`wzq.models.flow.PIECEWISE_LINEAR`)."""
    return options.queue_length_method == "newell" and isinstance(diagram, PIECEWISE_LINEAR)


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


def no_queue(t: np.ndarray) -> newell.NewellQueue:
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


#: (model, lanes in normal operation, demand veh/h, discharge veh/h, queue run)
#: -> the longest queue (m) within each interval of the run; never shorter than the
#: queued vehicles packed at the diagram's jam density over every lane.
LengthFn = Callable[[SiteModel, int, np.ndarray, np.ndarray, QueueRun], np.ndarray]


def shockwave_lengths(
    model: SiteModel,
    lanes: int,
    demand_veh_h: np.ndarray,
    discharge_veh_h: np.ndarray,
    run: QueueRun,
) -> np.ndarray:
    """Longest queue in each interval by the single-state shockwave relation.

    ``N / (n (k_Q - k_A))`` with the queued state at the most restrictive
    discharge since the queue formed (:func:`wzq.engine.queue_length.queue_state_discharge`;
    Lighthill & Whitham 1955 for the back-of-queue shock, single-state relation
    of the traffic-engineering texts), as :func:`wzq.engine.evaluate.evaluate`; the
    queue is linear within an interval, so its longest is at an end.
    """
    stored = stored_density(
        model.diagram, demand_veh_h, queue_state_discharge(run, discharge_veh_h), lanes
    )
    return np.maximum(run.queue[:-1], run.queue[1:]) / stored


def newell_lengths(
    model: SiteModel,
    lanes: int,
    demand_veh_h: np.ndarray,
    discharge_veh_h: np.ndarray,
    run: QueueRun,
) -> np.ndarray:
    """Longest queue in each interval by Newell's simplified kinematic-wave method.

    The exact back-of-queue trajectory of :mod:`wzq.models.newell` (Newell 1993, part
    I, on the triangular diagram), its maximum taken over each interval, peaks
    inside an interval included, as :func:`wzq.engine.evaluate.evaluate` does per hour.
    """
    fd = model.diagram
    t, a, d = newell.curves(run)
    times, dist = newell.trajectory(
        t,
        a,
        d,
        lanes=lanes,
        free_speed=fd.free_speed,
        wave_speed=fd.backward_wave_speed,
        jam_density=fd.jam_density,
    )
    return newell.hourly_max(times, dist, run.t)


#: Queue-length method of :class:`wzq.engine.plan.Options` -> the function the search calls.
#: A new method is added here in one line.
LENGTH_METHODS: dict[str, LengthFn] = {"shockwave": shockwave_lengths, "newell": newell_lengths}


def length_method(options: Options, model: SiteModel) -> LengthFn:
    """The plan's queue-length function; Newell's needs the triangular diagram, as in
    :func:`wzq.engine.evaluate.evaluate` (otherwise the single-state relation)."""
    if not uses_newell(options, model.diagram):
        return shockwave_lengths
    return LENGTH_METHODS[options.queue_length_method]


def newell_of_run(run: Run, *, after_end: newell.AfterEnd = "rate") -> newell.NewellQueue:
    """:func:`wzq.models.newell.from_queue` for an engine run
    (:func:`wzq.engine.evaluate.evaluate`)."""
    return newell.from_queue(run.queue, run.model.diagram, run.plan.site.lanes, after_end=after_end)


def held_beyond(
    demand_veh_h: np.ndarray, dur: np.ndarray, lanes: int, diagram: FundamentalDiagram
) -> np.ndarray:
    """Vehicles waiting beyond the approach's upstream end, most in each interval.

    The approach admits at most its own capacity ``n c`` (Newell's variational
    form, Daganzo 2005: the arrival curve is replaced by its running envelope),
    so demand above it queues at the upstream end as a point queue served at
    ``n c``, whatever happens at the closure. Newell's method shows no length for
    those vehicles (:attr:`wzq.models.newell.NewellQueue.capacity_limited`): an
    hour holding any fails the length checks (:func:`wzq.engine.hourly.hour_checks`).
    ``demand_veh_h`` per interval (rows for scenarios), ``dur`` in s.
    """
    top = lanes * float(diagram.capacity) * HOUR
    q = _lindley((demand_veh_h - top) / HOUR * dur, 0.0)
    return np.maximum(q[..., :-1], q[..., 1:])


def held_back(
    section_veh_h: np.ndarray, dur: np.ndarray, lanes: int, diagram: FundamentalDiagram
) -> np.ndarray:
    """Vehicles held back, most in each interval: :func:`held_beyond` of each section's
    flow (one row per section of an approach with ramps, mainline and entrance ramps;
    one row, the demand, without), the most over the sections. The queue's length
    shown leaves them out (:func:`wzq.engine.hourly.length_unknown`)."""
    return held_beyond(section_veh_h, dur, lanes, diagram).max(axis=0)
