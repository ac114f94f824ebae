"""The plan: everything the engine needs to know about one direction of one site.

Pure data, no I/O. All values are SI (seconds, metres, m/s, veh/m per lane),
flows in veh/h; :mod:`wzq.units` converts at the edges. A plan is built in code,
from a JSON file (:mod:`wzq.planio`) or from a workbook (:mod:`wzq.workbook`).

Errors a user can cause are raised as :class:`PlanError`, which carries where the
problem is (sheet and cell, JSON key, or row) and what to do about it.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from dataclasses import dataclass, field
from itertools import pairwise
from typing import TYPE_CHECKING, Literal

import numpy as np

from wzq.units import UnitSystem

if TYPE_CHECKING:
    from wzq.design_demand import DemandHistory

Terrain = Literal["level", "rolling"]
AreaType = Literal["urban", "rural"]
Barrier = Literal["hard", "soft"]
DriverPopulation = Literal["commuter", "familiar", "balanced", "unfamiliar"]
CapacityMethod = Literal["hcm7", "hcm2000"]
Diagram = Literal["triangular", "greenshields", "capped-greenshields"]
QueueLengthMethod = Literal["newell", "shockwave"]
OverrideMeaning = Literal["both", "discharge", "prebreakdown"]

TERRAINS: tuple[str, ...] = ("level", "rolling")
AREA_TYPES: tuple[str, ...] = ("urban", "rural")
BARRIERS: tuple[str, ...] = ("hard", "soft")
DRIVER_POPULATIONS: tuple[str, ...] = ("commuter", "familiar", "balanced", "unfamiliar")
CAPACITY_METHODS: tuple[str, ...] = ("hcm7", "hcm2000")
DIAGRAMS: tuple[str, ...] = ("triangular", "greenshields", "capped-greenshields")
QUEUE_LENGTH_METHODS: tuple[str, ...] = ("newell", "shockwave")
#: What a capacity typed for a closure stands for: both the pre-breakdown capacity and
#: the queue discharge rate (no capacity drop for that closure), the queue discharge
#: rate, or the pre-breakdown capacity (the other then follows from the work-zone
#: capacity drop, HCM 6th/7th ed., Ch. 10).
OVERRIDE_MEANINGS: tuple[str, ...] = ("both", "discharge", "prebreakdown")

#: Hours counted as night-time for the HCM work-zone day/night term when a
#: closure does not say (19:00 to 06:00; common practice, no source).
NIGHT_START_HOUR = 19
NIGHT_END_HOUR = 6


@dataclass
class Problem:
    """One thing wrong with the input: where it is and what to do."""

    where: str
    message: str

    def __str__(self) -> str:
        return f"{self.where}: {self.message}"


class PlanError(ValueError):
    """Input a user can fix. Carries one or more :class:`Problem` entries."""

    def __init__(self, problems: list[Problem] | Problem | str, where: str = "plan") -> None:
        if isinstance(problems, str):
            problems = [Problem(where, problems)]
        elif isinstance(problems, Problem):
            problems = [problems]
        self.problems: list[Problem] = list(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


@dataclass(frozen=True)
class Site:
    """One direction of travel at the work zone.

    ``capacity_override_is`` says what a capacity typed for a closure
    (:attr:`Closure.capacity_override_veh_h_ln`) stands for (:data:`OVERRIDE_MEANINGS`).

    ``lanes`` is the number of lanes in normal operation. Speeds are m/s,
    lengths metres, ``jam_density`` veh/m per lane (``None``: 190 pc/mi/ln times
    the heavy-vehicle factor, HCM 7th ed.). ``free_flow_speed`` ``None`` means
    speed limit + 5 mi/h (HCM 7th ed. default).
    """

    lanes: int
    speed_limit: float
    work_zone_speed_limit: float
    work_zone_length: float
    free_flow_speed: float | None = None
    heavy_vehicle_share: float = 0.05
    terrain: Terrain = "level"
    area_type: AreaType = "urban"
    lateral_clearance: float = 0.0
    driver_population: DriverPopulation = "commuter"
    jam_density: float | None = None
    ramp_density: float = 0.0  # ramps per metre within 3 mi of the work-zone centre
    capacity_method: CapacityMethod = "hcm7"
    base_capacity_pc_h_ln: float | None = None
    capacity_drop_pct_work_zone: float = 13.4
    capacity_drop_pct_open: float = 7.0
    work_intensity_pc_h_ln: float = 0.0
    ramp_adjustment_pc_h_ln: float = 0.0
    capacity_override_is: OverrideMeaning = "both"
    name: str = ""
    direction: str = ""
    unit_system: UnitSystem = "us"


@dataclass(frozen=True)
class Closure:
    """One lane closure: from ``start`` to ``end`` (local clock, naive datetimes).

    ``night`` ``None`` means derived from the clock (19:00-06:00).
    ``capacity_override_veh_h_ln`` wins over every capacity model; what it stands
    for (pre-breakdown capacity, queue discharge rate, or both) is
    :attr:`Site.capacity_override_is`.
    """

    start: dt.datetime
    end: dt.datetime
    lanes_closed: int
    barrier: Barrier = "soft"
    night: bool | None = None
    capacity_override_veh_h_ln: float | None = None
    note: str = ""


@dataclass(frozen=True)
class Demand:
    """Arrival flows in veh/h on a regular grid starting at ``start``.

    ``interval_s`` is 3600 (hourly counts) or 900 (15-minute counts); other
    divisors of an hour work too. ``flows_veh_h[i]`` holds for
    ``[start + i*interval, start + (i+1)*interval)``.
    """

    start: dt.datetime
    interval_s: int
    flows_veh_h: np.ndarray

    def __post_init__(self) -> None:
        object.__setattr__(self, "flows_veh_h", np.asarray(self.flows_veh_h, dtype=float))

    @property
    def end(self) -> dt.datetime:
        return self.start + dt.timedelta(seconds=self.interval_s * len(self.flows_veh_h))


@dataclass(frozen=True)
class Thresholds:
    """Agency limits. ``None`` switches a check off.

    ``max_queue_length`` in metres, ``max_average_delay`` in seconds per vehicle,
    ``max_demand_capacity`` as a ratio.
    """

    max_queue_length: float | None = None
    max_average_delay: float | None = None
    max_demand_capacity: float | None = None


@dataclass(frozen=True)
class Costs:
    """Road-user value of time (currency per person-hour or vehicle-hour).

    ``truck_share`` ``None`` means the site's heavy-vehicle share.
    """

    car_value_per_person_h: float
    car_occupancy: float
    truck_value_per_veh_h: float
    truck_share: float | None = None
    currency: str = "USD"
    dollar_year: int = 2017


@dataclass(frozen=True)
class Options:
    """How the engine runs.

    ``capacity_drop``: pre-breakdown capacity until a queue forms, queue
    discharge rate while it lasts (on by default). ``diagram``: fundamental
    diagram used to turn queued vehicles into a length. ``queue_length_method``:
    ``"newell"`` (default) follows the waves by Newell's simplified
    kinematic-wave method, exact for the triangular diagram; ``"shockwave"`` is
    the simpler single-state relation. With a non-triangular diagram the
    single-state relation is used, because Newell's construction needs the
    linear congested branch of the triangular diagram.
    """

    capacity_drop: bool = True
    diagram: Diagram = "triangular"
    queue_length_method: QueueLengthMethod = "newell"
    space_time: bool = False  # add the LWR space-time picture to the outputs
    closure_windows: bool = False  # add the allowable closure hours to the workbook


@dataclass(frozen=True)
class Meta:
    """Free text for titles and sign-off."""

    title: str = ""
    project: str = ""
    route: str = ""
    prepared_by: str = ""
    checked_by: str = ""
    notes: str = ""


@dataclass(frozen=True)
class RiskOptions:
    """How the risk of breaking the limits is assessed (:mod:`wzq.risk`).

    ``capacity_cv``: coefficient of variation of the work-zone capacity, each
    closure's capacity drawn around the model's value (``None``: as the model
    gives it); ``draws``: Monte Carlo samples when it is drawn; ``seed`` makes
    the draws repeatable; ``confidence``: level of the intervals stated for the
    estimated probabilities.
    """

    capacity_cv: float | None = None
    draws: int = 1000
    seed: int = 1
    confidence: float = 0.95


@dataclass(frozen=True)
class Plan:
    """A complete closure plan for one direction of one site.

    ``input_warnings`` are what the reader of the plan's file noticed about the
    inputs (a table that was extended, a percentage that may be a fraction, a
    formula whose result is zero ...); :func:`wzq.analysis.analyse` puts them
    first in the result's warnings. ``locations`` maps a plan key in the JSON
    form (``site.heavy_vehicle_percent``, ``demand[12]``, ``closures[0].note``)
    to where the user typed it (``Site!B12``); :meth:`where` looks it up. Neither
    takes part in comparisons.

    ``history`` (optional): the count history the demand was designed from,
    which the risk assessment (:mod:`wzq.risk`) runs scenario by scenario;
    ``risk`` (optional): how that assessment is made.
    """

    site: Site
    demand: Demand
    closures: tuple[Closure, ...] = ()
    thresholds: Thresholds = field(default_factory=Thresholds)
    costs: Costs | None = None
    options: Options = field(default_factory=Options)
    meta: Meta = field(default_factory=Meta)
    input_warnings: tuple[str, ...] = field(default=(), compare=False)
    locations: Mapping[str, str] = field(default_factory=dict, compare=False, repr=False)
    history: DemandHistory | None = None
    risk: RiskOptions | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "closures", tuple(self.closures))
        object.__setattr__(self, "input_warnings", tuple(self.input_warnings))
        problems = validate(self)
        if problems:
            raise PlanError(problems)

    def where(self, key: str) -> str:
        """Where the value of ``key`` (a JSON-form key) was typed: a sheet cell, else the key."""
        return self.locations.get(key, key)


def _check_choice(value: str, choices: tuple[str, ...], where: str, out: list[Problem]) -> None:
    if value not in choices:
        out.append(
            Problem(where, f"'{value}' is not one of {', '.join(choices)}; pick one of them")
        )


def validate(plan: Plan) -> list[Problem]:
    """Every problem in a plan built in code, located by field name."""
    out: list[Problem] = []
    s = plan.site
    if int(s.lanes) != s.lanes or s.lanes < 1 or s.lanes > 8:
        out.append(Problem("site.lanes", "lanes in normal operation must be a whole number 1-8"))
    for name in ("speed_limit", "work_zone_speed_limit"):
        v = getattr(s, name)
        if not np.isfinite(v) or v <= 0:
            out.append(Problem(f"site.{name}", "must be a positive speed"))
    if s.free_flow_speed is not None and (
        not np.isfinite(s.free_flow_speed) or s.free_flow_speed <= 0
    ):
        out.append(Problem("site.free_flow_speed", "must be a positive speed or left blank"))
    if not np.isfinite(s.work_zone_length) or s.work_zone_length < 0:
        out.append(Problem("site.work_zone_length", "must be zero or a positive length"))
    if not 0.0 <= s.heavy_vehicle_share <= 1.0:
        out.append(Problem("site.heavy_vehicle_share", "must be a fraction between 0 and 1"))
    if not np.isfinite(s.lateral_clearance) or s.lateral_clearance < 0:
        out.append(Problem("site.lateral_clearance", "must be zero or a positive distance"))
    if s.jam_density is not None and (not np.isfinite(s.jam_density) or s.jam_density <= 0):
        out.append(Problem("site.jam_density", "must be a positive density or left blank"))
    if s.base_capacity_pc_h_ln is not None and not 500 <= s.base_capacity_pc_h_ln <= 3000:
        out.append(Problem("site.base_capacity_pc_h_ln", "must be 500-3000 pc/h/ln or blank"))
    if not 0 <= s.capacity_drop_pct_work_zone < 50 or not 0 <= s.capacity_drop_pct_open < 50:
        out.append(Problem("site.capacity_drop_pct", "capacity drop must be 0 to under 50 %"))
    if not -160 <= s.work_intensity_pc_h_ln <= 160:
        out.append(Problem("site.work_intensity_pc_h_ln", "must be within -160..160 pc/h/ln"))
    if s.ramp_density < 0:
        out.append(Problem("site.ramp_density", "must be zero or positive"))
    _check_choice(s.terrain, TERRAINS, "site.terrain", out)
    _check_choice(s.area_type, AREA_TYPES, "site.area_type", out)
    _check_choice(s.driver_population, DRIVER_POPULATIONS, "site.driver_population", out)
    _check_choice(s.capacity_method, CAPACITY_METHODS, "site.capacity_method", out)
    _check_choice(s.capacity_override_is, OVERRIDE_MEANINGS, "site.capacity_override_is", out)
    _check_choice(plan.options.diagram, DIAGRAMS, "options.diagram", out)
    _check_choice(
        plan.options.queue_length_method, QUEUE_LENGTH_METHODS, "options.queue_length_method", out
    )

    d = plan.demand
    if d.interval_s <= 0 or 3600 % d.interval_s != 0:
        out.append(
            Problem("demand.interval", "interval must divide an hour (e.g. 60 or 15 minutes)")
        )
    if len(d.flows_veh_h) == 0:
        out.append(Problem("demand", "no demand given; enter at least one interval"))
    elif not np.all(np.isfinite(d.flows_veh_h)) or np.any(d.flows_veh_h < 0):
        bad = int(np.flatnonzero(~np.isfinite(d.flows_veh_h) | (d.flows_veh_h < 0))[0])
        out.append(Problem(f"demand[{bad}]", "demand must be a finite number of veh/h, 0 or more"))
    if d.start.minute or d.start.second or d.start.microsecond:
        out.append(Problem("demand.start", "demand must start on the hour"))
    if d.interval_s > 0 and (len(d.flows_veh_h) * d.interval_s) % 3600:
        out.append(
            Problem(
                "demand",
                "demand must cover whole hours; add the missing intervals of the last hour",
            )
        )

    for i, c in enumerate(plan.closures):
        where = f"closures[{i}]"
        if c.end <= c.start:
            out.append(Problem(where, "closure ends before it starts; check the end time"))
        if int(c.lanes_closed) != c.lanes_closed or c.lanes_closed < 0:
            out.append(Problem(where, "lanes closed must be a whole number, 0 or more"))
        elif c.lanes_closed >= s.lanes:
            out.append(
                Problem(where, f"all {s.lanes} lanes closed; at least one lane must stay open")
            )
        _check_choice(c.barrier, BARRIERS, f"{where}.barrier", out)
        if (
            c.capacity_override_veh_h_ln is not None
            and not 100 <= c.capacity_override_veh_h_ln <= 3000
        ):
            out.append(Problem(where, "capacity override must be 100-3000 veh/h/ln or blank"))
        if len(d.flows_veh_h) and (c.start < d.start or c.end > d.end):
            out.append(
                Problem(
                    where,
                    f"closure lies outside the demand period {d.start} to {d.end}; "
                    "extend the demand or move the closure",
                )
            )
    order = sorted(range(len(plan.closures)), key=lambda i: plan.closures[i].start)
    for a, b in pairwise(order):
        if plan.closures[b].start < plan.closures[a].end:
            out.append(Problem(f"closures[{b}]", f"overlaps closures[{a}]; one closure at a time"))

    t = plan.thresholds
    for name in ("max_queue_length", "max_average_delay", "max_demand_capacity"):
        v = getattr(t, name)
        if v is not None and (not np.isfinite(v) or v <= 0):
            out.append(Problem(f"thresholds.{name}", "must be a positive number or blank"))
    if plan.costs is not None:
        c = plan.costs
        for name in ("car_value_per_person_h", "car_occupancy", "truck_value_per_veh_h"):
            v = getattr(c, name)
            if not np.isfinite(v) or v < 0:
                out.append(Problem(f"costs.{name}", "must be zero or a positive number"))
        if c.truck_share is not None and not 0 <= c.truck_share <= 1:
            out.append(Problem("costs.truck_share", "must be a fraction between 0 and 1"))
    return out


def is_night(t: dt.datetime) -> bool:
    """Night-time by the clock: 19:00 to 06:00 (common practice, no source)."""
    return t.hour >= NIGHT_START_HOUR or t.hour < NIGHT_END_HOUR
