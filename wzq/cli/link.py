"""``wzq link PATH``: write a macro workbook's entry module again (after renaming or
moving it); never over a ``.py`` file wzq did not write (:mod:`wzq.io.workbook.link`)."""

from __future__ import annotations

import argparse
from pathlib import Path

from wzq.cli import EXIT_OK, explain
from wzq.io.workbook import layout as L
from wzq.io.workbook import link

__all__ = ["button_help", "configure", "run"]


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


def cmd_link(args: argparse.Namespace) -> int:
    path = Path(args.path)
    py, changed = link.link_workbook(path)
    print(f"wrote {py}" if changed else f"{py} is already in place and up to date")
    for line in button_help(path):
        print(f"  {line}")
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq link``."""
    explain(
        p,
        description="Write the small Python module the Recalculate button of a macro "
        "workbook runs: NAME.py beside NAME.xlsm (Excel's macro imports the module named "
        "like the workbook). Run it after renaming or moving the workbook. The workbook "
        "is only read; a .py file wzq did not write is never replaced. The name must be a "
        "Python module name: letters, digits and _, not starting with a digit.",
    )
    p.add_argument("path", help="the macro workbook, e.g. plan.xlsm")


run = cmd_link
