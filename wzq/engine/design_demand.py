"""Design demand from a site's own count history, and the historical demand scenarios.

A permanent count station near the site gives hourly (or 15-minute) counts
over months or years. This module turns that history into

* the **design demand** of a plan: for each day of the plan, the historical
  days of the same *day type* within a chosen *window* of dates, grown to the
  work year, and per interval the mean or a chosen percentile of them
  (:func:`design_demand`);
* the **demand scenarios** for the risk assessment (:mod:`wzq.engine.risk`): every
  historical period whose days have, one for one, the day types of the plan's
  days, each a complete demand series on the plan's grid
  (:func:`historical_scenarios`).

The method is the practice of the trade for design hourly volumes from
continuous counts -- group comparable days (day of week, holidays apart), keep
a season around the work date, grow to the work year -- stated here as plain
rules rather than taken from one manual (common practice, no source):

* day types (``day_types``): ``"by-name"`` -- each weekday on its own (Monday
  ... Sunday); ``"mon-thu"`` -- Monday to Thursday together, then Friday,
  Saturday and Sunday. Dates listed in ``holidays`` form one more type,
  ``holiday``, whatever their weekday (list the holidays of the history's
  years and of the work year alike);
* the window: ``window_weeks`` -- a historical day counts when it lies within
  that many weeks of the same calendar date in its own year (or the year
  before or after, so late December meets early January; 29 February is taken
  as 28 February in other years); ``same_months`` -- its month is one of the
  months the plan touches. Both may be given; neither means the whole history;
* growth: ``(1 + g)^(days / 365.25)`` from each historical day to the plan day
  it stands for, ``g`` the annual growth rate (compound growth at a constant
  rate);
* the statistic: the mean, or the ``percentile`` of the grown values per
  interval, computed by :func:`numpy.percentile` with its default ``linear``
  method (definition 7 of Hyndman & Fan, 1996, *The American Statistician*
  50(4), 361-365; bibliographic details from memory).

Only complete days count: a day with any interval missing, or listed in the
history's ``excluded`` days (a lane out, a counter fault, the day the clocks
change), is never used.

Pure: no files, no printing. :mod:`wzq.io.counts` reads count files into a
:class:`CountHistory`.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np

from wzq.engine.plan import Demand, PlanError, Problem

__all__ = [
    "DAYS_PER_YEAR",
    "DAY_S",
    "DAY_TYPE_GROUPINGS",
    "HOLIDAY",
    "WEEKDAY_NAMES",
    "CountHistory",
    "DayMatch",
    "DemandHistory",
    "DemandRule",
    "DesignDemand",
    "HistoricalScenarios",
    "Period",
    "day_type_name",
    "day_types",
    "days_from_same_date",
    "design_demand",
    "growth_factor",
    "historical_scenarios",
    "plan_period",
    "rule_problems",
    "weekday",
]

DAY_TYPE_GROUPINGS: tuple[str, ...] = ("by-name", "mon-thu")
WEEKDAY_NAMES = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")
#: Day-type code of a listed holiday (weekdays are 0 = Monday ... 6 = Sunday).
HOLIDAY = 7
DAYS_PER_YEAR = 365.25
DAY_S = 86400


@dataclass(frozen=True, eq=False)
class CountHistory:
    """Counts of one direction at one station, as flows on a grid of whole days.

    ``flows_veh_h[d, i]`` is the flow (veh/h) of interval ``i`` (of
    ``interval_s`` seconds, from midnight) on day ``first_day + d``; ``NaN``
    where there is no count. ``excluded`` lists days that must not be used,
    each with the reason (a lane out, a counter fault, a daylight-saving
    change). ``source`` names where the counts came from, for messages.
    """

    first_day: dt.date
    interval_s: int
    flows_veh_h: np.ndarray
    excluded: tuple[tuple[dt.date, str], ...] = ()
    source: str = ""

    def __post_init__(self) -> None:
        flows = np.asarray(self.flows_veh_h, dtype=float)
        if self.interval_s <= 0 or DAY_S % self.interval_s:
            raise ValueError("the count interval must divide a day (e.g. 60 or 15 minutes)")
        if flows.ndim != 2 or flows.shape[1] != DAY_S // self.interval_s:
            raise ValueError("flows must be one row of whole-day intervals per day")
        object.__setattr__(self, "flows_veh_h", flows)
        object.__setattr__(self, "excluded", tuple(self.excluded))

    @property
    def n_days(self) -> int:
        return int(self.flows_veh_h.shape[0])

    @property
    def per_day(self) -> int:
        return DAY_S // self.interval_s

    @property
    def days(self) -> np.ndarray:
        """The dates of the rows (``datetime64[D]``)."""
        return np.datetime64(self.first_day, "D") + np.arange(self.n_days)

    @property
    def last_day(self) -> dt.date:
        return self.first_day + dt.timedelta(days=self.n_days - 1)

    def complete(self) -> np.ndarray:
        """Days with every interval counted."""
        return ~np.isnan(self.flows_veh_h).any(axis=1)

    def usable(self) -> np.ndarray:
        """Complete days that are not excluded."""
        ok = self.complete()
        for day, _ in self.excluded:
            d = (day - self.first_day).days
            if 0 <= d < self.n_days:
                ok[d] = False
        return ok


@dataclass(frozen=True)
class DemandRule:
    """How historical days stand in for the days of a plan.

    ``day_types`` ``"by-name"`` or ``"mon-thu"``; ``holidays`` dates of their
    own type; ``window_weeks`` (weeks either side of the same date) and
    ``same_months`` restrict the dates (module notes);
    ``growth_percent_per_year`` grows counts to the work year;
    ``percentile`` ``None`` gives the mean per interval, a number 0-100 that
    percentile.
    """

    day_types: str = "by-name"
    holidays: tuple[dt.date, ...] = ()
    window_weeks: float | None = None
    same_months: bool = False
    growth_percent_per_year: float = 0.0
    percentile: float | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "holidays", tuple(sorted(set(self.holidays))))

    def describe(self) -> str:
        """The rule in plain words, for reports and summaries."""
        kinds = "each weekday on its own" if self.day_types == "by-name" else "Monday-Thursday"
        if self.day_types == "mon-thu":
            kinds += " together, Friday, Saturday, Sunday"
        parts = [f"days of the same type ({kinds}"]
        if self.holidays:
            n = len(self.holidays)
            parts[0] += f", {n} listed holiday{'' if n == 1 else 's'} apart"
        parts[0] += ")"
        if self.window_weeks is not None:
            parts.append(f"within {_weeks(self.window_weeks)} of the same date")
        if self.same_months:
            parts.append("in the same months")
        parts.append(f"grown {self.growth_percent_per_year:g} %/year to the work dates")
        stat = "mean" if self.percentile is None else f"{self.percentile:g}th percentile"
        parts.append(f"{stat} per interval")
        return ", ".join(parts)


def rule_problems(rule: DemandRule, where: str = "history") -> list[Problem]:
    """Every problem in a rule, located under ``where``."""
    out: list[Problem] = []
    if rule.day_types not in DAY_TYPE_GROUPINGS:
        out.append(
            Problem(
                f"{where}.day_types",
                f"'{rule.day_types}' is not one of {', '.join(DAY_TYPE_GROUPINGS)}; pick one",
            )
        )
    if rule.window_weeks is not None and not (
        np.isfinite(rule.window_weeks) and 0 <= rule.window_weeks <= 26
    ):
        out.append(
            Problem(f"{where}.window_weeks", "give 0 to 26 weeks either side, or leave it blank")
        )
    g = rule.growth_percent_per_year
    if not (np.isfinite(g) and -20 <= g <= 20):
        out.append(
            Problem(f"{where}.growth_percent_per_year", "give an annual growth of -20 to 20 %")
        )
    p = rule.percentile
    if p is not None and not (np.isfinite(p) and 0 <= p <= 100):
        out.append(Problem(f"{where}.percentile", "give a percentile 0-100, or leave it blank"))
    return out


# ---------------------------------------------------------------------------------------------
# Day types, windows, growth (vectorised over dates as datetime64[D])
# ---------------------------------------------------------------------------------------------


def _days(dates: np.ndarray | Iterable[dt.date]) -> np.ndarray:
    return np.asarray(dates, dtype="datetime64[D]")


def weekday(dates: np.ndarray) -> np.ndarray:
    """0 = Monday ... 6 = Sunday (1970-01-01, day 0, was a Thursday)."""
    return (_days(dates).astype(np.int64) + 3) % 7


def day_types(dates: np.ndarray, grouping: str, holidays: Iterable[dt.date] = ()) -> np.ndarray:
    """Day-type code of each date: its weekday (``by-name``), Monday-Thursday folded into
    Monday's code 0 (``mon-thu``), and :data:`HOLIDAY` for a listed holiday."""
    d = _days(dates)
    code = weekday(d)
    if grouping == "mon-thu":
        code = np.where(code <= 3, 0, code)
    hol = _days(list(holidays))
    if len(hol):
        code = np.where(np.isin(d, hol), HOLIDAY, code)
    return code


def day_type_name(code: int, grouping: str) -> str:
    """``Tuesday``, ``Monday-Thursday``, ``holiday`` ..."""
    if code == HOLIDAY:
        return "holiday"
    if grouping == "mon-thu" and code == 0:
        return "Monday-Thursday"
    return WEEKDAY_NAMES[code]


def _anniversary(day: dt.date, year: int) -> np.datetime64:
    """The same calendar date in ``year`` (29 February as 28 February in other years)."""
    try:
        d = day.replace(year=year)
    except ValueError:
        d = day.replace(year=year, day=28)
    return np.datetime64(d, "D")


def days_from_same_date(dates: np.ndarray, target: dt.date) -> np.ndarray:
    """Days between each date and the nearest same calendar date as ``target``
    (in the date's own year or the year before or after)."""
    d = _days(dates)
    if not len(d):
        return np.zeros(0, dtype=np.int64)
    years = d.astype("datetime64[Y]").astype(np.int64) + 1970
    lo, hi = int(years.min()) - 1, int(years.max()) + 1
    table = np.array([_anniversary(target, y) for y in range(lo, hi + 1)], dtype="datetime64[D]")
    best = np.full(len(d), np.iinfo(np.int64).max)
    for shift in (-1, 0, 1):
        a = table[years + shift - lo]
        best = np.minimum(best, np.abs((d - a).astype(np.int64)))
    return best


def _months(dates: np.ndarray) -> np.ndarray:
    return _days(dates).astype("datetime64[M]").astype(np.int64) % 12 + 1


def growth_factor(from_days: np.ndarray, to_day: dt.date, percent_per_year: float) -> np.ndarray:
    """``(1 + g)^(elapsed days / 365.25)`` from each historical day to ``to_day``."""
    elapsed = (np.datetime64(to_day, "D") - _days(from_days)).astype(np.int64)
    return (1.0 + percent_per_year / 100.0) ** (elapsed / DAYS_PER_YEAR)


# ---------------------------------------------------------------------------------------------
# The plan's period on the history's grid
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Period:
    """The plan's demand period on whole days: ``n`` intervals from ``offset``
    intervals after midnight of ``first_day``, spanning ``n_days`` days."""

    first_day: dt.date
    offset: int
    n: int
    n_days: int
    interval_s: int

    @property
    def days(self) -> np.ndarray:
        return np.datetime64(self.first_day, "D") + np.arange(self.n_days)

    @property
    def start(self) -> dt.datetime:
        return dt.datetime.combine(self.first_day, dt.time()) + dt.timedelta(
            seconds=self.offset * self.interval_s
        )


def plan_period(history: CountHistory, start: dt.datetime, n_intervals: int) -> Period:
    """Where a plan's ``n_intervals`` from ``start`` fall on the history's day grid.

    Raises:
        PlanError: the start is not on the history's grid.
    """
    step = history.interval_s
    since = (start - dt.datetime.combine(start.date(), dt.time())).total_seconds()
    if since % step or start.second or start.microsecond:
        raise PlanError(
            f"the demand starts at {start:%H:%M}, between two {step // 60}-minute count "
            "intervals of the history; start on a count interval",
            where="demand.start",
        )
    offset = int(since // step)
    n_days = -(-(offset + n_intervals) // history.per_day)
    return Period(start.date(), offset, int(n_intervals), int(n_days), step)


def _weeks(n: float) -> str:
    """``1 week``, ``2 weeks``, ``1.5 weeks``."""
    return f"{n:g} week{'' if n == 1 else 's'}"


def _match_problem(what: str, rule: DemandRule, history: CountHistory) -> Problem:
    window = []
    if rule.window_weeks is not None:
        window.append(f"within {_weeks(rule.window_weeks)} of the same date")
    if rule.same_months:
        window.append("in the same months")
    limits = (" " + " and ".join(window)) if window else ""
    return Problem(
        "history",
        f"no {what} of the count history ({history.first_day} to {history.last_day}) matches"
        f"{limits}; widen the window, group Monday-Thursday together, or give more counts",
    )


def _date_ok(history: CountHistory, target: dt.date, rule: DemandRule, months: np.ndarray):
    """Days of the history inside the rule's window around ``target``."""
    days = history.days
    ok = np.ones(len(days), dtype=bool)
    if rule.window_weeks is not None:
        ok &= days_from_same_date(days, target) <= 7 * rule.window_weeks + 1e-9
    if rule.same_months:
        ok &= np.isin(_months(days), months)
    return ok


# ---------------------------------------------------------------------------------------------
# Design demand
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class DayMatch:
    """The historical days that stand for one day of the plan."""

    day: dt.date
    day_type: str
    matched: tuple[dt.date, ...]


@dataclass(frozen=True)
class DesignDemand:
    """The design demand of a plan and, per plan day, the days it came from."""

    demand: Demand
    days: tuple[DayMatch, ...]
    rule: DemandRule = field(default_factory=DemandRule)


def _statistic(values: np.ndarray, percentile: float | None) -> np.ndarray:
    if percentile is None:
        return values.mean(axis=0)
    return np.percentile(values, percentile, axis=0, method="linear")


def design_demand(
    history: CountHistory, start: dt.datetime, n_intervals: int, rule: DemandRule
) -> DesignDemand:
    """The plan's demand, interval by interval, from the history (module notes).

    Raises:
        PlanError: a bad rule, a start off the count grid, or a plan day that
            no historical day matches.
    """
    problems = rule_problems(rule)
    if problems:
        raise PlanError(problems)
    period = plan_period(history, start, n_intervals)
    plan_days = period.days
    months = np.unique(_months(plan_days))
    hist_types = day_types(history.days, rule.day_types, rule.holidays)
    plan_types = day_types(plan_days, rule.day_types, rule.holidays)
    usable = history.usable()
    profiles = np.empty((period.n_days, history.per_day))
    matches: list[DayMatch] = []
    for k, day64 in enumerate(plan_days):
        day = day64.astype(dt.date)
        pick = usable & (hist_types == plan_types[k]) & _date_ok(history, day, rule, months)
        name = day_type_name(int(plan_types[k]), rule.day_types)
        if not pick.any():
            problems.append(_match_problem(f"{name} for {day:%a %Y-%m-%d}", rule, history))
            continue
        grown = (
            history.flows_veh_h[pick]
            * growth_factor(history.days[pick], day, rule.growth_percent_per_year)[:, None]
        )
        profiles[k] = _statistic(grown, rule.percentile)
        matched = tuple(d.astype(dt.date) for d in history.days[pick])
        matches.append(DayMatch(day, name, matched))
    if problems:
        raise PlanError(problems)
    flows = profiles.ravel()[period.offset : period.offset + period.n]
    return DesignDemand(Demand(start, history.interval_s, flows), tuple(matches), rule)


# ---------------------------------------------------------------------------------------------
# Historical scenarios
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class HistoricalScenarios:
    """Complete demand series on the plan's grid, one per matching historical period.

    ``flows_veh_h[j]`` is the demand of the period starting at ``starts[j]``
    (grown to the plan's dates by ``growth[j]``).
    """

    starts: tuple[dt.datetime, ...]
    flows_veh_h: np.ndarray
    growth: np.ndarray

    @property
    def labels(self) -> tuple[str, ...]:
        return tuple(f"{s:%a %Y-%m-%d %H:%M}" for s in self.starts)


def historical_scenarios(
    history: CountHistory, start: dt.datetime, n_intervals: int, rule: DemandRule
) -> HistoricalScenarios:
    """Every historical period whose days match the plan's, one for one, by day type.

    A period qualifies when each of its days has the day type of the plan day
    it stands for, its first day lies in the rule's window around the plan's
    first day (``same_months``: every day of it in the plan's months), none of
    its days is excluded and every interval the plan needs was counted.

    Raises:
        PlanError: a bad rule, a start off the count grid, or no period matches.
    """
    problems = rule_problems(rule)
    if problems:
        raise PlanError(problems)
    period = plan_period(history, start, n_intervals)
    n_days, per_day = history.n_days, history.per_day
    span = period.n_days
    n_starts = n_days - span + 1
    if n_starts < 1:
        raise PlanError([_match_problem("period as long as the plan's", rule, history)])
    hist_types = day_types(history.days, rule.day_types, rule.holidays)
    plan_types = day_types(period.days, rule.day_types, rule.holidays)
    months = np.unique(_months(period.days))
    bad_day = np.zeros(n_days, dtype=bool)
    for day, _ in history.excluded:
        d = (day - history.first_day).days
        if 0 <= d < n_days:
            bad_day[d] = True
    hist_months_ok = np.isin(_months(history.days), months)
    ok = _date_ok(history, period.first_day, rule, months)[:n_starts]
    for k in range(span):
        rows = slice(k, k + n_starts)
        ok &= hist_types[rows] == plan_types[k]
        ok &= ~bad_day[rows]
        if rule.same_months:
            ok &= hist_months_ok[rows]
    first = np.flatnonzero(ok)
    flat = history.flows_veh_h.ravel()
    at = first * per_day + period.offset
    idx = at[:, None] + np.arange(period.n)[None, :]
    flows = flat[idx] if len(first) else np.empty((0, period.n))
    complete = ~np.isnan(flows).any(axis=1)
    first, flows = first[complete], flows[complete]
    if not len(first):
        raise PlanError([_match_problem("period of matching days", rule, history)])
    starts_days = history.days[first]
    growth = growth_factor(starts_days, period.first_day, rule.growth_percent_per_year)
    starts = tuple(
        dt.datetime.combine(d.astype(dt.date), dt.time())
        + dt.timedelta(seconds=period.offset * history.interval_s)
        for d in starts_days
    )
    return HistoricalScenarios(starts, flows * growth[:, None], growth)


@dataclass(frozen=True)
class DemandHistory:
    """A count history and the rule that turns it into a plan's demand and scenarios.

    ``file`` is the count file as the plan names it and ``reading`` the options
    it was read with (for messages, and to write the plan back).
    """

    counts: CountHistory
    rule: DemandRule = field(default_factory=DemandRule)
    file: str = ""
    reading: tuple[tuple[str, object], ...] = ()
