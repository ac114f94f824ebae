"""Saving a workbook without ever leaving a half-written file behind.

The workbook is written to a temporary file in the target's own folder, flushed
to disk, and then moved over the target in one step (``os.replace``), so the
target is either the old file or the complete new one. A target that Excel has
open (its lock file ``~$name`` lies beside it), a read-only target and a folder
that cannot be written are refused up front with a :class:`PlanError` that says
what to do.
"""

from __future__ import annotations

import contextlib
import os
import stat
import tempfile
from pathlib import Path
from typing import Protocol

from wzq.plan import PlanError, Problem


class Saveable(Protocol):
    """Anything with ``save(file)``, e.g. an openpyxl ``Workbook``."""

    def save(self, filename) -> None: ...


def lock_file(target: Path) -> Path:
    """The lock file Excel (and LibreOffice in Excel mode) keeps beside an open workbook."""
    return target.with_name("~$" + target.name)


def check_writable(target: str | Path) -> None:
    """Refuse a target that is open in Excel, read-only, or in a folder we cannot write."""
    target = Path(target)
    where = str(target)
    if lock_file(target).exists():
        raise PlanError(
            [
                Problem(
                    where,
                    f"{target.name} is open in Excel; close it or use -o OTHER{target.suffix}",
                )
            ]
        )
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise PlanError([Problem(where, f"the folder {folder} does not exist; create it first")])
    if target.exists():
        if target.is_dir():
            raise PlanError([Problem(where, "is a folder; give a workbook file name")])
        if not os.access(target, os.W_OK) or not target.stat().st_mode & stat.S_IWUSR:
            raise PlanError(
                [
                    Problem(
                        where,
                        f"{target.name} is read-only; make it writable or use "
                        f"-o OTHER{target.suffix}",
                    )
                ]
            )
    if not os.access(folder, os.W_OK):
        raise PlanError(
            [Problem(where, f"cannot write in the folder {folder}; pick another output path")]
        )


def save_atomic(book: Saveable, target: str | Path) -> Path:
    """Save ``book`` to ``target`` through a temporary file and ``os.replace``.

    The temporary file sits in the target's folder (so the replace is a rename
    on one file system) and carries the target's suffix. An existing target
    keeps its permission bits. On any failure the temporary file is removed and
    the target is untouched.
    """
    target = Path(target)
    check_writable(target)
    mode = stat.S_IMODE(target.stat().st_mode) if target.exists() else None
    fd, tmp_name = tempfile.mkstemp(
        prefix=".wzq-", suffix=target.suffix, dir=target.parent if str(target.parent) else "."
    )
    tmp = Path(tmp_name)
    try:
        with os.fdopen(fd, "wb") as fh:
            book.save(fh)
            fh.flush()
            os.fsync(fh.fileno())
        if mode is not None:
            os.chmod(tmp, mode)
        else:
            os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    _fsync_folder(target.parent)
    return target


def _umask() -> int:
    old = os.umask(0)
    os.umask(old)
    return old


def _fsync_folder(folder: Path) -> None:
    """Make the rename itself durable where the platform allows it (POSIX)."""
    if os.name != "posix":
        return
    with contextlib.suppress(OSError):
        fd = os.open(folder if str(folder) else ".", os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)
