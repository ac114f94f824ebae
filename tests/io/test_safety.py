"""Hostile and broken files are refused before parsing, with a clear message."""

from __future__ import annotations

import io
import random
import tracemalloc
import zipfile
from pathlib import Path

import openpyxl
import pytest

from wzq.engine.plan import PlanError
from wzq.io.workbook.safety import OLE_MAGIC, Limits, inspect_file

LAUGHS = (
    b'<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol">'
    + b"".join(
        b'<!ENTITY lol%d "%s">' % (i, b"&lol%d;" % (i - 1) * 10 if i > 1 else b"&lol;" * 10)
        for i in range(1, 10)
    )
    + b']><sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
    b"<si><t>&lol9;</t></si></sst>"
)


def plain_workbook(path: Path) -> Path:
    wb = openpyxl.Workbook()
    wb.active["A1"] = "hello"
    wb.save(path)
    return path


def rewrite(src: Path, dst: Path, replace: dict[str, bytes]) -> Path:
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for item in zin.infolist():
            data = replace.pop(item.filename, None)
            zout.writestr(item, data if data is not None else zin.read(item.filename))
        for name, data in replace.items():
            zout.writestr(name, data)
    return dst


def refused(path: Path, match: str, limits: Limits | None = None) -> str:
    tracemalloc.start()
    with pytest.raises(PlanError, match=match) as e:
        inspect_file(path, limits) if limits else inspect_file(path)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert peak < 64 * 2**20  # bounded memory: the file is never inflated whole
    assert path.name in str(e.value)
    return str(e.value)


def test_a_plain_workbook_passes(tmp_path: Path) -> None:
    report = inspect_file(plain_workbook(tmp_path / "ok.xlsx"))
    assert report.cells == 1
    assert report.unkept == []


def test_entity_expansion_is_refused(tmp_path: Path) -> None:
    # the "billion laughs" entity expansion (OWASP XML External Entity guidance)
    src = plain_workbook(tmp_path / "a.xlsx")
    bad = rewrite(src, tmp_path / "laughs.xlsx", {"xl/sharedStrings.xml": LAUGHS})
    refused(bad, "declares XML entities")


def test_zip_bomb_by_ratio_is_refused(tmp_path: Path) -> None:
    src = plain_workbook(tmp_path / "a.xlsx")
    zeros = b"<x/>" + b" " * (8 * 2**20)
    bad = rewrite(src, tmp_path / "bomb.xlsx", {"xl/worksheets/sheet2.xml": zeros})
    refused(bad, "zip bomb")


def test_zip_bomb_by_total_size_is_refused(tmp_path: Path) -> None:
    src = plain_workbook(tmp_path / "a.xlsx")
    filler = bytes(range(256)) * (2**20 // 256)  # incompressible enough to pass the ratio
    bad = rewrite(src, tmp_path / "big.xlsx", {"xl/media/filler.bin": filler * 3})
    refused(bad, "unpacks to", Limits(max_uncompressed_bytes=2 * 2**20))


def test_too_many_cells_is_refused(tmp_path: Path) -> None:
    wb = openpyxl.Workbook()
    ws = wb.active
    for _ in range(300):
        ws.append(list(range(10)))
    wb.save(tmp_path / "cells.xlsx")
    refused(tmp_path / "cells.xlsx", "over 1,000 cells", Limits(max_cells=1000))


def test_not_a_workbook_renamed(tmp_path: Path) -> None:
    p = tmp_path / "notes.xlsx"
    p.write_text("these are my notes, not a workbook\n")
    refused(p, "not an .xlsx/.xlsm workbook")


def test_zip_that_is_not_a_spreadsheet(tmp_path: Path) -> None:
    p = tmp_path / "archive.xlsx"
    with zipfile.ZipFile(p, "w") as z:
        z.writestr("readme.txt", "hello")
    refused(p, "no workbook part")


def test_damaged_zip(tmp_path: Path) -> None:
    data = plain_workbook(tmp_path / "a.xlsx").read_bytes()
    p = tmp_path / "damaged.xlsx"
    p.write_bytes(data[: len(data) // 2])
    refused(p, "damaged or not a workbook")


def test_encrypted_workbook(tmp_path: Path) -> None:
    msoffcrypto = pytest.importorskip("msoffcrypto", reason="msoffcrypto-tool comes with oletools")
    from msoffcrypto.format.ooxml import OOXMLFile

    src = plain_workbook(tmp_path / "a.xlsx")
    out = io.BytesIO()
    with src.open("rb") as f:
        OOXMLFile(f).encrypt("secret", out)
    p = tmp_path / "locked.xlsx"
    p.write_bytes(out.getvalue())
    assert msoffcrypto is not None
    refused(p, "encrypted or password-protected")


def test_old_binary_xls(tmp_path: Path) -> None:
    # an OLE compound file header (MS-CFB) is what every .xls begins with
    p = tmp_path / "old.xls"
    p.write_bytes(OLE_MAGIC + bytes(504))
    refused(p, "old binary .xls")


def test_empty_file(tmp_path: Path) -> None:
    p = tmp_path / "empty.xlsx"
    p.write_bytes(b"")
    refused(p, "the file is empty")


def test_unkept_parts_are_listed(tmp_path: Path) -> None:
    src = plain_workbook(tmp_path / "a.xlsx")
    shape = (
        b'<xdr:wsDr xmlns:xdr="http://schemas.openxmlformats.org/drawingml/2006/'
        b'spreadsheetDrawing"><xdr:twoCellAnchor><xdr:sp><xdr:txBody/></xdr:sp>'
        b"</xdr:twoCellAnchor></xdr:wsDr>"
    )
    bad = rewrite(src, tmp_path / "shapes.xlsx", {"xl/drawings/drawing1.xml": shape})
    report = inspect_file(bad)
    assert report.unkept == ["xl/drawings/drawing1.xml (drawn shapes or text boxes)"]


# --- the budget counts what the parser will allocate (issue 15) ----------------------------

MAIN = b"http://schemas.openxmlformats.org/spreadsheetml/2006/main"


def noise(n: int) -> bytes:
    """``n`` letters that do not compress much (a part of them stays under the ratio limit)."""
    return random.Random(n).randbytes(n // 2 + 1).hex().encode()[:n]


def with_sheet(tmp_path: Path, body: bytes, name: str = "odd.xlsx", **parts: bytes) -> Path:
    """A workbook whose first sheet's data is ``body`` (and any other parts given)."""
    src = plain_workbook(tmp_path / "a.xlsx")
    sheet = b'<worksheet xmlns="%s" xmlns:x="%s"><sheetData>%s</sheetData></worksheet>' % (
        MAIN,
        MAIN,
        body,
    )
    return rewrite(src, tmp_path / name, {"xl/worksheets/sheet1.xml": sheet, **parts})


def test_cells_are_counted_under_any_prefix_and_after_any_whitespace(tmp_path: Path) -> None:
    # XML 1.0 (production S): space, tab, carriage return or line feed may follow a name
    cells = b"<c/><c>1</c><c r='A3'/><c\tr='A4'/><c\rr='A5'/><c\nr='A6'/><x:c r='A7'/><x:c\n/>"
    report = inspect_file(with_sheet(tmp_path, b"<row>" + cells + b"</row>"))
    assert report.cells == 8  # counted by hand
    assert report.used_cells == 5  # A3 to A7: the block of the cells that say where they are


def test_a_merged_range_split_between_two_pieces_is_still_counted(tmp_path: Path) -> None:
    # the tag starts 10 bytes before the first 1 MiB piece ends
    head = b'<worksheet xmlns="%s"><sheetData/>' % MAIN
    pad = b"<x>" + noise(2**20 - 10 - len(head) - len(b"<x></x><mergeCells>")) + b"</x>"
    sheet = head + pad + b'<mergeCells><mergeCell ref="A1:B600"/></mergeCells></worksheet>'
    assert sheet.index(b"<mergeCell ") == 2**20 - 10
    bad = rewrite(
        plain_workbook(tmp_path / "a.xlsx"),
        tmp_path / "split.xlsx",
        {"xl/worksheets/sheet1.xml": sheet},
    )
    refused(
        bad,
        "the merged range A1:B600 in sheet 'Sheet' .* covers 1,200 cells",
        Limits(max_cells=1000),
    )


def test_a_reference_spelled_with_character_references_is_read_as_the_parser_reads_it(
    tmp_path: Path,
) -> None:
    body = b'<row r="1"><c r="A1"/></row><row r="1048576"><c r="&#88;F&#x44;1048576"/></row>'
    refused(with_sheet(tmp_path, body), "uses the cells A1 to XFD1048576")


def test_shared_strings_are_found_by_their_content_type_whatever_the_root(tmp_path: Path) -> None:
    # openpyxl reads the part the content types name, and any <si> in it
    strings = b'<anything xmlns="%s">%s</anything>' % (MAIN, b"<si><t>x</t></si>" * 1200)
    types = (
        b'<?xml version="1.0"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/'
        b'content-types"><Default Extension="xml" ContentType="application/xml"/>'
        b'<Override PartName="/xl/words.xml" ContentType="application/vnd.openxmlformats-'
        b'officedocument.spreadsheetml.sharedStrings+xml"/></Types>'
    )
    bad = with_sheet(tmp_path, b"", **{"xl/words.xml": strings, "[Content_Types].xml": types})
    refused(bad, "over 1,000 different texts", Limits(max_shared_strings=1000))


def test_a_tag_longer_than_the_limit_is_refused(tmp_path: Path) -> None:
    body = b'<row r="1"><c r="A1" junk="' + noise(3 * 2**20) + b'"/></row>'
    refused(with_sheet(tmp_path, body), "an XML tag over 1 MiB long")


def test_elements_are_counted_wherever_they_are(tmp_path: Path) -> None:
    body = b"<row r='1'><c r='A1'><v>1</v></c></row>" + b"<kept/>" * 1200
    refused(with_sheet(tmp_path, body), "over 1,000 XML elements", Limits(max_elements=1000))
