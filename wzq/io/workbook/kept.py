"""What a save would drop: the package before the save against the package after it.

openpyxl keeps what it understands and silently drops the rest when it saves
a workbook. A hand list of what it drops (:mod:`wzq.io.workbook.safety`) can
never be complete, so the writer also compares the package it read with the
package it wrote (:func:`lost_content`) before the new file replaces the old
one: every part (by content type), every relationship (by type) and every XML
element (by namespace and name), per sheet, that was in the file before and
is not in it after is content the user would lose, and the results then go to
a copy (:func:`wzq.io.workbook.run.run_to`). The parts of wzq's own output sheets
are left out of the comparison, since wzq replaces them.

Parts are matched by what they are, not by their names (openpyxl renames
parts: ``xl/comments1.xml`` becomes ``xl/comments/comment1.xml``), and
elements by their namespace and name, so the comparison does not depend on
how either program spelled the XML (prefixes, attribute order, whitespace).
The cells themselves (``sheetData``) are not compared: openpyxl keeps every
cell, and the cell-level features it cannot keep (dynamic-array flags, pictures
in cells) live in parts of their own that are compared.

Only what a spreadsheet program derives again on its next save, or stamps on
every save, is not counted as lost (:data:`DERIVED`): the calculation chain,
the shared-string table (the text stays in the cells), application statistics
and version stamps, the path the file was last saved at, the co-authoring
revision pointer, and elements that hold nothing (an empty header, a default
cell protection). Each entry says why.
"""

from __future__ import annotations

import io
import posixpath
import re
import zipfile
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path

from lxml import etree

from wzq.engine.plan import PlanError, Problem

__all__ = [
    "DERIVED",
    "WORDS",
    "WRAPPERS",
    "ContentLost",
    "keeps_everything",
    "lost_content",
]

_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
_CT = "http://schemas.openxmlformats.org/package/2006/content-types"
_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_R = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_MC = "http://schemas.openxmlformats.org/markup-compatibility/2006"
_EXT_PROPS = "http://schemas.openxmlformats.org/officeDocument/2006/extended-properties"
_VT = "http://schemas.openxmlformats.org/officeDocument/2006/docPropsVTypes"
_CORE = "http://schemas.openxmlformats.org/package/2006/metadata/core-properties"
_DC = "http://purl.org/dc/elements/1.1/"
_DCTERMS = "http://purl.org/dc/terms/"
_X14 = "http://schemas.microsoft.com/office/spreadsheetml/2009/9/main"
_X15 = "http://schemas.microsoft.com/office/spreadsheetml/2010/11/main"
_X15AC = "http://schemas.microsoft.com/office/spreadsheetml/2010/11/ac"
_XR = "http://schemas.microsoft.com/office/spreadsheetml/2014/revision"
_XCALCF = "http://schemas.microsoft.com/office/spreadsheetml/2018/calcfeatures"
_LIBREOFFICE = "http://schemas.libreoffice.org/"
_VML_EXCEL = "urn:schemas-microsoft-com:office:excel"
_A = "http://schemas.openxmlformats.org/drawingml/2006/main"
_A14 = "http://schemas.microsoft.com/office/drawing/2010/main"
_A16 = "http://schemas.microsoft.com/office/drawing/2014/main"

#: Elements that only wrap others: the elements inside them are compared instead.
WRAPPERS = frozenset(
    {f"{{{ns}}}{n}" for ns in (_MAIN, _A) for n in ("extLst", "ext")}
    | {f"{{{_MC}}}{n}" for n in ("AlternateContent", "Choice", "Fallback")}
)

#: What a save may drop because a spreadsheet program derives or stamps it again (element
#: or content type -> why). Entries about Excel's own stamps are from memory of the files
#: Excel writes (ECMA-376 and the [MS-XLSX] extensions name them); openpyxl's dropping of
#: each was seen on files written by XlsxWriter and LibreOffice.
DERIVED: dict[str, str] = {
    # parts (by content type) and relationships (by type)
    "sharedStrings": "the shared-string table: each text stays in its cell",
    "calcChain": "the order of the last recalculation: rebuilt by the spreadsheet program",
    # elements
    f"{{{_MAIN}}}fileVersion": "the version of the program that saved the file",
    f"{{{_X15AC}}}absPath": "the folder the file was last saved in",
    f"{{{_XR}}}revisionPtr": "the co-authoring revision stamp",
    f"{{{_X14}}}workbookPr": "the default picture resolution setting",
    f"{{{_X15}}}workbookPr": "the chart-tracking setting of newer Excel",
    f"{{{_XCALCF}}}calcFeatures": "the calculation features the saving program supports",
    f"{{{_LIBREOFFICE}}}extCalcPr": "LibreOffice's formula syntax setting",
    f"{{{_X14}}}slicerStyles": "the default slicer style name",
    f"{{{_X15}}}timelineStyles": "the default timeline style name",
    f"{{{_A16}}}creationId": "the identity number Excel gives each drawn object",
    f"{{{_A14}}}useLocalDpi": "whether a picture is compressed for the screen",
}
#: In the extended properties (``docProps/app.xml``) only what a person types is compared;
#: the rest are statistics the saving program writes (sheet names, program, version, times).
_EXTENDED = "extended-properties"
#: Elements that hold nothing when they have no text and only these attribute values.
_EMPTY_VALUES = frozenset({"", "0", "false"})
_EMPTY_OK = frozenset(
    {f"{{{_MAIN}}}{n}" for n in ("headerFooter", "oddHeader", "oddFooter", "evenHeader")}
    | {f"{{{_MAIN}}}{n}" for n in ("evenFooter", "firstHeader", "firstFooter", "protection")}
    | {f"{{{_DC}}}{n}" for n in ("creator", "title", "subject", "description")}
    | {f"{{{_CORE}}}{n}" for n in ("lastModifiedBy", "keywords", "category", "contentStatus")}
    | {f"{{{_EXT_PROPS}}}{n}" for n in ("Company", "Manager", "HyperlinkBase")}
    | {"{http://schemas.openxmlformats.org/officeDocument/2006/custom-properties}Properties"}
    | {f"{{{_A}}}avLst"}  # a shape's adjustments: empty means the preset's own
)
#: Extended properties a person types (the others are statistics the program writes).
_TYPED_PROPERTIES = frozenset(f"{{{_EXT_PROPS}}}{n}" for n in ("Company", "Manager"))

#: What the user would see as lost, by element, relationship type or content type.
WORDS: dict[str, str] = {
    "legacyDrawingHF": "a picture in the header or footer",
    "picture": "the sheet's background picture",
    "ignoredErrors": "error checks switched off for some cells",
    "ignoredError": "error checks switched off for some cells",
    f"{{{_VML_EXCEL}}}Visible": "a comment shown on the sheet (it would be hidden)",
    f"{{{_VML_EXCEL}}}Anchor": "the size and place of comment boxes",
    f"{{{_VML_EXCEL}}}TextHAlign": "the alignment of comment text",
    f"{{{_VML_EXCEL}}}TextVAlign": "the alignment of comment text",
    "featurePropertyBag": "checkboxes in cells",
    "xfComplement": "checkboxes in cells",
    "FeaturePropertyBag": "checkboxes in cells",
    "sheetMetadata": "dynamic-array formulas (they would become legacy array formulas)",
    "classificationlabels": "the sensitivity label",
    "printerSettings": "printer settings (tray, duplex, print quality)",
    "vmlDrawing": "a drawing in the legacy format (comments, buttons or header pictures)",
    "image": "a picture",
    "comments": "comments",
    "rPh": "phonetic guides (furigana) of some texts",
    "phoneticPr": "phonetic guide settings",
    "customXml": "custom XML data",
    "Company": "the Company document property",
    "Manager": "the Manager document property",
}
_COMMENT_FORMAT = "the formatting of comment text (font, size, colour)"


@dataclass
class _Package:
    """A workbook package read for comparison: parts, their types, owners and relationships."""

    zf: zipfile.ZipFile
    names: dict[str, str] = field(default_factory=dict)  # lower-case part name -> name
    types: dict[str, str] = field(default_factory=dict)  # part name -> content type
    owners: dict[str, set[str]] = field(default_factory=dict)  # part -> sheets reaching it

    def find(self, part: str) -> str | None:
        return self.names.get(part.lower())

    def xml(self, part: str) -> bytes:
        return self.zf.read(part)


def _parser(recover: bool = False) -> etree.XMLParser:
    # the package was inspected (no DOCTYPE); no entities, no network, comments dropped
    return etree.XMLParser(
        resolve_entities=False, no_network=True, remove_comments=True, recover=recover
    )


def _short(content_type: str) -> str:
    """``...spreadsheetml.worksheet+xml`` -> ``worksheet``."""
    last = re.split(r"[./]", content_type.split("+", 1)[0])[-1]
    return last or content_type


def _content_types(zf: zipfile.ZipFile, names: Iterable[str]) -> dict[str, str]:
    root = etree.fromstring(zf.read("[Content_Types].xml"), _parser())
    default, override = {}, {}
    for e in root:
        if e.tag == f"{{{_CT}}}Default":
            default[(e.get("Extension") or "").lower()] = e.get("ContentType", "")
        elif e.tag == f"{{{_CT}}}Override":
            override[(e.get("PartName") or "").lstrip("/").lower()] = e.get("ContentType", "")
    return {
        n: override.get(n.lower()) or default.get(n.rsplit(".", 1)[-1].lower(), "") for n in names
    }


def _rels_of(pkg: _Package, part: str) -> list[tuple[str, str | None, bool]]:
    """(relationship type, target part or None, external) of ``part`` ("" is the package)."""
    folder, name = posixpath.split(part)
    rels = pkg.find(posixpath.join(folder, "_rels", name + ".rels"))
    if rels is None:
        return []
    out = []
    for r in etree.fromstring(pkg.xml(rels), _parser()).iter(f"{{{_PKG_REL}}}Relationship"):
        kind = (r.get("Type") or "").rstrip("/").rsplit("/", 1)[-1]
        if r.get("TargetMode") == "External":
            out.append((kind, None, True))
            continue
        target = r.get("Target") or ""
        path = target.lstrip("/") if target.startswith("/") else posixpath.join(folder, target)
        out.append((kind, pkg.find(posixpath.normpath(path)), False))
    return out


def _open(data: bytes | Path) -> _Package:
    zf = zipfile.ZipFile(io.BytesIO(data) if isinstance(data, bytes) else data)
    parts = [n for n in zf.namelist() if not n.endswith("/")]
    pkg = _Package(zf, {n.lower(): n for n in parts})
    pkg.types = _content_types(zf, parts)
    workbook = next((t for k, t, _ in _rels_of(pkg, "") if k == "officeDocument" and t), None)
    if workbook is None:
        return pkg
    root = etree.fromstring(pkg.xml(workbook), _parser())
    by_id = {}
    folder = posixpath.dirname(workbook)
    rels = pkg.find(posixpath.join(folder, "_rels", posixpath.basename(workbook) + ".rels"))
    if rels is not None:
        for r in etree.fromstring(pkg.xml(rels), _parser()).iter(f"{{{_PKG_REL}}}Relationship"):
            target = r.get("Target") or ""
            path = target.lstrip("/") if target.startswith("/") else posixpath.join(folder, target)
            by_id[r.get("Id")] = pkg.find(posixpath.normpath(path))
    for sheet in root.iter(f"{{{_MAIN}}}sheet"):
        part = by_id.get(sheet.get(f"{{{_R}}}id"))
        if part is None:
            continue
        todo, seen = [part], set()
        while todo:
            p = todo.pop()
            if p in seen:
                continue
            seen.add(p)
            pkg.owners.setdefault(p, set()).add(sheet.get("name", ""))
            todo += [t for _, t, _ in _rels_of(pkg, p) if t is not None]
    return pkg


_SHEET_DATA = re.compile(rb"<(?:[\w.-]+:)?sheetData[\s>/]")


def _without_cells(xml: bytes) -> bytes:
    """A sheet's XML with the content of ``sheetData`` cut out (cells are not compared)."""
    m = _SHEET_DATA.search(xml)
    if m is None:
        return xml
    open_end = xml.find(b">", m.end() - 1)
    if open_end < 0 or xml[open_end - 1 : open_end] == b"/":
        return xml
    close = xml.rfind(b"</", open_end)
    while close >= 0 and not re.match(rb"</(?:[\w.-]+:)?sheetData\s*>", xml[close:]):
        close = xml.rfind(b"</", open_end, close)
    return xml if close < 0 else xml[: open_end + 1] + xml[close:]


def _holds_nothing(el: etree._Element) -> bool:
    if any((t or "").strip() for t in el.itertext()):
        return False
    for e in el.iter():
        values = {v.strip().lower() for v in e.attrib.values()}
        if e.tag == f"{{{_MAIN}}}protection":
            values -= {"1", "true"} if e.get("locked") is not None else set()
        if not values <= _EMPTY_VALUES:
            return False
    return True


def _elements(pkg: _Package, part: str, kind: str) -> set[str]:
    """The namespaced names of the elements in an XML part that hold something."""
    data = pkg.xml(part)
    if data.lstrip()[:1] != b"<" and not data.startswith(b"\xef\xbb\xbf"):
        return set()
    if kind == "worksheet":
        data = _without_cells(data)
    try:  # legacy drawings (VML) from Excel are often not well-formed XML
        root = etree.fromstring(data, _parser(recover=kind == "vmlDrawing"))
    except etree.XMLSyntaxError:
        return {f"(unreadable XML part of type {kind})"}
    if root is None:
        return set()
    found: set[str] = set()
    stack = [root]
    while stack:
        el = stack.pop()
        tag = el.tag
        if not isinstance(tag, str):
            continue
        if tag in DERIVED or (kind == _EXTENDED and tag not in _TYPED_PROPERTIES):
            continue
        if tag in _EMPTY_OK and _holds_nothing(el):
            continue
        if tag not in WRAPPERS:
            found.add(tag)
        stack.extend(el)
    return found


def _facts(pkg: _Package, skip: frozenset[str]) -> dict[tuple[str, ...], str]:
    """Every fact of the package -> the sheet (or "") it belongs to."""
    facts: dict[tuple[str, ...], str] = {}
    empty: set[str] = set()  # XML parts that hold nothing (e.g. no custom properties)
    parts = []
    for part, ctype in pkg.types.items():
        if part.lower().endswith(".rels") or part == "[Content_Types].xml":
            continue
        sheets = pkg.owners.get(part, set())
        if sheets and sheets <= skip:
            continue  # wzq's own output sheets are replaced on every run
        owner = ", ".join(sorted(sheets - skip))
        kind = "image" if ctype.startswith("image/") else _short(ctype)
        if kind in DERIVED:
            continue
        if ctype.endswith("xml") or part.lower().endswith((".xml", ".vml")):
            tags = _elements(pkg, part, kind)
            if not tags and kind != _EXTENDED:
                empty.add(part)
                continue
            for tag in tags:
                facts[(owner, "element", kind, tag)] = owner
        facts[(owner, "part", kind)] = owner
        parts.append((part, owner, kind))
    for part, owner, kind in [*parts, ("", "", "package")]:
        for rel, target, external in _rels_of(pkg, part):
            if target in empty or rel in DERIVED:
                continue
            if target is not None and _short(pkg.types[target]) in DERIVED:
                continue
            facts[(owner, "rel", kind, rel, str(external))] = owner
    return facts


def _words(fact: tuple[str, ...]) -> str:
    kind = fact[1]
    if kind == "element":
        tag = fact[3]
        local = tag.rsplit("}", 1)[-1]
        if fact[2] == "comments" and tag.startswith(f"{{{_MAIN}}}") and local != "comment":
            return _COMMENT_FORMAT
        return WORDS.get(tag) or WORDS.get(local) or f"'{local}' in the {fact[2]} part"
    what = fact[3] if kind == "rel" else fact[2]
    for key, words in WORDS.items():
        if key.lower() in what.lower():
            return words
    return f"a part of type '{what}'" if kind == "part" else f"a link of type '{what}'"


def lost_content(
    before: bytes | Path, after: bytes | Path, skip_sheets: Iterable[str] = ()
) -> list[str]:
    """What the package ``after`` lacks that ``before`` had, in the user's words.

    One entry per sheet (or the workbook) saying what would be lost there, e.g.
    ``sheet 'My checks': a picture, a picture in the header or footer``. Sheets in
    ``skip_sheets`` (wzq's own output sheets) are not compared.
    """
    skip = frozenset(skip_sheets)
    old, new = _open(before), _open(after)
    try:
        kept = _facts(new, skip)
        lost = {f: owner for f, owner in _facts(old, skip).items() if f not in kept}
    finally:
        old.zf.close()
        new.zf.close()
    by_place: dict[str, set[str]] = {}
    for fact, owner in lost.items():
        if fact[1] == "element" and (owner, "part", fact[2]) in lost:
            continue  # the whole part is lost: it is named once
        by_place.setdefault(owner, set()).add(_words(fact))
    places = {owner: f"sheet '{owner}'" if owner else "the workbook" for owner in by_place}
    return [f"{places[o]}: {', '.join(sorted(w))}" for o, w in sorted(by_place.items())]


class ContentLost(PlanError):
    """Saving would drop what the user made (``lost``: in the user's words)."""

    def __init__(self, where: str, lost: list[str]) -> None:
        self.lost = lost
        super().__init__([Problem(where, "; ".join(lost))])


def keeps_everything(before: bytes, where: str, skip_sheets: Iterable[str]):
    """A check for :func:`wzq.io.workbook.save.save_atomic`: the saved file lost nothing of
    ``before``, else :class:`ContentLost` (a comparison that fails counts as a loss)."""
    skip = tuple(skip_sheets)

    def verify(saved: Path) -> None:
        try:
            lost = lost_content(before, saved, skip)
        except Exception as e:  # an odd package the comparison cannot read: keep the original
            lost = [
                f"the workbook could not be compared before and after saving ({type(e).__name__})"
            ]
        if lost:
            raise ContentLost(where, lost)

    return verify
