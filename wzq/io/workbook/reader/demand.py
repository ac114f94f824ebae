"""The demand: hourly (or 15-minute) counts from ``DemandTable``, or from AADT expanded
hour by hour (:func:`wzq.models.demand.hourly_from_aadt`)."""

from __future__ import annotations

import datetime as dt
from itertools import pairwise
from typing import Any

import numpy as np
from openpyxl.utils import range_boundaries
from openpyxl.worksheet.worksheet import Worksheet

from wzq.engine.plan import (
    Demand,
)
from wzq.io import counts as C
from wzq.io import fields as F
from wzq.io.workbook import formula_values as FV
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader.values import (
    _FLOW,
    _MISSING,
    _SHARES,
    DAYS_IN_1900,
    LAST_YEAR,
    MAX_DEMAND_VEH_H_LN,
    _blank,
    _fmt,
    _Row,
    _Table,
    _when,
    cell_ref,
    destinations,
)
from wzq.models.demand import hourly_from_aadt

__all__ = [
    "UNUSUAL_GROWTH_PERCENT",
    "DemandReader",
]

#: Traffic growth larger than this in size (percent per year) is queried: a few percent a
#: year is usual, and 20 is a slip for 2.0 more often than a forecast (common practice,
#: no source).
UNUSUAL_GROWTH_PERCENT = 10.0


class DemandReader:
    """Part of the workbook reader (:class:`wzq.io.workbook.reader.BookReader`)."""

    # -- demand -----------------------------------------------------------------------------

    def demand(self, lanes: Any) -> Demand | None:
        mode = self.field(F.DEMAND_MODE)
        if mode is _MISSING:
            return None
        self.unused_demand(mode)
        self.unused_history(mode)
        if mode == L.AADT:
            return self.demand_from_aadt()
        if mode == L.HISTORY:
            return self.demand_from_history(lanes)
        return self.demand_from_counts(lanes)

    def unused_demand(self, mode: str) -> None:
        """Warn when the demand input that the mode leaves unused is filled in."""
        switch = self.where_of[F.DEMAND_MODE.name]  # read by demand() before
        word = L.word_for(L.DEMAND_MODE_WORDS, mode)
        if mode == L.HISTORY:  # the counts table and the AADT inputs are both unused
            self.unused_table(switch, word, L.word_for(L.DEMAND_MODE_WORDS, L.HOURLY))
            self.unused_aadt(switch, word, L.word_for(L.DEMAND_MODE_WORDS, L.AADT))
            return
        other = L.word_for(L.DEMAND_MODE_WORDS, L.HOURLY if mode == L.AADT else L.AADT)
        if mode == L.AADT:
            self.unused_table(switch, word, other)
            return
        self.unused_aadt(switch, word, other)

    def unused_table(self, switch: str, word: str, other: str) -> None:
        """Warn when the counts table holds counts the demand mode leaves unused."""
        table = self.find_table(L.DEMAND_TABLE)
        if table is None:
            return
        ws, ref = table
        try:
            c0, r0, c1, r1 = range_boundaries(str(ref))
        except (ValueError, TypeError):
            return
        if None in (c0, r0, c1, r1):  # not a block of cells: its problem is said if used
            return
        filled = sorted(
            r
            for (r, c), cell in ws._cells.items()
            if r0 < r <= r1 and c0 <= c <= c1 and not _blank(cell.value)
        )
        if filled:
            self.note(
                cell_ref(ws.title, filled[0], c0),
                f"the table {L.DEMAND_TABLE} holds counts, but 'Demand is given as' "
                f"({switch}) is '{word}', so they are not used; clear them, or choose "
                f"'{other}'",
            )

    def unused_aadt(self, switch: str, word: str, other: str) -> None:
        """Warn when the AADT inputs are filled in but the demand mode leaves them unused."""
        for f in (F.AADT_FIELDS[0], F.AADT_FIELDS[4]):  # the AADT and the first day
            loc = self.peek(f.name)
            if loc is not None and not _blank(getattr(loc[0]._cells.get(loc[1:]), "value", None)):
                self.note(
                    cell_ref(loc[0].title, *loc[1:]),
                    f"{f.label} is filled in, but 'Demand is given as' ({switch}) is '{word}', "
                    f"so the AADT inputs are not used; clear them, or choose '{other}'",
                )
                return

    def find_table(self, name: str) -> tuple[Worksheet, Any] | None:
        """(sheet, table) of an input table by name, without recording a problem."""
        for ws in self.wb.worksheets:
            if ws.title in L.OUTPUT_SHEETS:
                continue
            for tname, ref in ws.tables.items():  # TableList.items(): (name, ref)
                if tname.casefold() == name.casefold():
                    return ws, ref
        return None

    def peek(self, name: str) -> tuple[Worksheet, int, int] | None:
        """The cell a defined name points at, without recording a problem."""
        dn = self.wb.defined_names.get(name)
        if dn is None:
            return None
        try:
            sheet, coord = next(iter(destinations(dn)))
            c0, r0, _, _ = range_boundaries(coord)  # reads "$B$9" as it is
        except Exception:
            return None
        ws = self._sheets.get(sheet)
        if ws is None or sheet in L.OUTPUT_SHEETS or c0 is None or r0 is None:
            return None
        return ws, r0, c0

    def demand_from_counts(self, lanes: Any) -> Demand | None:
        t = self.table(L.DEMAND_TABLE)
        if t is None:
            return None
        c_date, c_time, c_flow = L.DEMAND_COLUMNS
        entries: list[tuple[dt.datetime, float, int]] = []
        ok = True
        for r in self.rows(t):
            start = self.moment(t, r, c_date, c_time, "Start time")
            where = self.where(t, r.row, c_flow)
            x = self.convert(
                r.values[c_flow],
                _FLOW,
                where,
                percent_cell=self.percent_cell(t.ws, r.row, t.col(c_flow)),
            )
            if x == 0 and (t.ws.title, r.row, t.col(c_flow)) in self._formula_cells:
                formula = FV.formula_text(t.ws._cells[(r.row, t.col(c_flow))])
                self.note(
                    where,
                    f"Demand is 0 from the formula {formula}, read as an hour with no traffic; "
                    "check what it refers to (a formula pointing at an empty cell gives 0)",
                )
            if x is not _MISSING and isinstance(lanes, int) and x > MAX_DEMAND_VEH_H_LN * lanes:
                x = self.bad(
                    where,
                    f"Demand {_fmt(x)} veh/h is more than {MAX_DEMAND_VEH_H_LN:,.0f} veh/h per "
                    f"lane on {lanes} lanes; enter hourly flow in this direction only (not a "
                    "two-way count or a daily total)",
                )
            if start is _MISSING or x is _MISSING:
                ok = False
                continue
            entries.append((start, x, r.row))
        if not entries:
            if ok:
                self.bad(
                    cell_ref(t.ws.title, t.first_row, t.min_col),
                    f"the table {t.name} has no demand rows; type the hourly counts or set "
                    "'Demand is given as' to 'from AADT'",
                )
            return None
        return self.demand_grid(t, entries) if ok else None

    def moment(self, t: _Table, r: _Row, c_date: str, c_time: str, label: str) -> Any:
        """Date + time of day in a table row as one datetime."""
        dv, tv = r.values[c_date], r.values[c_time]
        if (
            type(dv) is dt.datetime
            and type(tv) is dt.time
            and dv.year <= LAST_YEAR
            and dv >= self.epoch + dt.timedelta(days=DAYS_IN_1900)
            and dv.time() == dt.time()
        ):  # a date cell and a time cell, as the template types them: what the rules below
            # give for them (a date past the serials taken for day counts, in this
            # workbook's date system, 1900 or 1904; a time of day)
            seconds = tv.hour * 3600 + tv.minute * 60 + tv.second
            return dt.datetime.combine(dv.date(), dt.time()) + dt.timedelta(seconds=seconds)
        d_where, t_where = self.where(t, r.row, c_date), self.where(t, r.row, c_time)
        if dv is _MISSING or tv is _MISSING:
            return _MISSING
        if _blank(tv) and isinstance(dv, dt.datetime) and dv.time() != dt.time():
            return dv  # a full date-time typed in the Date column
        clock = (
            self.bad(t_where, f"{label} is blank; type a time like 07:00")
            if _blank(tv)
            else self.clock(tv, label, t_where, allow_24=False)
        )
        if isinstance(clock, dt.datetime):
            if _blank(dv):
                return clock
            day = self.date(dv, "Date", d_where)
            if day is not _MISSING and day != clock.date():
                return self.bad(
                    t_where,
                    f"{label} holds the date {clock:%Y-%m-%d} but Date is {day:%Y-%m-%d}; "
                    "make them agree",
                )
            return clock
        day = (
            self.bad(d_where, "Date is blank; type the date, e.g. 2027-05-03")
            if _blank(dv)
            else self.date(dv, "Date", d_where)
        )
        if day is _MISSING or clock is _MISSING:
            return _MISSING
        return dt.datetime.combine(day, dt.time()) + dt.timedelta(seconds=clock.seconds)

    def demand_grid(self, t: _Table, entries: list[tuple[dt.datetime, float, int]]) -> Any:
        """Check the rows form one regular grid from the hour to the hour; build the demand."""
        c_time = L.DEMAND_COLUMNS[1]
        self.date_not_turned(t, entries)
        entries.sort(key=lambda e: e[0])
        before = len(self.problems)
        seen: dict[dt.datetime, int] = {}
        unique = []
        for when, flow, row in entries:
            if when in seen:
                fix = (
                    ": the hour the clocks repeat when summer time ends? wzq runs on the "
                    "clock, so keep one row for it, with the mean of the two hours' flows"
                    if C.dst_kind(when.date()) == "back" and when.hour in (1, 2)
                    else "; remove one of the two rows"
                )
                self.bad(
                    self.where(t, row, c_time),
                    f"the start time {_when(when)} is also in row {seen[when]}{fix}",
                )
                continue
            seen[when] = row
            unique.append((when, flow, row))
        times = [e[0] for e in unique]
        steps = [(b - a).total_seconds() for a, b in pairwise(times)]
        interval = int(min(steps)) if steps else 3600
        if steps and (interval % 60 or 3600 % interval):
            self.bad(
                self.where(t, unique[1][2], c_time),
                f"rows are {_fmt(interval / 60)} minutes apart; use hourly or 15-minute rows "
                "(any whole number of minutes that divides an hour)",
            )
            return None
        for (a, _, ra), (b, _, rb) in pairwise(unique):
            step = (b - a).total_seconds()
            if step == interval:
                continue
            if step % interval == 0:
                gap = a + dt.timedelta(seconds=interval)
                skipped = (
                    C.dst_kind(gap.date()) == "forward"
                    and (gap.hour, gap.minute) == (2, 0)
                    and b - gap == dt.timedelta(hours=1)
                )
                fix = (
                    ": the hour the clocks skip when summer time starts? wzq runs on the "
                    "clock, so type a row for it (the mean of the hours either side)"
                    if skipped
                    else "; add the missing rows"
                )
                self.bad(
                    self.where(t, rb, c_time),
                    f"no demand from {_when(gap)} to {_when(b)} (between rows {ra} and {rb}){fix}",
                )
            else:
                self.bad(
                    self.where(t, rb, c_time),
                    f"rows {ra} and {rb} are {_fmt(step / 60)} minutes apart but other rows "
                    f"are {_fmt(interval / 60)} minutes apart; use one interval throughout",
                )
        first, last = unique[0], unique[-1]
        if first[0].minute or first[0].second:
            self.bad(
                self.where(t, first[2], c_time),
                f"the demand must start on the hour, but the earliest row starts at "
                f"{first[0]:%H:%M}; add rows back to {first[0]:%H}:00",
            )
        end = last[0] + dt.timedelta(seconds=interval)
        if end.minute or end.second:
            self.bad(
                self.where(t, last[2], c_time),
                f"the demand must cover whole hours, but it ends at {end:%H:%M}; add rows up "
                "to the next full hour",
            )
        if first[0].hour == end.hour == 1 and interval == 3600 and len(unique) >= 24:
            self.note(  # the fingerprint of counts labelled by the hour they end
                self.where(t, first[2], c_time),
                f"the demand runs from {_when(first[0])} to {_when(end)}: if the times are "
                "the hour each count ends (01:00 to 24:00), every count is read an hour "
                "late; Start time is the hour it starts (the count of 00:00-01:00 goes in "
                "the 00:00 row)",
            )
        if len(self.problems) > before:
            return None
        self._demand_rows = [self.where(t, row, L.DEMAND_COLUMNS[2]) for _, _, row in unique]
        return Demand(first[0], interval, np.array([e[1] for e in unique]))

    def date_not_turned(self, t: _Table, entries: list[tuple[dt.datetime, float, int]]) -> None:
        """Warn where a row typed right below the day's last interval starts at 00:00 of the
        same date: counts running past midnight typed without the next date, which the
        rows, read in time order, put in the early morning of the date typed."""
        hour = dt.timedelta(hours=1)
        turned = [
            (before, after)
            for before, after in pairwise(entries)
            if after[0].date() == before[0].date()  # so less than a day apart: the sum is > 0
            and after[0] + dt.timedelta(days=1) - before[0] <= hour
        ]
        if not turned:
            return
        (was, _, r0), (when, _, r1) = turned[0]
        more = f" ({len(turned)} places in all)" if len(turned) > 1 else ""
        self.note(
            self.where(t, r1, L.DEMAND_COLUMNS[1]),
            f"this row is typed right below {_when(was)} (row {r0}) but keeps its date, so "
            f"it is read as {_when(when)}, the early morning of that day{more}; if these "
            f"counts run past midnight, type the next date "
            f"({when + dt.timedelta(days=1):%Y-%m-%d}) from this row on",
        )

    def demand_from_aadt(self) -> Demand | None:
        v = {f.name: self.field(f) for f in F.AADT_FIELDS}
        shares = self.hourly_shares()
        if any(x is _MISSING for x in v.values()) or shares is None:
            return None
        first: dt.date = v["aadt_first_day"]
        self.aadt_years(v["aadt_count_year"], v["aadt_growth_percent"] or 0.0, first.year)
        weekday, weekend = shares
        flows = hourly_from_aadt(
            v["aadt_value"],
            v["aadt_count_year"],
            v["aadt_growth_percent"],
            v["aadt_direction_percent"],
            first,
            v["aadt_days"],
            weekday,
            weekend,
        )
        self._demand_rows = [self.where_of["aadt_value"]] * len(flows)
        return Demand(dt.datetime.combine(first, dt.time()), 3600, np.array(flows))

    def aadt_years(self, year: int, growth: float, plan_year: int) -> None:
        """Query a count year after the plan's (the AADT taken back in time) and a growth
        rate above :data:`UNUSUAL_GROWTH_PERCENT` over the years it is applied."""
        if year > plan_year:
            self.note(
                self.where_of["aadt_count_year"],
                f"Year of the count {year} is after the year of the first day ({plan_year}): "
                f"the AADT is taken back {year - plan_year} year{'s' * (year - plan_year > 1)} "
                f"at {_fmt(growth)} % a year; check the year, unless the AADT is a forecast",
            )
        years = plan_year - year
        if years > 0:
            total = ((1 + growth / 100.0) ** years - 1) * 100.0
            self.unusual_growth(
                "aadt_growth_percent",
                growth,
                f": {total:,.0f} % in all over {years} year{'s' * (years > 1)} from the count "
                f"({year})",
            )

    def unusual_growth(self, name: str, growth: float, applied: str = "") -> None:
        """Query a growth rate above :data:`UNUSUAL_GROWTH_PERCENT` a year in size (``applied``
        says what it comes to)."""
        if abs(growth) > UNUSUAL_GROWTH_PERCENT:
            self.note(
                self.where_of[name],
                f"Traffic growth {_fmt(growth)} % a year is unusual{applied}; check the value "
                "(a few % a year is usual)",
            )

    def hourly_shares(self) -> tuple[list[float], list[float]] | None:
        t = self.table(L.SHARE_TABLE)
        if t is None:
            return None
        c_hour, c_wd, c_we = L.SHARE_COLUMNS
        by_hour: dict[int, tuple[float, float]] = {}
        ok = True
        for r in self.rows(t):
            hw = self.where(t, r.row, c_hour)
            h = r.values[c_hour]
            if isinstance(h, int | float) and not isinstance(h, bool) and h >= 1:
                hour: Any = (
                    int(h)
                    if h < 24 and h == int(h)
                    else self.bad(
                        hw, f"Hour {_fmt(h)} is not an hour of the day; use 0-23 or 00:00-23:00"
                    )
                )
            elif _blank(h):
                hour = self.bad(hw, "Hour is blank; type the hour the share starts, e.g. 07:00")
            else:
                c = self.clock(h, "Hour", hw, allow_24=False)
                if isinstance(c, dt.datetime):
                    c = self.bad(hw, "Hour holds a date; type only the hour, e.g. 07:00")
                if c is not _MISSING and c.seconds % 3600:
                    c = self.bad(hw, "Hour must be a whole hour, e.g. 07:00")
                hour = _MISSING if c is _MISSING else c.seconds // 3600
            pair = [
                self.convert(
                    r.values[col],
                    _SHARES[col],
                    self.where(t, r.row, col),
                    percent_cell=self.percent_cell(t.ws, r.row, t.col(col)),
                    hint=False,
                )
                for col in (c_wd, c_we)
            ]
            if hour is _MISSING or _MISSING in pair:
                ok = False
                continue
            if hour in by_hour:
                self.bad(hw, f"hour {hour:02d}:00 appears twice; keep one row per hour")
                ok = False
                continue
            by_hour[hour] = (pair[0], pair[1])
        if not ok:
            return None
        missing = [h for h in range(24) if h not in by_hour]
        if missing:
            self.bad(
                cell_ref(t.ws.title, t.header_row, t.col(c_hour)),
                f"{t.name} has no share for hour(s) "
                f"{', '.join(f'{h:02d}:00' for h in missing)}; give all 24 hours",
            )
            return None
        weekday = [by_hour[h][0] for h in range(24)]
        weekend = [by_hour[h][1] for h in range(24)]
        for col, values in ((c_wd, weekday), (c_we, weekend)):
            total = sum(values)
            if abs(total - 100.0) > L.SHARE_SUM_TOLERANCE:
                fractions = abs(total - 1.0) <= L.SHARE_SUM_TOLERANCE / 100.0
                self.bad(
                    cell_ref(t.ws.title, t.header_row, t.col(col)),
                    f"the column '{col}' sums to {total:.1f} %, not 100 %; "
                    + (
                        "the shares look like fractions: type them as percentages (7 for "
                        "7 %), or format the cells as percentages"
                        if fractions
                        else "correct the shares"
                    ),
                )
                ok = False
        return (weekday, weekend) if ok else None
