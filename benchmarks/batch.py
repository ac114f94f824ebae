"""Bulk-run speed: `wzq batch` against the bare cost of opening the workbooks.

Prints, measured side by side in one run on N generated one-week plan workbooks
(invented: variants of the Kestrel Ridge Parkway example, 168 hourly demands, a
closure every night):

- the read floor: opening every workbook the way the plan reader does
  (``wzq.io.workbook.reader.load_book``, openpyxl), one after another in this
  process, per plan;
- ``run_batch`` with 1 local worker, without write-back (read, validate,
  analyse, summary row, summary workbook and CSV), per plan, and its ratio to
  the floor;
- ``run_batch`` with 2 local workers, and the speed-up from 1 to 2 workers;
- for information, opening the same workbooks with python-calamine.

Each figure is the best of ``--rounds`` rounds, the three measurements taking
turns within a round, so that other work on the machine disturbs them alike.

Targets (issue 5, bulk runs): at most 1.3 times the read floor per plan with one
worker; at least 1.7 times faster on 2 workers than on 1.

``--compare PATH`` also times the 1-worker bulk run of another checkout of wzq (for
example main before a change) and of this tree, each in a fresh process with
``PYTHONPATH`` set to its tree (timed inside it, imports left out), in the same
rounds, so both trees are measured the same way.

Why the reader does not read values with python-calamine (said with the figures):
the plan reader's rules need what calamine (0.9) does not give. It lists the
workbook's tables and merged ranges, but not its defined names (every single input
is found through one) nor any cell's number format (issue 14: a percentage is read
by the format of its cell, 8 % typed in a percent cell is 8) nor which cells hold
formulas (a formula's saved result is read with a warning naming the cell, refused
when it comes from an output sheet, and a formula's 0 is told from a typed 0). So
openpyxl must parse the input sheets anyway; reading their values a second time with
calamine would add to the cost, not cut it. The calamine figure is for information.

Run: python benchmarks/batch.py [--plans 500] [--rounds 3] [--keep DIR] [--compare PATH]
"""

from __future__ import annotations

import argparse
import dataclasses
import datetime as dt
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))  # the template filler used by the tests

from workbook_helpers import fill_template  # noqa: E402

from wzq.engine.plan import Closure, Demand, Plan  # noqa: E402
from wzq.io.batch.runner import run_batch  # noqa: E402
from wzq.io.jsonplan import load_plan  # noqa: E402
from wzq.io.workbook.reader import load_book  # noqa: E402

DAY = [700, 480, 400, 420, 650, 1500, 3600, 5200, 5000, 4100, 3700, 3800,
       3900, 3900, 4200, 4800, 5300, 5400, 4600, 3500, 2800, 2400, 1900, 1300]  # fmt: skip


def week_plan(k: int) -> Plan:
    """Invented one-week plan number ``k``: a closure 21:00-05:00 every night but the last."""
    base = load_plan(ROOT / "examples" / "kestrel_ridge_weeknight.json")
    rng = np.random.default_rng(k)
    start = dt.datetime(2027, 5, 3)
    flows = np.concatenate([np.array(DAY) * rng.uniform(0.8, 1.1) for _ in range(7)])
    closures = tuple(
        Closure(
            start + dt.timedelta(days=d, hours=21),
            start + dt.timedelta(days=d, hours=29),
            lanes_closed=1 + (d + k) % 2,
        )
        for d in range(6)
    )
    return dataclasses.replace(
        base,
        site=dataclasses.replace(base.site, name=f"Kestrel Ridge Parkway, segment {k:03d}"),
        demand=Demand(start, 3600, flows),
        closures=closures,
    )


def generate(folder: Path, n: int) -> list[Path]:
    paths = []
    for k in range(n):
        path = folder / f"week_{k:03d}.xlsx"
        if not path.exists():
            fill_template(week_plan(k), path)
        paths.append(path)
    return paths


def _cpu() -> float:
    """CPU seconds of this process and of its finished child processes."""
    own = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + kids.ru_utime + kids.ru_stime


def read_floor(paths: list[Path]) -> tuple[float, float]:
    """Wall and CPU seconds to open every workbook as the reader does."""
    t0, c0 = time.perf_counter(), _cpu()
    for p in paths:
        load_book(p)
    return time.perf_counter() - t0, _cpu() - c0


def calamine_floor(paths: list[Path]) -> float:
    from python_calamine import CalamineWorkbook

    t0 = time.perf_counter()
    for p in paths:
        wb = CalamineWorkbook.from_path(str(p))
        for name in wb.sheet_names:
            wb.get_sheet_by_name(name).to_python()
    return time.perf_counter() - t0


def batch_time(folder: Path, out: Path, workers: int) -> tuple[float, float]:
    """Wall and CPU seconds (this process and its workers) of a whole bulk run."""
    t0, c0 = time.perf_counter(), _cpu()
    result = run_batch(folder, summary=out, workers=workers)
    seconds, cpu = time.perf_counter() - t0, _cpu() - c0
    if result.need_fixing or result.unexpected or len(result.rows) != len(result.outcomes):
        raise SystemExit(f"the batch did not analyse every plan: {result.issues[:3]}")
    return seconds, cpu


def fresh_batch_time(root: Path, folder: Path, out: Path) -> float:
    """Wall seconds of the 1-worker bulk run of the wzq in ``root`` (a fresh process;
    its start-up, well under a second, is left out by timing inside it)."""
    code = (
        "import sys, time\n"
        "from wzq.io.batch.runner import run_batch\n"
        "t0 = time.perf_counter()\n"
        f"r = run_batch({str(folder)!r}, summary={str(out)!r}, workers=1)\n"
        "assert len(r.rows) == len(r.outcomes), 'not every plan analysed'\n"
        "print(time.perf_counter() - t0)\n"
    )
    env = {**os.environ, "PYTHONPATH": str(root)}
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, cwd=root
    )
    if done.returncode != 0:
        raise SystemExit(f"the compared bulk run failed:\n{done.stderr[-2000:]}")
    return float(done.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--plans", type=int, default=500)
    ap.add_argument("--rounds", type=int, default=3)
    ap.add_argument("--keep", type=Path, help="generate the plans here and keep them")
    ap.add_argument("--compare", type=Path, help="another wzq checkout, timed alongside")
    args = ap.parse_args(argv)

    with tempfile.TemporaryDirectory() as tmp:
        folder = (args.keep or Path(tmp)) / f"week_plans_{args.plans}"
        folder.mkdir(parents=True, exist_ok=True)
        out_dir = Path(tmp) / "out"
        out_dir.mkdir()
        t0 = time.perf_counter()
        paths = generate(folder, args.plans)
        n = len(paths)
        print(f"{n} one-week plan workbooks ready in {time.perf_counter() - t0:.1f} s")
        read_floor(paths[:20])  # warm the file cache and the imports
        floors, ones, twos, cals, others = [], [], [], [], []
        for _ in range(args.rounds):
            floors.append(read_floor(paths))
            ones.append(batch_time(folder, out_dir / "one.xlsx", 1))
            if args.compare is not None:
                others.append(
                    (
                        fresh_batch_time(ROOT, folder, out_dir / "fresh.xlsx"),
                        fresh_batch_time(args.compare.resolve(), folder, out_dir / "other.xlsx"),
                    )
                )
            twos.append(batch_time(folder, out_dir / "two.xlsx", 2))
            cals.append(calamine_floor(paths))
            print(
                f"round {len(floors)}: floor {floors[-1][0]:.1f} s, 1 worker {ones[-1][0]:.1f} s, "
                f"2 workers {twos[-1][0]:.1f} s (wall)"
            )
        floor, one, two = (min(x[0] for x in m) for m in (floors, ones, twos))
        floor_cpu, one_cpu = (min(x[1] for x in m) for m in (floors, ones))
        cal = min(cals)

    ms = lambda s: 1000.0 * s / n  # noqa: E731
    ratio = one / floor
    speedup = one / two
    print(f"{'':38s}{'per plan':>12s}")
    print(f"{'read floor (openpyxl, as the reader)':38s}{ms(floor):9.1f} ms")
    print(f"{'wzq batch, 1 worker, no write-back':38s}{ms(one):9.1f} ms   {ratio:.2f} x floor")
    print(f"{'wzq batch, 2 workers, no write-back':38s}{ms(two):9.1f} ms   {speedup:.2f} x faster")
    if others:
        for label, best in (
            ("1 worker, fresh process, this tree", min(o[0] for o in others)),
            (f"1 worker, fresh process, {args.compare}", min(o[1] for o in others)),
        ):
            print(f"{label:38s}{ms(best):9.1f} ms   {best / floor:.2f} x floor")
    print(f"{'(python-calamine open, information)':38s}{ms(cal):9.1f} ms")
    print(
        "the reader reads with openpyxl only: it needs the defined names, the number formats "
        "and which cells hold formulas, which python-calamine does not give (module notes)"
    )
    print(
        f"CPU per plan (less disturbed by other work on the machine): floor "
        f"{ms(floor_cpu):.1f} ms, 1 worker {ms(one_cpu):.1f} ms, "
        f"{one_cpu / floor_cpu:.2f} x floor"
    )
    print(
        f"target: at most 1.30 x the read floor: {'met' if ratio <= 1.3 else 'NOT met'}; "
        f"at least 1.70 x faster on 2 workers: {'met' if speedup >= 1.7 else 'NOT met'}"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
