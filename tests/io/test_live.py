"""The Recalculate button: live backend (through xlwings), entry module, `wzq new` / `wzq link`.

Excel does not run here, so the live backend works on the in-memory stand-in
:mod:`fake_xlwings`, which carries xlwings' own names and Excel's way with
typed text, dates and times; one test checks every attribute the backend
touched on it against the installed xlwings.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import importlib
import inspect
import re
import sys
import zipfile
from pathlib import Path

import openpyxl
import pytest
import xlwings
import xlwings.main as xw
from budget import examples
from fake_xlwings import (
    STAND_INS,
    TOUCHED,
    Cell,
    FakeBook,
    Formula,
    chart_views,
    from_serial,
    open_book,
    typed,
)
from hypothesis import given, settings
from hypothesis import strategies as st
from oletools.olevba import VBA_Parser
from workbook_helpers import fill_template, find_table

import wzq
from wzq.cli import main
from wzq.io.jsonplan import load_plan, plan_to_dict
from wzq.io.live import backend as live
from wzq.io.live.charts import Ref, SeriesPlan, series_formula, source_group
from wzq.io.live.sheets import excel_literal, rectangles
from wzq.io.workbook import layout
from wzq.io.workbook.link import ENTRY_MARKER, entry_path, suggest_name
from wzq.io.workbook.pictures import WIDTH_PX
from wzq.io.workbook.reader import read_plan, read_plan_from_book
from wzq.io.workbook.run import run_workbook
from wzq.io.workbook.windows_cache import CACHE_SHEET
from wzq.io.workbook.writer import RESULTS_HEADER_ROW

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"
FENWICK = EXAMPLES / "fenwick_downs_weekend.json"
#: A week with three queues: one cumulative chart per queue.
ASHGROVE = EXAMPLES / "ashgrove_bypass_week.json"
RUN_TIME = "2027-04-30T12:00:00Z"
OUTPUTS = layout.OUTPUT_SHEETS


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def filled(tmp_path_factory) -> dict[str, Path]:
    """Both example plans typed into fresh templates (not yet run): a macro one and a plain one."""
    folder = tmp_path_factory.mktemp("live")
    return {
        "kestrel": fill_template(load_plan(KESTREL), folder / "kestrel.xlsm", macro=True),
        "fenwick": fill_template(load_plan(FENWICK), folder / "fenwick.xlsx"),
        "ashgrove": fill_template(load_plan(ASHGROVE), folder / "ashgrove.xlsx"),
    }


@pytest.fixture(scope="module")
def both(filled, tmp_path_factory) -> dict[str, tuple[openpyxl.Workbook, FakeBook, live.Outcome]]:
    """Each plan run by the file backend (wzq run) and by the live backend, same run time."""
    folder = tmp_path_factory.mktemp("runs")
    out = {}
    for which, src in filled.items():
        target = folder / src.name
        run_workbook(src, target, run_time=RUN_TIME)
        book = open_book(src)
        outcome = live.recalculate(book, run_time=RUN_TIME)
        out[which] = (openpyxl.load_workbook(target), book, outcome)
    return out


# --- one set of rules, two backends ------------------------------------------------------


@pytest.mark.parametrize("which", ["kestrel", "fenwick"])
def test_live_results_equal_the_file_backend_cell_for_cell(both, which):
    wb, book, outcome = both[which]
    assert outcome.ok and outcome.problems == [] and outcome.skipped == []
    assert book.app._alerts == []  # a run that works shows no message box
    # inputs, then the output sheets in order; the file backend also keeps its closure-window
    # search on a very hidden sheet, which the button does not (it searches on every press)
    assert book.sheet_names == [n for n in wb.sheetnames if n != CACHE_SHEET]
    assert book.sheets.active.name == wb.active.title == layout.SUMMARY
    for name in OUTPUTS:
        in_file = {k: c.value for k, c in wb[name]._cells.items() if c.value is not None}
        in_book = book._values(name)
        assert in_book == in_file, name
        assert len(in_file) > 10, name
    stamp = book._values(layout.RUN_LOG)
    assert RUN_TIME in stamp.values()


@pytest.mark.parametrize("which", ["kestrel", "fenwick"])
def test_live_run_leaves_every_input_cell_and_name_as_it_was(both, filled, which):
    _, book, _ = both[which]
    fresh = open_book(filled[which])
    for name in layout.INPUT_SHEETS:
        assert book._sheet(name)._cells == fresh._sheet(name)._cells, name
    inputs = {k: n._refers_to for k, n in fresh._names.items()}
    assert {k: book._names[k]._refers_to for k in inputs} == inputs


@pytest.mark.parametrize("which", ["kestrel", "fenwick"])
def test_live_looks_and_print_settings_follow_the_writer(both, which):
    wb, book, _ = both[which]
    for name in OUTPUTS:
        ws, sheet = wb[name], book._sheet(name)
        for (r, c), cell in ws._cells.items():
            mine = sheet._cells.get((r, c), Cell())
            if cell.value is not None:
                assert mine.number_format == cell.number_format, (name, cell.coordinate)
            solid = cell.fill.fill_type == "solid" and cell.fill.fgColor.type == "rgb"
            want = tuple(int(cell.fill.fgColor.rgb[-6:][i : i + 2], 16) for i in (0, 2, 4))
            assert mine.color == (want if solid else None), (name, cell.coordinate)
            assert mine.bold == bool(cell.font.b), (name, cell.coordinate)
        widths = {
            openpyxl.utils.column_index_from_string(k): d.width
            for k, d in ws.column_dimensions.items()
            if d.customWidth
        }
        assert {c: w for c, w in sheet._widths.items()} == pytest.approx(widths), name
        assert sheet._print_area == ws.print_area.split("!")[1], name
        titles = {n._name: n._refers_to for n in book._names.values()}
        if ws.print_title_rows:
            key = f"'{name}'!Print_Titles" if " " in name else f"{name}!Print_Titles"
            want = f"='{name}'!{ws.print_title_rows}"
            assert titles[key] == want
        assert sheet._gridlines == (ws.sheet_view.showGridLines is not False), name
    # the hours over a limit are filled, as in the file (the file backend's OVER rows)
    results = book._sheet(layout.RESULTS)
    over = [
        r for (r, c), cell in results._cells.items() if c == 1 and cell.color == (244, 204, 204)
    ]
    status = [r for r, v in _column(book, "Status").items() if v != "ok"]
    assert status and sorted(over) == sorted(status)


def _file_charts(ws) -> list[list[tuple]]:
    """Series of each chart in a file: (name cell, x values, values, kind), refs plain."""
    kinds = {  # openpyxl chart element -> the xlwings chart type the button must use
        "scatterChart": "xy_scatter_lines_no_markers",
        "barChart": "column_clustered",
        "lineChart": "line",
    }

    def plain(f):
        return None if f is None else f.replace("$", "").replace("'", "")

    out = []
    for chart in ws._charts:
        series = []
        for sub in chart._charts:
            for s in sub.series:
                y = (s.yVal or s.val).numRef.f
                x = s.xVal or s.cat
                xf = None if x is None else (x.numRef or x.strRef).f
                series.append((plain(s.tx.strRef.f), plain(xf), plain(y), kinds[sub.tagname]))
        out.append(series)
    return out


#: The queues of each example (one cumulative chart each). Ashgrove by hand from its
#: queue discharge rates (1,435 veh/h with two of three lanes closed at night, 3,336 with
#: one closed by day, 6,200 on the open road): Tuesday 865 + 365 = 1,230 veh at 23:00,
#: 994 at 00:00, 259 at 01:00, gone 259 / (1,435 - 480) h = 16 min later; Thursday 365,
#: then 130 at 00:00, gone 130 / (1,435 - 750) h = 11 min later; Saturday 997 at 18:00,
#: gone 997 / (6,200 - 3,100) h = 19 min later.
QUEUE_CHARTS = {
    "kestrel": ["Queue Tue 2027-05-04 22:00 to Wed 00:26"],
    "fenwick": ["Queue Sat 2027-06-12 09:00 to 18:20"],
    "ashgrove": [
        "Queue Tue 2027-09-07 21:00 to Wed 01:16",
        "Queue Thu 2027-09-09 22:00 to Fri 00:11",
        "Queue Sat 2027-09-11 10:00 to 18:19",
    ],
}


@pytest.mark.parametrize("which", ["kestrel", "fenwick", "ashgrove"])
def test_live_charts_read_the_same_cells_as_the_file_charts(both, which):
    wb, book, _ = both[which]
    for name in OUTPUTS:
        views = chart_views(book._sheet(name))
        assert [v.series for v in views] == _file_charts(wb[name]), name
    charts = chart_views(book._sheet(layout.CHARTS))
    # the queue chart: bars from the Results sheet, the limit line from the Charts sheet
    assert {s[2].split("!")[0] for s in charts[1].series} == {layout.RESULTS, layout.CHARTS}
    assert [v.title for v in charts] == [
        "Demand, capacity and queue discharge rate",
        "Longest queue by hour",
        *QUEUE_CHARTS[which],
    ]
    # each queue's chart: arrivals and departures over the same times, from the Charts sheet
    for view in charts[2:]:
        assert [s[3] for s in view.series] == ["xy_scatter_lines_no_markers"] * 2
        assert {s[2].split("!")[0] for s in view.series} == {layout.CHARTS}


def test_what_excel_cannot_do_is_skipped_and_listed_on_the_run_log(both, filled, monkeypatch):
    import fake_xlwings

    # macOS: the chart object has no SeriesCollection, so the limit line cannot be added
    monkeypatch.delattr(fake_xlwings._ComChart, "SeriesCollection")

    # a look Excel refuses to set
    def refuse(self, value):
        raise ValueError("Excel refused the alignment")

    monkeypatch.setattr(
        fake_xlwings.FakeRange, "horizontal_alignment", property(lambda self: None, refuse)
    )
    book = open_book(filled["kestrel"])
    outcome = live.recalculate(book, run_time=RUN_TIME)
    assert outcome.ok  # the values are written all the same
    _, done, _ = both["kestrel"]
    for name in OUTPUTS:
        if name != layout.RUN_LOG:
            assert book._values(name) == done._values(name), name
    assert any(
        s.startswith("Charts: chart 2: series 2 (NotImplementedError") for s in outcome.skipped
    )
    assert any("horizontal_alignment" in s and "Excel refused" in s for s in outcome.skipped)
    queue_chart = chart_views(book._sheet(layout.CHARTS))[1]
    assert [s[2] for s in queue_chart.series] == ["Results!J5:J76"]  # the bars only
    log = [v for (r, c), v in sorted(book._values(layout.RUN_LOG).items()) if c == 1]
    note = log.index(
        "Not carried into this workbook by the Recalculate button (wzq run writes them):"
    )
    assert log[note + 1 :] == [f"- {s}" for s in outcome.skipped]


def test_a_chart_excel_refuses_is_left_out_whole(both, filled, monkeypatch):
    import fake_xlwings

    def refuse(self, source):
        raise AttributeError("set_x_axis_values")  # as in an xlwings before 0.37

    monkeypatch.setattr(fake_xlwings.FakeChart, "set_x_axis_values", refuse)
    book = open_book(filled["fenwick"])
    outcome = live.recalculate(book, run_time=RUN_TIME)
    assert outcome.ok and book._values(layout.RESULTS)
    wb = both["fenwick"][0]
    expected = [f"{n}: chart {k}" for n in OUTPUTS for k in range(1, len(wb[n]._charts) + 1)]
    assert "Charts: chart 3" in expected
    for name in OUTPUTS:
        assert chart_views(book._sheet(name)) == [], name  # no half-built charts
    assert [s.split(" (")[0] for s in outcome.skipped] == expected


def test_source_blocks_follow_the_layout_of_the_series():
    def plan(kind, title, x, y):
        return SeriesPlan(kind, Ref.parse(title), Ref.parse(x), Ref.parse(y))

    by_columns = [
        plan("line", "'S'!B1", "'S'!A2:A9", "'S'!B2:B9"),
        plan("line", "'S'!C1", "'S'!A2:A9", "'S'!C2:C9"),
        plan("line", "'S'!D1", "'S'!A2:A8", "'S'!D2:D8"),  # other rows: not in the block
    ]
    n, source = source_group(by_columns)
    assert (n, source.plot_by, source.address) == (2, "columns", "$B$1:$C$9")
    n, source = source_group([plan("line", "'S'!B1", None, "'S'!B3:B9")])  # a gap row
    assert (n, source.address) == (1, "$B$1,$B$3:$B$9")
    by_rows = [  # names two columns to the left, as on the Closure windows sheet
        plan("column_clustered", "'W'!A21", "'W'!C20:Z20", "'W'!C21:Z21"),
        plan("column_clustered", "'W'!A22", "'W'!C20:Z20", "'W'!C22:Z22"),
    ]
    n, source = source_group(by_rows)
    assert (n, source.plot_by, source.address) == (2, "rows", "$A$21:$A$22,$C$21:$Z$22")
    mixed = [by_columns[0], plan("line", "'T'!C1", "'S'!A2:A9", "'T'!C2:C9")]
    assert source_group(mixed)[0] == 1  # the series on another sheet is added on its own
    formula = series_formula(mixed[1], 2)
    assert formula == "=SERIES('T'!$C$1,'S'!$A$2:$A$9,'T'!$C$2:$C$9,2)"


@pytest.mark.parametrize("which", ["kestrel", "fenwick"])
def test_the_mirror_reads_the_same_plan_as_the_file(filled, which):
    src = filled[which]
    book = open_book(src)
    # Excel gives a time-of-day cell as a datetime on 1899-12-30 (its automation date zero;
    # Microsoft's OLE Automation date, common practice): the stand-in does the same
    closures = book.sheets[layout.CLOSURES]
    start = closures.range("B6").value
    assert isinstance(start, dt.datetime) and start.date() == dt.date(1899, 12, 30)
    mirror = live.mirror_book(book)
    assert plan_to_dict(read_plan_from_book(mirror, src.name)) == plan_to_dict(read_plan(src))
    assert set(mirror.sheetnames) == set(book.sheet_names)


def test_a_time_in_a_number_cell_gives_the_same_message_in_both_backends(filled, tmp_path):
    src = tmp_path / "time.xlsx"
    src.write_bytes(filled["fenwick"].read_bytes())
    wb = openpyxl.load_workbook(src)
    sheet, coord = next(iter(wb.defined_names["site_lanes"].destinations))
    cell = wb[sheet][coord.replace("$", "")]
    cell.value = dt.time(21, 0)
    cell.number_format = "hh:mm"
    wb.save(src)
    with pytest.raises(wzq.PlanError) as from_file:
        read_plan(src)
    book = open_book(src)  # Excel gives this cell as 1899-12-30 21:00
    assert _named_cell(book, "site_lanes").value == dt.datetime(1899, 12, 30, 21, 0)
    with pytest.raises(wzq.PlanError) as from_live:
        read_plan_from_book(live.mirror_book(book), src.name)
    assert [str(p) for p in from_live.value.problems] == [str(p) for p in from_file.value.problems]
    assert "21:00" in str(from_live.value) and "1899" not in str(from_live.value)


# --- unsaved edits, problems, errors ----------------------------------------------------------


def _column(book: FakeBook, header: str) -> dict[int, object]:
    values = book._values(layout.RESULTS)
    col = next(c for (r, c), v in values.items() if r == RESULTS_HEADER_ROW and v == header)
    return {r: v for (r, c), v in values.items() if c == col and r > RESULTS_HEADER_ROW}


def test_an_unsaved_edit_counts(filled):
    src = filled["kestrel"]
    before_file = _digest(src)
    book = open_book(src)
    assert live.recalculate(book).ok
    demand = _column(book, "Demand (veh/h)")
    capacity = _column(book, "Capacity (veh/h)")
    queue = _column(book, "Longest queue (veh)")
    # the hour starting 22:00 on the first night (row 23 of the Results table's 0:00 start)
    row = RESULTS_HEADER_ROW + 1 + 22
    hour = book._values(layout.RESULTS)[(row, 1)]
    assert hour == dt.datetime(2027, 5, 3, 22, 0)
    table = book.sheets[layout.DEMAND].tables
    (counts,) = [t for t in table if t.name == layout.DEMAND_TABLE]
    top = counts.range.row
    cell = book.sheets[layout.DEMAND].range((top + 1 + 22, 3))
    assert cell.value == demand[row]  # the table row of that hour
    typed_in = capacity[row] + 1000
    cell.value = typed_in  # typed, not saved
    outcome = live.recalculate(book)
    assert outcome.ok
    assert _column(book, "Demand (veh/h)")[row] == typed_in
    # 1000 veh/h over capacity for an hour leaves about 1000 veh queued (deterministic D/D/1
    # queueing, common practice, no source)
    assert queue[row] == 0 and _column(book, "Longest queue (veh)")[row] >= 900
    assert _digest(src) == before_file  # nothing was saved anywhere


def _named_cell(book: FakeBook, name: str):
    sheet, _, ref = book._names[name]._refers_to.removeprefix("=").partition("!")
    return book.sheets[sheet].range(ref)


def test_input_problems_go_to_a_problems_sheet_and_a_message_box(filled):
    book = open_book(filled["kestrel"])
    lanes = _named_cell(book, "site_lanes")
    old = lanes.value
    lanes.value = None
    outcome = live.recalculate(book)
    assert outcome.result is None and [p.where for p in outcome.problems] == ["Site!B8"]
    assert not set(OUTPUTS) & set(book.sheet_names)  # nothing was written
    assert book.sheets.active.name == live.PROBLEMS_SHEET
    rows = book._values(live.PROBLEMS_SHEET)
    assert rows[(5, 1)] == "Site!B8" and "blank" in rows[(5, 2)]
    assert wzq.CAUTION in rows.values()
    (alert,) = book.app._alerts
    assert alert["title"] == "wzq: 1 problem in the inputs" and alert["mode"] == "critical"
    assert "Site!B8" in alert["prompt"] and "Traceback" not in alert["prompt"]
    # fixed: the results appear and wzq's problems sheet and its marker go away
    lanes.value = old
    assert live.recalculate(book).ok
    assert live.PROBLEMS_SHEET not in book.sheet_names
    assert live.PROBLEMS_MARKER not in book._names
    assert set(OUTPUTS) <= set(book.sheet_names)


def test_problems_after_a_run_keep_the_old_results_and_say_so(filled):
    book = open_book(filled["kestrel"])
    assert live.recalculate(book, run_time=RUN_TIME).ok
    results = book._values(layout.RESULTS)
    _named_cell(book, "site_speed_limit").value = "fast"
    outcome = live.recalculate(book)
    assert [p.where for p in outcome.problems] == ["Site!B9"]
    assert book._values(layout.RESULTS) == results
    note = book._values(live.PROBLEMS_SHEET)[(2, 1)]
    assert "still show the previous run" in note and layout.RESULTS in note


def test_a_sheet_too_large_to_read_is_a_problem_not_a_hang(filled, monkeypatch):
    book = open_book(filled["fenwick"])
    book.sheets[layout.START].range((30_000, 40)).value = "far away"  # stretches the used range
    monkeypatch.setattr(live, "LIMITS", dataclasses.replace(live.LIMITS, max_used_cells=1_000_000))
    outcome = live.recalculate(book)
    (problem,) = outcome.problems
    assert problem.where == f"sheet '{layout.START}'"
    assert "30,000 rows by 40 columns" in problem.message and "delete" in problem.message


def test_a_users_own_sheet_named_like_an_output_is_never_replaced(filled):
    book = open_book(filled["kestrel"])
    mine = book.sheets.add(layout.RESULTS, after=book.sheets[len(book.sheets) - 1])
    mine.range("A1").value = "my own notes"
    outcome = live.recalculate(book)
    assert [p.where for p in outcome.problems] == [f"sheet '{layout.RESULTS}'"]
    assert book._values(layout.RESULTS) == {(1, 1): "my own notes"}
    assert not {s for s in OUTPUTS if s != layout.RESULTS} & set(book.sheet_names)


def test_an_unexpected_error_is_a_message_and_a_traceback_on_the_run_log(filled, monkeypatch):
    book = open_book(filled["kestrel"])
    assert live.recalculate(book).ok  # a previous run: the Run log is wzq's own

    def boom(plan):
        raise RuntimeError("the engine fell over")

    monkeypatch.setattr(wzq, "analyse", boom)
    outcome = live.recalculate(book)  # must not raise
    assert outcome.error == "RuntimeError: the engine fell over"
    (alert,) = book.app._alerts
    assert "the engine fell over" in alert["prompt"] and alert["mode"] == "critical"
    log = book._values(layout.RUN_LOG)
    lines = [v for (r, c), v in sorted(log.items()) if c == 1]
    assert lines[0] == "Run log: wzq stopped with an unexpected error"
    assert "Traceback (most recent call last):" in lines
    assert any("the engine fell over" in line for line in lines)
    assert book.app.screen_updating is True and book.app.status_bar is False


def test_an_error_in_a_book_never_run_creates_a_run_log_wzq_owns(filled, monkeypatch):
    book = open_book(filled["fenwick"])
    monkeypatch.setattr(wzq, "analyse", lambda plan: 1 / 0)
    outcome = live.recalculate(book)
    assert outcome.error == "ZeroDivisionError: division by zero"
    assert live.owned_sheets(book) == [layout.RUN_LOG]
    monkeypatch.undo()
    assert live.recalculate(book).ok  # wzq may replace the Run log it wrote
    assert live.owned_sheets(book) == list(OUTPUTS)


def test_without_excel_the_entry_point_says_so_and_does_not_raise(capsys):
    outcome = live.recalculate()  # xlwings.Book.caller() has no workbook outside Excel
    assert outcome.error and outcome.result is None
    assert "wzq run" in capsys.readouterr().err


def test_pressing_twice_gives_the_same_sheets(filled):
    book = open_book(filled["fenwick"])
    assert live.recalculate(book, run_time=RUN_TIME).ok
    first = {name: book._values(name) for name in OUTPUTS}
    charts = [chart_views(book._sheet(n)) for n in OUTPUTS]
    assert live.recalculate(book, run_time=RUN_TIME).ok
    assert {name: book._values(name) for name in OUTPUTS} == first
    assert [chart_views(book._sheet(n)) for n in OUTPUTS] == charts
    assert book.sheet_names.count(layout.RESULTS) == 1
    assert len(book.sheet_names) == len(layout.INPUT_SHEETS) + len(OUTPUTS)


# --- text stays text --------------------------------------------------------------------------

SIGNS = {
    "meta_title": "=1+2 closure plan",
    "meta_route": "-Kestrel Ridge Parkway",
    "meta_notes": "@invented data, 21:00 start",
    "site_name": "+Kestrel Ridge",
}


def test_text_with_formula_signs_or_digits_stays_text(filled, tmp_path):
    src = tmp_path / "signs.xlsx"
    src.write_bytes(filled["fenwick"].read_bytes())
    wb = openpyxl.load_workbook(src)
    for name, text in SIGNS.items():
        sheet, coord = next(iter(wb.defined_names[name].destinations))
        cell = wb[sheet][coord.replace("$", "")]
        cell.value = text
        cell.data_type = "s"  # typed as text (Excel: with a leading apostrophe)
    wb.save(src)
    out = tmp_path / "signs-run.xlsx"
    run_workbook(src, out, run_time=RUN_TIME)
    book = open_book(src)
    assert live.recalculate(book, run_time=RUN_TIME).ok
    file_wb = openpyxl.load_workbook(out)
    seen = set()
    for name in OUTPUTS:
        values = book._values(name)
        assert not [v for v in values.values() if isinstance(v, Formula)], name
        want = {k: c.value for k, c in file_wb[name]._cells.items() if c.value is not None}
        assert values == want, name
        seen |= {t for t in SIGNS.values() for v in values.values() if str(v).startswith(t)}
    assert seen == set(SIGNS.values())


@pytest.mark.parametrize(
    ("text", "entered"),
    [
        ("pass", "pass"),
        ("OVER", "OVER"),
        ("=1+2", "'=1+2"),
        ("+Kestrel", "'+Kestrel"),
        ("-Ridge", "'-Ridge"),
        ("@risk", "'@risk"),
        ("'quoted'", "''quoted'"),
        ("21:00", "'21:00"),
        ("Mon 2027-05-03 21:00", "'Mon 2027-05-03 21:00"),
        ("TRUE", "'TRUE"),
        ("#N/A", "'#N/A"),
        ("", ""),
    ],
)
def test_excel_literal_prefixes_only_what_excel_would_read_otherwise(text, entered):
    # Excel: a leading apostrophe enters the rest as text (Excel's own convention, common
    # practice, no source)
    assert excel_literal(text) == entered


def test_the_stand_in_reads_typed_entries_as_excel_does():
    # without the apostrophe Excel would turn these into a time, a formula, a logical
    # (Excel's entry rules, common practice, from memory)
    assert typed("21:00") == (0.875, "h:mm")
    assert typed("=1+2") == (Formula("=1+2"), None)
    assert typed("-Ridge") == (Formula("=-Ridge"), None)
    assert typed("TRUE") == (True, None)
    assert typed("'21:00") == ("21:00", None)
    assert from_serial(1.0) == dt.datetime(1899, 12, 31)  # 24:00 read back


@settings(max_examples=examples(300), deadline=None)
@given(st.text(max_size=30))
def test_any_text_entered_through_excel_literal_comes_back_unchanged(text):
    stored, _ = typed(excel_literal(text)) if text else (text, None)
    assert stored == text


@settings(max_examples=examples(200), deadline=None)
@given(st.sets(st.tuples(st.integers(1, 12), st.integers(1, 8)), max_size=60))
def test_rectangles_cover_exactly_the_cells_without_overlap(cells):
    covered: list[tuple[int, int]] = []
    for r0, c0, r1, c1 in rectangles(cells):
        covered += [(r, c) for r in range(r0, r1 + 1) for c in range(c0, c1 + 1)]
    assert sorted(covered) == sorted(cells)  # equal as lists: no cell twice


def test_rectangles_of_a_banded_table_are_few():
    rows = range(5, 77)
    assert rectangles((r, c) for r in rows for c in range(3, 9)) == [(5, 3, 76, 8)]
    bands = rectangles((r, c) for r in rows if r % 2 for c in range(1, 18))
    assert len(bands) == 36 and all(rc[1] == 1 and rc[3] == 17 for rc in bands)


# --- the stand-in stays faithful to xlwings ----------------------------------------------------


def test_every_xlwings_attribute_the_backend_touches_exists_in_xlwings(filled, monkeypatch):
    TOUCHED.clear()
    book = open_book(filled["kestrel"])
    assert live.recalculate(book).ok  # a full run
    assert live.recalculate(book).ok  # replacing wzq's own sheets
    _named_cell(book, "site_lanes").value = None
    assert live.recalculate(book).problems  # the problems sheet
    monkeypatch.setattr(wzq, "analyse", lambda plan: 1 / 0)
    _named_cell(book, "site_lanes").value = 3
    assert live.recalculate(book).error  # the crash log
    monkeypatch.undo()
    import fake_xlwings

    monkeypatch.delattr(fake_xlwings._ComChart, "SeriesCollection")
    assert live.recalculate(book).skipped  # removes the problems sheet, notes what was skipped
    touched = set(TOUCHED)
    assert {
        ("Book", "sheets"),
        ("Book", "names"),
        ("Sheet", "used_range"),
        ("Range", "value"),
        ("Range", "options"),
        ("Range", "number_format"),
        ("Sheets", "add"),
        ("Sheet", "delete"),
        ("Table", "header_row_range"),
        ("Name", "refers_to"),
        ("Names", "add"),
        ("Charts", "add"),
        ("Chart", "set_source_data"),
        ("Chart", "set_x_axis_values"),
        ("Chart", "chart_type"),
        ("PageSetup", "print_area"),
        ("App", "alert"),
        ("Name", "delete"),
        ("Range", "last_cell"),
    } <= touched
    missing = sorted((cls, attr) for cls, attr in touched if not hasattr(getattr(xw, cls), attr))
    assert missing == []


def test_the_stand_in_offers_nothing_xlwings_lacks():
    for name, cls in STAND_INS.items():
        real = getattr(xw, name)
        public = {a for a, _ in inspect.getmembers(cls) if not a.startswith("_") and a != "XL"}
        assert {a for a in public if not hasattr(real, a)} == set(), name


# --- the entry module and the button's macro ----------------------------------------------------


def _macros(path: Path) -> dict[str, str]:
    with zipfile.ZipFile(path) as z:
        data = z.read("xl/vbaProject.bin")
    return {n: code for _, _, n, code in VBA_Parser("vba.bin", data=data).extract_macros()}


def _button_macros(path: Path) -> list[str]:
    with zipfile.ZipFile(path) as z:
        vml = [z.read(n).decode() for n in z.namelist() if n.endswith(".vml")]
    return [m for text in vml for m in re.findall(r"<x:FmlaMacro>([^<]*)</x:FmlaMacro>", text)]


def test_the_button_runs_the_entry_module_and_survives_wzq_run_twice(
    filled, tmp_path, monkeypatch, capsys
):
    src = tmp_path / "kestrel_button.xlsm"
    src.write_bytes(filled["kestrel"].read_bytes())
    assert main(["link", str(src)]) == 0
    assert f"wrote {entry_path(src)}" in capsys.readouterr().out
    for _ in range(2):
        assert main(["run", str(src)]) == 0
    # the macro (our module WzqButton in xlwings' standalone project) imports the module
    # named like the workbook and calls its main() through xlwings' RunPython, as the
    # quickstart's sample macro does; the Start sheet's button is assigned to it
    macros = _macros(src)
    code = macros["WzqButton.bas"]
    assert "Sub RecalculatePlan()" in code
    assert "entry = Left(ThisWorkbook.Name, InStrRev(ThisWorkbook.Name, " in code
    assert 'RunPython "import " & entry & ";" & entry & ".main()"' in code
    assert "Function RunPython(" in macros["xlwings.bas"]
    assert not any("SampleCall" in c for c in macros.values())
    assert _button_macros(src) == ["[0]!RecalculatePlan"]
    # what RunPython then does: the workbook's folder on the path, import, main()
    module = src.name[: src.name.rindex(".")]
    book = open_book(src)
    monkeypatch.syspath_prepend(str(tmp_path))
    monkeypatch.setattr(xlwings.Book, "caller", classmethod(lambda cls: book))
    monkeypatch.delitem(sys.modules, module, raising=False)
    entry = importlib.import_module(module)
    assert entry.main is live.main
    entry.main()
    sys.modules.pop(module, None)
    assert book._values(layout.RESULTS) and book.app._alerts == []
    assert live.PROBLEMS_SHEET not in book.sheet_names


def test_new_xlsm_writes_the_entry_module_and_explains_it(tmp_path, capsys):
    path = tmp_path / "kestrel_nights.xlsm"
    assert main(["new", str(path)]) == 0
    out = capsys.readouterr().out
    py = tmp_path / "kestrel_nights.py"
    assert sorted(tmp_path.iterdir()) == [py, path]
    text = py.read_text()
    assert text.splitlines()[0].startswith(ENTRY_MARKER)
    assert text.splitlines()[1] == "from wzq.io.live.backend import main  # noqa: F401"
    assert len(text.splitlines()) == 2
    assert f"wrote {py}" in out and "wzq link" in out and "desktop Excel" in out
    assert "wzq run kestrel_nights.xlsm" in out


def test_new_xlsx_writes_no_entry_module(tmp_path, capsys):
    assert main(["new", str(tmp_path / "Plan for May.xlsx")]) == 0  # any name will do
    assert [p.name for p in tmp_path.iterdir()] == ["Plan for May.xlsx"]


@pytest.mark.parametrize(
    ("name", "why", "suggestion"),
    [
        ("Kestrel Ridge.xlsm", "has a space", "Kestrel_Ridge.xlsm"),
        ("2027-05-closures.xlsm", "starts with a digit and has '-'", "plan_2027_05_closures.xlsm"),
        ("class.xlsm", "is a Python keyword", "class_plan.xlsm"),
        ("os.xlsm", "standard library", "os_plan.xlsm"),
        ("xlwings.xlsm", "the button itself needs", "xlwings_plan.xlsm"),
        ("numpy.xlsm", "installed Python package", "numpy_plan.xlsm"),
    ],
)
def test_new_refuses_names_python_cannot_import(tmp_path, capsys, name, why, suggestion):
    assert main(["new", str(tmp_path / name)]) == 2
    err = capsys.readouterr().err
    assert why in err and f"for example {tmp_path / suggestion}" in err
    assert "Traceback" not in err
    assert list(tmp_path.iterdir()) == []  # nothing written


def test_suggested_names_are_valid_module_names():
    for stem in ("Kestrel Ridge", "2027", "---", "für Amberfold", "import", "sys"):
        name = suggest_name(stem)
        assert re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", name), name
        assert name not in sys.stdlib_module_names


def test_new_never_overwrites_a_py_file_it_did_not_write(tmp_path, capsys):
    mine = tmp_path / "plan.py"
    mine.write_text("print('my own script')\n")
    assert main(["new", str(tmp_path / "plan.xlsm")]) == 2
    err = capsys.readouterr().err
    assert "not written by wzq" in err and "Traceback" not in err
    assert mine.read_text() == "print('my own script')\n"
    assert list(tmp_path.iterdir()) == [mine]


def test_link_after_a_rename(tmp_path, capsys):
    first = tmp_path / "plan.xlsm"
    assert main(["new", str(first)]) == 0
    renamed = tmp_path / "amberfold_nights.xlsm"
    first.rename(renamed)
    workbook = renamed.read_bytes()
    assert main(["link", str(renamed)]) == 0
    py = tmp_path / "amberfold_nights.py"
    assert "amberfold_nights.xlsm" in py.read_text().splitlines()[0]
    assert main(["link", str(renamed)]) == 0  # again: already in place
    assert "already in place" in capsys.readouterr().out
    assert renamed.read_bytes() == workbook  # the workbook is only read
    # an old entry module that wzq wrote may be rewritten
    py.write_text(ENTRY_MARKER + " (older wording)\nfrom wzq.io.live.backend import main\n")
    assert main(["link", str(renamed)]) == 0
    assert py.read_text().splitlines()[1].startswith("from wzq.io.live.backend import main")


@pytest.mark.parametrize(
    ("setup", "words"),
    [
        ("foreign", "not written by wzq"),
        ("xlsx", "only a macro workbook (.xlsm)"),
        ("missing", "no such workbook"),
        ("no_macros", "holds no macros"),
        ("bad_name", "has a space"),
    ],
)
def test_link_refusals(tmp_path, capsys, setup, words):
    plain = tmp_path / "fresh.xlsx"
    assert main(["new", str(plain)]) == 0
    macro = tmp_path / "fresh_macro.xlsm"
    assert main(["new", str(macro)]) == 0
    capsys.readouterr()
    if setup == "foreign":
        target = tmp_path / "other.xlsm"
        target.write_bytes(macro.read_bytes())
        (tmp_path / "other.py").write_text("x = 1\n")
    elif setup == "xlsx":
        target = plain
    elif setup == "missing":
        target = tmp_path / "gone.xlsm"
    elif setup == "no_macros":
        target = tmp_path / "nomacros.xlsm"
        target.write_bytes(plain.read_bytes())
    else:
        target = tmp_path / "two words.xlsm"
        target.write_bytes(macro.read_bytes())
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    assert main(["link", str(target)]) == 2
    err = capsys.readouterr().err
    assert words in err and "Traceback" not in err
    assert {p.name: p.read_bytes() for p in tmp_path.iterdir()} == before


def test_a_dotted_workbook_name_is_refused(tmp_path, capsys):
    # the VBA takes everything before the last dot as the module name: `import plan.v2`
    # would look for a package `plan`
    assert main(["new", str(tmp_path / "plan.v2.xlsm")]) == 2
    err = capsys.readouterr().err
    assert "has '.'" in err and f"for example {tmp_path / 'plan_v2.xlsm'}" in err
    assert list(tmp_path.iterdir()) == []


def test_case_02_percent_sign_cells_read_the_same_live(filled, tmp_path):
    """Issue 14, case 2 on the live backend: a value Excel shows as 8 % (held as 0.08 in a
    percent-formatted cell) is 8 %, as the file reader reads it."""
    src = tmp_path / "pct.xlsx"
    wb = openpyxl.load_workbook(filled["fenwick"])
    sheet, coord = next(iter(wb.defined_names["site_heavy_vehicle_percent"].destinations))
    cell = wb[sheet][coord.replace("$", "")]
    cell.value, cell.number_format = 0.12, "0%"
    wb.save(src)
    from_file = read_plan(src)
    from_live = read_plan_from_book(live.mirror_book(open_book(src)), src.name)
    assert from_file.site.heavy_vehicle_share == pytest.approx(0.12)
    assert from_live.site.heavy_vehicle_share == pytest.approx(0.12)
    assert not [w for w in from_live.input_warnings if "did you mean" in w]


def test_a_ramp_share_in_a_percent_cell_reads_the_same_live(filled, tmp_path):
    """A ramp's share typed as 6 % on the Approach sheet (held as 0.06 in a percent cell)
    is 6 % of the mainline flow live as from the file."""
    src = tmp_path / "ramp.xlsx"
    wb = openpyxl.load_workbook(filled["fenwick"])
    ws, table = find_table(wb, layout.LANDMARK_TABLE)
    first = ws[table.ref.split(":")[0]].row + 1
    for col, value in enumerate(("Holt Road on-ramp", 0.4, "entrance ramp", 0.06), start=1):
        ws.cell(first, col, value)
    ws.cell(first, 4).number_format = "0%"
    wb.save(src)
    from_file = read_plan(src)
    from_live = read_plan_from_book(live.mirror_book(open_book(src)), src.name)
    for plan in (from_file, from_live):
        (ramp,) = plan.approach.landmarks
        assert ramp.ramp_share == pytest.approx(0.06)
    assert not [w for w in from_live.input_warnings if "did you mean" in w]


def test_the_button_draws_the_space_time_picture_when_the_site_sheet_asks(both):
    # Ashgrove's Site sheet says yes to the space-time check (kestrel's says no): the
    # button places the picture where the file backend does, at the same size
    wb, book, outcome = both["ashgrove"]
    assert outcome.ok and outcome.skipped == []
    (picture,) = book.sheets[layout.CHARTS]._pictures
    (image,) = wb[layout.CHARTS]._images
    anchor = image.anchor._from  # zero-based row and column of the file's picture
    cell = book.sheets[layout.CHARTS].range((anchor.row + 1, anchor.col + 1))
    assert picture._geometry[:2] == (cell.left, cell.top)
    # as wide as the writer shows it (its WIDTH_PX, 0.75 points to the pixel), aspect kept
    width, height = picture._geometry[2:]
    assert width == pytest.approx(WIDTH_PX * 0.75)
    assert height / width == pytest.approx(image.height / image.width, rel=0.01)
    assert picture._data[:8] == b"\x89PNG\r\n\x1a\n"
    _, plain, _ = both["kestrel"]
    assert plain.sheets[layout.CHARTS]._pictures == []
