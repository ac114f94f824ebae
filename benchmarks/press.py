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
one week of 15-minute demand, typed into the template as a designer would, with
the agency limits of the Ashgrove Bypass example and the template's default
"Closure windows sheet: yes" (the search is left out of the year, over its size
limit, with a note on the sheet).

Medians of the paired runs, with the min-max of the ratios (this machine's
speed drifts within a run). Targets: ``--version`` under 0.3 s above bare
Python; ``run`` on a week within 1.5x its floor, on a year within 1.3x; ``check``
on a year within 1.5x of the load of its input sheets; ``report`` on a week
under 1.2 s.

Bytecode: ``pip install`` compiles every module of a package it installs, so a
designer's wzq starts from cached bytecode. Before timing, each tree's ``wzq``
is compiled the same way (``compileall`` into its ``__pycache__`` folders, which
git ignores), so that an environment that turns off writing bytecode
(``PYTHONDONTWRITEBYTECODE``, as in some sandboxes and containers) does not
charge every press for recompiling wzq's own modules, a cost the floors (openpyxl,
installed with its bytecode) do not pay. ``--no-compile`` leaves that out.

``--compare PATH`` also times another checkout of wzq (for example main before a
change) in the same pairs, each tree on its own copy of every workbook, run with
``PYTHONPATH`` set to that tree: its rows follow each of this tree's, marked
``(compared)``.

    python benchmarks/press.py [--repeat N] [--plans day,week,...] [--cases version,check,...]
        [--compare OTHER_CHECKOUT] [--no-compile]
"""

from __future__ import annotations

import argparse
import compileall
import dataclasses
import os
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
from wzq.io.jsonplan import load_plan  # noqa: E402

PY = sys.executable
INPUT_SHEETS = ("Start", "Site", "Demand", "Closures", "Limits")
PLANS = ("day", "week", "month", "year", "week15")
CASES = ("version", "help", "check", "run", "first-run", "report")


def _hourly(name: str) -> wzq.Plan:
    days = {"day": 1, "week": 7, "month": 30, "year": 365, "week15": 7}[name]
    return year_plan(days=days)


def plan_for(name: str) -> wzq.Plan:
    """The invented benchmark plans (weekday/weekend profiles, nightly closures), with the
    limits of the Ashgrove Bypass example and the closure-window search on."""
    plan = _hourly(name)
    if name == "week15":
        flows = np.repeat(plan.demand.flows_veh_h, 4)
        plan = dataclasses.replace(plan, demand=wzq.Demand(plan.demand.start, 900, flows))
    limits = load_plan(ROOT / "examples" / "ashgrove_bypass_week.json").thresholds
    options = dataclasses.replace(plan.options, closure_windows=True)
    return dataclasses.replace(plan, thresholds=limits, options=options)


def timed(cmd: list[str], root: Path | None = None) -> float:
    """Wall time of one fresh process (``python -m wzq`` imports the wzq of ``root``,
    this tree by default); it must succeed."""
    env = dict(os.environ)
    if root is not None:
        env["PYTHONPATH"] = str(root)
    t0 = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True, env=env, cwd=root or ROOT)
    seconds = time.perf_counter() - t0
    if done.returncode != 0:
        raise SystemExit(f"failed ({done.returncode}): {' '.join(cmd)}\n{done.stderr[-2000:]}")
    return seconds


Measured = tuple[float, float, float, float, float]


def paired(
    floor: Callable[[], float], cmds: dict[str, Callable[[], float]], repeat: int
) -> dict[str, Measured]:
    """Per tree: median floor, median command, and median / min / max of the per-pair
    ratio; every round runs the floor, then each tree's command, back to back."""
    fs: list[float] = []
    cs: dict[str, list[float]] = {tree: [] for tree in cmds}
    for _ in range(repeat):
        fs.append(floor())
        for tree, cmd in cmds.items():
            cs[tree].append(cmd())
    out = {}
    for tree, times in cs.items():
        ratios = [c / f for f, c in zip(fs, times, strict=True)]
        out[tree] = (
            statistics.median(fs),
            statistics.median(times),
            statistics.median(ratios),
            min(ratios),
            max(ratios),
        )
    return out


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


def row(label: str, floor_label: str, ms: dict[str, Measured], target: str) -> None:
    """One line per tree: this tree's with the target, then the compared tree's."""
    for tree, (f, c, r, lo, hi) in ms.items():
        name = label if tree == "this" else "  (compared)"
        print(
            f"{name:<30}{floor_label:<22}{f:>8.3f}{c:>9.3f}{r:>7.2f}  "
            f"({lo:.2f}-{hi:.2f})  +{c - f:.3f} s  {target if tree == 'this' else ''}"
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


def wzq_cmd(*args: str, root: Path | None = None) -> Callable[[], float]:
    """One ``wzq`` command as a fresh process (the wzq of ``root``, else this tree's)."""
    return lambda: timed([PY, "-m", "wzq", *args], root)


def bench_plan(name: str, folder: Path, cases: list[str], n: int, trees: dict[str, Path]) -> None:
    """Every case of one plan, each against its floor; every tree on its own copies."""
    fresh = fill_template(plan_for(name), folder / f"{name}-fresh.xlsx")
    done = {}
    for tree, root in trees.items():
        done[tree] = folder / tree / f"{name}.xlsx"
        done[tree].parent.mkdir(exist_ok=True)
        shutil.copyfile(fresh, done[tree])
        wzq_cmd("run", str(done[tree]), root=root)()  # results present from here on
    inputs = inputs_only(fresh, folder / f"{name}-inputs.xlsx")
    floor_out = folder / "floor-out.xlsx"

    def each(*args: str) -> dict[str, Callable[[], float]]:
        return {tree: wzq_cmd(*args, str(done[tree]), root=root) for tree, root in trees.items()}

    if "check" in cases:
        row(f"check {name}", "openpyxl load", paired(load(done["this"]), each("check"), n), "")
        target = "<= 1.5x (year)" if name == "year" else ""
        m = paired(load(inputs), each("check"), n)
        row(f"check {name}", "load input sheets", m, target)
    if "run" in cases:
        target = {"week": "<= 1.5x", "year": "<= 1.3x"}.get(name, "")
        m = paired(load_save(done["this"], floor_out), each("run"), n)
        row(f"run {name} (re-run)", "openpyxl load+save", m, target)
    if "first-run" in cases:

        def first(tree: str, root: Path) -> Callable[[], float]:
            work = folder / tree / f"{name}-work.xlsx"

            def go() -> float:
                shutil.copyfile(fresh, work)
                return wzq_cmd("run", str(work), root=root)()

            return go

        m = paired(load_save(fresh, floor_out), {t: first(t, r) for t, r in trees.items()}, n)
        row(f"run {name} (first run)", "openpyxl load+save", m, "")
    if "report" in cases and name in ("day", "week"):
        reports = {
            tree: wzq_cmd(
                "report", str(done[tree]), "-o", str(folder / tree / f"{name}.pdf"), root=root
            )
            for tree, root in trees.items()
        }
        target = "< 1.2 s" if name == "week" else ""
        row(f"report {name}", "python -c pass", paired(bare, reports, n), target)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5, help="timed pairs per case (default 5)")
    ap.add_argument("--plans", default=",".join(PLANS), help=f"subset of {','.join(PLANS)}")
    ap.add_argument("--cases", default=",".join(CASES), help=f"subset of {','.join(CASES)}")
    ap.add_argument("--compare", type=Path, help="another wzq checkout, timed alongside")
    ap.add_argument(
        "--no-compile", action="store_true", help="do not compile the trees' bytecode first"
    )
    args = ap.parse_args(argv)
    trees = {"this": ROOT}
    if args.compare is not None:
        trees["compared"] = args.compare.resolve()
    if not args.no_compile:
        for root in trees.values():  # as pip install does (module notes)
            compileall.compile_dir(root / "wzq", quiet=1)
    plans = [p for p in args.plans.split(",") if p]
    cases = [c for c in args.cases.split(",") if c]
    n = args.repeat

    print(f"wzq {wzq.__version__}, {n} pairs per case, fresh processes; medians, ratio (min-max)")
    print(
        "wzq's bytecode compiled first, as pip install does"
        if not args.no_compile
        else "wzq's bytecode NOT compiled first (--no-compile)"
    )
    if args.compare is not None:
        print(f"compared with the wzq in {trees['compared']} (rows marked '(compared)')")
    print(
        f"{'case':<30}{'floor':<22}{'floor s':>8}{'wzq s':>9}{'ratio':>7}  {'range':<13}"
        f"{'above floor':<13}target"
    )
    for case in ("version", "help"):
        if case in cases:
            flag = f"--{case}"
            cmds = {tree: wzq_cmd(flag, root=root) for tree, root in trees.items()}
            row(f"wzq {flag}", "python -c pass", paired(bare, cmds, n), "< 0.3 s above bare start")

    with tempfile.TemporaryDirectory() as tmp:
        for name in plans:
            bench_plan(name, Path(tmp), cases, n, trees)
    return 0


if __name__ == "__main__":
    sys.exit(main())
