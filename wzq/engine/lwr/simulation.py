"""Space-time check: an LWR solver for the approach road upstream of a lane closure.

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

Two layers:

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

import datetime as dt
import math
from collections.abc import Callable
from dataclasses import dataclass
from dataclasses import field as dataclass_field
from functools import cached_property
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from wzq.engine import approach
from wzq.engine.evaluate import evaluate
from wzq.engine.hourly import hourly_table
from wzq.engine.plan import Plan
from wzq.engine.queue_length import queue_state_discharge
from wzq.engine.results import Result, Run
from wzq.models.flow import CappedGreenshields, FundamentalDiagram, Greenshields, Triangular
from wzq.models.shockwave import stored_density
from wzq.units import HOUR

__all__ = [
    "QUEUE_DENSITY_FRACTION",
    "Field",
    "Simulation",
    "busy_periods",
    "check_cfl",
    "courant_number",
    "default_length",
    "focus_window",
    "godunov_flux",
    "max_wave_speed",
    "queue_density",
    "riemann_exact",
    "simulate",
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

DEFAULT_CFL: Final = 0.9
"""Courant number used by :func:`simulate` (our own choice, below the limit of 1)."""

DEFAULT_CELLS_PER_LENGTH: Final = 100
"""Default cell count of :func:`simulate`: ``length / 100``, but cells no shorter
than :data:`MIN_DEFAULT_DX` (our own choice: fine enough for a picture, fast)."""

MIN_DEFAULT_DX: Final = 20.0
"""Shortest default cell (m) of :func:`simulate`."""

DEFAULT_RECORDS: Final = 1500
"""Most density snapshots :func:`simulate` keeps (enough for a picture)."""

WINDOW_MARGIN_S: Final = 1800.0
"""Time shown before and after the closures and queues in the automatic window."""

SPILL_VEH: Final = 0.5
"""An entrance queue above half a vehicle means the queue outgrew the stretch."""


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
        np.maximum(inner, 0.0, out=inner)
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
        np.maximum(inner, 0.0, out=inner)


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
    for step in range(steps):
        scheme.interior()
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
        scheme.update()
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


# --------------------------------------------------------------------------- the plan


def busy_periods(run: Run) -> list[tuple[float, float]]:
    """``(start, end)`` seconds of each period in which the engine has a queue standing.

    A queue starts at the beginning of an interval (rates are constant on
    each); it ends at its exact clearing instant, or at the end of the plan.
    """
    q = run.queue
    busy = q.busy > 0
    out: list[tuple[float, float]] = []
    start: float | None = None
    for i, b in enumerate(busy):
        if b and start is None:
            start = float(run.t[i])
        if start is not None and (q.queue[i + 1] == 0 or not b):
            end = float(run.t[i] + q.busy[i]) if b else float(run.t[i])
            out.append((start, end))
            start = None
    if start is not None:
        out.append((start, float(run.t[-1])))
    return out


def focus_window(run: Run, closure: int | None = None) -> tuple[float, float]:
    """A time window (s from the demand start) around the closures and their queues.

    All closures and queues (``closure`` ``None``) or closure number
    ``closure`` (0-based) and the queue it leaves, with
    :data:`WINDOW_MARGIN_S` either side, widened to whole hours and to any
    queue standing at either end, clipped to the demand period. With no
    closure and no queue, the whole demand period.
    """
    plan = run.plan
    total = float(run.t[-1])
    start0 = plan.demand.start
    periods = busy_periods(run)
    if closure is None:
        spans = [
            ((c.start - start0).total_seconds(), (c.end - start0).total_seconds())
            for c in plan.closures
        ]
        spans += periods
    else:
        if not 0 <= closure < len(plan.closures):
            raise ValueError(
                f"closure {closure + 1} does not exist; the plan has {len(plan.closures)}"
            )
        c = plan.closures[closure]
        spans = [((c.start - start0).total_seconds(), (c.end - start0).total_seconds())]
    if not spans:
        return 0.0, total
    a = min(s for s, _ in spans)
    b = max(e for _, e in spans)
    changed = True
    while changed:  # take in every queue that overlaps the window
        changed = False
        for s, e in periods:
            if s < b and e > a and (s < a or e > b):
                a, b = min(a, s), max(b, e)
                changed = True
    a = max(0.0, math.floor((a - WINDOW_MARGIN_S) / HOUR) * HOUR)
    b = min(total, math.ceil((b + WINDOW_MARGIN_S) / HOUR) * HOUR)
    return a, b


def _cumulative(t: FloatArray, rate: FloatArray) -> FloatArray:
    """Cumulative integral at the boundaries ``t`` of a piecewise-constant ``rate``."""
    out = np.zeros(len(t))
    np.cumsum(rate * np.diff(t), out=out[1:])
    return out


def _step_average(t: FloatArray, cum: FloatArray, times: FloatArray) -> FloatArray:
    """Average rate over each ``[times[n], times[n+1]]`` from a cumulative curve.

    Beyond the last boundary the last rate is held (the cumulative curve is
    extended linearly).
    """
    last = (cum[-1] - cum[-2]) / (t[-1] - t[-2]) if len(t) > 1 else 0.0
    inside = np.interp(times, t, cum)
    beyond = times > t[-1]
    inside[beyond] = cum[-1] + last * (times[beyond] - t[-1])
    return np.diff(inside) / np.diff(times)


@dataclass(frozen=True)
class Simulation:
    """The LWR run of a plan's approach and its comparison with the engine.

    Distances are metres *upstream of the closure* (the bottleneck at 0, the
    entrance of the stretch at ``length_m``); times are seconds from the
    demand start (``window`` is the simulated span); counts and delays are over
    all ``lanes`` of the approach.
    """

    run: Run
    field: Field
    lanes: int
    window: tuple[float, float]
    shift_s: float
    capacity_drop: bool
    warnings: list[str] = dataclass_field(default_factory=list)
    ramps: approach.Ramps | None = None

    @cached_property
    def exit_delay_veh_h(self) -> dict[str, float]:
        """Per exit ramp: the delay of the traffic leaving there (veh-h, all lanes),
        the area between its free-flow exit curve (the ramp's flow on the closure's
        clock, ``d / v0`` seconds earlier at the ramp) and the flow the simulation
        let off."""
        r, f = self.ramps, self.field
        if r is None or f.ramp_flow is None:
            return {}
        v0 = float(self.diagram.speed(0.0))
        lev = self.levels
        out = {}
        for j in range(r.count):
            if r.entrance[j]:
                continue
            free = np.interp(
                lev + r.distance[j] / v0, self.run.t, _cumulative(self.run.t, r.rate[j] / HOUR)
            )
            free -= free[0]
            actual = np.zeros(len(lev))
            np.cumsum(f.ramp_flow[j] * f.dt * self.lanes, out=actual[1:])
            gap = free - actual
            out[r.names[j]] = float(np.sum(0.5 * (gap[:-1] + gap[1:])) * f.dt) / HOUR
        return out

    # -- geometry and time --

    @property
    def length_m(self) -> float:
        """Length of the modelled approach (m)."""
        return self.field.length

    @property
    def diagram(self) -> FundamentalDiagram:
        return self.field.diagram

    @property
    def distance_m(self) -> FloatArray:
        """Cell centres as distance upstream of the closure (m), upstream end first."""
        return self.field.length - self.field.x

    @property
    def times(self) -> FloatArray:
        """Seconds from the demand start of the density snapshots."""
        return self.window[0] + self.field.t

    @property
    def levels(self) -> FloatArray:
        """Seconds from the demand start of every time level."""
        return self.window[0] + self.field.levels

    def clock(self, seconds: npt.ArrayLike) -> pd.DatetimeIndex:
        """Local clock of times given in seconds from the demand start."""
        start = pd.Timestamp(self.run.plan.demand.start)
        return start + pd.to_timedelta(np.atleast_1d(np.asarray(seconds, dtype=float)), unit="s")

    # -- fields --

    @property
    def density(self) -> FloatArray:
        """Density snapshots (veh/m/ln), one row per time in :attr:`times`."""
        return self.field.density

    @property
    def speed(self) -> FloatArray:
        """Speed snapshots (m/s), the shape of :attr:`density`."""
        return self.field.speed

    # -- queue and delay per time level --

    @cached_property
    def back_of_queue_m(self) -> FloatArray:
        """Distance (m) of the back of the queue upstream of the closure; 0 with no queue."""
        b = self.field.back
        assert b is not None
        return np.where(np.isnan(b), 0.0, self.field.length - np.nan_to_num(b))

    @cached_property
    def departures_veh(self) -> FloatArray:
        """Vehicles (all lanes) through the closure since the window start, per time level."""
        out = np.zeros(self.field.steps + 1)
        np.cumsum(self.field.outflow * self.field.dt * self.lanes, out=out[1:])
        return out

    @cached_property
    def arrivals_veh(self) -> FloatArray:
        """Vehicles (all lanes) that would have reached the closure in free flow, per level.

        The engine's cumulative demand at the bottleneck from the window start:
        the simulation feeds each vehicle in ``shift_s`` seconds early at the
        entrance, the free travel time of the stretch.
        """
        r = self.run
        cum = _cumulative(r.t, r.demand_veh_h / HOUR)
        levels = self.levels
        a = np.interp(levels, r.t, cum)
        return a - a[0]

    @cached_property
    def stored_veh(self) -> FloatArray:
        """Vehicles stored in the queue (all lanes) per level: arrivals minus departures.

        The point-queue count of the simulation (Newell's cumulative curves at
        the bottleneck), comparable with the engine's ``queue_veh``.
        """
        return np.maximum(self.arrivals_veh - self.departures_veh, 0.0)

    @property
    def entrance_queue_veh(self) -> FloatArray:
        """Vehicles (all lanes) waiting at the entrance of the stretch, per level."""
        return self.field.entrance_queue * self.lanes

    @cached_property
    def delay_rate(self) -> FloatArray:
        """Vehicles delayed per second (veh-s/s, all lanes) at every level.

        Total travel time minus distance travelled at the free speed ``v0``
        (the speed of the diagram at zero density), plus the entrance queue:
        ``n (int k dx - int q dx / v0 + queue_e)``. Zero in free flow on the
        triangular diagram; on the Greenshields family light traffic slower
        than ``v0`` also counts.
        """
        f = self.field
        assert f.vehicles is not None and f.travel is not None
        v0 = float(self.diagram.speed(0.0))
        return self.lanes * (f.vehicles - f.travel / v0 + f.entrance_queue)

    @cached_property
    def delay_cum_veh_s(self) -> FloatArray:
        """Cumulative delay (veh-s, all lanes) at every level, trapezoid rule."""
        rate = self.delay_rate
        out = np.zeros(len(rate))
        np.cumsum(0.5 * (rate[:-1] + rate[1:]) * self.field.dt, out=out[1:])
        return out

    # -- headline figures --

    @property
    def max_queue_extent_m(self) -> float:
        """Farthest reach (m) of the back of the queue upstream of the closure."""
        return float(self.back_of_queue_m.max())

    @property
    def max_queue_extent_at(self) -> dt.datetime | None:
        if self.max_queue_extent_m <= 0:
            return None
        i = int(np.argmax(self.back_of_queue_m))
        seconds = round(float(self.levels[i]), 3)
        return self.run.plan.demand.start + dt.timedelta(seconds=seconds)

    @property
    def max_stored_veh(self) -> float:
        return float(self.stored_veh.max())

    @property
    def total_delay_veh_h(self) -> float:
        """Delay over the window (veh-h, all lanes) from the space-time field."""
        return float(self.delay_cum_veh_s[-1]) / HOUR

    @property
    def max_entrance_queue_veh(self) -> float:
        return float(self.entrance_queue_veh.max())

    @property
    def spilled(self) -> bool:
        """The queue outgrew the modelled stretch (vehicles waited at its entrance)."""
        return self.max_entrance_queue_veh > SPILL_VEH

    # -- the engine's estimate --

    @property
    def engine_method(self) -> str:
        """How the engine found its queue lengths: ``"newell"`` or ``"shockwave"``."""
        return getattr(self.run, "length_method", "shockwave")

    def engine_queue_veh(self, seconds: npt.ArrayLike) -> FloatArray:
        """The engine's exact point queue (vehicles) at the given seconds."""
        r = self.run
        q = r.queue
        s = np.asarray(seconds, dtype=float)
        i = np.clip(np.searchsorted(r.t, s, side="right") - 1, 0, len(r.t) - 2)
        slope = np.where(q.busy[i] > 0, q.arrival_rate[i] - q.discharge[i], 0.0)
        return np.maximum(q.queue[i] + slope * (s - r.t[i]), 0.0)

    def engine_queue_length_m(self, seconds: npt.ArrayLike) -> FloatArray:
        """The engine's queue length (m) at the given seconds.

        Its back-of-queue trajectory when it followed the waves (Newell's
        method, :mod:`wzq.models.newell`), else the single-state shockwave relation
        ``N / (n (k_Q - k_A))`` (:mod:`wzq.models.shockwave`).
        """
        r = self.run
        s = np.asarray(seconds, dtype=float)
        newell = getattr(r, "back_of_queue", None)
        if newell is not None:
            return np.interp(s, newell.times, newell.distance)
        i = np.clip(np.searchsorted(r.t, s, side="right") - 1, 0, len(r.t) - 2)
        per_m = stored_density(
            r.model.diagram,
            r.demand_veh_h,
            queue_state_discharge(r.queue, r.discharge_veh_h),
            r.plan.site.lanes,
        )
        return self.engine_queue_veh(s) / per_m[i]

    # -- per hour --

    @cached_property
    def hourly(self) -> pd.DataFrame:
        """Hour by hour over the window: the engine's figures beside the LWR ones.

        ``engine_*`` columns are the engine's (:func:`wzq.engine.hourly.hourly_table`;
        its queue length by the method in :attr:`engine_method`; its delay here
        is the queueing delay only, without the extra travel time through the
        work zone, which the approach model does not see);
        ``lwr_*`` are this simulation's: the farthest back of queue and the
        most vehicles stored within the hour (both ends included) and the delay
        accumulated in it.
        """
        engine = hourly_table(self.run)
        a, b = self.window
        first, last = math.floor(a / HOUR + 1e-9), math.ceil(b / HOUR - 1e-9)
        eng = engine.iloc[first:last].reset_index(drop=True)
        bounds = np.arange(first, last + 1) * HOUR
        lev = self.levels
        hour = np.clip(((lev - 1e-9 * HOUR) // HOUR).astype(np.int64), first, last - 1)
        hour_after = np.clip((lev // HOUR).astype(np.int64), first, last - 1)

        def hour_max(v: FloatArray) -> FloatArray:
            out = np.zeros(last - first)
            np.maximum.at(out, hour - first, v)
            np.maximum.at(out, hour_after - first, v)
            return out

        cum = self.delay_cum_veh_s
        at_bounds = np.interp(bounds, lev, cum)
        return pd.DataFrame(
            {
                "hour_start": eng["hour_start"],
                "closure": eng["closure"],
                "demand_veh_h": eng["demand_veh_h"],
                "discharge_veh_h": eng["discharge_veh_h"],
                "engine_queue_max_veh": eng["queue_max_veh"],
                "lwr_queue_max_veh": hour_max(self.stored_veh),
                "engine_queue_length_max_m": eng["queue_length_max_m"],
                "lwr_queue_length_max_m": hour_max(self.back_of_queue_m),
                "engine_queue_delay_veh_h": eng["queue_delay_veh_h"],
                "lwr_delay_veh_h": np.diff(at_bounds) / HOUR,
                "lwr_entrance_queue_max_veh": hour_max(self.entrance_queue_veh),
            }
        )


def _run_ramps(run: Run) -> approach.Ramps | None:
    """The plan's ramps on the run's grid (``None`` without ramps)."""
    plan = run.plan
    if not plan.approach.ramps:
        return None
    mid = 0.5 * (run.t[:-1] + run.t[1:])
    n = len(plan.demand.flows_veh_h)
    di = np.minimum((mid // plan.demand.interval_s).astype(np.intp), n - 1)
    return approach.ramps_for(plan.demand, plan.approach, di)


def _bound_shares(ramps: approach.Ramps, exits: list[int], beyond: float) -> FloatArray:
    """Per exit (indices into the ramps) and grid interval: the share of the traffic
    passing the point ``beyond`` metres upstream that is bound for that exit -- its
    split there times the shares going on past the exits in between (first in,
    first out, every vehicle reaching an exit at a time leaves in the same share)."""
    beta = np.where(
        ramps.section[1:] > 0, ramps.rate / np.where(ramps.section[1:] > 0, ramps.section[1:], 1), 0
    )  # split of ramp j: its flow over the flow arriving there
    out = np.zeros((len(exits), ramps.rate.shape[1]))
    for e, j in enumerate(exits):
        if ramps.distance[j] >= beyond:
            continue
        share = beta[j].copy()
        for jj in exits:
            if ramps.distance[j] < ramps.distance[jj] < beyond:
                share *= 1.0 - beta[jj]
        out[e] = share
    return out


def _ramp_inputs(
    run: Run,
    ramps: approach.Ramps,
    fd: FundamentalDiagram,
    lanes: int,
    levels: FloatArray,
    length_m: float,
    dx: float,
    v0: float,
    reach: FloatArray,
) -> tuple[FloatArray, dict]:
    """Initial densities and the :func:`solve` arguments for the plan's ramps.

    Each ramp sits at the cell boundary nearest its distance; flows are stated on
    the closure's clock, so a ramp's traffic enters ``d / v0`` seconds before it
    would reach the closure. The road starts in free flow, each cell at the flow
    of its own section.
    """
    cells = len(reach)
    x = (np.arange(cells, dtype=np.float64) + 0.5) * dx
    upstream = length_m - x  # distance of each cell centre from the closure
    section = np.searchsorted(ramps.distance, upstream)  # ramps downstream of the cell
    flows = ramps.section[section, np.clip(np.searchsorted(run.t, reach, "right") - 1, 0,
                                           len(run.t) - 2)]  # fmt: skip
    k0 = np.asarray(fd.density_free(np.minimum(flows / HOUR / lanes, fd.capacity)), np.float64)
    exits = [j for j in range(ramps.count) if not ramps.entrance[j]]
    lead = levels[:-1]
    junctions = []
    for j in range(ramps.count):
        b = int(np.clip(round((length_m - ramps.distance[j]) / dx), 1, cells - 1))
        clock = lead + ramps.distance[j] / v0
        if ramps.entrance[j]:
            cum = _cumulative(run.t, ramps.rate[j] / HOUR)
            rate = _step_average(run.t, cum, levels + ramps.distance[j] / v0) / lanes
            shares = _bound_shares(ramps, exits, float(ramps.distance[j]))
            junctions.append(
                Junction(b, True, rate, _rate_at(run.t, shares.T, clock).T, ramps.names[j])
            )
        else:
            junctions.append(Junction(b, False, name=ramps.names[j]))
    # the traffic bound for each exit: at the upstream end and in the first cells
    far = float(ramps.distance[-1]) + length_m
    shares_far = _bound_shares(ramps, exits, far)
    shares_in = _rate_at(run.t, shares_far.T, lead + length_m / v0).T
    density0 = np.zeros((len(exits), cells))
    for s in np.unique(section):
        in_s = np.flatnonzero(section == s)
        shares = _bound_shares(ramps, exits, float(upstream[in_s[0]]))
        density0[:, in_s] = k0[in_s] * _rate_at(run.t, shares.T, reach[in_s]).T
    nodes = {
        "junctions": tuple(junctions),
        "exit_shares_in": shares_in if exits else None,
        "exit_density0": density0 if exits else None,
    }
    return k0, nodes


def _as_run(source: Plan | Result | Run) -> Run:
    """The engine's run of a plan, a result or a run."""
    if isinstance(source, Run):
        return source
    if isinstance(source, Result):
        return source.run
    if isinstance(source, Plan):
        return evaluate(source)
    raise TypeError(f"simulate needs a Plan, a Result or a Run, not {type(source).__name__}")


def _rate_at(t: FloatArray, rate: FloatArray, seconds: FloatArray) -> FloatArray:
    """A piecewise-constant rate (on intervals of ``t``) at given instants, last value held."""
    i = np.clip(np.searchsorted(t, seconds, side="right") - 1, 0, len(rate) - 1)
    return rate[i]


def default_length(run: Run, window: tuple[float, float]) -> float:
    """Approach length (m) for :func:`simulate`: room for the engine's longest queue.

    1.5 times the engine's longest queue in the window (or the farthest
    landmark of the approach, if farther) plus 1 km, rounded up to 500 m, at
    least 2 km (our own rule of thumb: room for a queue the engine's method
    underestimates, e.g. the single-state length after capacity returns, or a
    diagram other than the triangular).
    """
    a, b = window
    newell = getattr(run, "back_of_queue", None)
    longest = 0.0
    if newell is not None:
        inside = (newell.times >= a) & (newell.times <= b)
        if inside.any():
            longest = float(newell.distance[inside].max())
    else:
        sel = (run.t[1:] > a) & (run.t[:-1] < b)
        if sel.any():
            longest = float(max(run.length_start[sel].max(), run.length_end[sel].max()))
    farthest = max((lm.distance for lm in run.plan.approach.landmarks), default=0.0)
    longest = max(longest, farthest)
    return max(2000.0, math.ceil((1.5 * longest + 1000.0) / 500.0) * 500.0)


def simulate(
    source: Plan | Result | Run,
    *,
    length_m: float | None = None,
    cells: int | None = None,
    cfl: float = DEFAULT_CFL,
    window: str | tuple[float, float] = "auto",
    closure: int | None = None,
    capacity_drop: bool | None = None,
    diagram: FundamentalDiagram | None = None,
    records: int = DEFAULT_RECORDS,
) -> Simulation:
    """Simulate the approach to the closure with the LWR model (:func:`solve`).

    The approach is ``length_m`` metres of road with the site's lanes
    upstream of the closure, modelled per lane on the engine's fundamental
    diagram (or ``diagram``). Its downstream end is the closure: its receiving
    capacity per approach lane is the engine's capacity (all open lanes) over
    the approach's lanes, changing with the closure schedule and the capacity
    model. Its upstream end takes the engine's demand, fed in ``length/v0``
    seconds early (the free travel time of the stretch, ``v0`` the speed at
    zero density) so that traffic reaches the closure when the engine says it
    does; the road starts in the free-flow state of that demand. A queue
    longer than the stretch waits at the entrance as a point queue and is
    reported.

    ``window``: ``"auto"`` (the closures and their queues, or only closure
    number ``closure``, 0-based; :func:`focus_window`), ``"all"`` (the whole
    demand period), or ``(start, end)`` in seconds from the demand start.
    ``capacity_drop`` ``None`` follows the plan's option (see :func:`solve` for
    the rule; plain LWR has none). ``cells`` defaults to one per
    ``max(length/100, 20 m)``; the time step is the longest whole division of
    the window with Courant number at most ``cfl``.

    Raises ValueError for a malformed argument.
    """
    run = _as_run(source)
    plan = run.plan
    lanes = int(plan.site.lanes)
    fd = run.model.diagram if diagram is None else diagram
    total = float(run.t[-1])
    if window == "auto":
        a, b = focus_window(run, closure)
    elif window == "all":
        a, b = 0.0, total
    elif isinstance(window, str):
        raise ValueError(f"window must be 'auto', 'all' or (start, end) seconds, not {window!r}")
    else:
        a, b = (float(v) for v in window)
        if not (0.0 <= a < b <= total + 1e-9):
            raise ValueError(
                f"window ({a}, {b}) s must lie within the demand period, 0 to {total} s"
            )
    if length_m is None:
        length_m = default_length(run, (a, b))
    if not (math.isfinite(length_m) and length_m > 0):
        raise ValueError(f"length_m must be a positive length in metres, got {length_m!r}")
    if cells is None:
        dx_target = max(length_m / DEFAULT_CELLS_PER_LENGTH, MIN_DEFAULT_DX)
        cells = max(10, math.ceil(length_m / dx_target))
    if int(cells) != cells or cells < 2:
        raise ValueError(f"cells must be a whole number, 2 or more, got {cells!r}")
    if not (math.isfinite(cfl) and 0 < cfl <= 1):
        raise ValueError(f"cfl must be above 0 and at most 1, got {cfl!r}")
    cells = int(cells)
    dx = length_m / cells
    steps = max(1, math.ceil((b - a) * max_wave_speed(fd) / (cfl * dx)))
    dt = (b - a) / steps
    v0 = float(fd.speed(0.0))
    shift = length_m / v0
    levels = a + np.arange(steps + 1, dtype=np.float64) * dt

    ramps = _run_ramps(run)
    mainline = run.demand_veh_h if ramps is None else ramps.section[-1]
    cum_demand = _cumulative(run.t, mainline / HOUR)
    inflow = _step_average(run.t, cum_demand, levels + shift) / lanes
    pre = _step_average(run.t, _cumulative(run.t, run.prebreakdown_veh_h / HOUR), levels) / lanes
    dis = _step_average(run.t, _cumulative(run.t, run.discharge_veh_h / HOUR), levels) / lanes
    drop = plan.options.capacity_drop if capacity_drop is None else bool(capacity_drop)

    x = (np.arange(cells, dtype=np.float64) + 0.5) * dx
    reach = a + (length_m - x) / v0  # when the traffic now in each cell reaches the closure
    if ramps is None:
        q0 = np.minimum(_rate_at(run.t, run.demand_veh_h, reach) / HOUR / lanes, fd.capacity)
        k0 = np.asarray(fd.density_free(q0), dtype=np.float64)
        nodes: dict = {}
    else:
        k0, nodes = _ramp_inputs(run, ramps, fd, lanes, levels, length_m, dx, v0, reach)

    every = max(1, math.ceil(steps / max(int(records), 1)))
    result = solve(
        fd,
        k0,
        dx=dx,
        dt=dt,
        steps=steps,
        inflow=inflow,
        exit_capacity=pre,
        exit_discharge=dis if drop else None,
        record_every=every,
        track=True,
        **nodes,
    )
    sim = Simulation(run, result, lanes, (a, b), shift, drop, ramps=ramps)
    queued_at_start = float(sim.engine_queue_veh(np.array([a]))[0])
    if queued_at_start > 0:
        sim.warnings.append(
            f"the engine has {queued_at_start:,.0f} vehicles queued when the simulation starts; "
            "it starts from free-flowing traffic, so start the window earlier"
        )
    if sim.spilled:
        sim.warnings.append(
            f"the queue reached the upstream end of the modelled stretch ({length_m:,.0f} m); "
            f"up to {sim.max_entrance_queue_veh:,.0f} vehicles waited there as a point queue; "
            "model a longer stretch to see the whole queue"
        )
    return sim
