"""Closure-window search against analysing the same closures one by one.

Prints, side by side in one run, the time :func:`wzq.engine.windows.find_windows`
takes to judge every closure period (every start and end on the demand grid)
for three lane configurations over a 7-day week, and the time
:func:`wzq.analyse` takes for the same candidates one plan at a time, with the
ratio. Target: under 1 second for the hourly week.

``analyse()`` is timed on a random sample of the candidates (``--sample``,
default 400) and scaled to all of them; ``--full`` analyses every candidate
(about 40,000 plans per week: minutes). The sampled verdicts are compared with
the search's and any disagreement is printed.

Invented scenario: Kestrel Ridge Parkway southbound near Amberfold (fictional),
four lanes, a weekday commuter peak pattern and a flatter weekend.

    python benchmarks/windows.py [--sample N] [--full] [--quarter-hours]
"""

from __future__ import annotations

import argparse
import datetime as dt
import random
import time

import numpy as np

import wzq
from wzq.engine.plan import Closure, Demand, Plan, Site, Thresholds
from wzq.engine.windows import Configuration, find_windows
from wzq.units import MILE, MINUTE, MPH

WEEKDAY = [
    900, 600, 500, 520, 800, 1900, 4300, 6300, 6100, 5000, 4500, 4600,
    4700, 4700, 5000, 5800, 6500, 6600, 5600, 4200, 3300, 2800, 2200, 1500,
]  # fmt: skip
WEEKEND = [
    1300, 900, 700, 600, 600, 900, 1500, 2300, 3300, 4200, 4800, 5100,
    5200, 5100, 5000, 4800, 4600, 4300, 3900, 3300, 2800, 2300, 1900, 1500,
]  # fmt: skip


def week(quarter_hours: bool) -> Demand:
    """Monday 2027-09-06 00:00 to Sunday 24:00 (invented counts)."""
    days = [WEEKDAY] * 5 + [WEEKEND] * 2
    flows = np.array([v for d in days for v in d], dtype=float)
    if quarter_hours:
        # a smooth 15-minute profile with the same hourly totals
        flows = np.repeat(flows, 4) * np.tile([0.94, 0.98, 1.02, 1.06], len(flows))
        return Demand(dt.datetime(2027, 9, 6), 900, flows)
    return Demand(dt.datetime(2027, 9, 6), 3600, flows)


SITE = Site(
    lanes=4,
    speed_limit=65 * MPH,
    work_zone_speed_limit=55 * MPH,
    work_zone_length=1.0 * MILE,
    heavy_vehicle_share=0.07,
    name="Kestrel Ridge Parkway (fictional), southbound",
)
LIMITS = Thresholds(max_queue_length=1.0 * MILE, max_average_delay=15 * MINUTE)
CONFIGS = [Configuration(1), Configuration(2), Configuration(3)]


def run(quarter_hours: bool, sample: int, full: bool, seed: int = 7) -> None:
    demand = week(quarter_hours)
    n = len(demand.flows_veh_h)
    label = "15-minute" if quarter_hours else "hourly"
    best = float("inf")
    for _ in range(3):
        t0 = time.perf_counter()
        result = find_windows(SITE, demand, LIMITS, CONFIGS)
        best = min(best, time.perf_counter() - t0)
    candidates = [
        (k, s, e) for k in range(len(CONFIGS)) for s in range(n) for e in range(s + 1, n + 1)
    ]
    picked = (
        candidates if full else random.Random(seed).sample(candidates, min(sample, len(candidates)))
    )
    step = dt.timedelta(seconds=demand.interval_s)
    disagree = 0
    t0 = time.perf_counter()
    for k, s, e in picked:
        closure = Closure(demand.start + s * step, demand.start + e * step, CONFIGS[k].lanes_closed)
        res = wzq.analyse(Plan(SITE, demand, (closure,), LIMITS))
        ok = bool((res.hourly["status"] == "ok").all())
        disagree += ok != bool(result.sets[k].allowed[s, e])
    spent = time.perf_counter() - t0
    one_by_one = spent / len(picked) * len(candidates)
    how = "every candidate" if full else f"{len(picked)} sampled, scaled"
    rows = [
        ("windows search, best of 3", f"{best:.3f} s"),
        (f"analyse() one by one ({how})", f"{one_by_one:.1f} s"),
        ("ratio", f"{one_by_one / best:,.0f} x"),
        ("verdicts that disagree", f"{disagree} of {len(picked)}"),
        ("target: search under 1 s", "met" if best < 1.0 else "not met"),
    ]
    print(
        f"{label} week, {n} intervals, {len(CONFIGS)} configurations, "
        f"{len(candidates):,} candidate closures"
    )
    for name, value in rows:
        print(f"  {name:<45} {value:>12}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sample", type=int, default=400)
    parser.add_argument("--full", action="store_true")
    parser.add_argument("--quarter-hours", action="store_true", help="also run a 15-minute week")
    args = parser.parse_args()
    run(False, args.sample, args.full)
    if args.quarter_hours:
        run(True, args.sample, args.full)


if __name__ == "__main__":
    main()
