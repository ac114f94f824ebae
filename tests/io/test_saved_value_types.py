"""Saved formula results typed cell by cell, and the shared-string table read by hand.

Found by mutation testing (issue 22): the workbook tests reached these paths only
with the values a spreadsheet program usually writes. The expected values follow
the file format itself, ECMA-376 Part 1 (5th ed.): 18.18.11 ``ST_CellType`` (``b``
boolean "0"/"1", ``d`` ISO 8601 date, ``e`` error, ``inlineStr``, ``n`` number,
``s`` shared-string index, ``str`` formula text), 18.4.8 ``si`` (a shared string's
text is its runs' ``t``; 18.4.6 ``rPh`` phonetic runs are not part of it) and
18.17.4.1 (the 1900 and 1904 date systems: serial 1 is 1900-01-01, resp.
1904-01-02).
"""

from __future__ import annotations

import datetime as dt
import io
import math
import zipfile
from pathlib import Path

from openpyxl.utils.datetime import MAC_EPOCH

from wzq.io.workbook.formula_values import Saved
from wzq.io.workbook.saved_values import SharedStrings, typed

MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"

#: two entries, pretty-printed (whitespace between the elements), the first in two runs
#: with a phonetic guide, the second an empty ``t``
SST = f"""<?xml version="1.0" encoding="UTF-8"?>
<sst xmlns="{MAIN}" count="3" uniqueCount="3">
  <si>
    <r><t>Ash</t></r>
    <r><t xml:space="preserve"> Lane</t></r>
    <rPh sb="0" eb="1"><t>ash</t></rPh>
  </si>
  <si><t/></si>
  <si><t>closed</t></si>
</sst>
"""

TYPES = (
    '<?xml version="1.0" encoding="UTF-8"?>'
    '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
    '<Override PartName="/xl/strings.xml" ContentType="application/'
    'vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/></Types>'
)


def package(parts: dict[str, str]) -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        for name, text in parts.items():
            zf.writestr(name, text)
    return buf.getvalue()


def test_a_shared_string_is_its_runs_without_the_phonetic_guide(tmp_path: Path) -> None:
    # no content types: the table is looked for at its usual name, xl/sharedStrings.xml
    data = package({"xl/sharedStrings.xml": SST})
    path = tmp_path / "book.xlsx"
    path.write_bytes(data)
    for source in (data, path):
        strings = SharedStrings(source)
        assert strings.get(0) == "Ash Lane"
        assert strings.get(1) == ""
        assert strings.get(2) == "closed"
        assert strings.get(3) is None  # no such entry


def test_the_table_is_found_where_the_content_types_put_it() -> None:
    strings = SharedStrings(package({"[Content_Types].xml": TYPES, "xl/strings.xml": SST}))
    assert strings.get(2) == "closed"
    assert SharedStrings(package({"xl/other.xml": SST})).get(0) is None


def test_each_cell_type_comes_back_as_openpyxl_gives_it() -> None:
    strings = SharedStrings(package({"xl/sharedStrings.xml": SST}))
    assert typed(Saved("s", "2"), strings=strings) == "closed"
    assert typed(Saved("s", "2")) is None  # no table to look in
    assert typed(Saved("s", "x"), strings=strings) is None  # not an index
    assert typed(Saved("inlineStr", "Ash Lane")) == "Ash Lane"
    assert typed(Saved("str", "1,200")) == "1,200"
    assert typed(Saved("e", "#DIV/0!")) == "#DIV/0!"
    assert typed(Saved("b", "1")) is True and typed(Saved("b", "true")) is True
    assert typed(Saved("b", "0")) is False
    assert typed(Saved("d", "2027-05-03T07:30:00")) == dt.datetime(2027, 5, 3, 7, 30)
    assert typed(Saved("d", "not a date")) is None
    assert typed(Saved(None, "42")) == 42 and isinstance(typed(Saved(None, "42")), int)
    assert typed(Saved("n", "2.5")) == 2.5
    assert typed(Saved("n", "1E3")) == 1000.0
    assert math.isnan(typed(Saved("n", "NaN")))  # not a spreadsheet number; the reader says so
    assert typed(Saved("n", "seven")) is None
    assert typed(Saved("n", " ")) == ""


def test_a_number_in_a_date_format_follows_the_workbooks_date_system() -> None:
    # 1900 system: serial 46,510 = 2027-05-03 (46,510 days after 1899-12-30, the
    # epoch that absorbs the 1900 leap-year slip); 1904 system: serial 1 = 1904-01-02
    assert typed(Saved("n", "46510.3125"), "yyyy-mm-dd hh:mm") == dt.datetime(2027, 5, 3, 7, 30)
    assert typed(Saved("n", "1"), "yyyy-mm-dd", MAC_EPOCH) == dt.datetime(1904, 1, 2)
    assert typed(Saved("n", "0.25"), "[h]:mm") == dt.timedelta(hours=6)


def test_an_entity_in_the_shared_strings_is_never_expanded() -> None:
    # The package checks refuse a DOCTYPE before any part is parsed; the table's own
    # parser keeps entities unexpanded as well (defence in depth against entity bombs).
    sst = (
        f'<?xml version="1.0"?><!DOCTYPE sst [<!ENTITY x "EXPANDED">]>'
        f'<sst xmlns="{MAIN}"><si><t>&x;</t></si></sst>'
    )
    assert "EXPANDED" not in (SharedStrings(package({"xl/sharedStrings.xml": sst})).get(0) or "")
