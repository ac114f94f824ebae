"""The result workbook opens in a real spreadsheet program and prints as intended.

LibreOffice (headless) converts a copy of the result workbook that holds only
the permit table to PDF; poppler's ``pdftotext`` and
``pdfinfo`` read the PDF back. Skipped when LibreOffice or poppler is missing
(``.ci/run`` installs the Debian packages ``libreoffice-calc-nogui`` and
``poppler-utils``).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from workbook_helpers import fill_template

import wzq
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import layout
from wzq.io.workbook import writer as w
from wzq.io.workbook.permit_sheet import permit_columns
from wzq.io.workbook.run import run_workbook

SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
PDFTOTEXT = shutil.which("pdftotext")
PDFINFO = shutil.which("pdfinfo")

pytestmark = [pytest.mark.libreoffice, pytest.mark.slow]
pytestmark.append(
    pytest.mark.skipif(
        not (SOFFICE and PDFTOTEXT and PDFINFO),
        reason="LibreOffice (soffice) or poppler-utils (pdftotext, pdfinfo) is not installed; "
        ".ci/run installs libreoffice-calc-nogui and poppler-utils",
    )
)

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


def _sheet_only_copy(result_book: Path, sheet: str, out: Path) -> Path:
    """A copy of the workbook holding only ``sheet``.

    (LibreOffice prints hidden sheets that have a print area, so the other
    sheets are removed from the copy rather than hidden.)
    """
    book = openpyxl.load_workbook(result_book)
    for ws in list(book.worksheets):
        if ws.title != sheet:
            book.remove(ws)
    book.active = 0
    book.worksheets[0].sheet_view.tabSelected = True
    book.save(out)
    return out


def permit_only_copy(result_book: Path, out: Path) -> Path:
    """A copy of the workbook holding only the permit table (:func:`_sheet_only_copy`)."""
    return _sheet_only_copy(result_book, layout.PERMIT_TABLE, out)


def to_pdf(workbook: Path, folder: Path) -> Path:
    """Convert with LibreOffice headless, with a private profile (safe in parallel runs)."""
    profile = (folder / "lo-profile").resolve().as_uri()
    subprocess.run(
        [
            SOFFICE,
            f"-env:UserInstallation={profile}",
            "--headless",
            "--convert-to",
            "pdf",
            "--outdir",
            str(folder),
            str(workbook),
        ],
        check=True,
        capture_output=True,
        timeout=180,
    )
    pdf = folder / (workbook.stem + ".pdf")
    assert pdf.exists(), f"LibreOffice wrote no PDF for {workbook.name}"
    return pdf


def pdf_pages(pdf: Path) -> int:
    info = subprocess.run([PDFINFO, str(pdf)], check=True, capture_output=True, text=True)
    return int(re.search(r"^Pages:\s+(\d+)", info.stdout, re.M).group(1))


def pdf_text(pdf: Path, page: int | None = None) -> str:
    args = [PDFTOTEXT, "-layout"]
    if page is not None:
        args += ["-f", str(page), "-l", str(page)]
    done = subprocess.run([*args, str(pdf), "-"], check=True, capture_output=True, text=True)
    return done.stdout


def _permit_rows(path: Path) -> list[tuple]:
    ws = openpyxl.load_workbook(path)[layout.PERMIT_TABLE]
    rows = list(ws.iter_rows(values_only=True))
    start = next(i for i, r in enumerate(rows) if r[0] == "Hour") + 1
    out = []
    for r in rows[start:]:
        if r[0] is None:
            break
        out.append(r)
    return out


def _shown(value: float, decimals: int) -> str:
    """A number as the permit table's number formats print it (#,##0 / #,##0.0 / #,##0.00)."""
    return f"{value:,.{decimals}f}"


def test_permit_table_prints_on_one_page_with_its_numbers(tmp_path):
    plan = load_plan(EXAMPLES / "fenwick_downs_weekend.json")
    src = fill_template(plan, tmp_path / "fenwick.xlsx")
    run_workbook(src)
    pdf = to_pdf(permit_only_copy(src, tmp_path / "permit.xlsx"), tmp_path)
    assert pdf_pages(pdf) == 1  # 12 listed hours: one landscape A4 page
    text = pdf_text(pdf)
    assert "Lane-closure permit table" in text
    assert "Page 1 of 1" in text
    assert " ".join(wzq.CAUTION.split()[:8]) in " ".join(text.split())
    rows = _permit_rows(src)
    assert len(rows) == 12
    columns = permit_columns(plan.site.unit_system)
    lines = text.splitlines()
    for row in rows:
        line = next(line for line in lines if line.strip().startswith(row[0]))
        # every number of the row, as formatted, in order on its printed line
        numbers = [
            _shown(v, c.decimals) for v, c in zip(row[2 : 2 + len(columns)], columns, strict=True)
        ]
        found = re.findall(r"-?[\d,]+(?:\.\d+)?", line.strip()[len(row[0]) :])
        if row[1] is None:  # no closure number in an open-road hour
            found.insert(0, "")
        assert found[1 : 1 + len(numbers)] == numbers, line
        assert line.split()[-1] == row[-1]  # the hour's pass / OVER
    # the hour the closure ends: 2,688 veh by hand (see test_writer), over both limits
    peak = next(r for r in rows if r[0] == "Sat 2027-06-12 16:00")
    assert re.search(rf"Sat 2027-06-12 16:00.*2,688\s+{peak[8]:.2f}.*OVER\s+OVER\s+OVER", text)


def test_long_permit_table_breaks_pages_and_repeats_its_header(tmp_path):
    """Seven closures on seven nights: 56 listed hours, 25 to a page -> 3 pages."""
    base = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    start = dt.datetime(2027, 5, 3)
    plan = dataclasses.replace(
        base,
        demand=wzq.Demand(start, 3600, np.tile(base.demand.flows_veh_h[:24], 8)),
        closures=tuple(
            wzq.Closure(
                start + dt.timedelta(days=d, hours=21), start + dt.timedelta(days=d + 1, hours=5), 1
            )
            for d in range(7)
        ),
    )
    src = fill_template(plan, tmp_path / "week.xlsx")
    run_workbook(src)
    assert len(_permit_rows(src)) == 56
    assert w.PERMIT_ROWS_PER_PAGE == 25
    pdf = to_pdf(permit_only_copy(src, tmp_path / "permit.xlsx"), tmp_path)
    assert pdf_pages(pdf) == 3
    for page in (1, 2, 3):
        text = pdf_text(pdf, page)
        # the header row is repeated on every page (its texts wrap: "Demand /" "capacity")
        assert "Demand /" in text and "Queue limit" in text, page
        assert f"Page {page} of 3" in text
        assert ("Lane-closure permit table" in text) == (page == 1)  # the title block once
    assert "Mon 2027-05-10 04:00" in pdf_text(pdf, 3)  # the last closure hour
    assert wzq.CAUTION.split(",")[0] in pdf_text(pdf, 3)


def _words(text: str) -> str:
    """Text as printed words: whitespace collapsed, a word broken after its hyphen joined."""
    return " ".join(text.split()).replace("- ", "-")


def test_every_warning_prints_in_full_on_the_permit_summary_and_run_log(tmp_path):
    # Fenwick Downs: a 23 km queue, so the long warning about the advance warning signs
    # (about 300 characters) is among the warnings; on paper every word of every warning
    # must be there (a long line in one cell used to run past the print area and be cut)
    plan = load_plan(EXAMPLES / "fenwick_downs_weekend.json")
    src = fill_template(plan, tmp_path / "fenwick.xlsx")
    result = run_workbook(src)
    assert max(len(w) for w in result.warnings) > 250
    for sheet, prefix in (
        (layout.PERMIT_TABLE, "Warning: "),
        (layout.SUMMARY, ""),
        (layout.RUN_LOG, ""),
    ):
        name = sheet.replace(" ", "_")
        pdf = to_pdf(_sheet_only_copy(src, sheet, tmp_path / f"{name}.xlsx"), tmp_path)
        printed = _words(pdf_text(pdf))
        for warning in result.warnings:
            assert _words(prefix + warning) in printed, (sheet, warning)
