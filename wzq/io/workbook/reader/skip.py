"""Load a workbook without parsing wzq's own output sheets.

wzq replaces its output sheets (:data:`wzq.io.workbook.layout.OUTPUT_SHEETS`) on
every run and never reads them back, yet they hold most of a results workbook's
cells (a year of hourly results is some 280,000 cells, ten times the inputs).
:func:`load_skipping_outputs` loads a workbook as :func:`openpyxl.load_workbook`
does, except that each sheet the marker (:data:`~wzq.io.workbook.layout.MARKER_NAME`)
says wzq wrote is left unparsed (exactly the parts
:func:`wzq.io.workbook.safety.output_sheet_parts` names, which the pre-parse checks
leave uninflated on these ways in): an empty sheet of the same name, state and
position stands in for it, so sheet indices (the scope of sheet-level defined
names), the active sheet and the order of sheets are as openpyxl would give
them, and the writer replaces the stand-ins as it replaced the parsed sheets.
A sheet of the user's that merely carries an output sheet's name is not in the
marker and is parsed (the reader then refuses it by name).

The package-level guarantees do not depend on the parse: the pre-parse checks
(:mod:`wzq.io.workbook.safety`) read every other part's bytes, the comparison of the
package before and after a save (:mod:`wzq.io.workbook.kept`) leaves wzq's own
sheets out, and the formula results put back after a save
(:mod:`wzq.io.workbook.formula_values`) are those of the user's sheets only.
"""

from __future__ import annotations

from typing import Any

from openpyxl.reader.excel import ExcelReader
from openpyxl.workbook.workbook import Workbook
from openpyxl.worksheet.worksheet import Worksheet

from wzq.io.workbook.safety import output_sheet_parts

__all__ = ["SkippingReader", "load_skipping_outputs"]


class SkippingReader(ExcelReader):
    """openpyxl's reader with wzq's output sheets left unparsed (empty stand-ins)."""

    def skipped(self, listed: list[Any]) -> set[str]:
        """The names of the sheets of ``listed`` ((sheet, relationship) pairs) left unparsed."""
        unread = output_sheet_parts(self.archive)  # the parts the pre-parse checks left out
        return {sheet.name for sheet, rel in listed if rel.target in unread}

    def read_worksheets(self) -> None:
        listed = list(self.parser.find_sheets())
        skip = self.skipped(listed)
        if not skip:
            return super().read_worksheets()
        kept = [(sheet, rel) for sheet, rel in listed if sheet.name not in skip]
        self.parser.find_sheets = lambda: iter(kept)  # what the base class reads
        try:
            super().read_worksheets()
        finally:
            del self.parser.find_sheets
        parsed = {ws.title: ws for ws in self.wb._sheets}
        order: list[Any] = []
        for sheet, rel in listed:
            if rel.target not in self.valid_files:
                continue  # as the base class: a sheet whose part is missing is dropped
            if sheet.name in skip:
                stand_in = Worksheet(self.wb, title=sheet.name)
                stand_in.sheet_state = sheet.state
                order.append(stand_in)
            elif sheet.name in parsed:
                order.append(parsed.pop(sheet.name))
        self.wb._sheets = order + list(parsed.values())
        return None


def load_skipping_outputs(
    filename: Any,
    *,
    read_only: bool = False,
    keep_vba: bool = False,
    data_only: bool = False,
    keep_links: bool = True,
    rich_text: bool = False,
) -> Workbook:
    """:func:`openpyxl.load_workbook` (same arguments) with wzq's output sheets unparsed."""
    reader = SkippingReader(filename, read_only, keep_vba, data_only, keep_links, rich_text)
    reader.read()
    return reader.wb
