"""``wzq run``: read a plan workbook, analyse it, write the results back.

:func:`run_workbook` is the whole round trip on one loaded workbook: the file is
read into memory once, the plan is read and validated from that same workbook
(:func:`wzq.workbook.reader.read_plan_from_book`), analysed, the output sheets
are replaced (:mod:`wzq.workbook.writer`) and the workbook is saved atomically
(:mod:`wzq.workbook.save`) over the input or to ``out``. Any problem a user can
fix is raised as :class:`PlanError` before anything is written, so the input
file stays byte-identical.

Importing this module adds the ``run`` sub-command to the ``wzq`` command.
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.workbook.workbook import Workbook

import wzq
from wzq import cli
from wzq.analysis import Result
from wzq.plan import Plan, PlanError, Problem
from wzq.planio import plan_to_dict
from wzq.tables import summary_lines
from wzq.workbook import layout
from wzq.workbook.reader import book_from_bytes, read_plan_from_book
from wzq.workbook.safety import PackageReport, read_checked
from wzq.workbook.save import check_writable, lock_file, lock_files, save_atomic
from wzq.workbook.writer import put_text, write_results

#: Workbook types wzq reads and writes (an ``.xlsm`` keeps its VBA project).
SUFFIXES = (".xlsx", ".xlsm")


def _check_suffixes(src: Path, target: Path) -> None:
    problems = []
    suffix = src.suffix.lower()
    if suffix not in SUFFIXES:
        hint = (
            "for a .json plan use: wzq show PATH"
            if suffix == ".json"
            else "save it from Excel as .xlsx (or .xlsm to keep macros) first"
        )
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
    (:func:`wzq.workbook.safety.read_checked`), so no file handle stays open on
    the input while the output replaces it (which Windows would refuse).
    """
    return _load(Path(path))[0]


def _load(path: Path) -> tuple[Workbook, bytes, PackageReport]:
    if not path.exists():
        raise PlanError([Problem(str(path), "no such file; check the path")])
    data, report = read_checked(path)
    book = book_from_bytes(data, path, keep_links=True, rich_text=True)
    return book, data, report


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


def _unkept_text(unkept: list[str]) -> str:
    return "; ".join(unkept[:5]) + (f"; and {len(unkept) - 5} more" if len(unkept) > 5 else "")


@dataclass
class RunOutcome:
    """What :func:`run_to` did: the result, where it went, and why there if not asked."""

    result: Result
    target: Path
    #: Said to the user (printed by ``wzq run`` and written in the Run log).
    notes: list[str] = field(default_factory=list)
    #: True when the results went to a copy because the workbook holds content
    #: wzq cannot keep when it saves.
    copied: bool = False


def run_to(
    path: str | Path,
    out: str | Path | None = None,
    *,
    run_time: str | None = None,
    space_time: bool | None = None,
    unkept: Literal["copy", "refuse"] = "copy",
    windows: bool | None = None,
    office_profile: str | None = None,
) -> RunOutcome:
    """Analyse the plan in workbook ``path`` and write the results into it (or into ``out``).

    Raises :class:`PlanError` (every problem, with sheet and cell) before
    anything is written; the input file is never changed unless it is the
    target, and then only by one atomic replace. ``run_time`` (UTC, ISO 8601)
    defaults to now. ``space_time`` adds the LWR space-time picture to the
    Charts sheet (``None``: as the workbook's Site sheet says).

    When the workbook holds content openpyxl cannot keep on save (drawn shapes,
    sparklines, ...: :func:`wzq.workbook.safety.inspect_file`) and would be
    written back into, it is left byte-identical and the results go to a copy
    beside it (:func:`copy_path`), or, with ``unkept="refuse"``, nothing is
    written and a :class:`PlanError` says so.

    ``office_profile`` is for the Recalculate plan command in LibreOffice Calc
    only: that LibreOffice's own lock file on ``path`` does not block the save
    (:func:`wzq.workbook.save.own_office_lock`); every other lock still does.
    """
    src = Path(path)
    target = Path(out) if out is not None else src
    _check_suffixes(src, target)
    if not src.exists():
        raise PlanError([Problem(str(src), "no such file; check the path")])
    book, data, report = _load(src)
    notes: list[str] = []
    copied = False
    if report.unkept:
        parts = _unkept_text(report.unkept)
        if not _same_file(src, target):
            notes.append(
                f"{src.name} holds content wzq cannot carry over ({parts}); {target.name} "
                "does not have it, the original is unchanged"
            )
        elif unkept == "refuse":
            raise PlanError(
                [
                    Problem(
                        str(src),
                        f"holds content wzq cannot keep when it saves the workbook ({parts}); "
                        "to leave it intact write the results to a copy: "
                        f"wzq run {src.name} -o {copy_path(src).name}",
                    )
                ]
            )
        else:
            target = copy_path(src)
            copied = True
            notes.append(
                f"{src.name} holds content wzq cannot keep when it saves the workbook "
                f"({parts}), so it was left unchanged and the results were written to a "
                f"copy: {target.name}"
            )
    check_writable(target, office_profile=office_profile)
    plan = read_plan_from_book(book, src.name, src, data=data)
    result = wzq.analyse(plan)
    write_results(book, result, source=src.name, run_time=run_time, notes=notes, windows=windows)
    if plan.options.space_time if space_time is None else space_time:
        from wzq.workbook.pictures import add_space_time

        result.warnings.extend(add_space_time(book, result))
    save_atomic(book, target, office_profile=office_profile)
    return RunOutcome(result, target, notes, copied)


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

#: Where each value of a plan's JSON form (:func:`wzq.planio.plan_to_dict`, already
#: in the plan's unit system) is typed in the template: (section, key) -> defined
#: name, with the dropdown words for a choice.
_TYPED: dict[tuple[str, str], tuple[str, layout.Choices | None]] = {
    **{("meta", f.name.removeprefix("meta_")): (f.name, None) for f in layout.META_FIELDS},
    **{
        ("site", k): (f"site_{k}", None)
        for k in (
            "name",
            "direction",
            "lanes",
            "speed_limit",
            "work_zone_speed_limit",
            "free_flow_speed",
            "work_zone_length",
            "heavy_vehicle_percent",
            "lateral_clearance",
            "ramp_density",
            "jam_density",
        )
    },
    ("site", "terrain"): ("site_terrain", layout.TERRAIN_WORDS),
    ("site", "area_type"): ("site_area_type", layout.AREA_WORDS),
    ("site", "driver_population"): ("site_driver_population", layout.DRIVER_WORDS),
    ("site", "capacity_method"): ("site_capacity_method", layout.METHOD_WORDS),
    ("site", "base_capacity_pc_h_ln"): ("site_base_capacity", None),
    ("site", "capacity_drop_percent_work_zone"): ("site_capacity_drop_work_zone", None),
    ("site", "capacity_drop_percent_open"): ("site_capacity_drop_open", None),
    ("site", "work_intensity_pc_h_ln"): ("site_work_intensity", None),
    ("site", "ramp_adjustment_pc_h_ln"): ("site_ramp_adjustment", None),
    ("thresholds", "max_queue_length"): ("limit_queue_length", None),
    ("thresholds", "max_average_delay_min"): ("limit_average_delay", None),
    ("thresholds", "max_demand_capacity"): ("limit_demand_capacity", None),
    ("costs", "car_value_per_person_h"): ("cost_car_value", None),
    ("costs", "car_occupancy"): ("cost_car_occupancy", None),
    ("costs", "truck_value_per_veh_h"): ("cost_truck_value", None),
    ("costs", "truck_percent"): ("cost_truck_percent", None),
    ("costs", "currency"): ("cost_currency", None),
    ("costs", "dollar_year"): ("cost_dollar_year", None),
    ("options", "capacity_drop"): ("opt_capacity_drop", layout.YES_NO_WORDS),
    ("options", "diagram"): ("opt_diagram", layout.DIAGRAM_WORDS),
    ("options", "queue_length_method"): ("opt_queue_length_method", layout.QUEUE_METHOD_WORDS),
    ("options", "space_time"): ("site_space_time", layout.YES_NO_WORDS),
    ("options", "closure_windows"): ("opt_closure_windows", layout.YES_NO_WORDS),
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
    _named_cell(book, layout.UNIT_SYSTEM.name).value = layout.word_for(
        layout.UNIT_WORDS, data["units"]
    )
    _named_cell(book, layout.DEMAND_MODE.name).value = layout.word_for(
        layout.DEMAND_MODE_WORDS, layout.HOURLY
    )
    for (section, key), (name, words) in _TYPED.items():
        value = (data.get(section) or {}).get(key)
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
    for i, flow in enumerate(d.flows_veh_h):
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


#: File name of the demo workbook when ``wzq demo`` is given a folder.
DEMO_WORKBOOK = "wzq-demo-kestrel-ridge.xlsx"


def write_filled_workbook(
    plan: Plan, path: str | Path, *, macro: bool = False, run_time: str | None = None
) -> Result:
    """A fresh template with ``plan`` typed in and analysed, saved at ``path``.

    ``path`` ends in ``.xlsm`` when ``macro`` (the template with its VBA
    project) and ``.xlsx`` otherwise; an existing file is never overwritten.
    """
    from wzq.workbook.template import build_template  # xlsxwriter is imported on demand

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
        return run_workbook(blank, target, run_time=run_time)


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
    write_filled_workbook(cli.demo_plan(), target)
    return target


# --- the command --------------------------------------------------------------------------


def cmd_run(args: argparse.Namespace) -> int:
    """``wzq run PATH [-o OUT]``."""
    outcome = run_to(args.path, args.output, space_time=args.space_time, windows=args.windows)
    result = outcome.result
    for note in outcome.notes:
        print(f"warning: {note}")
    print(f"wrote the results to {outcome.target}")
    width = max(len(k) for k, _ in summary_lines(result))
    for label, text in summary_lines(result):
        print(f"  {label:<{width}}  {text}")
    for w in result.warnings:
        print(f"warning: {w}")
    print(f"\n{wzq.CAUTION}")  # one line, as in every other output
    return cli.EXIT_OK


def register(sub: argparse._SubParsersAction) -> None:
    """Add ``wzq run`` to the command's sub-commands."""
    sheets = ", ".join(layout.OUTPUT_SHEETS)
    p = sub.add_parser(
        "run",
        help="analyse a plan workbook and write the results into it",
        description=(
            "Read the plan from a workbook (.xlsx or .xlsm), analyse it, and write the "
            f"sheets {sheets} into it, replacing the ones from the previous run. Input "
            "sheets, your own sheets, formulas, styles and macros are kept. The file is "
            "replaced in one step, so it is never left half-written; when the input needs "
            "fixing nothing is written and every problem is listed with its sheet and cell."
        ),
        epilog=wzq.CAUTION,
    )
    p.add_argument("path", metavar="PATH", help="the plan workbook (.xlsx or .xlsm)")
    p.add_argument(
        "-o",
        "--output",
        metavar="OUT",
        help="write the workbook with its results to OUT and leave PATH as it is "
        "(same file type as PATH)",
    )
    p.add_argument(
        "--space-time",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="add (or leave out) the space-time picture of an LWR simulation of the "
        "approach on the Charts sheet (default: as the Site sheet says)",
    )
    p.add_argument(
        "--windows",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="fill (or leave empty) the Closure windows sheet: when may each lane "
        "configuration be in place at all (default: as the Limits sheet says)",
    )
    p.set_defaults(func=cmd_run)


if register not in cli.EXTRA_COMMANDS:
    cli.EXTRA_COMMANDS.append(register)
