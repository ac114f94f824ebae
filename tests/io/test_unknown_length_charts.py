"""The queue-length charts say where the length is unknown.

An hour whose traffic the road itself cannot carry holds vehicles beyond the
approach: its queue's length is unknown and the tables print "unknown". The
workbook's "Longest queue by hour" chart reads those cells, so it drew no bar in
exactly the worst hours, and the report's Figure 2 drew the length computed without
the held vehicles, both without a word. The plan is the hand site (two lanes of
2,000 veh/h, tests/hand.py) with 4,500 veh/h in the hour from 04:00: 500 vehicles
over the road's 4,000 veh/h, held in the hours from 04:00 and 05:00 (by hand).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import openpyxl
import pytest
from hand import hand_site

import wzq
from wzq.engine.plan import Demand, Plan, Thresholds
from wzq.io.report import charts_section, make_styles
from wzq.io.workbook.run import write_filled_workbook

START = dt.datetime(2027, 5, 3)  # a Monday (invented dates)
SAID = "unknown in 2 hours from Mon 2027-05-03 04:00"


@pytest.fixture(scope="module")
def result() -> wzq.Result:
    flows = np.array([1000.0] * 4 + [4500.0] + [1000.0] * 3)
    site = hand_site(unit_system="metric")
    plan = Plan(site, Demand(START, 3600, flows), (), Thresholds(max_queue_length=30_000.0))
    return wzq.analyse(plan)


def _title(chart) -> str:
    return " ".join("".join(r.t for r in (p.r or [])) for p in chart.title.tx.rich.p)


def test_the_workbook_chart_says_it(result, tmp_path) -> None:
    path = tmp_path / "held.xlsx"
    write_filled_workbook(result.plan, path)
    ws = openpyxl.load_workbook(path)["Charts"]
    titles = [_title(c) for c in ws._charts if c.title is not None and c.title.tx is not None]
    bar = [t for t in titles if t.startswith("Longest queue by hour")]
    assert len(bar) == 1 and SAID in bar[0] and "no bar" in bar[0], titles


def test_the_report_caption_says_it(result) -> None:
    flows = charts_section(result, make_styles(), 700.0, 500.0)
    inner = [g for f in flows for g in getattr(f, "_content", [f])]  # inside KeepTogether
    texts = [g.getPlainText() for g in inner if hasattr(g, "getPlainText")]
    fig2 = [t for t in texts if t.startswith("Figure 2.")]
    assert len(fig2) == 1 and SAID in fig2[0], texts
