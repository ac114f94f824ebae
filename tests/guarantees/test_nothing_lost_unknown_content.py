"""Nothing a workbook made in Excel holds is dropped without a copy (issue 15, case 6).

Each workbook of the content corpus is the wzq template with the invented
Kestrel Ridge Parkway plan typed in, plus one feature on a sheet of the
user's own, all written by XlsxWriter, which writes each feature the way
Excel does (its XML mirrors Excel's files); the sensitivity label, which
XlsxWriter does not write, is added as Excel stores it (a ``docMetadata``
part, from memory of Excel's files). openpyxl drops every feature of the
issue when it saves, so ``wzq run`` must leave such a workbook byte-identical
and put the results in a copy, saying what would have been lost, even with
wzq's hand list of known losses switched off (the package is compared before
and after the save). Features openpyxl keeps must survive two runs in place,
byte for byte.
"""

from __future__ import annotations

import hashlib
import io
import re
import shutil
import subprocess
import zipfile
from collections.abc import Callable
from pathlib import Path

import pytest
import xlsxwriter
from PIL import Image
from workbook_helpers import closure_row, demand_rows, plan_values
from xlsxwriter.utility import xl_cell_to_rowcol

from wzq.io.jsonplan import load_plan
from wzq.io.workbook import safety
from wzq.io.workbook.run import run_to
from wzq.io.workbook.template import build_template

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

ROOT = Path(__file__).resolve().parents[2]
KESTREL = ROOT / "examples" / "kestrel_ridge_weeknight.json"
MINE = "My notes"
STAMP = "2027-03-01T08:00:00Z"


def _png(colour: tuple[int, int, int]) -> bytes:
    out = io.BytesIO()
    Image.new("RGB", (12, 8), colour).save(out, "PNG")
    return out.getvalue()


# --- typing the plan with XlsxWriter ---------------------------------------------------------


def _write(wb: xlsxwriter.Workbook, ws, row: int, col: int, value) -> None:
    """Type a value into a cell, keeping the template's look of that cell."""
    fmt = None
    if isinstance(value, tuple):
        value, number_format = value
        fmt = wb.add_format({"num_format": number_format})
    else:
        old = ws.table.get(row, {}).get(col)
        fmt = getattr(old, "format", None)
    if value is None:
        ws.write_blank(row, col, None, fmt)
    elif isinstance(value, str):
        ws.write_string(row, col, value, fmt)
    elif hasattr(value, "year") or hasattr(value, "hour"):
        ws.write_datetime(row, col, value, fmt)
    else:
        ws.write_number(row, col, value, fmt)


def type_plan(wb: xlsxwriter.Workbook, plan) -> None:
    """Type ``plan`` into the template XlsxWriter is writing, as a user types it."""
    sheets = {ws.get_name(): ws for ws in wb.worksheets()}
    names = {n: f for n, _, f, _ in wb.defined_names}
    for name, value in plan_values(plan).items():
        sheet, cell = names[name].lstrip("=").rsplit("!", 1)
        ws = sheets[sheet.strip("'")]
        _write(wb, ws, *xl_cell_to_rowcol(cell.replace("$", "")), value)
    for table, rows in (
        ("DemandTable", demand_rows(plan)),
        ("ClosureTable", [closure_row(c) for c in plan.closures]),
    ):
        ws, t = next((ws, t) for ws in sheets.values() for t in ws.tables if t["name"] == table)
        top, left = xl_cell_to_rowcol(t["range"].split(":")[0])
        headers = [c["name"] for c in t["columns"]]
        for i, row in enumerate(rows, start=1):
            for header, value in row.items():
                _write(wb, ws, top + i, left + headers.index(header), value)


def build(path: Path, feature: Callable[[xlsxwriter.Workbook], None]) -> Path:
    """The filled template with ``feature`` added, all in one XlsxWriter save."""
    plan = load_plan(KESTREL)
    real = xlsxwriter.Workbook.close

    def close(self):
        type_plan(self, plan)
        feature(self)
        return real(self)

    xlsxwriter.Workbook.close = close
    try:
        build_template(path, macro=path.suffix == ".xlsm")
    finally:
        xlsxwriter.Workbook.close = real
    return path


# --- one feature per workbook ----------------------------------------------------------------


def mine(wb: xlsxwriter.Workbook):
    ws = wb.add_worksheet(MINE)
    ws.write_string("A1", "Site diary")
    return ws


def header_picture(wb) -> None:
    mine(wb).set_header(
        "&L&G&CSite diary",
        {"image_left": "logo.png", "image_data_left": io.BytesIO(_png((30, 90, 60)))},
    )


def background_picture(wb) -> None:
    mine(wb).set_background(io.BytesIO(_png((240, 240, 200))))


def checkboxes_in_cells(wb) -> None:
    ws = mine(wb)
    ws.insert_checkbox("B2", True)
    ws.insert_checkbox("B3", False)


def comment_shown(wb) -> None:
    mine(wb).write_comment("A1", "Checked on site", {"visible": True})


def comment_size_and_colour(wb) -> None:
    mine(wb).write_comment("A1", "Checked on site", {"x_scale": 2, "color": "#C6EFCE"})


def dynamic_array_formula(wb) -> None:
    ws = mine(wb)
    for r, v in enumerate([3, 1, 2], start=1):
        ws.write_number(r, 0, v)
    ws.write_dynamic_array_formula("C2:C4", "=_xlfn._xlws.SORT(A2:A4)", None, 1)


def ignored_errors(wb) -> None:
    ws = mine(wb)
    ws.write_string("B2", "0042")
    ws.ignore_errors({"number_stored_as_text": "B2"})


def sensitivity_label(wb) -> None:
    mine(wb)  # the label itself is added after the save (see LABEL)


LABEL = {  # how Excel stores a sensitivity label (from memory of its files; invented ids)
    "docMetadata/LabelInfo.xml": (
        b'<?xml version="1.0" encoding="utf-8" standalone="yes"?>\n<clbl:labelList '
        b'xmlns:clbl="http://schemas.microsoft.com/office/2020/mipLabelMetadata"><clbl:label '
        b'id="{6f1a2b3c-0000-4000-8000-000000000001}" enabled="1" method="Standard" '
        b'siteId="{00000000-0000-4000-8000-0000000000aa}" removed="0"/></clbl:labelList>'
    ),
    "type": b"application/vnd.ms-office.classificationlabels+xml",
    "rel": b"http://schemas.microsoft.com/office/2020/02/relationships/classificationlabels",
}


def add_label(path: Path) -> None:
    with zipfile.ZipFile(path) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    parts["docMetadata/LabelInfo.xml"] = LABEL["docMetadata/LabelInfo.xml"]
    parts["[Content_Types].xml"] = parts["[Content_Types].xml"].replace(
        b"</Types>",
        b'<Override PartName="/docMetadata/LabelInfo.xml" ContentType="%s"/></Types>'
        % LABEL["type"],
    )
    parts["_rels/.rels"] = parts["_rels/.rels"].replace(
        b"</Relationships>",
        b'<Relationship Id="rId99" Type="%s" Target="docMetadata/LabelInfo.xml"/>'
        b"</Relationships>" % LABEL["rel"],
    )
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for n, data in parts.items():
            z.writestr(n, data)


#: feature -> words the copy's note must hold (what would have been lost)
DROPPED: dict[Callable, str] = {
    header_picture: "a picture in the header or footer",
    background_picture: "background picture",
    checkboxes_in_cells: "checkboxes in cells",
    sensitivity_label: "the sensitivity label",
    comment_shown: "a comment shown on the sheet (it would be hidden)",
    comment_size_and_colour: "the size and place of comment boxes",
    dynamic_array_formula: "dynamic-array formulas",
    ignored_errors: "error checks switched off",
}


def picture(wb) -> None:
    mine(wb).insert_image("D2", "site.png", {"image_data": io.BytesIO(_png((200, 60, 40)))})


def dropdown_list(wb) -> None:
    mine(wb).data_validation("B2:B9", {"validate": "list", "source": ["cones", "barrier"]})


def highlighted_cells(wb) -> None:
    fill = wb.add_format({"bg_color": "#F4CCCC"})
    mine(wb).conditional_format(
        "B2:B9", {"type": "cell", "criteria": ">", "value": 6, "format": fill}
    )


def link_to_a_web_page(wb) -> None:
    mine(wb).write_url("A3", "https://example.invalid/site-diary", string="diary")


#: feature -> the bytes (a regular expression over the sheet's XML, or a picture) that
#: must survive two runs in place
KEPT: dict[Callable, bytes] = {
    picture: rb"media",
    dropdown_list: rb'<formula1>"cones,barrier"</formula1>',
    highlighted_cells: rb'operator="greaterThan"[^>]*>\s*<formula>6</formula>',
    link_to_a_web_page: rb'Target="https://example\.invalid/site-diary"',
}


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _package_text(path: Path) -> bytes:
    with zipfile.ZipFile(path) as z:
        return b"\n".join(n.encode() + b"\n" + z.read(n) for n in sorted(z.namelist()))


#: every feature in a workbook without macros, and in a macro workbook those that openpyxl
#: handles differently there (it keeps a macro workbook's legacy drawing part)
CASES = [(f, ".xlsx") for f in DROPPED] + [(f, ".xlsm") for f in (header_picture, comment_shown)]


@pytest.mark.parametrize(("feature", "suffix"), CASES, ids=[f"{f.__name__}{s}" for f, s in CASES])
def test_case6_content_openpyxl_drops_sends_the_results_to_a_copy(
    feature, suffix, tmp_path, monkeypatch
) -> None:
    src = build(tmp_path / f"plan{suffix}", feature)
    if feature is sensitivity_label:
        add_label(src)
    original = _digest(src)
    # wzq's hand list of known losses is switched off: the comparison of the package before
    # and after the save must find the loss by itself
    monkeypatch.setattr(safety, "_unkept_by_name", lambda name: None)
    monkeypatch.setattr(safety, "_unkept_from_scan", lambda name, scan: [])
    outcome = run_to(src, run_time=STAMP)
    assert outcome.copied and outcome.target == tmp_path / f"plan (wzq results){suffix}"
    assert _digest(src) == original  # byte-identical
    (note,) = outcome.notes
    assert DROPPED[feature] in note and "left unchanged" in note, note
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([src.name, outcome.target.name])


@pytest.mark.parametrize("feature", list(DROPPED), ids=lambda f: f.__name__)
def test_case6_the_hand_list_names_each_feature_before_anything_is_written(
    feature, tmp_path
) -> None:
    src = build(tmp_path / "plan.xlsx", feature)
    if feature is sensitivity_label:
        add_label(src)
    unkept = safety.inspect_file(src).unkept
    if feature in (comment_shown, comment_size_and_colour):
        assert unkept == []  # not on the hand list: only the comparison finds these
    else:
        assert len(unkept) == 1, unkept


@pytest.mark.parametrize("feature", list(KEPT), ids=lambda f: f.__name__)
def test_content_openpyxl_keeps_survives_two_runs_in_place(feature, tmp_path) -> None:
    src = build(tmp_path / "plan.xlsx", feature)
    before = re.findall(KEPT[feature], _package_text(src))
    assert before, "the feature is really there to lose"
    for run in (1, 2):
        outcome = run_to(src, run_time=STAMP)
        assert outcome.target == src and not outcome.copied and outcome.notes == [], run
        assert len(re.findall(KEPT[feature], _package_text(src))) == len(before), run
    if feature is picture:
        with zipfile.ZipFile(src) as z:
            media = [z.read(n) for n in z.namelist() if "/media/" in n]
        assert _png((200, 60, 40)) in media  # the picture's bytes, unchanged


def test_printer_settings_excel_keeps_for_a_sheet_are_found_by_the_comparison(
    tmp_path, monkeypatch
) -> None:
    """Excel stores a sheet's printer-driver settings (tray, duplex) as a part of their own,
    which openpyxl drops; not on the hand list, the comparison finds it."""
    src = build(tmp_path / "plan.xlsx", lambda wb: mine(wb).set_landscape())
    with zipfile.ZipFile(src) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    sheet = max(n for n in parts if re.fullmatch(r"xl/worksheets/sheet\d+\.xml", n))  # mine
    rels = sheet.replace("worksheets/", "worksheets/_rels/") + ".rels"
    parts["xl/printerSettings/printerSettings1.bin"] = b"\x00DEVMODE" * 64  # a driver's blob
    parts["[Content_Types].xml"] = parts["[Content_Types].xml"].replace(
        b"</Types>",
        b'<Default Extension="bin" ContentType="application/vnd.openxmlformats-officedocument'
        b'.spreadsheetml.printerSettings"/></Types>',
    )
    parts[rels] = (
        b'<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
        b'<Relationship Id="rId9" Type="http://schemas.openxmlformats.org/officeDocument/2006/'
        b'relationships/printerSettings" Target="../printerSettings/printerSettings1.bin"/>'
        b"</Relationships>"
    )
    parts[sheet] = parts[sheet].replace(
        b"<pageSetup ",
        b'<pageSetup xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/'
        b'relationships" r:id="rId9" ',
    )
    with zipfile.ZipFile(src, "w", zipfile.ZIP_DEFLATED) as z:
        for n, data in parts.items():
            z.writestr(n, data)
    original = _digest(src)
    assert safety.inspect_file(src).unkept == []
    outcome = run_to(src, run_time=STAMP)
    assert outcome.copied and _digest(src) == original
    assert f"sheet '{MINE}': printer settings" in outcome.notes[0]


@pytest.mark.libreoffice
def test_a_plan_saved_by_libreoffice_is_written_in_place_twice(tmp_path) -> None:
    """No false alarm: what LibreOffice writes and openpyxl drops holds nothing of the user's."""
    soffice = shutil.which("soffice") or shutil.which("libreoffice")
    if soffice is None:
        pytest.skip("LibreOffice (soffice) is not installed")
    src = build(tmp_path / "made.xlsx", link_to_a_web_page)
    out = tmp_path / "saved"
    subprocess.run(
        [
            soffice,
            f"-env:UserInstallation={(tmp_path / 'profile').as_uri()}",
            "--headless",
            "--convert-to",
            "xlsx",
            "--outdir",
            str(out),
            str(src),
        ],
        check=True,
        capture_output=True,
        timeout=240,
    )
    saved = out / "made.xlsx"
    for run in (1, 2):
        outcome = run_to(saved, run_time=STAMP)
        assert outcome.target == saved and not outcome.copied and outcome.notes == [], run
