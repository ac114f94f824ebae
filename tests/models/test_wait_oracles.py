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
