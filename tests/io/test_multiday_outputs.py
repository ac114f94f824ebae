"""What the designer sees on a plan of several days: the invented one-week example
(three lanes, two night closures of two lanes, a Saturday daytime closure of one,
three queues) printed as a workbook by LibreOffice and as the PDF report, and read
back by text extraction.

The workbook is converted by LibreOffice headless (``soffice --convert-to pdf``,
with a private profile) and read by poppler (``pdftotext``, ``pdfimages``);
skipped, with the reason, when those are missing (``.ci/run`` installs
``libreoffice-calc-nogui`` and ``poppler-utils``). The report is read by pypdf;
tick labels are checked on the matplotlib figures themselves.
"""

from __future__ import annotations

import io
import re
import shutil
import subprocess
from itertools import pairwise
from pathlib import Path

import drawn
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from pypdf import PdfReader

import wzq
from wzq.engine.lwr.simulation import simulate
from wzq.io.jsonplan import load_plan
from wzq.io.report import MARGIN_BOTTOM, MARGIN_TOP, build_report
from wzq.io.workbook.run import write_filled_workbook
from wzq.present import drawings as rc
from wzq.present.spacetime import space_time_figure

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
WEEK = EXAMPLES / "ashgrove_bypass_week.json"
TITLE = "Ashgrove Bypass deck resurfacing, westbound, one week (invented example)"

SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
PDFTOTEXT = shutil.which("pdftotext")
PDFIMAGES = shutil.which("pdfimages")
_office_missing = pytest.mark.skipif(
    not (SOFFICE and PDFTOTEXT and PDFIMAGES),
    reason="LibreOffice (soffice) or poppler-utils (pdftotext, pdfimages) is not installed; "
    ".ci/run installs libreoffice-calc-nogui and poppler-utils",
)


def needs_office(test):
    """A test that prints through a real LibreOffice (marked, and skipped without it)."""
    return pytest.mark.libreoffice(pytest.mark.slow(_office_missing(test)))


@pytest.fixture(scope="module")
def week() -> wzq.Result:
    return wzq.analyse(load_plan(WEEK))


# --- the workbook, printed by LibreOffice ---------------------------------------------------


@pytest.fixture(scope="module")
def workbook_pdf(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("week")
    book = folder / "ashgrove.xlsx"
    write_filled_workbook(load_plan(WEEK), book)  # the plan asks for the space-time picture
    subprocess.run(
        [
            SOFFICE,
            f"-env:UserInstallation={(folder / 'lo-profile').resolve().as_uri()}",
            "--headless",
            "--convert-to",
            "pdf",
            "--outdir",
            str(folder),
            str(book),
        ],
        check=True,
        capture_output=True,
        timeout=300,
    )
    pdf = folder / "ashgrove.pdf"
    assert pdf.exists(), "LibreOffice wrote no PDF"
    return pdf


def _pages(pdf: Path) -> list[str]:
    text = subprocess.run(
        [PDFTOTEXT, "-layout", str(pdf), "-"], check=True, capture_output=True, text=True
    ).stdout
    return text.split("\f")[:-1]


def _sheet_pages(pages: list[str], heading: str) -> list[int]:
    """Indices of the pages of the sheet whose first page starts with ``heading``: from
    that page to the page before the next page that starts another sheet."""
    first = next(i for i, p in enumerate(pages) if p.strip().startswith(heading))
    out = [first]
    starts = ("Hourly results", "Summary:", "Charts:", "Lane-closure permit table",
              "Closure windows", "Run log")  # fmt: skip
    for i in range(first + 1, len(pages)):
        if pages[i].strip().startswith(starts):
            break
        out.append(i)
    return out


@needs_office
def test_results_status_prints_whole_and_headers_keep_their_units(workbook_pdf, week) -> None:
    pages = _pages(workbook_pdf)
    results = "\n".join(pages[i] for i in _sheet_pages(pages, "Hourly results"))
    statuses = week.hourly["status"].tolist()
    # every hour's status printed in full: e.g. no "over limit: queue length, dela"
    for text in set(statuses) - {"ok"}:
        whole = re.escape(text) + r"(?=\s{2,}|\s*$)"  # the cell's text ends there
        assert len(re.findall(whole, results, re.M)) == statuses.count(text), text
    assert "over limit: queue length, delay, demand/capacity" in results
    # a header never breaks inside its unit ("Delay (veh-" / "h)")
    for line in results.splitlines():
        assert not re.search(r"\((veh|min)[-\u2011](\s|$)", line), line
        assert not re.search(r"\bdema\s*$|\bDeman\s*$|\bCapacit\s*$", line.rstrip()), line


@needs_office
def test_charts_sheet_has_a_chart_per_queue_and_prints_the_space_time_picture(
    workbook_pdf,
) -> None:
    pages = _pages(workbook_pdf)
    charts = _sheet_pages(pages, "Charts:")
    text = " ".join(" ".join(pages[i].split()) for i in charts)
    # one cumulative chart per queue (by hand from the discharge rates, see test_live)
    for title in (
        "Queue Tue 2027-09-07 21:00 to Wed 01:16",
        "Queue Thu 2027-09-09 22:00 to Fri 00:11",
        "Queue Sat 2027-09-11 10:00 to 18:19",
    ):
        assert title in text, title
    # the picture (the only raster image of the workbook) is on a printed page of the
    # Charts sheet, after its charts
    listing = subprocess.run(
        [PDFIMAGES, "-list", str(workbook_pdf)], check=True, capture_output=True, text=True
    ).stdout.splitlines()[2:]
    # columns: page, number, type ("image", or "smask" for its transparency), ...
    image_pages = [int(x.split()[0]) - 1 for x in listing if x.split()[2:3] == ["image"]]
    assert len(image_pages) == 1
    assert image_pages[0] in charts and image_pages[0] == charts[-1]


@needs_office
def test_every_output_page_names_the_plan_in_its_footer(workbook_pdf) -> None:
    pages = _pages(workbook_pdf)
    first = next(i for i, p in enumerate(pages) if p.strip().startswith("Hourly results"))
    for i, page in enumerate(pages[first:], start=first):
        footer = [line for line in page.splitlines() if line.strip()][-1]
        assert TITLE in footer and re.search(r"Page \d+ of \d+", footer), (i, footer)
    windows = _sheet_pages(pages, "Closure windows")
    assert len(windows) >= 2
    # the longest windows start a page with their header; one demand period: no day-type
    # column repeating it on every row, the period said once above the tables
    longest = next(i for i in windows if "Longest allowable windows" in pages[i])
    head = pages[longest].split("Longest allowable windows", 1)[1]
    assert re.search(r"Configuration\s+Start\s+End", head)
    assert "Day type" not in "".join(pages[i] for i in windows)
    assert "Demand period: Mon 2027-09-06 to Sun 2027-09-12" in pages[windows[0]]


@needs_office
def test_start_sheet_title_clears_its_subtitle(workbook_pdf) -> None:
    html = subprocess.run(
        [PDFTOTEXT, "-bbox", "-f", "1", "-l", "1", str(workbook_pdf), "-"],
        check=True,
        capture_output=True,
        text=True,
    ).stdout
    words = {
        m.group(5): (float(m.group(2)), float(m.group(4)))
        for m in re.finditer(
            r'xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">([^<]+)<', html
        )
    }
    title_bottom = words["Lane-closure"][1]
    subtitle_top = words["Work-zone"][0]
    assert title_bottom <= subtitle_top + 0.5, (title_bottom, subtitle_top)


# --- the report -------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def report_pdf(week) -> PdfReader:
    return PdfReader(io.BytesIO(build_report(week)))


@pytest.fixture(scope="module")
def report_pages(report_pdf) -> list[str]:
    return [p.extract_text() for p in report_pdf.pages]


def filled_share(page) -> float:
    """How far down the body frame of a report page its text reaches (0 empty, 1 full):
    from the top of the frame to the lowest text above the page footer."""
    height = float(page.mediabox.height)
    top = height - MARGIN_TOP
    ys: list[float] = []

    def visit(text, cm, tm, font, size) -> None:
        y = tm[5] * cm[3] + tm[4] * cm[1] + cm[5]
        if text.strip() and MARGIN_BOTTOM < y <= top + 1:
            ys.append(y)

    page.extract_text(visitor_text=visit)
    return (top - min(ys)) / (top - MARGIN_BOTTOM) if ys else 0.0


def test_report_says_plan_values_in_plain_words(report_pages) -> None:
    inputs = " ".join(
        " ".join(p.split()) for p in report_pages if "Inputs" in p or "Lane closures" in p
    )
    for words in ("commuters", "cones or drums", "Newell kinematic waves", "triangular (Newell)"):
        assert words in inputs, words
    for key in (" soft ", " commuter ", " newell "):
        assert key not in f" {inputs} ", key


def test_report_pages_are_full_enough_and_carry_the_footer(report_pdf, report_pages) -> None:
    n = len(report_pages)
    for k, page in enumerate(report_pages, start=1):
        lines = [x for x in page.splitlines() if x.strip()]
        assert f"Page {k} of {n}" in page
        assert " ".join(wzq.CAUTION.split()[:6]) in " ".join(page.split())
        assert len(lines) > 10, (k, lines)
    # no page holds a scrap alone (the closures table once had a page to itself)
    shares = [filled_share(p) for p in report_pdf.pages]
    assert min(shares) > 0.4, shares
    assert any("Space-time check" in p for p in report_pages)


# --- tick labels ------------------------------------------------------------------------------


def _overlaps(fig) -> list[tuple[str, str]]:
    """Pairs of neighbouring x tick labels whose drawn boxes overlap, per axes."""
    FigureCanvasAgg(fig)
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    out = []
    for ax in fig.axes:
        if not ax.get_visible():
            continue
        labels = [t for t in ax.get_xticklabels() if t.get_visible() and t.get_text()]
        boxes = sorted(
            ((t.get_window_extent(renderer), t.get_text()) for t in labels),
            key=lambda b: b[0].x0,
        )
        for (a, ta), (b, tb) in pairwise(boxes):
            if a.x1 > b.x0:
                out.append((ta, tb))
    return out


def test_no_tick_labels_overlap_in_the_reports_figures(week) -> None:
    # the sizes the report draws them at on a landscape letter page (points)
    drawings = {
        "demand": rc.demand_capacity_drawing(week, 720.0, 216.0),
        "queue": rc.queue_length_drawing(week, 720.0, 216.0),
        "cumulative": rc.cumulative_drawing(week, 720.0, 460.0),
    }
    for name, drawing in drawings.items():  # no text of the drawing runs into another
        assert drawn.overlaps(drawing) == [], name
    assert _overlaps(space_time_figure(simulate(week))) == []
    # the panels of the cumulative chart have their daytime hours labelled: at least
    # three clock times a panel, 12:00 among them
    texts = drawn.texts(drawings["cumulative"])
    panels = [t for t in texts if t.text.startswith("Queue ")]
    clocks = [t.text for t in texts if re.fullmatch(r"\d\d:00", t.text)]
    assert len(panels) >= 3 and "12:00" in clocks and len(clocks) >= 3 * len(panels)


def test_tick_step_widens_with_the_span_not_the_labels() -> None:
    # a 10-hour panel one third of a page wide (3.3 in): 0.55 in a clock label ->
    # at most 6 labels -> every 2 hours; on the whole page (10 in), every hour
    assert rc.tick_step_h(10.0, 3.3) == 2
    assert rc.tick_step_h(10.0, 10.0) == 1
    # a week on 10 in: day labels need 0.85 in -> 168 h / 24 h = 7 labels, one a day
    assert rc.tick_step_h(168.0, 10.0) == 24
