"""The space-time picture on request: workbook Charts sheet, report, JSON and flags."""

from __future__ import annotations

import dataclasses
import shutil
from pathlib import Path

import openpyxl
import pytest
from pypdf import PdfReader

import wzq
from wzq.cli import main
from wzq.io.jsonplan import load_plan, plan_from_dict, plan_to_dict
from wzq.io.report import build_report

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


def test_json_round_trip_keeps_the_option() -> None:
    plan = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    assert plan.options.space_time is False
    data = plan_to_dict(plan)
    data["options"]["space_time"] = True
    assert plan_from_dict(data).options.space_time is True


def test_run_flag_puts_the_picture_on_the_charts_sheet(tmp_path: Path) -> None:
    book = tmp_path / "plan.xlsx"
    shutil.copy(EXAMPLES / "kestrel_ridge_weeknight.xlsx", book)
    assert main(["run", str(book), "--no-space-time"]) == 0
    assert len(openpyxl.load_workbook(book)["Charts"]._images) == 0
    assert main(["run", str(book), "--space-time"]) == 0
    charts = openpyxl.load_workbook(book)["Charts"]
    assert len(charts._images) == 1
    assert len(charts._charts) == 3  # the native charts stay


def test_site_sheet_option_asks_for_the_picture(tmp_path: Path) -> None:
    book = tmp_path / "plan.xlsx"
    shutil.copy(EXAMPLES / "kestrel_ridge_weeknight.xlsx", book)
    wb = openpyxl.load_workbook(book)
    sheet, coord = next(iter(wb.defined_names["site_space_time"].destinations))
    wb[sheet][coord.replace("$", "")] = "yes"
    wb.save(book)
    assert main(["run", str(book)]) == 0
    assert len(openpyxl.load_workbook(book)["Charts"]._images) == 1


def test_report_adds_the_space_time_page() -> None:
    plan = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    on = dataclasses.replace(plan, options=dataclasses.replace(plan.options, space_time=True))
    import io

    pages = PdfReader(io.BytesIO(build_report(wzq.analyse(on), vector=False))).pages
    plain = PdfReader(io.BytesIO(build_report(wzq.analyse(plan), vector=False))).pages
    assert len(pages) == len(plain) + 1
    assert any("Space-time check" in p.extract_text() for p in pages)
    assert not any("Space-time check" in p.extract_text() for p in plain)


def test_closure_windows_sheet_on_request(tmp_path: Path) -> None:
    book = tmp_path / "plan.xlsx"
    shutil.copy(EXAMPLES / "kestrel_ridge_weeknight.xlsx", book)
    assert main(["run", str(book), "--no-windows"]) == 0
    ws = openpyxl.load_workbook(book)["Closure windows"]
    assert "were not computed" in ws["A1"].value and not ws._charts
    # the note prints whole on one portrait page: wrapped in one cell narrower than the
    # page (a letter or A4 page holds about 90 character widths at 100 %, common practice)
    assert ws["A1"].alignment.wrap_text and ws.print_area == "'Closure windows'!$A$1"
    assert ws.column_dimensions["A"].width <= 80
    assert ws.row_dimensions[1].height >= 15 * len(ws["A1"].value) / 75
    assert main(["run", str(book), "--windows"]) == 0
    ws = openpyxl.load_workbook(book)["Closure windows"]
    assert len(ws._charts) == 1
