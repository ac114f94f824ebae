"""Tests for wzq.engine.lwr.simulation: the Godunov / cell-transmission solver of the LWR model.

What is checked, and against what:

* exact Riemann solutions worked by hand from the LWR theory (a shock at the
  Rankine-Hugoniot speed, the fan of a released standing jam, the fan of the
  speed-capped diagram with its plateau) and the solver's first-order
  convergence to them;
* clawpack's own first-order solver for the traffic equation (an outside
  reference library) on Greenshields Riemann problems, to rounding;
* a lane-closure bottleneck in a constructed Plan against the engine's
  shockwave method and against the exact kinematic-wave solution of the
  closure ending (worked out in the test).

Units: SI per lane inside the solver (veh/m/ln, veh/s/ln, m/s). All sites and
numbers are invented.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import subprocess
import sys
import textwrap

import numpy as np
import pytest
from budget import examples
from hypothesis import given, settings
from hypothesis import strategies as st

import wzq
from wzq import units as u
from wzq.engine import lwr
from wzq.io.jsonplan import load_plan
from wzq.models.flow import CappedGreenshields, Greenshields, Triangular

# Invented diagrams (SI, per lane): v_f 30 m/s, k_j 0.12 veh/m/ln.
GS = Greenshields(free_speed=30.0, jam_density=0.12)  # capacity 0.9 veh/s at k_c 0.06
# capacity 0.6 veh/s/ln => k_c = 0.6/30 = 0.02, w = 0.6/(0.12 - 0.02) = 6 m/s
TRI = Triangular(free_speed=30.0, capacity=0.6, jam_density=0.12)
# cap 20 m/s >= v_f/2: kink k_b = 0.12 (1 - 20/30) = 0.04, capacity still 0.9 at 0.06
CAP = CappedGreenshields(free_speed=30.0, jam_density=0.12, speed_cap=20.0)
DIAGRAMS = [GS, TRI, CAP]


# --------------------------------------------------------------------------- CFL


def test_max_wave_speed_by_hand():
    # Greenshields: Q'(0) = v_f, Q'(k_j) = -v_f (Greenshields 1935; LW 1955) -> 30
    assert lwr.max_wave_speed(GS) == pytest.approx(30.0, rel=1e-12)
    # triangular: max(v_f, w) = max(30, 6) (Daganzo 1994) -> 30
    assert lwr.max_wave_speed(TRI) == pytest.approx(30.0, rel=1e-12)
    slow = Triangular(free_speed=5.0, capacity=0.5, jam_density=0.12)  # w = 0.5/0.02 = 25
    assert lwr.max_wave_speed(slow) == pytest.approx(25.0, rel=1e-12)
    # capped: u' = 20 at k = 0 but -v_f = -30 at jam -> 30
    assert lwr.max_wave_speed(CAP) == pytest.approx(30.0, rel=1e-12)


def test_courant_number_and_cfl_violation():
    # 30 m/s * 0.9 s / 30 m = 0.9 (CFL: Courant, Friedrichs & Lewy 1928)
    assert lwr.courant_number(TRI, 30.0, 0.9) == pytest.approx(0.9)
    assert lwr.check_cfl(TRI, 30.0, 1.0) == pytest.approx(1.0)  # the limit itself is allowed
    with pytest.raises(ValueError, match="CFL"):
        lwr.check_cfl(TRI, 30.0, 1.01)
    with pytest.raises(ValueError, match="CFL"):
        lwr.solve(GS, np.zeros(10), dx=30.0, dt=1.2, steps=3)
    with pytest.raises(ValueError, match="dx"):
        lwr.check_cfl(GS, 0.0, 1.0)


# --------------------------------------------------------------------------- exact Riemann


def test_riemann_moving_shock_rankine_hugoniot():
    # Greenshields shock speed v_f (1 - (k1 + k2)/k_j) (Lighthill & Whitham 1955;
    # REFERENCES.md, traffic-flow relations): 30 (1 - 0.13/0.12) = -2.5 m/s,
    # i.e. the shock moves upstream.
    xi = np.array([-2.6, -2.51, -2.49, 0.0])
    assert lwr.riemann_exact(GS, 0.03, 0.10, xi) == pytest.approx([0.03, 0.03, 0.10, 0.10])
    # triangular: free 0.01 (q 0.3) meets congested 0.09 (q = 6 * 0.03 = 0.18):
    # s = (0.18 - 0.3)/(0.09 - 0.01) = -1.5 m/s (Rankine-Hugoniot)
    xi = np.array([-1.51, -1.49])
    assert lwr.riemann_exact(TRI, 0.01, 0.09, xi) == pytest.approx([0.01, 0.09])


def test_riemann_fan_from_standing_jam_greenshields():
    # Released standing jam (k_j behind, empty road ahead): for Greenshields the
    # density falls linearly k = k_j/2 (1 - x/(v_f t)) between the fan edges at
    # -v_f and +v_f (Lighthill & Whitham 1955; LeVeque, Numerical Methods for
    # Conservation Laws, 1992, ch. 4 -- from memory).
    xi = np.array([-40.0, -30.0, -15.0, 0.0, 15.0, 30.0, 40.0])
    expected = [0.12, 0.12, 0.09, 0.06, 0.03, 0.0, 0.0]
    assert lwr.riemann_exact(GS, 0.12, 0.0, xi) == pytest.approx(expected, abs=1e-15)


def test_riemann_fan_with_plateau_speed_capped():
    # Capped Greenshields, cap u' = 20, k_b = 0.04 (derivation in wzq.models.flow): the fan
    # follows the parabola's inverse k_j/2 (1 - xi/v_f) from xi = -30 to
    # Q'(k_b) = 2u' - v_f = 10, holds the kink density 0.04 (the plateau) for
    # 10 < xi < 20, then jumps to 0 at the cap speed 20 (a contact: every light
    # state travels at the cap). Worked by hand from the LWR fan construction.
    xi = np.array([-30.0, 0.0, 5.0, 10.0, 12.0, 19.9, 20.1])
    expected = [0.12, 0.06, 0.05, 0.04, 0.04, 0.04, 0.0]
    assert lwr.riemann_exact(CAP, 0.12, 0.0, xi) == pytest.approx(expected, abs=1e-15)
    # triangular: released queue at capacity, k_c = 0.02, between -w = -6 and v_f = 30
    # (Newell 1993: the queue discharges at capacity)
    xi = np.array([-6.1, -5.9, 29.9, 30.1])
    assert lwr.riemann_exact(TRI, 0.12, 0.0, xi) == pytest.approx([0.12, 0.02, 0.02, 0.0])


def test_speed_limit_turns_arriving_shocks_into_contacts():
    # Lighter traffic (0.005) behind denser (0.02), both free-flowing. Greenshields:
    # a shock at 30 (1 - 0.025/0.12) = 23.75 m/s. With the 20 m/s cap both states
    # lie below k_b = 0.04 and travel at the cap: the jump moves at exactly 20 m/s
    # and neither steepens nor spreads (LWR theory; worked by hand).
    assert lwr.riemann_exact(GS, 0.005, 0.02, [23.7, 23.8]) == pytest.approx([0.005, 0.02])
    assert lwr.riemann_exact(CAP, 0.005, 0.02, [19.99, 20.01]) == pytest.approx([0.005, 0.02])
    # Denser platoon ahead of lighter traffic: Greenshields spreads it into a fan
    # between Q'(0.02) = 20 and Q'(0.005) = 27.5; the cap keeps it a jump at 20.
    assert lwr.riemann_exact(GS, 0.02, 0.005, [19.9, 23.75, 27.6]) == pytest.approx(
        [0.02, 0.0125, 0.005]
    )
    assert lwr.riemann_exact(CAP, 0.02, 0.005, [19.99, 20.01]) == pytest.approx([0.02, 0.005])


densities = st.floats(min_value=0.0, max_value=1.0, allow_nan=False)


@settings(max_examples=examples(150), deadline=None)
@given(a=densities, b=densities, which=st.sampled_from([0, 1, 2]))
def test_godunov_flux_is_the_flow_of_the_exact_solution_at_the_interface(a, b, which):
    # Lebacque (1996): min(D(k_u), S(k_d)) equals Q of the exact Riemann solution
    # at x/t = 0 for a concave diagram. Two independent constructions compared.
    fd = DIAGRAMS[which]
    kl, kr = a * fd.jam_density, b * fd.jam_density
    k0 = lwr.riemann_exact(fd, kl, kr, [0.0])
    # at xi = 0 a shock standing still is ambiguous but both sides carry equal flow
    assert float(lwr.godunov_flux(fd, kl, kr)) == pytest.approx(
        float(fd.flow(k0[0])), rel=1e-9, abs=1e-12
    )


# --------------------------------------------------------------------------- the scheme


@settings(max_examples=examples(40), deadline=None)
@given(
    ks=st.lists(densities, min_size=3, max_size=30),
    which=st.sampled_from([0, 1, 2]),
    inflow=st.floats(0.0, 1.0),
    cap=st.floats(0.0, 1.0),
)
def test_one_step_is_the_demand_supply_update(ks, which, inflow, cap):
    # One step by hand from the published form (Daganzo 1995; Lebacque 1996),
    # using the diagram's own demand()/supply(): k_i += dt/dx (F_{i-1/2} - F_{i+1/2}).
    fd = DIAGRAMS[which]
    k = np.array(ks) * fd.jam_density
    dx, dt = 25.0, 0.8
    lam, c = inflow * fd.capacity, cap * fd.capacity
    f = lwr.solve(fd, k, dx=dx, dt=dt, steps=1, inflow=lam, exit_capacity=c)
    d = np.asarray(fd.demand(k))
    s = np.asarray(fd.supply(k))
    flux = np.concatenate(([min(lam, s[0])], np.minimum(d[:-1], s[1:]), [min(d[-1], c)]))
    expected = k + dt / dx * (flux[:-1] - flux[1:])
    np.testing.assert_allclose(f.final, expected, rtol=1e-12, atol=1e-15)
    # the density stays within [0, k_j] (monotone scheme under the CFL condition)
    assert np.all(f.final >= -1e-15) and np.all(f.final <= fd.jam_density * (1 + 1e-12))


class PlainTriangular(Triangular):
    """The same diagram under another type: solved by the general demand-supply form."""


def test_general_form_matches_the_closed_form():
    # Any diagram other than the three built-in types is solved with its own
    # demand()/supply(); on the same triangle it must give the closed form's
    # answer (wzq.engine.lwr.simulation scheme docstrings) to rounding.
    other = PlainTriangular(free_speed=30.0, capacity=0.6, jam_density=0.12)
    rng = np.random.default_rng(3)
    k0 = rng.uniform(0.0, 0.12, 60)
    kw = dict(dx=20.0, dt=0.6, steps=150, inflow=0.5, exit_capacity=0.35)
    fast = lwr.solve(TRI, k0, **kw)
    general = lwr.solve(other, k0, **kw)
    np.testing.assert_allclose(general.final, fast.final, rtol=0, atol=1e-13)
    np.testing.assert_allclose(general.outflow, fast.outflow, rtol=0, atol=1e-13)


def test_records_and_speed_field():
    f = lwr.solve(GS, np.full(20, 0.03), dx=10.0, dt=0.25, steps=10, record_every=4)
    # snapshots at steps 0, 4, 8 and always the last (10)
    assert f.t == pytest.approx([0.0, 1.0, 2.0, 2.5])
    assert f.density.shape == (4, 20)
    # uniform road with transmissive ends stays uniform; Greenshields (1935) speed
    # v_f (1 - k/k_j) = 30 * (1 - 0.25) = 22.5 m/s
    assert f.speed == pytest.approx(np.full((4, 20), 22.5))
    assert f.length == pytest.approx(200.0)


def test_vehicles_are_conserved_with_inflow_and_bottleneck():
    rng = np.random.default_rng(7)
    k0 = rng.uniform(0.0, TRI.jam_density, 80)
    steps = 400
    lam = rng.uniform(0.0, 0.7, steps)  # some steps above capacity: entrance queue
    cap = rng.uniform(0.1, 0.6, steps)
    f = lwr.solve(TRI, k0, dx=20.0, dt=0.6, steps=steps, inflow=lam, exit_capacity=cap, track=True)
    before = 20.0 * k0.sum()
    after = 20.0 * f.final.sum()
    # vehicles on the road change by what entered minus what left, exactly
    assert after - before == pytest.approx(0.6 * (f.inflow.sum() - f.outflow.sum()), abs=1e-9)
    # what wanted to enter either entered or waits at the entrance
    assert 0.6 * lam.sum() == pytest.approx(0.6 * f.inflow.sum() + f.entrance_queue[-1], abs=1e-9)
    assert f.vehicles is not None
    assert f.vehicles[0] == pytest.approx(before) and f.vehicles[-1] == pytest.approx(after)


def _tracked_by_brute_force(diagram, f):
    """Vehicles, distance travelled per second and back of queue of every recorded
    level, worked from the recorded densities by the definitions (Field's docstring):
    the sum of k dx, the sum of Q(k) dx, and the first cell above the queued density,
    searched over the whole stretch and placed by equal areas."""
    k_q = lwr.queue_density(diagram)
    vehicles, travel, back = [], [], []
    for k in f.density:
        vehicles.append(f.dx * k.sum())
        travel.append(f.dx * np.asarray(diagram.flow(k)).sum())
        queued = np.flatnonzero(k > k_q)
        if not len(queued):
            back.append(math.nan)
        elif queued[0] == 0:
            back.append(0.0)
        else:
            back.append(lwr.scheme._shock_position(k, int(queued[0]), f.dx))
    return np.array(vehicles), np.array(travel), np.array(back)


@pytest.mark.parametrize("diagram", DIAGRAMS, ids=["greenshields", "triangular", "capped"])
def test_tracking_agrees_with_the_recorded_densities(diagram):
    # What the solver tracks at every time level must be what the densities
    # themselves give. A queue forms at a pulsing bottleneck and behind an entrance
    # ramp, and dissolves between pulses; an exit ramp takes a share.
    rng = np.random.default_rng(11)
    n, steps, dx = 120, 1500, 10.0
    dt = 0.9 * dx / lwr.max_wave_speed(diagram)
    c = diagram.capacity
    k0 = np.asarray(diagram.density_free(rng.uniform(0.1, 0.6, n) * c))
    lam = rng.uniform(0.3, 0.95, steps) * c
    cap = np.where(np.arange(steps) % 500 < 200, 0.35, 1.0) * c
    ramps = (
        lwr.Junction(40, True, rate=np.where(np.arange(steps) < 700, 0.3 * c, 0.0)),
        lwr.Junction(80, False),
    )
    f = lwr.solve(
        diagram, k0, dx=dx, dt=dt, steps=steps, inflow=lam, exit_capacity=cap,
        record_every=1, track=True, junctions=ramps, exit_shares_in=np.full((1, steps), 0.2),
    )  # fmt: skip
    vehicles, travel, back = _tracked_by_brute_force(diagram, f)
    assert f.vehicles is not None and f.travel is not None and f.back is not None
    np.testing.assert_allclose(f.vehicles, vehicles, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(f.travel, travel, rtol=1e-12, atol=1e-12)
    # the back of the queue bit for bit: same cells, same equal-area position
    np.testing.assert_array_equal(f.back, back)
    moved = np.diff(np.nan_to_num(f.back, nan=-1.0))
    assert np.isnan(f.back).any() and (~np.isnan(f.back)).any()  # queues form and clear
    assert (moved > 0).any() and (moved < 0).any()  # the back moves both ways


def test_entrance_point_queue_when_the_road_is_jammed():
    # A jammed road (k_j, supply 0) with a closed exit receives nothing: a demand of
    # 0.4 veh/s/ln queues at the entrance, 0.4 * t vehicles per lane.
    f = lwr.solve(TRI, np.full(5, 0.12), dx=30.0, dt=1.0, steps=50, inflow=0.4, exit_capacity=0.0)
    assert f.entrance_queue[-1] == pytest.approx(0.4 * 50.0)
    assert np.all(f.inflow == 0.0) and np.all(f.final == pytest.approx(0.12))


def test_bottleneck_back_of_queue_moves_at_the_shock_speed():
    # Triangular, arrivals 0.5 veh/s/ln (k_A = 0.5/30), exit capacity 0.3:
    # queued state k_Q = k_j - 0.3/w = 0.12 - 0.05 = 0.07; back of queue at
    # u = (0.3 - 0.5)/(0.07 - 1/60) = -3.75 m/s (Rankine-Hugoniot; LW 1955).
    dx, dt, steps = 10.0, 0.3, 4000  # 1200 s: the back reaches 4500 m upstream
    n = 600
    k0 = np.full(n, 0.5 / 30.0)
    f = lwr.solve(TRI, k0, dx=dx, dt=dt, steps=steps, inflow=0.5, exit_capacity=0.3, track=True)
    assert f.back is not None
    t = f.levels
    later = t > 30.0
    back_m = n * dx - f.back[later]  # distance upstream of the exit
    # The scheme spreads the shock over a few cells but conserves vehicles, so the
    # equal-area position of the spread shock follows the exact path to a small
    # part of a cell (1 m here, from the discrete profile's phase); we allow 0.15 dx.
    np.testing.assert_allclose(back_m, 3.75 * t[later], atol=0.15 * dx)
    assert f.final[-1] == pytest.approx(0.07, rel=1e-9)  # the queued state itself


# --------------------------------------------------------------------------- convergence

L1_DOMAIN = 2000.0
GRIDS = (100, 200, 400, 800)


def l1_error(fd, kl, kr, cells, t_end, cfl=0.8, sub=64):
    """L1 error of the solver against the exact solution's cell averages at t_end."""
    dx = L1_DOMAIN / cells
    x = -L1_DOMAIN / 2 + (np.arange(cells) + 0.5) * dx
    steps = math.ceil(t_end * lwr.max_wave_speed(fd) / (cfl * dx))
    f = lwr.solve(fd, np.where(x < 0, kl, kr), dx=dx, dt=t_end / steps, steps=steps)
    xs = -L1_DOMAIN / 2 + (np.arange(cells * sub) + 0.5) * dx / sub
    exact = lwr.riemann_exact(fd, kl, kr, xs / t_end).reshape(cells, sub).mean(axis=1)
    return dx * float(np.abs(f.final - exact).sum())


def observed_order(fd, kl, kr, t_end):
    errors = [l1_error(fd, kl, kr, n, t_end) for n in GRIDS]
    dxs = L1_DOMAIN / np.array(GRIDS)
    return float(np.polyfit(np.log(dxs), np.log(errors), 1)[0]), errors


@pytest.mark.parametrize(
    ("name", "fd", "kl", "kr", "t_end", "low", "high"),
    [
        # A captured shock is spread over a fixed number of cells, so its L1 error
        # is O(dx): order 1 (LeVeque 1992, ch. 15 -- from memory). The end time puts
        # the exact shock (-2.5 m/s * 24 s = -60 m; -1.5 * 40 = -60 m) on a cell
        # boundary of every grid, so the shock's phase in its cell is the same on
        # all four and the order is clean; we assert 0.9-1.1.
        ("moving shock, Greenshields", GS, 0.03, 0.10, 24.0, 0.9, 1.1),
        ("moving shock, triangular", TRI, 0.01, 0.09, 40.0, 0.9, 1.1),
        # A fan is smooth but has two corners, where the error is O(dx log 1/dx):
        # the observed order sits a little below 1 (about 0.75-0.8 here); we
        # assert 0.6-1.0.
        ("standing jam released, Greenshields", GS, 0.12, 0.0, 20.0, 0.6, 1.0),
        # The capped fan ends in a contact discontinuity at the cap speed (a
        # straight part of the diagram), which a first-order scheme smears over
        # O(sqrt(dx t)): the error is O(dx^0.5) there and the order about 0.55-0.6;
        # we assert 0.45-0.8.
        ("standing jam released, speed-capped (plateau)", CAP, 0.12, 0.0, 20.0, 0.45, 0.8),
    ],
)
def test_first_order_convergence_to_the_exact_solution(name, fd, kl, kr, t_end, low, high):
    order, errors = observed_order(fd, kl, kr, t_end)
    assert low <= order <= high, f"{name}: observed order {order:.3f}, errors {errors}"
    assert errors[-1] < errors[0]  # and the error does fall with the grid


# --------------------------------------------------------------------------- clawpack

CLAWPACK_SCRIPT = textwrap.dedent(
    """
    import json, sys
    import numpy as np
    from clawpack import pyclaw, riemann

    args = json.loads(sys.argv[1])
    cells, dx, dt, steps = args["cells"], args["dx"], args["dt"], args["steps"]
    solver = pyclaw.ClawSolver1D(riemann.traffic_1D)
    solver.order = 1  # first-order Godunov: no second-order corrections
    solver.bc_lower[0] = pyclaw.BC.extrap
    solver.bc_upper[0] = pyclaw.BC.extrap
    solver.dt_variable = False
    solver.dt_initial = dt
    solver.dt = dt
    x = pyclaw.Dimension(0.0, cells * dx, cells, name="x")
    domain = pyclaw.Domain(x)
    state = pyclaw.State(domain, 1)
    state.q[0, :] = np.array(args["q0"])
    state.problem_data["efix"] = True
    state.problem_data["umax"] = args["umax"]
    sol = pyclaw.Solution(state, domain)
    solver.setup(sol)
    solver.evolve_to_time(sol, steps * dt)
    print(json.dumps(sol.state.q[0, :].tolist()))
    """
)


@pytest.mark.parametrize(
    ("kl", "kr"),
    [
        (0.09, 0.012),  # released dense traffic: a transonic fan (Q' changes sign)
        (0.024, 0.084),  # light traffic meeting a queue: a shock
    ],
)
def test_matches_clawpack_traffic_riemann_solver(kl, kr, tmp_path):
    # Outside reference: clawpack (pip package `clawpack`, tested with 5.14.0),
    # Riemann solver clawpack.riemann.traffic_1D for q_t + (u_max q (1-q))_x = 0
    # with its entropy fix for transonic fans, run by pyclaw.ClawSolver1D at
    # order 1 with the same fixed time step and extrapolation (transmissive)
    # boundaries at both ends. Mapping: Greenshields with q = k/k_j and
    # u_max = v_f is the same equation in metres and seconds. First-order
    # wave propagation with that solver is Godunov's method, so the two must
    # agree to rounding: we assert 1e-12 in q.
    pytest.importorskip(
        "clawpack.riemann.traffic_1D", reason="clawpack is not installed (pip install clawpack)"
    )
    cells, dx = 200, 10.0
    dt = 0.25  # Courant number 30 * 0.25 / 10 = 0.75
    steps = 160
    x = (np.arange(cells) + 0.5) * dx
    k0 = np.where(x < 1000.0, kl, kr)
    ours = lwr.solve(GS, k0, dx=dx, dt=dt, steps=steps).final
    args = dict(cells=cells, dx=dx, dt=dt, steps=steps, umax=GS.free_speed)
    args["q0"] = (k0 / GS.jam_density).tolist()
    # pyclaw writes a log file in the working directory and reconfigures logging
    # on import, so it runs in its own process in a scratch directory.
    out = subprocess.run(
        [sys.executable, "-c", CLAWPACK_SCRIPT, json.dumps(args)],
        cwd=tmp_path,
        capture_output=True,
        text=True,
        check=True,
        timeout=120,
    )
    theirs = np.array(json.loads(out.stdout.strip().splitlines()[-1]))
    assert theirs.shape == ours.shape
    assert np.abs(theirs - k0 / GS.jam_density).max() > 0.01  # the waves did move
    np.testing.assert_allclose(ours / GS.jam_density, theirs, rtol=0, atol=1e-12)


# --------------------------------------------------------------------------- bottleneck

START = dt.datetime(2031, 3, 4, 0, 0)


def larkspur_plan(
    capacity_drop: bool = False, minutes: int = 30, method: str = "newell"
) -> wzq.Plan:
    """Invented: a two-lane approach, steady 2,400 veh/h, one lane closed for 30 min."""
    site = wzq.Site(
        lanes=2,
        speed_limit=u.kmh_to_mps(100),
        work_zone_speed_limit=u.kmh_to_mps(80),
        work_zone_length=1000.0,
        heavy_vehicle_share=0.05,
        unit_system="metric",
        name="Larkspur Vale Bypass near Amberfold (invented)",
    )
    demand = wzq.Demand(START, 3600, np.full(4, 2400.0))
    closure = wzq.Closure(
        START + dt.timedelta(hours=1),
        START + dt.timedelta(hours=1, minutes=minutes),
        1,
        capacity_override_veh_h_ln=1500.0,
    )
    options = wzq.Options(capacity_drop=capacity_drop, queue_length_method=method)
    return wzq.Plan(site, demand, (closure,), options=options)


@pytest.fixture(scope="module")
def larkspur_sim():
    plan = larkspur_plan()
    result = wzq.analyse(plan)
    return result, lwr.simulate(result, window="all", length_m=6000.0, cells=200)


def test_bottleneck_agrees_with_the_engine_while_the_closure_lasts(larkspur_sim):
    # Plain LWR has no capacity drop, so the plan has Options(capacity_drop=False):
    # one capacity per interval in both models.
    result, sim = larkspur_sim
    run = result.run
    fd = run.model.diagram
    assert isinstance(fd, Triangular)
    lev = sim.levels
    closed = (lev > 3600.0 + 60.0) & (lev < 5400.0)
    engine_len = sim.engine_queue_length_m(lev)
    # Constant demand and capacity: the whole queue is one state, so the engine's
    # length (Newell's method here; the single-state N / (n (k_Q - k_A)) gives the
    # same while the closure lasts) is the exact shock path (LW 1955; Newell 1993).
    # The simulated back of queue is the equal-area position of the spread shock:
    # within a tenth of a cell (3 m) of it (0.4 m observed).
    np.testing.assert_allclose(
        sim.back_of_queue_m[closed], engine_len[closed], atol=0.1 * sim.field.dx
    )
    # Vehicles stored (arrivals minus departures at the closure) against the
    # engine's exact point queue, which peaks at (2400 - 1500) veh/h * 0.5 h = 450
    # (D/D/1 queue, REFERENCES.md). The simulation's departures come through the
    # smeared field, so we allow 1.5 vehicles (0.3 %).
    np.testing.assert_allclose(sim.stored_veh, sim.engine_queue_veh(lev), atol=1.5)
    assert result.summary.max_queue_veh == pytest.approx(450.0)  # (2400 - 1500) * 0.5 h
    # Total delay: the engine's area between the cumulative curves against the
    # simulation's total travel time minus travel time at free speed, from the
    # density field. Equal in the continuum (the stretch starts and ends free);
    # the scheme's smearing of the queue's two ends costs about 0.15 % at 30 m
    # cells, so we allow 0.5 %.
    assert sim.total_delay_veh_h == pytest.approx(result.summary.queue_delay_veh_h, rel=5e-3)
    assert not sim.spilled and sim.warnings == []


def test_back_of_queue_keeps_growing_after_the_closure_ends(larkspur_sim):
    # Exact kinematic-wave solution on the triangular diagram (LW 1955; Newell
    # 1993), worked out here. Per lane: arrivals q_A = 1200 veh/h at k_A = q_A/v_f;
    # queued q_Q = 750 veh/h at k_Q = k_j - q_Q/w. The back moves upstream at
    # |u| = (q_A - q_Q)/(k_Q - k_A) and is L_T = |u| T at the end of the closure
    # (T = 1800 s). Then the queue is released at capacity from the front, a wave
    # moving upstream at w; it meets the back after L_T/(w - |u|), so the queue
    # reaches L_max = L_T w / (w - |u|).
    result, sim = larkspur_sim
    fd = result.run.model.diagram
    v_f, w, k_j = fd.free_speed, fd.backward_wave_speed, fd.jam_density
    q_a, q_q = 1200.0 / 3600.0, 750.0 / 3600.0
    k_a, k_q = q_a / v_f, k_j - q_q / w
    back_speed = (q_a - q_q) / (k_q - k_a)
    l_t = back_speed * 1800.0
    l_max = l_t * w / (w - back_speed)
    # The engine's wave-following length (wzq.models.newell) is exact; its single-state
    # option stops at L_T, the length at the end of the closure.
    assert sim.engine_method == "newell"
    assert result.summary.max_queue_length_m == pytest.approx(l_max, rel=1e-9)
    single = wzq.analyse(larkspur_plan(method="shockwave"))
    assert single.summary.max_queue_length_m == pytest.approx(l_t, rel=1e-9)
    # The release wave lies on the straight congested branch, so it is a contact
    # discontinuity that a first-order scheme smears over about sqrt(2 D t) with
    # D = w dx (1 - w dt/dx) / 2 (about 300 m here after 10 min): the front eats
    # into the back early and the simulated reach falls short by about 3 %
    # at 30 m cells (2 % at 15 m). We allow 4 %.
    assert sim.max_queue_extent_m == pytest.approx(l_max, rel=0.04)
    assert sim.max_queue_extent_m > 1.25 * l_t
    meet = 5400.0 + l_t / (w - back_speed)
    at = (sim.max_queue_extent_at - START).total_seconds()
    assert at == pytest.approx(meet, abs=90.0)  # within 1.5 min of the exact meeting time


def test_capacity_drop_rule_agrees_with_the_engine():
    # With the capacity drop the engine discharges a standing queue at the lower
    # queue discharge rate until it clears (HCM 7th ed. ch. 10/25); the solver's
    # rule (discharge rate while the last cell is congested) mirrors it, so the
    # counts agree as closely as without the drop.
    plan = larkspur_plan(capacity_drop=True)
    result = wzq.analyse(plan)
    sim = lwr.simulate(result, window="all", length_m=6000.0, cells=200)
    lev = sim.levels
    np.testing.assert_allclose(sim.stored_veh, sim.engine_queue_veh(lev), atol=1.5)
    assert sim.total_delay_veh_h == pytest.approx(result.summary.queue_delay_veh_h, rel=5e-3)
    assert sim.capacity_drop


def test_queue_longer_than_the_stretch_waits_at_the_entrance():
    # A 60-minute closure makes a queue of about 6.3 km (engine); on a 4 km stretch
    # the rest waits at the entrance as a point queue, is reported, and the delay
    # still counts it (within 0.5 %, as above).
    result = wzq.analyse(larkspur_plan(minutes=60))
    sim = lwr.simulate(result, window="all", length_m=4000.0, cells=100)
    assert result.summary.max_queue_length_m > 6000.0
    assert sim.spilled
    assert sim.max_queue_extent_m == pytest.approx(4000.0)
    assert any("upstream end of the modelled stretch" in w for w in sim.warnings)
    assert sim.total_delay_veh_h == pytest.approx(result.summary.queue_delay_veh_h, rel=5e-3)


def test_hourly_comparison_table(larkspur_sim):
    result, sim = larkspur_sim
    h = sim.hourly
    assert list(h["hour_start"]) == list(result.hourly["hour_start"])
    closed_hour = h.iloc[1]
    assert closed_hour["engine_queue_max_veh"] == pytest.approx(450.0)
    assert closed_hour["lwr_queue_max_veh"] == pytest.approx(450.0, abs=1.5)
    assert closed_hour["lwr_queue_length_max_m"] == pytest.approx(sim.max_queue_extent_m)
    # the hours' delays add up to the total, and nothing happens in the free hours
    assert h["lwr_delay_veh_h"].sum() == pytest.approx(sim.total_delay_veh_h, rel=1e-9)
    assert h.loc[[0, 2, 3], "lwr_queue_length_max_m"].max() == 0.0
    assert h["lwr_delay_veh_h"].iloc[[0, 2, 3]].abs().max() < 1e-6


@pytest.mark.slow
def test_kestrel_ridge_example_agrees_with_the_engine():
    # The shipped invented example: capacity drop on, demand changing hour by hour,
    # two closures; the engine follows the waves (Newell's method, exact for the
    # triangular diagram in plain LWR). The simulated back of queue is within 1 %
    # of it hour by hour (0.3 % observed at 40 m cells); counts and delay come
    # from the same cumulative curves: 1 % and 2 % (the delay per hour differs
    # more, 4 %, because the field counts a vehicle's delay where it is on the
    # road and the point queue where it waits, so we check the total).
    plan = load_plan("examples/kestrel_ridge_weeknight.json")
    result = wzq.analyse(plan)
    sim = lwr.simulate(result)
    h = sim.hourly
    assert sim.window == (20 * 3600.0, 54 * 3600.0)  # 30 min margins, whole hours
    assert sim.max_stored_veh == pytest.approx(result.summary.max_queue_veh, rel=0.01)
    assert sim.max_queue_extent_m == pytest.approx(result.summary.max_queue_length_m, rel=0.01)
    queued = h["engine_queue_length_max_m"] > 0
    assert queued.sum() == 3
    lwr_len = h.loc[queued, "lwr_queue_length_max_m"]
    np.testing.assert_allclose(lwr_len, h.loc[queued, "engine_queue_length_max_m"], rtol=0.01)
    total = h["engine_queue_delay_veh_h"].sum()
    assert h["lwr_delay_veh_h"].sum() == pytest.approx(total, rel=0.02)
    assert not sim.spilled


def test_focus_window_and_bad_arguments():
    plan = load_plan("examples/kestrel_ridge_weeknight.json")
    run = wzq.analyse(plan).run
    # closure 2 runs 22:00-05:00 on day 2 (hours 46-53 from the start); its queue
    # clears at 00:26 on day 3; 30 min margins, whole hours: 45:00 to 54:00
    assert lwr.focus_window(run, 1) == (45 * 3600.0, 54 * 3600.0)
    with pytest.raises(ValueError, match="closure 6 does not exist"):
        lwr.focus_window(run, 5)
    with pytest.raises(ValueError, match="window"):
        lwr.simulate(run, window=(0.0, 1e9))
    with pytest.raises(ValueError, match="length_m"):
        lwr.simulate(run, length_m=-5.0)
    with pytest.raises(ValueError, match="cfl"):
        lwr.simulate(run, cfl=1.5)
