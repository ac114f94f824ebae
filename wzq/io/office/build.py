"""Build the LibreOffice extension (``.oxt``) of the Recalculate plan command.

The extension's sources are the files under ``wzq/io/office/extension/``; the
build fills in three values (wzq's version, the Python that runs wzq, and
the script's address, which names the file and whether it is installed for one
user or all), adds the icons drawn by :mod:`wzq.io.office.icons`, and zips it all
with fixed time stamps in a fixed order, so the same inputs give the same bytes.
Nothing built is kept in the repository: ``wzq calc install`` builds it afresh.
"""

from __future__ import annotations

import sys
import zipfile
from importlib import resources
from pathlib import Path
from xml.sax.saxutils import escape

import wzq
from wzq.io.office.icons import icon_files

__all__ = [
    "IDENTIFIER",
    "OXT_NAME",
    "SCRIPT_FILE",
    "SCRIPT_FUNCTION",
    "TEMPLATED",
    "ZIP_TIME",
    "build_extension",
    "extension_files",
    "script_url",
]

#: The extension's file name; it is part of the script's address, so it never changes.
OXT_NAME = "wzq-calc.oxt"
#: The extension's identifier (what ``unopkg remove`` takes).
IDENTIFIER = "org.wzq.calc.recalculate"
#: The macro: file and function inside the extension.
SCRIPT_FILE = "wzq_calc.py"
SCRIPT_FUNCTION = "recalculate_plan"
#: Files whose ``@NAME@`` markers are filled in (all others are copied as they are).
TEMPLATED = ("description.xml", "Addons.xcu", "Settings.xcs", "description/en.txt")
#: A fixed time stamp for every file in the archive (the earliest a zip file can hold).
ZIP_TIME = (1980, 1, 1, 0, 0, 0)


def script_url(shared: bool = False) -> str:
    """The command's address for the script provider (the menu and toolbar dispatch it)."""
    location = "share:uno_packages" if shared else "user:uno_packages"
    return (
        f"vnd.sun.star.script:{OXT_NAME}|python|{SCRIPT_FILE}${SCRIPT_FUNCTION}"
        f"?language=Python&location={location}"
    )


def _sources() -> dict[str, bytes]:
    """The extension's source files: path inside the archive -> bytes."""
    root = resources.files("wzq.io.office") / "extension"
    found: dict[str, bytes] = {}

    def walk(node, prefix: str) -> None:
        for child in node.iterdir():
            if child.name.startswith(".") or child.name == "__pycache__":
                continue
            if child.is_dir():
                walk(child, f"{prefix}{child.name}/")
            elif not child.name.endswith((".pyc", ".pyo")):
                found[prefix + child.name] = child.read_bytes()

    walk(root, "")
    return found


def extension_files(python: str | None = None, *, shared: bool = False) -> dict[str, bytes]:
    """Every file of the extension, templates filled in: path -> bytes.

    ``python`` is the interpreter the command runs (default: this one).
    """
    values = {
        "VERSION": wzq.__version__,
        "PYTHON": python or sys.executable,
        "SCRIPT_URL": script_url(shared),
        "CAUTION": wzq.CAUTION,
    }
    files = _sources()
    for name in TEMPLATED:
        text = files[name].decode("utf-8")
        xml = not name.endswith(".txt")
        for key, value in values.items():
            text = text.replace(f"@{key}@", escape(value, {'"': "&quot;"}) if xml else value)
        files[name] = text.encode("utf-8")
    files.update({f"icons/{name}": data for name, data in icon_files().items()})
    return files


def build_extension(folder: str | Path, python: str | None = None, *, shared: bool = False) -> Path:
    """Write :data:`OXT_NAME` into ``folder`` (created if needed); returns its path."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    target = folder / OXT_NAME
    files = extension_files(python, shared=shared)
    with zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as oxt:
        for name in sorted(files):
            info = zipfile.ZipInfo(name, ZIP_TIME)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o644 << 16
            oxt.writestr(info, files[name])
    return target
