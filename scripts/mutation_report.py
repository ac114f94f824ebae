"""Print the mutation score per module from mutmut's results in ``mutants/``.

The score is mutmut's own (as in ``mutmut export-cicd-stats`` and its badge):
killed and timed-out mutants over all mutants tried, so a mutant in a function
that no selected test reaches ("no tests") counts against the score. Mutants
listed as equivalent in docs/mutation.md (``- `name` -- reason``) are reported
separately and left out of the second score.

    python3 scripts/mutation_report.py            # table per module
    python3 scripts/mutation_report.py --survivors  # and every surviving mutant's name
    python3 scripts/mutation_report.py --pending wzq/engine/site.py ...
        # only the names of the mutants not yet tried in those modules, one a line, for
        # `mutmut run NAME...` (a run that names mutants tries exactly those)
    python3 scripts/mutation_report.py --open wzq/engine/site.py ...
        # the same, and the survivors not listed as equivalent (to try again after new tests)
"""

from __future__ import annotations

import fnmatch
import json
import re
import sys
import tomllib
from collections import Counter
from pathlib import Path

#: the project whose mutants/ is read: the current folder (scripts/mutation.sh runs from the root)
ROOT = Path.cwd()
#: mutmut's exit codes (mutmut.stats.status_by_exit_code)
KILLED, SURVIVED, NO_TESTS, TIMEOUT = {1, 3}, {0}, {5, 33}, {36, 24, -24, 152, 255}


def equivalent_names(doc: Path = ROOT / "docs" / "mutation.md") -> set[str]:
    """Mutant names listed as equivalent in the report (lines ``- `name` -- reason`` under
    its heading "Equivalent mutants")."""
    if not doc.exists():
        return set()
    # only the list under its own heading: survivors named elsewhere are not equivalent
    text = doc.read_text().partition("\n## Equivalent mutants\n")[2]
    return set(re.findall(r"^- `([\w.ǁ]+__mutmut_\d+)`", text, flags=re.M))


#: The groups the targets are set for (docs/mutation.md): module globs, or for the writer
#: the functions that turn numbers into cells (its styling is not scored).
GROUPS: dict[str, tuple[str, ...]] = {
    "models": ("wzq/units.py", "wzq/models/*.py"),
    "engine": tuple(
        f"wzq/engine/{m}.py"
        for m in ("site", "grid", "evaluate", "hourly", "queue_length", "costs", "windows")
    ),
    "reader value paths": ("wzq/io/workbook/reader/*.py", "wzq/io/workbook/saved_values.py"),
    "writer value paths": tuple(
        f"wzq.io.workbook.writer.x_{f}__mutmut_*"
        for f in (
            "values",
            "hour_closures",
            "listed_hours",
            "cell_text",
            "put_text",
            "number_looks",
            "limit_texts",
            "plan_checks",
            "closure_text",
            "input_fingerprint",
            "utc_now",
        )
    ),
}


def mutated_globs() -> list[str]:
    """``only_mutate`` of ``[tool.mutmut]``: modules dropped from it are not reported."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())
    return config["tool"]["mutmut"].get("only_mutate", ["*"])


def results(root: Path = ROOT / "mutants") -> dict[str, dict[str, int | None]]:
    globs = mutated_globs()
    out = {}
    for meta in sorted(root.rglob("*.py.meta")):
        module = str(meta.relative_to(root))[: -len(".meta")]
        if any(fnmatch.fnmatch(module, g) for g in globs):
            out[module] = json.loads(meta.read_text())["exit_code_by_key"]
    return out


def kind_of(code: int | None) -> str:
    if code in KILLED:
        return "killed"
    if code in TIMEOUT:
        return "timeout"
    if code in SURVIVED:
        return "survived"
    if code in NO_TESTS:
        return "no tests"
    return "not run" if code is None else "other"


def in_group(group: str, module: str, name: str) -> bool:
    return any(fnmatch.fnmatch(name if "__mutmut_" in g else module, g) for g in GROUPS[group])


def pending(modules: list[str], *, survivors: bool = False) -> int:
    """Print the names of the mutants of ``modules`` that no run has tried yet (and, with
    ``survivors``, those that survived and are not listed as equivalent)."""
    data = results()
    equivalent = equivalent_names() if survivors else set()
    retry = SURVIVED | NO_TESTS if survivors else set()
    for module in modules:
        for name, code in data.get(module, {}).items():
            if code is None or (code in retry and name not in equivalent):
                print(name)
    return 0


def main() -> int:
    if sys.argv[1:2] == ["--pending"]:
        return pending(sys.argv[2:])
    if sys.argv[1:2] == ["--open"]:
        return pending(sys.argv[2:], survivors=True)
    equivalent = equivalent_names()
    data = results()
    if not data:
        print("no results in mutants/: run scripts/mutation.sh first")
        return 1
    rows = []
    total = Counter()
    groups = {g: Counter() for g in GROUPS}
    survivors = []
    for module, codes in data.items():
        c = Counter()
        for name, code in codes.items():
            kind = kind_of(code)
            counts = [c] + [groups[g] for g in GROUPS if in_group(g, module, name)]
            for counter in counts:
                counter[kind] += 1
            if kind in ("survived", "no tests"):
                if name in equivalent:
                    for counter in counts:
                        counter["equivalent"] += 1
                else:
                    survivors.append((name, kind))
        total.update(c)
        rows.append((module, c))
    rows.append(("all", total))
    rows.extend(groups.items())
    print(
        f"{'module':34} {'mutants':>7} {'killed':>7} {'timeout':>7} {'survived':>8} "
        f"{'no tests':>8} {'not run':>7} {'equiv.':>6} {'score':>6} {'excl. eq.':>9}"
    )
    for module, c in rows:
        n = sum(c[k] for k in ("killed", "timeout", "survived", "no tests", "other", "not run"))
        tried = n - c["not run"]
        caught = c["killed"] + c["timeout"]
        score = 100 * caught / tried if tried else float("nan")
        net = tried - c["equivalent"]
        score_eq = 100 * caught / net if net else float("nan")
        print(
            f"{module:34} {n:7d} {c['killed']:7d} {c['timeout']:7d} {c['survived']:8d} "
            f"{c['no tests']:8d} {c['not run']:7d} {c['equivalent']:6d} {score:5.1f}% "
            f"{score_eq:8.1f}%"
        )
    if "--survivors" in sys.argv:
        for name, kind in survivors:
            print(f"{kind:9} {name}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
