"""How fast ``wzq`` starts: ``--version``, ``--help`` and ``check`` on the demo workbook
as fresh processes, against a bare ``python -c pass``, measured side by side.

Each round runs the bare start and then each command back to back, so both see the
same machine load; printed are the medians of the rounds, the median extra time
over the bare start with its min-max, and the target: ``--help`` under 0.3 s above
bare Python (the registry of commands lists them without importing any).

``--compare PATH`` also times another checkout of wzq (for example the code before a
change) in the same rounds, so the two are compared on equal terms.

    python benchmarks/startup.py [--repeat N] [--compare PATH]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "examples" / "kestrel_ridge_weeknight.xlsx"
TARGET_HELP_S = 0.3
CASES = {
    "wzq --version": ["--version"],
    "wzq --help": ["--help"],
    "wzq check (demo workbook)": ["check", str(DEMO)],
}


def timed(cmd: list[str], root: Path | None = None) -> float:
    """Wall time of one fresh process run in ``root`` (so ``python -m wzq`` imports that
    tree's wzq: ``-m`` puts the working folder first on the path); it must succeed."""
    env = dict(os.environ)
    if root is not None:
        env["PYTHONPATH"] = str(root)
    t0 = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True, env=env, cwd=root or ROOT)
    seconds = time.perf_counter() - t0
    if done.returncode != 0:
        raise SystemExit(f"failed ({done.returncode}): {' '.join(cmd)}\n{done.stderr[-2000:]}")
    return seconds


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=15, help="rounds (default 15)")
    parser.add_argument("--compare", type=Path, help="another wzq checkout, timed alongside")
    args = parser.parse_args()
    trees = {"this": ROOT}
    if args.compare is not None:
        trees["compared"] = args.compare.resolve()
    py = sys.executable
    print(f"{args.repeat} rounds; bare start: {py} -c pass")
    print(f"{'command':<28}{'tree':<10}{'bare s':>8}{'cmd s':>8}{'extra s':>9}  (min-max)   target")
    for label, argv in CASES.items():
        bare: list[float] = []
        extra: dict[str, list[float]] = {name: [] for name in trees}
        runs: dict[str, list[float]] = {name: [] for name in trees}
        for _ in range(args.repeat):
            b = timed([py, "-c", "pass"])
            bare.append(b)
            for name, root in trees.items():
                c = timed([py, "-m", "wzq", *argv], root)
                runs[name].append(c)
                extra[name].append(c - b)
        for name in trees:
            e = extra[name]
            target = (
                f"< {TARGET_HELP_S} s above bare"
                if label == "wzq --help" and name == "this"
                else ""
            )
            print(
                f"{label:<28}{name:<10}{statistics.median(bare):>8.3f}"
                f"{statistics.median(runs[name]):>8.3f}{statistics.median(e):>9.3f}  "
                f"({min(e):.3f}-{max(e):.3f})  {target}"
            )
    return 0


if __name__ == "__main__":
    sys.exit(main())
