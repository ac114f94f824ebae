"""Road-user delay cost: delay vehicle-hours priced by vehicle class.

Concept (FHWA, *Work Zone Road User Costs — Concepts and Applications*,
FHWA-HOP-12-005, 2011): the delay cost of a work zone is the added travel time
of the vehicles that pass it, in vehicle-hours, times the value of time of
each vehicle class — for cars the value of a person-hour times the occupancy,
for trucks a value per vehicle-hour (driver and freight). The other road-user
costs of that report (vehicle operating, crash and emission costs) are not
computed here.

Default values (2017 US dollars), used when a plan gives none — **update them**
to the year of the work and to the agency's own figures:

* cars $28.69 per vehicle-hour at 1.5 persons per vehicle, trucks $36.28 per
  vehicle-hour (1.14 persons per vehicle); both include the extra fuel burnt in
  congested traffic. Source: D. R. Ellis, Texas A&M Transportation Institute,
  memorandum to the Texas Department of Transportation Construction Division,
  *Updated Estimate of Roadway User Cost for Personal Vehicles and Commercial
  Trucks*, March 5, 2018 (2017 values), as listed on TxDOT's road-user cost
  page for the 2018 memo.

Values of time from wages: the U.S. Department of Transportation's guidance on
the value of travel time savings prices local personal travel at 50 % and
business travel (and truck drivers) at 100 % of the hourly wage
(:func:`person_value_from_wage`).

Money is in ``Costs.currency`` of ``Costs.dollar_year``; :func:`escalate`
moves a value to another year with a price index the user supplies.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from wzq.engine.plan import Costs, Plan

if TYPE_CHECKING:
    from wzq.engine.evaluate import Result

#: TTI memo to TxDOT, March 5 2018: car value of delay time, 2017 $ per vehicle-hour.
MEMO_CAR_VALUE_PER_VEH_H = 28.69
#: TTI memo to TxDOT, March 5 2018: average car occupancy, persons per vehicle.
MEMO_CAR_OCCUPANCY = 1.5
#: TTI memo to TxDOT, March 5 2018: truck value of delay time, 2017 $ per vehicle-hour.
MEMO_TRUCK_VALUE_PER_VEH_H = 36.28
#: Year of the dollars of the memo's values.
MEMO_DOLLAR_YEAR = 2017

#: The defaults: the memo's values, the car value split into person-hour and occupancy.
DEFAULT_COSTS = Costs(
    car_value_per_person_h=MEMO_CAR_VALUE_PER_VEH_H / MEMO_CAR_OCCUPANCY,
    car_occupancy=MEMO_CAR_OCCUPANCY,
    truck_value_per_veh_h=MEMO_TRUCK_VALUE_PER_VEH_H,
    truck_share=None,
    currency="USD",
    dollar_year=MEMO_DOLLAR_YEAR,
)

#: USDOT value-of-travel-time guidance: share of the hourly wage, local personal travel.
PERSONAL_SHARE_OF_WAGE = 0.5
#: USDOT value-of-travel-time guidance: share of the hourly wage, business travel.
BUSINESS_SHARE_OF_WAGE = 1.0


def person_value_from_wage(hourly_wage: float, business_fraction: float = 0.0) -> float:
    """Value of one person-hour from the hourly wage (USDOT travel-time guidance).

    Personal trips at :data:`PERSONAL_SHARE_OF_WAGE`, business trips at
    :data:`BUSINESS_SHARE_OF_WAGE` of the wage, weighted by ``business_fraction``.
    """
    if not 0.0 <= business_fraction <= 1.0:
        raise ValueError("business_fraction must be between 0 and 1")
    if hourly_wage < 0:
        raise ValueError("hourly_wage must be zero or positive")
    share = (
        1.0 - business_fraction
    ) * PERSONAL_SHARE_OF_WAGE + business_fraction * BUSINESS_SHARE_OF_WAGE
    return hourly_wage * share


def escalate(value: float, index_from: float, index_to: float) -> float:
    """A money value moved between years by a price index (e.g. a consumer price index).

    ``value * index_to / index_from`` (common practice, no source).
    """
    if index_from <= 0 or index_to <= 0:
        raise ValueError("price indices must be positive")
    return value * index_to / index_from


def costs_or_default(costs: Costs | None) -> Costs:
    """The user's values, or :data:`DEFAULT_COSTS` when none were given."""
    return DEFAULT_COSTS if costs is None else costs


def plan_costs(plan: Plan) -> Costs:
    """The plan's values of time, or :data:`DEFAULT_COSTS`."""
    return costs_or_default(plan.costs)


def truck_share(costs: Costs, heavy_vehicle_share: float) -> float:
    """Share of trucks in the traffic: the user's, else the site's heavy-vehicle share."""
    return heavy_vehicle_share if costs.truck_share is None else costs.truck_share


def car_value_per_veh_h(costs: Costs) -> float:
    """Value of a car-hour: value of a person-hour times occupancy."""
    return costs.car_value_per_person_h * costs.car_occupancy


def value_per_veh_h(costs: Costs, heavy_vehicle_share: float) -> float:
    """Value of one vehicle-hour of delay for the traffic mix (currency per veh-h).

    ``(1 - P_T) * v_car * occupancy + P_T * v_truck`` with ``P_T`` from :func:`truck_share`.
    """
    p = truck_share(costs, heavy_vehicle_share)
    return (1.0 - p) * car_value_per_veh_h(costs) + p * costs.truck_value_per_veh_h


def delay_cost(
    delay_veh_h: float | np.ndarray, costs: Costs, heavy_vehicle_share: float
) -> float | np.ndarray:
    """Road-user cost of ``delay_veh_h`` vehicle-hours of delay (scalar or array)."""
    value = value_per_veh_h(costs, heavy_vehicle_share)
    if np.ndim(delay_veh_h) == 0:
        return float(delay_veh_h) * value
    return np.asarray(delay_veh_h, dtype=float) * value


def plan_delay_cost(plan: Plan, delay_veh_h: float | np.ndarray) -> float | np.ndarray:
    """:func:`delay_cost` with the plan's values (or the defaults) and its heavy-vehicle share."""
    return delay_cost(delay_veh_h, plan_costs(plan), plan.site.heavy_vehicle_share)


def hourly_cost(result: Result, costs: Costs | None = None) -> pd.Series:
    """Road-user cost of each hour's delay (queue plus work-zone delay), aligned with
    ``result.hourly``; named ``road_user_cost``."""
    plan = result.plan
    c = costs_or_default(costs if costs is not None else plan.costs)
    delay = result.hourly["delay_veh_h"].to_numpy(dtype=float)
    values = delay_cost(delay, c, plan.site.heavy_vehicle_share)
    return pd.Series(values, index=result.hourly.index, name="road_user_cost")


def total_cost(result: Result, costs: Costs | None = None) -> float:
    """Road-user cost of the run's total delay."""
    plan = result.plan
    c = costs_or_default(costs if costs is not None else plan.costs)
    return float(delay_cost(result.summary.total_delay_veh_h, c, plan.site.heavy_vehicle_share))


#: Said wherever a cost priced at :data:`DEFAULT_COSTS` is shown, because no values were given.
DEFAULTS_NOTE = "published defaults, as no values of time were entered: update them"


def cost_basis(costs: Costs, heavy_vehicle_share: float) -> str:
    """One line saying how delay is priced, for tables and reports."""
    p = truck_share(costs, heavy_vehicle_share)
    text = (
        f"{costs.currency} of {costs.dollar_year}: cars {car_value_per_veh_h(costs):,.2f} per "
        f"vehicle-hour ({costs.car_value_per_person_h:,.2f} per person-hour x "
        f"{costs.car_occupancy:g} persons), trucks {costs.truck_value_per_veh_h:,.2f} per "
        f"vehicle-hour, {p:.0%} trucks"
    )
    if costs == DEFAULT_COSTS:
        text += " (default values of 2017; update them to the year of the work)"
    return text
