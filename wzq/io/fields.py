"""One schema for the inputs of a plan: each defined once, with its plan attribute, JSON
key, unit, workbook defined name, bounds, dropdown words and help text.

The JSON reader and writer (:mod:`wzq.io.jsonplan`), the workbook reader
(:mod:`wzq.io.workbook.reader`), the template builder (:mod:`wzq.io.workbook.template`)
and the typing of plans into workbooks (:func:`wzq.io.workbook.run.type_plan`) all
read these definitions, so an input is added, renamed or re-bounded in one place.
Sheet names, dropdown words and colours are in :mod:`wzq.io.workbook.layout`.

Pure data and unit conversion (:mod:`wzq.units`): no I/O, no spreadsheet library.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

from wzq import units as u
from wzq.io.workbook.layout import (
    AREA_WORDS,
    CONGESTED_WORDS,
    COUNTS,
    DAY_TYPE_WORDS,
    DEMAND,
    DEMAND_MODE_WORDS,
    DIAGRAM_WORDS,
    DRIVER_WORDS,
    LIMITS,
    METHOD_WORDS,
    OVERRIDE_WORDS,
    QUEUE_METHOD_WORDS,
    SITE,
    STAMP_WORDS,
    START,
    TERRAIN_WORDS,
    UNIT_WORDS,
    YES_NO_WORDS,
    Choices,
)

__all__ = [
    "AADT_FIELDS",
    "ALL_FIELDS",
    "BY_ATTRIBUTE",
    "BY_KEY",
    "COST_FIELDS",
    "COST_MAIN",
    "DEMAND_MODE",
    "FIELDS_BY_NAME",
    "FIELD_SHEET",
    "HISTORY_FIELDS",
    "HISTORY_SECTIONS",
    "JSON_ONLY_FIELDS",
    "LIMITS_SECTIONS",
    "LOCATION_ALIASES",
    "META_FIELDS",
    "OPTIONAL_NAMES",
    "OPTION_FIELDS",
    "PLAN_INPUTS",
    "REQUIRED",
    "RISK_FIELDS",
    "SITE_SECTIONS",
    "SPEED_METRIC",
    "SPEED_US",
    "START_SECTIONS",
    "THRESHOLD_FIELDS",
    "UNIT_KINDS",
    "UNIT_SYSTEM",
    "WHEN_USED_KEYS",
    "Convert",
    "Field",
    "Kind",
    "Section",
    "json_keys",
    "section_inputs",
    "to_file",
    "to_plan",
]

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

#: A growth rate in percent per year smaller than this (in size) looks like a fraction
#: typed for a percentage (0.02 for 2 %) (common practice, no source).
FRACTION_GROWTH = 0.1

Kind = Literal["number", "int", "text", "choice", "date"]
#: How a value in the file's unit system becomes the plan's SI value.
Convert = Literal["", "speed", "long", "short", "density", "per_long", "percent", "minutes"]


@dataclass(frozen=True)
class Field:
    """One value cell: its defined name, label, type, unit, range and template value.

    ``unit`` is a key of :data:`UNIT_KINDS` (shown as mi/h or km/h by the unit
    system) or a fixed unit text. ``blank`` is the value a blank cell stands for,
    or :data:`REQUIRED`. ``bounds`` is the allowed range in US customary units
    (or unit-free), ``metric_bounds`` in metric units when they differ;
    ``open_lo`` / ``open_hi`` exclude the end itself; ``note`` is the help text
    shown beside the cell.

    The plan input it gives: ``key`` is its JSON-form key (``section.key`` in a
    JSON plan, and what :meth:`wzq.engine.plan.Plan.where` looks up), ``attribute``
    the plan's own (``site.heavy_vehicle_share``), ``convert`` how a value in the
    file's units becomes the plan's (:func:`to_plan`, :func:`to_file`), ``rounded``
    whether a JSON plan stores it to 6 decimals, ``json_default`` the value a JSON
    plan may leave out (``...``: required), ``json_lo`` the least value a JSON plan
    may give. Workbook-only inputs (the demand mode, the AADT expansion) have no
    ``attribute``; JSON-only ones (:data:`JSON_ONLY_FIELDS`) no cell ``name``.
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
    key: str = ""
    attribute: str = ""
    convert: Convert = ""
    rounded: bool = False
    json_default: Any = ...
    json_lo: float | None = None

    @property
    def required(self) -> bool:
        return self.blank is REQUIRED

    def limits(self, system: str | None) -> tuple[float, float] | None:
        """The allowed range in the given unit system (US customary for ``None``)."""
        if system == "metric" and self.metric_bounds is not None:
            return self.metric_bounds
        return self.bounds

    def looks_like_fraction(self, x: float) -> bool:
        """A percentage typed as a fraction (0.08 for 8 %, 0.02 for 2 % a year): in
        percent (``%``) a value above 0 up to 1, in percent per year one below
        :data:`FRACTION_GROWTH` in size."""
        if not self.unit.startswith("%") or not x:
            return False
        return abs(x) < FRACTION_GROWTH if self.unit != "%" else 0 < x <= 1

    def unit_text(self, system: str | None) -> str:
        """The unit shown beside the value in the given unit system (US customary for
        ``None``, before the plan's system is read)."""
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
    key="units",
    attribute="site.unit_system",
)
META_FIELDS: tuple[Field, ...] = (
    Field(
        "meta_title",
        "Title",
        "text",
        blank="",
        key="meta.title",
        attribute="meta.title",
        json_default="",
    ),
    Field(
        "meta_project",
        "Project",
        "text",
        blank="",
        key="meta.project",
        attribute="meta.project",
        json_default="",
    ),
    Field(
        "meta_route",
        "Route",
        "text",
        blank="",
        key="meta.route",
        attribute="meta.route",
        json_default="",
    ),
    Field(
        "meta_prepared_by",
        "Prepared by",
        "text",
        blank="",
        key="meta.prepared_by",
        attribute="meta.prepared_by",
        json_default="",
    ),
    Field(
        "meta_checked_by",
        "Checked by",
        "text",
        blank="",
        key="meta.checked_by",
        attribute="meta.checked_by",
        json_default="",
    ),
    Field(
        "meta_notes",
        "Notes",
        "text",
        blank="",
        key="meta.notes",
        attribute="meta.notes",
        json_default="",
    ),
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
            Field(
                "site_name",
                "Site name",
                "text",
                blank="",
                key="site.name",
                attribute="site.name",
                json_default="",
            ),
            Field(
                "site_direction",
                "Direction of travel",
                "text",
                blank="",
                note="e.g. northbound",
                key="site.direction",
                attribute="site.direction",
                json_default="",
            ),
            Field(
                "site_lanes",
                "Lanes in normal operation",
                "int",
                "lanes",
                bounds=(1, 8),
                note="this direction only",
                key="site.lanes",
                attribute="site.lanes",
            ),
            Field(
                "site_speed_limit",
                "Speed limit",
                "number",
                "speed",
                bounds=SPEED_US,
                metric_bounds=SPEED_METRIC,
                key="site.speed_limit",
                attribute="site.speed_limit",
                convert="speed",
                rounded=True,
                json_lo=0,
            ),
            Field(
                "site_work_zone_speed_limit",
                "Work-zone speed limit",
                "number",
                "speed",
                bounds=SPEED_US,
                metric_bounds=SPEED_METRIC,
                note="at or below the speed limit",
                key="site.work_zone_speed_limit",
                attribute="site.work_zone_speed_limit",
                convert="speed",
                rounded=True,
                json_lo=0,
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
                key="site.free_flow_speed",
                attribute="site.free_flow_speed",
                convert="speed",
                rounded=True,
                json_default=None,
                json_lo=0,
            ),
            Field(
                "site_work_zone_length",
                "Work-zone length",
                "number",
                "long",
                bounds=(0.0, 50.0),
                metric_bounds=(0.0, 80.0),
                key="site.work_zone_length",
                attribute="site.work_zone_length",
                convert="long",
                rounded=True,
                json_lo=0,
            ),
            Field(
                "site_heavy_vehicle_percent",
                "Heavy vehicles",
                "number",
                "%",
                template=5,
                bounds=(0.0, 100.0),
                note="share of the traffic in this direction",
                key="site.heavy_vehicle_percent",
                attribute="site.heavy_vehicle_share",
                convert="percent",
                rounded=True,
                json_default=5.0,
                json_lo=0,
            ),
            Field(
                "site_terrain",
                "Terrain",
                "choice",
                template="level",
                choices=TERRAIN_WORDS,
                key="site.terrain",
                attribute="site.terrain",
                json_default="level",
            ),
            Field(
                "site_area_type",
                "Area type",
                "choice",
                template="urban",
                choices=AREA_WORDS,
                key="site.area_type",
                attribute="site.area_type",
                json_default="urban",
            ),
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
                key="site.lateral_clearance",
                attribute="site.lateral_clearance",
                convert="short",
                rounded=True,
                json_default=0.0,
                json_lo=0,
            ),
            Field(
                "site_driver_population",
                "Drivers",
                "choice",
                template="commuters",
                choices=DRIVER_WORDS,
                key="site.driver_population",
                attribute="site.driver_population",
                json_default="commuter",
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
                key="site.ramp_density",
                attribute="site.ramp_density",
                convert="per_long",
                rounded=True,
                json_default=0.0,
                json_lo=0,
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
                key="site.jam_density",
                attribute="site.jam_density",
                convert="density",
                rounded=True,
                json_default=None,
                json_lo=0,
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
                key="site.capacity_method",
                attribute="site.capacity_method",
                json_default="hcm7",
            ),
            Field(
                "site_base_capacity",
                "Base capacity of the open road",
                "number",
                "pc/h/ln",
                blank=None,
                bounds=(500.0, 3000.0),
                note="blank: from the free-flow speed (HCM basic freeway segment)",
                key="site.base_capacity_pc_h_ln",
                attribute="site.base_capacity_pc_h_ln",
                json_default=None,
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
                key="site.capacity_drop_percent_work_zone",
                attribute="site.capacity_drop_pct_work_zone",
                json_default=13.4,
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
                key="site.capacity_drop_percent_open",
                attribute="site.capacity_drop_pct_open",
                json_default=7.0,
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
                key="site.work_intensity_pc_h_ln",
                attribute="site.work_intensity_pc_h_ln",
                json_default=0.0,
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
                key="site.ramp_adjustment_pc_h_ln",
                attribute="site.ramp_adjustment_pc_h_ln",
                json_default=0.0,
            ),
            Field(
                "site_override_is",
                "A closure capacity typed on the Closures sheet is",
                "choice",
                template="both: no capacity drop",
                choices=OVERRIDE_WORDS,
                note="both: used as pre-breakdown capacity and discharge rate; otherwise the "
                "other one follows from the work-zone capacity drop",
                key="site.capacity_override_is",
                attribute="site.capacity_override_is",
                json_default="both",
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
                key="options.space_time",
                attribute="options.space_time",
                json_default=False,
            ),
        ),
    ),
    Section(
        "Queue length: congested branch of the triangular diagram",
        (
            Field(
                "site_congested_branch",
                "Congested branch from",
                "choice",
                template="capacity, jam density",
                choices=CONGESTED_WORDS,
                note="the backward wave speed w = C / (k_j - k_c); calibrated values from the "
                "site's detectors go below; HCM: k_c = 45 pc/mi/ln x heavy-vehicle factor",
                key="site.congested_branch",
                attribute="site.congested_branch",
                json_default="derived",
            ),
            Field(
                "site_wave_speed",
                "Backward wave speed",
                "number",
                "speed",
                blank=None,
                bounds=(3.0, 40.0),
                metric_bounds=(5.0, 65.0),
                open_lo=True,
                note="with 'backward wave speed' above; the speed at which a stop "
                "travels upstream, as measured on this road",
                key="site.wave_speed",
                attribute="site.wave_speed",
                convert="speed",
                rounded=True,
                json_default=None,
                json_lo=0,
            ),
            Field(
                "site_density_at_capacity",
                "Density at capacity",
                "number",
                "density",
                blank=None,
                bounds=(15.0, 120.0),
                metric_bounds=(10.0, 75.0),
                note="with 'density at capacity' above; below the jam density",
                key="site.density_at_capacity",
                attribute="site.density_at_capacity",
                convert="density",
                rounded=True,
                json_default=None,
                json_lo=0,
            ),
        ),
    ),
)
#: Names a workbook made by an older template may lack; the reader then uses the
#: template value instead of reporting a problem.
OPTIONAL_NAMES: frozenset[str] = frozenset(
    {
        "site_space_time",
        "opt_closure_windows",
        "site_override_is",
        "site_congested_branch",
        "site_wave_speed",
        "site_density_at_capacity",
        "limit_landmark",
        "risk_capacity_cv",
        "risk_draws",
        "risk_seed",
        "risk_window_percent",
    }
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
        key="thresholds.max_queue_length",
        attribute="thresholds.max_queue_length",
        convert="long",
        rounded=True,
        json_default=None,
        json_lo=0,
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
        key="thresholds.max_average_delay_min",
        attribute="thresholds.max_average_delay",
        convert="minutes",
        rounded=True,
        json_default=None,
        json_lo=0,
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
        key="thresholds.max_demand_capacity",
        attribute="thresholds.max_demand_capacity",
        json_default=None,
        json_lo=0,
    ),
    Field(
        "limit_landmark",
        "Queue must not pass",
        "text",
        blank=None,
        note="a landmark's name from the Approach sheet; blank: not checked",
        key="thresholds.queue_must_not_pass",
        attribute="thresholds.queue_must_not_pass",
        json_default=None,
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
        key="costs.car_value_per_person_h",
        attribute="costs.car_value_per_person_h",
        json_lo=0,
    ),
    Field(
        "cost_car_occupancy",
        "Car occupancy",
        "number",
        "persons/veh",
        bounds=(1.0, 10.0),
        key="costs.car_occupancy",
        attribute="costs.car_occupancy",
        json_lo=0,
    ),
    Field(
        "cost_truck_value",
        "Value of time, trucks",
        "number",
        "per vehicle-hour",
        bounds=(0.0, 2000.0),
        key="costs.truck_value_per_veh_h",
        attribute="costs.truck_value_per_veh_h",
        json_lo=0,
    ),
    Field(
        "cost_truck_percent",
        "Trucks in the traffic",
        "number",
        "%",
        blank=None,
        bounds=(0.0, 100.0),
        note="blank: the heavy-vehicle share on the Site sheet",
        key="costs.truck_percent",
        attribute="costs.truck_share",
        convert="percent",
        json_default=None,
        json_lo=0,
    ),
    Field(
        "cost_currency",
        "Currency",
        "text",
        template="USD",
        note="e.g. USD",
        key="costs.currency",
        attribute="costs.currency",
        json_default="USD",
    ),
    Field(
        "cost_dollar_year",
        "Price year",
        "int",
        "year",
        bounds=(1950, 2100),
        note="the year the values above are priced in",
        key="costs.dollar_year",
        attribute="costs.dollar_year",
        json_default=2017,
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
        key="options.capacity_drop",
        attribute="options.capacity_drop",
        json_default=True,
    ),
    Field(
        "opt_diagram",
        "Fundamental diagram for queue length",
        "choice",
        template="triangular (Newell)",
        choices=DIAGRAM_WORDS,
        key="options.diagram",
        attribute="options.diagram",
        json_default="triangular",
    ),
    Field(
        "opt_queue_length_method",
        "Queue length from",
        "choice",
        template="Newell kinematic waves",
        choices=QUEUE_METHOD_WORDS,
        note="Newell needs the triangular diagram; with another, single shockwave is used",
        key="options.queue_length_method",
        attribute="options.queue_length_method",
        json_default="newell",
    ),
    Field(
        "opt_closure_windows",
        "Closure windows sheet",
        "choice",
        template="yes",
        choices=YES_NO_WORDS,
        note="yes: when may each lane configuration be in place at all (takes longer)",
        key="options.closure_windows",
        attribute="options.closure_windows",
        json_default=False,
    ),
)
#: How the risk of breaking the limits is assessed when the demand comes from a count
#: history (:mod:`wzq.engine.risk`); the JSON keys are those of the plan's ``risk`` block,
#: in the same units.
RISK_FIELDS: tuple[Field, ...] = (
    Field(
        "risk_capacity_cv",
        "Capacity coefficient of variation",
        "number",
        "ratio",
        blank=None,
        bounds=(0.0, 0.3),
        open_lo=True,
        note="blank: the model's capacity in every scenario; no published default: take it "
        "from a field study of work zones like yours (e.g. 0.08); also gives a risk without "
        "a count history",
        key="risk.capacity_cv",
        attribute="risk.capacity_cv",
        json_default=None,
    ),
    Field(
        "risk_draws",
        "Draws of the capacity",
        "int",
        "draws",
        blank=1000,
        template=1000,
        bounds=(1, 100_000),
        note="Monte Carlo draws, shared equally among the historical periods",
        key="risk.draws",
        attribute="risk.draws",
        json_default=1000,
    ),
    Field(
        "risk_seed",
        "Seed of the draws",
        "int",
        "",
        blank=1,
        template=1,
        bounds=(0, 2**31 - 1),
        note="the same seed gives the same draws",
        key="risk.seed",
        attribute="risk.seed",
        json_default=1,
    ),
    Field(
        "risk_window_percent",
        "Windows allowed at a risk of at most",
        "number",
        "%",
        blank=None,
        bounds=(0.0, 100.0),
        open_hi=True,
        note="the chance that some hour of the closure's run breaks a limit, e.g. 10; blank: "
        "windows on the design demand alone (Closure windows sheet); each scenario is "
        "searched, so with the capacity drawn a week's search takes minutes",
        key="risk.window_risk_percent",
        attribute="risk.window_risk",
        convert="percent",
        json_default=None,
    ),
)
LIMITS_SECTIONS: tuple[Section, ...] = (
    Section("Agency limits", THRESHOLD_FIELDS),
    Section("Road-user costs", COST_FIELDS),
    Section("Options", OPTION_FIELDS),
    Section("Risk of breaking the limits (with a count history)", RISK_FIELDS),
)

# Demand sheet --------------------------------------------------------------------------------

DEMAND_MODE = Field(
    "demand_mode",
    "Demand is given as",
    "choice",
    template="hourly counts",
    choices=DEMAND_MODE_WORDS,
    note="hourly counts: the table below; from AADT or a count history: the inputs on the right",
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

#: The design demand from a count history (:mod:`wzq.engine.design_demand`), read by
#: :mod:`wzq.io.counts`; the JSON keys are those of the plan's ``demand.history`` block.
HISTORY_SECTIONS: tuple[Section, ...] = (
    Section(
        "The counts",
        (
            Field(
                "history_source",
                "Counts are on",
                "text",
                template=COUNTS,
                note=f"the {COUNTS} sheet, another sheet of this workbook, or a count file named "
                "relative to it (TMG, .csv, .xlsx)",
                key="demand.history.file",
            ),
            Field(
                "history_file_sheet",
                "Sheet of a count workbook",
                "text",
                blank=None,
                note="a count file that is a workbook: the sheet with the counts (blank: its "
                "first sheet)",
                key="demand.history.sheet",
            ),
            Field(
                "history_station",
                "Station",
                "text",
                blank=None,
                note="TMG records: the station ID (blank: the only one in the file)",
                key="demand.history.station",
            ),
            Field(
                "history_direction",
                "Direction counted",
                "text",
                blank=None,
                note="TMG records: north, east ..., NB, EB ... or the TMG code (blank: the only "
                "one in the file)",
                key="demand.history.direction",
            ),
            Field(
                "history_lanes",
                "Lanes counted",
                "int",
                "lanes",
                blank=None,
                bounds=(1, 8),
                note="for the check of impossible counts (blank: up to 8)",
                key="demand.history.lanes",
            ),
            Field(
                "history_stamp",
                "A time stamp is the",
                "choice",
                template="start of its interval",
                choices=STAMP_WORDS,
                note="long form (date-time, count) only",
                key="demand.history.stamp",
            ),
            Field(
                "history_exclude_days",
                "Days to leave out",
                "text",
                blank="",
                note="dates like 2026-07-04, separated by commas: a lane out, an event, works",
                key="demand.history.exclude_days",
            ),
        ),
    ),
    Section(
        "The design demand",
        (
            Field(
                "history_first_day",
                "First day of the plan",
                "date",
                "date",
                note="the plan runs from 00:00 of this day",
                key="demand.start",
            ),
            Field(
                "history_days",
                "Number of days",
                "int",
                "days",
                template=7,
                bounds=(1, 92),
                key="demand.hours",
            ),
            Field(
                "history_day_types",
                "Grouping of the days",
                "choice",
                template="each weekday on its own",
                choices=DAY_TYPE_WORDS,
                note="Monday-Thursday together: more days, less seasonal detail; Friday, "
                "Saturday and Sunday apart either way",
                key="demand.history.day_types",
            ),
            Field(
                "history_holidays",
                "Holidays",
                "text",
                blank="",
                note="dates like 2026-12-25, separated by commas, of the counted years and of "
                "the plan: a day type of their own",
                key="demand.history.holidays",
            ),
            Field(
                "history_window_weeks",
                "Window around the same date",
                "number",
                "weeks each side",
                blank=None,
                bounds=(0.0, 26.0),
                note="in any year of the counts; blank: every date",
                key="demand.history.window_weeks",
            ),
            Field(
                "history_same_months",
                "Only the plan's months",
                "choice",
                template="no",
                choices=YES_NO_WORDS,
                key="demand.history.same_months",
            ),
            Field(
                "history_growth_percent",
                "Growth to the plan's dates",
                "number",
                "% per year",
                blank=0.0,
                template=0,
                bounds=(-20.0, 20.0),
                key="demand.history.growth_percent_per_year",
            ),
            Field(
                "history_percentile",
                "Design demand in each hour",
                "number",
                "percentile",
                blank=None,
                bounds=(0.0, 100.0),
                note="blank: the mean of the matching days; e.g. 85: their 85th percentile",
                key="demand.history.percentile",
            ),
        ),
    ),
)
HISTORY_FIELDS: tuple[Field, ...] = tuple(f for s in HISTORY_SECTIONS for f in s.fields)

ALL_FIELDS: tuple[Field, ...] = (
    *(f for s in START_SECTIONS for f in s.fields),
    *(f for s in SITE_SECTIONS for f in s.fields),
    *(f for s in LIMITS_SECTIONS for f in s.fields),
    DEMAND_MODE,
    *AADT_FIELDS,
    *HISTORY_FIELDS,
)
FIELDS_BY_NAME: dict[str, Field] = {f.name: f for f in ALL_FIELDS}

#: Sheet each field is placed on in the template (the reader follows the name, wherever it is).
FIELD_SHEET: dict[str, str] = {
    **{f.name: START for s in START_SECTIONS for f in s.fields},
    **{f.name: SITE for s in SITE_SECTIONS for f in s.fields},
    **{f.name: LIMITS for s in LIMITS_SECTIONS for f in s.fields},
    DEMAND_MODE.name: DEMAND,
    **{f.name: DEMAND for f in AADT_FIELDS},
    **{f.name: DEMAND for f in HISTORY_FIELDS},
}


#: Plan inputs a JSON plan may give that have no cell in the workbook (none at present).
JSON_ONLY_FIELDS: tuple[Field, ...] = ()
#: Keys a JSON plan gives only when they are used, read by the JSON reader with rules of
#: their own: the congested branch of the triangular diagram (the branch follows from
#: the value given) and the landmark the queue must not pass (a landmark's name). They
#: are written only when set, so a plan without them reads and writes as before.
WHEN_USED_KEYS: frozenset[str] = frozenset(
    {
        "site.congested_branch",
        "site.wave_speed",
        "site.density_at_capacity",
        "thresholds.queue_must_not_pass",
    }
)

#: Every plan input (a plan attribute), workbook cells and JSON-only keys alike.
PLAN_INPUTS: tuple[Field, ...] = (
    *(f for f in ALL_FIELDS if f.attribute),
    *JSON_ONLY_FIELDS,
)
BY_ATTRIBUTE: dict[str, Field] = {f.attribute: f for f in PLAN_INPUTS}
BY_KEY: dict[str, Field] = {f.key: f for f in PLAN_INPUTS}
#: A plan check's location that covers more than one input -> the cell it is shown at.
LOCATION_ALIASES: dict[str, str] = {"site.capacity_drop_pct": "site.capacity_drop_pct_work_zone"}


def section_inputs(section: str) -> tuple[Field, ...]:
    """The plan inputs of one JSON section (``site``, ``thresholds``, ``costs``,
    ``options``, ``meta``), in their order here."""
    return tuple(f for f in PLAN_INPUTS if f.key.split(".")[0] == section)


def json_keys(section: str) -> set[str]:
    """The keys a JSON plan may give in ``section``, from the schema."""
    return {f.key.split(".", 1)[1] for f in section_inputs(section)}


def to_plan(field: Field, value: Any, system: u.UnitSystem) -> Any:
    """A value in the file's units (``system``) as the plan holds it (SI, shares as
    fractions, delays in seconds); ``None`` stays ``None``."""
    if value is None or not field.convert:
        return value
    c = field.convert
    if c == "speed":
        return u.speed_to_mps(value, system)
    if c == "long":
        return u.long_length_to_m(value, system)
    if c == "short":
        return u.short_length_to_m(value, system)
    if c == "density":
        return u.density_to_per_m(value, system)
    if c == "per_long":
        return value / u.LONG_LENGTH[system][1]
    if c == "percent":
        return value / 100.0
    return value * u.MINUTE  # minutes


def to_file(field: Field, value: Any, system: u.UnitSystem) -> Any:
    """A plan value in the file's units (the inverse of :func:`to_plan`)."""
    if value is None or not field.convert:
        return value
    c = field.convert
    if c == "speed":
        return u.mps_to_speed(value, system)
    if c == "long":
        return u.m_to_long_length(value, system)
    if c == "short":
        return u.m_to_short_length(value, system)
    if c == "density":
        return u.per_m_to_density(value, system)
    if c == "per_long":
        return value * u.LONG_LENGTH[system][1]
    if c == "percent":
        return value * 100
    return value / u.MINUTE  # minutes
