"""Recalculate from inside Excel: the live backend behind the Recalculate button.

The ``.xlsm`` template carries xlwings' standalone VBA project and our module
``WzqButton``, whose macro ``RecalculatePlan`` (run by the button) imports,
through xlwings' ``RunPython``, a Python module named like the workbook and
calls its ``main()``
(:mod:`wzq.io.workbook.link` writes that two-line module). ``main`` is
:func:`main` here, which runs :func:`recalculate` on the workbook that called
it, with every edit counted, saved or not.

One set of rules, two backends. Nothing here reads a plan or lays out a
result sheet:

* **Reading** (:func:`mirror_book`): the input sheets of the open workbook are
  copied into an in-memory openpyxl workbook (cell values of each used range at
  the same addresses, the defined names, each sheet's Excel tables), and
  :func:`wzq.io.workbook.reader.read_plan_from_book` reads that mirror exactly as
  it reads a file. The output sheets appear in the mirror as empty sheets, so
  the writer's ownership rule (:func:`wzq.io.workbook.writer.check_output_sheets`)
  decides, before anything changes, whether they may be replaced.
* **Writing**: :func:`wzq.io.workbook.writer.write_results` writes the output
  sheets into a fresh in-memory openpyxl workbook; :mod:`wzq.io.live.sheets`
  and :mod:`wzq.io.live.charts` walk those sheets and copy values,
  looks, print settings and charts into the live workbook.

Problems never reach the user as a traceback: input problems are listed on a
sheet named :data:`PROBLEMS_SHEET` and in a message box; anything unexpected
gives a short message box and the traceback on the Run log sheet.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import sys
import tempfile
import traceback
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any

from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.table import Table, TableColumn

import wzq
from wzq.engine.plan import PlanError, Problem
from wzq.engine.results import Result
from wzq.io import fields as F
from wzq.io.live.charts import add_charts
from wzq.io.live.sheets import Skipped, excel_literal, write_sheet
from wzq.io.workbook import layout
from wzq.io.workbook.layout import MARKER_NAME, written_sheets
from wzq.io.workbook.outputs import decide_outputs, write_outputs
from wzq.io.workbook.outputs_record import BOUNDS_NAME, beyond_bounds, bounds_text, read_bounds
from wzq.io.workbook.reader import read_plan_from_book
from wzq.io.workbook.safety import LIMITS
from wzq.io.workbook.writer import RUN_TIME_CELL, check_output_sheets, put_text

__all__ = [
    "ALERT_LINES",
    "OLE_EPOCH",
    "POINTS_PER_PIXEL",
    "PROBLEMS_MARKER",
    "PROBLEMS_SHEET",
    "Outcome",
    "as_read",
    "book_folder",
    "main",
    "mirror_book",
    "owned_sheets",
    "problems_text",
    "recalculate",
    "replace_output_sheets",
    "report_crash",
    "show_problems",
]

#: The sheet that lists input problems after a Recalculate that could not run.
PROBLEMS_SHEET = "Problems"
#: Defined name marking the problems sheet as written by wzq (so it may be replaced).
PROBLEMS_MARKER = "wzq_problems_sheet"
#: Problems shown in the message box (all of them are on the problems sheet).
ALERT_LINES = 8
#: Excel's OLE date zero: xlwings gives times of day as datetimes on this day.
OLE_EPOCH = dt.datetime(1899, 12, 30)
#: Sheet-scoped names Excel keeps for its own settings (not inputs).
_EXCEL_OWN_NAMES = ("print_area", "print_titles", "_filterdatabase")


@dataclass(frozen=True)
class Outcome:
    """What one press of the button did (returned for scripts and tests)."""

    result: Result | None = None
    problems: list[Problem] = field(default_factory=list)
    skipped: list[str] = field(default_factory=list)
    error: str | None = None

    @property
    def ok(self) -> bool:
        return self.result is not None and self.error is None


# --- reading: the mirror -----------------------------------------------------------------


def as_read(value: Any) -> Any:
    """A value from xlwings as the file reader would see it.

    xlwings (through Excel's automation interface) gives a time-of-day cell as a
    datetime on 1899-12-30 and 24:00 as 1899-12-31; openpyxl gives the same
    cells as a time or a duration. Both are turned into a duration here, which
    the reader takes as hours past midnight.
    """
    if isinstance(value, dt.datetime) and value < dt.datetime(1900, 1, 1):
        return value - OLE_EPOCH
    return value


def _names_of(book: Any) -> list[tuple[str, str]]:
    out = []
    for n in book.names:
        out.append((n.name, n.refers_to or ""))
    return out


def _sheet_name(text: str) -> str:
    text = text.strip()
    if len(text) >= 2 and text[0] == text[-1] == "'":
        return text[1:-1].replace("''", "'")
    return text


def _mirror_names(mirror: Workbook, names: list[tuple[str, str]]) -> None:
    """Copy defined names: workbook-scoped ones to the workbook, ``Sheet!name`` to the sheet."""
    for full, refers_to in names:
        target = refers_to.removeprefix("=")
        scope, bang, local = full.rpartition("!")
        try:
            if bang:
                sheet = _sheet_name(scope)
                if local.lower() in _EXCEL_OWN_NAMES or sheet not in mirror.sheetnames:
                    continue
                mirror[sheet].defined_names[local] = DefinedName(local, attr_text=target)
            else:
                mirror.defined_names[full] = DefinedName(full, attr_text=target)
        except (ValueError, TypeError):
            continue  # a name openpyxl cannot hold is no input of ours


def _check_used(used: dict[str, Any]) -> None:
    """Refuse, before Excel hands over any value, used ranges too large to read as blocks.

    The same budget as for a file (:data:`wzq.io.workbook.safety.LIMITS`, the used
    ranges of all sheets together), so a workbook refused as a file is refused
    here too: a merged range or a stray value far from the data stretches the
    used range of its sheet.
    """
    sizes = {name: rng.shape[0] * rng.shape[1] for name, rng in used.items()}
    total = sum(sizes.values())
    if total <= LIMITS.max_used_cells:
        return
    name = max(sizes, key=lambda n: sizes[n])
    n_rows, n_cols = used[name].shape
    raise PlanError(
        f"uses {n_rows:,} rows by {n_cols:,} columns ({total:,} cells on all sheets), more "
        f"than wzq reads ({LIMITS.max_used_cells:,} cells); delete the unused rows and "
        "columns (or the merged range or stray value far from your data)",
        where=f"sheet '{name}'",
    )


def _mirror_cells(ws: Any, used: Any) -> None:
    rows = used.options(ndim=2, err_to_str=True).value or []
    top, left = used.row, used.column
    for i, row in enumerate(rows):
        for j, value in enumerate(row):
            if value is None or value == "":
                continue
            value = as_read(value)
            if isinstance(value, str):
                value = ILLEGAL_CHARACTERS_RE.sub("", value)
            put_text(ws, top + i, left + j, value)  # text stays text, never a formula


def _mirror_tables(ws: Any, sheet: Any) -> None:
    for t in sheet.tables:
        ref = t.range.address.replace("$", "")
        headers = bool(t.show_headers)
        names: list[Any] = []
        if headers:
            values = t.header_row_range.value
            names = values if isinstance(values, list) else [values]
        else:
            min_col, _, max_col, _ = range_boundaries(ref)
            names = [None] * (max_col - min_col + 1)
        table = Table(
            displayName=t.name,
            ref=ref,
            headerRowCount=1 if headers else 0,
            totalsRowCount=1 if t.show_totals else None,
        )
        for i, name in enumerate(names, start=1):
            table.tableColumns.append(
                TableColumn(id=i, name=f"Column{i}" if name is None else str(name))
            )
        ws.tables.add(table)


def mirror_book(book: Any) -> Workbook:
    """An in-memory openpyxl copy of the live workbook's inputs, for the reader.

    Every sheet outside :data:`wzq.io.workbook.layout.OUTPUT_SHEETS` gets the
    values of its used range at the same addresses (text as text, dates as
    datetimes, times as durations) and its Excel tables; the output sheets are
    present but empty; the workbook's defined names are copied. Raises
    :class:`PlanError` for used ranges too large to read (:func:`_check_used`).
    """
    mirror = Workbook()
    mirror.remove(mirror.active)
    problems_ours = _problems_sheet_is_ours(book)
    sheets = [s for s in book.sheets if not (s.name == PROBLEMS_SHEET and problems_ours)]
    used = {s.name: s.used_range for s in sheets if s.name not in layout.OUTPUT_SHEETS}
    _check_used(used)
    for sheet in sheets:
        ws = mirror.create_sheet(sheet.name)
        if sheet.name in used:
            _mirror_cells(ws, used[sheet.name])
            _mirror_tables(ws, sheet)
    _mirror_names(mirror, _names_of(book))
    _mirror_percent_formats(mirror, book)
    return mirror


def _block(text: str) -> tuple[int, int, int, int] | None:
    """(min_col, min_row, max_col, max_row) of a block of cells, or ``None``."""
    try:
        bounds = range_boundaries(text.replace("$", ""))
    except (ValueError, TypeError):
        return None
    return None if None in bounds else bounds  # type: ignore[return-value]


#: The column of ``LandmarkTable`` that asks for a percentage.
LANDMARK_SHARE = layout.LANDMARK_COLUMNS[3]


def _percent_cells(mirror: Workbook) -> list[tuple[str, tuple[int, int, int, int]]]:
    """(sheet, block) of the inputs asked for in percent: named cells, the hourly share
    columns and the ramps' shares on the Approach sheet."""
    out = []
    for f in F.ALL_FIELDS:
        dn = mirror.defined_names.get(f.name)
        if f.unit.startswith("%") and dn is not None:
            with contextlib.suppress(Exception):
                for sheet, coord in dn.destinations:
                    block = _block(coord)
                    if block is not None:  # the reader reads the first cell of a name
                        out.append((sheet, (block[0], block[1], block[0], block[1])))
    for ws in mirror.worksheets:
        for name, ref in ws.tables.items():  # TableList.items(): (name, ref)
            block = _block(str(ref))
            if block is None or block[3] <= block[1]:
                continue
            min_col, min_row, max_col, max_row = block
            if name.casefold() == layout.SHARE_TABLE.casefold():
                # the share columns, after the hour, below the header
                out.append((ws.title, (min_col + 1, min_row + 1, max_col, max_row)))
            elif name.casefold() == layout.LANDMARK_TABLE.casefold():
                # the ramps' shares of the mainline flow, in the column of that header
                heads = [" ".join(c.name.split()).casefold() for c in ws.tables[name].tableColumns]
                if LANDMARK_SHARE.casefold() in heads:
                    col = min_col + heads.index(LANDMARK_SHARE.casefold())
                    out.append((ws.title, (col, min_row + 1, col, max_row)))
    return out


def _mirror_percent_formats(mirror: Workbook, book: Any) -> None:
    """Carry the percent number formats of the percent inputs over: a value Excel shows as
    8 % is held as 0.08, and the reader reads it by its format (one call per block)."""
    for sheet, (min_col, min_row, max_col, max_row) in _percent_cells(mirror):
        if sheet not in mirror.sheetnames:
            continue
        held = mirror[sheet]._cells  # only cells holding a value; none is created
        cells = [
            held[(r, c)]
            for r in range(min_row, max_row + 1)
            for c in range(min_col, max_col + 1)
            if (r, c) in held and held[(r, c)].value is not None
        ]
        if not cells:
            continue
        ref = f"{get_column_letter(min_col)}{min_row}:{get_column_letter(max_col)}{max_row}"
        fmt = book.sheets[sheet].range(ref).number_format
        for cell in cells:
            own = fmt
            if own is None:  # mixed formats in the block: ask per cell
                own = book.sheets[sheet].range(cell.coordinate).number_format
            if own and "%" in own:
                cell.number_format = own


# --- ownership ---------------------------------------------------------------------------


def _has_name(book: Any, name: str) -> bool:
    return name in book.names


def owned_sheets(book: Any) -> list[str]:
    """The sheets the writer's marker says wzq wrote (the writer's own reading of it)."""
    tmp = Workbook()
    _mirror_names(tmp, [(n, r) for n, r in _names_of(book) if n == MARKER_NAME])
    return written_sheets(tmp)


def _problems_sheet_is_ours(book: Any) -> bool:
    return _has_name(book, PROBLEMS_MARKER)


def _sheet_names(book: Any) -> list[str]:
    return [s.name for s in book.sheets]


def _remove_problems_sheet(book: Any) -> None:
    if not _problems_sheet_is_ours(book):
        return
    if PROBLEMS_SHEET in _sheet_names(book):
        book.sheets[PROBLEMS_SHEET].delete()
    book.names[PROBLEMS_MARKER].delete()


# --- writing ----------------------------------------------------------------------------


def _beyond(sheet: Any, rows: int, cols: int) -> list[tuple[int, int, Any]]:
    """(row, column, value) of the non-empty cells of ``sheet`` below row ``rows`` or
    right of column ``cols`` (the two blocks beside what wzq wrote, read in two steps)."""
    used = sheet.used_range
    last_row, last_col = used.row + used.shape[0] - 1, used.column + used.shape[1] - 1
    found = []
    for r0, c0, r1, c1 in ((rows + 1, 1, last_row, last_col), (1, cols + 1, rows, last_col)):
        if r1 < r0 or c1 < c0:
            continue
        values = sheet.range((r0, c0), (r1, c1)).options(ndim=2, err_to_str=True).value or []
        for i, row in enumerate(values):
            found += [(r0 + i, c0 + j, v) for j, v in enumerate(row) if v not in (None, "")]
    return found


def _typed_on_outputs(book: Any, mirror: Workbook) -> None:
    """Refuse, before anything changes, when cells were typed on the output sheets beside
    or below what the last press wrote (:data:`~wzq.io.workbook.outputs_record.BOUNDS_NAME`),
    while they are still the sheets of that press (its run time on the Run log): the
    press replaces those sheets. Nothing is said for sheets another run wrote."""
    dn = mirror.defined_names.get(BOUNDS_NAME)
    kept = read_bounds(dn.attr_text if dn is not None else None)
    names = _sheet_names(book)
    if kept is None or layout.RUN_LOG not in names:
        return
    run, bounds = kept
    if str(book.sheets[layout.RUN_LOG].range(RUN_TIME_CELL).value) != run:
        return
    cells = {n: _beyond(book.sheets[n], *bounds[n]) for n in bounds if n in names}
    found = beyond_bounds(bounds, cells)
    if found:
        raise PlanError(
            [
                Problem(
                    book.name,
                    f"what was typed on wzq's output sheets since the last Recalculate "
                    f"({'; '.join(found)}) would be replaced by the new results: move it to "
                    "a sheet of your own, then press Recalculate again (nothing was changed)",
                )
            ]
        )


def replace_output_sheets(book: Any, out: Workbook) -> Skipped:
    """Put the output sheets the writer made in ``out`` into the live workbook.

    The old output sheets are deleted (ownership was checked on the mirror
    first), the new ones are added at the end in the writer's order, then the
    charts (which may read other output sheets) and the writer's defined names.
    Returns the formatting steps Excel refused.
    """
    skipped = Skipped()
    present = set(_sheet_names(book))
    for name in layout.OUTPUT_SHEETS:
        if name in present:
            book.sheets[name].delete()
    _remove_problems_sheet(book)
    sheets = book.sheets
    after = sheets[len(sheets) - 1]
    written = []
    for ws in out.worksheets:
        if ws.title not in layout.OUTPUT_SHEETS:
            continue
        sheet = sheets.add(ws.title, after=after)
        after = sheet
        write_sheet(ws, sheet, skipped)
        written.append((ws, sheet))
    for ws, sheet in written:
        add_charts(book, ws, sheet, skipped)
    for name, dn in out.defined_names.items():
        book.names.add(name, "=" + dn.attr_text)
    active = out.active.title if out.active is not None else None
    for ws, sheet in written:
        if ws.title == active:
            sheet.activate()
    return skipped


#: Points per pixel of a picture (96 pixels to the inch, 72 points).
POINTS_PER_PIXEL = 0.75


def _place_picture(sheet: Any, anchor: str, image: Any, name: str) -> None:
    """One picture of the writer's (an openpyxl ``Image``) at its cell and size, through a
    temporary PNG file Excel reads."""
    cell = sheet.range(anchor)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "wzq-picture.png"
        path.write_bytes(image._data())
        sheet.pictures.add(
            str(path),
            left=cell.left,
            top=cell.top,
            width=image.width * POINTS_PER_PIXEL,
            height=image.height * POINTS_PER_PIXEL,
            name=name,
        )


def _add_pictures(book: Any, out: Workbook, skipped: Skipped) -> None:
    """The pictures the writer placed in ``out`` (the space-time picture on the Charts
    sheet) into the live workbook."""
    for ws in out.worksheets:
        if ws.title not in layout.OUTPUT_SHEETS or not ws._images:
            continue
        sheet = book.sheets[ws.title]
        for image in ws._images:
            anchor = image.anchor if isinstance(image.anchor, str) else "A1"
            skipped.attempt(
                f"the picture on {ws.title}",
                partial(_place_picture, sheet, anchor, image, f"wzq {ws.title} picture"),
            )


def _append_rows(sheet: Any, first_row: int, rows: list[list[Any]]) -> None:
    """Write rows of text (each kept as text) from column A of ``first_row``."""
    if not rows:
        return
    width = max(len(r) for r in rows)
    block = [
        [excel_literal(v) if isinstance(v, str) else v for v in r] + [None] * (width - len(r))
        for r in rows
    ]
    sheet.range((first_row, 1)).value = block


def _note_skipped(book: Any, skipped: list[str]) -> None:
    """List the formatting steps that were not carried over, below the Run log."""
    if not skipped or layout.RUN_LOG not in _sheet_names(book):
        return
    sheet = book.sheets[layout.RUN_LOG]
    last = sheet.used_range.last_cell.row
    rows: list[list[Any]] = [
        ["Not carried into this workbook by the Recalculate button (wzq run writes them):"]
    ]
    rows += [[f"- {s}"] for s in skipped]
    _append_rows(sheet, last + 2, rows)


# --- telling the user ---------------------------------------------------------------------


def _alert(book: Any, text: str, title: str, mode: str) -> None:
    try:
        book.app.alert(text, title=title, mode=mode)
    except Exception as e:  # no message box (Excel busy or gone): stderr reaches the VBA log
        print(f"wzq: {title}: {text} ({e})", file=sys.stderr)


def problems_text(problems: list[Problem], limit: int = ALERT_LINES) -> str:
    """The message box text for input problems (the first few, then a count)."""
    lines = [f"- {p}" for p in problems[:limit]]
    more = len(problems) - limit
    if more > 0:
        lines.append(f"... and {more} more.")
    return (
        "The inputs need fixing; nothing was recalculated.\n\n"
        + "\n".join(lines)
        + f"\n\nThe full list is on the sheet '{PROBLEMS_SHEET}'. Fix each item, then press "
        f"{layout.BUTTON_CAPTION} again."
    )


def show_problems(book: Any, problems: list[Problem]) -> None:
    """List ``problems`` on the problems sheet (replacing wzq's previous one) and alert."""
    n = len(problems)
    title = f"wzq: {n} problem{'s' if n != 1 else ''} in the inputs"
    note = ""
    try:
        names = _sheet_names(book)
        if PROBLEMS_SHEET in names and not _problems_sheet_is_ours(book):
            note = (
                f"\n\n(Your own sheet '{PROBLEMS_SHEET}' was left alone; rename it to get "
                "the list on a sheet.)"
            )
        else:
            _write_problems_sheet(book, problems)
    except Exception as e:  # the list still reaches the user through the message box
        note = f"\n\n(The list could not be written to a sheet: {e})"
    _alert(book, problems_text(problems) + note, title, "critical")


def _write_problems_sheet(book: Any, problems: list[Problem]) -> None:
    _remove_problems_sheet(book)
    sheets = book.sheets
    sheet = sheets.add(PROBLEMS_SHEET, after=sheets[len(sheets) - 1])
    book.names.add(PROBLEMS_MARKER, f'="{PROBLEMS_SHEET}"')
    stale = [s for s in layout.OUTPUT_SHEETS if s in _sheet_names(book)]
    rows: list[list[Any]] = [
        ["Problems in the inputs: nothing was recalculated"],
        [
            f"Fix each item below, then press {layout.BUTTON_CAPTION} again. "
            "wzq deletes this sheet after the next run that succeeds."
            + (f" The sheets {', '.join(stale)} still show the previous run." if stale else "")
        ],
        [],
        ["Where", "What to do"],
        *[[p.where, p.message] for p in problems],
        [],
        [wzq.CAUTION],
    ]
    _append_rows(sheet, 1, rows)
    skipped = Skipped()
    skipped.attempt("title", lambda: setattr(sheet.range("A1").font, "bold", True))
    skipped.attempt("title", lambda: setattr(sheet.range("A1").font, "size", 14.0))
    header = sheet.range("A4:B4")
    skipped.attempt("header", lambda: setattr(header.font, "bold", True))
    skipped.attempt("header", lambda: setattr(header, "color", (0xF4, 0xCC, 0xCC)))
    skipped.attempt("widths", lambda: setattr(sheet.range("A:A"), "column_width", 34.0))
    skipped.attempt("widths", lambda: setattr(sheet.range("B:B"), "column_width", 110.0))
    sheet.activate()


def report_crash(book: Any, error: BaseException) -> str:
    """Short message box and the traceback on the Run log sheet; returns the short text."""
    short = f"{type(error).__name__}: {error}"
    where = ""
    try:
        _write_crash_log(book, error)
        where = f"\n\nThe details are on the sheet '{layout.RUN_LOG}'."
    except Exception as e:
        where = f"\n\n(The details could not be written to the workbook: {e})"
        traceback.print_exception(error, file=sys.stderr)
    _alert(
        book,
        "wzq stopped with an unexpected error; the results sheets may be incomplete.\n\n"
        + short
        + where
        + "\n\nThe command line gives the same analysis: wzq run "
        + str(getattr(book, "name", "WORKBOOK")),
        "wzq: unexpected error",
        "critical",
    )
    return short


def _write_crash_log(book: Any, error: BaseException) -> None:
    names = _sheet_names(book)
    owned = owned_sheets(book)
    if layout.RUN_LOG in names:
        if layout.RUN_LOG not in owned:
            raise RuntimeError(f"the sheet '{layout.RUN_LOG}' was not written by wzq")
        sheet = book.sheets[layout.RUN_LOG]
        sheet.clear()
    else:
        sheets = book.sheets
        sheet = sheets.add(layout.RUN_LOG, after=sheets[len(sheets) - 1])
        marker = "|".join(dict.fromkeys([*owned, layout.RUN_LOG]))
        book.names.add(MARKER_NAME, f'="{marker}"')
    lines = "".join(traceback.format_exception(error)).splitlines()
    rows: list[list[Any]] = [
        ["Run log: wzq stopped with an unexpected error"],
        [f"wzq {wzq.__version__}; Python {sys.version.split()[0]}"],
        [f"{type(error).__name__}: {error}"],
        ["Please pass the lines below to whoever looks after wzq."],
        [],
        *[[line] for line in lines],
    ]
    _append_rows(sheet, 1, rows)
    sheet.activate()


# --- the entry point -----------------------------------------------------------------------


def _status(book: Any, text: str | bool) -> None:
    with contextlib.suppress(Exception):  # a status bar is a courtesy, never a reason to stop
        book.app.status_bar = text


def _screen(book: Any, on: bool) -> None:
    with contextlib.suppress(Exception):
        book.app.screen_updating = on


def book_folder(book: Any) -> Path | None:
    """The folder of the open workbook's file (where a count file named on its Demand sheet
    is looked for); ``None`` for a workbook never saved or saved online."""
    try:
        folder = Path(str(book.fullname)).parent
    except Exception:  # a workbook object without a file name
        return None
    return folder if folder.is_absolute() and folder.is_dir() else None


def recalculate(book: Any = None, *, run_time: str | None = None) -> Outcome:
    """Analyse the plan in the open workbook ``book`` and write the results into it.

    ``book`` is an xlwings ``Book`` (default: the workbook whose button called
    Python, ``xlwings.Book.caller()``). Unsaved edits count: the values are
    read from Excel, not from the file. Never raises: input problems are listed
    on the :data:`PROBLEMS_SHEET` sheet and in a message box, anything else is
    reported in a message box with the traceback on the Run log sheet.
    ``run_time`` (UTC, ISO 8601) defaults to now.
    """
    if book is None:
        try:
            import xlwings

            book = xlwings.Book.caller()
        except Exception as e:
            print(f"wzq: no calling workbook ({e}); use: wzq run WORKBOOK", file=sys.stderr)
            return Outcome(error=str(e))
    _status(book, "wzq: recalculating ...")
    _screen(book, False)
    try:
        mirror = mirror_book(book)
        plan = read_plan_from_book(mirror, book.name, folder=book_folder(book))
        check_output_sheets(mirror)  # the writer's ownership rule, before anything changes
        _typed_on_outputs(book, mirror)  # and nothing typed there since the last press
        outputs = decide_outputs(wzq.analyse(plan))  # the Site sheet's space-time option too
        out = Workbook()
        write_outputs(out, outputs, source=book.name, run_time=run_time)
        skipped = replace_output_sheets(book, out)
        _add_pictures(book, out, skipped)
        book.names.add(BOUNDS_NAME, f'="{bounds_text(out)}"')  # for the next press
        _note_skipped(book, skipped)
        return Outcome(result=outputs.result, skipped=list(skipped))
    except PlanError as e:
        _screen(book, True)
        show_problems(book, e.problems)
        return Outcome(problems=list(e.problems))
    except Exception as e:
        _screen(book, True)
        return Outcome(error=report_crash(book, e))
    finally:
        _screen(book, True)
        _status(book, False)


def main() -> None:
    """What the Recalculate button runs (through the workbook's entry module)."""
    recalculate()
