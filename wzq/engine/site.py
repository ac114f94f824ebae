"""The site model: values derived once from the site, and capacity per closure configuration.

Free-flow speed, heavy-vehicle and driver-population factors, the base capacity
and the fundamental diagram (:func:`site_model`); the pre-breakdown capacity and
queue discharge rate of the open road and of a closure (:func:`closure_capacity`,
HCM 6th/7th ed. ch. 10 through :mod:`wzq.models.capacity`, a typed capacity
winning over every model); the work-zone free-flow speed (:func:`work_zone_speed`);
and both per configuration, cached (:func:`configuration`).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import TYPE_CHECKING, NamedTuple

from wzq import units
from wzq.engine.problems import PlanError, Problem
from wzq.models import capacity as cap
from wzq.models.capacity import HCM_DENSITY_AT_CAPACITY_PC_MI_LN
from wzq.models.flow import FundamentalDiagram, Trapezoidal, make_diagram
from wzq.units import FOOT, HOUR, MILE, MPH, per_mile_to_per_m

if TYPE_CHECKING:  # types only: the plan imports this module to check a site
    from wzq.engine.plan import Closure, Site

__all__ = [
    "FFS_ABOVE_LIMIT_MPH",
    "JAM_DENSITY_PC_MI_LN",
    "ClosureConfig",
    "SiteModel",
    "calibrated_diagram",
    "closure_capacity",
    "config_of",
    "configuration",
    "site_model",
    "typed_capacity",
    "work_zone_speed",
]

#: HCM 7th ed. default jam density, pc/mi/ln (ch. 25; range 150-270).
JAM_DENSITY_PC_MI_LN = 190.0
#: Default free-flow speed above the speed limit, mi/h (HCM 7th ed. ch. 12).
FFS_ABOVE_LIMIT_MPH = 5.0


@dataclass(frozen=True)
class SiteModel:
    """Values derived once from the site: speeds, factors, diagram."""

    ffs: float  # m/s
    heavy_factor: float
    driver_factor: float
    base_pc_h_ln: float
    jam_density: float  # veh/m/ln
    diagram: FundamentalDiagram

    @property
    def base_veh_h_ln(self) -> float:
        return self.base_pc_h_ln * self.heavy_factor * self.driver_factor


@lru_cache(maxsize=256)
def site_model(site: Site, diagram: str = "triangular") -> SiteModel:
    """Free-flow speed, heavy-vehicle and driver factors, base capacity and diagram."""
    ffs = site.free_flow_speed
    if ffs is None:
        ffs = site.speed_limit + FFS_ABOVE_LIMIT_MPH * MPH
    f_hv = cap.heavy_vehicle_factor(site.heavy_vehicle_share, cap.pce_trucks(site.terrain))
    f_p = cap.driver_population_factor(site.driver_population)
    base = site.base_capacity_pc_h_ln or cap.basic_freeway_capacity(ffs / MPH)
    k_j = site.jam_density
    if k_j is None:
        k_j = per_mile_to_per_m(JAM_DENSITY_PC_MI_LN) * f_hv
    c_ln = base * f_hv * f_p / HOUR  # veh/s/ln
    if diagram == "triangular" and site.congested_branch != "derived":
        fd = calibrated_diagram(site, ffs, k_j, c_ln, f_hv)
    elif diagram == "triangular":
        fd = make_diagram("triangular", free_speed=ffs, jam_density=k_j, capacity=c_ln)
    elif diagram == "greenshields":
        fd = make_diagram("greenshields", free_speed=ffs, jam_density=k_j)
    else:
        fd = make_diagram(
            "capped-greenshields",
            free_speed=ffs,
            jam_density=k_j,
            speed_cap=min(site.work_zone_speed_limit, ffs),
        )
    return SiteModel(ffs, f_hv, f_p, base, k_j, fd)


def calibrated_diagram(
    site: Site, ffs: float, k_j: float, c_ln: float, heavy_factor: float
) -> Trapezoidal:
    """The triangular diagram with the site's own congested branch (a trapezoid).

    The congested branch runs from the density at capacity ``k_c`` (at the
    capacity ``C``) to the jam density, so ``w = C / (k_j - k_c)`` and
    ``k_c = k_j - C / w``: ``k_c`` is the HCM basic-segment density at capacity,
    45 pc/mi/ln times the heavy-vehicle factor (HCM 7th ed. ch. 12), or the
    site's density at capacity, or follows from its backward wave speed.
    Capacity, free-flow speed and jam density stay as they are; where the
    free branch reaches the capacity before ``k_c`` the diagram has a plateau
    at capacity (:class:`wzq.models.flow.Trapezoidal`).

    Raises :class:`PlanError` when the branch cannot reach the capacity.
    """
    system = site.unit_system
    speed_unit = units.SPEED[system][0]
    density_unit = units.DENSITY[system][0]
    k_1 = c_ln / ffs
    if site.congested_branch == "wave-speed":
        w = float(site.wave_speed or 0.0)
        k_c = k_j - c_ln / w
        where = "site.wave_speed"
    else:
        if site.congested_branch == "hcm":
            k_c = units.per_mile_to_per_m(HCM_DENSITY_AT_CAPACITY_PC_MI_LN) * heavy_factor
        else:
            k_c = float(site.density_at_capacity or 0.0)
        where = (
            "site.density_at_capacity"
            if site.congested_branch != "hcm"
            else ("site.congested_branch")
        )
        if k_c >= k_j:
            raise PlanError(
                Problem(
                    where,
                    f"the density at capacity ({units.per_m_to_density(k_c, system):,.1f} "
                    f"{density_unit}) is not below the jam density "
                    f"({units.per_m_to_density(k_j, system):,.1f} {density_unit}); "
                    "lower it or raise the jam density",
                )
            )
        w = c_ln / (k_j - k_c)
    if k_c < k_1 * (1.0 - 1e-9):
        w_min = c_ln / (k_j - k_1)
        if site.congested_branch == "wave-speed":
            given = f"a backward wave speed of {units.mps_to_speed(w, system):,.1f} {speed_unit}"
        else:
            given = (
                f"{'the HCM ' if site.congested_branch == 'hcm' else 'a '}density at capacity "
                f"of {units.per_m_to_density(k_c, system):,.1f} {density_unit}"
            )
        raise PlanError(
            Problem(
                where,
                f"with {given} the congested branch meets the free-flow branch below the "
                "capacity, so the road could not carry its capacity (free-flowing traffic "
                f"reaches it at {units.per_m_to_density(k_1, system):,.1f} {density_unit}); "
                f"use a backward wave speed of at least {units.mps_to_speed(w_min, system):,.1f} "
                f"{speed_unit} (a density at capacity of at least "
                f"{units.per_m_to_density(k_1, system):,.1f} {density_unit}) or a higher jam "
                "density",
            )
        )
    return Trapezoidal(free_speed=ffs, capacity=c_ln, jam_density=k_j, backward_wave_speed=w)


def closure_capacity(
    site: Site, model: SiteModel, closure: Closure | None, night: bool
) -> cap.CapacityPair:
    """Pre-breakdown and queue-discharge capacity (veh/h, all open lanes)."""
    common = dict(
        n_normal=site.lanes,
        ffs_mph=model.ffs / MPH,
        heavy_share=site.heavy_vehicle_share,
        terrain=site.terrain,
        driver_population=site.driver_population,
        rural=site.area_type == "rural",
        lateral_ft=site.lateral_clearance / FOOT,
        night=night,
        alpha_wz_pct=site.capacity_drop_pct_work_zone,
        alpha_open_pct=site.capacity_drop_pct_open,
        work_intensity_pc_h_ln=site.work_intensity_pc_h_ln,
        ramp_adjustment_pc_h_ln=site.ramp_adjustment_pc_h_ln,
        base_capacity_pc_h_ln=site.base_capacity_pc_h_ln,
    )
    open_road = cap.section_capacity(method="open", n_open=site.lanes, soft_barrier=False, **common)
    if closure is None:
        return open_road
    pair = cap.section_capacity(
        method=site.capacity_method,
        n_open=site.lanes - closure.lanes_closed,
        soft_barrier=closure.barrier == "soft",
        override_veh_h_ln=closure.capacity_override_veh_h_ln,
        **common,
    )
    if closure.capacity_override_veh_h_ln is not None:
        return typed_capacity(pair.prebreakdown_veh_h, site)  # wins over every model
    # a closure never gives more than the open road (e.g. a shoulder closure
    # behind a hard barrier, whose HCM discharge rate can exceed the open road's)
    return cap.CapacityPair(
        min(pair.prebreakdown_veh_h, open_road.prebreakdown_veh_h),
        min(pair.discharge_veh_h, open_road.discharge_veh_h),
    )


def typed_capacity(typed_veh_h: float, site: Site) -> cap.CapacityPair:
    """Pre-breakdown capacity and discharge rate from a capacity typed for a closure
    (``override x open lanes``, veh/h), as ``site.capacity_override_is`` says it is meant.

    ``"both"``: the typed value is both (no capacity drop for that closure);
    ``"discharge"``: it is the queue discharge rate and the pre-breakdown capacity is
    ``100 QDR / (100 - alpha)``; ``"prebreakdown"``: it is the pre-breakdown capacity and
    the discharge rate is ``c (100 - alpha) / 100``; alpha is the work-zone capacity drop
    (HCM 6th/7th ed., Ch. 10: :func:`wzq.models.capacity.work_zone_prebreakdown_capacity`).
    """
    alpha = site.capacity_drop_pct_work_zone
    if site.capacity_override_is == "discharge":
        return cap.CapacityPair(
            cap.work_zone_prebreakdown_capacity(typed_veh_h, alpha), typed_veh_h
        )
    if site.capacity_override_is == "prebreakdown":
        return cap.CapacityPair(typed_veh_h, typed_veh_h * (100.0 - alpha) / 100.0)
    return cap.CapacityPair(typed_veh_h, typed_veh_h)


def work_zone_speed(site: Site, model: SiteModel, closure: Closure, night: bool) -> float:
    """Free-flow speed through the work zone (m/s).

    HCM 6th/7th ed. ch. 10 work-zone free-flow speed equation for the ``hcm7``
    method; for ``hcm2000`` the work-zone speed limit + 5 mi/h (the HCM's
    default free-flow speed rule applied to the work-zone limit; common
    practice), never above the normal free-flow speed.
    """
    ffs_mph = model.ffs / MPH
    if site.capacity_method == "hcm7":
        n_open = site.lanes - closure.lanes_closed
        v = cap.work_zone_free_flow_speed(
            speed_limit_ratio=site.speed_limit / site.work_zone_speed_limit,
            wz_speed_limit_mph=site.work_zone_speed_limit / MPH,
            lcsi=cap.lane_closure_severity_index(site.lanes, n_open),
            soft_barrier=closure.barrier == "soft",
            night=night,
            ramp_density_per_mi=site.ramp_density * MILE,
            ffs_cap_mph=ffs_mph,
        )
    else:
        v = min(ffs_mph, site.work_zone_speed_limit / MPH + FFS_ABOVE_LIMIT_MPH)
    return max(v, 1.0) * MPH


class ClosureConfig(NamedTuple):
    """What a closure's capacity depends on besides the clock (read like a
    :class:`~wzq.engine.plan.Closure` by :func:`closure_capacity`)."""

    lanes_closed: int
    barrier: str
    capacity_override_veh_h_ln: float | None


def config_of(closure: Closure) -> tuple:
    """``(lanes_closed, barrier, capacity_override_veh_h_ln)``: a closure's configuration."""
    return (closure.lanes_closed, closure.barrier, closure.capacity_override_veh_h_ln)


@lru_cache(maxsize=4096)
def configuration(
    site: Site, diagram: str, config: tuple | None, night: bool
) -> tuple[float, float, float]:
    """Pre-breakdown capacity, discharge rate (veh/h) and extra seconds per vehicle.

    ``config`` is ``(lanes_closed, barrier, capacity_override_veh_h_ln)`` or
    ``None`` for the open road. Cached: plans and window searches meet the
    same few configurations again and again.
    """
    model = site_model(site, diagram)
    if config is None:
        pair = closure_capacity(site, model, None, night)
        return pair.prebreakdown_veh_h, pair.discharge_veh_h, 0.0
    lanes_closed, barrier, override = config
    closure = ClosureConfig(lanes_closed, barrier, override)
    pair = closure_capacity(site, model, closure, night)
    v_wz = work_zone_speed(site, model, closure, night)
    length = site.work_zone_length
    extra = max(length / v_wz - length / model.ffs, 0.0)
    return pair.prebreakdown_veh_h, pair.discharge_veh_h, extra
