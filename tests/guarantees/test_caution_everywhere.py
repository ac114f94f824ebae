"""The caution travels with every result: each output sheet, every report page, the terminal.

Results that reach a permit without the reminder that they support, and do not
replace, an engineer's judgement and the agency's rules can be taken for more
than they are (queues cause rear-end crashes). The project's rule is that the
workbook, the printed report and the command line all carry it; these tests
look for the one sentence :data:`wzq.CAUTION` in every place a result is shown,
whichever optional parts are switched on.
"""

from __future__ import annotations

import dataclasses
import io
import shutil
from contextlib import redirect_stdout
from pathlib import Path

import openpyxl
import pytest
from pypdf import PdfReader

import wzq
from wzq.cli import main
from wzq.io.jsonplan import load_plan
from wzq.io.report import build_report
from wzq.io.workbook import layout
from wzq.io.workbook import outputs as w

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"


def _texts(ws) -> list[str]:
    return [c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)]


def _caution_in(text: str) -> bool:
    # a PDF or a wrapped terminal line may break the sentence anywhere: compare words
    return " ".join(wzq.CAUTION.split()) in " ".join(text.split())


@pytest.mark.parametrize("windows", [True, False])
def test_every_output_sheet_carries_the_caution(windows: bool) -> None:
    result = wzq.analyse(load_plan(KESTREL))
    book = openpyxl.Workbook()
    w.write_results(book, result, run_time="2027-01-01T00:00:00Z", windows=windows)
    for name in layout.OUTPUT_SHEETS:
        ws = book[name]
        if name == layout.WINDOWS and not windows:
            # left empty in this run: one note that says so and no result to caution about
            values = [c.value for row in ws.iter_rows() for c in row if c.value is not None]
            assert len(values) == 1 and "not computed" in values[0]
            continue
        assert any(wzq.CAUTION in t for t in _texts(ws)), f"no caution on the {name} sheet"


def test_every_page_of_the_report_carries_the_caution_with_every_section_on() -> None:
    plan = load_plan(KESTREL)
    plan = dataclasses.replace(
        plan, options=dataclasses.replace(plan.options, closure_windows=True, space_time=True)
    )
    reader = PdfReader(io.BytesIO(build_report(wzq.analyse(plan), "letter", vector=False)))
    assert len(reader.pages) >= 6
    for i, page in enumerate(reader.pages):
        assert _caution_in(page.extract_text()), f"no caution on page {i + 1}"


def _printed(args: list[str]) -> str:
    out = io.StringIO()
    with redirect_stdout(out):
        assert main(args) == 0
    return out.getvalue()


def test_every_command_that_prints_results_prints_the_caution(tmp_path, monkeypatch) -> None:
    monkeypatch.chdir(tmp_path)  # `wzq demo` writes its workbook into the current folder
    book = tmp_path / "plan.xlsx"
    shutil.copy(EXAMPLES / "kestrel_ridge_weeknight.xlsx", book)
    folder = tmp_path / "plans"
    folder.mkdir()
    shutil.copy(KESTREL, folder)
    commands = {
        "demo": ["demo"],
        "show": ["show", str(KESTREL)],
        "windows": ["windows", str(KESTREL)],
        "run": ["run", str(book)],
        "batch": ["batch", str(folder)],
    }
    for name, args in commands.items():
        text = _printed(args)
        assert _caution_in(text), f"`wzq {name}` printed results without the caution"
