"""``wzq check PATH``: read and validate a plan and list every problem, then the
warnings; writes nothing."""

from __future__ import annotations

import argparse
from pathlib import Path

from wzq.cli import EXIT_OK, explain
from wzq.engine.plan import Plan
from wzq.engine.warnings import input_warnings
from wzq.io.plans import load_any
from wzq.io.workbook import layout as L
from wzq.units import unit_label

__all__ = ["configure", "describe", "run"]


def describe(plan: Plan) -> str:
    """One line about a valid plan: closures, demand period and unit system."""
    d = plan.demand
    hours = len(d.flows_veh_h) * d.interval_s / 3600
    n = len(plan.closures)
    system = plan.site.unit_system
    words = {v: w for w, v in L.UNIT_WORDS}
    text = (
        f"{n} closure{'s' if n != 1 else ''}; demand {d.start:%a %Y-%m-%d %H:%M} to "
        f"{d.end:%a %Y-%m-%d %H:%M} ({hours:g} h in {d.interval_s // 60}-minute rows); "
        f"{plan.site.lanes} lanes; units {words.get(system, system)} "
        f"({unit_label('speed', system)}, {unit_label('long', system)})"
    )
    landmarks, ramps = len(plan.approach.landmarks), len(plan.approach.ramps)
    if landmarks:
        text += f"; {landmarks} landmark{'s' if landmarks != 1 else ''} upstream"
        text += f" ({ramps} ramp{'s' if ramps != 1 else ''})" if ramps else ""
    return text


def cmd_check(args: argparse.Namespace) -> int:
    path = Path(args.path)
    plan = load_any(path)
    warnings = input_warnings(plan)
    print(f"{path}: no problems found; {describe(plan)}")
    for w in warnings:
        print(f"warning: {w}")
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq check``."""
    explain(
        p,
        description="Read and validate a plan and list every problem, each with its sheet "
        "and cell and what to do, then the warnings: inputs read in a way worth a second "
        "look (a percentage that may be a fraction, rows typed below a table, a zero demand "
        "between busy hours ...). Nothing is written; the file is left as it was. "
        "Exit status 0: no problems (warnings may follow); 2: problems listed.",
    )
    p.add_argument("path", help="a .xlsx/.xlsm workbook or a .json plan")


run = cmd_check
