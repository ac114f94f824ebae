"""``wzq windows PATH``: the hours in which each lane closure may be in place.

The search itself is :func:`wzq.engine.windows.plan_windows`.
"""

from __future__ import annotations

import argparse
import datetime as dt
import sys
import textwrap
from pathlib import Path
from typing import TextIO

import pandas as pd

import wzq
from wzq import units as u
from wzq.cli import EXIT_OK, explain, print_input_warnings
from wzq.engine import costs as rc
from wzq.engine.plan import NIGHT_END_HOUR, NIGHT_START_HOUR, Plan, PlanError, Problem
from wzq.engine.risk_windows import closure_windows
from wzq.engine.windows import (
    ALL_HOURS_RULE,
    SYMBOLS,
    WindowSet,
    WindowsResult,
    day_rows,
    intervals_for,
    plan_windows,
)
from wzq.io.plans import load_any_and_book
from wzq.present.tables import limits_text, windows_listed_text
from wzq.present.terminal import TermColumn, console_width, print_table

__all__ = [
    "BARRIER_HELP",
    "DESCRIPTION",
    "cmd_windows",
    "configure",
    "print_chart",
    "print_windows",
    "run",
]

DESCRIPTION = """\
Find when each lane closure may be in place at all. For every lane
configuration (lanes closed out of the lanes in normal operation) the plan's
demand is searched for every closure period, start and end on the demand's
time grid, that keeps every hour of the run within the plan's limits, the
queue left behind after the closure ends included. The plan's own closure
schedule is not used.

Printed per configuration: a chart with one row of 24 hours per day, the
longest allowable windows with the delay they add and its road-user cost,
and with --duration every start at which a closure of that length is allowed.
"""

BARRIER_HELP = {"soft": "cones, drums or other soft separation", "hard": "concrete barrier"}


def _lanes_closed(text: str | None) -> list[int] | None:
    if text is None:
        return None
    out: list[int] = []
    for part in text.split(","):
        part = part.strip()
        try:
            out.append(int(part))
        except ValueError:
            raise PlanError(
                f"'{part}' is not a whole number of lanes; give lane counts like 1,2",
                where="--lanes-closed",
            ) from None
    return out


def _days(text: str | None) -> set[dt.date] | None:
    if text is None:
        return None
    out: set[dt.date] = set()
    for part in text.split(","):
        try:
            out.add(dt.date.fromisoformat(part.strip()))
        except ValueError:
            raise PlanError(
                f"'{part.strip()}' is not a date; write days like 2027-05-03,2027-05-04",
                where="--days",
            ) from None
    return out


def _when(t: dt.datetime) -> str:
    return f"{t:%a %Y-%m-%d %H:%M}"


def _span(start: dt.datetime, end: dt.datetime) -> str:
    """``Mon 2027-05-03 21:00 to 24:00``, or the full end when on a later day."""
    if end.date() == start.date():
        return f"{_when(start)} to {end:%H:%M}"
    if end == dt.datetime.combine(start.date() + dt.timedelta(days=1), dt.time()):
        return f"{_when(start)} to 24:00"
    return f"{_when(start)} to {_when(end)}"


def print_chart(ws: WindowSet, days: set[dt.date] | None, out: TextIO) -> None:
    """The 24-hour rows of one configuration."""
    rows = day_rows(ws)
    if days is not None and not ws.day_type.fold:
        rows = [(label, r) for label, r in rows if dt.date.fromisoformat(label[4:]) in days]
    width = max([len(label) for label, _ in rows] + [14])
    tens = "".join(str(h // 10) if h % 10 == 0 else " " for h in range(24))
    units = "".join(str(h % 10) for h in range(24))
    print(f"  {'hour':>{width}}  {tens}", file=out)
    print(f"  {'':>{width}}  {units}", file=out)
    for label, row in rows:
        print(f"  {label:>{width}}  {''.join(SYMBOLS[s] for s in row)}", file=out)
    if not rows:
        print("  (no day of the data matches --days)", file=out)


def _typical_span(ws: WindowSet, start: dt.datetime, end: dt.datetime) -> str:
    """``day 1 19:00 to day 2 07:00`` on a typical day laid out twice."""
    day0 = ws.day_type.demand.start.date()

    def at(t: dt.datetime) -> str:
        return f"day {(t.date() - day0).days + 1} {t:%H:%M}"

    return f"{at(start)} to {at(end)}"


def _window_columns(ws: WindowSet, pairs: list[tuple[int, int]], currency: str) -> list[TermColumn]:
    """The longest windows as a terminal table (:mod:`wzq.present.terminal`)."""
    rows = []
    for s, e in pairs:
        w = ws.window(s, e)
        span = _typical_span(ws, w.start, w.end) if ws.day_type.fold else _span(w.start, w.end)
        rows.append(
            (span, f"{w.hours:,.1f}", f"{w.added_delay_veh_h:,.1f}", f"{w.road_user_cost:,.0f}")
        )
    spans, hours, delay, cost = zip(*rows, strict=True)
    return [
        TermColumn("Longest windows", list(spans), right=False),
        TermColumn("Length\n(h)", list(hours)),
        TermColumn("Added delay\n(veh-h)", list(delay)),
        TermColumn(f"Road-user\ncost ({currency})", list(cost), priority=2),
    ]


def _keep(ws: WindowSet, pairs: list[tuple[int, int]], days: set[dt.date] | None):
    if days is None or ws.day_type.fold:
        return pairs
    return [(s, e) for s, e in pairs if ws.clock(s).date() in days]


def print_windows(
    result: WindowsResult,
    plan: Plan,
    *,
    barrier: str = "soft",
    duration_h: float | None = None,
    days: set[dt.date] | None = None,
    top: int = 5,
    out: TextIO | None = None,
) -> None:
    """The text report of a window search."""
    out = out or sys.stdout
    width = console_width(out)

    def para(text: str) -> None:  # prose wrapped to the terminal, indented
        print(textwrap.fill(text, width, initial_indent="  ", subsequent_indent="    "), file=out)

    title = plan.meta.title or plan.site.name or "Lane-closure plan"
    print(f"Closure windows: {title}", file=out)
    if plan.site.name and plan.meta.title:
        print(f"{plan.site.name}, {plan.site.direction}".rstrip(", "), file=out)
    para(f"Limits: {limits_text(plan)}")
    para(
        f"Closures behind {BARRIER_HELP[barrier]}; night-time capacity from the clock "
        f"({NIGHT_START_HOUR:02d}:00-{NIGHT_END_HOUR:02d}:00)"
    )
    if result.rule != ALL_HOURS_RULE:
        para(result.rule)
    para(f"Road-user cost in {rc.cost_basis(result.costs, plan.site.heavy_vehicle_share)}")
    currency = result.costs.currency
    for ws in result.sets:
        print("", file=out)
        head = (
            ws.label
            if len({w.day_type.name for w in result.sets}) == 1
            else (f"{ws.label} - {ws.day_type.name}")
        )
        print(head, file=out)
        print_chart(ws, days, out)
        print(
            f"  {SYMBOLS['whole']} a closure may be in place all hour   "
            f"{SYMBOLS['part']} part of the hour   {SYMBOLS['no']} not allowed",
            file=out,
        )
        every = _keep(ws, ws.longest(), days)
        longest = every[:top]
        if longest:
            print_table(_window_columns(ws, longest, currency), out, what="table")
            cut = windows_listed_text([(ws.label, len(every))], top)
            if cut:
                para(f"({cut})")
        else:
            print(
                "  No closure of this configuration keeps every hour within the limits.", file=out
            )
        if duration_h is not None:
            d = intervals_for(duration_h * u.HOUR, ws.interval_s)
            grid_h = d * ws.interval_s / u.HOUR
            rounded = "" if abs(grid_h - duration_h) < 1e-9 else f" (rounded up to {grid_h:g} h)"
            starts = _keep(ws, ws.starts_for(duration_h * u.HOUR), days)
            print(f"  Starts for a {duration_h:g}-hour closure{rounded}:", file=out)
            if not starts:
                print("    none", file=out)
            by_day: dict[dt.date, list[str]] = {}
            for s, _ in starts:
                t = ws.clock(s)
                by_day.setdefault(t.date(), []).append(f"{t:%H:%M}")
            for day, times in by_day.items():
                label = ws.day_type.name if ws.day_type.fold else f"{day:%a %Y-%m-%d}"
                print(f"    {label}: {' '.join(times)}", file=out)
    for note in result.notes:
        print(f"\nnote: {note}", file=out)
    print(f"\n{wzq.CAUTION}", file=out)


def cmd_windows(args: argparse.Namespace) -> int:
    lanes = _lanes_closed(args.lanes_closed)
    days = _days(args.days)
    problems = []
    if args.duration is not None and not args.duration > 0:
        problems.append(Problem("--duration", "give the closure length in hours, above 0"))
    if args.top < 1:
        problems.append(Problem("--top", "list at least 1 window"))
    if days is not None and args.typical:
        problems.append(
            Problem("--days", "--days picks calendar days and cannot be used with --typical")
        )
    if args.risk is not None and not 0 <= args.risk < 100:
        problems.append(Problem("--risk", "give the accepted chance in percent, 0 to under 100"))
    if args.risk is not None and args.typical:
        problems.append(
            Problem("--risk", "the search at a risk runs on the calendar days; leave out --typical")
        )
    if problems:
        raise PlanError(problems)
    if args.risk is not None and 0 < args.risk <= 1:  # as a percent cell's value is queried
        print(
            f"warning: --risk {args.risk:g} is a chance of {args.risk:g} %: did you mean "
            f"--risk {args.risk * 100:g} ({args.risk * 100:g} %)? The chance is given in "
            f"percent; ignore this if {args.risk:g} % is right"
        )
    plan, book = load_any_and_book(Path(args.path))
    if lanes is not None:
        bad = [k for k in lanes if not 1 <= k < plan.site.lanes]
        if bad:
            raise PlanError(
                f"{bad[0]} lanes closed is not possible on this road of {plan.site.lanes} "
                f"lanes; use 1 to {plan.site.lanes - 1}",
                where="--lanes-closed",
            )
    if days is not None:  # a day outside the plan would print "no closure keeps the limits"
        first, last = plan.demand.start.date(), (plan.demand.end - dt.timedelta(seconds=1)).date()
        outside = sorted(d for d in days if not first <= d <= last)
        if outside:
            raise PlanError(
                f"{', '.join(d.isoformat() for d in outside)} "
                f"{'is not a day' if len(outside) == 1 else 'are not days'} of the plan "
                f"({first} to {last}); give days of the plan",
                where="--days",
            )
    if args.typical:
        result = plan_windows(plan, lanes, barrier=args.barrier, typical=True)
    else:
        level = None if args.risk is None else args.risk / 100
        known = None
        if book is not None and lanes is None and args.barrier == "soft" and level is None:
            # the search a run kept in the workbook (the same configurations, when its
            # inputs are the plan's)
            from wzq.io.workbook.windows_cache import stored_tables

            known = stored_tables(plan, book)
        result = closure_windows(plan, lanes, barrier=args.barrier, level=level, known=known)
    with pd.option_context("display.width", 250):
        print_windows(
            result,
            plan,
            barrier=args.barrier,
            duration_h=args.duration,
            days=days,
            top=args.top,
        )
    print_input_warnings(plan)
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq windows``."""
    explain(
        p,
        description=DESCRIPTION,
        epilog=wzq.CAUTION,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("path", help="a .json plan or a .xlsx/.xlsm workbook")
    p.add_argument(
        "--lanes-closed",
        metavar="N[,N...]",
        help="lane configurations to search, as lanes closed, e.g. 1,2 "
        "(default: every closure that leaves one lane open)",
    )
    p.add_argument(
        "--duration",
        type=float,
        metavar="HOURS",
        help="also list every start at which a closure this long is allowed; include "
        "set-up and take-down (e.g. 6 h of work + 1 h each way: --duration 8)",
    )
    p.add_argument(
        "--barrier",
        choices=("soft", "hard"),
        default="soft",
        help="separation of the work area: soft (cones, drums; the default) or hard "
        "(concrete barrier); it changes the work-zone capacity",
    )
    p.add_argument(
        "--typical",
        action="store_true",
        help="search a typical weekday and weekend day averaged from the demand's whole "
        "days, instead of each calendar day",
    )
    p.add_argument(
        "--days",
        metavar="DATE[,DATE...]",
        help="show only these calendar days (e.g. 2027-05-03,2027-05-04); the whole "
        "demand period is still searched",
    )
    p.add_argument(
        "--risk",
        type=float,
        metavar="PERCENT",
        help="allow a closure where the share of the plan's scenarios (its count history's "
        "periods, times the capacity draws) in which some hour breaks a limit is at most "
        "PERCENT, e.g. 10 (default: the plan's risk.window_risk_percent, else the design "
        "demand alone)",
    )
    p.add_argument(
        "--top",
        type=int,
        default=5,
        metavar="N",
        help="longest windows to list per configuration (default 5)",
    )


run = cmd_windows
