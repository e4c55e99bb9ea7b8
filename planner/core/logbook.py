"""The logbook as plain data: what a pilot logged, as the core sees it.

These frozen dataclasses are the common language of the project. The
interchange reader (``planner.export.interchange``) and the database
repository (``planner.db.repository``) produce them; the currency engine,
gap analysis and planner consume them. Nothing here knows about files,
databases or the clock.

Units: hours are decimal hours (flight time is logged to tenths, at most
hundredths); counts are non-negative integers; dates are the local date of
the flight at the pilot's home base or the entry's airfield.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date

DEVICES = ("aircraft", "ffs", "ftd", "atd")
CATEGORIES = ("airplane", "rotorcraft", "powered-lift", "airship", "glider")
CONDITIONS = ("actual", "simulated")
STANDARD_CHECKS = ("ipc", "flight-review", "instrument-practical-test")


@dataclass(frozen=True)
class Approach:
    """One instrument approach as logged.

    ``type`` and ``airfield`` are what 14 CFR 61.51(g) and FAA InFO 15012
    expect to see logged; an approach missing either is kept but not credited
    by the engine. ``conditions`` is None when it is the entry's conditions.
    """

    type: str | None
    airfield: str | None
    runway: str | None = None
    to_minimums: bool = False
    coupled: bool = False  # flown by the autopilot, not by hand
    conditions: str | None = None  # "actual" | "simulated" | None (as the entry)


@dataclass(frozen=True)
class Entry:
    """One logbook entry (a flight or a training-device session)."""

    id: str
    date: date
    device: str = "aircraft"  # one of DEVICES
    category: str = "airplane"  # one of CATEGORIES
    aircraft_class: str | None = None  # e.g. "single-engine-land"
    conditions: str | None = None  # one of CONDITIONS, None if not logged
    approaches: tuple[Approach, ...] = ()
    # "N approaches, type and place not logged" (the interchange integer
    # shorthand). Never combined with a non-empty ``approaches``.
    unlogged_approaches: int = 0
    holds: int = 0
    course_tracking: bool = False
    instrument_actual_hours: float = 0.0
    instrument_simulated_hours: float = 0.0
    landings: int = 0  # all landings, day and night
    night_full_stop_landings: int = 0  # subset of ``landings``
    partial_panel_approaches: int = 0
    ua_nose_high: int = 0  # unusual-attitude recoveries, nose high
    ua_nose_low: int = 0  # unusual-attitude recoveries, nose low
    checks: tuple[str, ...] = ()  # STANDARD_CHECKS or rule-set-defined kinds
    safety_pilot: str | None = None
    instructor: str | None = None
    remarks: str = ""
    # Record-keeping fields the engine does not use.
    aircraft: str | None = None  # registration or device identifier
    route: str | None = None
    start_time: str | None = None  # local "HH:MM"
    end_time: str | None = None  # local "HH:MM"
    total_hours: float = 0.0
    pic_hours: float = 0.0
    dual_received_hours: float = 0.0
    solo_hours: float = 0.0

    @property
    def approach_count(self) -> int:
        """All approaches logged on this entry, creditable or not."""
        return len(self.approaches) + self.unlogged_approaches


@dataclass(frozen=True)
class Pilot:
    """The pilot a logbook belongs to, as far as the engine needs to know."""

    name: str
    home_timezone: str | None = None  # IANA name, e.g. "America/Denver"
    instrument_categories: tuple[str, ...] = ()  # instrument rating held per category
    category_classes: tuple[str, ...] = ()  # e.g. ("airplane/single-engine-land",)


@dataclass(frozen=True)
class Logbook:
    """A pilot and their entries, in no particular order."""

    pilot: Pilot
    entries: tuple[Entry, ...] = field(default_factory=tuple)
