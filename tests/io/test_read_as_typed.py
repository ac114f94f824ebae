"""Realistic inputs that were read as something else without a word, now refused or queried.

Each test types one mistake a designer in a hurry makes (or a spreadsheet program
stores) into a plan and checks that the tool names where it was typed. The plans
are the invented Kestrel Ridge example, typed into a fresh template through its
names and tables (``tests/workbook_helpers.py``) or edited as JSON.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from wzq import PlanError
from wzq.io.jsonplan import load_plan

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"


def kestrel_json() -> dict:
    return json.loads(KESTREL.read_text(encoding="utf-8"))


def problems_of(path: Path) -> list[str]:
    with pytest.raises(PlanError) as e:
        load_plan(path)
    return [f"{p.where}: {p.message}" for p in e.value.problems]


# ---------------------------------------------------------------------------------------------
# JSON plans edited by hand
# ---------------------------------------------------------------------------------------------


def test_a_key_given_twice_in_a_json_object_is_refused_naming_both_values(tmp_path: Path) -> None:
    """A second "lanes_closed" typed into a closure: JSON readers keep the last silently."""
    text = json.dumps(kestrel_json(), indent=1).replace(
        '"lanes_closed": 1,', '"lanes_closed": 1, "lanes_closed": 2,', 1
    )
    path = tmp_path / "twice.json"
    path.write_text(text, encoding="utf-8")
    (msg,) = problems_of(path)
    assert msg.startswith("twice.json: closures[0].lanes_closed:")
    assert "given twice (1, then 2)" in msg


def test_a_time_zone_in_a_json_date_time_is_refused(tmp_path: Path) -> None:
    data = kestrel_json()
    data["closures"][0]["start"] = "2027-05-03T21:00+02:00"
    path = tmp_path / "zone.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    (msg,) = problems_of(path)
    assert msg.startswith("zone.json: closures[0].start:")
    assert "time zone" in msg and "2027-05-03T21:00" in msg


def test_a_fraction_typed_for_a_json_percentage_is_queried(tmp_path: Path) -> None:
    """0.08 for 8 % heavy vehicles: read as typed (0.08 %), and said, as in a workbook."""
    data = kestrel_json()
    data["site"]["heavy_vehicle_percent"] = 0.08
    path = tmp_path / "fraction.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    plan = load_plan(path)
    assert plan.site.heavy_vehicle_share == pytest.approx(0.0008)
    (w,) = plan.input_warnings
    assert w.startswith("site.heavy_vehicle_percent: ")
    assert "0.08 %: did you mean 8 %?" in w
