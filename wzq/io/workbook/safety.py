"""Checks a workbook file before any spreadsheet library parses it.

Designers open whatever is on their disk, sometimes a file from someone they do
not know. Before parsing, :func:`inspect_file` (and :func:`read_checked`, which
also hands back the bytes it checked, so that what is parsed is exactly what
was inspected) refuses, with a clear message:

- an empty file, a file that is not a workbook (not a zip package), an old
  binary ``.xls`` and an encrypted workbook (both are OLE compound files);
- a package over the documented limits (:data:`LIMITS`), checked as one
  pre-parse budget (:class:`Budget`) that counts what the parsers will
  allocate: file size, number of parts, total uncompressed size and the
  compression ratio of any part (zip bombs), from the package's directory
  before anything is inflated; then, streaming every XML part once in 1 MiB
  pieces and never parsing it: the cells (``<c`` followed by any XML
  whitespace, ``>`` or ``/``, under any namespace prefix), every merged range
  and every hyperlink over a range by its area (openpyxl makes one cell object
  for each cell they cover), every XML element (the parser makes an object for
  each, and keeps some), the used range of each sheet (its ``<dimension>`` and
  the farthest cell actually written: what a reader that builds a dense block,
  like Excel's used range behind the Recalculate button, pays for), and the
  bytes and strings of the shared-string table;
- XML with a document type declaration (``<!DOCTYPE``/``<!ENTITY``) anywhere in
  any part: entity expansion attacks; workbook XML never needs one. XML in
  UTF-16/UTF-32 is refused too, since it would hide such a declaration (and
  the cells) from the byte scan; spreadsheet programs write UTF-8.

As a second line of defence the XML parsers openpyxl uses for sheets and
shared strings are defusedxml's (openpyxl switches to them when defusedxml is
installed; :func:`require_defusedxml` refuses to go on when it did not), and
its other parts are parsed with entity resolution switched off.

It also lists the parts that openpyxl is known not to keep when it saves (drawn
shapes, text boxes, SmartArt, sparklines and other sheet extensions, slicers,
pivot tables, form and ActiveX controls, embedded objects, threaded comments,
data connections, chart styles made in Excel, pictures in EMF/WMF/SVG form, ...)
so that the writer puts the results in a copy rather than lose them; the
writer also compares the package before and after its save
(:mod:`wzq.io.workbook.kept`) for anything this list does not know.
"""

from __future__ import annotations

import contextlib
import html
import io
import re
import struct
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import BinaryIO

from openpyxl.utils.cell import column_index_from_string, get_column_letter

from wzq.engine.plan import PlanError, Problem
from wzq.io.workbook import layout as L

__all__ = [
    "LIMITS",
    "OLE_MAGIC",
    "ZIP_MAGIC",
    "Budget",
    "Limits",
    "PackageReport",
    "enforce_defusedxml",
    "inspect_bytes",
    "inspect_file",
    "read_checked",
    "read_part_checked",
    "read_small_part",
    "require_defusedxml",
    "shared_string_parts",
    "sheet_parts",
    "unkept_parts",
]

OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
ZIP_MAGIC = b"PK\x03\x04"


@dataclass(frozen=True)
class Limits:
    """Documented limits for a workbook the tool will open.

    The cell and element limits are set from what openpyxl pays for them
    (measured, in a separate process, with ``benchmarks/hostile.py``): about
    0.4 kB per cell and up to 0.4 kB per XML element it keeps, so a file at
    either limit needs some 400-600 MB to open; a closure plan of a year of
    15-minute demand with its results holds about 430,000 cells and 940,000
    elements.
    """

    max_file_bytes: int = 50 * 1024 * 1024
    max_parts: int = 5_000
    max_uncompressed_bytes: int = 300 * 1024 * 1024
    max_ratio: float = 200.0  # uncompressed / compressed, per part over 1 MiB
    #: Cells across all sheets, merged ranges and hyperlinks over a range by their area.
    max_cells: int = 1_000_000
    #: XML elements across all parts.
    max_elements: int = 1_500_000
    #: Cells in the used ranges of all sheets (first to last used cell, as a block).
    max_used_cells: int = 2_000_000
    #: The shared-string table: its size and its number of strings.
    max_shared_string_bytes: int = 32 * 1024 * 1024
    max_shared_strings: int = 500_000
    #: The longest single XML tag (spreadsheet programs write tags of a few kB at most).
    max_tag_bytes: int = 1024 * 1024


LIMITS = Limits()

_CHUNK = 1 << 20
_PREFIX = rb"(?:[\w.-]+:)?"  # any namespace prefix
#: A cell element: ``<c`` then any XML whitespace, ``>`` or ``/`` (XML 1.0, production S).
_ATTRS = rb"((?:\s+[^\s=<>/]+\s*=\s*(?:\"[^\"]*\"|'[^']*'))*)\s*/?>"
#: Elements whose ``ref`` openpyxl expands cell by cell, and the sheet's declared extent.
_RANGE_TAG = re.compile(rb"<" + _PREFIX + rb"(mergeCell|hyperlink|dimension)" + _ATTRS)
_REF_ATTR = re.compile(rb"(?:^|\s)ref\s*=\s*(?:\"([^\"]*)\"|'([^']*)')")
#: Where a cell or a row says it is (``r="XFD1048576"``, ``r="30"``).
_IN_CELL_OR_ROW = rb"<" + _PREFIX + rb"(?:c|row)\s(?:[^>\"']|\"[^\"]*\"|'[^']*')*?(?<=\s)r\s*=\s*"
_R_ATTR = re.compile(_IN_CELL_OR_ROW + rb"[\"']\$?([A-Za-z]{0,3})\$?(\d{1,7})[\"']")
_R_ATTR_ESCAPED = re.compile(_IN_CELL_OR_ROW + rb"(?:\"([^\"]*&#[^\"]*)\"|'([^']*&#[^']*)')")
_A1 = re.compile(r"^\$?([A-Za-z]{1,3})\$?(\d{1,7})$")
_COMPLETE_TAG = re.compile(rb"<[^<>\"']*(?:(?:\"[^\"]*\"|'[^']*')[^<>\"']*)*>")
_ROOT = re.compile(rb"<(?![?!])" + _PREFIX + rb"([\w.-]+)")
_DOCTYPE = re.compile(rb"<!(?:DOCTYPE|ENTITY)", re.IGNORECASE)
_WIDE_MARKS = (b"\xff\xfe", b"\xfe\xff", b"\x00\x00\xfe\xff", b"\x00<", b"<\x00")
_UTF8_BOM = b"\xef\xbb\xbf"
_EOCD = b"PK\x05\x06"  # end of central directory record (zip APPNOTE 4.3.16)
_EOCD_SEARCH = 22 + 65_535  # the record and the longest zip comment
_MAX_ROW, _MAX_COL = 1_048_576, 16_384  # the last cell of a sheet, XFD1048576

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
    ("xl/featurepropertybag/", "checkboxes in cells"),
    ("xl/metadata.xml", "dynamic-array formulas (they would become legacy array formulas)"),
    ("docmetadata/", "a sensitivity label"),
)
_CHART_STYLE = re.compile(r"^xl/charts/(?:style|colors)\d*\.xml$")
_UNKEPT_PICTURE = (".emf", ".wmf", ".svg")
#: Sheet elements openpyxl drops, and what they are to the user.
_SHEET_ELEMENTS: dict[str, str] = {
    "legacyDrawingHF": "a picture in the header or footer",
    "picture": "a sheet background picture",
    "ignoredErrors": "error checks switched off for some cells",
}
_SHEET_NAMES = [n.encode() for n in _SHEET_ELEMENTS]
_TAG_NAME = re.compile(rb"<" + _PREFIX + rb"([\w.-]+)")


@dataclass
class PackageReport:
    """What the pre-parse inspection found."""

    parts: int = 0
    uncompressed_bytes: int = 0
    cells: int = 0
    elements: int = 0
    used_cells: int = 0
    shared_strings: int = 0
    shared_string_bytes: int = 0
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


# --- the budget ---------------------------------------------------------------------------


def _unescape(raw: bytes) -> str:
    """An attribute value as the XML parser hands it over (``&#88;`` is ``X``)."""
    text = raw.decode("utf-8", "replace")
    return html.unescape(text) if "&" in text else text


def _box(ref: str) -> tuple[int, int, int, int] | None:
    """(first row, first column, last row, last column) of ``A1`` or ``A1:B2``; None if bad."""
    ends = []
    for end in ref.strip().split(":"):
        m = _A1.match(end.strip())
        if m is None:
            return None
        ends.append((int(m.group(2)), column_index_from_string(m.group(1).upper())))
    if len(ends) == 1:
        ends *= 2
    if len(ends) != 2:
        return None
    (r0, c0), (r1, c1) = ends
    return min(r0, r1), min(c0, c1), max(r0, r1), max(c0, c1)


def _area(box: tuple[int, int, int, int]) -> int:
    r0, c0, r1, c1 = box
    return (r1 - r0 + 1) * (c1 - c0 + 1)


def _cell_name(row: int, col: int) -> str:
    return f"{get_column_letter(col)}{row}"


@dataclass
class _Extent:
    """The block of cells a sheet part uses: first and last row and column seen."""

    r0: int = 0
    c0: int = 0
    r1: int = 0
    c1: int = 0

    def add(self, r0: int, c0: int, r1: int, c1: int) -> None:
        """Rows ``r0``-``r1`` and columns ``c0``-``c1`` (0 when only rows are known)."""
        self.r0 = min(self.r0, r0) if self.r1 else r0
        self.r1 = max(self.r1, r1)
        if c1:
            self.c0 = min(self.c0, c0) if self.c1 else c0
            self.c1 = max(self.c1, c1)

    @property
    def cells(self) -> int:
        if not self.r1:
            return 0
        return (self.r1 - self.r0 + 1) * ((self.c1 - self.c0 + 1) if self.c1 else 1)

    def text(self) -> str:
        c0, c1 = max(self.c0, 1), max(self.c1, 1)
        return f"{_cell_name(self.r0, c0)} to {_cell_name(self.r1, c1)}"


class Budget:
    """One pre-parse budget for a package: everything the parsers will allocate, counted.

    Each ``charge_*`` adds to a count and raises :class:`PlanError` naming the
    file, the part and what to do the moment a limit is passed, so that a file
    far over a limit is refused after reading only as much as shows it.
    """

    def __init__(self, name: str, limits: Limits, sheet_names: dict[str, str]) -> None:
        self.name = name
        self.limits = limits
        self.report = PackageReport()
        self.sheet_names = sheet_names
        self.extents: dict[str, _Extent] = {}
        #: Parts the package's content types call the shared-string table (openpyxl reads
        #: the table it finds that way, whatever its root element).
        self.shared_string_parts: set[str] = set()

    def where(self, part: str) -> str:
        sheet = self.sheet_names.get(part)
        return f"sheet '{sheet}' ({part})" if sheet else f"part {part}"

    def refuse(self, message: str) -> PlanError:
        return _refuse(self.name, message)

    def charge_cells(self, n: int, part: str, why: str = "") -> None:
        """``n`` more cells; ``why`` says where they come from when it is not plain cells."""
        self.report.cells += n
        if self.report.cells > self.limits.max_cells:
            why = why or (
                f"the last counted in {self.where(part)}; delete what is not needed, or "
                "split the workbook"
            )
            raise self.refuse(
                f"the workbook holds over {self.limits.max_cells:,} cells, over the limit for "
                f"a closure plan: {why}"
            )

    def charge_range(self, tag: str, ref: str, part: str) -> None:
        """A merged range or a hyperlink over a range: openpyxl makes every cell it covers."""
        box = _box(ref)
        if box is None:
            return
        self.extent(part).add(*box)
        area = _area(box)
        if area <= 1:
            return
        what, fix = (
            ("merged range", "unmerge it")
            if tag == "mergeCell"
            else ("hyperlink over the range", "remove the link")
        )
        self.charge_cells(
            area - 1,
            part,
            f"the {what} {ref.strip()} in {self.where(part)} covers {area:,} cells; {fix} "
            "or make it smaller",
        )

    def charge_elements(self, n: int, part: str) -> None:
        self.report.elements += n
        if self.report.elements > self.limits.max_elements:
            raise self.refuse(
                f"the workbook holds over {self.limits.max_elements:,} XML elements (the last "
                f"counted in {self.where(part)}), over the limit for a closure plan; it is "
                "damaged, hostile or far larger than a plan needs"
            )

    def charge_shared_strings(self, n: int, size: int) -> None:
        r = self.report
        r.shared_strings += n
        r.shared_string_bytes += size
        if r.shared_strings > self.limits.max_shared_strings:
            raise self.refuse(
                f"the shared-string table holds over {self.limits.max_shared_strings:,} "
                "different texts, over the limit for a closure plan"
            )
        self.check_shared_string_size(r.shared_string_bytes)

    def check_shared_string_size(self, size: int) -> None:
        """The shared-string table's size (as read so far, or as its zip entry declares it)."""
        if size > self.limits.max_shared_string_bytes:
            raise self.refuse(
                f"the shared-string table is over "
                f"{self.limits.max_shared_string_bytes / 2**20:.0f} MiB of text, over the "
                "limit for a closure plan"
            )

    def extent(self, part: str) -> _Extent:
        return self.extents.setdefault(part, _Extent())

    def charge_used_range(self) -> None:
        """The used ranges of all sheets, as blocks (checked when every part was read)."""
        used = {p: e.cells for p, e in self.extents.items() if e.cells}
        self.report.used_cells = sum(used.values())
        if self.report.used_cells <= self.limits.max_used_cells:
            return
        part = max(used, key=lambda p: used[p])
        e = self.extents[part]
        raise self.refuse(
            f"{self.where(part)} uses the cells {e.text()} ({used[part]:,} cells as a block; "
            f"all sheets {self.report.used_cells:,}, over the limit of "
            f"{self.limits.max_used_cells:,}); delete the stray cells far from your data "
            f"(the last one is {_cell_name(e.r1, max(e.c1, 1))}) and save it again"
        )


class _PartScan:
    """Streams one XML part's bytes through the budget, one complete run of tags at a time."""

    def __init__(self, budget: Budget, part: str, markers: re.Pattern | None) -> None:
        self.budget = budget
        self.part = part
        self.markers_re = markers
        self.markers: set[str] = set()
        self.kind = "xml"  # "xml", "binary", "doctype", "wide"
        self.root = ""
        self.cells = 0
        self.read = 0

    def first(self, head: bytes) -> bool:
        """Sort the part out from its first bytes; False when it is not XML to scan."""
        self.kind = _part_kind(head)
        if self.kind != "xml":
            return False
        m = _ROOT.search(head)
        self.root = m.group(1).decode("ascii", "replace") if m else ""
        return True

    def feed(self, text: bytes) -> None:
        """Count a piece of the part that holds only complete tags.

        Plain byte counts do the bulk; a regular expression runs only where a
        cheap look shows something it must read (an unusual way of writing a
        cell, a merged range, a marker), so hostile spellings cost time only
        in hostile files.
        """
        b = self.budget
        if b"<!" in text and _DOCTYPE.search(text):
            self.kind = "doctype"
            return
        tags = text.count(b"<") - text.count(b"</") - text.count(b"<?") - text.count(b"<!")
        b.charge_elements(tags, self.part)
        cells, usual = _count(text, b"c")
        if cells:
            self.cells += cells
            b.charge_cells(cells, self.part)
        if self.root == "sst" or self.part in b.shared_string_parts:
            b.charge_shared_strings(_count(text, b"si")[0], len(text))
        if cells or b"<row" in text or b":row" in text:
            self._extent(text, usual)
        if any(word in text for word in _RANGE_WORDS):
            self._ranges(text)
        if self.markers_re is not None and (
            self.markers_re is not _SHEET_MARKERS or any(w in text for w in _SHEET_WORDS)
        ):
            self.markers.update(_marker(m) for m in self.markers_re.findall(text))

    def _ranges(self, text: bytes) -> None:
        b = self.budget
        for tag, attrs in _RANGE_TAG.findall(text):
            m = _REF_ATTR.search(attrs)
            if m is None:
                continue
            ref = _unescape(m.group(1) if m.group(1) is not None else m.group(2))
            if tag == b"dimension":
                box = _box(ref)
                if box is not None:
                    b.extent(self.part).add(*box)
            elif tag == b"mergeCell" or ":" in ref:
                b.charge_range(tag.decode(), ref, self.part)

    def _extent(self, text: bytes, usual: bool) -> None:
        """The rows and columns the cells and rows of this piece say they are in."""
        cells = _USUAL_CELL_REF.findall(text)
        rows = _USUAL_ROW_REF.findall(text)
        odd = not usual or len(cells) != text.count(b"<c ") or len(rows) != text.count(b"<row")
        if odd and _ANY_R.search(text):
            # written some other way (another order, a prefix, other spaces): read every one
            cells = [(c, r) for c, r in _R_ATTR.findall(text) if c]
            rows = [r for c, r in _R_ATTR.findall(text) if not c]
            for raw in _R_ATTR_ESCAPED.findall(text) if b"&#" in text else ():
                box = _box(_unescape(raw[0] or raw[1]))
                if box is not None:
                    self.budget.extent(self.part).add(*box)
        if cells or rows:
            self._add_refs(cells, rows)

    def _add_refs(self, cells: list[tuple[bytes, bytes]], rows: list[bytes]) -> None:
        numbers = [int(d) for _, d in cells] + [int(d) for d in rows]
        cols = [column_index_from_string(c.decode()) for c in {c.upper() for c, _ in cells}]
        self.budget.extent(self.part).add(
            min(numbers), min(cols, default=0), max(numbers), max(cols, default=0)
        )


_USUAL_CELL_REF = re.compile(rb'<c r="([A-Z]{1,3})(\d{1,7})"')  # how Excel, openpyxl, ... write
_USUAL_ROW_REF = re.compile(rb'<row r="(\d{1,7})"')
_RANGE_WORDS = (b"mergeCell", b"hyperlink", b"dimension")
_ANY_R = re.compile(rb"r[ \t\r\n]*=")  # an attribute that may be ``r`` at all
_OTHER_SPACE = (b"\n", b"\t", b"\r")


def _count(text: bytes, name: bytes) -> tuple[int, bool]:
    """How many elements ``name`` start in ``text`` (any prefix, any XML whitespace after the
    name), and whether all were written the usual way (no prefix, a space or ``>``/``/``)."""
    usual = sum(text.count(b"<" + name + end) for end in (b" ", b">", b"/"))
    other = sum(text.count(b"<" + name + end) for end in _OTHER_SPACE)
    if b":" + name in text:  # a namespace prefix: x:c, x:si
        other += len(re.findall(rb"<[\w.-]+:" + name + rb"[\s>/]", text))
    return usual + other, other == 0


def _marker(found: bytes) -> str:
    """A marker as found (a word, or ``<x:name `` for an element: its name)."""
    m = _TAG_NAME.match(found)
    return (m.group(1) if m else found).decode("ascii", "replace")


def _part_kind(head: bytes) -> str:
    """``"xml"``, ``"wide"`` (UTF-16/32 XML) or ``"binary"`` from a part's first bytes."""
    if head.startswith(_WIDE_MARKS):
        return "wide"
    text = head[len(_UTF8_BOM) :] if head.startswith(_UTF8_BOM) else head
    return "xml" if text.lstrip(b" \t\r\n").startswith(b"<") else "binary"


def _complete_up_to(buf: bytes) -> int:
    """How much of ``buf`` holds only complete tags (the rest waits for the next piece)."""
    last = buf.rfind(b"<")
    if last < 0 or _COMPLETE_TAG.match(buf, last):
        return len(buf)
    return last


def _scan_part(
    zf: zipfile.ZipFile,
    info: zipfile.ZipInfo,
    budget: Budget,
    limit_left: int,
    markers: re.Pattern | None,
) -> _PartScan:
    """Stream one part through the budget: count, spot declarations and the given markers.

    Binary parts (pictures, the VBA project) are recognised from their first
    bytes and not scanned further. Raises :class:`OverflowError` when the part
    inflates past ``limit_left`` bytes (more than its declared size).
    """
    scan = _PartScan(budget, info.filename, markers)
    carry = b""
    with zf.open(info) as f:
        while True:
            chunk = f.read(_CHUNK)
            if not chunk:
                break
            if scan.read == 0 and not scan.first(chunk):
                return scan
            scan.read += len(chunk)
            if scan.read > limit_left:
                raise OverflowError
            buf = carry + chunk
            cut = _complete_up_to(buf)
            scan.feed(buf[:cut])
            carry = buf[cut:]
            if scan.kind == "doctype":
                return scan
            if len(carry) > budget.limits.max_tag_bytes:
                raise budget.refuse(
                    f"part {info.filename} holds an XML tag over "
                    f"{budget.limits.max_tag_bytes / 2**20:.0f} MiB long, which spreadsheet "
                    "programs never write; refused"
                )
    if carry:
        scan.feed(carry)
    return scan


def _markers_for(name: str) -> re.Pattern | None:
    low = name.lower()
    if low.startswith("xl/drawings/") and low.endswith(".xml"):
        return _SHAPE
    if low.startswith("xl/worksheets/") and low.endswith(".xml"):
        return _SHEET_MARKERS
    return None


_SHEET_WORDS = [*(m for m, _ in _SHEET_EXT), *_SHEET_NAMES]
_SHEET_MARKERS = re.compile(
    rb"<"
    + _PREFIX
    + rb"(?:"
    + b"|".join([*(m for m, _ in _SHEET_EXT), *_SHEET_NAMES])
    + rb")[\s>/]"
)


def _unkept_from_scan(name: str, scan: _PartScan) -> list[str]:
    low = name.lower()
    if low.startswith("xl/drawings/") and scan.markers:
        if scan.markers <= {"AlternateContent"}:
            return [f"{name} (controls or other drawing content)"]
        return [f"{name} (drawn shapes or text boxes)"]
    out = []
    if low.startswith("xl/worksheets/"):
        if "extLst" in scan.markers:
            what = next(w for m, w in _SHEET_EXT if m.decode() in scan.markers)
            out.append(f"{name} ({what})")
        out += [f"{name} ({what})" for el, what in _SHEET_ELEMENTS.items() if el in scan.markers]
    return out


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
    """Parts openpyxl is known to drop on save (so results should go to a copy).

    Reads drawing and sheet parts again; :func:`inspect_file` finds the same
    in the one pass it makes anyway.
    """
    out: list[str] = []
    budget = Budget("", Limits(max_cells=2**62, max_elements=2**62), {})
    for name in names:
        why = _unkept_by_name(name)
        if why is not None:
            out.append(why)
        elif (markers := _markers_for(name)) is not None:
            info = zf.getinfo(name)
            scan = _scan_part(zf, info, budget, LIMITS.max_uncompressed_bytes, markers)
            out += _unkept_from_scan(name, scan)
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


def _check_directory(zf: zipfile.ZipFile, name: str, limits: Limits) -> PackageReport:
    """The limits the zip's directory shows, before anything is inflated."""
    infos = zf.infolist()
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
    if "xl/workbook.xml" not in {i.filename for i in infos}:
        raise _refuse(name, "the package has no workbook part; it is not a spreadsheet")
    return report


#: Parts read to name the sheets in messages are read only up to this size.
_SMALL_PART = 4 * 2**20


def read_small_part(zf: zipfile.ZipFile, part: str, limit: int = _SMALL_PART) -> bytes | None:
    """A part's bytes when its directory entry says it is at most ``limit`` (None otherwise).

    Inflating stops at the declared size, so a part that claims to be small
    cannot unpack to more.
    """
    try:
        info = zf.getinfo(part)
    except KeyError:
        return None
    if info.file_size > limit:
        return None
    with zf.open(info) as f:
        return f.read(limit + 1)[:limit]


_SHEET_ENTRY = re.compile(rb"<" + _PREFIX + rb"sheet\s[^>]*>")
_ATTR = re.compile(rb"([\w:.-]+)\s*=\s*(?:\"([^\"]*)\"|'([^']*)')")
_RELATIONSHIP = re.compile(rb"<" + _PREFIX + rb"Relationship\s[^>]*>")


def _attributes(tag: bytes) -> dict[str, str]:
    return {
        k.decode("ascii", "replace").rsplit(":", 1)[-1]: _unescape(a if b is None else b)
        for k, a, b in ((m.group(1), m.group(2), m.group(3)) for m in _ATTR.finditer(tag))
    }


def sheet_parts(zf: zipfile.ZipFile) -> dict[str, str]:
    """Part name -> sheet name, from ``xl/workbook.xml`` and its relationships (best effort).

    Used only to name sheets in messages; a package too odd to map gives ``{}``.
    """
    workbook = read_small_part(zf, "xl/workbook.xml")
    rels = read_small_part(zf, "xl/_rels/workbook.xml.rels")
    if workbook is None or rels is None:
        return {}
    targets = {}
    for m in _RELATIONSHIP.finditer(rels):
        a = _attributes(m.group(0))
        target = a.get("Target", "")
        part = target.lstrip("/") if target.startswith("/") else "xl/" + target
        targets[a.get("Id", "")] = part
    out = {}
    for m in _SHEET_ENTRY.finditer(workbook):
        a = _attributes(m.group(0))
        if a.get("id") in targets and "name" in a:
            out[targets[a["id"]]] = a["name"]
    return out


_MARKER = re.compile(
    rb"<" + _PREFIX + rb"definedName\s[^>]*name=[\"']" + L.MARKER_NAME.encode() + rb"[\"'][^>]*>"
    rb"([^<]*)<"
)


def output_sheet_parts(zf: zipfile.ZipFile) -> set[str]:
    """The worksheet parts of wzq's own output sheets, as the marker names them.

    Commands that replace these sheets, or never read them, neither inflate nor
    parse these parts (:mod:`wzq.io.workbook.reader.skip` skips exactly this set).
    Only a part that is a package entry, the target of one sheet alone, and named
    by no other relationship part is in it; an odd package gives an empty set,
    and then every part is checked and parsed as usual.
    """
    workbook = read_small_part(zf, "xl/workbook.xml") or b""
    marker = [m for m in _MARKER.finditer(workbook) if b"localSheetId" not in m.group(0)]
    if len(marker) != 1:
        return set()
    text = html.unescape(marker[0].group(1).decode("utf-8", "replace")).strip().strip('"')
    ours = set(text.split(L.MARKER_SEPARATOR)) & set(L.OUTPUT_SHEETS)
    parts = sheet_parts(zf)
    entries = set(zf.namelist())
    targets = [part for part in parts if part in entries]
    out = {part for part in targets if parts[part] in ours}
    if len(_SHEET_ENTRY.findall(workbook)) != len(parts):
        return set()  # two sheets on one part, or a sheet without one: no shortcut
    for rels in (n for n in entries if n.endswith(".rels") and n != "xl/_rels/workbook.xml.rels"):
        text_rels = read_small_part(zf, rels)
        if text_rels is None:
            return set()
        out = {p for p in out if p.rsplit("/", 1)[-1].encode() not in text_rels}
    return out


_OVERRIDE = re.compile(rb"<" + _PREFIX + rb"Override\s[^>]*>")
_SHARED_STRINGS_TYPE = "spreadsheetml.sharedStrings+xml"


def shared_string_parts(zf: zipfile.ZipFile) -> set[str]:
    """The parts ``[Content_Types].xml`` gives the shared-string content type (best effort)."""
    types = read_small_part(zf, "[Content_Types].xml") or b""
    out = set()
    for m in _OVERRIDE.finditer(types):
        a = _attributes(m.group(0))
        if a.get("ContentType", "").endswith(_SHARED_STRINGS_TYPE):
            out.add(a.get("PartName", "").lstrip("/"))
    return out


def _inspect_zip(
    zf: zipfile.ZipFile, name: str, limits: Limits, skip_outputs: bool = False
) -> PackageReport:
    directory = _check_directory(zf, name, limits)
    # wzq's output sheets, when they are never parsed, are never inflated either
    unread = output_sheet_parts(zf) if skip_outputs else set()
    budget = Budget(name, limits, sheet_parts(zf))
    budget.shared_string_parts = shared_string_parts(zf)
    report = budget.report
    report.parts, report.uncompressed_bytes = directory.parts, directory.uncompressed_bytes
    for part in budget.shared_string_parts:  # its declared size, before inflating it
        with contextlib.suppress(KeyError):
            budget.check_shared_string_size(zf.getinfo(part).file_size)
    left = limits.max_uncompressed_bytes
    for i in zf.infolist():
        if i.is_dir() or i.filename in unread:
            continue
        scan = _scan_part(zf, i, budget, left, _markers_for(i.filename))
        left -= i.file_size
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
        why = _unkept_by_name(i.filename)
        report.unkept += [why] if why is not None else _unkept_from_scan(i.filename, scan)
    budget.charge_used_range()
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


@contextlib.contextmanager
def _open_package(source: Path | io.BytesIO, name: str, limits: Limits):
    """The zip package, its part count checked first; every zip failure a :class:`PlanError`."""
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
                yield zf
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


def _inspect(
    source: Path | io.BytesIO, name: str, limits: Limits, skip_outputs: bool = False
) -> PackageReport:
    with _open_package(source, name, limits) as zf:
        return _inspect_zip(zf, name, limits, skip_outputs)


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


def read_part_checked(
    path: str | Path, part: str, limit: int = _SMALL_PART, limits: Limits = LIMITS
) -> bytes | None:
    """One small part of a workbook file after the checks that need no inflating.

    The file's head and the package directory (parts, sizes, compression
    ratios) are checked first (:class:`PlanError` when they fail), then the
    part is read when it declares at most ``limit`` bytes (else ``None``).
    For a quick look at a file (is this a bulk summary?) without unpacking a
    zip bomb; anything that parses the workbook uses :func:`read_checked`.
    """
    path = Path(path)
    size, head = _stat_and_head(path)
    _check_head(path.name, size, head, path.suffix.lower(), limits)
    with _open_package(path, path.name, limits) as zf:
        _check_directory(zf, path.name, limits)
        return read_small_part(zf, part, limit)


def inspect_bytes(
    data: bytes,
    name: str,
    suffix: str = ".xlsx",
    limits: Limits = LIMITS,
    *,
    skip_outputs: bool = False,
) -> PackageReport:
    """:func:`inspect_file` for a workbook already in memory (``name`` is used in messages);
    ``skip_outputs``: as :func:`read_checked`."""
    _check_head(name, len(data), data[:8], suffix.lower(), limits)
    return _inspect(io.BytesIO(data), name, limits, skip_outputs)


def read_checked(
    path: str | Path, limits: Limits = LIMITS, *, skip_outputs: bool = False
) -> tuple[bytes, PackageReport]:
    """The bytes of a workbook file, inspected; parse these bytes, not the file again.

    The size is checked before the file is read, so a huge file is never
    loaded; the XML guard is checked too (:func:`require_defusedxml`). With
    ``skip_outputs`` the worksheet parts of wzq's own output sheets
    (:func:`output_sheet_parts`) are neither inflated nor counted: for callers
    that never parse them (the plan reader and ``wzq run`` load the workbook
    with :func:`wzq.io.workbook.reader.skip.load_skipping_outputs`).
    """
    path = Path(path)
    require_defusedxml()
    size, head = _stat_and_head(path)
    _check_head(path.name, size, head, path.suffix.lower(), limits)
    try:
        data = path.read_bytes()
    except OSError as e:
        raise _refuse(path.name, f"the file cannot be read ({e.strerror or e})") from None
    return data, inspect_bytes(data, path.name, path.suffix, limits, skip_outputs=skip_outputs)
