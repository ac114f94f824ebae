"""A fresh plan workbook from the template, with the entry module of its Recalculate
button beside an ``.xlsm`` (:mod:`wzq.io.workbook.link`); never over an existing file."""

from __future__ import annotations

import contextlib
import os
from pathlib import Path

from wzq.engine.problems import PlanError
from wzq.io.workbook import link
from wzq.io.workbook.template import build_template

__all__ = ["SUFFIXES", "new_workbook"]

SUFFIXES = (".xlsx", ".xlsm")


def new_workbook(path: Path) -> Path:
    """Write a fresh plan workbook at ``path`` (``.xlsm`` with macros); never overwrites.

    For an ``.xlsm`` the entry module the Recalculate button runs is written
    beside it (:func:`wzq.io.workbook.link.write_entry_module`); its name is
    checked first, so a refused name leaves nothing behind.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in SUFFIXES:
        raise PlanError(
            "give a file name ending in .xlsx (no macros) or .xlsm (with the Recalculate button)",
            where=str(path),
        )
    if path.exists():
        raise PlanError(
            "already exists; wzq new never overwrites a file: choose another name or move "
            "the old file away first",
            where=str(path),
        )
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise PlanError(f"the folder {folder} does not exist; create it first", where=str(path))
    macro = suffix == ".xlsm"
    if macro:
        link.check_macro_name(path)
        link.check_entry_free(path)
    tmp = folder / f".{path.stem}.wzq-new{suffix}"
    entry: Path | None = None
    try:
        build_template(tmp, macro=macro)
        if path.exists():  # appeared while building
            raise PlanError("already exists; wzq new never overwrites a file", where=str(path))
        if macro:
            py, changed = link.write_entry_module(path)
            entry = py if changed else None
        os.replace(tmp, path)
        entry = None
    except OSError as e:
        raise PlanError(
            f"cannot write the file ({e.strerror or e}); check the folder is writable",
            where=str(path),
        ) from None
    finally:
        with contextlib.suppress(OSError):
            tmp.unlink()
        if entry is not None:  # the workbook was not written: take its entry module back
            with contextlib.suppress(OSError):
                entry.unlink()
    return path
