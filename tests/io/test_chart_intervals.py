"""The workbook's demand and capacity chart draws the intervals the engine used.

It drew hourly averages: a 15-minute count of 4,800 veh/h in an hour averaging
3,450 veh/h showed as 3,450, below the road's 4,000 veh/h, while the queue chart
beside it showed the queue that quarter built (the report's Figure 1 drew the
intervals). The plan is the hand site (two lanes of 2,000 veh/h, tests/hand.py).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import openpyxl
from hand import hand_site

from wzq.engine.plan import Demand, Plan
from wzq.io.workbook.run import write_filled_workbook

START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)


def test_a_quarter_hour_above_capacity_is_drawn(tmp_path) -> None:
    # quarters of the first hour: 3,000, 3,000, 4,800 and 3,000 veh/h (by hand: an
    # hourly average of 3,450 veh/h), then a quiet hour
    flows = np.array([3000.0, 3000.0, 4800.0, 3000.0] + [1000.0] * 4)
    plan = Plan(hand_site(unit_system="metric"), Demand(START, 900, flows), ())
    path = tmp_path / "quarters.xlsx"
    write_filled_workbook(plan, path)
    ws = openpyxl.load_workbook(path)["Charts"]
    head = next(c for row in ws.iter_rows() for c in row if c.value == "Demand (veh/h)")
    rows = range(head.row + 1, head.row + 1 + 2 * len(flows))
    demand = [ws.cell(r, head.column).value for r in rows]
    times = [ws.cell(r, head.column - 1).value for r in rows]
    # each quarter twice (its start and its end, a step line), in veh/h
    assert demand == [v for v in flows.tolist() for _ in range(2)]
    assert times[4:6] == [START + dt.timedelta(minutes=30), START + dt.timedelta(minutes=45)]
    assert ws.cell(head.row + 1, head.column + 1).value == 4000  # the open road, by hand
