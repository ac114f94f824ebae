"""``analyse(plan) -> Result``: the engine's one entry point.

Steps, all pure and vectorised:

1. a time grid: every demand interval boundary, every hour, every closure
   start and end (so demand, capacity and the day/night term are constant on
   each interval) (:mod:`wzq.engine.grid`);
2. capacity per interval from the site and the closure in force
   (:mod:`wzq.engine.site`, :mod:`wzq.models.capacity`), a user override winning
   over every model;
3. the exact deterministic queue with the capacity drop (:mod:`wzq.models.queueing`);
4. queue length by Newell's method or the single-state shockwave relation
   (:mod:`wzq.engine.queue_length`) on the chosen fundamental diagram
   (:mod:`wzq.models.flow`);
5. delay: queueing delay (area between the cumulative curves) plus the extra
   travel time through the work zone at its lower free-flow speed;
6. per-hour table, checks against the thresholds, summary (:mod:`wzq.engine.hourly`)
   and warnings (:mod:`wzq.engine.warnings`).
"""

from __future__ import annotations

import numpy as np

from wzq.engine import approach
from wzq.engine.grid import interval_arrays
from wzq.engine.hourly import hour_columns, summarise
from wzq.engine.plan import Plan
from wzq.engine.queue_length import held_back, no_queue, queue_state_discharge, uses_newell
from wzq.engine.results import Result, Run, landmark_results
from wzq.engine.site import SiteModel
from wzq.engine.warnings import approach_warnings, input_warnings, run_warnings
from wzq.models import newell
from wzq.models.queueing import QueueRun, solve
from wzq.models.shockwave import stored_density
from wzq.units import HOUR

__all__ = ["analyse", "evaluate"]


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
    newell_ok = uses_newell(plan.options, model.diagram)
    if ramps is not None:
        return _evaluate_with_ramps(
            plan, model, ramps, newell_ok, run, ci, lanes_open, lam, pre, qdr, extra
        )
    if newell_ok:
        nq = newell.from_queue(run, model.diagram, site.lanes) if run.busy.any() else no_queue(t)
        length_start, length_end = nq.at_boundaries[:-1], nq.at_boundaries[1:]
    else:
        stored = stored_density(model.diagram, lam, queue_state_discharge(run, qdr), site.lanes)
        length_start = run.queue[:-1] / stored
        length_end = run.queue[1:] / stored
    wz_delay = run.departures * extra
    held = held_back(lam[None, :], dur, site.lanes, model.diagram)
    return Run(
        plan, model, t, ci, lanes_open, lam, pre, qdr, run, length_start, length_end, wz_delay,
        held, nq,
    )  # fmt: skip


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
    section = ramps.section  # the flow of each section, for the traffic held back
    if newell_ok:
        sec = approach.by_sections(run, ramps, model.diagram, lanes, pre / HOUR, qdr / HOUR)
        if sec.queue is not run:
            mid = 0.5 * (sec.queue.t[:-1] + sec.queue.t[1:])
            idx = np.clip(np.searchsorted(run.t, mid, side="right") - 1, 0, len(run.t) - 2)
            ci, lanes_open, lam = ci[idx], lanes_open[idx], lam[idx]
            pre, qdr, extra, section = pre[idx], qdr[idx], extra[idx], section[:, idx]
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
    held = held_back(section, np.diff(run.t), lanes, model.diagram)
    return Run(
        plan, model, run.t, ci, lanes_open, lam, pre, qdr, run, length_start, length_end,
        wz_delay, held, nq, sec,
    )  # fmt: skip


def analyse(plan: Plan) -> Result:
    """Analyse a plan: capacity, exact queue, queue length and delay, hour by hour.

    The result's warnings start with :func:`~wzq.engine.warnings.input_warnings`,
    then what the run itself shows (long overloads, a queue left standing at the
    end ...), then the approach's.
    """
    run = evaluate(plan)
    hours = hour_columns(run)
    warnings = [*input_warnings(plan), *run_warnings(run)]
    if run.sections is not None or plan.approach.landmarks:
        warnings += approach_warnings(run, landmark_results(run, hours))
    return Result(run, hours, summarise(run, hours), tuple(warnings))
