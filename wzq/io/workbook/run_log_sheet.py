"""The Run log sheet: tool version, run time (UTC), source file, the input fingerprint
(:func:`wzq.io.workbook.writer.input_fingerprint`), every warning and the notes on the run."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import wzq
from wzq.engine.results import Result
from wzq.io.workbook.writer import (
    BOLD,
    LEFT,
    SMALL,
    SheetWriter,
    plan_title,
    print_setup,
)
from wzq.present.tables import hour_label

__all__ = ["write_run_log"]


#: Column widths of the Run log: the labels, and the values, warnings and notes (wrapped).
WIDTHS = (30, 100)


def write_run_log(
    out: SheetWriter,
    result: Result,
    *,
    source: str,
    fingerprint: str,
    run_time: str,
    notes: Sequence[str] = (),
) -> None:
    """Tool version, run time, source file, input fingerprint, warnings, notes on the run
    (e.g. that the results went to a copy of the workbook)."""
    ws = out.ws
    plan = result.plan
    d = plan.demand
    ws.sheet_view.showGridLines = False
    out.title("Run log")
    out.put(2, 1, "The latest run; each run replaces this sheet.", font=SMALL)
    rows: list[tuple[str, Any]] = [
        ("Tool", f"wzq {wzq.__version__}"),
        ("Run at (UTC)", run_time),
        ("Source file", source or None),
        ("Input fingerprint (SHA-256)", fingerprint),
        ("Plan", plan_title(plan)),
        ("Demand period", f"{hour_label(d.start)} to {hour_label(d.end)}"),
        ("Hours analysed", len(result.hours["hour_start"])),
        ("Closures", len(plan.closures)),
        ("Hours over a limit", len(result.summary.hours_failing)),
        ("Warnings", len(result.warnings)),
    ]
    r = 3
    for label, value in rows:
        out.put(r, 1, label, font=BOLD)
        out.put(r, 2, value, alignment=LEFT)
        r += 1
    for warning in result.warnings:
        out.paragraph(r, 2, warning, WIDTHS[1:])
        r += 1
    for note in notes:
        out.put(r, 1, "Note", font=BOLD)
        out.paragraph(r, 2, note, WIDTHS[1:])
        r += 1
    r += 1
    out.caution(r, 2)
    out.widths(WIDTHS)
    print_setup(ws, plan, f"A1:B{r}", landscape=False)
