"""The one schema of plan inputs (wzq.io.fields): complete, consistent, and what the JSON
and workbook adapters read and write.

The test helper that types plans into templates (tests/workbook_helpers.py) keeps its
own list of cells, written out by hand as an independent check of the round trips; here
that list is held to the schema, so neither can drift from the other."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest
from workbook_helpers import plan_values

import wzq
from wzq.engine import plan as P
from wzq.io import fields as F
from wzq.io.jsonplan import load_plan, plan_from_dict, plan_to_dict
from wzq.io.workbook import layout as L
from wzq.io.workbook.template import build_template

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
SECTIONS = {"site": P.Site, "thresholds": P.Thresholds, "costs": P.Costs, "options": P.Options}


def test_every_plan_attribute_a_user_types_has_one_input() -> None:
    attributes = [f.attribute for f in F.PLAN_INPUTS]
    assert len(attributes) == len(set(attributes))
    for section, cls in SECTIONS.items():
        have = {a.split(".", 1)[1] for a in attributes if a.startswith(f"{section}.")}
        # every typed value, the landmark limit included (the unit system is the
        # workbook's, key "units", and is checked with it)
        wanted = {f.name for f in dataclasses.fields(cls)}
        assert have == wanted, section
    assert {a.split(".", 1)[1] for a in attributes if a.startswith("meta.")} == {
        f.name for f in dataclasses.fields(P.Meta)
    }


def test_names_and_keys_are_unique_and_every_cell_is_in_the_template(tmp_path) -> None:
    from openpyxl import load_workbook

    names = [f.name for f in F.ALL_FIELDS]
    keys = [f.key for f in F.PLAN_INPUTS]
    assert len(names) == len(set(names)) and len(keys) == len(set(keys))
    path = tmp_path / "t.xlsx"
    build_template(path, macro=False)
    book = load_workbook(path)
    assert set(names) <= set(book.defined_names)


def test_choices_are_the_plan_values_the_engine_accepts() -> None:
    accepted = {
        "site.terrain": P.TERRAINS,
        "site.area_type": P.AREA_TYPES,
        "site.driver_population": P.DRIVER_POPULATIONS,
        "site.capacity_method": P.CAPACITY_METHODS,
        "site.capacity_override_is": P.OVERRIDE_MEANINGS,
        "options.diagram": P.DIAGRAMS,
        "options.queue_length_method": P.QUEUE_LENGTH_METHODS,
        "site.congested_branch": P.CONGESTED_BRANCHES,
    }
    for attribute, values in accepted.items():
        assert {v for _, v in F.BY_ATTRIBUTE[attribute].choices} == set(values), attribute


@pytest.mark.parametrize("system", ["us", "metric"])
def test_units_go_there_and_back(system) -> None:
    # 60 mi/h = 26.8224 m/s exactly (1 mi = 1609.344 m, NIST SP 811); 5 % = 0.05
    speed = F.BY_ATTRIBUTE["site.speed_limit"]
    assert F.to_plan(speed, 60.0, "us") == pytest.approx(26.8224)
    assert F.to_plan(F.BY_ATTRIBUTE["site.heavy_vehicle_share"], 5.0, system) == 0.05
    assert F.to_plan(F.BY_ATTRIBUTE["thresholds.max_average_delay"], 15.0, system) == 900.0
    for f in F.PLAN_INPUTS:
        if f.kind == "number":
            assert F.to_file(f, F.to_plan(f, 12.5, system), system) == pytest.approx(12.5)
            assert F.to_plan(f, None, system) is None


def test_the_json_form_is_the_schema() -> None:
    plan = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    data = plan_to_dict(plan)
    for section in ("site", "thresholds", "options", "meta"):
        # the congested branch and the landmark limit are written only when used
        assert set(data[section]) == F.json_keys(section) - {
            k.split(".", 1)[1] for k in F.WHEN_USED_KEYS if k.startswith(f"{section}.")
        }, section
    again = plan_from_dict(data)
    assert plan_to_dict(again) == data
    assert (again.site, again.thresholds, again.options, again.meta) == (
        plan.site,
        plan.thresholds,
        plan.options,
        plan.meta,
    )


def test_the_test_helpers_own_cell_list_matches_the_schema() -> None:
    plan = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    with_costs = dataclasses.replace(
        plan, costs=wzq.Costs(18.0, 1.5, 40.0, truck_share=0.1, currency="EUR")
    )
    helper = set(plan_values(with_costs))
    schema = {f.name for f in F.PLAN_INPUTS if f.name}
    assert helper - {F.DEMAND_MODE.name} == schema
    assert L.word_for(L.DEMAND_MODE_WORDS, L.HOURLY) == plan_values(plan)[F.DEMAND_MODE.name]
