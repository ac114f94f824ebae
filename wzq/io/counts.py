"""Reading a count station's history: the TMG hourly volume record, CSV and Excel sheets.

An adapter at the edge (file formats in, a :class:`wzq.engine.design_demand.CountHistory`
out); the design demand and the risk are computed by the pure modules
:mod:`wzq.engine.design_demand` and :mod:`wzq.engine.risk`.

Formats read
------------

**FHWA Traffic Monitoring Guide, hourly traffic volume record** (the "3 card"),
one record per station, direction, lane and day, 24 hourly volumes:

* TMG 2013, Chapter 7 (Traffic Monitoring Formats), Table 7-9 "Hourly Traffic
  Volume Record" (the hour fields in Table 7-10), fixed width, 143 columns --
  :data:`TMG_2013`. The same fixed-width record is still accepted by FHWA's
  TMAS under TMG 2022, Chapter 4 ("the historical fixed-width column
  formats"). TMG 2013 §7.1 allows the same fields separated by ``|`` instead
  of fixed columns; such lines are read field by field in the order of
  :data:`TMG_2013`.
* TMG 2001, Section 6, Chapter 3, Table 6-3-1 "Hourly Traffic Volume Record
  (#3 Record)", 141 columns, two-digit year -- :data:`TMG_2001`.

The column layouts were read from transcriptions of those tables (field,
columns, length, description) and agree with each other; the FHWA pages
themselves could not be read in full here. Coding read from the same
transcriptions: day of week 1 = Sunday ... 7 = Saturday; lane of travel 0 =
all lanes combined, 1 = outside (rightmost) lane, 2-9 other lanes; direction
1-8 = N, NE, E, SE, S, SW, W, NW, 9 = north-south and 0 = east-west combined;
hours with no data are left blank. The meaning of the restriction codes is
from memory (0 or blank: none; 1: construction or another activity affected
the flow; 2: a problem with the counting device); any code other than 0 keeps
that day out of the design demand, with the reason shown.

**CSV or an Excel sheet**, one direction, in one of these forms (a header row
is optional; dates as ``2026-05-04``, times as ``07:00``):

* long form: ``date-time, count`` or ``date, time, count``, one row per hour
  or 15 minutes, stamped at the start of the interval (``stamp="end"`` for
  data stamped at the end);
* wide form: ``date`` then 24 hourly counts (or 96 15-minute counts).

Counts are vehicles in the interval; flows are stored in veh/h.

Checks, every one with its line (or cell) and what to do: unreadable fields,
negative counts, counts above what the lanes could carry
(:data:`MAX_FLOW_VEH_H_LN` per lane), a day given twice with different counts,
a day-of-week code that contradicts the date. Not errors, but reported in the
summary and kept out of the design demand: days with missing intervals (gaps),
days with a lane missing from per-lane records (a lane out), days with a
restriction code, and the days the clocks change for daylight saving time
(a Sunday in March with only the 02:00 hour missing, or a Sunday in October
or November with the 01:00 or 02:00 hour given twice; US and European rules
both change on such a Sunday -- from memory). Days whose total is far below
the same weekday's median (or far above it: both directions, another
station), or with their traffic in other hours than on that weekday (another
day's or direction's counts), or with daytime hours of zero, are listed as
warnings for the engineer to judge (``exclude_days`` leaves them out).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import re
from collections import defaultdict
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from wzq.engine.design_demand import DAY_S, WEEKDAY_NAMES, CountHistory
from wzq.engine.plan import PlanError, Problem

__all__ = [
    "DIRECTIONS",
    "EDITIONS",
    "EXCEL_SUFFIXES",
    "HIGH_DAY_FACTOR",
    "LOW_DAY_SHARE",
    "MAX_FILE_BYTES",
    "MAX_FLOW_VEH_H_LN",
    "MAX_LANES",
    "ODD_HOURS_SHARE",
    "RECORD_LENGTH",
    "RESTRICTIONS",
    "TMG_2001",
    "TMG_2013",
    "TMG_SUFFIXES",
    "ZERO_RUN_HOURS",
    "CountRead",
    "Field",
    "Row",
    "VolumeRecord",
    "dst_kind",
    "exclude",
    "fewer_lanes",
    "parse_volume_record",
    "read_counts",
    "read_csv_text",
    "read_sheet",
    "read_table",
    "read_tmg",
    "tmg_day_of_week",
]

#: A flow no freeway lane carries: the HCM caps basic freeway capacity at
#: 2,400 pc/h/ln (HCM 7th ed., ch. 12); counts above 3,000 veh/h per lane are
#: taken as errors (common practice, no source).
MAX_FLOW_VEH_H_LN = 3000.0
#: Lanes assumed for the check above when the number of lanes is not known
#: (the most a plan can have).
MAX_LANES = 8
#: A day whose total is below this share of the median of the same weekday is
#: listed as a warning (a lane out, a counter fault, or a holiday; common
#: practice, no source).
LOW_DAY_SHARE = 0.7
#: A day whose total is above this multiple of the median of the same weekday is
#: listed as a warning (both directions, another station, or an event; common
#: practice, no source).
HIGH_DAY_FACTOR = 1.5
#: A day with more than this share of its vehicles in other hours than on the median day
#: of its weekday is listed as a warning (another day's or direction's counts, a
#: holiday; common practice, no source).
ODD_HOURS_SHARE = 0.15
#: Consecutive zero-count hours between 06:00 and 22:00 that earn a warning.
ZERO_RUN_HOURS = 3
#: Largest count file read (bytes): ten years of 15-minute counts fit easily.
MAX_FILE_BYTES = 50 * 1024 * 1024

TMG_SUFFIXES = (".vol", ".tmg", ".3", ".txt", ".dat")
EXCEL_SUFFIXES = (".xlsx", ".xlsm")


# ---------------------------------------------------------------------------------------------
# The TMG hourly traffic volume record
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Field:
    """One field of a fixed-width record: columns ``first`` to ``last`` (1-based, inclusive)."""

    name: str
    first: int
    last: int
    label: str

    def cut(self, line: str) -> str:
        return line[self.first - 1 : self.last]

    @property
    def columns(self) -> str:
        return (
            f"column {self.first}"
            if self.first == self.last
            else (f"columns {self.first}-{self.last}")
        )


def _hour_fields(first: int) -> tuple[Field, ...]:
    return tuple(
        Field(
            f"hour_{h:02d}",
            first + 5 * h,
            first + 5 * h + 4,
            f"volume {h:02d}:00-{h + 1:02d}:00",
        )
        for h in range(24)
    )


#: TMG 2013 ch. 7, Table 7-9 (hour fields: Table 7-10): 143 columns.
TMG_2013: tuple[Field, ...] = (
    Field("record_type", 1, 1, "record type"),
    Field("state_code", 2, 3, "FIPS state code"),
    Field("functional_class", 4, 5, "functional classification"),
    Field("station_id", 6, 11, "station identification"),
    Field("direction", 12, 12, "direction of travel"),
    Field("lane", 13, 13, "lane of travel"),
    Field("year", 14, 17, "year of data"),
    Field("month", 18, 19, "month of data"),
    Field("day", 20, 21, "day of data"),
    Field("day_of_week", 22, 22, "day of week"),
    *_hour_fields(23),
    Field("restrictions", 143, 143, "restrictions"),
)
#: TMG 2001 section 6, Table 6-3-1: 141 columns, two-digit year.
TMG_2001: tuple[Field, ...] = (
    *TMG_2013[:6],
    Field("year", 14, 15, "year of data"),
    Field("month", 16, 17, "month of data"),
    Field("day", 18, 19, "day of data"),
    Field("day_of_week", 20, 20, "day of week"),
    *_hour_fields(21),
    Field("restrictions", 141, 141, "restrictions"),
)
EDITIONS: dict[str, tuple[Field, ...]] = {"2013": TMG_2013, "2001": TMG_2001}
RECORD_LENGTH = {name: fields[-1].last for name, fields in EDITIONS.items()}

DIRECTIONS = {
    "1": "north",
    "2": "northeast",
    "3": "east",
    "4": "southeast",
    "5": "south",
    "6": "southwest",
    "7": "west",
    "8": "northwest",
    "9": "north-south combined",
    "0": "east-west combined",
}
RESTRICTIONS = {
    "1": "construction or another activity affected the flow",
    "2": "a problem with the counting device",
}


@dataclass(frozen=True)
class VolumeRecord:
    """One hourly traffic volume record, field by field.

    ``volumes[h]`` is the count of hour ``h`` (``None`` when blank);
    ``day_of_week`` is the TMG code (1 = Sunday ... 7 = Saturday).
    """

    line: int
    record_type: str
    state_code: str
    functional_class: str
    station_id: str
    direction: str
    lane: int
    date: dt.date
    day_of_week: int
    volumes: tuple[int | None, ...]
    restrictions: str
    raw: str = field(default="", repr=False, compare=False)


def tmg_day_of_week(date: dt.date) -> int:
    """The TMG day-of-week code of a date: 1 = Sunday ... 7 = Saturday."""
    return (date.weekday() + 1) % 7 + 1


def _two_digit_year(yy: int) -> int:
    """Two-digit years of the 2001 record: 70-99 are 1970-1999, 00-69 are 2000-2069."""
    return 1900 + yy if yy >= 70 else 2000 + yy


def _edition_of(line: str) -> str | None:
    """The record's edition by its length, or by which layout gives a consistent date."""
    body = line.rstrip("\r\n")
    if "|" in body:
        return "pipe"
    if len(body) > RECORD_LENGTH["2001"]:
        return "2013"
    fits = []
    for name, fields in EDITIONS.items():
        values = {f.name: f.cut(body) for f in fields[6:10]}
        try:
            year = int(values["year"])
            year = _two_digit_year(year) if name == "2001" else year
            date = dt.date(year, int(values["month"]), int(values["day"]))
        except ValueError:
            continue
        if values["day_of_week"].strip() == str(tmg_day_of_week(date)):
            fits.append(name)
    return fits[0] if len(fits) == 1 else None


def parse_volume_record(
    line: str, lineno: int, source: str, edition: str
) -> tuple[VolumeRecord | None, list[Problem]]:
    """One record of ``edition`` (``"2013"``, ``"2001"`` or ``"pipe"``), or its problems."""
    where = f"{source} line {lineno}"
    body = line.rstrip("\r\n")
    problems: list[Problem] = []
    fields = TMG_2013 if edition == "pipe" else EDITIONS[edition]
    if edition == "pipe":
        parts = body.split("|")
        if len(parts) != len(fields):
            return None, [
                Problem(
                    where,
                    f"{len(parts)} fields separated by '|'; the hourly volume record has "
                    f"{len(fields)} (TMG 2013 Table 7-9); check for a missing or extra '|'",
                )
            ]
        raw = {f.name: p for f, p in zip(fields, parts, strict=True)}
        loc = {f.name: f"field {i + 1} ({f.label})" for i, f in enumerate(fields)}
    else:
        length = RECORD_LENGTH[edition]
        if len(body) > length:
            return None, [
                Problem(
                    where,
                    f"{len(body)} characters; the TMG {edition} hourly volume record has "
                    f"{length}; check that the line was not joined with another",
                )
            ]
        body = body.ljust(length)  # blank hours at the end may have been trimmed
        raw = {f.name: f.cut(body) for f in fields}
        loc = {f.name: f"{f.columns} ({f.label})" for f in fields}

    def bad(name: str, message: str) -> None:
        problems.append(Problem(f"{where}, {loc[name]}", message))

    if raw["record_type"].strip() != "3":
        bad(
            "record_type",
            f"record type {raw['record_type']!r} is not 3 (hourly traffic volume); "
            "give a volume file (station and classification records are not read)",
        )
        return None, problems
    direction = raw["direction"].strip()
    if direction not in DIRECTIONS:
        bad("direction", f"{raw['direction']!r} is not a direction code 0-9")
    lane_text = raw["lane"].strip()
    if not (lane_text.isdigit() and len(lane_text) == 1):
        bad("lane", f"{raw['lane']!r} is not a lane code 0-9")
    date = None
    try:
        year = int(raw["year"])
        if edition == "2001":
            year = _two_digit_year(year)
        date = dt.date(year, int(raw["month"]), int(raw["day"]))
    except ValueError:
        bad(
            "year",
            f"year {raw['year']!r}, month {raw['month']!r}, day {raw['day']!r} is not a date",
        )
    dow_text = raw["day_of_week"].strip()
    dow = int(dow_text) if dow_text.isdigit() else 0
    if not 1 <= dow <= 7:
        bad("day_of_week", f"{raw['day_of_week']!r} is not a day-of-week code 1 (Sunday) to 7")
    elif date is not None and dow != tmg_day_of_week(date):
        names = ("Sunday", *WEEKDAY_NAMES[:6])
        bad(
            "day_of_week",
            f"day-of-week code {dow} ({names[dow - 1]}) does not agree with {date}, a "
            f"{WEEKDAY_NAMES[date.weekday()]} (code {tmg_day_of_week(date)}); check the date",
        )
    volumes: list[int | None] = []
    for h in range(24):
        name = f"hour_{h:02d}"
        text = raw[name].strip()
        if not text:
            volumes.append(None)
        elif text.isdigit():
            volumes.append(int(text))
        else:
            volumes.append(None)
            if re.fullmatch(r"-\s*\d+", text):
                bad(
                    name,
                    f"negative count {text}; a count is 0 or more (leave the hour blank "
                    "when there is no count)",
                )
            else:
                bad(
                    name,
                    f"{raw[name]!r} is not a whole number of vehicles; leave the hour "
                    "blank when there is no count",
                )
    restrictions = raw["restrictions"].strip()
    if restrictions and not restrictions.isdigit():
        bad("restrictions", f"{raw['restrictions']!r} is not a restriction code 0-9")
    if problems or date is None:
        return None, problems
    return (
        VolumeRecord(
            lineno,
            "3",
            raw["state_code"].strip(),
            raw["functional_class"].strip(),
            raw["station_id"].strip(),
            direction,
            int(lane_text),
            date,
            dow,
            tuple(volumes),
            restrictions,
            body,
        ),
        problems,
    )


_DIRECTION_WORDS = {
    **{word: code for code, word in DIRECTIONS.items() if " " not in word},
    **{"n": "1", "ne": "2", "e": "3", "se": "4", "s": "5", "sw": "6", "w": "7", "nw": "8"},
}


def _direction_code(direction: str | None) -> str | None:
    """The TMG direction code of ``north``, ``NB``, ``southbound``, ``5`` ..."""
    if direction is None:
        return None
    d = direction.strip().lower().replace(" ", "")
    if d in DIRECTIONS:
        return d
    for word in (d, d.removesuffix("bound"), d.removesuffix("b")):
        if word in _DIRECTION_WORDS:
            return _DIRECTION_WORDS[word]
    raise PlanError(
        f"'{direction}' is not a direction; give north, south, east, west (or NB, SB, ...) "
        "or the TMG code 0-9",
        where="direction",
    )


def _same_station(a: str, b: str) -> bool:
    return a == b or a.lstrip("0") == b.lstrip("0")


def read_tmg(
    lines: Iterable[str],
    source: str,
    *,
    station: str | None = None,
    direction: str | None = None,
    lanes: int | None = None,
    edition: str | None = None,
) -> CountRead:
    """Hourly volume records of one station and direction into a :class:`CountRead`.

    Per-lane records are added up hour by hour; a day on which a lane that
    reports on other days is missing, or counted nothing all day, is kept out
    (a lane out). Raises :class:`PlanError` with every problem and its line.
    """
    problems: list[Problem] = []
    records: list[VolumeRecord] = []
    n_lines = 0
    for lineno, line in enumerate(lines, start=1):
        if not line.strip():
            continue
        n_lines += 1
        ed = "pipe" if "|" in line else (edition or _edition_of(line))
        if ed is None:
            problems.append(
                Problem(
                    f"{source} line {lineno}",
                    "not a TMG hourly volume record of the 2013 (143 columns) or 2001 (141 "
                    "columns) layout whose date and day of week agree; check the line, or "
                    "state the edition",
                )
            )
            continue
        rec, probs = parse_volume_record(line, lineno, source, ed)
        problems += probs
        if rec is not None:
            records.append(rec)
    if not n_lines:
        raise PlanError("the file holds no records", where=source)
    code = _direction_code(direction)
    groups = sorted({(r.station_id, r.direction) for r in records})
    if station is not None:
        records = [r for r in records if _same_station(r.station_id, station.strip())]
    if code is not None:
        records = [r for r in records if r.direction == code]
    chosen = sorted({(r.station_id, r.direction) for r in records})
    if len(chosen) > 1:
        listed = ", ".join(f"station {s} direction {d} ({DIRECTIONS[d]})" for s, d in chosen)
        problems.append(
            Problem(
                source,
                f"the file holds counts of {listed}; choose one station and one direction",
            )
        )
    elif not chosen and not problems:
        listed = ", ".join(f"station {s} direction {d}" for s, d in groups) or "none"
        problems.append(
            Problem(source, f"no record of the station and direction asked for; found {listed}")
        )
    if problems:
        raise PlanError(problems)
    return _tmg_history(records, source, lanes, n_lines)


def _tmg_history(
    records: list[VolumeRecord], source: str, lanes: int | None, n_lines: int
) -> CountRead:
    problems: list[Problem] = []
    warnings: list[str] = []
    by_day: dict[dt.date, dict[int, VolumeRecord]] = defaultdict(dict)
    for r in records:
        seen = by_day[r.date].get(r.lane)
        if seen is not None:
            if seen.raw.rstrip() == r.raw.rstrip():
                warnings.append(f"line {r.line} repeats line {seen.line} exactly; one copy is kept")
                continue
            problems.append(
                Problem(
                    f"{source} line {r.line}",
                    f"a second record for {r.date}, lane {r.lane}, with other counts than "
                    f"line {seen.line}; delete the wrong one",
                )
            )
            continue
        by_day[r.date][r.lane] = r
    per_lane = sorted({lane for day in by_day.values() for lane in day if lane != 0})
    for day, recs in sorted(by_day.items()):
        if 0 in recs and len(recs) > 1:
            others = [r.line for lane, r in recs.items() if lane != 0]
            problems.append(
                Problem(
                    f"{source} line {recs[0].line}",
                    f"{day} has lanes combined (lane 0) and single lanes (lines "
                    f"{', '.join(map(str, others))}); keep one or the other",
                )
            )
    limit_lane = MAX_FLOW_VEH_H_LN
    for recs in by_day.values():
        for r in recs.values():
            cap = limit_lane if r.lane else limit_lane * (lanes or MAX_LANES)
            for h, v in enumerate(r.volumes):
                if v is not None and v > cap:
                    f = TMG_2013[10 + h]
                    problems.append(
                        Problem(
                            f"{source} line {r.line}, hour {h:02d}:00",
                            f"{v:,} vehicles in one hour is more than "
                            f"{'a lane' if r.lane else f'{lanes or MAX_LANES} lanes'} can carry "
                            f"({cap:,.0f}); check the count ({f.label})",
                        )
                    )
    if problems:
        raise PlanError(problems)
    first = min(by_day)
    last = max(by_day)
    n_days = (last - first).days + 1
    flows = np.full((n_days, 24), np.nan)
    excluded: list[tuple[dt.date, str]] = []
    for day, recs in by_day.items():
        d = (day - first).days
        codes = sorted({r.restrictions for r in recs.values() if r.restrictions not in ("", "0")})
        for c in codes:
            why = RESTRICTIONS.get(c, "see the agency's coding")
            excluded.append((day, f"restriction code {c} ({why})"))
        lane_set = [lane for lane in recs if lane != 0]
        if per_lane and 0 not in recs:
            missing = [lane for lane in per_lane if lane not in recs]
            idle = [
                lane
                for lane in lane_set
                if all(v in (None, 0) for v in recs[lane].volumes)
                and any(v for other in lane_set if other != lane for v in recs[other].volumes if v)
            ]
            if missing or idle:
                gone = missing + idle
                excluded.append(
                    (
                        day,
                        f"lane {', '.join(map(str, gone))} "
                        f"{'not reported' if missing else 'counted nothing'} (a lane out?)",
                    )
                )
        vol = np.array(
            [[np.nan if v is None else float(v) for v in r.volumes] for r in recs.values()]
        )
        flows[d] = vol.sum(axis=0)  # NaN where any lane has no count
    station = records[0].station_id
    direction = records[0].direction
    history = CountHistory(first, 3600, flows, tuple(excluded), source)
    return _finish(
        history,
        source,
        kind="TMG hourly traffic volume records",
        records=n_lines,
        station=station,
        direction=f"{direction} ({DIRECTIONS[direction]})",
        lanes=tuple(per_lane),
        warnings=warnings,
    )


# ---------------------------------------------------------------------------------------------
# CSV and Excel tables
# ---------------------------------------------------------------------------------------------

#: (row label for messages, function giving the location of column j, values)
Row = tuple[int, Callable[[int], str], Sequence[Any]]

_DATE_RE = re.compile(r"^(\d{4})[-/](\d{1,2})[-/](\d{1,2})(?:[ T](\d{1,2}):(\d{2})(?::(\d{2}))?)?$")
_TIME_RE = re.compile(r"^(\d{1,2}):(\d{2})(?::(\d{2}))?$")
#: A count grouped in thousands by commas (``1,402``): read without them.
_COMMA_GROUPS = re.compile(r"^[+-]?\d{1,3}(?:,\d{3})+(?:\.\d+)?$")
#: A count grouped in thousands by points (``1.402``, as written where the decimal sign is
#: a comma): 1.402 vehicles or 1,402? Counts are whole numbers, so neither is read.
_POINT_GROUPS = re.compile(r"^[+-]?\d{1,3}(?:\.\d{3})+$")
#: Counts below this with three decimals among counts of :data:`THOUSANDS_AMONG` or more
#: are queried as counts of thousands pasted with another locale's thousands separator
#: (``1.402`` read as a number by a spreadsheet set to a decimal point; common practice,
#: no source).
THOUSANDS_BELOW = 10.0
THOUSANDS_AMONG = 100.0
_END_OF_DAY = re.compile(r"(?:^|[ T])24:00(?::00)?$")


def _blank(v: Any) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


def _as_datetime(v: Any) -> dt.datetime | None:
    """A date or date-time cell; ``24:00`` is midnight at the end of the day."""
    if isinstance(v, dt.datetime):
        return v
    if isinstance(v, dt.date):
        return dt.datetime.combine(v, dt.time())
    if not isinstance(v, str):
        return None
    m = _DATE_RE.match(v.strip())
    if not m:
        return None
    y, mo, d, hh, mm, ss = m.groups()
    try:
        day = dt.date(int(y), int(mo), int(d))
        if hh is None:
            return dt.datetime.combine(day, dt.time())
        if int(hh) == 24 and int(mm) == 0 and not int(ss or 0):
            return dt.datetime.combine(day + dt.timedelta(days=1), dt.time())
        return dt.datetime.combine(day, dt.time(int(hh), int(mm), int(ss or 0)))
    except ValueError:
        return None


def _is_24(v: Any) -> bool:
    """A time stamp written as 24:00, the end of a day (a time, or a date and time)."""
    if isinstance(v, str):
        return bool(_END_OF_DAY.search(v.strip()))
    return _as_time(v) == dt.timedelta(days=1)


def _as_time(v: Any) -> dt.timedelta | None:
    """A time-of-day cell as the time since midnight (``24:00`` allowed)."""
    if isinstance(v, dt.time):
        return dt.timedelta(hours=v.hour, minutes=v.minute, seconds=v.second)
    if isinstance(v, dt.datetime):  # a time typed into a spreadsheet may come back like this
        return dt.timedelta(hours=v.hour, minutes=v.minute, seconds=v.second)
    if isinstance(v, float) and 0 <= v <= 1:  # a spreadsheet time as a fraction of a day
        return dt.timedelta(seconds=round(v * DAY_S))
    if not isinstance(v, str):
        return None
    m = _TIME_RE.match(v.strip())
    if not m:
        return None
    hh, mm, ss = int(m.group(1)), int(m.group(2)), int(m.group(3) or 0)
    if mm >= 60 or ss >= 60 or hh > 24 or (hh == 24 and (mm or ss)):
        return None
    return dt.timedelta(hours=hh, minutes=mm, seconds=ss)


def _points_group(texts: Iterable[str]) -> bool:
    """Whether the points in counts written as text may group thousands (``1.402``, as
    in a locale whose decimal sign is a comma), as none of them shows otherwise: a point
    where no thousands are grouped (``412.5``, ``1402.000``), a count of 1,000 or more
    written without a separator (``1402``), or a count that, its points taken for
    thousands, is more than :data:`MAX_FLOW_VEH_H_LN` on :data:`MAX_LANES` lanes could
    carry in an hour (``120.000``) make them decimal points."""
    dotted = False
    for t in texts:
        t = t.strip().replace("_", "")
        if "." in t:
            if not _POINT_GROUPS.match(t) or float(t.replace(".", "")) > (
                MAX_FLOW_VEH_H_LN * MAX_LANES
            ):
                return False
            dotted = True
        elif re.fullmatch(r"[+-]?\d{4,}", t):
            return False
    return dotted


def _as_count(v: Any, points_group: bool = True) -> float | str | None:
    """A count: a number, ``None`` when blank, or the reason it is not one.
    ``points_group``: points in text may group thousands (:func:`_points_group`)."""
    if _blank(v):
        return None
    if isinstance(v, bool):
        return f"{v!r} is not a count"
    if isinstance(v, int | float):
        x = float(v)
    else:
        text = str(v).strip().replace("_", "")
        if points_group and _POINT_GROUPS.match(text):
            whole = text.replace(".", "")
            return (
                f"{v!r} is {text} vehicles, or {int(whole):,} written with another locale's "
                f"thousands separator? Type the count as a plain whole number ({int(whole)})"
            )
        if "," in text and not _COMMA_GROUPS.match(text):
            with_point = text.replace(",", ".")
            if re.fullmatch(r"[+-]?\d+\.\d+", with_point):
                return (
                    f"{v!r} is not a count we read: a decimal comma? Type the count with a "
                    f"decimal point ({with_point}), or as a whole number"
                )
        try:
            x = float(text.replace(",", ""))
        except ValueError:
            return f"{v!r} is not a number of vehicles; leave it blank when there is no count"
    if not np.isfinite(x):
        return f"{v!r} is not a number of vehicles"
    if x < 0:
        return f"negative count {x:g}; a count is 0 or more (leave it blank when there is no count)"
    return x


@dataclass
class _Cell:
    when: dt.datetime
    value: float | None
    where: str


def _shape(rows: list[Row], source: str) -> tuple[str, int]:
    """``("long", 2 | 3)`` or ``("wide", 24 | 96)`` from the widest data row."""
    width = max(
        (
            max((j + 1 for j, v in enumerate(vals) if not _blank(v)), default=0)
            for _, _, vals in rows
        ),
        default=0,
    )
    if width in (2, 3):
        return "long", width
    if width - 1 in (24, 96):
        return "wide", width - 1
    raise PlanError(
        f"rows of {width} columns; give date-time and count (2 columns), date, time and "
        "count (3), or a date and 24 hourly (or 96 15-minute) counts",
        where=source,
    )


def read_table(
    rows: Iterable[Row],
    source: str,
    *,
    lanes: int | None = None,
    interval_minutes: float | None = None,
    stamp: str = "start",
    kind: str = "table",
) -> CountRead:
    """Counts of one direction from rows of cells (a CSV file or a worksheet).

    Long form (date-time and count, or date, time and count) or wide form
    (date and 24 or 96 counts); a header row is skipped. ``stamp`` says
    whether a long-form time is the ``"start"`` or the ``"end"`` of its
    interval. Raises :class:`PlanError` with every problem and its place.
    """
    if stamp not in ("start", "end"):
        raise PlanError("give 'start' or 'end'", where="stamp")
    data = [r for r in rows if any(not _blank(v) for v in r[2])]
    if data and _as_datetime(data[0][2][0]) is None:
        data = data[1:]  # a header row
    if not data:
        raise PlanError("no counts found; the first column must hold dates", where=source)
    form, width = _shape(data, source)
    firsts = 1 if form == "wide" else width - 1  # the columns before the counts
    points_group = _points_group(
        v for _, _, vals in data for v in vals[firsts:] if isinstance(v, str)
    )
    problems: list[Problem] = []
    cells: list[_Cell] = []
    step: int | None = None
    if form == "wide":
        step = DAY_S // width
        if interval_minutes is not None and round(interval_minutes * 60) != step:
            problems.append(
                Problem(
                    source,
                    f"{width} counts a day are {step // 60}-minute counts, not "
                    f"{interval_minutes:g}-minute",
                )
            )
        for _, where, vals in data:
            day = _as_datetime(vals[0])
            if day is None or day.time() != dt.time():
                problems.append(
                    Problem(where(0), f"{vals[0]!r} is not a date; write dates like 2026-05-04")
                )
                continue
            for j in range(width):
                v = vals[j + 1] if j + 1 < len(vals) else None
                c = _as_count(v, points_group)
                if isinstance(c, str):
                    problems.append(Problem(where(j + 1), c))
                    c = None
                cells.append(_Cell(day + dt.timedelta(seconds=j * step), c, where(j + 1)))
    else:
        day_end: str | None = None  # the first time stamp written 24:00
        for _, where, vals in data:
            when = _as_datetime(vals[0])
            if day_end is None and _is_24(vals[1] if width == 3 else vals[0]):
                day_end = where(1 if width == 3 else 0)
            if width == 3:
                tod = _as_time(vals[1])
                if when is None or when.time() != dt.time():
                    problems.append(
                        Problem(where(0), f"{vals[0]!r} is not a date; write dates like 2026-05-04")
                    )
                    continue
                if tod is None:
                    problems.append(
                        Problem(where(1), f"{vals[1]!r} is not a time; write times like 07:00")
                    )
                    continue
                when = when + tod
                value = vals[2] if len(vals) > 2 else None
                vcol = 2
            else:
                if when is None:
                    problems.append(
                        Problem(
                            where(0),
                            f"{vals[0]!r} is not a date-time; write them like 2026-05-04 07:00",
                        )
                    )
                    continue
                value = vals[1] if len(vals) > 1 else None
                vcol = 1
            c = _as_count(value, points_group)
            if isinstance(c, str):
                problems.append(Problem(where(vcol), c))
                c = None
            cells.append(_Cell(when, c, where(vcol)))
        if day_end is not None and stamp == "start":
            problems.append(
                Problem(
                    day_end,
                    "24:00 ends a day, so it cannot start an interval: these time stamps "
                    "look like the end of each interval (01:00 to 24:00), and read as starts "
                    "every count would move one interval later; say that a time stamp is the "
                    "end of its interval (wzq counts --stamp end; in a plan, 'A time stamp "
                    "is the' end of its interval)",
                )
            )
        if problems:
            raise PlanError(problems)
        if all(c.when.time() == dt.time() for c in cells):
            raise PlanError(
                "the time stamps carry no time of day (daily totals?); give hourly or "
                "15-minute counts, or the wide form: a date, then 24 hourly counts",
                where=source,
            )
        step = _interval(cells, interval_minutes, source)
        if stamp == "end":
            for c in cells:
                c.when -= dt.timedelta(seconds=step)
    if problems:
        raise PlanError(problems)
    assert step is not None
    return _table_history(cells, step, source, lanes, kind, len(data))


def _interval(cells: list[_Cell], interval_minutes: float | None, source: str) -> int:
    """The count interval (s): given, or the most common step between the time stamps
    (at most an hour: hourly counts with gaps have longer steps too)."""
    if interval_minutes is not None:
        step = round(interval_minutes * 60)
    else:
        times = np.unique(np.array([c.when for c in cells], dtype="datetime64[s]"))
        diffs = np.diff(times).astype(np.int64)
        values, n = np.unique(diffs, return_counts=True)
        step = min(int(values[np.argmax(n)]), 3600) if len(diffs) else 3600
    if step <= 0 or 3600 % step or step < 60:
        raise PlanError(
            f"the time stamps are {step / 60:g} minutes apart; counts must be for intervals "
            "that divide an hour (60, 30, 15 ... minutes)",
            where=source,
        )
    return step


def dst_kind(day: dt.date) -> str | None:
    """``"forward"`` for a Sunday in March, ``"back"`` for a Sunday in October or November."""
    if day.weekday() != 6:
        return None
    if day.month == 3:
        return "forward"
    if day.month in (10, 11):
        return "back"
    return None


def _table_history(
    cells: list[_Cell], step: int, source: str, lanes: int | None, kind: str, n_rows: int
) -> CountRead:
    problems: list[Problem] = []
    warnings: list[str] = []
    per_day = DAY_S // step
    scale = 3600.0 / step
    cap = MAX_FLOW_VEH_H_LN * (lanes or MAX_LANES)
    first = min(c.when for c in cells).date()
    last = max(c.when for c in cells).date()
    n_days = (last - first).days + 1
    flows = np.full((n_days, per_day), np.nan)
    seen: dict[tuple[int, int], _Cell] = {}
    repeated: dict[dt.date, set[int]] = defaultdict(set)
    dup_cells: dict[tuple[int, int], list[_Cell]] = defaultdict(list)
    for c in cells:
        since = (c.when - dt.datetime.combine(c.when.date(), dt.time())).total_seconds()
        if since % step:
            problems.append(
                Problem(
                    c.where,
                    f"{c.when:%Y-%m-%d %H:%M} is not on the {step // 60}-minute grid from "
                    "midnight; stamp each count at the start of its interval",
                )
            )
            continue
        key = ((c.when.date() - first).days, int(since // step))
        if key in seen:
            dup_cells[key].append(c)
            repeated[c.when.date()].add(key[1])
            continue
        seen[key] = c
        if c.value is not None:
            if c.value * scale > cap:
                problems.append(
                    Problem(
                        c.where,
                        f"{c.value:,.0f} vehicles in {step // 60} minutes is "
                        f"{c.value * scale:,.0f} veh/h, more than {lanes or MAX_LANES} lanes "
                        f"can carry ({cap:,.0f} veh/h); check the count",
                    )
                )
            flows[key] = c.value * scale
    excluded: list[tuple[dt.date, str]] = []
    for key, dups in dup_cells.items():
        day = first + dt.timedelta(days=key[0])
        hour = key[1] * step / 3600
        if dst_kind(day) == "back" and int(hour) in (1, 2) and len(dups) == 1:
            continue  # the repeated hour when the clocks go back: the day is left out below
        for c in dups:
            problems.append(
                Problem(
                    c.where,
                    f"a second count for {c.when:%Y-%m-%d %H:%M} (first at "
                    f"{seen[key].where}); delete one of them",
                )
            )
    for day, slots in repeated.items():
        if dst_kind(day) == "back" and {int(s * step / 3600) for s in slots} <= {1, 2}:
            excluded.append((day, "the clocks go back (an hour counted twice)"))
    if problems:
        raise PlanError(problems)
    warnings.extend(_thousands_as_decimals(cells))
    t0, t1 = min(c.when for c in cells), max(c.when for c in cells)
    if t0.time() == dt.time(step // 3600, step % 3600 // 60) and t1.time() == dt.time():
        warnings.append(
            f"{t0:%a %Y-%m-%d}: the counts run from {t0:%H:%M} to 00:00 on "
            f"{t1:%a %Y-%m-%d}, as time stamps at the end of each interval do; read as starts, "
            "every count is one interval late. If each stamp is the end of its interval, say "
            "so (wzq counts --stamp end; in a plan, 'A time stamp is the' end of its interval)"
        )
    history = CountHistory(first, step, flows, tuple(excluded), source)
    return _finish(history, source, kind=kind, records=n_rows, warnings=warnings)


def _thousands_as_decimals(cells: list[_Cell]) -> list[str]:
    """Counts such as 1.402 among counts of hundreds: counts of thousands written with
    the thousands separator of another locale and read by a spreadsheet set to a decimal
    point (1,402 read as 1.402). Queried at the first, the others counted: a count below
    :data:`THOUSANDS_BELOW` that is not whole but is once multiplied by 1,000, when others
    reach :data:`THOUSANDS_AMONG` (common practice, no source)."""
    counts = [c for c in cells if c.value is not None]
    top = max((c.value for c in counts if c.value is not None), default=0.0)
    if top < THOUSANDS_AMONG:
        return []
    odd = [
        c
        for c in counts
        if c.value is not None
        and 0 < c.value < THOUSANDS_BELOW
        and c.value != round(c.value)
        and abs(c.value * 1000 - round(c.value * 1000)) < 1e-6
    ]
    if not odd:
        return []
    c = odd[0]
    assert c.value is not None
    more = f" (and {len(odd) - 1:,} more counts like it)" if len(odd) > 1 else ""
    return [
        f"{c.where}: {c.value:g} vehicles at {c.when:%Y-%m-%d %H:%M}{more}, among counts up "
        f"to {top:,.0f}: counts of {round(c.value * 1000):,} and so on, written with another "
        "locale's thousands separator? Type the counts as plain whole numbers"
    ]


def fewer_lanes(
    typed: int | None, read: CountRead, lanes: int, label: str, site_at: str
) -> str | None:
    """What to say when the counts are of fewer lanes than the road has in normal
    operation (``typed``, the lanes counted as given under ``label``, else the lanes of a
    count file counted one by one), else ``None``: they are used as the traffic of every
    lane, which is right only where the road had that many lanes at the counter (common
    practice, no source). ``site_at`` names where the road's lanes were given."""
    counted = typed if typed is not None else (len(read.lanes) or None)
    if counted is None or counted >= lanes:
        return None
    what = (
        f"{label} is {counted}"
        if typed is not None
        else f"the count file holds {counted} lanes counted one by one "
        f"({', '.join(map(str, read.lanes))})"
    )
    return (
        f"{what}, but the road has {lanes} lanes in normal operation ({site_at}): the counts "
        f"are used as the traffic of all {lanes} lanes; if a lane was not counted, the demand "
        "is too low (count it, or design the demand another way); if the road has "
        f"{counted} lanes where it was counted, this is right"
    )


def _csv_rows(text: str, source: str) -> list[Row]:
    sample = text[:4096]
    try:
        dialect = csv.Sniffer().sniff(sample, delimiters=",;\t")
        delimiter = dialect.delimiter
    except csv.Error:
        delimiter = ","
    reader = csv.reader(io.StringIO(text), delimiter=delimiter)
    rows: list[Row] = []
    for i, vals in enumerate(reader, start=1):
        rows.append((i, lambda j, i=i: f"{source} line {i}, column {j + 1}", vals))
    return rows


def read_csv_text(text: str, source: str, **kw: Any) -> CountRead:
    """:func:`read_table` on the text of a CSV file."""
    return read_table(_csv_rows(text, source), source, kind="CSV table", **kw)


def read_sheet(ws: Any, source: str, **kw: Any) -> CountRead:
    """:func:`read_table` on an openpyxl worksheet (messages name ``Sheet!A1`` cells)."""
    from openpyxl.utils import get_column_letter

    rows: list[Row] = []
    title = ws.title
    for i, vals in enumerate(ws.iter_rows(values_only=True), start=1):
        rows.append((i, lambda j, i=i: f"{title}!{get_column_letter(j + 1)}{i}", list(vals)))
    return read_table(rows, source, kind=f"sheet '{title}'", **kw)


# ---------------------------------------------------------------------------------------------
# What was read
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class CountRead:
    """A count history and what reading it found."""

    history: CountHistory
    kind: str
    records: int
    station: str | None = None
    direction: str | None = None
    lanes: tuple[int, ...] = ()
    warnings: tuple[str, ...] = ()
    #: Of ``warnings``, the counted days that look unusual (each starts with its day,
    #: ``Mon 2026-05-25: ...``); the rest are findings about the file as read.
    unusual: tuple[str, ...] = ()

    def gaps(self) -> list[tuple[dt.date, int]]:
        """Days with missing intervals (and how many), excluded days apart."""
        h = self.history
        missing = np.isnan(h.flows_veh_h).sum(axis=1)
        out_days = {d for d, _ in h.excluded}
        return [
            (h.first_day + dt.timedelta(days=int(d)), int(missing[d]))
            for d in np.flatnonzero(missing)
            if h.first_day + dt.timedelta(days=int(d)) not in out_days
        ]

    def summary_lines(self) -> list[tuple[str, str]]:
        """(label, text) pairs describing what was read."""
        h = self.history
        usable = h.usable()
        gaps = self.gaps()
        no_count = int(np.isnan(h.flows_veh_h).all(axis=1).sum())
        lines = [
            ("source", f"{h.source} ({self.kind}, {self.records:,} records)"),
        ]
        if self.station is not None:
            lines.append(("station", f"{self.station}, direction {self.direction}"))
        if self.lanes:
            lines.append(("lanes", f"{len(self.lanes)} counted one by one, added up"))
        lines += [
            ("interval", f"{h.interval_s // 60} minutes"),
            ("date range", f"{h.first_day:%a %Y-%m-%d} to {h.last_day:%a %Y-%m-%d}"),
            ("days", f"{h.n_days:,} in the range, {int(usable.sum()):,} complete and usable"),
            (
                "gaps",
                f"{len(gaps):,} day{'s' if len(gaps) != 1 else ''} with missing intervals"
                + (f" ({no_count:,} with no count at all)" if no_count else "")
                + (f"; first {_day_list([d for d, _ in gaps])}" if gaps else ""),
            ),
            ("left out", f"{len(h.excluded):,} day{'s' if len(h.excluded) != 1 else ''}"),
        ]
        for day, why in sorted(h.excluded)[:20]:
            lines.append(("", f"{day:%a %Y-%m-%d}: {why}"))
        if len(h.excluded) > 20:
            lines.append(("", f"... and {len(h.excluded) - 20} more"))
        return lines

    def daily_table(self) -> list[tuple[str, int, float, float]]:
        """Per weekday: usable days, mean daily total (veh) and mean peak-hour flow (veh/h)."""
        h = self.history
        usable = h.usable()
        wd = np.array([(h.first_day + dt.timedelta(days=d)).weekday() for d in range(h.n_days)])
        out = []
        step_h = h.interval_s / 3600
        per_hour = h.flows_veh_h.reshape(h.n_days, 24, -1).mean(axis=2)
        for k, name in enumerate(WEEKDAY_NAMES):
            pick = usable & (wd == k)
            if not pick.any():
                out.append((name, 0, float("nan"), float("nan")))
                continue
            total = h.flows_veh_h[pick].sum(axis=1) * step_h
            peak = per_hour[pick].max(axis=1)
            out.append((name, int(pick.sum()), float(total.mean()), float(peak.mean())))
        return out


def _day_list(days: list[dt.date], n: int = 5) -> str:
    text = ", ".join(f"{d:%Y-%m-%d}" for d in days[:n])
    return text + (f" and {len(days) - n} more" if len(days) > n else "")


def _screen(history: CountHistory) -> list[str]:
    """Warnings for days that look like a lane out or a counter fault (module notes)."""
    out: list[str] = []
    h = history
    usable = h.usable()
    if not usable.any():
        return out
    step_h = h.interval_s / 3600
    totals = np.where(usable, np.nansum(h.flows_veh_h, axis=1) * step_h, np.nan)
    wd = (np.datetime64(h.first_day, "D") + np.arange(h.n_days)).astype(np.int64)
    wd = (wd + 3) % 7
    for k in range(7):
        pick = usable & (wd == k)
        if pick.sum() < 3:
            continue
        median = float(np.median(totals[pick]))
        for d in np.flatnonzero(pick & (totals < LOW_DAY_SHARE * median)):
            day = h.first_day + dt.timedelta(days=int(d))
            out.append(
                f"{day:%a %Y-%m-%d}: {totals[d]:,.0f} vehicles, {totals[d] / median:.0%} of the "
                f"median {WEEKDAY_NAMES[k]}; a holiday, a lane out or a counter fault? "
                "Leave it out with exclude_days if it is not real traffic"
            )
        for d in np.flatnonzero(pick & (totals > HIGH_DAY_FACTOR * median)):
            day = h.first_day + dt.timedelta(days=int(d))
            out.append(
                f"{day:%a %Y-%m-%d}: {totals[d]:,.0f} vehicles, {totals[d] / median:.0%} of the "
                f"median {WEEKDAY_NAMES[k]}; counts of both directions, of another station, or "
                "an event? Leave it out with exclude_days if it is not this direction's usual "
                "traffic"
            )
    out += _odd_hours(h, usable, wd, {w[:14] for w in out})
    hourly = h.flows_veh_h.reshape(h.n_days, 24, -1).mean(axis=2)
    zero = (hourly[:, 6:22] == 0) & usable[:, None]
    for d in np.flatnonzero(zero.any(axis=1)):
        run = best = 0
        for z in zero[d]:
            run = run + 1 if z else 0
            best = max(best, run)
        if best >= ZERO_RUN_HOURS:
            day = h.first_day + dt.timedelta(days=int(d))
            out.append(
                f"{day:%a %Y-%m-%d}: {best} daytime hours in a row with no vehicle counted; "
                "a counter fault or a road closure? Leave it out with exclude_days if so"
            )
    return out


def _odd_hours(h: CountHistory, usable: np.ndarray, wd: np.ndarray, said: set[str]) -> list[str]:
    """Days whose traffic falls in other hours than on the same weekday: more than
    :data:`ODD_HOURS_SHARE` of the day's vehicles would have to move to other hours to
    give the median weekday's hourly shares (half the sum of the differences of the
    shares). Days already said (``said``: their ``Mon 2026-05-04`` start) are left out."""
    out: list[str] = []
    hourly = h.flows_veh_h.reshape(h.n_days, 24, -1).mean(axis=2)
    with np.errstate(invalid="ignore", divide="ignore"):
        shares = hourly / hourly.sum(axis=1, keepdims=True)
    for k in range(7):
        pick = usable & (wd == k) & np.isfinite(shares).all(axis=1)
        if pick.sum() < 3:
            continue
        usual = np.median(shares[pick], axis=0)
        usual = usual / usual.sum()
        moved = 0.5 * np.abs(shares - usual).sum(axis=1)
        for d in np.flatnonzero(pick & (moved > ODD_HOURS_SHARE)):
            day = h.first_day + dt.timedelta(days=int(d))
            if f"{day:%a %Y-%m-%d}" in said:
                continue
            out.append(
                f"{day:%a %Y-%m-%d}: {moved[d]:.0%} of its vehicles counted in other hours than "
                f"on the median {WEEKDAY_NAMES[k]}; a holiday, counts of another day (a week "
                "pasted a day out?) or of the other direction? Leave it out with exclude_days "
                "if it is not this day's traffic"
            )
    return out


def _spring_forward(history: CountHistory) -> list[tuple[dt.date, str]]:
    """Days on which only the 02:00 hour is missing, on a Sunday in March (module notes)."""
    h = history
    out = []
    missing = np.isnan(h.flows_veh_h)
    per_hour = 3600 // h.interval_s
    for d in np.flatnonzero(missing.sum(axis=1) == per_hour):
        day = h.first_day + dt.timedelta(days=int(d))
        if dst_kind(day) == "forward" and missing[d, 2 * per_hour : 3 * per_hour].all():
            out.append((day, "the clocks go forward (no 02:00 hour)"))
    return out


def _finish(history: CountHistory, source: str, *, warnings: list[str], **kw: Any) -> CountRead:
    extra = _spring_forward(history)
    if extra:
        h = history
        history = CountHistory(
            h.first_day, h.interval_s, h.flows_veh_h, h.excluded + tuple(extra), h.source
        )
    unusual = tuple(sorted(_screen(history), key=_by_date))
    return CountRead(history, warnings=(*warnings, *unusual), unusual=unusual, **kw)


def _by_date(warning: str) -> str:
    """Screen warnings start with the day (``Mon 2026-05-25: ...``): sort them by date."""
    return warning[4:14]


def exclude(
    read: CountRead, days: Iterable[dt.date], why: str = "left out by the user"
) -> CountRead:
    """``read`` with more days kept out of the design demand."""
    h = read.history
    extra = tuple((d, why) for d in days if d not in {x for x, _ in h.excluded})
    history = CountHistory(h.first_day, h.interval_s, h.flows_veh_h, h.excluded + extra, h.source)
    return replace(read, history=history)


# ---------------------------------------------------------------------------------------------
# Files
# ---------------------------------------------------------------------------------------------


def _looks_like_tmg(text: str) -> bool:
    for line in text.splitlines():
        if line.strip():
            body = line.rstrip("\r\n")
            return body.startswith("3") and (
                RECORD_LENGTH["2001"] - 30 <= len(body) <= RECORD_LENGTH["2013"]
                or body.count("|") == len(TMG_2013) - 1
            )
    return False


def read_counts(
    path: str | Path,
    *,
    sheet: str | None = None,
    station: str | None = None,
    direction: str | None = None,
    lanes: int | None = None,
    interval_minutes: float | None = None,
    stamp: str = "start",
    edition: str | None = None,
    exclude_days: Iterable[dt.date] = (),
) -> CountRead:
    """Read a count file: TMG volume records, a CSV table or an Excel sheet.

    Excel (``.xlsx``/``.xlsm``) is read from ``sheet`` (default: the first)
    after the workbook safety checks; any other file is TMG records when its
    first line looks like one, else a CSV table. ``lanes`` (of the counted
    direction) sets the check for impossible counts. Raises
    :class:`PlanError` with every problem, located.
    """
    path = Path(path)
    name = path.name
    if edition is not None and edition not in EDITIONS:
        raise PlanError(f"give one of {', '.join(EDITIONS)}", where="edition")
    if not path.is_file():
        raise PlanError(f"no such file; check the path: {path}", where=name)
    if path.stat().st_size > MAX_FILE_BYTES:
        raise PlanError(
            f"the file is larger than {MAX_FILE_BYTES // 2**20} MiB; give only the years needed",
            where=name,
        )
    if path.suffix.lower() in EXCEL_SUFFIXES:
        from wzq.io.workbook.reader import book_from_bytes, read_workbook_bytes

        wb = book_from_bytes(read_workbook_bytes(path), path, read_only=True, data_only=True)
        try:
            if sheet is None:
                ws = wb.worksheets[0]
            elif sheet in wb.sheetnames:
                ws = wb[sheet]
            else:
                raise PlanError(
                    f"no sheet '{sheet}'; the workbook has {', '.join(wb.sheetnames)}",
                    where=name,
                )
            read = read_sheet(ws, name, lanes=lanes, interval_minutes=interval_minutes, stamp=stamp)
        finally:
            wb.close()
    else:
        raw = path.read_bytes()
        try:
            if raw.startswith((b"\xff\xfe", b"\xfe\xff")):  # UTF-16, as Excel's Unicode Text
                text = raw.decode("utf-16")
            else:
                text = raw.decode("utf-8-sig")
        except UnicodeDecodeError:
            text = raw.decode("latin-1")
        if edition is not None or _looks_like_tmg(text):
            read = read_tmg(
                text.splitlines(),
                name,
                station=station,
                direction=direction,
                lanes=lanes,
                edition=edition,
            )
        else:
            read = read_csv_text(
                text, name, lanes=lanes, interval_minutes=interval_minutes, stamp=stamp
            )
    days = list(exclude_days)
    return exclude(read, days) if days else read
