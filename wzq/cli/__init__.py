"""The ``wzq`` command: a static registry of sub-commands, the exit codes and the one
rule that turns an error into an exit status.

Each sub-command is one module of this package with ``configure(parser)`` (its
description and arguments) and ``run(args) -> int``. :data:`COMMANDS` names the
module and gives the one-line summary, so ``wzq --help`` lists every command
without importing any of them, and ``wzq COMMAND ...`` imports only that one
(this module imports nothing heavy: no numpy, pandas, openpyxl, matplotlib or
reportlab).

Exit status: 0 done, 2 the input needs fixing (every problem is listed, one per
line, with where it is), 1 an unexpected failure (please report it), 130
interrupted.
"""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence
from types import ModuleType
from typing import TYPE_CHECKING

import wzq
from wzq.engine.problems import PlanError
from wzq.present.printable import printable, safe_streams

if TYPE_CHECKING:
    from wzq.engine.plan import Plan

__all__ = [
    "COMMANDS",
    "EXIT_FAILURE",
    "EXIT_INPUT",
    "EXIT_INTERRUPTED",
    "EXIT_OK",
    "build_parser",
    "command_module",
    "exit_status",
    "explain",
    "main",
    "print_input_warnings",
]

#: Done.
EXIT_OK = 0
#: An unexpected failure, or one that is not the input's fault (a full disk ...).
EXIT_FAILURE = 1
#: The input needs fixing: every problem was listed and nothing was written.
EXIT_INPUT = 2
#: Interrupted from the keyboard (128 + SIGINT, as shells do).
EXIT_INTERRUPTED = 130

#: Sub-command -> (module, one-line summary), in the order ``wzq --help`` lists them.
COMMANDS: dict[str, tuple[str, str]] = {
    "demo": (
        "wzq.cli.demo",
        "analyse the shipped invented example and print the hourly table",
    ),
    "show": (
        "wzq.cli.show",
        "analyse a plan (JSON or workbook) and print the result, writing nothing",
    ),
    "new": (
        "wzq.cli.new",
        "make a fresh plan workbook to fill in (.xlsx, or .xlsm with a Recalculate button)",
    ),
    "check": (
        "wzq.cli.check",
        "validate a plan (workbook or JSON) and list every problem; writes nothing",
    ),
    "link": (
        "wzq.cli.link",
        "join a renamed or moved .xlsm workbook to its Recalculate button again",
    ),
    "run": ("wzq.cli.run", "analyse a plan workbook and write the results into it"),
    "windows": ("wzq.cli.windows", "find the hours in which each lane closure may be in place"),
    "report": (
        "wzq.cli.report",
        "write the printable PDF report (hourly table, charts, inputs, sign-off)",
    ),
    "batch": (
        "wzq.cli.batch",
        "analyse every plan in a folder and write one summary workbook and CSV",
    ),
    "spacetime": (
        "wzq.cli.spacetime",
        "simulate the approach (LWR) and draw the queue in space and time as a PNG",
    ),
    "risk": ("wzq.cli.risk", "the probability, hour by hour, that the plan breaks its limits"),
    "counts": (
        "wzq.cli.counts",
        "check a count file (TMG volume records, CSV or Excel) and summarise it",
    ),
    "calc": ("wzq.cli.calc", "add (or remove) the Recalculate plan command in LibreOffice Calc"),
}

DESCRIPTION = """\
Work-zone queue calculator. For a lane-closure plan (site, hourly demand,
closure schedule) it computes work-zone capacity from the Highway Capacity
Manual, the exact deterministic queue carried from hour to hour, the physical
queue length by shockwave analysis, and the delay, hour by hour, and checks
each hour against the agency's limits.

Start with `wzq demo` to see an invented example analysed.
"""

EPILOG = f"""\
exit status: {EXIT_OK} done, {EXIT_INPUT} the input needs fixing, {EXIT_FAILURE} unexpected \
failure.

{wzq.CAUTION}
"""


def exit_status(error: BaseException) -> int:
    """The one rule from an error to the exit status.

    A :class:`~wzq.engine.problems.PlanError` is the input's fault (2) unless it
    says otherwise (``input_fault`` false: a failed save, 1); an interrupt is 130;
    anything else is an unexpected failure (1).
    """
    if isinstance(error, KeyboardInterrupt):
        return EXIT_INTERRUPTED
    if isinstance(error, PlanError):
        return EXIT_INPUT if error.input_fault else EXIT_FAILURE
    return EXIT_FAILURE


def print_input_warnings(plan: Plan) -> None:
    """Print the plan's input warnings (:func:`wzq.engine.warnings.input_warnings`: an
    input read in a way worth a second look, at its cell), one ``warning:`` line each.
    Every command that analyses a plan says them, so no command uses such an input
    without a word."""
    from wzq.engine.warnings import input_warnings  # not at start-up of every command

    for w in input_warnings(plan):
        print(f"warning: {w}")


def explain(
    parser: argparse.ArgumentParser,
    *,
    description: str | None = None,
    epilog: str | None = None,
    formatter_class: type[argparse.HelpFormatter] | None = None,
) -> None:
    """Give a sub-command's parser its description, epilog and help layout."""
    if description is not None:
        parser.description = description
    if epilog is not None:
        parser.epilog = epilog
    if formatter_class is not None:
        parser.formatter_class = formatter_class


def command_module(name: str) -> ModuleType:
    """The module of sub-command ``name`` (imported now, and only now)."""
    return importlib.import_module(COMMANDS[name][0])


def _chosen(argv: Sequence[str]) -> str | None:
    """The sub-command named on the command line: the first word that is not an option."""
    for arg in argv:
        if not arg.startswith("-"):
            return arg if arg in COMMANDS else None
    return None


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The ``wzq`` parser; only ``command``'s module is imported to add its arguments."""
    parser = argparse.ArgumentParser(
        prog="wzq",
        description=DESCRIPTION,
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"wzq {wzq.__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, (_, summary) in COMMANDS.items():
        p = sub.add_parser(name, help=summary, description=summary)
        if name == command:
            module = command_module(name)
            module.configure(p)
            p.set_defaults(func=module.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the ``wzq`` command; returns its exit status."""
    args_list = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser(_chosen(args_list))
    args = parser.parse_args(args_list)
    if not getattr(args, "func", None):
        parser.print_help()
        return EXIT_INPUT
    try:
        with safe_streams():  # text from files never acts on the terminal
            return int(args.func(args))
    except PlanError as e:
        for p in e.problems:
            print(f"wzq: {printable(p)}", file=sys.stderr)
        status = exit_status(e)
        if status == EXIT_INPUT:
            n = len(e.problems)
            print(
                f"wzq: {n} problem{'s' if n != 1 else ''} to fix; nothing was written",
                file=sys.stderr,
            )
        return status
    except MemoryError as e:  # numpy's too (_ArrayMemoryError); saves are atomic
        said = f" ({e})" if str(e) else ""
        print(
            f"wzq: this plan needs more memory than this computer has{said}; nothing was "
            "written. Shorten the plan, or give fewer draws of the capacity on the Limits "
            "sheet",
            file=sys.stderr,
        )
        return exit_status(e)
    except BrokenPipeError:  # e.g. `wzq demo | head`: the reader left, nothing to report
        sys.stderr.close()
        return EXIT_OK
    except KeyboardInterrupt as e:
        print("wzq: interrupted; nothing was written", file=sys.stderr)
        return exit_status(e)


if __name__ == "__main__":
    sys.exit(main())
