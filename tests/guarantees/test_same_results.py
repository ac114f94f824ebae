"""Every example and benchmark plan gives what it gave before the package layout changed.

``tests/data/golden/golden.json`` was recorded by ``tests/data/golden/make_golden.py``
on the flat layout (main at 2511b9f); the script's docstring says what is in it. Any
difference is listed by where it lies (plan, table, column).
"""

from __future__ import annotations

import importlib.util
import json
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow  # workbooks, reports or processes end to end

GOLDEN = Path(__file__).parents[1] / "data" / "golden"


def _script():
    spec = importlib.util.spec_from_file_location("make_golden", GOLDEN / "make_golden.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _differences(stored, now, path: str = "") -> list[str]:
    if isinstance(stored, dict) and "sha256" not in stored:
        out = []
        for key in sorted(set(stored) | set(now if isinstance(now, dict) else {})):
            if key not in stored or not isinstance(now, dict) or key not in now:
                out.append(f"{path}/{key}: only in {'today' if key not in stored else 'stored'}")
            else:
                out += _differences(stored[key], now[key], f"{path}/{key}")
        return out
    return [] if stored == now else [f"{path}: stored {stored}, today {now}"]


def test_every_output_is_the_one_stored_before_the_move():
    make = _script()
    stored = json.loads((GOLDEN / "golden.json").read_text())
    now = json.loads(json.dumps(make.digests(make.collect())))
    diff = _differences(stored, now)
    assert not diff, "\n".join(diff[:40])
