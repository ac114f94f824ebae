"""The ``wzq`` command.

Exit status: 0 done, 2 the input needs fixing (every problem is listed, one per
line, with where it is), 1 an unexpected failure (please report it).
"""

from __future__ import annotations

import argparse
import re
import sys
import textwrap
from collections.abc import Callable, Sequence
from importlib import resources
from pathlib import Path

import numpy as np
import pandas as pd

import wzq
from wzq.engine.plan import Plan, PlanError
from wzq.engine.results import Result
from wzq.io.jsonplan import load_plan
from wzq.present.printable import printable, safe_streams
from wzq.present.tables import (
    exit_ramp_display,
    hourly_columns,
    hourly_display,
    landmark_display,
    summary_lines,
)
from wzq.present.terminal import TermColumn, console_width, print_table

EXIT_OK = 0
EXIT_FAILURE = 1
EXIT_INPUT = 2

DEMO_PLAN = "kestrel_ridge_weeknight.json"

DESCRIPTION = """\
Work-zone queue calculator. For a lane-closure plan (site, hourly demand,
closure schedule) it computes work-zone capacity from the Highway Capacity
Manual, the exact deterministic queue carried from hour to hour, the physical
queue length by shockwave analysis, and the delay, hour by hour, and checks
each hour against the agency's limits.

Start with `wzq demo` to see an invented example analysed.
"""

EPILOG = f"""\
exit status: 0 done, 2 the input needs fixing, 1 unexpected failure.

{wzq.CAUTION}
"""


def demo_plan() -> Plan:
    """The shipped invented example (a weeknight closure on a fictional parkway)."""
    ref = resources.files("wzq") / "data" / DEMO_PLAN
    with resources.as_file(ref) as path:
        return load_plan(path)


def load_any(path: Path) -> Plan:
    """A plan from a JSON file (workbooks are read by :mod:`wzq.io.workbook`)."""
    if not path.exists():
        raise PlanError(f"no such file; check the path: {path}", where=str(path))
    if path.suffix.lower() == ".json":
        return load_plan(path)
    from wzq.io.workbook.reader import read_plan  # imported late: openpyxl is slow to import

    return read_plan(path)


#: Terminal priority of each hourly column (1 is kept longest; see :mod:`wzq.present.terminal`).
TERMINAL_PRIORITY = {
    "demand_veh_h": 1,
    "capacity_veh_h": 1,
    "discharge_veh_h": 1,
    "queue_length_max_m": 1,
    "queue_max_veh": 2,
    "average_delay_min": 2,
    "delay_veh_h": 3,
    "lanes_open": 3,
    "max_queue_wait_min": 4,
    "demand_capacity": 4,
    "queue_end_veh": 5,
}


def terminal_header(header: str, width: int = 10) -> str:
    """A display header in short lines, its unit on a line of its own:
    ``Queue discharge rate (veh/h)`` -> ``Queue\ndischarge\nrate\n(veh/h)``."""
    name, _, unit = header.partition(" (")
    lines = textwrap.wrap(name, width) or [name]
    return "\n".join(lines + ([f"({unit}"] if unit else []))


def hourly_terminal_columns(result: Result, keep: np.ndarray | None = None) -> list[TermColumn]:
    """The hourly table (:func:`wzq.present.tables.hourly_display`) as terminal columns."""
    table = hourly_display(result)
    if keep is not None:
        table = table[keep]
    cols = [TermColumn("Hour", list(table["Hour"]), 1, right=False)]
    for c in hourly_columns(result.plan.site.unit_system):
        cells = ["" if pd.isna(v) else f"{v:,.{c.decimals}f}" for v in table[c.header].to_numpy()]
        cols.append(TermColumn(terminal_header(c.header), cells, TERMINAL_PRIORITY[c.source]))
    status = list(table["Status"])
    # wrap a status only between its items ("over limit:", "queue length,", "delay")
    items = [x for text in status for x in re.split(r"(?<=[:,]) ", text)]
    least = max((len(x) for x in items), default=2)
    cols.append(TermColumn("Status", status, 1, right=False, wrap=True, min_width=least))
    return cols


def print_result(result: Result, *, all_hours: bool = False, out=None) -> None:
    """A readable report of a result on the terminal, as wide as the terminal."""
    out = out or sys.stdout
    plan = result.plan
    title = plan.meta.title or plan.site.name or "Lane-closure plan"
    width = console_width(out)
    for line in textwrap.wrap(title, width):
        print(line, file=out)
    if plan.site.name and plan.meta.title:
        print(f"{plan.site.name}, {plan.site.direction}".rstrip(", "), file=out)
    print("", file=out)
    label_width = max(len(k) for k, _ in summary_lines(result))
    indent = " " * (label_width + 4)
    for label, text in summary_lines(result):
        lines = textwrap.wrap(text, max(width - len(indent), 20)) or [""]
        print(f"  {label:<{label_width}}  {lines[0]}", file=out)
        for more in lines[1:]:
            print(indent + more, file=out)
    print("", file=out)
    h = result.hourly
    if not all_hours:
        keep = (h["closure"] | (h["queue_max_veh"] > 0) | (h["status"] != "ok")).to_numpy()
        hidden = int((~keep).sum())
    else:
        keep, hidden = None, 0
    print_table(hourly_terminal_columns(result, keep), out, what="hourly table")
    if hidden:
        print(
            f"\n  ({hidden} open-road hours without a queue not shown; --all-hours shows them)",
            file=out,
        )
    print_approach(result, out)
    for w in result.warnings:
        print("", file=out)
        print(textwrap.fill(f"warning: {w}", width, subsequent_indent="  "), file=out)
    print(f"\n{wzq.CAUTION}", file=out)  # one line, as in every other output


def print_approach(result: Result, out) -> None:
    """Per landmark of the approach: when the queue reached it, how long and how far beyond."""
    if not result.plan.approach.landmarks:
        return
    print("\nLandmarks upstream of the start of the taper:", file=out)
    with pd.option_context("display.width", 250, "display.max_columns", 20):
        print(landmark_display(result).to_string(index=False), file=out)
        if not result.exit_ramps.empty:
            print("", file=out)
            print(exit_ramp_display(result).to_string(index=False), file=out)


def cmd_demo(args: argparse.Namespace) -> int:
    result = wzq.analyse(demo_plan())
    print_result(result, all_hours=args.all_hours)
    if not args.no_workbook:
        from wzq.io.workbook.run import write_demo_workbook

        path = write_demo_workbook(args.path)
        print(f"\nwrote the example workbook with its results: {path}")
    return EXIT_OK


def cmd_show(args: argparse.Namespace) -> int:
    plan = load_any(Path(args.path))
    print_result(wzq.analyse(plan), all_hours=args.all_hours)
    return EXIT_OK


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="wzq",
        description=DESCRIPTION,
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"wzq {wzq.__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser(
        "demo",
        help="analyse the shipped invented example and print the hourly table",
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
    p.set_defaults(func=cmd_demo)

    p = sub.add_parser(
        "show",
        help="analyse a plan (JSON or workbook) and print the result, writing nothing",
        description="Analyse a plan and print the summary and the hourly table. "
        "Nothing is written.",
    )
    p.add_argument("path", help="a .json plan or a .xlsx/.xlsm workbook")
    p.add_argument("--all-hours", action="store_true", help="show every hour")
    p.set_defaults(func=cmd_show)
    for register in EXTRA_COMMANDS:
        register(sub)
    return parser


#: Modules that add sub-commands (each appends a ``register(sub)`` function to
#: :data:`EXTRA_COMMANDS` when imported); a module not yet present is skipped.
EXTRA_MODULES = (
    "wzq.cli.new",
    "wzq.io.workbook.run",
    "wzq.cli.windows",
    "wzq.cli.report",
    "wzq.cli.batch",
    "wzq.cli.spacetime",
    "wzq.cli.risk",
    "wzq.cli.calc",
)
#: Other modules add their sub-commands here (workbook, batch, report ...).
EXTRA_COMMANDS: list[Callable[[argparse._SubParsersAction], None]] = []


def _load_extras() -> None:
    for name in EXTRA_MODULES:
        try:
            __import__(name)
        except ModuleNotFoundError as e:
            if e.name != name:
                raise


def main(argv: Sequence[str] | None = None) -> int:
    _load_extras()
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return EXIT_INPUT
    try:
        with safe_streams():  # text from files never acts on the terminal
            return int(args.func(args))
    except PlanError as e:
        for p in e.problems:
            print(f"wzq: {printable(p)}", file=sys.stderr)
        status = getattr(e, "exit_status", EXIT_INPUT)  # a failed save is not the input's fault
        if status != EXIT_INPUT:
            return status
        n = len(e.problems)
        print(
            f"wzq: {n} problem{'s' if n != 1 else ''} to fix; nothing was written", file=sys.stderr
        )
        return EXIT_INPUT
    except BrokenPipeError:  # e.g. `wzq demo | head`: the reader left, nothing to report
        sys.stderr.close()
        return EXIT_OK
    except KeyboardInterrupt:
        print("wzq: interrupted; nothing was written", file=sys.stderr)
        return 130


if __name__ == "__main__":
    # run through the package module so that sub-commands registered by other
    # modules land in the same EXTRA_COMMANDS list
    from wzq.cli import main as _main

    sys.exit(_main())
