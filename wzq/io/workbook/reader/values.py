"""What every part of the reader shares: limits, the value that could not be read
(:data:`_MISSING`), how a cell is named (:func:`cell_ref`), how values are shown in
messages, and the shapes of tables and rows."""

from __future__ import annotations

import datetime as dt
import re
import unicodedata
from dataclasses import dataclass
from functools import lru_cache
from typing import Any
from weakref import WeakKeyDictionary

from openpyxl.styles.colors import COLOR_INDEX
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
    "OUT_OF_RANGE",
    "WORKBOOK_SUFFIXES",
    "cell_ref",
    "contrast",
    "destinations",
    "hidden_column",
    "hidden_row",
    "other_weekday",
    "out_of_range",
    "text_at",
    "typed_unit",
    "unseen",
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
#: Workbook -> cell coordinate -> the numbers openpyxl found there in a date or time cell
#: and could not make a date of (it gives the cell the error #VALUE!, where a spreadsheet
#: shows ########); the sheet is not known, so a coordinate may gather several numbers.
#: The coordinate is the cell's ``r`` attribute as the file stores it, a plain reference
#: with no ``$`` (ECMA-376 Part 1, the ``c`` element's ``r``, of type ST_CellRef; from
#: memory of the standard).
OUT_OF_RANGE: WeakKeyDictionary[Any, dict[str, set[str]]] = WeakKeyDictionary()
_OUT_OF_RANGE_WARNING = re.compile(
    r"^Cell ([A-Z]{1,3}\d+) is marked as a date but the serial value (\S+) is outside"
)
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


def text_at(ws: Any, row: int, col: int) -> str | None:
    """The text typed in a cell (a label, a unit), or ``None`` when it holds no text: a
    number, a formula, nothing, or no cell at all (openpyxl keeps none in row or column
    0, so the cell left of column A or above row 1 is ``None`` too)."""
    cell = ws._cells.get((row, col))
    return cell.value if cell is not None and cell.data_type == "s" else None


def _blank(v: Any) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


@lru_cache(maxsize=1024)  # headers are looked up once per cell of a table
def _norm(text: str) -> str:
    """Text as a word of a list or a name is matched: case and spacing aside, and
    without the invisible format characters (Unicode category Cf: a zero-width space
    or joiner, a soft hyphen, a byte-order mark) that text pasted from a document
    carries, which show nothing and mean nothing."""
    shown = "".join(c for c in str(text) if unicodedata.category(c) != "Cf")
    return " ".join(shown.split()).casefold()


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


#: Text whose contrast ratio with its fill is below this cannot be read on the sheet. The
#: ratio is WCAG 2.1's (W3C, 2018, "contrast ratio" and "relative luminance"): 1 for the
#: same colour, 21 for black on white; 4.5 is its minimum for body text, and below 1.5
#: text is all but invisible (the threshold is common practice, no source).
MIN_CONTRAST = 1.5


def _rgb(color: Any) -> str | None:
    """``"RRGGBB"`` of an openpyxl colour given as RGB or as an indexed colour, else
    ``None`` (a theme or automatic colour, which depends on the program)."""
    if color is None:
        return None
    if color.type == "rgb" and isinstance(color.rgb, str) and len(color.rgb) in (6, 8):
        return color.rgb[-6:]
    if color.type == "indexed" and isinstance(color.indexed, int) and color.indexed < 64:
        return COLOR_INDEX[color.indexed][-6:]
    return None


def _luminance(rgb: str) -> float:
    """WCAG 2.1 relative luminance of ``"RRGGBB"`` (sRGB channels linearised)."""
    lin = []
    for i in (0, 2, 4):
        c = int(rgb[i : i + 2], 16) / 255
        lin.append(c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4)
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def contrast(a: str, b: str) -> float:
    """WCAG 2.1 contrast ratio of two ``"RRGGBB"`` colours, 1 to 21."""
    hi, lo = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (hi + 0.05) / (lo + 0.05)


def unseen(cell: Any) -> str | None:
    """Why a cell's value is not shown on the sheet, or ``None`` when it is: a number
    format whose every section is empty (``;;;``) shows nothing, and text the colour of
    its fill (white on white) cannot be read. The value is still read as typed, so the
    user must be told. A theme or automatic colour is taken to be readable. A cell with
    no style of its own shows the workbook's default (its Normal style), which is
    looked at too: a Normal font in white hides every value typed on white."""
    if cell is None:
        return None
    fmt = cell.number_format  # openpyxl gives every cell one ("General" by default)
    if ";" in fmt and not re.sub(r'""|;|\s', "", fmt):
        return f"its number format '{fmt}' shows nothing"
    text = _rgb(cell.font.color)  # openpyxl gives every cell a font (its default)
    if text is None:
        return None
    fill = cell.fill
    if fill is None or fill.fill_type is None:
        back = "FFFFFF"  # no fill: the sheet's white
    elif fill.fill_type == "solid":
        back = _rgb(fill.fgColor)
        if back is None:
            return None
    else:
        return None  # a pattern or gradient: left alone
    if contrast(text, back) >= MIN_CONTRAST:
        return None
    on = "no fill" if fill is None or fill.fill_type is None else f"a fill of #{back}"
    return f"its text colour #{text} on {on} cannot be read"


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


#: Words naming a unit of length, or of time, as typed in a unit cell: the canonical unit
#: each names. A speed or density is told by its length (``km/h``, ``veh/mi/ln``); the
#: run-together speeds name theirs (common practice, no source).
_UNIT_WORDS: dict[str, str] = {
    **dict.fromkeys(("mi", "mile", "miles", "mph"), "mi"),
    **dict.fromkeys(("km", "kms", "kilometre", "kilometres", "kilometer", "kilometers"), "km"),
    **dict.fromkeys(("kph", "kmh", "kmph"), "km"),
    **dict.fromkeys(("ft", "foot", "feet"), "ft"),
    **dict.fromkeys(("m", "metre", "metres", "meter", "meters"), "m"),
    **dict.fromkeys(("s", "sec", "secs", "second", "seconds"), "s"),
    **dict.fromkeys(("min", "mins", "minute", "minutes"), "min"),
    **dict.fromkeys(("h", "hr", "hrs", "hour", "hours"), "h"),
}
_LENGTHS = frozenset(("mi", "km", "ft", "m"))


def typed_unit(text: str, lengths: bool = True) -> str | None:
    """The one unit of length (``lengths``) or else of time that a unit cell's text names
    (``'kph'`` -> ``'km'``, ``'veh/mi/ln'`` -> ``'mi'``, ``'s/veh'`` -> ``'s'``), or
    ``None`` when it names none, or more than one (``'mi (km)'``)."""
    words = re.findall(r"[a-z]+", text.casefold())
    found = {_UNIT_WORDS[w] for w in words if w in _UNIT_WORDS}
    found = found & _LENGTHS if lengths else found - _LENGTHS
    return found.pop() if len(found) == 1 else None


def out_of_range(book: Any, messages: list[str]) -> None:
    """Keep, for ``book``, the numbers openpyxl's warnings (``messages``) say it could not
    make a date of (:data:`OUT_OF_RANGE`)."""
    found: dict[str, set[str]] = {}
    for text in messages:
        m = _OUT_OF_RANGE_WARNING.match(text)
        if m:
            found.setdefault(m.group(1), set()).add(m.group(2))
    if found:
        OUT_OF_RANGE[book] = found
