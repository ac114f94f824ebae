"""``wzq show PATH``: analyse a plan (JSON or workbook) and print the result; writes nothing."""

from __future__ import annotations

import argparse
from pathlib import Path

import wzq
from wzq.cli import EXIT_OK, explain
from wzq.io.plans import load_any
from wzq.present.show import print_result

__all__ = ["configure", "run"]


def cmd_show(args: argparse.Namespace) -> int:
    plan = load_any(Path(args.path))
    print_result(wzq.analyse(plan), all_hours=args.all_hours)
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq show``."""
    explain(
        p,
        description="Analyse a plan and print the summary and the hourly table. "
        "Nothing is written.",
    )
    p.add_argument("path", help="a .json plan or a .xlsx/.xlsm workbook")
    p.add_argument("--all-hours", action="store_true", help="show every hour")


run = cmd_show
