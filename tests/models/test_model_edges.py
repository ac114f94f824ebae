"""Edges of the models that mutation testing found unguarded (see docs/mutation.md).

Boundaries of the input checks (is zero allowed?), the words of the messages a
user reads when an argument is wrong, options passed through to where they
act, and the less travelled branches (data that does not start at midnight,
weekends only, several lane configurations). Every expected value is worked by
hand here from the rule the docstring cites.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest
from hand import hand_site

import wzq
from wzq import units
from wzq.engine import costs, queue_length
from wzq.engine import windows as W
from wzq.engine.plan import Costs, Demand, PlanError, Thresholds
from wzq.models import capacity, newell
from wzq.models import costs as model_costs
from wzq.models.flow import FundamentalDiagram, Greenshields, Triangular
from wzq.models.queueing import solve

START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)


# --- capacity: what a user is told ---------------------------------------------------------


def test_capacity_messages_name_the_argument() -> None:
    with pytest.raises(ValueError, match=r"^ffs_mph \(free-flow speed\) must be greater than zero"):
        capacity.multilane_highway_capacity(0.0)
    with pytest.raises(ValueError, match=r"^speed_limit_mph must be greater than zero"):
        capacity.default_free_flow_speed(-55.0)
    # HCM 7th ed. ch. 12: default FFS = speed limit + 5 mi/h
    assert capacity.default_free_flow_speed(55.0) == 60.0


# --- road-user costs ---------------------------------------------------------------------------


def test_person_value_from_wage_bounds_and_shares() -> None:
    # USDOT value of travel time guidance (2016 revision, from memory): personal travel at
    # 50 % of the wage, business travel at 100 %
    assert model_costs.person_value_from_wage(0.0) == 0.0  # zero is a wage, if an odd one
    assert model_costs.person_value_from_wage(0.5) == 0.25
    assert model_costs.person_value_from_wage(30.0, 0.2) == pytest.approx(
        30 * (0.8 * 0.5 + 0.2 * 1.0)
    )
    assert model_costs.person_value_from_wage(30.0, 1.0) == 30.0
    with pytest.raises(ValueError, match=r"^hourly_wage must be zero or positive$"):
        model_costs.person_value_from_wage(-1.0)
    with pytest.raises(ValueError, match=r"^business_fraction must be between 0 and 1$"):
        model_costs.person_value_from_wage(30.0, 1.5)


def test_escalate_accepts_any_positive_index() -> None:
    # value x index_to / index_from (common practice, no source)
    assert model_costs.escalate(100.0, 0.5, 0.25) == 50.0
    assert model_costs.escalate(100.0, 245.1, 300.0) == pytest.approx(100 * 300 / 245.1)
    for bad in ((0.0, 1.0), (1.0, 0.0), (-1.0, 1.0)):
        with pytest.raises(ValueError, match=r"^price indices must be positive$"):
            model_costs.escalate(100.0, *bad)


def test_hourly_and_total_cost_use_the_values_given() -> None:
    site = hand_site(heavy_vehicle_share=0.2)
    closure = wzq.Closure(START + dt.timedelta(hours=1), START + dt.timedelta(hours=2), 1)
    plan = wzq.Plan(
        site,
        Demand(START, 3600, np.array([1000.0, 2500.0, 1000.0])),
        (closure,),
        costs=Costs(20.0, 1.5, 40.0),
    )
    result = wzq.analyse(plan)
    mine = Costs(10.0, 2.0, 50.0, truck_share=0.5)
    # (1 - 0.5) x 10 x 2 + 0.5 x 50 = 35 per vehicle-hour (the given truck share wins)
    series = costs.hourly_cost(result, mine)
    delay = result.hourly["delay_veh_h"].to_numpy()
    assert delay[1] > 0
    assert series.tolist() == pytest.approx((delay * 35.0).tolist())
    assert series.index.equals(result.hourly.index) and series.name == "road_user_cost"
    assert costs.total_cost(result, mine) == pytest.approx(35.0 * result.summary.total_delay_veh_h)
    # without values given, the plan's own: 0.8 x 20 x 1.5 + 0.2 x 40 = 32 (the site's 20 %)
    assert costs.hourly_cost(result).tolist() == pytest.approx((delay * 32.0).tolist())
    assert costs.total_cost(result) == pytest.approx(32.0 * result.summary.total_delay_veh_h)
    # the per-hour table prices delay with the plan's own values too
    assert result.hourly["road_user_cost"].tolist() == pytest.approx((delay * 32.0).tolist())


# --- units -------------------------------------------------------------------------------------


def test_unit_labels() -> None:
    expected = {
        ("long", "us"): "mi",
        ("long", "metric"): "km",
        ("short", "us"): "ft",
        ("short", "metric"): "m",
        ("speed", "us"): "mi/h",
        ("speed", "metric"): "km/h",
        ("density", "us"): "veh/mi/ln",
        ("density", "metric"): "veh/km/ln",
    }
    for (kind, system), label in expected.items():
        assert units.unit_label(kind, system) == label


# --- fundamental diagrams ----------------------------------------------------------------------


def test_sending_flow_is_capacity_exactly_from_the_critical_density_on() -> None:
    # w (k_j - k_c), with w = c / (k_j - k_c), need not give c back in floating point;
    # the sending function (Daganzo 1994) must still say capacity at k_c, or a cell at
    # capacity would send one unit in the last place less than it may
    fd = Triangular(free_speed=25.0, capacity=0.5, jam_density=0.12)
    k_c = fd.critical_density
    assert fd.backward_wave_speed * (0.12 - k_c) < 0.5  # the rounding guarded against
    assert fd.demand(k_c) == 0.5
    assert fd.demand(np.array([k_c, 0.1])).tolist() == [0.5, 0.5]
    # and a cell at k_c receives capacity (supply, the receiving function)
    assert fd.supply(k_c) == 0.5
    assert fd.supply(np.array([0.0, k_c])).tolist() == [0.5, 0.5]


def test_capped_greenshields_messages_name_the_parameter() -> None:
    from wzq.models.flow import CappedGreenshields

    good = dict(free_speed=25.0, jam_density=0.125, speed_cap=20.0)
    for name in good:
        with pytest.raises(ValueError, match=rf"^{name} must be a finite number above zero"):
            CappedGreenshields(**{**good, name: 0.0})


def test_triangular_shock_speeds_on_each_branch_and_across_the_kink() -> None:
    # Triangular (Newell 1993): v_f between free states, -w between congested ones, the
    # chord (Q(k2) - Q(k1)) / (k2 - k1) across the kink; v_f 25, c 0.5, k_j 0.125: k_c 0.02,
    # w = 0.5 / 0.105
    fd = Triangular(free_speed=25.0, capacity=0.5, jam_density=0.125)
    w = 0.5 / 0.105
    assert fd.shock_speed(0.005, 0.015) == pytest.approx(25.0, rel=1e-12)
    assert fd.shock_speed(0.05, 0.1) == pytest.approx(-w, rel=1e-12)
    q1, q2 = 25 * 0.01, w * (0.125 - 0.08)
    assert fd.shock_speed(0.08, 0.01) == pytest.approx((q2 - q1) / 0.07, rel=1e-12)


def test_the_generic_shock_speed_is_the_chord() -> None:
    class Parabola(Greenshields):
        """Greenshields' diagram with the base class's generic shock speed."""

        _shock_speed = FundamentalDiagram._shock_speed

    fd = Parabola(free_speed=25.0, jam_density=0.125)
    # Greenshields: the chord between k1 and k2 is v_f (1 - (k1 + k2) / k_j)
    # (Rankine-Hugoniot, Lighthill & Whitham 1955)
    assert fd.shock_speed(0.02, 0.1) == pytest.approx(25 * (1 - 0.12 / 0.125), rel=1e-12)
    assert fd.shock_speed(0.1, 0.02) == pytest.approx(25 * (1 - 0.12 / 0.125), rel=1e-12)
    # equal states: the limit, the characteristic speed v_f (1 - 2k / k_j)
    assert fd.shock_speed(0.05, 0.05) == pytest.approx(25 * (1 - 0.1 / 0.125), rel=1e-12)
    both = fd.shock_speed(np.array([0.02, 0.05]), np.array([0.1, 0.05]))
    assert both == pytest.approx([25 * (1 - 0.12 / 0.125), 25 * (1 - 0.1 / 0.125)], rel=1e-12)


# --- Newell's counts after the data and outside it --------------------------------------------


def _one_queue():
    """Arrivals 0.6, 0.2 and 0.3 veh/s for 100 s each at a bottleneck of 0.5 veh/s.

    The queue reaches 10 veh at 100 s and clears at 133.3 s (D/D/1): knots at 0, 100,
    133.3, 200 and 300 s, arrivals 0, 60, 66.7, 80 and 110 veh.
    """
    run = solve(np.full(3, 100.0), np.array([0.6, 0.2, 0.3]), np.full(3, 0.5))
    return newell.curves(run)


WAVE = dict(lanes=1, free_speed=25.0, wave_speed=5.0, jam_density=0.125)


def test_newell_counts_beyond_the_data_follow_the_last_rate_or_hold() -> None:
    t, a, d = _one_queue()
    # Asked 500 m upstream at 300 s, the arrivals term reads A(300 + 500/25 = 320 s):
    # 110 + 0.3 x 20 = 116 veh at the last rate, 110 held; the departures term
    # D(300 - 500/5) + 0.125 x 500 = 80 + 62.5 is larger (Newell 1993).
    rate = newell.counts(t, a, d, distance=500, at=300, **WAVE)
    hold = newell.counts(t, a, d, distance=500, at=300, after_end="hold", **WAVE)
    assert (rate, hold) == pytest.approx((116.0, 110.0))
    assert isinstance(newell.counts(t, a, d, distance=[0, 500], at=[200, 200], **WAVE), np.ndarray)
    with pytest.raises(ValueError, match=r"^after_end must be 'rate' or 'hold', got 'keep'$"):
        newell.counts(t, a, d, distance=0, at=0, after_end="keep", **WAVE)


def test_newell_back_of_queue_refuses_times_outside_the_data() -> None:
    t, a, d = _one_queue()
    for at in (-1.0, 301.0):
        with pytest.raises(ValueError, match=r"within 0 to 300 s, the span of the data"):
            newell.back_of_queue(t, a, d, at=at, **WAVE)


def test_from_run_passes_the_after_end_rule_on() -> None:
    site = hand_site()
    # a queue still standing when the data ends: after the end, arrivals go on at the
    # last rate ("rate") or stop ("hold"), so the back of the queue differs at the end
    closure = wzq.Closure(START, START + dt.timedelta(hours=2), 1, capacity_override_veh_h_ln=1500)
    plan = wzq.Plan(site, Demand(START, 3600, np.array([1800.0, 1800.0])), (closure,))
    run = wzq.engine.evaluate.evaluate(plan)
    hold = queue_length.newell_of_run(run, after_end="hold")
    rate = queue_length.newell_of_run(run)
    assert hold.at_boundaries[-1] < rate.at_boundaries[-1]
    direct = newell.from_queue(run.queue, run.model.diagram, 2, after_end="hold")
    assert hold.at_boundaries.tolist() == direct.at_boundaries.tolist()


# --- closure windows: typical days, durations, several configurations --------------------------


def test_typical_days_of_data_that_starts_in_the_morning() -> None:
    # 06:00 Monday to 12:00 Wednesday: whole days are Tuesday only (Monday lacks its first
    # six hours, Wednesday its last twelve); each hour's flow is 100 + the hour of day
    start = dt.datetime(2027, 5, 3, 6)
    hours = np.arange(18 + 24 + 12)
    flows = 100.0 + (6 + hours) % 24
    (day,) = W.typical_days(Demand(start, 3600, flows))
    assert day.name == "weekday (average of 1 day)"
    assert day.demand.start == dt.datetime(2027, 5, 4)
    assert day.demand.flows_veh_h.tolist() == [100.0 + h for h in range(24)] * 2
    assert (day.first_start, day.stop_start, day.fold) == (0, 24, True)


def test_typical_days_of_a_weekend_alone_and_of_short_intervals() -> None:
    sat = dt.datetime(2027, 5, 8)
    flows = np.concatenate((np.full(24, 500.0), np.full(24, 700.0)))
    (day,) = W.typical_days(Demand(sat, 3600, flows))
    assert day.name == "weekend (average of 2 days)"
    assert day.demand.flows_veh_h.tolist() == [600.0] * 48
    # 15-second intervals (they divide the hour): 5,760 to a day
    (day,) = W.typical_days(Demand(sat, 15, np.full(2 * 5760, 400.0)))
    assert len(day.demand.flows_veh_h) == 2 * 5760 and day.stop_start == 5760
    with pytest.raises(PlanError) as err:
        W.typical_days(Demand(sat, 3600, np.full(12, 400.0)))
    (problem,) = err.value.problems
    assert problem.where == "demand"
    assert problem.message.startswith("the demand holds no whole day from 00:00 to 24:00")


def test_starts_for_a_duration_of_one_interval_and_of_too_many() -> None:
    ws = W.find_windows(
        hand_site(),
        Demand(START, 3600, np.full(4, 1000.0)),
        Thresholds(max_demand_capacity=0.9),
        [W.Configuration(1, capacity_override_veh_h_ln=1500.0)],
    ).sets[0]
    # 1,000 / 1,500 = 0.67 <= 0.9 every hour: every closure is allowed
    assert ws.starts_for(3600) == [(0, 1), (1, 2), (2, 3), (3, 4)]
    assert ws.starts_for(1.5 * 3600) == [(0, 2), (1, 3), (2, 4)]  # rounded up to 2 h
    assert ws.starts_for(0) == [] and ws.starts_for(5 * 3600) == []


def test_feasible_starts_lists_every_configuration() -> None:
    result = W.find_windows(
        hand_site(lanes=3),
        Demand(START, 3600, np.full(3, 900.0)),
        Thresholds(max_demand_capacity=0.9),
        [
            W.Configuration(1, capacity_override_veh_h_ln=1500.0),
            W.Configuration(2, capacity_override_veh_h_ln=1500.0),
        ],
    )
    table = W.feasible_starts(result, 2.0)
    # 900 / 3,000 and 900 / 1,500 are both within 0.9: two starts for each configuration
    assert (
        table["configuration"].tolist()
        == ["1 of 3 lanes closed, 1,500 veh/h/ln"] * 2 + ["2 of 3 lanes closed, 1,500 veh/h/ln"] * 2
    )
    assert table["hours"].tolist() == [2.0] * 4


def test_summary_lines_of_a_plan_without_a_queue() -> None:
    from wzq.present.tables import summary_lines

    plan = wzq.Plan(hand_site(unit_system="metric"), Demand(START, 3600, np.full(2, 1000.0)))
    lines = dict(summary_lines(wzq.analyse(plan)))
    # nothing queues, so there is no instant to give: a dash, not a clock time
    assert lines["Longest queue"] == "0.00 km, at -"
    assert lines["Most vehicles queued"] == "0 veh, at -"
    assert lines["Last queue clears"] == "-"
    assert lines["Hours over a limit"] == "0"


def test_flow_never_reports_more_than_capacity_and_speed_at_the_kink() -> None:
    # Triangular (Newell 1993): at k_c both branches give capacity in exact arithmetic;
    # here w (k_j - k_c) rounds one unit in the last place above c = 0.45, and the
    # flow must still not exceed capacity; at k_c the speed is v_f
    fd = Triangular(free_speed=25.0, capacity=0.45, jam_density=0.13)
    k_c = fd.critical_density
    assert fd.backward_wave_speed * (0.13 - k_c) > 0.45  # the rounding guarded against
    assert fd.flow(k_c) == 0.45
    low = Triangular(free_speed=25.0, capacity=0.5, jam_density=0.12)
    assert low.speed(low.critical_density) == 25.0
    with pytest.raises(
        ValueError, match=r"^density 0\.2 veh/m/ln is outside the range 0 to jam density = 0\.13"
    ):
        fd.flow(0.2)


def test_short_term_capacity_messages_and_bounds() -> None:
    cap = capacity.short_term_work_zone_capacity
    # HCM 2000 ch. 22 (from memory): (1,600 + I - R) f_HV N
    assert cap(n_open=2, heavy_vehicle_factor=1.0) == 3200.0
    assert cap(n_open=1, heavy_vehicle_factor=0.5, work_intensity_pc_h_ln=-160) == 720.0
    cases = [
        (dict(n_open=0), r"^n_open \(lanes open through the work zone\)"),
        (dict(heavy_vehicle_factor=float("nan")), r"^heavy_vehicle_factor must be a finite"),
        (dict(heavy_vehicle_factor=0.0), r"^heavy_vehicle_factor must be in \(0, 1\]"),
        (dict(work_intensity_pc_h_ln=float("nan")), r"^work_intensity_pc_h_ln must be a finite"),
        (dict(work_intensity_pc_h_ln=161), r"^work_intensity_pc_h_ln must be within \+-160"),
    ]
    for change, message in cases:
        with pytest.raises(ValueError, match=message):
            cap(**{"n_open": 2, "heavy_vehicle_factor": 1.0, **change})


def test_cost_basis_line_of_the_default_values() -> None:
    # the default values (TTI memo to TxDOT, March 2018, 2017 dollars): cars 28.69 per
    # vehicle-hour at 1.5 persons (28.69 / 1.5 = 19.13 per person-hour), trucks 36.28
    line = costs.cost_basis(costs.DEFAULT_COSTS, 0.05)
    assert line == (
        "USD of 2017: cars 28.69 per vehicle-hour (19.13 per person-hour x 1.5 persons), "
        "trucks 36.28 per vehicle-hour, 5% trucks "
        "(default values of 2017; update them to the year of the work)"
    )
    own = costs.cost_basis(Costs(20.0, 1.2, 40.0, truck_share=0.1, dollar_year=2026), 0.05)
    assert own == (
        "USD of 2026: cars 24.00 per vehicle-hour (20.00 per person-hour x 1.2 persons), "
        "trucks 40.00 per vehicle-hour, 10% trucks"
    )


def test_congested_density_at_capacity_is_the_critical_density() -> None:
    # k_j - c / w rounds below k_c for this diagram; the congested branch must still
    # start at k_c (Newell 1993: both branches meet at capacity)
    fd = Triangular(free_speed=25.0, capacity=0.5, jam_density=0.12)
    assert 0.12 - 0.5 / fd.backward_wave_speed < fd.critical_density
    assert fd.density_congested(0.5) == fd.critical_density


def test_diagram_messages() -> None:
    from wzq.models.flow import make_diagram

    with pytest.raises(
        ValueError, match=r"choose one of greenshields, triangular, capped-greenshields$"
    ):
        make_diagram("parabolic", free_speed=25.0, jam_density=0.125)
    with pytest.raises(ValueError, match=r"use 'triangular' to set capacity directly$"):
        make_diagram("greenshields", free_speed=25.0, jam_density=0.125, capacity=0.5)
    with pytest.raises(ValueError, match=r"^the triangular diagram needs a capacity \(veh/s/ln\)$"):
        make_diagram("triangular", free_speed=25.0, jam_density=0.125)
    with pytest.raises(ValueError, match=r"^the capped-greenshields diagram needs a speed_cap"):
        make_diagram("capped-greenshields", free_speed=25.0, jam_density=0.125)
    for name, value in (("free_speed", 0.0), ("jam_density", -1.0)):
        good = dict(free_speed=25.0, jam_density=0.125)
        with pytest.raises(ValueError, match=rf"^{name} must be a finite number above zero"):
            Greenshields(**{**good, name: value})


def test_work_zone_capacity_messages_and_the_ramp_that_leaves_no_capacity() -> None:
    with pytest.raises(ValueError, match=r"^qdr \(queue discharge rate\) must be greater"):
        capacity.work_zone_prebreakdown_capacity(0.0)
    with pytest.raises(ValueError, match=r"^lateral_ft must be a finite number"):
        capacity.work_zone_queue_discharge_rate(
            1.0, soft_barrier=True, rural=False, lateral_ft=float("inf"), night=False
        )
    cap = capacity.short_term_work_zone_capacity
    # (1,600 + I - R) f_HV N (HCM 2000 ch. 22, from memory): R = 1,599.5 leaves 0.5 pc/h/ln
    assert cap(n_open=2, heavy_vehicle_factor=1.0, ramp_adjustment_pc_h_ln=1599.5) == 1.0
    with pytest.raises(
        ValueError,
        match=r"^ramp_adjustment_pc_h_ln \(1700\) leaves no capacity; it must be below "
        r"1700 pc/h/ln$",
    ):
        cap(
            n_open=2,
            heavy_vehicle_factor=1.0,
            work_intensity_pc_h_ln=100,
            ramp_adjustment_pc_h_ln=1700,
        )
    with pytest.raises(ValueError, match=r"^ramp_adjustment_pc_h_ln must be a finite number"):
        cap(n_open=2, heavy_vehicle_factor=1.0, ramp_adjustment_pc_h_ln=float("nan"))


NAN = float("nan")
WZ_FFS = dict(
    speed_limit_ratio=1.1,
    wz_speed_limit_mph=55.0,
    lcsi=1.0,
    soft_barrier=True,
    night=False,
    ramp_density_per_mi=0.0,
)
SECTION = dict(
    method="hcm7",
    n_normal=2,
    n_open=1,
    ffs_mph=70.0,
    heavy_share=0.0,
    terrain="level",
    driver_population="commuter",
    soft_barrier=True,
    rural=False,
    lateral_ft=0.0,
    night=False,
)


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: capacity.basic_freeway_capacity(0), r"^ffs_mph \(free-flow speed\) must be"),
        (lambda: capacity.lane_closure_severity_index(2, 3), r"^n_open \(3\) cannot exceed"),
        (
            lambda: capacity.work_zone_queue_discharge_rate(
                0, soft_barrier=True, rural=False, lateral_ft=0, night=False
            ),
            r"^lcsi \(lane closure severity index\) must be greater than zero",
        ),
        (
            lambda: capacity.driver_population_factor("tourists"),
            r"; use one of commuter, familiar, balanced, unfamiliar$",
        ),
        (
            lambda: capacity.pce_trucks(" Mountainous "),
            r"^mountainous terrain has no general passenger-car equivalent in the HCM: "
            r"compute a specific-grade PCE and enter it, or enter a capacity override$",
        ),
        (
            lambda: capacity.pce_trucks("hilly"),
            r"^unknown terrain 'hilly'; use one of level, rolling \(or a specific-grade PCE "
            r"/ capacity override for mountainous terrain\)$",
        ),
        (lambda: capacity.heavy_vehicle_factor(NAN, 2), r"^share \(heavy-vehicle share\) must"),
        (lambda: capacity.heavy_vehicle_factor(10, 2), r"; enter 10 % as 0\.10$"),
        (lambda: capacity.heavy_vehicle_factor(0.1, NAN), r"^pce \(passenger-car equivalent\)"),
        (lambda: capacity.heavy_vehicle_factor(0.1, 0.9), r"must be at least 1\.0, got 0\.9$"),
        (
            lambda: capacity.work_zone_prebreakdown_capacity(1800, 25),
            r"^alpha_pct \(capacity drop\) must be a percentage in \[0, 20\)",
        ),
        (
            lambda: capacity.work_zone_free_flow_speed(**{**WZ_FFS, "speed_limit_ratio": 0}),
            r"^speed_limit_ratio must be greater than zero",
        ),
        (
            lambda: capacity.work_zone_free_flow_speed(**{**WZ_FFS, "wz_speed_limit_mph": 0}),
            r"^wz_speed_limit_mph \(work-zone speed limit\) must be greater than zero",
        ),
        (
            lambda: capacity.work_zone_free_flow_speed(**{**WZ_FFS, "ramp_density_per_mi": NAN}),
            r"^ramp_density_per_mi must be a finite number",
        ),
        (
            lambda: capacity.work_zone_free_flow_speed(**{**WZ_FFS, "ffs_cap_mph": 0}),
            r"^ffs_cap_mph must be greater than zero",
        ),
        (
            # 9.95 + 33.49 x 1.1 + 0.53 x 55 - 5.60 - 3.84 = 66.50; - 8.70 x 9 gives -11.8
            lambda: capacity.work_zone_free_flow_speed(**{**WZ_FFS, "ramp_density_per_mi": 9}),
            r"gives -11\.8 mi/h for these inputs; "
            r"check the ramp density and work-zone speed limit$",
        ),
        (
            lambda: capacity.section_capacity(**{**SECTION, "method": "hcm1985"}),
            r"^unknown capacity method 'hcm1985'; use one of hcm7, hcm2000, open$",
        ),
        (
            lambda: capacity.section_capacity(**SECTION, override_veh_h_ln=0),
            r"^override_veh_h_ln \(capacity override\) must be greater than zero",
        ),
        (
            lambda: capacity.section_capacity(**SECTION, base_capacity_pc_h_ln=0),
            r"^base_capacity_pc_h_ln must be greater than zero",
        ),
    ],
)
def test_capacity_messages(call, message) -> None:
    with pytest.raises(ValueError, match=message):
        call()


def test_capacity_input_bounds_by_hand() -> None:
    # f_HV = 1 / (1 + P_T (E_T - 1)) (HCM 7th ed. ch. 12): E_T = 1 is allowed (f_HV = 1)
    assert capacity.heavy_vehicle_factor(0.3, 1.0) == 1.0
    assert capacity.heavy_vehicle_factor(0.25, 1.5) == pytest.approx(1 / 1.125)
    # the work-zone FFS equation at a small positive result is a speed, not an error:
    # 66.50 - 8.70 TRD = 0.5 at TRD = 7.586
    trd = (9.95 + 33.49 * 1.1 + 0.53 * 55 - 5.60 - 3.84 - 0.5) / 8.70
    value = capacity.work_zone_free_flow_speed(**{**WZ_FFS, "ramp_density_per_mi": trd})
    assert value == pytest.approx(0.5, rel=1e-9)


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: capacity.basic_freeway_capacity("fast"), r"^ffs_mph .* must be a number, got"),
        (lambda: capacity.lane_closure_severity_index(True, 1), r"^n_normal \(lanes in normal "),
        (lambda: capacity.lane_closure_severity_index("two", 1), r"must be a whole number of"),
        (lambda: capacity.lane_closure_severity_index(2, 0), r"^n_open \(lanes open through"),
        (
            lambda: capacity.section_capacity(**{**SECTION, "method": "open"}),
            r"below n_normal \(2\); choose a work-zone method \(hcm7, hcm2000\)$",
        ),
        (
            lambda: capacity.section_capacity(
                **{**SECTION, "method": "open", "n_open": 2}, alpha_open_pct=20
            ),
            r"^alpha_open_pct \(capacity drop outside work zones\) must be a percentage",
        ),
        (
            lambda: capacity.section_capacity(**SECTION, base_capacity_pc_h_ln=-1),
            r"^base_capacity_pc_h_ln must be greater than zero",
        ),
        (lambda: Triangular(free_speed="fast", capacity=0.5, jam_density=0.125), r"^free_speed "),
        (lambda: Triangular(free_speed=25, capacity=0, jam_density=0.125), r"^capacity must be a"),
        (lambda: Triangular(free_speed=25, capacity=0.5, jam_density=0), r"^jam_density must be"),
        (
            lambda: Triangular(free_speed=25, capacity=4, jam_density=0.125),
            r"^capacity 4 veh/s/ln must be below free_speed x jam_density = 3\.125 veh/s/ln, "
            r"otherwise the critical density would not lie below the jam density$",
        ),
        (
            lambda: Triangular(free_speed=25, capacity=0.5, jam_density=0.125).density_free(0.6),
            r"^flow 0\.6 veh/s/ln is outside the range 0 to capacity = 0\.5 veh/s/ln$",
        ),
    ],
)
def test_model_messages(call, message) -> None:
    with pytest.raises(ValueError, match=message):
        call()


def test_densities_within_rounding_of_a_bound_are_taken_as_the_bound() -> None:
    fd = Triangular(free_speed=25.0, capacity=0.5, jam_density=0.125)
    tol = 1e-9 * 0.125  # ROUNDING_TOLERANCE (1e-9) of the bound k_j
    assert fd.flow(-tol) == 0.0  # a rounding below zero is zero
    assert fd.flow(0.125 + tol) == 0.0  # and one above k_j is k_j
    with pytest.raises(ValueError, match="outside the range"):
        fd.flow(0.125 + 3 * tol)


def test_section_capacity_passes_every_adjustment_on() -> None:
    common = {**SECTION, "n_normal": 3, "n_open": 2}
    # HCM 2000 ch. 22 (from memory): (1,600 + I - R) f_HV N = (1,600 + 100 - 50) x 2
    pair = capacity.section_capacity(
        **{**common, "method": "hcm2000"}, work_intensity_pc_h_ln=100, ramp_adjustment_pc_h_ln=50
    )
    assert (pair.prebreakdown_veh_h, pair.discharge_veh_h) == (3300.0, 3300.0)
    # HCM 6th/7th ed. ch. 10 QDR, rural and by night: LCSI = 1 / ((2/3) x 2) = 0.75;
    # 2,093 - 154 x 0.75 - 194 - 179 - 59 = 1,545.5 pc/h/ln, x 2 lanes (f_HV = f_p = 1)
    pair = capacity.section_capacity(**{**common, "rural": True, "night": True})
    assert pair.discharge_veh_h == pytest.approx(2 * 1545.5)


def test_a_work_zone_free_flow_speed_of_exactly_zero_is_refused() -> None:
    # 9.95 + 33.49 x 1.0 + 0.53 x 20 - 5.60 x 0.25 - 3.84 = 48.80, cancelled by the ramp
    # term 8.70 TRD at TRD = 48.80 / 8.70: no speed at all, which the equation's data
    # cannot support (HCM 6th/7th ed. ch. 10)
    trd = (9.95 + 33.49 * 1.0 + 0.53 * 20 - 5.60 * 0.25 - 3.84) / 8.70
    args = {**WZ_FFS, "speed_limit_ratio": 1.0, "wz_speed_limit_mph": 20.0, "lcsi": 0.25}
    with pytest.raises(ValueError, match=r"gives -?0\.0 mi/h for these inputs"):
        capacity.work_zone_free_flow_speed(**{**args, "ramp_density_per_mi": trd})


def test_greenshields_speed_within_rounding_of_the_bounds() -> None:
    # v = v_f (1 - k/k_j) (Greenshields 1935); a density a rounding below 0 or above
    # k_j is taken as 0 or k_j, so the speed is exactly v_f or 0
    fd = Greenshields(free_speed=25.0, jam_density=0.125)
    tol = 1e-9 * 0.125
    assert fd.speed(-tol) == 25.0
    assert fd.speed(0.125 + tol) == 0.0
