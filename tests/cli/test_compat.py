"""Files written before the layered layout keep working: the entry module beside a macro
workbook (``from wzq.workbook.live import main``) and a LibreOffice extension that runs
``python -m wzq.office.runner``."""

from __future__ import annotations

import subprocess
import sys


def test_an_old_entry_module_still_imports_the_buttons_main(tmp_path) -> None:
    old = tmp_path / "plan.py"  # as `wzq link` wrote it before
    old.write_text(
        "# wzq entry module for plan.xlsm: its Recalculate button runs main(); "
        "written by `wzq link plan.xlsm`.\n"
        "from wzq.workbook.live import main  # noqa: F401\n"
    )
    code = (
        "import sys; sys.path.insert(0, sys.argv[1]); import plan; "
        "from wzq.io.live.backend import main; print(plan.main is main)"
    )
    done = subprocess.run(
        [sys.executable, "-c", code, str(tmp_path)], capture_output=True, text=True, check=True
    )
    assert done.stdout.strip() == "True"


def test_the_old_runner_module_still_answers() -> None:
    done = subprocess.run(
        [sys.executable, "-m", "wzq.office.runner", "--help"], capture_output=True, text=True
    )
    assert done.returncode == 0, done.stderr
    assert "--office-profile" in done.stdout
