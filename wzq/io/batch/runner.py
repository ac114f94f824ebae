"""Bulk runs: every closure plan in a folder, analysed in parallel, one summary.

:func:`run_batch` finds the plans (``.xlsx``, ``.xlsm`` and ``.json``; Excel's
lock files ``~$*``, hidden files, wzq's own temporary files and any wzq bulk
summary are skipped), analyses each in a worker with :func:`analyse_file`, and
writes the summary workbook and CSV (:mod:`wzq.io.batch.summary`). It never prints;
progress is reported through a callback.

Where the work runs:

* **local processes** (default): :class:`concurrent.futures.ProcessPoolExecutor`
  with one worker per core. At most one plan per worker is in flight, so when
  a worker dies (out of memory, a crash in a library) the plans that were
  running are known exactly: they are retried one at a time in a rebuilt pool,
  and a plan whose lone worker dies more than ``retries`` times is listed as
  not analysed while every other plan carries on.
* **a Dask distributed cluster** (``scheduler="tcp://host:port"``, the optional
  extra ``pip install wzq[cluster]``): the same job is submitted with
  ``retries=``; the scheduler itself re-runs work lost with a dead worker. The
  workers must see the plan files at the same paths (a shared file system) and
  run the same wzq version (checked before any work is sent).

A plan that cannot be read never stops the others: its problems (sheet and
cell) go to the Problems sheet and the file is left byte-identical. With
``write_back`` the results are also written into each workbook by the same
code as ``wzq run`` (:func:`wzq.io.workbook.run.run_workbook`).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import multiprocessing
import os
import platform
import re
import sys
import threading
import time
import uuid
from collections import Counter, deque
from collections.abc import Callable, Iterable, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from pathlib import Path

import wzq
from wzq.engine.plan import PlanError, Problem
from wzq.engine.results import Result
from wzq.io.batch.summary import (
    STATE_SHEET,
    Issue,
    PlanRow,
    RunInfo,
    StateEntry,
    plan_row,
    read_state,
    worst_first,
    write_summary,
)

#: File types read as plans.
PLAN_SUFFIXES = (".xlsx", ".xlsm", ".json")
WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")
#: Spreadsheets wzq cannot read: listed as plans not analysed (save as .xlsx), never skipped.
UNREAD_SUFFIXES = (".ods", ".fods", ".xls", ".xlsb", ".numbers")
#: The copy ``wzq run`` writes beside a workbook it cannot keep: ``plan (wzq results).xlsx``.
_RESULTS_COPY = re.compile(r"^(?P<stem>.+) \(wzq results(?: \d+)?\)(?P<suffix>\.xls[xm])$", re.I)
#: The summary's file name when none is given (written inside the folder).
DEFAULT_SUMMARY = "batch-summary.xlsx"
#: Times a plan is tried again after its worker died (local pool) or failed (Dask).
DEFAULT_RETRIES = 2
#: Plans handed to each local worker at a time: the one it runs and the next.
IN_FLIGHT_PER_WORKER = 2
#: How long to wait for a Dask scheduler to answer.
SCHEDULER_TIMEOUT = "10s"


@dataclass(frozen=True)
class Task:
    """One plan file to analyse (picklable: it travels to the worker)."""

    path: str  # absolute
    file: str  # relative to the folder, with forward slashes (the summary's key)
    write_back: bool = False
    report: str | None = None  # absolute path of the PDF to write, or None
    paper: str = "letter"


@dataclass(frozen=True)
class Outcome:
    """What became of one plan file."""

    file: str
    sha256: str
    version: str
    row: PlanRow | None
    issues: tuple[Issue, ...] = ()
    written_back: bool = False
    report: str | None = None
    seconds: float = 0.0
    reused: bool = False

    @property
    def analysed(self) -> bool:
        return self.row is not None

    @property
    def unexpected(self) -> bool:
        return any(i.stage == "error" for i in self.issues)

    def state(self) -> StateEntry:
        return StateEntry(
            self.file,
            self.sha256,
            self.version,
            self.written_back,
            self.report,
            self.row,
            self.issues,
        )


Job = Callable[[Task], Outcome]
Progress = Callable[[Outcome], None]


# --- one plan ------------------------------------------------------------------------------


def _sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _issues(file: str, stage: str, problems: Iterable[Problem]) -> tuple[Issue, ...]:
    return tuple(Issue(file, stage, p.where, p.message) for p in problems)  # type: ignore[arg-type]


def _load(path: Path):
    from wzq.io.plans import load_any

    return load_any(path)


def _write_back(task: Task, path: Path) -> tuple[Result, bool, tuple[Issue, ...]]:
    """Results into the workbook as ``wzq run`` writes them; a plan that can be read but
    not written still gives its row, with the write-back problems listed."""
    from wzq.io.workbook.run import run_workbook

    try:
        # never leave "(wzq results)" copies in the folder: a later bulk run would
        # take them for plans; a workbook that cannot be kept is listed instead
        return run_workbook(path, unkept="refuse"), True, ()
    except PlanError as e:
        written = e.problems
    result = wzq.analyse(_load(path))  # the plan itself is fine: its problems were the writing
    return result, False, _issues(task.file, "write-back", written)


def analyse_file(task: Task) -> Outcome:
    """Read, analyse and summarise one plan file (the job each worker runs).

    Never raises for a bad plan: problems come back in the outcome. The SHA-256
    is of the bytes as read (after the write-back when results were written).
    """
    t0 = time.perf_counter()
    path = Path(task.path)
    version = wzq.__version__
    try:
        data = path.read_bytes()
    except OSError as e:
        problem = Problem(task.file, f"cannot read the file ({e.strerror or e}); check it exists")
        return Outcome(
            task.file, "", version, None, _issues(task.file, "input", [problem]), seconds=0.0
        )
    sha = _sha256(data)
    issues: tuple[Issue, ...] = ()
    written = False
    try:
        if task.write_back and path.suffix.lower() in WORKBOOK_SUFFIXES:
            result, written, issues = _write_back(task, path)
            if written:
                sha = _sha256(path.read_bytes())
        else:
            result = wzq.analyse(_load(path))
        row = plan_row(task.file, result)
    except PlanError as e:
        return Outcome(
            task.file,
            sha,
            version,
            None,
            _issues(task.file, "input", e.problems),
            seconds=time.perf_counter() - t0,
        )
    except Exception as e:  # a bug, not the user's input: keep going, say so
        problem = Problem(
            task.file, f"unexpected error ({type(e).__name__}: {e}); please report it"
        )
        return Outcome(
            task.file,
            sha,
            version,
            None,
            _issues(task.file, "error", [problem]),
            seconds=time.perf_counter() - t0,
        )
    report = None
    if task.report:
        try:
            from wzq.io.report import write_report

            report = str(write_report(result, task.report, task.paper, source=task.file))
        except PlanError as e:
            issues += _issues(task.file, "report", e.problems)
        except Exception as e:
            problem = Problem(task.file, f"the PDF report failed ({type(e).__name__}: {e})")
            issues += _issues(task.file, "report", [problem])
    return Outcome(task.file, sha, version, row, issues, written, report, time.perf_counter() - t0)


def _lost(task: Task, why: str) -> Outcome:
    """The outcome of a plan whose worker never returned."""
    problem = Problem(task.file, why)
    return Outcome(task.file, "", wzq.__version__, None, _issues(task.file, "error", [problem]))


# --- finding the plans ---------------------------------------------------------------------


def is_batch_summary(path: Path) -> bool:
    """Whether a workbook is a wzq bulk summary (it has the hidden state sheet).

    The file passes the checks that need no unpacking first (size, parts, the
    sizes and compression ratios its directory declares), and only a small
    workbook part is read, so a zip bomb is never inflated here; a file that
    fails them is no summary, and its worker refuses it with the reason.
    """
    from wzq.io.workbook.safety import read_part_checked

    try:
        part = read_part_checked(path, "xl/workbook.xml")
    except PlanError:
        return False
    return part is not None and f'name="{STATE_SHEET}"'.encode() in part


def results_copy_of(path: Path) -> Path | None:
    """The workbook ``path`` is the results copy of (``plan (wzq results).xlsx`` beside
    ``plan.xlsx``), when that workbook is there; else ``None``."""
    m = _RESULTS_COPY.match(path.name)
    if m is None:
        return None
    original = path.with_name(m.group("stem") + m.group("suffix"))
    return original if original.is_file() else None


def find_plans(
    folder: Path,
    *,
    recursive: bool = False,
    exclude: Iterable[Path] = (),
    skipped: list[str] | None = None,
) -> list[Path]:
    """Plan files in ``folder`` (and below it when ``recursive``), sorted by relative path;
    without ``recursive``, the plan files in sub-folders are named in ``skipped``.

    Skipped: lock files of open workbooks (``~$*``), hidden and temporary files
    (``.*``, which includes wzq's own ``.wzq-*`` files while they are written),
    files in hidden folders, the paths in ``exclude``, any wzq bulk summary and
    the results copy ``wzq run`` wrote beside a plan (``plan (wzq results).xlsx``;
    said in ``skipped``). Spreadsheets wzq cannot read (:data:`UNREAD_SUFFIXES`)
    are listed, so that each is reported as a plan not analysed.
    """
    skip = {p.resolve() for p in exclude}
    pattern = "**/*" if recursive else "*"
    out = []
    for p in folder.glob(pattern):
        rel = p.relative_to(folder)
        if any(part.startswith((".", "~$")) for part in rel.parts):
            continue
        suffix = p.suffix.lower()
        if suffix not in PLAN_SUFFIXES + UNREAD_SUFFIXES or not p.is_file():
            continue
        if p.resolve() in skip:
            continue
        if suffix == ".xlsx" and is_batch_summary(p):
            continue
        original = results_copy_of(p)
        if original is not None:
            if skipped is not None:
                skipped.append(
                    f"{rel.as_posix()} skipped: it is the results copy of {original.name}, "
                    "not a plan of its own"
                )
            continue
        out.append(p)
    if not recursive and skipped is not None:
        below = sorted(
            p.relative_to(folder).as_posix()
            for p in find_plans(folder, recursive=True, exclude=exclude)
            if p.parent != folder
        )
        if below:
            shown = ", ".join(below[:5]) + (f" and {len(below) - 5} more" if len(below) > 5 else "")
            n = len(below)
            skipped.append(
                f"{n} plan file{'s' if n != 1 else ''} in sub-folders not read: {shown}; "
                "--recursive reads them"
            )
    return sorted(out, key=lambda p: p.relative_to(folder).as_posix())


# --- where the work runs -------------------------------------------------------------------


def default_workers() -> int:
    """One worker per core this process may use."""
    try:
        return max(len(os.sched_getaffinity(0)), 1)
    except AttributeError:  # not on Linux
        return max(os.cpu_count() or 1, 1)


def _pool_context() -> multiprocessing.context.BaseContext:
    """How worker processes start.

    ``fork`` (instant: the workers inherit the imported modules) only where it
    is safe: on Linux and when this process runs a single thread, since a
    forked child inherits any lock another thread holds. Otherwise
    ``forkserver`` (a clean parent with wzq preloaded), else ``spawn``.
    """
    methods = multiprocessing.get_all_start_methods()
    if "fork" in methods and sys.platform.startswith("linux") and threading.active_count() == 1:
        return multiprocessing.get_context("fork")
    if "forkserver" in methods:
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(["wzq.io.batch.runner", "wzq.io.workbook.reader"])
        return ctx
    return multiprocessing.get_context("spawn")


def run_local(
    tasks: Sequence[Task],
    workers: int,
    emit: Progress,
    job: Job = analyse_file,
    retries: int = DEFAULT_RETRIES,
) -> None:
    """Run ``job`` over ``tasks`` in local worker processes, calling ``emit`` per outcome.

    At most :data:`IN_FLIGHT_PER_WORKER` plans per worker are in flight (one
    running, one waiting in the pipe so no worker idles), so a broken pool
    names the few plans that may have killed it. Those are retried alone (one
    in flight) in a rebuilt pool; a plan whose worker dies while it runs alone
    more than ``retries`` times is given up with an unexpected-error outcome.
    """
    if not tasks:
        return
    workers = max(1, min(workers, len(tasks)))
    ctx = _pool_context()
    queue: deque[Task] = deque(tasks)
    solo: deque[Task] = deque()  # plans that were running when a worker died
    deaths: Counter[str] = Counter()
    pool = ProcessPoolExecutor(max_workers=workers, mp_context=ctx)
    inflight: dict[Future, tuple[Task, bool]] = {}
    finished = 0  # plans a worker returned
    breaks = 0  # pools broken
    try:
        while queue or solo or inflight:
            if not finished and len(deaths) >= 2:
                # two plans killed their lone worker and none ever came back: the workers
                # cannot run at all, so do not try every plan in turn
                why = (
                    f"the worker processes stopped {breaks} times before finishing any plan, so "
                    "none was analysed; please report it"
                )
                for t in [*solo, *queue]:
                    emit(_lost(t, why))
                return
            if solo:
                if not inflight:
                    t = solo.popleft()
                    inflight[pool.submit(job, t)] = (t, True)
            else:
                while queue and len(inflight) < IN_FLIGHT_PER_WORKER * workers:
                    t = queue.popleft()
                    inflight[pool.submit(job, t)] = (t, False)
            done, _ = wait(inflight, return_when=FIRST_COMPLETED)
            broken = False
            for f in done:
                t, alone = inflight.pop(f)
                try:
                    emit(f.result())
                    finished += 1
                except BrokenProcessPool:
                    broken = True
                    if not alone:
                        solo.append(t)
                        continue
                    deaths[t.file] += 1
                    if deaths[t.file] > retries:
                        emit(
                            _lost(
                                t,
                                f"the worker process analysing this plan stopped "
                                f"{deaths[t.file]} times (out of memory or a crash); it was "
                                "left out and the other plans carried on; please report it",
                            )
                        )
                    else:
                        solo.appendleft(t)
                except Exception as e:  # e.g. the outcome could not be sent back
                    emit(_lost(t, f"unexpected error ({type(e).__name__}: {e}); please report it"))
            if broken:
                # every plan still in flight failed with the pool: collect them too
                for f in list(inflight):
                    t, alone = inflight.pop(f)
                    try:
                        emit(f.result())
                        finished += 1
                    except BrokenProcessPool:
                        solo.append(t)
                    except Exception as e:
                        emit(_lost(t, f"unexpected error ({type(e).__name__}: {e})"))
                breaks += 1
                solo = deque(sorted(solo, key=lambda t: t.file))  # a reproducible order
                pool.shutdown(wait=True, cancel_futures=True)
                pool = ProcessPoolExecutor(max_workers=workers, mp_context=ctx)
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _worker_version() -> str:
    return wzq.__version__


def run_dask(
    tasks: Sequence[Task],
    scheduler: str,
    emit: Progress,
    job: Job = analyse_file,
    retries: int = DEFAULT_RETRIES,
) -> None:
    """Run ``job`` over ``tasks`` on the Dask distributed cluster at ``scheduler``."""
    where = f"--scheduler {scheduler}"
    try:
        from distributed import Client, as_completed
    except ImportError:
        raise PlanError(
            [
                Problem(
                    where,
                    "Dask distributed is not installed; install the optional extra with "
                    "pip install 'wzq[cluster]' (or run without --scheduler)",
                )
            ]
        ) from None
    try:
        client = Client(scheduler, timeout=SCHEDULER_TIMEOUT, set_as_default=False)
    except (OSError, TimeoutError, ValueError) as e:
        raise PlanError(
            [
                Problem(
                    where,
                    f"cannot reach the Dask scheduler ({type(e).__name__}); check the address "
                    "(tcp://HOST:PORT) and that the scheduler is running",
                )
            ]
        ) from None
    with client:
        versions = client.run(_worker_version)
        if not versions:
            raise PlanError([Problem(where, "the cluster has no workers; start some first")])
        wrong = sorted(f"{w} has wzq {v}" for w, v in versions.items() if v != wzq.__version__)
        if wrong:
            raise PlanError(
                [
                    Problem(
                        where,
                        f"the workers must run wzq {wzq.__version__} like this computer: "
                        + "; ".join(wrong),
                    )
                ]
            )
        if not tasks:
            return
        run_id = uuid.uuid4().hex[:12]
        futures = {
            client.submit(job, t, retries=retries, pure=False, key=f"wzq-batch-{run_id}-{i}"): t
            for i, t in enumerate(tasks)
        }
        for f in as_completed(list(futures), loop=client.loop):
            t = futures[f]
            try:
                emit(f.result())
            except Exception as e:  # e.g. KilledWorker: the plan's workers kept dying
                emit(
                    _lost(
                        t,
                        f"the cluster could not analyse this plan ({type(e).__name__}: {e}); "
                        "the other plans carried on",
                    )
                )
            f.release()


# --- the whole run -------------------------------------------------------------------------


@dataclass
class BatchResult:
    """What a bulk run did: one outcome per plan file, where the summary went."""

    folder: Path
    outcomes: list[Outcome]
    summary: Path
    csv: Path
    seconds: float
    notes: list[str]

    @property
    def rows(self) -> list[PlanRow]:
        """Summary rows, worst first."""
        return worst_first(o.row for o in self.outcomes if o.row is not None)

    @property
    def issues(self) -> list[Issue]:
        return [i for o in sorted(self.outcomes, key=lambda o: o.file) for i in o.issues]

    @property
    def not_analysed(self) -> list[Outcome]:
        return [o for o in self.outcomes if not o.analysed]

    @property
    def reused(self) -> int:
        return sum(o.reused for o in self.outcomes)

    @property
    def unexpected(self) -> bool:
        """Some plan met an unexpected error, or its worker kept dying."""
        return any(o.unexpected for o in self.outcomes)

    @property
    def need_fixing(self) -> bool:
        """Some plans need fixing (all listed with their problems)."""
        return any(o.issues for o in self.outcomes)


def _report_paths(folder: Path, files: Sequence[Path], reports: Path) -> list[Path]:
    """Where each plan's PDF goes: the same relative place under ``reports``, named as
    ``wzq report`` names it (``name_report.pdf``; ``name_xlsx_report.pdf`` when two
    plans in one folder share a name)."""
    stems = Counter((p.parent, p.stem.lower()) for p in files)
    out = []
    for p in files:
        rel = p.relative_to(folder)
        name = p.stem
        if stems[(p.parent, p.stem.lower())] > 1:
            name += "_" + p.suffix[1:].lower()
        out.append(reports / rel.parent / f"{name}_report.pdf")
    return out


def _check_output(summary: Path) -> None:
    from wzq.io.workbook.save import check_writable

    if summary.suffix.lower() != ".xlsx":
        raise PlanError(
            [
                Problem(
                    f"-o {summary}",
                    f"the summary is an .xlsx workbook; use -o {summary.stem}.xlsx",
                )
            ]
        )
    check_writable(summary)
    csv_path = summary.with_suffix(".csv")
    if csv_path.exists() and not os.access(csv_path, os.W_OK):
        raise PlanError(
            [Problem(str(csv_path), "the CSV beside the summary is read-only; make it writable")]
        )


def _reusable(entry: StateEntry | None, sha: str, task: Task) -> bool:
    if entry is None or entry.sha256 != sha or entry.version != wzq.__version__:
        return False
    if any(i.stage in ("error", "write-back", "report") for i in entry.issues):
        return False  # these may pass on another try
    if task.write_back and entry.row is not None and not entry.written_back:
        suffix = Path(task.path).suffix.lower()
        if suffix in WORKBOOK_SUFFIXES:
            return False
    if task.report and entry.row is not None:
        return entry.report is not None and Path(entry.report).exists()
    return True


def _copies(outcomes: Sequence[Outcome]) -> list[str]:
    """Plan files that are the same file byte for byte (a copy made in the file manager):
    each is a row of the summary, so the same plan would be counted twice."""
    same: dict[str, list[str]] = {}
    for o in outcomes:
        if o.sha256:
            same.setdefault(o.sha256, []).append(o.file)
    return [
        f"{', '.join(files)} are the same file, byte for byte, and each is a row of the "
        "summary; delete a copy that is not a plan of its own"
        for files in same.values()
        if len(files) > 1
    ]


def run_batch(
    folder: str | os.PathLike[str],
    *,
    summary: str | os.PathLike[str] | None = None,
    write_back: bool = False,
    workers: int | None = None,
    scheduler: str | None = None,
    recursive: bool = False,
    resume: bool = False,
    reports: str | os.PathLike[str] | None = None,
    paper: str = "letter",
    retries: int = DEFAULT_RETRIES,
    progress: Progress | None = None,
    on_start: Callable[[int], None] | None = None,
    job: Job = analyse_file,
) -> BatchResult:
    """Analyse every plan in ``folder`` and write the summary workbook and CSV.

    ``summary`` defaults to ``FOLDER/batch-summary.xlsx``; the CSV goes beside
    it. ``workers`` local processes (default one per core) unless ``scheduler``
    names a Dask scheduler. ``resume`` reuses the outcome of every plan whose
    file bytes and wzq version are unchanged since that summary was written.
    ``reports`` is a folder for one PDF per plan. ``progress`` is called once
    per plan as its outcome arrives; ``on_start`` once with the number of plans.
    ``job`` is the per-file function (replaceable for tests).

    Raises :class:`PlanError` only for problems with the run itself (no such
    folder, summary not writable, cluster unreachable); problems with single
    plans are in the result.
    """
    t0 = time.perf_counter()
    folder = Path(folder)
    if not folder.is_dir():
        raise PlanError([Problem(str(folder), "no such folder; give the folder holding the plans")])
    target = Path(summary) if summary is not None else folder / DEFAULT_SUMMARY
    _check_output(target)
    notes: list[str] = []
    files = find_plans(
        folder,
        recursive=recursive,
        exclude=(target, target.with_suffix(".csv")),
        skipped=notes,
    )
    if not files:
        notes.append(
            f"no plan files (.xlsx, .xlsm, .json) in {folder}"
            + ("" if recursive else "; --recursive also reads sub-folders")
        )
    report_paths: list[Path | None] = [None] * len(files)
    if reports is not None:
        report_paths = list(_report_paths(folder, files, Path(reports)))
        for p in {q.parent for q in report_paths if q is not None}:
            p.mkdir(parents=True, exist_ok=True)
    tasks = [
        Task(
            str(p.resolve()),
            p.relative_to(folder).as_posix(),
            write_back,
            None if r is None else str(r.resolve()),
            paper,
        )
        for p, r in zip(files, report_paths, strict=True)
    ]
    if on_start is not None:
        on_start(len(tasks))
    outcomes: list[Outcome] = []

    def emit(o: Outcome) -> None:
        outcomes.append(o)
        if progress is not None:
            progress(o)

    todo = tasks
    if resume:
        state, note = read_state(target, folder)
        if note:
            notes.append(note)
        todo = []
        for t in tasks:
            entry = state.get(t.file)
            try:
                sha = _sha256(Path(t.path).read_bytes()) if entry is not None else ""
            except OSError:
                sha = ""
            if entry is not None and sha and _reusable(entry, sha, t):
                emit(
                    Outcome(
                        entry.file,
                        entry.sha256,
                        entry.version,
                        entry.row,
                        entry.issues,
                        entry.written_back,
                        entry.report,
                        reused=True,
                    )
                )
            else:
                todo.append(t)
    if scheduler:
        run_dask(todo, scheduler, emit, job, retries)
        runner = f"Dask cluster at {scheduler}"
    else:
        n = workers or default_workers()
        run_local(todo, n, emit, job, retries)
        runner = f"{n} local worker process{'es' if n != 1 else ''} on {platform.node()}"

    outcomes.sort(key=lambda o: o.file)
    notes += _copies(outcomes)
    result = BatchResult(folder, outcomes, target, target.with_suffix(".csv"), 0.0, notes)
    seconds = time.perf_counter() - t0
    info = RunInfo(
        folder=str(folder.resolve()),
        written_at=dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        runner=runner,
        plans=len(outcomes),
        analysed=sum(o.analysed for o in outcomes),
        reused=sum(o.reused and o.analysed for o in outcomes),
        not_analysed=len(result.not_analysed),
        seconds=seconds,
        reused_not_analysed=sum(o.reused and not o.analysed for o in outcomes),
        notes=tuple(notes),
    )
    write_summary(target, result.rows, result.issues, [o.state() for o in outcomes], info)
    result.seconds = time.perf_counter() - t0
    return result


__all__ = [
    "DEFAULT_SUMMARY",
    "BatchResult",
    "Outcome",
    "Task",
    "analyse_file",
    "find_plans",
    "is_batch_summary",
    "run_batch",
    "run_dask",
    "run_local",
]
