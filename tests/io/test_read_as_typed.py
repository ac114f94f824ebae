"""Realistic inputs that were read as something else without a word, now refused or queried.

Each test types one mistake a designer in a hurry makes (or a spreadsheet program
stores) into a plan and checks that the tool names where it was typed. The plans
are the invented Kestrel Ridge example, typed into a fresh template through its
names and tables (``tests/workbook_helpers.py``) or edited as JSON.
"""

from __future__ import annotations

import datetime as dt
import json
import shutil
from pathlib import Path
from typing import Any

import pytest
from openpyxl.styles import Font, PatternFill
from openpyxl.worksheet.table import Table
from workbook_helpers import (
    aadt_edit,
    edited,
    fill_template,
    find_table,
    set_named,
    table_cell,
    write_table,
)

from wzq import PlanError
from wzq.engine.warnings import input_warnings
from wzq.io import counts as C
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader import read_plan

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"


@pytest.fixture(scope="module")
def kestrel_book(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return fill_template(load_plan(KESTREL), tmp_path_factory.mktemp("k") / "kestrel.xlsx")


def warnings_of(book: Path, tmp_path: Path, edit: Any) -> list[str]:
    return list(read_plan(edited(book, tmp_path, edit)).input_warnings)


def kestrel_json() -> dict:
    return json.loads(KESTREL.read_text(encoding="utf-8"))


def saved_json(tmp_path: Path, name: str, data: dict) -> Path:
    path = tmp_path / name
    path.write_text(json.dumps(data), encoding="utf-8")
    return path


def problems_of(path: Path) -> list[str]:
    with pytest.raises(PlanError) as e:
        load_plan(path)
    return [f"{p.where}: {p.message}" for p in e.value.problems]


# ---------------------------------------------------------------------------------------------
# JSON plans edited by hand
# ---------------------------------------------------------------------------------------------


def test_a_key_given_twice_in_a_json_object_is_refused_naming_both_values(tmp_path: Path) -> None:
    """A second "lanes_closed" typed into a closure: JSON readers keep the last silently."""
    text = json.dumps(kestrel_json(), indent=1).replace(
        '"lanes_closed": 1,', '"lanes_closed": 1, "lanes_closed": 2,', 1
    )
    path = tmp_path / "twice.json"
    path.write_text(text, encoding="utf-8")
    (msg,) = problems_of(path)
    assert msg.startswith("twice.json: closures[0].lanes_closed:")
    assert "given twice (1, then 2)" in msg


def test_a_time_zone_in_a_json_date_time_is_refused(tmp_path: Path) -> None:
    data = kestrel_json()
    data["closures"][0]["start"] = "2027-05-03T21:00+02:00"
    path = saved_json(tmp_path, "zone.json", data)
    (msg,) = problems_of(path)
    assert msg.startswith("zone.json: closures[0].start:")
    assert "time zone" in msg and "2027-05-03T21:00" in msg


def test_a_fraction_typed_for_a_json_percentage_is_queried(tmp_path: Path) -> None:
    """0.08 for 8 % heavy vehicles: read as typed (0.08 %), and said, as in a workbook."""
    data = kestrel_json()
    data["site"]["heavy_vehicle_percent"] = 0.08
    path = saved_json(tmp_path, "fraction.json", data)
    plan = load_plan(path)
    assert plan.site.heavy_vehicle_share == pytest.approx(0.0008)
    (w,) = plan.input_warnings
    assert w.startswith("site.heavy_vehicle_percent: ")
    assert "0.08 %: did you mean 8 %?" in w


# ---------------------------------------------------------------------------------------------
# Workbooks
# ---------------------------------------------------------------------------------------------


def test_counts_typed_past_midnight_without_the_next_date_are_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """Each day's counts typed from 06:00 to 05:00 with the day's date on every row: the
    rows after midnight (next morning's counts) are read as the early morning of the date
    typed. The rows make a whole grid, so nothing else says so."""
    date_h, time_h, _ = L.DEMAND_COLUMNS

    def six_to_six(wb: Any) -> None:
        for i in range(72):
            day, hour = divmod(i, 24)
            table_cell(wb, L.DEMAND_TABLE, i, date_h).value = dt.datetime(2027, 5, 3 + day)
            table_cell(wb, L.DEMAND_TABLE, i, time_h).value = dt.time((hour + 6) % 24)

    found = [w for w in warnings_of(kestrel_book, tmp_path, six_to_six) if "past midnight" in w]
    # the first 00:00 row is the 19th data row (06:00 + 18 h), sheet row 9 + 18 = 27
    assert len(found) == 1
    assert found[0].startswith("Demand!B27: ")
    assert "Mon 2027-05-03 00:00" in found[0] and "row 26" in found[0]
    assert "2027-05-04" in found[0] and "(3 places in all)" in found[0]


def test_counts_in_time_order_across_midnight_are_not_queried(kestrel_book: Path) -> None:
    assert not [w for w in read_plan(kestrel_book).input_warnings if "past midnight" in w]


def copy_of_sheet(title: str, table_name: str | None) -> Any:
    """Copy the Demand sheet as a spreadsheet program does ("Demand (2)" in Excel,
    "Demand_2" in LibreOffice; Excel renames the copied table DemandTable2) and type
    20 % more traffic on the copy."""

    def edit(wb: Any) -> None:
        ws, t = find_table(wb, L.DEMAND_TABLE)
        copy = wb.copy_worksheet(ws)
        copy.title = title
        if table_name:
            copy.add_table(Table(displayName=table_name, ref=t.ref))
        for i in range(72):
            cell = copy.cell(table_cell(wb, L.DEMAND_TABLE, i, L.DEMAND_COLUMNS[2]).row, 3)
            cell.value = round(cell.value * 1.2)

    return edit


@pytest.mark.parametrize(
    ("title", "table_name"), [("Demand (2)", "DemandTable2"), ("Demand_2", None)]
)
def test_a_copy_of_an_input_sheet_is_named_as_not_read(
    kestrel_book: Path, tmp_path: Path, title: str, table_name: str | None
) -> None:
    """The designer edits the copy; the plan is still read from 'Demand' (as it must be),
    and a warning says that the copy is not."""
    path = edited(kestrel_book, tmp_path, copy_of_sheet(title, table_name))
    plan = read_plan(path)
    assert plan.demand.flows_veh_h[7] == 5200  # the Demand sheet's own 07:00 count
    found = [w for w in plan.input_warnings if "copy" in w]
    assert len(found) == 1
    assert found[0].startswith(f"sheet '{title}': ")
    assert "'Demand'" in found[0] and "not read" in found[0]


def test_a_copy_of_the_count_history_read_as_the_counts_is_not_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    def edit(wb: Any) -> None:
        wb.copy_worksheet(wb[L.COUNTS]).title = "Count history (2)"
        set_named(wb, "history_file_sheet", "Count history (2)")

    assert not [w for w in warnings_of(kestrel_book, tmp_path, edit) if "copy" in w]


def override_warnings(book: Path, tmp_path: Path, per_lane: float) -> list[str]:
    def edit(wb: Any) -> None:
        table_cell(wb, L.CLOSURE_TABLE, 0, "Capacity override (veh/h/ln)").value = per_lane

    plan = read_plan(edited(book, tmp_path, edit))
    return [w for w in input_warnings(plan) if "override" in w]


def test_a_capacity_override_typed_for_the_direction_is_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """Night 1 closes one of three lanes; the designer types 2,800 veh/h meaning the
    direction (two open lanes at 1,400). Per open lane that is above the open road's own
    capacity: 2,400 pc/h/ln for a basic freeway segment with a free-flow speed of 70 mi/h
    or more (HCM 7th ed., Ch. 12, Eq. 12-6), with 8 % heavy vehicles on level terrain
    (E_T = 2, Exhibit 12-25; f_HV = 1 / (1 + 0.08) by Eq. 12-10) 2,400 / 1.08 = 2,222
    veh/h/ln (values from memory)."""
    (w,) = override_warnings(kestrel_book, tmp_path, 2800)
    assert w.startswith("Closures!G6: ")  # the override cell of the first closure
    assert "2,800 veh/h/ln" in w and "(2,222 veh/h/ln)" in w
    assert "per open lane; if 2,800 veh/h is for the 2 open lanes together, type 1,400" in w


def test_a_work_zone_capacity_override_per_lane_is_not_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    assert override_warnings(kestrel_book, tmp_path, 1400) == []


def test_a_closure_ending_at_its_own_start_time_is_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """To typed as 21:00 like From (a slip for 05:00): a To at or before From ends the next
    day, so the closure is read as 24 hours, Mon 21:00 to Tue 21:00, which is said."""

    def edit(wb: Any) -> None:
        table_cell(wb, L.CLOSURE_TABLE, 0, "To").value = dt.time(21, 0)

    path = edited(kestrel_book, tmp_path, edit)
    plan = read_plan(path)
    assert plan.closures[0].end == dt.datetime(2027, 5, 4, 21)
    (w,) = [w for w in plan.input_warnings if "same time as From" in w]
    assert w.startswith("Closures!C6: ")
    assert "24 hours, to Tue 2027-05-04 21:00" in w


def aadt_warnings(book: Path, tmp_path: Path, year: int, growth: float) -> list[str]:
    """AADT 40,000 counted in ``year``, grown ``growth`` % a year to 2027-05-01."""
    plan = read_plan(edited(book, tmp_path, aadt_edit(year, growth)))
    return [w for w in plan.input_warnings if w.startswith("Demand!F9") or "growth" in w]


def test_an_aadt_counted_after_the_plan_is_queried(kestrel_book: Path, tmp_path: Path) -> None:
    """2029 typed for 2024: the AADT is taken back two years (divided by 1.02^2)."""
    (w,) = aadt_warnings(kestrel_book, tmp_path, 2029, 2)
    assert w.startswith("Demand!F9: ")  # Year of the count
    assert "2029 is after the year of the first day (2027)" in w and "2 years" in w


def test_an_unusual_traffic_growth_is_queried(kestrel_book: Path, tmp_path: Path) -> None:
    """20 typed for 2.0 % a year: over the 3 years from 2024 to 2027 the AADT grows by
    1.2^3 - 1 = 72.8 % instead of 1.02^3 - 1 = 6.1 %."""
    (w,) = aadt_warnings(kestrel_book, tmp_path, 2024, 20)
    assert w.startswith("Demand!F10: ")  # Traffic growth
    assert "20 % a year" in w and "73 % in all over 3 years" in w


def test_a_usual_growth_from_an_earlier_count_is_not_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    assert aadt_warnings(kestrel_book, tmp_path, 2024, 2) == []
    assert aadt_warnings(kestrel_book, tmp_path, 2027, 20) == []  # counted the same year


# ---------------------------------------------------------------------------------------------
# Count files
# ---------------------------------------------------------------------------------------------

PROFILE = [100 + 37 * h for h in range(24)]  # all different, so a shifted hour shows


@pytest.mark.parametrize("time_column", [False, True])
def test_counts_stamped_at_the_end_of_each_hour_read_as_starts_are_refused(
    time_column: bool,
) -> None:
    """Hourly counts stamped 01:00 ... 24:00 (the end of each hour, as many counters
    write them), read with the default start stamps: every count would move an hour
    later. 24:00 cannot start an interval, so the file is refused at its line."""
    rows = ["date;time;vehicles" if time_column else "time,vehicles"]
    for day in (4, 5):
        for h, v in enumerate(PROFILE):
            rows.append(
                f"2026-05-0{day};{h + 1:02d}:00;{v}"
                if time_column
                else f"2026-05-0{day} {h + 1:02d}:00,{v}"
            )
    with pytest.raises(PlanError) as e:
        C.read_csv_text("\n".join(rows), "c.csv")
    (p,) = e.value.problems
    assert p.where.startswith("c.csv line 25")  # the first 24:00, the 24th count
    assert "24:00" in p.message and "end of its interval" in p.message
    ends = C.read_csv_text("\n".join(rows), "c.csv", stamp="end").history
    assert ends.flows_veh_h[0].tolist() == PROFILE  # read as ends: 00:00-01:00 carries 100


# ---------------------------------------------------------------------------------------------
# Hidden columns and rows outside the tables
# ---------------------------------------------------------------------------------------------


def test_values_in_a_hidden_table_column_are_read_and_said(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """A capacity override typed for Night 2, then its column hidden (to print the sheet
    narrower): the override is used, unseen; a warning names it."""

    def edit(wb: Any) -> None:
        table_cell(wb, L.CLOSURE_TABLE, 1, "Capacity override (veh/h/ln)").value = 1900
        wb[L.CLOSURES].column_dimensions["G"].hidden = True

    plan = read_plan(edited(kestrel_book, tmp_path, edit))
    assert plan.closures[1].capacity_override_veh_h_ln == 1900
    (w,) = [w for w in plan.input_warnings if "hidden" in w]
    assert w.startswith("Closures!G7: ")
    assert "'Capacity override (veh/h/ln)'" in w and "1 value" in w


def test_a_hidden_table_column_left_blank_is_not_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    def edit(wb: Any) -> None:
        wb[L.CLOSURES].column_dimensions["G"].hidden = True

    assert not [w for w in warnings_of(kestrel_book, tmp_path, edit) if "hidden" in w]


def test_a_value_in_a_hidden_row_of_an_input_sheet_is_said(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """A base capacity typed on the Site sheet, its row then hidden: read, and said."""

    def edit(wb: Any) -> None:
        cell = set_named(wb, "site_base_capacity", 2000)
        wb[L.SITE].row_dimensions[cell.row].hidden = True

    plan = read_plan(edited(kestrel_book, tmp_path, edit))
    assert plan.site.base_capacity_pc_h_ln == 2000
    (w,) = [w for w in plan.input_warnings if "hidden" in w]
    assert w.startswith("Site!B23: ")


def test_a_label_ending_in_a_verb_is_quoted_where_a_hidden_value_is_said(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """The label 'A closure capacity typed on the Closures sheet is' ends in "is": said
    unquoted it read "... sheet is is in a hidden row"."""

    def edit(wb: Any) -> None:
        cell = set_named(wb, "site_override_is", "both: no capacity drop")
        wb[L.SITE].row_dimensions[cell.row].hidden = True

    (w,) = [w for w in warnings_of(kestrel_book, tmp_path, edit) if "hidden" in w]
    assert "'A closure capacity typed on the Closures sheet is' is in a hidden row" in w


# ---------------------------------------------------------------------------------------------
# Values the sheet does not show (a ";;;" number format, white text)
# ---------------------------------------------------------------------------------------------


def test_demand_hidden_by_an_empty_number_format_is_read_and_said(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """Three hourly counts given the number format ';;;' (to tidy a print, or copied with
    a template's formats) and one typed in white: the cells look blank but hold numbers,
    and the plan uses them. The warning names the cells and each reason once (common
    practice, no source)."""
    typed = {}

    def edit(wb: Any) -> None:
        for i in (3, 4, 5):
            cell = table_cell(wb, L.DEMAND_TABLE, i, "Demand (veh/h)")
            cell.number_format = ";;;"
            typed[i] = cell.value
        cell = table_cell(wb, L.DEMAND_TABLE, 7, "Demand (veh/h)")
        cell.font = Font(color="FFFFFF")  # and one more in white on the input fill
        typed[7] = cell.value
        typed["cells"] = [
            f"{L.DEMAND}!{table_cell(wb, L.DEMAND_TABLE, i, 'Demand (veh/h)').coordinate}"
            for i in (3, 4, 5, 7)
        ]

    plan = read_plan(edited(kestrel_book, tmp_path, edit))
    rows = (3, 4, 5, 7)
    assert [plan.demand.flows_veh_h[i] for i in rows] == [typed[i] for i in rows]
    (w,) = [w for w in plan.input_warnings if "cannot be seen" in w]
    c3, _, _, c7 = typed["cells"]
    assert w == (
        f"{', '.join(typed['cells'])}: 4 values of DemandTable cannot be seen on the sheet "
        f"({c3}: its number format ';;;' shows nothing; {c7}: its text colour #FFFFFF on a "
        "fill of #FBEFD5 cannot be read) but are read as part of the plan; give the cells a "
        "visible format and colour to check them, or clear them to leave them out"
    )


def test_a_named_input_in_white_text_is_read_and_said(kestrel_book: Path, tmp_path: Path) -> None:
    """A base capacity typed in white on the template's pale input fill: used, and said at
    its cell."""

    def edit(wb: Any) -> None:
        set_named(wb, "site_base_capacity", 2000).font = Font(color="FFFFFF")

    plan = read_plan(edited(kestrel_book, tmp_path, edit))
    assert plan.site.base_capacity_pc_h_ln == 2000
    (w,) = [w for w in plan.input_warnings if "cannot be seen" in w]
    assert w == (
        "Site!B23: 'Base capacity of the open road' cannot be seen on the sheet (its text "
        "colour #FFFFFF on a fill of #FBEFD5 cannot be read) but is read as typed (2000); "
        "give the cell a visible format and colour to check it, or clear it to leave it blank"
    )


@pytest.mark.parametrize(
    ("number_format", "font", "fill"),
    [
        ("0;-0;;@", None, None),  # only a zero is shown blank; the count is not zero
        ("General", Font(color="FFFFFF"), PatternFill("solid", fgColor="1F3864")),
        ("0", Font(color="000000"), None),
    ],
)
def test_values_the_sheet_shows_are_not_queried(
    kestrel_book: Path, tmp_path: Path, number_format: str, font: Any, fill: Any
) -> None:
    def edit(wb: Any) -> None:
        cell = table_cell(wb, L.DEMAND_TABLE, 3, "Demand (veh/h)")
        cell.number_format = number_format
        if font is not None:
            cell.font = font
        if fill is not None:
            cell.fill = fill

    assert not [w for w in warnings_of(kestrel_book, tmp_path, edit) if "cannot be seen" in w]


def test_a_blank_cell_with_an_empty_number_format_is_not_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    def edit(wb: Any) -> None:
        set_named(wb, "site_base_capacity", None).number_format = ";;;"

    assert not [w for w in warnings_of(kestrel_book, tmp_path, edit) if "cannot be seen" in w]


@pytest.mark.parametrize(
    ("header", "text", "said"),
    [
        ("Date", "Mon 2027-05-04", "2027-05-04 is a Tuesday, not a Monday"),
        ("To", "Mon 2027-05-05 05:00", "2027-05-05 is a Wednesday, not a Monday"),
    ],
)
def test_a_date_typed_with_another_days_weekday_is_refused(
    kestrel_book: Path, tmp_path: Path, header: str, text: str, said: str
) -> None:
    """'Mon 2027-05-04': 4 May 2027 is a Tuesday, so the designer meant Monday 3 May or
    Tuesday 4 May; neither can be assumed (the weekdays by the calendar of 2027)."""

    def edit(wb: Any) -> None:
        table_cell(wb, L.CLOSURE_TABLE, 1, header).value = text

    with pytest.raises(PlanError) as e:
        read_plan(edited(kestrel_book, tmp_path, edit))
    (p,) = e.value.problems
    col = "A" if header == "Date" else "C"
    assert p.where == f"Closures!{col}7"
    assert p.message.startswith(f"{header}: '{text}': {said}")  # the text as typed


def test_a_date_typed_with_its_own_weekday_is_read(kestrel_book: Path, tmp_path: Path) -> None:
    def edit(wb: Any) -> None:
        table_cell(wb, L.CLOSURE_TABLE, 1, "Date").value = "Tue 2027-05-04"

    plan = read_plan(edited(kestrel_book, tmp_path, edit))
    assert plan.closures[1].start == dt.datetime(2027, 5, 4, 22)


def test_a_delay_limit_typed_in_hours_is_queried(tmp_path: Path) -> None:
    """0.25 typed for a quarter of an hour: read as 0.25 min/veh (15 s), tighter than the
    delay a vehicle meets just driving a 1.2 mi work zone at 55 instead of 65 mi/h
    (1.2 x 60 / 55 - 1.2 x 60 / 65 = 0.20 min); the limit is in minutes per vehicle."""
    data = kestrel_json()
    data["thresholds"]["max_average_delay_min"] = 0.25
    path = saved_json(tmp_path, "hours.json", data)
    (w,) = [w for w in input_warnings(load_plan(path)) if "delay" in w]
    assert w.startswith("thresholds.max_average_delay_min: ")
    assert "0.25 min/veh (15 s)" in w and "did you mean 15 min" in w


def test_a_delay_limit_of_minutes_is_not_queried() -> None:
    assert not [w for w in input_warnings(load_plan(KESTREL)) if "delay" in w]  # 15 min


@pytest.mark.parametrize(
    ("section", "key", "where"),
    [("site", "lanes", "site.lanes"), ("closures", "lanes_closed", "closures[0].lanes_closed")],
)
def test_a_fraction_of_a_lane_in_a_json_plan_is_refused(
    tmp_path: Path, section: str, key: str, where: str
) -> None:
    """1.5 lanes was cut to 1 without a word; a workbook cell refuses it."""
    data = kestrel_json()
    (data[section][0] if section == "closures" else data[section])[key] = 1.5
    path = saved_json(tmp_path, "half.json", data)
    (msg,) = problems_of(path)
    assert msg == f"half.json: {where}: must be a whole number, got 1.5"


def test_an_unusual_growth_of_a_count_history_is_queried(tmp_path: Path) -> None:
    """The Larkspur Vale example designs from last year's counts grown 1.5 % a year; 15
    typed instead is queried at its cell."""
    book = EXAMPLES / "larkspur_vale_week.xlsx"
    shutil.copy(EXAMPLES / "larkspur_vale_eb_2026.vol", tmp_path)

    def edit(wb: Any) -> None:
        set_named(wb, "history_growth_percent", 15)

    (w,) = [w for w in warnings_of(book, tmp_path, edit) if "growth" in w.casefold()]
    assert w.startswith("Demand!K27: Traffic growth 15 % a year is unusual; check the value")
    assert not [w for w in read_plan(book).input_warnings if "growth" in w.casefold()]


@pytest.mark.parametrize(
    ("name", "key"),
    [
        ("site_work_intensity", "site.work_intensity_pc_h_ln"),
        ("site_ramp_adjustment", "site.ramp_adjustment_pc_h_ln"),
    ],
)
def test_an_adjustment_the_chosen_method_does_not_use_is_said(
    kestrel_book: Path, tmp_path: Path, name: str, key: str
) -> None:
    """The work intensity and ramp adjustments belong to the HCM 2000 short-term method;
    typed with the HCM 7th ed. method chosen they changed nothing, without a word."""

    def edit(wb: Any) -> None:
        set_named(wb, name, 150)

    plan = read_plan(edited(kestrel_book, tmp_path, edit))
    (w,) = [w for w in input_warnings(plan) if "not used" in w]
    assert w.startswith(f"{plan.where(key)}: ") and plan.where(key).startswith("Site!B")
    assert "HCM 2000" in w and "Site!B22" in w


def test_no_adjustment_typed_is_not_said(kestrel_book: Path) -> None:
    assert not [w for w in input_warnings(read_plan(kestrel_book)) if "not used" in w]


@pytest.mark.parametrize(("typed", "meant"), [(2100, "21:00"), (500, "05:00"), (130, "01:30")])
def test_a_time_typed_without_its_colon_says_the_time(
    kestrel_book: Path, tmp_path: Path, typed: int, meant: str
) -> None:
    """2100 typed for 21:00 (0500 shows as 500): a spreadsheet reads the number as a
    day count, 2100 days after its day zero (1905-09-30); the message said only that
    this date disagrees with Date."""

    def edit(wb: Any) -> None:
        table_cell(wb, L.CLOSURE_TABLE, 0, "From").value = typed

    with pytest.raises(PlanError) as e:
        read_plan(edited(kestrel_book, tmp_path, edit))
    (p,) = e.value.problems
    assert p.where == "Closures!B6"
    assert f"did you mean {meant}?" in p.message


def test_a_night_closure_typed_on_the_12_hour_clock_is_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """'9:00 to 5:00' for a night closure (9 pm to 5 am): on the 24-hour clock that is
    09:00 to 05:00 the next day, 20 hours through two peaks; said, with 21:00 to type."""

    def edit(wb: Any) -> None:
        table_cell(wb, L.CLOSURE_TABLE, 0, "From").value = dt.time(9, 0)
        table_cell(wb, L.CLOSURE_TABLE, 0, "To").value = dt.time(5, 0)

    plan = read_plan(edited(kestrel_book, tmp_path, edit))
    assert plan.closures[0].end - plan.closures[0].start == dt.timedelta(hours=20)
    (w,) = [w for w in plan.input_warnings if "24-hour clock" in w]
    assert w.startswith("Closures!B6: ")
    assert "20 hours" in w and "type 21:00 in From" in w


def test_a_day_closure_before_noon_is_not_queried(kestrel_book: Path, tmp_path: Path) -> None:
    def edit(wb: Any) -> None:  # 01:00 to 05:00, and 09:00 to 11:30 the next day
        table_cell(wb, L.CLOSURE_TABLE, 0, "From").value = dt.time(1, 0)
        table_cell(wb, L.CLOSURE_TABLE, 0, "Date").value = dt.datetime(2027, 5, 4)
        table_cell(wb, L.CLOSURE_TABLE, 1, "From").value = dt.time(9, 0)
        table_cell(wb, L.CLOSURE_TABLE, 1, "To").value = dt.time(11, 30)

    assert not [w for w in warnings_of(kestrel_book, tmp_path, edit) if "24-hour" in w]


# ---------------------------------------------------------------------------------------------
# Formats and sheets that hide what is read
# ---------------------------------------------------------------------------------------------


def test_a_number_in_a_percent_formatted_cell_is_said_as_shown_and_as_read(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """The work-zone length cell given a percent format (format painted from the heavy
    vehicles cell): 0.012 shows as 1.2 % and is read as 0.012 mi (63 ft)."""

    def edit(wb: Any) -> None:
        cell = set_named(wb, "site_work_zone_length", 0.012)
        cell.number_format = "0.0%"

    plan = read_plan(edited(kestrel_book, tmp_path, edit))
    (w,) = [w for w in plan.input_warnings if "percent format" in w]
    assert w.startswith("Site!B12: ")
    assert "shows 1.2 %" in w and "read as 0.012 mi" in w


def test_a_demand_in_a_percent_formatted_cell_is_said(kestrel_book: Path, tmp_path: Path) -> None:
    """5,200 typed into a percent cell with automatic percent entry is stored as 52."""

    def edit(wb: Any) -> None:
        cell = table_cell(wb, L.DEMAND_TABLE, 7, L.DEMAND_COLUMNS[2])
        cell.value, cell.number_format = 52, "0%"

    (w,) = [w for w in warnings_of(kestrel_book, tmp_path, edit) if "percent format" in w]
    assert w.startswith("Demand!C16: ") and "shows 5,200 %" in w and "read as 52 veh/h" in w


def test_percentages_in_percent_cells_are_not_said(kestrel_book: Path, tmp_path: Path) -> None:
    def edit(wb: Any) -> None:
        set_named(wb, "site_heavy_vehicle_percent", 0.08).number_format = "0%"

    assert not [w for w in warnings_of(kestrel_book, tmp_path, edit) if "percent format" in w]


@pytest.mark.parametrize("state", ["hidden", "veryHidden"])
def test_a_hidden_input_sheet_is_said(kestrel_book: Path, tmp_path: Path, state: str) -> None:
    """The Limits sheet hidden: its limits still judge every hour, unseen."""

    def edit(wb: Any) -> None:
        wb[L.LIMITS].sheet_state = state

    (w,) = [w for w in warnings_of(kestrel_book, tmp_path, edit) if "hidden" in w]
    assert w.startswith("sheet 'Limits': ") and "read as typed" in w


def test_a_free_flow_speed_below_the_limits_is_queried(tmp_path: Path) -> None:
    """45 mi/h typed for the free-flow speed on a 65 mi/h road with a 55 mi/h work zone:
    below the work-zone limit, driving through the work zone costs no time, so the plan's
    work-zone delay vanishes without a word."""
    data = kestrel_json()
    data["site"]["free_flow_speed"] = 45
    path = saved_json(tmp_path, "ffs.json", data)
    (w,) = [w for w in input_warnings(load_plan(path)) if "free-flow speed" in w]
    assert w.startswith("site.free_flow_speed: ")
    assert "45 mi/h is below the speed limit (65 mi/h)" in w
    assert "and the work-zone speed limit (55 mi/h)" in w


def test_a_free_flow_speed_above_the_limit_is_not_queried(tmp_path: Path) -> None:
    data = kestrel_json()
    data["site"]["free_flow_speed"] = 70
    path = saved_json(tmp_path, "ffs.json", data)
    assert not [w for w in input_warnings(load_plan(path)) if "free-flow speed" in w]


def test_a_heavy_vehicle_share_above_half_is_queried(tmp_path: Path) -> None:
    """100 % heavy vehicles: every vehicle a truck, counted as two passenger cars on level
    terrain (HCM 7th ed., Exhibit 12-25, E_T = 2; from memory), so the capacity in veh/h
    halves and the only other warning blames the demand."""
    data = kestrel_json()
    data["site"]["heavy_vehicle_percent"] = 100
    (w,) = [
        w
        for w in input_warnings(load_plan(saved_json(tmp_path, "hv.json", data)))
        if "heavy vehicles" in w.casefold()
    ]
    assert w.startswith("site.heavy_vehicle_percent: ") and "100 %" in w
    assert not [w for w in input_warnings(load_plan(KESTREL)) if "heavy vehicles" in w.casefold()]


def test_ramp_flows_typed_past_midnight_without_the_next_date_are_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """Hourly flows of an on-ramp typed day by day from 06:00 to 05:00 on one date, as the
    demand in the test above: the rows after midnight are read as that morning's."""
    name, dist, kind, _, _ = L.LANDMARK_COLUMNS
    date_h, time_h = L.RAMP_FLOW_COLUMNS

    def edit(wb: Any) -> None:
        ramp = {name: "Wyvern Lane on-ramp", dist: 0.4, kind: "entrance ramp"}
        write_table(wb, L.LANDMARK_TABLE, [ramp])
        _, t = find_table(wb, L.RAMP_FLOW_TABLE)
        first = t.tableColumns[len(L.RAMP_FLOW_COLUMNS)]
        table_cell(wb, L.RAMP_FLOW_TABLE, -1, first.name).value = "Wyvern Lane on-ramp"
        first.name = "Wyvern Lane on-ramp"
        rows = []
        for i in range(72):
            day, hour = divmod(i, 24)
            rows.append(
                {
                    date_h: dt.datetime(2027, 5, 3 + day),
                    time_h: dt.time((hour + 6) % 24),
                    "Wyvern Lane on-ramp": 200,
                }
            )
        write_table(wb, L.RAMP_FLOW_TABLE, rows)

    found = [w for w in warnings_of(kestrel_book, tmp_path, edit) if "past midnight" in w]
    assert len(found) == 1
    assert found[0].startswith("Approach!H26: ")  # the table's first data row is 8


def test_counts_labelled_by_the_hour_they_end_are_queried(
    kestrel_book: Path, tmp_path: Path
) -> None:
    """Counts labelled 01:00 ... 00:00 (the end of each hour, the midnight row dated the
    next day, as a counter's report gives them): read as start times, every count moves
    an hour later; the demand then runs from 01:00 to 01:00, which is said."""
    date_h, time_h, _ = L.DEMAND_COLUMNS

    def hour_ending(wb: Any) -> None:
        for i in range(72):
            end = dt.datetime(2027, 5, 3) + dt.timedelta(hours=i + 1)
            table_cell(wb, L.DEMAND_TABLE, i, date_h).value = end.replace(hour=0)
            table_cell(wb, L.DEMAND_TABLE, i, time_h).value = end.time()

    def edit(wb: Any) -> None:
        hour_ending(wb)
        for k in range(2):  # the closures an hour later, inside the shifted demand
            c = table_cell(wb, L.CLOSURE_TABLE, k, "From")
            c.value = dt.time(c.value.hour + 1)

    (w,) = [w for w in warnings_of(kestrel_book, tmp_path, edit) if "hour each count ends" in w]
    assert w == (
        "Demand!B9: the demand runs from Mon 2027-05-03 01:00 to Thu 2027-05-06 01:00: if "
        "the times are the hour each count ends (01:00 to 24:00), every count is read an "
        "hour late; Start time is the hour it starts (the count of 00:00-01:00 goes in the "
        "00:00 row)"
    )


@pytest.mark.parametrize(("hours", "queried"), [(24, True), (23, False)])
def test_one_day_of_counts_labelled_by_the_hour_they_end_is_queried(
    kestrel_book: Path, tmp_path: Path, hours: int, queried: bool
) -> None:
    """A single day of hour-ending labels (01:00 ... 00:00 the next day: 24 rows) is the
    smallest demand that shows the sign; 23 rows from 01:00 end at 00:00, no sign."""
    date_h, time_h, flow_h = L.DEMAND_COLUMNS

    def edit(wb: Any) -> None:
        for i in range(72):
            cells = [table_cell(wb, L.DEMAND_TABLE, i, h) for h in (date_h, time_h, flow_h)]
            if i < hours:
                end = dt.datetime(2027, 5, 3) + dt.timedelta(hours=i + 1)
                cells[0].value, cells[1].value = end.replace(hour=0), end.time()
            else:
                for c in cells:
                    c.value = None
        for header, value in (("From", dt.time(20)), ("To", dt.time(23))):
            table_cell(wb, L.CLOSURE_TABLE, 0, header).value = value
        for header in L.CLOSURE_COLUMNS:  # the second closure taken out
            table_cell(wb, L.CLOSURE_TABLE, 1, header).value = None

    found = [w for w in warnings_of(kestrel_book, tmp_path, edit) if "hour each count ends" in w]
    assert len(found) == (1 if queried else 0)


def test_counts_from_a_morning_hour_are_not_queried(kestrel_book: Path, tmp_path: Path) -> None:
    """A demand from 06:00 to 06:00 (a day's counts from the morning) is no sign of it."""
    date_h, time_h, _ = L.DEMAND_COLUMNS

    def edit(wb: Any) -> None:
        for i in range(72):
            at = dt.datetime(2027, 5, 3, 5) + dt.timedelta(hours=i)
            table_cell(wb, L.DEMAND_TABLE, i, date_h).value = at.replace(hour=0)
            table_cell(wb, L.DEMAND_TABLE, i, time_h).value = at.time()

    assert not [w for w in warnings_of(kestrel_book, tmp_path, edit) if "hour each count ends" in w]


def test_a_jam_density_per_mile_typed_in_a_metric_plan_is_queried(tmp_path: Path) -> None:
    """190 typed (veh/mi/ln, a usual jam density) in a metric plan is 190 veh/km/ln: one
    vehicle per 1,000 / 190 = 5.3 m of lane, shorter than a car and its gap, and every
    queue comes out 190 / 118 = 1.6 times too short (190 veh/mi = 118 veh/km)."""
    data = json.loads((EXAMPLES / "fenwick_downs_weekend.json").read_text(encoding="utf-8"))
    data["site"]["jam_density"] = 190
    plan = load_plan(saved_json(tmp_path, "dense.json", data))
    (w,) = [w for w in input_warnings(plan) if "jam density" in w]
    assert w.startswith("site.jam_density: ") and "190 veh/km/ln" in w and "5.3 m" in w
    data["site"]["jam_density"] = 118  # the same density in veh/km/ln: not queried
    plan = load_plan(saved_json(tmp_path, "usual.json", data))
    assert not [w for w in input_warnings(plan) if "jam density" in w]


def test_hourly_shares_of_the_aadt_typed_as_flows_are_queried(tmp_path: Path) -> None:
    """The weekday shares of the AADT (percent, summing to 100 a day) pasted into the
    demand as flows in veh/h: a road carrying 100 vehicles a day, no queue ever."""
    data = kestrel_json()
    day = list(L.WEEKDAY_SHARES)
    assert sum(day) == pytest.approx(100.0)
    data["demand"]["veh_h"] = day * 3
    plan = load_plan(saved_json(tmp_path, "shares.json", data))
    (w,) = [w for w in input_warnings(plan) if "shares" in w]
    assert w.startswith("demand.veh_h[0]: ") and "100 vehicles a day" in w
    assert not [w for w in input_warnings(load_plan(KESTREL)) if "shares" in w]
