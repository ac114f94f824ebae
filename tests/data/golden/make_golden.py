"""Record what every example and benchmark plan gives, to hold a restructuring to it.

Run on the code before the package layout was changed (main at 2511b9f, the flat
``wzq/`` of 25 modules) to store what every output was then; recorded again after
the merge of the mutation-testing work, whose one intended change is the caution
line on every Charts sheet (one more cell per workbook, nothing else moved); and
again when the example with an approach road (``brackenholm_interchange_evening``,
ramps and landmarks on its Approach sheet) was added: its plan, commands, workbook
and report are new entries, every entry recorded before is unchanged; and again
after the count history reached the workbook and the report, whose one intended
change here is the report of the plan with a count history
(larkspur_vale_week.json): a risk page before the method (its headline figures,
fan chart, hours and method), so every later page number moves; and again when
the Closure windows sheet of a run without the search became one wrapped note
with its own print area (it printed across two pages, cut mid-word): that sheet's
print area is the one change; and again when the longest wait in the queue was
fixed (the departure curve's corner where a queue clears inside an interval had
been read as a straight line): the longest wait of the hour in which each queue
clears drops (for example Ashgrove hour 49 from 21.04 to 10.84 min), and with it
the per-hour tables, sheets and report pages that print it; and again when the
report's demand, queue-length and cumulative charts came to be drawn as reportlab
drawings instead of matplotlib figures: the report is recorded with ``vector=False``,
which once embedded those charts as PNG images without text, and they are now
vector drawings whatever that option says, so the text of each example's two chart
pages gains the charts' own words (legends, axis titles, tick labels, panel titles,
the landmark names and the queue labels); every other line of those pages, every
other page and every other output are unchanged; and again when the warnings on the
Permit table, Summary and Run log sheets came to be wrapped in one cell across the
printed width (merged on the first two; a long warning in one cell ran past the print
area and was cut off on paper): those sheets' merged cells, row heights and the
warning cells' alignment change, no cell's value; and again when the per-hour table
gained the column ``queue_held_veh`` (the vehicles held back beyond the approach or
at a section of it, whose hours print the longest queue as "unknown"): that column is
new in every plan's per-hour table, 0 in every hour of every recorded plan, and no
other entry changes; and again when the Fenwick Downs example's site name lost a real
town's name ("Harlow Gap" became the invented "Wrenfold Gap"): only the entries of that
example that print its site name change, by those words; and again when the count
reading came to list a day whose traffic falls in other hours than on the same weekday
(another day's or direction's counts pasted in): ``wzq counts`` on the Larkspur Vale
count file now lists Labor Day, Mon 2026-09-07 (17 % of its vehicles in other hours than
on the median Monday), which its plans list as a holiday; only that command's output
changes; and again when the workbook's demand and capacity chart came to draw the
intervals the engine used instead of hourly averages (a 15-minute peak above capacity,
or a closure from part-way through an hour, was averaged away): that chart's title
loses "by hour" on every Charts sheet, and on the Brackenholm example, whose closure
starts at 20:30, its data block gains the half-hour rows (377 cells, not 369); and
again when an hour a closure starts or ends within came to be named on the Permit table
and in the report's hour-by-hour notes (its capacity and demand / capacity are averages
over the hour): on the Brackenholm example (the hour from 20:00) the Permit table gains
that one wrapped note (a cell, a merged range, and its print area one row longer) and
the report's hour-by-hour page that sentence; and again when the tables of the longest
allowable windows came to say when they list only some (the 5 longest on the terminal,
10 on the Closure windows sheet, 3 in the report, of each configuration's windows): the
``windows`` command's output of every example, the windows page of the reports and the
Closure windows sheets whose configurations have more windows than that gain the line
or title words "the N longest of M ... are listed"; and again when an hour a closure
starts or ends within came to be judged on demand / capacity by its demand against the
closure's capacity (the hour's average capacity, part open road, diluted it): on the
Brackenholm example (closure from 20:30, no demand/capacity limit) the hour from 20:00
reads 1.19 instead of 0.47 in the per-hour table, ``show``, the Results and Permit table
sheets, and the part-hour note on the Permit table and in the report says so in its
words; no status changes, nothing else; and again when a chance that is neither none
nor all came to be printed with the digits that keep it from reading 0.0 % or
100.0 %: ``wzq risk`` and the report's risk page on the Larkspur week give the 22:00
interval from 0.02 % (they printed 0.0), nothing else:

    python3 tests/data/golden/make_golden.py

It writes ``tests/data/golden/golden.json``, which ``tests/guarantees/test_same_results.py``
compares with today's code: every output must be the same. What is recorded:

- per plan (the shipped examples, the demo plan, the example workbooks as the
  reader reads them, and the plans the benchmarks time): the per-hour table, the
  intervals, the summary, the warnings, the landmark and exit-ramp tables, the
  closure-window tables (where the search runs) and the risk table (for the plan
  with a count history);
- per command (``show``, ``check``, ``windows``, ``risk``, ``counts``,
  ``spacetime``): what it prints, on a terminal 200 columns wide;
- per example workbook and the workbook benchmark's week: every cell of every
  output sheet after ``wzq run`` (the run time and the temporary folder taken
  out), and the charts' titles;
- per example: the text of the PDF report, page by page (dated on a fixed day).

Values are stored as a SHA-256 digest of their canonical text (floats by
``repr``, so bit for bit) with a few numbers beside each column (length, sum)
to say where a difference lies. ``--raw FILE`` writes the values themselves,
to compare two versions of the code by hand.
"""

from __future__ import annotations

import argparse
import contextlib
import dataclasses
import datetime as dt
import hashlib
import importlib.util
import io
import json
import math
import os
import shutil
import sys
import tempfile
from pathlib import Path
from unittest import mock

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[3]
OUT = Path(__file__).with_name("golden.json")
EXAMPLES = ROOT / "examples"
RUN_TIME = "2027-01-01T00:00:00Z"
REPORT_DATE = dt.date(2027, 1, 1)

sys.path.insert(0, str(ROOT / "tests"))  # the independent helper that types a plan in

import wzq  # noqa: E402
from wzq.cli import main as cli_main  # noqa: E402
from wzq.engine.risk import assess  # noqa: E402
from wzq.engine.windows import longest_windows, plan_windows, too_long, windows_table  # noqa: E402
from wzq.io.jsonplan import load_plan  # noqa: E402
from wzq.io.report import write_report  # noqa: E402
from wzq.io.workbook.reader import read_plan  # noqa: E402
from wzq.io.workbook.run import run_workbook  # noqa: E402

JSON_PLANS = (
    "kestrel_ridge_weeknight",
    "fenwick_downs_weekend",
    "ashgrove_bypass_week",
    "larkspur_vale_week",
    "brackenholm_interchange_evening",
)
WORKBOOKS = (
    "kestrel_ridge_weeknight",
    "fenwick_downs_weekend",
    "ashgrove_bypass_week",
    "brackenholm_interchange_evening",
)


def _benchmark(name: str):
    """A benchmark script as a module (they put ``tests/`` on the path themselves)."""
    spec = importlib.util.spec_from_file_location(
        f"bench_{name}", ROOT / "benchmarks" / f"{name}.py"
    )
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


# --- canonical values -------------------------------------------------------------


def canon(value):
    """Plain JSON values: floats by ``repr`` (bit for bit), times in ISO form."""
    if isinstance(value, pd.DataFrame):
        return {str(c): canon(value[c].tolist()) for c in value.columns}
    if isinstance(value, pd.Series):
        return canon(value.tolist())
    if isinstance(value, np.ndarray):
        return canon(value.tolist())
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: canon(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, dict):
        return {str(k): canon(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [canon(v) for v in value]
    if isinstance(value, np.generic):
        return canon(value.item())
    if isinstance(value, bool) or value is None or isinstance(value, int | str):
        return value
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, pd.Timestamp | dt.datetime | dt.date | dt.time):
        return "NaT" if value is pd.NaT else value.isoformat()
    if isinstance(value, dt.timedelta | pd.Timedelta):
        return str(value)
    return f"{type(value).__name__}:{value}"


def digest(value) -> dict:
    """A leaf's digest: SHA-256 of its canonical text, with its size and, for a
    list of numbers, their sum (to say where a difference lies)."""
    text = json.dumps(value, sort_keys=True)
    out = {"sha256": hashlib.sha256(text.encode()).hexdigest()[:32]}
    if isinstance(value, list):
        out["n"] = len(value)
        nums = []
        for v in value:
            with contextlib.suppress(TypeError, ValueError):
                x = float(v) if not isinstance(v, bool) else None
                if x is not None and math.isfinite(x):
                    nums.append(x)
        if nums:
            out["sum"] = float(f"{sum(nums):.9g}")
    elif isinstance(value, str):
        out["text"] = value[:80]
    return out


def digests(tree):
    """Digest every table column, text and list; keep the nesting."""
    if isinstance(tree, dict):
        return {k: digests(v) for k, v in tree.items()}
    return digest(tree)


# --- what is recorded -------------------------------------------------------------


def engine_outputs(plan: wzq.Plan, windows: bool = True) -> dict:
    result = wzq.analyse(plan)
    out = {
        "hourly": canon(result.hourly),
        "intervals": canon(result.intervals),
        "summary": canon(result.summary),
        "warnings": canon(list(result.warnings)),
        "landmarks": canon(result.landmarks),
        "exit_ramps": canon(result.exit_ramps),
    }
    if windows and not too_long(plan.demand):
        wr = plan_windows(plan)
        out["windows_table"] = canon(windows_table(wr, symbols=True))
        out["longest_windows"] = canon(longest_windows(wr, top=None))
    return out


def plans() -> dict[str, wzq.Plan]:
    """Every plan recorded: the examples, the demo plan, the example workbooks as read,
    and the plans of the benchmarks."""
    out = {name: load_plan(EXAMPLES / f"{name}.json") for name in JSON_PLANS}
    out["demo"] = load_plan(ROOT / "wzq" / "data" / "kestrel_ridge_weeknight.json")
    for name in WORKBOOKS:
        out[f"{name}.xlsx"] = read_plan(EXAMPLES / f"{name}.xlsx")
    engine = _benchmark("engine")
    out["bench_engine_year"] = engine.year_plan()
    out["bench_engine_year_ramps"] = dataclasses.replace(engine.year_plan(), approach=engine.RAMPS)
    out["bench_workbook_week"] = _benchmark("workbook").week_plan()
    batch = _benchmark("batch")
    for k in (0, 1):
        out[f"bench_batch_week_{k}"] = batch.week_plan(k)
    return out


def cli_text(argv: list[str]) -> dict:
    """What a command prints (stdout and stderr) and its exit status."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        status = cli_main(argv)
    return {
        "status": status,
        "stdout": out.getvalue(),
        "stderr": err.getvalue(),
    }


def command_outputs(tmp: Path) -> dict:
    # the commands' text wrapped at 200 columns; the setting is put back after, so the
    # tests that run later in the same session see the terminal's width as before
    with mock.patch.dict(os.environ, {"COLUMNS": "200"}):
        return _command_outputs(tmp)


def _command_outputs(tmp: Path) -> dict:
    out: dict[str, dict] = {}
    for name in JSON_PLANS:
        out[f"show {name}.json"] = cli_text(["show", str(EXAMPLES / f"{name}.json")])
        out[f"windows {name}.json"] = cli_text(["windows", str(EXAMPLES / f"{name}.json")])
    for name in WORKBOOKS:
        out[f"check {name}.xlsx"] = cli_text(["check", str(EXAMPLES / f"{name}.xlsx")])
        out[f"show {name}.xlsx"] = cli_text(["show", str(EXAMPLES / f"{name}.xlsx")])
    out["risk larkspur_vale_week.json"] = cli_text(
        ["risk", str(EXAMPLES / "larkspur_vale_week.json")]
    )
    out["counts larkspur_vale_eb_2026.vol"] = cli_text(
        ["counts", str(EXAMPLES / "larkspur_vale_eb_2026.vol")]
    )
    png = tmp / "spacetime.png"
    out["spacetime kestrel_ridge_weeknight.json"] = cli_text(
        ["spacetime", str(EXAMPLES / "kestrel_ridge_weeknight.json"), "-o", str(png)]
    )
    for leaf in out.values():
        for key in ("stdout", "stderr"):
            leaf[key] = leaf[key].replace(str(tmp), "<tmp>").replace(str(ROOT), "<root>")
    return out


def risk_outputs(plan: wzq.Plan) -> dict:
    return {"hourly": canon(assess(plan).hourly)}


def cell_text(value, tmp: Path):
    if isinstance(value, str):
        return value.replace(str(tmp), "<tmp>").replace(str(ROOT), "<root>")
    return canon(value)


def workbook_outputs(path: Path, tmp: Path) -> dict:
    """Every cell of every output sheet and each chart's title, after ``wzq run``."""
    from openpyxl import load_workbook

    from wzq.io.workbook.layout import written_sheets

    run_workbook(path, run_time=RUN_TIME)
    book = load_workbook(path)
    out: dict[str, object] = {}
    for name in written_sheets(book):
        ws = book[name]
        cells = [
            [c.coordinate, cell_text(c.value, tmp), c.number_format]
            for row in ws.iter_rows()
            for c in row
            if c.value is not None
        ]
        out[f"{name} cells"] = cells
        titles = []
        for chart in ws._charts:
            t = chart.title
            rich = getattr(getattr(getattr(t, "tx", None), "rich", None), "p", None) or []
            titles.append(
                "".join(r.t for p in rich for r in (p.r or []) if getattr(r, "t", None))
                if t is not None
                else None
            )
        if titles:
            out[f"{name} charts"] = titles
        out[f"{name} merged"] = sorted(str(m) for m in ws.merged_cells.ranges)
        if ws.print_area:
            out[f"{name} print area"] = str(ws.print_area)
    return out


def workbooks(tmp: Path) -> dict:
    from workbook_helpers import fill_template

    out = {}
    for name in WORKBOOKS:
        target = tmp / f"{name}.xlsx"
        shutil.copy(EXAMPLES / f"{name}.xlsx", target)
        out[f"{name}.xlsx"] = workbook_outputs(target, tmp)
    week = tmp / "bench_workbook_week.xlsx"
    fill_template(_benchmark("workbook").week_plan(), week)
    out["bench_workbook_week.xlsx"] = workbook_outputs(week, tmp)
    return out


def report_outputs(tmp: Path) -> dict:
    """The report's text, page by page (the generation date replaced)."""
    from pypdf import PdfReader

    out = {}
    for name in JSON_PLANS:
        result = wzq.analyse(load_plan(EXAMPLES / f"{name}.json"))
        pdf = write_report(
            result,
            tmp / f"{name}.pdf",
            generated=REPORT_DATE,
            source=f"{name}.json",
            vector=False,
        )
        pages = [p.extract_text() for p in PdfReader(pdf).pages]
        out[f"{name}.json"] = {f"page {i + 1}": t for i, t in enumerate(pages)}
    return out


def collect() -> dict:
    with tempfile.TemporaryDirectory() as folder:
        tmp = Path(folder)
        all_plans = plans()
        tree: dict[str, object] = {
            "engine": {
                name: engine_outputs(plan, windows=not name.startswith("bench_engine"))
                for name, plan in all_plans.items()
            },
            "risk": {"larkspur_vale_week": risk_outputs(all_plans["larkspur_vale_week"])},
            "commands": command_outputs(tmp),
            "workbooks": workbooks(tmp),
            "reports": report_outputs(tmp),
        }
    return tree


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--raw", type=Path, help="write the values themselves to this file")
    parser.add_argument("--out", type=Path, default=OUT, help="where the digests go")
    args = parser.parse_args()
    tree = collect()
    if args.raw:
        args.raw.write_text(json.dumps(tree, indent=1, sort_keys=True) + "\n")
        print(f"wrote {args.raw}")
    args.out.write_text(json.dumps(digests(tree), indent=1, sort_keys=True) + "\n")
    print(f"wrote {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
