"""Numbers into cells: the writer's value paths, checked directly and fast.

The per-hour columns (scale to the plan's units, rounding half away from zero, NaN as a
blank), which closure is in force in each hour, which hours the permit table lists, and
the text a cell can hold. Expected values are worked by hand beside each check; unit
factors are the exact definitions (1 mi = 1,609.344 m, NIST SP 811 appendix B).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from openpyxl import Workbook

from wzq.engine.plan import Closure, Thresholds
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import writer as Wr
from wzq.present.tables import Column

KESTREL = Path(__file__).resolve().parents[2] / "examples" / "kestrel_ridge_weeknight.json"
MILE = 1609.344  # m


def hourly(**columns: list) -> SimpleNamespace:
    """A stand-in for a result: only its per-hour columns (``Result.hours``) are read."""
    return SimpleNamespace(hours={name: np.asarray(v) for name, v in columns.items()})


def test_values_are_scaled_rounded_half_away_from_zero_and_blank_for_nan() -> None:
    result = hourly(
        queue_m=[MILE, 1.5 * MILE, 0.125 * MILE, -0.125 * MILE, float("nan"), 0.0],
        demand_veh_h=[1499.5, 1500.4, 2.5, -2.5, 0.49, 1e6 + 0.5],
    )
    cols = [Column("Queue (mi)", "queue_m", 2, 1 / MILE), Column("Demand", "demand_veh_h", 0)]
    queue, demand = Wr.values(result, cols)
    assert queue == [1.0, 1.5, 0.13, -0.13, None, 0.0]
    assert demand == [1500, 1500, 3, -3, 0, 1000001]
    assert all(type(v) is int for v in demand)  # whole numbers written as integers


def test_values_of_no_columns_and_of_a_boolean_column() -> None:
    result = hourly(closure=[True, False, True])
    assert Wr.values(result, []) == []
    assert Wr.values(result, [Column("Closed", "closure", 0)]) == [[1, 0, 1]]


def plan_with(closures: list[tuple[dt.datetime, dt.datetime]]):
    plan = load_plan(KESTREL)  # demand Mon 2027-05-03 00:00 to Thu 00:00, three lanes
    return dataclasses.replace(
        plan, closures=tuple(Closure(start=a, end=b, lanes_closed=1) for a, b in closures)
    )


def at(day: int, hour: int, minute: int = 0) -> dt.datetime:
    return dt.datetime(2027, 5, day, hour, minute)


def test_the_closure_in_force_each_hour_by_hand() -> None:
    plan = plan_with(
        [
            (at(3, 21), at(4, 5)),  # 1: Mon 21:00 to Tue 05:00
            (at(4, 21, 30), at(4, 22, 15)),  # 2: Tue 21:30 to 22:15
            (at(4, 22, 30), at(4, 23)),  # 3: Tue 22:30 to 23:00
        ]
    )
    hours = [at(3, 20), at(3, 21), at(4, 4), at(4, 5), at(4, 21), at(4, 22), at(4, 23)]
    got = Wr.hour_closures(plan, [pd.Timestamp(h) for h in hours])
    # a closure is in force in the hour [t0, t0 + 1 h) when it starts before t0 + 1 h and
    # ends after t0: 20:00 (starts at 21:00, the hour's end) no; 05:00 (ends at 05:00) no
    assert got == [None, 1, 1, None, 2, "2, 3", None]


def test_the_closure_in_force_with_hours_out_of_order() -> None:
    plan = plan_with([(at(3, 21), at(4, 5))])
    hours = [at(4, 5), at(3, 22), at(3, 20), at(4, 4)]
    assert Wr.hour_closures(plan, [pd.Timestamp(h) for h in hours]) == [None, 1, None, 1]


def test_the_permit_table_lists_closure_hours_queues_and_hours_over_a_limit() -> None:
    result = hourly(
        closure=[True, False, False, False, False],
        queue_max_veh=[0.0, 0.4, 0.0, 0.0, 0.0],
        status=["ok", "ok", "OVER: delay", "ok", "ok"],
    )
    assert Wr.listed_hours(result).tolist() == [True, True, True, False, False]


def test_text_a_cell_can_hold() -> None:
    assert Wr.cell_text("night\x01 works\x1f") == "night works"  # control characters dropped
    assert Wr.cell_text("tab\tand\nline") == "tab\tand\nline"  # XML carries these
    full = "x" * 32_767  # Excel's limit per cell
    assert Wr.cell_text(full) == full
    cut = Wr.cell_text("y" * 32_768)
    assert len(cut) == 32_767 and cut.endswith("y…")


@pytest.mark.parametrize("text", ["=SUM(A1:A3)", "+1", "-2", "@home"])
def test_text_is_written_as_text_never_as_a_formula(text: str) -> None:
    ws = Workbook().active
    cell = Wr.put_text(ws, 2, 3, text)
    assert (cell.row, cell.column, cell.value, cell.data_type) == (2, 3, text, "s")
    number = Wr.put_text(ws, 3, 3, 12.5)
    assert (number.value, number.data_type) == (12.5, "n")


def test_number_formats_by_decimals() -> None:
    assert Wr.number_looks([0, None, 1, 2]) == ["#,##0", None, "#,##0.0", "#,##0.00"]


def test_the_checks_listed_and_their_limits_in_the_plans_units() -> None:
    plan = dataclasses.replace(
        load_plan(KESTREL),
        thresholds=Thresholds(max_queue_length=2 * MILE, max_average_delay=None),
    )
    assert [c[0] for c in Wr.plan_checks(plan)] == ["queue_ok", "delay_ok", "demand_capacity_ok"]
    assert Wr.limit_texts(plan) == {
        "queue_ok": "2.00 mi",
        "delay_ok": "none",
        "demand_capacity_ok": "none",
    }


def test_the_input_fingerprint_follows_the_inputs_only() -> None:
    a, b = load_plan(KESTREL), load_plan(KESTREL)
    fa = Wr.input_fingerprint(a)
    assert len(fa) == 64 and int(fa, 16) >= 0  # SHA-256 in hexadecimal
    assert Wr.input_fingerprint(b) == fa
    faster = dataclasses.replace(a, site=dataclasses.replace(a.site, speed_limit=30.0))
    assert Wr.input_fingerprint(faster) != fa


def test_the_time_stamp_is_utc_to_the_second() -> None:
    before = dt.datetime.now(dt.UTC).replace(microsecond=0)
    stamp = Wr.utc_now()
    after = dt.datetime.now(dt.UTC)
    parsed = dt.datetime.strptime(stamp, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=dt.UTC)
    assert before <= parsed <= after and stamp.endswith("Z")


def test_a_closure_in_words() -> None:
    c = Closure(
        start=at(3, 21),
        end=at(4, 5),
        lanes_closed=2,
        barrier="hard",  # shown as "concrete barrier"
        capacity_override_veh_h_ln=1234.6,
        note="joint saw-cut",
    )
    text = Wr.closure_text(3, c, 3)
    assert text.startswith("Closure 3: Mon 2027-05-03 21:00 to Tue 2027-05-04 05:00; ")
    assert text.endswith(
        "; 2 of 3 lanes closed, concrete barrier; capacity set by user 1,235 veh/h/ln. "
        "joint saw-cut"
    )
    plain = Wr.closure_text(1, dataclasses.replace(c, capacity_override_veh_h_ln=None, note=""), 3)
    assert plain.endswith("; 2 of 3 lanes closed, concrete barrier")


def test_the_time_stamp_is_utc_on_a_machine_in_another_time_zone(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    import time

    monkeypatch.setenv("TZ", "Asia/Kolkata")  # UTC+05:30 all year (no daylight saving)
    time.tzset()
    try:
        stamp = Wr.utc_now()
        now = dt.datetime.now(dt.UTC)
    finally:
        monkeypatch.undo()
        time.tzset()
    parsed = dt.datetime.strptime(stamp, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=dt.UTC)
    assert abs((now - parsed).total_seconds()) < 60  # not 5.5 hours off
