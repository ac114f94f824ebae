"""wzq's own output sheets are replaced without being parsed, and read-only commands
never parse them (:mod:`wzq.io.workbook.reader.skip`).

The proof that a sheet is not parsed: its part is made unreadable (XML openpyxl
cannot load), and the commands still read the plan and run it, writing fresh output
sheets in the same places.
"""

from __future__ import annotations

import io
import re
import shutil
import zipfile
from pathlib import Path

import openpyxl
import pytest

from wzq import cli
from wzq.engine.plan import PlanError
from wzq.io.jsonplan import plan_to_dict
from wzq.io.workbook import layout
from wzq.io.workbook.reader import book_from_bytes, load_book, read_plan
from wzq.io.workbook.run import run_workbook
from wzq.io.workbook.safety import output_sheet_parts, read_checked

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "kestrel_ridge_weeknight.xlsx"
RUN_TIME = "2027-01-01T00:00:00Z"


def _sheet_parts(data: bytes) -> dict[str, str]:
    """Sheet name -> its part in the package (from the workbook's relationships)."""
    with zipfile.ZipFile(io.BytesIO(data)) as zf:
        book = zf.read("xl/workbook.xml").decode()
        rels = zf.read("xl/_rels/workbook.xml.rels").decode()
    targets = dict(re.findall(r'<Relationship[^>]*Id="([^"]+)"[^>]*Target="([^"]+)"', rels))
    targets |= {k: v for v, k in re.findall(r'Target="([^"]+)"[^>]*Id="([^"]+)"', rels)}
    out = {}
    for name, rid in re.findall(r'<sheet [^>]*name="([^"]+)"[^>]*r:id="([^"]+)"', book):
        target = targets[rid].lstrip("/")
        out[name] = target if target.startswith("xl/") else f"xl/{target}"
    return out


def _with_part(src: Path, dst: Path, part: str, content: bytes) -> Path:
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            zout.writestr(info, content if info.filename == part else zin.read(info.filename))
    return dst


#: Well-formed XML that openpyxl cannot load as a sheet (a cell value that is no number).
UNREADABLE = (
    b'<?xml version="1.0" encoding="UTF-8"?>'
    b'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
    b'<sheetData><row r="1"><c r="A1" t="n"><v>not a number</v></c></row></sheetData>'
    b"</worksheet>"
)


@pytest.fixture
def broken_results(tmp_path: Path) -> Path:
    """The example workbook (with results) whose Results sheet openpyxl cannot parse."""
    part = _sheet_parts(EXAMPLE.read_bytes())[layout.RESULTS]
    return _with_part(EXAMPLE, tmp_path / "plan.xlsx", part, UNREADABLE)


def test_the_unreadable_part_is_unreadable_to_openpyxl(broken_results):
    with pytest.raises(ValueError):
        openpyxl.load_workbook(broken_results)


def test_stand_ins_keep_the_order_and_state_of_the_sheets():
    data = EXAMPLE.read_bytes()
    full = book_from_bytes(data, EXAMPLE)
    skipped = book_from_bytes(data, EXAMPLE, skip_outputs=True)
    assert skipped.sheetnames == full.sheetnames
    assert [ws.sheet_state for ws in skipped.worksheets] == [
        ws.sheet_state for ws in full.worksheets
    ]
    assert skipped.active.title == full.active.title
    for name in layout.OUTPUT_SHEETS:
        assert skipped[name].max_row == 1 and skipped[name]["A1"].value is None
        assert full[name].max_row > 1  # the example holds results
    for name in (layout.SITE, layout.DEMAND, layout.CLOSURES):
        assert [r for r in skipped[name].iter_rows(values_only=True)] == [
            r for r in full[name].iter_rows(values_only=True)
        ]
    assert set(skipped.defined_names) == set(full.defined_names)


def test_read_only_commands_do_not_parse_the_output_sheets(broken_results, capsys):
    assert plan_to_dict(read_plan(broken_results)) == plan_to_dict(read_plan(EXAMPLE))
    assert cli.main(["check", str(broken_results)]) == 0
    assert cli.main(["show", str(broken_results)]) == 0
    assert cli.main(["windows", str(broken_results)]) == 0
    capsys.readouterr()


@pytest.mark.slow  # a whole report
def test_the_report_does_not_parse_the_output_sheets(broken_results, tmp_path, capsys):
    out = tmp_path / "report.pdf"
    assert cli.main(["report", str(broken_results), "-o", str(out)]) == 0
    assert out.read_bytes().startswith(b"%PDF")
    capsys.readouterr()


def test_a_run_replaces_an_output_sheet_it_never_parsed(broken_results, tmp_path):
    (tmp_path / "again").mkdir()
    again = shutil.copy(EXAMPLE, tmp_path / "again" / "plan.xlsx")  # same name, same Run log
    run_workbook(broken_results, run_time=RUN_TIME)
    run_workbook(again, run_time=RUN_TIME)
    ran, ref = openpyxl.load_workbook(broken_results), openpyxl.load_workbook(again)
    assert ran.sheetnames == ref.sheetnames
    for name in layout.OUTPUT_SHEETS:
        cells = [c.value for row in ran[name].iter_rows() for c in row]
        assert cells == [c.value for row in ref[name].iter_rows() for c in row]
    assert ran[layout.RESULTS]["A1"].value != "not a number"


def test_a_sheet_of_the_users_with_an_output_name_is_still_read_and_refused(tmp_path):
    book = openpyxl.load_workbook(EXAMPLE)
    del book.defined_names[layout.MARKER_NAME]  # as if wzq never wrote these sheets
    path = tmp_path / "mine.xlsx"
    book.save(path)
    skipped = book_from_bytes(path.read_bytes(), path, skip_outputs=True)
    assert skipped[layout.RESULTS].max_row > 1  # parsed: it is the user's
    assert cli.main(["check", str(path)]) == 2


# --- the pre-parse checks leave out exactly the parts that are never parsed -----------------

#: A sheet part that declares an XML entity: refused wherever it is parsed or scanned.
ENTITY = (
    b'<?xml version="1.0" encoding="UTF-8"?><!DOCTYPE worksheet [<!ENTITY e "x">]>'
    b'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
    b"<sheetData/></worksheet>"
)


def _parts_left_out(data: bytes) -> set[str]:
    with zipfile.ZipFile(io.BytesIO(data)) as zf:
        return output_sheet_parts(zf)


def test_the_parts_left_out_are_the_output_sheets_the_marker_names():
    data = EXAMPLE.read_bytes()
    parts = _sheet_parts(data)
    assert _parts_left_out(data) == {parts[name] for name in layout.OUTPUT_SHEETS}
    assert parts[layout.SITE] not in _parts_left_out(data)


def test_a_part_another_relationship_names_is_checked_after_all(tmp_path):
    data = EXAMPLE.read_bytes()
    results = _sheet_parts(data)[layout.RESULTS]
    with zipfile.ZipFile(io.BytesIO(data)) as zf:
        rels = next(n for n in zf.namelist() if n.startswith("xl/worksheets/_rels/"))
        text = zf.read(rels)
    extra = b'<Relationship Id="rIdX" Type="x" Target="%s"/>' % results.rsplit("/")[-1].encode()
    odd = _with_part(
        EXAMPLE, tmp_path / "odd.xlsx", rels, text.replace(b"</Rel", extra + b"</Rel", 1)
    )
    left_out = _parts_left_out(odd.read_bytes())
    assert results not in left_out and left_out  # the others are still left out


def test_a_hostile_output_part_is_never_opened_by_the_commands_that_skip_it(tmp_path):
    part = _sheet_parts(EXAMPLE.read_bytes())[layout.RESULTS]
    path = _with_part(EXAMPLE, tmp_path / "plan.xlsx", part, ENTITY)
    with pytest.raises(PlanError, match="entities"):
        read_checked(path)  # scanned in full: refused
    with pytest.raises(PlanError, match="entities"):
        load_book(path)  # parsed in full: refused
    read_checked(path, skip_outputs=True)  # left out: neither inflated nor parsed
    assert plan_to_dict(read_plan(path)) == plan_to_dict(read_plan(EXAMPLE))
    run_workbook(path, run_time=RUN_TIME)  # replaced, never parsed
    assert b"ENTITY" not in zipfile.ZipFile(path).read(part)


def test_a_hostile_input_part_is_still_refused_on_the_ways_that_skip_outputs(tmp_path):
    part = _sheet_parts(EXAMPLE.read_bytes())[layout.SITE]
    path = _with_part(EXAMPLE, tmp_path / "plan.xlsx", part, ENTITY)
    before = path.read_bytes()
    for way in (lambda: read_checked(path, skip_outputs=True), lambda: read_plan(path)):
        with pytest.raises(PlanError, match="entities"):
            way()
    with pytest.raises(PlanError, match="entities"):
        run_workbook(path, run_time=RUN_TIME)
    assert path.read_bytes() == before


def test_a_user_sheet_with_an_output_name_is_scanned(tmp_path):
    book = openpyxl.load_workbook(EXAMPLE)
    del book.defined_names[layout.MARKER_NAME]  # as if wzq never wrote these sheets
    plain = tmp_path / "mine.xlsx"
    book.save(plain)
    assert _parts_left_out(plain.read_bytes()) == set()
    part = _sheet_parts(plain.read_bytes())[layout.RESULTS]
    path = _with_part(plain, tmp_path / "hostile.xlsx", part, ENTITY)
    with pytest.raises(PlanError, match="entities"):
        read_checked(path, skip_outputs=True)
