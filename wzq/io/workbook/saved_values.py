"""The results a spreadsheet program saved with its formulas, typed as the cell shows them.

A formula typed in an input cell is read through the result the spreadsheet
program saved with it: the ``<v>`` of the cell in the sheet's XML (ECMA-376
Part 1, 18.3.1.4 ``c`` and 18.3.1.96 ``v``). Those results are read sparsely,
one sheet at a time and only for the cells that hold a formula, by
:func:`wzq.io.workbook.formula_values.saved_results`; no block of the sheet is
ever built, so a value at the last cell of a sheet costs nothing (the reader
that built one asked for 512 GiB and aborted).

:func:`typed` gives a saved result the type openpyxl gives a value typed in
the same cell: a number (``int`` or ``float``), text, ``True`` or ``False``,
an error code such as ``#DIV/0!``, and for a number in a date or time format a
``datetime``, ``time`` or ``timedelta``; ``""`` is empty text, ``None`` no
result at all. Text kept in the shared-string table (a result stored as
``t="s"``, which spreadsheet programs rarely write for a formula) is looked up
by :class:`SharedStrings`, which streams the table only as far as the entry
asked for.
"""

from __future__ import annotations

import datetime as dt
import io
import zipfile
from pathlib import Path
from typing import Any

from lxml import etree
from openpyxl.styles.numbers import is_date_format, is_timedelta_format
from openpyxl.utils.datetime import WINDOWS_EPOCH, from_excel

from wzq.io.workbook.formula_values import Saved
from wzq.io.workbook.safety import shared_string_parts

__all__ = [
    "SharedStrings",
    "typed",
]

_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_SI, _T, _RPH = (f"{{{_MAIN}}}{n}" for n in ("si", "t", "rPh"))


def _text_of(el: Any) -> str:
    """The text of an ``si`` element: its runs, phonetic guides left out."""
    return "".join(t.text or "" for t in el.iter(_T) if t.getparent().tag != _RPH)


class SharedStrings:
    """Entries of a package's shared-string table, read on demand (one stream per lookup
    of an entry not yet read, stopping at that entry)."""

    def __init__(self, source: bytes | str | Path) -> None:
        self.source = source
        self.found: dict[int, str] = {}

    def get(self, index: int) -> str | None:
        if index not in self.found:
            self.found.update(self._read(index))
        return self.found.get(index)

    def _read(self, last: int) -> dict[int, str]:
        src = self.source
        with zipfile.ZipFile(io.BytesIO(src) if isinstance(src, bytes) else src) as zf:
            parts = sorted(shared_string_parts(zf)) or ["xl/sharedStrings.xml"]
            if parts[0] not in zf.namelist():
                return {}
            out = {}
            with zf.open(parts[0]) as f:
                # the package passed the pre-parse checks (no DOCTYPE); no entities anyway
                for i, (_, el) in enumerate(
                    etree.iterparse(f, tag=_SI, resolve_entities=False, no_network=True)
                ):
                    out[i] = _text_of(el)
                    el.clear(keep_tail=False)
                    while el.getprevious() is not None:
                        del el.getparent()[0]
                    if i >= last:
                        break
            return out


def typed(
    saved: Saved | None,
    number_format: str = "General",
    epoch: dt.datetime = WINDOWS_EPOCH,
    strings: SharedStrings | None = None,
) -> Any:
    """A saved result typed as openpyxl types a value in that cell (``None``: none saved)."""
    if saved is None or saved.text is None:
        return None
    kind, text = saved.type or "n", saved.text
    if kind == "s":
        return strings.get(int(text)) if strings is not None and text.isdigit() else None
    if kind in ("str", "e", "inlineStr"):
        return text
    if kind == "b":
        return text.strip() in ("1", "true")
    if kind == "d":
        try:
            return dt.datetime.fromisoformat(text.strip())
        except ValueError:
            return None
    return _number(text, number_format, epoch)


def _number(text: str, number_format: str, epoch: dt.datetime) -> Any:
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
