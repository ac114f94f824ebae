"""The workbook writer: output sheets, charts, permit table, marker, atomic save.

These tests write into plain openpyxl workbooks (no template needed) and read
the saved file back, as a user's spreadsheet program would see it.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import json
import os
import re
import stat
import zipfile
from itertools import pairwise
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from openpyxl.chart import BarChart, ScatterChart
from openpyxl.comments import Comment
from openpyxl.styles import Font, PatternFill

import wzq
from wzq.io.jsonplan import load_plan, plan_to_dict
from wzq.io.workbook import charts, layout
from wzq.io.workbook import writer as w
from wzq.io.workbook.outputs import write_results
from wzq.io.workbook.save import check_writable, lock_file, save_atomic
from wzq.present.tables import hourly_display

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
FENWICK = EXAMPLES / "fenwick_downs_weekend.json"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"
RUN_TIME = "2027-01-01T00:00:00Z"


def _write(plan_path: Path, out: Path, *, run_time: str = RUN_TIME) -> wzq.Result:
    result = wzq.analyse(load_plan(plan_path))
    book = openpyxl.Workbook()
    book.active.title = "My inputs"
    book.active["A1"] = "kept"
    write_results(book, result, source=plan_path.name, run_time=run_time)
    save_atomic(book, out)
    return result


@pytest.fixture(scope="module")
def fenwick(tmp_path_factory) -> tuple[wzq.Result, openpyxl.Workbook, Path]:
    out = tmp_path_factory.mktemp("fenwick") / "fenwick.xlsx"
    result = _write(FENWICK, out)
    return result, openpyxl.load_workbook(out), out


@pytest.fixture(scope="module")
def kestrel(tmp_path_factory) -> tuple[wzq.Result, openpyxl.Workbook, Path]:
    out = tmp_path_factory.mktemp("kestrel") / "kestrel.xlsx"
    result = _write(KESTREL, out)
    return result, openpyxl.load_workbook(out), out


def _table(ws, header_row: int) -> tuple[list[str], list[tuple]]:
    rows = list(ws.iter_rows(min_row=header_row, values_only=True))
    header = list(rows[0])
    body = []
    for row in rows[1:]:
        if row[0] is None:
            break
        body.append(row)
    return header, body


def _column(ws, header_row: int, name: str) -> list:
    header, body = _table(ws, header_row)
    j = header.index(name)
    return [r[j] for r in body]


# --- Results sheet ----------------------------------------------------------------------


def test_sheets_are_appended_in_order_after_the_users_sheets(fenwick):
    _, book, _ = fenwick
    assert book.sheetnames == ["My inputs", *layout.OUTPUT_SHEETS]
    assert book["My inputs"]["A1"].value == "kept"
    assert layout.written_sheets(book) == list(layout.OUTPUT_SHEETS)
    # one tab selected only (several selected tabs open as a group in Excel)
    assert [ws.title for ws in book.worksheets if ws.sheet_view.tabSelected] == [layout.SUMMARY]


@pytest.mark.parametrize("which", ["fenwick", "kestrel"])
def test_results_sheet_matches_the_display_table(which, request):
    result, book, _ = request.getfixturevalue(which)
    ws = book[layout.RESULTS]
    header, body = _table(ws, w.RESULTS_HEADER_ROW)
    shown = hourly_display(result)
    assert len(body) == len(shown) == len(result.hourly)
    for col in shown.columns:
        got = [r[header.index(col)] for r in body]
        if col == "Hour":
            want = [t.to_pydatetime() for t in result.hourly["hour_start"]]
        else:
            want = shown[col].tolist()
        assert got == want, col
    # numbers are stored as numbers with a number format, not as text
    c = ws.cell(w.RESULTS_HEADER_ROW + 1, header.index("Demand (veh/h)") + 1)
    assert isinstance(c.value, int) and c.number_format == "#,##0"
    c = ws.cell(w.RESULTS_HEADER_ROW + 1, header.index("Demand / capacity") + 1)
    assert c.number_format == "#,##0.00"
    assert ws.cell(w.RESULTS_HEADER_ROW + 1, 1).number_format == w.DATE_FORMAT
    assert ws.freeze_panes == f"B{w.RESULTS_HEADER_ROW + 1}"


def test_results_demand_is_the_plans_input(fenwick):
    _, book, _ = fenwick
    demand = _column(book[layout.RESULTS], w.RESULTS_HEADER_ROW, "Demand (veh/h)")
    raw = json.loads(FENWICK.read_text())["demand"]["veh_h"]
    assert demand == raw


def test_results_capacity_matches_hand_calculation_fenwick(fenwick):
    """Closure hours: 2 -> 1 lanes, cones, rural, 0.6 m (1.97 ft) lateral, daytime,
    15 % heavy vehicles on rolling terrain, balanced drivers.

    HCM 7th ed. ch. 10 (work-zone QDR equation and c = 100 QDR / (100 - alpha)),
    ch. 12 heavy-vehicle factor (E_T 3.0 rolling), ch. 26 Exhibit 26-9 driver
    factor 0.939 (transcription, medium confidence; see REFERENCES.md):
    LCSI = 1 / (0.5 * 1) = 2.0;
    QDR = 2093 - 154*2 - 194 - 179 + 9*1.9685 = 1429.7 pc/h/ln;
    f_HV = 1 / (1 + 0.15 * 2) = 0.7692; QDR = 1429.7 * 0.7692 * 0.939 = 1,033 veh/h;
    c = 1429.7 / 0.866 * 0.7692 * 0.939 = 1,192 veh/h.
    Open road: FFS 110 km/h + 5 mi/h = 73.4 mi/h -> 2,400 pc/h/ln (ch. 12 cap),
    2 lanes * 2400 * 0.7692 * 0.939 = 3,467 veh/h.
    """
    _, book, _ = fenwick
    ws = book[layout.RESULTS]
    header, body = _table(ws, w.RESULTS_HEADER_ROW)
    cap = header.index("Capacity (veh/h)")
    qdr = header.index("Queue discharge rate (veh/h)")
    lanes = header.index("Lanes open")
    closed = [r for r in body if r[lanes] == 1]
    assert len(closed) == 10  # 07:00 to 17:00
    assert {r[cap] for r in closed} == {1192}
    assert {r[qdr] for r in closed} == {1033}
    assert {r[cap] for r in body if r[lanes] == 2} == {3467}


def test_results_capacity_matches_hand_calculation_kestrel(kestrel):
    """Night 1: 3 -> 2 lanes, cones, urban, 2 ft lateral, night, 8 % heavy
    vehicles on level terrain, commuters (HCM 7th ed. ch. 10 and ch. 12):
    LCSI = 1 / ((2/3) * 2) = 0.75; QDR = 2093 - 115.5 - 194 + 18 - 59 = 1742.5 pc/h/ln;
    f_HV = 1/1.08; two lanes: 2 * 1742.5 / 1.08 = 3,227 veh/h;
    c = 3,227 / 0.866 = 3,726 veh/h.
    """
    _, book, _ = kestrel
    header, body = _table(book[layout.RESULTS], w.RESULTS_HEADER_ROW)
    hour = header.index("Hour")
    night1 = [
        r for r in body if dt.datetime(2027, 5, 3, 21) <= r[hour] < dt.datetime(2027, 5, 4, 5)
    ]
    assert len(night1) == 8
    assert {r[header.index("Capacity (veh/h)")] for r in night1} == {3726}
    assert {r[header.index("Queue discharge rate (veh/h)")] for r in night1} == {3227}
    assert {r[header.index("Closure")] for r in night1} == {1}
    assert {r[header.index("Lanes open")] for r in night1} == {2}


def test_results_queue_follows_input_output_arithmetic(fenwick):
    """Deterministic queueing (D/D/1, the input-output diagram; May, Traffic Flow
    Fundamentals, 1990, ch. 11, from memory): in the first queued hour the queue
    grows by demand minus discharge; over the whole period arrivals equal
    departures plus the queue left standing.
    """
    _, book, _ = fenwick
    header, body = _table(book[layout.RESULTS], w.RESULTS_HEADER_ROW)
    col = {name: header.index(name) for name in header}
    first = next(r for r in body if r[col["Queue at end of hour (veh)"]] > 0)
    assert first[col["Hour"]] == dt.datetime(2027, 6, 12, 9)
    grow = first[col["Demand (veh/h)"]] - first[col["Queue discharge rate (veh/h)"]]
    assert first[col["Queue at end of hour (veh)"]] == grow == 227
    arrivals = sum(r[col["Demand (veh/h)"]] for r in body)
    departures = sum(r[col["Departures (veh)"]] for r in body)
    left = body[-1][col["Queue at end of hour (veh)"]]
    assert abs(arrivals - departures - left) <= 0.5 * len(body)
    # the queue clears in the hour after the closure: 2,688 - (3,224 - 1,260) = 724 at 18:00
    at18 = next(r for r in body if r[col["Hour"]] == dt.datetime(2027, 6, 12, 17))
    assert at18[col["Queue at end of hour (veh)"]] == 2688 - (3224 - 1260)


def test_failing_hours_are_filled_and_bold(fenwick):
    _, book, _ = fenwick
    ws = book[layout.RESULTS]
    header, body = _table(ws, w.RESULTS_HEADER_ROW)
    status = header.index("Status")
    over_rows = [i for i, r in enumerate(body) if r[status] != "ok"]
    assert len(over_rows) == 9
    for i in range(len(body)):
        cell = ws.cell(w.RESULTS_HEADER_ROW + 1 + i, status + 1)
        if i in over_rows:
            assert cell.value.startswith("over limit")
            assert cell.font.b
            assert cell.fill.fgColor.rgb.endswith(w.OVER_FILL.fgColor.rgb[-6:])
        else:
            assert cell.fill.fgColor.rgb[-6:] != w.OVER_FILL.fgColor.rgb[-6:]


# --- Permit table -----------------------------------------------------------------------


def _permit_header_row(ws) -> int:
    for row in ws.iter_rows(min_col=1, max_col=1):
        if row[0].value == "Hour":
            return row[0].row
    raise AssertionError("no header row")


def test_permit_table_page_setup(fenwick):
    _, book, _ = fenwick
    ws = book[layout.PERMIT_TABLE]
    hr = _permit_header_row(ws)
    assert ws.page_setup.orientation == "landscape"
    assert ws.sheet_properties.pageSetUpPr.fitToPage
    assert ws.page_setup.fitToWidth == 1
    assert ws.page_setup.fitToHeight == 0
    assert ws.page_setup.paperSize == 9  # A4 for a metric plan (OOXML paper code 9)
    assert ws.print_title_rows == f"${hr}:${hr}"
    assert "&P" in ws.oddFooter.center.text and "&N" in ws.oddFooter.center.text
    area = ws.print_area
    assert re.fullmatch(r"'Permit table'!\$A\$1:\$O\$\d+", area), area
    last = int(area.rsplit("$", 1)[1])
    texts = [c.value for row in ws.iter_rows(min_row=hr, max_row=last, max_col=1) for c in row]
    assert wzq.CAUTION in texts
    assert ws.sheet_view.showGridLines is False


def test_permit_table_pass_fail_against_the_limits(fenwick):
    """Limits 2.00 km and 20 min/veh (the plan's); OVER exactly where the shown value
    exceeds the limit (checked here on the printed numbers, independent of the engine).
    """
    _, book, _ = fenwick
    ws = book[layout.PERMIT_TABLE]
    hr = _permit_header_row(ws)
    header, body = _table(ws, hr)
    q = header.index("Longest queue (km)")
    d = header.index("Average delay (min/veh)")
    qc = header.index("Queue limit 2.00 km")
    dc = header.index("Delay limit 20.0 min/veh")
    res = header.index("Hour result")
    assert header[res] == header[-1]
    # closure hours 07:00-16:00 plus the two hours the queue takes to clear
    assert body[0][0] == "Sat 2027-06-12 07:00"
    assert body[-1][0] == "Sat 2027-06-12 18:00"
    assert len(body) == 12
    for k, r in enumerate(body):
        assert r[qc] == ("OVER" if r[q] > 2.00 else "pass")
        assert r[dc] == ("OVER" if r[d] > 20.0 else "pass")
        assert r[res] == ("OVER" if "OVER" in (r[qc], r[dc]) else "pass")
        for j in (qc, dc, res):
            cell = ws.cell(hr + 1 + k, j + 1)
            if cell.value == "OVER":
                assert cell.font.b and cell.fill.fgColor.rgb[-6:] == "F4CCCC"
    assert sum(r[res] == "OVER" for r in body) == 9


def test_permit_table_title_block_lists_closures_and_limits(kestrel):
    result, book, _ = kestrel
    ws = book[layout.PERMIT_TABLE]
    texts = [c.value for row in ws.iter_rows(max_col=2) for c in row if isinstance(c.value, str)]
    closures = [t for t in texts if t.startswith("Closure ")]
    assert closures == [
        "Closure 1: Mon 2027-05-03 21:00 to Tue 2027-05-04 05:00; 1 of 3 lanes closed, "
        "cones or drums. Night 1: right lane, joint saw-cut",
        "Closure 2: Tue 2027-05-04 22:00 to Wed 2027-05-05 05:00; 2 of 3 lanes closed, "
        "cones or drums. Night 2: two lanes, joint replacement",
    ]
    assert "Queue length: 1.00 mi; Average delay: 15.0 min/veh; Demand / capacity: none" in texts
    assert ws.page_setup.paperSize == 1  # Letter for a US customary plan (OOXML code 1)
    stamp = next(t for t in texts if t.startswith("Computed by wzq"))
    assert RUN_TIME in stamp and w.input_fingerprint(result.plan)[:16] in stamp


def test_permit_table_breaks_pages_every_so_many_hours(tmp_path):
    """A week with a closure every night: 7 nights x 8 hours = 56 listed hours."""
    plan = _week_plan()
    book = openpyxl.Workbook()
    refs = write_results(book, wzq.analyse(plan), run_time=RUN_TIME)
    ws = book[layout.PERMIT_TABLE]
    ref = refs[layout.PERMIT_TABLE]
    assert ref.last_row - ref.first_row + 1 == 56
    n = w.PERMIT_ROWS_PER_PAGE
    assert [b.id for b in ws.row_breaks.brk] == [ref.first_row + n - 1, ref.first_row + 2 * n - 1]


def _week_plan() -> wzq.Plan:
    base = load_plan(KESTREL)
    day = [float(v) for v in json.loads(KESTREL.read_text())["demand"]["veh_h"][:24]]
    start = dt.datetime(2027, 5, 3)
    closures = tuple(
        wzq.Closure(
            start=start + dt.timedelta(days=d, hours=21),
            end=start + dt.timedelta(days=d + 1, hours=5),
            lanes_closed=1,
        )
        for d in range(7)
    )
    return dataclasses.replace(
        base,
        demand=wzq.Demand(start, 3600, np.array(day * 8)),
        closures=closures,
    )


# --- Summary and Run log ----------------------------------------------------------------


def test_summary_sheet_has_the_headline_lines_warnings_and_caution(fenwick):
    result, book, _ = fenwick
    ws = book[layout.SUMMARY]
    values = [c.value for row in ws.iter_rows() for c in row if c.value is not None]
    lines = dict(pairwise(values))
    # 2,688 veh by hand: demand 09:00-17:00 sums to 10,950 veh, the queue discharges
    # at 1,032.7 veh/h (HCM 7th ed. ch. 10, see the capacity test above):
    # 10,950 - 8 * 1,032.7 = 2,688 at 17:00, when the closure ends
    assert lines["Most vehicles queued"] == "2,688 veh, at Sat 2027-06-12 17:00"
    km = float(lines["Longest queue"].split()[0])
    longest = _column(book[layout.RESULTS], w.RESULTS_HEADER_ROW, "Longest queue (km)")
    assert km == max(longest)  # the same rounded number as the hourly table
    assert lines["Last queue clears"] == "Sat 2027-06-12 18:20"  # see the clearing test below
    # eight hours of overload, the queue beyond the advance warning signs, one lane
    # open on rolling terrain
    assert len(result.warnings) == 3
    for warning in result.warnings:
        assert warning in values
    assert wzq.CAUTION in values


def test_run_log_records_version_time_fingerprint_and_source(fenwick):
    result, book, _ = fenwick
    ws = book[layout.RUN_LOG]
    log = {r[0]: r[1] for r in ws.iter_rows(min_row=3, max_col=2, values_only=True) if r[0]}
    assert log["Tool"] == f"wzq {wzq.__version__}"
    assert ws[w.RUN_TIME_CELL].value == log["Run at (UTC)"] == RUN_TIME
    assert log["Source file"] == FENWICK.name
    assert log["Input fingerprint (SHA-256)"] == w.input_fingerprint(result.plan)
    assert log["Hours analysed"] == 48
    assert log["Warnings"] == 3
    assert wzq.CAUTION in [r[0] for r in ws.iter_rows(values_only=True)]


def test_fingerprint_is_sha256_of_the_sorted_plan_json_and_tracks_inputs():
    plan = load_plan(KESTREL)
    text = json.dumps(plan_to_dict(plan), sort_keys=True, separators=(",", ":"))
    assert w.input_fingerprint(plan) == hashlib.sha256(text.encode()).hexdigest()
    assert w.input_fingerprint(load_plan(KESTREL)) == w.input_fingerprint(plan)
    flows = plan.demand.flows_veh_h.copy()
    flows[5] += 1
    other = dataclasses.replace(plan, demand=wzq.Demand(plan.demand.start, 3600, flows))
    assert w.input_fingerprint(other) != w.input_fingerprint(plan)
    styled = dataclasses.replace(plan, meta=dataclasses.replace(plan.meta, notes="changed"))
    assert w.input_fingerprint(styled) != w.input_fingerprint(plan)


# --- Charts -----------------------------------------------------------------------------


def test_three_native_charts_with_axis_titles_and_units(fenwick):
    _, book, path = fenwick
    ws = book[layout.CHARTS]
    with zipfile.ZipFile(path) as z:
        names = [n for n in z.namelist() if n.startswith("xl/charts/chart")]
        xml = {n: z.read(n).decode() for n in names}
    # three on the Charts sheet (one queue, so one cumulative chart), one (hours
    # allowed) on the Closure windows sheet
    assert len(names) == 4
    assert len(ws._charts) == 3
    joined = " ".join(x for x in xml.values() if "Closure windows" not in x)
    for title in (
        "Demand, capacity and queue discharge rate",
        "Longest queue by hour",
        "Queue Sat 2027-06-12 09:00 to 18:20",  # the queue's own chart
        "Flow (veh/h)",
        "Longest queue (km)",
        "Vehicles since Sat 08:00",  # counted from an hour before the queue forms
        "Time (local clock)",
    ):
        assert title in joined, title
    # the queue columns read the Results sheet itself
    header, _ = _table(book[layout.RESULTS], w.RESULTS_HEADER_ROW)
    col = openpyxl.utils.get_column_letter(header.index("Longest queue (km)") + 1)
    first, last = w.RESULTS_HEADER_ROW + 1, w.RESULTS_HEADER_ROW + 48
    assert f"'Results'!${col}${first}:${col}${last}" in joined
    assert joined.count("<scatterChart>") == 2 and joined.count("<barChart>") == 1
    assert ws.title == layout.CHARTS


def test_chart_objects_are_built_from_sheet_cells(fenwick):
    result, _, _ = fenwick
    book = openpyxl.Workbook()
    write_results(book, result, run_time=RUN_TIME)
    made = book[layout.CHARTS]._charts
    assert [type(c) for c in made] == [ScatterChart, BarChart, ScatterChart]
    for chart in made:
        assert chart.x_axis.delete is False and chart.y_axis.delete is False


def test_step_data_for_demand_and_capacity(fenwick):
    """Two points per hour (start and end), holding that hour's shown values."""
    _, book, _ = fenwick
    ws = book[layout.CHARTS]
    r0 = charts.DATA_HEADER_ROW + 1
    rows = list(
        ws.iter_rows(
            min_row=r0, max_row=r0 + 2 * 48 - 1, min_col=charts.STEP_COL,
            max_col=charts.STEP_COL + 2, values_only=True,
        )
    )  # fmt: skip
    demand = _column(book[layout.RESULTS], w.RESULTS_HEADER_ROW, "Demand (veh/h)")
    capacity = _column(book[layout.RESULTS], w.RESULTS_HEADER_ROW, "Capacity (veh/h)")
    start = dt.datetime(2027, 6, 12)
    for i in range(48):
        a, b = rows[2 * i], rows[2 * i + 1]
        assert a[0] == start + dt.timedelta(hours=i)
        assert b[0] == start + dt.timedelta(hours=i + 1)
        assert a[1] == b[1] == demand[i]
        assert a[2] == b[2] == capacity[i]
    assert ws.cell(r0 + 96, charts.STEP_COL).value is None


def test_cumulative_points_include_the_exact_clearing_instant(fenwick):
    """The queue left at 18:00 (724 veh, 2,688 - 1,964) drains at 3,224 - 1,100 =
    2,124 veh/h, so it clears 724 / 2,124 h = 20.45 min after 18:00 (input-output
    arithmetic on the shown hourly values; D/D/1 queueing, May 1990 ch. 11, from memory).
    """
    result, _, _ = fenwick
    pts = charts.cumulative_points(result)
    gap = (pts["arrivals"] - pts["departures"]).to_numpy()
    assert np.all(gap >= -1e-6)
    clear = pts[(np.abs(gap) < 1e-6) & (pts["time"] > "2027-06-12 18:00")].iloc[0]
    expected = dt.datetime(2027, 6, 12, 18) + dt.timedelta(hours=724 / 2124)
    assert abs((clear["time"] - expected).total_seconds()) < 60
    # window, on whole hours: an hour before the queue forms (09:00) to the hour
    # after the one in which it clears
    assert pts["time"].iloc[0] == dt.datetime(2027, 6, 12, 8)
    assert pts["time"].iloc[-1] == dt.datetime(2027, 6, 12, 20)
    # arrivals by 08:00 are the demand of hours 00:00-07:00 (the plan's input)
    raw = json.loads(FENWICK.read_text())["demand"]["veh_h"]
    assert pts["arrivals"].iloc[0] == pytest.approx(sum(raw[:8]))
    assert pts["departures"].iloc[0] == pytest.approx(sum(raw[:8]))


# --- text stays text --------------------------------------------------------------------


FORMULA_LIKE = {
    "title": '=HYPERLINK("http://example.invalid","x")',
    "project": "+1+1",
    "route": "-A1",
    "notes": "@SUM(A1:A2)",
    "site": "=1+2",
    "direction": "-northbound",
    "note": "=cmd|' /C calc'!A0",
}


def test_user_text_that_looks_like_a_formula_is_written_as_text(tmp_path):
    base = load_plan(KESTREL)
    t = FORMULA_LIKE
    plan = dataclasses.replace(
        base,
        meta=dataclasses.replace(
            base.meta, title=t["title"], project=t["project"], route=t["route"], notes=t["notes"]
        ),
        site=dataclasses.replace(base.site, name=t["site"], direction=t["direction"]),
        closures=(dataclasses.replace(base.closures[0], note=t["note"]), base.closures[1]),
    )
    book = openpyxl.Workbook()
    write_results(book, wzq.analyse(plan), source="=evil.xlsx", run_time=RUN_TIME)
    out = tmp_path / "text.xlsx"
    save_atomic(book, out)
    with zipfile.ZipFile(out) as z:
        sheets = [n for n in z.namelist() if n.startswith("xl/worksheets/sheet")]
        xml = "".join(z.read(n).decode() for n in sheets)
    assert "<f>" not in xml and "<f " not in xml  # wzq writes no formulas at all
    back = openpyxl.load_workbook(out)
    found = {}
    for ws in back.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, str) and c.value in t.values():
                    assert c.data_type == "s", (ws.title, c.coordinate)
                    found[c.value] = ws.title
    for key in ("title", "project", "route", "notes"):
        assert t[key] in found, key
    assert back[layout.RUN_LOG]["B5"].value == "=evil.xlsx"
    assert back[layout.RUN_LOG]["B5"].data_type == "s"


def test_put_text_keeps_a_leading_equals_sign_as_text():
    ws = openpyxl.Workbook().active
    cell = w.put_text(ws, 1, 1, "=SUM(A2:A3)")
    assert cell.data_type == "s" and cell.value == "=SUM(A2:A3)"
    assert w.put_text(ws, 1, 2, 12).data_type == "n"


def test_footer_text_escapes_ampersands():
    assert w._footer_text("Smith & Sons &P") == "Smith && Sons &&P"


# --- running twice, the marker, preservation in a plain workbook -----------------------


def _contents(book: openpyxl.Workbook) -> dict[str, list[tuple]]:
    return {ws.title: list(ws.iter_rows(values_only=True)) for ws in book.worksheets}


def test_running_twice_gives_the_same_workbook(tmp_path):
    result = wzq.analyse(load_plan(FENWICK))
    path = tmp_path / "twice.xlsx"
    book = openpyxl.Workbook()
    book.active["B2"] = "=1+1"
    save_atomic(book, path)
    snapshots = []
    for stamp in ("2027-01-01T00:00:00Z", "2027-01-02T09:30:00Z"):
        book = openpyxl.load_workbook(path)
        write_results(book, result, source="twice.xlsx", run_time=stamp)
        save_atomic(book, path)
        back = openpyxl.load_workbook(path)
        assert back[layout.RUN_LOG][w.RUN_TIME_CELL].value == stamp
        back[layout.RUN_LOG][w.RUN_TIME_CELL].value = None
        stamp_cells = []
        for ws in back.worksheets:
            for row in ws.iter_rows():
                for c in row:
                    if isinstance(c.value, str) and stamp in c.value:
                        stamp_cells.append((ws.title, c.coordinate))
                        c.value = c.value.replace(stamp, "")
        assert stamp_cells == [(layout.PERMIT_TABLE, stamp_cells[0][1])]
        snapshots.append((back.sheetnames, _contents(back), len(back[layout.CHARTS]._charts)))
    assert snapshots[0] == snapshots[1]
    assert snapshots[0][0] == ["Sheet", *layout.OUTPUT_SHEETS]
    assert snapshots[0][2] == 3


def test_a_users_sheet_with_an_output_name_is_never_replaced():
    book = openpyxl.Workbook()
    book.create_sheet("Results")["A1"] = "my own notes"
    book.create_sheet("Run log")
    with pytest.raises(wzq.PlanError) as e:
        write_results(book, wzq.analyse(load_plan(KESTREL)))
    wheres = [p.where for p in e.value.problems]
    assert wheres == ["sheet 'Results'", "sheet 'Run log'"]
    assert "rename it" in e.value.problems[0].message
    assert book.sheetnames == ["Sheet", "Results", "Run log"]
    assert book["Results"]["A1"].value == "my own notes"


def test_user_cells_styles_comments_validation_and_names_survive_in_a_plain_book(tmp_path):
    from openpyxl.workbook.defined_name import DefinedName
    from openpyxl.worksheet.datavalidation import DataValidation

    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Inputs"
    ws["A1"] = 40
    ws["A2"] = "=A1*2"
    ws["A1"].font = Font(bold=True, color="FF0000")
    ws["A1"].fill = PatternFill("solid", fgColor="FFFF00")
    ws["A1"].comment = Comment("typed by the designer", "designer")
    dv = DataValidation(type="list", formula1='"yes,no"')
    ws.add_data_validation(dv)
    dv.add("C1")
    book.defined_names["my_speed"] = DefinedName("my_speed", attr_text="Inputs!$A$1")
    path = tmp_path / "plain.xlsx"
    save_atomic(book, path)
    result = wzq.analyse(load_plan(KESTREL))
    for _ in range(2):
        book = openpyxl.load_workbook(path)
        write_results(book, result, run_time=RUN_TIME)
        save_atomic(book, path)
    back = openpyxl.load_workbook(path)
    ws = back["Inputs"]
    assert ws["A1"].value == 40 and ws["A2"].value == "=A1*2"
    assert ws["A1"].font.b and ws["A1"].font.color.rgb == "00FF0000"
    assert ws["A1"].fill.fgColor.rgb == "00FFFF00"
    assert ws["A1"].comment.text == "typed by the designer"
    assert [str(v.sqref) for v in ws.data_validations.dataValidation] == ["C1"]
    assert back.defined_names["my_speed"].attr_text == "Inputs!$A$1"
    assert back.sheetnames == ["Inputs", *layout.OUTPUT_SHEETS]


def test_hour_closures_marks_partly_covered_hours():
    base = load_plan(KESTREL)
    plan = dataclasses.replace(
        base,
        closures=(
            wzq.Closure(dt.datetime(2027, 5, 3, 21, 30), dt.datetime(2027, 5, 3, 23), 1),
            wzq.Closure(dt.datetime(2027, 5, 3, 23), dt.datetime(2027, 5, 4, 1, 15), 2),
        ),
    )
    hours = [dt.datetime(2027, 5, 3, 20) + dt.timedelta(hours=i) for i in range(7)]
    assert w.hour_closures(plan, hours) == [None, 1, 1, 2, 2, 2, None]


# --- atomic save ------------------------------------------------------------------------


class _Boom:
    def save(self, fh) -> None:
        fh.write(b"partial")
        raise RuntimeError("disk full")


def test_atomic_save_leaves_the_target_untouched_on_failure(tmp_path):
    target = tmp_path / "plan.xlsx"
    target.write_bytes(b"original")
    with pytest.raises(RuntimeError):
        save_atomic(_Boom(), target)
    assert target.read_bytes() == b"original"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.xlsx"]


def test_atomic_save_replaces_and_keeps_permissions(tmp_path):
    target = tmp_path / "plan.xlsx"
    target.write_bytes(b"old")
    os.chmod(target, 0o640)
    book = openpyxl.Workbook()
    save_atomic(book, target)
    assert zipfile.is_zipfile(target)
    assert stat.S_IMODE(target.stat().st_mode) == 0o640
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.xlsx"]


def test_open_in_excel_is_refused(tmp_path):
    target = tmp_path / "plan.xlsx"
    target.write_bytes(b"old")
    lock_file(target).write_bytes(b"")
    assert lock_file(target).name == "~$plan.xlsx"
    with pytest.raises(wzq.PlanError) as e:
        save_atomic(openpyxl.Workbook(), target)
    assert "is open in Excel; close it or use -o OTHER.xlsx" in str(e.value)
    assert target.read_bytes() == b"old"


def test_read_only_target_is_refused(tmp_path):
    target = tmp_path / "plan.xlsx"
    target.write_bytes(b"old")
    os.chmod(target, 0o444)
    with pytest.raises(wzq.PlanError) as e:
        check_writable(target)
    assert "read-only" in str(e.value)


def test_missing_folder_is_refused(tmp_path):
    with pytest.raises(wzq.PlanError) as e:
        check_writable(tmp_path / "nope" / "plan.xlsx")
    assert "does not exist" in str(e.value)


def test_headers_never_break_inside_a_word_or_a_unit():
    # what LibreOffice printed in a column 11.5 wide: "Delay (veh-" / "h)"
    assert w.wrapped_lines("Delay (veh-h)", 11) == ["Delay (veh-", "h)"]
    # the column is made wide enough that the unit never breaks at its hyphen
    assert w.header_width("Delay (veh-h)") > 11
    for header in ("Capacity (veh/h)", "Demand / capacity", "Work-zone delay (veh-h)"):
        width = w.header_width(header, 9.5)
        for room in (width - w.CELL_PADDING) / w.BOLD_CHAR, width / w.NARROW_CHAR:
            lines = w.wrapped_lines(header, room)
            assert all(len(x) <= room for x in lines), (header, lines)  # no word split
            assert not any(x.endswith("-") for x in lines[:-1]), (header, lines)


def test_results_status_column_holds_the_longest_status(fenwick):
    _, book, _ = fenwick
    ws = book[layout.RESULTS]
    header, body = _table(ws, w.RESULTS_HEADER_ROW)
    j = header.index("Status")
    longest = max(len(r[j]) for r in body)
    assert longest == len("over limit: queue length, delay")
    width = ws.column_dimensions[openpyxl.utils.get_column_letter(j + 1)].width
    assert width >= longest * w.BOLD_CHAR  # bold on the hours over a limit


def test_each_hour_lists_the_closures_in_force_during_it():
    # worked by hand: a closure is in force during the hour from t0 when it starts before
    # t0 + 1 h and ends after t0; closures 20:30-21:10, 21:40-22:00 and 23:00-23:10 give
    # 19:00 none, 20:00 the first, 21:00 the first two, 22:00 none (the second ended at
    # 22:00 sharp, the third starts at 23:00 sharp), 23:00 the third
    plan = load_plan(KESTREL)
    day = dt.datetime(2027, 5, 3)

    def closure(a: float, b: float) -> wzq.Closure:
        at = (day + dt.timedelta(minutes=a), day + dt.timedelta(minutes=b))
        return dataclasses.replace(plan.closures[0], start=at[0], end=at[1])

    three = (closure(1230, 1270), closure(1300, 1320), closure(1380, 1390))
    plan = dataclasses.replace(plan, closures=three)
    hours = [day + dt.timedelta(hours=x) for x in (19, 20, 21, 22, 23)]
    assert w.hour_closures(plan, hours) == [None, 1, "1, 2", None, 3]
    # the hours need not be in order (the permit table passes the hours it lists)
    assert w.hour_closures(plan, [hours[4], hours[1], hours[2]]) == [3, 1, "1, 2"]
