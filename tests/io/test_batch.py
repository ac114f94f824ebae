"""Bulk runs (`wzq batch`): a folder of plans, parallel workers, Dask, resume, summary.

The plans are invented (variants of the shipped Kestrel Ridge and Fenwick Downs
examples, and hand-worked queue cases); part of every folder is workbooks made
from the template as a user would fill it in (tests/workbook_helpers.py).
"""

from __future__ import annotations

import csv
import dataclasses
import datetime as dt
import hashlib
import io
import json
import os
import re
import shutil
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from workbook_helpers import fill_template, set_named, table_cell

import wzq
from wzq.cli import main
from wzq.cli.batch import batch_status
from wzq.engine.plan import Closure, Costs, Demand, Plan, Site, Thresholds
from wzq.io.batch import runner as batch
from wzq.io.batch.runner import Outcome, Task, analyse_file, find_plans, run_batch
from wzq.io.batch.summary import (
    COLUMNS,
    HEADER_ROW,
    PLANS_SHEET,
    PROBLEMS_SHEET,
    STATE_SHEET,
    csv_text,
)
from wzq.io.jsonplan import load_plan, save_plan
from wzq.io.workbook import layout
from wzq.units import MPH

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"
FENWICK = EXAMPLES / "fenwick_downs_weekend.json"
MILE_KM = 1.609344  # km per international mile, exact (NIST SP 811, 2008, App. B)


# --- invented plans --------------------------------------------------------------------------


def variant(k: int) -> Plan:
    """Invented plan number ``k``: an example with scaled demand and its own site name."""
    base = load_plan(KESTREL if k % 2 == 0 else FENWICK)
    scale = 0.75 + 0.012 * k
    return dataclasses.replace(
        base,
        site=dataclasses.replace(base.site, name=f"{base.site.name}, segment {k:02d}"),
        demand=dataclasses.replace(base.demand, flows_veh_h=base.demand.flows_veh_h * scale),
    )


#: Values of time for the hand-worked plans: 20 per person-hour x 1.5 persons for
#: cars, 40 per truck-hour, 10 % trucks -> 0.9 x 30 + 0.1 x 40 = 31 per veh-h.
HAND_COSTS = Costs(20.0, 1.5, 40.0, truck_share=0.10, currency="USD", dollar_year=2027)


def hand_plan(name: str, demand: float, *, limits: bool = True, system: str = "us") -> Plan:
    """Two lanes, one closed for four hours with a typed capacity of 1,000 veh/h/ln.

    Demand ``demand`` veh/h for two hours, then none (still inside the closure),
    so the textbook D/D/1 results hold exactly: longest queue (demand - 1000) x 2 h
    at 02:00, cleared at 1000 veh/h, total delay = queue x clearing time / 2. The
    work zone has no length, so there is no extra travel-time delay.
    """
    start = dt.datetime(2027, 9, 6, 0, 0)
    site = Site(
        lanes=2,
        speed_limit=65 * MPH,
        work_zone_speed_limit=55 * MPH,
        work_zone_length=0.0,
        name=name,
        direction="southbound",
        unit_system=system,
    )
    return Plan(
        site=site,
        demand=Demand(start, 3600, np.array([demand, demand, 0.0, 0.0])),
        closures=(
            Closure(start, start + dt.timedelta(hours=4), 1, capacity_override_veh_h_ln=1000.0),
        ),
        thresholds=Thresholds(max_demand_capacity=1.2) if limits else Thresholds(),
        costs=HAND_COSTS,
    )


def _broken_workbooks(folder: Path) -> list[Path]:
    """Three workbooks that cannot be analysed, each for its own reason."""
    blank = fill_template(variant(1), folder / "broken_blank_lanes.xlsx")
    wb = openpyxl.load_workbook(blank)
    set_named(wb, "site_lanes", None)
    wb.save(blank)
    allclosed = fill_template(variant(2), folder / "broken_all_lanes_closed.xlsx")
    wb = openpyxl.load_workbook(allclosed)
    lanes_header = layout.CLOSURE_COLUMNS[3]
    table_cell(wb, layout.CLOSURE_TABLE, 0, lanes_header).value = 3  # Kestrel has 3 lanes
    wb.save(allclosed)
    junk = folder / "broken_not_a_workbook.xlsx"
    junk.write_bytes(b"this is not a spreadsheet\n")
    return [blank, allclosed, junk]


def _broken_json(folder: Path) -> list[Path]:
    syntax = folder / "broken_syntax.json"
    syntax.write_text('{"format": "wzq-plan", "units": "us",', encoding="utf-8")
    data = json.loads(KESTREL.read_text(encoding="utf-8"))
    data["site"]["lanes"] = 0
    zero = folder / "broken_zero_lanes.json"
    zero.write_text(json.dumps(data), encoding="utf-8")
    return [syntax, zero]


@pytest.fixture(scope="module")
def fifty(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """50 plans: 45 good (16 workbooks, 2 of them .xlsm, and 29 JSON), 5 broken.

    Also a lock file and a hidden file, which must be skipped.
    """
    folder = tmp_path_factory.mktemp("fifty")
    for k in range(16):
        fill_template(variant(k), folder / f"plan_{k:02d}.xls{'m' if k % 8 == 0 else 'x'}",
                      macro=k % 8 == 0)  # fmt: skip
    for k in range(16, 41):
        save_plan(variant(k), folder / f"plan_{k:02d}.json")
    save_plan(hand_plan("Quarry Lane overpass", 1800.0), folder / "hand_big.json")
    save_plan(hand_plan("Osier Brook culvert", 1500.0), folder / "hand_small.json")
    save_plan(hand_plan("Thistle Hill", 1500.0, limits=False), folder / "hand_nolimits.json")
    save_plan(hand_plan("Wren Common", 800.0, system="metric"), folder / "hand_free.json")
    _broken_workbooks(folder)
    _broken_json(folder)
    (folder / "~$plan_01.xlsx").write_bytes(b"lock file of an open workbook")
    (folder / ".plan_99.json").write_text("{}", encoding="utf-8")
    return folder


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


def _sheet(path: Path, name: str) -> list[tuple]:
    wb = openpyxl.load_workbook(path)
    try:
        return [tuple(r) for r in wb[name].iter_rows(min_row=HEADER_ROW, values_only=True)]
    finally:
        wb.close()


def _csv(path: Path) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(path.read_text(encoding="utf-8-sig"))))


# --- the folder of 50 ------------------------------------------------------------------------


def test_fifty_plans_five_broken(
    fifty: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    before = _snapshot(fifty)
    out = tmp_path / "summary.xlsx"
    status = main(["batch", str(fifty), "-o", str(out), "--workers", "2"])
    assert status == 2
    assert _snapshot(fifty) == before  # every plan, the broken ones included, byte-identical

    plans = _sheet(out, PLANS_SHEET)
    assert plans[0] == tuple(c.header for c in COLUMNS)
    assert len(plans) - 1 == 45
    problems = _sheet(out, PROBLEMS_SHEET)[1:]
    broken = {r[0] for r in problems}
    assert broken == {
        "broken_blank_lanes.xlsx",
        "broken_all_lanes_closed.xlsx",
        "broken_not_a_workbook.xlsx",
        "broken_syntax.json",
        "broken_zero_lanes.json",
    }
    where: dict[str, str] = {}
    for r in problems:
        where.setdefault(r[0], r[2])  # the first problem of each file
    # workbook problems name the sheet and the cell; JSON problems the file and line or key
    assert re.fullmatch(r"Site!\$?[A-Z]{1,2}\$?\d+", where["broken_blank_lanes.xlsx"])
    assert re.fullmatch(r"Closures!\$?[A-Z]{1,2}\$?\d+", where["broken_all_lanes_closed.xlsx"])
    assert where["broken_syntax.json"] == "broken_syntax.json: line 1"
    assert "site.lanes" in where["broken_zero_lanes.json"]
    assert all(r[1] == "input to fix" for r in problems)

    rows = _csv(out.with_suffix(".csv"))
    assert len(rows) == 45
    assert [r["file"] for r in rows] == [p[0] for p in plans[1:]]
    assert "~$plan_01.xlsx" not in {r["file"] for r in rows}
    captured = capsys.readouterr()
    assert "45 of 50 plans analysed" in captured.out
    assert wzq.CAUTION in captured.out
    assert "Traceback" not in captured.err
    assert "broken_not_a_workbook.xlsx" in captured.err
    assert "5 plans could not be analysed" in captured.err
    assert "\x1b[" not in captured.err  # no progress bar when not on a terminal


def test_hand_worked_rows_and_worst_first(fifty: Path, tmp_path: Path) -> None:
    subset = tmp_path / "hand"
    subset.mkdir()
    for name in ("hand_big.json", "hand_small.json", "hand_nolimits.json", "hand_free.json"):
        shutil.copy(fifty / name, subset / name)
    result = run_batch(subset, workers=1)
    assert batch_status(result) == 0
    rows = {r.file: r for r in result.rows}
    # D/D/1 with demand above a reduced capacity for T hours (textbook deterministic
    # queueing, e.g. Mannering et al., Principles of Highway Engineering and Traffic
    # Analysis, ch. 5): longest queue (lambda - mu) T, clearing Q / mu when arrivals stop,
    # total delay Q (T + t_c) / 2.
    big, small = rows["hand_big.json"], rows["hand_small.json"]
    assert big.max_queue_veh == 1600  # (1800 - 1000) x 2 h
    assert small.max_queue_veh == 1000  # (1500 - 1000) x 2 h
    # no vehicle joins after 02:00, so the back of the queue is furthest upstream by then
    for r in (big, small):
        assert dt.datetime(2027, 9, 6, 0, 0) < r.max_queue_at <= dt.datetime(2027, 9, 6, 2, 0)
    assert big.total_delay_veh_h == pytest.approx(2880.0)  # 1600 x (2 + 1.6) / 2
    assert small.total_delay_veh_h == pytest.approx(1500.0)  # 1000 x (2 + 1) / 2
    # road-user cost = delay x value of a vehicle-hour (FHWA-HOP-12-005, 2011): 31 per veh-h
    assert small.road_user_cost == 46_500
    assert big.road_user_cost == 89_280
    assert small.cost_basis == "USD 2027"
    # demand/capacity 1.5 (1.8) in the two loaded closure hours is over 1.2; 0 after
    assert big.hours_over_limit == small.hours_over_limit == 2
    assert big.status == small.status == "over limit"
    assert rows["hand_nolimits.json"].status == "no limits set"
    free = rows["hand_free.json"]
    assert (free.status, free.max_queue_veh, free.max_queue_at) == ("ok", 0, None)
    assert (free.plan_units, big.plan_units) == ("km", "mi")
    assert (big.closures, big.lanes, big.most_lanes_closed) == (1, 2, 1)
    assert big.closure_start == dt.datetime(2027, 9, 6, 0, 0)
    assert big.closure_end == dt.datetime(2027, 9, 6, 4, 0)
    assert big.max_queue_km == pytest.approx(big.max_queue_mi * MILE_KM, abs=0.011)
    # worst first: over a limit (longer queue first), then unchecked, then ok
    assert [r.file for r in result.rows] == [
        "hand_big.json",
        "hand_small.json",
        "hand_nolimits.json",
        "hand_free.json",
    ]


# --- the same summary wherever the work runs --------------------------------------------------


@pytest.fixture(scope="module")
def two_workers(fifty: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The summary of the folder of 50 from two local worker processes."""
    out = tmp_path_factory.mktemp("two") / "two.xlsx"
    result = run_batch(fifty, summary=out, workers=2)
    assert batch_status(result) == 2 and len(result.rows) == 45
    return out


def _same_summary(a: Path, b: Path) -> None:
    assert a.with_suffix(".csv").read_bytes() == b.with_suffix(".csv").read_bytes()
    for sheet in (PLANS_SHEET, PROBLEMS_SHEET):
        assert _sheet(a, sheet) == _sheet(b, sheet)


def test_one_and_two_workers_give_identical_summaries(
    fifty: Path, two_workers: Path, tmp_path: Path
) -> None:
    one = run_batch(fifty, summary=tmp_path / "one.xlsx", workers=1)
    assert batch_status(one) == 2
    _same_summary(tmp_path / "one.xlsx", two_workers)


# --- resume ----------------------------------------------------------------------------------


def test_resume_reanalyses_only_changed_plans(fifty: Path, tmp_path: Path) -> None:
    folder = tmp_path / "plans"
    folder.mkdir()
    for name in ("plan_00.xlsm", "plan_03.xlsx", "plan_05.xlsx", "plan_20.json", "plan_21.json"):
        shutil.copy(fifty / name, folder / name)
    shutil.copy(fifty / "broken_syntax.json", folder / "broken_syntax.json")
    first = run_batch(folder, workers=2)
    summary = folder / batch.DEFAULT_SUMMARY
    # the fingerprint kept is the SHA-256 of each file's bytes (hashlib, FIPS 180-4)
    state = openpyxl.load_workbook(summary)[STATE_SHEET]
    kept = {r[0]: r[1] for r in state.iter_rows(min_row=3, values_only=True)}
    assert (
        kept["plan_03.xlsx"] == hashlib.sha256((folder / "plan_03.xlsx").read_bytes()).hexdigest()
    )
    assert state.sheet_state == "hidden"

    # change two plans, add one, remove one
    changed = dataclasses.replace(variant(5), site=dataclasses.replace(variant(5).site, lanes=4))
    (folder / "plan_05.xlsx").unlink()
    fill_template(changed, folder / "plan_05.xlsx")
    data = json.loads((folder / "plan_20.json").read_text(encoding="utf-8"))
    data["demand"]["veh_h"] = [v * 1.1 for v in data["demand"]["veh_h"]]
    (folder / "plan_20.json").write_text(json.dumps(data), encoding="utf-8")
    shutil.copy(fifty / "hand_small.json", folder / "hand_small.json")
    (folder / "plan_21.json").unlink()

    seen: list[Outcome] = []
    second = run_batch(folder, workers=2, resume=True, progress=seen.append)
    fresh = {o.file for o in seen if not o.reused}
    assert fresh == {"plan_05.xlsx", "plan_20.json", "hand_small.json"}
    assert {o.file for o in seen if o.reused} == {
        "plan_00.xlsm",
        "plan_03.xlsx",
        "broken_syntax.json",
    }
    assert batch_status(second) == 2  # the unchanged broken plan is still listed
    assert "plan_21.json" not in {r.file for r in second.rows}
    row5 = next(r for r in second.rows if r.file == "plan_05.xlsx")
    assert row5.lanes == 4
    old20 = next(r for r in first.rows if r.file == "plan_20.json")
    new20 = next(r for r in second.rows if r.file == "plan_20.json")
    assert new20.total_delay_veh_h > old20.total_delay_veh_h  # 10 % more demand

    # a resumed summary is the summary a full run writes
    full = run_batch(folder, summary=tmp_path / "full.xlsx", workers=2)
    assert (folder / "batch-summary.csv").read_bytes() == (tmp_path / "full.csv").read_bytes()
    assert _sheet(summary, PROBLEMS_SHEET) == _sheet(tmp_path / "full.xlsx", PROBLEMS_SHEET)
    assert full.reused == 0

    # nothing changed: nothing analysed
    seen.clear()
    run_batch(folder, workers=2, resume=True, progress=seen.append)
    assert all(o.reused for o in seen) and len(seen) == 6


def test_resume_counts_say_what_was_kept_and_the_summary_names_each_plan(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """Two good plans and a broken one, run, then resumed with nothing changed: the
    counts must add up (2 analysed, both kept; 1 not analysed, unchanged), never
    "2 of 3 analysed, 3 unchanged"."""
    folder = tmp_path / "plans"
    folder.mkdir()
    for k in (1, 2):
        plan = variant(k)
        title = f"Variant {k}: {plan.meta.title}"
        save_plan(dataclasses.replace(plan, meta=dataclasses.replace(plan.meta, title=title)),
                  folder / f"plan_{k}.json")  # fmt: skip
    _broken_json(folder)[0].unlink()  # keep one broken plan: zero lanes
    assert main(["batch", str(folder), "--workers", "1"]) == 2
    capsys.readouterr()
    assert main(["batch", str(folder), "--workers", "1", "--resume"]) == 2
    out, err = capsys.readouterr()
    assert re.search(
        r"2 of 3 plans analysed in [\d.]+ s \(2 of them unchanged since the last summary, "
        r"results kept\)",
        out,
    ), out
    assert "1 plan could not be analysed (1 of them unchanged since the last summary)" in err
    run = openpyxl.load_workbook(folder / batch.DEFAULT_SUMMARY)["Run"]
    lines = [(a, b) for a, b in run.iter_rows(min_row=3, max_col=2, values_only=True) if a]
    counts = {a: b for a, b in lines if isinstance(b, int)}
    assert counts["Plan files"] == 3
    assert counts["Analysed"] == 2
    assert counts["of which unchanged since the last summary (results kept)"] == 2
    assert counts["Not analysed (sheet Problems)"] == 1
    assert counts["of which unchanged since the last summary"] == 1
    # variants of one plan told apart by their titles, not only by their file names
    header, *rows = _sheet(folder / batch.DEFAULT_SUMMARY, PLANS_SHEET)
    assert header[:2] == ("Plan file", "Plan title")
    assert {r[0]: r[1] for r in rows} == {
        "plan_1.json": f"Variant 1: {variant(1).meta.title}",
        "plan_2.json": f"Variant 2: {variant(2).meta.title}",
    }
    assert _csv(folder / "batch-summary.csv")[0]["title"].startswith("Variant ")


def test_resume_with_write_back_keeps_the_written_fingerprint(fifty: Path, tmp_path: Path) -> None:
    folder = tmp_path / "wb"
    folder.mkdir()
    for name in ("plan_02.xlsx", "plan_04.xlsx", "plan_30.json"):
        shutil.copy(fifty / name, folder / name)
    first = run_batch(folder, workers=2, write_back=True)
    assert first.issues == []
    assert batch_status(first) == 0
    assert {o.file: o.written_back for o in first.outcomes} == {
        "plan_02.xlsx": True,
        "plan_04.xlsx": True,
        "plan_30.json": False,
    }
    seen: list[Outcome] = []
    run_batch(folder, workers=2, write_back=True, resume=True, progress=seen.append)
    assert len(seen) == 3 and all(o.reused for o in seen)


def test_resume_without_a_summary_analyses_everything(fifty: Path, tmp_path: Path) -> None:
    folder = tmp_path / "new"
    folder.mkdir()
    shutil.copy(fifty / "plan_20.json", folder / "plan_20.json")
    seen: list[Outcome] = []
    run_batch(folder, workers=1, resume=True, progress=seen.append)
    assert [o.reused for o in seen] == [False]


# --- write-back ------------------------------------------------------------------------------


def test_write_back_fills_good_workbooks_and_leaves_the_rest(fifty: Path, tmp_path: Path) -> None:
    folder = tmp_path / "wb"
    folder.mkdir()
    for name in ("plan_00.xlsm", "plan_03.xlsx", "plan_05.xlsx", "broken_blank_lanes.xlsx"):
        shutil.copy(fifty / name, folder / name)
    (folder / "~$plan_05.xlsx").write_bytes(b"open in a spreadsheet program")
    before = _snapshot(folder)
    status = main(["batch", str(folder), "--write-back", "--workers", "2"])
    assert status == 2
    after = _snapshot(folder)
    for name in ("broken_blank_lanes.xlsx", "plan_05.xlsx", "~$plan_05.xlsx"):
        assert after[name] == before[name]
    for name in ("plan_00.xlsm", "plan_03.xlsx"):
        assert after[name] != before[name]
        book = openpyxl.load_workbook(folder / name, keep_vba=name.endswith(".xlsm"))
        assert set(layout.OUTPUT_SHEETS) <= set(book.sheetnames)
    with zipfile.ZipFile(folder / "plan_00.xlsm") as z:
        assert "xl/vbaProject.bin" in z.namelist()  # the macros stay
    summary = folder / batch.DEFAULT_SUMMARY
    rows = {r[0] for r in _sheet(summary, PLANS_SHEET)[1:]}
    assert rows == {"plan_00.xlsm", "plan_03.xlsx", "plan_05.xlsx"}  # analysed, not written
    problems = {(r[0], r[1]) for r in _sheet(summary, PROBLEMS_SHEET)[1:]}
    assert ("plan_05.xlsx", "results not written back") in problems
    assert ("broken_blank_lanes.xlsx", "input to fix") in problems


# --- text from plans is never a formula ------------------------------------------------------


def test_text_from_plans_is_never_a_formula(tmp_path: Path) -> None:
    folder = tmp_path / "inj"
    folder.mkdir()
    plan = hand_plan('=HYPERLINK("http://example.invalid","open")', 1500.0)
    plan = dataclasses.replace(
        plan,
        site=dataclasses.replace(plan.site, direction="+northbound"),
        meta=dataclasses.replace(plan.meta, notes="@SUM(1,2)"),
    )
    save_plan(plan, folder / "-2+3.json")
    run_batch(folder, workers=1)
    summary = folder / batch.DEFAULT_SUMMARY
    ws = openpyxl.load_workbook(summary)[PLANS_SHEET]
    header = [c.value for c in ws[HEADER_ROW]]
    row = ws[HEADER_ROW + 1]
    cells = {h: row[j] for j, h in enumerate(header)}
    assert cells["Site"].value == '=HYPERLINK("http://example.invalid","open")'
    for h in ("Plan file", "Site", "Direction", "Notes"):
        assert cells[h].data_type == "s"
    with zipfile.ZipFile(summary) as z:
        for name in z.namelist():
            if name.startswith("xl/worksheets/"):
                assert b"<f>" not in z.read(name) and b"<f " not in z.read(name)
    # CSV: OWASP CSV Injection advice, a leading single quote on = + - @ fields
    (rec,) = _csv(summary.with_suffix(".csv"))
    assert rec["file"] == "'-2+3.json"
    assert rec["site"] == '\'=HYPERLINK("http://example.invalid","open")'
    assert rec["direction"] == "'+northbound"
    assert rec["notes"] == "'@SUM(1,2)"
    assert csv_text("Kestrel Ridge") == "Kestrel Ridge"
    assert csv_text("\tx") == "'\tx"


# --- finding plans ---------------------------------------------------------------------------


def test_find_plans_skips_lock_hidden_summaries_and_other_files(tmp_path: Path) -> None:
    for name in ("a.json", "b.xlsx", "c.xlsm", "d.csv", "e.txt", "~$b.xlsx", ".wzq-tmp.xlsx"):
        (tmp_path / name).write_bytes(b"x")
    sub = tmp_path / "north"
    sub.mkdir()
    (sub / "f.json").write_bytes(b"x")
    (tmp_path / ".hidden").mkdir()
    (tmp_path / ".hidden" / "g.json").write_bytes(b"x")
    # a summary written by an earlier run elsewhere is recognised and skipped
    save_plan(hand_plan("Wren Common", 800.0), tmp_path / "h.json")
    run_batch(tmp_path, summary=sub / "old-summary.xlsx", workers=1)
    shutil.copy(sub / "old-summary.xlsx", tmp_path / "copied-summary.xlsx")

    names = lambda ps: [p.relative_to(tmp_path).as_posix() for p in ps]  # noqa: E731
    assert names(find_plans(tmp_path)) == ["a.json", "b.xlsx", "c.xlsm", "h.json"]
    assert names(find_plans(tmp_path, recursive=True)) == [
        "a.json",
        "b.xlsx",
        "c.xlsm",
        "h.json",
        "north/f.json",
    ]
    assert names(find_plans(tmp_path, exclude=[tmp_path / "b.xlsx"])) == [
        "a.json",
        "c.xlsm",
        "h.json",
    ]


# --- workers that die ------------------------------------------------------------------------


def die_once(task: Task) -> Outcome:
    """The job, but the worker dies the first time it meets ``crash.json``."""
    marker = Path(task.path).with_suffix(".died")
    if task.file == "crash.json" and not marker.exists():
        marker.write_text("died once")
        os._exit(3)
    return analyse_file(task)


def die_always(task: Task) -> Outcome:
    """The job, but ``poison.json`` always kills its worker (each attempt is counted)."""
    if task.file == "poison.json":
        with open(Path(task.path).with_suffix(".attempts"), "a") as f:
            f.write("x")
        os._exit(4)
    return analyse_file(task)


@pytest.fixture
def small_folder(tmp_path: Path) -> Path:
    folder = tmp_path / "small"
    folder.mkdir()
    for k, name in enumerate(("a.json", "b.json", "crash.json", "poison.json", "c.json")):
        save_plan(variant(20 + k), folder / name)
    return folder


@pytest.mark.parametrize("workers", [1, 2])
def test_a_dying_worker_is_retried_and_never_stops_the_others(
    small_folder: Path, workers: int
) -> None:
    (small_folder / "poison.json").unlink()
    result = run_batch(small_folder, workers=workers, job=die_once)
    assert (small_folder / "crash.died").exists()  # it did die once
    assert batch_status(result) == 0
    assert sorted(r.file for r in result.rows) == ["a.json", "b.json", "c.json", "crash.json"]


@pytest.mark.parametrize("workers", [1, 2])
def test_a_plan_that_always_kills_its_worker_is_given_up(small_folder: Path, workers: int) -> None:
    result = run_batch(small_folder, workers=workers, job=die_always, retries=2)
    assert batch_status(result) == 1
    assert sorted(r.file for r in result.rows) == ["a.json", "b.json", "c.json", "crash.json"]
    (lost,) = result.not_analysed
    assert lost.file == "poison.json"
    assert "stopped 3 times" in lost.issues[0].message
    attempts = len((small_folder / "poison.attempts").read_text())
    assert attempts == 1 + 3  # a first try among others, then 3 alone (retries=2)


def die_every_time(task: Task) -> Outcome:
    """A worker that can never finish a plan (each attempt is counted)."""
    with open(Path(task.path).parent / "all.attempts", "a") as f:
        f.write("x")
    os._exit(5)


def test_workers_that_cannot_run_at_all_stop_the_retries(small_folder: Path) -> None:
    result = run_batch(small_folder, workers=2, job=die_every_time, retries=1)
    assert batch_status(result) == 1
    assert len(result.not_analysed) == 5 and result.rows == []
    # 1 or 2 plans started together (the first death ends the pool), then the first
    # suspect alone twice (retries=1), then the second alone once: two plans died alone
    # and none came back, so the rest are not tried
    assert len((small_folder / "all.attempts").read_text()) in (1 + 2 + 1, 2 + 2 + 1)
    assert all("report it" in o.issues[0].message for o in result.not_analysed)
    assert (small_folder / batch.DEFAULT_SUMMARY).exists()


# --- the run itself --------------------------------------------------------------------------


def test_run_problems_exit_2_and_write_nothing(tmp_path: Path, capsys) -> None:
    assert main(["batch", str(tmp_path / "missing")]) == 2
    assert "no such folder" in capsys.readouterr().err
    (tmp_path / "a.json").write_text("{}", encoding="utf-8")
    assert main(["batch", str(tmp_path), "-o", str(tmp_path / "s.csv")]) == 2
    assert "-o" in capsys.readouterr().err
    assert main(["batch", str(tmp_path), "--workers", "0"]) == 2
    (tmp_path / "~$batch-summary.xlsx").write_bytes(b"lock")
    assert main(["batch", str(tmp_path)]) == 2
    assert "open in Excel" in capsys.readouterr().err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.json", "~$batch-summary.xlsx"]


def test_progress_bar_only_on_a_terminal(small_folder: Path) -> None:
    from wzq.cli.batch import _Bar

    class Terminal(io.StringIO):
        def isatty(self) -> bool:
            return True

    for stream, shown in ((Terminal(), True), (io.StringIO(), False)):
        bar = _Bar(stream)
        try:
            run_batch(small_folder, workers=1, progress=bar.advance, on_start=bar.start)
        finally:
            bar.stop()
        assert ("5/5" in stream.getvalue()) is shown


def test_paper_sizes_match_the_report() -> None:
    from wzq.cli.batch import PAPERS
    from wzq.io.report import PAPERS as REPORT_PAPERS

    assert set(PAPERS) == set(REPORT_PAPERS)


def test_reports_one_pdf_per_plan(tmp_path: Path) -> None:
    folder = tmp_path / "plans"
    folder.mkdir()
    save_plan(hand_plan("Osier Brook culvert", 1500.0), folder / "osier.json")
    result = run_batch(folder, workers=1, reports=tmp_path / "pdf", paper="a4")
    assert batch_status(result) == 0
    pdf = tmp_path / "pdf" / "osier_report.pdf"
    assert pdf.read_bytes().startswith(b"%PDF-")
    from pypdf import PdfReader

    text = "".join(page.extract_text() for page in PdfReader(pdf).pages)
    assert "Osier Brook culvert" in text


# --- Dask (last: its threads stay in the test process) ---------------------------------------


def test_scheduler_problems_are_clear(tmp_path: Path, monkeypatch, capsys) -> None:
    pytest.importorskip("distributed", reason="the cluster extra (dask[distributed]) is absent")
    monkeypatch.setattr(batch, "SCHEDULER_TIMEOUT", "1s")
    save_plan(hand_plan("Osier Brook culvert", 1500.0), tmp_path / "osier.json")
    assert main(["batch", str(tmp_path), "--scheduler", "tcp://127.0.0.1:9"]) == 2
    assert "cannot reach the Dask scheduler" in capsys.readouterr().err
    assert not (tmp_path / batch.DEFAULT_SUMMARY).exists()


def test_without_dask_the_scheduler_option_says_what_to_install(tmp_path: Path, monkeypatch):
    import sys

    monkeypatch.setitem(sys.modules, "distributed", None)  # as if not installed
    with pytest.raises(wzq.PlanError, match=r"wzq\[cluster\]"):
        run_batch(tmp_path, scheduler="tcp://127.0.0.1:8786")


def test_dask_local_cluster_gives_the_same_summary(
    fifty: Path, two_workers: Path, tmp_path: Path
) -> None:
    distributed = pytest.importorskip(
        "distributed", reason="the cluster extra (dask[distributed]) is absent"
    )
    with distributed.LocalCluster(
        n_workers=1,
        threads_per_worker=2,
        processes=False,
        host="127.0.0.1",
        protocol="tcp",
        dashboard_address=None,
    ) as cluster:
        out = tmp_path / "dask.xlsx"
        remote = run_batch(fifty, summary=out, scheduler=cluster.scheduler_address)
    assert batch_status(remote) == 2
    _same_summary(out, two_workers)
    run = openpyxl.load_workbook(out)["Run"]
    assert any("Dask cluster at tcp://127.0.0.1:" in str(c.value) for c in run["B"])
