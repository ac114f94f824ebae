"""``wzq spacetime PATH -o PNG``: simulate the approach and draw the space-time picture.

Registers the sub-command with :data:`wzq.cli.EXTRA_COMMANDS` when imported;
the simulation is :func:`wzq.lwr.simulate`, the picture
:func:`wzq.spacetime.space_time_png`. The plan file is only read.
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import sys
from pathlib import Path
from typing import TextIO

import pandas as pd

import wzq
from wzq import units as u
from wzq.cli import EXIT_OK, EXTRA_COMMANDS, load_any
from wzq.lwr import Simulation, focus_window, simulate
from wzq.plan import PlanError, Problem
from wzq.tables import hour_label

DESCRIPTION = """\
Check the queue in space and time. The approach road upstream of the closure
is simulated with the kinematic-wave (LWR) model, solved by Godunov's scheme
(the cell transmission model): the plan's demand flows in at the upstream end,
the closure's capacity, hour by hour as the closure schedule and the capacity
model give it, lets traffic out at the downstream end. The picture shows
distance upstream of the closure against time, shaded by speed, with the back
of the queue from the simulation and from the engine's own method.

Printed: the longest queue, the vehicles stored and the delay from both, and
the hours with a queue side by side. By default the picture covers the
closures and their queues, with half an hour either side.
"""

MAX_CELLS = 5000


def _positive(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is not a number") from None
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(f"'{text}' must be a number above zero")
    return value


def _cells(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is not a whole number") from None
    if not 10 <= value <= MAX_CELLS:
        raise argparse.ArgumentTypeError(f"give 10 to {MAX_CELLS} cells, not {value}")
    return value


def _output(path_text: str, plan_path: Path) -> Path:
    """Check the picture's path before any work: a .png in an existing folder, not the plan."""
    out = Path(path_text)
    problems = []
    if out.suffix.lower() != ".png":
        problems.append(
            Problem("-o", f"the picture is a PNG; give a file name ending in .png: {out}")
        )
    if not out.parent.exists() and str(out.parent) not in ("", "."):
        problems.append(Problem("-o", f"the folder {out.parent} does not exist; create it first"))
    if out.exists() and plan_path.exists() and os.path.samefile(out, plan_path):
        problems.append(Problem("-o", "that is the plan itself; choose another file name"))
    if out.is_dir():
        problems.append(Problem("-o", f"{out} is a folder; give a file name ending in .png"))
    if problems:
        raise PlanError(problems)
    return out


def _when(at: dt.datetime | None) -> str:
    """``, at Tue 2027-05-04 22:59``, or nothing when there is no queue."""
    return "" if at is None else f", at {at:%a %Y-%m-%d %H:%M}"


def print_comparison(sim: Simulation, out: TextIO) -> None:
    """The headline figures and the hours with a queue, engine beside simulation."""
    plan = sim.run.plan
    system = plan.site.unit_system
    long_name, long_m = u.LONG_LENGTH[system]
    result = wzq.Result(sim.run)
    s = result.summary
    method = "Newell" if sim.engine_method == "newell" else "shockwave"
    a, b = sim.clock([sim.window[0], sim.window[1]])
    print(f"Simulated {hour_label(a)} to {hour_label(b)}", file=out)
    print(
        f"  approach {sim.length_m / long_m:,.2f} {long_name}, {len(sim.field.x)} cells, "
        f"time step {sim.field.dt:.2f} s, {type(sim.diagram).__name__} diagram"
        + (", capacity drop" if sim.capacity_drop else ""),
        file=out,
    )
    print("", file=out)
    rows = [
        (
            "Longest queue",
            f"{sim.max_queue_extent_m / long_m:,.2f} {long_name}" + _when(sim.max_queue_extent_at),
            f"{s.max_queue_length_m / long_m:,.2f} {long_name}" + _when(s.max_queue_length_at),
        ),
        (
            "Most vehicles stored",
            f"{sim.max_stored_veh:,.0f} veh",
            f"{s.max_queue_veh:,.0f} veh",
        ),
        (
            "Queueing delay",
            f"{sim.total_delay_veh_h:,.1f} veh-h",
            f"{sim.hourly['engine_queue_delay_veh_h'].sum():,.1f} veh-h",
        ),
    ]
    width = max(len(r[0]) for r in rows)
    col = max(len(r[1]) for r in rows) + 2
    print(f"  {'':<{width}}  {'LWR simulation':<{col}}engine ({method})", file=out)
    for label, ours, theirs in rows:
        print(f"  {label:<{width}}  {ours:<{col}}{theirs}", file=out)
    h = sim.hourly
    keep = (h["engine_queue_max_veh"] > 0) | (h["lwr_queue_max_veh"] >= 0.5)
    if keep.any():
        table = pd.DataFrame(
            {
                "Hour": [hour_label(t) for t in h.loc[keep, "hour_start"]],
                f"Queue LWR ({long_name})": (h.loc[keep, "lwr_queue_length_max_m"] / long_m).round(
                    2
                ),
                f"Queue {method} ({long_name})": (
                    h.loc[keep, "engine_queue_length_max_m"] / long_m
                ).round(2),
                "Stored LWR (veh)": h.loc[keep, "lwr_queue_max_veh"].round(0).astype(int),
                f"Stored {method} (veh)": h.loc[keep, "engine_queue_max_veh"].round(0).astype(int),
                "Delay LWR (veh-h)": h.loc[keep, "lwr_delay_veh_h"].round(1),
                f"Delay {method} (veh-h)": h.loc[keep, "engine_queue_delay_veh_h"].round(1),
            }
        )
        print("", file=out)
        with pd.option_context("display.width", 250, "display.max_columns", 20):
            print(table.to_string(index=False), file=out)
    else:
        print("\n  No queue forms in the simulated hours.", file=out)
    for w in sim.warnings:
        print(f"\nwarning: {w}", file=out)


def cmd_spacetime(args: argparse.Namespace) -> int:
    plan_path = Path(args.path)
    out = _output(args.output, plan_path)
    plan = load_any(plan_path)
    result = wzq.analyse(plan)
    window: str | tuple[float, float] = "all" if args.all_hours else "auto"
    closure = None
    if args.closure is not None:
        n = len(plan.closures)
        if not 1 <= args.closure <= n:
            choose = f"pick 1 to {n}" if n else "it has none; leave --closure out"
            raise PlanError(f"the plan has {n} closures; {choose}", where="--closure")
        closure = args.closure - 1
        window = focus_window(result.run, closure)
    length = None
    if args.approach_length is not None:
        length = u.long_length_to_m(args.approach_length, plan.site.unit_system)
    try:
        sim = simulate(result, length_m=length, cells=args.cells, window=window)
    except ValueError as e:
        raise PlanError(str(e), where="spacetime") from None
    from wzq.spacetime import space_time_png  # imported late: matplotlib is slow to import

    space_time_png(sim, out)
    print_comparison(sim, sys.stdout)
    print(f"\nwrote {out}", file=sys.stdout)
    print(f"\n{wzq.CAUTION}", file=sys.stdout)
    return EXIT_OK


def register(sub: argparse._SubParsersAction) -> None:
    """Add ``wzq spacetime`` to the command line."""
    p = sub.add_parser(
        "spacetime",
        help="simulate the approach (LWR) and draw the queue in space and time as a PNG",
        description=DESCRIPTION,
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=wzq.CAUTION,
    )
    p.add_argument("path", help="a .json plan or a .xlsx/.xlsm workbook (only read)")
    p.add_argument("-o", "--output", required=True, metavar="PNG", help="the picture to write")
    p.add_argument(
        "--closure",
        type=int,
        metavar="N",
        help="show only closure number N (1 = the first in the plan) and its queue",
    )
    p.add_argument(
        "--all-hours", action="store_true", help="simulate and show the whole demand period"
    )
    p.add_argument(
        "--approach-length",
        type=_positive,
        metavar="DIST",
        help="length of the approach road to simulate, in the plan's units (mi or km); "
        "default: room for 1.5 times the engine's longest queue plus 1 km",
    )
    p.add_argument(
        "--cells",
        type=_cells,
        metavar="N",
        help="cells along the approach (default: one per 1/100 of it, at least 20 m long)",
    )
    p.set_defaults(func=cmd_spacetime)


EXTRA_COMMANDS.append(register)
