"""``wzq new`` (a fresh plan workbook) and ``wzq check`` (validate only).

Both leave an existing file untouched: ``new`` refuses to overwrite, ``check``
only reads. Problems a user can fix are raised as :class:`wzq.plan.PlanError`;
the ``wzq`` command prints them one per line and exits with status 2.
"""

from __future__ import annotations

import argparse
import contextlib
import os
from pathlib import Path

from wzq import cli
from wzq.plan import Plan, PlanError
from wzq.units import unit_label
from wzq.workbook import layout as L

SUFFIXES = (".xlsx", ".xlsm")


def new_workbook(path: Path) -> Path:
    """Write a fresh plan workbook at ``path`` (``.xlsm`` with macros); never overwrites."""
    from wzq.workbook.template import build_template  # xlsxwriter is imported on demand

    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in SUFFIXES:
        raise PlanError(
            "give a file name ending in .xlsx (no macros) or .xlsm (with the Recalculate button)",
            where=str(path),
        )
    if path.exists():
        raise PlanError(
            "already exists; wzq new never overwrites a file: choose another name or move "
            "the old file away first",
            where=str(path),
        )
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise PlanError(f"the folder {folder} does not exist; create it first", where=str(path))
    tmp = folder / f".{path.stem}.wzq-new{suffix}"
    try:
        build_template(tmp, macro=suffix == ".xlsm")
        if path.exists():  # appeared while building
            raise PlanError("already exists; wzq new never overwrites a file", where=str(path))
        os.replace(tmp, path)
    except OSError as e:
        raise PlanError(
            f"cannot write the file ({e.strerror or e}); check the folder is writable",
            where=str(path),
        ) from None
    finally:
        with contextlib.suppress(OSError):
            tmp.unlink()
    return path


def describe(plan: Plan) -> str:
    """One line about a valid plan: closures, demand period and unit system."""
    d = plan.demand
    hours = len(d.flows_veh_h) * d.interval_s / 3600
    n = len(plan.closures)
    system = plan.site.unit_system
    words = {v: w for w, v in L.UNIT_WORDS}
    return (
        f"{n} closure{'s' if n != 1 else ''}; demand {d.start:%a %Y-%m-%d %H:%M} to "
        f"{d.end:%a %Y-%m-%d %H:%M} ({hours:g} h in {d.interval_s // 60}-minute rows); "
        f"{plan.site.lanes} lanes; units {words.get(system, system)} "
        f"({unit_label('speed', system)}, {unit_label('long', system)})"
    )


def cmd_new(args: argparse.Namespace) -> int:
    path = new_workbook(Path(args.path))
    print(f"wrote {path}")
    print(f"Fill in the {L.INPUT_COLOUR_WORD} cells, then check the inputs with: wzq check {path}")
    return cli.EXIT_OK


def cmd_check(args: argparse.Namespace) -> int:
    path = Path(args.path)
    plan = cli.load_any(path)
    print(f"{path}: no problems found; {describe(plan)}")
    return cli.EXIT_OK


def register(sub: argparse._SubParsersAction) -> None:
    """Add ``new`` and ``check`` to the ``wzq`` command."""
    p = sub.add_parser(
        "new",
        help="make a fresh plan workbook to fill in (.xlsx, or .xlsm with a Recalculate button)",
        description="Write a fresh, empty plan workbook: start sheet with instructions, "
        "site, demand, closures and limits. The suffix chooses the kind: .xlsx (no macros) "
        "or .xlsm (with a Recalculate button). An existing file is never overwritten.",
    )
    p.add_argument("path", help="the new file, e.g. plan.xlsx or plan.xlsm")
    p.set_defaults(func=cmd_new)

    p = sub.add_parser(
        "check",
        help="validate a plan (workbook or JSON) and list every problem; writes nothing",
        description="Read and validate a plan and list every problem, each with its sheet "
        "and cell and what to do. Nothing is written; the file is left as it was. "
        "Exit status 0: no problems; 2: problems listed.",
    )
    p.add_argument("path", help="a .xlsx/.xlsm workbook or a .json plan")
    p.set_defaults(func=cmd_check)


if register not in cli.EXTRA_COMMANDS:
    cli.EXTRA_COMMANDS.append(register)
