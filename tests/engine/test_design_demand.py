"""Tests for wzq.engine.design_demand: day types, windows, growth, the statistic and the scenarios.

Histories are built by hand so every expected value can be worked out on
paper. Dates: 4 May 2026 is a Monday (calendar fact).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from wzq.engine import design_demand as D
from wzq.engine.plan import PlanError

MON = dt.date(2026, 5, 4)


def history(first: dt.date, days: list[float], per_day: int = 24, **kw) -> D.CountHistory:
    """A history whose day ``d`` has the flow ``days[d]`` in every interval (NaN: no count)."""
    flows = np.repeat(np.asarray(days, dtype=float)[:, None], per_day, axis=1)
    return D.CountHistory(first, 86400 // per_day, flows, **kw)


def test_day_types_by_name_mon_thu_and_holidays() -> None:
    week = [MON + dt.timedelta(days=k) for k in range(7)]
    assert D.day_types(week, "by-name").tolist() == [0, 1, 2, 3, 4, 5, 6]
    assert D.day_types(week, "mon-thu").tolist() == [0, 0, 0, 0, 4, 5, 6]
    hol = D.day_types(week, "mon-thu", [week[2]])
    assert hol.tolist() == [0, 0, D.HOLIDAY, 0, 4, 5, 6]
    assert D.day_type_name(0, "mon-thu") == "Monday-Thursday"
    assert D.day_type_name(0, "by-name") == "Monday"
    assert D.day_type_name(D.HOLIDAY, "by-name") == "holiday"


def test_days_from_same_date_crosses_the_new_year_and_leap_day() -> None:
    # 30 Dec 2025 is 4 days before 3 Jan 2026, the same date as a 3 Jan target
    got = D.days_from_same_date([dt.date(2025, 12, 30), dt.date(2026, 1, 10)], dt.date(2027, 1, 3))
    assert got.tolist() == [4, 7]
    # 29 Feb taken as 28 Feb in 2026: 1 March 2026 is one day after it
    assert D.days_from_same_date([dt.date(2026, 3, 1)], dt.date(2028, 2, 29)).tolist() == [1]


def test_growth_is_compound_per_year_of_365_25_days() -> None:
    g = D.growth_factor([dt.date(2025, 1, 1)], dt.date(2025, 1, 1), 2.0)
    assert g.tolist() == [1.0]
    # 2 years of 365.25 days (1 Jan 2025 to 1 Jan 2027 is 730 days: 730/365.25 years)
    g = D.growth_factor([dt.date(2025, 1, 1)], dt.date(2027, 1, 1), 2.0)
    assert g[0] == pytest.approx(1.02 ** (730 / 365.25), rel=1e-12)


def four_tuesdays() -> D.CountHistory:
    # 4 weeks from Monday 4 May 2026; the Tuesdays carry 100, 200, 300, 400 veh/h
    days = []
    for week in range(4):
        for k in range(7):
            days.append(100.0 * (week + 1) if k == 1 else 50.0)
    return history(MON, days)


def test_design_demand_mean_and_percentile_by_hand() -> None:
    h = four_tuesdays()
    tue = dt.datetime(2026, 6, 2)  # a later Tuesday
    mean = D.design_demand(h, tue, 24, D.DemandRule())
    assert mean.demand.flows_veh_h.tolist() == [250.0] * 24  # (100+200+300+400)/4
    assert mean.days[0].day_type == "Tuesday" and len(mean.days[0].matched) == 4
    p85 = D.design_demand(h, tue, 24, D.DemandRule(percentile=85))
    # linear (Hyndman-Fan 7): position 0.85 x 3 = 2.55 -> 300 + 0.55 x 100
    assert p85.demand.flows_veh_h[0] == pytest.approx(355.0, rel=1e-12)


def test_window_and_months_restrict_the_days() -> None:
    h = four_tuesdays()
    rule = D.DemandRule(window_weeks=1)
    got = D.design_demand(h, dt.datetime(2027, 5, 18), 24, rule)  # a Tuesday a year later
    # its same date in 2026 is Mon 18 May: the Tuesdays 12 May (6 days before) and 19 May
    # (1 day after) are within 7 days; 5 May (13) and 26 May (8) are not
    assert got.days[0].matched == (dt.date(2026, 5, 12), dt.date(2026, 5, 19))
    assert got.demand.flows_veh_h[0] == pytest.approx(250.0)  # (200 + 300) / 2
    # same months: a plan in May uses the May Tuesdays only (5, 12, 19, 26 May)
    rule = D.DemandRule(same_months=True)
    got = D.design_demand(h, dt.datetime(2027, 5, 4), 24, rule)
    assert len(got.days[0].matched) == 4
    with pytest.raises(PlanError, match="no Tuesday for Tue 2027-06-01"):
        D.design_demand(h, dt.datetime(2027, 6, 1), 24, rule)  # June: no June Tuesday


def test_the_rule_in_words_counts_weeks_and_holidays_in_the_singular_and_plural() -> None:
    # "within 1 weeks" and "1 listed holidays" had been printed
    assert D.DemandRule(window_weeks=1).describe() == (
        "days of the same type (each weekday on its own), within 1 week of the same date, "
        "grown 0 %/year to the work dates, mean per interval"
    )
    two = (dt.date(2026, 7, 4), dt.date(2026, 9, 7))
    assert D.DemandRule(
        day_types="mon-thu",
        window_weeks=2.5,
        same_months=True,
        holidays=two[:1],
        growth_percent_per_year=1.5,
        percentile=85,
    ).describe() == (
        "days of the same type (Monday-Thursday together, Friday, Saturday, Sunday, 1 listed "
        "holiday apart), within 2.5 weeks of the same date, in the same months, grown "
        "1.5 %/year to the work dates, 85th percentile per interval"
    )
    assert "2 listed holidays apart), within 2 weeks" in (
        D.DemandRule(holidays=two, window_weeks=2).describe()
    )


def test_growth_applied_from_each_day_to_the_plan_day() -> None:
    h = history(MON, [1000.0] * 7)  # one week
    plan_day = dt.datetime(2027, 5, 4)  # a Tuesday, 364 days after Tue 5 May 2026
    got = D.design_demand(h, plan_day, 24, D.DemandRule(growth_percent_per_year=3.0))
    assert got.demand.flows_veh_h[0] == pytest.approx(1000.0 * 1.03 ** (364 / 365.25))


def test_plan_starting_in_the_evening_takes_each_day_from_its_own_type() -> None:
    # Mondays 100 veh/h, Tuesdays 200 veh/h; a plan from Monday 18:00 for 12 hours
    days = [100.0, 200.0, 50, 50, 50, 50, 50] * 2
    h = history(MON, days)
    got = D.design_demand(h, dt.datetime(2027, 5, 3, 18), 12, D.DemandRule())
    assert got.demand.flows_veh_h.tolist() == [100.0] * 6 + [200.0] * 6
    assert got.demand.start == dt.datetime(2027, 5, 3, 18)


def test_incomplete_and_excluded_days_are_not_used() -> None:
    days = [100.0, 200.0, 50, 50, 50, 50, 50, 100.0, 400.0, 50, 50, 50, 50, 50]
    h = history(MON, days)
    flows = h.flows_veh_h.copy()
    flows[1, 5] = np.nan  # the first Tuesday has a gap
    gap = D.CountHistory(MON, 3600, flows)
    got = D.design_demand(gap, dt.datetime(2027, 5, 4), 24, D.DemandRule())
    assert got.demand.flows_veh_h[0] == 400.0
    out = D.CountHistory(MON, 3600, h.flows_veh_h, ((dt.date(2026, 5, 12), "lane out"),))
    got = D.design_demand(out, dt.datetime(2027, 5, 4), 24, D.DemandRule())
    assert got.demand.flows_veh_h[0] == 200.0


def test_rule_problems_are_located() -> None:
    rule = D.DemandRule(day_types="weekdays", window_weeks=-1, growth_percent_per_year=40)
    wheres = [p.where for p in D.rule_problems(rule)]
    assert wheres == [
        "history.day_types",
        "history.window_weeks",
        "history.growth_percent_per_year",
    ]
    with pytest.raises(PlanError, match="between two 60-minute count intervals"):
        D.design_demand(four_tuesdays(), dt.datetime(2027, 5, 4, 7, 30), 4, D.DemandRule())


def test_scenarios_match_day_types_one_for_one() -> None:
    # three weeks; plan Tue+Wed. By name: the Tue-Wed pairs of each week (3).
    days = list(range(1, 22))  # day d has flow d
    h = history(MON, [float(x) for x in days])
    s = D.historical_scenarios(h, dt.datetime(2027, 5, 4), 48, D.DemandRule())
    assert [x.date() for x in s.starts] == [MON + dt.timedelta(days=1 + 7 * w) for w in range(3)]
    assert s.flows_veh_h[0].tolist() == [2.0] * 24 + [3.0] * 24
    # Monday-Thursday together: Mon-Tue, Tue-Wed, Wed-Thu of each week (9)
    s = D.historical_scenarios(h, dt.datetime(2027, 5, 4), 48, D.DemandRule(day_types="mon-thu"))
    assert len(s.starts) == 9
    assert s.flows_veh_h[2].tolist() == [3.0] * 24 + [4.0] * 24  # Wed-Thu of week 1


def test_scenarios_need_only_the_intervals_the_plan_uses() -> None:
    days = [float(x) for x in range(1, 15)]
    h = history(MON, days)
    flows = h.flows_veh_h.copy()
    flows[0, 3] = np.nan  # Monday 03:00 of week 1 missing: a plan from 18:00 does not need it
    flows[7, 20] = np.nan  # Monday 20:00 of week 2 missing: needed
    h = D.CountHistory(MON, 3600, flows)
    s = D.historical_scenarios(h, dt.datetime(2027, 5, 3, 18), 12, D.DemandRule())
    assert [x for x in s.starts] == [dt.datetime(2026, 5, 4, 18)]
    assert s.flows_veh_h[0].tolist() == [1.0] * 6 + [2.0] * 6


def test_scenarios_grow_and_fail_clearly() -> None:
    h = history(MON, [1000.0] * 7)
    s = D.historical_scenarios(
        h, dt.datetime(2027, 5, 4), 24, D.DemandRule(growth_percent_per_year=2.0)
    )
    assert s.growth[0] == pytest.approx(1.02 ** (364 / 365.25))
    assert s.flows_veh_h[0, 0] == pytest.approx(1000.0 * s.growth[0])
    with pytest.raises(PlanError, match="no period as long as the plan's"):
        D.historical_scenarios(h, dt.datetime(2027, 5, 4), 24 * 9, D.DemandRule())
    with pytest.raises(PlanError, match="no period of matching days"):
        # the history's only Tuesday is a holiday: nothing stands for a plain Tuesday
        rule = D.DemandRule(holidays=[dt.date(2026, 5, 5)])
        D.historical_scenarios(h, dt.datetime(2027, 5, 4), 24, rule)
