"""The layers hold: each package imports only the layers below it (cli > io > present >
engine > models > units), as the import contract in pyproject.toml says; and the
contract is a real one: an import that goes upward breaks it."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
#: `lint-imports` in this Python (its console script, run through the interpreter).
LINT = (
    "import sys; from importlinter.cli import lint_imports_command; "
    "sys.exit(lint_imports_command())"
)


def _lint(root: Path) -> subprocess.CompletedProcess:
    env = {**os.environ, "PYTHONPATH": str(root)}
    return subprocess.run(
        [sys.executable, "-c", LINT, "--no-cache"],
        cwd=root,
        env=env,
        capture_output=True,
        text=True,
    )


def test_the_import_contract_is_kept() -> None:
    done = _lint(ROOT)
    assert done.returncode == 0, done.stdout + done.stderr
    assert "1 kept, 0 broken" in done.stdout


def test_an_upward_import_breaks_the_contract(tmp_path: Path) -> None:
    shutil.copytree(ROOT / "wzq", tmp_path / "wzq", ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(ROOT / "pyproject.toml", tmp_path)
    model = tmp_path / "wzq" / "models" / "queueing.py"
    model.write_text(model.read_text() + "\nfrom wzq.engine.results import Result  # upward\n")
    done = _lint(tmp_path)
    assert done.returncode != 0
    assert "wzq.models is not allowed to import wzq.engine" in done.stdout
    assert "wzq.models.queueing -> wzq.engine.results" in done.stdout
