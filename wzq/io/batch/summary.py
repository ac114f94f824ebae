"""The bulk summary: one row per plan, a sheet of problems, and the resume state.

:func:`plan_row` turns one analysed plan into a :class:`PlanRow` (display
rounding from :mod:`wzq.present.tables`, lengths in both miles and kilometres so that a
sheet of mixed-unit plans sorts on one column). :func:`write_summary` writes the
rows worst first into a workbook (sheets ``Plans``, ``Problems``, ``Run`` and a
hidden ``wzq_state``) and the same rows into a CSV beside it.

Text that came from a plan (site names, notes, file names, messages) is written
as text, never as a formula: in the workbook each such cell is given the string
type after assignment; in the CSV a field that starts with ``=``, ``+``, ``-``,
``@``, a tab, a carriage return or a null character gets a leading single quote
(OWASP, *CSV Injection*, owasp.org/www-community/attacks/CSV_Injection, and
OWASP ASVS 5.0 requirement 1.2.10, which lists the same characters).

Resume state (:func:`read_state`): the hidden sheet holds, per plan file, the
SHA-256 of the file's bytes as analysed (after the write-back when results were
written into the workbook), the wzq version, and the whole outcome as JSON. A
plan is skipped on ``--resume`` only when both the bytes and the version are
unchanged, so an edit of any kind (even a restyle) or a new wzq re-analyses it.
The bytes are hashed rather than the plan's values because that needs no
reading of the workbook at all.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import math
from collections.abc import Iterable, Sequence
from dataclasses import MISSING, asdict, dataclass, field, fields
from pathlib import Path
from typing import Any, Literal

import wzq
from wzq import units as u
from wzq.engine.problems import PlanError
from wzq.engine.results import Result
from wzq.engine.risk import plan_risk
from wzq.io.workbook.save import write_atomically
from wzq.present.tables import farthest_passed, rounded

__all__ = [
    "COLUMNS",
    "CSV_FORMULA_STARTS",
    "DATE_FORMAT",
    "HEADER_ROW",
    "LINE_HEIGHT",
    "MAX_LINES",
    "PLANS_SHEET",
    "PROBLEMS_SHEET",
    "PROBLEM_COLUMNS",
    "RUN_SHEET",
    "STAGE_WORDS",
    "STATE_FORMAT",
    "STATE_MARK",
    "STATE_SHEET",
    "STATUS_NO_LIMITS",
    "STATUS_OK",
    "STATUS_OVER",
    "Issue",
    "PlanRow",
    "RunInfo",
    "Stage",
    "StateEntry",
    "SummaryColumn",
    "csv_rows",
    "csv_text",
    "plan_row",
    "put",
    "read_state",
    "row_from_json",
    "row_height",
    "row_to_json",
    "worst_first",
    "write_csv",
    "write_summary",
]

PLANS_SHEET = "Plans"
PROBLEMS_SHEET = "Problems"
RUN_SHEET = "Run"
STATE_SHEET = "wzq_state"
#: First cell of the state sheet, so a foreign workbook is never taken for one of ours.
STATE_MARK = "wzq batch state"
STATE_FORMAT = 1
#: Header row of the Plans and Problems sheets (title and caution above it).
HEADER_ROW = 4

#: Where an issue arose: the plan could not be read, the results could not be
#: written into the workbook, the PDF could not be written, or an unexpected error.
Stage = Literal["input", "write-back", "report", "error"]
STAGE_WORDS: dict[str, str] = {
    "input": "input to fix",
    "write-back": "results not written back",
    "report": "report not written",
    "error": "unexpected error",
}

#: First characters that make a spreadsheet read a CSV field as a formula
#: (OWASP CSV Injection; OWASP ASVS 5.0 req. 1.2.10 adds the null character).
CSV_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r", "\0")
_CELL_LIMIT = 32_000  # spreadsheet cells hold at most 32,767 characters


@dataclass(frozen=True)
class Issue:
    """One problem with one plan file, for the Problems sheet."""

    file: str
    stage: Stage
    where: str
    message: str


@dataclass(frozen=True)
class PlanRow:
    """The summary of one analysed plan, rounded as shown (plan units and both mi and km)."""

    file: str
    title: str
    site: str
    direction: str
    closure_start: dt.datetime | None
    closure_end: dt.datetime | None
    closures: int
    lanes: int
    most_lanes_closed: int
    max_queue_mi: float
    max_queue_km: float
    plan_units: str
    max_queue_at: dt.datetime | None
    max_queue_veh: int
    total_delay_veh_h: float
    road_user_cost: float | None
    cost_basis: str
    hours_over_limit: int
    status: str
    warnings: str
    notes: str
    #: Unrounded longest queue (m): the sort key, not shown.
    max_queue_m: float = field(default=0.0, repr=False)
    #: The farthest landmark upstream the queue passed (``none``; blank: no landmarks).
    landmark_passed: str = ""
    #: With a count history or a capacity spread: the share of the scenarios in which
    #: some hour breaks a limit (:mod:`wzq.engine.risk`), percent; else blank.
    risk_any_percent: float | None = None


@dataclass(frozen=True)
class SummaryColumn:
    """One column of the Plans sheet and the CSV."""

    key: str
    header: str
    width: float
    number_format: str | None = None
    wrap: bool = False


DATE_FORMAT = "yyyy-mm-dd hh:mm"
COLUMNS: tuple[SummaryColumn, ...] = (
    SummaryColumn("file", "Plan file", 22, wrap=True),
    SummaryColumn("title", "Plan title", 28, wrap=True),
    SummaryColumn("site", "Site", 24, wrap=True),
    SummaryColumn("direction", "Direction", 11, wrap=True),
    SummaryColumn("closure_start", "First closure starts", 16, DATE_FORMAT),
    SummaryColumn("closure_end", "Last closure ends", 16, DATE_FORMAT),
    SummaryColumn("closures", "Closures", 8, "0"),
    SummaryColumn("lanes", "Lanes", 6, "0"),
    SummaryColumn("most_lanes_closed", "Most lanes closed", 8, "0"),
    SummaryColumn("max_queue_mi", "Longest queue (mi)", 9, "0.00"),
    SummaryColumn("max_queue_km", "Longest queue (km)", 9, "0.00"),
    SummaryColumn("plan_units", "Plan units", 6),
    SummaryColumn("max_queue_at", "Longest queue at", 16, DATE_FORMAT),
    SummaryColumn("max_queue_veh", "Longest queue (veh)", 9, "#,##0"),
    SummaryColumn("total_delay_veh_h", "Total delay (veh-h)", 10, "#,##0.0"),
    SummaryColumn("road_user_cost", "Road-user delay cost", 11, "#,##0"),
    SummaryColumn("cost_basis", "Cost basis", 9),
    SummaryColumn("hours_over_limit", "Hours over a limit", 8, "0"),
    SummaryColumn("landmark_passed", "Farthest landmark the queue passed", 18, wrap=True),
    SummaryColumn("risk_any_percent", "Chance some hour over a limit (%)", 10, "0.0"),
    SummaryColumn("status", "Status", 11),
    SummaryColumn("warnings", "Warnings", 36, wrap=True),
    SummaryColumn("notes", "Notes", 24, wrap=True),
)
PROBLEM_COLUMNS: tuple[SummaryColumn, ...] = (
    SummaryColumn("file", "Plan file", 26, wrap=True),
    SummaryColumn("stage", "Kind", 18),
    SummaryColumn("where", "Where", 22, wrap=True),
    SummaryColumn("message", "Problem and what to do", 90, wrap=True),
)

STATUS_OVER = "over limit"
STATUS_NO_LIMITS = "no limits set"
STATUS_OK = "ok"
_STATUS_RANK = {STATUS_OVER: 0, STATUS_NO_LIMITS: 1, STATUS_OK: 2}


def _minute(t: dt.datetime | None) -> dt.datetime | None:
    """A clock time rounded to the nearest minute (as the summary shows it)."""
    if t is None:
        return None
    t = dt.datetime(t.year, t.month, t.day, t.hour, t.minute) + dt.timedelta(
        minutes=1 if t.second * 1_000_000 + t.microsecond >= 30_000_000 else 0
    )
    return t


def plan_row(file: str, result: Result) -> PlanRow:
    """The summary row of one analysed plan (rounding as in :mod:`wzq.present.tables`)."""
    plan = result.plan
    s = result.summary
    site = plan.site
    closures = plan.closures
    th = plan.thresholds
    checked = any(
        v is not None
        for v in (
            th.max_queue_length,
            th.max_average_delay,
            th.max_demand_capacity,
            th.queue_must_not_pass,
        )
    )
    failing = len(s.hours_failing)
    status = STATUS_OVER if failing else (STATUS_OK if checked else STATUS_NO_LIMITS)
    cost: float | None = None
    basis = ""
    if s.total_cost is not None:  # blank values of time: the published defaults, as everywhere
        from wzq.engine.costs import plan_costs

        used = plan_costs(plan)
        cost = rounded(s.total_cost, 0)
        basis = f"{used.currency} {used.dollar_year}" + (
            " (published defaults)" if plan.costs is None else ""
        )
    return PlanRow(
        file=file,
        title=plan.meta.title,
        site=site.name,
        direction=site.direction,
        closure_start=min((c.start for c in closures), default=None),
        closure_end=max((c.end for c in closures), default=None),
        closures=len(closures),
        lanes=site.lanes,
        most_lanes_closed=max((c.lanes_closed for c in closures), default=0),
        max_queue_mi=rounded(u.m_to_long_length(s.max_queue_length_m, "us"), 2),
        max_queue_km=rounded(u.m_to_long_length(s.max_queue_length_m, "metric"), 2),
        plan_units=u.unit_label("long", site.unit_system),
        max_queue_at=_minute(s.max_queue_length_at),
        max_queue_veh=rounded(s.max_queue_veh, 0),
        total_delay_veh_h=rounded(s.total_delay_veh_h, 1),
        road_user_cost=cost,
        cost_basis=basis,
        hours_over_limit=failing,
        status=status,
        warnings="; ".join(result.warnings),
        notes=plan.meta.notes,
        max_queue_m=float(s.max_queue_length_m),
        landmark_passed=_landmark_passed(result),
        risk_any_percent=_risk_percent(result),
    )


def _landmark_passed(result: Result) -> str:
    """The farthest landmark the queue passed, by name; ``none``; blank without landmarks."""
    if not result.plan.approach.landmarks:
        return ""
    passed = farthest_passed(result)
    return "none" if passed is None else passed.landmark.name


def _risk_percent(result: Result) -> float | None:
    """The share of the plan's scenarios with some hour over a limit (percent, as shown),
    when the plan asks for a risk; ``None`` otherwise."""
    try:
        risk = plan_risk(result.plan)
    except PlanError:  # a plan the risk is not yet assessed for (its workbook says why)
        return None
    return None if risk is None else rounded(100 * risk.summary.p_any_hour, 1)


def worst_first(rows: Iterable[PlanRow]) -> list[PlanRow]:
    """Rows sorted worst first: over a limit, then unchecked, then ok; within each by
    hours over a limit, longest queue, total delay (all descending), then file name."""
    return sorted(
        rows,
        key=lambda r: (
            _STATUS_RANK.get(r.status, 3),
            -r.hours_over_limit,
            -r.max_queue_m,
            -r.total_delay_veh_h,
            r.file,
        ),
    )


# --- the resume state -----------------------------------------------------------------------


def row_to_json(row: PlanRow) -> dict[str, Any]:
    out = asdict(row)
    for k, v in out.items():
        if isinstance(v, dt.datetime):
            out[k] = v.isoformat()
    return out


def row_from_json(data: dict[str, Any]) -> PlanRow:
    kw: dict[str, Any] = {}
    for f in fields(PlanRow):
        if f.name not in data and f.default is not MISSING:  # a state written before it
            continue
        v = data[f.name]
        if f.name in ("closure_start", "closure_end", "max_queue_at") and v is not None:
            v = dt.datetime.fromisoformat(v)
        kw[f.name] = v
    return PlanRow(**kw)


@dataclass(frozen=True)
class StateEntry:
    """What the last summary knew about one plan file."""

    file: str
    sha256: str
    version: str
    written_back: bool
    report: str | None
    row: PlanRow | None
    issues: tuple[Issue, ...]


def _entry_json(e: StateEntry) -> str:
    return json.dumps(
        {
            "row": None if e.row is None else row_to_json(e.row),
            "issues": [[i.stage, i.where, i.message] for i in e.issues],
        },
        sort_keys=True,
        separators=(",", ":"),
    )


def read_state(path: Path, folder: Path) -> tuple[dict[str, StateEntry], str | None]:
    """The per-file state stored in a previous summary workbook.

    Returns the entries by file name and, when the state cannot be used, a note
    saying why (no summary yet, not a wzq summary, another folder).
    """
    if not path.exists():
        return {}, None
    from openpyxl import load_workbook

    from wzq.engine.plan import PlanError
    from wzq.io.workbook.safety import inspect_file

    try:
        inspect_file(path)  # the same pre-parse checks as every other workbook
        book = load_workbook(path, read_only=True, data_only=True)
    except PlanError as e:
        return {}, f"the previous summary {path.name} is refused ({e.problems[0].message})"
    except Exception as e:  # any unreadable file: analyse everything again
        return {}, f"the previous summary {path.name} cannot be read ({type(e).__name__})"
    try:
        if STATE_SHEET not in book.sheetnames:
            return {}, f"{path.name} holds no wzq batch state; every plan is analysed"
        rows = book[STATE_SHEET].iter_rows(values_only=True)
        head = next(rows, ())
        if not head or head[0] != STATE_MARK or head[1] != STATE_FORMAT:
            return {}, f"{path.name} holds no wzq batch state; every plan is analysed"
        if head[2] != str(folder.resolve()):
            return {}, (
                f"the previous summary {path.name} was written for another folder "
                f"({head[2]}); every plan is analysed"
            )
        next(rows, None)  # column headers
        out: dict[str, StateEntry] = {}
        for r in rows:
            if not r or r[0] is None:
                continue
            file, sha, version, written, report, record = (list(r) + [None] * 6)[:6]
            try:
                data = json.loads(record)
                row = None if data["row"] is None else row_from_json(data["row"])
                issues = tuple(Issue(file, s, w, m) for s, w, m in data["issues"])
            except (TypeError, ValueError, KeyError):
                continue  # a damaged entry: that plan is analysed again
            out[str(file)] = StateEntry(
                str(file), str(sha), str(version), bool(written), report or None, row, issues
            )
        return out, None
    finally:
        book.close()


# --- writing ---------------------------------------------------------------------------------


def csv_text(value: Any) -> Any:
    """A text field neutralised for CSV (OWASP CSV Injection: leading single quote)."""
    if isinstance(value, str) and value.startswith(CSV_FORMULA_STARTS):
        return "'" + value
    return value


def _csv_value(v: Any) -> Any:
    if v is None:
        return ""
    if isinstance(v, dt.datetime):
        return v.strftime("%Y-%m-%d %H:%M")
    return csv_text(v)


def csv_rows(rows: Sequence[PlanRow]) -> list[list[Any]]:
    """Header and rows of the CSV (keys as headers; text neutralised)."""
    out: list[list[Any]] = [[c.key for c in COLUMNS]]
    for r in rows:
        out.append([_csv_value(getattr(r, c.key)) for c in COLUMNS])
    return out


def put(ws: Any, row: int, col: int, value: Any) -> Any:
    """Write a value; a string always as text, never a formula (the writer's rule)."""
    from wzq.io.workbook.writer import put_text

    return put_text(ws, row, col, value)


def write_csv(rows: Sequence[PlanRow], target: Path) -> None:
    """The rows as CSV (UTF-8 with a byte-order mark so spreadsheets read accents)."""
    buf = io.StringIO(newline="")
    csv.writer(buf).writerows(csv_rows(rows))
    data = buf.getvalue().encode("utf-8-sig")
    write_atomically(target, data)


@dataclass(frozen=True)
class RunInfo:
    """About the run, for the Run sheet."""

    folder: str
    written_at: str
    runner: str
    plans: int
    analysed: int
    #: Of the analysed plans, those whose results were kept from the last summary.
    reused: int
    not_analysed: int
    seconds: float
    #: Of the plans not analysed, those unchanged since the last summary.
    reused_not_analysed: int = 0
    #: What the run left out or noticed (also printed on the terminal).
    notes: tuple[str, ...] = ()


#: Points per line of wrapped text (11-point font), and the most lines a row shows.
LINE_HEIGHT = 15.0
MAX_LINES = 12


def row_height(columns: Sequence[SummaryColumn], values: Sequence[Any]) -> float:
    """A row height that shows the wrapped text (spreadsheet programs do not all
    grow a row for wrapped text on their own): about ``width`` characters a line."""
    lines = 1
    for c, v in zip(columns, values, strict=True):
        if c.wrap and isinstance(v, str) and v:
            per_line = max(int(c.width * 1.1), 1)
            n = sum(max(math.ceil(len(part) / per_line), 1) for part in v.split("\n"))
            lines = max(lines, n)
    return LINE_HEIGHT * min(lines, MAX_LINES)


def _table_sheet(
    ws: Any,
    title: str,
    columns: Sequence[SummaryColumn],
    values: Sequence[Sequence[Any]],
) -> None:
    from openpyxl.styles import Alignment, Font, PatternFill
    from openpyxl.utils import get_column_letter

    head_fill = PatternFill("solid", fgColor="2E4A3F")
    head_font = Font(bold=True, color="FFFFFF")
    put(ws, 1, 1, title).font = Font(bold=True, size=13)
    put(ws, 2, 1, wzq.CAUTION).font = Font(italic=True, color="7A3B12")
    for j, c in enumerate(columns, start=1):
        cell = put(ws, HEADER_ROW, j, c.header)
        cell.font = head_font
        cell.fill = head_fill
        cell.alignment = Alignment(wrap_text=True, vertical="center")
        ws.column_dimensions[get_column_letter(j)].width = c.width
    ws.row_dimensions[HEADER_ROW].height = 45
    wrap = Alignment(wrap_text=True, vertical="top")
    top = Alignment(vertical="top")
    for i, vals in enumerate(values, start=HEADER_ROW + 1):
        for j, (c, v) in enumerate(zip(columns, vals, strict=True), start=1):
            cell = put(ws, i, j, v)
            cell.alignment = wrap if c.wrap else top
            if c.number_format and v is not None:
                cell.number_format = c.number_format
        ws.row_dimensions[i].height = row_height(columns, vals)
    last_col = get_column_letter(len(columns))
    last_row = HEADER_ROW + max(len(values), 1)
    ws.auto_filter.ref = f"A{HEADER_ROW}:{last_col}{last_row}"
    ws.freeze_panes = f"B{HEADER_ROW + 1}"
    ws.print_title_rows = f"{HEADER_ROW}:{HEADER_ROW}"
    ws.print_area = f"A1:{last_col}{last_row}"
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.oddFooter.left.text = wzq.CAUTION
    ws.oddFooter.left.size = 7
    ws.oddFooter.right.text = "Page &P of &N"


def write_summary(
    target: Path,
    rows: Sequence[PlanRow],
    issues: Sequence[Issue],
    state: Sequence[StateEntry],
    info: RunInfo,
) -> Path:
    """Write the summary workbook (atomically) and the CSV beside it; returns the CSV path.

    ``rows`` are written in the order given (callers pass :func:`worst_first`).
    """
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font

    book = Workbook()
    ws = book.active
    ws.title = PLANS_SHEET
    n = len(rows)
    _table_sheet(
        ws,
        f"Lane-closure plans analysed in bulk: {n} plan{'s' if n != 1 else ''}, worst first",
        COLUMNS,
        [[getattr(r, c.key) for c in COLUMNS] for r in rows],
    )
    files = len({i.file for i in issues})
    _table_sheet(
        book.create_sheet(PROBLEMS_SHEET),
        f"Problems: {len(issues)} in {files} file{'s' if files != 1 else ''}",
        PROBLEM_COLUMNS,
        [[i.file, STAGE_WORDS[i.stage], i.where, i.message] for i in issues],
    )
    run = book.create_sheet(RUN_SHEET)
    put(run, 1, 1, "Bulk run").font = Font(bold=True, size=13)
    lines: list[tuple[str, Any]] = [
        ("Tool", f"wzq {wzq.__version__}"),
        ("Folder", info.folder),
        ("Written at (UTC)", info.written_at),
        ("Run on", info.runner),
        ("Plan files", info.plans),
        ("Analysed", info.analysed),
        ("of which unchanged since the last summary (results kept)", info.reused),
        ("Not analysed (sheet Problems)", info.not_analysed),
        ("of which unchanged since the last summary", info.reused_not_analysed),
        ("Seconds", round(info.seconds, 1)),
        (
            "Resume fingerprint",
            "SHA-256 of each plan file's bytes (after write-back when results were written "
            "into it) and the wzq version, kept in the hidden sheet "
            f"{STATE_SHEET}; --resume skips a plan only when both are unchanged.",
        ),
        *(("Note", note) for note in info.notes),
    ]
    for i, (label, value) in enumerate(lines, start=3):
        put(run, i, 1, label).font = Font(bold=True)
        put(run, i, 2, value)
    put(run, len(lines) + 4, 1, wzq.CAUTION).font = Font(italic=True, color="7A3B12")
    run.column_dimensions["A"].width = 40
    run.column_dimensions["B"].width = 90
    for row in run.iter_rows(min_row=3, min_col=2, max_col=2):
        row[0].alignment = Alignment(wrap_text=True, horizontal="left", vertical="top")
    run.page_setup.orientation = "landscape"
    run.page_setup.fitToWidth = 1
    run.page_setup.fitToHeight = 0
    run.sheet_properties.pageSetUpPr.fitToPage = True

    st = book.create_sheet(STATE_SHEET)
    st.sheet_state = "hidden"
    put(st, 1, 1, STATE_MARK)
    st.cell(1, 2, STATE_FORMAT)
    put(st, 1, 3, info.folder)
    for j, h in enumerate(("file", "sha256", "wzq_version", "written_back", "report", "record")):
        put(st, 2, j + 1, h)
    for i, e in enumerate(state, start=3):
        put(st, i, 1, e.file)
        put(st, i, 2, e.sha256)
        put(st, i, 3, e.version)
        st.cell(i, 4, e.written_back)
        put(st, i, 5, e.report or "")
        record = _entry_json(e)
        # an over-long record is not kept: that plan is simply analysed again next time
        put(st, i, 6, record if len(record) <= _CELL_LIMIT else "")
    book.active = 0
    write_atomically(target, book.save)
    csv_path = target.with_suffix(".csv")
    write_csv(rows, csv_path)
    return csv_path
