"""What the closure-window search takes in and says back: the inputs it refuses (every
problem, where it is and what to do, collected over day types and configurations), the
day types given as a mapping, the diagram the queue length follows, the tables given
as known, and the notes it adds (their words and plurals, once per day type).

The hand site of ``test_windows.py``: two lanes, free-flow speed 25 m/s, jam density
0.125 veh/m/ln, 2,000 veh/h/ln, no heavy vehicles and no capacity drop, so the open
road carries 4,000 veh/h; the closure of one lane is held at 1,500 veh/h by a capacity
override.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest
from test_windows import CLOSED, HAND_CONFIG, K_J, SINGLE_STATE, START, V_F, hand_site, hourly

from wzq.engine import windows as W
from wzq.engine.plan import Approach, Demand, Landmark, Options, PlanError, Thresholds
from wzq.engine.queue_length import shockwave_lengths

LIMIT = Thresholds(max_queue_length=100.0)


def problems(demand, thresholds=LIMIT, configurations=(HAND_CONFIG,), **kw):
    """The (where, message) pairs of the PlanError the search raises."""
    with pytest.raises(PlanError) as e:
        W.find_windows(hand_site(), demand, thresholds, list(configurations), **kw)
    return [(p.where, p.message) for p in e.value.problems]


# ---------------------------------------------------------------------------------------------
# Inputs refused: every problem, one rule at a time
# ---------------------------------------------------------------------------------------------

# the words of the plan's own checks (wzq.engine.plan.validate); the point here is that
# the search collects them for every day type and prefixes each with its day type's name
NEGATIVE = "demand must be a finite number of veh/h, 0 or more"
PART_HOUR = "demand must cover whole hours; add the missing intervals of the last hour"


def test_the_problems_of_every_day_type_are_collected_each_under_its_name() -> None:
    # two bad day types at once, given as a mapping: a Demand under its key, a DayType
    # under its own name (the key is not used); both problems are reported, in order
    weekday = hourly([1.0, -5.0])  # the second hour negative
    weekend = W.DayType("Sat", Demand(START, 900, np.ones(5)))  # 5 x 15 min = 1 h 15 min
    assert problems({"weekday": weekday, "key not used": weekend}) == [
        ("weekday: demand[1]", NEGATIVE),
        ("Sat: demand", PART_HOUR),
    ]
    # the same as a list, the good day type between them reports nothing
    good = W.DayType("Sun", hourly([1000.0] * 3))
    assert problems([W.DayType("Fri", weekday), good, weekend]) == [
        ("Fri: demand[1]", NEGATIVE),
        ("Sat: demand", PART_HOUR),
    ]


def test_limits_and_options_the_plan_refuses_are_refused_for_each_day_type() -> None:
    day = hourly([1000.0] * 3)  # Mon 2027-05-03, 00:00-03:00
    assert problems(day, Thresholds(max_queue_length=-5.0)) == [
        ("Mon 2027-05-03: thresholds.max_queue_length", "must be a positive number or blank")
    ]
    assert problems(day, options=Options(diagram="parabolic")) == [  # type: ignore[arg-type]
        (
            "Mon 2027-05-03: options.diagram",
            "'parabolic' is not one of triangular, greenshields, capped-greenshields; "
            "pick one of them",
        )
    ]
    # a landmark limit naming no landmark of the approach
    assert problems(day, Thresholds(queue_must_not_pass="Mill Lane")) == [
        (
            "Mon 2027-05-03: thresholds.queue_must_not_pass",
            "no landmark is named 'Mill Lane' (landmarks: none); name one of them",
        )
    ]


def test_more_intervals_than_the_search_takes_and_no_configuration() -> None:
    # 4,033 hours from Monday 3 May 2027 00:00: 168 days (24 weeks) and one hour, so the
    # last interval is on Monday 18 October; the search takes 6 x 7 x 24 x 4 = 4,032
    long = hourly([1000.0] * 4033)
    assert problems(long, configurations=()) == [
        (
            "Mon 2027-05-03 to Mon 2027-10-18: demand",
            "4033 demand intervals is more than the 4032 the window search takes; "
            "search a few weeks at a time",
        ),
        ("lanes closed", "no lane configuration to search; give one"),
    ]
    # exactly 4,032 intervals is taken: only the missing configuration is reported
    assert problems(hourly([1000.0] * 4032), configurations=()) == [
        ("lanes closed", "no lane configuration to search; give one")
    ]


def test_configurations_the_road_cannot_have_are_refused_each_where_it_is() -> None:
    day = hourly([1000.0] * 3)
    # on two lanes: 1 closed (or 0, the shoulder) is possible; 2, -1 and 1.5 are not
    configs = [
        W.Configuration(2),
        W.Configuration(-1),
        W.Configuration(1.5),  # type: ignore[arg-type]
        W.Configuration(1),
        W.Configuration(0),
    ]
    use = "use 1 to 1 (0 for a shoulder closure)"
    assert problems(day, configurations=configs) == [
        ("configurations[0]", f"2 lanes closed is not possible on a road with 2 lanes; {use}"),
        ("configurations[1]", f"-1 lanes closed is not possible on a road with 2 lanes; {use}"),
        ("configurations[2]", f"1.5 lanes closed is not possible on a road with 2 lanes; {use}"),
    ]
    # a barrier of neither kind, after a good configuration
    steel = [W.Configuration(1), W.Configuration(1, "steel")]  # type: ignore[arg-type]
    assert problems(day, configurations=steel) == [
        ("configurations[1]", "barrier 'steel' is not one of hard, soft")
    ]


def test_a_capacity_override_is_taken_from_100_to_3000_veh_h_ln() -> None:
    day = hourly([1000.0] * 3)
    overrides = [99.0, 100.0, 3000.0, 3001.0]
    configs = [W.Configuration(1, capacity_override_veh_h_ln=v) for v in overrides]
    message = "capacity override must be 100-3000 veh/h/ln or blank"
    assert problems(day, configurations=configs) == [
        ("configurations[0]", message),
        ("configurations[3]", message),
    ]
    # the two at the bounds are searched
    found = W.find_windows(hand_site(), day, LIMIT, configs[1:3])
    assert len(found.sets) == 2


def test_a_queue_length_function_of_ones_own_cannot_follow_ramps() -> None:
    ramp = Landmark("Alder Road on-ramp", 800.0, "entrance-ramp", ramp_share=0.2)
    with pytest.raises(ValueError) as e:
        W.find_windows(
            hand_site(),
            hourly([1000.0] * 3),
            LIMIT,
            [HAND_CONFIG],
            queue_length=shockwave_lengths,
            approach=Approach((ramp,)),
        )
    assert str(e.value) == "a queue-length function of your own cannot follow the ramps"


# ---------------------------------------------------------------------------------------------
# What is searched
# ---------------------------------------------------------------------------------------------


def test_day_types_given_as_a_mapping_are_searched_by_name() -> None:
    # 1,000 veh/h never queue behind the closure's 1,500 veh/h: every closure of each
    # day passes, 3 x 4 / 2 = 6 on three hours and 2 x 3 / 2 = 3 on two
    weekday = hourly([1000.0] * 3)
    sunday = W.DayType("Sun", hourly([1000.0] * 2, START + dt.timedelta(days=6)), fold=True)
    site = hand_site()
    found = W.find_windows(site, {"weekday": weekday, "ignored key": sunday}, LIMIT, [1])
    assert [(s.day_type.name, s.day_type.demand) for s in found.sets] == [
        ("weekday", weekday),
        ("Sun", sunday.demand),
    ]
    assert found.sets[1].day_type is sunday
    assert [int(s.allowed.sum()) for s in found.sets] == [6, 3]
    assert found.site is site
    assert found.thresholds is LIMIT


def test_the_queue_length_follows_the_diagram_chosen() -> None:
    # Greenshields' parabola q = v_f k (1 - k / k_j) (Greenshields 1935) on the hand site,
    # the single-state shockwave relation L = N / (n (k_Q - k_A)) (Lighthill and Whitham
    # 1955; Richards 1956): 2,000 veh/h arrive for an hour against the closure's 1,500,
    # so N = 500 veh when the closure ends at 01:00; k_A on the free branch at 1,000
    # veh/h/ln, k_Q on the congested branch at the discharge 750 veh/h/ln.
    def k(q_veh_h_ln: float, sign: float) -> float:
        q = q_veh_h_ln / 3600.0
        return K_J / 2.0 * (1.0 + sign * math.sqrt(1.0 - 4.0 * q / (V_F * K_J)))

    length = 500.0 / (2 * (k(CLOSED / 2, +1.0) - k(1000.0, -1.0)))
    assert length == pytest.approx(2410.9, abs=0.1)  # 500 / (2 x (0.116022 - 0.012327))
    greenshields = Options(diagram="greenshields", queue_length_method="shockwave")
    demand = hourly([2000.0, 1000.0, 1000.0])

    def one_hour_closure_allowed(limit_m: float) -> bool:
        limits = Thresholds(max_queue_length=limit_m)
        found = W.find_windows(hand_site(), demand, limits, [HAND_CONFIG], options=greenshields)
        return bool(found.sets[0].allowed[0, 1])

    assert one_hour_closure_allowed(length + 1.0)
    assert not one_hour_closure_allowed(length - 1.0)


def test_the_tables_given_as_known_are_used_when_there_is_one_for_each_set() -> None:
    # two configurations on one day: two tables are used as they are, even where the
    # search would allow every closure (1,000 veh/h never queue on either); a list of
    # another length is not used, and the search finds all 6 closures of three hours
    day = hourly([1000.0] * 3)
    configs = [HAND_CONFIG, W.Configuration(0)]
    none = np.zeros((3, 4), dtype=bool)
    one = none.copy()
    one[1, 2] = True
    used = W.find_windows(hand_site(), day, LIMIT, configs, known=[none, one])
    assert [s.allowed.tolist() for s in used.sets] == [none.tolist(), one.tolist()]
    searched = W.find_windows(hand_site(), day, LIMIT, configs, known=[none])
    assert [int(s.allowed.sum()) for s in searched.sets] == [6, 6]


# ---------------------------------------------------------------------------------------------
# Notes
# ---------------------------------------------------------------------------------------------


def test_the_note_when_no_limit_is_set() -> None:
    found = W.find_windows(hand_site(), hourly([1000.0] * 2), Thresholds(), [HAND_CONFIG])
    assert found.notes == ("no limits are set, so every closure passes; enter the agency's limits",)


def test_the_note_of_a_search_run_in_full_is_given_once_a_day_type() -> None:
    # 4,000 veh/h reach the approach's own capacity 2 x 2,000 veh/h (Newell's method, the
    # default): every candidate is run in full, for both configurations; one note a day
    demand = hourly([1000.0, 4000.0, 1000.0])
    configs = [HAND_CONFIG, W.Configuration(1, capacity_override_veh_h_ln=1800.0)]
    found = W.find_windows(hand_site(), demand, Thresholds(max_queue_length=1000.0), configs)
    assert found.notes == (
        "Mon 2027-05-03: demand or a closure's capacity exceeds the approach's own capacity, "
        "so every candidate closure was run in full (slower)",
    )


def test_the_note_of_the_hours_the_open_road_already_fails() -> None:
    # 4,500 veh/h for the hour from 10:00 on the open road's 4,000 (D/D/1, no drop): the
    # queue grows to 500 veh, 250 veh-h of delay over 4,500 vehicles, 200 s each; from
    # 11:00 it clears at 4,000 - 1,000 = 3,000 veh/h in 10 min, 500 x (1/6) / 2 = 41.67
    # veh-h over 1,000 vehicles, 150 s each. A limit of 180 s fails 10:00 alone, one of
    # 120 s both hours.
    demand = hourly([1000.0] * 10 + [4500.0] + [1000.0] * 13)
    tail = "every hour of the run must pass, so these hours rule out nearly every window"

    def notes(limit_s: float) -> tuple[str, ...]:
        limits = Thresholds(max_average_delay=limit_s)
        return W.find_windows(
            hand_site(), demand, limits, [HAND_CONFIG], options=SINGLE_STATE
        ).notes

    assert notes(180.0) == (
        "Mon 2027-05-03: with all lanes open the road already exceeds the limits in 1 hour "
        f"(first Mon 2027-05-03 10:00); {tail}",
    )
    assert notes(120.0) == (
        "Mon 2027-05-03: with all lanes open the road already exceeds the limits in 2 hours "
        f"(first Mon 2027-05-03 10:00); {tail}",
    )
