"""Typing a plan whose demand comes from a count history into a template workbook.

The Demand sheet's count-history inputs (:data:`wzq.io.fields.HISTORY_FIELDS`) are
filled from the plan's :class:`wzq.engine.design_demand.DemandHistory` as a
designer would type them: the count file as the plan names it (relative names
stay relative, so keep the workbook beside the count file), the rule's words
and numbers, and 'Demand is given as' set to 'from a count history'.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from openpyxl.workbook.workbook import Workbook

from wzq.engine.plan import Plan, PlanError, Problem
from wzq.io import fields as F
from wzq.io.workbook import layout
from wzq.io.workbook.writer import put_text

__all__ = ["from_count_file", "history_values", "type_history"]

#: Keys of the JSON ``demand.history`` block that have no cell in the workbook.
_NO_CELL = ("interval_minutes", "edition")


def from_count_file(plan: Plan) -> bool:
    """The plan's demand is designed from a count file (not typed hour by hour)."""
    return plan.history is not None and bool(plan.history.file)


def history_values(plan: Plan) -> dict[str, Any]:
    """The count-history cells of a plan, by defined name, as they are typed.

    Raises:
        PlanError: the plan cannot be given in the workbook (it does not start at
            00:00 or cover whole days, or its count file needs a reading option the
            workbook has no cell for).
    """
    h = plan.history
    assert h is not None
    d = plan.demand
    reading = dict(h.reading)
    problems = [
        Problem(
            f"demand.history.{k}",
            "the workbook has no cell for it; give a count file that shows it",
        )
        for k in _NO_CELL
        if k in reading
    ]
    hours = len(d.flows_veh_h) * d.interval_s / 3600
    if d.start.time() != dt.time() or hours % 24:
        problems.append(
            Problem(
                "demand.start",
                "a workbook's count history runs whole days from 00:00; start the plan at "
                "00:00 and give whole days",
            )
        )
    if problems:
        raise PlanError(problems)
    r = h.rule
    words = layout.word_for
    stamp = reading.get("stamp", "start")
    return {
        F.DEMAND_MODE.name: words(layout.DEMAND_MODE_WORDS, layout.HISTORY),
        "history_source": reading.get("file", h.file),
        "history_file_sheet": reading.get("sheet"),
        "history_station": reading.get("station"),
        "history_direction": reading.get("direction"),
        "history_lanes": reading.get("lanes"),
        "history_stamp": words(layout.STAMP_WORDS, stamp),
        "history_exclude_days": ", ".join(str(x) for x in reading.get("exclude_days", ())) or None,
        "history_first_day": dt.datetime.combine(d.start.date(), dt.time()),
        "history_days": round(hours / 24),
        "history_day_types": words(layout.DAY_TYPE_WORDS, r.day_types),
        "history_holidays": ", ".join(x.isoformat() for x in r.holidays) or None,
        "history_window_weeks": r.window_weeks,
        "history_same_months": words(layout.YES_NO_WORDS, r.same_months),
        "history_growth_percent": r.growth_percent_per_year,
        "history_percentile": r.percentile,
    }


def type_history(book: Workbook, plan: Plan) -> None:
    """Fill the count-history cells of a template for a plan designed from a count file."""
    for name, value in history_values(plan).items():
        sheet, coord = next(iter(book.defined_names[name].destinations))
        cell = book[sheet][coord.replace("$", "")]
        put_text(cell.parent, cell.row, cell.column, value)
        if name == "history_first_day":
            cell.number_format = layout.DATE_FORMAT
