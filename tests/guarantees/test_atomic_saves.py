"""Crash-safe saves: a killed run leaves the original or the complete new workbook, never a
broken one; a workbook open in a spreadsheet program or read-only is not written to.

The plan is the invented Kestrel Ridge Parkway example typed into a fresh
template the way a designer fills it in.
"""

from __future__ import annotations

import errno
import hashlib
import multiprocessing
import os
import random
import re
import stat
import time
import zipfile
from collections import Counter
from pathlib import Path

import openpyxl
import pytest
from workbook_helpers import fill_template

from wzq import cli
from wzq.engine.plan import PlanError
from wzq.io.jsonplan import load_plan
from wzq.io.workbook import layout
from wzq.io.workbook import run as run_module
from wzq.io.workbook import save as save_module
from wzq.io.workbook.run import run_workbook
from wzq.io.workbook.save import (
    clean_stray_temp_files,
    lock_files,
    save_atomic,
    stray_temp_files,
    temp_name,
)
from wzq.io.workbook.writer import RUN_LOG, input_fingerprint

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
KESTREL = EXAMPLES / "kestrel_ridge_weeknight.json"
STAMP = "2027-03-01T08:00:00Z"
HOURS = 72  # the Kestrel Ridge demand period: three days of hourly counts
TEMP = re.compile(r"^\.plan\.xlsx\.wzq-(\d+)-[0-9a-f]{8}\.tmp$")

pytestmark = [
    pytest.mark.slow,  # workbooks written and killed end to end
    pytest.mark.skipif(
        "fork" not in multiprocessing.get_all_start_methods(),
        reason="the kill test forks a worker that already has wzq imported",
    ),
]


@pytest.fixture(scope="module")
def original(tmp_path_factory) -> bytes:
    """The filled plan workbook before any run."""
    folder = tmp_path_factory.mktemp("plan")
    return fill_template(load_plan(KESTREL), folder / "plan.xlsx").read_bytes()


@pytest.fixture(scope="module")
def fingerprint() -> str:
    return input_fingerprint(load_plan(KESTREL))


def _digest(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def is_complete_result(path: Path, fingerprint: str) -> bool:
    """The workbook opens, its zip is whole, and it holds every output sheet of this plan."""
    with zipfile.ZipFile(path) as z:
        if z.testzip() is not None:
            return False
    book = openpyxl.load_workbook(path)
    if book.sheetnames[-len(layout.OUTPUT_SHEETS) :] != list(layout.OUTPUT_SHEETS):
        return False
    if book[RUN_LOG]["B6"].value != fingerprint:
        return False
    results = book[layout.RESULTS]
    hours = [r[0] for r in results.iter_rows(min_row=5, max_col=1, values_only=True)]
    return sum(h is not None for h in hours) == HOURS


def _run_forever(path: str, saving) -> None:  # the worker that gets killed
    real = run_module.save_atomic

    def signalled(book, target, **options):  # patched in the worker only: a save begins
        saving.set()
        return real(book, target, **options)

    run_module.save_atomic = signalled
    while True:
        run_workbook(path, run_time=STAMP)


def _save_seconds(original: bytes, folder: Path) -> tuple[float, float]:
    """How long a save and a whole run take on this machine (the longer of two runs)."""
    target = folder / "calibrate.xlsx"
    target.write_bytes(original)
    marks: list[float] = []
    real = run_module.save_atomic

    def timed(book, where, **options):
        marks.append(time.perf_counter())
        out = real(book, where, **options)
        marks.append(time.perf_counter())
        return out

    run_module.save_atomic = timed
    try:
        laps = []
        for _ in range(2):  # the first run (plan only) and a later one (results replaced)
            marks.clear()
            t0 = time.perf_counter()
            run_workbook(target, run_time=STAMP)
            laps.append((marks[1] - marks[0], time.perf_counter() - t0))
    finally:
        run_module.save_atomic = real
    return max(s for s, _ in laps), max(r for _, r in laps)


def test_a_run_killed_at_random_moments_leaves_the_old_or_the_new_workbook(
    original, fingerprint, tmp_path
):
    save_s, run_s = _save_seconds(original, tmp_path)
    rng = random.Random(20270503)
    ctx = multiprocessing.get_context("fork")
    seen: Counter[str] = Counter()
    cleaned = 0
    for trial in range(30):
        folder = tmp_path / f"trial{trial}"
        folder.mkdir()
        target = folder / "plan.xlsx"
        target.write_bytes(original)
        saving = ctx.Event()
        worker = ctx.Process(target=_run_forever, args=(str(target), saving), daemon=True)
        worker.start()
        if trial % 2:  # at any moment of the first two runs
            time.sleep(rng.uniform(0.0, 2 * run_s))
        else:  # while the first or the second run saves
            for _ in range(rng.choice([1, 2])):
                saving.clear()
                assert saving.wait(30), "the worker never started to save"
            time.sleep(rng.uniform(0.0, save_s))
        worker.kill()  # SIGKILL: no clean-up code runs
        worker.join(10)
        assert worker.exitcode is not None and worker.exitcode < 0

        data = target.read_bytes()
        if data == original:
            seen["original"] += 1
        else:
            assert is_complete_result(target, fingerprint), f"trial {trial}: broken workbook"
            seen["complete"] += 1
        others = sorted(p.name for p in folder.iterdir() if p.name != "plan.xlsx")
        for name in others:  # only a hidden, obviously temporary file may be left
            m = TEMP.match(name)
            assert m and int(m.group(1)) == worker.pid, name
        if others:
            seen["killed while saving"] += 1
            if cleaned < 3:  # the next run removes what the killed one left
                run_workbook(target, run_time=STAMP)
                assert sorted(p.name for p in folder.iterdir()) == ["plan.xlsx"]
                assert is_complete_result(target, fingerprint)
                cleaned += 1
    assert seen["original"] >= 1 and seen["complete"] >= 1, seen
    assert seen["killed while saving"] >= 3, seen


# --- open in a spreadsheet program, read-only, failing disks --------------------------------


def _user_error(args: list[str], capsys) -> str:
    code = cli.main(args)
    err = capsys.readouterr().err
    assert code == cli.EXIT_INPUT
    assert "Traceback" not in err
    return err


@pytest.mark.parametrize("program", ["Excel", "LibreOffice"])
def test_a_workbook_open_in_a_spreadsheet_program_is_not_written_to(
    program, original, fingerprint, tmp_path, capsys
):
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)
    lock = lock_files(src)[0 if program == "Excel" else 1]
    lock.write_bytes(b"designer")
    err = _user_error(["run", str(src)], capsys)
    assert f"plan.xlsx is open in {program}; close it or use -o OTHER.xlsx" in err
    assert lock.name in err  # and how to clear a leftover lock
    assert src.read_bytes() == original
    out = tmp_path / "plan-results.xlsx"
    assert cli.main(["run", str(src), "-o", str(out)]) == cli.EXIT_OK
    assert src.read_bytes() == original
    assert is_complete_result(out, fingerprint)
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([src.name, lock.name, out.name])


def test_a_read_only_workbook_is_not_written_to(original, fingerprint, tmp_path, capsys):
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)
    src.chmod(0o444)
    try:
        err = _user_error(["run", str(src)], capsys)
        assert "plan.xlsx is read-only; make it writable or use -o OTHER.xlsx" in err
        assert src.read_bytes() == original
        out = tmp_path / "elsewhere.xlsx"
        assert cli.main(["run", str(src), "-o", str(out)]) == cli.EXIT_OK
        assert is_complete_result(out, fingerprint)
        assert src.read_bytes() == original
    finally:
        src.chmod(0o644)


def test_a_save_that_fails_half_way_leaves_the_workbook_and_no_temp_file(
    original, tmp_path, monkeypatch, capsys
):
    """Issue 15, case 8: a failed save is one line and exit status 1 (not the input's fault)."""
    src = tmp_path / "plan.xlsx"
    src.write_bytes(original)

    def disk_full(self, filename):
        filename.write(b"PK\x03\x04 half a workbook")
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(openpyxl.Workbook, "save", disk_full)
    code = cli.main(["run", str(src)])
    err = capsys.readouterr().err
    assert code == cli.EXIT_FAILURE
    assert err.splitlines() == [
        f"wzq: {src}: could not save (No space left on device); plan.xlsx is unchanged; "
        "free some space or write elsewhere with -o"
    ]
    assert src.read_bytes() == original
    assert [p.name for p in tmp_path.iterdir()] == ["plan.xlsx"]


def test_permissions_are_kept_and_a_link_stays_a_link(original, fingerprint, tmp_path):
    real = tmp_path / "real.xlsx"
    real.write_bytes(original)
    real.chmod(0o640)
    link = tmp_path / "plan.xlsx"
    link.symlink_to(real)
    run_workbook(link, run_time=STAMP)
    assert link.is_symlink() and link.resolve() == real.resolve()
    assert stat.S_IMODE(real.stat().st_mode) == 0o640
    assert is_complete_result(real, fingerprint)


def test_temp_files_are_named_as_temporary_and_stale_ones_are_removed(tmp_path):
    target = tmp_path / "plan.xlsx"
    name = temp_name(target)
    assert TEMP.match(name) and name.startswith(".")
    # a dead process's file (a process number no process has) and an old one are stale;
    # a fresh one of a live process (this test's parent) is a save still under way
    dead = tmp_path / f".plan.xlsx.wzq-{2**22 + 7}-0123abcd.tmp"
    old = tmp_path / f".plan.xlsx.wzq-{os.getppid()}-4567cdef.tmp"
    live = tmp_path / f".plan.xlsx.wzq-{os.getppid()}-89abcdef.tmp"
    other = tmp_path / ".other.xlsx.wzq-1-0123abcd.tmp"  # another workbook's
    for p in (dead, old, live, other):
        p.write_bytes(b"partial")
    hours_ago = time.time() - 2 * save_module.STALE_AFTER_S
    os.utime(old, (hours_ago, hours_ago))
    assert set(stray_temp_files(target)) == {dead, old, live}
    assert set(clean_stray_temp_files(target)) == {dead, old}
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([live.name, other.name])


def test_save_atomic_refuses_a_folder_and_a_missing_folder(tmp_path):
    book = openpyxl.Workbook()
    with pytest.raises(PlanError, match="is a folder"):
        save_atomic(book, tmp_path)
    with pytest.raises(PlanError, match="does not exist; create it first"):
        save_atomic(book, tmp_path / "no" / "plan.xlsx")
