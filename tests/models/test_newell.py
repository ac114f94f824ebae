"""Back of queue by Newell's simplified kinematic-wave method (wzq.models.newell).

Sources of the expected values:

* Closed-form cases: the shockwave analysis of traffic-flow textbooks
  (Mannering & Washburn, *Principles of Highway Engineering and Traffic
  Analysis*, ch. 5; May, *Traffic Flow Fundamentals*, 1990, ch. 6 -- from
  memory): each state is a point of the triangular diagram, the boundary
  between two states moves at the Rankine-Hugoniot speed
  ``(q2 - q1) / (k2 - k1)`` (Lighthill & Whitham 1955), waves between two
  congested states at ``-w``, changes of free-flow arrivals at ``v_f``. The wave
  speeds, meeting points and clearing instants are worked out by hand in the
  comments and written as fractions, never taken from the code.
* Point queue: the deterministic D/D/1 results of the same textbooks
  (Mannering & Washburn, queueing chapter; May 1990 ch. 11 -- from memory).
* Newell's formula ``N(d, t) = min(A(t + d/v_f), D(t - d/w) + n k_j d)``:
  Newell (1993), *Transportation Research B* 27(4), part I (from memory); the
  capacity-limited boundary: Daganzo (2005), *TR-B* 39(2) (from memory).

Invented example approach used throughout: two lanes, ``v_f = 30 m/s``,
``w = 6 m/s``, ``k_j = 0.12 veh/m/ln``; hence lane capacity
``c = k_j v_f w / (v_f + w) = 0.12 * 30 * 6 / 36 = 0.6 veh/s`` (2160 veh/h/ln),
``k_c = c / v_f = 0.02 veh/m/ln``. Densities below are totals over both lanes
(veh/m), flows totals (veh/s): jam ``n k_j = 0.24``, capacity ``n c = 1.2``.
A congested state with flow ``q`` has total density ``0.24 - q / 6``; a free
state ``q / 30``.
"""

from __future__ import annotations

import numpy as np
import pytest

from wzq.models import newell
from wzq.models.flow import Greenshields, Triangular
from wzq.models.queueing import solve
from wzq.models.shockwave import queue_length

N_LANES = 2
V_F = 30.0
W = 6.0
K_J = 0.12
DIAGRAM = Triangular(free_speed=V_F, capacity=0.6, jam_density=K_J)
APPROACH = dict(lanes=N_LANES, free_speed=V_F, wave_speed=W, jam_density=K_J)
REL = 1e-9  # "to rounding"


def track(t: np.ndarray, a: np.ndarray, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    return newell.trajectory(t, a, d, **APPROACH)


def hand_curve(t_knots: list[float], values: list[float]) -> tuple[np.ndarray, np.ndarray]:
    return np.asarray(t_knots, dtype=float), np.asarray(values, dtype=float)


def brute_g(t, a, d, x, at):
    """Newell's g(d; t) written out independently with np.interp (test's own code)."""
    rate = (a[-1] - a[-2]) / (t[-1] - t[-2])  # arrivals carry on at the last rate
    ta = at + x / V_F
    a_val = np.interp(ta, t, a) + rate * np.maximum(ta - t[-1], 0.0)
    return a_val - np.interp(at - x / W, t, d) - N_LANES * K_J * x


def brute_back(t, a, d, at, iters=50):
    """First zero of g from the bottleneck, by bisection (g does not rise with d)."""
    lo = np.zeros_like(at)
    hi = np.full_like(at, 1e6)
    for _ in range(iters):
        mid = 0.5 * (lo + hi)
        pos = brute_g(t, a, d, mid, at) > 0
        lo = np.where(pos, mid, lo)
        hi = np.where(pos, hi, mid)
    return np.where(brute_g(t, a, d, np.zeros_like(at), at) > 0, hi, 0.0)


# --------------------------------------------------------------------------- one state


def test_single_state_is_the_stored_density_relation() -> None:
    # Constant arrivals 0.9 veh/s against a closure discharging 0.6 veh/s from t = 0.
    # Arriving state k_A = 0.9/30 = 0.03, queued state k_Q = 0.24 - 0.6/6 = 0.14 (totals).
    # Shockwave analysis (textbooks above): the back moves upstream at
    # (0.9 - 0.6)/(0.14 - 0.03) = 30/11 m/s and holds Q = L (k_Q - k_A) vehicles.
    t, a = hand_curve([0, 3600], [0, 3240])
    _, d = hand_curve([0, 3600], [0, 2160])
    at = np.array([600.0, 1800.0, 3000.0])
    got = newell.back_of_queue(t, a, d, at=at, **APPROACH)
    q = 0.3 * at  # point queue (D/D/1)
    assert got == pytest.approx(q / (0.14 - 0.03), rel=REL)
    assert got == pytest.approx(30.0 / 11.0 * at, rel=REL)
    # same as the single-state relation of wzq.models.shockwave (flows in veh/h, total)
    single = queue_length(q, DIAGRAM, np.full(3, 3240.0), np.full(3, 2160.0), N_LANES)
    assert got == pytest.approx(single, rel=REL)


def test_no_queue_no_length() -> None:
    # Demand 0.5 veh/s below every capacity: A = D, the back stays at the bottleneck.
    t, a = hand_curve([0, 3600, 7200], [0, 1800, 3600])
    times, dist = track(t, a, a.copy())
    assert np.all(dist == 0.0)
    assert newell.extent(times, dist) == newell.Extent(0.0, None, None)


# --------------------------------------------------------------------------- closed forms


def test_closure_then_capacity_restored() -> None:
    # lambda = 0.9 veh/s throughout; closure discharges mu_r = 0.6 for T = 3600 s, then
    # the open road discharges mu = 1.08. States (totals): A k=0.03; Q1 k=0.24-0.1=0.14;
    # Q2 k=0.24-0.18=0.06.
    # Back A|Q1: (0.6-0.9)/(0.14-0.03) = -30/11 m/s.
    # Recovery Q1|Q2 from (0, 3600): (1.08-0.6)/(0.06-0.14) = -6 m/s = -w.
    # Meet: 6 (t - 3600) = 30/11 t  ->  t = 6600 s, d = 18000 m (after the closure).
    # Then A|Q2: (1.08-0.9)/(0.06-0.03) = +6 m/s, reaching d = 0 at 6600 + 3000 = 9600 s.
    # D/D/1 check: Q = 0.3*3600 = 1080 clears 1080/0.18 = 6000 s after 3600 -> 9600 s.
    t, a = hand_curve([0, 3600, 9600, 14400], [0, 3240, 8640, 12960])
    _, d = hand_curve([0, 3600, 9600, 14400], [0, 2160, 8640, 12960])
    times, dist = track(t, a, d)
    ext = newell.extent(times, dist)
    assert ext.max_m == pytest.approx(18000.0, rel=REL)
    assert ext.at_s == pytest.approx(6600.0, rel=REL)
    assert ext.dissolved_s == pytest.approx(9600.0, rel=REL)
    assert ext.at_s > 3600.0  # the longest queue comes after the closure has ended
    at = np.array([3600.0, 5000.0, 8000.0, 12000.0])
    expect = [30 / 11 * 3600, 30 / 11 * 5000, 18000 - 6 * (8000 - 6600), 0.0]
    assert newell.back_of_queue(t, a, d, at=at, **APPROACH) == pytest.approx(expect, rel=REL)
    # the single-state relation at the end of the closure (1080 veh at k_Q1) is shorter
    assert ext.max_m > 1080 / (0.14 - 0.03) * (1 + 1e-3)


def test_two_successive_closure_states() -> None:
    # lambda 0.9; discharge 0.72 on [0, 1800], 0.6 on [1800, 4800], then 1.08.
    # States (totals): A 0.03; Q1 0.24-0.12=0.12; Q2 0.14; Q3 0.06.
    # Back A|Q1: (0.72-0.9)/(0.12-0.03) = -2 m/s.
    # Wave Q1|Q2 from (0, 1800) at -6: 6 (t - 1800) = 2 t -> t = 2700, d = 5400.
    # Back A|Q2: (0.6-0.9)/(0.14-0.03) = -30/11 m/s: d = 5400 + 30/11 (t - 2700).
    # Recovery Q2|Q3 from (0, 4800) at -6: 6 (t - 4800) = 5400 + 30/11 (t - 2700)
    #   -> 36/11 t = 34200 - 81000/11 -> t = 8200, d = 6 * 3400 = 20400.
    # Back A|Q3 at +6 m/s: at the bottleneck at 8200 + 3400 = 11600 s.
    # D/D/1: Q(4800) = 0.18*1800 + 0.3*3000 = 1224; clears 1224/0.18 = 6800 s later: 11600.
    knots = [0, 1800, 4800, 11600, 14400]
    t, a = hand_curve(knots, [0.9 * x for x in knots])
    _, d = hand_curve(knots, [0, 1296, 3096, 10440, 12960])
    times, dist = track(t, a, d)
    ext = newell.extent(times, dist)
    assert ext.max_m == pytest.approx(20400.0, rel=REL)
    assert ext.at_s == pytest.approx(8200.0, rel=REL)
    assert ext.dissolved_s == pytest.approx(11600.0, rel=REL)
    # the kinks where the waves meet the back are vertices of the trajectory
    assert np.interp(2700.0, times, dist) == pytest.approx(5400.0, rel=REL)
    assert np.min(np.abs(times - 2700.0)) < 1e-6
    assert np.min(np.abs(times - 8200.0)) < 1e-6
    # Between 1800 and 2700 the queue holds both states: at 2400 the back is at
    # 2 * 2400 = 4800 m, while the single-state relation with the current state
    # (Q = 324 + 0.3*600 = 504 veh over k 0.14 - 0.03) says 504/0.11 = 4581.8 m.
    got = newell.back_of_queue(t, a, d, at=2400.0, **APPROACH)
    assert got == pytest.approx(4800.0, rel=REL)
    assert got > 504 / 0.11 + 100


def test_demand_drops_during_the_closure_still_above_reduced_capacity() -> None:
    # Discharge 0.6 on [0, 3600] then 1.08. Virtual arrivals 0.9 veh/s until 2400 s,
    # then 0.66 veh/s. States: A1 k=0.03; A2 k=0.66/30=0.022; Q1 0.14; Q2 0.06.
    # Back A1|Q1 at -30/11 m/s. The arrival change travels downstream at v_f: it is at
    # d when t = 2400 - d/30. Meet: 30/11 t = 30 (2400 - t) -> t = 2200, d = 6000.
    # Back A2|Q1: (0.6-0.66)/(0.14-0.022) = -30/59 m/s: d = 6000 + 30/59 (t - 2200).
    # Recovery at -6 from 3600: 6 (t-3600) = 6000 + 30/59 (t-2200) -> 324/59 t = 1562400/59
    #   -> t = 1562400/324 = 4822.2..., d = 6 (t - 3600) = 7333.3...
    # Back A2|Q2: (1.08-0.66)/(0.06-0.022) = 210/19 m/s downstream; d = 0 after d/(210/19).
    # D/D/1: Q(3600) = 0.3*2400 + 0.06*1200 = 792, clears 792/0.42 s later.
    t_meet = 1562400 / 324
    d_max = 6 * (t_meet - 3600)
    t_gone = t_meet + d_max / (210 / 19)
    assert t_gone == pytest.approx(3600 + 792 / 0.42, rel=1e-12)  # the two theories agree
    knots = [0, 2400, 3600, t_gone, 14400]
    a_vals = [0, 2160, 2160 + 0.66 * 1200, 2952 + 0.66 * (t_gone - 3600)]
    a_vals.append(a_vals[-1] + 0.66 * (14400 - t_gone))
    t, a = hand_curve(knots, a_vals)
    _, d = hand_curve(knots, [0, 1440, 2160, a_vals[3], a_vals[4]])
    times, dist = track(t, a, d)
    ext = newell.extent(times, dist)
    assert ext.max_m == pytest.approx(d_max, rel=REL)
    assert ext.at_s == pytest.approx(t_meet, rel=REL)
    assert ext.dissolved_s == pytest.approx(t_gone, rel=REL)
    assert newell.back_of_queue(t, a, d, at=2200.0, **APPROACH) == pytest.approx(6000.0, rel=REL)
    at = 3000.0
    expect = 6000 + 30 / 59 * (at - 2200)
    assert newell.back_of_queue(t, a, d, at=at, **APPROACH) == pytest.approx(expect, rel=REL)


def test_demand_drops_below_reduced_capacity_during_the_closure() -> None:
    # As above but arrivals drop to 0.5 veh/s (< 0.6) at 2400 s. A2 k = 0.5/30 = 1/60.
    # Meeting of the arrival change and the back: again t = 2200, d = 6000 (the maximum,
    # during the closure). Back A2|Q1: (0.6-0.5)/(0.14-1/60) = +30/37 m/s (receding).
    # Recovery at -6 from 3600: 6 (t-3600) = 6000 - 30/37 (t-2200) -> 252 t = 1087200
    #   -> t = 4314.28..., d = 6 (t - 3600).
    # Back A2|Q2: (1.08-0.5)/(0.06-1/60) = 174/13 m/s downstream.
    # D/D/1: Q(3600) = 720 - 0.1*1200 = 600, clears 600/0.58 s later.
    t_meet = 1087200 / 252
    d_meet = 6 * (t_meet - 3600)
    t_gone = t_meet + d_meet / (174 / 13)
    assert t_gone == pytest.approx(3600 + 600 / 0.58, rel=1e-12)
    knots = [0, 2400, 3600, t_gone, 10800]
    a_vals = [0, 2160, 2760, 2760 + 0.5 * (t_gone - 3600), 2760 + 0.5 * (10800 - 3600)]
    t, a = hand_curve(knots, a_vals)
    _, d = hand_curve(knots, [0, 1440, 2160, a_vals[3], a_vals[4]])
    times, dist = track(t, a, d)
    ext = newell.extent(times, dist)
    assert ext.max_m == pytest.approx(6000.0, rel=REL)
    assert ext.at_s == pytest.approx(2200.0, rel=REL)
    assert ext.dissolved_s == pytest.approx(t_gone, rel=REL)
    got = newell.back_of_queue(t, a, d, at=np.array([3000.0, t_meet]), **APPROACH)
    assert got == pytest.approx([6000 - 30 / 37 * 800, d_meet], rel=REL)


def test_queue_discharging_at_the_approach_capacity_then_demand_at_capacity() -> None:
    # Without a capacity drop the front discharges at the approach capacity 1.2 veh/s,
    # a state on both branches (k = 0.24 - 1.2/6 = 0.04 = 1.2/30). Arrivals 0.9 on
    # [0, 1800] against discharge 0.6 (Q = 540), then arrivals 0.6 against 1.2 (clears
    # 540/0.6 = 900 s later, at 2700 s, D/D/1), then arrivals at capacity 1.2 with no queue.
    # Shockwaves: back A1|Q1 at -30/11 m/s; the drop to 0.6 at virtual time 1800 travels
    # at 30 m/s and meets it when 30/11 t = 30 (1800 - t): t = 1650, d = 4500. A2|Q1:
    # (0.6-0.6)/(0.14-0.02) = 0, the back stands. Recovery Q1|Q2 at -6 from 1800 meets it
    # at 1800 + 4500/6 = 2550. A2|Q2: (1.2-0.6)/(0.04-0.02) = 30 m/s downstream: at the
    # bottleneck at 2550 + 150 = 2700. Afterwards the road carries capacity, no queue.
    t, a = hand_curve([0, 1800, 2700, 5400], [0, 1620, 2160, 5400])
    _, d = hand_curve([0, 1800, 2700, 5400], [0, 1080, 2160, 5400])
    times, dist = track(t, a, d)
    ext = newell.extent(times, dist)
    assert ext == newell.Extent(pytest.approx(4500.0), pytest.approx(1650.0), pytest.approx(2700.0))
    at = np.array([1000.0, 2000.0, 2600.0, 2700.0, 3000.0, 5400.0])
    expect = [30 / 11 * 1000, 4500.0, 4500 - 30 * 50, 0.0, 0.0, 0.0]
    assert newell.back_of_queue(t, a, d, at=at, **APPROACH) == pytest.approx(expect, abs=1e-6)


def test_queue_left_at_the_end_of_the_data() -> None:
    # Arrivals 0.9, discharge 0.6 on [0, 3600]; 1080 vehicles still queued at the end.
    # Extending A with the last rate, the back is the single state: 1080/0.11 m.
    # Holding A (no more arrivals): g(d) = 1080 + 0.6 d/6 - 0.24 d -> d = 1080/0.14
    # (the queued state against an empty road: Q = L k_Q).
    t, a = hand_curve([0, 3600], [0, 3240])
    _, d = hand_curve([0, 3600], [0, 2160])
    rate = newell.back_of_queue(t, a, d, at=3600.0, **APPROACH)
    hold = newell.back_of_queue(t, a, d, at=3600.0, after_end="hold", **APPROACH)
    assert rate == pytest.approx(1080 / 0.11, rel=REL)
    assert hold == pytest.approx(1080 / 0.14, rel=REL)
    times, dist = track(t, a, d)
    ext = newell.extent(times, dist)
    assert ext.at_s == pytest.approx(3600.0) and ext.dissolved_s is None


def test_queue_standing_at_the_start_is_stored_at_jam_density() -> None:
    # Convention D(t < 0) = D(0): a queue of 600 vehicles at t = 0 has not moved yet.
    # At t = 0, g(d) = 600 + 0.9 d/30 - 0.24 d -> d = 600 / 0.21 m. Hand point queue:
    # arrivals 0.9, discharge 1.08, clears 600/0.18 = 3333.3 s.
    run = solve(np.array([7200.0]), np.array([0.9]), np.array([1.08]), q0=600.0)
    t, a, d = newell.curves(run)
    assert newell.back_of_queue(t, a, d, at=0.0, **APPROACH) == pytest.approx(600 / 0.21)
    times, dist = track(t, a, d)
    assert newell.dissolve_times(times, dist) == pytest.approx([600 / 0.18], rel=REL)


# --------------------------------------------------------------------------- point queue


def test_counts_at_the_bottleneck_are_the_point_queue_curves() -> None:
    # Newell (1993): N(0, t) = min(A(t), D(t)) = D(t) since D <= A; the free-flow term at
    # d = 0 is A(t). Upstream of every queue N(L, t) = A(t + L/v_f).
    # Case of test_closure_then_capacity_restored built by the engine's point queue.
    run = solve(np.array([3600.0, 10800.0]), np.array([0.9, 0.9]), np.array([0.6, 1.08]))
    t, a, d = newell.curves(run)
    grid = np.linspace(0.0, 14400.0, 1441)
    n0 = newell.counts(t, a, d, distance=0.0, at=grid, **APPROACH)
    assert np.array_equal(n0, np.interp(grid, t, d))
    free0 = np.interp(grid, t, a)
    assert np.all(n0 <= free0)
    # D/D/1 (textbooks above): D = 0.6 t until 3600, then 2160 + 1.08 (t - 3600) until the
    # clear at 9600 s, then equal to A = 0.9 t.
    hand_d = np.where(grid <= 3600, 0.6 * grid, np.minimum(2160 + 1.08 * (grid - 3600), 0.9 * grid))
    assert n0 == pytest.approx(hand_d, rel=1e-12, abs=1e-9)
    far = 25000.0  # beyond the 18 km maximum
    n_far = newell.counts(t, a, d, distance=far, at=grid, **APPROACH)
    assert n_far == pytest.approx(0.9 * (grid + far / V_F), rel=1e-12)


def test_total_delay_from_newell_counts_is_the_point_queue_delay() -> None:
    # Delay between an upstream point L (beyond every queue) and the bottleneck is the
    # area between the count at L shifted by the free-flow time L/v_f and the count at the
    # bottleneck. D/D/1 (textbooks above): Q (T + t_c)/2 = 1080 * 9600 / 2 veh.s.
    run = solve(np.array([3600.0, 10800.0]), np.array([0.9, 0.9]), np.array([0.6, 1.08]))
    t, a, d = newell.curves(run)
    far = 25000.0
    tt = t - far / V_F  # vehicles passing L then reach the bottleneck at t
    up = newell.counts(t, a, d, distance=far, at=tt, **APPROACH)
    down = newell.counts(t, a, d, distance=0.0, at=t, **APPROACH)
    gap = up - down  # linear between the knots, so the trapezoid rule is exact
    delay = float(np.sum(0.5 * (gap[1:] + gap[:-1]) * np.diff(t)))
    assert delay == pytest.approx(1080 * 9600 / 2, rel=1e-12)
    assert run.total_delay == pytest.approx(delay, rel=1e-12)


# --------------------------------------------------------------------------- exactness


def _random_run(rng: np.random.Generator):
    m = int(rng.integers(3, 25))
    dur = rng.choice([900.0, 1800.0, 3600.0], m)
    nc = N_LANES * 0.6
    lam = rng.uniform(0.05, 1.0, m) * nc
    pre = rng.uniform(0.35, 1.0, m) * nc
    qdr = pre * rng.uniform(0.8, 1.0, m)
    return solve(dur, lam, pre, qdr)


def test_trajectory_is_the_first_zero_of_newells_formula() -> None:
    # Definition (module notes, Newell 1993): the back is where g changes sign. Checked
    # against the test's own g at random instants of random plans.
    rng = np.random.default_rng(20270503)
    for _ in range(60):
        run = _random_run(rng)
        t, a, d = newell.curves(run)
        times, dist = track(t, a, d)
        at = rng.uniform(t[0], t[-1], 40)
        db = np.interp(at, times, dist)
        queued = db > 0.01
        assert np.all(np.abs(brute_g(t, a, d, db, at)[queued]) < 1e-6)  # vehicles
        assert np.all(brute_g(t, a, d, db - 1e-3, at)[queued] > 0)
        assert np.all(brute_g(t, a, d, db + 1e-3, at) < 0)
        assert newell.dissolve_times(times, dist) == pytest.approx(run.clear_times(), abs=1e-6)


def test_maximum_and_hourly_maxima_are_exact_against_dense_sampling() -> None:
    # A dense grid of the test's own bisection root never exceeds the exact maxima, and
    # comes within the grid's reach of them: the back moves at most at v_f (a shock
    # between two states of the triangular diagram lies between -w and v_f), so a
    # maximum half a step from a grid point is at most v_f * step / 2 above it.
    rng = np.random.default_rng(7)
    step = 5.0
    for _ in range(10):
        run = _random_run(rng)
        t, a, d = newell.curves(run)
        times, dist = track(t, a, d)
        grid = np.arange(t[0], t[-1] + step / 2, step)
        grid = grid[grid <= t[-1]]
        sampled = brute_back(t, a, d, grid)
        assert sampled == pytest.approx(np.interp(grid, times, dist), abs=1e-4)
        ext = newell.extent(times, dist)
        assert sampled.max() <= ext.max_m + 1e-4
        assert sampled.max() >= ext.max_m - V_F * step
        bounds = np.arange(t[0], t[-1] + 1, 3600.0)
        hourly = newell.hourly_max(times, dist, bounds)
        k = np.minimum(np.searchsorted(bounds, grid, side="right") - 1, len(bounds) - 2)
        kept = grid <= bounds[-1]
        per_hour = np.zeros(len(bounds) - 1)
        np.maximum.at(per_hour, k[kept], sampled[kept])
        assert np.all(per_hour <= hourly + 1e-4)
        assert np.all(per_hour >= hourly - V_F * step)


def test_hourly_max_of_a_hand_trajectory() -> None:
    # Rises 0 -> 900 m from 0.5 h to 1.5 h, falls to 0 at 2.5 h (hand piecewise-linear).
    times = np.array([0.0, 1800.0, 5400.0, 9000.0, 10800.0])
    dist = np.array([0.0, 0.0, 900.0, 0.0, 0.0])
    got = newell.hourly_max(times, dist, np.array([0.0, 3600.0, 7200.0, 10800.0]))
    # hour 1 ends at 3600 s: 900 * (3600-1800)/3600 = 450; hour 2 holds the peak;
    # hour 3 starts at 7200 s: 900 * (9000-7200)/3600 = 450.
    assert got == pytest.approx([450.0, 900.0, 450.0])
    assert newell.dissolve_times(times, dist) == pytest.approx([9000.0])


def test_curves_add_the_instant_a_queue_clears() -> None:
    # D/D/1: 1080 veh at 3600 s clear at 1.08 - 0.9 = 0.18 veh/s net -> 9600 s, inside
    # the second interval; D there is 0.9 * 9600 = 8640.
    run = solve(np.array([3600.0, 10800.0]), np.array([0.9, 0.9]), np.array([0.6, 1.08]))
    t, a, d = newell.curves(run)
    assert t == pytest.approx([0, 3600, 9600, 14400])
    assert a == pytest.approx([0, 3240, 8640, 12960])
    assert d == pytest.approx([0, 2160, 8640, 12960])


# --------------------------------------------------------------------------- capacity limit


def test_arrivals_above_approach_capacity_are_held_at_the_entry() -> None:
    # Arrivals 1.5 veh/s exceed the approach capacity n c = 1.2 veh/s for 1800 s.
    # Daganzo (2005) variational form: the approach admits at most n c, i.e. the counts of
    # a point queue served at 1.2 veh/s at its upstream end. Those admitted counts are
    # computed here by the engine's point queue and fed to the plain construction; the
    # capacity-limited run must give the same back of queue.
    dur = np.array([1800.0, 1800.0, 7200.0])
    lam = np.array([1.5, 0.5, 0.5])
    run = solve(dur, lam, np.array([0.7, 0.7, 1.08]))
    t, _, d = newell.curves(run)
    te, _, admitted = newell.curves(solve(dur, lam, np.full(3, 1.2)))
    grid = np.union1d(t, te)
    ref_t, ref_d = track(grid, np.interp(grid, te, admitted), np.interp(grid, t, d))
    nq = newell.from_queue(run, DIAGRAM, N_LANES)
    assert nq.capacity_limited
    assert nq.distance == pytest.approx(np.interp(nq.times, ref_t, ref_d), rel=1e-9, abs=1e-6)
    assert ref_d == pytest.approx(np.interp(ref_t, nq.times, nq.distance), rel=1e-9, abs=1e-6)
    # entry queue 0.3*1800 = 540 veh clears 540/0.7 s after 1800: the admitted curve
    # reaches the arrivals then (D/D/1), and nothing is lost
    assert admitted[-1] == pytest.approx(lam @ dur)
    within = solve(dur, lam * 0.5, np.full(3, 0.7))
    assert not newell.from_queue(within, DIAGRAM, N_LANES).capacity_limited


def test_arrivals_above_capacity_at_a_front_discharging_at_capacity_leave_no_queue() -> None:
    # Arrivals 1.5 veh/s for 1800 s above the approach capacity n c = 1.2 veh/s, and a
    # front that discharges at exactly n c (no capacity drop on the open road). Daganzo
    # (2005): the approach admits at most n c, so the admitted counts are those of a point
    # queue at its upstream end served at n c, which are the departures themselves: no
    # queue stands inside the approach, and the 540 vehicles wait beyond its upstream end.
    # Both level curves are then flat at one level; the answer must not depend on how the
    # same counts were summed (the grid split differently gives different rounding).
    nc = N_LANES * DIAGRAM.capacity
    for dur, lam in (
        ([1800.0, 1800.0, 7200.0], [1.5, 0.5, 0.5]),
        ([900.0, 900.0, 1800.0, 3600.0, 3600.0], [1.5, 1.5, 0.5, 0.5, 0.5]),
        ([600.0] * 3 + [1800.0] + [720.0] * 10, [1.5] * 3 + [0.5] * 11),
        ([1800.0, 1800.0, 7200.0], [1.5 + 1e-13, 0.5, 0.5]),
        ([1800.0, 1800.0, 7200.0], [1.5 - 1e-13, 0.5, 0.5]),
    ):
        run = solve(np.array(dur), np.array(lam), np.full(len(dur), nc))
        assert run.queue.max() == pytest.approx(0.3 * 1800)
        nq = newell.from_queue(run, DIAGRAM, N_LANES)
        assert nq.capacity_limited
        assert nq.extent.max_m == 0.0, dur
        assert np.all(nq.hourly_max_m == 0.0)


# --------------------------------------------------------------------------- engine runs


def _long_closure_plan():
    # Invented: two-lane "Kestrel Ridge Parkway near Amberfold", one lane closed 08:00 to
    # 14:00; demand breaks the one-lane capacity (about 1750 veh/h) at 08:00 and stays
    # above its discharge rate (about 1515 veh/h) until the closure ends.
    import datetime as dt

    from wzq.engine.plan import Closure, Demand, Plan, Site
    from wzq.units import MPH

    day = dt.datetime(2027, 5, 8)
    flows = [400, 300, 300, 400, 600, 900, 1200, 1500, 1900, 2000, 1800, 1700, 1700, 1800]
    flows += [2000, 2100, 2200, 1900, 1500, 1100, 800, 600, 500, 450]
    site = Site(
        lanes=2,
        speed_limit=65 * MPH,
        work_zone_speed_limit=55 * MPH,
        work_zone_length=1200.0,
        name="Kestrel Ridge Parkway near Amberfold (invented)",
    )
    closure = Closure(start=day.replace(hour=8), end=day.replace(hour=14), lanes_closed=1)
    return Plan(site=site, demand=Demand(day, 3600, np.array(flows, float)), closures=(closure,))


def test_from_run_on_an_engine_plan() -> None:
    # The queue still grows when the closure ends at 14:00; the back keeps moving upstream
    # until the recovery wave from the front meets it (shockwave analysis, textbooks
    # above), so the longest queue comes after the closure and is longer than any
    # single-state length at the interval boundaries.
    from wzq.engine.evaluate import evaluate
    from wzq.engine.queue_length import newell_of_run

    run = evaluate(_long_closure_plan())
    assert run.queue.queue[14] > 0  # queued vehicles at 14:00 (setting, not a result)
    nq = newell_of_run(run)
    assert nq.extent.at_s > 14 * 3600.0
    assert nq.extent.max_m > max(run.length_start.max(), run.length_end.max())
    # the queue dissolves in space when the point queue clears (D/D/1 instants)
    assert nq.dissolved_s == pytest.approx(run.queue.clear_times(), abs=1e-6)
    assert nq.extent.dissolved_s == pytest.approx(run.queue.clear_times()[-1], abs=1e-6)
    assert len(nq.hourly_max_m) == 24
    assert nq.hourly_max_m.max() == pytest.approx(nq.extent.max_m)
    assert nq.hourly_max_m[nq.hour_bounds[1:] <= 8 * 3600.0] == pytest.approx(0.0)
    assert nq.at_boundaries[run.queue.queue == 0] == pytest.approx(0.0, abs=1e-6)
    # boundaries agree with the exact back from the arrays
    t, a, d = newell.curves(run.queue)
    tri = run.model.diagram
    exact = newell.back_of_queue(
        t,
        a,
        d,
        lanes=2,
        free_speed=tri.free_speed,
        wave_speed=tri.backward_wave_speed,
        jam_density=tri.jam_density,
        at=run.t,
    )
    assert nq.at_boundaries == pytest.approx(exact, rel=1e-12, abs=1e-9)
    assert not nq.capacity_limited


def test_wrong_inputs_are_refused() -> None:
    run = solve(np.array([3600.0]), np.array([0.9]), np.array([0.6]))
    with pytest.raises(TypeError, match="triangular"):
        newell.from_queue(run, Greenshields(free_speed=30.0, jam_density=0.12), 2)
    t, a, d = newell.curves(run)
    with pytest.raises(ValueError, match="within"):
        newell.back_of_queue(t, a, d, at=3700.0, **APPROACH)
    with pytest.raises(ValueError, match="after_end"):
        newell.trajectory(t, a, d, after_end="guess", **APPROACH)  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="increasing"):
        newell.trajectory(t[::-1], a, d, **APPROACH)


def test_each_wrong_input_is_refused_with_its_whole_message() -> None:
    # The public functions check their inputs (one message per kind of error, compared in
    # full); each case breaks one rule only, so a loosened test of any one rule lets it by.
    t = np.array([0.0, 1800.0, 3600.0])
    a = np.array([0.0, 900.0, 1500.0])
    d = np.array([0.0, 700.0, 1400.0])
    shape = "t, a_cum and d_cum must be 1-D arrays of the same length, at least 2"
    for args in (
        (t[:1], a[:1], d[:1]),  # one knot only
        (t, a[:2], d),  # a of another length
        (t, a, d[:2]),  # d of another length
        (t[None, :], a[None, :], d[None, :]),  # 2-D
    ):
        with pytest.raises(ValueError) as e:
            newell.trajectory(*args, **APPROACH)
        assert str(e.value) == shape
    flat = np.array([0.0, 1800.0, 1800.0])  # two knots at one instant
    with pytest.raises(ValueError) as e:
        newell.trajectory(flat, a, d, **APPROACH)
    assert str(e.value) == "the times t must be strictly increasing"
    for aa, dd in ((np.array([0.0, np.nan, 1500.0]), d), (a, np.array([0.0, np.inf, 1400.0]))):
        with pytest.raises(ValueError) as e:
            newell.trajectory(t, aa, dd, **APPROACH)
        assert str(e.value) == "cumulative counts must be finite"
    for key, bad in (
        ("lanes", 0),
        ("free_speed", -30.0),
        ("wave_speed", np.inf),
        ("jam_density", np.nan),
    ):
        with pytest.raises(ValueError) as e:
            newell.trajectory(t, a, d, **{**APPROACH, key: bad})
        assert str(e.value) == "lanes, speeds and jam density must be finite and above zero"
    # whole numbers given as integers are the same counts (rates per second in floats)
    ints = newell.trajectory(t.astype(int), a.astype(int), d.astype(int), **APPROACH)
    floats = newell.trajectory(t, a, d, **APPROACH)
    for x, y in zip(ints, floats, strict=True):
        np.testing.assert_array_equal(x, y)


# --------------------------------------------------------------------------- LWR check


def test_agrees_with_the_godunov_lwr_solver() -> None:
    # wzq.engine.lwr.simulation solves the same kinematic-wave problem numerically (Godunov / cell
    # transmission scheme, Daganzo 1994; Lebacque 1996 -- from memory), per lane, on a
    # 24 km approach starting in the arriving state (0.45 veh/s/ln, k 0.015) with the
    # bottleneck of test_closure_then_capacity_restored (0.3 then 0.54 veh/s/ln, no
    # capacity drop). Tolerance, stated: the back-of-queue shocks are compressive and
    # Godunov keeps them within about a cell, so away from the meeting with the recovery
    # wave the two agree within 1.5 cells. The recovery wave is a contact discontinuity
    # on the straight congested branch, which a first-order scheme smears by numerical
    # diffusion D = w dx (1 - nu)/2, nu = w dt/dx (the modified equation of upwind
    # schemes, LeVeque 1992 ch. 11 -- from memory); after its 3000 s trip to the back the
    # smear is about sqrt(2 D 3000 s), which bounds the difference near the peak, and
    # it shrinks as the cells do.
    from wzq.engine import lwr

    t, a = hand_curve([0, 3600, 9600, 14400], [0, 3240, 8640, 12960])
    _, d = hand_curve([0, 3600, 9600, 14400], [0, 2160, 8640, 12960])
    length, t_end = 24000.0, 12000.0
    worst = []
    for dx in (80.0, 40.0):
        steps = round(t_end / (0.9 * dx / V_F))
        dt = t_end / steps
        lev = np.arange(steps + 1) * dt
        cap = np.where(lev[:-1] + 0.5 * dt < 3600.0, 0.3, 0.54)
        f = lwr.solve(
            DIAGRAM,
            np.full(round(length / dx), 0.015),
            dx=dx,
            dt=dt,
            steps=steps,
            inflow=0.45,
            exit_capacity=cap,
            track=True,
        )
        back = np.where(np.isnan(f.back), 0.0, length - np.nan_to_num(f.back))
        ours = newell.back_of_queue(t, a, d, at=lev, **APPROACH)
        err = np.abs(back - ours)
        away = (lev < 6000.0) | (lev > 7200.0)
        assert err[away].max() <= 1.5 * dx
        smear = np.sqrt(2 * (W * dx * (1 - W * dt / dx) / 2) * 3000.0)
        assert err.max() <= smear
        gone = lev[np.flatnonzero((back[:-1] > 0) & (back[1:] == 0)) + 1]
        assert gone == pytest.approx([9600.0], abs=dx / 6.0)  # one cell at the back's 6 m/s
        worst.append(err.max())
    assert worst[1] < 0.85 * worst[0]  # converges as the cells shrink


# --------------------------------------------------------------------------- busy periods only


def _full_construction(run, lanes=N_LANES):
    """The construction over every knot of the run (no busy-period reduction)."""
    t, a, d = newell.curves(run)
    return newell._trajectory(t, a, d, lanes, V_F, W, K_J, "rate", busy_only=False)


@pytest.mark.parametrize("seed", range(40))
def test_busy_periods_alone_give_the_same_trajectory(seed: int) -> None:
    # The trajectory depends only on the knots of the busy periods when every flow is
    # below the approach capacity (module notes of wzq.models.newell): computed from those
    # knots it must equal the construction over every knot, vertex for vertex. Random
    # invented days: 24-96 intervals, quiet stretches between closures, capacity drop
    # on or off (no drop means the open road discharges at n c: the full path).
    rng = np.random.default_rng(seed)
    n = int(rng.integers(24, 97))
    dur = rng.choice([900.0, 1800.0, 3600.0], n)
    closed = rng.random(n) < 0.3
    pre = np.where(closed, 0.62, 1.2 if seed % 4 == 0 else 1.1)
    drop = 0.0 if seed % 4 == 0 else rng.uniform(0.02, 0.1)
    lam = rng.uniform(0.1, 1.0, n) * np.where(closed, 1.2, 1.0)
    run = solve(dur, lam, pre, pre * (1 - drop))
    nq = newell.from_queue(run, DIAGRAM, N_LANES)
    times, dist, limited = _full_construction(run)
    assert nq.capacity_limited == limited
    assert nq.distance == pytest.approx(np.interp(nq.times, times, dist), rel=1e-12, abs=1e-9)
    assert dist == pytest.approx(np.interp(times, nq.times, nq.distance), rel=1e-12, abs=1e-9)
    t, a, d = newell.curves(run)
    got_t, got_d = newell.trajectory(t, a, d, **APPROACH)
    assert got_d == pytest.approx(np.interp(got_t, times, dist), rel=1e-12, abs=1e-9)
    if seed % 4:
        assert (run.queue == 0).sum() > 3  # quiet stretches were there to drop (setting)


# --------------------------------------------------------------------------- the general path
#
# Where a flow reaches the approach capacity n c the level curves are flat in places and
# the construction takes its general path (left and right preimages of each level, the
# running-maximum envelope, the clip at d = 0). The checks below hold that path to the
# test's own bisection of Newell's formula (brute_back above), never to the construction.


def _at_capacity_run(rng: np.random.Generator, scale: float = 1.0):
    """Invented day with no capacity drop on the open road: the front discharges at n c.

    Arrivals stay below n c (at most 0.95 n c), so g falls strictly with d (its slope
    is (lambda - n c) / v_f) and the bisection finds the one back of the queue.
    ``scale`` multiplies every duration (sub-second knots for scale < 1).
    """
    nc = N_LANES * 0.6
    n = int(rng.integers(7, 30))
    dur = rng.choice([900.0, 1800.0, 3600.0], n) * scale
    closed = rng.random(n) < 0.35
    pre = np.where(closed, 0.62, nc)
    lam = rng.uniform(0.1, 0.95, n) * nc
    return solve(dur, lam, pre, np.where(closed, 0.62 * rng.uniform(0.85, 1.0, n), nc))


def _held_run(rng: np.random.Generator, scale: float = 1.0):
    """Invented day whose arrivals exceed n c for a while (held beyond the approach).

    The front keeps a capacity drop (discharge below n c), so g falls strictly with d
    once the arrivals are those the approach admits. Daganzo (2005): the approach
    admits at most n c, i.e. the arrivals of a point queue at its upstream end served at
    n c; the day ends quiet so that entry queue has cleared by then.
    """
    nc = N_LANES * 0.6
    n = int(rng.integers(7, 25))
    dur = rng.choice([900.0, 1800.0, 3600.0], n) * scale
    lam = rng.uniform(0.1, 0.9, n) * nc
    surge = rng.random(n) < 0.3
    lam = np.where(surge, rng.uniform(1.05, 1.4, n) * nc, lam)
    lam[-3:] = 0.1 * nc
    pre = np.where(rng.random(n) < 0.4, 0.62, 1.1)
    run = solve(dur, lam, pre, pre * rng.uniform(0.9, 0.98, n))
    admitted = solve(dur, lam, np.full(n, nc))
    return run, admitted


def _held_to_the_bisection(run, admitted, times, dist, abs_m=1e-4) -> None:
    t, _, d = newell.curves(run)
    te, _, adm = newell.curves(admitted)
    grid = np.union1d(t, te)
    a_in, d_in = np.interp(grid, te, adm), np.interp(grid, t, d)
    at = np.concatenate((grid, np.linspace(grid[0], grid[-1], 301)))
    want = brute_back(grid, a_in, d_in, at)
    assert np.interp(at, times, dist) == pytest.approx(want, abs=abs_m)


@pytest.mark.parametrize("seed", range(12))
def test_a_front_at_the_approach_capacity_gives_the_first_zero_of_newells_formula(seed) -> None:
    rng = np.random.default_rng(9100 + seed)
    for _ in range(4):
        run = _at_capacity_run(rng)
        t, a, d = newell.curves(run)
        at = np.concatenate((t, rng.uniform(t[0], t[-1], 200)))
        want = brute_back(t, a, d, at)
        nq = newell.from_queue(run, DIAGRAM, N_LANES)
        assert np.interp(at, nq.times, nq.distance) == pytest.approx(want, abs=1e-4)
        assert nq.at_boundaries == pytest.approx(brute_back(t, a, d, run.t), abs=1e-4)
        assert newell.back_of_queue(t, a, d, at=at, **APPROACH) == pytest.approx(want, abs=1e-4)
        assert not nq.capacity_limited


@pytest.mark.parametrize("seed", range(6))
def test_knots_under_a_second_apart_with_a_front_at_the_approach_capacity(seed) -> None:
    # The same checks on days shrunk five-thousandfold (intervals of 0.18 to 0.72 s): the
    # test of the flows against n c must divide the counts by the durations, not multiply
    # them, which for intervals under a second would pass flows above n c as below it.
    rng = np.random.default_rng(9200 + seed)
    for _ in range(4):
        run = _at_capacity_run(rng, scale=2e-4)
        t, a, d = newell.curves(run)
        at = np.concatenate((t, rng.uniform(t[0], t[-1], 200)))
        got = newell.back_of_queue(t, a, d, at=at, **APPROACH)
        assert got == pytest.approx(brute_back(t, a, d, at), abs=1e-7)
        run, admitted = _held_run(rng, scale=2e-4)
        times, dist = track(*newell.curves(run))
        _held_to_the_bisection(run, admitted, times, dist, abs_m=1e-7)


@pytest.mark.parametrize("seed", range(12))
def test_arrivals_above_the_approach_capacity_against_the_bisection(seed) -> None:
    rng = np.random.default_rng(9300 + seed)
    for _ in range(4):
        run, admitted = _held_run(rng)
        nq = newell.from_queue(run, DIAGRAM, N_LANES)
        assert nq.capacity_limited == bool((run.arrival_rate > N_LANES * 0.6).any())
        _held_to_the_bisection(run, admitted, nq.times, nq.distance)


def test_the_clip_at_zero_gives_each_crossing_of_zero_a_vertex() -> None:
    # max(d, 0) of a piecewise-linear curve, worked by hand: the curve crosses 0 where
    # d0 + (d1 - d0) f = 0, f = d0 / (d0 - d1), and the clipped curve has a corner there.
    # 0.5 -> -0.5 on [0, 10] crosses at 5; -0.5 -> 0.4 on [10, 20] at 10 + 10 * 5/9;
    # 0.6 -> -2.0 on [40, 50] at 40 + 10 * 0.6/2.6. Small values (under 1 m) and a
    # segment that stays above 0 (0.4 -> 2.0 -> 0.6) get no extra vertex.
    tt = np.array([0.0, 10.0, 20.0, 30.0, 40.0, 50.0])
    dd = np.array([0.5, -0.5, 0.4, 2.0, 0.6, -2.0])
    got_t, got_d = newell._clip_at_zero(tt, dd)
    assert got_t == pytest.approx([0, 5, 10, 10 + 50 / 9, 20, 30, 40, 40 + 6 / 2.6, 50], rel=REL)
    assert got_d == pytest.approx([0.5, 0, 0, 0, 0.4, 2.0, 0.6, 0, 0], abs=1e-12)


def test_a_diagram_newell_cannot_use_is_refused_with_the_whole_message() -> None:
    run = solve(np.array([3600.0]), np.array([0.9]), np.array([0.6]))
    with pytest.raises(TypeError) as err:
        newell.from_queue(run, Greenshields(free_speed=30.0, jam_density=0.12), 2)
    assert str(err.value) == (
        "Newell's simplified kinematic-wave method needs the triangular diagram, not "
        "Greenshields; use the single-state relation (wzq.models.shockwave)"
    )


def test_a_run_of_one_hour_has_one_hour() -> None:
    # Arrivals 0.9 veh/s against a closure discharging 0.6 veh/s for one hour (the single
    # state of test_single_state_is_the_stored_density_relation): the back is at
    # 30/11 m/s * 3600 s at the end of the hour, the one hour's longest queue.
    nq = newell.from_queue(solve([3600.0], [0.9], [0.6]), DIAGRAM, N_LANES)
    assert nq.hour_bounds == pytest.approx([0.0, 3600.0])
    assert nq.hourly_max_m == pytest.approx([30 / 11 * 3600], rel=REL)


def test_hours_are_counted_from_the_start_of_the_run() -> None:
    # The closure of test_closure_then_capacity_restored (intervals of 1 h and 3 h) on a
    # clock starting at 7,200 s: four hours from 7,200 s. Back (times from the start): 30/11
    # m/s until 3600 (9,818 m), peak 18,000 m at 6600, then 18000 - 6 (t - 6600) until it
    # dissolves at 9600. Hour maxima: 9,818; 18,000; 14,400 (at 7200); 0.
    import dataclasses

    run = solve(np.array([3600.0, 10800.0]), np.array([0.9, 0.9]), np.array([0.6, 1.08]))
    nq = newell.from_queue(dataclasses.replace(run, t=run.t + 7200.0), DIAGRAM, N_LANES)
    assert nq.hour_bounds == pytest.approx(7200.0 + 3600.0 * np.arange(5))
    assert nq.hourly_max_m == pytest.approx([30 / 11 * 3600, 18000.0, 14400.0, 0.0], rel=REL)
    assert nq.extent.at_s == pytest.approx(7200.0 + 6600.0, rel=REL)
    assert nq.extent.dissolved_s == pytest.approx(7200.0 + 9600.0, rel=REL)


def test_a_front_at_capacity_between_two_closures_after_arrivals_were_held() -> None:
    # Invented day: arrivals 1.5 veh/s above n c = 1.2 for the first 600 s (held beyond the
    # approach: F flat, the general path), a closure (0.6 veh/s) with arrivals 0.9, half
    # an hour of open road discharging at exactly n c (no capacity drop: E flat) before the
    # queue has cleared (1080 - 540 = 540 vehicles left), a second closure, then open road.
    # The level of E's flat stretch lies inside a rising stretch of F; its left preimage
    # there must be interpolated. Oracle: the test's bisection of Newell's formula on the
    # arrivals the approach admits (Daganzo 2005: a point queue at its entry served at n c).
    dur = np.array([600.0, 3000.0, 3600.0, 1800.0, 3600.0, 14400.0])
    lam = np.array([1.5, 0.3, 0.9, 0.9, 0.9, 0.5])
    pre = np.array([1.1, 1.1, 0.6, 1.2, 0.6, 1.2])
    run = solve(dur, lam, pre)
    admitted = solve(dur, lam, np.full(len(dur), N_LANES * 0.6))
    nq = newell.from_queue(run, DIAGRAM, N_LANES)
    assert nq.capacity_limited
    _held_to_the_bisection(run, admitted, nq.times, nq.distance)
    _held_to_the_bisection(run, admitted, *track(*newell.curves(run)))


def test_queue_standing_at_the_start_of_a_one_lane_approach() -> None:
    # As test_queue_standing_at_the_start_is_stored_at_jam_density, on one lane (n c = 0.6
    # veh/s, below 1: the knot before the start must lie q0 / (n c) back, not q0 n c).
    # 300 vehicles at t = 0, arrivals 0.45, discharge 0.54 veh/s. At t = 0,
    # g(d) = 300 + 0.45 d/30 - 0.12 d -> d = 300 / 0.105 m; D/D/1: clears 300/0.09 s later.
    run = solve(np.array([7200.0]), np.array([0.45]), np.array([0.54]), q0=300.0)
    t, a, d = newell.curves(run)
    one = dict(APPROACH, lanes=1)
    assert newell.back_of_queue(t, a, d, at=0.0, **one) == pytest.approx(300 / 0.105, rel=REL)
    times, dist = newell.trajectory(t, a, d, **one)
    assert newell.dissolve_times(times, dist) == pytest.approx([300 / 0.09], rel=REL)


def test_counts_that_do_not_start_at_zero_give_the_same_back() -> None:
    # Newell's N(d, t) is a count from any origin: adding 1000 vehicles to both curves moves
    # N by 1000 and leaves g, and the back of the queue, unchanged. The case of
    # test_queue_standing_at_the_start_is_stored_at_jam_density: 600 / 0.21 m at t = 0.
    run = solve(np.array([7200.0]), np.array([0.9]), np.array([1.08]), q0=600.0)
    t, a, d = newell.curves(run)
    got = newell.back_of_queue(t, a + 1000.0, d + 1000.0, at=0.0, **APPROACH)
    assert got == pytest.approx(600 / 0.21, rel=REL)
    times, dist = track(t, a + 1000.0, d + 1000.0)
    assert newell.dissolve_times(times, dist) == pytest.approx([600 / 0.18], rel=REL)


def test_a_long_queue_standing_at_the_start_and_still_there_at_the_end() -> None:
    # 10,000 vehicles stand at jam density at t = 0 (D held before 0); arrivals 0.9 against
    # a discharge of 0.6 veh/s for one hour, the queue still there at the end (A carried on
    # at 0.9). The recovery wave from the front reaches 6 * 3600 = 21.6 km by the end, short
    # of the back, so the back meets the stored jam: g(d; t) = 10000 + 0.9 (t + d/30)
    # - 0.24 d = 0, d = (10000 + 0.9 t) / 0.21 m (the shock between the arriving state and
    # the jam, 0.9 / (0.24 - 0.03) m/s upstream).
    run = solve(np.array([3600.0]), np.array([0.9]), np.array([0.6]), q0=10000.0)
    t, a, d = newell.curves(run)
    at = np.array([0.0, 1800.0, 3600.0])
    got = newell.back_of_queue(t, a, d, at=at, **APPROACH)
    assert got == pytest.approx((10000 + 0.9 * at) / 0.21, rel=REL)


@pytest.mark.parametrize("nudge", [0.0, 1e-13, -1e-13])
def test_a_closure_after_arrivals_held_at_a_front_discharging_at_capacity(nudge) -> None:
    # The held first half hour of test_arrivals_above_capacity_at_a_front_discharging_at_
    # capacity_leave_no_queue (levels a rounding apart joined, no queue inside the
    # approach), then a closure: arrivals 0.9 against 0.6 veh/s for an hour, then 0.5
    # against an open road discharging at 1.0. The joined levels must keep their order, so
    # the closure's queue is the bisection's of Newell's formula on the admitted arrivals.
    nc = N_LANES * DIAGRAM.capacity
    dur = np.array([1800.0, 1800.0, 3600.0, 14400.0])
    lam = np.array([1.5 + nudge, 0.5, 0.9, 0.5])
    run = solve(dur, lam, np.array([nc, nc, 0.6, 1.1]), np.array([nc, nc, 0.6, 1.0]))
    admitted = solve(dur, lam, np.full(len(dur), nc))
    nq = newell.from_queue(run, DIAGRAM, N_LANES)
    assert nq.capacity_limited
    _held_to_the_bisection(run, admitted, nq.times, nq.distance)


# --------------------------------------------------------------------------- small and large


def test_a_queue_of_a_fraction_of_a_vehicle_forms_and_dissolves() -> None:
    # The LWR model has no length or time scale of its own: with flows and densities kept,
    # (x, t) -> (x/k, t/k) maps solutions to solutions, counts scaling as t. The case of
    # test_closure_then_capacity_restored shrunk 36,000-fold: a closure of 0.1 s holds
    # 1080/36000 = 0.03 vehicles; the back peaks at 18000/36000 = 0.5 m at 6600/36000 s
    # and reaches the bottleneck at 9600/36000 s. A queue under a metre is still a queue.
    t, a = hand_curve([0, 0.1, 0.8 / 3, 0.4], [0, 0.09, 0.24, 0.36])
    _, d = hand_curve([0, 0.1, 0.8 / 3, 0.4], [0, 0.06, 0.24, 0.36])
    times, dist = track(t, a, d)
    ext = newell.extent(times, dist)
    assert ext.max_m == pytest.approx(0.5, rel=REL)
    assert ext.at_s == pytest.approx(6600 / 36000, rel=REL)
    assert ext.dissolved_s == pytest.approx(9600 / 36000, rel=REL)
    assert newell.dissolve_times(times, dist) == pytest.approx([9600 / 36000], rel=REL)
    at = np.array([0.05, 0.2, 0.25])
    expect = [30 / 11 * 0.05, 0.5 - 6 * (0.2 - 6600 / 36000), 0.5 - 6 * (0.25 - 6600 / 36000)]
    assert newell.back_of_queue(t, a, d, at=at, **APPROACH) == pytest.approx(expect, rel=REL)


def test_extent_and_dissolve_times_of_hand_vertices_in_whole_numbers() -> None:
    # Hand piecewise-linear trajectory (s, m) given as integers: rises to 3 m at 20 s, falls
    # through 2 m and 1 m, is gone at 50 s, stands again (2 m at 70 s) until 80 s. The
    # longest queue is the first vertex at 3 m; each return to 0 after a queue is an
    # instant it has gone, in seconds as floats whatever the type given.
    times = np.array([0, 10, 20, 30, 40, 50, 60, 70, 80, 90])
    dist = np.array([0, 1, 3, 2, 1, 0, 0, 2, 0, 0])
    assert newell.extent(times, dist) == newell.Extent(3.0, 20.0, 50.0)
    gone = newell.dissolve_times(times, dist)
    assert gone.dtype == np.float64
    np.testing.assert_array_equal(gone, [50.0, 80.0])
    assert newell.extent(times, np.zeros(10, dtype=int)) == newell.Extent(0.0, None, None)


def test_the_trajectory_has_one_vertex_per_instant_when_the_queue_clears_at_the_end() -> None:
    # The case of test_closure_then_capacity_restored cut at 9600 s, when the queue has just
    # cleared (D/D/1: 1080 / 0.18 = 6000 s after the closure). The trajectory is a function
    # of time: its vertices strictly increase in time from 0 to 9600 s, with the back at
    # 30/11 t during the closure, 18000 m at 6600 s and 0 at 9600 s (hand shockwaves there).
    t, a = hand_curve([0, 3600, 9600], [0, 3240, 8640])
    _, d = hand_curve([0, 3600, 9600], [0, 2160, 8640])
    times, dist = track(t, a, d)
    assert np.all(np.diff(times) > 0)
    assert (times[0], times[-1]) == (0.0, 9600.0)
    assert (dist[0], dist[-1]) == (0.0, 0.0)
    at = np.array([1800.0, 6600.0, 8000.0])
    expect = [30 / 11 * 1800, 18000.0, 18000 - 6 * (8000 - 6600)]
    assert np.interp(at, times, dist) == pytest.approx(expect, rel=REL)


def _held_at_capacity_with_a_standing_queue(slip: float) -> tuple[np.ndarray, ...]:
    """300 vehicles queued at t = 0; arrivals 1.5 veh/s above n c = 1.2 for 1800 s, then 0.5;
    the front discharges at exactly n c until the queue clears at 3000 s (D/D/1: the
    entry queue of 0.3 * 1800 = 540 clears 540/0.7 s after 1800, then the 300 clear at
    0.7 veh/s net, by 2571.43 + 428.57 = 3000 s). ``slip`` is added to D at 1800 s."""
    tc = 1800 + 540 / 0.7
    t = np.array([0.0, 1800.0, tc, 3000.0, 3600.0, 10800.0])
    a = np.array([300.0, 3000.0, 3000 + 0.5 * (tc - 1800), 3600.0, 3900.0, 7500.0])
    d = np.array([0.0, 2160.0 + slip, 1.2 * tc, 3600.0, 3900.0, 7500.0])
    return t, a, d


@pytest.mark.parametrize("slip", [0.0, -1e-9, 1e-9])
def test_a_standing_queue_while_arrivals_are_held_at_a_front_at_capacity(slip) -> None:
    # Daganzo (2005): the approach admits at most n c = 1.2 veh/s, so its admitted arrivals
    # are 300 + 1.2 u until the entry queue clears at u = 2571.43 s, then 0.5 veh/s. With
    # D = 1.2 s (held at 0 before the start), Newell's g(d; t) = A(t + d/30) - D(t - d/6)
    # - 0.24 d, worked by hand: 300 > 0 for d <= 6 t; beyond, g = 300 + 1.2 t - 0.2 d, zero
    # at d = 1500 + 6 t (while t + d/30 <= 2571.43, i.e. t <= 2101.19 s); then, with A at
    # 0.5 veh/s, d = (2100 + 0.5 t) / (0.24 - 1/60) up to t = 2500 s (15,000 m), and
    # d = 90000 - 30 t (D read after the start) until the back reaches the bottleneck at
    # 3000 s. A slip of D by a rounding error (1e-9 veh) must not move it (the levels of
    # the flat level curves it splits are one level).
    t, a, d = _held_at_capacity_with_a_standing_queue(slip)
    times, dist = track(t, a, d)
    at = np.array([0.0, 1000.0, 2101.19, 2300.0, 2500.0, 2800.0, 3000.0, 3600.0])
    expect = [1500.0, 7500.0, 1500 + 6 * 2101.19, (2100 + 0.5 * 2300) / (0.24 - 1 / 60)]
    expect += [15000.0, 6000.0, 0.0, 0.0]
    assert np.interp(at, times, dist) == pytest.approx(expect, rel=1e-9, abs=1e-6)
    assert newell.extent(times, dist) == newell.Extent(
        pytest.approx(15000.0, rel=1e-9), pytest.approx(2500.0, rel=1e-9), pytest.approx(3000.0)
    )


@pytest.mark.parametrize(("origin", "short_at"), [(0.0, None), (4e7, 1), (4e7, 2)])
def test_counts_of_a_long_plan_rounded_leave_no_queue_at_a_front_at_capacity(
    origin, short_at
) -> None:
    # test_arrivals_above_capacity_at_a_front_discharging_at_capacity_leave_no_queue by
    # hand: arrivals 1.5 veh/s for 1800 s, the front at exactly n c = 1.2 veh/s until the
    # entry queue (540 veh) has gone 540/0.7 s later; the approach admits the departures
    # themselves (Daganzo 2005), so no queue stands inside it. Counts from an origin of
    # 4e7 vehicles (a year at 4,600 veh/h) carry the rounding of a year of cumulative sums
    # (a unit in the last place of 4e7 is 7.5e-9 veh, and 8,760 hourly sums can gather a
    # thousand of those): D 1e-5 vehicles short at one knot is such rounding there, and
    # must leave no queue, as the exact counts do (at an origin of 0 the same 1e-5 is
    # above the rounding of the counts, and is not tested).
    tc = 1800 + 540 / 0.7
    t = np.array([0.0, 1800.0, tc, 3600.0, 10800.0])
    a = np.array([0.0, 2700.0, 2700 + 0.5 * (tc - 1800), 3600.0, 7200.0]) + origin
    d = np.array([0.0, 2160.0, 2700 + 0.5 * (tc - 1800), 3600.0, 7200.0]) + origin
    if short_at is not None:
        d[short_at] -= 1e-5
    times, dist = track(t, a, d)
    assert newell.extent(times, dist).max_m == 0.0


def test_hourly_max_over_periods_outside_the_trajectory() -> None:
    # Hand trajectory from 1 h to 3 h with a queue standing at both ends (500 m at 1 h,
    # 900 m at 2 h, 300 m at 3 h). Half-hour periods from 0 to 4 h: those wholly before
    # or after the trajectory give 0 (nothing is known there, and no queue is claimed);
    # a period that ends or starts on the trajectory's end takes its distance there.
    times = np.array([3600.0, 7200.0, 10800.0])
    dist = np.array([500.0, 900.0, 300.0])
    bounds = np.arange(9) * 1800.0
    got = newell.hourly_max(times, dist, bounds)
    # periods: [0, .5] [.5, 1] [1, 1.5] [1.5, 2] [2, 2.5] [2.5, 3] [3, 3.5] [3.5, 4] h
    assert got == pytest.approx([0, 500, 700, 900, 900, 600, 300, 0])
