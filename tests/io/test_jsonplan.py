"""JSON plans: units converted once at the edge, every problem reported at once."""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import numpy as np
import pytest

from wzq import PlanError, analyse
from wzq.io.jsonplan import load_plan, parse_datetime, plan_from_dict, plan_to_dict, save_plan
from wzq.units import FOOT, KMH, MILE, MPH

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


def test_us_units_converted_to_si() -> None:
    plan = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    s = plan.site
    # exact definitions: 1 mi = 1609.344 m, 1 ft = 0.3048 m (NIST SP 811, App. B)
    assert s.speed_limit == pytest.approx(65 * 0.44704)
    assert s.work_zone_length == pytest.approx(1.2 * 1609.344)
    assert s.lateral_clearance == pytest.approx(2 * 0.3048)
    assert s.heavy_vehicle_share == pytest.approx(0.08)
    assert plan.thresholds.max_queue_length == pytest.approx(1.0 * MILE)
    assert plan.thresholds.max_average_delay == pytest.approx(15 * 60)
    assert plan.closures[0].start == dt.datetime(2027, 5, 3, 21)
    assert len(plan.demand.flows_veh_h) == 72


def test_metric_units() -> None:
    plan = load_plan(EXAMPLES / "fenwick_downs_weekend.json")
    assert plan.site.speed_limit == pytest.approx(110 * KMH)
    assert plan.site.work_zone_length == pytest.approx(3000.0)
    assert plan.site.lateral_clearance == pytest.approx(0.6)
    assert plan.thresholds.max_queue_length == pytest.approx(2000.0)


def test_round_trip_gives_the_same_plan_and_result(tmp_path: Path) -> None:
    for name in ("kestrel_ridge_weeknight.json", "fenwick_downs_weekend.json"):
        plan = load_plan(EXAMPLES / name)
        save_plan(plan, tmp_path / name)
        again = load_plan(tmp_path / name)
        assert again.site == plan.site
        assert again.closures == plan.closures
        assert again.thresholds == plan.thresholds
        assert np.array_equal(again.demand.flows_veh_h, plan.demand.flows_veh_h)
        assert analyse(again).hourly.equals(analyse(plan).hourly)


def test_a_plan_saved_with_a_byte_order_mark_is_the_same_plan(tmp_path: Path) -> None:
    # Windows Notepad saves UTF-8 with a byte-order mark; RFC 8259, section 8.1, lets a
    # parser ignore it (it was refused as "not valid JSON")
    text = (EXAMPLES / "kestrel_ridge_weeknight.json").read_bytes()
    (tmp_path / "bom.json").write_bytes(b"\xef\xbb\xbf" + text)
    plan, again = (
        load_plan(EXAMPLES / "kestrel_ridge_weeknight.json"),
        load_plan(tmp_path / "bom.json"),
    )
    assert again.site == plan.site
    assert again.closures == plan.closures
    assert np.array_equal(again.demand.flows_veh_h, plan.demand.flows_veh_h)


def test_packaged_demo_is_the_example() -> None:
    packaged = Path(__file__).resolve().parents[2] / "wzq" / "data"
    a = json.loads((packaged / "kestrel_ridge_weeknight.json").read_text())
    b = json.loads((EXAMPLES / "kestrel_ridge_weeknight.json").read_text())
    assert a == b


def test_24_00_is_midnight_at_the_end_of_the_day() -> None:
    assert parse_datetime("2027-05-03T24:00") == dt.datetime(2027, 5, 4)
    assert parse_datetime("2027-05-03 21:30") == dt.datetime(2027, 5, 3, 21, 30)


def test_every_problem_at_once_with_its_key() -> None:
    data = plan_to_dict(load_plan(EXAMPLES / "kestrel_ridge_weeknight.json"))
    data["site"]["lanes"] = "three"
    data["site"]["terain"] = "level"
    data["demand"]["veh_h"][5] = -10
    data["closures"][0]["start"] = "tomorrow"
    data["thresholds"]["max_queue_length"] = "1 mile"
    with pytest.raises(PlanError) as e:
        plan_from_dict(data, "p.json")
    where = [p.where for p in e.value.problems]
    assert "p.json: site.lanes" in where
    assert "p.json: site.terain" in where
    assert "p.json: demand.veh_h[5]" in where
    assert "p.json: closures[0].start" in where
    assert "p.json: thresholds.max_queue_length" in where


def test_plan_level_problems_are_located_in_the_file() -> None:
    data = plan_to_dict(load_plan(EXAMPLES / "kestrel_ridge_weeknight.json"))
    data["closures"][1]["lanes_closed"] = 3
    with pytest.raises(PlanError) as e:
        plan_from_dict(data, "p.json")
    assert str(e.value).startswith("p.json: closures[1]")
    assert "at least one lane must stay open" in str(e.value)


def test_invalid_json_names_the_line(tmp_path: Path) -> None:
    p = tmp_path / "bad.json"
    p.write_text('{"units": "us",\n "site": {,}\n}')
    with pytest.raises(PlanError, match=r"bad.json: line 2"):
        load_plan(p)


def test_units_helpers_are_consistent() -> None:
    assert MPH == pytest.approx(0.44704)
    assert FOOT * 5280 == pytest.approx(MILE)
