"""Reading a plan workbook: round trips, user edits, dates and times, AADT, and bad input.

Workbooks are filled through the template's defined names and tables with
openpyxl, as a user would type them (``tests/workbook_helpers.py``).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import shutil
import subprocess
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from openpyxl import Workbook, load_workbook
from openpyxl.styles import Font, PatternFill
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.table import Table, TableColumn
from workbook_helpers import (
    closure_row,
    edited,
    fill_template,
    find_table,
    named_cell,
    set_named,
    table_cell,
    write_table,
)

from wzq import units as u
from wzq.cli import main
from wzq.engine.plan import Closure, Demand, Plan, PlanError, Problem
from wzq.io import fields as F
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import layout as L
from wzq.io.workbook.layout import MARKER_NAME
from wzq.io.workbook.reader import read_plan, read_plan_from_book

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"
FENWICK = EXAMPLES / "fenwick_downs_weekend.json"
BRACKENHOLM = EXAMPLES / "brackenholm_interchange_evening.json"
CLOSURE_START_ROW = 6  # first data row of ClosureTable in the template
DEMAND_START_ROW = 9  # first data row of DemandTable in the template


def assert_same_plan(a: Plan, b: Plan) -> None:
    """Field by field; floats to 1e-12 relative, demand arrays element by element."""
    for part in ("site", "thresholds", "costs", "options", "meta"):
        x, y = getattr(a, part), getattr(b, part)
        if x is None or y is None:
            assert x is y, part
            continue
        for f in dataclasses.fields(x):
            vx, vy = getattr(x, f.name), getattr(y, f.name)
            if isinstance(vx, float) and isinstance(vy, float):
                assert vx == pytest.approx(vy, rel=1e-12), f"{part}.{f.name}"
            else:
                assert vx == vy, f"{part}.{f.name}"
    assert a.demand.start == b.demand.start
    assert a.demand.interval_s == b.demand.interval_s
    np.testing.assert_allclose(a.demand.flows_veh_h, b.demand.flows_veh_h, rtol=1e-12)
    assert a.closures == b.closures


@pytest.fixture(scope="module")
def kestrel_book(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return fill_template(load_plan(KESTREL), tmp_path_factory.mktemp("k") / "kestrel.xlsx")


# ---------------------------------------------------------------------------------------------
# Round trips
# ---------------------------------------------------------------------------------------------


def test_us_example_round_trip(kestrel_book: Path) -> None:
    assert_same_plan(read_plan(kestrel_book), load_plan(KESTREL))


def test_metric_example_round_trip_in_a_macro_workbook(tmp_path: Path) -> None:
    plan = load_plan(FENWICK)
    path = fill_template(plan, tmp_path / "fenwick.xlsm", macro=True)
    got = read_plan(path)
    assert_same_plan(got, plan)
    assert got.site.unit_system == "metric"
    assert got.costs is None
    # metric values typed in km/h and km: 110 km/h and 3.0 km (fenwick_downs_weekend.json)
    assert got.site.speed_limit == pytest.approx(110 / 3.6)
    assert got.site.work_zone_length == pytest.approx(3000.0)


def test_every_site_option_round_trips(tmp_path: Path) -> None:
    base = load_plan(KESTREL)
    site = dataclasses.replace(
        base.site,
        free_flow_speed=70 * u.MPH,
        terrain="rolling",
        area_type="rural",
        driver_population="unfamiliar",
        jam_density=200 / u.MILE,
        capacity_method="hcm2000",
        base_capacity_pc_h_ln=2250.0,
        capacity_drop_pct_work_zone=10.0,
        capacity_drop_pct_open=5.0,
        work_intensity_pc_h_ln=-80.0,
        ramp_adjustment_pc_h_ln=40.0,
    )
    closures = (
        dataclasses.replace(base.closures[0], barrier="hard", night=False),
        dataclasses.replace(base.closures[1], night=True, capacity_override_veh_h_ln=1350.0),
    )
    plan = dataclasses.replace(
        base,
        site=site,
        closures=closures,
        thresholds=dataclasses.replace(base.thresholds, max_demand_capacity=1.1),
        costs=dataclasses.replace(base.costs, truck_share=0.12, currency="EUR", dollar_year=2024),
        options=dataclasses.replace(base.options, capacity_drop=False, diagram="greenshields"),
        meta=dataclasses.replace(base.meta, prepared_by="A. Planner", checked_by="B. Checker"),
    )
    path = fill_template(plan, tmp_path / "all.xlsx")
    assert_same_plan(read_plan(path), plan)


def test_fifteen_minute_counts(tmp_path: Path) -> None:
    base = load_plan(KESTREL)
    flows = np.repeat(base.demand.flows_veh_h, 4) + np.tile([0.0, 40.0, -40.0, 0.0], 72)
    plan = dataclasses.replace(base, demand=Demand(base.demand.start, 900, flows))
    path = fill_template(plan, tmp_path / "quarter.xlsx")  # 288 rows: the table grows
    got = read_plan(path)
    assert got.demand.interval_s == 900
    assert len(got.demand.flows_veh_h) == 288
    assert_same_plan(got, plan)


def test_rows_in_any_order_are_sorted(kestrel_book: Path, tmp_path: Path) -> None:
    plan = load_plan(KESTREL)

    def reverse(wb: Any) -> None:
        rows = [closure_row(c) for c in reversed(plan.closures)]
        write_table(wb, L.CLOSURE_TABLE, rows)
        ws, _ = find_table(wb, L.DEMAND_TABLE)
        values = [[c.value for c in row] for row in ws["A9:C80"]]
        for row, vals in zip(ws["A9:C80"], reversed(values), strict=True):
            for c, v in zip(row, vals, strict=True):
                c.value = v

    assert_same_plan(read_plan(edited(kestrel_book, tmp_path, reverse)), plan)


# ---------------------------------------------------------------------------------------------
# A user inserts rows, restyles, adds sheets: the reader follows names and tables
# ---------------------------------------------------------------------------------------------


def insert_rows_like_excel(wb: Any, sheet: str, idx: int, amount: int) -> None:
    """Insert rows and move the names and tables below them, as a spreadsheet program does.

    (openpyxl moves the cells but leaves defined names and table ranges where they were.)
    """
    ws = wb[sheet]
    ws.insert_rows(idx, amount)
    for dn in wb.defined_names.values():
        dest = list(dn.destinations)
        if len(dest) == 1 and dest[0][0] == sheet:
            col, row, _, _ = range_boundaries(dest[0][1].replace("$", ""))
            if row >= idx:
                dn.attr_text = f"{sheet}!${get_column_letter(col)}${row + amount}"
    for t in ws.tables.values():
        c1, r1, c2, r2 = range_boundaries(t.ref)
        r1 += amount if r1 >= idx else 0
        r2 += amount if r2 >= idx else 0
        t.ref = f"{get_column_letter(c1)}{r1}:{get_column_letter(c2)}{r2}"


def test_inserted_rows_restyling_and_own_sheets_still_read(
    kestrel_book: Path, tmp_path: Path
) -> None:
    def user(wb: Any) -> None:
        insert_rows_like_excel(wb, L.SITE, 6, 3)  # inside the first section
        insert_rows_like_excel(wb, L.LIMITS, 2, 1)
        insert_rows_like_excel(wb, L.CLOSURES, 3, 2)  # above the table
        insert_rows_like_excel(wb, L.DEMAND, 2, 4)  # moves both demand tables
        ws = wb[L.SITE]
        ws["A6"] = "My own heading"
        ws["B7"] = "not an input"
        # restyle: fills, fonts, number formats, column widths
        red = PatternFill("solid", fgColor="FFCCCC")
        for name in ("site_lanes", "site_speed_limit", "limit_queue_length"):
            cell = named_cell(wb, name)
            cell.fill = red
            cell.font = Font(bold=True, color="0000FF")
            cell.number_format = "0.00"
        ws.column_dimensions["B"].width = 40
        cws, _ = find_table(wb, L.CLOSURE_TABLE)
        for row in cws.iter_rows(min_row=8, max_row=9):
            row[0].number_format = "dd/mm/yyyy"
            row[1].number_format = "General"  # times show as fractions of a day
        # own sheets, one placed first, one with a table of its own
        mine = wb.create_sheet("My notes", 0)
        mine["A1"] = "Site visit 2027-04-02"
        mine["B2"] = 12345
        extra = wb.create_sheet("Counts raw")
        extra.append(["Hour", "Veh"])
        for h in range(3):
            extra.append([h, 100 * h])
        extra.add_table(
            Table(
                displayName="MyCounts",
                ref="A1:B4",
                tableColumns=[TableColumn(id=1, name="Hour"), TableColumn(id=2, name="Veh")],
            )
        )
        # output sheets from an earlier run (listed in wzq's marker), full of numbers: ignored
        for name in L.OUTPUT_SHEETS:
            out = wb.create_sheet(name)
            out["A1"] = "old results"
            out["B5"] = 99999
        marker = '"' + "|".join(L.OUTPUT_SHEETS) + '"'
        wb.defined_names[MARKER_NAME] = DefinedName(MARKER_NAME, attr_text=marker, hidden=True)
        wb.move_sheet(L.LIMITS, offset=-2)

    path = edited(kestrel_book, tmp_path, user)
    wb = load_workbook(path)
    assert named_cell(wb, "site_lanes").coordinate == "B11"  # moved by three rows
    assert find_table(wb, L.CLOSURE_TABLE)[1].ref == "A7:H37"
    assert_same_plan(read_plan(path), load_plan(KESTREL))


def test_reading_leaves_the_loaded_book_unchanged(kestrel_book: Path) -> None:
    wb = load_workbook(kestrel_book)
    before = {ws.title: dict(ws._cells) for ws in wb}
    values = {ws.title: [(k, c.value) for k, c in ws._cells.items()] for ws in wb}
    plan = read_plan_from_book(wb, "kestrel.xlsx")  # no path: needs no second load
    assert {ws.title: dict(ws._cells) for ws in wb} == before  # no cells added
    assert {ws.title: [(k, c.value) for k, c in ws._cells.items()] for ws in wb} == values
    assert_same_plan(plan, load_plan(KESTREL))


# ---------------------------------------------------------------------------------------------
# Dates and times as people type them
# ---------------------------------------------------------------------------------------------


def closures_of(path: Path) -> tuple[Closure, ...]:
    return read_plan(path).closures


def set_closure(wb: Any, index: int, **values: Any) -> None:
    headers = {
        "date": "Date",
        "start": "From",
        "end": "To",
        "lanes": "Lanes closed",
        "barrier": "Barrier",
        "night": "Night work",
        "override": "Capacity override (veh/h/ln)",
    }
    for key, v in values.items():
        table_cell(wb, L.CLOSURE_TABLE, index, headers[key]).value = v


@pytest.mark.parametrize(
    ("end", "expected"),
    [
        ("24:00", dt.datetime(2027, 5, 5, 0, 0)),  # text 24:00: midnight at the end of the date
        (1.0, dt.datetime(2027, 5, 5, 0, 0)),  # Excel stores a typed 24:00 as 1.0
        (dt.time(0, 0), dt.datetime(2027, 5, 5, 0, 0)),  # 00:00 is before 22:00: next day
        (dt.time(23, 30), dt.datetime(2027, 5, 4, 23, 30)),  # same day
        ("05:00", dt.datetime(2027, 5, 5, 5, 0)),  # crosses midnight
        (dt.time(22, 0), dt.datetime(2027, 5, 5, 22, 0)),  # To == From: a full day
        (dt.datetime(2027, 5, 5, 4, 30), dt.datetime(2027, 5, 5, 4, 30)),  # explicit end
        ("2027-05-05 03:15", dt.datetime(2027, 5, 5, 3, 15)),  # explicit end, as text
    ],
)
def test_closure_end_times(kestrel_book: Path, tmp_path: Path, end: Any, expected: Any) -> None:
    path = edited(kestrel_book, tmp_path, lambda wb: set_closure(wb, 1, end=end))
    got = closures_of(path)[1]
    assert got.start == dt.datetime(2027, 5, 4, 22, 0)
    assert got.end == expected


def test_closure_longer_than_a_day(kestrel_book: Path, tmp_path: Path) -> None:
    def edit(wb: Any) -> None:
        set_closure(wb, 0, date=None, start=dt.datetime(2027, 5, 3, 21, 0))
        for h in L.CLOSURE_COLUMNS:  # the second closure's row emptied
            table_cell(wb, L.CLOSURE_TABLE, 1, h).value = None
        set_closure(wb, 0, end=dt.datetime(2027, 5, 5, 5, 0))

    (only,) = closures_of(edited(kestrel_book, tmp_path, edit))
    assert (only.start, only.end) == (dt.datetime(2027, 5, 3, 21), dt.datetime(2027, 5, 5, 5))


def test_dates_and_times_in_other_cell_types(kestrel_book: Path, tmp_path: Path) -> None:
    def edit(wb: Any) -> None:
        # a date as text, times as text and as plain fractions of a day (format lost)
        set_closure(wb, 0, date="2027-05-03", start="21:00", end=5 / 24)
        table_cell(wb, L.CLOSURE_TABLE, 1, "From").number_format = "General"
        set_closure(wb, 1, start=22 / 24, barrier="Cones Or  Drums", night="YES")
        # a demand date pasted as a bare Excel serial number: 46510 is 2027-05-03
        c = table_cell(wb, L.DEMAND_TABLE, 0, "Date")
        c.value, c.number_format = 46510, "General"

    got = read_plan(edited(kestrel_book, tmp_path, edit))
    a, b = got.closures
    assert (a.start, a.end) == (dt.datetime(2027, 5, 3, 21), dt.datetime(2027, 5, 4, 5))
    assert (b.start, b.barrier, b.night) == (dt.datetime(2027, 5, 4, 22), "soft", True)
    assert got.demand.start == dt.datetime(2027, 5, 3)


@pytest.mark.libreoffice
@pytest.mark.slow
def test_workbooks_saved_by_libreoffice_read_back(kestrel_book: Path, tmp_path: Path) -> None:
    """Saved by a spreadsheet program: names, tables, date and time cells survive; a formula
    typed in an input cell is read through its saved result; units follow the unit system."""
    soffice = shutil.which("soffice") or shutil.which("libreoffice")
    if soffice is None:
        pytest.skip("LibreOffice (soffice) is not installed")
    src = edited(
        kestrel_book,
        tmp_path,
        lambda wb: set_named(wb, "site_speed_limit", "=60+5"),
        name="formula.xlsx",
    )
    metric = fill_template(load_plan(FENWICK), tmp_path / "metric.xlsx")
    approach = tmp_path / "approach.xlsx"  # landmarks, ramp shares and hourly ramp flows
    shutil.copyfile(BRACKENHOLM.with_suffix(".xlsx"), approach)
    out = tmp_path / "saved"
    profile = (tmp_path / "profile").as_uri()
    subprocess.run(
        [
            soffice,
            f"-env:UserInstallation={profile}",
            "--headless",
            "--convert-to",
            "xlsx",
            "--outdir",
            str(out),
            str(src),
            str(metric),
            str(approach),
        ],
        check=True,
        capture_output=True,
        timeout=240,
    )
    plan = read_plan(out / "formula.xlsx")
    assert plan.site.speed_limit == pytest.approx(65 * u.MPH)
    assert_same_plan(plan, load_plan(KESTREL))
    assert_same_plan(read_plan(out / "metric.xlsx"), load_plan(FENWICK))
    saved = read_plan(out / "approach.xlsx")
    assert saved.approach == load_plan(BRACKENHOLM).approach
    assert saved.thresholds.queue_must_not_pass == "Exit 12 off-ramp"
    # the unit beside each value is a formula on the unit system, computed by the program
    for name, unit in (("formula.xlsx", "mi/h"), ("metric.xlsx", "km/h")):
        wb = load_workbook(out / name, data_only=True)
        cell = named_cell(wb, "site_speed_limit")
        assert cell.offset(0, 1).value == unit


# ---------------------------------------------------------------------------------------------
# Demand from AADT
# ---------------------------------------------------------------------------------------------


def aadt_mode(wb: Any) -> None:
    set_named(wb, "demand_mode", "from AADT")
    set_named(wb, "aadt_value", 40_000)
    set_named(wb, "aadt_count_year", 2024)
    set_named(wb, "aadt_growth_percent", 2)
    set_named(wb, "aadt_direction_percent", 55)
    set_named(wb, "aadt_first_day", dt.datetime(2027, 5, 1))  # a Saturday
    set_named(wb, "aadt_days", 5)


def test_aadt_expansion_by_hand(kestrel_book: Path, tmp_path: Path) -> None:
    plan = read_plan(edited(kestrel_book, tmp_path, aadt_mode))
    d = plan.demand
    assert d.start == dt.datetime(2027, 5, 1)
    assert d.interval_s == 3600
    assert len(d.flows_veh_h) == 5 * 24
    # hand arithmetic: 40,000 x 1.02^3 x 0.55 = 40,000 x 1.061208 x 0.55 = 23,346.576 veh/day
    # in this direction; the template's invented shares give each hour.
    assert d.flows_veh_h[7] == pytest.approx(653.704128)  # Sat 07:00, weekend 2.8 %
    assert d.flows_veh_h[24 + 12] == pytest.approx(1750.9932)  # Sun 12:00, weekend 7.5 %
    assert d.flows_veh_h[48 + 7] == pytest.approx(1634.26032)  # Mon 07:00, weekday 7.0 %
    assert d.flows_veh_h[48 + 17] == pytest.approx(1704.300048)  # Mon 17:00, weekday 7.3 %
    assert d.flows_veh_h[:24].sum() == pytest.approx(23346.576)  # a day sums to the daily
    assert d.flows_veh_h[48:72].sum() == pytest.approx(23346.576)
    assert plan.closures == load_plan(KESTREL).closures


def test_aadt_with_edited_shares_and_no_growth(kestrel_book: Path, tmp_path: Path) -> None:
    def edit(wb: Any) -> None:
        aadt_mode(wb)
        set_named(wb, "aadt_growth_percent", None)  # blank: no growth
        for h in range(24):  # a flat day: 100 / 24 % in every hour
            table_cell(wb, L.SHARE_TABLE, h, "Weekday % of AADT").value = 100 / 24
            table_cell(wb, L.SHARE_TABLE, h, "Weekend % of AADT").value = 100 / 24

    d = read_plan(edited(kestrel_book, tmp_path, edit)).demand
    # hand arithmetic: 40,000 x 0.55 / 24 = 916.666... veh/h in every hour
    np.testing.assert_allclose(d.flows_veh_h, 40_000 * 0.55 / 24)


# ---------------------------------------------------------------------------------------------
# Bad input: every problem named by sheet and cell, through `wzq check`, file untouched
# ---------------------------------------------------------------------------------------------


def name_at(wb: Any, name: str) -> str:
    sheet, coord = next(iter(wb.defined_names[name].destinations))
    return f"{sheet}!{coord.replace('$', '')}"


def cell_at(wb: Any, table: str, index: int, header: str) -> str:
    c = table_cell(wb, table, index, header)
    return f"{c.parent.title}!{c.coordinate}"


def named(name: str, value: Any, words: str) -> Callable[[Any], tuple[str, str]]:
    def edit(wb: Any) -> tuple[str, str]:
        set_named(wb, name, value)
        return name_at(wb, name), words

    return edit


def in_table(
    table: str, index: int, header: str, value: Any, words: str, at: str | None = None
) -> Callable[[Any], tuple[str, str]]:
    def edit(wb: Any) -> tuple[str, str]:
        table_cell(wb, table, index, header).value = value
        return cell_at(wb, table, index, at or header), words

    return edit


def demand_gap(wb: Any) -> tuple[str, str]:
    for h in L.DEMAND_COLUMNS:
        table_cell(wb, L.DEMAND_TABLE, 5, h).value = None
    return cell_at(wb, L.DEMAND_TABLE, 6, "Start time"), "no demand from Mon 2027-05-03 05:00"


def demand_duplicate(wb: Any) -> tuple[str, str]:
    table_cell(wb, L.DEMAND_TABLE, 5, "Start time").value = dt.time(4, 0)
    return cell_at(wb, L.DEMAND_TABLE, 5, "Start time"), "is also in row 13"


def demand_rows_from(times: list[dt.datetime]) -> Callable[[Any], None]:
    def edit(wb: Any) -> None:
        for i in range(72):
            for h in L.DEMAND_COLUMNS:
                table_cell(wb, L.DEMAND_TABLE, i, h).value = None
        date_h, time_h, flow_h = L.DEMAND_COLUMNS
        rows = [
            {date_h: when.replace(hour=0, minute=0), time_h: when.time(), flow_h: 500}
            for when in times
        ]
        write_table(wb, L.DEMAND_TABLE, rows)

    return edit


def demand_not_on_the_hour(wb: Any) -> tuple[str, str]:
    start = dt.datetime(2027, 5, 3, 0, 30)
    demand_rows_from([start + dt.timedelta(hours=k) for k in range(72)])(wb)
    return cell_at(wb, L.DEMAND_TABLE, 0, "Start time"), "must start on the hour"


def demand_part_hour(wb: Any) -> tuple[str, str]:
    start = dt.datetime(2027, 5, 3)
    demand_rows_from([start + dt.timedelta(minutes=15 * k) for k in range(4 * 72 - 1)])(wb)
    return cell_at(wb, L.DEMAND_TABLE, 4 * 72 - 2, "Start time"), "ends at 23:45"


def demand_odd_interval(wb: Any) -> tuple[str, str]:
    start = dt.datetime(2027, 5, 3)
    demand_rows_from([start + dt.timedelta(minutes=7 * k) for k in range(5)])(wb)
    return cell_at(wb, L.DEMAND_TABLE, 1, "Start time"), "rows are 7 minutes apart"


def demand_mixed_interval(wb: Any) -> tuple[str, str]:
    start = dt.datetime(2027, 5, 3)
    demand_rows_from([start + dt.timedelta(minutes=m) for m in (0, 15, 30, 45, 65)])(wb)
    return cell_at(wb, L.DEMAND_TABLE, 4, "Start time"), "use one interval throughout"


def closure_overlap(wb: Any) -> tuple[str, str]:
    set_closure(wb, 1, date=dt.datetime(2027, 5, 3), start=dt.time(23, 0), end=dt.time(6, 0))
    return cell_at(wb, L.CLOSURE_TABLE, 1, "From"), "overlaps the one in row 6"


def value_below_closures(wb: Any) -> tuple[str, str]:
    ws, t = find_table(wb, L.CLOSURE_TABLE)
    below = range_boundaries(t.ref)[3] + 1
    ws.cell(below, 1).value = dt.datetime(2027, 5, 5)
    return f"Closures!B{below}", "this row lies below the table ClosureTable and is read"


def missing_name(wb: Any) -> tuple[str, str]:
    del wb.defined_names["site_lanes"]
    return "Site (name site_lanes)", "the defined name site_lanes (Lanes in normal operation)"


def broken_name(wb: Any) -> tuple[str, str]:
    wb.defined_names["site_speed_limit"].attr_text = "#REF!"
    return "Site (name site_speed_limit)", "points nowhere"


def missing_sheet(wb: Any) -> tuple[str, str]:
    """The Limits sheet deleted: its names now point at #REF! as a spreadsheet leaves them."""
    for f in F.ALL_FIELDS:
        if F.FIELD_SHEET[f.name] == L.LIMITS:
            wb.defined_names[f.name].attr_text = "#REF!$B$6"
    del wb[L.LIMITS]
    return "Limits (sheet)", "the input sheet 'Limits' is missing"


def missing_table(wb: Any) -> tuple[str, str]:
    ws, _ = find_table(wb, L.CLOSURE_TABLE)
    del ws.tables[L.CLOSURE_TABLE]
    return "Closures (table ClosureTable)", "the table ClosureTable is missing"


def renamed_header(wb: Any) -> tuple[str, str]:
    ws, t = find_table(wb, L.DEMAND_TABLE)
    t.tableColumns[2].name = "Veh"
    ws["C8"] = "Veh"
    return "Demand!A8", "has no column 'Demand (veh/h)'"


def aadt_shares_off(wb: Any) -> tuple[str, str]:
    aadt_mode(wb)
    table_cell(wb, L.SHARE_TABLE, 7, "Weekday % of AADT").value = 9.0
    _, t = find_table(wb, L.SHARE_TABLE)
    c1, r1, _, _ = range_boundaries(t.ref)
    return f"Demand!{get_column_letter(c1 + 1)}{r1}", "sums to 102.0 %, not 100 %"


def aadt_blank(wb: Any) -> tuple[str, str]:
    aadt_mode(wb)
    set_named(wb, "aadt_value", None)
    return name_at(wb, "aadt_value"), "AADT, both directions is blank"


def aadt_bad_date(wb: Any) -> tuple[str, str]:
    aadt_mode(wb)
    set_named(wb, "aadt_first_day", "next Monday")
    return name_at(wb, "aadt_first_day"), "'next Monday' is not a date"


def costs_half_filled(wb: Any) -> tuple[str, str]:
    set_named(wb, "cost_truck_value", None)
    return name_at(wb, "cost_truck_value"), "road-user costs need it"


D, CL = L.DEMAND_TABLE, L.CLOSURE_TABLE
BAD_INPUTS: dict[str, Callable[[Any], tuple[str, str]]] = {
    "text in a number cell": named("site_lanes", "three", "'three' is text, not a number"),
    "number stored as text": named("site_speed_limit", "65", "'65' is stored as text"),
    "blank required value": named("site_work_zone_speed_limit", None, "is blank; type a number"),
    "negative length": named("site_work_zone_length", -1.2, "cannot be negative (got -1.2)"),
    "too many lanes": named("site_lanes", 9, "must be 1 to 8 lanes (got 9)"),
    "fraction of a lane": named("site_lanes", 2.5, "must be a whole number, got 2.5"),
    "percent over 100": named("site_heavy_vehicle_percent", 120, "must be 0 to 100 %"),
    "unknown terrain": named("site_terrain", "mountainous", "'mountainous' is not in the list"),
    "unknown unit system": named("unit_system", "imperial", "'imperial' is not in the list"),
    "unknown capacity method": named("site_capacity_method", "HCM 2016", "'HCM 2016' is not in"),
    "work-zone limit above limit": named(
        "site_work_zone_speed_limit", 70, "is above the speed limit (65)"
    ),
    "TRUE in a number cell": named("site_lateral_clearance", True, "holds TRUE, not a number"),
    "date in a number cell": named(
        "site_ramp_density", dt.datetime(2027, 1, 5), "holds a date or time"
    ),
    "error value": named("site_jam_density", "#DIV/0!", "shows the error #DIV/0!"),
    "formula without a saved value": named(
        "site_speed_limit", "=60+5", "formula with no saved result"
    ),
    "drop outside the HCM range": named(
        "site_capacity_drop_work_zone", 25, "must be 0 to below 20 %"
    ),
    "negative queue limit": named("limit_queue_length", -1, "cannot be negative (got -1)"),
    "text delay limit": named("limit_average_delay", "15 min", "'15 min' is text"),
    "costs half filled": costs_half_filled,
    "occupancy below one": named("cost_car_occupancy", 0.5, "must be 1 to 10 persons/veh"),
    "unknown yes/no": named("opt_capacity_drop", "maybe", "'maybe' is not in the list"),
    "unknown demand mode": named("demand_mode", "daily", "'daily' is not in the list"),
    "demand gap": demand_gap,
    "demand duplicate": demand_duplicate,
    "demand not on the hour": demand_not_on_the_hour,
    "demand not whole hours": demand_part_hour,
    "demand odd interval": demand_odd_interval,
    "demand mixed interval": demand_mixed_interval,
    "negative demand": in_table(D, 3, "Demand (veh/h)", -5, "Demand cannot be negative"),
    "text demand": in_table(D, 3, "Demand (veh/h)", "n/a", "'n/a' is text"),
    "blank demand": in_table(D, 3, "Demand (veh/h)", None, "Demand is blank"),
    "blank demand date": in_table(D, 3, "Date", None, "Date is blank"),
    "implausible demand": in_table(D, 3, "Demand (veh/h)", 20_000, "more than 3,000 veh/h per"),
    "closure ends before it starts": in_table(
        CL, 0, "To", dt.datetime(2027, 5, 3, 20, 0), "ends (Mon 2027-05-03 20:00) before it"
    ),
    "overlapping closures": closure_overlap,
    "all lanes closed": in_table(CL, 1, "Lanes closed", 3, "all 3 lanes closed; at least one"),
    "more lanes closed than exist": in_table(CL, 1, "Lanes closed", 5, "the road has 3"),
    "closure outside the demand": in_table(
        CL, 1, "Date", dt.datetime(2027, 5, 6), "outside the demand period"
    ),
    "unknown barrier": in_table(CL, 0, "Barrier", "plastic fence", "'plastic fence' is not"),
    "unknown night work": in_table(CL, 0, "Night work", "sometimes", "'sometimes' is not in"),
    "unreadable time": in_table(CL, 0, "From", "9pm", "'9pm' is not a time"),
    "start past 24:00": in_table(CL, 0, "From", "25:00", "From is 25:00, past 24:00"),
    "blank lanes closed": in_table(CL, 0, "Lanes closed", None, "Lanes closed is blank"),
    "blank closure end": in_table(CL, 0, "To", None, "To is blank"),
    "override out of range": in_table(
        CL, 0, "Capacity override (veh/h/ln)", 50, "must be 100 to 3,000 veh/h/ln"
    ),
    "value below a table": value_below_closures,
    "missing defined name": missing_name,
    "broken defined name": broken_name,
    "missing sheet": missing_sheet,
    "missing table": missing_table,
    "renamed table column": renamed_header,
    "AADT shares off 100": aadt_shares_off,
    "AADT blank": aadt_blank,
    "AADT first day not a date": aadt_bad_date,
}


def check(path: Path, capsys: pytest.CaptureFixture[str]) -> tuple[int, list[str]]:
    before = path.read_bytes()
    status = main(["check", str(path)])
    err = capsys.readouterr().err
    assert path.read_bytes() == before  # the user's file is left byte-identical
    assert "Traceback" not in err
    return status, err.splitlines()


def test_at_least_25_distinct_bad_inputs() -> None:
    assert len(BAD_INPUTS) >= 25


@pytest.mark.slow
@pytest.mark.parametrize("case", list(BAD_INPUTS))
def test_bad_input_is_named_by_sheet_and_cell(
    case: str, kestrel_book: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    expected: list[tuple[str, str]] = []
    path = edited(kestrel_book, tmp_path, lambda wb: expected.append(BAD_INPUTS[case](wb)))
    ((where, words),) = expected
    status, lines = check(path, capsys)
    assert status == 2
    hits = [line for line in lines if line.startswith(f"wzq: {where}: ") and words in line]
    assert hits, f"no line names {where} with {words!r}:\n" + "\n".join(lines)
    assert lines[-1].startswith("wzq: ") and "nothing was written" in lines[-1]


def test_every_problem_is_reported_at_once(
    kestrel_book: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    cases = ("text in a number cell", "unknown terrain", "negative demand", "unknown barrier")
    cases += ("negative queue limit", "costs half filled")
    expected: list[tuple[str, str]] = []
    path = edited(
        kestrel_book, tmp_path, lambda wb: expected.extend(BAD_INPUTS[c](wb) for c in cases)
    )
    status, lines = check(path, capsys)
    assert status == 2
    problems = lines[:-1]
    assert len(problems) == len(cases)
    for (where, words), line in zip(expected, sorted_as(problems, expected), strict=True):
        assert line.startswith(f"wzq: {where}: ") and words in line


def sorted_as(lines: list[str], expected: list[tuple[str, str]]) -> list[str]:
    return [next(line for line in lines if f" {where}: " in line) for where, _ in expected]


def test_a_good_workbook_passes_check(
    kestrel_book: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    before = kestrel_book.read_bytes()
    assert main(["check", str(kestrel_book)]) == 0
    out = capsys.readouterr().out
    assert "no problems found; 2 closures" in out
    assert "demand Mon 2027-05-03 00:00 to Thu 2027-05-06 00:00 (72 h in 60-minute rows)" in out
    assert kestrel_book.read_bytes() == before


@pytest.mark.parametrize(
    ("name", "content", "words"),
    [
        ("notes.xlsx", b"this is not a spreadsheet", "workbook"),
        ("empty.xlsx", b"", "empty"),
        ("counts.csv", b"hour,veh\n0,100\n", "'.csv' files are not read"),
        ("old.xls", b"\xd0\xcf\x11\xe0 old format", "'.xls' files are not read"),
    ],
)
def test_files_that_are_not_plan_workbooks(
    tmp_path: Path, name: str, content: bytes, words: str, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / name
    path.write_bytes(content)
    status, lines = check(path, capsys)
    assert status == 2
    assert lines[0].startswith(f"wzq: {name}: ") and words in lines[0]


def test_a_workbook_without_our_names(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "other.xlsx"
    wb = Workbook()
    wb.active["A1"] = "someone else's sheet"
    wb.save(path)
    status, lines = check(path, capsys)
    assert status == 2
    assert len(lines) == 2
    assert "other.xlsx: this workbook has none of the wzq input names" in lines[0]


def test_a_workbook_of_someone_elses_with_a_table_of_its_own(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """A table that is not one of ours does not make a workbook a plan: refused whole,
    with what to do."""
    path = tmp_path / "crew roster.xlsx"
    wb = Workbook()
    ws = wb.active
    ws["A1"], ws["B1"], ws["A2"], ws["B2"] = "Crew", "Shift", "North", "night"
    ws.add_table(Table(displayName="Table1", ref="A1:B2"))
    wb.save(path)
    status, lines = check(path, capsys)
    assert status == 2
    assert lines[0] == (
        "wzq: crew roster.xlsx: this workbook has none of the wzq input names or tables; "
        "start from a workbook made by `wzq new` and copy your inputs into it"
    )


def test_a_plan_whose_input_names_are_gone_is_read_by_its_tables(kestrel_book: Path) -> None:
    """Every defined name deleted (a workbook rebuilt by copying sheets): the tables are
    ours, so the workbook is read and each missing input named, not refused whole."""
    wb = load_workbook(kestrel_book)
    for name in list(wb.defined_names):
        del wb.defined_names[name]
    with pytest.raises(PlanError) as e:
        read_plan_from_book(wb, "kestrel.xlsx")
    said = {p.where: p.message for p in e.value.problems}
    assert said["Start (name unit_system)"] == (
        "the defined name unit_system (Unit system) is missing; restore it in the Name "
        "Manager pointing at its value cell, or copy your inputs into a fresh workbook from "
        "`wzq new`"
    )
    assert not any("none of the wzq input names" in m for m in said.values())


def test_a_plan_whose_tables_are_gone_is_read_by_its_names(kestrel_book: Path) -> None:
    """Every table converted to a plain range (names kept): the workbook is still a plan,
    and the missing demand table is named, not the whole workbook refused."""
    wb = load_workbook(kestrel_book)
    for ws in wb.worksheets:
        for name in list(ws.tables):
            del ws.tables[name]
    with pytest.raises(PlanError) as e:
        read_plan_from_book(wb, "kestrel.xlsx")
    said = [f"{p.where}: {p.message}" for p in e.value.problems]
    assert not any("none of the wzq input names" in m for m in said)
    assert any("DemandTable" in m for m in said), said


def test_plan_level_problems_map_back_to_cells(
    kestrel_book: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The plan's own validation (keys like ``closures[1]``) is reported at sheet cells."""
    import wzq.engine.plan

    fake = [
        Problem("closures[1].barrier", "barrier problem"),
        Problem("site.lanes", "lanes problem"),
        Problem("demand[5]", "demand problem"),
        Problem("thresholds.max_queue_length", "limit problem"),
        Problem("options.something_new", "other problem"),
    ]
    monkeypatch.setattr(wzq.engine.plan, "validate", lambda plan: list(fake))
    with pytest.raises(PlanError) as e:
        read_plan(kestrel_book)
    assert [(p.where, p.message) for p in e.value.problems] == [
        ("Closures!A7", "barrier problem"),
        ("Site!B8", "lanes problem"),
        (f"Demand!C{DEMAND_START_ROW + 5}", "demand problem"),
        (name_of(kestrel_book, "limit_queue_length"), "limit problem"),
        ("kestrel.xlsx: options.something_new", "other problem"),
    ]


def name_of(path: Path, name: str) -> str:
    return name_at(load_workbook(path), name)
