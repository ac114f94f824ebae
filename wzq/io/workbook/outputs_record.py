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
import io
import json
import warnings
import zlib
from pathlib import Path
from typing import Any

from openpyxl.utils import coordinate_to_tuple, get_column_letter
from openpyxl.utils.datetime import to_excel
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.worksheet import Worksheet

from wzq.io.workbook import layout
from wzq.io.workbook.cellref import cell_ref
from wzq.io.workbook.reader.skip import SkippingReader
from wzq.io.workbook.safety import inspect_bytes
from wzq.io.workbook.windows_cache import kept_sheet
from wzq.io.workbook.writer import RUN_LOG, RUN_TIME_CELL, put_text

__all__ = [
    "BLOCK",
    "BOUNDS_NAME",
    "beyond_bounds",
    "bounds_text",
    "differences",
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
_FORMAT = 1
_CHUNK = 32_000


def _value_text(value: Any, epoch: dt.datetime) -> str | None:
    """A cell's value as a spreadsheet program stores it (``None``: an empty cell)."""
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


def _digest(h: Any) -> str:
    return h.hexdigest()[:16]


def _extras(ws: Worksheet) -> dict[str, Any]:
    comments = sorted(f"{c.coordinate}:{c.comment.text}" for c in ws._cells.values() if c.comment)
    return {
        "comments": hashlib.sha256("\n".join(comments).encode()).hexdigest()[:16],
        "charts": len(ws._charts),
        "pictures": len(ws._images),
        "print_area": ws.print_area,
        "orientation": ws.page_setup.orientation or "portrait",
    }


def _cells(ws: Worksheet, epoch: dt.datetime) -> list[tuple[int, int, str]]:
    """(row, column, value as stored) of every non-empty cell, row by row (read from the
    cells the sheet holds: iterating its rows would add empty cells to it)."""
    return [
        (r, k, text)
        for (r, k), c in sorted(ws._cells.items())
        if (text := _value_text(c.value, epoch)) is not None
    ]


def sheet_record(
    ws: Worksheet, epoch: dt.datetime, cells: list[tuple[int, int, str]] | None = None
) -> dict[str, Any]:
    """The record of one sheet: its block of non-empty cells, the digests of each
    column and of each block of :data:`BLOCK` rows, and its other content
    (``cells``: only those of its cells, by default all)."""
    cells = _cells(ws, epoch) if cells is None else cells
    rows = max((r for r, _, _ in cells), default=0)
    cols = max((k for _, k, _ in cells), default=0)
    by_col = [hashlib.sha256() for _ in range(cols)]
    by_block = [hashlib.sha256() for _ in range((rows + BLOCK - 1) // BLOCK)]
    for r, k, text in cells:
        by_col[k - 1].update(f"{r}\0{text}\0".encode())
        by_block[(r - 1) // BLOCK].update(f"{k}\0{text}\0".encode())
    return {
        "rows": rows,
        "cols": cols,
        "col": [_digest(h) for h in by_col],
        "block": [_digest(h) for h in by_block],
        "extras": _extras(ws),
    }


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
    if ws_cache is None or ws_cache.cell(1, COLUMN).value != _LABEL:
        return None
    chunks = ws_cache.iter_rows(min_row=2, min_col=COLUMN, max_col=COLUMN, values_only=True)
    text = "".join(str(v) for (v,) in chunks if v)
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


def differences(name: str, before: dict[str, Any], now: Worksheet, epoch: dt.datetime) -> list[str]:
    """What differs on sheet ``now`` from its record ``before``, in words naming cells."""
    cells = _cells(now, epoch)
    inside = [(r, k, t) for r, k, t in cells if r <= before["rows"] and k <= before["cols"]]
    after = sheet_record(now, epoch, inside)
    outside = [
        f"{cell_ref(name, r, k)} {_shown(t)}"
        for r, k, t in cells
        if r > before["rows"] or k > before["cols"]
    ]
    found = outside[:5] + ([f"and {len(outside) - 5} more cells"] if len(outside) > 5 else [])
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
        "comments": "a comment added or changed",
        "charts": "a chart added or removed",
        "pictures": "a picture added or removed",
        "print_area": "the print area changed",
        "orientation": "the print orientation changed",
    }
    for key, what in words.items():
        if after["extras"].get(key) != before["extras"].get(key):
            found.append(f"{name}: {what}")
    return found


def typed_since(record: dict[str, Any] | None, book: Workbook) -> list[str]:
    """What was typed or changed on the output sheets of ``book`` (parsed in full) since
    wzq wrote them, as ``record`` holds them; empty when nothing was, or no record."""
    if record is None or record.get("run") != _run_time(book):
        return []  # outputs another run wrote (the Recalculate button in Excel keeps none)
    found = []
    for name, before in record.get("sheets", {}).items():
        if name in layout.OUTPUT_SHEETS and name in book.sheetnames:
            found += differences(name, before, book[name], book.epoch)
    return found


def typed_on_outputs(book: Workbook, data: bytes, path: Path) -> list[str]:
    """What was typed or changed on the output sheets of the workbook file ``path`` (its
    bytes ``data``, ``book`` parsed from them without the output sheets) since wzq's
    last run wrote them; empty when nothing was, or wzq kept no record there. The
    output sheets' parts are checked as every other part before they are parsed."""
    record = read_record(kept_sheet(book))
    if record is None:
        return []
    inspect_bytes(data, path.name, path.suffix)
    reader = _OutputsOnly(io.BytesIO(data), False, False, False, True, False)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # openpyxl warns about extensions it drops on read
        reader.read()
    return typed_since(record, reader.wb)


class _OutputsOnly(SkippingReader):
    """openpyxl's reader with only wzq's output sheets parsed (empty stand-ins for the
    others, so sheet indices, and the print areas they scope, stay as they are)."""

    def skipped(self, listed: list[Any]) -> set[str]:
        return {sheet.name for sheet, _ in listed if sheet.name not in layout.OUTPUT_SHEETS}


# --- the Recalculate button in Excel: the block of cells each output sheet was written in


#: The defined name in which the Recalculate button in Excel keeps, for the next press,
#: the run time and the block of cells of each output sheet it wrote.
BOUNDS_NAME = "wzq_output_bounds"


def bounds_text(book: Workbook) -> str:
    """The run time of ``book``'s output sheets and the block (last row, last column) of
    each one's non-empty cells, as ``run|Sheet:rows:cols|...`` (no double quotes)."""
    parts = [(_run_time(book) or "s:")[2:].replace('"', "")]
    for name in _output_sheets(book):
        cells = _cells(book[name], book.epoch)
        rows = max((r for r, _, _ in cells), default=0)
        cols = max((k for _, k, _ in cells), default=0)
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
    return found[:5] + ([f"and {len(found) - 5} more cells"] if len(found) > 5 else [])
