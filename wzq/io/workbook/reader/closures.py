"""The closures from ``ClosureTable``: dates, times, lanes, barrier, night, capacity
override and note; ends after midnight; overlaps."""

from __future__ import annotations

import datetime as dt
from typing import Any

from wzq.engine.plan import (
    Closure,
    Demand,
)
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader.values import (
    _BARRIER,
    _LANES_CLOSED,
    _MISSING,
    _NIGHT,
    _NOTE,
    _OVERRIDE,
    _blank,
    _fmt,
    _when,
)

__all__ = [
    "ClosureReader",
]


class ClosureReader:
    """Part of the workbook reader (:class:`wzq.io.workbook.reader.BookReader`)."""

    # -- closures ---------------------------------------------------------------------------

    def closures(self, lanes: Any, demand: Demand | None) -> list[Closure] | None:
        t = self.table(L.CLOSURE_TABLE)
        if t is None:
            return None
        c_date, c_from, c_to, c_lanes, c_barrier, c_night, c_override, c_note = L.CLOSURE_COLUMNS
        found: list[tuple[Closure, int]] = []
        ok = True
        for r in self.rows(t):
            w = lambda h, r=r: self.where(t, r.row, h)  # noqa: E731
            start = self.moment(t, r, c_date, c_from, "From")
            end = self.closure_end(r.values[c_to], start, w(c_to))
            self.twelve_hour_clock(start, end, w(c_from))
            n = self.convert(r.values[c_lanes], _LANES_CLOSED, w(c_lanes))
            if n is not _MISSING and isinstance(lanes, int) and n >= lanes:
                what = (
                    f"all {lanes} lanes closed"
                    if n == lanes
                    else f"{n} lanes closed but the road has {lanes}"
                )
                n = self.bad(
                    w(c_lanes),
                    f"{what}; at least one lane must stay open (a full closure needs a detour "
                    "plan, not this analysis)",
                )
            barrier = self.convert(r.values[c_barrier], _BARRIER, w(c_barrier))
            night = self.convert(r.values[c_night], _NIGHT, w(c_night))
            override = self.convert(r.values[c_override], _OVERRIDE, w(c_override))
            note = self.convert(r.values[c_note], _NOTE, w(c_note))
            parts = (start, end, n, barrier, night, override, note)
            if any(p is _MISSING for p in parts):
                ok = False
                continue
            closure = Closure(
                start=start,
                end=end,
                lanes_closed=n,
                barrier=barrier,
                night=night,
                capacity_override_veh_h_ln=override,
                note=note,
            )
            if demand is not None and (closure.start < demand.start or closure.end > demand.end):
                self.bad(
                    w(c_date),
                    f"the closure {_when(closure.start)} to {_when(closure.end)} lies outside "
                    f"the demand period {_when(demand.start)} to {_when(demand.end)}; extend "
                    "the demand or move the closure",
                )
            found.append((closure, r.row))
        found.sort(key=lambda e: e[0].start)
        latest: tuple[Closure, int] | None = None  # the earlier closure that ends last
        for b, rb in found:
            if latest is not None and b.start < latest[0].end:
                a, ra = latest
                self.bad(
                    self.where(t, rb, c_from),
                    f"this closure ({_when(b.start)} to {_when(b.end)}) overlaps the one in row "
                    f"{ra} ({_when(a.start)} to {_when(a.end)}); one closure at a time: merge "
                    "them or move one",
                )
                ok = False
            if latest is None or b.end > latest[0].end:
                latest = (b, rb)
        self._closure_rows = [self.where(t, row, c_date) for _, row in found]
        self._closure_notes = [self.where(t, row, c_note) for _, row in found]
        self._closure_overrides = [self.where(t, row, c_override) for _, row in found]
        return [c for c, _ in found] if ok else None

    def twelve_hour_clock(self, start: Any, end: Any, where: str) -> None:
        """Query a closure from a morning time to an earlier morning time the next day
        ('9:00 to 5:00'): more than 12 hours through the day, or a night closure typed on
        the 12-hour clock (9 pm to 5 am)."""
        if start is _MISSING or end is _MISSING:
            return
        # the next day, at an earlier time than From, before noon: from 12 to 24 hours long
        next_day = end.date() == start.date() + dt.timedelta(days=1)
        if next_day and end.time() < start.time() < dt.time(12):
            self.note(
                where,
                f"From {start:%H:%M} to {end:%H:%M} is read as a closure of "
                f"{_fmt((end - start) / dt.timedelta(hours=1))} hours, to {_when(end)}; times "
                f"are on the 24-hour clock: if the closure starts in the evening, type "
                f"{start.hour + 12}:{start:%M} in From",
            )

    def closure_end(self, v: Any, start: Any, where: str) -> Any:
        """End of a closure from ``To``: next day if at or before ``From``; 24:00 is midnight."""
        if v is _MISSING:
            return v
        if _blank(v):
            return self.bad(where, "To is blank; type the end time, e.g. 05:00")
        c = self.clock(v, "To", where, allow_24=True)
        if c is _MISSING or start is _MISSING:
            return _MISSING
        if isinstance(c, dt.datetime):
            if c <= start:
                return self.bad(
                    where,
                    f"the closure ends ({_when(c)}) before it starts ({_when(start)}); check "
                    "the date and time in To",
                )
            return c
        day = dt.datetime.combine(start.date(), dt.time())
        end = day + dt.timedelta(seconds=c.seconds)
        if end == start:  # To typed as From: a whole day, or a slip for another time
            self.note(
                where,
                f"To is the same time as From ({start:%H:%M}): read as a closure of 24 hours, "
                f"to {_when(end + dt.timedelta(days=1))} (a To at or before From ends the "
                "next day); if the closure is shorter, correct To",
            )
        if end <= start:
            end += dt.timedelta(days=1)
        return end
