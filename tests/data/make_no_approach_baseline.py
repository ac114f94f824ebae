"""Store the engine's outputs for plans without an approach description.

Run once on the code *before* the approach road (ramps, landmarks, set
congested branch) was added -- commit 8b36fdc of the main branch (recorded first
on e80a16c, again when the approach road was merged after the reader, output and
risk changes; and its hourly longest wait replaced, nothing else, when the
wait's reading of a queue that clears inside an interval was fixed; and one
demand/capacity replaced, nothing else, when an hour a closure covers in part was
judged by the closure's own capacity: fenwick_quarter_hours 07:00, 0.437 -> 0.646,
its demand over the closure's capacity rather than the hour's average) -- to record
what every result was then:

    python3 tests/data/make_no_approach_baseline.py

It writes ``tests/data/no_approach_baseline.json``, which
``tests/engine/test_approach.py`` compares with today's engine: with no ramps and no
landmarks every number must be the same (bit for bit, or within 1e-9). JSON
floats are written with ``repr`` and read back exactly.

The plans are the shipped examples and variants of them that go through every
branch of the queue-length step (Newell, the single-state relation, the
Greenshields diagrams, 15-minute demand, no capacity drop), the window search
of one of them and the space-time (LWR) simulation of another.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
from pathlib import Path

import numpy as np

import wzq
from wzq.engine import lwr
from wzq.engine.windows import plan_windows
from wzq.io.jsonplan import load_plan

ROOT = Path(__file__).resolve().parents[2]
OUT = Path(__file__).with_name("no_approach_baseline.json")


def variants() -> dict[str, wzq.Plan]:
    """Named plans: the examples and variants of them (invented data)."""
    kestrel = load_plan(ROOT / "examples" / "kestrel_ridge_weeknight.json")
    fenwick = load_plan(ROOT / "examples" / "fenwick_downs_weekend.json")
    demo = load_plan(ROOT / "wzq" / "data" / "kestrel_ridge_weeknight.json")

    def opts(plan: wzq.Plan, **kw) -> wzq.Plan:
        return dataclasses.replace(plan, options=dataclasses.replace(plan.options, **kw))

    d = fenwick.demand
    quarter = wzq.Demand(
        d.start,
        900,
        np.repeat(d.flows_veh_h, 4) * np.tile([0.95, 0.99, 1.01, 1.05], len(d.flows_veh_h)),
    )
    shifted = tuple(
        dataclasses.replace(c, start=c.start + dt.timedelta(minutes=15)) for c in fenwick.closures
    )
    return {
        "kestrel": kestrel,
        "fenwick": fenwick,
        "demo": demo,
        "kestrel_shockwave": opts(kestrel, queue_length_method="shockwave"),
        "fenwick_shockwave": opts(fenwick, queue_length_method="shockwave"),
        "fenwick_greenshields": opts(fenwick, diagram="greenshields"),
        "fenwick_capped": opts(fenwick, diagram="capped-greenshields"),
        "fenwick_no_drop": opts(fenwick, capacity_drop=False),
        "fenwick_quarter_hours": dataclasses.replace(fenwick, demand=quarter, closures=shifted),
    }


def _column(values) -> list:
    a = np.asarray(values)
    if a.dtype.kind == "M":
        return [str(v) for v in a.astype("datetime64[s]")]
    if a.dtype.kind in "biu":
        return [int(v) for v in a]
    if a.dtype.kind == "f":
        return [float(v) for v in a]
    return [None if v is None else str(v) for v in a]


def record(plan: wzq.Plan) -> dict:
    result = wzq.analyse(plan)
    run = result.run
    s = dataclasses.asdict(result.summary)
    summary = {
        k: [str(x) for x in v]
        if isinstance(v, tuple)
        else str(v)
        if isinstance(v, dt.datetime)
        else v
        for k, v in s.items()
    }
    out = {
        "hourly": {c: _column(result.hourly[c]) for c in result.hourly.columns},
        "intervals": {c: _column(result.intervals[c]) for c in result.intervals.columns},
        "summary": summary,
        "warnings": list(result.warnings),
    }
    if run.back_of_queue is not None:
        out["trajectory"] = {
            "times": _column(run.back_of_queue.times),
            "distance": _column(run.back_of_queue.distance),
        }
    return out


def main() -> None:
    plans = variants()
    data = {name: record(plan) for name, plan in plans.items()}
    windows = plan_windows(plans["fenwick"])
    data["fenwick_windows"] = {
        ws.label: np.flatnonzero(ws.allowed.ravel()).tolist() for ws in windows.sets
    }
    sim = lwr.simulate(plans["fenwick"], cells=120)
    data["fenwick_lwr"] = {
        "back_of_queue_m": _column(sim.back_of_queue_m[::50]),
        "stored_veh": _column(sim.stored_veh[::50]),
        "total_delay_veh_h": sim.total_delay_veh_h,
    }
    OUT.write_text(json.dumps(data) + "\n", encoding="utf-8")
    print(f"wrote {OUT} ({OUT.stat().st_size:,} bytes)")


if __name__ == "__main__":
    main()
