"""The closure-window search kept in the workbook (:mod:`wzq.io.workbook.windows_cache`).

A run with the same site, demand, limits and options as the last one takes the
search from the workbook; any change of those searches again; a cache whose cells
were changed is not used. Whatever the cache, the Closure windows sheet is the one
a fresh search gives.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import shutil
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from workbook_helpers import fill_template, set_named, table_cell

import wzq
from wzq import cli
from wzq.cli import windows as cli_windows
from wzq.engine import windows as engine_windows
from wzq.engine.design_demand import CountHistory, DemandHistory, DemandRule
from wzq.engine.plan import Approach, Landmark, Thresholds
from wzq.io.jsonplan import load_plan, plan_to_dict
from wzq.io.workbook import layout
from wzq.io.workbook import windows_cache as wc
from wzq.io.workbook.run import run_workbook

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
RUN_TIME = "2027-01-01T00:00:00Z"


def _plan():
    """The Ashgrove week with the closure-window search on (limits: 1 mi, 15 min, 1.0)."""
    plan = load_plan(EXAMPLES / "ashgrove_bypass_week.json")
    return dataclasses.replace(
        plan, options=dataclasses.replace(plan.options, closure_windows=True)
    )


@pytest.fixture(scope="module")
def filled(tmp_path_factory) -> Path:
    return fill_template(_plan(), tmp_path_factory.mktemp("cache") / "plan.xlsx")


def _spy(monkeypatch, real, *places) -> list[bool]:
    """Records, for every call of the search ``real`` made through ``places`` (module,
    name), whether it was given cached tables."""
    seen: list[bool] = []

    def spy(plan, *a, **kw):
        seen.append(kw.get("known") is not None)
        return real(plan, *a, **kw)

    for module, name in places:
        monkeypatch.setattr(module, name, spy)
    return seen


@pytest.fixture
def searches(monkeypatch) -> list[bool]:
    """For every window search of a run: was it given cached tables?"""
    return _spy(monkeypatch, wc.closure_windows, (wc, "closure_windows"))


def _windows_cells(path: Path) -> list:
    ws = openpyxl.load_workbook(path)[layout.WINDOWS]
    return [c.value for row in ws.iter_rows() for c in row]


def test_tables_round_trip_through_the_sheet():
    rng = np.random.default_rng(3)
    tables = [rng.random((50, 51)) < 0.3 for _ in range(3)]
    book = openpyxl.Workbook()
    wc.write_tables(book, "k" * 64, tables)
    back = wc.read_tables(book, "k" * 64, 50)
    assert back is not None and all(np.array_equal(a, b) for a, b in zip(back, tables, strict=True))
    assert wc.read_tables(book, "j" * 64, 50) is None  # other inputs
    assert wc.read_tables(book, "k" * 64, 49) is None  # another length of demand
    assert book[wc.CACHE_SHEET].sheet_state == "veryHidden"


def test_the_key_follows_what_the_search_depends_on():
    plan = _plan()
    key = wc.windows_key(plan)
    moved = dataclasses.replace(plan, closures=plan.closures[:1])
    assert wc.windows_key(moved) == key  # the search never uses the plan's closures
    tighter = dataclasses.replace(
        plan, thresholds=dataclasses.replace(plan.thresholds, max_average_delay=600.0)
    )
    assert wc.windows_key(tighter) != key
    flows = plan.demand.flows_veh_h.copy()
    flows[30] += 1.0
    busier = dataclasses.replace(plan, demand=dataclasses.replace(plan.demand, flows_veh_h=flows))
    assert wc.windows_key(busier) != key


@pytest.mark.slow  # whole runs of a week with the search
def test_a_second_run_takes_the_search_from_the_workbook(filled, tmp_path, searches):
    path = shutil.copy(filled, tmp_path / "plan.xlsx")
    run_workbook(path, run_time=RUN_TIME)
    first = _windows_cells(path)
    book = openpyxl.load_workbook(path)
    assert book[wc.CACHE_SHEET].sheet_state == "veryHidden"
    lanes = table_cell(book, layout.CLOSURE_TABLE, 0, layout.CLOSURE_COLUMNS[3])
    lanes.value = 2 if lanes.value == 1 else 1  # the closures change, the windows cannot
    book.save(path)
    run_workbook(path, run_time=RUN_TIME)
    assert searches == [False, True]
    assert _windows_cells(path) == first
    fresh = tmp_path / "fresh.xlsx"
    shutil.copy(filled, fresh)
    run_workbook(fresh, run_time=RUN_TIME)  # searched from scratch
    assert _windows_cells(fresh) == first


@pytest.mark.slow  # whole runs of a week with the search
def test_a_changed_limit_searches_again(filled, tmp_path, searches):
    path = shutil.copy(filled, tmp_path / "plan.xlsx")
    run_workbook(path, run_time=RUN_TIME)
    book = openpyxl.load_workbook(path)
    set_named(book, "limit_average_delay", 5)  # minutes: far fewer hours allowed
    book.save(path)
    run_workbook(path, run_time=RUN_TIME)
    assert searches == [False, False]
    plan = dataclasses.replace(
        _plan(),
        thresholds=Thresholds(
            max_queue_length=_plan().thresholds.max_queue_length,
            max_average_delay=300.0,
            max_demand_capacity=_plan().thresholds.max_demand_capacity,
        ),
    )
    other = fill_template(plan, tmp_path / "other.xlsx")
    run_workbook(other, run_time=RUN_TIME)
    assert _windows_cells(path) == _windows_cells(other)


@pytest.mark.slow  # whole runs of a week with the search
def test_a_cache_whose_cells_were_changed_is_not_used(filled, tmp_path, searches):
    path = shutil.copy(filled, tmp_path / "plan.xlsx")
    run_workbook(path, run_time=RUN_TIME)
    first = _windows_cells(path)
    book = openpyxl.load_workbook(path)
    ws = book[wc.CACHE_SHEET]
    text = ws["A3"].value
    ws["A3"] = text[:-8] + ("A" * 8 if not text.endswith("A" * 8) else "B" * 8)
    book.save(path)
    run_workbook(path, run_time=RUN_TIME)
    assert searches == [False, False]
    assert _windows_cells(path) == first


def test_cached_tables_are_the_search_itself():
    plan = _plan()
    found = engine_windows.plan_windows(plan)
    again = engine_windows.plan_windows(plan, known=[s.allowed for s in found.sets])
    for a, b in zip(found.sets, again.sets, strict=True):
        assert np.array_equal(a.allowed, b.allowed)
        assert a.longest(3) == b.longest(3)
        s, e = a.longest(1)[0]
        assert a.added_delay_veh_h(s, e) == b.added_delay_veh_h(s, e)
    wrong = [np.zeros((3, 4), dtype=bool)] * len(found.sets)  # not this demand's shape
    checked = engine_windows.plan_windows(plan, known=wrong)
    assert all(
        np.array_equal(a.allowed, b.allowed) for a, b in zip(found.sets, checked.sets, strict=True)
    )


def _changed(plan, part: str, **values):
    return dataclasses.replace(plan, **{part: dataclasses.replace(getattr(plan, part), **values)})


#: One change of each kind of input the search depends on (the site, the demand, the
#: limits, the options, the costs, the approach); each must give another key.
CHANGES = {
    "site: lanes": lambda p: _changed(p, "site", lanes=p.site.lanes + 1),
    "site: speed, by a millionth": lambda p: _changed(
        p, "site", work_zone_speed_limit=p.site.work_zone_speed_limit * (1 + 1e-9)
    ),
    "site: heavy vehicles": lambda p: _changed(p, "site", heavy_vehicle_share=0.09),
    "demand: start": lambda p: _changed(p, "demand", start=p.demand.start + dt.timedelta(days=1)),
    "limits: queue length": lambda p: _changed(
        p, "thresholds", max_queue_length=p.thresholds.max_queue_length + 1.0
    ),
    "limits: demand/capacity": lambda p: _changed(p, "thresholds", max_demand_capacity=0.95),
    "options: capacity drop": lambda p: _changed(
        p, "options", capacity_drop=not p.options.capacity_drop
    ),
    "options: queue length method": lambda p: _changed(
        p, "options", queue_length_method="shockwave"
    ),
    "costs: value of time": lambda p: _changed(p, "costs", car_value_per_person_h=20.0),
    "approach: a landmark": lambda p: dataclasses.replace(
        p, approach=Approach((Landmark("Tallow Brook bridge", 900.0),))
    ),
}


@pytest.mark.parametrize("change", CHANGES)
def test_each_kind_of_input_changes_the_key(change):
    plan = _plan()
    assert wc.windows_key(CHANGES[change](plan)) != wc.windows_key(plan)


def test_wzq_version_and_search_code_change_the_key(monkeypatch):
    plan = _plan()
    key = wc.windows_key(plan)
    monkeypatch.setattr(wzq, "__version__", wzq.__version__ + ".post1")
    assert wc.windows_key(plan) != key
    monkeypatch.undo()
    monkeypatch.setattr(wc, "code_digest", lambda: "0" * 64)
    assert wc.windows_key(plan) != key


def test_demand_designed_from_a_count_history_keys_on_its_flows():
    """A plan file names the count file, not the flows it gave; the key holds the flows."""
    plan = _plan()
    n = len(plan.demand.flows_veh_h)
    counts = CountHistory(plan.demand.start - dt.timedelta(weeks=5), 3600, np.full((35, 24), 900.0))
    history = DemandHistory(counts, DemandRule(), file="counts.csv")
    a = dataclasses.replace(plan, history=history)
    flows = plan.demand.flows_veh_h.copy()
    flows[n // 2] += 0.5
    b = dataclasses.replace(a, demand=dataclasses.replace(plan.demand, flows_veh_h=flows))
    assert plan_to_dict(a)["demand"] == plan_to_dict(b)["demand"]  # the file cannot tell
    assert wc.windows_key(a) != wc.windows_key(b)


def test_what_the_plan_asks_to_add_to_the_outputs_is_no_input_of_the_search():
    plan = _plan()
    key = wc.windows_key(plan)
    assert wc.windows_key(_changed(plan, "options", space_time=not plan.options.space_time)) == key
    assert wc.windows_key(_changed(plan, "options", closure_windows=False)) == key


def _pdf_text(path: Path) -> str:
    pypdf = pytest.importorskip("pypdf")
    return "\n".join(page.extract_text() for page in pypdf.PdfReader(path).pages)


@pytest.fixture
def engine_searches(monkeypatch) -> list[bool]:
    """As :func:`searches`, for the commands that call the engine's search themselves."""
    places = ((engine_windows, "plan_windows"), (cli_windows, "plan_windows"))
    return _spy(monkeypatch, engine_windows.plan_windows, *places)


@pytest.mark.slow  # a run and the windows command three times on a week
def test_the_windows_command_takes_the_search_the_run_kept(
    filled, tmp_path, engine_searches, capsys
):
    path = shutil.copy(filled, tmp_path / "plan.xlsx")
    run_workbook(path, run_time=RUN_TIME)
    capsys.readouterr()
    engine_searches.clear()  # the run's own search
    assert cli.main(["windows", str(path)]) == 0
    kept = capsys.readouterr().out
    assert cli.main(["windows", str(filled)]) == 0  # never run: no cache
    fresh = capsys.readouterr().out
    assert cli.main(["windows", str(path), "--barrier", "hard"]) == 0  # another search
    capsys.readouterr()
    assert engine_searches == [True, False, False]
    assert "Closure windows" in kept and kept == fresh


@pytest.mark.slow  # a run and two reports of a week with the search
def test_the_report_takes_the_search_the_run_kept(filled, tmp_path, engine_searches, capsys):
    path = shutil.copy(filled, tmp_path / "plan.xlsx")
    run_workbook(path, run_time=RUN_TIME)
    seen = engine_searches
    seen.clear()  # the run's own search
    kept, fresh = tmp_path / "kept.pdf", tmp_path / "fresh.pdf"
    assert cli.main(["report", str(path), "-o", str(kept)]) == 0
    assert cli.main(["report", str(filled), "-o", str(fresh)]) == 0  # never run: no cache
    capsys.readouterr()
    assert seen == [True, False]
    assert "Allowable closure hours" in _pdf_text(kept)
    assert _pdf_text(kept) == _pdf_text(fresh)


def test_a_sheet_of_the_users_with_the_cache_name_is_never_touched():
    book = openpyxl.Workbook()
    mine = book.create_sheet(wc.CACHE_SHEET)
    mine["A1"] = "my notes"
    mine["A2"], mine["B2"] = "windows", "k" * 64  # even if it looks like a cache
    tables = [np.ones((4, 5), dtype=bool)]
    wc.write_tables(book, "k" * 64, tables)
    assert book[wc.CACHE_SHEET] is mine and mine["A1"].value == "my notes"
    assert mine.sheet_state == "visible"
    assert wc.read_tables(book, "k" * 64, 4) is None


def test_a_search_at_a_risk_is_never_cached(searches):
    """Larkspur Vale: a count history, so its windows are searched on the history's
    scenarios (which the key does not hold); the design demand's tables are not them."""
    plan = load_plan(EXAMPLES / "larkspur_vale_week.json")
    book = openpyxl.Workbook()
    first = wc.cached_plan_windows(plan, book)
    assert wc.CACHE_SHEET not in book.sheetnames  # nothing kept
    wc.cached_plan_windows(plan, book)
    assert searches == [False, False]
    design = engine_windows.plan_windows(plan)
    wc.write_tables(book, wc.windows_key(plan), [s.allowed for s in design.sets])
    assert wc.stored_tables(plan, book) is None  # even tables under its key are not used
    again = wc.cached_plan_windows(plan, book)
    for a, b in zip(first.sets, again.sets, strict=True):
        assert np.array_equal(a.allowed, b.allowed)
