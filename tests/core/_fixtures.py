"""Small builders for core tests: entries and logbooks as plain data."""

from __future__ import annotations

from datetime import date

from planner.core.logbook import Approach, Entry, Logbook, Pilot

D = date.fromisoformat

AIRPLANE_PILOT = Pilot(
    name="Test Pilot",
    home_timezone="America/Denver",
    instrument_categories=("airplane",),
    category_classes=("airplane/single-engine-land",),
)


def approaches(n: int, type_: str = "RNAV (GPS)", airfield: str = "XQA1", **kw) -> tuple[Approach, ...]:
    return tuple(Approach(type=type_, airfield=airfield, **kw) for _ in range(n))


def ifr(id: str, day: str, n: int = 6, holds: int = 1, tracking: bool = True, **kw) -> Entry:
    """An aircraft flight in actual conditions with ``n`` fully logged approaches."""
    kw.setdefault("conditions", "actual")
    kw.setdefault("aircraft_class", "single-engine-land")
    kw.setdefault("instrument_actual_hours", 1.0)
    return Entry(id=id, date=D(day), approaches=approaches(n), holds=holds, course_tracking=tracking, **kw)


def check(id: str, day: str, kind: str = "ipc", **kw) -> Entry:
    kw.setdefault("aircraft_class", "single-engine-land")
    return Entry(id=id, date=D(day), checks=(kind,), **kw)


def landings(id: str, day: str, n: int = 3, night_full_stop: int = 0, **kw) -> Entry:
    kw.setdefault("aircraft_class", "single-engine-land")
    return Entry(id=id, date=D(day), landings=n, night_full_stop_landings=night_full_stop, **kw)


def book(*entries: Entry, pilot: Pilot = AIRPLANE_PILOT) -> Logbook:
    return Logbook(pilot=pilot, entries=tuple(entries))
