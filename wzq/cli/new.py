"""``wzq new PATH``: a fresh plan workbook (``.xlsx``, or ``.xlsm`` with the Recalculate
button and its entry module, :mod:`wzq.io.workbook.new`); never over an existing file."""

from __future__ import annotations

import argparse
from pathlib import Path

from wzq.cli import EXIT_OK, explain
from wzq.cli.link import button_help
from wzq.io.workbook import layout as L
from wzq.io.workbook import link
from wzq.io.workbook.new import new_workbook

__all__ = ["configure", "run"]


def cmd_new(args: argparse.Namespace) -> int:
    path = new_workbook(Path(args.path))
    print(f"wrote {path}")
    if path.suffix.lower() == ".xlsm":
        print(f"wrote {link.entry_path(path)}")
        for line in button_help(path):
            print(f"  {line}")
    print(f"Fill in the {L.INPUT_COLOUR_WORD} cells, then check the inputs with: wzq check {path}")
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq new``."""
    explain(
        p,
        description="Write a fresh, empty plan workbook: start sheet with instructions, "
        "site, demand, closures and limits. The suffix chooses the kind: .xlsx (no macros) "
        "or .xlsm (with a Recalculate button). An existing file is never overwritten. "
        "For NAME.xlsm the button's entry module NAME.py is written beside it (Excel's macro "
        "imports the Python module named like the workbook), so NAME must be a Python module "
        "name: letters, digits and _, not starting with a digit.",
    )
    p.add_argument("path", help="the new file, e.g. plan.xlsx or plan.xlsm")


run = cmd_new
