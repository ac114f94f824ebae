"""The closure-window search kept in the workbook, keyed by what it depends on.

The search for allowable closure windows on the design demand
(:func:`wzq.engine.windows.plan_windows`, as
:func:`wzq.engine.risk_windows.closure_windows` runs it for a plan not searched at a
risk) depends on the site, the demand, the limits, the options and the approach, never
on the plan's own closures; it takes 0.1-3 s for a week or a month of demand, which a
designer trying closure times would otherwise pay on every press. Its answer (one
``allowed`` table per configuration, bits) is kept, compressed, on a very hidden
sheet of wzq's (:data:`CACHE_SHEET`, a few cells), with the SHA-256 fingerprint of
those inputs, of wzq's version and of the search's code (:func:`windows_key`), and
the SHA-256 of the tables themselves. A later run with the same fingerprint uses the
tables instead of searching (the delay and cost of each window are computed again as
always); any change of those inputs, of wzq's version or code, or of the cells
themselves means a new search. A search at a risk (on a count history's scenarios) is
never cached. The sheet is not an output sheet: it is not in the marker of the sheets
wzq wrote, the plan reader ignores it as it ignores every sheet that is not an input,
and it sits just before the output sheets. Its sixth column holds the record of the
output sheets as the last run wrote them (:mod:`wzq.io.workbook.outputs_record`).
"""

from __future__ import annotations

import base64
import dataclasses
import hashlib
import json
import zlib
from collections.abc import Sequence
from functools import lru_cache
from pathlib import Path

import numpy as np
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.worksheet import Worksheet

import wzq
from wzq import engine, models
from wzq.engine.plan import Plan
from wzq.engine.risk import asks_for_risk
from wzq.engine.risk_windows import closure_windows
from wzq.engine.windows import WindowsResult
from wzq.io.jsonplan import plan_to_dict
from wzq.io.workbook import layout
from wzq.io.workbook.writer import put_text

__all__ = [
    "CACHE_SHEET",
    "cache_sheet",
    "cached_plan_windows",
    "code_digest",
    "kept_sheet",
    "read_tables",
    "stored_tables",
    "windows_key",
    "write_tables",
]

#: The very hidden sheet that holds the cache.
CACHE_SHEET = "wzq cache"
#: Changed whenever what is stored changes meaning.
FORMAT = 1
#: Columns of the cache sheet the tables take (row 2: what they are, then the text).
_COLUMNS = 4
#: Characters of base64 per cell (a cell holds 32,767).
CHUNK = 32_000
_TITLE = "wzq keeps the closure-window search here, keyed by its inputs; it rebuilds it."


def windows_key(plan: Plan) -> str:
    """SHA-256 of everything the window search of ``plan`` depends on: the plan's inputs
    but its closures and descriptive text (the inputs as written to a plan file, and
    exactly: every number of the site, limits, options, costs and approach, and the
    demand's own flows, which a plan designed from a count history does not write),
    wzq's version, the code of the search (:func:`code_digest`) and this cache's format."""
    # what the plan asks to add to the outputs is no input of the search
    plan = dataclasses.replace(
        plan, options=dataclasses.replace(plan.options, space_time=False, closure_windows=True)
    )
    data = plan_to_dict(plan)
    for key in ("closures", "meta"):
        data.pop(key, None)
    d = plan.demand
    flows = np.ascontiguousarray(d.flows_veh_h, dtype=np.float64)
    data["exact"] = {
        "inputs": [repr(x) for x in (plan.site, plan.thresholds, plan.options, plan.costs)],
        "approach": repr(plan.approach),
        "demand": [d.start.isoformat(), d.interval_s, hashlib.sha256(flows).hexdigest()],
    }
    data["cache"] = {
        "wzq": wzq.__version__,
        "code": code_digest(),
        "format": FORMAT,
        "search": "closure_windows on the design demand",
    }
    text = json.dumps(data, sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


@lru_cache(maxsize=1)
def code_digest() -> str:
    """SHA-256 of the engine's and the models' source: a change of the search's code
    (even within one version, as while developing) means a new search."""
    h = hashlib.sha256()
    for package in (engine, models):
        root = Path(package.__file__).parent
        for f in sorted(root.rglob("*.py")):
            h.update(f.relative_to(root).as_posix().encode() + b"\0" + f.read_bytes())
    return h.hexdigest()


def _ours(book: Workbook) -> bool:
    """The workbook holds a cache sheet that wzq made (very hidden, with its title)."""
    if CACHE_SHEET not in book.sheetnames:
        return False
    ws = book[CACHE_SHEET]
    # LibreOffice saves a very hidden sheet as hidden
    return ws.sheet_state in ("veryHidden", "hidden") and ws["A1"].value == _TITLE


def kept_sheet(book: Workbook) -> Worksheet | None:
    """wzq's cache sheet of ``book`` (``None``: none, or a sheet of the user's of that name)."""
    return book[CACHE_SHEET] if _ours(book) else None


def read_tables(book: Workbook, key: str, n: int) -> list[np.ndarray] | None:
    """The tables stored under ``key`` (each ``n`` by ``n + 1``), or ``None`` when there
    are none, they are for other inputs, or the cells do not hold them intact."""
    if not _ours(book):
        return None
    ws = book[CACHE_SHEET]
    try:
        if ws["A2"].value != "windows" or ws["B2"].value != key:
            return None
        count, digest = int(ws["D2"].value), ws["C2"].value
        text = "".join(str(v) for (v,) in ws.iter_rows(min_row=3, max_col=1, values_only=True) if v)
        packed = zlib.decompress(base64.b64decode(text, validate=True))
    except (TypeError, ValueError, zlib.error):
        return None
    if hashlib.sha256(packed).hexdigest() != digest:
        return None
    size = (n * (n + 1) + 7) // 8
    if count < 1 or len(packed) != count * size:
        return None
    return [
        np.unpackbits(np.frombuffer(packed, np.uint8, size, i * size), count=n * (n + 1))
        .astype(bool)
        .reshape(n, n + 1)
        for i in range(count)
    ]


def cache_sheet(book: Workbook) -> Worksheet | None:
    """wzq's cache sheet of ``book``, made (very hidden, just before the output sheets)
    when missing (very hidden again when LibreOffice saved it as hidden); ``None`` when
    a sheet of the user's carries its name (never touched)."""
    if CACHE_SHEET in book.sheetnames:
        if (ws := kept_sheet(book)) is not None:
            ws.sheet_state = "veryHidden"
        return ws
    outputs = [i for i, ws in enumerate(book.worksheets) if ws.title in layout.OUTPUT_SHEETS]
    ws = book.create_sheet(CACHE_SHEET, min(outputs, default=len(book.worksheets)))
    ws.sheet_state = "veryHidden"
    put_text(ws, 1, 1, _TITLE)
    return ws


def write_tables(book: Workbook, key: str, tables: Sequence[np.ndarray]) -> None:
    """Keep ``tables`` under ``key`` on the cache sheet (made, very hidden, just before
    the output sheets when missing; its first columns cleared and written again when
    present, the sheet itself kept with what a spreadsheet program added to it, such as
    LibreOffice's page setup; nothing is kept when a sheet of the user's carries its
    name)."""
    packed = b"".join(np.packbits(t.ravel()).tobytes() for t in tables)
    text = base64.b64encode(zlib.compress(packed, 6)).decode("ascii")
    ws = cache_sheet(book)
    if ws is None:
        return  # a sheet of the user's with this name is never touched: no cache
    for at in [at for at in ws._cells if at[0] > 1 and at[1] <= _COLUMNS]:
        del ws._cells[at]  # the tables kept before (the record beside them stays)
    for col, value in enumerate(
        ("windows", key, hashlib.sha256(packed).hexdigest(), len(tables)), start=1
    ):
        put_text(ws, 2, col, value)
    for i in range(0, len(text), CHUNK):  # text always (a chunk may start with '=')
        put_text(ws, 3 + i // CHUNK, 1, text[i : i + CHUNK])


def _at_risk(plan: Plan) -> bool:
    """The plan's windows are searched at a risk (:func:`wzq.engine.risk_windows.
    closure_windows`): on the count history's scenarios, which the key does not hold;
    that search is never cached."""
    return plan.risk is not None and asks_for_risk(plan)


def stored_tables(plan: Plan, book: Workbook) -> list[np.ndarray] | None:
    """The tables ``book``'s cache holds for the window search of ``plan`` on its design
    demand (``None``: none for these inputs, or a search at a risk); for commands that
    only read the workbook, such as the report."""
    if _at_risk(plan):
        return None
    return read_tables(book, windows_key(plan), len(plan.demand.flows_veh_h))


def cached_plan_windows(plan: Plan, book: Workbook) -> WindowsResult:
    """:func:`~wzq.engine.risk_windows.closure_windows` of ``plan``, from ``book``'s cache
    when it holds this search's tables, else searched and kept there for the next run
    (a search at a risk is neither taken from the cache nor kept)."""
    if _at_risk(plan):
        return closure_windows(plan)
    known = stored_tables(plan, book)
    found = closure_windows(plan, known=known)
    if known is None or len(known) != len(found.sets):
        write_tables(book, windows_key(plan), [s.allowed for s in found.sets])
    return found
