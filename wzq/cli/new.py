"""``wzq new`` (a fresh plan workbook), ``wzq check`` (validate only) and ``wzq link``.

All leave an existing file untouched: ``new`` refuses to overwrite, ``check``
only reads, ``link`` only writes a macro workbook's entry module (never over a
``.py`` file wzq did not write). ``wzq new X.xlsm`` also writes ``X.py``, the
entry module the Recalculate button runs (:mod:`wzq.io.workbook.link`). Problems a
user can fix are raised as :class:`wzq.engine.plan.PlanError`; the ``wzq`` command
prints them one per line and exits with status 2.
"""

from __future__ import annotations

import argparse
import contextlib
import os
from pathlib import Path

from wzq import cli
from wzq.engine.plan import Plan, PlanError
from wzq.io.workbook import layout as L
from wzq.io.workbook import link
from wzq.units import unit_label

SUFFIXES = (".xlsx", ".xlsm")


def new_workbook(path: Path) -> Path:
    """Write a fresh plan workbook at ``path`` (``.xlsm`` with macros); never overwrites.

    For an ``.xlsm`` the entry module the Recalculate button runs is written
    beside it (:func:`wzq.io.workbook.link.write_entry_module`); its name is
    checked first, so a refused name leaves nothing behind.
    """
    from wzq.io.workbook.template import build_template  # xlsxwriter is imported on demand

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
    macro = suffix == ".xlsm"
    if macro:
        link.check_macro_name(path)
        link.check_entry_free(path)
    tmp = folder / f".{path.stem}.wzq-new{suffix}"
    entry: Path | None = None
    try:
        build_template(tmp, macro=macro)
        if path.exists():  # appeared while building
            raise PlanError("already exists; wzq new never overwrites a file", where=str(path))
        if macro:
            py, changed = link.write_entry_module(path)
            entry = py if changed else None
        os.replace(tmp, path)
        entry = None
    except OSError as e:
        raise PlanError(
            f"cannot write the file ({e.strerror or e}); check the folder is writable",
            where=str(path),
        ) from None
    finally:
        with contextlib.suppress(OSError):
            tmp.unlink()
        if entry is not None:  # the workbook was not written: take its entry module back
            with contextlib.suppress(OSError):
                entry.unlink()
    return path


def button_help(path: Path) -> list[str]:
    """What ``wzq new`` / ``wzq link`` tell the user about a macro workbook's button."""
    py = link.entry_path(path)
    return [
        f"{py.name} beside {path.name} is what its {L.BUTTON_CAPTION} button runs: Excel's "
        f"macro imports the Python module named like the workbook ({path.stem}) and calls "
        "its main().",
        f"Keep the two files together. After renaming or moving the workbook, run: "
        f"wzq link NEW_NAME{path.suffix}",
        "The button needs desktop Excel (Windows or macOS) with macros enabled and Python "
        "with wzq and xlwings installed (see 'Recalculate button' in the README); the "
        f"command line works everywhere: wzq run {path.name}",
    ]


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
    if path.suffix.lower() == ".xlsm":
        print(f"wrote {link.entry_path(path)}")
        for line in button_help(path):
            print(f"  {line}")
    print(f"Fill in the {L.INPUT_COLOUR_WORD} cells, then check the inputs with: wzq check {path}")
    return cli.EXIT_OK


def cmd_link(args: argparse.Namespace) -> int:
    path = Path(args.path)
    py, changed = link.link_workbook(path)
    print(f"wrote {py}" if changed else f"{py} is already in place and up to date")
    for line in button_help(path):
        print(f"  {line}")
    return cli.EXIT_OK


def cmd_check(args: argparse.Namespace) -> int:
    from wzq.engine.warnings import input_warnings

    path = Path(args.path)
    plan = cli.load_any(path)
    warnings = input_warnings(plan)
    print(f"{path}: no problems found; {describe(plan)}")
    for w in warnings:
        print(f"warning: {w}")
    return cli.EXIT_OK


def register(sub: argparse._SubParsersAction) -> None:
    """Add ``new`` and ``check`` to the ``wzq`` command."""
    p = sub.add_parser(
        "new",
        help="make a fresh plan workbook to fill in (.xlsx, or .xlsm with a Recalculate button)",
        description="Write a fresh, empty plan workbook: start sheet with instructions, "
        "site, demand, closures and limits. The suffix chooses the kind: .xlsx (no macros) "
        "or .xlsm (with a Recalculate button). An existing file is never overwritten. "
        "For NAME.xlsm the button's entry module NAME.py is written beside it (Excel's macro "
        "imports the Python module named like the workbook), so NAME must be a Python module "
        "name: letters, digits and _, not starting with a digit.",
    )
    p.add_argument("path", help="the new file, e.g. plan.xlsx or plan.xlsm")
    p.set_defaults(func=cmd_new)

    p = sub.add_parser(
        "check",
        help="validate a plan (workbook or JSON) and list every problem; writes nothing",
        description="Read and validate a plan and list every problem, each with its sheet "
        "and cell and what to do, then the warnings: inputs read in a way worth a second "
        "look (a percentage that may be a fraction, rows typed below a table, a zero demand "
        "between busy hours ...). Nothing is written; the file is left as it was. "
        "Exit status 0: no problems (warnings may follow); 2: problems listed.",
    )
    p.add_argument("path", help="a .xlsx/.xlsm workbook or a .json plan")
    p.set_defaults(func=cmd_check)

    p = sub.add_parser(
        "link",
        help="join a renamed or moved .xlsm workbook to its Recalculate button again",
        description="Write the small Python module the Recalculate button of a macro "
        "workbook runs: NAME.py beside NAME.xlsm (Excel's macro imports the module named "
        "like the workbook). Run it after renaming or moving the workbook. The workbook "
        "is only read; a .py file wzq did not write is never replaced. The name must be a "
        "Python module name: letters, digits and _, not starting with a digit.",
    )
    p.add_argument("path", help="the macro workbook, e.g. plan.xlsm")
    p.set_defaults(func=cmd_link)


if register not in cli.EXTRA_COMMANDS:
    cli.EXTRA_COMMANDS.append(register)
