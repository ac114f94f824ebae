"""The printed permit report: one PDF per analysed plan.

Contents, in order: a title block with sign-off lines and the summary; the
site, closure and other inputs in the plan's units; the hour-by-hour table
(the shared display rounding of :func:`wzq.present.tables.hourly_display`, one column
per agency limit, hours over a limit shaded, in bold and marked ``OVER`` so
they stay readable in black and white); the charts of
:mod:`wzq.present.drawings`; a note on the method naming its published sources;
and the caution. Every page carries the caution and "Page x of y".

Layout uses reportlab's platypus (a :class:`~reportlab.platypus.LongTable`
whose header row repeats on every page, and a two-pass canvas for the page
count). Charts are vector graphics, so lines stay sharp at any zoom and print
scale and chart labels stay text: the demand, queue-length and cumulative
charts are drawn straight as reportlab drawings (:mod:`wzq.present.drawings`,
no matplotlib); the space-time picture and the risk fan chart, when the plan
has them, are drawn by matplotlib as SVG, which svglib turns into a reportlab
drawing (without svglib they fall back to 200-dpi PNG images: same look,
larger file).

Pages are landscape throughout (the hourly table needs the width; one
orientation keeps printing and binding simple). Text is set in DejaVu Sans,
the font shipped with matplotlib, embedded as a subset, so any name a user
types (accents, other scripts DejaVu covers) prints as typed.

This module is an adapter: it reads a :class:`wzq.engine.results.Result` and writes
a file; it computes nothing the engine does not.
"""

from __future__ import annotations

import datetime as dt
import importlib.util
import io
import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from xml.sax.saxutils import escape

import numpy as np
import pandas as pd
from reportlab.lib import colors
from reportlab.lib.enums import TA_CENTER
from reportlab.lib.pagesizes import A4, LETTER, landscape
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import inch
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfgen import canvas as rl_canvas
from reportlab.platypus import (
    BaseDocTemplate,
    CondPageBreak,
    Flowable,
    Frame,
    Image,
    KeepTogether,
    LongTable,
    PageBreak,
    PageTemplate,
    Paragraph,
    Spacer,
    Table,
    TableStyle,
)
from reportlab.platypus.doctemplate import LayoutError

import wzq
from wzq import units as u
from wzq.engine.plan import PlanError, Problem, Site
from wzq.engine.results import Result
from wzq.engine.risk import RiskResult, plan_risk
from wzq.io.fontcache import load_ttfonts
from wzq.io.workbook import layout as L
from wzq.io.workbook.save import write_atomically
from wzq.io.workbook.writer import listed_hours
from wzq.models.capacity import METHOD_LABELS
from wzq.present import drawings as charts
from wzq.present.risk import risk_hour_table, risk_method, risk_summary_lines
from wzq.present.tables import (
    charted_landmarks,
    exit_ramp_display,
    hour_label,
    hourly_columns,
    hourly_display,
    landmark_display,
    limit_values,
    part_hours_text,
    ramp_flow_text,
    summary_lines,
    unknown_length_text,
    window_counts,
    windows_listed_text,
)

__all__ = [
    "BOX_FILL",
    "CHECKS",
    "FAIL_FILL",
    "FONT",
    "FONT_BOLD",
    "FONT_ITALIC",
    "GRID",
    "MARGIN_BOTTOM",
    "MARGIN_TOP",
    "MARGIN_X",
    "MAX_FIELD_CHARS",
    "OVER",
    "PAPERS",
    "PASS",
    "REPORT_KIND",
    "SHORT_NOTES_CHARS",
    "WINDOW_MARKS",
    "CheckColumn",
    "NumberedCanvas",
    "Styles",
    "approach_method",
    "approach_section",
    "build_report",
    "caution_box",
    "charts_section",
    "check_columns",
    "closures_block",
    "congested_branch_rows",
    "hourly_rows",
    "hourly_section",
    "inputs_section",
    "make_styles",
    "method_section",
    "number",
    "page_size",
    "register_fonts",
    "risk_section",
    "sign_off",
    "space_time_section",
    "svg_available",
    "text",
    "text_problems",
    "title_block",
    "typed_capacity_text",
    "warnings_block",
    "windows_section",
    "words",
    "write_report",
]

#: Paper sizes offered (always used in landscape).
PAPERS: dict[str, tuple[float, float]] = {"letter": LETTER, "a4": A4}

MARGIN_X = 0.5 * inch
MARGIN_TOP = 0.75 * inch
MARGIN_BOTTOM = 0.7 * inch

FONT = "WzqSans"
FONT_BOLD = "WzqSans-Bold"
FONT_ITALIC = "WzqSans-Oblique"

#: Grey levels (black-and-white printing): failing rows, header rules, grid.
FAIL_FILL = colors.Color(0.80, 0.80, 0.80)
BOX_FILL = colors.Color(0.94, 0.94, 0.94)
GRID = colors.Color(0.65, 0.65, 0.65)

#: The word that marks a failing check in the hourly table.
OVER = "OVER"
PASS = "ok"

#: Hourly-table threshold checks: (column of ``Result.hourly``, short name).
CHECKS = (
    ("queue_ok", "queue"),
    ("delay_ok", "delay"),
    ("demand_capacity_ok", "demand/capacity"),
)

REPORT_KIND = "Lane-closure queue and delay calculation"

#: Notes up to this many characters are printed beside the inputs; longer ones
#: after the closures (they may then take a page of their own).
SHORT_NOTES_CHARS = 600

#: Longest text (characters) printed in a title-block line or a table cell; a
#: longer one could not fit on a page. ``meta.notes`` has no limit.
MAX_FIELD_CHARS = 400


# --- fonts and styles ---------------------------------------------------------------------------


#: The report's faces: its font name, DejaVu Sans file (shipped with matplotlib),
#: weight and style.
FACES = (
    (FONT, "DejaVuSans.ttf", "normal", "normal"),
    (FONT_BOLD, "DejaVuSans-Bold.ttf", "bold", "normal"),
    (FONT_ITALIC, "DejaVuSans-Oblique.ttf", "normal", "italic"),
    (f"{FONT}-BoldOblique", "DejaVuSans-BoldOblique.ttf", "bold", "italic"),
)


def font_folder() -> Path:
    """matplotlib's folder of DejaVu Sans files, found without importing matplotlib (a
    third of a second that the report's own charts do not need)."""
    spec = importlib.util.find_spec("matplotlib")
    if spec is None or not spec.submodule_search_locations:
        raise RuntimeError("matplotlib is not installed: the report's font comes with it")
    return Path(next(iter(spec.submodule_search_locations))) / "mpl-data" / "fonts" / "ttf"


def register_fonts() -> None:
    """Register DejaVu Sans under the report's font names, once per process, the parsed
    fonts loaded from a cache (:mod:`wzq.io.fontcache`)."""
    if FONT in pdfmetrics.getRegisteredFontNames():
        return
    ttf = font_folder()
    fonts = load_ttfonts([(name, ttf / file) for name, file, _, _ in FACES])
    for font in fonts:
        pdfmetrics.registerFont(font)
    pdfmetrics.registerFontFamily(
        FONT, normal=FONT, bold=FONT_BOLD, italic=FONT_ITALIC, boldItalic=f"{FONT}-BoldOblique"
    )


_SVG_FONTS_MAPPED: list[bool] = []


def map_svg_fonts(svg_fonts) -> None:
    """Map matplotlib's "DejaVu Sans" in svglib to the report's embedded font files, once
    per process, so that the labels of a matplotlib chart stay real text in the very
    font matplotlib measured them in, whatever fonts the machine has."""
    if _SVG_FONTS_MAPPED:
        return
    from wzq.present.figures import FONT_FAMILY

    ttf = font_folder()
    parsed = {name: pdfmetrics.getFont(name) for name, _, _, _ in FACES}
    # svglib maps an SVG family only by registering a font file, which it parses
    # with the TTFont it imported; it is handed the font already parsed instead
    parse = svg_fonts.TTFont
    svg_fonts.TTFont = lambda name, path, *a, **k: parsed.get(name) or parse(name, path)
    try:
        for name, file, weight, style in FACES:
            svg_fonts.register_font(FONT_FAMILY, str(ttf / file), weight, style, rlgFontName=name)
    finally:
        svg_fonts.TTFont = parse
    _SVG_FONTS_MAPPED.append(True)


@dataclass(frozen=True)
class Styles:
    """Paragraph styles of the report."""

    title: ParagraphStyle
    subtitle: ParagraphStyle
    h1: ParagraphStyle
    h2: ParagraphStyle
    body: ParagraphStyle
    method: ParagraphStyle
    small: ParagraphStyle
    cell: ParagraphStyle
    cell_bold: ParagraphStyle
    head: ParagraphStyle
    caption: ParagraphStyle
    caution: ParagraphStyle


def make_styles() -> Styles:
    register_fonts()
    base = ParagraphStyle("base", fontName=FONT, fontSize=9, leading=11.5)
    return Styles(
        title=ParagraphStyle("title", base, fontName=FONT_BOLD, fontSize=15, leading=19),
        subtitle=ParagraphStyle("subtitle", base, fontSize=10.5, leading=13.5, spaceAfter=4),
        h1=ParagraphStyle(
            "h1", base, fontName=FONT_BOLD, fontSize=12, leading=15, spaceBefore=2, spaceAfter=5
        ),
        h2=ParagraphStyle(
            "h2",
            base,
            fontName=FONT_BOLD,
            fontSize=9.5,
            leading=12,
            spaceBefore=6,
            spaceAfter=3,
            keepWithNext=1,
        ),
        method=ParagraphStyle("method", base, fontSize=9, leading=13, spaceAfter=6),
        body=ParagraphStyle("body", base, spaceAfter=4),
        small=ParagraphStyle("small", base, fontSize=7.5, leading=9.5),
        cell=ParagraphStyle("cell", base, fontSize=8, leading=10),
        cell_bold=ParagraphStyle("cell_bold", base, fontName=FONT_BOLD, fontSize=8, leading=10),
        head=ParagraphStyle(
            "head", base, fontName=FONT_BOLD, fontSize=6.8, leading=8, alignment=TA_CENTER
        ),
        caption=ParagraphStyle(
            "caption", base, fontName=FONT_ITALIC, fontSize=8, leading=10, spaceBefore=2
        ),
        caution=ParagraphStyle("caution", base, fontName=FONT_BOLD, fontSize=9.5, leading=12.5),
    )


def text(value: object) -> str:
    """User text made safe for paragraph markup (nothing dropped, ``<`` and ``&`` escaped)."""
    return escape(str(value)).replace("\n", "<br/>")


def words(choices: L.Choices, value: object) -> str:
    """The plain words the workbook shows for a plan value (``soft`` -> ``cones or
    drums``), escaped for paragraph markup."""
    return text(L.word_for(choices, value))


def number(value: float | int | str, decimals: int) -> str:
    """A display value with thousands separators; ``-`` for a missing value; a text
    (a length that is unknown) as it is."""
    if isinstance(value, str):
        return value
    if value is None or (isinstance(value, float) and not np.isfinite(value)):
        return "-"
    return f"{value:,.{decimals}f}"


# --- page furniture -----------------------------------------------------------------------------


class NumberedCanvas(rl_canvas.Canvas):
    """A canvas that holds its pages until the end so it can print "Page x of y"."""

    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        self._pages: list[dict] = []

    def showPage(self) -> None:
        self._pages.append(dict(self.__dict__))
        self._startPage()

    def save(self) -> None:
        total = len(self._pages)
        for state in self._pages:
            self.__dict__.update(state)
            w, _ = self._pagesize
            self.setFont(FONT_BOLD, 8)
            self.drawRightString(
                w - MARGIN_X, MARGIN_BOTTOM - 24, f"Page {self._pageNumber} of {total}"
            )
            super().showPage()
        super().save()


def _furniture(heading: str, right: str):
    """The per-page header (title and tool) and footer (caution) drawer."""

    def draw(canv: rl_canvas.Canvas, doc: BaseDocTemplate) -> None:
        w, h = doc.pagesize
        canv.saveState()
        canv.setFont(FONT_BOLD, 8)
        room = w - 2 * MARGIN_X - pdfmetrics.stringWidth(right, FONT, 8) - 24
        canv.drawString(MARGIN_X, h - MARGIN_TOP + 22, _fit(heading, FONT_BOLD, 8, room))
        canv.setFont(FONT, 8)
        canv.drawRightString(w - MARGIN_X, h - MARGIN_TOP + 22, right)
        canv.setLineWidth(0.6)
        canv.line(MARGIN_X, h - MARGIN_TOP + 16, w - MARGIN_X, h - MARGIN_TOP + 16)
        canv.line(MARGIN_X, MARGIN_BOTTOM - 12, w - MARGIN_X, MARGIN_BOTTOM - 12)
        canv.setFont(FONT_ITALIC, 7.5)
        canv.drawString(MARGIN_X, MARGIN_BOTTOM - 24, wzq.CAUTION)
        canv.restoreState()

    return draw


def _fit(s: str, font: str, size: float, width: float) -> str:
    """``s`` shortened with an ellipsis to fit ``width`` (page header only)."""
    if pdfmetrics.stringWidth(s, font, size) <= width:
        return s
    while s and pdfmetrics.stringWidth(s + "…", font, size) > width:
        s = s[:-1]
    return s + "…"


# --- sections -----------------------------------------------------------------------------------


def _grid_table(
    rows: list[list], widths: Sequence[float], *, header: bool = False, boxed: bool = False
) -> Table:
    t = Table(rows, colWidths=list(widths), hAlign="LEFT")
    style = [
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), 4),
        ("RIGHTPADDING", (0, 0), (-1, -1), 4),
        ("TOPPADDING", (0, 0), (-1, -1), 2),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
        ("LINEBELOW", (0, 0), (-1, -1), 0.3, GRID),
    ]
    if header:
        style += [("LINEBELOW", (0, 0), (-1, 0), 0.9, colors.black)]
    if boxed:
        style += [("BOX", (0, 0), (-1, -1), 0.9, colors.black)]
    t.setStyle(TableStyle(style))
    return t


def _label_rows(pairs: list[tuple[str, str]], st: Styles) -> list[list[Paragraph]]:
    return [[Paragraph(text(k), st.cell_bold), Paragraph(v, st.cell)] for k, v in pairs]


def title_block(
    result: Result, st: Styles, width: float, generated: dt.date, source: str | None
) -> list[Flowable]:
    """Title, identification, summary box, caution and sign-off lines."""
    plan = result.plan
    m, s, d = plan.meta, plan.site, plan.demand
    title = m.title or s.name or REPORT_KIND
    hours = (d.end - d.start).total_seconds() / u.HOUR
    ident = [
        ("Project", text(m.project) or "-"),
        ("Route", text(m.route) or "-"),
        ("Site", text(s.name) or "-"),
        ("Direction", text(s.direction) or "-"),
        (
            "Analysis period",
            f"{hour_label(d.start)} to {hour_label(d.end)} ({hours:,.0f} h)",
        ),
        ("Lane closures", _closure_brief(result)),
        ("Report date", f"{generated:%Y-%m-%d}"),
        ("Calculated with", f"wzq {wzq.__version__}"),
    ]
    if source:
        ident.append(("Plan file", text(source)))
    half = (width - 12) / 2
    ident_t = _grid_table(_label_rows(ident, st), [0.3 * half, 0.7 * half])
    summary = [(k, text(v)) for k, v in summary_lines(result)]
    failing = result.summary.hours_failing
    if failing:
        listed = ", ".join(hour_label(t) for t in failing[:8])
        more = f" and {len(failing) - 8} more" if len(failing) > 8 else ""
        summary.append(("Hours over a limit (start)", text(listed + more)))
    summary_t = _grid_table(
        [[Paragraph("Summary", st.h2), ""], *_label_rows(summary, st)],
        [0.36 * half, 0.64 * half],
        boxed=True,
    )
    summary_t.setStyle(
        TableStyle([("SPAN", (0, 0), (1, 0)), ("BACKGROUND", (0, 0), (-1, -1), BOX_FILL)])
    )
    top = Table([[ident_t, summary_t]], colWidths=[half + 12, half], hAlign="LEFT")
    top.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LEFTPADDING", (0, 0), (-1, -1), 0),
                ("RIGHTPADDING", (0, 0), (-1, -1), 0),
            ]
        )
    )
    out: list[Flowable] = [
        Paragraph(text(title), st.title),
        Paragraph(REPORT_KIND, st.subtitle),
        top,
        Spacer(1, 8),
        caution_box(st, width),
        Spacer(1, 8),
        sign_off(result, st, width),
    ]
    out += warnings_block(result, st)
    return out


def _closure_brief(result: Result) -> str:
    plan = result.plan
    if not plan.closures:
        return "none (open road only)"
    parts = [
        f"{i + 1}: {hour_label(c.start)} to {hour_label(c.end)}, "
        f"{c.lanes_closed} of {plan.site.lanes} lanes closed"
        for i, c in enumerate(plan.closures[:4])
    ]
    if len(plan.closures) > 4:
        parts.append(f"and {len(plan.closures) - 4} more (see the inputs)")
    return "<br/>".join(parts)


def caution_box(st: Styles, width: float) -> Table:
    t = Table([[Paragraph(f"Caution: {text(wzq.CAUTION)}", st.caution)]], colWidths=[width])
    t.setStyle(
        TableStyle(
            [
                ("BOX", (0, 0), (-1, -1), 1.4, colors.black),
                ("LEFTPADDING", (0, 0), (-1, -1), 8),
                ("TOPPADDING", (0, 0), (-1, -1), 5),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 6),
            ]
        )
    )
    return t


def sign_off(result: Result, st: Styles, width: float) -> Table:
    """Prepared-by and checked-by lines with room for a signature and date."""
    m = result.plan.meta
    head = [Paragraph(h, st.cell_bold) for h in ("Sign-off", "Name", "Signature", "Date")]
    rows = [
        head,
        [Paragraph("Prepared by", st.cell_bold), Paragraph(text(m.prepared_by), st.cell), "", ""],
        [Paragraph("Checked by", st.cell_bold), Paragraph(text(m.checked_by), st.cell), "", ""],
    ]
    t = Table(rows, colWidths=[0.14 * width, 0.36 * width, 0.32 * width, 0.18 * width])
    t.setStyle(
        TableStyle(
            [
                ("GRID", (0, 0), (-1, -1), 0.6, colors.black),
                ("BACKGROUND", (0, 0), (-1, 0), BOX_FILL),
                ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                ("TOPPADDING", (0, 1), (-1, -1), 9),
                ("BOTTOMPADDING", (0, 1), (-1, -1), 9),
            ]
        )
    )
    return t


def warnings_block(result: Result, st: Styles) -> list[Flowable]:
    out: list[Flowable] = [Paragraph("Warnings", st.h2)]
    if not result.warnings:
        return [*out, Paragraph("None.", st.body)]
    for w in result.warnings:
        out.append(Paragraph(f"Warning: {text(w)}", st.body, bulletText="•"))
    return out


def inputs_section(result: Result, st: Styles, width: float) -> list[Flowable]:
    """Site, derived values, demand, limits, costs, options and the closures, in plan units."""
    plan = result.plan
    s, model, system = plan.site, result.site_model, plan.site.unit_system
    speed_name, _ = u.SPEED[system]
    short_name, _ = u.SHORT_LENGTH[system]
    dens_name, _ = u.DENSITY[system]
    long_name, long_m = u.LONG_LENGTH[system]

    def speed(v: float) -> str:
        return f"{u.mps_to_speed(v, system):,.1f} {speed_name}"

    site_rows = [
        ("Site", text(s.name) or "-"),
        ("Direction", text(s.direction) or "-"),
        ("Lanes in normal operation", f"{s.lanes}"),
        ("Speed limit", speed(s.speed_limit)),
        ("Work-zone speed limit", speed(s.work_zone_speed_limit)),
        (
            "Free-flow speed",
            speed(model.ffs)
            + (" (speed limit + 5 mi/h, HCM default)" if s.free_flow_speed is None else ""),
        ),
        ("Work-zone length", f"{u.m_to_long_length(s.work_zone_length, system):,.2f} {long_name}"),
        ("Heavy vehicles", f"{s.heavy_vehicle_share * 100:,.1f} %"),
        ("Terrain", words(L.TERRAIN_WORDS, s.terrain)),
        ("Area type", words(L.AREA_WORDS, s.area_type)),
        (
            "Lateral clearance",
            f"{u.m_to_short_length(s.lateral_clearance, system):,.1f} {short_name}",
        ),
        ("Driver population", words(L.DRIVER_WORDS, s.driver_population)),
        ("Ramp density", f"{s.ramp_density * long_m:,.2f} per {long_name}"),
        (
            "Jam density",
            f"{u.per_m_to_density(model.jam_density, system):,.1f} {dens_name}"
            + (
                " (190 pc/mi/ln × heavy-vehicle factor, HCM default)"
                if s.jam_density is None
                else ""
            ),
        ),
    ]
    open_pre = model.base_veh_h_ln * s.lanes
    derived = [
        ("Capacity method", text(METHOD_LABELS.get(s.capacity_method, s.capacity_method))),
        (
            "Base capacity",
            f"{model.base_pc_h_ln:,.0f} pc/h/ln"
            + (" (from free-flow speed)" if s.base_capacity_pc_h_ln is None else " (entered)"),
        ),
        ("Heavy-vehicle factor", f"{model.heavy_factor:.3f}"),
        ("Driver population factor", f"{model.driver_factor:.3f}"),
        ("Open-road capacity", f"{open_pre:,.0f} veh/h (all {s.lanes} lanes)"),
    ]
    if s.capacity_method == "hcm7":
        derived.append(
            (
                "Capacity drop",
                f"{s.capacity_drop_pct_work_zone:.1f} % in the work zone, "
                f"{s.capacity_drop_pct_open:.1f} % on the open road",
            )
        )
    else:
        derived += [
            ("Work intensity", f"{s.work_intensity_pc_h_ln:+,.0f} pc/h/ln"),
            ("Entrance-ramp adjustment", f"{s.ramp_adjustment_pc_h_ln:,.0f} pc/h/ln"),
        ]
    d = plan.demand
    flows = d.flows_veh_h
    peak = int(np.argmax(flows))
    demand_rows = [
        ("Demand starts", hour_label(d.start)),
        ("Interval", f"{d.interval_s / 60:,.0f} min, {len(flows):,} intervals"),
        (
            "Peak demand",
            f"{flows[peak]:,.0f} veh/h at "
            f"{hour_label(d.start + dt.timedelta(seconds=peak * d.interval_s))}",
        ),
        ("Vehicles in the period", f"{float(flows.sum()) * d.interval_s / u.HOUR:,.0f}"),
    ]
    th = plan.thresholds
    shown = limit_values(plan)
    limit_rows = [
        ("Queue length", shown["queue_ok"] if th.max_queue_length else "not checked"),
        ("Average delay", shown["delay_ok"] if th.max_average_delay else "not checked"),
        (
            "Demand / capacity",
            f"{shown['demand_capacity_ok']} (closure hours)"
            if th.max_demand_capacity
            else "not checked",
        ),
    ]
    if "landmark_ok" in shown:
        limit_rows.append(("Queue must not pass", text(shown["landmark_ok"])))
    from wzq.engine.costs import plan_costs

    c = plan_costs(plan)
    if c is not None:
        share = s.heavy_vehicle_share if c.truck_share is None else c.truck_share
        cost_rows = [
            (
                "Car value of time",
                f"{c.car_value_per_person_h:,.2f} {text(c.currency)} per person-h",
            ),
            ("Car occupancy", f"{c.car_occupancy:,.2f} persons"),
            ("Truck value of time", f"{c.truck_value_per_veh_h:,.2f} {text(c.currency)} per veh-h"),
            ("Truck share", f"{share * 100:,.1f} %" + (" (site)" if c.truck_share is None else "")),
            ("Dollar year", f"{c.dollar_year}"),
        ]
        if plan.costs is None:
            cost_rows.append(("Source", "published defaults (none entered); update them"))
    o = plan.options
    option_rows = [
        ("Capacity drop", "on" if o.capacity_drop else "off"),
        ("Fundamental diagram", words(L.DIAGRAM_WORDS, o.diagram)),
        ("Queue length", words(L.QUEUE_METHOD_WORDS, result.length_method)),
    ]
    option_rows += congested_branch_rows(result)
    half = (width - 12) / 2
    w2 = [0.36 * half, 0.64 * half]

    def block(title: str, rows: list[tuple[str, str]]) -> list[Flowable]:
        return [Paragraph(title, st.h2), _grid_table(_label_rows(rows, st), w2)]

    system_name = "US customary" if system == "us" else "metric"
    left = (
        block(f"Site (unit system: {system_name})", site_rows)
        + block("Agency limits", limit_rows)
        + block("Options", option_rows)
    )
    right = (
        block("Capacity", derived)
        + block("Demand", demand_rows)
        + block("Road-user cost", cost_rows)
    )
    notes = plan.meta.notes
    short_notes = bool(notes) and len(notes) <= SHORT_NOTES_CHARS
    if short_notes:  # beside the inputs rather than alone on a page of its own
        right += [Paragraph("Notes", st.h2), Paragraph(text(notes), st.body)]
    cols = Table([[left, right]], colWidths=[half + 12, half], hAlign="LEFT")
    cols.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LEFTPADDING", (0, 0), (-1, -1), 0),
                ("RIGHTPADDING", (0, 0), (-1, -1), 0),
            ]
        )
    )
    out: list[Flowable] = [Paragraph("Inputs", st.h1), cols]
    out += closures_block(result, st, width)
    if notes and not short_notes:
        out += [Paragraph("Notes", st.h2), Paragraph(text(notes), st.body)]
    return out


def _range(values: np.ndarray) -> str:
    lo, hi = float(np.min(values)), float(np.max(values))
    if round(lo) == round(hi):
        return f"{lo:,.0f}"
    return f"{lo:,.0f} to {hi:,.0f}"


def closures_block(result: Result, st: Styles, width: float) -> list[Flowable]:
    """One row per closure with the capacities the engine used while it was in force."""
    plan = result.plan
    out: list[Flowable] = [Paragraph("Lane closures", st.h2)]
    if not plan.closures:
        return [*out, Paragraph("None: the open road only.", st.body)]
    iv, in_force = result.intervals, result.interval_closure
    pre, dis = iv["capacity_veh_h"].to_numpy(), iv["discharge_veh_h"].to_numpy()
    heads = [
        "No.",
        "Start",
        "End",
        "Hours",
        "Lanes closed (open)",
        "Barrier",
        "Day / night term",
        "Capacity override (veh/h/ln)",
        "Capacity before breakdown (veh/h)",
        "Queue discharge rate (veh/h)",
        "Note",
    ]
    rows: list[list] = [[Paragraph(h, st.head) for h in heads]]
    for i, c in enumerate(plan.closures):
        sel = in_force == i
        night = "from the clock" if c.night is None else ("night" if c.night else "day")
        rows.append(
            [
                f"{i + 1}",
                hour_label(c.start),
                hour_label(c.end),
                f"{(c.end - c.start).total_seconds() / u.HOUR:,.2f}",
                f"{c.lanes_closed} ({plan.site.lanes - c.lanes_closed})",
                Paragraph(words(L.BARRIER_WORDS, c.barrier), st.small),
                night,
                "-"
                if c.capacity_override_veh_h_ln is None
                else f"{c.capacity_override_veh_h_ln:,.0f}",
                _range(pre[sel]) if sel.any() else "-",
                _range(dis[sel]) if sel.any() else "-",
                Paragraph(text(c.note), st.small),
            ]
        )
    fixed = [26, 92, 92, 38, 52, 74, 58, 58, 68, 68]
    widths = [*fixed, max(width - sum(fixed), 60)]
    t = LongTable(rows, colWidths=widths, repeatRows=1, hAlign="LEFT")
    t.setStyle(
        TableStyle(
            [
                ("FONT", (0, 1), (-1, -1), FONT, 7.5),
                ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                ("ALIGN", (0, 1), (0, -1), "RIGHT"),
                ("ALIGN", (3, 1), (4, -1), "RIGHT"),
                ("ALIGN", (7, 1), (9, -1), "RIGHT"),
                ("LINEBELOW", (0, 0), (-1, 0), 0.9, colors.black),
                ("LINEBELOW", (0, 1), (-1, -1), 0.3, GRID),
                ("LEFTPADDING", (0, 0), (-1, -1), 3),
                ("RIGHTPADDING", (0, 0), (-1, -1), 3),
            ]
        )
    )
    return [*out, t]


@dataclass(frozen=True)
class CheckColumn:
    """One agency-limit column of the hourly table."""

    source: str  # boolean column of Result.hourly
    header: str


def check_columns(result: Result) -> list[CheckColumn]:
    """The limits that are set, as table columns (header names the limit in plan units)."""
    shown = limit_values(result.plan)
    heads = {
        "queue_ok": "Queue ≤ {}",
        "delay_ok": "Average delay ≤ {}",
        "demand_capacity_ok": "D/C ≤ {} (closure hours)",
        "landmark_ok": "Not past {}",
    }
    limit = result.plan.thresholds.queue_must_not_pass
    shown = {**shown, "landmark_ok": limit} if "landmark_ok" in shown else shown
    return [
        CheckColumn(column, head.format(shown[column].removesuffix("/veh")))
        for column, head in heads.items()
        if column in shown
    ]


def hourly_rows(result: Result) -> tuple[list[str], list[list[str]], np.ndarray]:
    """Headers, formatted cells and a failing-hour mask of the hourly table.

    Numbers come from :func:`wzq.present.tables.hourly_display` (the shared rounding)
    and are printed with thousands separators and the display decimals.
    """
    system = result.plan.site.unit_system
    cols = hourly_columns(system)
    table = hourly_display(result)
    checks = check_columns(result)
    h = result.hourly
    headers = ["Hour (start)", *(c.header for c in cols), *(c.header for c in checks)]
    cells = []
    for i, row in enumerate(table.itertuples(index=False)):
        values = [row[0]]
        values += [number(row[k + 1], c.decimals) for k, c in enumerate(cols)]
        values += [PASS if bool(h[c.source].iloc[i]) else OVER for c in checks]
        cells.append(values)
    failing = (h["status"] != "ok").to_numpy()
    return headers, cells, failing


def hourly_section(result: Result, st: Styles, width: float) -> list[Flowable]:
    """The hour-by-hour table: header repeated on every page, failing hours marked."""
    headers, cells, failing = hourly_rows(result)
    n_checks = len(check_columns(result))
    size = 7.2
    hour_w = pdfmetrics.stringWidth("Wed 2027-05-05 00:00", FONT_BOLD, size) + 8
    n_num = len(headers) - 1 - n_checks
    check_w = 50.0
    num_w = (width - hour_w - n_checks * check_w) / n_num
    widths = [hour_w, *([num_w] * n_num), *([check_w] * n_checks)]
    data = [[Paragraph(text(hd), st.head) for hd in headers], *cells]
    style = [
        ("FONT", (0, 1), (-1, -1), FONT, size),
        ("LEADING", (0, 1), (-1, -1), size + 1.5),
        ("ALIGN", (1, 1), (-1, -1), "RIGHT"),
        ("ALIGN", (len(headers) - n_checks, 1), (-1, -1), "CENTER"),
        ("VALIGN", (0, 0), (-1, 0), "BOTTOM"),
        ("TOPPADDING", (0, 1), (-1, -1), 1.2),
        ("BOTTOMPADDING", (0, 1), (-1, -1), 1.8),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 4),
        ("LINEABOVE", (0, 0), (-1, 0), 0.9, colors.black),
        ("LINEBELOW", (0, 0), (-1, 0), 0.9, colors.black),
        ("LINEBELOW", (0, 1), (-1, -1), 0.25, GRID),
        ("LINEAFTER", (0, 0), (0, -1), 0.5, GRID),
    ]
    if n_checks:
        style.append(("LINEBEFORE", (len(headers) - n_checks, 0), (-1, -1), 0.5, GRID))
    hours = result.hourly["hour_start"]
    for i in range(1, len(cells)):
        if hours.iloc[i].hour == 0:
            style.append(("LINEABOVE", (0, i + 1), (-1, i + 1), 0.9, colors.black))
    for i in np.flatnonzero(failing):
        style += [
            ("BACKGROUND", (0, i + 1), (-1, i + 1), FAIL_FILL),
            ("FONT", (0, i + 1), (-1, i + 1), FONT_BOLD, size),
        ]
    table = LongTable(data, colWidths=widths, repeatRows=1, hAlign="LEFT")
    table.setStyle(TableStyle(style))
    n_fail = int(failing.sum())
    if n_checks:
        key = (
            f"{n_fail} of {len(cells)} hours are over a limit: those rows are shaded, in bold, "
            f"and marked {OVER} under each limit they break."
        )
    else:
        key = "No agency limits were entered, so no hour is checked."
    notes = (
        "Hours start at the time shown and last one hour. Longest queue is the longest at "
        "any instant in the hour; the queue at the end of an hour carries into the next. "
        "Delay counts queueing delay and the extra travel time through the work zone. "
        "A heavy line marks midnight. " + key
    )
    part = part_hours_text(result)
    if part:
        notes += " " + part
    return [Paragraph("Hour by hour", st.h1), Paragraph(notes, st.small), Spacer(1, 4), table]


def congested_branch_rows(result: Result) -> list[tuple[str, str]]:
    """The congested branch of the diagram, when it is not derived from capacity and jam
    density: how it was set and the backward wave speed it gives."""
    s = result.plan.site
    if s.congested_branch == "derived":
        return []
    diagram = result.site_model.diagram
    w = getattr(diagram, "backward_wave_speed", None)
    speed_name, _ = u.SPEED[s.unit_system]
    shown = words(L.CONGESTED_WORDS, s.congested_branch)
    if w is not None:
        shown += f"; backward wave speed {u.mps_to_speed(w, s.unit_system):,.1f} {speed_name}"
    return [("Congested branch", shown)]


def _display_table(
    table: pd.DataFrame, decimals: Sequence[int | None], st: Styles, widths: Sequence[float]
) -> Table:
    """A display table of :mod:`wzq.present.tables`: text wraps, numbers right-aligned."""
    rows: list[list] = [[Paragraph(text(h), st.head) for h in table.columns]]
    for values in table.itertuples(index=False):
        rows.append(
            [
                Paragraph(text(v), st.cell) if d is None or isinstance(v, str) else number(v, d)
                for v, d in zip(values, decimals, strict=True)
            ]
        )
    t = Table(rows, colWidths=list(widths), hAlign="LEFT", repeatRows=1)
    numeric = [j for j, d in enumerate(decimals) if d is not None]
    style = [
        ("FONT", (0, 1), (-1, -1), FONT, 8),
        ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
        ("LINEBELOW", (0, 0), (-1, 0), 0.9, colors.black),
        ("LINEBELOW", (0, 1), (-1, -1), 0.3, GRID),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 4),
    ]
    style += [("ALIGN", (j, 1), (j, -1), "RIGHT") for j in numeric]
    t.setStyle(TableStyle(style))
    return t


def approach_section(result: Result, st: Styles, width: float) -> list[Flowable]:
    """Where the back of the queue reached on the approach: per landmark (with its kind
    and, for a ramp, its flow) when it was first reached, how long and how far the queue
    was beyond it and in how many hours; per exit ramp, the delay of the traffic leaving
    there while the queue held it."""
    plan = result.plan
    table = landmark_display(result)
    by_name = {lm.name: lm for lm in plan.approach.landmarks}
    table["Ramp flow"] = [ramp_flow_text(by_name[n]) for n in table["Landmark"]]
    limit = plan.thresholds.queue_must_not_pass
    fixed = [150.0, 56.0, 100.0, 60.0, 66.0, 48.0]
    rest = (width - sum(fixed)) / 2  # kind and ramp flow
    widths = [fixed[0], rest, *fixed[1:], rest]
    landmarks = _display_table(table, (None, None, 2, None, 2, 2, 0, None), st, widths)
    intro = (
        "Landmarks upstream of the start of the taper, nearest first: when the back of the "
        "queue first reached each, how long it was beyond it in all, how far beyond at most, "
        "and in how many hours (in a workbook, the Results sheet flags each of them)."
    )
    if limit is not None:
        intro += f" The queue must not pass {text(limit)}: each hour is checked against it."
    elif any(lm.kind == "warning-signs-end" for lm in plan.approach.landmarks):
        intro += (
            " A queue past the end of the advance warning signing is warned about (common "
            "practice, no source)."
        )
    out: list[Flowable] = [
        Paragraph("The approach: where the queue reached", st.h1),
        Paragraph(intro, st.small),
        Spacer(1, 4),
        landmarks,
    ]
    if not result.exit_ramps.empty:
        ramps = _display_table(
            exit_ramp_display(result), (None, 2, 1, 1), st, [150.0, 70.0, 110.0, 90.0]
        )
        note = (
            "Traffic for an exit ramp inside the queue waits with everyone else, first in, "
            "first out, until it reaches the ramp (Daganzo 1995; Newell 1993, part III). Its "
            "delay is counted in the total delay and the road-user cost, not in the average "
            "delay per vehicle through the closure."
        )
        out += [
            Paragraph("Exit ramps: the delay of the traffic leaving there", st.h2),
            KeepTogether([ramps, Spacer(1, 3), Paragraph(note, st.small)]),
        ]
    return out


def approach_method(result: Result) -> list[str]:
    """The method notes of the approach road: ramps, landmarks and a congested branch
    set for the site (nothing for a plan without them)."""
    plan = result.plan
    out = []
    if plan.approach.ramps:
        out.append(
            "<b>Ramps.</b> The demand is the mainline flow upstream of every ramp; entrance "
            "ramps add their flow and exit ramps take theirs. The queue length follows the "
            "change of flow at each ramp by Newell's method section by section (Newell 1993, "
            "parts I and III), or the single-state relation section by section. An entrance "
            "ramp's traffic joins the queue in full; at an exit ramp inside the queue the "
            "exiting traffic waits with everyone else, first in, first out (Daganzo 1995, "
            "“The cell transmission model, part II: network traffic”, Transportation Research "
            "Part B 29), and its delay is reported per ramp."
        )
    if plan.approach.landmarks:
        out.append(
            "<b>Landmarks.</b> The back of the queue is compared with each landmark exactly "
            "along its piecewise-linear trajectory: when it first reaches it, how long and how "
            "far it is beyond it. A queue beyond the end of the advance warning signing is "
            "warned about unless it is the agency's limit (common practice, no source)."
        )
    s = plan.site
    if s.congested_branch != "derived":
        how = {
            "hcm": "through the HCM basic-segment density at capacity, 45 pc/mi/ln times the "
            "heavy-vehicle factor (HCM 7th edition, Chapter 12)",
            "wave-speed": "from the backward wave speed entered for this site",
            "density-at-capacity": "from the density at capacity entered for this site",
        }[s.congested_branch]
        out.append(
            f"<b>Congested branch.</b> Set {how}, so w = C / (k<sub>j</sub> − k<sub>c</sub>) "
            "with the capacity C and jam density k<sub>j</sub> kept; where the free branch "
            "reaches capacity first, the diagram is flat at capacity up to k<sub>c</sub>."
        )
    return out


def _chart(fig, width: float, vector: bool) -> Flowable:
    """A matplotlib figure as a flowable ``width`` points wide (vector or 200-dpi PNG)."""
    from wzq.present.figures import render

    w_in, h_in = fig.get_size_inches()
    scale = width / (w_in * 72)
    if vector:
        from svglib import fonts as svg_fonts
        from svglib.svglib import svg2rlg

        map_svg_fonts(svg_fonts)
        drawing = svg2rlg(io.BytesIO(render(fig, "svg")))
        if drawing is not None:
            drawing.scale(scale, scale)
            drawing.width *= scale
            drawing.height *= scale
            drawing.hAlign = "LEFT"
            return drawing
    img = Image(io.BytesIO(render(fig, "png", dpi=200)), width=width, height=h_in * 72 * scale)
    img.hAlign = "LEFT"
    return img


def charts_section(result: Result, st: Styles, width: float, height: float) -> list[Flowable]:
    """Demand and capacity and queue length on one page; cumulative curves on the next
    (drawn straight as reportlab drawings, :mod:`wzq.present.drawings`; always vector)."""
    each = (height - 30 - 2 * 34) / 2
    long_name = u.LONG_LENGTH[result.plan.site.unit_system][0]
    fig1 = charts.demand_capacity_drawing(result, width, each, FONT)
    fig2 = charts.queue_length_drawing(result, width, each, FONT)
    shown, total = charts.shown_episodes(result)
    fig3 = charts.cumulative_drawing(result, width, height - 30 - 44, FONT)
    for fig in (fig1, fig2, fig3):
        fig.hAlign = "LEFT"
    more = f" The {len(shown)} longest of {total} queues are shown." if total > len(shown) else ""
    plan = result.plan
    shading = " Shading: a lane closure in force." if plan.closures else ""
    limit = (
        ", with the agency's queue limit (dashed)"
        if plan.thresholds.max_queue_length is not None
        else ""
    )
    bars = (
        "; black bars along the top mark hours over any limit"
        if result.summary.hours_failing
        else ""
    )
    cap1 = (
        "Figure 1. Demand and capacity by interval (veh/h). Capacity before breakdown holds "
        "until a queue forms; while a queue stands it discharges at the lower queue discharge "
        "rate." + shading
    )
    how = (
        "the back of the queue traced along the kinematic waves (Newell's method)"
        if result.length_method == "newell"
        else "the single-state shockwave relation"
    )
    if charted_landmarks(result):
        bars += (
            "; dash-dot lines: landmarks upstream of the taper, named (in black: the one "
            "the queue must not pass)"
            if plan.thresholds.queue_must_not_pass is not None
            else "; dash-dot lines: landmarks upstream of the taper, named"
        )
    cap2 = f"Figure 2. Queue length ({long_name}) over time: {how}{limit}{bars}.{shading}"
    unknown = unknown_length_text(result)
    if unknown:  # the line leaves out the vehicles held back: its length there is not known
        cap2 += (
            f" The queue's length is {unknown}: traffic the road cannot carry is held back "
            "beyond the approach and left out of the line there (see the warnings)."
        )
    cap3 = (
        "Figure 3. Cumulative arrivals and departures around each queue (deterministic "
        "queueing). The vertical gap between the curves is the number of vehicles queued; the "
        "shaded area is the queueing delay. "
        f"Each panel starts up to {charts.CONTEXT_H:.0f} h before its queue forms." + more
    )
    if not shown:
        cap3 = (
            "Figure 3. Cumulative arrivals and departures (deterministic queueing) over the "
            "whole period: no queue forms, so the curves coincide."
        )
    return [
        Paragraph("Charts", st.h1),
        KeepTogether(
            [
                fig1,
                Paragraph(cap1, st.caption),
            ]
        ),
        KeepTogether(
            [
                fig2,
                Paragraph(cap2, st.caption),
            ]
        ),
        PageBreak(),
        KeepTogether(
            [
                fig3,
                Paragraph(cap3, st.caption),
            ]
        ),
    ]


#: Characters of the hours chart: allowed the whole hour, part of it, not at all.
WINDOW_MARKS = {"#": "yes", "+": "part", ".": "-"}


def windows_section(
    result: Result, st: Styles, width: float, known: Sequence[np.ndarray] | None = None
) -> list[Flowable]:
    """Allowable closure hours of each configuration on this plan's demand (wzq.engine.windows;
    ``known``: the search's tables kept for these inputs, as there)."""
    from wzq.engine.risk_windows import closure_windows
    from wzq.engine.windows import (
        ALL_HOURS_RULE,
        longest_windows,
        too_long,
        too_long_text,
        windows_table,
    )

    d = result.plan.demand
    if too_long(d):  # a long plan is reported; its windows are left out, with the reason
        key = "options.closure_windows"
        where = result.plan.where(key)
        option = f"{where} to no" if where != key else f"{key} to false"
        return [
            Paragraph("Allowable closure hours", st.h1),
            Paragraph(text(too_long_text(len(d.flows_veh_h), d.interval_s, option)), st.body),
        ]
    found = closure_windows(result.plan, known=known)
    table = windows_table(found, symbols=True)
    hours = [f"{h:02d}" for h in range(24)]
    head = ["Configuration", "Day", *hours]
    data: list[list[object]] = [[Paragraph(text(h), st.head) for h in head]]
    style = [
        ("FONT", (0, 0), (-1, -1), FONT, 6.5),
        ("ALIGN", (2, 0), (-1, -1), "CENTER"),
        ("GRID", (2, 1), (-1, -1), 0.3, GRID),
        ("LINEBELOW", (0, 0), (-1, 0), 0.9, colors.black),
        ("TOPPADDING", (0, 0), (-1, -1), 1),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1),
        ("LEFTPADDING", (0, 0), (-1, -1), 2),
        ("RIGHTPADDING", (0, 0), (-1, -1), 2),
    ]
    for i, row in enumerate(table.to_dict("records"), start=1):
        marks = [str(row[h]) for h in hours]
        data.append(
            [text(row["configuration"]), text(row["day"])] + [WINDOW_MARKS.get(m, m) for m in marks]
        )
        for j, m in enumerate(marks):
            if m == "#":
                style.append(("BACKGROUND", (2 + j, i), (2 + j, i), colors.Color(0.75, 0.75, 0.75)))
            elif m == "+":
                style.append(("BACKGROUND", (2 + j, i), (2 + j, i), colors.Color(0.9, 0.9, 0.9)))
    first = 120.0
    second = 80.0
    each = (width - first - second) / 24
    hours_table = LongTable(
        data, colWidths=[first, second] + [each] * 24, repeatRows=1, hAlign="LEFT"
    )
    hours_table.setStyle(TableStyle(style))
    long = longest_windows(found, top=3)
    cut = windows_listed_text(window_counts(found), 3)
    from wzq.engine.costs import plan_costs

    currency = text(plan_costs(result.plan).currency)
    system_rows = [
        ["Configuration", "From", "To", "Hours", "Added delay (veh-h)", f"Cost ({currency})"]
    ]
    for r in long.to_dict("records"):
        system_rows.append(
            [
                text(r["configuration"]),
                f"{r['start']:%a %Y-%m-%d %H:%M}",
                f"{r['end']:%a %Y-%m-%d %H:%M}",
                number(r["hours"], 1),
                number(r["added_delay_veh_h"], 1),
                number(r["road_user_cost"], 0),
            ]
        )
    widths = [150.0, 120.0, 120.0, 50.0, 100.0, 90.0]
    longest = _grid_table(system_rows, widths, header=True)
    note = (
        "Hours in which a lane closure of each configuration may be in place on this plan's "
        "demand, with every hour of the whole run, the queue left behind included, within the "
        "agency limits (yes: the whole hour, part: part of it, -: not at all); the closure "
        "schedule entered in the plan is not used here. The longest allowable windows follow, "
        "with the delay they add and its cost to road users."
    )
    notes = [Paragraph(text(n), st.small) for n in found.notes] if hasattr(found, "notes") else []
    if found.rule != ALL_HOURS_RULE:  # the search at a risk says what "allowed" is
        notes.insert(0, Paragraph(text(found.rule), st.small))
    return [
        Paragraph("Allowable closure hours", st.h1),
        Paragraph(note, st.small),
        Spacer(1, 4),
        hours_table,
        Spacer(1, 8),
        Paragraph("Longest allowable windows", st.h2),
        longest,
        *([Paragraph(text(f"{cut[0].upper()}{cut[1:]}."), st.small)] if cut else []),
        *notes,
    ]


def space_time_section(
    result: Result, st: Styles, width: float, height: float, vector: bool
) -> list[Flowable]:
    """The LWR space-time check, when the plan asks for it (options.space_time)."""
    from wzq.engine.lwr.simulation import simulate
    from wzq.present.spacetime import space_time_figure

    sim = simulate(result)
    fig = space_time_figure(sim, caution=False)
    w_in, h_in = fig.get_size_inches()
    scale = min(1.0, (height - 80) / (h_in * 72 * width / (w_in * 72)))
    caption = (
        "Figure 4. Space-time check: a kinematic-wave (LWR) simulation of the approach by "
        "Godunov's scheme in its cell-transmission form, shaded by speed, with the back of "
        "the queue it gives (solid) and the engine's queue length (dashed)."
    )
    notes = [Paragraph(text(w), st.small) for w in sim.warnings]
    return [
        Paragraph("Space-time check", st.h1),
        KeepTogether([_chart(fig, width * scale, vector), Paragraph(caption, st.caption)]),
        *notes,
    ]


def risk_section(
    result: Result, risk: RiskResult, st: Styles, width: float, height: float, vector: bool
) -> list[Flowable]:
    """The risk of breaking the limits over the plan's scenarios (:mod:`wzq.engine.risk`):
    headline figures, the fan chart of the longest queue, the hours with a chance of
    breaking a limit, and the method."""
    from wzq.present.risk_figure import fan_figure  # matplotlib: imported for start-up speed

    system = result.plan.site.unit_system
    summary = _grid_table(
        _label_rows([(k, text(v)) for k, v in risk_summary_lines(risk, system)], st),
        [0.25 * width, 0.75 * width],
    )
    fig = fan_figure(risk, result, width / 72, min(3.6, (height - 150) / 72 / 1.6))
    caption = (
        f"Figure {5 if result.plan.options.space_time else 4}. The longest queue in each hour "
        f"over {len(risk.runs):,} equally likely "
        "scenarios: the darkest band reaches the median, the next the 85th percentile, the "
        "palest the 95th; the line is the design demand's own longest queue (the rest of this "
        "report)."
    )
    keep = (risk.hourly["p_any"].to_numpy() > 0) | listed_hours(result)
    table = risk_hour_table(risk, system, keep)
    heads = [Paragraph(text(c), st.head) for c in table.columns]
    rows = [[text(v) for v in r] for r in table.itertuples(index=False)]
    first = 95.0
    each = (width - first) / (len(heads) - 1)
    hours = LongTable([heads, *rows], colWidths=[first] + [each] * (len(heads) - 1), repeatRows=1)
    hours.hAlign = "LEFT"
    hours.setStyle(
        TableStyle(
            [
                ("FONT", (0, 1), (-1, -1), FONT, 7),
                ("ALIGN", (1, 1), (-1, -1), "RIGHT"),
                ("LINEBELOW", (0, 0), (-1, 0), 0.9, colors.black),
                ("LINEBELOW", (0, 1), (-1, -1), 0.3, GRID),
                ("TOPPADDING", (0, 0), (-1, -1), 1),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 1),
            ]
        )
    )
    listed = (
        "Hours with a chance of breaking a limit, and the hours the permit table lists. "
        "Chance: the share of the scenarios in which the hour breaks the limit (percent)."
    )
    return [
        Paragraph("Risk of breaking the limits", st.h1),
        summary,
        Spacer(1, 6),
        KeepTogether([_chart(fig, width, vector), Paragraph(caption, st.caption)]),
        Spacer(1, 6),
        Paragraph("Hour by hour", st.h2),
        Paragraph(listed, st.small),
        Spacer(1, 3),
        hours,
        Paragraph("How the risk was found", st.h2),
        *(Paragraph(text(line), st.method) for line in risk_method(risk)),
    ]


def typed_capacity_text(s: Site) -> str:
    """What a capacity typed for a closure stands for (``Site.capacity_override_is``)."""
    alpha = f"{s.capacity_drop_pct_work_zone:.1f} %"
    return {
        "both": "A capacity typed for a closure replaces the model for that closure and is used "
        "as both its pre-breakdown capacity and its queue discharge rate: no capacity drop "
        "applies to it.",
        "discharge": "A capacity typed for a closure replaces the model for that closure and is "
        "its queue discharge rate; its pre-breakdown capacity is 100 QDR / (100 − α) with the "
        f"work-zone capacity drop α = {alpha}.",
        "prebreakdown": "A capacity typed for a closure replaces the model for that closure and "
        "is its pre-breakdown capacity; its queue discharge rate is c (100 − α) / 100 with the "
        f"work-zone capacity drop α = {alpha}.",
    }[s.capacity_override_is]


def method_section(result: Result, st: Styles, width: float) -> list[Flowable]:
    """What the engine did, naming the published sources it follows."""
    plan = result.plan
    s, o = plan.site, plan.options
    p: list[str] = []
    p.append(
        "<b>Open-road capacity.</b> Highway Capacity Manual, 7th edition (Transportation "
        "Research Board, 2022), Chapter 12, basic freeway segments: base capacity "
        "c = 2,200 + 10 (FFS − 50) pc/h/ln, at most 2,400, with the free-flow speed FFS "
        "defaulting to the speed limit + 5 mi/h; heavy-vehicle adjustment "
        "f<sub>HV</sub> = 1 / (1 + P<sub>T</sub> (E<sub>T</sub> − 1)) with E<sub>T</sub> = 2.0 "
        "on level and 3.0 on rolling terrain; driver population factor from HCM Chapter 26, "
        "Exhibit 26-9."
    )
    if s.capacity_method == "hcm7":
        p.append(
            "<b>Work-zone capacity.</b> HCM 7th edition, Chapter 10, freeway work zones: lane "
            "closure severity index LCSI = 1 / (OR × N<sub>o</sub>), at most 2.0 (the cap the "
            "chapter sets for very severe closures such as 3 to 1 and 4 to 1); queue discharge "
            "rate "
            "QDR = 2,093 − 154 LCSI − 194 f<sub>Br</sub> − 179 f<sub>AT</sub> + "
            "9 f<sub>LAT</sub> − 59 f<sub>DN</sub> pc/h/ln (barrier type, area type, lateral "
            "clearance, day or night); pre-breakdown capacity c = 100 QDR / (100 − α) with "
            f"the capacity drop α = {s.capacity_drop_pct_work_zone:.1f} %; work-zone free-flow "
            "speed from the same chapter. Night-time is 19:00 to 06:00 unless a closure "
            "states otherwise (common practice)."
        )
    else:
        p.append(
            "<b>Work-zone capacity.</b> HCM 2000, Chapter 22 (also HCM 2010, Chapter 10), "
            "short-term freeway work zones: 1,600 pc/h/ln adjusted for work intensity and "
            "entrance ramps, times the heavy-vehicle factor and the open lanes. This older "
            "model has no separate pre-breakdown capacity."
        )
    if any(c.capacity_override_veh_h_ln is not None for c in plan.closures):
        p.append(f"<b>Typed capacity.</b> {text(typed_capacity_text(s))}")
    if o.capacity_drop:
        p.append(
            "<b>Capacity drop.</b> Until a queue forms the section carries up to its "
            "pre-breakdown capacity; once demand exceeds it, the queue discharges at the queue "
            "discharge rate until it clears (HCM 7th edition, Chapters 10 and 25; "
            f"{s.capacity_drop_pct_open:.1f} % drop on the open road)."
        )
    else:
        p.append(
            "<b>Capacity drop.</b> Switched off for this plan: queues discharge at the "
            "pre-breakdown capacity."
        )
    p.append(
        "<b>Queue and delay.</b> Deterministic (D/D/1) queueing with cumulative arrival and "
        "departure curves, the input-output model of the traffic-engineering textbooks. "
        "Demand and capacity are constant on each interval, so the queue is solved exactly "
        "(no time step) and carried from hour to hour. Queueing delay is the area between "
        "the curves; the extra travel time through the work zone at its lower free-flow "
        "speed is added."
    )
    diagram = {
        "triangular": "the triangular fundamental diagram of Newell (1993), “A simplified "
        "theory of kinematic waves in highway traffic”, Transportation Research Part B 27",
        "greenshields": "the Greenshields (1935) linear speed-density relation",
        "capped-greenshields": "the Greenshields (1935) linear speed-density relation with "
        "speeds capped at the work-zone speed limit",
    }[o.diagram]
    lwr = (
        "Lighthill and Whitham (1955), “On kinematic waves II: a theory of traffic flow on "
        "long crowded roads”, Proceedings of the Royal Society A 229; Richards (1956), "
        "“Shock waves on the highway”, Operations Research 4"
    )
    if result.length_method == "newell":
        p.append(
            "<b>Queue length.</b> The back of the queue follows the kinematic waves of the LWR "
            f"model ({lwr}), traced exactly by the simplified kinematic-wave method of Newell "
            "(1993), “A simplified theory of kinematic waves in highway traffic”, "
            "Transportation Research Part B 27, on the triangular fundamental diagram. The "
            "recovery wave from the front is included, so the longest queue may come after "
            "the closure ends. Jam density 190 pc/mi/ln (HCM 7th edition) unless entered."
        )
    else:
        p.append(
            f"<b>Queue length.</b> Kinematic-wave (shockwave) analysis of the LWR model ({lwr}): "
            "the queued vehicles are stored at n (k<sub>Q</sub> − k<sub>A</sub>) per metre of "
            f"road, between the arriving and the queued density on {diagram}; jam density "
            "190 pc/mi/ln (HCM 7th edition) unless entered."
        )
    p += approach_method(result)
    if result.summary.total_cost is not None:
        p.append(
            "<b>Road-user cost.</b> Delay cost by the method of FHWA, Work Zone Road User "
            "Costs: Concepts and Applications (FHWA-HOP-12-005, 2011): delay vehicle-hours "
            "times the value of time of each vehicle class, "
            + (
                "with the values entered for this plan. "
                if result.plan.costs is not None
                else "with wzq's published defaults (Texas A&amp;M Transportation Institute "
                "memo to TxDOT, 2018, in 2017 dollars), as no values were entered; update them "
                "to the agency's current values. "
            )
            + "Vehicle operating, crash and emission costs are not included."
        )
    p.append(
        "<b>Limits.</b> Each hour is checked against the agency limits entered: the longest "
        "queue in the hour, the average delay per vehicle arriving in the hour and, in closure "
        "hours, demand over capacity. Numbers are shown rounded; totals come from unrounded "
        "values. The HCM work-zone model assumes 12-ft lanes and does not model police "
        "presence or milled surfaces."
    )
    # two columns keep the lines short enough to read
    # keep a symbol and its "=" together on one line
    paras = [Paragraph(x.replace(" = ", "&nbsp;= "), st.method) for x in p]
    sizes = np.cumsum([len(x) for x in p])
    cut = int(np.searchsorted(sizes, sizes[-1] / 2)) + 1
    gap = 18
    cols = Table(
        [[paras[:cut], paras[cut:]]], colWidths=[(width - gap) / 2 + gap, (width - gap) / 2]
    )
    cols.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LEFTPADDING", (0, 0), (-1, -1), 0),
                ("RIGHTPADDING", (0, 0), (0, 0), gap),
                ("RIGHTPADDING", (1, 0), (1, 0), 0),
            ]
        )
    )
    return [
        Paragraph("Method and sources", st.h1),
        cols,
        Spacer(1, 6),
        caution_box(st, width),
    ]


# --- document -----------------------------------------------------------------------------------


def page_size(paper: str) -> tuple[float, float]:
    """Landscape page size (points) for ``letter`` or ``a4``."""
    key = paper.lower()
    if key not in PAPERS:
        raise PlanError(
            [Problem("paper", f"'{paper}' is not a paper size; use {' or '.join(PAPERS)}")]
        )
    return landscape(PAPERS[key])


def svg_available() -> bool:
    """True when svglib is installed (matplotlib's charts, the space-time picture and the
    risk fan chart, are then embedded as vector graphics)."""
    return importlib.util.find_spec("svglib") is not None  # found, not imported: it is slow


def text_problems(result: Result) -> list[Problem]:
    """Typed texts too long for the title block or a table cell, with what to do."""
    plan = result.plan
    fields = [
        (f"meta.{k}", getattr(plan.meta, k))
        for k in ("title", "project", "route", "prepared_by", "checked_by")
    ]
    fields += [("site.name", plan.site.name), ("site.direction", plan.site.direction)]
    fields += [(f"closures[{i}].note", c.note) for i, c in enumerate(plan.closures)]
    return [
        Problem(
            plan.where(where),  # the sheet and cell of a workbook plan
            f"{len(value):,} characters is too long to print (at most {MAX_FIELD_CHARS}); "
            "shorten it and put the detail in the plan's notes",
        )
        for where, value in fields
        if len(value) > MAX_FIELD_CHARS
    ]


def build_report(
    result: Result,
    paper: str = "letter",
    *,
    generated: dt.date | None = None,
    source: str | None = None,
    vector: bool | None = None,
    windows: Sequence[np.ndarray] | None = None,
) -> bytes:
    """The report as PDF bytes (see the module docstring for its contents); ``windows``:
    the closure-window search's tables kept for this plan's inputs (a workbook's cache),
    used instead of searching again."""
    pagesize = page_size(paper)
    problems = text_problems(result)
    if problems:
        raise PlanError(problems)
    st = make_styles()
    generated = generated or dt.date.today()
    vector = svg_available() if vector is None else vector
    plan = result.plan
    heading = plan.meta.title or plan.site.name or REPORT_KIND
    buf = io.BytesIO()
    doc = BaseDocTemplate(
        buf,
        pagesize=pagesize,
        leftMargin=MARGIN_X,
        rightMargin=MARGIN_X,
        topMargin=MARGIN_TOP,
        bottomMargin=MARGIN_BOTTOM,
        title=heading,
        author=plan.meta.prepared_by or "",
        subject=REPORT_KIND,
        creator=f"wzq {wzq.__version__}",
        producer=f"wzq {wzq.__version__}",
        invariant=True,
        initialFontName=FONT,
        lang="en",
    )
    frame = Frame(
        doc.leftMargin,
        doc.bottomMargin,
        doc.width,
        doc.height,
        leftPadding=0,
        rightPadding=0,
        topPadding=0,
        bottomPadding=0,
        id="body",
    )
    right = f"{REPORT_KIND} · wzq {wzq.__version__} · {generated:%Y-%m-%d}"
    doc.addPageTemplates([PageTemplate("page", [frame], onPage=_furniture(heading, right))])
    width, height = frame._aW, frame._aH
    story: list[Flowable] = []
    story += title_block(result, st, width, generated, source)
    # a section that needs a page of its own starts one; the others start a new page
    # only when less than a third of the page is left (no page holds a scrap alone)
    soft = CondPageBreak(height / 3)
    story += [PageBreak(), *inputs_section(result, st, width)]
    story += [soft, *hourly_section(result, st, width)]
    if plan.approach.landmarks:
        story += [soft, *approach_section(result, st, width)]
    story += [PageBreak(), *charts_section(result, st, width, height)]
    if plan.options.closure_windows:  # the windows page follows the plan's option
        story += [soft, *windows_section(result, st, width, windows)]
    if plan.options.space_time:
        story += [PageBreak(), *space_time_section(result, st, width, height, vector)]
    try:
        risk = plan_risk(plan)  # a count history or a capacity spread: the risk page
    except PlanError as e:  # a plan the risk is not yet assessed for: the page says why
        why = "; ".join(p.message for p in e.problems)
        story += [
            soft,
            Paragraph("Risk of breaking the limits", st.h1),
            Paragraph(text(f"Not shown: {why}."), st.body),
        ]
        risk = None
    if risk is not None:
        story += [PageBreak(), *risk_section(result, risk, st, width, height, vector)]
    story += [soft, *method_section(result, st, width)]
    try:
        doc.build(story, canvasmaker=NumberedCanvas)
    except LayoutError:
        raise PlanError(
            [
                Problem(
                    "report",
                    "the title block or a table row is too tall for one page; shorten the "
                    "longest texts (title, project, route, site, closure notes)",
                )
            ]
        ) from None
    return buf.getvalue()


def write_report(
    result: Result,
    path: str | os.PathLike[str],
    paper: str = "letter",
    *,
    generated: dt.date | None = None,
    source: str | None = None,
    vector: bool | None = None,
    windows: Sequence[np.ndarray] | None = None,
) -> Path:
    """Write the PDF report of ``result`` to ``path`` and return the path.

    The file is written whole to a temporary file beside ``path`` and then
    moved into place, so an existing report is either fully replaced or left as
    it was. ``source`` (e.g. the plan's file name) is printed in the title
    block; ``generated`` is the report date (today by default).
    """
    path = Path(path)
    if path.suffix.lower() != ".pdf":
        raise PlanError(
            [Problem(str(path), "the report must be a .pdf file; end the name in .pdf")]
        )
    if not path.parent.is_dir():
        raise PlanError(
            [Problem(str(path), f"the folder {path.parent} does not exist; create it first")]
        )
    data = build_report(
        result, paper, generated=generated, source=source, vector=vector, windows=windows
    )
    write_atomically(path, data)  # an existing report keeps its permissions
    return path
