"""Tests for wzq.io.counts: the TMG hourly volume record, CSV and Excel count tables.

TMG records are built here field by field from the published layouts, typed
again from the tables (not taken from the code):

* TMG 2013, ch. 7, Table 7-9 "Hourly Traffic Volume Record" (hour fields in
  Table 7-10): record type col. 1, FIPS state 2-3, functional class 4-5,
  station 6-11, direction 12, lane 13, year 14-17, month 18-19, day 20-21,
  day of week 22, 24 hourly volumes of 5 columns from 23-27 to 138-142,
  restrictions 143;
* TMG 2001, section 6, Table 6-3-1 "Hourly Traffic Volume Record (#3
  Record)": the same to column 13, then year 14-15, month 16-17, day 18-19,
  day of week 20, volumes 21-25 to 136-140, restrictions 141.

(Layouts read from transcriptions of the tables, which agree with each other;
day of week 1 = Sunday, checked against a transcribed record of Friday
2016-01-01 coded 6.)
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from wzq.engine.plan import PlanError
from wzq.io import counts as C

# (field, first column, last column) -- TMG 2013 Table 7-9, typed from the table
LAYOUT_2013 = [
    ("record_type", 1, 1),
    ("state_code", 2, 3),
    ("functional_class", 4, 5),
    ("station_id", 6, 11),
    ("direction", 12, 12),
    ("lane", 13, 13),
    ("year", 14, 17),
    ("month", 18, 19),
    ("day", 20, 21),
    ("day_of_week", 22, 22),
    *[(f"hour_{h:02d}", 23 + 5 * h, 27 + 5 * h) for h in range(24)],
    ("restrictions", 143, 143),
]
# TMG 2001 Table 6-3-1
LAYOUT_2001 = [
    *LAYOUT_2013[:6],
    ("year", 14, 15),
    ("month", 16, 17),
    ("day", 18, 19),
    ("day_of_week", 20, 20),
    *[(f"hour_{h:02d}", 21 + 5 * h, 25 + 5 * h) for h in range(24)],
    ("restrictions", 141, 141),
]
VOLUMES = [100 + 37 * h for h in range(24)]  # all different, so a shifted field shows


def record(layout, **values) -> str:
    """A record with each value right-justified in its columns (numbers zero-filled)."""
    width = layout[-1][2]
    line = [" "] * width
    for name, first, last in layout:
        if name not in values:
            continue
        v = values[name]
        n = last - first + 1
        text = "" if v is None else (f"{v:0{n}d}" if isinstance(v, int) else str(v).rjust(n))
        assert len(text) <= n, (name, text)
        line[first - 1 : last] = list(text.rjust(n))
    return "".join(line)


def fields_2013(date: dt.date, lane: int = 0, volumes=VOLUMES, **kw) -> dict:
    dow = (date.weekday() + 1) % 7 + 1  # TMG: 1 = Sunday
    v = dict(
        record_type="3",
        state_code="00",
        functional_class="2U",
        station_id="LV0417",
        direction="3",
        lane=str(lane),
        year=date.year,
        month=date.month,
        day=date.day,
        day_of_week=str(dow),
        restrictions="0",
    )
    for h, x in enumerate(volumes):
        v[f"hour_{h:02d}"] = x
    v.update(kw)
    return v


def rec2013(date: dt.date, lane: int = 0, volumes=VOLUMES, **kw) -> str:
    return record(LAYOUT_2013, **fields_2013(date, lane, volumes, **kw))


def problems_of(excinfo) -> list[str]:
    return [str(p) for p in excinfo.value.problems]


# ---------------------------------------------------------------------------------------------
# The TMG record, field by field
# ---------------------------------------------------------------------------------------------


def test_2013_record_read_field_by_field() -> None:
    day = dt.date(2026, 5, 5)  # a Tuesday: TMG code 3
    line = rec2013(day, lane=2, restrictions="0")
    assert len(line) == 143  # Table 7-9: 143 columns
    rec, problems = C.parse_volume_record(line, 7, "s.vol", "2013")
    assert problems == []
    assert rec.line == 7
    assert rec.record_type == "3"
    assert rec.state_code == "00"
    assert rec.functional_class == "2U"
    assert rec.station_id == "LV0417"
    assert rec.direction == "3"
    assert rec.lane == 2
    assert rec.date == day
    assert rec.day_of_week == 3
    assert list(rec.volumes) == VOLUMES
    assert rec.restrictions == "0"


def test_2001_record_read_field_by_field() -> None:
    day = dt.date(2016, 1, 1)  # Friday: code 6 in the transcribed example record
    v = fields_2013(day, lane=1)
    v["year"] = 16  # two digits in 2001
    line = record(LAYOUT_2001, **v)
    assert len(line) == 141
    assert C._edition_of(line) == "2001"
    rec, problems = C.parse_volume_record(line, 1, "s.vol", "2001")
    assert problems == []
    assert (rec.date, rec.day_of_week, rec.lane, rec.station_id) == (day, 6, 1, "LV0417")
    assert list(rec.volumes) == VOLUMES


def test_pipe_separated_record() -> None:
    day = dt.date(2026, 5, 6)  # Wednesday: code 4
    parts = ["3", "00", "2U", "LV0417", "3", "0", "2026", "05", "06", "4"]
    parts += [str(v) for v in VOLUMES] + ["0"]
    line = "|".join(parts)
    rec, problems = C.parse_volume_record(line, 1, "s.vol", "pipe")
    assert problems == []
    assert rec.date == day and list(rec.volumes) == VOLUMES and rec.day_of_week == 4


def test_blank_hour_is_no_count_and_trimmed_blanks_are_allowed() -> None:
    vols = [*VOLUMES[:23], None]
    line = rec2013(dt.date(2026, 5, 5), volumes=vols, restrictions=None).rstrip()
    assert len(line) < 143  # an editor trimmed the trailing blanks
    rec, problems = C.parse_volume_record(line, 1, "s.vol", "2013")
    assert problems == [] and rec.volumes[23] is None and rec.restrictions == ""


def test_edition_recognised_by_date_and_day_of_week() -> None:
    line13 = rec2013(dt.date(2026, 5, 5))
    assert C._edition_of(line13) == "2013"
    assert C._edition_of(line13[:141]) == "2013"  # still the 2013 date fields agree
    assert C._edition_of("3" + "x" * 100) is None


# ---------------------------------------------------------------------------------------------
# Malformed records: every problem with its line
# ---------------------------------------------------------------------------------------------


def test_every_malformed_record_reported_with_its_line() -> None:
    tue = dt.date(2026, 5, 5)
    good = rec2013(tue)
    bad_type = "2" + good[1:]
    text_volume = good[:27] + "  abc" + good[32:]  # hour 01: columns 28-32
    negative = good[:22] + "  -12" + good[27:]  # hour 00: columns 23-27
    bad_month = rec2013(tue, month=13)
    wrong_dow = rec2013(tue, day_of_week="5")
    bad_direction = good[:11] + "x" + good[12:]
    bad_lane = good[:12] + "A" + good[13:]
    too_long = good + "0000000"
    pipe = "|".join(["3", "00", "2U", "LV0417", "3", "0", "2026"])
    lines = [
        good,
        bad_type,
        text_volume,
        negative,
        bad_month,
        wrong_dow,
        bad_direction,
        bad_lane,
        too_long,
        pipe,
    ]
    with pytest.raises(PlanError) as e:
        C.read_tmg(lines, "s.vol")
    got = problems_of(e)
    expect = {
        2: "column 1 (record type)",
        3: "columns 28-32 (volume 01:00-02:00)",
        4: "columns 23-27 (volume 00:00-01:00)",
        5: "columns 14-17 (year of data)",
        6: "column 22 (day of week)",
        7: "column 12 (direction of travel)",
        8: "column 13 (lane of travel)",
        9: "",
        10: "",
    }
    for line, where in expect.items():
        hits = [p for p in got if p.startswith(f"s.vol line {line}")]
        assert hits, (line, got)
        assert where in hits[0], (line, hits)
    assert not any(p.startswith("s.vol line 1:") or p.startswith("s.vol line 1,") for p in got)
    text = "\n".join(got)
    assert "negative count -12" in text
    assert "'  abc' is not a whole number" in text
    assert "code 5 (Thursday) does not agree with 2026-05-05, a Tuesday (code 3)" in text
    assert "150 characters" in text
    assert "7 fields separated by '|'" in text


def test_duplicate_day_with_other_counts_names_both_lines() -> None:
    tue = dt.date(2026, 5, 5)
    other = [v + 1 for v in VOLUMES]
    with pytest.raises(PlanError) as e:
        C.read_tmg([rec2013(tue), rec2013(dt.date(2026, 5, 6)), rec2013(tue, volumes=other)], "s")
    (p,) = problems_of(e)
    assert p.startswith("s line 3") and "line 1" in p and "2026-05-05" in p


def test_exact_duplicate_is_kept_once_with_a_warning() -> None:
    tue = dt.date(2026, 5, 5)
    read = C.read_tmg([rec2013(tue), rec2013(tue)], "s")
    assert read.history.flows_veh_h[0].tolist() == VOLUMES
    assert any("line 2 repeats line 1" in w for w in read.warnings)


def test_lanes_combined_and_single_lanes_on_one_day_refused() -> None:
    tue = dt.date(2026, 5, 5)
    with pytest.raises(PlanError, match=r"s line 1.*lanes combined \(lane 0\) and single lanes"):
        C.read_tmg([rec2013(tue, lane=0), rec2013(tue, lane=1)], "s")


def test_impossible_count_refused_with_line_and_hour() -> None:
    vols = list(VOLUMES)
    vols[8] = 3500  # one lane cannot carry 3,500 veh/h (above MAX_FLOW_VEH_H_LN)
    with pytest.raises(PlanError) as e:
        C.read_tmg([rec2013(dt.date(2026, 5, 5), lane=1, volumes=vols)], "s")
    (p,) = problems_of(e)
    assert p.startswith("s line 1, hour 08:00") and "3,500 vehicles" in p


def test_several_stations_need_a_choice() -> None:
    tue = dt.date(2026, 5, 5)
    lines = [rec2013(tue), rec2013(tue, station_id="LV0999"), rec2013(tue, direction="7")]
    with pytest.raises(PlanError, match="choose one station and one direction"):
        C.read_tmg(lines, "s")
    read = C.read_tmg(lines, "s", station="LV0417", direction="eastbound")
    assert read.station == "LV0417" and read.direction.startswith("3")
    read = C.read_tmg(lines, "s", station="LV0999")
    assert read.history.n_days == 1
    with pytest.raises(PlanError, match="no record of the station and direction"):
        C.read_tmg(lines, "s", station="LV0417", direction="south")
    with pytest.raises(PlanError, match="not a direction"):
        C.read_tmg(lines, "s", direction="up")


# ---------------------------------------------------------------------------------------------
# Lanes, restrictions, gaps and the days the clocks change
# ---------------------------------------------------------------------------------------------


def test_lanes_added_up_and_a_lane_out_leaves_the_day_out() -> None:
    mon, tue, wed = dt.date(2026, 5, 4), dt.date(2026, 5, 5), dt.date(2026, 5, 6)
    a = [10 * (h + 1) for h in range(24)]
    b = [5 * (h + 1) for h in range(24)]
    lines = [
        rec2013(mon, 1, a),
        rec2013(mon, 2, b),
        rec2013(tue, 1, a),  # lane 2 missing: a lane out
        rec2013(wed, 1, a),
        rec2013(wed, 2, [0] * 24),  # lane 2 counted nothing all day while lane 1 did
    ]
    read = C.read_tmg(lines, "s")
    h = read.history
    assert h.flows_veh_h[0].tolist() == [15 * (k + 1) for k in range(24)]  # 10 + 5 per hour
    reasons = dict(h.excluded)
    assert "lane 2 not reported" in reasons[tue]
    assert "lane 2 counted nothing" in reasons[wed]
    assert h.usable().tolist() == [True, False, False]
    assert read.lanes == (1, 2)


def test_restriction_code_leaves_the_day_out_with_its_meaning() -> None:
    tue = dt.date(2026, 5, 5)
    read = C.read_tmg([rec2013(tue, restrictions="1")], "s")
    ((day, why),) = read.history.excluded
    assert day == tue and "restriction code 1" in why and "construction" in why


def test_blank_hours_are_gaps_and_the_spring_forward_sunday_is_left_out() -> None:
    sun = dt.date(2026, 3, 8)  # a Sunday in March, 02:00 blank: the clocks go forward
    thu = dt.date(2026, 3, 12)  # a Thursday with a counter outage
    spring = list(VOLUMES)
    spring[2] = None
    outage = list(VOLUMES)
    outage[10:13] = [None] * 3
    read = C.read_tmg([rec2013(sun, volumes=spring), rec2013(thu, volumes=outage)], "s")
    h = read.history
    assert h.n_days == 5  # 8 to 12 March; 9-11 March have no record at all
    assert dict(h.excluded)[sun].startswith("the clocks go forward")
    gaps = dict(read.gaps())
    assert gaps[thu] == 3 and sun not in gaps
    assert gaps[dt.date(2026, 3, 9)] == 24
    summary = dict(read.summary_lines())
    assert summary["days"] == "5 in the range, 0 complete and usable"
    assert summary["date range"] == "Sun 2026-03-08 to Thu 2026-03-12"
    assert summary["gaps"].startswith("4 days with missing intervals (3 with no count at all)")


# ---------------------------------------------------------------------------------------------
# CSV: long and wide form
# ---------------------------------------------------------------------------------------------


def long_csv(day: dt.date, values, step_min: int = 60, header: bool = True) -> str:
    rows = ["time,count"] if header else []
    t = dt.datetime.combine(day, dt.time())
    for v in values:
        rows.append(f"{t:%Y-%m-%d %H:%M},{v}")
        t += dt.timedelta(minutes=step_min)
    return "\n".join(rows) + "\n"


def test_long_form_hourly_with_and_without_header() -> None:
    day = dt.date(2026, 5, 5)
    for header in (True, False):
        read = C.read_csv_text(long_csv(day, VOLUMES, header=header), "c.csv")
        h = read.history
        assert h.interval_s == 3600 and h.first_day == day
        assert h.flows_veh_h[0].tolist() == VOLUMES


def test_long_form_quarter_hours_become_flows() -> None:
    # 96 counts of 15 minutes; a count of 300 in 15 minutes is a flow of 1,200 veh/h
    day = dt.date(2026, 5, 5)
    values = [300 + k for k in range(96)]
    read = C.read_csv_text(long_csv(day, values, 15), "c.csv")
    assert read.history.interval_s == 900
    assert read.history.flows_veh_h[0, :3].tolist() == [1200.0, 1204.0, 1208.0]


def test_long_form_date_and_time_columns_and_end_stamps() -> None:
    day = dt.date(2026, 5, 5)
    rows = ["date;time;vehicles"]
    for h, v in enumerate(VOLUMES):
        rows.append(f"2026-05-05;{h + 1:02d}:00;{v}")  # stamped at the end: 01:00 ... 24:00
    read = C.read_csv_text("\n".join(rows), "c.csv", stamp="end")
    assert read.history.first_day == day
    assert read.history.flows_veh_h[0].tolist() == VOLUMES


def test_wide_form_hourly() -> None:
    rows = ["date," + ",".join(f"h{h}" for h in range(24))]
    rows.append("2026-05-05," + ",".join(map(str, VOLUMES)))
    rows.append("2026-05-07," + ",".join(map(str, VOLUMES[::-1])))
    read = C.read_csv_text("\n".join(rows), "w.csv")
    h = read.history
    assert h.n_days == 3 and h.flows_veh_h[2].tolist() == VOLUMES[::-1]
    assert np.isnan(h.flows_veh_h[1]).all()  # 6 May: no row, a gap


def test_csv_problems_each_with_line_and_column() -> None:
    rows = [
        "time,count",
        "2026-05-05 00:00,100",
        "05/05/2026 01:00,100",  # not a date we read
        "2026-05-05 02:00,-4",
        "2026-05-05 03:00,many",
        "2026-05-05 04:00,100",
        "2026-05-05 04:00,120",  # a second count for 04:00
    ]
    with pytest.raises(PlanError) as e:
        C.read_csv_text("\n".join(rows), "c.csv")
    got = problems_of(e)
    assert any(p.startswith("c.csv line 3, column 1") and "not a date-time" in p for p in got)
    assert any(p.startswith("c.csv line 4, column 2") and "negative count -4" in p for p in got)
    assert any(p.startswith("c.csv line 5, column 2") and "'many'" in p for p in got)
    rows = rows[:2] + rows[5:]
    with pytest.raises(PlanError) as e:
        C.read_csv_text("\n".join(rows), "c.csv")
    (p,) = problems_of(e)
    assert p.startswith("c.csv line 4, column 2") and "first at c.csv line 3, column 2" in p


def test_off_grid_time_and_impossible_flow() -> None:
    text = "t,c\n2026-05-05 00:00,10\n2026-05-05 01:00,10\n2026-05-05 01:30,10\n"
    with pytest.raises(PlanError, match=r"not on the 60-minute grid"):
        C.read_csv_text(text, "c.csv", interval_minutes=60)
    text = "t,c\n2026-05-05 00:00,10\n2026-05-05 01:00,9500\n"
    with pytest.raises(PlanError, match=r"c.csv line 3, column 2.*9,500 veh/h, more than 3 lanes"):
        C.read_csv_text(text, "c.csv", lanes=3)  # 3 x 3,000 veh/h = 9,000


def test_fall_back_sunday_with_an_hour_twice_is_left_out_not_an_error() -> None:
    sun = dt.date(2026, 11, 1)  # a Sunday in November
    rows = ["time,count"]
    for h in range(24):
        rows.append(f"2026-11-01 {h:02d}:00,{100 + h}")
        if h == 1:
            rows.append("2026-11-01 01:00,95")  # the repeated hour
    read = C.read_csv_text("\n".join(rows), "c.csv")
    assert dict(read.history.excluded)[sun].startswith("the clocks go back")
    assert read.history.flows_veh_h[0, 1] == 101.0


def test_low_days_and_daytime_zeros_are_warnings() -> None:
    rows = ["date," + ",".join(str(h) for h in range(24))]
    day = dt.date(2026, 5, 5)
    for week in range(4):  # four Tuesdays, the last at half the traffic
        f = 0.5 if week == 3 else 1.0
        vals = [int(1000 * f)] * 24
        rows.append(f"{day + dt.timedelta(weeks=week)}," + ",".join(map(str, vals)))
    zero = [1000] * 24
    zero[9:13] = [0] * 4  # 09:00-13:00: four daytime hours with nothing
    rows.append("2026-05-06," + ",".join(map(str, zero)))
    read = C.read_csv_text("\n".join(rows), "w.csv")
    text = "\n".join(read.warnings)
    assert "Tue 2026-05-26: 12,000 vehicles, 50% of the median Tuesday" in text
    assert "Wed 2026-05-06: 4 daytime hours in a row" in text
    left = C.exclude(read, [dt.date(2026, 5, 26)])
    assert not left.history.usable()[21]


# ---------------------------------------------------------------------------------------------
# Files: dispatch, Excel sheets
# ---------------------------------------------------------------------------------------------


def test_read_counts_dispatches_by_content(tmp_path: Path) -> None:
    tmg = tmp_path / "station.txt"
    tmg.write_text(rec2013(dt.date(2026, 5, 5)) + "\n")
    assert C.read_counts(tmg).kind.startswith("TMG")
    csv = tmp_path / "counts.txt"
    csv.write_text(long_csv(dt.date(2026, 5, 5), VOLUMES))
    assert C.read_counts(csv).kind == "CSV table"
    with pytest.raises(PlanError, match="no such file"):
        C.read_counts(tmp_path / "missing.csv")


def test_excel_long_form_with_cell_references(tmp_path: Path) -> None:
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Counts"
    ws.append(["date and time", "vehicles"])
    t = dt.datetime(2026, 5, 5)
    for h, v in enumerate(VOLUMES):
        ws.append([t + dt.timedelta(hours=h), v])
    ws["B6"] = "n/a"
    path = tmp_path / "counts.xlsx"
    wb.save(path)
    with pytest.raises(PlanError) as e:
        C.read_counts(path, sheet="Counts")
    (p,) = problems_of(e)
    assert p.startswith("Counts!B6") and "'n/a'" in p
    ws["B6"] = None
    wb.save(path)
    read = C.read_counts(path)
    assert np.isnan(read.history.flows_veh_h[0, 4])
    assert read.history.flows_veh_h[0, 5] == VOLUMES[5]
    with pytest.raises(PlanError, match="no sheet 'Other'"):
        C.read_counts(path, sheet="Other")


def test_the_demo_history_reads_as_documented() -> None:
    # examples/build_count_history.py places these faults on purpose
    path = Path(__file__).resolve().parents[2] / "examples" / "larkspur_vale_eb_2026.vol"
    read = C.read_counts(path)
    h = read.history
    assert (h.first_day, h.last_day, h.interval_s) == (
        dt.date(2026, 1, 1),
        dt.date(2026, 12, 31),
        3600,
    )
    reasons = dict(h.excluded)
    assert set(reasons) == {
        dt.date(2026, 3, 8),
        dt.date(2026, 6, 16),
        dt.date(2026, 6, 17),
        dt.date(2026, 6, 18),
        dt.date(2026, 9, 22),
    }
    assert [d for d, _ in read.gaps()] == [dt.date(2026, 2, 10)]
    assert dict(read.gaps())[dt.date(2026, 2, 10)] == 6  # 10:00-16:00 blank
    assert read.lanes == (1, 2, 3)
