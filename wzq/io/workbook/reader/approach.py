"""The approach road from the Approach sheet, and the congested branch of the Site sheet.

``LandmarkTable`` holds one landmark per row: its name, its distance upstream of
the start of the taper (mi or km, as the unit system says), its kind (a dropdown
of plain words) and, for a ramp, its flow as a share of the mainline flow (%).
A ramp whose share is blank takes its hourly flows from ``RampFlowTable``: one
row per hour of the demand period (date and start time, as the demand), one
column per ramp headed by the ramp's name as typed on ``LandmarkTable`` (``(veh/h)``
may follow it). A workbook without ``LandmarkTable`` (made by an older template)
has no approach.

The congested branch chosen on the Site sheet is checked against the values
typed for it, in the workbook's own words, before the plan is built.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import re
from typing import Any

from wzq.engine.plan import RAMP_KINDS, Approach, Demand, Landmark
from wzq.io import fields as F
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader.values import (
    _MISSING,
    _blank,
    _norm,
    _Row,
    _Table,
    _when,
    cell_ref,
    text_at,
)

__all__ = ["ApproachReader"]

#: The columns of ``LandmarkTable`` checked like named values (blank, type, range).
_NAME = F.Field("landmark", "Landmark", "text", blank="")
_DISTANCE = F.Field(
    "distance",
    "Distance upstream of the taper",
    "number",
    "long",
    bounds=(0.0, 100.0),  # as the longest allowed queue
    metric_bounds=(0.0, 160.0),
    open_lo=True,
    convert="long",
)
_KIND = F.Field("kind", "Kind", "choice", choices=L.LANDMARK_KIND_WORDS)
_SHARE = F.Field(
    "share", "Ramp flow", "number", "%", blank=None, bounds=(0.0, 100.0), convert="percent"
)
#: An hourly ramp flow; more than this is taken for a typing or unit mistake (a ramp
#: has one or two lanes; common practice, no source).
_RAMP_FLOW = F.Field("ramp_flow", "Ramp flow", "number", "veh/h", bounds=(0.0, 6000.0))
#: A ramp column may carry its unit after the ramp's name.
_FLOW_UNIT = " (veh/h)"
_KEY = re.compile(r"approach\.landmarks\[(\d+)\](?:\.(\w+)(?:\[(\d+)\])?)?")


@dataclasses.dataclass
class _Entry:
    """One landmark row as read: its values and the cells they were typed in."""

    row: int
    name: str
    distance: float
    kind: str
    share: float | None
    cells: dict[str, str]
    flows: tuple[float, ...] | None = None


class ApproachReader:
    """Part of the workbook reader (:class:`wzq.io.workbook.reader.BookReader`)."""

    # -- the congested branch (Site sheet) ----------------------------------------------------

    def check_congested_branch(self, v: dict[str, Any]) -> None:
        """The value asked for by the congested branch is typed, and no other one is."""
        branch = v.get("site_congested_branch", "derived")
        if branch is _MISSING:
            return
        chosen = self.where_of.get("site_congested_branch", "Site")
        word = L.word_for(L.CONGESTED_WORDS, branch)
        derived = L.word_for(L.CONGESTED_WORDS, "derived")
        branch_label = F.FIELDS_BY_NAME["site_congested_branch"].label
        for name, own in (
            ("site_wave_speed", "wave-speed"),
            ("site_density_at_capacity", "density-at-capacity"),
        ):
            value = v.get(name)
            if value is _MISSING:
                continue
            label = F.FIELDS_BY_NAME[name].label
            where = self.where_of.get(name, chosen)
            if branch == own and value is None:
                self.bad(
                    where,
                    f"{label} is blank, but '{branch_label}' ({chosen}) is '{word}'; "
                    f"type it, or choose '{derived}' there",
                )
            elif branch != own and value is not None:
                self.bad(
                    where,
                    f"{label} is typed, but '{branch_label}' ({chosen}) is '{word}', so "
                    f"it would not be used; choose '{L.word_for(L.CONGESTED_WORDS, own)}' "
                    "there, or clear this cell",
                )
        diagram = v.get("opt_diagram", "triangular")
        if branch != "derived" and diagram not in (_MISSING, "triangular"):
            on = self.where_of.get("opt_diagram", L.LIMITS)
            self.bad(
                chosen,
                f"the congested branch can be set only on the triangular diagram, but "
                f"'Fundamental diagram for queue length' ({on}) is "
                f"'{L.word_for(L.DIAGRAM_WORDS, diagram)}'; choose "
                f"'{L.word_for(L.DIAGRAM_WORDS, 'triangular')}' there, or '{derived}' here",
            )

    # -- the landmarks ----------------------------------------------------------------------

    def approach(self, demand: Demand | None) -> Any:
        """The approach of ``LandmarkTable`` and ``RampFlowTable`` (``_MISSING`` after a
        problem; no landmarks when the workbook has no ``LandmarkTable``)."""
        if self.find_table(L.LANDMARK_TABLE) is None:
            return Approach()
        t = self.table(L.LANDMARK_TABLE)
        if t is None:
            return _MISSING
        entries = self.landmark_rows(t)
        if entries and self.distance_unit(t) is _MISSING:
            return _MISSING
        if entries is None:
            return _MISSING
        if self.ramp_flows(t, entries, demand) is _MISSING:
            return _MISSING
        self._landmark_cells = [e.cells for e in entries]
        system = self.system or "us"
        return Approach(
            tuple(
                Landmark(
                    name=e.name,
                    distance=F.to_plan(_DISTANCE, e.distance, system),
                    kind=e.kind,  # type: ignore[arg-type]
                    ramp_veh_h=e.flows,
                    ramp_share=F.to_plan(_SHARE, e.share, system),
                )
                for e in entries
            )
        )

    def match_limit(self, v: dict[str, Any], approach: Any) -> None:
        """The landmark the queue must not pass, as typed on the Limits sheet, matched to
        a landmark's name regardless of case and spacing (as the names are told apart);
        the landmark's own spelling is used, and said. A name no landmark has is left
        for the plan's check, which lists the names."""
        typed = v.get("limit_landmark")
        if not isinstance(typed, str) or not isinstance(approach, Approach):
            return
        if approach.landmark(typed) is not None:
            return
        same = [lm for lm in approach.landmarks if _norm(lm.name) == _norm(typed)]
        if len(same) == 1:
            v["limit_landmark"] = same[0].name
            self.note(
                self.where_of.get("limit_landmark", L.LIMITS),
                f"'Queue must not pass' is '{typed}': read as the landmark '{same[0].name}'",
            )

    def landmark_rows(self, t: _Table) -> list[_Entry] | None:
        """Every landmark row, checked; ``None`` after a problem."""
        c_name, c_dist, c_kind, c_share, _ = L.LANDMARK_COLUMNS
        out: list[_Entry] = []
        seen: dict[str, int] = {}
        ok = True
        for r in self.rows(t):
            w = lambda h, r=r: self.where(t, r.row, h)  # noqa: E731
            name = self.convert(r.values[c_name], _NAME, w(c_name))
            if name == "":
                name = self.bad(
                    w(c_name),
                    "the landmark has no name; type one (the landmark limit on the Limits "
                    f"sheet and the columns of {L.RAMP_FLOW_TABLE} find it by its name)",
                )
            elif name is not _MISSING and _norm(name) in seen:
                name = self.bad(
                    w(c_name),
                    f"'{name}' is also the name of the landmark in row {seen[_norm(name)]}; "
                    "give each landmark a name of its own",
                )
            elif name is not _MISSING:
                seen[_norm(name)] = r.row
            distance = self.convert(r.values[c_dist], _DISTANCE, w(c_dist))
            kind = self.convert(r.values[c_kind], _KIND, w(c_kind))
            share = self.convert(
                r.values[c_share],
                _SHARE,
                w(c_share),
                percent_cell=self.percent_cell(t.ws, r.row, t.col(c_share)),
            )
            share = self.check_share(kind, share, w(c_share))
            values = (name, distance, kind, share)
            if any(x is _MISSING for x in values):
                ok = False
                continue
            cells = {"": w(c_name), "name": w(c_name), "distance": w(c_dist), "kind": w(c_kind)}
            cells["share"] = w(c_share)
            out.append(_Entry(r.row, name, distance, kind, share, cells))
        return out if ok else None

    def distance_unit(self, t: _Table) -> Any:
        """``_MISSING`` (a problem recorded) when the unit above the distance column (the
        template's formula following the unit system) was typed over with another unit
        (``km`` in a US customary plan: the distances would be read in mi)."""
        row, col = t.header_row - 1, t.col(L.LANDMARK_COLUMNS[1])
        text = text_at(t.ws, row, col)
        what = f"above the landmark distances ({t.name})"
        clash = self.other_unit(text, _DISTANCE.unit, what, them="the distances")
        return self.bad(cell_ref(t.ws.title, row, col), clash) if clash else None

    def check_share(self, kind: Any, share: Any, where: str) -> Any:
        """A ramp share only on a ramp, and an exit ramp never takes all the traffic."""
        if kind is _MISSING or share is _MISSING or share is None:
            return share
        if kind not in RAMP_KINDS:
            word = L.word_for(L.LANDMARK_KIND_WORDS, kind)
            return self.bad(
                where,
                f"a landmark of kind '{word}' carries no traffic of its own; clear its ramp "
                "flow, or choose 'exit ramp' or 'entrance ramp' as its kind",
            )
        if kind == "exit-ramp" and share >= 100.0:
            return self.bad(
                where,
                "an exit ramp cannot take all the traffic; type the share of the mainline flow "
                "that leaves there, below 100 %",
            )
        return share

    # -- hourly ramp flows ------------------------------------------------------------------

    def ramp_flows(self, landmarks: _Table, entries: list[_Entry], demand: Demand | None) -> Any:
        """Fill in the hourly flows of the ramps whose share is blank, from
        ``RampFlowTable``; ``_MISSING`` after a problem."""
        hourly = [e for e in entries if e.kind in RAMP_KINDS and e.share is None]
        found = self.find_table(L.RAMP_FLOW_TABLE)
        if found is None:
            for e in hourly:
                self.bad(e.cells["share"], self.no_flow(e, missing_table=True))
            return _MISSING if hourly else None
        t = self.table(L.RAMP_FLOW_TABLE)
        if t is None:
            return _MISSING
        by_name = {_norm(e.name): e for e in entries}
        own = {_norm(h) for h in L.RAMP_FLOW_COLUMNS}
        columns: dict[str, tuple[str, _Entry | None]] = {}  # key -> (header shown, landmark)
        for key, col in t.columns.items():
            if key in own:
                continue
            shown = self.raw(t.ws, t.header_row, col)
            shown = key if _blank(shown) or not isinstance(shown, str) else shown.strip()
            name_key = key.removesuffix(_norm(_FLOW_UNIT)).strip()
            columns[key] = (shown, by_name.get(key) or by_name.get(name_key))
        rows = self.rows(t, (*L.RAMP_FLOW_COLUMNS, *columns))
        wanted: dict[str, _Entry] = {}
        before = len(self.problems)
        for key, (shown, e) in columns.items():
            filled = any(not _blank(r.values[key]) for r in rows)
            head = cell_ref(t.ws.title, t.header_row, t.col(key))
            if e is not None and e in hourly and "veh_h" in e.cells:
                self.bad(
                    head,
                    f"the column '{shown}' is for '{e.name}', and so is the column at "
                    f"{e.cells['veh_h']}; keep one column per ramp",
                )
            elif e is not None and e in hourly:
                wanted[key] = e
                e.cells["veh_h"] = head
            elif e is not None and filled and e.kind in RAMP_KINDS:
                self.bad(
                    e.cells["share"],
                    f"'{e.name}' has both a share here and hourly flows in the column "
                    f"'{shown}' of {L.RAMP_FLOW_TABLE} ({head}); give one of them: clear the "
                    "share to use the hourly flows",
                )
            elif e is not None and filled:
                word = L.word_for(L.LANDMARK_KIND_WORDS, e.kind)
                self.bad(
                    head,
                    f"the column '{shown}' holds flows, but '{e.name}' is a landmark of kind "
                    f"'{word}', which carries no traffic of its own; head the column with a "
                    "ramp's name, or clear it",
                )
            elif filled:
                self.note(
                    head,
                    f"the column '{shown}' of {L.RAMP_FLOW_TABLE} holds flows, but no ramp on "
                    f"{L.LANDMARK_TABLE} is named '{shown}', so they are not used; head the "
                    "column with the ramp's name as typed there",
                )
        for e in hourly:
            if e not in wanted.values():
                self.bad(e.cells["share"], self.no_flow(e, missing_table=False))
        if len(self.problems) > before:
            return _MISSING
        if not wanted:
            return None
        if demand is None:
            return _MISSING  # the demand's problems are said; the hours cannot be checked
        return self.hourly_ramp_flows(t, rows, wanted, demand)

    def no_flow(self, e: _Entry, *, missing_table: bool) -> str:
        word = L.word_for(L.LANDMARK_KIND_WORDS, e.kind)
        where = f"a column headed '{e.name}' of the table {L.RAMP_FLOW_TABLE}" + (
            " (it is missing: copy it from a fresh workbook made by `wzq new`)"
            if missing_table
            else f" (on the sheet {L.APPROACH})"
        )
        return (
            f"'{e.name}' is an {word} with no flow: type its share of the mainline flow in % "
            f"here, or its hourly flows in {where}"
        )

    def hourly_ramp_flows(
        self, t: _Table, rows: list[_Row], wanted: dict[str, _Entry], demand: Demand
    ) -> Any:
        """One flow per hour of the demand period for each ramp in ``wanted`` (column key ->
        landmark), from the rows of ``RampFlowTable``."""
        c_date, c_time = L.RAMP_FLOW_COLUMNS
        n_hours = len(demand.flows_veh_h) * demand.interval_s // 3600
        hour = dt.timedelta(hours=1)
        flows = {key: [0.0] * n_hours for key in wanted}
        cells: dict[str, list[str]] = {key: [""] * n_hours for key in wanted}
        taken: dict[int, int] = {}
        outside: list[int] = []
        typed: list[tuple[dt.datetime, float, int]] = []  # in the sheet's order
        ok = True
        for r in rows:
            when = self.moment(t, r, c_date, c_time, "Start time")
            if when is _MISSING:
                ok = False
                continue
            typed.append((when, 0.0, r.row))
            if when.minute or when.second:
                ok = False
                self.bad(
                    self.where(t, r.row, c_time),
                    f"ramp flows are hourly: one row per hour, starting on the hour; this row "
                    f"starts at {when:%H:%M}",
                )
                continue
            h = int((when - demand.start) // hour)
            if not 0 <= h < n_hours:
                outside.append(r.row)
                continue
            if h in taken:
                ok = False
                self.bad(
                    self.where(t, r.row, c_time),
                    f"the hour {_when(when)} is also in row {taken[h]}; remove one of the two",
                )
                continue
            taken[h] = r.row
            for key, e in wanted.items():
                where = self.where(t, r.row, key)
                field = dataclasses.replace(_RAMP_FLOW, label=f"The flow of '{e.name}'")
                x = self.convert(r.values[key], field, where)
                if x is _MISSING:
                    ok = False
                    continue
                flows[key][h] = float(x)
                cells[key][h] = where
        self.date_not_turned(t, typed)
        missing = [h for h in range(n_hours) if h not in taken]
        if missing:
            ok = False
            first = demand.start + missing[0] * hour
            more = f" and {len(missing) - 1} more hours" if len(missing) > 1 else ""
            self.bad(
                cell_ref(t.ws.title, t.header_row, t.min_col),
                f"{L.RAMP_FLOW_TABLE} has no row for the hour {_when(first)}{more}; give one "
                f"row per hour of the demand period, {_when(demand.start)} to "
                f"{_when(demand.end)}",
            )
        if outside:
            listed = ", ".join(cell_ref(t.ws.title, r, t.min_col) for r in outside[:3])
            more = f" and {len(outside) - 3} more" if len(outside) > 3 else ""
            self.note(
                listed + more,
                f"{'this row' if len(outside) == 1 else 'these rows'} of {L.RAMP_FLOW_TABLE} "
                f"lie outside the demand period ({_when(demand.start)} to {_when(demand.end)}) "
                "and are not used",
            )
        if not ok:
            return _MISSING
        for key, e in wanted.items():
            e.flows = tuple(flows[key])
            e.cells.update({f"veh_h[{h}]": c for h, c in enumerate(cells[key])})
        return None

    # -- where a plan check's key was typed ---------------------------------------------------

    def approach_cell(self, key: str) -> str | None:
        """The cell of a landmark key of a plan check (``approach.landmarks[2].share``)."""
        m = _KEY.fullmatch(key)
        cells = getattr(self, "_landmark_cells", [])
        if m is None or int(m.group(1)) >= len(cells):
            return None
        own = cells[int(m.group(1))]
        part = m.group(2) or ""
        if part == "veh_h" and m.group(3) is not None:
            return own.get(f"veh_h[{m.group(3)}]") or own.get("veh_h") or own[""]
        return own.get(part) or own[""]

    def approach_locations(self) -> dict[str, str]:
        """``approach.landmarks[i]`` -> the landmark's row (its name cell),
        ``approach.landmarks[i].distance`` (``.kind``, ``.share``) -> the cell of that value,
        and ``approach.landmarks[i].veh_h[h]`` -> the cell of a ramp's flow in hour ``h``."""
        cells = getattr(self, "_landmark_cells", [])
        out = {f"approach.landmarks[{i}]": own[""] for i, own in enumerate(cells)}
        for part in ("distance", "kind", "share"):
            out.update(
                {f"approach.landmarks[{i}].{part}": own[part] for i, own in enumerate(cells)}
            )
        for i, own in enumerate(cells):  # a ramp's hourly flows: each hour's cell
            out.update({f"approach.landmarks[{i}].{k}": c for k, c in own.items() if "[" in k})
        return out
