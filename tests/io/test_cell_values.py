"""Cells into numbers: how the reader converts what a user typed, and what it says when it
cannot, always naming the sheet and cell.

Fast on purpose (each test loads a small filled template from memory and reads it, a few
hundredths of a second), so that the quick run and the mutation run (docs/mutation.md)
check the reader's value paths directly, not only the slow end-to-end file
``test_nothing_silently_wrong.py``. Every expected message is written out here from the
rule it states (the input's label, its range in the file's unit, the value as the user
typed it); the expected values come from the spreadsheet's own date system (day 1 is
1900-01-01, serial = days since 1899-12-30 for dates after February 1900: ECMA-376
Part 1, 18.17.4.1) or are worked by hand.
"""

from __future__ import annotations

import datetime as dt
import io
from collections.abc import Callable
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from openpyxl.styles import Font, PatternFill
from openpyxl.styles.colors import Color
from openpyxl.utils.datetime import CALENDAR_MAC_1904
from workbook_helpers import (
    aadt_edit,
    fill_template,
    named_cell,
    problem,
    read,
    set_named,
    table_cell,
)

from wzq.engine.plan import Plan
from wzq.io import fields as F
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader import BookReader
from wzq.io.workbook.reader.values import contrast, unseen

KESTREL = Path(__file__).resolve().parents[2] / "examples" / "kestrel_ridge_weeknight.json"
CLOSURES = L.CLOSURE_TABLE


def serial(d: dt.date) -> int:
    """The 1900 date system's serial number of a date after 1900-02-28 (ECMA-376 18.17.4.1)."""
    return (d - dt.date(1899, 12, 30)).days


@pytest.fixture(scope="module")
def kestrel(tmp_path_factory: pytest.TempPathFactory) -> bytes:
    """The Kestrel Ridge example (US units, three lanes, first closure Mon 2027-05-03
    21:00 to 05:00 on row 6 of the closure table) typed into a fresh template."""
    path = fill_template(load_plan(KESTREL), tmp_path_factory.mktemp("cells") / "k.xlsx")
    return path.read_bytes()


def named(name: str, value: Any, number_format: str | None = None) -> Callable[[Any], None]:
    def edit(wb: Any) -> None:
        cell = set_named(wb, name, value)
        if number_format is not None:
            cell.number_format = number_format

    return edit


def closure(header: str, value: Any, index: int = 0) -> Callable[[Any], None]:
    def edit(wb: Any) -> None:
        table_cell(wb, CLOSURES, index, header).value = value

    return edit


# -- numbers --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("value", "message"),
    [
        (True, "Speed limit holds TRUE, not a number; type a number"),
        (False, "Speed limit holds FALSE, not a number; type a number"),
        (float("inf"), "Speed limit is not a finite number; type a number"),
        (float("nan"), "Speed limit is not a finite number; type a number"),
        (
            dt.datetime(2027, 5, 3, 8, 30),
            "Speed limit holds a date or time (2027-05-03 08:30), not a number; set the "
            "cell's format to General or Number and type the number",
        ),
        (
            dt.time(8, 30),
            "Speed limit holds a date or time (08:30:00), not a number; set the "
            "cell's format to General or Number and type the number",
        ),
        (
            "65 mph",
            "Speed limit: '65 mph' is text, not a number; type only the number, without its unit",
        ),
        (
            " 1,065 ",
            "Speed limit: '1,065' is stored as text; type only the number, without its unit",
        ),
        (None, "Speed limit is blank; type a number (mi/h)"),
        ("   ", "Speed limit is blank; type a number (mi/h)"),
    ],
)
def test_a_cell_that_is_not_a_number_is_named_with_what_it_holds(
    kestrel: bytes, value: Any, message: str
) -> None:
    assert problem(kestrel, named("site_speed_limit", value), "Site!B9") == message


@pytest.mark.parametrize(
    ("name", "value", "where", "message"),
    [
        # bounds (10, 90) mi/h in US units; the ends allowed
        ("site_speed_limit", 95, "Site!B9", "Speed limit must be 10 to 90 mi/h (got 95)"),
        ("site_speed_limit", 9.5, "Site!B9", "Speed limit must be 10 to 90 mi/h (got 9.5)"),
        ("site_speed_limit", -5, "Site!B9", "Speed limit cannot be negative (got -5)"),
        # a unit that is not a length or a speed: shown, but no unit to check
        ("site_lanes", 9, "Site!B8", "Lanes in normal operation must be 1 to 8 lanes (got 9)"),
        # a year: no unit shown; thousands separated
        ("cost_dollar_year", 1949, None, "Price year must be 1,950 to 2,100 (got 1,949)"),
        # an end left out of the range (open_hi): 20 % itself refused
        (
            "site_capacity_drop_work_zone",
            20,
            "Site!B24",
            "Capacity drop at breakdown, work zone must be 0 to below 20 % (got 20)",
        ),
        # open at the low end (open_lo): 0 refused, and a ratio has no unit shown
        (
            "limit_demand_capacity",
            0,
            None,
            "Highest allowed demand / capacity must be above 0 to 5 (got 0)",
        ),
    ],
)
def test_a_number_out_of_range_gives_the_range_in_the_files_units(
    kestrel: bytes, name: str, value: float, where: str | None, message: str
) -> None:
    out = read(kestrel, named(name, value))
    assert isinstance(out, dict)
    cell = None
    wb = openpyxl.load_workbook(io.BytesIO(kestrel))
    c = named_cell(wb, name)
    cell = f"{c.parent.title}!{c.coordinate}"
    if where is not None:
        assert cell == where
    check = "check the value and its unit" if name == "site_speed_limit" else "check the value"
    assert out[cell] == f"{message}; {check}"


@pytest.mark.parametrize(
    ("name", "value", "attribute", "expected"),
    [
        ("site_speed_limit", 90, "speed_limit_mph", 90.0),  # the upper end is allowed
        ("site_speed_limit", 10, "speed_limit_mph", 10.0),  # and the lower end
        ("site_capacity_drop_work_zone", 19.5, "capacity_drop_pct_work_zone", 19.5),
        ("site_capacity_drop_work_zone", 0, "capacity_drop_pct_work_zone", 0.0),
        ("site_lanes", 3.0, "lanes", 3),  # a whole number stored as a float
    ],
)
def test_a_number_at_the_end_of_its_range_is_read(
    kestrel: bytes, name: str, value: float, attribute: str, expected: float
) -> None:
    def edit(wb: Any) -> None:
        named(name, value)(wb)
        if name == "site_speed_limit":  # the work-zone limit may not be above it
            set_named(wb, "site_work_zone_speed_limit", value)

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    if attribute == "speed_limit_mph":  # in m/s: 1 mi/h = 0.44704 m/s exactly (NIST SP 811)
        assert plan.site.speed_limit == pytest.approx(expected * 0.44704, rel=1e-12)
    else:
        got = getattr(plan.site, attribute)
        assert got == expected and type(got) is type(expected)


def test_a_whole_number_input_refuses_a_fraction(kestrel: bytes) -> None:
    message = problem(kestrel, named("site_lanes", 2.5), "Site!B8")
    assert message == "Lanes in normal operation must be a whole number, got 2.5"


def test_a_number_shown_with_thousands_separators_is_quoted_as_typed(kestrel: bytes) -> None:
    message = problem(kestrel, named("site_speed_limit", 1234567.0), "Site!B9")
    assert (
        message == "Speed limit must be 10 to 90 mi/h (got 1,234,567); check the value and its unit"
    )


# -- percentages ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("value", "number_format", "share", "warned"),
    [
        (0.08, "0%", 0.08, False),  # a percent cell shows 8 %: 8 % it is
        (0.085, "0.0%", 0.085, False),
        (0.08, '0.0"%"', 0.0008, True),  # the sign in quotes does not scale: 0.08 %
        (0.08, "0.0\\%", 0.0008, True),  # nor an escaped sign
        ("8 %", "General", 0.08, False),  # typed as text with its sign
        ("8%", "@", 0.08, False),
        (8, "General", 0.08, False),
        (1.0, "General", 0.01, True),  # 1 % looks like a fraction 1.0 typed for 100 %
        (1.5, "General", 0.015, False),  # 1.5 cannot be a fraction
        (0, "General", 0.0, False),  # no heavy vehicles: nothing to ask
    ],
)
def test_a_percentage_is_read_as_the_cell_shows_it(
    kestrel: bytes, value: Any, number_format: str, share: float, warned: bool
) -> None:
    plan = read(kestrel, named("site_heavy_vehicle_percent", value, number_format))
    assert isinstance(plan, Plan), plan
    assert plan.site.heavy_vehicle_share == pytest.approx(share, rel=1e-12)
    hints = [w for w in plan.input_warnings if w.startswith("Site!B13: Heavy vehicles is")]
    assert bool(hints) is warned


def test_a_fraction_typed_for_a_percentage_gets_a_hint_with_the_percentage(kestrel: bytes) -> None:
    plan = read(kestrel, named("site_heavy_vehicle_percent", 0.5))
    assert isinstance(plan, Plan)
    assert (
        "Site!B13: Heavy vehicles is 0.5 %: did you mean 50 %? Percentages are typed as "
        "numbers of percent (type 50, or 50% to get a percent-formatted cell); ignore this "
        "if 0.5 % is right"
    ) in plan.input_warnings


# -- choices and text -----------------------------------------------------------------------


@pytest.mark.parametrize(
    ("value", "expected"),
    [("  ROLLING ", "rolling"), ("Level", "level"), ("level", "level")],
)
def test_a_choice_is_read_whatever_its_case_and_spaces(
    kestrel: bytes, value: str, expected: str
) -> None:
    plan = read(kestrel, named("site_terrain", value))
    assert isinstance(plan, Plan), plan
    assert plan.site.terrain == expected


@pytest.mark.parametrize(
    ("value", "expected"),
    [("mostly familiar", "familiar"), ("familiar", "familiar"), (" Unfamiliar ", "unfamiliar")],
)
def test_a_choice_typed_as_its_word_or_as_the_plan_files_value(
    kestrel: bytes, value: str, expected: str
) -> None:
    # Drivers: the dropdown's words ('mostly familiar') or the JSON plan's values ('familiar')
    plan = read(kestrel, named("site_driver_population", value))
    assert isinstance(plan, Plan), plan
    assert plan.site.driver_population == expected


def test_a_choice_not_in_the_list_names_the_choices(kestrel: bytes) -> None:
    message = problem(kestrel, named("site_terrain", " hilly "), "Site!B14")
    assert message == (
        "Terrain: 'hilly' is not in the list; pick one of 'level', 'rolling' from the dropdown"
    )
    blank = problem(kestrel, named("site_terrain", None), "Site!B14")
    assert blank == "Terrain is blank; pick one from the dropdown list"


@pytest.mark.parametrize(("value", "expected"), [(True, True), (False, False), ("No", False)])
def test_a_yes_no_choice_reads_true_and_false(kestrel: bytes, value: Any, expected: bool) -> None:
    plan = read(kestrel, named("opt_capacity_drop", value))
    assert isinstance(plan, Plan), plan
    assert plan.options.capacity_drop is expected


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        (2027.0, "2027"),  # a whole number typed in a text cell: no '.0'
        (2027.5, "2027.5"),
        (dt.datetime(2027, 5, 3, 21, 0), "2027-05-03 21:00"),
        ("  Night works  ", "Night works"),
    ],
)
def test_text_is_read_as_shown(kestrel: bytes, value: Any, expected: str) -> None:
    plan = read(kestrel, named("meta_title", value))
    assert isinstance(plan, Plan), plan
    assert plan.meta.title == expected


@pytest.mark.parametrize("error", ["#DIV/0!", "#N/A", " #VALUE! "])
def test_an_error_shown_in_a_cell_is_named(kestrel: bytes, error: str) -> None:
    message = problem(kestrel, named("site_speed_limit", error), "Site!B9")
    assert message == f"shows the error {error.strip()}; fix the formula or type the value"


# -- dates and times in the closure table -----------------------------------------------------


def first_closure(plan: Plan | dict[str, str]) -> tuple[dt.datetime, dt.datetime]:
    assert isinstance(plan, Plan), plan
    c = plan.closures[0]
    return c.start, c.end


@pytest.mark.parametrize(
    ("header", "value", "start", "end"),
    [
        ("Date", "2027-5-3", (3, 21, 0), (4, 5, 0)),  # ISO text, month and day not padded
        ("Date", "Mon 2027-05-03", (3, 21, 0), (4, 5, 0)),  # with its weekday
        ("Date", serial(dt.date(2027, 5, 3)), (3, 21, 0), (4, 5, 0)),  # a serial number
        ("Date", dt.date(2027, 5, 3), (3, 21, 0), (4, 5, 0)),
        ("From", "21:00", (3, 21, 0), (4, 5, 0)),
        ("From", "21:00:30", (3, 21, 0, 30), (4, 5, 0)),
        ("From", 0.875, (3, 21, 0), (4, 5, 0)),  # 21 h = 0.875 day
        ("From", dt.timedelta(hours=21), (3, 21, 0), (4, 5, 0)),  # an elapsed-time cell
        ("From", dt.datetime(1899, 12, 30, 21, 0), (3, 21, 0), (4, 5, 0)),  # a time as serial
        ("From", "2027-05-03 21:00", (3, 21, 0), (4, 5, 0)),  # date and time in From
        ("To", "24:00", (3, 21, 0), (4, 0, 0)),  # 24:00 is midnight at the end of the day
        ("To", 1.0, (3, 21, 0), (4, 0, 0)),  # 24:00 as a fraction of a day
        ("To", "21:00", (3, 21, 0), (4, 21, 0)),  # at From: the next day
        ("To", "23:00", (3, 21, 0), (3, 23, 0)),  # after From: the same day
        ("To", "2027-05-04 06:00", (3, 21, 0), (4, 6, 0)),
        ("To", serial(dt.date(2027, 5, 4)) + 0.25, (3, 21, 0), (4, 6, 0)),  # 06:00 as a serial
        ("To", dt.timedelta(days=serial(dt.date(2027, 5, 4)), hours=6), (3, 21, 0), (4, 6, 0)),
    ],
)
def test_closure_dates_and_times_as_spreadsheets_store_them(
    kestrel: bytes, header: str, value: Any, start: tuple, end: tuple
) -> None:
    got = first_closure(read(kestrel, closure(header, value)))
    assert got == (dt.datetime(2027, 5, *start), dt.datetime(2027, 5, *end))


# Row 6 holds the first closure: Date A6, From B6, To C6, Lanes closed D6.
@pytest.mark.parametrize(
    ("header", "value", "where", "message"),
    [
        (
            "Date",
            45,  # serial 45 is 1900-02-14 (January has 31 days; 1900-02-29 counts after it)
            "Closures!A6",
            "Date: 45 is a number, not a date (a spreadsheet reads it as 45 days after its "
            "day zero, 1900-02-14); type a date, e.g. 2027-05-03",
        ),
        (
            "Date",
            dt.datetime(1900, 2, 14),  # the same number shown as a date
            "Closures!A6",
            "Date: 45 is a number, not a date (a spreadsheet reads it as 45 days after its "
            "day zero, 1900-02-14); type a date, e.g. 2027-05-03",
        ),
        (
            "Date",
            dt.datetime(2027, 5, 3, 21, 0),
            "Closures!A6",
            "Date holds a time of day (2027-05-03 21:00); type only the date",
        ),
        (
            "Date",
            "2027-02-30",
            "Closures!A6",
            "Date: '2027-02-30' is not a date; type a date, e.g. 2027-05-03",
        ),
        (
            "Date",
            "3 May",
            "Closures!A6",
            "Date: '3 May' is not a date; type a date, e.g. 2027-05-03",
        ),
        (
            "Date",
            dt.date(2300, 5, 3),
            "Closures!A6",
            "Date: the year 2300 is outside 1900-2199; check the date",
        ),
        (
            "Date",
            3_000_000,
            "Closures!A6",
            "Date: 3,000,000 is past the last date a spreadsheet can hold (9999-12-31); "
            "type a date and time, e.g. 2027-05-03 21:00",
        ),
        (
            "From",
            21,
            "Closures!B6",
            "From: 21 is a number, not a time (a spreadsheet reads it as 21 days after its "
            "day zero, 1900-01-21); did you mean 21:00? Type it with the colon",
        ),
        (
            "From",
            24,
            "Closures!B6",
            "From: 24 is a number, not a time (a spreadsheet reads it as 24 days after its "
            "day zero, 1900-01-24); did you mean 24:00? Type it with the colon",
        ),
        (
            "From",
            25,
            "Closures!B6",
            "From: 25 is a number, not a time (a spreadsheet reads it as 25 days after its "
            "day zero, 1900-01-25); type a time, e.g. 21:00",
        ),
        (
            "From",
            21.5,
            "Closures!B6",
            "From: 21.5 is a number, not a time (a spreadsheet reads it as 21.5 days after its "
            "day zero, 1900-01-21); type a time, e.g. 21:00",
        ),
        (
            "From",
            "25:00",
            "Closures!B6",
            "From is 25:00, past 24:00; use 00:00-23:59 (in a formula, wrap the time in "
            "MOD(...,1) to get 01:00)",
        ),
        (
            "From",
            "24:00",
            "Closures!B6",
            "From is 24:00, past 24:00; use 00:00-23:59 (in a formula, wrap the time in "
            "MOD(...,1) to get 00:00)",
        ),
        (
            "From",
            1.5,  # 36 hours
            "Closures!B6",
            "From is 36:00, past 24:00; use 00:00-23:59 (in a formula, wrap the time in "
            "MOD(...,1) to get 12:00)",
        ),
        (
            "From",
            "21:60",
            "Closures!B6",
            "From: '21:60' is not a time; type a time like 21:00 (24-hour clock)",
        ),
        (
            "From",
            "21:00:60",
            "Closures!B6",
            "From: '21:00:60' is not a time; type a time like 21:00 (24-hour clock)",
        ),
        (
            "From",
            "2027-05-03 21:60",
            "Closures!B6",
            "From: '2027-05-03 21:60' is not a time; type a time like 21:00 (24-hour clock)",
        ),
        (
            "From",
            "2027-05-03 25:00",
            "Closures!B6",
            "From: '2027-05-03 25:00' is not a time; type a time like 21:00 (24-hour clock)",
        ),
        (
            "From",
            "2027-05-03 21:00",
            None,  # checked below: the date in From against Date
            "",
        ),
        (
            "From",
            None,
            "Closures!B6",
            "From is blank; type a time like 07:00",
        ),
        (
            "To",
            None,
            "Closures!C6",
            "To is blank; type the end time, e.g. 05:00",
        ),
        (
            "To",
            "25:30",
            "Closures!C6",
            "To is 25:30, past 24:00; a 'To' at or before 'From' already ends the next day, "
            "so type 01:30 (in a formula, wrap the time in MOD(...,1)); 24:00 is midnight at "
            "the end of the day",
        ),
        (
            "To",
            "2027-05-03 20:00",
            "Closures!C6",
            "the closure ends (Mon 2027-05-03 20:00) before it starts (Mon 2027-05-03 21:00); "
            "check the date and time in To",
        ),
        (
            "To",
            "2027-05-03 21:00",
            "Closures!C6",
            "the closure ends (Mon 2027-05-03 21:00) before it starts (Mon 2027-05-03 21:00); "
            "check the date and time in To",
        ),
        (
            "To",
            -0.25,
            "Closures!C6",
            "To: -0.25 is not a time; type a time like 21:00 (24-hour clock)",
        ),
        (
            "To",
            dt.timedelta(hours=-3),
            "Closures!C6",
            "To: -1 day, 21:00:00 is not a time; type a time like 21:00 (24-hour clock)",
        ),
        ("Lanes closed", None, "Closures!D6", "Lanes closed is blank; type a number"),
        (
            "Lanes closed",
            3,
            "Closures!D6",
            "all 3 lanes closed; at least one lane must stay open (a full closure needs a "
            "detour plan, not this analysis)",
        ),
        (
            "Lanes closed",
            4,
            "Closures!D6",
            "4 lanes closed but the road has 3; at least one lane must stay open (a full "
            "closure needs a detour plan, not this analysis)",
        ),
    ],
)
def test_a_closure_date_or_time_that_cannot_be_read_names_its_cell(
    kestrel: bytes, header: str, value: Any, where: str | None, message: str
) -> None:
    if where is None:  # 'From' holds a whole date-time of another day than Date

        def edit(wb: Any) -> None:
            closure("From", "2027-05-04 21:00")(wb)

        out = read(kestrel, edit)
        assert isinstance(out, dict)
        assert out["Closures!B6"] == (
            "From holds the date 2027-05-04 but Date is 2027-05-03; make them agree"
        )
        return
    assert problem(kestrel, closure(header, value), where) == message


def test_a_full_date_time_in_the_date_column_with_from_blank_is_the_start(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        closure("Date", dt.datetime(2027, 5, 3, 21, 30))(wb)
        closure("From", None)(wb)

    assert first_closure(read(kestrel, edit)) == (
        dt.datetime(2027, 5, 3, 21, 30),
        dt.datetime(2027, 5, 4, 5, 0),
    )


def test_a_date_time_in_from_with_date_blank_is_the_start(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        closure("Date", None)(wb)
        closure("From", "2027-05-03 22:00")(wb)

    assert first_closure(read(kestrel, edit)) == (
        dt.datetime(2027, 5, 3, 22, 0),
        dt.datetime(2027, 5, 4, 5, 0),
    )


def test_a_blank_date_with_a_time_asks_for_the_date(kestrel: bytes) -> None:
    message = problem(kestrel, closure("Date", None), "Closures!A6")
    assert message == "Date is blank; type the date, e.g. 2027-05-03"


# -- the plan's own checks and the road-user costs (Limits!B12:B17) ----------------------------


def test_a_work_zone_speed_limit_above_the_speed_limit_is_named(kestrel: bytes) -> None:
    message = problem(kestrel, named("site_work_zone_speed_limit", 70), "Site!B10")
    assert message == "the work-zone speed limit (70) is above the speed limit (65); check both"
    plan = read(kestrel, named("site_work_zone_speed_limit", 65))  # equal: allowed
    assert isinstance(plan, Plan), plan


def test_costs_blank_are_no_costs_and_given_are_read(kestrel: bytes) -> None:
    def blank(wb: Any) -> None:
        for name in ("cost_car_value", "cost_car_occupancy", "cost_truck_value"):
            set_named(wb, name, None)

    plan = read(kestrel, blank)
    assert isinstance(plan, Plan), plan
    assert plan.costs is None  # priced at the published defaults later

    def given(wb: Any) -> None:
        set_named(wb, "cost_truck_percent", 12.5)
        set_named(wb, "cost_currency", " EUR ")

    plan = read(kestrel, given)
    assert isinstance(plan, Plan), plan
    c = plan.costs
    assert (c.car_value_per_person_h, c.car_occupancy, c.truck_value_per_veh_h) == (
        19.4,
        1.48,
        36.3,
    )
    assert (c.truck_share, c.currency, c.dollar_year) == (0.125, "EUR", 2017)


def test_a_cost_input_whose_name_is_gone_does_not_hide_the_others_problems(
    kestrel: bytes,
) -> None:
    # costs given, the name of the truck share (before the currency and price year in the
    # table of cost inputs) deleted, and a price year typed as words: both are said
    def edit(wb: Any) -> None:
        set_named(wb, "cost_dollar_year", "last year")
        del wb.defined_names["cost_truck_percent"]

    out = read(kestrel, edit)
    assert isinstance(out, dict), out
    assert set(out) == {"Limits (name cost_truck_percent)", "Limits!B17"}, out
    assert out["Limits (name cost_truck_percent)"].startswith(
        "the defined name cost_truck_percent (Trucks in the traffic) is missing"
    ), out
    assert out["Limits!B17"] == (
        "Price year: 'last year' is text, not a number; type only the number, without its unit"
    )


@pytest.mark.parametrize(
    ("name", "where", "label"),
    [
        ("cost_car_occupancy", "Limits!B13", "Car occupancy"),
        ("cost_currency", "Limits!B16", "Currency"),
        ("cost_dollar_year", "Limits!B17", "Price year"),
    ],
)
def test_a_cost_input_left_blank_once_costs_are_given(
    kestrel: bytes, name: str, where: str, label: str
) -> None:
    assert problem(kestrel, named(name, None), where) == (
        f"{label} is blank; road-user costs need it once a value of time or the occupancy is "
        "given (leave those three blank to price delay at the published defaults)"
    )


def test_a_bad_cost_value_is_named(kestrel: bytes) -> None:
    message = problem(kestrel, named("cost_car_value", "20 $/h"), "Limits!B12")
    assert message == (
        "Value of time, car occupants: '20 $/h' is text, not a number; type only the number, "
        "without its unit"
    )


def test_a_sheet_of_the_users_with_an_output_sheets_name_is_refused(kestrel: bytes) -> None:
    message = problem(kestrel, lambda wb: wb.create_sheet("results"), "sheet 'results'")
    assert message.startswith(
        "this sheet of yours has the name of a sheet wzq writes its results to ('Results', "
    )
    assert message.endswith("so `wzq run` would have to replace it; rename it")


# -- what the blank hint says, and the 1904 date system -------------------------------------


def test_the_blank_hint_gives_the_unit_of_the_files_system(kestrel: bytes) -> None:
    def metric(wb: Any) -> None:
        set_named(wb, "unit_system", "metric")
        set_named(wb, "site_speed_limit", None)

    assert problem(kestrel, metric, "Site!B9") == "Speed limit is blank; type a number (km/h)"


def test_a_number_in_a_percent_cell_of_a_metric_file_is_said_in_its_metric_unit(
    kestrel: bytes,
) -> None:
    # the work-zone length (km in a metric file) given a percent format: 0.5 shows as
    # 50 % and is read as 0.5 km; the message named it in the metric unit, not in miles
    def edit(wb: Any) -> None:
        set_named(wb, "unit_system", "metric")
        set_named(wb, "site_work_zone_length", 0.5).number_format = "0%"

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    (w,) = [w for w in plan.input_warnings if "percent format" in w]
    assert w == (
        "Site!B12: Work-zone length shows 50 % (the cell has a percent format) but is read "
        "as 0.5 km; give the cell a number format and type the value"
    )


def test_without_a_unit_system_only_the_inputs_without_a_unit_are_held_to_their_range(
    kestrel: bytes,
) -> None:
    # the unit system refused: a speed limit of 900 cannot be judged (mi/h or km/h?) and
    # waits for the system to be chosen; 150 % of heavy vehicles is wrong in any system
    def edit(wb: Any) -> None:
        set_named(wb, "unit_system", "furlongs")
        set_named(wb, "site_heavy_vehicle_percent", 150)
        set_named(wb, "site_speed_limit", 900)

    assert read(kestrel, edit) == {
        "Start!B14": "Unit system: 'furlongs' is not in the list; pick one of 'US customary', "
        "'metric' from the dropdown",
        "Site!B13": "Heavy vehicles must be 0 to 100 % (got 150); check the value",
    }


def test_without_a_unit_system_two_speeds_are_still_compared(kestrel: bytes) -> None:
    # both speeds are in the one unit the file will have, whichever it is: a work-zone
    # limit above the speed limit is named now, not after the unit system is mended
    def edit(wb: Any) -> None:
        set_named(wb, "unit_system", "furlongs")
        set_named(wb, "site_speed_limit", 30)
        set_named(wb, "site_work_zone_speed_limit", 45)

    assert read(kestrel, edit)["Site!B10"] == (
        "the work-zone speed limit (45) is above the speed limit (30); check both"
    )


def test_a_value_out_of_range_is_said_once_not_again_by_the_checks_that_use_it(
    kestrel: bytes,
) -> None:
    # 5 mi/h is refused at its cell; the work-zone limit (45 mi/h) is not then said to be
    # above it: one mistake, one message
    assert read(kestrel, named("site_speed_limit", 5)) == {
        "Site!B9": "Speed limit must be 10 to 90 mi/h (got 5); check the value and its unit"
    }


def test_a_value_out_of_range_in_a_metric_file_is_said_in_its_metric_unit(
    kestrel: bytes,
) -> None:
    def edit(wb: Any) -> None:
        set_named(wb, "unit_system", "metric")
        set_named(wb, "site_speed_limit", 900)

    assert problem(kestrel, edit, "Site!B9") == (
        "Speed limit must be 15 to 150 km/h (got 900); check the value and its unit"
    )


def test_a_percentage_typed_as_words_is_refused_as_text(kestrel: bytes) -> None:
    # 'about 8 %' ends in '%' but is no number: refused at its cell like any text
    assert problem(kestrel, named("site_heavy_vehicle_percent", "about 8 %"), "Site!B13") == (
        "Heavy vehicles: 'about 8 %' is text, not a number; type only the number, without its unit"
    )


def test_a_percent_cell_is_read_as_the_percentage_it_shows_to_the_last_digit(
    kestrel: bytes,
) -> None:
    # 0.07 and 0.123456789012 in percent cells show 7 % and 12.3456789012 %: the decimal
    # point moved two places (0.07 * 100 is 7.000000000000001 in binary)
    for stored, pct in ((0.07, 7.0), (0.123456789012, 12.3456789012)):
        plan = read(kestrel, named("site_heavy_vehicle_percent", stored, "0.00%"))
        assert isinstance(plan, Plan), plan
        assert plan.site.heavy_vehicle_share == pct / 100


def test_a_required_text_left_blank_asks_to_type_it(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        set_named(wb, "demand_mode", "from a count history")
        set_named(wb, "history_source", None)

    assert problem(kestrel, edit, "Demand!K12") == "Counts are on is blank; type it"


def serial_1904(d: dt.date) -> int:
    """The 1904 date system's serial number: days since 1904-01-01 (ECMA-376 18.17.4.1)."""
    return (d - dt.date(1904, 1, 1)).days


def in_1904(*edits: Callable[[Any], Any]) -> Callable[[Any], None]:
    def edit(wb: Any) -> None:
        wb.epoch = CALENDAR_MAC_1904
        for e in edits:
            e(wb)

    return edit


def test_a_serial_date_in_a_1904_workbook(kestrel: bytes) -> None:
    plan = read(kestrel, in_1904(closure("Date", serial_1904(dt.date(2027, 5, 3)))))
    assert isinstance(plan, Plan), plan
    assert plan.closures[0].start == dt.datetime(2027, 5, 3, 21, 0)
    # To as a date-time serial of the 1904 system: Tue 06:00
    plan = read(kestrel, in_1904(closure("To", serial_1904(dt.date(2027, 5, 4)) + 0.25)))
    assert isinstance(plan, Plan), plan
    assert plan.closures[0].end == dt.datetime(2027, 5, 4, 6, 0)


def test_a_small_number_in_a_1904_workbook_is_named_with_that_systems_day(
    kestrel: bytes,
) -> None:
    message = problem(kestrel, in_1904(closure("Date", 45)), "Closures!A6")
    # day zero of the 1904 system is 1904-01-01; 45 days later is 1904-02-15
    assert message == (
        "Date: 45 is a number, not a date (a spreadsheet reads it as 45 days after its "
        "day zero, 1904-02-15); type a date, e.g. 2027-05-03"
    )


def test_the_last_serial_a_spreadsheet_holds_is_a_date_of_9999(kestrel: bytes) -> None:
    message = problem(kestrel, closure("Date", 2_958_465.99999), "Closures!A6")
    assert message == "Date holds a time of day (9999-12-31 23:59); type only the date"
    beyond = problem(kestrel, closure("Date", 2_958_466), "Closures!A6")
    assert beyond.startswith("Date: 2,958,466 is past the last date a spreadsheet can hold")


def test_cells_merged_down_a_column_elsewhere_do_not_change_a_cell(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        ws = wb["Closures"]
        ws.merge_cells("B30:B31")  # same column, other rows (blank)
        ws.merge_cells("H6:H7")  # same rows, another column (the notes)
        ws.merge_cells("B6:B7")

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert plan.closures[1].start == dt.datetime(2027, 5, 4, 21, 0)  # B7 shows B6's 21:00
    assert plan.closures[1].note == plan.closures[0].note  # H7 shows H6


@pytest.mark.parametrize(
    ("value", "year_problem"),
    [
        (dt.date(1900, 12, 31), None),  # the first year allowed
        (dt.date(2199, 12, 31), None),  # the last
        (dt.date(2200, 1, 1), "Date: the year 2200 is outside 1900-2199; check the date"),
        (dt.datetime(1901, 1, 1), None),  # serial 367: the first date not taken for a count
        (
            dt.datetime(1900, 1, 2),  # serial 2: the smallest taken for a day count
            "Date: 2 is a number, not a date (a spreadsheet reads it as 2 days after its day "
            "zero, 1900-01-02); type a date, e.g. 2027-05-03",
        ),
    ],
)
def test_dates_at_the_ends_of_the_years_allowed(
    kestrel: bytes, value: Any, year_problem: str | None
) -> None:
    message = problem(kestrel, closure("Date", value), "Closures!A6")
    if year_problem is None:  # read as a date: then outside the demand, said as such
        assert message.startswith("the closure ")
        assert "lies outside the demand period" in message
    else:
        assert message == year_problem


def test_a_date_cell_holding_a_small_number_in_a_1904_workbook(kestrel: bytes) -> None:
    # 1904-02-15 is serial 45 of the 1904 system: a number shown as a date
    message = problem(kestrel, in_1904(closure("Date", dt.datetime(1904, 2, 15))), "Closures!A6")
    assert message == (
        "Date: 45 is a number, not a date (a spreadsheet reads it as 45 days after its "
        "day zero, 1904-02-15); type a date, e.g. 2027-05-03"
    )


def test_night_work_and_a_capacity_override_that_cannot_be_read(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        closure("Night work", "maybe")(wb)
        closure("Capacity override (veh/h/ln)", "lots")(wb)
        closure("Capacity override (veh/h/ln)", 50, index=1)(wb)  # 100 to 3,000 allowed

    assert read(kestrel, edit) == {
        "Closures!F6": "Night work: 'maybe' is not in the list; pick one of 'auto', 'yes', "
        "'no' from the dropdown",
        "Closures!G6": "Capacity override: 'lots' is text, not a number; type only the number, "
        "without its unit",
        "Closures!G7": "Capacity override must be 100 to 3,000 veh/h/ln (got 50); check the value",
    }


@pytest.mark.parametrize(("word", "night"), [("auto", None), ("Yes", True), (" no ", False)])
def test_night_work_words(kestrel: bytes, word: str, night: bool | None) -> None:
    plan = read(kestrel, closure("Night work", word))
    assert isinstance(plan, Plan), plan
    assert plan.closures[0].night is night


def test_closures_may_start_and_end_with_the_demand(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        closure("From", "00:00")(wb)  # Mon 00:00, the first hour of the demand
        closure("To", "2027-05-06 00:00", index=1)(wb)  # Thu 00:00, its end

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert plan.closures[0].start == dt.datetime(2027, 5, 3, 0, 0)
    assert plan.closures[1].end == dt.datetime(2027, 5, 6, 0, 0)


def test_a_closure_outside_the_demand_is_named(kestrel: bytes) -> None:
    message = problem(kestrel, closure("Date", dt.date(2027, 5, 10)), "Closures!A6")
    assert message == (
        "the closure Mon 2027-05-10 21:00 to Tue 2027-05-11 05:00 lies outside the demand "
        "period Mon 2027-05-03 00:00 to Thu 2027-05-06 00:00; extend the demand or move the "
        "closure"
    )


def test_overlapping_closures_are_named(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        closure("Date", dt.date(2027, 5, 3), index=1)(wb)
        closure("From", "23:00", index=1)(wb)  # inside the first closure, 21:00 to 05:00

    assert read(kestrel, edit) == {
        "Closures!B7": "this closure (Mon 2027-05-03 23:00 to Tue 2027-05-04 05:00) overlaps "
        "the one in row 6 (Mon 2027-05-03 21:00 to Tue 2027-05-04 05:00); one closure at a "
        "time: merge them or move one"
    }


def test_a_closure_overlapping_two_is_named_against_the_first(kestrel: bytes) -> None:
    def edit(wb: Any) -> None:
        closure("Date", dt.date(2027, 5, 3), index=1)(wb)  # row 7: Mon 23:00 to Tue 05:00
        closure("From", "23:00", index=1)(wb)
        for header, value in zip(
            L.CLOSURE_COLUMNS[:5],
            (dt.date(2027, 5, 4), "04:00", "06:00", 1, "cones or drums"),
            strict=True,
        ):
            closure(header, value, index=2)(wb)  # row 8: Tue 04:00 to 06:00

    out = read(kestrel, edit)
    assert isinstance(out, dict), out
    # both earlier closures end at Tue 05:00: the later one is named against the first
    assert out["Closures!B8"] == (
        "this closure (Tue 2027-05-04 04:00 to Tue 2027-05-04 06:00) overlaps the one in row 6 "
        "(Mon 2027-05-03 21:00 to Tue 2027-05-04 05:00); one closure at a time: merge them or "
        "move one"
    )


def test_each_input_keeps_the_cell_it_was_typed_in(kestrel: bytes) -> None:
    # the cells later messages name are those the template's defined names point at
    # (read here from the workbook by openpyxl, not by the reader)
    plan = read(kestrel, lambda wb: None)
    assert isinstance(plan, Plan), plan
    book = openpyxl.load_workbook(io.BytesIO(kestrel))

    def cell_of(name: str) -> str:
        return book.defined_names[name].attr_text.replace("$", "")

    for key, name in (
        ("site.lanes", "site_lanes"),
        ("thresholds.max_queue_length", "limit_queue_length"),
        ("meta.title", "meta_title"),
        ("costs.car_occupancy", "cost_car_occupancy"),
    ):
        assert plan.locations[key] == cell_of(name), key
    singles = {cell_of(n) for n in book.defined_names if ":" not in cell_of(n)}
    named = {v for k, v in plan.locations.items() if "[" not in k}
    assert len(named) >= 50 and named <= singles


def test_each_closure_and_its_note_keep_their_cells(kestrel: bytes) -> None:
    plan = read(kestrel, lambda wb: None)
    assert isinstance(plan, Plan), plan
    assert plan.locations["closures[0]"] == "Closures!A6"
    assert plan.locations["closures[1].note"] == "Closures!H7"
    assert plan.locations["demand.veh_h[1]"] == "Demand!C10"


# -- a number typed in a time cell and shown as a date; the ends of the date's day counts ----
# Serials 2 to 366 are day counts (1900-01-02 to 1900-12-31), 367 is 1901-01-01, the first
# date read as a date (ECMA-376 Part 1, 18.17.4.1: serial = days since 1899-12-30 from
# 1900-03-01 on, one less before, 1900-02-29 being counted); in the 1904 system day zero is
# 1904-01-01, so 1904-01-22 is serial 21.


@pytest.mark.parametrize(
    ("value", "system_1904", "message"),
    [
        (
            dt.datetime(1900, 1, 21),  # 21 typed in From, shown as a date
            False,
            "From: 21 is a number, not a time (a spreadsheet reads it as 21 days after its "
            "day zero, 1900-01-21); did you mean 21:00? Type it with the colon",
        ),
        (
            dt.datetime(1900, 1, 2),  # serial 2: the smallest taken for a day count
            False,
            "From: 2 is a number, not a time (a spreadsheet reads it as 2 days after its "
            "day zero, 1900-01-02); did you mean 02:00? Type it with the colon",
        ),
        (
            dt.datetime(1901, 1, 1),  # serial 367: a date-time, on another day than Date
            False,
            "From holds the date 1901-01-01 but Date is 2027-05-03; make them agree",
        ),
        (
            dt.datetime(1904, 1, 22),  # serial 21 of the 1904 system
            True,
            "From: 21 is a number, not a time (a spreadsheet reads it as 21 days after its "
            "day zero, 1904-01-22); did you mean 21:00? Type it with the colon",
        ),
    ],
)
def test_a_number_typed_in_from_and_shown_as_a_date(
    kestrel: bytes, value: dt.datetime, system_1904: bool, message: str
) -> None:
    edit = in_1904(closure("From", value)) if system_1904 else closure("From", value)
    assert read(kestrel, edit) == {"Closures!B6": message}


@pytest.mark.parametrize(
    ("header", "value", "where"),
    [("From", "2300-05-03 21:00", "Closures!B6"), ("To", "2300-05-04 05:00", "Closures!C6")],
)
def test_a_date_time_in_a_time_cell_outside_the_years_allowed(
    kestrel: bytes, header: str, value: str, where: str
) -> None:
    assert read(kestrel, closure(header, value)) == {
        where: f"{header}: the year 2300 is outside 1900-2199; check the date"
    }


@pytest.mark.parametrize(
    ("value", "message"),
    [
        (
            2,  # the smallest number taken for a day count
            "Date: 2 is a number, not a date (a spreadsheet reads it as 2 days after its day "
            "zero, 1900-01-02); type a date, e.g. 2027-05-03",
        ),
        (
            366,  # the largest
            "Date: 366 is a number, not a date (a spreadsheet reads it as 366 days after its "
            "day zero, 1900-12-31); type a date, e.g. 2027-05-03",
        ),
        (
            367,  # the first serial read as a date: Tuesday 1901-01-01
            "the closure Tue 1901-01-01 21:00 to Wed 1901-01-02 05:00 lies outside the demand "
            "period Mon 2027-05-03 00:00 to Thu 2027-05-06 00:00; extend the demand or move "
            "the closure",
        ),
        (1.5, "Date: 1.5 is not a date; type a date, e.g. 2027-05-03"),  # below the counts
    ],
)
def test_a_number_in_the_date_column_at_the_ends_of_the_day_counts(
    kestrel: bytes, value: float, message: str
) -> None:
    assert read(kestrel, closure("Date", value)) == {"Closures!A6": message}


@pytest.mark.parametrize(
    ("header", "value", "start", "end"),
    [
        # a time cell with minutes and seconds (To is read on its own, From with Date):
        # 05:30:15 is 19,815 s after midnight, the next day as it is before From
        ("To", dt.time(5, 30, 15), (3, 21, 0), (4, 5, 30, 15)),
        ("From", "21:45", (3, 21, 45), (4, 5, 0)),  # typed as text: 78,300 s
        # serial 0 of the 1900 system (1899-12-30 00:00), as a time cell may hold midnight
        ("From", dt.datetime(1899, 12, 30), (3, 0, 0), (3, 5, 0)),
    ],
)
def test_times_of_day_as_time_cells_and_serials_hold_them(
    kestrel: bytes, header: str, value: Any, start: tuple, end: tuple
) -> None:
    got = first_closure(read(kestrel, closure(header, value)))
    assert got == (dt.datetime(2027, 5, *start), dt.datetime(2027, 5, *end))


def test_a_date_time_before_the_serials_day_zero_in_a_time_cell_is_not_a_time(
    kestrel: bytes,
) -> None:
    message = problem(kestrel, closure("From", dt.datetime(1899, 12, 29, 21, 0)), "Closures!B6")
    assert message == "From: 1899-12-29 21:00 is not a time; type a time like 21:00 (24-hour clock)"


# The template formats To as "[<=1][hh]:mm;yyyy-mm-dd hh:mm" (24:00 shown as 24:00), so a
# number typed there is read as elapsed time: 5 (meant as 05:00) comes as five days,
# shown as 1900-01-05 00:00; it is a day count like the same number typed in From.
@pytest.mark.parametrize(
    ("value", "message"),
    [
        (
            dt.timedelta(days=5),
            "To: 5 is a number, not a time (a spreadsheet reads it as 5 days after its day "
            "zero, 1900-01-05); did you mean 05:00? Type it with the colon",
        ),
        (
            dt.timedelta(days=2),  # the smallest day count
            "To: 2 is a number, not a time (a spreadsheet reads it as 2 days after its day "
            "zero, 1900-01-02); did you mean 02:00? Type it with the colon",
        ),
        (
            dt.timedelta(days=500),  # 05:00 typed without its colon (serial 367 + 133 days)
            "To: 500 is a number, not a time (a spreadsheet reads it as 500 days after its day "
            "zero, 1901-05-14); did you mean 05:00? Type it with the colon",
        ),
        (
            dt.timedelta(days=367),  # the first serial read as a date-time: 1901-01-01 00:00
            "the closure ends (Tue 1901-01-01 00:00) before it starts (Mon 2027-05-03 21:00); "
            "check the date and time in To",
        ),
        (
            dt.timedelta(days=3_000_000),
            "To: 3,000,000 is past the last date a spreadsheet can hold (9999-12-31); type a "
            "date and time, e.g. 2027-05-03 21:00",
        ),
    ],
)
def test_a_number_typed_in_to_is_read_as_in_from(kestrel: bytes, value: Any, message: str) -> None:
    assert read(kestrel, closure("To", value)) == {"Closures!C6": message}


@pytest.mark.parametrize(
    ("value", "end"),
    [
        (dt.timedelta(0), (4, 0, 0)),  # 00:00, at or before From: the next day
        (dt.timedelta(days=1), (4, 0, 0)),  # 24:00, midnight at the end of the day
        (dt.timedelta(hours=21), (4, 21, 0)),  # 21:00, at From: the next day
    ],
)
def test_elapsed_times_in_to_up_to_24_00(kestrel: bytes, value: Any, end: tuple) -> None:
    got = first_closure(read(kestrel, closure("To", value)))
    assert got == (dt.datetime(2027, 5, 3, 21, 0), dt.datetime(2027, 5, *end))


def test_a_date_time_at_24_30_is_not_a_time(kestrel: bytes) -> None:
    # 24:00 is midnight at the end of the day; past it the hour has no meaning
    message = problem(kestrel, closure("To", "2027-05-03 24:30"), "Closures!C6")
    assert message == "To: '2027-05-03 24:30' is not a time; type a time like 21:00 (24-hour clock)"
    got = first_closure(read(kestrel, closure("To", "2027-05-03 24:00")))
    assert got == (dt.datetime(2027, 5, 3, 21, 0), dt.datetime(2027, 5, 4, 0, 0))


def test_a_date_that_cannot_be_read_beside_a_date_time_in_from(kestrel: bytes) -> None:
    # From holds a whole date-time, so Date is only compared with it: still read, and named
    def edit(wb: Any) -> None:
        closure("Date", "3 May")(wb)
        closure("From", "2027-05-03 22:00")(wb)

    assert read(kestrel, edit) == {
        "Closures!A6": "Date: '3 May' is not a date; type a date, e.g. 2027-05-03"
    }


def test_an_error_value_openpyxl_does_not_list_is_named_as_an_error(kestrel: bytes) -> None:
    # a newer spreadsheet error (#SPILL!, ECMA-376 lists only the seven classic ones) kept
    # in the file as an error cell (t="e"): named as the error it shows, not read as text
    def edit(wb: Any) -> None:
        cell = set_named(wb, "site_speed_limit", "#SPILL!")
        cell.data_type = "e"

    assert problem(kestrel, edit, "Site!B9") == (
        "shows the error #SPILL!; fix the formula or type the value"
    )


@pytest.mark.parametrize(
    ("a", "b", "ratio"),
    [
        # WCAG 2.1 (W3C 2018), "contrast ratio": black on white is 21:1, a colour on itself 1:1
        ("000000", "FFFFFF", 21.0),
        ("FBEFD5", "FBEFD5", 1.0),
        # #767676 on white is the lightest grey that meets WCAG's 4.5:1 for body text, and
        # #777777 just misses it, 4.48:1 (values from memory of the WCAG examples)
        ("767676", "FFFFFF", 4.54),
        ("FFFFFF", "777777", 4.48),
        # pure red and blue on white, 4.0:1 and 8.6:1 (from memory of the WCAG examples):
        # the channels' weights 0.2126 and 0.0722; by hand 1.05 / 0.2626 and 1.05 / 0.1222
        ("FF0000", "FFFFFF", 3.998),
        ("0000FF", "FFFFFF", 8.592),
        # a channel of 10 (10 / 255 = 0.0392, at most 0.04045) is linear, c / 12.92:
        # 0.0030353, so 1.05 / 0.0530353 = 19.798 (by hand)
        ("0A0A0A", "FFFFFF", 19.798),
    ],
)
def test_the_contrast_ratio_is_wcags(a: str, b: str, ratio: float) -> None:
    assert contrast(a, b) == pytest.approx(ratio, abs=0.005)


@pytest.mark.parametrize(
    ("fmt", "hidden"),
    [
        (";;;", True),
        ('"";"";""', True),  # each section an empty text: shows nothing
        ("; ; ;", True),  # spaces only
        (";;;@", False),  # text is shown
        ('"n/a";;;', False),
        ("General", False),
    ],
)
def test_a_number_format_whose_every_section_is_empty_hides_the_value(
    fmt: str, hidden: bool
) -> None:
    # a number format has up to four sections separated by ';' (ECMA-376 Part 1, 18.8.31);
    # one whose sections hold nothing, or only empty text or spaces, shows nothing
    cell = openpyxl.Workbook().active["A1"]
    cell.value = 7
    cell.number_format = fmt
    said = unseen(cell)
    assert said == (f"its number format '{fmt}' shows nothing" if hidden else None)


def test_a_value_shown_in_a_white_normal_style_is_unseen() -> None:
    """A cell without a style of its own takes the workbook's default format (cellXfs
    entry 0, ECMA-376 Part 1, 18.8.10), here a white Normal font: its value is hidden."""
    wb = openpyxl.Workbook()
    cell = wb.active["A1"]
    cell.value = 7
    assert not cell.has_style
    assert unseen(cell) is None  # the default Normal font: the theme's text colour
    wb._fonts[0] = Font(color="FFFFFF")
    assert unseen(cell) == "its text colour #FFFFFF on no fill cannot be read"


def test_an_indexed_white_font_on_the_input_fill_is_unseen() -> None:
    """Excel's legacy palette: index 9 is white (openpyxl's COLOR_INDEX, from the OOXML
    standard, ECMA-376 Part 1, 18.8.27 indexedColors)."""
    cell = openpyxl.Workbook().active["A1"]
    cell.value = 7
    cell.font = Font(color=Color(indexed=9))
    assert unseen(cell) == "its text colour #FFFFFF on no fill cannot be read"
    cell.font = Font(color=Color(indexed=8))  # black
    assert unseen(cell) is None
    # 64 and 65 are the system's foreground and background, past the 64 colours of the
    # palette (0-63): they depend on the program, so are taken to be readable, on any fill
    cell.fill = PatternFill("solid", fgColor="000000")
    for system in (64, 65):
        cell.font = Font(color=Color(indexed=system))
        assert unseen(cell) is None
    cell.fill = PatternFill("solid", fgColor="333333")
    cell.font = Font(color=Color(indexed=63))  # the palette's last colour, #333333
    assert unseen(cell) == "its text colour #333333 on a fill of #333333 cannot be read"


# -- a time typed without its colon: the ends of the hours and minutes read from it ---------
# 100 to 2400 with minutes under 60 is read as hh:mm typed without the colon; a number from
# 367 on is otherwise a date-time serial (1899-12-30 plus that many days, ECMA-376 Part 1,
# 18.17.4.1): 2401 is 1906-07-28 and 2160 is 1905-11-29, both on another day than Date.


@pytest.mark.parametrize(
    ("header", "value", "where", "message"),
    [
        (
            "From",
            100,  # the smallest: 01:00 (serial 100 is 1900-04-09: 1900-02-29 is counted)
            "Closures!B6",
            "From: 100 is a number, not a time (a spreadsheet reads it as 100 days after its "
            "day zero, 1900-04-09); did you mean 01:00? Type it with the colon",
        ),
        (
            "From",
            2159,  # the largest minutes: 59
            "Closures!B6",
            "From: 2,159 is a number, not a time (a spreadsheet reads it as 2,159 days after "
            "its day zero, 1905-11-28); did you mean 21:59? Type it with the colon",
        ),
        (
            "From",
            2160,  # 60 minutes is not a time: the date-time of serial 2160
            "Closures!B6",
            "From holds the date 1905-11-29 but Date is 2027-05-03; make them agree",
        ),
        (
            "To",
            dt.timedelta(days=2400),  # the largest, 24:00 (To is an elapsed-time cell)
            "Closures!C6",
            "To: 2,400 is a number, not a time (a spreadsheet reads it as 2,400 days after its "
            "day zero, 1906-07-27); did you mean 24:00? Type it with the colon",
        ),
        (
            "To",
            dt.timedelta(days=2401),  # past 24:00: the date-time of serial 2401
            "Closures!C6",
            "the closure ends (Sat 1906-07-28 00:00) before it starts (Mon 2027-05-03 21:00); "
            "check the date and time in To",
        ),
    ],
)
def test_a_time_typed_without_its_colon_at_the_ends_of_the_clock(
    kestrel: bytes, header: str, value: Any, where: str, message: str
) -> None:
    assert read(kestrel, closure(header, value)) == {where: message}


@pytest.mark.parametrize(
    ("header", "text", "where", "said"),
    [
        # 2027-05-03 is a Monday (the Kestrel Ridge plan's first closure)
        (
            "Date",
            "Tue 2027-05-03",
            "Closures!A6",
            "Date: 'Tue 2027-05-03': 2027-05-03 is a Monday, not a Tuesday",
        ),
        (
            "Date",
            "sun 2027-05-03",
            "Closures!A6",
            "Date: 'sun 2027-05-03': 2027-05-03 is a Monday, not a Sunday",
        ),
        (
            "From",
            "Sat 2027-05-03 21:00",
            "Closures!B6",
            "From: 'Sat 2027-05-03 21:00': 2027-05-03 is a Monday, not a Saturday",
        ),
    ],
)
def test_a_date_typed_with_another_weekday_names_both_days(
    kestrel: bytes, header: str, text: str, where: str, said: str
) -> None:
    assert read(kestrel, closure(header, text)) == {
        where: f"{said}; type the date you mean (the weekday may be left out)"
    }


# -- the AADT's count year and growth (Demand!F9 and F10 in the template) -------------------


def year_and_growth_warnings(kestrel: bytes, year: int, growth: float | None) -> list[str]:
    plan = read(kestrel, aadt_edit(year, growth))
    assert isinstance(plan, Plan), plan
    return [w for w in plan.input_warnings if w.startswith(("Demand!F9: ", "Demand!F10: "))]


@pytest.mark.parametrize(
    ("year", "growth", "said"),
    [
        # a count of the year after: taken back one year at the growth typed (0, or blank)
        (
            2028,
            0,
            "Demand!F9: Year of the count 2028 is after the year of the first day (2027): the "
            "AADT is taken back 1 year at 0 % a year; check the year, unless the AADT is a "
            "forecast",
        ),
        (
            2028,
            None,
            "Demand!F9: Year of the count 2028 is after the year of the first day (2027): the "
            "AADT is taken back 1 year at 0 % a year; check the year, unless the AADT is a "
            "forecast",
        ),
        # 12 % a year over one year is 12 % in all; over two, 1.12^2 - 1 = 25.44 %
        (
            2026,
            12,
            "Demand!F10: Traffic growth 12 % a year is unusual: 12 % in all over 1 year from "
            "the count (2026); check the value (a few % a year is usual)",
        ),
        (
            2025,
            12,
            "Demand!F10: Traffic growth 12 % a year is unusual: 25 % in all over 2 years from "
            "the count (2025); check the value (a few % a year is usual)",
        ),
        (
            2026,
            -12,  # a fall as unusual as a rise: 0.88 - 1 = -12 %
            "Demand!F10: Traffic growth -12 % a year is unusual: -12 % in all over 1 year from "
            "the count (2026); check the value (a few % a year is usual)",
        ),
    ],
)
def test_the_aadt_years_and_growth_queried_in_full(
    kestrel: bytes, year: int, growth: float | None, said: str
) -> None:
    assert year_and_growth_warnings(kestrel, year, growth) == [said]


def test_a_growth_of_10_percent_a_year_is_not_queried(kestrel: bytes) -> None:
    # the query is for a rate above 10 % a year in size (a few % a year is usual)
    assert year_and_growth_warnings(kestrel, 2026, 10) == []
    assert year_and_growth_warnings(kestrel, 2026, -10) == []


# -- a closure from a morning time to an earlier morning time the next day ------------------
# The first closure is on Mon 2027-05-03; From and To typed as time cells. On the 12-hour
# clock 9:00 to 5:00 is 9 pm to 5 am, so the hint is From plus 12 hours.


@pytest.mark.parametrize(
    ("start", "end", "said"),
    [
        (
            dt.time(9, 0),  # 20 hours, through both peaks
            dt.time(5, 0),
            [
                "Closures!B6: From 09:00 to 05:00 is read as a closure of 20 hours, to Tue "
                "2027-05-04 05:00; times are on the 24-hour clock: if the closure starts in the "
                "evening, type 21:00 in From"
            ],
        ),
        (
            dt.time(11, 30),  # the latest morning From: 23.5 hours, 23:30 meant
            dt.time(11, 0),
            [
                "Closures!B6: From 11:30 to 11:00 is read as a closure of 23.5 hours, to Tue "
                "2027-05-04 11:00; times are on the 24-hour clock: if the closure starts in the "
                "evening, type 23:30 in From"
            ],
        ),
        (dt.time(12, 0), dt.time(11, 0), []),  # noon is 12:00 on both clocks: 23 hours
        (dt.time(9, 0), dt.time(9, 0), []),  # To as From: 24 hours, said otherwise
        (dt.time(1, 0), dt.time(5, 0), []),  # a morning closure of 4 hours
        (dt.time(9, 0), "2027-05-04 10:00", []),  # 25 hours, typed in full
    ],
)
def test_a_morning_closure_to_an_earlier_morning_time_is_queried(
    kestrel: bytes, start: dt.time, end: Any, said: list[str]
) -> None:
    def edit(wb: Any) -> None:
        closure("From", start)(wb)
        closure("To", end)(wb)

    plan = read(kestrel, edit)
    assert isinstance(plan, Plan), plan
    assert [w for w in plan.input_warnings if "24-hour clock" in w] == said


def test_to_typed_as_from_is_a_whole_day_and_said_in_full(kestrel: bytes) -> None:
    # Mon 21:00 to 21:00: a To at or before From ends the next day, 24 hours on
    plan = read(kestrel, closure("To", dt.time(21, 0)))
    assert isinstance(plan, Plan), plan
    assert first_closure(plan) == (dt.datetime(2027, 5, 3, 21), dt.datetime(2027, 5, 4, 21))
    assert [w for w in plan.input_warnings if "same time" in w] == [
        "Closures!C6: To is the same time as From (21:00): read as a closure of 24 hours, to "
        "Tue 2027-05-04 21:00 (a To at or before From ends the next day); if the closure is "
        "shorter, correct To"
    ]


def test_a_named_date_that_cannot_be_read_is_named_at_its_cell(kestrel: bytes) -> None:
    # the AADT's first day (Demand!F12), a named input read as a date
    def edit(wb: Any) -> None:
        aadt_edit(2026, 2)(wb)
        set_named(wb, "aadt_first_day", "3 May")

    assert read(kestrel, edit) == {
        "Demand!F12": "First day: '3 May' is not a date; type a date, e.g. 2027-05-03"
    }


def test_a_percentage_typed_as_text_with_a_decimal_comma_is_refused(kestrel: bytes) -> None:
    # '1,5 %' (1.5 % with a decimal comma) was read as 15 % without a word; a comma is
    # taken only as a thousands separator ('12.5 %' typed as text is 12.5 %)
    assert problem(kestrel, named("site_heavy_vehicle_percent", "1,5 %"), "Site!B13") == (
        "Heavy vehicles: '1,5 %' is text, not a number; type only the number, without its unit"
    )
    plan = read(kestrel, named("site_heavy_vehicle_percent", "12.5 %"))
    assert isinstance(plan, Plan), plan
    assert plan.site.heavy_vehicle_share == pytest.approx(0.125)


def test_a_number_input_without_bounds_takes_any_finite_number() -> None:
    # every number input of the template has bounds today; one declared without them
    # must keep its value, not lose it without a problem
    reader = BookReader(openpyxl.Workbook(), "book.xlsx", None)
    reader.system = "metric"
    field = F.Field("spare", "Spare", "number", "veh/h")
    assert reader.convert(5e9, field, "Site!B99") == 5e9
    assert reader.convert(-2.5, field, "Site!B99") == -2.5
    assert not reader.problems
