"""Tests for wzq.models.flow: fundamental diagrams of the LWR model (SI, per lane).

Units inside wzq.models.flow: density veh/m/ln, flow veh/s/ln, speed m/s. Values quoted
in trade units are converted with wzq.units.

Hand-calculated expected values are worked out in the comment beside each check
from the published definition named there; none is copied from the code's output.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from wzq import units
from wzq.models.flow import (
    DIAGRAMS,
    CappedGreenshields,
    FundamentalDiagram,
    Greenshields,
    Triangular,
    make_diagram,
)

# Invented example diagrams (SI): v_f 24 m/s (86.4 km/h), k_j 0.12 veh/m (120 veh/km/ln).
GS = Greenshields(free_speed=24.0, jam_density=0.12)
# v_f 30 m/s, capacity 0.6 veh/s/ln (2160 veh/h/ln), k_j 0.125 veh/m/ln.
TRI = Triangular(free_speed=30.0, capacity=0.6, jam_density=0.125)
# Same Greenshields line with a 16 m/s cap (>= v_f/2) and an 8 m/s cap (< v_f/2).
CAP_HIGH = CappedGreenshields(free_speed=24.0, jam_density=0.12, speed_cap=16.0)
CAP_LOW = CappedGreenshields(free_speed=24.0, jam_density=0.12, speed_cap=8.0)


# --------------------------------------------------------------------------- Greenshields


def test_greenshields_capacity_at_half_jam_density() -> None:
    # Greenshields (1935); q_max = v_f k_j / 4 at k_j / 2 is in any traffic-flow text,
    # e.g. Mannering & Washburn, Principles of Highway Engineering and Traffic
    # Analysis, Ch. 5 (from memory). Hand: 24 * 0.12 / 4 = 0.72 veh/s at 0.06 veh/m.
    assert GS.capacity == pytest.approx(0.72, rel=1e-12)
    assert GS.critical_density == pytest.approx(0.06, rel=1e-12)
    assert GS.flow(0.06) == pytest.approx(0.72, rel=1e-12)
    # Either side of k_j/2 the flow is lower (hand: 24*0.05*(1-0.05/0.12) = 0.7).
    assert GS.flow(0.05) == pytest.approx(0.70, rel=1e-12)
    assert GS.flow(0.07) == pytest.approx(0.70, rel=1e-12)


def test_greenshields_capacity_in_trade_units() -> None:
    # Greenshields (1935) q_max = v_f k_j / 4 (Mannering & Washburn Ch. 5, from memory).
    # Hand: 100 km/h x 160 veh/km / 4 = 4000 veh/h/ln at 80 veh/km/ln.
    d = Greenshields(free_speed=units.kmh_to_mps(100.0), jam_density=units.per_km_to_per_m(160.0))
    assert d.capacity * units.HOUR == pytest.approx(4000.0, rel=1e-12)
    assert units.per_m_to_per_km(d.critical_density) == pytest.approx(80.0, rel=1e-12)


def test_greenshields_speed_end_points_and_line() -> None:
    # Greenshields (1935) v = v_f (1 - k/k_j). Hand: v(0) = 24, v(0.03) = 18, v(0.12) = 0.
    np.testing.assert_allclose(GS.speed([0.0, 0.03, 0.12]), [24.0, 18.0, 0.0], atol=1e-12)


def test_greenshields_wave_speed() -> None:
    # Characteristic speed dq/dk = v_f (1 - 2k/k_j) (Lighthill & Whitham 1955 applied to
    # Greenshields; REFERENCES.md "Traffic-flow relations"). Hand, at k = 0, k_j/4, k_j/2,
    # 3k_j/4, k_j: 24, 12, 0, -12, -24 m/s; negative above k_j/2.
    k = np.array([0.0, 0.03, 0.06, 0.09, 0.12])
    np.testing.assert_allclose(GS.wave_speed(k), [24.0, 12.0, 0.0, -12.0, -24.0], atol=1e-12)
    assert GS.wave_speed(0.061) < 0.0


def test_greenshields_shock_speed_chord_and_closed_form() -> None:
    # Rankine-Hugoniot shock speed (q2-q1)/(k2-k1) (Lighthill & Whitham 1955; Richards 1956),
    # for Greenshields v_f (1 - (k1 + k2)/k_j) (REFERENCES.md). Hand: q(0.02) = 24*0.02*5/6
    # = 0.4, q(0.09) = 24*0.09*0.25 = 0.54, chord 0.14/0.07 = 2.0; closed form
    # 24*(1 - 0.11/0.12) = 2.0 m/s.
    assert GS.shock_speed(0.02, 0.09) == pytest.approx(2.0, rel=1e-12)
    assert GS.shock_speed(0.09, 0.02) == pytest.approx(2.0, rel=1e-12)
    # Limit k1 == k2 is the wave speed (hand: 24*(1 - 0.06/0.12) = 12 at k = 0.03).
    assert GS.shock_speed(0.03, 0.03) == pytest.approx(12.0, rel=1e-12)


def test_greenshields_both_densities_for_a_flow() -> None:
    # Inverting q = v_f k (1 - k/k_j) (Greenshields 1935). Hand: q = 0.54 veh/s gives
    # 200 k^2 - 24 k + 0.54 = 0 -> k = (24 -+ 12)/400 = 0.03 and 0.09 veh/m.
    assert GS.density_free(0.54) == pytest.approx(0.03, rel=1e-12)
    assert GS.density_congested(0.54) == pytest.approx(0.09, rel=1e-12)
    # At capacity both branches meet at k_j/2; at zero flow they are 0 and k_j.
    assert GS.density_free(GS.capacity) == pytest.approx(0.06, rel=1e-12)
    assert GS.density_congested(GS.capacity) == pytest.approx(0.06, rel=1e-12)
    assert GS.density_free(0.0) == 0.0
    assert GS.density_congested(0.0) == pytest.approx(0.12, rel=1e-12)


def test_shock_speed_wikibooks_queue_example() -> None:
    # Fundamentals of Transportation (Wikibooks), "Shockwaves" example: 2000 veh/h at 80 km/h
    # meets a stopped queue with k_j = 275 veh/km; shock speed -8 km/h (REFERENCES.md:
    # checked). Hand: k1 = 2000/80 = 25 veh/km, stopped state (275 veh/km, 0 veh/h),
    # w = (0 - 2000)/(275 - 25) = -8 km/h.
    # Two diagrams through both states: a triangular one with v_f = 80 km/h (capacity
    # 2200 veh/h, so 2000 veh/h is on its free branch), and a Greenshields one with
    # v_f = 88 km/h, chosen so that v(25) = 88 (1 - 25/275) = 80 km/h.
    q1 = 2000.0 / units.HOUR
    k_j = units.per_km_to_per_m(275.0)
    diagrams = [
        Triangular(
            free_speed=units.kmh_to_mps(80.0), capacity=2200.0 / units.HOUR, jam_density=k_j
        ),
        Greenshields(free_speed=units.kmh_to_mps(88.0), jam_density=k_j),
    ]
    for d in diagrams:
        k1 = d.density_free(q1)
        assert units.per_m_to_per_km(k1) == pytest.approx(25.0, rel=1e-9)
        assert units.mps_to_kmh(d.speed(k1)) == pytest.approx(80.0, rel=1e-9)
        assert d.flow(k_j) == 0.0
        assert units.mps_to_kmh(d.shock_speed(k1, k_j)) == pytest.approx(-8.0, rel=1e-9)


# --------------------------------------------------------------------------- Triangular


def test_triangular_definitions() -> None:
    # Newell (1993) / Daganzo (1994) triangular diagram q = min(v_f k, w (k_j - k)).
    # Hand: k_c = 0.6/30 = 0.02 veh/m; w = 0.6/(0.125 - 0.02) = 5.7142857 m/s.
    w = 0.6 / 0.105
    assert TRI.critical_density == pytest.approx(0.02, rel=1e-12)
    assert TRI.backward_wave_speed == pytest.approx(w, rel=1e-12)
    # Continuity at k_c: both branches give capacity (30*0.02 = w*0.105 = 0.6).
    assert TRI.flow(0.02) == pytest.approx(0.6, rel=1e-12)
    assert TRI.flow(0.02 * (1 - 1e-9)) == pytest.approx(0.6, rel=1e-8)
    assert TRI.flow(0.02 * (1 + 1e-9)) == pytest.approx(0.6, rel=1e-8)
    # Congested branch passes through (k_j, 0); at 0.1 veh/m: w*0.025 = 0.142857 veh/s.
    assert TRI.flow(0.125) == 0.0
    assert TRI.flow(0.1) == pytest.approx(w * 0.025, rel=1e-12)
    # Free branch: q = v_f k, so density_free(q) = q / v_f (0.3/30 = 0.01).
    assert TRI.density_free(0.3) == pytest.approx(0.01, rel=1e-12)
    # Congested: k = k_j - q/w = 0.125 - 0.3*0.105/0.6 = 0.0725.
    assert TRI.density_congested(0.3) == pytest.approx(0.0725, rel=1e-12)
    # Wave speeds: v_f on the free branch, -w on the congested one; v_f at k_c (documented).
    np.testing.assert_allclose(TRI.wave_speed([0.0, 0.01, 0.02, 0.05]), [30, 30, 30, -w])
    # Speeds: v_f up to k_c, w (k_j - k)/k above; hand at 0.1: w*0.025/0.1 = 1.4285714.
    np.testing.assert_allclose(TRI.speed([0.0, 0.02, 0.1, 0.125]), [30.0, 30.0, w / 4, 0.0])


def test_triangular_hcm_like_numbers() -> None:
    # Inputs: FFS 65 mi/h, capacity 2200 + 10*(65 - 50) = 2350 pc/h/ln (HCM 7th ed., Ch. 12,
    # basic freeway segment capacity; REFERENCES.md: checked) and jam density 190 pc/mi/ln
    # (HCM 7th ed.; REFERENCES.md: checked). The triangular k_c and w are hand calculations
    # from the Newell (1993) / Daganzo (1994) definitions, not HCM values (the HCM
    # congested branch starts at 45 pc/mi/ln):
    # k_c = 2350/65 = 36.1538 pc/mi/ln; w = 2350/(190 - 2350/65) = 152750/10000 = 15.275 mi/h.
    d = Triangular(
        free_speed=units.mph_to_mps(65.0),
        capacity=2350.0 / units.HOUR,
        jam_density=units.per_mile_to_per_m(190.0),
    )
    assert units.per_m_to_per_mile(d.critical_density) == pytest.approx(36.153846, rel=1e-7)
    assert units.mps_to_mph(d.backward_wave_speed) == pytest.approx(15.275, rel=1e-12)
    assert units.mps_to_mph(d.wave_speed(units.per_mile_to_per_m(100.0))) == pytest.approx(
        -15.275, rel=1e-12
    )


def test_triangular_rejects_capacity_at_or_above_vf_times_kj() -> None:
    # Definition (Newell 1993): k_c = capacity/v_f must lie below k_j. 30 * 0.125 = 3.75.
    with pytest.raises(ValueError, match="critical"):
        Triangular(free_speed=30.0, capacity=3.75, jam_density=0.125)
    with pytest.raises(ValueError, match="below free_speed x jam_density"):
        Triangular(free_speed=30.0, capacity=5.0, jam_density=0.125)


# --------------------------------------------------------------------------- capped Greenshields


def test_capped_greenshields_cap_above_half_free_speed() -> None:
    # Capped Greenshields: v = min(u, v_f (1 - k/k_j)) (Greenshields 1935 line with a speed
    # limit; the combination is common practice, no source). Hand for v_f 24, k_j 0.12, u 16:
    # kink k_b = 0.12 (1 - 16/24) = 0.04; u >= v_f/2 so capacity stays 0.72 at 0.06.
    assert CAP_HIGH.kink_density == pytest.approx(0.04, rel=1e-12)
    assert CAP_HIGH.capacity == pytest.approx(0.72, rel=1e-12)
    assert CAP_HIGH.critical_density == pytest.approx(0.06, rel=1e-12)
    # Flows: 16*0.03 = 0.48 (capped; plain Greenshields would give 0.54), 16*0.04 = 0.64 =
    # 24*0.04*(2/3) (continuous at the kink), 24*0.09*0.25 = 0.54 (parabola).
    np.testing.assert_allclose(CAP_HIGH.flow([0.03, 0.04, 0.09]), [0.48, 0.64, 0.54])
    np.testing.assert_allclose(CAP_HIGH.speed([0.0, 0.03, 0.09]), [16.0, 16.0, 6.0])
    # Inverse: q = 0.48 <= u k_b = 0.64 -> 0.48/16 = 0.03. q = 0.675 > 0.64 -> parabola roots
    # of 200 k^2 - 24 k + 0.675 = 0: (24 -+ 6)/400 = 0.045 and 0.075.
    assert CAP_HIGH.density_free(0.48) == pytest.approx(0.03, rel=1e-12)
    assert CAP_HIGH.density_free(0.675) == pytest.approx(0.045, rel=1e-12)
    assert CAP_HIGH.density_congested(0.675) == pytest.approx(0.075, rel=1e-12)
    # Wave speeds: u = 16 on the line, 24 (1 - 2*0.045/0.12) = 6 on the parabola.
    np.testing.assert_allclose(CAP_HIGH.wave_speed([0.02, 0.04, 0.045]), [16.0, 16.0, 6.0])
    # Shock across the kink: (0.675 - 0.48)/(0.075 - 0.03) = 13/3 m/s.
    assert CAP_HIGH.shock_speed(0.03, 0.075) == pytest.approx(13.0 / 3.0, rel=1e-12)


def test_capped_greenshields_cap_below_half_free_speed() -> None:
    # Capped Greenshields (common practice, no source). Hand for v_f 24, k_j 0.12, u 8:
    # k_b = 0.12 (1 - 8/24) = 0.08 > k_j/2, so the critical density moves to 0.08 and
    # capacity = 8 * 0.08 = 0.64 veh/s (below Greenshields' 0.72).
    assert CAP_LOW.critical_density == pytest.approx(0.08, rel=1e-12)
    assert CAP_LOW.capacity == pytest.approx(0.64, rel=1e-12)
    assert CAP_LOW.flow(0.08) == pytest.approx(0.64, rel=1e-12)
    # q = 0.4: free branch 0.4/8 = 0.05; congested parabola 24 k (1 - k/0.12) = 0.4 ->
    # (24 + sqrt(576 - 320))/400 = (24 + 16)/400 = 0.1.
    assert CAP_LOW.density_free(0.4) == pytest.approx(0.05, rel=1e-12)
    assert CAP_LOW.density_congested(0.4) == pytest.approx(0.1, rel=1e-12)
    np.testing.assert_allclose(CAP_LOW.flow([0.05, 0.1]), [0.4, 0.4])
    # Wave speeds: 8 below the kink; 24 (1 - 2*0.09/0.12) = -12 above it.
    np.testing.assert_allclose(CAP_LOW.wave_speed([0.05, 0.08, 0.09]), [8.0, 8.0, -12.0])
    # Equal flows either side: a standing shock.
    assert CAP_LOW.shock_speed(0.05, 0.1) == pytest.approx(0.0, abs=1e-12)
    # At capacity both densities are the kink density.
    assert CAP_LOW.density_free(0.64) == pytest.approx(0.08, rel=1e-12)
    assert CAP_LOW.density_congested(0.64) == pytest.approx(0.08, rel=1e-12)


def test_speed_cap_at_half_free_speed_makes_light_traffic_translate_rigidly() -> None:
    # LWR characteristics x = x0 + Q'(k(x0)) t (Lighthill & Whitham 1955). With the cap at
    # the Greenshields speed at k_j/2 (u = v_f/2 = 12 m/s), every light state (k <= k_j/2)
    # has wave speed = speed = 12 m/s, so the characteristics are parallel and a smooth
    # light profile moves 12 m/s * 120 s = 1440 m without changing shape. Derived from
    # the definitions (common practice, no source).
    capped = CappedGreenshields(free_speed=24.0, jam_density=0.12, speed_cap=12.0)
    # Capacity is unchanged by this cap (hand: 12 * 0.06 = 24 * 0.12 / 4 = 0.72).
    assert capped.capacity == pytest.approx(0.72, rel=1e-12)
    x0 = np.linspace(-2000.0, 2000.0, 81)
    k0 = 0.06 * (0.3 + 0.6 * np.exp(-((x0 / 400.0) ** 2)))  # 0.018 .. 0.054 veh/m
    t = 120.0
    c = capped.wave_speed(k0)
    np.testing.assert_allclose(c, 12.0, rtol=1e-12)
    np.testing.assert_allclose(capped.speed(k0), 12.0, rtol=1e-12)
    x_t = x0 + c * t
    np.testing.assert_allclose(x_t - x0, 1440.0, rtol=1e-12)
    np.testing.assert_allclose(np.diff(x_t), np.diff(x0), rtol=1e-12)  # spacing kept
    # Shocks between any two light states also travel at the cap.
    np.testing.assert_allclose(capped.shock_speed(k0[:-1], k0[1:]), 12.0, rtol=1e-12)
    # Contrast: without the cap the same profile's characteristics spread from
    # 24 (1 - 2*0.054/0.12) = 2.4 m/s to 24 (1 - 2*0.018/0.12) = 16.8 m/s.
    plain = GS.wave_speed(k0)
    assert float(np.min(plain)) == pytest.approx(2.4, rel=1e-9)
    assert float(np.max(plain)) == pytest.approx(16.8, rel=1e-9)


def test_capped_at_or_above_free_speed_is_plain_greenshields() -> None:
    # A cap that never binds leaves Greenshields (1935) unchanged (definition).
    k = np.linspace(0.0, 0.12, 49)
    for cap in (24.0, 30.0):
        d = CappedGreenshields(free_speed=24.0, jam_density=0.12, speed_cap=cap)
        assert d.kink_density == 0.0
        assert d.effective_cap == 24.0
        np.testing.assert_allclose(d.flow(k), GS.flow(k), rtol=1e-12, atol=1e-15)
        np.testing.assert_allclose(d.wave_speed(k), GS.wave_speed(k), rtol=1e-12, atol=1e-12)
        np.testing.assert_allclose(d.speed(k), GS.speed(k), rtol=1e-12, atol=1e-12)
        assert d.capacity == pytest.approx(0.72, rel=1e-12)


# --------------------------------------------------------------------------- demand and supply


def test_demand_and_supply_values() -> None:
    # Sending/receiving functions of the cell transmission model (Daganzo 1994, 1995;
    # Lebacque 1996): demand = Q(min(k, k_c)), supply = Q(max(k, k_c)). Hand for TRI:
    # k = 0.01 -> demand 30*0.01 = 0.3, supply 0.6; k = 0.1 -> demand 0.6, supply w*0.025.
    w = 0.6 / 0.105
    np.testing.assert_allclose(TRI.demand([0.01, 0.1]), [0.3, 0.6])
    np.testing.assert_allclose(TRI.supply([0.01, 0.1]), [0.6, w * 0.025])
    # Greenshields: k = 0.09 -> demand 0.72 (capacity), supply 0.54.
    assert GS.demand(0.09) == pytest.approx(0.72, rel=1e-12)
    assert GS.supply(0.09) == pytest.approx(0.54, rel=1e-12)


# --------------------------------------------------------------------------- API behaviour


def test_vectorised_shapes_and_scalar_results() -> None:
    k = np.array([[0.0, 0.01], [0.05, 0.12]])
    for d in (GS, TRI, CAP_HIGH, CAP_LOW):
        for method in (d.flow, d.speed, d.wave_speed, d.demand, d.supply):
            assert np.shape(method(k)) == (2, 2)
            assert isinstance(method(0.03), np.float64)
        q = np.array([0.0, 0.1, 0.2])
        assert np.shape(d.density_free(q)) == (3,)
        assert np.shape(d.density_congested(q)) == (3,)
        assert isinstance(d.density_free(0.1), np.float64)
        assert np.shape(d.shock_speed(0.01, k)) == (2, 2)
        assert isinstance(d.shock_speed(0.01, 0.05), np.float64)


@pytest.mark.parametrize("d", [GS, TRI, CAP_HIGH, CAP_LOW])
def test_out_of_range_inputs_raise(d: FundamentalDiagram) -> None:
    with pytest.raises(ValueError, match="density"):
        d.flow(-0.01)
    with pytest.raises(ValueError, match="jam density"):
        d.flow([0.01, d.jam_density * 1.01])
    with pytest.raises(ValueError, match="nan"):
        d.speed(float("nan"))
    with pytest.raises(ValueError, match="capacity"):
        d.density_free(d.capacity * 1.01)
    with pytest.raises(ValueError, match="capacity"):
        d.density_congested(d.capacity * 1.01)
    with pytest.raises(ValueError, match=r"flow -0\.001"):
        d.density_free(-0.001)
    with pytest.raises(ValueError, match="outside the range"):
        d.shock_speed(0.01, d.jam_density * 2)


@pytest.mark.parametrize("d", [GS, TRI, CAP_HIGH, CAP_LOW])
def test_rounding_overshoot_is_clipped(d: FundamentalDiagram) -> None:
    # A solver that lands a hair above jam density or capacity must not fail.
    assert d.flow(d.jam_density * (1 + 1e-12)) == 0.0
    assert d.speed(-1e-18) == pytest.approx(float(d.speed(0.0)))
    assert d.density_free(d.capacity * (1 + 1e-12)) == pytest.approx(d.critical_density)


@pytest.mark.parametrize(
    ("cls", "kwargs"),
    [
        (Greenshields, {"free_speed": 0.0, "jam_density": 0.12}),
        (Greenshields, {"free_speed": 24.0, "jam_density": -0.12}),
        (Greenshields, {"free_speed": float("inf"), "jam_density": 0.12}),
        (Triangular, {"free_speed": 30.0, "capacity": 0.0, "jam_density": 0.125}),
        (CappedGreenshields, {"free_speed": 24.0, "jam_density": 0.12, "speed_cap": 0.0}),
        (CappedGreenshields, {"free_speed": 24.0, "jam_density": 0.12, "speed_cap": math.nan}),
    ],
)
def test_bad_parameters_raise(cls: type, kwargs: dict[str, float]) -> None:
    with pytest.raises(ValueError, match="above zero"):
        cls(**kwargs)


def test_make_diagram() -> None:
    assert DIAGRAMS == ("greenshields", "triangular", "capped-greenshields")
    d = make_diagram("greenshields", free_speed=24.0, jam_density=0.12)
    assert d == GS
    d = make_diagram("Triangular", free_speed=30.0, jam_density=0.125, capacity=0.6)
    assert d == TRI
    d = make_diagram("capped-greenshields", free_speed=24.0, jam_density=0.12, speed_cap=16.0)
    assert d == CAP_HIGH
    with pytest.raises(ValueError, match="choose one of"):
        make_diagram("parabolic", free_speed=24.0, jam_density=0.12)
    with pytest.raises(ValueError, match="needs a capacity"):
        make_diagram("triangular", free_speed=30.0, jam_density=0.125)
    with pytest.raises(ValueError, match="needs a speed_cap"):
        make_diagram("capped-greenshields", free_speed=24.0, jam_density=0.12)
    with pytest.raises(ValueError, match="takes no capacity"):
        make_diagram("greenshields", free_speed=24.0, jam_density=0.12, capacity=0.5)
    with pytest.raises(ValueError, match="takes no speed_cap"):
        make_diagram("triangular", free_speed=30.0, jam_density=0.125, capacity=0.6, speed_cap=9)


def test_diagrams_are_frozen() -> None:
    with pytest.raises(AttributeError):
        GS.free_speed = 30.0  # type: ignore[misc]


# --------------------------------------------------------------------------- properties
# All properties below follow from the definitions of a concave fundamental diagram in
# the LWR model (Lighthill & Whitham 1955; Richards 1956) and of demand/supply (Daganzo
# 1995; Lebacque 1996); common practice, no further source.

free_speeds = st.floats(5.0, 40.0)
jam_densities = st.floats(0.05, 0.3)
fractions = st.floats(0.0, 1.0)


@st.composite
def diagrams(draw: st.DrawFn) -> FundamentalDiagram:
    kind = draw(st.sampled_from(DIAGRAMS))
    v_f = draw(free_speeds)
    k_j = draw(jam_densities)
    if kind == "greenshields":
        return Greenshields(free_speed=v_f, jam_density=k_j)
    if kind == "triangular":
        share = draw(st.floats(0.05, 0.95))
        return Triangular(free_speed=v_f, capacity=share * v_f * k_j, jam_density=k_j)
    cap = draw(st.floats(0.05, 1.5)) * v_f
    return CappedGreenshields(free_speed=v_f, jam_density=k_j, speed_cap=cap)


def _kink(d: FundamentalDiagram) -> float | None:
    if isinstance(d, Triangular):
        return d.critical_density
    if isinstance(d, CappedGreenshields):
        return d.kink_density
    return None


@given(diagrams(), fractions)
def test_flow_is_within_zero_and_capacity(d: FundamentalDiagram, f: float) -> None:
    q = d.flow(f * d.jam_density)
    assert 0.0 <= q <= d.capacity
    assert d.flow(0.0) == 0.0
    assert d.flow(d.jam_density) == pytest.approx(0.0, abs=1e-12 * d.capacity)
    assert d.flow(d.critical_density) == pytest.approx(d.capacity, rel=1e-12)


@given(diagrams(), fractions)
def test_flow_is_density_times_speed(d: FundamentalDiagram, f: float) -> None:
    k = f * d.jam_density
    assert d.flow(k) == pytest.approx(k * d.speed(k), rel=1e-9, abs=1e-15)
    assert d.speed(d.jam_density) == pytest.approx(0.0, abs=1e-9 * d.free_speed)
    assert d.speed(0.0) <= d.free_speed


@given(diagrams(), fractions)
def test_inverse_branches_round_trip(d: FundamentalDiagram, f: float) -> None:
    q = f * d.capacity
    k_free = d.density_free(q)
    k_cong = d.density_congested(q)
    assert d.flow(k_free) == pytest.approx(q, rel=1e-9, abs=1e-12 * d.capacity)
    assert d.flow(k_cong) == pytest.approx(q, rel=1e-9, abs=1e-12 * d.capacity)
    assert 0.0 <= k_free <= d.critical_density <= k_cong <= d.jam_density


@given(diagrams(), st.floats(0.0, 0.999))
def test_density_branches_recover_density(d: FundamentalDiagram, f: float) -> None:
    # Well-conditioned away from the critical density (the inverse is flat there).
    k = f * d.critical_density
    assert d.density_free(d.flow(k)) == pytest.approx(k, rel=1e-6, abs=1e-12)
    k = d.jam_density - f * (d.jam_density - d.critical_density)
    assert d.density_congested(d.flow(k)) == pytest.approx(k, rel=1e-6, abs=1e-12)


@given(diagrams(), fractions, fractions)
def test_demand_and_supply_monotone_and_bounded(
    d: FundamentalDiagram, f1: float, f2: float
) -> None:
    k1, k2 = sorted((f1 * d.jam_density, f2 * d.jam_density))
    assert d.demand(k1) <= d.demand(k2)
    assert d.supply(k1) >= d.supply(k2)
    for k in (k1, k2):
        assert min(d.demand(k), d.supply(k)) <= d.capacity
        assert max(d.demand(k), d.supply(k)) == pytest.approx(d.capacity, rel=1e-12)
        assert min(d.demand(k), d.supply(k)) == pytest.approx(d.flow(k), rel=1e-12, abs=1e-15)


@given(diagrams(), fractions, fractions)
def test_shock_speed_is_the_chord(d: FundamentalDiagram, f1: float, f2: float) -> None:
    k1, k2 = f1 * d.jam_density, f2 * d.jam_density
    assume(abs(k2 - k1) > 1e-3 * d.jam_density)
    chord = (d.flow(k2) - d.flow(k1)) / (k2 - k1)
    assert d.shock_speed(k1, k2) == pytest.approx(chord, rel=1e-6, abs=1e-9 * d.free_speed)
    assert d.shock_speed(k2, k1) == pytest.approx(d.shock_speed(k1, k2), rel=1e-12, abs=1e-12)


@given(diagrams(), fractions)
def test_shock_speed_limit_is_wave_speed(d: FundamentalDiagram, f: float) -> None:
    k = f * d.jam_density
    assert d.shock_speed(k, k) == pytest.approx(d.wave_speed(k), rel=1e-12, abs=1e-12)


@given(diagrams(), st.floats(0.01, 0.99))
def test_wave_speed_is_derivative_of_flow(d: FundamentalDiagram, f: float) -> None:
    k = f * d.jam_density
    h = 1e-6 * d.jam_density
    kink = _kink(d)
    assume(kink is None or abs(k - kink) > 2 * h)
    slope = (d.flow(k + h) - d.flow(k - h)) / (2 * h)
    assert d.wave_speed(k) == pytest.approx(slope, rel=1e-5, abs=1e-6 * d.free_speed)


@given(diagrams(), fractions, fractions)
def test_wave_speed_non_increasing(d: FundamentalDiagram, f1: float, f2: float) -> None:
    # Concave diagram: characteristic speed falls as density rises.
    k1, k2 = sorted((f1 * d.jam_density, f2 * d.jam_density))
    assert d.wave_speed(k1) >= d.wave_speed(k2)


@given(free_speeds, jam_densities, st.floats(0.05, 1.0), fractions, fractions)
def test_capped_light_states_shock_at_cap(
    v_f: float, k_j: float, share: float, f1: float, f2: float
) -> None:
    # Below the kink q = u k is a straight line, so every shock and wave there moves at u.
    d = CappedGreenshields(free_speed=v_f, jam_density=k_j, speed_cap=share * v_f)
    k1, k2 = f1 * d.kink_density, f2 * d.kink_density
    assert d.shock_speed(k1, k2) == pytest.approx(share * v_f, rel=1e-12)
    assert d.wave_speed(k1) == pytest.approx(share * v_f, rel=1e-12)


@given(free_speeds, jam_densities, st.floats(0.05, 0.95), fractions)
def test_triangular_free_branch_density_is_flow_over_free_speed(
    v_f: float, k_j: float, share: float, f: float
) -> None:
    # Newell (1993): on the free branch q = v_f k.
    d = Triangular(free_speed=v_f, capacity=share * v_f * k_j, jam_density=k_j)
    q = f * d.capacity
    assert d.density_free(q) == pytest.approx(q / v_f, rel=1e-12, abs=1e-18)
    assert d.density_congested(q) == pytest.approx(
        k_j - q / d.backward_wave_speed, rel=1e-12, abs=1e-15
    )
