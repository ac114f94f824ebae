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
what to do.

One exception, for the Recalculate plan command in LibreOffice Calc
(:mod:`wzq.io.office`): the LibreOffice instance that has the workbook open may
state its own user profile (``office_profile``), and then its own lock file, and
only that one, does not count: the lock must name this computer, this login
and that profile (:func:`own_office_lock`). Excel's lock file and a lock of any
other LibreOffice (another user, another computer, another profile) still refuse.

A save that fails half-way (a full disk, a file-size limit, any I/O error)
raises :class:`SaveError`: one line saying what happened, the target as it
was, the temporary file removed, and nothing printed later by the
half-written zip.

Before the temporary file replaces the target, :func:`save_atomic` can check
it (``verify``: e.g. that nothing the user made was dropped, see
:mod:`wzq.io.workbook.kept`) and check that the target is still the file that
was read (``expect``, a :class:`FileState`: its size and the SHA-256 of its
bytes); a target changed meanwhile raises :class:`ChangedSinceRead` and is
left as the user saved it.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import errno
import gc
import getpass
import hashlib
import os
import secrets
import socket
import stat
import sys
import time
import traceback
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any, BinaryIO, Protocol
from urllib.parse import unquote

from wzq.engine.plan import PlanError, Problem

__all__ = [
    "STALE_AFTER_S",
    "TEMP_MARK",
    "TEMP_SUFFIX",
    "ChangedSinceRead",
    "FileState",
    "SaveError",
    "Saveable",
    "check_writable",
    "clean_stray_temp_files",
    "lock_file",
    "lock_files",
    "own_office_lock",
    "real_target",
    "save_atomic",
    "stray_temp_files",
    "temp_name",
]

#: How the temporary files of a save are named: ``.<target name>`` + this + ``<pid>-<hex>.tmp``.
TEMP_MARK = ".wzq-"
TEMP_SUFFIX = ".tmp"
#: A temporary file older than this is stale even when its process number is in use again.
STALE_AFTER_S = 3600.0


class Saveable(Protocol):
    """Anything with ``save(file)``, e.g. an openpyxl ``Workbook``."""

    def save(self, filename) -> None: ...


class SaveError(PlanError):
    """Writing the new file failed (a full disk, a file-size limit, any I/O error).

    Nothing the user typed is wrong (:attr:`input_fault` false), so the ``wzq``
    command prints the one line and exits with status 1, not 2.
    """

    input_fault = False


class ChangedSinceRead(PlanError):
    """The target is no longer the file that was read: someone saved it meanwhile."""


@dataclass(frozen=True)
class FileState:
    """A file as it was read: size, modification time and the SHA-256 of its bytes."""

    size: int
    mtime_ns: int
    sha256: str

    @classmethod
    def of(cls, path: str | Path, data: bytes) -> FileState:
        """The state of ``path`` whose bytes, as read, are ``data``."""
        st = os.stat(path)
        return cls(len(data), st.st_mtime_ns, hashlib.sha256(data).hexdigest())

    def changed(self, path: str | Path) -> bool:
        """Whether ``path`` now holds other bytes than these (it is hashed again when the
        size is the same: a modification time alone can miss a quick second save)."""
        try:
            st = os.stat(path)
            if st.st_size != self.size:
                return True
            digest = hashlib.sha256()
            with open(path, "rb") as f:
                for block in iter(lambda: f.read(1 << 20), b""):
                    digest.update(block)
        except OSError:
            return True  # gone or unreadable: not the file that was read
        return digest.hexdigest() != self.sha256


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


class _GuardedFile:
    """The temporary file as the zip writer sees it.

    After the first I/O error every further call does nothing, so neither the
    writer's own clean-up nor the half-written zip, when it is collected later,
    raises again or prints "Exception ignored" on the terminal; the error is
    kept to be reported once.
    """

    def __init__(self, fh: BinaryIO) -> None:
        self.fh = fh
        self.error: OSError | None = None
        self.at = 0

    def _call(self, fn: Callable[..., Any], *args: Any, default: Any) -> Any:
        if self.error is not None or self.fh.closed:
            return default
        try:
            return fn(*args)
        except OSError as e:
            self.error = e
            raise

    def write(self, data: bytes) -> int:
        n = self._call(self.fh.write, data, default=len(data))
        self.at = self._call(self.fh.tell, default=self.at)
        return n

    def tell(self) -> int:
        return self._call(self.fh.tell, default=self.at)

    def seek(self, offset: int, whence: int = os.SEEK_SET) -> int:
        return self._call(self.fh.seek, offset, whence, default=self.at)

    def flush(self) -> None:
        self._call(self.fh.flush, default=None)

    def seekable(self) -> bool:
        return True

    def writable(self) -> bool:
        return True


def _open_temp(path: Path) -> BinaryIO:
    """A new file, never an existing one, readable by the owner only until it is finished."""
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0), 0o600)
    return os.fdopen(fd, "wb")


def _let_go(error: BaseException) -> None:
    """Free what the failed save left (the half-written zip) now, quietly.

    The writer's frames in the traceback hold the zip; collected at exit it
    would try to finish itself and print a traceback nobody can act on.
    """
    hook = sys.unraisablehook
    sys.unraisablehook = lambda unraisable: None
    try:
        traceback.clear_frames(error.__traceback__)
        gc.collect()
    finally:
        sys.unraisablehook = hook


def _io_error(error: BaseException, guard: _GuardedFile) -> OSError | None:
    """The I/O error behind a failed save.

    Besides Python's own :class:`OSError`, lxml (through which openpyxl writes
    each sheet, to a file of its own first) reports a failed write as a
    ``SerialisationError`` named after the error code (``IO_EFBIG``).
    """
    if guard.error is not None:
        return guard.error
    chain = [error]  # the error, what caused it, and so on
    while (e := chain[-1].__cause__ or chain[-1].__context__) is not None and e not in chain:
        chain.append(e)
    for e in chain:
        if isinstance(e, OSError):
            return e
        code = (
            getattr(errno, str(e).removeprefix("IO_"), None) if str(e).startswith("IO_") else None
        )
        if type(e).__name__ == "SerialisationError" and isinstance(code, int):
            return OSError(code, os.strerror(code))
    return None


def write_atomically(
    target: str | Path,
    write: bytes | Callable[[BinaryIO], None],
    *,
    mode: int | None = None,
    before_replace: Callable[[Path], None] | None = None,
) -> Path:
    """The one atomic write of wzq: ``write`` (bytes, or a function that writes to a file)
    goes to a new temporary file beside ``target`` (:func:`temp_name`), is flushed and
    synced to disk, given its permission bits (``mode``; default: an existing target's,
    else a new file's under the umask), and then moved over ``target`` in one step
    (``os.replace``). ``before_replace`` is called with the finished temporary file and
    may raise to stop the write. On any failure the temporary file is removed and the
    target is untouched; the error is raised as it came."""
    target = Path(target)
    folder = target.parent if str(target.parent) else Path(".")
    tmp = folder / temp_name(target)
    try:
        with _open_temp(tmp) as fh:
            if isinstance(write, bytes | bytearray):
                fh.write(write)
            else:
                write(fh)
            fh.flush()
            os.fsync(fh.fileno())
        if mode is None:
            mode = stat.S_IMODE(target.stat().st_mode) if target.exists() else 0o666 & ~_umask()
        os.chmod(tmp, mode)
        if before_replace is not None:
            before_replace(tmp)
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    _fsync_folder(folder)
    return target


def save_atomic(
    book: Saveable,
    target: str | Path,
    *,
    verify: Callable[[Path], None] | None = None,
    expect: FileState | None = None,
    office_profile: str | None = None,
) -> Path:
    """Save ``book`` to ``target`` by :func:`write_atomically`, checked.

    The temporary file sits in the target's folder (so the replace is a rename
    on one file system), and is flushed and synced to disk before it replaces
    the target. An existing target keeps its permission bits (and, where
    allowed, its owner); a symbolic link is followed and stays a link.

    ``verify`` is called with the finished temporary file and may raise to
    stop the save; ``expect`` is the state of the target when it was read: if
    the target changed since, :class:`ChangedSinceRead` is raised and the
    target stays as it is. On any failure the temporary file is removed and
    the target is untouched; an I/O error is a :class:`SaveError`.
    ``office_profile``: see :func:`own_office_lock`.
    """
    shown = Path(target)
    check_writable(shown, office_profile=office_profile)
    target = real_target(shown)
    clean_stray_temp_files(target)
    info = target.stat() if target.exists() else None
    guard: _GuardedFile | None = None

    def write(fh: BinaryIO) -> None:
        nonlocal guard
        guard = _GuardedFile(fh)
        book.save(guard)

    def checked(tmp: Path) -> None:
        # -- the finished temporary file: post-process and check it here, before the rename
        if verify is not None:
            verify(tmp)
        if info is not None and hasattr(os, "chown"):
            with contextlib.suppress(OSError):
                os.chown(tmp, info.st_uid, info.st_gid)
        if expect is not None and expect.changed(target):
            raise ChangedSinceRead([Problem(str(shown), _changed(target))])

    try:
        write_atomically(target, write, before_replace=checked)
    except BaseException as e:
        cause = _io_error(e, guard) if guard is not None else None
        if cause is None and isinstance(e, OSError):
            cause = e
        _let_go(e)
        if cause is not None and not isinstance(e, PlanError | KeyboardInterrupt):
            raise SaveError([Problem(str(shown), _save_failed(cause, shown))]) from None
        raise
    return shown


def _changed(target: Path) -> str:
    try:
        when = dt.datetime.fromtimestamp(target.stat().st_mtime).strftime("%H:%M:%S")
        saved = f" (saved at {when})"
    except OSError:
        saved = ""
    return (
        f"{target.name} changed on disk while wzq ran{saved}; your version was kept and "
        "the results were not written into it"
    )


def _save_failed(e: OSError, target: Path) -> str:
    why = e.strerror or str(e)
    if e.errno in (errno.ENOSPC, getattr(errno, "EDQUOT", -1)):
        hint = "free some space or write elsewhere with -o"
    elif e.errno == errno.EFBIG:
        hint = "the file would be larger than this system or account allows; write elsewhere"
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
