"""``wzq run``: read a plan workbook, analyse it, write the results back.

:func:`run_workbook` is the whole round trip on one loaded workbook: the file is
read into memory once, the plan is read and validated from that same workbook
(:func:`wzq.io.workbook.reader.read_plan_from_book`), analysed, the output sheets
are replaced (:mod:`wzq.io.workbook.writer`) and the workbook is saved atomically
(:mod:`wzq.io.workbook.save`) over the input or to ``out``. Any problem a user can
fix is raised as :class:`PlanError` before anything is written, so the input
file stays byte-identical.

Importing this module adds the ``run`` sub-command to the ``wzq`` command.
"""

from __future__ import annotations

import datetime as dt
import io
import os
import shutil
import tempfile
from copy import copy
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.table import TableColumn

import wzq
from wzq.engine.plan import Plan, PlanError, Problem
from wzq.engine.results import Result
from wzq.engine.risk import RiskResult
from wzq.io import fields as F
from wzq.io.jsonplan import plan_to_dict
from wzq.io.plans import demo_plan
from wzq.io.workbook import layout
from wzq.io.workbook.formula_values import WithSavedResults
from wzq.io.workbook.history_typing import from_count_file, type_history
from wzq.io.workbook.kept import ContentLost, keeps_everything
from wzq.io.workbook.outputs import decide_outputs, write_outputs
from wzq.io.workbook.outputs_record import typed_on_outputs
from wzq.io.workbook.reader import book_from_bytes, read_plan_from_book, save_as_hint
from wzq.io.workbook.safety import PackageReport, read_checked
from wzq.io.workbook.save import (
    ChangedSinceRead,
    FileState,
    check_writable,
    lock_file,
    lock_files,
    save_atomic,
)
from wzq.io.workbook.writer import put_text
from wzq.units import m_to_long_length

__all__ = [
    "COPY_LABEL",
    "DEMO_WORKBOOK",
    "SUFFIXES",
    "RunOutcome",
    "copy_path",
    "load_book",
    "results_source",
    "run_to",
    "run_workbook",
    "type_plan",
    "write_demo_workbook",
    "write_filled_workbook",
]

#: Workbook types wzq reads and writes (an ``.xlsm`` keeps its VBA project).
SUFFIXES = (".xlsx", ".xlsm")


def _check_suffixes(src: Path, target: Path) -> None:
    problems = []
    suffix = src.suffix.lower()
    if suffix not in SUFFIXES:
        hint = "for a .json plan use: wzq show PATH" if suffix == ".json" else save_as_hint(suffix)
        problems.append(
            Problem(str(src), f"wzq run reads .xlsx or .xlsm workbooks, not '{src.suffix}'; {hint}")
        )
    elif target.suffix.lower() != suffix:
        problems.append(
            Problem(
                f"-o {target}",
                f"the output must be a {suffix} file like the input "
                f"(a workbook's type cannot change on save); use -o {target.stem}{suffix}",
            )
        )
    if problems:
        raise PlanError(problems)


def load_book(path: str | Path) -> Workbook:
    """Load a workbook for write-back: VBA kept for ``.xlsm``, rich text kept as typed.

    The file is read into memory once and inspected before it is parsed
    (:func:`wzq.io.workbook.safety.read_checked`), so no file handle stays open on
    the input while the output replaces it (which Windows would refuse).
    """
    return _load(Path(path))[0]


def _load(path: Path) -> tuple[Workbook, bytes, PackageReport, FileState]:
    if not path.exists():
        raise PlanError([Problem(str(path), "no such file; check the path")])
    data, report = read_checked(path, skip_outputs=True)  # the output sheets: never parsed
    state = FileState.of(path, data)  # to see, before replacing it, whether it changed since
    # wzq's own output sheets are replaced, so they are not parsed
    book = book_from_bytes(data, path, skip_outputs=True, keep_links=True, rich_text=True)
    return book, data, report, state


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (b.exists() and os.path.samefile(a, b))
    except OSError:
        return False


#: How the copy is named when the workbook itself cannot be written back safely.
COPY_LABEL = "wzq results"


def copy_path(src: Path) -> Path:
    """A free file name beside ``src`` for the results: ``plan (wzq results).xlsx``, then
    ``plan (wzq results 2).xlsx`` ...; a name that exists (or has a lock file) is skipped."""
    n = 1
    while True:
        label = COPY_LABEL if n == 1 else f"{COPY_LABEL} {n}"
        candidate = src.with_name(f"{src.stem} ({label}){src.suffix}")
        if not candidate.exists() and not any(p.exists() for p in lock_files(candidate)):
            return candidate
        n += 1


def results_source(path: Path) -> str | None:
    """The source file named in the Run log of a workbook wzq wrote results into, or ``None``
    (not a workbook, never run by wzq, or unreadable)."""
    from openpyxl import load_workbook

    try:
        data, _ = read_checked(path)
        book = load_workbook(io.BytesIO(data), read_only=True)
        try:
            if (
                layout.RUN_LOG not in layout.written_sheets(book)
                or layout.RUN_LOG not in book.sheetnames
            ):
                return None
            for label, value, *_ in book[layout.RUN_LOG].iter_rows(
                max_row=40, max_col=2, values_only=True
            ):
                if label == "Source file":
                    return None if value is None else str(value)
        finally:
            book.close()
    except Exception:  # anything unreadable is not known to be this plan's results
        return None
    return None


def _check_overwrite(src: Path, target: Path, force: bool) -> None:
    """Refuse to replace an existing ``-o`` file that is not a results file of ``src``."""
    if force or not target.exists() or _same_file(src, target) or target.is_dir():
        return
    source = results_source(target)
    if source == src.name:
        return
    why = (
        f"its Run log says it holds the results of {source}"
        if source
        else "it is not a results file written by wzq (it may be another plan)"
    )
    raise PlanError(
        [
            Problem(
                f"-o {target}",
                f"{target.name} already exists and {why}, not of {src.name}; pick another "
                "name, or add --force to replace it",
            )
        ]
    )


def _unkept_text(unkept: list[str]) -> str:
    return "; ".join(unkept[:5]) + (f"; and {len(unkept) - 5} more" if len(unkept) > 5 else "")


@dataclass(frozen=True)
class RunOutcome:
    """What :func:`run_to` did: the result, where it went, and why there if not asked."""

    result: Result
    target: Path
    #: Said to the user (printed by ``wzq run`` and written in the Run log).
    notes: list[str] = field(default_factory=list)
    #: True when the results went to a copy: the workbook holds content wzq cannot keep
    #: when it saves, or it changed on disk while wzq ran.
    copied: bool = False
    #: The risk of breaking the limits, when the plan gives a count history or a spread
    #: of the work-zone capacity (as on the sheets; ``None`` otherwise).
    risk: RiskResult | None = None


def _kept_words(src: Path, parts: str) -> str:
    return f"{src.name} holds content wzq cannot keep when it saves the workbook ({parts})"


def _typed_words(src: Path, parts: str) -> str:
    return (
        f"what was typed on wzq's output sheets of {src.name} since its last run ({parts}) "
        "would be replaced by the new results (move it to a sheet of your own)"
    )


def _not_kept(src: Path, parts: str) -> PlanError:
    """Refusing to write back (``unkept="refuse"``): what would be lost and what to do."""
    return PlanError(
        [
            Problem(
                str(src),
                f"holds content wzq cannot keep when it saves the workbook ({parts}); "
                "to leave it intact write the results to a copy: "
                f"wzq run {src.name} -o {copy_path(src).name}",
            )
        ]
    )


def run_to(
    path: str | Path,
    out: str | Path | None = None,
    *,
    run_time: str | None = None,
    space_time: bool | None = None,
    unkept: Literal["copy", "refuse"] = "copy",
    windows: bool | None = None,
    force: bool = False,
    office_profile: str | None = None,
) -> RunOutcome:
    """Analyse the plan in workbook ``path`` and write the results into it (or into ``out``).

    Raises :class:`PlanError` (every problem, with sheet and cell) before
    anything is written; the input file is never changed unless it is the
    target, and then only by one atomic replace. ``run_time`` (UTC, ISO 8601)
    defaults to now. ``space_time`` adds the LWR space-time picture to the
    Charts sheet (``None``: as the workbook's Site sheet says).

    Written back into ``path``, the workbook is left byte-identical and the
    results go to a copy beside it (:func:`copy_path`) when it holds content
    openpyxl cannot keep on save: known kinds (drawn shapes, sparklines, ...:
    :func:`wzq.io.workbook.safety.inspect_file`) are seen before anything is
    written, anything else by comparing the package before and after the save
    (:mod:`wzq.io.workbook.kept`). So they do, and the user's version is kept,
    when the file changed on disk while wzq ran. With ``unkept="refuse"``
    nothing is written then and a :class:`PlanError` says why.

    An existing ``out`` is replaced only when it is a results file of this plan
    (its Run log names ``path``'s file) or with ``force``.

    ``office_profile`` is for the Recalculate plan command in LibreOffice Calc
    only: that LibreOffice's own lock file on ``path`` does not block the save
    (:func:`wzq.io.workbook.save.own_office_lock`); every other lock still does.
    """
    src = Path(path)
    target = Path(out) if out is not None else src
    _check_suffixes(src, target)
    if not src.exists():
        raise PlanError([Problem(str(src), "no such file; check the path")])
    _check_overwrite(src, target, force)
    book, data, report, state = _load(src)
    in_place = _same_file(src, target)
    notes: list[str] = []
    if report.unkept:
        parts = _unkept_text(report.unkept)
        if not in_place:
            notes.append(
                f"{src.name} holds content wzq cannot carry over ({parts}); {target.name} "
                "does not have it, the original is unchanged"
            )
        elif unkept == "refuse":
            raise _not_kept(src, parts)
    typed = typed_on_outputs(book, data, src) if in_place else []
    if typed and unkept == "refuse":
        raise PlanError([Problem(str(src), _typed_words(src, _unkept_text(typed)))])
    check_writable(target, office_profile=office_profile)
    plan = read_plan_from_book(book, src.name, src, data=data)
    result = wzq.analyse(plan)
    outputs = decide_outputs(result, space_time=space_time, windows=windows)
    result = outputs.result  # with the space-time simulation's warnings, as every sheet shows

    def write(book: Workbook, notes: list[str]) -> None:
        write_outputs(book, outputs, source=src.name, run_time=run_time, notes=notes, cache=True)

    def to_copy(why: str) -> RunOutcome:
        copy = copy_path(src)
        notes.append(
            f"{why}, so it was left unchanged and the results were written to a copy: {copy.name}"
        )
        fresh = book_from_bytes(data, src, skip_outputs=True, keep_links=True, rich_text=True)
        write(fresh, notes)  # (a saved book's pictures cannot be saved again by openpyxl)
        save_atomic(WithSavedResults(fresh, data), copy)  # formulas keep their results
        return RunOutcome(result, copy, notes, True, outputs.risk)

    if in_place and report.unkept:  # known before writing: the copy at once
        return to_copy(_kept_words(src, _unkept_text(report.unkept)))
    if in_place and typed:
        return to_copy(_typed_words(src, _unkept_text(typed)))
    write(book, notes)
    if not in_place:
        save_atomic(WithSavedResults(book, data), target, office_profile=office_profile)
        return RunOutcome(result, target, notes, False, outputs.risk)
    try:
        save_atomic(
            WithSavedResults(book, data),
            target,
            verify=keeps_everything(data, str(src), layout.OUTPUT_SHEETS),
            expect=state,
            office_profile=office_profile,
        )
    except ContentLost as e:
        if unkept == "refuse":
            raise _not_kept(src, _unkept_text(e.lost)) from None
        return to_copy(_kept_words(src, _unkept_text(e.lost)))
    except ChangedSinceRead as e:
        if unkept == "refuse":
            raise PlanError(
                [Problem(str(src), f"{e.problems[0].message}; run wzq again on your new version")]
            ) from None
        return to_copy(
            f"{src.name} changed on disk while wzq ran (the results are for the version it "
            "read; run wzq again for your new version)"
        )
    return RunOutcome(result, target, notes, False, outputs.risk)


def run_workbook(
    path: str | Path,
    out: str | Path | None = None,
    *,
    run_time: str | None = None,
    space_time: bool | None = None,
    unkept: Literal["copy", "refuse"] = "copy",
    windows: bool | None = None,
) -> Result:
    """:func:`run_to`, returning only the result."""
    return run_to(
        path, out, run_time=run_time, space_time=space_time, unkept=unkept, windows=windows
    ).result


# --- the demo workbook ------------------------------------------------------------------

#: Where each value of a plan's JSON form (:func:`wzq.io.jsonplan.plan_to_dict`, already
#: in the plan's unit system) is typed in the template: (section, key) -> (defined name,
#: dropdown words or ``None``), for every plan input with a cell (:mod:`wzq.io.fields`).
_TYPED: dict[tuple[str, str], tuple[str, layout.Choices | None]] = {
    tuple(f.key.split(".", 1)): (f.name, f.choices if f.kind == "choice" else None)
    for f in F.PLAN_INPUTS
    if f.name and f.key != "units"
}


def _named_cell(book: Workbook, name: str):
    sheet, coord = next(iter(book.defined_names[name].destinations))
    return book[sheet][coord.replace("$", "")]


def _table_rows(book: Workbook, table: str, rows: list[dict]) -> None:
    """Type rows into an Excel table from its first data row, growing it when needed."""
    ws = next(ws for ws in book.worksheets if table in ws.tables)
    t = ws.tables[table]
    c0, r0, c1, r1 = range_boundaries(t.ref)
    if r0 + len(rows) > r1:
        t.ref = f"{get_column_letter(c0)}{r0}:{get_column_letter(c1)}{r0 + len(rows)}"
        if t.autoFilter is not None:
            t.autoFilter.ref = t.ref
    headers = [c.name for c in t.tableColumns]
    for i, row in enumerate(rows, start=1):
        for header, (value, fmt) in row.items():
            cell = ws.cell(r0 + i, c0 + headers.index(header))
            put_text(ws, cell.row, cell.column, value)
            if fmt:
                cell.number_format = fmt


def type_plan(book: Workbook, plan: Plan) -> None:
    """Type ``plan`` into a fresh template workbook, as a user would fill it in.

    Values go into the cells of their defined names in the plan's unit system
    (dropdown cells get their words), the demand and the closures into the
    rows of their Excel tables.
    """
    data = plan_to_dict(plan)
    _named_cell(book, F.UNIT_SYSTEM.name).value = layout.word_for(layout.UNIT_WORDS, data["units"])
    _named_cell(book, F.DEMAND_MODE.name).value = layout.word_for(
        layout.DEMAND_MODE_WORDS, layout.HOURLY
    )
    for (section, key), (name, words) in _TYPED.items():
        given = data.get(section) or {}
        if key not in given and f"{section}.{key}" in F.WHEN_USED_KEYS:
            continue  # not used by this plan: the template's value stands
        value = given.get(key)
        cell = _named_cell(book, name)
        put_text(
            cell.parent,
            cell.row,
            cell.column,
            value if words is None or value is None else layout.word_for(words, value),
        )
    d = plan.demand
    date_h, time_h, flow_h = layout.DEMAND_COLUMNS
    demand = []
    for i, flow in enumerate(() if from_count_file(plan) else d.flows_veh_h):
        t = d.start + dt.timedelta(seconds=i * d.interval_s)
        demand.append(
            {
                date_h: (dt.datetime.combine(t.date(), dt.time()), layout.DATE_FORMAT),
                time_h: (t.time(), layout.TIME_FORMAT),
                flow_h: (float(flow), None),
            }
        )
    _table_rows(book, layout.DEMAND_TABLE, demand)
    day_h, from_h, to_h, lanes_h, barrier_h, night_h, override_h, note_h = layout.CLOSURE_COLUMNS
    closures = []
    for c in plan.closures:
        day = dt.datetime.combine(c.start.date(), dt.time())
        to = (
            (1.0, layout.END_TIME_FORMAT)  # 24:00
            if c.end == day + dt.timedelta(days=1)
            else (c.end.time(), layout.END_TIME_FORMAT)
            if c.end - c.start < dt.timedelta(days=1)
            else (c.end, "yyyy-mm-dd hh:mm")
        )
        closures.append(
            {
                day_h: (day, layout.DATE_FORMAT),
                from_h: (c.start.time(), layout.TIME_FORMAT),
                to_h: to,
                lanes_h: (c.lanes_closed, None),
                barrier_h: (layout.word_for(layout.BARRIER_WORDS, c.barrier), None),
                night_h: (layout.word_for(layout.NIGHT_WORDS, c.night), None),
                override_h: (c.capacity_override_veh_h_ln, None),
                note_h: (c.note or None, None),
            }
        )
    _table_rows(book, layout.CLOSURE_TABLE, closures)
    if from_count_file(plan):
        type_history(book, plan)
    _type_approach(book, plan)


def _type_approach(book: Workbook, plan: Plan) -> None:
    """The landmarks into ``LandmarkTable``, and the hourly flows of ramps into
    ``RampFlowTable``: one row per hour, one column per ramp headed by its name (the
    table gets more columns when the template's are too few)."""
    landmarks = plan.approach.landmarks
    if not landmarks:
        return
    system = plan.site.unit_system
    name_h, dist_h, kind_h, share_h, _ = layout.LANDMARK_COLUMNS
    _table_rows(
        book,
        layout.LANDMARK_TABLE,
        [
            {
                name_h: (lm.name, None),
                dist_h: (round(m_to_long_length(lm.distance, system), 6), None),
                kind_h: (layout.word_for(layout.LANDMARK_KIND_WORDS, lm.kind), None),
                share_h: (None if lm.ramp_share is None else round(lm.ramp_share * 100, 9), None),
            }
            for lm in landmarks
        ],
    )
    hourly = [lm for lm in landmarks if lm.ramp_veh_h is not None]
    if not hourly:
        return
    ws = next(ws for ws in book.worksheets if layout.RAMP_FLOW_TABLE in ws.tables)
    t = ws.tables[layout.RAMP_FLOW_TABLE]
    c0, r0, c1, r1 = range_boundaries(t.ref)
    first = len(layout.RAMP_FLOW_COLUMNS)
    for k, lm in enumerate(hourly):
        col = c0 + first + k
        if first + k < len(t.tableColumns):
            t.tableColumns[first + k].name = lm.name
        else:  # one more column, looking like the one before it
            t.tableColumns.append(TableColumn(id=len(t.tableColumns) + 1, name=lm.name))
            ws.cell(r0, col)._style = copy(ws.cell(r0, col - 1)._style)
            c1 = col
        put_text(ws, r0, col, lm.name)
    t.ref = f"{get_column_letter(c0)}{r0}:{get_column_letter(c1)}{r1}"
    date_h, time_h = layout.RAMP_FLOW_COLUMNS
    start = plan.demand.start
    rows = []
    for h in range(len(hourly[0].ramp_veh_h or ())):
        t_h = start + dt.timedelta(hours=h)
        row = {
            date_h: (dt.datetime.combine(t_h.date(), dt.time()), layout.DATE_FORMAT),
            time_h: (t_h.time(), layout.TIME_FORMAT),
        }
        row.update({lm.name: ((lm.ramp_veh_h or ())[h], "#,##0") for lm in hourly})
        rows.append(row)
    _table_rows(book, layout.RAMP_FLOW_TABLE, rows)


#: File name of the demo workbook when ``wzq demo`` is given a folder.
DEMO_WORKBOOK = "wzq-demo-kestrel-ridge.xlsx"


def write_filled_workbook(
    plan: Plan, path: str | Path, *, macro: bool = False, run_time: str | None = None
) -> Result:
    """A fresh template with ``plan`` typed in and analysed, saved at ``path``.

    ``path`` ends in ``.xlsm`` when ``macro`` (the template with its VBA
    project) and ``.xlsx`` otherwise; an existing file is never overwritten.
    """
    from wzq.io.workbook.template import build_template  # xlsxwriter is imported on demand

    target = Path(path)
    suffix = ".xlsm" if macro else ".xlsx"
    if target.suffix.lower() != suffix:
        raise PlanError([Problem(str(target), f"give a file name ending in {suffix}")])
    if target.exists():
        raise PlanError(
            [Problem(str(target), "already exists; wzq never overwrites it: pick another name")]
        )
    check_writable(target)
    with tempfile.TemporaryDirectory() as tmp:
        blank = Path(tmp) / target.name  # the Run log names the workbook as the user sees it
        build_template(blank, macro=macro)
        book = load_book(blank)
        type_plan(book, plan)
        save_atomic(book, blank)
        if not from_count_file(plan):
            return run_workbook(blank, target, run_time=run_time)
        # the count file is named relative to the workbook: read and run it where it goes
        shutil.copyfile(blank, target)
        try:
            return run_workbook(target, run_time=run_time)
        except BaseException:
            target.unlink(missing_ok=True)
            raise


#: File name of the demo workbook when ``wzq demo`` is given a folder.
DEMO_WORKBOOK = "wzq-demo-kestrel-ridge.xlsx"


def write_demo_workbook(path: str | Path = ".") -> Path:
    """Write the shipped invented example, filled in and analysed, as a workbook.

    ``path`` is a folder (the file is :data:`DEMO_WORKBOOK` in it, numbered
    ``-2``, ``-3`` ... when that name is taken) or an ``.xlsx`` file name.
    An existing file is never overwritten.
    """
    target = Path(path)
    if target.is_dir() or not target.suffix:
        stem, suffix = Path(DEMO_WORKBOOK).stem, Path(DEMO_WORKBOOK).suffix
        target = target / DEMO_WORKBOOK
        n = 1
        while target.exists() or lock_file(target).exists():
            n += 1
            target = target.with_name(f"{stem}-{n}{suffix}")
    write_filled_workbook(demo_plan(), target)
    return target
