"""The Recalculate plan command, pressed in a real LibreOffice Calc (headless, over UNO).

The extension is installed by ``wzq calc install --profile DIR`` into a private
LibreOffice profile (as root, LibreOffice's unopkg refuses a per-user install,
so the command then runs in a user namespace where it is not root). LibreOffice
runs headless with a UNO socket on the loopback address; a UNO client
(``tests/office_driver.py``, run by a Python that has ``uno``) opens a filled
plan, types into a demand cell without saving, presses the command through the
script provider and through the menu's own address, and reads the document
back. Expected numbers come from ``wzq.analyse`` on the edited plan.

Skipped, with the reason, only where LibreOffice, unopkg or Python's ``uno``
is missing (``.ci/run`` installs libreoffice-calc-nogui, python3-uno and
libreoffice-script-provider-python). Every wait is bounded; LibreOffice is
always killed at the end.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path
from urllib.parse import unquote

import numpy as np
import openpyxl
import pytest
from office_session import SOFFICE, Office, uno_python
from workbook_helpers import fill_template, table_cell

import wzq
from wzq.cli.calc import office_env
from wzq.io.jsonplan import load_plan
from wzq.io.office.build import script_url
from wzq.io.workbook import layout, outputs_record
from wzq.io.workbook.permit_sheet import permit_columns
from wzq.io.workbook.reader import read_plan
from wzq.io.workbook.run import run_workbook
from wzq.io.workbook.safety import inspect_file
from wzq.io.workbook.save import lock_files, own_office_lock
from wzq.io.workbook.windows_cache import CACHE_SHEET
from wzq.io.workbook.writer import RUN_TIME_CELL
from wzq.present.tables import (
    episode_title,
    hour_label,
    hourly_columns,
    hourly_display,
    shown_episodes,
    summary_lines,
)

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
UNOPKG = shutil.which("unopkg")
UNO_PYTHON = uno_python() if SOFFICE else None
#: A user namespace in which root is not root (unopkg refuses per-user installs as root).
AS_USER = ["unshare", "--user", "--map-user=1000", "--map-group=1000"]

pytestmark = [pytest.mark.libreoffice, pytest.mark.slow]
pytestmark.append(
    pytest.mark.skipif(
        not (SOFFICE and UNOPKG and UNO_PYTHON),
        reason="LibreOffice (soffice, unopkg) or a Python with uno is missing; .ci/run installs "
        "libreoffice-calc-nogui, python3-uno and libreoffice-script-provider-python",
    )
)

#: LibreOffice's day zero for date serial numbers (as Excel's since 1900-03-01).
DAY_ZERO = dt.datetime(1899, 12, 30)
#: The demand hour the test edits: Saturday 12:00, inside the 07:00-17:00 closure.
EDIT_INDEX = 12
EDIT_VALUE = 1650.0
USER_SHEET = "Site notes"


def _install(profile: Path) -> None:
    command = [sys.executable, "-m", "wzq", "calc", "install", "--profile", str(profile)]
    if hasattr(os, "geteuid") and os.geteuid() == 0:
        probe = subprocess.run([*AS_USER, "true"], capture_output=True, timeout=30)
        if probe.returncode != 0:
            pytest.skip(
                "running as root and user namespaces are not available here, so LibreOffice's "
                "unopkg refuses a per-user install: " + probe.stderr.decode(errors="replace")
            )
        command = [*AS_USER, *command]
    done = subprocess.run(command, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr


@pytest.fixture(scope="module")
def office(tmp_path_factory):
    """LibreOffice with the extension installed by ``wzq calc install``; killed at the end."""
    folder = tmp_path_factory.mktemp("calc")
    profile = folder / "profile"
    _install(profile)
    env = office_env()
    if os.environ.get("PYTHONPATH"):  # a developer's checkout reaches the macro's wzq run
        env["PYTHONPATH"] = os.environ["PYTHONPATH"]
    # last on LibreOffice's PATH: a `python` that has wzq (found when the remembered one is gone)
    tools = folder / "tools"
    tools.mkdir()
    (tools / "python").write_text(f'#!/bin/sh\nexec "{sys.executable}" "$@"\n')
    (tools / "python").chmod(0o755)
    env["PATH"] = env["PATH"] + os.pathsep + str(tools)
    session = Office(profile, UNO_PYTHON, env=env)
    try:
        session.call("set_setting", name="SaveWithoutAsking", value=True)
        yield session
    finally:
        session.stop()


# --- reading sheets back -----------------------------------------------------------------------


def values(grid: list) -> list[list]:
    """The cell values of a sheet read through UNO (numbers as floats, text as text)."""
    return [[cell[0] for cell in row] for row in grid]


def as_time(serial: float) -> dt.datetime:
    t = DAY_ZERO + dt.timedelta(days=serial)
    return t.replace(second=0, microsecond=0) + dt.timedelta(minutes=round(t.second / 60))


def table_below(rows: list[list], first_header: str = "Hour") -> tuple[list[str], list[list]]:
    """Header and data rows of the table whose header row starts with ``first_header``."""
    start = next(i for i, r in enumerate(rows) if r and r[0] == first_header)
    header = [str(h) for h in rows[start]]
    data = []
    for r in rows[start + 1 :]:
        if r[0] in ("", None):
            break
        data.append(r)
    return header, data


#: A run time as wzq writes it (UTC, ISO 8601).
ISO_TIME = r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ"


def untimed(grid: list) -> list:
    """A sheet read through UNO with every run time replaced by a mark."""
    return [
        [[re.sub(ISO_TIME, "<time>", x) if isinstance(x, str) else x for x in cell] for cell in row]
        for row in grid
    ]


def number(cell) -> float | None:
    return None if cell == "" else float(cell)


# --- the plan ------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def plan_file(tmp_path_factory) -> Path:
    """A filled plan (the invented Fenwick Downs weekend closure), run once, with a user sheet."""
    folder = tmp_path_factory.mktemp("plan")
    path = fill_template(load_plan(EXAMPLES / "fenwick_downs_weekend.json"), folder / "plan.xlsx")
    book = openpyxl.load_workbook(path)
    notes = book.create_sheet(USER_SHEET)
    notes["A1"] = "Flagger stations"
    notes["B1"] = 3
    notes["B2"] = "=B1*2"
    notes["A3"] = "=text kept as text"
    notes["A3"].data_type = "s"
    book.save(path)
    run_workbook(path)  # the results of an earlier run are in the file, as after any run
    return path


@pytest.fixture(scope="module")
def pressed(office, plan_file):
    """Open the plan, type a new demand into one closure hour without saving, press once."""
    plan = read_plan(plan_file)  # the plan as the workbook holds it before the edit
    sheets_before = office.call("open", path=str(plan_file))
    before = {s: office.call("read", sheet=s) for s in sheets_before}
    cell = table_cell(
        openpyxl.load_workbook(plan_file), layout.DEMAND_TABLE, EDIT_INDEX, layout.DEMAND_COLUMNS[2]
    ).coordinate
    office.call("set_cell", sheet=layout.DEMAND, cell=cell, value=EDIT_VALUE)
    assert office.call("modified") is True
    report = office.call("press_script", url=script_url())
    after = {s: office.call("read", sheet=s) for s in office.call("sheets")}
    flows = np.array(plan.demand.flows_veh_h, dtype=float)
    flows[EDIT_INDEX] = EDIT_VALUE
    edited = dataclasses.replace(plan, demand=dataclasses.replace(plan.demand, flows_veh_h=flows))
    return {
        "cell": cell,
        "before": before,
        "after": after,
        "report": report,
        "sheets_before": sheets_before,
        "expected": wzq.analyse(edited),
        "original": wzq.analyse(plan),
    }


# --- the tests -----------------------------------------------------------------------------------


def test_menu_entry_and_toolbar_button_carry_the_command(office):
    addons = office.call("addons")
    assert addons["menu"] == [{"title": "Recalculate plan", "url": script_url()}]
    assert addons["toolbar"] == [
        {"title": "Recalculate plan", "url": script_url(), "toolbar": "standardbar"}
    ]
    assert addons["icon_for"] == script_url()
    assert addons["icon"].endswith("/wzq-calc.oxt/icons/recalculate_16.png")
    # the Python that ran `wzq calc install` is the one remembered
    assert office.call("setting", name="Python") == sys.executable


def test_press_takes_the_unsaved_edit_into_account(pressed, plan_file):
    expected, original = pressed["expected"], pressed["original"]
    assert pressed["report"].startswith("plan.xlsx: recalculated.")
    # the edit was saved first, and it changes the answer (so stale results cannot pass)
    assert read_plan(plan_file).demand.flows_veh_h[EDIT_INDEX] == EDIT_VALUE
    assert summary_lines(expected) != summary_lines(original)
    # Results: every hour, every column, as wzq.analyse gives it for the edited plan
    header, rows = table_below(values(pressed["after"][layout.RESULTS]))
    shown = hourly_display(expected)
    assert len(rows) == len(shown) == 48
    assert [hour_label(as_time(r[0])) for r in rows] == list(shown["Hour"])
    system = expected.plan.site.unit_system
    for col in hourly_columns(system):
        got = [number(r[header.index(col.header)]) for r in rows]
        assert got == pytest.approx(list(shown[col.header]), rel=1e-12, abs=1e-12), col.header
    assert [r[header.index("Status")] for r in rows] == list(shown["Status"])
    assert rows[EDIT_INDEX][header.index("Demand (veh/h)")] == EDIT_VALUE


def test_summary_and_permit_table_hold_the_edited_plans_numbers(pressed):
    expected = pressed["expected"]
    summary = {r[0]: r[1] for r in values(pressed["after"][layout.SUMMARY]) if len(r) > 1}
    for label, text in summary_lines(expected):
        assert summary[label] == text, label
    header, rows = table_below(values(pressed["after"][layout.PERMIT_TABLE]))
    h = expected.hourly
    listed = h["closure"] | (h["queue_max_veh"] > 0) | (h["status"] != "ok")
    shown = hourly_display(expected)[listed.to_numpy()]
    assert [r[0] for r in rows] == list(shown["Hour"])
    for col in permit_columns(expected.plan.site.unit_system):
        got = [number(r[header.index(col.header)]) for r in rows]
        assert got == pytest.approx(list(shown[col.header]), rel=1e-12, abs=1e-12), col.header
    flags = [c for c in ("queue_ok", "delay_ok", "demand_capacity_ok") if c in h.columns]
    checks = h.loc[listed, flags].all(axis=1)
    assert [r[-1] for r in rows] == ["pass" if ok else "OVER" for ok in checks]


def test_charts_are_in_the_reloaded_document(pressed, office):
    charts = office.call("charts", sheet=layout.CHARTS)
    # the two hour-by-hour charts, then one cumulative chart per queue of the edited plan
    shown, _ = shown_episodes(pressed["expected"])
    assert [c["title"] for c in charts] == [
        "Demand, capacity and queue discharge rate",
        "Longest queue by hour",
        *(episode_title(pressed["expected"], ep) for ep in shown),
    ]
    assert shown  # the edited plan queues, so the cumulative charts are not the "no queue" one
    assert all(c["series"] >= 2 for c in charts)


def test_inputs_and_the_users_sheet_are_unchanged(pressed):
    before, after = pressed["before"], pressed["after"]
    assert list(after) == pressed["sheets_before"]  # no sheet added, removed or moved
    for sheet in (*layout.INPUT_SHEETS, USER_SHEET):
        old, new = before[sheet], after[sheet]
        if sheet == layout.DEMAND:
            col = ord(pressed["cell"][0]) - ord("A")
            row = int(pressed["cell"][1:]) - 1
            assert new[row][col][0] == EDIT_VALUE
            old = [list(r) for r in old]
            new = [list(r) for r in new]
            old[row][col] = new[row][col] = None
        assert new == old, sheet
    assert values(after[USER_SHEET])[:3] == [
        ["Flagger stations", 3.0],
        ["", 6.0],
        ["=text kept as text", ""],
    ]


def test_a_second_press_gives_the_same_document(pressed, office):
    first = pressed["after"]
    assert office.call("modified") is False  # nothing to save: no question this time
    urls = office.call("addons")["menu"]
    report = office.call("press_menu", url=urls[0]["url"])  # as a click on the menu entry does
    assert report.startswith("plan.xlsx: recalculated.")
    second = {s: office.call("read", sheet=s) for s in office.call("sheets")}
    assert list(second) == list(first)
    # the run time (Run log and the permit table's stamp) is all that changes
    col, row = ord(RUN_TIME_CELL[0]) - ord("A"), int(RUN_TIME_CELL[1:]) - 1
    times = [first[layout.RUN_LOG][row][col][0], second[layout.RUN_LOG][row][col][0]]
    assert all(re.fullmatch(ISO_TIME, t) for t in times)
    col = outputs_record.COLUMN - 1  # the record of the output sheets holds the run time
    for sheet in first:
        a, b = first[sheet], second[sheet]
        if sheet == CACHE_SHEET:
            a, b = ([r[:col] + r[col + 1 :] for r in grid] for grid in (a, b))
        assert untimed(b) == untimed(a), sheet


def test_the_command_line_still_refuses_a_plan_open_in_libreoffice(pressed, plan_file, office):
    lock = lock_files(plan_file)[1]
    assert lock.exists()  # LibreOffice holds the plan open
    assert own_office_lock(lock, office.profile.resolve().as_uri())
    assert not own_office_lock(lock, (office.profile.parent / "other").resolve().as_uri())
    done = subprocess.run(
        [sys.executable, "-m", "wzq", "run", str(plan_file)],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 2
    assert "is open in LibreOffice" in done.stderr


def test_unsaved_changes_are_not_saved_without_an_answer(office, tmp_path):
    path = fill_template(load_plan(EXAMPLES / "fenwick_downs_weekend.json"), tmp_path / "q.xlsx")
    office.call("set_setting", name="SaveWithoutAsking", value=False)
    try:
        office.call("open", path=str(path))
        cell = table_cell(
            openpyxl.load_workbook(path), layout.DEMAND_TABLE, 3, layout.DEMAND_COLUMNS[2]
        ).coordinate
        office.call("set_cell", sheet=layout.DEMAND, cell=cell, value=999.0)
        data = path.read_bytes()
        # headless LibreOffice cancels every dialog: the question is asked and not answered
        report = office.call("press_script", url=script_url())
        assert report.startswith("q.xlsx was not recalculated: it has unsaved changes")
        assert office.call("setting", name="LastReport") == report
        assert office.call("modified") is True  # the typed value is still there, unsaved
        assert path.read_bytes() == data
        office.call("close")
    finally:
        office.call("set_setting", name="SaveWithoutAsking", value=True)


def test_a_bad_plan_lists_its_problems_and_changes_nothing(office, tmp_path):
    path = fill_template(load_plan(EXAMPLES / "fenwick_downs_weekend.json"), tmp_path / "bad.xlsx")
    run_workbook(path, run_time="2027-06-01T08:00:00Z")
    book = openpyxl.load_workbook(path)
    demand = table_cell(book, layout.DEMAND_TABLE, 5, layout.DEMAND_COLUMNS[2]).coordinate
    lanes = table_cell(book, layout.CLOSURE_TABLE, 0, layout.CLOSURE_COLUMNS[3]).coordinate
    sheets = office.call("open", path=str(path))
    office.call("set_cell", sheet=layout.DEMAND, cell=demand, value="lots")
    office.call("set_cell", sheet=layout.CLOSURES, cell=lanes, value=7.0)
    before = {s: office.call("read", sheet=s) for s in sheets}
    report = office.call("press_script", url=script_url())
    # the dialog's text, as kept by the command
    assert office.call("setting", name="LastReport") == report
    assert report.startswith("bad.xlsx: 2 problems in the inputs; nothing was recalculated")
    assert f"- Demand!{demand}: Demand: 'lots' is text, not a number" in report
    assert f"- Closures!{lanes}: 7 lanes closed but the road has 2" in report
    assert "Traceback" not in report
    # the open document is as the user left it (typed values kept, old results in place)
    assert office.call("sheets") == sheets
    assert {s: office.call("read", sheet=s) for s in sheets} == before
    # and wzq wrote nothing: the file holds the user's saved edit and the old run
    saved = openpyxl.load_workbook(path)
    assert saved[layout.DEMAND][demand].value == "lots"
    assert saved[layout.RUN_LOG][RUN_TIME_CELL].value == "2027-06-01T08:00:00Z"
    office.call("close")


def test_a_python_without_wzq_is_named_in_the_message(office, tmp_path):
    path = fill_template(load_plan(EXAMPLES / "fenwick_downs_weekend.json"), tmp_path / "p.xlsx")
    bare = tmp_path / "bare-python"  # this Python without its site-packages: no wzq there
    bare.write_text(f'#!/bin/sh\nexec "{sys.executable}" -I -S "$@"\n')
    bare.chmod(0o755)
    remembered = office.call("setting", name="Python")
    office.call("set_setting", name="Python", value=str(bare))
    try:
        office.call("open", path=str(path))
        report = office.call("press_script", url=script_url())
        office.call("close")
        assert report.startswith("wzq is not installed in the Python this command uses:")
        assert str(bare) in report and "No module named 'wzq'" in report
        assert "wzq calc install" in report
    finally:
        office.call("set_setting", name="Python", value=remembered)


def test_a_plan_with_a_drawn_shape_gets_its_results_in_a_copy(office, tmp_path):
    path = fill_template(load_plan(EXAMPLES / "fenwick_downs_weekend.json"), tmp_path / "s.xlsx")
    office.call("open", path=str(path))
    office.call("add_shape", sheet=layout.SITE)  # a shape wzq cannot carry through its save
    report = office.call("press_script", url=script_url())
    copy = tmp_path / "s (wzq results).xlsx"
    assert report.startswith(f"s.xlsx: recalculated; the results are in a copy, {copy.name}")
    assert office.call("setting", name="LastReport") == report
    # the plan stays open as the user saved it: the shape kept, no results written into it
    assert layout.RESULTS not in office.call("sheets")
    assert layout.RESULTS not in openpyxl.load_workbook(path).sheetnames
    assert inspect_file(path).unkept == ["xl/drawings/drawing1.xml (drawn shapes or text boxes)"]
    # and the copy, opened beside it, has the results of the same plan
    assert unquote(copy.resolve().as_uri()) in [unquote(u) for u in office.call("documents")]
    expected = wzq.analyse(read_plan(path))
    summary = openpyxl.load_workbook(copy)[layout.SUMMARY]
    texts = {r[0]: r[1] for r in summary.iter_rows(values_only=True) if r[0]}
    for label, text in summary_lines(expected):
        assert texts[label] == text, label
    office.call("close")


def test_a_python_that_is_gone_is_replaced_by_one_with_wzq_and_remembered(office, tmp_path):
    path = fill_template(load_plan(EXAMPLES / "fenwick_downs_weekend.json"), tmp_path / "g.xlsx")
    remembered = office.call("setting", name="Python")
    office.call("set_setting", name="Python", value=str(tmp_path / "gone" / "python3"))
    try:
        office.call("open", path=str(path))
        report = office.call("press_script", url=script_url())
        office.call("close")
        assert report.startswith("g.xlsx: recalculated.")
        # the first Python on LibreOffice's PATH with wzq is remembered (here the `python`
        # in tools/, unless the system's python3 before it has wzq too)
        found = office.call("setting", name="Python")
        assert found != str(tmp_path / "gone" / "python3") and Path(found).is_file()
        assert Path(found).name in ("python", "python3")
        assert layout.RESULTS in openpyxl.load_workbook(path).sheetnames
    finally:
        office.call("set_setting", name="Python", value=remembered)
