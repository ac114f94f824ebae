"""The plan as a whole: every input read, the costs, the checks across inputs, where
each value was typed, and the plan assembled from the schema of inputs
(:mod:`wzq.io.fields`)."""

from __future__ import annotations

import re
from typing import Any

from wzq.engine.plan import (
    Closure,
    Costs,
    Demand,
    Meta,
    Options,
    Plan,
    PlanError,
    Problem,
    Site,
    Thresholds,
)
from wzq.io import fields as F
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader.tables import block
from wzq.io.workbook.reader.values import (
    _JSON_KEYS,
    _MISSING,
    _PLAN_KEYS,
    _blank,
    _fmt,
    cell_ref,
)

#: How spreadsheet programs name the copy of a sheet ("Demand (2)", "Demand_2") and of
#: the table it holds ("DemandTable2", "DemandTable_2").
_COPY_TITLE = re.compile(r"(.+?)(?:\s*\(\d+\)|_\d+)")
_COPY_TABLE = re.compile(r"(.+?)_?\d+")
_INPUT_TABLES = (
    L.DEMAND_TABLE,
    L.SHARE_TABLE,
    L.CLOSURE_TABLE,
    L.LANDMARK_TABLE,
    L.RAMP_FLOW_TABLE,
)

__all__ = [
    "PlanReader",
]


class PlanReader:
    """Part of the workbook reader (:class:`wzq.io.workbook.reader.BookReader`)."""

    # -- the plan ---------------------------------------------------------------------------

    def plan(self) -> Plan:
        ours = {t.casefold() for t in L.TABLE_COLUMNS}
        if not any(self.wb.defined_names.get(f.name) is not None for f in F.ALL_FIELDS) and not any(
            t.casefold() in ours for ws in self.wb.worksheets for t in ws.tables
        ):
            raise PlanError(
                "this workbook has none of the wzq input names or tables; start from a "
                "workbook made by `wzq new` and copy your inputs into it",
                where=self.source,
            )
        system = self.field(F.UNIT_SYSTEM)
        self.system = None if system is _MISSING else system
        site_fields = (f for s in F.SITE_SECTIONS for f in s.fields)
        values = {
            f.name: self.field(f)
            for f in (*F.META_FIELDS, *site_fields, *F.THRESHOLD_FIELDS, *F.OPTION_FIELDS)
        }
        self.check_speeds(values)
        self.check_congested_branch(values)
        self.check_sheet_names()
        self.copied_sheets()
        self.hidden_sheets()
        self.commented_blanks()
        costs = self.costs()
        demand = self.demand(values.get("site_lanes"))
        risk = self.risk_options(self._history is not None)
        closures = self.closures(values.get("site_lanes"), demand)
        approach = self.approach(demand)
        self.match_limit(values, approach)
        if self.problems:
            raise PlanError(self.explain_below(self.problems))
        plan_kw = self.assemble(values, costs, demand, closures)
        plan_kw["approach"] = approach
        plan_kw.update(history=self._history, risk=risk)
        try:
            return Plan(**plan_kw, input_warnings=tuple(self.warnings), locations=self.locations())
        except PlanError as e:
            mapped = [Problem(self.map_key(p.where), p.message) for p in e.problems]
            raise PlanError(mapped) from None

    def check_sheet_names(self) -> None:
        """Refuse a sheet of the user's that carries the name of one of wzq's output sheets
        (``wzq run`` would have to replace it)."""
        ours = set(L.written_sheets(self.wb))
        names = ", ".join(f"'{n}'" for n in L.OUTPUT_SHEETS)
        for ws in self.wb.worksheets:
            clash = [n for n in L.OUTPUT_SHEETS if n.casefold() == ws.title.casefold()]
            if clash and ws.title not in ours:
                self.bad(
                    f"sheet '{ws.title}'",
                    "this sheet of yours has the name of a sheet wzq writes its results to "
                    f"({names}), so `wzq run` would have to replace it; rename it",
                )

    def hidden_sheets(self) -> None:
        """Warn about a hidden input sheet: its inputs are read, but nobody sees them (the
        Count history sheet is read only when chosen, and said then if it is wrong)."""
        for name in L.INPUT_SHEETS:
            ws = self._sheets.get(name)
            if name == L.COUNTS or ws is None or ws.sheet_state == "visible":
                continue
            how = (
                "very hidden (only a macro or the VBA editor unhides it)"
                if ws.sheet_state == "veryHidden"
                else "hidden"
            )
            self.note(
                f"sheet '{name}'",
                f"this input sheet is {how}, and its inputs are read as typed; unhide it to "
                "see them",
            )

    def commented_blanks(self) -> None:
        """Warn about a blank input cell that carries a comment: what the cell stands for
        (its default, or nothing) is used, and the comment, which wzq never reads, may
        hold the value meant (typed as a note instead of in the cell)."""
        cells = []
        for f in F.ALL_FIELDS:
            at = self.peek(f.name)  # None: a field without a name, or a name not defined
            if at is not None:
                cells.append((f.label, at[0], at[0]._cells.get(at[1:])))
        for table in _INPUT_TABLES:  # the cells of the tables' rows, under their headers
            found = self.find_table(table)
            bounds = block(found[1]) if found else None
            if bounds is None:  # no table, or not a block (the table reader names it)
                continue
            ws = found[0]
            left, top, right, bottom = bounds
            for (r, c), cell in sorted(ws._cells.items()):
                if top < r <= bottom and left <= c <= right:
                    head = ws._cells.get((top, c))  # the column's header cell
                    unnamed = head is None or _blank(head.value)
                    cells.append(("this cell" if unnamed else str(head.value), ws, cell))
        for label, ws, cell in cells:
            if cell is None or cell.comment is None or not _blank(cell.value):
                continue
            said = " ".join(str(cell.comment.text).split())
            said = said if len(said) <= 80 else said[:79] + "..."
            self.note(
                cell_ref(ws.title, cell.row, cell.column),
                f"{label} is left blank (read as a blank cell is there), but its comment "
                f"reads '{said}'; wzq never reads comments: type the value in the cell if "
                "the comment holds it",
            )

    def copied_sheets(self) -> None:
        """Warn about a copy of an input sheet ("Demand (2)" as Excel names it, "Demand_2"
        as LibreOffice does), a sheet holding a copy of an input table ("DemandTable2"), or
        one holding sheet-level copies of the workbook's names that point into an input
        sheet (as Excel copies them, whatever the copy is renamed to; they name the sheet
        copied before the copy's title does): only the input sheet itself is read, so
        values typed on the copy are not used."""
        counts = self.peek("history_file_sheet")
        cell = counts[0]._cells.get(counts[1:]) if counts else None
        chosen = getattr(cell, "value", None)  # the sheet chosen to hold the count history
        counts_on = str(chosen).strip().casefold() if chosen else None
        inputs = {n.casefold(): n for n in L.INPUT_SHEETS}
        tables = {n.casefold(): n for n in _INPUT_TABLES}
        for ws in self.wb.worksheets:
            title = ws.title
            if title in L.INPUT_SHEETS or title in L.OUTPUT_SHEETS:
                continue
            if title.strip().casefold() == counts_on:
                continue  # a sheet chosen to hold the count history is read
            # Excel gives the copy of a sheet its own (sheet-level) copies of the
            # workbook's names that point at the sheet copied (the template's, the
            # designer's own): they say which sheet was copied whatever the copy is
            # renamed to, so they come before its title
            home = None
            for name in ws.defined_names:
                at = self.peek(name)
                home = at[0].title if at and at[0].title in L.INPUT_SHEETS else home
            m = _COPY_TITLE.fullmatch(title.strip())
            home = home or (inputs.get(m.group(1).casefold()) if m else None)
            for name in ws.tables:
                m = _COPY_TABLE.fullmatch(name)
                table = tables.get(m.group(1).casefold()) if m else None
                found = self.find_table(table) if table and home is None else None
                home = found[0].title if found else home
            if home is not None:
                self.note(
                    f"sheet '{title}'",
                    f"this sheet looks like a copy of the input sheet '{home}' and is not "
                    f"read: the plan is read from '{home}' only; type your changes there, "
                    "or delete the copy",
                )

    def explain_below(self, problems: list[Problem]) -> list[Problem]:
        """Problems in rows read from below a table say why those rows were read."""
        if not self._below:
            return problems
        out = []
        for p in problems:
            m = re.fullmatch(r"(?:'(.+)'|([^!']+))!([A-Z]+)(\d+)", p.where)
            table = None
            if m:
                sheet = (m.group(1) or "").replace("''", "'") or m.group(2)
                table = self._below.get((sheet, int(m.group(4))))
            if table is None:
                out.append(p)
                continue
            out.append(
                Problem(
                    p.where,
                    f"{p.message} (this row lies below the table {table} and is read as part of "
                    "it; if it is not part of the plan, move it out of the table's columns)",
                )
            )
        return out

    def locations(self) -> dict[str, str]:
        """Plan keys (JSON form) -> the cell each was typed in, for later messages."""
        out = {}
        for name, where in self.where_of.items():
            key = _JSON_KEYS.get(name)
            if key is not None:
                out[key] = where
        for i, where in enumerate(self._demand_rows):
            out[f"demand.veh_h[{i}]"] = where
        for i, (row, note) in enumerate(zip(self._closure_rows, self._closure_notes, strict=False)):
            out[f"closures[{i}]"] = row
            out[f"closures[{i}].note"] = note
        for i, where in enumerate(self._closure_overrides):
            out[f"closures[{i}].capacity_override_veh_h_ln"] = where
        out.update(self.approach_locations())
        return out

    def check_speeds(self, v: dict[str, Any]) -> None:
        limit, wz = v.get("site_speed_limit"), v.get("site_work_zone_speed_limit")
        if isinstance(limit, float) and isinstance(wz, float) and wz > limit:
            self.bad(
                self.where_of["site_work_zone_speed_limit"],
                f"the work-zone speed limit ({_fmt(wz)}) is above the speed limit "
                f"({_fmt(limit)}); check both",
            )

    def costs(self) -> Any:
        """Road-user costs; ``None`` when the three main values are all blank."""
        locs = {f.name: self.locate(f) for f in F.COST_FIELDS}
        main = {n: _MISSING if locs[n] is None else self.raw(*locs[n]) for n in F.COST_MAIN}
        if any(v is _MISSING for v in main.values()):
            return _MISSING
        if all(_blank(v) for v in main.values()):
            return None  # no road-user costs
        got: dict[str, Any] = {}
        for f in F.COST_FIELDS:
            loc = locs[f.name]
            if loc is None:
                got[f.name] = _MISSING
                continue
            v = main[f.name] if f.name in main else self.raw(*loc)
            where = cell_ref(loc[0].title, loc[1], loc[2])
            if v is not _MISSING and _blank(v) and f.required:
                got[f.name] = self.bad(
                    where,
                    f"{f.label} is blank; road-user costs need it once a value of time or the "
                    "occupancy is given (leave those three blank to price delay at the "
                    "published defaults)",
                )
            else:
                got[f.name] = self.convert(v, f, where)
        if any(v is _MISSING for v in got.values()):
            return _MISSING
        return Costs(
            **{
                f.attribute.split(".", 1)[1]: F.to_plan(f, got[f.name], self.system)
                for f in F.COST_FIELDS
            }
        )

    # -- assembling -------------------------------------------------------------------------

    def assemble(
        self,
        v: dict[str, Any],
        costs: Costs | None,
        demand: Demand | None,
        closures: list[Closure] | None,
    ) -> dict[str, Any]:
        system = self.system
        assert system is not None and demand is not None and closures is not None
        parts = {
            section: {
                f.attribute.split(".", 1)[1]: F.to_plan(f, v[f.name], system)
                for f in F.section_inputs(section)
                if f.name
            }
            for section in ("site", "thresholds", "options", "meta")
        }
        parts["site"]["unit_system"] = system
        site = Site(**parts["site"])
        thresholds = Thresholds(**parts["thresholds"])
        options = Options(**parts["options"])
        meta = Meta(**parts["meta"])
        return dict(
            site=site,
            demand=demand,
            closures=tuple(closures),
            thresholds=thresholds,
            costs=costs,
            options=options,
            meta=meta,
        )

    def map_key(self, key: str) -> str:
        """A ``wzq.engine.plan.validate`` location (``closures[2].barrier``) as a sheet cell."""
        if key in _PLAN_KEYS and _PLAN_KEYS[key] in self.where_of:
            return self.where_of[_PLAN_KEYS[key]]
        m = re.fullmatch(r"(closures|demand)\[(\d+)\](?:\..*)?", key)
        if m:
            cells = self._closure_rows if m.group(1) == "closures" else self._demand_rows
            i = int(m.group(2))
            if i < len(cells):
                return cells[i]
        landmark = self.approach_cell(key)
        if landmark is not None:
            return landmark
        if key.startswith("demand") and self._demand_rows:
            return self._demand_rows[0]
        return f"{self.source}: {key}"
