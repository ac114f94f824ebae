"""Round seven of the red team: inputs a work-zone designer types that were read wrongly
without a word.

Each case is worked on the shipped Kestrel Ridge example (a US customary plan), changed
as a designer would in Excel or LibreOffice, and checked for the refusal or warning that
names the cell.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import shutil
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from openpyxl.workbook.defined_name import DefinedName
from workbook_helpers import edited, fill_template

import wzq
from wzq.cli import main
from wzq.engine import plausibility, risk
from wzq.engine import windows as W
from wzq.engine.plan import PlanError
from wzq.engine.risk_windows import closure_windows
from wzq.io import counts as C
from wzq.io.jsonplan import load_plan
from wzq.io.workbook.reader import read_plan

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.xlsx"


def _kestrel(tmp_path: Path, change) -> Path:
    return edited(KESTREL, tmp_path, change, "kestrel.xlsx")


def _refusals(path: Path) -> list[str]:
    with pytest.raises(PlanError) as e:
        read_plan(path)
    return [f"{p.where}: {p.message}" for p in e.value.problems]


# -- a unit typed over the unit cell --------------------------------------------------------


def test_a_speed_unit_overtyped_as_km_h_in_a_us_plan_is_refused(tmp_path):
    """The designer of a metric road overtyped the unit cells beside the speed limits
    (Site!C9:C10, a formula showing mi/h) with 'km/h' and typed 80 and 70, instead of
    choosing metric on Start!B14: the sheet shows 80 km/h, and 80 mi/h (129 km/h) was read."""

    def km_h(book):
        ws = book["Site"]
        ws["B9"], ws["C9"], ws["B10"], ws["C10"] = 80, "km/h", 70, "kph"

    before = KESTREL.read_bytes()
    path = _kestrel(tmp_path, km_h)
    typed = path.read_bytes()
    assert _refusals(path) == [
        "Site!C9: the unit beside Speed limit (Site!B9) says 'km/h', but the plan is in US "
        "customary units (Start!B14), so the value is read in mi/h; if it is in km/h, choose "
        "'metric' on Start!B14, else type it in mi/h; then put the unit back (mi/h)",
        "Site!C10: the unit beside Work-zone speed limit (Site!B10) says 'kph', but the plan "
        "is in US customary units (Start!B14), so the value is read in mi/h; if it is in "
        "km/h, choose 'metric' on Start!B14, else type it in mi/h; then put the unit back "
        "(mi/h)",
    ]
    assert path.read_bytes() == typed and KESTREL.read_bytes() == before


def test_a_speed_unit_overtyped_as_mph_in_a_metric_plan_is_refused(tmp_path):
    """The other way round: 'mph' typed over the unit beside Fenwick Downs' speed limit
    (a metric plan): refused, pointing at US customary on the Start sheet."""

    def mph(book):
        book["Site"]["C9"] = "mph"

    path = edited(EXAMPLES / "fenwick_downs_weekend.xlsx", tmp_path, mph, "fenwick.xlsx")
    assert _refusals(path) == [
        "Site!C9: the unit beside Speed limit (Site!B9) says 'mph', but the plan is in metric "
        "units (Start!B14), so the value is read in km/h; if it is in mi/h, choose 'US "
        "customary' on Start!B14, else type it in km/h; then put the unit back (km/h)"
    ]


def test_a_length_in_metres_beside_a_km_input_of_a_metric_plan_is_refused(tmp_path):
    """A metric plan: the work-zone length typed as 800 with its unit cell overtyped 'm'
    (the plan reads km; 800 km is out of range too, but the unit says why: one problem,
    at the unit) and the queue limit's unit overtyped 'metres' with its 1 (km) left."""

    def metres(book):
        book["Start"]["B14"] = "metric"
        ws = book["Site"]
        ws["B9"], ws["B10"] = 100, 80  # km/h
        ws["B12"], ws["C12"] = 800, "m"
        book["Limits"]["C6"] = "metres"

    said = _refusals(_kestrel(tmp_path, metres))
    assert said == [
        "Site!C12: the unit beside Work-zone length (Site!B12) says 'm', but the plan is in "
        "metric units (Start!B14), so the value is read in km; type it in km; then put the "
        "unit back (km)",
        "Limits!C6: the unit beside Longest allowed queue (Limits!B6) says 'metres', but the "
        "plan is in metric units (Start!B14), so the value is read in km; type it in km; "
        "then put the unit back (km)",
    ]


def test_units_typed_over_the_formulas_that_agree_with_the_plan_are_read(tmp_path):
    """Unit cells pasted as values ('mi/h', 'mph', 'miles', 'veh/mi/ln', 'ft'), a note
    in a unit cell that names no unit, and a cleared unit cell: the plan reads as before."""

    def agreeing(book):
        ws = book["Site"]
        ws["C9"], ws["C10"], ws["C11"], ws["C12"] = "mi/h", "MPH", None, "miles"
        ws["C16"], ws["C19"], ws["C18"] = "feet", "veh/mi/ln", "posted ramps"
        book["Limits"]["C6"] = "mi (from the taper)"
        book["Approach"]["B6"] = "mi"

    plan = read_plan(_kestrel(tmp_path, agreeing))
    base = read_plan(KESTREL)
    assert plan.site == base.site
    assert plan.thresholds == base.thresholds
    assert plan.input_warnings == base.input_warnings


def test_the_landmark_distance_unit_overtyped_is_refused(tmp_path):
    """Approach!B6, the unit row above the landmark distances, overtyped 'km' in a US plan
    with a landmark 2.5 (km) upstream: it was read as 2.5 mi."""

    def km(book):
        ws = book["Approach"]
        ws["B6"] = "km"
        ws["A8"], ws["B8"], ws["C8"] = "Millrace Creek bridge", 2.5, "other"

    assert _refusals(_kestrel(tmp_path, km)) == [
        "Approach!B6: the unit above the landmark distances (LandmarkTable) says 'km', but "
        "the plan is in US customary units (Start!B14), so the distances are read in mi; if "
        "they are in km, choose 'metric' on Start!B14, else type them in mi; then put the "
        "unit back (mi)"
    ]


def test_a_delay_limit_whose_unit_was_overtyped_as_seconds_is_refused(tmp_path):
    """Limits!B7 typed 90 with its unit 'min/veh' overtyped 's/veh': read as 90 min."""

    def seconds(book):
        book["Limits"]["B7"], book["Limits"]["C7"] = 90, "s/veh"

    assert _refusals(_kestrel(tmp_path, seconds)) == [
        "Limits!C7: the unit beside Longest allowed average delay (Limits!B7) says 's/veh', "
        "but the value is read in min/veh; type it in min/veh; then put the unit back "
        "(min/veh)"
    ]


# -- counts per 15 minutes typed as the flow in veh/h -------------------------------------


def _quarter_hours(per_quarter: bool):
    """Kestrel Ridge's 72 hours of demand typed as 288 rows of 15 minutes: each hour's
    flow (veh/h) in each of its quarters, or (``per_quarter``) the vehicles counted in
    each quarter, a quarter of it, as a counter's export gives them."""
    plan = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    q = np.repeat(plan.demand.flows_veh_h, 4) / (4 if per_quarter else 1)
    demand = dataclasses.replace(plan.demand, interval_s=900, flows_veh_h=q)
    return dataclasses.replace(plan, demand=demand)


def test_counts_per_15_minutes_typed_as_the_demand_are_queried_at_the_busiest_row(tmp_path):
    """Kestrel Ridge: 1,350 vehicles counted in 15 minutes at Mon 17:00 (5,400 veh/h)
    typed in "Demand (veh/h)": read as 1,350 veh/h, so the closure showed no queue.
    The busiest row of three whole days carries at most a quarter of what the 3 open
    lanes carry (2,222 veh/h/ln, 6,667 veh/h), as counts per 15 minutes would."""
    result = wzq.analyse(
        read_plan(fill_template(_quarter_hours(per_quarter=True), tmp_path / "quarters.xlsx"))
    )
    assert result.summary.max_queue_length_m == 0.0  # what the permit table would have shown
    query = (
        "Demand!C77: the busiest 15-minute row of the demand, 1,350 veh/h at Mon 2027-05-03 "
        "17:00, is at most a quarter of the open road's capacity (6,667 veh/h on 3 lanes) "
        "over 3 days of 15-minute rows: are these the vehicles counted in each 15 minutes? "
        "The demand is a flow in veh/h: type each count times 4 (1,350 is 5,400 veh/h)"
    )
    assert query in result.warnings
    assert sum("counted in each" in w for w in result.warnings) == 1


def test_flows_in_veh_h_on_15_minute_rows_are_not_queried():
    plan = _quarter_hours(per_quarter=False)
    open_capacity = 3 * 2222.2222222222  # the open road's, as the Site sheet gives it
    assert plausibility.counts_per_interval(plan, open_capacity) == []
    # a night's 15-minute counts (less than a day: the day's busiest hours are not
    # there to compare) are not queried either
    night = _quarter_hours(per_quarter=True)  # Mon 20:00 to Tue 06:00, the first closure
    quarters = night.demand.flows_veh_h[80:120]
    start = night.demand.start + dt.timedelta(hours=20)
    demand = dataclasses.replace(night.demand, start=start, flows_veh_h=quarters)
    night = dataclasses.replace(night, demand=demand, closures=night.closures[:1])
    assert plausibility.counts_per_interval(night, open_capacity) == []
    # nor hourly counts of a light road
    for name in ("kestrel_ridge_weeknight", "ashgrove_bypass_week", "fenwick_downs_weekend"):
        hourly = load_plan(EXAMPLES / f"{name}.json")
        assert plausibility.counts_per_interval(hourly, 1000.0) == [], name


# -- rows of an input sheet sorted, the names left on their cells -------------------------


def _sort_rows(ws, first: int, last: int) -> None:
    """Sort rows ``first``-``last`` of columns A:D by their label, as Excel's Sort does:
    the values travel with their labels, the defined names stay on their cells."""
    rows = [[ws.cell(r, c).value for c in range(1, 5)] for r in range(first, last + 1)]
    rows.sort(key=lambda row: str(row[0]))
    for r, values in zip(range(first, last + 1), rows, strict=True):
        for c, v in enumerate(values, 1):
            ws.cell(r, c).value = v


def test_the_limits_rows_sorted_by_their_labels_are_refused(tmp_path):
    """Limits!A6:D9 sorted A to Z: the queue limit (1 mi) moved to row 8, where the name
    of the demand/capacity limit points, and the blank demand/capacity limit to row 6:
    read as no queue limit and a demand/capacity limit of 1, without a word."""
    said = _refusals(_kestrel(tmp_path, lambda book: _sort_rows(book["Limits"], 6, 9)))
    moved = (
        "the rows were sorted or moved, and the names stayed on their cells; put the rows "
        "back as the template has them (undo the sort), or copy your inputs into a fresh "
        "workbook from `wzq new`"
    )
    assert said == [
        "Limits!B6: the name limit_queue_length (Longest allowed queue) points at this cell, "
        f"but its label (Limits!A6) is 'Highest allowed demand / capacity': {moved}",
        "Limits!B8: the name limit_demand_capacity (Highest allowed demand / capacity) points "
        f"at this cell, but its label (Limits!A8) is 'Longest allowed queue': {moved}",
    ]


def test_two_rows_swapped_are_refused_and_a_label_of_ones_own_is_read(tmp_path):
    """The rows of the two capacity drops dragged past each other (13.4 % read as the open
    road's drop, 7 % as the work zone's), and, in another workbook, a label retyped in the
    designer's words: the first refused at both cells, the second read as before."""

    def swap(book):
        ws = book["Site"]
        for c in range(1, 5):
            ws.cell(24, c).value, ws.cell(25, c).value = ws.cell(25, c).value, ws.cell(24, c).value

    said = _refusals(_kestrel(tmp_path, swap))
    assert [s.split(": ", 1)[0] for s in said] == ["Site!B24", "Site!B25"]
    assert said[0].startswith(
        "Site!B24: the name site_capacity_drop_work_zone (Capacity drop at breakdown, work "
        "zone) points at this cell, but its label (Site!A24) is 'Capacity drop at breakdown, "
        "open road': "
    )

    def own_words(book):
        book["Limits"]["A6"] = "Longest queue the county allows"
        book["Site"]["A24"] = "capacity drop at breakdown,   WORK ZONE"

    plan, base = read_plan(_kestrel(tmp_path, own_words)), read_plan(KESTREL)
    assert (plan.site, plan.thresholds) == (base.site, base.thresholds)
    assert plan.thresholds.max_queue_length == pytest.approx(1609.344)  # 1 mi, in m


def test_a_moved_row_is_named_once_for_its_label_not_again_for_its_value(tmp_path):
    """The capacity drops' rows swapped, one of them holding text ('about 7'): the cell is
    refused for its moved label alone; its value, which belongs to another input, is not
    judged as this input's as well."""

    def swap(book):
        ws = book["Site"]
        for c in range(1, 5):
            ws.cell(24, c).value, ws.cell(25, c).value = ws.cell(25, c).value, ws.cell(24, c).value
        ws["B24"] = "about 7"

    said = _refusals(_kestrel(tmp_path, swap))
    assert [s.split(": ", 1)[0] for s in said] == ["Site!B24", "Site!B25"]
    assert all("the rows were sorted or moved" in s for s in said)


def test_a_name_moved_to_a_cell_with_nothing_left_of_it_is_read(tmp_path):
    """site_lanes re-pointed at a cell of the designer's own, Site!H40 holding 4, with no
    label (no cell at all) left of it, and the unit system moved to Start!A30, in the
    sheet's first column: both are read, with nothing to compare a label with."""

    def moved(book):
        book["Site"]["H40"] = 4
        del book.defined_names["site_lanes"]
        book.defined_names["site_lanes"] = DefinedName("site_lanes", attr_text="Site!$H$40")
        book["Start"]["A30"] = "US customary"
        del book.defined_names["unit_system"]
        book.defined_names["unit_system"] = DefinedName("unit_system", attr_text="Start!$A$30")

    path = _kestrel(tmp_path, moved)
    assert openpyxl.load_workbook(path)["Site"]._cells.get((40, 7)) is None
    plan = read_plan(path)
    assert plan.site.lanes == 4  # Kestrel Ridge has 3
    assert plan.site.unit_system == "us"


def test_a_name_pointed_at_a_block_of_cells_is_refused(tmp_path):
    """site_lanes re-pointed in the Name Manager at Site!$B$8:$B$9 (the lanes and the
    speed limit): only its first cell was read, without a word."""

    def block(book):
        del book.defined_names["site_lanes"]
        book.defined_names["site_lanes"] = DefinedName("site_lanes", attr_text="Site!$B$8:$B$9")

    assert _refusals(_kestrel(tmp_path, block)) == [
        "Site (name site_lanes): the defined name site_lanes (Lanes in normal operation) "
        "points at Site!B8:B9, 2 cells, not at one; point it at the value cell again in the "
        "Name Manager"
    ]


# -- counts written with another locale's separators --------------------------------------


def _day_csv(values: list[str], sep: str = ";") -> str:
    """One day of hourly counts, ``date-time{sep}count`` a line, as a counter exports it."""
    rows = [f"time{sep}count"]
    rows += [f"2026-05-05 {h:02d}:00{sep}{v}" for h, v in enumerate(values)]
    return "\n".join(rows) + "\n"


# an invented day at Larkspur Vale, eastbound: quiet nights, 1,234 to 1,876 by day
_DAY = [120, 80, 60, 55, 90, 310, 860, 1402, 1876, 1550, 1234, 1190] + [1300] * 8
_DAY += [990, 640, 410, 220]


def test_counts_with_dots_for_thousands_are_refused_at_their_line():
    """A count export of a European counter, ';'-separated, with '.' for thousands: the
    text '1.402' was read as 1.402 vehicles, 1,876 as 1.876, without a word."""
    text = _day_csv([f"{v:,}".replace(",", ".") for v in _DAY])
    with pytest.raises(PlanError) as e:
        C.read_csv_text(text, "larkspur.csv")
    said = [f"{p.where}: {p.message}" for p in e.value.problems]
    assert len(said) == 13  # the 13 hours of 1,000 vehicles or more
    assert said[0] == (
        "larkspur.csv line 9, column 2: '1.402' is 1.402 vehicles, or 1,402 written with "
        "another locale's thousands separator? Type the count as a plain whole number (1402)"
    )


def test_counts_with_a_decimal_comma_are_refused_and_grouped_thousands_are_read():
    """Averaged counts with a decimal comma ('412,5') were read as 4,125; counts grouped
    by commas in a comma-separated file ('"1,402"') are 1,402, as before."""
    values = [str(v) for v in _DAY]
    values[7] = "412,5"
    with pytest.raises(PlanError) as e:
        C.read_csv_text(_day_csv(values), "avg.csv")
    assert [f"{p.where}: {p.message}" for p in e.value.problems] == [
        "avg.csv line 9, column 2: '412,5' is not a count we read: a decimal comma? Type the "
        "count with a decimal point (412.5), or as a whole number"
    ]
    grouped = [f'"{v:,}"' for v in _DAY]
    read = C.read_csv_text(_day_csv(grouped, sep=","), "grouped.csv")
    assert read.history.flows_veh_h[0].tolist() == [float(v) for v in _DAY]


def test_counts_pasted_as_numbers_with_dots_for_thousands_are_queried_at_the_first():
    """The same export pasted into a sheet by a spreadsheet set to a decimal point: the
    numbers 1.402, 1.876 ... among counts of hundreds. Read as typed, and queried at the
    first such cell (Count history!I2, 07:00), with the count it would be."""
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Count history"
    ws.append(["Date", *(f"{h:02d}:00" for h in range(24))])
    ws.append([dt.datetime(2026, 5, 5), *(v / 1000 if v >= 1000 else v for v in _DAY)])
    read = C.read_sheet(ws, "sheet 'Count history'")
    assert read.history.flows_veh_h[0][7] == pytest.approx(1.402)
    assert read.warnings == (
        "Count history!I2: 1.402 vehicles at 2026-05-05 07:00 (and 12 more counts like it), "
        "among counts up to 990: counts of 1,402 and so on, written with another locale's "
        "thousands separator? Type the counts as plain whole numbers",
    )


# -- hostile JSON plans ---------------------------------------------------------------------


def test_a_json_plan_nested_too_deeply_is_refused_without_a_traceback(tmp_path, capsys):
    """100,000 nested arrays: the JSON parser's recursion limit ended `wzq check` with a
    RecursionError traceback."""
    path = tmp_path / "deep.json"
    path.write_text('{"format": ' + "[" * 100_000 + "]" * 100_000 + "}", encoding="utf-8")
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert err.splitlines()[0] == (
        "wzq: deep.json: arrays or objects nested inside each other hundreds of times over, "
        "more deeply than a plan ever is; this is not a wzq plan"
    )


def test_a_json_plan_larger_than_any_plan_is_refused_before_it_is_read(tmp_path, capsys):
    """A 60 MB file named .json (a year of 15-minute demand is about 0.3 MB): it was read
    into memory whole, as text and then as objects."""
    path = tmp_path / "huge.json"
    with path.open("w", encoding="utf-8") as f:
        f.write('{"notes": "')
        f.write("x" * (60 * 1024 * 1024))
        f.write('"}')
    assert main(["check", str(path)]) == 2
    assert capsys.readouterr().err.splitlines()[0] == (
        "wzq: huge.json: 62,914,573 bytes, more than a plan holds (at most 52,428,800: a "
        "year of 15-minute demand is about 300,000); is this the plan file?"
    )


# -- flows per lane typed as the direction's flow ------------------------------------------


def test_flows_per_lane_typed_as_the_demand_are_queried_at_the_busiest_hour(tmp_path):
    """Kestrel Ridge's 3 lanes: the flows of one lane's detector (a third of each hour's,
    1,800 veh/h/ln at Mon 17:00) typed in "Demand (veh/h)", the direction's flow: read as
    1,800 veh/h for the 3 lanes, so the two-lane closure showed no queue."""

    def per_lane(book):
        ws = book["Demand"]
        for r in range(9, 81):
            ws.cell(r, 3).value = ws.cell(r, 3).value / 3

    result = wzq.analyse(read_plan(_kestrel(tmp_path, per_lane)))
    assert result.summary.max_queue_length_m == 0.0
    query = (
        "Demand!C26: the busiest hour of the demand, 1,800 veh/h at Mon 2027-05-03 17:00, is "
        "no more than one lane of the open road carries (2,222 veh/h/ln; 6,667 veh/h on its 3 "
        "lanes) over 3 days: are these flows per lane? The demand is the flow of the 3 lanes "
        "of this direction together (1,800 per lane is 5,400 veh/h)"
    )
    assert [w for w in result.warnings if "per lane?" in w] == [query]


def test_the_examples_flows_are_not_queried_as_per_lane():
    for name in ("kestrel_ridge_weeknight", "ashgrove_bypass_week", "larkspur_vale_week"):
        plan = load_plan(EXAMPLES / f"{name}.json")
        assert plausibility.flows_per_lane(plan, 3 * 2222.0) == [], name
    # two lanes: the busiest hour at half the capacity is an ordinary light road
    fenwick = load_plan(EXAMPLES / "fenwick_downs_weekend.json")
    assert fenwick.site.lanes == 2 and fenwick.demand.flows_veh_h.max() == 1430.0
    assert plausibility.flows_per_lane(fenwick, 2 * 2222.0) == []


# -- many draws of the capacity -------------------------------------------------------------


def _ashgrove_draws(tmp_path: Path, draws: int, window: float | None = None) -> Path:
    """The Ashgrove week (168 hourly rows) with the work-zone capacity drawn (coefficient
    of variation 0.08) ``draws`` times, the Limits sheet's largest number being 100,000."""

    def draw(book):
        ws = book["Limits"]
        ws["B26"], ws["B27"], ws["B29"] = 0.08, draws, window

    return edited(EXAMPLES / "ashgrove_bypass_week.xlsx", tmp_path, draw, "ashgrove.xlsx")


def test_draws_that_would_not_fit_in_memory_are_refused_naming_their_cell(tmp_path):
    """100,000 draws on the Ashgrove week: 16.8 million scenario-hours, each of a dozen
    arrays; `wzq run` grew past 3 GB and ended in a numpy MemoryError traceback."""
    plan = read_plan(_ashgrove_draws(tmp_path, 100_000))
    with pytest.raises(PlanError) as e:
        risk.assess(plan)
    assert [f"{p.where}: {p.message}" for p in e.value.problems] == [
        "Limits!B27: 100,000 draws of the capacity over the plan's 168 demand intervals are "
        "16,800,000 scenario-intervals, more than the 10,000,000 the risk assessment holds "
        "in memory (about 2 GB); give at most 59,523 draws in Limits!B27 (the default 1,000 "
        "puts a chance of 10 % within about 2 % either way)"
    ]
    fits = risk.plan_scenarios(read_plan(_ashgrove_draws(tmp_path, 59_523)))
    assert fits.flows_veh_h.shape == (59_523, 168)


def test_a_window_search_at_a_risk_too_long_to_wait_for_falls_back_with_a_note(tmp_path):
    """Kestrel Ridge (72 hourly rows), 100,000 draws, windows at a risk of 10 %: each
    draw is searched; `wzq run` had not finished after 5 minutes (1,000 draws took 16 s,
    10,000 took 143 s). Now the windows are those of the design demand, with a note
    naming the draws' cell and the most draws searched."""

    def draw(book):
        ws = book["Limits"]
        ws["B26"], ws["B27"], ws["B29"] = 0.08, 100_000, 10

    plan = read_plan(_kestrel(tmp_path, draw))
    found = closure_windows(plan)
    assert found.notes[-1] == (
        "Windows on the design demand alone, not at a risk: 100,000 scenarios of the plan's "
        "72 demand intervals would each be searched (a scale of 518,400,000 scenarios times "
        "intervals squared, more than the 300,000,000 searched in about 10 minutes); give "
        "at most 57,870 draws in Limits!B27."
    )
    assert found.rule == W.plan_windows(plan).rule


def test_a_plan_needing_more_memory_than_the_computer_has_ends_in_one_line(monkeypatch, capsys):
    """Whatever the limits above miss: numpy's MemoryError (as 100,000 draws of a week
    gave) ended the command in a traceback; now one line and exit status 1."""

    def out_of_memory(plan):
        raise MemoryError("Unable to allocate 128. MiB for an array with shape (100000, 168)")

    monkeypatch.setattr(wzq, "analyse", out_of_memory)
    assert main(["show", str(EXAMPLES / "kestrel_ridge_weeknight.json")]) == 1
    assert capsys.readouterr().err.splitlines() == [
        "wzq: this plan needs more memory than this computer has (Unable to allocate 128. MiB "
        "for an array with shape (100000, 168)); nothing was written. Shorten the plan, or "
        "give fewer draws of the capacity on the Limits sheet"
    ]


# -- counts of fewer lanes than the road has ------------------------------------------------


LARKSPUR = EXAMPLES / "larkspur_vale_week.xlsx"


def _larkspur(tmp_path: Path, change) -> Path:
    """The Larkspur Vale week: its design demand from the count file beside it."""
    path = edited(LARKSPUR, tmp_path, change, "larkspur.xlsx")
    shutil.copyfile(EXAMPLES / "larkspur_vale_eb_2026.vol", tmp_path / "larkspur_vale_eb_2026.vol")
    return path


def _warned(path: Path, word: str) -> list[str]:
    """The input warnings of the plan at ``path`` (JSON or workbook) that hold ``word``."""
    plan = load_plan(path) if path.suffix == ".json" else read_plan(path)
    return [w for w in plan.input_warnings if word in w]


def test_counts_of_fewer_lanes_than_the_road_has_are_queried(tmp_path):
    """Larkspur Vale: 'Lanes counted' typed 2 (a counter on 2 of the 3 lanes) while the
    Site sheet has 3 lanes: the counts were used as the traffic of all 3 lanes, without a
    word. A count file counted lane by lane says its lanes too (lanes 1 to 3 here)."""

    def two_lanes(book):
        book["Demand"]["K16"] = 2

    assert _warned(_larkspur(tmp_path, two_lanes), "Lanes counted") == [
        "Demand!K16: Lanes counted is 2, but the road has 3 lanes in normal operation "
        "(Site!B8): the counts are used as the traffic of all 3 lanes; if a lane was not "
        "counted, the demand is too low (count it, or design the demand another way); if "
        "the road has 2 lanes where it was counted, this is right"
    ]
    assert _warned(_larkspur(tmp_path, lambda book: None), "Lanes counted") == []


def test_a_json_plan_with_counts_of_fewer_lanes_is_queried_at_its_key(tmp_path):
    """The same in the JSON plan of Larkspur Vale: "lanes": 2 in demand.history."""
    data = json.loads((EXAMPLES / "larkspur_vale_week.json").read_text(encoding="utf-8"))
    data["demand"]["history"]["lanes"] = 2
    path = tmp_path / "larkspur.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    shutil.copyfile(EXAMPLES / "larkspur_vale_eb_2026.vol", tmp_path / "larkspur_vale_eb_2026.vol")
    assert _warned(path, "in normal operation") == [
        "demand.history.lanes: demand.history.lanes is 2, but the road has 3 lanes in normal "
        "operation (site.lanes): the counts are used as the traffic of all 3 lanes; if a lane "
        "was not counted, the demand is too low (count it, or design the demand another way); "
        "if the road has 2 lanes where it was counted, this is right"
    ]


# -- a number too large for a date ---------------------------------------------------------


def test_a_date_typed_without_its_dashes_is_named_as_the_number_typed(tmp_path):
    """Closures!A6 typed 20270503 (the date without its dashes) in its date cell: Excel
    shows ########; wzq said the cell 'shows the error #VALUE!; fix the formula', of a
    cell that holds no formula."""

    def no_dashes(book):
        book["Closures"]["A6"] = 20270503

    assert _refusals(_kestrel(tmp_path, no_dashes)) == [
        "Closures!A6: holds the number 20270503, too large for a date or time (a spreadsheet "
        "shows ########); did you mean 2027-05-03? Type the date with its dashes"
    ]


@pytest.mark.parametrize(
    ("number", "then"),
    [
        # the first and last years a date cell takes (1900-2199) are spelled back
        (19000101, "; did you mean 1900-01-01? Type the date with its dashes"),
        (21991231, "; did you mean 2199-12-31? Type the date with its dashes"),
        # a year outside them, or a number that spells no date, gets the general advice
        (22000101, "; type a date, e.g. 2027-05-03, or a time like 21:00"),
        (99999999, "; type a date, e.g. 2027-05-03, or a time like 21:00"),
    ],
)
def test_a_number_too_large_for_a_date_is_spelled_back_only_as_a_date_of_the_years_read(
    tmp_path, number, then
):
    def typed(book):
        book["Closures"]["A6"] = number

    assert _refusals(_kestrel(tmp_path, typed)) == [
        f"Closures!A6: holds the number {number}, too large for a date or time (a spreadsheet "
        f"shows ########){then}"
    ]


# -- counts over a change of the clocks -------------------------------------------------------


def _moved_to(day: dt.date):
    """Kestrel Ridge's demand and closures moved to start on ``day`` (a Saturday)."""
    shift = day - dt.date(2027, 5, 3)

    def move(book):
        for ws, rows in ((book["Demand"], range(9, 81)), (book["Closures"], range(6, 8))):
            for r in rows:
                ws.cell(r, 1).value += shift

    return move


def test_the_hour_the_clocks_skip_is_named_as_such(tmp_path):
    """Counts exported over the night summer time starts (Sun 2027-03-14): 23 rows that
    day, no 02:00. Refused, as before, but saying why the hour is missing and what to
    type (wzq runs on the clock)."""

    def skip(book):
        _moved_to(dt.date(2027, 3, 13))(book)
        ws = book["Demand"]
        for c in range(1, 4):  # Sun 02:00 is row 35: the export has no such row
            ws.cell(35, c).value = None

    assert _refusals(_kestrel(tmp_path, skip)) == [
        "Demand!B36: no demand from Sun 2027-03-14 02:00 to Sun 2027-03-14 03:00 (between "
        "rows 34 and 36): the hour the clocks skip when summer time starts? wzq runs on the "
        "clock, so type a row for it (the mean of the hours either side)"
    ]


def test_the_hour_the_clocks_repeat_is_named_as_such(tmp_path):
    """Counts over the night summer time ends (Sun 2027-11-07, US): 25 rows that day,
    01:00 twice."""

    def repeat(book):
        _moved_to(dt.date(2027, 11, 6))(book)
        ws = book["Demand"]
        for r in range(81, 34, -1):  # a row inserted below Sun 01:00 (row 34)
            for c in range(1, 4):
                ws.cell(r, c).value = ws.cell(r - 1, c).value
        ws.cell(35, 3).value = 420

    assert _refusals(_kestrel(tmp_path, repeat)) == [
        "Demand!B35: the start time Sun 2027-11-07 01:00 is also in row 34: the hour the "
        "clocks repeat when summer time ends? wzq runs on the clock, so keep one row for it, "
        "with the mean of the two hours' flows"
    ]


def test_a_light_demand_from_the_aadt_is_not_queried_as_flows_per_lane(tmp_path):
    """An AADT of 60,000 on Kestrel's 3 lanes gives a busiest hour of 2,190 veh/h, a third
    of the open road's capacity: a light road, and no flows typed per lane (the queries
    on typed flows are not made of a demand from the AADT or a count history)."""

    def from_aadt(book):
        ws = book["Demand"]
        ws["B4"], ws["F8"], ws["F9"], ws["F12"], ws["F13"] = (
            "from AADT",
            60_000,
            2026,
            dt.datetime(2027, 5, 3),
            3,
        )
        for r in range(9, 81):
            for c in (1, 2, 3):
                ws.cell(r, c).value = None

    result = wzq.analyse(read_plan(_kestrel(tmp_path, from_aadt)))
    assert result.plan.demand.flows_veh_h.max() == pytest.approx(2190.0)
    assert not [w for w in result.warnings if "per lane?" in w or "counted in each" in w]


# -- invisible characters pasted from a document ------------------------------------------


def test_words_pasted_with_an_invisible_character_are_read_as_seen(tmp_path):
    """'cones or drums' pasted from a PDF specification with a zero-width space after it
    (U+200B), and 'yes' with a zero-width joiner: refused as "'cones or drums' is not in
    the list; pick one of 'cones or drums', ...", a word the designer could see was in
    the list. An invisible character means nothing: the words are read as they show."""

    def pasted(book):
        ws = book["Closures"]
        ws["E6"], ws["F7"] = "cones or drums\u200b", "\u200dyes"

    plan = read_plan(_kestrel(tmp_path, pasted))
    assert plan.closures[0].barrier == read_plan(KESTREL).closures[0].barrier
    assert plan.closures[1].night is True


def test_a_count_file_saved_as_unicode_text_is_read(tmp_path):
    """A count table saved by Excel as 'Unicode Text' (UTF-16 with its byte-order mark):
    every line was refused as "'\\x002\\x000\\x002\\x006...' is not a date-time"."""
    text = _day_csv([str(v) for v in _DAY], sep="\t")
    (tmp_path / "utf8.txt").write_text(text, encoding="utf-8")
    (tmp_path / "utf16.txt").write_text(text, encoding="utf-16")
    utf16 = C.read_counts(tmp_path / "utf16.txt")
    assert utf16.history.flows_veh_h[0].tolist() == [float(v) for v in _DAY]
    assert utf16.history.first_day == C.read_counts(tmp_path / "utf8.txt").history.first_day


def test_counts_written_with_three_decimals_are_read_as_decimals():
    """A count export that writes every value with three decimals ('120.000', '87.500',
    '1402.000'): its points are decimal points, as its values of 1,000 or more show, so
    '412.500' is 412.5 and nothing is refused; so is a file of small counts alone
    ('120.000', read with points for thousands as 120,000 vehicles, more than any road
    carries in an hour)."""
    written = [f"{v:.3f}" for v in _DAY]
    written[7] = "412.500"
    read = C.read_csv_text(_day_csv(written), "decimals.csv")
    assert read.history.flows_veh_h[0][:9].tolist() == [120, 80, 60, 55, 90, 310, 860, 412.5, 1876]
    small = [f"{v:.3f}" for v in _DAY if v < 1000] + ["990.000"] * 11
    read = C.read_csv_text(_day_csv(small), "small.csv")
    assert read.history.flows_veh_h[0][:3].tolist() == [120.0, 80.0, 60.0]
