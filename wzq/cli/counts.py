"""``wzq counts FILE``: check a count file (TMG volume records, CSV or Excel) and
summarise what it holds (read by :mod:`wzq.io.counts`)."""

from __future__ import annotations

import argparse
import sys
from typing import TextIO

from wzq.cli import EXIT_OK, explain
from wzq.engine.plan import PlanError, Problem
from wzq.io.counts import CountRead, read_counts

__all__ = [
    "COUNTS_DESCRIPTION",
    "cmd_counts",
    "configure",
    "print_counts",
    "run",
]

COUNTS_DESCRIPTION = """\
Read a count file -- FHWA Traffic Monitoring Guide hourly volume records
(2013 or 2001 layout, fixed columns or '|'-separated), or a CSV table in long
form (date-time, count) or wide form (date, then 24 hourly counts) -- check
it, and print what it holds: the date range, complete days, gaps, days left
out (a lane out, restriction codes, daylight-saving changes) and the average
day by weekday. Every problem is listed with its line; nothing is written.
"""


def print_counts(read: CountRead, out: TextIO | None = None) -> None:
    """What a count file holds."""
    out = out or sys.stdout
    lines = read.summary_lines()
    width = max(len(a) for a, _ in lines)
    print("Count history (check it before designing from it)", file=out)
    for label, text in lines:
        print(f"  {label:>{width}}  {text}", file=out)
    print("", file=out)
    print(
        f"  {'weekday':<10} {'days':>5} {'mean day (veh)':>15} {'mean peak hour (veh/h)':>23}",
        file=out,
    )
    for name, n, total, peak in read.daily_table():
        if n:
            print(f"  {name:<10} {n:5d} {total:15,.0f} {peak:23,.0f}", file=out)
        else:
            print(f"  {name:<10} {n:5d} {'-':>15} {'-':>23}", file=out)
    if read.warnings:
        print("", file=out)
        for w in read.warnings:
            print(f"  warning: {w}", file=out)


def cmd_counts(args: argparse.Namespace) -> int:
    if args.lanes is not None and not 1 <= args.lanes <= 8:
        raise PlanError([Problem("--lanes", "give the counted lanes, 1-8")])
    read = read_counts(
        args.path,
        sheet=args.sheet,
        station=args.station,
        direction=args.direction,
        lanes=args.lanes,
        interval_minutes=args.interval_minutes,
        stamp=args.stamp,
        edition=args.edition,
    )
    print_counts(read)
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq counts``."""
    explain(p, description=COUNTS_DESCRIPTION, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("path", help="a TMG volume file, a .csv or an .xlsx")
    p.add_argument("--station", help="station ID, when the file holds several")
    p.add_argument("--direction", help="north, south, east, west (NB, SB ...) or the TMG code 0-9")
    p.add_argument(
        "--lanes",
        type=int,
        metavar="N",
        help="lanes counted in this direction (sets the check for impossible counts)",
    )
    p.add_argument("--sheet", help="the sheet of an Excel file (default: the first)")
    p.add_argument(
        "--interval-minutes",
        type=float,
        metavar="M",
        help="length of a count interval, when the time stamps do not show it",
    )
    p.add_argument(
        "--stamp",
        choices=("start", "end"),
        default="start",
        help="whether a CSV time stamp is the start (default) or the end of its interval",
    )
    p.add_argument(
        "--edition",
        choices=("2013", "2001"),
        help="TMG record layout, when the file does not show it",
    )


run = cmd_counts
