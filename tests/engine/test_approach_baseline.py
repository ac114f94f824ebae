"""With no ramps and no landmarks every result equals today's.

``tests/data/no_approach_baseline.json`` holds the results of the shipped
examples and variants of them (every branch of the queue-length step, 15-minute
demand, no capacity drop, the window search and the space-time simulation),
computed by ``tests/data/make_no_approach_baseline.py`` on the main branch
before the approach road was added (commit 8b36fdc; the hourly longest wait
replaced since by the fixed wait's values; the vehicles held back, a column
added since, are 0 in every hour of these plans). The engine must give the
same numbers now: bit for bit (the comparison below is exact equality of the
floats as JSON keeps them, which round-trip exactly).
"""

from __future__ import annotations

import importlib.util
import json
from pathlib import Path

import numpy as np
import pytest

import wzq
from wzq.engine import lwr
from wzq.engine.windows import plan_windows

DATA = Path(__file__).parents[1] / "data"
BASELINE = json.loads((DATA / "no_approach_baseline.json").read_text(encoding="utf-8"))


def _maker():
    spec = importlib.util.spec_from_file_location(
        "baseline_maker", DATA / "make_no_approach_baseline.py"
    )
    module = importlib.util.module_from_spec(spec)
    assert spec.loader is not None
    spec.loader.exec_module(module)
    return module


MAKER = _maker()
PLANS = MAKER.variants()


@pytest.mark.parametrize("name", sorted(PLANS))
def test_every_result_equals_the_one_before_the_approach_road(name: str) -> None:
    plan = PLANS[name]
    assert not plan.approach.landmarks
    now = MAKER.record(plan)
    before = BASELINE[name]
    assert now["warnings"] == before["warnings"]
    # no new column, but the vehicles held back (added later on purpose; docs/api.md),
    # which no plan of the baseline has: the approach admits all of their demand
    added = now["hourly"].pop("queue_held_veh")
    assert added == [0.0] * len(added)
    assert list(now["hourly"]) == list(before["hourly"])
    for part in ("hourly", "intervals"):
        for column, values in before[part].items():
            assert now[part][column] == values, (part, column)
    for key, value in before["summary"].items():
        assert now["summary"][key] == value, key
    assert now["summary"]["exit_ramp_delay_veh_h"] == 0.0
    assert ("trajectory" in now) == ("trajectory" in before)
    if "trajectory" in before:
        assert now["trajectory"] == before["trajectory"]


def test_window_search_equals_the_one_before_the_approach_road() -> None:
    windows = plan_windows(PLANS["fenwick"])
    now = {ws.label: np.flatnonzero(ws.allowed.ravel()).tolist() for ws in windows.sets}
    assert now == BASELINE["fenwick_windows"]


def test_space_time_simulation_equals_the_one_before_the_approach_road() -> None:
    sim = lwr.simulate(PLANS["fenwick"], cells=120)
    before = BASELINE["fenwick_lwr"]
    assert [float(v) for v in sim.back_of_queue_m[::50]] == before["back_of_queue_m"]
    assert [float(v) for v in sim.stored_veh[::50]] == before["stored_veh"]
    assert sim.total_delay_veh_h == before["total_delay_veh_h"]


def test_no_landmarks_no_landmark_results() -> None:
    result = wzq.analyse(PLANS["kestrel"])
    assert result.landmark_results == ()
    assert result.landmarks.empty
    assert list(result.landmark_hours.columns) == ["hour_start"]
    assert result.exit_ramps.empty
    assert result.run.sections is None
