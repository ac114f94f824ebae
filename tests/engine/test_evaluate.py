"""analyse(plan): capacity per interval, queue, length and delay, end to end.

Expected values are worked by hand from the published relations named beside
each check, never taken from the code's output.
"""

from __future__ import annotations

import dataclasses
import datetime as dt

import numpy as np
import pytest

from wzq import Closure, Demand, Options, Plan, PlanError, Site, Thresholds, analyse
from wzq.units import FOOT, MILE, MPH

T0 = dt.datetime(2027, 3, 1)


def site(**kw) -> Site:
    base = dict(
        lanes=3,
        speed_limit=65 * MPH,  # default FFS = 70 mi/h (HCM 7th ed. ch. 12: limit + 5)
        work_zone_speed_limit=55 * MPH,
        work_zone_length=0.0,
        heavy_vehicle_share=0.0,
        driver_population="commuter",
    )
    base.update(kw)
    return Site(**base)


def flat_plan(demand: float, hours: int, closures=(), **kw) -> Plan:
    return Plan(
        site=kw.pop("site", site()),
        demand=Demand(T0, 3600, np.full(hours, demand)),
        closures=tuple(closures),
        **kw,
    )


def at(h: float) -> dt.datetime:
    return T0 + dt.timedelta(hours=h)


def test_closed_form_queue_with_override_capacity() -> None:
    # D/D/1 textbook case (see tests/models/test_queueing.py): demand 3000 veh/h, a
    # closure leaving 2 lanes at a user capacity of 1000 veh/h/ln for 2 h,
    # capacity drop off. Open road: HCM 7th ed. ch. 12 basic freeway capacity
    # at FFS 70 mi/h = 2200 + 10 (70 - 50) = 2400 pc/h/ln, no trucks -> 7200 veh/h.
    plan = flat_plan(
        3000.0,
        8,
        [Closure(at(1), at(3), 1, capacity_override_veh_h_ln=1000.0)],
        options=Options(capacity_drop=False),
    )
    r = analyse(plan)
    q_max = (3000 - 2000) * 2.0
    t_c = q_max / (7200 - 3000)
    s = r.summary
    assert s.max_queue_veh == pytest.approx(q_max)
    assert s.max_queue_veh_at == at(3)
    assert abs((s.last_queue_clears - at(3 + t_c)).total_seconds()) < 0.01
    assert s.queue_delay_veh_h == pytest.approx(q_max * (2 + t_c) / 2)
    assert s.work_zone_delay_veh_h == 0.0  # zero-length work zone
    assert s.vehicles_affected == pytest.approx(3000 * (2 + t_c))
    h = r.hourly
    assert list(h["lanes_open"]) == [3, 2, 2, 3, 3, 3, 3, 3]
    assert h["queue_end_veh"].tolist()[:4] == pytest.approx([0, 1000, 2000, 0])
    # hourly delays add up to the total
    assert h["delay_veh_h"].sum() == pytest.approx(s.total_delay_veh_h)


def test_queue_length_by_shockwave_relation_hand_worked() -> None:
    # Same plan. Triangular diagram (Newell 1993): v_f 70 mi/h, c 2400 veh/h/ln,
    # k_j 190 veh/mi/ln (HCM 7th ed. default jam density, no trucks).
    # Arriving state: q_a = 3000/3 = 1000 veh/h/ln -> k_a = 1000/70 veh/mi/ln.
    # Queued state: q_q = 2000/3 veh/h/ln on the congested branch:
    # w = c/(k_j - c/v_f); k_q = k_j - q_q/w. Length = N / (n (k_q - k_a)).
    plan = flat_plan(
        3000.0,
        8,
        [Closure(at(1), at(3), 1, capacity_override_veh_h_ln=1000.0)],
        options=Options(capacity_drop=False, queue_length_method="shockwave"),
    )
    r = analyse(plan)
    k_a = 1000 / 70
    w = 2400 / (190 - 2400 / 70)
    k_q = 190 - (2000 / 3) / w
    length_mi = 2000 / (3 * (k_q - k_a))
    assert r.summary.max_queue_length_m / MILE == pytest.approx(length_mi, rel=1e-9)
    assert length_mi == pytest.approx(5.03, abs=0.01)  # the hand number itself


def test_default_queue_length_follows_the_waves_hand_worked() -> None:
    # Shockwave analysis of the traffic-flow textbooks (e.g. Mannering & Washburn
    # ch. 5; May 1990 ch. 6 — from memory) on the triangular diagram (Newell
    # 1993): v_f 70 mi/h, c 2400 veh/h/ln, k_j 190 veh/mi/ln, 3 lanes.
    # Closure 01:00-03:00 at a user capacity of 2000 veh/h (no drop inside it);
    # afterwards the open road discharges at 7200 x 0.93 (HCM 7 % drop).
    plan = flat_plan(3000.0, 8, [Closure(at(1), at(3), 1, capacity_override_veh_h_ln=1000.0)])
    r = analyse(plan)
    assert r.run.length_method == "newell"
    v_f, c, k_j = 70.0, 2400.0, 190.0
    w = c / (k_j - c / v_f)  # backward wave speed, mi/h
    q_a, k_a = 1000.0, 1000.0 / v_f  # arriving state
    q_q = 2000.0 / 3
    k_q = k_j - q_q / w  # queued state in the closure
    q_r = 7200 * 0.93 / 3
    k_r = k_j - q_r / w  # discharge state after the closure
    u_back = (q_q - q_a) / (k_q - k_a)  # back of queue, negative = upstream
    u_rec = (q_r - q_q) / (k_r - k_q)  # recovery wave from the front (= -w)
    assert u_rec == pytest.approx(-w)
    # the recovery wave leaves the bottleneck at 03:00 and meets the back:
    t_meet = (3 * -u_rec - 1 * -u_back) / (-u_rec + u_back)
    d_max = -u_back * (t_meet - 1)
    # then the shock between the arriving and discharge states runs downstream
    u_final = (q_r - q_a) / (k_r - k_a)
    t_gone = t_meet + d_max / u_final
    s = r.summary
    assert s.max_queue_length_m / MILE == pytest.approx(d_max, rel=1e-9)
    assert abs((s.max_queue_length_at - at(t_meet)).total_seconds()) < 0.01
    assert abs((s.last_queue_clears - at(t_gone)).total_seconds()) < 0.01
    assert d_max == pytest.approx(6.015, abs=0.001)  # the hand number itself
    # per hour: 02:00 ends at the single-state length; 03:00 holds the peak
    h = r.hourly
    assert h.loc[2, "queue_length_max_m"] / MILE == pytest.approx(-u_back * 2, rel=1e-9)
    assert h.loc[3, "queue_length_max_m"] / MILE == pytest.approx(d_max, rel=1e-9)
    # delay is the area between the same cumulative curves either way
    single = analyse(
        flat_plan(
            3000.0,
            8,
            [Closure(at(1), at(3), 1, capacity_override_veh_h_ln=1000.0)],
            options=Options(queue_length_method="shockwave"),
        )
    )
    assert single.summary.total_delay_veh_h == pytest.approx(s.total_delay_veh_h, rel=1e-12)


def test_hcm_work_zone_capacity_in_the_plan() -> None:
    # HCM 7th ed. ch. 10: 3 -> 2 lanes, cones (f_Br 1), urban, 0 ft, daytime:
    # LCSI = 1/((2/3) 2) = 0.75; QDR = 2093 - 154(0.75) - 194 = 1783.5 pc/h/ln;
    # c_wz = 100 QDR / (100 - 13.4); capped at 2400. No trucks, commuters.
    plan = flat_plan(1000.0, 24, [Closure(at(9), at(11), 1, barrier="soft")])
    h = analyse(plan).hourly
    qdr = 2093 - 154 * 0.75 - 194
    assert h.loc[9, "discharge_veh_h"] == pytest.approx(2 * qdr)
    assert h.loc[9, "capacity_veh_h"] == pytest.approx(2 * 100 * qdr / (100 - 13.4))
    # open road: 2400 pc/h/ln x 3, discharge 7 % lower (HCM 7th ed. ch. 25 default)
    assert h.loc[0, "capacity_veh_h"] == pytest.approx(7200)
    assert h.loc[0, "discharge_veh_h"] == pytest.approx(7200 * 0.93)


def test_night_term_derived_from_the_clock() -> None:
    # HCM 7th ed. ch. 10: the night-time term lowers QDR by 59 pc/h/ln; the
    # clock says night from 19:00 (our default, common practice, no source).
    plan = Plan(
        site(),
        Demand(T0, 3600, np.full(24, 500.0)),
        (Closure(at(17), at(21), 1, barrier="hard", night=None),),
    )
    h = analyse(plan).hourly
    day, night = h.loc[18, "discharge_veh_h"], h.loc[19, "discharge_veh_h"]
    assert day - night == pytest.approx(2 * 59)
    # a closure that says night all along takes the night value at 17:00 too
    plan2 = Plan(plan.site, plan.demand, (Closure(at(17), at(21), 1, barrier="hard", night=True),))
    assert analyse(plan2).hourly.loc[17, "discharge_veh_h"] == pytest.approx(night)


def test_closure_crossing_midnight_and_queue_carried_across_days() -> None:
    # demand 2500 veh/h for two days; 3 -> 1 lane override 1500 veh/h/ln from
    # 22:00 to 02:00 (crosses midnight): queue grows 1000 veh/h for 4 h, then
    # clears at 7200 - 2500 = 4700 veh/h (capacity drop off).
    plan = flat_plan(
        2500.0,
        48,
        [Closure(at(22), at(26), 2, capacity_override_veh_h_ln=1500.0)],
        options=Options(capacity_drop=False),
    )
    h = analyse(plan).hourly
    assert h.loc[22:25, "queue_end_veh"].tolist() == pytest.approx([1000, 2000, 3000, 4000])
    assert h.loc[26, "queue_end_veh"] == 0.0  # 4000/4700 h < 1 h
    assert bool(h.loc[23, "closure"]) and bool(h.loc[24, "closure"])
    assert h.loc[24, "hour_start"] == at(24)


def test_thresholds_mark_failing_hours_including_after_the_closure() -> None:
    # queue limit 1 mi; the queue of the hand-worked case above is ~5 mi at 03:00
    plan = flat_plan(
        3000.0,
        8,
        [Closure(at(1), at(3), 1, capacity_override_veh_h_ln=1000.0)],
        thresholds=Thresholds(max_queue_length=1.0 * MILE, max_average_delay=60 * 60.0),
        options=Options(capacity_drop=False),
    )
    r = analyse(plan)
    h = r.hourly
    assert h["queue_ok"].tolist() == [True, False, False, False, True, True, True, True]
    assert h["delay_ok"].all()
    assert h.loc[3, "status"] == "over limit: queue length"
    assert r.summary.hours_failing == (at(1), at(2), at(3))


def test_work_zone_travel_delay_uses_the_hcm_work_zone_speed() -> None:
    # HCM 7th ed. ch. 10 work-zone FFS (mi/h): 9.95 + 33.49 f_Sr + 0.53 SL_wz
    # - 5.60 LCSI - 3.84 f_Br - 1.71 f_DN - 8.70 TRD, with f_Sr = 65/45 clamped
    # to 1.2, SL_wz 45, LCSI 0.75, cones, day, no ramps -> 65.95 mi/h < FFS 70.
    length = 2.0 * MILE
    plan = Plan(
        site(work_zone_length=length, work_zone_speed_limit=45 * MPH),
        Demand(T0, 3600, np.full(24, 1000.0)),
        (Closure(at(9), at(10), 1),),
    )
    ffs_wz = 9.95 + 33.49 * 1.2 + 0.53 * 45 - 5.60 * 0.75 - 3.84
    assert ffs_wz == pytest.approx(65.948)
    extra_h = 2.0 / ffs_wz - 2.0 / 70.0
    h = analyse(plan).hourly
    assert h.loc[9, "work_zone_delay_veh_h"] == pytest.approx(1000 * extra_h)
    assert h.loc[8, "work_zone_delay_veh_h"] == 0.0


def test_fifteen_minute_demand_and_mid_hour_closure() -> None:
    # 15-min counts; closure from 00:30 to 01:15; capacity drop off; override
    # 600 veh/h/ln x 2 lanes = 1200 < demand 2000: queue 800 veh/h x 0.75 h = 600
    flows = np.full(12, 2000.0)
    plan = Plan(
        site(),
        Demand(T0, 900, flows),
        (Closure(at(0.5), at(1.25), 1, capacity_override_veh_h_ln=600.0),),
        options=Options(capacity_drop=False),
    )
    r = analyse(plan)
    assert r.summary.max_queue_veh == pytest.approx(600.0)
    assert r.summary.max_queue_veh_at == at(1.25)
    assert len(r.hourly) == 3
    assert r.hourly["demand_veh_h"].tolist() == pytest.approx([2000, 2000, 2000])


def test_user_override_wins_and_closure_never_beats_the_open_road() -> None:
    plan = flat_plan(
        500.0, 6, [Closure(at(1), at(2), 0, barrier="hard", capacity_override_veh_h_ln=2900.0)]
    )
    h = analyse(plan).hourly
    assert h.loc[1, "capacity_veh_h"] == pytest.approx(3 * 2900.0)  # the user's number
    # a shoulder closure (3 -> 3) behind a hard barrier with 12 ft clearance
    # (HCM 7th ed. ch. 10): LCSI 1/3, QDR = 2093 - 154/3 + 9*12 = 2149.7 pc/h/ln,
    # pre-breakdown 2149.7 / 0.866 = 2482 > 2400 pc/h/ln: capped at the open road
    plan = flat_plan(
        500.0,
        6,
        [Closure(at(1), at(2), 0, barrier="hard")],
        site=site(lateral_clearance=12 * FOOT),
    )
    h = analyse(plan).hourly
    assert h.loc[1, "capacity_veh_h"] == pytest.approx(7200.0)
    assert h.loc[1, "capacity_veh_h"] <= h.loc[0, "capacity_veh_h"]


def test_warnings_for_queue_left_at_end_and_long_overload() -> None:
    plan = flat_plan(
        3000.0,
        8,
        [Closure(at(1), at(8), 1, capacity_override_veh_h_ln=1000.0)],
        options=Options(capacity_drop=False),
    )
    r = analyse(plan)
    text = " ".join(r.warnings)
    assert "still stands at the end" in text
    assert "7.0 hours in a row" in text
    assert r.summary.last_queue_clears is None


def test_a_queue_beyond_the_advance_warning_signs_is_warned_of() -> None:
    """The three advance warning signs of a freeway lane closure stand 1,000, 1,500 and
    2,640 ft apart from the taper (MUTCD 2009, Table 6H-3): 5,140 ft = 0.9735 mi.

    The invented week's Tuesday night closure (examples/ashgrove_bypass_week.json)
    stores 865 + 365 = 1,230 vehicles (demand 2,300 and 1,800 veh/h against a queue
    discharge rate of 1,435 veh/h, see tests/present/test_terminal.py); even packed at jam
    density, 190 pc/mi/ln x f_HV 1/1.08 = 175.9 veh/mi/ln over 3 lanes, that is at
    least 1,230 / 527.8 = 2.33 mi: beyond the signs, so warned, although demand
    exceeds capacity for two hours only (the long-overload warning needs six)."""
    from pathlib import Path

    from wzq.engine.warnings import ADVANCE_WARNING_REACH_M
    from wzq.io.jsonplan import load_plan

    assert ADVANCE_WARNING_REACH_M / MILE == pytest.approx(5140 / 5280)
    week = load_plan(Path(__file__).resolve().parents[2] / "examples/ashgrove_bypass_week.json")
    tuesday, thursday, _ = week.closures
    r = analyse(dataclasses.replace(week, closures=(tuesday,)))
    assert r.summary.max_queue_veh == pytest.approx(1230.0, abs=0.5)
    assert r.summary.max_queue_length_m / MILE >= 1230 / (3 * 190 / 1.08) - 1e-9
    warning = next(w for w in r.warnings if "beyond the advance warning signs" in w)
    assert f"reaches {r.summary.max_queue_length_m / MILE:,.1f} mi" in warning
    assert "hours in a row" not in " ".join(r.warnings)
    # the rule: warned exactly when the longest queue reaches past the signs
    for closures in ((thursday,), week.closures, ()):
        r = analyse(dataclasses.replace(week, closures=closures))
        warned = any("beyond the advance warning signs" in w for w in r.warnings)
        assert warned == (r.summary.max_queue_length_m > ADVANCE_WARNING_REACH_M)


def test_bad_plans_raise_plan_error_with_every_problem() -> None:
    with pytest.raises(PlanError) as e:
        Plan(
            site(lanes=2, terrain="hilly"),
            Demand(T0, 3600, np.array([100.0, -5.0])),
            (
                Closure(at(1), at(0.5), 1),
                Closure(at(0), at(1), 2),
                Closure(at(0), at(5), 1),
            ),
        )
    text = str(e.value)
    assert "site.terrain" in text
    assert "demand[1]" in text
    assert "ends before it starts" in text
    assert "all 2 lanes closed" in text
    with pytest.raises(PlanError, match="whole hours"):
        # 19 quarter-hours end in the middle of an hour
        Plan(site(), Demand(T0, 900, np.full(19, 100.0)))
    assert "outside the demand period" in text
    assert len(e.value.problems) >= 5


@pytest.mark.parametrize("seed", range(30))
def test_each_interval_gets_the_capacity_of_the_closure_in_force(seed: int) -> None:
    # The engine maps closures and the clock to intervals with array tricks; here the
    # same mapping is done the plain way, one interval at a time: the closure whose
    # [start, end) holds the interval's midpoint, night by the clock (wzq.engine.plan.is_night:
    # 19:00-06:00, common practice, no source) unless the closure says otherwise, and
    # the capacity of that configuration (wzq.engine.site.configuration, checked against
    # the HCM in test_capacity.py). Random invented plans: hourly or 15-minute demand,
    # closures starting and ending on any minute, some with an override or a given
    # day/night.
    from wzq.engine.evaluate import evaluate
    from wzq.engine.plan import is_night
    from wzq.engine.site import configuration

    rng = np.random.default_rng(seed)
    step = int(rng.choice([900, 3600]))
    hours = int(rng.integers(24, 73))
    flows = rng.uniform(300.0, 4000.0, hours * 3600 // step)
    day0 = T0 + dt.timedelta(hours=int(rng.integers(0, 24)))  # demand starts at any hour
    closures, t = [], day0 + dt.timedelta(minutes=int(rng.integers(0, 300)))
    while True:
        start = t + dt.timedelta(minutes=int(rng.integers(0, 600)))
        end = start + dt.timedelta(minutes=int(rng.integers(15, 600)))
        if end > day0 + dt.timedelta(hours=hours):
            break
        closures.append(
            Closure(
                start,
                end,
                int(rng.integers(0, 3)),
                barrier=str(rng.choice(["soft", "hard"])),
                night=[None, None, True, False][int(rng.integers(0, 4))],
                capacity_override_veh_h_ln=[None, None, 900.0][int(rng.integers(0, 3))],
            )
        )
        t = end
    plan = Plan(site(), Demand(day0, step, flows), tuple(closures))
    run = evaluate(plan)
    # every closure start and end and every hour is a boundary
    bounds = {(c.start - day0).total_seconds() for c in closures}
    bounds |= {(c.end - day0).total_seconds() for c in closures}
    bounds |= {h * 3600.0 for h in range(hours + 1)}
    assert bounds <= set(run.t.tolist())
    for k in range(len(run.t) - 1):
        mid = day0 + dt.timedelta(seconds=0.5 * (run.t[k] + run.t[k + 1]))
        inside = [i for i, c in enumerate(closures) if c.start <= mid < c.end]
        assert len(inside) <= 1
        c = closures[inside[0]] if inside else None
        night = is_night(mid) if c is None or c.night is None else c.night
        config = None if c is None else (c.lanes_closed, c.barrier, c.capacity_override_veh_h_ln)
        pre, qdr, _ = configuration(plan.site, "triangular", config, night)
        assert run.closure[k] == (inside[0] if inside else -1)
        assert run.prebreakdown_veh_h[k] == pre
        assert run.discharge_veh_h[k] == qdr
        assert run.lanes_open[k] == 3 - (c.lanes_closed if c else 0)
        assert run.demand_veh_h[k] == flows[int((mid - day0).total_seconds() // step)]
