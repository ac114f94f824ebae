"""The printed permit report: text, pages, charts and the ``wzq report`` command.

The numbers printed in the hourly table are checked against
``wzq.present.tables.hourly_display`` (the shared display rounding) by reading the PDF
back with pypdf. The deterministic-queue checks use the closed-form D/D/1
results of the traffic-engineering textbooks (e.g. Mannering & Washburn,
*Principles of Highway Engineering and Traffic Analysis*, chapter on queueing
models; May, *Traffic Flow Fundamentals*, 1990, ch. 11 — cited from memory):
demand lambda above a reduced capacity mu_r for T hours gives a queue
(lambda - mu_r) T, which clears t_c = Q / (mu - lambda) hours after capacity mu
returns, with total delay Q (T + t_c) / 2.

All plans are invented (Kestrel Ridge Parkway near Amberfold, fictional).
"""

from __future__ import annotations

import copy
import dataclasses
import datetime as dt
import json
import re
import shutil
import subprocess
from pathlib import Path

import drawn
import numpy as np
import pytest
from pypdf import PdfReader

import wzq
from wzq.cli import main
from wzq.io.jsonplan import load_plan, plan_from_dict
from wzq.io.report import build_report, svg_available, write_report
from wzq.present import drawings as rc
from wzq.present.tables import hourly_columns, hourly_display

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "kestrel_ridge_weeknight.json"
DAY = dt.date(2027, 4, 1)
HOUR_RE = re.compile(r"^(Mon|Tue|Wed|Thu|Fri|Sat|Sun) \d{4}-\d{2}-\d{2} \d{2}:\d{2}$")
HEADER = "Hour (start)"
LETTER_LANDSCAPE = (792.0, 612.0)  # 11 x 8.5 in, 72 pt/in (ANSI letter)
A4_LANDSCAPE = (841.89, 595.28)  # 297 x 210 mm (ISO 216), 72 pt/in


# --- plans --------------------------------------------------------------------------------------


def example_dict() -> dict:
    return json.loads(EXAMPLE.read_text(encoding="utf-8"))


def one_day_dict() -> dict:
    """One invented weekday: a daytime two-lane closure that overloads for six hours."""
    data = example_dict()
    data["demand"]["veh_h"] = data["demand"]["veh_h"][:24]
    data["closures"] = [
        {
            "start": "2027-05-03T10:00",
            "end": "2027-05-03T16:00",
            "lanes_closed": 2,
            "barrier": "soft",
            "note": "Day works: drainage inlet <B-7> & kerb",
        }
    ]
    data["thresholds"] = {
        "max_queue_length": 0.5,
        "max_average_delay_min": 10,
        "max_demand_capacity": 0.95,
    }
    data["meta"]["prepared_by"] = "Zoë Ångström-Łukasiewicz"
    data["meta"]["checked_by"] = "T. Hollowmere & <Partners>"
    return data


def week_dict() -> dict:
    """Seven invented days: the example weekday scaled by a weekly profile, nightly closures."""
    data = example_dict()
    day = data["demand"]["veh_h"][:24]
    weekly = [1.00, 1.02, 1.04, 1.06, 1.10, 0.78, 0.66]  # Mon..Sun, invented
    data["demand"]["veh_h"] = [round(v * f) for f in weekly for v in day]
    closures = []
    for k in range(6):
        d0 = dt.date(2027, 5, 3) + dt.timedelta(days=k)
        two = k in (1, 4)
        closures.append(
            {
                "start": f"{d0}T{22 if two else 21}:00",
                "end": f"{d0 + dt.timedelta(days=1)}T05:00",
                "lanes_closed": 2 if two else 1,
                "barrier": "soft",
                "note": f"Night {k + 1}",
            }
        )
    data["closures"] = closures
    return data


def textbook_dict(after_veh_h: float = 3000.0) -> dict:
    """Two lanes, base 2,000 pc/h/ln, no trucks, no open-road drop: capacity 4,000 veh/h.

    One lane closed 00:00-02:00 with a 2,000 veh/h/ln override (mu_r = 2,000 veh/h);
    demand 3,000 veh/h for two hours, then ``after_veh_h``.
    """
    return {
        "format": "wzq-plan",
        "version": 1,
        "units": "us",
        "meta": {"title": "Textbook bottleneck (invented)", "project": "Check"},
        "site": {
            "name": "Amberfold test section",
            "direction": "eastbound",
            "lanes": 2,
            "speed_limit": 60,
            "work_zone_speed_limit": 60,
            "work_zone_length": 0,
            "heavy_vehicle_percent": 0,
            "capacity_method": "hcm2000",
            "base_capacity_pc_h_ln": 2000,
            "capacity_drop_percent_open": 0,
        },
        "demand": {
            "start": "2027-05-03T00:00",
            "interval_minutes": 60,
            "veh_h": [3000, 3000] + [after_veh_h] * 4,
        },
        "closures": [
            {
                "start": "2027-05-03T00:00",
                "end": "2027-05-03T02:00",
                "lanes_closed": 1,
                "capacity_override_veh_h_ln": 2000,
            }
        ],
        "thresholds": {"max_queue_length": 2.0},
    }


# --- reading the PDF back -----------------------------------------------------------------------


def pages_text(pdf: bytes | Path) -> list[str]:
    reader = PdfReader(pdf if isinstance(pdf, Path) else _bytes_io(pdf))
    return [p.extract_text() for p in reader.pages]


def _bytes_io(data: bytes):
    import io

    return io.BytesIO(data)


def flat(s: str) -> str:
    return " ".join(s.split())


def table_rows(texts: list[str], n_cells: int) -> dict[str, list[str]]:
    """Hour label -> the ``n_cells`` cells printed after it, from the hourly-table pages."""
    rows: dict[str, list[str]] = {}
    for t in texts:
        if HEADER not in t:
            continue
        if "Hour by hour" in t:  # the table may share its first page with the closures
            t = t[t.index("Hour by hour") :]
        lines = [x.strip() for x in t.splitlines()]
        for i, line in enumerate(lines):
            if HOUR_RE.match(line):
                assert line not in rows, f"hour {line} printed twice"
                rows[line] = lines[i + 1 : i + 1 + n_cells]
    return rows


def expected_rows(result: wzq.Result) -> dict[str, list[str]]:
    """What the table must show: hourly_display values with their display decimals."""
    cols = hourly_columns(result.plan.site.unit_system)
    shown = hourly_display(result)
    checks = [
        c for c in ("queue_ok", "delay_ok", "demand_capacity_ok") if c in result.hourly.columns
    ]
    out = {}
    for i, row in shown.iterrows():
        cells = [f"{row[c.header]:,.{c.decimals}f}" for c in cols]
        cells += ["ok" if result.hourly[c].iloc[i] else "OVER" for c in checks]
        out[row["Hour"]] = cells
    return out


def open_metric_dict() -> dict:
    """The invented metric example as an open road: 15-minute counts, no closure, no limits."""
    data = json.loads((ROOT / "examples" / "fenwick_downs_weekend.json").read_text("utf-8"))
    data["demand"]["interval_minutes"] = 15
    data["demand"]["veh_h"] = data["demand"]["veh_h"][:48]
    data["closures"] = []
    data["thresholds"] = {}
    data["costs"] = None
    return data


@pytest.fixture(scope="module")
def open_metric():
    result = wzq.analyse(plan_from_dict(open_metric_dict()))
    return result, build_report(result, "letter", generated=DAY)


@pytest.fixture(scope="module")
def one_day():
    result = wzq.analyse(plan_from_dict(one_day_dict()))
    pdf = build_report(result, "letter", generated=DAY, source="one_day.json")
    return result, pdf


@pytest.fixture(scope="module")
def week():
    result = wzq.analyse(plan_from_dict(week_dict()))
    pdf = build_report(result, "a4", generated=DAY)
    return result, pdf


# --- the hourly table ---------------------------------------------------------------------------


@pytest.mark.parametrize("case", ["one_day", "week", "open_metric"])
def test_table_numbers_match_display_rounding(case, request) -> None:
    result, pdf = request.getfixturevalue(case)
    want = expected_rows(result)
    n_cells = len(next(iter(want.values())))
    got = table_rows(pages_text(pdf), n_cells)
    assert list(got) == list(want)  # every hour, in order, once
    for hour, cells in want.items():
        assert got[hour] == cells, hour


def test_open_road_metric_report(open_metric) -> None:
    _, pdf = open_metric
    texts = pages_text(pdf)
    table = next(t for t in texts if HEADER in t)
    assert "Longest\nqueue (km)" in table or "queue (km)" in flat(table)
    assert "OVER" not in table and "No agency limits were entered" in flat(table)
    assert len(table_rows(texts, 10)) == 12  # 48 quarter-hours = 12 hours
    assert "no queue forms" in flat(" ".join(texts)).lower()
    # no costs entered: priced at the published defaults (wzq.engine.costs.DEFAULT_COSTS);
    # an open road with no queue and no closure costs nothing
    assert (
        "Road-user delay cost 0 USD (2017 prices; published defaults, as no values of time "
        "were entered: update them)" in flat(texts[0])
    )


def test_demand_column_is_the_plans_input(one_day) -> None:
    # the demand printed for each hour is the hourly demand typed into the plan
    _, pdf = one_day
    typed = one_day_dict()["demand"]["veh_h"]
    got = table_rows(pages_text(pdf), 3)
    assert [int(c[1].replace(",", "")) for c in got.values()] == typed


def test_failing_hours_marked_over(one_day) -> None:
    result, pdf = one_day
    h = result.hourly
    failing = h["status"] != "ok"
    assert failing.any() and not failing.all()  # the plan exercises both
    got = table_rows(pages_text(pdf), 14)
    for (hour, cells), fail in zip(got.items(), failing, strict=True):
        assert ("OVER" in cells[-3:]) == fail, hour
    # D/C is checked in closure hours only (the engine's rule); an open hour never fails it
    open_hours = ~h["closure"].to_numpy()
    assert all(cells[-1] == "ok" for cells, o in zip(got.values(), open_hours, strict=True) if o)


def test_seven_day_table_spans_pages_with_header_on_each(week) -> None:
    result, pdf = week
    texts = pages_text(pdf)
    table_pages = [t for t in texts if any(HOUR_RE.match(x.strip()) for x in t.splitlines())]
    table_pages = [t for t in table_pages if "Hour by hour" in t or HEADER in t]
    assert len(table_pages) >= 4  # 168 rows
    for t in table_pages:
        assert t.count(HEADER) == 1
    assert sum(t.count(HEADER) for t in texts) == len(table_pages)
    assert len(result.hourly) == 168


# --- pages --------------------------------------------------------------------------------------


def test_page_size_orientation_and_numbering(one_day, week) -> None:
    for (_, pdf), size in ((one_day, LETTER_LANDSCAPE), (week, A4_LANDSCAPE)):
        reader = PdfReader(_bytes_io(pdf))
        n = len(reader.pages)
        assert n >= 6
        for i, page in enumerate(reader.pages):
            box = page.mediabox
            assert float(box.width) == pytest.approx(size[0], abs=0.05)
            assert float(box.height) == pytest.approx(size[1], abs=0.05)
            text = page.extract_text()
            assert f"Page {i + 1} of {n}" in text
            assert wzq.CAUTION in text


def test_title_block_summary_and_sign_off(one_day) -> None:
    result, pdf = one_day
    first = pages_text(pdf)[0]
    plan = result.plan
    for value in (
        plan.meta.title,
        plan.meta.project,
        plan.meta.route,
        plan.site.name,
        plan.site.direction,
        "Zoë Ångström-Łukasiewicz",  # typed text survives, accents and all
        "T. Hollowmere & <Partners>",  # markup characters printed as typed
        "Prepared by",
        "Checked by",
        f"wzq {wzq.__version__}",
        "2027-04-01",
        "Mon 2027-05-03 00:00 to Tue 2027-05-04 00:00 (24 h)",
        "one_day.json",
        f"Caution: {wzq.CAUTION}",
    ):
        assert value in first, value
    for label, value in wzq.present.tables.summary_lines(result):
        assert f"{label}\n{value}" in first or flat(f"{label} {value}") in flat(first), label


def test_warnings_printed(one_day) -> None:
    result, pdf = one_day
    assert result.warnings  # the daytime closure overloads for hours
    text = flat(" ".join(pages_text(pdf)))
    for w in result.warnings:
        assert flat(w) in text


def test_inputs_in_plan_units(one_day) -> None:
    _, pdf = one_day
    text = flat(pages_text(pdf)[1])
    for s in (
        "Speed limit 65.0 mi/h",
        "Work-zone length 1.20 mi",
        "Lateral clearance 2.0 ft",
        "Heavy vehicles 8.0 %",
        "Queue length 0.50 mi",
        "Average delay 10.0 min/veh",
        "Demand / capacity 0.95 (closure hours)",
        "Day works: drainage inlet <B-7> & kerb",
    ):
        assert s in text, s


def test_method_note_names_sources(one_day) -> None:
    _, pdf = one_day
    text = flat(pages_text(pdf)[-1])
    for s in (
        "Highway Capacity Manual, 7th edition",
        "Chapter 12, basic freeway segments",
        "Chapter 10, freeway work zones",
        "lane closure severity index",
        "queue discharge rate",
        "D/D/1",
        "Lighthill and Whitham (1955)",
        "Richards (1956)",
        "Newell (1993)",
        wzq.CAUTION,
    ):
        assert s in text, s


def test_cost_line_only_when_cost_known(one_day) -> None:
    result, _ = one_day
    with_cost = copy.copy(result)
    with_cost.__dict__["summary"] = dataclasses.replace(result.summary, total_cost=12345.6)
    texts = pages_text(build_report(with_cost, generated=DAY))
    assert "Road-user delay cost" in texts[0] and "12,346 USD" in texts[0]
    assert "FHWA-HOP-12-005" in flat(texts[-1])  # the method names the cost source
    without = copy.copy(result)
    without.__dict__["summary"] = dataclasses.replace(result.summary, total_cost=None)
    texts = pages_text(build_report(without, generated=DAY))
    assert "Road-user delay cost" not in texts[0]
    assert "FHWA-HOP-12-005" not in flat(texts[-1])


def _color_ops(pdf: bytes) -> list[tuple[float, float, float]]:
    out = []
    for page in PdfReader(_bytes_io(pdf)).pages:
        data = page.get_contents().get_data().decode("latin-1")
        assert not re.search(r"(^|\s)[-\d.]+ [-\d.]+ [-\d.]+ [-\d.]+ [kK]\s", data)  # no CMYK
        for r, g, b, _ in re.findall(r"([-\d.]+) ([-\d.]+) ([-\d.]+) (rg|RG)\b", data):
            out.append((float(r), float(g), float(b)))
    return out


def test_everything_printed_in_grey_levels(one_day) -> None:
    # black-and-white printing loses nothing: every fill and stroke colour is a grey
    _, pdf = one_day
    ops = _color_ops(pdf)
    assert ops
    assert all(r == g == b for r, g, b in ops)
    assert any(0.7 < r < 0.9 for r, _, _ in ops)  # the failing-row shade is there


def _image_pages(pdf: bytes) -> int:
    n = 0
    for page in PdfReader(_bytes_io(pdf)).pages:
        xo = page["/Resources"].get("/XObject")
        if xo and any(x.get_object()["/Subtype"] == "/Image" for x in xo.values()):
            n += 1
    return n


@pytest.mark.skipif(not svg_available(), reason="svglib not installed: charts fall back to PNG")
def test_charts_are_vector_graphics(one_day) -> None:
    _, pdf = one_day
    assert _image_pages(pdf) == 0


def test_png_fallback_only_for_matplotlibs_charts() -> None:
    # the demand, queue-length and cumulative charts are reportlab drawings, vector
    # always; only the space-time picture (matplotlib, via SVG) falls back to an image
    data = textbook_dict()
    data["options"] = {"space_time": True}
    result = wzq.analyse(plan_from_dict(data))
    pdf = build_report(result, generated=DAY, vector=False)
    assert _image_pages(pdf) == 1
    texts = pages_text(pdf)
    (space_time,) = [k for k, t in enumerate(texts) if "Figure 4. Space-time check" in t]
    charts = [k for k, t in enumerate(texts) if "Figure 1. Demand and capacity" in t]
    assert charts and "Flow (veh/h)" in texts[charts[0]]  # the chart's own label is text
    assert _image_pages(build_report(wzq.analyse(plan_from_dict(textbook_dict())),
                                     generated=DAY, vector=False)) == 0  # fmt: skip
    assert space_time > charts[0]


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="pdftoppm (poppler-utils) missing")
def test_pages_render_to_png(one_day, tmp_path) -> None:
    from matplotlib.image import imread

    _, pdf = one_day
    src = tmp_path / "r.pdf"
    src.write_bytes(pdf)
    subprocess.run(["pdftoppm", "-png", "-r", "50", str(src), str(tmp_path / "p")], check=True)
    pngs = sorted(tmp_path.glob("p-*.png"))
    assert len(pngs) == len(PdfReader(src).pages)
    for png in pngs:
        img = imread(png)
        h, w = img.shape[:2]
        assert w == pytest.approx(11 * 50, abs=2) and h == pytest.approx(8.5 * 50, abs=2)
        dark = (img[..., :3].mean(axis=2) < 0.5).mean()
        assert 0.001 < dark < 0.5, png.name  # ink on the page, not a black page


# --- exact curves for the charts ----------------------------------------------------------------


def test_queue_profile_matches_textbook_dd1() -> None:
    # D/D/1 (textbook, see module docstring): lambda 3,000, mu_r 2,000 for T = 2 h,
    # then lambda 2,500 against mu 4,000: Q = 2,000 veh, t_c = 2,000 / 1,500 h
    result = wzq.analyse(plan_from_dict(textbook_dict(after_veh_h=2500)))
    prof = rc.queue_profile(result)
    t, veh = prof.t, prof.values["queue_veh"]
    q_max, t_c = 2000.0, 2000.0 / 1500.0
    assert veh.max() == pytest.approx(q_max)
    assert t[np.argmax(veh)] == pytest.approx(2 * 3600)
    assert np.interp(2.5 * 3600, t, veh) == pytest.approx(q_max - 1500 * 0.5)
    assert np.min(np.abs(t - (2 + t_c) * 3600)) < 1e-6  # the clearing instant is a vertex
    assert np.interp((2 + t_c) * 3600, t, veh) == pytest.approx(0, abs=1e-6)
    assert np.all(veh[t > (2 + t_c) * 3600 + 1] == 0)
    cum = rc.cumulative_profile(result)
    gap = cum.values["arrivals"] - cum.values["departures"]
    assert np.interp(t, cum.t, gap) == pytest.approx(veh)
    (ep,) = rc.queue_episodes(result)
    assert (ep.start, ep.end / 3600, ep.max_queue_veh) == pytest.approx((0.0, 2 + t_c, q_max))


def _peak(t: np.ndarray, y: np.ndarray, a: float, b: float) -> float:
    """Largest value of a polyline on [a, b]; at a vertical step, the side inside the window."""
    vals = list(y[(t > a) & (t < b)])
    at_a, at_b = np.flatnonzero(t == a), np.flatnonzero(t == b)
    vals.append(y[at_a[-1]] if len(at_a) else np.interp(a, t, y))
    vals.append(y[at_b[0]] if len(at_b) else np.interp(b, t, y))
    return float(max(vals))


@pytest.mark.parametrize("method", ["newell", "shockwave"])
def test_length_chart_draws_the_engines_queue_length(method) -> None:
    data = textbook_dict(after_veh_h=2500)
    data["options"] = {"queue_length_method": method}
    result = wzq.analyse(plan_from_dict(data))
    prof = rc.length_profile(result)
    assert prof.values["queue_length_m"].max() == pytest.approx(
        result.summary.max_queue_length_m, rel=1e-9
    )
    hourly = result.hourly["queue_length_max_m"].to_numpy()
    for h, want in enumerate(hourly):  # the chart's peak in each hour is the table's
        got = _peak(prof.t, prof.values["queue_length_m"], h * 3600.0, (h + 1) * 3600.0)
        assert got == pytest.approx(want, abs=1e-6), h
    text = flat(" ".join(pages_text(build_report(result, generated=DAY))))
    if method == "newell":
        assert "traced exactly by the simplified kinematic-wave method of Newell (1993)" in text
        assert "(Newell's method)" in text
    else:
        # the single-state length is zero once the point queue has cleared (t_c = 4/3 h)
        t_c = (2 + 2000 / 1500) * 3600
        assert np.interp(t_c, prof.t, prof.values["queue_length_m"]) == pytest.approx(0, abs=1e-6)
        assert "single-state shockwave relation" in text
        assert "Newell (1993)" in text  # the triangular diagram's source


def test_cumulative_chart_keeps_the_largest_queues_in_time_order() -> None:
    # eight one-hour closures, mu_r = override; each queue is (3,000 - mu_r) * 1 h
    data = textbook_dict()
    data["demand"]["veh_h"] = [3000] * 48
    overrides = [2900, 2300, 2800, 2100, 2600, 2700, 2200, 2500]  # veh/h/ln, one lane open
    data["closures"] = [
        {
            "start": f"2027-05-{3 + (6 * k) // 24:02d}T{(6 * k) % 24:02d}:00",
            "end": f"2027-05-{3 + (6 * k) // 24:02d}T{(6 * k) % 24 + 1:02d}:00",
            "lanes_closed": 1,
            "capacity_override_veh_h_ln": v,
        }
        for k, v in enumerate(overrides)
    ]
    result = wzq.analyse(plan_from_dict(data))
    eps = rc.queue_episodes(result)
    assert [e.max_queue_veh for e in eps] == pytest.approx([3000 - v for v in overrides])
    shown, total = rc.shown_episodes(result)
    assert total == 8 and len(shown) == rc.MAX_PANELS
    assert [e.max_queue_veh for e in shown] == pytest.approx([700, 900, 400, 300, 800, 500])
    drawing = rc.cumulative_drawing(result, 720, 504)
    titles = [t.text for t in drawn.texts(drawing) if t.text.startswith("Queue ")]
    assert titles == [rc.episode_title(result, e) for e in shown]  # six panels, in order


def test_textbook_plan_report_numbers() -> None:
    # Q = (3000 - 2000) * 2 = 2,000 veh, clearing at 4 h against 4,000 veh/h;
    # total delay Q (T + t_c) / 2 = 2,000 * 4 / 2 = 4,000 veh-h (textbook D/D/1)
    result = wzq.analyse(plan_from_dict(textbook_dict()))
    texts = pages_text(build_report(result, generated=DAY))
    rows = table_rows(texts, 7)
    ends = [int(c[5].replace(",", "")) for c in rows.values()]
    assert ends == [1000, 2000, 1000, 0, 0, 0]
    assert "4,000.0 veh-h" in texts[0]
    assert "HCM 2000, Chapter 22" in flat(texts[-1])
    # no costs entered: priced at the published defaults (wzq.engine.costs.DEFAULT_COSTS)
    assert "FHWA-HOP-12-005" in flat(texts[-1])
    assert "published defaults" in flat(texts[-1])


# --- files and the command line -----------------------------------------------------------------


def test_write_report_replaces_whole_file(tmp_path) -> None:
    result = wzq.analyse(plan_from_dict(textbook_dict()))
    out = tmp_path / "r.pdf"
    out.write_bytes(b"old")
    assert write_report(result, out, generated=DAY) == out
    assert out.read_bytes().startswith(b"%PDF-")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.pdf"]  # no temp file left
    new = tmp_path / "new.pdf"
    write_report(result, new, generated=DAY)
    probe = tmp_path / "probe"
    probe.touch()  # an ordinary file created under the same umask
    assert new.stat().st_mode & 0o777 == probe.stat().st_mode & 0o777


def test_same_plan_same_bytes() -> None:
    # running twice gives the same report (fixed ids in charts, invariant PDF)
    def once() -> bytes:
        return build_report(wzq.analyse(plan_from_dict(textbook_dict())), generated=DAY)

    assert once() == once()


def test_write_report_refuses_bad_targets(tmp_path) -> None:
    result = wzq.analyse(plan_from_dict(textbook_dict()))
    with pytest.raises(wzq.PlanError, match=r"\.pdf"):
        write_report(result, tmp_path / "r.xlsx")
    with pytest.raises(wzq.PlanError, match="does not exist"):
        write_report(result, tmp_path / "missing" / "r.pdf")
    with pytest.raises(wzq.PlanError, match="letter or a4"):
        write_report(result, tmp_path / "r.pdf", paper="a3")
    assert list(tmp_path.iterdir()) == []


def test_overlong_text_is_refused_with_its_key(tmp_path) -> None:
    data = textbook_dict()
    data["closures"][0]["note"] = "saw-cut " * 100  # 800 characters
    plan = _plan_file(tmp_path, data)
    with pytest.raises(wzq.PlanError, match=r"closures\[0\]\.note: 800 characters"):
        build_report(wzq.analyse(plan_from_dict(data)))
    assert main(["report", str(plan)]) == 2
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.json"]


def _plan_file(tmp_path: Path, data: dict, name: str = "plan.json") -> Path:
    p = tmp_path / name
    p.write_text(json.dumps(data, indent=2), encoding="utf-8")
    return p


def test_cli_report_a4(tmp_path, capsys) -> None:
    plan = _plan_file(tmp_path, textbook_dict())
    before = plan.read_bytes()
    out = tmp_path / "out" / "permit.pdf"
    out.parent.mkdir()
    assert main(["report", str(plan), "-o", str(out), "--paper", "a4"]) == 0
    assert plan.read_bytes() == before
    box = PdfReader(out).pages[0].mediabox
    assert (float(box.width), float(box.height)) == pytest.approx(A4_LANDSCAPE, abs=0.05)
    assert str(out) in capsys.readouterr().out


def test_cli_report_default_name_and_folder(tmp_path) -> None:
    plan = _plan_file(tmp_path, textbook_dict())
    assert main(["report", str(plan)]) == 0
    assert (tmp_path / "plan_report.pdf").exists()
    sub = tmp_path / "reports"
    sub.mkdir()
    assert main(["report", str(plan), "-o", str(sub)]) == 0
    assert (sub / "plan_report.pdf").exists()


def test_cli_bad_input_exits_2_and_writes_nothing(tmp_path, capsys) -> None:
    data = textbook_dict()
    data["demand"]["veh_h"][3] = -5
    plan = _plan_file(tmp_path, data)
    before = plan.read_bytes()
    assert main(["report", str(plan)]) == 2
    err = capsys.readouterr().err
    assert "demand.veh_h[3]" in err and "Traceback" not in err
    assert plan.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.json"]


@pytest.mark.parametrize("target", ["plan.json", "report.xlsx"])
def test_cli_refuses_to_overwrite_plan_or_non_pdf(tmp_path, capsys, target) -> None:
    plan = _plan_file(tmp_path, textbook_dict())
    before = plan.read_bytes()
    assert main(["report", str(plan), "-o", str(tmp_path / target)]) == 2
    err = capsys.readouterr().err
    assert "-o" in err and "Traceback" not in err
    assert plan.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.json"]


def test_allowable_closure_hours_section_matches_the_windows_search() -> None:
    # the report's windows page shows wzq.engine.windows' own answer for this plan
    from wzq.engine.windows import longest_windows, plan_windows

    plan = load_plan(EXAMPLE)
    result = wzq.analyse(plan)
    texts = pages_text(build_report(result, generated=DAY, vector=False))
    page = next(t for t in texts if "Allowable closure hours" in t)
    best = longest_windows(plan_windows(plan), top=3).iloc[0]
    assert f"{best['start']:%a %Y-%m-%d %H:%M}" in page
    assert f"{best['added_delay_veh_h']:,.1f}" in page
