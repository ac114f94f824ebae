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

__all__ = [
    "BUSINESS_SHARE_OF_WAGE",
    "MEMO_CAR_OCCUPANCY",
    "MEMO_CAR_VALUE_PER_VEH_H",
    "MEMO_DOLLAR_YEAR",
    "MEMO_TRUCK_VALUE_PER_VEH_H",
    "PERSONAL_SHARE_OF_WAGE",
    "escalate",
    "mixed_value_per_veh_h",
    "person_value_from_wage",
]

#: TTI memo to TxDOT, March 5 2018: car value of delay time, 2017 $ per vehicle-hour.
MEMO_CAR_VALUE_PER_VEH_H = 28.69
#: TTI memo to TxDOT, March 5 2018: average car occupancy, persons per vehicle.
MEMO_CAR_OCCUPANCY = 1.5
#: TTI memo to TxDOT, March 5 2018: truck value of delay time, 2017 $ per vehicle-hour.
MEMO_TRUCK_VALUE_PER_VEH_H = 36.28
#: Year of the dollars of the memo's values.
MEMO_DOLLAR_YEAR = 2017

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


def mixed_value_per_veh_h(
    car_value_per_veh_h: float, truck_value_per_veh_h: float, trucks: float
) -> float:
    """Value of one vehicle-hour of delay for a traffic mix with the share ``trucks`` of
    trucks: ``(1 - P_T) v_car + P_T v_truck`` (FHWA-HOP-12-005, 2011: delay priced by
    vehicle class)."""
    return (1.0 - trucks) * car_value_per_veh_h + trucks * truck_value_per_veh_h
