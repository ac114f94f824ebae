"""Tests for wzq.models.capacity against published values and hand arithmetic.

Every check against something outside the project names its source beside it.
"""

from __future__ import annotations

import itertools
import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from wzq.models import capacity as cap

# ---------------------------------------------------------------------------------------------
# Lane closure severity index
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("n_normal", "n_open", "expected"),
    [
        (3, 3, 0.33),  # HCM 6th/7th ed. Ch. 10, exhibit of LCSI values (checked, REFERENCES.md)
        (2, 2, 0.50),  # HCM 6th/7th ed. Ch. 10, exhibit of LCSI values (checked)
        (4, 3, 0.44),  # HCM 6th/7th ed. Ch. 10, exhibit of LCSI values (checked)
        (3, 2, 0.75),  # HCM 6th/7th ed. Ch. 10, exhibit of LCSI values (checked)
        (4, 2, 1.00),  # HCM 6th/7th ed. Ch. 10, exhibit of LCSI values (checked)
        (2, 1, 2.00),  # HCM 6th/7th ed. Ch. 10, exhibit of LCSI values (checked)
    ],
)
def test_lcsi_table_values(n_normal: int, n_open: int, expected: float) -> None:
    # The exhibit prints two decimals, so compare at that precision.
    assert cap.lane_closure_severity_index(n_normal, n_open) == pytest.approx(expected, abs=0.005)


@pytest.mark.parametrize(("n_normal", "n_open"), [(3, 1), (4, 1)])
def test_lcsi_capped_for_severe_closures(n_normal: int, n_open: int) -> None:
    # Uncapped 1/(OR*N_o) would be 3.0 and 4.0; HCM 6th/7th ed. Ch. 10 caps the index at 2.0
    # for very severe closures (checked, REFERENCES.md).
    assert cap.LCSI_MAX == 2.0
    assert cap.lane_closure_severity_index(n_normal, n_open) == 2.0


@pytest.mark.parametrize(("n_normal", "n_open"), [(3, 0), (2, 3), (0, 0), (3, -1), (3, 1.5)])
def test_lcsi_rejects_impossible_lane_counts(n_normal: int, n_open: int) -> None:
    with pytest.raises(ValueError, match=r"n_open|n_normal"):
        cap.lane_closure_severity_index(n_normal, n_open)


# ---------------------------------------------------------------------------------------------
# HCM 6th ed. Ch. 25, Example Problem 4 (freeway facility with a work zone)
# ---------------------------------------------------------------------------------------------


def test_example_problem_4_queue_discharge_rate() -> None:
    # HCM 6th ed. Ch. 25 Example Problem 4 (checked, REFERENCES.md): 3->2, plastic drums,
    # 0 ft lateral, urban, daytime -> LCSI 0.75, QDR 1,783.5 pc/h/ln.
    lcsi = cap.lane_closure_severity_index(3, 2)
    assert lcsi == pytest.approx(0.75)
    qdr = cap.work_zone_queue_discharge_rate(
        lcsi, soft_barrier=True, rural=False, lateral_ft=0.0, night=False
    )
    assert qdr == pytest.approx(1783.5, abs=0.05)


def test_example_problem_4_prebreakdown_capacity_and_caf() -> None:
    # HCM 6th ed. Ch. 25 Example Problem 4 (checked): alpha 13.1 % -> c_wz ~ 2,052 pc/h/ln,
    # CAF = c_wz / 2,300 ~ 0.892. The example's c = 2,300 is also HCM 7th Ch. 12 at FFS 60.
    c_wz = cap.work_zone_prebreakdown_capacity(1783.5, alpha_pct=13.1)
    assert c_wz == pytest.approx(2052.0, abs=1.0)
    assert cap.basic_freeway_capacity(60.0) == pytest.approx(2300.0)
    assert c_wz / 2300.0 == pytest.approx(0.892, abs=0.0005)


def test_example_problem_4_heavy_vehicle_factor() -> None:
    # HCM 6th ed. Ch. 25 Example Problem 4 (checked): 2.25 % heavy vehicles, level terrain,
    # E_T = 2.0 (HCM 6th/7th Ch. 12 general terrain) -> f_HV = 1 / (1 + 0.0225 * 1) = 0.97800.
    f_hv = cap.heavy_vehicle_factor(0.0225, cap.pce_trucks("level"))
    assert f_hv == pytest.approx(1.0 / 1.0225)
    assert f_hv == pytest.approx(0.97800, abs=5e-6)


def test_example_problem_4_through_section_capacity() -> None:
    # Same inputs through the engine entry point, FFS 60 (c = 2,300), alpha 13.1 %.
    # Hand arithmetic from the HCM 6th ed. Ch. 25 Example Problem 4 values (checked):
    # per lane (pc) pre 1783.5/0.869 = 2052.36, QDR 1783.5; times f_HV = 1/1.0225,
    # f_p = 0.968 (familiar, HCM 6th/7th Exhibit 26-9, transcription, medium confidence), N_o = 2.
    pair = cap.section_capacity(
        method="hcm7",
        n_normal=3,
        n_open=2,
        ffs_mph=60.0,
        heavy_share=0.0225,
        terrain="level",
        driver_population="familiar",
        soft_barrier=True,
        rural=False,
        lateral_ft=0.0,
        night=False,
        alpha_wz_pct=13.1,
    )
    scale = (1.0 / 1.0225) * 0.968 * 2
    assert pair.prebreakdown_veh_h == pytest.approx(100 * 1783.5 / 86.9 * scale)
    assert pair.discharge_veh_h == pytest.approx(1783.5 * scale)


# ---------------------------------------------------------------------------------------------
# Queue discharge rate and pre-breakdown capacity
# ---------------------------------------------------------------------------------------------


def test_qdr_all_indicators_hand_case() -> None:
    # HCM 6th/7th ed. Ch. 10 QDR equation (checked), hand arithmetic:
    # 2093 - 154*1.0 - 194*1 - 179*1 + 9*6 - 59*1 = 2093 - 154 - 194 - 179 + 54 - 59 = 1561.
    qdr = cap.work_zone_queue_discharge_rate(
        1.0, soft_barrier=True, rural=True, lateral_ft=6.0, night=True
    )
    assert qdr == pytest.approx(1561.0)


def test_qdr_lateral_clipped_to_0_12_ft() -> None:
    # HCM 6th/7th ed. Ch. 10: f_LAT covers 0-12 ft (checked). Hard barrier, urban, day, LCSI 0.5:
    # 2093 - 77 + 9*12 = 2124 at 12 ft and beyond; 2093 - 77 = 2016 at 0 ft and below.
    def qdr(lat: float) -> float:
        return cap.work_zone_queue_discharge_rate(
            0.5, soft_barrier=False, rural=False, lateral_ft=lat, night=False
        )

    assert qdr(12.0) == pytest.approx(2124.0)
    assert qdr(20.0) == pytest.approx(2124.0)
    assert qdr(0.0) == pytest.approx(2016.0)
    assert qdr(-3.0) == pytest.approx(2016.0)


def test_qdr_lcsi_above_cap_is_capped() -> None:
    # LCSI 3.0 is treated as the HCM 6th/7th Ch. 10 cap of 2.0 (checked): 2093 - 308 = 1785.
    kw = dict(soft_barrier=False, rural=False, lateral_ft=0.0, night=False)
    assert cap.work_zone_queue_discharge_rate(3.0, **kw) == pytest.approx(1785.0)


def test_qdr_rejects_non_positive_lcsi() -> None:
    with pytest.raises(ValueError, match="lcsi"):
        cap.work_zone_queue_discharge_rate(
            0.0, soft_barrier=False, rural=False, lateral_ft=0.0, night=False
        )


def test_prebreakdown_default_alpha() -> None:
    # HCM 6th/7th ed. Ch. 10 (checked): default alpha 13.4 % in work zones, 7 % outside.
    assert cap.ALPHA_WORK_ZONE_PCT == 13.4
    assert cap.ALPHA_NO_WORK_ZONE_PCT == 7.0
    # Hand arithmetic: 100 * 1732 / 86.6 = 2000.0 exactly.
    assert cap.work_zone_prebreakdown_capacity(1732.0) == pytest.approx(2000.0)
    assert cap.work_zone_prebreakdown_capacity(1732.0, alpha_pct=0.0) == pytest.approx(1732.0)


@pytest.mark.parametrize("alpha", [-0.1, 20.0, 25.0, math.nan])
def test_prebreakdown_alpha_out_of_range(alpha: float) -> None:
    # HCM 6th/7th ed. Ch. 10: alpha range 0-20 % (checked).
    with pytest.raises(ValueError, match="alpha"):
        cap.work_zone_prebreakdown_capacity(1700.0, alpha_pct=alpha)


# ---------------------------------------------------------------------------------------------
# Basic segments, default FFS, heavy vehicles, driver population
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("ffs", "expected"),
    [
        (75.0, 2400.0),  # HCM 7th ed. Ch. 12 basic freeway capacity (checked), capped at 2,400
        (70.0, 2400.0),  # HCM 7th ed. Ch. 12 (checked): 2200 + 10*20 = 2400
        (65.0, 2350.0),  # HCM 7th ed. Ch. 12 (checked): 2200 + 10*15
        (55.0, 2250.0),  # HCM 7th ed. Ch. 12 (checked): 2200 + 10*5
        (50.0, 2200.0),  # below the calibrated range, extrapolated, not clipped (our rule)
    ],
)
def test_basic_freeway_capacity(ffs: float, expected: float) -> None:
    assert cap.basic_freeway_capacity(ffs) == pytest.approx(expected)


@pytest.mark.parametrize(
    ("ffs", "expected"),
    [
        (60.0, 2200.0),  # HCM 7th ed. Ch. 12 multilane highways (checked): 1900 + 20*15
        (45.0, 1900.0),  # HCM 7th ed. Ch. 12 multilane highways (checked)
        (70.0, 2300.0),  # HCM 7th ed. Ch. 12 (checked): 1900 + 20*25 = 2400, max 2,300
    ],
)
def test_multilane_highway_capacity(ffs: float, expected: float) -> None:
    assert cap.multilane_highway_capacity(ffs) == pytest.approx(expected)


@pytest.mark.parametrize("bad", [0.0, -10.0, math.inf])
def test_capacity_rejects_bad_ffs(bad: float) -> None:
    with pytest.raises(ValueError, match="ffs"):
        cap.basic_freeway_capacity(bad)
    with pytest.raises(ValueError, match="ffs"):
        cap.multilane_highway_capacity(bad)


def test_default_free_flow_speed() -> None:
    # HCM 7th ed. Ch. 12 default FFS = speed limit + 5 mi/h (checked).
    assert cap.default_free_flow_speed(65.0) == pytest.approx(70.0)
    assert cap.default_free_flow_speed(55.0) == pytest.approx(60.0)


def test_pce_trucks_general_terrain() -> None:
    # HCM 6th/7th ed. Ch. 12 general terrain segments (checked): level 2.0, rolling 3.0.
    assert cap.pce_trucks("level") == 2.0
    assert cap.pce_trucks("rolling") == 3.0
    assert cap.pce_trucks(" Rolling ") == 3.0


def test_pce_trucks_mountainous_points_to_grade_pce_or_override() -> None:
    with pytest.raises(ValueError, match="specific-grade") as err:
        cap.pce_trucks("mountainous")
    assert "override" in str(err.value)
    with pytest.raises(ValueError, match="terrain"):
        cap.pce_trucks("hilly")


def test_heavy_vehicle_factor_values() -> None:
    # HCM 6th/7th ed. Ch. 12 f_HV = 1/(1 + P_T(E_T - 1)) (checked). Hand arithmetic:
    # 10 % at E_T 2.0 -> 1/1.1 = 0.90909; 10 % at E_T 3.0 -> 1/1.2 = 0.83333; 0 % -> 1.
    assert cap.heavy_vehicle_factor(0.10, 2.0) == pytest.approx(0.909091, abs=1e-6)
    assert cap.heavy_vehicle_factor(0.10, 3.0) == pytest.approx(0.833333, abs=1e-6)
    assert cap.heavy_vehicle_factor(0.0, 3.0) == 1.0
    assert cap.heavy_vehicle_factor(1.0, 2.0) == pytest.approx(0.5)


@pytest.mark.parametrize(("share", "pce"), [(-0.01, 2.0), (1.01, 2.0), (10.0, 2.0), (0.1, 0.9)])
def test_heavy_vehicle_factor_rejects_bad_inputs(share: float, pce: float) -> None:
    with pytest.raises(ValueError, match=r"share|pce"):
        cap.heavy_vehicle_factor(share, pce)


def test_driver_population_factors() -> None:
    # HCM 6th/7th ed. Exhibit 26-9 capacity factors (transcription, medium confidence per
    # REFERENCES.md): mostly familiar 0.968, balanced 0.939, mostly unfamiliar 0.898.
    assert cap.DRIVER_POPULATIONS == ("commuter", "familiar", "balanced", "unfamiliar")
    # all familiar (commuters) is the HCM base condition: no adjustment (from memory)
    assert cap.driver_population_factor("commuter") == 1.0
    assert cap.driver_population_factor("familiar") == 0.968
    assert cap.driver_population_factor("balanced") == 0.939
    assert cap.driver_population_factor("unfamiliar") == 0.898
    with pytest.raises(ValueError, match="driver population"):
        cap.driver_population_factor("tourists")


# ---------------------------------------------------------------------------------------------
# Work-zone free-flow speed
# ---------------------------------------------------------------------------------------------


def test_work_zone_ffs_hand_case_and_cap() -> None:
    # HCM 6th/7th ed. Ch. 10 FFS_wz equation (checked, transcription). Hand case:
    # SL 65 normal, SL_wz 55 -> f_Sr = 65/55 = 1.181818 (inside 1.0-1.2), LCSI 0.75,
    # soft barrier, day, TRD 0:
    #   9.95 + 33.49*1.181818 + 0.53*55 - 5.60*0.75 - 3.84*1 - 1.71*0 - 8.70*0
    # = 9.95 + 39.579091  + 29.15   - 4.20      - 3.84
    # = 70.639091 mi/h
    kw = dict(
        speed_limit_ratio=65.0 / 55.0,
        wz_speed_limit_mph=55.0,
        lcsi=0.75,
        soft_barrier=True,
        night=False,
        ramp_density_per_mi=0.0,
    )
    assert cap.work_zone_free_flow_speed(**kw) == pytest.approx(70.639091, abs=1e-5)
    # Capped at the non-work-zone FFS (HCM 6th/7th Ch. 10, checked): default FFS 65 + 5 = 70.
    assert cap.work_zone_free_flow_speed(**kw, ffs_cap_mph=70.0) == pytest.approx(70.0)
    # A cap above the equation value changes nothing.
    assert cap.work_zone_free_flow_speed(**kw, ffs_cap_mph=75.0) == pytest.approx(70.639091)


def test_work_zone_ffs_all_terms_hand_case() -> None:
    # HCM 6th/7th ed. Ch. 10 FFS_wz equation (checked, transcription). Hand case:
    # f_Sr 1.2, SL_wz 45, LCSI 1.0, soft barrier, night, TRD 0.5:
    #   9.95 + 33.49*1.2 + 0.53*45 - 5.60*1.0 - 3.84 - 1.71 - 8.70*0.5
    # = 9.95 + 40.188   + 23.85   - 5.60     - 3.84 - 1.71 - 4.35 = 58.488 mi/h
    ffs = cap.work_zone_free_flow_speed(
        speed_limit_ratio=1.2,
        wz_speed_limit_mph=45.0,
        lcsi=1.0,
        soft_barrier=True,
        night=True,
        ramp_density_per_mi=0.5,
    )
    assert ffs == pytest.approx(58.488)


def test_work_zone_ffs_speed_ratio_clamped() -> None:
    # f_Sr is clamped to 1.0-1.2 (HCM 6th/7th Ch. 10 transcription, REFERENCES.md).
    def ffs(ratio: float) -> float:
        return cap.work_zone_free_flow_speed(
            speed_limit_ratio=ratio,
            wz_speed_limit_mph=50.0,
            lcsi=0.5,
            soft_barrier=False,
            night=False,
            ramp_density_per_mi=0.0,
        )

    # Hand arithmetic at the bounds: 9.95 + 33.49*f + 26.5 - 2.8
    assert ffs(1.2) == pytest.approx(9.95 + 40.188 + 26.5 - 2.8)  # 73.838
    assert ffs(1.5) == pytest.approx(73.838)
    assert ffs(1.0) == pytest.approx(9.95 + 33.49 + 26.5 - 2.8)  # 67.14
    assert ffs(0.8) == pytest.approx(67.14)


def test_work_zone_ffs_rejects_bad_inputs() -> None:
    base = dict(
        speed_limit_ratio=1.1,
        wz_speed_limit_mph=55.0,
        lcsi=0.75,
        soft_barrier=False,
        night=False,
        ramp_density_per_mi=0.0,
    )
    with pytest.raises(ValueError, match="ramp_density"):
        cap.work_zone_free_flow_speed(**{**base, "ramp_density_per_mi": -1.0})
    with pytest.raises(ValueError, match="speed_limit_ratio"):
        cap.work_zone_free_flow_speed(**{**base, "speed_limit_ratio": 0.0})
    with pytest.raises(ValueError, match="wz_speed_limit"):
        cap.work_zone_free_flow_speed(**{**base, "wz_speed_limit_mph": 0.0})
    with pytest.raises(ValueError, match="ffs_cap"):
        cap.work_zone_free_flow_speed(**base, ffs_cap_mph=-5.0)
    # An absurd ramp density drives the equation below zero.
    with pytest.raises(ValueError, match="free-flow speed"):
        cap.work_zone_free_flow_speed(**{**base, "ramp_density_per_mi": 20.0})


# ---------------------------------------------------------------------------------------------
# Short-term work zones (HCM 2000 / 2010)
# ---------------------------------------------------------------------------------------------


def test_short_term_capacity_three_to_two() -> None:
    # HCM 2000 Ch. 22 / HCM 2010 Ch. 10: base 1,600 pc/h/ln (checked), c = (1600+I-R) f_HV N
    # (formula from memory). 3->2, 10 % trucks, level E_T 2.0 -> f_HV = 1/1.1:
    # 1600 * 0.909091 * 2 = 2909.09 veh/h.
    f_hv = cap.heavy_vehicle_factor(0.10, cap.pce_trucks("level"))
    c = cap.short_term_work_zone_capacity(n_open=2, heavy_vehicle_factor=f_hv)
    assert c == pytest.approx(2909.09, abs=0.01)


def test_short_term_capacity_adjustments() -> None:
    # Same model (formula from memory): (1600 + 160 - 100) * 1.0 * 1 = 1660 veh/h;
    # (1600 - 160) * 1.0 * 3 = 4320 veh/h.
    assert cap.short_term_work_zone_capacity(
        n_open=1,
        heavy_vehicle_factor=1.0,
        work_intensity_pc_h_ln=160.0,
        ramp_adjustment_pc_h_ln=100,
    ) == pytest.approx(1660.0)
    assert cap.short_term_work_zone_capacity(
        n_open=3, heavy_vehicle_factor=1.0, work_intensity_pc_h_ln=-160.0
    ) == pytest.approx(4320.0)


@pytest.mark.parametrize("intensity", [160.5, -161.0, 400.0])
def test_short_term_intensity_bounds(intensity: float) -> None:
    # HCM 2000 Ch. 22: intensity adjustment within +-160 pc/h/ln (REFERENCES.md, memory).
    with pytest.raises(ValueError, match="work_intensity"):
        cap.short_term_work_zone_capacity(
            n_open=2, heavy_vehicle_factor=1.0, work_intensity_pc_h_ln=intensity
        )


def test_short_term_rejects_bad_inputs() -> None:
    with pytest.raises(ValueError, match="n_open"):
        cap.short_term_work_zone_capacity(n_open=0, heavy_vehicle_factor=1.0)
    with pytest.raises(ValueError, match="heavy_vehicle_factor"):
        cap.short_term_work_zone_capacity(n_open=1, heavy_vehicle_factor=1.2)
    with pytest.raises(ValueError, match="ramp_adjustment"):
        cap.short_term_work_zone_capacity(
            n_open=1, heavy_vehicle_factor=1.0, ramp_adjustment_pc_h_ln=-10.0
        )


# ---------------------------------------------------------------------------------------------
# section_capacity
# ---------------------------------------------------------------------------------------------

SITE = dict(
    ffs_mph=70.0,
    heavy_share=0.10,
    terrain="level",
    driver_population="balanced",
    soft_barrier=True,
    rural=False,
    lateral_ft=2.0,
    night=False,
)


def test_methods_and_labels() -> None:
    assert cap.METHODS == ("hcm7", "hcm2000")
    assert set(cap.METHOD_LABELS) == set(cap.METHODS)
    assert all(len(label) > 20 for label in cap.METHOD_LABELS.values())


def test_override_wins() -> None:
    # Even with mountainous terrain (no general PCE) an override gives a result.
    for method in (*cap.METHODS, "open"):
        n_open = 3 if method == "open" else 2
        pair = cap.section_capacity(
            method=method,
            n_normal=3,
            n_open=n_open,
            **{**SITE, "terrain": "mountainous"},
            override_veh_h_ln=1450.0,
        )
        assert pair.prebreakdown_veh_h == pytest.approx(1450.0 * n_open)
        assert pair.discharge_veh_h == pytest.approx(1450.0 * n_open)


def test_override_must_be_positive() -> None:
    with pytest.raises(ValueError, match="override"):
        cap.section_capacity(method="hcm7", n_normal=3, n_open=2, **SITE, override_veh_h_ln=0.0)


def test_open_road_drop_is_seven_percent() -> None:
    # HCM 7th Ch. 12: FFS 70 -> c 2,400 (checked); f_HV 1/1.1; f_p balanced 0.939
    # (Exhibit 26-9 transcription, medium); 3 lanes: 2400/1.1*0.939*3 = 6146.18 veh/h.
    # Discharge 7 % lower (HCM 6th/7th Ch. 10, alpha outside work zones, checked): 5715.95.
    pair = cap.section_capacity(method="open", n_normal=3, n_open=3, **SITE)
    assert pair.prebreakdown_veh_h == pytest.approx(2400 / 1.1 * 0.939 * 3)
    assert pair.prebreakdown_veh_h == pytest.approx(6146.18, abs=0.01)
    assert pair.discharge_veh_h == pytest.approx(0.93 * pair.prebreakdown_veh_h)


def test_open_road_requires_all_lanes_open() -> None:
    with pytest.raises(ValueError, match="open"):
        cap.section_capacity(method="open", n_normal=3, n_open=2, **SITE)


def test_hcm7_prebreakdown_at_least_discharge() -> None:
    for n_normal in range(1, 7):
        for n_open in range(1, n_normal + 1):
            pair = cap.section_capacity(method="hcm7", n_normal=n_normal, n_open=n_open, **SITE)
            assert pair.prebreakdown_veh_h >= pair.discharge_veh_h > 0.0


def test_hcm7_capped_at_base_capacity() -> None:
    # Shoulder closure 6->6, hard barrier, 12 ft, urban, day: HCM 6th/7th Ch. 10 QDR
    # 2093 - 154/6 + 108 = 2175.33 pc/h/ln; /0.866 = 2511.9 > base. With a base of 2,200 the
    # pre-breakdown is capped at 2,200 (HCM 6th/7th Ch. 10, cap at non-work-zone capacity,
    # checked); a base of 2,100 caps the QDR too.
    kw = {**SITE, "soft_barrier": False, "lateral_ft": 12.0, "heavy_share": 0.0}
    kw["driver_population"] = "familiar"
    pair = cap.section_capacity(
        method="hcm7", n_normal=6, n_open=6, **kw, base_capacity_pc_h_ln=2200.0
    )
    assert pair.prebreakdown_veh_h == pytest.approx(2200.0 * 0.968 * 6)
    assert pair.discharge_veh_h == pytest.approx((2093 - 154 / 6 + 108) * 0.968 * 6)
    low = cap.section_capacity(
        method="hcm7", n_normal=6, n_open=6, **kw, base_capacity_pc_h_ln=2100.0
    )
    assert low.prebreakdown_veh_h == pytest.approx(2100.0 * 0.968 * 6)
    assert low.discharge_veh_h == pytest.approx(2100.0 * 0.968 * 6)


def test_hcm2000_no_driver_factor_and_no_drop() -> None:
    # HCM 2000 Ch. 22 (base 1,600 checked, formula from memory): 3->2, 10 % trucks level:
    # 1600/1.1*2 = 2909.09 veh/h; no driver population factor, discharge == pre-breakdown.
    for population in cap.DRIVER_POPULATIONS:
        pair = cap.section_capacity(
            method="hcm2000",
            n_normal=3,
            n_open=2,
            **{**SITE, "driver_population": population},
        )
        assert pair.prebreakdown_veh_h == pytest.approx(2909.09, abs=0.01)
        assert pair.discharge_veh_h == pair.prebreakdown_veh_h


@pytest.mark.parametrize(("n_normal", "n_open"), [(3, 0), (3, 4), (0, 1), (2, -1)])
@pytest.mark.parametrize("method", ["hcm7", "hcm2000", "open"])
def test_section_capacity_rejects_impossible_lanes(method: str, n_normal: int, n_open: int) -> None:
    with pytest.raises(ValueError, match=r"n_open|n_normal"):
        cap.section_capacity(method=method, n_normal=n_normal, n_open=n_open, **SITE)


def test_section_capacity_rejects_unknown_method() -> None:
    with pytest.raises(ValueError, match="method"):
        cap.section_capacity(method="hcm", n_normal=3, n_open=2, **SITE)


def test_section_capacity_mountainous_without_override() -> None:
    with pytest.raises(ValueError, match="specific-grade"):
        cap.section_capacity(
            method="hcm7", n_normal=3, n_open=2, **{**SITE, "terrain": "mountainous"}
        )


@given(
    n_normal=st.integers(min_value=2, max_value=6),
    ffs=st.floats(min_value=55.0, max_value=75.0),
    share=st.floats(min_value=0.0, max_value=0.4),
    terrain=st.sampled_from(cap.TERRAINS),
    population=st.sampled_from(cap.DRIVER_POPULATIONS),
    soft=st.booleans(),
    rural=st.booleans(),
    lateral=st.floats(min_value=0.0, max_value=12.0),
    night=st.booleans(),
    alpha=st.floats(min_value=0.0, max_value=19.9),
)
def test_closing_more_lanes_never_increases_capacity(
    n_normal: int,
    ffs: float,
    share: float,
    terrain: str,
    population: str,
    soft: bool,
    rural: bool,
    lateral: float,
    night: bool,
    alpha: float,
) -> None:
    kw = dict(
        n_normal=n_normal,
        ffs_mph=ffs,
        heavy_share=share,
        terrain=terrain,
        driver_population=population,
        soft_barrier=soft,
        rural=rural,
        lateral_ft=lateral,
        night=night,
        alpha_wz_pct=alpha,
    )
    open_road = cap.section_capacity(method="open", n_open=n_normal, **kw)
    for method in cap.METHODS:
        pairs = [
            cap.section_capacity(method=method, n_open=n, **kw) for n in range(n_normal, 0, -1)
        ]
        for wider, narrower in itertools.pairwise(pairs):
            assert narrower.prebreakdown_veh_h <= wider.prebreakdown_veh_h + 1e-9
            assert narrower.discharge_veh_h <= wider.discharge_veh_h + 1e-9
        # No work-zone configuration has a higher pre-breakdown capacity than the open road.
        assert pairs[0].prebreakdown_veh_h <= open_road.prebreakdown_veh_h + 1e-9
