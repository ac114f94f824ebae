"""Nothing the user typed is lost: a checklist of user content survives two write-backs, and a
workbook holding content wzq cannot keep gets its results in a copy, the original untouched.

The workbook is the invented Kestrel Ridge Parkway example typed into the macro
template (VBA project and Recalculate button), to which a designer's own work is
added: a sheet of formulas, styles, comments, data validation, defined names,
conditional formats, a picture, a chart, a hyperlink, merged cells, print
settings, a hidden sheet and document properties.
"""

from __future__ import annotations

import hashlib
import io
import re
import zipfile
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt
import openpyxl
import pytest
from oletools.olevba import VBA_Parser
from openpyxl.chart import BarChart, Reference
from openpyxl.comments import Comment
from openpyxl.drawing.image import Image
from openpyxl.formatting.rule import CellIsRule, ColorScaleRule, FormulaRule
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.datavalidation import DataValidation
from workbook_helpers import fill_template, named_cell

from wzq import cli
from wzq.engine.plan import PlanError
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import layout
from wzq.io.workbook.layout import MARKER_NAME
from wzq.io.workbook.reader import read_plan
from wzq.io.workbook.run import run_to, run_workbook
from wzq.io.workbook.safety import inspect_file
from wzq.io.workbook.template import vba_project_bytes
from wzq.io.workbook.windows_cache import CACHE_SHEET
from wzq.io.workbook.writer import input_fingerprint

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"
MINE = "My checks"
HIDDEN = "Site photos log"


def _png() -> bytes:
    """A small picture, drawn here (no file from anywhere)."""
    fig, ax = plt.subplots(figsize=(1.2, 0.8), dpi=50)
    ax.plot([0, 1, 2], [0, 2, 1], color="#2E5E4E")
    ax.set_axis_off()
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    plt.close(fig)
    return buf.getvalue()


def add_user_content(path: Path) -> None:
    """A designer's own work in the plan workbook, of every kind on the checklist."""
    book = openpyxl.load_workbook(path, keep_vba=True)
    ws = book.create_sheet(MINE, 1)
    ws["A1"] = "Speed limit x 2"
    ws["B1"] = "=site_speed_limit*2"
    ws["A2"] = "Longest queue from the results"
    ws["B2"] = "=MAX(Results!I5:I76)"
    ws["A3"] = "Own limit"
    ws["B3"] = 1.25
    ws["A4"] = "=1+1"
    ws["A4"].data_type = "s"  # typed with a leading apostrophe
    for r, v in enumerate([3, 7, 5, 9], start=6):
        ws.cell(r, 1, f"Night {r - 5}")
        ws.cell(r, 2, v)
    ws["B1"].font = Font(italic=True, color="0000FF")
    ws["B1"].fill = PatternFill("solid", fgColor="CCFFCC")
    ws["B1"].border = Border(left=Side(style="thick", color="FF0000"))
    ws["B1"].alignment = Alignment(horizontal="right", wrap_text=True)
    ws["B3"].number_format = "0.000"
    ws.column_dimensions["A"].width = 33
    ws.row_dimensions[2].height = 28
    ws.column_dimensions["D"].hidden = True
    ws.merge_cells("C10:E11")
    ws["C10"] = "merged note"
    ws.freeze_panes = "B2"
    ws.sheet_properties.tabColor = "7A2E0E"
    ws["A1"].comment = Comment("my own check", "designer")
    ws["A12"] = "site diary"
    ws["A12"].hyperlink = "https://example.invalid/diary"
    dv = DataValidation(type="list", formula1='"yes,no,maybe"', allow_blank=True)
    ws.add_data_validation(dv)
    dv.add("C1:C5")
    ws.conditional_formatting.add(
        "B6:B9",
        CellIsRule(
            operator="greaterThan", formula=["6"], fill=PatternFill("solid", fgColor="F4CCCC")
        ),
    )
    ws.conditional_formatting.add(
        "B6:B9",
        ColorScaleRule(start_type="min", start_color="FFFFFF", end_type="max", end_color="2E5E4E"),
    )
    ws.conditional_formatting.add("A6:A9", FormulaRule(formula=["$B6>8"], font=Font(bold=True)))
    picture = Image(io.BytesIO(_png()))
    ws.add_image(picture, "G2")
    chart = BarChart()
    chart.title = "Own chart"
    chart.add_data(Reference(ws, min_col=2, min_row=6, max_row=9))
    ws.add_chart(chart, "G12")
    ws.print_area = "A1:E12"
    ws.page_setup.orientation = "landscape"
    hidden = book.create_sheet(HIDDEN)
    hidden["A1"] = "photo 1: joint before saw-cut"
    hidden.sheet_state = "hidden"
    book.defined_names["my_limit"] = DefinedName("my_limit", attr_text=f"'{MINE}'!$B$3")
    ws.defined_names["local_nights"] = DefinedName("local_nights", attr_text=f"'{MINE}'!$B$6:$B$9")
    lanes = named_cell(book, "site_lanes")
    lanes.comment = Comment("checked on site", "designer")
    lanes.font = Font(bold=True, color="FF0000")
    book.properties.creator = "A. Designer (invented)"
    book.properties.title = "Kestrel Ridge closure plan"
    book.save(path)


def _macros(path: Path) -> dict[str, str]:
    parser = VBA_Parser(str(path))
    try:
        return {name: code for _, _, name, code in parser.extract_macros()}
    finally:
        parser.close()


def _button_macros(path: Path) -> list[str]:
    with zipfile.ZipFile(path) as z:
        vml = [z.read(n).decode("utf-8", "replace") for n in z.namelist() if n.endswith(".vml")]
    return [m for text in vml for m in re.findall(r"<x:FmlaMacro>\[?0?\]?!?([^<]*)<", text)]


def _inputs(book) -> dict:
    snap = {}
    for name in layout.INPUT_SHEETS:
        for row in book[name].iter_rows():
            for c in row:
                snap[(name, c.coordinate)] = (
                    c.value,
                    c.data_type,
                    c.number_format,
                    c.font.b,
                    c.fill.fgColor.rgb,
                )
    return snap


def checklist(path: Path) -> dict[str, object]:
    """Every item of the user's content, as plain values that can be compared."""
    book = openpyxl.load_workbook(path, keep_vba=True)
    ws = book[MINE]
    with zipfile.ZipFile(path) as z:
        names = z.namelist()
        media = sorted(hashlib.sha256(z.read(n)).hexdigest() for n in names if "media/" in n)
        vba = z.read("xl/vbaProject.bin")
    cf = sorted(
        (str(rng.sqref), rule.type, tuple(rule.formula or ()))
        for rng in ws.conditional_formatting
        for rule in rng.rules
    )
    return {
        "formulas": [ws["B1"].value, ws["B2"].value, (ws["A4"].value, ws["A4"].data_type)],
        "values": [c.value for c in ws["B"][5:9]],
        "font": (ws["B1"].font.i, ws["B1"].font.color.rgb),
        "fill": ws["B1"].fill.fgColor.rgb,
        "border": (ws["B1"].border.left.style, ws["B1"].border.left.color.rgb),
        "alignment": (ws["B1"].alignment.horizontal, ws["B1"].alignment.wrap_text),
        "number format": ws["B3"].number_format,
        "column width": ws.column_dimensions["A"].width,
        "row height": ws.row_dimensions[2].height,
        "hidden column": ws.column_dimensions["D"].hidden,
        "merged": sorted(str(r) for r in ws.merged_cells.ranges),
        "freeze panes": ws.freeze_panes,
        "tab colour": ws.sheet_properties.tabColor.rgb,
        "comments": (ws["A1"].comment.text, named_cell(book, "site_lanes").comment.text),
        "hyperlink": ws["A12"].hyperlink.target,
        "data validation": [
            (v.type, v.formula1, str(v.sqref)) for v in ws.data_validations.dataValidation
        ],
        "conditional formats": cf,
        "pictures": (len(ws._images), media),
        "charts": [c.title.tx.rich.p[0].r[0].t for c in ws._charts],
        "print": (ws.print_area, ws.page_setup.orientation),
        "hidden sheet": (book[HIDDEN].sheet_state, book[HIDDEN]["A1"].value),
        # wzq's own sheets left out: its output sheets and its very hidden cache sheet
        "sheet order": [
            s for s in book.sheetnames if s not in (*layout.OUTPUT_SHEETS, CACHE_SHEET)
        ],
        "defined names": sorted(
            (n, d.attr_text) for n, d in book.defined_names.items() if n != MARKER_NAME
        ),
        "sheet names": {n: d.attr_text for n, d in ws.defined_names.items()},
        "input sheets": _inputs(book),
        "properties": (book.properties.creator, book.properties.title),
        "vba project": hashlib.sha256(vba).hexdigest(),
        "macros": _macros(path),
        "button": _button_macros(path),
    }


@pytest.fixture(scope="module")
def users_workbook(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("mine")
    path = fill_template(load_plan(KESTREL), folder / "plan.xlsm", macro=True)
    add_user_content(path)
    return path


@pytest.mark.slow
def test_every_item_of_the_users_work_survives_two_runs(users_workbook, tmp_path):
    src = tmp_path / "plan.xlsm"
    src.write_bytes(users_workbook.read_bytes())
    before = checklist(src)
    # the checklist is really there to lose
    assert before["pictures"][0] == 1 and len(before["pictures"][1]) == 1
    assert len(before["conditional formats"]) == 3
    assert before["charts"] == ["Own chart"]
    assert before["button"] == [layout.BUTTON_MACRO]
    assert before["vba project"] == hashlib.sha256(vba_project_bytes()).hexdigest()
    assert inspect_file(src).unkept == []  # nothing here that openpyxl drops
    for run in (1, 2):
        outcome = run_to(src, run_time=f"2027-03-0{run}T08:00:00Z")
        assert outcome.target == src and not outcome.copied and outcome.notes == []
        after = checklist(src)
        for item, value in before.items():
            assert after[item] == value, f"run {run}: {item}"
        book = openpyxl.load_workbook(src, keep_vba=True)
        assert book.sheetnames[-len(layout.OUTPUT_SHEETS) :] == list(layout.OUTPUT_SHEETS)
        # the cache (the plan asks for the closure windows) sits, very hidden, before them
        assert book.sheetnames[-len(layout.OUTPUT_SHEETS) - 1] == CACHE_SHEET
        assert book[CACHE_SHEET].sheet_state == "veryHidden"
    assert input_fingerprint(read_plan(src)) == input_fingerprint(load_plan(KESTREL))


# --- content openpyxl cannot keep: results go to a copy ----------------------------------

TEXT_BOX = (  # in the drawing's own (default) namespace, as openpyxl wrote the drawing
    b"<twoCellAnchor><from><col>1</col><colOff>0</colOff><row>14</row><rowOff>0</rowOff>"
    b"</from><to><col>4</col><colOff>0</colOff><row>18</row><rowOff>0</rowOff></to>"
    b'<sp macro="" textlink=""><nvSpPr><cNvPr id="9" name="TextBox 1"/><cNvSpPr txBox="1"/>'
    b'</nvSpPr><spPr/><txBody><a:bodyPr xmlns:a="http://schemas.openxmlformats.org/'
    b'drawingml/2006/main"/><a:p xmlns:a="http://schemas.openxmlformats.org/drawingml/2006/'
    b'main"><a:r><a:t>Detour signs here</a:t></a:r></a:p></txBody></sp><clientData/>'
    b"</twoCellAnchor>"
)
SPARKLINES = (
    b'<extLst><ext uri="{05C60535-1F16-4fd2-B633-F4F36F0B64E0}" '
    b'xmlns:x14="http://schemas.microsoft.com/office/spreadsheetml/2009/9/main">'
    b'<x14:sparklineGroups xmlns:xm="http://schemas.microsoft.com/office/excel/2006/main">'
    b"<x14:sparklineGroup><x14:sparklines><x14:sparkline><xm:f>'My checks'!B6:B9</xm:f>"
    b"<xm:sqref>C6</xm:sqref></x14:sparkline></x14:sparklines></x14:sparklineGroup>"
    b"</x14:sparklineGroups></ext></extLst>"
)


def _with_part_edit(src: Path, dst: Path, kind: str) -> str:
    """``src`` with a text box (in the drawing that holds the picture) or sparklines added."""
    with zipfile.ZipFile(src) as zin:
        parts = {i.filename: zin.read(i.filename) for i in zin.infolist()}
    if kind == "text box":
        name = next(
            n
            for n in parts
            if re.match(r"xl/drawings/drawing\d+\.xml$", n) and b"<pic>" in parts[n]
        )
        parts[name] = parts[name].replace(b"</wsDr>", TEXT_BOX + b"</wsDr>")
    else:
        workbook = parts["xl/workbook.xml"].decode()
        sheets = re.findall(r'<sheet [^>]*name="([^"]+)"[^>]*r:id="(rId\d+)"', workbook)
        rid = dict(sheets)[MINE]
        rels = parts["xl/_rels/workbook.xml.rels"].decode()
        target = re.search(rf'Id="{rid}"[^>]*Target="/?(?:xl/)?([^"]+)"', rels) or re.search(
            rf'Target="/?(?:xl/)?([^"]+)"[^>]*Id="{rid}"', rels
        )
        name = "xl/" + target.group(1)
        parts[name] = parts[name].replace(b"</worksheet>", SPARKLINES + b"</worksheet>")
    with zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for n, data in parts.items():
            zout.writestr(n, data)
    return name


@pytest.mark.parametrize("kind", ["text box", "sparklines"])
def test_content_openpyxl_drops_sends_the_results_to_a_copy(kind, users_workbook, tmp_path, capsys):
    src = tmp_path / "plan.xlsm"
    part = _with_part_edit(users_workbook, src, kind)
    original = src.read_bytes()
    unkept = inspect_file(src).unkept
    assert len(unkept) == 1 and unkept[0].startswith(part)

    assert cli.main(["run", str(src)]) == cli.EXIT_OK
    out = capsys.readouterr().out
    copy = tmp_path / "plan (wzq results).xlsm"
    assert "warning: plan.xlsm holds content wzq cannot keep" in out
    assert part in out and copy.name in out
    assert f"wrote the results to {copy}" in out
    assert src.read_bytes() == original  # byte for byte
    book = openpyxl.load_workbook(copy, keep_vba=True)
    assert book.sheetnames[-len(layout.OUTPUT_SHEETS) :] == list(layout.OUTPUT_SHEETS)
    log = [r for r in book[layout.RUN_LOG].iter_rows(values_only=True) if r[0] == "Note"]
    assert len(log) == 1 and "written to a copy: plan (wzq results).xlsm" in log[0][1]
    first_copy = copy.read_bytes()

    # a second run never overwrites the first copy
    assert cli.main(["run", str(src)]) == cli.EXIT_OK
    assert "plan (wzq results 2).xlsm" in capsys.readouterr().out
    assert copy.read_bytes() == first_copy and src.read_bytes() == original
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        ["plan.xlsm", "plan (wzq results).xlsm", "plan (wzq results 2).xlsm"]
    )

    # asked to refuse instead (e.g. by a caller that must not add files), nothing is written
    with pytest.raises(PlanError, match="cannot keep"):
        run_workbook(src, unkept="refuse")
    assert src.read_bytes() == original
