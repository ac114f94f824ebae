"""A value over a limit never prints at or below that limit.

An hour 0.1 % over a demand/capacity limit of 1.00 used to print ``1.00`` beside
``over limit`` on the Permit table, the Results sheet, the terminal and the report,
and a limit typed with more decimals than the display (0.125 km) printed rounded
(``0.13 km``): the reader saw a passing number on a failing hour. The plan is the
hand site (two lanes of 2,000 veh/h, tests/hand.py) with one lane closed at a
capacity of 2,000 veh/h typed for the closure; every figure below is worked by hand.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import openpyxl
import pytest
from hand import hand_site

import wzq
from wzq.engine.plan import Closure, Demand, Plan, Thresholds
from wzq.io.report import hourly_rows
from wzq.io.workbook.run import write_filled_workbook
from wzq.present.tables import hourly_display, limit_values

START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)
DC = "Demand / capacity"
DELAY = "Average delay (min/veh)"


@pytest.fixture(scope="module")
def result() -> wzq.Result:
    # 10:00-11:00 one of two lanes closed at 2,000 veh/h; demand 2,002 veh/h there:
    # demand/capacity 2,002 / 2,000 = 1.001 (by hand), over the limit of 1.00; the
    # 2 vehicles left at 11:00 wait on average 1 veh-h / 2,002 veh = 0.030 min, over
    # the limit of 0.02 min (1.2 s)
    return _closed_hour(2002.0, Thresholds(max_average_delay=1.2, max_demand_capacity=1.0))


def _closed_hour(flow: float, th: Thresholds) -> wzq.Result:
    """One of the two lanes closed at 2,000 veh/h from 10:00 to 11:00, ``flow`` then."""
    flows = np.array([1000.0] * 10 + [flow] + [1000.0] * 3)
    closure = Closure(
        START + dt.timedelta(hours=10),
        START + dt.timedelta(hours=11),
        lanes_closed=1,
        capacity_override_veh_h_ln=2000.0,
    )
    return wzq.analyse(
        Plan(hand_site(unit_system="metric"), Demand(START, 3600, flows), (closure,), th)
    )


def test_the_engine_fails_the_hour_by_hand(result) -> None:
    h = result.hourly.iloc[10]
    assert h["demand_capacity"] == pytest.approx(1.001)
    assert h["average_delay_min"] == pytest.approx(60.0 / 2002.0, rel=1e-3)
    assert not h["demand_capacity_ok"] and not h["delay_ok"]


def test_the_display_table_shows_it_above_the_limit(result) -> None:
    row = hourly_display(result).iloc[10]
    # rounded half away from zero they would read 1.00 and 0.0: at or below the limits
    assert row[DC] == 1.01 and row[DELAY] == 0.1
    # a passing hour keeps the ordinary rounding: 1,000 / 4,000 = 0.25, no delay
    assert hourly_display(result).iloc[9][[DC, DELAY]].tolist() == [0.25, 0.0]
    headers, cells, _ = hourly_rows(result)
    assert cells[10][headers.index(DC)] == "1.01"


def test_the_sheets_show_it_above_the_limit(result, tmp_path) -> None:
    path = tmp_path / "over.xlsx"
    write_filled_workbook(result.plan, path)
    book = openpyxl.load_workbook(path)
    for name in ("Results", "Permit table"):
        ws = book[name]
        head = next(c for row in ws.iter_rows() for c in row if c.value == DC)
        row = next(
            r for r in range(head.row + 1, ws.max_row + 1) if "10:00" in str(ws.cell(r, 1).value)
        )
        assert ws.cell(row, head.column).value == 1.01, name


def test_a_limit_is_shown_with_the_decimals_typed() -> None:
    site = hand_site(unit_system="metric")
    demand = Demand(START, 3600, np.array([1000.0]))
    th = Thresholds(max_queue_length=125.0, max_average_delay=12.25 * 60, max_demand_capacity=0.955)
    shown = limit_values(Plan(site, demand, (), th))
    assert shown["queue_ok"] == "0.125 km"
    assert shown["delay_ok"] == "12.25 min/veh"
    assert shown["demand_capacity_ok"] == "0.955"
    plain = Thresholds(max_queue_length=2000.0, max_average_delay=900.0, max_demand_capacity=1.0)
    shown = limit_values(Plan(site, demand, (), plain))
    assert (shown["queue_ok"], shown["delay_ok"], shown["demand_capacity_ok"]) == (
        "2.00 km",
        "15.0 min/veh",
        "1.00",
    )


def test_a_limit_line_is_drawn_where_the_limit_is(tmp_path) -> None:
    # a 125 m queue limit: the workbook chart's limit line read 0.13 km (its cells were
    # rounded to 2 decimals) and the report's legend said "Queue limit (0.12 km)"
    from wzq.present.drawings import queue_length_drawing

    flows = np.array([1000.0] * 10 + [2002.0] + [1000.0] * 3)
    plan = Plan(hand_site(unit_system="metric"), Demand(START, 3600, flows), (), Thresholds(125.0))
    path = tmp_path / "limit.xlsx"
    write_filled_workbook(plan, path)
    ws = openpyxl.load_workbook(path)["Charts"]
    head = next(c for row in ws.iter_rows() for c in row if c.value == "Queue-length limit (km)")
    cell = ws.cell(head.row + 1, head.column)
    assert cell.value == 0.125 and cell.number_format == "#,##0.000"
    drawing = queue_length_drawing(wzq.analyse(plan), 500.0, 300.0)
    texts, todo = [], list(drawing.getContents())
    while todo:  # every string of the drawing, groups opened
        node = todo.pop()
        todo += getattr(node, "contents", [])
        texts += [node.text] if isinstance(getattr(node, "text", None), str) else []
    assert any("Queue limit (0.125 km)" in t for t in texts), texts


def test_the_headline_shows_it_above_the_limit() -> None:
    # 1.5 vehicles left at 11:00 (2,001.5 veh/h for an hour at 2,000), stored in the
    # one open lane at the jam density of 0.125 veh/m: 12 m (by hand), over a limit of
    # 10 m and shown 0.01 km, the limit itself, by ordinary rounding; the average
    # delay, 0.75 veh-h over 2,001.5 vehicles = 0.022 min, over 0.02 min, shown 0.0
    from wzq.present.tables import summary_lines

    result = _closed_hour(2001.5, Thresholds(max_queue_length=10.0, max_average_delay=1.2))
    assert result.summary.max_queue_length_m == pytest.approx(12.0)
    lines = dict(summary_lines(result))
    assert lines["Longest queue"].startswith("0.02 km, at ")
    assert lines["Highest hourly average delay"] == "0.1 min/veh"


def test_a_landmark_passed_is_never_shown_passed_by_zero() -> None:
    # the 12 m queue above (by hand) passes a landmark 10 m upstream by 2 m: 0.002 km,
    # shown "0.00 km" beyond it, with its time beyond it, while the hour failed on it
    import dataclasses

    from wzq.engine.plan import Approach, Landmark
    from wzq.present.tables import landmark_display

    base = _closed_hour(2001.5, Thresholds())
    plan = dataclasses.replace(
        base.plan,
        thresholds=Thresholds(queue_must_not_pass="gantry"),
        approach=Approach((Landmark("gantry", 10.0, "structure"),)),
    )
    result = wzq.analyse(plan)
    beyond = result.landmark_results[0]
    assert beyond.max_beyond_m == pytest.approx(2.0)
    row = landmark_display(result).iloc[0]
    assert row["Farthest beyond (km)"] == 0.01
    assert row["Time beyond it (h)"] > 0
