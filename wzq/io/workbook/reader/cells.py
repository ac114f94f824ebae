"""Cells and values: what a cell holds (its saved formula result included), where a
defined name points, and the conversion of a value to the type, unit and range of its
input, every problem recorded with its sheet and cell."""

from __future__ import annotations

import contextlib
import datetime as dt
import math
from decimal import Decimal
from typing import Any

from openpyxl.cell.cell import ERROR_CODES, MergedCell
from openpyxl.styles.numbers import is_date_format
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.utils.datetime import from_excel, to_excel
from openpyxl.worksheet.formula import ArrayFormula, DataTableFormula
from openpyxl.worksheet.worksheet import Worksheet

from wzq.engine.plan import (
    Problem,
)
from wzq.io import fields as F
from wzq.io.workbook import formula_values as FV
from wzq.io.workbook import layout as L
from wzq.io.workbook.reader.values import (
    _CLOCK,
    _ISO_DATE,
    _ISO_DATETIME,
    _MISSING,
    DAY,
    DAYS_IN_1900,
    FIRST_YEAR,
    LAST_YEAR,
    MAX_SERIAL,
    OUT_OF_RANGE,
    _blank,
    _Clock,
    _fmt,
    _norm,
    _pad_iso,
    _percent_format,
    _show,
    cell_ref,
    destinations,
    hidden_column,
    hidden_row,
    other_weekday,
    text_at,
    typed_unit,
    unseen,
)
from wzq.io.workbook.saved_values import SharedStrings, typed

__all__ = [
    "CellReader",
]

#: The labels of the named inputs, as the template types them left of their value cells.
_LABELS = frozenset(_norm(f.label) for f in F.ALL_FIELDS if f.name and f.label)


class CellReader:
    """Part of the workbook reader (:class:`wzq.io.workbook.reader.BookReader`)."""

    # -- recording --------------------------------------------------------------------------

    def bad(self, where: str, message: str) -> Any:
        self.problems.append(Problem(where, message))
        return _MISSING

    def note(self, where: str, message: str) -> None:
        """A warning about an input that was read (said once)."""
        text = f"{where}: {message}"
        if text not in self.warnings:
            self.warnings.append(text)

    # -- cells ------------------------------------------------------------------------------

    def raw(self, ws: Worksheet, row: int, col: int) -> Any:
        """The value in a cell, a formula replaced by its saved result.

        Reads ``ws._cells`` directly: ``ws.cell()`` would add empty cells to the
        workbook, which the writer then saves.
        """
        cell = ws._cells.get((row, col))
        if cell is None:
            return None
        if isinstance(cell, MergedCell):
            return self.merged(ws, row, col)
        v = cell.value
        if v is None:
            return None
        if cell.data_type == "f" or isinstance(v, ArrayFormula | DataTableFormula):
            return self.formula_result(ws, row, col)  # a saved error named there (cached)
        if cell.data_type == "e" and v == "#VALUE!" and is_date_format(cell.number_format):
            typed = OUT_OF_RANGE.get(self.wb, {}).get(cell.coordinate, set())
            if len(typed) == 1:  # a number no date holds, made #VALUE! by openpyxl
                return self.too_large(cell_ref(ws.title, row, col), typed.pop())
        if cell.data_type == "e" or (isinstance(v, str) and v.strip() in ERROR_CODES):
            return self.error_value(cell_ref(ws.title, row, col), v)  # "e": also #SPILL!
        return v

    def too_large(self, where: str, number: str) -> Any:
        """A number in a date or time cell too large for a date (20270503, a date typed
        without its dashes): named as typed, with the date it spells if it spells one."""
        meant = ""
        with contextlib.suppress(ValueError):
            day = dt.datetime.strptime(number, "%Y%m%d").date()
            if FIRST_YEAR <= day.year <= LAST_YEAR:
                meant = f"; did you mean {day:%Y-%m-%d}? Type the date with its dashes"
        return self.bad(
            where,
            f"holds the number {number}, too large for a date or time (a spreadsheet shows "
            f"########){meant or '; type a date, e.g. 2027-05-03, or a time like 21:00'}",
        )

    def merged(self, ws: Worksheet, row: int, col: int) -> Any:
        """A cell hidden by merging: the value shown, when the merged cells are one column."""
        for mr in ws.merged_cells.ranges:
            if mr.min_row <= row <= mr.max_row and mr.min_col <= col <= mr.max_col:
                if mr.min_col == mr.max_col and (mr.min_row, mr.min_col) != (row, col):
                    shown = self.raw(ws, mr.min_row, mr.min_col)  # shown for every row
                    if isinstance(shown, int | float) and not isinstance(shown, bool):
                        self.note(
                            f"{cell_ref(ws.title, mr.min_row, mr.min_col)}:"
                            f"{get_column_letter(mr.max_col)}{mr.max_row}",
                            f"one number ({_fmt(shown)}) merged over {mr.size['rows']} rows "
                            "is read in each of them, as shown; if it is meant for the rows "
                            "together, unmerge the cells and type each row's value",
                        )
                    return shown
                return self.bad(
                    cell_ref(ws.title, row, col),
                    f"is part of the merged cells {mr.coord}, which span several columns; "
                    "unmerge them and type each value in its own cell",
                )
        return None

    @property
    def precedents(self) -> FV.Precedents:
        if self._precedents is None:
            self._precedents = FV.Precedents(self.wb)
        return self._precedents

    def formula_result(self, ws: Worksheet, row: int, col: int) -> Any:
        """The saved result of the formula in a cell, if it cannot be out of date.

        Refused when the formula takes its value from one of wzq's output sheets
        (replaced on every run); a warning when its value changes by itself or
        comes from another workbook. Empty text (``=IF(...,"",70)``) is a blank.
        """
        where = cell_ref(ws.title, row, col)
        self._formula_cells.add((ws.title, row, col))
        source = self.precedents.output_source(ws.title, row, col)
        if source is not None:
            return self.bad(
                where,
                f"its formula takes its value from {source}, on a sheet wzq rewrites on every "
                "run, so its saved result can be out of date; type the value, or refer to a "
                "cell of an input sheet",
            )
        for text in self.precedents.notes(ws.title, row, col):
            self.note(where, text)
        calc = getattr(self.wb, "calculation", None)
        if getattr(calc, "calcMode", None) == "manual":
            self.note(
                self.source,
                "the workbook is set to calculate manually, so the saved results of its "
                "formulas may be out of date; recalculate it and save it in your spreadsheet "
                "program before running wzq",
            )
        return self.cached(ws.title, row, col, where)

    def saved_result(self, sheet: str, row: int, col: int) -> FV.Saved | None:
        """The saved result of the formula in a cell as stored (sheets read sparsely, once)."""
        if self.path is None and self.data is None:
            return None
        if sheet not in self._saved:
            source = self.data if self.data is not None else self.path
            assert source is not None
            self._saved.update(FV.saved_results(source, [sheet]))
            self._saved.setdefault(sheet, {})
        return self._saved[sheet].get((row, col))

    def empty_text(self, sheet: str, row: int, col: int) -> bool:
        """The formula in this cell was saved with the empty text ``""`` as its result."""
        saved = self.saved_result(sheet, row, col)
        return saved is not None and saved.empty_text

    def error_value(self, where: str, v: Any) -> Any:
        error = str(v).strip()
        return self.bad(where, f"shows the error {error}; fix the formula or type the value")

    def cached(self, sheet: str, row: int, col: int, where: str) -> Any:
        """The saved result of the formula in a cell (:mod:`wzq.io.workbook.saved_values`)."""
        no_value = (
            "holds a formula with no saved result; open and save the workbook in your "
            "spreadsheet program, or type the value"
        )
        if self.path is None and self.data is None:
            return self.bad(where, no_value)
        try:
            if self._strings is None:
                self._strings = SharedStrings(self.data if self.data is not None else self.path)
            cell = self._sheets[sheet]._cells.get((row, col)) if sheet in self._sheets else None
            fmt = cell.number_format if cell is not None else "General"
            v = typed(self.saved_result(sheet, row, col), fmt, self.epoch, self._strings)
        except Exception:  # a damaged part, whatever the error type: no value
            return self.bad(where, no_value)
        if v == "" or v is None:
            if self.empty_text(sheet, row, col):  # a formula showing nothing: a blank cell
                return None
            return self.bad(where, no_value)
        if isinstance(v, str) and v.strip() in ERROR_CODES:
            return self.error_value(where, v)
        return v

    # -- defined names ----------------------------------------------------------------------

    def locate(self, field: F.Field) -> tuple[Worksheet, int, int] | None:
        """The cell a defined name points at, or ``None`` (problem recorded)."""
        name = field.name
        home = F.FIELD_SHEET[name]  # every input has its sheet (test_template.py)
        dn = self.wb.defined_names.get(name)
        if dn is None:
            for ws in self.wb.worksheets:
                if ws.title not in L.OUTPUT_SHEETS and name in ws.defined_names:
                    dn = ws.defined_names[name]
                    break
        try:
            dests = [] if dn is None else list(destinations(dn))
        except Exception:  # openpyxl cannot parse the reference
            dests = []
        broken = dn is None or not dests or "#REF!" in str(dn.value)
        if broken and home not in self._sheets:
            if home not in self._missing_sheets:
                self._missing_sheets.add(home)
                self.bad(
                    f"{home} (sheet)",
                    f"the input sheet '{home}' is missing (deleted, or its inputs moved "
                    "without their names); copy your inputs into a fresh workbook from `wzq new`",
                )
            return None
        if dn is None:
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} ({field.label}) is missing; restore it in the Name "
                "Manager pointing at its value cell, or copy your inputs into a fresh workbook "
                "from `wzq new`",
            )
            return None
        if broken:
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} ({field.label}) points nowhere (its cell was "
                "deleted); point it at the value cell again in the Name Manager",
            )
            return None
        sheet, coord = dests[0]
        ws = self._sheets.get(sheet)
        if ws is None:
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} points at a sheet '{sheet}' that does not exist; "
                "point it at the value cell again in the Name Manager",
            )
            return None
        if sheet in L.OUTPUT_SHEETS:
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} points into the output sheet '{sheet}', which wzq "
                "replaces on every run; point it at the input cell",
            )
            return None
        try:
            min_col, min_row, max_col, max_row = range_boundaries(coord)  # reads "$B$9"
        except (ValueError, TypeError):
            min_col = min_row = max_col = max_row = None
        if min_col is None or min_row is None:  # a whole row or column, or no cell at all
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} ({field.label}) points at '{coord}', not at one "
                "cell; point it at the value cell again in the Name Manager",
            )
            return None
        if (max_col, max_row) != (min_col, min_row):  # a block: its first cell is no answer
            block = f"{cell_ref(sheet, min_row, min_col)}:{coord.split(':')[-1].replace('$', '')}"
            cells = ((max_col or min_col) - min_col + 1) * ((max_row or min_row) - min_row + 1)
            self.bad(
                f"{home} (name {name})",
                f"the defined name {name} ({field.label}) points at {block}, {cells:,} cells, "
                "not at one; point it at the value cell again in the Name Manager",
            )
            return None
        self.where_of[name] = cell_ref(sheet, min_row, min_col)
        return ws, min_row, min_col

    def field(self, field: F.Field) -> Any:
        """The typed value of a named input cell (``_MISSING`` after a problem)."""
        if field.name in F.OPTIONAL_NAMES and self.wb.defined_names.get(field.name) is None:
            return self.convert(field.template, field, field.name)
        loc = self.locate(field)
        if loc is None:
            return _MISSING
        ws, row, col = loc
        where = cell_ref(ws.title, row, col)
        if self.moved_label(ws, row, col, field, where):
            return _MISSING
        v = self.raw(ws, row, col)
        if not _blank(v) and v is not _MISSING and _hidden(ws, row, col):
            self.note(
                where,
                f"'{field.label}' is in a hidden row or column and is read as typed; unhide it "
                "to see it, or clear it to leave it blank",
            )
        why = None if _blank(v) or v is _MISSING else unseen(ws._cells.get((row, col)))
        if why:
            self.note(
                where,
                f"'{field.label}' cannot be seen on the sheet ({why}) but is read as typed "
                f"({_show(v)}); give the cell a visible format and colour to check it, or "
                "clear it to leave it blank",
            )
        if not _blank(v) and v is not _MISSING:
            text = text_at(ws, row, col + 1)  # the unit cell, right of the value
            clash = self.other_unit(text, field.unit, f"beside {field.label} ({where})")
            if clash:
                return self.bad(cell_ref(ws.title, row, col + 1), clash)
        return self.convert(v, field, where, percent_cell=self.percent_cell(ws, row, col))

    def moved_label(self, ws: Worksheet, row: int, col: int, field: F.Field, where: str) -> bool:
        """The label left of a named value cell is another input's (a problem recorded):
        the rows of the sheet were sorted or dragged past each other, the values moving
        with their labels while each defined name stayed on its cell, so the name would
        read its neighbour's value (the queue limit read as the demand/capacity limit).
        A label of the user's own words is left alone."""
        text = text_at(ws, row, col - 1)
        if not isinstance(text, str) or _norm(text) == _norm(field.label):
            return False
        if _norm(text) not in _LABELS:
            return False
        self.bad(
            where,
            f"the name {field.name} ({field.label}) points at this cell, but its label "
            f"({cell_ref(ws.title, row, col - 1)}) is {_show(text)}: the rows were sorted or "
            "moved, and the names stayed on their cells; put the rows back as the template "
            "has them (undo the sort), or copy your inputs into a fresh workbook from `wzq new`",
        )
        return True

    def other_unit(self, text: Any, unit: str, what: str, them: str = "the value") -> str | None:
        """What to say when the text of a unit cell (typed over the template's, which
        follows the unit system) names another unit than the one ``unit`` is read in
        (``'km/h'`` beside a speed of a US customary plan: the sheet shows 80 km/h, and
        80 mi/h would be read), else ``None``. Lengths are compared for a unit that
        follows the unit system, times for a fixed one (``'s/veh'`` for min/veh); text
        naming no unit, or the unit read, is left alone."""
        if not isinstance(text, str) or self.system is None:
            return None
        follows = unit in F.UNIT_KINDS
        read_in = F.UNIT_KINDS[unit][self.system == "metric"] if follows else unit
        want = typed_unit(read_in, lengths=follows)
        got = typed_unit(text, lengths=follows)
        if want is None or got is None or got == want:
            return None
        it = "it is" if them == "the value" else "they are"
        other = "metric" if self.system == "us" else "us"
        but = "but"  # then "the value is read in ..."
        fix = f"type {'it' if them == 'the value' else 'them'} in {read_in}"
        if follows:
            start = self.where_of.get(F.UNIT_SYSTEM.name, L.START)
            but = f"but the plan is in {L.word_for(L.UNIT_WORDS, self.system)} units ({start}), so"
            there = F.UNIT_KINDS[unit][other == "metric"]
            if typed_unit(there) == got:
                fix = (
                    f"if {it} in {there}, choose '{L.word_for(L.UNIT_WORDS, other)}' on "
                    f"{start}, else {fix}"
                )
        return (
            f"the unit {what} says {_show(text)}, {but} {them} "
            f"{'is' if them == 'the value' else 'are'} read in {read_in}; {fix}; then put the "
            f"unit back ({read_in})"
        )

    # -- conversions ------------------------------------------------------------------------

    @staticmethod
    def percent_cell(ws: Worksheet, row: int, col: int) -> bool:
        """The cell shows its number as a percentage (its number format scales by 100)."""
        cell = ws._cells.get((row, col))
        return cell is not None and _percent_format(cell.number_format)  # a Cell or MergedCell

    def convert(
        self, v: Any, field: F.Field, where: str, *, percent_cell: bool = False, hint: bool = True
    ) -> Any:
        """A cell value as ``field`` asks for it (``_MISSING`` after a problem).

        A field in percent (``%``) reads a percent-formatted cell as the percentage it
        shows (0.08 shown as 8 % is 8); a fraction-looking value in a plain cell is read
        as typed, with a warning.
        """
        if v is _MISSING:
            return v
        if _blank(v):
            if field.required:
                return self.bad(where, f"{field.label} is blank; {self._fill_hint(field)}")
            return field.blank
        kind = field.kind
        if kind == "text":
            return self.text(v)
        if kind == "choice":
            return self.choice(v, field.choices, field.label, where)
        if kind == "date":
            return self.date(v, field.label, where)
        percent = field.unit.startswith("%")
        if percent and isinstance(v, str) and v.strip().endswith("%"):
            # '8 %' typed as text: 8. Not a comma: '1,5 %' (a decimal comma) is not 15 %,
            # and no percentage input reaches 1,000 % (fields.py), so '1,5 %' stays text
            with contextlib.suppress(ValueError):
                v, percent_cell = float(v.strip()[:-1]), False
        x = self.number(v, field.label, where)
        if x is _MISSING:
            return x
        if percent and percent_cell:
            # the percentage the cell shows: the decimal point moved, not x * 100 (0.07
            # shows as 7 %, and 0.07 * 100 is 7.000000000000001)
            x = float(Decimal(repr(x)).scaleb(2))
        elif percent and hint:
            self.fraction_hint(x, field, where)
        elif percent_cell:  # not a percentage, in a cell that shows it as one
            unit = field.unit_text(self.system)
            self.note(
                where,
                f"{field.label} shows {_fmt(x * 100)} % (the cell has a percent format) but is "
                f"read as {_fmt(x)} {unit}; give the cell a number format and type the value",
            )
        if kind == "int" and x != int(x):
            return self.bad(where, f"{field.label} must be a whole number, got {_fmt(x)}")
        if not self.in_range(x, field, where):
            return _MISSING
        return int(x) if kind == "int" else x

    def fraction_hint(self, x: float, field: F.Field, where: str) -> None:
        """Warn when a percentage typed in a plain cell looks like a fraction (0.08 for 8 %)."""
        if field.looks_like_fraction(x):
            self.note(
                where,
                f"{field.label} is {_fmt(x)} %: did you mean {_fmt(x * 100)} %? Percentages "
                f"are typed as numbers of percent (type {_fmt(x * 100)}, or {_fmt(x * 100)}% "
                f"to get a percent-formatted cell); ignore this if {_fmt(x)} % is right",
            )

    def _fill_hint(self, field: F.Field) -> str:
        if field.kind == "choice":
            return "pick one from the dropdown list"
        if field.kind == "date":
            return "type a date, e.g. 2027-05-03"
        if field.kind == "text":
            return "type it"
        unit = field.unit_text(self.system)
        return f"type a number ({unit})" if unit else "type a number"

    def text(self, v: Any) -> str:
        if isinstance(v, float) and v.is_integer():
            return str(int(v))
        if isinstance(v, dt.datetime):
            return v.isoformat(sep=" ", timespec="minutes")
        return str(v).strip()

    def number(self, v: Any, label: str, where: str) -> Any:
        if isinstance(v, bool):
            return self.bad(where, f"{label} holds {str(v).upper()}, not a number; type a number")
        if isinstance(v, int | float):
            x = float(v)
            if not math.isfinite(x):
                return self.bad(where, f"{label} is not a finite number; type a number")
            return x
        if isinstance(v, dt.datetime | dt.date | dt.time | dt.timedelta):
            return self.bad(
                where,
                f"{label} holds a date or time ({_show(v)}), not a number; set the cell's "
                "format to General or Number and type the number",
            )
        try:
            float(str(v).replace(",", ""))
            what = "is stored as text"
        except ValueError:
            what = "is text, not a number"
        return self.bad(
            where, f"{label}: {_show(v)} {what}; type only the number, without its unit"
        )

    def in_range(self, x: float, field: F.Field, where: str) -> bool:
        if field.unit in F.UNIT_KINDS and self.system is None:
            return True
        limits = field.limits(self.system)  # no unit, or the system is known
        if limits is None:
            return True
        lo, hi = limits
        unit = field.unit_text(self.system)
        unit_s = f" {unit}" if unit and unit not in ("year", "ratio") else ""
        too_low = x <= lo if field.open_lo else x < lo
        too_high = x >= hi if field.open_hi else x > hi
        if not (too_low or too_high):
            return True
        if x < 0 <= lo:
            what = f"cannot be negative (got {_fmt(x)})"
        else:
            lo_s = f"above {_fmt(lo)}" if field.open_lo else f"{_fmt(lo)}"
            hi_s = f"below {_fmt(hi)}" if field.open_hi else f"{_fmt(hi)}"
            what = f"must be {lo_s} to {hi_s}{unit_s} (got {_fmt(x)})"
        check = "check the value and its unit" if field.unit in F.UNIT_KINDS else "check the value"
        self.bad(where, f"{field.label} {what}; {check}")
        return False

    def choice(self, v: Any, choices: L.Choices, label: str, where: str) -> Any:
        if isinstance(v, bool):
            v = "yes" if v else "no"
        key = _norm(v) if isinstance(v, str) else _norm(self.text(v))
        for word, value in choices:
            if key == _norm(word) or (isinstance(value, str) and key == _norm(value)):
                return value
        words = ", ".join(f"'{w}'" for w, _ in choices)
        return self.bad(
            where, f"{label}: {_show(v)} is not in the list; pick one of {words} from the dropdown"
        )

    def date(self, v: Any, label: str, where: str) -> Any:
        """A date typed in a cell (a date cell, a serial number or ISO text), years 1900-2199."""
        return self.in_years(self._date(v, label, where), label, where)

    def in_years(self, d: Any, label: str, where: str) -> Any:
        """``d`` unchanged when its year is plausible for a closure plan, else a problem."""
        if isinstance(d, dt.date) and not FIRST_YEAR <= d.year <= LAST_YEAR:
            return self.bad(
                where,
                f"{label}: the year {d.year} is outside {FIRST_YEAR}-{LAST_YEAR}; check the date",
            )
        return d

    def _date(self, v: Any, label: str, where: str) -> Any:
        if isinstance(v, dt.datetime) and 2 <= to_excel(v, self.epoch) < DAYS_IN_1900:
            return self.day_count(to_excel(v, self.epoch), label, where, clock=False)
        if isinstance(v, dt.datetime):
            if v.time() != dt.time():
                return self.bad(
                    where, f"{label} holds a time of day ({_show(v)}); type only the date"
                )
            return v.date()
        if isinstance(v, dt.date):
            return v
        if isinstance(v, int | float) and not isinstance(v, bool) and v >= 2:
            if v < DAYS_IN_1900:  # a day count, not a date
                return self.day_count(v, label, where, clock=False)
            when = self.serial(v, label, where)
            return when if when is _MISSING else self._date(when, label, where)
        if isinstance(v, str):
            m = _ISO_DATE.match(v.strip())
            if m:
                try:
                    day = dt.date.fromisoformat(_pad_iso(m.group(1)))
                except ValueError:
                    pass
                else:
                    clash = other_weekday(v, day)
                    return self.bad(where, f"{label}: {_show(v)}: {clash}") if clash else day
        return self.bad(where, f"{label}: {_show(v)} is not a date; type a date, e.g. 2027-05-03")

    def serial(self, x: float, label: str, where: str) -> Any:
        """A spreadsheet date-time serial number as a ``datetime`` (``_MISSING`` past 9999)."""
        if x <= MAX_SERIAL:
            try:
                return from_excel(x, self.epoch)
            except (OverflowError, ValueError):
                pass
        return self.bad(
            where,
            f"{label}: {_fmt(x)} is past the last date a spreadsheet can hold (9999-12-31); "
            "type a date and time, e.g. 2027-05-03 21:00",
        )

    def clock(self, v: Any, label: str, where: str, *, allow_24: bool) -> Any:
        """A time of day (:class:`_Clock`) or a full date-time (``datetime``, years 1900-2199)."""
        return self.in_years(self._clock(v, label, where, allow_24=allow_24), label, where)

    def _clock(self, v: Any, label: str, where: str, *, allow_24: bool) -> Any:
        seconds: float | None = None
        if isinstance(v, dt.datetime):
            serial = to_excel(v, self.epoch)
            if serial >= 2:
                if serial < DAYS_IN_1900 or _hhmm(serial):  # a number typed in a time cell,
                    return self.day_count(serial, label, where, clock=True)  # shown as a date
                return v
            if serial >= 0:
                seconds = serial * DAY  # hours past midnight (e.g. 24:00 stored as 1.0)
        elif isinstance(v, dt.time):
            seconds = v.hour * 3600 + v.minute * 60 + v.second
        elif isinstance(v, dt.timedelta):  # a cell formatted as elapsed time, e.g. [hh]:mm
            if v.total_seconds() >= 0:  # the number of days it holds, read as a number
                return self._clock(v.total_seconds() / DAY, label, where, allow_24=allow_24)
        elif isinstance(v, int | float) and not isinstance(v, bool):
            if v >= 2:
                if v < DAYS_IN_1900 or _hhmm(v):  # 2100 typed for 21:00 is a day count too
                    return self.day_count(v, label, where, clock=True)
                return self.serial(v, label, where)  # an Excel date-time serial
            if v >= 0:
                seconds = v * DAY
        elif isinstance(v, str):
            text = v.strip()
            m = _CLOCK.match(text)
            md = _ISO_DATETIME.match(text)
            hms = [int(x) for x in m.groups("0")] if m else []  # no seconds: 0
            if hms and hms[1] < 60 and hms[2] < 60:
                seconds = hms[0] * 3600 + hms[1] * 60 + hms[2]
            elif md:
                try:
                    day = dt.date.fromisoformat(_pad_iso(md.group(1)))
                    clash = other_weekday(text, day)
                    if clash:
                        return self.bad(where, f"{label}: {_show(v)}: {clash}")
                    hh, mm = int(md.group(2)), int(md.group(3))
                    if mm < 60 and (hh < 24 or (hh == 24 and mm == 0)):
                        return dt.datetime.combine(day, dt.time()) + dt.timedelta(
                            hours=hh, minutes=mm
                        )
                except ValueError:
                    pass
        if seconds is None:
            return self.bad(
                where, f"{label}: {_show(v)} is not a time; type a time like 21:00 (24-hour clock)"
            )
        s = round(seconds)
        if s < DAY or (allow_24 and s == DAY):
            return _Clock(s)
        shown = f"{s // 3600}:{s % 3600 // 60:02d}"
        wrapped = f"{s % DAY // 3600:02d}:{s % 3600 // 60:02d}"
        hint = (
            f"a 'To' at or before 'From' already ends the next day, so type {wrapped} (in a "
            "formula, wrap the time in MOD(...,1)); 24:00 is midnight at the end of the day"
            if allow_24
            else f"use 00:00-23:59 (in a formula, wrap the time in MOD(...,1) to get {wrapped})"
        )
        return self.bad(where, f"{label} is {shown}, past 24:00; {hint}")

    def day_count(self, x: float, label: str, where: str, *, clock: bool) -> Any:
        """A small number where a date or time belongs: spreadsheets read it as a day count."""
        day = from_excel(x, self.epoch)
        what = "a time" if clock else "a date"
        meant = (f"{int(x):02d}:00" if x == int(x) and x <= 24 else _hhmm(x)) if clock else None
        guess = (
            f"; did you mean {meant}? Type it with the colon"
            if meant
            else f"; type {what}, e.g. {'21:00' if clock else '2027-05-03'}"
        )
        return self.bad(
            where,
            f"{label}: {_fmt(x)} is a number, not {what} (a spreadsheet reads it as "
            f"{_fmt(x)} days after its day zero, {day:%Y-%m-%d}){guess}",
        )


def _hidden(ws: Worksheet, row: int, col: int) -> bool:
    """The cell's row or column is hidden."""
    return hidden_row(ws, row) or hidden_column(ws, col)


def _hhmm(x: float) -> str | None:
    """``"21:00"`` for 2100: a whole number 100-2400 read as hours and minutes typed
    without the colon (minutes under 60), else ``None``."""
    if x != int(x) or not 100 <= x <= 2400 or int(x) % 100 >= 60:
        return None
    return f"{int(x) // 100:02d}:{int(x) % 100:02d}"
