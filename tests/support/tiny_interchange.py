"""A deliberately tiny stand-in for ``planner.export.interchange`` (tests only).

The real reader/writer lives in another branch; until it is merged, the data
tests use this one through the ``interchange`` fixture. It knows only the
fields the test files use and refuses everything else, so it cannot hide a
mistake by accepting too much. Once the real module is importable the
fixture uses that instead.
"""

from __future__ import annotations

import json
from datetime import date
from typing import Any

from planner.core.logbook import Approach, Entry, Logbook, Pilot


class InterchangeError(ValueError):
    """Bad interchange document (tiny stand-in)."""


_ENTRY_KEYS = {
    "id", "date", "device", "category", "class", "conditions", "approaches", "holds",
    "course_tracking", "instrument_actual_hours", "instrument_simulated_hours", "landings",
    "night_full_stop_landings", "partial_panel_approaches", "unusual_attitude_recoveries",
    "checks", "safety_pilot", "instructor", "remarks", "aircraft", "total_hours",
}
_COUNTS = ("holds", "landings", "night_full_stop_landings", "partial_panel_approaches")


def read_json(text: str) -> Logbook:
    doc = json.loads(text)
    if doc.get("format_version") != 1:
        raise InterchangeError("format_version: must be 1")
    p = doc["pilot"]
    pilot = Pilot(
        name=p["name"],
        home_timezone=p.get("home_timezone"),
        instrument_categories=tuple(p.get("instrument_categories", ())),
        category_classes=tuple(p.get("category_classes", ())),
    )
    entries = []
    seen = set()
    for raw in doc["entries"]:
        eid = raw.get("id", "?")
        unknown = set(raw) - _ENTRY_KEYS
        if unknown:
            raise InterchangeError(f"entry {eid!r}: unknown field {sorted(unknown)[0]!r}")
        if eid in seen:
            raise InterchangeError(f"entry {eid!r}: field 'id': duplicate id")
        seen.add(eid)
        try:
            day = date.fromisoformat(raw["date"])
        except (KeyError, TypeError, ValueError):
            raise InterchangeError(f"entry {eid!r}: field 'date': must be YYYY-MM-DD") from None
        for name in _COUNTS:
            value = raw.get(name, 0)
            if not isinstance(value, int) or value < 0:
                raise InterchangeError(f"entry {eid!r}: field {name!r}: must be a whole number >= 0")
        appr = raw.get("approaches", [])
        ua = raw.get("unusual_attitude_recoveries", {})
        entries.append(
            Entry(
                id=eid,
                date=day,
                device=raw.get("device", "aircraft"),
                category=raw.get("category", "airplane"),
                aircraft_class=raw.get("class"),
                conditions=raw.get("conditions"),
                approaches=tuple(Approach(**a) for a in appr) if isinstance(appr, list) else (),
                unlogged_approaches=appr if isinstance(appr, int) else 0,
                holds=raw.get("holds", 0),
                course_tracking=raw.get("course_tracking", False),
                instrument_actual_hours=raw.get("instrument_actual_hours", 0.0),
                instrument_simulated_hours=raw.get("instrument_simulated_hours", 0.0),
                landings=raw.get("landings", 0),
                night_full_stop_landings=raw.get("night_full_stop_landings", 0),
                partial_panel_approaches=raw.get("partial_panel_approaches", 0),
                ua_nose_high=ua.get("nose_high", 0),
                ua_nose_low=ua.get("nose_low", 0),
                checks=tuple(raw.get("checks", ())),
                safety_pilot=raw.get("safety_pilot"),
                instructor=raw.get("instructor"),
                remarks=raw.get("remarks", ""),
                aircraft=raw.get("aircraft"),
                total_hours=raw.get("total_hours", 0.0),
            )
        )
    return Logbook(pilot=pilot, entries=tuple(entries))


def _approach(a: Approach) -> dict[str, Any]:
    out: dict[str, Any] = {"type": a.type, "airfield": a.airfield}
    if a.runway is not None:
        out["runway"] = a.runway
    if a.to_minimums:
        out["to_minimums"] = True
    if a.coupled:
        out["coupled"] = True
    return out


def write_json(logbook: Logbook) -> str:
    pilot: dict[str, Any] = {"name": logbook.pilot.name}
    if logbook.pilot.home_timezone:
        pilot["home_timezone"] = logbook.pilot.home_timezone
    if logbook.pilot.instrument_categories:
        pilot["instrument_categories"] = list(logbook.pilot.instrument_categories)
    if logbook.pilot.category_classes:
        pilot["category_classes"] = list(logbook.pilot.category_classes)
    entries = []
    for e in sorted(logbook.entries, key=lambda e: (e.date, e.id)):
        out: dict[str, Any] = {"id": e.id, "date": e.date.isoformat()}
        if e.device != "aircraft":
            out["device"] = e.device
        if e.aircraft_class:
            out["class"] = e.aircraft_class
        if e.conditions:
            out["conditions"] = e.conditions
        if e.approaches:
            out["approaches"] = [_approach(a) for a in e.approaches]
        elif e.unlogged_approaches:
            out["approaches"] = e.unlogged_approaches
        for name in _COUNTS:
            if getattr(e, name):
                out[name] = getattr(e, name)
        if e.instrument_simulated_hours:
            out["instrument_simulated_hours"] = e.instrument_simulated_hours
        if e.checks:
            out["checks"] = list(e.checks)
        for name in ("safety_pilot", "instructor", "aircraft"):
            if getattr(e, name):
                out[name] = getattr(e, name)
        if e.total_hours:
            out["total_hours"] = e.total_hours
        if e.remarks:
            out["remarks"] = e.remarks
        entries.append(out)
    return json.dumps({"format_version": 1, "pilot": pilot, "entries": entries}, indent=2, ensure_ascii=False) + "\n"


def read(text: str, filename: str) -> Logbook:
    if not filename.endswith(".json"):
        raise InterchangeError(f"{filename}: only JSON in the tiny test reader")
    return read_json(text)


def write_csv(logbook: Logbook) -> str:  # pragma: no cover - not used by the data tests
    raise InterchangeError("CSV is not in the tiny test stand-in")
