"""Backup and restore of a whole school as one JSON document (format in ``docs/backup.md``).

``backup_school`` reads a school (airfields it uses, aircraft, training
devices, people with roles, ratings, medical, settings and personal minimums,
availability, practice sessions, and every pilot's logbook in the interchange
format v1) into a canonical text:
the same database always gives the same bytes, and backup -> restore into an
empty database -> backup gives byte-identical output. ``restore_school``
checks the whole document first and stages every row in the caller's
session (the caller commits): a bad document or a clash with rows already in
the database raises ``BackupError`` naming the place, and nothing is written.

Password hashes are left out unless asked for (``include_password_hashes``):
a backup file then carries no credential, and restored accounts cannot sign
in until someone sets a password. Entry revision history is not kept; deleted
entries are (as a second interchange document), restored as deleted.
Version 1 documents (without practice sessions and personal minimums) still
restore.
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
from planner.db import models, practice, repository
from planner.export import interchange

FORMAT = "planner-school-backup"
FORMAT_VERSION = 2
READABLE_VERSIONS = (1, 2)  # version 1: no practice_sessions, no personal minimums
MINIMUMS = (  # person key, lowest, highest (the table's check constraints)
    ("min_ceiling_ft", 0, 10_000),
    ("min_visibility_hundredths_sm", 0, 1_000),
    ("min_crosswind_kt", 0, 50),
)
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
    sessions = practice.school_sessions(session, school.id)
    airfields = {a.ident: a for a in [school.home_airfield, *(x.home_airfield for x in aircraft),
                                      *(p.home_airfield for p in people), *(r.airfield for r in sessions)]
                 if a is not None}
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
            **{key: getattr(person, key) for key, _, _ in MINIMUMS},
            "night_practice": bool(person.night_practice),
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
        "practice_sessions": [_session_out(r, refs) for r in sorted(sessions, key=lambda r: (r.starts_at, r.uid))],
    }
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


def _session_out(row: models.PracticeSession, refs: dict[int, str]) -> dict[str, Any]:
    """A practice session with people as ``ref``s (in its legs too) instead of database ids."""

    def ref(person_id: Any) -> str:
        if person_id not in refs:
            raise LookupError(f"practice session {row.uid} names person {person_id}, who is not of this school")
        return refs[person_id]

    content = _canonical(row.content or {})
    for leg in content.get("legs", []):
        leg["pilot_flying"] = ref(leg.pop("pilot_flying_id", None))
        leg["safety_pilot"] = ref(leg.pop("safety_pilot_id", None))
    return {
        "uid": row.uid,
        "status": row.status,
        "starts_at": _instant(row.starts_at),
        "ends_at": _instant(row.ends_at),
        "timezone": row.timezone,
        "airfield": row.airfield.ident,
        "aircraft": row.aircraft.registration,
        "pilot_flying": ref(row.pilot_flying_id),
        "safety_pilot": ref(row.safety_pilot_id),
        "is_mutual": row.is_mutual,
        "content": _canonical(content),
        "explanation": row.explanation or "",
        "sequence": row.sequence,
        "version": row.version,
        "created_at": _instant(row.created_at),
        "updated_at": _instant(row.updated_at),
    }


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
    def number(value: Any, where: str, low: float, high: float, *, whole: bool = False, optional: bool = False) -> Any:
        if value is None and optional:
            return None
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
    d.obj(doc, "top level", ("format", "format_version"), _SECTIONS + ("school", "practice_sessions"))
    version = doc["format_version"]
    if doc["format"] != FORMAT or type(version) is not int or version not in READABLE_VERSIONS:
        raise BackupError(f"format: this is not a {FORMAT} document of version "
                          f"{' or '.join(str(v) for v in READABLE_VERSIONS)}")
    v2 = version >= 2
    d.obj(doc, "top level", ("format", "format_version", "school", *_SECTIONS, *(("practice_sessions",) if v2 else ())))
    for key in _SECTIONS + (("practice_sessions",) if v2 else ()):
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
    person_keys = _PERSON_KEYS + (tuple(k for k, _, _ in MINIMUMS) if v2 else ())
    for i, spec in enumerate(doc["people"]):
        where = f"people[{i}]"
        d.obj(spec, where, person_keys, ("password_hash", "logbook", "deleted_entries", "night_practice"))
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
        night_practice = spec.get("night_practice", False)
        if not isinstance(night_practice, bool):
            raise BackupError(f"{where}.night_practice: must be true or false")
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
            **{key: d.number(spec[key], f"{where}.{key}", low, high, whole=True, optional=True)
               for key, low, high in MINIMUMS if v2},
            night_practice=night_practice,
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

    if v2:
        _restore_sessions(session, doc["practice_sessions"], school, airfields, aircraft, people)
    if as_of is not None:
        status.settle(session, as_of)
    return school.id


_SECTIONS = ("airfields", "aircraft", "devices", "people", "availability")
_SESSION_KEYS = ("uid", "status", "starts_at", "ends_at", "timezone", "airfield", "aircraft", "pilot_flying",
                 "safety_pilot", "is_mutual", "content", "explanation", "sequence", "version", "created_at", "updated_at")


def _restore_sessions(
    session: Session, specs: list[Any], school: models.School, airfields: dict[str, models.Airfield],
    aircraft: dict[str, models.Aircraft], people: dict[str, models.Person],
) -> None:
    """Check and stage the practice sessions; two active ones holding the same person or aircraft at once are refused.

    The school, its people and aircraft are new in this transaction, so no
    other booking can reach them: the clash check runs over the document.
    """
    d = _Doc
    uids: set[str] = set()
    held: list[tuple[str, str, datetime, datetime, int]] = []  # (resource, words, start, end, index)
    rows = []
    for i, spec in enumerate(specs):
        where = f"practice_sessions[{i}]"
        d.obj(spec, where, _SESSION_KEYS)
        uid = d.text(spec["uid"], f"{where}.uid", limit=128)
        if uid in uids or repository.find_by(session, models.PracticeSession, uid=uid) is not None:
            raise BackupError(f"{where}.uid: {uid!r} already exists")
        uids.add(uid)
        state = d.one_of(spec["status"], f"{where}.status", models.SESSION_STATUSES)
        starts, ends = d.instant(spec["starts_at"], f"{where}.starts_at"), d.instant(spec["ends_at"], f"{where}.ends_at")
        if ends <= starts:
            raise BackupError(f"{where}.ends_at: must be after starts_at")
        if spec["airfield"] not in airfields:
            raise BackupError(f"{where}.airfield: airfield {spec['airfield']!r} is not in this document's airfields")
        if spec["aircraft"] not in aircraft:
            raise BackupError(f"{where}.aircraft: {spec['aircraft']!r} is not in this document's aircraft")
        pf, sp = (_person_ref(spec[k], f"{where}.{k}", people) for k in ("pilot_flying", "safety_pilot"))
        if pf is sp:
            raise BackupError(f"{where}.safety_pilot: must be another person than the pilot flying")
        mutual = d.flag(spec["is_mutual"], f"{where}.is_mutual")
        content = _session_content(spec["content"], f"{where}.content", people,
                                   [(pf, sp), (sp, pf)] if mutual else [(pf, sp)])
        row = models.PracticeSession(
            school_id=school.id, airfield=airfields[spec["airfield"]], aircraft=aircraft[spec["aircraft"]],
            starts_at=starts, ends_at=ends, timezone=d.zone(spec["timezone"], f"{where}.timezone"),
            pilot_flying=pf, safety_pilot=sp, is_mutual=mutual, status=state, content=content,
            explanation=d.text(spec["explanation"], f"{where}.explanation", limit=100_000, empty=True),
            uid=uid,
            sequence=d.number(spec["sequence"], f"{where}.sequence", 0, 1_000_000, whole=True),
            version=d.number(spec["version"], f"{where}.version", 1, 1_000_000, whole=True),
            created_at=d.instant(spec["created_at"], f"{where}.created_at"),
            updated_at=d.instant(spec["updated_at"], f"{where}.updated_at"),
        )
        rows.append(row)
        if state in practice.ACTIVE:
            held += [(f"a/{spec['aircraft']}", f"aircraft {spec['aircraft']}", starts, ends, i),
                     (f"p/{spec['pilot_flying']}", f"{pf.name} ({spec['pilot_flying']})", starts, ends, i),
                     (f"p/{spec['safety_pilot']}", f"{sp.name} ({spec['safety_pilot']})", starts, ends, i)]
    _refuse_clashes(held)
    for row in rows:
        session.add(row)
    session.flush()


def _person_ref(value: Any, where: str, people: dict[str, models.Person]) -> models.Person:
    if not isinstance(value, str) or value not in people:
        raise BackupError(f"{where}: {value!r} is not a person ref of this document")
    return people[value]


def _refuse_clashes(held: list[tuple[str, str, datetime, datetime, int]]) -> None:
    """Refuse two active sessions holding one person or aircraft over overlapping times (the later one is named)."""
    held.sort(key=lambda h: (h[0], h[2], h[4]))
    last: tuple[str, str, datetime, datetime, int] | None = None  # per resource: the one reaching furthest
    for h in held:
        if last is not None and last[0] == h[0] and h[2] < last[3]:
            first, second = sorted((last[4], h[4]))
            raise BackupError(
                f"practice_sessions[{second}]: {h[1]} is also held by practice_sessions[{first}] at that time; "
                "two proposed or accepted sessions cannot hold one person or aircraft at once"
            )
        if last is None or last[0] != h[0] or h[3] > last[3]:
            last = h


def _session_content(value: Any, where: str, people: dict[str, models.Person],
                     seats: list[tuple[models.Person, models.Person]]) -> dict[str, Any]:
    """The session's content with person refs in its legs turned back into database ids.

    Checks what the pages, calendars and logbook drafts read: each leg's seats
    (the session's own, swapped on a mutual session's second leg), items with
    a title and minutes, the briefing's figures, needs and credits.
    """
    d = _Doc
    content = d.obj(value, where, (), ("legs", "daylight", "vmc"))
    out = json.loads(json.dumps(content))
    if "daylight" in content:
        d.flag(content["daylight"], f"{where}.daylight")
    if content.get("vmc") is not None:
        d.number(content["vmc"], f"{where}.vmc", 0, 1)
    legs = content.get("legs", [])
    if not isinstance(legs, list) or ("legs" in content and len(legs) != len(seats)):
        raise BackupError(f"{where}.legs: must be a list of {len(seats)} leg{'s' if len(seats) > 1 else ''}")
    for n, (leg, (pf, sp)) in enumerate(zip(legs, seats)):
        at = f"{where}.legs[{n}]"
        d.obj(leg, at, ("pilot_flying", "safety_pilot", "items", "total_minutes"),
              ("briefing", "minutes_basis", "needs", "credits"))
        if _person_ref(leg["pilot_flying"], f"{at}.pilot_flying", people) is not pf \
                or _person_ref(leg["safety_pilot"], f"{at}.safety_pilot", people) is not sp:
            raise BackupError(f"{at}: the seats must be the session's own"
                              + (" (swapped on the second leg)" if n else ""))
        d.number(leg["total_minutes"], f"{at}.total_minutes", 0, 24 * 60, whole=True)
        if not isinstance(leg["items"], list):
            raise BackupError(f"{at}.items: must be a list")
        for k, item in enumerate(leg["items"]):
            it = f"{at}.items[{k}]"
            if not isinstance(item, dict):
                raise BackupError(f"{it}: must be an object")
            d.text(item.get("title"), f"{it}.title", limit=1_000)
            d.number(item.get("minutes"), f"{it}.minutes", 0, 24 * 60, whole=True)
            d.text(item.get("kind", "-"), f"{it}.kind", limit=64)
            _texts(item.get("steps", []), f"{it}.steps")
        brief = leg.get("briefing")
        if brief:
            if not isinstance(brief, dict):
                raise BackupError(f"{at}.briefing: must be an object")
            for key in ("tas_kt", "standard_rate_bank_deg", "standard_rate_radius_ft"):
                d.number(brief.get(key), f"{at}.briefing.{key}", 0, 1e9)
            if not isinstance(brief.get("banks", []), list):
                raise BackupError(f"{at}.briefing.banks: must be a list")
            for k, bank in enumerate(brief.get("banks", [])):
                if not isinstance(bank, dict):
                    raise BackupError(f"{at}.briefing.banks[{k}]: must be an object")
                for key in ("bank_deg", "load_factor", "stall_speed_increase_percent", "turn_radius_ft"):
                    d.number(bank.get(key), f"{at}.briefing.banks[{k}].{key}", 0, 1e9)
            _texts(brief.get("notes", []), f"{at}.briefing.notes")
        d.text(leg.get("minutes_basis", "-"), f"{at}.minutes_basis", limit=200)
        _texts(leg.get("needs", []), f"{at}.needs")
        credits = leg.get("credits", {})
        if not isinstance(credits, dict):
            raise BackupError(f"{at}.credits: must be an object")
        for unit, amount in credits.items():
            d.number(amount, f"{at}.credits.{unit}", 0, 1e6)
        out["legs"][n] = {"pilot_flying_id": pf.id, "safety_pilot_id": sp.id,
                          **{k: v for k, v in out["legs"][n].items() if k not in ("pilot_flying", "safety_pilot")}}
    return out


def _texts(value: Any, where: str) -> None:
    if not isinstance(value, list) or not all(isinstance(v, str) and len(v) <= 2_000 for v in value):
        raise BackupError(f"{where}: must be a list of texts")
