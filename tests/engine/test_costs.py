"""Tests for wzq.engine.costs (road-user delay cost).

Every check against something outside the project names its source beside it.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

import wzq
from wzq.engine import costs as rc
from wzq.engine.plan import Closure, Costs, Demand, Plan, Site
from wzq.models import costs as published

START = dt.datetime(2027, 5, 3)  # invented dates


def test_default_values_are_the_2017_texas_memo_values() -> None:
    d = rc.DEFAULT_COSTS
    # D. R. Ellis (TTI), memo to TxDOT Construction Division, "Updated Estimate of Roadway
    # User Cost for Personal Vehicles and Commercial Trucks", March 5, 2018: 2017 values,
    # cars $28.69 per vehicle-hour at 1.5 persons, trucks $36.28 per vehicle-hour
    # (checked: memo transcription and TxDOT's road-user cost table; REFERENCES.md).
    assert rc.car_value_per_veh_h(d) == pytest.approx(28.69, abs=1e-12)
    assert d.car_occupancy == 1.5
    assert d.truck_value_per_veh_h == 36.28
    assert (d.currency, d.dollar_year) == ("USD", 2017)
    assert d.truck_share is None
    assert rc.costs_or_default(None) is d


def test_value_per_vehicle_hour_mixes_cars_and_trucks() -> None:
    # 90 % cars at 28.69, 10 % trucks at 36.28 (memo values): 25.821 + 3.628 = 29.449
    # (hand arithmetic)
    assert rc.value_per_veh_h(rc.DEFAULT_COSTS, 0.10) == pytest.approx(29.449, abs=1e-9)
    own = Costs(20.0, 1.25, 40.0, truck_share=0.2)
    # the user's truck share wins over the site's: 0.8 * 25 + 0.2 * 40 = 28 (hand arithmetic)
    assert rc.truck_share(own, 0.05) == 0.2
    assert rc.value_per_veh_h(own, 0.05) == pytest.approx(28.0, abs=1e-12)
    assert rc.value_per_veh_h(Costs(20.0, 1.25, 40.0), 0.0) == pytest.approx(25.0, abs=1e-12)


def test_delay_cost_scalar_and_array() -> None:
    own = Costs(20.0, 1.25, 40.0, truck_share=0.2)  # 28 per veh-h (hand arithmetic)
    assert rc.delay_cost(10.0, own, 0.0) == pytest.approx(280.0)
    out = rc.delay_cost(np.array([0.0, 1.0, 2.5]), own, 0.0)
    assert isinstance(out, np.ndarray)
    assert out.tolist() == pytest.approx([0.0, 28.0, 70.0])


def test_person_value_from_wage_uses_usdot_shares() -> None:
    # USDOT value-of-travel-time guidance: local personal travel 50 % of the hourly wage,
    # business travel 100 % (checked, REFERENCES.md)
    assert published.person_value_from_wage(30.0) == pytest.approx(15.0)
    assert published.person_value_from_wage(30.0, business_fraction=1.0) == pytest.approx(30.0)
    assert published.person_value_from_wage(30.0, business_fraction=0.2) == pytest.approx(18.0)
    with pytest.raises(ValueError, match="business_fraction"):
        published.person_value_from_wage(30.0, business_fraction=1.5)


def test_escalate_by_price_index() -> None:
    # value x index_to / index_from (common practice, no source)
    assert published.escalate(28.69, 200.0, 250.0) == pytest.approx(35.8625)
    with pytest.raises(ValueError):
        published.escalate(1.0, 0.0, 1.0)


def dd1_plan(costs: Costs | None) -> Plan:
    """Demand 1,800 veh/h; two lanes of 1,000 veh/h; a 2-hour closure at 1,500 veh/h."""
    site = Site(
        lanes=2,
        speed_limit=25.0,
        work_zone_speed_limit=25.0,
        work_zone_length=0.0,  # no work-zone travel delay: only the queue's
        free_flow_speed=25.0,
        heavy_vehicle_share=0.0,
        base_capacity_pc_h_ln=1000.0,
        capacity_drop_pct_open=0.0,
    )
    demand = Demand(START, 3600, np.full(12, 1800.0))
    closure = Closure(
        START + dt.timedelta(hours=2),
        START + dt.timedelta(hours=4),
        1,
        capacity_override_veh_h_ln=1500.0,
    )
    return Plan(site, demand, (closure,), costs=costs)


def test_hourly_and_total_cost_of_a_textbook_queue() -> None:
    # D/D/1 (standard textbook result, REFERENCES.md): Q = (1800 - 1500) * 2 = 600 veh,
    # clearance t_c = 600 / (2000 - 1800) = 3 h, total delay Q (T + t_c) / 2 = 1,500 veh-h.
    own = Costs(20.0, 1.25, 40.0, truck_share=0.2)  # 28 per veh-h (hand arithmetic)
    result = wzq.analyse(dd1_plan(own))
    assert result.summary.total_delay_veh_h == pytest.approx(1500.0, rel=1e-9)
    assert rc.total_cost(result) == pytest.approx(1500.0 * 28.0, rel=1e-9)
    hourly = rc.hourly_cost(result)
    assert hourly.name == "road_user_cost"
    assert hourly.index.equals(result.hourly.index)
    assert hourly.sum() == pytest.approx(1500.0 * 28.0, rel=1e-9)
    # hour 02:00-03:00: area 0.5 * 300 veh * 1 h = 150 veh-h (D/D/1)
    assert hourly.iloc[2] == pytest.approx(150.0 * 28.0, rel=1e-9)
    assert hourly.iloc[:2].tolist() == [0.0, 0.0]


def test_plan_without_costs_is_priced_with_the_defaults() -> None:
    plan = dd1_plan(None)
    assert rc.plan_costs(plan) is rc.DEFAULT_COSTS
    result = wzq.analyse(plan)
    # 1,500 veh-h (D/D/1) x 28.69 (TTI memo, 2017 values; no trucks on this site)
    assert rc.total_cost(result) == pytest.approx(1500.0 * 28.69, rel=1e-9)
    assert rc.plan_delay_cost(plan, 2.0) == pytest.approx(57.38)


def test_cost_basis_says_currency_year_and_when_defaults_are_used() -> None:
    text = rc.cost_basis(rc.DEFAULT_COSTS, 0.08)
    assert "USD of 2017" in text and "28.69" in text and "36.28" in text and "8% trucks" in text
    assert "update them" in text
    own = rc.cost_basis(Costs(15.0, 1.2, 50.0, currency="EUR", dollar_year=2026), 0.1)
    assert "EUR of 2026" in own and "18.00 per vehicle-hour" in own and "update" not in own
