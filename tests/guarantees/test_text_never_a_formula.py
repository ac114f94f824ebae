"""No formula injection: text from any input that starts with ``=``, ``+``, ``-`` or ``@`` is
written as text in every output wzq makes.

Outputs checked: every sheet ``wzq run`` writes into a workbook (read back from the
saved XML, so nothing can hide in openpyxl's view), the printed PDF report (the
text appears literally), and the bulk summary workbook and its CSV.

The leading characters that make a spreadsheet evaluate a cell, and the CSV
defence of a leading single quote, follow the OWASP "CSV Injection" guidance
(owasp.org, community page, recalled from memory). All plans are invented
(Kestrel Ridge Parkway near Amberfold, fictional).
"""

from __future__ import annotations

import csv
import dataclasses
import json
import re
import zipfile
from pathlib import Path

import openpyxl
import pytest
from openpyxl.workbook import Workbook
from pypdf import PdfReader
from workbook_helpers import fill_template

import wzq
from wzq.io.batch.runner import run_batch
from wzq.io.jsonplan import load_plan, plan_to_dict
from wzq.io.report import write_report
from wzq.io.workbook import layout
from wzq.io.workbook.run import run_workbook
from wzq.io.workbook.writer import CELL_TEXT_LIMIT, put_text

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"

#: Text a hostile or careless input may hold, one per leading character.
PAYLOADS = {
    "title": '=HYPERLINK("http://example.invalid/x","open me")',
    "project": "+1+cmd|' /C calc'!A0",
    "route": "-2+3+cmd|' /C notepad'!A0",
    "prepared_by": "@SUM(1+1)*cmd|' /C calc'!A0",
    "checked_by": "=1+1",
    "notes": "+44 20 7946 0000 is a made-up number",
    "site": "=Kestrel Ridge Parkway",
    "direction": "-northbound",
    "note": "@risk: joint saw-cut",
}


def hostile_plan() -> wzq.Plan:
    plan = load_plan(KESTREL)
    meta = dataclasses.replace(
        plan.meta,
        title=PAYLOADS["title"],
        project=PAYLOADS["project"],
        route=PAYLOADS["route"],
        prepared_by=PAYLOADS["prepared_by"],
        checked_by=PAYLOADS["checked_by"],
        notes=PAYLOADS["notes"],
    )
    site = dataclasses.replace(plan.site, name=PAYLOADS["site"], direction=PAYLOADS["direction"])
    first = dataclasses.replace(plan.closures[0], note=PAYLOADS["note"])
    return dataclasses.replace(plan, meta=meta, site=site, closures=(first, *plan.closures[1:]))


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _formulas(xml: str) -> list[str]:
    return re.findall(r"<(?:\w+:)?f(?:\s[^>]*)?>([^<]*)</(?:\w+:)?f>", xml)


def _as_text_in_sheets(book: Workbook, sheets: list[str], payload: str) -> list[str]:
    """Where a cell's text starts with ``payload``; each must be a text cell."""
    found = []
    for name in sheets:
        for row in book[name].iter_rows():
            for c in row:
                if isinstance(c.value, str) and c.value.startswith(payload):
                    assert c.data_type == "s", (name, c.coordinate, c.value)
                    found.append(name)
    return found


@pytest.fixture(scope="module")
def hostile_workbook(tmp_path_factory) -> Path:
    """The hostile plan typed into a template (user text typed as text) and run."""
    folder = tmp_path_factory.mktemp("inject")
    src = fill_template(hostile_plan(), folder / "=plan.xlsx")
    book = openpyxl.load_workbook(src)
    for ws in book.worksheets:  # typed with a leading apostrophe: text, not a formula
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, str) and c.value.startswith(("=", "+", "-", "@")):
                    c.data_type = "s"
    book.save(src)
    run_workbook(src, run_time="2027-03-01T08:00:00Z")
    return src


@pytest.mark.slow
def test_every_output_sheet_holds_user_text_as_text(hostile_workbook):
    with zipfile.ZipFile(hostile_workbook) as z:
        xml = {
            n: z.read(n).decode("utf-8")
            for n in z.namelist()
            if n.startswith("xl/worksheets/sheet")
        }
    formulas = [f for text in xml.values() for f in _formulas(text)]
    for payload in PAYLOADS.values():
        body = payload.lstrip("=+-@")[:12]
        assert not any(body in f for f in formulas), payload
    book = openpyxl.load_workbook(hostile_workbook)
    outputs = [s for s in layout.OUTPUT_SHEETS if s in book.sheetnames]
    assert outputs == list(layout.OUTPUT_SHEETS)
    # wzq writes no formula into its own sheets at all
    for name in outputs:
        assert not [c.coordinate for r in book[name].iter_rows() for c in r if c.data_type == "f"]
    shown = {p: _as_text_in_sheets(book, outputs, p) for p in PAYLOADS.values()}
    # the title, site and closure note are shown on the output sheets ...
    for key in ("title", "site", "note", "project", "route", "prepared_by", "checked_by"):
        assert shown[PAYLOADS[key]], key
    # ... and so is the file name, which starts with '=' too
    log = {r[0]: r[1] for r in book[layout.RUN_LOG].iter_rows(min_row=3, values_only=True)}
    assert log["Source file"] == "=plan.xlsx"
    assert book[layout.RUN_LOG]["B5"].data_type == "s"


def test_put_text_makes_any_string_a_text_cell():
    ws = openpyxl.Workbook().active
    for i, text in enumerate(["=1+1", "+1", "-1", "@A1", "\t=1+1", "=", "  =x"], start=1):
        cell = put_text(ws, i, 1, text)
        assert cell.data_type == "s" and cell.value == text
    cell = put_text(ws, 10, 1, "=" + "x" * 40_000)  # over a cell's limit: cut, still text
    assert len(cell.value) == CELL_TEXT_LIMIT and cell.value.endswith("…")
    assert cell.data_type == "s"
    cell = put_text(ws, 11, 1, "=bell\x07 and nul\x00")  # characters XML cannot carry
    assert cell.value == "=bell and nul" and cell.data_type == "s"
    assert put_text(ws, 12, 1, 42.5).data_type == "n"


def test_the_report_prints_user_text_literally(tmp_path):
    plan = hostile_plan()
    plan = dataclasses.replace(
        plan, meta=dataclasses.replace(plan.meta, checked_by="=<b>bold</b> & <i>more")
    )
    pdf = write_report(wzq.analyse(plan), tmp_path / "permit.pdf", "letter", source="=plan.xlsx")
    text = " ".join(page.extract_text() for page in PdfReader(pdf).pages)
    flat = " ".join(text.split())
    for key in ("title", "project", "prepared_by", "site"):
        assert " ".join(PAYLOADS[key].split()) in flat, key
    assert "=<b>bold</b> & <i>more" in flat  # markup shown, not obeyed


def test_the_bulk_summary_and_csv_hold_user_text_as_text(tmp_path):
    folder = tmp_path / "plans"
    folder.mkdir()
    data = plan_to_dict(hostile_plan())
    (folder / "=good.json").write_text(json.dumps(data), encoding="utf-8")
    bad = json.loads(json.dumps(data))
    bad["site"]["terrain"] = "=HYPERLINK(0)"  # refused: the message quotes it
    (folder / "+bad.json").write_text(json.dumps(bad), encoding="utf-8")
    result = run_batch(folder, workers=1)
    book = openpyxl.load_workbook(result.summary)
    with zipfile.ZipFile(result.summary) as z:
        formulas = [
            f
            for n in z.namelist()
            if n.startswith("xl/worksheets/")
            for f in _formulas(z.read(n).decode("utf-8"))
        ]
    assert not any("HYPERLINK" in f or "cmd" in f for f in formulas)
    texts = [
        (ws.title, c)
        for ws in book.worksheets
        for row in ws.iter_rows()
        for c in row
        if isinstance(c.value, str) and c.value[:1] in "=+-@"
    ]
    assert texts, "the summary shows none of the user's text"
    for sheet, c in texts:
        assert c.data_type == "s", (sheet, c.coordinate, c.value)
    shown = {c.value for _, c in texts}
    assert "=good.json" in shown and "+bad.json" in shown
    assert PAYLOADS["site"] in shown
    quoting = [
        c
        for ws in book.worksheets
        for row in ws.iter_rows()
        for c in row
        if isinstance(c.value, str) and "=HYPERLINK(0)" in c.value
    ]
    assert quoting and all(c.data_type == "s" for c in quoting)  # the refusal quotes it
    with result.csv.open(newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    fields = [v for row in rows[1:] for v in row if not _is_number(v)]
    assert not [v for v in fields if v[:1] in ("=", "+", "-", "@")]
    assert "'=good.json" in fields and "'" + PAYLOADS["site"] in fields
