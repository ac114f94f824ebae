"""Saving a workbook without ever leaving a half-written file behind.

The workbook is written to a temporary file in the target's own folder, flushed
to disk, and then moved over the target in one step (``os.replace``), so the
target is either the old file or the complete new one, whenever the process
stops (a crash, a kill, a power cut once the folder entry is on disk).

The temporary file is hidden and named so that nobody takes it for a workbook:
``.plan.xlsx.wzq-<process>-<random>.tmp``. One left behind by a process that
was killed is removed by the next save to the same target.

A target that a spreadsheet program has open (Excel's lock file ``~$name`` or
LibreOffice's ``.~lock.name#`` lies beside it), a read-only target and a folder
that cannot be written are refused up front with a :class:`PlanError` that says
what to do; so is a save that fails half-way (a full disk, say), after which
the target is as it was.

One exception, for the Recalculate plan command in LibreOffice Calc
(:mod:`wzq.office`): the LibreOffice instance that has the workbook open may
state its own user profile (``office_profile``), and then its own lock file, and
only that one, does not count: the lock must name this computer, this login
and that profile (:func:`own_office_lock`). Excel's lock file and a lock of any
other LibreOffice (another user, another computer, another profile) still refuse.
"""

from __future__ import annotations

import contextlib
import errno
import getpass
import os
import secrets
import socket
import stat
import time
from pathlib import Path
from typing import Protocol
from urllib.parse import unquote

from wzq.plan import PlanError, Problem

#: How the temporary files of a save are named: ``.<target name>`` + this + ``<pid>-<hex>.tmp``.
TEMP_MARK = ".wzq-"
TEMP_SUFFIX = ".tmp"
#: A temporary file older than this is stale even when its process number is in use again.
STALE_AFTER_S = 3600.0


class Saveable(Protocol):
    """Anything with ``save(file)``, e.g. an openpyxl ``Workbook``."""

    def save(self, filename) -> None: ...


def lock_file(target: Path) -> Path:
    """The lock file Excel keeps beside an open workbook (``~$`` + its name)."""
    target = Path(target)
    return target.with_name("~$" + target.name)


def lock_files(target: Path) -> list[Path]:
    """Lock files of spreadsheet programs that have ``target`` open: Excel's, LibreOffice's."""
    target = Path(target)
    return [lock_file(target), target.with_name(f".~lock.{target.name}#")]


def real_target(target: str | Path) -> Path:
    """The file a save really replaces: a symbolic link is followed, so the link stays."""
    target = Path(target)
    if target.is_symlink():
        return Path(os.path.realpath(target))
    return target


def _lock_fields(text: str) -> list[str]:
    """The fields of a LibreOffice lock entry: ``,``-separated, ``;``-ended, ``\\``-escaped."""
    fields, field, escaped = [], "", False
    for ch in text:
        if escaped:
            field, escaped = field + ch, False
        elif ch == "\\":
            escaped = True
        elif ch in ",;":
            fields.append(field)
            field = ""
            if ch == ";":
                break
        else:
            field += ch
    return fields


def _login() -> str:
    """This process's login name, as LibreOffice records it (the password database on POSIX)."""
    try:
        import pwd

        return pwd.getpwuid(os.getuid()).pw_name
    except (ImportError, KeyError):
        return getpass.getuser()


def _same_profile(a: str, b: str) -> bool:
    return unquote(a).rstrip("/") == unquote(b).rstrip("/")


def own_office_lock(lock: Path, office_profile: str | None) -> bool:
    """True when LibreOffice's lock file ``lock`` was written by the instance whose user
    profile (its ``UserInstallation`` URL) is ``office_profile``, on this computer, for
    this login.

    LibreOffice (7.4, as observed) writes one entry: user name, login, host, time,
    profile URL, e.g. ``,ana,desk1,04.05.2027 21:00,file:///home/ana/.config/libreoffice/4;``.
    The host is compared by its first label, case-insensitively (LibreOffice may
    write the full domain name).
    """
    if not office_profile:
        return False
    try:
        fields = _lock_fields(lock.read_text(encoding="utf-8", errors="replace"))
        me = _login()
    except (OSError, KeyError):
        return False
    if len(fields) < 5:
        return False
    _, login, host, _, profile = fields[:5]

    def label(name: str) -> str:
        return name.split(".")[0].casefold()

    hosts = {label(socket.gethostname()), label(socket.getfqdn())}
    return login == me and label(host) in hosts and _same_profile(profile, office_profile)


def _check_not_open(target: Path, where: str, office_profile: str | None = None) -> None:
    """Refuse when a spreadsheet program has ``target`` open (its lock file is beside it).

    ``office_profile``: the caller is the LibreOffice with that user profile, which
    holds the workbook open itself (:func:`own_office_lock`).
    """
    excel, office = lock_files(target)
    if excel.exists():
        raise PlanError(
            [
                Problem(
                    where,
                    f"{target.name} is open in Excel; close it or use -o OTHER{target.suffix} "
                    f"(if Excel is not running, delete the leftover lock file {excel.name})",
                )
            ]
        )
    if office.exists() and not own_office_lock(office, office_profile):
        raise PlanError(
            [
                Problem(
                    where,
                    f"{target.name} is open in LibreOffice; close it or use "
                    f"-o OTHER{target.suffix} (if LibreOffice is not running, delete the "
                    f"leftover lock file {office.name})",
                )
            ]
        )


def check_writable(target: str | Path, *, office_profile: str | None = None) -> None:
    """Refuse a target that is open in a spreadsheet program, read-only, or unwritable.

    ``office_profile``: see :func:`own_office_lock` (the Recalculate plan command only).
    """
    target = Path(target)
    where = str(target)
    for shown in dict.fromkeys((target, real_target(target))):  # a link and its file
        _check_not_open(shown, where, office_profile)
    target = real_target(target)
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


def temp_name(target: Path) -> str:
    """A fresh, obviously temporary file name for a save to ``target``."""
    return f".{target.name}{TEMP_MARK}{os.getpid()}-{secrets.token_hex(4)}{TEMP_SUFFIX}"


def stray_temp_files(target: str | Path) -> list[Path]:
    """Temporary files of saves to ``target`` (any process), oldest first."""
    target = real_target(target)
    folder = target.parent if str(target.parent) else Path(".")
    head = f".{target.name}{TEMP_MARK}"
    try:
        found = [
            p for p in folder.iterdir() if p.name.startswith(head) and p.name.endswith(TEMP_SUFFIX)
        ]
    except OSError:
        return []
    return sorted(found, key=lambda p: p.stat().st_mtime if p.exists() else 0.0)


def _alive(pid: int) -> bool:
    if os.name != "posix":  # no safe way to ask without a handle; trust the age alone
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # a process of another user
        return True
    return True


def clean_stray_temp_files(target: str | Path) -> list[Path]:
    """Remove temporary files that killed saves to ``target`` left behind; returns them.

    A file is removed when the process that wrote it is gone (POSIX) or it is
    older than :data:`STALE_AFTER_S`; a save still running in another process
    keeps its file.
    """
    removed = []
    now = time.time()
    head_len = len(f".{real_target(target).name}{TEMP_MARK}")
    for p in stray_temp_files(target):
        pid_text = p.name[head_len:].split("-", 1)[0]
        try:
            pid = int(pid_text)
            age = now - p.stat().st_mtime
        except (ValueError, OSError):
            continue
        if pid == os.getpid() or (_alive(pid) and age < STALE_AFTER_S):
            continue
        with contextlib.suppress(OSError):
            p.unlink()
            removed.append(p)
    return removed


def save_atomic(book: Saveable, target: str | Path, *, office_profile: str | None = None) -> Path:
    """Save ``book`` to ``target`` through a temporary file and ``os.replace``.

    The temporary file sits in the target's folder (so the replace is a rename
    on one file system). An existing target keeps its permission bits (and,
    where allowed, its owner); a symbolic link is followed and stays a link. On
    any failure the temporary file is removed, the target is untouched and a
    :class:`PlanError` says what happened. ``office_profile``: see :func:`own_office_lock`.
    """
    shown = Path(target)
    check_writable(shown, office_profile=office_profile)
    target = real_target(shown)
    clean_stray_temp_files(target)
    info = target.stat() if target.exists() else None
    folder = target.parent if str(target.parent) else Path(".")
    tmp = folder / temp_name(target)
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0), 0o600)
        with os.fdopen(fd, "wb") as fh:
            book.save(fh)
            fh.flush()
            os.fsync(fh.fileno())
        if info is not None:
            os.chmod(tmp, stat.S_IMODE(info.st_mode))
            if hasattr(os, "chown"):
                with contextlib.suppress(OSError):
                    os.chown(tmp, info.st_uid, info.st_gid)
        else:
            os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, target)
    except OSError as e:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise PlanError([Problem(str(shown), _save_failed(e, shown))]) from None
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    _fsync_folder(folder)
    return shown


def _save_failed(e: OSError, target: Path) -> str:
    why = e.strerror or str(e)
    if e.errno in (errno.ENOSPC, getattr(errno, "EDQUOT", -1)):
        hint = "free some space or write elsewhere with -o"
    elif e.errno in (errno.EACCES, errno.EPERM, errno.EBUSY):
        hint = f"close {target.name} in any program that has it open, or use -o"
    else:
        hint = "check the folder, or write elsewhere with -o"
    return f"could not save ({why}); {target.name} is unchanged; {hint}"


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
