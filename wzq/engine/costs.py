"""Road-user delay cost of a plan: the plan's values of time (or the published defaults
of :mod:`wzq.models.costs`) applied to its delay, and the line that says how delay is
priced."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    import pandas as pd

from wzq.engine.plan import Costs, Plan
from wzq.engine.results import Result
from wzq.models.costs import (
    MEMO_CAR_OCCUPANCY,
    MEMO_CAR_VALUE_PER_VEH_H,
    MEMO_DOLLAR_YEAR,
    MEMO_TRUCK_VALUE_PER_VEH_H,
    mixed_value_per_veh_h,
)

__all__ = [
    "DEFAULTS_NOTE",
    "DEFAULT_COSTS",
    "car_value_per_veh_h",
    "cost_basis",
    "costs_or_default",
    "delay_cost",
    "hourly_cost",
    "plan_costs",
    "plan_delay_cost",
    "total_cost",
    "truck_share",
    "value_per_veh_h",
]

#: The defaults: the memo's values, the car value split into person-hour and occupancy.
DEFAULT_COSTS = Costs(
    car_value_per_person_h=MEMO_CAR_VALUE_PER_VEH_H / MEMO_CAR_OCCUPANCY,
    car_occupancy=MEMO_CAR_OCCUPANCY,
    truck_value_per_veh_h=MEMO_TRUCK_VALUE_PER_VEH_H,
    truck_share=None,
    currency="USD",
    dollar_year=MEMO_DOLLAR_YEAR,
)


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
    return mixed_value_per_veh_h(car_value_per_veh_h(costs), costs.truck_value_per_veh_h, p)


def delay_cost(
    delay_veh_h: float | np.ndarray, costs: Costs, heavy_vehicle_share: float
) -> float | np.ndarray:
    """Road-user cost of ``delay_veh_h`` vehicle-hours of delay (scalar or array)."""
    value = value_per_veh_h(costs, heavy_vehicle_share)
    if np.ndim(delay_veh_h) == 0:
        return float(delay_veh_h) * value
    return np.asarray(delay_veh_h) * value  # float64: times a float value


def plan_delay_cost(plan: Plan, delay_veh_h: float | np.ndarray) -> float | np.ndarray:
    """:func:`delay_cost` with the plan's values (or the defaults) and its heavy-vehicle share."""
    return delay_cost(delay_veh_h, plan_costs(plan), plan.site.heavy_vehicle_share)


def hourly_cost(result: Result, costs: Costs | None = None) -> pd.Series:
    """Road-user cost of each hour's delay (queue plus work-zone delay), aligned with
    ``result.hourly``; named ``road_user_cost``."""
    import pandas as pd  # imported when used: slow to import

    plan = result.plan
    c = costs_or_default(costs if costs is not None else plan.costs)
    delay = result.hourly["delay_veh_h"].to_numpy()  # float64 already
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
