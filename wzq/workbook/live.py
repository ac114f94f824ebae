"""Compatibility only: ``from wzq.workbook.live import main`` in entry modules written
before the layered layout. The Recalculate button's backend is :mod:`wzq.io.live.backend`;
``wzq link PLAN.xlsm`` writes the entry module afresh."""

from wzq.io.live.backend import main

__all__ = ["main"]
