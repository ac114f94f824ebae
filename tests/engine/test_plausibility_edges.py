"""The near-zero-demand rule at the ends of the demand (its neighbours taken all at once)."""

from __future__ import annotations

import dataclasses
import datetime as dt
from pathlib import Path

import numpy as np

import wzq
from wzq.engine.plausibility import near_zero_demand
from wzq.io.jsonplan import load_plan

KESTREL = Path(__file__).resolve().parents[2] / "examples" / "kestrel_ridge_weeknight.json"


def _plan(flows: list[float]) -> wzq.Plan:
    base = load_plan(KESTREL)
    demand = wzq.Demand(dt.datetime(2027, 5, 3, 6), 3600, np.array(flows, dtype=float))
    return dataclasses.replace(base, demand=demand, closures=())


def test_queried_from_the_third_interval_to_the_last_but_one() -> None:
    # 06:00 1,000; 07:00 0; 08:00 0; 09:00 1,000; 10:00 0; 11:00 1,000 veh/h.
    # 07:00 is not queried (fewer than two intervals before it), nor is 11:00 (the last).
    # 08:00: busiest of 06:00-07:00 is 1,000 and of 09:00-10:00 is 1,000: 0 < 10 % -> queried.
    # 10:00: busiest of 08:00-09:00 is 1,000; after it only 11:00, 1,000: queried.
    lines = near_zero_demand(_plan([1000, 0, 0, 1000, 0, 1000]))
    assert [line.split(": demand")[0] for line in lines] == ["demand.veh_h[2]", "demand.veh_h[4]"]
    assert "at Mon 2027-05-03 08:00" in lines[0]
    assert "between 1,000 and 1,000 veh/h" in lines[1]


def test_not_queried_when_a_side_is_quiet_or_the_flow_is_a_tenth_or_more() -> None:
    # 08:00 (index 2): the side before it carries at most 150 veh/h, below the busy level of
    # 100 veh/h per lane on the site's lanes, so it is not queried; 10:00 (index 4): 100 veh/h
    # is a tenth of 1,000, not below it
    lanes = _plan([0.0] * 3).site.lanes
    assert 100 * lanes > 150
    assert near_zero_demand(_plan([150, 100, 0, 1000, 100, 1000])) == []


def test_too_short_to_query() -> None:
    assert near_zero_demand(_plan([1000, 1000, 0])) == []
    assert near_zero_demand(_plan([0])) == []
