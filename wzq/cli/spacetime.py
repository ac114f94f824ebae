"""``wzq spacetime PATH -o PNG``: simulate the approach and draw the space-time picture.

The simulation is :func:`wzq.engine.lwr.simulation.simulate`, the picture
:func:`wzq.present.spacetime.space_time_png`. The plan file is only read.
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import sys
import textwrap
from pathlib import Path
from typing import TextIO

import numpy as np

import wzq
from wzq import units as u
from wzq.cli import EXIT_OK, explain, print_input_warnings
from wzq.engine.lwr.simulation import Simulation, focus_window, simulate
from wzq.engine.plan import PlanError, Problem
from wzq.io.plans import load_any
from wzq.io.workbook.save import write_atomically
from wzq.present.tables import hour_label
from wzq.present.terminal import TermColumn, console_width, print_table

__all__ = [
    "DESCRIPTION",
    "MAX_CELLS",
    "cmd_spacetime",
    "comparison_columns",
    "configure",
    "engine_in_window",
    "lwr_stored_veh",
    "print_comparison",
    "run",
]

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


def engine_in_window(sim: Simulation) -> tuple[float, dt.datetime | None, float]:
    """The engine's longest queue (m) and when, and its most vehicles queued, within
    the simulated window only (so ``--closure N`` compares closure N with closure N)."""
    a, b = sim.window
    r = sim.run
    t = np.concatenate(([a, b], r.t[(r.t > a) & (r.t < b)]))
    newell = getattr(r, "back_of_queue", None)
    if newell is not None:
        t_len = np.concatenate((t, newell.times[(newell.times > a) & (newell.times < b)]))
    else:
        t_len = t
    lengths = sim.engine_queue_length_m(t_len)
    i = int(np.argmax(lengths))
    longest = float(lengths[i])
    at = None if longest <= 0 else sim.clock([t_len[i]]).round("s")[0].to_pydatetime()
    return longest, at, float(sim.engine_queue_veh(t).max())


def lwr_stored_veh(sim: Simulation) -> np.ndarray:
    """Vehicles stored in the simulation's queue per time level: zero where the
    simulation has no queue (there the scheme's numerical smoothing of free flow
    leaves a few vehicles above the free-flow count, which are not a queue)."""
    return np.where(sim.back_of_queue_m > 0, sim.stored_veh, 0.0)


def comparison_columns(sim: Simulation) -> list[TermColumn]:
    """The hours with a queue (engine or simulation), engine beside simulation."""
    long_name, long_m = u.LONG_LENGTH[sim.run.plan.site.unit_system]
    method = "Newell" if sim.engine_method == "newell" else "shockwave"
    h = sim.hourly
    lwr_queue = h["lwr_queue_length_max_m"].to_numpy() > 0
    keep = (h["engine_queue_max_veh"].to_numpy() > 0) | lwr_queue
    stored = np.where(lwr_queue, h["lwr_queue_max_veh"].to_numpy(), 0.0)

    def cells(values, decimals: int) -> list[str]:
        return [f"{v:,.{decimals}f}" for v in np.asarray(values, dtype=float)[keep]]

    return [
        TermColumn("Hour", [hour_label(t) for t in h.loc[keep, "hour_start"]], right=False),
        TermColumn(f"Queue\nLWR\n({long_name})", cells(h["lwr_queue_length_max_m"] / long_m, 2)),
        TermColumn(
            f"Queue\n{method}\n({long_name})", cells(h["engine_queue_length_max_m"] / long_m, 2)
        ),
        TermColumn("Stored\nLWR\n(veh)", cells(stored, 0)),
        TermColumn(f"Stored\n{method}\n(veh)", cells(h["engine_queue_max_veh"], 0)),
        TermColumn("Delay\nLWR\n(veh-h)", cells(h["lwr_delay_veh_h"], 1), priority=2),
        TermColumn(f"Delay\n{method}\n(veh-h)", cells(h["engine_queue_delay_veh_h"], 1), 2),
    ]


def print_comparison(sim: Simulation, out: TextIO) -> None:
    """The headline figures and the hours with a queue, engine beside simulation,
    both over the simulated window only."""
    plan = sim.run.plan
    system = plan.site.unit_system
    long_name, long_m = u.LONG_LENGTH[system]
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
    longest, longest_at, most = engine_in_window(sim)
    rows = [
        (
            "Longest queue",
            f"{sim.max_queue_extent_m / long_m:,.2f} {long_name}" + _when(sim.max_queue_extent_at),
            f"{longest / long_m:,.2f} {long_name}" + _when(longest_at),
        ),
        (
            "Most vehicles stored",
            f"{lwr_stored_veh(sim).max():,.0f} veh",
            f"{most:,.0f} veh",
        ),
        (
            "Queueing delay",
            f"{sim.total_delay_veh_h:,.1f} veh-h",
            f"{sim.hourly['engine_queue_delay_veh_h'].sum():,.1f} veh-h",
        ),
    ]
    width = max(len(r[0]) for r in rows)
    col = max(len(r[1]) for r in [*rows, ("", "LWR simulation", "")]) + 2
    print(f"  {'':<{width}}  {'LWR simulation':<{col}}engine ({method})", file=out)
    for label, ours, theirs in rows:
        print(f"  {label:<{width}}  {ours:<{col}}{theirs}", file=out)
    note = (
        "(both over the simulated hours only; the engine's delay here is its queueing "
        "delay, without the slower travel through the work zone)"
    )
    print(
        textwrap.fill(note, console_width(out), initial_indent="  ", subsequent_indent="   "),
        file=out,
    )
    columns = comparison_columns(sim)
    if columns[0].cells:
        print("", file=out)
        print_table(columns, out, what="comparison")
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
        window = focus_window(result, closure)
    length = None
    if args.approach_length is not None:
        length = u.long_length_to_m(args.approach_length, plan.site.unit_system)
    try:
        sim = simulate(result, length_m=length, cells=args.cells, window=window)
    except ValueError as e:
        raise PlanError(str(e), where="spacetime") from None
    from wzq.present.spacetime import space_time_png  # imported late: matplotlib is slow to import

    write_atomically(out, space_time_png(sim))  # never half a picture
    print_comparison(sim, sys.stdout)
    print_input_warnings(plan)
    print(f"\nwrote {out}", file=sys.stdout)
    print(f"\n{wzq.CAUTION}", file=sys.stdout)
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq spacetime``."""
    explain(
        p,
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


run = cmd_spacetime
