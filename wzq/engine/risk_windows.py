"""Closure windows at a chosen risk: when may a lane configuration be in place, if a
closure is allowed where the chance of breaking a limit is at most, say, 10 %?

:mod:`wzq.engine.windows` allows a closure ``[s, e)`` when every hour of the run
on the plan's (design) demand stays within the limits. Here the same question
is asked of every scenario of the plan (:mod:`wzq.engine.risk`: each matching
historical period of its count history, each with its draws of the work-zone
capacity when a coefficient of variation is given): the closure ``[s, e)``
*breaks a limit* in a scenario when some hour of that scenario's run with the
closure in force on ``[s, e)`` -- the queue it leaves behind included -- breaks
one, and it is **allowed at risk** ``p`` when the share of equally likely
scenarios in which it breaks a limit is at most ``p``. That share is exactly
what :func:`wzq.engine.risk.assess` gives for the plan with that one closure
(``summary.p_any_hour``); the tests check the two against each other on small
plans, candidate by candidate.

Exact, scenario by scenario: each scenario's allowed set is the exact set of
:mod:`wzq.engine.windows` on that scenario's demand, with the scenario's
capacity factor applied to the closed configuration (as
:func:`wzq.engine.risk.run_scenarios` applies it to a closure), and the count
of scenarios that break a limit is kept per candidate. A candidate is settled
once its count passes ``p`` times the number of scenarios (not allowed,
whatever the rest give) or can no longer pass it (allowed); a start whose
every end is settled is not searched again, and the scenarios are taken
heaviest first (most traffic per unit of capacity), which settles the busy
starts early. Nothing is estimated beyond the share itself, whose
Clopper-Pearson interval the risk assessment states.

The added delay and road-user cost shown with each window are those on the
plan's design demand (the deterministic search's), as the windows table of a
plan without a history shows them.

Pure: no files, no printing.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

from wzq.engine import windows as W
from wzq.engine.plan import Barrier, Plan, PlanError, Problem, RiskOptions
from wzq.engine.queue_length import newell_lengths
from wzq.engine.risk import Scenarios, asks_for_risk, plan_scenarios, refuse_approach

__all__ = [
    "MAX_SEARCH_SCALE",
    "RiskWindows",
    "closure_windows",
    "refuse_long_search",
    "risk_rule",
    "risk_windows",
    "window_scenarios",
]


#: The largest search at a risk, in scenarios times demand intervals squared: about 10
#: minutes (:func:`refuse_long_search`).
MAX_SEARCH_SCALE = 300_000_000


@dataclass(frozen=True)
class RiskWindows:
    """What :func:`risk_windows` returns.

    ``windows`` is a :class:`wzq.engine.windows.WindowsResult` whose sets allow
    the candidates at risk (so every table of windows reads it as it reads the
    deterministic search); ``failing[k][s, e]`` is the number of scenarios in
    which the closure ``[s, e)`` of set ``k`` breaks a limit (exact where it
    was needed to settle the candidate: a candidate is settled once the count
    decides it, so a settled count may stop short of the whole number).
    """

    windows: W.WindowsResult
    level: float
    scenarios: int
    source: str
    failing: tuple[np.ndarray, ...]


def risk_rule(level: float, n: int, source: str) -> str:
    """The sentence that says what an allowed closure is, at risk ``level``."""
    return (
        f"A closure is allowed where the share of scenarios in which some hour of its run "
        f"breaks a limit (the queue left behind after it ends included; all lanes open "
        f"outside the closure) is at most {100 * level:g} %: {n:,} equally likely "
        f"scenarios ({source}). Added delay and cost are on the design demand."
    )


def window_scenarios(plan: Plan, options: RiskOptions | None = None) -> Scenarios:
    """The scenarios of the window search: those of the plan, each with one capacity
    factor (for the candidate closure) when the capacity is drawn."""
    return plan_scenarios(plan, options=options or plan.risk or RiskOptions(), n_closures=1)


def _level(level: float | None, options: RiskOptions) -> float:
    level = options.window_risk if level is None else level
    if level is None or not (np.isfinite(level) and 0 <= level < 1):
        raise PlanError(
            [
                Problem(
                    "risk.window_risk_percent",
                    "give the highest accepted chance of breaking a limit, 0 to under 100 % "
                    "(e.g. 10)",
                )
            ]
        )
    return float(level)


def _scenario_grid(g: W._Grid, flows: np.ndarray, factor: float) -> W._Grid:
    """The search grid of one scenario: its demand (and the traffic it holds back beyond
    the approach), its capacity factor on the closure. No ramps (refuse_approach)."""
    assert g.ramps is None
    held = W.held_per_hour(flows[None, :], g.dur, g.lanes, g.model.diagram, g.first)
    if factor == 1.0:
        return replace(g, lam=flows, held=held)
    return replace(
        g,
        lam=flows,
        held=held,
        pre_closed=g.pre_closed * factor,
        qdr_closed=g.qdr_closed * factor,
    )


def _heaviest_first(scenarios: Scenarios) -> np.ndarray:
    """Scenario order: most traffic per unit of closure capacity first (settles early)."""
    load = scenarios.flows_veh_h.sum(axis=1)
    if scenarios.capacity_factor is not None and scenarios.capacity_factor.shape[1]:
        load = load / scenarios.capacity_factor[:, 0]
    return np.argsort(-load, kind="stable")


def _failing_counts(g: W._Grid, scenarios: Scenarios, budget: int, exhaustive: bool) -> np.ndarray:
    """Per candidate ``[s, e)``: scenarios in which it breaks a limit (module notes)."""
    n = g.n
    total = len(scenarios)
    upper = np.triu(np.ones((n, n + 1), dtype=bool), 1)
    fails = np.zeros((n, n + 1), dtype=np.int64)
    factors = scenarios.capacity_factor
    for done, j in enumerate(_heaviest_first(scenarios)):
        left = total - done  # this scenario and the ones after it
        open_ = upper & (fails <= budget) & (fails + left > budget)
        rows = open_.any(axis=1)
        if not rows.any():
            break
        f = 1.0 if factors is None or not factors.shape[1] else float(factors[j, 0])
        gj = _scenario_grid(g, scenarios.flows_veh_h[j], f)
        in_full = exhaustive or (g.length_fn is newell_lengths and W._beyond_approach(gj))
        allowed, _ = W._allowed(gj, in_full, starts=rows)
        fails[rows] += (~allowed[rows] & upper[rows]).astype(np.int64)
    return fails


def risk_windows(
    plan: Plan,
    level: float | None = None,
    lanes_closed: Sequence[int] | None = None,
    *,
    barrier: Barrier = "soft",
    scenarios: Scenarios | None = None,
    exhaustive: bool = False,
) -> RiskWindows:
    """Closure windows allowed where the chance of breaking a limit is at most ``level``.

    ``level`` (a fraction) defaults to the plan's ``risk.window_risk``;
    ``scenarios`` to :func:`window_scenarios`. The plan's own closures are not
    used: the search places the closure. ``exhaustive`` runs every candidate
    of every scenario in full (for checking).

    Raises:
        PlanError: no level, bad risk options or history, or a plan the risk is not
            yet assessed for (an approach with ramps, a landmark limit, a set
            congested branch).
    """
    options = plan.risk or RiskOptions()
    level = _level(level, options)
    refuse_approach(plan)
    if scenarios is None:
        scenarios = window_scenarios(plan, options)
        refuse_long_search(plan, len(scenarios))
    if scenarios.flows_veh_h.shape[1] != len(plan.demand.flows_veh_h):
        raise PlanError(
            f"each scenario needs {len(plan.demand.flows_veh_h)} demand intervals, got "
            f"{scenarios.flows_veh_h.shape[1]}",
            where="scenarios",
        )
    design = W.plan_windows(plan, lanes_closed, barrier=barrier, exhaustive=exhaustive)
    total = len(scenarios)
    budget = math.floor(level * total + 1e-9)
    sets = []
    failing = []
    for ws in design.sets:
        fails = _failing_counts(ws._grid, scenarios, budget, exhaustive)
        upper = np.triu(np.ones(fails.shape, dtype=bool), 1)
        sets.append(replace(ws, allowed=upper & (fails <= budget)))
        failing.append(fails)
    found = replace(
        design,
        sets=tuple(sets),
        rule=risk_rule(level, total, scenarios.source),
    )
    return RiskWindows(found, level, total, scenarios.source, tuple(failing))


def closure_windows(
    plan: Plan,
    lanes_closed: Sequence[int] | None = None,
    *,
    barrier: Barrier = "soft",
    level: float | None = None,
    known: Sequence[np.ndarray] | None = None,
) -> W.WindowsResult:
    """The closure windows of a plan as every output shows them: at risk ``level`` (a
    fraction; default the plan's ``risk.window_risk``) when one is given and the plan
    has scenarios to judge it on (a count history or a capacity spread,
    :func:`wzq.engine.risk.asks_for_risk`), else on the design demand
    (:func:`wzq.engine.windows.plan_windows`). A plan the risk is not yet assessed for
    (:func:`wzq.engine.risk.refuse_approach`) gets the design demand's windows with a
    note that says why. ``known``: the design demand's tables found before for the same
    inputs (a cache, as :func:`wzq.engine.windows.find_windows` takes them); the search
    at a risk never uses them."""
    if level is None and plan.risk is not None and asks_for_risk(plan):
        level = plan.risk.window_risk
    if level is None:
        return W.plan_windows(plan, lanes_closed, barrier=barrier, known=known)
    try:
        refuse_approach(plan)
        scenarios = window_scenarios(plan)
        refuse_long_search(plan, len(scenarios))
    except PlanError as e:  # said beside the windows, which are on the design demand
        found = W.plan_windows(plan, lanes_closed, barrier=barrier, known=known)
        why = "; ".join(p.message for p in e.problems)
        note = f"Windows on the design demand alone, not at a risk: {why}."
        return replace(found, notes=(*found.notes, note))
    return risk_windows(plan, level, lanes_closed, barrier=barrier, scenarios=scenarios).windows


def refuse_long_search(plan: Plan, n_scenarios: int) -> None:
    """Refuse a search at a risk that would take far longer than a designer waits.

    Every scenario is searched in full, and one search grows about as the square of the
    demand intervals; measured here, 1,000 draws of the Ashgrove week (168 hourly rows)
    took 55 s and of the Kestrel Ridge nights (72) 16 s, 10,000 of those 143 s. Past
    :data:`MAX_SEARCH_SCALE` scenarios times intervals squared (about 10 minutes) the
    search is refused, naming the draws that fit.

    Raises:
        PlanError: the search is too large, with the most draws it takes.
    """
    n = len(plan.demand.flows_veh_h)
    scale = n_scenarios * n * n
    if scale <= MAX_SEARCH_SCALE:
        return
    most = MAX_SEARCH_SCALE // (n * n)
    cells = (
        f"at most {most:,} draws in {plan.where('risk.draws')}"
        if plan.risk is not None and plan.risk.capacity_cv is not None
        else f"a narrower window around the same date in "
        f"{plan.where('demand.history.window_weeks')}"
    )
    raise PlanError(
        [
            Problem(
                "risk.draws",
                f"{n_scenarios:,} scenarios of the plan's {n:,} demand intervals would each be "
                f"searched (a scale of {scale:,} scenarios times intervals squared, more than "
                f"the {MAX_SEARCH_SCALE:,} searched in about 10 minutes); give {cells}",
            )
        ]
    )
