"""The workbook template: sheets, names, tables, dropdowns, macros, and `wzq new`."""

from __future__ import annotations

import importlib.util
import re
import zipfile
from pathlib import Path

import pytest
from oletools.olevba import VBA_Parser
from openpyxl import load_workbook

import wzq
from wzq.cli import main
from wzq.io import fields as F
from wzq.io.workbook import layout as L
from wzq.io.workbook.template import build_template, template_folder
from wzq.io.workbook.template import main as template_main

COMMITTED = Path(__file__).resolve().parents[2] / "workbook_templates"


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> dict[bool, Path]:
    folder = tmp_path_factory.mktemp("templates")
    out = {}
    for macro, name in L.TEMPLATE_FILES.items():
        out[macro] = folder / name
        build_template(out[macro], macro=macro)
    return out


def parts(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as z:
        return {n: z.read(n) for n in z.namelist()}


@pytest.mark.parametrize("macro", [False, True])
def test_sheets_names_and_tables(built: dict[bool, Path], macro: bool) -> None:
    wb = load_workbook(built[macro], keep_vba=macro)
    assert wb.sheetnames == list(L.INPUT_SHEETS)
    assert not set(wb.sheetnames) & set(L.OUTPUT_SHEETS)
    # one workbook-scoped name per input value, each on its own sheet, one cell each, and
    # the landmark names the Limits sheet's "Queue must not pass" offers
    assert set(wb.defined_names) == {f.name for f in F.ALL_FIELDS} | {L.LANDMARK_NAMES}
    assert wb.defined_names[L.LANDMARK_NAMES].attr_text == (
        f"{L.APPROACH}!$A$8:$A${7 + L.LANDMARK_TEMPLATE_ROWS}"
    )
    for f in F.ALL_FIELDS:
        (sheet, coord), *rest = list(wb.defined_names[f.name].destinations)
        assert not rest
        assert sheet == F.FIELD_SHEET[f.name]
        assert re.fullmatch(r"\$[A-Z]+\$\d+", coord)
    tables = {t.name: (ws.title, t) for ws in wb for t in ws.tables.values()}
    assert set(tables) == set(L.TABLE_COLUMNS)
    for name, columns in L.TABLE_COLUMNS.items():
        sheet, t = tables[name]
        assert sheet == L.TABLE_SHEET[name]
        # the ramp flow table adds a column per ramp, headed by the user
        extra = L.RAMP_FLOW_PLACEHOLDERS if name == L.RAMP_FLOW_TABLE else ()
        assert tuple(c.name for c in t.tableColumns) == (*columns, *extra)
    demand = wb[L.DEMAND].tables[L.DEMAND_TABLE].ref
    closure = wb[L.CLOSURES].tables[L.CLOSURE_TABLE].ref
    assert demand == f"A8:C{8 + L.DEMAND_TEMPLATE_ROWS}"  # a week of empty hourly rows
    assert closure == f"A5:H{5 + L.CLOSURE_TEMPLATE_ROWS}"
    # the landmarks and the hourly ramp flows side by side: nothing below either table
    landmarks = wb[L.APPROACH].tables[L.LANDMARK_TABLE].ref
    ramps = wb[L.APPROACH].tables[L.RAMP_FLOW_TABLE].ref
    assert landmarks == f"A7:E{7 + L.LANDMARK_TEMPLATE_ROWS}"
    assert ramps == f"G7:L{7 + L.RAMP_FLOW_TEMPLATE_ROWS}"


def test_value_cells_have_labels_units_and_input_colour(built: dict[bool, Path]) -> None:
    wb = load_workbook(built[False])
    fill = L.COLOURS["input_fill"].lstrip("#").upper()
    for f in F.ALL_FIELDS:
        sheet, coord = next(iter(wb.defined_names[f.name].destinations))
        ws = wb[sheet]
        cell = ws[coord.replace("$", "")]
        assert cell.fill.fgColor.rgb[-6:] == fill, f.name
        assert ws.cell(cell.row, cell.column - 1).value == f.label
        unit = ws.cell(cell.row, cell.column + 1).value
        if f.unit in F.UNIT_KINDS:
            us, metric = F.UNIT_KINDS[f.unit]
            assert unit == f'=IF(unit_system="metric","{metric}","{us}")'
        elif f.unit:
            assert unit == f.unit
        if f.template is not None:
            assert cell.value == f.template
        else:
            assert cell.value is None


def test_dropdowns_list_our_words(built: dict[bool, Path]) -> None:
    wb = load_workbook(built[False])
    lists: dict[str, str] = {}
    for ws in wb:
        for dv in ws.data_validations.dataValidation:
            assert dv.type == "list"
            for rng in str(dv.sqref).split():
                lists[f"{ws.title}!{rng}"] = dv.formula1
    for f in F.ALL_FIELDS:
        if f.kind != "choice":
            continue
        sheet, coord = next(iter(wb.defined_names[f.name].destinations))
        words = ",".join(w for w, _ in f.choices)
        assert lists[f"{sheet}!{coord.replace('$', '')}"] == f'"{words}"', f.name
    last = 5 + L.CLOSURE_TEMPLATE_ROWS
    assert lists[f"Closures!E6:E{last}"] == '"cones or drums,concrete barrier"'
    assert lists[f"Closures!F6:F{last}"] == '"auto,yes,no"'
    words = ",".join(w for w, _ in L.LANDMARK_KIND_WORDS)
    assert lists[f"Approach!C8:C{7 + L.LANDMARK_TEMPLATE_ROWS}"] == f'"{words}"'
    sheet, coord = next(iter(wb.defined_names["limit_landmark"].destinations))
    assert lists[f"{sheet}!{coord.replace('$', '')}"] == L.LANDMARK_NAMES


def test_start_sheet_has_caution_instructions_and_units(built: dict[bool, Path]) -> None:
    wb = load_workbook(built[False])
    values = [c.value for row in wb[L.START].iter_rows() for c in row if c.value]
    assert wzq.CAUTION in values
    steps = [v for v in values if isinstance(v, str) and re.match(r"\d\. ", v)]
    assert 5 <= len(steps) <= 8
    sheet, coord = next(iter(wb.defined_names["unit_system"].destinations))
    assert sheet == L.START
    assert wb[sheet][coord.replace("$", "")].value == "US customary"  # chosen first


def test_printed_input_sheets_say_what_they_are(built: dict[bool, Path]) -> None:
    """The Count history sheet holds its table alone, so printed empty it was a page of
    column heads: its page header says what the sheet is and when it is read, and its
    head row repeats on every page. Every input sheet's footer gives its name and page."""
    wb = load_workbook(built[False])
    counts = wb[L.COUNTS]
    assert counts.oddHeader.left.text == (
        "&BCount history&B: the counts of one direction, a date then 24 hourly counts a "
        "row; read only when the Demand sheet's 'Demand is given as' takes the demand from "
        "a count history"
    )
    assert counts.print_title_rows == "$1:$1"
    for name in L.INPUT_SHEETS:
        footer = wb[name].oddFooter
        assert (footer.left.text, footer.right.text) == ("&A", "Page &P of &N"), name


def test_hourly_share_table_is_filled_and_sums_to_100(built: dict[bool, Path]) -> None:
    wb = load_workbook(built[False])
    ws = wb[L.DEMAND]
    rows = list(ws["E17:G40"])
    assert [r[0].value.hour for r in rows] == list(range(24))
    for k in (1, 2):
        assert sum(r[k].value for r in rows) == pytest.approx(100.0, abs=1e-9)
    # the invented shapes: weekday peaks morning and evening, weekend around midday
    weekday = [r[1].value for r in rows]
    weekend = [r[2].value for r in rows]
    assert weekday[7] > weekday[12] < weekday[17]
    assert weekend[12] > weekend[7] and weekend[12] > weekend[17]


def test_xlsx_has_no_macros(built: dict[bool, Path]) -> None:
    names = parts(built[False])
    assert "xl/vbaProject.bin" not in names
    assert not any("vml" in n for n in names)


def _modules(vba: bytes) -> dict[str, str]:
    """Module file name -> source, as oletools' olevba extracts them."""
    return {name: code for _, _, name, code in VBA_Parser("vba.bin", data=vba).extract_macros()}


def test_xlsm_embeds_the_xlwings_vba_project_and_a_button(built: dict[bool, Path]) -> None:
    p = parts(built[True])
    spec = importlib.util.find_spec("xlwings")
    assert spec is not None and spec.submodule_search_locations
    source = Path(spec.submodule_search_locations[0]) / "quickstart_standalone.xlsm"
    with zipfile.ZipFile(source) as z:
        theirs = _modules(z.read("xl/vbaProject.bin"))
    modules = _modules(p["xl/vbaProject.bin"])
    # xlwings' standalone code as xlwings wrote it, its sample module replaced by ours
    assert set(modules) == set(theirs) - {"Module1.bas"} | {"WzqButton.bas"}
    for name in ("xlwings.bas", "Dictionary.cls"):
        assert modules[name] == theirs[name], name
    ours = modules["WzqButton.bas"]
    assert 'Attribute VB_Name = "WzqButton"' in ours
    assert "Sub RecalculatePlan()" in ours
    # the same call as the quickstart's sample macro: import the module named like the
    # workbook and run its main() through xlwings' RunPython
    assert "Left(ThisWorkbook.Name, (InStrRev(ThisWorkbook.Name" in theirs["Module1.bas"]
    assert "entry = Left(ThisWorkbook.Name, InStrRev(ThisWorkbook.Name, " in ours
    assert 'RunPython "import " & entry & ";" & entry & ".main()"' in ours
    assert "Function RunPython(" in modules["xlwings.bas"]
    assert not any("SampleCall" in code for code in modules.values())
    assert {"Sheet1.cls", "Sheet2.cls", "ThisWorkbook.cls"} <= set(modules)
    vml = p["xl/drawings/vmlDrawing1.vml"].decode()
    assert "<x:FmlaMacro>[0]!RecalculatePlan</x:FmlaMacro>" in vml
    assert "Recalculate" in vml
    assert 'codeName="ThisWorkbook"' in p["xl/workbook.xml"].decode()
    assert 'codeName="Sheet1"' in p["xl/worksheets/sheet1.xml"].decode()
    assert 'codeName="Sheet2"' in p["xl/worksheets/sheet2.xml"].decode()
    # the button sits on the Start sheet (sheet1 owns the only legacy drawing)
    rels = p["xl/worksheets/_rels/sheet1.xml.rels"].decode()
    assert "vmlDrawing1.vml" in rels


def test_xlsm_macros_survive_repeated_openpyxl_saves(
    built: dict[bool, Path], tmp_path: Path
) -> None:
    path = tmp_path / "copy.xlsm"
    path.write_bytes(built[True].read_bytes())
    for _ in range(2):
        wb = load_workbook(path, keep_vba=True)
        wb[L.SITE]["B8"] = 3
        wb.save(path)
    p = parts(path)
    assert p["xl/vbaProject.bin"] == parts(built[True])["xl/vbaProject.bin"]
    vml = [v.decode() for n, v in p.items() if n.endswith(".vml")]
    assert any("RecalculatePlan" in v and "Recalculate" in v for v in vml)


def test_rebuild_gives_the_same_parts(built: dict[bool, Path], tmp_path: Path) -> None:
    for macro, name in L.TEMPLATE_FILES.items():
        again = tmp_path / name
        build_template(again, macro=macro)
        assert parts(again) == parts(built[macro])


@pytest.mark.parametrize("macro", [False, True])
def test_committed_templates_match_a_fresh_build(built: dict[bool, Path], macro: bool) -> None:
    committed = COMMITTED / L.TEMPLATE_FILES[macro]
    assert committed.exists(), "regenerate with: python -m wzq.io.workbook.template"
    old, new = parts(committed), parts(built[macro])
    assert set(old) == set(new)
    for name in new:
        if name.endswith(".xml") and (
            name.startswith(("xl/worksheets/", "xl/tables/")) or name in WORKBOOK_PARTS
        ):
            assert old[name] == new[name], f"{name} differs; python -m wzq.io.workbook.template"


WORKBOOK_PARTS = ("xl/workbook.xml", "xl/sharedStrings.xml")


def test_template_folder_is_the_committed_one() -> None:
    assert template_folder() == COMMITTED


def test_module_entry_point_writes_both_templates(tmp_path: Path) -> None:
    assert template_main([str(tmp_path)]) == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(L.TEMPLATE_FILES.values())


def test_suffix_must_match_macro(tmp_path: Path) -> None:
    with pytest.raises(ValueError, match=r"\.xlsm"):
        build_template(tmp_path / "a.xlsx", macro=True)
    with pytest.raises(ValueError, match=r"\.xlsx"):
        build_template(tmp_path / "a.xlsm", macro=False)


# `wzq new` --------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["plan.xlsx", "plan.xlsm"])
def test_new_writes_a_fresh_workbook(
    tmp_path: Path, name: str, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / name
    assert main(["new", str(path)]) == 0
    assert f"wrote {path}" in capsys.readouterr().out
    p = parts(path)
    assert ("xl/vbaProject.bin" in p) == name.endswith(".xlsm")
    # no temporary file left behind; a macro workbook gets its entry module beside it
    expected = {path, path.with_suffix(".py")} if name.endswith(".xlsm") else {path}
    assert set(tmp_path.iterdir()) == expected
    # a fresh workbook lists exactly the inputs still to be filled in, and stays as it was
    before = path.read_bytes()
    assert main(["check", str(path)]) == 2
    assert path.read_bytes() == before
    err = capsys.readouterr().err
    lines = [line for line in err.splitlines() if line.startswith("wzq: ") and "!" in line]
    assert [line.split(":")[1].strip() for line in lines] == [
        "Site!B8",
        "Site!B9",
        "Site!B10",
        "Site!B12",
        "Demand!A9",
    ]


def test_new_never_overwrites(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "mine.xlsx"
    path.write_bytes(b"my own work")
    assert main(["new", str(path)]) == 2
    err = capsys.readouterr().err
    assert "already exists" in err and "Traceback" not in err
    assert path.read_bytes() == b"my own work"


@pytest.mark.parametrize(
    ("name", "words"),
    [("plan.xls", "ending in .xlsx"), ("no/such/folder/plan.xlsx", "does not exist")],
)
def test_new_refuses_bad_paths(
    tmp_path: Path, name: str, words: str, capsys: pytest.CaptureFixture[str]
) -> None:
    assert main(["new", str(tmp_path / name)]) == 2
    assert words in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []
