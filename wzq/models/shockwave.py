"""Physical queue length from queued vehicles by shockwave analysis.

The point queue of :mod:`wzq.models.queueing` counts vehicles; the road holds them
upstream of the taper in the congested state. Between the arriving state A
(uncongested branch of the fundamental diagram at the demand flow) and the
queued state Q (congested branch at the discharge flow) the back of the queue
is a shock moving at the Rankine-Hugoniot speed

    u = (q_Q - q_A) / (k_Q - k_A)              (Lighthill & Whitham, 1955)

and, while both states hold, the vehicles stored in a queue of length L over
``n`` lanes are ``N = L * n * (k_Q - k_A)``. Dividing by the jam density alone
would give a queue that is too short, because arriving traffic already has
density ``k_A``.

This single-state relation is exact only while the whole queue is in one
state; it is the standard method of traffic-engineering texts (e.g. Mannering
& Washburn, shockwave analysis chapter; May, *Traffic Flow Fundamentals*, 1990,
ch. 6 — from memory).
"""

from __future__ import annotations

import numpy as np

from wzq.models.flow import FundamentalDiagram
from wzq.units import HOUR

__all__ = [
    "NO_STORAGE",
    "back_of_queue_speed",
    "queue_length",
    "queue_states",
    "stored_density",
]


def queue_states(
    diagram: FundamentalDiagram,
    arrival_veh_h: np.ndarray,
    discharge_veh_h: np.ndarray,
    lanes: int,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Densities (veh/m/ln) and flows (veh/s/ln) of the arriving and queued states.

    Flows above the diagram's capacity are held at capacity: the arriving
    state cannot carry more than the road, and the excess is reported by the
    analysis as a warning, not here.
    """
    cap = float(diagram.capacity)
    q_a = np.minimum(np.asarray(arrival_veh_h) / HOUR / lanes, cap)
    q_q = np.minimum(np.asarray(discharge_veh_h) / HOUR / lanes, cap)
    k_a = np.asarray(diagram.density_free(q_a))  # float64, as the flows
    k_q = np.asarray(diagram.density_congested(q_q))
    return k_a, q_a, k_q, q_q


#: Density difference (veh/m/ln) below which a queue state stores no vehicles: the
#: rounding of two densities of one capacity state (:func:`stored_density`).
NO_STORAGE = 1e-9


def stored_density(
    diagram: FundamentalDiagram,
    arrival_veh_h: np.ndarray,
    discharge_veh_h: np.ndarray,
    lanes: int,
) -> np.ndarray:
    """Vehicles stored per metre of queue: ``n * (k_Q - k_A)`` (veh/m).

    Where the two states coincide (``k_Q - k_A`` at most :data:`NO_STORAGE`: arrivals
    at or above capacity, clipped to it, meeting a queue that discharges at capacity,
    as on an open road with no capacity drop) the approach stores no queue at all:
    the relation's length ``N / 0`` is not a length but traffic that cannot enter
    (Daganzo 2005). The result is then infinite, so :func:`queue_length` gives 0 for
    those vehicles, and the caller must say where they are (the engine counts them as
    held beyond the approach and fails the hour's length check).
    """
    k_a, _, k_q, _ = queue_states(diagram, arrival_veh_h, discharge_veh_h, lanes)
    dk = k_q - k_a
    return np.where(dk > NO_STORAGE, lanes * dk, np.inf)


def queue_length(
    queue_veh: np.ndarray,
    diagram: FundamentalDiagram,
    arrival_veh_h: np.ndarray,
    discharge_veh_h: np.ndarray,
    lanes: int,
) -> np.ndarray:
    """Length (m) of a queue of ``queue_veh`` vehicles: ``N / (n (k_Q - k_A))``."""
    return np.asarray(queue_veh) / stored_density(diagram, arrival_veh_h, discharge_veh_h, lanes)


def back_of_queue_speed(
    diagram: FundamentalDiagram,
    arrival_veh_h: np.ndarray,
    discharge_veh_h: np.ndarray,
    lanes: int,
) -> np.ndarray:
    """Speed of the back of the queue (m/s; negative = travelling upstream)."""
    k_a, q_a, k_q, q_q = queue_states(diagram, arrival_veh_h, discharge_veh_h, lanes)
    return (q_q - q_a) / np.maximum(k_q - k_a, 1e-9)
