"""The count-history and risk blocks of a JSON plan (read and written by :mod:`wzq.io.jsonplan`).

A plan may give its demand as a count history instead of a list of flows::

    "demand": {"start": "2027-05-03T00:00", "hours": 168,
               "history": {"file": "counts.vol", "direction": "east",
                           "day_types": "by-name", "window_weeks": 6,
                           "growth_percent_per_year": 1.5, "percentile": null}},
    "risk": {"capacity_cv": 0.08, "draws": 1000, "seed": 1, "confidence": 0.95,
             "window_risk_percent": 10}

The file is read by :mod:`wzq.io.counts` (relative to the plan file), the design
demand is built by :func:`wzq.engine.design_demand.design_demand` and the history is
kept in the plan for the risk assessment (:mod:`wzq.engine.risk`). The README's JSON
section documents every key.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Any

from wzq.engine.design_demand import DemandHistory, DemandRule, design_demand, rule_problems
from wzq.engine.plan import Demand, PlanError, Problem, RiskOptions
from wzq.io.counts import fewer_lanes, read_counts

__all__ = [
    "READING_KEYS",
    "RISK_KEYS",
    "RULE_KEYS",
    "history_demand",
    "history_to_dict",
    "risk_from_dict",
    "risk_to_dict",
]

#: Keys of ``demand.history`` that say how to read the file.
READING_KEYS = (
    "file",
    "sheet",
    "station",
    "direction",
    "lanes",
    "interval_minutes",
    "stamp",
    "edition",
    "exclude_days",
)
#: Keys of ``demand.history`` that make the design demand (:class:`DemandRule`).
RULE_KEYS = (
    "day_types",
    "holidays",
    "window_weeks",
    "same_months",
    "growth_percent_per_year",
    "percentile",
)
RISK_KEYS = ("capacity_cv", "draws", "seed", "confidence", "window_risk_percent")


def _dates(value: Any, where: str, problems: list[Problem]) -> tuple[dt.date, ...]:
    if value is None:
        return ()
    if not isinstance(value, list):
        problems.append(Problem(where, 'expected a list of dates like ["2026-12-25"]'))
        return ()
    out = []
    for i, v in enumerate(value):
        try:
            out.append(dt.date.fromisoformat(str(v)))
        except ValueError:
            problems.append(Problem(f"{where}[{i}]", f"{v!r} is not a date like 2026-12-25"))
    return tuple(out)


def _number(
    d: dict[str, Any], key: str, where: str, problems: list[Problem], default: Any = None
) -> Any:
    v = d.get(key)
    if v is None:
        return default
    if isinstance(v, bool) or not isinstance(v, int | float):
        problems.append(Problem(f"{where}.{key}", f"expected a number, got {v!r}"))
        return default
    return v


def _text(d: dict[str, Any], key: str, where: str, problems: list[Problem]) -> str | None:
    v = d.get(key)
    if v is None:
        return None
    if isinstance(v, int) and not isinstance(v, bool):
        return str(v)
    if not isinstance(v, str):
        problems.append(Problem(f"{where}.{key}", f"expected text, got {v!r}"))
        return None
    return v


#: Findings of the count reading shown one by one, at most.
_SHOWN = 3
#: Where a JSON plan gives the lanes counted.
_LANES = "demand.history.lanes"


def history_demand(
    d: dict[str, Any],
    start: dt.datetime,
    source: str,
    base: Path | None,
    site_lanes: int | None = None,
) -> tuple[Demand, DemandHistory, list[str]]:
    """The design demand and the history of a ``demand`` block that has ``history``, and
    what reading the counts found worth a look (days that look unusual, listed holidays
    aside), as warnings naming ``demand.history.file``; counts of fewer lanes than the
    road's ``site_lanes`` (:func:`wzq.io.counts.fewer_lanes`) at ``demand.history.lanes``.

    Raises:
        PlanError: every problem of the block, and of the count file, located.
    """
    where = f"{source}: demand.history"
    problems: list[Problem] = []
    h = d.get("history")
    if not isinstance(h, dict):
        raise PlanError([Problem(where, 'expected an object with at least "file"')])
    for k in h:
        if k not in READING_KEYS + RULE_KEYS:
            problems.append(
                Problem(
                    f"{where}.{k}", f"unknown key; allowed: {', '.join(READING_KEYS + RULE_KEYS)}"
                )
            )
    if "veh_h" in d:
        problems.append(Problem(f"{source}: demand", "give either veh_h or history, not both"))
    if "interval_minutes" in d:
        problems.append(
            Problem(
                f"{source}: demand.interval_minutes",
                "the interval comes from the count history; leave it out (or give "
                "history.interval_minutes when the file does not show it)",
            )
        )
    hours = d.get("hours")
    if isinstance(hours, float) and hours.is_integer():
        hours = int(hours)
    if isinstance(hours, bool) or not isinstance(hours, int) or not 1 <= hours <= 24 * 400:
        problems.append(
            Problem(
                f"{source}: demand.hours",
                f"give the number of hours the plan covers (1 to {24 * 400}), got {hours!r}",
            )
        )
    file = _text(h, "file", where, problems)
    if not file:
        problems.append(Problem(f"{where}.file", "name the count file (relative to this plan)"))
    lanes = _number(h, "lanes", where, problems)
    if lanes is not None and (int(lanes) != lanes or not 1 <= lanes <= 8):
        problems.append(Problem(f"{where}.lanes", "give the counted lanes, 1-8, or leave it out"))
    interval = _number(h, "interval_minutes", where, problems)
    stamp = _text(h, "stamp", where, problems) or "start"
    if stamp not in ("start", "end"):
        problems.append(Problem(f"{where}.stamp", "give 'start' or 'end' (of the interval)"))
    same = h.get("same_months", False)
    if not isinstance(same, bool):
        problems.append(Problem(f"{where}.same_months", "expected true or false"))
        same = False
    rule = DemandRule(
        day_types=_text(h, "day_types", where, problems) or "by-name",
        holidays=_dates(h.get("holidays"), f"{where}.holidays", problems),
        window_weeks=_number(h, "window_weeks", where, problems),
        same_months=same,
        growth_percent_per_year=_number(h, "growth_percent_per_year", where, problems, 0.0),
        percentile=_number(h, "percentile", where, problems),
    )
    problems += [Problem(f"{source}: demand.{p.where}", p.message) for p in rule_problems(rule)]
    exclude_days = _dates(h.get("exclude_days"), f"{where}.exclude_days", problems)
    sheet, station, direction, edition = (
        _text(h, k, where, problems) for k in ("sheet", "station", "direction", "edition")
    )
    if problems:
        raise PlanError(problems)
    assert file is not None and isinstance(hours, int)
    path = Path(file)
    if not path.is_absolute() and base is not None:
        path = base / path
    reading = {k: h[k] for k in READING_KEYS if k in h}
    read = read_counts(
        path,
        sheet=sheet,
        station=station,
        direction=direction,
        lanes=None if lanes is None else int(lanes),
        interval_minutes=interval,
        stamp=stamp,
        edition=edition,
        exclude_days=exclude_days,
    )
    counts = read.history
    n = round(hours * 3600 / counts.interval_s)
    designed = design_demand(counts, start, n, rule)
    history = DemandHistory(counts, rule, file, tuple(reading.items()))
    aside = {day.isoformat() for day in rule.holidays} | {
        day.isoformat() for day, _ in counts.excluded
    }
    found = [w for w in read.warnings if w[4:14] not in aside]  # "Thu 2026-01-01: ..."
    more = f" | and {len(found) - _SHOWN} more" if len(found) > _SHOWN else ""
    notes = [
        f"demand.history.file: the counts in {file} hold {len(found)} finding"
        f"{'s' if len(found) != 1 else ''} worth a look (`wzq counts` lists them all): "
        + " | ".join(found[:_SHOWN])
        + more
    ]
    notes = notes if found else []
    counted = None if lanes is None else int(lanes)
    fewer = (
        None if site_lanes is None else fewer_lanes(counted, read, site_lanes, _LANES, "site.lanes")
    )
    if fewer:
        notes.append(f"{_LANES if lanes is not None else 'demand.history.file'}: {fewer}")
    return designed.demand, history, notes


def history_to_dict(history: DemandHistory, start: dt.datetime, hours: float) -> dict[str, Any]:
    """The ``demand`` block of a plan whose demand comes from ``history``."""
    r = history.rule
    block: dict[str, Any] = dict(history.reading)
    block.update(
        {
            "day_types": r.day_types,
            "holidays": [d.isoformat() for d in r.holidays],
            "window_weeks": r.window_weeks,
            "same_months": r.same_months,
            "growth_percent_per_year": r.growth_percent_per_year,
            "percentile": r.percentile,
        }
    )
    return {"start": start.isoformat(timespec="minutes"), "hours": hours, "history": block}


def risk_from_dict(r: Any, source: str) -> RiskOptions:
    """The ``risk`` block: capacity coefficient of variation, draws, seed, confidence."""
    where = f"{source}: risk"
    problems: list[Problem] = []
    if not isinstance(r, dict):
        raise PlanError([Problem(where, "expected an object")])
    for k in r:
        if k not in RISK_KEYS:
            problems.append(
                Problem(f"{where}.{k}", f"unknown key; allowed: {', '.join(RISK_KEYS)}")
            )
    draws = _number(r, "draws", where, problems, 1000)
    seed = _number(r, "seed", where, problems, 1)
    if int(seed) != seed or seed < 0:
        problems.append(Problem(f"{where}.seed", "give a whole number, 0 or more"))
    window = _number(r, "window_risk_percent", where, problems)
    options = RiskOptions(
        capacity_cv=_number(r, "capacity_cv", where, problems),
        draws=int(draws) if int(draws) == draws else draws,
        seed=int(seed),
        confidence=_number(r, "confidence", where, problems, 0.95),
        window_risk=None if window is None else window / 100,
    )
    # the engine's own check of the values (imported here: scipy is slow to import, and a
    # plan without a risk block never needs it)
    from wzq.engine.risk import options_problems

    problems += [Problem(f"{source}: {p.where}", p.message) for p in options_problems(options)]
    if problems:
        raise PlanError(problems)
    return options


def risk_to_dict(options: RiskOptions) -> dict[str, Any]:
    return {
        "capacity_cv": options.capacity_cv,
        "draws": options.draws,
        "seed": options.seed,
        "confidence": options.confidence,
        **(
            {}
            if options.window_risk is None
            else {"window_risk_percent": round(100 * options.window_risk, 9)}
        ),
    }
