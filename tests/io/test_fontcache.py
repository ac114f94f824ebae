"""The report's fonts, parsed once and then loaded from a cache (:mod:`wzq.io.fontcache`).

The proof that a cached font is the font: a report built in a fresh process with
fonts loaded from the cache is byte for byte the report built with fonts parsed
by reportlab itself (reportlab's invariant mode fixes the file's dates and id).
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from wzq.io import fontcache

ROOT = Path(__file__).resolve().parents[2]

#: Builds the Kestrel Ridge report in a fresh process; ``parse`` bypasses the cache.
SCRIPT = """
import datetime as dt, sys
from reportlab import rl_config
rl_config.invariant = 1
import wzq
from wzq.io import fontcache, report
from wzq.io.jsonplan import load_plan
if sys.argv[1] == "parse":
    report.load_ttfonts = fontcache._parsed
plan = load_plan(sys.argv[2])
sys.stdout.buffer.write(report.build_report(wzq.analyse(plan), generated=dt.date(2027, 1, 1)))
"""


def _report(how: str, cache: Path) -> bytes:
    env = dict(os.environ, WZQ_CACHE_DIR=str(cache), PYTHONPATH=str(ROOT))
    plan = ROOT / "examples" / "kestrel_ridge_weeknight.json"
    done = subprocess.run(
        [sys.executable, "-c", SCRIPT, how, str(plan)], capture_output=True, env=env, check=True
    )
    return done.stdout


@pytest.mark.slow  # three reports, each in a process of its own
def test_a_report_with_cached_fonts_is_the_report_with_parsed_fonts(tmp_path):
    parsed = _report("parse", tmp_path)
    assert not list(tmp_path.iterdir())  # nothing kept
    first = _report("cache", tmp_path)  # parsed, then kept
    kept = list(tmp_path.glob("fonts-*.pickle"))
    assert len(kept) == 1
    second = _report("cache", tmp_path)  # loaded from the cache
    assert parsed.startswith(b"%PDF")
    assert first == parsed
    assert second == parsed


def _faces() -> list[tuple[str, Path]]:
    import matplotlib

    ttf = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
    return [("TestSans", ttf / "DejaVuSans.ttf"), ("TestSansBold", ttf / "DejaVuSans-Bold.ttf")]


def test_fonts_come_back_from_the_cache_with_the_same_metrics(tmp_path, monkeypatch):
    monkeypatch.setenv("WZQ_CACHE_DIR", str(tmp_path))
    parsed = fontcache.load_ttfonts(_faces())
    (file,) = tmp_path.glob("fonts-*.pickle")
    loaded = fontcache.load_ttfonts(_faces())
    assert loaded is not parsed and [f.fontName for f in loaded] == ["TestSans", "TestSansBold"]
    text = "Ashgrove Bypass — 1,250 veh/h, Zürich, Ωμέγα"
    for a, b in zip(parsed, loaded, strict=True):
        assert a.stringWidth(text, 9) == b.stringWidth(text, 9) > 0
        assert a.face.charWidths == b.face.charWidths
    file.write_bytes(b"not a pickle")  # damaged: parsed again, and kept again
    again = fontcache.load_ttfonts(_faces())
    assert again[0].stringWidth(text, 9) == parsed[0].stringWidth(text, 9)
    assert file.read_bytes() != b"not a pickle"


def test_a_changed_font_file_is_parsed_again(tmp_path, monkeypatch):
    monkeypatch.setenv("WZQ_CACHE_DIR", str(tmp_path / "cache"))
    src = _faces()[0][1]
    mine = tmp_path / "Mine.ttf"
    mine.write_bytes(src.read_bytes())
    fontcache.load_ttfonts([("Mine", mine)])
    os.utime(mine, ns=(1, 1))  # another modification time: another file
    fontcache.load_ttfonts([("Mine", mine)])
    assert len(list((tmp_path / "cache").glob("fonts-*.pickle"))) == 2


def test_an_unwritable_cache_folder_still_gives_the_fonts(tmp_path, monkeypatch):
    blocker = tmp_path / "file"
    blocker.write_text("a file where the folder would be")
    monkeypatch.setenv("WZQ_CACHE_DIR", str(blocker / "cache"))
    fonts = fontcache.load_ttfonts(_faces())
    assert fonts[0].stringWidth("abc", 10) > 0
