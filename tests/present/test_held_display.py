"""An hour whose queue's length is unknown prints "unknown", never the length computed.

The hand case of tests/engine/test_windows.py: two lanes of 2,000 veh/h with no
capacity drop, and 4,500 veh/h arriving at 04:00. The approach admits 4,000 veh/h,
so 500 vehicles wait beyond its upstream end by 05:00 and clear 500 / 3,000 h =
10 min later (D/D/1 by hand); Newell's method shows 0 m for them. The longest queue
of 04:00 and 05:00 is unknown, and every place that prints it says so: the terminal
table, the report's table, the Results and Permit table sheets, and the headline.
"""

from __future__ import annotations

import datetime as dt
import io

import numpy as np
import openpyxl
import pytest
from hand import hand_site

import wzq
from wzq.engine.plan import Demand, Plan, Site, Thresholds
from wzq.io.report import hourly_rows
from wzq.io.workbook.run import write_filled_workbook
from wzq.present.show import print_result
from wzq.present.tables import LENGTH_UNKNOWN, hourly_display, summary_lines

START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)
HEADER = "Longest queue (km)"


def site() -> Site:
    return hand_site(unit_system="metric")


@pytest.fixture(scope="module")
def result() -> wzq.Result:
    flows = np.array([1000.0] * 4 + [4500.0] + [1000.0] * 3)
    plan = Plan(site(), Demand(START, 3600, flows), (), Thresholds(max_queue_length=30_000.0))
    return wzq.analyse(plan)


def test_the_held_vehicles_are_a_column_of_the_table(result) -> None:
    # 500 vehicles at 05:00: the most held in 04:00 and in 05:00 (by hand, above)
    assert result.hourly["queue_held_veh"].tolist() == [0.0] * 4 + [500.0, 500.0, 0.0, 0.0]


def test_the_display_table_and_the_headline_say_unknown(result) -> None:
    shown = hourly_display(result)[HEADER].tolist()
    assert shown == [0.0] * 4 + [LENGTH_UNKNOWN] * 2 + [0.0] * 2
    longest = dict(summary_lines(result))["Longest queue"]
    assert longest.endswith(
        "; unknown in 2 hours from Mon 2027-05-03 04:00 (traffic held back, see the warnings)"
    )


def test_the_terminal_and_the_report_print_unknown(result) -> None:
    out = io.StringIO()
    print_result(result, all_hours=True, out=out)
    rows = [line for line in out.getvalue().splitlines() if line.startswith("Mon 2027-05-03 0")]
    assert ["unknown" in line for line in rows] == [False] * 4 + [True] * 2 + [False] * 2
    headers, cells, failing = hourly_rows(result)
    column = headers.index(HEADER)
    assert [row[column] for row in cells] == ["0.00"] * 4 + ["unknown"] * 2 + ["0.00"] * 2
    assert failing.tolist() == [False] * 4 + [True] * 2 + [False] * 2


def test_the_results_and_permit_sheets_print_unknown(result, tmp_path) -> None:
    path = tmp_path / "held.xlsx"
    write_filled_workbook(result.plan, path)
    book = openpyxl.load_workbook(path)
    for name in ("Results", "Permit table"):
        ws = book[name]
        where = [c for row in ws.iter_rows() for c in row if c.value == HEADER]
        assert len(where) == 1, name
        head = where[0]
        shown = {}
        for k in range(head.row + 1, head.row + 9):
            hour = ws.cell(k, 1).value  # a datetime (Results) or its label (Permit table)
            if isinstance(hour, dt.datetime):
                hour = f"{hour:%a %Y-%m-%d %H:%M}"
            if isinstance(hour, str) and hour.startswith("Mon 2027-05-03 "):
                shown[hour[-5:]] = ws.cell(k, head.column).value
                if shown[hour[-5:]] == LENGTH_UNKNOWN:  # among the numbers, on the right
                    assert ws.cell(k, head.column).alignment.horizontal == "right"
        assert shown["04:00"] == shown["05:00"] == LENGTH_UNKNOWN, (name, shown)
        # the hours before and after print their length (the Permit table lists the
        # hours with a queue or a closure, and the hour after)
        assert [v for h, v in shown.items() if h not in ("04:00", "05:00")] == [0] * (
            len(shown) - 2
        )
