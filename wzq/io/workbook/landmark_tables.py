"""Where the queue reached on the approach, on the output sheets: the landmark and
exit-ramp tables of the Permit table (per landmark: when the back of the queue first
reached it, how long and how far it was beyond it, in how many hours; per exit ramp:
the delay of the traffic leaving there), and the per-hour columns of the Results sheet
(the exit ramps' delay, and a flag per landmark for the hours the queue was beyond it).

The values are the display tables of :mod:`wzq.present.tables`, rounded as every
other output shows them. Plans without landmarks get nothing here.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from openpyxl.styles import Alignment

from wzq.engine.results import Result
from wzq.io.workbook.writer import (
    BOLD,
    CENTRE,
    ROW_BORDER,
    SMALL,
    SheetWriter,
    header_width,
    number_looks,
    number_width,
    text_width,
)
from wzq.present.tables import (
    exit_ramp_display,
    landmark_display,
    landmark_hour_flags,
    ramp_flow_text,
    rounded,
)

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "BEYOND",
    "EXIT_DELAY_HEADER",
    "results_columns",
    "write_landmark_tables",
]

#: The flag of an hour in which the back of the queue was beyond a landmark.
BEYOND = "yes"
EXIT_DELAY_HEADER = "Delay of traffic for exit ramps (veh-h)"
#: Decimals of the numbers of the landmark and exit-ramp display tables, by column.
_LANDMARK_DECIMALS = (None, None, 2, None, 2, 2, 0, None)
_EXIT_DECIMALS = (None, 2, 1, 1)
#: Width of a sheet column nobody set (the spreadsheet's default).
_DEFAULT_WIDTH = 8.43
#: Text in the tables wraps within its columns (a name longer than any other does).
_WRAP = Alignment(wrap_text=True, vertical="top")


def results_columns(result: Result) -> list[tuple[str, str, list, int | None]]:
    """The Results sheet's extra per-hour columns of the approach: ``(header, source,
    values, decimals)``: the exit ramps' delay (veh-h, when the plan has exit ramps),
    then one column per landmark, nearest the closure first, holding :data:`BEYOND`
    in the hours the back of the queue was beyond it (else blank)."""
    out: list[tuple[str, str, list, int | None]] = []
    h = result.hours
    if "exit_ramp_delay_veh_h" in h:
        values = [rounded(v, 1) for v in np.asarray(h["exit_ramp_delay_veh_h"], dtype=float)]
        out.append((EXIT_DELAY_HEADER, "exit_ramp_delay_veh_h", values, 1))
    for name, flags in landmark_hour_flags(result):
        values = [BEYOND if f else None for f in flags]
        out.append((f"Queue beyond {name}", f"beyond:{name}", values, None))
    return out


def _spans(needs: list[float], widths: list[float]) -> list[tuple[int, int]]:
    """First and last sheet column (1-based) of each table column: consecutive columns
    of the sheet, as many as give the width each needs (the sheet's columns are the
    hourly table's; past them, the default width)."""
    spans = []
    col = 1
    for need in needs:
        first, have = col, 0.0
        while True:
            have += widths[col - 1] if col <= len(widths) else _DEFAULT_WIDTH
            if have >= need:
                break
            col += 1
        spans.append((first, col))
        col += 1
    return spans


def _needs(table: pd.DataFrame, decimals: tuple[int | None, ...]) -> list[float]:
    """The width each column of a display table needs: its header wrapped in at most
    three lines, its values on one line."""
    out = []
    for header, d in zip(table.columns, decimals, strict=True):
        cells = table[header].tolist()
        if d is None:
            body = text_width([str(v) for v in cells])
        else:
            body = number_width([v for v in cells if not isinstance(v, str)], d)
            body = max(body, text_width([v for v in cells if isinstance(v, str)]))
        out.append(max(header_width(str(header), 6.0), body))
    return out


def _table(
    out: SheetWriter,
    r: int,
    table: pd.DataFrame,
    decimals: tuple[int | None, ...],
    widths: list[float],
) -> int:
    """A display table from row ``r``, each column over as many sheet columns as it needs
    (merged): its header, its rows with borders; returns the next row."""
    ws = out.ws
    spans = _spans(_needs(table, decimals), widths)
    for (a, b), header in zip(spans, table.columns, strict=True):
        out.header_cell(r, a, str(header))
        for c in range(a + 1, b + 1):
            out.header_cell(r, c, None)
    ws.row_dimensions[r].height = 45
    looks = [
        out.style.prepare(
            number_format=fmt, border=ROW_BORDER, alignment=_WRAP if d is None else CENTRE
        )
        for fmt, d in zip(number_looks(decimals), decimals, strict=True)
    ]
    for k, row in enumerate(table.itertuples(index=False), start=1):
        for (a, b), value, look in zip(spans, row, looks, strict=True):
            look(out.put(r + k, a, value))
            for c in range(a + 1, b + 1):
                look(ws.cell(r + k, c))
    for row in range(r, r + len(table) + 1):
        for a, b in spans:
            if b > a:
                ws.merge_cells(start_row=row, start_column=a, end_row=row, end_column=b)
    return r + len(table) + 1


def write_landmark_tables(out: SheetWriter, result: Result, r: int, widths: list[float]) -> int:
    """The landmark table (and the exit-ramp table, when the plan has exit ramps) from
    row ``r`` of the Permit table, whose columns are ``widths`` wide; returns the next
    free row (``r`` when the plan has no landmarks)."""
    plan = result.plan
    if not plan.approach.landmarks:
        return r
    out.put(r, 1, "Where the back of the queue reached on the approach", font=BOLD)
    r += 1
    table = landmark_display(result)
    by_name = {lm.name: lm for lm in plan.approach.landmarks}
    table["Ramp flow"] = [ramp_flow_text(by_name[n]) for n in table["Landmark"]]
    r = _table(out, r, table, _LANDMARK_DECIMALS, widths)
    out.put(
        r,
        1,
        "Distances upstream of the start of the taper. Hours beyond: the hours in which the "
        "back of the queue was beyond the landmark at some instant.",
        font=SMALL,
    )
    r += 2
    if not result.exit_ramps.empty:
        out.put(r, 1, "Traffic leaving at exit ramps inside the queue", font=BOLD)
        r += 1
        r = _table(out, r, exit_ramp_display(result), _EXIT_DECIMALS, widths)
        out.put(
            r,
            1,
            "The traffic for an exit ramp waits in the queue with everyone else (first in, "
            "first out) until it reaches the ramp; its delay is in the total delay and the "
            "road-user cost, not in the average delay of the closure's traffic.",
            font=SMALL,
        )
        r += 2
    return r
