"""The plan: everything the engine needs to know about one direction of one site.

Pure data, no I/O. All values are SI (seconds, metres, m/s, veh/m per lane),
flows in veh/h; :mod:`wzq.units` converts at the edges. A plan is built in code,
from a JSON file (:mod:`wzq.io.jsonplan`) or from a workbook (:mod:`wzq.io.workbook`).

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

from wzq.engine.problems import PlanError, Problem
from wzq.engine.site import site_model
from wzq.units import UnitSystem

if TYPE_CHECKING:
    from wzq.engine.design_demand import DemandHistory

__all__ = [
    "AREA_TYPES",
    "BARRIERS",
    "CAPACITY_METHODS",
    "CONGESTED_BRANCHES",
    "DIAGRAMS",
    "DRIVER_POPULATIONS",
    "LANDMARK_KINDS",
    "NIGHT_END_HOUR",
    "NIGHT_START_HOUR",
    "OVERRIDE_MEANINGS",
    "QUEUE_LENGTH_METHODS",
    "RAMP_KINDS",
    "TERRAINS",
    "Approach",
    "AreaType",
    "Barrier",
    "CapacityMethod",
    "Closure",
    "CongestedBranch",
    "Costs",
    "Demand",
    "Diagram",
    "DriverPopulation",
    "Landmark",
    "LandmarkKind",
    "Meta",
    "Options",
    "OverrideMeaning",
    "Plan",
    "PlanError",
    "Problem",
    "QueueLengthMethod",
    "RampFlows",
    "RiskOptions",
    "Site",
    "Terrain",
    "Thresholds",
    "is_night",
    "ramp_flows",
    "validate",
]

Terrain = Literal["level", "rolling"]
AreaType = Literal["urban", "rural"]
Barrier = Literal["hard", "soft"]
DriverPopulation = Literal["commuter", "familiar", "balanced", "unfamiliar"]
CapacityMethod = Literal["hcm7", "hcm2000"]
Diagram = Literal["triangular", "greenshields", "capped-greenshields"]
QueueLengthMethod = Literal["newell", "shockwave"]
OverrideMeaning = Literal["both", "discharge", "prebreakdown"]
CongestedBranch = Literal["derived", "hcm", "wave-speed", "density-at-capacity"]
LandmarkKind = Literal[
    "exit-ramp", "entrance-ramp", "signal", "structure", "warning-signs-end", "other"
]

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
#: How the congested branch of the triangular diagram is set: ``derived`` from
#: capacity, free-flow speed and jam density (the default), through the HCM
#: basic-segment density at capacity (``hcm``), or from a calibrated backward
#: wave speed or density at capacity.
CONGESTED_BRANCHES: tuple[str, ...] = ("derived", "hcm", "wave-speed", "density-at-capacity")
#: Landmarks upstream of the closure: exit ramp, entrance ramp, signal or
#: intersection, bridge or structure, end of the advance warning signing, other.
LANDMARK_KINDS: tuple[str, ...] = (
    "exit-ramp",
    "entrance-ramp",
    "signal",
    "structure",
    "warning-signs-end",
    "other",
)
RAMP_KINDS: tuple[str, ...] = ("exit-ramp", "entrance-ramp")

#: Hours counted as night-time for the HCM work-zone day/night term when a
#: closure does not say (19:00 to 06:00; common practice, no source).
NIGHT_START_HOUR = 19
NIGHT_END_HOUR = 6


@dataclass(frozen=True)
class Site:
    """One direction of travel at the work zone.

    ``capacity_override_is`` says what a capacity typed for a closure
    (:attr:`Closure.capacity_override_veh_h_ln`) stands for (:data:`OVERRIDE_MEANINGS`).

    ``lanes`` is the number of lanes in normal operation. Speeds are m/s,
    lengths metres, ``jam_density`` veh/m per lane (``None``: 190 pc/mi/ln times
    the heavy-vehicle factor, HCM 7th ed.). ``free_flow_speed`` ``None`` means
    speed limit + 5 mi/h (HCM 7th ed. default).

    ``congested_branch`` sets the congested branch of the triangular diagram
    (:data:`CONGESTED_BRANCHES`): ``"derived"`` from capacity, free-flow speed
    and jam density; ``"hcm"`` through the HCM basic-segment density at
    capacity, 45 pc/mi/ln times the heavy-vehicle factor (HCM 7th ed. ch. 12);
    ``"wave-speed"`` from ``wave_speed`` (the backward wave speed, m/s,
    positive); ``"density-at-capacity"`` from ``density_at_capacity`` (veh/m
    per lane). Capacity, free-flow speed and jam density are kept, so the
    other quantity follows: ``w = C / (k_j - k_c)``.
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
    congested_branch: CongestedBranch = "derived"
    wave_speed: float | None = None  # m/s, with congested_branch "wave-speed"
    density_at_capacity: float | None = None  # veh/m/ln, with "density-at-capacity"


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
    ``max_demand_capacity`` as a ratio. ``queue_must_not_pass`` names a
    landmark of the approach (:class:`Landmark`) the back of the queue must not
    pass.
    """

    max_queue_length: float | None = None
    max_average_delay: float | None = None
    max_demand_capacity: float | None = None
    queue_must_not_pass: str | None = None


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
    """How the risk of breaking the limits is assessed (:mod:`wzq.engine.risk`).

    ``capacity_cv``: coefficient of variation of the work-zone capacity, each
    closure's capacity drawn around the model's value (``None``: as the model
    gives it); ``draws``: Monte Carlo samples when it is drawn; ``seed`` makes
    the draws repeatable; ``confidence``: level of the intervals stated for the
    estimated probabilities; ``window_risk``: the closure-window search allows a
    closure when the share of scenarios in which it breaks a limit is at most
    this (a fraction, e.g. 0.10; ``None``: windows on the design demand alone).
    """

    capacity_cv: float | None = None
    draws: int = 1000
    seed: int = 1
    confidence: float = 0.95
    window_risk: float | None = None


@dataclass(frozen=True)
class Landmark:
    """A point on the approach upstream of the closure.

    ``distance`` is measured upstream from the start of the taper (m, above 0);
    ``kind`` one of :data:`LANDMARK_KINDS`. A ramp (``exit-ramp`` or
    ``entrance-ramp``) carries its traffic: ``ramp_veh_h`` one flow per hour
    of the demand period (veh/h), or ``ramp_share`` a fraction of the mainline
    flow arriving at the ramp (for an exit ramp the share of the traffic that
    leaves there, below 1). Ramp flows are stated, like the demand, on the
    clock of the closure: the traffic that would reach the closure (or, for an
    exit ramp, the ramp) in each hour in free flow.
    """

    name: str
    distance: float
    kind: LandmarkKind = "other"
    ramp_veh_h: tuple[float, ...] | None = None
    ramp_share: float | None = None

    def __post_init__(self) -> None:
        if self.ramp_veh_h is not None:
            object.__setattr__(self, "ramp_veh_h", tuple(float(v) for v in self.ramp_veh_h))

    @property
    def is_ramp(self) -> bool:
        return self.kind in RAMP_KINDS


@dataclass(frozen=True)
class Approach:
    """The road upstream of the closure: its landmarks (ramps among them).

    Every section between ramps has the site's lanes and fundamental diagram.
    The plan's demand is the mainline flow upstream of every ramp; the flow
    arriving at the closure is that flow plus the entrance ramps minus the exit
    ramps (:func:`ramp_flows`).
    """

    landmarks: tuple[Landmark, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "landmarks", tuple(self.landmarks))

    @property
    def ramps(self) -> tuple[Landmark, ...]:
        """The ramps, nearest the closure first (at one distance, an entrance
        ramp is taken as downstream of an exit ramp, as at a diamond interchange)."""
        ramps = [lm for lm in self.landmarks if lm.is_ramp]
        return tuple(sorted(ramps, key=lambda r: (r.distance, r.kind != "entrance-ramp")))

    def landmark(self, name: str) -> Landmark | None:
        for lm in self.landmarks:
            if lm.name == name:
                return lm
        return None


@dataclass(frozen=True)
class RampFlows:
    """Ramp and section flows per demand interval (veh/h, on the closure's clock).

    ``ramps`` nearest the closure first; ``rates[j]`` the flow of ramp ``j``
    (entering or leaving); ``sections[i]`` the flow on the mainline between
    ramp ``i`` and ramp ``i + 1`` (``sections[0]`` arrives at the closure,
    ``sections[-1]`` is the plan's mainline demand upstream of every ramp).
    """

    ramps: tuple[Landmark, ...]
    rates: np.ndarray
    sections: np.ndarray


def ramp_flows(demand: Demand, approach: Approach) -> RampFlows:
    """Every ramp's flow and the mainline flow in every section, per demand interval.

    From the mainline demand downstream: an entrance ramp adds its flow, an
    exit ramp takes its flow (a share is of the flow arriving at the ramp).
    Hourly ramp flows hold for every demand interval of their hour.
    """
    ramps = approach.ramps
    flows = np.asarray(demand.flows_veh_h, dtype=float)
    n = len(flows)
    per_hour = max(3600 // max(int(demand.interval_s), 1), 1)
    hour = np.arange(n) // per_hour
    rates = np.zeros((len(ramps), n))
    sections = np.zeros((len(ramps) + 1, n))
    current = flows.copy()
    sections[-1] = current
    for j in range(len(ramps) - 1, -1, -1):
        r = ramps[j]
        if r.ramp_share is not None:
            rate = r.ramp_share * current
        elif r.ramp_veh_h is not None and n and len(r.ramp_veh_h) > int(hour[-1]):
            rate = np.asarray(r.ramp_veh_h, dtype=float)[hour]
        else:
            rate = np.zeros(n)
        rates[j] = rate
        current = current + rate if r.kind == "entrance-ramp" else current - rate
        sections[j] = current
    return RampFlows(ramps, rates, sections)


@dataclass(frozen=True)
class Plan:
    """A complete closure plan for one direction of one site.

    ``input_warnings`` are what the reader of the plan's file noticed about the
    inputs (a table that was extended, a percentage that may be a fraction, a
    formula whose result is zero ...); :func:`wzq.engine.evaluate.analyse` puts them
    first in the result's warnings. ``locations`` maps a plan key in the JSON
    form (``site.heavy_vehicle_percent``, ``demand[12]``, ``closures[0].note``)
    to where the user typed it (``Site!B12``); :meth:`where` looks it up. Neither
    takes part in comparisons.

    ``history`` (optional): the count history the demand was designed from,
    which the risk assessment (:mod:`wzq.engine.risk`) runs scenario by scenario;
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
    approach: Approach = field(default_factory=Approach)

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
    out += _validate_congested_branch(plan)
    out += _validate_approach(plan)
    if plan.costs is not None:
        c = plan.costs
        for name in ("car_value_per_person_h", "car_occupancy", "truck_value_per_veh_h"):
            v = getattr(c, name)
            if not np.isfinite(v) or v < 0:
                out.append(Problem(f"costs.{name}", "must be zero or a positive number"))
        if c.truck_share is not None and not 0 <= c.truck_share <= 1:
            out.append(Problem("costs.truck_share", "must be a fraction between 0 and 1"))
    return out


def _validate_congested_branch(plan: Plan) -> list[Problem]:
    s = plan.site
    out: list[Problem] = []
    if s.congested_branch not in CONGESTED_BRANCHES:
        _check_choice(s.congested_branch, CONGESTED_BRANCHES, "site.congested_branch", out)
        return out
    for name, branch, what in (
        ("wave_speed", "wave-speed", "a positive speed"),
        ("density_at_capacity", "density-at-capacity", "a positive density"),
    ):
        v = getattr(s, name)
        if s.congested_branch == branch:
            if v is None or not np.isfinite(v) or v <= 0:
                out.append(Problem(f"site.{name}", f"congested branch '{branch}' needs {what}"))
        elif v is not None:
            out.append(
                Problem(
                    f"site.{name}",
                    f"given, but the congested branch is '{s.congested_branch}'; set the "
                    f"congested branch to '{branch}' or leave this blank",
                )
            )
    if (
        s.density_at_capacity is not None
        and s.jam_density is not None
        and s.density_at_capacity >= s.jam_density
    ):
        out.append(Problem("site.density_at_capacity", "must be below the jam density; check both"))
    if s.congested_branch != "derived" and plan.options.diagram != "triangular":
        out.append(
            Problem(
                "site.congested_branch",
                f"the congested branch can be set only on the triangular diagram, not "
                f"'{plan.options.diagram}'; choose the triangular diagram or 'derived'",
            )
        )
    if s.congested_branch != "derived" and not out:
        # the branch must reach the site's capacity: checked with the capacity model
        try:
            site_model(s, "triangular")
        except PlanError as e:
            out += e.problems
        except ValueError:
            pass  # another site value is wrong; reported on its own
    return out


def _validate_approach(plan: Plan) -> list[Problem]:
    """Landmarks, ramp flows and the landmark limit."""
    out: list[Problem] = []
    d = plan.demand
    n_hours = len(d.flows_veh_h) * d.interval_s // 3600 if d.interval_s > 0 else 0
    seen: dict[str, str] = {}  # a name told apart regardless of case and spacing -> as typed
    bad_ramp = False
    for i, lm in enumerate(plan.approach.landmarks):
        where = f"approach.landmarks[{i}]"
        if not isinstance(lm.name, str) or not lm.name.strip():
            out.append(Problem(f"{where}.name", "give the landmark a name"))
        else:
            # told apart regardless of case and spacing, as the workbook's landmark table
            # and its 'Queue must not pass' are read
            key = " ".join(lm.name.split()).casefold()
            if key in seen and seen[key] == lm.name:
                out.append(
                    Problem(f"{where}.name", f"'{lm.name}' is used twice; names must differ")
                )
            elif key in seen:
                out.append(
                    Problem(
                        f"{where}.name",
                        f"'{lm.name}' differs from the landmark '{seen[key]}' only in case or "
                        "spacing; names must differ in their letters",
                    )
                )
            seen.setdefault(key, lm.name)
        if not np.isfinite(lm.distance) or lm.distance <= 0:
            out.append(
                Problem(f"{where}.distance", "must be a distance above 0 upstream of the taper")
            )
        if lm.kind not in LANDMARK_KINDS:
            _check_choice(lm.kind, LANDMARK_KINDS, f"{where}.kind", out)
            continue
        has_flows, has_share = lm.ramp_veh_h is not None, lm.ramp_share is not None
        if not lm.is_ramp:
            if has_flows or has_share:
                out.append(Problem(where, f"a {lm.kind} carries no traffic; remove its ramp flows"))
            continue
        if has_flows == has_share:
            out.append(
                Problem(
                    where,
                    f"give the {lm.kind.replace('-', ' ')}'s flows hour by hour or as a share "
                    "of the mainline flow (one of them)",
                )
            )
            bad_ramp = True
        elif has_share:
            top = 1.0 if lm.kind == "entrance-ramp" else 1.0 - 1e-12
            if (
                lm.ramp_share is None
                or not np.isfinite(lm.ramp_share)
                or not 0 <= lm.ramp_share <= top
            ):
                out.append(
                    Problem(
                        f"{where}.share",
                        "must be a fraction from 0 up to 1"
                        + (" (an exit ramp cannot take all the traffic)" if top < 1 else ""),
                    )
                )
                bad_ramp = True
        else:
            flows = np.asarray(lm.ramp_veh_h, dtype=float)
            if len(flows) != n_hours:
                out.append(
                    Problem(
                        f"{where}.veh_h",
                        f"{len(flows)} hourly flows given; the demand covers {n_hours} hours, "
                        "give one flow per hour",
                    )
                )
                bad_ramp = True
            elif not np.all(np.isfinite(flows)) or np.any(flows < 0):
                k = int(np.flatnonzero(~np.isfinite(flows) | (flows < 0))[0])
                out.append(Problem(f"{where}.veh_h[{k}]", "must be a flow of 0 veh/h or more"))
                bad_ramp = True
    if not bad_ramp and plan.approach.ramps and len(d.flows_veh_h) and not out:
        out += _validate_exit_flows(plan)
    name = plan.thresholds.queue_must_not_pass
    if name is not None and plan.approach.landmark(name) is None:
        known = ", ".join(f"'{lm.name}'" for lm in plan.approach.landmarks) or "none"
        out.append(
            Problem(
                "thresholds.queue_must_not_pass",
                f"no landmark is named '{name}' (landmarks: {known}); name one of them",
            )
        )
    return out


def _validate_exit_flows(plan: Plan) -> list[Problem]:
    """An exit ramp must leave traffic on the mainline whenever traffic arrives."""
    out: list[Problem] = []
    rf = ramp_flows(plan.demand, plan.approach)
    index = {id(lm): i for i, lm in enumerate(plan.approach.landmarks)}
    step = dt.timedelta(seconds=plan.demand.interval_s)
    for j, r in enumerate(rf.ramps):
        if r.kind != "exit-ramp":
            continue
        arriving = rf.sections[j + 1]
        bad = np.flatnonzero((arriving > 0) & (rf.rates[j] >= arriving))
        if len(bad):
            k = int(bad[0])
            at = plan.demand.start + k * step
            out.append(
                Problem(
                    f"approach.landmarks[{index[id(r)]}]",
                    f"exit ramp '{r.name}' takes {rf.rates[j][k]:,.0f} veh/h from "
                    f"{at:%Y-%m-%d %H:%M} but only {arriving[k]:,.0f} veh/h arrive there; an "
                    "exit ramp must leave some traffic on the mainline",
                )
            )
    return out


def is_night(t: dt.datetime) -> bool:
    """Night-time by the clock: 19:00 to 06:00 (common practice, no source)."""
    return t.hour >= NIGHT_START_HOUR or t.hour < NIGHT_END_HOUR
