"""Read and validate a plan workbook made from the wzq template.

Inputs are found through workbook-scoped defined names (one per value cell) and
Excel tables (:mod:`wzq.io.workbook.layout`), never through fixed cell addresses,
so a user may insert rows, restyle and add sheets of their own; the output
sheets and any other sheet are ignored.

Every problem is collected and raised at once as :class:`wzq.engine.plan.PlanError`,
each :class:`~wzq.engine.plan.Problem` naming the sheet and cell (``Site!B8``) and what
to do. The workbook is only read, never changed.

Values are in the workbook's unit system and converted to SI with
:mod:`wzq.units`. A formula in an input cell is read through its saved
(cached) result, read from the package only when a formula is met
(:mod:`wzq.io.workbook.saved_values`).
Demand "from AADT" is expanded here into hourly demand,
``AADT x (1 + g)^(year of first day - count year) x direction share x hour share``:
the design-hour relation DDHV = AADT x K x D of the Highway Capacity Manual (from
memory; chapter not checked) applied to every hour, with K the hour's share of the
AADT (weekday or weekend column) and compound growth to the work year.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import io
import re
import warnings
from dataclasses import dataclass
from itertools import pairwise
from pathlib import Path
from typing import Any

import numpy as np
from defusedxml import DefusedXmlException
from openpyxl import load_workbook
from openpyxl.cell.cell import ERROR_CODES, MergedCell
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.utils.datetime import from_excel, to_excel
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.formula import ArrayFormula, DataTableFormula
from openpyxl.worksheet.worksheet import Worksheet

from wzq.engine.plan import (
    Closure,
    Costs,
    Demand,
    Meta,
    Options,
    Plan,
    PlanError,
    Problem,
    Site,
    Thresholds,
)
from wzq.io import fields as F
from wzq.io.workbook import formula_values as FV
from wzq.io.workbook import layout as L
from wzq.io.workbook.safety import read_checked
from wzq.io.workbook.saved_values import SharedStrings, typed

#: File suffixes read as workbooks.
WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")
#: Hourly demand above this per lane in normal operation is taken for a typing or
#: unit mistake (e.g. a two-way count or a daily total) (common practice, no source).
MAX_DEMAND_VEH_H_LN = 3000.0
DAY = 86_400  # seconds
#: The last date-time serial a spreadsheet holds (9999-12-31 23:59:59, 1900 date system).
MAX_SERIAL = 2_958_465.99999
#: Years a closure plan's dates may fall in; anything else is a typing mistake, and it
#: keeps date arithmetic far from the ends of the calendar (common practice, no source).
FIRST_YEAR, LAST_YEAR = 1900, 2199
#: Serial numbers below this are days of 1900: a small number typed where a date or
#: time belongs, never a closure date (common practice, no source).
DAYS_IN_1900 = 367
#: A growth rate in percent per year smaller than this (in size) looks like a fraction
#: typed for a percentage (0.02 for 2 %) (common practice, no source).
FRACTION_GROWTH = 0.1

_MISSING = object()  # a value that could not be read (its problem is already recorded)
_ISO_DATE = re.compile(r"^(?:[A-Za-z]{3},?\s+)?(\d{4}-\d{1,2}-\d{1,2})$")
_ISO_DATETIME = re.compile(r"^(?:[A-Za-z]{3},?\s+)?(\d{4}-\d{1,2}-\d{1,2})[ T](\d{1,2}):(\d{2})$")
_CLOCK = re.compile(r"^(\d{1,2}):(\d{2})(?::(\d{2}))?$")

#: Where a plan check (``wzq.engine.plan.validate``) locates a problem -> the defined name.
_PLAN_KEYS: dict[str, str] = {
    **{f.attribute: f.name for f in F.PLAN_INPUTS if f.name},
    **{a: F.BY_ATTRIBUTE[b].name for a, b in F.LOCATION_ALIASES.items()},
}
#: Defined name -> the JSON-form plan key (:meth:`wzq.engine.plan.Plan.where`).
_JSON_KEYS: dict[str, str] = {f.name: f.key for f in F.ALL_FIELDS if f.key}


#: Table columns checked like named values (blank handling, type, range).
_FLOW = F.Field("demand", "Demand", "number", "veh/h", bounds=(0.0, float("inf")))
_SHARES = {h: F.Field(h, h, "number", "%", bounds=(0.0, 100.0)) for h in L.SHARE_COLUMNS[1:]}
_LANES_CLOSED = F.Field(
    "lanes_closed", "Lanes closed", "int", bounds=(0, 7), note="0 is a shoulder closure"
)
_BARRIER = F.Field("barrier", "Barrier", "choice", choices=L.BARRIER_WORDS)
_NIGHT = F.Field("night", "Night work", "choice", blank=None, choices=L.NIGHT_WORDS)
_OVERRIDE = F.Field(
    "override", "Capacity override", "number", "veh/h/ln", blank=None, bounds=(100.0, 3000.0)
)
_NOTE = F.Field("note", "Note", "text", blank="")


def cell_ref(sheet: str, row: int, col: int) -> str:
    """``Site!B8``; a sheet name with spaces or punctuation is quoted as in a formula."""
    name = sheet if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_.]*", sheet) else f"'{sheet}'"
    return f"{name}!{get_column_letter(col)}{row}"


def _percent_format(fmt: str | None) -> bool:
    """A number format that shows values times 100 with a percent sign (``0%``, ``0.0%``);
    a percent sign in quotes or escaped (``0.0"%"``, ``0\\%``) does not scale."""
    if not fmt or "%" not in fmt:
        return False
    plain = re.sub(r'"[^"]*"|\\.|\[[^\]]*\]', "", fmt)
    return "%" in plain


def _blank(v: Any) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


def _norm(text: str) -> str:
    return " ".join(str(text).split()).casefold()


def _fmt(x: float) -> str:
    return f"{x:,.6g}" if abs(x) < 1e6 else f"{x:,.0f}"


def _show(v: Any) -> str:
    """A cell value as the user would recognise it in a message."""
    if isinstance(v, str):
        return f"'{v.strip()}'"
    if isinstance(v, dt.datetime):
        return v.strftime("%Y-%m-%d %H:%M")
    if isinstance(v, float):
        return _fmt(v)
    return str(v)


def _when(t: dt.datetime) -> str:
    return t.strftime("%a %Y-%m-%d %H:%M")


@dataclass(frozen=True)
class _Clock:
    """A time of day typed in a cell: seconds after midnight (86400 is 24:00)."""

    seconds: int


@dataclass
class _Table:
    name: str
    ws: Worksheet
    header_row: int
    first_row: int  # first data row
    last_row: int  # last data row
    end_row: int  # last row of the table (its totals row, if it has one)
    min_col: int
    max_col: int
    columns: dict[str, int]  # normalised header -> column number

    def col(self, header: str) -> int:
        return self.columns[_norm(header)]


@dataclass
class _Row:
    """One non-blank table row: its sheet row and raw values by header."""

    row: int
    values: dict[str, Any]


def read_plan(path: str | Path) -> Plan:
    """Read and validate the plan in a workbook file (``.xlsx`` or ``.xlsm``).

    Raises :class:`PlanError` listing every problem, each with sheet and cell.
    The file is only read, and only once: the bytes that were inspected are the
    bytes that are parsed.
    """
    path = Path(path)
    data = read_workbook_bytes(path)
    wb = book_from_bytes(data, path)
    return read_plan_from_book(wb, path.name, path, data=data)


def read_workbook_bytes(path: Path) -> bytes:
    """The file's bytes after the pre-parse checks (:func:`wzq.io.workbook.safety.read_checked`:
    empty, not a workbook, old ``.xls``, encrypted, zip bombs, cell limit, XML entities)."""
    if path.suffix.lower() not in WORKBOOK_SUFFIXES and not path.is_dir():
        raise PlanError(
            f"'{path.suffix}' files are not read; save the workbook as .xlsx or .xlsm",
            where=path.name,
        )
    data, _ = read_checked(path)
    return data


def book_from_bytes(data: bytes, path: Path, **options: Any) -> Workbook:
    """Parse checked workbook bytes with openpyxl; every way it can fail is a :class:`PlanError`.

    ``options`` go to :func:`openpyxl.load_workbook` (``keep_vba`` defaults to
    whether ``path`` is an ``.xlsm``).
    """
    options.setdefault("keep_vba", path.suffix.lower() == ".xlsm")
    where = path.name
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # openpyxl warns about extensions it drops on read
            return load_workbook(io.BytesIO(data), **options)
    except DefusedXmlException:
        raise PlanError(
            "a part of this workbook declares XML entities, which workbooks never need; refused",
            where=where,
        ) from None
    except MemoryError:
        raise PlanError(
            "this workbook needs more memory to open than this computer has; it is far larger "
            "than a closure plan needs",
            where=where,
        ) from None
    except Exception as e:  # openpyxl raises many types on damaged XML; none may escape
        if _caused_by(e, DefusedXmlException):  # openpyxl wraps the sheet parser's refusal
            raise PlanError(
                "a part of this workbook declares XML entities, which workbooks never need; "
                "refused",
                where=where,
            ) from None
        raise PlanError(
            "cannot read this file as a workbook "
            f"({type(e).__name__}); is it an .xlsx/.xlsm saved by a spreadsheet program? "
            "Open it in your spreadsheet program and save it again as .xlsx or .xlsm",
            where=where,
        ) from None


def _caused_by(error: BaseException, kind: type[BaseException]) -> bool:
    seen: set[int] = set()
    e: BaseException | None = error
    while e is not None and id(e) not in seen:
        if isinstance(e, kind):
            return True
        seen.add(id(e))
        e = e.__cause__ or e.__context__
    return False


def load_book(path: Path) -> Workbook:
    """Open a workbook for reading, turning every way it can fail into a :class:`PlanError`.

    The file is first inspected without parsing (:func:`wzq.io.workbook.safety.read_checked`:
    empty, not a workbook, old ``.xls``, encrypted, zip bombs, XML entities).
    """
    path = Path(path)
    return book_from_bytes(read_workbook_bytes(path), path)


def read_plan_from_book(
    wb: Workbook, source: str, path: Path | None = None, *, data: bytes | None = None
) -> Plan:
    """Read and validate the plan in an already loaded openpyxl workbook.

    ``source`` names the workbook in messages about the file as a whole;
    ``data`` (the file's bytes) or else ``path`` (the file) is needed only to
    read the saved result of a formula typed in an input cell (loaded lazily,
    once).
    """
    return _BookReader(wb, source, path, data).plan()


class _BookReader:
    """Pulls typed values out of the workbook, collecting every problem."""

    def __init__(
        self, wb: Workbook, source: str, path: Path | None, data: bytes | None = None
    ) -> None:
        self.wb = wb
        self.source = source
        self.path = path
        self.data = data
        self.epoch = wb.epoch
        self.problems: list[Problem] = []
        self.system: str | None = None  # None: unknown (unit-dependent ranges not checked)
        self.where_of: dict[str, str] = {}  # defined name -> cell
        self._strings: SharedStrings | None = None  # the shared-string table, read on demand
        self._sheets = {ws.title: ws for ws in wb.worksheets}
        self._missing_sheets: set[str] = set()
        self._demand_rows: list[str] = []  # cell of each demand interval, in plan order
        self._closure_rows: list[str] = []  # cell of each closure, in plan order
        self._closure_notes: list[str] = []  # Note cell of each closure, in plan order
        self.warnings: list[str] = []  # what the user should know; said with every result
        self._precedents: FV.Precedents | None = None
        self._saved: dict[str, dict[tuple[int, int], FV.Saved]] = {}
        self._formula_cells: set[tuple[str, int, int]] = set()
        self._below: dict[tuple[str, int], str] = {}  # (sheet, row) read from below a table
        self._named_cells: set[tuple[str, int, int]] | None = None

    # -- recording --------------------------------------------------------------------------

    def bad(self, where: str, message: str) -> Any:
        self.problems.append(Problem(where, message))
        return _MISSING

    def note(self, where: str, message: str) -> None:
        """A warning about an input that was read (said once)."""
        text = f"{where}: {message}"
        if text not in self.warnings:
            self.warnings.append(text)

    # -- cells ------------------------------------------------------------------------------

    def raw(self, ws: Worksheet, row: int, col: int) -> Any:
        """The value in a cell, a formula replaced by its saved result.

        Reads ``ws._cells`` directly: ``ws.cell()`` would add empty cells to the
        workbook, which the writer then saves.
        """
        cell = ws._cells.get((row, col))
        if cell is None:
            return None
        if isinstance(cell, MergedCell):
            return self.merged(ws, row, col)
        v = cell.value
        if v is None:
            return None
        if cell.data_type == "f" or isinstance(v, ArrayFormula | DataTableFormula):
            v = self.formula_result(ws, row, col)
            if v is _MISSING or v is None:
                return v
        elif cell.data_type == "e":
            return self.error_value(cell_ref(ws.title, row, col), v)
        if isinstance(v, str) and v.strip() in ERROR_CODES:
            return self.error_value(cell_ref(ws.title, row, col), v)
        return v

    def merged(self, ws: Worksheet, row: int, col: int) -> Any:
        """A cell hidden by merging: the value shown, when the merged cells are one column."""
        for mr in ws.merged_cells.ranges:
            if mr.min_row <= row <= mr.max_row and mr.min_col <= col <= mr.max_col:
                if mr.min_col == mr.max_col and (mr.min_row, mr.min_col) != (row, col):
                    return self.raw(ws, mr.min_row, mr.min_col)  # shown for every row
                return self.bad(
                    cell_ref(ws.title, row, col),
                    f"is part of the merged cells {mr.coord}, which span several columns; "
                    "unmerge them and type each value in its own cell",
                )
        return None

    @property
    def precedents(self) -> FV.Precedents:
        if self._precedents is None:
            self._precedents = FV.Precedents(self.wb)
        return self._precedents

    def formula_result(self, ws: Worksheet, row: int, col: int) -> Any:
        """The saved result of the formula in a cell, if it cannot be out of date.

        Refused when the formula takes its value from one of wzq's output sheets
        (replaced on every run); a warning when its value changes by itself or
        comes from another workbook. Empty text (``=IF(...,"",70)``) is a blank.
        """
        where = cell_ref(ws.title, row, col)
        self._formula_cells.add((ws.title, row, col))
        source = self.precedents.output_source(ws.title, row, col)
        if source is not None:
            return self.bad(
                where,
                f"its formula takes its value from {source}, on a sheet wzq rewrites on every "
                "run, so its saved result can be out of date; type the value, or refer to a "
                "cell of an input sheet",
            )
        for text in self.precedents.notes(ws.title, row, col):
            self.note(where, text)
        calc = getattr(self.wb, "calculation", None)
        if getattr(calc, "calcMode", None) == "manual":
            self.note(
                self.source,
                "the workbook is set to calculate manually, so the saved results of its "
                "formulas may be out of date; recalculate it and save it in your spreadsheet "
                "program before running wzq",
            )
        return self.cached(ws.title, row, col, where)

    def saved_result(self, sheet: str, row: int, col: int) -> FV.Saved | None:
        """The saved result of the formula in a cell as stored (sheets read sparsely, once)."""
        if self.path is None and self.data is None:
            return None
        if sheet not in self._saved:
            source = self.data if self.data is not None else self.path
            assert source is not None
            self._saved.update(FV.saved_results(source, [sheet]))
            self._saved.setdefault(sheet, {})
        return self._saved[sheet].get((row, col))

    def empty_text(self, sheet: str, row: int, col: int) -> bool:
        """The formula in this cell was saved with the empty text ``""`` as its result."""
        saved = self.saved_result(sheet, row, col)
        return saved is not None and saved.empty_text

    def error_value(self, where: str, v: Any) -> Any:
        error = str(v).strip()
        return self.bad(where, f"shows the error {error}; fix the formula or type the value")

    def cached(self, sheet: str, row: int, col: int, where: str) -> Any:
        """The saved result of the formula in a cell (:mod:`wzq.io.workbook.saved_values`)."""
        no_value = (
            "holds a formula with no saved result; open and save the workbook in your "
            "spreadsheet program, or type the value"
        )
        if self.path is None and self.data is None:
            return self.bad(where, no_value)
        try:
            if self._strings is None:
                self._strings = SharedStrings(self.data if self.data is not None else self.path)
            cell = self._sheets[sheet]._cells.get((row, col)) if sheet in self._sheets else None
            fmt = cell.number_format if cell is not None else "General"
            v = typed(self.saved_result(sheet, row, col), fmt, self.epoch, self._strings)
        except Exception:  # a damaged part, whatever the error type: no value
            return self.bad(where, no_value)
        if v == "" or v is None:
            if self.empty_text(sheet, row, col):  # a formula showing nothing: a blank cell
                return None
            return self.bad(where, no_value)
        if isinstance(v, str) and v.strip() in ERROR_CODES:
            return self.error_value(where, v)
        return v

    # -- defined names ----------------------------------------------------------------------

    def locate(self, field: F.Field) -> tuple[Worksheet, int, int] | None:
        """The cell a defined name points at, or ``None`` (problem recorded)."""
        name = field.name
        home = F.FIELD_SHEET.get(name, "workbook")
        dn = self.wb.defined_names.get(name)
        if dn is None:
            for ws in self.wb.worksheets:
                if ws.title not in L.OUTPUT_SHEETS and name in ws.defined_names:
                    dn = ws.defined_names[name]
                    break
        try:
            dests = [] if dn is None else list(dn.destinations)
        except Exception:  # openpyxl cannot parse the reference
            dests = []
        broken = dn is None or not dests or "#REF!" in str(dn.value)
        if broken and home not in self._sheets:
            if home not in self._missing_sheets:
                self._missing_sheets.add(home)
                self.bad(
                    f"{home} (sheet)",
                    f"the input sheet '{home}' is missing (deleted, or its inputs moved "
                    "without their names); copy your inputs into a fresh workbook from `wzq new`",
                )
            return None
        if dn is None:
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} ({field.label}) is missing; restore it in the Name "
                "Manager pointing at its value cell, or copy your inputs into a fresh workbook "
                "from `wzq new`",
            )
            return None
        if broken:
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} ({field.label}) points nowhere (its cell was "
                "deleted); point it at the value cell again in the Name Manager",
            )
            return None
        sheet, coord = dests[0]
        ws = self._sheets.get(sheet)
        if ws is None:
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} points at a sheet '{sheet}' that does not exist; "
                "point it at the value cell again in the Name Manager",
            )
            return None
        if sheet in L.OUTPUT_SHEETS:
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} points into the output sheet '{sheet}', which wzq "
                "replaces on every run; point it at the input cell",
            )
            return None
        try:
            min_col, min_row, _, _ = range_boundaries(coord.replace("$", ""))
        except (ValueError, TypeError):
            min_col = min_row = None
        if min_col is None or min_row is None:  # a whole row or column, or no cell at all
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} ({field.label}) points at '{coord}', not at one "
                "cell; point it at the value cell again in the Name Manager",
            )
            return None
        self.where_of[name] = cell_ref(sheet, min_row, min_col)
        return ws, min_row, min_col

    def field(self, field: F.Field) -> Any:
        """The typed value of a named input cell (``_MISSING`` after a problem)."""
        if field.name in F.OPTIONAL_NAMES and self.wb.defined_names.get(field.name) is None:
            return self.convert(field.template, field, field.name)
        loc = self.locate(field)
        if loc is None:
            return _MISSING
        ws, row, col = loc
        where = cell_ref(ws.title, row, col)
        return self.convert(
            self.raw(ws, row, col), field, where, percent_cell=self.percent_cell(ws, row, col)
        )

    # -- conversions ------------------------------------------------------------------------

    @staticmethod
    def percent_cell(ws: Worksheet, row: int, col: int) -> bool:
        """The cell shows its number as a percentage (its number format scales by 100)."""
        cell = ws._cells.get((row, col))
        return cell is not None and _percent_format(getattr(cell, "number_format", None))

    def convert(
        self, v: Any, field: F.Field, where: str, *, percent_cell: bool = False, hint: bool = True
    ) -> Any:
        """A cell value as ``field`` asks for it (``_MISSING`` after a problem).

        A field in percent (``%``) reads a percent-formatted cell as the percentage it
        shows (0.08 shown as 8 % is 8); a fraction-looking value in a plain cell is read
        as typed, with a warning.
        """
        if v is _MISSING:
            return v
        if _blank(v):
            if field.required:
                return self.bad(where, f"{field.label} is blank; {self._fill_hint(field)}")
            return field.blank
        kind = field.kind
        if kind == "text":
            return self.text(v)
        if kind == "choice":
            return self.choice(v, field.choices, field.label, where)
        if kind == "date":
            return self.date(v, field.label, where)
        percent = field.unit.startswith("%")
        if percent and isinstance(v, str) and v.strip().endswith("%"):
            with contextlib.suppress(ValueError):  # '8 %' typed as text: 8
                v, percent_cell = float(v.strip()[:-1].replace(",", "")), False
        x = self.number(v, field.label, where)
        if x is _MISSING:
            return x
        if percent and percent_cell:
            x = round(x * 100.0, 10)
        elif percent and hint:
            self.fraction_hint(x, field, where)
        if kind == "int" and x != int(x):
            return self.bad(where, f"{field.label} must be a whole number, got {_fmt(x)}")
        if not self.in_range(x, field, where):
            return _MISSING
        return int(x) if kind == "int" else x

    def fraction_hint(self, x: float, field: F.Field, where: str) -> None:
        """Warn when a percentage typed in a plain cell looks like a fraction (0.08 for 8 %)."""
        small = abs(x) < FRACTION_GROWTH if field.unit != "%" else 0 < x <= 1
        if x and small:
            self.note(
                where,
                f"{field.label} is {_fmt(x)} %: did you mean {_fmt(x * 100)} %? Percentages "
                f"are typed as numbers of percent (type {_fmt(x * 100)}, or {_fmt(x * 100)}% "
                f"to get a percent-formatted cell); ignore this if {_fmt(x)} % is right",
            )

    def _fill_hint(self, field: F.Field) -> str:
        if field.kind == "choice":
            return "pick one from the dropdown list"
        if field.kind == "date":
            return "type a date, e.g. 2027-05-03"
        if field.kind == "text":
            return "type it"
        unit = field.unit_text(self.system or "us")
        return f"type a number ({unit})" if unit else "type a number"

    def text(self, v: Any) -> str:
        if isinstance(v, float) and v.is_integer():
            return str(int(v))
        if isinstance(v, dt.datetime):
            return v.isoformat(sep=" ", timespec="minutes")
        return str(v).strip()

    def number(self, v: Any, label: str, where: str) -> Any:
        if isinstance(v, bool):
            return self.bad(where, f"{label} holds {str(v).upper()}, not a number; type a number")
        if isinstance(v, int | float):
            x = float(v)
            if not np.isfinite(x):
                return self.bad(where, f"{label} is not a finite number; type a number")
            return x
        if isinstance(v, dt.datetime | dt.date | dt.time | dt.timedelta):
            return self.bad(
                where,
                f"{label} holds a date or time ({_show(v)}), not a number; set the cell's "
                "format to General or Number and type the number",
            )
        try:
            float(str(v).replace(",", ""))
            what = "is stored as text"
        except ValueError:
            what = "is text, not a number"
        return self.bad(
            where, f"{label}: {_show(v)} {what}; type only the number, without its unit"
        )

    def in_range(self, x: float, field: F.Field, where: str) -> bool:
        if field.unit in F.UNIT_KINDS and self.system is None:
            return True
        system = self.system or "us"
        limits = field.limits(system)
        if limits is None:
            return True
        lo, hi = limits
        unit = field.unit_text(system)
        unit_s = f" {unit}" if unit and unit not in ("year", "ratio") else ""
        too_low = x <= lo if field.open_lo else x < lo
        too_high = x >= hi if field.open_hi else x > hi
        if not (too_low or too_high):
            return True
        if x < 0 <= lo:
            what = f"cannot be negative (got {_fmt(x)})"
        else:
            lo_s = f"above {_fmt(lo)}" if field.open_lo else f"{_fmt(lo)}"
            hi_s = f"below {_fmt(hi)}" if field.open_hi else f"{_fmt(hi)}"
            what = f"must be {lo_s} to {hi_s}{unit_s} (got {_fmt(x)})"
        check = "check the value and its unit" if field.unit in F.UNIT_KINDS else "check the value"
        self.bad(where, f"{field.label} {what}; {check}")
        return False

    def choice(self, v: Any, choices: L.Choices, label: str, where: str) -> Any:
        if isinstance(v, bool):
            v = "yes" if v else "no"
        key = _norm(v) if isinstance(v, str) else _norm(self.text(v))
        for word, value in choices:
            if key == _norm(word) or (isinstance(value, str) and key == _norm(value)):
                return value
        words = ", ".join(f"'{w}'" for w, _ in choices)
        return self.bad(
            where, f"{label}: {_show(v)} is not in the list; pick one of {words} from the dropdown"
        )

    def date(self, v: Any, label: str, where: str) -> Any:
        """A date typed in a cell (a date cell, a serial number or ISO text), years 1900-2199."""
        return self.in_years(self._date(v, label, where), label, where)

    def in_years(self, d: Any, label: str, where: str) -> Any:
        """``d`` unchanged when its year is plausible for a closure plan, else a problem."""
        if isinstance(d, dt.date) and not FIRST_YEAR <= d.year <= LAST_YEAR:
            return self.bad(
                where,
                f"{label}: the year {d.year} is outside {FIRST_YEAR}-{LAST_YEAR}; check the date",
            )
        return d

    def _date(self, v: Any, label: str, where: str) -> Any:
        if isinstance(v, dt.datetime) and 2 <= to_excel(v, self.epoch) < DAYS_IN_1900:
            return self.day_count(to_excel(v, self.epoch), label, where, clock=False)
        if isinstance(v, dt.datetime):
            if v.time() != dt.time():
                return self.bad(
                    where, f"{label} holds a time of day ({_show(v)}); type only the date"
                )
            return v.date()
        if isinstance(v, dt.date):
            return v
        if isinstance(v, int | float) and not isinstance(v, bool) and 2 <= v < DAYS_IN_1900:
            return self.day_count(v, label, where, clock=False)
        if isinstance(v, int | float) and not isinstance(v, bool) and v >= 2:
            when = self.serial(v, label, where)
            return when if when is _MISSING else self._date(when, label, where)
        if isinstance(v, str):
            m = _ISO_DATE.match(v.strip())
            if m:
                try:
                    return dt.date.fromisoformat(_pad_iso(m.group(1)))
                except ValueError:
                    pass
        return self.bad(where, f"{label}: {_show(v)} is not a date; type a date, e.g. 2027-05-03")

    def serial(self, x: float, label: str, where: str) -> Any:
        """A spreadsheet date-time serial number as a ``datetime`` (``_MISSING`` past 9999)."""
        if x <= MAX_SERIAL:
            try:
                return from_excel(x, self.epoch)
            except (OverflowError, ValueError):
                pass
        return self.bad(
            where,
            f"{label}: {_fmt(x)} is past the last date a spreadsheet can hold (9999-12-31); "
            "type a date and time, e.g. 2027-05-03 21:00",
        )

    def clock(self, v: Any, label: str, where: str, *, allow_24: bool) -> Any:
        """A time of day (:class:`_Clock`) or a full date-time (``datetime``, years 1900-2199)."""
        return self.in_years(self._clock(v, label, where, allow_24=allow_24), label, where)

    def _clock(self, v: Any, label: str, where: str, *, allow_24: bool) -> Any:
        seconds: float | None = None
        if isinstance(v, dt.datetime):
            serial = to_excel(v, self.epoch)
            if 2 <= serial < DAYS_IN_1900:  # a number typed in a time cell, shown as a date
                return self.day_count(serial, label, where, clock=True)
            if serial >= 2:
                return v
            if serial >= 0:
                seconds = serial * DAY  # hours past midnight (e.g. 24:00 stored as 1.0)
        elif isinstance(v, dt.time):
            seconds = v.hour * 3600 + v.minute * 60 + v.second
        elif isinstance(v, dt.timedelta):  # a cell formatted as elapsed time, e.g. [hh]:mm
            if v.total_seconds() >= 2 * DAY:
                return self.serial(v.total_seconds() / DAY, label, where)  # a date-time serial
            if v.total_seconds() >= 0:
                seconds = v.total_seconds()
        elif isinstance(v, int | float) and not isinstance(v, bool):
            if v >= 2:
                if v < DAYS_IN_1900:
                    return self.day_count(v, label, where, clock=True)
                return self.serial(v, label, where)  # an Excel date-time serial
            if v >= 0:
                seconds = v * DAY
        elif isinstance(v, str):
            text = v.strip()
            m = _CLOCK.match(text)
            md = _ISO_DATETIME.match(text)
            if m and int(m.group(2)) < 60 and int(m.group(3) or 0) < 60:
                seconds = int(m.group(1)) * 3600 + int(m.group(2)) * 60 + int(m.group(3) or 0)
            elif md:
                try:
                    day = dt.date.fromisoformat(_pad_iso(md.group(1)))
                    hh, mm = int(md.group(2)), int(md.group(3))
                    if mm < 60 and (hh < 24 or (hh == 24 and mm == 0)):
                        return dt.datetime.combine(day, dt.time()) + dt.timedelta(
                            hours=hh, minutes=mm
                        )
                except ValueError:
                    pass
        if seconds is None:
            return self.bad(
                where, f"{label}: {_show(v)} is not a time; type a time like 21:00 (24-hour clock)"
            )
        s = round(seconds)
        if s < DAY or (allow_24 and s == DAY):
            return _Clock(s)
        shown = f"{s // 3600}:{s % 3600 // 60:02d}"
        wrapped = f"{s % DAY // 3600:02d}:{s % 3600 // 60:02d}"
        hint = (
            f"a 'To' at or before 'From' already ends the next day, so type {wrapped} (in a "
            "formula, wrap the time in MOD(...,1)); 24:00 is midnight at the end of the day"
            if allow_24
            else f"use 00:00-23:59 (in a formula, wrap the time in MOD(...,1) to get {wrapped})"
        )
        return self.bad(where, f"{label} is {shown}, past 24:00; {hint}")

    def day_count(self, x: float, label: str, where: str, *, clock: bool) -> Any:
        """A small number where a date or time belongs: spreadsheets read it as a day count."""
        day = from_excel(x, self.epoch)
        what = "a time" if clock else "a date"
        guess = (
            f"; did you mean {int(x):02d}:00? Type it with the colon"
            if clock and x == int(x) and x <= 24
            else f"; type {what}, e.g. {'21:00' if clock else '2027-05-03'}"
        )
        return self.bad(
            where,
            f"{label}: {_fmt(x)} is a number, not {what} (a spreadsheet reads it as "
            f"{_fmt(x)} days after its day zero, {day:%Y-%m-%d}){guess}",
        )

    # -- tables -----------------------------------------------------------------------------

    def table(self, name: str) -> _Table | None:
        home = L.TABLE_SHEET[name]
        for ws in self.wb.worksheets:
            if ws.title in L.OUTPUT_SHEETS:
                continue
            for tname in ws.tables:
                if tname.casefold() == name.casefold():
                    return self._table_parts(name, ws, ws.tables[tname])
        self.bad(
            f"{home} (table {name})",
            f"the table {name} is missing: it was deleted or renamed, or the program that last "
            "saved the file did not keep it. Copy your rows into the table of a fresh workbook "
            "from `wzq new` (a table renamed in Excel can also get its name back under Table "
            "Design > Table Name)",
        )
        return None

    def _table_parts(self, name: str, ws: Worksheet, t: Any) -> _Table | None:
        try:
            min_col, min_row, max_col, max_row = range_boundaries(str(t.ref))
        except (ValueError, TypeError):
            min_col = min_row = max_col = max_row = None
        if min_col is None or min_row is None or max_col is None or max_row is None:
            self.bad(
                f"{ws.title} (table {name})",
                f"the table {name} covers '{t.ref}', not a block of cells; recreate it from "
                "a fresh workbook made by `wzq new`",
            )
            return None
        header_rows = 1 if t.headerRowCount is None else int(t.headerRowCount)
        totals = int(t.totalsRowCount or 0)
        if header_rows < 1:
            self.bad(
                cell_ref(ws.title, min_row, min_col),
                f"the table {name} has its header row switched off; switch it on again "
                "(in Excel: Table Design > Header Row), or copy your rows into a fresh "
                "workbook from `wzq new`",
            )
            return None
        header_row = min_row
        columns: dict[str, int] = {}
        for k, tc in enumerate(t.tableColumns):
            columns.setdefault(_norm(tc.name), min_col + k)
        if not t.tableColumns:  # a table written without column records: read the header row
            for col in range(min_col, max_col + 1):
                v = self.raw(ws, header_row, col)
                if isinstance(v, str):
                    columns.setdefault(_norm(v), col)
        missing = [h for h in L.TABLE_COLUMNS[name] if _norm(h) not in columns]
        if missing:
            have = ", ".join(f"'{h}'" for h in L.TABLE_COLUMNS[name])
            for h in missing:
                self.bad(
                    cell_ref(ws.title, header_row, min_col),
                    f"the table {name} has no column '{h}'; restore its header "
                    f"(the columns are {have})",
                )
            return None
        return _Table(
            name,
            ws,
            header_row,
            min_row + header_rows,
            max_row - totals,
            max_row,
            min_col,
            max_col,
            columns,
        )

    def rows(self, t: _Table) -> list[_Row]:
        """The table's non-blank rows (blank rows are skipped), and the rows typed below it.

        A row typed anywhere below the table, in its columns, is read as part of it
        with a warning (the table did not grow when it was typed: a gap row, or a
        program that does not extend tables); a row of formulas that only sum up the
        table is the user's own and skipped. Hidden and filtered-out rows are read
        like any other, with a warning. Values right beside the table are named in
        a warning: they are not read.
        """
        out = []
        headers = L.TABLE_COLUMNS[t.name]
        cols = {t.col(h) for h in headers}
        # only rows that hold a cell in one of the read columns: a table stretched to the
        # sheet's last row costs no more than the cells in it
        filled = sorted(
            {r for (r, c) in t.ws._cells if t.first_row <= r <= t.last_row and c in cols}
        )
        below = self.rows_below(t, cols)
        hidden = []
        for r in (*filled, *below):
            values = {h: self.raw(t.ws, r, t.col(h)) for h in headers}
            if all(_blank(v) for v in values.values()):
                continue
            out.append(_Row(r, values))
            dims = t.ws.row_dimensions.get(r)
            if dims is not None and dims.hidden:
                hidden.append(r)
        taken = [r for r in below if any(row.row == r for row in out)]
        if taken:
            for r in taken:
                self._below[(t.ws.title, r)] = t.name
            cells = ", ".join(cell_ref(t.ws.title, r, t.min_col) for r in taken[:5])
            more = f" and {len(taken) - 5} more" if len(taken) > 5 else ""
            one = len(taken) == 1
            these, was, it, rows = (
                ("this row lies", "was", "it", "a row")
                if one
                else ("these rows lie", "were", "them", "rows")
            )
            self.note(
                cells + more,
                f"{these} below the table {t.name} (which ends at row {t.end_row}) and {was} "
                f"read as part of it; extend the table over {it} so that every program sees "
                f"{it} as {rows} of the table",
            )
        if hidden:
            cells = ", ".join(cell_ref(t.ws.title, r, t.min_col) for r in hidden[:5])
            more = f" and {len(hidden) - 5} more" if len(hidden) > 5 else ""
            self.note(
                cells + more,
                f"hidden or filtered-out {'row' if len(hidden) == 1 else 'rows'} of {t.name} "
                "read as part of the plan (hiding a row does not take it out); delete or "
                "clear a row to leave it out",
            )
        self.beside(t)
        return out

    def _not_ours(self, ws: Worksheet, row: int, col: int, table: str) -> bool:
        """A cell that belongs to no other input: not in another table, not a named input."""
        for name, ref in ws.tables.items():  # TableList.items(): (name, ref)
            if name.casefold() == table.casefold():
                continue
            try:
                c0, r0, c1, r1 = range_boundaries(str(ref))
            except (ValueError, TypeError):
                continue
            if (r0 or 1) <= row <= (r1 or row) and (c0 or 1) <= col <= (c1 or col):
                return False
        return (ws.title, row, col) not in self.named_cells()

    def named_cells(self) -> set[tuple[str, int, int]]:
        """(sheet, row, column) of every named input cell."""
        if self._named_cells is None:
            found = set()
            for f in F.ALL_FIELDS:
                dn = self.wb.defined_names.get(f.name)
                try:
                    dests = [] if dn is None else list(dn.destinations)
                except Exception:
                    dests = []
                for sheet, coord in dests:
                    try:
                        c0, r0, _, _ = range_boundaries(coord.replace("$", ""))
                    except (ValueError, TypeError):
                        continue
                    found.add((sheet, r0, c0))
            self._named_cells = found
        return self._named_cells

    def rows_below(self, t: _Table, cols: set[int]) -> list[int]:
        """Rows below the table that hold a value in one of its read columns."""
        rows: dict[int, list[int]] = {}
        for (r, c), cell in t.ws._cells.items():
            if r > t.end_row and c in cols and not _blank(cell.value):
                rows.setdefault(r, []).append(c)
        out = []
        for r in sorted(rows):
            kept = [c for c in rows[r] if self._not_ours(t.ws, r, c, t.name)]
            if kept and not self.sums_up(t, r, kept):
                out.append(r)
        return out

    def sums_up(self, t: _Table, row: int, cols: list[int]) -> bool:
        """A row below the table whose formulas only refer to the table (a total), the rest text."""
        formulas = 0
        for c in cols:
            cell = t.ws._cells[(row, c)]
            text = FV.formula_text(cell)
            if text is None:
                if not isinstance(cell.value, str):
                    return False
                continue
            blocks = self.precedents.references(text, t.ws.title)
            if not blocks or not all(
                b.sheet == t.ws.title
                and (b.min_row is None or b.min_row <= t.last_row)
                and (b.max_row is None or b.max_row >= t.first_row)
                and (b.min_col is None or b.min_col <= t.max_col)
                and (b.max_col is None or b.max_col >= t.min_col)
                for b in blocks
            ):
                return False
            formulas += 1
        return formulas > 0

    def beside(self, t: _Table) -> None:
        """Warn about values right beside the table (in its rows, the next column either side)."""
        sides = {t.min_col - 1, t.max_col + 1}
        found = [
            cell_ref(t.ws.title, r, c)
            for (r, c), cell in sorted(t.ws._cells.items())
            if c in sides
            and t.header_row <= r <= t.last_row
            and not _blank(cell.value)
            and self._not_ours(t.ws, r, c, t.name)
        ]
        if found:
            more = f" and {len(found) - 3} more" if len(found) > 3 else ""
            self.note(
                ", ".join(found[:3]) + more,
                f"{'a value' if len(found) == 1 else 'values'} right beside the table {t.name} "
                f"(columns {get_column_letter(t.min_col)} to {get_column_letter(t.max_col)}) "
                "not read as part of the plan; if it belongs to the plan, move it into the "
                "table's own columns",
            )

    def where(self, t: _Table, row: int, header: str) -> str:
        return cell_ref(t.ws.title, row, t.col(header))

    # -- the plan ---------------------------------------------------------------------------

    def plan(self) -> Plan:
        ours = {t.casefold() for t in L.TABLE_COLUMNS}
        if not any(self.wb.defined_names.get(f.name) is not None for f in F.ALL_FIELDS) and not any(
            t.casefold() in ours for ws in self.wb.worksheets for t in ws.tables
        ):
            raise PlanError(
                "this workbook has none of the wzq input names or tables; start from a "
                "workbook made by `wzq new` and copy your inputs into it",
                where=self.source,
            )
        system = self.field(F.UNIT_SYSTEM)
        self.system = None if system is _MISSING else system
        site_fields = (f for s in F.SITE_SECTIONS for f in s.fields)
        values = {
            f.name: self.field(f)
            for f in (*F.META_FIELDS, *site_fields, *F.THRESHOLD_FIELDS, *F.OPTION_FIELDS)
        }
        self.check_speeds(values)
        self.check_sheet_names()
        costs = self.costs()
        demand = self.demand(values.get("site_lanes"))
        closures = self.closures(values.get("site_lanes"), demand)
        if self.problems:
            raise PlanError(self.explain_below(self.problems))
        plan_kw = self.assemble(values, costs, demand, closures)
        try:
            return Plan(**plan_kw, input_warnings=tuple(self.warnings), locations=self.locations())
        except PlanError as e:
            mapped = [Problem(self.map_key(p.where), p.message) for p in e.problems]
            raise PlanError(mapped) from None

    def check_sheet_names(self) -> None:
        """Refuse a sheet of the user's that carries the name of one of wzq's output sheets
        (``wzq run`` would have to replace it)."""
        ours = set(L.written_sheets(self.wb))
        names = ", ".join(f"'{n}'" for n in L.OUTPUT_SHEETS)
        for ws in self.wb.worksheets:
            clash = [n for n in L.OUTPUT_SHEETS if n.casefold() == ws.title.casefold()]
            if clash and ws.title not in ours:
                self.bad(
                    f"sheet '{ws.title}'",
                    "this sheet of yours has the name of a sheet wzq writes its results to "
                    f"({names}), so `wzq run` would have to replace it; rename it",
                )

    def explain_below(self, problems: list[Problem]) -> list[Problem]:
        """Problems in rows read from below a table say why those rows were read."""
        if not self._below:
            return problems
        out = []
        for p in problems:
            m = re.fullmatch(r"(?:'(.+)'|([^!']+))!([A-Z]+)(\d+)", p.where)
            table = None
            if m:
                sheet = (m.group(1) or "").replace("''", "'") or m.group(2)
                table = self._below.get((sheet, int(m.group(4))))
            if table is None:
                out.append(p)
                continue
            out.append(
                Problem(
                    p.where,
                    f"{p.message} (this row lies below the table {table} and is read as part of "
                    "it; if it is not part of the plan, move it out of the table's columns)",
                )
            )
        return out

    def locations(self) -> dict[str, str]:
        """Plan keys (JSON form) -> the cell each was typed in, for later messages."""
        out = {}
        for name, where in self.where_of.items():
            key = _JSON_KEYS.get(name)
            if key is not None:
                out[key] = where
        for i, where in enumerate(self._demand_rows):
            out[f"demand.veh_h[{i}]"] = where
        for i, (row, note) in enumerate(zip(self._closure_rows, self._closure_notes, strict=False)):
            out[f"closures[{i}]"] = row
            out[f"closures[{i}].note"] = note
        return out

    def check_speeds(self, v: dict[str, Any]) -> None:
        limit, wz = v.get("site_speed_limit"), v.get("site_work_zone_speed_limit")
        if isinstance(limit, float) and isinstance(wz, float) and wz > limit:
            self.bad(
                self.where_of["site_work_zone_speed_limit"],
                f"the work-zone speed limit ({_fmt(wz)}) is above the speed limit "
                f"({_fmt(limit)}); check both",
            )

    def costs(self) -> Any:
        """Road-user costs; ``None`` when the three main values are all blank."""
        locs = {f.name: self.locate(f) for f in F.COST_FIELDS}
        main = {n: _MISSING if locs[n] is None else self.raw(*locs[n]) for n in F.COST_MAIN}
        if any(v is _MISSING for v in main.values()):
            return _MISSING
        if all(_blank(v) for v in main.values()):
            return None  # no road-user costs
        got: dict[str, Any] = {}
        for f in F.COST_FIELDS:
            loc = locs[f.name]
            if loc is None:
                got[f.name] = _MISSING
                continue
            v = main[f.name] if f.name in main else self.raw(*loc)
            where = cell_ref(loc[0].title, loc[1], loc[2])
            if v is not _MISSING and _blank(v) and f.required:
                got[f.name] = self.bad(
                    where,
                    f"{f.label} is blank; road-user costs need it once a value of time or the "
                    "occupancy is given (leave those three blank to price delay at the "
                    "published defaults)",
                )
            else:
                got[f.name] = self.convert(v, f, where)
        if any(v is _MISSING for v in got.values()):
            return _MISSING
        return Costs(
            **{
                f.attribute.split(".", 1)[1]: F.to_plan(f, got[f.name], self.system)
                for f in F.COST_FIELDS
            }
        )

    # -- demand -----------------------------------------------------------------------------

    def demand(self, lanes: Any) -> Demand | None:
        mode = self.field(F.DEMAND_MODE)
        if mode is _MISSING:
            return None
        self.unused_demand(mode)
        if mode == L.AADT:
            return self.demand_from_aadt()
        return self.demand_from_counts(lanes)

    def unused_demand(self, mode: str) -> None:
        """Warn when the demand input that the mode leaves unused is filled in."""
        switch = self.where_of.get(F.DEMAND_MODE.name, F.DEMAND_MODE.name)
        word = L.word_for(L.DEMAND_MODE_WORDS, mode)
        other = L.word_for(L.DEMAND_MODE_WORDS, L.HOURLY if mode == L.AADT else L.AADT)
        if mode == L.AADT:
            table = self.find_table(L.DEMAND_TABLE)
            if table is None:
                return
            ws, ref = table
            try:
                c0, r0, c1, r1 = range_boundaries(str(ref))
            except (ValueError, TypeError):
                return
            if None in (c0, r0, c1, r1):  # not a block of cells: its problem is said if used
                return
            filled = sorted(
                r
                for (r, c), cell in ws._cells.items()
                if r0 < r <= r1 and c0 <= c <= c1 and not _blank(cell.value)
            )
            if filled:
                self.note(
                    cell_ref(ws.title, filled[0], c0),
                    f"the table {L.DEMAND_TABLE} holds counts, but 'Demand is given as' "
                    f"({switch}) is '{word}', so they are not used; clear them, or choose "
                    f"'{other}'",
                )
            return
        for f in (F.AADT_FIELDS[0], F.AADT_FIELDS[4]):  # the AADT and the first day
            loc = self.peek(f.name)
            if loc is not None and not _blank(getattr(loc[0]._cells.get(loc[1:]), "value", None)):
                self.note(
                    cell_ref(loc[0].title, *loc[1:]),
                    f"{f.label} is filled in, but 'Demand is given as' ({switch}) is '{word}', "
                    f"so the AADT inputs are not used; clear them, or choose '{other}'",
                )
                return

    def find_table(self, name: str) -> tuple[Worksheet, Any] | None:
        """(sheet, table) of an input table by name, without recording a problem."""
        for ws in self.wb.worksheets:
            if ws.title in L.OUTPUT_SHEETS:
                continue
            for tname, ref in ws.tables.items():  # TableList.items(): (name, ref)
                if tname.casefold() == name.casefold():
                    return ws, ref
        return None

    def peek(self, name: str) -> tuple[Worksheet, int, int] | None:
        """The cell a defined name points at, without recording a problem."""
        dn = self.wb.defined_names.get(name)
        try:
            sheet, coord = next(iter(dn.destinations)) if dn is not None else (None, "")
            c0, r0, _, _ = range_boundaries(coord.replace("$", ""))
        except Exception:
            return None
        ws = self._sheets.get(sheet) if sheet else None
        if ws is None or sheet in L.OUTPUT_SHEETS or c0 is None or r0 is None:
            return None
        return ws, r0, c0

    def demand_from_counts(self, lanes: Any) -> Demand | None:
        t = self.table(L.DEMAND_TABLE)
        if t is None:
            return None
        c_date, c_time, c_flow = L.DEMAND_COLUMNS
        entries: list[tuple[dt.datetime, float, int]] = []
        ok = True
        for r in self.rows(t):
            start = self.moment(t, r, c_date, c_time, "Start time")
            where = self.where(t, r.row, c_flow)
            x = self.convert(r.values[c_flow], _FLOW, where)
            if x == 0 and (t.ws.title, r.row, t.col(c_flow)) in self._formula_cells:
                formula = FV.formula_text(t.ws._cells[(r.row, t.col(c_flow))])
                self.note(
                    where,
                    f"Demand is 0 from the formula {formula}, read as an hour with no traffic; "
                    "check what it refers to (a formula pointing at an empty cell gives 0)",
                )
            if x is not _MISSING and isinstance(lanes, int) and x > MAX_DEMAND_VEH_H_LN * lanes:
                x = self.bad(
                    where,
                    f"Demand {_fmt(x)} veh/h is more than {MAX_DEMAND_VEH_H_LN:,.0f} veh/h per "
                    f"lane on {lanes} lanes; enter hourly flow in this direction only (not a "
                    "two-way count or a daily total)",
                )
            if start is _MISSING or x is _MISSING:
                ok = False
                continue
            entries.append((start, x, r.row))
        if not entries:
            if ok:
                self.bad(
                    cell_ref(t.ws.title, t.first_row, t.min_col),
                    f"the table {t.name} has no demand rows; type the hourly counts or set "
                    "'Demand is given as' to 'from AADT'",
                )
            return None
        return self.demand_grid(t, entries) if ok else None

    def moment(self, t: _Table, r: _Row, c_date: str, c_time: str, label: str) -> Any:
        """Date + time of day in a table row as one datetime."""
        d_where, t_where = self.where(t, r.row, c_date), self.where(t, r.row, c_time)
        dv, tv = r.values[c_date], r.values[c_time]
        if dv is _MISSING or tv is _MISSING:
            return _MISSING
        if _blank(tv) and isinstance(dv, dt.datetime) and dv.time() != dt.time():
            return dv  # a full date-time typed in the Date column
        clock = (
            self.bad(t_where, f"{label} is blank; type a time like 07:00")
            if _blank(tv)
            else self.clock(tv, label, t_where, allow_24=False)
        )
        if isinstance(clock, dt.datetime):
            if _blank(dv):
                return clock
            day = self.date(dv, "Date", d_where)
            if day is not _MISSING and day != clock.date():
                return self.bad(
                    t_where,
                    f"{label} holds the date {clock:%Y-%m-%d} but Date is {day:%Y-%m-%d}; "
                    "make them agree",
                )
            return clock
        day = (
            self.bad(d_where, "Date is blank; type the date, e.g. 2027-05-03")
            if _blank(dv)
            else self.date(dv, "Date", d_where)
        )
        if day is _MISSING or clock is _MISSING:
            return _MISSING
        return dt.datetime.combine(day, dt.time()) + dt.timedelta(seconds=clock.seconds)

    def demand_grid(self, t: _Table, entries: list[tuple[dt.datetime, float, int]]) -> Any:
        """Check the rows form one regular grid from the hour to the hour; build the demand."""
        c_time = L.DEMAND_COLUMNS[1]
        entries.sort(key=lambda e: e[0])
        before = len(self.problems)
        seen: dict[dt.datetime, int] = {}
        unique = []
        for when, flow, row in entries:
            if when in seen:
                self.bad(
                    self.where(t, row, c_time),
                    f"the start time {_when(when)} is also in row {seen[when]}; "
                    "remove one of the two rows",
                )
                continue
            seen[when] = row
            unique.append((when, flow, row))
        times = [e[0] for e in unique]
        steps = [(b - a).total_seconds() for a, b in pairwise(times)]
        interval = int(min(steps)) if steps else 3600
        if steps and (interval % 60 or 3600 % interval):
            self.bad(
                self.where(t, unique[1][2], c_time),
                f"rows are {_fmt(interval / 60)} minutes apart; use hourly or 15-minute rows "
                "(any whole number of minutes that divides an hour)",
            )
            return None
        for (a, _, ra), (b, _, rb), step in zip(unique, unique[1:], steps, strict=False):
            if step == interval:
                continue
            if step % interval == 0:
                self.bad(
                    self.where(t, rb, c_time),
                    f"no demand from {_when(a + dt.timedelta(seconds=interval))} to "
                    f"{_when(b)} (between rows {ra} and {rb}); add the missing rows",
                )
            else:
                self.bad(
                    self.where(t, rb, c_time),
                    f"rows {ra} and {rb} are {_fmt(step / 60)} minutes apart but other rows "
                    f"are {_fmt(interval / 60)} minutes apart; use one interval throughout",
                )
        first, last = unique[0], unique[-1]
        if first[0].minute or first[0].second:
            self.bad(
                self.where(t, first[2], c_time),
                f"the demand must start on the hour, but the earliest row starts at "
                f"{first[0]:%H:%M}; add rows back to {first[0]:%H}:00",
            )
        end = last[0] + dt.timedelta(seconds=interval)
        if end.minute or end.second:
            self.bad(
                self.where(t, last[2], c_time),
                f"the demand must cover whole hours, but it ends at {end:%H:%M}; add rows up "
                "to the next full hour",
            )
        if len(self.problems) > before:
            return None
        self._demand_rows = [self.where(t, row, L.DEMAND_COLUMNS[2]) for _, _, row in unique]
        return Demand(first[0], interval, np.array([e[1] for e in unique]))

    def demand_from_aadt(self) -> Demand | None:
        v = {f.name: self.field(f) for f in F.AADT_FIELDS}
        shares = self.hourly_shares()
        if any(x is _MISSING for x in v.values()) or shares is None:
            return None
        first: dt.date = v["aadt_first_day"]
        growth = (1.0 + v["aadt_growth_percent"] / 100.0) ** (first.year - v["aadt_count_year"])
        daily = v["aadt_value"] * growth * v["aadt_direction_percent"] / 100.0
        weekday, weekend = shares
        flows = []
        for k in range(v["aadt_days"]):
            day = first + dt.timedelta(days=k)
            flows.extend(daily * s / 100.0 for s in (weekend if day.weekday() >= 5 else weekday))
        self._demand_rows = [self.where_of["aadt_value"]] * len(flows)
        return Demand(dt.datetime.combine(first, dt.time()), 3600, np.array(flows))

    def hourly_shares(self) -> tuple[list[float], list[float]] | None:
        t = self.table(L.SHARE_TABLE)
        if t is None:
            return None
        c_hour, c_wd, c_we = L.SHARE_COLUMNS
        by_hour: dict[int, tuple[float, float]] = {}
        ok = True
        for r in self.rows(t):
            hw = self.where(t, r.row, c_hour)
            h = r.values[c_hour]
            if isinstance(h, int | float) and not isinstance(h, bool) and h >= 1:
                hour: Any = (
                    int(h)
                    if h < 24 and h == int(h)
                    else self.bad(
                        hw, f"Hour {_fmt(h)} is not an hour of the day; use 0-23 or 00:00-23:00"
                    )
                )
            elif _blank(h):
                hour = self.bad(hw, "Hour is blank; type the hour the share starts, e.g. 07:00")
            else:
                c = self.clock(h, "Hour", hw, allow_24=False)
                if isinstance(c, dt.datetime):
                    c = self.bad(hw, "Hour holds a date; type only the hour, e.g. 07:00")
                if c is not _MISSING and c.seconds % 3600:
                    c = self.bad(hw, "Hour must be a whole hour, e.g. 07:00")
                hour = _MISSING if c is _MISSING else c.seconds // 3600
            pair = [
                self.convert(
                    r.values[col],
                    _SHARES[col],
                    self.where(t, r.row, col),
                    percent_cell=self.percent_cell(t.ws, r.row, t.col(col)),
                    hint=False,
                )
                for col in (c_wd, c_we)
            ]
            if hour is _MISSING or _MISSING in pair:
                ok = False
                continue
            if hour in by_hour:
                self.bad(hw, f"hour {hour:02d}:00 appears twice; keep one row per hour")
                ok = False
                continue
            by_hour[hour] = (pair[0], pair[1])
        if not ok:
            return None
        missing = [h for h in range(24) if h not in by_hour]
        if missing:
            self.bad(
                cell_ref(t.ws.title, t.header_row, t.col(c_hour)),
                f"{t.name} has no share for hour(s) "
                f"{', '.join(f'{h:02d}:00' for h in missing)}; give all 24 hours",
            )
            return None
        weekday = [by_hour[h][0] for h in range(24)]
        weekend = [by_hour[h][1] for h in range(24)]
        for col, values in ((c_wd, weekday), (c_we, weekend)):
            total = sum(values)
            if abs(total - 100.0) > L.SHARE_SUM_TOLERANCE:
                fractions = abs(total - 1.0) <= L.SHARE_SUM_TOLERANCE / 100.0
                self.bad(
                    cell_ref(t.ws.title, t.header_row, t.col(col)),
                    f"the column '{col}' sums to {total:.1f} %, not 100 %; "
                    + (
                        "the shares look like fractions: type them as percentages (7 for "
                        "7 %), or format the cells as percentages"
                        if fractions
                        else "correct the shares"
                    ),
                )
                ok = False
        return (weekday, weekend) if ok else None

    # -- closures ---------------------------------------------------------------------------

    def closures(self, lanes: Any, demand: Demand | None) -> list[Closure] | None:
        t = self.table(L.CLOSURE_TABLE)
        if t is None:
            return None
        c_date, c_from, c_to, c_lanes, c_barrier, c_night, c_override, c_note = L.CLOSURE_COLUMNS
        found: list[tuple[Closure, int]] = []
        ok = True
        for r in self.rows(t):
            w = lambda h, r=r: self.where(t, r.row, h)  # noqa: E731
            start = self.moment(t, r, c_date, c_from, "From")
            end = self.closure_end(r.values[c_to], start, w(c_to))
            n = self.convert(r.values[c_lanes], _LANES_CLOSED, w(c_lanes))
            if n is not _MISSING and isinstance(lanes, int) and n >= lanes:
                what = (
                    f"all {lanes} lanes closed"
                    if n == lanes
                    else f"{n} lanes closed but the road has {lanes}"
                )
                n = self.bad(
                    w(c_lanes),
                    f"{what}; at least one lane must stay open (a full closure needs a detour "
                    "plan, not this analysis)",
                )
            barrier = self.convert(r.values[c_barrier], _BARRIER, w(c_barrier))
            night = self.convert(r.values[c_night], _NIGHT, w(c_night))
            override = self.convert(r.values[c_override], _OVERRIDE, w(c_override))
            note = self.convert(r.values[c_note], _NOTE, w(c_note))
            parts = (start, end, n, barrier, night, override, note)
            if any(p is _MISSING for p in parts):
                ok = False
                continue
            closure = Closure(
                start=start,
                end=end,
                lanes_closed=n,
                barrier=barrier,
                night=night,
                capacity_override_veh_h_ln=override,
                note=note,
            )
            if demand is not None and (closure.start < demand.start or closure.end > demand.end):
                self.bad(
                    w(c_date),
                    f"the closure {_when(closure.start)} to {_when(closure.end)} lies outside "
                    f"the demand period {_when(demand.start)} to {_when(demand.end)}; extend "
                    "the demand or move the closure",
                )
            found.append((closure, r.row))
        found.sort(key=lambda e: e[0].start)
        latest: tuple[Closure, int] | None = None  # the earlier closure that ends last
        for b, rb in found:
            if latest is not None and b.start < latest[0].end:
                a, ra = latest
                self.bad(
                    self.where(t, rb, c_from),
                    f"this closure ({_when(b.start)} to {_when(b.end)}) overlaps the one in row "
                    f"{ra} ({_when(a.start)} to {_when(a.end)}); one closure at a time: merge "
                    "them or move one",
                )
                ok = False
            if latest is None or b.end > latest[0].end:
                latest = (b, rb)
        self._closure_rows = [self.where(t, row, c_date) for _, row in found]
        self._closure_notes = [self.where(t, row, c_note) for _, row in found]
        return [c for c, _ in found] if ok else None

    def closure_end(self, v: Any, start: Any, where: str) -> Any:
        """End of a closure from ``To``: next day if at or before ``From``; 24:00 is midnight."""
        if v is _MISSING:
            return v
        if _blank(v):
            return self.bad(where, "To is blank; type the end time, e.g. 05:00")
        c = self.clock(v, "To", where, allow_24=True)
        if c is _MISSING or start is _MISSING:
            return _MISSING
        if isinstance(c, dt.datetime):
            if c <= start:
                return self.bad(
                    where,
                    f"the closure ends ({_when(c)}) before it starts ({_when(start)}); check "
                    "the date and time in To",
                )
            return c
        day = dt.datetime.combine(start.date(), dt.time())
        end = day + dt.timedelta(seconds=c.seconds)
        if end <= start:
            end += dt.timedelta(days=1)
        return end

    # -- assembling -------------------------------------------------------------------------

    def assemble(
        self,
        v: dict[str, Any],
        costs: Costs | None,
        demand: Demand | None,
        closures: list[Closure] | None,
    ) -> dict[str, Any]:
        system = self.system
        assert system is not None and demand is not None and closures is not None
        parts = {
            section: {
                f.attribute.split(".", 1)[1]: F.to_plan(f, v[f.name], system)
                for f in F.section_inputs(section)
                if f.name
            }
            for section in ("site", "thresholds", "options", "meta")
        }
        parts["site"]["unit_system"] = system
        site = Site(**parts["site"])
        thresholds = Thresholds(**parts["thresholds"])
        options = Options(**parts["options"])
        meta = Meta(**parts["meta"])
        return dict(
            site=site,
            demand=demand,
            closures=tuple(closures),
            thresholds=thresholds,
            costs=costs,
            options=options,
            meta=meta,
        )

    def map_key(self, key: str) -> str:
        """A ``wzq.engine.plan.validate`` location (``closures[2].barrier``) as a sheet cell."""
        if key in _PLAN_KEYS and _PLAN_KEYS[key] in self.where_of:
            return self.where_of[_PLAN_KEYS[key]]
        m = re.fullmatch(r"(closures|demand)\[(\d+)\](?:\..*)?", key)
        if m:
            cells = self._closure_rows if m.group(1) == "closures" else self._demand_rows
            i = int(m.group(2))
            if i < len(cells):
                return cells[i]
        if key.startswith("demand") and self._demand_rows:
            return self._demand_rows[0]
        return f"{self.source}: {key}"


def _pad_iso(text: str) -> str:
    """``2027-5-3`` -> ``2027-05-03``."""
    y, m, d = text.split("-")
    return f"{y}-{int(m):02d}-{int(d):02d}"
