"""Tables, formulas and merged cells: the reader's value paths beyond one typed value.

Fast, in memory (see ``test_cell_values.py``): the hourly shares of an AADT, the saved
result of a formula typed in an input cell, merged cells, rows typed below a table,
values typed beside it, hidden rows. Expected numbers are worked by hand beside each
check; every message names its sheet and cell.
"""

from __future__ import annotations

import datetime as dt
import io
import re
import zipfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import openpyxl
import pytest
from openpyxl.utils.datetime import CALENDAR_MAC_1904
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.formula import ArrayFormula
from openpyxl.worksheet.table import Table
from workbook_helpers import (
    fill_template,
    find_table,
    problem,
    read,
    save_results_as_a_spreadsheet_program,
    set_named,
    table_cell,
)

from wzq.engine.plan import Plan, PlanError
from wzq.io import fields as F
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader import read_plan_from_book

KESTREL = Path(__file__).resolve().parents[2] / "examples" / "kestrel_ridge_weeknight.json"
SHARES = L.SHARE_TABLE  # Demand!E16:G40 in the template: header row 16, hour h on row 17 + h
WEEKDAY, WEEKEND = "Weekday % of AADT", "Weekend % of AADT"
BELOW = 36  # the closure table is Closures!A5:H35 in the template: row 36 lies below it


@pytest.fixture(scope="module")
def kestrel(tmp_path_factory: pytest.TempPathFactory) -> bytes:
    """The Kestrel Ridge example (US units, three lanes; closures Mon 2027-05-03 21:00 to
    Tue 05:00 on row 6 and Tue 22:00 to Wed 05:00 on row 7) in a fresh template."""
    path = fill_template(load_plan(KESTREL), tmp_path_factory.mktemp("tables") / "k.xlsx")
    return path.read_bytes()


# -- the hourly shares of an AADT -----------------------------------------------------------


def aadt(wb: Any, shares: Callable[[int], tuple[Any, Any]] | None = None) -> None:
    """Demand from an AADT of 40,000 (55 % this way, no growth) over five days from
    Saturday 2027-05-01; ``shares(h)`` gives hour h's (weekday, weekend) cells."""
    set_named(wb, "demand_mode", "from AADT")
    set_named(wb, "aadt_value", 40_000)
    set_named(wb, "aadt_count_year", 2027)
    set_named(wb, "aadt_growth_percent", None)
    set_named(wb, "aadt_direction_percent", 55)
    set_named(wb, "aadt_first_day", dt.datetime(2027, 5, 1))
    set_named(wb, "aadt_days", 5)
    if shares is not None:
        for h in range(24):
            wd, we = shares(h)
            table_cell(wb, SHARES, h, WEEKDAY).value = wd
            table_cell(wb, SHARES, h, WEEKEND).value = we


def flat(h: int) -> tuple[float, float]:
    return 100 / 24, 100 / 24


def peaked(h: int) -> tuple[float, float]:
    """Weekday: 12.5 % in hour 7 and 87.5 / 23 % in every other; weekend flat."""
    return (12.5 if h == 7 else 87.5 / 23), 100 / 24


def test_aadt_shares_give_each_hour_of_each_day(kestrel: bytes) -> None:
    plan = read(kestrel, lambda wb: aadt(wb, peaked))
    assert isinstance(plan, Plan), plan
    flows = plan.demand.flows_veh_h
    daily = 40_000 * 0.55  # 22,000 veh/day this way
    assert len(flows) == 5 * 24
    # Sat and Sun are weekend days (flat: 22,000 / 24), Mon to Wed weekdays
    np.testing.assert_allclose(flows[:48], daily / 24, rtol=1e-12)
    assert flows[48 + 7] == pytest.approx(daily * 0.125, rel=1e-12)  # Mon 07:00: 2,750
    assert flows[48 + 8] == pytest.approx(daily * 0.875 / 23, rel=1e-12)
    assert flows[4 * 24 + 7] == pytest.approx(2750.0, rel=1e-12)  # Wed 07:00


@pytest.mark.parametrize(
    ("hour", "expected"),
    [
        (7, 2750.0),  # the hour as a whole number
        (7.0, 2750.0),
        ("07:00", 2750.0),  # as text
        (dt.time(7, 0), 2750.0),
        (7 / 24, 2750.0),  # as a fraction of a day
    ],
)
def test_an_aadt_hour_is_read_however_it_is_typed(
    kestrel: bytes, hour: Any, expected: float
) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, peaked)
        table_cell(wb, SHARES, 7, "Hour").value = hour

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert plan.demand.flows_veh_h[48 + 7] == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    ("hour", "message"),
    [
        (7.5, "Hour 7.5 is not an hour of the day; use 0-23 or 00:00-23:00"),
        (24, "Hour 24 is not an hour of the day; use 0-23 or 00:00-23:00"),
        (None, "Hour is blank; type the hour the share starts, e.g. 07:00"),
        ("07:30", "Hour must be a whole hour, e.g. 07:00"),
        ("2027-05-03 07:00", "Hour holds a date; type only the hour, e.g. 07:00"),
        ("seven", "Hour: 'seven' is not a time; type a time like 21:00 (24-hour clock)"),
        ("06:00", "hour 06:00 appears twice; keep one row per hour"),
        (
            "24:00",
            "Hour is 24:00, past 24:00; use 00:00-23:59 (in a formula, wrap the time in "
            "MOD(...,1) to get 00:00)",
        ),
    ],
)
def test_an_aadt_hour_that_cannot_be_read_names_its_cell(
    kestrel: bytes, hour: Any, message: str
) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        table_cell(wb, SHARES, 7, "Hour").value = hour

    assert read(kestrel, edit) == {"Demand!E24": message}  # and no other problem


@pytest.mark.parametrize("first", ["07:30", "06:00"])
def test_every_bad_aadt_hour_is_named(kestrel: bytes, first: str) -> None:
    # a bad or repeated hour on row 24 does not stop the rows after it being read
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        table_cell(wb, SHARES, 7, "Hour").value = first
        table_cell(wb, SHARES, 9, "Hour").value = 24

    out = read(kestrel, edit)
    assert isinstance(out, dict), out
    assert set(out) == {"Demand!E24", "Demand!E26"}
    assert out["Demand!E26"] == "Hour 24 is not an hour of the day; use 0-23 or 00:00-23:00"


def test_an_aadt_hour_typed_as_the_number_1_is_01_00(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, peaked)
        table_cell(wb, SHARES, 1, "Hour").value = 1

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert plan.demand.flows_veh_h[48 + 1] == pytest.approx(22_000 * 0.875 / 23, rel=1e-12)


def test_small_aadt_shares_are_not_taken_for_fractions(kestrel: bytes) -> None:
    # the template's night shares (0.6 %, 0.8 % ...) are percentages, not fractions
    plan = read(kestrel, lambda wb: aadt(wb))
    assert isinstance(plan, Plan), plan
    assert not [w for w in plan.input_warnings if "% of AADT is" in w]


def test_an_aadt_hour_missing_is_named(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        for header in L.SHARE_COLUMNS:  # hours 07:00 and 08:00 cleared
            table_cell(wb, SHARES, 7, header).value = None
            table_cell(wb, SHARES, 8, header).value = None

    message = problem(kestrel, edit, "Demand!E16")
    assert message == "HourlyShareTable has no share for hour(s) 07:00, 08:00; give all 24 hours"


@pytest.mark.parametrize(
    ("scale", "extra", "where", "message"),
    [
        # hour 7 weekday 2 points too many: 102.0 %
        (1.0, 2.0, "Demand!F16", "the column 'Weekday % of AADT' sums to 102.0 %, not 100 %; "),
        (1.0, -0.6, "Demand!F16", "the column 'Weekday % of AADT' sums to 99.4 %, not 100 %; "),
        # typed as fractions: both columns sum to 1
        (0.01, 0.0, "Demand!F16", "the column 'Weekday % of AADT' sums to 1.0 %, not 100 %; "),
        (0.01, 0.0, "Demand!G16", "the column 'Weekday % of AADT' sums to 1.0 %, not 100 %; "),
        # half the shares: 50 %, far from 1 as from 100, so not taken for fractions
        (0.5, 0.0, "Demand!F16", "the column 'Weekday % of AADT' sums to 50.0 %, not 100 %; "),
        # 1.00498: within 0.005 of 1, so fractions
        (0.01, 0.00498, "Demand!F16", "the column 'Weekday % of AADT' sums to 1.0 %, not 100 %; "),
    ],
)
def test_aadt_shares_must_sum_to_100(
    kestrel: bytes, scale: float, extra: float, where: str, message: str
) -> None:
    def shares(h: int) -> tuple[float, float]:
        return scale * 100 / 24 + (extra if h == 7 else 0.0), scale * 100 / 24

    got = problem(kestrel, lambda wb: aadt(wb, shares), where)
    if scale >= 0.5:
        assert got == message + "correct the shares"
    else:
        column = WEEKDAY if where.startswith("Demand!F") else WEEKEND
        assert got == message.replace(WEEKDAY, column) + (
            "the shares look like fractions: type them as percentages (7 for 7 %), or format "
            "the cells as percentages"
        )


@pytest.mark.parametrize("extra", [0.49, -0.49, 0.3])
def test_aadt_shares_within_half_a_point_of_100_are_taken(kestrel: bytes, extra: float) -> None:
    def shares(h: int) -> tuple[float, float]:
        return 100 / 24 + (extra if h == 7 else 0.0), 100 / 24

    plan = read(kestrel, lambda wb: aadt(wb, shares))
    assert isinstance(plan, Plan), plan
    # Mon 07:00: 22,000 x (100/24 + extra) % (the shares are used as typed)
    assert plan.demand.flows_veh_h[48 + 7] == pytest.approx(220 * (100 / 24 + extra), rel=1e-12)


def test_aadt_shares_half_a_point_over_100_are_taken(kestrel: bytes) -> None:
    # 23 hours of 4 % and one of 8.5 %: exactly 100.5 % in binary floating point
    plan = read(kestrel, lambda wb: aadt(wb, lambda h: (8.5 if h == 23 else 4.0, 100 / 24)))
    assert isinstance(plan, Plan), plan
    assert plan.demand.flows_veh_h[48 + 23] == pytest.approx(22_000 * 0.085, rel=1e-12)


def test_aadt_shares_in_percent_cells_are_read_as_shown(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, lambda h: (0.01 * peaked(h)[0], 0.01 * peaked(h)[1]))
        for h in range(24):
            for header in (WEEKDAY, WEEKEND):
                table_cell(wb, SHARES, h, header).number_format = "0.0%"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert plan.demand.flows_veh_h[48 + 7] == pytest.approx(2750.0, rel=1e-12)


def test_a_negative_aadt_share_is_named(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        table_cell(wb, SHARES, 7, WEEKEND).value = -1

    message = problem(kestrel, edit, "Demand!G24")
    assert message == "Weekend % of AADT cannot be negative (got -1); check the value"


def test_a_growth_rate_that_looks_like_a_fraction_gets_a_hint(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        set_named(wb, "aadt_growth_percent", 0.02)

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert (
        "Demand!F10: Traffic growth is 0.02 %: did you mean 2 %? Percentages are typed as "
        "numbers of percent (type 2, or 2% to get a percent-formatted cell); ignore this if "
        "0.02 % is right"
    ) in plan.input_warnings
    # 0.1 % a year is not taken for a fraction (the hint is for sizes below 0.1)
    set_10 = read(kestrel, lambda wb: (aadt(wb, flat), set_named(wb, "aadt_growth_percent", 0.1)))
    assert isinstance(set_10, Plan)
    assert not [w for w in set_10.input_warnings if w.startswith("Demand!F10")]


@pytest.mark.parametrize(
    ("name", "where", "message"),
    [
        ("aadt_first_day", "Demand!F12", "First day is blank; type a date, e.g. 2027-05-03"),
        ("aadt_count_year", "Demand!F9", "Year of the count is blank; type a number (year)"),
    ],
)
def test_an_aadt_input_left_blank_says_what_to_type(
    kestrel: bytes, name: str, where: str, message: str
) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        set_named(wb, name, None)

    assert problem(kestrel, edit, where) == message


# -- formulas typed in input cells ------------------------------------------------------------


def saved(
    data: bytes,
    tmp_path: Path,
    formulas: dict[str, str],
    results: dict[str, Any],
    edit: Callable[[Any], Any] | None = None,
    *,
    as_bytes: bool = False,
) -> Plan | dict[str, str]:
    """Formulas (``Sheet!A1`` or a Site-sheet cell) with the results a spreadsheet program
    saved, read from the file (by path, or as bytes alone with ``as_bytes``)."""
    path = tmp_path / "f.xlsx"
    wb = openpyxl.load_workbook(io.BytesIO(data))
    where = {c: tuple(c.split("!")) if "!" in c else ("Site", c) for c in {*formulas, *results}}
    for cell, formula in formulas.items():
        sheet, coord = where[cell]
        wb[sheet][coord].value = formula
    if edit is not None:
        edit(wb)
    wb.save(path)
    save_results_as_a_spreadsheet_program(path, {where[c]: v for c, v in results.items()})
    book = openpyxl.load_workbook(path)
    try:
        if as_bytes:
            return read_plan_from_book(book, "f.xlsx", data=path.read_bytes())
        return read_plan_from_book(book, "f.xlsx", path)
    except PlanError as e:
        return {p.where: p.message for p in e.problems}


def with_shared_string_result(
    path: Path, sheet: int, coord: str, text: str, entry: str = "<si><t>{}</t></si>"
) -> None:
    """Store the saved result of the formula in ``coord`` as entry 0 of a shared-string
    table (``t="s"``, ECMA-376 Part 1, 18.3.1.4), as some programs write text results;
    ``entry`` is that entry's XML."""
    sst = (
        '<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="1" '
        f'uniqueCount="1">{entry.format(text)}</sst>'
    )
    kind = "application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"
    out = io.BytesIO()
    with zipfile.ZipFile(path) as zin, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            part = zin.read(info).decode()
            if info.filename == "[Content_Types].xml":
                part = part.replace(
                    "</Types>",
                    f'<Override PartName="/xl/sharedStrings.xml" ContentType="{kind}"/></Types>',
                )
            if info.filename == f"xl/worksheets/sheet{sheet}.xml":
                part, n = re.subn(
                    rf'<c r="{coord}"([^>]*?) t="str"([^>]*)>(<f>[^<]*</f>)<v>[^<]*</v>',
                    rf'<c r="{coord}"\1 t="s"\2>\3<v>0</v>',
                    part,
                )
                assert n == 1
            zout.writestr(info, part)
        zout.writestr("xl/sharedStrings.xml", sst)
    path.write_bytes(out.getvalue())


def test_a_formula_is_read_by_its_saved_result(kestrel: bytes, tmp_path: Path) -> None:
    plan = saved(kestrel, tmp_path, {"B9": "=60+10"}, {"B9": 70})
    assert isinstance(plan, Plan), plan
    assert plan.site.speed_limit == pytest.approx(70 * 0.44704, rel=1e-12)  # mi/h -> m/s


@pytest.mark.parametrize(
    ("result", "message"),
    [
        (
            None,
            "holds a formula with no saved result; open and save the workbook in your "
            "spreadsheet program, or type the value",
        ),
        ("#DIV/0!", "shows the error #DIV/0!; fix the formula or type the value"),
        ("", "Speed limit is blank; type a number (mi/h)"),  # a formula showing nothing
    ],
)
def test_a_formula_without_a_usable_result_names_its_cell(
    kestrel: bytes, tmp_path: Path, result: Any, message: str
) -> None:
    results = {} if result is None else {"B9": result}
    out = saved(kestrel, tmp_path, {"B9": '=IF(B8>9,"",70)'}, results)
    assert isinstance(out, dict), out
    assert out["Site!B9"] == message


def test_a_formula_showing_nothing_in_an_optional_cell_is_a_blank(
    kestrel: bytes, tmp_path: Path
) -> None:
    # free-flow speed left blank: the speed limit + 5 mi/h (HCM 7th ed. default)
    plan = saved(kestrel, tmp_path, {"B11": '=IF(B8>2,"",70)'}, {"B11": ""})
    assert isinstance(plan, Plan), plan
    assert plan.site.free_flow_speed is None


def test_a_formula_in_memory_has_no_saved_result(kestrel: bytes) -> None:
    message = problem(kestrel, lambda wb: set_named(wb, "site_speed_limit", "=60+5"), "Site!B9")
    assert message == (
        "holds a formula with no saved result; open and save the workbook in your "
        "spreadsheet program, or type the value"
    )


def test_a_formula_from_an_output_sheet_is_refused(kestrel: bytes, tmp_path: Path) -> None:
    out = saved(kestrel, tmp_path, {"B9": f"='{L.RESULTS}'!C5"}, {"B9": 65})
    assert isinstance(out, dict), out
    assert out["Site!B9"] == (
        f"its formula takes its value from {L.RESULTS}!C5, on a sheet wzq rewrites on every "
        "run, so its saved result can be out of date; type the value, or refer to a cell of "
        "an input sheet"
    )


def test_a_formula_read_from_the_files_bytes_alone(kestrel: bytes, tmp_path: Path) -> None:
    plan = saved(kestrel, tmp_path, {"B9": "=60+10"}, {"B9": 70}, as_bytes=True)
    assert isinstance(plan, Plan), plan
    assert plan.site.speed_limit == pytest.approx(70 * 0.44704, rel=1e-12)


def test_a_formula_result_shown_as_a_date_is_a_date(kestrel: bytes, tmp_path: Path) -> None:
    def date_format(wb: Any) -> None:
        wb["Site"]["B9"].number_format = "yyyy-mm-dd"

    out = saved(kestrel, tmp_path, {"B9": "=60+5"}, {"B9": 65}, date_format)
    assert isinstance(out, dict), out
    # serial 65 of the 1900 system is 1900-03-05 (60 is the fictitious 1900-02-29)
    assert out["Site!B9"] == (
        "Speed limit holds a date or time (1900-03-05 00:00), not a number; set the cell's "
        "format to General or Number and type the number"
    )


def test_a_formula_date_in_a_1904_workbook(kestrel: bytes, tmp_path: Path) -> None:
    def epoch(wb: Any) -> None:
        wb.epoch = CALENDAR_MAC_1904

    # 2027-05-03 is day 45,048 of the 1904 system (days since 1904-01-01, ECMA-376 18.17.4.1)
    day = (dt.date(2027, 5, 3) - dt.date(1904, 1, 1)).days
    plan = saved(kestrel, tmp_path, {"Closures!A6": "=A7-1"}, {"Closures!A6": day}, epoch)
    assert isinstance(plan, Plan), plan
    assert plan.closures[0].start == dt.datetime(2027, 5, 3, 21, 0)


@pytest.mark.parametrize("as_bytes", [False, True])
def test_a_formula_text_result_kept_as_a_shared_string(
    kestrel: bytes, tmp_path: Path, as_bytes: bool
) -> None:
    path = tmp_path / "s.xlsx"
    wb = openpyxl.load_workbook(io.BytesIO(kestrel))
    wb["Site"]["B14"].value = '=IF(B8>2,"rolling","level")'
    wb.save(path)
    save_results_as_a_spreadsheet_program(path, {("Site", "B14"): "rolling"})
    with_shared_string_result(path, wb.sheetnames.index("Site") + 1, "B14", "rolling")
    book = openpyxl.load_workbook(path)
    source = {"data": path.read_bytes()} if as_bytes else {"path": path}
    plan = read_plan_from_book(book, "s.xlsx", **source)
    assert plan.site.terrain == "rolling"


@pytest.mark.parametrize("cell", ["Closures!D6", "Site!B9"])
def test_an_array_formula_is_read_by_its_saved_result(
    kestrel: bytes, tmp_path: Path, cell: str
) -> None:
    # an array formula (Ctrl+Shift+Enter, or a dynamic array saved for older programs) is
    # stored as <f t="array" ref="D6"> (ECMA-376 Part 1, 18.3.1.40); its saved result is
    # read as that of any formula. In a table it must not pass as a typed number: the
    # first closure (typed 1 lane) becomes 2 lanes closed, the result shown.
    sheet, coord = cell.split("!")
    result = 2 if sheet == "Closures" else 70

    def array(wb: Any) -> None:
        wb[sheet][coord].value = ArrayFormula(coord, f"={result}*1")

    plan = saved(kestrel, tmp_path, {}, {cell: result}, array)
    assert isinstance(plan, Plan), plan
    if sheet == "Closures":
        assert [c.lanes_closed for c in plan.closures] == [2, 2]  # typed: 1 and 2
    else:
        assert plan.site.speed_limit == pytest.approx(70 * 0.44704, rel=1e-12)  # mi/h -> m/s


def test_a_formula_result_in_a_damaged_part_is_no_result(kestrel: bytes, tmp_path: Path) -> None:
    path = tmp_path / "d.xlsx"
    wb = openpyxl.load_workbook(io.BytesIO(kestrel))
    wb["Site"]["B14"].value = '=IF(B8>2,"rolling","level")'
    wb.save(path)
    save_results_as_a_spreadsheet_program(path, {("Site", "B14"): "rolling"})
    book = openpyxl.load_workbook(path)  # the workbook as loaded; the bytes read later damaged
    sheet = wb.sheetnames.index("Site") + 1
    with_shared_string_result(path, sheet, "B14", "rolling", entry="<si><t>{}</si>")
    damaged = path.read_bytes()
    with pytest.raises(PlanError) as e:
        read_plan_from_book(book, "d.xlsx", data=damaged)
    assert {p.where: p.message for p in e.value.problems} == {
        "Site!B14": "holds a formula with no saved result; open and save the workbook in your "
        "spreadsheet program, or type the value"
    }


def test_a_formula_with_a_changing_function_is_warned_about(kestrel: bytes, tmp_path: Path) -> None:
    plan = saved(kestrel, tmp_path, {"B9": "=TODAY()*0+65"}, {"B9": 65})
    assert isinstance(plan, Plan), plan
    assert (
        "Site!B9: its formula uses TODAY(), whose value changes by itself; wzq uses the result "
        "saved with the workbook (as of its last recalculation): type the value if it must "
        "not change"
    ) in plan.input_warnings


def test_a_demand_of_zero_from_a_formula_is_warned_about(kestrel: bytes, tmp_path: Path) -> None:
    plan = saved(kestrel, tmp_path, {"Demand!C9": "=D9"}, {"Demand!C9": 0})
    assert isinstance(plan, Plan), plan
    assert plan.demand.flows_veh_h[0] == 0.0
    assert (
        "Demand!C9: Demand is 0 from the formula =D9, read as an hour with no traffic; check "
        "what it refers to (a formula pointing at an empty cell gives 0)"
    ) in plan.input_warnings


def test_a_workbook_set_to_calculate_by_hand_is_warned_about(
    kestrel: bytes, tmp_path: Path
) -> None:
    path = tmp_path / "m.xlsx"
    wb = openpyxl.load_workbook(io.BytesIO(kestrel))
    wb["Site"]["B9"].value = "=60+5"
    wb.calculation.calcMode = "manual"
    wb.save(path)
    save_results_as_a_spreadsheet_program(path, {("Site", "B9"): 65})
    plan = read_plan_from_book(openpyxl.load_workbook(path), "m.xlsx", path)
    assert (
        "m.xlsx: the workbook is set to calculate manually, so the saved results of its "
        "formulas may be out of date; recalculate it and save it in your spreadsheet program "
        "before running wzq"
    ) in plan.input_warnings


# -- merged cells --------------------------------------------------------------------------


def test_cells_merged_down_one_column_are_read_in_every_row(kestrel: bytes) -> None:
    # From merged over rows 6 and 7: the second closure starts at 21:00, as shown
    plan = read(kestrel, lambda wb: wb["Closures"].merge_cells("B6:B7"))
    assert isinstance(plan, Plan), plan
    assert plan.closures[1].start == dt.datetime(2027, 5, 4, 21, 0)
    assert plan.closures[1].end == dt.datetime(2027, 5, 5, 5, 0)


@pytest.mark.parametrize(("cells", "where"), [("B6:C6", "Closures!C6"), ("B6:C7", "Closures!B7")])
def test_cells_merged_across_columns_are_refused(kestrel: bytes, cells: str, where: str) -> None:
    message = problem(kestrel, lambda wb: wb["Closures"].merge_cells(cells), where)
    assert message == (
        f"is part of the merged cells {cells}, which span several columns; unmerge them and "
        "type each value in its own cell"
    )


# -- rows below a table, values beside it, hidden rows -------------------------------------------


def third_closure(wb: Any, row: int = BELOW, lanes: Any = 1) -> None:
    """Wed 2027-05-05 21:00 to 23:00, one lane, typed in ``row`` below the closure table."""
    ws = wb["Closures"]
    for col, value in zip(
        "ABCDE", ("2027-05-05", "21:00", "23:00", lanes, "cones or drums"), strict=True
    ):
        ws[f"{col}{row}"] = value


def test_a_row_typed_below_the_table_is_read_with_a_warning(kestrel: bytes) -> None:
    plan = read(kestrel, lambda wb: third_closure(wb, BELOW + 2))
    assert isinstance(plan, Plan), plan
    assert plan.closures[2].start == dt.datetime(2027, 5, 5, 21, 0)
    assert plan.closures[2].end == dt.datetime(2027, 5, 5, 23, 0)
    assert (
        f"Closures!A{BELOW + 2}: this row lies below the table ClosureTable (which ends at row "
        f"35) and was read as part of it; extend the table over it so that every program sees "
        "it as a row of the table"
    ) in plan.input_warnings


def test_rows_typed_below_the_table_are_named_together(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        third_closure(wb, BELOW)
        third_closure(wb, BELOW + 1)
        wb["Closures"][f"B{BELOW + 1}"] = "23:00"  # Wed 23:00 to 23:30
        wb["Closures"][f"C{BELOW + 1}"] = "23:30"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert len(plan.closures) == 4
    assert (
        f"Closures!A{BELOW}, Closures!A{BELOW + 1}: these rows lie below the table ClosureTable "
        "(which ends at row 35) and were read as part of it; extend the table over them so "
        "that every program sees them as rows of the table"
    ) in plan.input_warnings


@pytest.mark.parametrize("n", [5, 6, 7])
def test_more_than_five_rows_below_the_table_are_named_five_then_counted(
    kestrel: bytes, n: int
) -> None:
    # n one-hour closures on Monday 2027-05-03 (08:00, 10:00, ...), typed below the table:
    # the first five rows are named, then "and N more" (none for five)
    def edit(wb: Any) -> None:
        for i in range(n):
            third_closure(wb, BELOW + i)
            ws = wb["Closures"]
            ws[f"A{BELOW + i}"] = "2027-05-03"
            ws[f"B{BELOW + i}"], ws[f"C{BELOW + i}"] = f"{8 + 2 * i}:00", f"{9 + 2 * i}:00"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert len(plan.closures) == 2 + n
    named = ", ".join(f"Closures!A{BELOW + i}" for i in range(5))
    more = f" and {n - 5} more" if n > 5 else ""
    assert (
        f"{named}{more}: these rows lie below the table ClosureTable (which ends at row 35) "
        "and were read as part of it; extend the table over them so that every program sees "
        "them as rows of the table"
    ) in plan.input_warnings


@pytest.mark.parametrize("hide", ["format", "colour"])
def test_a_blank_table_cell_that_would_not_show_a_value_is_not_queried(
    kestrel: bytes, hide: str
) -> None:
    # the first closure's capacity override (Closures!G6) is blank: an empty number format
    # or white text on it hides nothing, so nothing is said (its row's other cells are read)
    def edit(wb: Any) -> None:
        cell = wb["Closures"]["G6"]
        assert cell.value is None
        if hide == "format":
            cell.number_format = ";;;"
        else:
            cell.font = openpyxl.styles.Font(color="FFFFFF")

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert not [w for w in plan.input_warnings if "cannot be seen" in w]

    # the same style on a value typed there is said (the check is live)
    def typed(wb: Any) -> None:
        edit(wb)
        wb["Closures"]["G6"] = 1500

    plan = read(kestrel, typed)
    assert isinstance(plan, Plan), plan
    (said,) = [w for w in plan.input_warnings if "cannot be seen" in w]
    why = (
        "its number format ';;;' shows nothing"
        if hide == "format"
        else "its text colour #FFFFFF on a fill of #FBEFD5 cannot be read"
    )
    assert said == (
        f"Closures!G6: a value of ClosureTable cannot be seen on the sheet (Closures!G6: {why}) "
        "but is read as part of the plan; give the cells a visible format and colour to check "
        "them, or clear them to leave them out"
    )


def test_a_problem_in_a_row_below_the_table_says_why_the_row_was_read(kestrel: bytes) -> None:
    message = problem(kestrel, lambda wb: third_closure(wb, BELOW, lanes=2.5), f"Closures!D{BELOW}")
    assert message == (
        "Lanes closed must be a whole number, got 2.5 (this row lies below the table "
        "ClosureTable and is read as part of it; if it is not part of the plan, move it out "
        "of the table's columns)"
    )


def test_a_total_typed_below_the_table_is_the_users_own(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        ws = wb["Closures"]
        ws[f"A{BELOW}"] = "Total"
        ws[f"D{BELOW}"] = "=SUM(D6:D35)"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert len(plan.closures) == len(load_plan(KESTREL).closures)
    assert not [w for w in plan.input_warnings if "below the table" in w]


def test_a_formula_below_the_table_that_reads_elsewhere_is_a_row(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        ws = wb["Closures"]
        ws[f"A{BELOW}"] = "Total"
        ws[f"D{BELOW}"] = "=SUM(D1:D4)"  # above the table: not a total of it

    out = read(kestrel, edit)
    assert isinstance(out, dict), out
    assert out[f"Closures!D{BELOW}"].startswith("holds a formula with no saved result")


def test_a_value_beside_the_table_is_named_but_not_read(kestrel: bytes) -> None:
    plan = read(kestrel, lambda wb: wb["Closures"].__setitem__("I6", "check with the police"))
    assert isinstance(plan, Plan), plan
    assert (
        "Closures!I6: a value right beside the table ClosureTable (columns A to H) not read "
        "as part of the plan; if it belongs to the plan, move it into the table's own columns"
    ) in plan.input_warnings


def test_values_beside_the_table_are_counted(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        for r in range(6, 11):
            wb["Closures"][f"I{r}"] = f"note {r}"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert (
        "Closures!I6, Closures!I7, Closures!I8 and 2 more: values right beside the table "
        "ClosureTable (columns A to H) not read as part of the plan; if they belong to the "
        "plan, move them into the table's own columns"
    ) in plan.input_warnings


@pytest.mark.parametrize(
    ("rows", "named"),
    [
        ((5, 35), "Closures!I5, Closures!I35"),  # the header row and the table's last row
        ((6, 7, 8), "Closures!I6, Closures!I7, Closures!I8"),  # three: all named
        ((6, 7, 8, 9), "Closures!I6, Closures!I7, Closures!I8 and 1 more"),
    ],
)
def test_values_beside_the_table_from_its_header_to_its_last_row_are_named(
    kestrel: bytes, rows: tuple[int, ...], named: str
) -> None:
    # the closure table is Closures!A5:H35: column I beside it, from its header row (5) to
    # its last row (35); three are named, then counted
    def edit(wb: Any) -> None:
        for r in rows:
            wb["Closures"][f"I{r}"] = f"note {r}"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert (
        f"{named}: values right beside the table ClosureTable (columns A to H) not read as "
        "part of the plan; if they belong to the plan, move them into the table's own columns"
    ) in plan.input_warnings


def test_a_value_beside_the_table_in_a_table_or_input_of_its_own_is_not_named(
    kestrel: bytes,
) -> None:
    def edit(wb: Any) -> None:
        ws = wb["Closures"]
        ws["I5"], ws["I6"], ws["I7"] = "Crew", "night crew", "day crew"
        ws.add_table(Table(displayName="Crews", ref="I5:I7"))
        ws["I9"] = "Kestrel Ridge resurfacing"  # the plan's title, moved here
        wb.defined_names["meta_title"] = DefinedName("meta_title", attr_text="Closures!$I$9")

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert plan.meta.title == "Kestrel Ridge resurfacing"
    assert not [w for w in plan.input_warnings if "beside the table" in w]


def test_a_hidden_row_is_read_with_a_warning(kestrel: bytes) -> None:
    plan = read(kestrel, lambda wb: setattr(wb["Closures"].row_dimensions[7], "hidden", True))
    assert isinstance(plan, Plan), plan
    assert len(plan.closures) == len(load_plan(KESTREL).closures)
    assert (
        "Closures!A7: hidden or filtered-out row of ClosureTable read as part of the plan "
        "(hiding a row does not take it out); delete or clear a row to leave it out"
    ) in plan.input_warnings


@pytest.mark.parametrize("n", [2, 5, 6, 7])
def test_hidden_rows_are_named_five_then_counted(kestrel: bytes, n: int) -> None:
    # the first n hours of the demand (Demand!A9 on) hidden: all read, the first five
    # named, then "and N more" (none for five)
    def edit(wb: Any) -> None:
        for r in range(9, 9 + n):
            wb["Demand"].row_dimensions[r].hidden = True

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert np.array_equal(plan.demand.flows_veh_h, load_plan(KESTREL).demand.flows_veh_h)
    named = ", ".join(f"Demand!A{r}" for r in range(9, 9 + min(n, 5)))
    more = f" and {n - 5} more" if n > 5 else ""
    assert (
        f"{named}{more}: hidden or filtered-out rows of {L.DEMAND_TABLE} read as part of the "
        "plan (hiding a row does not take it out); delete or clear a row to leave it out"
    ) in plan.input_warnings


@pytest.mark.parametrize("n", [5, 6, 7])
def test_values_that_cannot_be_seen_are_named_five_then_counted(kestrel: bytes, n: int) -> None:
    # the first n hourly demands (Demand!C9 on) given the number format ';;;': all read,
    # the first five named, then "and N more" (none for five), each reason once
    def edit(wb: Any) -> None:
        for r in range(9, 9 + n):
            wb["Demand"][f"C{r}"].number_format = ";;;"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert np.array_equal(plan.demand.flows_veh_h, load_plan(KESTREL).demand.flows_veh_h)
    named = ", ".join(f"Demand!C{r}" for r in range(9, 14))
    more = f" and {n - 5} more" if n > 5 else ""
    assert (
        f"{named}{more}: {n} values of {L.DEMAND_TABLE} cannot be seen on the sheet "
        "(Demand!C9: its number format ';;;' shows nothing) but are read as part of the "
        "plan; give the cells a visible format and colour to check them, or clear them to "
        "leave them out"
    ) in plan.input_warnings


OVERRIDE = "Capacity override (veh/h/ln)"  # column G of the closure table


@pytest.mark.parametrize(
    ("typed", "said"),
    [
        (
            {1: 1900},  # Night 2 only: one value
            "Closures!G7: the column 'Capacity override (veh/h/ln)' of ClosureTable is hidden, "
            "and its 1 value is read as part of the plan (hiding a column does not take it "
            "out); unhide the column to see it, or clear it to leave it out",
        ),
        (
            {0: 1800, 1: 1900},  # both nights: named at the first
            "Closures!G6: the column 'Capacity override (veh/h/ln)' of ClosureTable is hidden, "
            "and its 2 values are read as part of the plan (hiding a column does not take it "
            "out); unhide the column to see them, or clear them to leave them out",
        ),
    ],
)
def test_values_in_a_hidden_column_are_counted_and_named_at_the_first(
    kestrel: bytes, typed: dict[int, float], said: str
) -> None:
    def edit(wb: Any) -> None:
        for index, value in typed.items():
            table_cell(wb, L.CLOSURE_TABLE, index, OVERRIDE).value = value
        wb["Closures"].column_dimensions["G"].hidden = True

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert [c.capacity_override_veh_h_ln for c in plan.closures[:2]] == [
        typed.get(0),
        typed.get(1),
    ]
    assert [w for w in plan.input_warnings if "hidden" in w] == [said]


def test_a_named_input_in_a_hidden_column_is_said_and_an_empty_hidden_column_is_not(
    kestrel: bytes,
) -> None:
    def base_capacity_hidden(wb: Any) -> None:
        cell = set_named(wb, "site_base_capacity", 2000)  # Site!B23
        wb["Site"].column_dimensions[cell.column_letter].hidden = True

    plan = read(kestrel, base_capacity_hidden)
    assert isinstance(plan, Plan), plan
    assert plan.site.base_capacity_pc_h_ln == 2000
    assert (
        "Site!B23: 'Base capacity of the open road' is in a hidden row or column and is read "
        "as typed; unhide it to see it, or clear it to leave it blank"
    ) in plan.input_warnings
    # column F of the Site sheet holds no input: hiding it says nothing
    plan = read(kestrel, lambda wb: setattr(wb["Site"].column_dimensions["F"], "hidden", True))
    assert isinstance(plan, Plan), plan
    assert not [w for w in plan.input_warnings if "hidden" in w]


# -- the hourly counts table -----------------------------------------------------------------
# Demand!A8:C176 in the template: Date, Start time, Demand (veh/h); the Kestrel Ridge counts
# fill rows 9 to 80, hour h of Mon 2027-05-03 00:00 on row 9 + h, three lanes.


def demand_cell(wb: Any, row: int, col: str, value: Any) -> None:
    wb["Demand"][f"{col}{row}"] = value


def test_one_days_rows_pasted_in_blocks_out_of_order_are_read_in_time_order(
    kestrel: bytes,
) -> None:
    """Monday's 24 rows (sheet rows 9-32) typed as three blocks, 12:00-22:00, then
    00:00-11:00, then 23:00, every row keeping its own hour's count: read in time order,
    the same demand as typed in order. The row typed below 22:00 starts at 00:00 of the
    same date, but counts running past midnight would continue from 23:00, the day's last
    hour, so nothing is queried."""
    order = [*range(12, 23), *range(12), 23]

    def edit(wb: Any) -> None:
        flows = {h: wb["Demand"][f"C{9 + h}"].value for h in range(24)}
        for i, h in enumerate(order):
            demand_cell(wb, 9 + i, "A", dt.datetime(2027, 5, 3))
            demand_cell(wb, 9 + i, "B", dt.time(h))
            demand_cell(wb, 9 + i, "C", flows[h])

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    typed = load_plan(KESTREL).demand
    assert plan.demand.start == typed.start == dt.datetime(2027, 5, 3)
    assert list(plan.demand.flows_veh_h) == list(typed.flows_veh_h)
    assert not [w for w in plan.input_warnings if "past midnight" in w]


@pytest.mark.parametrize(
    ("days_not_turned", "more"),
    [(1, ""), (2, " (2 places in all)")],
)
def test_counts_past_midnight_without_the_next_date_named_at_the_first_place(
    kestrel: bytes, days_not_turned: int, more: str
) -> None:
    """Kestrel Ridge's 72 hourly counts (Mon 2027-05-03 00:00 to Wed 23:00), the first
    ``days_not_turned`` days typed from 06:00 to 05:00 with that day's date on every row
    (the hours after midnight belong to the next day) and the rest from 00:00 to 23:00:
    read in time order they make the whole grid, so only this query says so. The first
    00:00 row is the 19th (06:00 + 18 h), sheet row 9 + 18 = 27, below 23:00 on row 26."""
    mon = dt.datetime(2027, 5, 3)
    rows: list[dt.datetime] = []
    for day in range(days_not_turned):
        rows += [mon + dt.timedelta(days=day, hours=(h + 6) % 24) for h in range(24)]
    rows += [mon + dt.timedelta(hours=h) for h in range(24 * days_not_turned, 72)]

    def edit(wb: Any) -> None:  # Date and Start time retyped; the counts left as they are
        for i, when in enumerate(rows):
            demand_cell(wb, 9 + i, "A", dt.datetime.combine(when.date(), dt.time()))
            demand_cell(wb, 9 + i, "B", when.time())

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert [w for w in plan.input_warnings if "past midnight" in w] == [
        "Demand!B27: this row is typed right below Mon 2027-05-03 23:00 (row 26) but keeps "
        "its date, so it is read as Mon 2027-05-03 00:00, the early morning of that day"
        f"{more}; if these counts run past midnight, type the next date (2027-05-04) from "
        "this row on"
    ]


def test_demand_rows_read_as_typed(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        demand_cell(wb, 9, "C", "1,250")  # text with a separator: stored as text, refused
        demand_cell(wb, 10, "C", 0.0)

    out = read(kestrel, edit)
    assert isinstance(out, dict)
    assert out["Demand!C9"] == (
        "Demand: '1,250' is stored as text; type only the number, without its unit"
    )
    plan = read(kestrel, lambda wb: demand_cell(wb, 10, "C", 1250.5))
    assert isinstance(plan, Plan), plan
    assert plan.demand.flows_veh_h[1] == 1250.5
    assert plan.demand.start == dt.datetime(2027, 5, 3) and plan.demand.interval_s == 3600


@pytest.mark.parametrize(
    ("flow", "message"),
    [
        # 3,000 veh/h per lane on three lanes is the most taken (common practice, no source)
        (
            9000.5,
            "Demand 9,000.5 veh/h is more than 3,000 veh/h per lane on 3 lanes; enter hourly "
            "flow in this direction only (not a two-way count or a daily total)",
        ),
        (-10, "Demand cannot be negative (got -10); check the value"),
    ],
)
def test_a_demand_out_of_range_is_named(kestrel: bytes, flow: float, message: str) -> None:
    assert problem(kestrel, lambda wb: demand_cell(wb, 12, "C", flow), "Demand!C12") == message


def test_a_demand_of_9000_on_three_lanes_is_taken(kestrel: bytes) -> None:
    plan = read(kestrel, lambda wb: demand_cell(wb, 12, "C", 9000))
    assert isinstance(plan, Plan), plan
    assert plan.demand.flows_veh_h[3] == 9000.0


def test_a_repeated_start_time_and_the_gap_it_leaves(kestrel: bytes) -> None:
    out = read(kestrel, lambda wb: demand_cell(wb, 10, "B", dt.time(0, 0)))
    assert isinstance(out, dict)
    assert out["Demand!B10"] == (
        "the start time Mon 2027-05-03 00:00 is also in row 9; remove one of the two rows"
    )
    assert out["Demand!B11"] == (
        "no demand from Mon 2027-05-03 01:00 to Mon 2027-05-03 02:00 (between rows 9 and 11); "
        "add the missing rows"
    )


@pytest.mark.parametrize(
    ("time", "message"),
    [
        (
            dt.time(0, 50),
            "rows are 50 minutes apart; use hourly or 15-minute rows (any whole number of "
            "minutes that divides an hour)",
        ),
        (
            dt.time(0, 0, 30),
            "rows are 0.5 minutes apart; use hourly or 15-minute rows (any whole number of "
            "minutes that divides an hour)",
        ),
    ],
)
def test_rows_whose_interval_does_not_divide_an_hour_are_refused(
    kestrel: bytes, time: dt.time, message: str
) -> None:
    assert problem(kestrel, lambda wb: demand_cell(wb, 10, "B", time), "Demand!B10") == message


def test_rows_at_another_spacing_are_named(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        demand_cell(wb, 10, "B", dt.time(0, 30))  # 30 minutes after row 9
        demand_cell(wb, 11, "B", dt.time(1, 45))  # 75 minutes after row 10

    message = problem(kestrel, edit, "Demand!B11")
    assert message == (
        "rows 10 and 11 are 75 minutes apart but other rows are 30 minutes apart; use one "
        "interval throughout"
    )


def test_the_demand_must_start_and_end_on_the_hour(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        for h in range(72):  # every row half an hour later
            demand_cell(wb, 9 + h, "B", dt.time(h % 24, 30))

    out = read(kestrel, edit)
    assert isinstance(out, dict)
    assert out["Demand!B9"] == (
        "the demand must start on the hour, but the earliest row starts at 00:30; add rows "
        "back to 00:00"
    )
    # the last row, Wed 23:30, ends at Thu 00:30
    assert out["Demand!B80"] == (
        "the demand must cover whole hours, but it ends at 00:30; add rows up to the next full hour"
    )


def test_a_demand_start_time_with_another_date(kestrel: bytes) -> None:
    message = problem(kestrel, lambda wb: demand_cell(wb, 9, "B", "2027-05-04 00:00"), "Demand!B9")
    assert message == "Start time holds the date 2027-05-04 but Date is 2027-05-03; make them agree"


def test_an_empty_demand_table_is_named(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        for r in range(9, 81):
            for col in "ABC":
                demand_cell(wb, r, col, None)

    message = problem(kestrel, edit, "Demand!A9")
    assert message == (
        "the table DemandTable has no demand rows; type the hourly counts or set 'Demand is "
        "given as' to 'from AADT'"
    )


def test_counts_left_in_the_table_in_aadt_mode_are_named(kestrel: bytes) -> None:
    plan = read(kestrel, lambda wb: aadt(wb, flat))
    assert isinstance(plan, Plan), plan
    assert (
        "Demand!A9: the table DemandTable holds counts, but 'Demand is given as' (Demand!B4) "
        "is 'from AADT', so they are not used; clear them, or choose 'hourly counts'"
    ) in plan.input_warnings


def test_aadt_inputs_left_filled_in_with_counts_are_named(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        set_named(wb, "demand_mode", "hourly counts")

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert (
        "Demand!F8: AADT, both directions is filled in, but 'Demand is given as' (Demand!B4) "
        "is 'hourly counts', so the AADT inputs are not used; clear them, or choose "
        "'from AADT'"
    ) in plan.input_warnings


# -- other tables and names beside a table, and totals below it --------------------------------


@pytest.mark.parametrize(
    ("ref", "value_at", "warned"),
    [
        ("I5:I7", "I6", False),  # inside a table of the user's own: not ours to name
        ("I10:I12", "I6", True),  # above that table, in its column
        ("I10:I12", "I20", True),  # below it
        ("K5:L7", "I6", True),  # in its rows, not its columns
    ],
)
def test_a_value_beside_the_table_and_a_table_of_the_users_own(
    kestrel: bytes, ref: str, value_at: str, warned: bool
) -> None:
    def edit(wb: Any) -> None:
        ws = wb["Closures"]
        first, last = ref.split(":")
        for cell in {first, last}:
            ws[cell] = "Crew"
        ws.add_table(Table(displayName="Crews", ref=ref))
        ws[value_at] = "night crew"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    beside = [w for w in plan.input_warnings if w.startswith(f"Closures!{value_at}: a value")]
    assert bool(beside) is warned


def test_a_value_beside_the_share_table_next_to_the_counts_table(kestrel: bytes) -> None:
    # column D lies beside the share table (E:G) and is outside the counts table (A:C)
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        wb["Demand"]["D20"] = "check"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert (
        "Demand!D20: a value right beside the table HourlyShareTable (columns E to G) not "
        "read as part of the plan; if it belongs to the plan, move it into the table's own "
        "columns"
    ) in plan.input_warnings


def test_a_name_openpyxl_cannot_follow_is_named_and_the_rest_is_read(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        wb.defined_names["meta_notes"] = DefinedName("meta_notes", attr_text="Site Two!$A$1")
        wb["Closures"]["I6"] = "night crew"  # beside the closure table: names are looked up

    out = read(kestrel, edit)
    assert out == {
        "Start (name meta_notes)": "the defined name meta_notes (Notes) points nowhere (its "
        "cell was deleted); point it at the value cell again in the Name Manager"
    }


@pytest.mark.parametrize(
    "total",
    ["=SUM(D6:D35)", "=SUM(D:D)", "=D35", "=D6", "=SUM(Closures!D6:D7)", "=COUNT(A6:A35)"],
)
def test_a_total_below_the_table_referring_to_its_rows_is_the_users_own(
    kestrel: bytes, total: str
) -> None:
    def edit(wb: Any) -> None:
        ws = wb["Closures"]
        ws[f"A{BELOW}"] = "Total"
        ws[f"D{BELOW}"] = total

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert len(plan.closures) == len(load_plan(KESTREL).closures)


def test_a_row_of_text_below_the_table_is_read_as_a_row(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        ws = wb["Closures"]
        ws[f"A{BELOW}"] = "Total"
        ws[f"H{BELOW}"] = "two nights"

    out = read(kestrel, edit)
    assert isinstance(out, dict), out
    assert out[f"Closures!A{BELOW}"].startswith(
        "Date: 'Total' is not a date; type a date, e.g. 2027-05-03 (this row lies below"
    )


def test_problems_below_the_table_and_elsewhere_are_all_said(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        third_closure(wb, BELOW, lanes=2.5)  # a problem in a row below the table
        set_named(wb, "site_speed_limit", "fast")  # and one on another sheet
        wb.defined_names["meta_notes"] = DefinedName("meta_notes", attr_text="Site Two!$A$1")

    assert read(kestrel, edit) == {
        "Site!B9": "Speed limit: 'fast' is text, not a number; type only the number, without "
        "its unit",
        "Start (name meta_notes)": "the defined name meta_notes (Notes) points nowhere (its "
        "cell was deleted); point it at the value cell again in the Name Manager",
        f"Closures!D{BELOW}": "Lanes closed must be a whole number, got 2.5 (this row lies "
        "below the table ClosureTable and is read as part of it; if it is not part of the "
        "plan, move it out of the table's columns)",
    }


@pytest.mark.parametrize(
    ("title", "quoted"),
    # a reference as a formula writes it: quoted, an apostrophe in the name doubled
    # (common practice, no source)
    [("Closure plan", "'Closure plan'"), ("Crew's closures", "'Crew''s closures'")],
)
def test_a_row_below_the_table_on_a_sheet_whose_name_needs_quotes(
    kestrel: bytes, title: str, quoted: str
) -> None:
    def edit(wb: Any) -> None:
        third_closure(wb, BELOW, lanes=2.5)
        wb["Closures"].title = title

    out = read(kestrel, edit)
    assert isinstance(out, dict), out
    assert out[f"{quoted}!D{BELOW}"] == (
        "Lanes closed must be a whole number, got 2.5 (this row lies below the table "
        "ClosureTable and is read as part of it; if it is not part of the plan, move it out "
        "of the table's columns)"
    )


def test_counts_left_in_aadt_mode_are_named_with_the_output_sheets_moved_first(
    kestrel: bytes,
) -> None:
    from wzq.io.workbook.writer import replace_sheets

    def edit(wb: Any) -> None:
        aadt(wb, flat)
        replace_sheets(wb)  # the output sheets of a run, which a user moved to the front
        for name in L.OUTPUT_SHEETS:
            wb.move_sheet(name, offset=-wb.sheetnames.index(name))

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert (
        "Demand!A9: the table DemandTable holds counts, but 'Demand is given as' (Demand!B4) "
        "is 'from AADT', so they are not used; clear them, or choose 'hourly counts'"
    ) in plan.input_warnings


@pytest.mark.parametrize("formula", ["=SUM(J6:J35)", "=SUM(D40:D41)", "=SUM(D1:D4)"])
def test_a_formula_below_the_table_referring_outside_it_is_a_row(
    kestrel: bytes, formula: str
) -> None:
    # right of the table (J), below it, above it: not a total of the table's rows
    def edit(wb: Any) -> None:
        wb["Closures"][f"A{BELOW}"] = "Total"
        wb["Closures"][f"D{BELOW}"] = formula

    out = read(kestrel, edit)
    assert isinstance(out, dict), out
    assert out[f"Closures!D{BELOW}"].startswith("holds a formula with no saved result")


def test_a_formula_below_the_share_table_referring_left_of_it_is_a_row(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        wb["Demand"]["E41"] = "Total"
        wb["Demand"]["F41"] = "=SUM(A17:A40)"  # the counts table's column, left of the shares

    out = read(kestrel, edit)
    assert isinstance(out, dict), out
    assert out["Demand!F41"].startswith("holds a formula with no saved result")


def test_one_demand_row_is_one_hour(kestrel: bytes) -> None:
    # a single row gives no spacing to read: it is an hour, Mon 21:00 to 22:00
    def edit(wb: Any) -> None:
        for r in range(10, 81):
            for col in "ABC":
                demand_cell(wb, r, col, None)
        demand_cell(wb, 9, "B", dt.time(21, 0))
        demand_cell(wb, 9, "C", 1500)
        table_cell(wb, L.CLOSURE_TABLE, 0, "To").value = "22:00"
        for header in L.CLOSURE_COLUMNS:
            table_cell(wb, L.CLOSURE_TABLE, 1, header).value = None

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert (plan.demand.start, plan.demand.interval_s) == (dt.datetime(2027, 5, 3, 21, 0), 3600)
    assert plan.demand.flows_veh_h.tolist() == [1500.0]
    assert [(c.start, c.end) for c in plan.closures] == [
        (dt.datetime(2027, 5, 3, 21, 0), dt.datetime(2027, 5, 3, 22, 0))
    ]


def test_every_demand_row_that_cannot_be_read_is_named(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        demand_cell(wb, 9, "C", "lots")
        demand_cell(wb, 11, "C", "n/a")

    assert read(kestrel, edit) == {
        "Demand!C9": "Demand: 'lots' is text, not a number; type only the number, without its unit",
        "Demand!C11": "Demand: 'n/a' is text, not a number; type only the number, without its unit",
    }


def test_a_typed_demand_of_zero_is_an_hour_without_traffic_and_no_warning(kestrel: bytes) -> None:
    # only a 0 that a formula gives is warned about (test_a_demand_of_zero_from_a_formula...)
    plan = read(kestrel, lambda wb: demand_cell(wb, 10, "C", 0))
    assert isinstance(plan, Plan), plan
    assert plan.demand.flows_veh_h[1] == 0.0
    assert plan.input_warnings == ()


def _aadt_cells_absent(wb: Any) -> None:
    # the AADT and first-day cells never written (a workbook that holds no record of them)
    for coord in ((8, 6), (12, 6)):  # Demand!F8, Demand!F12
        del wb["Demand"]._cells[coord]


@pytest.mark.parametrize("edit", [lambda wb: None, _aadt_cells_absent])
def test_aadt_inputs_left_blank_with_counts_say_nothing(kestrel: bytes, edit: Any) -> None:
    # the template fills in the AADT's direction share (F11) and number of days (F13):
    # only a filled-in AADT (F8) or first day (F12) says the AADT inputs were meant
    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert plan.input_warnings == ()


def test_a_first_day_left_filled_in_with_counts_is_named(kestrel: bytes) -> None:
    plan = read(kestrel, lambda wb: set_named(wb, "aadt_first_day", dt.datetime(2027, 5, 1)))
    assert isinstance(plan, Plan), plan
    assert plan.input_warnings == (
        "Demand!F12: First day is filled in, but 'Demand is given as' (Demand!B4) is 'hourly "
        "counts', so the AADT inputs are not used; clear them, or choose 'from AADT'",
    )


@pytest.mark.parametrize(
    ("cells", "first_row"),
    [
        ({"C176": 1500}, 176),  # the table's last row (A8:C176), its last column
        ({"A9": dt.datetime(2027, 5, 3)}, 9),  # its first row, its first column
        ({"B20": dt.time(7, 0), "C21": 1500}, 20),  # two rows: the first is named
    ],
)
def test_counts_anywhere_in_the_table_in_aadt_mode_are_named_at_the_first(
    kestrel: bytes, cells: dict[str, Any], first_row: int
) -> None:
    def edit(wb: Any) -> None:
        aadt(wb, flat)
        for r in range(9, 81):
            for col in "ABC":
                demand_cell(wb, r, col, None)
        for coord, value in cells.items():
            wb["Demand"][coord] = value

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert plan.input_warnings == (
        f"Demand!A{first_row}: the table DemandTable holds counts, but 'Demand is given as' "
        "(Demand!B4) is 'from AADT', so they are not used; clear them, or choose 'hourly counts'",
    )


def test_a_demand_starting_a_fraction_of_a_second_after_the_hour(kestrel: bytes) -> None:
    # full date-times in the Date column (Start time blank), each half a second past its
    # hour: the rows are an hour apart, but the plan's own check finds the start off the
    # hour, and says so at the first demand row
    def edit(wb: Any) -> None:
        for h in range(72):
            at = dt.datetime(2027, 5, 3) + dt.timedelta(hours=h, microseconds=500_000)
            demand_cell(wb, 9 + h, "A", at)
            demand_cell(wb, 9 + h, "B", None)

    assert read(kestrel, edit) == {"Demand!C9": "demand must start on the hour"}


def test_a_cell_a_broken_name_also_points_at_is_not_read_as_a_row_below_a_table(
    kestrel: bytes,
) -> None:
    # the speed limit's name refers to a range openpyxl cannot read, then to a cell below
    # the closure table (Closures!A5:H35): the name is refused, and the value in that cell
    # (meant as the speed limit) is not taken for a closure row below the table as well
    def edit(wb: Any) -> None:
        wb.defined_names["site_speed_limit"].attr_text = "Site!$B$9:,Closures!$B$40"
        wb["Closures"]["B40"] = 65

    assert read(kestrel, edit) == {
        "Site (name site_speed_limit)": "the defined name site_speed_limit (Speed limit) "
        "points at '$B$9:', not at one cell; point it at the value cell again in the Name "
        "Manager"
    }


@pytest.mark.parametrize("coord", ["$9:$9", "$B:$B"])
def test_a_name_pointing_at_a_whole_row_or_column_is_named(kestrel: bytes, coord: str) -> None:
    def edit(wb: Any) -> None:
        wb.defined_names["site_speed_limit"].attr_text = f"Site!{coord}"

    assert read(kestrel, edit) == {
        "Site (name site_speed_limit)": f"the defined name site_speed_limit (Speed limit) "
        f"points at '{coord}', not at one cell; point it at the value cell again in the Name "
        "Manager"
    }


def _speed_limit_named_on(sheet: str) -> Callable[[Any], None]:
    """The speed limit's name defined on one sheet (sheet scope), not for the workbook."""

    def edit(wb: Any) -> None:
        from wzq.io.workbook.writer import replace_sheets

        replace_sheets(wb)  # the output sheets of a run, as after `wzq run`
        del wb.defined_names["site_speed_limit"]
        wb[sheet].defined_names["site_speed_limit"] = DefinedName(
            "site_speed_limit", attr_text="Site!$B$9"
        )

    return edit


def test_a_name_defined_on_an_input_sheet_is_read(kestrel: bytes) -> None:
    plan = read(kestrel, _speed_limit_named_on("Site"))
    assert isinstance(plan, Plan), plan
    assert plan.site.speed_limit == pytest.approx(65 * 0.44704)  # mi/h, NIST SP 811 B.8
    assert plan.locations["site.speed_limit"] == "Site!B9"


def test_a_name_defined_only_on_an_output_sheet_is_missing(kestrel: bytes) -> None:
    # wzq replaces its output sheets on every run, and their names with them
    assert read(kestrel, _speed_limit_named_on("Results")) == {
        "Site (name site_speed_limit)": "the defined name site_speed_limit (Speed limit) is "
        "missing; restore it in the Name Manager pointing at its value cell, or copy your "
        "inputs into a fresh workbook from `wzq new`"
    }


def test_a_name_whose_cell_was_deleted_points_nowhere(kestrel: bytes) -> None:
    # deleting a named cell's row leaves the name as Site!#REF! (one sheet, no cell)
    def edit(wb: Any) -> None:
        wb.defined_names["site_speed_limit"].attr_text = "Site!#REF!"

    assert read(kestrel, edit) == {
        "Site (name site_speed_limit)": "the defined name site_speed_limit (Speed limit) points "
        "nowhere (its cell was deleted); point it at the value cell again in the Name Manager"
    }


def test_a_deleted_input_sheet_is_named_once(kestrel: bytes) -> None:
    # deleting a sheet in a spreadsheet program turns the names on it into #REF!
    wb = openpyxl.load_workbook(io.BytesIO(kestrel))
    for dn in wb.defined_names.values():
        if "Limits!" in str(dn.value):
            dn.attr_text = "#REF!"
    del wb["Limits"]
    with pytest.raises(PlanError) as e:
        read_plan_from_book(wb, "k.xlsx")
    said = [(p.where, p.message) for p in e.value.problems if "Limits" in p.where]
    assert said == [
        (
            "Limits (sheet)",
            "the input sheet 'Limits' is missing (deleted, or its inputs moved without their "
            "names); copy your inputs into a fresh workbook from `wzq new`",
        )
    ]


def test_a_name_pointing_at_a_sheet_that_does_not_exist_is_named(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        wb.defined_names["site_speed_limit"].attr_text = "Nowhere!$B$9"

    assert read(kestrel, edit) == {
        "Site (name site_speed_limit)": "the defined name site_speed_limit points at a sheet "
        "'Nowhere' that does not exist; point it at the value cell again in the Name Manager"
    }


def test_a_name_pointing_into_an_output_sheet_is_named(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        from wzq.io.workbook.writer import replace_sheets

        replace_sheets(wb)  # the output sheets of a run
        wb.defined_names["site_speed_limit"].attr_text = "Results!$B$9"

    assert read(kestrel, edit) == {
        "Site (name site_speed_limit)": "the defined name site_speed_limit points into the "
        "output sheet 'Results', which wzq replaces on every run; point it at the input cell"
    }


@pytest.mark.parametrize("target", ["Results!$B$9", "Nowhere!$F$8"])
def test_an_unused_aadt_name_pointing_off_the_input_sheets_says_nothing(
    kestrel: bytes, target: str
) -> None:
    """The counts are used, so the AADT inputs are only looked at, to say when they are
    filled in and not used: a name of theirs pointing into an output sheet (whatever the
    run wrote there) or at a sheet that does not exist is no AADT typed."""

    def edit(wb: Any) -> None:
        from wzq.io.workbook.writer import replace_sheets

        replace_sheets(wb)  # the output sheets of a run
        wb["Results"]["B9"] = 40_000
        wb.defined_names["aadt_value"].attr_text = target

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert not [w for w in plan.input_warnings if "not used" in w]


def test_a_workbook_made_before_the_optional_inputs_reads_their_template_values(
    kestrel: bytes,
) -> None:
    """Every optional input's defined name deleted, as in a workbook made before those
    inputs existed: each is read as the template's own value (the closure windows on, no
    space-time picture), and nothing is refused."""

    def edit(wb: Any) -> None:
        for name in F.OPTIONAL_NAMES:
            del wb.defined_names[name]

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert plan.options.closure_windows is True
    assert plan.options.space_time is False


# -- input sheets hidden or copied -----------------------------------------------------------


@pytest.mark.parametrize(
    ("state", "how"),
    [
        ("hidden", "hidden"),
        ("veryHidden", "very hidden (only a macro or the VBA editor unhides it)"),
    ],
)
def test_a_hidden_input_sheet_is_said_in_full(kestrel: bytes, state: str, how: str) -> None:
    def edit(wb: Any) -> None:
        wb["Limits"].sheet_state = state

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert [w for w in plan.input_warnings if w.startswith("sheet ")] == [
        f"sheet 'Limits': this input sheet is {how}, and its inputs are read as typed; "
        "unhide it to see them"
    ]


def copy_of_demand(wb: Any) -> None:
    """The Demand sheet copied as Excel names the copy."""
    wb.copy_worksheet(wb["Demand"]).title = "Demand (2)"


def no_counts_name(wb: Any) -> None:
    del wb.defined_names["history_file_sheet"]  # a workbook made before that input


def counts_name_on_an_empty_cell(wb: Any) -> None:
    # a cell never written (openpyxl keeps no cell object for it)
    wb.defined_names["history_file_sheet"] = DefinedName(
        "history_file_sheet", attr_text="Demand!$Z$99"
    )


def counts_on_a_copy(wb: Any) -> None:
    # the count history read from a copy of its sheet, chosen by name: that copy is read
    wb.copy_worksheet(wb["Count history"]).title = "Count history (2)"
    set_named(wb, "history_file_sheet", "Count history (2)")


def demand_table_copied_onto_closures(wb: Any) -> None:
    # an input sheet holding a copy of another input's table is still an input sheet
    wb["Closures"].add_table(Table(displayName="DemandTable2", ref="K5:L7"))
    wb["Closures"]["K5"], wb["Closures"]["L5"] = "Date", "Demand"


def sheet_with_tables(title: str, *tables: str) -> Callable[[Any], None]:
    """A sheet of the user's holding tables (two columns, two rows each, side by side)."""

    def edit(wb: Any) -> None:
        ws = wb.create_sheet(title)
        for i, name in enumerate(tables):
            col = "ACEG"[i]
            ws[f"{col}1"], ws[f"{chr(ord(col) + 1)}1"] = "Date", "Value"
            ws.add_table(Table(displayName=name, ref=f"{col}1:{chr(ord(col) + 1)}3"))

    return edit


def closure_table_on_the_copy(wb: Any) -> None:
    wb["Demand (2)"].add_table(Table(displayName="ClosureTable2", ref="K1:L3"))
    wb["Demand (2)"]["K1"], wb["Demand (2)"]["L1"] = "Date", "From"


def copy_said(title: str, home: str) -> str:
    return (
        f"sheet '{title}': this sheet looks like a copy of the input sheet '{home}' and is not "
        f"read: the plan is read from '{home}' only; type your changes there, or delete the "
        "copy"
    )


COPY_OF_DEMAND = copy_said("Demand (2)", "Demand")


@pytest.mark.parametrize(
    ("edits", "said"),
    [
        ((copy_of_demand,), [COPY_OF_DEMAND]),
        ((copy_of_demand, no_counts_name), [COPY_OF_DEMAND]),
        ((copy_of_demand, counts_name_on_an_empty_cell), [COPY_OF_DEMAND]),
        ((copy_of_demand, counts_on_a_copy), [COPY_OF_DEMAND]),
        # the sheets after the chosen count-history copy are looked at too
        ((counts_on_a_copy, copy_of_demand), [COPY_OF_DEMAND]),
        ((demand_table_copied_onto_closures,), []),
        # a sheet whose title is not a copy's, holding a copy of the demand table (and a
        # table of the user's own): named by the table
        (
            (sheet_with_tables("Scratch", "Crews", "DemandTable2"),),
            [copy_said("Scratch", "Demand")],
        ),
        # no count-history sheet chosen (blank) is not the sheet named "None"
        ((sheet_with_tables("None", "DemandTable2"),), [copy_said("None", "Demand")]),
        # the title names the input sheet before a table copied onto it
        ((copy_of_demand, closure_table_on_the_copy), [COPY_OF_DEMAND]),
    ],
)
def test_copies_of_input_sheets_are_named_and_nothing_else(
    kestrel: bytes, edits: tuple[Callable[[Any], None], ...], said: list[str]
) -> None:
    def edit(wb: Any) -> None:
        for e in edits:
            e(wb)

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert [w for w in plan.input_warnings if "copy" in w] == said


@pytest.mark.parametrize(
    ("table", "sheet"), [(L.CLOSURE_TABLE, "Closures"), (L.DEMAND_TABLE, "Demand")]
)
def test_a_table_deleted_is_named_on_its_own_sheet_with_what_to_do(
    kestrel: bytes, table: str, sheet: str
) -> None:
    def edit(wb: Any) -> None:
        ws, _ = find_table(wb, table)
        del ws.tables[table]

    assert read(kestrel, edit) == {
        f"{sheet} (table {table})": f"the table {table} is missing: it was deleted or "
        "renamed, or the program that last saved the file did not keep it. Copy your rows "
        "into the table of a fresh workbook from `wzq new` (a table renamed in Excel can "
        "also get its name back under Table Design > Table Name)"
    }


def closure_table_edit(change: Any) -> Any:
    """An edit giving the closure table's definition to ``change(ws, table)``."""

    def edit(wb: Any) -> None:
        change(*find_table(wb, L.CLOSURE_TABLE))

    return edit


def test_the_table_parts_damaged_or_switched_off_are_named_in_full(kestrel: bytes) -> None:
    # the closure table runs A5:H35, header on row 5 (what `wzq new` writes)
    for ref in ("A5:H", "A:H"):  # not a range; whole columns

        def open_range(ws: Any, t: Any, ref: str = ref) -> None:
            t.ref = ref

        assert read(kestrel, closure_table_edit(open_range)) == {
            "Closures (table ClosureTable)": f"the table ClosureTable covers '{ref}', not a "
            "block of cells; recreate it from a fresh workbook made by `wzq new`"
        }

    def no_header(ws: Any, t: Any) -> None:
        t.headerRowCount = 0

    assert read(kestrel, closure_table_edit(no_header)) == {
        "Closures!A5": "the table ClosureTable has its header row switched off; switch it on "
        "again (in Excel: Table Design > Header Row), or copy your rows into a fresh "
        "workbook from `wzq new`"
    }

    def renamed(ws: Any, t: Any) -> None:
        t.tableColumns[1].name = "Start"

    assert read(kestrel, closure_table_edit(renamed)) == {
        "Closures!A5": "the table ClosureTable has no column 'From'; restore its header (the "
        "columns are 'Date', 'From', 'To', 'Lanes closed', 'Barrier', 'Night work', "
        "'Capacity override (veh/h/ln)', 'Note')"
    }


def test_a_totals_row_is_not_read_as_a_closure_and_column_records_may_be_missing(
    kestrel: bytes,
) -> None:
    # Excel's Total Row (Table Design > Total Row) adds a row to the table: 'Total' and a
    # sum of the lanes; it is the user's own, not a closure (without the table's totals
    # count it would be read as one: five problems on row 36)
    def totals(ws: Any, t: Any) -> None:
        t.ref, t.totalsRowCount = "A5:H36", 1
        ws["A36"], ws["D36"] = "Total", 3

    def no_records(ws: Any, t: Any) -> None:
        t.tableColumns = []  # a program that keeps no column records: the header row is read

    def no_count(ws: Any, t: Any) -> None:
        t.headerRowCount = None  # not written: one header row (ECMA-376 Part 1, 18.5.1.2)

    for edit in (totals, no_records, no_count):
        plan = read(kestrel, closure_table_edit(edit))
        assert isinstance(plan, Plan), plan
        assert [(c.start, c.end, c.lanes_closed) for c in plan.closures] == [
            (dt.datetime(2027, 5, 3, 21), dt.datetime(2027, 5, 4, 5), 1),
            (dt.datetime(2027, 5, 4, 22), dt.datetime(2027, 5, 5, 5), 2),
        ]
        assert not plan.input_warnings


def test_a_closure_in_the_tables_last_row_is_read(kestrel: bytes) -> None:
    # row 35 is the table's last (A5:H35, no totals row): a closure typed there is read
    def last_row(ws: Any, t: Any) -> None:
        for col in range(1, 9):
            ws.cell(35, col).value = ws.cell(6, col).value
        ws["A35"], ws["B35"], ws["C35"] = dt.datetime(2027, 5, 5), "10:00", "14:00"

    plan = read(kestrel, closure_table_edit(last_row))
    assert isinstance(plan, Plan), plan
    assert plan.closures[-1].start == dt.datetime(2027, 5, 5, 10)
    assert len(plan.closures) == 3


def test_without_column_records_only_the_header_cells_of_the_table_are_read(
    kestrel: bytes,
) -> None:
    # the closure table moved one column right (B5:I35) by a program that keeps no
    # column records: its header row is read, and only inside the table: 'From' typed
    # in A5 beside it (the user's own) and 'Note' in J5 are not its columns
    def moved(ws: Any, t: Any) -> None:
        ws.move_range("A5:H35", cols=1)
        t.ref, t.tableColumns = "B5:I35", []
        ws["A5"], ws["J5"], ws["I5"] = "From", "Note", "Remarks"

    assert read(kestrel, closure_table_edit(moved)) == {
        "Closures!B5": "the table ClosureTable has no column 'Note'; restore its header (the "
        "columns are 'Date', 'From', 'To', 'Lanes closed', 'Barrier', 'Night work', "
        "'Capacity override (veh/h/ln)', 'Note')"
    }

    def moved_whole(ws: Any, t: Any) -> None:
        ws.move_range("A5:H35", cols=1)
        t.ref, t.tableColumns = "B5:I35", []
        ws["A5"] = "From"

    plan = read(kestrel, closure_table_edit(moved_whole))
    assert isinstance(plan, Plan), plan
    assert [c.start for c in plan.closures] == [
        dt.datetime(2027, 5, 3, 21),
        dt.datetime(2027, 5, 4, 22),
    ]


def test_a_table_is_found_on_an_input_sheet_placed_after_an_output_sheet() -> None:
    # the designer dragged the Results sheet of a run workbook before its Closures sheet:
    # output sheets are passed over in the search for the closure table, and the search
    # goes on after them
    def results_first(wb: Any) -> None:
        wb.move_sheet(L.RESULTS, -(wb.sheetnames.index(L.RESULTS) - 1))
        assert wb.sheetnames[:3] == ["Start", L.RESULTS, "Site"]

    plan = read(KESTREL.with_suffix(".xlsx").read_bytes(), results_first)
    assert isinstance(plan, Plan), plan
    assert len(plan.closures) == 2
