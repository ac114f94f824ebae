"""The newer inputs (the approach road, the count history, the risk and the limits the
closure-window search uses): mistakes a designer in a hurry makes that were read as
something else without a word, now queried at the cell or key they were typed in.

The plans are the invented examples (Brackenholm Expressway with its ramps and
landmarks, Larkspur Vale Expressway with its year of counts, Fenwick Downs Motorway in
metric units, Kestrel Ridge Parkway), edited as JSON or in their workbooks.
"""

from __future__ import annotations

import datetime as dt
import json
import shutil
from pathlib import Path
from typing import Any

import pytest
from workbook_helpers import edited, set_named, table_cell

from wzq.cli import main
from wzq.engine.risk import assess
from wzq.engine.warnings import input_warnings
from wzq.io import counts as C
from wzq.io.batch.runner import run_batch
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader import read_plan

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
BRACKENHOLM = EXAMPLES / "brackenholm_interchange_evening"
LARKSPUR = EXAMPLES / "larkspur_vale_week"
FENWICK = EXAMPLES / "fenwick_downs_weekend"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight"
COUNTS = EXAMPLES / "larkspur_vale_eb_2026.vol"


def example(stem: Path) -> dict:
    return json.loads(stem.with_suffix(".json").read_text(encoding="utf-8"))


def saved(tmp_path: Path, data: dict, name: str = "plan.json") -> Path:
    if "history" in data["demand"]:
        shutil.copy(COUNTS, tmp_path)
    path = tmp_path / name
    path.write_text(json.dumps(data), encoding="utf-8")
    return path


def said(path: Path, word: str) -> list[str]:
    """The warnings of a plan (its reader's and the plausibility checks') holding ``word``."""
    plan = read_plan(path) if path.suffix == ".xlsx" else load_plan(path)
    return [w for w in input_warnings(plan) if word in w]


def book(tmp_path: Path, stem: Path, edit: Any) -> Path:
    if stem == LARKSPUR:
        shutil.copy(COUNTS, tmp_path)
    return edited(stem.with_suffix(".xlsx"), tmp_path, edit)


# ---------------------------------------------------------------------------------------------
# The design demand's percentile typed as a fraction
# ---------------------------------------------------------------------------------------------


def test_a_percentile_typed_as_a_fraction_is_queried(tmp_path: Path) -> None:
    """0.95 typed for the 95th percentile designs on about the quietest matching day of
    each hour (the 0.95th percentile), a design demand lower than the mean."""
    data = example(LARKSPUR)
    data["demand"]["history"]["percentile"] = 0.95
    (w,) = said(saved(tmp_path, data), "percentile")
    assert w.startswith("demand.history.percentile: the design demand is percentile 0.95 of ")
    assert "did you mean 95?" in w

    (w,) = said(
        book(tmp_path, LARKSPUR, lambda wb: set_named(wb, "history_percentile", 1)), "percentile"
    )
    assert w.startswith("Demand!K28: the design demand is percentile 1 of ")
    assert "did you mean 100?" in w


def test_a_percentile_of_percent_is_not_queried(tmp_path: Path) -> None:
    data = example(LARKSPUR)
    data["demand"]["history"]["percentile"] = 85
    assert not said(saved(tmp_path, data), "percentile")


# ---------------------------------------------------------------------------------------------
# The limits: a delay limit in seconds, a queue limit or a landmark in metres
# ---------------------------------------------------------------------------------------------


def test_a_delay_limit_typed_in_seconds_is_queried(tmp_path: Path) -> None:
    """300 typed for five minutes (300 s) was a limit of 300 min/veh, which no hour ever
    breaks: the closure-window search then allows every hour the queue allows."""
    data = example(KESTREL)
    data["thresholds"]["max_average_delay_min"] = 300
    (w,) = said(saved(tmp_path, data), "average delay")
    assert w.startswith("thresholds.max_average_delay_min: the limit on the average delay is ")
    assert "300 min/veh (5 h)" in w and "did you mean 5 min (300 s)?" in w

    (w,) = said(
        book(tmp_path, KESTREL, lambda wb: set_named(wb, "limit_average_delay", 120)),
        "average delay",
    )
    assert w.startswith("Limits!B7: ") and "did you mean 2 min (120 s)?" in w


def test_a_delay_limit_of_an_hour_or_less_is_not_queried(tmp_path: Path) -> None:
    data = example(KESTREL)
    data["thresholds"]["max_average_delay_min"] = 60
    assert not said(saved(tmp_path, data), "average delay")


def test_a_landmark_far_upstream_is_queried(tmp_path: Path) -> None:
    """The Exit 12 off-ramp, the landmark the queue must not pass, typed 95 (for 0.95 mi, or
    a slip of the keys) instead of 1.2: the limit could never be broken."""
    data = example(BRACKENHOLM)
    data["approach"]["landmarks"][3]["distance"] = 95
    (w,) = said(saved(tmp_path, data), "upstream")
    assert w.startswith(
        "approach.landmarks[3].distance: the landmark 'Exit 12 off-ramp' is 95.0 mi upstream "
        "of the taper, farther than 10.0 mi"
    )

    def edit(wb: Any) -> None:
        table_cell(wb, L.LANDMARK_TABLE, 3, L.LANDMARK_COLUMNS[1]).value = 12

    (w,) = said(book(tmp_path, BRACKENHOLM, edit), "upstream")
    assert w.startswith("Approach!B11: the landmark 'Exit 12 off-ramp' is 12.0 mi upstream")
    assert not said(BRACKENHOLM.with_suffix(".xlsx"), "upstream")


def test_a_queue_limit_in_metres_in_a_metric_plan_is_queried(tmp_path: Path) -> None:
    """150 typed for 150 m where km are asked: a limit of 150 km, never reached. 10 mi is
    16.09 km (10 x 1.609344)."""
    data = example(FENWICK)
    data["thresholds"]["max_queue_length"] = 150
    (w,) = said(saved(tmp_path, data), "upstream")
    assert w.startswith(
        "thresholds.max_queue_length: the longest allowed queue is 150.0 km upstream of the "
        "taper, farther than 16.1 km"
    )
    (w,) = said(
        book(tmp_path, FENWICK, lambda wb: set_named(wb, "limit_queue_length", 150)), "upstream"
    )
    assert w.startswith("Limits!B6: the longest allowed queue is 150.0 km")
    assert not said(FENWICK.with_suffix(".json"), "upstream")  # 2 km


# ---------------------------------------------------------------------------------------------
# The count history: old counts not grown, a day far above its weekday
# ---------------------------------------------------------------------------------------------

#: The Larkspur Vale plan moved 157 weeks later: Mon 2027-05-03 to Mon 2030-05-06.
LATER = dt.timedelta(weeks=157)


def test_counts_years_older_than_the_plan_not_grown_are_queried(tmp_path: Path) -> None:
    """The counts end on 2026-12-31; a plan from 2030-05-06 is 1,222 days later
    (365 + 366 + 365 + 126), 3.3 years, and with no growth typed it used 2026's traffic."""
    data = example(LARKSPUR)
    moved = lambda t: (dt.datetime.fromisoformat(t) + LATER).isoformat()  # noqa: E731
    data["demand"]["start"] = moved(data["demand"]["start"])
    for c in data["closures"]:
        c["start"], c["end"] = moved(c["start"]), moved(c["end"])
    data["demand"]["history"]["growth_percent_per_year"] = 0
    (w,) = said(saved(tmp_path, data), "not grown")
    assert w.startswith(
        "demand.history.growth_percent_per_year: the counts end on 2026-12-31, 3.3 years "
        "before the plan's first day (2030-05-06), and are not grown"
    )

    def edit(wb: Any) -> None:
        set_named(wb, "history_first_day", dt.datetime(2030, 5, 6))
        set_named(wb, "history_growth_percent", None)
        for i in range(len(data["closures"])):
            cell = table_cell(wb, L.CLOSURE_TABLE, i, L.CLOSURE_COLUMNS[0])
            cell.value = cell.value + LATER

    (w,) = said(book(tmp_path, LARKSPUR, edit), "not grown")
    assert w.startswith("Demand!K27: the counts end on 2026-12-31, 3.3 years")


def test_counts_grown_or_recent_are_not_queried(tmp_path: Path) -> None:
    assert not said(saved(tmp_path, example(LARKSPUR)), "not grown")  # 0.3 years, 1.5 %
    data = example(LARKSPUR)
    data["demand"]["history"]["growth_percent_per_year"] = 0
    assert not said(saved(tmp_path, data), "not grown")  # 2026-12-31 to 2027-05-03


def test_a_day_far_above_its_weekday_is_queried() -> None:
    """A Tuesday of both directions (or of a busier station) pasted among this direction's
    Tuesdays: four at 1,000 veh/h all day (24,000 vehicles), the fifth at 2,000 (48,000,
    twice the median), and one at 1,400 (33,600, 140 %) which is not queried."""
    rows = ["date," + ",".join(str(h) for h in range(24))]
    day = dt.date(2026, 5, 5)
    for week, f in enumerate((1.0, 1.0, 2.0, 1.0, 1.4, 1.0)):
        rows.append(f"{day + dt.timedelta(weeks=week)}," + ",".join([str(int(1000 * f))] * 24))
    read = C.read_csv_text("\n".join(rows), "w.csv")
    (w,) = read.warnings
    assert w.startswith("Tue 2026-05-19: 48,000 vehicles, 200% of the median Tuesday;")
    assert "both directions" in w


# ---------------------------------------------------------------------------------------------
# The approach in a JSON plan: a ramp's share given as a fraction
# ---------------------------------------------------------------------------------------------


def test_a_ramp_share_given_as_a_fraction_in_a_json_plan_is_queried(tmp_path: Path) -> None:
    """0.14 for the Exit 12 off-ramp's 14 % was read as 0.14 % without a word, where the
    workbook queries it: 0.14 % of 2,300 veh/h is 3 veh/h leaving instead of 322."""
    data = example(BRACKENHOLM)
    data["approach"]["landmarks"][3]["share_percent"] = 0.14
    (w,) = said(saved(tmp_path, data), "did you mean")
    assert w == (
        "approach.landmarks[3].share_percent: Ramp flow is 0.14 %: did you mean 14 %? "
        "Percentages are given as numbers of percent (14 for 14 %); ignore this if 0.14 % "
        "is right"
    )
    assert not said(BRACKENHOLM.with_suffix(".json"), "did you mean")


# ---------------------------------------------------------------------------------------------
# A ramp whose kind is not what its name says
# ---------------------------------------------------------------------------------------------


def test_a_ramp_of_the_other_kind_than_its_name_is_queried(tmp_path: Path) -> None:
    """'Exit 12 off-ramp' chosen as an entrance ramp (the next word in the list) added its
    14 % to the traffic arriving at the closure instead of taking it away; the Sorrel Lane
    on-ramp typed as 'other' carried none of its traffic."""
    data = example(BRACKENHOLM)
    data["approach"]["landmarks"][3]["kind"] = "entrance-ramp"
    (w,) = said(saved(tmp_path, data), "named an")
    assert w == (
        "approach.landmarks[3].kind: 'Exit 12 off-ramp' is named an off-ramp, but its kind "
        "is entrance ramp, so its flow is added to the mainline instead of taken from it; "
        "check its kind"
    )

    def edit(wb: Any) -> None:
        table_cell(wb, L.LANDMARK_TABLE, 0, L.LANDMARK_COLUMNS[2]).value = "other"
        for h in range(24):  # its hourly flows go with it
            wb["Approach"].cell(8 + h, 9).value = None
        wb["Approach"]["I7"] = "Ramp 1"

    (w,) = said(book(tmp_path, BRACKENHOLM, edit), "named an")
    assert w.startswith("Approach!C8: 'Sorrel Lane on-ramp' is named an on-ramp, but its kind")
    assert w.endswith("so it carries no traffic; check its kind")


def test_ramps_of_the_kind_their_names_say_are_not_queried() -> None:
    """The example's names: 'Exit 12 on-ramp' is an entrance whatever its exit number."""
    assert not said(BRACKENHOLM.with_suffix(".json"), "named an")
    assert not said(BRACKENHOLM.with_suffix(".xlsx"), "named an")


# ---------------------------------------------------------------------------------------------
# Days to leave out that are not counted days
# ---------------------------------------------------------------------------------------------


def test_a_day_to_leave_out_outside_the_counts_is_queried(tmp_path: Path) -> None:
    """The Larkspur Vale counts run through 2026; 2025-06-17 typed for 2026-06-17 (a
    Wednesday at 69 % of the median) left nothing out, and the low day stayed in."""
    (w,) = said(
        book(tmp_path, LARKSPUR, lambda wb: set_named(wb, "history_exclude_days", "2025-06-17")),
        "left out",
    )
    assert w == (
        "Demand!K18: 2025-06-17 to be left out, but the counts run from 2026-01-01 to "
        "2026-12-31, so nothing is left out for it; check the year"
    )
    data = example(LARKSPUR)
    data["demand"]["history"]["exclude_days"] = ["2026-06-17", "2027-06-17", "2025-01-01"]
    (w,) = said(saved(tmp_path, data), "left out")
    assert w.startswith("demand.history.exclude_days: 2027-06-17, 2025-01-01 to be left out")
    assert w.endswith("so nothing is left out for them; check the year")
    assert not said(LARKSPUR.with_suffix(".xlsx"), "left out")


# ---------------------------------------------------------------------------------------------
# The closure-window search's risk given as a fraction on the command line
# ---------------------------------------------------------------------------------------------


def test_a_risk_given_as_a_fraction_to_wzq_windows_is_queried(
    capsys: pytest.CaptureFixture[str],
) -> None:
    """`--risk 0.1` for one chance in ten allowed a closure only where at most 0.1 % of the
    scenarios break a limit, without a word; the same value on the Limits sheet or in a
    JSON plan is queried."""
    assert main(["windows", str(KESTREL.with_suffix(".json")), "--risk", "0.1"]) == 0
    out = capsys.readouterr().out
    assert "warning: --risk 0.1 is a chance of 0.1 %: did you mean --risk 10 (10 %)?" in out
    assert main(["windows", str(KESTREL.with_suffix(".json")), "--risk", "10"]) == 0
    assert "did you mean" not in capsys.readouterr().out


def test_long_form_counts_stamped_at_the_end_of_each_hour_are_queried() -> None:
    """An export stamping each hour at its end, midnight as 00:00 of the next day (no
    24:00 to give it away): three weeks from Mon 2026-05-04 01:00 to Mon 2026-05-25 00:00
    (504 hours) were read an hour late, the two part days listed as gaps only."""
    t0 = dt.datetime(2026, 5, 4, 1)
    stamps = [t0 + dt.timedelta(hours=i) for i in range(504)]
    text = "datetime,count\n" + "\n".join(f"{t:%Y-%m-%d %H:%M},900" for t in stamps)
    (w,) = C.read_csv_text(text, "end.csv").warnings
    assert w.startswith(
        "Mon 2026-05-04: the counts run from 01:00 to 00:00 on Mon 2026-05-25, as time stamps "
        "at the end of each interval do; read as starts, every count is one interval late"
    )
    ends = C.read_csv_text(text, "end.csv", stamp="end")
    assert not ends.warnings and ends.history.n_days == 21  # 2026-05-04 to 2026-05-24
    starts = "datetime,count\n" + "\n".join(
        f"{t - dt.timedelta(hours=1):%Y-%m-%d %H:%M},900" for t in stamps
    )
    assert not C.read_csv_text(starts, "start.csv").warnings


def test_a_ramp_share_above_half_the_mainline_is_queried(tmp_path: Path) -> None:
    """60 typed in the share column for the off-ramp's 60 veh/h (not 60 %): 60 % of the
    2,300 veh/h arriving there, 1,380 veh/h, left the mainline, without a word."""
    data = example(BRACKENHOLM)
    data["approach"]["landmarks"][3]["share_percent"] = 60
    (w,) = said(saved(tmp_path, data), "usually carries")
    assert w.startswith(
        "approach.landmarks[3].share_percent: 'Exit 12 off-ramp' takes 60 % of the mainline "
        "flow arriving at it"
    )

    def edit(wb: Any) -> None:
        table_cell(wb, L.LANDMARK_TABLE, 2, L.LANDMARK_COLUMNS[3]).value = 55

    (w,) = said(book(tmp_path, BRACKENHOLM, edit), "usually carries")
    assert w.startswith("Approach!D10: 'Exit 12 on-ramp' adds 55 % of the mainline flow")
    data["approach"]["landmarks"][3]["share_percent"] = 50
    assert not said(saved(tmp_path, data), "usually carries")


def test_unusual_counted_days_reach_a_json_plans_warnings(tmp_path: Path) -> None:
    """The workbook names counted days far below their weekday; a JSON plan on the same
    count file said nothing. Without its holidays listed the Larkspur Vale history has five
    such days, New Year's Day first: 34,808 vehicles, 59 % of the median Thursday (and
    Labor Day, whose traffic falls in other hours than on a Monday)."""
    data = example(LARKSPUR)
    data["demand"]["history"]["holidays"] = ["2027-05-31"]
    (w,) = said(saved(tmp_path, data), "worth a look")
    assert w.startswith(
        "demand.history.file: the counts in larkspur_vale_eb_2026.vol hold 5 findings worth "
        "a look (`wzq counts` lists them all): Thu 2026-01-01: 34,808 vehicles, 59% of the "
        "median Thursday;"
    )
    assert w.endswith(" | and 2 more")
    data["demand"]["history"]["exclude_days"] = ["2026-01-01", "2026-05-25", "2026-11-26"]
    (w,) = said(saved(tmp_path, data), "worth a look")
    assert "hold 2 findings worth a look" in w and "Fri 2026-12-25: 35,415 vehicles" in w
    assert not said(LARKSPUR.with_suffix(".json"), "worth a look")  # its holidays listed


def test_a_day_whose_traffic_falls_in_other_hours_is_queried() -> None:
    """Five Mondays of 24,000 vehicles: three flat at 1,000 veh/h, one at 500 veh/h to noon
    and 1,500 after (the other direction's day, or another day's), one at 900 and 1,100.
    Against the usual 1/24 of the day each hour, the second moves half of
    12 x (1/24 - 1/48) + 12 x (1/16 - 1/24) = 25 % of its vehicles; the third 5 %, not
    queried. No total is unusual, so nothing was said."""
    rows = ["date," + ",".join(str(h) for h in range(24))]
    day = dt.date(2026, 5, 4)
    for week, (am, pm) in enumerate(((1000, 1000), (500, 1500), (1000, 1000), (900, 1100))):
        rows.append(
            f"{day + dt.timedelta(weeks=week)}," + ",".join(map(str, [am] * 12 + [pm] * 12))
        )
    rows.append(f"{day + dt.timedelta(weeks=4)}," + ",".join(["1000"] * 24))
    (w,) = C.read_csv_text("\n".join(rows), "w.csv").warnings
    assert w.startswith(
        "Mon 2026-05-11: 25% of its vehicles counted in other hours than on the median Monday;"
    )


def test_a_value_of_time_per_minute_is_queried(tmp_path: Path) -> None:
    """0.32 USD per person-minute typed where a value per hour is asked priced every delay
    at a sixtieth: 0.32 x 60 = 19.2 USD per person-hour."""
    data = example(KESTREL)
    data["costs"]["car_value_per_person_h"] = 0.32
    (w,) = said(saved(tmp_path, data), "value of time")
    assert w == (
        "costs.car_value_per_person_h: a value of time of 0.32 USD per person-hour is less "
        "than one USD an hour; the values are per hour: a value per minute (0.32 x 60 = 19.2 "
        "per hour)?"
    )
    (w,) = said(
        book(tmp_path, KESTREL, lambda wb: set_named(wb, "cost_truck_value", 0.6)), "value of time"
    )
    assert w.startswith("Limits!B14: a value of time of 0.6 USD per vehicle-hour")
    assert not said(KESTREL.with_suffix(".json"), "value of time")


# ---------------------------------------------------------------------------------------------
# A bulk run over a folder holding a copy of a plan
# ---------------------------------------------------------------------------------------------


def test_a_copy_of_a_plan_in_a_bulk_run_is_said(tmp_path: Path) -> None:
    """'kestrel - Copy.json' beside 'kestrel.json' (a copy made in the file manager) was a
    second row of the summary, counting the same plan twice, without a word."""
    shutil.copy(KESTREL.with_suffix(".json"), tmp_path / "kestrel.json")
    shutil.copy(KESTREL.with_suffix(".json"), tmp_path / "kestrel - Copy.json")
    shutil.copy(FENWICK.with_suffix(".json"), tmp_path / "fenwick.json")
    result = run_batch(tmp_path, workers=1)
    assert len(result.rows) == 3
    assert result.notes == [
        "kestrel - Copy.json, kestrel.json are the same file, byte for byte, and each is a row "
        "of the summary; delete a copy that is not a plan of its own"
    ]


def test_two_ramps_of_one_kind_at_one_point_are_queried(tmp_path: Path) -> None:
    """The Exit 12 on-ramp's row copied to add a ramp, renamed but left at 1.0 mi: both
    entrance ramps' 6 % joined the traffic there, without a word. The example's exit and
    entrance ramps at different distances (and a diamond's at one) are not queried."""
    data = example(BRACKENHOLM)
    copy = dict(data["approach"]["landmarks"][2], name="Exit 12 loop on-ramp")
    data["approach"]["landmarks"].append(copy)
    (w,) = said(saved(tmp_path, data), "both their flows count")
    assert w.startswith(
        "approach.landmarks[5].distance: 'Exit 12 loop on-ramp' and 'Exit 12 on-ramp' are both "
        "entrance ramps 1.00 mi upstream of the taper"
    )
    data["approach"]["landmarks"][5].update(kind="exit-ramp", name="Exit 12 loop off-ramp")
    assert not said(saved(tmp_path, data), "both their flows count")
    assert not said(BRACKENHOLM.with_suffix(".xlsx"), "both their flows count")


def test_a_landmark_in_feet_in_a_json_plan_asks_for_miles(tmp_path: Path) -> None:
    """A JSON plan takes any distance above 0 (a workbook cell refuses more than 100 mi):
    3,700 ft typed for the Gantry Brook bridge (0.7 mi) was 3,700 mi, without a word."""
    data = example(BRACKENHOLM)
    data["approach"]["landmarks"][1]["distance"] = 3700
    (w,) = said(saved(tmp_path, data), "upstream")
    assert w.startswith(
        "approach.landmarks[1].distance: the landmark 'Gantry Brook bridge' is 3,700.0 mi"
    )
    assert w.endswith("check the value and its unit (feet typed where miles are asked?)")


def test_a_risk_on_one_counted_week_says_so(tmp_path: Path) -> None:
    """A window of half a week around the same date leaves one counted week for the risk,
    drawn 1,000 times (1 x 1,000 scenarios): its narrow intervals were about the capacity
    draws, not the weeks, without a word."""
    data = example(LARKSPUR)
    data["demand"]["history"]["window_weeks"] = 0.5
    result = assess(load_plan(saved(tmp_path, data)))
    (note,) = [n for n in result.notes if "historical period" in n]
    assert note.startswith(
        "Only 1 historical period of the counts matches the plan: its 1,000 scenarios vary the "
        "capacity on that week alone"
    )
    assert note in result.method()
    data["demand"]["history"]["window_weeks"] = 10
    assert not [n for n in assess(load_plan(saved(tmp_path, data))).notes if "historical" in n]


def test_a_day_outside_the_plan_given_to_wzq_windows_is_refused(
    capsys: pytest.CaptureFixture[str],
) -> None:
    """`--days 2027-06-15` on a plan of 72 hours from Mon 2027-05-03 00:00 (to 2027-05-05
    24:00) printed, for each configuration, "No closure of this configuration keeps every
    hour within the limits": not so, the day is simply not in the plan."""
    assert main(["windows", str(KESTREL.with_suffix(".json")), "--days", "2027-06-15"]) == 2
    err = capsys.readouterr().err
    assert (
        "--days: 2027-06-15 is not a day of the plan (2027-05-03 to 2027-05-05); give days" in err
    )
