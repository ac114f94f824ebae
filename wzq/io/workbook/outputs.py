"""The one place that decides and writes every output of a run into a workbook.

:func:`decide_outputs` settles, once per run, what goes in: the Closure windows
sheet (the plan's option unless the command says otherwise) and the LWR
space-time picture (likewise), which is drawn first, so the warnings its
simulation raises are part of the result every sheet shows (the Summary and
the Run log included) and the command prints. :func:`write_outputs` then
replaces wzq's output sheets (one module per sheet) and places the picture; it
may be called for more than one book (a copy) without drawing again. The file
backend (:mod:`wzq.io.workbook.run`) and the Recalculate button
(:mod:`wzq.io.live.backend`) both go through here.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from openpyxl.styles import Alignment
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.worksheet import Worksheet

import wzq
from wzq.engine.problems import PlanError
from wzq.engine.results import Result
from wzq.engine.risk import RiskResult, plan_risk
from wzq.engine.risk_windows import closure_windows
from wzq.engine.windows import too_long, too_long_text
from wzq.io.workbook import layout
from wzq.io.workbook.charts import write_charts
from wzq.io.workbook.outputs_record import write_record
from wzq.io.workbook.permit_sheet import write_permit_sheet
from wzq.io.workbook.results_sheet import write_results_sheet
from wzq.io.workbook.run_log_sheet import write_run_log
from wzq.io.workbook.summary_sheet import write_summary_sheet
from wzq.io.workbook.windows_cache import cache_sheet, cached_plan_windows
from wzq.io.workbook.windows_sheet import write_windows_sheet
from wzq.io.workbook.writer import (
    CELL_PADDING,
    CHARTS,
    PERMIT,
    RESULTS,
    RUN_LOG,
    SUMMARY,
    TEXT_CHAR,
    SheetWriter,
    Styler,
    TableRef,
    check_output_sheets,
    input_fingerprint,
    put_text,
    replace_sheets,
    select,
    utc_now,
    wrapped_lines,
)

__all__ = ["Outputs", "decide_outputs", "write_outputs", "write_results"]


@dataclass(frozen=True)
class Outputs:
    """Every output of one run, decided once: the result (its warnings include the
    space-time simulation's), whether the Closure windows sheet is filled, and the
    space-time picture (PNG bytes) or ``None``."""

    result: Result
    windows: bool
    picture: bytes | None = None
    #: The risk of breaking the limits, when the plan gives a count history (or a spread
    #: of the work-zone capacity): extra columns, a Summary section, a fan chart.
    risk: RiskResult | None = None


def decide_outputs(
    result: Result, *, space_time: bool | None = None, windows: bool | None = None
) -> Outputs:
    """What a run writes: ``space_time`` and ``windows`` as given, else as the plan's
    options say (the Site sheet's space-time check, the Limits sheet's Closure windows
    sheet). The picture is drawn here, its warnings added to the result."""
    options = result.plan.options
    picture = None
    if options.space_time if space_time is None else space_time:
        from wzq.io.workbook.pictures import space_time_picture  # start-up speed of a run

        picture, warnings = space_time_picture(result)
        result = result.with_warnings(warnings)
    wanted = options.closure_windows if windows is None else windows
    try:
        risk = plan_risk(result.plan)
    except PlanError as e:  # a plan the risk is not yet assessed for: the rest still shows
        risk = None
        why = "; ".join(p.message for p in e.problems)
        result = result.with_warnings([f"the risk of breaking the limits is not shown: {why}"])
    return Outputs(result, wanted, picture, risk)


def _note(ws: Worksheet, text: str) -> None:
    """A sheet that holds only a note: wrapped in one wide cell, so it prints on one page
    (a long line in a narrow cell spills over the next columns and splits across pages)."""
    width = 75
    put_text(ws, 1, 1, text).alignment = Alignment(wrap_text=True, vertical="top")
    ws.column_dimensions["A"].width = width
    lines = wrapped_lines(text, (width - CELL_PADDING) / TEXT_CHAR)
    ws.row_dimensions[1].height = 15 * len(lines)  # points a line, the default font's
    ws.print_area = "A1:A1"


def _windows_sheet(book: Workbook, result: Result, wanted: bool, cache: bool) -> None:
    """The allowable closure hours of each configuration on this plan's demand."""
    if not wanted:
        _note(
            book[layout.WINDOWS],
            "Allowable closure hours were not computed in this run: set 'Closure windows "
            "sheet' to yes on the Limits sheet, or run `wzq run PLAN --windows`.",
        )
        return
    d = result.plan.demand
    if too_long(d):  # a long plan runs; its windows are left out, and the sheet says why
        where = result.plan.where("options.closure_windows")
        option = f"'Closure windows sheet' ({where}) to no, or run `wzq run PLAN --no-windows`"
        _note(book[layout.WINDOWS], too_long_text(len(d.flows_veh_h), d.interval_s, option))
        return
    # replaces the empty sheet made by replace_sheets, at the same position; with ``cache``
    # the search comes from the workbook's cache when its inputs are those of the last run
    found = cached_plan_windows(result.plan, book) if cache else closure_windows(result.plan)
    write_windows_sheet(book, found, result.plan)


def write_outputs(
    book: Workbook,
    outputs: Outputs,
    *,
    source: str = "",
    run_time: str | None = None,
    notes: Sequence[str] = (),
    cache: bool = False,
) -> dict[str, TableRef]:
    """Replace wzq's output sheets in ``book`` with those of ``outputs``, the picture
    placed on the Charts sheet.

    Touches nothing else: no input cell, style, name or sheet of the user's.
    ``run_time`` (UTC, ISO 8601) defaults to now; ``notes`` go to the Run log.
    With ``cache`` the closure-window search is taken from, or kept in, the
    workbook's cache sheet (:mod:`wzq.io.workbook.windows_cache`), and so is the
    record of the output sheets as written (:mod:`wzq.io.workbook.outputs_record`).
    Returns where the Results and Permit tables sit.
    """
    result = outputs.result
    check_output_sheets(book)
    run_time = run_time or utc_now()
    fingerprint = input_fingerprint(result.plan)
    stamp = (
        f"Computed by wzq {wzq.__version__} at {run_time}"
        + (f" from {source}" if source else "")
        + f"; input fingerprint {fingerprint[:16]}."
    )
    sheets = replace_sheets(book)
    style = Styler()
    out = {name: SheetWriter(ws, style) for name, ws in sheets.items()}
    refs = {RESULTS: write_results_sheet(out[RESULTS], result)}
    write_summary_sheet(out[SUMMARY], result)
    write_charts(out[CHARTS], result, refs[RESULTS])
    refs[PERMIT] = write_permit_sheet(out[PERMIT], result, stamp)
    if outputs.risk is not None:
        from wzq.io.workbook.risk_sheets import add_risk  # start-up speed of a run

        add_risk(out, outputs.risk, result, refs)
    write_run_log(
        out[RUN_LOG],
        result,
        source=source,
        fingerprint=fingerprint,
        run_time=run_time,
        notes=notes,
    )
    _windows_sheet(book, result, outputs.windows, cache)
    if outputs.picture is not None:
        from wzq.io.workbook.pictures import place_space_time  # start-up speed of a run

        place_space_time(book, outputs.picture)
    select(book, sheets[SUMMARY])
    if cache and (kept := cache_sheet(book)) is not None:
        write_record(book, kept)  # so the next run sees what is typed on these sheets
    return refs


def write_results(
    book: Workbook,
    result: Result,
    *,
    source: str = "",
    run_time: str | None = None,
    notes: Sequence[str] = (),
    windows: bool | None = None,
    space_time: bool | None = None,
) -> dict[str, TableRef]:
    """:func:`decide_outputs` and :func:`write_outputs` in one step (one book)."""
    outputs = decide_outputs(result, space_time=space_time, windows=windows)
    return write_outputs(book, outputs, source=source, run_time=run_time, notes=notes)
