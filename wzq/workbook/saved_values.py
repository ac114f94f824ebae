"""The results a spreadsheet program saved with its formulas, read sparsely from the package.

A formula typed in an input cell is read through the result the spreadsheet
program saved with it: the ``<v>`` of the cell in the sheet's XML (ECMA-376
Part 1, 18.3.1.4 ``c`` and 18.3.1.96 ``v``). :class:`SavedValues` streams one
sheet's part once, on the first question about that sheet, and keeps the
saved values of the cells that hold a formula (the only cells the reader asks
about) in a dictionary; no block of the sheet is ever built, so a value at the
last cell of a sheet costs nothing. Text kept in the shared-string table is
looked up by streaming that table once for the indexes wanted.

:meth:`SavedValues.value` gives a saved value the type openpyxl gives a value
typed in the same cell: a number (``int`` or ``float``), text, ``True`` or
``False``, an error code such as ``#DIV/0!``, and for a number in a date or
time format a ``datetime``, ``time`` or ``timedelta``. :meth:`SavedValues.raw`
gives the saved text and its type as stored.
"""

from __future__ import annotations

import datetime as dt
import io
import posixpath
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from lxml import etree
from openpyxl.styles.numbers import is_date_format, is_timedelta_format
from openpyxl.utils.cell import column_index_from_string, coordinate_from_string
from openpyxl.utils.datetime import WINDOWS_EPOCH, from_excel

_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
_C, _ROW, _F, _V, _IS, _T, _RPH = (
    f"{{{_MAIN}}}{n}" for n in ("c", "row", "f", "v", "is", "t", "rPh")
)


@dataclass(frozen=True)
class Saved:
    """A saved formula result as stored: the cell type (``t``: ``n``, ``s``, ``str``,
    ``b``, ``e``, ``inlineStr``, ``d``) and its text (``None``: no value was saved)."""

    kind: str
    text: str | None


def _parser_options() -> dict[str, Any]:
    # the package was inspected before (no DOCTYPE anywhere); no entities, no network anyway
    return {"resolve_entities": False, "no_network": True, "huge_tree": False}


def _text_of(el: Any) -> str:
    """The text of an ``is`` or ``si`` element: its runs, phonetic guides left out."""
    return "".join(t.text or "" for t in el.iter(_T) if t.getparent().tag != _RPH)


class SavedValues:
    """Saved formula results of one workbook package (bytes or a file), read on demand."""

    def __init__(self, source: bytes | str | Path) -> None:
        self._zip = zipfile.ZipFile(io.BytesIO(source) if isinstance(source, bytes) else source)
        self._parts: dict[str, str] | None = None
        self._string_part: str | None = None
        self._sheets: dict[str, dict[tuple[int, int], Saved]] = {}
        self._strings: dict[int, str] = {}

    def close(self) -> None:
        self._zip.close()

    # -- where things are ------------------------------------------------------------------

    def _rels(self, part: str) -> dict[str, tuple[str, str]]:
        """Relationship id -> (type, target part) of ``part``."""
        folder, name = posixpath.split(part)
        rels = posixpath.join(folder, "_rels", name + ".rels")
        try:
            root = etree.fromstring(self._zip.read(rels), etree.XMLParser(**_parser_options()))
        except KeyError:
            return {}
        out = {}
        for r in root.iter(f"{{{_PKG_REL}}}Relationship"):
            target = r.get("Target", "")
            if r.get("TargetMode") == "External":
                continue
            path = target.lstrip("/") if target.startswith("/") else posixpath.join(folder, target)
            out[r.get("Id", "")] = (r.get("Type", "").rsplit("/", 1)[-1], posixpath.normpath(path))
        return out

    def _workbook(self) -> str:
        for kind, part in self._rels("").values():
            if kind == "officeDocument":
                return part
        return "xl/workbook.xml"

    def sheet_part(self, sheet: str) -> str | None:
        """The part holding the sheet named ``sheet`` (``None``: no such sheet)."""
        if self._parts is None:
            book = self._workbook()
            rels = self._rels(book)
            root = etree.fromstring(self._zip.read(book), etree.XMLParser(**_parser_options()))
            self._parts = {}
            for s in root.iter(f"{{{_MAIN}}}sheet"):
                rid = s.get(f"{{{_REL}}}id")
                if rid in rels and s.get("name") is not None:
                    self._parts[s.get("name")] = rels[rid][1]
            strings = [p for kind, p in rels.values() if kind == "sharedStrings"]
            self._string_part = strings[0] if strings else None
        return self._parts.get(sheet)

    # -- reading ---------------------------------------------------------------------------

    def _scan(self, sheet: str) -> dict[tuple[int, int], Saved]:
        """Stream the sheet once; keep the saved value of every cell that holds a formula."""
        part = self.sheet_part(sheet)
        found: dict[tuple[int, int], Saved] = {}
        if part is None:
            return found
        row = 0
        col = 0
        with self._zip.open(part) as f:
            for event, el in etree.iterparse(
                f, events=("start", "end"), tag=(_ROW, _C), **_parser_options()
            ):
                if el.tag == _ROW:
                    if event == "start":
                        r = el.get("r")
                        row = int(r) if r and r.isdigit() else row + 1
                        col = 0
                    else:
                        el.clear(keep_tail=False)
                        while el.getprevious() is not None:
                            del el.getparent()[0]
                    continue
                if event == "start":
                    continue
                ref = el.get("r")
                if ref:
                    try:
                        letters, row = coordinate_from_string(ref)
                        col = column_index_from_string(letters)
                    except ValueError:
                        col += 1
                else:
                    col += 1
                if el.find(_F) is not None:
                    found[(row, col)] = self._saved(el)
                el.clear(keep_tail=False)
        return found

    def _saved(self, c: Any) -> Saved:
        kind = c.get("t", "n")
        if kind == "inlineStr":
            inline = c.find(_IS)
            return Saved("str", None if inline is None else _text_of(inline))
        v = c.find(_V)
        text = None if v is None else (v.text or "")
        return Saved(kind, text)

    def _shared(self, wanted: set[int]) -> None:
        """Fill in the shared strings with the given indexes (one streaming pass)."""
        wanted -= self._strings.keys()
        if not wanted or self._string_part is None:
            return
        last = max(wanted)
        with self._zip.open(self._string_part) as f:
            for i, (_, el) in enumerate(
                etree.iterparse(f, events=("end",), tag=f"{{{_MAIN}}}si", **_parser_options())
            ):
                if i in wanted:
                    self._strings[i] = _text_of(el)
                el.clear(keep_tail=False)
                while el.getprevious() is not None:
                    del el.getparent()[0]
                if i >= last:
                    break

    def raw(self, sheet: str, row: int, col: int) -> Saved | None:
        """The saved result of the formula in a cell as stored (``None``: no formula there)."""
        if sheet not in self._sheets:
            cells = self._scan(sheet)
            self._shared(
                {int(s.text) for s in cells.values() if s.kind == "s" and (s.text or "").isdigit()}
            )
            self._sheets[sheet] = cells
        return self._sheets[sheet].get((row, col))

    def value(
        self, sheet: str, row: int, col: int, number_format: str = "General", epoch=WINDOWS_EPOCH
    ) -> Any:
        """The saved result typed as openpyxl types a value in that cell (``None``: none saved).

        Empty text saved as the result is ``""``.
        """
        saved = self.raw(sheet, row, col)
        if saved is None or saved.text is None:
            return None
        kind, text = saved.kind, saved.text
        if kind == "s":
            return self._strings.get(int(text)) if text.isdigit() else None
        if kind in ("str", "e"):
            return text
        if kind == "b":
            return text.strip() in ("1", "true")
        if kind == "d":
            return _iso(text)
        return _number(text, number_format, epoch)


def _iso(text: str) -> Any:
    try:
        return dt.datetime.fromisoformat(text.strip())
    except ValueError:
        return None


def _number(text: str, number_format: str, epoch) -> Any:
    text = text.strip()
    if not text:
        return ""
    try:
        x: int | float = float(text) if any(ch in text for ch in ".eE") else int(text)
    except ValueError:
        try:
            x = float(text)  # "NaN", "INF": not a spreadsheet number; the reader says so
        except ValueError:
            return None
    if is_date_format(number_format):
        try:
            return from_excel(x, epoch, timedelta=is_timedelta_format(number_format))
        except (OverflowError, ValueError):
            return x
    return x
