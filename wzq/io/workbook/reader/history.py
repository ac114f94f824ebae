"""The demand from a count history, and the risk options.

The Demand sheet's third way to give demand ('from a count history'): the counts
are read from a sheet of this workbook (the template's Count history sheet or one of the
user's) or from a count file named on the Demand sheet, relative to the
workbook's folder (:mod:`wzq.io.counts`: TMG volume records, CSV, Excel; long or
wide form); the design demand is built by
:func:`wzq.engine.design_demand.design_demand` and the history is kept in the plan
for the risk assessment (:mod:`wzq.engine.risk`), whose options are on the Limits
sheet. Every problem names its sheet and cell (or the count file's line).
"""

from __future__ import annotations

import datetime as dt
import re
from pathlib import Path
from typing import Any

from openpyxl.worksheet.worksheet import Worksheet

from wzq.engine.design_demand import (
    DemandHistory,
    DemandRule,
    design_demand,
    historical_scenarios,
)
from wzq.engine.plan import Demand, PlanError, RiskOptions
from wzq.io import counts as C
from wzq.io import fields as F
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader.values import _MISSING, _blank, cell_ref

__all__ = [
    "HistoryReader",
    "parse_dates",
]

_DATE = re.compile(r"(\d{4})-(\d{1,2})-(\d{1,2})(?:[ T]00:00(?::00)?)?")
_SEPARATORS = re.compile(r"[,;\n]+")
#: Warnings about unusual counted days named one by one, at most.
_UNUSUAL_SHOWN = 3


def parse_dates(text: str) -> tuple[tuple[dt.date, ...], list[str]]:
    """Dates typed in one cell (``2026-12-25, 2027-01-01``): the dates and the pieces
    that are not dates."""
    out: list[dt.date] = []
    bad: list[str] = []
    for piece in _SEPARATORS.split(text):
        piece = piece.strip()
        if not piece:
            continue
        m = _DATE.fullmatch(piece)
        try:
            if m is None:
                raise ValueError
            out.append(dt.date(int(m.group(1)), int(m.group(2)), int(m.group(3))))
        except ValueError:
            bad.append(piece)
    return tuple(out), bad


class HistoryReader:
    """Part of the workbook reader (:class:`wzq.io.workbook.reader.BookReader`)."""

    # -- the count history ------------------------------------------------------------------

    def demand_from_history(self, lanes: Any = None) -> Demand | None:
        """The design demand from the count history; the history kept for the risk.
        ``lanes``: the lanes in normal operation (Site sheet), when read."""
        v = {f.name: self.field(f) for f in F.HISTORY_FIELDS}
        holidays = self.date_list("history_holidays", v)
        exclude = self.date_list("history_exclude_days", v)
        if any(x is _MISSING for x in (*v.values(), holidays, exclude)):
            return None
        read = self.count_history(v, exclude)
        if read is None:
            return None
        self.unusual_growth("history_growth_percent", v["history_growth_percent"] or 0.0)
        rule = DemandRule(
            day_types=v["history_day_types"],
            holidays=holidays,
            window_weeks=v["history_window_weeks"],
            same_months=v["history_same_months"],
            growth_percent_per_year=v["history_growth_percent"],
            percentile=v["history_percentile"],
        )
        counts = read.history
        start = dt.datetime.combine(v["history_first_day"], dt.time())
        n = round(v["history_days"] * 24 * 3600 / counts.interval_s)
        try:
            designed = design_demand(counts, start, n, rule)
            historical_scenarios(counts, start, n, rule)  # the risk needs at least one period
        except PlanError as e:
            for p in e.problems:
                self.bad(self.history_cell(p.where), p.message)
            return None
        self.unusual_days(read, v["history_source"], holidays)
        self.fewer_lanes_counted(v["history_lanes"], read, lanes)
        source = self.where_of["history_source"]
        on_sheet = self._history_sheet is not None
        reading = () if on_sheet else self.history_reading(v)
        self._history = DemandHistory(
            counts, rule, "" if on_sheet else v["history_source"], reading
        )
        self._demand_rows = [source] * n
        return designed.demand

    def fewer_lanes_counted(self, typed: int | None, read: Any, lanes: Any) -> None:
        """Warn when the counts are of fewer lanes than the road has
        (:func:`wzq.io.counts.fewer_lanes`), at 'Lanes counted' or else the count file."""
        if not isinstance(lanes, int):
            return
        site = self.where_of.get("site_lanes", L.SITE)
        said = C.fewer_lanes(typed, read, lanes, "Lanes counted", site)
        if said:
            name = "history_lanes" if typed is not None else "history_source"
            self.note(self.where_of[name], said)

    def date_list(self, name: str, values: dict[str, Any]) -> Any:
        """The dates typed in a text cell, or ``_MISSING`` after a problem."""
        text = values[name]
        if text is _MISSING:
            return _MISSING
        dates, bad = parse_dates(text or "")
        if bad:
            label = F.FIELDS_BY_NAME[name].label
            return self.bad(
                self.where_of.get(name, name),
                f"{label}: {', '.join(repr(b) for b in bad[:3])} "
                f"{'is not a date' if len(bad) == 1 else 'are not dates'}; type dates like "
                "2026-12-25, separated by commas",
            )
        return dates

    def history_sheet(self, name: str) -> Worksheet | None:
        """The input sheet of this workbook called ``name`` (case aside), if any."""
        for ws in self.wb.worksheets:
            if ws.title.casefold() == name.strip().casefold() and ws.title not in L.OUTPUT_SHEETS:
                return ws
        return None

    def count_history(self, v: dict[str, Any], exclude: tuple[dt.date, ...]) -> Any:
        """The counts as read (:class:`wzq.io.counts.CountRead`), or ``None`` after a problem."""
        source = v["history_source"]
        where = self.where_of["history_source"]
        ws = self.history_sheet(source)
        self._history_sheet = ws
        try:
            if ws is not None:
                read = C.read_table(
                    self.sheet_rows(ws),
                    f"sheet '{ws.title}'",
                    lanes=v["history_lanes"],
                    stamp=v["history_stamp"],
                    kind=f"sheet '{ws.title}'",
                )
                return C.exclude(read, exclude) if exclude else read
            path = Path(source)
            if not path.is_absolute():
                if self.folder is None:
                    self.bad(
                        where,
                        f"'{source}' is neither a sheet of this workbook nor a file wzq can find "
                        "(the workbook's folder is not known); give the file's full path",
                    )
                    return None
                path = self.folder / path
            if not path.is_file():
                sheets = ", ".join(
                    f"'{s.title}'" for s in self.wb.worksheets if s.title not in L.OUTPUT_SHEETS
                )
                self.bad(
                    where,
                    f"'{source}' is neither a sheet of this workbook ({sheets}) nor a file "
                    f"(looked for {path}); name the sheet holding the counts, or the count "
                    "file relative to this workbook's folder",
                )
                return None
            return C.read_counts(
                path,
                sheet=v["history_file_sheet"],
                station=v["history_station"],
                direction=v["history_direction"],
                lanes=v["history_lanes"],
                stamp=v["history_stamp"],
                exclude_days=exclude,
            )
        except PlanError as e:
            for p in e.problems:
                self.bad(self.count_place(p.where, source, where), p.message)
            return None

    def count_place(self, place: str, source: str, where: str) -> str:
        """Where a count-file problem lies: its line or cell, or the cell naming the file."""
        if place in (Path(source).name, f"sheet '{source}'", "stamp", "edition", source):
            return f"{where} ({source})"
        if place.startswith("sheet '"):
            return f"{where} ({place})"
        return place

    def sheet_rows(self, ws: Worksheet) -> list[C.Row]:
        """Every row of a sheet as :func:`wzq.io.counts.read_table` reads it, each value as
        the cell shows it (a formula's saved result)."""
        held = ws._cells
        if not held:
            return []
        last_row = max(r for r, _ in held)
        last_col = max(c for _, c in held)
        rows: list[C.Row] = []
        title = ws.title
        for r in range(1, last_row + 1):
            values = []
            for c in range(1, last_col + 1):
                x = self.raw(ws, r, c) if (r, c) in held else None
                values.append(None if x is _MISSING else x)
            rows.append((r, lambda j, r=r: cell_ref(title, r, j + 1), values))
        return rows

    def history_cell(self, key: str) -> str:
        """The cell of a design-demand problem's key (``history.window_weeks`` ...)."""
        by_key = {f.key: f.name for f in F.HISTORY_FIELDS}
        name = by_key.get(key) or by_key.get(f"demand.{key}")
        if name is None and key in ("history", "demand.start"):
            name = "history_source" if key == "history" else "history_first_day"
        return self.where_of.get(name or "history_source", self.source)

    def history_reading(self, v: dict[str, Any]) -> tuple[tuple[str, object], ...]:
        """How the count file was read, as the JSON ``demand.history`` block names it."""
        out: list[tuple[str, object]] = [("file", v["history_source"])]
        for key, name in (
            ("sheet", "history_file_sheet"),
            ("station", "history_station"),
            ("direction", "history_direction"),
            ("lanes", "history_lanes"),
        ):
            if v[name] is not None:
                out.append((key, v[name]))
        if v["history_stamp"] != "start":
            out.append(("stamp", v["history_stamp"]))
        return tuple(out)

    def unusual_days(self, read: Any, source: str, holidays: tuple[dt.date, ...]) -> None:
        """Counted days that look unusual (a lane out, a fault), said once for the history;
        listed holidays are a day type of their own, so they are not queried. What reading
        found about the counts as a whole (time stamps at the ends of the intervals, a line
        repeated) is said in full, each on its own: the advice for an unusual day (leave it
        out) is not theirs."""
        place = f"sheet '{self._history_sheet.title}'" if self._history_sheet else source
        for w in read.warnings:  # what reading found about the counts as a whole, in full
            if w not in read.unusual:
                self.note(self.where_of["history_source"], f"the counts on {place}: {w}")
        listed = {d.isoformat() for d in holidays}
        # each starts with the day ("Thu 2026-01-01: ..."); its first clause says why
        found = [w.split("; ")[0].split("?")[0] for w in read.unusual if w[4:14] not in listed]
        if not found:
            return
        shown = "; ".join(found[:_UNUSUAL_SHOWN])
        more = f"; and {len(found) - _UNUSUAL_SHOWN} more" if len(found) > _UNUSUAL_SHOWN else ""
        days = f"{len(found)} counted days" if len(found) != 1 else "1 counted day"
        self.note(
            self.where_of["history_source"],
            f"{days} on {place} look{'s' if len(found) == 1 else ''} unusual: {shown}{more}. "
            "They are used; list any that is not real traffic in 'Days to leave out' "
            "(`wzq counts` shows a count file's history)",
        )

    # -- the risk options -------------------------------------------------------------------

    def risk_options(self, history: bool) -> Any:
        """The Limits sheet's risk options: ``None`` when the plan asks for no risk (no count
        history and no capacity spread), ``_MISSING`` after a problem."""
        v = {f.name: self.field(f) for f in F.RISK_FIELDS}
        if any(x is _MISSING for x in v.values()):
            return _MISSING
        values = {
            f.attribute.split(".", 1)[1]: F.to_plan(f, v[f.name], self.system or "us")
            for f in F.RISK_FIELDS
        }
        if not history and values["capacity_cv"] is None:
            if values["window_risk"] is not None:
                field = F.FIELDS_BY_NAME["risk_window_percent"]
                self.note(
                    self.where_of.get(field.name, field.name),
                    f"'{field.label}' is filled in, but the demand is not a count history and "
                    "no capacity spread is given, so the closure windows are searched on the "
                    "plan's demand alone; choose 'from a count history', or give the "
                    "capacity coefficient of variation",
                )
            return None
        return RiskOptions(**values)

    def unused_history(self, mode: str) -> None:
        """Warn when the count history's first day, or the Count history sheet, is filled in but
        another mode is chosen."""
        if mode == L.HISTORY:
            return
        self.unused_counts_sheet(mode)
        loc = self.peek("history_first_day")
        if loc is None:
            return
        if _blank(getattr(loc[0]._cells.get(loc[1:]), "value", None)):
            return
        switch = self.where_of.get(F.DEMAND_MODE.name, F.DEMAND_MODE.name)
        word = L.word_for(L.DEMAND_MODE_WORDS, mode)
        other = L.word_for(L.DEMAND_MODE_WORDS, L.HISTORY)
        self.note(
            cell_ref(loc[0].title, *loc[1:]),
            f"First day of the plan is filled in for the count history, but 'Demand is given "
            f"as' ({switch}) is '{word}', so the count history is not used; clear it, or "
            f"choose '{other}'",
        )

    def unused_counts_sheet(self, mode: str) -> None:
        """Warn when the template's Count history sheet holds counts the demand mode leaves
        unused."""
        ws = self.history_sheet(L.COUNTS)
        if ws is None:
            return
        filled = sorted(
            (r, c) for (r, c), cell in ws._cells.items() if r > 1 and not _blank(cell.value)
        )
        if not filled:
            return
        switch = self.where_of.get(F.DEMAND_MODE.name, F.DEMAND_MODE.name)
        word = L.word_for(L.DEMAND_MODE_WORDS, mode)
        other = L.word_for(L.DEMAND_MODE_WORDS, L.HISTORY)
        self.note(
            cell_ref(ws.title, *filled[0]),
            f"the {L.COUNTS} sheet holds counts, but 'Demand is given as' ({switch}) is "
            f"'{word}', so they are not used; choose '{other}' to design the demand from them",
        )
