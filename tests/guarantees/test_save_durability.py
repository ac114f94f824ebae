"""The atomic save is durable: data flushed and synced before the rename, the folder after.

A kill test cannot show this (a killed process leaves its written data in the
operating system's cache, which survives; only a power cut loses it), so the
calls are instrumented and their order recorded, and what the disk holds at
each step is read back independently (``os.fstat`` of the file being synced,
the temporary file's bytes at the instant of the rename).

The order is the one POSIX asks for a crash-safe replace: write, flush the
program's buffer into the operating system, ``fsync`` the file, ``rename`` it
over the target, ``fsync`` the folder so the new entry itself is on disk
(POSIX.1-2017, fsync() and rename(); common practice, no source for the
sequence as a whole).
"""

from __future__ import annotations

import os
from pathlib import Path

import openpyxl
import pytest

from wzq.io.workbook import save as save_module
from wzq.io.workbook.save import save_atomic

#: Smaller than Python's default write buffer (io.DEFAULT_BUFFER_SIZE, 8 KiB), so
#: without the flush nothing of it would have reached the operating system when
#: the file is synced.
PAYLOAD = b"wzq durability check " * 200  # 4,200 bytes


class ChunkedBook:
    """A workbook stand-in that writes a known payload in small pieces."""

    def save(self, fh) -> None:
        for i in range(0, len(PAYLOAD), 100):
            fh.write(PAYLOAD[i : i + 100])


class Recorder:
    """Wraps ``os.fdopen``, ``os.fsync`` and ``os.replace`` and records what they see."""

    def __init__(self, monkeypatch: pytest.MonkeyPatch, folder: Path) -> None:
        self.events: list[tuple] = []
        self.folder = folder
        self.file_fd: int | None = None
        self.tmp_path: Path | None = None
        real_fdopen, real_fsync, real_replace = os.fdopen, os.fsync, os.replace
        recorder = self

        class File:
            """The temporary file's handle, with its flush recorded."""

            def __init__(self, fh) -> None:
                self._fh = fh

            def write(self, data) -> int:
                recorder.events.append(("write", len(data)))
                return self._fh.write(data)

            def flush(self) -> None:
                recorder.events.append(("flush",))
                self._fh.flush()

            def __getattr__(self, name):
                return getattr(self._fh, name)

            def __enter__(self):
                return self

            def __exit__(self, *exc) -> None:
                self._fh.__exit__(*exc)

        def fdopen(fd, *args, **kw):
            self.file_fd = fd
            return File(real_fdopen(fd, *args, **kw))

        def fsync(fd: int) -> None:
            st = os.fstat(fd)
            folder = self.folder.stat()
            if (st.st_dev, st.st_ino) == (folder.st_dev, folder.st_ino):
                self.events.append(("fsync folder",))
            else:
                # what the operating system holds of the file when it is synced
                self.events.append(("fsync file", fd == self.file_fd, st.st_size))
            real_fsync(fd)

        def replace(src, dst) -> None:
            self.tmp_path = Path(src)
            self.events.append(("replace", Path(src).read_bytes(), Path(dst)))
            real_replace(src, dst)

        monkeypatch.setattr(save_module.os, "fdopen", fdopen)
        monkeypatch.setattr(save_module.os, "fsync", fsync)
        monkeypatch.setattr(save_module.os, "replace", replace)

    def kinds(self) -> list[str]:
        return [e[0] for e in self.events if e[0] != "write"]


def test_save_flushes_then_syncs_then_renames_then_syncs_the_folder(tmp_path, monkeypatch):
    target = tmp_path / "plan.xlsx"
    target.write_bytes(b"the old workbook")
    rec = Recorder(monkeypatch, tmp_path)
    save_atomic(ChunkedBook(), target)

    assert rec.kinds() == ["flush", "fsync file", "replace", "fsync folder"]
    writes = [i for i, e in enumerate(rec.events) if e[0] == "write"]
    flush = rec.events.index(("flush",))
    assert max(writes) < flush  # every byte is handed over before the flush
    _, same_file, size_at_sync = rec.events[flush + 1]
    assert same_file  # the file synced is the temporary file written
    # the whole payload was in the operating system when it was synced: the flush
    # came first (without it the 4,200 bytes would still sit in Python's buffer)
    assert size_at_sync == len(PAYLOAD)
    _, renamed_bytes, renamed_to = rec.events[flush + 2]
    assert renamed_bytes == PAYLOAD and renamed_to == target
    assert rec.tmp_path is not None and rec.tmp_path.parent == tmp_path
    assert rec.tmp_path.name.startswith(".plan.xlsx")  # a hidden temporary beside the target
    assert target.read_bytes() == PAYLOAD
    assert not rec.tmp_path.exists()


def test_a_real_workbook_is_complete_on_disk_before_it_replaces_the_target(tmp_path, monkeypatch):
    target = tmp_path / "plan.xlsx"
    book = openpyxl.Workbook()
    book.active["A1"] = "kept after the save"
    rec = Recorder(monkeypatch, tmp_path)
    save_atomic(book, target)

    assert rec.kinds()[-3:] == ["fsync file", "replace", "fsync folder"]
    assert "flush" in rec.kinds()[: rec.kinds().index("fsync file")]
    sync = next(e for e in rec.events if e[0] == "fsync file")
    renamed = next(e for e in rec.events if e[0] == "replace")
    assert sync[2] == len(renamed[1]) == target.stat().st_size
    assert openpyxl.load_workbook(target).active["A1"].value == "kept after the save"
