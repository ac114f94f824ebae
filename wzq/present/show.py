"""A result as the terminal shows it (``wzq show``, ``wzq demo``): the title, the summary,
the hourly table as wide as the terminal allows, the landmarks, the warnings and the caution."""

from __future__ import annotations

import re
import sys
import textwrap

import numpy as np
import pandas as pd

import wzq
from wzq.engine.results import Result
from wzq.present.tables import (
    exit_ramp_display,
    hourly_columns,
    hourly_display,
    landmark_display,
    summary_lines,
)
from wzq.present.terminal import TermColumn, console_width, print_table

__all__ = [
    "EXIT_RAMP_TERMINAL",
    "LANDMARK_TERMINAL",
    "TERMINAL_PRIORITY",
    "display_terminal_columns",
    "hourly_terminal_columns",
    "print_approach",
    "print_result",
    "terminal_header",
]


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
        cells = [
            v if isinstance(v, str) else "" if pd.isna(v) else f"{v:,.{c.decimals}f}"
            for v in table[c.header].to_numpy()
        ]
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


#: Terminal priority and decimals of the landmark and exit-ramp tables' columns (by
#: their position in :func:`wzq.present.tables.landmark_display` and
#: :func:`wzq.present.tables.exit_ramp_display`; ``None``: text, left-aligned).
LANDMARK_TERMINAL = ((1, None), (3, None), (1, 2), (1, None), (2, 2), (1, 2), (3, 0))
EXIT_RAMP_TERMINAL = ((1, None), (2, 2), (1, 1), (2, 1))


def display_terminal_columns(
    table: pd.DataFrame, looks: tuple[tuple[int, int | None], ...]
) -> list[TermColumn]:
    """A display table as terminal columns: ``looks`` gives each column's priority and
    its decimals (``None``: text)."""
    cols = []
    for header, (priority, decimals) in zip(table.columns, looks, strict=True):
        values = table[header].to_numpy()
        if decimals is None:
            cells, right = [str(v) for v in values], False
        else:
            cells = [v if isinstance(v, str) else f"{v:,.{decimals}f}" for v in values]
            right = True
        cols.append(TermColumn(terminal_header(header, 12), cells, priority, right=right))
    return cols


def print_approach(result: Result, out) -> None:
    """Per landmark of the approach: when the queue reached it, how long and how far
    beyond; per exit ramp: the delay of the traffic leaving there. Both fit the terminal
    as the hourly table does."""
    if not result.plan.approach.landmarks:
        return
    print("\nLandmarks upstream of the start of the taper:", file=out)
    table = display_terminal_columns(landmark_display(result), LANDMARK_TERMINAL)
    print_table(table, out, what="landmark table")
    if not result.exit_ramps.empty:
        print("", file=out)
        ramps = display_terminal_columns(exit_ramp_display(result), EXIT_RAMP_TERMINAL)
        print_table(ramps, out, what="exit-ramp table")
