"""What a designer types on wzq's output sheets after a run is never lost by the next run.

wzq replaces its output sheets on every run; a note typed beside the Results table, a
value overwritten on the Permit table, a comment or the print orientation changed
there went without a word. The next run in place now leaves such a workbook byte for
byte as it was and writes the results to a copy, naming what was typed.
"""

from __future__ import annotations

import dataclasses
import io
import shutil
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from fake_xlwings import open_book
from openpyxl.comments import Comment
from workbook_helpers import fill_template

import wzq
from wzq.engine.problems import PlanError
from wzq.io.jsonplan import load_plan
from wzq.io.live import backend as live
from wzq.io.workbook import layout, outputs_record, windows_cache
from wzq.io.workbook.outputs import write_results
from wzq.io.workbook.reader import read_plan
from wzq.io.workbook.reader.skip import load_skipping_outputs
from wzq.io.workbook.run import run_to

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "kestrel_ridge_weeknight.xlsx"
KESTREL_JSON = EXAMPLE.with_suffix(".json")
STAMP = "2027-01-01T00:00:00Z"


@pytest.fixture
def ran(tmp_path: Path) -> Path:
    """The Kestrel Ridge example after one run in place (the outputs as wzq wrote them)."""
    path = tmp_path / "kestrel.xlsx"
    shutil.copyfile(EXAMPLE, path)
    assert not run_to(path, run_time=STAMP).copied
    return path


def _edit(path: Path, change) -> bytes:
    book = openpyxl.load_workbook(path)
    change(book)
    book.save(path)
    return path.read_bytes()


def test_a_note_typed_beside_the_results_table_is_kept(ran: Path):
    before = _edit(ran, lambda b: b[layout.RESULTS].cell(3, 19, "Checked with the county, JB"))
    outcome = run_to(ran, run_time=STAMP)
    assert outcome.copied and outcome.target.name == "kestrel (wzq results).xlsx"
    assert ran.read_bytes() == before  # the note is still there
    said = " ".join(outcome.notes)
    assert "Results!S3 'Checked with the county, JB'" in said
    assert "move it to a sheet of your own" in said
    # the copy holds the results of the plan, as a run in place would have
    copy = openpyxl.load_workbook(outcome.target)
    assert copy[layout.RESULTS]["S3"].value is None


def test_a_value_of_wzqs_changed_on_the_permit_table_is_named_by_its_column_and_rows(ran):
    book = openpyxl.load_workbook(ran)
    ws = book[layout.PERMIT_TABLE]
    cell = next(c for row in ws.iter_rows(min_row=12) for c in row if c.value is not None)
    before = _edit(ran, lambda b: b[layout.PERMIT_TABLE].cell(cell.row, cell.column, "n/a"))
    outcome = run_to(ran, run_time=STAMP)
    assert outcome.copied and ran.read_bytes() == before
    block = (cell.row - 1) // 50 * 50 + 1
    said = " ".join(outcome.notes)
    assert "Permit table: a value wzq wrote was changed or cleared" in said
    assert f"(column {cell.column_letter}; rows {block}-" in said


def test_a_comment_and_a_print_orientation_are_named(ran: Path):
    def change(book):
        book[layout.SUMMARY]["A1"].comment = Comment("agreed with the county", "JB")
        book[layout.PERMIT_TABLE].page_setup.orientation = "portrait"  # wzq prints landscape

    before = _edit(ran, change)
    outcome = run_to(ran, run_time=STAMP)
    assert outcome.copied and ran.read_bytes() == before
    said = " ".join(outcome.notes)
    assert "Summary: a comment added or removed" in said
    assert "Permit table: the print orientation changed" in said


def test_refused_when_copies_are_not_wanted(ran: Path):
    before = _edit(ran, lambda b: b[layout.RESULTS].cell(80, 1, "my total"))
    with pytest.raises(PlanError) as e:
        run_to(ran, run_time=STAMP, unkept="refuse")
    assert "Results!A80 'my total'" in str(e.value)
    assert ran.read_bytes() == before


def test_runs_without_anything_typed_and_after_an_input_changes_stay_in_place(ran: Path):
    assert not run_to(ran, run_time=STAMP).copied  # the same outputs again
    _edit(ran, lambda b: b["Site"].cell(12, 2, 1.5))  # the work-zone length, an input
    outcome = run_to(ran, run_time=STAMP)
    assert not outcome.copied and outcome.target == ran
    assert not run_to(ran, run_time="2027-01-02T00:00:00Z").copied  # another time stamp


def test_outputs_written_by_another_run_without_a_record_are_not_compared(ran: Path):
    """The Recalculate button in Excel writes the output sheets (another run time, other
    results) and keeps no record: the record of the last `wzq run` no longer describes
    them, so the next run writes in place instead of calling every new value typed."""
    book = openpyxl.load_workbook(ran)
    plan = read_plan(ran)
    busier = dataclasses.replace(
        plan, demand=dataclasses.replace(plan.demand, flows_veh_h=plan.demand.flows_veh_h * 1.1)
    )
    write_results(book, wzq.analyse(busier), run_time="2027-02-01T00:00:00Z")
    book.save(ran)
    outcome = run_to(ran, run_time=STAMP)
    assert not outcome.copied and outcome.target == ran


# --- the Recalculate button in Excel (through the stand-in for xlwings) ------------------


def test_a_note_beside_the_results_is_kept_by_the_recalculate_button(tmp_path: Path):
    """Pressed once, a note typed beside the Results table (S3) and one below the Permit
    table: the next press changes nothing and names both; once the notes are moved to a
    sheet of the user's, the press runs."""
    book = open_book(fill_template(load_plan(KESTREL_JSON), tmp_path / "k.xlsm", macro=True))
    assert live.recalculate(book, run_time=STAMP).ok
    book.sheets[layout.RESULTS].range("S3").value = "Checked with the county, JB"
    book.sheets[layout.PERMIT_TABLE].range("B60").value = "signed off"
    results = book._values(layout.RESULTS)
    outcome = live.recalculate(book, run_time="2027-01-02T00:00:00Z")
    assert not outcome.ok and len(outcome.problems) == 1
    said = outcome.problems[0].message
    assert "Results!S3 'Checked with the county, JB'" in said
    assert "'Permit table'!B60 'signed off'" in said
    assert book._values(layout.RESULTS) == results  # the note and the old results
    book.sheets[layout.RESULTS].range("S3").value = None
    book.sheets[layout.PERMIT_TABLE].range("B60").value = None
    assert live.recalculate(book, run_time="2027-01-02T00:00:00Z").ok
    assert live.recalculate(book, run_time="2027-01-03T00:00:00Z").ok  # nothing typed


def test_bounds_kept_for_sheets_of_another_run_are_not_used(tmp_path: Path):
    """The bounds a press keeps hold its run time; once the Run log shows another (the
    sheets were written since by `wzq run`, or by a press of an older wzq), they do not
    describe the sheets, and nothing is compared: every cell of Results lies outside the
    block of 5 rows and 3 columns these bounds give."""
    book = open_book(fill_template(load_plan(KESTREL_JSON), tmp_path / "k.xlsx"))
    assert live.recalculate(book, run_time=STAMP).ok
    book.names.add("wzq_output_bounds", '="2027-01-09T00:00:00Z|Results:5:3"')
    assert live.recalculate(book, run_time="2027-01-02T00:00:00Z").ok
    # the run time of the sheets as they are (the second press): compared, and refused
    book.names.add("wzq_output_bounds", '="2027-01-02T00:00:00Z|Results:5:3"')
    assert not live.recalculate(book, run_time="2027-01-03T00:00:00Z").ok


def test_the_sheets_read_from_the_packages_xml_are_those_openpyxl_reads(ran: Path):
    """The quick reading of the output sheets (regular expressions over the XML) gives
    every cell and extra exactly as openpyxl's parse does, on a sheet of every kind and
    with what a designer adds: a note (shared string with an ampersand), a number, a
    comment, a landscape Summary."""

    def change(book):
        book[layout.RESULTS]["S3"] = "checked & agreed <JB>"
        book[layout.RESULTS]["T4"] = 1234.5
        book[layout.SUMMARY]["A1"].comment = Comment("agreed", "JB")
        book[layout.SUMMARY].page_setup.orientation = "landscape"

    data = _edit(ran, change)
    book = load_skipping_outputs(io.BytesIO(data), keep_links=True)
    quick = outputs_record.package_sheets(data, book)
    parsed = openpyxl.load_workbook(io.BytesIO(data))
    assert quick is not None and set(quick) == set(layout.OUTPUT_SHEETS)
    for name in layout.OUTPUT_SHEETS:
        ws = parsed[name]
        assert quick[name] == (outputs_record._cells(ws, parsed.epoch), outputs_record._extras(ws))
    assert (3, 19, "s:checked & agreed <JB>") in quick[layout.RESULTS][0]
    assert (4, 20, "n:1234.5") in quick[layout.RESULTS][0]
    assert quick[layout.SUMMARY][1]["comments"] == 1
    assert quick[layout.SUMMARY][1]["orientation"] == "landscape"
    assert quick[layout.CHARTS][1]["charts"] == 3  # demand and capacity, queue, cumulative


def test_the_cache_sheet_libreoffice_saved_as_hidden_is_wzqs_and_kept_as_it_is():
    """LibreOffice saves a very hidden sheet as hidden, with a page setup of its own:
    the sheet is still wzq's cache (very hidden again), written in place, so nothing
    LibreOffice added to it is lost (which would send every run to a copy)."""
    book = openpyxl.Workbook()
    tables = [np.ones((4, 5), dtype=bool)]
    windows_cache.write_tables(book, "k" * 64, tables)
    ws = book[windows_cache.CACHE_SHEET]
    ws.sheet_state = "hidden"
    ws.page_setup.orientation = "portrait"
    windows_cache.write_tables(book, "j" * 64, tables)
    assert book[windows_cache.CACHE_SHEET] is ws and ws.sheet_state == "veryHidden"
    assert ws.page_setup.orientation == "portrait"
    assert windows_cache.read_tables(book, "j" * 64, 4) is not None
    assert windows_cache.read_tables(book, "k" * 64, 4) is None
