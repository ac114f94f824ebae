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
from wzq.io.jsonplan import plan_to_dict
from wzq.io.workbook import layout
from wzq.io.workbook.reader import book_from_bytes, read_plan
from wzq.io.workbook.run import run_workbook

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
