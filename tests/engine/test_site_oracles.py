"""The site model's own paths, checked against hand-worked values (issue 22, phase B).

Mutation testing found that the quick test run reached these functions only through
whole plans, where a wrong branch, a wrong message or a wrong clamp changed nothing
the tests looked at: the meaning of a typed closure capacity, the site's own
congested branch (and the messages that refuse one that cannot carry the capacity),
and the work-zone free-flow speed by day and by night, capped at the open road's.

Unit constants: 1 mi = 1,609.344 m and 1 mi/h = 0.44704 m/s (international mile,
exact by definition; NIST SP 811, appendix B).
"""

from __future__ import annotations

import pytest

from wzq.engine.plan import Site
from wzq.engine.problems import PlanError
from wzq.engine.site import (
    ClosureConfig,
    calibrated_diagram,
    site_model,
    typed_capacity,
    work_zone_speed,
)

MILE_M = 1609.344
MPH_MS = 0.44704


def per_mile(k: float) -> float:
    """veh/mi to veh/m."""
    return k / MILE_M


def site(**kw: object) -> Site:
    base: dict = dict(
        lanes=2, speed_limit=65 * MPH_MS, work_zone_speed_limit=55 * MPH_MS, work_zone_length=0.0
    )
    base.update(kw)
    return Site(**base)


# ---------------------------------------------------------------------------------------------
# a typed closure capacity: HCM 6th/7th ed. ch. 10, c_wz = 100 QDR / (100 - alpha)
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("meaning", "alpha", "pre", "discharge"),
    [
        ("both", 13.4, 1400.0, 1400.0),
        # typed QDR 1,400: c = 100 x 1,400 / (100 - 13.4) = 140,000 / 86.6 = 1,616.628...
        ("discharge", 13.4, 140_000 / 86.6, 1400.0),
        # alpha 10 %: c = 140,000 / 90 = 1,555.56
        ("discharge", 10.0, 140_000 / 90.0, 1400.0),
        # typed c 1,400: QDR = 1,400 x (100 - 13.4) / 100 = 1,212.4
        ("prebreakdown", 13.4, 1400.0, 1212.4),
        # alpha 10 %: QDR = 1,400 x 0.9 = 1,260
        ("prebreakdown", 10.0, 1400.0, 1260.0),
        # alpha 0: both the same whatever the meaning
        ("discharge", 0.0, 1400.0, 1400.0),
    ],
)
def test_typed_capacity_is_what_the_site_says_it_is(
    meaning: str, alpha: float, pre: float, discharge: float
) -> None:
    pair = typed_capacity(
        1400.0, site(capacity_override_is=meaning, capacity_drop_pct_work_zone=alpha)
    )
    assert pair.prebreakdown_veh_h == pytest.approx(pre, rel=1e-12)
    assert pair.discharge_veh_h == pytest.approx(discharge, rel=1e-12)


# ---------------------------------------------------------------------------------------------
# the site's own congested branch: w = C / (k_j - k_c)
# ---------------------------------------------------------------------------------------------

FFS = 70 * MPH_MS
C_LN = 2000 / 3600  # veh/s/ln
K_J = per_mile(180)


def branch(kind: str, unit_system: str = "us", **kw: object) -> Site:
    return site(congested_branch=kind, unit_system=unit_system, **kw)


@pytest.mark.parametrize(
    ("kind", "kw", "heavy", "k_c_mi", "w_mph"),
    [
        # HCM 7th ed. ch. 12: 45 pc/mi/ln x f_HV 0.9 = 40.5 veh/mi; w = 2,000 / 139.5 mi/h
        ("hcm", {}, 0.9, 40.5, 2000 / 139.5),
        ("hcm", {}, 1.0, 45.0, 2000 / 135.0),
        # the site's density at capacity 50 veh/mi: w = 2,000 / 130 = 15.385 mi/h
        ("density-at-capacity", {"density_at_capacity": per_mile(50)}, 0.9, 50.0, 2000 / 130),
        # the site's wave speed 20 mi/h: k_c = 180 - 2,000 / 20 = 80 veh/mi
        ("wave-speed", {"wave_speed": 20 * MPH_MS}, 0.9, 80.0, 20.0),
    ],
)
def test_the_sites_congested_branch_by_hand(
    kind: str, kw: dict, heavy: float, k_c_mi: float, w_mph: float
) -> None:
    fd = calibrated_diagram(branch(kind, **kw), FFS, K_J, C_LN, heavy)
    assert fd.backward_wave_speed == pytest.approx(w_mph * MPH_MS, rel=1e-9)
    assert fd.critical_density == pytest.approx(per_mile(k_c_mi), rel=1e-9)
    assert fd.capacity == C_LN and fd.free_speed == FFS and fd.jam_density == K_J


def test_a_density_at_capacity_exactly_where_free_flow_reaches_capacity_is_a_triangle() -> None:
    # k_c = C / v_f = 2,000 / 70 = 28.57 veh/mi: no plateau, and not refused; nor is a
    # value less than that by the tolerance of one part in 10^9
    k_1 = C_LN / FFS
    for k_c in (k_1, k_1 * (1.0 - 1e-9)):
        fd = calibrated_diagram(
            branch("density-at-capacity", density_at_capacity=k_c), FFS, K_J, C_LN, 1.0
        )
        assert fd.backward_wave_speed == pytest.approx(C_LN / (K_J - k_1), rel=1e-9)
    with pytest.raises(PlanError):
        calibrated_diagram(
            branch("density-at-capacity", density_at_capacity=k_1 * (1.0 - 1e-6)),
            FFS,
            K_J,
            C_LN,
            1.0,
        )


def refused(s: Site, ffs: float, k_j: float, c_ln: float, heavy: float) -> tuple[str, str]:
    with pytest.raises(PlanError) as e:
        calibrated_diagram(s, ffs, k_j, c_ln, heavy)
    (p,) = e.value.problems
    return p.where, p.message


@pytest.mark.parametrize("k_c_mi", [180.0, 200.0])
def test_a_density_at_capacity_not_below_the_jam_density_is_refused(k_c_mi: float) -> None:
    where, message = refused(
        branch("density-at-capacity", density_at_capacity=per_mile(k_c_mi)), FFS, K_J, C_LN, 1.0
    )
    assert where == "site.density_at_capacity"
    assert message == (
        f"the density at capacity ({k_c_mi:.1f} veh/mi/ln) is not below the jam density "
        "(180.0 veh/mi/ln); lower it or raise the jam density"
    )


def test_the_refusal_speaks_the_sites_units() -> None:
    # 180 veh/mi = 180 / 1.609344 = 111.8 veh/km; 200 veh/mi = 124.3 veh/km
    _, message = refused(
        branch("density-at-capacity", "metric", density_at_capacity=per_mile(200)),
        FFS,
        K_J,
        C_LN,
        1.0,
    )
    assert message == (
        "the density at capacity (124.3 veh/km/ln) is not below the jam density "
        "(111.8 veh/km/ln); lower it or raise the jam density"
    )


def test_a_branch_below_the_free_flow_branch_is_refused_with_what_would_do() -> None:
    # 50 mi/h, 2,400 veh/h/ln: free-flowing traffic reaches capacity at 2,400 / 50 =
    # 48.0 veh/mi; the HCM's 45 veh/mi (f_HV 1) is below it. The least wave speed is
    # 2,400 / (180 - 48) = 18.18 mi/h.
    ffs, c_ln = 50 * MPH_MS, 2400 / 3600
    tail = (
        "the congested branch meets the free-flow branch below the capacity, so the road "
        "could not carry its capacity (free-flowing traffic reaches it at 48.0 veh/mi/ln); "
        "use a backward wave speed of at least 18.2 mi/h (a density at capacity of at least "
        "48.0 veh/mi/ln) or a higher jam density"
    )
    assert refused(branch("hcm"), ffs, K_J, c_ln, 1.0) == (
        "site.congested_branch",
        f"with the HCM density at capacity of 45.0 veh/mi/ln {tail}",
    )
    assert refused(
        branch("density-at-capacity", density_at_capacity=per_mile(40)), ffs, K_J, c_ln, 1.0
    ) == ("site.density_at_capacity", f"with a density at capacity of 40.0 veh/mi/ln {tail}")
    # a wave speed of 15 mi/h: k_c = 180 - 2,400 / 15 = 20 veh/mi, below 48
    assert refused(branch("wave-speed", wave_speed=15 * MPH_MS), ffs, K_J, c_ln, 1.0) == (
        "site.wave_speed",
        f"with a backward wave speed of 15.0 mi/h {tail}",
    )


# ---------------------------------------------------------------------------------------------
# work-zone free-flow speed: HCM 6th/7th ed. ch. 10 (transcription)
# FFS_wz = 9.95 + 33.49 f_Sr + 0.53 SL_wz - 5.60 LCSI - 3.84 f_Br - 1.71 f_DN - 8.70 TRD
# ---------------------------------------------------------------------------------------------


def test_work_zone_speed_by_day_and_by_night() -> None:
    # 65 -> 55 mi/h, 2 -> 1 lanes (LCSI = 1 / (0.5 x 1) = 2), cones, no ramps:
    # 9.95 + 33.49 x 65/55 + 0.53 x 55 - 5.60 x 2 - 3.84 = 63.639 mi/h by day,
    # 1.71 less at night = 61.929 mi/h; both below the normal 70 mi/h
    s = site(free_flow_speed=70 * MPH_MS)
    model = site_model(s)
    closure = ClosureConfig(1, "soft", None)
    day = 9.95 + 33.49 * 65 / 55 + 0.53 * 55 - 5.60 * 2 - 3.84
    assert work_zone_speed(s, model, closure, False) == pytest.approx(day * MPH_MS, rel=1e-12)
    assert work_zone_speed(s, model, closure, True) == pytest.approx(
        (day - 1.71) * MPH_MS, rel=1e-12
    )


def test_work_zone_speed_is_capped_at_the_normal_free_flow_speed() -> None:
    # a shoulder closure at the full 65 mi/h limit behind a hard barrier: LCSI = 1 / (1 x 2)
    # = 0.5, 9.95 + 33.49 + 0.53 x 65 - 5.60 x 0.5 = 75.09 mi/h, above the normal 70
    s = site(work_zone_speed_limit=65 * MPH_MS, free_flow_speed=70 * MPH_MS)
    v = work_zone_speed(s, site_model(s), ClosureConfig(0, "hard", None), False)
    assert v == pytest.approx(70 * MPH_MS, rel=1e-12)


def test_a_very_low_work_zone_speed_is_kept_down_to_one_mile_an_hour() -> None:
    # 25 mi/h work-zone limit (f_Sr clamped at 1.2), 2 -> 1, cones, night:
    # 9.95 + 33.49 x 1.2 + 0.53 x 25 - 11.2 - 3.84 - 1.71 = 46.638 mi/h before the ramps;
    # 5.1883 ramps/mi take 45.138 off: 1.50 mi/h, kept (the floor is 1 mi/h)
    raw = 9.95 + 33.49 * 1.2 + 0.53 * 25 - 5.60 * 2 - 3.84 - 1.71
    trd = (raw - 1.5) / 8.70
    s = site(work_zone_speed_limit=25 * MPH_MS, ramp_density=trd / MILE_M)
    v = work_zone_speed(s, site_model(s), ClosureConfig(1, "soft", None), True)
    assert v == pytest.approx(1.5 * MPH_MS, rel=1e-9)
