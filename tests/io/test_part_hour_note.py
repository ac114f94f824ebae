"""An hour a closure starts or ends within says that its figures are the hour's, and its
demand / capacity is against the closure's capacity.

A closure from 01:30 printed, for the hour from 01:00, "1 lane open" beside the
hour's average capacity (2,500 veh/h, more than one lane carries) and the hour's
demand / capacity, without a word, on the Permit table and in the report. The
plan is the hand site (two lanes of 2,000 veh/h, tests/hand.py) with one lane
closed from 01:30 to 03:00 at a typed 1,000 veh/h/ln.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import replace

import numpy as np
import openpyxl
import pytest
from hand import hand_site

import wzq
from wzq.engine.plan import Closure, Demand, Plan, Thresholds
from wzq.io.report import hourly_section, make_styles
from wzq.io.workbook.run import write_filled_workbook

START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)
SAID = "Mon 2027-05-03 01:00"


@pytest.fixture(scope="module")
def result() -> wzq.Result:
    closure = Closure(
        START + dt.timedelta(hours=1, minutes=30),
        START + dt.timedelta(hours=3),
        lanes_closed=1,
        capacity_override_veh_h_ln=1000.0,
    )
    demand = Demand(START, 3600, np.array([800.0] * 5))
    return wzq.analyse(Plan(hand_site(unit_system="metric"), demand, (closure,)))


def test_the_hour_is_averaged_by_hand(result) -> None:
    # half an hour at 4,000 veh/h, half at 1,000: 2,500 veh/h; the next hour 1,000
    assert result.hourly["capacity_veh_h"].tolist()[1:3] == pytest.approx([2500.0, 1000.0])
    assert result.hourly["lanes_open"].tolist()[1] == 1


def test_its_demand_capacity_is_against_the_closures_capacity(result) -> None:
    """800 veh/h against the closure's 1,000 veh/h is 0.80 in the hour from 01:00 as in
    the hour from 02:00; against the hour's average, 800 / 2,500 = 0.32, a limit of 0.75
    passed it. Open hours: 800 / 4,000 = 0.20. Hand arithmetic."""
    assert result.hourly["demand_capacity"].tolist() == pytest.approx([0.2, 0.8, 0.8, 0.2, 0.2])
    limited = wzq.analyse(replace(result.plan, thresholds=Thresholds(max_demand_capacity=0.75)))
    assert limited.hourly["status"].tolist() == [
        "ok",
        "over limit: demand/capacity",
        "over limit: demand/capacity",
        "ok",
        "ok",
    ]


def test_the_permit_table_says_it(result, tmp_path) -> None:
    path = tmp_path / "part.xlsx"
    write_filled_workbook(result.plan, path)
    ws = openpyxl.load_workbook(path)["Permit table"]
    notes = [v for row in ws.iter_rows(values_only=True) for v in row if isinstance(v, str)]
    said = [n for n in notes if "averages over the hour" in n]
    assert len(said) == 1 and SAID in said[0] and "02:00" not in said[0], notes
    assert "demand / capacity is the hour's demand against the closure's capacity" in said[0]


def test_the_report_says_it(result) -> None:
    texts = [f.getPlainText() for f in hourly_section(result, make_styles(), 700.0)[:2]]
    assert any("averages over the hour" in t and SAID in t for t in texts), texts
