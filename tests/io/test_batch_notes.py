"""A bulk run says what it left out, on the terminal and in the summary workbook.

Plans in a sub-folder were left out of a run without --recursive without a word
(the summary counted only the plans it read), and the run's notes (a results copy
skipped, two files the same byte for byte) were printed on the terminal only, not
on the summary workbook that is filed with the plans.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import openpyxl

from wzq.io.batch.runner import run_batch

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "kestrel_ridge_weeknight.json"


def _run_sheet_text(path: Path) -> str:
    ws = openpyxl.load_workbook(path)["Run"]
    return "\n".join(str(v) for row in ws.iter_rows(values_only=True) for v in row if v)


def test_plans_in_sub_folders_are_named_and_the_notes_are_filed(tmp_path) -> None:
    folder = tmp_path / "plans"
    (folder / "night works").mkdir(parents=True)
    shutil.copy(EXAMPLE, folder / "a.json")
    shutil.copy(EXAMPLE, folder / "b.json")  # the same bytes: a note
    shutil.copy(EXAMPLE, folder / "night works" / "c.json")
    (folder / "night works" / "readme.txt").write_text("not a plan")
    out = tmp_path / "summary.xlsx"
    result = run_batch(folder, summary=out, workers=1)
    assert len(result.rows) == 2
    left = [n for n in result.notes if "night works/c.json" in n]
    assert len(left) == 1 and "--recursive" in left[0], result.notes
    assert "readme.txt" not in left[0]
    text = _run_sheet_text(out)
    assert all(n in text for n in result.notes) and len(result.notes) == 2, (result.notes, text)
    # with --recursive it is read, and not noted
    again = run_batch(folder, summary=out, workers=1, recursive=True)
    assert len(again.rows) == 3
    assert not [n for n in again.notes if "--recursive" in n]
