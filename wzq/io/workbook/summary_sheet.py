"""The Summary sheet: the headline figures, the limits, the closures, the warnings."""

from __future__ import annotations

from wzq.engine.results import Result
from wzq.io.workbook import layout
from wzq.io.workbook.writer import (
    BOLD,
    CENTRE,
    DATE_FORMAT,
    SECTION_FONT,
    SheetWriter,
    label_rows,
    limit_texts,
    plan_checks,
    plan_title,
    print_setup,
    title_block,
)
from wzq.present.tables import summary_lines

#: Column widths of the Summary sheet, A to G (its printed width, portrait).
WIDTHS = (30, 22, 22, 12, 11, 16, 40)

__all__ = ["write_summary_sheet"]


def write_summary_sheet(out: SheetWriter, result: Result) -> None:
    """Headline figures, limits, closures, warnings and the caution."""
    ws = out.ws
    plan = result.plan
    ws.sheet_view.showGridLines = False
    out.title(f"Summary: {plan_title(plan)}")
    r = 2
    r = label_rows(out, r, title_block(plan))
    r += 1
    out.put(r, 1, "Results", font=SECTION_FONT)
    r += 1
    for label, text in summary_lines(result):
        out.put(r, 1, label)
        out.put(r, 2, text, font=BOLD)
        r += 1
    r += 1
    out.put(r, 1, "Limits", font=SECTION_FONT)
    r += 1
    limits = limit_texts(plan)
    for col, label, _ in plan_checks(plan):
        out.put(r, 1, label)
        out.put(r, 2, limits[col])
        r += 1
    r += 1
    out.put(r, 1, "Closures", font=SECTION_FONT)
    r += 1
    out.header(r, ["No.", "Start", "End", "Lanes closed", "Lanes open", "Barrier", "Note"], None)
    r += 1
    if not plan.closures:
        out.put(r, 1, "none")
        r += 1
    for i, c in enumerate(plan.closures, start=1):
        out.put(r, 1, i, alignment=CENTRE)
        out.put(r, 2, c.start, number_format=DATE_FORMAT, alignment=CENTRE)
        out.put(r, 3, c.end, number_format=DATE_FORMAT, alignment=CENTRE)
        out.put(r, 4, c.lanes_closed, alignment=CENTRE)
        out.put(r, 5, plan.site.lanes - c.lanes_closed, alignment=CENTRE)
        out.put(r, 6, layout.word_for(layout.BARRIER_WORDS, c.barrier))
        out.put(r, 7, c.note or None)
        r += 1
    r += 1
    out.put(r, 1, "Warnings", font=SECTION_FONT)
    r += 1
    for warning in result.warnings or ["none"]:
        out.paragraph(r, 1, warning, WIDTHS)
        r += 1
    if plan.meta.notes:
        r += 1
        out.put(r, 1, "Notes", font=SECTION_FONT)
        out.put(r + 1, 1, plan.meta.notes)
        r += 2
    r += 1
    out.caution(r, 7)
    out.widths(WIDTHS)
    print_setup(ws, plan, f"A1:G{r}", landscape=False)
