"""Names shared by the workbook template, reader and writer.

The reader finds every input through a workbook-scoped defined name (one per
value cell) or an Excel table, never through a fixed cell address, so a user may
insert rows, restyle and add sheets of their own. This module is the one place
that spells those names, the sheet names, the dropdown words and the colours.

Pure data: no I/O, no spreadsheet library.
"""

from __future__ import annotations

from typing import Any

__all__ = [
    "AADT",
    "APPROACH",
    "AREA_WORDS",
    "BARRIER_WORDS",
    "BUTTON_CAPTION",
    "BUTTON_MACRO",
    "BUTTON_MODULE",
    "CHARTS",
    "CLOSURES",
    "CLOSURE_COLUMNS",
    "CLOSURE_TABLE",
    "CLOSURE_TEMPLATE_ROWS",
    "COLOURS",
    "CONGESTED_WORDS",
    "COUNTS",
    "DATE_FORMAT",
    "DAY_TYPE_WORDS",
    "DEMAND",
    "DEMAND_COLUMNS",
    "DEMAND_MODE_WORDS",
    "DEMAND_TABLE",
    "DEMAND_TEMPLATE_ROWS",
    "DIAGRAM_WORDS",
    "DRIVER_WORDS",
    "END_TIME_FORMAT",
    "HISTORY",
    "HOURLY",
    "INPUT_COLOUR_WORD",
    "INPUT_SHEETS",
    "LANDMARK_COLUMNS",
    "LANDMARK_KIND_WORDS",
    "LANDMARK_NAMES",
    "LANDMARK_TABLE",
    "LANDMARK_TEMPLATE_ROWS",
    "LIMITS",
    "MARKER_NAME",
    "MARKER_SEPARATOR",
    "METHOD_WORDS",
    "NIGHT_WORDS",
    "OUTPUT_SHEETS",
    "OVERRIDE_WORDS",
    "PERMIT_TABLE",
    "QUEUE_METHOD_WORDS",
    "RAMP_FLOW_COLUMNS",
    "RAMP_FLOW_PLACEHOLDERS",
    "RAMP_FLOW_TABLE",
    "RAMP_FLOW_TEMPLATE_ROWS",
    "RESULTS",
    "RUN_LOG",
    "SHARE_COLUMNS",
    "SHARE_SUM_TOLERANCE",
    "SHARE_TABLE",
    "SITE",
    "STAMP_WORDS",
    "START",
    "SUMMARY",
    "TABLE_COLUMNS",
    "TABLE_SHEET",
    "TEMPLATE_FILES",
    "TEMPLATE_STEM",
    "TERRAIN_WORDS",
    "TIME_FORMAT",
    "UNIT_WORDS",
    "WEEKDAY_SHARES",
    "WEEKEND_SHARES",
    "WINDOWS",
    "YES_NO_WORDS",
    "Choices",
    "marked_sheets",
    "word_for",
    "written_sheets",
]

# ---------------------------------------------------------------------------------------------
# Sheets
# ---------------------------------------------------------------------------------------------

START = "Start"
SITE = "Site"
DEMAND = "Demand"
CLOSURES = "Closures"
LIMITS = "Limits"
#: The road upstream of the closure: landmarks, ramps and their flows (optional).
APPROACH = "Approach"
#: Where a count history may be pasted (any sheet of the workbook may be named instead,
#: or a count file).
COUNTS = "Count history"
#: Input sheets, in the order the template creates them.
INPUT_SHEETS: tuple[str, ...] = (START, SITE, DEMAND, CLOSURES, LIMITS, APPROACH, COUNTS)

#: Output sheets, owned by the writer and replaced on every run; the reader ignores them.
RESULTS = "Results"
SUMMARY = "Summary"
CHARTS = "Charts"
PERMIT_TABLE = "Permit table"
RUN_LOG = "Run log"
WINDOWS = "Closure windows"
OUTPUT_SHEETS: tuple[str, ...] = (RESULTS, SUMMARY, CHARTS, PERMIT_TABLE, WINDOWS, RUN_LOG)

#: File names of the committed templates in ``workbook_templates/``.
TEMPLATE_STEM = "closure_plan"
TEMPLATE_FILES: dict[bool, str] = {False: f"{TEMPLATE_STEM}.xlsx", True: f"{TEMPLATE_STEM}.xlsm"}

#: The module of our own in the embedded VBA project, and its macro that the Start
#: sheet's button runs (it calls the RunPython macro of xlwings' own module).
BUTTON_MODULE = "WzqButton"
BUTTON_MACRO = "RecalculatePlan"
BUTTON_CAPTION = "Recalculate"

# ---------------------------------------------------------------------------------------------
# Colours (our own look): deep slate-blue headings, sand-coloured input cells
# ---------------------------------------------------------------------------------------------

COLOURS: dict[str, str] = {
    "title": "#1F3A4D",
    "header_fill": "#1F3A4D",
    "header_text": "#FFFFFF",
    "section_fill": "#D6E4EA",
    "section_text": "#1F3A4D",
    "input_fill": "#FBEFD5",
    "input_border": "#C8A15A",
    "note_text": "#5F6B73",
    "unit_text": "#2E5E4E",
    "caution_fill": "#FBE3D6",
    "caution_text": "#7A2E0E",
}
#: How the instructions name the input colour.
INPUT_COLOUR_WORD = "sand-coloured"

# ---------------------------------------------------------------------------------------------
# Dropdown words: (word shown in the workbook, value in the plan)
# ---------------------------------------------------------------------------------------------

Choices = tuple[tuple[str, Any], ...]

UNIT_WORDS: Choices = (("US customary", "us"), ("metric", "metric"))
TERRAIN_WORDS: Choices = (("level", "level"), ("rolling", "rolling"))
AREA_WORDS: Choices = (("urban", "urban"), ("rural", "rural"))
DRIVER_WORDS: Choices = (
    ("commuters", "commuter"),
    ("mostly familiar", "familiar"),
    ("balanced", "balanced"),
    ("mostly unfamiliar", "unfamiliar"),
)
METHOD_WORDS: Choices = (("HCM 7th ed. work zone", "hcm7"), ("HCM 2000 short-term", "hcm2000"))
BARRIER_WORDS: Choices = (("cones or drums", "soft"), ("concrete barrier", "hard"))
NIGHT_WORDS: Choices = (("auto", None), ("yes", True), ("no", False))
YES_NO_WORDS: Choices = (("yes", True), ("no", False))
DIAGRAM_WORDS: Choices = (
    ("triangular (Newell)", "triangular"),
    ("Greenshields", "greenshields"),
    ("Greenshields capped at the work-zone limit", "capped-greenshields"),
)
QUEUE_METHOD_WORDS: Choices = (
    ("Newell kinematic waves", "newell"),
    ("single shockwave", "shockwave"),
)
OVERRIDE_WORDS: Choices = (
    ("both: no capacity drop", "both"),
    ("queue discharge rate", "discharge"),
    ("pre-breakdown capacity", "prebreakdown"),
)
#: How the congested branch of the triangular diagram is set (wzq.engine.plan.CONGESTED_BRANCHES).
CONGESTED_WORDS: Choices = (
    ("capacity, jam density", "derived"),
    ("HCM, 45 pc/mi/ln", "hcm"),
    ("backward wave speed", "wave-speed"),
    ("density at capacity", "density-at-capacity"),
)
#: Kinds of landmark on the approach (wzq.engine.plan.LANDMARK_KINDS), in plain words.
LANDMARK_KIND_WORDS: Choices = (
    ("exit ramp", "exit-ramp"),
    ("entrance ramp", "entrance-ramp"),
    ("signal or intersection", "signal"),
    ("bridge or structure", "structure"),
    ("end of advance warning signing", "warning-signs-end"),
    ("other", "other"),
)
HOURLY = "hourly"
AADT = "aadt"
HISTORY = "history"
DEMAND_MODE_WORDS: Choices = (
    ("hourly counts", HOURLY),
    ("from AADT", AADT),
    ("from a count history", HISTORY),
)
#: How the historical days of one day type are grouped (:mod:`wzq.engine.design_demand`).
DAY_TYPE_WORDS: Choices = (
    ("each weekday on its own", "by-name"),
    ("Monday-Thursday together", "mon-thu"),
)
#: Whether a count's time stamp is the start or the end of its interval.
STAMP_WORDS: Choices = (("start of its interval", "start"), ("end of its interval", "end"))


def word_for(choices: Choices, value: Any) -> str:
    """The dropdown word that stands for a plan value."""
    for word, v in choices:
        if v == value and type(v) is type(value):
            return word
    raise KeyError(value)


# ---------------------------------------------------------------------------------------------
# Tables
# ---------------------------------------------------------------------------------------------

DEMAND_TABLE = "DemandTable"
DEMAND_COLUMNS: tuple[str, ...] = ("Date", "Start time", "Demand (veh/h)")
#: Empty rows in a fresh template: a week of hourly counts.
DEMAND_TEMPLATE_ROWS = 7 * 24

SHARE_TABLE = "HourlyShareTable"
SHARE_COLUMNS: tuple[str, ...] = ("Hour", "Weekday % of AADT", "Weekend % of AADT")
#: Invented hourly distribution (percent of AADT, hour starting 00:00 ... 23:00), a
#: plausible commuter-route shape for a fresh template; replace it with local counts.
WEEKDAY_SHARES: tuple[float, ...] = (
    1.4, 0.8, 0.6, 0.6, 0.9, 2.0, 4.6, 7.0, 6.6, 5.6, 5.0, 5.2,
    5.4, 5.4, 5.8, 6.3, 7.2, 7.3, 5.8, 4.7, 3.8, 3.2, 2.5, 2.3,
)  # fmt: skip
WEEKEND_SHARES: tuple[float, ...] = (
    2.0, 1.4, 1.0, 0.8, 0.8, 1.1, 1.8, 2.8, 4.2, 5.6, 6.6, 7.1,
    7.5, 7.2, 7.0, 6.8, 6.6, 6.3, 5.8, 4.9, 4.0, 3.3, 2.7, 2.7,
)  # fmt: skip
#: How far a share column may sum away from 100 % and still be accepted.
SHARE_SUM_TOLERANCE = 0.5

CLOSURE_TABLE = "ClosureTable"
CLOSURE_COLUMNS: tuple[str, ...] = (
    "Date",
    "From",
    "To",
    "Lanes closed",
    "Barrier",
    "Night work",
    "Capacity override (veh/h/ln)",
    "Note",
)
CLOSURE_TEMPLATE_ROWS = 30

#: The landmarks upstream of the closure, one row each (the Approach sheet).
LANDMARK_TABLE = "LandmarkTable"
LANDMARK_COLUMNS: tuple[str, ...] = (
    "Landmark",
    "Distance upstream of the taper",
    "Kind",
    "Ramp flow (% of mainline)",
    "Note",
)
LANDMARK_TEMPLATE_ROWS = 12
#: Hidden workbook-scoped name of the landmark names of the template's rows (the list of
#: the Limits sheet's "Queue must not pass" dropdown).
LANDMARK_NAMES = "approach_landmark_names"
#: Hourly ramp flows: one row per hour, one column per ramp headed by its name.
RAMP_FLOW_TABLE = "RampFlowTable"
RAMP_FLOW_COLUMNS: tuple[str, ...] = ("Date", "Start time")
#: Headers of the template's empty ramp columns, renamed by the user to ramp names.
RAMP_FLOW_PLACEHOLDERS: tuple[str, ...] = ("Ramp 1", "Ramp 2", "Ramp 3", "Ramp 4")
RAMP_FLOW_TEMPLATE_ROWS = 7 * 24

TABLE_COLUMNS: dict[str, tuple[str, ...]] = {
    DEMAND_TABLE: DEMAND_COLUMNS,
    SHARE_TABLE: SHARE_COLUMNS,
    CLOSURE_TABLE: CLOSURE_COLUMNS,
    LANDMARK_TABLE: LANDMARK_COLUMNS,
    RAMP_FLOW_TABLE: RAMP_FLOW_COLUMNS,
}
TABLE_SHEET: dict[str, str] = {
    DEMAND_TABLE: DEMAND,
    SHARE_TABLE: DEMAND,
    CLOSURE_TABLE: CLOSURES,
    LANDMARK_TABLE: APPROACH,
    RAMP_FLOW_TABLE: APPROACH,
}

#: Number formats (shared with the test helper that fills a template as a user would).
DATE_FORMAT = "ddd yyyy-mm-dd"
TIME_FORMAT = "hh:mm"
#: ``To`` shows 24:00 (Excel's value 1.0) as 24:00, not 00:00, and a full date-time
#: (a closure longer than a day) as a date and time.
END_TIME_FORMAT = "[<=1][hh]:mm;yyyy-mm-dd hh:mm"


#: Hidden workbook-scoped defined name listing the sheets wzq wrote.
MARKER_NAME = "wzq_output_sheets"
#: Between the sheet names in :data:`MARKER_NAME`.
MARKER_SEPARATOR = "|"


def written_sheets(book) -> list[str]:
    """The sheets the marker says wzq wrote (empty for a workbook never run); ``book``
    is an openpyxl workbook."""
    return marked_sheets(book.defined_names.get(MARKER_NAME))


def marked_sheets(dn) -> list[str]:
    """The sheet names held by the marker's defined name ``dn`` (``None``: no marker)."""
    if dn is None or not dn.attr_text:
        return []
    text = dn.attr_text.strip()
    if len(text) >= 2 and text[0] == text[-1] == '"':
        text = text[1:-1]
    return [s for s in text.split(MARKER_SEPARATOR) if s]
