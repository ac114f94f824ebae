"""``wzq demo [PATH]``: analyse the shipped invented example, print it, and write the
filled example workbook with its results."""

from __future__ import annotations

import argparse

import wzq
from wzq.cli import EXIT_OK, explain
from wzq.io.plans import demo_plan
from wzq.io.workbook.run import write_demo_workbook
from wzq.present.show import print_result

__all__ = ["configure", "run"]


def cmd_demo(args: argparse.Namespace) -> int:
    result = wzq.analyse(demo_plan())
    print_result(result, all_hours=args.all_hours)
    if not args.no_workbook:
        path = write_demo_workbook(args.path)
        print(f"\nwrote the example workbook with its results: {path}")
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq demo``."""
    explain(
        p,
        description="Analyse the shipped invented example (a two-night closure on the "
        "fictional Kestrel Ridge Parkway), print the summary and hourly table, and write "
        "the filled example workbook with its results (never over an existing file).",
    )
    p.add_argument(
        "path",
        nargs="?",
        default=".",
        metavar="PATH",
        help="folder or .xlsx file for the example workbook (default: the current folder)",
    )
    p.add_argument(
        "--all-hours",
        action="store_true",
        help="show every hour, not only closure hours and hours with a queue",
    )
    p.add_argument("--no-workbook", action="store_true", help="print only; write no workbook")


run = cmd_demo
