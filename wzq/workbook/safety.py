"""Checks a workbook file before any spreadsheet library parses it.

Designers open whatever is on their disk, sometimes a file from someone they do
not know. Before parsing, :func:`inspect_file` (and :func:`read_checked`, which
also hands back the bytes it checked, so that what is parsed is exactly what
was inspected) refuses, with a clear message:

- an empty file, a file that is not a workbook (not a zip package), an old
  binary ``.xls`` and an encrypted workbook (both are OLE compound files);
- a package over the documented limits (:data:`LIMITS`): file size, number of
  parts, total uncompressed size, compression ratio of any part (zip bombs),
  and the number of cells across all sheets (counted by streaming every XML
  part, never by parsing it);
- XML with a document type declaration (``<!DOCTYPE``/``<!ENTITY``) anywhere in
  any part: entity expansion attacks; workbook XML never needs one. XML in
  UTF-16/UTF-32 is refused too, since it would hide such a declaration (and
  the cells) from the byte scan; spreadsheet programs write UTF-8.

As a second line of defence the XML parsers openpyxl uses for sheets and
shared strings are defusedxml's (openpyxl switches to them when defusedxml is
installed; :func:`require_defusedxml` refuses to go on when it did not), and
its other parts are parsed with entity resolution switched off.

It also lists the parts that openpyxl cannot keep when it saves (drawn shapes,
text boxes, SmartArt, sparklines and other sheet extensions, slicers, pivot
tables, form and ActiveX controls, embedded objects, threaded comments, data
connections, chart styles made in Excel, pictures in EMF/WMF/SVG form) so that
the writer puts the results in a copy rather than lose them.
"""

from __future__ import annotations

import contextlib
import io
import re
import struct
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import BinaryIO

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

_CHUNK = 1 << 20
_TAIL = 64  # bytes kept between chunks so that a marker split by a chunk edge is still seen
_CELL = re.compile(rb"<(?:\w+:)?c[ >/]")
_DOCTYPE = re.compile(rb"<!(?:DOCTYPE|ENTITY)", re.IGNORECASE)
_WIDE_MARKS = (b"\xff\xfe", b"\xfe\xff", b"\x00\x00\xfe\xff", b"\x00<", b"<\x00")
_UTF8_BOM = b"\xef\xbb\xbf"
_EOCD = b"PK\x05\x06"  # end of central directory record (zip APPNOTE 4.3.16)
_EOCD_SEARCH = 22 + 65_535  # the record and the longest zip comment

#: Drawing content openpyxl drops (it keeps charts and pictures only).
_SHAPE = re.compile(rb"<(?:\w+:)?(?:sp|grpSp|cxnSp)[\s>/]|txBody|AlternateContent")
#: Sheet extensions (``extLst``) openpyxl drops, by what they hold.
_SHEET_EXT: tuple[tuple[bytes, str], ...] = (
    (b"sparklineGroup", "sparklines"),
    (b"conditionalFormatting", "extended conditional formats such as data bars or icon sets"),
    (b"dataValidation", "extended data validation"),
    (b"slicerList", "slicers"),
    (b"extLst", "sheet extension data"),
)
#: Parts openpyxl drops, by folder (lower case), and what they are to the user.
_UNKEPT_FOLDERS: tuple[tuple[str, str], ...] = (
    ("xl/slicers/", "slicers or timelines"),
    ("xl/slicercaches/", "slicers or timelines"),
    ("xl/timelines/", "slicers or timelines"),
    ("xl/timelinecaches/", "slicers or timelines"),
    ("xl/pivottables/", "pivot tables"),
    ("xl/pivotcache/", "pivot tables"),
    ("xl/embeddings/", "embedded objects"),
    ("xl/ctrlprops/", "form controls"),
    ("xl/activex/", "ActiveX controls"),
    ("xl/diagrams/", "SmartArt diagrams"),
    ("xl/threadedcomments/", "threaded comments and their replies"),
    ("xl/model/", "a data model"),
    ("xl/querytables/", "data connections or queries"),
    ("xl/connections.xml", "data connections or queries"),
    ("xl/richdata/", "pictures in cells or linked data types"),
    ("customxml/", "custom XML data"),
    ("xl/webextensions/", "add-in data"),
    ("xl/namedsheetviews/", "named sheet views"),
)
_CHART_STYLE = re.compile(r"^xl/charts/(?:style|colors)\d*\.xml$")
_UNKEPT_PICTURE = (".emf", ".wmf", ".svg")


@dataclass
class PackageReport:
    """What the pre-parse inspection found."""

    parts: int = 0
    uncompressed_bytes: int = 0
    cells: int = 0
    unkept: list[str] = field(default_factory=list)


def _refuse(name: str, message: str) -> PlanError:
    return PlanError([Problem(name, message)])


def enforce_defusedxml() -> None:
    """Make the standard-library XML parsers refuse entity tricks (defusedxml).

    This patches the standard library for the whole process; wzq itself does
    not need it (see :func:`require_defusedxml`), it is here for embedders.
    """
    import defusedxml

    defusedxml.defuse_stdlib()


def require_defusedxml() -> None:
    """Refuse to parse any workbook unless openpyxl parses sheets through defusedxml.

    openpyxl switches to defusedxml's parsers when defusedxml is installed and
    the environment variable ``OPENPYXL_DEFUSEDXML`` is not set to ``False``.
    """
    import openpyxl.xml

    if not openpyxl.xml.DEFUSEDXML:
        raise _refuse(
            "wzq installation",
            "the XML guard defusedxml is not active (not installed, or OPENPYXL_DEFUSEDXML is "
            "set to False); install defusedxml and unset that variable before reading workbooks",
        )


@dataclass
class _PartScan:
    cells: int = 0
    kind: str = "xml"  # "xml", "binary", "doctype", "wide"
    markers: set[str] = field(default_factory=set)


def _part_kind(head: bytes) -> str:
    """``"xml"``, ``"wide"`` (UTF-16/32 XML) or ``"binary"`` from a part's first bytes."""
    if head.startswith(_WIDE_MARKS):
        return "wide"
    text = head[len(_UTF8_BOM) :] if head.startswith(_UTF8_BOM) else head
    return "xml" if text.lstrip(b" \t\r\n").startswith(b"<") else "binary"


def _scan_part(
    zf: zipfile.ZipFile, info: zipfile.ZipInfo, limit_left: int, markers: re.Pattern | None
) -> _PartScan:
    """Stream one part: count cells, spot declarations and the given markers.

    Binary parts (pictures, the VBA project) are recognised from their first
    bytes and not scanned further. Raises :class:`OverflowError` when the part
    inflates past ``limit_left`` bytes (more than its declared size).
    """
    scan = _PartScan()
    tail = b""
    read = 0
    with zf.open(info) as f:
        while True:
            chunk = f.read(_CHUNK)
            if not chunk:
                break
            if read == 0:
                scan.kind = _part_kind(chunk)
                if scan.kind != "xml":
                    return scan
            read += len(chunk)
            if read > limit_left:
                raise OverflowError
            buf = tail + chunk
            scan.cells += len(_CELL.findall(buf)) - len(_CELL.findall(tail))
            if _DOCTYPE.search(buf):
                scan.kind = "doctype"
                return scan
            if markers is not None:
                scan.markers.update(m.decode("ascii", "replace") for m in markers.findall(buf))
            tail = chunk[-_TAIL:]
    return scan


def _markers_for(name: str) -> re.Pattern | None:
    low = name.lower()
    if low.startswith("xl/drawings/") and low.endswith(".xml"):
        return _SHAPE
    if low.startswith("xl/worksheets/") and low.endswith(".xml"):
        return re.compile(b"|".join(re.escape(m) for m, _ in _SHEET_EXT))
    return None


def _unkept_from_scan(name: str, scan: _PartScan) -> str | None:
    low = name.lower()
    if low.startswith("xl/drawings/") and scan.markers:
        if scan.markers <= {"AlternateContent"}:
            return f"{name} (controls or other drawing content)"
        return f"{name} (drawn shapes or text boxes)"
    if low.startswith("xl/worksheets/") and "extLst" in scan.markers:
        what = next(w for m, w in _SHEET_EXT if m.decode() in scan.markers)
        return f"{name} ({what})"
    return None


def _unkept_by_name(name: str) -> str | None:
    low = name.lower()
    for folder, what in _UNKEPT_FOLDERS:
        if low.startswith(folder):
            return f"{name} ({what})"
    if _CHART_STYLE.match(low):
        return f"{name} (chart styles of a chart made in Excel)"
    if low.startswith("xl/media/") and low.endswith(_UNKEPT_PICTURE):
        return f"{name} (a picture in {low.rsplit('.', 1)[-1].upper()} form)"
    if low.startswith("xl/media/") and not _pillow():
        return f"{name} (a picture; install Pillow so that pictures are kept)"
    return None


def _pillow() -> bool:
    """openpyxl keeps pictures only when Pillow is installed."""
    try:
        import PIL  # noqa: F401
    except ImportError:
        return False
    return True


def unkept_parts(names: list[str], zf: zipfile.ZipFile) -> list[str]:
    """Parts openpyxl would drop on save (so results should go to a copy).

    Reads drawing and sheet parts again; :func:`inspect_file` finds the same
    in the one pass it makes anyway.
    """
    out: list[str] = []
    for name in names:
        why = _unkept_by_name(name)
        if why is None and (markers := _markers_for(name)) is not None:
            scan = _scan_part(zf, zf.getinfo(name), LIMITS.max_uncompressed_bytes, markers)
            why = _unkept_from_scan(name, scan)
        if why is not None:
            out.append(why)
    return out


def _check_head(name: str, size: int, head: bytes, suffix: str, limits: Limits) -> None:
    if size == 0:
        raise _refuse(name, "the file is empty (0 bytes); copy a fresh template with `wzq new`")
    if head.startswith(OLE_MAGIC):
        if suffix == ".xls":
            raise _refuse(
                name,
                "old binary .xls workbooks are not read; save it as .xlsx (or .xlsm) "
                "in your spreadsheet program and run again",
            )
        raise _refuse(
            name,
            "the workbook is encrypted or password-protected (or an old binary format); "
            "remove the password and save it as .xlsx",
        )
    if not head.startswith(ZIP_MAGIC):
        raise _refuse(name, "this is not an .xlsx/.xlsm workbook (not a zip package)")
    if size > limits.max_file_bytes:
        raise _refuse(
            name,
            f"the file is {size / 2**20:.0f} MiB, over the limit of "
            f"{limits.max_file_bytes / 2**20:.0f} MiB for a closure plan",
        )


def _inspect_zip(zf: zipfile.ZipFile, name: str, limits: Limits) -> PackageReport:
    infos = zf.infolist()
    names = [i.filename for i in infos]
    report = PackageReport(parts=len(infos))
    if report.parts > limits.max_parts:
        raise _refuse(
            name, f"the package has {report.parts} parts, over the limit of {limits.max_parts}"
        )
    total = sum(i.file_size for i in infos)
    report.uncompressed_bytes = total
    if total > limits.max_uncompressed_bytes:
        raise _refuse(
            name,
            f"the workbook unpacks to {total / 2**20:.0f} MiB, over the limit "
            f"of {limits.max_uncompressed_bytes / 2**20:.0f} MiB (a zip bomb?)",
        )
    for i in infos:
        if i.file_size > 2**20 and i.file_size > limits.max_ratio * max(i.compress_size, 1):
            ratio = i.file_size / max(i.compress_size, 1)
            raise _refuse(
                name,
                f"part {i.filename} is compressed {ratio:.0f} to 1, a sign of a zip "
                "bomb; the file is refused",
            )
    if "xl/workbook.xml" not in names:
        raise _refuse(name, "the package has no workbook part; it is not a spreadsheet")
    left = limits.max_uncompressed_bytes
    for i in infos:
        if i.is_dir():
            continue
        scan = _scan_part(zf, i, left, _markers_for(i.filename))
        left -= i.file_size
        report.cells += scan.cells
        if report.cells > limits.max_cells:
            raise _refuse(
                name,
                f"the workbook holds over {limits.max_cells:,} cells, "
                "over the limit for a closure plan",
            )
        if scan.kind == "doctype":
            raise _refuse(
                name,
                f"part {i.filename} declares XML entities (<!DOCTYPE>/<!ENTITY>), "
                "which workbooks never need; refused",
            )
        if scan.kind == "wide":
            raise _refuse(
                name,
                f"part {i.filename} is XML in UTF-16/UTF-32, which spreadsheet programs do "
                "not write; open the file in your spreadsheet program and save it again",
            )
        why = _unkept_by_name(i.filename) or _unkept_from_scan(i.filename, scan)
        if why is not None:
            report.unkept.append(why)
    return report


def _declared_entries(f: BinaryIO) -> int | None:
    """Number of entries the zip's end record declares (``None``: no end record found).

    Read before :class:`zipfile.ZipFile` builds one record per entry, so a
    package claiming millions of parts is refused without building them.
    """
    f.seek(0, io.SEEK_END)
    size = f.tell()
    f.seek(max(size - _EOCD_SEARCH, 0))
    tail = f.read()
    at = tail.rfind(_EOCD)
    if at < 0 or len(tail) < at + 22:
        return None
    (entries,) = struct.unpack("<H", tail[at + 10 : at + 12])
    return entries


def _inspect(source: Path | io.BytesIO, name: str, limits: Limits) -> PackageReport:
    try:
        with source.open("rb") if isinstance(source, Path) else contextlib.nullcontext(source) as f:
            entries = _declared_entries(f)
            if entries is not None and entries > limits.max_parts:
                raise _refuse(
                    name,
                    f"the package has {entries} parts, over the limit of {limits.max_parts}",
                )
            f.seek(0)
            with zipfile.ZipFile(f) as zf:
                return _inspect_zip(zf, name, limits)
    except PlanError:
        raise
    except OverflowError:
        raise _refuse(
            name, "the workbook unpacks to more than its declared size; refused"
        ) from None
    except (zipfile.BadZipFile, zipfile.LargeZipFile, NotImplementedError, EOFError, ValueError):
        # damaged entries, an unknown compression method, a truncated stream, a bad CRC
        raise _refuse(name, "the file is damaged or not a workbook (bad zip package)") from None
    except RuntimeError:  # an encrypted zip entry
        raise _refuse(
            name, "the package has password-protected parts; it is not a workbook wzq can read"
        ) from None


def _stat_and_head(path: Path) -> tuple[int, bytes]:
    try:
        size = path.stat().st_size
        with path.open("rb") as f:
            head = f.read(8)
    except FileNotFoundError:
        raise _refuse(path.name, "no such file; check the path") from None
    except PermissionError:
        raise _refuse(path.name, "the file cannot be read (permission denied)") from None
    except IsADirectoryError:
        raise _refuse(path.name, "this is a folder, not a workbook") from None
    except OSError as e:
        raise _refuse(path.name, f"the file cannot be read ({e.strerror or e})") from None
    return size, head


def inspect_file(path: str | Path, limits: Limits = LIMITS) -> PackageReport:
    """Refuse a file that is not a safe workbook; report what openpyxl would lose."""
    path = Path(path)
    size, head = _stat_and_head(path)
    _check_head(path.name, size, head, path.suffix.lower(), limits)
    return _inspect(path, path.name, limits)


def inspect_bytes(
    data: bytes, name: str, suffix: str = ".xlsx", limits: Limits = LIMITS
) -> PackageReport:
    """:func:`inspect_file` for a workbook already in memory (``name`` is used in messages)."""
    _check_head(name, len(data), data[:8], suffix.lower(), limits)
    return _inspect(io.BytesIO(data), name, limits)


def read_checked(path: str | Path, limits: Limits = LIMITS) -> tuple[bytes, PackageReport]:
    """The bytes of a workbook file, inspected; parse these bytes, not the file again.

    The size is checked before the file is read, so a huge file is never
    loaded; the XML guard is checked too (:func:`require_defusedxml`).
    """
    path = Path(path)
    require_defusedxml()
    size, head = _stat_and_head(path)
    _check_head(path.name, size, head, path.suffix.lower(), limits)
    try:
        data = path.read_bytes()
    except OSError as e:
        raise _refuse(path.name, f"the file cannot be read ({e.strerror or e})") from None
    return data, inspect_bytes(data, path.name, path.suffix, limits)
