"""Round six of the red team: a designer's spreadsheet habits that were read without a word.

Each case is worked on a shipped example, changed as a designer in a hurry would in
Excel or LibreOffice, and checked for the warning that names the cell.
"""

from __future__ import annotations

import dataclasses
import shutil
from pathlib import Path

import numpy as np
import openpyxl
from openpyxl.comments import Comment
from openpyxl.workbook.defined_name import DefinedName

import wzq
from wzq.engine import plausibility
from wzq.io.jsonplan import load_plan
from wzq.io.workbook.reader import read_plan

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.xlsx"


def _kestrel(tmp_path: Path, change) -> Path:
    path = tmp_path / "kestrel.xlsx"
    shutil.copyfile(KESTREL, path)
    book = openpyxl.load_workbook(path)
    change(book)
    book.save(path)
    return path


def test_a_demand_column_sorted_on_its_own_is_queried(tmp_path):
    """Kestrel Ridge: 72 hourly counts (Demand!C9:C80, 400 to 5,400 veh/h) sorted from
    smallest to largest with their dates and times left in order."""

    def sort_the_column_alone(book):
        ws = book["Demand"]
        flows = sorted(ws.cell(r, 3).value for r in range(9, 81))
        for r, q in zip(range(9, 81), flows, strict=True):
            ws.cell(r, 3).value = q

    plan = read_plan(_kestrel(tmp_path, sort_the_column_alone))
    said = [w for w in wzq.analyse(plan).warnings if "sorted" in w]
    assert said == [
        "Demand!C9: the demand only rises from Mon 2027-05-03 00:00 to Wed 2027-05-05 23:00 "
        "(400 to 5,400 veh/h), where traffic rises and falls over each day: was the demand "
        "column sorted on its own, away from its dates and times? Check the counts against "
        "their hours"
    ]


def test_a_day_sorted_from_largest_to_smallest_is_queried_at_its_first_row(tmp_path):
    """Only the second day (Demand!C33:C56, Tue 00:00-23:00) sorted, largest first."""

    def sort_one_day(book):
        ws = book["Demand"]
        flows = sorted((ws.cell(r, 3).value for r in range(33, 57)), reverse=True)
        for r, q in zip(range(33, 57), flows, strict=True):
            ws.cell(r, 3).value = q

    plan = read_plan(_kestrel(tmp_path, sort_one_day))
    said = plausibility.sorted_demand(plan)
    assert len(said) == 1
    assert said[0].startswith("Demand!C33: the demand only falls from Tue 2027-05-04 00:00")
    assert "(5,400 to 400 veh/h)" in said[0]


def test_real_counts_and_plans_of_a_few_steps_are_not_queried():
    for name in ("kestrel_ridge_weeknight", "ashgrove_bypass_week", "fenwick_downs_weekend"):
        assert plausibility.sorted_demand(load_plan(EXAMPLES / f"{name}.json")) == [], name
    plan = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    n = len(plan.demand.flows_veh_h)
    # five steps rising over three days: a made-up plan, not a sorted column
    steps = np.repeat([1000.0, 1500.0, 2000.0, 2500.0, 3000.0], -(-n // 5))[:n]
    stepped = dataclasses.replace(plan, demand=dataclasses.replace(plan.demand, flows_veh_h=steps))
    assert plausibility.sorted_demand(stepped) == []
    # the same five steps and one more flow: six different flows rising for 72 h
    steps[-1] = 3100.0
    rising = dataclasses.replace(plan, demand=dataclasses.replace(plan.demand, flows_veh_h=steps))
    assert len(plausibility.sorted_demand(rising)) == 1


def test_a_value_typed_in_the_comment_of_a_blank_input_is_said(tmp_path):
    """The free-flow speed (Site!B11) left blank, its measured value typed in a comment:
    the blank (speed limit + 5 mi/h) is used, so the comment is named; a comment on a
    filled input (the work-zone length, Site!B12) is a note and not said."""

    def comment(book):
        book["Site"]["B11"].comment = Comment("measured 72 mph,\nspot speed survey", "JB")
        book["Site"]["B12"].comment = Comment("from the drawings", "JB")

    plan = read_plan(_kestrel(tmp_path, comment))
    said = [w for w in plan.input_warnings if "comment" in w]
    assert said == [
        "Site!B11: Free-flow speed is left blank (read as a blank cell is there), but its "
        "comment reads 'measured 72 mph, spot speed survey'; wzq never reads comments: type "
        "the value in the cell if the comment holds it"
    ]
    assert plan.site.free_flow_speed is None  # read as the blank it is


def test_counts_pasted_with_another_locales_thousands_separator_are_queried(tmp_path):
    """Kestrel Ridge's counts of 1,000 veh/h and more pasted as '1.500' into a spreadsheet
    that reads a decimal point: 1.5 veh/h. The first by day is 06:00 on Monday (Demand!C15,
    3,600 veh/h read as 3.6); 45 hours of the 72 carry 1,000 veh/h or more, all by day
    (06:00-21:00 each day, 15 a day), among night flows up to 700 veh/h."""

    def paste(book):
        ws = book["Demand"]
        for r in range(9, 81):
            if ws.cell(r, 3).value >= 1000:
                ws.cell(r, 3).value = ws.cell(r, 3).value / 1000

    plan = read_plan(_kestrel(tmp_path, paste))
    assert plausibility.thousands_as_decimals(plan) == [
        "Demand!C15: demand 3.6 veh/h at Mon 2027-05-03 06:00 (and 44 more daytime flows "
        "like it), among flows up to 700 veh/h: a count of 3,600 typed or pasted with the "
        "thousands separator of another locale ('3.600' read as 3.6)? Type the counts as "
        "plain whole numbers"
    ]
    # every count in thousands (a busy road): the same, with no flow of hundreds around
    q = np.full(72, 1.25)
    q[:6] = 0.8  # 800 veh/h the first night, read as 0.8
    quiet = dataclasses.replace(plan, demand=dataclasses.replace(plan.demand, flows_veh_h=q))
    said = plausibility.thousands_as_decimals(quiet)
    assert len(said) == 1 and said[0].startswith("Demand!C15: demand 1.25 veh/h at Mon")


def test_whole_counts_and_flows_with_more_decimals_are_not_queried():
    for name in ("kestrel_ridge_weeknight", "ashgrove_bypass_week", "fenwick_downs_weekend"):
        assert plausibility.thousands_as_decimals(load_plan(EXAMPLES / f"{name}.json")) == []
    plan = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    q = plan.demand.flows_veh_h.copy()
    q[7] = 5.2345  # a flow with four decimals (computed, not a count of thousands)
    odd = dataclasses.replace(plan, demand=dataclasses.replace(plan.demand, flows_veh_h=q))
    assert plausibility.thousands_as_decimals(odd) == []


def test_a_copy_of_an_input_sheet_renamed_is_named_by_the_names_excel_copies_with_it(tmp_path):
    """Excel copies a sheet with sheet-level copies of the workbook's names that point at
    it (from memory of Excel's behaviour); the copy of Site renamed 'Site v2', 2 lanes
    typed on it, is not read: the plan keeps Site's 3 lanes, and the copy is named."""

    def copy_site(book):
        ws = book.copy_worksheet(book["Site"])
        ws.title = "Site v2"
        ws["B8"] = 2
        ws.defined_names["site_lanes"] = DefinedName("site_lanes", attr_text="'Site v2'!$B$8")
        mine = book.create_sheet("My sums")
        mine.defined_names["my_total"] = DefinedName("my_total", attr_text="'My sums'!$A$1")

    plan = read_plan(_kestrel(tmp_path, copy_site))
    assert plan.site.lanes == 3
    said = [w for w in plan.input_warnings if "copy" in w]
    assert said == [
        "sheet 'Site v2': this sheet looks like a copy of the input sheet 'Site' and is not "
        "read: the plan is read from 'Site' only; type your changes there, or delete the copy"
    ]


def test_a_copy_renamed_as_a_copy_of_another_input_sheet_is_named_by_its_names(tmp_path):
    """A copy of Site renamed 'Demand (2)' (the title Excel gives a copy of Demand): the
    sheet-level names Excel copied with it say it is Site's copy, so the designer is sent
    to Site, where the lanes typed on the copy belong, not to Demand."""

    def copy_site(book):
        ws = book.copy_worksheet(book["Site"])
        ws.title = "Demand (2)"
        ws["B8"] = 2
        ws.defined_names["site_lanes"] = DefinedName("site_lanes", attr_text="'Demand (2)'!$B$8")

    plan = read_plan(_kestrel(tmp_path, copy_site))
    assert plan.site.lanes == 3
    assert [w for w in plan.input_warnings if "copy" in w] == [
        "sheet 'Demand (2)': this sheet looks like a copy of the input sheet 'Site' and is not "
        "read: the plan is read from 'Site' only; type your changes there, or delete the copy"
    ]


def test_a_renamed_copy_is_named_by_any_workbook_name_excel_copied_with_it(tmp_path):
    """A copy of Approach renamed 'Approach v2' whose landmark table was converted to a
    range (no table copy left to tell): the sheet-level copy of the template's
    'approach_landmark_names' says where it came from; a copy of Demand renamed
    'Counts 2026' is told by the designer's own name for a Demand cell. A sheet-level
    name no workbook name matches tells nothing."""

    def copies(book):
        ws = book.copy_worksheet(book["Approach"])
        ws.title = "Approach v2"
        ws.defined_names["approach_landmark_names"] = DefinedName(
            "approach_landmark_names", attr_text="'Approach v2'!$A$8:$A$19"
        )
        book.defined_names["my_peak"] = DefinedName("my_peak", attr_text="Demand!$C$20")
        ws = book.copy_worksheet(book["Demand"])
        ws.title = "Counts 2026"
        ws.defined_names["my_peak"] = DefinedName("my_peak", attr_text="'Counts 2026'!$C$20")
        mine = book.create_sheet("My sums")
        mine.defined_names["my_total"] = DefinedName("my_total", attr_text="'My sums'!$A$1")

    plan = read_plan(_kestrel(tmp_path, copies))
    said = [w for w in plan.input_warnings if "copy" in w]
    assert said == [
        f"sheet '{title}': this sheet looks like a copy of the input sheet '{home}' and is not "
        f"read: the plan is read from '{home}' only; type your changes there, or delete the copy"
        for title, home in (("Approach v2", "Approach"), ("Counts 2026", "Demand"))
    ]


def test_a_value_typed_in_the_comment_of_a_blank_table_cell_is_said(tmp_path):
    """Night 2's capacity override (Closures!G7) left blank, the agency's figure typed in
    a comment: the capacity model is used, and the comment named under its column."""

    def comment(book):
        book["Closures"]["G7"].comment = Comment("county: use 1,350 for 2 lanes closed", "JB")
        book["Closures"]["H7"].comment = Comment("saw-cut first", "JB")  # on a filled note

    plan = read_plan(_kestrel(tmp_path, comment))
    assert plan.closures[1].capacity_override_veh_h_ln is None
    assert [w for w in plan.input_warnings if "comment" in w] == [
        "Closures!G7: Capacity override (veh/h/ln) is left blank (read as a blank cell is "
        "there), but its comment reads 'county: use 1,350 for 2 lanes closed'; wzq never "
        "reads comments: type the value in the cell if the comment holds it"
    ]


def test_one_demand_merged_over_two_hours_is_read_in_each_and_said(tmp_path):
    """Demand!C15:C16 merged (Mon 06:00 and 07:00): the 3,600 veh/h shown across both
    is read for each hour, as shown (7,200 vehicles in the two hours), and said, since
    it may be the count of the two hours together."""
    plan = read_plan(_kestrel(tmp_path, lambda b: b["Demand"].merge_cells("C15:C16")))
    assert plan.demand.flows_veh_h[6:8].tolist() == [3600.0, 3600.0]
    assert [w for w in plan.input_warnings if "merged" in w] == [
        "Demand!C15:C16: one number (3,600) merged over 2 rows is read in each of them, as "
        "shown; if it is meant for the rows together, unmerge the cells and type each row's "
        "value"
    ]


def test_a_date_merged_down_its_rows_is_not_said(tmp_path):
    plan = read_plan(_kestrel(tmp_path, lambda b: b["Demand"].merge_cells("A9:A32")))
    assert [w for w in plan.input_warnings if "merged" in w] == []


def test_a_ramps_hourly_flows_sorted_on_their_own_are_queried_at_the_ramps_cell(tmp_path):
    """Brackenholm: the Sorrel Lane on-ramp's 24 hourly flows (Approach!I8:I31, from
    Thu 2027-06-10 12:00) sorted from largest to smallest with their hours in order."""
    path = tmp_path / "brackenholm.xlsx"
    shutil.copyfile(EXAMPLES / "brackenholm_interchange_evening.xlsx", path)
    book = openpyxl.load_workbook(path)
    ws = book["Approach"]
    flows = sorted((ws.cell(r, 9).value for r in range(8, 32)), reverse=True)
    for r, q in zip(range(8, 32), flows, strict=True):
        ws.cell(r, 9).value = q
    book.save(path)
    plan = read_plan(path)
    said = plausibility.sorted_demand(plan)
    assert len(said) == 1
    assert said[0].startswith(
        "Approach!I8: the 'Sorrel Lane on-ramp' only falls from Thu 2027-06-10 12:00 to "
        f"Fri 2027-06-11 11:00 ({flows[0]:,} to {flows[-1]:,} veh/h)"
    )
    assert "was the ramp's column sorted on its own" in said[0]
    assert (
        plausibility.sorted_demand(read_plan(EXAMPLES / "brackenholm_interchange_evening.xlsx"))
        == []
    )


def test_comments_on_blank_cells_are_found_to_the_edges_of_the_table_and_not_in_its_header(
    tmp_path,
):
    """The closure table (A5:H35, header on row 5): comments on blank cells of its first
    and last column and its last row are named; one on a cleared header cell is not (the
    header is not an input), and a column whose header cell is cleared or gone is named
    'this cell', not 'None'. A table left out of the plan (the AADT shares, deleted in an
    hourly plan) does not end the search."""

    def edit(wb):
        ws = wb["Closures"]
        ws["A35"].comment = Comment("Thu night too?", "JB")
        ws["C35"].comment = Comment("mid", "JB")
        ws["H35"].comment = Comment("ask the county", "JB")
        ws["H5"].value = None  # the Note header cleared; its column record keeps the name
        ws["H5"].comment = Comment("header note", "JB")
        del ws._cells[(5, 7)]  # the override's header cell gone
        ws["G6"].comment = Comment("1,350 per county", "JB")
        shares = next(w for w in wb.worksheets if "HourlyShareTable" in w.tables)
        del shares.tables["HourlyShareTable"]

    plan = read_plan(_kestrel(tmp_path, edit))
    tail = "; wzq never reads comments: type the value in the cell if the comment holds it"
    assert [w for w in plan.input_warnings if "comment" in w] == [
        "Closures!G6: this cell is left blank (read as a blank cell is there), but its "
        "comment reads '1,350 per county'" + tail,
        "Closures!A35: Date is left blank (read as a blank cell is there), but its comment "
        "reads 'Thu night too?'" + tail,
        "Closures!C35: To is left blank (read as a blank cell is there), but its comment "
        "reads 'mid'" + tail,
        "Closures!H35: this cell is left blank (read as a blank cell is there), but its "
        "comment reads 'ask the county'" + tail,
    ]


def test_a_long_comment_is_cut_at_80_characters_and_a_name_not_defined_is_passed_over(tmp_path):
    """Comments of 80 and 81 characters on blank inputs (the free-flow speed and the
    lateral clearance): the first is said whole, the second cut to 79 and '...'; the
    optional input 'site_wave_speed' left out of the workbook's names (as in a workbook
    made before it) is passed over."""
    eighty = "measured 72 mph on the spot speed survey of 12 May, north of the Alder Creek rmp"
    assert len(eighty) == 80

    def edit(wb):
        wb["Site"]["B11"].comment = Comment(eighty, "JB")
        wb["Site"]["B16"].value = None
        wb["Site"]["B16"].comment = Comment(eighty + "!", "JB")
        del wb.defined_names["site_wave_speed"]

    plan = read_plan(_kestrel(tmp_path, edit))
    said = [
        w.split("comment reads ")[1].split("; wzq")[0]
        for w in plan.input_warnings
        if "comment" in w
    ]
    assert said == [f"'{eighty}'", f"'{eighty[:79]}...'"]


def test_a_metric_plan_holding_speed_limits_in_mph_is_queried_at_both_cells(tmp_path):
    """Fenwick Downs (metric: 110 and 80 km/h) with the limits of a US plan typed in, 65 and
    55: posted limits in km/h step by 10, in mi/h by 5 (common practice, no source)."""
    path = tmp_path / "fenwick.xlsx"
    shutil.copyfile(EXAMPLES / "fenwick_downs_weekend.xlsx", path)
    book = openpyxl.load_workbook(path)
    book["Site"]["B9"], book["Site"]["B10"] = 65, 55
    book.save(path)
    said = [w for w in wzq.analyse(read_plan(path)).warnings if "mi/h" in w]
    assert said == [
        "Site!B9 (and Site!B10): a speed limit of 65 km/h and a work-zone speed limit of "
        "55 km/h: posted limits in km/h are multiples of 10 almost everywhere, limits in mi/h "
        "step by 5. Were US values kept when the unit system (Start!B14) was set to metric? "
        "Every value is read in the unit system chosen"
    ]


def test_metric_limits_in_tens_and_us_limits_ending_in_5_are_not_queried():
    fenwick = load_plan(EXAMPLES / "fenwick_downs_weekend.json")  # 110 and 80 km/h
    assert plausibility.speed_limits_in_mph(fenwick) == []
    kestrel = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")  # US: 65 and 55 mi/h
    assert plausibility.speed_limits_in_mph(kestrel) == []
    # one limit ending in 5 km/h is enough; 72.5 km/h (not whole) is not a posted limit
    for kmh, said in ((75.0, 1), (72.5, 0), (70.0, 0)):
        site = dataclasses.replace(fenwick.site, work_zone_speed_limit=kmh / 3.6)
        found = plausibility.speed_limits_in_mph(dataclasses.replace(fenwick, site=site))
        assert len(found) == said, kmh
        if said:
            assert found[0].startswith(
                "site.work_zone_speed_limit: a work-zone speed limit of 75 km/h:"
            )
