"""``import wzq``, ``wzq --version`` and ``wzq --help`` start at once: they import none of
the heavy libraries (the registry of commands names each command's module without
importing it). Checked on ``sys.modules`` in a fresh Python, not by timing (the times are
measured side by side by ``benchmarks/startup.py``)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
HEAVY = ("numpy", "pandas", "openpyxl", "matplotlib", "reportlab", "scipy", "xlsxwriter", "rich")

PROBE = """
import sys
{code}
heavy = [m for m in {heavy!r} if m in sys.modules]
print(",".join(heavy))
"""


def _heavy_after(code: str) -> list[str]:
    done = subprocess.run(
        [sys.executable, "-c", PROBE.format(code=code, heavy=HEAVY)],
        capture_output=True,
        text=True,
        check=True,
    )
    last = done.stdout.strip().splitlines()[-1] if done.stdout.strip() else ""
    return [m for m in last.split(",") if m]


CALL = """
import contextlib, io
from wzq.cli import main
with contextlib.redirect_stdout(io.StringIO()):
    try:
        main({argv!r})
    except SystemExit:
        pass
"""


@pytest.mark.parametrize(
    "code",
    [
        "import wzq",
        "import wzq; wzq.CAUTION; wzq.__version__",
        CALL.format(argv=["--version"]),
        CALL.format(argv=["--help"]),
        CALL.format(argv=[]),
    ],
    ids=["import wzq", "constants", "--version", "--help", "no command"],
)
def test_starting_imports_no_heavy_library(code: str) -> None:
    assert _heavy_after(code) == []


def test_a_command_imports_what_it_needs_when_asked() -> None:
    # the probe is a real one: the same check sees numpy once the engine is used
    assert "numpy" in _heavy_after("import wzq; wzq.Plan")


def test_every_command_module_is_in_the_registry_and_has_its_two_functions() -> None:
    import importlib
    import pkgutil

    import wzq.cli as cli

    modules = {
        m.name
        for m in pkgutil.iter_modules(cli.__path__, "wzq.cli.")
        if m.name not in ("wzq.cli.calc_runner", "wzq.cli.__main__")
    }
    assert modules == {module for module, _ in cli.COMMANDS.values()}
    for module, _ in cli.COMMANDS.values():
        loaded = importlib.import_module(module)
        assert callable(loaded.configure) and callable(loaded.run), module


def test_check_imports_no_pandas_nor_any_picture_library() -> None:
    # ``wzq check`` reads and validates, it analyses nothing: openpyxl and numpy only
    from pathlib import Path

    example = Path(__file__).resolve().parents[2] / "examples" / "kestrel_ridge_weeknight.xlsx"
    heavy = _heavy_after(CALL.format(argv=["check", str(example)]))
    assert "openpyxl" in heavy  # the probe is a real one: the workbook was read
    assert set(heavy) <= {"numpy", "openpyxl"}, heavy


def test_a_run_imports_no_table_or_drawing_library(tmp_path) -> None:
    # a press of Recalculate on a plan with the closure-window sheet and no picture (the
    # example's Limits: "Closure windows sheet: yes"; Site: no space-time picture): the
    # results, charts, permit table and windows are written from numpy arrays, so pandas
    # (some 0.15 s to import) is not imported, nor any drawing library. The probe sees
    # pandas once a per-hour table is asked for.
    import shutil
    from pathlib import Path

    example = Path(__file__).resolve().parents[2] / "examples" / "kestrel_ridge_weeknight.xlsx"
    book = tmp_path / "plan.xlsx"
    shutil.copyfile(example, book)
    run = CALL.format(argv=["run", str(book)])
    heavy = _heavy_after(run)
    assert "openpyxl" in heavy  # the probe is a real one: the workbook was run
    assert set(heavy) <= {"numpy", "openpyxl"}, heavy
    assert book.read_bytes() != example.read_bytes()  # results written
    asked = run + "\nimport wzq\nfrom wzq.io.workbook.reader import read_plan\n"
    asked += f"wzq.analyse(read_plan({str(book)!r})).hourly"
    assert "pandas" in _heavy_after(asked)


def test_a_report_without_matplotlibs_pictures_imports_no_matplotlib(tmp_path) -> None:
    # the demand, queue-length and cumulative charts are reportlab drawings; matplotlib
    # (and svglib, which converts its SVG) only for the space-time picture or the fan
    # chart of a plan with a count history (this example has none; its space-time
    # picture is left out here)
    out = tmp_path / "r.pdf"
    argv = ["report", "examples/ashgrove_bypass_week.json", "--no-space-time", "-o", str(out)]
    code = CALL.format(argv=argv)
    code += "\nprint('svglib' in sys.modules)"
    done = subprocess.run(
        [sys.executable, "-c", PROBE.format(code=code, heavy=("matplotlib",))],
        capture_output=True,
        text=True,
        check=True,
        cwd=ROOT,
    )
    svglib, heavy = done.stdout.splitlines()[-2:]
    assert out.stat().st_size > 10_000
    assert heavy == "" and svglib == "False"
