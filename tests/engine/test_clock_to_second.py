"""The charts' clock times to the second, without pandas, exactly as pandas gives them."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd

from wzq.engine.results import clock_to_second


def _pandas(start: dt.datetime, seconds: np.ndarray) -> list[dt.datetime]:
    stamps = pd.Timestamp(start) + pd.to_timedelta(seconds, unit="s")
    return [pd.Timestamp(t).round("s").to_pydatetime() for t in stamps]


def test_worked_by_hand() -> None:
    start = dt.datetime(2027, 5, 3, 21)
    # 0.4 s down, 0.6 s up; halves to the even second: 0.5 -> 0, 1.5 -> 2, 2.5 -> 2
    got = clock_to_second(start, np.array([0.4, 0.6, 0.5, 1.5, 2.5, 3600.0 + 59.5]))
    assert [t - start for t in got] == [dt.timedelta(seconds=s) for s in (0, 1, 0, 2, 2, 3660)]


def test_as_pandas_on_many_times() -> None:
    rng = np.random.default_rng(18)
    halves = np.arange(2000) * 0.5
    seconds = np.concatenate(
        (
            rng.uniform(0, 3.2e7, 20_000),  # a year
            halves,
            halves + 1e-7,
            np.maximum(halves - 1e-7, 0),
            rng.uniform(0, 1e5, 5000).round(3),
            np.arange(1000) / 3,
        )
    )
    for start in (dt.datetime(2027, 5, 3, 21), dt.datetime(2026, 12, 31, 23)):
        assert clock_to_second(start, seconds) == _pandas(start, seconds)
