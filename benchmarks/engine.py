"""Engine speed: exact interval solution against a minute-by-minute loop.

Prints, measured side by side in one run:
- a one-year hourly plan with a closure every night: ``wzq.analyse`` (the core
  arrays, and with the per-hour table built) against a straightforward
  minute-by-minute loop over the same demand and capacities, and the ratio;
- the time per 48-hour plan (the unit of work of closure-window searches).

Targets (issue: queue engine): at least 300 times faster than the minute
loop, under 5 ms for the year, under 0.2 ms per 48-hour plan.

Run: python benchmarks/engine.py
"""

from __future__ import annotations

import datetime as dt
import time

import numpy as np

from wzq import Closure, Demand, Plan, Site, analyse
from wzq.analysis import evaluate
from wzq.units import MILE, MPH

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


def minute_loop(dur_s, lam_h, pre_h, qdr_h) -> tuple[float, float]:
    """The obvious fixed-step method: one-minute steps, capacity drop included."""
    q = 0.0
    qmax = 0.0
    delay = 0.0
    for d, a, p, m in zip(dur_s, lam_h, pre_h, qdr_h, strict=True):
        a, p, m = a / 60.0, p / 60.0, m / 60.0  # per minute
        for _ in range(int(d // 60)):
            rate = m if q > 0 else p
            q_new = q + a - rate
            if q_new < 0:
                q_new = 0.0
            delay += 0.5 * (q + q_new)
            q = q_new
            if q > qmax:
                qmax = q
    return qmax, delay / 60.0


def best_of(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> None:
    plan = year_plan()
    run = evaluate(plan)
    args = (np.diff(run.t).tolist(), run.demand_veh_h.tolist(), run.prebreakdown_veh_h.tolist(),
            run.discharge_veh_h.tolist())  # fmt: skip
    qmax_loop, delay_loop = minute_loop(*args)
    t_loop = best_of(lambda: minute_loop(*args), 1)
    t_core = best_of(lambda: evaluate(plan), 20)
    t_full = best_of(lambda: analyse(plan).hourly, 10)
    r = analyse(plan)
    print(f"one-year hourly plan: {len(plan.demand.flows_veh_h)} hours, "
          f"{len(plan.closures)} closures, {len(run.t) - 1} exact intervals")  # fmt: skip
    print(f"  agreement: max queue {r.summary.max_queue_veh:,.1f} veh (exact) vs "
          f"{qmax_loop:,.1f} (minute loop); queue delay {r.summary.queue_delay_veh_h:,.1f} vs "
          f"{delay_loop:,.1f} veh-h")  # fmt: skip
    print(f"  minute-by-minute loop     {t_loop * 1e3:10.2f} ms")
    print(f"  wzq core (evaluate)       {t_core * 1e3:10.3f} ms   ratio {t_loop / t_core:8.0f}x")
    print(f"  wzq analyse + hourly table{t_full * 1e3:10.3f} ms   ratio {t_loop / t_full:8.0f}x")
    print("  targets: >= 300x the loop, < 5 ms for the year")

    plan48 = year_plan(days=2)
    night = Closure(dt.datetime(2027, 1, 4, 21), dt.datetime(2027, 1, 5, 5), 2)
    plan48 = Plan(plan48.site, plan48.demand, (night,))
    n = 2000
    t0 = time.perf_counter()
    for _ in range(n):
        evaluate(plan48)
    t48 = (time.perf_counter() - t0) / n
    t0 = time.perf_counter()
    for _ in range(200):
        analyse(plan48).hourly  # noqa: B018
    t48_full = (time.perf_counter() - t0) / 200
    print(f"48-hour plan: core {t48 * 1e3:.3f} ms per plan (target < 0.2 ms); "
          f"with the hourly table {t48_full * 1e3:.3f} ms")  # fmt: skip


if __name__ == "__main__":
    main()
