"""How the reader shows a cell's value in a message (issue 22, found by mutation testing).

The user must recognise what they typed: text in quotes and trimmed, a date and time
to the minute, a number with thousands separators and six significant figures, and a
million or more in whole units (six significant figures would print ``1e+06``).
"""

from __future__ import annotations

import datetime as dt

from wzq.io.workbook.reader.values import _fmt, _show


def test_a_cell_value_is_shown_as_the_user_typed_it() -> None:
    assert _show("  Ash Lane ") == "'Ash Lane'"
    assert _show(dt.datetime(2027, 5, 3, 7, 30, 59)) == "2027-05-03 07:30"
    assert _show(1234.5) == "1,234.5"
    assert _show(0.123456789) == "0.123457"
    assert _show(12) == "12"
    assert _show(None) == "None"


def test_a_million_or_more_is_shown_in_whole_units() -> None:
    assert _fmt(999_999.0) == "999,999"
    assert _fmt(1_000_000.0) == "1,000,000"
    assert _fmt(1_000_000.4) == "1,000,000"
    assert _fmt(-2_500_000.0) == "-2,500,000"
