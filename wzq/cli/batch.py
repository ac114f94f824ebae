"""The ``wzq batch`` sub-command: every plan in a folder, one summary.

The work itself is :func:`wzq.io.batch.runner.run_batch`; this module only parses options,
shows a progress bar when standard error is a terminal, and prints a short
closing summary.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import TextIO

import wzq
from wzq.cli import EXIT_FAILURE, EXIT_INPUT, EXIT_OK, explain
from wzq.engine.plan import PlanError, Problem
from wzq.io.batch.runner import DEFAULT_RETRIES, DEFAULT_SUMMARY, BatchResult, Outcome, run_batch
from wzq.present.printable import printable, unwrapped

__all__ = [
    "DESCRIPTION",
    "EPILOG",
    "LISTED_PROBLEMS",
    "PAPERS",
    "batch_status",
    "closing_summary",
    "cmd_batch",
    "configure",
    "run",
]

#: Paper sizes of the PDF report (the keys of :data:`wzq.io.report.PAPERS`, which is
#: not imported here because the PDF library is slow to load).
PAPERS = ("letter", "a4")
#: Plans listed by name in the closing summary; the rest are on the Problems sheet.
LISTED_PROBLEMS = 10

DESCRIPTION = f"""\
Analyse every closure plan in FOLDER (.xlsx and .xlsm workbooks and .json
plans) and write one summary: a workbook with a row per plan, worst first
(longest queue and when, total delay, road-user delay cost where the plan gives
values of time, hours over a limit), a sheet listing every file that could not
be analysed with its problems (sheet and cell), and the same rows as a CSV
beside it. A bad file never stops the others and is never changed.

The work runs in parallel on this computer (one process per core), or on a
Dask distributed cluster with --scheduler (pip install 'wzq[cluster]'; the
workers must see FOLDER at the same path).

The summary goes to FOLDER/{DEFAULT_SUMMARY} unless -o says otherwise; Excel
lock files (~$*), hidden files and summaries themselves are skipped.
"""

EPILOG = f"""\
exit status: 0 every plan analysed; 2 some plans need fixing (listed on the
sheet Problems and below; the summary is written all the same); 1 an unexpected
error or a worker that kept dying.

{wzq.CAUTION}
"""


class _Bar:
    """A rich progress bar on standard error, shown only when it is a terminal."""

    def __init__(self, stream: TextIO) -> None:
        self.progress = None
        self.task = None
        self.failed = 0
        if not stream.isatty():
            return
        from rich.console import Console
        from rich.progress import (
            BarColumn,
            MofNCompleteColumn,
            Progress,
            TextColumn,
            TimeElapsedColumn,
            TimeRemainingColumn,
        )

        self.progress = Progress(
            TextColumn("{task.description}"),
            BarColumn(),
            MofNCompleteColumn(),
            TimeElapsedColumn(),
            TextColumn("left"),
            TimeRemainingColumn(),
            console=Console(file=stream),
            transient=True,
            # no refresh thread: worker processes are then forked from a single-threaded
            # parent (see wzq.io.batch.runner); the bar is redrawn as each plan finishes
            auto_refresh=False,
        )

    def start(self, total: int) -> None:
        if self.progress is not None:
            self.progress.start()
            self.task = self.progress.add_task("plans", total=total)
            self.progress.refresh()

    def advance(self, outcome: Outcome) -> None:
        if self.progress is None or self.task is None:
            return
        if not outcome.analysed:
            self.failed += 1
        text = f"plans ({self.failed} not analysed)" if self.failed else "plans"
        self.progress.update(self.task, advance=1, description=text)
        self.progress.refresh()

    def stop(self) -> None:
        if self.progress is not None:
            self.progress.stop()


def closing_summary(result: BatchResult, out: TextIO, err: TextIO) -> None:
    """A few lines on what was done, and the plans that need attention."""
    n = len(result.outcomes)
    rows = result.rows
    bad = result.not_analysed
    over = sum(r.status == "over limit" for r in rows)
    kept = sum(o.reused and o.analysed for o in result.outcomes)
    reused = f" ({kept} of them unchanged since the last summary, results kept)" if kept else ""
    print(
        f"{len(rows)} of {n} plan{'s' if n != 1 else ''} analysed in "
        f"{result.seconds:.1f} s{reused}; {over} over a limit",
        file=out,
    )
    if rows and rows[0].status == "over limit":
        w = rows[0]
        at = "" if w.max_queue_at is None else f" at {w.max_queue_at:%a %Y-%m-%d %H:%M}"
        shown = "".join(ch for ch in w.title if ch.isprintable())  # no terminal controls
        title = f" ({shown})" if shown else ""
        print(
            f"worst: {printable(w.file)}{title}, longest queue {w.max_queue_mi:.2f} mi / "
            f"{w.max_queue_km:.2f} km"
            f"{at}, {w.hours_over_limit} hour{'s' if w.hours_over_limit != 1 else ''} over "
            "a limit",
            file=out,
        )
    print(f"summary: {printable(result.summary)} (and {printable(result.csv.name)})", file=out)
    for note in result.notes:
        print(f"note: {printable(note)}", file=out)
    other = [o for o in result.outcomes if o.analysed and o.issues]
    for o in [*bad, *other][:LISTED_PROBLEMS]:
        first = o.issues[0]
        more = len(o.issues) - 1
        tail = f" (+{more} more)" if more else ""
        where = first.where if first.where.startswith(o.file) else f"{o.file}: {first.where}"
        print(f"wzq: {printable(where)}: {printable(first.message)}{tail}", file=err)
    hidden = len(bad) + len(other) - LISTED_PROBLEMS
    if hidden > 0:
        print(f"wzq: ... and {hidden} more files; see the sheet Problems", file=err)
    if bad:
        same = sum(o.reused for o in bad)
        unchanged = f" ({same} of them unchanged since the last summary)" if same else ""
        print(
            f"wzq: {len(bad)} plan{'s' if len(bad) != 1 else ''} could not be analysed"
            f"{unchanged}; they are listed on the sheet Problems of the summary",
            file=err,
        )
    print(wzq.CAUTION, file=out)


def cmd_batch(args: argparse.Namespace) -> int:
    """``wzq batch FOLDER ...``."""
    if args.workers is not None and args.workers < 1:
        raise PlanError([Problem("--workers", "give 1 or more worker processes")])
    if args.workers is not None and args.scheduler:
        raise PlanError([Problem("--workers", "the cluster decides the workers; drop --workers")])
    if args.retries < 0:
        raise PlanError([Problem("--retries", "give 0 or more retries")])
    bar = _Bar(unwrapped(sys.stderr))  # the bar writes its own terminal codes
    try:
        result = run_batch(
            Path(args.folder),
            summary=args.output,
            write_back=args.write_back,
            workers=args.workers,
            scheduler=args.scheduler,
            recursive=args.recursive,
            resume=args.resume,
            reports=args.reports,
            paper=args.paper,
            retries=args.retries,
            progress=bar.advance,
            on_start=bar.start,
        )
    finally:
        bar.stop()
    closing_summary(result, sys.stdout, sys.stderr)
    return batch_status(result)


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq batch``."""
    explain(
        p,
        description=DESCRIPTION,
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("folder", metavar="FOLDER", help="the folder holding the plans")
    p.add_argument(
        "-o",
        "--output",
        metavar="SUMMARY.xlsx",
        help=f"where to write the summary workbook (default: FOLDER/{DEFAULT_SUMMARY}); "
        "the CSV is written beside it with the same name",
    )
    p.add_argument(
        "--write-back",
        action="store_true",
        help="also write the results into each workbook, as `wzq run` does "
        "(JSON plans are only read)",
    )
    p.add_argument(
        "--workers",
        type=int,
        metavar="N",
        help="local worker processes (default: one per core)",
    )
    p.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="run on the Dask distributed cluster whose scheduler is at ADDRESS, e.g. "
        "tcp://10.0.0.5:8786 (needs pip install 'wzq[cluster]')",
    )
    p.add_argument(
        "-r", "--recursive", action="store_true", help="also read the plans in sub-folders"
    )
    p.add_argument(
        "--resume",
        action="store_true",
        help="re-analyse only the plans whose file changed since the summary was written "
        "(its bytes' SHA-256, kept in the summary) or that a newer wzq must redo; the "
        "others keep their row",
    )
    p.add_argument(
        "--reports",
        metavar="DIR",
        help="also write each plan's PDF report into DIR (NAME_report.pdf)",
    )
    p.add_argument(
        "--paper",
        choices=PAPERS,
        default="letter",
        help="paper size of the PDF reports (default: letter)",
    )
    p.add_argument(
        "--retries",
        type=int,
        default=DEFAULT_RETRIES,
        metavar="N",
        help=f"times a plan is tried again when its worker dies (default: {DEFAULT_RETRIES})",
    )


run = cmd_batch


def batch_status(result: BatchResult) -> int:
    """The exit status of a folder run: 0 every plan analysed (and written back or
    reported when asked); 2 some plans need fixing (all listed); 1 an unexpected error
    or a worker that kept dying."""
    if result.unexpected:
        return EXIT_FAILURE
    return EXIT_INPUT if result.need_fixing else EXIT_OK
