"""The saved results of formulas found from the formula elements of a sheet part written the
usual way, and every other spelling parsed cell by cell, with the same answer."""

from __future__ import annotations

import io

from wzq.io.workbook.formula_values import (
    MAIN_NS,
    Saved,
    _formula_cells,
    _formula_cells_usual,
)

HEAD = f'<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="{MAIN_NS}" '
HEAD += 'xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships">'


def sheet(rows: str, head: str = HEAD) -> bytes:
    return (head + "<sheetData>" + rows + "</sheetData></worksheet>").encode()


USUAL = sheet(
    '<row r="1"><c r="A1" t="s"><v>0</v></c><c r="B1" t="str"><f>IF(A1="x","km","mi")</f>'
    '<v>mi</v></c><c r="C1"/></row>'
    '<row r="42"><c r="F42"><f>SUM(F17:F40)</f><v>100.5</v></c><c r="G42"><f>SUM(G1:G2)</f>'
    '</c><c r="H42"><f t="shared" si="0" ref="H42:H43">1+1</f><v>2</v></c>'
    '<c r="AB42" t="inlineStr"><is><t>family</t></is></c></row>'
    '<row r="43"><c r="H43"><f t="shared" si="0"/><v>2</v></c><c r="I43"><v>7</v></c></row>'
)


def test_the_usual_spelling_gives_every_formula_cell_worked_by_hand() -> None:
    expected = {
        (1, 2): Saved("str", "mi"),
        (42, 6): Saved(None, "100.5"),
        (42, 7): Saved(None, None),  # a formula never calculated: no saved value
        (42, 8): Saved(None, "2"),
        (43, 8): Saved(None, "2"),  # a shared formula's other cell
    }
    assert _formula_cells_usual(USUAL) == expected
    assert _formula_cells(io.BytesIO(USUAL)) == expected


def test_no_formulas_no_saved_results() -> None:
    data = sheet('<row r="1"><c r="A1"><v>1</v></c></row>')
    assert _formula_cells_usual(data) == {}


def test_other_spellings_are_parsed_cell_by_cell() -> None:
    prefixed = (
        f'<x:worksheet xmlns:x="{MAIN_NS}"><x:sheetData><x:row r="1"><x:c r="A1"><x:f>1+1</x:f>'
        "<x:v>2</x:v></x:c></x:row></x:sheetData></x:worksheet>"
    ).encode()
    no_ref = sheet('<row r="3"><c><v>1</v></c><c><f>1+1</f><v>2</v></c></row>')
    odd_space = sheet('<row r="1"><c\tr="B1"><f>1+1</f><v>2</v></c></row>')
    dollar = sheet('<row r="2"><c r="$B$2"><f>1+1</f><v>2</v></c></row>')
    for data in (prefixed, no_ref, odd_space):
        assert _formula_cells_usual(data) is None
    assert _formula_cells(io.BytesIO(prefixed)) == {(1, 1): Saved(None, "2")}
    assert _formula_cells(io.BytesIO(no_ref)) == {(3, 2): Saved(None, "2")}  # counted
    assert _formula_cells(io.BytesIO(odd_space)) == {(1, 2): Saved(None, "2")}
    assert _formula_cells_usual(dollar) == _formula_cells(io.BytesIO(dollar))
    assert _formula_cells_usual(dollar) == {(2, 2): Saved(None, "2")}
