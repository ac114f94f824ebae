"""What every part of the reader shares: limits, the value that could not be read
(:data:`_MISSING`), how a cell is named (:func:`cell_ref`), how values are shown in
messages, and the shapes of tables and rows."""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.worksheet import Worksheet

from wzq.io import fields as F
from wzq.io.workbook import layout as L
from wzq.io.workbook.cellref import cell_ref

__all__ = [
    "DAY",
    "DAYS_IN_1900",
    "FIRST_YEAR",
    "LAST_YEAR",
    "MAX_DEMAND_VEH_H_LN",
    "MAX_SERIAL",
    "WORKBOOK_SUFFIXES",
    "cell_ref",
    "destinations",
    "hidden_column",
    "hidden_row",
    "other_weekday",
]

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


def _percent_format(fmt: str | None) -> bool:
    """A number format that shows values times 100 with a percent sign (``0%``, ``0.0%``);
    a percent sign in quotes or escaped (``0.0"%"``, ``0\\%``) does not scale."""
    if not fmt or "%" not in fmt:
        return False
    plain = re.sub(r'"[^"]*"|\\.|\[[^\]]*\]', "", fmt)
    return "%" in plain


def destinations(dn: Any) -> tuple[tuple[str, str], ...]:
    """``dn.destinations`` of an openpyxl defined name, as a tuple: (sheet, cells) of each
    range it refers to. It depends on the name's text only, and openpyxl tokenizes that
    text twice on every call; a reader asks for some names more than once, and a bulk run
    for the same names in every workbook."""
    return _destinations(dn.value)


@lru_cache(maxsize=1024)
def _destinations(value: str) -> tuple[tuple[str, str], ...]:
    return tuple(DefinedName("name", attr_text=value).destinations)


def _blank(v: Any) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


@lru_cache(maxsize=1024)  # headers are looked up once per cell of a table
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


def _pad_iso(text: str) -> str:
    """``2027-5-3`` -> ``2027-05-03``."""
    y, m, d = text.split("-")
    return f"{y}-{int(m):02d}-{int(d):02d}"


def hidden_row(ws: Worksheet, row: int) -> bool:
    """Row ``row`` is hidden (or filtered out, which hides it)."""
    dims = ws.row_dimensions.get(row)
    return bool(dims is not None and dims.hidden)


def hidden_column(ws: Worksheet, col: int) -> bool:
    """Column ``col`` is hidden (openpyxl keeps one width entry for a run of columns)."""
    return any(d.hidden and d.min <= col <= d.max for d in ws.column_dimensions.values() if d.min)


_WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")


def other_weekday(text: str, day: dt.date) -> str | None:
    """What to say when the weekday typed before an ISO date is another day's
    ("Mon 2027-05-04", a Tuesday: Monday the 3rd or Tuesday the 4th?), else ``None``."""
    word = text.strip()[:3].casefold()
    if word not in _WEEKDAYS or _WEEKDAYS.index(word) == day.weekday():
        return None
    typed = dt.date(2024, 1, 1 + _WEEKDAYS.index(word))  # 2024-01-01 was a Monday
    return (
        f"{day:%Y-%m-%d} is a {day:%A}, not a {typed:%A}; type the date you mean "
        "(the weekday may be left out)"
    )
