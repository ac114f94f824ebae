"""Exact deterministic queueing against the closed-form D/D/1 results.

Source of the closed forms: the deterministic queueing analysis of the
traffic-engineering textbooks (e.g. Mannering & Washburn, *Principles of
Highway Engineering and Traffic Analysis*, chapter on queueing models; May,
*Traffic Flow Fundamentals*, 1990, ch. 11 — from memory): for constant demand
lambda above a reduced capacity mu_r for a time T, followed by capacity mu,
the maximum queue is (lambda - mu_r) T, it clears after t_c = Q / (mu - lambda),
the total delay is Q (T + t_c) / 2 and lambda (T + t_c) vehicles meet the queue.
"""

from __future__ import annotations

import numpy as np
import pytest
from budget import examples
from hypothesis import given, settings
from hypothesis import strategies as st

from wzq.models.queueing import curves, queue_at_boundaries, solve, waits

H = 3600.0


def hours(*xs: float) -> np.ndarray:
    return np.array(xs, dtype=float) * H


def per_h(*xs: float) -> np.ndarray:
    return np.array(xs, dtype=float) / H


def test_single_reduction_closed_form() -> None:
    # textbook D/D/1: lambda 3000, mu_r 2000 for T = 2 h, then mu 4000 veh/h
    lam, mu_r, mu, T = 3000.0, 2000.0, 4000.0, 2.0
    run = solve(hours(T, 4.0), per_h(lam, lam), per_h(mu_r, mu))
    q_max = (lam - mu_r) * T
    t_c = q_max / (mu - lam)
    assert run.queue[1] == pytest.approx(q_max)
    assert run.queue[2] == 0.0
    assert run.clear_times() / H == pytest.approx([T + t_c])
    assert run.total_delay / H == pytest.approx(q_max * (T + t_c) / 2)
    assert (run.arrival_rate * run.busy).sum() == pytest.approx(lam * (T + t_c))


def test_two_reductions_of_different_severity() -> None:
    # two successive reduced-capacity periods: mu1 2500 for 1 h, mu2 2000 for 2 h,
    # then 4000; queue 500 after 1 h, 500 + 2 x 1000 = 2500 after 3 h,
    # clears 2500 / 1000 = 2.5 h later. Delay: trapezoids 0.5*500*1 +
    # 0.5*(500+2500)*2 + 0.5*2500*2.5 (hand arithmetic, same textbook model).
    run = solve(hours(1, 2, 5), per_h(3000, 3000, 3000), per_h(2500, 2000, 4000))
    assert run.queue == pytest.approx([0, 500, 2500, 0])
    assert run.clear_times() / H == pytest.approx([3 + 2.5])
    assert run.total_delay / H == pytest.approx(0.5 * 500 + 0.5 * 3000 * 2 + 0.5 * 2500 * 2.5)


def test_queue_clears_inside_an_interval_at_the_exact_instant() -> None:
    # 1000 vehicles queued at t=0 discharge at 1800 - 1000 = 800 veh/h net:
    # clear at 1.25 h, inside a 3-hour interval; delay 0.5 * 1000 * 1.25
    run = solve(hours(3), per_h(1000), per_h(1800), q0=1000.0)
    assert run.clear_times() / H == pytest.approx([1.25])
    assert run.busy[0] / H == pytest.approx(1.25)
    assert run.total_delay / H == pytest.approx(625.0)
    assert run.departures[0] == pytest.approx(3000 + 1000)


def test_fifo_wait_is_the_horizontal_distance_between_the_curves() -> None:
    # lambda 3000 over mu_r 2000 for 2 h then 4000: a vehicle arriving at t
    # (t <= 4/3 h) leaves at 1.5 t (wait 0.5 t); after, at 2 + (3000 t - 4000)/4000.
    # The longest wait is at t = 4/3 h: 2/3 h (hand arithmetic on the textbook curves).
    run = solve(hours(2, 4), per_h(3000, 3000), per_h(2000, 4000))
    t, w = waits(run)
    assert w.max() / H == pytest.approx(2 / 3)
    assert t[np.argmax(w)] / H == pytest.approx(4 / 3)


def test_capacity_drop_queue_starts_only_above_prebreakdown() -> None:
    # HCM 7th ed. ch. 10: before breakdown up to the pre-breakdown capacity,
    # after it the queue discharge rate. pre 2000, discharge 1900 veh/h.
    pre, qdr = np.full(5, 2000.0), np.full(5, 1900.0)
    # 1950 veh/h alone never breaks down (below 2000) ...
    q = queue_at_boundaries(hours(1, 1, 1, 1, 1), per_h(1950, 1950, 1950, 1950, 1950),
                            per_h(*pre), per_h(*qdr))  # fmt: skip
    assert np.all(q == 0)
    # ... but after a breakdown at 2100, the queue keeps growing at 1950 - 1900
    q = queue_at_boundaries(hours(1, 1, 1, 1, 1), per_h(2100, 1950, 1950, 1800, 1000),
                            per_h(*pre), per_h(*qdr))  # fmt: skip
    assert q == pytest.approx([0, 200, 250, 300, 200, 0])


def test_an_initial_queue_keeps_growing_through_a_single_interval_within_capacity() -> None:
    # The capacity-drop rule (HCM 7th ed. ch. 10): 1,950 veh/h is within the pre-breakdown
    # capacity (2,000) and cannot start a queue, but the 100 vehicles already standing
    # discharge at 1,900 veh/h, so they grow by 50 in the one hour: 150 at its end.
    q = queue_at_boundaries(hours(1), per_h(1950), per_h(2000), per_h(1900), q0=100.0)
    assert q == pytest.approx([100.0, 150.0])


def test_capacity_drop_hysteresis_over_several_runs() -> None:
    # alternating: a run of 1950 with no queue stays empty; a breakdown later
    # turns the next 1950 run into growth. Hand arithmetic with the same rule.
    lam = [1950, 1950, 2100, 1950, 1000, 1950, 2050, 1950, 1950, 500]
    q = queue_at_boundaries(np.full(10, H), per_h(*lam), np.full(10, 2000 / H),
                            np.full(10, 1900 / H))  # fmt: skip
    expect = [0, 0, 0, 200, 250, 0, 0, 150, 200, 250, 0]
    assert q == pytest.approx(expect)


rates = st.floats(min_value=0.0, max_value=6000.0, allow_nan=False)


@st.composite
def schedules(draw):
    n = draw(st.integers(min_value=1, max_value=12))
    dur = np.array(draw(st.lists(st.floats(0.05, 3.0), min_size=n, max_size=n))) * H
    lam = np.array(draw(st.lists(rates, min_size=n, max_size=n))) / H
    pre = np.array(draw(st.lists(st.floats(500.0, 6000.0), min_size=n, max_size=n))) / H
    drop = np.array(draw(st.lists(st.floats(0.0, 0.2), min_size=n, max_size=n)))
    q0 = draw(st.one_of(st.just(0.0), st.floats(1.0, 500.0)))
    return dur, lam, pre, pre * (1 - drop), q0


@settings(max_examples=examples(300), deadline=None)
@given(schedules())
def test_properties_conservation_and_nonnegative(s) -> None:
    dur, lam, pre, qdr, q0 = s
    run = solve(dur, lam, pre, qdr, q0=q0)
    # vehicles are conserved: arrived (incl. the initial queue) = served + still queued
    assert q0 + run.arrivals.sum() == pytest.approx(run.departures.sum() + run.queue[-1])
    assert np.all(run.queue >= 0)
    assert np.all(run.delay >= -1e-9)
    # departures never exceed the discharge rate while queued, nor arrivals + queue
    assert np.all(run.departures <= np.maximum(pre, qdr) * dur + run.queue[:-1] + 1e-6)


@settings(max_examples=examples(300), deadline=None)
@given(schedules())
def test_property_no_queue_when_demand_within_capacity(s) -> None:
    dur, lam, pre, qdr, _ = s
    lam = np.minimum(lam, pre)
    run = solve(dur, lam, pre, qdr)
    assert np.all(run.queue == 0)
    assert run.total_delay == 0


@settings(max_examples=examples(300), deadline=None)
@given(schedules(), st.floats(0.3, 1.0))
def test_property_lower_capacity_never_shortens_queue_or_delay(s, f) -> None:
    dur, lam, pre, qdr, q0 = s
    a = solve(dur, lam, pre, qdr, q0=q0)
    b = solve(dur, lam, pre * f, qdr * f, q0=q0)
    assert np.all(b.queue >= a.queue - 1e-6)
    assert b.total_delay >= a.total_delay - 1e-6


@settings(max_examples=examples(300), deadline=None)
@given(schedules(), st.integers(2, 5))
def test_property_splitting_intervals_changes_nothing(s, k) -> None:
    dur, lam, pre, qdr, q0 = s
    a = solve(dur, lam, pre, qdr, q0=q0)
    b = solve(np.repeat(dur / k, k), np.repeat(lam, k), np.repeat(pre, k), np.repeat(qdr, k),
              q0=q0)  # fmt: skip
    assert b.queue[::k] == pytest.approx(a.queue, abs=1e-6)
    assert b.total_delay == pytest.approx(a.total_delay, rel=1e-9, abs=1e-6)
    assert b.busy.sum() == pytest.approx(a.busy.sum(), abs=1e-6)


def minute_loop(dur, lam, pre, qdr, q0=0.0, step=1.0):
    """A plain fixed-step loop, the obvious way to do it, for comparison only."""
    q, delay = q0, 0.0
    out = [q]
    for d, a, p, m in zip(dur, lam, pre, qdr, strict=True):
        n = round(d / step)
        for _ in range(n):
            rate = m if q > 0 else p
            served = min(q + a * step, rate * step)
            q_new = q + a * step - served
            if q > 0 and q_new <= 0 and a * step > 0:
                q_new = 0.0
            delay += 0.5 * (q + q_new) * step
            q = q_new
        out.append(q)
    return np.array(out), delay


@settings(max_examples=examples(40), deadline=None)
@given(schedules())
def test_agrees_with_a_one_second_loop(s) -> None:
    dur, lam, pre, qdr, q0 = s
    dur = np.round(dur / 60) * 60 + 60  # whole minutes for the loop
    run = solve(dur, lam, pre, qdr, q0=q0)
    q, delay = minute_loop(dur, lam, pre, qdr, q0, step=1.0)
    # a 1-s step loses at most one step's worth of flow per interval change
    tol = 1.0 * max(pre.max(), lam.max()) * (len(dur) + 1)
    assert q == pytest.approx(run.queue, abs=tol)
    assert delay == pytest.approx(run.total_delay, rel=0.02, abs=tol * dur.sum())


def interval_loop(dur, lam, pre, qdr, q0=0.0):
    """The capacity-drop rule applied one interval at a time, for comparison only.

    No queue and demand within the pre-breakdown capacity: stays empty;
    otherwise the queue changes at demand - discharge, never below zero.
    """
    q = q0
    out = [q]
    for d, a, p, m in zip(dur, lam, pre, qdr, strict=True):
        if q > 0 or a > p:
            q = max(0.0, q + (a - m) * d)
        out.append(q)
    return np.array(out)


@st.composite
def long_schedules(draw):
    """Many intervals, with quiet stretches between busy ones (the year's shape)."""
    n = draw(st.integers(min_value=20, max_value=200))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    dur = rng.uniform(0.25, 2.0, n) * H
    pre = rng.choice([1600.0, 3600.0, 5400.0], n) / H
    qdr = pre * rng.uniform(0.85, 1.0, n)
    lam = rng.uniform(0.2, 1.15, n) * pre  # some above pre, some between qdr and pre
    q0 = float(rng.choice([0.0, 0.0, 300.0]))
    return dur, lam, pre, qdr, q0


@settings(max_examples=examples(200), deadline=None)
@given(long_schedules())
def test_queue_equals_the_rule_applied_interval_by_interval(s) -> None:
    # the vectorised solution (bound, stretches, fixed point) against the
    # capacity-drop rule (HCM 7th ed. ch. 10) stepped interval by interval
    dur, lam, pre, qdr, q0 = s
    q = queue_at_boundaries(dur, lam, pre, qdr, q0)
    assert q == pytest.approx(interval_loop(dur, lam, pre, qdr, q0), abs=1e-6)


def test_a_queue_under_one_vehicle_keeps_growing_where_demand_is_within_capacity() -> None:
    # Capacity drop (HCM 6th ed. ch. 10 and 25, from memory): a standing queue discharges at
    # the lower rate until it is gone, however small. 0.9 veh/s against 0.6 for 2 s leaves
    # 0.6 veh; then demand 0.65 <= pre-breakdown 0.7 cannot start a queue but keeps this one
    # growing at 0.65 - 0.6 = 0.05 veh/s: 0.6 + 0.05 * 3600 = 180.6 veh at 3602 s; then
    # 0.3 against 1.1 clears it 180.6 / 0.8 = 225.75 s later.
    run = solve([2.0, H, 2 * H], [0.9, 0.65, 0.3], [0.6, 0.7, 1.2], [0.6, 0.6, 1.1])
    assert run.queue == pytest.approx([0.0, 0.6, 180.6, 0.0])
    assert run.busy == pytest.approx([2.0, H, 225.75])


def test_a_hysteresis_interval_too_small_to_hold_a_queue_beside_a_queue_elsewhere() -> None:
    # The first hour could keep a queue growing (demand 1.0 between its discharge rate
    # 1.0 - 1e-10 and pre-breakdown 1.1 veh/s) but none stands when it starts, so none forms
    # (the 3.6e-7 vehicles it could add are below the rounding floor anyway). The closure of
    # the second hour then queues (0.9 - 0.6) * 3600 = 1080 veh, which clear at 1.1 - 0.5 =
    # 0.6 veh/s in 1800 s. Total delay: the triangle 1080 * (3600 + 1800) / 2 veh s.
    run = solve([H, H, 2 * H], [1.0, 0.9, 0.5], [1.1, 0.6, 1.2], [1.0 - 1e-10, 0.6, 1.1])
    assert run.queue == pytest.approx([0.0, 0.0, 1080.0, 0.0])
    assert run.busy == pytest.approx([0.0, H, 1800.0])
    assert run.total_delay == pytest.approx(1080 * (3600 + 1800) / 2)


def test_whole_numbers_give_the_run_of_the_same_numbers_in_floats() -> None:
    # D/D/1 by hand, in hours and veh/h given as integers: 1790 veh/h against 1500 for
    # 1 h leaves 290 vehicles, which clear against 1700 with 1000 arriving in 290/700 h,
    # inside the second interval (2 h). Delay: triangles 0.5 * 290 * 1 and
    # 0.5 * 290 * 29/70 veh-h. The same plan in floats gives the same run, bit for bit,
    # and every rate and count of the run is a float whatever the type given.
    runs = [
        solve([1, 2], [1790, 1000], [1500, 1700]),
        solve([1, 2], [1790, 1000], [1600, 1700], [1500, 1700]),  # capacity drop given
    ]
    for run in runs:
        assert run.queue == pytest.approx([0, 290, 0], abs=1e-9)
        assert run.busy == pytest.approx([1, 29 / 70], rel=1e-12)
        assert run.delay == pytest.approx([145, 145 * 29 / 70], rel=1e-12)
        assert run.departures == pytest.approx([1500, 2290], rel=1e-12)
        assert run.clear_times() == pytest.approx([1 + 29 / 70], rel=1e-12)
    floats = solve([1.0, 2.0], [1790.0, 1000.0], [1500.0, 1700.0])
    for name in ("t", "arrival_rate", "discharge", "queue", "busy", "delay", "arrivals"):
        got, want = getattr(runs[0], name), getattr(floats, name)
        assert got.dtype == np.float64, name
        np.testing.assert_array_equal(got, want)
    assert runs[1].discharge.dtype == np.float64


@pytest.mark.parametrize(
    "demand, closed, open_road, after",
    [(1790, 1500, 1800, 1510), (2100, 1550, 1800, 1250), (1600, 1500, 1800, 1700)],
)
def test_a_queue_that_clears_on_the_hour_keeps_the_knots_increasing(
    demand, closed, open_road, after
) -> None:
    # D/D/1 by hand: demand above the closure's capacity for 1 h leaves demand - closed
    # vehicles, and the second hour's spare capacity open_road - after is exactly that, so
    # the queue clears at 2 h on the dot. In veh/s the rates are rounded, and the clearing
    # instant comes out at 2 h or a few 1e-12 s before it: the knots of the cumulative
    # curves must still increase strictly (linear interpolation between them, and Newell's
    # construction, need one knot per instant), and the queue must be gone in space at 2 h.
    from wzq.models import newell
    from wzq.models.flow import Triangular

    run = solve(hours(1, 1, 1), per_h(demand, after, 1000), per_h(closed, open_road, 2000))
    assert run.queue[1] == pytest.approx(demand - closed)
    t, a, d = curves(run)
    assert np.all(np.diff(t) > 0)
    assert (t[0], t[-1]) == (0.0, 3 * H)
    assert np.interp(2 * H, t, a) - np.interp(2 * H, t, d) == pytest.approx(0.0, abs=1e-9)
    nq = newell.from_queue(run, Triangular(free_speed=30.0, capacity=0.6, jam_density=0.12), 2)
    assert nq.dissolved_s == pytest.approx([2 * H], abs=1e-6)
    assert nq.extent.max_m > 0.0


def test_a_queue_standing_through_every_interval_adds_no_knot_to_the_curves() -> None:
    # D/D/1: 2000 veh/h against 1500 for 12 intervals of 0.1 h, boundaries given as
    # k * 0.1 h: the queue grows by 50 vehicles an interval and never clears, so the
    # curves need no knot beyond the boundaries, and A - D at each is the queue there.
    # (In floats 5 * 0.1 + 0.1 falls short of 6 * 0.1: a knot at the end of an interval
    # computed from its duration would land just inside it.)
    t = np.arange(13) * 0.1
    run = solve(np.full(12, 0.1), np.full(12, 2000.0), np.full(12, 1500.0), t=t)
    assert run.queue == pytest.approx(50.0 * np.arange(13))
    tk, a, d = curves(run)
    np.testing.assert_array_equal(tk, t)
    assert a - d == pytest.approx(50.0 * np.arange(13))
