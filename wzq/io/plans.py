"""A plan from a file: a JSON plan or a workbook, by its suffix; and the shipped demo plan."""

from __future__ import annotations

from importlib import resources
from pathlib import Path
from typing import Any

from wzq.engine.plan import Plan, PlanError
from wzq.io.jsonplan import load_plan

__all__ = ["DEMO_PLAN", "demo_plan", "load_any", "load_any_and_book"]

#: The shipped invented example (package data).
DEMO_PLAN = "kestrel_ridge_weeknight.json"


def demo_plan() -> Plan:
    """The shipped invented example (a weeknight closure on a fictional parkway)."""
    ref = resources.files("wzq") / "data" / DEMO_PLAN
    with resources.as_file(ref) as path:
        return load_plan(path)


def load_any(path: Path) -> Plan:
    """A plan from a JSON file or a workbook (:mod:`wzq.io.workbook.reader`)."""
    return load_any_and_book(path)[0]


def load_any_and_book(path: Path) -> tuple[Plan, Any]:
    """:func:`load_any`, and the openpyxl workbook of a workbook plan (``None`` for JSON)."""
    if not path.exists():
        raise PlanError(f"no such file; check the path: {path}", where=str(path))
    if path.suffix.lower() == ".json":
        return load_plan(path), None
    # imported late: openpyxl is slow to import
    from wzq.io.workbook.reader import read_plan_and_book

    return read_plan_and_book(path)
