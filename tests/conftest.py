"""Shared pytest set-up.

The engine caches the site model and the capacity of each lane configuration
(``functools.lru_cache`` in :mod:`wzq.analysis`). Mutation testing runs each
mutant's tests in a process forked from one that has already run the tests, so
without a fresh start a mutated capacity function would never be called: the
cache would answer with the unmutated values. Every test session starts with
empty caches.
"""

from __future__ import annotations


def pytest_sessionstart(session) -> None:
    from wzq import analysis

    analysis.site_model.cache_clear()
    analysis.configuration.cache_clear()
