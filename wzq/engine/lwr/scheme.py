"""The numerical scheme of the space-time check: an LWR solver (Godunov / cell
transmission) for a road with ramps, on its own.

The kinematic-wave (LWR) model (Lighthill & Whitham 1955; Richards 1956)
conserves vehicles, ``dk/dt + dq/dx = 0`` with ``q = Q(k)`` the fundamental
diagram of :mod:`wzq.models.flow`. It is solved here by the first-order Godunov scheme
written in its demand-supply form, which is the cell transmission model
(Daganzo 1994, 1995; Lebacque 1996): the road is cut into cells of length
``dx``, and in each time step ``dt`` the flow through the boundary between an
upstream cell ``u`` and a downstream cell ``d`` is

    F = min(D(k_u), S(k_d))

with the sending function (demand) ``D(k) = Q(min(k, k_c))`` and the receiving
function (supply) ``S(k) = Q(max(k, k_c))``. For a concave diagram this is
exactly Godunov's flux, the flow at ``x/t = 0`` of the exact solution of the
Riemann problem between the two cells (Lebacque 1996). Each cell then changes
by ``dt/dx`` times the flow in minus the flow out. The scheme is stable and
keeps densities within ``[0, k_j]`` when the Courant-Friedrichs-Lewy (CFL)
condition ``max|Q'(k)| dt <= dx`` holds, i.e. no wave crosses a whole cell in
one step (for the cell transmission model: ``v_f dt <= dx`` and
``w dt <= dx``); :func:`check_cfl` raises ValueError otherwise.

The plan-facing simulation is :mod:`wzq.engine.lwr.simulation`. Here:

* :func:`solve` -- the solver on its own: any diagram of :mod:`wzq.models.flow`, an
  initial density, and at each end either a transmissive boundary or, upstream,
  an inflow with a point queue at the entrance and, downstream, a bottleneck of
  given (time-varying) receiving capacity. Numpy-vectorised over cells, with
  preallocated buffers; for the Greenshields and triangular diagrams Godunov's
  flux is used in closed form, so a step costs six array operations.
* :func:`simulate` -- the approach to a closure in a :class:`wzq.Plan`: the
  engine's demand as the inflow, the engine's capacity schedule as the
  bottleneck, per lane of the approach, with the back of the queue, the
  vehicles stored, the delay and an hour-by-hour comparison with the engine's
  queue lengths (:mod:`wzq.models.newell` or :mod:`wzq.models.shockwave`) and delay.

:func:`riemann_exact` gives the exact entropy solution of a Riemann problem for
the three diagrams (a shock at the Rankine-Hugoniot speed, or a fan, with a
plateau where the diagram has a kink), against which the solver is tested.

Units: SI, per lane, as in :mod:`wzq.models.flow` (density veh/m/ln, flow veh/s/ln,
speed m/s, time s, distance m); :func:`simulate` takes and reports flows in the
engine's veh/h and counts over all lanes.

References (bibliographic details from memory):

* Lighthill, M. J. & Whitham, G. B. (1955). On kinematic waves II. *Proc. R. Soc.
  Lond. A* 229, 317-345. Richards, P. I. (1956). Shock waves on the highway.
  *Operations Research* 4(1), 42-51.
* Godunov, S. K. (1959). A difference scheme for numerical solution of
  discontinuous solution of hydrodynamic equations. *Mat. Sbornik* 47, 271-306.
* Daganzo, C. F. (1994). The cell transmission model. *Transportation Research
  B* 28(4), 269-287; (1995) part II: network traffic, *TR-B* 29(2), 79-93.
* Lebacque, J. P. (1996). The Godunov scheme and what it means for first order
  traffic flow models. *Proc. 13th ISTTT*, 647-677.
* LeVeque, R. J. (1992). *Numerical Methods for Conservation Laws*, 2nd ed.,
  Birkhauser, ch. 4 (traffic flow, Riemann problems) and ch. 13-15 (Godunov's
  method, CFL condition).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from functools import cached_property
from typing import Final

import numpy as np
import numpy.typing as npt

from wzq.models.flow import CappedGreenshields, FundamentalDiagram, Greenshields, Triangular

__all__ = [
    "QUEUE_DENSITY_FRACTION",
    "Field",
    "Junction",
    "check_cfl",
    "courant_number",
    "godunov_flux",
    "max_wave_speed",
    "queue_density",
    "riemann_exact",
    "solve",
]

FloatArray = npt.NDArray[np.float64]

QUEUE_DENSITY_FRACTION: Final = 0.02
"""A cell counts as queued when its density is above ``k_c + 0.02 (k_j - k_c)``.

Our own choice: just above the critical density, so that traffic released
from a queue at capacity (density ``k_c``) is not counted, while any queue
discharging below 98 % of the road's capacity per lane is.
"""

CFL_TOLERANCE: Final = 1e-12
"""Courant numbers up to ``1 + CFL_TOLERANCE`` are accepted (rounding)."""

# --------------------------------------------------------------------------- waves, CFL


def max_wave_speed(diagram: FundamentalDiagram) -> float:
    """Largest characteristic speed ``max |Q'(k)|`` (m/s) of a concave diagram.

    ``Q'`` decreases with density, so the extremes are at ``k = 0`` (free-flow
    or capped speed) and at ``k = k_j`` (minus the backward wave speed).
    """
    ends = np.asarray(diagram.wave_speed(np.array([0.0, diagram.jam_density])))
    return float(np.max(np.abs(ends)))


def courant_number(diagram: FundamentalDiagram, dx: float, dt: float) -> float:
    """``max |Q'(k)| dt / dx``: the fraction of a cell the fastest wave crosses in a step."""
    return max_wave_speed(diagram) * dt / dx


def check_cfl(diagram: FundamentalDiagram, dx: float, dt: float) -> float:
    """Return the Courant number, raising ValueError if the CFL condition fails.

    Courant, Friedrichs & Lewy (1928); for the cell transmission model
    ``v_f dt <= dx`` and ``w dt <= dx`` (Daganzo 1994). Godunov's scheme is
    monotone, and keeps the density within ``[0, k_j]``, only when no wave
    crosses more than one cell in a step.
    """
    for name, value in (("dx", dx), ("dt", dt)):
        if not (math.isfinite(value) and value > 0):
            raise ValueError(f"{name} must be a finite number above zero, got {value!r}")
    c = courant_number(diagram, dx, dt)
    if c > 1.0 + CFL_TOLERANCE:
        limit = dx / max_wave_speed(diagram)
        raise ValueError(
            f"time step dt = {dt!r} s violates the CFL condition: the fastest wave "
            f"({max_wave_speed(diagram):.6g} m/s) crosses {c:.4g} cells of dx = {dx!r} m "
            f"per step; use dt <= {limit:.6g} s or longer cells"
        )
    return c


def godunov_flux(
    diagram: FundamentalDiagram, k_up: npt.ArrayLike, k_down: npt.ArrayLike
) -> FloatArray:
    """Godunov flux (veh/s/ln) between an upstream and a downstream density.

    ``min(D(k_up), S(k_down))``: the demand-supply form of the cell
    transmission model (Daganzo 1995; Lebacque 1996), equal for a concave
    diagram to the flow at ``x/t = 0`` of the exact Riemann solution.
    """
    d = np.asarray(diagram.demand(k_up), dtype=np.float64)
    s = np.asarray(diagram.supply(k_down), dtype=np.float64)
    return np.minimum(d, s)


def queue_density(diagram: FundamentalDiagram) -> float:
    """Density (veh/m/ln) above which a cell counts as queued (:data:`QUEUE_DENSITY_FRACTION`)."""
    k_c, k_j = diagram.critical_density, diagram.jam_density
    return k_c + QUEUE_DENSITY_FRACTION * (k_j - k_c)


# --------------------------------------------------------------------------- exact Riemann


def _fan_density(diagram: FundamentalDiagram, xi: FloatArray) -> FloatArray:
    """The density whose characteristic speed is ``xi`` (inverse of ``Q'``), per diagram.

    Where ``Q'`` jumps at a kink every ``xi`` between the two slopes maps to
    the kink density (the fan's plateau); where ``Q`` is straight, the
    density jumps at that slope (a contact discontinuity).
    """
    k_j = diagram.jam_density
    if isinstance(diagram, Greenshields):
        # Q'(k) = v_f (1 - 2k/k_j)  =>  k = k_j (1 - xi/v_f) / 2
        return 0.5 * k_j * (1.0 - xi / diagram.free_speed)
    if isinstance(diagram, Triangular):
        # slopes v_f below k_c and -w above: kink plateau k_c for -w < xi < v_f
        w = diagram.backward_wave_speed
        return np.where(
            xi < -w, k_j, np.where(xi <= diagram.free_speed, diagram.critical_density, 0.0)
        )
    if isinstance(diagram, CappedGreenshields):
        # straight line of slope u' up to k_b, then the parabola: plateau k_b for
        # 2u' - v_f < xi <= u', the parabola's inverse below, a contact at u'
        u = diagram.effective_cap
        parabola = 0.5 * k_j * (1.0 - xi / diagram.free_speed)
        return np.where(xi <= u, np.maximum(parabola, diagram.kink_density), 0.0)
    raise TypeError(f"no exact Riemann solution for {type(diagram).__name__}")


def riemann_exact(
    diagram: FundamentalDiagram, k_left: float, k_right: float, xi: npt.ArrayLike
) -> FloatArray:
    """Exact entropy solution of the LWR Riemann problem at ``xi = x/t`` (m/s).

    Initial density ``k_left`` for ``x < 0`` and ``k_right`` for ``x > 0``;
    the solution depends on ``x/t`` only (Lighthill & Whitham 1955; LeVeque
    1992, ch. 4). For a concave diagram:

    * ``k_left < k_right`` (traffic runs into denser traffic): one shock at the
      Rankine-Hugoniot speed ``s = (Q(k_r) - Q(k_l)) / (k_r - k_l)``;
    * ``k_left > k_right`` (denser traffic ahead of lighter, e.g. a queue
      released): a fan, ``k = (Q')^-1(x/t)`` between ``Q'(k_left)`` and
      ``Q'(k_right)``, with a plateau at a kink of the diagram and a contact
      discontinuity along a straight part.

    Available for :class:`~wzq.models.flow.Greenshields`, :class:`~wzq.models.flow.Triangular`
    and :class:`~wzq.models.flow.CappedGreenshields`.
    """
    z = np.asarray(xi, dtype=np.float64)
    diagram.flow(np.array([k_left, k_right]))  # ValueError outside [0, k_j]
    kl, kr = float(k_left), float(k_right)
    if kl < kr:
        s = float(diagram.shock_speed(kl, kr))
        return np.where(z < s, kl, kr)
    if kl == kr:
        return np.full_like(z, kl)
    return np.clip(_fan_density(diagram, z), kr, kl)


# --------------------------------------------------------------------------- schemes
#
# One step of Godunov's scheme is k_i += dt/dx (F_{i-1/2} - F_{i+1/2}). Each
# scheme below keeps a state ``s`` (the density, or an affine image of it) and
# writes interface values ``H`` such that the step is ``s_i += H_{i+1/2} -
# H_{i-1/2}``: two array operations, no temporary. For the Greenshields and
# triangular diagrams the Godunov flux has a closed form that needs only four
# more array operations per step (six in all, against twelve for the general
# demand-supply form); every other diagram uses the demand-supply form.


def _q_greenshields(k: float, v_f: float, k_j: float) -> float:
    return v_f * k * (1.0 - k / k_j)


class _Scheme:
    """The demand-supply form for any concave diagram: state ``s = k``, ``H = -r F``."""

    def __init__(self, diagram: FundamentalDiagram, n: int, r: float) -> None:
        self.diagram = diagram
        self.r = r
        self.k_c = float(diagram.critical_density)
        self.capacity = float(diagram.capacity)
        self.s = np.empty(n)
        self.h = np.empty(n + 1)
        self._d = np.empty(n)
        self._sup = np.empty(n)
        self._m = np.empty(n)
        # max(x, 0) against an array of zeros: numpy's scalar-broadcast path is
        # about 2.5x slower than the element-wise one on arrays this size
        self._zero = np.zeros(max(n - 1, 0))
        self._fill = _fill_demand_supply(diagram)
        # views made once, not at every step
        self._inner = self.h[1:-1]
        self._right = self.h[1:]
        self._left = self.h[:-1]
        self._s_up = self.s[:-1]
        self._s_down = self.s[1:]

    # conversions between density and state
    def load(self, k: FloatArray) -> None:
        self.s[:] = k

    def density(self, out: FloatArray) -> FloatArray:
        out[:] = self.s
        return out

    def density_at(self, i: int) -> float:
        return float(self.s[i])

    # scalar demand and supply at the two ends
    def demand(self, k: float) -> float:
        return float(self.diagram.demand(min(max(k, 0.0), self.diagram.jam_density)))

    def supply(self, k: float) -> float:
        return float(self.diagram.supply(min(max(k, 0.0), self.diagram.jam_density)))

    def deficit(self, flux: float) -> float:
        """``H`` of a boundary carrying ``flux`` (veh/s/ln)."""
        return -self.r * flux

    def flows(self, h: FloatArray) -> FloatArray:
        """Flows (veh/s/ln) of boundary values ``H`` (the inverse of :meth:`deficit`)."""
        return h / -self.r

    def ends(self) -> None:
        """``H`` at both ends for transmissive boundaries (the end cells' own flow)."""
        first, last = float(self.s[0]), float(self.s[-1])
        self.h[0] = self.deficit(min(self.demand(first), self.supply(first)))
        self.h[-1] = self.deficit(min(self.demand(last), self.supply(last)))

    def flow_sum(self, k: FloatArray, scratch: FloatArray) -> float:
        """``sum Q(k_i)`` over the cells (``Q = min(D, S)`` for a concave diagram)."""
        self._fill(k, self._d, self._sup, scratch)
        np.minimum(self._d, self._sup, out=scratch)
        return float(np.add.reduce(scratch))

    def interior(self) -> None:
        """``H`` at every inner cell boundary from the current state."""
        self._fill(self.s, self._d, self._sup, self._m)
        inner = self._inner
        np.minimum(self._d[:-1], self._sup[1:], out=inner)
        inner *= -self.r

    def update(self) -> None:
        self.s += self._right
        self.s -= self._left

    def add(self, i: int, dk: float) -> None:
        """Add ``dk`` (veh/m/ln) to the density of cell ``i`` (a ramp's point source or sink)."""
        self.s[i] += dk


class _GreenshieldsScheme(_Scheme):
    """Greenshields in closed form.

    With ``a = v_f/k_j`` the diagram is ``Q(k) = q_max - a (k - k_c)^2``, so
    ``D(k_u) = q_max - a max(k_c - k_u, 0)^2`` and ``S(k_d) = q_max - a
    max(k_d - k_c, 0)^2``, and Godunov's flux is ``F = q_max - a max(k_c - k_u,
    k_d - k_c, 0)^2``. In the state ``s = (dt/dx) a (k - k_c)`` the step becomes
    ``H = max(-s_u, s_d, 0)^2``, ``s_i += H_{i+1/2} - H_{i-1/2}``.
    """

    def __init__(self, diagram: FundamentalDiagram, n: int, r: float) -> None:
        super().__init__(diagram, n, r)
        self.v_f = float(diagram.free_speed)
        self.k_j = float(diagram.jam_density)
        self.a = self.v_f / self.k_j
        self.scale = r * self.a
        self._neg = self._m[:-1]

    def load(self, k: FloatArray) -> None:
        np.subtract(k, self.k_c, out=self.s)
        self.s *= self.scale

    def density(self, out: FloatArray) -> FloatArray:
        np.divide(self.s, self.scale, out=out)
        out += self.k_c
        return out

    def density_at(self, i: int) -> float:
        return self.k_c + float(self.s[i]) / self.scale

    def demand(self, k: float) -> float:
        return _q_greenshields(min(max(k, 0.0), self.k_c), self.v_f, self.k_j)

    def supply(self, k: float) -> float:
        return _q_greenshields(min(max(k, self.k_c), self.k_j), self.v_f, self.k_j)

    def deficit(self, flux: float) -> float:
        return self.r * self.scale * (self.capacity - flux)

    def add(self, i: int, dk: float) -> None:
        self.s[i] += self.scale * dk

    def flows(self, h: FloatArray) -> FloatArray:
        return self.capacity - h / (self.r * self.scale)

    def ends(self) -> None:
        # Q(k) = q_max - a y^2, so H of the end cell's own flow is s^2
        first, last = self.s[0], self.s[-1]
        self.h[0] = first * first
        self.h[-1] = last * last

    def flow_sum(self, k: FloatArray, scratch: FloatArray) -> float:
        np.subtract(self.k_j, k, out=scratch)
        scratch *= k
        return self.a * float(np.add.reduce(scratch))

    def interior(self) -> None:
        inner = self._inner
        neg = self._neg
        np.negative(self._s_up, out=neg)
        np.maximum(neg, self._s_down, out=inner)
        np.maximum(inner, self._zero, out=inner)
        np.square(inner, out=inner)


class _TriangularScheme(_Scheme):
    """Triangular diagram in closed form.

    ``D(k_u) = min(v_f k_u, C)`` and ``S(k_d) = min(C, w (k_j - k_d))``, so with
    ``y = k - k_c`` Godunov's flux is ``F = C - max(-v_f y_u, w y_d, 0)``. In
    the state ``s = y``, with ``r = dt/dx``, the step becomes
    ``H = max(-r v_f s_u, r w s_d, 0)``, ``s_i += H_{i+1/2} - H_{i-1/2}``.
    """

    def __init__(self, diagram: FundamentalDiagram, n: int, r: float) -> None:
        super().__init__(diagram, n, r)
        self.v_f = float(diagram.free_speed)
        self.w = float(diagram.backward_wave_speed)
        self.k_j = float(diagram.jam_density)
        self.up = -r * self.v_f
        self.down = r * self.w
        self._up_buf = self._m[:-1]
        self._down_buf = self._d[1:]

    def load(self, k: FloatArray) -> None:
        np.subtract(k, self.k_c, out=self.s)

    def density(self, out: FloatArray) -> FloatArray:
        np.add(self.s, self.k_c, out=out)
        return out

    def density_at(self, i: int) -> float:
        return self.k_c + float(self.s[i])

    def demand(self, k: float) -> float:
        return min(self.v_f * max(k, 0.0), self.capacity)

    def supply(self, k: float) -> float:
        return max(min(self.capacity, self.w * (self.k_j - k)), 0.0)

    def deficit(self, flux: float) -> float:
        return self.r * (self.capacity - flux)

    def flows(self, h: FloatArray) -> FloatArray:
        return self.capacity - h / self.r

    def ends(self) -> None:
        # C - Q(k) = max(-v_f y, w y) >= 0, times r
        first, last = float(self.s[0]), float(self.s[-1])
        self.h[0] = max(self.up * first, self.down * first)
        self.h[-1] = max(self.up * last, self.down * last)

    def flow_sum(self, k: FloatArray, scratch: FloatArray) -> float:
        # Q = C - max(-v_f y, w y) with y = k - k_c, the state itself
        up, down = self._m, self._d
        np.multiply(self.s, -self.v_f, out=up)
        np.multiply(self.s, self.w, out=down)
        np.maximum(up, down, out=scratch)
        return len(k) * self.capacity - float(np.add.reduce(scratch))

    def interior(self) -> None:
        inner = self._inner
        np.multiply(self._s_up, self.up, out=self._up_buf)
        np.multiply(self._s_down, self.down, out=self._down_buf)
        np.maximum(self._up_buf, self._down_buf, out=inner)
        np.maximum(inner, self._zero, out=inner)


def _scheme(diagram: FundamentalDiagram, n: int, r: float) -> _Scheme:
    """The fastest scheme for this diagram (exact type; subclasses get the general one)."""
    if type(diagram) is Greenshields:
        return _GreenshieldsScheme(diagram, n, r)
    if type(diagram) is Triangular:
        return _TriangularScheme(diagram, n, r)
    return _Scheme(diagram, n, r)


Fill = Callable[[FloatArray, FloatArray, FloatArray, FloatArray], None]


def _fill_demand_supply(diagram: FundamentalDiagram) -> Fill:
    """``fill(k, D, S, scratch)``: demand and supply of every cell into ``D`` and ``S``.

    In-place numpy operations on preallocated buffers for the speed-capped
    Greenshields diagram; any other diagram uses its own ``demand`` and
    ``supply`` methods.
    """
    if type(diagram) is CappedGreenshields:
        k_c = float(diagram.critical_density)
        v_f = float(diagram.free_speed)
        u = float(diagram.effective_cap)
        b = -v_f / float(diagram.jam_density)  # speed v = min(u, v_f + b k)

        def fill_capped(k: FloatArray, d: FloatArray, s: FloatArray, m: FloatArray) -> None:
            for out, limit in ((d, np.minimum), (s, np.maximum)):
                limit(k, k_c, out=m)
                np.multiply(m, b, out=out)
                out += v_f
                np.minimum(out, u, out=out)
                out *= m

        return fill_capped

    def fill_any(k: FloatArray, d: FloatArray, s: FloatArray, m: FloatArray) -> None:
        d[:] = diagram.demand(k)
        s[:] = diagram.supply(k)

    return fill_any


# --------------------------------------------------------------------------- ramps


@dataclass(frozen=True)
class Junction:
    """A ramp at an inner cell boundary of :func:`solve`'s stretch.

    ``boundary`` ``b`` (1 to ``n - 1``) lies between cell ``b - 1`` (upstream)
    and cell ``b``. The junction rules are those of the cell transmission model
    for networks (Daganzo 1995):

    * entrance ramp (``entrance`` True), a point source: its demand ``rate``
      (veh/s per lane of the stretch, one value per step) enters first, up to
      the receiving capacity (supply) of cell ``b`` -- the merge rule with the
      ramp's priority share at least its flow; what cannot enter waits in a
      point queue on the ramp; the mainline sends ``min(D(k_{b-1}), S(k_b) -
      ramp flow)``;
    * exit ramp, a point sink, first in, first out: cell ``b - 1`` sends
      ``min(D(k_{b-1}), S(k_b) / (1 - beta))`` where ``beta`` is the share of its
      vehicles bound for this exit; that share leaves, the rest goes on. The
      exit itself takes any flow.

    ``exit_shares`` (entrance ramps only): per exit of the stretch (in the
    order of the exit junctions) and per step, the share of the ramp's traffic
    bound for that exit.
    """

    boundary: int
    entrance: bool
    rate: npt.ArrayLike | None = None
    exit_shares: npt.ArrayLike | None = None
    name: str = ""


class _Ramps:
    """The junctions of :func:`solve` and the exit-bound traffic they need.

    The traffic bound for each exit is carried as its own density (a passive
    share of the stream: its flux across a boundary is the flow times the share
    of the sending cell), so that the exit takes only the vehicles bound for it,
    in the order they arrive (Daganzo 1995, the multi-commodity form).
    """

    def __init__(
        self,
        junctions: tuple[Junction, ...],
        n: int,
        steps: int,
        dt: float,
        dx: float,
        exit_shares_in: npt.ArrayLike | None,
        exit_density0: npt.ArrayLike | None,
    ) -> None:
        self.junctions = junctions
        self.dt, self.r = dt, dt / dx
        exits = [i for i, j in enumerate(junctions) if not j.entrance]
        self.exit_of = {i: e for e, i in enumerate(exits)}
        n_e = len(exits)
        for jn in junctions:
            if not 1 <= int(jn.boundary) <= n - 1:
                raise ValueError(f"junction boundary {jn.boundary} must lie within 1..{n - 1}")
        self.rate = [
            _per_step(jn.rate, steps, f"rate of junction {i}") if jn.entrance else None
            for i, jn in enumerate(junctions)
        ]
        self.shares = [
            None
            if not jn.entrance or n_e == 0
            else _shares(jn.exit_shares, n_e, steps, f"exit_shares of junction {i}")
            for i, jn in enumerate(junctions)
        ]
        self.shares_in = _shares(exit_shares_in, n_e, steps, "exit_shares_in") if n_e else None
        self.bound = np.zeros((n_e, n))
        if n_e and exit_density0 is not None:
            self.bound[:] = np.asarray(exit_density0, dtype=np.float64)
        self.queue = np.zeros(len(junctions))
        self.flow = np.zeros((len(junctions), steps))
        self.queue_rec = np.zeros((len(junctions), steps + 1))
        self.f_in = np.empty(n + 1)
        self.e_out = np.empty(n + 1)
        self.comp = np.empty(n + 1)

    def apply(self, scheme: _Scheme, h: FloatArray, k: FloatArray, step: int) -> list:
        """Flows through the junctions this step: ``h`` at their boundaries, the
        exit-bound traffic carried, and the source and sink terms to add after
        the update (cell, density change)."""
        flows = scheme.flows(h)  # flow leaving the upstream cell of each boundary
        f_in = self.f_in
        f_in[:] = flows
        extra = []
        ramp_bound = []
        for i, jn in enumerate(self.junctions):
            b = int(jn.boundary)
            ku, kd = float(k[b - 1]), float(k[b])
            supply = scheme.supply(kd)
            if jn.entrance:
                rate = float(self.rate[i][step])
                want = rate + self.queue[i] / self.dt
                ramp = min(want, supply)
                self.queue[i] = max(self.queue[i] + (rate - ramp) * self.dt, 0.0)
                main = max(min(scheme.demand(ku), supply - ramp), 0.0)
                flows[b] = main
                f_in[b] = main + ramp
                h[b] = scheme.deficit(main)
                extra.append((b, self.r * ramp))
                ramp_bound.append((b, i, ramp))
            else:
                e = self.exit_of[i]
                beta = min(float(self.bound[e, b - 1]) / ku, 1.0) if ku > 0 else 0.0
                limit = supply / (1.0 - beta) if beta < 1.0 else np.inf
                out = min(scheme.demand(ku), limit)
                ramp = beta * out
                flows[b] = out
                f_in[b] = out - ramp
                h[b] = scheme.deficit(out - ramp)
                extra.append((b - 1, -self.r * ramp))
            self.flow[i, step] = ramp
            self.queue_rec[i, step + 1] = self.queue[i]
        if len(self.bound):
            self._carry(flows, k, step, ramp_bound)
        return extra

    def _carry(self, flows: FloatArray, k: FloatArray, step: int, ramp_bound: list) -> None:
        """Move the exit-bound traffic with the stream (upwind: the sending cell's share)."""
        comp, e_out = self.comp, self.e_out
        safe = np.where(k > 0, k, 1.0)
        for e in range(len(self.bound)):
            comp[0] = self.shares_in[e, step]
            np.divide(self.bound[e], safe, out=comp[1:])
            comp[1:][k <= 0] = 0.0
            np.multiply(flows, comp, out=e_out)
            e_in = e_out.copy()
            for i, jn in enumerate(self.junctions):
                if not jn.entrance and self.exit_of[i] == e:
                    e_in[int(jn.boundary)] = 0.0  # it leaves here
            for b, i, ramp in ramp_bound:
                e_in[b] += ramp * self.shares[i][e, step]
            self.bound[e] += self.r * (e_in[:-1] - e_out[1:])
            np.maximum(self.bound[e], 0.0, out=self.bound[e])


def _shares(values: npt.ArrayLike | None, n_exits: int, steps: int, name: str) -> FloatArray:
    """Shares bound for each exit per step: ``(n_exits, steps)`` values in [0, 1]."""
    if values is None:
        return np.zeros((n_exits, steps))
    a = np.asarray(values, dtype=np.float64)
    if a.shape != (n_exits, steps) or not np.all(np.isfinite(a)) or np.any(a < 0) or np.any(a > 1):
        raise ValueError(f"{name} needs shares 0..1 of shape ({n_exits}, {steps})")
    return a


# --------------------------------------------------------------------------- the solver

SHOCK_WINDOW: Final = 3
"""Cells either side of the first queued cell used to place the back of the queue."""


def _shock_position(k: FloatArray, j: int, dx: float) -> float:
    """Position (m from the upstream end) of the shock that ends at queued cell ``j``.

    The scheme spreads a shock over a few cells but conserves vehicles, so the
    exact step from the upstream state ``k_u`` to the queued state ``k_q`` that
    holds the same vehicles over the window ``j - 3 .. j + 3`` lies at
    ``x_left + dx * sum(k_q - k_i) / (k_q - k_u)`` (equal areas). Clipped to the
    window; a window reaching past the stretch is cut at its ends.
    """
    i0 = max(j - SHOCK_WINDOW, 0)
    i1 = min(j + SHOCK_WINDOW, len(k) - 1)
    seg = k[i0 : i1 + 1]
    k_u, k_q = float(seg[0]), float(seg.max())
    left = i0 * dx
    if k_q - k_u <= 0.0:
        return left + (j - i0) * dx
    inside = float((k_q - seg).sum()) / (k_q - k_u)
    return left + dx * min(max(inside, 0.0), float(i1 + 1 - i0))


@dataclass(frozen=True)
class Field:
    """What :func:`solve` returns (per lane, SI).

    ``x`` cell centres (m from the upstream end); ``t`` the times (s) of the
    density snapshots ``density`` (one row per snapshot, one column per cell),
    every ``record_every`` steps and always the last step. Per time level
    (``steps + 1`` values, level ``n`` at ``n * dt``): ``entrance_queue``
    (vehicles per lane waiting to enter), and, when tracked, ``vehicles``
    (vehicles per lane on the stretch), ``travel`` (the flow summed over the
    stretch, veh m/s per lane: distance travelled per second) and ``back`` (the
    upstream edge of the queued region, m from the upstream end, NaN when no
    cell is queued). Per step (``steps`` values): ``inflow`` and ``outflow``
    (veh/s/ln through the two ends). With junctions: ``ramp_flow`` (one row per
    junction, per step: the flow entering from or leaving by the ramp, veh/s
    per lane of the stretch) and ``ramp_queue`` (per junction and time level:
    vehicles per lane waiting on an entrance ramp).
    """

    diagram: FundamentalDiagram
    dx: float
    dt: float
    steps: int
    x: FloatArray
    t: FloatArray
    density: FloatArray
    final: FloatArray
    inflow: FloatArray
    outflow: FloatArray
    entrance_queue: FloatArray
    vehicles: FloatArray | None = None
    travel: FloatArray | None = None
    back: FloatArray | None = None
    ramp_flow: FloatArray | None = None
    ramp_queue: FloatArray | None = None

    @property
    def length(self) -> float:
        """Length of the modelled stretch (m)."""
        return self.dx * len(self.x)

    @property
    def levels(self) -> FloatArray:
        """Times (s) of the ``steps + 1`` time levels."""
        return np.arange(self.steps + 1, dtype=np.float64) * self.dt

    @cached_property
    def speed(self) -> FloatArray:
        """Speed ``Q(k)/k`` (m/s) of every snapshot cell, the shape of ``density``."""
        return np.asarray(self.diagram.speed(self.density), dtype=np.float64)


def _per_step(
    values: npt.ArrayLike | None, steps: int, name: str, upper: float | None = None
) -> FloatArray | None:
    """A per-step series: ``None``, a constant, or exactly ``steps`` values >= 0."""
    if values is None:
        return None
    a = np.asarray(values, dtype=np.float64)
    a = np.full(steps, float(a)) if a.ndim == 0 else a
    if a.shape != (steps,):
        raise ValueError(f"{name} needs one value per step ({steps}), got shape {a.shape}")
    if not np.all(np.isfinite(a)) or np.any(a < 0):
        raise ValueError(f"{name} must be finite and not negative")
    if upper is not None:
        a = np.minimum(a, upper)
    return a


def solve(
    diagram: FundamentalDiagram,
    k0: npt.ArrayLike,
    *,
    dx: float,
    dt: float,
    steps: int,
    inflow: npt.ArrayLike | None = None,
    exit_capacity: npt.ArrayLike | None = None,
    exit_discharge: npt.ArrayLike | None = None,
    record_every: int | None = None,
    track: bool = False,
    junctions: tuple[Junction, ...] = (),
    exit_shares_in: npt.ArrayLike | None = None,
    exit_density0: npt.ArrayLike | None = None,
) -> Field:
    """March the LWR model ``steps`` steps by Godunov's scheme (demand-supply form).

    ``k0`` is the initial density of each cell (veh/m/ln, upstream to
    downstream). Boundaries:

    * upstream: ``inflow`` ``None`` is transmissive (a ghost cell copying the
      first cell); otherwise the demand (veh/s/ln, a constant or one value per
      step) that wants to enter. What the first cell cannot receive (its
      supply) waits in a point queue at the entrance and enters later;
    * downstream: ``exit_capacity`` ``None`` is transmissive; otherwise the
      bottleneck's receiving capacity (veh/s/ln per step): the last cell sends
      ``min(D(k), capacity)``. With ``exit_discharge`` as well (the capacity
      drop), the bottleneck passes ``exit_capacity`` while the last cell is
      uncongested and ``exit_discharge`` once it is congested (density above
      ``k_c``) -- our own simple rule, mirroring the engine's point queue
      (:mod:`wzq.models.queueing`); plain LWR has no capacity drop.

    ``junctions``: ramps at inner cell boundaries (:class:`Junction`, merge and
    first-in-first-out diverge of Daganzo 1995); ``exit_shares_in`` the share of
    the inflow bound for each exit per step (``(exits, steps)``) and
    ``exit_density0`` the initial density of the traffic bound for each exit
    (``(exits, n)``).

    ``record_every`` (default: only the start and the end) sets how often the
    density is kept. ``track`` keeps, at every time level, the vehicles on the
    stretch, the distance travelled per second and the back of the queue.

    Raises ValueError when the CFL condition fails (:func:`check_cfl`) or an
    input is malformed.
    """
    check_cfl(diagram, dx, dt)
    if int(steps) != steps or steps < 0:
        raise ValueError(f"steps must be a whole number, 0 or more, got {steps!r}")
    steps = int(steps)
    k = np.atleast_1d(np.asarray(k0, dtype=np.float64))
    if k.ndim != 1 or len(k) < 1:
        raise ValueError("k0 must be a one-dimensional array of cell densities")
    diagram.flow(k)  # raises ValueError for a density outside [0, k_j]
    k = np.clip(k, 0.0, diagram.jam_density)
    n = len(k)
    every = max(steps if record_every is None else int(record_every), 1)
    lam = _per_step(inflow, steps, "inflow")
    cap = _per_step(exit_capacity, steps, "exit_capacity")
    dis = _per_step(exit_discharge, steps, "exit_discharge")
    if dis is not None and cap is None:
        raise ValueError("exit_discharge needs exit_capacity as well")
    if dis is not None and cap is not None:
        dis = np.minimum(dis, cap)

    scheme = _scheme(diagram, n, dt / dx)
    scheme.load(k)
    ramps = (
        _Ramps(tuple(junctions), n, steps, dt, dx, exit_shares_in, exit_density0)
        if junctions
        else None
    )
    h = scheme.h
    # the bottleneck is active once the last cell is beyond the free branch (on a
    # trapezoid, at its capacity plateau already)
    k_busy = getattr(diagram, "free_capacity_density", diagram.critical_density)
    congested = float(k_busy) + 1e-9 * float(diagram.jam_density)
    k_queue = queue_density(diagram)
    density = np.empty(n)
    flow = np.empty(n)
    mask = np.empty(n, dtype=bool)

    n_rec = steps // every + 1 + (1 if steps % every else 0)
    rec_t = np.empty(n_rec)
    rec_k = np.empty((n_rec, n))
    queue_e = np.zeros(steps + 1)
    vehicles = np.empty(steps + 1) if track else None
    travel = np.empty(steps + 1) if track else None
    back = np.empty(steps + 1) if track else None
    x = (np.arange(n, dtype=np.float64) + 0.5) * dx

    def observe(level: int) -> None:
        """Vehicles, distance travelled per second and back of queue at a time level."""
        assert vehicles is not None and travel is not None and back is not None
        kk = scheme.density(density)
        vehicles[level] = dx * float(np.add.reduce(kk))
        travel[level] = dx * scheme.flow_sum(kk, flow)
        np.greater(kk, k_queue, out=mask)
        j = int(mask.argmax())
        if not mask[j]:
            back[level] = math.nan
        elif j == 0:
            back[level] = 0.0
        else:
            back[level] = _shock_position(kk, j, dx)

    queue = 0.0
    rec_t[0] = 0.0
    rec_k[0] = k
    rec = 1
    if track:
        observe(0)
    last = n - 1
    transmissive = lam is None and cap is None
    h_in = np.empty(steps)
    h_out = np.empty(steps)
    interior, update = scheme.interior, scheme.update  # looked up once, not every step
    for step in range(steps):
        interior()
        if transmissive:
            scheme.ends()
        else:
            k_first = scheme.density_at(0)
            k_last = scheme.density_at(last)
            # upstream: a ghost cell copying the first cell, or the demand
            if lam is None:
                flow_in = min(scheme.demand(k_first), scheme.supply(k_first))
            else:
                flow_in = min(lam[step] + queue / dt, scheme.supply(k_first))
                queue = max(queue + (lam[step] - flow_in) * dt, 0.0)
                queue_e[step + 1] = queue
            # downstream: a ghost cell copying the last cell, or the bottleneck
            if cap is None:
                flow_out = min(scheme.demand(k_last), scheme.supply(k_last))
            elif dis is not None and k_last > congested:
                flow_out = min(scheme.demand(k_last), dis[step])
            else:
                flow_out = min(scheme.demand(k_last), cap[step])
            h[0] = scheme.deficit(flow_in)
            h[n] = scheme.deficit(flow_out)
        h_in[step] = h[0]
        h_out[step] = h[n]
        extra = None if ramps is None else ramps.apply(scheme, h, scheme.density(density), step)
        update()
        if extra:
            for cell, dk in extra:
                scheme.add(cell, dk)
        if track:
            observe(step + 1)
        if (step + 1) % every == 0 or step + 1 == steps:
            rec_t[rec] = (step + 1) * dt
            scheme.density(rec_k[rec])
            rec += 1
    final = scheme.density(np.empty(n))
    f_in = scheme.flows(h_in)
    f_out = scheme.flows(h_out)
    return Field(
        diagram=diagram,
        dx=float(dx),
        dt=float(dt),
        steps=steps,
        x=x,
        t=rec_t[:rec],
        density=rec_k[:rec],
        final=final,
        inflow=f_in,
        outflow=f_out,
        entrance_queue=queue_e,
        vehicles=vehicles,
        travel=travel,
        back=back,
        ramp_flow=None if ramps is None else ramps.flow,
        ramp_queue=None if ramps is None else ramps.queue_rec,
    )
