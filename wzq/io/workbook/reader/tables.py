"""Excel tables: found by name, their rows (rows typed below a table, values typed
beside it, hidden and merged rows) read as the user sees them."""

from __future__ import annotations

from functools import lru_cache
from typing import Any

from openpyxl.cell.cell import Cell
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.worksheet.worksheet import Worksheet

from wzq.io import fields as F
from wzq.io.workbook import formula_values as FV
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader.values import (
    _blank,
    _norm,
    _Row,
    _Table,
    cell_ref,
    destinations,
    hidden_column,
    hidden_row,
    unseen,
)

__all__ = [
    "TableReader",
]


def block(ref: Any) -> tuple[int, int, int, int] | None:
    """The bounds (first column, first row, last column, last row) of a table's range, or
    ``None`` when it is not a block of cells ('A:H': openpyxl gives its rows as None)."""
    try:
        bounds = range_boundaries(str(ref))
    except (ValueError, TypeError):
        return None
    return None if None in bounds else bounds


class TableReader:
    """Part of the workbook reader (:class:`wzq.io.workbook.reader.BookReader`)."""

    # -- tables -----------------------------------------------------------------------------

    def table(self, name: str) -> _Table | None:
        home = L.TABLE_SHEET[name]
        for ws in self.wb.worksheets:
            if ws.title in L.OUTPUT_SHEETS:
                continue
            for tname in ws.tables:
                if tname.casefold() == name.casefold():
                    return self._table_parts(name, ws, ws.tables[tname])
        self.bad(
            f"{home} (table {name})",
            f"the table {name} is missing: it was deleted or renamed, or the program that last "
            "saved the file did not keep it. Copy your rows into the table of a fresh workbook "
            "from `wzq new` (a table renamed in Excel can also get its name back under Table "
            "Design > Table Name)",
        )
        return None

    def _table_parts(self, name: str, ws: Worksheet, t: Any) -> _Table | None:
        bounds = block(t.ref)
        if bounds is None:
            self.bad(
                f"{ws.title} (table {name})",
                f"the table {name} covers '{t.ref}', not a block of cells; recreate it from "
                "a fresh workbook made by `wzq new`",
            )
            return None
        min_col, min_row, max_col, max_row = bounds
        # no count: one header row (ECMA-376 Part 1, 18.5.1.2, headerRowCount's default)
        header_rows = 1 if t.headerRowCount is None else int(t.headerRowCount)
        totals = int(t.totalsRowCount or 0)
        if header_rows < 1:
            self.bad(
                cell_ref(ws.title, min_row, min_col),
                f"the table {name} has its header row switched off; switch it on again "
                "(in Excel: Table Design > Header Row), or copy your rows into a fresh "
                "workbook from `wzq new`",
            )
            return None
        header_row = min_row
        columns: dict[str, int] = {}
        for k, tc in enumerate(t.tableColumns):
            columns.setdefault(_norm(tc.name), min_col + k)
        if not t.tableColumns:  # a table written without column records: read the header row
            for col in range(min_col, max_col + 1):
                v = self.raw(ws, header_row, col)
                if isinstance(v, str):
                    columns.setdefault(_norm(v), col)
        missing = [h for h in L.TABLE_COLUMNS[name] if _norm(h) not in columns]
        if missing:
            have = ", ".join(f"'{h}'" for h in L.TABLE_COLUMNS[name])
            for h in missing:
                self.bad(
                    cell_ref(ws.title, header_row, min_col),
                    f"the table {name} has no column '{h}'; restore its header "
                    f"(the columns are {have})",
                )
            return None
        return _Table(
            name,
            ws,
            header_row,
            min_row + header_rows,
            max_row - totals,
            max_row,
            min_col,
            max_col,
            columns,
        )

    def rows(self, t: _Table, headers: tuple[str, ...] | None = None) -> list[_Row]:
        """The table's non-blank rows (blank rows are skipped), and the rows typed below it.

        ``headers``: the columns read (default: the table's own, :data:`layout.TABLE_COLUMNS`).

        A row typed anywhere below the table, in its columns, is read as part of it
        with a warning (the table did not grow when it was typed: a gap row, or a
        program that does not extend tables); a row of formulas that only sum up the
        table is the user's own and skipped. Hidden and filtered-out rows are read
        like any other, with a warning. Values right beside the table are named in
        a warning: they are not read.
        """
        out = []
        headers = L.TABLE_COLUMNS[t.name] if headers is None else headers
        cols = {t.col(h) for h in headers}
        # only rows that hold a cell in one of the read columns: a table stretched to the
        # sheet's last row costs no more than the cells in it
        filled = sorted(
            {r for (r, c) in t.ws._cells if t.first_row <= r <= t.last_row and c in cols}
        )
        below = self.rows_below(t, cols)
        hidden = []
        blind: list[tuple[str, str]] = []  # (cell, why) of values the sheet does not show
        at = [(h, t.col(h)) for h in headers]
        cells = t.ws._cells
        for r in (*filled, *below):
            values = {}
            for h, c in at:
                cell = cells.get((r, c))
                v = None if cell is None else cell.value
                # a number, date or truth value as typed is read as it is (what raw() gives);
                # anything else (text, formulas, errors, merged cells) through raw()
                plain = type(cell) is Cell and cell.data_type in ("n", "d") and type(v) is not str
                values[h] = v if plain and v is not None else self.raw(t.ws, r, c)
            for v in values.values():
                if not _blank(v):
                    break
            else:
                continue  # a blank row
            out.append(_Row(r, values))
            if hidden_row(t.ws, r):
                hidden.append(r)
            for h, c in at:
                why = None if _blank(values[h]) else unseen(cells.get((r, c)))
                if why:
                    blind.append((cell_ref(t.ws.title, r, c), why))
        read = {row.row for row in out}
        taken = [r for r in below if r in read]
        if taken:
            for r in taken:
                self._below[(t.ws.title, r)] = t.name
            cells = ", ".join(cell_ref(t.ws.title, r, t.min_col) for r in taken[:5])
            more = f" and {len(taken) - 5} more" if len(taken) > 5 else ""
            one = len(taken) == 1
            these, was, it, rows = (
                ("this row lies", "was", "it", "a row")
                if one
                else ("these rows lie", "were", "them", "rows")
            )
            self.note(
                cells + more,
                f"{these} below the table {t.name} (which ends at row {t.end_row}) and {was} "
                f"read as part of it; extend the table over {it} so that every program sees "
                f"{it} as {rows} of the table",
            )
        if hidden:
            cells = ", ".join(cell_ref(t.ws.title, r, t.min_col) for r in hidden[:5])
            more = f" and {len(hidden) - 5} more" if len(hidden) > 5 else ""
            self.note(
                cells + more,
                f"hidden or filtered-out {'row' if len(hidden) == 1 else 'rows'} of {t.name} "
                "read as part of the plan (hiding a row does not take it out); delete or "
                "clear a row to leave it out",
            )
        if blind:
            more = f" and {len(blind) - 5} more" if len(blind) > 5 else ""
            self.note(
                ", ".join(ref for ref, _ in blind[:5]) + more,
                f"{'a value' if len(blind) == 1 else f'{len(blind)} values'} of {t.name} "
                f"cannot be seen on the sheet ({_first_of_each(blind)}) but "
                f"{'is' if len(blind) == 1 else 'are'} read as part of the plan; give the "
                "cells a visible format and colour to check them, or clear them to leave "
                "them out",
            )
        self.hidden_columns(t, headers, out)
        self.beside(t)
        return out

    def hidden_columns(self, t: _Table, headers: tuple[str, ...], rows: list[_Row]) -> None:
        """Warn about values read from a hidden column of a table: hiding a column does not
        take it out of the plan, but nobody sees what is in it."""
        for h in headers:
            if not hidden_column(t.ws, t.col(h)):
                continue
            filled = [r.row for r in rows if not _blank(r.values[h])]
            if filled:
                n = len(filled)
                values, are, them = ("values", "are", "them") if n > 1 else ("value", "is", "it")
                self.note(
                    cell_ref(t.ws.title, filled[0], t.col(h)),
                    f"the column '{h}' of {t.name} is hidden, and its {n} {values} {are} "
                    "read as part of the plan (hiding a column does not take it out); unhide "
                    f"the column to see {them}, or clear {them} to leave {them} out",
                )

    def _not_ours(self, ws: Worksheet, row: int, col: int, table: str) -> bool:
        """A cell that belongs to no other input: not in another table, not a named input."""
        for name, ref in ws.tables.items():  # TableList.items(): (name, ref)
            if name.casefold() == table.casefold():
                continue
            try:
                c0, r0, c1, r1 = range_boundaries(str(ref))
            except (ValueError, TypeError):
                continue
            if (r0 or 1) <= row <= (r1 or row) and (c0 or 1) <= col <= (c1 or col):
                return False
        return (ws.title, row, col) not in self.named_cells()

    def named_cells(self) -> set[tuple[str, int, int]]:
        """(sheet, row, column) of every named input cell."""
        if self._named_cells is None:
            found = set()
            for f in F.ALL_FIELDS:
                dn = self.wb.defined_names.get(f.name)
                try:
                    dests = [] if dn is None else list(destinations(dn))
                except Exception:
                    dests = []
                for sheet, coord in dests:
                    try:
                        c0, r0, _, _ = range_boundaries(coord)  # reads $B$9 as B9
                    except (ValueError, TypeError):
                        continue
                    found.add((sheet, r0, c0))
            self._named_cells = found
        return self._named_cells

    def rows_below(self, t: _Table, cols: set[int]) -> list[int]:
        """Rows below the table that hold a value in one of its read columns."""
        rows: dict[int, list[int]] = {}
        for (r, c), cell in t.ws._cells.items():
            if r > t.end_row and c in cols and not _blank(cell.value):
                rows.setdefault(r, []).append(c)
        out = []
        for r in sorted(rows):
            kept = [c for c in rows[r] if self._not_ours(t.ws, r, c, t.name)]
            if kept and not self.sums_up(t, r, kept):
                out.append(r)
        return out

    def sums_up(self, t: _Table, row: int, cols: list[int]) -> bool:
        """A row below the table whose formulas only refer to the table (a total), the rest text."""
        formulas = 0
        for c in cols:
            cell = t.ws._cells[(row, c)]
            text = FV.formula_text(cell)
            if text is None:
                if not isinstance(cell.value, str):
                    return False
                continue
            blocks = self.precedents.references(text, t.ws.title)
            if not blocks or not all(
                b.sheet == t.ws.title
                and (b.min_row is None or b.min_row <= t.last_row)
                and (b.max_row is None or b.max_row >= t.first_row)
                and (b.min_col is None or b.min_col <= t.max_col)
                and (b.max_col is None or b.max_col >= t.min_col)
                for b in blocks
            ):
                return False
            formulas += 1
        return formulas > 0

    def beside(self, t: _Table) -> None:
        """Warn about values right beside the table (in its rows, the next column either side)."""
        sides = {t.min_col - 1, t.max_col + 1}
        found = [
            cell_ref(t.ws.title, r, c)
            for (r, c), cell in sorted(
                item
                for item in t.ws._cells.items()
                if item[0][1] in sides and t.header_row <= item[0][0] <= t.last_row
            )
            if not _blank(cell.value) and self._not_ours(t.ws, r, c, t.name)
        ]
        if found:
            more = f" and {len(found) - 3} more" if len(found) > 3 else ""
            one = len(found) == 1
            move = (
                "if it belongs to the plan, move it"
                if one
                else "if they belong to the plan, move them"
            )
            self.note(
                ", ".join(found[:3]) + more,
                f"{'a value' if one else 'values'} right beside the table {t.name} (columns "
                f"{get_column_letter(t.min_col)} to {get_column_letter(t.max_col)}) not read as "
                f"part of the plan; {move} into the table's own columns",
            )

    def where(self, t: _Table, row: int, header: str) -> str:
        """``Demand!C12``: the cell of a table row's column (as :func:`cell_ref` names it)."""
        return f"{_column_ref(t.ws.title, t.col(header))}{row}"


@lru_cache(maxsize=256)  # a reader names every row of a table's few columns
def _column_ref(sheet: str, col: int) -> str:
    """``Demand!C``: :func:`cell_ref` without the row number."""
    return cell_ref(sheet, 1, col)[:-1]


def _first_of_each(found: list[tuple[str, str]]) -> str:
    """``"A1: why; B4: other why"``: each reason once, at the first cell it applies to."""
    first: dict[str, str] = {}
    for ref, why in found:
        first.setdefault(why, ref)
    return "; ".join(f"{ref}: {why}" for why, ref in first.items())
