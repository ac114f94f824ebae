"""The Permit table: a print-ready table with a title block, pass/fail per hour against
each limit, the caution line and a run stamp; landscape, one page wide, header rows
repeated, page numbers in the footer."""

from __future__ import annotations

import numpy as np
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.pagebreak import Break

from wzq import units as u
from wzq.engine.results import Result
from wzq.io.workbook.landmark_tables import write_landmark_tables
from wzq.io.workbook.writer import (
    BAND_FILL,
    BOLD,
    CENTRE,
    OVER,
    OVER_FILL,
    PASS,
    PERMIT_ROWS_PER_PAGE,
    ROW_BORDER,
    SMALL,
    SheetWriter,
    TableRef,
    align_unknown_lengths,
    closure_text,
    header_width,
    hour_closures,
    label_rows,
    limit_texts,
    listed_hours,
    number_looks,
    plan_checks,
    plan_title,
    print_setup,
    title_block,
    values,
)
from wzq.present.tables import Column, hour_label, hourly_columns, part_hours_text

__all__ = ["permit_columns", "write_permit_sheet"]


def permit_columns(system: u.UnitSystem) -> list[Column]:
    """The numeric columns of the permit table (a subset of the display columns)."""
    keep = (
        "lanes_open",
        "demand_veh_h",
        "capacity_veh_h",
        "discharge_veh_h",
        "demand_capacity",
        "queue_max_veh",
        "queue_length_max_m",
        "delay_veh_h",
        "average_delay_min",
        "max_queue_wait_min",
    )
    by_source = {c.source: c for c in hourly_columns(system)}
    return [by_source[s] for s in keep]


def write_permit_sheet(out: SheetWriter, result: Result, stamp: str) -> TableRef:
    """The print-ready table: title block, limits, hours with pass/fail, caution, run stamp."""
    ws = out.ws
    plan = result.plan
    h = result.hours
    system = plan.site.unit_system
    limits = limit_texts(plan)
    checks = [(col, short) for col, _, short in plan_checks(plan) if col in h]
    cols = permit_columns(system)
    headers = ["Hour", "Closure", *(c.header for c in cols)]
    headers += [f"{short} {limits[col]}" for col, short in checks]
    headers.append("Hour result")
    ncol = len(headers)
    ws.sheet_view.showGridLines = False

    out.title("Lane-closure permit table")
    r = 2
    r = label_rows(out, r, [("Plan", plan_title(plan)), *title_block(plan)])
    out.put(r, 1, "Closures", font=BOLD)
    if not plan.closures:
        out.put(r, 2, "none")
        r += 1
    for i, c in enumerate(plan.closures, start=1):
        out.put(r, 2, closure_text(i, c, plan.site.lanes))
        r += 1
    out.put(r, 1, "Limits", font=BOLD)
    out.put(r, 2, "; ".join(f"{label}: {limits[col]}" for col, label, _ in plan_checks(plan)))
    r += 2

    header_row = r
    out.header(header_row, headers, height=62)
    widths = [21, 8.5, *(header_width(c.header, 7.5 if k == 0 else 11) for k, c in enumerate(cols))]
    widths += [header_width(h, 11.5, max_lines=4) for h in headers[len(widths) : -1]]
    widths.append(10)
    keep = listed_hours(result)
    idx = np.flatnonzero(keep)
    hours = [hour_label(h["hour_start"][i]) for i in idx]
    closures = hour_closures(plan, h["hour_start"][idx])
    vals = [[v[i] for i in idx] for v in values(result, cols)]
    flags = [np.asarray(h[col])[idx] for col, _ in checks]
    first = header_row + 1
    n = len(idx)
    for k in range(n):
        ok = [bool(f[k]) for f in flags]
        ws.append(
            [
                hours[k],
                closures[k],
                *(v[k] for v in vals),
                *(PASS if x else OVER for x in ok),
                (PASS if all(ok) else OVER) if checks else "no limits",
            ]
        )
    formats = [None, None, *number_looks([c.decimals for c in cols])]
    over_look = out.style.prepare(font=BOLD, fill=OVER_FILL, alignment=CENTRE, border=ROW_BORDER)
    looks = {
        (band, failing): [
            out.style.prepare(
                number_format=f,
                fill=band,
                font=BOLD if failing and j == 0 else None,
                alignment=CENTRE if j == 1 else None,
                border=ROW_BORDER,
            )
            for j, f in enumerate(formats)
        ]
        + [out.style.prepare(fill=band, alignment=CENTRE, border=ROW_BORDER)]
        * (ncol - len(formats))
        for band in (None, BAND_FILL)
        for failing in (False, True)
    }
    last = first + n - 1
    for k, row in enumerate(ws.iter_rows(min_row=first, max_row=last, max_col=ncol)):
        row_looks = looks[(BAND_FILL if k % 2 else None, row[-1].value == OVER)]
        for apply, cell in zip(row_looks, row, strict=True):
            (over_look if cell.value == OVER else apply)(cell)
    align_unknown_lengths(ws, (first, last), cols)
    for k in range(PERMIT_ROWS_PER_PAGE, n, PERMIT_ROWS_PER_PAGE):
        ws.row_breaks.append(Break(id=first + k - 1))

    r = max(last, header_row) + 2
    if n == 0:
        out.put(header_row + 1, 1, "No closure hours and no queue in the demand period.")
        r = header_row + 3
    r = write_landmark_tables(out, result, r, widths)
    hidden = int((~keep).sum())
    if hidden:
        out.put(
            r,
            1,
            f"{hidden} open-road hours without a queue are not listed; "
            "the Results sheet lists every hour.",
            font=SMALL,
        )
        r += 1
    part = part_hours_text(result)
    if part:
        out.paragraph(r, 1, part, widths, font=SMALL)
        r += 1
    failing = len(result.summary.hours_failing)
    out.put(r, 1, f"Hours over a limit: {failing} of {len(h['hour_start'])}.", font=BOLD)
    r += 1
    for warning in result.warnings:
        out.paragraph(r, 1, f"Warning: {warning}", widths, font=SMALL)
        r += 1
    out.caution(r, ncol)
    r += 1
    out.put(r, 1, stamp, font=SMALL)
    r += 2
    out.put(r, 1, "Prepared by", font=BOLD)
    out.put(r, 7, "Checked by", font=BOLD)
    for j in (3, 4, 5, 9, 10, 11):
        out.style(ws.cell(r, j), border=ROW_BORDER)
    out.put(r, 3, plan.meta.prepared_by or None, border=ROW_BORDER)
    out.put(r, 9, plan.meta.checked_by or None, border=ROW_BORDER)
    out.widths(widths)
    print_setup(ws, plan, f"A1:{get_column_letter(ncol)}{r}", header_row)
    sources = ["hour", "closure_no", *(c.source for c in cols), *(c for c, _ in checks), "result"]
    return TableRef(
        ws.title, header_row, first, last, {s: j for j, s in enumerate(sources, start=1)}
    )
