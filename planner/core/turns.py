"""Turn physics for practice briefings.

Implements the level, coordinated turn relations of the FAA Pilot's Handbook of
Aeronautical Knowledge (FAA-H-8083-25, "Aerodynamics of flight", load factors
in turns) and the FAA Instrument Flying Handbook (FAA-H-8083-15, standard-rate
turns):

* load factor ``n = 1 / cos(bank)``; stall speed rises with ``sqrt(n)``;
* rate of turn ``omega = g * tan(bank) / V``; radius ``R = V**2 / (g * tan(bank))``;
* standard rate (3 degrees per second) needs ``bank = atan(V_kt / 364)``; the
  FAA rule of thumb is 15 % of the true airspeed, another common rule is
  ``TAS / 10 + 7`` (common practice);
* a bank that creeps in below the vestibular detection threshold (about
  1.5 degrees per second; Benson et al. 1989, Aviat Space Environ Med 60:205)
  goes unnoticed: the time to reach a given bank is ``bank / rate``.

Units: angles in degrees, speeds in knots of true airspeed, radius in feet,
rates in degrees per second, times in seconds. Nothing here reads a clock.
"""

from __future__ import annotations

import math

G_FT_S2 = 32.174  # standard gravity, ft/s^2
FT_S_PER_KT = 6076.115 / 3600.0  # one international nautical mile per hour in ft/s
STANDARD_RATE_DEG_S = 3.0  # FAA Instrument Flying Handbook: 360 degrees in 2 minutes
VESTIBULAR_THRESHOLD_DEG_S = 1.5  # Benson et al. 1989 (yaw, mean threshold)


def _check_bank(bank_deg: float) -> float:
    if not 0.0 <= bank_deg < 90.0:
        raise ValueError(f"bank angle must be at least 0 and below 90 degrees, got {bank_deg!r}")
    return math.radians(bank_deg)


def _check_speed(tas_kt: float) -> float:
    if not tas_kt > 0:
        raise ValueError(f"true airspeed must be positive (knots), got {tas_kt!r}")
    return tas_kt * FT_S_PER_KT


def load_factor(bank_deg: float) -> float:
    """Load factor (g) in a level coordinated turn at ``bank_deg``: 1 / cos(bank)."""
    return 1.0 / math.cos(_check_bank(bank_deg))


def stall_speed_factor(bank_deg: float) -> float:
    """Stall speed in the turn divided by the wings-level stall speed: sqrt(load factor)."""
    return math.sqrt(load_factor(bank_deg))


def stall_speed_increase_percent(bank_deg: float) -> float:
    """Stall-speed increase in percent at ``bank_deg`` (60 degrees: about 41 %)."""
    return (stall_speed_factor(bank_deg) - 1.0) * 100.0


def rate_of_turn(tas_kt: float, bank_deg: float) -> float:
    """Rate of turn in degrees per second: g * tan(bank) / V."""
    v = _check_speed(tas_kt)
    return math.degrees(G_FT_S2 * math.tan(_check_bank(bank_deg)) / v)


def turn_radius_ft(tas_kt: float, bank_deg: float) -> float:
    """Turn radius in feet: V**2 / (g * tan(bank)), with V from knots (about V_kt**2 / (11.29 tan))."""
    v = _check_speed(tas_kt)
    t = math.tan(_check_bank(bank_deg))
    if t == 0.0:
        return math.inf
    return v * v / (G_FT_S2 * t)


def standard_rate_bank(tas_kt: float) -> float:
    """Bank angle in degrees for a standard-rate (3 deg/s) turn: atan(V_kt / 364)."""
    v = _check_speed(tas_kt)
    omega = math.radians(STANDARD_RATE_DEG_S)
    return math.degrees(math.atan(omega * v / G_FT_S2))


def standard_rate_bank_fifteen_percent(tas_kt: float) -> float:
    """FAA rule of thumb: standard-rate bank is about 15 % of the true airspeed."""
    _check_speed(tas_kt)
    return 0.15 * tas_kt


def standard_rate_bank_tenth_plus_seven(tas_kt: float) -> float:
    """Common rule of thumb (no single source): standard-rate bank about TAS / 10 + 7."""
    _check_speed(tas_kt)
    return tas_kt / 10.0 + 7.0


def drift_seconds(rate_deg_s: float, to_bank_deg: float = 30.0, from_bank_deg: float = 0.0) -> float:
    """Seconds for a steady bank drift at ``rate_deg_s`` to go from ``from_bank_deg`` to ``to_bank_deg``.

    0.5 deg/s from wings level reaches 30 degrees in 60 s. Rates below
    ``VESTIBULAR_THRESHOLD_DEG_S`` are not felt, so the whole drift may go
    unnoticed without an instrument cross-check.
    """
    if not rate_deg_s > 0:
        raise ValueError(f"drift rate must be positive (degrees per second), got {rate_deg_s!r}")
    if to_bank_deg < from_bank_deg:
        raise ValueError("to_bank_deg is below from_bank_deg")
    return (to_bank_deg - from_bank_deg) / rate_deg_s


def is_below_vestibular_threshold(rate_deg_s: float) -> bool:
    """True when a rotation this slow is expected to go unnoticed (below about 1.5 deg/s)."""
    return abs(rate_deg_s) < VESTIBULAR_THRESHOLD_DEG_S
