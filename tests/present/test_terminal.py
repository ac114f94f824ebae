"""What the terminal shows: tables that fit its width, the queue discharge rate beside
the capacity, and ``wzq spacetime --closure N`` comparing closure N with closure N."""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from wzq.present.terminal import TermColumn, fit, wrap_items

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
WEEK = EXAMPLES / "ashgrove_bypass_week.json"


def wzq_cli(*args: str, columns: int | None = None) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ)
    env.pop("COLUMNS", None)
    if columns is not None:
        env["COLUMNS"] = str(columns)
    return subprocess.run(
        [sys.executable, "-m", "wzq", *args],
        capture_output=True,
        text=True,
        env=env,
        timeout=300,
    )


@pytest.mark.parametrize("command", [["demo", "--no-workbook"], ["show", str(WEEK)]])
def test_tables_fit_an_80_column_terminal(command: list[str]) -> None:
    done = wzq_cli(*command, columns=80)
    assert done.returncode == 0, done.stderr
    out = done.stdout
    # every line of the table fits; only the caution (one line, as in every output)
    # is left for the terminal to wrap
    lines = [x for x in out.splitlines() if not x.startswith("Results support")]
    assert max(len(x.rstrip()) for x in lines) <= 80
    head = out[out.index("Hour") - 200 : out.index("───")]
    # capacity and the rate the queue actually discharges at, side by side
    assert "Capacity" in head and "discharge" in head
    assert re.search(r"not shown at 80 characters: .*Lanes open", " ".join(out.split()))


def test_the_week_at_80_columns_reads_as_a_hand_check() -> None:
    """Tuesday 21:00: demand 2,300 veh/h against a capacity of 1,657 breaks down; the
    queue then grows at the discharge rate, 1,435 veh/h (HCM 7th ed. ch. 10: LCSI
    capped at 2.0, QDR = 2093 - 154 x 2 - 194 + 9 x 2 - 59 = 1,550 pc/h/ln, x f_HV
    1/1.08 = 1,435 veh/h), so 865 vehicles by 22:00 and 2.11 mi of queue."""
    out = wzq_cli("show", str(WEEK), columns=80).stdout
    row = next(x for x in out.splitlines() if x.startswith("Tue 2027-09-07 21:00"))
    assert row.split()[3:7] == ["2,300", "1,657", "1,435", "2.11"]
    # the status wraps between its items, never inside one
    block = out[out.index("Tue 2027-09-07 22:00") :].splitlines()[:2]
    status = " ".join(x[x.index("over") :] if "over" in x else x.strip() for x in block)
    assert "over limit: queue length, delay" in " ".join(status.split())


def test_a_wide_terminal_shows_every_column() -> None:
    out = wzq_cli("show", str(WEEK), columns=250).stdout
    assert "not shown at" not in out
    row = next(x for x in out.splitlines() if x.startswith("Tue 2027-09-07 22:00"))
    # lanes open 1; demand 1,800; 865 + (1,800 - 1,435) = 1,230 queued at 23:00
    assert row.split()[3:6] == ["1", "1,800", "1,657"]
    assert "1,230" in row
    assert row.rstrip().endswith("over limit: queue length, delay, demand/capacity")


def test_fit_keeps_whole_priority_levels() -> None:
    cols = [
        TermColumn("A", ["x" * 10], 1),
        TermColumn("B", ["x" * 10], 2),
        TermColumn("C", ["x" * 10], 2),
        TermColumn("D", ["x" * 10], 3),
    ]
    # 10 + 1 + 10 + 1 + 10 = 32 fits levels 1 and 2 only
    assert fit(cols, 32) == ([0, 1, 2], [3])
    assert fit(cols, 31) == ([0], [1, 2, 3])  # never B without C
    assert fit(cols, 5) == ([0], [1, 2, 3])  # the first level always stays


def test_status_wraps_after_its_items() -> None:
    text = "over limit: queue length, delay, demand/capacity"
    assert wrap_items(text, 25) == "over limit: queue length,\ndelay, demand/capacity"
    assert wrap_items(text, 15) == "over limit:\nqueue length,\ndelay,\ndemand/capacity"


# --- wzq spacetime --closure -----------------------------------------------------------------


def test_spacetime_closure_compares_that_closure_only(tmp_path: Path) -> None:
    """Closure 2 (Thursday night): the engine's queue by hand is 1,800 - 1,435 = 365
    veh at 23:00, not the plan's longest, 3,897 veh on Saturday."""
    done = wzq_cli(
        "spacetime", str(WEEK), "--closure", "2", "-o", str(tmp_path / "c2.png"), columns=120
    )
    assert done.returncode == 0, done.stderr
    out = done.stdout
    stored = next(x for x in out.splitlines() if "Most vehicles stored" in x)
    assert stored.split()[-2:] == ["365", "veh"]
    longest = next(x for x in out.splitlines() if "Longest queue" in x)
    assert "Sat" not in longest and "Thu 2027-09-09" in longest
    miles = [float(m) for m in re.findall(r"([\d.]+) mi", longest)]
    assert len(miles) == 2 and max(miles) < 1.0  # both well under Saturday's 14.8 mi


def test_spacetime_lists_no_smoothing_as_a_queue(tmp_path: Path) -> None:
    """Over the whole week the scheme's smoothing of free flow leaves a vehicle or a
    few above the free-flow count in open-road hours; those hours are not listed."""
    done = wzq_cli(
        "spacetime", str(WEEK), "--all-hours", "-o", str(tmp_path / "all.png"), columns=120
    )
    assert done.returncode == 0, done.stderr
    hours = [x.split()[0] + " " + x.split()[1] for x in done.stdout.splitlines() if
             re.match(r"(Mon|Tue|Wed|Thu|Fri|Sat|Sun) 2027-09-\d\d \d\d:00", x)]  # fmt: skip
    # the three queues' hours only: Tue 21-01, Thu 22-00, Sat 10-18
    assert len(hours) == 5 + 3 + 9
    assert not any(h.startswith("Mon") or h.startswith("Sun") for h in hours)
