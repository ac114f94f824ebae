"""The one place where US customary and metric units meet SI.

The engine works in SI: seconds, metres, vehicles, metres per second, vehicles
per metre. Flows keep the trade's unit, vehicles per hour (``veh/h``), because
every published capacity equation is written in it; inside the queueing core
they are turned into vehicles per second with :data:`HOUR`.

Conversion factors are exact by definition (international foot and mile,
1959 agreement; NIST Special Publication 811, 2008, Appendix B).
"""

from __future__ import annotations

from typing import Literal

__all__ = [
    "DENSITY",
    "FOOT",
    "HOUR",
    "KILOMETRE",
    "KMH",
    "LONG_LENGTH",
    "MILE",
    "MINUTE",
    "MPH",
    "SHORT_LENGTH",
    "SPEED",
    "UNIT_SYSTEMS",
    "UnitSystem",
    "density_to_per_m",
    "kmh_to_mps",
    "long_length_to_m",
    "m_to_long_length",
    "m_to_short_length",
    "mph_to_mps",
    "mps_to_kmh",
    "mps_to_mph",
    "mps_to_speed",
    "per_km_to_per_m",
    "per_m_to_density",
    "per_m_to_per_km",
    "per_m_to_per_mile",
    "per_mile_to_per_m",
    "short_length_to_m",
    "speed_to_mps",
    "unit_label",
]

UnitSystem = Literal["us", "metric"]
UNIT_SYSTEMS: tuple[UnitSystem, ...] = ("us", "metric")

FOOT = 0.3048  # m, exact
MILE = 1609.344  # m, exact
KILOMETRE = 1000.0  # m
HOUR = 3600.0  # s
MINUTE = 60.0  # s
MPH = MILE / HOUR  # m/s per mi/h
KMH = KILOMETRE / HOUR  # m/s per km/h


def mph_to_mps(v: float) -> float:
    """Miles per hour to metres per second."""
    return v * MPH


def mps_to_mph(v: float) -> float:
    """Metres per second to miles per hour."""
    return v / MPH


def kmh_to_mps(v: float) -> float:
    """Kilometres per hour to metres per second."""
    return v * KMH


def mps_to_kmh(v: float) -> float:
    """Metres per second to kilometres per hour."""
    return v / KMH


def per_mile_to_per_m(k: float) -> float:
    """A density in 1/mi (e.g. veh/mi/ln) to 1/m."""
    return k / MILE


def per_m_to_per_mile(k: float) -> float:
    """A density in 1/m to 1/mi."""
    return k * MILE


def per_km_to_per_m(k: float) -> float:
    """A density in 1/km to 1/m."""
    return k / KILOMETRE


def per_m_to_per_km(k: float) -> float:
    """A density in 1/m to 1/km."""
    return k * KILOMETRE


# Per unit system: (name, metres per unit) for long distances, short distances,
# (name, m/s per unit) for speeds, (name, 1/m per unit) for densities.
LONG_LENGTH = {"us": ("mi", MILE), "metric": ("km", KILOMETRE)}
SHORT_LENGTH = {"us": ("ft", FOOT), "metric": ("m", 1.0)}
SPEED = {"us": ("mi/h", MPH), "metric": ("km/h", KMH)}
DENSITY = {"us": ("veh/mi/ln", 1.0 / MILE), "metric": ("veh/km/ln", 1.0 / KILOMETRE)}


def long_length_to_m(x: float, system: UnitSystem) -> float:
    """A long distance (mi or km) in the given system to metres."""
    return x * LONG_LENGTH[system][1]


def m_to_long_length(x: float, system: UnitSystem) -> float:
    """Metres to the long distance unit (mi or km) of the given system."""
    return x / LONG_LENGTH[system][1]


def short_length_to_m(x: float, system: UnitSystem) -> float:
    """A short distance (ft or m) in the given system to metres."""
    return x * SHORT_LENGTH[system][1]


def m_to_short_length(x: float, system: UnitSystem) -> float:
    """Metres to the short distance unit (ft or m) of the given system."""
    return x / SHORT_LENGTH[system][1]


def speed_to_mps(v: float, system: UnitSystem) -> float:
    """A speed in mi/h or km/h to m/s."""
    return v * SPEED[system][1]


def mps_to_speed(v: float, system: UnitSystem) -> float:
    """m/s to mi/h or km/h."""
    return v / SPEED[system][1]


def density_to_per_m(k: float, system: UnitSystem) -> float:
    """A density per mile or per kilometre (per lane) to per metre."""
    return k * DENSITY[system][1]


def per_m_to_density(k: float, system: UnitSystem) -> float:
    """A density per metre to per mile or per kilometre."""
    return k / DENSITY[system][1]


def unit_label(kind: Literal["long", "short", "speed", "density"], system: UnitSystem) -> str:
    """The label shown beside a value of this kind, e.g. ``mi`` or ``km/h``."""
    table = {"long": LONG_LENGTH, "short": SHORT_LENGTH, "speed": SPEED, "density": DENSITY}[kind]
    return table[system][0]
