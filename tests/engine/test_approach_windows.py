"""The closure-window search with ramps, landmarks and the landmark limit.

The search must give every candidate closure the verdict :func:`wzq.analyse`
gives the plan with that one closure (the approach's ramps change the flow
arriving at the closure, the queue length and, when an exit ramp holds the
closure's traffic back, its delay; the limit "the queue must not pass landmark
X" is one more per-hour check). Generated profiles as in ``test_windows.py``,
with ramps, landmarks and the limit drawn at random.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import replace

import numpy as np
import pytest
from budget import examples
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_windows import cases, check_verdicts

import wzq
from wzq.engine import windows as W
from wzq.engine.plan import Approach, Closure, Demand, Landmark, Plan, PlanError, Site, Thresholds
from wzq.units import MPH


@st.composite
def approach_cases(draw, max_hours: int = 14):
    site, demand, limits, options, config = draw(cases(max_hours=max_hours))
    n_hours = len(demand.flows_veh_h) * demand.interval_s // 3600
    landmarks = []
    for i in range(draw(st.integers(1, 2))):
        kind = draw(st.sampled_from(["exit-ramp", "entrance-ramp"]))
        distance = draw(st.floats(150.0, 3000.0))
        if kind == "entrance-ramp" and draw(st.booleans()):
            flows = draw(st.lists(st.integers(0, 700), min_size=n_hours, max_size=n_hours))
            landmarks.append(Landmark(f"ramp {i}", distance, kind, ramp_veh_h=tuple(flows)))
        else:
            share = draw(st.floats(0.02, 0.35))
            landmarks.append(Landmark(f"ramp {i}", distance, kind, ramp_share=share))
    landmarks.append(Landmark("bridge", draw(st.floats(100.0, 5000.0)), "structure"))
    landmarks.append(Landmark("signs end", draw(st.floats(300.0, 4000.0)), "warning-signs-end"))
    names = [lm.name for lm in landmarks]
    limit = draw(st.sampled_from([None, *names]))
    limits = replace(limits, queue_must_not_pass=limit)
    return site, demand, limits, options, config, Approach(tuple(landmarks))


def _passes(site, demand, limits, options, config, approach, s: int, e: int) -> bool:
    step = dt.timedelta(seconds=demand.interval_s)
    closure = Closure(
        demand.start + s * step, demand.start + e * step, config.lanes_closed, config.barrier
    )
    plan = Plan(site, demand, (closure,), limits, options=options, approach=approach)
    return bool((wzq.analyse(plan).hourly["status"] == "ok").all())


def _search(case, **kw) -> W.WindowSet:
    site, demand, limits, options, config, approach = case
    result = W.find_windows(
        site, demand, limits, [config], options=options, approach=approach, **kw
    )
    return result.sets[0]


@pytest.mark.slow
@settings(max_examples=examples(25), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(approach_cases(), st.data())
def test_search_verdicts_equal_analyse_with_ramps_and_landmarks(case, data) -> None:
    check_verdicts(_search(case), lambda s, e: _passes(*case, s, e), data, top=3)


@settings(max_examples=examples(10), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(approach_cases(max_hours=7))
def test_fast_search_equals_exhaustive_search_with_ramps(case) -> None:
    fast = _search(case)
    slow = _search(case, exhaustive=True)
    assert np.array_equal(fast.allowed, slow.allowed)


START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)


def test_landmark_limit_alone_is_a_limit() -> None:
    # The only limit is "the queue must not pass the bridge", 1,000 m upstream. Hand
    # site of test_windows.py (2 lanes, v_f 25 m/s, k_j 0.125 veh/m/ln, 2,000 veh/h/ln,
    # no capacity drop): 2,400 veh/h against a 1,500 veh/h closure. Single-state
    # relation (Lighthill & Whitham 1955): the queue grows at 900 veh/h and stores
    # n (k_Q - k_A) = 2 (0.125 - 750/3600/w - 1200/3600/25) veh/m with
    # w = (2000/3600) / (0.125 - 2000/3600/25) = 5.4054 m/s, i.e.
    # 2 (0.125 - 0.038542 - 0.013333) = 0.14625 veh/m; 1,000 m hold 146.25 veh,
    # reached after 146.25 / 900 h = 9.75 min. So a closure in the busy hour passes the
    # bridge (fails), in that hour and in the next, which starts with the 900 vehicles
    # left behind (they clear at 4,000 - 600 veh/h within 16 minutes).
    site = Site(lanes=2, speed_limit=25.0, work_zone_speed_limit=25.0, work_zone_length=0.0,
                free_flow_speed=25.0, heavy_vehicle_share=0.0, jam_density=0.125,
                base_capacity_pc_h_ln=2000.0, capacity_drop_pct_open=0.0)  # fmt: skip
    demand = Demand(START, 3600, np.array([600.0, 2400.0, 600.0, 600.0]))
    approach = Approach((Landmark("bridge", 1000.0, "structure"),))
    limits = Thresholds(queue_must_not_pass="bridge")
    config = W.Configuration(1, capacity_override_veh_h_ln=1500.0)
    options = wzq.Options(queue_length_method="shockwave")
    ws = W.find_windows(site, demand, limits, [config], options=options, approach=approach)
    assert ws.notes == ()
    ws = ws.sets[0]
    assert not ws.allowed[1, 2]  # the 2,400 veh/h hour
    assert ws.allowed[2, 4] and ws.allowed[0, 1]
    plan = Plan(site, demand, (Closure(START + dt.timedelta(hours=1), START + dt.timedelta(hours=2),
                1, capacity_override_veh_h_ln=1500.0),), limits, options=options,
                approach=approach)  # fmt: skip
    hourly = wzq.analyse(plan).hourly
    over = "over limit: queue passes bridge"
    assert list(hourly["status"]) == ["ok", over, over, "ok"]
    first = wzq.analyse(plan).landmarks.loc[0, "first_reached"]
    assert first == pytest.approx(START + dt.timedelta(hours=1, minutes=9.75))


def test_hourly_ramp_flows_over_typical_days_are_refused() -> None:
    site = Site(lanes=3, speed_limit=65 * MPH, work_zone_speed_limit=55 * MPH,
                work_zone_length=800.0)  # fmt: skip
    flows = np.tile(np.r_[np.full(7, 900.0), np.full(12, 3600.0), np.full(5, 900.0)], 7)
    demand = Demand(START, 3600, flows)
    ramp = Landmark("Orchard Rd on-ramp", 600.0, "entrance-ramp", ramp_veh_h=(300.0,) * 168)
    plan = Plan(site, demand, thresholds=Thresholds(max_queue_length=1500.0),
                approach=Approach((ramp,)))  # fmt: skip
    W.plan_windows(plan)  # the plan's own demand: one flow per hour, searched
    with pytest.raises(PlanError) as e:
        W.plan_windows(plan, typical=True)
    assert "landmarks[0].veh_h" in str(e.value)
    assert "give one flow per hour" in str(e.value)
