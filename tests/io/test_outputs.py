"""The one orchestrator of a run's outputs (wzq.io.workbook.outputs): what the
space-time simulation warns about is in the result every sheet shows, the Run log
included, and in what the command prints."""

from __future__ import annotations

import shutil
from pathlib import Path

import openpyxl
import pytest

from wzq.engine.lwr import simulation
from wzq.io.workbook import layout
from wzq.io.workbook.run import run_to

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


@pytest.mark.slow
def test_the_space_time_warnings_reach_the_run_log_and_the_summary(tmp_path, monkeypatch):
    # Fenwick Downs' longest queue is about 23 km; simulated on a 2 km stretch (the
    # shortest the automatic length ever gives) the queue reaches its upstream end, and
    # the simulation says so in its own words
    monkeypatch.setattr(simulation, "default_length", lambda run, window: 2000.0)
    book = tmp_path / "plan.xlsx"
    shutil.copy(EXAMPLES / "fenwick_downs_weekend.xlsx", book)
    done = run_to(book, space_time=True, run_time="2027-01-01T00:00:00Z")
    said = "the queue reached the upstream end of the modelled stretch (2,000 m)"
    assert sum(said in w for w in done.result.warnings) == 1
    wb = openpyxl.load_workbook(book)
    for sheet in (layout.RUN_LOG, layout.SUMMARY):
        texts = [c.value for row in wb[sheet].iter_rows() for c in row if isinstance(c.value, str)]
        assert any(said in t for t in texts), sheet
    assert len(wb[layout.CHARTS]._images) == 1
