"""Hostile files at full size: time and peak memory of every command's refusal.

The test suite (``tests/guarantees/test_refused_before_parsing.py``) runs its corpus through every
command and holds each refusal to 5 s and 500 MB. This script prints the same
measurements as a table, and adds the cases at the size they were first seen,
which the tests keep smaller to stay quick: 250 MiB of shared strings in a
file of about 17 MB (15 to 1, under the compression-ratio limit), and a
shared-string table just under the limit on the number of texts, which must
be read, not refused, within the memory bound (its time is openpyxl's own
reading, printed for information).

Each command runs in a process forked from a fresh runner; its peak memory is
the ``ru_maxrss`` its parent sees when it ends (``tests/entry_points.py``).

    python benchmarks/hostile.py [--only NAME]
"""

from __future__ import annotations

import argparse
import io
import sys
import tempfile
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))  # the corpus and the runner of the tests

from entry_points import run_jobs  # noqa: E402
from test_hostile_files import (  # noqa: E402
    COMMANDS,
    HOSTILE,
    KESTREL,
    PEAK_MIB,
    SECONDS,
    _jobs,
    with_shared_strings,
)
from workbook_helpers import fill_template  # noqa: E402

from wzq.io.jsonplan import load_plan  # noqa: E402
from wzq.io.workbook.safety import LIMITS  # noqa: E402


def shared_strings_at_full_size(base: bytes) -> bytes:
    """Case 5 as first seen: 250 MiB of short notes, compressed about 27 to 1."""
    from test_hostile_files import SHARED_STRINGS, add_part, parts_of

    parts = parts_of(base)
    notes = b"".join(b"<si><t>Lane closure note %07d</t></si>" % i for i in range(7_000_000))
    parts["xl/sharedStrings.xml"] = (
        b'<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        + notes
        + b"</sst>"
    )
    add_part(parts, "xl/sharedStrings.xml", *SHARED_STRINGS)
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            z.writestr(name, data)
    return out.getvalue()


def shared_strings_just_under_the_count_limit(base: bytes) -> bytes:
    return with_shared_strings(base, (b"%d" % i for i in range(LIMITS.max_shared_strings - 10)))


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--only", help="run only the file made by this function")
    args = p.parse_args(argv)
    cases = [(m, words) for _, m, words in HOSTILE]
    cases += [(shared_strings_at_full_size, "over 32 MiB of text")]
    cases += [(shared_strings_just_under_the_count_limit, None)]
    if args.only:
        cases = [(m, w) for m, w in cases if m.__name__ == args.only]
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        base = fill_template(load_plan(KESTREL), root / "plan.xlsx").read_bytes()
        jobs, expect = [], {}
        for make, words in cases:
            folder = root / make.__name__
            folder.mkdir()
            path = folder / f"{make.__name__}.xlsx"
            path.write_bytes(make(base))
            out = root / f"{make.__name__}-out"
            out.mkdir()
            if words is None:  # under the limits: read, through the one command that only reads
                jobs.append({"key": f"{path.stem}/check", "argv": ["check", str(path)]})
            else:
                jobs += _jobs(path, out)
            expect[make.__name__] = (path.stat().st_size, words)
        results = run_jobs(jobs, timeout=3600)
    print(f"limits: {SECONDS:g} s and {PEAK_MIB:g} MiB per command")
    print(f"{'file (size)':58s} {'command':10s} {'exit':>4s} {'s':>6s} {'MiB':>6s}  ok")
    bad = 0
    for key, r in results.items():
        name, command = key.split("/")
        size, words = expect[name]
        if words is None:  # read, not refused: memory bound only
            ok = r["status"] == 0 and r["peak_mib"] < PEAK_MIB
        else:
            ok = r["status"] == 2 and words in r["stderr"]
            ok = ok and r["seconds"] < SECONDS and r["peak_mib"] < PEAK_MIB
        bad += not ok
        label = f"{name} ({size / 2**20:.1f} MiB)"
        print(
            f"{label:58s} {command:10s} {r['status']:4d} {r['seconds']:6.2f} "
            f"{r['peak_mib']:6.0f}  {'yes' if ok else 'NO'}"
        )
    print(f"{len(results) - bad} of {len(results)} within the limits ({len(COMMANDS)} commands)")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
