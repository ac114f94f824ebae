"""Hourly demand from the annual average daily traffic (AADT).

``q_h = AADT x (1 + g)^(y - y_0) x D x K_h``: the design-hour relation
DDHV = AADT x K x D of the Highway Capacity Manual (from memory; chapter not
checked) applied to every hour, with ``K_h`` the hour's share of the AADT (a
weekday or a weekend profile), ``D`` the directional share and compound growth
``g`` per year from the count year ``y_0`` to the year ``y`` of the work.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence

__all__ = ["grown_directional_volume", "hourly_from_aadt"]


def grown_directional_volume(
    aadt: float, count_year: int, year: int, growth_percent: float, direction_percent: float
) -> float:
    """Daily volume in one direction in ``year`` (veh/day): ``AADT (1 + g)^(y - y0) D``."""
    growth = (1.0 + growth_percent / 100.0) ** (year - count_year)
    return aadt * growth * direction_percent / 100.0


def hourly_from_aadt(
    aadt: float,
    count_year: int,
    growth_percent: float,
    direction_percent: float,
    first_day: dt.date,
    days: int,
    weekday_percent: Sequence[float],
    weekend_percent: Sequence[float],
) -> list[float]:
    """Hourly flows (veh/h) for ``days`` days from ``first_day``: each hour's share of the
    AADT (percent; the weekend profile on Saturdays and Sundays) times the day's grown,
    directional volume (:func:`grown_directional_volume`, to the year of the first day)."""
    daily = grown_directional_volume(
        aadt, count_year, first_day.year, growth_percent, direction_percent
    )
    flows: list[float] = []
    for k in range(days):
        day = first_day + dt.timedelta(days=k)
        shares = weekend_percent if day.weekday() >= 5 else weekday_percent
        flows.extend(daily * s / 100.0 for s in shares)
    return flows
