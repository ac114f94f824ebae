"""Hostile files, round two: every limit counted the way the parser pays for it (issue 15).

Each file of the corpus is made here, at test time, by a small function named
after what it tests, from the invented Kestrel Ridge Parkway plan typed into a
fresh template; large parts are stored uncompressed, so that the limit under
test, not the compression-ratio check, is what refuses them. Every file goes
through every entry point (``check``, ``show``, ``run``, ``report``,
``windows``, ``spacetime``, ``batch``), each in a process of its own
(``tests/entry_points.py``), which must refuse it with exit status 2 and one
line naming the file and the reason, within 5 s and 500 MB of peak memory
measured from outside the process, leaving the file byte-identical and
writing nothing. The Recalculate button's live backend refuses the cases that
reach it (a used range stretched by a merged range or a far cell).

Cases of the issue: 1 a merged range over most of a sheet; 2 a value at the last
cell of a sheet beside a formula input (the saved-value reader built a dense
block); 3 a zip bomb in the workbook part, seen by ``batch`` before its safety
checks; 4 cells written ``<c`` + newline; 5 shared strings under the ratio limit.
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import re
import zipfile
import zlib
from collections.abc import Callable, Iterator
from pathlib import Path

import openpyxl
import pytest
from entry_points import AVAILABLE, run_jobs
from fake_xlwings import open_book
from workbook_helpers import fill_template, named_cell

from wzq.io.jsonplan import load_plan
from wzq.io.live import backend as live
from wzq.io.workbook import layout

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

ROOT = Path(__file__).resolve().parents[2]
KESTREL = ROOT / "examples" / "kestrel_ridge_weeknight.json"
MAIN_NS = b"http://schemas.openxmlformats.org/spreadsheetml/2006/main"
SECONDS = 5.0
PEAK_MIB = 500.0
MIB = 2**20

# --- the package, part by part --------------------------------------------------------------


def parts_of(data: bytes) -> dict[str, bytes]:
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        return {n: z.read(n) for n in z.namelist()}


def zipped(parts: dict[str, bytes], stored: Iterator[str] | tuple[str, ...] = ()) -> bytes:
    """A package; the parts named in ``stored`` are not compressed (ratio 1 to 1)."""
    stored = set(stored)
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            z.writestr(name, data, zipfile.ZIP_STORED if name in stored else zipfile.ZIP_DEFLATED)
    return out.getvalue()


def sheet_part(parts: dict[str, bytes], sheet: str) -> str:
    """The part of the sheet named ``sheet`` (through the workbook and its relationships)."""
    rid = re.search(rb'name="%s"[^>]*r:id="(rId\d+)"' % sheet.encode(), parts["xl/workbook.xml"])
    rels = parts["xl/_rels/workbook.xml.rels"]
    target = re.search(rb'Target="/?(?:xl/)?([^"]+)" Id="%s"' % rid.group(1), rels)
    return "xl/" + target.group(1).decode()


def edit_sheet(parts: dict[str, bytes], sheet: str, edit: Callable[[bytes], bytes]) -> None:
    name = sheet_part(parts, sheet)
    parts[name] = edit(parts[name])


def after_cells(extra: bytes) -> Callable[[bytes], bytes]:
    return lambda xml: xml.replace(b"</sheetData>", b"</sheetData>" + extra, 1)


def last_row(row: bytes) -> Callable[[bytes], bytes]:
    return lambda xml: xml.replace(b"</sheetData>", row + b"</sheetData>", 1)


def add_part(parts: dict[str, bytes], name: str, content_type: str, rel_type: str) -> None:
    """Register a new workbook-level part (content type and relationship from the workbook)."""
    parts["[Content_Types].xml"] = parts["[Content_Types].xml"].replace(
        b"</Types>",
        b'<Override PartName="/%s" ContentType="%s"/></Types>' % (name.encode(), content_type),
    )
    parts["xl/_rels/workbook.xml.rels"] = parts["xl/_rels/workbook.xml.rels"].replace(
        b"</Relationships>",
        b'<Relationship Type="%s" Target="/%s" Id="rId900"/></Relationships>'
        % (rel_type, name.encode()),
    )


def add_sheet(parts: dict[str, bytes], sheet: str, cells: bytes) -> None:
    """A sheet of the user's own, holding ``cells`` (rows of ``<c>``)."""
    name = "xl/worksheets/sheet99.xml"
    parts[name] = b'<worksheet xmlns="%s"><sheetData>%s</sheetData></worksheet>' % (MAIN_NS, cells)
    parts["[Content_Types].xml"] = parts["[Content_Types].xml"].replace(
        b"</Types>",
        b'<Override PartName="/%s" ContentType="application/vnd.openxmlformats-officedocument'
        b'.spreadsheetml.worksheet+xml"/></Types>' % name.encode(),
    )
    parts["xl/_rels/workbook.xml.rels"] = parts["xl/_rels/workbook.xml.rels"].replace(
        b"</Relationships>",
        b'<Relationship Type="http://schemas.openxmlformats.org/officeDocument/2006/'
        b'relationships/worksheet" Target="/%s" Id="rId901"/></Relationships>' % name.encode(),
    )
    parts["xl/workbook.xml"] = parts["xl/workbook.xml"].replace(
        b"</sheets>",
        b'<sheet xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships" '
        b'name="%s" sheetId="99" state="visible" r:id="rId901"/></sheets>' % sheet.encode(),
    )


SHARED_STRINGS = (
    b"application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml",
    b"http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings",
)


def with_shared_strings(base: bytes, strings: Iterator[bytes]) -> bytes:
    parts = parts_of(base)
    body = b"".join(b"<si><t>%s</t></si>" % s for s in strings)
    parts["xl/sharedStrings.xml"] = b'<sst xmlns="%s">%s</sst>' % (MAIN_NS, body)
    add_part(parts, "xl/sharedStrings.xml", *SHARED_STRINGS)
    return zipped(parts, stored=["xl/sharedStrings.xml"])


@contextlib.contextmanager
def repeating_deflate(block: bytes) -> Iterator[None]:
    """While open, zipfile compresses a stream of identical blocks by repeating the deflate
    output of one block (after the first, each block flushed on a byte boundary compresses
    to the same bytes), so a 2 GiB part takes a second to make instead of many."""
    real = zipfile._get_compressor

    class Repeat:
        def __init__(self) -> None:
            self.z = zlib.compressobj(9, zlib.DEFLATED, -15)
            self.first = self.z.compress(block) + self.z.flush(zlib.Z_SYNC_FLUSH)
            self.next = self.z.compress(block) + self.z.flush(zlib.Z_SYNC_FLUSH)
            self.calls = 0

        def compress(self, data: bytes) -> bytes:
            assert data is block
            self.calls += 1
            return self.first if self.calls == 1 else self.next

        def flush(self) -> bytes:
            return self.z.flush()

    zipfile._get_compressor = lambda *a, **k: Repeat()
    try:
        yield
    finally:
        zipfile._get_compressor = real


# --- the hostile corpus: one small function per file -----------------------------------------


def merged_range_over_most_of_a_sheet(base: bytes) -> bytes:
    """Case 1: one merged range from E30 to the last cell of the Limits sheet."""
    parts = parts_of(base)
    merge = b'<mergeCells count="1"><mergeCell ref="E30:XFD1048576"/></mergeCells>'
    edit_sheet(parts, layout.LIMITS, after_cells(merge))
    return zipped(parts)


def merged_ranges_on_several_sheets(base: bytes) -> bytes:
    """Five merged ranges of 260,000 cells, one per input sheet: each under the cell limit."""
    parts = parts_of(base)
    merge = b'<mergeCells count="1"><mergeCell ref="AA1:AZ10000"/></mergeCells>'
    for sheet in layout.INPUT_SHEETS:
        edit_sheet(parts, sheet, after_cells(merge))
    return zipped(parts)


def merged_range_spelled_with_character_references(base: bytes) -> bytes:
    """Case 1 with the column written ``&#88;FD`` (XML reads it as ``XFD``)."""
    parts = parts_of(base)
    merge = b'<mergeCells count="1"><mergeCell ref="E30:&#88;FD1048576"/></mergeCells>'
    edit_sheet(parts, layout.LIMITS, after_cells(merge))
    return zipped(parts)


def hyperlink_over_most_of_a_sheet(base: bytes) -> bytes:
    """A hyperlink over E30:XFD1048576: openpyxl gives every cell of the range the link."""
    parts = parts_of(base)
    link = b'<hyperlinks><hyperlink ref="E30:XFD1048576" location="Site!A1"/></hyperlinks>'
    edit_sheet(parts, layout.LIMITS, after_cells(link))
    return zipped(parts)


def far_cell_beside_a_formula_input(base: bytes) -> bytes:
    """Case 2: the speed limit typed as ``=60+5`` (saved result 65) and a 1 in XFD1048576."""
    book = openpyxl.load_workbook(io.BytesIO(base))
    cell = named_cell(book, "site_speed_limit")
    cell.value = "=60+5"
    out = io.BytesIO()
    book.save(out)
    parts = parts_of(out.getvalue())
    far = b'<row r="1048576"><c r="XFD1048576"><v>1</v></c></row>'

    def edit(xml: bytes) -> bytes:
        xml = re.sub(rb"<f>60\+5</f><v\s*(?:/>|></v>)", b"<f>60+5</f><v>65</v>", xml)
        assert b"<v>65</v>" in xml
        return last_row(far)(xml)

    edit_sheet(parts, cell.parent.title, edit)
    return zipped(parts)


def far_cell_on_the_demand_sheet(base: bytes) -> bytes:
    parts = parts_of(base)
    far = b'<row r="1048576"><c r="XFD1048576" t="inlineStr"><is><t>x</t></is></c></row>'
    edit_sheet(parts, layout.DEMAND, last_row(far))
    return zipped(parts)


def far_cell_on_a_users_own_sheet(base: bytes) -> bytes:
    parts = parts_of(base)
    cells = (
        b'<row r="1"><c r="A1"><v>1</v></c></row>'
        b'<row r="1048576"><c r="XFD1048576"><v>2</v></c></row>'
    )
    add_sheet(parts, "My notes", cells)
    return zipped(parts)


def used_range_declared_over_the_whole_sheet(base: bytes) -> bytes:
    """The sheet's ``<dimension>`` says A1:XFD1048576 (readers that trust it build that block)."""
    parts = parts_of(base)
    edit_sheet(
        parts,
        layout.SITE,
        lambda xml: re.sub(rb'<dimension ref="[^"]*"/>', b'<dimension ref="A1:XFD1048576"/>', xml),
    )
    return zipped(parts)


def zip_bomb_in_the_workbook_part(base: bytes) -> bytes:
    """Case 3: a 2 MB file whose ``xl/workbook.xml`` unpacks to 2 GiB."""
    parts = parts_of(base)
    del parts["xl/workbook.xml"]
    out = io.BytesIO(zipped(parts))
    block = b" " * MIB
    with (
        repeating_deflate(block),
        zipfile.ZipFile(out, "a", zipfile.ZIP_DEFLATED) as z,
        z.open("xl/workbook.xml", "w", force_zip64=True) as f,
    ):
        for _ in range(2048):
            f.write(block)
    return out.getvalue()


def _cells_after(base: bytes, space: bytes, n: int = 1_100_000) -> bytes:
    """``n`` empty cells on the Start sheet, ``<c`` then ``space`` (stored: ratio 1 to 1)."""
    parts = parts_of(base)
    name = sheet_part(parts, layout.START)
    cells = b"<row>" + (b"<c" + space + b"/>") * n + b"</row>"
    parts[name] = parts[name].replace(b"</sheetData>", cells + b"</sheetData>", 1)
    return zipped(parts, stored=[name])


def cells_after_a_newline(base: bytes) -> bytes:
    """Case 4: six million cells written ``<c`` + newline (a 29 MB file)."""
    return _cells_after(base, b"\n", 6_000_000)


def cells_after_a_tab(base: bytes) -> bytes:
    return _cells_after(base, b"\t")


def cells_after_a_carriage_return(base: bytes) -> bytes:
    return _cells_after(base, b"\r")


def shared_strings_over_the_size_limit(base: bytes) -> bytes:
    """Case 5: 40 MiB of shared strings (2,000 texts of 20 KiB), stored: ratio 1 to 1."""
    return with_shared_strings(base, (b"%05d" % i + b"w" * (20 * 1024) for i in range(2_048)))


def shared_strings_over_the_count_limit(base: bytes) -> bytes:
    return with_shared_strings(base, (b"%d" % i for i in range(500_001)))


def shared_strings_just_under_the_size_limit(base: bytes) -> bytes:
    """31 MiB in 1,000 texts: under both shared-string limits (read, not refused)."""
    return with_shared_strings(base, (b"%04d" % i + b"v" * (31 * 1024 - 4) for i in range(1_000)))


def xml_elements_the_parser_keeps(base: bytes) -> bytes:
    """1.6 million empty elements beside the cells: openpyxl's parser keeps every one."""
    parts = parts_of(base)
    name = sheet_part(parts, layout.CLOSURES)
    parts[name] = after_cells(b"<x/>" * 1_600_000)(parts[name])
    return zipped(parts, stored=[name])


#: (id naming the case, function, words of the reason)
HOSTILE: list[tuple[str, Callable[[bytes], bytes], str]] = [
    ("case1", merged_range_over_most_of_a_sheet, "the merged range E30:XFD1048576"),
    ("case1-variant", merged_ranges_on_several_sheets, "over 1,000,000 cells, over the limit"),
    ("case1-variant", merged_range_spelled_with_character_references, "E30:XFD1048576"),
    ("case1-variant", hyperlink_over_most_of_a_sheet, "hyperlink over the range E30:XFD1048576"),
    ("case2", far_cell_beside_a_formula_input, "uses the cells A1 to XFD1048576"),
    ("case2-variant", far_cell_on_the_demand_sheet, "sheet 'Demand'"),
    ("case2-variant", far_cell_on_a_users_own_sheet, "sheet 'My notes'"),
    ("case2-variant", used_range_declared_over_the_whole_sheet, "sheet 'Site'"),
    ("case3", zip_bomb_in_the_workbook_part, "unpacks to 2048 MiB"),
    ("case4", cells_after_a_newline, "over 1,000,000 cells"),
    ("case4-variant", cells_after_a_tab, "over 1,000,000 cells"),
    ("case4-variant", cells_after_a_carriage_return, "over 1,000,000 cells"),
    ("case5", shared_strings_over_the_size_limit, "over 32 MiB of text"),
    ("case5-variant", shared_strings_over_the_count_limit, "over 500,000 different texts"),
    ("elements", xml_elements_the_parser_keeps, "XML elements"),
]
COMMANDS = ("check", "show", "run", "report", "windows", "spacetime", "batch")
measured = pytest.mark.skipif(not AVAILABLE, reason="measuring a process needs fork and wait4")


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _jobs(path: Path, out: Path) -> list[dict]:
    argv = {
        "check": ["check", str(path)],
        "show": ["show", str(path)],
        "run": ["run", str(path)],
        "report": ["report", str(path), "-o", str(out / "report.pdf")],
        "windows": ["windows", str(path)],
        "spacetime": ["spacetime", str(path), "-o", str(out / "picture.png")],
        "batch": ["batch", str(path.parent), "-o", str(out / "summary.xlsx"), "--workers", "1"],
    }
    return [{"key": f"{path.stem}/{c}", "argv": argv[c]} for c in COMMANDS]


@pytest.fixture(scope="module")
def base(tmp_path_factory) -> bytes:
    folder = tmp_path_factory.mktemp("base")
    return fill_template(load_plan(KESTREL), folder / "plan.xlsx").read_bytes()


@pytest.fixture(scope="module")
def corpus(base, tmp_path_factory) -> dict[str, tuple[Path, str, dict[str, dict]]]:
    """Every hostile file, each alone in a folder, run through every entry point."""
    root = tmp_path_factory.mktemp("hostile")
    files, jobs = {}, []
    for _, make, words in HOSTILE:
        name = make.__name__
        folder = root / name
        folder.mkdir()
        path = folder / f"{name}.xlsx"
        path.write_bytes(make(base))
        out = root / f"{name}-out"
        out.mkdir()
        files[name] = (path, words, _digest(path))
        jobs += _jobs(path, out)
    results = run_jobs(jobs, timeout=len(jobs) * SECONDS + 60)
    return {
        name: (path, words, {c: results[f"{name}/{c}"] for c in COMMANDS}, digest)
        for name, (path, words, digest) in files.items()
    }


@measured
@pytest.mark.parametrize(
    "make", [m for _, m, _ in HOSTILE], ids=[f"{c}-{m.__name__}" for c, m, _ in HOSTILE]
)
def test_hostile_file_is_refused_by_every_entry_point(make, corpus) -> None:
    path, words, results, digest = corpus[make.__name__]
    for command, r in results.items():
        what = f"{path.name} / {command}: {r['stderr'][-600:]}"
        assert r["status"] == 2, what
        assert "Traceback" not in r["stderr"], what
        lines = [ln for ln in r["stderr"].splitlines() if ln.startswith("wzq: ")]
        first = lines[0]
        assert first.startswith((f"wzq: {path.name}: ", f"wzq: {path}: ")), what
        assert words in first, what
        assert r["seconds"] < SECONDS, (what, r["seconds"])
        assert r["peak_mib"] < PEAK_MIB, (what, r["peak_mib"])
    assert _digest(path) == digest  # byte-identical
    assert sorted(p.name for p in path.parent.iterdir()) == [path.name]  # no copy, no temp file
    out = path.parent.with_name(f"{path.stem}-out")
    assert sorted(p.name for p in out.iterdir()) == ["summary.csv", "summary.xlsx"]
    summary = openpyxl.load_workbook(out / "summary.xlsx", read_only=True)
    rows = summary["Problems"].iter_rows(values_only=True)
    listed = [r for r in rows if path.name in r and any(words in str(v) for v in r)]
    assert listed, f"{path.name} is not on the summary's Problems sheet with its reason"


@measured
def test_shared_strings_just_under_the_limits_are_read_in_bounds(base, tmp_path) -> None:
    """Case 5's limit is where it should be: 31 MiB of shared strings is read, in bounds."""
    path = tmp_path / "under.xlsx"
    path.write_bytes(shared_strings_just_under_the_size_limit(base))
    (r,) = run_jobs([{"key": "under", "argv": ["check", str(path)]}], timeout=120).values()
    assert r["status"] == 0, r["stderr"]
    assert "no problems found" in r["stdout"]
    assert r["peak_mib"] < PEAK_MIB, r["peak_mib"]


# --- the Recalculate button -------------------------------------------------------------------


@pytest.fixture
def live_book(base, tmp_path):
    path = tmp_path / "plan.xlsx"
    path.write_bytes(base)
    return open_book(path)


def _refused_by_the_button(book, sheet: str | None, words: str) -> None:
    outcome = live.recalculate(book)
    assert not outcome.ok and outcome.error is None
    (problem,) = outcome.problems
    assert problem.where == f"sheet '{sheet}'" if sheet else problem.where.startswith("sheet '")
    assert words in problem.message
    assert live.PROBLEMS_SHEET in book.sheet_names
    assert not set(layout.OUTPUT_SHEETS) & set(book.sheet_names)  # nothing written


def test_case1_the_button_refuses_a_merged_range_over_most_of_a_sheet(live_book) -> None:
    live_book.sheets[layout.LIMITS].range("E30:XFD1048576").merge()
    _refused_by_the_button(live_book, layout.LIMITS, "1,048,576 rows by 16,384 columns")


def test_case1_the_button_counts_merged_ranges_on_all_sheets_together(live_book) -> None:
    # a merged block out to AZ10000 makes each input sheet 52 columns x 10,000 rows =
    # 520,000 cells: each under the limit, all of them (Approach, Count history ...) over
    for sheet in layout.INPUT_SHEETS:
        live_book.sheets[sheet].range("AA1:AZ10000").merge()
    total = len(layout.INPUT_SHEETS) * 520_000
    _refused_by_the_button(live_book, None, f"{total:,} cells on all sheets")


@pytest.mark.parametrize("sheet", [layout.SITE, layout.DEMAND])
def test_case2_the_button_refuses_a_value_at_the_last_cell(live_book, sheet) -> None:
    live_book.sheets[sheet].range("XFD1048576").value = 1
    _refused_by_the_button(live_book, sheet, "1,048,576 rows by 16,384 columns")
