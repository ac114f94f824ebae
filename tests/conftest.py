"""Shared test settings: the hypothesis budget and the markers.

Hypothesis profiles (``HYPOTHESIS_PROFILE``): ``dev``, the default, runs each property
test on a tenth of its examples (at least 10), so a developer's run stays short; ``ci``
runs the full budget each test states (``.ci/run`` selects it). Property tests state
their budget through :func:`budget.examples`, which follows the profile.

Markers (registered in pyproject.toml): ``slow`` for tests over a few seconds,
``libreoffice`` for tests that drive a real LibreOffice. Every run of ``python3 -m
pytest -q`` includes them; ``-m "not slow and not libreoffice"`` leaves them out for
a quick local run (DEVELOPERS.md, "Tests").

This folder is put on ``sys.path`` by pytest (this file's folder), so the helpers
beside it (``workbook_helpers``, ``fake_xlwings`` ...) import by name from the
sub-folders too.

The engine caches the site model and the capacity of each lane configuration
(``functools.lru_cache`` in :mod:`wzq.engine.site`). Mutation testing runs each
mutant's tests in a process forked from one that has already run the tests, so
without a fresh start a mutated capacity function would never be called: the
cache would answer with the unmutated values. Every test session starts with
empty caches.
"""

from __future__ import annotations

import os

from budget import PROFILE
from hypothesis import settings

settings.register_profile("ci", settings(print_blob=True))
settings.register_profile("dev", settings())
settings.load_profile(PROFILE)


def pytest_report_header(config) -> str:
    given = os.environ.get("HYPOTHESIS_PROFILE", "")
    return f"hypothesis profile: {PROFILE} (HYPOTHESIS_PROFILE={given!r})"


def pytest_sessionstart(session) -> None:
    import tempfile

    from wzq.engine import site

    # wzq's caches (the report's parsed fonts) go to a folder of this test session, not
    # to the user's own cache folder; tests of the cache set their own
    if "WZQ_CACHE_DIR" not in os.environ:
        session.config.wzq_cache = tempfile.mkdtemp(prefix="wzq-test-cache-")
        os.environ["WZQ_CACHE_DIR"] = session.config.wzq_cache
    site.site_model.cache_clear()
    site.configuration.cache_clear()


def pytest_sessionfinish(session) -> None:
    import shutil

    own = getattr(session.config, "wzq_cache", None)
    if own:
        shutil.rmtree(own, ignore_errors=True)
