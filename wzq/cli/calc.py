"""``wzq calc install|remove|build``: the Recalculate plan command in LibreOffice Calc.

``install`` builds the extension (:mod:`wzq.io.office.build`) with this Python as
the one the command runs, and adds it through LibreOffice's own extension tool,
``unopkg``, for the current user (or, with ``--all-users``, for every user of
this LibreOffice). ``remove`` takes it away again. ``build`` only writes the
``.oxt`` file (for an administrator who deploys it another way).

Importing this module adds the ``calc`` sub-command to the ``wzq`` command.
"""

from __future__ import annotations

import argparse
import glob
import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import wzq
from wzq.cli import EXIT_OK, explain
from wzq.engine.plan import PlanError, Problem
from wzq.io.office.build import IDENTIFIER, OXT_NAME, build_extension

__all__ = [
    "SYSTEM_PYTHONS",
    "UNOPKG_PLACES",
    "UNOPKG_TIMEOUT_S",
    "cmd_calc",
    "configure",
    "find_unopkg",
    "install",
    "office_env",
    "remove",
    "run",
    "unopkg_command",
]

#: Where LibreOffice puts ``unopkg`` when it is not on the PATH.
UNOPKG_PLACES = (
    "/usr/lib/libreoffice/program/unopkg",
    "/opt/libreoffice*/program/unopkg",
    "/Applications/LibreOffice.app/Contents/MacOS/unopkg",
    r"C:\Program Files\LibreOffice\program\unopkg.com",
    r"C:\Program Files (x86)\LibreOffice\program\unopkg.com",
)
#: How long one call of unopkg may take (it starts a small LibreOffice of its own).
UNOPKG_TIMEOUT_S = 300


def find_unopkg(given: str | None = None) -> str:
    """LibreOffice's extension tool: ``given``, else on the PATH, else where LibreOffice puts it."""
    if given:
        if Path(given).is_file():
            return given
        raise PlanError([Problem("--unopkg", f"no such file: {given}")])
    for name in ("unopkg", "unopkg.com"):
        found = shutil.which(name)
        if found:
            return found
    for pattern in UNOPKG_PLACES:
        for found in sorted(glob.glob(pattern)):
            if Path(found).is_file():
                return found
    raise PlanError(
        [
            Problem(
                "unopkg",
                "LibreOffice's extension tool (unopkg) was not found; install LibreOffice, "
                "or give the tool's path with --unopkg",
            )
        ]
    )


def _profile_arg(profile: str | None) -> list[str]:
    if not profile:
        return []
    return [f"-env:UserInstallation={Path(profile).resolve().as_uri()}"]


def unopkg_command(
    verb: str,
    what: str,
    *,
    unopkg: str,
    all_users: bool = False,
    profile: str | None = None,
) -> list[str]:
    """The unopkg command line for ``verb`` (``add`` or ``remove``) on ``what``."""
    command = [unopkg, verb]
    if verb == "add":
        command.append("--force")  # replaces an earlier version without asking
    if all_users:
        command.append("--shared")
    command += ["--suppress-license", *_profile_arg(profile), what]
    return command


def _running_as_root() -> bool:
    return hasattr(os, "geteuid") and os.geteuid() == 0


def _check_user(all_users: bool) -> None:
    if _running_as_root() and not all_users:
        raise PlanError(
            [
                Problem(
                    "wzq calc",
                    "LibreOffice does not add an extension for one user when run as root "
                    "(administrator); run this as the user who works in Calc, or add "
                    "--all-users to install it for every user",
                )
            ]
        )


#: Where a system's own Python 3 lives (the one distribution builds of LibreOffice use).
SYSTEM_PYTHONS = ("/usr/bin/python3", "/bin/python3")


def office_env(env: dict[str, str] | None = None) -> dict[str, str]:
    """The environment to start LibreOffice's programs in: without other Pythons on PATH.

    LibreOffice builds that use the system's Python (Debian's, for one) find
    its standard library through the first ``python3`` on PATH; a pyenv, conda
    or virtual-environment Python there breaks LibreOffice's Python (seen with
    Debian's LibreOffice 7.4 and pyenv's Python 3.11.7: unopkg then fails with
    "exception during addExtension"). So every PATH folder whose ``python3`` is
    not the system's is left out, and so is ``PYTHONHOME``. Builds that bring
    their own Python (Windows, macOS) set it up themselves.
    """
    env = dict(os.environ if env is None else env)
    env.pop("PYTHONHOME", None)
    if os.name != "posix":
        return env
    system = {os.path.realpath(p) for p in SYSTEM_PYTHONS if os.path.exists(p)}
    keep = []
    for folder in env.get("PATH", "").split(os.pathsep):
        python = os.path.join(folder, "python3")
        if folder and os.path.isfile(python) and os.path.realpath(python) not in system:
            continue
        keep.append(folder)
    env["PATH"] = os.pathsep.join(keep)
    return env


def _unopkg(command: list[str]) -> subprocess.CompletedProcess:
    try:
        return subprocess.run(
            command,
            capture_output=True,
            text=True,
            timeout=UNOPKG_TIMEOUT_S,
            stdin=subprocess.DEVNULL,
            env=office_env(),
        )
    except subprocess.TimeoutExpired:
        raise PlanError(
            [
                Problem(
                    "unopkg",
                    f"did not finish within {UNOPKG_TIMEOUT_S} s; close LibreOffice "
                    "(including the quick starter) and try again",
                )
            ]
        ) from None


def _failed(done: subprocess.CompletedProcess, what: str) -> PlanError:
    said = (done.stderr or done.stdout or "").strip().splitlines()
    last = said[-1] if said else f"exit status {done.returncode}"
    return PlanError(
        [
            Problem(
                "unopkg",
                f"could not {what}: {last}. Close LibreOffice (including the quick starter) "
                "and try again",
            )
        ]
    )


def install(
    *,
    python: str | None = None,
    all_users: bool = False,
    profile: str | None = None,
    unopkg: str | None = None,
) -> Path:
    """Build the extension for ``python`` (default: this one) and add it; returns the tool."""
    _check_user(all_users)
    tool = find_unopkg(unopkg)
    python = python or sys.executable
    if not Path(python).is_file():
        raise PlanError([Problem("--python", f"no such file: {python}")])
    with tempfile.TemporaryDirectory(prefix="wzq-calc-") as tmp:
        oxt = build_extension(tmp, python, shared=all_users)
        command = unopkg_command("add", str(oxt), unopkg=tool, all_users=all_users, profile=profile)
        done = _unopkg(command)
    if done.returncode != 0:
        raise _failed(done, "add the extension")
    return Path(tool)


def remove(
    *, all_users: bool = False, profile: str | None = None, unopkg: str | None = None
) -> None:
    """Remove the extension (for this user, or with ``all_users`` for every user)."""
    _check_user(all_users)
    tool = find_unopkg(unopkg)
    done = _unopkg(
        unopkg_command("remove", IDENTIFIER, unopkg=tool, all_users=all_users, profile=profile)
    )
    if done.returncode != 0:
        raise _failed(done, "remove the extension")


# --- the command ----------------------------------------------------------------------------


def cmd_calc(args: argparse.Namespace) -> int:
    scope = "every user of this LibreOffice" if args.all_users else "you"
    if args.folder and args.action != "build":
        raise PlanError([Problem(args.folder, f"wzq calc {args.action} takes no folder")])
    if args.action == "build":
        path = build_extension(args.folder or ".", args.python)
        print(f"wrote {path} (it runs the Python {args.python or sys.executable})")
    elif args.action == "install":
        install(
            python=args.python,
            all_users=args.all_users,
            profile=args.profile,
            unopkg=args.unopkg,
        )
        print(
            f"added the Recalculate plan command to LibreOffice Calc for {scope}: the menu "
            f"wzq > Recalculate plan and a button on the standard toolbar. It runs the Python "
            f"{args.python or sys.executable}. Restart LibreOffice to see them."
        )
    else:
        remove(all_users=args.all_users, profile=args.profile, unopkg=args.unopkg)
        print(f"removed the Recalculate plan command from LibreOffice Calc for {scope}")
    return EXIT_OK


def configure(p: argparse.ArgumentParser) -> None:
    """The description and arguments of ``wzq calc``."""
    explain(
        p,
        description="Add the Recalculate plan command to LibreOffice Calc (a wzq menu and a "
        "toolbar button): it saves the plan open in Calc (asking first), analyses it with this "
        "Python and wzq, and reloads it with the results; problems are listed with "
        "their sheet and cell. `install` and `remove` use LibreOffice's own extension "
        "tool, unopkg; close LibreOffice first. `build` only writes the extension file "
        f"{OXT_NAME}.",
        epilog=wzq.CAUTION,
    )
    p.add_argument("action", choices=("install", "remove", "build"), help="what to do")
    p.add_argument(
        "folder",
        nargs="?",
        metavar="FOLDER",
        help=f"build only: the folder to write {OXT_NAME} into (default: the current folder)",
    )
    p.add_argument(
        "--python",
        metavar="PATH",
        help=f"the Python with wzq that the command runs (default: this one, {sys.executable})",
    )
    p.add_argument(
        "--all-users",
        action="store_true",
        help="for every user of this LibreOffice (needs administrator rights)",
    )
    p.add_argument(
        "--profile",
        metavar="DIR",
        help="the LibreOffice user profile folder to use (default: LibreOffice's own); "
        "for a portable LibreOffice or a test profile",
    )
    p.add_argument("--unopkg", metavar="PATH", help="LibreOffice's unopkg, if not found")


run = cmd_calc
