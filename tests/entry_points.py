"""Run ``wzq`` commands each in a process of its own and measure it from outside.

Used by the tests through :func:`run_jobs`, which starts this file as a script:
it reads a JSON list of jobs on standard input (``{"key": ..., "argv": [...]}``
runs ``wzq`` with those arguments; ``{"key": ..., "code": "..."}`` runs that
Python code), imports the ``wzq`` command once, and
runs every job in a child process forked from it (so no job pays for the
imports, and none sees what another allocated), as many at a time as there are
cores. The child's peak memory is
its ``ru_maxrss`` as reported to this parent by ``os.wait4`` when it has ended
(including the worker processes it started and waited for), and its time is
the wall time from fork to exit. One JSON line per job goes to standard
output: exit status, seconds, peak MiB, and the child's standard output and
error.

Why fork from a fresh process: a process started straight from the test run
would report, as its own peak, the test run's memory at the moment it was
started (Linux keeps the peak across ``exec``).

    python tests/entry_points.py < jobs.json
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
#: Forking and ``os.wait4`` (peak memory of one child) are POSIX; tests skip without them.
AVAILABLE = hasattr(os, "fork") and hasattr(os, "wait4")


def run_jobs(jobs: list[dict], timeout: float) -> dict[str, dict]:
    """Run the jobs through this script in a fresh process; the results by key."""
    done = subprocess.run(
        [sys.executable, __file__],
        input=json.dumps(jobs),
        capture_output=True,
        text=True,
        timeout=timeout,
        env={**os.environ, "PYTHONPATH": str(ROOT)},
        check=False,
    )
    if done.returncode != 0:
        raise RuntimeError(done.stderr[-3000:])
    return {r["key"]: r for r in map(json.loads, done.stdout.splitlines())}


def _preload() -> None:
    """Import every module a command imports, so the children only run the command."""
    import wzq.cli
    import wzq.io.report
    import wzq.io.workbook.run

    for name in wzq.cli.COMMANDS:
        wzq.cli.command_module(name)


def _child(argv: list[str], out_fd: int, err_fd: int) -> None:
    os.dup2(out_fd, 1)
    os.dup2(err_fd, 2)
    sys.stdout = open(1, "w", closefd=False)  # noqa: SIM115
    sys.stderr = open(2, "w", closefd=False)  # noqa: SIM115
    try:
        if isinstance(argv, str):  # Python code
            exec(compile(argv, "<job>", "exec"), {"__name__": "__job__"})
            code = 0
        else:
            from wzq.cli import main

            code = main(argv)
    except SystemExit as e:
        code = e.code if isinstance(e.code, int) else 1
    except BaseException:
        import traceback

        traceback.print_exc()
        code = 1
    sys.stdout.flush()
    sys.stderr.flush()
    os._exit(code)


def _start(job: dict) -> tuple[int, dict]:
    out, err = tempfile.TemporaryFile(), tempfile.TemporaryFile()  # noqa: SIM115 (closed in _finish)
    t0 = time.perf_counter()
    pid = os.fork()
    if pid == 0:
        _child(job.get("argv", job.get("code")), out.fileno(), err.fileno())
    return pid, {"job": job, "out": out, "err": err, "t0": t0}


def _finish(running: dict, status: int, usage) -> dict:
    seconds = time.perf_counter() - running["t0"]
    texts = []
    for f in (running["out"], running["err"]):
        f.seek(0)
        texts.append(f.read().decode("utf-8", "replace"))
        f.close()
    return {
        "key": running["job"]["key"],
        "status": os.waitstatus_to_exitcode(status),
        "seconds": seconds,
        "peak_mib": usage.ru_maxrss / 1024,  # Linux reports kilobytes
        "stdout": texts[0],
        "stderr": texts[1],
    }


def main() -> None:
    """Run the jobs, as many at a time as there are cores (each still measured alone)."""
    jobs = json.load(sys.stdin)
    _preload()
    at_once = max(len(os.sched_getaffinity(0)), 1)
    running: dict[int, dict] = {}
    todo = list(jobs)
    while todo or running:
        while todo and len(running) < at_once:
            pid, info = _start(todo.pop(0))
            running[pid] = info
        pid, status, usage = os.wait4(-1, 0)
        if pid in running:
            print(json.dumps(_finish(running.pop(pid), status, usage)), flush=True)


if __name__ == "__main__":
    main()
