"""Names shared by the workbook template, reader and writer.

The reader finds every input through a workbook-scoped defined name (one per
value cell) or an Excel table, never through a fixed cell address, so a user may
insert rows, restyle and add sheets of their own. This module is the one place
that spells those names, the sheet names, the dropdown words and the colours.

Pure data: no I/O, no spreadsheet library.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

# ---------------------------------------------------------------------------------------------
# Sheets
# ---------------------------------------------------------------------------------------------

START = "Start"
SITE = "Site"
DEMAND = "Demand"
CLOSURES = "Closures"
LIMITS = "Limits"
#: Input sheets, in the order the template creates them.
INPUT_SHEETS: tuple[str, ...] = (START, SITE, DEMAND, CLOSURES, LIMITS)

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
HOURLY = "hourly"
AADT = "aadt"
DEMAND_MODE_WORDS: Choices = (("hourly counts", HOURLY), ("from AADT", AADT))


def word_for(choices: Choices, value: Any) -> str:
    """The dropdown word that stands for a plan value."""
    for word, v in choices:
        if v == value and type(v) is type(value):
            return word
    raise KeyError(value)


# ---------------------------------------------------------------------------------------------
# Single-value inputs: one defined name per value cell
# ---------------------------------------------------------------------------------------------

REQUIRED: Any = object()  # marker: the cell must be filled in

#: Units that follow the unit system: (US customary, metric).
UNIT_KINDS: dict[str, tuple[str, str]] = {
    "speed": ("mi/h", "km/h"),
    "long": ("mi", "km"),
    "short": ("ft", "m"),
    "density": ("veh/mi/ln", "veh/km/ln"),
    "per_long": ("per mi", "per km"),
}

Kind = Literal["number", "int", "text", "choice", "date"]


@dataclass(frozen=True)
class Field:
    """One value cell: its defined name, label, type, unit, range and template value.

    ``unit`` is a key of :data:`UNIT_KINDS` (shown as mi/h or km/h by the unit
    system) or a fixed unit text. ``blank`` is the value a blank cell stands for,
    or :data:`REQUIRED`. ``bounds`` is the allowed range in US customary units
    (or unit-free), ``metric_bounds`` in metric units when they differ;
    ``open_lo`` / ``open_hi`` exclude the end itself.
    """

    name: str
    label: str
    kind: Kind
    unit: str = ""
    blank: Any = REQUIRED
    template: Any = None
    choices: Choices = ()
    bounds: tuple[float, float] | None = None
    metric_bounds: tuple[float, float] | None = None
    open_lo: bool = False
    open_hi: bool = False
    note: str = ""

    @property
    def required(self) -> bool:
        return self.blank is REQUIRED

    def limits(self, system: str) -> tuple[float, float] | None:
        """The allowed range in the given unit system."""
        if system == "metric" and self.metric_bounds is not None:
            return self.metric_bounds
        return self.bounds

    def unit_text(self, system: str) -> str:
        """The unit shown beside the value in the given unit system."""
        if self.unit in UNIT_KINDS:
            return UNIT_KINDS[self.unit][system == "metric"]
        return self.unit


@dataclass(frozen=True)
class Section:
    """A titled group of fields on one sheet."""

    title: str
    fields: tuple[Field, ...]


# Start sheet ---------------------------------------------------------------------------------

UNIT_SYSTEM = Field(
    "unit_system",
    "Unit system",
    "choice",
    template="US customary",
    choices=UNIT_WORDS,
    note="choose first: every value in this workbook is in this system",
)
META_FIELDS: tuple[Field, ...] = (
    Field("meta_title", "Title", "text", blank=""),
    Field("meta_project", "Project", "text", blank=""),
    Field("meta_route", "Route", "text", blank=""),
    Field("meta_prepared_by", "Prepared by", "text", blank=""),
    Field("meta_checked_by", "Checked by", "text", blank=""),
    Field("meta_notes", "Notes", "text", blank=""),
)
START_SECTIONS: tuple[Section, ...] = (
    Section("Units", (UNIT_SYSTEM,)),
    Section("About this plan", META_FIELDS),
)

# Site sheet ----------------------------------------------------------------------------------

SPEED_US = (10.0, 90.0)
SPEED_METRIC = (15.0, 150.0)

SITE_SECTIONS: tuple[Section, ...] = (
    Section(
        "Road and traffic",
        (
            Field("site_name", "Site name", "text", blank=""),
            Field(
                "site_direction", "Direction of travel", "text", blank="", note="e.g. northbound"
            ),
            Field(
                "site_lanes",
                "Lanes in normal operation",
                "int",
                "lanes",
                bounds=(1, 8),
                note="this direction only",
            ),
            Field(
                "site_speed_limit",
                "Speed limit",
                "number",
                "speed",
                bounds=SPEED_US,
                metric_bounds=SPEED_METRIC,
            ),
            Field(
                "site_work_zone_speed_limit",
                "Work-zone speed limit",
                "number",
                "speed",
                bounds=SPEED_US,
                metric_bounds=SPEED_METRIC,
                note="at or below the speed limit",
            ),
            Field(
                "site_free_flow_speed",
                "Free-flow speed",
                "number",
                "speed",
                blank=None,
                bounds=(10.0, 100.0),
                metric_bounds=(15.0, 160.0),
                note="blank: speed limit + 5 mi/h (8 km/h), the HCM default",
            ),
            Field(
                "site_work_zone_length",
                "Work-zone length",
                "number",
                "long",
                bounds=(0.0, 50.0),
                metric_bounds=(0.0, 80.0),
            ),
            Field(
                "site_heavy_vehicle_percent",
                "Heavy vehicles",
                "number",
                "%",
                template=5,
                bounds=(0.0, 100.0),
                note="share of the traffic in this direction",
            ),
            Field(
                "site_terrain",
                "Terrain",
                "choice",
                template="level",
                choices=TERRAIN_WORDS,
            ),
            Field("site_area_type", "Area type", "choice", template="urban", choices=AREA_WORDS),
            Field(
                "site_lateral_clearance",
                "Lateral distance to barrier or cones",
                "number",
                "short",
                blank=0.0,
                template=0,
                bounds=(0.0, 30.0),
                metric_bounds=(0.0, 9.0),
                note="from the edge of the open lane; the HCM model uses 0-12 ft (0-3.7 m)",
            ),
            Field(
                "site_driver_population",
                "Drivers",
                "choice",
                template="commuters",
                choices=DRIVER_WORDS,
            ),
            Field(
                "site_ramp_density",
                "Ramps within 3 mi (5 km) of the work zone",
                "number",
                "per_long",
                blank=0.0,
                template=0,
                bounds=(0.0, 6.0),
                metric_bounds=(0.0, 4.0),
                note="ramps per length, up- and downstream together",
            ),
            Field(
                "site_jam_density",
                "Jam density",
                "number",
                "density",
                blank=None,
                bounds=(100.0, 400.0),
                metric_bounds=(60.0, 250.0),
                note="blank: 190 pc/mi/ln adjusted for heavy vehicles (HCM)",
            ),
        ),
    ),
    Section(
        "Capacity model",
        (
            Field(
                "site_capacity_method",
                "Capacity method",
                "choice",
                template="HCM 7th ed. work zone",
                choices=METHOD_WORDS,
                note="HCM 7th: severity LCSI = 1/(OR x N_o), at most 2.0 (HCM ch. 10); "
                "QDR = 2093 - 154 LCSI - 194 f_Br - 179 f_AT + 9 f_LAT - 59 f_DN",
            ),
            Field(
                "site_base_capacity",
                "Base capacity of the open road",
                "number",
                "pc/h/ln",
                blank=None,
                bounds=(500.0, 3000.0),
                note="blank: from the free-flow speed (HCM basic freeway segment)",
            ),
            Field(
                "site_capacity_drop_work_zone",
                "Capacity drop at breakdown, work zone",
                "number",
                "%",
                template=13.4,
                bounds=(0.0, 20.0),
                open_hi=True,
                note="HCM default 13.4 %",
            ),
            Field(
                "site_capacity_drop_open",
                "Capacity drop at breakdown, open road",
                "number",
                "%",
                template=7.0,
                bounds=(0.0, 20.0),
                open_hi=True,
                note="HCM default 7 %",
            ),
            Field(
                "site_work_intensity",
                "Work intensity adjustment",
                "number",
                "pc/h/ln",
                blank=0.0,
                template=0,
                bounds=(-160.0, 160.0),
                note="HCM 2000 method only; -160 to +160",
            ),
            Field(
                "site_ramp_adjustment",
                "Entrance-ramp adjustment",
                "number",
                "pc/h/ln",
                blank=0.0,
                template=0,
                bounds=(0.0, 1000.0),
                note="HCM 2000 method only",
            ),
            Field(
                "site_override_is",
                "A closure capacity typed on the Closures sheet is",
                "choice",
                template="both: no capacity drop",
                choices=OVERRIDE_WORDS,
                note="both: used as pre-breakdown capacity and discharge rate; otherwise the "
                "other one follows from the work-zone capacity drop",
            ),
        ),
    ),
    Section(
        "Checks",
        (
            Field(
                "site_space_time",
                "Space-time picture (LWR simulation)",
                "choice",
                template="no",
                choices=YES_NO_WORDS,
                note="yes: simulate the approach and add a distance-time picture to Charts",
            ),
        ),
    ),
)
#: Names a workbook made by an older template may lack; the reader then uses the
#: template value instead of reporting a problem.
OPTIONAL_NAMES: frozenset[str] = frozenset(
    {"site_space_time", "opt_closure_windows", "site_override_is"}
)

# Limits sheet --------------------------------------------------------------------------------

THRESHOLD_FIELDS: tuple[Field, ...] = (
    Field(
        "limit_queue_length",
        "Longest allowed queue",
        "number",
        "long",
        blank=None,
        bounds=(0.0, 100.0),
        metric_bounds=(0.0, 160.0),
        open_lo=True,
        note="blank: not checked",
    ),
    Field(
        "limit_average_delay",
        "Longest allowed average delay",
        "number",
        "min/veh",
        blank=None,
        bounds=(0.0, 600.0),
        open_lo=True,
        note="blank: not checked",
    ),
    Field(
        "limit_demand_capacity",
        "Highest allowed demand / capacity",
        "number",
        "ratio",
        blank=None,
        bounds=(0.0, 5.0),
        open_lo=True,
        note="blank: not checked",
    ),
)
#: The three values that switch road-user costs on (all blank: no costs).
COST_MAIN = ("cost_car_value", "cost_car_occupancy", "cost_truck_value")
COST_FIELDS: tuple[Field, ...] = (
    Field(
        "cost_car_value",
        "Value of time, car occupants",
        "number",
        "per person-hour",
        bounds=(0.0, 1000.0),
        note="this and the next two blank: published defaults (2017 US dollars, TTI memo to "
        "TxDOT 2018: cars 28.69, trucks 36.28 per veh-h); type your agency's values",
    ),
    Field("cost_car_occupancy", "Car occupancy", "number", "persons/veh", bounds=(1.0, 10.0)),
    Field(
        "cost_truck_value",
        "Value of time, trucks",
        "number",
        "per vehicle-hour",
        bounds=(0.0, 2000.0),
    ),
    Field(
        "cost_truck_percent",
        "Trucks in the traffic",
        "number",
        "%",
        blank=None,
        bounds=(0.0, 100.0),
        note="blank: the heavy-vehicle share on the Site sheet",
    ),
    Field("cost_currency", "Currency", "text", template="USD", note="e.g. USD"),
    Field(
        "cost_dollar_year",
        "Price year",
        "int",
        "year",
        bounds=(1950, 2100),
        note="the year the values above are priced in",
    ),
)
OPTION_FIELDS: tuple[Field, ...] = (
    Field(
        "opt_capacity_drop",
        "Capacity drop after breakdown",
        "choice",
        template="yes",
        choices=YES_NO_WORDS,
        note="yes: queue discharge rate while a queue lasts",
    ),
    Field(
        "opt_diagram",
        "Fundamental diagram for queue length",
        "choice",
        template="triangular (Newell)",
        choices=DIAGRAM_WORDS,
    ),
    Field(
        "opt_queue_length_method",
        "Queue length from",
        "choice",
        template="Newell kinematic waves",
        choices=QUEUE_METHOD_WORDS,
        note="Newell needs the triangular diagram; with another, single shockwave is used",
    ),
    Field(
        "opt_closure_windows",
        "Closure windows sheet",
        "choice",
        template="yes",
        choices=YES_NO_WORDS,
        note="yes: when may each lane configuration be in place at all (takes longer)",
    ),
)
LIMITS_SECTIONS: tuple[Section, ...] = (
    Section("Agency limits", THRESHOLD_FIELDS),
    Section("Road-user costs", COST_FIELDS),
    Section("Options", OPTION_FIELDS),
)

# Demand sheet --------------------------------------------------------------------------------

DEMAND_MODE = Field(
    "demand_mode",
    "Demand is given as",
    "choice",
    template="hourly counts",
    choices=DEMAND_MODE_WORDS,
    note="hourly counts: the table below; from AADT: the inputs on the right",
)
AADT_FIELDS: tuple[Field, ...] = (
    Field(
        "aadt_value",
        "AADT, both directions",
        "number",
        "veh/day",
        bounds=(0.0, 500_000.0),
        open_lo=True,
    ),
    Field("aadt_count_year", "Year of the count", "int", "year", bounds=(1950, 2100)),
    Field(
        "aadt_growth_percent",
        "Traffic growth",
        "number",
        "% per year",
        blank=0.0,
        template=0,
        bounds=(-20.0, 20.0),
    ),
    Field(
        "aadt_direction_percent",
        "Share in this direction",
        "number",
        "%",
        template=50,
        bounds=(0.0, 100.0),
        open_lo=True,
    ),
    Field("aadt_first_day", "First day", "date", "date"),
    Field("aadt_days", "Number of days", "int", "days", template=7, bounds=(1, 92)),
)

ALL_FIELDS: tuple[Field, ...] = (
    *(f for s in START_SECTIONS for f in s.fields),
    *(f for s in SITE_SECTIONS for f in s.fields),
    *(f for s in LIMITS_SECTIONS for f in s.fields),
    DEMAND_MODE,
    *AADT_FIELDS,
)
FIELDS_BY_NAME: dict[str, Field] = {f.name: f for f in ALL_FIELDS}

#: Sheet each field is placed on in the template (the reader follows the name, wherever it is).
FIELD_SHEET: dict[str, str] = {
    **{f.name: START for s in START_SECTIONS for f in s.fields},
    **{f.name: SITE for s in SITE_SECTIONS for f in s.fields},
    **{f.name: LIMITS for s in LIMITS_SECTIONS for f in s.fields},
    DEMAND_MODE.name: DEMAND,
    **{f.name: DEMAND for f in AADT_FIELDS},
}

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

TABLE_COLUMNS: dict[str, tuple[str, ...]] = {
    DEMAND_TABLE: DEMAND_COLUMNS,
    SHARE_TABLE: SHARE_COLUMNS,
    CLOSURE_TABLE: CLOSURE_COLUMNS,
}
TABLE_SHEET: dict[str, str] = {
    DEMAND_TABLE: DEMAND,
    SHARE_TABLE: DEMAND,
    CLOSURE_TABLE: CLOSURES,
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
    dn = book.defined_names.get(MARKER_NAME)
    if dn is None or not dn.attr_text:
        return []
    text = dn.attr_text.strip()
    if len(text) >= 2 and text[0] == text[-1] == '"':
        text = text[1:-1]
    return [s for s in text.split(MARKER_SEPARATOR) if s]
