"""The trapezoidal diagram (a triangle with a plateau at capacity) by hand (issue 22).

``Q(k) = min(v_f k, C, w (k_j - k))``: the free branch reaches capacity at
``k_1 = C / v_f``, the congested branch leaves it at ``k_c = k_j - C / w``
(Newell 1993's triangle with the capacity cut flat, as in Daganzo 1994's cell
transmission model). Hand diagram: v_f 25 m/s, C 0.5 veh/s/ln, k_j 0.125 veh/m/ln,
w 5 m/s, so k_1 = 0.02 and k_c = 0.125 - 0.1 = 0.025 veh/m/ln.
"""

from __future__ import annotations

import numpy as np
import pytest

from wzq.models.flow import Trapezoidal

V_F, C, K_J, W = 25.0, 0.5, 0.125, 5.0


def fd(w: float = W) -> Trapezoidal:
    return Trapezoidal(free_speed=V_F, capacity=C, jam_density=K_J, backward_wave_speed=w)


def test_speed_on_each_branch_by_hand() -> None:
    # free: v_f; plateau: C / k; congested: w (k_j - k) / k
    k = np.array([0.01, 0.0225, 0.1])
    np.testing.assert_allclose(fd().speed(k), [25.0, 0.5 / 0.0225, 5.0 * 0.025 / 0.1], rtol=1e-12)
    assert fd().speed(0.01) == 25.0


def test_wave_speed_takes_the_left_hand_slope_at_each_kink() -> None:
    # documented: at a kink the lower-density slope; v_f at k_1, 0 at k_c (each kink
    # taken as the diagram computes it, k_c = 0.125 - 0.5 / 5 being 0.025 less an ulp)
    d = fd()
    assert d.free_capacity_density == pytest.approx(0.02, rel=1e-12)
    assert d.critical_density == pytest.approx(0.025, rel=1e-12)
    kinks = np.array([0.01, d.free_capacity_density, 0.0225, d.critical_density, 0.1])
    np.testing.assert_array_equal(d.wave_speed(kinks), [25.0, 25.0, 0.0, 0.0, -5.0])


def test_a_branch_meeting_the_free_branch_at_capacity_is_a_triangle() -> None:
    # w = C / (k_j - k_1) = 0.5 / 0.105: k_c = k_1 (to rounding), no plateau, not refused
    d = fd(C / (K_J - C / V_F))
    assert d.critical_density == pytest.approx(0.02, rel=1e-12)
    assert d.flow(0.02) == pytest.approx(0.5, rel=1e-12)


def test_a_wave_too_slow_to_reach_capacity_is_refused_with_what_to_do() -> None:
    # w = 4: k_c = 0.125 - 0.5 / 4 = 0, below k_1 = 0.02
    with pytest.raises(ValueError, match=r"below the free branch's 0\.02 veh/m/ln") as e:
        fd(4.0)
    assert str(e.value).endswith(
        "the road could not carry its capacity -- use a faster wave or a higher jam density"
    )
    with pytest.raises(ValueError, match="free_speed"):
        Trapezoidal(free_speed=-1.0, capacity=C, jam_density=K_J, backward_wave_speed=W)
    with pytest.raises(ValueError, match="backward_wave_speed"):
        Trapezoidal(free_speed=V_F, capacity=C, jam_density=K_J, backward_wave_speed=0.0)
