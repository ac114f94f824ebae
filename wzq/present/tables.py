"""Display tables: the per-hour table in the plan's own units, rounded as shown.

The workbook writer, the printed report, the command line and the bulk
summary all show these same numbers, so the rounding lives here once; and the
queues one at a time (busy periods), which the workbook's and the report's
cumulative charts draw one panel each.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from wzq import units as u
from wzq.engine import costs as road_user_costs
from wzq.engine.approach import LandmarkResult
from wzq.engine.hourly import length_unknown
from wzq.engine.plan import Landmark, Plan
from wzq.engine.results import Result

if TYPE_CHECKING:
    import pandas as pd

    from wzq.engine.windows import WindowsResult

__all__ = [
    "BEYOND_CHARTED",
    "LANDMARK_KIND_LABELS",
    "LENGTH_UNKNOWN",
    "MAX_PANELS",
    "Column",
    "Episode",
    "above_limit",
    "charted_landmarks",
    "episode_title",
    "episode_window",
    "exit_ramp_display",
    "farthest_passed",
    "hour_label",
    "hourly_columns",
    "hourly_display",
    "landmark_display",
    "landmark_hour_flags",
    "length_cells",
    "limit_decimals",
    "limit_text",
    "limit_values",
    "limits_text",
    "over_limit_cells",
    "part_hours_text",
    "passed_text",
    "queue_episodes",
    "ramp_flow_text",
    "rounded",
    "rounded_all",
    "shown_episodes",
    "summary_lines",
    "unknown_length_text",
    "window_counts",
    "windows_listed_text",
]

#: Most queues (busy periods) drawn one chart each (the largest are kept).
MAX_PANELS = 6


@dataclass(frozen=True)
class Column:
    """One displayed column: header, source column, scale, decimals."""

    header: str
    source: str
    decimals: int
    scale: float = 1.0


def hourly_columns(system: u.UnitSystem) -> list[Column]:
    """The permit table's columns, in the unit system of the plan."""
    long_name, long_m = u.LONG_LENGTH[system]
    return [
        Column("Lanes open", "lanes_open", 0),
        Column("Demand (veh/h)", "demand_veh_h", 0),
        Column("Capacity (veh/h)", "capacity_veh_h", 0),
        Column("Queue discharge rate (veh/h)", "discharge_veh_h", 0),
        Column("Demand / capacity", "demand_capacity", 2),
        Column("Queue at end of hour (veh)", "queue_end_veh", 0),
        Column("Longest queue (veh)", "queue_max_veh", 0),
        Column(f"Longest queue ({long_name})", "queue_length_max_m", 2, 1.0 / long_m),
        Column("Delay (veh-h)", "delay_veh_h", 1),
        Column("Average delay (min/veh)", "average_delay_min", 1),
        Column("Longest wait in queue (min)", "max_queue_wait_min", 1),
    ]


def hour_label(t: dt.datetime | pd.Timestamp) -> str:
    """``Mon 2027-05-03 21:00``."""
    if not isinstance(t, dt.datetime):  # a datetime64 or text: as pandas reads it
        import pandas as pd  # imported when met: slow to import

        t = pd.Timestamp(t)
    return t.strftime("%a %Y-%m-%d %H:%M")


def _missing(value: Any) -> bool:
    """``pandas.isna`` of one value: None, NaN, and pandas' own blanks (NaT, NA)."""
    if value is None:
        return True
    if isinstance(value, float | np.floating):
        return bool(value != value)
    if isinstance(value, int | np.integer):
        return False
    import pandas as pd  # imported when met: slow to import

    return bool(pd.isna(value))


def rounded(value: float, decimals: int) -> float | int:
    """Round half away from zero as a person would (not banker's rounding)."""
    if _missing(value):
        return value
    q = 10**decimals
    x = abs(float(value)) * q + 0.5 + 1e-9
    r = int(x) / q
    r = r if value >= 0 else -r
    return int(r) if decimals == 0 else r


def rounded_all(values: np.ndarray, decimals: int) -> list[float | int | None]:
    """:func:`rounded` of every value, in one numpy pass (the same arithmetic, step by
    step, so the same numbers to the last bit); NaN gives ``None`` (a blank cell)."""
    a = np.asarray(values, dtype=float)
    q = 10**decimals
    r = np.floor(np.abs(a) * q + 0.5 + 1e-9) / q  # x >= 0.5, so floor is int()
    r = np.where(a >= 0, r, -r)
    return [
        None if v != v else int(v) if decimals == 0 else v  # v != v: NaN
        for v in r.tolist()
    ]


#: The longest queue of an hour that holds traffic back (its length is unknown).
LENGTH_UNKNOWN = "unknown"


#: The limit check of each displayed column that has one (:func:`limit_values`).
LIMITED_COLUMNS = {
    "queue_length_max_m": "queue_ok",
    "average_delay_min": "delay_ok",
    "demand_capacity": "demand_capacity_ok",
}


def length_cells(result: Result, column: Column, shown: list) -> list:
    """``shown`` (one display value per hour of ``column``) with the longest queue of
    an hour holding traffic back, beyond the approach or at a section of it, as
    :data:`LENGTH_UNKNOWN`: the length computed leaves those vehicles out
    (:func:`wzq.engine.hourly.length_unknown`); and a value over its limit rounded up
    where rounding would show it at or below the limit (:func:`over_limit_cells`).
    Other values are as given."""
    shown = over_limit_cells(result, column, shown)
    if column.source != "queue_length_max_m":
        return shown
    unknown = length_unknown(np.asarray(result.hours["queue_held_veh"]))
    return [LENGTH_UNKNOWN if u else v for u, v in zip(unknown, shown, strict=True)]


def above_limit(value: float, decimals: int, limit: float | None) -> float:
    """``value`` rounded (:func:`rounded`), or rounded up where it is over ``limit`` (same
    units) and rounding would show it at or below the limit."""
    shown = rounded(value, decimals)
    if limit is None or not value > limit or shown > limit:
        return shown
    return math.ceil(value * 10**decimals) / 10**decimals


def over_limit_cells(result: Result, column: Column, shown: list) -> list:
    """``shown`` with each number of an hour that fails ``column``'s limit rounded up
    (to the column's decimals) where ordinary rounding shows it at or below the limit
    as printed (:func:`limit_values`): 1.001 over a demand/capacity limit of 1.00
    shows 1.01, not 1.00 beside "over limit". Hours that pass are as given."""
    check = LIMITED_COLUMNS.get(column.source)
    if check is None or check not in result.hours:
        return shown
    limit = _limit_numbers(result.plan).get(check)
    ok = np.asarray(result.hours[check], dtype=bool)
    raw = np.asarray(result.hours[column.source], dtype=float) * column.scale
    out = list(shown)
    for i in np.flatnonzero(~ok):
        v = out[i]
        if isinstance(v, int | float) and limit is not None and v <= limit:
            up = above_limit(float(raw[i]), column.decimals, limit)
            out[i] = max(v, int(up) if column.decimals == 0 else up)
    return out


def hourly_display(result: Result) -> pd.DataFrame:
    """The per-hour table with display headers, plan units and display rounding."""
    import pandas as pd  # imported when used: slow to import

    system = result.plan.site.unit_system
    h = result.hourly
    out = pd.DataFrame({"Hour": [hour_label(t) for t in h["hour_start"]]})
    for col in hourly_columns(system):
        shown = [rounded(v * col.scale, col.decimals) for v in h[col.source]]
        out[col.header] = length_cells(result, col, shown)
    out["Status"] = h["status"].to_numpy()
    return out


def summary_lines(result: Result) -> list[tuple[str, str]]:
    """Headline figures as (label, text) pairs in the plan's units."""
    s = result.summary
    system = result.plan.site.unit_system
    long_name, long_m = u.LONG_LENGTH[system]
    when = lambda t: "-" if t is None else hour_label(t)  # noqa: E731
    limits = _limit_numbers(result.plan)
    length = above_limit(s.max_queue_length_m / long_m, 2, limits.get("queue_ok"))
    longest = f"{length:,.2f} {long_name}, at {when(s.max_queue_length_at)}"
    unknown = unknown_length_text(result)
    if unknown:  # the hours holding traffic back: their length leaves it out
        longest += f"; {unknown} (traffic held back, see the warnings)"
    lines = [
        ("Longest queue", longest),
        (
            "Most vehicles queued",
            f"{s.max_queue_veh:,.0f} veh, at {when(s.max_queue_veh_at)}",
        ),
        (
            "Total delay",
            f"{s.total_delay_veh_h:,.1f} veh-h "
            f"(queue {s.queue_delay_veh_h:,.1f}, work zone {s.work_zone_delay_veh_h:,.1f}"
            + (f", exit ramps {s.exit_ramp_delay_veh_h:,.1f})" if s.exit_ramp_delay_veh_h else ")"),
        ),
        (
            "Highest hourly average delay",
            f"{above_limit(s.max_average_delay_min, 1, limits.get('delay_ok')):,.1f} min/veh",
        ),
        ("Vehicles that met a queue", f"{s.vehicles_affected:,.0f}"),
        ("Last queue clears", when(s.last_queue_clears)),
        ("Hours over a limit", str(len(s.hours_failing))),
    ]
    if result.plan.approach.landmarks:
        lines.append(("Farthest landmark passed", passed_text(result)))
    if s.total_cost is not None:
        c = road_user_costs.plan_costs(result.plan)
        basis = f"{c.dollar_year} prices"
        if result.plan.costs is None:  # blank values of time: priced at the defaults, said so
            basis += f"; {road_user_costs.DEFAULTS_NOTE}"
        lines.insert(3, ("Road-user delay cost", f"{s.total_cost:,.0f} {c.currency} ({basis})"))
    return lines


def unknown_length_text(result: Result) -> str:
    """``unknown in 2 hours from Mon 2027-05-03 04:00``: the hours whose queue length is
    unknown (:func:`length_cells`), or ``""`` when there are none. Every output that
    shows the length by hour (table, headline, charts) says it with these words."""
    unknown = np.flatnonzero(length_unknown(np.asarray(result.hours["queue_held_veh"])))
    if not len(unknown):
        return ""
    first = result.hours["hour_start"][unknown[0]]
    n = len(unknown)
    return f"unknown in {n} hour{'s' if n != 1 else ''} from {hour_label(first)}"


def part_hours_text(result: Result) -> str:
    """``""``, or a note naming the hours a closure starts or ends within (the capacity
    changes inside the hour): their capacity and queue discharge rate are averages over
    the hour, which no lane count carries; their demand / capacity is against the
    closure's capacity (:func:`wzq.engine.hourly.hour_checks`)."""
    t = np.asarray(result.boundaries_s, dtype=float)[:-1]
    hour = (t // u.HOUR).astype(np.int64)
    cap = np.asarray(result.run.prebreakdown_veh_h, dtype=float)  # per interval, no pandas
    hi = np.full(hour.max() + 1 if len(hour) else 0, -np.inf)
    lo = np.full_like(hi, np.inf)
    np.maximum.at(hi, hour, cap)
    np.minimum.at(lo, hour, cap)
    part = np.flatnonzero(hi - lo > 0.5)
    if not len(part):
        return ""
    starts = result.hours["hour_start"]
    shown = ", ".join(hour_label(starts[i]) for i in part[:6])
    shown += f" and {len(part) - 6} more" if len(part) > 6 else ""
    return (
        f"A closure starts or ends within the hour from {shown}: the capacity and queue "
        "discharge rate shown there are averages over the hour (the Charts draw each part "
        "of the hour); its demand / capacity is the hour's demand against the closure's "
        "capacity, as in a closure hour."
    )


def window_counts(result: WindowsResult) -> list[tuple[str, int]]:
    """Each configuration (and day type, when there are several) of a window search
    with its number of allowable windows, for :func:`windows_listed_text`."""
    several = len({ws.day_type.name for ws in result.sets}) > 1
    return [
        (f"{ws.label} - {ws.day_type.name}" if several else ws.label, len(ws.longest()))
        for ws in result.sets
    ]


def windows_listed_text(counts: list[tuple[str, int]], top: int) -> str:
    """``""``, or what a table of the ``top`` longest windows of each configuration
    leaves out: ``counts`` is each configuration's label and its number of windows."""
    cut = [(label, n) for label, n in counts if n > top]
    if not cut:
        return ""
    each = "; ".join(f"{n} for {label}" for label, n in cut)
    return f"the {top} longest of {each} are listed; the hours of each day above show every window"


def farthest_passed(result: Result) -> LandmarkResult | None:
    """The farthest landmark upstream that the back of the queue went beyond, or ``None``."""
    passed = [r for r in result.landmark_results if r.max_beyond_m > 0]
    return max(passed, key=lambda r: r.landmark.distance, default=None)


def passed_text(result: Result) -> str:
    """``Exit 12 off-ramp (1.20 mi upstream), for 0.41 h`` or ``none of the 5 landmarks``."""
    r = farthest_passed(result)
    if r is None:
        n = len(result.plan.approach.landmarks)
        return f"none of the {n} landmarks" if n > 1 else "not the landmark"
    long_name, long_m = u.LONG_LENGTH[result.plan.site.unit_system]
    lm = r.landmark
    return (
        f"{lm.name} ({lm.distance / long_m:,.2f} {long_name} upstream), for "
        f"{above_limit(r.time_beyond_s / u.HOUR, 2, 0.0):,.2f} h"
    )


def limit_values(plan: Plan) -> dict[str, str]:
    """The one formatting of the agency limits: each limit that is set, by its check
    column (``queue_ok``, ``delay_ok``, ``demand_capacity_ok``), as shown in the plan's
    units: ``2.00 mi``, ``15.0 min/veh``, ``0.95``. Every output words it around these."""
    long_name, long_m = u.LONG_LENGTH[plan.site.unit_system]
    decimals = {"queue_ok": 2, "delay_ok": 1, "demand_capacity_ok": 2}
    suffix = {"queue_ok": f" {long_name}", "delay_ok": " min/veh", "demand_capacity_ok": ""}
    out = {k: f"{limit_text(v, decimals[k])}{suffix[k]}" for k, v in _limit_numbers(plan).items()}
    th = plan.thresholds
    lm = None if th.queue_must_not_pass is None else plan.approach.landmark(th.queue_must_not_pass)
    if lm is not None:
        out["landmark_ok"] = f"{lm.name} ({lm.distance / long_m:,.2f} {long_name} upstream)"
    return out


def _limit_numbers(plan: Plan) -> dict[str, float]:
    """Each limit that is set, by its check column, in the display units of the
    per-hour table (long length unit, min/veh, ratio)."""
    th = plan.thresholds
    _, long_m = u.LONG_LENGTH[plan.site.unit_system]
    out = {}
    if th.max_queue_length is not None:
        out["queue_ok"] = th.max_queue_length / long_m
    if th.max_average_delay is not None:
        out["delay_ok"] = th.max_average_delay / u.MINUTE
    if th.max_demand_capacity is not None:
        out["demand_capacity_ok"] = th.max_demand_capacity
    return out


def limit_decimals(value: float, decimals: int) -> int:
    """The decimals a limit needs: at least ``decimals`` and as many more (up to 6) as
    it holds, so a limit is never shown rounded (0.125 km, not 0.12 km)."""
    for d in range(decimals, 7):
        if abs(round(value, d) - value) <= 1e-9 * max(1.0, abs(value)):
            return d
    return 6


def limit_text(value: float, decimals: int) -> str:
    """A limit as text with :func:`limit_decimals` decimals."""
    return f"{value:,.{limit_decimals(value, decimals)}f}"


def limits_text(plan: Plan) -> str:
    """The agency limits in the plan's units, one line (``none set`` when there are none)."""
    shown = limit_values(plan)
    parts = []
    if "queue_ok" in shown:
        parts.append(f"longest queue {shown['queue_ok']}")
    if "delay_ok" in shown:
        parts.append(f"average delay {shown['delay_ok']}")
    if "demand_capacity_ok" in shown:
        parts.append(f"demand/capacity {shown['demand_capacity_ok']} in closure hours")
    if "landmark_ok" in shown:
        parts.append(f"queue not past {shown['landmark_ok']}")
    return ", ".join(parts) if parts else "none set"


# --- queues, one at a time (the cumulative charts draw one panel each) ----------------------


@dataclass(frozen=True)
class Episode:
    """One queue: from the instant it forms to the instant it clears (s)."""

    start: float
    end: float
    max_queue_veh: float
    max_at: float


def queue_episodes(result: Result) -> list[Episode]:
    """Every busy period of the run, in time order (:attr:`wzq.Result.queues`)."""
    return [Episode(*map(float, row)) for row in result.busy_periods]


def episode_window(result: Result, ep: Episode, context_h: float) -> tuple[float, float]:
    """The span (s) drawn around a queue: ``context_h`` hours either side, within the data."""
    total = result.duration_s
    return max(0.0, ep.start - context_h * 3600.0), min(total, ep.end + context_h * 3600.0)


def shown_episodes(result: Result, limit: int = MAX_PANELS) -> tuple[list[Episode], int]:
    """The queues drawn in the cumulative diagram and how many there are in all.

    At most ``limit`` are drawn: the largest, in time order.
    """
    eps = queue_episodes(result)
    if len(eps) <= limit:
        return eps, len(eps)
    keep = sorted(eps, key=lambda e: e.max_queue_veh, reverse=True)[:limit]
    return sorted(keep, key=lambda e: e.start), len(eps)


def episode_title(result: Result, ep: Episode) -> str:
    """``Queue Tue 2027-05-04 22:00 to Wed 00:26`` (the day repeated only when it changes)."""
    start = result.plan.demand.start
    t0 = start + dt.timedelta(seconds=round(ep.start))
    t1 = start + dt.timedelta(seconds=round(ep.end))
    end = f"{t1:%H:%M}" if t1.date() == t0.date() else f"{t1:%a %H:%M}"
    return f"Queue {hour_label(t0)} to {end}"


#: Plain words for the kinds of landmark (:data:`wzq.engine.plan.LANDMARK_KINDS`).
LANDMARK_KIND_LABELS = {
    "exit-ramp": "exit ramp",
    "entrance-ramp": "entrance ramp",
    "signal": "signal or intersection",
    "structure": "bridge or structure",
    "warning-signs-end": "end of advance warning signing",
    "other": "other",
}


def landmark_display(result: Result) -> pd.DataFrame:
    """Per landmark, nearest the closure first: how far the queue reached it, in plan units."""
    import pandas as pd  # imported when used: slow to import

    long_name, long_m = u.LONG_LENGTH[result.plan.site.unit_system]
    lm = result.landmarks
    return pd.DataFrame(
        {
            "Landmark": lm["name"],
            "Kind": [LANDMARK_KIND_LABELS.get(k, k) for k in lm["kind"]],
            f"Upstream ({long_name})": [rounded(v / long_m, 2) for v in lm["distance_m"]],
            "Queue first reaches it": [
                "never" if pd.isna(t) else hour_label(t) for t in lm["first_reached"]
            ],
            # a landmark passed is never shown passed by 0 (:func:`above_limit`)
            "Time beyond it (h)": [above_limit(v, 2, 0.0) for v in lm["time_beyond_h"]],
            f"Farthest beyond ({long_name})": [
                above_limit(v / long_m, 2, 0.0) for v in lm["max_beyond_m"]
            ],
            "Hours beyond": lm["hours_beyond"].to_numpy(),
        }
    )


def ramp_flow_text(lm: Landmark) -> str:
    """A ramp's flow as typed, in words: ``14 % of the mainline`` or ``hourly, 30 to 360
    veh/h``; ``-`` for a landmark that is not a ramp."""
    if lm.ramp_share is not None:
        return f"{rounded(lm.ramp_share * 100, 1):g} % of the mainline"
    if lm.ramp_veh_h:
        lo, hi = min(lm.ramp_veh_h), max(lm.ramp_veh_h)
        span = f"{lo:,.0f}" if round(lo) == round(hi) else f"{lo:,.0f} to {hi:,.0f}"
        return f"hourly, {span} veh/h"
    return "-"


#: The first landmark beyond the longest queue is charted when it lies within this many
#: times the longest queue (the margin shows without squeezing the queue).
BEYOND_CHARTED = 2.0


def charted_landmarks(result: Result) -> list[Landmark]:
    """The landmarks drawn on the queue-length charts, nearest the closure first: those
    the back of the queue reached, the first one beyond the farthest it reached when it
    lies within :data:`BEYOND_CHARTED` times that reach (so the margin shows), and the
    landmark the queue must not pass. Landmarks farther away would squeeze the queue
    into the foot of the chart; the landmark table lists them all."""
    landmarks = sorted(result.plan.approach.landmarks, key=lambda lm: lm.distance)
    reach = float(result.back_of_queue["distance_m"].max()) if landmarks else 0.0
    limit = result.plan.thresholds.queue_must_not_pass
    beyond = next((lm for lm in landmarks if lm.distance > reach), None)
    if beyond is not None and beyond.distance > BEYOND_CHARTED * reach:
        beyond = None
    return [lm for lm in landmarks if lm.distance <= reach or lm is beyond or lm.name == limit]


def landmark_hour_flags(result: Result) -> list[tuple[str, list[bool]]]:
    """Per landmark, nearest the closure first: its name and, per hour, whether the back
    of the queue was beyond it at some instant of the hour."""
    if not result.plan.approach.landmarks:
        return []  # (what the table of no landmarks gives)
    hours = result.landmark_hours
    return [(name, [bool(x) for x in hours[name]]) for name in hours.columns[1:]]


def exit_ramp_display(result: Result) -> pd.DataFrame:
    """Per exit ramp: the delay of the traffic leaving there while the queue holds it."""
    import pandas as pd  # imported when used: slow to import

    long_name, long_m = u.LONG_LENGTH[result.plan.site.unit_system]
    ex = result.exit_ramps
    return pd.DataFrame(
        {
            "Exit ramp": ex["name"],
            f"Upstream ({long_name})": [rounded(v / long_m, 2) for v in ex["distance_m"]],
            "Delay of exiting traffic (veh-h)": [rounded(v, 1) for v in ex["delay_veh_h"]],
            "Longest extra wait (min)": [
                "-" if pd.isna(v) else rounded(v, 1) for v in ex["max_wait_min"]
            ],
        }
    )
