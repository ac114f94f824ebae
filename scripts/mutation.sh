#!/usr/bin/env bash
# Mutation testing of the models and the engine (issue 22): mutmut plants small bugs
# (an operator swapped, a constant off by one, a comparison loosened, a term dropped)
# one at a time and runs the tests that reach each one; a mutant the tests do not
# notice "survives". Configuration: [tool.mutmut] in pyproject.toml (the modules
# mutated and the tests run). Results are cached in mutants/ (git-ignored), so a
# second run only tries mutants whose function changed; `mutmut run NAME...` retries
# named ones (globs allowed, e.g. 'wzq.units.*').
#
#   scripts/mutation.sh            # run (nice -n 19, one worker), then print the report
#   JOBS=2 scripts/mutation.sh     # two workers, on a machine nobody else is using
#   scripts/mutation.sh --report   # only print the report of the last run
#   scripts/mutation.sh $(python3 scripts/mutation_report.py --pending wzq/engine/site.py)
#                                  # only the mutants of one module not tried yet
#
# Not part of CI: a full run takes hours on two shared cores (see DEVELOPERS.md).
set -euo pipefail
cd "$(dirname "$0")/.."
export PYTHONPATH="$PWD"
if [[ "${1:-}" != "--report" ]]; then
  python3 -c "import mutmut" 2>/dev/null || python3 -m pip install -q "mutmut>=3.3,<4"
  start=$(date +%s)
  nice -n 19 mutmut run --max-children "${JOBS:-1}" "$@" || true
  echo "mutation run took $(( ($(date +%s) - start) / 60 )) min"
fi
python3 scripts/mutation_report.py
