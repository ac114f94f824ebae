"""Tests whose oracles do not share the code they check.

Each section takes one class of bug that slipped past tests comparing the code
with itself (two searches sharing helpers, sheets compared with the display
table that uses the same scale) and checks it against something worked out
independently: hand arithmetic from a published model, a published unit
conversion, or a small reference computation written here from the textbook
rule, with no import from the module under test.

The hand site (as in ``tests/test_windows.py``): two lanes, free-flow speed
``v_f`` 25 m/s, jam density ``k_j`` 0.125 veh/m/ln, base capacity 2,000 pc/h/ln,
no heavy vehicles, commuters, no capacity drop on the open road, so the open
road carries 4,000 veh/h; a closure of one lane behind cones is given a capacity
override of 1,500 veh/h/ln, so every closure runs at 1,500 veh/h with no drop.
The work zone is 1,500 m long; with the HCM 2000 short-term method the speed
through it is the work-zone speed limit + 5 mi/h (the HCM's default free-flow
speed rule, HCM 7th ed. ch. 12, applied to the work-zone limit: common
practice, from memory), set here to 15 m/s, so every vehicle that passes
during a closure loses ``1500/15 - 1500/25 = 100 - 60 = 40 s``.
"""

from __future__ import annotations

import datetime as dt
from decimal import ROUND_HALF_UP, Decimal

import numpy as np
import pytest
from hand import C_LN, K_J, V_F
from hand import hand_site as shared_hand_site

import wzq
from wzq.engine import hourly
from wzq.engine import site as site_mod
from wzq.engine import windows as W
from wzq.engine.plan import Closure, Demand, Options, Plan, Site, Thresholds
from wzq.present.tables import queue_episodes

START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)
OPEN = 2 * C_LN  # veh/h, both lanes, no capacity drop
CLOSED = 1500.0  # veh/h, the one open lane (capacity override)
WZ_LENGTH = 1500.0  # m
V_WZ = 15.0  # m/s through the work zone
#: 5 mi/h in m/s: 5 x 1,609.344 m / 3,600 s (NIST SP 811, 2008, App. B: 1 mi = 1,609.344 m)
FIVE_MPH = 5 * 1609.344 / 3600
EXTRA_S = WZ_LENGTH / V_WZ - WZ_LENGTH / V_F  # 40 s per vehicle through the work zone


def hand_site(**kw) -> Site:
    """The shared hand site (tests/hand.py) with a 1.5 km work zone signed 5 mi/h below
    the 15 m/s it is driven at, by the HCM 2000 method."""
    values = dict(
        work_zone_speed_limit=V_WZ - FIVE_MPH,
        work_zone_length=WZ_LENGTH,
        capacity_method="hcm2000",
    )
    return shared_hand_site(**{**values, **kw})


def closure(h0: float, h1: float, override: float | None = CLOSED, **kw) -> Closure:
    return Closure(
        START + dt.timedelta(hours=h0),
        START + dt.timedelta(hours=h1),
        1,
        capacity_override_veh_h_ln=override,
        **kw,
    )


# ---------------------------------------------------------------------------------------------
# A reference deterministic queue, written here from the textbook rule
# ---------------------------------------------------------------------------------------------


def reference_hours(
    flows: list[float],
    interval_s: float,
    closed: list[bool],
    extra_s: float,
    closed_cap: float = CLOSED,
    open_cap: float = OPEN,
) -> dict[str, np.ndarray]:
    """Per hour: arrivals, capacity (veh), delay (veh-s), closure flag, and the lowest
    capacity under a closure (veh/h; ``inf`` in an hour without one).

    The D/D/1 queue of the textbooks (May, *Traffic Flow Fundamentals*, 1990,
    ch. 11, from memory): within an interval of constant rates the queue
    changes at ``arrival - capacity`` and clears at ``q / (capacity - arrival)``;
    the delay is the area between the cumulative curves (a trapezoid, or a
    triangle when the queue clears). Vehicles that pass a closed interval lose
    ``extra_s`` each in the work zone. No capacity drop (none in these cases).
    """
    q = 0.0
    per = round(3600 / interval_s)
    n_hours = len(flows) // per
    out = {k: np.zeros(n_hours) for k in ("arrivals", "capacity", "delay")}
    out["closure_capacity"] = np.full(n_hours, np.inf)  # veh/h, the lowest under a closure
    out["closed"] = np.zeros(n_hours, dtype=bool)
    for i, (flow, shut) in enumerate(zip(flows, closed, strict=True)):
        lam = flow / 3600.0
        mu = (closed_cap if shut else open_cap) / 3600.0
        if q > 0 or lam > mu:
            q1 = q + (lam - mu) * interval_s
            if q1 >= 0:
                area = 0.5 * (q + q1) * interval_s
            else:
                area = 0.5 * q * (q / (mu - lam))
                q1 = 0.0
        else:
            area, q1 = 0.0, 0.0
        departures = lam * interval_s - (q1 - q)
        h = i // per
        out["arrivals"][h] += lam * interval_s
        out["capacity"][h] += mu * interval_s
        out["delay"][h] += area + (departures * extra_s if shut else 0.0)
        out["closed"][h] |= shut
        if shut:
            out["closure_capacity"][h] = min(out["closure_capacity"][h], closed_cap)
        q = q1
    return out


def reference_ok(hours: dict[str, np.ndarray], limits: Thresholds) -> np.ndarray:
    """Every hour within the delay limit, and within demand/capacity in closure hours: the
    hour's demand against the closure's capacity, also in an hour the closure covers in
    part (the hour's average capacity, part open road, would dilute it)."""
    ok = np.ones(len(hours["arrivals"]), dtype=bool)
    if limits.max_average_delay is not None:
        ok &= hours["delay"] / hours["arrivals"] <= limits.max_average_delay
    if limits.max_demand_capacity is not None:
        dc = hours["arrivals"] / hours["closure_capacity"]  # veh in the hour / veh/h
        ok &= ~hours["closed"] | (dc <= limits.max_demand_capacity)
    return ok


def reference_allowed(
    flows: list[float], interval_s: float, limits: Thresholds, extra_s: float
) -> np.ndarray:
    n = len(flows)
    allowed = np.zeros((n, n + 1), dtype=bool)
    for s in range(n):
        for e in range(s + 1, n + 1):
            shut = [s <= i < e for i in range(n)]
            hours = reference_hours(flows, interval_s, shut, extra_s)
            allowed[s, e] = bool(reference_ok(hours, limits).all())
    return allowed


# ---------------------------------------------------------------------------------------------
# Closure windows decided by the work-zone travel time
# ---------------------------------------------------------------------------------------------

#: Quarter-hour demand: 1,200 veh/h (below the closure's 1,500) except 1,650 veh/h
#: in hours 2 and 3, where a closure builds a queue.
QUARTERS = [1200.0] * 8 + [1650.0] * 8 + [1200.0] * 8
DELAY_LIMIT = Thresholds(max_average_delay=25.0)  # s per vehicle


def _quarter_windows(site: Site, exhaustive: bool) -> np.ndarray:
    demand = Demand(START, 900, np.array(QUARTERS))
    config = W.Configuration(1, capacity_override_veh_h_ln=CLOSED)
    result = W.find_windows(site, demand, DELAY_LIMIT, [config], exhaustive=exhaustive)
    return result.sets[0].allowed


@pytest.mark.parametrize("exhaustive", [False, True])
def test_window_verdicts_with_a_real_work_zone_match_hand_cases(exhaustive: bool) -> None:
    allowed = _quarter_windows(hand_site(), exhaustive)
    # Hand cases (hour 0, 1,200 veh/h, no queue: 300 veh a quarter, each losing 40 s):
    # two closed quarters give 300 x 2 x 40 / 1,200 = 20 s/veh <= 25 s: allowed
    assert allowed[1, 3]
    # three closed quarters give 30 s/veh > 25 s: not allowed, though no queue forms
    assert not allowed[1, 4]
    # the last quarter of hour 0 and the first of hour 1: 10 s/veh in each hour
    assert allowed[3, 5]
    # Hour 2 (1,650 veh/h) with its first quarter closed: the queue grows at 150 veh/h
    # to 37.5 veh, then clears on the open road in 37.5 / (4,000 - 1,650) h = 57.4 s.
    # Queue delay 0.5 x 37.5 x (900 + 57.4) = 17,952 veh-s, work zone 375 x 40 =
    # 15,000 veh-s: 32,952 / 1,650 = 20.0 s/veh, allowed.
    assert allowed[8, 9]
    # Two quarters: queue 75 veh, 0.5 x 75 x (1,800 + 114.9) = 71,809 veh-s plus
    # 750 x 40 = 30,000: 61.7 s/veh, not allowed.
    assert not allowed[8, 10]
    # every verdict agrees with the reference queue written above
    expected = reference_allowed(QUARTERS, 900, DELAY_LIMIT, EXTRA_S)
    np.testing.assert_array_equal(allowed, expected)


def test_the_work_zone_travel_time_decides_some_windows() -> None:
    # the same search with no work zone: every closure of 1,200 veh/h hours passes
    no_zone = _quarter_windows(hand_site(work_zone_length=0.0), exhaustive=False)
    assert no_zone[1, 4] and no_zone[0, 8]
    np.testing.assert_array_equal(no_zone, reference_allowed(QUARTERS, 900, DELAY_LIMIT, 0.0))
    with_zone = reference_allowed(QUARTERS, 900, DELAY_LIMIT, EXTRA_S)
    assert (no_zone & ~with_zone).sum() >= 20  # windows only the work zone rules out


# --- what the fast and the exhaustive search share, checked on its own -------------------------


def test_configuration_gives_the_hand_capacity_discharge_and_work_zone_time() -> None:
    site = hand_site()
    for night in (False, True):
        # the open road: 2,000 pc/h/ln x 2 lanes, no drop (HCM 7th ed. ch. 12 with
        # f_HV = f_p = 1)
        assert site_mod.configuration(site, "triangular", None, night) == pytest.approx(
            (OPEN, OPEN, 0.0), rel=1e-12
        )
        pre, qdr, extra = site_mod.configuration(site, "triangular", (1, "soft", CLOSED), night)
        assert (pre, qdr) == pytest.approx((CLOSED, CLOSED), rel=1e-12)  # override x 1 lane
        assert extra == pytest.approx(40.0, rel=1e-9)


def test_configuration_work_zone_time_by_the_hcm7_free_flow_speed_equation() -> None:
    # HCM 6th/7th ed. ch. 10, work-zone free-flow speed:
    # FFS_wz = 9.95 + 33.49 f_Sr + 0.53 SL_wz - 5.60 LCSI - 3.84 f_Br - 1.71 f_DN - 8.70 TRD
    # 65 mi/h limit, 55 mi/h in the work zone (f_Sr = 65/55), 1 of 2 lanes open
    # (LCSI = 1 / (0.5 x 1) = 2), cones (f_Br = 1), by day, no ramps; FFS 70 mi/h.
    mph = 1609.344 / 3600  # m/s per mi/h, NIST SP 811 (2008) App. B
    ffs_wz = 9.95 + 33.49 * 65 / 55 + 0.53 * 55 - 5.60 * 2 - 3.84 * 1
    assert ffs_wz == pytest.approx(63.639, abs=1e-3)
    mile = 1609.344
    site = hand_site(
        capacity_method="hcm7",
        speed_limit=65 * mph,
        work_zone_speed_limit=55 * mph,
        free_flow_speed=70 * mph,
        work_zone_length=mile,
    )
    _, _, extra = site_mod.configuration(site, "triangular", (1, "soft", None), False)
    # one mile at 63.64 mi/h instead of 70 mi/h: 3,600/63.639 - 3,600/70 = 5.14 s
    assert extra == pytest.approx(3600 / ffs_wz - 3600 / 70, rel=1e-9)
    assert extra == pytest.approx(5.14, abs=0.01)


def test_hour_checks_by_hand() -> None:
    limits = Thresholds(max_queue_length=500.0, max_average_delay=60.0, max_demand_capacity=0.9)
    # the fifth hour has a queue's delay but no arrival: no vehicle to average over, so
    # its average delay is shown as 0 (common practice, no source); the sixth has half a
    # vehicle, whose 0.005 veh-h are 0.6 min
    arrivals = np.array([1000.0, 1000.0, 1000.0, 1000.0, 0.0, 0.5])
    capacity = np.array([4000.0, 1000.0, 1500.0, 1500.0, 1500.0, 1500.0])
    lmax = np.array([0.0, 0.0, 500.0, 500.5, 0.0, 0.0])
    # 60 s/veh in hours 2 and 3, then a little more
    delay_veh_h = np.array([0.0, 0.0, 1000 / 60, 1000 / 60 + 0.01, 2.0, 0.005])
    closed = np.array([False, False, True, True, True, True])
    avg, dc, checks = hourly.hour_checks(limits, arrivals, capacity, lmax, delay_veh_h, closed)
    assert avg == pytest.approx([0.0, 0.0, 1.0, 1.0 + 0.6 / 1000, 0.0, 0.6])  # min/veh
    assert dc == pytest.approx([0.25, 1.0, 2 / 3, 2 / 3, 0.0, 0.5 / 1500])
    by_name = {name: ok.tolist() for name, _, ok in checks}
    assert by_name == {
        "queue_ok": [True, True, True, False, True, True],  # a limit is met when reached
        "delay_ok": [True, True, True, False, True, True],
        # 1.0 > 0.9, but the road is open in hour 1: the limit is for closure hours only
        "demand_capacity_ok": [True] * 6,
    }
    closed_all = np.ones(6, dtype=bool)
    _, _, checks = hourly.hour_checks(limits, arrivals, capacity, lmax, delay_veh_h, closed_all)
    assert dict((n, ok.tolist()) for n, _, ok in checks)["demand_capacity_ok"] == [
        True,
        False,
        True,
        True,
        True,
        True,
    ]


# ---------------------------------------------------------------------------------------------
# The demand/capacity limit applies in closure hours only
# ---------------------------------------------------------------------------------------------

#: Hourly demand: an open hour at 3,800 veh/h (3,800/4,000 = 0.95 > 0.9), closure
#: hours at 1,300 (0.87) and 1,400 veh/h (0.93), then an open hour at 3,800 again.
DC_FLOWS = [3800.0, 1300.0, 1400.0, 3800.0]
DC_LIMIT = Thresholds(max_demand_capacity=0.9)


def test_demand_capacity_limit_is_not_applied_to_open_road_hours() -> None:
    plan = Plan(
        hand_site(),
        Demand(START, 3600, np.array(DC_FLOWS)),
        (closure(1, 3),),
        DC_LIMIT,
        options=Options(queue_length_method="shockwave"),
    )
    hourly = wzq.analyse(plan).hourly
    assert hourly["demand_capacity"].tolist() == pytest.approx(
        [0.95, 1300 / 1500, 1400 / 1500, 0.95]
    )
    assert hourly["demand_capacity_ok"].tolist() == [True, True, False, True]
    assert hourly["status"].tolist() == ["ok", "ok", "over limit: demand/capacity", "ok"]
    assert wzq.analyse(plan).summary.hours_failing == (START + dt.timedelta(hours=2),)


def test_window_search_applies_demand_capacity_in_closure_hours_only() -> None:
    config = W.Configuration(1, capacity_override_veh_h_ln=CLOSED)
    for exhaustive in (False, True):
        ws = W.find_windows(
            hand_site(work_zone_length=0.0),
            Demand(START, 3600, np.array(DC_FLOWS)),
            DC_LIMIT,
            [config],
            exhaustive=exhaustive,
        ).sets[0]
        assert ws.open_road_failing == ()  # 0.95 on the open road is not a failure
        expected = reference_allowed(DC_FLOWS, 3600, DC_LIMIT, 0.0)
        assert expected[1, 2] and not expected[1, 3] and not expected[0, 1]
        np.testing.assert_array_equal(ws.allowed, expected)


def test_window_search_applies_demand_capacity_to_hours_a_closure_ends_in() -> None:
    # Quarter hours at 1,450 veh/h in hours 0 and 2, 800 in hour 1, all below the
    # closure's 1,500 veh/h (no queue ever); limit 0.6. An hour a closure covers, in
    # whole or in part, is its demand against the closure's capacity: 1,450 / 1,500 =
    # 0.97 fails, 800 / 1,500 = 0.53 passes. Closing the last half of hour 0 fails: the
    # hour's average capacity, 2 x 1,000 + 2 x 375 = 2,750 veh, would give 1,450 / 2,750
    # = 0.53 and pass it. Open hours (1,450 / 4,000 = 0.36) pass.
    flows = [1450.0] * 4 + [800.0] * 4 + [1450.0] * 4
    limit = Thresholds(max_demand_capacity=0.6)
    config = W.Configuration(1, capacity_override_veh_h_ln=CLOSED)
    site = hand_site(work_zone_length=0.0)
    expected = reference_allowed(flows, 900, limit, 0.0)
    assert not expected[2, 4] and not expected[3, 5] and not expected[7, 9]
    assert expected[4, 8] and expected[5, 7] and expected[4, 5]
    assert expected.sum() == 10  # the closures within hour 1: 4 + 3 + 2 + 1
    for exhaustive in (False, True):
        ws = W.find_windows(
            site, Demand(START, 900, np.array(flows)), limit, [config], exhaustive=exhaustive
        ).sets[0]
        np.testing.assert_array_equal(ws.allowed, expected)


# ---------------------------------------------------------------------------------------------
# Several busy periods: last clearance, longest queue, delay
# ---------------------------------------------------------------------------------------------


def two_queues(method: str) -> wzq.Result:
    """1,200 veh/h all day, 1,800 in hours 1-2 and 1,700 in hour 10; closures 01-03 and 10-11."""
    flows = [1200.0] * 24
    flows[1] = flows[2] = 1800.0
    flows[10] = 1700.0
    plan = Plan(
        hand_site(),
        Demand(START, 3600, np.array(flows)),
        (closure(1, 3), closure(10, 11)),
        options=Options(queue_length_method=method),
    )
    return wzq.analyse(plan)


def _lane_states(arrival_veh_h: float, discharge_veh_h: float) -> tuple[float, float, float, float]:
    """(k_A, q_A, k_Q, q_Q) per lane on the triangular diagram, by hand (Newell 1993):
    free branch k = q / v_f, congested k = k_j - q / w, w = c / (k_j - c / v_f)."""
    c = C_LN / 3600
    w = c / (K_J - c / V_F)
    q_a, q_q = arrival_veh_h / 2 / 3600, discharge_veh_h / 2 / 3600
    return q_a / V_F, q_a, K_J - q_q / w, q_q


@pytest.mark.parametrize("method", ["newell", "shockwave"])
def test_several_busy_periods_by_hand(method: str) -> None:
    r = two_queues(method)
    s = r.summary
    # Queue 1: grows at 1,800 - 1,500 = 300 veh/h for 2 h to 600 veh at 03:00, then
    # clears on the open road at 4,000 - 1,200 = 2,800 veh/h: 600/2,800 h = 771.43 s.
    # Queue 2: grows at 200 veh/h to 200 veh at 11:00, clears in 200/2,800 h = 257.14 s.
    # (D/D/1 queue, May 1990 ch. 11, from memory.)
    clear_1 = 3 * 3600 + 600 / 2800 * 3600
    clear_2 = 11 * 3600 + 200 / 2800 * 3600
    assert s.last_queue_clears == START + dt.timedelta(seconds=round(clear_2, 3))
    # the queues one at a time, as the cumulative charts draw them (start, end, most queued)
    episodes = [(e.start, e.end, e.max_queue_veh, e.max_at) for e in queue_episodes(r)]
    assert episodes == pytest.approx(
        [(3600.0, clear_1, 600.0, 10800.0), (36000.0, clear_2, 200.0, 39600.0)], rel=1e-12
    )
    assert s.max_queue_veh == pytest.approx(600.0)
    assert s.max_queue_veh_at == START + dt.timedelta(hours=3)
    assert s.queue_at_end_veh == 0.0
    # delay: triangles and trapezoids under the queue, veh-h
    queue_1 = 0.5 * 300 * 1 + 0.5 * (300 + 600) * 1 + 0.5 * 600 * (600 / 2800)
    queue_2 = 0.5 * 200 * 1 + 0.5 * 200 * (200 / 2800)
    assert s.queue_delay_veh_h == pytest.approx(queue_1 + queue_2, rel=1e-12)
    assert s.queue_delay_veh_h == pytest.approx(771.43, abs=0.01)
    # 3 closure hours x 1,500 veh through the work zone x 40 s
    assert s.work_zone_delay_veh_h == pytest.approx(3 * 1500 * EXTRA_S / 3600, rel=1e-12)
    assert s.total_delay_veh_h == pytest.approx(queue_1 + queue_2 + 50.0, rel=1e-12)
    # vehicles that met a queue: all arrivals while one stood
    met = 1800 * 2 + 1200 * 600 / 2800 + 1700 + 1200 * 200 / 2800
    assert s.vehicles_affected == pytest.approx(met, rel=1e-12)
    # the longest wait: a vehicle arriving at 2 h + t (0 <= t <= 2/3 h) leaves at
    # 2.2 h + 1.2 t (1,500 veh/h discharge), after 3 h at 3.15 h - 0.45 (1 - t): its
    # wait 0.2 + 0.2 t peaks at t = 2/3 h, 20 min (queue 2's peaks at 7.1 min)
    assert s.max_queue_wait_min == pytest.approx(20.0, rel=1e-9)
    h = r.hourly
    assert h["queue_end_veh"].tolist()[:4] == pytest.approx([0.0, 300.0, 600.0, 0.0])
    assert h["queue_end_veh"].tolist()[9:12] == pytest.approx([0.0, 200.0, 0.0])
    assert h["queue_delay_veh_h"].tolist()[1:4] == pytest.approx(
        [150.0, 450.0, 0.5 * 600 * 600 / 2800], rel=1e-12
    )
    assert h["max_queue_wait_min"][2] == pytest.approx(20.0, rel=1e-9)
    # hour 2: (450 + 1,500 x 40 / 3,600) veh-h over 1,800 veh = 15.56 min/veh
    assert s.max_average_delay_min == pytest.approx((450 + 1500 * 40 / 3600) / 1800 * 60)
    # the longest queue is the first, whichever came last
    k_a, q_a, k_q, q_q = _lane_states(1800.0, CLOSED)
    if method == "shockwave":
        # single-state relation L = N / (n (k_Q - k_A)) at 03:00 (Lighthill & Whitham 1955)
        expected = 600 / (2 * (k_q - k_a))
        assert s.max_queue_length_m == pytest.approx(expected, rel=1e-9)
        assert s.max_queue_length_m == pytest.approx(3923.7, abs=0.1)
        assert s.max_queue_length_at == START + dt.timedelta(hours=3)
    else:
        # Newell (1993): the back of the queue moves upstream at the shock speed
        # u = (q_Q - q_A) / (k_Q - k_A) until the drop in demand at the closure's end
        # (03:00 at the bottleneck) reaches it, x / v_f earlier: x = |u| (T - x / v_f)
        # with T = 7,200 s since the queue formed.
        u = (q_q - q_a) / (k_q - k_a)
        x = -u * 7200 / (1 - u / V_F)
        assert s.max_queue_length_m == pytest.approx(x, rel=1e-9)
        assert s.max_queue_length_m == pytest.approx(3840.0, abs=0.1)
        peak = START + dt.timedelta(hours=1, seconds=7200 - x / V_F)
        assert abs((s.max_queue_length_at - peak).total_seconds()) < 1e-3


# ---------------------------------------------------------------------------------------------
# The clamp of a closure's discharge rate at the open road's own rate
# ---------------------------------------------------------------------------------------------


def test_shoulder_closure_discharge_is_clamped_at_the_open_roads_rate() -> None:
    # Three lanes, shoulder closure (3 -> 3 lanes) behind a concrete barrier, 12 ft
    # lateral clearance, urban, by day. HCM 6th/7th ed. ch. 10 queue discharge rate:
    # QDR = 2,093 - 154 LCSI - 194 f_Br - 179 f_AT + 9 f_LAT - 59 f_DN with
    # LCSI = 1 / ((3/3) x 3) = 1/3: 2,093 - 51.33 + 108 = 2,149.67 pc/h/ln.
    qdr_wz = 2093 - 154 / 3 + 9 * 12
    assert qdr_wz == pytest.approx(2149.67, abs=0.01)
    # The open road: base 2,200 pc/h/ln, 7 % drop after breakdown (HCM 6th/7th ed.
    # ch. 10): 2,046 pc/h/ln, below the work zone's 2,149.67. A closure never
    # discharges faster than the open road (common practice, no source): 3 x 2,046.
    open_qdr = 2200 * (1 - 0.07)
    foot = 0.3048  # m, NIST SP 811 (2008) App. B
    site = Site(
        lanes=3,
        speed_limit=29.0,
        work_zone_speed_limit=29.0,
        work_zone_length=0.0,
        free_flow_speed=29.0,
        heavy_vehicle_share=0.0,
        base_capacity_pc_h_ln=2200.0,
        lateral_clearance=12 * foot,
        capacity_method="hcm7",
        name="Kestrel Ridge Parkway (fictional)",
    )
    pre, qdr, _ = site_mod.configuration(site, "triangular", (0, "hard", None), False)
    assert pre == pytest.approx(3 * 2200.0)  # c_wz = 2,149.67/0.866 capped at c = 2,200
    assert qdr == pytest.approx(3 * open_qdr)  # 6,138 veh/h, not 3 x 2,149.67 = 6,449
    # Through the engine: 6,800 veh/h for one hour (above 6,600: breakdown), then 5,000.
    # The queue grows at 6,800 - 6,138 = 662 veh/h and clears in 662/1,138 h.
    flows = [5000.0] * 10 + [6800.0] + [5000.0] * 3
    plan = Plan(
        site,
        Demand(START, 3600, np.array(flows)),
        (Closure(START + dt.timedelta(hours=9), START + dt.timedelta(hours=13), 0, "hard"),),
    )
    r = wzq.analyse(plan)
    assert r.hourly["discharge_veh_h"][9:13].tolist() == pytest.approx([3 * open_qdr] * 4)
    assert r.hourly["queue_end_veh"][10] == pytest.approx(6800 - 3 * open_qdr)
    clears = 11 * 3600 + (6800 - 3 * open_qdr) / (3 * open_qdr - 5000) * 3600
    assert r.summary.last_queue_clears == START + dt.timedelta(seconds=round(clears, 3))


# ---------------------------------------------------------------------------------------------
# Printed numbers in US customary units, from the SI results and the published conversion
# ---------------------------------------------------------------------------------------------

#: NIST Special Publication 811 (2008), Appendix B: 1 international foot = 0.3048 m and
#: 1 mile = 5,280 ft = 1,609.344 m, both exact; 1 h = 3,600 s.
NIST_MILE_M = 5280 * 0.3048
NIST_FOOT_M = 0.3048
NIST_MPH_M_S = NIST_MILE_M / 3600


def half_up(x: float, decimals: int) -> float:
    """Rounded half away from zero, as a person reads a printed table (common practice)."""
    q = Decimal(1).scaleb(-decimals)
    return float(Decimal(repr(float(abs(x)))).quantize(q, rounding=ROUND_HALF_UP)) * (
        1 if x >= 0 else -1
    )


@pytest.fixture(scope="module")
def kestrel():
    from pathlib import Path

    import openpyxl

    from wzq.io.jsonplan import load_plan
    from wzq.io.workbook import outputs as w

    plan = load_plan(Path(__file__).resolve().parents[2] / "examples/kestrel_ridge_weeknight.json")
    assert plan.site.unit_system == "us"
    result = wzq.analyse(plan)
    book = openpyxl.Workbook()
    w.write_results(book, result, run_time="2027-01-01T00:00:00Z")
    return result, book


def _header_row(ws, first: str) -> tuple[int, list]:
    for i, row in enumerate(ws.iter_rows(values_only=True), start=1):
        if row and row[0] == first and "Lanes open" in row:
            return i, list(row)
    raise AssertionError(f"no table header on {ws.title}")


def test_sheets_print_queue_lengths_in_miles_by_the_published_conversion(kestrel) -> None:
    from wzq.io.workbook import layout

    result, book = kestrel
    metres = result.hourly["queue_length_max_m"].to_numpy()
    assert metres.max() > 1000  # the example's queue reaches beyond a mile: the scale shows
    miles = [half_up(m / NIST_MILE_M, 2) for m in metres]
    ws = book[layout.RESULTS]
    hr, header = _header_row(ws, "Hour")
    col = header.index("Longest queue (mi)")
    rows = list(ws.iter_rows(min_row=hr + 1, values_only=True))
    assert [r[col] for r in rows] == pytest.approx(miles, abs=1e-12)
    # the permit table lists the closure hours and the hours with a queue
    ws = book[layout.PERMIT_TABLE]
    hr, header = _header_row(ws, "Hour")
    col = header.index("Longest queue (mi)")
    label = {
        t.strftime("%a %Y-%m-%d %H:%M"): m
        for t, m in zip(result.hourly["hour_start"], miles, strict=True)
    }
    listed = [r for r in ws.iter_rows(min_row=hr + 1, values_only=True) if r[0] in label]
    assert len(listed) >= 10
    assert [r[col] for r in listed] == pytest.approx([label[r[0]] for r in listed], abs=1e-12)
    limit = f"{result.plan.thresholds.max_queue_length / NIST_MILE_M:.2f} mi"
    assert f"Queue limit {limit}" in header
    # the summary sheet's headline and limit
    texts = {r[0]: r[1] for r in book[layout.SUMMARY].iter_rows(values_only=True) if r[0]}
    s = result.summary
    at = s.max_queue_length_at.strftime("%a %Y-%m-%d %H:%M")
    assert (
        texts["Longest queue"]
        == f"{half_up(s.max_queue_length_m / NIST_MILE_M, 2):.2f} mi, at {at}"
    )
    assert texts["Queue length"] == limit
    assert texts["Most vehicles queued"] == (
        f"{half_up(s.max_queue_veh, 0):,.0f} veh, at {s.max_queue_veh_at:%a %Y-%m-%d %H:%M}"
    )
    assert texts["Last queue clears"] == f"{s.last_queue_clears:%a %Y-%m-%d %H:%M}"
    assert texts["Hours over a limit"] == str(len(s.hours_failing))
    assert texts["Total delay"] == (
        f"{s.total_delay_veh_h:,.1f} veh-h (queue {s.queue_delay_veh_h:,.1f}, "
        f"work zone {s.work_zone_delay_veh_h:,.1f})"
    )
    assert texts["Highest hourly average delay"] == f"{s.max_average_delay_min:,.1f} min/veh"
    assert texts["Vehicles that met a queue"] == f"{s.vehicles_affected:,.0f}"
    assert texts["Road-user delay cost"] == f"{s.total_cost:,.0f} USD (2017 prices)"


def test_terminal_and_report_print_us_units_by_the_published_conversion(kestrel) -> None:
    import io
    from contextlib import redirect_stdout
    from pathlib import Path

    from pypdf import PdfReader

    from wzq.cli import main
    from wzq.io.report import build_report

    result, _ = kestrel
    plan = result.plan
    longest = f"{half_up(result.summary.max_queue_length_m / NIST_MILE_M, 2):.2f} mi, at"
    out = io.StringIO()
    path = Path(__file__).resolve().parents[2] / "examples/kestrel_ridge_weeknight.json"
    with redirect_stdout(out):
        assert main(["show", str(path)]) == 0
    assert longest in out.getvalue()
    pages = [p.extract_text() for p in PdfReader(io.BytesIO(build_report(result))).pages]
    assert longest in pages[0]
    inputs = " ".join(pages[1].split())
    s = plan.site
    for shown in (
        f"{s.speed_limit / NIST_MPH_M_S:.1f} mi/h",
        f"{s.work_zone_speed_limit / NIST_MPH_M_S:.1f} mi/h",
        f"{s.work_zone_length / NIST_MILE_M:.2f} mi",
        f"{s.lateral_clearance / NIST_FOOT_M:.1f} ft",
        f"{s.ramp_density * NIST_MILE_M:.2f} per mi",
        f"{plan.thresholds.max_queue_length / NIST_MILE_M:.2f} mi",
    ):
        assert shown in inputs, shown


# ---------------------------------------------------------------------------------------------
# The kinematic-wave functions inside a standing queue
# ---------------------------------------------------------------------------------------------


def test_triangular_diagram_inside_a_standing_queue() -> None:
    from wzq.models.flow import Triangular

    c = C_LN / 3600
    fd = Triangular(free_speed=V_F, capacity=c, jam_density=K_J)
    k_a, q_a, k_q, q_q = _lane_states(1800.0, CLOSED)
    w = c / (K_J - c / V_F)  # 5.405 m/s (Newell 1993)
    assert w == pytest.approx(5.4054, abs=1e-4)
    assert k_q == pytest.approx(0.086458, abs=1e-6)
    assert fd.density_congested(q_q) == pytest.approx(k_q, rel=1e-12)
    assert fd.flow(k_q) == pytest.approx(q_q, rel=1e-12)
    assert fd.speed(k_q) == pytest.approx(q_q / k_q, rel=1e-12)  # 2.41 m/s in the queue
    assert fd.wave_speed(k_q) == pytest.approx(-w, rel=1e-12)
    # a congested cell sends all it can (capacity) and receives only its own flow
    # (cell transmission model, Daganzo 1994)
    assert fd.demand(k_q) == pytest.approx(c, rel=1e-12)
    assert fd.supply(k_q) == pytest.approx(q_q, rel=1e-12)
    # the back of the queue: Rankine-Hugoniot speed between arriving and queued states
    u = (q_q - q_a) / (k_q - k_a)
    assert u == pytest.approx(-0.54496, abs=1e-5)
    assert fd.shock_speed(k_a, k_q) == pytest.approx(u, rel=1e-12)
    # between two queued states the shock travels at the backward wave speed
    assert fd.shock_speed(k_q, 0.1) == pytest.approx(-w, rel=1e-12)


def test_greenshields_diagram_inside_a_standing_queue() -> None:
    from wzq.models.flow import Greenshields

    # Greenshields (1935): q = v_f k (1 - k/k_j); capacity v_f k_j / 4 at k_j / 2
    fd = Greenshields(free_speed=V_F, jam_density=K_J)
    k = 0.1  # veh/m/ln, above k_j/2 = 0.0625: queued
    q = V_F * k * (1 - k / K_J)  # 0.5 veh/s/ln
    assert fd.flow(k) == pytest.approx(q, rel=1e-12)
    assert fd.speed(k) == pytest.approx(V_F * (1 - k / K_J), rel=1e-12)  # 5 m/s
    assert fd.wave_speed(k) == pytest.approx(V_F * (1 - 2 * k / K_J), rel=1e-12)  # -15 m/s
    # the congested root of q = v_f k (1 - k/k_j): k = k_j/2 (1 + sqrt(1 - 4 q / (v_f k_j)))
    assert fd.density_congested(q) == pytest.approx(
        K_J / 2 * (1 + (1 - 4 * q / (V_F * K_J)) ** 0.5), rel=1e-12
    )
    assert fd.demand(k) == pytest.approx(V_F * K_J / 4, rel=1e-12)
    assert fd.supply(k) == pytest.approx(q, rel=1e-12)
    # Greenshields shock speed: v_f (1 - (k1 + k2)/k_j)
    assert fd.shock_speed(0.02, k) == pytest.approx(V_F * (1 - 0.12 / K_J), rel=1e-12)


def test_shockwave_functions_inside_a_standing_queue() -> None:
    from wzq.models import shockwave
    from wzq.models.flow import Triangular

    fd = Triangular(free_speed=V_F, capacity=C_LN / 3600, jam_density=K_J)
    k_a, q_a, k_q, q_q = _lane_states(1800.0, CLOSED)
    states = shockwave.queue_states(fd, np.array([1800.0]), np.array([CLOSED]), 2)
    assert np.concatenate(states) == pytest.approx([k_a, q_a, k_q, q_q], rel=1e-12)
    stored = 2 * (k_q - k_a)  # veh per metre of queue over both lanes
    assert shockwave.stored_density(fd, 1800.0, CLOSED, 2) == pytest.approx(stored, rel=1e-12)
    assert shockwave.queue_length(600.0, fd, 1800.0, CLOSED, 2) == pytest.approx(
        600 / stored, rel=1e-12
    )
    speed = shockwave.back_of_queue_speed(fd, 1800.0, CLOSED, 2)
    assert speed == pytest.approx((q_q - q_a) / (k_q - k_a), rel=1e-12)  # upstream, < 0
    assert speed < 0
    # an hour of the queue's growth at that speed holds the hour's 300 vehicles
    assert -speed * 3600 * stored == pytest.approx(300.0, rel=1e-9)


def test_newell_functions_inside_a_standing_queue() -> None:
    from wzq.models import newell

    r = two_queues("newell")
    t, a, d = newell.curves(r.run.queue)
    k_a, q_a, k_q, q_q = _lane_states(1800.0, CLOSED)
    u = (q_q - q_a) / (k_q - k_a)
    c = C_LN / 3600
    w = c / (K_J - c / V_F)
    wave = dict(lanes=2, free_speed=V_F, wave_speed=w, jam_density=K_J)
    # the back of the queue half an hour and an hour and a half after it formed at 01:00
    at = np.array([1.5, 2.5]) * 3600
    back = newell.back_of_queue(t, a, d, at=at, **wave)
    assert back == pytest.approx(-u * (at - 3600), rel=1e-9)  # 981 m and 2,943 m
    # counts inside the queue (x = 500 m at 02:00): N = D(t) + n k_Q x, with
    # A(02:00) = 1,200 + 1,800 = 3,000 veh and 300 queued, so D = 2,700 veh
    assert newell.counts(t, a, d, distance=500.0, at=7200.0, **wave) == pytest.approx(
        2700 + 2 * k_q * 500, rel=1e-12
    )
    # and upstream of its back (x = 3,000 m > 1,962 m): N = A(t + x / v_f)
    assert newell.counts(t, a, d, distance=3000.0, at=7200.0, **wave) == pytest.approx(
        3000 + 1800 * (3000 / V_F) / 3600, rel=1e-12
    )
    times, dist = newell.trajectory(t, a, d, **wave)
    ext = newell.extent(times, dist)
    x = -u * 7200 / (1 - u / V_F)  # as in test_several_busy_periods_by_hand
    assert ext.max_m == pytest.approx(x, rel=1e-9)
    # Then the back retreats at the shock speed between the lighter arrivals (1,200
    # veh/h) and the queue, until the recovery wave from the bottleneck (at -w from
    # 03:00, when the closure ends) meets it; from there the last delayed vehicle
    # runs free at v_f and reaches the bottleneck when the point queue clears.
    k_a2, q_a2, _, _ = _lane_states(1200.0, CLOSED)
    u2 = (q_q - q_a2) / (k_q - k_a2)
    t_peak = 3600 + 7200 - x / V_F
    meet = (x + u2 * t_peak + w * 10800) / (w + u2)
    assert np.interp(meet, times, dist) == pytest.approx(w * (meet - 10800), rel=1e-9)
    clear = 3 * 3600 + 600 / 2800 * 3600
    assert ext.dissolved_s == pytest.approx(clear, rel=1e-12)
    assert meet + w * (meet - 10800) / V_F == pytest.approx(clear, rel=1e-12)
    assert newell.dissolve_times(times, dist)[0] == pytest.approx(clear, rel=1e-12)
    hourly = newell.hourly_max(times, dist, np.arange(5) * 3600.0)
    # hour 3 begins with the back already retreating from its peak
    assert hourly == pytest.approx([0.0, -u * 3600, x, x - u2 * (10800 - t_peak)], rel=1e-9)


def test_lwr_solver_inside_a_standing_queue() -> None:
    from wzq.engine.lwr import scheme as lwr
    from wzq.models.flow import Triangular

    fd = Triangular(free_speed=V_F, capacity=C_LN / 3600, jam_density=K_J)
    k_a, q_a, k_q, q_q = _lane_states(1800.0, CLOSED)
    # Godunov flux across the back of the queue and within it: the queue's own flow
    assert lwr.godunov_flux(fd, k_a, k_q) == pytest.approx(q_q, rel=1e-12)
    assert lwr.godunov_flux(fd, k_q, k_q) == pytest.approx(q_q, rel=1e-12)
    # the exact Riemann solution of arriving traffic meeting the queue: one shock at u
    u = (q_q - q_a) / (k_q - k_a)
    assert lwr.riemann_exact(fd, k_a, k_q, [u - 0.01, u + 0.01]) == pytest.approx([k_a, k_q])
    # 3 km of road, arrivals at 1,800 veh/h over two lanes, a bottleneck passing 1,500:
    # after an hour the queue reaches |u| x 3,600 s = 1,962 m back from the bottleneck
    dx, dt, steps = 25.0, 0.8, 4500  # v_f dt = 20 m <= dx (CFL)
    field = lwr.solve(
        fd,
        np.full(120, k_a),
        dx=dx,
        dt=dt,
        steps=steps,
        inflow=q_a,
        exit_capacity=q_q,
        track=True,
    )
    # conservation: what came in less what went out stays on the road, exactly
    gained = field.vehicles[-1] - field.vehicles[0]
    assert gained == pytest.approx((field.inflow - field.outflow).sum() * dt, rel=1e-9)
    assert gained == pytest.approx((q_a - q_q) * steps * dt, rel=1e-6)
    assert field.entrance_queue[-1] == pytest.approx(0.0, abs=1e-9)
    back_from_exit = field.length - field.back[-1]
    assert back_from_exit == pytest.approx(-u * steps * dt, abs=2 * dx)
    # deep inside the queue the density is the queued state's
    assert field.final[-10:] == pytest.approx(np.full(10, k_q), rel=1e-9)


def test_configuration_of_a_rural_closure_by_the_hcm_discharge_equation() -> None:
    # HCM 6th/7th ed. ch. 10: QDR = 2,093 - 154 LCSI - 194 f_Br - 179 f_AT + 9 f_LAT - 59 f_DN;
    # one of two lanes open (LCSI = 2), cones, rural, by day: 2,093 - 308 - 194 - 179 = 1,412
    # pc/h/ln on the one open lane (no heavy vehicles, commuters)
    site = hand_site(capacity_method="hcm7", area_type="rural")
    _, qdr, _ = site_mod.configuration(site, "triangular", (1, "soft", None), False)
    assert qdr == pytest.approx(1412.0)


def test_a_queue_of_less_than_one_vehicle_still_clears_on_the_clock() -> None:
    # 1,500.5 veh/h against the closure's 1,500 for an hour leaves half a vehicle, which
    # the open road (4,000 veh/h, demand 1,200) clears in 0.5 / 2,800 h = 0.64 s (D/D/1)
    flows = [1200.0, 1500.5, 1200.0]
    plan = Plan(hand_site(), Demand(START, 3600, np.array(flows)), (closure(1, 2),))
    s = wzq.analyse(plan).summary
    assert s.max_queue_veh == pytest.approx(0.5)
    clears = 2 * 3600 + 0.5 / 2800 * 3600
    assert s.last_queue_clears == START + dt.timedelta(seconds=round(clears, 3))


def test_configuration_uses_the_sites_capacity_drop_and_short_term_adjustments() -> None:
    # HCM 6th/7th ed. ch. 10: one of two lanes open behind cones, urban, by day:
    # QDR = 2,093 - 154 x 2 - 194 = 1,591 pc/h/ln; pre-breakdown 100 QDR / (100 - alpha),
    # with the site's alpha of 10 %: 1,767.8 (below c = 2,000)
    site = hand_site(capacity_method="hcm7", capacity_drop_pct_work_zone=10.0)
    pre, qdr, _ = site_mod.configuration(site, "triangular", (1, "soft", None), False)
    assert (pre, qdr) == pytest.approx((1591 / 0.9, 1591.0))
    # HCM 2000 ch. 22 (from memory): (1,600 + I - R) f_HV N with the site's work
    # intensity I = 100 and ramp adjustment R = 50 pc/h/ln, one lane open
    site = hand_site(work_intensity_pc_h_ln=100.0, ramp_adjustment_pc_h_ln=50.0)
    pre, qdr, _ = site_mod.configuration(site, "triangular", (1, "soft", None), False)
    assert (pre, qdr) == pytest.approx((1650.0, 1650.0))


def test_hour_checks_demand_capacity_at_the_limit_and_without_capacity() -> None:
    limits = Thresholds(max_demand_capacity=0.9)
    # 900 / 1,000 is exactly the limit: a limit is met when reached; half a vehicle of
    # capacity against one arrival is 2.0; no capacity at all gives no ratio (NaN), and
    # a closure hour without capacity does not pass
    arrivals = np.array([900.0, 1.0, 10.0, 10.0])
    capacity = np.array([1000.0, 0.5, 0.0, 0.0])
    closed = np.array([True, True, True, False])
    zeros = np.zeros(4)
    _, dc, checks = hourly.hour_checks(limits, arrivals, capacity, zeros, zeros, closed)
    assert dc[:2].tolist() == [0.9, 2.0] and np.isnan(dc[2:]).all()
    assert checks[0][2].tolist() == [True, False, False, True]
