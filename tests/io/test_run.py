"""``wzq run``: the round trip through a filled template, user errors, preservation.

The workbooks are filled through their defined names and tables the way a user
would type them (:func:`workbook_helpers.fill_template`).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import zipfile
from pathlib import Path

import openpyxl
import pytest
from oletools.olevba import VBA_Parser
from openpyxl.comments import Comment
from openpyxl.styles import Font, PatternFill
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.datavalidation import DataValidation
from workbook_helpers import fill_template, named_cell, set_named

import wzq
from wzq import cli
from wzq.io.jsonplan import load_plan
from wzq.io.plans import demo_plan
from wzq.io.workbook import layout, outputs_record
from wzq.io.workbook import writer as w
from wzq.io.workbook.reader import read_plan
from wzq.io.workbook.run import run_workbook, write_demo_workbook, write_filled_workbook
from wzq.io.workbook.save import lock_file
from wzq.io.workbook.template import vba_project_bytes
from wzq.io.workbook.windows_cache import CACHE_SHEET
from wzq.present.tables import hourly_display

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
FENWICK = EXAMPLES / "fenwick_downs_weekend.json"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _results_table(path: Path) -> tuple[list[str], list[tuple]]:
    ws = openpyxl.load_workbook(path)[layout.RESULTS]
    rows = list(ws.iter_rows(min_row=w.RESULTS_HEADER_ROW, values_only=True))
    header = list(rows[0])
    return header, [r for r in rows[1:] if r[0] is not None]


@pytest.fixture(scope="module")
def filled(tmp_path_factory) -> dict[str, Path]:
    """Both example plans typed into fresh templates (not yet run)."""
    folder = tmp_path_factory.mktemp("filled")
    return {
        "fenwick": fill_template(load_plan(FENWICK), folder / "fenwick.xlsx"),
        "kestrel": fill_template(load_plan(KESTREL), folder / "kestrel.xlsm", macro=True),
    }


@pytest.mark.parametrize(("which", "json_path"), [("fenwick", FENWICK), ("kestrel", KESTREL)])
def test_round_trip_results_sheet_equals_analyse(which, json_path, filled, tmp_path, capsys):
    src = tmp_path / filled[which].name
    src.write_bytes(filled[which].read_bytes())
    assert cli.main(["run", str(src)]) == cli.EXIT_OK
    out = capsys.readouterr().out
    assert out.startswith(f"wrote the results to {src}")
    plan = load_plan(json_path)
    # the workbook holds the same plan as the JSON file ...
    assert w.input_fingerprint(read_plan(src)) == w.input_fingerprint(plan)
    # ... and its Results sheet shows what wzq.analyse() gives for it, rounded as shown
    result = wzq.analyse(plan)
    shown = hourly_display(result)
    header, body = _results_table(src)
    assert len(body) == len(shown)
    for col in shown.columns:
        got = [r[header.index(col)] for r in body]
        want = (
            [t.to_pydatetime() for t in result.hourly["hour_start"]]
            if col == "Hour"
            else shown[col].tolist()
        )
        assert got == want, col
    log = openpyxl.load_workbook(src)[layout.RUN_LOG]
    assert log["B5"].value == src.name
    assert log["B6"].value == w.input_fingerprint(plan)


def test_output_to_another_file_leaves_the_input_byte_identical(filled, tmp_path, capsys):
    src = tmp_path / "plan.xlsx"
    src.write_bytes(filled["fenwick"].read_bytes())
    before = _digest(src)
    out = tmp_path / "plan-results.xlsx"
    assert cli.main(["run", str(src), "-o", str(out)]) == 0
    assert _digest(src) == before
    assert layout.RESULTS not in openpyxl.load_workbook(src).sheetnames
    book = openpyxl.load_workbook(out)
    assert book.sheetnames[-len(layout.OUTPUT_SHEETS) :] == list(layout.OUTPUT_SHEETS)
    assert "Longest queue" in capsys.readouterr().out


def _user_error(args: list[str], capsys) -> list[str]:
    code = cli.main(args)
    captured = capsys.readouterr()
    assert code == cli.EXIT_INPUT
    assert "Traceback" not in captured.err
    lines = captured.err.strip().splitlines()
    assert lines[-1].startswith("wzq: ") and lines[-1].endswith("nothing was written")
    return lines[:-1]


def test_bad_inputs_list_every_problem_with_sheet_and_cell(filled, tmp_path, capsys):
    src = tmp_path / "bad.xlsx"
    src.write_bytes(filled["fenwick"].read_bytes())
    book = openpyxl.load_workbook(src)
    set_named(book, "site_lanes", None)
    set_named(book, "site_speed_limit", "fast")
    lanes_ref = named_cell(book, "site_lanes").coordinate
    book.save(src)
    before = _digest(src)
    lines = _user_error(["run", str(src)], capsys)
    assert len(lines) == 2
    assert lines[0].startswith(f"wzq: Site!{lanes_ref}: ")
    assert "'fast'" in lines[1] and lines[1].startswith("wzq: Site!")
    assert _digest(src) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.xlsx"]


def test_file_level_errors_exit_2_and_write_nothing(filled, tmp_path, capsys):
    src = tmp_path / "plan.xlsx"
    src.write_bytes(filled["fenwick"].read_bytes())
    before = _digest(src)
    (line,) = _user_error(["run", str(src), "-o", str(tmp_path / "out.xlsm")], capsys)
    assert "must be a .xlsx file like the input" in line
    (line,) = _user_error(["run", str(KESTREL)], capsys)
    assert "wzq show" in line
    (line,) = _user_error(["run", str(tmp_path / "missing.xlsx")], capsys)
    assert "no such file" in line
    junk = tmp_path / "junk.xlsx"
    junk.write_text("not a workbook")
    (line,) = _user_error(["run", str(junk)], capsys)
    assert "junk.xlsx" in line
    lock_file(src).write_bytes(b"")
    (line,) = _user_error(["run", str(src)], capsys)
    assert "is open in Excel; close it or use -o OTHER.xlsx" in line
    lock_file(src).unlink()
    assert _digest(src) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["junk.xlsx", "plan.xlsx"]


def test_content_that_cannot_be_kept_goes_to_a_copy(filled, tmp_path, capsys):
    """A workbook holding parts openpyxl drops on save (here an embedded object) is
    not written back into: the results go to a copy beside it (or to -o when asked)."""
    src = tmp_path / "embedded.xlsx"
    src.write_bytes(filled["fenwick"].read_bytes())
    with zipfile.ZipFile(src, "a") as z:
        z.writestr("xl/embeddings/oleObject1.bin", b"\0" * 64)
    before = _digest(src)
    assert cli.main(["run", str(src)]) == 0
    out = capsys.readouterr().out
    copy = tmp_path / "embedded (wzq results).xlsx"
    assert "warning: embedded.xlsx holds content wzq cannot keep" in out
    assert f"wrote the results to {copy}" in out
    assert _digest(src) == before
    n = len(layout.OUTPUT_SHEETS)
    assert openpyxl.load_workbook(copy).sheetnames[-n:] == list(layout.OUTPUT_SHEETS)
    other = tmp_path / "embedded-results.xlsx"
    assert cli.main(["run", str(src), "-o", str(other)]) == 0
    assert _digest(src) == before
    assert openpyxl.load_workbook(other).sheetnames[-n:] == list(layout.OUTPUT_SHEETS)


def test_a_users_own_results_sheet_is_refused(filled, tmp_path, capsys):
    src = tmp_path / "mine.xlsx"
    src.write_bytes(filled["fenwick"].read_bytes())
    book = openpyxl.load_workbook(src)
    book.create_sheet("Summary")["A1"] = "my summary"
    book.save(src)
    before = _digest(src)
    (line,) = _user_error(["run", str(src)], capsys)
    assert line.startswith("wzq: sheet 'Summary': this sheet of yours has the name of a sheet")
    assert _digest(src) == before


def test_running_twice_gives_the_same_workbook(filled, tmp_path):
    src = tmp_path / "twice.xlsx"
    src.write_bytes(filled["fenwick"].read_bytes())
    snapshots = []
    for stamp in ("2027-03-01T08:00:00Z", "2027-03-02T17:45:10Z"):
        run_workbook(src, run_time=stamp)
        book = openpyxl.load_workbook(src)
        assert book[layout.RUN_LOG][w.RUN_TIME_CELL].value == stamp
        sheets = {}
        for ws in book.worksheets:
            rows = []
            for row in ws.iter_rows(values_only=True):
                rows.append(
                    tuple(v.replace(stamp, "<time>") if isinstance(v, str) else v for v in row)
                )
            if ws.title == CACHE_SHEET:  # the record of the output sheets holds the stamp
                rows = [r[: outputs_record.COLUMN - 1] + r[outputs_record.COLUMN :] for r in rows]
            sheets[ws.title] = rows
        with zipfile.ZipFile(src) as z:
            charts = sorted(n for n in z.namelist() if n.startswith("xl/charts/"))
        snapshots.append((book.sheetnames, sheets, charts, sorted(book.defined_names)))
    assert snapshots[0] == snapshots[1]
    assert snapshots[0][0][-len(layout.OUTPUT_SHEETS) :] == list(layout.OUTPUT_SHEETS)
    assert len(snapshots[0][2]) == 4  # three on Charts, one on Closure windows


def test_rerunning_at_the_same_stamp_writes_the_same_package_parts(filled, tmp_path):
    """Byte for byte, once the workbook has been run (the first run adds wzq's cell
    styles to the workbook's style table, so its style numbers differ from later runs;
    the values are the same from the first run on, see the test above)."""
    src = tmp_path / "again.xlsm"
    src.write_bytes(filled["kestrel"].read_bytes())
    run_workbook(src, run_time="2027-03-01T08:00:00Z")
    parts = []
    for _ in range(2):
        run_workbook(src, run_time="2027-03-01T08:00:00Z")
        with zipfile.ZipFile(src) as z:
            parts.append({n: z.read(n) for n in z.namelist() if n != "docProps/core.xml"})
    assert parts[0].keys() == parts[1].keys()
    assert [n for n in parts[0] if parts[0][n] != parts[1][n]] == []


# --- preservation -----------------------------------------------------------------------


def _macro_text(path: Path) -> dict[str, str]:
    parser = VBA_Parser(str(path))
    try:
        return {name: code for _, _, name, code in parser.extract_macros()}
    finally:
        parser.close()


def _button_macros(path: Path) -> list[str]:
    """Macros that buttons (VML form controls) of the workbook run."""
    import re

    with zipfile.ZipFile(path) as z:
        vml = [z.read(n).decode("utf-8", "replace") for n in z.namelist() if n.endswith(".vml")]
    return [m for text in vml for m in re.findall(r"<x:FmlaMacro>\[?0?\]?!?([^<]*)<", text)]


def _input_snapshot(path: Path) -> dict:
    """Every cell of the input sheets: value, data type, number format, font, fill."""
    book = openpyxl.load_workbook(path, keep_vba=True)
    snap = {}
    for name in layout.INPUT_SHEETS:
        ws = book[name]
        for row in ws.iter_rows():
            for c in row:
                snap[(name, c.coordinate)] = (
                    c.value,
                    c.data_type,
                    c.number_format,
                    c.font.b,
                    c.fill.fgColor.rgb,
                )
    return snap


@pytest.mark.slow
def test_user_work_and_the_vba_project_survive_two_runs(filled, tmp_path):
    src = tmp_path / "kept.xlsm"
    src.write_bytes(filled["kestrel"].read_bytes())
    book = openpyxl.load_workbook(src, keep_vba=True)
    # an extra sheet of the user's with formulas (one reads wzq's Results sheet)
    mine = book.create_sheet("My checks", 1)
    mine["A1"] = "Speed limit x 2"
    mine["B1"] = "=site_speed_limit*2"
    mine["A2"] = "Longest queue read from the results"
    mine["B2"] = "=MAX(Results!I5:I76)"
    mine["A3"] = "=1+1"
    mine["A3"].data_type = "s"  # typed as text with a leading apostrophe
    mine["B1"].font = Font(italic=True, color="0000FF")
    mine["B1"].fill = PatternFill("solid", fgColor="CCFFCC")
    mine["B1"].number_format = "0.0"
    mine["A1"].comment = Comment("my own check", "designer")
    dv = DataValidation(type="whole", operator="between", formula1="1", formula2="9")
    mine.add_data_validation(dv)
    dv.add("C1:C5")
    book.defined_names["my_limit"] = DefinedName("my_limit", attr_text="'My checks'!$B$1")
    # formatting and a comment on an input cell
    lanes = named_cell(book, "site_lanes")
    lanes.font = Font(bold=True, color="FF0000")
    lanes.comment = Comment("checked on site", "designer")
    book.save(src)
    inputs_before = _input_snapshot(src)
    macros_before = _macro_text(src)
    names_before = {n: d.attr_text for n, d in openpyxl.load_workbook(src).defined_names.items()}
    validations_before = {
        ws.title: sorted(str(v.sqref) for v in ws.data_validations.dataValidation)
        for ws in openpyxl.load_workbook(src).worksheets
    }
    assert _button_macros(src) == [layout.BUTTON_MACRO]

    for _ in range(2):
        run_workbook(src)

    with zipfile.ZipFile(src) as z:
        assert z.read("xl/vbaProject.bin") == vba_project_bytes()
        ctype = z.read("[Content_Types].xml").decode()
    assert "application/vnd.ms-excel.sheet.macroEnabled.main+xml" in ctype
    assert _button_macros(src) == [layout.BUTTON_MACRO]  # the Start sheet's button
    macros_after = _macro_text(src)
    assert macros_after == macros_before
    assert "Sub RecalculatePlan()" in macros_after["WzqButton.bas"]

    book = openpyxl.load_workbook(src, keep_vba=True)
    assert book.sheetnames == [
        layout.START,
        "My checks",
        *layout.INPUT_SHEETS[1:],
        CACHE_SHEET,  # the closure-window search, very hidden, before the outputs
        *layout.OUTPUT_SHEETS,
    ]
    assert book[CACHE_SHEET].sheet_state == "veryHidden"
    mine = book["My checks"]
    assert mine["B1"].value == "=site_speed_limit*2"
    assert mine["B2"].value == "=MAX(Results!I5:I76)"
    assert mine["A3"].value == "=1+1" and mine["A3"].data_type == "s"
    assert mine["B1"].font.i and mine["B1"].font.color.rgb == "000000FF"
    assert mine["B1"].fill.fgColor.rgb == "00CCFFCC"
    assert mine["B1"].number_format == "0.0"
    assert mine["A1"].comment.text == "my own check"
    lanes = named_cell(book, "site_lanes")
    assert lanes.font.b and lanes.comment.text == "checked on site"
    names_after = {n: d.attr_text for n, d in book.defined_names.items()}
    assert names_after == {**names_before, layout.MARKER_NAME: names_after[layout.MARKER_NAME]}
    assert names_after["my_limit"] == "'My checks'!$B$1"
    validations_after = {
        ws.title: sorted(str(v.sqref) for v in ws.data_validations.dataValidation)
        for ws in book.worksheets
        if ws.title not in (*layout.OUTPUT_SHEETS, CACHE_SHEET)
    }
    assert validations_after == validations_before
    assert validations_after["My checks"] == ["C1:C5"]
    assert _input_snapshot(src) == inputs_before
    # and the plan still reads the same after two runs
    assert w.input_fingerprint(read_plan(src)) == w.input_fingerprint(load_plan(KESTREL))


# --- text that looks like a formula -----------------------------------------------------

TYPED = {
    "meta_title": '=HYPERLINK("http://example.invalid","click")',
    "meta_project": "+44 project",
    "meta_route": "-Kestrel Ridge Parkway",
    "meta_notes": "@risk: invented data",
    "site_name": "=Kestrel Ridge",
}


def test_text_typed_with_a_leading_formula_sign_stays_text(filled, tmp_path):
    src = tmp_path / "signs.xlsx"
    src.write_bytes(filled["fenwick"].read_bytes())
    book = openpyxl.load_workbook(src)
    for name, text in TYPED.items():
        cell = set_named(book, name, text)
        cell.data_type = "s"  # typed as text (Excel: a leading apostrophe)
    book.save(src)
    plan = read_plan(src)
    assert plan.meta.title == TYPED["meta_title"] and plan.site.name == TYPED["site_name"]
    run_workbook(src)
    with zipfile.ZipFile(src) as z:
        parts = {n: z.read(n).decode() for n in z.namelist() if n.startswith("xl/worksheets/")}
    formulas = [f for xml in parts.values() for f in _formula_texts(xml)]
    for text in TYPED.values():
        body = text.lstrip("=+-@")
        assert not any(body in f for f in formulas), text
    back = openpyxl.load_workbook(src)
    seen: dict[str, list[str]] = {}
    for ws in back.worksheets:
        for row in ws.iter_rows():
            for c in row:
                for text in TYPED.values():
                    if isinstance(c.value, str) and c.value.startswith(text):
                        # e.g. the site name followed by the direction
                        assert c.data_type == "s", (ws.title, c.coordinate)
                        seen.setdefault(text, []).append(ws.title)
    for text in TYPED.values():
        assert any(t in layout.OUTPUT_SHEETS for t in seen[text]), text
        assert any(t in layout.INPUT_SHEETS for t in seen[text]), text


def _formula_texts(xml: str) -> list[str]:
    import re

    return re.findall(r"<f(?:\s[^>]*)?>([^<]*)</f>", xml)


def test_a_closure_note_typed_as_a_formula_is_not_evaluated(tmp_path):
    plan = load_plan(KESTREL)
    note = "=cmd|' /C calc'!A0"
    plan = dataclasses.replace(
        plan, closures=(dataclasses.replace(plan.closures[0], note=note), plan.closures[1])
    )
    src = fill_template(plan, tmp_path / "note.xlsx")
    book = openpyxl.load_workbook(src)
    ws = book[layout.CLOSURES]
    cell = next(c for row in ws.iter_rows() for c in row if c.value == note)
    cell.data_type = "s"
    book.save(src)
    run_workbook(src)
    with zipfile.ZipFile(src) as z:
        xml = "".join(
            z.read(n).decode() for n in z.namelist() if n.startswith("xl/worksheets/sheet")
        )
    assert not any("calc" in f for f in _formula_texts(xml))
    permit = openpyxl.load_workbook(src)[layout.PERMIT_TABLE]
    texts = [c.value for row in permit.iter_rows(max_col=2) for c in row]
    assert any(isinstance(t, str) and t.endswith(note) for t in texts)


# --- demo workbook ----------------------------------------------------------------------


@pytest.mark.slow
def test_demo_workbook_is_the_shipped_example_with_its_results(tmp_path):
    path = write_demo_workbook(tmp_path)
    assert path.parent == tmp_path and path.suffix == ".xlsx"
    assert w.input_fingerprint(read_plan(path)) == w.input_fingerprint(demo_plan())
    book = openpyxl.load_workbook(path)
    assert book.sheetnames[-len(layout.OUTPUT_SHEETS) :] == list(layout.OUTPUT_SHEETS)
    log = {r[0]: r[1] for r in book[layout.RUN_LOG].iter_rows(min_row=3, values_only=True)}
    assert log["Hours analysed"] == 72
    assert log["Source file"] == path.name
    before = path.read_bytes()
    with pytest.raises(wzq.PlanError):
        write_demo_workbook(path)  # a file name given: never overwritten
    again = write_demo_workbook(tmp_path)  # a folder: the next free name
    assert again.name == "wzq-demo-kestrel-ridge-2.xlsx" and path.read_bytes() == before
    named = write_demo_workbook(tmp_path / "mine.xlsx")
    assert named == tmp_path / "mine.xlsx" and named.exists()
    assert dt.datetime(2027, 5, 3, 21) in [
        r[0]
        for r in book[layout.RESULTS].iter_rows(min_row=w.RESULTS_HEADER_ROW + 1, values_only=True)
    ]


def test_a_metric_plan_typed_into_a_fresh_template_reads_back_the_same(tmp_path):
    plan = load_plan(FENWICK)
    path = tmp_path / "fenwick.xlsx"
    result = write_filled_workbook(plan, path, run_time="2027-01-01T00:00:00Z")
    assert w.input_fingerprint(read_plan(path)) == w.input_fingerprint(plan)
    assert len(result.hourly) == 48
    with pytest.raises(wzq.PlanError):
        write_filled_workbook(plan, tmp_path / "fenwick.xlsm")  # macro=False needs .xlsx


@pytest.mark.parametrize("name", ["kestrel_ridge_weeknight", "fenwick_downs_weekend"])
def test_committed_example_workbooks_hold_their_json_plans(name):
    """examples/build_examples.py typed each JSON plan into a workbook and ran it."""
    path = EXAMPLES / f"{name}.xlsx"
    fingerprint = w.input_fingerprint(load_plan(EXAMPLES / f"{name}.json"))
    assert w.input_fingerprint(read_plan(path)) == fingerprint
    book = openpyxl.load_workbook(path)
    assert book.sheetnames[-len(layout.OUTPUT_SHEETS) :] == list(layout.OUTPUT_SHEETS)
    assert book[layout.RUN_LOG]["B6"].value == fingerprint
