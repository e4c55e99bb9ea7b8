"""Use cases: take a database session and plain arguments, load, call the core, stage writes.

The caller owns the session and the transaction (one per web request, one
per CLI command): nothing here commits, so an error anywhere leaves nothing
behind once the caller rolls back.
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import lru_cache
from datetime import UTC, date, datetime, time, timedelta
from pathlib import Path
from typing import Any
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from sqlalchemy.orm import Session
from werkzeug.security import generate_password_hash

from planner import rulesets
from planner.core import currency, minimums
from planner.core import logbook as core_logbook
from planner.core.logbook import CATEGORIES, Entry, Logbook
from planner.core.rules import RuleSet
from planner.db import models, repository
from planner.rulesets import overrides
from planner.db.repository import EntryConflict, EntryRejected

__all__ = [
    "DemoAccount",
    "EntryConflict",
    "EntryRejected",
    "OverviewRow",
    "PilotStatus",
    "SeedError",
    "SettingsRejected",
    "advised_minimums",
    "baseline_minimums",
    "builtin_rule_set",
    "export_logbook",
    "get_pilot",
    "import_logbook",
    "is_practice",
    "list_pilots",
    "load_demo",
    "load_logbook",
    "pilot_status",
    "rule_sets_for",
    "school_overview",
    "update_minimums",
    "update_settings",
]

Progress = Callable[[str], None]


def _quiet(_message: str) -> None:
    pass


def get_pilot(session: Session, pilot_id: int) -> models.Person:
    """The person with id ``pilot_id`` who keeps a logbook; ``LookupError`` if there is none."""
    person = session.get(models.Person, pilot_id)
    if person is None or not person.is_pilot:
        raise LookupError(f"no pilot with id {pilot_id}")
    return person


def load_logbook(session: Session, pilot_id: int) -> Logbook:
    """The pilot's profile and all their current (not deleted) entries, as core data.

    Raises ``LookupError`` when there is no such pilot.
    """
    person = get_pilot(session, pilot_id)
    return repository.current_logbook(session, person)


def export_logbook(session: Session, pilot_id: int) -> Logbook:
    """What ``planner export`` writes: the pilot block and every current entry, oldest first."""
    return load_logbook(session, pilot_id)


def list_pilots(session: Session) -> list[dict[str, Any]]:
    """Every pilot: ``id``, ``name``, ``email`` (None without an account), ``school`` (slug or None)."""
    return [
        {"id": person.id, "name": person.name, "email": person.email, "school": slug}
        for person, slug in repository.pilots_with_school(session)
    ]


def import_logbook(
    session: Session,
    logbook: Logbook,
    pilot_id: int | None = None,
    *,
    now: datetime | None = None,
    progress: Progress = _quiet,
    as_of: date | Callable[[str | None], date] | None = None,
) -> int:
    """Stage a logbook's entries; return the pilot's id (``progress`` hears each stored batch).

    Without ``pilot_id`` a new pilot is created from the logbook's pilot
    block; with it, the entries are added to that pilot (the pilot block is
    not applied). All or nothing: raises ``EntryRejected`` (naming the entry
    and field) for a bad entry or an entry id the pilot already has, and
    ``LookupError`` for an unknown pilot; the caller then rolls back.
    ``as_of`` (a date, or a function from a time-zone name to its today):
    the day the pilot's kept status is evaluated for (``planner.status.settle``;
    without it a kept row is re-evaluated for the day it was for).
    """
    stamp = now or datetime.now(UTC)
    if pilot_id is None:
        person = models.Person(
            name=logbook.pilot.name,
            is_pilot=True,
            is_instructor=False,
            is_admin=False,
            certificate_level="none",
            instructor_ratings=[],
            rule_sets=[],
            practice_targets={},
            created_at=stamp,
        )
        repository.apply_pilot(person, logbook.pilot)
        session.add(person)
        session.flush()
    else:
        person = get_pilot(session, pilot_id)
    repository.add_entries(session, person, list(logbook.entries), now=stamp, progress=progress)
    if as_of is not None:
        status.settle(session, as_of)
    return person.id


# ---------------------------------------------------------------- demo scenario


@dataclass(frozen=True)
class DemoAccount:
    """A demo sign-in: what ``planner demo`` prints."""

    email: str
    password: str
    role: str  # "admin" | "instructor" | "pilot"
    name: str
    person_id: int


class SeedError(ValueError):
    """The demo scenario files are malformed; the message names the file and the key."""


_ROLES = ("admin", "instructor", "pilot")
_WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")

_TOP_KEYS = {"format", "school", "airfields", "aircraft", "devices", "people", "availability"}
_SCHOOL_KEYS = {"slug", "name", "home_airfield"}
_AIRFIELD_KEYS = {"ident", "name", "latitude", "longitude", "elevation_ft", "timezone"}
_AIRCRAFT_KEYS = {"registration", "category", "class", "dual_controls", "equipment_notes", "home_airfield"}
_DEVICE_KEYS = {"identifier", "kind", "category", "authorisation_expires", "notes"}
_PERSON_KEYS = {
    "slug", "name", "email", "password", "roles", "certificate_level", "category_classes",
    "instrument_categories", "instructor_ratings", "medical_class", "medical_expires",
    "basicmed_expires", "home_airfield", "timezone", "rule_sets", "practice_targets", "logbook",
    "personal_minimums",
}
_WINDOW_KEYS = {"person", "aircraft", "device", "timezone", "start", "end", "weekly", "note"}
_WEEKLY_KEYS = {"days", "from", "to", "first_date", "last_date", "except"}
_MINIMUM_KEYS = {"ceiling_ft", "visibility_sm", "crosswind_kt"}
SEED_FORMAT = "planner-demo-school/1"


class _Seed:
    """Strict reading of ``school.json``: unknown keys and bad values are errors naming the place."""

    def __init__(self, path: Path) -> None:
        self.path = path

    def fail(self, where: str, problem: str) -> SeedError:
        return SeedError(f"{self.path}: {where}: {problem}")

    def obj(self, value: Any, where: str, allowed: set[str], required: set[str]) -> dict[str, Any]:
        if not isinstance(value, dict):
            raise self.fail(where, "must be an object")
        unknown = sorted(set(value) - allowed)
        if unknown:
            raise self.fail(where, f"unknown key {unknown[0]!r} (allowed: {', '.join(sorted(allowed))})")
        missing = sorted(required - set(value))
        if missing:
            raise self.fail(where, f"missing key {missing[0]!r}")
        return value

    def items(self, doc: dict[str, Any], key: str) -> list[Any]:
        value = doc.get(key, [])
        if not isinstance(value, list):
            raise self.fail(key, "must be a list")
        return value

    def date(self, value: Any, where: str) -> date | None:
        if value is None:
            return None
        try:
            return date.fromisoformat(value)
        except (TypeError, ValueError):
            raise self.fail(where, f"must be a date YYYY-MM-DD, got {value!r}") from None

    def zone(self, value: Any, where: str) -> ZoneInfo:
        try:
            return ZoneInfo(value)
        except (TypeError, ValueError, ZoneInfoNotFoundError):
            raise self.fail(where, f"must be an IANA time zone name, got {value!r}") from None

    def clock(self, value: Any, where: str) -> time:
        try:
            return time.fromisoformat(value)
        except (TypeError, ValueError):
            raise self.fail(where, f"must be a local time HH:MM, got {value!r}") from None


def _windows(seed: _Seed, spec: dict[str, Any], where: str) -> list[tuple[datetime, datetime]]:
    """Expand one availability item into (start, end) UTC instants."""
    zone = seed.zone(spec.get("timezone"), f"{where}.timezone")
    if "weekly" in spec:
        if "start" in spec or "end" in spec:
            raise seed.fail(where, "give either weekly or start/end, not both")
        weekly = seed.obj(spec["weekly"], f"{where}.weekly", _WEEKLY_KEYS, {"days", "from", "to", "first_date", "last_date"})
        days = weekly["days"]
        if not isinstance(days, list) or not days or any(d not in _WEEKDAYS for d in days):
            raise seed.fail(f"{where}.weekly.days", f"must be a list of {', '.join(_WEEKDAYS)}")
        start_t = seed.clock(weekly["from"], f"{where}.weekly.from")
        end_t = seed.clock(weekly["to"], f"{where}.weekly.to")
        first = seed.date(weekly["first_date"], f"{where}.weekly.first_date")
        last = seed.date(weekly["last_date"], f"{where}.weekly.last_date")
        skipped = {seed.date(d, f"{where}.weekly.except") for d in weekly.get("except", [])}
        if first is None or last is None or last < first:
            raise seed.fail(f"{where}.weekly", "last_date must not be before first_date")
        out = []
        day = first
        while day <= last:
            if _WEEKDAYS[day.weekday()] in days and day not in skipped:
                out.append((
                    datetime.combine(day, start_t, zone).astimezone(UTC),
                    datetime.combine(day, end_t, zone).astimezone(UTC),
                ))
            day += timedelta(days=1)
        return out
    try:
        start = datetime.fromisoformat(spec["start"]).replace(tzinfo=zone)
        end = datetime.fromisoformat(spec["end"]).replace(tzinfo=zone)
    except KeyError as exc:
        raise seed.fail(where, f"missing key {exc.args[0]!r} (or give weekly)") from None
    except (TypeError, ValueError):
        raise seed.fail(where, "start and end must be local date-times YYYY-MM-DDTHH:MM") from None
    return [(start.astimezone(UTC), end.astimezone(UTC))]


def load_demo(
    session: Session,
    seed_dir: Path | str,
    today: date,
    *,
    reader: Callable[[str], Logbook] | None = None,
    progress: Progress = _quiet,
) -> list[DemoAccount]:
    """Load the demo scenario from ``seed_dir`` (``school.json`` + ``logbooks/<slug>.json``).

    Idempotent: rows are found by their natural keys (school slug, airfield
    ident, registration, device identifier, email, entry id, window bounds)
    and only missing ones are added; existing rows are left as they are.
    ``today`` stamps the rows created (no clock inside). ``reader`` turns a
    logbook file's text into a ``Logbook`` (default:
    ``planner.export.interchange.read_json``). Returns the demo accounts in
    file order. Raises ``SeedError`` for malformed seed data; logbook errors
    propagate from the reader.
    """
    seed_dir = Path(seed_dir)
    if reader is None:
        from planner.export import interchange  # lazy: the interchange module is optional here

        reader = interchange.read_json
    path = seed_dir / "school.json"
    seed = _Seed(path)
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise SeedError(f"{path}: not found") from None
    except json.JSONDecodeError as exc:
        raise SeedError(f"{path}: line {exc.lineno}: not valid JSON ({exc.msg})") from None
    seed.obj(doc, "top level", _TOP_KEYS, {"format", "school", "airfields", "people"})
    if doc["format"] != SEED_FORMAT:
        raise seed.fail("format", f"must be {SEED_FORMAT!r}, got {doc['format']!r}")
    stamp = datetime.combine(today, time(0), UTC)

    # Airfields (shared reference data, keyed by our identifier).
    airfields: dict[str, models.Airfield] = {}
    for i, spec in enumerate(seed.items(doc, "airfields")):
        where = f"airfields[{i}]"
        spec = seed.obj(spec, where, _AIRFIELD_KEYS, _AIRFIELD_KEYS)
        seed.zone(spec["timezone"], f"{where}.timezone")
        row = repository.find_by(session, models.Airfield, ident=spec["ident"])
        if row is None:
            row = models.Airfield(**spec)
            session.add(row)
        airfields[spec["ident"]] = row

    def airfield(ident: str | None, where: str) -> models.Airfield | None:
        if ident is None:
            return None
        if ident not in airfields:
            known = repository.find_by(session, models.Airfield, ident=ident)
            if known is None:
                raise seed.fail(where, f"unknown airfield {ident!r}")
            airfields[ident] = known
        return airfields[ident]

    spec = seed.obj(doc["school"], "school", _SCHOOL_KEYS, {"slug", "name"})
    school = repository.find_by(session, models.School, slug=spec["slug"])
    if school is None:
        school = models.School(
            slug=spec["slug"], name=spec["name"],
            home_airfield=airfield(spec.get("home_airfield"), "school.home_airfield"),
        )
        session.add(school)
        progress(f"created school {spec['name']}")

    aircraft: dict[str, models.Aircraft] = {}
    for i, spec in enumerate(seed.items(doc, "aircraft")):
        where = f"aircraft[{i}]"
        spec = seed.obj(spec, where, _AIRCRAFT_KEYS, {"registration", "category"})
        if spec["category"] not in CATEGORIES:
            raise seed.fail(f"{where}.category", f"must be one of {', '.join(CATEGORIES)}")
        row = repository.find_by(session, models.Aircraft, registration=spec["registration"])
        if row is None:
            row = models.Aircraft(
                school_id=_flush_id(session, school),
                registration=spec["registration"],
                category=spec["category"],
                aircraft_class=spec.get("class"),
                dual_controls=bool(spec.get("dual_controls", False)),
                equipment_notes=spec.get("equipment_notes", ""),
                home_airfield=airfield(spec.get("home_airfield"), f"{where}.home_airfield"),
            )
            session.add(row)
        aircraft[spec["registration"]] = row

    devices: dict[str, models.TrainingDevice] = {}
    for i, spec in enumerate(seed.items(doc, "devices")):
        where = f"devices[{i}]"
        spec = seed.obj(spec, where, _DEVICE_KEYS, {"identifier", "kind", "category"})
        if spec["kind"] not in models.DEVICE_KINDS:
            raise seed.fail(f"{where}.kind", f"must be one of {', '.join(models.DEVICE_KINDS)}")
        if spec["category"] not in CATEGORIES:
            raise seed.fail(f"{where}.category", f"must be one of {', '.join(CATEGORIES)}")
        row = repository.find_by(session, models.TrainingDevice, identifier=spec["identifier"])
        if row is None:
            row = models.TrainingDevice(
                school_id=_flush_id(session, school),
                identifier=spec["identifier"],
                kind=spec["kind"],
                category=spec["category"],
                authorisation_expires=seed.date(spec.get("authorisation_expires"), f"{where}.authorisation_expires"),
                notes=spec.get("notes", ""),
            )
            session.add(row)
        devices[spec["identifier"]] = row

    # People first, so that logbook entries can link safety pilots and instructors by name.
    accounts: list[DemoAccount] = []
    people: dict[str, models.Person] = {}
    logbooks: list[tuple[models.Person, Path, bool]] = []
    for i, spec in enumerate(seed.items(doc, "people")):
        where = f"people[{i}]"
        spec = seed.obj(spec, where, _PERSON_KEYS, {"name", "email", "password", "roles"})
        roles = spec["roles"]
        if not isinstance(roles, list) or not roles or any(r not in _ROLES for r in roles):
            raise seed.fail(f"{where}.roles", f"must be a non-empty list of {', '.join(_ROLES)}")
        level = spec.get("certificate_level", "none")
        if level not in models.CERTIFICATE_LEVELS:
            raise seed.fail(f"{where}.certificate_level", f"must be one of {', '.join(models.CERTIFICATE_LEVELS)}")
        if spec.get("medical_class") not in (None, *models.MEDICAL_CLASSES):
            raise seed.fail(f"{where}.medical_class", f"must be one of {', '.join(models.MEDICAL_CLASSES)}")
        if spec.get("timezone") is not None:
            seed.zone(spec["timezone"], f"{where}.timezone")
        person = repository.person_by_email(session, spec["email"])
        created = person is None
        if person is None:
            person = models.Person(
                school_id=_flush_id(session, school),
                name=spec["name"],
                email=spec["email"],
                password_hash=generate_password_hash(spec["password"]),
                is_admin="admin" in roles,
                is_instructor="instructor" in roles,
                is_pilot="pilot" in roles,
                certificate_level=level,
                category_classes=list(spec.get("category_classes", [])),
                instrument_categories=list(spec.get("instrument_categories", [])),
                instructor_ratings=list(spec.get("instructor_ratings", [])),
                medical_class=spec.get("medical_class"),
                medical_expires=seed.date(spec.get("medical_expires"), f"{where}.medical_expires"),
                basicmed_expires=seed.date(spec.get("basicmed_expires"), f"{where}.basicmed_expires"),
                home_airfield=airfield(spec.get("home_airfield"), f"{where}.home_airfield"),
                timezone=spec.get("timezone"),
                rule_sets=list(spec.get("rule_sets", [])),
                practice_targets=dict(spec.get("practice_targets", {})),
                created_at=stamp,
            )
            if spec.get("personal_minimums") is not None:
                mins = seed.obj(spec["personal_minimums"], f"{where}.personal_minimums", _MINIMUM_KEYS, _MINIMUM_KEYS)
                try:
                    _set_minimums(person, mins["ceiling_ft"], mins["visibility_sm"], mins["crosswind_kt"])
                except SettingsRejected as exc:
                    raise seed.fail(f"{where}.personal_minimums.{exc.field.removeprefix('min_')}", exc.message) from None
            session.add(person)
            session.flush()
            progress(f"created {roles[0]} {spec['name']} <{spec['email']}>")
        people[spec["email"]] = person
        accounts.append(DemoAccount(spec["email"], spec["password"], roles[0], person.name, person.id))
        if spec.get("logbook"):
            logbooks.append((person, seed_dir / spec["logbook"], created))

    for n, (person, logbook_path, created) in enumerate(logbooks, start=1):
        try:
            text = logbook_path.read_text(encoding="utf-8")
        except FileNotFoundError:
            raise SeedError(f"{logbook_path}: not found (logbook of {person.name})") from None
        logbook = reader(text)
        if created:
            # Fill what the school file left out from the logbook's pilot block.
            pilot = logbook.pilot
            person.timezone = person.timezone or pilot.home_timezone
            person.instrument_categories = person.instrument_categories or list(pilot.instrument_categories)
            person.category_classes = person.category_classes or list(pilot.category_classes)
        present = repository.entry_ids(session, person.id)
        missing = [e for e in logbook.entries if e.id not in present]
        if missing:
            repository.add_entries(session, person, missing, now=stamp)
        progress(
            f"logbook {n}/{len(logbooks)} {person.name}: {len(missing)} entries added, "
            f"{len(logbook.entries) - len(missing)} already present"
        )

    added = 0
    session.flush()
    for i, spec in enumerate(seed.items(doc, "availability")):
        where = f"availability[{i}]"
        spec = seed.obj(spec, where, _WINDOW_KEYS, {"timezone"})
        subjects = [k for k in ("person", "aircraft", "device") if k in spec]
        if len(subjects) != 1:
            raise seed.fail(where, "name exactly one of person (email), aircraft (registration), device (identifier)")
        kind = subjects[0]
        key = spec[kind]
        table = {"person": people, "aircraft": aircraft, "device": devices}[kind]
        if key not in table:
            raise seed.fail(f"{where}.{kind}", f"unknown {kind} {key!r} (not listed in this file)")
        subject_id = table[key].id
        for start, end in _windows(seed, spec, where):
            if end <= start:
                raise seed.fail(where, "a window must end after it starts")
            exists = repository.find_by(
                session, models.AvailabilityWindow, **{f"{kind}_id": subject_id}, starts_at=start, ends_at=end
            )
            if exists is None:
                session.add(
                    models.AvailabilityWindow(
                        **{f"{kind}_id": subject_id},
                        starts_at=start,
                        ends_at=end,
                        timezone=spec["timezone"],
                        note=spec.get("note", ""),
                    )
                )
                added += 1
    session.flush()
    progress(f"availability windows: {added} added")
    status.settle(session, today)  # the kept statuses of the pilots whose logbooks changed, as of ``today``
    return accounts


def _flush_id(session: Session, row: Any) -> int:
    """The row's primary key, flushing first if it is new."""
    if row.id is None:
        session.flush()
    return row.id


# ---------------------------------------------------------------- school people (admin area)


class PersonRejected(ValueError):
    """A person's details that cannot be stored; ``field`` names the form field."""

    def __init__(self, field: str, problem: str) -> None:
        super().__init__(f"{field}: {problem}")
        self.field = field
        self.problem = problem


@dataclass(frozen=True)
class PersonDetails:
    """What a school admin types about a person (lists already split, dates parsed)."""

    name: str
    email: str
    is_pilot: bool
    is_instructor: bool
    is_admin: bool
    certificate_level: str = "none"
    category_classes: tuple[str, ...] = ()
    instrument_categories: tuple[str, ...] = ()
    instructor_ratings: tuple[str, ...] = ()
    medical_class: str | None = None
    medical_expires: date | None = None
    basicmed_expires: date | None = None
    home_airfield_id: int | None = None
    timezone: str | None = None


MIN_PASSWORD_LENGTH = 10
_WORD = re.compile(r"^[a-z0-9]+(?:-[a-z0-9]+)*$")


def _check_details(session: Session, details: PersonDetails, person_id: int | None) -> None:
    if not details.name.strip():
        raise PersonRejected("name", "give the person's name")
    if not (details.is_pilot or details.is_instructor or details.is_admin):
        raise PersonRejected("is_pilot", "give at least one role")
    other = repository.person_by_email(session, details.email)
    if other is not None and other.id != person_id:
        raise PersonRejected("email", "another account already uses this email")
    if details.certificate_level not in models.CERTIFICATE_LEVELS:
        raise PersonRejected("certificate_level", f"must be one of {', '.join(models.CERTIFICATE_LEVELS)}")
    if details.medical_class not in (None, *models.MEDICAL_CLASSES):
        raise PersonRejected("medical_class", f"must be one of {', '.join(models.MEDICAL_CLASSES)}")
    if details.medical_expires is not None and details.medical_class is None:
        raise PersonRejected("medical_class", "give the class of the medical certificate that runs to this date")
    for pair in details.category_classes:
        category, _, cls = pair.partition("/")
        if category not in CATEGORIES or not _WORD.match(cls):
            raise PersonRejected(
                "category_classes",
                f"{pair!r} is not category/class (category one of {', '.join(CATEGORIES)}; e.g. airplane/single-engine-land)",
            )
    for category in details.instrument_categories:
        if category not in CATEGORIES:
            raise PersonRejected("instrument_categories", f"{category!r} is not one of {', '.join(CATEGORIES)}")
    for rating in details.instructor_ratings:
        if not _WORD.match(rating) or len(rating) > 32:
            raise PersonRejected("instructor_ratings", f"{rating!r}: use lowercase words joined by hyphens, e.g. cfii")
    if details.timezone is not None:
        try:
            ZoneInfo(details.timezone)
        except (ValueError, ZoneInfoNotFoundError):
            raise PersonRejected("timezone", f"{details.timezone!r} is not an IANA time zone name (e.g. America/Denver)") from None
    if details.home_airfield_id is not None and session.get(models.Airfield, details.home_airfield_id) is None:
        raise PersonRejected("home_airfield", "unknown airfield")


def _apply_details(person: models.Person, details: PersonDetails) -> None:
    person.name = details.name.strip()
    person.email = details.email.strip()
    person.is_pilot = details.is_pilot
    person.is_instructor = details.is_instructor
    person.is_admin = details.is_admin
    person.certificate_level = details.certificate_level
    person.category_classes = list(details.category_classes)
    person.instrument_categories = list(details.instrument_categories)
    person.instructor_ratings = list(details.instructor_ratings)
    person.medical_class = details.medical_class
    person.medical_expires = details.medical_expires
    person.basicmed_expires = details.basicmed_expires
    person.home_airfield_id = details.home_airfield_id
    person.timezone = details.timezone


def _check_password(password: str) -> None:
    if len(password) < MIN_PASSWORD_LENGTH:
        raise PersonRejected("password", f"use at least {MIN_PASSWORD_LENGTH} characters")


def create_person(
    session: Session, school_id: int, details: PersonDetails, password: str, *, now: datetime | None = None
) -> models.Person:
    """Stage a new person of the school with a hashed initial password; ``PersonRejected`` names the bad field."""
    _check_details(session, details, None)
    _check_password(password)
    person = models.Person(
        school_id=school_id,
        password_hash=generate_password_hash(password),
        rule_sets=["faa-part61"] if details.is_pilot else [],
        practice_targets={},
        created_at=now or datetime.now(UTC),
    )
    _apply_details(person, details)
    session.add(person)
    session.flush()
    return person


def update_person(
    session: Session, person: models.Person, details: PersonDetails, password: str | None = None
) -> models.Person:
    """Change a person's details (and password, when one is given); ``PersonRejected`` names the bad field."""
    _check_details(session, details, person.id)
    if person.is_pilot and not details.is_pilot and repository.entry_ids(session, person.id):
        raise PersonRejected("is_pilot", "this person keeps a logbook; the pilot role stays")
    if password:
        _check_password(password)
        person.password_hash = generate_password_hash(password)
    _apply_details(person, details)
    session.flush()
    return person


# ---------------------------------------------------------------- sign-in throttling


@dataclass(frozen=True)
class ThrottlePolicy:
    """After ``max_failures`` failed sign-ins within ``window`` for one email from one address, refuse for ``lockout``."""

    max_failures: int = 5
    window: timedelta = timedelta(minutes=15)
    lockout: timedelta = timedelta(minutes=15)


def _throttle_key(email: str, address: str | None) -> tuple[str, str]:
    return email.strip().lower()[:254], (address or "unknown")[:64]


def sign_in_locked_until(session: Session, email: str, address: str | None, now: datetime) -> datetime | None:
    """When the lockout of (email, address) ends, or None if sign-in may be tried now."""
    row = repository.sign_in_throttle(session, *_throttle_key(email, address))
    if row is not None and row.locked_until is not None and row.locked_until > now:
        return row.locked_until
    return None


def record_sign_in_failure(
    session: Session, email: str, address: str | None, now: datetime, policy: ThrottlePolicy = ThrottlePolicy()
) -> datetime | None:
    """Count a failed sign-in; return the end of the lockout it starts (None while under the limit)."""
    row = repository.count_sign_in_failure(session, *_throttle_key(email, address), now, now - policy.window)
    if row.failures >= policy.max_failures:
        row.locked_until = now + policy.lockout
        session.flush()
        return row.locked_until
    return None


def record_sign_in_success(session: Session, email: str, address: str | None) -> None:
    """A successful sign-in clears the failures of (email, address)."""
    repository.clear_sign_in_failures(session, *_throttle_key(email, address))


# ---------------------------------------------------------------- credit feedback for the entry form


def explain_entry(person: models.Person, entry: core_logbook.Entry) -> list[Any]:
    """What ``entry`` would count toward for ``person`` under their rule sets (``planner.core.credit.CreditNote`` list)."""
    from planner.core import credit

    return credit.explain(entry, repository.pilot_to_core(person), rule_sets_for(person))


# ---------------------------------------------------------------- currency for the web pages

PRACTICE_TARGETS = "practice-targets"
DEFAULT_RULE_SETS = ("faa-part61",)


@lru_cache(maxsize=None)
def builtin_rule_set(name: str) -> RuleSet:
    """A built-in rule set (parsed once)."""
    return rulesets.load_builtin(name)


def rule_sets_for(person: models.Person) -> tuple[RuleSet, ...]:
    """The rule sets ``person`` follows (default ``faa-part61``), practice targets with their own overrides."""
    out = []
    # Only built-in names are honoured here: a stored name is never read as a file path.
    names = [n for n in dict.fromkeys(person.rule_sets or DEFAULT_RULE_SETS) if n in rulesets.builtin_names()]
    for name in names:
        rule_set = builtin_rule_set(name)
        if name == PRACTICE_TARGETS and person.practice_targets:
            rule_set = overrides.apply(rule_set, person.practice_targets)
        out.append(rule_set)
    return tuple(out)


@dataclass(frozen=True)
class PilotStatus:
    """What the dashboard shows: the report as of ``as_of``, the timeline, and a what-if if asked.

    ``logbook``: the pilot's logbook as loaded for these (for other panels of the same page).
    """

    pilot_id: int
    rule_sets: tuple[RuleSet, ...]
    report: currency.CurrencyReport
    timeline: currency.TimelineReport | None = None
    what_if: currency.WhatIfReport | None = None
    logbook: Logbook | None = None


def pilot_status(
    session: Session,
    pilot_id: int,
    as_of: date,
    *,
    timeline_range: tuple[date, date] | None = None,
    planned: Sequence[Entry] = (),
) -> PilotStatus:
    """Evaluate the pilot's rule sets as of ``as_of``; with ``planned``, also how each date moves.

    The timeline (when ``timeline_range`` is given) includes the planned entries.
    The report is the kept one when fresh; a stale kept row is re-evaluated and
    staged for storing (``planner.status``; the caller commits). Raises
    ``LookupError`` for an unknown pilot.
    """
    person = get_pilot(session, pilot_id)
    logbook = load_logbook(session, pilot_id)
    sets = rule_sets_for(person)
    report = status.report_for(session, person, as_of, logbook=logbook)
    chart = None
    if timeline_range is not None:
        chart = currency.timeline(logbook, sets, timeline_range[0], timeline_range[1], planned)
    moves = currency.what_if(logbook, sets, as_of, planned) if planned else None
    return PilotStatus(pilot_id, sets, report, chart, moves, logbook)


@dataclass(frozen=True)
class OverviewRow:
    """One pilot of the school overview.

    ``soonest``: the earliest ``valid_through`` among the pilot's regulatory
    requirements that were ever met (past dates for lapsed ones), None if none
    was ever met; rows sort by it.
    """

    pilot_id: int
    name: str
    statuses: tuple[currency.RequirementStatus, ...]
    soonest: date | None


def is_practice(status: currency.RequirementStatus) -> bool:
    """Whether a status belongs to the personal practice targets (not regulation)."""
    return status.rule_set == PRACTICE_TARGETS


def school_overview(session: Session, school_id: int, as_of: date) -> list[OverviewRow]:
    """Every pilot of the school with every requirement as of ``as_of``, soonest lapse first.

    Pilots with nothing ever met sort last, then by name. Read from the kept
    statuses in one query; only stale ones are re-evaluated, and staged for
    storing (``planner.status``; the caller commits).
    """
    rows = [
        OverviewRow(kept.person.id, kept.person.name, kept.report.requirements, kept.soonest)
        for kept in status.school_statuses(session, school_id, as_of)
    ]
    rows.sort(key=lambda row: (row.soonest is None, row.soonest or date.max, row.name))
    return rows


# ---------------------------------------------------------------- per-pilot settings


class SettingsRejected(ValueError):
    """A settings value is not acceptable; ``field`` names the form field."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(f"{field}: {message}")
        self.field = field
        self.message = message


def update_settings(
    session: Session,
    pilot_id: int,
    *,
    rule_sets: Sequence[str],
    practice_targets: dict[str, Any],
    home_airfield: str | None,
    timezone: str,
) -> models.Person:
    """Validate and stage the pilot's settings; nothing is changed when anything is refused.

    ``rule_sets``: built-in names (at least one); ``practice_targets``: overrides
    (see ``planner.rulesets.overrides``); ``home_airfield``: an airfield ident or
    None; ``timezone``: an IANA name. Raises ``SettingsRejected`` naming the field.
    """
    person = get_pilot(session, pilot_id)
    names = list(dict.fromkeys(rule_sets))
    if not names:
        raise SettingsRejected("rule_sets", "choose at least one rule set")
    for name in names:
        if name not in rulesets.builtin_names():
            raise SettingsRejected("rule_sets", f"unknown rule set {name!r}")
    try:
        canon = overrides.validate(builtin_rule_set(PRACTICE_TARGETS), practice_targets)
    except rulesets.RuleSetError as exc:
        raise SettingsRejected("practice_targets", str(exc)) from None
    chosen = None
    if home_airfield:
        chosen = repository.find_by(session, models.Airfield, ident=home_airfield)
        if chosen is None:
            raise SettingsRejected("home_airfield", f"unknown airfield {home_airfield!r}")
    try:
        if not timezone or timezone != timezone.strip():
            raise ValueError
        ZoneInfo(timezone)
    except (ValueError, ZoneInfoNotFoundError):
        raise SettingsRejected("timezone", f"not a known IANA time zone name: {timezone!r}") from None
    person.rule_sets = names
    person.practice_targets = canon
    person.home_airfield = chosen
    person.timezone = timezone
    session.flush()
    return person


# ------------------------------------------------------------------ personal minimums

MAX_CEILING_FT = 10_000
MAX_VISIBILITY_SM = 10
MAX_CROSSWIND_KT = 50


def _set_minimums(person: models.Person, ceiling_ft: Any, visibility_sm: Any, crosswind_kt: Any) -> None:
    """Check and set the three baseline minimums (all three, or all None); raises ``SettingsRejected``."""
    given = {"min_ceiling_ft": ceiling_ft, "min_visibility_sm": visibility_sm, "min_crosswind_kt": crosswind_kt}
    if all(v is None for v in given.values()):
        person.min_ceiling_ft = person.min_visibility_hundredths_sm = person.min_crosswind_kt = None
        return
    for name, value in given.items():
        if value is None:
            raise SettingsRejected(name, "give all three minimums, or leave all three empty")
    try:
        ceiling = whole_number(ceiling_ft)
        if not 0 <= ceiling <= MAX_CEILING_FT:
            raise ValueError
    except (TypeError, ValueError, OverflowError):
        raise SettingsRejected("min_ceiling_ft", f"a whole number of feet from 0 to {MAX_CEILING_FT:,}") from None
    try:
        hundredths = float(visibility_sm) * 100
        if hundredths != hundredths or abs(hundredths - round(hundredths)) > 1e-6:
            raise ValueError
        hundredths = round(hundredths)
        if not 0 <= hundredths <= MAX_VISIBILITY_SM * 100:
            raise ValueError
    except (TypeError, ValueError, OverflowError):
        raise SettingsRejected(
            "min_visibility_sm", f"statute miles from 0 to {MAX_VISIBILITY_SM}, at most two decimals (e.g. 1.5)"
        ) from None
    try:
        crosswind = whole_number(crosswind_kt)
        if not 0 <= crosswind <= MAX_CROSSWIND_KT:
            raise ValueError
    except (TypeError, ValueError, OverflowError):
        raise SettingsRejected("min_crosswind_kt", f"whole knots from 0 to {MAX_CROSSWIND_KT}") from None
    person.min_ceiling_ft = ceiling
    person.min_visibility_hundredths_sm = hundredths
    person.min_crosswind_kt = crosswind


def whole_number(value: Any) -> int:
    """``value`` as an int when it is a whole number (``3``, ``"3"``, ``3.0``); TypeError/ValueError otherwise."""
    if isinstance(value, bool):
        raise TypeError
    number = float(value)
    if number != int(number):
        raise ValueError
    return int(number)


def update_minimums(
    session: Session, pilot_id: int, *, ceiling_ft: Any, visibility_sm: Any, crosswind_kt: Any
) -> models.Person:
    """Validate and stage the pilot's own baseline personal minimums; all three, or all None to clear.

    Ceiling: whole feet 0..10,000; visibility: statute miles 0..10 in hundredths;
    crosswind: whole knots 0..50 (product choices). Raises ``SettingsRejected``
    naming the field (``min_ceiling_ft``, ``min_visibility_sm``, ``min_crosswind_kt``);
    nothing is changed then.
    """
    person = get_pilot(session, pilot_id)
    _set_minimums(person, ceiling_ft, visibility_sm, crosswind_kt)
    session.flush()
    return person


def update_night_practice(session: Session, pilot_id: int, *, allowed: Any) -> models.Person:
    """Stage whether the pilot allows practice under a view-limiting device at night (default: daylight only).

    ``allowed`` must be True or False; raises ``SettingsRejected`` naming
    ``night_practice`` otherwise.
    """
    if not isinstance(allowed, bool):
        raise SettingsRejected("night_practice", "choose yes or no")
    person = get_pilot(session, pilot_id)
    person.night_practice = allowed
    session.flush()
    return person


def baseline_minimums(person: models.Person) -> minimums.Minimums | None:
    """The pilot's baseline personal minimums, or None when not (fully) set."""
    if None in (person.min_ceiling_ft, person.min_visibility_hundredths_sm, person.min_crosswind_kt):
        return None
    return minimums.Minimums(
        ceiling_ft=person.min_ceiling_ft,
        visibility_sm=person.min_visibility_hundredths_sm / 100,
        crosswind_kt=float(person.min_crosswind_kt),
    )


def advised_minimums(
    session: Session, pilot_id: int, as_of: date, *, logbook: Logbook | None = None
) -> minimums.Advice | None:
    """Advised personal minimums for ``as_of`` from the pilot's baseline and logbook; None without a baseline.

    ``logbook``: the pilot's current logbook if the caller has already loaded it (it is not read again).
    Advisory only (``planner.CAUTION``). Raises ``LookupError`` for an unknown pilot.
    """
    person = get_pilot(session, pilot_id)
    baseline = baseline_minimums(person)
    if baseline is None:
        return None
    entries = (logbook if logbook is not None else load_logbook(session, pilot_id)).entries
    return minimums.advise(baseline, minimums.recency_from(entries, as_of))


# Last: ``planner.status`` uses the functions above, and importing it registers the settler that
# re-evaluates a pilot's kept status before each commit that changed their data.
from planner import status  # noqa: E402
