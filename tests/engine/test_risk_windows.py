"""Tests for wzq.engine.risk_windows: closure windows allowed at a chosen risk.

A closure ``[s, e)`` is allowed at risk ``p`` when the share of equally likely
scenarios in which some hour of its run breaks a limit is at most ``p``. Checked

1. by hand: five counted Wednesdays, three of them with a demand at 10:00 that one
   open lane cannot carry (demand/capacity limit 1.0): every closure over 10:00
   fails in 3 weeks of 5, every other in none;
2. against the plain count: for every candidate, the number of scenarios whose own
   deterministic search (:func:`wzq.engine.windows.plan_windows`, on that week's
   demand) does not allow it, on hand-built weeks with queue and delay limits;
3. with capacity draws: a candidate is allowed exactly when
   :func:`wzq.engine.risk.assess` of the plan with that one closure gives a share
   of scenarios over a limit at most ``p``.

The hand site (as in tests/engine/test_risk.py): two lanes, free-flow speed 25 m/s,
jam density 0.125 veh/m/ln, base capacity 2,000 pc/h/ln, no heavy vehicles, no
capacity drop; one day planned, Wednesday 2027-05-05, from counts of the five
weeks from Monday 2026-05-04.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import io
import json
import math
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

import numpy as np
import pytest
from hand import hand_site

import wzq
from wzq.cli import main
from wzq.engine import risk as R
from wzq.engine import windows as W
from wzq.engine.design_demand import CountHistory, DemandHistory, DemandRule
from wzq.engine.plan import Closure, Demand, Options, Plan, PlanError, RiskOptions, Thresholds
from wzq.engine.risk_windows import closure_windows, risk_windows, window_scenarios
from wzq.io.jsonplan import load_plan, plan_to_dict
from wzq.present.risk import risk_hour_table, risk_summary_lines

V_F = 25.0
WEDNESDAY = dt.datetime(2027, 5, 5)
FIRST_COUNTED = dt.date(2026, 5, 4)  # a Monday


def wednesday_plan(wednesdays: np.ndarray, thresholds: Thresholds, **kw) -> Plan:
    """A one-day plan (Wednesday) designed from five counted weeks whose Wednesdays are
    ``wednesdays`` (5 x 24 veh/h) and every other day 500 veh/h."""
    flows = np.full((35, 24), 500.0)
    flows[2::7] = wednesdays
    counts = CountHistory(FIRST_COUNTED, 3600, flows)
    return Plan(
        hand_site(),
        Demand(WEDNESDAY, 3600, wednesdays.mean(axis=0)),
        (),
        thresholds,
        options=Options(capacity_drop=False, queue_length_method="shockwave"),
        history=DemandHistory(counts, DemandRule()),
        **kw,
    )


def one_lane_capacity(plan: Plan) -> float:
    """The model's capacity with one of two lanes closed (the engine's own value)."""
    closure = Closure(WEDNESDAY, WEDNESDAY + dt.timedelta(hours=1), 1)
    h = wzq.analyse(dataclasses.replace(plan, closures=(closure,))).hourly
    return float(h["capacity_veh_h"].iloc[0])


UPPER = np.triu(np.ones((24, 25), dtype=bool), 1)


def test_hand_count_of_weeks_a_closure_over_ten_breaks_the_demand_capacity_limit() -> None:
    wednesdays = np.full((5, 24), 500.0)
    wednesdays[[1, 3, 4], 10] = 3000.0  # weeks 2, 4 and 5
    plan = wednesday_plan(wednesdays, Thresholds(max_demand_capacity=1.0))
    # the premise: one open lane carries far more than 500 and far less than 3,000 veh/h
    # (a freeway lane carries at most about 2,400 pc/h: HCM 7th ed., ch. 12; from memory)
    assert 500 < one_lane_capacity(plan) < 3000
    s, e = np.indices((24, 25))
    over_ten = UPPER & (s <= 10) & (e >= 11)
    for level, allowed in ((0.0, UPPER & ~over_ten), (0.4, UPPER & ~over_ten), (0.6, UPPER)):
        found = risk_windows(plan, level, [1])
        assert found.scenarios == 5
        (ws,) = found.windows.sets
        np.testing.assert_array_equal(ws.allowed, allowed, err_msg=f"level {level}")
        assert f"at most {100 * level:g} %" in found.windows.rule
    # the counts kept per candidate: 3 failing weeks over ten o'clock, none elsewhere
    fails = risk_windows(plan, 0.99, [1]).failing[0]
    assert (fails[over_ten] == 3).all() and (fails[UPPER & ~over_ten] == 0).all()


def plain_failing_counts(plan: Plan, wednesdays: np.ndarray) -> np.ndarray:
    """Per candidate, the weeks whose own deterministic search does not allow it."""
    count = np.zeros((24, 25), dtype=int)
    for week in wednesdays:
        one = dataclasses.replace(plan, demand=Demand(WEDNESDAY, 3600, week), history=None)
        (ws,) = W.plan_windows(one, [1], exhaustive=True).sets
        count += UPPER & ~ws.allowed
    return count


@pytest.mark.parametrize("exhaustive", [False, True])
def test_allowed_at_risk_equals_the_plain_count_of_failing_weeks(exhaustive: bool) -> None:
    rng = np.random.default_rng(19)
    weeks = np.array([0.85, 1.0, 1.08, 1.15, 1.25])  # peak demand over the one-lane capacity
    base = np.array([300, 250, 200, 200, 300, 600, 1200, 1800, 1900, 1600, 1400, 1350])
    base = np.concatenate([base, base[::-1] * 1.1])  # a two-peak day, veh/h
    plan0 = wednesday_plan(np.tile(base, (5, 1)), Thresholds())
    c = one_lane_capacity(plan0)
    # each week's day scaled around the one-lane capacity, so weeks differ in which
    # closures pass; queue and delay limits as an agency would set them
    wednesdays = base[None, :] / base.max() * c * weeks[:, None]
    wednesdays *= rng.uniform(0.95, 1.05, size=(5, 24))
    limits = Thresholds(max_queue_length=1500.0, max_average_delay=10 * 60.0)
    plan = wednesday_plan(wednesdays, limits)
    plain = plain_failing_counts(plan, wednesdays)
    assert len(np.unique(plain[UPPER])) >= 3  # the weeks do disagree
    for level in (0.0, 0.2, 0.4, 0.6, 0.8):
        (ws,) = risk_windows(plan, level, [1], exhaustive=exhaustive).windows.sets
        expected = UPPER & (plain <= math.floor(level * 5 + 1e-9))
        np.testing.assert_array_equal(ws.allowed, expected, err_msg=f"level {level}")


def test_a_week_whose_own_demand_is_held_beyond_the_approach_fails_every_candidate(
    tmp_path: Path,
) -> None:
    # Weeks 2 and 4 bring 4,500 veh/h at 10:00 to a road of 2 x 2,000 veh/h: 500 vehicles
    # wait beyond the approach in those weeks whatever the closure (as in
    # tests/engine/test_windows.py), so their hours 10:00 and 11:00 fail a length limit
    # however long. The design demand (the mean, 2,400 veh/h at 10:00) holds none: the
    # scenarios must be judged on their own demand. By hand: every candidate fails in
    # exactly those 2 weeks of 5.
    wednesdays = np.full((5, 24), 1000.0)
    wednesdays[[1, 3], 10] = 4500.0
    plan = wednesday_plan(wednesdays, Thresholds(max_queue_length=30_000.0))
    found = risk_windows(plan, 0.99, [1])
    assert (found.failing[0][UPPER] == 2).all()
    np.testing.assert_array_equal(found.failing[0], plain_failing_counts(plan, wednesdays))
    for level, allowed in ((0.2, np.zeros_like(UPPER)), (0.4, UPPER)):
        (ws,) = risk_windows(plan, level, [1]).windows.sets
        np.testing.assert_array_equal(ws.allowed, allowed, err_msg=f"level {level}")
    # the risk of the plan itself: those 2 weeks fail 10:00 and 11:00, and their longest
    # queue there is not known (500 vehicles wait beyond the approach)
    risk = R.assess(plan)
    assert risk.hourly["p_queue_length"].tolist() == [0.0] * 10 + [0.4, 0.4] + [0.0] * 12
    assert [n for n in risk.notes if "waits beyond the approach" in n] == [
        "In 2 of 5 scenarios the demand is more than the road itself carries in some hour "
        "(first Wed 2027-05-05 10:00): the traffic it cannot admit waits beyond the "
        "approach, those hours count as over a queue-length limit, and their longest "
        "queue is not known; a percentile of the longest queue that those scenarios could "
        "change is given as unknown."
    ]
    # By hand (Hyndman & Fan definition 7 over 5 scenarios: position h = 4p): the 3 weeks
    # that hold nothing queue 0 m at 10:00. The median (h = 2) is the 3rd smallest, 0 m,
    # wherever the 2 held weeks' unknown lengths lie (each is at least what is computed,
    # 0 m); the 85th (h = 3.4) and 95th (h = 3.8) take the 4th and 5th: not known.
    h = risk.hourly
    for p, known in ((50, True), (85, False), (95, False)):
        col = h[f"queue_length_p{p}_m"].to_numpy()
        assert (col[[10, 11]] == 0.0).all() if known else np.isnan(col[[10, 11]]).all(), p
        assert (np.delete(col, [10, 11]) == 0.0).all(), p
    longest = dict(risk_summary_lines(risk, "metric"))["Longest queue of the plan"]
    assert longest == (
        "50th 0.00 km, 85th unknown, 95th unknown (traffic waits beyond the approach in "
        "some scenarios: see the method)"
    )
    table = risk_hour_table(risk, "metric", np.arange(24) == 10)
    assert table.iloc[0, -3:].tolist() == ["0.00", "unknown", "unknown"]
    code, out, _ = run_cli("risk", str(hand_json(tmp_path, None, plan)))
    assert code == 0, out
    row = wednesday_row(out.replace("Wed 2027-05-05 11:00", ""))  # the 10:00 row
    assert row.split(")", 1)[1].split()[:3] == ["0.00", "unknown", "unknown"]


def test_with_capacity_draws_allowed_exactly_when_assess_says_so() -> None:
    base = np.array([400.0] * 6 + [1300.0] * 12 + [400.0] * 6)
    plan0 = wednesday_plan(np.tile(base, (5, 1)), Thresholds())
    c = one_lane_capacity(plan0)
    wednesdays = np.tile(base, (5, 1))
    wednesdays[:, 6:18] = c * np.array([0.9, 1.0, 1.05, 1.1, 0.97])[:, None]
    options = RiskOptions(capacity_cv=0.08, draws=60, seed=4)
    plan = wednesday_plan(wednesdays, Thresholds(max_queue_length=800.0), risk=options)
    scenarios = window_scenarios(plan)
    assert len(scenarios) == 60 and scenarios.capacity_factor.shape == (60, 1)
    level = 0.25
    (ws,) = risk_windows(plan, level, [1], scenarios=scenarios).windows.sets
    decided = {True: 0, False: 0}
    for s, e in [(6, 8), (6, 10), (8, 12), (10, 14), (12, 18), (6, 18), (20, 24), (2, 7)]:
        start = WEDNESDAY + dt.timedelta(hours=s)
        closure = Closure(start, WEDNESDAY + dt.timedelta(hours=e), 1)
        p = R.assess(dataclasses.replace(plan, closures=(closure,)), scenarios).summary.p_any_hour
        assert ws.allowed[s, e] == (p <= level), (s, e, p)
        decided[bool(ws.allowed[s, e])] += 1
    assert decided[True] and decided[False]  # both outcomes are exercised


def test_a_level_is_needed_and_checked() -> None:
    plan = wednesday_plan(np.full((5, 24), 500.0), Thresholds(max_demand_capacity=1.0))
    for bad in (None, 1.0, -0.1, float("nan")):
        with pytest.raises(PlanError) as e:
            risk_windows(plan, bad, [1])
        assert e.value.problems[0].where == "risk.window_risk_percent"


# ---------------------------------------------------------------------------------------------
# The JSON plan's risk block and `wzq windows --risk`
# ---------------------------------------------------------------------------------------------


def run_cli(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(list(argv))
    return code, out.getvalue(), err.getvalue()


def hand_json(tmp_path: Path, window_risk_percent: float | None, plan: Plan | None = None) -> Path:
    """The hand count of the first test (or ``plan``'s) as a JSON plan with its counts in
    a CSV file."""
    if plan is None:
        wednesdays = np.full((5, 24), 500.0)
        wednesdays[[1, 3, 4], 10] = 3000.0
        plan = wednesday_plan(wednesdays, Thresholds(max_demand_capacity=1.0))
    flows = plan.history.counts.flows_veh_h
    lines = ["date," + ",".join(f"h{h}" for h in range(24))]
    for k, day in enumerate(flows):
        lines.append(f"{FIRST_COUNTED + dt.timedelta(days=k)}," + ",".join(f"{x:g}" for x in day))
    (tmp_path / "counts.csv").write_text("\n".join(lines) + "\n")
    data = plan_to_dict(dataclasses.replace(plan, history=None))
    data["demand"] = {
        "start": "2027-05-05T00:00",
        "hours": 24,
        "history": {"file": "counts.csv", "day_types": "by-name"},
    }
    data["risk"] = {"window_risk_percent": window_risk_percent}
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(data))
    return path


def wednesday_row(out: str) -> str:
    line = next(x for x in out.splitlines() if x.strip().startswith("Wed 2027-05-05"))
    return line.split("Wed 2027-05-05", 1)[1].strip()


def test_the_json_window_risk_and_the_windows_command(tmp_path: Path) -> None:
    path = hand_json(tmp_path, 40)
    plan = load_plan(path)
    assert plan.risk.window_risk == pytest.approx(0.4)
    assert plan_to_dict(plan)["risk"]["window_risk_percent"] == pytest.approx(40)
    # at 40 %: no closure may cover 10:00 (3 failing weeks of 5); every other hour may be closed
    code, out, _ = run_cli("windows", str(path), "--lanes-closed", "1")
    assert code == 0, out
    flat = " ".join(out.split())  # wrapped to the terminal's width
    assert "at most 40 %" in flat and "5 equally likely scenarios" in flat
    assert wednesday_row(out) == "#" * 10 + "." + "#" * 13
    # --risk overrides the plan's level: at 60 % the 3 failing weeks of 5 are accepted
    code, out, _ = run_cli("windows", str(path), "--lanes-closed", "1", "--risk", "60")
    assert code == 0 and wednesday_row(out) == "#" * 24
    code, _, err = run_cli("windows", str(path), "--risk", "100")
    assert code == 2 and "--risk" in err
    bad = json.loads(path.read_text())
    bad["risk"]["window_risk_percent"] = "ten"
    path.write_text(json.dumps(bad))
    with pytest.raises(PlanError, match=r"risk\.window_risk_percent"):
        load_plan(path)


def test_a_plan_the_risk_is_not_assessed_for_gets_the_design_windows_with_the_reason(
    tmp_path: Path,
) -> None:
    # a congested branch set by its wave speed: the scenarios are not solved for it yet,
    # so the windows are those of the design demand, with a note; the workbook, the
    # report and the bulk summary still show everything else
    from wzq.io.batch.summary import plan_row
    from wzq.io.report import build_report
    from wzq.io.workbook.outputs import decide_outputs

    wednesdays = np.full((5, 24), 500.0)
    wednesdays[[1, 3, 4], 10] = 3000.0
    plan = wednesday_plan(wednesdays, Thresholds(max_demand_capacity=1.0))
    site = dataclasses.replace(plan.site, congested_branch="wave-speed", wave_speed=6.0)
    plan = dataclasses.replace(plan, site=site, risk=RiskOptions(window_risk=0.4))
    found = closure_windows(plan, [1])
    assert found.rule == W.ALL_HOURS_RULE
    assert any("not at a risk" in n and "congested branch" in n for n in found.notes)
    (ws,) = found.sets
    design = W.plan_windows(plan, [1])
    np.testing.assert_array_equal(ws.allowed, design.sets[0].allowed)
    result = wzq.analyse(plan)
    out = decide_outputs(result, windows=False, space_time=False)
    assert out.risk is None
    assert any("risk of breaking the limits is not shown" in w for w in out.result.warnings)
    assert plan_row("p.json", result).risk_any_percent is None
    assert build_report(result, vector=False)[:4] == b"%PDF"
