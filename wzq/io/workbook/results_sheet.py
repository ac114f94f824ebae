"""The Results sheet: every hour of the demand period in the plan's units, rounded as
shown everywhere else (:func:`wzq.present.tables.hourly_display`), numbers as numbers."""

from __future__ import annotations

from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter

import wzq
from wzq.engine.results import Result
from wzq.io.workbook.landmark_tables import results_columns
from wzq.io.workbook.writer import (
    BAND_FILL,
    BOLD,
    CENTRE,
    DATE_FORMAT,
    DETAIL_COLUMNS,
    ITALIC,
    OVER_FILL,
    RESULTS_HEADER_ROW,
    SMALL,
    STATUS_ALIGN,
    SheetWriter,
    TableRef,
    align_unknown_lengths,
    header_width,
    hour_closures,
    number_looks,
    number_width,
    plan_title,
    print_setup,
    site_text,
    text_width,
    values,
)
from wzq.present.tables import hourly_columns

__all__ = ["write_results_sheet"]


def write_results_sheet(out: SheetWriter, result: Result) -> TableRef:
    """Every hour, in the plan's units, rounded as shown; failing hours marked."""
    ws = out.ws
    plan = result.plan
    system = plan.site.unit_system
    h = result.hours
    cols = hourly_columns(system)
    details = DETAIL_COLUMNS
    approach = results_columns(result)
    out.title(f"Hourly results: {plan_title(plan)}")
    out.put(2, 1, site_text(plan) or None, font=ITALIC)
    units = "US customary" if system == "us" else "metric"
    out.put(3, 1, f"Units: {units}. Numbers are rounded as shown. {wzq.CAUTION}", font=SMALL)
    headers = ["Hour", "Closure", *(c.header for c in cols), "Status", *(c.header for c in details)]
    headers += [head for head, _, _, _ in approach]
    hr = RESULTS_HEADER_ROW
    out.header(hr, headers)
    hours = list(h["hour_start"])
    closures = hour_closures(plan, h["hour_start"])
    main = values(result, cols)
    extra = values(result, details)
    status = h["status"].tolist()
    n = len(hours)
    first = hr + 1
    for i in range(n):
        ws.append(
            [
                hours[i],
                closures[i],
                *(v[i] for v in main),
                status[i],
                *(v[i] for v in extra),
                *(v[i] for _, _, v, _ in approach),
            ]
        )
    formats = [DATE_FORMAT, None, *number_looks([c.decimals for c in cols]), None]
    formats += number_looks([c.decimals for c in details])
    formats += number_looks([d for _, _, _, d in approach])
    aligns: list[Alignment | None] = [None] * len(headers)
    for j, (_, _, _, d) in enumerate(approach, start=len(headers) - len(approach)):
        aligns[j] = CENTRE if d is None else None
    aligns[1] = CENTRE
    status_col = 2 + len(cols)
    aligns[status_col] = STATUS_ALIGN
    looks = {
        kind: [
            out.style.prepare(
                number_format=f,
                alignment=a,
                fill=fill,
                font=BOLD if kind == "over" and j == status_col else None,
            )
            for j, (f, a) in enumerate(zip(formats, aligns, strict=True))
        ]
        for kind, fill in (("plain", None), ("band", BAND_FILL), ("over", OVER_FILL))
    }
    for i, row in enumerate(ws.iter_rows(min_row=first, max_row=first + n - 1)):
        kind = "over" if status[i] != "ok" else "band" if i % 2 else "plain"
        for apply, cell in zip(looks[kind], row, strict=True):
            apply(cell)
    align_unknown_lengths(ws, (first, first + n - 1), cols)
    status_width = text_width([*status, "Status"], bold=True)
    widths = [21, 8.5]
    widths += [
        header_width(c.header, number_width(v, c.decimals)) for c, v in zip(cols, main, strict=True)
    ]
    widths.append(status_width)
    widths += [
        header_width(c.header, number_width(v, c.decimals))
        for c, v in zip(details, extra, strict=True)
    ]
    widths += [
        header_width(head, 8.0 if d is None else number_width(v, d)) for head, _, v, d in approach
    ]
    out.widths(widths)
    ws.freeze_panes = ws.cell(first, 2)
    ncol = len(headers)
    if n:
        ws.auto_filter.ref = f"A{hr}:{get_column_letter(ncol)}{first + n - 1}"
    print_setup(ws, plan, f"A1:{get_column_letter(ncol)}{first + max(n, 1) - 1}", hr)
    sources = ["hour_start", "closure_no", *(c.source for c in cols), "status"]
    sources += [c.source for c in details]
    sources += [source for _, source, _, _ in approach]
    return TableRef(
        ws.title, hr, first, first + n - 1, {s: j for j, s in enumerate(sources, start=1)}
    )
