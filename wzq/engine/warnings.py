"""What a run and its plan show that an engineer should know: long overloads, a queue
beyond the advance warning signs or left standing at the end, what the reader noticed
and the plausibility checks, and the approach's warnings."""

from __future__ import annotations

import numpy as np

from wzq.engine import plausibility
from wzq.engine.approach import LandmarkResult
from wzq.engine.hourly import length_unknown
from wzq.engine.plan import Plan
from wzq.engine.results import Run, clock
from wzq.engine.site import site_model
from wzq.engine.windows import too_long, too_long_text
from wzq.units import FOOT, HOUR, LONG_LENGTH

__all__ = [
    "ADVANCE_WARNING_REACH_M",
    "LONG_OVERLOAD_HOURS",
    "approach_warnings",
    "input_warnings",
    "run_warnings",
]

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


def run_warnings(r: Run) -> list[str]:
    """What the run shows: long overloads, a long queue, a queue left at the end, traffic
    the approach could not admit, one open lane on rolling terrain."""
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
            "demand data: the delay after that instant is not counted, and the longest wait "
            "shown is only of the vehicles served by then; extend the demand to see it clear"
        )
    held = _held_beyond_warning(r)
    if held:
        out.append(held)
    elif r.back_of_queue is not None and r.back_of_queue.capacity_limited:
        out.append(HELD_TEXT)
    for i, c in enumerate(r.plan.closures if site.terrain != "level" else ()):
        if site.lanes - c.lanes_closed == 1:
            out.append(
                f"closure {i + 1} leaves one lane open on {site.terrain} terrain; the HCM "
                "work-zone model advises caution for one open lane on upgrades"
            )
    return out


#: Traffic a section of an approach with ramps could not carry (:mod:`wzq.engine.approach`).
SECTION_HELD_TEXT = (
    "a section of the approach was given more traffic than the road's capacity "
    "(mainline and entrance ramps); the excess is held back and not shown as queue"
)
#: Traffic the approach could not admit (Newell's method, :mod:`wzq.models.newell`).
HELD_TEXT = (
    "arrivals or discharge exceeded the approach road's capacity; the traffic it "
    "could not admit is held beyond the upstream end and not counted in the length"
)


def _held_beyond_warning(r: Run) -> str | None:
    """Demand the approach could not admit, with the most vehicles held back and from
    when (:attr:`wzq.engine.results.Run.held_veh`), and that those hours fail a length
    limit; ``None`` when none is held."""
    held = r.held_veh
    over = length_unknown(held)
    if not over.any():
        return None
    first = int(np.argmax(over))
    what = HELD_TEXT if r.sections is None else SECTION_HELD_TEXT
    return (
        f"{what}: from {clock(r, float(r.t[first])):%a %Y-%m-%d %H:%M} up to "
        f"{held.max():,.0f} vehicles wait there, their queue's length is unknown and the "
        "hours holding them fail a queue-length limit (the demand is more than the road "
        "itself carries: check the count)"
    )


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
    site's own distance instead (:func:`approach_warnings`), so only one is given."""
    if any(lm.kind == "warning-signs-end" for lm in r.plan.approach.landmarks):
        return None
    longest, at = _longest_queue(r)
    if longest <= ADVANCE_WARNING_REACH_M:
        return None
    name, per = LONG_LENGTH[r.plan.site.unit_system]
    return (
        f"the queue reaches {longest / per:,.1f} {name} upstream of the closure "
        f"({clock(r, at):%a %Y-%m-%d %H:%M}), beyond the advance warning signs of a freeway "
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
    if not plan.options.closure_windows or not too_long(plan.demand):
        return []
    key = "options.closure_windows"
    where = plan.where(key)
    option = f"'Closure windows sheet' ({where}) to no" if where != key else f"{key} to false"
    n = len(plan.demand.flows_veh_h)
    return [f"{where}: {too_long_text(n, plan.demand.interval_s, option)}"]


def approach_warnings(r: Run, landmark_results: tuple[LandmarkResult, ...]) -> list[str]:
    """Warnings about the approach: ramps the model cannot follow, and a queue
    beyond the end of the advance warning signing."""
    out: list[str] = []
    sec = r.sections
    system = r.plan.site.unit_system
    unit, per = LONG_LENGTH[system]
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
        if sec.capacity_limited and _held_beyond_warning(r) is None:
            out.append(SECTION_HELD_TEXT)  # under half a vehicle held: said without figures
        if not sec.settled:
            out.append(
                "the ramps' effect on the closure's arrivals did not settle; the queue near "
                "the closure and the delay may be off; please report this plan"
            )
    limit = r.plan.thresholds.queue_must_not_pass
    for lr in landmark_results:
        lm = lr.landmark
        if lm.kind != "warning-signs-end" or lm.name == limit or lr.first_reached_s is None:
            continue
        if lr.max_beyond_m <= 0:
            continue
        out.append(
            f"the queue passes the end of the advance warning signing ('{lm.name}', "
            f"{lm.distance / per:,.2f} {unit} upstream) from "
            f"{clock(r, lr.first_reached_s):%Y-%m-%d %H:%M}, for {lr.time_beyond_s / HOUR:.1f} "
            f"h in all and up to {lr.max_beyond_m / per:,.2f} {unit} beyond it: drivers meet "
            "it without warning; extend the signing or change the closure (common practice, "
            "no source)"
        )
    return out
