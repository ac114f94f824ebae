"""What the Recalculate plan command in LibreOffice Calc runs in the user's Python.

The extension's macro runs in LibreOffice's own Python, which does not have
wzq, so it starts::

    PYTHON -m wzq.cli.calc_runner --office-profile URL --log FILE PLAN.xlsx

This runs the file backend of ``wzq run`` (:func:`wzq.io.workbook.run.run_to`)
with every guarantee it gives, and one narrow exception: the LibreOffice whose
user profile is ``URL`` holds the plan open, so its own lock file does not
block the save (:func:`wzq.io.workbook.save.own_office_lock`).

It prints one line, :data:`MARK` followed by JSON, that the macro reads:
``status`` is ``done`` (with ``target``, ``copied``, ``notes``, ``warnings``
and the ``summary`` lines), ``problems`` (each with ``where`` and ``message``),
or ``error`` (one line, the traceback in the log file). Exit status as the
``wzq`` command: 0 done, 2 the input needs fixing, 1 an unexpected failure.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import sys
import traceback
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from wzq import cli
from wzq.engine.plan import PlanError
from wzq.present.tables import summary_lines

__all__ = [
    "MARK",
    "PROTOCOL",
    "main",
    "outcome",
]

#: The line of the output that carries the outcome (the macro looks for it).
MARK = "wzq-calc-outcome:"
#: Raised when the outcome's format changes, so an old macro and a new wzq notice.
PROTOCOL = 1


def outcome(path: str | Path, office_profile: str | None, log: str | Path | None) -> dict:
    """Run the plan workbook at ``path`` and say what happened (never raises)."""
    from wzq.io.workbook.run import run_to  # openpyxl is slow to import; the argparse help is not

    try:
        done = run_to(path, office_profile=office_profile)
    except PlanError as e:
        problems = [{"where": p.where, "message": p.message} for p in e.problems]
        return {"status": "problems", "problems": problems}
    except Exception as e:
        return {"status": "error", "error": f"{type(e).__name__}: {e}", "log": _log(e, log)}
    return {
        "status": "done",
        "target": str(done.target),
        "copied": done.copied,
        "notes": list(done.notes),
        "warnings": list(done.result.warnings),
        "summary": [list(line) for line in summary_lines(done.result)],
    }


def _log(error: BaseException, log: str | Path | None) -> str:
    """Append the traceback to ``log``; returns where it went."""
    text = "".join(traceback.format_exception(error))
    if log is None:
        print(text, file=sys.stderr)
        return "the error output"
    try:
        with open(log, "a", encoding="utf-8") as fh:
            fh.write(f"{dt.datetime.now():%Y-%m-%d %H:%M:%S}  {text}\n")
    except OSError:
        print(text, file=sys.stderr)
        return "the error output"
    return str(log)


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m wzq.cli.calc_runner",
        description="Run by the Recalculate plan command in LibreOffice Calc; "
        "for the command line use: wzq run PLAN",
    )
    parser.add_argument("path", help="the plan workbook open in LibreOffice (.xlsx or .xlsm)")
    parser.add_argument(
        "--office-profile",
        metavar="URL",
        help="the user profile (UserInstallation URL) of the LibreOffice that has the plan open",
    )
    parser.add_argument("--log", metavar="FILE", help="where to append unexpected errors")
    args = parser.parse_args(argv)
    result: dict[str, Any] = outcome(args.path, args.office_profile, args.log)
    result["protocol"] = PROTOCOL
    print(MARK + json.dumps(result, ensure_ascii=True, default=str))
    return {"done": cli.EXIT_OK, "problems": cli.EXIT_INPUT}.get(result["status"], cli.EXIT_FAILURE)


if __name__ == "__main__":
    sys.exit(main())
