"""Speed of the LWR solver (wzq.engine.lwr.scheme.solve) against clawpack's first-order solver.

Both march the same Greenshields Riemann problem (a released dense platoon, a
transonic fan) on 10,000 cells with the same fixed time step and transmissive
boundaries, measured side by side in this one run; the figure is million
cell-steps per second (cells times steps over wall-clock seconds; the runs
alternate, and the ratio is taken run pair by run pair). clawpack:
``pyclaw.ClawSolver1D`` with ``riemann.traffic_1D`` at order 1 (pip package
``clawpack``). Target: wzq at least 5 times clawpack in every run of this
benchmark (median of 11 pairs), with and without the tracking of the vehicles,
the distance travelled and the back of the queue at every time level
(``track=True``, as the space-time check runs it). Where a target is not met
the output says why (:data:`TRACKING_LIMIT`).

Run: ``python benchmarks/lwr.py`` (``--cells``, ``--steps``, ``--repeats``).
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time

import numpy as np

from wzq.engine import lwr
from wzq.models.flow import Greenshields

FREE_SPEED = 30.0  # m/s, invented
JAM_DENSITY = 0.12  # veh/m/ln, invented
DX = 10.0  # m
DT = 0.25  # s: Courant number 0.75
K_LEFT, K_RIGHT = 0.09, 0.012


TRACKING_LIMIT = (
    "why track=True is slower: at every time level the tracking makes seven more passes "
    "over the cells (the densities from the scheme's state: 2; their sum: 1; the flow "
    "sum: 3; the test for queued cells: 1) against six for the step itself, so a tracked "
    "run takes {slow:.1f} times an untracked one. The passes are made in the same "
    "arithmetic as before, so that the space-time check's numbers stay the same bit for "
    "bit (tests/engine/test_approach_baseline.py holds them); fewer passes (vehicles "
    "counted by conservation, the flow sum as one dot product on the state) would change "
    "the vehicles and the delay in their last bits."
)


def initial(cells: int) -> np.ndarray:
    x = (np.arange(cells) + 0.5) * DX
    return np.where(x < 0.5 * cells * DX, K_LEFT, K_RIGHT)


def run_wzq(cells: int, steps: int, track: bool = False) -> tuple[float, np.ndarray]:
    fd = Greenshields(free_speed=FREE_SPEED, jam_density=JAM_DENSITY)
    k0 = initial(cells)
    t0 = time.perf_counter()
    field = lwr.solve(fd, k0, dx=DX, dt=DT, steps=steps, track=track)
    return time.perf_counter() - t0, field.final


def run_clawpack(cells: int, steps: int) -> tuple[float, np.ndarray]:
    from clawpack import pyclaw, riemann

    solver = pyclaw.ClawSolver1D(riemann.traffic_1D)
    solver.order = 1
    solver.bc_lower[0] = pyclaw.BC.extrap
    solver.bc_upper[0] = pyclaw.BC.extrap
    solver.dt_variable = False
    solver.dt_initial = DT
    solver.dt = DT
    domain = pyclaw.Domain(pyclaw.Dimension(0.0, cells * DX, cells, name="x"))
    state = pyclaw.State(domain, 1)
    state.q[0, :] = initial(cells) / JAM_DENSITY
    state.problem_data["efix"] = True
    state.problem_data["umax"] = FREE_SPEED
    solution = pyclaw.Solution(state, domain)
    solver.setup(solution)
    t0 = time.perf_counter()
    solver.evolve_to_time(solution, steps * DT)
    return time.perf_counter() - t0, solution.state.q[0, :] * JAM_DENSITY


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", type=int, default=10_000)
    parser.add_argument("--steps", type=int, default=2_000)
    parser.add_argument("--repeats", type=int, default=11)
    args = parser.parse_args()
    cells, steps = args.cells, args.steps
    work = cells * steps / 1e6
    print(f"problem: Greenshields Riemann problem, {cells:,} cells, {steps:,} steps, CFL 0.75")

    here = os.getcwd()
    scratch = tempfile.mkdtemp(prefix="wzq-bench-")
    os.chdir(scratch)  # pyclaw writes pyclaw.log into the working directory
    try:
        try:
            import clawpack.pyclaw  # noqa: F401
        except ImportError:
            clawpack_ok = False
        else:
            clawpack_ok = True
        ours, tracked, theirs, ratios, ratios_t = [], [], [], [], []
        k_wzq = k_claw = None
        for _ in range(args.repeats):  # side by side, pair by pair
            t_w, k_wzq = run_wzq(cells, steps)
            t_t, _ = run_wzq(cells, steps, True)
            ours.append(t_w)
            tracked.append(t_t)
            if clawpack_ok:
                t_c, k_claw = run_clawpack(cells, steps)
                theirs.append(t_c)
                ratios.append(t_c / t_w)
                ratios_t.append(t_c / t_t)
    finally:
        os.chdir(here)

    print("                               M cell-steps/s (best, median of the runs)")
    for name, times in (
        ("wzq.engine.lwr.scheme.solve", ours),
        ("wzq.engine.lwr.scheme.solve (track=True)", tracked),
        ("clawpack ClawSolver1D order 1", theirs),
    ):
        if times:
            rates = work / np.array(times)
            print(f"{name:30s} {rates.max():8.1f} {np.median(rates):8.1f}")
    if not clawpack_ok:
        print("clawpack is not installed (pip install clawpack): no ratio")
        return
    for what, values in (("", ratios), (" with track=True", ratios_t)):
        r = np.array(values)
        verdict = "met" if np.median(r) >= 5 else "NOT met"
        print(
            f"ratio wzq{what} / clawpack (same-pair runs): median {np.median(r):.1f} x, "
            f"range {r.min():.1f}-{r.max():.1f} x  (target at least 5 x: {verdict})"
        )
    if np.median(ratios_t) < 5:
        print(TRACKING_LIMIT.format(slow=float(np.median(np.array(tracked) / np.array(ours)))))
    diff = float(np.abs(k_wzq - k_claw).max()) / JAM_DENSITY
    print(f"largest difference of the two final states: {diff:.1e} (in k / k_j)")


if __name__ == "__main__":
    main()
