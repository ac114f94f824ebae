"""Names and text from files never act on the user's terminal (issue 15, case 9).

A file name can hold terminal escape sequences (``ESC ] 0 ; title BEL`` retitles
the window, ``ESC [ 2 J`` clears the screen); a cell can hold a bidirectional
override that makes a message read backwards. Printed by wzq, each must show
as a visible escape instead.
"""

from __future__ import annotations

import io
import shutil
from pathlib import Path

import openpyxl
from workbook_helpers import fill_template, named_cell

from wzq import cli
from wzq.io.jsonplan import load_plan

ROOT = Path(__file__).resolve().parents[2]
KESTREL = ROOT / "examples" / "kestrel_ridge_weeknight.json"
RETITLE = "\x1b]0;all plans approved\x07"
CLEAR = "\x1b[2J\x1b[H"
CONTROLS = [chr(c) for c in (*range(0x20), *range(0x7F, 0xA0))]


def _raw_controls(text: str) -> list[str]:
    return sorted({c for c in text if c in CONTROLS and c not in "\n"})


def test_printable_escapes_every_control_character() -> None:
    from wzq.present.printable import SafeStream, printable

    assert printable(f"plan{RETITLE}.xlsx") == "plan\\x1b]0;all plans approved\\x07.xlsx"
    assert printable("a\nb\tc\rd") == "a\\x0ab\\x09c\\x0dd"  # one value stays on one line
    assert printable("a\nb\tc\rd", lines=True) == "a\nb\tc\\x0dd"
    assert printable("\x9b31m red") == "\\x9b31m red"  # the one-byte CSI of C1
    assert printable("approved \u202edesrever") == "approved \\u202edesrever"
    assert printable("Ærø, 50 km/h, naïve ✓") == "Ærø, 50 km/h, naïve ✓"  # text is text
    out = io.StringIO()
    print(f"wrote {CLEAR}plan.xlsx", file=SafeStream(out))
    assert out.getvalue() == "wrote \\x1b[2J\\x1b[Hplan.xlsx\n"


def test_case9_file_names_with_escape_sequences_are_printed_escaped_by_batch(
    tmp_path, capsys
) -> None:
    folder = tmp_path / "plans"
    folder.mkdir()
    shutil.copy(KESTREL, folder / f"kestrel{CLEAR}.json")  # analysed: named in the summary
    (folder / f"notes{RETITLE}.xlsx").write_text("not a workbook")  # listed as a problem
    code = cli.main(["batch", str(folder), "--workers", "1"])
    out, err = capsys.readouterr()
    assert code == cli.EXIT_INPUT
    assert _raw_controls(out + err) == []
    assert "wzq: notes\\x1b]0;all plans approved\\x07.xlsx: " in err


def test_case9_a_file_name_in_a_refusal_is_printed_escaped(tmp_path, capsys) -> None:
    path = tmp_path / f"plan{CLEAR}.xlsx"
    path.write_text("not a workbook")
    assert cli.main(["check", str(path)]) == cli.EXIT_INPUT
    err = capsys.readouterr().err
    assert _raw_controls(err) == []
    assert "plan\\x1b[2J\\x1b[H.xlsx" in err


def test_case9_cell_text_in_messages_and_tables_is_printed_escaped(tmp_path, capsys) -> None:
    path = fill_template(load_plan(KESTREL), tmp_path / "plan.xlsx")
    book = openpyxl.load_workbook(path)
    named_cell(book, "site_lanes").value = "3\u202e lanes"  # a bidirectional override
    book.save(path)
    assert cli.main(["check", str(path)]) == cli.EXIT_INPUT
    err = capsys.readouterr().err
    assert "'3\\u202e lanes' is text" in err and "\u202e" not in err
    named_cell(book, "site_lanes").value = 3
    named_cell(book, "site_name").value = "Kestrel Ridge \u202eyawkraP"
    book.save(path)
    assert cli.main(["show", str(path)]) == cli.EXIT_OK
    out = capsys.readouterr().out
    assert "Kestrel Ridge \\u202eyawkraP" in out and "\u202e" not in out
