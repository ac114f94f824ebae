"""Plausibility checks: values an engineer would query before trusting a result.

None of these refuses a plan: each returns a warning that names where the value
was typed (:meth:`wzq.engine.plan.Plan.where`: the sheet and cell of a workbook, the key
of a JSON plan) and what to check. :func:`wzq.engine.evaluate.analyse` puts them in the
result's warnings, so they reach every output (terminal, Run log, Summary sheet,
report, bulk summary), and ``wzq check`` prints them.

Pure functions, no I/O.
"""

from __future__ import annotations

import datetime as dt
import re
from functools import partial

import numpy as np

from wzq import units as u
from wzq.engine.plan import Plan
from wzq.models.capacity import LATERAL_DISTANCE_RANGE_FT

__all__ = [
    "BUSY_VEH_H_LN",
    "COUNTS_INTERVAL_S",
    "DAY_END_HOUR",
    "DAY_START_HOUR",
    "FAR_UPSTREAM_MI",
    "FRACTION_PERCENTILE",
    "HCM2000_ONLY",
    "JAM_SPACING_MIN_M",
    "LARGE_RAMP_SHARE",
    "LONG_DELAY_LIMIT_S",
    "LONG_WORK_ZONE_MI",
    "MANY_HEAVY_SHARE",
    "MAX_LISTED",
    "METRIC_LIMIT_STEP_KMH",
    "NEAR_ZERO_SHARE",
    "NEIGHBOURS",
    "OLD_COUNT_YEARS",
    "PER_LANE_FROM_LANES",
    "SHORT_DELAY_LIMIT_S",
    "SORTED_DISTINCT",
    "SORTED_SPAN_H",
    "THOUSANDS_BELOW",
    "above_open_road",
    "counts_per_interval",
    "days_left_out_not_counted",
    "delay_limit_in_hours",
    "delay_limit_in_seconds",
    "demand_key",
    "dense_jam",
    "far_upstream",
    "flows_per_lane",
    "free_flow_below_limits",
    "many_heavy_vehicles",
    "near_zero_demand",
    "old_counts_not_grown",
    "override_above_open_road",
    "shares_as_flows",
    "site_ranges",
    "sorted_demand",
    "speed_limits_in_mph",
    "thousands_as_decimals",
    "unused_by_method",
    "value_of_time_per_minute",
    "warnings",
]

#: Clock hours counted as daytime for the near-zero demand check, 06:00 to 22:00
#: (common practice, no source).
DAY_START_HOUR, DAY_END_HOUR = 6, 22
#: A demand interval is "near zero" below this share of the busier of its
#: neighbours on each side (common practice, no source).
NEAR_ZERO_SHARE = 0.1
#: Neighbours count as busy from this flow per lane in normal operation
#: (common practice, no source).
BUSY_VEH_H_LN = 100.0
#: Neighbouring intervals looked at on each side.
NEIGHBOURS = 2
#: Work zones longer than this are queried as a possible unit mistake
#: (16 km; common practice, no source).
LONG_WORK_ZONE_MI = 10.0
#: A limit on the average delay below this (s/veh) is queried as hours typed for
#: minutes (common practice, no source).
SHORT_DELAY_LIMIT_S = 60.0
#: A landmark or a queue-length limit farther upstream of the taper than this is queried
#: as a unit slip (metres typed where km are asked; 16 km; common practice, no source).
FAR_UPSTREAM_MI = 10.0
#: A ramp's share of the mainline flow above this is queried (a flow in veh/h typed where
#: the share is asked?; common practice, no source).
LARGE_RAMP_SHARE = 0.5
#: A limit on the average delay above this (s/veh) is queried as seconds typed for
#: minutes: an hour's wait on average is no limit a lane closure is held to (common
#: practice, no source).
LONG_DELAY_LIMIT_S = 3600.0
#: Counts ending more than this many years before the plan, grown at 0 % a year, are
#: queried (common practice, no source).
OLD_COUNT_YEARS = 2.0
#: A design-demand percentile above 0 up to this is queried as a fraction typed for a
#: percentile (0.95 for the 95th; common practice, no source).
FRACTION_PERCENTILE = 1.0
#: Lane length per stopped vehicle (m) below which a jam density is queried: about a
#: car's length and a stopped gap (common practice, no source).
JAM_SPACING_MIN_M = 6.0
#: A heavy-vehicle share above this is queried (common practice, no source).
MANY_HEAVY_SHARE = 0.5
#: Hours of demand in a row that only rise or only fall before they are queried as a
#: sorted demand column: a day (common practice, no source).
SORTED_SPAN_H = 24.0
#: Different flows such a run must hold to be queried (common practice, no source).
SORTED_DISTINCT = 6
#: Flows below this (veh/h) with up to three decimals, by day, are queried as counts of
#: thousands typed with another locale's thousands separator (common practice, no source).
THOUSANDS_BELOW = 10.0
#: Posted speed limits in km/h are multiples of this almost everywhere, while limits in
#: mi/h step by 5 (45, 55, 65 mi/h); a metric limit that is an odd multiple of 5 is
#: queried as mi/h typed in a metric plan (common practice, no source; from memory).
METRIC_LIMIT_STEP_KMH = 10
#: Demand rows this long or shorter (s) whose busiest, over a whole day or more, carries
#: no more than the open road would in one row are queried as vehicles counted per row
#: typed as veh/h: 15 minutes or less, as a day whose busiest 15 minutes load the open
#: road to a quarter of its capacity is rare on a road that needs a closure plan, while
#: 30-minute rows at half of it are not (common practice, no source).
COUNTS_INTERVAL_S = 900
#: The fewest lanes for which a demand whose busiest, over a whole day or more, is no more
#: than one lane's capacity is queried as flows per lane: on 3 lanes that is a third of
#: the capacity, seldom a day's busiest on such a road; on 2, half, an ordinary light day
#: (common practice, no source).
PER_LANE_FROM_LANES = 3
#: Warnings of one kind listed one by one before the rest are counted.
MAX_LISTED = 5


def _when(t: dt.datetime) -> str:
    return t.strftime("%a %Y-%m-%d %H:%M")


def demand_key(i: int) -> str:
    """The JSON-form key of demand interval ``i`` (what :meth:`Plan.where` looks up)."""
    return f"demand.veh_h[{i}]"


def _listed(lines: list[str], what: str) -> list[str]:
    if len(lines) <= MAX_LISTED:
        return lines
    return [*lines[:MAX_LISTED], f"... and {len(lines) - MAX_LISTED} more {what}"]


def near_zero_demand(plan: Plan) -> list[str]:
    """Daytime intervals with (near) zero demand between busy ones.

    Interval ``i`` is queried when its clock hour is daytime
    (:data:`DAY_START_HOUR` to :data:`DAY_END_HOUR`), the busiest of the
    :data:`NEIGHBOURS` intervals on each side carries at least
    :data:`BUSY_VEH_H_LN` per lane, and its own flow is below
    :data:`NEAR_ZERO_SHARE` of the smaller of those two.
    """
    d = plan.demand
    q = d.flows_veh_h
    n = len(q)
    busy = BUSY_VEH_H_LN * plan.site.lanes
    lines: list[str] = []
    if n - 1 <= NEIGHBOURS:
        return lines
    # the busiest neighbour on each side of every interval, all at once, to pick out the
    # few intervals the rule below can query (it then decides each exactly as written)
    window = np.lib.stride_tricks.sliding_window_view
    left_max = window(q, NEIGHBOURS).max(axis=1)  # [j]: q[j : j + NEIGHBOURS]
    padded = np.concatenate((q, np.full(NEIGHBOURS, -np.inf)))
    right_max = window(padded, NEIGHBOURS).max(axis=1)
    i_all = np.arange(NEIGHBOURS, n - 1)
    side_all = np.minimum(left_max[i_all - NEIGHBOURS], right_max[i_all + 1])
    queried = (side_all >= busy) & (q[i_all] < NEAR_ZERO_SHARE * side_all)
    for i in i_all[queried].tolist():
        t = d.start + dt.timedelta(seconds=i * d.interval_s)
        if not DAY_START_HOUR <= t.hour < DAY_END_HOUR:
            continue
        left = float(q[max(i - NEIGHBOURS, 0) : i].max())
        right = float(q[i + 1 : i + 1 + NEIGHBOURS].max())
        side = min(left, right)
        if side >= busy and q[i] < NEAR_ZERO_SHARE * side:
            lines.append(
                f"{plan.where(demand_key(i))}: demand {q[i]:,.0f} veh/h at {_when(t)} is near "
                f"zero between {left:,.0f} and {right:,.0f} veh/h around it; check the count "
                "(a missing count typed as 0, or a formula pointing at an empty cell?)"
            )
    return _listed(lines, "daytime intervals with near-zero demand")


def shares_as_flows(plan: Plan) -> list[str]:
    """Hourly shares of the AADT (percent) typed as the demand: every whole day of the
    demand carries 100 vehicles, within half a vehicle (the tolerance of a share table)."""
    d = plan.demand
    per_day = round(24 * 3600 / d.interval_s)
    days = len(d.flows_veh_h) // per_day
    if not days or d.start.time() != dt.time():
        return []
    vehicles = d.flows_veh_h[: days * per_day].reshape(days, per_day).sum(axis=1)
    vehicles = vehicles * d.interval_s / 3600.0
    if not np.all(np.abs(vehicles - 100.0) <= 0.5):
        return []
    return [
        f"{plan.where(demand_key(0))}: every day of the demand carries 100 vehicles a day: "
        "are these the hourly shares of the AADT (%) typed as flows? The demand is in "
        "veh/h in this direction"
    ]


def above_open_road(plan: Plan, open_capacity_veh_h: float) -> list[str]:
    """Demand above the open road's own capacity (all lanes open, no work zone).

    Such a queue forms upstream of the work zone whatever the closure does; the
    model holds it at the closure, so part of the queue it shows is not the
    closure's. Often a two-way count or a count in the wrong unit.
    """
    d = plan.demand
    over = np.flatnonzero(d.flows_veh_h > open_capacity_veh_h * (1 + 1e-9))
    if not len(over):
        return []
    i = int(over[0])
    t = d.start + dt.timedelta(seconds=i * d.interval_s)
    more = f" ({len(over)} intervals in all)" if len(over) > 1 else ""
    return [
        f"{plan.where(demand_key(i))}: demand {d.flows_veh_h[i]:,.0f} veh/h at {_when(t)} "
        f"exceeds the open road's own capacity ({open_capacity_veh_h:,.0f} veh/h on "
        f"{plan.site.lanes} lanes){more}; part of that queue is not caused by the closure. "
        "Check the count is for this direction only"
    ]


def override_above_open_road(plan: Plan, open_capacity_veh_h: float) -> list[str]:
    """A closure's capacity override above the open road's own capacity per lane.

    The override is per open lane; a work zone carries less per lane than the open
    road, so a value above the open road's is most likely typed for all the open
    lanes together (the direction's capacity).
    """
    lanes = plan.site.lanes
    per_lane = open_capacity_veh_h / lanes
    out = []
    for i, c in enumerate(plan.closures):
        x = c.capacity_override_veh_h_ln
        if x is None or x <= per_lane * (1 + 1e-9):
            continue
        n_open = lanes - c.lanes_closed
        together = (
            f"; if {x:,.0f} veh/h is for the {n_open} open lanes together, type {x / n_open:,.0f}"
            if n_open > 1
            else ""
        )
        out.append(
            f"{plan.where(f'closures[{i}].capacity_override_veh_h_ln')}: the capacity override "
            f"{x:,.0f} veh/h/ln of closure {i + 1} ({_when(c.start)}) is above the open "
            f"road's own capacity ({per_lane:,.0f} veh/h/ln); the override is per open "
            f"lane{together}"
        )
    return out


def delay_limit_in_hours(plan: Plan) -> list[str]:
    """A limit on the average delay below :data:`SHORT_DELAY_LIMIT_S`: tighter than most
    work zones' own slowing, so more likely hours typed where minutes are asked."""
    limit = plan.thresholds.max_average_delay
    if limit is None or limit >= SHORT_DELAY_LIMIT_S:
        return []
    minutes = limit / u.MINUTE
    return [
        f"{plan.where('thresholds.max_average_delay_min')}: the limit on the average delay is "
        f"{minutes:g} min/veh ({limit:,.0f} s), tighter than the slowing through most work "
        f"zones; the limit is in minutes per vehicle: did you mean {minutes * 60:g} min "
        f"({minutes:g} h)?"
    ]


def delay_limit_in_seconds(plan: Plan) -> list[str]:
    """A limit on the average delay above :data:`LONG_DELAY_LIMIT_S`: one no hour of a lane
    closure breaks, so more likely seconds typed where minutes are asked."""
    limit = plan.thresholds.max_average_delay
    if limit is None or limit <= LONG_DELAY_LIMIT_S:
        return []
    minutes = limit / u.MINUTE
    return [
        f"{plan.where('thresholds.max_average_delay_min')}: the limit on the average delay is "
        f"{minutes:g} min/veh ({limit / u.HOUR:g} h), more than any lane closure is held to; "
        f"the limit is in minutes per vehicle: did you mean {minutes / 60:g} min "
        f"({minutes:g} s)?"
    ]


#: Site inputs only the HCM 2000 short-term method uses (JSON key, label).
HCM2000_ONLY = (
    ("site.work_intensity_pc_h_ln", "work intensity adjustment"),
    ("site.ramp_adjustment_pc_h_ln", "entrance-ramp adjustment"),
)


def _unit_slip(shown: float, system: str) -> str:
    """The unit slip a far distance suggests: metres for km, or (beyond 100 mi) feet."""
    if system == "metric":
        return " (metres typed where km are asked?)"
    return " (feet typed where miles are asked?)" if shown > 100 else ""


def far_upstream(plan: Plan) -> list[str]:
    """Landmarks and a queue-length limit farther upstream than :data:`FAR_UPSTREAM_MI`: a
    lane closure's queue is judged within a few miles of the taper, so such a distance is
    more likely metres typed where kilometres are asked, or a slip of the keys; a limit or
    a landmark the queue must not pass that far away is never broken."""
    system = plan.site.unit_system
    long_ = u.unit_label("long", system)
    far = FAR_UPSTREAM_MI * u.MILE
    typed = [
        (f"approach.landmarks[{i}].distance", f"the landmark '{lm.name}'", lm.distance)
        for i, lm in enumerate(plan.approach.landmarks)
    ]
    typed.append(
        (
            "thresholds.max_queue_length",
            "the longest allowed queue",
            plan.thresholds.max_queue_length,
        )
    )
    return _listed(
        [
            f"{plan.where(key)}: {what} is {u.m_to_long_length(x, system):,.1f} {long_} upstream "
            f"of the taper, farther than {u.m_to_long_length(far, system):,.1f} {long_}, "
            "where a lane closure's queue is seldom judged; check the value and its unit"
            + _unit_slip(u.m_to_long_length(x, system), system)
            for key, what, x in typed
            if x is not None and x > far
        ],
        "landmarks far upstream",
    )


#: Words of a landmark's name that say which way its traffic goes (common practice, no
#: source): an exit ramp's, and an entrance ramp's.
_NAMED_EXIT = re.compile(r"\b(off[- ]?(ramp|slip)|exit (ramp|slip))\b", re.IGNORECASE)
_NAMED_ENTRANCE = re.compile(
    r"\b(on[- ]?(ramp|slip)|(entrance|entry) (ramp|slip))\b", re.IGNORECASE
)


def ramp_kind_against_name(plan: Plan) -> list[str]:
    """A landmark whose name says it is an exit (an off-ramp) or an entrance (an on-ramp)
    but whose kind says otherwise: an exit typed as an entrance adds the traffic it should
    take away, and a ramp of another kind carries no traffic at all."""
    out = []
    for i, lm in enumerate(plan.approach.landmarks):
        exit_, entrance = _NAMED_EXIT.search(lm.name), _NAMED_ENTRANCE.search(lm.name)
        if bool(exit_) == bool(entrance):
            continue
        named = "exit-ramp" if exit_ else "entrance-ramp"
        if lm.kind == named:
            continue
        said = (exit_ or entrance).group(0)  # type: ignore[union-attr]
        if lm.kind == "entrance-ramp":
            does = "its flow is added to the mainline instead of taken from it"
        elif lm.kind == "exit-ramp":
            does = "its flow is taken from the mainline instead of added to it"
        else:
            does = "it carries no traffic"
        out.append(
            f"{plan.where(f'approach.landmarks[{i}].kind')}: '{lm.name}' is named an "
            f"{said.casefold()}, but its kind is {lm.kind.replace('-', ' ')}, so {does}; "
            "check its kind"
        )
    return out


def days_left_out_not_counted(plan: Plan) -> list[str]:
    """Days to leave out that are not days of the counts: they leave nothing out, so more
    likely a wrong year or a typo, and the day meant is still used."""
    h = plan.history
    if h is None:
        return []
    first, last = h.counts.first_day, h.counts.last_day
    outside = [d for d, _ in h.counts.excluded if not first <= d <= last]
    if not outside:
        return []
    listed = ", ".join(f"{d:%Y-%m-%d}" for d in outside[:MAX_LISTED])
    more = f" and {len(outside) - MAX_LISTED} more" if len(outside) > MAX_LISTED else ""
    return [
        f"{plan.where('demand.history.exclude_days')}: {listed}{more} to be left out, but the "
        f"counts run from {first:%Y-%m-%d} to {last:%Y-%m-%d}, so nothing is left out for "
        f"{'it' if len(outside) == 1 else 'them'}; check the year"
    ]


def large_ramp_share(plan: Plan) -> list[str]:
    """A ramp whose share of the mainline flow is above :data:`LARGE_RAMP_SHARE`: a ramp
    seldom carries half the mainline, so more likely a flow in veh/h (or the ramp's flow
    in both directions) typed where its share in % is asked."""
    return [
        f"{plan.locations.get(f'{key}.share', f'{key}.share_percent')}: '{lm.name}' "
        f"{'takes' if lm.kind == 'exit-ramp' else 'adds'} {lm.ramp_share * 100:g} % of the "
        "mainline flow arriving at it, more than a ramp usually carries; the share is in % of "
        "the mainline flow: a flow in veh/h? Give hourly flows in veh/h in the ramp flow table "
        "instead, or ignore this if the share is right"
        for i, lm in enumerate(plan.approach.landmarks)
        for key in [f"approach.landmarks[{i}]"]
        if lm.ramp_share is not None and lm.ramp_share > LARGE_RAMP_SHARE
    ]


def value_of_time_per_minute(plan: Plan) -> list[str]:
    """A value of time above 0 and below one unit of currency an hour: too little in any
    currency, so more likely a value per minute typed where one per hour is asked (common
    practice, no source)."""
    c = plan.costs
    if c is None:
        return []
    return [
        f"{plan.where(key)}: a value of time of {v:g} {c.currency} per {per}-hour is less than "
        f"one {c.currency} an hour; the values are per hour: a value per minute ({v:g} x 60 = "
        f"{v * 60:g} per hour)?"
        for key, per, v in (
            ("costs.car_value_per_person_h", "person", c.car_value_per_person_h),
            ("costs.truck_value_per_veh_h", "vehicle", c.truck_value_per_veh_h),
        )
        if 0 < v < 1
    ]


def ramps_at_one_point(plan: Plan) -> list[str]:
    """Two ramps of one kind at the same distance: their flows add up, so more likely a row
    copied to start a new ramp whose distance was left as it was (an exit ramp and an
    entrance ramp at one point are a diamond interchange, and not queried)."""
    out = []
    seen: dict[tuple[str, float], tuple[int, str]] = {}
    for i, lm in enumerate(plan.approach.landmarks):
        if not lm.is_ramp:
            continue
        key = (lm.kind, round(lm.distance))  # to the metre
        if key not in seen:
            seen[key] = (i, lm.name)
            continue
        system = plan.site.unit_system
        at = f"{u.m_to_long_length(lm.distance, system):,.2f} {u.unit_label('long', system)}"
        out.append(
            f"{plan.where(f'approach.landmarks[{i}].distance')}: '{lm.name}' and "
            f"'{seen[key][1]}' are both {lm.kind.replace('-', ' ')}s {at} upstream of the "
            "taper, and both their flows count; a row copied without changing its distance? "
            "Ignore this if both ramps are there"
        )
    return out


def percentile_as_fraction(plan: Plan) -> list[str]:
    """A design-demand percentile above 0 up to :data:`FRACTION_PERCENTILE`: percentile 0.95
    of the matching days is about the quietest of them in each hour, so more likely 0.95
    typed for the 95th percentile (the percentile is 0-100)."""
    p = None if plan.history is None else plan.history.rule.percentile
    if p is None or not 0 < p <= FRACTION_PERCENTILE:
        return []
    return [
        f"{plan.where('demand.history.percentile')}: the design demand is percentile {p:g} of "
        f"the matching days in each hour, about the lowest of them; the percentile is typed "
        f"from 0 to 100: did you mean {p * 100:g}? Ignore this if percentile {p:g} is right"
    ]


def old_counts_not_grown(plan: Plan) -> list[str]:
    """A count history ending more than :data:`OLD_COUNT_YEARS` before the plan, with no
    growth to the plan's dates: the design demand and the risk then rest on the counted
    years' traffic (a growth cell left blank is 0 % a year)."""
    h = plan.history
    if h is None or h.rule.growth_percent_per_year:
        return []
    first = plan.demand.start.date()
    years = (first - h.counts.last_day).days / 365.25
    if years <= OLD_COUNT_YEARS:
        return []
    return [
        f"{plan.where('demand.history.growth_percent_per_year')}: the counts end on "
        f"{h.counts.last_day:%Y-%m-%d}, {years:.1f} years before the plan's first day "
        f"({first:%Y-%m-%d}), and are not grown (0 % a year); type the traffic growth to the "
        "plan's dates, or ignore this if traffic has not changed since"
    ]


def unused_by_method(plan: Plan) -> list[str]:
    """Adjustments typed for the HCM 2000 short-term method while another is chosen: they
    change nothing, which the user is told rather than left to assume otherwise."""
    s = plan.site
    if s.capacity_method == "hcm2000":
        return []
    method = plan.where("site.capacity_method")
    return [
        f"{plan.where(key)}: the {label} ({value:g} pc/h/ln) is used by the HCM 2000 "
        f"short-term method only, and is not used with the capacity method chosen at "
        f"{method}; clear it, or choose that method"
        for key, label in HCM2000_ONLY
        for value in [getattr(s, key.split(".", 1)[1])]
        if value
    ]


def dense_jam(plan: Plan) -> list[str]:
    """A jam density leaving less than :data:`JAM_SPACING_MIN_M` of lane per stopped
    vehicle: shorter than a car and its gap, so every queue would come out too short (a
    density per mile typed in a metric plan?)."""
    k = plan.site.jam_density
    if k is None or 1.0 / k >= JAM_SPACING_MIN_M:
        return []
    system = plan.site.unit_system
    shown = f"{u.per_m_to_density(k, system):,.0f} {u.unit_label('density', system)}"
    return [
        f"{plan.where('site.jam_density')}: a jam density of {shown} leaves {1.0 / k:.1f} m "
        f"of lane per stopped vehicle, less than a car and its gap ({JAM_SPACING_MIN_M:g} m), "
        "so queues would come out too short; check the value and its unit"
    ]


def many_heavy_vehicles(plan: Plan) -> list[str]:
    """A heavy-vehicle share above :data:`MANY_HEAVY_SHARE`: rare outside haul roads, and
    each heavy vehicle takes the room of about two cars, so the capacity falls with it."""
    share = plan.site.heavy_vehicle_share
    if share <= MANY_HEAVY_SHARE:
        return []
    return [
        f"{plan.where('site.heavy_vehicle_percent')}: heavy vehicles are {share * 100:g} % of "
        "the traffic; shares above "
        f"{MANY_HEAVY_SHARE * 100:g} % are rare outside haul roads, and the capacity falls "
        "with them: check the value"
    ]


def free_flow_below_limits(plan: Plan) -> list[str]:
    """A free-flow speed typed below the speed limit: open-road traffic usually runs at or
    above the limit, and below the work-zone limit the work zone adds no delay (a speed
    in the other unit, or a work-zone speed typed in the wrong cell?)."""
    s = plan.site
    if s.free_flow_speed is None or s.free_flow_speed >= s.speed_limit * (1 - 1e-9):
        return []
    system = s.unit_system
    unit = u.unit_label("speed", system)

    def shown(v: float) -> str:
        return f"{u.mps_to_speed(v, system):,.0f} {unit}"

    below_wz = s.free_flow_speed < s.work_zone_speed_limit * (1 - 1e-9)
    return [
        f"{plan.where('site.free_flow_speed')}: the free-flow speed {shown(s.free_flow_speed)} "
        f"is below the speed limit ({shown(s.speed_limit)})"
        + (
            f" and the work-zone speed limit ({shown(s.work_zone_speed_limit)}), so the work "
            "zone adds no delay"
            if below_wz
            else ""
        )
        + "; open-road traffic usually runs at or above the limit: check the value and its unit"
    ]


def speed_limits_in_mph(plan: Plan) -> list[str]:
    """Speed limits of a metric plan that look like limits in mi/h: whole numbers of km/h
    ending in 5 (45, 55, 65, 75 km/h), where posted limits in km/h are multiples of
    :data:`METRIC_LIMIT_STEP_KMH`. The sign of a plan switched to metric with its US values
    left in: 65 mi/h read as 65 km/h gives the work zone too low a speed."""
    s = plan.site
    if s.unit_system != "metric":
        return []
    half = METRIC_LIMIT_STEP_KMH / 2
    odd = []
    for key, label in (
        ("speed_limit", "speed limit"),
        ("work_zone_speed_limit", "work-zone speed limit"),
    ):
        kmh = u.mps_to_speed(getattr(s, key), "metric")
        if abs(kmh - round(kmh)) < 1e-6 and round(kmh) % METRIC_LIMIT_STEP_KMH == half:
            odd.append((plan.where(f"site.{key}"), f"a {label} of {round(kmh)} km/h"))
    if not odd:
        return []
    where = odd[0][0]
    values = " and ".join(v for _, v in odd)
    also = f" (and {odd[1][0]})" if len(odd) > 1 else ""
    return [
        f"{where}{also}: {values}: posted limits in km/h are multiples of "
        f"{METRIC_LIMIT_STEP_KMH} almost everywhere, limits in mi/h step by 5. Were US values "
        f"kept when the unit system ({plan.where('units')}) was set to metric? Every value is "
        "read in the unit system chosen"
    ]


def site_ranges(plan: Plan) -> list[str]:
    """Site values outside the range of the published model that uses them."""
    s = plan.site
    system = s.unit_system
    out = []
    lo, hi = LATERAL_DISTANCE_RANGE_FT
    lateral_ft = s.lateral_clearance / u.FOOT
    if s.capacity_method == "hcm7" and lateral_ft > hi + 1e-9:
        shown = u.m_to_short_length(s.lateral_clearance, system)
        short = u.unit_label("short", system)
        hi_shown = u.m_to_short_length(hi * u.FOOT, system)
        out.append(
            f"{plan.where('site.lateral_clearance')}: lateral distance {shown:,.1f} {short} is "
            f"beyond the {lo:g}-{hi_shown:,.1f} {short} of the data behind the HCM work-zone "
            f"capacity equation (HCM 6th/7th ed., Ch. 10); it is used as {hi_shown:,.1f} {short}"
        )
    miles = s.work_zone_length / u.MILE
    if miles > LONG_WORK_ZONE_MI:
        shown = u.m_to_long_length(s.work_zone_length, system)
        long_ = u.unit_label("long", system)
        out.append(
            f"{plan.where('site.work_zone_length')}: a work zone {shown:,.1f} {long_} long is "
            "unusual for a lane closure; check the value and its unit"
        )
    return out


def _busiest_typed_row(plan: Plan) -> int | None:
    """The busiest row of a demand that covers a whole day or more (the day's busiest
    hours among its rows) and whose flows were each typed in a place of their own (a
    table row, a JSON list), not made from an AADT (all at its one cell) or a count
    history: only such flows can be counts or flows per lane typed for the direction's
    flow. ``None`` otherwise, or when no row carries traffic."""
    d = plan.demand
    q = d.flows_veh_h
    if plan.history is not None or len(q) * d.interval_s < 24 * 3600:
        return None
    if len(q) >= 2 and plan.where(demand_key(0)) == plan.where(demand_key(1)):
        return None
    i = int(np.argmax(q))
    return i if q[i] > 0 else None


def counts_per_interval(plan: Plan, open_capacity_veh_h: float) -> list[str]:
    """Vehicles counted in each 15 minutes typed where the flow in veh/h is asked.

    A counter's export gives vehicles per interval; typed as they are on 15-minute rows,
    each flow is read a quarter of what it is, and a closure that queues shows none.
    Queried when the flows were typed row by row (not from an AADT or a count history),
    the rows are :data:`COUNTS_INTERVAL_S` or shorter, cover a whole day or
    more (the day's busiest hours among them), and the busiest row carries no more than
    the open road's capacity (all lanes open) would in one row: a quarter of it for
    15-minute rows, as counts would, and as flows on such a road seldom do (common
    practice, no source). The busiest row is named.
    """
    d = plan.demand
    q = d.flows_veh_h
    n = round(3600 / d.interval_s)
    i = _busiest_typed_row(plan) if d.interval_s <= COUNTS_INTERVAL_S else None
    if i is None or q[i] > open_capacity_veh_h / n * (1 + 1e-9):
        return []
    t = d.start + dt.timedelta(seconds=i * d.interval_s)
    minutes = d.interval_s // 60
    days = len(q) * d.interval_s / 86400
    share = {4: "a quarter", 2: "a half"}.get(n, f"1/{n}")
    return [
        f"{plan.where(demand_key(i))}: the busiest {minutes}-minute row of the demand, "
        f"{q[i]:,.0f} veh/h at {_when(t)}, is at most {share} of the open road's capacity "
        f"({open_capacity_veh_h:,.0f} veh/h on {plan.site.lanes} lanes) over {days:g} days "
        f"of {minutes}-minute rows: are these the vehicles counted in each {minutes} "
        f"minutes? The demand is a flow in veh/h: type each count times {n} ({q[i]:,.0f} "
        f"is {q[i] * n:,.0f} veh/h)"
    ]


def flows_per_lane(plan: Plan, open_capacity_veh_h: float) -> list[str]:
    """Flows of one lane (a lane's detector, or each hour's flow shared among the lanes)
    typed where the direction's flow is asked: read as the flow of all the lanes, each is
    a lane-count of times too small, and a closure that queues shows none.

    Queried when the flows were typed row by row (not from an AADT or a count history),
    the road has :data:`PER_LANE_FROM_LANES` lanes or more, the demand
    covers a whole day or more (the day's busiest hours among them), and its busiest row
    carries no more than one lane of the open road (common practice, no source); not
    when :func:`counts_per_interval` already queries it. The busiest row is named.
    """
    d = plan.demand
    q = d.flows_veh_h
    lanes = plan.site.lanes
    i = _busiest_typed_row(plan) if lanes >= PER_LANE_FROM_LANES else None
    per_lane = open_capacity_veh_h / lanes
    if i is None or q[i] > per_lane * (1 + 1e-9) or counts_per_interval(plan, open_capacity_veh_h):
        return []
    t = d.start + dt.timedelta(seconds=i * d.interval_s)
    row = "hour" if d.interval_s == 3600 else f"{d.interval_s // 60}-minute row"
    days = len(q) * d.interval_s / 86400
    return [
        f"{plan.where(demand_key(i))}: the busiest {row} of the demand, {q[i]:,.0f} veh/h at "
        f"{_when(t)}, is no more than one lane of the open road carries ({per_lane:,.0f} "
        f"veh/h/ln; {open_capacity_veh_h:,.0f} veh/h on its {lanes} lanes) over {days:g} "
        f"days: are these flows per lane? The demand is the flow of the {lanes} lanes of this "
        f"direction together ({q[i]:,.0f} per lane is {q[i] * lanes:,.0f} veh/h)"
    ]


def thousands_as_decimals(plan: Plan) -> list[str]:
    """Daytime flows such as 1.5 veh/h among flows of hundreds: counts of thousands
    typed or pasted with the thousands separator of another locale ("1.500" for 1,500
    read as 1.5 by a spreadsheet set to a decimal point).

    Interval ``i`` is queried when its clock hour is daytime (:data:`DAY_START_HOUR` to
    :data:`DAY_END_HOUR`), its flow is above 0 and below :data:`THOUSANDS_BELOW` veh/h
    and not whole but whole once multiplied by 1,000, and the busiest interval of the
    demand carries at least :data:`BUSY_VEH_H_LN` per lane, or none carries
    :data:`THOUSANDS_BELOW` (every count of the demand in thousands; common practice,
    no source).
    The first is named, the others counted.
    """
    d = plan.demand
    q = d.flows_veh_h
    busy = BUSY_VEH_H_LN * plan.site.lanes
    if not len(q) or THOUSANDS_BELOW <= float(q.max()) < busy:
        return []
    scaled = q * 1000.0
    odd = (q > 0) & (q < THOUSANDS_BELOW) & (q != np.round(q))
    odd &= np.abs(scaled - np.round(scaled)) < 1e-6
    found = []
    for i in np.flatnonzero(odd).tolist():
        t = d.start + dt.timedelta(seconds=i * d.interval_s)
        if DAY_START_HOUR <= t.hour < DAY_END_HOUR:
            found.append((i, t))
    if not found:
        return []
    i, t = found[0]
    more = f" (and {len(found) - 1} more daytime flows like it)" if len(found) > 1 else ""
    return [
        f"{plan.where(demand_key(i))}: demand {q[i]:g} veh/h at {_when(t)}{more}, among "
        f"flows up to {float(q.max()):,.0f} veh/h: a count of {q[i] * 1000:,.0f} typed or "
        f"pasted with the thousands separator of another locale ('{q[i]:.3f}' read as "
        f"{q[i]:g})? Type the counts as plain whole numbers"
    ]


def _monotone_runs(q: np.ndarray, rising: bool) -> list[tuple[int, int]]:
    """(first, last) interval of each maximal run over which ``q`` never falls
    (``rising``) or never rises."""
    step = np.diff(q) if rising else -np.diff(q)
    breaks = np.flatnonzero(step < 0) + 1  # a run ends before each interval that turns back
    starts = np.concatenate(([0], breaks))
    ends = np.concatenate((breaks - 1, [len(q) - 1]))
    return list(zip(starts.tolist(), ends.tolist(), strict=True))


def _sorted_run(q: np.ndarray, interval_s: int) -> tuple[int, int, bool] | None:
    """(first, last, rising) of the first run of ``q`` over :data:`SORTED_SPAN_H` hours
    or more that only rises or only falls through :data:`SORTED_DISTINCT` or more
    different flows (``None``: none)."""
    span = round(SORTED_SPAN_H * 3600 / interval_s)
    for rising in (True, False):
        for first, last in _monotone_runs(q, rising):
            if last - first + 1 >= span and len(np.unique(q[first : last + 1])) >= SORTED_DISTINCT:
                return first, last, rising
    return None


def sorted_demand(plan: Plan) -> list[str]:
    """A day of demand, or of a ramp's hourly flows, that only rises or only falls: the
    column sorted on its own.

    Traffic follows a daily cycle, low at night and high by day, so no
    :data:`SORTED_SPAN_H` hours of real demand in a row only rise or only fall
    (common practice, no source); counts that do are what a spreadsheet gives when
    the demand column alone is sorted ("continue with the current selection"), its
    dates and times left in order. Queried when such a run holds at least
    :data:`SORTED_DISTINCT` different flows (a plan of a few constant steps is not
    queried).
    """
    d = plan.demand
    columns = [("demand", "demand", d.flows_veh_h, d.interval_s, demand_key)]
    for i, lm in enumerate(plan.approach.landmarks):
        if lm.ramp_veh_h is not None:
            key = partial("approach.landmarks[{}].veh_h[{}]".format, i)
            columns.append((f"'{lm.name}'", "ramp's", np.asarray(lm.ramp_veh_h), 3600, key))
    out = []
    for what, column, q, interval_s, key in columns:
        found = _sorted_run(q, interval_s)
        if found is None:
            continue
        first, last, rising = found
        t0 = d.start + dt.timedelta(seconds=first * interval_s)
        t1 = d.start + dt.timedelta(seconds=last * interval_s)
        out.append(
            f"{plan.where(key(first))}: the {what} only {'rises' if rising else 'falls'} "
            f"from {_when(t0)} to {_when(t1)} ({q[first]:,.0f} to {q[last]:,.0f} veh/h), "
            f"where traffic rises and falls over each day: was the {column} column sorted "
            "on its own, away from its dates and times? Check the counts against their hours"
        )
    return out


def warnings(plan: Plan, open_capacity_veh_h: float) -> list[str]:
    """Every plausibility warning for ``plan``; ``open_capacity_veh_h`` is the open
    road's pre-breakdown capacity with all lanes open (veh/h)."""
    return [
        *site_ranges(plan),
        *speed_limits_in_mph(plan),
        *far_upstream(plan),
        *ramp_kind_against_name(plan),
        *large_ramp_share(plan),
        *ramps_at_one_point(plan),
        *above_open_road(plan, open_capacity_veh_h),
        *counts_per_interval(plan, open_capacity_veh_h),
        *flows_per_lane(plan, open_capacity_veh_h),
        *override_above_open_road(plan, open_capacity_veh_h),
        *delay_limit_in_hours(plan),
        *delay_limit_in_seconds(plan),
        *value_of_time_per_minute(plan),
        *unused_by_method(plan),
        *free_flow_below_limits(plan),
        *many_heavy_vehicles(plan),
        *dense_jam(plan),
        *near_zero_demand(plan),
        *shares_as_flows(plan),
        *sorted_demand(plan),
        *thousands_as_decimals(plan),
        *percentile_as_fraction(plan),
        *old_counts_not_grown(plan),
        *days_left_out_not_counted(plan),
    ]
