"""The hand-worked site many engine tests share, made in one place.

Two lanes, free-flow speed and speed limit 25 m/s, jam density 0.125 veh/m/ln,
base capacity 2,000 pc/h/ln, no heavy vehicles, no work-zone length or slowdown
and no capacity drop: so the open road carries 2 x 2,000 = 4,000 veh/h, and
every figure a test derives from it can be worked by hand on a triangular
diagram (critical density 2,000/3,600/25 = 0.0222 veh/m/ln). The values are
invented for tests; the road is the fictional one of the examples.
"""

from __future__ import annotations

from typing import Any

from wzq.engine.plan import Site

V_F = 25.0  # m/s
K_J = 0.125  # veh/m/ln
C_LN = 2000.0  # pc/h/ln (no heavy vehicles: veh/h/ln)


def hand_site(**kw: Any) -> Site:
    """The hand site; keyword arguments replace any of its values."""
    values: dict[str, Any] = dict(
        lanes=2,
        speed_limit=V_F,
        work_zone_speed_limit=V_F,
        work_zone_length=0.0,
        free_flow_speed=V_F,
        heavy_vehicle_share=0.0,
        jam_density=K_J,
        base_capacity_pc_h_ln=C_LN,
        capacity_drop_pct_open=0.0,
        name="Kestrel Ridge Parkway (fictional)",
    )
    values.update(kw)
    return Site(**values)
