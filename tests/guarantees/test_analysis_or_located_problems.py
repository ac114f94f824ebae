"""Fuzzing the workbook reader: whatever a designer sends is analysed or refused with a place.

Every generated workbook starts from one of the two filled example workbooks
(invented plans: Kestrel Ridge Parkway near Amberfold, Fenwick Downs) and gets
a few random edits of the kinds designers' files really show: any value of any
type in an input cell or a table cell (huge numbers, NaN and infinity, dates as
text, booleans, error values such as ``#REF!``, formulas with no saved result),
deleted or renamed sheets, deleted, broken or moved defined names and tables,
merged cells, hidden rows, values in extra columns, rows inserted without the
names following them, and so on.

The property: reading gives either a plan that :func:`wzq.analyse` turns into
a complete, finite result, or :class:`wzq.engine.plan.PlanError` whose every problem
names a sheet (with its cell where there is one) and says what to do. No other
exception, ever.

Speed: 2,000 workbooks are made in memory from the loaded example by copy on
write (a new cell dictionary per sheet, new cell objects only where an edit
lands), so no file is parsed per example; a smaller share goes through a saved
file and the ``wzq`` command itself. Hypothesis runs derandomised, so CI sees
the same workbooks every time.
"""

from __future__ import annotations

import copy
import datetime as dt
import hashlib
import io
import math
import re
import string
import time
import tracemalloc
import zipfile
from collections import Counter
from collections.abc import Callable
from functools import cache
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from budget import examples
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openpyxl import Workbook, load_workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE, Cell, MergedCell
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.workbook.defined_name import DefinedName, DefinedNameDict
from openpyxl.worksheet.cell_range import MultiCellRange
from openpyxl.worksheet.dimensions import RowDimension
from openpyxl.worksheet.table import TableList

import wzq
from wzq import cli
from wzq.engine.plan import PlanError, Problem
from wzq.io import fields as F
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader import book_from_bytes, read_plan, read_plan_from_book
from wzq.io.workbook.safety import OLE_MAGIC

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
TEMPLATE = Path(__file__).resolve().parents[2] / "workbook_templates" / "closure_plan.xlsx"
BASES = ("kestrel_ridge_weeknight", "fenwick_downs_weekend")
FIELD_NAMES = sorted(F.FIELDS_BY_NAME)
TABLES = (L.DEMAND_TABLE, L.CLOSURE_TABLE, L.SHARE_TABLE)
ERRORS = ("#REF!", "#VALUE!", "#DIV/0!", "#N/A", "#NAME?", "#NUM!", "#NULL!")
WORDS = sorted(
    {
        w
        for choices in (
            L.UNIT_WORDS,
            L.TERRAIN_WORDS,
            L.AREA_WORDS,
            L.DRIVER_WORDS,
            L.METHOD_WORDS,
            L.BARRIER_WORDS,
            L.NIGHT_WORDS,
            L.DIAGRAM_WORDS,
            L.QUEUE_METHOD_WORDS,
            L.DEMAND_MODE_WORDS,
        )
        for w, _ in choices
    }
)
#: Text a designer types where a number, date or time belongs.
TYPED_TEXT = (
    "2027-05-03",
    "2027-5-3",
    "Mon 2027-05-03",
    "03/05/2027",
    "2027-02-30",
    "9999-12-31",
    "0001-01-01",
    "21:00",
    "24:00",
    "25:00",
    "7:60",
    "00:00:59",
    "2027-05-03 24:00",
    "2027-05-03T21:00",
    "1,234",
    "1 234",
    "12 mi",
    "55 mph",
    "1e400",
    "-0",
    "nan",
    "inf",
    "TRUE",
    "=1+1",
)
#: Numbers at the edges: zero, tiny, huge, spreadsheet serial-date limits, near-integers.
EDGE_NUMBERS = (
    0,
    -0.0,
    1,
    2,
    3,
    7,
    8,
    24,
    60,
    100,
    1e-300,
    5e-324,
    0.5,
    0.999999999,
    1.0000001,
    86_400,
    2_958_465,
    2_958_466,
    1e9,
    1e15,
    1e308,
    -1e308,
    2**63,
    -(2**63),
    10**30,
)


# --- the base workbooks and copy on write -------------------------------------------------


@cache
def base_bytes(name: str) -> bytes:
    return (EXAMPLES / f"{name}.xlsx").read_bytes()


@cache
def base_book(name: str) -> Workbook:
    return load_workbook(io.BytesIO(base_bytes(name)))


def clone(wb: Workbook) -> Workbook:
    """A copy whose sheets, cell dictionaries, tables, merges and names are its own.

    Cells are shared with the original until an edit replaces them (edits below
    always put new cell objects in), so a copy costs a dictionary copy per sheet.
    """
    new = copy.copy(wb)
    new._sheets = []
    for ws in wb._sheets:
        n = copy.copy(ws)
        n._parent = new
        n._cells = dict(ws._cells)
        n._tables = TableList()
        for key, table in dict.items(ws._tables):  # TableList.items() gives refs
            n._tables[key] = copy.deepcopy(table)
        n.merged_cells = MultiCellRange([r.coord for r in ws.merged_cells.ranges])
        n.row_dimensions = copy.copy(ws.row_dimensions)
        n.defined_names = DefinedNameDict(ws.defined_names)
        new._sheets.append(n)
    new.defined_names = DefinedNameDict(wb.defined_names)
    return new


def put(ws: Any, row: int, col: int, value: Any, kind: str = "") -> None:
    """A new cell with ``value``: ``kind`` 'e' an error value, 's' text, 'f' a formula."""
    cell = Cell(ws, row=row, column=col)
    if kind == "e":
        cell._value, cell.data_type = value, "e"
    elif kind == "s":
        cell._value, cell.data_type = str(value), "s"
    else:
        cell.value = value
    ws._cells[(row, col)] = cell


# --- strategies ------------------------------------------------------------------------------

_LEGAL_TEXT = st.text(
    alphabet=st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=30
).filter(lambda t: not ILLEGAL_CHARACTERS_RE.search(t))

VALUES = st.one_of(
    st.none(),
    st.sampled_from(["", "   "]),
    st.booleans(),
    st.integers(min_value=-(10**20), max_value=10**20),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from(EDGE_NUMBERS),
    st.sampled_from(TYPED_TEXT).map(lambda t: ("s", t)),
    st.sampled_from(WORDS).map(lambda w: ("s", w)),
    _LEGAL_TEXT.map(lambda t: ("s", t)),
    st.sampled_from(ERRORS).map(lambda e: ("e", e)),
    st.sampled_from(["=1+1", "=site_lanes*2", "=NOW()", "=#REF!+1", "=SUM(A1:A3)"]),
    st.datetimes(min_value=dt.datetime(1, 1, 1), max_value=dt.datetime(9999, 12, 31, 23, 59)),
    st.dates(),
    st.times(),
    st.timedeltas(min_value=dt.timedelta(days=-(10**6)), max_value=dt.timedelta(days=10**6)),
)

SHEET_TITLES = st.text(
    alphabet=string.ascii_letters + string.digits + " _-.()&'", min_size=1, max_size=31
).filter(lambda t: t.strip() and not t.startswith("'") and not t.endswith("'"))


def set_value(ws: Any, row: int, col: int, value: Any) -> None:
    if isinstance(value, tuple):
        kind, v = value
        put(ws, row, col, v, kind)
    else:
        put(ws, row, col, value)


def name_cell(book: Workbook, name: str) -> tuple[Any, int, int] | None:
    dn = book.defined_names.get(name)
    if dn is None:
        return None
    try:
        sheet, coord = next(iter(dn.destinations))
        c0, r0, _, _ = range_boundaries(coord.replace("$", ""))
        return book[sheet], r0, c0
    except Exception:
        return None


def table_box(t: Any) -> tuple[int, int, int, int] | None:
    """A table's cell block, or ``None`` after an edit gave it an odd range."""
    try:
        box = range_boundaries(t.ref)
    except ValueError:
        return None
    return None if None in box else box  # type: ignore[return-value]


def find_table(book: Workbook, name: str) -> tuple[Any, Any] | None:
    for ws in book.worksheets:
        if name in ws.tables:
            return ws, ws.tables[name]
    return None


# --- edits -------------------------------------------------------------------------------------


def edit_named_value(book: Workbook, draw: Callable) -> str:
    name = draw(st.sampled_from(FIELD_NAMES))
    loc = name_cell(book, name)
    if loc is None:
        return "named value (name gone)"
    set_value(*loc, draw(VALUES))
    return f"value of {name}"


def edit_table_cell(book: Workbook, draw: Callable) -> str:
    return edit_table_cell_of(book, draw, draw(st.sampled_from(TABLES)))


def edit_table_cell_of(book: Workbook, draw: Callable, tname: str) -> str:
    found = find_table(book, tname)
    if found is None:
        return "table cell (table gone)"
    ws, t = found
    box = table_box(t)
    if box is None:
        return "table edit (odd ref)"
    c0, r0, c1, r1 = box
    row = draw(st.integers(min_value=r0, max_value=r1 + 3))
    col = draw(st.integers(min_value=c0 - 1, max_value=c1 + 1).filter(lambda c: c >= 1))
    set_value(ws, row, col, draw(VALUES))
    return f"cell of {tname}"


def edit_delete_sheet(book: Workbook, draw: Callable) -> str:
    if len(book.worksheets) < 2:
        return "delete sheet (last one)"
    ws = draw(st.sampled_from(book.worksheets))
    book.remove(ws)
    return f"delete sheet {ws.title}"


def edit_rename_sheet(book: Workbook, draw: Callable) -> str:
    ws = draw(st.sampled_from(book.worksheets))
    title = draw(st.one_of(SHEET_TITLES, st.sampled_from([*L.INPUT_SHEETS, *L.OUTPUT_SHEETS])))
    if title in book.sheetnames:
        return "rename sheet (taken)"
    ws.title = title
    return "rename sheet"


def edit_defined_name(book: Workbook, draw: Callable) -> str:
    name = draw(st.sampled_from(FIELD_NAMES))
    how = draw(st.sampled_from(["delete", "ref", "missing sheet", "other cell", "range", "junk"]))
    if how == "delete":
        book.defined_names.pop(name, None)
        return "delete name"
    sheet = draw(st.sampled_from(book.sheetnames))
    text = {
        "ref": "#REF!",
        "missing sheet": "'No such sheet'!$B$2",
        "other cell": f"'{sheet}'!${get_column_letter(draw(st.integers(1, 40)))}$"
        f"{draw(st.integers(1, 300))}",
        "range": f"'{sheet}'!$A$1:$XFD$1048576",
        "junk": draw(st.sampled_from(["=", "Site!", "SUM(", "'Site'!$B$", "1+1", "''!A1"])),
    }[how]
    book.defined_names[name] = DefinedName(name, attr_text=text)
    if draw(st.booleans()) and how != "junk":  # the same name scoped to a sheet as well
        ws = draw(st.sampled_from(book.worksheets))
        ws.defined_names[name] = DefinedName(name, attr_text=text)
    return f"name {how}"


def edit_table(book: Workbook, draw: Callable) -> str:
    tname = draw(st.sampled_from(TABLES))
    found = find_table(book, tname)
    if found is None:
        return "table (gone)"
    ws, t = found
    box = table_box(t)
    if box is None:
        return "table edit (odd ref)"
    c0, r0, c1, r1 = box
    how = draw(
        st.sampled_from(
            [
                "delete",
                "rename",
                "shrink",
                "grow",
                "huge",
                "odd ref",
                "no header",
                "totals",
                "header text",
            ]
        )
    )
    if how == "delete":
        del ws.tables[tname]
    elif how == "rename":
        new = draw(st.sampled_from(["Table1", tname.lower(), tname + "2", *TABLES]))
        if any(new in w.tables for w in book.worksheets):
            return "table rename (taken)"
        t.name = t.displayName = new
        del ws.tables[tname]
        ws.tables[new] = t
    elif how in ("shrink", "grow", "huge"):
        last = {
            "shrink": draw(st.integers(r0, r1)),
            "grow": r1 + draw(st.integers(1, 50)),
            "huge": 1_048_576,
        }[how]
        t.ref = f"{get_column_letter(c0)}{r0}:{get_column_letter(c1)}{last}"
    elif how == "odd ref":  # whole columns, one cell, or the first cell only
        t.ref = draw(st.sampled_from(["A:C", "B2", f"{get_column_letter(c0)}{r0}:C"]))
    elif how == "no header":
        t.headerRowCount = 0
    elif how == "totals":
        t.totalsRowCount = 1
    else:
        k = draw(st.integers(0, len(t.tableColumns) - 1))
        t.tableColumns[k].name = draw(st.sampled_from(["", "Column1", "date", " Date ", "x"]))
    return f"table {how}"


def edit_merge(book: Workbook, draw: Callable) -> str:
    ws = draw(st.sampled_from(book.worksheets))
    r0 = draw(st.integers(1, 60))
    c0 = draw(st.integers(1, 10))
    r1 = r0 + draw(st.integers(0, 4))
    c1 = c0 + draw(st.integers(0 if r1 > r0 else 1, 3))
    ref = f"{get_column_letter(c0)}{r0}:{get_column_letter(c1)}{r1}"
    ws.merged_cells.add(ref)
    for r in range(r0, r1 + 1):
        for c in range(c0, c1 + 1):
            if (r, c) != (r0, c0):
                ws._cells[(r, c)] = MergedCell(ws, row=r, column=c)
    return "merge cells"


def edit_hide_rows(book: Workbook, draw: Callable) -> str:
    ws = draw(st.sampled_from(book.worksheets))
    for r in draw(st.lists(st.integers(1, 200), min_size=1, max_size=5)):
        ws.row_dimensions[r] = RowDimension(ws, index=r, hidden=True)
    return "hide rows"


def edit_extra_columns(book: Workbook, draw: Callable) -> str:
    ws = draw(st.sampled_from(book.worksheets))
    for _ in range(draw(st.integers(1, 5))):
        set_value(ws, draw(st.integers(1, 200)), draw(st.integers(10, 60)), draw(VALUES))
    return "extra columns"


def edit_insert_rows(book: Workbook, draw: Callable) -> str:
    """Rows inserted by a program that moves the cells but not the names and tables."""
    ws = draw(st.sampled_from(book.worksheets))
    at, n = draw(st.integers(1, 60)), draw(st.integers(1, 3))
    moved = {}
    for (r, c), cell in ws._cells.items():
        if r >= at and not isinstance(cell, MergedCell):
            new = Cell(ws, row=r + n, column=c)
            new._value, new.data_type = cell._value, cell.data_type
            moved[(r + n, c)] = new
        elif r < at:
            moved[(r, c)] = cell
    ws._cells = moved
    return "insert rows"


def edit_clear_table(book: Workbook, draw: Callable) -> str:
    tname = draw(st.sampled_from(TABLES))
    found = find_table(book, tname)
    if found is None:
        return "clear table (gone)"
    ws, t = found
    box = table_box(t)
    if box is None:
        return "table edit (odd ref)"
    c0, r0, c1, r1 = box
    for r, c in [k for k in ws._cells if r0 < k[0] <= r1 and c0 <= k[1] <= c1]:
        del ws._cells[(r, c)]
    return f"clear {tname}"


def edit_swap_rows(book: Workbook, draw: Callable) -> str:
    tname = draw(st.sampled_from(TABLES))
    found = find_table(book, tname)
    if found is None:
        return "swap rows (gone)"
    ws, t = found
    box = table_box(t)
    if box is None:
        return "table edit (odd ref)"
    c0, r0, c1, r1 = box
    if r1 <= r0 + 1:
        return "swap rows (short)"
    a, b = draw(st.integers(r0 + 1, r1)), draw(st.integers(r0 + 1, r1))
    copy_row = draw(st.booleans())  # a duplicated row rather than a swap
    for c in range(c0, c1 + 1):
        ca, cb = ws._cells.get((a, c)), ws._cells.get((b, c))
        for row, src in ((b, ca),) if copy_row else ((a, cb), (b, ca)):
            if src is None:
                ws._cells.pop((row, c), None)
            else:
                new = Cell(ws, row=row, column=c)
                new._value, new.data_type = src._value, src.data_type
                ws._cells[(row, c)] = new
    return "duplicate row" if copy_row else "swap rows"


def edit_units(book: Workbook, draw: Callable) -> str:
    loc = name_cell(book, F.UNIT_SYSTEM.name)
    if loc is None:
        return "units (gone)"
    set_value(*loc, ("s", draw(st.sampled_from([w for w, _ in L.UNIT_WORDS]))))
    return "flip units"


def edit_aadt(book: Workbook, draw: Callable) -> str:
    """Switch the demand to 'from AADT' and type (mostly sensible) AADT inputs."""
    loc = name_cell(book, F.DEMAND_MODE.name)
    if loc is None:
        return "aadt (gone)"
    set_value(*loc, ("s", "from AADT"))
    sensible = {
        "aadt_value": st.floats(1_000, 200_000),
        "aadt_count_year": st.integers(2015, 2030),
        "aadt_growth_percent": st.floats(-5, 5),
        "aadt_direction_percent": st.floats(30, 70),
        "aadt_first_day": st.dates(dt.date(2026, 1, 1), dt.date(2028, 12, 31)).map(
            lambda d: dt.datetime.combine(d, dt.time())
        ),
        "aadt_days": st.integers(1, 14),
    }
    if draw(st.booleans()):  # and something odd in the hourly shares
        edit_table_cell_of(book, draw, L.SHARE_TABLE)
    for f in F.AADT_FIELDS:
        where = name_cell(book, f.name)
        if where is not None:
            set_value(
                *where,
                draw(
                    st.one_of(sensible[f.name], VALUES)
                    if draw(st.integers(0, 9)) == 0
                    else sensible[f.name]
                ),
            )
    return "aadt"


EDITS: tuple[Callable[[Workbook, Callable], str], ...] = (
    edit_named_value,
    edit_named_value,
    edit_named_value,
    edit_table_cell,
    edit_table_cell,
    edit_table_cell,
    edit_delete_sheet,
    edit_rename_sheet,
    edit_defined_name,
    edit_table,
    edit_merge,
    edit_hide_rows,
    edit_extra_columns,
    edit_insert_rows,
    edit_clear_table,
    edit_swap_rows,
    edit_units,
    edit_aadt,
)


def mutate(book: Workbook, draw: Callable) -> list[str]:
    """Zero to four edits (zero: the example as shipped, which must analyse)."""
    n = draw(st.integers(0, 4))
    return [draw(st.sampled_from(EDITS))(book, draw) for _ in range(n)]


# --- the property -------------------------------------------------------------------------------

_QUOTED = re.compile(r"^'(?P<sheet>.+)'$")
_CELL = re.compile(r"^\$?[A-Z]{1,3}\$?[1-9][0-9]*$")
_THING = re.compile(r"^(?P<sheet>.+) \((?:sheet|name \w+|table \w+)\)$")


def sheet_of(where: str) -> str | None:
    """The sheet a problem location names (``Site!B8``, ``'Run log'!A1``, ``Site (name x)``)."""
    if "!" in where:
        sheet, cell = where.rsplit("!", 1)
        if not _CELL.match(cell):
            return None
        m = _QUOTED.match(sheet)
        return m.group("sheet") if m else sheet
    m = _THING.match(where)
    if m:
        return m.group("sheet")
    if where.startswith("sheet '") and where.endswith("'"):
        return where[len("sheet '") : -1]
    return None


def assert_located(problems: list[Problem], book: Workbook, source: str) -> None:
    assert problems, "a PlanError with no problem"
    sheets = {*book.sheetnames, *L.INPUT_SHEETS}
    for p in problems:
        assert p.message.strip(), p
        assert p.where.strip(), p
        if p.where == source:  # the file as a whole: only when nothing of wzq's is in it
            assert "none of the wzq input names or tables" in p.message, p
            continue
        sheet = sheet_of(p.where)
        assert sheet is not None, f"location names no sheet and cell: {p}"
        assert sheet in sheets, f"location names a sheet the workbook does not have: {p}"


def check_result(result: wzq.Result) -> None:
    """A complete analysis: one finite row per hour of the demand period."""
    plan = result.plan
    d = plan.demand
    hours = math.ceil(len(d.flows_veh_h) * d.interval_s / 3600)
    h = result.hourly
    assert len(h) == hours
    for col in ("demand_veh_h", "capacity_veh_h", "queue_max_veh", "delay_veh_h"):
        values = h[col].to_numpy(dtype=float)
        assert np.all(np.isfinite(values)), col
        assert np.all(values >= -1e-9), col
    s = result.summary
    assert math.isfinite(s.queue_at_end_veh) and s.queue_at_end_veh >= -1e-9


def outcome_of(book: Workbook, source: str) -> str:
    try:
        plan = read_plan_from_book(book, source)
        result = wzq.analyse(plan)
        check_result(result)
    except PlanError as e:
        assert_located(e.problems, book, source)
        return "refused"
    return "analysed"


# --- the tests -------------------------------------------------------------------------------


def test_the_examples_as_shipped_analyse() -> None:
    for name in BASES:
        assert outcome_of(clone(base_book(name)), f"{name}.xlsx") == "analysed"


def test_location_parsing() -> None:
    assert sheet_of("Site!B8") == "Site"
    assert sheet_of("'Permit table'!A1") == "Permit table"
    assert sheet_of("Site (name site_lanes)") == "Site"
    assert sheet_of("Demand (table DemandTable)") == "Demand"
    assert sheet_of("plan.xlsx: demand") is None
    assert sheet_of("Site!notacell") is None


#: Generated workbooks: 2,000 on the ci profile (the guarantee), a tenth locally.
N_BOOKS = examples(2000)
FUZZ = settings(
    max_examples=N_BOOKS,
    deadline=None,
    derandomize=True,
    database=None,
    print_blob=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)


def test_two_thousand_workbooks_analyse_or_say_where() -> None:
    seen: Counter[str] = Counter()
    edits: Counter[str] = Counter()

    @FUZZ
    @given(st.sampled_from(BASES), st.data())
    def one(name: str, data: st.DataObject) -> None:
        book = clone(base_book(name))
        done = mutate(book, data.draw)
        edits.update(e.split(" (")[0] for e in done)
        seen[outcome_of(book, f"{name}.xlsx")] += 1

    one()
    assert sum(seen.values()) >= N_BOOKS
    # both outcomes are well represented: the edits neither always break the plan
    # nor never do
    assert seen["analysed"] >= N_BOOKS // 10, seen
    assert seen["refused"] >= N_BOOKS // 4, seen
    assert len(edits) >= (15 if N_BOOKS >= 2000 else 8), edits


# --- through files and the command -----------------------------------------------------------


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@settings(
    max_examples=examples(30),
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)
@given(name=st.sampled_from(BASES), data=st.data())
def test_saved_workbooks_through_check_and_run(
    name: str, data: st.DataObject, tmp_path_factory: pytest.TempPathFactory, capsys
) -> None:
    folder = tmp_path_factory.mktemp("fuzzfile")
    book = load_workbook(io.BytesIO(base_bytes(name)))
    mutate(book, data.draw)
    src = folder / f"{name}.xlsx"
    try:
        book.save(src)
    except Exception:  # an edit openpyxl itself cannot write (e.g. a broken table): not a file
        return
    before = _digest(src)
    try:
        read_plan(src)
        expected = cli.EXIT_OK
    except PlanError as e:
        assert_located(e.problems, load_workbook(src), src.name)
        expected = cli.EXIT_INPUT
    assert cli.main(["check", str(src)]) == expected
    out = folder / "results.xlsx"
    assert cli.main(["run", str(src), "-o", str(out)]) == expected
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert _digest(src) == before
    if expected == cli.EXIT_OK:
        assert load_workbook(out).sheetnames[-len(L.OUTPUT_SHEETS) :] == list(L.OUTPUT_SHEETS)
    else:
        assert not out.exists()


# --- hostile files ---------------------------------------------------------------------------
#
# Each is refused with a clear message naming the file, through every entry point (wzq check,
# wzq show, wzq run, a bulk run), in bounded time and memory, and the file is left as it was.

LAUGHS = (  # the "billion laughs" entity expansion (OWASP XML External Entity guidance)
    b'<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol">'
    + b"".join(
        b'<!ENTITY lol%d "%s">' % (i, b"&lol%d;" % (i - 1) * 10 if i > 1 else b"&lol;" * 10)
        for i in range(1, 10)
    )
    + b"]>"
)
SST = (
    b'<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
    b"<si><t>&lol9;</t></si></sst>"
)


def _rezip(data: bytes, replace: dict[str, bytes], add: dict[str, bytes] | None = None) -> bytes:
    out = io.BytesIO()
    with (
        zipfile.ZipFile(io.BytesIO(data)) as zin,
        zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zout,
    ):
        for item in zin.infolist():
            zout.writestr(item.filename, replace.get(item.filename, zin.read(item.filename)))
        for name, part in (add or {}).items():
            zout.writestr(name, part)
    return out.getvalue()


def _sheet_part(data: bytes) -> str:
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        return next(n for n in z.namelist() if n.startswith("xl/worksheets/sheet"))


def _encrypted(data: bytes) -> bytes | None:
    try:
        from msoffcrypto.format.ooxml import OOXMLFile
    except ImportError:  # msoffcrypto-tool comes with oletools
        return None
    out = io.BytesIO()
    OOXMLFile(io.BytesIO(data)).encrypt("secret", out)
    return out.getvalue()


def hostile_files(folder: Path) -> dict[str, tuple[Path, str]]:
    """name -> (file, words the refusal must contain)."""
    good = base_bytes(BASES[0])
    sheet = _sheet_part(good)
    with zipfile.ZipFile(io.BytesIO(good)) as z:
        sheet_xml = z.read(sheet)
        workbook_xml = z.read("xl/workbook.xml")
    files: dict[str, tuple[str, bytes, str]] = {
        "entities in shared strings": (  # the template has a shared-strings part to replace
            "laughs.xlsx",
            _rezip(TEMPLATE.read_bytes(), {"xl/sharedStrings.xml": LAUGHS + SST}),
            "declares XML entities",
        ),
        "entities in a sheet": (
            "sheet-entities.xlsx",
            _rezip(good, {sheet: LAUGHS + sheet_xml.split(b"?>", 1)[-1]}),
            "declares XML entities",
        ),
        "entities after a long comment": (  # past any look at the first few kilobytes
            "late-doctype.xlsx",
            _rezip(
                good,
                {
                    "xl/workbook.xml": b'<?xml version="1.0"?><!--'
                    + b" " * 10_000
                    + b"-->"
                    + LAUGHS[len(b'<?xml version="1.0"?>') :]
                    + workbook_xml.split(b"?>", 1)[-1]
                },
            ),
            "declares XML entities",
        ),
        "utf-16 part": (
            "wide.xlsx",
            _rezip(good, {sheet: sheet_xml.decode("utf-8").encode("utf-16")}),
            "UTF-16",
        ),
        "zip bomb": (
            "bomb.xlsx",
            _rezip(good, {}, {"xl/worksheets/sheet99.xml": b"<x/>" + b" " * (64 * 2**20)}),
            "zip bomb",
        ),
        "too many parts": (
            "parts.xlsx",
            _rezip(good, {}, {f"xl/media/p{i}.bin": b"" for i in range(5_001)}),
            "parts, over the limit of 5000",
        ),
        "renamed text file": ("notes.xlsx", b"Site notes, not a workbook\n" * 40, "not a zip"),
        "damaged zip": ("cut.xlsx", good[: len(good) // 2], "damaged or not a workbook"),
        "zip of something else": (
            "archive.xlsx",
            _zip_of({"readme.txt": b"hello"}),
            "no workbook part",
        ),
        "old binary xls": ("old.xls", OLE_MAGIC + bytes(504), ".xls"),
        "old binary named xlsx": (
            "old-renamed.xlsx",
            OLE_MAGIC + bytes(504),
            "encrypted or password-protected (or an old binary format)",
        ),
        "empty": ("empty.xlsx", b"", "empty (0 bytes)"),
    }
    locked = _encrypted(good)
    if locked is not None:
        files["encrypted"] = ("locked.xlsx", locked, "encrypted or password-protected")
    out = {}
    for key, (name, data, words) in files.items():
        path = folder / name
        path.write_bytes(data)
        out[key] = (path, words)
    return out


def _zip_of(parts: dict[str, bytes]) -> bytes:
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w") as z:
        for name, data in parts.items():
            z.writestr(name, data)
    return out.getvalue()


@pytest.fixture(scope="module")
def hostile(tmp_path_factory) -> dict[str, tuple[Path, str]]:
    return hostile_files(tmp_path_factory.mktemp("hostile"))


def test_defusedxml_guards_openpyxl() -> None:
    import openpyxl.xml

    assert openpyxl.xml.DEFUSEDXML is True


def test_entities_in_a_sheet_are_refused_even_past_the_pre_check(hostile) -> None:
    """With the pre-parse inspection skipped, openpyxl's sheet parser (defusedxml) refuses."""
    for key in ("entities in a sheet", "entities in shared strings"):
        path, _ = hostile[key]
        tracemalloc.start()
        t0 = time.perf_counter()
        with pytest.raises(PlanError, match="declares XML entities") as e:
            book_from_bytes(path.read_bytes(), path)
        seconds = time.perf_counter() - t0
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        assert e.value.problems[0].where == path.name
        assert seconds < 5 and peak < 64 * 2**20


def test_without_defusedxml_no_workbook_is_read(hostile, monkeypatch) -> None:
    import openpyxl.xml

    monkeypatch.setattr(openpyxl.xml, "DEFUSEDXML", False)
    path = EXAMPLES / f"{BASES[0]}.xlsx"
    with pytest.raises(PlanError, match="defusedxml is not active"):
        read_plan(path)


@pytest.mark.parametrize("command", ["check", "show", "run"])
def test_hostile_files_are_refused_by_every_command(hostile, command, tmp_path, capsys) -> None:
    for key, (path, words) in hostile.items():
        before = _digest(path)
        out = tmp_path / f"out{path.suffix}"
        args = [command, str(path)] + (["-o", str(out)] if command == "run" else [])
        tracemalloc.start()
        t0 = time.perf_counter()
        code = cli.main(args)
        seconds = time.perf_counter() - t0
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        err = capsys.readouterr().err
        assert code == cli.EXIT_INPUT, key
        assert "Traceback" not in err, key
        first = err.splitlines()[0]
        assert first.startswith(f"wzq: {path.name}:") or first.startswith(f"wzq: {path}:"), key
        assert words in err, (key, err)
        assert seconds < 10, key  # bounded time (the zip bomb is never inflated)
        assert peak < 96 * 2**20, key  # bounded memory
        assert _digest(path) == before, key
        assert not out.exists(), key


def test_hostile_files_in_a_bulk_run_are_listed_not_fatal(hostile, tmp_path) -> None:
    from wzq.io.batch.runner import run_batch

    folder = tmp_path / "plans"
    folder.mkdir()
    for path, _ in hostile.values():
        if path.suffix == ".xlsx":
            (folder / path.name).write_bytes(path.read_bytes())
    (folder / "good.xlsx").write_bytes(base_bytes(BASES[0]))
    result = run_batch(folder, workers=1)
    by_file = {o.file: o for o in result.outcomes}
    assert by_file["good.xlsx"].analysed
    bad = [o for name, o in by_file.items() if name != "good.xlsx"]
    assert len(bad) == sum(1 for p, _ in hostile.values() if p.suffix == ".xlsx")
    for o in bad:
        assert not o.analysed and o.issues, o.file
        assert all(i.stage == "input" and i.where == o.file for i in o.issues), o.issues
