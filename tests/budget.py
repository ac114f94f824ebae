"""The hypothesis budget of the property tests, by profile (see conftest.py).

``examples(n)``: ``n`` on the ``ci`` profile (the full budget, ``.ci/run``), a tenth of
it (at least 10) on ``dev``, the default for local runs."""

from __future__ import annotations

import os

#: The profile in force: ``ci`` (full budget) or ``dev`` (the default).
PROFILE = os.environ.get("HYPOTHESIS_PROFILE", "dev")
if PROFILE not in ("ci", "dev"):
    raise ValueError(f"HYPOTHESIS_PROFILE must be 'ci' or 'dev', not {PROFILE!r}")
FULL = PROFILE == "ci"


def examples(n: int) -> int:
    """The number of examples a property test runs: its full ``n`` on ``ci``."""
    return n if FULL else max(10, n // 10)
