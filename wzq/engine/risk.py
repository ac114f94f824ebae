"""The risk of breaking the limits: the plan run on many demand and capacity scenarios.

The published work-zone method is deterministic: one demand, one capacity, one
answer per hour. Demand at a site varies from week to week and work-zone
capacity from closure to closure, so this module runs the engine on many
*scenarios* -- each a complete demand series on the plan's grid (e.g. every
matching historical week of the site's counts, :mod:`wzq.engine.design_demand`),
optionally with the capacity of each closure drawn around the model's value --
and reports, hour by hour, the share of scenarios in which each limit is broken
and percentiles of the longest queue and the delay.

Every scenario is run exactly as :func:`wzq.analyse` runs a plan: the same grid,
capacity, capacity drop, queue carried over from hour to hour, queue length by
the plan's method and the per-hour checks of :func:`wzq.engine.hourly.hour_checks`;
the tests check the results against :func:`wzq.analyse` scenario by scenario.
What is shared is computed once (:func:`wzq.engine.grid.interval_arrays`), and the
scenarios are solved together as rows of arrays:

* the exact queue by Lindley's recursion along each row (the closed form of
  :mod:`wzq.models.queueing`), with the capacity-drop hysteresis settled by the same
  fixed point, for all rows at once;
* the queue length by the single-state relation elementwise, or by Newell's
  method (:mod:`wzq.models.newell`) on the busy periods of many scenarios joined end to
  end in one run: a scenario that starts and ends with no queue, with every
  flow below the approach's capacity, leaves nothing behind that a later one
  could feel (the back of the queue reaches the bottleneck when the point queue
  clears, and Newell's construction maps every busy period onto itself), so
  joined scenarios give each its own trajectory. Scenarios that end with a queue
  standing, or with flows at the approach's capacity, are run one by one.

Estimates. With ``S`` equally likely scenarios the probability that a limit is
broken in an hour is estimated by the share of scenarios that break it,
``k / S``. Its interval is the Clopper-Pearson ("exact") binomial interval
(Clopper & Pearson 1934, *Biometrika* 26(4), 404-413; bibliographic details
from memory), from the beta distribution of :mod:`scipy.stats`: lower
``Beta^-1(a/2; k, S-k+1)``, upper ``Beta^-1(1-a/2; k+1, S-k)``, ``a = 1 -
confidence``. It treats the scenarios as independent draws: true of the Monte
Carlo capacity draws, an assumption for historical weeks. Percentiles are
:func:`numpy.percentile` with its default ``linear`` method (Hyndman & Fan
1996, definition 7).

Capacity draws. With ``capacity_cv`` each closure of each scenario gets its own
capacity factor ``1 + cv Z``, ``Z`` standard normal from numpy's PCG64
generator seeded with ``seed``; the pre-breakdown capacity and the queue
discharge rate (or a typed capacity override) of the closure are both
multiplied by it, so the capacity drop keeps its ratio. A factor below
:data:`MIN_CAPACITY_FACTOR` is raised to it (with ``cv`` at most
:data:`MAX_CAPACITY_CV` that is a 1-in-1,000 event). There is no default
``cv``: published field studies report the spread of work-zone capacity for
their own sites only (e.g. breakdown flows of 1,194 to 1,404 veh/h/ln, mean
1,295, over eleven breakdowns at one Missouri work zone: Bham & Khazraee,
*Missouri Work Zone Capacity: Results of Field Data Analysis*, MATC-MST 118,
2011), so the engineer states it. The draws are stratified: every demand
scenario gets the same number of draws.

Pure: no files, no printing.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING

import numpy as np

from wzq.engine.design_demand import DemandHistory, historical_scenarios
from wzq.engine.grid import interval_arrays
from wzq.engine.hourly import hour_checks, length_unknown
from wzq.engine.plan import Plan, PlanError, Problem, RiskOptions
from wzq.engine.queue_length import held_beyond, queue_state_discharge, uses_newell
from wzq.models import newell
from wzq.models.flow import Triangular
from wzq.models.queueing import QueueRun, _lindley
from wzq.models.shockwave import stored_density
from wzq.units import HOUR

if TYPE_CHECKING:
    import pandas as pd

#: Largest coefficient of variation of work-zone capacity accepted.
MAX_CAPACITY_CV = 0.3
#: Smallest capacity factor of a draw (module notes).
MIN_CAPACITY_FACTOR = 0.05
#: Most Monte Carlo samples in one assessment.
MAX_DRAWS = 100_000
#: Most scenarios times demand intervals in one assessment: every scenario is solved
#: at once, in a dozen arrays of that size (about 190 bytes a scenario-interval in all,
#: measured: 100,000 draws of the 72 hourly rows of the Kestrel Ridge example took
#: 1.4 GB), so this keeps an assessment to about 2 GB; 1,000 draws (the default) of 92
#: days of 15-minute rows fit.
MAX_SCENARIO_INTERVALS = 10_000_000
#: Fewer historical periods than this, each drawn many times, earn a note: the intervals
#: then speak for the capacity draws, not for the weeks (common practice, no source).
FEW_PERIODS = 5
#: Percentiles of the longest queue and the delay reported per hour.
PERCENTILES: tuple[int, ...] = (50, 85, 95)
#: Scenarios joined into one run for Newell's method (bounds the size of the
#: cumulative counts, and so their rounding).
JOIN = 64
#: Flows within this share of the approach's capacity send a scenario through
#: Newell's method on its own (a stricter margin than :mod:`wzq.models.newell`'s).
_APPROACH_MARGIN = 1e-6

#: The limits by check column of :func:`wzq.engine.hourly.hour_checks`, in words.
LIMIT_WORDS = {
    "queue_ok": "queue length",
    "delay_ok": "average delay",
    "demand_capacity_ok": "demand/capacity",
}
#: Probability column of each check.
PROBABILITY_COLUMNS = {
    "queue_ok": "p_queue_length",
    "delay_ok": "p_delay",
    "demand_capacity_ok": "p_demand_capacity",
}


def options_problems(options: RiskOptions, where: str = "risk") -> list[Problem]:
    """Every problem in the risk options, located under ``where``."""
    out: list[Problem] = []
    cv = options.capacity_cv
    if cv is not None and not (np.isfinite(cv) and 0 < cv <= MAX_CAPACITY_CV):
        out.append(
            Problem(
                f"{where}.capacity_cv",
                f"give a coefficient of variation above 0 and at most {MAX_CAPACITY_CV} "
                "(e.g. 0.08), or leave it blank for the model's capacity",
            )
        )
    if int(options.draws) != options.draws or not 1 <= options.draws <= MAX_DRAWS:
        out.append(Problem(f"{where}.draws", f"give a whole number of draws, 1 to {MAX_DRAWS:,}"))
    if not 0.5 <= options.confidence < 1:
        out.append(Problem(f"{where}.confidence", "give a confidence level from 0.5 to 0.999"))
    wr = options.window_risk
    if wr is not None and not (np.isfinite(wr) and 0 <= wr < 1):
        out.append(
            Problem(
                f"{where}.window_risk_percent",
                "give the highest accepted chance of breaking a limit, 0 to under 100 %, "
                "or leave it blank",
            )
        )
    return out


# ---------------------------------------------------------------------------------------------
# Scenarios
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Scenarios:
    """Equally likely scenarios of one plan.

    ``flows_veh_h[j]``: the demand of scenario ``j`` on the plan's demand grid;
    ``capacity_factor[j, c]`` (optional): the factor on the capacity of the
    plan's closure ``c`` in scenario ``j``; ``source`` says where they came from;
    ``periods``: how many historical periods of the counts they are drawn on (0: the
    plan's own demand).
    """

    labels: tuple[str, ...]
    flows_veh_h: np.ndarray
    capacity_factor: np.ndarray | None = None
    source: str = ""
    periods: int = 0

    def __post_init__(self) -> None:
        flows = np.atleast_2d(np.asarray(self.flows_veh_h, dtype=float))
        object.__setattr__(self, "flows_veh_h", flows)
        if len(self.labels) != len(flows):
            raise ValueError("one label per scenario")
        if self.capacity_factor is not None:
            f = np.atleast_2d(np.asarray(self.capacity_factor, dtype=float))
            if f.shape[0] != len(flows):
                raise ValueError("one row of capacity factors per scenario")
            object.__setattr__(self, "capacity_factor", f)

    def __len__(self) -> int:
        return len(self.labels)


def capacity_draws(n_scenarios: int, n_closures: int, cv: float, seed: int) -> np.ndarray:
    """Capacity factors ``max(1 + cv Z, MIN_CAPACITY_FACTOR)``, one per scenario and closure."""
    z = np.random.Generator(np.random.PCG64(seed)).standard_normal((n_scenarios, n_closures))
    return np.maximum(1.0 + cv * z, MIN_CAPACITY_FACTOR)


def asks_for_risk(plan: Plan) -> bool:
    """The plan gives a count history or a spread of the work-zone capacity, so the risk
    of breaking its limits is assessed wherever its results are shown."""
    return plan.history is not None or (plan.risk is not None and plan.risk.capacity_cv is not None)


def plan_risk(plan: Plan) -> RiskResult | None:
    """:func:`assess` of a plan that asks for it (:func:`asks_for_risk`), else ``None``."""
    return assess(plan) if asks_for_risk(plan) else None


def plan_scenarios(
    plan: Plan,
    history: DemandHistory | None = None,
    options: RiskOptions | None = None,
    *,
    n_closures: int | None = None,
) -> Scenarios:
    """The scenarios of a plan: its historical periods (or its own demand), times the draws.

    ``n_closures`` (default: the plan's) is the number of closures each scenario
    draws a capacity factor for (the closure-window search draws for its one
    candidate closure).

    Raises:
        PlanError: bad options, a history on another grid, or no matching period.
    """
    history = plan.history if history is None else history
    options = options or plan.risk or RiskOptions()
    problems = options_problems(options)
    if problems:
        raise PlanError(problems)
    d = plan.demand
    if history is not None:
        if history.counts.interval_s != d.interval_s:
            raise PlanError(
                f"the count history has {history.counts.interval_s // 60}-minute counts and "
                f"the demand {d.interval_s // 60}-minute intervals; use the same",
                where="history",
            )
        hs = historical_scenarios(history.counts, d.start, len(d.flows_veh_h), history.rule)
        flows, labels = hs.flows_veh_h, tuple(f"from {s}" for s in hs.labels)
        source = f"{len(labels)} historical periods of {history.file or history.counts.source}"
        periods = len(labels)
    else:
        flows, labels = d.flows_veh_h[None, :], ("the plan's demand",)
        source = "the plan's demand"
        periods = 0
    factors = None
    too_many = _too_many(plan, options, len(labels), len(d.flows_veh_h))
    if too_many:
        raise PlanError([too_many])
    if options.capacity_cv is not None:
        per = max(1, math.ceil(options.draws / len(labels)))
        flows = np.repeat(flows, per, axis=0)
        labels = tuple(f"{lab}, draw {k + 1}" for lab in labels for k in range(per))
        k = len(plan.closures) if n_closures is None else n_closures
        factors = capacity_draws(len(labels), k, options.capacity_cv, options.seed)
        source += (
            f", each with {per} draw{'s' if per != 1 else ''} of the work-zone capacity "
            f"(coefficient of variation {options.capacity_cv:g}, seed {options.seed})"
        )
    return Scenarios(labels, flows, factors, source, periods)


def _too_many(plan: Plan, options: RiskOptions, periods: int, n: int) -> Problem | None:
    """The problem when the scenarios (each period's draws, or the periods) times the
    ``n`` demand intervals pass :data:`MAX_SCENARIO_INTERVALS`, else ``None``."""
    per = max(1, math.ceil(options.draws / periods)) if options.capacity_cv is not None else 1
    size = per * periods * n
    if size <= MAX_SCENARIO_INTERVALS:
        return None
    most = MAX_SCENARIO_INTERVALS // (n * periods) * periods
    held = (
        f"more than the {MAX_SCENARIO_INTERVALS:,} the risk assessment holds in memory (about 2 GB)"
    )
    if options.capacity_cv is None or most < periods:
        where = plan.where("demand.history.window_weeks")
        return Problem(
            where,
            f"{periods:,} historical periods of the counts over the plan's {n:,} demand "
            f"intervals are {size:,} scenario-intervals, {held}; narrow the window around "
            f"the same date ({where}), or shorten the plan",
        )
    where = plan.where("risk.draws")
    return Problem(
        where,
        f"{options.draws:,} draws of the capacity over the plan's {n:,} demand intervals "
        f"are {size:,} scenario-intervals, {held}; give at most {most:,} draws in {where} "
        "(the default "
        # 1.96 sqrt(0.1 x 0.9 / 1,000) = 0.019: the normal approximation of the binomial
        "1,000 puts a chance of 10 % within about 2 % either way)",
    )


# ---------------------------------------------------------------------------------------------
# The engine on many scenarios
# ---------------------------------------------------------------------------------------------


def _queues(dur: np.ndarray, lam: np.ndarray, pre: np.ndarray, mu: np.ndarray) -> np.ndarray:
    """The exact queue at the boundaries of every row (rates per second).

    :func:`wzq.models.queueing.queue_at_boundaries` row by row: Lindley's recursion
    along each row, the hysteresis intervals (``discharge < arrival <=
    prebreakdown``) switched on run by run only where a queue enters them.
    """
    net = (lam - mu) * dur
    hyst = (net > 0) & (lam <= pre)
    if not hyst.any():
        return _lindley(net, 0.0)
    first = hyst.copy()
    first[:, 1:] &= ~hyst[:, :-1]
    run_id = np.cumsum(first.ravel()).reshape(first.shape) - 1
    rows, cols = np.nonzero(first)
    active = np.zeros(len(rows), dtype=bool)
    while True:
        eff = np.where(hyst & ~active[run_id], 0.0, net)
        q = _lindley(eff, 0.0)
        now = q[rows, cols] > 0
        if np.array_equal(now, active):
            return q
        active = now


@dataclass(frozen=True)
class _Rows:
    """The exact queues of all scenarios on the plan's grid (rates per second)."""

    t: np.ndarray
    lam: np.ndarray
    mu: np.ndarray
    q: np.ndarray
    busy: np.ndarray
    delay: np.ndarray
    arrivals: np.ndarray
    departures: np.ndarray
    a_cum: np.ndarray

    def run(self, j: int) -> QueueRun:
        """Scenario ``j`` as the :class:`~wzq.models.queueing.QueueRun` that ``solve`` gives."""
        return QueueRun(
            self.t,
            self.lam[j],
            self.mu[j],
            self.q[j],
            self.busy[j],
            self.delay[j],
            self.arrivals[j],
            self.departures[j],
            self.a_cum[j],
            self.a_cum[j] - self.q[j],
        )

    def joined(self, rows: np.ndarray) -> QueueRun:
        """The scenarios ``rows`` end to end as one run (each starts and ends with no queue)."""
        m = len(self.t) - 1
        span = float(self.t[-1])
        k = len(rows)
        t = np.empty(k * m + 1)
        t[:-1] = (self.t[:-1][None, :] + span * np.arange(k)[:, None]).ravel()
        t[-1] = span * k
        totals = self.a_cum[rows, -1]
        offset = np.concatenate(([0.0], np.cumsum(totals)[:-1]))
        a = np.empty(k * m + 1)
        a[:-1] = (self.a_cum[rows, :-1] + offset[:, None]).ravel()
        a[-1] = offset[-1] + totals[-1]
        q = np.zeros(k * m + 1)
        q[:-1] = self.q[rows, :-1].ravel()
        return QueueRun(
            t,
            self.lam[rows].ravel(),
            self.mu[rows].ravel(),
            q,
            self.busy[rows].ravel(),
            self.delay[rows].ravel(),
            self.arrivals[rows].ravel(),
            self.departures[rows].ravel(),
            a,
            a - q,
        )


def _solve_rows(t: np.ndarray, lam: np.ndarray, pre: np.ndarray, mu: np.ndarray) -> _Rows:
    """:func:`wzq.models.queueing.solve` on every row (rates per second, boundaries ``t``
    from 0)."""
    dur = np.diff(t)
    mu = np.minimum(mu, pre)
    q = _queues(dur, lam, pre, mu)
    qa, qb = q[:, :-1], q[:, 1:]
    # time a queue stands: the whole interval unless it empties, then up to the instant
    clearing = (qa > 0) & (qb == 0)
    gap = np.where(clearing, mu - lam, 1.0)
    busy = np.where(qb > 0, dur, np.where(clearing, np.minimum(qa / gap, dur), 0.0))
    delay = 0.5 * (qa + qb) * busy
    arrivals = lam * dur
    departures = arrivals - np.diff(q, axis=1)
    a_cum = np.zeros_like(q)
    np.cumsum(arrivals, axis=1, out=a_cum[:, 1:])
    return _Rows(t, lam, mu, q, busy, delay, arrivals, departures, a_cum)


def _newell_hourly(rows: _Rows, diagram: Triangular, lanes: int, n_hours: int) -> np.ndarray:
    """Longest back of queue within each hour of each scenario, by Newell's method."""
    s = len(rows.q)
    out = np.zeros((s, n_hours))
    has_queue = (rows.busy > 0).any(axis=1)
    if not has_queue.any():
        return out
    top = lanes * float(diagram.capacity) * (1.0 - _APPROACH_MARGIN)
    touched = (rows.q[:, :-1] > 0) | (rows.q[:, 1:] > 0)
    strict = (rows.lam.max(axis=1) < top) & (np.where(touched, rows.mu, 0.0).max(axis=1) < top)
    together = has_queue & strict & (rows.q[:, -1] == 0)
    for j in np.flatnonzero(has_queue & ~together):
        out[j] = newell.from_queue(rows.run(int(j)), diagram, lanes).hourly_max_m
    joined = np.flatnonzero(together)
    for i in range(0, len(joined), JOIN):
        chunk = joined[i : i + JOIN]
        nq = newell.from_queue(rows.joined(chunk), diagram, lanes)
        out[chunk] = nq.hourly_max_m.reshape(len(chunk), n_hours)
    return out


@dataclass(frozen=True)
class ScenarioRuns:
    """The engine's per-hour results of every scenario, as ``(scenarios, hours)`` arrays.

    The columns are those of :attr:`wzq.Result.hourly` with the same names and
    units; ``checks`` maps each check column present (``queue_ok``,
    ``delay_ok``, ``demand_capacity_ok``) to its pass/fail array.
    """

    plan: Plan
    scenarios: Scenarios
    hour_start: pd.DatetimeIndex
    closure: np.ndarray
    demand_veh_h: np.ndarray
    capacity_veh_h: np.ndarray
    demand_capacity: np.ndarray
    queue_end_veh: np.ndarray
    queue_max_veh: np.ndarray
    queue_length_max_m: np.ndarray
    delay_veh_h: np.ndarray
    average_delay_min: np.ndarray
    checks: dict[str, np.ndarray]
    held_veh: np.ndarray  # most vehicles held beyond the approach (queue_length.held_back)

    COLUMNS = (
        "demand_veh_h",
        "capacity_veh_h",
        "demand_capacity",
        "queue_end_veh",
        "queue_max_veh",
        "queue_length_max_m",
        "delay_veh_h",
        "average_delay_min",
    )

    def __len__(self) -> int:
        return len(self.scenarios)

    @cached_property
    def failing(self) -> np.ndarray:
        """Hours in which a scenario breaks any limit."""
        bad = np.zeros(self.demand_veh_h.shape, dtype=bool)
        for ok in self.checks.values():
            bad |= ~ok
        return bad

    def hourly(self, j: int) -> pd.DataFrame:
        """Scenario ``j`` as a per-hour table (a subset of :attr:`wzq.Result.hourly`)."""
        import pandas as pd  # imported when used: slow to import

        cols: dict[str, object] = {"hour_start": self.hour_start, "closure": self.closure}
        for name in self.COLUMNS:
            cols[name] = getattr(self, name)[j]
        for name, ok in self.checks.items():
            cols[name] = ok[j]
        return pd.DataFrame(cols)


def refuse_approach(plan: Plan) -> None:
    """The scenarios are solved on the closure's own arrivals with a triangular diagram
    or the single-state relation; a plan that needs the approach road's sections
    (:mod:`wzq.engine.approach`) is refused rather than assessed differently from ``analyse``."""
    problems = []
    if plan.approach.ramps:
        problems.append(
            Problem(
                "approach",
                "the risk is not yet assessed for an approach with ramps; assess the plan "
                "without its ramps (landmarks without ramp flows are fine)",
            )
        )
    if plan.thresholds.queue_must_not_pass is not None:
        problems.append(
            Problem(
                "thresholds.queue_must_not_pass",
                "the risk is not yet assessed against a landmark the queue must not pass; "
                "use the queue-length limit for the risk run",
            )
        )
    if plan.site.congested_branch != "derived":
        problems.append(
            Problem(
                "site.congested_branch",
                "the risk is assessed with the congested branch derived from capacity and "
                "jam density only; leave the congested branch at its default for the risk run",
            )
        )
    if problems:
        raise PlanError(problems)


def run_scenarios(plan: Plan, scenarios: Scenarios) -> ScenarioRuns:
    """Every scenario of ``plan`` through the engine, exactly, solved together (module notes).

    Raises:
        PlanError: a scenario's demand is not on the plan's grid or not a flow.
    """
    import pandas as pd  # imported when used: slow to import

    d = plan.demand
    flows = scenarios.flows_veh_h
    if flows.shape[1] != len(d.flows_veh_h):
        raise PlanError(
            f"each scenario needs {len(d.flows_veh_h)} demand intervals, got {flows.shape[1]}",
            where="scenarios",
        )
    if not np.all(np.isfinite(flows)) or np.any(flows < 0):
        raise PlanError("a scenario's demand is missing or negative", where="scenarios")
    refuse_approach(plan)
    ia = interval_arrays(plan)
    site = plan.site
    t = ia.t
    dur = np.diff(t)
    lam_h = flows[:, ia.demand_index]  # veh/h
    pre = np.broadcast_to(ia.prebreakdown_veh_h, lam_h.shape)
    qdr = np.broadcast_to(ia.discharge_veh_h, lam_h.shape)
    closed = ia.closure >= 0
    if scenarios.capacity_factor is not None and closed.any():
        factor = np.ones(lam_h.shape)
        factor[:, closed] = scenarios.capacity_factor[:, ia.closure[closed]]
        pre, qdr = pre * factor, qdr * factor
    rows = _solve_rows(t, lam_h / HOUR, pre / HOUR, qdr / HOUR)
    n_hours = round(t[-1] / HOUR)
    if len(t) == n_hours + 1:  # the grid is the hours
        first = None

        def add(x: np.ndarray) -> np.ndarray:
            return x

        top = low = add
        queue_end = rows.q[:, 1:]
    else:
        bounds = np.arange(n_hours + 1) * HOUR
        first = np.searchsorted(t, bounds[:-1])
        last_b = np.searchsorted(t, bounds[1:])

        def add(x: np.ndarray) -> np.ndarray:
            return np.add.reduceat(x, first, axis=-1)

        def top(x: np.ndarray) -> np.ndarray:
            return np.maximum.reduceat(x, first, axis=-1)

        def low(x: np.ndarray) -> np.ndarray:
            return np.minimum.reduceat(x, first, axis=-1)

        queue_end = rows.q[:, last_b]
    model = ia.model
    if uses_newell(plan.options, model.diagram):
        lmax = _newell_hourly(rows, model.diagram, site.lanes, n_hours)
    else:
        fake = _Flat(rows)
        stored = stored_density(
            model.diagram,
            lam_h,
            queue_state_discharge(fake, qdr.ravel()).reshape(lam_h.shape),
            site.lanes,
        )
        lmax = top(np.maximum(rows.q[:, :-1], rows.q[:, 1:]) / stored)
    arrivals = add(rows.arrivals)
    capacity = add(pre * dur) / HOUR
    delay = add(rows.delay) / HOUR + add(rows.departures * ia.extra_s) / HOUR
    closed_h = top(closed.view(np.int8)).astype(bool)
    held = top(held_beyond(lam_h, dur, site.lanes, model.diagram))  # no ramps here
    avg, dc, checks = hour_checks(
        plan.thresholds,
        arrivals,
        capacity,
        lmax,
        delay,
        closed_h,
        held_veh=held,
        closure_capacity=low(np.where(closed, pre, np.inf)),
    )
    return ScenarioRuns(
        plan,
        scenarios,
        pd.date_range(d.start, periods=n_hours, freq="h"),
        closed_h,
        arrivals,
        capacity,
        dc,
        queue_end,
        top(np.maximum(rows.q[:, :-1], rows.q[:, 1:])),
        lmax,
        delay,
        avg,
        {name: ok for name, _, ok in checks},
        held,
    )


class _Flat:
    """The rows joined as one sequence for :func:`wzq.engine.queue_length.queue_state_discharge`.

    That function groups intervals into busy periods that start where a queue
    forms from nothing; every row starts with no queue, so joined rows keep
    their busy periods apart.
    """

    def __init__(self, rows: _Rows) -> None:
        self.busy = rows.busy.ravel()
        self.queue = np.append(rows.q[:, :-1].ravel(), 0.0)


# ---------------------------------------------------------------------------------------------
# The assessment
# ---------------------------------------------------------------------------------------------


def _order_percentile(x: np.ndarray, percentiles: tuple[int, ...]) -> np.ndarray:
    """Percentiles over axis 0 by Hyndman & Fan's definition 7, written out so that a
    value of +inf is only used where its order statistic is (``x[j]``, and ``x[j + 1]``
    when the position ``h = (n - 1) p`` has a fraction ``g > 0``)."""
    s = np.sort(x, axis=0)
    n = len(s)
    out = []
    for p in percentiles:
        h = (n - 1) * p / 100.0
        j = min(math.floor(h), n - 1)
        g = h - j
        if g == 0.0:
            out.append(s[j])
        else:
            with np.errstate(invalid="ignore"):  # inf - inf: NaN, i.e. not known
                out.append(s[j] + g * (s[j + 1] - s[j]))
    return np.array(out)


def known_percentiles(
    values: np.ndarray, lower_bound: np.ndarray, percentiles: tuple[int, ...]
) -> np.ndarray:
    """Percentiles of ``values`` over axis 0 (numpy's ``linear`` method, Hyndman & Fan
    1996, definition 7), NaN where they are not known.

    ``lower_bound`` marks the values that are only a lower bound: a scenario that holds
    traffic beyond the approach has a longer queue than its length says, by an amount
    not known. A percentile never falls when a value rises, so it is known exactly
    when raising every such value to infinity leaves it unchanged: the order
    statistics it uses are then known values with no lower bound between them.
    """
    p = np.percentile(values, percentiles, axis=0, method="linear")
    if not lower_bound.any():
        return p
    raised = np.where(lower_bound, np.inf, values)
    same = _order_percentile(values, percentiles) == _order_percentile(raised, percentiles)
    return np.where(same, p, np.nan)


def clopper_pearson(k: np.ndarray, n: int, confidence: float) -> tuple[np.ndarray, np.ndarray]:
    """Clopper-Pearson interval of a binomial proportion ``k / n`` (module notes)."""
    from scipy import stats  # imported here for start-up speed: scipy is slow to import

    k = np.asarray(k, dtype=float)
    a = 1.0 - confidence
    with np.errstate(invalid="ignore", divide="ignore"):
        low = np.where(k > 0, stats.beta.ppf(a / 2, np.maximum(k, 1e-300), n - k + 1), 0.0)
        high = np.where(k < n, stats.beta.ppf(1 - a / 2, k + 1, np.maximum(n - k, 1e-300)), 1.0)
    return low, high


@dataclass(frozen=True)
class RiskSummary:
    """Headline figures of an assessment (probabilities as fractions)."""

    scenarios: int
    p_any_hour: float
    p_any_hour_low: float
    p_any_hour_high: float
    worst_hour: dt.datetime | None
    worst_hour_p: float
    longest_queue_m: dict[int, float]  # NaN: not known (:func:`known_percentiles`)
    total_delay_veh_h: dict[int, float]


@dataclass(frozen=True)
class RiskResult:
    """What :func:`assess` returns: per-hour probabilities and percentiles, and the runs."""

    runs: ScenarioRuns
    options: RiskOptions
    percentiles: tuple[int, ...] = PERCENTILES
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def plan(self) -> Plan:
        return self.runs.plan

    @cached_property
    def hourly(self) -> pd.DataFrame:
        """Per hour: scenarios, the probability of breaking each limit (with its interval),
        and percentiles of the longest queue (m; NaN where not known, as scenarios hold
        traffic beyond the approach: :func:`known_percentiles`) and the average delay
        (min/veh)."""
        import pandas as pd  # imported when used: slow to import

        r = self.runs
        n = len(r)
        cols: dict[str, object] = {"hour_start": r.hour_start, "closure": r.closure}
        cols["scenarios"] = np.full(len(r.hour_start), n)
        level = self.options.confidence
        for name, ok in r.checks.items():
            col = PROBABILITY_COLUMNS[name]
            k = (~ok).sum(axis=0)
            low, high = clopper_pearson(k, n, level)
            cols[col], cols[f"{col}_low"], cols[f"{col}_high"] = k / n, low, high
        k = r.failing.sum(axis=0)
        low, high = clopper_pearson(k, n, level)
        cols["p_any"], cols["p_any_low"], cols["p_any_high"] = k / n, low, high
        cols["demand_mean_veh_h"] = r.demand_veh_h.mean(axis=0)
        unknown = length_unknown(r.held_veh)
        q = known_percentiles(r.queue_length_max_m, unknown, self.percentiles)
        d = np.percentile(r.average_delay_min, self.percentiles, axis=0, method="linear")
        for i, p in enumerate(self.percentiles):
            cols[f"queue_length_p{p}_m"] = q[i]
        for i, p in enumerate(self.percentiles):
            cols[f"average_delay_p{p}_min"] = d[i]
        return pd.DataFrame(cols)

    @cached_property
    def summary(self) -> RiskSummary:
        r = self.runs
        n = len(r)
        bad = r.failing.any(axis=1)
        low, high = clopper_pearson(np.array([bad.sum()]), n, self.options.confidence)
        p_any = self.hourly["p_any"].to_numpy()
        worst = int(np.argmax(p_any)) if len(p_any) else 0
        longest = r.queue_length_max_m.max(axis=1)
        total = r.delay_veh_h.sum(axis=1)
        pq = known_percentiles(longest, length_unknown(r.held_veh).any(axis=1), self.percentiles)
        pd_ = np.percentile(total, self.percentiles, method="linear")
        return RiskSummary(
            scenarios=n,
            p_any_hour=float(bad.mean()),
            p_any_hour_low=float(low[0]),
            p_any_hour_high=float(high[0]),
            worst_hour=r.hour_start[worst].to_pydatetime() if p_any[worst] > 0 else None,
            worst_hour_p=float(p_any[worst]),
            longest_queue_m=dict(zip(self.percentiles, map(float, pq), strict=True)),
            total_delay_veh_h=dict(zip(self.percentiles, map(float, pd_), strict=True)),
        )

    def method(self) -> list[str]:
        """How the result was obtained, in plain sentences (for reports)."""
        r = self.runs
        lines = [
            f"Scenarios: {len(r):,} equally likely ({r.scenarios.source}).",
            "Each scenario is the whole plan run by the engine, exactly as a single "
            "analysis (queue carried over from hour to hour, queue length by the plan's "
            "method, the same per-hour checks).",
            "Probability of breaking a limit in an hour: the share of scenarios that break "
            f"it, with its {self.options.confidence:.0%} Clopper-Pearson interval.",
            "Percentiles: numpy's linear interpolation between order statistics "
            "(Hyndman & Fan definition 7).",
        ]
        return lines + list(self.notes)


def assess(
    plan: Plan,
    scenarios: Scenarios | None = None,
    *,
    history: DemandHistory | None = None,
    options: RiskOptions | None = None,
) -> RiskResult:
    """The risk that the plan breaks its limits, hour by hour.

    ``scenarios`` default to :func:`plan_scenarios` (the plan's history, or its
    own demand, times the capacity draws of ``options``).

    Raises:
        PlanError: bad options or scenarios (each problem says where and what to do).
    """
    options = options or plan.risk or RiskOptions()
    problems = options_problems(options)
    if problems:
        raise PlanError(problems)
    if scenarios is None:
        scenarios = plan_scenarios(plan, history, options)
    notes: list[str] = []
    th = plan.thresholds
    if (
        th.max_queue_length is None
        and th.max_average_delay is None
        and (th.max_demand_capacity is None)
    ):
        notes.append("No limits are set, so no hour can break one; enter the agency's limits.")
    if len(scenarios) == 1:
        notes.append(
            "Only one scenario: each probability is 0 or 1. Give a count history or a "
            "capacity coefficient of variation."
        )
    elif len(scenarios) < 20:
        notes.append(
            f"Only {len(scenarios)} scenarios: each probability moves in steps of "
            f"1/{len(scenarios)}; read the intervals."
        )
    periods = scenarios.periods
    if 0 < periods < FEW_PERIODS < len(scenarios):
        one = periods == 1
        notes.append(
            f"Only {periods} historical period{'' if one else 's'} of the counts "
            f"match{'es' if one else ''} the plan: its {len(scenarios):,} scenarios vary the "
            f"capacity on {'that week' if one else 'those weeks'} alone, and the intervals "
            "count them as independent; widen the window around the same date (or leave it "
            "blank) for the variation from week to week."
        )
    runs = run_scenarios(plan, scenarios)
    held = length_unknown(runs.held_veh)
    if held.any():
        k = int(held.any(axis=1).sum())
        first = runs.hour_start[int(np.flatnonzero(held.any(axis=0))[0])]
        notes.append(
            f"In {k} of {len(scenarios)} scenarios the demand is more than the road itself "
            f"carries in some hour (first {first:%a %Y-%m-%d %H:%M}): the traffic it cannot "
            "admit waits beyond the approach, those hours count as over a queue-length "
            "limit, and their longest queue is not known; a percentile of the longest "
            "queue that those scenarios could change is given as unknown."
        )
    return RiskResult(runs, options, PERCENTILES, tuple(notes))


__all__ = [
    "FEW_PERIODS",
    "LIMIT_WORDS",
    "MAX_SCENARIO_INTERVALS",
    "PROBABILITY_COLUMNS",
    "RiskResult",
    "RiskSummary",
    "ScenarioRuns",
    "Scenarios",
    "asks_for_risk",
    "assess",
    "capacity_draws",
    "clopper_pearson",
    "known_percentiles",
    "plan_risk",
    "plan_scenarios",
    "refuse_approach",
    "run_scenarios",
]
