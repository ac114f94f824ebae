"""Display rounding: half away from zero as a person rounds (not banker's rounding)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from wzq.present.tables import rounded, rounded_all


def test_halves_round_away_from_zero_by_hand() -> None:
    # by hand: 0.5 -> 1, 1.5 -> 2, 2.5 -> 3 (banker's rounding would give 0, 2, 2), and
    # the same away from zero below it; whole numbers come back as int
    got = rounded_all(np.array([0.5, 1.5, 2.5, -2.5, 0.49]), 0)
    assert got == [1, 2, 3, -3, 0]
    assert all(type(x) is int for x in got)
    # 0.125 m to 2 decimals is 0.13 (half away from zero), 1.04 stays 1.04
    assert rounded_all(np.array([0.125, -0.125, 1.04]), 2) == [0.13, -0.13, 1.04]


def test_nan_is_a_blank_cell() -> None:
    assert rounded_all(np.array([np.nan, 3.14159]), 1) == [None, 3.1]


@pytest.mark.parametrize("decimals", [0, 1, 2, 3])
def test_the_array_rounding_gives_what_rounding_each_value_gives(decimals: int) -> None:
    # every value, to the last bit, the sign of zero and int or float, as rounded() gives it
    rng = np.random.default_rng(18)
    values = np.concatenate(
        [
            rng.normal(0, 800, 4000),
            rng.integers(-4000, 4000, 2000) / 8,  # exact halves, quarters, eighths
            rng.integers(-4000, 4000, 2000) / 1000 * 0.000621371,
            [-0.0, 0.0, -0.004, 2.675, 1.005, 1e15, -1e15],
        ]
    )
    got = rounded_all(values, decimals)
    for v, g in zip(values, got, strict=True):
        want = rounded(v, decimals)
        assert type(g) is type(want) and g == want, (v, g, want)
        assert math.copysign(1, g) == math.copysign(1, want), (v, g, want)
