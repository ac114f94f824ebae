"""The corner points the cumulative chart draws, by hand (issue 22).

Deterministic queueing on cumulative curves (Newell 1982, *Applications of Queueing
Theory*, ch. 2): arrivals and departures are straight between interval boundaries
except where a queue clears inside an interval, where departures bend onto arrivals.
"""

from __future__ import annotations

import datetime as dt

import numpy as np

import wzq
from wzq.engine.plan import Closure, Demand, Plan, Site
from wzq.io.workbook.charts import cumulative_points


def test_the_chart_window_keeps_the_first_and_last_corner_and_the_clearing() -> None:
    # Two lanes at 2,000 veh/h/ln, no capacity drop; one lane at 1,500 veh/h for the first
    # hour, 2,400 veh/h arriving, then 600 against 4,000: 900 wait at 01:00 and clear
    # 900 / 3,400 h = 952.94 s later, when 2,400 + 600 x 900 / 3,400 = 2,558.82 have come.
    # The chart shows an hour either side of the queue, cut to the data: 00:00 to 02:00.
    start = dt.datetime(2027, 5, 3)
    site = Site(lanes=2, speed_limit=25.0, work_zone_speed_limit=25.0, work_zone_length=0.0,
                free_flow_speed=25.0, heavy_vehicle_share=0.0, jam_density=0.125,
                base_capacity_pc_h_ln=2000.0, capacity_drop_pct_open=0.0)  # fmt: skip
    closure = Closure(start, start + dt.timedelta(hours=1), 1, capacity_override_veh_h_ln=1500.0)
    result = wzq.analyse(Plan(site, Demand(start, 3600, np.array([2400.0, 600.0])), (closure,)))
    pts = cumulative_points(result)
    cleared = 2400 + 600 * 900 / 3400
    np.testing.assert_allclose(pts["t"], [0.0, 3600.0, 3600 + 900 / 3400 * 3600, 7200.0])
    np.testing.assert_allclose(pts["arrivals"], [0.0, 2400.0, cleared, 3000.0])
    np.testing.assert_allclose(pts["departures"], [0.0, 1500.0, cleared, 3000.0])
    assert list(pts.index) == [0, 1, 2, 3] and "index" not in pts.columns
    assert pts["time"].iloc[-1] == start + dt.timedelta(hours=2)
