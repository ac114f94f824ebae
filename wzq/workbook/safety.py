"""Checks a workbook file before any spreadsheet library parses it.

Designers open whatever is on their disk, sometimes a file from someone they do
not know. Before parsing, :func:`inspect_file` refuses, with a clear message:

- an empty file, a file that is not a workbook (not a zip package), an old
  binary ``.xls`` and an encrypted workbook (both are OLE compound files);
- a package over the documented limits (:data:`LIMITS`): file size, number of
  parts, total uncompressed size, compression ratio of any part (zip bombs),
  and the number of cells across all sheets (counted by streaming the sheet
  XML, never by parsing it);
- XML with a document type declaration (``<!DOCTYPE``/``<!ENTITY``): entity
  expansion attacks; workbook XML never needs one. The XML parsers are also
  guarded by defusedxml (:func:`enforce_defusedxml`).

It also lists the parts that openpyxl cannot keep when it saves (drawn shapes,
text boxes, sparklines, slicers, pivot tables, form controls other than the
template's button, embedded objects) so that the writer can put the results in
a copy rather than lose them.
"""

from __future__ import annotations

import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

from wzq.plan import PlanError, Problem

OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
ZIP_MAGIC = b"PK\x03\x04"


@dataclass(frozen=True)
class Limits:
    """Documented limits for a workbook the tool will open."""

    max_file_bytes: int = 50 * 1024 * 1024
    max_parts: int = 5_000
    max_uncompressed_bytes: int = 300 * 1024 * 1024
    max_ratio: float = 200.0  # uncompressed / compressed, per part over 1 MiB
    max_cells: int = 2_000_000


LIMITS = Limits()

_CELL = re.compile(rb"<(?:\w+:)?c[ >/]")
_DOCTYPE = re.compile(rb"<!(?:DOCTYPE|ENTITY)", re.IGNORECASE)


@dataclass
class PackageReport:
    """What the pre-parse inspection found."""

    parts: int = 0
    uncompressed_bytes: int = 0
    cells: int = 0
    unkept: list[str] = field(default_factory=list)


def _refuse(path: Path, message: str) -> PlanError:
    return PlanError([Problem(path.name, message)])


def enforce_defusedxml() -> None:
    """Make the standard-library XML parsers refuse entity tricks (defusedxml)."""
    import defusedxml

    defusedxml.defuse_stdlib()


def _stream_count(zf: zipfile.ZipFile, info: zipfile.ZipInfo, limit_left: int) -> tuple[int, bool]:
    """Cells in a sheet part, and whether a DOCTYPE/ENTITY appears; bounded reads."""
    cells = 0
    doctype = False
    tail = b""
    read = 0
    with zf.open(info) as f:
        while True:
            chunk = f.read(1 << 20)
            if not chunk:
                break
            read += len(chunk)
            if read > limit_left:
                raise OverflowError
            buf = tail + chunk
            cells += len(_CELL.findall(buf)) - len(_CELL.findall(tail))
            if not doctype and _DOCTYPE.search(buf):
                doctype = True
            tail = chunk[-16:]
    return cells, doctype


def _head_has_doctype(zf: zipfile.ZipFile, info: zipfile.ZipInfo) -> bool:
    with zf.open(info) as f:
        return bool(_DOCTYPE.search(f.read(4096)))


def unkept_parts(names: list[str], zf: zipfile.ZipFile) -> list[str]:
    """Parts openpyxl would drop on save (so results should go to a copy)."""
    out: list[str] = []
    for name in names:
        low = name.lower()
        if low.startswith("xl/drawings/drawing") and low.endswith(".xml"):
            with zf.open(name) as f:
                data = f.read(2_000_000)
            if b"<xdr:sp>" in data or b"<xdr:sp " in data or b"txBody" in data:
                out.append(f"{name} (drawn shapes or text boxes)")
        elif low.startswith(("xl/slicers/", "xl/slicercaches/", "xl/timelines/")):
            out.append(f"{name} (slicers or timelines)")
        elif low.startswith(("xl/pivottables/", "xl/pivotcache/")):
            out.append(f"{name} (pivot tables)")
        elif low.startswith("xl/embeddings/"):
            out.append(f"{name} (embedded objects)")
        elif low.startswith("xl/ctrlprops/"):
            out.append(f"{name} (form controls)")
        elif low.startswith("xl/worksheets/sheet") and low.endswith(".xml"):
            with zf.open(name) as f:
                data = f.read()
            if b"sparklineGroups" in data:
                out.append(f"{name} (sparklines)")
    return out


def inspect_file(path: str | Path, limits: Limits = LIMITS) -> PackageReport:
    """Refuse a file that is not a safe workbook; report what openpyxl would lose."""
    path = Path(path)
    try:
        size = path.stat().st_size
        with path.open("rb") as f:
            head = f.read(8)
    except FileNotFoundError:
        raise _refuse(path, "no such file; check the path") from None
    except PermissionError:
        raise _refuse(path, "the file cannot be read (permission denied)") from None
    except IsADirectoryError:
        raise _refuse(path, "this is a folder, not a workbook") from None
    if size == 0:
        raise _refuse(path, "the file is empty (0 bytes); copy a fresh template with `wzq new`")
    if head.startswith(OLE_MAGIC):
        if path.suffix.lower() == ".xls":
            raise _refuse(
                path,
                "old binary .xls workbooks are not read; save it as .xlsx (or .xlsm) "
                "in your spreadsheet program and run again",
            )
        raise _refuse(
            path,
            "the workbook is encrypted or password-protected (or an old binary format); "
            "remove the password and save it as .xlsx",
        )
    if not head.startswith(ZIP_MAGIC):
        raise _refuse(path, "this is not an .xlsx/.xlsm workbook (not a zip package)")
    if size > limits.max_file_bytes:
        raise _refuse(
            path,
            f"the file is {size / 2**20:.0f} MiB, over the limit of "
            f"{limits.max_file_bytes / 2**20:.0f} MiB for a closure plan",
        )
    report = PackageReport()
    try:
        with zipfile.ZipFile(path) as zf:
            infos = zf.infolist()
            names = [i.filename for i in infos]
            report.parts = len(infos)
            if report.parts > limits.max_parts:
                raise _refuse(
                    path,
                    f"the package has {report.parts} parts, over the limit of {limits.max_parts}",
                )
            total = sum(i.file_size for i in infos)
            report.uncompressed_bytes = total
            if total > limits.max_uncompressed_bytes:
                raise _refuse(
                    path,
                    f"the workbook unpacks to {total / 2**20:.0f} MiB, over the limit "
                    f"of {limits.max_uncompressed_bytes / 2**20:.0f} MiB (a zip bomb?)",
                )
            for i in infos:
                if i.file_size > 2**20 and i.file_size > limits.max_ratio * max(i.compress_size, 1):
                    ratio = i.file_size / max(i.compress_size, 1)
                    raise _refuse(
                        path,
                        f"part {i.filename} is compressed {ratio:.0f} to 1, a sign of a zip "
                        "bomb; the file is refused",
                    )
            if "xl/workbook.xml" not in names:
                raise _refuse(path, "the package has no workbook part; it is not a spreadsheet")
            left = limits.max_uncompressed_bytes
            for i in infos:
                low = i.filename.lower()
                if not low.endswith((".xml", ".rels", ".vml")):
                    continue
                if low.startswith("xl/worksheets/sheet"):
                    cells, doctype = _stream_count(zf, i, left)
                    left -= i.file_size
                    report.cells += cells
                    if report.cells > limits.max_cells:
                        raise _refuse(
                            path,
                            f"the workbook holds over {limits.max_cells:,} cells, "
                            "over the limit for a closure plan",
                        )
                else:
                    doctype = _head_has_doctype(zf, i)
                if doctype:
                    raise _refuse(
                        path,
                        f"part {i.filename} declares XML entities (<!DOCTYPE>/<!ENTITY>), "
                        "which workbooks never need; refused",
                    )
            report.unkept = unkept_parts(names, zf)
    except OverflowError:
        raise _refuse(
            path, "the workbook unpacks to more than its declared size; refused"
        ) from None
    except zipfile.BadZipFile:
        raise _refuse(path, "the file is damaged or not a workbook (bad zip package)") from None
    return report
