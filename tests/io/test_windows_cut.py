"""The longest-windows tables say when they list only some of the windows.

Twelve days of quiet nights: thirteen windows, each its own (the first morning, eleven
nights from 22:00 to 06:00 and the last evening; the day's 3,900 veh/h is far above
what one open lane of the hand site carries, tests/hand.py), were listed as "Longest
allowable windows" ten on the workbook, five on the terminal and three in the
report, without a word that there were thirteen.
"""

from __future__ import annotations

import datetime as dt
import io

import numpy as np
import openpyxl
import pytest
from hand import hand_site

from wzq.cli.windows import print_windows
from wzq.engine.plan import Demand, Plan, Thresholds
from wzq.engine.windows import plan_windows
from wzq.io.report import make_styles, windows_section
from wzq.io.workbook.windows_sheet import write_windows_sheet

START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)


@pytest.fixture(scope="module")
def plan_and_windows():
    day = [500.0] * 6 + [3900.0] * 16 + [500.0] * 2
    demand = Demand(START, 3600, np.array(day * 12))
    plan = Plan(hand_site(unit_system="metric"), demand, (), Thresholds(max_queue_length=1000.0))
    found = plan_windows(plan, [1])
    assert len(found.sets) == 1 and len(found.sets[0].longest()) == 13
    return plan, found


def test_the_terminal_says_it(plan_and_windows) -> None:
    plan, found = plan_and_windows
    out = io.StringIO()
    print_windows(found, plan, out=out)
    assert "the 5 longest of 13" in out.getvalue()


def test_the_workbook_says_it(plan_and_windows) -> None:
    plan, found = plan_and_windows
    book = openpyxl.Workbook()
    ws = write_windows_sheet(book, found, plan)
    texts = [v for row in ws.iter_rows(values_only=True) for v in row if isinstance(v, str)]
    assert any("the 10 longest of 13" in t for t in texts), texts


def test_the_report_says_it(plan_and_windows) -> None:
    import wzq

    plan, _ = plan_and_windows
    flows = windows_section(wzq.analyse(plan), make_styles(), 700.0, known=None)
    texts = [f.getPlainText() for f in flows if hasattr(f, "getPlainText")]
    assert any("The 3 longest of 13" in t for t in texts), texts
