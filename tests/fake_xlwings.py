"""An in-memory stand-in for the part of xlwings' object model the live backend uses.

Excel does not run on Linux, so :mod:`wzq.io.live.backend` is tested against
these classes. They carry xlwings' own class, method and attribute names
(``Book.sheets``, ``Sheets.add``, ``Range.value``, ``Range.number_format``,
``Chart.set_source_data`` ...), and they behave the way Excel behaves through
xlwings on Windows where that matters to wzq:

* **typing into a cell** (``Range.value = ...``): text is read the way Excel
  reads an entry: ``'text`` is the text without the apostrophe; ``=...`` and a
  leading ``+``/``-``/``@`` make a formula (kept as a :class:`Formula`, never
  calculated); numbers, times (``21:00``), dates (``2027-05-03``), ``TRUE`` /
  ``FALSE`` and error words become numbers, dates, logicals and errors;
  a date entered into a General cell gets a date format;
* **reading a cell**: numbers are floats; a number in a cell with a date or
  time format comes back as a datetime counted from 1899-12-30 (so a time of
  day is a datetime on that day, 24:00 is 1899-12-31); an error is ``None``
  unless ``options(err_to_str=True)``;
* the used range is the box around every cell with a value or a format;
  ``Sheets.add`` refuses a name already taken (in any case) and makes the new
  sheet active; ``Names.add`` replaces a name of the same scope; deleting a
  sheet deletes its own names and charts;
* a chart's ``set_source_data(rng, plot_by="columns")`` makes one series per
  column, named by a first row of text; a first column of text gives the
  categories; on an XY scatter chart the first of several columns gives the
  x values (``plot_by="rows"`` the same across; a range of several areas is
  read as if its areas were side by side). ``Chart.api`` is
  ``(chart object, chart)`` as on Windows, with
  ``SeriesCollection().NewSeries().Formula = "=SERIES(...)"``.

Every public attribute the code under test reads or sets on these objects is
recorded in :data:`TOUCHED` as ``(xlwings class name, attribute)``, so a test
can check that each one exists in the installed xlwings. Code in this module
uses only underscore names on other fake objects, so its own work is not
recorded.

``open_book(path)`` opens a workbook file as Excel would show it
(cells, number formats, defined names, Excel tables; formulas as their saved
results; charts of the file are not loaded).
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

import xlwings.main as xw
from openpyxl import load_workbook
from openpyxl.cell.cell import ERROR_CODES
from openpyxl.styles.numbers import is_date_format
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.utils.cell import range_to_tuple

OLE_EPOCH = dt.datetime(1899, 12, 30)
MAX_ROWS = 1_048_576
MAX_COLS = 16_384
DEFAULT_WIDTH = 8.43  # characters
DEFAULT_HEIGHT = 15.0  # points

#: (xlwings class, attribute) for every public attribute touched from outside.
TOUCHED: set[tuple[str, str]] = set()


class Recorded:
    """Records public attribute reads and writes under the xlwings class name ``XL``."""

    XL: ClassVar[str] = ""

    def __getattribute__(self, name: str) -> Any:
        if not name.startswith("_"):
            TOUCHED.add((type(self).XL, name))
        return object.__getattribute__(self, name)

    def __setattr__(self, name: str, value: Any) -> None:
        if not name.startswith("_"):
            TOUCHED.add((type(self).XL, name))
        object.__setattr__(self, name, value)

    def _touch(self, name: str) -> None:
        TOUCHED.add((type(self).XL, name))


@dataclass(frozen=True)
class Formula:
    """A formula Excel would calculate (the stand-in keeps its text)."""

    text: str


@dataclass(frozen=True)
class ExcelError:
    code: str


@dataclass
class Cell:
    value: Any = None  # float | str | bool | Formula | ExcelError | None
    number_format: str = "General"
    color: tuple[int, int, int] | None = None
    bold: bool = False
    italic: bool = False
    size: float = 11.0
    font_color: tuple[int, int, int] | None = None
    wrap_text: bool = False
    horizontal_alignment: str = "general"

    def is_default(self) -> bool:
        return self == Cell()


def serial(value: dt.datetime | dt.date) -> float:
    if not isinstance(value, dt.datetime):
        value = dt.datetime.combine(value, dt.time())
    return (value - OLE_EPOCH).total_seconds() / 86400.0


def from_serial(x: float) -> dt.datetime:
    t = OLE_EPOCH + dt.timedelta(days=x)
    ms = round(t.microsecond / 1000)
    return t.replace(microsecond=0) + dt.timedelta(milliseconds=ms)


def _rgb(value: Any) -> tuple[int, int, int] | None:
    if value is None or isinstance(value, tuple):
        return value
    if isinstance(value, str):
        text = value.lstrip("#")
        return (int(text[0:2], 16), int(text[2:4], 16), int(text[4:6], 16))
    raise TypeError(f"colour {value!r}")


_NUMBER = re.compile(r"^[+-]?(?:\d{1,3}(?:,\d{3})+|\d+)?(?:\.\d+)?(?:[eE][+-]?\d+)?%?$")
_TIME = re.compile(r"^(\d{1,2}):(\d{2})(?::(\d{2}))?$")
_DATE = re.compile(r"^(?:[A-Za-z]{3},?\s+)?(\d{4})-(\d{1,2})-(\d{1,2})(?:\s+(\d{1,2}):(\d{2}))?$")
_US_DATE = re.compile(r"^(\d{1,2})/(\d{1,2})/(\d{2,4})$")


def typed(text: str) -> tuple[Any, str | None]:
    """What Excel stores for text typed (or set through ``Range.value``) into a cell,
    and the number format Excel gives the cell for it (``None``: unchanged)."""
    if text.startswith("'"):
        return text[1:], None
    if text.startswith("="):
        return Formula(text), None
    s = text.strip()
    if s.upper() in ("TRUE", "FALSE"):
        return s.upper() == "TRUE", None
    if s.upper() in ERROR_CODES:
        return ExcelError(s.upper()), None
    if s and any(ch.isdigit() for ch in s) and _NUMBER.match(s):
        x = float(s.rstrip("%").replace(",", ""))
        return (x / 100, "0%") if s.endswith("%") else (x, None)
    m = _TIME.match(s)
    if m and int(m.group(2)) < 60:
        h, mi, sec = int(m.group(1)), int(m.group(2)), int(m.group(3) or 0)
        return (h * 3600 + mi * 60 + sec) / 86400.0, "h:mm"
    m = _DATE.match(s)
    if m:
        y, mo, d, hh, mm = (int(g) if g else 0 for g in m.groups())
        with_time = m.group(4) is not None
        when = dt.datetime(y, mo, d, hh, mm)
        return serial(when), "yyyy-mm-dd h:mm" if with_time else "yyyy-mm-dd"
    m = _US_DATE.match(s)
    if m:
        mo, d, y = (int(g) for g in m.groups())
        return serial(dt.datetime(y if y > 99 else 2000 + y, mo, d)), "m/d/yyyy"
    if s[:1] in ("+", "-", "@"):
        return Formula("=" + s), None
    return text, None


def enter(cell: Cell, value: Any) -> None:
    """Store ``value`` in ``cell`` the way Excel does when xlwings sets it."""
    if value is None:
        cell.value = None
    elif isinstance(value, bool):
        cell.value = value
    elif isinstance(value, int | float) and not isinstance(value, bool):
        cell.value = float(value)
    elif isinstance(value, dt.datetime | dt.date):
        cell.value = serial(value)
        if cell.number_format == "General":
            cell.number_format = "m/d/yyyy h:mm"
    elif isinstance(value, str):
        stored, fmt = typed(value)
        cell.value = stored
        if fmt and cell.number_format == "General":
            cell.number_format = fmt
    else:
        raise TypeError(f"xlwings cannot write a {type(value).__name__}")


def shown(cell: Cell | None, err_to_str: bool = False) -> Any:
    """What xlwings reads back from a cell."""
    if cell is None:
        return None
    v = cell.value
    if isinstance(v, ExcelError):
        return v.code if err_to_str else None
    if isinstance(v, float) and is_date_format(cell.number_format):
        return from_serial(v)
    return v


def _bounds(address: str) -> tuple[int, int, int, int]:
    """(first row, first col, last row, last col) of an A1 address (whole rows/columns too)."""
    c0, r0, c1, r1 = range_boundaries(address.replace("$", ""))
    return (r0 or 1, c0 or 1, r1 or MAX_ROWS, c1 or MAX_COLS)


def _address(r0: int, c0: int, r1: int, c1: int) -> str:
    first = f"${get_column_letter(c0)}${r0}"
    return first if (r0, c0) == (r1, c1) else f"{first}:${get_column_letter(c1)}${r1}"


def quote(sheet: str) -> str:
    if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_.]*", sheet):
        return sheet
    return "'" + sheet.replace("'", "''") + "'"


# --- application and book ----------------------------------------------------------------


class FakeApp(Recorded):
    XL = "App"

    def __init__(self) -> None:
        self._alerts: list[dict[str, Any]] = []
        self._screen_updating = True
        self._status_bar: str | bool = False

    def alert(
        self, prompt: str, title: str | None = None, buttons: str = "ok", mode: str | None = None,
        callback: str | None = None,
    ) -> str:  # fmt: skip
        self._alerts.append({"prompt": prompt, "title": title, "buttons": buttons, "mode": mode})
        return "ok"

    @property
    def screen_updating(self) -> bool:
        return self._screen_updating

    @screen_updating.setter
    def screen_updating(self, value: bool) -> None:
        self._screen_updating = bool(value)

    @property
    def status_bar(self) -> str | bool:
        return self._status_bar

    @status_bar.setter
    def status_bar(self, value: str | bool) -> None:
        self._status_bar = value


class FakeBook(Recorded):
    XL = "Book"

    def __init__(self, name: str = "Book1.xlsx", app: FakeApp | None = None) -> None:
        self._name = name
        self._app = app or FakeApp()
        self._sheets: list[FakeSheet] = []
        self._names: dict[str, FakeName] = {}
        self._active: FakeSheet | None = None
        self._fullname = name  # the full path once opened from a file (xlwings Book.fullname)

    @property
    def name(self) -> str:
        return self._name

    @property
    def fullname(self) -> str:
        return self._fullname

    @property
    def app(self) -> FakeApp:
        return self._app

    @property
    def sheets(self) -> FakeSheets:
        return FakeSheets(self)

    @property
    def names(self) -> FakeNames:
        return FakeNames(self, None)

    @property
    def sheet_names(self) -> list[str]:
        return [s._name for s in self._sheets]

    # -- test helpers (not part of xlwings) --

    def _sheet(self, name: str) -> FakeSheet:
        for s in self._sheets:
            if s._name.lower() == name.lower():
                return s
        raise KeyError(name)

    def _add_sheet(self, name: str, index: int | None = None) -> FakeSheet:
        if any(s._name.lower() == name.lower() for s in self._sheets):
            raise ValueError(f"Sheet named '{name}' already present in workbook")
        sheet = FakeSheet(self, name)
        self._sheets.insert(len(self._sheets) if index is None else index, sheet)
        self._active = sheet
        return sheet

    @classmethod
    def _from_file(cls, path: str | Path, app: FakeApp | None = None) -> FakeBook:
        path = Path(path)
        wb = load_workbook(path, data_only=True)
        book = cls(path.name, app)
        book._fullname = str(path.resolve())
        for ws in wb.worksheets:
            sheet = book._add_sheet(ws.title)
            for (r, c), src in ws._cells.items():
                cell = sheet._cell(r, c)
                cell.number_format = src.number_format or "General"
                v = src.value
                if isinstance(v, dt.datetime | dt.date):
                    v = serial(v)
                elif isinstance(v, dt.time):
                    v = (v.hour * 3600 + v.minute * 60 + v.second) / 86400.0
                elif isinstance(v, dt.timedelta):
                    v = v.total_seconds() / 86400.0
                elif isinstance(v, int) and not isinstance(v, bool):
                    v = float(v)
                elif isinstance(v, str) and src.data_type == "e":
                    v = ExcelError(v)
                cell.value = v
            for t in ws.tables.values():
                sheet._tables.append(
                    FakeTable(sheet, t.name, t.ref, t.headerRowCount != 0, bool(t.totalsRowCount))
                )
            for name, dn in ws.defined_names.items():
                book._names[f"{quote(ws.title)}!{name}"] = FakeName(
                    book, f"{quote(ws.title)}!{name}", "=" + dn.attr_text
                )
        for name, dn in wb.defined_names.items():
            book._names[name] = FakeName(book, name, "=" + dn.attr_text)
        book._active = book._sheet(wb.active.title)
        return book

    def _values(self, sheet: str) -> dict[tuple[int, int], Any]:
        """Every non-empty cell of a sheet as xlwings reads it."""
        s = self._sheet(sheet)
        return {k: shown(c) for k, c in s._cells.items() if c.value is not None}


def open_book(path: str | Path, app: FakeApp | None = None) -> FakeBook:
    """The workbook in ``path`` as Excel shows it once opened (the file is only read)."""
    return FakeBook._from_file(path, app)


class FakeSheets(Recorded):
    XL = "Sheets"

    def __init__(self, book: FakeBook) -> None:
        self._book = book

    def __len__(self) -> int:
        self._touch("__len__")
        return len(self._book._sheets)

    def __iter__(self):
        self._touch("__iter__")
        return iter(list(self._book._sheets))

    def __getitem__(self, key: int | str) -> FakeSheet:
        self._touch("__getitem__")
        if isinstance(key, int):
            return self._book._sheets[key]
        return self._book._sheet(key)

    def __contains__(self, key: str) -> bool:
        self._touch("__contains__")
        return any(s._name.lower() == key.lower() for s in self._book._sheets)

    @property
    def count(self) -> int:
        return len(self._book._sheets)

    @property
    def active(self) -> FakeSheet | None:
        return self._book._active

    def add(
        self, name: str | None = None, before: FakeSheet | None = None,
        after: FakeSheet | None = None,
    ) -> FakeSheet:  # fmt: skip
        sheets = self._book._sheets
        if name is None:
            name = f"Sheet{len(sheets) + 1}"
        if before is not None:
            index = sheets.index(before)
        elif after is not None:
            index = sheets.index(after) + 1
        else:
            index = sheets.index(self._book._active) if self._book._active in sheets else 0
        return self._book._add_sheet(name, index)


# --- sheet --------------------------------------------------------------------------------


class FakeSheet(Recorded):
    XL = "Sheet"

    def __init__(self, book: FakeBook, name: str) -> None:
        self._book = book
        self._name = name
        self._cells: dict[tuple[int, int], Cell] = {}
        self._widths: dict[int, float] = {}
        self._heights: dict[int, float] = {}
        self._merged: list[str] = []
        self._tables: list[FakeTable] = []
        self._charts: list[FakeChart] = []
        self._pictures: list[FakePicture] = []
        self._print_area: str | None = None
        self._gridlines = True

    def _cell(self, r: int, c: int) -> Cell:
        cell = self._cells.get((r, c))
        if cell is None:
            cell = self._cells[(r, c)] = Cell()
        return cell

    @property
    def name(self) -> str:
        return self._name

    @property
    def book(self) -> FakeBook:
        return self._book

    @property
    def index(self) -> int:
        return self._book._sheets.index(self) + 1

    def range(self, first: Any, second: Any = None) -> FakeRange:
        if isinstance(first, tuple):
            r0, c0 = first
            r1, c1 = second if second is not None else first
            return FakeRange(self, r0, c0, r1, c1)
        if "," in first:  # several areas, as a selection made with Ctrl
            areas = [_bounds(part) for part in first.split(",")]
            rng = FakeRange(self, *areas[0])
            rng._areas = areas
            return rng
        r0, c0, r1, c1 = _bounds(first)
        if second is not None:
            _, _, r1, c1 = _bounds(second)
        return FakeRange(self, r0, c0, r1, c1)

    @property
    def used_range(self) -> FakeRange:
        """Like Excel's: from the first to the last cell with a value or in a merged range."""
        boxes = [(r, c, r, c) for r, c in self._cells] + [_bounds(m) for m in self._merged]
        if not boxes:
            return FakeRange(self, 1, 1, 1, 1)
        r0, c0, r1, c1 = zip(*boxes, strict=True)
        return FakeRange(self, min(r0), min(c0), max(r1), max(c1))

    @property
    def tables(self) -> FakeTables:
        return FakeTables(self)

    @property
    def charts(self) -> FakeCharts:
        return FakeCharts(self)

    @property
    def pictures(self) -> FakePictures:
        return FakePictures(self)

    @property
    def names(self) -> FakeNames:
        return FakeNames(self._book, self)

    @property
    def page_setup(self) -> FakePageSetup:
        return FakePageSetup(self)

    @property
    def show_gridlines(self) -> bool:
        return self._gridlines

    @show_gridlines.setter
    def show_gridlines(self, value: bool) -> None:
        self._gridlines = bool(value)

    def activate(self) -> None:
        self._book._active = self

    def clear(self) -> None:
        self._cells.clear()
        self._merged.clear()

    def delete(self) -> None:
        book = self._book
        if len(book._sheets) == 1:
            raise RuntimeError("a workbook must contain at least one visible worksheet")
        book._sheets.remove(self)
        prefix = f"{quote(self._name)}!"
        for key in [k for k in book._names if k.startswith(prefix)]:
            del book._names[key]
        if book._active is self:
            book._active = book._sheets[0]


class FakePageSetup(Recorded):
    XL = "PageSetup"

    def __init__(self, sheet: FakeSheet) -> None:
        self._sheet = sheet

    @property
    def print_area(self) -> str | None:
        return self._sheet._print_area

    @print_area.setter
    def print_area(self, value: str | None) -> None:
        if value:
            for part in value.split(","):
                _bounds(part)  # Excel refuses what is not an address
        self._sheet._print_area = value or None


# --- range --------------------------------------------------------------------------------


class FakeRange(Recorded):
    XL = "Range"

    def __init__(self, sheet: FakeSheet, r0: int, c0: int, r1: int, c1: int) -> None:
        self._sheet = sheet
        self._r0, self._c0 = min(r0, r1), min(c0, c1)
        self._r1, self._c1 = max(r0, r1), max(c0, c1)
        self._areas = [(self._r0, self._c0, self._r1, self._c1)]
        self._ndim: int | None = None
        self._err_to_str = False

    def _coords(self):
        for r0, c0, r1, c1 in self._areas:
            for r in range(r0, r1 + 1):
                for c in range(c0, c1 + 1):
                    yield r, c

    def _each(self):
        if (self._r1 - self._r0 + 1) * (self._c1 - self._c0 + 1) > 200_000:
            raise MemoryError("the stand-in does not format whole sheets cell by cell")
        for r, c in self._coords():
            yield self._sheet._cell(r, c)

    # -- position --

    @property
    def row(self) -> int:
        return self._r0

    @property
    def column(self) -> int:
        return self._c0

    @property
    def shape(self) -> tuple[int, int]:
        return (self._r1 - self._r0 + 1, self._c1 - self._c0 + 1)

    @property
    def count(self) -> int:
        rows, cols = self._r1 - self._r0 + 1, self._c1 - self._c0 + 1
        return rows * cols

    @property
    def address(self) -> str:
        return self._address()

    def _address(self) -> str:
        return ",".join(_address(*area) for area in self._areas)

    @property
    def last_cell(self) -> FakeRange:
        return FakeRange(self._sheet, self._r1, self._c1, self._r1, self._c1)

    @property
    def sheet(self) -> FakeSheet:
        return self._sheet

    @property
    def left(self) -> float:
        s = self._sheet
        return sum(s._widths.get(c, DEFAULT_WIDTH) * 7 * 0.75 for c in range(1, self._c0))

    @property
    def top(self) -> float:
        s = self._sheet
        return sum(s._heights.get(r, DEFAULT_HEIGHT) for r in range(1, self._r0))

    def options(self, convert: Any = None, **options: Any) -> FakeRange:
        view = FakeRange(self._sheet, self._r0, self._c0, self._r1, self._c1)
        view._ndim = options.get("ndim")
        view._err_to_str = bool(options.get("err_to_str", False))
        return view

    # -- values --

    @property
    def value(self) -> Any:
        s = self._sheet
        rows = [
            [shown(s._cells.get((r, c)), self._err_to_str) for c in range(self._c0, self._c1 + 1)]
            for r in range(self._r0, self._r1 + 1)
        ]
        if self._ndim == 2:
            return rows
        if len(rows) == 1 and len(rows[0]) == 1:
            return rows[0][0]
        if len(rows) == 1:
            return rows[0]
        if all(len(r) == 1 for r in rows):
            return [r[0] for r in rows]
        return rows

    @value.setter
    def value(self, data: Any) -> None:
        s = self._sheet
        if isinstance(data, list | tuple) and data and isinstance(data[0], list | tuple):
            widths = {len(row) for row in data}
            if len(widths) != 1:
                raise ValueError("xlwings needs a rectangular list of lists")
            for i, row in enumerate(data):
                for j, v in enumerate(row):
                    enter(s._cell(self._r0 + i, self._c0 + j), v)
        elif isinstance(data, list | tuple):
            for j, v in enumerate(data):
                enter(s._cell(self._r0, self._c0 + j), v)
        else:
            for cell in self._each():
                enter(cell, data)

    # -- looks --

    def _common(self, attr: str) -> Any:
        values = {getattr(self._sheet._cells.get(k, Cell()), attr) for k in self._coords()}
        return values.pop() if len(values) == 1 else None

    @property
    def number_format(self) -> str | None:
        return self._common("number_format")

    @number_format.setter
    def number_format(self, value: str) -> None:
        for cell in self._each():
            cell.number_format = value

    @property
    def color(self) -> tuple[int, int, int] | None:
        return self._common("color")

    @color.setter
    def color(self, value: Any) -> None:
        rgb = _rgb(value)
        for cell in self._each():
            cell.color = rgb

    @property
    def font(self) -> FakeFont:
        return FakeFont(self)

    @property
    def wrap_text(self) -> bool | None:
        return self._common("wrap_text")

    @wrap_text.setter
    def wrap_text(self, value: bool) -> None:
        for cell in self._each():
            cell.wrap_text = bool(value)

    @property
    def horizontal_alignment(self) -> str | None:
        return self._common("horizontal_alignment")

    @horizontal_alignment.setter
    def horizontal_alignment(self, value: str) -> None:
        if value not in xw.HORIZONTAL_ALIGNMENTS:
            raise ValueError(f"Invalid horizontal_alignment {value!r}")
        for cell in self._each():
            cell.horizontal_alignment = value

    @property
    def column_width(self) -> float:
        return self._sheet._widths.get(self._c0, DEFAULT_WIDTH)

    @column_width.setter
    def column_width(self, value: float) -> None:
        if not 0 <= value <= 255:
            raise ValueError("Excel column widths are 0 to 255 characters")
        for c in range(self._c0, self._c1 + 1):
            self._sheet._widths[c] = float(value)

    @property
    def row_height(self) -> float:
        return self._sheet._heights.get(self._r0, DEFAULT_HEIGHT)

    @row_height.setter
    def row_height(self, value: float) -> None:
        if not 0 <= value <= 409:
            raise ValueError("Excel row heights are 0 to 409 points")
        for r in range(self._r0, self._r1 + 1):
            self._sheet._heights[r] = float(value)

    def merge(self, across: bool = False) -> None:
        self._sheet._merged.append(self._address().replace("$", ""))


class FakeFont(Recorded):
    XL = "Font"

    def __init__(self, rng: FakeRange) -> None:
        self._rng = rng

    def _set(self, attr: str, value: Any) -> None:
        for cell in self._rng._each():
            setattr(cell, attr, value)

    @property
    def bold(self) -> bool | None:
        return self._rng._common("bold")

    @bold.setter
    def bold(self, value: bool) -> None:
        self._set("bold", bool(value))

    @property
    def italic(self) -> bool | None:
        return self._rng._common("italic")

    @italic.setter
    def italic(self, value: bool) -> None:
        self._set("italic", bool(value))

    @property
    def size(self) -> float | None:
        return self._rng._common("size")

    @size.setter
    def size(self, value: float) -> None:
        self._set("size", float(value))

    @property
    def color(self) -> tuple[int, int, int] | None:
        return self._rng._common("font_color")

    @color.setter
    def color(self, value: Any) -> None:
        self._set("font_color", _rgb(value))


# --- names and tables -----------------------------------------------------------------------


class FakeNames(Recorded):
    XL = "Names"

    def __init__(self, book: FakeBook, sheet: FakeSheet | None) -> None:
        self._book = book
        self._scope = sheet

    def _keys(self) -> list[str]:
        if self._scope is None:
            return list(self._book._names)
        prefix = f"{quote(self._scope._name)}!"
        return [k for k in self._book._names if k.startswith(prefix)]

    def __iter__(self):
        self._touch("__iter__")
        return iter([self._book._names[k] for k in self._keys()])

    def __len__(self) -> int:
        self._touch("__len__")
        return len(self._keys())

    def __contains__(self, name: str) -> bool:
        self._touch("__contains__")
        return self._key(name) in self._keys()

    def __getitem__(self, name: str) -> FakeName:
        self._touch("__getitem__")
        return self._book._names[self._key(name)]

    def _key(self, name: str) -> str:
        if self._scope is None or "!" in name:
            return name
        return f"{quote(self._scope._name)}!{name}"

    @property
    def count(self) -> int:
        return len(self._keys())

    def contains(self, name_or_index: str) -> bool:
        return self._key(name_or_index) in self._keys()

    def add(self, name: str, refers_to: str) -> FakeName:
        if " " in name or not refers_to.startswith("="):
            raise ValueError(f"Excel refuses the name {name!r} = {refers_to!r}")
        key = self._key(name)
        self._book._names[key] = FakeName(self._book, key, refers_to)
        return self._book._names[key]


class FakeName(Recorded):
    XL = "Name"

    def __init__(self, book: FakeBook, name: str, refers_to: str) -> None:
        self._book = book
        self._name = name
        self._refers_to = refers_to

    @property
    def name(self) -> str:
        return self._name

    @property
    def refers_to(self) -> str:
        return self._refers_to

    def delete(self) -> None:
        del self._book._names[self._name]


class FakeTables(Recorded):
    XL = "Tables"

    def __init__(self, sheet: FakeSheet) -> None:
        self._sheet = sheet

    def __iter__(self):
        self._touch("__iter__")
        return iter(list(self._sheet._tables))

    def __len__(self) -> int:
        self._touch("__len__")
        return len(self._sheet._tables)

    @property
    def count(self) -> int:
        return len(self._sheet._tables)


class FakeTable(Recorded):
    XL = "Table"

    def __init__(
        self, sheet: FakeSheet, name: str, ref: str, show_headers: bool, show_totals: bool
    ) -> None:
        self._sheet = sheet
        self._name = name
        self._bounds = _bounds(ref)
        self._show_headers = show_headers
        self._show_totals = show_totals

    @property
    def name(self) -> str:
        return self._name

    @property
    def range(self) -> FakeRange:
        return FakeRange(self._sheet, *self._bounds)

    @property
    def show_headers(self) -> bool:
        return self._show_headers

    @property
    def show_totals(self) -> bool:
        return self._show_totals

    @property
    def header_row_range(self) -> FakeRange | None:
        if not self._show_headers:
            return None
        r0, c0, _, c1 = self._bounds
        return FakeRange(self._sheet, r0, c0, r0, c1)


# --- charts ---------------------------------------------------------------------------------


def _ref(rng: FakeRange) -> str:
    """``Sheet!A1:B2`` (no quotes, no dollars): a range as the tests compare it."""
    return f"{rng._sheet._name}!{rng._address().replace('$', '')}"


@dataclass
class _Series:
    name_ref: str | None
    x_ref: str | None
    y_ref: str
    chart_type: str
    line_color: tuple[int, int, int] | None = None
    fill_color: tuple[int, int, int] | None = None


class FakeCharts(Recorded):
    XL = "Charts"

    def __init__(self, sheet: FakeSheet) -> None:
        self._sheet = sheet

    def __iter__(self):
        self._touch("__iter__")
        return iter(list(self._sheet._charts))

    def __len__(self) -> int:
        self._touch("__len__")
        return len(self._sheet._charts)

    @property
    def count(self) -> int:
        return len(self._sheet._charts)

    def add(
        self, left: float = 0, top: float = 0, width: float = 355, height: float = 211,
        chart_type: str | None = None, source: FakeRange | None = None,
        plot_by: str | None = None, name: str | None = None, anchor: Any = None,
        style: int | None = 227,
    ) -> FakeChart:  # fmt: skip
        chart = FakeChart(self._sheet, name or f"Chart {len(self._sheet._charts) + 1}")
        chart._geometry = (float(left), float(top), float(width), float(height))
        self._sheet._charts.append(chart)
        if chart_type is not None:
            chart._set_type(chart_type)
        if source is not None:
            chart._source(source, plot_by)
        return chart


class FakePictures(Recorded):
    XL = "Pictures"

    def __init__(self, sheet: FakeSheet) -> None:
        self._sheet = sheet

    def __len__(self) -> int:
        self._touch("__len__")
        return len(self._sheet._pictures)

    def add(
        self, image: Any, link_to_file: bool = False, save_with_document: bool = True,
        left: float | None = None, top: float | None = None, width: float | None = None,
        height: float | None = None, name: str | None = None, update: bool = False,
        scale: float | None = None, format: str | None = None, anchor: Any = None,
        export_options: dict | None = None,
    ) -> FakePicture:  # fmt: skip
        """Excel reads the file when the picture is added (a path, as wzq gives it)."""
        picture = FakePicture(
            name or f"Picture {len(self._sheet._pictures) + 1}",
            Path(image).read_bytes(),
            (float(left or 0), float(top or 0), float(width or 0), float(height or 0)),
        )
        self._sheet._pictures.append(picture)
        return picture


class FakePicture(Recorded):
    XL = "Picture"

    def __init__(self, name: str, data: bytes, geometry: tuple[float, float, float, float]):
        self._name = name
        self._data = data
        self._geometry = geometry

    @property
    def name(self) -> str:
        return self._name


class FakeChart(Recorded):
    XL = "Chart"

    def __init__(self, sheet: FakeSheet, name: str) -> None:
        self._sheet = sheet
        self._name = name
        self._type = "column_clustered"  # Excel's default chart
        self._series: list[_Series] = []
        self._geometry = (0.0, 0.0, 355.0, 211.0)
        self._title: str | None = None
        self._legend = {"visible": True, "position": "right"}
        self._axes: dict[str, dict[str, Any]] = {"category": {}, "value": {}}

    def _set_type(self, value: str) -> None:
        if value not in xw.CHART_TYPES:
            raise ValueError(f"Invalid chart type {value!r}")
        self._type = value
        for s in self._series:
            s.chart_type = value

    def _source(self, rng: FakeRange, plot_by: str | None) -> None:
        if plot_by not in (None, "columns", "rows"):
            raise ValueError(f"Invalid plot_by {plot_by!r}")
        s = rng._sheet
        rows = sorted({r for a in rng._areas for r in range(a[0], a[2] + 1)})
        cols = sorted({c for a in rng._areas for c in range(a[1], a[3] + 1)})
        if plot_by is None:  # Excel: a series along the longer side
            plot_by = "columns" if len(rows) >= len(cols) else "rows"
        by_rows = plot_by == "rows"
        lines, along = (rows, cols) if by_rows else (cols, rows)  # one series per line

        def cell(line: int, pos: int) -> Any:
            return shown(s._cells.get((line, pos) if by_rows else (pos, line)))

        def ref(line: int, first: int, last: int) -> str:
            r0, c0, r1, c1 = (line, first, line, last) if by_rows else (first, line, last, line)
            return _ref(FakeRange(s, r0, c0, r1, c1))

        # a first cell of text on every line (the top-left one aside) names the series
        named = len(along) > 1 and all(
            isinstance(cell(n, along[0]), str) for n in lines[1:] or lines
        )
        points = along[1:] if named else along
        scatter = self._type.startswith("xy_scatter")
        x_line = None
        if len(lines) > 1 and (scatter or any(isinstance(cell(lines[0], p), str) for p in points)):
            x_line = lines[0]  # categories (or an XY chart's x values)
        self._series = [
            _Series(
                ref(n, along[0], along[0]) if named else None,
                ref(x_line, points[0], points[-1]) if x_line is not None else None,
                ref(n, points[0], points[-1]),
                self._type,
            )
            for n in lines
            if n != x_line
        ]

    @property
    def name(self) -> str:
        return self._name

    @property
    def chart_type(self) -> str:
        return self._type

    @chart_type.setter
    def chart_type(self, value: str) -> None:
        self._set_type(value)

    def set_source_data(self, source: FakeRange, plot_by: str | None = None) -> None:
        self._source(source, plot_by)

    def set_x_axis_values(self, source: FakeRange) -> None:
        for s in self._series:
            s.x_ref = _ref(source)

    @property
    def series(self) -> FakeChartSeriesCollection:
        return FakeChartSeriesCollection(self)

    @property
    def title(self) -> str | None:
        return self._title

    @title.setter
    def title(self, value: str | None) -> None:
        self._title = value

    @property
    def legend(self) -> FakeChartLegend:
        return FakeChartLegend(self)

    @property
    def category_axis(self) -> FakeChartAxis:
        return FakeChartAxis(self, "category")

    @property
    def value_axis(self) -> FakeChartAxis:
        return FakeChartAxis(self, "value")

    @property
    def api(self) -> tuple[Any, Any]:
        return (None, _ComChart(self))

    @property
    def left(self) -> float:
        return self._geometry[0]

    @property
    def top(self) -> float:
        return self._geometry[1]

    @property
    def width(self) -> float:
        return self._geometry[2]

    @property
    def height(self) -> float:
        return self._geometry[3]

    def delete(self) -> None:
        self._sheet._charts.remove(self)


class FakeChartSeriesCollection(Recorded):
    XL = "ChartSeriesCollection"

    def __init__(self, chart: FakeChart) -> None:
        self._chart = chart

    def __len__(self) -> int:
        self._touch("__len__")
        return len(self._chart._series)

    def __iter__(self):
        self._touch("__iter__")
        return iter([FakeChartSeries(s) for s in self._chart._series])

    def __getitem__(self, k: int) -> FakeChartSeries:
        self._touch("__getitem__")
        return FakeChartSeries(self._chart._series[k])


class FakeChartSeries(Recorded):
    XL = "ChartSeries"

    def __init__(self, s: _Series) -> None:
        self._s = s

    @property
    def chart_type(self) -> str:
        return self._s.chart_type

    @chart_type.setter
    def chart_type(self, value: str) -> None:
        if value not in xw.CHART_TYPES:
            raise ValueError(f"Invalid chart type {value!r}")
        self._s.chart_type = value

    @property
    def line_color(self) -> tuple[int, int, int] | None:
        return self._s.line_color

    @line_color.setter
    def line_color(self, value: Any) -> None:
        self._s.line_color = _rgb(value)

    @property
    def fill_color(self) -> tuple[int, int, int] | None:
        return self._s.fill_color

    @fill_color.setter
    def fill_color(self, value: Any) -> None:
        self._s.fill_color = _rgb(value)


class FakeChartLegend(Recorded):
    XL = "ChartLegend"

    def __init__(self, chart: FakeChart) -> None:
        self._chart = chart

    @property
    def visible(self) -> bool:
        return self._chart._legend["visible"]

    @visible.setter
    def visible(self, value: bool) -> None:
        self._chart._legend["visible"] = bool(value)

    @property
    def position(self) -> str | None:
        legend = self._chart._legend
        return legend["position"] if legend["visible"] else None

    @position.setter
    def position(self, value: str) -> None:
        if value not in xw.CHART_LEGEND_POSITIONS:
            raise ValueError(f"Invalid legend position {value!r}")
        self._chart._legend.update(position=value, visible=True)


class FakeChartAxis(Recorded):
    XL = "ChartAxis"

    def __init__(self, chart: FakeChart, which: str) -> None:
        self._axis = chart._axes[which]

    def _get(self, key: str) -> Any:
        return self._axis.get(key)

    def _put(self, key: str, value: Any) -> None:
        self._axis[key] = value

    title = property(lambda self: self._get("title"), lambda self, v: self._put("title", v))
    minimum_scale = property(
        lambda self: self._get("minimum_scale"), lambda self, v: self._put("minimum_scale", v)
    )
    maximum_scale = property(
        lambda self: self._get("maximum_scale"), lambda self, v: self._put("maximum_scale", v)
    )
    major_unit = property(
        lambda self: self._get("major_unit"), lambda self, v: self._put("major_unit", v)
    )
    number_format = property(
        lambda self: self._get("number_format"), lambda self, v: self._put("number_format", v)
    )
    visible = property(lambda self: self._get("visible"), lambda self, v: self._put("visible", v))


# --- the chart's native object, as pywin32 shows it on Windows (not recorded) -----------------

_SERIES = re.compile(r"^=SERIES\((.*)\)$")


def _split_args(text: str) -> list[str]:
    """Split a formula's arguments at commas outside quotes."""
    out, cur, quoted = [], "", False
    for ch in text:
        if ch == "'":
            quoted = not quoted
        if ch == "," and not quoted:
            out.append(cur)
            cur = ""
        else:
            cur += ch
    out.append(cur)
    return out


def _plain_ref(text: str) -> str | None:
    if not text:
        return None
    sheet, (c0, r0, c1, r1) = range_to_tuple(text)
    return f"{sheet}!{_address(r0, c0, r1, c1).replace('$', '')}"


class _ComSeries:
    def __init__(self, chart: FakeChart) -> None:
        self._chart = chart
        self._s: _Series | None = None

    @property
    def Formula(self) -> str:
        s = self._s
        return "" if s is None else f"=SERIES({s.name_ref},{s.x_ref},{s.y_ref})"

    @Formula.setter
    def Formula(self, text: str) -> None:
        m = _SERIES.match(text)
        if not m:
            raise ValueError(f"not a SERIES formula: {text}")
        args = _split_args(m.group(1))
        if len(args) != 4:
            raise ValueError(f"a SERIES formula has 4 arguments: {text}")
        name, x, y, order = args
        if int(order) != len(self._chart._series) + 1:
            raise ValueError(f"series order {order} is not the next one")
        self._s = _Series(_plain_ref(name), _plain_ref(x), _plain_ref(y) or "", self._chart._type)
        self._chart._series.append(self._s)


class _ComSeriesCollection:
    def __init__(self, chart: FakeChart) -> None:
        self._chart = chart

    @property
    def Count(self) -> int:
        return len(self._chart._series)

    def NewSeries(self) -> _ComSeries:
        return _ComSeries(self._chart)


class _ComChart:
    def __init__(self, chart: FakeChart) -> None:
        self._chart = chart

    def SeriesCollection(self) -> _ComSeriesCollection:
        return _ComSeriesCollection(self._chart)


@dataclass
class ChartView:
    """A chart as the tests compare it: series references and types, title, position."""

    series: list[tuple[str | None, str | None, str, str]] = field(default_factory=list)
    title: str | None = None


def chart_views(sheet: FakeSheet) -> list[ChartView]:
    return [
        ChartView([(s.name_ref, s.x_ref, s.y_ref, s.chart_type) for s in c._series], c._title)
        for c in sheet._charts
    ]


#: Classes standing in for xlwings classes, by the xlwings class name.
STAND_INS: dict[str, type[Recorded]] = {
    cls.XL: cls
    for cls in (
        FakeApp, FakeBook, FakeSheets, FakeSheet, FakePageSetup, FakeRange, FakeFont, FakeNames,
        FakeName, FakeTables, FakeTable, FakeCharts, FakeChart, FakeChartSeriesCollection,
        FakeChartSeries, FakeChartLegend, FakeChartAxis,
    )
}  # fmt: skip
