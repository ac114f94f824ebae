"""Saved formula results are read sparsely (issue 15, case 2) and typed like typed values.

The workbooks are written with XlsxWriter, which stores a formula's result the
way Excel does (``<f>`` with its ``<v>``, ``t="str"``/``"b"``/``"e"`` for text,
booleans and errors, the cell's number format through its style).
"""

from __future__ import annotations

import datetime as dt
import json
import textwrap
from pathlib import Path

import pytest
import xlsxwriter
from entry_points import AVAILABLE, run_jobs


def _book(path: Path) -> Path:
    wb = xlsxwriter.Workbook(str(path))
    ws = wb.add_worksheet("Inputs")
    other = wb.add_worksheet("Other sheet")
    date = wb.add_format({"num_format": "yyyy-mm-dd"})
    clock = wb.add_format({"num_format": "hh:mm"})
    hours = wb.add_format({"num_format": "[h]:mm"})
    ws.write_formula("A1", "=60+5", None, 65)
    ws.write_formula("A2", "=1/4", None, 0.25)
    ws.write_formula("A3", "=DATE(2027,5,3)", date, 46510)  # 2027-05-03 in the 1900 system
    ws.write_formula("A4", "=TIME(21,0,0)", clock, 0.875)  # 21:00
    ws.write_formula("A5", "=30/24", hours, 1.25)  # 30 hours
    ws.write_formula("A6", '="cones"', None, "cones")
    ws.write_formula("A7", "=1=1", None, True)
    ws.write_formula("A8", "=1/0", None, "#DIV/0!")
    ws.write_formula("A9", '=""', None, "")
    ws.write("B1", 12)  # a typed value: no formula, nothing saved to look up
    ws.write_formula("C3", "=A1*2")  # no value saved (XlsxWriter writes 0 unless told)
    other.write_formula("A1", "=2+2", None, 4)
    wb.close()
    return path


def test_saved_results_come_back_typed_as_openpyxl_types_a_typed_value(tmp_path) -> None:
    from wzq.io.workbook.formula_values import saved_results
    from wzq.io.workbook.saved_values import SharedStrings, typed

    data = _book(tmp_path / "formulas.xlsx").read_bytes()
    saved = saved_results(data)
    strings = SharedStrings(data)
    fmt = {3: "yyyy-mm-dd", 4: "hh:mm", 5: "[h]:mm"}

    def value(row: int, sheet: str = "Inputs", col: int = 1) -> object:
        return typed(saved[sheet].get((row, col)), fmt.get(row, "General"), strings=strings)

    assert value(1) == 65 and isinstance(value(1), int)
    assert value(2) == 0.25
    assert value(3) == dt.datetime(2027, 5, 3)  # serial 46510, 1900 date system
    assert value(4) == dt.time(21, 0)
    assert value(5) == dt.timedelta(hours=30)
    assert value(6) == "cones"
    assert value(7) is True
    assert value(8) == "#DIV/0!"
    assert value(9) == ""  # an empty result, not "no value"
    assert value(1, col=2) is None  # a typed value: no formula, no saved result to look up
    assert value(1, sheet="Other sheet") == 4


def test_a_result_kept_in_the_shared_strings_is_looked_up(tmp_path) -> None:
    from wzq.io.workbook.formula_values import Saved
    from wzq.io.workbook.saved_values import SharedStrings, typed

    path = tmp_path / "strings.xlsx"
    wb = xlsxwriter.Workbook(str(path))
    ws = wb.add_worksheet("S")
    for i, text in enumerate(["cones", "drums", "barrier"]):
        ws.write_string(i, 0, text)  # XlsxWriter keeps text in the shared-string table
    wb.close()
    strings = SharedStrings(path.read_bytes())
    assert typed(Saved("s", "2"), strings=strings) == "barrier"
    assert typed(Saved("s", "0"), strings=strings) == "cones"
    assert typed(Saved("s", "7"), strings=strings) is None  # no such entry


@pytest.mark.slow
@pytest.mark.skipif(not AVAILABLE, reason="measuring a process needs fork and wait4")
def test_case2_a_value_at_the_last_cell_costs_nothing_to_read_past(tmp_path) -> None:
    """Case 2: a formula input beside a value in XFD1048576 is read without a dense block.

    Read past the pre-parse budget (which refuses such a file) straight through the
    reader, in a process of its own whose peak memory is measured from outside: the old
    reader asked for 512 GiB and aborted."""
    path = tmp_path / "far.xlsx"
    wb = xlsxwriter.Workbook(str(path))
    ws = wb.add_worksheet("Site")
    ws.write_formula("B9", "=60+5", None, 65)
    ws.write_number("XFD1048576", 1)
    wb.close()
    code = textwrap.dedent(
        f"""
        import json
        from pathlib import Path
        from wzq.io.workbook.reader import BookReader, book_from_bytes
        path = Path({str(path)!r})
        data = path.read_bytes()
        book = book_from_bytes(data, path)
        reader = BookReader(book, path.name, path, data)
        print(json.dumps(reader.raw(book["Site"], 9, 2)))
        """
    )
    (r,) = run_jobs([{"key": "far", "code": code}], timeout=120).values()
    assert r["status"] == 0, r["stderr"][-2000:]
    assert json.loads(r["stdout"]) == 65
    assert r["peak_mib"] < 300, r["peak_mib"]  # no block of the sheet (the old reader aborted)


@pytest.mark.parametrize("text", ["", "cones", "A&B <lane 2> 'x' \"y\"", "&amp; &lt;", "><&&<>"])
def test_a_saved_text_result_is_escaped_as_the_standard_library_escapes_it(text: str) -> None:
    # wzq escapes without importing xml.sax.saxutils (it pulls in urllib, http, ssl and
    # email at every press); the text must come out as that module's escape gives it
    from xml.sax.saxutils import escape

    from wzq.io.workbook.formula_values import _escape

    assert _escape(text) == escape(text)
    assert _escape("a<b&c>d") == "a&lt;b&amp;c&gt;d"  # by hand: & first, so no double escape
