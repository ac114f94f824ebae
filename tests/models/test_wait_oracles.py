"""The first-in-first-out wait when a queue clears inside an interval (issue 22).

Found while killing mutants of the hourly table: the wait is the horizontal distance
between the cumulative curves, ``w(t) = D^-1(A(t)) - t`` (Newell 1982, *Applications
of Queueing Theory*, ch. 2; common practice for deterministic queues). Where a queue
clears inside an interval the departure curve bends there (from the discharge rate to
the arrival rate), and reading ``D`` as a straight line across that interval makes the
vehicles queued at its start wait too long.
"""

from __future__ import annotations

import numpy as np
import pytest

from wzq.models.queueing import solve, waits

H = 3600.0


def test_the_wait_of_a_vehicle_arriving_as_the_queue_starts_to_clear() -> None:
    # 2,400 veh/h against 1,500 for an hour: 900 vehicles wait at 1 h. Then 600 veh/h
    # arrive and 4,000 leave: the vehicle arriving at 1 h (the 2,400th) leaves when
    # D = 2,400, at 1 + 900 / 4,000 = 1.225 h: a wait of 13.5 min (the queue clears at
    # 1 + 900 / 3,400 h). Over the run the longest wait is 22.5 min, at 0.625 h.
    run = solve(np.array([H, H]), np.array([2400.0, 600.0]) / H, np.array([1500.0, 4000.0]) / H)
    t, w = waits(run)
    at_one_hour = w[np.flatnonzero(np.isclose(t, H))]
    assert at_one_hour.max() / 60 == pytest.approx(13.5, rel=1e-9)
    assert w.max() / 60 == pytest.approx(22.5, rel=1e-9)


def test_the_longest_wait_behind_a_half_second_closure() -> None:
    # Curves rising by less than one vehicle between knots are still read as rising.
    # 0.9 veh/s against 0.6 for 0.5 s: D(0.5) = 0.3, queue 0.15, which clears at
    # 1.08 - 0.9 = 0.18 veh/s by 0.5 + 0.15/0.18 s. A vehicle arriving at t <= 1/3 s
    # (A = 0.9 t <= 0.3) leaves at 0.9 t / 0.6 = 1.5 t, a wait of 0.5 t; one arriving later
    # leaves at 0.5 + (0.9 t - 0.3)/1.08, a wait falling from 1/6 s. The longest: 1/6 s at 1/3 s.
    run = solve(np.array([0.5, 9.5]), np.array([0.9, 0.9]), np.array([0.6, 1.08]))
    t, w = waits(run)
    assert w.max() == pytest.approx(1 / 6, rel=1e-9)
    assert t[np.argmax(w)] == pytest.approx(1 / 3, rel=1e-9)


def test_the_wait_of_a_queue_standing_at_the_start_with_no_arrivals() -> None:
    # 60 vehicles stand at t = 0 (they count as arrived then) and leave at 1 veh/s; nobody
    # arrives in the first minute, 0.5 veh/s after. The last of them (A = 60 at t = 0)
    # leaves at 60 s: the longest wait, 60 s, at t = 0; later arrivals find no queue.
    run = solve(np.array([60.0, H]), np.array([0.0, 0.5]), np.array([1.0, 1.0]), q0=60.0)
    t, w = waits(run)
    assert np.all(np.isfinite(w)) and np.all(np.isfinite(t))
    assert w.max() == pytest.approx(60.0, rel=1e-9)
    assert t[np.argmax(w)] == 0.0


def test_the_waits_of_a_run_without_a_queue_are_zero_at_every_boundary() -> None:
    # Demand 0.5 veh/s within capacity 1.0: nobody waits (D/D/1).
    run = solve(np.array([H, H]), np.array([0.5, 0.5]), np.array([1.0, 1.0]))
    t, w = waits(run)
    assert t == pytest.approx([0.0, H, 2 * H])
    assert w.shape == t.shape and np.all(w == 0.0)
