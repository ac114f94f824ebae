"""Tests for wzq.engine.windows (allowable closure windows) and the ``wzq windows`` command.

Hand-checkable profiles whose windows are known in closed form, then generated
profiles on which every reported window is checked with ``wzq.analyse()``.
Every check against something outside the project names its source beside it.

The hand site: two lanes, free-flow speed 25 m/s, jam density 0.125 veh/m/ln,
base capacity 2,000 pc/h/ln with no heavy vehicles and no capacity drop, so
the open road carries 4,000 veh/h; the closure's capacity is set by a
capacity override (1,500 veh/h on the one open lane), so every number below
follows from the deterministic queue and the triangular diagram by hand.
"""

from __future__ import annotations

import datetime as dt
import io
import json
from contextlib import redirect_stderr, redirect_stdout
from dataclasses import replace
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from budget import examples
from hand import C_LN, K_J, V_F
from hand import hand_site as shared_hand_site
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import wzq
from wzq.cli import main
from wzq.engine import windows as W
from wzq.engine.hourly import hour_checks
from wzq.engine.plan import (
    Approach,
    Closure,
    Costs,
    Demand,
    Landmark,
    Options,
    Plan,
    PlanError,
    Site,
    Thresholds,
)
from wzq.engine.site import configuration
from wzq.io.jsonplan import plan_to_dict
from wzq.io.plans import demo_plan
from wzq.io.workbook.windows_sheet import SHEET, write_windows_sheet

START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)
OPEN = 2 * C_LN  # veh/h, open road, no capacity drop
CLOSED = 1500.0  # veh/h, capacity override on the one open lane


def hand_site(**kw) -> Site:
    """The shared hand site (tests/hand.py), northbound."""
    return shared_hand_site(**{"direction": "northbound", **kw})


HAND_CONFIG = W.Configuration(1, capacity_override_veh_h_ln=CLOSED)
#: The single-state shockwave relation: the queue is longest when the closure ends.
SINGLE_STATE = Options(queue_length_method="shockwave")


def hourly(flows: list[float], start: dt.datetime = START) -> Demand:
    return Demand(start, 3600, np.array(flows, dtype=float))


def stored_per_m(arrival_veh_h: float, discharge_veh_h: float, lanes: int = 2) -> float:
    """Vehicles per metre of queue on the triangular diagram, by hand.

    Triangular diagram (Newell 1993): free branch k = q / v_f, congested branch
    k = k_j - q / w with w = c / (k_j - c / v_f); queue length L = N / (n (k_Q - k_A))
    (REFERENCES.md, "Physical queue from the point-queue count").
    """
    c = C_LN / 3600.0
    w = c / (K_J - c / V_F)
    k_a = arrival_veh_h / lanes / 3600.0 / V_F
    k_q = K_J - discharge_veh_h / lanes / 3600.0 / w
    return lanes * (k_q - k_a)


def windows_of(
    site: Site, demand: Demand, limits: Thresholds, options: Options = SINGLE_STATE, **kw
) -> W.WindowSet:
    result = W.find_windows(site, demand, limits, [HAND_CONFIG], options=options, **kw)
    assert len(result.sets) == 1
    return result.sets[0]


def expected_matrix(n: int, rule) -> np.ndarray:
    m = np.zeros((n, n + 1), dtype=bool)
    for s in range(n):
        for e in range(s + 1, n + 1):
            m[s, e] = rule(s, e)
    return m


# ---------------------------------------------------------------------------------------------
# Closed-form profiles
# ---------------------------------------------------------------------------------------------


def test_constant_demand_below_closure_capacity_is_always_allowed() -> None:
    # 1,200 veh/h < 1,500 veh/h: no queue ever forms (D/D/1 textbook result), so every
    # closure passes any queue limit.
    ws = windows_of(hand_site(), hourly([1200.0] * 24), Thresholds(max_queue_length=100.0))
    assert ws.allowed.sum() == 24 * 25 // 2
    assert ws.maximal() == [(0, 24)]
    flags = ws.hour_flags()
    assert flags["whole"].all() and not flags["part"].any()
    assert len(ws.starts_for(24 * 3600.0)) == 1


def test_constant_demand_above_closure_capacity_allowed_while_queue_is_short() -> None:
    # Demand 1,800 on a closure of 1,500 veh/h: the queue grows by 300 veh/h (D/D/1,
    # standard textbook result) and is longest when the closure ends; the open road
    # (4,000 veh/h) then clears it. With the limit set to the length of 3.5 h of growth,
    # every closure of up to 3 h passes and every longer one fails.
    per_m = stored_per_m(1800.0, CLOSED)
    limit = 3.5 * 300.0 / per_m
    assert limit == pytest.approx(6866.5, abs=0.1)  # hand arithmetic of the values above
    ws = windows_of(hand_site(), hourly([1800.0] * 24), Thresholds(max_queue_length=limit))
    assert np.array_equal(ws.allowed, expected_matrix(24, lambda s, e: e - s <= 3))
    assert ws.maximal() == [(s, s + 3) for s in range(22)]
    assert [e - s for s, e in ws.longest(3)] == [3, 3, 3]
    assert [s for s, _ in ws.starts_for(3 * 3600.0)] == list(range(22))
    assert ws.starts_for(2.5 * 3600.0) == ws.starts_for(3 * 3600.0)  # rounded up to the grid
    assert ws.starts_for(4 * 3600.0) == []
    assert ws.hour_flags()["whole"].all()


def test_newell_queue_keeps_growing_after_the_closure_ends() -> None:
    # Same demand and closure, Newell's kinematic-wave method (the default) and a 7 % drop
    # on the open road, so the queue discharges in a congested state. When the closure
    # ends, a recovery wave leaves the front at -w (both states on the congested branch
    # of the triangular diagram) while the back still moves upstream at the shock speed
    # u = (q_Q - q_A) / (k_Q - k_A) < 0; they meet when L_T + |u| t = w t, so the longest
    # queue is L_T w / (w - |u|), after the closure (Newell 1993; Lighthill & Whitham
    # 1955 for the shock speed; hand arithmetic).
    site = hand_site(capacity_drop_pct_open=7.0)
    c = C_LN / 3600.0
    w = c / (K_J - c / V_F)
    k_a, q_a = 900.0 / 3600.0 / V_F, 900.0 / 3600.0
    q_q = CLOSED / 2 / 3600.0
    k_q = K_J - q_q / w
    u = (q_q - q_a) / (k_q - k_a)
    per_hour = 300.0 / stored_per_m(1800.0, CLOSED) * w / (w + u)
    assert per_hour == pytest.approx(2181.8, abs=0.1)  # hand arithmetic
    demand = hourly([1800.0] * 24)
    newell = windows_of(site, demand, Thresholds(max_queue_length=3.5 * per_hour), Options())
    assert np.array_equal(newell.allowed, expected_matrix(24, lambda s, e: e - s <= 3))
    # 6,000 m: the single-state queue of a 3-hour closure (5,886 m at its end) fits, the
    # Newell queue (6,545 m, 20 min after the end) does not -- unless the closure ends
    # with the data, where the growth after it is not seen
    limit = Thresholds(max_queue_length=6000.0)
    single = windows_of(site, demand, limit)
    assert np.array_equal(single.allowed, expected_matrix(24, lambda s, e: e - s <= 3))
    waves = windows_of(site, demand, limit, Options())
    expected = expected_matrix(24, lambda s, e: e - s <= 2 or (e == 24 and e - s == 3))
    assert np.array_equal(waves.allowed, expected)


def test_daily_peak_allows_the_night_hours_only() -> None:
    # 1,000 veh/h at night, 2,500 veh/h from 07:00 to 19:00. One closed peak hour stores
    # 1,000 vehicles, far beyond a 1 km limit; the night never queues (D/D/1).
    flows = [1000.0] * 7 + [2500.0] * 12 + [1000.0] * 5
    per_m = stored_per_m(2500.0, CLOSED)
    assert 1000.0 / per_m > 1000.0  # one peak hour closed is longer than the limit
    result = W.find_windows(
        hand_site(), hourly(flows), Thresholds(max_queue_length=1000.0), [HAND_CONFIG]
    )  # default options: Newell's method, the same verdict here (no night queue at all)
    ws = result.sets[0]
    assert ws.maximal() == [(0, 7), (19, 24)]
    flags = ws.hour_flags()
    assert flags["whole"].tolist() == [h < 7 or h >= 19 for h in range(24)]
    table = W.windows_table(result, symbols=True)
    assert "".join(table.loc[0, list(W.HOUR_COLUMNS)]) == "#######............#####"


def test_latest_end_per_start_and_the_hours_a_closure_may_cover() -> None:
    # The night-only day above, by hand: a closure starting before 07:00 may run to 07:00
    # (the first peak hour), one starting at 19:00 or later to the end of the data (24),
    # and one starting in the peak may not run at all (-1: no allowed end).
    flows = [1000.0] * 7 + [2500.0] * 12 + [1000.0] * 5
    ws = W.find_windows(
        hand_site(), hourly(flows), Thresholds(max_queue_length=1000.0), [HAND_CONFIG]
    ).sets[0]
    assert ws.last_end().tolist() == [7] * 7 + [-1] * 12 + [24] * 5
    # one flag per interval of the data: some allowed closure may be in place in it
    assert ws.interval_flags().tolist() == [h < 7 or h >= 19 for h in range(24)]
    w = ws.window(19, 24)
    assert (w.day_type, w.start, w.end) == (
        "Mon 2027-05-03",  # the one day of data, named by its date
        dt.datetime(2027, 5, 3, 19),
        dt.datetime(2027, 5, 4, 0),
    )
    assert w.added_delay_veh_h == 0.0  # 1,000 veh/h through a 1,500 veh/h closure: no queue


def test_the_intervals_covered_when_one_window_ends_where_another_starts() -> None:
    # A hand matrix on the night-only day's grid: closures from 00:00 may end at 01:00 to
    # 07:00, closures from 07:00 at 08:00 to 10:00, nothing else. Some closure may be in
    # place from 00:00 to 10:00, none after.
    flows = [1000.0] * 7 + [2500.0] * 12 + [1000.0] * 5
    ws = W.find_windows(
        hand_site(), hourly(flows), Thresholds(max_queue_length=1000.0), [HAND_CONFIG]
    ).sets[0]
    allowed = np.zeros((24, 25), dtype=bool)
    allowed[0, 1:8] = True
    allowed[7, 8:11] = True
    hand = replace(ws, allowed=allowed)
    assert hand.last_end().tolist() == [7] + [-1] * 6 + [10] + [-1] * 16
    assert hand.interval_flags().tolist() == [h < 10 for h in range(24)]


def test_the_five_longest_windows_by_default() -> None:
    # Peaks of 2,500 veh/h every other hour: one closed peak hour (1,500 veh/h) stores
    # 1,000 vehicles, beyond a 1 km limit (as above), so each off-peak hour is a window of
    # its own: twelve windows of one hour, of which the first five are shown by default.
    flows = [1000.0, 2500.0] * 12
    result = W.find_windows(
        hand_site(), hourly(flows), Thresholds(max_queue_length=1000.0), [HAND_CONFIG]
    )
    assert len(result.sets[0].maximal()) == 12
    table = W.longest_windows(result)
    assert [t.hour for t in table["start"]] == [0, 2, 4, 6, 8]
    assert len(W.longest_windows(result, top=None)) == 12


def test_the_five_longest_windows_as_rows_by_default() -> None:
    # the twelve one-hour windows of the test above, as Window rows: the first five
    result = W.find_windows(
        hand_site(), hourly([1000.0, 2500.0] * 12), Thresholds(max_queue_length=1000.0),
        [HAND_CONFIG],
    )  # fmt: skip
    assert [w.start.hour for w in W.longest_window_list(result)] == [0, 2, 4, 6, 8]


def test_a_demand_of_exactly_the_longest_searched_length_is_searched() -> None:
    # the search takes up to 6 x 7 x 24 x 4 = 4,032 intervals (24 weeks of hourly data)
    assert W.MAX_INTERVALS == 4032
    assert not W.too_long(hourly([1000.0] * 4032))
    assert W.too_long(hourly([1000.0] * 4033))


def test_the_hour_flags_table_names_its_columns() -> None:
    # the night-only day of test_daily_peak_allows_the_night_hours_only: no queue at
    # night, a peak hour closed stores 1,000 vehicles, beyond 1 km (D/D/1)
    flows = [1000.0] * 7 + [2500.0] * 12 + [1000.0] * 5
    ws = windows_of(hand_site(), hourly(flows), Thresholds(max_queue_length=1000.0))
    flags = ws.hour_flags()
    assert list(flags.columns) == ["hour_start", "whole", "part"]
    assert list(flags["hour_start"]) == [START + dt.timedelta(hours=h) for h in range(24)]
    assert flags["whole"].tolist() == [h < 7 or h >= 19 for h in range(24)]


def test_the_default_configurations_leave_one_lane_open_behind_cones() -> None:
    # three lanes: one or two closed, behind cones (the soft barrier) unless told otherwise
    site = hand_site(lanes=3)
    soft = [W.Configuration(1, "soft"), W.Configuration(2, "soft")]
    assert W.default_configurations(site) == soft
    hard = [W.Configuration(1, "hard"), W.Configuration(2, "hard")]
    assert W.default_configurations(site, "hard") == hard
    result = W.find_windows(site, hourly([1000.0] * 2), Thresholds(max_queue_length=1000.0))
    assert [ws.configuration for ws in result.sets] == soft


def test_a_windows_table_of_no_window_set_keeps_its_columns() -> None:
    # a search of no day type has no window set; its table is empty, with the columns
    result = W.find_windows(hand_site(), [], Thresholds(), [HAND_CONFIG])
    assert result.sets == ()
    table = W.windows_table(result)
    assert list(table.columns) == ["configuration", "day", *W.HOUR_COLUMNS]
    assert len(table) == 0


def test_calendar_rows_mark_the_hours_without_data() -> None:
    # 24 hours of 1,000 veh/h from 05:00 never queue on the 1,500 veh/h closure (D/D/1),
    # so every hour of data may be closed whole; Monday has no data before 05:00,
    # Tuesday none from 05:00
    demand = hourly([1000.0] * 24, START + dt.timedelta(hours=5))
    ws = windows_of(hand_site(), demand, Thresholds(max_queue_length=1000.0))
    assert W.day_rows(ws) == [
        ("Mon 2027-05-03", ["none"] * 5 + ["whole"] * 19),
        ("Tue 2027-05-04", ["whole"] * 5 + ["none"] * 19),
    ]


def test_a_typical_day_row_shows_the_best_state_of_each_hour_on_either_day() -> None:
    # A typical day of 15-minute data is laid out twice (192 intervals), starts reported
    # on the first day. A hand matrix: closures 01:15-01:45 on the first day, and 23:45 to
    # 03:30 the next day. First day: hours 01 and 23 part, the rest no; second day: hours
    # 00-02 whole, 03 part, the rest no. The row keeps the best of the two per hour of day
    # (whole over part over no): 00-02 whole, 03 part, 23 part.
    (day,) = W.typical_days(Demand(START, 900, np.full(96, 1000.0)))
    assert (len(day.demand.flows_veh_h), day.stop_start, day.fold) == (192, 96, True)
    ws = W.find_windows(
        hand_site(), [day], Thresholds(max_queue_length=1000.0), [HAND_CONFIG],
        options=SINGLE_STATE,
    ).sets[0]  # fmt: skip
    allowed = np.zeros((192, 193), dtype=bool)
    allowed[5, 7] = True  # 01:15 to 01:45
    allowed[95, 110] = True  # 23:45 to 03:30 the next day
    rows = W.day_rows(replace(ws, allowed=allowed))
    assert rows == [(day.name, ["whole"] * 3 + ["part"] + ["no"] * 19 + ["part"])]


def test_plan_windows_passes_on_the_lanes_the_barrier_the_costs_and_known_tables() -> None:
    # Three lanes, 1,000 veh/h: the search of a plan closes the lanes asked (default every
    # closure leaving a lane open) behind the barrier asked, prices at the plan's own
    # costs: 20 per person-hour x 1.5 persons per car = 30 per vehicle-hour (no trucks),
    # and takes the tables a search of the same plan found before as they are.
    plan = Plan(hand_site(lanes=3), hourly([1000.0] * 4), costs=Costs(20.0, 1.5, 50.0),
                thresholds=Thresholds(max_queue_length=1000.0))  # fmt: skip
    both = W.plan_windows(plan, barrier="hard")
    assert [ws.configuration for ws in both.sets] == [
        W.Configuration(1, "hard"),
        W.Configuration(2, "hard"),
    ]
    one = W.plan_windows(plan, [1], barrier="hard")
    assert [ws.configuration for ws in one.sets] == [W.Configuration(1, "hard")]
    assert one.sets[0].value_per_veh_h == pytest.approx(30.0, rel=1e-12)
    # 1,000 veh/h never queue on two lanes open, so the search allows every closure; a
    # table given as known (here: none allowed) is used instead
    assert one.sets[0].allowed.sum() == 4 * 5 // 2
    none = np.zeros((4, 5), dtype=bool)
    assert not W.plan_windows(plan, [1], known=[none]).sets[0].allowed.any()


RUN_IN_FULL = "so every candidate closure was run in full (slower)"


def search_notes(flows: list[float], config: W.Configuration, **kw) -> str:
    limits = Thresholds(max_queue_length=1000.0)
    return " ".join(W.find_windows(hand_site(), hourly(flows), limits, [config], **kw).notes)


def test_the_search_runs_in_full_at_or_above_the_approachs_capacity_and_says_so() -> None:
    # The hand site's approach carries n c = 2 x 2,000 = 4,000 veh/h. Newell's
    # construction (the default) holds traffic beyond the approach when the demand
    # reaches that, or when a closure could pass more: the search then runs every
    # candidate in full, and says so (unless asked to run every candidate in full).
    assert RUN_IN_FULL in search_notes([1000.0, 4000.0, 1000.0], HAND_CONFIG)
    assert RUN_IN_FULL not in search_notes([1000.0, 3900.0, 1000.0], HAND_CONFIG)
    assert RUN_IN_FULL not in search_notes([1000.0, 4000.0], HAND_CONFIG, exhaustive=True)
    # a shoulder closure at 2,500 veh/h on each of the two lanes: 5,000 veh/h, above n c;
    # at 2,000 veh/h a lane it passes exactly n c, not more
    above = W.Configuration(0, capacity_override_veh_h_ln=2500.0)
    assert RUN_IN_FULL in search_notes([1000.0] * 3, above)
    at = W.Configuration(0, capacity_override_veh_h_ln=2000.0)
    assert RUN_IN_FULL not in search_notes([1000.0] * 3, at)
    # plan_windows passes the request on
    plan = Plan(hand_site(), hourly([1000.0, 4000.0]), thresholds=Thresholds(max_queue_length=1.0))
    assert any(RUN_IN_FULL in n for n in W.plan_windows(plan).notes)
    assert not any(RUN_IN_FULL in n for n in W.plan_windows(plan, exhaustive=True).notes)


def test_closure_may_run_past_midnight() -> None:
    day = [1000.0] * 7 + [2500.0] * 12 + [1000.0] * 5
    ws = windows_of(hand_site(), hourly(day * 2), Thresholds(max_queue_length=1000.0))
    assert ws.maximal() == [(0, 7), (19, 31), (43, 48)]
    assert [(s, e) for s, e in ws.longest(1)] == [(19, 31)]
    assert ws.clock(31) == dt.datetime(2027, 5, 4, 7)


def test_queue_left_behind_counts_against_the_hour_after_the_closure() -> None:
    # Open road 2,000 veh/h (1,000 pc/h/ln), closure 1,500, demand 1,800. A 1-hour closure
    # leaves 300 vehicles that clear at 200 veh/h in 1.5 h (D/D/1 textbook results).
    # Average delay: closure hour 0.5*300*1/1800 h = 5.0 min; the hour after
    # (300+100)/2/1800 h = 6.67 min; the next 0.5*100*0.5/1800 h = 0.83 min.
    site = hand_site(base_capacity_pc_h_ln=1000.0)
    demand = hourly([1800.0] * 24)
    strict = windows_of(site, demand, Thresholds(max_average_delay=6 * 60.0))
    # only a closure that ends with the data escapes the hour after it
    assert np.argwhere(strict.allowed).tolist() == [[23, 24]]
    loose = windows_of(site, demand, Thresholds(max_average_delay=7 * 60.0))
    assert np.array_equal(loose.allowed, expected_matrix(24, lambda s, e: e - s == 1))
    # total delay Q (T + t_c) / 2 = 300 * (1 + 1.5) / 2 = 375 veh-h (D/D/1 textbook result)
    assert loose.added_delay_veh_h(5, 6) == pytest.approx(375.0, rel=1e-9)
    w = loose.window(5, 6)
    # priced at the default car value, 28.69 $/veh-h of 2017 (TTI memo to TxDOT, March
    # 2018; no trucks on this site)
    assert w.road_user_cost == pytest.approx(375.0 * 28.69, rel=1e-9)
    assert w.hours == 1.0


def test_quarter_hours_and_demand_capacity_in_closure_hours_only() -> None:
    # 15-minute demand: 1,000 veh/h, 1,400 veh/h from 08:00 to 16:00; limit d/c 0.9 in
    # closure hours (no queue: 1,400 < 1,500). An hour a closure covers, in whole or in
    # part, is judged by its demand against the closure's capacity: 1,400 / 1,500 = 0.93
    # fails in a peak hour even for one quarter closed (its average capacity over the
    # hour, 375 + 3 x 1,000 veh, would dilute it to 0.41), while off-peak hours pass even
    # when fully closed (1,000 / 1,500 = 0.67). Hand arithmetic.
    flows = [1000.0] * 32 + [1400.0] * 32 + [1000.0] * 32
    demand = Demand(START, 900, np.array(flows))
    ws = windows_of(hand_site(), demand, Thresholds(max_demand_capacity=0.9))

    def rule(s: int, e: int) -> bool:
        return not set(range(s, e)) & set(range(32, 64))

    assert np.array_equal(ws.allowed, expected_matrix(96, rule))
    assert ws.longest(2) == [(0, 32), (64, 96)]  # to 08:00 and from 16:00
    assert ws.clock(32) == dt.datetime(2027, 5, 3, 8)
    assert ws.clock(64) == dt.datetime(2027, 5, 3, 16)
    flags = ws.hour_flags()
    assert flags["whole"].tolist() == [h < 8 or h >= 16 for h in range(24)]
    assert not flags["part"].any()
    rows = W.day_rows(ws)
    assert "".join(W.SYMBOLS[s] for s in rows[0][1]) == "########........########"


def test_a_part_hour_by_day_is_judged_on_the_day_capacity_not_the_night_one() -> None:
    # One lane of two closed (soft barrier, HCM capacity model), 15-minute demand from
    # 18:00: 1,620 veh/h in the day hour 18:00, 1,000 veh/h in the night hour 19:00
    # (night from 19:00, common practice, no source). At night the queue discharge rate
    # is 59 pc/h/ln lower (HCM 6th ed., Chapter 10, Eq. 10-14, f_DN) and the pre-breakdown
    # capacity is that rate / (1 - 0.134) (Eq. 10-15, alpha_wz = 13.4 %). No queue forms
    # (1,620 < the day capacity), so each hour a closure covers in part is judged on its
    # own demand against the capacity under the closure in that hour: 1,620 / c_day = 0.88
    # passes a 0.9 limit, though it would fail against the night capacity (0.92). Every
    # closure is allowed, including those that end inside 18:00, which the search judges
    # together with the ends inside 19:00 (night).
    config = W.Configuration(1)
    site = hand_site()
    c_day = configuration(site, "triangular", (1, "soft", None), False)[0]
    c_night = c_day - 59.0 / (1.0 - 0.134)
    assert 1620.0 / c_day == pytest.approx(0.882, abs=5e-4)
    assert 1620.0 / c_night == pytest.approx(0.916, abs=5e-4)
    start = dt.datetime(2027, 5, 3, 18)
    limits = Thresholds(max_demand_capacity=0.9)

    def search(flows: list[float], exhaustive: bool = False) -> np.ndarray:
        demand = Demand(start, 900, np.array(flows))
        result = W.find_windows(
            site, demand, limits, [config], options=SINGLE_STATE, exhaustive=exhaustive
        )
        return result.sets[0].allowed

    allowed = search([1620.0] * 4 + [1000.0] * 4)
    assert np.array_equal(allowed, expected_matrix(8, lambda s, e: True))
    # the same demand in the night hour fails every closure that covers any of it
    night = search([1000.0] * 4 + [1620.0] * 4)
    assert np.array_equal(night, expected_matrix(8, lambda s, e: e <= 4))
    assert np.array_equal(night, search([1000.0] * 4 + [1620.0] * 4, exhaustive=True))


def test_open_road_over_the_limit_allows_no_window_and_says_why() -> None:
    # demand 4,500 veh/h for one hour on a 4,000 veh/h open road
    flows = [1000.0] * 10 + [4500.0] + [1000.0] * 13
    result = W.find_windows(
        hand_site(),
        hourly(flows),
        Thresholds(max_queue_length=500.0),
        [HAND_CONFIG],
        options=SINGLE_STATE,
    )
    ws = result.sets[0]
    # 500 vehicles stored in hour 10 still stand at 11:00 (D/D/1), longer than 500 m
    assert ws.open_road_failing == (dt.datetime(2027, 5, 3, 10), dt.datetime(2027, 5, 3, 11))
    # windows after the failing hour would still see it fail
    assert not ws.allowed.any()
    assert any("all lanes open" in note for note in result.notes)


def test_demand_above_the_approach_capacity_is_searched_in_full() -> None:
    # 4,500 veh/h on an approach of 2 x 2,000 veh/h: Newell's method (the default) holds
    # the excess back beyond the approach, so every candidate is run in full (a delay
    # limit: a length limit fails the held hours themselves, next test)
    flows = [1000.0] * 4 + [4500.0] + [1000.0] * 3
    limits = Thresholds(max_average_delay=300.0)
    fast = W.find_windows(hand_site(), hourly(flows), limits, [HAND_CONFIG])
    assert any("run in full" in note for note in fast.notes)
    slow = W.find_windows(hand_site(), hourly(flows), limits, [HAND_CONFIG], exhaustive=True)
    assert np.array_equal(fast.sets[0].allowed, slow.sets[0].allowed)
    assert fast.sets[0].allowed.any()


def test_a_queue_held_beyond_the_approach_fails_the_length_limit() -> None:
    # The same demand on the open road: the front discharges at the approach capacity
    # (no capacity drop on the hand site), so the 4,500 - 4,000 = 500 vehicles of 04:00
    # wait beyond the approach's upstream end and the length shows 0 (Daganzo 2005). Their
    # queue's length is unknown, not zero: the hours holding them (04:00, and 05:00 until
    # it clears, 500 / 3,000 h = 10 min) fail a length limit however long.
    flows = [1000.0] * 4 + [4500.0] + [1000.0] * 3
    limits = Thresholds(max_queue_length=30_000.0)
    h = wzq.analyse(Plan(hand_site(), hourly(flows), (), limits)).hourly
    assert h["queue_max_veh"].tolist() == [0.0] * 4 + [500.0, 500.0, 0.0, 0.0]
    assert h["queue_length_max_m"].tolist() == [0.0] * 8
    assert h["queue_ok"].tolist() == [True] * 4 + [False, False, True, True]
    assert h["status"].tolist()[3:7] == ["ok", *["over limit: queue length unknown"] * 2, "ok"]
    found = W.find_windows(hand_site(), hourly(flows), limits, [HAND_CONFIG])
    ws = found.sets[0]
    assert ws.open_road_failing == (dt.datetime(2027, 5, 3, 4), dt.datetime(2027, 5, 3, 5))
    assert not ws.allowed.any()


def test_a_queue_held_beyond_the_approach_by_the_single_state_relation() -> None:
    # The same, single-state relation: at 04:00 arrivals clipped to capacity meet a queue
    # discharging at capacity, k_Q - k_A = 0, so no vehicle is stored (the relation's
    # N / 0 once printed 2.5e11 m); at 05:00 the arrivals of 1,000 veh/h, k_A = 500 / 3600
    # / 25 veh/m/ln, meet the capacity state k_c = 2,000 / 3600 / 25: 500 veh over 2 x
    # (k_c - k_A) = 1 / 30 veh/m is 15,000 m (triangular hand site, by hand). Both hours
    # hold traffic beyond the approach, so both fail whatever their length.
    flows = [1000.0] * 4 + [4500.0] + [1000.0] * 3
    limits = Thresholds(max_queue_length=30_000.0)
    plan = Plan(hand_site(), hourly(flows), (), limits, options=SINGLE_STATE)
    h = wzq.analyse(plan).hourly
    assert h["queue_length_max_m"].tolist()[4] == 0.0
    assert h["queue_length_max_m"].tolist()[5] == pytest.approx(15_000.0, rel=1e-12)
    assert h["status"].tolist()[3:7] == ["ok", *["over limit: queue length unknown"] * 2, "ok"]
    # the search judges the held hours the same way, fast or run in full
    for lim in (limits, Thresholds(max_queue_length=30_000.0, max_average_delay=300.0)):
        fast = W.find_windows(hand_site(), hourly(flows), lim, [HAND_CONFIG], options=SINGLE_STATE)
        slow = W.find_windows(
            hand_site(), hourly(flows), lim, [HAND_CONFIG], options=SINGLE_STATE, exhaustive=True
        )
        assert np.array_equal(fast.sets[0].allowed, slow.sets[0].allowed)
        assert not fast.sets[0].allowed.any()


def test_an_open_road_failure_late_in_the_day_refuses_the_windows_before_it() -> None:
    # As above with the failing hour late (05:00 of eight hours): every closure, even one
    # ending hours before it with its queue gone, leaves 05:00 failing on the open road.
    flows = [1000.0] * 5 + [4500.0] + [1000.0] * 2
    ws = windows_of(hand_site(), hourly(flows), Thresholds(max_queue_length=500.0))
    assert ws.open_road_failing == (dt.datetime(2027, 5, 3, 5), dt.datetime(2027, 5, 3, 6))
    assert not ws.allowed.any()


def packed_length(model, lanes: int, lam, qdr, run) -> np.ndarray:
    """The shortest road the queued vehicles can hold: packed at jam density on every
    lane (the least length any queue-length method can give; a method of the test's own)."""
    queued = np.maximum(run.queue[:-1], run.queue[1:])
    return queued / (lanes * model.diagram.jam_density)


@pytest.mark.parametrize("limit", [2000.0, 1999.0])
def test_the_quick_screen_never_refuses_what_the_queue_length_method_allows(limit) -> None:
    # The search first screens a closure with its queue packed at jam density (the least
    # length) and runs the length method only where the screen passes. With a method
    # that gives exactly that least length, a window at the limit must still pass. Hand:
    # closed at 1,500 veh/h, hour 1 brings 2,000 veh: 500 veh queued at 02:00 over
    # 2 lanes x 0.125 veh/m = 0.25 veh/m is 2,000 m, then cleared (1,000 veh/h after).
    flows = [1000.0, 2000.0, 1000.0, 1000.0]
    result = W.find_windows(
        hand_site(),
        hourly(flows),
        Thresholds(max_queue_length=limit),
        [HAND_CONFIG],
        queue_length=packed_length,
    )
    # under 2,000 m every closure holding hour 1 (s <= 1 < e) fails; at 2,000 m none does
    rule = (lambda s, e: True) if limit == 2000.0 else (lambda s, e: not s <= 1 < e)
    assert np.array_equal(result.sets[0].allowed, expected_matrix(4, rule))


def test_a_queue_left_at_the_end_of_a_closure_is_followed_even_when_it_is_one_vehicle() -> None:
    # Closed at 1,500 veh/h through hour 1 of 1,501 veh/h, one vehicle still waits when
    # the closure ends (exact: 1,501 - 1,500). Hour 2 brings 0.01 veh/h, so that vehicle's
    # delay weighs on its average: it leaves at 4,000 - 0.01 veh/h after 3,600 / 3,999.99 s
    # = 0.9 s, 0.45 veh-s over 0.01 veh is 45 s a vehicle, over the 30 s limit (D/D/1 by
    # hand). Every closure holding hour 1 fails in hour 2 (closed longer: 1,500 veh/h,
    # 1.2 veh-s, 120 s); hour 1 itself is 0.5 veh-h over 1,501 veh, 1.2 s, and passes.
    flows = [1000.0, 1501.0, 0.01, 1000.0]
    ws = windows_of(hand_site(), hourly(flows), Thresholds(max_average_delay=30.0))
    assert np.array_equal(ws.allowed, expected_matrix(4, lambda s, e: not s <= 1 < e))


def test_without_the_capacity_drop_the_open_road_discharges_at_its_capacity() -> None:
    # The site's open road drops 10 % after breakdown (3,600 veh/h), but the plan's
    # option leaves the drop out: the queue a closure leaves behind is discharged at
    # 4,000 veh/h. Closed through hour 1 at 1,500 veh/h with 2,000 arriving: 500 veh at
    # 02:00, 250 veh-h in hour 1; then 4,000 - 1,000 veh/h clears them in 1/6 h:
    # 500 x 1/6 / 2 = 41.667 veh-h (with the drop it would be 500 / 2,600 h: 48.077).
    site = hand_site(capacity_drop_pct_open=10.0)
    options = Options(queue_length_method="shockwave", capacity_drop=False)
    limits = Thresholds(max_average_delay=3600.0)
    ws = windows_of(site, hourly([1000.0, 2000.0, 1000.0, 1000.0]), limits, options)
    assert ws.added_delay_veh_h(1, 2) == pytest.approx(250.0 + 500.0 / 6.0 / 2.0, rel=1e-12)


def test_the_label_of_a_configuration() -> None:
    # the words of the search's sheet and notes for each setting
    assert W.Configuration(1).label(2) == "1 of 2 lanes closed"
    assert W.Configuration(0).label(3) == "shoulder closed, 3 lanes open"
    hard = W.Configuration(2, barrier="hard", capacity_override_veh_h_ln=1235.0)
    assert hard.label(3) == "2 of 3 lanes closed, concrete barrier, 1,235 veh/h/ln"


@pytest.mark.parametrize("method", ["newell", "shockwave"])
def test_traffic_held_at_a_section_of_an_approach_with_ramps_fails_the_length_limit(
    method: str,
) -> None:
    # The same 500 vehicles held, on approaches with ramps: at 04:00 an entrance ramp adds
    # 1,000 veh/h to the mainline's 3,500 (4,500 veh/h below the merge), or the mainline
    # brings 4,500 veh/h of which 1,000 leave at an exit ramp (4,500 above the diverge).
    # A section given 4,500 veh/h on 2 x 2,000 veh/h holds 500 vehicles back by 05:00,
    # cleared 500 / 3,000 h = 10 min later (D/D/1 by hand); the length shown leaves them
    # out, so 04:00 and 05:00 fail a length limit however long. Under the road's capacity
    # (an entrance ramp of 400 veh/h: 3,900) every hour passes.
    hours = (0.0,) * 4
    cases = (
        ([1000.0] * 4 + [3500.0] + [1000.0] * 3, "entrance-ramp", 1000.0, True),
        ([1000.0] * 4 + [4500.0] + [1000.0] * 3, "exit-ramp", 1000.0, True),
        ([1000.0] * 4 + [3500.0] + [1000.0] * 3, "entrance-ramp", 400.0, False),
    )
    limits = Thresholds(max_queue_length=30_000.0)
    options = Options(queue_length_method=method)
    for flows, kind, ramp_flow, held in cases:
        ramp = Landmark("Ash Lane ramp", 1000.0, kind, ramp_veh_h=(*hours, ramp_flow, *hours[:3]))
        approach = Approach((ramp,))
        plan = Plan(hand_site(), hourly(flows), (), limits, options=options, approach=approach)
        r = wzq.analyse(plan)
        status = "over limit: queue length unknown" if held else "ok"
        assert r.hourly["status"].tolist()[3:7] == ["ok", status, status, "ok"], (kind, ramp_flow)
        said = [w for w in r.warnings if "500 vehicles wait there" in w]
        assert len(said) == (1 if held else 0)
        found = W.find_windows(
            hand_site(), hourly(flows), limits, [HAND_CONFIG], options=options, approach=approach
        )
        assert found.sets[0].allowed.any() != held


def test_half_a_vehicle_held_makes_the_length_unknown_and_less_does_not() -> None:
    # 4,000.5 veh/h for an hour on the 4,000 veh/h open road holds 0.5 vehicle beyond the
    # approach at 05:00 (D/D/1 by hand; 0.5 and 4,000.5 are exact in binary), which
    # shows as one vehicle: the hours 04:00 and 05:00 (it clears 0.5 / 3,000 h after
    # 05:00) fail the length limit; 0.25 vehicle held shows as none and passes. The
    # rule "half a vehicle or more" is the one the warning uses too.
    limits = Thresholds(max_queue_length=30_000.0)
    for excess, fails in ((0.5, True), (0.25, False)):
        flows = [1000.0] * 4 + [OPEN + excess] + [1000.0] * 3
        r = wzq.analyse(Plan(hand_site(), hourly(flows), (), limits))
        h = r.hourly
        assert h["queue_max_veh"].tolist()[4:6] == [excess, excess]
        expected = "over limit: queue length unknown" if fails else "ok"
        assert h["status"].tolist()[3:7] == ["ok", expected, expected, "ok"]
        assert h["queue_ok"].tolist()[3:7] == [True, not fails, not fails, True]
        held = [w for w in r.warnings if "held" in w and "vehicles wait there" in w]
        assert len(held) == (1 if fails else 0)
    # the per-hour checks on their own: exactly half a vehicle fails, just under passes
    zeros = np.zeros(2)
    _, _, checks = hour_checks(
        limits, zeros, zeros + OPEN, zeros, zeros, zeros.astype(bool), None, np.array([0.5, 0.4999])
    )
    assert checks[0][2].tolist() == [False, True]


def test_a_landmark_named_like_a_check_keeps_its_name_in_the_status() -> None:
    # The status of an hour whose length is unknown names the length check "queue length
    # unknown"; a landmark whose own name holds those words must keep its name as typed.
    # 500 vehicles held at 04:00 and 05:00 as in the test above; the back of the queue is
    # beyond the approach, so past any landmark on it.
    flows = [1000.0] * 4 + [4500.0] + [1000.0] * 3
    board = "queue length board"
    approach = Approach((Landmark(board, 2_000.0),))
    cases = (
        (
            Thresholds(max_queue_length=30_000.0, queue_must_not_pass=board),
            f"over limit: queue length unknown, queue passes {board}",
        ),
        (Thresholds(queue_must_not_pass=board), f"over limit: queue passes {board}"),
    )
    for limits, status in cases:
        plan = Plan(hand_site(), hourly(flows), (), limits, approach=approach)
        h = wzq.analyse(plan).hourly
        assert h["status"].tolist()[3:7] == ["ok", status, status, "ok"]


def test_no_limits_allows_everything_with_a_note() -> None:
    result = W.find_windows(hand_site(), hourly([3000.0] * 6), Thresholds(), [HAND_CONFIG])
    assert result.sets[0].allowed.sum() == 21
    assert result.sets[0].allowed.dtype == bool  # a mask, as with limits
    assert any("no limits" in note for note in result.notes)


def test_fast_search_equals_exhaustive_search_on_the_demo_plan() -> None:
    full = demo_plan()
    d = full.demand  # the first 36 hours of the shipped invented demo
    plan = replace(full, demand=Demand(d.start, d.interval_s, d.flows_veh_h[:36]), closures=())
    fast = W.plan_windows(plan)
    slow = W.plan_windows(plan, exhaustive=True)
    for a, b in zip(fast.sets, slow.sets, strict=True):
        assert np.array_equal(a.allowed, b.allowed)
        assert a.allowed.any()


def test_typical_days_average_whole_days() -> None:
    # Mon..Sun of invented counts, plus a partial day that must be ignored
    flows = []
    for d in range(7):
        flows += [100.0 * (d + 1)] * 24
    flows += [9999.0] * 5
    days = W.typical_days(hourly(flows))
    names = [d.name for d in days]
    assert names == ["weekday (average of 5 days)", "weekend (average of 2 days)"]
    # weekday mean of 100..500 is 300, weekend mean of 600, 700 is 650; laid out twice
    assert days[0].demand.flows_veh_h.tolist() == [300.0] * 48
    assert days[1].demand.flows_veh_h.tolist() == [650.0] * 48
    assert days[1].demand.start == dt.datetime(2027, 5, 8)
    assert days[0].stop_start == 24 and days[0].fold
    with pytest.raises(PlanError, match="no whole day"):
        W.typical_days(hourly([1000.0] * 20))


def test_typical_search_reports_starts_on_the_first_day() -> None:
    day = [1000.0] * 7 + [2500.0] * 12 + [1000.0] * 5
    result = W.find_windows(
        hand_site(),
        W.typical_days(hourly(day * 2)),
        Thresholds(max_queue_length=1000.0),
        [HAND_CONFIG],
        options=SINGLE_STATE,
    )
    ws = result.sets[0]
    assert ws.maximal() == [(0, 7), (19, 31)]
    rows = W.day_rows(ws)
    assert len(rows) == 1
    assert "".join(W.SYMBOLS[s] for s in rows[0][1]) == "#######............#####"


def test_bad_inputs_say_where_and_what_to_do() -> None:
    with pytest.raises(PlanError) as e:
        W.find_windows(hand_site(), hourly([1000.0] * 4), Thresholds(), [2])
    assert "configurations[0]" in str(e.value) and "use 1 to 1" in str(e.value)
    with pytest.raises(PlanError, match="whole hours"):
        W.find_windows(hand_site(), Demand(START, 900, np.ones(5)), Thresholds(), [1])
    with pytest.raises(PlanError, match=r"demand\[1\]"):
        W.find_windows(hand_site(), hourly([1.0, -5.0]), Thresholds(), [1])


# ---------------------------------------------------------------------------------------------
# Generated profiles: every reported window passes analyse(), and is maximal
# ---------------------------------------------------------------------------------------------


@st.composite
def cases(draw, max_hours: int = 30):
    lanes = draw(st.integers(2, 4))
    per_hour = draw(st.sampled_from([1, 1, 2, 4]))
    hours = draw(st.integers(4, max(4, min(max_hours, 48 // per_hour))))
    start_hour = draw(st.integers(0, 23))
    level = draw(st.integers(600, 2300))
    n = hours * per_hour
    # a smooth random profile with a peak somewhere, plus noise (veh/h)
    peak_at = draw(st.integers(0, n - 1))
    peak = draw(st.floats(0.0, 1.2))
    width = draw(st.integers(1, max(1, n // 2)))
    noise = draw(st.lists(st.floats(0.7, 1.3), min_size=n, max_size=n))
    x = np.arange(n)
    shape = 0.35 + peak * np.exp(-0.5 * ((x - peak_at) / width) ** 2)
    flows = np.round(level * lanes * shape * np.array(noise))
    site = Site(
        lanes=lanes,
        speed_limit=draw(st.sampled_from([55, 65, 70])) * 0.44704,
        work_zone_speed_limit=draw(st.sampled_from([45, 55])) * 0.44704,
        work_zone_length=draw(st.sampled_from([0.0, 800.0, 2500.0])),
        heavy_vehicle_share=draw(st.sampled_from([0.0, 0.05, 0.15])),
        capacity_method=draw(st.sampled_from(["hcm7", "hcm7", "hcm2000"])),
        area_type=draw(st.sampled_from(["urban", "rural"])),
        capacity_drop_pct_open=draw(st.sampled_from([7.0, 7.0, 0.0])),
    )
    limits = Thresholds(
        max_queue_length=draw(st.one_of(st.none(), st.floats(200.0, 6000.0))),
        max_average_delay=draw(st.one_of(st.none(), st.floats(30.0, 1500.0))),
        max_demand_capacity=draw(st.one_of(st.none(), st.floats(0.6, 1.1))),
    )
    if limits == Thresholds():
        limits = Thresholds(max_queue_length=1500.0)
    options = Options(
        capacity_drop=draw(st.booleans()),
        diagram=draw(st.sampled_from(["triangular", "triangular", "greenshields"])),
        queue_length_method=draw(st.sampled_from(["newell", "newell", "shockwave"])),
    )
    config = W.Configuration(
        draw(st.integers(1, lanes - 1)), draw(st.sampled_from(["soft", "hard"]))
    )
    demand = Demand(START + dt.timedelta(hours=start_hour), 3600 // per_hour, flows)
    return site, demand, limits, options, config


def _passes(site, demand, limits, options, config, s: int, e: int) -> bool:
    step = dt.timedelta(seconds=demand.interval_s)
    closure = Closure(
        demand.start + s * step, demand.start + e * step, config.lanes_closed, config.barrier
    )
    result = wzq.analyse(Plan(site, demand, (closure,), limits, options=options))
    return bool((result.hourly["status"] == "ok").all())


def test_no_drop_discharge_at_approach_capacity_window_agrees_with_analyse() -> None:
    # Found by the property test below: no capacity drop, so the open road discharges
    # at exactly the approach's capacity n c (the case wzq.models.newell's notes single out),
    # and the search's differenced curves put that flow a rounding error below n c.
    # Every window it reports must still pass analyse and be maximal.
    site = Site(lanes=2, speed_limit=55 * 0.44704, work_zone_speed_limit=45 * 0.44704,
                work_zone_length=0.0, heavy_vehicle_share=0.05)  # fmt: skip
    flows = [668, 671, 686, 740, 893, 1209, 1679, 2139, 2335, 2139, 1679, 1209,
             893, 740, 686, 671, 668] + [667] * 7  # fmt: skip
    demand = Demand(START, 3600, np.array(flows, dtype=float))
    case = (site, demand, Thresholds(max_queue_length=1500.0), Options(capacity_drop=False),
            W.Configuration(1, "hard"))  # fmt: skip
    ws = W.find_windows(*case[:3], [case[4]], options=case[3]).sets[0]
    for s, e in ws.maximal():
        assert _passes(*case, s, e), (s, e)
        assert s == 0 or not _passes(*case, s - 1, e), (s, e)
        assert e == ws.n or not _passes(*case, s, e + 1), (s, e)


@settings(max_examples=examples(40), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(cases(), st.data())
def test_reported_windows_pass_analyse_and_cannot_be_extended(case, data) -> None:
    site, demand, limits, options, config = case
    result = W.find_windows(site, demand, limits, [config], options=options)
    check_verdicts(result.sets[0], lambda s, e: _passes(*case, s, e), data)


def check_verdicts(ws: W.WindowSet, passes, data, top: int = 5) -> None:
    """Up to ``top`` reported windows pass ``passes(s, e)`` (analyse's verdict) and
    cannot be extended; four random candidates get analyse's verdict."""
    n = ws.n
    windows = ws.maximal()
    if len(windows) > top:
        windows = data.draw(st.permutations(windows))[:top]
    for s, e in windows:
        assert passes(s, e), (s, e)
        assert s == 0 or not passes(s - 1, e), (s, e)
        assert e == n or not passes(s, e + 1), (s, e)
    # any candidate, allowed or not, gets the same verdict as analyse()
    for _ in range(4):
        s = data.draw(st.integers(0, n - 1))
        e = data.draw(st.integers(s + 1, n))
        assert bool(ws.allowed[s, e]) == passes(s, e), (s, e)


@settings(max_examples=examples(20), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(cases(max_hours=8))
def test_fast_search_equals_exhaustive_search(case) -> None:
    site, demand, limits, options, config = case
    fast = W.find_windows(site, demand, limits, [config], options=options).sets[0]
    slow = W.find_windows(site, demand, limits, [config], options=options, exhaustive=True)
    assert np.array_equal(fast.allowed, slow.sets[0].allowed)


# ---------------------------------------------------------------------------------------------
# Tables, workbook sheet, command line
# ---------------------------------------------------------------------------------------------


def peak_plan(**kw) -> Plan:
    """Two days of the daily-peak profile with an HCM 2000 closure of 1,600 veh/h."""
    day = [1000.0] * 7 + [2500.0] * 12 + [1000.0] * 5
    site = hand_site(capacity_method="hcm2000", name=kw.pop("name", "Kestrel Ridge Parkway"))
    return Plan(site, hourly(day * 2), thresholds=Thresholds(max_queue_length=1000.0), **kw)


def test_tables_for_the_report() -> None:
    plan = peak_plan()
    result = W.plan_windows(plan)
    table = W.windows_table(result)
    assert list(table.columns) == ["configuration", "day", *W.HOUR_COLUMNS]
    assert table["day"].tolist() == ["Mon 2027-05-03", "Tue 2027-05-04"]
    assert table.loc[0, "06"] and not table.loc[0, "07"] and table.loc[0, "19"]
    counts = W.days_allowed_by_hour(result)
    assert counts["1 of 2 lanes closed"].tolist() == [2] * 7 + [0] * 12 + [2] * 5
    assert counts.index.name == "hour" and list(counts.index) == list(range(24))
    assert all(str(t) == "int64" for t in counts.dtypes)  # whole days, printed as counts
    # one column per configuration, in the order they were searched (not alphabetical)
    both = W.find_windows(plan.site, plan.demand, plan.thresholds, [0, 1])
    assert list(W.days_allowed_by_hour(both).columns) == [
        "shoulder closed, 2 lanes open",
        "1 of 2 lanes closed",
    ]
    # the longest windows of every configuration, or of the one asked for
    assert set(W.longest_windows(both)["configuration"]) == {
        "shoulder closed, 2 lanes open",
        "1 of 2 lanes closed",
    }
    one = W.longest_windows(both, configuration="1 of 2 lanes closed")
    assert set(one["configuration"]) == {"1 of 2 lanes closed"}
    assert one["hours"].tolist() == [12.0, 7.0, 5.0]  # 19:00-07:00, 00:00-07:00, 19:00-24:00
    longest = W.longest_windows(result, top=2)
    assert longest["hours"].tolist() == [12.0, 7.0]
    assert longest["start"].tolist()[0] == dt.datetime(2027, 5, 3, 19)
    # night closures on 1,000 veh/h below 1,600 veh/h add no queue and, with a zero-length
    # work zone, no delay
    assert longest["added_delay_veh_h"].abs().max() < 1e-9
    starts = W.feasible_starts(result, 8.0)
    assert [t.hour for t in starts["start"]] == [19, 20, 21, 22, 23]  # Tue 19:00 + 8 h > data
    assert (starts["end"] - starts["start"]).eq(dt.timedelta(hours=8)).all()


def test_windows_sheet_is_written_and_replaced(tmp_path: Path) -> None:
    plan = peak_plan(name='=HYPERLINK("x")')
    result = W.plan_windows(plan)
    wb = openpyxl.Workbook()
    wb.active.title = "Mine"
    wb["Mine"]["A1"] = "keep me"
    wb.create_sheet("After")
    write_windows_sheet(wb, result, plan, duration_h=8)
    write_windows_sheet(wb, result, plan, duration_h=8)  # replaced, not added twice
    assert wb.sheetnames == ["Mine", "After", SHEET]
    path = tmp_path / "book.xlsx"
    wb.save(path)
    book = openpyxl.load_workbook(path)
    assert book["Mine"]["A1"].value == "keep me"
    ws = book[SHEET]
    values = [[c.value for c in row] for row in ws.iter_rows()]
    flat = [v for row in values for v in row if v is not None]
    assert wzq.CAUTION in flat
    # the user's site name stays text, never a formula
    cell = next(
        c for row in ws.iter_rows() for c in row if c.value == '=HYPERLINK("x"), northbound'
    )
    assert cell.data_type == "s"
    header = next(i for i, row in enumerate(values) if row[:3] == ["Configuration", "Day", "00"])
    first_day = values[header + 1]
    assert first_day[:2] == ["1 of 2 lanes closed", "Mon 2027-05-03"]
    assert first_day[2:] == ["yes"] * 7 + ["no"] * 12 + ["yes"] * 5
    assert len(ws._charts) == 1


def _write_plan(path: Path, plan: Plan) -> Path:
    path.write_text(json.dumps(plan_to_dict(plan), indent=2), encoding="utf-8")
    return path


def run_cli(*args: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(list(args))
    return code, out.getvalue(), err.getvalue()


def test_cli_prints_chart_longest_windows_and_starts(tmp_path: Path) -> None:
    path = _write_plan(tmp_path / "plan.json", peak_plan())
    code, out, err = run_cli("windows", str(path), "--duration", "8")
    assert code == 0, err
    assert "1 of 2 lanes closed" in out
    assert "  Mon 2027-05-03  #######............#####" in out
    assert "Mon 2027-05-03 19:00 to Tue 2027-05-04 07:00" in out
    assert "Mon 2027-05-03: 19:00 20:00 21:00 22:00 23:00" in out
    assert wzq.CAUTION in out


def test_cli_typical_and_days(tmp_path: Path) -> None:
    path = _write_plan(tmp_path / "plan.json", peak_plan())
    code, out, _ = run_cli("windows", str(path), "--days", "2027-05-04")
    assert code == 0
    assert "Tue 2027-05-04  #######" in out and "Mon 2027-05-03  #" not in out
    code, out, _ = run_cli("windows", str(path), "--typical")
    assert code == 0
    assert "weekday (average of 2 days)  #######............#####" in out


@pytest.mark.parametrize(
    ("args", "where"),
    [
        (["--lanes-closed", "x"], "--lanes-closed"),
        (["--lanes-closed", "2"], "--lanes-closed"),
        (["--duration", "0"], "--duration"),
        (["--days", "May 4"], "--days"),
        (["--typical", "--days", "2027-05-04"], "--days"),
    ],
)
def test_cli_bad_input_exits_2_and_leaves_the_file_alone(
    tmp_path: Path, args: list[str], where: str
) -> None:
    path = _write_plan(tmp_path / "plan.json", peak_plan())
    before = path.read_bytes()
    code, _, err = run_cli("windows", str(path), *args)
    assert code == 2
    assert where in err and "Traceback" not in err
    assert path.read_bytes() == before


def test_cli_missing_file_exits_2(tmp_path: Path) -> None:
    code, _, err = run_cli("windows", str(tmp_path / "nope.json"))
    assert code == 2 and "no such file" in err


def test_a_window_away_from_the_open_roads_own_queue_adds_no_delay() -> None:
    # The daily-peak profile with one hour of 4,500 veh/h at noon, over the open road's
    # 4,000 veh/h: a queue stands there with no closure at all. A night closure on
    # 1,000 veh/h below the closure's 1,600 adds no queue of its own and leaves the noon
    # queue as it was, so its added delay is zero, not the open road's delay again.
    day = [1000.0] * 7 + [2500.0] * 5 + [4500.0] + [2500.0] * 6 + [1000.0] * 5
    # a delay limit the open road's own queue passes (200 s a vehicle at worst as the engine
    # finds it; only a precondition here) and a closure in the 2,500 veh/h hours does not
    # (900 more vehicles an hour). (A length limit would fail the noon hour itself: 500
    # vehicles there wait beyond the approach, test_a_queue_held_beyond_the_approach...)
    plan = Plan(peak_plan().site, hourly(day * 2), thresholds=Thresholds(max_average_delay=300.0))
    assert wzq.analyse(plan).summary.total_delay_veh_h > 100.0
    longest = W.longest_windows(W.plan_windows(plan), top=2)
    assert longest["start"].tolist()[0] == dt.datetime(2027, 5, 3, 19)
    assert longest["added_delay_veh_h"].abs().max() < 1e-9
