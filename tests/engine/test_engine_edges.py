"""Engine paths the quick test run did not reach, found by mutation testing (issue 22).

Each check works its expected text or number by hand.
"""

from __future__ import annotations

import datetime as dt
from types import SimpleNamespace

import numpy as np
import pytest
from hand import hand_site

import wzq
from wzq.engine.grid import night_by_clock
from wzq.engine.plan import Closure, Demand, Options, Plan, Thresholds
from wzq.engine.queue_length import no_queue, queue_state_discharge
from wzq.engine.windows import too_long_text
from wzq.models.newell import Extent


def test_too_long_text_says_how_much_data_and_what_the_search_takes() -> None:
    # The search takes 6 weeks of 15-minute data: 6 x 7 x 24 x 4 = 4,032 intervals.
    # 5,000 intervals of 15 minutes = 5,000 x 900 / 86,400 = 52.08 days; with 5-minute
    # data the same 4,032 intervals are 4,032 x 300 / 604,800 = 2 weeks.
    text = too_long_text(5000, 900, "'Closure windows sheet' (Limits!B30) to no")
    assert text == (
        "closure windows are left out: the demand has 5,000 intervals (52 days of 15-minute "
        "data), more than the 4,032 the window search takes (6 weeks of this data). Search a "
        "few weeks at a time, or a typical weekday and weekend day with `wzq windows PLAN "
        "--typical`. To leave them out without this note, set 'Closure windows sheet' "
        "(Limits!B30) to no"
    )
    text = too_long_text(12_000, 300, "X")
    assert "(42 days of 5-minute data)" in text and "(2 weeks of this data)" in text


def test_no_queue_is_a_back_of_queue_standing_still_at_zero() -> None:
    # A run of 2 h 15 min in 15-minute steps starting 1 h after the data's start:
    # round(2.25) = 2 whole hours, bounded at 3,600, 7,200 and 10,800 s.
    t = 3600.0 + np.arange(10) * 900.0
    nq = no_queue(t)
    np.testing.assert_array_equal(nq.times, [3600.0, 3600.0 + 8100.0])
    np.testing.assert_array_equal(nq.distance, [0.0, 0.0])
    np.testing.assert_array_equal(nq.at_boundaries, np.zeros(10))
    np.testing.assert_array_equal(nq.hour_bounds, [3600.0, 7200.0, 10800.0])
    np.testing.assert_array_equal(nq.hourly_max_m, [0.0, 0.0])
    assert nq.extent == Extent(0.0, None, None)
    assert nq.dissolved_s.shape == (0,)
    assert nq.capacity_limited is False
    # under an hour of data still makes one hour
    short = no_queue(np.array([0.0, 900.0, 1800.0]))
    np.testing.assert_array_equal(short.hour_bounds, [0.0, 3600.0])
    assert len(short.hourly_max_m) == 1


def test_queue_state_discharge_keeps_the_tightest_rate_of_each_busy_period() -> None:
    # Busy periods: intervals 0-2 (queue forms at 0), 3 free, 4-5 (a new queue at 4).
    # Within a period the rate is the least since the queue formed; a free interval and
    # a new period start again from their own rate, even after a rate under 1 veh/h.
    run = SimpleNamespace(
        busy=np.array([True, True, True, False, True, True]),
        queue=np.array([0.0, 5.0, 3.0, 0.0, 0.0, 2.0, 0.0]),
    )
    discharge = np.array([0.5, 3720.0, 1200.0, 4000.0, 4000.0, 1500.0])
    np.testing.assert_array_equal(
        queue_state_discharge(run, discharge), [0.5, 0.5, 0.5, 4000.0, 4000.0, 1500.0]
    )


def test_a_queue_left_by_a_closure_keeps_its_density_when_the_road_reopens() -> None:
    # Single-state relation L = N / (n (k_Q - k_A)) (Lighthill & Whitham 1955) on the hand
    # site of test_approach.py: 2 lanes, v_f 25 m/s, k_j 0.125 veh/m/ln, 2,000 veh/h/ln,
    # so w = (2000/3600) / (0.125 - 2000/3600/25) = 5.4054 m/s; no capacity drop.
    # 00:00-01:00: 2,400 veh/h against one lane at 1,500 veh/h: 900 vehicles wait at 01:00,
    # packed at the closure's queued state k_Q = 0.125 - 750/3600/w = 0.086458 veh/m/ln.
    # 01:00: the road reopens (4,000 veh/h) and 600 veh/h arrive; the vehicles already
    # queued keep k_Q (the conservative reading), so at 01:00 the queue is
    # 900 / (2 (0.086458 - 600/2/3600/25)) = 5,413.5 m; in the first hour it is longest at
    # its end, 900 / (2 (0.086458 - 2400/2/3600/25)) = 6,153.8 m.
    w = (2000 / 3600) / (0.125 - 2000 / 3600 / 25)
    k_q = 0.125 - 750 / 3600 / w
    site = hand_site()
    start = dt.datetime(2027, 5, 3)
    closure = Closure(start, start + dt.timedelta(hours=1), 1, capacity_override_veh_h_ln=1500.0)
    plan = Plan(
        site,
        Demand(start, 3600, np.array([2400.0, 600.0])),
        (closure,),
        options=Options(queue_length_method="shockwave"),
    )
    result = wzq.analyse(plan)
    hourly = result.hourly
    # the 900 vehicles clear at 4,000 - 600 = 3,400 veh/h: 900 / 3,400 h = 952.94 s after 01:00
    # the longest wait per hour, by the hour the vehicle arrives (FIFO): a vehicle arriving
    # t h after 00:00 finds 900 t vehicles served at 1,500 veh/h until 01:00, then 4,000:
    # it waits 0.6 t h while 900 t <= 1,500 (1 - t), i.e. up to t = 0.625 h (22.5 min),
    # less after. (The second hour's 13.5 min is held in tests/models/test_wait_oracles.py.)
    assert hourly["max_queue_wait_min"][0] == pytest.approx(22.5, rel=1e-9)
    clears = result.summary.last_queue_clears
    assert result.summary.queue_at_end_veh == 0.0
    assert (clears - start).total_seconds() == pytest.approx(3600 + 900 / 3400 * 3600, abs=1e-3)
    np.testing.assert_allclose(
        hourly["queue_length_max_m"],
        [900 / (2 * (k_q - 2400 / 2 / 3600 / 25)), 900 / (2 * (k_q - 600 / 2 / 3600 / 25))],
        rtol=1e-9,
    )


def test_a_queue_shorter_than_a_car_still_has_its_time_and_none_has_none() -> None:
    # The single-state hand site above, 1,500.1 veh/h against the 1,500 veh/h closure for
    # an hour: 0.1 vehicle waits at 01:00, 0.1 / (2 (0.086458 - 1500.1/2/3600/25)) =
    # 0.64 m of queue; both maxima are at 01:00. With 1,500 veh/h no queue forms: no time.
    start = dt.datetime(2027, 5, 3)
    site = hand_site()
    closure = Closure(start, start + dt.timedelta(hours=1), 1, capacity_override_veh_h_ln=1500.0)
    options = Options(queue_length_method="shockwave")
    w = (2000 / 3600) / (0.125 - 2000 / 3600 / 25)
    k_q = 0.125 - 750 / 3600 / w
    tiny = wzq.analyse(
        Plan(site, Demand(start, 3600, np.array([1500.1, 600.0])), (closure,), options=options)
    ).summary
    assert tiny.max_queue_veh == pytest.approx(0.1, rel=1e-9)
    assert tiny.max_queue_length_m == pytest.approx(
        0.1 / (2 * (k_q - 1500.1 / 2 / 3600 / 25)), rel=1e-9
    )
    assert tiny.max_queue_length_m < 1.0
    assert tiny.max_queue_veh_at == start + dt.timedelta(hours=1)
    assert tiny.max_queue_length_at == start + dt.timedelta(hours=1)
    none = wzq.analyse(
        Plan(site, Demand(start, 3600, np.array([1500.0, 600.0])), (closure,), options=options)
    ).summary
    assert none.max_queue_length_m == 0.0 and none.max_queue_length_at is None
    assert none.max_queue_veh_at is None and none.hours_failing == ()


def test_a_plan_without_closures_is_open_road_in_every_interval() -> None:
    # No closure: every interval is open road (closure index -1, documented), no hour
    # counts as a closure hour, and the demand/capacity limit (for closure hours only)
    # does not judge 2,400 veh/h against 4,000 (0.6) over a limit of 0.5.
    start = dt.datetime(2027, 5, 3)
    plan = Plan(
        hand_site(),
        Demand(start, 900, np.full(8, 2400.0)),
        thresholds=Thresholds(max_demand_capacity=0.5),
    )
    result = wzq.analyse(plan)
    assert (result.interval_closure == -1).all() and len(result.interval_closure) == 8
    assert list(result.hourly["closure"]) == [False, False]
    assert list(result.hourly["status"]) == ["ok", "ok"]
    np.testing.assert_allclose(result.hourly["demand_capacity"], [0.6, 0.6])


def test_night_by_the_clock_over_more_than_a_day() -> None:
    # Night is 19:00-06:00 (common practice, no source; wzq.engine.plan). Hourly data from
    # 18:00 for 25 hours: 18:00 day, 19:00-05:00 night (11 h), 06:00-18:00 day (13 h).
    flags = night_by_clock(18, np.arange(25))
    assert flags.tolist() == [False] + [True] * 11 + [False] * 13


def test_a_queue_standing_at_the_end_of_the_data_counts_the_waits_served_by_then() -> None:
    # Hand site of test_approach.py (2 lanes); 00:00-01:00 600 veh/h on the open road, then
    # 01:00-02:00 2,400 veh/h against one lane at 1,500 veh/h, and the data ends at 02:00.
    # FIFO wait as the horizontal gap between the cumulative curves, w(t) = D^-1(A(t)) - t
    # (Newell 1982, Applications of Queueing Theory, ch. 2): by 02:00 the closure has served
    # 1,500 vehicles of the hour, the 1,500th arriving at 1,500 / 2,400 h = 0.625 h after
    # 01:00, so the longest wait of a vehicle served within the data is 1 - 0.625 h =
    # 22.5 min, in the last hour (none in the first); 900 vehicles still wait at 02:00, whose
    # waits are unknown, and the warning says the figure covers only the vehicles served.
    site = hand_site()
    start = dt.datetime(2027, 5, 3)
    closure = Closure(
        start + dt.timedelta(hours=1),
        start + dt.timedelta(hours=2),
        1,
        capacity_override_veh_h_ln=1500.0,
    )
    plan = Plan(site, Demand(start, 3600, np.array([600.0, 2400.0])), (closure,))
    result = wzq.analyse(plan)
    hourly = result.hourly
    assert list(hourly["max_queue_wait_min"]) == pytest.approx([0.0, 22.5], rel=1e-9, abs=1e-9)
    assert hourly["queue_end_veh"].iloc[-1] == pytest.approx(900.0, rel=1e-9)
    assert (
        "a queue of 900 vehicles still stands at the end of the demand data: the delay after "
        "that instant is not counted, and the longest wait shown is only of the vehicles "
        "served by then; extend the demand to see it clear"
    ) in result.warnings
