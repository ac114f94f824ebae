"""The ``wzq report`` sub-command: the printable PDF report of one plan.

The report itself is :func:`wzq.io.report.write_report`.
"""

from __future__ import annotations

import argparse
import dataclasses
from pathlib import Path

import wzq
from wzq.cli import EXIT_OK, explain
from wzq.engine.plan import PlanError, Problem
from wzq.io.plans import load_any_and_book
from wzq.io.report import PAPERS, write_report

__all__ = [
    "DESCRIPTION",
    "cmd_report",
    "configure",
    "default_output",
    "output_path",
    "run",
]

DESCRIPTION = """\
Analyse a plan (a .json plan or a .xlsx/.xlsm workbook) and write the printable
report: title block with prepared-by and checked-by lines, the inputs with
units, the hour-by-hour queue and delay table with each hour checked against
the agency's limits, charts, and a note on the method and its sources. Pages
are landscape. The plan file is only read, never changed.
"""


def default_output(source: Path) -> Path:
    """``plan.json`` -> ``plan_report.pdf`` in the same folder."""
    return source.with_name(f"{source.stem}_report.pdf")


def output_path(source: Path, output: str | None) -> Path:
    """Where the report goes; refuses to write over the plan itself."""
    if output is None:
        out = default_output(source)
    else:
        out = Path(output)
        if out.is_dir():
            out = out / default_output(source).name
    if out.exists() and out.resolve() == source.resolve():
        raise PlanError(
            [Problem("-o", f"{out} is the plan itself; choose another name for the report")]
        )
    if out.suffix.lower() != ".pdf":
        raise PlanError(
            [Problem("-o", f"'{out.name}' is not a .pdf name; end the report's name in .pdf")]
        )
    return out


def cmd_report(args: argparse.Namespace) -> int:
    source = Path(args.path)
    plan, book = load_any_and_book(source)
    if args.space_time is not None:
        plan = dataclasses.replace(
            plan, options=dataclasses.replace(plan.options, space_time=args.space_time)
        )
    if args.windows is not None:
        plan = dataclasses.replace(
            plan, options=dataclasses.replace(plan.options, closure_windows=args.windows)
        )
    out = output_path(source, args.output)
    result = wzq.analyse(plan)
    windows = None
    if book is not None and plan.options.closure_windows:  # the search the last run kept
        from wzq.io.workbook.windows_cache import stored_tables

        windows = stored_tables(plan, book)
    try:
        write_report(result, out, paper=args.paper, source=source.name, windows=windows)
    except OSError as e:
        raise PlanError(
            [
                Problem(
                    str(out),
                    f"cannot write the report ({e.strerror or e}); check the folder and "
                    "close the file if another program has it open",
                )
            ]
        ) from None
    print(f"wrote {out}")
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq report``."""
    explain(
        p,
        description=DESCRIPTION,
        epilog=wzq.CAUTION,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("path", help="a .json plan or a .xlsx/.xlsm workbook")
    p.add_argument(
        "-o",
        "--output",
        metavar="REPORT.pdf",
        help="where to write the report (default: PLAN_report.pdf beside the plan; "
        "a folder puts it there)",
    )
    p.add_argument(
        "--paper",
        choices=tuple(PAPERS),
        default="letter",
        help="paper size, used in landscape (default: letter)",
    )
    p.add_argument(
        "--space-time",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="add (or leave out) the space-time check, an LWR simulation of the approach "
        "(default: as the plan says)",
    )
    p.add_argument(
        "--windows",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="add (or leave out) the page of allowable closure hours "
        "(default: as the plan says: 'Closure windows sheet' on the Limits sheet)",
    )


run = cmd_report
