"""The one way wzq names a cell in a message: ``Site!B8``, ``'Permit table'!A4``."""

from __future__ import annotations

import re
from functools import lru_cache

from openpyxl.utils import get_column_letter

__all__ = ["cell_ref"]


def cell_ref(sheet: str, row: int, col: int) -> str:
    """``Site!B8``; a sheet name with spaces or punctuation is quoted as in a formula
    (``'Crew''s plan'!D36``: an apostrophe in the name doubled)."""
    return f"{_quoted(sheet)}!{get_column_letter(col)}{row}"


@lru_cache(maxsize=64)  # a reader names tens of thousands of cells on a handful of sheets
def _quoted(sheet: str) -> str:
    if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_.]*", sheet):
        return sheet
    return "'" + sheet.replace("'", "''") + "'"  # an apostrophe doubled, as in a formula
