"""Published capacity models: basic freeway segments, adjustments and work zones.

Everything here works in the Highway Capacity Manual's own units — passenger
cars per hour per lane (pc/h/ln), vehicles per hour (veh/h), miles per hour
(mi/h) and feet (ft) — because the equations are written and calibrated in them.
Callers convert with :mod:`wzq.units`.

All functions are pure (no I/O), take and return plain floats, and raise
:class:`ValueError` with a message saying what to change when an argument is
impossible (e.g. fewer than one open lane, a share outside 0..1).

Sources (HCM = Highway Capacity Manual, Transportation Research Board):

* HCM 7th ed. (2022), Ch. 12, basic freeway and multilane highway segments.
* HCM 6th/7th ed., Ch. 10, freeway work zones (lane closure severity index,
  queue discharge rate, pre-breakdown capacity, work-zone free-flow speed).
* HCM 6th/7th ed., Ch. 26, Exhibit 26-9, driver population factors.
* HCM 2000 Ch. 22 / HCM 2010 Ch. 10, short-term freeway work zones (the older
  1,600 pc/h/ln model).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = [
    "ALPHA_MAX_PCT",
    "ALPHA_NO_WORK_ZONE_PCT",
    "ALPHA_WORK_ZONE_PCT",
    "DEFAULT_FFS_ABOVE_SPEED_LIMIT_MPH",
    "DRIVER_POPULATIONS",
    "DRIVER_POPULATION_FACTORS",
    "FFS_WZ_COEF_LCSI",
    "FFS_WZ_COEF_NIGHT",
    "FFS_WZ_COEF_RAMP_DENSITY",
    "FFS_WZ_COEF_SOFT_BARRIER",
    "FFS_WZ_COEF_SPEED_LIMIT",
    "FFS_WZ_COEF_SPEED_RATIO",
    "FFS_WZ_INTERCEPT_MPH",
    "FREEWAY_BASE_CAPACITY_PC_H_LN",
    "FREEWAY_CAPACITY_SLOPE",
    "FREEWAY_FFS_RANGE_MPH",
    "FREEWAY_MAX_CAPACITY_PC_H_LN",
    "FREEWAY_REFERENCE_FFS_MPH",
    "HCM_DENSITY_AT_CAPACITY_PC_MI_LN",
    "LATERAL_DISTANCE_RANGE_FT",
    "LCSI_MAX",
    "METHODS",
    "METHOD_LABELS",
    "MULTILANE_BASE_CAPACITY_PC_H_LN",
    "MULTILANE_CAPACITY_SLOPE",
    "MULTILANE_MAX_CAPACITY_PC_H_LN",
    "MULTILANE_REFERENCE_FFS_MPH",
    "OPEN_ROAD",
    "PCE_TRUCKS",
    "QDR_COEF_LATERAL_PER_FT",
    "QDR_COEF_LCSI",
    "QDR_COEF_NIGHT",
    "QDR_COEF_RURAL",
    "QDR_COEF_SOFT_BARRIER",
    "QDR_INTERCEPT_PC_H_LN",
    "SHORT_TERM_BASE_CAPACITY_PC_H_LN",
    "SHORT_TERM_MAX_INTENSITY_PC_H_LN",
    "SPEED_LIMIT_RATIO_RANGE",
    "TERRAINS",
    "CapacityPair",
    "basic_freeway_capacity",
    "default_free_flow_speed",
    "driver_population_factor",
    "heavy_vehicle_factor",
    "lane_closure_severity_index",
    "multilane_highway_capacity",
    "pce_trucks",
    "section_capacity",
    "short_term_work_zone_capacity",
    "work_zone_free_flow_speed",
    "work_zone_prebreakdown_capacity",
    "work_zone_queue_discharge_rate",
]

# --- HCM 7th ed., Ch. 12: basic freeway segments --------------------------------------------
FREEWAY_BASE_CAPACITY_PC_H_LN = 2200.0  # capacity at FFS 50 mi/h
FREEWAY_CAPACITY_SLOPE = 10.0  # pc/h/ln per mi/h of FFS above 50
FREEWAY_REFERENCE_FFS_MPH = 50.0
FREEWAY_MAX_CAPACITY_PC_H_LN = 2400.0
FREEWAY_FFS_RANGE_MPH = (55.0, 75.0)  # range the equation was calibrated for
#: Density at capacity of a basic freeway segment, pc/mi/ln (HCM 7th ed. ch. 12,
#: the speed-flow curves end at 45 pc/mi/ln at capacity).
HCM_DENSITY_AT_CAPACITY_PC_MI_LN = 45.0

# --- HCM 7th ed., Ch. 12: multilane highway segments ----------------------------------------
MULTILANE_BASE_CAPACITY_PC_H_LN = 1900.0  # capacity at FFS 45 mi/h
MULTILANE_CAPACITY_SLOPE = 20.0  # pc/h/ln per mi/h of FFS above 45
MULTILANE_REFERENCE_FFS_MPH = 45.0
MULTILANE_MAX_CAPACITY_PC_H_LN = 2300.0

# --- HCM 7th ed., Ch. 12: default free-flow speed -------------------------------------------
DEFAULT_FFS_ABOVE_SPEED_LIMIT_MPH = 5.0

# --- HCM 6th/7th ed., Ch. 12: passenger-car equivalents, general terrain segments -----------
PCE_TRUCKS: dict[str, float] = {"level": 2.0, "rolling": 3.0}
TERRAINS: tuple[str, ...] = tuple(PCE_TRUCKS)

# --- HCM 6th/7th ed., Exhibit 26-9: driver population capacity factors ----------------------
# Transcription, medium confidence (see REFERENCES.md).
# "commuter" (all drivers familiar with the road) is the HCM's base condition: no
# adjustment (HCM 7th ed. Ch. 12 base conditions; factor 1.000 also heads Exhibit
# 26-9, from memory).
DRIVER_POPULATION_FACTORS: dict[str, float] = {
    "commuter": 1.0,
    "familiar": 0.968,
    "balanced": 0.939,
    "unfamiliar": 0.898,
}
DRIVER_POPULATIONS: tuple[str, ...] = tuple(DRIVER_POPULATION_FACTORS)

# --- HCM 6th/7th ed., Ch. 10: freeway work zones --------------------------------------------
LCSI_MAX = 2.0  # cap on the lane closure severity index for very severe closures
QDR_INTERCEPT_PC_H_LN = 2093.0
QDR_COEF_LCSI = -154.0
QDR_COEF_SOFT_BARRIER = -194.0  # f_Br = 1 for cones, drums or other soft separation
QDR_COEF_RURAL = -179.0  # f_AT = 1 for a rural area
QDR_COEF_LATERAL_PER_FT = 9.0  # f_LAT, lateral distance in ft
QDR_COEF_NIGHT = -59.0  # f_DN = 1 at night
LATERAL_DISTANCE_RANGE_FT = (0.0, 12.0)

ALPHA_WORK_ZONE_PCT = 13.4  # capacity drop at breakdown, work zone
ALPHA_NO_WORK_ZONE_PCT = 7.0  # capacity drop at breakdown, no work zone
ALPHA_MAX_PCT = 20.0  # alpha must lie in [0, 20)

FFS_WZ_INTERCEPT_MPH = 9.95
FFS_WZ_COEF_SPEED_RATIO = 33.49  # f_Sr, normal / work-zone speed limit
FFS_WZ_COEF_SPEED_LIMIT = 0.53  # SL_wz, work-zone speed limit in mi/h
FFS_WZ_COEF_LCSI = -5.60
FFS_WZ_COEF_SOFT_BARRIER = -3.84
FFS_WZ_COEF_NIGHT = -1.71
FFS_WZ_COEF_RAMP_DENSITY = -8.70  # TRD, ramps per mile within 3 mi up/downstream
SPEED_LIMIT_RATIO_RANGE = (1.0, 1.2)

# --- HCM 2000 Ch. 22 / HCM 2010 Ch. 10: short-term freeway work zones -----------------------
SHORT_TERM_BASE_CAPACITY_PC_H_LN = 1600.0
SHORT_TERM_MAX_INTENSITY_PC_H_LN = 160.0  # work intensity adjustment lies within +-160

# --- section_capacity methods ----------------------------------------------------------------
OPEN_ROAD = "open"  # caller's signal that no lane is closed (not a work-zone method)
METHODS: tuple[str, ...] = ("hcm7", "hcm2000")
METHOD_LABELS: dict[str, str] = {
    "hcm7": (
        "Current HCM work-zone method (6th/7th edition, Chapter 10): queue discharge rate "
        "from closure severity (LCSI = 1/(OR x N_o), at most 2.0), barrier type, area type, "
        "lateral clearance and light, with a pre-breakdown capacity above it"
    ),
    "hcm2000": (
        "Older HCM short-term work-zone method (HCM 2000/2010): 1,600 pc/h/ln adjusted "
        "for work intensity, entrance ramps and heavy vehicles"
    ),
}


def _finite(name: str, value: float) -> float:
    """Return ``value`` as a float, or raise ValueError if it is not a finite number."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(x):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    return x


def _positive(name: str, value: float) -> float:
    """Return ``value`` as a float, or raise ValueError unless it is finite and > 0."""
    x = _finite(name, value)
    if x <= 0.0:
        raise ValueError(f"{name} must be greater than zero, got {value!r}")
    return x


def _lane_count(name: str, value: int) -> int:
    """Return a whole lane count >= 1, or raise ValueError."""
    if isinstance(value, bool):
        raise ValueError(f"{name} must be a whole number of lanes, got {value!r}")
    try:
        as_float = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a whole number of lanes, got {value!r}") from None
    if not math.isfinite(as_float) or as_float != int(as_float):
        raise ValueError(f"{name} must be a whole number of lanes, got {value!r}")
    n = int(as_float)
    if n < 1:
        raise ValueError(f"{name} must be at least 1 lane, got {n}")
    return n


def _lanes(n_normal: int, n_open: int) -> tuple[int, int]:
    """Validate the lanes in normal operation and the lanes left open."""
    normal = _lane_count("n_normal (lanes in normal operation)", n_normal)
    open_ = _lane_count("n_open (lanes open through the work zone)", n_open)
    if open_ > normal:
        raise ValueError(
            f"n_open ({open_}) cannot exceed the lanes in normal operation n_normal ({normal})"
        )
    return normal, open_


def _alpha(name: str, alpha_pct: float) -> float:
    """Validate a capacity-drop percentage, 0 <= alpha < 20."""
    a = _finite(name, alpha_pct)
    if not 0.0 <= a < ALPHA_MAX_PCT:
        raise ValueError(
            f"{name} must be a percentage in [0, {ALPHA_MAX_PCT:g}) "
            f"(HCM range for the capacity drop), got {alpha_pct!r}"
        )
    return a


def _lcsi(lcsi: float) -> float:
    """Validate an LCSI (> 0) and apply the cap :data:`LCSI_MAX`."""
    x = _positive("lcsi (lane closure severity index)", lcsi)
    return min(x, LCSI_MAX)


def basic_freeway_capacity(ffs_mph: float) -> float:
    """Base capacity of a basic freeway segment, pc/h/ln.

    ``c = 2200 + 10 (FFS - 50)``, at most 2,400 pc/h/ln — HCM 7th ed., Ch. 12,
    basic freeway segments (capacity equation, Exhibit 12-6 in the 6th ed. from memory).

    The equation is calibrated for FFS 55-75 mi/h (:data:`FREEWAY_FFS_RANGE_MPH`).
    Below 55 mi/h it is still evaluated without clipping (the result is an
    extrapolation the manual does not support); only the 2,400 maximum is applied.

    Args:
        ffs_mph: free-flow speed, mi/h, > 0.
    """
    ffs = _positive("ffs_mph (free-flow speed)", ffs_mph)
    c = FREEWAY_BASE_CAPACITY_PC_H_LN + FREEWAY_CAPACITY_SLOPE * (ffs - FREEWAY_REFERENCE_FFS_MPH)
    return min(c, FREEWAY_MAX_CAPACITY_PC_H_LN)


def multilane_highway_capacity(ffs_mph: float) -> float:
    """Base capacity of a multilane highway segment, pc/h/ln.

    ``c = 1900 + 20 (FFS - 45)``, at most 2,300 pc/h/ln — HCM 7th ed., Ch. 12,
    multilane highway segments. Calibrated for FFS 45-70 mi/h (range from memory);
    outside it the value is an extrapolation, only the maximum is applied.

    Args:
        ffs_mph: free-flow speed, mi/h, > 0.
    """
    ffs = _positive("ffs_mph (free-flow speed)", ffs_mph)
    c = MULTILANE_BASE_CAPACITY_PC_H_LN + MULTILANE_CAPACITY_SLOPE * (
        ffs - MULTILANE_REFERENCE_FFS_MPH
    )
    return min(c, MULTILANE_MAX_CAPACITY_PC_H_LN)


def default_free_flow_speed(speed_limit_mph: float) -> float:
    """Default free-flow speed when none is measured, mi/h: speed limit + 5 mi/h.

    HCM 7th ed., Ch. 12, default values for basic freeway segments.

    Args:
        speed_limit_mph: posted speed limit, mi/h, > 0.
    """
    sl = _positive("speed_limit_mph", speed_limit_mph)
    return sl + DEFAULT_FFS_ABOVE_SPEED_LIMIT_MPH


def pce_trucks(terrain: str) -> float:
    """Passenger-car equivalent of a heavy vehicle on a general terrain segment.

    HCM 6th/7th ed., Ch. 12, general terrain segments: level 2.0, rolling 3.0
    (:data:`PCE_TRUCKS`). Mountainous terrain has no general value in the manual:
    it needs a specific-grade analysis.

    Args:
        terrain: ``"level"`` or ``"rolling"`` (case and surrounding spaces ignored).

    Raises:
        ValueError: for ``"mountainous"`` (enter a specific-grade PCE or override the
            capacity) and for any other name.
    """
    key = str(terrain).strip().lower()
    if key == "mountainous":
        raise ValueError(
            "mountainous terrain has no general passenger-car equivalent in the HCM: "
            "compute a specific-grade PCE and enter it, or enter a capacity override"
        )
    try:
        return PCE_TRUCKS[key]
    except KeyError:
        raise ValueError(
            f"unknown terrain {terrain!r}; use one of {', '.join(TERRAINS)} "
            "(or a specific-grade PCE / capacity override for mountainous terrain)"
        ) from None


def heavy_vehicle_factor(share: float, pce: float) -> float:
    """Heavy-vehicle adjustment factor ``f_HV = 1 / (1 + P_T (E_T - 1))``.

    HCM 6th/7th ed., Ch. 12, basic freeway segments (heavy-vehicle adjustment).

    Args:
        share: heavy-vehicle share P_T as a fraction, 0..1 (not a percentage).
        pce: passenger-car equivalent E_T, >= 1.
    """
    p = _finite("share (heavy-vehicle share)", share)
    if not 0.0 <= p <= 1.0:
        raise ValueError(
            f"share (heavy-vehicle share) must be a fraction between 0 and 1, got {share!r}; "
            "enter 10 % as 0.10"
        )
    e = _finite("pce (passenger-car equivalent)", pce)
    if e < 1.0:
        raise ValueError(f"pce (passenger-car equivalent) must be at least 1.0, got {pce!r}")
    return 1.0 / (1.0 + p * (e - 1.0))


def driver_population_factor(population: str) -> float:
    """Capacity adjustment factor for the driver population.

    HCM 6th/7th ed., Ch. 26, Exhibit 26-9 (capacity factor): all familiar (commuters,
    the base condition) 1.000 (from memory), mostly familiar 0.968,
    balanced 0.939, mostly unfamiliar 0.898. These values are a transcription held
    with medium confidence (see REFERENCES.md).

    Args:
        population: one of :data:`DRIVER_POPULATIONS` (``"commuter"``, ``"familiar"``,
            ``"balanced"``,
            ``"unfamiliar"``); case and surrounding spaces are ignored.
    """
    key = str(population).strip().lower()
    try:
        return DRIVER_POPULATION_FACTORS[key]
    except KeyError:
        raise ValueError(
            f"unknown driver population {population!r}; use one of {', '.join(DRIVER_POPULATIONS)}"
        ) from None


def lane_closure_severity_index(n_normal: int, n_open: int) -> float:
    """Lane closure severity index ``LCSI = 1 / (OR * N_o)`` with ``OR = N_o / N``.

    HCM 6th/7th ed., Ch. 10, freeway work zones. Shoulder closures and crossovers
    count as N -> N. Very severe closures (e.g. 3 -> 1, 4 -> 1) are capped at
    :data:`LCSI_MAX` = 2.0.

    Args:
        n_normal: lanes in normal operation N, >= 1.
        n_open: lanes open through the work zone N_o, 1..n_normal.
    """
    normal, open_ = _lanes(n_normal, n_open)
    open_ratio = open_ / normal
    return min(1.0 / (open_ratio * open_), LCSI_MAX)


def work_zone_queue_discharge_rate(
    lcsi: float, *, soft_barrier: bool, rural: bool, lateral_ft: float, night: bool
) -> float:
    """Work-zone queue discharge rate (15-min average after breakdown), pc/h/ln.

    ``QDR_wz = 2093 - 154 LCSI - 194 f_Br - 179 f_AT + 9 f_LAT - 59 f_DN`` —
    HCM 6th/7th ed., Ch. 10, freeway work zones (equation number not recorded).

    The lateral distance is clipped to 0..12 ft (:data:`LATERAL_DISTANCE_RANGE_FT`),
    the range of the data behind the equation; the LCSI is capped at
    :data:`LCSI_MAX`. The result is already in passenger cars.

    Args:
        lcsi: lane closure severity index, > 0.
        soft_barrier: True for cones, drums or other soft separation (f_Br = 1),
            False for concrete or other hard barrier.
        rural: True for a rural area (f_AT = 1), False for urban.
        lateral_ft: distance from the edge of the travel lane to the barrier or
            devices, ft.
        night: True at night (f_DN = 1), False by day.
    """
    x = _lcsi(lcsi)
    lo, hi = LATERAL_DISTANCE_RANGE_FT
    lat = min(max(_finite("lateral_ft", lateral_ft), lo), hi)
    return (
        QDR_INTERCEPT_PC_H_LN
        + QDR_COEF_LCSI * x
        + QDR_COEF_SOFT_BARRIER * float(bool(soft_barrier))
        + QDR_COEF_RURAL * float(bool(rural))
        + QDR_COEF_LATERAL_PER_FT * lat
        + QDR_COEF_NIGHT * float(bool(night))
    )


def work_zone_prebreakdown_capacity(qdr: float, alpha_pct: float = ALPHA_WORK_ZONE_PCT) -> float:
    """Pre-breakdown capacity from a queue discharge rate, same unit as ``qdr``.

    ``c = 100 QDR / (100 - alpha)`` — HCM 6th/7th ed., Ch. 10, freeway work zones.
    Defaults: alpha 13.4 % in a work zone (:data:`ALPHA_WORK_ZONE_PCT`), 7 % outside
    (:data:`ALPHA_NO_WORK_ZONE_PCT`). The manual also caps the result at the
    non-work-zone capacity; that cap is applied by :func:`section_capacity`.

    Args:
        qdr: queue discharge rate, > 0.
        alpha_pct: capacity drop at breakdown, percent, 0 <= alpha < 20.
    """
    q = _positive("qdr (queue discharge rate)", qdr)
    a = _alpha("alpha_pct (capacity drop)", alpha_pct)
    return 100.0 * q / (100.0 - a)


def work_zone_free_flow_speed(
    *,
    speed_limit_ratio: float,
    wz_speed_limit_mph: float,
    lcsi: float,
    soft_barrier: bool,
    night: bool,
    ramp_density_per_mi: float,
    ffs_cap_mph: float | None = None,
) -> float:
    """Work-zone free-flow speed, mi/h.

    ``FFS_wz = 9.95 + 33.49 f_Sr + 0.53 SL_wz - 5.60 LCSI - 3.84 f_Br - 1.71 f_DN - 8.70 TRD``
    — HCM 6th/7th ed., Ch. 10, freeway work zones (transcription).

    ``f_Sr`` (normal speed limit / work-zone speed limit) is clamped to 1.0..1.2
    (:data:`SPEED_LIMIT_RATIO_RANGE`); the LCSI is capped at :data:`LCSI_MAX`. The
    manual caps FFS_wz at the non-work-zone FFS: pass that as ``ffs_cap_mph``
    (without it the raw equation value is returned).

    Args:
        speed_limit_ratio: normal speed limit / work-zone speed limit, > 0.
        wz_speed_limit_mph: work-zone speed limit SL_wz, mi/h, > 0.
        lcsi: lane closure severity index, > 0.
        soft_barrier: True for cones, drums or other soft separation (f_Br = 1).
        night: True at night (f_DN = 1).
        ramp_density_per_mi: TRD, ramps per mile within 3 mi up- and downstream of
            the work-zone centre, >= 0.
        ffs_cap_mph: the non-work-zone FFS, mi/h, > 0, or None for no cap.

    Raises:
        ValueError: for impossible arguments, or when the combination gives a
            non-positive speed (inputs far outside the data behind the equation).
    """
    ratio = _positive("speed_limit_ratio", speed_limit_ratio)
    lo, hi = SPEED_LIMIT_RATIO_RANGE
    f_sr = min(max(ratio, lo), hi)
    sl_wz = _positive("wz_speed_limit_mph (work-zone speed limit)", wz_speed_limit_mph)
    x = _lcsi(lcsi)
    trd = _finite("ramp_density_per_mi", ramp_density_per_mi)
    if trd < 0.0:
        raise ValueError(f"ramp_density_per_mi cannot be negative, got {ramp_density_per_mi!r}")
    ffs = (
        FFS_WZ_INTERCEPT_MPH
        + FFS_WZ_COEF_SPEED_RATIO * f_sr
        + FFS_WZ_COEF_SPEED_LIMIT * sl_wz
        + FFS_WZ_COEF_LCSI * x
        + FFS_WZ_COEF_SOFT_BARRIER * float(bool(soft_barrier))
        + FFS_WZ_COEF_NIGHT * float(bool(night))
        + FFS_WZ_COEF_RAMP_DENSITY * trd
    )
    if ffs <= 0.0:
        raise ValueError(
            f"work-zone free-flow speed equation gives {ffs:.1f} mi/h for these inputs; "
            "check the ramp density and work-zone speed limit"
        )
    if ffs_cap_mph is not None:
        ffs = min(ffs, _positive("ffs_cap_mph", ffs_cap_mph))
    return ffs


def short_term_work_zone_capacity(
    *,
    n_open: int,
    heavy_vehicle_factor: float,
    work_intensity_pc_h_ln: float = 0.0,
    ramp_adjustment_pc_h_ln: float = 0.0,
) -> float:
    """Capacity of a short-term freeway work zone, veh/h over all open lanes.

    ``c = (1600 + I - R) f_HV N`` — HCM 2000 Ch. 22 / HCM 2010 Ch. 10, short-term
    freeway work zones. The 1,600 pc/h/ln base is checked; the form of the
    adjustment is written from memory (equation number from memory: HCM 2000
    Eq. 22-2).

    Args:
        n_open: lanes open through the work zone N, >= 1.
        heavy_vehicle_factor: f_HV, 0 < f_HV <= 1.
        work_intensity_pc_h_ln: work intensity adjustment I, within +-160 pc/h/ln
            (positive for light work, negative for heavy work).
        ramp_adjustment_pc_h_ln: entrance-ramp adjustment R, pc/h/ln, >= 0.
    """
    n = _lane_count("n_open (lanes open through the work zone)", n_open)
    f_hv = _finite("heavy_vehicle_factor", heavy_vehicle_factor)
    if not 0.0 < f_hv <= 1.0:
        raise ValueError(f"heavy_vehicle_factor must be in (0, 1], got {heavy_vehicle_factor!r}")
    intensity = _finite("work_intensity_pc_h_ln", work_intensity_pc_h_ln)
    if abs(intensity) > SHORT_TERM_MAX_INTENSITY_PC_H_LN:
        raise ValueError(
            "work_intensity_pc_h_ln must be within "
            f"+-{SHORT_TERM_MAX_INTENSITY_PC_H_LN:g} pc/h/ln, got {work_intensity_pc_h_ln!r}"
        )
    ramp = _finite("ramp_adjustment_pc_h_ln", ramp_adjustment_pc_h_ln)
    if ramp < 0.0:
        raise ValueError(
            f"ramp_adjustment_pc_h_ln cannot be negative, got {ramp_adjustment_pc_h_ln!r}"
        )
    per_lane = SHORT_TERM_BASE_CAPACITY_PC_H_LN + intensity - ramp
    if per_lane <= 0.0:
        raise ValueError(
            f"ramp_adjustment_pc_h_ln ({ramp:g}) leaves no capacity; it must be below "
            f"{SHORT_TERM_BASE_CAPACITY_PC_H_LN + intensity:g} pc/h/ln"
        )
    return per_lane * f_hv * n


@dataclass(frozen=True)
class CapacityPair:
    """Capacity of one section for the queueing engine.

    Attributes:
        prebreakdown_veh_h: capacity before breakdown, all open lanes, veh/h.
        discharge_veh_h: queue discharge rate once a queue has formed, all open
            lanes, veh/h; never above ``prebreakdown_veh_h``.
    """

    prebreakdown_veh_h: float
    discharge_veh_h: float


def section_capacity(
    *,
    method: str,
    n_normal: int,
    n_open: int,
    ffs_mph: float,
    heavy_share: float,
    terrain: str,
    driver_population: str,
    soft_barrier: bool,
    rural: bool,
    lateral_ft: float,
    night: bool,
    alpha_wz_pct: float = ALPHA_WORK_ZONE_PCT,
    alpha_open_pct: float = ALPHA_NO_WORK_ZONE_PCT,
    work_intensity_pc_h_ln: float = 0.0,
    ramp_adjustment_pc_h_ln: float = 0.0,
    base_capacity_pc_h_ln: float | None = None,
    override_veh_h_ln: float | None = None,
) -> CapacityPair:
    """Pre-breakdown capacity and queue discharge rate of a section, veh/h.

    ``method`` chooses the model:

    * ``"open"`` (:data:`OPEN_ROAD`) — no lane closed; requires ``n_open == n_normal``.
      Pre-breakdown ``c f_HV f_p N`` with ``c`` the base capacity (HCM 7th ed.,
      Ch. 12); discharge is that less the ``alpha_open_pct`` drop (HCM 6th/7th ed.,
      Ch. 10, 7 % outside work zones).
    * ``"hcm7"`` — HCM 6th/7th ed., Ch. 10 work-zone method: QDR from
      :func:`work_zone_queue_discharge_rate` with the LCSI of the closure, capped at
      ``c``; pre-breakdown from :func:`work_zone_prebreakdown_capacity` with
      ``alpha_wz_pct``, capped at ``c``; both times ``f_HV f_p N_o``.
      With ``n_open == n_normal`` this is a shoulder closure or crossover (N -> N).
    * ``"hcm2000"`` — HCM 2000 Ch. 22 / HCM 2010 Ch. 10 short-term work zones
      (:func:`short_term_work_zone_capacity`). The driver population factor is not
      applied (the model predates it) and discharge equals pre-breakdown, because
      the 1,600 pc/h/ln base is itself an observed queue-discharge rate. The PCE is
      the 6th/7th-ed. general terrain value from :func:`pce_trucks`.

    ``c`` is ``base_capacity_pc_h_ln`` when given, else
    :func:`basic_freeway_capacity` of ``ffs_mph``. ``f_HV`` comes from
    ``heavy_share`` and :func:`pce_trucks` of ``terrain``; ``f_p`` from
    :func:`driver_population_factor`.

    If ``override_veh_h_ln`` is given it wins over every model: both values are
    ``override * n_open`` (terrain and the other model inputs are then not used,
    so a mountainous site can be run with an override).

    Raises:
        ValueError: unknown method, impossible lane counts, or any invalid input
            of the functions above.
    """
    known = (*METHODS, OPEN_ROAD)
    if method not in known:
        raise ValueError(f"unknown capacity method {method!r}; use one of {', '.join(known)}")
    normal, open_ = _lanes(n_normal, n_open)

    if override_veh_h_ln is not None:
        per_lane = _positive("override_veh_h_ln (capacity override)", override_veh_h_ln)
        total = per_lane * open_
        return CapacityPair(prebreakdown_veh_h=total, discharge_veh_h=total)

    f_hv = heavy_vehicle_factor(heavy_share, pce_trucks(terrain))
    f_p = driver_population_factor(driver_population)
    if base_capacity_pc_h_ln is not None:
        c = _positive("base_capacity_pc_h_ln", base_capacity_pc_h_ln)
    else:
        c = basic_freeway_capacity(ffs_mph)

    if method == OPEN_ROAD:
        if open_ != normal:
            raise ValueError(
                f"method 'open' means no lane is closed, but n_open ({open_}) is below "
                f"n_normal ({normal}); choose a work-zone method ({', '.join(METHODS)})"
            )
        alpha = _alpha("alpha_open_pct (capacity drop outside work zones)", alpha_open_pct)
        pre = c * f_hv * f_p * normal
        return CapacityPair(prebreakdown_veh_h=pre, discharge_veh_h=pre * (1.0 - alpha / 100.0))

    if method == "hcm7":
        lcsi = lane_closure_severity_index(normal, open_)
        qdr = work_zone_queue_discharge_rate(
            lcsi, soft_barrier=soft_barrier, rural=rural, lateral_ft=lateral_ft, night=night
        )
        qdr = min(qdr, c)
        c_wz = min(work_zone_prebreakdown_capacity(qdr, alpha_wz_pct), c)
        scale = f_hv * f_p * open_
        return CapacityPair(prebreakdown_veh_h=c_wz * scale, discharge_veh_h=qdr * scale)

    # method == "hcm2000"
    total = short_term_work_zone_capacity(
        n_open=open_,
        heavy_vehicle_factor=f_hv,
        work_intensity_pc_h_ln=work_intensity_pc_h_ln,
        ramp_adjustment_pc_h_ln=ramp_adjustment_pc_h_ln,
    )
    return CapacityPair(prebreakdown_veh_h=total, discharge_veh_h=total)
