"""The `wzq` command: demo, show, version, exit codes."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

import wzq
from wzq.cli import main
from wzq.io.jsonplan import load_plan

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


def test_demo_prints_the_hourly_table(
    capsys: pytest.CaptureFixture[str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    assert main(["demo"]) == 0
    out = capsys.readouterr().out
    written = list(tmp_path.glob("*.xlsx"))
    assert len(written) == 1 and written[0].name in out
    result = wzq.analyse(load_plan(EXAMPLES / "kestrel_ridge_weeknight.json"))
    s = result.summary
    assert f"{s.max_queue_length_m / 1609.344:,.2f} mi" in out
    assert f"{s.total_delay_veh_h:,.1f} veh-h" in out
    assert "Tue 2027-05-04 22:00" in out
    assert "over limit: queue length" in out
    assert wzq.CAUTION in out


def test_show_on_a_json_plan(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["show", str(EXAMPLES / "fenwick_downs_weekend.json"), "--all-hours"]) == 0
    out = capsys.readouterr().out
    assert " km " in out or "km)" in out
    rows = [line for line in out.splitlines() if line.startswith("Sat 2027-06-12")]
    assert len(rows) == 24


def test_bad_plan_exits_2_without_traceback(tmp_path: Path) -> None:
    data = json.loads((EXAMPLES / "kestrel_ridge_weeknight.json").read_text())
    data["site"]["lanes"] = 0
    data["closures"][0]["end"] = "2027-05-03T20:00"
    p = tmp_path / "bad.json"
    p.write_text(json.dumps(data))
    before = p.read_bytes()
    proc = subprocess.run(
        [sys.executable, "-m", "wzq", "show", str(p)], capture_output=True, text=True
    )
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    assert "bad.json: site" in proc.stderr
    assert "ends before it starts" in proc.stderr
    assert p.read_bytes() == before


def test_missing_file_exits_2(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["show", "no/such/plan.json"]) == 2
    assert "no such file" in capsys.readouterr().err


def test_version_and_help(capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as e:
        main(["--version"])
    assert e.value.code == 0
    assert wzq.__version__ in capsys.readouterr().out
    with pytest.raises(SystemExit):
        main(["--help"])
    out = capsys.readouterr().out
    assert "demo" in out and "exit status" in out


@pytest.mark.parametrize(
    "command",
    [
        ["windows", "--lanes-closed", "1"],
        ["risk", "--cv", "0.08", "--draws", "20"],
        ["spacetime", "--closure", "1"],
    ],
)
def test_every_command_that_analyses_a_plan_says_its_input_warnings(
    command: list[str], tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """A heavy-vehicle share of 60 % is queried at its key (a share above 50 % is rare
    outside haul roads, common practice, no source): `wzq windows`, `wzq risk` and
    `wzq spacetime` said nothing of it, as `wzq run` and `wzq check` do."""
    data = json.loads((EXAMPLES / "kestrel_ridge_weeknight.json").read_text())
    data["site"]["heavy_vehicle_percent"] = 60
    path = tmp_path / "heavy.json"
    path.write_text(json.dumps(data))
    args = [command[0], str(path), *command[1:]]
    if command[0] == "spacetime":
        args += ["-o", str(tmp_path / "st.png")]
    assert main(args) == 0
    said = [
        line
        for line in capsys.readouterr().out.splitlines()
        if line.startswith("warning: site.heavy_vehicle_percent: heavy vehicles are 60 %")
    ]
    assert len(said) == 1
