"""A headless LibreOffice for a test: started with its own profile, driven over UNO, killed.

:func:`uno_python` finds a Python that can ``import uno`` (this one, or the
system Python that Debian's ``python3-uno`` is built for). :class:`Office`
starts ``soffice --headless`` with a UNO socket on the loopback address and a
private profile, starts ``tests/office_driver.py`` with that Python, and
answers each request within a time limit; :meth:`Office.stop` always ends both
processes (politely, then by force).
"""

from __future__ import annotations

import contextlib
import json
import os
import select
import shutil
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
DRIVER = Path(__file__).with_name("office_driver.py")
#: The longest any one request may take (a press runs wzq in another process).
CALL_TIMEOUT_S = 120.0


def uno_python() -> str | None:
    """A Python that can ``import uno``: this one, else the system one."""
    for python in dict.fromkeys([sys.executable, "/usr/bin/python3", shutil.which("python3")]):
        if not python or not Path(python).is_file():
            continue
        try:
            done = subprocess.run(
                [python, "-c", "import uno, unohelper"],
                capture_output=True,
                timeout=60,
                env=_driver_env(),
            )
        except (OSError, subprocess.SubprocessError):
            continue
        if done.returncode == 0:
            return python
    return None


def _driver_env() -> dict[str, str]:
    env = dict(os.environ)
    env.pop("PYTHONPATH", None)  # the driver needs only uno and the standard library
    env.pop("PYTHONHOME", None)
    return env


def free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class OfficeError(RuntimeError):
    """A request the driver answered with an error."""


class Office:
    """One headless LibreOffice with a private profile, and a UNO driver talking to it."""

    def __init__(self, profile: Path, python: str, *, env: dict[str, str] | None = None):
        self.profile = profile
        self.port = free_port()
        self.log = profile.parent / f"soffice-{self.port}.log"
        self._log_fh = open(self.log, "wb")  # noqa: SIM115 (closed in stop)
        self.soffice = subprocess.Popen(
            [
                SOFFICE,
                "--headless",
                "--invisible",
                "--norestore",
                "--nologo",
                "--nodefault",
                f"--accept=socket,host=127.0.0.1,port={self.port};urp;",
                f"-env:UserInstallation={profile.resolve().as_uri()}",
            ],
            stdin=subprocess.DEVNULL,
            stdout=self._log_fh,
            stderr=subprocess.STDOUT,
            env=env,
            start_new_session=True,
        )
        self.driver = subprocess.Popen(
            [python, str(DRIVER)],
            stdin=subprocess.PIPE,
            stdout=subprocess.PIPE,
            stderr=self._log_fh,
            env=_driver_env(),
            text=True,
            bufsize=1,
        )
        try:
            self.call("connect", port=self.port, timeout=60.0, timeout_s=90.0)
        except BaseException:
            self.stop()
            raise

    def call(self, op: str, *, timeout_s: float = CALL_TIMEOUT_S, **args):
        """Send one request; its answer, or an error when it fails or takes too long."""
        assert self.driver.stdin and self.driver.stdout
        self.driver.stdin.write(json.dumps({"op": op, **args}) + "\n")
        self.driver.stdin.flush()
        ready, _, _ = select.select([self.driver.stdout], [], [], timeout_s)
        if not ready:
            raise TimeoutError(f"LibreOffice did not answer '{op}' within {timeout_s:.0f} s")
        line = self.driver.stdout.readline()
        if not line:
            raise OfficeError(f"the UNO driver stopped during '{op}'; see {self.log}")
        answer = json.loads(line)
        if "error" in answer:
            raise OfficeError(f"{op}: {answer['error']}\n{answer.get('trace', '')}")
        return answer["ok"]

    def stop(self) -> None:
        """End the driver and LibreOffice, whatever state they are in."""
        with contextlib.suppress(Exception):
            if self.driver.poll() is None and self.soffice.poll() is None:
                self.call("quit", timeout_s=10.0)
        for proc in (self.driver, self.soffice):
            if proc.poll() is None:
                with contextlib.suppress(subprocess.TimeoutExpired):
                    proc.wait(timeout=10)
        with contextlib.suppress(ProcessLookupError, PermissionError):
            os.killpg(self.soffice.pid, signal.SIGKILL)  # whatever is left of soffice.bin
        for proc in (self.driver, self.soffice):
            if proc.poll() is None:
                proc.kill()
            with contextlib.suppress(subprocess.TimeoutExpired):
                proc.wait(timeout=10)
        if self.driver.stdin:
            with contextlib.suppress(OSError):
                self.driver.stdin.close()
        self._log_fh.close()


def wait_gone(path: Path, timeout_s: float = 10.0) -> bool:
    """Wait until ``path`` no longer exists (a lock file LibreOffice removes)."""
    deadline = time.monotonic() + timeout_s
    while path.exists() and time.monotonic() < deadline:
        time.sleep(0.05)
    return not path.exists()
