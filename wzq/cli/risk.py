"""``wzq risk PLAN``: the probability, hour by hour, that a plan breaks its limits,
over the scenarios of its count history and draws of the work-zone capacity (the
work is done by :mod:`wzq.engine.risk` and :mod:`wzq.engine.design_demand`)."""

from __future__ import annotations

import argparse
import math
import sys
from dataclasses import replace
from pathlib import Path
from typing import TextIO

import numpy as np

import wzq
from wzq import units as u
from wzq.cli import EXIT_OK, explain, print_input_warnings
from wzq.engine.plan import Plan, PlanError, Problem, RiskOptions
from wzq.engine.risk import PROBABILITY_COLUMNS, RiskResult, assess
from wzq.io.plans import load_any
from wzq.present.risk import risk_summary_lines, share_digits
from wzq.present.tables import LENGTH_UNKNOWN, limits_text

__all__ = [
    "RISK_DESCRIPTION",
    "cmd_risk",
    "configure",
    "print_risk",
    "run",
]

RISK_DESCRIPTION = """\
How likely is it that the plan breaks the agency's limits? The plan is run by
the engine on every scenario -- every historical period of the plan's count
history whose days match the plan's day types (when the plan gives its demand
as a count history), and, with a capacity coefficient of variation, many
draws of each closure's capacity around the model's value -- exactly as a
single analysis runs it, the queue carried from hour to hour.

Printed per hour: the share of scenarios in which the queue length, the
average delay and demand/capacity break their limits, the share that break
any limit with its confidence interval, and the 50th, 85th and 95th
percentiles of the longest queue and of the average delay. Nothing is written.
"""


def _pct(p: float) -> str:
    return f"{share_digits(p):>5} %"


def _hour(t) -> str:
    return f"{t:%a %Y-%m-%d %H:%M}"


def print_risk(
    result: RiskResult, plan: Plan, *, all_hours: bool = False, out: TextIO | None = None
) -> None:
    """The text report of a risk assessment."""
    out = out or sys.stdout
    long_name, long_m = u.LONG_LENGTH[plan.site.unit_system]
    title = plan.meta.title or plan.site.name or "Lane-closure plan"
    s = result.summary
    level = result.options.confidence
    print(f"Risk of breaking the limits: {title}", file=out)
    print(f"  Limits: {limits_text(plan)}", file=out)
    if plan.history is not None:
        h = plan.history
        print(
            f"  Demand: designed from {h.file or h.counts.source} "
            f"({h.counts.first_day} to {h.counts.last_day}): {h.rule.describe()}",
            file=out,
        )
    print(f"  Scenarios: {s.scenarios:,} ({result.runs.scenarios.source})", file=out)
    print("", file=out)
    print(
        f"  Some hour breaks a limit in {_pct(s.p_any_hour).strip()} of scenarios "
        f"({level:.0%} interval {share_digits(s.p_any_hour_low)}-"
        f"{share_digits(s.p_any_hour_high)} %)",
        file=out,
    )
    if s.worst_hour is not None:
        print(f"  Worst hour: {_hour(s.worst_hour)}, {_pct(s.worst_hour_p).strip()}", file=out)
    q = dict(risk_summary_lines(result, plan.site.unit_system))["Longest queue of the plan"]
    d = ", ".join(f"{p}th {v:,.0f}" for p, v in s.total_delay_veh_h.items())
    print(f"  Longest queue of the plan: {q}", file=out)
    print(f"  Total delay (veh-h): {d}", file=out)
    print("", file=out)
    h = result.hourly
    names = [c for c in PROBABILITY_COLUMNS.values() if c in h]
    heads = {"p_queue_length": "queue", "p_delay": "delay", "p_demand_capacity": "d/c"}
    pcts = result.percentiles
    head = f"  {'hour':<20} {'closed':<6}" + "".join(f"{heads[c]:>8}" for c in names)
    head += f"{'any limit':>10} {'(interval)':<13}"
    head += f"  queue ({long_name}) " + "/".join(f"p{p}" for p in pcts)
    head += "   delay (min/veh) " + "/".join(f"p{p}" for p in pcts)
    print(head, file=out)
    keep = h["closure"].to_numpy() | (h["p_any"].to_numpy() > 0)
    if all_hours:
        keep[:] = True
    for i in np.flatnonzero(keep):
        row = h.iloc[i]
        line = f"  {_hour(row['hour_start']):<20} {'yes' if row['closure'] else '':<6}"
        line += "".join(f"{share_digits(row[c]):>7}%" for c in names)
        line += f"{share_digits(row['p_any']):>9}% ({share_digits(row['p_any_low']):>4}-"
        line += f"{share_digits(row['p_any_high']):>4} %)"
        line += "  " + " ".join(_length(row[f"queue_length_p{p}_m"] / long_m) for p in pcts)
        line += "   " + " ".join(f"{row[f'average_delay_p{p}_min']:6.1f}" for p in pcts)
        print(line, file=out)
    hidden = int((~keep).sum())
    if hidden:
        print(
            f"  ({hidden} hours without a closure and with no scenario over a limit are not "
            "shown; --all-hours shows them)",
            file=out,
        )
    print("", file=out)
    for line in result.method():
        print(f"  {line}", file=out)
    print(f"\n{wzq.CAUTION}", file=out)


def cmd_risk(args: argparse.Namespace) -> int:
    plan = load_any(Path(args.path))
    options = plan.risk or RiskOptions()
    changes = {}
    if args.cv is not None:
        if not args.cv >= 0:
            raise PlanError([Problem("--cv", "give a coefficient of variation, 0 or more")])
        changes["capacity_cv"] = args.cv if args.cv > 0 else None
    for name in ("draws", "seed", "confidence"):
        if getattr(args, name) is not None:
            changes[name] = getattr(args, name)
    options = replace(options, **changes)
    if plan.history is None and options.capacity_cv is None:
        raise PlanError(
            "the plan has no count history and no capacity variation, so there is only one "
            "scenario; give the demand as a count history in the plan, or --cv (e.g. 0.08)",
            where=args.path,
        )
    result = assess(plan, options=options)
    print_risk(result, plan, all_hours=args.all_hours)
    print_input_warnings(plan)
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq risk``."""
    explain(
        p,
        description=RISK_DESCRIPTION,
        epilog=wzq.CAUTION,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("path", help="a .json plan (with a count history or --cv) or a workbook")
    p.add_argument(
        "--cv",
        type=float,
        metavar="X",
        help="coefficient of variation of the work-zone capacity, e.g. 0.08 (0: none); "
        "overrides the plan's risk.capacity_cv. There is no default: state it from a study "
        "of work zones like yours",
    )
    p.add_argument("--draws", type=int, metavar="N", help="Monte Carlo draws (default 1000)")
    p.add_argument("--seed", type=int, metavar="S", help="seed of the draws (default 1)")
    p.add_argument(
        "--confidence", type=float, metavar="C", help="level of the intervals (default 0.95)"
    )
    p.add_argument("--all-hours", action="store_true", help="show every hour")


run = cmd_risk


def _length(x: float) -> str:
    """A percentile of the longest queue in the table's column (``unknown`` when not
    known: NaN)."""
    return f"{LENGTH_UNKNOWN:>7}" if math.isnan(x) else f"{x:6.2f}"
