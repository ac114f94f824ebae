"""Formulas in a plan workbook: their saved results kept through wzq's own save, never stale.

A spreadsheet program saves each formula with its result (the ``<v>`` beside the
``<f>`` of a cell). openpyxl, which writes the workbook back, keeps the formula
but drops the result, so the next ``wzq run``, ``wzq check`` or ``wzq report``
would find formulas with no result. :class:`WithSavedResults` wraps the
workbook for :func:`wzq.io.workbook.save.save_atomic`: after openpyxl has written
the package it puts every result back, taken from the file as it was read.

A saved result is put back only when it cannot have changed: wzq never edits a
cell of an input sheet or of a sheet of the user's, but it replaces its own
output sheets (:data:`wzq.io.workbook.layout.OUTPUT_SHEETS`). A formula that takes
its value from one of them, directly or through other formulas (followed
through cell and range references, defined names, table references and the
text given to ``INDIRECT``), is left without a result, so a spreadsheet program
recalculates it; when such a formula sits in an input cell the reader refuses
it, naming the cell of the output sheet it leads to (:meth:`Precedents.output_source`).

Also read here: whether a formula's saved result is empty text (``=IF(...,"",70)``,
read as a blank cell) and what else makes a saved result worth a warning: a
function whose value changes by itself (``TODAY``, ``NOW``, ``RAND`` ...) or a
reference to another workbook.

The workbook's bytes have already passed :func:`wzq.io.workbook.safety.read_checked`
(size, cell count, no XML entities); the sheet parts are parsed with defusedxml
as a stream, one cell at a time.
"""

from __future__ import annotations

import io
import posixpath
import re
import zipfile
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from defusedxml import ElementTree as SafeET
from openpyxl.formula.tokenizer import Token, Tokenizer
from openpyxl.utils import column_index_from_string, range_boundaries
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.formula import ArrayFormula, DataTableFormula

from wzq.io.workbook import layout as L
from wzq.io.workbook.cellref import cell_ref

__all__ = [
    "CHANGING_FUNCTIONS",
    "MAIN_NS",
    "PKG_REL_NS",
    "REL_NS",
    "TRACE_BUDGET",
    "WIDE_COLUMNS",
    "Area",
    "Cell",
    "Precedents",
    "Saved",
    "WithSavedResults",
    "formula_parts",
    "formula_text",
    "put_back",
    "saved_results",
    "sheet_parts",
]

MAIN_NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
PKG_REL_NS = "http://schemas.openxmlformats.org/package/2006/relationships"
_C, _F, _V, _ROW = (f"{{{MAIN_NS}}}{t}" for t in ("c", "f", "v", "row"))

#: Functions whose value changes by itself (the clock, chance), so a saved result
#: is only as new as the last recalculation (Excel's and LibreOffice's volatile functions).
CHANGING_FUNCTIONS = frozenset({"NOW", "TODAY", "RAND", "RANDBETWEEN", "RANDARRAY"})
#: A cell: (sheet title, row, column).
Cell = tuple[str, int, int]
#: Block tests spent passing taint from formula to formula before the trace falls back
#: to whole sheets (keeps a workbook of many chained formulas fast).
TRACE_BUDGET = 2_000_000
#: Blocks wider than this many columns are tested against every tainted cell of their sheet.
WIDE_COLUMNS = 64
#: Result types a saved result may carry back (``<c t="...">``): number (no type),
#: text from a formula, logical, error, ISO date.
_KEPT_TYPES = {None, "n", "str", "b", "e", "d"}

_CELL_REF = re.compile(r"^\$?([A-Za-z]{1,3})\$?(\d+)$")
#: A block of cells as a formula writes it (``$`` removed): A1, A1:B2, A:C, 1:3.
_BLOCK = re.compile(r"[A-Za-z]{1,3}\d+(?::[A-Za-z]{1,3}\d+)?|[A-Za-z]{1,3}:[A-Za-z]{1,3}|\d+:\d+")
_FORMULA_CELL = re.compile(
    r'<c r="([A-Z]{1,3}[0-9]+)"([^>]*)>(<f(?:\s[^>]*)?(?:/>|>[^<]*</f>))<v\s*(?:/>|></v>)</c>'
)


@dataclass(frozen=True)
class Saved:
    """A formula's result as the file holds it: the cell's type attribute and ``<v>`` text
    (``None``: the cell has no ``<v>``)."""

    type: str | None
    text: str | None

    @property
    def empty_text(self) -> bool:
        """The formula's result is the empty text ``""`` (a blank-looking cell)."""
        return self.type == "str" and self.text == ""

    @property
    def present(self) -> bool:
        return self.text is not None


def _zip(source: bytes | Path) -> zipfile.ZipFile:
    return zipfile.ZipFile(io.BytesIO(source) if isinstance(source, bytes) else Path(source))


def sheet_parts(zf: zipfile.ZipFile) -> dict[str, str]:
    """Sheet title -> part name (``xl/worksheets/sheet1.xml``) from the workbook part."""
    rels_root = SafeET.fromstring(zf.read("xl/_rels/workbook.xml.rels"))
    targets = {
        r.get("Id"): r.get("Target", "") for r in rels_root.iter(f"{{{PKG_REL_NS}}}Relationship")
    }
    book = SafeET.fromstring(zf.read("xl/workbook.xml"))
    out = {}
    for sheet in book.iter(f"{{{MAIN_NS}}}sheet"):
        target = targets.get(sheet.get(f"{{{REL_NS}}}id"), "")
        if not target:
            continue
        part = target.lstrip("/") if target.startswith("/") else posixpath.join("xl", target)
        out[sheet.get("name", "")] = posixpath.normpath(part)
    return out


def _position(ref: str | None, row: int, col: int) -> tuple[int, int]:
    if ref:
        m = _CELL_REF.match(ref)
        if m:
            return int(m.group(2)), column_index_from_string(m.group(1).upper())
    return row, col


def _formula_cells(stream: Any) -> dict[tuple[int, int], Saved]:
    """Every cell holding a formula in one sheet part: (row, column) -> :class:`Saved`."""
    out: dict[tuple[int, int], Saved] = {}
    row, col = 0, 0
    for event, el in SafeET.iterparse(stream, events=("start", "end")):
        if event == "start":
            if el.tag == _ROW:
                r = el.get("r")
                row, col = (int(r) if r and r.isdigit() else row + 1), 0
            continue
        if el.tag == _C:
            row, col = _position(el.get("r"), row, col + 1)
            if el.find(_F) is not None:
                v = el.find(_V)
                out[(row, col)] = Saved(el.get("t"), None if v is None else (v.text or ""))
            el.clear()
        elif el.tag == _ROW:
            el.clear()
    return out


_FORMULA_TAG = re.compile(rb"<f[ \t\r\n>/]")  # a formula element, unprefixed
_ANY_CELL_TAG = re.compile(rb"<c[ \t\r\n>/]")
_PREFIXED = re.compile(rb"<[A-Za-z_][\w.-]*:(?:c|f|v|row)[ \t\r\n>/]")


def _formula_cells_usual(data: bytes) -> dict[tuple[int, int], Saved] | None:
    """:func:`_formula_cells` of a sheet part written the usual way (spreadsheetml as the
    default namespace, no prefixes, every cell with its ``r="A1"`` first), found from its
    few formula elements instead of parsing every cell; ``None`` for any other spelling
    (then every cell is parsed). A year of demand holds some 26,000 cells and the
    template's two formulas."""
    declaration = b'xmlns="' + MAIN_NS.encode() + b'"'
    if data.count(b'xmlns="') != 1 or declaration not in data or _PREFIXED.search(data):
        return None
    if data.count(b'<c r="') != len(_ANY_CELL_TAG.findall(data)):
        return None
    out: dict[tuple[int, int], Saved] = {}
    for m in _FORMULA_TAG.finditer(data):
        start = data.rfind(b'<c r="', 0, m.start())
        head_end = data.find(b">", start)
        end = data.find(b"</c>", m.start())
        if start < 0 or end < 0 or data[head_end - 1 : head_end] == b"/":
            return None
        if data.find(b"</c>", start, m.start()) >= 0:
            return None
        wrapped = b"<w " + declaration + b">" + data[start : end + 4] + b"</w>"
        cell = SafeET.fromstring(wrapped).find(_C)
        ref = cell.get("r") if cell is not None else None
        if cell is None or ref is None or not _CELL_REF.match(ref) or cell.find(_F) is None:
            return None
        v = cell.find(_V)
        out[_position(ref, 0, 0)] = Saved(cell.get("t"), None if v is None else (v.text or ""))
    return out


def saved_results(
    source: bytes | Path, sheets: Iterable[str] | None = None
) -> dict[str, dict[tuple[int, int], Saved]]:
    """Sheet title -> the saved results of every formula cell in it (all sheets, or ``sheets``).

    A package that cannot be read this way gives an empty answer (nothing is put back).
    """
    try:
        with _zip(source) as zf:
            parts = sheet_parts(zf)
            wanted = parts if sheets is None else {s: parts[s] for s in sheets if s in parts}
            out = {}
            for title, part in wanted.items():
                data = zf.read(part)
                usual = _formula_cells_usual(data)
                out[title] = usual if usual is not None else _formula_cells(io.BytesIO(data))
            return out
    except Exception:  # a damaged or unusual package: no saved results, never a crash
        return {}


# -- precedents ---------------------------------------------------------------------------------


def formula_text(cell: Any) -> str | None:
    """The formula in an openpyxl cell (``=...``), or ``None``."""
    v = cell.value
    if isinstance(v, ArrayFormula):
        return v.text
    if isinstance(v, DataTableFormula):
        return None
    if cell.data_type == "f" and isinstance(v, str):
        return v
    return None


@dataclass(frozen=True)
class _Parts:
    ranges: tuple[str, ...]
    functions: frozenset[str]
    texts: tuple[str, ...]


def formula_parts(formula: str) -> _Parts:
    """References, function names and text constants of a formula (openpyxl's tokenizer)."""
    ranges, functions, texts = [], set(), []
    try:
        items = Tokenizer(formula if formula.startswith("=") else "=" + formula).items
    except Exception:  # a formula the tokenizer cannot read: nothing known about it
        return _Parts((), frozenset(), ())
    for t in items:
        if t.type == Token.OPERAND and t.subtype == Token.RANGE:
            ranges.append(t.value)
        elif t.type == Token.OPERAND and t.subtype == Token.TEXT:
            texts.append(t.value.strip('"'))
        elif t.type == Token.FUNC and t.subtype == Token.OPEN:
            functions.add(t.value.rstrip("(").upper().removeprefix("_XLFN."))
    return _Parts(tuple(ranges), frozenset(functions), tuple(texts))


def _split_sheet(ref: str) -> tuple[str | None, str]:
    """``'My sheet'!A1:B2`` -> (``My sheet``, ``A1:B2``); no sheet -> (None, ref)."""
    if "!" not in ref:
        return None, ref
    sheet, _, area = ref.rpartition("!")
    if sheet.startswith("'") and sheet.endswith("'"):
        sheet = sheet[1:-1].replace("''", "'")
    return sheet, area


@dataclass(frozen=True)
class Area:
    """A block of cells on one sheet (1-based, inclusive); ``None`` ends are open."""

    sheet: str
    min_col: int | None
    min_row: int | None
    max_col: int | None
    max_row: int | None

    def holds(self, row: int, col: int) -> bool:
        return (
            (self.min_row is None or row >= self.min_row)
            and (self.max_row is None or row <= self.max_row)
            and (self.min_col is None or col >= self.min_col)
            and (self.max_col is None or col <= self.max_col)
        )

    @property
    def single(self) -> tuple[int, int] | None:
        one_row = self.min_row is not None and self.min_row == self.max_row
        if one_row and self.min_col is not None and self.min_col == self.max_col:
            return self.min_row, self.min_col
        return None


class Precedents:
    """What the formulas of a workbook take their values from (read on the openpyxl book)."""

    def __init__(self, book: Workbook) -> None:
        self.book = book
        self._sheets = {ws.title: ws for ws in book.worksheets}
        self._output = {name.casefold() for name in L.OUTPUT_SHEETS}
        self._tainted: dict[Cell, str] | None = None

    def is_output(self, sheet: str) -> bool:
        return sheet.casefold() in self._output

    def areas(self, ref: str, home: str, depth: int = 0) -> tuple[list[Area], list[str]]:
        """The blocks a reference stands for, and any further formulas (of defined names)."""
        if ref.startswith("["):  # [1]Sheet1!A1: another workbook
            return [], []
        sheet, area = _split_sheet(ref)
        sheet = home if sheet is None else sheet
        text = area.replace("$", "")
        if "[" in text:  # a table reference: Table1[Column] -> the table's block
            name = text.split("[", 1)[0]
            for ws in self.book.worksheets:
                for tname, ref in ws.tables.items():  # TableList.items(): (name, ref)
                    if tname.casefold() == name.casefold():
                        block = self._area(ws.title, str(ref))
                        return ([] if block is None else [block]), []
            return [], []
        block = self._area(sheet, text)
        if block is not None:
            return [block], []
        # a defined name (sheet-scoped first), standing for cells or for a formula
        ws = self._sheets.get(sheet)
        dn = None
        if ws is not None and area in ws.defined_names:
            dn = ws.defined_names[area]
        if dn is None:
            dn = self.book.defined_names.get(area)
        if dn is None or depth > 8:
            return [], []
        try:
            dests = list(dn.destinations)
        except Exception:
            dests = []
        if dests:
            blocks = [self._area(s, c.replace("$", "")) for s, c in dests]
            return [b for b in blocks if b is not None], []
        value = str(dn.value or "")
        return [], [value] if value else []

    @staticmethod
    def _area(sheet: str, text: str) -> Area | None:
        if not _BLOCK.fullmatch(text):  # a bare word is a name, not a column (RES is no RES:RES)
            return None
        try:
            min_col, min_row, max_col, max_row = range_boundaries(text)
        except (ValueError, TypeError):
            return None
        return Area(sheet, min_col, min_row, max_col, max_row)

    def _refs_of(self, formula: str, home: str, depth: int = 0) -> tuple[list[Area], _Parts]:
        parts = formula_parts(formula)
        blocks: list[Area] = []
        for ref in parts.ranges:
            found, formulas = self.areas(ref, home, depth)
            blocks += found
            for f in formulas:
                more, _ = self._refs_of(f, home, depth + 1)
                blocks += more
        return blocks, parts

    def references(self, formula: str, home: str) -> list[Area]:
        """The blocks of cells a formula on the sheet ``home`` refers to (names followed)."""
        return self._refs_of(formula, home)[0]

    def output_source(self, sheet: str, row: int, col: int) -> str | None:
        """The reference on an output sheet that the formula in this cell depends on
        (directly, through other formulas or through names), or ``None``.

        Text given to a function (``INDIRECT("Results!B5")``) that names an output
        sheet counts too.
        """
        if self._tainted is None:
            self._tainted = self._trace()
        return self._tainted.get((sheet, row, col))

    def _formulas(self) -> dict[Cell, str]:
        """Every formula outside the output sheets: (sheet, row, column) -> its text."""
        out = {}
        for ws in self.book.worksheets:
            if self.is_output(ws.title):
                continue
            for (r, c), cell in ws._cells.items():
                text = formula_text(cell)
                if text is not None:
                    out[(ws.title, r, c)] = text
        return out

    def _direct(self, text: str, sheet: str) -> str | None:
        """The output-sheet reference a formula names itself (not through other cells)."""
        blocks, parts = self._refs_of(text, sheet)
        for t in parts.texts:
            if any(f"{name.casefold()}!" in t.casefold() for name in L.OUTPUT_SHEETS):
                return t
        for block in blocks:
            if self.is_output(block.sheet):
                return _show_area(block)
        return None

    def _trace(self) -> dict[Cell, str]:
        """Every formula cell whose value follows an output sheet, with the reference it
        leads to: found directly, then passed on to the formulas that refer to them.

        Only formulas whose text mentions an output sheet (or a name standing for one) can
        depend on it directly, so a workbook without such formulas costs one pass of
        substring tests. Passing taint on is bounded (:data:`TRACE_BUDGET` block tests);
        past it, every formula on a sheet that refers, through sheets, to a tainted one is
        taken as tainted (never a stale value kept).
        """
        formulas = self._formulas()
        marks = [name.casefold() for name in L.OUTPUT_SHEETS]
        for name, dn in self.book.defined_names.items():
            if any(m in str(dn.value or "").casefold() for m in marks):
                marks.append(name.casefold())
        tainted: dict[Cell, str] = {}
        for key, text in formulas.items():
            low = text.casefold()
            if any(m in low for m in marks):
                source = self._direct(text, key[0])
                if source is not None:
                    tainted[key] = source
        if not tainted:
            return tainted
        # dependents: by sheet and column of the cells referred to; wide blocks apart
        by_column: dict[tuple[str, int], list[tuple[Area, Cell]]] = {}
        wide: dict[str, list[tuple[Area, Cell]]] = {}
        for key, text in formulas.items():
            for block in self._refs_of(text, key[0])[0]:
                if (
                    block.min_col is None
                    or block.max_col is None
                    or (block.max_col - block.min_col > WIDE_COLUMNS)
                ):
                    wide.setdefault(block.sheet, []).append((block, key))
                    continue
                for c in range(block.min_col, block.max_col + 1):
                    by_column.setdefault((block.sheet, c), []).append((block, key))
        work = list(tainted)
        tests = 0
        while work:
            sheet, r, c = cell = work.pop()
            for block, dep in (*by_column.get((sheet, c), ()), *wide.get(sheet, ())):
                tests += 1
                if dep not in tainted and block.holds(r, c):
                    tainted[dep] = tainted[cell]
                    work.append(dep)
            if tests > TRACE_BUDGET:
                return self._by_sheet(formulas, tainted)
        return tainted

    def _by_sheet(self, formulas: dict[Cell, str], tainted: dict[Cell, str]) -> dict[Cell, str]:
        """Taint passed on sheet by sheet: every formula on a sheet that refers, directly or
        through other sheets, to a sheet holding tainted formulas."""
        refers: dict[str, set[str]] = {}
        for (sheet, _, _), text in formulas.items():
            refers.setdefault(sheet, set()).update(b.sheet for b in self._refs_of(text, sheet)[0])
        bad = {key[0] for key in tainted}
        grew = True
        while grew:
            more = {s for s, targets in refers.items() if s not in bad and targets & bad}
            grew = bool(more)
            bad |= more
        out = dict(tainted)
        for key in formulas:
            if key[0] in bad and key not in out:
                out[key] = (
                    f"the sheet '{key[0]}', whose formulas take values from wzq's output sheets"
                )
        return out

    def notes(self, sheet: str, row: int, col: int) -> list[str]:
        """Why the saved result of this formula may not be today's: functions that change
        by themselves, references to other workbooks (this cell's formula only)."""
        ws = self._sheets.get(sheet)
        cell = None if ws is None else ws._cells.get((row, col))
        formula = None if cell is None else formula_text(cell)
        if formula is None:
            return []
        parts = formula_parts(formula)
        out = []
        changing = sorted(parts.functions & CHANGING_FUNCTIONS)
        if changing:
            names = ", ".join(f"{f}()" for f in changing)
            out.append(
                f"its formula uses {names}, whose value changes by itself; wzq uses the result "
                "saved with the workbook (as of its last recalculation): type the value if it "
                "must not change"
            )
        if any(r.startswith("[") for r in parts.ranges):
            out.append(
                "its formula takes a value from another workbook; wzq uses the result saved "
                "with this workbook. Open it in your spreadsheet program with the other "
                "workbook available, update the links and save it"
            )
        return out


def _show_area(block: Area) -> str:
    if block.min_row is None or block.min_col is None:
        return f"the sheet '{block.sheet}'"
    return cell_ref(block.sheet, block.min_row, block.min_col)


# -- putting saved results back after a save ---------------------------------------------------


def _restorable(
    book: Workbook, saved: dict[str, dict[tuple[int, int], Saved]]
) -> dict[str, dict[str, Saved]]:
    """Sheet title -> {cell coordinate: saved result} of the results safe to put back."""
    precedents = Precedents(book)
    out: dict[str, dict[str, Saved]] = {}
    sheets = {ws.title: ws for ws in book.worksheets}
    for title, cells in saved.items():
        ws = sheets.get(title)
        if ws is None or precedents.is_output(title):
            continue
        keep: dict[str, Saved] = {}
        for (row, col), result in cells.items():
            if not result.present or result.type not in _KEPT_TYPES:
                continue
            cell = ws._cells.get((row, col))
            if cell is None or formula_text(cell) is None:
                continue
            if precedents.output_source(title, row, col) is not None:
                continue  # its value follows wzq's results: left for the program to recompute
            keep[cell.coordinate] = result
        if keep:
            out[title] = keep
    return out


def _escape(text: str) -> str:
    """``xml.sax.saxutils.escape`` (``&``, ``<``, ``>``), without importing it: that module
    imports urllib, http, ssl and email, about 12 ms of every press."""
    return text.replace("&", "&amp;").replace(">", "&gt;").replace("<", "&lt;")


def _put_back(xml: str, results: dict[str, Saved]) -> str:
    def one(m: re.Match[str]) -> str:
        result = results.get(m.group(1))
        attrs = m.group(2)
        if result is None or " t=" in attrs:
            return m.group(0)
        t = "" if result.type in (None, "n") else f' t="{result.type}"'
        return f'<c r="{m.group(1)}"{attrs}{t}>{m.group(3)}<v>{_escape(result.text or "")}</v></c>'

    return _FORMULA_CELL.sub(one, xml)


def put_back(package: bytes, results: dict[str, dict[str, Saved]]) -> bytes:
    """``package`` (as openpyxl wrote it) with the saved results put back in its formula cells."""
    if not results:
        return package
    with zipfile.ZipFile(io.BytesIO(package)) as zin:
        parts = sheet_parts(zin)
        edits = {parts[t]: r for t, r in results.items() if t in parts}
        if not edits:
            return package
        out = io.BytesIO()
        with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zout:
            for info in zin.infolist():
                data = zin.read(info)
                if info.filename in edits:
                    data = _put_back(data.decode("utf-8"), edits[info.filename]).encode("utf-8")
                zout.writestr(info, data)
    return out.getvalue()


class WithSavedResults:
    """A workbook whose ``save`` puts the saved formula results of ``original`` back.

    Give it to :func:`wzq.io.workbook.save.save_atomic` in place of the book. The
    results are those of the file as read (``original``: its bytes); results
    that depend on wzq's output sheets are left out (:class:`Precedents`).
    """

    def __init__(self, book: Workbook, original: bytes) -> None:
        self.book = book
        self.original = original

    def save(self, filename: Any) -> None:
        sheets = [
            ws.title
            for ws in self.book.worksheets
            if ws.title not in L.OUTPUT_SHEETS
            and any(formula_text(c) is not None for c in ws._cells.values())
        ]
        if not sheets:
            self.book.save(filename)
            return
        results = _restorable(self.book, saved_results(self.original, sheets))
        buf = io.BytesIO()
        self.book.save(buf)
        data = put_back(buf.getvalue(), results)
        if hasattr(filename, "write"):
            filename.write(data)
        else:
            Path(filename).write_bytes(data)
