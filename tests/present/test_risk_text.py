"""Chances printed as text: a share that is neither none nor all never prints as 0.0 %
or 100.0 % (1 scenario of 10,000 had printed "0.0 %", which reads as none)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import openpyxl
import pandas as pd
import pytest

from wzq import units as u
from wzq.io.workbook import writer as w
from wzq.io.workbook.risk_sheets import _add_columns
from wzq.present.risk import any_interval_text, percent, risk_values, share_digits
from wzq.present.tables import Column


@pytest.mark.parametrize(
    ("share", "text"),
    [
        (0.0, "0.0"),
        (1.0, "100.0"),
        (0.125, "12.5"),
        (0.0005, "0.1"),  # 0.05 %: one decimal is enough (it does not read as 0.0)
        (1 / 10_000, "0.01"),  # one scenario of 10,000
        (3 / 100_000, "0.003"),
        (9_998 / 10_000, "99.98"),  # two scenarios of 10,000 kept the limits
        (1 - 1 / 100_000, "99.999"),
        (0.9994, "99.9"),
    ],
)
def test_share_digits_by_hand(share: float, text: str) -> None:
    assert share_digits(share) == text


def test_the_chance_and_its_interval_keep_a_rare_breach_visible() -> None:
    hourly = pd.DataFrame({"p_any": [2 / 50_000], "p_any_low": [4.8e-6], "p_any_high": [1.4e-4]})
    assert any_interval_text(SimpleNamespace(hourly=hourly), 0) == "0.004 % (0.0005-0.01 %)"
    assert percent(0.25) == "25.0 %"


def test_a_rare_chance_keeps_its_digits_in_the_tables_and_cells() -> None:
    """The risk columns of the Results and Permit table sheets and of the report: 1 week
    of 5,000 scenarios over a limit (0.02 %) had been rounded to a 0.0 cell."""
    hourly = pd.DataFrame(
        {"p_any": [1 / 5_000, 0.25, np.nan], "queue_length_p50_m": [1234.0, 5.0, np.nan]}
    )
    risk = SimpleNamespace(hourly=hourly)
    cols = [
        Column("Chance over any limit (%)", "p_any", 1, 100.0),
        Column("Longest queue, median (km)", "queue_length_p50_m", 2, 1 / 1000),
    ]
    assert risk_values(risk, cols) == [[0.02, 25.0, None], [1.23, 0.01, "unknown"]]
    assert u.LONG_LENGTH["metric"][1] == 1000.0  # the km the column above divides by

    ws = openpyxl.Workbook().active
    table = w.TableRef(ws.title, 1, 2, 4, {"hour": 1})
    _add_columns(w.SheetWriter(ws, w.Styler()), table, cols, risk_values(risk, cols), np.arange(3))
    assert [ws.cell(r, 2).value for r in (2, 3)] == [0.02, 25.0]
    assert ws.cell(2, 2).number_format == "General"  # shows 0.02, not 0.0
    assert ws.cell(3, 2).number_format == "#,##0.0"
    assert ws.cell(2, 3).number_format == "#,##0.00"
