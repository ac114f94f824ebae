"""The workbook template a designer copies: ``.xlsx`` (no macros) or ``.xlsm``.

Both are built by :func:`build_template` with XlsxWriter from the names in
:mod:`wzq.io.workbook.layout`, so they can be rebuilt and tested. Input sheets:
Start (instructions, unit system, caution, sign-off), Site, Demand, Closures and
Limits. Every value cell carries a workbook-scoped defined name; the demand,
hourly-share and closure lists are Excel tables. The output sheets are added by
the writer.

The ``.xlsm`` embeds the VBA project shipped with xlwings
(``quickstart_standalone.xlsm``) with its sample module replaced by a module of
our own, ``WzqButton``, whose macro ``RecalculatePlan`` runs the workbook's
entry module through xlwings' ``RunPython`` (:func:`vba_project_bytes`; the
xlwings module itself is kept as it is), and a "Recalculate" button on the
Start sheet that runs ``RecalculatePlan``.

Regenerate the committed templates with ``python -m wzq.io.workbook.template``.
"""

from __future__ import annotations

import datetime as dt
import functools
import importlib.util
import io
import shutil
import sys
import tempfile
import zipfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import xlsxwriter
from xlsxwriter.format import Format
from xlsxwriter.worksheet import Worksheet

import wzq
from wzq.io import fields as F
from wzq.io.workbook import layout as L

__all__ = [
    "BUILD_TIME",
    "BUTTON_SOURCE",
    "HISTORY_COL",
    "HISTORY_NOTES",
    "INSTRUCTIONS",
    "LABEL_WIDTH",
    "LIST_SOURCES",
    "MACRO_INSTRUCTION",
    "NOTE_WIDTH",
    "SAMPLE_MODULE",
    "UNIT_WIDTH",
    "VALUE_WIDTH",
    "VBA_PART",
    "XLWINGS_WORKBOOK",
    "build_template",
    "main",
    "template_folder",
    "vba_project_bytes",
    "xlwings_workbook",
]

#: Fixed document time, so that a rebuild gives the same parts.
BUILD_TIME = dt.datetime(2025, 1, 1, 0, 0, 0)
#: The workbook in the installed xlwings package whose VBA project is embedded.
XLWINGS_WORKBOOK = "quickstart_standalone.xlsm"
VBA_PART = "xl/vbaProject.bin"

# Column widths (characters) of the label / value / unit / note columns.
LABEL_WIDTH = 40
VALUE_WIDTH = 26
UNIT_WIDTH = 16
NOTE_WIDTH = 62

INSTRUCTIONS: tuple[str, ...] = (
    f"1. Fill in the {L.INPUT_COLOUR_WORD} cells on the sheets Site, Demand, Closures and "
    "Limits (and Approach, for ramps and landmarks upstream); grey text beside a value "
    "explains it.",
    "2. Choose the unit system below first. Every value is in that system; its unit is shown "
    "beside it.",
    "3. Demand: hourly (or 15-minute) counts in the table on the Demand sheet, an AADT "
    "with an hourly distribution, which wzq expands into hourly demand, or the site's count "
    f"history (the {L.COUNTS} sheet or a count file), from which wzq designs the demand and "
    "the risk of breaking the limits.",
    "4. Closures: one row each. A 'To' time at or before 'From' ends the next day; 24:00 is "
    "midnight at the end of the date.",
    "5. You may insert rows, restyle and add sheets of your own: wzq finds the inputs by "
    "their names and tables.",
    '6. Check the inputs with "wzq check FILE"; analyse with "wzq run FILE". The sheets '
    + ", ".join(L.OUTPUT_SHEETS)
    + " are written by wzq and replaced on every run.",
)
MACRO_INSTRUCTION = (
    "7. The Recalculate button analyses the open workbook, unsaved edits included (needs "
    "desktop Excel with macros enabled, Python with wzq, and NAME.py beside the workbook: "
    "`wzq link NAME.xlsm` writes it)."
)


#: The source of our module: the same call as the sample macro of xlwings' standalone
#: quickstart (the module named like the workbook, imported and its main() run through
#: RunPython), under a name that says what it does.
BUTTON_SOURCE = f"""\
' wzq: the {L.BUTTON_CAPTION} button of this lane-closure plan workbook.
' Runs main() of the Python module named like this workbook (plan.xlsm: plan.py
' beside it, written by `wzq link plan.xlsm`) through RunPython, the macro of
' the xlwings module of this project. Results support, and never replace, the
' judgement of a qualified engineer and the local agency's rules.
Sub {L.BUTTON_MACRO}()
    Dim entry As String
    entry = Left(ThisWorkbook.Name, InStrRev(ThisWorkbook.Name, ".", -1, vbTextCompare) - 1)
    RunPython "import " & entry & ";" & entry & ".main()"
End Sub
""".replace("\n", "\r\n")
#: The sample module of the xlwings quickstart that our module replaces.
SAMPLE_MODULE = "Module1"


def xlwings_workbook() -> Path:
    """``quickstart_standalone.xlsm`` of the installed xlwings package."""
    spec = importlib.util.find_spec("xlwings")
    if spec is None or not spec.submodule_search_locations:
        raise RuntimeError("xlwings is not installed; it is needed to build the .xlsm template")
    for folder in spec.submodule_search_locations:
        candidate = Path(folder) / XLWINGS_WORKBOOK
        if candidate.exists():
            return candidate
    raise RuntimeError(f"{XLWINGS_WORKBOOK} not found in the installed xlwings package")


@functools.cache
def vba_project_bytes() -> bytes:
    """``xl/vbaProject.bin``: xlwings' standalone VBA project with our button module.

    The project of the installed xlwings' quickstart workbook, with its sample
    module renamed to :data:`wzq.io.workbook.layout.BUTTON_MODULE` and its source
    replaced by :data:`BUTTON_SOURCE`, written by pyOpenVBA (a library that edits
    the VBA project of Office files in pure Python). The xlwings module stays as
    xlwings wrote it, so the VBA code matches the installed xlwings version.
    """
    from pyopenvba import ExcelFile

    with tempfile.TemporaryDirectory() as tmp:
        book = Path(tmp) / XLWINGS_WORKBOOK
        shutil.copyfile(xlwings_workbook(), book)
        with ExcelFile(str(book)) as excel:
            project = excel.vba_project()
            project.rename_module(SAMPLE_MODULE, L.BUTTON_MODULE)
            excel.set_module(L.BUTTON_MODULE, BUTTON_SOURCE)
            excel.save()
        with zipfile.ZipFile(book) as z:
            return z.read(VBA_PART)


#: The font and alignment every format of the template starts from.
_BASE = {"font_name": "Calibri", "font_size": 11, "valign": "top"}


def _formats(wb: xlsxwriter.Workbook) -> dict[str, Format]:
    c = L.COLOURS
    base = _BASE
    inp = {**base, "bg_color": c["input_fill"], "border": 1, "border_color": c["input_border"]}
    return {
        "title": wb.add_format({**base, "bold": True, "font_size": 16, "font_color": c["title"]}),
        "subtitle": wb.add_format({**base, "italic": True, "font_color": c["note_text"]}),
        "text": wb.add_format({**base, "text_wrap": False}),
        "note": wb.add_format({**base, "italic": True, "font_color": c["note_text"]}),
        "unit": wb.add_format({**base, "font_color": c["unit_text"]}),
        "label": wb.add_format(base),
        "section": wb.add_format(
            {**base, "bold": True, "bg_color": c["section_fill"], "font_color": c["section_text"]}
        ),
        "header": wb.add_format(
            {
                **base,
                "bold": True,
                "bg_color": c["header_fill"],
                "font_color": c["header_text"],
                "text_wrap": True,
            }
        ),
        "caution_label": wb.add_format(
            {**base, "bold": True, "bg_color": c["caution_fill"], "font_color": c["caution_text"]}
        ),
        "caution": wb.add_format(
            {
                **base,
                "bg_color": c["caution_fill"],
                "font_color": c["caution_text"],
                "text_wrap": True,
            }
        ),
        "in_text": wb.add_format({**inp, "num_format": "@"}),
        "in_number": wb.add_format({**inp, "num_format": "General"}),
        "in_int": wb.add_format({**inp, "num_format": "0"}),
        "in_choice": wb.add_format(inp),
        "in_date": wb.add_format({**inp, "num_format": L.DATE_FORMAT, "align": "left"}),
        "in_time": wb.add_format({**inp, "num_format": L.TIME_FORMAT, "align": "left"}),
        "in_end": wb.add_format({**inp, "num_format": L.END_TIME_FORMAT, "align": "left"}),
        "in_flow": wb.add_format({**inp, "num_format": "#,##0"}),
        "in_share": wb.add_format({**inp, "num_format": "0.0"}),
        "in_distance": wb.add_format({**inp, "num_format": "0.00"}),
        "hour": wb.add_format({**base, "num_format": L.TIME_FORMAT, "align": "left"}),
    }


#: Text inputs offered from a list elsewhere in the workbook (the dropdown still lets a
#: name be typed that the list does not hold: the reader checks it).
LIST_SOURCES: dict[str, str] = {"limit_landmark": f"={L.LANDMARK_NAMES}"}


def _unit_cell(ws: Worksheet, row: int, col: int, field: F.Field, fmt: Format) -> None:
    """The unit beside a value: follows the unit system through a formula."""
    if field.unit in F.UNIT_KINDS:
        us, metric = F.UNIT_KINDS[field.unit]
        formula = f'=IF({F.UNIT_SYSTEM.name}="metric","{metric}","{us}")'
        ws.write_formula(row, col, formula, fmt, us)
    elif field.unit:
        ws.write_string(row, col, field.unit, fmt)


def _value_cell(
    wb: xlsxwriter.Workbook, ws: Worksheet, row: int, col: int, field: F.Field, f: dict
) -> None:
    """The input cell of one field, its defined name and (for choices) its dropdown."""
    fmt = {
        "text": f["in_text"],
        "number": f["in_number"],
        "int": f["in_int"],
        "choice": f["in_choice"],
        "date": f["in_date"],
    }[field.kind]
    value: Any = field.template
    if value is None:
        ws.write_blank(row, col, None, fmt)
    elif isinstance(value, str):
        ws.write_string(row, col, value, fmt)
    else:
        ws.write_number(row, col, value, fmt)
    ref = xlsxwriter.utility.xl_rowcol_to_cell(row, col, row_abs=True, col_abs=True)
    wb.define_name(field.name, f"={ws.name}!{ref}")
    if field.name in LIST_SOURCES:  # text offered from a list on another sheet
        rule = {
            "source": LIST_SOURCES[field.name],
            "error_type": "warning",
            "error_message": "Type the name of a landmark on the Approach sheet.",
        }
    elif field.kind == "choice":
        rule = {
            "source": [w for w, _ in field.choices],
            "error_message": "Pick one of the words in the list.",
        }
    else:
        return
    ws.data_validation(
        row, col, row, col, {"validate": "list", "error_title": "Not in the list", **rule}
    )


def _sections(
    wb: xlsxwriter.Workbook,
    ws: Worksheet,
    sections: Sequence[F.Section],
    row: int,
    f: dict,
    col: int = 0,
) -> int:
    """Write titled groups of label | value | unit | note from ``row``; return the next row."""
    for section in sections:
        ws.write_string(row, col, section.title, f["section"])
        for k in range(1, 4):
            ws.write_blank(row, col + k, None, f["section"])
        row += 1
        for field in section.fields:
            _field_row(wb, ws, row, col, field, f)
            row += 1
        row += 1
    return row


def _field_row(
    wb: xlsxwriter.Workbook, ws: Worksheet, row: int, col: int, field: F.Field, f: dict
) -> None:
    """label | value | unit | note of one field, from column ``col``."""
    ws.write_string(row, col, field.label, f["label"])
    _value_cell(wb, ws, row, col + 1, field, f)
    _unit_cell(ws, row, col + 2, field, f["unit"])
    if field.note:
        ws.write_string(row, col + 3, field.note, f["note"])


def _field_sheet_header(ws: Worksheet, title: str, hint: str, f: dict) -> int:
    ws.write_string(0, 0, title, f["title"])
    ws.write_string(1, 0, hint, f["subtitle"])
    for k, text in enumerate(("Item", "Value", "Unit", "Note")):
        ws.write_string(3, k, text, f["header"])
    ws.set_column(0, 0, LABEL_WIDTH)
    ws.set_column(1, 1, VALUE_WIDTH)
    ws.set_column(2, 2, UNIT_WIDTH)
    ws.set_column(3, 3, NOTE_WIDTH)
    ws.freeze_panes(4, 0)
    return 4


def _start_sheet(wb: xlsxwriter.Workbook, ws: Worksheet, f: dict, macro: bool) -> None:
    ws.set_column(0, 0, LABEL_WIDTH)
    ws.set_column(1, 1, VALUE_WIDTH)
    ws.set_column(2, 2, UNIT_WIDTH)
    ws.set_column(3, 3, NOTE_WIDTH)
    # rows tall enough for their fonts: LibreOffice keeps the default height of a row
    # and drew the 16-point title over the subtitle
    ws.set_row(0, 24)
    ws.set_row(1, 16)
    ws.write_string(0, 0, "Lane-closure plan", f["title"])
    ws.write_string(
        1, 0, "Work-zone queue and delay, hour by hour, computed by wzq.", f["subtitle"]
    )
    row = 3
    lines = (*INSTRUCTIONS, MACRO_INSTRUCTION) if macro else INSTRUCTIONS
    for line in lines:
        ws.write_string(row, 0, line, f["text"])
        row += 1
    row += 1
    ws.write_string(row, 0, "Caution", f["caution_label"])
    ws.merge_range(row, 1, row, 3, wzq.CAUTION, f["caution"])
    ws.set_row(row, 30)
    row += 2
    _sections(wb, ws, F.START_SECTIONS, row, f)
    if macro:
        ws.insert_button(
            row,
            4,
            {
                "macro": L.BUTTON_MACRO,
                "caption": L.BUTTON_CAPTION,
                "width": 128,
                "height": 32,
                "x_offset": 12,
            },
        )


def _blank_rows(ws: Worksheet, first: int, n: int, fmts: Sequence[Format], left: int = 0) -> None:
    """Styled empty rows of a table (a table's column format covers only written cells)."""
    for r in range(first, first + n):
        for c, fm in enumerate(fmts):
            ws.write_blank(r, left + c, None, fm)


def _input_table(
    ws: Worksheet,
    top: int,
    left: int,
    n: int,
    name: str,
    headers: Sequence[str],
    fmts: Sequence[Format],
    header: Format,
) -> None:
    """An empty input table: its header row at ``top`` from column ``left``, ``n``
    styled blank rows below it."""
    ws.add_table(
        top,
        left,
        top + n,
        left + len(headers) - 1,
        {
            "name": name,
            "style": None,
            "autofilter": False,
            "columns": [
                {"header": h, "header_format": header, "format": fm}
                for h, fm in zip(headers, fmts, strict=True)
            ],
        },
    )
    _blank_rows(ws, top + 1, n, fmts, left)


def _demand_sheet(wb: xlsxwriter.Workbook, ws: Worksheet, f: dict) -> None:
    ws.write_string(0, 0, "Demand", f["title"])
    ws.write_string(
        1, 0, "Traffic arriving at the work zone in this direction, veh/h.", f["subtitle"]
    )
    ws.set_column(0, 0, 18)
    ws.set_column(1, 1, 22)
    ws.set_column(2, 2, 16)
    ws.set_column(3, 3, 4)
    ws.set_column(4, 4, LABEL_WIDTH - 10)
    ws.set_column(5, 5, 18)
    ws.set_column(6, 6, 18)
    ws.set_column(7, 7, 46)
    # the mode switch
    ws.write_string(3, 0, F.DEMAND_MODE.label, f["label"])
    _value_cell(wb, ws, 3, 1, F.DEMAND_MODE, f)
    ws.write_string(3, 2, F.DEMAND_MODE.note, f["note"])
    # hourly counts
    ws.write_string(5, 0, "Hourly counts", f["section"])
    for k in (1, 2):
        ws.write_blank(5, k, None, f["section"])
    ws.write_string(6, 0, "One row per hour (or per 15 minutes), starting on the hour.", f["note"])
    top = 7
    n = L.DEMAND_TEMPLATE_ROWS
    fmts = (f["in_date"], f["in_time"], f["in_flow"])
    _input_table(ws, top, 0, n, L.DEMAND_TABLE, L.DEMAND_COLUMNS, fmts, f["header"])
    ws.freeze_panes(top + 1, 0)
    # from AADT
    ws.write_string(5, 4, "From AADT", f["section"])
    for k in (5, 6, 7):
        ws.write_blank(5, 4 + k - 4, None, f["section"])
    ws.write_string(
        6,
        4,
        "Demand = AADT x growth to the year of the first day x direction share x hour share.",
        f["note"],
    )
    row = 7
    for field in F.AADT_FIELDS:
        _field_row(wb, ws, row, 4, field, f)
        row += 1
    row += 1
    ws.write_string(
        row, 4, "Share of AADT (both directions) in each hour; each column sums to 100.", f["note"]
    )
    row += 1
    data = [
        [dt.time(h), wd, we]
        for h, wd, we in zip(range(24), L.WEEKDAY_SHARES, L.WEEKEND_SHARES, strict=True)
    ]
    ws.add_table(
        row,
        4,
        row + 24,
        6,
        {
            "name": L.SHARE_TABLE,
            "style": None,
            "autofilter": False,
            "data": data,
            "columns": [
                {"header": h, "header_format": f["header"], "format": fm}
                for h, fm in zip(
                    L.SHARE_COLUMNS, (f["hour"], f["in_share"], f["in_share"]), strict=True
                )
            ],
        },
    )
    # the sums, one row below the table (a value right below a table would read as a row
    # the user forgot to include)
    total = row + 26
    ws.write_string(total, 4, "Sum (must be 100)", f["label"])
    for col, shares in ((5, L.WEEKDAY_SHARES), (6, L.WEEKEND_SHARES)):
        letter = xlsxwriter.utility.xl_col_to_name(col)
        ws.write_formula(
            total, col, f"=SUM({letter}{row + 2}:{letter}{row + 25})", f["label"], sum(shares)
        )
    _history_block(wb, ws, f)


#: What the count-history block on the Demand sheet says above its inputs.
HISTORY_NOTES: tuple[str, ...] = (
    "For each day of the plan: the counted days of the same type within the window, grown to "
    "the plan's dates; per hour their mean or a percentile.",
    "wzq also runs the plan on every matching counted week (each a whole demand) and reports "
    "the chance of breaking each limit (Limits sheet: the risk options).",
    f"The {L.COUNTS} sheet takes the counts of one direction: a date, then 24 hourly counts "
    "(one row a day, as laid out), or a date-time and a count per row.",
)


#: First column (0-based) of the count-history block on the Demand sheet: right of the
#: AADT block (anything below one of the sheet's tables would be read as part of it).
HISTORY_COL = 9


def _history_block(wb: xlsxwriter.Workbook, ws: Worksheet, f: dict) -> None:
    """The count-history inputs, right of the AADT block."""
    col = HISTORY_COL
    ws.set_column(col - 1, col - 1, 4)
    ws.set_column(col, col, LABEL_WIDTH - 10)
    ws.set_column(col + 1, col + 1, VALUE_WIDTH)
    ws.set_column(col + 2, col + 2, UNIT_WIDTH - 4)
    ws.set_column(col + 3, col + 3, NOTE_WIDTH)
    row = 5
    ws.write_string(row, col, "From a count history", f["section"])
    for k in (1, 2, 3):
        ws.write_blank(row, col + k, None, f["section"])
    row += 1
    for line in HISTORY_NOTES:
        ws.write_string(row, col, line, f["note"])
        row += 1
    _sections(wb, ws, F.HISTORY_SECTIONS, row + 1, f, col=col)


#: The printed Count history sheet's page header (its cells hold the table alone).
_COUNTS_PRINTED = (
    "the counts of one direction, a date then 24 hourly counts a row; read only when the "
    "Demand sheet's 'Demand is given as' takes the demand from a count history"
)


def _counts_sheet(ws: Worksheet, f: dict) -> None:
    """A sheet to paste a count history into: a header row, then one day a row (wide form).

    Nothing but the table goes on it (:func:`wzq.io.counts.read_table` reads every row);
    the instructions are on the Demand sheet.
    """
    heads = ["Date", *(f"{h:02d}:00" for h in range(24))]
    for col, text in enumerate(heads):
        ws.write_string(0, col, text, f["header"])
    ws.set_column(0, 0, 16, f["in_date"])
    ws.set_column(1, 24, 7, f["in_flow"])
    ws.freeze_panes(1, 1)
    # printed, the sheet says what it is in the page header (its cells hold the table
    # alone), and its header row is repeated on every page of a long history
    ws.set_header(f"&L&B{L.COUNTS}&B: {_COUNTS_PRINTED}")
    ws.repeat_rows(0)


def _override_label() -> str:
    return next(f.label for s in F.SITE_SECTIONS for f in s.fields if f.name == "site_override_is")


def _closure_sheet(ws: Worksheet, f: dict) -> None:
    ws.write_string(0, 0, "Closures", f["title"])
    ws.write_string(1, 0, "One row per lane closure, in this direction.", f["subtitle"])
    ws.write_string(
        2,
        0,
        "'To' at or before 'From' ends the next day; 24:00 is midnight at the end of the date. "
        "For a closure longer than a day, type the end as a date and time in 'To'.",
        f["note"],
    )
    ws.write_string(
        3,
        0,
        "A 'Capacity override' (veh/h per open lane) replaces the capacity model for that "
        f"closure; '{_override_label()}' on the Site sheet says whether it is the pre-breakdown "
        "capacity, the queue discharge rate, or both (then no capacity drop).",
        f["note"],
    )
    top = 4
    n = L.CLOSURE_TEMPLATE_ROWS
    fmts = (
        f["in_date"],
        f["in_time"],
        f["in_end"],
        f["in_int"],
        f["in_choice"],
        f["in_choice"],
        f["in_flow"],
        f["in_text"],
    )
    _input_table(ws, top, 0, n, L.CLOSURE_TABLE, L.CLOSURE_COLUMNS, fmts, f["header"])
    for col, words in ((4, L.BARRIER_WORDS), (5, L.NIGHT_WORDS)):
        ws.data_validation(
            top + 1,
            col,
            top + n,
            col,
            {
                "validate": "list",
                "source": [w for w, _ in words],
                "error_title": "Not in the list",
                "error_message": "Pick one of the words in the list.",
            },
        )
    for col, width in enumerate((18, 9, 17, 13, 18, 12, 16, 48)):
        ws.set_column(col, col, width)
    ws.set_row(top, 30)
    ws.freeze_panes(top + 1, 0)


def _approach_sheet(wb: xlsxwriter.Workbook, ws: Worksheet, f: dict) -> None:
    """Landmarks upstream of the closure (``LandmarkTable``, columns A-E) and the hourly
    flows of ramps (``RampFlowTable``, from column G): side by side, so that nothing of
    one lies below the other (a row typed below a table is read as part of it)."""
    ws.write_string(0, 0, "Approach", f["title"])
    ws.write_string(
        1,
        0,
        "The road upstream of the closure in this direction: landmarks the queue may reach, "
        "and ramps that feed or drain it. Leave it empty if there are none.",
        f["subtitle"],
    )
    notes = (
        "Distance: upstream from the start of the taper. The demand on the Demand sheet is "
        "the mainline flow upstream of every ramp; flows are on the closure's clock.",
        "Ramp flow: the ramp's share of the mainline flow arriving at it, in % (for an exit "
        "ramp, the share that leaves there); or blank, with its hourly flows in the table on "
        "the right.",
        "A queue past the end of the advance warning signing is warned about; name a landmark "
        "under 'Queue must not pass' on the Limits sheet to make it a limit.",
    )
    wrap = wb.add_format({**_BASE, "italic": True, "font_color": L.COLOURS["note_text"],
                          "text_wrap": True})  # fmt: skip
    for k, text in enumerate(notes):
        ws.merge_range(2 + k, 0, 2 + k, len(L.LANDMARK_COLUMNS) - 1, text, wrap)
        ws.set_row(2 + k, 30)
    ws.set_row(0, 24)
    top = 6
    ws.write_string(top - 1, 0, "Units", f["unit"])
    dist = F.Field("", "", "number", "long")
    _unit_cell(ws, top - 1, 1, dist, f["unit"])
    ws.write_string(top - 1, 3, "%", f["unit"])
    n = L.LANDMARK_TEMPLATE_ROWS
    fmts = (f["in_text"], f["in_distance"], f["in_choice"], f["in_share"], f["in_text"])
    _input_table(ws, top, 0, n, L.LANDMARK_TABLE, L.LANDMARK_COLUMNS, fmts, f["header"])
    ws.data_validation(
        top + 1,
        2,
        top + n,
        2,
        {
            "validate": "list",
            "source": [w for w, _ in L.LANDMARK_KIND_WORDS],
            "error_title": "Not in the list",
            "error_message": "Pick one of the words in the list.",
        },
    )
    first = xlsxwriter.utility.xl_rowcol_to_cell(top + 1, 0, row_abs=True, col_abs=True)
    last = xlsxwriter.utility.xl_rowcol_to_cell(top + n, 0, row_abs=True, col_abs=True)
    wb.define_name(L.LANDMARK_NAMES, f"={ws.name}!{first}:{last}")
    # hourly ramp flows, to the right
    left = len(L.LANDMARK_COLUMNS) + 1
    ws.write_string(top - 2, left, "Hourly ramp flows (veh/h)", f["section"])
    for k in range(1, 2 + len(L.RAMP_FLOW_PLACEHOLDERS)):
        ws.write_blank(top - 2, left + k, None, f["section"])
    ws.write_string(
        top - 1,
        left,
        "One row per hour of the demand; rename a column header to the ramp's name.",
        f["note"],
    )
    rows = L.RAMP_FLOW_TEMPLATE_ROWS
    heads = (*L.RAMP_FLOW_COLUMNS, *L.RAMP_FLOW_PLACEHOLDERS)
    flow_fmts = (f["in_date"], f["in_time"], *([f["in_flow"]] * len(L.RAMP_FLOW_PLACEHOLDERS)))
    _input_table(ws, top, left, rows, L.RAMP_FLOW_TABLE, heads, flow_fmts, f["header"])
    for col, width in enumerate((30, 16, 28, 14, 30, 3, 18, 10, 14, 14, 14, 14)):
        ws.set_column(col, col, width)
    ws.set_row(top, 45)
    ws.freeze_panes(top + 1, 0)


def build_template(path: Path, *, macro: bool) -> None:
    """Write a fresh, empty plan workbook to ``path`` (``.xlsm`` with macros if ``macro``).

    The file name must end in ``.xlsm`` when ``macro`` is true and ``.xlsx``
    otherwise (spreadsheet programs refuse a mismatch).
    """
    path = Path(path)
    want = ".xlsm" if macro else ".xlsx"
    if path.suffix.lower() != want:
        raise ValueError(f"the template file name must end in {want}, got {path.name}")
    wb = xlsxwriter.Workbook(str(path), {"strings_to_numbers": False, "strings_to_formulas": False})
    wb.set_properties(
        {
            "title": "Lane-closure plan",
            "subject": "Work-zone queue and delay",
            "author": "",
            "comments": f"Made by wzq. {wzq.CAUTION}",
            "created": BUILD_TIME,
        }
    )
    if macro:
        wb.add_vba_project(io.BytesIO(vba_project_bytes()), is_stream=True)
        wb.set_vba_name("ThisWorkbook")
    f = _formats(wb)
    sheets = {name: wb.add_worksheet(name) for name in L.INPUT_SHEETS}
    if macro:
        sheets[L.START].set_vba_name("Sheet1")
        sheets[L.SITE].set_vba_name("Sheet2")
    _start_sheet(wb, sheets[L.START], f, macro)
    row = _field_sheet_header(
        sheets[L.SITE],
        "Site",
        "One direction of travel at the work zone. Units follow the unit system on the Start "
        "sheet.",
        f,
    )
    _sections(wb, sheets[L.SITE], F.SITE_SECTIONS, row, f)
    _demand_sheet(wb, sheets[L.DEMAND], f)
    _closure_sheet(sheets[L.CLOSURES], f)
    _counts_sheet(sheets[L.COUNTS], f)
    row = _field_sheet_header(
        sheets[L.LIMITS],
        "Limits",
        "Agency limits for each hour, road-user cost values and how the analysis runs.",
        f,
    )
    _sections(wb, sheets[L.LIMITS], F.LIMITS_SECTIONS, row, f)
    _approach_sheet(wb, sheets[L.APPROACH], f)
    for ws in sheets.values():
        ws.set_landscape()
        ws.fit_to_pages(1, 0)
        ws.set_footer("&L&A&RPage &P of &N")  # the sheet's name; the page of the printout
    sheets[L.START].activate()
    wb.close()


def template_folder() -> Path:
    """``workbook_templates/`` of a source checkout."""
    return Path(__file__).resolve().parents[3] / "workbook_templates"


def main(argv: Sequence[str] | None = None) -> int:
    """Regenerate the committed templates: ``python -m wzq.io.workbook.template [FOLDER]``."""
    args = list(sys.argv[1:] if argv is None else argv)
    folder = Path(args[0]) if args else template_folder()
    folder.mkdir(parents=True, exist_ok=True)
    for macro, name in L.TEMPLATE_FILES.items():
        build_template(folder / name, macro=macro)
        print(f"wrote {folder / name}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
