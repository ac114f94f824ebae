"""Rebuild the example workbooks from the JSON plans beside this script.

Each plan (an invented scenario) is typed into a fresh template and analysed,
so the workbook holds the inputs, the results, the charts and the permit
table:

- ``kestrel_ridge_weeknight.xlsx``: two night closures on the fictional
  Kestrel Ridge Parkway (one lane, then two of three lanes);
- ``fenwick_downs_weekend.xlsx``: a Saturday daytime closure on the fictional
  Fenwick Downs Motorway that builds a long queue;
- ``ashgrove_bypass_week.xlsx``: a week of hourly demand on the fictional
  Ashgrove Bypass (three lanes) with two night closures of two lanes and a
  Saturday daytime closure of one lane: several queues, one of them far longer
  than the advance warning signs, and the space-time picture;
- ``brackenholm_interchange_evening.xlsx``: an evening closure of two of three
  lanes on the fictional Brackenholm Expressway below the Exit 12 interchange:
  the Approach sheet lists two entrance ramps (one with hourly flows, one as a
  share of the mainline), the Exit 12 off-ramp (a share) that the queue must not
  pass, a bridge and the end of the advance warning signs; the congested branch
  goes through the HCM density at capacity;
- ``larkspur_vale_week.xlsx``: a week of evening closures on the fictional
  Larkspur Vale Expressway whose demand is designed from an invented year of
  counts (``larkspur_vale_eb_2026.vol``, named on the Demand sheet and read
  from beside the workbook; made by ``build_count_history.py``): the risk
  columns on the Results and Permit table sheets, the risk section of the
  Summary and the fan chart of the longest queue on the Charts sheet.

    python examples/build_examples.py
"""

from __future__ import annotations

import sys
from pathlib import Path

from wzq.io.jsonplan import load_plan
from wzq.io.workbook.run import write_filled_workbook

HERE = Path(__file__).resolve().parent
PLANS = (
    "kestrel_ridge_weeknight",
    "fenwick_downs_weekend",
    "ashgrove_bypass_week",
    "brackenholm_interchange_evening",
    "larkspur_vale_week",
)


def main() -> int:
    for name in PLANS:
        target = HERE / f"{name}.xlsx"
        target.unlink(missing_ok=True)
        result = write_filled_workbook(load_plan(HERE / f"{name}.json"), target)
        failing = len(result.summary.hours_failing)
        print(f"wrote {target.name}: {len(result.hourly)} hours, {failing} over a limit")
    return 0


if __name__ == "__main__":
    sys.exit(main())
