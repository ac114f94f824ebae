"""Risk of breaking the limits: scenarios solved together against ``wzq.analyse`` one by one.

Prints, measured side by side in one run, for the invented demo plan (a week
of night closures on the fictional Larkspur Vale Expressway,
``examples/larkspur_vale_week.json``, one-week hourly plan, 168 hours):

1. 52 weekly demand scenarios (made by the documented process of
   ``examples/build_count_history.py``: day-type profiles, season, weekly,
   daily and hourly variation) through :func:`wzq.engine.risk.run_scenarios`, against
   :func:`wzq.analyse` on each scenario's plan one by one (with its per-hour
   table, which the risk needs); the per-hour verdicts of the two are compared;
2. 1,000 draws of the work-zone capacity (coefficient of variation 0.08) on
   the plan's design demand, against :func:`wzq.analyse` of each draw's plan,
   each closure given its drawn capacity as a typed override. A typed override
   has no capacity drop and no day/night term, so for this part the demo's
   closures are set to night-time and its work-zone capacity drop to 0 %:
   then a draw and its plan are the same run, and the verdicts can be compared.

Targets (issue 19): 52 weekly scenarios under 50 ms and 1,000 capacity draws
under 1 s, each at least 20 times faster than one by one. Rounds alternate the
two ways, and the median of each is reported with its range, since a shared
machine's speed drifts within a run.

    python benchmarks/risk.py [--rounds N]
"""

from __future__ import annotations

import argparse
import datetime as dt
import importlib.util
import statistics
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

import wzq
from wzq.engine.risk import Scenarios, capacity_draws, run_scenarios
from wzq.engine.site import configuration
from wzq.io.jsonplan import load_plan

ROOT = Path(__file__).resolve().parents[1]
PLAN = ROOT / "examples" / "larkspur_vale_week.json"


def _generator():
    spec = importlib.util.spec_from_file_location(
        "build_count_history", ROOT / "examples" / "build_count_history.py"
    )
    module = importlib.util.module_from_spec(spec)
    assert spec.loader is not None
    spec.loader.exec_module(module)
    return module


def weekly_scenarios(start: dt.date, weeks: int = 52, seed: int = 52) -> np.ndarray:
    """``weeks`` invented weeks of hourly demand from the demo history's process."""
    gen = _generator()
    rng = np.random.Generator(np.random.PCG64(seed))
    out = np.empty((weeks, 168))
    for w in range(weeks):
        factor = rng.normal(1.0, 0.035)
        days = [gen.expected(start + dt.timedelta(days=d), rng, factor) for d in range(7)]
        out[w] = np.concatenate(days)
    return out


def plain_plans(plan: wzq.Plan, sc: Scenarios) -> list[wzq.Plan]:
    """Each scenario as a plan of its own, for ``wzq.analyse``."""
    base = replace(plan, history=None, risk=None)
    out = []
    for j in range(len(sc)):
        p = replace(base, demand=wzq.Demand(plan.demand.start, 3600, sc.flows_veh_h[j]))
        if sc.capacity_factor is not None:
            closures = []
            for c, f in zip(plan.closures, sc.capacity_factor[j], strict=True):
                config = (c.lanes_closed, c.barrier, c.capacity_override_veh_h_ln)
                pre = configuration(plan.site, plan.options.diagram, config, True)[0]
                per_lane = f * pre / (plan.site.lanes - c.lanes_closed)
                closures.append(replace(c, capacity_override_veh_h_ln=per_lane))
            p = replace(p, closures=tuple(closures))
        out.append(p)
    return out


def one_by_one(plans: list[wzq.Plan]) -> tuple[float, list[np.ndarray]]:
    t0 = time.perf_counter()
    verdicts = [(wzq.analyse(p).hourly["status"] != "ok").to_numpy() for p in plans]
    return time.perf_counter() - t0, verdicts


def together(plan: wzq.Plan, sc: Scenarios):
    t0 = time.perf_counter()
    runs = run_scenarios(plan, sc)
    return time.perf_counter() - t0, runs


def compare(label: str, plan: wzq.Plan, sc: Scenarios, rounds: int, target_s: float) -> None:
    plans = plain_plans(plan, sc)
    together(plan, sc)  # warm the capacity cache once, as a session would
    fast, slow = [], []
    verdicts: list[np.ndarray] = []
    runs = None
    for _ in range(rounds):
        t, runs = together(plan, sc)
        fast.append(t)
        t, verdicts = one_by_one(plans)
        slow.append(t)
    assert runs is not None
    disagree = sum(int(np.sum(runs.failing[j] != verdicts[j])) for j in range(len(sc)))
    ratios = [s / f for s, f in zip(slow, fast, strict=True)]
    f_med, s_med, r_med = (statistics.median(x) for x in (fast, slow, ratios))
    print(label)
    rows = [
        ("scenarios x hours", f"{len(sc)} x {runs.failing.shape[1]}"),
        (
            "scenarios with a queue / over a limit",
            f"{int((runs.queue_max_veh.max(axis=1) > 0).sum())} / "
            f"{int(runs.failing.any(axis=1).sum())}",
        ),
        (
            "run_scenarios, median (range)",
            f"{f_med * 1e3:8.1f} ms ({min(fast) * 1e3:.1f}-{max(fast) * 1e3:.1f})",
        ),
        (
            "wzq.analyse one by one, median (range)",
            f"{s_med * 1e3:8.1f} ms ({min(slow) * 1e3:.1f}-{max(slow) * 1e3:.1f})",
        ),
        ("ratio, median (range)", f"{r_med:8.1f} x ({min(ratios):.1f}-{max(ratios):.1f})"),
        ("hour verdicts that disagree", f"{disagree} of {runs.failing.size}"),
        (
            f"target: under {target_s * 1e3:.0f} ms and 20 x",
            "met" if f_med < target_s and r_med >= 20 else "not met",
        ),
    ]
    for name, value in rows:
        print(f"  {name:<42} {value}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--rounds", type=int, default=5)
    args = parser.parse_args()
    plan = load_plan(PLAN)
    start = plan.demand.start.date()
    flows = weekly_scenarios(start)
    weeks = Scenarios(tuple(f"week {w + 1}" for w in range(len(flows))), flows)
    compare("52 weekly demand scenarios, one-week hourly plan", plan, weeks, args.rounds, 0.050)
    n = 1000
    site = replace(plan.site, capacity_drop_pct_work_zone=0.0)
    night = tuple(replace(c, night=True) for c in plan.closures)
    plan = replace(plan, site=site, closures=night)
    draws = Scenarios(
        tuple(f"draw {k + 1}" for k in range(n)),
        np.repeat(plan.demand.flows_veh_h[None, :], n, axis=0),
        capacity_draws(n, len(plan.closures), 0.08, seed=1),
    )
    print()
    compare(
        "1,000 draws of the work-zone capacity (cv 0.08), same plan",
        plan,
        draws,
        max(1, args.rounds // 2),
        1.0,
    )


if __name__ == "__main__":
    main()
