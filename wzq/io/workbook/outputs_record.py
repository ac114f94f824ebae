"""What wzq wrote on its output sheets, kept so that what you typed there since is seen.

wzq replaces its output sheets (:data:`wzq.io.workbook.layout.OUTPUT_SHEETS`) on
every run. A note typed in a cell of the Results sheet, a comment, a chart of your
own on the Charts sheet or the print orientation changed on the Permit table would
be lost by the next run without a word. So every run keeps a record of what it
wrote on each output sheet, on wzq's very hidden cache sheet
(:func:`wzq.io.workbook.windows_cache.kept_sheet`): the block of cells it wrote,
a digest of each column's values and of each block of :data:`BLOCK` rows' values,
and the sheet's comments, charts, pictures, print area and orientation. Before the
next run writes into the workbook, :func:`typed_since` compares the sheets with
that record and names what differs (the cells outside the block one by one, a
changed value by its column and rows), when the sheets are still those of the run
that kept the record (the run time on the Run log: the Recalculate button in Excel
writes the sheets without a record, and then nothing is compared);
:func:`wzq.io.workbook.run.run_to` then leaves the workbook unchanged and writes the
results to a copy, as it does for content openpyxl cannot keep.

Values are compared as a spreadsheet program stores them (numbers, dates and times
as numbers to 12 significant digits; text with its line ends as ``\\n``), so
opening and saving the workbook in Excel or LibreOffice changes nothing. A
workbook whose outputs were written before this record existed has none, and is
not compared.
"""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
import html
import io
import json
import posixpath
import re
import warnings
import zipfile
import zlib
from pathlib import Path
from typing import Any

from openpyxl.utils import column_index_from_string, coordinate_to_tuple, get_column_letter
from openpyxl.utils.datetime import to_excel
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.worksheet import Worksheet

from wzq.io.workbook import layout
from wzq.io.workbook.cellref import cell_ref
from wzq.io.workbook.reader.skip import SkippingReader
from wzq.io.workbook.safety import inspect_bytes, read_small_part, sheet_parts
from wzq.io.workbook.windows_cache import kept_sheet
from wzq.io.workbook.writer import RUN_LOG, RUN_TIME_CELL, put_text

__all__ = [
    "BLOCK",
    "BOUNDS_NAME",
    "beyond_bounds",
    "bounds_text",
    "differences",
    "package_sheets",
    "read_bounds",
    "read_record",
    "sheet_record",
    "typed_on_outputs",
    "typed_since",
    "write_record",
]

#: Rows per digest of a block of rows (a changed value is named by its column and block).
BLOCK = 50
#: The column of the cache sheet that holds the record (the closure-window search
#: uses the first four).
COLUMN = 6
_LABEL = "output sheets as wzq wrote them"
_FORMAT = 2
_CHUNK = 32_000


def _value_text(value: Any, epoch: dt.datetime) -> str | None:
    """A cell's value as a spreadsheet program stores it (``None``: an empty cell)."""
    if type(value) is float or type(value) is int:  # most cells, first
        return f"n:{value:.12g}"
    if value is None:
        return None
    if isinstance(value, bool):
        return f"b:{value}"
    if isinstance(value, dt.date | dt.time | dt.timedelta):
        value = to_excel(value, epoch)
    if isinstance(value, int | float):
        return f"n:{float(value):.12g}"
    text = str(getattr(value, "text", value))  # an array formula's text, rich text as shown
    text = text.replace("\r\n", "\n").replace("\r", "\n")
    return f"s:{text}" if text else None


def _area(text: str | None) -> str | None:
    """A print area without its sheet name, quotes and dollar signs (``A1:Q76``), as
    every spreadsheet program writes the same area."""
    if not text:
        return None
    parts = [part.rpartition("!")[2].replace("$", "").strip().upper() for part in text.split(",")]
    return ",".join(parts)


def _extras(ws: Worksheet) -> dict[str, Any]:
    """A sheet's comments, charts and pictures (counted), print area and orientation."""
    return {
        "comments": sum(1 for c in ws._cells.values() if c.comment),
        "charts": len(ws._charts),
        "pictures": len(ws._images),
        "print_area": _area(ws.print_area),
        "orientation": ws.page_setup.orientation or "portrait",
    }


Cells = list[tuple[int, int, str]]


def _cells(ws: Worksheet, epoch: dt.datetime) -> Cells:
    """(row, column, value as stored) of every non-empty cell, row by row (read from the
    cells the sheet holds: iterating its rows would add empty cells to it)."""
    return [
        (r, k, text)
        for (r, k), c in sorted(ws._cells.items())
        if (text := _value_text(c.value, epoch)) is not None
    ]


def _sha(parts: list[str]) -> str:
    return hashlib.sha256("\0".join(parts).encode("utf-8", "surrogatepass")).hexdigest()[:16]


def _block(cells: Cells) -> tuple[int, int]:
    """The block of ``cells``: its last row and last column (0, 0 when empty)."""
    return max((r for r, _, _ in cells), default=0), max((k for _, k, _ in cells), default=0)


def _first_five(found: list[str]) -> list[str]:
    """The first five cells named, then how many more."""
    return found[:5] + ([f"and {len(found) - 5} more cells"] if len(found) > 5 else [])


def _digests(cells: Cells) -> dict[str, Any]:
    """The block of ``cells`` (last row, last column) and the digests of each column and
    of each block of :data:`BLOCK` rows."""
    rows, cols = _block(cells)
    by_col: list[list[str]] = [[] for _ in range(cols)]
    by_block: list[list[str]] = [[] for _ in range((rows + BLOCK - 1) // BLOCK)]
    for r, k, text in cells:
        by_col[k - 1].append(f"{r}\0{text}")
        by_block[(r - 1) // BLOCK].append(f"{k}\0{text}")
    return {
        "rows": rows,
        "cols": cols,
        "col": [_sha(p) for p in by_col],
        "block": [_sha(p) for p in by_block],
    }


def sheet_record(ws: Worksheet, epoch: dt.datetime) -> dict[str, Any]:
    """The record of one sheet: its block of non-empty cells, the digests of each
    column and of each block of :data:`BLOCK` rows, and its other content."""
    return {**_digests(_cells(ws, epoch)), "extras": _extras(ws)}


def _run_time(book: Workbook) -> str | None:
    """The run time on the Run log (the run that wrote the output sheets)."""
    if RUN_LOG not in book.sheetnames:
        return None
    cell = book[RUN_LOG]._cells.get(coordinate_to_tuple(RUN_TIME_CELL))
    return None if cell is None else _value_text(cell.value, book.epoch)


def _output_sheets(book: Workbook) -> list[str]:
    return [name for name in layout.OUTPUT_SHEETS if name in book.sheetnames]


def write_record(book: Workbook, ws_cache: Worksheet) -> None:
    """Keep the record of ``book``'s output sheets, as written, on the cache sheet."""
    record = {
        "format": _FORMAT,
        "run": _run_time(book),
        "sheets": {n: sheet_record(book[n], book.epoch) for n in _output_sheets(book)},
    }
    packed = zlib.compress(json.dumps(record, sort_keys=True).encode("utf-8"), 6)
    text = base64.b64encode(packed).decode("ascii")
    for (cell,) in ws_cache.iter_rows(min_col=COLUMN, max_col=COLUMN):
        cell.value = None
    put_text(ws_cache, 1, COLUMN, _LABEL)
    for i in range(0, len(text), _CHUNK):
        put_text(ws_cache, 2 + i // _CHUNK, COLUMN, text[i : i + _CHUNK])


def read_record(ws_cache: Worksheet | None) -> dict[str, Any] | None:
    """The record kept on the cache sheet (``None``: none, or not intact)."""
    held = {} if ws_cache is None else ws_cache._cells  # (asking for a cell would add it)
    label = held.get((1, COLUMN))
    if label is None or label.value != _LABEL:
        return None
    chunks = sorted((r, c.value) for (r, k), c in held.items() if k == COLUMN and r > 1)
    text = "".join(str(v) for _, v in chunks if v)
    try:
        record = json.loads(zlib.decompress(base64.b64decode(text, validate=True)))
    except (ValueError, zlib.error):
        return None
    if not isinstance(record, dict) or record.get("format") != _FORMAT:
        return None
    return record


def _shown(text: str) -> str:
    """A stored value in a message: its text quoted, cut at 40 characters."""
    shown = text[2:] if len(text) <= 42 else text[2:41] + "..."
    return repr(shown)


def _rows(block: int, rows: int) -> str:
    first = block * BLOCK + 1
    return f"{first}-{min(first + BLOCK - 1, rows)}"


Sheet = tuple[Cells, dict[str, Any]]  # a sheet as compared: its cells and its extras


def differences(name: str, before: dict[str, Any], now: Sheet) -> list[str]:
    """What differs on sheet ``name`` as it is now (its cells and extras) from its
    record ``before``, in words naming cells."""
    cells, extras = now
    inside = [(r, k, t) for r, k, t in cells if r <= before["rows"] and k <= before["cols"]]
    after = _digests(inside)
    outside = [
        f"{cell_ref(name, r, k)} {_shown(t)}"
        for r, k, t in cells
        if r > before["rows"] or k > before["cols"]
    ]
    found = _first_five(outside)
    cols = [
        get_column_letter(k + 1)
        for k, digest in enumerate(before["col"])
        if k >= len(after["col"]) or after["col"][k] != digest
    ]
    blocks = [
        _rows(b, before["rows"])
        for b, digest in enumerate(before["block"])
        if b >= len(after["block"]) or after["block"][b] != digest
    ]
    if cols and blocks:
        found.append(
            f"{name}: a value wzq wrote was changed or cleared (column {', '.join(cols)}; "
            f"rows {', '.join(blocks)})"
        )
    words = {
        "comments": "a comment added or removed",
        "charts": "a chart added or removed",
        "pictures": "a picture added or removed",
        "print_area": "the print area changed",
        "orientation": "the print orientation changed",
    }
    for key, what in words.items():
        if extras.get(key) != before["extras"].get(key):
            found.append(f"{name}: {what}")
    return found


def typed_since(record: dict[str, Any] | None, sheets: dict[str, Sheet]) -> list[str]:
    """What was typed or changed on the output ``sheets`` (name -> cells and extras) since
    wzq wrote them, as ``record`` holds them; empty when nothing was, or no record, or
    the sheets are another run's (the run time on the Run log is not the record's)."""
    run_log = {(r, k): t for r, k, t in sheets.get(RUN_LOG, ([], {}))[0]}
    if record is None or record.get("run") != run_log.get(coordinate_to_tuple(RUN_TIME_CELL)):
        return []  # outputs another run wrote (the Recalculate button in Excel keeps none)
    found = []
    try:
        for name, before in record.get("sheets", {}).items():
            if name in layout.OUTPUT_SHEETS and name in sheets:
                found += differences(name, before, sheets[name])
    except (AttributeError, KeyError, TypeError, ValueError):
        return []  # a record that is not wzq's as written: nothing to compare with
    return found


def typed_on_outputs(book: Workbook, data: bytes, path: Path) -> list[str]:
    """What was typed or changed on the output sheets of the workbook file ``path`` (its
    bytes ``data``, ``book`` parsed from them without the output sheets) since wzq's
    last run wrote them; empty when nothing was, or wzq kept no record there. The
    output sheets' parts are checked as every other part before they are read: from
    the package's XML (:func:`package_sheets`), or parsed by openpyxl when that XML is
    of a form this reading does not follow."""
    record = read_record(kept_sheet(book))
    if record is None:
        return []
    inspect_bytes(data, path.name, path.suffix)
    sheets = package_sheets(data, book)
    if sheets is None:
        reader = _OutputsOnly(io.BytesIO(data), False, False, False, True, False)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # openpyxl warns about extensions it drops
            reader.read()
        wb = reader.wb
        sheets = {n: (_cells(wb[n], wb.epoch), _extras(wb[n])) for n in _output_sheets(wb)}
    return typed_since(record, sheets)


class _OutputsOnly(SkippingReader):
    """openpyxl's reader with only wzq's output sheets parsed (empty stand-ins for the
    others, so sheet indices, and the print areas they scope, stay as they are)."""

    def skipped(self, listed: list[Any]) -> set[str]:
        return {sheet.name for sheet, _ in listed if sheet.name not in layout.OUTPUT_SHEETS}


# --- the output sheets read from the package's XML (some twenty times faster) -------------

_P = rb"(?:[\w.-]+:)?"  # any namespace prefix
#: A cell: its column letters and row (from ``r``), its type ``t`` and its content.
#: The content never runs past the start of another cell, so a part whose cells are not
#: closed is read in one pass (no search to its end from every cell).
_CELL = re.compile(
    rb"<" + _P + rb'c\b(?=[^>]*?\br="([A-Z]{1,3})([0-9]+)")?(?=[^>]*?\bt="(\w+)")?[^>]*?'
    rb"(?:/>|>((?:[^<]|<(?!/?" + _P + rb"c[\s/>]))*)</" + _P + rb"c>)",
)
_V = re.compile(rb"<" + _P + rb"v>([^<]*)</" + _P + rb"v>")
_IS = re.compile(rb"<" + _P + rb"is>((?:[^<]|<(?!/?" + _P + rb"is[\s/>]))*)</" + _P + rb"is>")
_F = re.compile(rb"<" + _P + rb"f\b")
_SI = re.compile(
    rb"<" + _P + rb"si>((?:[^<]|<(?!/?" + _P + rb"si[\s/>]))*)</" + _P + rb"si>|<" + _P + rb"si/>"
)
_RPH = re.compile(rb"<" + _P + rb"rPh\b(?:[^<]|<(?!/?" + _P + rb"rPh[\s/>]))*</" + _P + rb"rPh>")
_T = re.compile(rb"<" + _P + rb"t(?:\s[^>]*)?>([^<]*)</" + _P + rb"t>")
_XESC = re.compile(r"_x([0-9A-Fa-f]{4})_")
_EPOCH = dt.datetime(1899, 12, 30)  # (text only: no date is read from a string)
_REL = re.compile(rb"<" + _P + rb"Relationship\b[^>]*>")
_ATTR = re.compile(rb'([\w:]+)="([^"]*)"')
_NAME = re.compile(rb"<" + _P + rb"definedName\b([^>]*)>([^<]*)</" + _P + rb"definedName>")
_ORIENTATION = re.compile(rb"<" + _P + rb'pageSetup\b[^>]*\borientation="(\w+)"')
_COMMENT = re.compile(rb"<" + _P + rb"comment[\s>]")
_CHART = re.compile(rb"<" + _P + rb"chart[\s/>]")
_PIC = re.compile(rb"<" + _P + rb"pic[\s>]")


def _text(raw: bytes) -> str:
    """XML text content as read (entities and Excel's ``_xHHHH_`` escapes undone)."""
    text = raw.decode("utf-8", "replace")
    text = html.unescape(text) if "&" in text else text
    return _XESC.sub(lambda m: chr(int(m.group(1), 16)), text) if "_x" in text else text


def _runs(raw: bytes) -> str:
    """The text of a string item: its runs' ``<t>`` joined, phonetic runs left out."""
    return "".join(_text(t) for t in _T.findall(_RPH.sub(b"", raw)))


def _stored(kind: str, inner: bytes, shared: list[str]) -> str | None:
    """A cell's value as :func:`_value_text` gives it, from its XML."""
    v = _V.search(inner)
    if v is None:
        inline = _IS.search(inner)
        if inline is not None:
            return _value_text(_runs(inline.group(1)), _EPOCH)
        return f"f:{_text(inner)}" if _F.search(inner) else None
    raw = _text(v.group(1))
    if kind == "s":
        return _value_text(shared[int(raw)], _EPOCH)
    if kind == "b":
        return f"b:{raw.strip() == '1'}"
    if kind in ("str", "e", "inlineStr", "d"):
        return _value_text(raw, _EPOCH)
    return f"n:{float(raw):.12g}"


def _rels(zf: zipfile.ZipFile, part: str) -> dict[str, str]:
    """Relationship type (its last word) -> target part, of ``part``."""
    folder, name = posixpath.split(part)
    raw = read_small_part(zf, posixpath.join(folder, "_rels", name + ".rels")) or b""
    out = {}
    for m in _REL.finditer(raw):
        a = {k.decode(): html.unescape(v.decode()) for k, v in _ATTR.findall(m.group(0))}
        target = a.get("Target", "")
        target = target[1:] if target.startswith("/") else posixpath.join(folder, target)
        out.setdefault(a.get("Type", "").rpartition("/")[2], posixpath.normpath(target))
    return out


def _count(zf: zipfile.ZipFile, part: str | None, pattern: re.Pattern) -> int:
    raw = read_small_part(zf, part, 64 * 2**20) if part else None
    return len(pattern.findall(raw)) if raw else 0


def package_sheets(data: bytes, book: Workbook) -> dict[str, Sheet] | None:
    """wzq's output sheets of the package ``data`` (``book``: its other sheets parsed, for
    the sheet order and print areas), each as its non-empty cells (row, column, value as
    :func:`_value_text` gives it) and its extras, read from the XML with regular
    expressions; ``None`` when a part is missing or a cell has no reference."""
    with zipfile.ZipFile(io.BytesIO(data)) as zf:
        parts = {name: part for part, name in sheet_parts(zf).items()}
        wanted = [n for n in layout.OUTPUT_SHEETS if n in book.sheetnames]
        if any(n not in parts for n in wanted):
            return None
        book_rels = _rels(zf, "xl/workbook.xml")
        raw = read_small_part(zf, book_rels.get("sharedStrings", ""), 64 * 2**20)
        shared = [_runs(m.group(1) or b"") for m in _SI.finditer(raw or b"")]
        workbook = read_small_part(zf, "xl/workbook.xml") or b""
        areas: dict[str, str] = {}
        for m in _NAME.finditer(workbook):
            a = dict(_ATTR.findall(m.group(1)))
            index = a.get(b"localSheetId", b"")
            ours = a.get(b"name") == b"_xlnm.Print_Area" and index.isdigit()
            if ours and int(index) < len(book.sheetnames):
                areas[book.sheetnames[int(index)]] = _text(m.group(2))
        strings = [_value_text(t, _EPOCH) for t in shared]
        columns: dict[bytes, int] = {}
        out: dict[str, Sheet] = {}
        for name in wanted:
            xml = zf.read(parts[name])
            cells: Cells = []
            for letters, row, kind, inner in _CELL.findall(xml):
                if not letters:
                    return None  # a cell without its reference: openpyxl reads those
                if not inner:
                    continue
                try:
                    if inner[:3] == b"<v>" and inner[-4:] == b"</v>" and inner.count(b"<") == 2:
                        if kind in (b"", b"n"):  # a number, as most cells are
                            text = f"n:{float(inner[3:-4]):.12g}"
                        elif kind == b"s":
                            text = strings[int(inner[3:-4])]
                        else:
                            text = _stored(kind.decode(), inner, shared)
                    else:
                        text = _stored(kind.decode() or "n", inner, shared)
                except (ValueError, IndexError):
                    return None
                if text is not None:
                    if letters not in columns:
                        columns[letters] = column_index_from_string(letters.decode())
                    cells.append((int(row), columns[letters], text))
            cells.sort()
            rels = _rels(zf, parts[name])
            orientation = _ORIENTATION.search(xml)
            extras = {
                "comments": _count(zf, rels.get("comments"), _COMMENT),
                "charts": _count(zf, rels.get("drawing"), _CHART),
                "pictures": _count(zf, rels.get("drawing"), _PIC),
                "print_area": _area(areas.get(name)),
                "orientation": orientation.group(1).decode() if orientation else "portrait",
            }
            out[name] = (cells, extras)
    return out


# --- the Recalculate button in Excel: the block of cells each output sheet was written in


#: The defined name in which the Recalculate button in Excel keeps, for the next press,
#: the run time and the block of cells of each output sheet it wrote.
BOUNDS_NAME = "wzq_output_bounds"


def bounds_text(book: Workbook) -> str:
    """The run time of ``book``'s output sheets and the block (last row, last column) of
    each one's non-empty cells, as ``run|Sheet:rows:cols|...`` (no double quotes)."""
    parts = [(_run_time(book) or "s:")[2:].replace('"', "")]
    for name in _output_sheets(book):
        rows, cols = _block(_cells(book[name], book.epoch))
        parts.append(f"{name}:{rows}:{cols}")
    return "|".join(parts)


def read_bounds(text: str | None) -> tuple[str, dict[str, tuple[int, int]]] | None:
    """(run time, sheet -> (rows, cols)) from :func:`bounds_text` (``None``: not intact)."""
    if not text:
        return None
    run, *blocks = text.strip().removeprefix("=").strip('"').split("|")
    found = {}
    for block in blocks:
        name, _, size = block.partition(":")
        rows, _, cols = size.partition(":")
        if not (rows.isdigit() and cols.isdigit()):
            return None
        found[name] = (int(rows), int(cols))
    return run, found


def beyond_bounds(
    bounds: dict[str, tuple[int, int]], cells: dict[str, list[tuple[int, int, Any]]]
) -> list[str]:
    """The cells of each sheet's ``cells`` ((row, column, value), non-empty) outside the
    block its ``bounds`` give, named with what they hold (the first five, then a count)."""
    found = []
    for name, (rows, cols) in bounds.items():
        for r, k, value in cells.get(name, []):
            if r > rows or k > cols:
                found.append(f"{cell_ref(name, r, k)} {_shown('s:' + str(value))}")
    return _first_five(found)
