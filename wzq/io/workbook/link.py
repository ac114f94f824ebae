"""The entry module that joins a macro workbook to wzq: ``plan.py`` beside ``plan.xlsm``.

The ``.xlsm`` template carries xlwings' standalone VBA project with a module of
our own (:data:`wzq.io.workbook.layout.BUTTON_MODULE`). Its button macro
(:data:`wzq.io.workbook.layout.BUTTON_MACRO`) takes the workbook's file name without
the extension and runs, through xlwings' ``RunPython``, ``import <name>;
<name>.main()`` with the workbook's folder on Python's path.
So each macro workbook needs a small Python module of its own name beside it;
:func:`write_entry_module` writes it (two lines: a marker comment and
``from wzq.io.live.backend import main``). ``wzq new X.xlsm`` writes it with the
workbook, ``wzq link X.xlsm`` writes it again for a renamed or moved workbook.

Because of that ``import``, the name of a macro workbook must be a Python
module name: ASCII letters, digits and ``_``, not starting with a digit, not a
Python keyword, and not the name of a module Python would find first (the
standard library or an installed package). Other names are refused with a
:class:`PlanError` that suggests a valid one. A ``.py`` file that wzq did not
write (its first line is not :data:`ENTRY_MARKER`) is never overwritten.
"""

from __future__ import annotations

import importlib.util
import keyword
import re
import sys
import zipfile
from pathlib import Path

from wzq.engine.plan import PlanError, Problem
from wzq.io.workbook.save import write_atomically

__all__ = [
    "ENTRY_MARKER",
    "MACRO_SUFFIX",
    "RESERVED",
    "VBA_PART",
    "check_entry_free",
    "check_macro_name",
    "entry_module_text",
    "entry_path",
    "is_ours",
    "link_workbook",
    "name_problem",
    "suggest_name",
    "write_entry_module",
]

#: The first line of every entry module wzq writes (how wzq knows the file is its own).
ENTRY_MARKER = "# wzq entry module"
#: Modules the entry module itself needs; a workbook of that name would hide them.
RESERVED = ("wzq", "xlwings")
MACRO_SUFFIX = ".xlsm"
VBA_PART = "xl/vbaProject.bin"

_MODULE_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")


def entry_module_text(workbook: str) -> str:
    """The whole entry module for the workbook file name ``workbook`` (two lines)."""
    return (
        f"{ENTRY_MARKER} for {workbook}: its Recalculate button runs main(); "
        f"written by `wzq link {workbook}`.\n"
        "from wzq.io.live.backend import main  # noqa: F401\n"
    )


def entry_path(workbook: str | Path) -> Path:
    """Where the entry module of a workbook goes: same folder, same name, ``.py``."""
    path = Path(workbook)
    return path.with_name(path.stem + ".py")


def _hidden_by(name: str, target: Path | None) -> str | None:
    """What a module called ``name`` would collide with, or ``None``."""
    if name in RESERVED:
        return "the name of a package the button itself needs"
    if name in sys.stdlib_module_names or name in sys.builtin_module_names:
        return "the name of a module of Python's standard library"
    try:
        spec = importlib.util.find_spec(name)
    except (ImportError, ValueError):
        return None
    if spec is None:
        return None
    origin = Path(spec.origin).resolve() if spec.origin else None
    if target is not None and origin == target.resolve():
        return None  # our own entry module, found because its folder is on the path
    return "the name of an installed Python package"


def name_problem(stem: str, target: Path | None = None) -> str | None:
    """Why ``stem`` cannot be the module name of a macro workbook (``None``: it can)."""
    if not stem:
        return "is empty"
    if not _MODULE_NAME.fullmatch(stem):
        reasons = []
        if stem[0].isdigit():
            reasons.append("starts with a digit")
        bad = list(dict.fromkeys(ch for ch in stem if not re.fullmatch(r"[A-Za-z0-9_]", ch)))
        if bad:
            shown = ", ".join("a space" if ch == " " else f"'{ch}'" for ch in bad)
            reasons.append(f"has {shown}")
        return " and ".join(reasons)
    if keyword.iskeyword(stem):
        return "is a Python keyword"
    hidden = _hidden_by(stem, target)
    return f"is {hidden}" if hidden else None


def suggest_name(stem: str) -> str:
    """A valid module name close to ``stem``: other characters become ``_``."""
    name = re.sub(r"[^A-Za-z0-9_]+", "_", stem)
    name = re.sub(r"_+", "_", name).strip("_") or "plan"
    if name[0].isdigit():
        name = "plan_" + name
    while name_problem(name) is not None:
        name += "_plan"
    return name


def check_macro_name(path: str | Path) -> None:
    """Refuse a macro workbook name the button cannot import, suggesting a valid one."""
    path = Path(path)
    problem = name_problem(path.stem, entry_path(path))
    if problem is None:
        return
    suggestion = suggest_name(path.stem)
    raise PlanError(
        [
            Problem(
                str(path),
                f"the Recalculate button runs Python's `import {path.stem}`, so the name before "
                f"{path.suffix} must be a Python module name (ASCII letters, digits and _, not "
                f"starting with a digit, not a Python keyword or a module Python already has); "
                f"'{path.stem}' {problem}. Use for example "
                f"{path.with_name(suggestion + path.suffix)}",
            )
        ]
    )


def is_ours(py: Path) -> bool:
    """Whether the ``.py`` file at ``py`` was written by wzq (its first line is the marker)."""
    try:
        with py.open("rb") as fh:
            first = fh.readline(200)
    except OSError:
        return False
    return first.decode("utf-8", "replace").startswith(ENTRY_MARKER)


def check_entry_free(path: str | Path) -> None:
    """Refuse when the entry module's place holds a file wzq did not write."""
    py = entry_path(path)
    if py.exists() and (py.is_dir() or not is_ours(py)):
        raise PlanError(
            [
                Problem(
                    str(py),
                    f"already exists and was not written by wzq, so it is left alone; the "
                    f"Recalculate button of {Path(path).name} needs this name for its entry "
                    "module. Rename or move that file, or give the workbook another name",
                )
            ]
        )


def write_entry_module(path: str | Path) -> tuple[Path, bool]:
    """Write the entry module beside macro workbook ``path``; return it and whether it changed.

    Checks the name (:func:`check_macro_name`) and never replaces a file wzq did
    not write (:func:`check_entry_free`). The file is replaced in one step.
    """
    path = Path(path)
    check_macro_name(path)
    check_entry_free(path)
    py = entry_path(path)
    text = entry_module_text(path.name)
    if py.exists() and py.read_text(encoding="utf-8", errors="replace") == text:
        return py, False
    folder = py.parent if str(py.parent) else Path(".")
    try:
        write_atomically(folder / py.name, text.encode("utf-8"), mode=0o644)
    except OSError as e:
        raise PlanError(
            [Problem(str(py), f"cannot write the file ({e.strerror or e}); check the folder")]
        ) from None
    return py, True


def _has_macros(path: Path) -> bool:
    try:
        with zipfile.ZipFile(path) as z:
            return VBA_PART in z.namelist()
    except (zipfile.BadZipFile, OSError):
        return False


def link_workbook(path: str | Path) -> tuple[Path, bool]:
    """``wzq link``: (re)write the entry module of an existing macro workbook.

    Returns the entry module and whether it changed. The workbook is only read.
    """
    path = Path(path)
    where = str(path)
    if path.suffix.lower() != MACRO_SUFFIX:
        raise PlanError(
            [
                Problem(
                    where,
                    "only a macro workbook (.xlsm) has a Recalculate button; make one with "
                    "`wzq new NAME.xlsm` and copy your inputs into it, or use `wzq run "
                    f"{path.name}`",
                )
            ]
        )
    if not path.is_file():
        raise PlanError([Problem(where, "no such workbook; check the path and the name")])
    if not _has_macros(path):
        raise PlanError(
            [
                Problem(
                    where,
                    "holds no macros, so it has no Recalculate button; make a macro workbook "
                    "with `wzq new NAME.xlsm` and copy your inputs into it",
                )
            ]
        )
    return write_entry_module(path)
