"""A save that cannot finish, and a file saved by its user while wzq runs (issue 15, cases 7-8).

Case 7: the workbook is replaced on disk between the moment wzq read it and
the moment it would write the results back (the user saved a new version
mid-run). Reproduced deterministically by saving the user's version from
inside the run, just after the plan was read; the user's version must survive
(``wzq run``: the results go to a copy, with a note; ``wzq batch
--write-back``: nothing is written into it and the plan is listed).

Case 8: a full disk, a file-size limit and any other I/O error during a save
give one line on the terminal, exit status 1, the original intact and no
temporary file: checked in a process of its own, so that a traceback printed
late (by a half-written zip collected at exit) would be seen. The file-size
limit is the kernel's own (``RLIMIT_FSIZE``, as ``ulimit -f`` sets it).

The plan is the invented Kestrel Ridge Parkway example typed into a template.
"""

from __future__ import annotations

import errno
import io
import os
import resource
import subprocess
import sys
import textwrap
from pathlib import Path

import openpyxl
import pytest
from workbook_helpers import fill_template, named_cell

from wzq import cli
from wzq.io.batch.runner import Task, analyse_file
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import layout
from wzq.io.workbook import run as run_module
from wzq.io.workbook import save as save_module

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

ROOT = Path(__file__).resolve().parents[2]
KESTREL = ROOT / "examples" / "kestrel_ridge_weeknight.json"
STAMP = "2027-03-01T08:00:00Z"


@pytest.fixture(scope="module")
def original(tmp_path_factory) -> bytes:
    folder = tmp_path_factory.mktemp("plan")
    return fill_template(load_plan(KESTREL), folder / "plan.xlsx").read_bytes()


def users_new_version(original: bytes) -> bytes:
    """The plan as its user saves it again: the work-zone length changed to 2.5."""
    book = openpyxl.load_workbook(io.BytesIO(original))
    named_cell(book, "site_work_zone_length").value = 2.5
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def saved_mid_run(monkeypatch, path: Path, new: bytes, *, keep_time: bool = False) -> None:
    """Save ``new`` over ``path`` after wzq read the plan and before it writes the results."""
    real = run_module.write_outputs

    def write_outputs(book, outputs, **kw):
        if path.read_bytes() != new:
            st = path.stat()
            path.write_bytes(new)
            if keep_time:  # a save within the file system's clock tick: only the hash tells
                os.utime(path, ns=(st.st_atime_ns, st.st_mtime_ns))
        return real(book, outputs, **kw)

    monkeypatch.setattr(run_module, "write_outputs", write_outputs)


def test_case7_a_version_saved_while_wzq_runs_survives_and_the_results_go_to_a_copy(
    original, tmp_path, monkeypatch, capsys
) -> None:
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)
    new = users_new_version(original)
    saved_mid_run(monkeypatch, src, new)
    assert cli.main(["run", str(src)]) == cli.EXIT_OK
    out = capsys.readouterr().out
    assert src.read_bytes() == new  # the user's edit is not reverted
    copy = tmp_path / "plan (wzq results).xlsx"
    assert f"wrote the results to {copy}" in out
    assert "warning: plan.xlsx changed on disk while wzq ran" in out
    book = openpyxl.load_workbook(copy)
    assert book.sheetnames[-len(layout.OUTPUT_SHEETS) :] == list(layout.OUTPUT_SHEETS)
    # the copy holds the version that was analysed, with its note in the Run log
    assert named_cell(book, "site_work_zone_length").value != 2.5
    log = [r for r in book[layout.RUN_LOG].iter_rows(values_only=True) if r[0] == "Note"]
    assert len(log) == 1 and "changed on disk while wzq ran" in log[0][1]
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([src.name, copy.name])


def test_case7_a_change_that_keeps_size_and_time_is_seen_by_its_hash(
    original, tmp_path, monkeypatch
) -> None:
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)
    new = original[:-1] + bytes([original[-1] ^ 1])  # same size, one bit different
    saved_mid_run(monkeypatch, src, new, keep_time=True)
    outcome = run_module.run_to(src, run_time=STAMP)
    assert outcome.copied and src.read_bytes() == new


def test_case7_batch_write_back_never_reverts_a_version_saved_mid_run(
    original, tmp_path, monkeypatch
) -> None:
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)
    new = users_new_version(original)
    saved_mid_run(monkeypatch, src, new)
    outcome = analyse_file(Task(str(src), src.name, write_back=True))
    assert src.read_bytes() == new
    assert not outcome.written_back
    (issue,) = outcome.issues
    assert issue.stage == "write-back" and "changed on disk while wzq ran" in issue.message
    assert sorted(p.name for p in tmp_path.iterdir()) == [src.name]  # no copy in a bulk run


def test_an_unchanged_file_is_still_written_in_place(original, tmp_path) -> None:
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)
    outcome = run_module.run_to(src, run_time=STAMP)
    assert outcome.target == src and not outcome.copied and outcome.notes == []
    assert src.read_bytes() != original


# --- case 8: failing disks --------------------------------------------------------------------

_FULL_DISK = """
import errno, sys
from wzq.io.workbook import save

class Full:
    '''The temporary file on a disk that fills up after {room} bytes.'''
    def __init__(self, real):
        self.real, self.room = real, {room}
    def write(self, data):
        if len(data) > self.room:
            raise OSError(errno.ENOSPC, "No space left on device")
        self.room -= len(data)
        return self.real.write(data)
    def __getattr__(self, name):
        return getattr(self.real, name)
    def __enter__(self):
        return self
    def __exit__(self, *exc):
        self.real.close()

real_open = save._open_temp
save._open_temp = lambda path: Full(real_open(path))
from wzq.cli import main
sys.exit(main(["run", {path!r}]))
"""


def _wzq(code: str, limit: int | None = None) -> subprocess.CompletedProcess:
    def fsize() -> None:
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))

    return subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        timeout=120,
        env={**os.environ, "PYTHONPATH": str(ROOT)},
        preexec_fn=fsize if limit else None,
        check=False,
    )


def _one_clean_line(done: subprocess.CompletedProcess, src: Path, why: str) -> None:
    assert done.returncode == 1, done.stderr
    lines = done.stderr.splitlines()
    assert len(lines) == 1, done.stderr  # no traceback, no "Exception ignored" at exit
    assert lines[0].startswith(f"wzq: {src}: could not save ({why}); plan.xlsx is unchanged")


@pytest.mark.parametrize("room", [100, 20_000])
def test_case8_a_full_disk_is_one_line_and_exit_status_1(original, tmp_path, room) -> None:
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)
    done = _wzq(textwrap.dedent(_FULL_DISK.format(room=room, path=str(src))))
    _one_clean_line(done, src, "No space left on device")
    assert done.stderr.rstrip().endswith("free some space or write elsewhere with -o")
    assert src.read_bytes() == original
    assert sorted(p.name for p in tmp_path.iterdir()) == [src.name]  # temporary file removed


def test_case8_a_file_size_limit_is_one_line_and_exit_status_1(original, tmp_path) -> None:
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)
    code = f"import sys; from wzq.cli import main; sys.exit(main(['run', {str(src)!r}]))"
    done = _wzq(code, limit=len(original) + 4096)  # room to read, not to write the results
    _one_clean_line(done, src, "File too large")
    assert src.read_bytes() == original
    assert sorted(p.name for p in tmp_path.iterdir()) == [src.name]


def test_case8_an_error_when_replacing_the_file_is_one_line_too(
    original, tmp_path, monkeypatch, capsys
) -> None:
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)

    def replace(a, b):
        raise OSError(errno.EIO, "Input/output error")

    monkeypatch.setattr(save_module.os, "replace", replace)
    assert cli.main(["run", str(src)]) == cli.EXIT_FAILURE
    err = capsys.readouterr().err.splitlines()
    assert err == [
        f"wzq: {src}: could not save (Input/output error); plan.xlsx is unchanged; "
        "check the folder, or write elsewhere with -o"
    ]
    assert src.read_bytes() == original
    assert sorted(p.name for p in tmp_path.iterdir()) == [src.name]
