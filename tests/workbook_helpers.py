"""Test helpers: fill a fresh template through its defined names and tables, as a user would.

``fill_template(plan, path)`` builds a template at ``path`` and types a plan into it
with openpyxl: every value goes into the cell its defined name points at, demand
and closures into the rows of their Excel tables (the table grows when needed,
as it does when a user types below it in a spreadsheet program). Values are
written in the plan's own unit system, dates and times as spreadsheet date and
time cells. Other tests reuse these helpers.
"""

from __future__ import annotations

import datetime as dt
import shutil
from collections.abc import Callable
from pathlib import Path
from typing import Any

from openpyxl import Workbook, load_workbook
from openpyxl.cell.cell import Cell
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.worksheet.table import Table

from wzq import units as u
from wzq.engine.plan import Closure, Plan
from wzq.io.workbook import layout as L
from wzq.io.workbook.template import build_template


def named_cell(wb: Workbook, name: str) -> Cell:
    """The cell a workbook-scoped defined name points at."""
    sheet, coord = next(iter(wb.defined_names[name].destinations))
    return wb[sheet][coord.replace("$", "")]


def set_named(wb: Workbook, name: str, value: Any) -> Cell:
    """Type a value into the cell of a defined name."""
    cell = named_cell(wb, name)
    cell.value = value
    return cell


def find_table(wb: Workbook, name: str) -> tuple[Any, Table]:
    """(worksheet, table) of an Excel table by name."""
    for ws in wb.worksheets:
        if name in ws.tables:
            return ws, ws.tables[name]
    raise KeyError(name)


def table_cell(wb: Workbook, table: str, index: int, header: str) -> Cell:
    """The cell of data row ``index`` (0-based) in the column ``header`` of a table."""
    ws, t = find_table(wb, table)
    min_col, min_row, _, _ = range_boundaries(t.ref)
    col = min_col + [c.name for c in t.tableColumns].index(header)
    return ws.cell(min_row + 1 + index, col)


def write_table(wb: Workbook, table: str, rows: list[dict[str, Any]]) -> None:
    """Type rows into a table from its first data row, growing the table if needed.

    A value may be ``(value, number_format)`` to set the cell's format too (as
    typing into a formatted cell does); rows beyond the template's styled rows
    get the formats of the row above.
    """
    ws, t = find_table(wb, table)
    min_col, min_row, max_col, max_row = range_boundaries(t.ref)
    headers = [c.name for c in t.tableColumns]
    needed = min_row + len(rows)
    if needed > max_row:
        t.ref = f"{get_column_letter(min_col)}{min_row}:{get_column_letter(max_col)}{needed}"
        if t.autoFilter is not None:
            t.autoFilter.ref = t.ref
    for i, row in enumerate(rows):
        r = min_row + 1 + i
        for header, value in row.items():
            cell = ws.cell(r, min_col + headers.index(header))
            if r > max_row:
                cell.number_format = ws.cell(max_row, cell.column).number_format
            if isinstance(value, tuple):
                value, fmt = value
                cell.number_format = fmt
            cell.value = value


def _r(x: float | None) -> float | None:
    """A plan value in workbook units, rounded as a person would type it."""
    return None if x is None else round(float(x), 9)


def plan_values(plan: Plan) -> dict[str, Any]:
    """Every named input of a plan, in the plan's unit system, by defined name."""
    s, t, o, m = plan.site, plan.thresholds, plan.options, plan.meta
    system = s.unit_system
    long_m = u.LONG_LENGTH[system][1]
    v: dict[str, Any] = {
        "unit_system": L.word_for(L.UNIT_WORDS, system),
        "meta_title": m.title,
        "meta_project": m.project,
        "meta_route": m.route,
        "meta_prepared_by": m.prepared_by,
        "meta_checked_by": m.checked_by,
        "meta_notes": m.notes,
        "site_name": s.name,
        "site_direction": s.direction,
        "site_lanes": s.lanes,
        "site_speed_limit": _r(u.mps_to_speed(s.speed_limit, system)),
        "site_work_zone_speed_limit": _r(u.mps_to_speed(s.work_zone_speed_limit, system)),
        "site_free_flow_speed": _r(
            None if s.free_flow_speed is None else u.mps_to_speed(s.free_flow_speed, system)
        ),
        "site_work_zone_length": _r(u.m_to_long_length(s.work_zone_length, system)),
        "site_heavy_vehicle_percent": _r(s.heavy_vehicle_share * 100),
        "site_terrain": L.word_for(L.TERRAIN_WORDS, s.terrain),
        "site_area_type": L.word_for(L.AREA_WORDS, s.area_type),
        "site_lateral_clearance": _r(u.m_to_short_length(s.lateral_clearance, system)),
        "site_driver_population": L.word_for(L.DRIVER_WORDS, s.driver_population),
        "site_ramp_density": _r(s.ramp_density * long_m),
        "site_jam_density": _r(
            None if s.jam_density is None else u.per_m_to_density(s.jam_density, system)
        ),
        "site_capacity_method": L.word_for(L.METHOD_WORDS, s.capacity_method),
        "site_override_is": L.word_for(L.OVERRIDE_WORDS, s.capacity_override_is),
        "site_base_capacity": s.base_capacity_pc_h_ln,
        "site_capacity_drop_work_zone": s.capacity_drop_pct_work_zone,
        "site_capacity_drop_open": s.capacity_drop_pct_open,
        "site_work_intensity": s.work_intensity_pc_h_ln,
        "site_ramp_adjustment": s.ramp_adjustment_pc_h_ln,
        "limit_queue_length": _r(
            None if t.max_queue_length is None else t.max_queue_length / long_m
        ),
        "limit_average_delay": _r(
            None if t.max_average_delay is None else t.max_average_delay / u.MINUTE
        ),
        "limit_demand_capacity": t.max_demand_capacity,
        "limit_landmark": t.queue_must_not_pass,
        "site_congested_branch": L.word_for(L.CONGESTED_WORDS, s.congested_branch),
        "site_wave_speed": _r(
            None if s.wave_speed is None else u.mps_to_speed(s.wave_speed, system)
        ),
        "site_density_at_capacity": _r(
            None
            if s.density_at_capacity is None
            else u.per_m_to_density(s.density_at_capacity, system)
        ),
        "opt_capacity_drop": L.word_for(L.YES_NO_WORDS, o.capacity_drop),
        "opt_diagram": L.word_for(L.DIAGRAM_WORDS, o.diagram),
        "opt_queue_length_method": L.word_for(L.QUEUE_METHOD_WORDS, o.queue_length_method),
        "site_space_time": L.word_for(L.YES_NO_WORDS, o.space_time),
        "opt_closure_windows": L.word_for(L.YES_NO_WORDS, o.closure_windows),
        "demand_mode": L.word_for(L.DEMAND_MODE_WORDS, L.HOURLY),
    }
    c = plan.costs
    v.update(
        cost_car_value=None if c is None else c.car_value_per_person_h,
        cost_car_occupancy=None if c is None else c.car_occupancy,
        cost_truck_value=None if c is None else c.truck_value_per_veh_h,
        cost_truck_percent=None if c is None or c.truck_share is None else _r(c.truck_share * 100),
    )
    if c is not None:
        v.update(cost_currency=c.currency, cost_dollar_year=c.dollar_year)
    r = plan.risk
    v.update(
        risk_capacity_cv=None if r is None else r.capacity_cv,
        risk_draws=1000 if r is None else r.draws,
        risk_seed=1 if r is None else r.seed,
        risk_window_percent=None if r is None or r.window_risk is None else r.window_risk * 100,
    )
    return v


def demand_rows(plan: Plan) -> list[dict[str, Any]]:
    """The demand as rows of DemandTable: date cell, time cell, veh/h."""
    d = plan.demand
    date_h, time_h, flow_h = L.DEMAND_COLUMNS
    rows = []
    for i, flow in enumerate(d.flows_veh_h):
        t = d.start + dt.timedelta(seconds=i * d.interval_s)
        rows.append(
            {
                date_h: (dt.datetime.combine(t.date(), dt.time()), L.DATE_FORMAT),
                time_h: (t.time(), L.TIME_FORMAT),
                flow_h: float(flow),
            }
        )
    return rows


def closure_row(c: Closure) -> dict[str, Any]:
    """One closure as a row of ClosureTable, typed the way a designer would.

    The end is a time of day when the closure lasts less than a day (at or before
    From: the next day; midnight as 24:00, Excel's value 1.0), else a full
    date-time.
    """
    day = dt.datetime.combine(c.start.date(), dt.time())
    length = c.end - c.start
    if c.end == day + dt.timedelta(days=1):
        to: Any = (1.0, L.END_TIME_FORMAT)
    elif length < dt.timedelta(days=1):
        to = (c.end.time(), L.END_TIME_FORMAT)
    else:
        to = (c.end, L.END_TIME_FORMAT)
    d, f, t_, lanes, barrier, night, override, note = L.CLOSURE_COLUMNS
    return {
        d: (day, L.DATE_FORMAT),
        f: (c.start.time(), L.TIME_FORMAT),
        t_: to,
        lanes: c.lanes_closed,
        barrier: L.word_for(L.BARRIER_WORDS, c.barrier),
        night: L.word_for(L.NIGHT_WORDS, c.night),
        override: c.capacity_override_veh_h_ln,
        note: c.note or None,
    }


def fill_book(wb: Workbook, plan: Plan) -> None:
    """Type a plan into a loaded template workbook."""
    for name, value in plan_values(plan).items():
        set_named(wb, name, value)
    write_table(wb, L.DEMAND_TABLE, demand_rows(plan))
    write_table(wb, L.CLOSURE_TABLE, [closure_row(c) for c in plan.closures])


def edited(base: Path, tmp_path: Path, edit: Callable[[Any], Any], name: str = "") -> Path:
    """A copy of ``base`` changed by ``edit(wb)`` and saved, as a user would."""
    path = Path(tmp_path) / (name or Path(base).name)
    shutil.copyfile(base, path)
    wb = load_workbook(path, keep_vba=path.suffix == ".xlsm")
    edit(wb)
    wb.save(path)
    return path


def fill_template(plan: Plan, path: Path, macro: bool = False) -> Path:
    """Build a fresh template at ``path`` and type ``plan`` into it; returns ``path``."""
    path = Path(path)
    build_template(path, macro=macro)
    wb = load_workbook(path, keep_vba=macro)
    fill_book(wb, plan)
    wb.save(path)
    return path


def save_results_as_a_spreadsheet_program(path: Path, results: dict[tuple[str, str], Any]) -> Path:
    """Give formula cells the saved result a spreadsheet program would write beside them.

    openpyxl writes a formula with an empty ``<v>``; Excel and LibreOffice save the
    result there. ``results`` maps (sheet, cell) to the result: a number, ``True``/
    ``False``, or text (``""`` for a formula showing nothing). The sheet XML of the
    saved file is edited in place (independently of wzq's own code for this).
    """
    import io
    import re
    import zipfile
    from xml.sax.saxutils import escape

    path = Path(path)
    book = load_workbook(path, read_only=True)
    order = book.sheetnames
    book.close()
    parts: dict[str, dict[str, Any]] = {}
    for (sheet, coord), value in results.items():
        parts.setdefault(f"xl/worksheets/sheet{order.index(sheet) + 1}.xml", {})[coord] = value
    out = io.BytesIO()
    with zipfile.ZipFile(path) as zin, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info)
            for coord, value in parts.get(info.filename, {}).items():
                if isinstance(value, bool):
                    t, v = ' t="b"', str(int(value))
                elif isinstance(value, str):
                    t, v = ' t="str"', escape(value)
                else:
                    t, v = "", repr(float(value))
                # a plain formula, or one with attributes (an array formula: t="array" ref="...")
                pattern = re.compile(
                    rf'<c r="{coord}"([^>]*)>(<f(?:\s[^>]*)?>[^<]*</f>)<v\s*(?:/>|></v>)</c>'
                )
                text, n = pattern.subn(rf'<c r="{coord}"\1{t}>\2<v>{v}</v></c>', data.decode())
                assert n == 1, f"{coord}: no formula cell to give a result"
                data = text.encode()
            zout.writestr(info, data)
    path.write_bytes(out.getvalue())
    return path


def read(data: bytes, edit: Callable[[Any], Any]) -> Plan | dict[str, str]:
    """The plan read from a workbook's bytes after ``edit(wb)``, in memory (fast), or its
    problems as {cell: message}."""
    import io

    from wzq.engine.plan import PlanError
    from wzq.io.workbook.reader import read_plan_from_book

    wb = load_workbook(io.BytesIO(data))
    edit(wb)
    try:
        return read_plan_from_book(wb, "k.xlsx")
    except PlanError as e:
        return {p.where: p.message for p in e.problems}


def problem(data: bytes, edit: Callable[[Any], Any], where: str) -> str:
    """The message of the problem found at ``where`` after ``edit(wb)`` (there must be one)."""
    out = read(data, edit)
    assert isinstance(out, dict), "the edit was read without a problem"
    assert where in out, out
    return out[where]


def aadt_edit(year: int, growth: float | None) -> Callable[[Any], None]:
    """An edit (for :func:`edited`) giving the demand as an AADT of 40,000 counted in
    ``year``, grown ``growth`` % a year to Sat 2027-05-01, 55 % in this direction, 5 days."""

    def edit(wb: Any) -> None:
        values = {
            "demand_mode": "from AADT",
            "aadt_value": 40_000,
            "aadt_count_year": year,
            "aadt_growth_percent": growth,
            "aadt_direction_percent": 55,
            "aadt_first_day": dt.datetime(2027, 5, 1),
            "aadt_days": 5,
        }
        for name, value in values.items():
            set_named(wb, name, value)

    return edit
