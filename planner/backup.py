"""Backup and restore of a whole school as one JSON document (format in ``docs/backup.md``).

``backup_school`` reads a school (airfields it uses, aircraft, training
devices, people with roles, ratings, medical and settings, availability, and
every pilot's logbook in the interchange format v1) into a canonical text:
the same database always gives the same bytes, and backup -> restore into an
empty database -> backup gives byte-identical output. ``restore_school``
checks the whole document first and stages every row in the caller's
session (the caller commits): a bad document or a clash with rows already in
the database raises ``BackupError`` naming the place, and nothing is written.

Password hashes are left out unless asked for (``include_password_hashes``):
a backup file then carries no credential, and restored accounts cannot sign
in until someone sets a password. Entry revision history is not kept; deleted
entries are (as a second interchange document), restored as deleted.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from datetime import UTC, date, datetime
from typing import Any
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from sqlalchemy.orm import Session

from planner import status
from planner.core.logbook import CATEGORIES, Logbook
from planner.db import models, repository
from planner.export import interchange

FORMAT = "planner-school-backup"
FORMAT_VERSION = 1
ROLES = ("admin", "instructor", "pilot")

__all__ = ["FORMAT", "FORMAT_VERSION", "BackupError", "backup_school", "restore_school"]


class BackupError(ValueError):
    """A backup document that cannot be restored; the message names the place (e.g. ``people[2].email``)."""


# ---------------------------------------------------------------- backup


def _instant(value: datetime | None) -> str | None:
    return value.astimezone(UTC).isoformat() if value is not None else None


def _day(value: date | None) -> str | None:
    return value.isoformat() if value is not None else None


def _canonical(value: Any) -> Any:
    """JSON data with every object's keys sorted (a JSON column need not keep key order)."""
    return json.loads(json.dumps(value, sort_keys=True))


def _ident(airfield: models.Airfield | None) -> str | None:
    return airfield.ident if airfield is not None else None


def backup_school(session: Session, school_id: int, *, include_password_hashes: bool = False) -> str:
    """The school as canonical backup JSON (indent 2, trailing newline); ``LookupError`` if there is no such school."""
    school = session.get(models.School, school_id)
    if school is None:
        raise LookupError(f"no school with id {school_id}")
    aircraft = repository.school_aircraft(session, school.id)
    devices = repository.school_devices(session, school.id)
    people = repository.school_people_by_id(session, school.id)
    airfields = {a.ident: a for a in [school.home_airfield, *(x.home_airfield for x in aircraft),
                                      *(p.home_airfield for p in people)] if a is not None}
    refs = {p.id: f"person-{n}" for n, p in enumerate(people, start=1)}

    people_out = []
    for person in people:
        item: dict[str, Any] = {
            "ref": refs[person.id],
            "name": person.name,
            "email": person.email,
            "roles": list(person.roles),
            "certificate_level": person.certificate_level,
            "category_classes": list(person.category_classes or []),
            "instrument_categories": list(person.instrument_categories or []),
            "instructor_ratings": list(person.instructor_ratings or []),
            "medical_class": person.medical_class,
            "medical_expires": _day(person.medical_expires),
            "basicmed_expires": _day(person.basicmed_expires),
            "home_airfield": _ident(person.home_airfield),
            "timezone": person.timezone,
            "rule_sets": list(person.rule_sets or []),
            "practice_targets": _canonical(person.practice_targets or {}),
            "created_at": _instant(person.created_at),
        }
        if include_password_hashes:
            item["password_hash"] = person.password_hash
        rows = repository.all_entries(session, person.id)
        if person.is_pilot or rows:
            current = [r for r in rows if r.deleted_at is None]
            deleted = [r for r in rows if r.deleted_at is not None]
            item["logbook"] = json.loads(interchange.write_json(repository.to_logbook(person, current)))
            if deleted:
                pilot = repository.pilot_to_core(person)
                doc = Logbook(pilot, tuple(repository.entry_to_core(r) for r in deleted))
                item["deleted_entries"] = {
                    "logbook": json.loads(interchange.write_json(doc)),
                    "deleted_at": {r.external_id: _instant(r.deleted_at) for r in sorted(deleted, key=lambda r: r.external_id)},
                }
        people_out.append(item)

    subjects = {
        "person": refs,
        "aircraft": {a.id: a.registration for a in aircraft},
        "device": {d.id: d.identifier for d in devices},
    }
    windows = []
    for w in repository.school_availability(session, school.id):
        kind, key = next((k, getattr(w, f"{k}_id")) for k in ("person", "aircraft", "device") if getattr(w, f"{k}_id") is not None)
        windows.append({kind: subjects[kind][key], "starts_at": _instant(w.starts_at), "ends_at": _instant(w.ends_at),
                        "timezone": w.timezone, "note": w.note or ""})
    order = {"person": 0, "aircraft": 1, "device": 2}
    windows.sort(key=lambda w: (min(order[k] for k in w if k in order), json.dumps(w, sort_keys=True)))

    doc = {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "school": {"slug": school.slug, "name": school.name, "home_airfield": _ident(school.home_airfield)},
        "airfields": [
            {"ident": a.ident, "name": a.name, "latitude": a.latitude, "longitude": a.longitude,
             "elevation_ft": a.elevation_ft, "timezone": a.timezone}
            for _, a in sorted(airfields.items())
        ],
        "aircraft": [
            {"registration": a.registration, "category": a.category, "class": a.aircraft_class,
             "dual_controls": a.dual_controls, "equipment_notes": a.equipment_notes or "",
             "home_airfield": _ident(a.home_airfield)}
            for a in aircraft
        ],
        "devices": [
            {"identifier": d.identifier, "kind": d.kind, "category": d.category,
             "authorisation_expires": _day(d.authorisation_expires), "notes": d.notes or ""}
            for d in devices
        ],
        "people": people_out,
        "availability": windows,
    }
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


# ---------------------------------------------------------------- restore


class _Doc:
    """Typed access to the document that names the place of every problem."""

    @staticmethod
    def obj(value: Any, where: str, required: tuple[str, ...], optional: tuple[str, ...] = ()) -> dict[str, Any]:
        if not isinstance(value, dict):
            raise BackupError(f"{where}: must be an object")
        unknown = sorted(set(value) - set(required) - set(optional))
        if unknown:
            raise BackupError(f"{where}.{unknown[0]}: unknown key")
        missing = [k for k in required if k not in value]
        if missing:
            raise BackupError(f"{where}.{missing[0]}: missing")
        return value

    @staticmethod
    def text(value: Any, where: str, *, limit: int = 200, optional: bool = False, empty: bool = False) -> str | None:
        if value is None and optional:
            return None
        if not isinstance(value, str) or (not value.strip() and not empty) or len(value) > limit:
            raise BackupError(f"{where}: must be {'empty or ' if empty else ''}text of at most {limit} characters")
        return value

    @staticmethod
    def number(value: Any, where: str, low: float, high: float, *, whole: bool = False) -> Any:
        kinds = (int,) if whole else (int, float)
        if isinstance(value, bool) or not isinstance(value, kinds) or not (low <= value <= high):
            raise BackupError(f"{where}: must be a {'whole ' if whole else ''}number from {low} to {high}")
        return value

    @staticmethod
    def flag(value: Any, where: str) -> bool:
        if not isinstance(value, bool):
            raise BackupError(f"{where}: must be true or false")
        return value

    @staticmethod
    def words(value: Any, where: str) -> list[str]:
        if not isinstance(value, list) or not all(isinstance(v, str) and 0 < len(v) <= 64 for v in value):
            raise BackupError(f"{where}: must be a list of short texts")
        return list(value)

    @staticmethod
    def one_of(value: Any, where: str, options: tuple[str, ...], *, optional: bool = False) -> str | None:
        if value is None and optional:
            return None
        if value not in options:
            raise BackupError(f"{where}: must be one of {', '.join(options)}")
        return value

    @staticmethod
    def day(value: Any, where: str) -> date | None:
        if value is None:
            return None
        try:
            return date.fromisoformat(value)
        except (TypeError, ValueError):
            raise BackupError(f"{where}: must be a date YYYY-MM-DD or null") from None

    @staticmethod
    def instant(value: Any, where: str) -> datetime:
        try:
            moment = datetime.fromisoformat(value)
        except (TypeError, ValueError):
            raise BackupError(f"{where}: must be an ISO date-time with an offset") from None
        if moment.utcoffset() is None:
            raise BackupError(f"{where}: must be an ISO date-time with an offset")
        return moment

    @staticmethod
    def zone(value: Any, where: str, *, optional: bool = False) -> str | None:
        if value is None and optional:
            return None
        try:
            ZoneInfo(value)
        except (TypeError, ValueError, ZoneInfoNotFoundError):
            raise BackupError(f"{where}: not an IANA time zone name") from None
        return value


def _logbook(value: Any, where: str) -> Logbook:
    try:
        return interchange.read_json(json.dumps(value, ensure_ascii=False))
    except interchange.InterchangeError as exc:
        raise BackupError(f"{where}: {exc}") from None


_PERSON_KEYS = ("ref", "name", "email", "roles", "certificate_level", "category_classes", "instrument_categories",
                "instructor_ratings", "medical_class", "medical_expires", "basicmed_expires", "home_airfield",
                "timezone", "rule_sets", "practice_targets", "created_at")


def restore_school(
    session: Session, text: str, *, now: datetime | None = None, as_of: date | Callable[[str | None], date] | None = None
) -> int:
    """Stage the school in ``text`` (a backup document); return the new school's id.

    All or nothing: raises ``BackupError`` for a malformed document or one
    that clashes with the database (school slug, email, aircraft registration
    or device identifier already present; an airfield ident present with other
    values; an identical airfield is shared, not duplicated). The caller rolls back.
    With ``as_of`` (a date, or a function from a time-zone name to its today) the
    restored pilots' kept statuses are evaluated too (``planner.status.settle``);
    without it the first read or ``planner refresh`` does that.
    """
    stamp = now or datetime.now(UTC)
    d = _Doc
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        raise BackupError(f"not valid JSON: line {exc.lineno}, column {exc.colno}: {exc.msg}") from None
    d.obj(doc, "top level", ("format", "format_version", "school", "airfields", "aircraft", "devices", "people", "availability"))
    if doc["format"] != FORMAT or doc["format_version"] != FORMAT_VERSION:
        raise BackupError(f"format: this is not a {FORMAT} version {FORMAT_VERSION} document")
    for key in ("airfields", "aircraft", "devices", "people", "availability"):
        if not isinstance(doc[key], list):
            raise BackupError(f"{key}: must be a list")

    airfields: dict[str, models.Airfield] = {}
    for i, spec in enumerate(doc["airfields"]):
        where = f"airfields[{i}]"
        d.obj(spec, where, ("ident", "name", "latitude", "longitude", "elevation_ft", "timezone"))
        values = {
            "ident": d.text(spec["ident"], f"{where}.ident", limit=16),
            "name": d.text(spec["name"], f"{where}.name"),
            "latitude": d.number(spec["latitude"], f"{where}.latitude", -90, 90),
            "longitude": d.number(spec["longitude"], f"{where}.longitude", -180, 180),
            "elevation_ft": d.number(spec["elevation_ft"], f"{where}.elevation_ft", -2000, 30000, whole=True),
            "timezone": d.zone(spec["timezone"], f"{where}.timezone"),
        }
        if values["ident"] in airfields:
            raise BackupError(f"{where}.ident: {values['ident']!r} is listed twice")
        row = repository.find_by(session, models.Airfield, ident=values["ident"])
        if row is None:
            row = models.Airfield(**values)
            session.add(row)
        elif any(getattr(row, k) != v for k, v in values.items()):
            raise BackupError(f"{where}: airfield {values['ident']!r} already exists here with other values")
        airfields[values["ident"]] = row

    def airfield(value: Any, where: str) -> models.Airfield | None:
        if value is None:
            return None
        if value not in airfields:
            raise BackupError(f"{where}: airfield {value!r} is not in this document's airfields")
        return airfields[value]

    spec = d.obj(doc["school"], "school", ("slug", "name", "home_airfield"))
    slug = d.text(spec["slug"], "school.slug", limit=64)
    if repository.school_by_slug(session, slug) is not None:
        raise BackupError(f"school.slug: a school {slug!r} already exists in this database; restore into an empty one")
    school = models.School(slug=slug, name=d.text(spec["name"], "school.name"),
                           home_airfield=airfield(spec["home_airfield"], "school.home_airfield"))
    session.add(school)
    session.flush()

    aircraft: dict[str, models.Aircraft] = {}
    for i, spec in enumerate(doc["aircraft"]):
        where = f"aircraft[{i}]"
        d.obj(spec, where, ("registration", "category", "class", "dual_controls", "equipment_notes", "home_airfield"))
        reg = d.text(spec["registration"], f"{where}.registration", limit=16)
        if reg in aircraft or repository.find_by(session, models.Aircraft, registration=reg) is not None:
            raise BackupError(f"{where}.registration: {reg!r} already exists")
        aircraft[reg] = models.Aircraft(
            school_id=school.id, registration=reg,
            category=d.one_of(spec["category"], f"{where}.category", CATEGORIES),
            aircraft_class=d.text(spec["class"], f"{where}.class", limit=32, optional=True),
            dual_controls=d.flag(spec["dual_controls"], f"{where}.dual_controls"),
            equipment_notes=d.text(spec["equipment_notes"], f"{where}.equipment_notes", limit=10_000, empty=True),
            home_airfield=airfield(spec["home_airfield"], f"{where}.home_airfield"),
        )
        session.add(aircraft[reg])

    devices: dict[str, models.TrainingDevice] = {}
    for i, spec in enumerate(doc["devices"]):
        where = f"devices[{i}]"
        d.obj(spec, where, ("identifier", "kind", "category", "authorisation_expires", "notes"))
        ident = d.text(spec["identifier"], f"{where}.identifier", limit=32)
        if ident in devices or repository.find_by(session, models.TrainingDevice, identifier=ident) is not None:
            raise BackupError(f"{where}.identifier: {ident!r} already exists")
        devices[ident] = models.TrainingDevice(
            school_id=school.id, identifier=ident,
            kind=d.one_of(spec["kind"], f"{where}.kind", models.DEVICE_KINDS),
            category=d.one_of(spec["category"], f"{where}.category", CATEGORIES),
            authorisation_expires=d.day(spec["authorisation_expires"], f"{where}.authorisation_expires"),
            notes=d.text(spec["notes"], f"{where}.notes", limit=10_000, empty=True),
        )
        session.add(devices[ident])
    session.flush()

    # People first (in document order, so ids keep that order), then logbooks: entries link
    # safety pilots and instructors by name within the school.
    people: dict[str, models.Person] = {}
    logbooks: list[tuple[str, models.Person, Logbook | None, Logbook | None, dict[str, Any]]] = []
    emails: set[str] = set()
    for i, spec in enumerate(doc["people"]):
        where = f"people[{i}]"
        d.obj(spec, where, _PERSON_KEYS, ("password_hash", "logbook", "deleted_entries"))
        ref = d.text(spec["ref"], f"{where}.ref", limit=64)
        if ref in people:
            raise BackupError(f"{where}.ref: {ref!r} is listed twice")
        roles = spec["roles"]
        if not isinstance(roles, list) or not roles or len(set(roles)) != len(roles) or any(r not in ROLES for r in roles):
            raise BackupError(f"{where}.roles: must be a non-empty list of {', '.join(ROLES)}")
        email = d.text(spec["email"], f"{where}.email", limit=254, optional=True)
        if email is not None:
            if email.lower() in emails or repository.person_by_email(session, email) is not None:
                raise BackupError(f"{where}.email: an account with {email!r} already exists")
            emails.add(email.lower())
        for key in ("category_classes", "instrument_categories", "instructor_ratings", "rule_sets"):
            d.words(spec[key], f"{where}.{key}")
        if not isinstance(spec["practice_targets"], dict):
            raise BackupError(f"{where}.practice_targets: must be an object")
        medical_class = d.one_of(spec["medical_class"], f"{where}.medical_class", models.MEDICAL_CLASSES, optional=True)
        password_hash = d.text(spec.get("password_hash"), f"{where}.password_hash", limit=255, optional=True)
        person = models.Person(
            school_id=school.id,
            name=d.text(spec["name"], f"{where}.name"),
            email=email,
            password_hash=password_hash,
            is_admin="admin" in roles,
            is_instructor="instructor" in roles,
            is_pilot="pilot" in roles,
            certificate_level=d.one_of(spec["certificate_level"], f"{where}.certificate_level", models.CERTIFICATE_LEVELS),
            category_classes=list(spec["category_classes"]),
            instrument_categories=list(spec["instrument_categories"]),
            instructor_ratings=list(spec["instructor_ratings"]),
            medical_class=medical_class,
            medical_expires=d.day(spec["medical_expires"], f"{where}.medical_expires"),
            basicmed_expires=d.day(spec["basicmed_expires"], f"{where}.basicmed_expires"),
            home_airfield=airfield(spec["home_airfield"], f"{where}.home_airfield"),
            timezone=d.zone(spec["timezone"], f"{where}.timezone", optional=True),
            rule_sets=list(spec["rule_sets"]),
            practice_targets=spec["practice_targets"],
            created_at=d.instant(spec["created_at"], f"{where}.created_at"),
        )
        session.add(person)
        session.flush()
        people[ref] = person
        current = _logbook(spec["logbook"], f"{where}.logbook") if spec.get("logbook") is not None else None
        deleted, deleted_at = None, {}
        if spec.get("deleted_entries") is not None:
            block = d.obj(spec["deleted_entries"], f"{where}.deleted_entries", ("logbook", "deleted_at"))
            deleted = _logbook(block["logbook"], f"{where}.deleted_entries.logbook")
            if not isinstance(block["deleted_at"], dict) or set(block["deleted_at"]) != {e.id for e in deleted.entries}:
                raise BackupError(f"{where}.deleted_entries.deleted_at: must give an instant for each deleted entry id")
            deleted_at = {k: d.instant(v, f"{where}.deleted_entries.deleted_at.{k}") for k, v in block["deleted_at"].items()}
        if (current is not None or deleted is not None) and not person.is_pilot:
            raise BackupError(f"{where}.logbook: only a person with the pilot role keeps a logbook")
        logbooks.append((where, person, current, deleted, deleted_at))

    for where, person, current, deleted, deleted_at in logbooks:
        entries = list(current.entries if current else ()) + list(deleted.entries if deleted else ())
        try:
            rows = repository.add_entries(session, person, entries, now=stamp)
        except repository.EntryRejected as exc:
            raise BackupError(f"{where}: {exc}") from None
        first_deleted = len(entries) - len(deleted_at)
        for row in rows[first_deleted:]:  # rows come back in the order given: the deleted ones last
            row.deleted_at = deleted_at[row.external_id]
    session.flush()

    subjects: dict[str, dict[str, Any]] = {"person": people, "aircraft": aircraft, "device": devices}
    for i, spec in enumerate(doc["availability"]):
        where = f"availability[{i}]"
        if not isinstance(spec, dict):
            raise BackupError(f"{where}: must be an object")
        kinds = [k for k in subjects if k in spec]
        if len(kinds) != 1:
            raise BackupError(f"{where}: name exactly one of person, aircraft, device")
        kind = kinds[0]
        d.obj(spec, where, (kind, "starts_at", "ends_at", "timezone", "note"))
        if spec[kind] not in subjects[kind]:
            raise BackupError(f"{where}.{kind}: {spec[kind]!r} is not in this document")
        starts, ends = d.instant(spec["starts_at"], f"{where}.starts_at"), d.instant(spec["ends_at"], f"{where}.ends_at")
        if ends <= starts:
            raise BackupError(f"{where}.ends_at: must be after starts_at")
        session.add(models.AvailabilityWindow(
            **{f"{kind}_id": subjects[kind][spec[kind]].id}, starts_at=starts, ends_at=ends,
            timezone=d.zone(spec["timezone"], f"{where}.timezone"),
            note=d.text(spec["note"], f"{where}.note", limit=10_000, empty=True),
        ))
    session.flush()
    if as_of is not None:
        status.settle(session, as_of)
    return school.id
