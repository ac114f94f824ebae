"""Fundamental diagrams (flow-density relations) for the LWR kinematic-wave model.

The LWR model (Lighthill & Whitham 1955; Richards 1956) treats traffic as a
compressible fluid: vehicles are conserved, ``dk/dt + dq/dx = 0``, and the flow
is a fixed function of the density, ``q = Q(k)``, the *fundamental diagram*.
Everything the shockwave analysis and the Godunov / cell-transmission solver
need from that function lives here: ``q(k)``, ``v(k)``, the two densities that
carry a given flow, the characteristic (wave) speed ``dQ/dk`` and the shock
speed between two states.

Units -- SI, per lane, and *not* the same flow unit as the rest of the package
------------------------------------------------------------------------------
* density ``k``: vehicles per metre per lane (veh/m/ln);
* flow ``q``: vehicles per **second** per lane (veh/s/ln) -- elsewhere in
  ``wzq`` flows are kept in veh/h; divide by :data:`wzq.units.HOUR` before
  calling into this module and multiply the result back;
* speeds (free-flow speed, speed cap, wave and shock speeds): metres per
  second, positive downstream (so a queue tail moving upstream has a negative
  shock speed).

Every method accepts a float or anything :func:`numpy.asarray` accepts and
works element-wise; the result has the input's shape (an ``np.float64`` for a
scalar input, an ``ndarray`` otherwise; two-argument methods broadcast).

Densities outside ``[0, k_j]`` and flows outside ``[0, capacity]`` raise
:class:`ValueError` (so does NaN). Values outside by no more than
:data:`ROUNDING_TOLERANCE` times the bound are taken as rounding and clipped,
so a numerical solver that lands a hair above jam density does not fail.

References (bibliographic details from memory):

* Greenshields, B. D. (1935). A study of traffic capacity. *Proceedings of the
  Highway Research Board* 14, 448-477.
* Lighthill, M. J. & Whitham, G. B. (1955). On kinematic waves II. A theory of
  traffic flow on long crowded roads. *Proc. R. Soc. Lond. A* 229, 317-345.
* Richards, P. I. (1956). Shock waves on the highway. *Operations Research*
  4(1), 42-51.
* Newell, G. F. (1993). A simplified theory of kinematic waves in highway
  traffic, parts I-III. *Transportation Research B* 27(4), 281-313.
* Daganzo, C. F. (1994). The cell transmission model: a dynamic representation
  of highway traffic consistent with the hydrodynamic theory. *Transportation
  Research B* 28(4), 269-287; and (1995) part II, *TR-B* 29(2), 79-93
  (sending and receiving functions).
* Lebacque, J. P. (1996). The Godunov scheme and what it means for first order
  traffic flow models. *Proc. 13th ISTTT*, 647-677 (demand and supply).
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from collections.abc import Callable
from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt

__all__ = [
    "DIAGRAMS",
    "PIECEWISE_LINEAR",
    "ROUNDING_TOLERANCE",
    "CappedGreenshields",
    "FundamentalDiagram",
    "Greenshields",
    "Trapezoidal",
    "Triangular",
    "make_diagram",
]

FloatArray = npt.NDArray[np.float64]
FloatOrArray = np.float64 | FloatArray

ROUNDING_TOLERANCE: Final = 1e-9
"""Relative overshoot of a density or flow bound that is treated as rounding."""

GREENSHIELDS_CAPACITY_FACTOR: Final = 0.25
"""Greenshields capacity ``q_max = v_f k_j / 4`` (Greenshields 1935)."""

GREENSHIELDS_CRITICAL_FRACTION: Final = 0.5
"""Greenshields critical density ``k_c = k_j / 2`` (Greenshields 1935)."""

DIAGRAMS: Final = ("greenshields", "triangular", "capped-greenshields")
"""Names accepted by :func:`make_diagram`."""


def _result(x: FloatArray) -> FloatOrArray:
    """Return a 0-d array as an ``np.float64`` scalar, any other array unchanged."""
    return x[()] if x.ndim == 0 else x


def _require_positive(name: str, value: float) -> None:
    """Raise ValueError unless ``value`` is a finite real number above zero."""
    try:
        ok = not isinstance(value, bool) and math.isfinite(value) and value > 0
    except TypeError:
        ok = False
    if not ok:
        raise ValueError(f"{name} must be a finite number above zero, got {value!r}")


def _within(x: npt.ArrayLike, upper: float, what: str, unit: str, upper_name: str) -> FloatArray:
    """Check ``0 <= x <= upper`` element-wise (NaN fails) and clip rounding overshoot."""
    a = np.asarray(x, dtype=np.float64)
    tol = ROUNDING_TOLERANCE * upper
    ok = (a >= -tol) & (a <= upper + tol)
    if not np.all(ok):
        bad = float(np.ravel(a)[~np.ravel(ok)][0])
        raise ValueError(
            f"{what} {bad!r} {unit} is outside the range 0 to {upper_name} = {upper!r} {unit}"
        )
    return np.clip(a, 0.0, upper)


def _two_piece_chord(
    k1: FloatArray,
    k2: FloatArray,
    kink: float,
    left: Callable[[FloatArray, FloatArray], FloatArray],
    right: Callable[[FloatArray, FloatArray], FloatArray],
) -> FloatArray:
    """Chord slope ``(Q(k2) - Q(k1)) / (k2 - k1)`` of a diagram with one kink.

    ``left(a, b)`` and ``right(a, b)`` are the exact chord slopes of the pieces
    below and above ``kink`` (each must also give the tangent slope when
    ``a == b``). A chord that straddles the kink is the length-weighted mean of
    the chords from each end to the kink, which is exact and avoids the loss of
    precision of subtracting two nearly equal flows.
    """
    lo = np.minimum(k1, k2)
    hi = np.maximum(k1, k2)
    k_kink = np.full_like(lo, kink)
    span = hi - lo
    straddle = (lo < kink) & (hi > kink)
    mixed = ((kink - lo) * left(lo, k_kink) + (hi - kink) * right(k_kink, hi)) / np.where(
        straddle, span, 1.0
    )
    return np.where(hi <= kink, left(lo, hi), np.where(lo >= kink, right(lo, hi), mixed))


class FundamentalDiagram(ABC):
    """A concave flow-density relation ``q = Q(k)`` of the LWR model, per lane, in SI.

    Attributes every diagram provides (plain attributes or read-only properties):

    * ``free_speed`` -- free-flow speed ``v_f`` (m/s) of the speed-density
      relation (the speed at ``k = 0`` unless a speed cap below it applies);
    * ``jam_density`` -- jam density ``k_j`` (veh/m/ln), where ``q = 0``;
    * ``capacity`` -- the maximum flow ``q_max`` (veh/s/ln);
    * ``critical_density`` -- the density at which ``Q(k) = q_max`` (veh/m/ln).

    Densities up to ``critical_density`` are the uncongested (free) branch,
    those above it the congested branch. Subclasses supply the formulas through
    the underscored methods, which receive already validated numpy arrays.
    """

    free_speed: float
    jam_density: float
    capacity: float
    critical_density: float

    # -- formulas supplied by each diagram (validated float arrays in, arrays out) --

    @abstractmethod
    def _flow(self, k: FloatArray) -> FloatArray:
        """``Q(k)`` for ``0 <= k <= k_j``."""

    @abstractmethod
    def _speed(self, k: FloatArray) -> FloatArray:
        """``Q(k) / k``, with its limit as ``k -> 0`` at ``k = 0``."""

    @abstractmethod
    def _wave_speed(self, k: FloatArray) -> FloatArray:
        """``dQ/dk``; at a kink the lower-density (left-hand) slope."""

    @abstractmethod
    def _density_free(self, q: FloatArray) -> FloatArray:
        """The density ``<= critical_density`` with ``Q(k) = q``."""

    @abstractmethod
    def _density_congested(self, q: FloatArray) -> FloatArray:
        """The density ``>= critical_density`` with ``Q(k) = q``."""

    def _shock_speed(self, k1: FloatArray, k2: FloatArray) -> FloatArray:
        """Chord slope of ``Q`` (generic form; subclasses give exact closed forms)."""
        dk = k2 - k1
        same = dk == 0.0
        chord = (self._flow(k2) - self._flow(k1)) / np.where(same, 1.0, dk)
        return np.where(same, self._wave_speed(k1), chord)

    # -- public, validated interface --

    def _densities(self, k: npt.ArrayLike) -> FloatArray:
        return _within(k, self.jam_density, "density", "veh/m/ln", "jam density")

    def _flows(self, q: npt.ArrayLike) -> FloatArray:
        return _within(q, self.capacity, "flow", "veh/s/ln", "capacity")

    def flow(self, k: npt.ArrayLike) -> FloatOrArray:
        """Flow ``q = Q(k)`` in veh/s/ln for density ``k`` in veh/m/ln.

        The result is clipped to ``[0, capacity]`` so that rounding never
        reports a flow above capacity.
        """
        kk = self._densities(k)
        return _result(np.clip(self._flow(kk), 0.0, self.capacity))

    def speed(self, k: npt.ArrayLike) -> FloatOrArray:
        """Space-mean speed ``v = Q(k)/k`` in m/s, 0 at ``k_j``.

        At ``k = 0`` it is the limit of ``Q(k)/k``: the free-flow speed, or the
        speed cap of :class:`CappedGreenshields` when that is lower. No 0/0 occurs.
        """
        return _result(self._speed(self._densities(k)))

    def wave_speed(self, k: npt.ArrayLike) -> FloatOrArray:
        """Characteristic speed ``dQ/dk`` in m/s (Lighthill & Whitham 1955).

        Positive on the free branch, negative on the congested branch. Where the
        diagram has a kink the lower-density (left-hand) slope is returned.
        """
        return _result(self._wave_speed(self._densities(k)))

    def shock_speed(self, k1: npt.ArrayLike, k2: npt.ArrayLike) -> FloatOrArray:
        """Speed in m/s of a shock between states ``k1`` and ``k2``.

        Rankine-Hugoniot condition of the LWR model (Lighthill & Whitham 1955;
        Richards 1956): ``w = (Q(k2) - Q(k1)) / (k2 - k1)``, symmetric in the two
        states; when ``k1 == k2`` it is the limit, ``wave_speed(k1)``.
        """
        a, b = np.broadcast_arrays(self._densities(k1), self._densities(k2))
        return _result(np.asarray(self._shock_speed(a, b), dtype=np.float64))

    def density_free(self, q: npt.ArrayLike) -> FloatOrArray:
        """Uncongested-branch density (veh/m/ln) carrying flow ``q`` (veh/s/ln).

        Raises ValueError for a flow below zero or above capacity.
        """
        kk = self._density_free(self._flows(q))
        return _result(np.clip(kk, 0.0, self.critical_density))

    def density_congested(self, q: npt.ArrayLike) -> FloatOrArray:
        """Congested-branch density (veh/m/ln) carrying flow ``q`` (veh/s/ln).

        Raises ValueError for a flow below zero or above capacity.
        """
        kk = self._density_congested(self._flows(q))
        return _result(np.clip(kk, self.critical_density, self.jam_density))

    def demand(self, k: npt.ArrayLike) -> FloatOrArray:
        """Sending function ``Q(min(k, k_c))`` in veh/s/ln.

        The most a cell at density ``k`` can send downstream: its own flow when
        uncongested, capacity when congested (Daganzo 1994, 1995; Lebacque 1996).
        Non-decreasing in ``k``.
        """
        kk = self._densities(k)
        # capacity exactly from the critical density on, so that rounding in the
        # two branches can never make the function dip by one unit in the last place
        flow = np.clip(self._flow(np.minimum(kk, self.critical_density)), 0.0, self.capacity)
        return _result(np.where(kk >= self.critical_density, self.capacity, flow))

    def supply(self, k: npt.ArrayLike) -> FloatOrArray:
        """Receiving function ``Q(max(k, k_c))`` in veh/s/ln.

        The most a cell at density ``k`` can accept from upstream: capacity when
        uncongested, its own flow when congested (Daganzo 1994, 1995; Lebacque
        1996). Non-increasing in ``k``.
        """
        kk = self._densities(k)
        flow = np.clip(self._flow(np.maximum(kk, self.critical_density)), 0.0, self.capacity)
        return _result(np.where(kk <= self.critical_density, self.capacity, flow))


def _greenshields_roots(
    q: FloatArray, free_speed: float, jam_density: float
) -> tuple[FloatArray, FloatArray]:
    """Both roots of ``v_f k (1 - k/k_j) = q`` (free root, congested root).

    ``k = k_j/2 (1 -+ s)`` with ``s = sqrt(1 - q/q_max)``, ``q_max = v_f k_j/4``.
    The free root is written ``2q / (v_f (1 + s))`` (product of the roots is
    ``k_j q / v_f``), which avoids cancellation at small flows.
    """
    q_max = GREENSHIELDS_CAPACITY_FACTOR * free_speed * jam_density
    s = np.sqrt(np.maximum(0.0, 1.0 - q / q_max))
    free = 2.0 * q / (free_speed * (1.0 + s))
    congested = GREENSHIELDS_CRITICAL_FRACTION * jam_density * (1.0 + s)
    return free, congested


@dataclass(frozen=True)
class Greenshields(FundamentalDiagram):
    """Greenshields (1935) parabolic diagram: speed falls linearly with density.

    * ``v = v_f (1 - k/k_j)``, ``q = v_f k (1 - k/k_j)``;
    * capacity ``q_max = v_f k_j / 4`` at ``k_c = k_j / 2``;
    * characteristic speed ``dq/dk = v_f (1 - 2k/k_j)``;
    * shock speed ``(q2 - q1)/(k2 - k1) = v_f (1 - (k1 + k2)/k_j)``.

    Parameters: ``free_speed`` (m/s), ``jam_density`` (veh/m/ln).
    """

    free_speed: float
    jam_density: float

    def __post_init__(self) -> None:
        _require_positive("free_speed", self.free_speed)
        _require_positive("jam_density", self.jam_density)

    @property
    def capacity(self) -> float:  # type: ignore[override]
        """``v_f k_j / 4`` in veh/s/ln."""
        return GREENSHIELDS_CAPACITY_FACTOR * self.free_speed * self.jam_density

    @property
    def critical_density(self) -> float:  # type: ignore[override]
        """``k_j / 2`` in veh/m/ln."""
        return GREENSHIELDS_CRITICAL_FRACTION * self.jam_density

    def _flow(self, k: FloatArray) -> FloatArray:
        return self.free_speed * k * (1.0 - k / self.jam_density)

    def _speed(self, k: FloatArray) -> FloatArray:
        return self.free_speed * (1.0 - k / self.jam_density)

    def _wave_speed(self, k: FloatArray) -> FloatArray:
        return self.free_speed * (1.0 - 2.0 * k / self.jam_density)

    def _shock_speed(self, k1: FloatArray, k2: FloatArray) -> FloatArray:
        return self.free_speed * (1.0 - (k1 + k2) / self.jam_density)

    def _density_free(self, q: FloatArray) -> FloatArray:
        return _greenshields_roots(q, self.free_speed, self.jam_density)[0]

    def _density_congested(self, q: FloatArray) -> FloatArray:
        return _greenshields_roots(q, self.free_speed, self.jam_density)[1]


@dataclass(frozen=True)
class Triangular(FundamentalDiagram):
    """Triangular diagram (Newell 1993; Daganzo 1994).

    * ``q = min(v_f k, w (k_j - k))``;
    * critical density ``k_c = capacity / v_f``;
    * backward wave speed ``w = capacity / (k_j - k_c)`` (a positive number; the
      congested-branch waves travel upstream at ``-w``);
    * ``dq/dk = v_f`` for ``k <= k_c`` and ``-w`` for ``k > k_c`` (at ``k_c``
      itself the free-flow slope ``v_f`` is returned);
    * shock speed ``v_f`` between two free states, ``-w`` between two congested
      states, the chord otherwise.

    Parameters: ``free_speed`` (m/s), ``capacity`` (veh/s/ln), ``jam_density``
    (veh/m/ln). ``capacity`` must be below ``v_f k_j``, otherwise ``k_c`` would
    not lie below ``k_j``.
    """

    free_speed: float
    capacity: float
    jam_density: float

    def __post_init__(self) -> None:
        _require_positive("free_speed", self.free_speed)
        _require_positive("capacity", self.capacity)
        _require_positive("jam_density", self.jam_density)
        if self.capacity >= self.free_speed * self.jam_density:
            raise ValueError(
                f"capacity {self.capacity!r} veh/s/ln must be below free_speed x jam_density "
                f"= {self.free_speed * self.jam_density!r} veh/s/ln, otherwise the critical "
                "density would not lie below the jam density"
            )

    @property
    def critical_density(self) -> float:  # type: ignore[override]
        """``k_c = capacity / v_f`` in veh/m/ln."""
        return self.capacity / self.free_speed

    @property
    def backward_wave_speed(self) -> float:
        """``w = capacity / (k_j - k_c)`` in m/s, a positive number."""
        return self.capacity / (self.jam_density - self.critical_density)

    def _flow(self, k: FloatArray) -> FloatArray:
        return np.minimum(self.free_speed * k, self.backward_wave_speed * (self.jam_density - k))

    def _speed(self, k: FloatArray) -> FloatArray:
        k_c = self.critical_density
        congested = self.backward_wave_speed * (self.jam_density - k) / np.maximum(k, k_c)
        return np.where(k <= k_c, self.free_speed, congested)

    def _wave_speed(self, k: FloatArray) -> FloatArray:
        return np.where(k <= self.critical_density, self.free_speed, -self.backward_wave_speed)

    def _shock_speed(self, k1: FloatArray, k2: FloatArray) -> FloatArray:
        v_f, w = self.free_speed, self.backward_wave_speed
        return _two_piece_chord(
            k1,
            k2,
            self.critical_density,
            lambda a, b: np.full_like(a, v_f),
            lambda a, b: np.full_like(a, -w),
        )

    def _density_free(self, q: FloatArray) -> FloatArray:
        return q / self.free_speed

    def _density_congested(self, q: FloatArray) -> FloatArray:
        return self.jam_density - q / self.backward_wave_speed


@dataclass(frozen=True)
class Trapezoidal(FundamentalDiagram):
    """Triangular diagram with its congested branch set on its own: a trapezoid.

    ``q = min(v_f k, C, w (k_j - k))`` (the trapezoidal diagram of the cell
    transmission model, Daganzo 1994): the free branch at the free-flow speed
    up to ``k_1 = C / v_f``, a plateau at capacity ``C`` up to the density at
    capacity of the congested branch ``k_c = k_j - C / w``, and the congested
    branch from ``(k_c, C)`` to ``(k_j, 0)`` with backward wave speed ``w``.
    This is how a site's calibrated wave speed, or the HCM basic-segment
    density at capacity (45 pc/mi/ln, HCM 7th ed. ch. 12), is used without
    changing the free-flow speed, the capacity or the jam density. With
    ``k_c = k_1`` it is the :class:`Triangular` diagram.

    * ``critical_density`` is ``k_c``, where the congested branch starts;
    * ``dq/dk`` is ``v_f`` below ``k_1``, 0 on the plateau, ``-w`` above ``k_c``
      (the left-hand slope at a kink);
    * the two terms of Newell's simplified method (Newell 1993) carry over
      unchanged: free-flow waves at ``v_f``, congested waves at ``-w`` holding
      ``k_j`` vehicles per metre, because every queued state lies on the
      congested branch.

    Parameters: ``free_speed`` (m/s), ``capacity`` (veh/s/ln), ``jam_density``
    (veh/m/ln), ``backward_wave_speed`` ``w`` (m/s, positive; a field here, a
    derived property of :class:`Triangular`). The congested branch must
    meet the capacity at or beyond the free branch (``C / v_f <= k_j - C / w``),
    otherwise the road could not carry its capacity.
    """

    free_speed: float
    capacity: float
    jam_density: float
    backward_wave_speed: float

    def __post_init__(self) -> None:
        for name in ("free_speed", "capacity", "jam_density", "backward_wave_speed"):
            _require_positive(name, getattr(self, name))
        k_1 = self.capacity / self.free_speed
        k_c = self.jam_density - self.capacity / self.backward_wave_speed
        if k_c < k_1 * (1.0 - ROUNDING_TOLERANCE):
            raise ValueError(
                f"the congested branch (wave speed {self.backward_wave_speed!r} m/s) reaches the "
                f"capacity at {k_c!r} veh/m/ln, below the free branch's {k_1!r} veh/m/ln; "
                "the road could not carry its capacity -- use a faster wave or a higher "
                "jam density"
            )

    @property
    def free_capacity_density(self) -> float:
        """``k_1 = C / v_f`` (veh/m/ln): where the free branch reaches capacity."""
        return self.capacity / self.free_speed

    @property
    def critical_density(self) -> float:  # type: ignore[override]
        """``k_c = k_j - C / w`` (veh/m/ln): the density at capacity of the congested branch."""
        return max(
            self.jam_density - self.capacity / self.backward_wave_speed, self.free_capacity_density
        )

    def _flow(self, k: FloatArray) -> FloatArray:
        return np.minimum(
            np.minimum(self.free_speed * k, self.capacity),
            self.backward_wave_speed * (self.jam_density - k),
        )

    def _speed(self, k: FloatArray) -> FloatArray:
        cap = np.minimum(self.capacity, self.backward_wave_speed * (self.jam_density - k))
        return np.where(
            k <= self.free_capacity_density,
            self.free_speed,
            cap / np.maximum(k, self.free_capacity_density),
        )

    def _wave_speed(self, k: FloatArray) -> FloatArray:
        return np.where(
            k <= self.free_capacity_density,
            self.free_speed,
            np.where(k <= self.critical_density, 0.0, -self.backward_wave_speed),
        )

    def _density_free(self, q: FloatArray) -> FloatArray:
        return q / self.free_speed

    def _density_congested(self, q: FloatArray) -> FloatArray:
        return self.jam_density - q / self.backward_wave_speed


PIECEWISE_LINEAR: Final = (Triangular, Trapezoidal)
"""Diagrams with a straight congested branch: Newell's simplified method applies."""


@dataclass(frozen=True)
class CappedGreenshields(FundamentalDiagram):
    """Greenshields (1935) diagram with the speed held below a speed limit.

    ``v = min(u, v_f (1 - k/k_j))`` and ``q = k v``, where ``u`` is
    ``speed_cap`` (e.g. a work-zone speed limit below the free-flow speed).
    This combination is our own construction from the Greenshields line; the
    derivation follows.

    Let ``u' = min(u, v_f)`` (a cap at or above ``v_f`` changes nothing). The two
    speeds are equal at the *kink density* ``k_b = k_j (1 - u'/v_f)``. Below
    ``k_b`` drivers keep to the cap, ``q = u' k`` (a straight line); from ``k_b``
    to ``k_j`` the Greenshields parabola ``q = v_f k (1 - k/k_j)`` applies. At
    ``k_b`` both give ``u' k_b``, so ``q`` is continuous, and the slope drops
    from ``u'`` to ``v_f (1 - 2k_b/k_j) = 2u' - v_f <= u'``, so ``q`` stays
    concave.

    * ``u' >= v_f/2`` (so ``k_b <= k_j/2``): the parabola's peak lies in its own
      range; capacity is unchanged, ``v_f k_j / 4`` at ``k_c = k_j/2``.
    * ``u' < v_f/2`` (so ``k_b > k_j/2``): the parabola is already falling at
      ``k_b``; the peak moves to the kink, ``k_c = k_b`` and capacity is
      ``u' k_b``.

    Inverse branches for a flow ``0 <= q <= capacity``: the free density is
    ``q/u'`` when ``q <= u' k_b``, else the free Greenshields root
    ``k_j/2 (1 - sqrt(1 - q/q_G))`` with ``q_G = v_f k_j/4`` (this case only
    occurs when ``k_b < k_j/2``); the congested density is always the congested
    Greenshields root ``k_j/2 (1 + sqrt(1 - q/q_G))``.

    Wave speed: ``u'`` for ``k <= k_b`` (the left-hand slope at the kink),
    ``v_f (1 - 2k/k_j)`` above. Shock speed: ``u'`` between two states at or
    below ``k_b`` (such a light-traffic profile moves at the cap without
    changing shape), ``v_f (1 - (k1 + k2)/k_j)`` between two states at or above
    ``k_b``, and the chord otherwise.

    Parameters: ``free_speed`` (m/s), ``jam_density`` (veh/m/ln),
    ``speed_cap`` (m/s).
    """

    free_speed: float
    jam_density: float
    speed_cap: float

    def __post_init__(self) -> None:
        _require_positive("free_speed", self.free_speed)
        _require_positive("jam_density", self.jam_density)
        _require_positive("speed_cap", self.speed_cap)

    @property
    def effective_cap(self) -> float:
        """``min(speed_cap, free_speed)`` in m/s, the cap that actually binds."""
        return min(self.speed_cap, self.free_speed)

    @property
    def kink_density(self) -> float:
        """``k_b = k_j (1 - u'/v_f)`` in veh/m/ln, where the cap stops binding."""
        return self.jam_density * (1.0 - self.effective_cap / self.free_speed)

    @property
    def critical_density(self) -> float:  # type: ignore[override]
        """``max(k_b, k_j/2)`` in veh/m/ln."""
        return max(self.kink_density, GREENSHIELDS_CRITICAL_FRACTION * self.jam_density)

    @property
    def capacity(self) -> float:  # type: ignore[override]
        """``v_f k_j/4`` when ``u' >= v_f/2``, else ``u' k_b`` (veh/s/ln)."""
        if self.kink_density <= GREENSHIELDS_CRITICAL_FRACTION * self.jam_density:
            return GREENSHIELDS_CAPACITY_FACTOR * self.free_speed * self.jam_density
        return self.effective_cap * self.kink_density

    def _flow(self, k: FloatArray) -> FloatArray:
        return k * self._speed(k)

    def _speed(self, k: FloatArray) -> FloatArray:
        return np.minimum(self.effective_cap, self.free_speed * (1.0 - k / self.jam_density))

    def _wave_speed(self, k: FloatArray) -> FloatArray:
        parabola = self.free_speed * (1.0 - 2.0 * k / self.jam_density)
        return np.where(k <= self.kink_density, self.effective_cap, parabola)

    def _shock_speed(self, k1: FloatArray, k2: FloatArray) -> FloatArray:
        u, v_f, k_j = self.effective_cap, self.free_speed, self.jam_density
        return _two_piece_chord(
            k1,
            k2,
            self.kink_density,
            lambda a, b: np.full_like(a, u),
            lambda a, b: v_f * (1.0 - (a + b) / k_j),
        )

    def _density_free(self, q: FloatArray) -> FloatArray:
        u, k_b = self.effective_cap, self.kink_density
        parabola = _greenshields_roots(q, self.free_speed, self.jam_density)[0]
        return np.where(q <= u * k_b, q / u, np.maximum(parabola, k_b))

    def _density_congested(self, q: FloatArray) -> FloatArray:
        parabola = _greenshields_roots(q, self.free_speed, self.jam_density)[1]
        return np.maximum(parabola, self.kink_density)


def make_diagram(
    name: str,
    *,
    free_speed: float,
    jam_density: float,
    capacity: float | None = None,
    speed_cap: float | None = None,
) -> FundamentalDiagram:
    """Build a fundamental diagram by name (one of :data:`DIAGRAMS`), in SI per lane.

    * ``"greenshields"`` -- :class:`Greenshields`; capacity follows from
      ``v_f k_j / 4`` and must not be given;
    * ``"triangular"`` -- :class:`Triangular`; needs ``capacity`` (veh/s/ln);
    * ``"capped-greenshields"`` -- :class:`CappedGreenshields`; needs
      ``speed_cap`` (m/s).

    A parameter the chosen diagram does not use raises ValueError rather than
    being silently ignored.
    """
    key = name.strip().lower()
    if key not in DIAGRAMS:
        raise ValueError(
            f"unknown fundamental diagram {name!r}; choose one of {', '.join(DIAGRAMS)}"
        )
    if key != "triangular" and capacity is not None:
        raise ValueError(
            f"the {key} diagram takes no capacity (it follows from free speed and jam density); "
            "use 'triangular' to set capacity directly"
        )
    if key != "capped-greenshields" and speed_cap is not None:
        raise ValueError(f"the {key} diagram takes no speed_cap; use 'capped-greenshields'")
    if key == "greenshields":
        return Greenshields(free_speed=free_speed, jam_density=jam_density)
    if key == "triangular":
        if capacity is None:
            raise ValueError("the triangular diagram needs a capacity (veh/s/ln)")
        return Triangular(free_speed=free_speed, capacity=capacity, jam_density=jam_density)
    if speed_cap is None:
        raise ValueError("the capped-greenshields diagram needs a speed_cap (m/s)")
    return CappedGreenshields(free_speed=free_speed, jam_density=jam_density, speed_cap=speed_cap)
