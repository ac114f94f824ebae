"""``wzq run PATH [-o OUT]``: analyse a plan workbook and write the results into it
(the file backend, :func:`wzq.io.workbook.run.run_to`)."""

from __future__ import annotations

import argparse

import wzq
from wzq.cli import EXIT_OK, explain
from wzq.io.workbook import layout
from wzq.io.workbook.run import run_to
from wzq.present.tables import summary_lines

__all__ = ["configure", "run"]


def cmd_run(args: argparse.Namespace) -> int:
    """``wzq run PATH [-o OUT]``."""
    outcome = run_to(
        args.path, args.output, space_time=args.space_time, windows=args.windows, force=args.force
    )
    result = outcome.result
    for note in outcome.notes:
        print(f"warning: {note}")
    print(f"wrote the results to {outcome.target}")
    lines = summary_lines(result)
    if outcome.risk is not None:  # the chance of breaking the limits, as on the sheets
        from wzq.present.risk import risk_summary_lines

        lines += [
            (f"Risk: {k[0].lower()}{k[1:]}", v)
            for k, v in risk_summary_lines(outcome.risk, result.plan.site.unit_system)
        ]
    width = max(len(k) for k, _ in lines)
    for label, text in lines:
        print(f"  {label:<{width}}  {text}")
    for w in result.warnings:
        print(f"warning: {w}")
    print(f"\n{wzq.CAUTION}")  # one line, as in every other output
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq run``."""
    sheets = ", ".join(layout.OUTPUT_SHEETS)
    explain(
        p,
        description="Read the plan from a workbook (.xlsx or .xlsm), analyse it, and write the "
        f"sheets {sheets} into it, replacing the ones from the previous run. Input "
        "sheets, your own sheets, formulas, styles and macros are kept. The file is "
        "replaced in one step, so it is never left half-written; when the input needs "
        "fixing nothing is written and every problem is listed with its sheet and cell.",
        epilog=wzq.CAUTION,
    )
    p.add_argument("path", metavar="PATH", help="the plan workbook (.xlsx or .xlsm)")
    p.add_argument(
        "-o",
        "--output",
        metavar="OUT",
        help="write the workbook with its results to OUT and leave PATH as it is "
        "(same file type as PATH); an existing OUT is replaced only when it holds results "
        "of PATH (see --force)",
    )
    p.add_argument(
        "--force",
        action="store_true",
        help="replace OUT even when it is not a results file of PATH",
    )
    p.add_argument(
        "--space-time",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="add (or leave out) the space-time picture of an LWR simulation of the "
        "approach on the Charts sheet (default: as the Site sheet says)",
    )
    p.add_argument(
        "--windows",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="fill (or leave empty) the Closure windows sheet: when may each lane "
        "configuration be in place at all (default: as the Limits sheet says)",
    )


run = cmd_run
