"""What one press costs: whole ``wzq`` commands as fresh processes, against their floors.

Every press of the Recalculate button and every command starts a fresh Python,
so this times whole processes, each against the floor a spreadsheet tool cannot
go below, measured side by side in one run (each timed pair runs the floor and
the command back to back, so both see the same machine load):

- ``wzq --version`` and ``wzq --help`` against a bare ``python -c pass``;
- ``wzq check`` against ``openpyxl.load_workbook`` of the same file, and of a
  copy holding only the input sheets;
- ``wzq run`` (re-run on a workbook that holds results, and first run on the
  filled template) against openpyxl loading and saving the same file;
- ``wzq report`` (absolute time, and against the bare start).

Plans (invented): one day, one week, one month and one year of hourly demand and
one week of 15-minute demand, typed into the template as a designer would.

Medians of the paired runs, with the min-max of the ratios (this machine's
speed drifts within a run). Targets: ``--version`` under 0.3 s above bare
Python; ``run`` on a week within 1.5x its floor, on a year within 1.3x; ``check``
on a year within 1.5x of the load of its input sheets; ``report`` on a week
under 1.2 s.

    python benchmarks/press.py [--repeat N] [--plans day,week,...] [--cases version,check,...]
"""

from __future__ import annotations

import argparse
import dataclasses
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
from openpyxl import load_workbook

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))  # the helper that types a plan into a template
sys.path.insert(0, str(ROOT / "benchmarks"))

from engine import year_plan  # noqa: E402
from workbook_helpers import fill_template  # noqa: E402

import wzq  # noqa: E402

PY = sys.executable
INPUT_SHEETS = ("Start", "Site", "Demand", "Closures", "Limits")
PLANS = ("day", "week", "month", "year", "week15")
CASES = ("version", "help", "check", "run", "first-run", "report")


def plan_for(name: str) -> wzq.Plan:
    """The invented benchmark plans (weekday/weekend profiles, nightly closures)."""
    if name == "day":
        return year_plan(days=1)
    if name == "week":
        return year_plan(days=7)
    if name == "month":
        return year_plan(days=30)
    if name == "year":
        return year_plan(days=365)
    if name == "week15":
        week = year_plan(days=7)
        flows = np.repeat(week.demand.flows_veh_h, 4)
        demand = wzq.Demand(week.demand.start, 900, flows)
        return dataclasses.replace(week, demand=demand)
    raise ValueError(name)


def timed(cmd: list[str]) -> float:
    """Wall time of one fresh process; it must succeed."""
    t0 = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True)
    seconds = time.perf_counter() - t0
    if done.returncode != 0:
        raise SystemExit(f"failed ({done.returncode}): {' '.join(cmd)}\n{done.stderr[-2000:]}")
    return seconds


def paired(
    floor: Callable[[], float], cmd: Callable[[], float], repeat: int
) -> tuple[float, float, float, float, float]:
    """Median floor, median command, and median / min / max of the per-pair ratio."""
    fs, cs = [], []
    for _ in range(repeat):
        fs.append(floor())
        cs.append(cmd())
    ratios = [c / f for f, c in zip(fs, cs, strict=True)]
    return (
        statistics.median(fs),
        statistics.median(cs),
        statistics.median(ratios),
        min(ratios),
        max(ratios),
    )


def bare() -> float:
    """A bare Python start."""
    return timed([PY, "-c", "pass"])


def inputs_only(src: Path, dst: Path) -> Path:
    """A copy of a workbook with only its input sheets (the floor of reading a plan)."""
    wb = load_workbook(src)
    for ws in list(wb.worksheets):
        if ws.title not in INPUT_SHEETS:
            wb.remove(ws)
    wb.save(dst)
    return dst


def row(label: str, floor_label: str, m: tuple[float, ...], target: str) -> None:
    f, c, r, lo, hi = m
    print(
        f"{label:<30}{floor_label:<22}{f:>8.3f}{c:>9.3f}{r:>7.2f}  "
        f"({lo:.2f}-{hi:.2f})  +{c - f:.3f} s  {target}"
    )


def load(p: Path) -> Callable[[], float]:
    """Floor of reading: openpyxl loads the file in a fresh process."""
    return lambda: timed([PY, "-c", f"import openpyxl; openpyxl.load_workbook({str(p)!r})"])


def load_save(p: Path, out: Path) -> Callable[[], float]:
    """Floor of writing back: openpyxl loads and saves the file in a fresh process."""
    code = (
        f"import openpyxl; openpyxl.load_workbook({str(p)!r}, keep_links=True).save({str(out)!r})"
    )
    return lambda: timed([PY, "-c", code])


def wzq_cmd(*args: str) -> Callable[[], float]:
    """One ``wzq`` command as a fresh process."""
    return lambda: timed([PY, "-m", "wzq", *args])


def bench_plan(name: str, folder: Path, cases: list[str], n: int) -> None:
    """Every case of one plan, each against its floor."""
    fresh = fill_template(plan_for(name), folder / f"{name}-fresh.xlsx")
    done = folder / f"{name}.xlsx"
    shutil.copyfile(fresh, done)
    wzq_cmd("run", str(done))()  # results present from here on
    inputs = inputs_only(fresh, folder / f"{name}-inputs.xlsx")
    floor_out = folder / "floor-out.xlsx"
    if "check" in cases:
        check = wzq_cmd("check", str(done))
        row(f"check {name}", "openpyxl load", paired(load(done), check, n), "")
        target = "<= 1.5x (year)" if name == "year" else ""
        row(f"check {name}", "load input sheets", paired(load(inputs), check, n), target)
    if "run" in cases:
        target = {"week": "<= 1.5x", "year": "<= 1.3x"}.get(name, "")
        m = paired(load_save(done, floor_out), wzq_cmd("run", str(done)), n)
        row(f"run {name} (re-run)", "openpyxl load+save", m, target)
    if "first-run" in cases:
        work = folder / f"{name}-work.xlsx"

        def first() -> float:
            shutil.copyfile(fresh, work)
            return wzq_cmd("run", str(work))()

        m = paired(load_save(fresh, floor_out), first, n)
        row(f"run {name} (first run)", "openpyxl load+save", m, "")
    if "report" in cases and name in ("day", "week"):
        report = wzq_cmd("report", str(done), "-o", str(folder / f"{name}.pdf"))
        target = "< 1.2 s" if name == "week" else ""
        row(f"report {name}", "python -c pass", paired(bare, report, n), target)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5, help="timed pairs per case (default 5)")
    ap.add_argument("--plans", default=",".join(PLANS), help=f"subset of {','.join(PLANS)}")
    ap.add_argument("--cases", default=",".join(CASES), help=f"subset of {','.join(CASES)}")
    args = ap.parse_args(argv)
    plans = [p for p in args.plans.split(",") if p]
    cases = [c for c in args.cases.split(",") if c]
    n = args.repeat

    print(f"wzq {wzq.__version__}, {n} pairs per case, fresh processes; medians, ratio (min-max)")
    print(
        f"{'case':<30}{'floor':<22}{'floor s':>8}{'wzq s':>9}{'ratio':>7}  {'range':<13}"
        f"{'above floor':<13}target"
    )
    for case in ("version", "help"):
        if case in cases:
            flag = f"--{case}"
            m = paired(bare, lambda flag=flag: timed([PY, "-m", "wzq", flag]), n)
            row(f"wzq {flag}", "python -c pass", m, "< 0.3 s above bare start")

    with tempfile.TemporaryDirectory() as tmp:
        for name in plans:
            bench_plan(name, Path(tmp), cases, n)
    return 0


if __name__ == "__main__":
    sys.exit(main())
