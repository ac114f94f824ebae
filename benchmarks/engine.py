"""Engine speed: exact interval solution against a minute-by-minute loop.

Prints, measured side by side in one run:
- a one-year hourly plan with a closure every night: ``wzq.analyse`` (the core
  arrays, and with the per-hour table built) against a straightforward
  minute-by-minute loop over the same demand and capacities, and the ratio;
- the time per 48-hour plan (the unit of work of closure-window searches):
  per candidate plan inside :func:`wzq.engine.windows.find_windows` over every start
  and end of a 48-hour demand, and one plan on its own through ``wzq.analyse``.

Targets (issue: queue engine): at least 300 times faster than the minute
loop, under 5 ms for the year, under 0.2 ms per 48-hour plan.

Run: python benchmarks/engine.py
"""

from __future__ import annotations

import bisect
import dataclasses
import datetime as dt
import time

import numpy as np

from wzq import Closure, Demand, Plan, Site, analyse
from wzq.engine.evaluate import evaluate
from wzq.engine.plan import Approach, Landmark, Thresholds
from wzq.engine.site import closure_capacity, site_model
from wzq.engine.windows import Configuration, find_windows
from wzq.models.queueing import solve
from wzq.units import MILE, MINUTE, MPH

#: An invented approach: an entrance ramp 700 m and an exit ramp 1.6 km upstream.
RAMPS = Approach(
    (
        Landmark("Marlow Cut on-ramp", 700.0, "entrance-ramp", ramp_share=0.08),
        Landmark("Tern Hollow off-ramp", 1600.0, "exit-ramp", ramp_share=0.05),
    )
)

WEEKDAY = [700, 480, 400, 420, 650, 1500, 3600, 5200, 5000, 4100, 3700, 3800,
           3900, 3900, 4200, 4800, 5300, 5400, 4600, 3500, 2800, 2400, 1900, 1300]  # fmt: skip
WEEKEND = [900, 700, 550, 480, 500, 800, 1400, 2100, 2900, 3600, 4000, 4200,
           4200, 4100, 4000, 3900, 3800, 3600, 3200, 2800, 2400, 2000, 1600, 1200]  # fmt: skip


def year_plan(days: int = 365, start: dt.datetime = dt.datetime(2027, 1, 4)) -> Plan:
    """An invented year: weekday/weekend profiles, 2 of 3 lanes closed 22:00-05:00 nightly."""
    rng = np.random.default_rng(7)
    flows = []
    for d in range(days):
        base = WEEKDAY if (start + dt.timedelta(days=d)).weekday() < 5 else WEEKEND
        flows.extend(np.array(base) * rng.uniform(0.9, 1.1))
    closures = [
        Closure(start + dt.timedelta(days=d, hours=22), start + dt.timedelta(days=d, hours=29),
                lanes_closed=2 if d % 3 == 0 else 1)
        for d in range(days - 2)
    ]  # fmt: skip
    site = Site(lanes=3, speed_limit=65 * MPH, work_zone_speed_limit=55 * MPH,
                work_zone_length=1.0 * MILE, heavy_vehicle_share=0.08)  # fmt: skip
    return Plan(site, Demand(start, 3600, np.array(flows)), tuple(closures))


def minute_loop(plan: Plan) -> tuple[list[float], list[float]]:
    """The straightforward way: step through the plan one minute at a time.

    Each minute looks up its demand, the closure in force (bisect) and that
    closure's capacity (computed once per configuration by the engine's own
    capacity function, outside the loop's hot path), updates the queue with
    the capacity drop, and keeps the per-hour longest queue and delay.
    """
    site = plan.site
    model = site_model(site)
    starts = [(c.start - plan.demand.start).total_seconds() / 60 for c in plan.closures]
    ends = [(c.end - plan.demand.start).total_seconds() / 60 for c in plan.closures]
    caps: dict[tuple, tuple[float, float]] = {}
    flows = plan.demand.flows_veh_h.tolist()
    per = plan.demand.interval_s // 60
    n_min = len(flows) * per
    hour0 = plan.demand.start.hour
    q = 0.0
    qmax_h = [0.0] * (n_min // 60)
    delay_h = [0.0] * (n_min // 60)
    for m in range(n_min):
        lam = flows[m // per] / 60.0
        i = bisect.bisect_right(starts, m) - 1
        closure = plan.closures[i] if i >= 0 and m < ends[i] else None
        hod = (hour0 + m // 60) % 24
        night = hod >= 19 or hod < 6
        key = (i if closure else -1, night)
        if key not in caps:
            pair = closure_capacity(site, model, closure, night)
            caps[key] = (pair.prebreakdown_veh_h / 60.0, pair.discharge_veh_h / 60.0)
        pre, qdr = caps[key]
        rate = qdr if q > 0 else pre
        q_new = q + lam - rate
        if q_new < 0:
            q_new = 0.0
        h = m // 60
        delay_h[h] += 0.5 * (q + q_new) / 60.0
        q = q_new
        if q > qmax_h[h]:
            qmax_h[h] = q
    return qmax_h, delay_h


def best_of(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def side_by_side(loop, engines: dict, rounds: int = 5, repeat: int = 10) -> tuple[float, dict]:
    """Interleave the measurements: each round times the loop once and each
    engine variant (best of ``repeat``), so both see the same machine state.
    Returns the loop's best time and, per variant, its best time and the
    median of the per-round ratios."""
    t_loop, per_round = [], {k: [] for k in engines}
    for _ in range(rounds):
        t_loop.append(best_of(loop, 1))
        for name, fn in engines.items():
            per_round[name].append(best_of(fn, repeat))
    out = {}
    for name, times in per_round.items():
        ratios = sorted(tl / te for tl, te in zip(t_loop, times, strict=True))
        out[name] = (min(times), ratios[len(ratios) // 2], ratios[0], ratios[-1])
    return min(t_loop), out


def main() -> None:
    plan = year_plan()
    run = evaluate(plan)
    qmax_h, delay_h = minute_loop(plan)
    single = dataclasses.replace(
        plan, options=dataclasses.replace(plan.options, queue_length_method="shockwave")
    )

    def full() -> None:
        r = analyse(plan)
        r.hourly, r.summary  # noqa: B018 - the per-hour table and summary, built

    t_loop, res = side_by_side(
        lambda: minute_loop(plan),
        {
            "wzq.analyse (engine)": lambda: analyse(plan),
            "wzq.analyse, single-state length": lambda: analyse(single),
            "wzq.analyse + per-hour table, summary": full,
        },
    )
    h = analyse(plan).hourly
    print(
        f"one-year hourly plan: {len(plan.demand.flows_veh_h)} hours, "
        f"{len(plan.closures)} closures, {len(run.t) - 1} exact intervals"
    )
    print(
        f"  agreement: longest queue {h['queue_max_veh'].max():,.1f} veh (exact) vs "
        f"{max(qmax_h):,.1f} (minute loop); queue delay {h['queue_delay_veh_h'].sum():,.1f} "
        f"vs {sum(delay_h):,.1f} veh-h"
    )
    print("  measured in 5 interleaved rounds; ratio = median of the rounds (min-max)")
    print(f"  minute-by-minute loop                    {t_loop * 1e3:9.2f} ms")
    for name, (best, med, lo, hi) in res.items():
        print(f"  {name:40s} {best * 1e3:9.3f} ms  {med:6.0f}x faster ({lo:.0f}-{hi:.0f})")
    print("  targets: >= 300x faster than the minute loop, < 5 ms for the year")
    ramps = dataclasses.replace(plan, approach=RAMPS)
    t_plain = best_of(lambda: analyse(plan), 10)
    t_ramps = best_of(lambda: analyse(ramps), 3)
    print(
        f"  the same year with an entrance and an exit ramp (Newell's method by sections): "
        f"{t_ramps * 1e3:.1f} ms, {t_ramps / t_plain:.0f}x the plan without ramps (no target)"
    )

    plan48 = year_plan(days=2)
    # invented agency limits for the search (demo values)
    limits = Thresholds(max_queue_length=1.0 * MILE, max_average_delay=15 * MINUTE)
    n_cand = 48 * 49 // 2  # every start and end on the hourly grid
    found = find_windows(plan48.site, plan48.demand, limits, [Configuration(2)])
    t_search = best_of(
        lambda: find_windows(plan48.site, plan48.demand, limits, [Configuration(2)]), 5
    )
    night = Closure(dt.datetime(2027, 1, 4, 21), dt.datetime(2027, 1, 5, 5), 2)
    plan48 = Plan(plan48.site, plan48.demand, (night,))
    run48 = evaluate(plan48)
    args = (np.diff(run48.t), run48.demand_veh_h / 3600, run48.prebreakdown_veh_h / 3600,
            run48.discharge_veh_h / 3600)  # fmt: skip
    t_solve = best_of(lambda: [solve(*args) for _ in range(1000)], 5) / 1000
    t48 = best_of(lambda: [analyse(plan48) for _ in range(200)], 5) / 200
    t48_full = best_of(lambda: [analyse(plan48).hourly for _ in range(50)], 3) / 50
    print("48-hour plans (the unit of work of closure-window searches):")
    print(
        f"  closure-window search, 2 of 3 lanes closed, every start and end of a 48-hour "
        f"demand:\n    {n_cand} candidate plans in {t_search * 1e3:.1f} ms = "
        f"{t_search / n_cand * 1e3:.3f} ms per plan   target < 0.2 ms\n"
        f"    ({int(found.sets[0].allowed.sum())} allowed; each verdict equals wzq.analyse's "
        "for that plan: tests/engine/test_windows.py)"
    )
    print(f"  one plan on its own, night closure ({len(run48.t) - 1} intervals, a queue forms):")
    print(f"    exact queue solve (the core)          {t_solve * 1e3:7.3f} ms")
    print(f"    wzq.analyse (capacity, queue, Newell) {t48 * 1e3:7.3f} ms")
    print(f"    wzq.analyse + per-hour table          {t48_full * 1e3:7.3f} ms")


if __name__ == "__main__":
    main()
