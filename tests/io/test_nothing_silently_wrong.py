"""Every input is read as the designer meant it, or the tool says why not.

One test (or more) per case seen on plans typed the way designers type them; each
test names its case (``test_case_NN_...``). Workbooks are filled through the
template's names and tables as a user would (``tests/workbook_helpers.py``); the
saved result of a formula, which a spreadsheet program writes beside it, is put
in by :func:`workbook_helpers.save_results_as_a_spreadsheet_program`, or by
LibreOffice itself where it is installed.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import re
import shutil
import subprocess
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import openpyxl
import pytest
from openpyxl.utils import get_column_letter, range_boundaries
from workbook_helpers import (
    closure_row,
    edited,
    fill_template,
    find_table,
    named_cell,
    save_results_as_a_spreadsheet_program,
    set_named,
    table_cell,
    write_table,
)

import wzq
from wzq import cli
from wzq import units as u
from wzq.cli.batch import batch_status
from wzq.engine.plan import Closure, Demand, Plan, PlanError, Site
from wzq.io.batch.runner import run_batch
from wzq.io.jsonplan import load_plan, plan_from_dict
from wzq.io.report import build_report
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader import read_plan
from wzq.io.workbook.run import run_to

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"
README = Path(__file__).resolve().parents[2] / "README.md"
SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
DAY = dt.date(2027, 5, 1)


@pytest.fixture(scope="module")
def kestrel_book(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return fill_template(load_plan(KESTREL), tmp_path_factory.mktemp("k") / "kestrel.xlsx")


def table_end(wb: Any, table: str) -> tuple[Any, int, int]:
    """(sheet, first column, last row) of a table."""
    ws, t = find_table(wb, table)
    c0, _, _, r1 = range_boundaries(t.ref)
    return ws, c0, r1


def type_row(ws: Any, row: int, first_col: int, values: dict[str, Any], headers: tuple) -> None:
    for header, value in values.items():
        cell = ws.cell(row, first_col + headers.index(header))
        if isinstance(value, tuple):
            value, cell.number_format = value
        cell.value = value


def check_output(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    code = cli.main(args)
    out = capsys.readouterr()
    assert "Traceback" not in out.err
    return code, out.out, out.err


def same_numbers(a: wzq.engine.results.Result, b: wzq.engine.results.Result) -> None:
    """Two results agree hour by hour (queue, length, delay, capacity) and in the summary."""
    cols = ["demand_veh_h", "capacity_veh_h", "queue_max_veh", "queue_length_max_m", "delay_veh_h"]
    np.testing.assert_allclose(a.hourly[cols].to_numpy(), b.hourly[cols].to_numpy(), rtol=1e-9)
    assert a.summary.max_queue_length_m == pytest.approx(b.summary.max_queue_length_m, rel=1e-9)
    assert a.summary.total_delay_veh_h == pytest.approx(b.summary.total_delay_veh_h, rel=1e-9)


# A daytime closure of two of the three lanes on Wednesday, typed by the designer:
# with one lane open against 3,600-5,400 veh/h a long queue builds.
WEDNESDAY = Closure(dt.datetime(2027, 5, 5, 14), dt.datetime(2027, 5, 5, 20), 2, "soft")
KESTREL_CLOSURES = load_plan(KESTREL).closures


# ---------------------------------------------------------------------------------------------
# 1. values typed near an input table
# ---------------------------------------------------------------------------------------------


def test_case_01_closure_typed_below_the_table_is_read_with_a_warning(
    kestrel_book: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    def below(wb: Any) -> None:
        ws, c0, end = table_end(wb, L.CLOSURE_TABLE)
        type_row(ws, end + 2, c0, closure_row(WEDNESDAY), L.CLOSURE_COLUMNS)  # a gap row

    def inside(wb: Any) -> None:
        write_table(
            wb, L.CLOSURE_TABLE, [closure_row(c) for c in (*load_plan(KESTREL).closures, WEDNESDAY)]
        )

    got = read_plan(edited(kestrel_book, tmp_path, below, "below.xlsx"))
    want = read_plan(edited(kestrel_book, tmp_path, inside, "inside.xlsx"))
    assert got.closures == want.closures and len(got.closures) == 3
    assert got.closures[2] == WEDNESDAY
    row = L.CLOSURE_TEMPLATE_ROWS + 5 + 2  # header row 5, 30 rows, one gap row
    (warning,) = [w for w in got.input_warnings if "below the table ClosureTable" in w]
    assert warning.startswith(f"Closures!A{row}: ")
    same_numbers(wzq.analyse(got), wzq.analyse(want))
    # wzq check says it too, and does not say "2 closures"
    code, out, _ = check_output(["check", str(tmp_path / "below.xlsx")], capsys)
    assert code == 0 and "3 closures" in out and f"warning: Closures!A{row}" in out


def test_case_01_demand_typed_below_its_table_is_read_and_a_total_row_is_not(
    tmp_path: Path,
) -> None:
    plan = load_plan(KESTREL)
    path = fill_template(plan, tmp_path / "k.xlsx")
    wb = openpyxl.load_workbook(path)
    ws, t = find_table(wb, L.DEMAND_TABLE)
    c0, r0, c1, _ = range_boundaries(t.ref)
    # the table covers the first two days only; day 3 was typed below it after a gap row,
    # and a total of the table sits further down
    last = r0 + 48
    t.ref = f"{get_column_letter(c0)}{r0}:{get_column_letter(c1)}{last}"
    rows = [[ws.cell(r, c) for c in range(c0, c1 + 1)] for r in range(last + 1, r0 + 73)]
    moved = [[(c.value, c.number_format) for c in row] for row in rows]
    for row in rows:
        for c in row:
            c.value = None
    for i, values in enumerate(moved):
        for j, (value, fmt) in enumerate(values):
            cell = ws.cell(last + 2 + i, c0 + j, value)
            cell.number_format = fmt
    flow = get_column_letter(c1)
    ws.cell(last + 30, c1 - 1, "Total")
    ws.cell(last + 30, c1, f"=SUM({flow}{r0 + 1}:{flow}{last})")
    wb.save(path)
    got = read_plan(path)
    np.testing.assert_array_equal(got.demand.flows_veh_h, plan.demand.flows_veh_h)
    assert any("below the table DemandTable" in w for w in got.input_warnings)


def test_case_01_value_beside_a_table_is_named(kestrel_book: Path, tmp_path: Path) -> None:
    def beside(wb: Any) -> None:
        ws, t = find_table(wb, L.CLOSURE_TABLE)
        _, r0, c1, _ = range_boundaries(t.ref)
        ws.cell(r0 + 1, c1 + 1, 1400)  # a capacity typed one column too far right

    got = read_plan(edited(kestrel_book, tmp_path, beside))
    (warning,) = [w for w in got.input_warnings if "beside the table ClosureTable" in w]
    assert warning.startswith("Closures!I6: ")


def test_hidden_and_filtered_rows_are_read_and_said(kestrel_book: Path, tmp_path: Path) -> None:
    def hide(wb: Any) -> None:
        ws, t = find_table(wb, L.CLOSURE_TABLE)
        ws.row_dimensions[range_boundaries(t.ref)[1] + 2].hidden = True  # the second closure

    got = read_plan(edited(kestrel_book, tmp_path, hide))
    assert len(got.closures) == 2  # hiding a row does not take it out
    assert any(w.startswith("Closures!A7: hidden or filtered-out row") for w in got.input_warnings)


# ---------------------------------------------------------------------------------------------
# 2. percentages
# ---------------------------------------------------------------------------------------------


def aadt_inputs(wb: Any, *, percent_signs: bool, aadt: float = 40_000) -> None:
    """AADT (40,000) counted 2024, 2 % growth, 55 % in this direction, from Sat 2027-05-01.

    With ``percent_signs`` every percentage is typed with its sign, so the cell holds
    the fraction in a percent format (what Excel and LibreOffice store for ``55%``).
    """
    pct = (lambda x: (x / 100, "0.0%")) if percent_signs else (lambda x: (x, "General"))
    set_named(wb, "demand_mode", "from AADT")
    set_named(wb, "aadt_value", aadt)
    set_named(wb, "aadt_count_year", 2024)
    set_named(wb, "aadt_first_day", dt.datetime(2027, 5, 1))
    set_named(wb, "aadt_days", 5)
    for name, x in (
        ("aadt_growth_percent", 2),
        ("aadt_direction_percent", 55),
        ("site_heavy_vehicle_percent", 8),
        ("site_capacity_drop_work_zone", 13.4),
    ):
        cell = named_cell(wb, name)
        cell.value, cell.number_format = pct(x)
    ws, t = find_table(wb, L.SHARE_TABLE)
    c0, r0, _, _ = range_boundaries(t.ref)
    for i, (wd, we) in enumerate(zip(L.WEEKDAY_SHARES, L.WEEKEND_SHARES, strict=True)):
        for j, x in ((1, wd), (2, we)):
            cell = ws.cell(r0 + 1 + i, c0 + j)
            cell.value, cell.number_format = pct(x)


def test_case_02_percent_sign_cells_are_read_as_the_percentage_they_show(
    kestrel_book: Path, tmp_path: Path
) -> None:
    signs = read_plan(
        edited(kestrel_book, tmp_path, lambda wb: aadt_inputs(wb, percent_signs=True), "pct.xlsx")
    )
    d = signs.demand
    # AADT x (1.02)^3 x 55 % x share (HCM DDHV = AADT x K x D, applied hour by hour):
    # Mon 2027-05-03 07:00, weekday share 7.0 %: 40,000 x 1.061208 x 0.55 x 0.070 = 1,634.26
    monday_7 = 2 * 24 + 7
    assert d.flows_veh_h[monday_7] == pytest.approx(40_000 * 1.02**3 * 0.55 * 0.070, rel=1e-9)
    assert d.flows_veh_h[monday_7] == pytest.approx(1634.26, abs=0.01)
    assert signs.site.heavy_vehicle_share == pytest.approx(0.08)
    assert signs.site.capacity_drop_pct_work_zone == pytest.approx(13.4)
    # a percentage shown as 8 % is not a fraction to query: no percent warning
    assert not [w for w in signs.input_warnings if "did you mean" in w]


def test_case_02_designer_plan_typed_with_percent_signs_gives_the_same_results(
    kestrel_book: Path, tmp_path: Path
) -> None:
    def typed(percent_signs: bool) -> Callable[[Any], None]:
        def edit(wb: Any) -> None:  # a busy road, and a daytime closure on Wednesday
            aadt_inputs(wb, percent_signs=percent_signs, aadt=120_000)
            write_table(
                wb, L.CLOSURE_TABLE, [closure_row(c) for c in (*KESTREL_CLOSURES, WEDNESDAY)]
            )

        return edit

    plain = edited(kestrel_book, tmp_path, typed(False), "a.xlsx")
    signs = edited(kestrel_book, tmp_path, typed(True), "b.xlsx")
    a, b = wzq.analyse(read_plan(plain)), wzq.analyse(read_plan(signs))
    same_numbers(a, b)
    assert a.summary.max_queue_length_m > 0  # the closures do build queues on this demand


def test_case_02_percentage_typed_as_text_with_its_sign(kestrel_book: Path, tmp_path: Path) -> None:
    def text(wb: Any) -> None:
        cell = set_named(wb, "site_heavy_vehicle_percent", "8 %")
        cell.number_format = "@"  # a text cell: the sign stays in the text

    got = read_plan(edited(kestrel_book, tmp_path, text))
    assert got.site.heavy_vehicle_share == pytest.approx(0.08)


def test_case_02_fraction_in_a_plain_percent_cell_is_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    got = read_plan(
        edited(kestrel_book, tmp_path, lambda wb: set_named(wb, "site_heavy_vehicle_percent", 0.08))
    )
    assert got.site.heavy_vehicle_share == pytest.approx(0.0008)  # read as typed ...
    cell = named_cell(openpyxl.load_workbook(kestrel_book), "site_heavy_vehicle_percent")
    where = f"Site!{cell.coordinate}"
    assert any(
        w.startswith(f"{where}: Heavy vehicles is 0.08 %: did you mean 8 %?")
        for w in got.input_warnings
    )  # ... and queried, naming the cell


def test_case_02_shares_typed_as_fractions_are_refused_with_the_reason(
    kestrel_book: Path, tmp_path: Path
) -> None:
    def fractions(wb: Any) -> None:
        aadt_inputs(wb, percent_signs=False)
        ws, t = find_table(wb, L.SHARE_TABLE)
        c0, r0, _, _ = range_boundaries(t.ref)
        for i, wd in enumerate(L.WEEKDAY_SHARES):
            ws.cell(r0 + 1 + i, c0 + 1).value = wd / 100

    with pytest.raises(PlanError) as e:
        read_plan(edited(kestrel_book, tmp_path, fractions))
    (p,) = e.value.problems
    assert "sums to 1.0 %" in p.message and "look like fractions" in p.message


# ---------------------------------------------------------------------------------------------
# 3. the unused demand input
# ---------------------------------------------------------------------------------------------


def test_case_03_filled_counts_unused_by_the_aadt_mode_are_named(
    kestrel_book: Path, tmp_path: Path
) -> None:
    got = read_plan(edited(kestrel_book, tmp_path, lambda wb: aadt_inputs(wb, percent_signs=False)))
    assert got.demand.start == dt.datetime(2027, 5, 1)  # the AADT is used ...
    (w,) = [w for w in got.input_warnings if "not used" in w]
    # ... and the counts it leaves unused are named, with the switch
    assert w.startswith("Demand!A9: the table DemandTable holds counts")
    assert "'Demand is given as' (Demand!B4) is 'from AADT'" in w


def test_case_03_aadt_typed_beside_hourly_counts_is_named(
    kestrel_book: Path, tmp_path: Path
) -> None:
    got = read_plan(edited(kestrel_book, tmp_path, lambda wb: set_named(wb, "aadt_value", 52_000)))
    (w,) = [w for w in got.input_warnings if "not used" in w]
    assert w.startswith("Demand!F8: AADT, both directions is filled in")
    assert "is 'hourly counts'" in w


# ---------------------------------------------------------------------------------------------
# 4. a demand formula that evaluated to zero; near-zero daytime demand
# ---------------------------------------------------------------------------------------------


def test_case_04_demand_formula_evaluated_to_zero_is_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    def formula(wb: Any) -> None:
        table_cell(wb, L.DEMAND_TABLE, 2 * 24 + 13, L.DEMAND_COLUMNS[2]).value = "=Z1"

    path = edited(kestrel_book, tmp_path, formula)
    # Wed 13:00 is data row 61, sheet row 9 + 61 = 70; Z1 is empty, so the program saved 0
    save_results_as_a_spreadsheet_program(path, {("Demand", "C70"): 0})
    got = read_plan(path)
    assert got.demand.flows_veh_h[61] == 0.0
    assert any(
        w.startswith("Demand!C70: Demand is 0 from the formula =Z1") for w in got.input_warnings
    )
    # between 3,900 and 4,800 veh/h around it (kestrel_ridge_weeknight.json): near zero too
    result = wzq.analyse(got)
    assert any(
        w.startswith("Demand!C70: demand 0 veh/h at Wed 2027-05-05 13:00 is near zero")
        for w in result.warnings
    )


def test_near_zero_daytime_demand_in_a_json_plan_names_its_key() -> None:
    data = json.loads(KESTREL.read_text())
    data["demand"]["veh_h"][2 * 24 + 13] = 0
    result = wzq.analyse(plan_from_dict(data))
    (w,) = [w for w in result.warnings if "near zero" in w]
    # the hours around it: 12:00 3,900 and 14:00 4,200 veh/h (the two on each side: 3,900/3,900
    # and 4,200/4,800); the busier of each side is compared
    assert w.startswith("demand.veh_h[61]: demand 0 veh/h at Wed 2027-05-05 13:00 is near zero")
    assert "between 3,900 and 4,800 veh/h" in w
    # 3 a.m. zeros are not queried: night hours may be empty
    data["demand"]["veh_h"][2 * 24 + 13] = 3900
    data["demand"]["veh_h"][3] = 0
    assert not [w for w in wzq.analyse(plan_from_dict(data)).warnings if "near zero" in w]


# ---------------------------------------------------------------------------------------------
# 5. formulas in input cells
# ---------------------------------------------------------------------------------------------


def formula_inputs(wb: Any) -> dict[tuple[str, str], Any]:
    """Formulas typed into input cells (demand, a site value, closure times, unused
    formula rows) and the results a spreadsheet program saves for them."""
    results: dict[tuple[str, str], Any] = {}
    for i in (5, 6, 7):  # 05:00-07:00 on Monday: 1,500, 3,600, 5,200 veh/h typed as sums
        cell = table_cell(wb, L.DEMAND_TABLE, i, L.DEMAND_COLUMNS[2])
        flow = cell.value
        cell.value = f"={flow - 100:g}+100"
        results[("Demand", cell.coordinate)] = flow
    speed = set_named(wb, "site_speed_limit", "=60+5")
    results[("Site", speed.coordinate)] = 65
    start = table_cell(wb, L.CLOSURE_TABLE, 0, "From")
    start.value = "=TIME(21,0,0)"
    results[("Closures", start.coordinate)] = 21 / 24
    for i in (2, 3, 4):  # formula-driven rows left unused: they show nothing
        for h in ("Date", "From", "To"):
            cell = table_cell(wb, L.CLOSURE_TABLE, i, h)
            cell.value = '=IF(1>2,1,"")'
            results[("Closures", cell.coordinate)] = ""
    return results


def test_case_05_formula_inputs_survive_the_tools_own_save(
    kestrel_book: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "formulas.xlsx"
    shutil.copyfile(kestrel_book, path)
    wb = openpyxl.load_workbook(path)
    results = formula_inputs(wb)
    wb.save(path)
    save_results_as_a_spreadsheet_program(path, results)
    plain = wzq.analyse(load_plan(KESTREL))
    for _ in range(3):
        outcome = run_to(path)
        same_numbers(outcome.result, plain)
        code, out, _ = check_output(["check", str(path)], capsys)
        assert code == 0 and "no problems found; 2 closures" in out
        same_numbers(wzq.analyse(read_plan(path)), plain)
    # the formulas are still formulas, with their results saved beside them
    wb = openpyxl.load_workbook(path)
    assert named_cell(wb, "site_speed_limit").value == "=60+5"
    assert (
        openpyxl.load_workbook(path, data_only=True)["Site"][
            named_cell(wb, "site_speed_limit").coordinate
        ].value
        == 65
    )


def test_case_05_empty_text_results_are_blank_cells(kestrel_book: Path, tmp_path: Path) -> None:
    def rows(wb: Any) -> None:
        for i in (2, 3, 4):
            for h in L.CLOSURE_COLUMNS:
                table_cell(wb, L.CLOSURE_TABLE, i, h).value = '=IF(1>2,1,"")'
        set_named(wb, "site_free_flow_speed", '=IF(1>2,70,"")')

    path = edited(kestrel_book, tmp_path, rows)
    results = {
        ("Closures", f"{get_column_letter(c + 1)}{8 + r}"): ""
        for r in range(3)
        for c in range(len(L.CLOSURE_COLUMNS))
    }
    wb = openpyxl.load_workbook(path)
    results[("Site", named_cell(wb, "site_free_flow_speed").coordinate)] = ""
    save_results_as_a_spreadsheet_program(path, results)
    got = read_plan(path)
    assert len(got.closures) == 2 and got.site.free_flow_speed is None


def test_case_05_formula_on_an_output_sheet_is_refused_naming_the_cell(
    kestrel_book: Path, tmp_path: Path
) -> None:
    path = tmp_path / "loop.xlsx"
    shutil.copyfile(kestrel_book, path)
    run_to(path)
    wb = openpyxl.load_workbook(path)
    # a site value taken from wzq's own results, through a sheet of the user's
    wb.create_sheet("Mine")["A1"] = "=Summary!B5*0+1.2"
    cell = set_named(wb, "site_work_zone_length", "=Mine!A1")
    wb.save(path)
    save_results_as_a_spreadsheet_program(
        path, {("Mine", "A1"): 1.2, ("Site", cell.coordinate): 1.2}
    )
    with pytest.raises(PlanError) as e:
        read_plan(path)
    (p,) = e.value.problems
    assert p.where == f"Site!{cell.coordinate}"
    assert "takes its value from Summary!B5, on a sheet wzq rewrites on every run" in p.message


def test_case_05_what_a_formula_depends_on_is_followed_through_cells_names_and_text() -> None:
    from openpyxl.workbook.defined_name import DefinedName

    from wzq.io.workbook.formula_values import Precedents

    wb = openpyxl.Workbook()
    site = wb.active
    site.title = "Site"
    wb.create_sheet("Results")
    mine = wb.create_sheet("My sheet")
    site["A1"] = "=B1*2"  # -> B1 -> 'My sheet'!C3 -> a sum over Results
    site["B1"] = "='My sheet'!C3"
    mine["C3"] = "=SUM(Results!A1:A10)"
    wb.defined_names["mine"] = DefinedName("mine", attr_text="'My sheet'!$D$4")
    mine["D4"] = 5
    site["A2"] = "=mine*2"  # a name standing for a plain value
    wb.defined_names["res"] = DefinedName("res", attr_text="Results!$B$7")
    site["A3"] = "=res+1"  # a name standing for an output cell
    site["A4"] = '=INDIRECT("Results!B2")'  # an output cell named in text
    site["A5"], site["A6"] = "=A6", "=A5"  # circular, on input cells only
    trace = Precedents(wb)
    assert [trace.output_source("Site", r, 1) for r in range(1, 7)] == [
        "Results!A1",
        None,
        "Results!B7",
        "Results!B2",
        None,
        None,
    ]
    assert trace.output_source("Site", 1, 2) == "Results!A1"


@pytest.mark.libreoffice
@pytest.mark.slow
@pytest.mark.skipif(SOFFICE is None, reason="LibreOffice (soffice) is not installed")
def test_case_05_round_trip_with_formula_inputs_saved_by_libreoffice(
    kestrel_book: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """Formulas in demand, shares, a site value and closure times, last saved by LibreOffice:
    three runs in a row, with check and report between, always the numbers of the same plan
    typed as plain values."""
    hourly = edited(kestrel_book, tmp_path, formula_inputs, "hourly.xlsx")

    def shares(wb: Any) -> None:
        aadt_inputs(wb, percent_signs=False)
        ws, t = find_table(wb, L.SHARE_TABLE)
        c0, r0, _, _ = range_boundaries(t.ref)
        counts = wb.create_sheet("Counts")
        for i in range(24):  # each share as a formula on a sheet of the user's
            counts.cell(i + 1, 1, L.WEEKDAY_SHARES[i] * 10)
            ws.cell(r0 + 1 + i, c0 + 1).value = f"=Counts!A{i + 1}/10"
        set_named(wb, "aadt_value", "=4*10000")

    aadt = edited(kestrel_book, tmp_path, shares, "aadt.xlsx")
    plain_aadt = edited(
        kestrel_book, tmp_path, lambda wb: aadt_inputs(wb, percent_signs=False), "plain.xlsx"
    )
    saved = tmp_path / "saved"
    profile = (tmp_path / "profile").as_uri()
    subprocess.run(
        [SOFFICE, f"-env:UserInstallation={profile}", "--headless", "--convert-to", "xlsx",
         "--outdir", str(saved), str(hourly), str(aadt)],
        check=True, capture_output=True, timeout=240,
    )  # fmt: skip
    for name, plain in (
        ("hourly.xlsx", wzq.analyse(load_plan(KESTREL))),
        ("aadt.xlsx", wzq.analyse(read_plan(plain_aadt))),
    ):
        path = saved / name
        for k in range(3):
            same_numbers(run_to(path).result, plain)
            code, out, _ = check_output(["check", str(path)], capsys)
            assert code == 0 and "no problems found" in out, out
            pdf = tmp_path / f"{name}-{k}.pdf"
            code, _, err = check_output(["report", str(path), "-o", str(pdf)], capsys)
            assert code == 0 and pdf.exists(), err
            same_numbers(wzq.analyse(read_plan(path)), plain)


# ---------------------------------------------------------------------------------------------
# 6. what a typed closure capacity is
# ---------------------------------------------------------------------------------------------


def typed_plan(meaning: str) -> Plan:
    """Two lanes, one closed all day with a typed capacity of 1,400 veh/h/ln; work-zone
    capacity drop 13.4 %."""
    site = Site(
        lanes=2,
        speed_limit=65 * u.MPH,
        work_zone_speed_limit=55 * u.MPH,
        work_zone_length=0.0,
        capacity_override_is=meaning,
    )
    start = dt.datetime(2027, 5, 3)
    return Plan(
        site,
        Demand(start, 3600, np.full(24, 1000.0)),
        (Closure(start, start + dt.timedelta(days=1), 1, "soft", None, 1400.0),),
    )


@pytest.mark.parametrize(
    ("meaning", "pre", "discharge"),
    [
        ("both", 1400.0, 1400.0),
        # HCM 6th/7th ed. ch. 10: c = 100 QDR / (100 - alpha) = 140,000 / 86.6 = 1,616.63
        ("discharge", 140_000 / 86.6, 1400.0),
        # and back: QDR = c (100 - alpha) / 100 = 1,400 x 0.866 = 1,212.4
        ("prebreakdown", 1400.0, 1212.4),
    ],
)
def test_case_06_typed_capacity_is_what_the_plan_says(
    meaning: str, pre: float, discharge: float
) -> None:
    iv = wzq.analyse(typed_plan(meaning)).intervals
    assert iv["capacity_veh_h"].iloc[0] == pytest.approx(pre, rel=1e-12)
    assert iv["discharge_veh_h"].iloc[0] == pytest.approx(discharge, rel=1e-12)


def test_case_06_the_meaning_is_stated_on_the_sheet_in_json_readme_and_report(
    kestrel_book: Path, tmp_path: Path
) -> None:
    def discharge(wb: Any) -> None:
        set_named(wb, "site_override_is", "queue discharge rate")
        table_cell(wb, L.CLOSURE_TABLE, 0, "Capacity override (veh/h/ln)").value = 1500

    path = edited(kestrel_book, tmp_path, discharge)
    plan = read_plan(path)
    assert plan.site.capacity_override_is == "discharge"
    wb = openpyxl.load_workbook(path)
    cell = named_cell(wb, "site_override_is")
    assert "pre-breakdown capacity and discharge rate" in cell.offset(0, 2).value  # its note
    assert "queue discharge rate" in wb[L.CLOSURES]["A4"].value  # the Closures sheet says
    assert "both" in wb[L.CLOSURES]["A4"].value
    # JSON: the key, round trip
    from wzq.io.jsonplan import plan_to_dict

    data = plan_to_dict(plan)
    assert data["site"]["capacity_override_is"] == "discharge"
    assert plan_from_dict(data).site.capacity_override_is == "discharge"
    assert "`site.capacity_override_is`" in README.read_text()
    # the report's method page
    text = report_text(wzq.analyse(plan))
    assert "is its queue discharge rate; its pre-breakdown capacity is 100 QDR / (100 − α)" in text


def report_text(result: wzq.engine.results.Result) -> str:
    import io

    from pypdf import PdfReader

    pdf = build_report(result, generated=DAY, vector=False)
    return " ".join(" ".join(p.extract_text().split()) for p in PdfReader(io.BytesIO(pdf)).pages)


# ---------------------------------------------------------------------------------------------
# 7. the LCSI cap, printed with the method
# ---------------------------------------------------------------------------------------------


def test_case_07_three_to_one_closure_by_the_printed_method(
    kestrel_book: Path, tmp_path: Path
) -> None:
    plan = load_plan(KESTREL)
    three_to_one = dataclasses.replace(
        plan,
        site=dataclasses.replace(plan.site, lateral_clearance=0.0, heavy_vehicle_share=0.05),
        closures=(Closure(dt.datetime(2027, 5, 3, 10), dt.datetime(2027, 5, 3, 11), 2, "soft"),),
    )
    # the method as printed: LCSI = 1/(OR x N_o) = 1/((1/3) x 1) = 3, at most 2.0 -> 2.0;
    # QDR = 2093 - 154 x 2.0 - 194 (cones) = 1,591 pc/h/ln (urban, day, 0 ft);
    # c = 100 x 1,591 / (100 - 13.4) = 1,837.18 pc/h/ln; f_HV = 1/(1 + 0.05 (2 - 1)) (level);
    # one open lane, commuters -> 1,749.70 veh/h
    by_hand = 100 * (2093 - 154 * 2.0 - 194) / (100 - 13.4) / 1.05
    hour = wzq.analyse(three_to_one).hourly.set_index("hour_start").loc["2027-05-03 10:00"]
    assert hour["capacity_veh_h"] == pytest.approx(by_hand, rel=1e-12)
    assert by_hand == pytest.approx(1749.70, abs=0.01)
    # every place that prints the method prints the cap
    cap = "at most 2.0"
    readme = README.read_text()
    assert re.search(r"LCSI = 1/\(OR N_o\)`?, at most 2\.0", readme)
    assert cap in report_text(wzq.analyse(three_to_one))
    wb = openpyxl.load_workbook(kestrel_book)
    assert cap in named_cell(wb, "site_capacity_method").offset(0, 2).value


# ---------------------------------------------------------------------------------------------
# 8. blank road-user cost cells: one meaning everywhere
# ---------------------------------------------------------------------------------------------


def test_case_08_blank_cost_cells_mean_the_published_defaults_everywhere(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    plan = dataclasses.replace(load_plan(KESTREL), costs=None)
    (tmp_path / "plans").mkdir()
    path = fill_template(plan, tmp_path / "plans" / "blank-costs.xlsx")
    wb = openpyxl.load_workbook(path)
    # where the user types it
    note = named_cell(wb, "cost_car_value").offset(0, 2).value
    assert "blank: published defaults" in note and "skip" not in note
    result = wzq.analyse(read_plan(path))
    # 2017 TTI memo values (wzq.engine.costs): cars 28.69, trucks 36.28 per veh-h, 8 % trucks
    value = 0.92 * 28.69 + 0.08 * 36.28
    assert result.summary.total_cost == pytest.approx(result.summary.total_delay_veh_h * value)
    code, out, _ = check_output(["show", str(path)], capsys)
    assert code == 0 and "USD (2017 prices; published defaults" in out
    code, out, _ = check_output(["run", str(path)], capsys)
    assert code == 0 and "USD (2017 prices; published defaults" in out
    batch = run_batch(tmp_path / "plans", workers=1)
    (row,) = batch.rows
    assert row.road_user_cost == round(result.summary.total_cost)
    assert row.cost_basis == "USD 2017 (published defaults)"


# ---------------------------------------------------------------------------------------------
# 9. long plans
# ---------------------------------------------------------------------------------------------


def long_plan(windows: bool) -> Plan:
    """Kestrel Ridge with 43 days of 15-minute demand: 4,128 intervals, just over the
    closure-window search's 4,032."""
    base = load_plan(KESTREL)
    day = np.repeat(base.demand.flows_veh_h[:24], 4)
    demand = Demand(base.demand.start, 900, np.tile(day, 43))
    return dataclasses.replace(
        base,
        demand=demand,
        options=dataclasses.replace(base.options, closure_windows=windows),
    )


def test_case_09_a_long_plan_runs_and_reports_with_the_windows_left_out(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = fill_template(long_plan(True), tmp_path / "long.xlsx")
    wb = openpyxl.load_workbook(path)
    option = f"Limits!{named_cell(wb, 'opt_closure_windows').coordinate}"
    # check predicts what run does, naming the cell that switches the windows off
    code, out, _ = check_output(["check", str(path)], capsys)
    assert code == 0 and f"warning: {option}: closure windows are left out" in out
    assert "4,128 intervals" in out and f"'Closure windows sheet' ({option}) to no" in out
    code, out, err = check_output(["run", str(path)], capsys)
    assert code == 0, err
    sheet = openpyxl.load_workbook(path)[L.WINDOWS]
    assert "closure windows are left out" in sheet["A1"].value and option in sheet["A1"].value
    # the report follows the option: with the windows on, the page says why they are left out
    pdf = tmp_path / "long.pdf"
    code, _, err = check_output(["report", str(path), "-o", str(pdf)], capsys)
    assert code == 0, err
    # the report's windows page follows the option: none when the windows are switched off
    plan = load_plan(KESTREL)
    off = dataclasses.replace(
        plan, options=dataclasses.replace(plan.options, closure_windows=False)
    )
    assert "Allowable closure hours" in report_text(wzq.analyse(plan))
    assert "Allowable closure hours" not in report_text(wzq.analyse(off))


# ---------------------------------------------------------------------------------------------
# 10. -o never replaces another plan
# ---------------------------------------------------------------------------------------------


def test_case_10_output_over_another_plan_is_refused(
    kestrel_book: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    a = tmp_path / "a.xlsx"
    other = tmp_path / "other-plan.xlsx"
    shutil.copyfile(kestrel_book, a)
    shutil.copyfile(kestrel_book, other)
    before = other.read_bytes()
    code, _, err = check_output(["run", str(a), "-o", str(other)], capsys)
    assert code == cli.EXIT_INPUT and other.read_bytes() == before
    assert "other-plan.xlsx already exists and it is not a results file" in err
    assert "--force" in err
    # a results file of this plan is replaced, and --force replaces anything
    results = tmp_path / "a-results.xlsx"
    assert cli.main(["run", str(a), "-o", str(results)]) == 0
    assert cli.main(["run", str(a), "-o", str(results)]) == 0
    code, _, err = check_output(["run", str(other), "-o", str(results)], capsys)
    assert code == cli.EXIT_INPUT and "holds the results of a.xlsx" in err
    assert cli.main(["run", str(a), "-o", str(other), "--force"]) == 0


# ---------------------------------------------------------------------------------------------
# 11. bulk runs: unreadable spreadsheets are listed, results copies are not plans
# ---------------------------------------------------------------------------------------------


def test_case_11_batch_lists_unreadable_spreadsheets_and_skips_results_copies(
    kestrel_book: Path, tmp_path: Path
) -> None:
    folder = tmp_path / "plans"
    folder.mkdir()
    shutil.copyfile(kestrel_book, folder / "plan.xlsx")
    shutil.copyfile(kestrel_book, folder / "plan (wzq results).xlsx")
    (folder / "old.xls").write_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504))
    (folder / "calc.ods").write_bytes(b"PK\x03\x04" + bytes(100))
    result = run_batch(folder, workers=1)
    assert [o.file for o in result.outcomes] == ["calc.ods", "old.xls", "plan.xlsx"]
    assert [o.file for o in result.not_analysed] == ["calc.ods", "old.xls"]
    hints = {
        "calc.ods": "in LibreOffice Calc or the program that made it, use Save As with the "
        "type Excel 2007-365 (.xlsx), then run that copy",
        "old.xls": "save it from your spreadsheet program as .xlsx (or .xlsm to keep macros) first",
    }
    assert len(result.issues) == 2
    for issue in result.issues:
        assert any(f in issue.where and hint in issue.message for f, hint in hints.items()), issue
    assert batch_status(result) == 2
    assert any("plan (wzq results).xlsx skipped: it is the results copy of plan.xlsx" in n
               for n in result.notes)  # fmt: skip


# ---------------------------------------------------------------------------------------------
# 12. messages in the user's terms
# ---------------------------------------------------------------------------------------------


def test_case_12_merged_date_cell_is_read_as_shown(kestrel_book: Path, tmp_path: Path) -> None:
    def merge(wb: Any) -> None:
        ws = find_table(wb, L.DEMAND_TABLE)[0]
        for r in range(10, 33):
            ws.cell(r, 1).value = None
        ws.merge_cells("A9:A32")  # Monday's date typed once, merged over its 24 hours

    got = read_plan(edited(kestrel_book, tmp_path, merge))
    np.testing.assert_array_equal(got.demand.flows_veh_h, load_plan(KESTREL).demand.flows_veh_h)


@pytest.mark.parametrize(
    ("value", "words"),
    [
        (21, "From: 21 is a number, not a time"),
        (dt.datetime(1900, 1, 21), "From: 21 is a number, not a time"),
    ],
)
def test_case_12_a_bare_hour_in_from_says_type_the_time(
    kestrel_book: Path, tmp_path: Path, value: Any, words: str
) -> None:
    path = edited(
        kestrel_book, tmp_path, lambda wb: setattr(table_cell(wb, L.CLOSURE_TABLE, 0, "From"),
                                                   "value", value)
    )  # fmt: skip
    with pytest.raises(PlanError) as e:
        read_plan(path)
    (p,) = e.value.problems
    assert p.where == "Closures!B6" and p.message.startswith(words)
    assert "did you mean 21:00?" in p.message and "1900" in p.message


def test_case_12_a_formula_end_past_midnight_says_the_time_and_what_to_type(
    kestrel_book: Path, tmp_path: Path
) -> None:
    path = edited(
        kestrel_book, tmp_path, lambda wb: setattr(table_cell(wb, L.CLOSURE_TABLE, 0, "To"),
                                                   "value", "=B6+TIME(8,0,0)")
    )  # fmt: skip
    # 21:00 + 8 h = 29:00, saved as 1.2083 days
    save_results_as_a_spreadsheet_program(path, {("Closures", "C6"): 29 / 24})
    with pytest.raises(PlanError) as e:
        read_plan(path)
    (p,) = e.value.problems
    assert p.where == "Closures!C6"
    assert p.message.startswith("To is 29:00, past 24:00")
    assert "type 05:00" in p.message and "MOD(...,1)" in p.message and "1900" not in p.message


def test_case_12_text_too_long_to_print_names_the_cell(
    kestrel_book: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = edited(
        kestrel_book, tmp_path,
        lambda wb: (set_named(wb, "site_name", "K" * 401),
                    setattr(table_cell(wb, L.CLOSURE_TABLE, 1, "Note"), "value", "n" * 401)),
    )  # fmt: skip
    code, _, err = check_output(["report", str(path), "-o", str(tmp_path / "r.pdf")], capsys)
    assert code == cli.EXIT_INPUT
    wb = openpyxl.load_workbook(path)
    assert f"wzq: Site!{named_cell(wb, 'site_name').coordinate}: 401 characters" in err
    assert "wzq: Closures!H7: 401 characters" in err
    assert "site.name" not in err and "closures[" not in err


def test_case_12_lost_table_advice_is_not_excel_only(kestrel_book: Path, tmp_path: Path) -> None:
    def rename(wb: Any) -> None:
        ws, t = find_table(wb, L.CLOSURE_TABLE)
        del ws.tables[L.CLOSURE_TABLE]
        t.name = t.displayName = "Renamed"
        ws.add_table(t)

    with pytest.raises(PlanError) as e:
        read_plan(edited(kestrel_book, tmp_path, rename))
    (p,) = e.value.problems
    first = p.message.split("(")[0]
    assert "Table Design" not in first and "`wzq new`" in first


def test_case_12_users_summary_sheet_fails_check_as_it_would_fail_run(
    kestrel_book: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = edited(kestrel_book, tmp_path, lambda wb: wb.create_sheet("Summary"))
    code, _, err = check_output(["check", str(path)], capsys)
    assert code == cli.EXIT_INPUT
    assert "wzq: sheet 'Summary': this sheet of yours has the name of a sheet wzq writes" in err


# ---------------------------------------------------------------------------------------------
# Reader warnings reach every place warnings are shown
# ---------------------------------------------------------------------------------------------


def test_reader_warnings_reach_the_terminal_run_log_summary_and_report(
    kestrel_book: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = edited(
        kestrel_book, tmp_path, lambda wb: set_named(wb, "site_heavy_vehicle_percent", 0.08)
    )
    said = "Heavy vehicles is 0.08 %: did you mean 8 %?"
    for command in (["check"], ["show"], ["run"]):
        code, out, _ = check_output([*command, str(path)], capsys)
        assert code == 0 and said in out, command
    wb = openpyxl.load_workbook(path)
    for sheet in (L.RUN_LOG, L.SUMMARY):
        assert any(
            isinstance(c.value, str) and said in c.value
            for row in wb[sheet].iter_rows()
            for c in row
        ), sheet
    assert said in report_text(wzq.analyse(read_plan(path)))


def test_plausibility_names_the_cell_of_an_implausible_site_value(
    kestrel_book: Path, tmp_path: Path
) -> None:
    def odd(wb: Any) -> None:
        set_named(wb, "site_lateral_clearance", 20)
        set_named(wb, "site_work_zone_length", 14)

    result = wzq.analyse(read_plan(edited(kestrel_book, tmp_path, odd)))
    wb = openpyxl.load_workbook(kestrel_book)
    lateral = f"Site!{named_cell(wb, 'site_lateral_clearance').coordinate}"
    length = f"Site!{named_cell(wb, 'site_work_zone_length').coordinate}"
    # HCM 6th/7th ed. ch. 10: the QDR equation's lateral distance spans 0-12 ft
    assert any(w.startswith(f"{lateral}: lateral distance 20.0 ft is beyond the 0-12.0 ft")
               for w in result.warnings)  # fmt: skip
    assert any(w.startswith(f"{length}: a work zone 14.0 mi long") for w in result.warnings)


def test_demand_above_the_open_roads_capacity_names_its_cell(
    kestrel_book: Path, tmp_path: Path
) -> None:
    path = edited(
        kestrel_book,
        tmp_path,
        lambda wb: setattr(table_cell(wb, L.DEMAND_TABLE, 7, L.DEMAND_COLUMNS[2]), "value", 7000),
    )
    result = wzq.analyse(read_plan(path))
    # open road: FFS 65 + 5 = 70 mi/h -> c = 2,200 + 10 (70 - 50) = 2,400 pc/h/ln (HCM 7th
    # ch. 12); f_HV = 1/(1 + 0.08) (level); 3 lanes -> 6,666.7 veh/h
    (w,) = [w for w in result.warnings if "open road's own capacity" in w]
    assert w.startswith("Demand!C16: demand 7,000 veh/h at Mon 2027-05-03 07:00")
    assert "(6,667 veh/h on 3 lanes)" in w
