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
Demand "from AADT" is expanded into hourly demand by :mod:`wzq.models.demand`.

The reader is split by concern: cells and values (:mod:`.cells`), tables
(:mod:`.tables`), the demand (:mod:`.demand`), the closures (:mod:`.closures`) and
the approach road (:mod:`.approach`) and the plan as a whole, assembled from the
schema of inputs (:mod:`.plan`);
:class:`BookReader` joins them.
"""

from __future__ import annotations

import io
import warnings
from pathlib import Path
from typing import Any

from defusedxml import DefusedXmlException
from openpyxl import load_workbook
from openpyxl.workbook.workbook import Workbook

from wzq.engine.plan import Plan, PlanError, Problem
from wzq.io.workbook import formula_values as FV
from wzq.io.workbook.cellref import cell_ref
from wzq.io.workbook.reader.approach import ApproachReader
from wzq.io.workbook.reader.cells import CellReader
from wzq.io.workbook.reader.closures import ClosureReader
from wzq.io.workbook.reader.demand import DemandReader
from wzq.io.workbook.reader.history import HistoryReader
from wzq.io.workbook.reader.plan import PlanReader
from wzq.io.workbook.reader.skip import load_skipping_outputs
from wzq.io.workbook.reader.tables import TableReader
from wzq.io.workbook.reader.values import WORKBOOK_SUFFIXES, out_of_range
from wzq.io.workbook.safety import read_checked
from wzq.io.workbook.saved_values import SharedStrings

__all__ = [
    "WORKBOOK_SUFFIXES",
    "BookReader",
    "book_from_bytes",
    "cell_ref",
    "load_book",
    "read_plan",
    "read_plan_and_book",
    "read_plan_from_book",
    "read_workbook_bytes",
    "save_as_hint",
]


def read_plan(path: str | Path) -> Plan:
    """Read and validate the plan in a workbook file (``.xlsx`` or ``.xlsm``).

    Raises :class:`PlanError` listing every problem, each with sheet and cell.
    The file is only read, and only once: the bytes that were inspected are the
    bytes that are parsed.
    """
    return read_plan_and_book(path)[0]


def read_plan_and_book(path: str | Path) -> tuple[Plan, Workbook]:
    """:func:`read_plan`, and the workbook it was read from (output sheets unparsed)."""
    path = Path(path)
    data = read_workbook_bytes(path, skip_outputs=True)
    wb = book_from_bytes(data, path, skip_outputs=True)  # wzq's output sheets are not read
    return read_plan_from_book(wb, path.name, path, data=data), wb


def save_as_hint(suffix: str) -> str:
    """What to do with a spreadsheet of a type wzq does not read, in the terms of the
    program that most likely made it (an OpenDocument file comes from LibreOffice or
    another office suite, a .numbers file from Apple Numbers, the rest from Excel)."""
    s = suffix.lower()
    if s in (".ods", ".fods"):
        how = "in LibreOffice Calc or the program that made it, use Save As with the type "
        return how + "Excel 2007-365 (.xlsx), then run that copy"
    if s == ".numbers":
        return "in Numbers, export it to Excel (.xlsx), then run that copy"
    return "save it from your spreadsheet program as .xlsx (or .xlsm to keep macros) first"


def read_workbook_bytes(path: Path, *, skip_outputs: bool = False) -> bytes:
    """The file's bytes after the pre-parse checks (:func:`wzq.io.workbook.safety.read_checked`:
    empty, not a workbook, old ``.xls``, encrypted, zip bombs, cell limit, XML entities);
    ``skip_outputs`` leaves out wzq's output sheets, which must then not be parsed."""
    if path.suffix.lower() not in WORKBOOK_SUFFIXES and not path.is_dir():
        raise PlanError(
            f"'{path.suffix}' files are not read; {save_as_hint(path.suffix)}",
            where=path.name,
        )
    data, _ = read_checked(path, skip_outputs=skip_outputs)
    return data


def book_from_bytes(
    data: bytes, path: Path, *, skip_outputs: bool = False, **options: Any
) -> Workbook:
    """Parse checked workbook bytes with openpyxl; every way it can fail is a :class:`PlanError`.

    ``options`` go to :func:`openpyxl.load_workbook` (``keep_vba`` defaults to
    whether ``path`` is an ``.xlsm``). With ``skip_outputs`` the sheets wzq wrote
    are left unparsed, empty stand-ins in their place (:mod:`.skip`): for reading a
    plan, and for a run, which replaces them.
    """
    options.setdefault("keep_vba", path.suffix.lower() == ".xlsm")
    where = path.name
    load = load_skipping_outputs if skip_outputs else load_workbook
    try:
        with warnings.catch_warnings(record=True) as said:
            warnings.simplefilter("always")  # openpyxl warns about extensions it drops on read
            book = load(io.BytesIO(data), **options)
        out_of_range(book, [str(w.message) for w in said])  # and about dates it cannot make
        return book
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
    wb: Workbook,
    source: str,
    path: Path | None = None,
    *,
    data: bytes | None = None,
    folder: Path | None = None,
) -> Plan:
    """Read and validate the plan in an already loaded openpyxl workbook.

    ``source`` names the workbook in messages about the file as a whole;
    ``data`` (the file's bytes) or else ``path`` (the file) is needed only to
    read the saved result of a formula typed in an input cell (loaded lazily,
    once). ``folder`` (default: ``path``'s) is where a count file named on the
    Demand sheet is looked for.
    """
    return BookReader(wb, source, path, data, folder=folder).plan()


class BookReader(
    PlanReader,
    ApproachReader,
    DemandReader,
    HistoryReader,
    ClosureReader,
    TableReader,
    CellReader,
):
    """Pulls typed values out of the workbook, collecting every problem; its parts
    read by concern (cells and values, tables, demand, the count history, closures,
    the plan)."""

    def __init__(
        self,
        wb: Workbook,
        source: str,
        path: Path | None,
        data: bytes | None = None,
        *,
        folder: Path | None = None,
    ) -> None:
        self.wb = wb
        self.source = source
        self.path = path
        self.data = data
        self.folder = folder if folder is not None else (path.parent if path else None)
        self._history: Any = None  # the count history of the demand, when it is one
        self._history_sheet: Any = None  # the sheet of this workbook it was read from
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
        self._closure_overrides: list[str] = []  # override cell of each closure, plan order
        self._landmark_cells: list[dict[str, str]] = []  # cells of each landmark, in plan order
        self.warnings: list[str] = []  # what the user should know; said with every result
        self._precedents: FV.Precedents | None = None
        self._saved: dict[str, dict[tuple[int, int], FV.Saved]] = {}
        self._formula_cells: set[tuple[str, int, int]] = set()
        self._below: dict[tuple[str, int], str] = {}  # (sheet, row) read from below a table
        self._named_cells: set[tuple[str, int, int]] | None = None
