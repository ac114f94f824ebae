"""Compatibility only: the workbook adapter lives in :mod:`wzq.io.workbook`.

Entry modules that ``wzq new``/``wzq link`` wrote before the layered layout
(``plan.py`` beside ``plan.xlsm``) say ``from wzq.workbook.live import main``;
:mod:`wzq.workbook.live` keeps that line working. Nothing else belongs here.
"""

__all__: list[str] = []
