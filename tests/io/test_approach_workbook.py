"""The approach road in the workbook: typed on the Approach sheet, read with every
problem located, and written back (Results, Permit table, charts), and shown by the
report figure, the space-time picture, the terminal and the batch summary.

The hand site (invented road and dates): two lanes, free-flow speed 25 m/s, jam
density 0.125 veh/m/ln, capacity 2,000 veh/h/ln (no heavy vehicles), so the
triangular diagram ``q = min(v_f k, w (k_j - k))`` (Newell 1993) has the backward
wave speed ``w = c / (k_j - c / v_f)``; mainline demand 1,800 veh/h for six hours;
one lane closed 01:00-03:00 at 1,500 veh/h; the open road discharges at 93 % of
4,000 veh/h (HCM 7th ed. ch. 10, 7 % capacity drop). The back of the queue is
worked by the shock construction (Lighthill & Whitham 1955; Richards 1956: the
speed between two states is ``(q2 - q1) / (k2 - k1)``), free density ``q / v_f``,
congested density ``k_j - q / w``, and the recovery from the end of the closure
travelling upstream at ``-w``. A landmark is a bridge 1,000 m upstream of the
taper; the end of the advance warning signs is 5,000 m upstream, beyond the queue.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import importlib.util
import io
from pathlib import Path

import drawn
import numpy as np
import pytest
from openpyxl import load_workbook
from test_report import flat, pages_text
from workbook_helpers import (
    edited,
    fill_template,
    find_table,
    named_cell,
    set_named,
    table_cell,
    write_table,
)

import wzq
from wzq import units as u
from wzq.cli.check import describe
from wzq.engine.plan import Approach, Closure, Demand, Landmark, Plan, PlanError, Site, Thresholds
from wzq.io.batch.summary import plan_row
from wzq.io.report import build_report
from wzq.io.workbook import layout as L
from wzq.io.workbook.charts import DATA_HEADER_ROW, LANDMARK_COL
from wzq.io.workbook.landmark_tables import BEYOND, EXIT_DELAY_HEADER
from wzq.io.workbook.reader import read_plan
from wzq.io.workbook.run import run_to, write_filled_workbook
from wzq.present.drawings import BOTTOM_IN, queue_length_drawing
from wzq.present.show import print_approach
from wzq.present.tables import charted_landmarks

START = dt.datetime(2027, 5, 3)  # invented
V_F, K_J, C = 25.0, 0.125, 2000.0 / u.HOUR  # m/s, veh/m/ln, veh/s/ln
W = C / (K_J - C / V_F)
LANES = 2
A, Q, R = 1800.0, 1500.0, 0.93 * 4000.0  # arriving, queued, recovery flows (veh/h)
BRIDGE, SIGNS = 1000.0, 5000.0  # m upstream of the taper


def k_free(q: float) -> float:
    return q / LANES / u.HOUR / V_F


def k_queued(q: float) -> float:
    return K_J - q / LANES / u.HOUR / W


def shock(q1: float, q2: float) -> float:
    """Speed (m/s) of the shock between a free state q1 and a congested state q2."""
    return (q2 - q1) / LANES / u.HOUR / (k_queued(q2) - k_free(q1))


def construction() -> dict[str, float]:
    """The back of the queue against the bridge, by hand (seconds from START, metres)."""
    t_s, t_e = 3600.0, 3 * 3600.0
    u0 = shock(A, Q)  # < 0: the back grows upstream
    t1 = t_s + BRIDGE / -u0  # reaches the bridge
    b_e = -u0 * (t_e - t_s)  # where the back stands when the closure ends
    t_m = t_e + b_e / (W + u0)  # the recovery wave (-w) meets the growing back
    b_m = W * (t_m - t_e)  # the longest queue
    u_r = shock(A, R)  # > 0: the back recedes
    t3 = t_m + (b_m - BRIDGE) / u_r  # back at the bridge
    return dict(u0=u0, t1=t1, b_e=b_e, t_m=t_m, b_m=b_m, u_r=u_r, t3=t3)


LANDMARKS = (
    Landmark("Ash Lane bridge", BRIDGE, "structure"),
    Landmark("end of the warning signs", SIGNS, "warning-signs-end"),
)


def hand_plan(limit: str | None = "Ash Lane bridge", landmarks=LANDMARKS) -> Plan:
    site = Site(lanes=LANES, speed_limit=V_F, work_zone_speed_limit=V_F, work_zone_length=0.0,
                free_flow_speed=V_F, heavy_vehicle_share=0.0, jam_density=K_J,
                base_capacity_pc_h_ln=2000.0, name="Ashcombe Link (fictional)",
                direction="northbound")  # fmt: skip
    closure = Closure(START + dt.timedelta(hours=1), START + dt.timedelta(hours=3), 1,
                      capacity_override_veh_h_ln=Q)  # fmt: skip
    return Plan(
        site,
        Demand(START, 3600, np.full(6, A)),
        (closure,),
        thresholds=Thresholds(queue_must_not_pass=limit),
        approach=Approach(landmarks),
    )


def test_the_construction_closes_on_itself() -> None:
    """The back returns to the taper when the point queue of (1,800 - 1,500) x 2 h =
    600 veh has cleared at 3,720 - 1,800 veh/h after the closure (deterministic queue)."""
    h = construction()
    cleared = h["t_m"] + h["b_m"] / h["u_r"]
    assert cleared == pytest.approx(3 * 3600.0 + 600.0 / (R - A) * u.HOUR, rel=1e-12)


# ----------------------------------------------------------------------------- typing


def type_approach(wb, landmarks, ramp_hours: dict[str, list[float]] | None = None) -> None:
    """Type landmarks into LandmarkTable (distance in miles, share in %) and hourly ramp
    flows into RampFlowTable, renaming the template's ramp columns, as a user would."""
    name, dist, kind, share, _ = L.LANDMARK_COLUMNS
    write_table(
        wb,
        L.LANDMARK_TABLE,
        [
            {
                name: lm.name,
                dist: lm.distance / u.MILE,
                kind: L.word_for(L.LANDMARK_KIND_WORDS, lm.kind),
                share: None if lm.ramp_share is None else lm.ramp_share * 100,
            }
            for lm in landmarks
        ],
    )
    if ramp_hours:
        type_ramp_flows(wb, ramp_hours)


def type_ramp_flows(wb, ramp_hours: dict[str, list[float]], start: dt.datetime = START) -> None:
    """Hourly flows into RampFlowTable from ``start``, one column per ramp (renamed)."""
    _, t = find_table(wb, L.RAMP_FLOW_TABLE)
    first = len(L.RAMP_FLOW_COLUMNS)
    for k, ramp in enumerate(ramp_hours):
        column = t.tableColumns[first + k]
        head = table_cell(wb, L.RAMP_FLOW_TABLE, -1, column.name)
        column.name = ramp
        head.value = ramp
    date, time = L.RAMP_FLOW_COLUMNS
    n = len(next(iter(ramp_hours.values())))
    rows = []
    for i in range(n):
        at = start + dt.timedelta(hours=i)
        row = {date: (dt.datetime.combine(at.date(), dt.time()), L.DATE_FORMAT)}
        row[time] = (at.time(), L.TIME_FORMAT)
        row.update({ramp: flows[i] for ramp, flows in ramp_hours.items()})
        rows.append(row)
    write_table(wb, L.RAMP_FLOW_TABLE, rows)


@pytest.fixture(scope="module")
def typed(tmp_path_factory) -> Path:
    """The hand plan typed into a fresh template: its landmarks on the Approach sheet,
    the limit on the Limits sheet."""
    path = fill_template(hand_plan(), tmp_path_factory.mktemp("a") / "approach.xlsx")
    wb = load_workbook(path)
    type_approach(wb, LANDMARKS)
    wb.save(path)
    return path


def test_the_approach_reads_as_typed(typed: Path) -> None:
    plan = read_plan(typed)
    # 1 mi = 1,609.344 m exactly (international mile, NIST SP 811 appendix B)
    assert [lm.name for lm in plan.approach.landmarks] == ["Ash Lane bridge",
                                                           "end of the warning signs"]  # fmt: skip
    assert [lm.distance for lm in plan.approach.landmarks] == pytest.approx([BRIDGE, SIGNS])
    assert [lm.kind for lm in plan.approach.landmarks] == ["structure", "warning-signs-end"]
    assert plan.thresholds.queue_must_not_pass == "Ash Lane bridge"


def test_ramp_shares_and_hourly_flows_read(typed: Path, tmp_path: Path) -> None:
    """A share in % (6 % -> 0.06) and hourly flows under a column renamed to the ramp."""
    ramps = (
        Landmark("Holt Road on-ramp", 800.0, "entrance-ramp", ramp_share=0.06),
        Landmark("Mere Street off-ramp", 2400.0, "exit-ramp"),
    )
    flows = [120.0, 150.0, 180.0, 160.0, 140.0, 100.0]

    def edit(wb):
        type_approach(wb, (*LANDMARKS, *ramps), {"Mere Street off-ramp (veh/h)": flows})

    plan = read_plan(edited(typed, tmp_path, edit))
    by_name = {lm.name: lm for lm in plan.approach.landmarks}
    assert by_name["Holt Road on-ramp"].ramp_share == pytest.approx(0.06)
    assert by_name["Holt Road on-ramp"].ramp_veh_h is None
    assert by_name["Mere Street off-ramp"].ramp_veh_h == tuple(flows)
    assert by_name["Mere Street off-ramp"].distance == pytest.approx(2400.0)


def test_a_plan_without_an_approach_reads_as_before(typed: Path, tmp_path: Path) -> None:
    """An empty Approach sheet, and a workbook of an older template without it, read
    with no landmarks; the limit left blank is not checked."""

    def old(wb):
        for ws in list(wb.worksheets):
            if ws.title == L.APPROACH:
                wb.remove(ws)
        named_cell(wb, "limit_landmark").value = None
        del wb.defined_names["limit_landmark"]
        del wb.defined_names[L.LANDMARK_NAMES]

    empty = fill_template(hand_plan(limit=None, landmarks=()), tmp_path / "empty.xlsx")
    for path in (empty, edited(empty, tmp_path, old, "old.xlsx")):
        plan = read_plan(path)
        assert plan.approach == Approach()
        assert plan.thresholds.queue_must_not_pass is None


def _landmark(index: int, header: str, value):
    def edit(wb):
        table_cell(wb, L.LANDMARK_TABLE, index, header).value = value

    return edit


NAME, DIST, KIND, SHARE, _NOTE = L.LANDMARK_COLUMNS


def _both_share_and_hours(wb) -> None:
    _landmark(1, KIND, "entrance ramp")(wb)
    _landmark(1, SHARE, 5)(wb)
    type_ramp_flows(wb, {"end of the warning signs": [10.0] * 6})


def _an_hour_twice(wb) -> None:
    _landmark(1, KIND, "entrance ramp")(wb)
    type_ramp_flows(wb, {"end of the warning signs": [10.0] * 6})
    table_cell(wb, L.RAMP_FLOW_TABLE, 5, L.RAMP_FLOW_COLUMNS[1]).value = dt.time(4)


def _no_ramp_flow_table(wb) -> None:
    _landmark(1, KIND, "entrance ramp")(wb)
    ws, _ = find_table(wb, L.RAMP_FLOW_TABLE)
    del ws.tables[L.RAMP_FLOW_TABLE]


def _wave_speed_on_greenshields(wb) -> None:
    set_named(wb, "site_congested_branch", "backward wave speed")
    set_named(wb, "site_wave_speed", 14)
    set_named(wb, "opt_diagram", "Greenshields")


@pytest.mark.parametrize(
    ("edit", "cell", "words"),
    [
        (_landmark(1, NAME, None), "Approach!A9", "has no name"),
        (_landmark(1, NAME, "ash lane BRIDGE"), "Approach!A9", "also the name of the landmark"),
        (_landmark(0, DIST, -0.2), "Approach!B8", "Distance upstream of the taper"),
        (_landmark(0, DIST, "far"), "Approach!B8", "Distance upstream of the taper"),
        (_landmark(0, KIND, "tunnel"), "Approach!C8", "Kind"),
        (_landmark(0, SHARE, 10), "Approach!D8", "carries no traffic of its own"),
        (_landmark(1, KIND, "entrance ramp"), "Approach!D9", "with no flow"),
        (
            lambda wb: (_landmark(1, KIND, "exit ramp")(wb), _landmark(1, SHARE, 100)(wb)),
            "Approach!D9",
            "cannot take all the traffic",
        ),
        (lambda wb: set_named(wb, "limit_landmark", "Elm Street"), "Limits!", "Elm Street"),
        (
            lambda wb: set_named(wb, "site_congested_branch", "backward wave speed"),
            "Site!",
            "Backward wave speed is blank",
        ),
        (
            lambda wb: set_named(wb, "site_density_at_capacity", 40),
            "Site!",
            "would not be used",
        ),
        (_both_share_and_hours, "Approach!D9", "has both a share here and hourly flows"),
        (
            lambda wb: type_ramp_flows(wb, {"Ash Lane bridge": [10.0] * 6}),
            "Approach!I7",
            "carries no traffic of its own",
        ),
        (_an_hour_twice, "Approach!H13", "the hour Mon 2027-05-03 04:00 is also in row 12"),
        (_no_ramp_flow_table, "Approach!D9", "it is missing: copy it from a fresh workbook"),
        (_wave_speed_on_greenshields, "Site!", "only on the triangular diagram"),
        (
            lambda wb: (
                _landmark(1, KIND, "entrance ramp")(wb),
                type_ramp_flows(
                    wb,
                    {
                        "end of the warning signs": [1.0] * 6,
                        "End of the warning signs (veh/h)": [2.0] * 6,
                    },
                ),
            ),
            "Approach!J7",
            "and so is the column at Approach!I7",
        ),
    ],
)
def test_bad_approach_input_is_named_by_sheet_and_cell(
    typed: Path, tmp_path: Path, edit, cell: str, words: str
) -> None:
    before = typed.read_bytes()
    with pytest.raises(PlanError) as e:
        read_plan(edited(typed, tmp_path, edit))
    located = [p for p in e.value.problems if p.where.startswith(cell)]
    assert located, [(p.where, p.message) for p in e.value.problems]
    assert any(words in p.message for p in located), [p.message for p in located]
    assert typed.read_bytes() == before


def test_hourly_ramp_flows_missing_an_hour_or_off_the_hour(typed: Path, tmp_path: Path) -> None:
    ramp = Landmark("Mere Street off-ramp", 2400.0, "exit-ramp")

    def short(wb):  # five rows for six hours of demand
        type_approach(wb, (*LANDMARKS, ramp), {ramp.name: [100.0] * 5})

    def off_hour(wb):
        short(wb)
        date, time = L.RAMP_FLOW_COLUMNS
        write_table(wb, L.RAMP_FLOW_TABLE, [{}] * 5 + [{date: START, time: dt.time(5, 30),
                                                       ramp.name: 100.0}])  # fmt: skip

    with pytest.raises(PlanError) as e:
        read_plan(edited(typed, tmp_path, short, "short.xlsx"))
    (p,) = e.value.problems
    assert p.where == "Approach!G7"
    assert "no row for the hour Mon 2027-05-03 05:00" in p.message
    with pytest.raises(PlanError) as e:
        read_plan(edited(typed, tmp_path, off_hour, "off.xlsx"))
    assert any(
        p.where == "Approach!H13" and "starting on the hour" in p.message for p in e.value.problems
    )


def test_flows_under_a_column_no_ramp_is_named_after_warn(typed: Path, tmp_path: Path) -> None:
    def edit(wb):
        type_approach(wb, LANDMARKS, {"Quarry Lane on-ramp": [50.0] * 6})

    plan = read_plan(edited(typed, tmp_path, edit))
    assert any(
        "Approach!I7" in w and "Quarry Lane on-ramp" in w and "not used" in w
        for w in plan.input_warnings
    ), plan.input_warnings


def test_ramp_rows_outside_the_demand_period_warn(typed: Path, tmp_path: Path) -> None:
    """Eight hourly rows from 23:00 the day before for six hours of demand from 00:00:
    the first row and the last one lie outside and are named; the six others are read."""
    ramp = Landmark("Mere Street off-ramp", 2400.0, "exit-ramp")
    flows = [999.0, 100.0, 110.0, 120.0, 130.0, 140.0, 150.0, 999.0]

    def edit(wb):
        type_approach(wb, (*LANDMARKS, ramp))
        type_ramp_flows(wb, {ramp.name: flows}, start=START - dt.timedelta(hours=1))

    plan = read_plan(edited(typed, tmp_path, edit))
    assert plan.approach.landmarks[-1].ramp_veh_h == tuple(flows[1:-1])
    assert any(
        w.startswith("Approach!G8, Approach!G15: these rows") and "outside the demand period" in w
        for w in plan.input_warnings
    ), plan.input_warnings


def test_an_exit_ramp_taking_more_than_arrives_is_named_at_its_row(
    typed: Path, tmp_path: Path
) -> None:
    """The plan's own check (not the reader's) refuses an exit ramp taking 2,500 veh/h in
    the hour from 02:00 where only the mainline's 1,800 veh/h arrive (the only ramp, so
    the flow arriving at it is the demand); the problem is named at the ramp's row of the
    landmark table, the third row typed (Approach!A10)."""
    ramp = Landmark("Mere Street off-ramp", 2400.0, "exit-ramp")

    flows = [100.0, 100.0, 2500.0, 100.0, 100.0, 100.0]

    def edit(wb):
        type_approach(wb, (*LANDMARKS, ramp), {ramp.name: flows})

    with pytest.raises(PlanError) as e:
        read_plan(edited(typed, tmp_path, edit))
    assert [(p.where, p.message) for p in e.value.problems] == [
        (
            "Approach!A10",
            "exit ramp 'Mere Street off-ramp' takes 2,500 veh/h from 2027-05-03 02:00 but only "
            "1,800 veh/h arrive there; an exit ramp must leave some traffic on the mainline",
        )
    ]


def test_the_limit_matches_a_landmark_regardless_of_case(typed: Path, tmp_path: Path) -> None:
    def edit(wb):
        set_named(wb, "limit_landmark", "  ash lane   BRIDGE ")

    plan = read_plan(edited(typed, tmp_path, edit))
    assert plan.thresholds.queue_must_not_pass == "Ash Lane bridge"
    cell = named_cell(load_workbook(typed), "limit_landmark").coordinate
    assert any(
        w.startswith(f"Limits!{cell}") and "read as the landmark 'Ash Lane bridge'" in w
        for w in plan.input_warnings
    ), plan.input_warnings


def test_the_congested_branch_reads_from_the_site_sheet(typed: Path, tmp_path: Path) -> None:
    """14 mi/h typed as the backward wave speed is 14 x 0.44704 = 6.25856 m/s (NIST SP
    811 appendix B: 1 mi/h = 0.44704 m/s exactly), above the site's derived 5.41 m/s."""

    def edit(wb):
        set_named(wb, "site_congested_branch", "backward wave speed")
        set_named(wb, "site_wave_speed", 14)

    plan = read_plan(edited(typed, tmp_path, edit))
    assert plan.site.congested_branch == "wave-speed"
    assert plan.site.wave_speed == pytest.approx(6.25856, rel=1e-12)
    assert plan.site.density_at_capacity is None


def test_a_json_plan_typed_into_a_workbook_reads_back(tmp_path: Path) -> None:
    """Five ramps given hour by hour, one more than the template's ramp columns: the
    table gets a column more, and the plan reads back as it was."""
    ramps = tuple(
        Landmark(f"Slip {k}", 600.0 * k, "entrance-ramp", ramp_veh_h=(10.0 * k,) * 6)
        for k in range(1, 6)
    )
    plan = hand_plan(limit="Slip 3", landmarks=(*ramps, LANDMARKS[0]))
    write_filled_workbook(plan, tmp_path / "typed.xlsx")
    again = read_plan(tmp_path / "typed.xlsx")
    assert [lm.name for lm in again.approach.landmarks] == [lm.name for lm in ramps] + [
        "Ash Lane bridge"
    ]
    assert [lm.ramp_veh_h for lm in again.approach.landmarks[:5]] == [
        (10.0 * k,) * 6 for k in range(1, 6)
    ]
    # typed in miles to 6 decimals, as the JSON form keeps them (under a millimetre)
    assert [lm.distance for lm in again.approach.landmarks] == pytest.approx(
        [round(lm.distance / u.MILE, 6) * u.MILE for lm in plan.approach.landmarks], rel=1e-12
    )
    assert again.thresholds.queue_must_not_pass == "Slip 3"


def test_a_metric_workbook_reads_and_shows_kilometres(tmp_path: Path) -> None:
    """In metric units the distances are typed and shown in km: 1,000 m is 1.00 km."""
    plan = hand_plan()
    plan = dataclasses.replace(plan, site=dataclasses.replace(plan.site, unit_system="metric"))
    path = tmp_path / "metric.xlsx"
    write_filled_workbook(plan, path)
    wb = load_workbook(path)
    assert table_cell(wb, L.LANDMARK_TABLE, 0, L.LANDMARK_COLUMNS[1]).value == 1.0
    again = read_plan(path)
    assert [lm.distance for lm in again.approach.landmarks] == [BRIDGE, SIGNS]
    permit = wb[L.PERMIT_TABLE]
    r, cols = _rows(permit, "Landmark")
    assert permit.cell(r + 1, cols["Upstream (km)"]).value == 1.0
    h = construction()
    far = permit.cell(r + 1, cols["Farthest beyond (km)"]).value
    assert far == round((h["b_m"] - BRIDGE) / 1000, 2)


# ----------------------------------------------------------------------------- results


@pytest.fixture(scope="module")
def ran(typed: Path, tmp_path_factory) -> tuple[wzq.Result, Path]:
    out = tmp_path_factory.mktemp("r") / "ran.xlsx"
    done = run_to(typed, out, run_time="2027-01-01T00:00:00Z", space_time=False)
    return done.result, out


def _rows(ws, header: str) -> tuple[int, dict[str, int]]:
    """The row of a header row whose first cell is ``header``, and its columns by text."""
    for row in ws.iter_rows():
        if row[0].value == header:
            return row[0].row, {c.value: c.column for c in row if c.value}
    raise AssertionError(header)


def test_permit_table_lists_the_landmarks_by_hand(ran) -> None:
    """First reached at t1 (shown to the minute it falls in), beyond it from t1 to t3,
    farthest beyond b_m - 1,000 m, in the three hours 01:00, 02:00, 03:00; the signs
    at 5,000 m are beyond the longest queue b_m, so never reached."""
    h = construction()
    assert h["b_m"] < SIGNS
    _, path = ran
    ws = load_workbook(path)[L.PERMIT_TABLE]
    r, cols = _rows(ws, "Landmark")
    bridge = {head: ws.cell(r + 1, c).value for head, c in cols.items()}
    signs = {head: ws.cell(r + 2, c).value for head, c in cols.items()}
    reached = START + dt.timedelta(seconds=h["t1"])
    assert bridge["Landmark"] == "Ash Lane bridge"
    assert bridge["Kind"] == "bridge or structure"
    assert bridge["Upstream (mi)"] == round(BRIDGE / u.MILE, 2) == 0.62
    assert (
        bridge["Queue first reaches it"]
        == f"Mon 2027-05-03 {reached:%H:%M}"
        == ("Mon 2027-05-03 01:30")
    )
    assert bridge["Time beyond it (h)"] == round((h["t3"] - h["t1"]) / 3600, 2)
    assert bridge["Farthest beyond (mi)"] == round((h["b_m"] - BRIDGE) / u.MILE, 2)
    assert bridge["Hours beyond"] == 3
    assert signs["Queue first reaches it"] == "never"
    assert signs["Time beyond it (h)"] == 0 and signs["Hours beyond"] == 0


def test_results_flag_the_hours_and_the_limit_breaches(ran) -> None:
    """The bridge is the limit: the hours in which the back was beyond it (01:00 to
    03:00, t1 = 01:30 and t3 = 03:17) are over the limit, and flagged per landmark."""
    h = construction()
    assert 3600 < h["t1"] < 7200 and 10800 < h["t3"] < 14400
    result, path = ran
    ws = load_workbook(path)[L.RESULTS]
    r, cols = _rows(ws, "Hour")
    flags = [ws.cell(r + 1 + i, cols["Queue beyond Ash Lane bridge"]).value for i in range(6)]
    assert flags == [None, BEYOND, BEYOND, BEYOND, None, None]
    signs = [ws.cell(r + 1 + i, cols["Queue beyond end of the warning signs"]).value
             for i in range(6)]  # fmt: skip
    assert signs == [None] * 6
    status = [ws.cell(r + 1 + i, cols["Status"]).value for i in range(6)]
    assert [("queue passes Ash Lane bridge" in s) for s in status] == [False, True, True, True,
                                                                       False, False]  # fmt: skip
    assert len(result.summary.hours_failing) == 3
    permit = load_workbook(path)[L.PERMIT_TABLE]
    _, heads = _rows(permit, "Hour")
    assert any(str(k).startswith("Not past Ash Lane bridge (0.62 mi upstream)") for k in heads)


def _engine_constructions():
    """The shock constructions of ``tests/engine/test_approach.py`` (loaded by path: the
    test folders are not packages)."""
    path = Path(__file__).parents[1] / "engine" / "test_approach.py"
    spec = importlib.util.spec_from_file_location("approach_constructions", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_exit_ramp_table_and_column_by_hand(tmp_path: Path) -> None:
    """The exit-ramp construction of the engine's tests (a 5 % exit ramp 1,000 m up,
    mainline 2,000 veh/h, closure 1,200 veh/h for two hours): the exiting traffic held
    in the queue rises from 0 at t1 to H at t_r and drains to 0 at t2, so its delay is
    0.5 H (t2 - t1) and its longest extra wait H / (2,000 x 5 %)."""
    e = _engine_constructions()
    h = e.exit_construction(0.05)
    ramp = Landmark("Bell St off-ramp", 1000.0, "exit-ramp", ramp_share=0.05)
    path = tmp_path / "exit.xlsx"
    write_filled_workbook(e.closure_plan(2000.0, ramp, 1200.0), path)
    wb = load_workbook(path)
    permit = wb[L.PERMIT_TABLE]
    r, cols = _rows(permit, "Exit ramp")
    row = {head: permit.cell(r + 1, c).value for head, c in cols.items()}
    assert row["Exit ramp"] == "Bell St off-ramp"
    assert row["Delay of exiting traffic (veh-h)"] == round(h["exit_delay_veh_h"], 1)
    assert row["Longest extra wait (min)"] == round(h["max_wait_min"], 1)
    results = wb[L.RESULTS]
    r, cols = _rows(results, "Hour")
    hourly = [results.cell(r + 1 + i, cols[EXIT_DELAY_HEADER]).value for i in range(6)]
    # per hour, rounded to 0.1 veh-h: the sum within half a tenth per hour
    assert sum(hourly) == pytest.approx(h["exit_delay_veh_h"], abs=0.05 * 6)
    assert hourly[0] == 0 and hourly[-1] == 0  # no queue before 01:00 nor after t3
    assert h["t3"] < 5 * 3600


def test_summary_sheet_names_the_farthest_landmark_passed(ran) -> None:
    h = construction()
    _, path = ran
    ws = load_workbook(path)[L.SUMMARY]
    found = {row[0].value: row[1].value for row in ws.iter_rows() if row[0].value}
    hours = (h["t3"] - h["t1"]) / 3600
    assert found["Farthest landmark passed"] == (
        f"Ash Lane bridge (0.62 mi upstream), for {hours:.2f} h"
    )
    assert found["Queue must not pass"] == "Ash Lane bridge (0.62 mi upstream)"


def test_queue_chart_draws_the_reached_landmark_and_the_next_one(ran) -> None:
    """The landmark block of the Charts sheet holds each charted landmark's distance on
    every hour (0.62 mi and 5,000 m = 3.11 mi), and the queue chart draws them."""
    _, path = ran
    ws = load_workbook(path)["Charts"]
    heads = [ws.cell(DATA_HEADER_ROW, LANDMARK_COL + j).value for j in range(2)]
    assert heads == [
        "Ash Lane bridge (0.62 mi): must not pass",
        "end of the warning signs (3.11 mi)",
    ]
    for j, miles in enumerate((0.62, 3.11)):
        values = [ws.cell(DATA_HEADER_ROW + 1 + i, LANDMARK_COL + j).value for i in range(6)]
        assert values == [miles] * 6
    assert ws.cell(DATA_HEADER_ROW + 1, LANDMARK_COL + 2).value is None


def test_charted_landmarks_leave_out_those_far_beyond_the_queue() -> None:
    """The longest queue is b_m = 4.36 km: a landmark at 5 km (within twice that) is
    charted, one at 9 km (beyond twice that) only when it is the limit."""
    h = construction()
    assert 5000.0 < 2 * h["b_m"] < 9000.0
    far = Landmark("Kiln Road junction", 9000.0, "signal")
    for limit, shown in ((None, ["Ash Lane bridge"]), (far.name, ["Ash Lane bridge", far.name])):
        result = wzq.analyse(hand_plan(limit, (LANDMARKS[0], far)))
        assert [lm.name for lm in charted_landmarks(result)] == shown
    near = wzq.analyse(hand_plan(None))
    assert [lm.name for lm in charted_landmarks(near)] == [lm.name for lm in LANDMARKS]


def test_report_figure_and_space_time_picture_draw_the_landmarks(ran) -> None:
    result, _ = ran
    drawing = queue_length_drawing(result, 8.0 * 72, 3.0 * 72)
    labels = {t.text.split(" (")[0]: t for t in drawn.texts(drawing)}
    assert labels["Ash Lane bridge"].text.startswith("Ash Lane bridge (0.62 mi)")
    assert labels["end of the warning signs"].text == "end of the warning signs (3.11 mi)"
    # each is named just above its own line across the chart, at heights above the
    # time axis in proportion to the distances (1,000 m and 5,000 m upstream)
    lines = {round(y, 6) for y, x0, x1 in drawn.horizontal_lines(drawing) if x1 - x0 > 400}
    above = {}
    for name in ("Ash Lane bridge", "end of the warning signs"):
        line_y = labels[name].baseline - 1.5
        assert round(line_y, 6) in lines, name
        above[name] = line_y - BOTTOM_IN * 72
    assert above["end of the warning signs"] / above["Ash Lane bridge"] == pytest.approx(
        SIGNS / BRIDGE, rel=1e-9
    )


def test_space_time_picture_names_the_landmarks() -> None:
    from wzq.engine import lwr
    from wzq.present.spacetime import space_time_figure

    result = wzq.analyse(hand_plan())
    sim = lwr.simulate(result, length_m=8000.0, cells=80)
    fig = space_time_figure(sim)
    texts = [t.get_text() for ax in fig.axes for t in ax.texts]
    assert "Ash Lane bridge (0.62 mi): must not pass" in texts
    assert "end of the warning signs (3.11 mi)" in texts


def test_report_page_of_the_approach() -> None:
    """The report's approach page: the landmark table with the hand numbers, the
    landmark limit as a check column, and the method note."""
    h = construction()
    result = wzq.analyse(hand_plan())
    text = flat(" ".join(pages_text(build_report(result, "letter", generated=dt.date(2027, 4, 1)))))
    row = (
        f"Ash Lane bridge bridge or structure 0.62 Mon 2027-05-03 01:30 "
        f"{(h['t3'] - h['t1']) / 3600:.2f} {(h['b_m'] - BRIDGE) / u.MILE:.2f} 3 -"
    )
    assert row in text
    assert "end of the warning signs end of advance warning signing 3.11 never 0.00 0.00 0" in (
        text
    )
    assert "The queue must not pass Ash Lane bridge" in text
    assert "Not past Ash Lane bridge" in text
    assert "Landmarks. The back of the queue is compared with each landmark" in text


def test_check_counts_the_landmarks_and_ramps(typed: Path) -> None:
    plan = read_plan(typed)
    assert describe(plan).endswith("; 2 landmarks upstream")
    ramp = Landmark("Holt Road on-ramp", 800.0, "entrance-ramp", ramp_share=0.06)
    assert describe(hand_plan(None, (*LANDMARKS, ramp))).endswith("; 3 landmarks upstream (1 ramp)")


def test_terminal_and_batch_summary_name_the_landmark_passed() -> None:
    result = wzq.analyse(hand_plan())
    out = io.StringIO()
    print_approach(result, out)
    text = out.getvalue()
    assert "Ash Lane bridge" in text and "Mon 2027-05-03 01:30" in text and "never" in text
    assert plan_row("hand.json", result).landmark_passed == "Ash Lane bridge"
    none = wzq.analyse(hand_plan(limit=None, landmarks=(LANDMARKS[1],)))
    assert plan_row("hand.json", none).landmark_passed == "none"
    assert plan_row("hand.json", wzq.analyse(hand_plan(None, ()))).landmark_passed == ""
