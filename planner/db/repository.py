"""Rows <-> core dataclasses, and the only ways to change a logbook entry.

The core never sees ORM objects: ``to_logbook`` turns a person and their
entry rows into a frozen ``planner.core.logbook.Logbook``, and
``current_logbook`` reads one straight from plain rows (the quick way to
evaluate a whole logbook). Writes go through
``add_entries``, ``revise_entry``, ``delete_entry`` and ``restore_entry``,
which validate first (so a bad value gets a message naming the entry and the
field, not a constraint error), keep the previous state of every changed
entry in ``entry_revisions`` and use the ``version`` column to refuse a
change made from a stale copy. Nothing here commits: the caller owns the
transaction.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Callable, Iterable, Sequence
from datetime import UTC, date, datetime
from typing import Any

from typing import TypeVar

from sqlalchemy import func, or_, select, update
from sqlalchemy.orm import Session, selectinload
from sqlalchemy.exc import IntegrityError, OperationalError
from sqlalchemy.orm.exc import StaleDataError

from planner.core import logbook as core
from planner.db import models

Row = TypeVar("Row", bound=models.Base)

# Core field name -> column name for hours (stored as integer hundredths).
HOURS_COLUMNS = {
    "instrument_actual_hours": "instrument_actual_hundredths",
    "instrument_simulated_hours": "instrument_simulated_hundredths",
    "total_hours": "total_hundredths",
    "pic_hours": "pic_hundredths",
    "dual_received_hours": "dual_received_hundredths",
    "solo_hours": "solo_hundredths",
}
# Count fields share their names with the entry columns (each checked >= 0 by the database).
COUNT_FIELDS = models.ENTRY_COUNT_COLUMNS
# Core text field -> longest value the column holds.
TEXT_LIMITS = {
    "id": 64,
    "aircraft_class": 32,
    "safety_pilot": 200,
    "instructor": 200,
    "aircraft": 64,
    "route": 200,
}
APPROACH_TEXT_LIMITS = {"type": 64, "airfield": 64, "runway": 16}
MAX_COUNT = 2_000_000_000  # fits a 32-bit INTEGER column
_TIME = re.compile(r"^([01]\d|2[0-3]):[0-5]\d$")
FLUSH_BATCH = 1000  # add_entries sends rows to the database this many at a time


class EntryRejected(ValueError):
    """An entry that cannot be stored; the message names the entry id and the field."""

    def __init__(self, entry_id: str, field: str, problem: str) -> None:
        super().__init__(f"entry {entry_id!r}, field {field!r}: {problem}")
        self.entry_id = entry_id
        self.field = field


class EntryConflict(RuntimeError):
    """The entry changed since the caller read it (optimistic locking)."""


def _now(now: datetime | None) -> datetime:
    return now if now is not None else datetime.now(UTC)


# ---------------------------------------------------------------- validation


def to_hundredths(hours: float, entry_id: str = "?", field: str = "hours") -> int:
    """Decimal hours -> integer hundredths; refuses negatives and finer precision."""
    if isinstance(hours, bool) or not isinstance(hours, (int, float)):
        raise EntryRejected(entry_id, field, f"must be a number of hours, got {hours!r}")
    scaled = round(hours * 100)
    if hours < 0:
        raise EntryRejected(entry_id, field, f"must be >= 0, got {hours!r}")
    if abs(hours * 100 - scaled) > 1e-6:
        raise EntryRejected(entry_id, field, f"at most two decimals (hundredths of an hour), got {hours!r}")
    if scaled > MAX_COUNT:
        raise EntryRejected(entry_id, field, f"too large: {hours!r}")
    return scaled


def validate_entry(entry: core.Entry) -> None:
    """Raise ``EntryRejected`` if ``entry`` breaks a rule the database also enforces."""
    eid = entry.id
    if not isinstance(entry.id, str) or not entry.id.strip():
        raise EntryRejected(str(eid), "id", "must be a non-empty text")
    if not isinstance(entry.date, date) or isinstance(entry.date, datetime):
        raise EntryRejected(eid, "date", f"must be a date, got {entry.date!r}")
    if entry.device not in core.DEVICES:
        raise EntryRejected(eid, "device", f"must be one of {', '.join(core.DEVICES)}; got {entry.device!r}")
    if entry.category not in core.CATEGORIES:
        raise EntryRejected(
            eid, "category", f"must be one of {', '.join(core.CATEGORIES)}; got {entry.category!r}"
        )
    if entry.conditions is not None and entry.conditions not in core.CONDITIONS:
        raise EntryRejected(
            eid, "conditions", f"must be one of {', '.join(core.CONDITIONS)}; got {entry.conditions!r}"
        )
    for name in COUNT_FIELDS:
        value = getattr(entry, name)
        if isinstance(value, bool) or not isinstance(value, int) or not 0 <= value <= MAX_COUNT:
            raise EntryRejected(eid, name, f"must be a whole number >= 0, got {value!r}")
    if entry.night_full_stop_landings > entry.landings:
        raise EntryRejected(
            eid,
            "night_full_stop_landings",
            f"{entry.night_full_stop_landings} is more than the {entry.landings} landings logged "
            "(night full-stop landings are part of all landings)",
        )
    if entry.unlogged_approaches and entry.approaches:
        raise EntryRejected(eid, "approaches", "give either a list of approaches or a number, not both")
    for name in HOURS_COLUMNS:
        to_hundredths(getattr(entry, name), eid, name)
    for name, limit in TEXT_LIMITS.items():
        value = getattr(entry, name)
        if value is not None and len(value) > limit:
            raise EntryRejected(eid, name, f"at most {limit} characters")
    for name in ("start_time", "end_time"):
        value = getattr(entry, name)
        if value is not None and not _TIME.match(value):
            raise EntryRejected(eid, name, f'must be local time "HH:MM", got {value!r}')
    for i, appr in enumerate(entry.approaches, start=1):
        if appr.conditions is not None and appr.conditions not in core.CONDITIONS:
            raise EntryRejected(eid, f"approaches[{i}].conditions", f"must be actual or simulated, got {appr.conditions!r}")
        for name, limit in APPROACH_TEXT_LIMITS.items():
            value = getattr(appr, name)
            if value is not None and len(value) > limit:
                raise EntryRejected(eid, f"approaches[{i}].{name}", f"at most {limit} characters")
    for i, kind in enumerate(entry.checks, start=1):
        if not isinstance(kind, str) or not kind.strip() or len(kind) > 64:
            raise EntryRejected(eid, f"checks[{i}]", f"must be a non-empty name of at most 64 characters, got {kind!r}")


# ---------------------------------------------------------------- rows -> core


def pilot_to_core(person: models.Person) -> core.Pilot:
    """The engine's view of a person."""
    return core.Pilot(
        name=person.name,
        home_timezone=person.timezone,
        instrument_categories=tuple(person.instrument_categories or ()),
        category_classes=tuple(person.category_classes or ()),
    )


_APPROACH_FIELDS = ("type", "airfield", "runway", "to_minimums", "coupled", "conditions")
# The entry columns a core ``Entry`` is made of (hours as integer hundredths).
_CORE_ENTRY_COLUMNS = (
    "external_id", "date", "device", "category", "aircraft_class", "conditions", *COUNT_FIELDS, "course_tracking",
    "safety_pilot_name", "instructor_name", "remarks", "aircraft_ident", "route", "start_time", "end_time",
    *HOURS_COLUMNS.values(),
)


def _core_entry(v: dict[str, Any], approaches: tuple[core.Approach, ...], checks: tuple[str, ...]) -> core.Entry:
    """An entry's column values (``_CORE_ENTRY_COLUMNS``) with its approaches and checks, as a core ``Entry``."""
    hours = {name: v[column] / 100 for name, column in HOURS_COLUMNS.items()}
    return core.Entry(
        id=v["external_id"],
        date=v["date"],
        device=v["device"],
        category=v["category"],
        aircraft_class=v["aircraft_class"],
        conditions=v["conditions"],
        approaches=approaches,
        unlogged_approaches=v["unlogged_approaches"],
        holds=v["holds"],
        course_tracking=v["course_tracking"],
        landings=v["landings"],
        night_full_stop_landings=v["night_full_stop_landings"],
        partial_panel_approaches=v["partial_panel_approaches"],
        ua_nose_high=v["ua_nose_high"],
        ua_nose_low=v["ua_nose_low"],
        checks=checks,
        safety_pilot=v["safety_pilot_name"],
        instructor=v["instructor_name"],
        remarks=v["remarks"],
        aircraft=v["aircraft_ident"],
        route=v["route"],
        start_time=v["start_time"],
        end_time=v["end_time"],
        **hours,
    )


def entry_to_core(row: models.Entry) -> core.Entry:
    """One entry row (with its approaches and checks) as a core ``Entry``."""
    return _core_entry(
        {name: getattr(row, name) for name in _CORE_ENTRY_COLUMNS},
        tuple(core.Approach(**{name: getattr(a, name) for name in _APPROACH_FIELDS}) for a in row.approaches),
        tuple(c.kind for c in row.checks),
    )


def to_logbook(person: models.Person, entries: Iterable[models.Entry]) -> core.Logbook:
    """A person and entry rows as a core ``Logbook`` (deleted entries left out)."""
    return core.Logbook(
        pilot=pilot_to_core(person),
        entries=tuple(entry_to_core(e) for e in entries if e.deleted_at is None),
    )


def entry_snapshot(row: models.Entry) -> dict[str, Any]:
    """The entry's state as JSON-ready data: the core fields plus record-keeping columns."""
    data = dataclasses.asdict(entry_to_core(row))
    data["date"] = row.date.isoformat()
    data["approaches"] = [dict(a) for a in data["approaches"]]
    data["checks"] = list(data["checks"])
    data["_record"] = {
        "version": row.version,
        "deleted_at": row.deleted_at.isoformat() if row.deleted_at else None,
        "aircraft_id": row.aircraft_id,
        "device_id": row.device_id,
        "safety_pilot_id": row.safety_pilot_id,
        "instructor_id": row.instructor_id,
    }
    return data


def entry_from_snapshot(snapshot: dict[str, Any]) -> core.Entry:
    """A revision's snapshot back as a core ``Entry`` (to show or restore an older state)."""
    data = {k: v for k, v in snapshot.items() if not k.startswith("_")}
    data["date"] = date.fromisoformat(data["date"])
    data["approaches"] = tuple(core.Approach(**a) for a in data["approaches"])
    data["checks"] = tuple(data["checks"])
    return core.Entry(**data)


# ---------------------------------------------------------------- queries


def _entries_query(pilot_id: int, include_deleted: bool = False) -> Any:
    query = (
        select(models.Entry)
        .where(models.Entry.pilot_id == pilot_id)
        .options(selectinload(models.Entry.approaches), selectinload(models.Entry.checks))
        .order_by(models.Entry.date, models.Entry.id)
    )
    if not include_deleted:
        query = query.where(models.Entry.deleted_at.is_(None))
    return query


def current_entries(session: Session, pilot_id: int) -> list[models.Entry]:
    """The pilot's entries that are not deleted, oldest first."""
    return list(session.scalars(_entries_query(pilot_id)))


def current_core_entries(session: Session, pilot_id: int) -> tuple[core.Entry, ...]:
    """The pilot's entries that are not deleted, oldest first, as core entries.

    The same as ``to_logbook(person, current_entries(session, pilot_id)).entries``
    (same order, same values), read as plain rows: three queries (entries,
    then their approaches and checks, as the ORM's select-in loading does) and
    no ORM objects, which at thousands of entries is several times quicker.
    Pending changes of the session are flushed first (autoflush).
    """
    E, A, C = models.Entry, models.Approach, models.EntryCheck
    live = (E.pilot_id == pilot_id, E.deleted_at.is_(None))
    rows = session.execute(
        select(E.id, *(getattr(E, name) for name in _CORE_ENTRY_COLUMNS)).where(*live).order_by(E.date, E.id)
    ).all()
    approaches: dict[int, list[core.Approach]] = {}
    for entry_id, *values in session.execute(
        select(A.entry_id, *(getattr(A, name) for name in _APPROACH_FIELDS))
        .join(E, E.id == A.entry_id)
        .where(*live)
        .order_by(A.entry_id, A.position)
    ):
        approaches.setdefault(entry_id, []).append(core.Approach(**dict(zip(_APPROACH_FIELDS, values))))
    checks: dict[int, list[str]] = {}
    for entry_id, kind in session.execute(
        select(C.entry_id, C.kind).join(E, E.id == C.entry_id).where(*live).order_by(C.entry_id, C.position)
    ):
        checks.setdefault(entry_id, []).append(kind)
    return tuple(
        _core_entry(dict(zip(_CORE_ENTRY_COLUMNS, values)), tuple(approaches.get(entry_id, ())),
                    tuple(checks.get(entry_id, ())))
        for entry_id, *values in rows
    )


def current_logbook(session: Session, person: models.Person) -> core.Logbook:
    """The person and their current entries as a core ``Logbook`` (see ``current_core_entries``)."""
    return core.Logbook(pilot=pilot_to_core(person), entries=current_core_entries(session, person.id))


def all_entries(session: Session, pilot_id: int) -> list[models.Entry]:
    """All of the pilot's entries, deleted ones included, oldest first."""
    return list(session.scalars(_entries_query(pilot_id, include_deleted=True)))


def find_entry(session: Session, pilot_id: int, external_id: str) -> models.Entry | None:
    """The pilot's entry with interchange id ``external_id`` (deleted or not), or None."""
    return session.scalars(
        select(models.Entry).where(
            models.Entry.pilot_id == pilot_id, models.Entry.external_id == external_id
        )
    ).one_or_none()


def find_by(session: Session, model: type[Row], **keys: Any) -> Row | None:
    """The one row of ``model`` whose columns equal ``keys`` (a natural key), or None."""
    return session.scalars(select(model).filter_by(**keys)).one_or_none()


def person_by_email(session: Session, email: str) -> models.Person | None:
    """The person with this email, compared without regard to case."""
    return session.scalars(
        select(models.Person).where(func.lower(models.Person.email) == email.strip().lower())
    ).one_or_none()


def pilots_with_school(session: Session) -> list[tuple[models.Person, str | None]]:
    """Every person who keeps a logbook, with their school's slug, in id order."""
    rows = session.execute(
        select(models.Person, models.School.slug)
        .outerjoin(models.School, models.Person.school_id == models.School.id)
        .where(models.Person.is_pilot.is_(True))
        .order_by(models.Person.id)
    )
    return [(person, slug) for person, slug in rows]


def entry_ids(session: Session, pilot_id: int) -> set[str]:
    """The interchange ids of all the pilot's entries, deleted ones included."""
    return set(session.scalars(select(models.Entry.external_id).where(models.Entry.pilot_id == pilot_id)))


def history(session: Session, row: models.Entry) -> list[models.EntryRevision]:
    """Earlier states of the entry, oldest first."""
    return list(
        session.scalars(
            select(models.EntryRevision)
            .where(models.EntryRevision.entry_id == row.id)
            .order_by(models.EntryRevision.version)
        )
    )


# ---------------------------------------------------------------- writes


class _Links:
    """Finds the aircraft, device and people an entry's logged text refers to (cached per call)."""

    def __init__(self, session: Session, school_id: int | None) -> None:
        self.session = session
        self.school_id = school_id
        self._cache: dict[tuple[str, str], int | None] = {}

    def aircraft(self, ident: str | None) -> int | None:
        return self._lookup("aircraft", ident, models.Aircraft.registration, models.Aircraft.id)

    def device(self, ident: str | None) -> int | None:
        return self._lookup("device", ident, models.TrainingDevice.identifier, models.TrainingDevice.id)

    def person(self, name: str | None) -> int | None:
        # Only within the pilot's own school, and only when the name is unambiguous.
        if not name or self.school_id is None:
            return None
        key = ("person", name)
        if key not in self._cache:
            ids = list(
                self.session.scalars(
                    select(models.Person.id).where(
                        models.Person.school_id == self.school_id, models.Person.name == name
                    )
                )
            )
            self._cache[key] = ids[0] if len(ids) == 1 else None
        return self._cache[key]

    def _lookup(self, kind: str, ident: str | None, column: Any, pk: Any) -> int | None:
        if not ident:
            return None
        key = (kind, ident)
        if key not in self._cache:
            self._cache[key] = self.session.scalars(select(pk).where(column == ident)).one_or_none()
        return self._cache[key]


def _fill(row: models.Entry, entry: core.Entry, links: _Links) -> None:
    """Copy the core entry's values onto the row (approaches and checks included)."""
    row.external_id = entry.id
    row.date = entry.date
    row.device = entry.device
    row.category = entry.category
    row.aircraft_class = entry.aircraft_class
    row.conditions = entry.conditions
    for name in COUNT_FIELDS:
        setattr(row, name, getattr(entry, name))
    row.course_tracking = entry.course_tracking
    for name, column in HOURS_COLUMNS.items():
        setattr(row, column, to_hundredths(getattr(entry, name), entry.id, name))
    row.safety_pilot_name = entry.safety_pilot
    row.safety_pilot_id = links.person(entry.safety_pilot)
    row.instructor_name = entry.instructor
    row.instructor_id = links.person(entry.instructor)
    row.remarks = entry.remarks
    row.aircraft_ident = entry.aircraft
    if entry.device == "aircraft":
        row.aircraft_id, row.device_id = links.aircraft(entry.aircraft), None
    else:
        row.aircraft_id, row.device_id = None, links.device(entry.aircraft)
    row.route = entry.route
    row.start_time = entry.start_time
    row.end_time = entry.end_time
    row.approaches = [
        models.Approach(
            position=i,
            type=a.type,
            airfield=a.airfield,
            runway=a.runway,
            conditions=a.conditions,
            to_minimums=a.to_minimums,
            coupled=a.coupled,
        )
        for i, a in enumerate(entry.approaches)
    ]
    row.checks = [models.EntryCheck(position=i, kind=k) for i, k in enumerate(entry.checks)]


def apply_pilot(person: models.Person, pilot: core.Pilot) -> None:
    """Copy a core ``Pilot`` block (name, home time zone, ratings) onto a person."""
    person.name = pilot.name
    person.timezone = pilot.home_timezone
    person.instrument_categories = list(pilot.instrument_categories)
    person.category_classes = list(pilot.category_classes)


def add_entries(
    session: Session,
    person: models.Person,
    entries: Sequence[core.Entry],
    *,
    now: datetime | None = None,
    progress: Callable[[str], None] | None = None,
) -> list[models.Entry]:
    """Stage new entries for ``person`` (validated first; nothing is staged if one is bad).

    Rows are flushed (sent, not committed) in batches of ``FLUSH_BATCH``;
    ``progress`` hears "stored N/M entries" after each batch of a large import.
    Raises ``EntryRejected`` for a bad value or an id already in this pilot's
    logbook (deleted entries included) or repeated in ``entries``.
    """
    for entry in entries:
        validate_entry(entry)
    seen: set[str] = set()
    for entry in entries:
        if entry.id in seen:
            raise EntryRejected(entry.id, "id", "appears twice in the entries being added")
        seen.add(entry.id)
    if person.id is not None and seen:
        existing = entry_ids(session, person.id)
        clash = sorted(seen & existing)
        if clash:
            more = f" (and {len(clash) - 1} more)" if len(clash) > 1 else ""
            raise EntryRejected(
                clash[0], "id", f"already present in {person.name}'s logbook{more}; nothing was added"
            )
    stamp = _now(now)
    links = _Links(session, person.school_id)
    rows = []
    for n, entry in enumerate(entries, start=1):
        row = models.Entry(pilot=person, version=1, created_at=stamp, updated_at=stamp, deleted_at=None)
        _fill(row, entry, links)
        session.add(row)
        rows.append(row)
        if n % FLUSH_BATCH == 0:
            session.flush()
            if progress is not None:
                progress(f"stored {n}/{len(entries)} entries (not yet committed)")
    session.flush()
    return rows


class PilotBusy(RuntimeError):
    """The pilot's logbook is being written by another request and the lock did not come in time; try again."""


def lock_pilot(session: Session, person: models.Person) -> None:
    """Hold the pilot's logbook against other writers until the transaction ends.

    Call it before reading what the new write depends on (the ids in use).
    PostgreSQL locks the person row (``FOR NO KEY UPDATE``, the lock an
    ordinary update of the row takes anyway); SQLite takes the database write
    lock with a no-op ``UPDATE``. A SQLite lock not had within the busy
    timeout raises ``PilotBusy``.
    """
    P = models.Person
    if session.get_bind().dialect.name == "sqlite":
        try:
            session.execute(update(P.__table__).where(P.__table__.c.id == person.id).values(id=P.__table__.c.id))
        except OperationalError as exc:
            if "locked" not in str(exc.orig):
                raise
            raise PilotBusy(f"{person.name}'s logbook is busy with another save; try again in a moment") from None
        return
    session.execute(select(P.id).where(P.id == person.id).with_for_update(key_share=True)).all()


def fresh_entry_id(session: Session, person: models.Person, base: str) -> str:
    """``base``, or ``base-2``, ``base-3`` ... : the first id not used in the pilot's logbook (deleted entries count)."""
    taken = entry_ids(session, person.id)
    candidate, n = base, 1
    while candidate in taken:
        n += 1
        candidate = f"{base}-{n}"
    return candidate


def add_new_entry(session: Session, person: models.Person, entry: core.Entry, *, base: str,
                  now: datetime | None = None) -> models.Entry:
    """Stage one new entry under the first free id from ``base`` (see ``fresh_entry_id``); return the row.

    The pilot is locked first (``lock_pilot``), so two requests adding an
    entry for the same pilot and day at the same moment get different ids
    instead of one failing on the unique key.
    """
    lock_pilot(session, person)
    entry = dataclasses.replace(entry, id=fresh_entry_id(session, person, base))
    return add_entries(session, person, [entry], now=now)[0]


def _claim_version(
    session: Session, row: models.Entry, action: str, changed_by: models.Person | None, stamp: datetime
) -> None:
    """Bump the version (UPDATE ... WHERE version = <old>) and record the state before the change.

    The guarded UPDATE runs first, so a save from a session holding an older
    copy fails here with ``EntryConflict`` before anything else is written.
    The caller must then roll the session back.
    """
    before = entry_snapshot(row)
    old_version, external_id = row.version, row.external_id
    row.version = old_version + 1
    row.updated_at = stamp
    try:
        session.flush()
    except StaleDataError:
        raise EntryConflict(
            f"entry {external_id!r} was changed by someone else since it was loaded; "
            "reload it and apply your change again"
        ) from None
    session.add(
        models.EntryRevision(
            entry_id=row.id,
            version=old_version,
            action=action,
            snapshot=before,
            changed_at=stamp,
            changed_by_id=changed_by.id if changed_by is not None else None,
        )
    )


def _check_version(row: models.Entry, expected_version: int | None) -> None:
    if expected_version is not None and row.version != expected_version:
        raise EntryConflict(
            f"entry {row.external_id!r} was changed elsewhere (now version {row.version}, "
            f"you edited version {expected_version}); reload it and apply your change again"
        )


def revise_entry(
    session: Session,
    row: models.Entry,
    new: core.Entry,
    *,
    expected_version: int | None = None,
    changed_by: models.Person | None = None,
    now: datetime | None = None,
) -> models.Entry:
    """Replace the entry's content with ``new``, keeping the previous state as a revision.

    The entry keeps its id (``new.id`` must match). Raises ``EntryRejected``
    for bad values, ``EntryConflict`` when ``expected_version`` is stale, and
    refuses to edit a deleted entry (restore it first).
    """
    validate_entry(new)
    if new.id != row.external_id:
        raise EntryRejected(new.id, "id", f"an edit keeps the entry's id ({row.external_id!r})")
    if row.deleted_at is not None:
        raise EntryRejected(row.external_id, "id", "the entry is deleted; restore it before editing")
    _check_version(row, expected_version)
    stamp = _now(now)
    _claim_version(session, row, "edit", changed_by, stamp)
    # Remove the old approach/check rows first: their (entry_id, position) would clash with the new ones.
    row.approaches.clear()
    row.checks.clear()
    session.flush()
    _fill(row, new, _Links(session, row.pilot.school_id))
    session.flush()
    return row


def delete_entry(
    session: Session,
    row: models.Entry,
    *,
    expected_version: int | None = None,
    changed_by: models.Person | None = None,
    now: datetime | None = None,
) -> models.Entry:
    """Mark the entry deleted (reversible with ``restore_entry``); the row and its history stay."""
    if row.deleted_at is not None:
        return row
    _check_version(row, expected_version)
    stamp = _now(now)
    _claim_version(session, row, "delete", changed_by, stamp)
    row.deleted_at = stamp
    session.flush()
    return row


def restore_entry(
    session: Session,
    row: models.Entry,
    *,
    expected_version: int | None = None,
    changed_by: models.Person | None = None,
    now: datetime | None = None,
) -> models.Entry:
    """Undo a delete."""
    if row.deleted_at is None:
        return row
    _check_version(row, expected_version)
    stamp = _now(now)
    _claim_version(session, row, "restore", changed_by, stamp)
    row.deleted_at = None
    session.flush()
    return row


# ---------------------------------------------------------------- web queries (logbook list, school lists)


def search_entries(
    session: Session,
    pilot_id: int,
    *,
    date_from: date | None = None,
    date_to: date | None = None,
    device: str | None = None,
    text: str | None = None,
    with_approaches: bool = False,
    include_deleted: bool = False,
    offset: int = 0,
    limit: int = 25,
) -> tuple[list[models.Entry], int]:
    """One page of the pilot's entries, newest first, and how many match in all.

    ``date_from``/``date_to`` are inclusive; ``text`` matches (case-insensitive,
    literally) the id, route, remarks, aircraft, safety pilot, instructor, or an
    approach's type or airfield; ``with_approaches`` keeps entries with at
    least one approach (detailed or counted).
    """
    E, A = models.Entry, models.Approach
    conditions: list[Any] = [E.pilot_id == pilot_id]
    if not include_deleted:
        conditions.append(E.deleted_at.is_(None))
    if date_from is not None:
        conditions.append(E.date >= date_from)
    if date_to is not None:
        conditions.append(E.date <= date_to)
    if device:
        conditions.append(E.device == device)
    has_approach = select(A.id).where(A.entry_id == E.id).exists()
    if with_approaches:
        conditions.append(or_(E.unlogged_approaches > 0, has_approach))
    if text:
        approach_match = (
            select(A.id)
            .where(A.entry_id == E.id, or_(A.type.icontains(text, autoescape=True), A.airfield.icontains(text, autoescape=True)))
            .exists()
        )
        conditions.append(
            or_(
                *(
                    column.icontains(text, autoescape=True)
                    for column in (E.external_id, E.route, E.remarks, E.aircraft_ident, E.safety_pilot_name, E.instructor_name)
                ),
                approach_match,
            )
        )
    total = session.scalar(select(func.count()).select_from(E).where(*conditions)) or 0
    rows = session.scalars(
        select(E)
        .where(*conditions)
        .options(selectinload(E.approaches), selectinload(E.checks))
        .order_by(E.date.desc(), E.id.desc())
        .offset(max(offset, 0))
        .limit(limit)
    )
    return list(rows), int(total)


def school_aircraft(session: Session, school_id: int | None) -> list[models.Aircraft]:
    """The school's aircraft, by registration."""
    if school_id is None:
        return []
    return list(
        session.scalars(
            select(models.Aircraft).where(models.Aircraft.school_id == school_id).order_by(models.Aircraft.registration)
        )
    )


def school_devices(session: Session, school_id: int | None) -> list[models.TrainingDevice]:
    """The school's training devices, by identifier."""
    if school_id is None:
        return []
    return list(
        session.scalars(
            select(models.TrainingDevice)
            .where(models.TrainingDevice.school_id == school_id)
            .order_by(models.TrainingDevice.identifier)
        )
    )


def school_people(session: Session, school_id: int | None, *, pilots_only: bool = False) -> list[models.Person]:
    """Everyone of the school (with ``pilots_only``, those who keep a logbook), by name."""
    if school_id is None:
        return []
    query = select(models.Person).where(models.Person.school_id == school_id)
    if pilots_only:
        query = query.where(models.Person.is_pilot.is_(True))
    return list(session.scalars(query.order_by(models.Person.name, models.Person.id)))


def school_availability(session: Session, school_id: int) -> list[models.AvailabilityWindow]:
    """Availability windows of the school's people, aircraft and training devices (any order)."""
    W = models.AvailabilityWindow
    people = select(models.Person.id).where(models.Person.school_id == school_id)
    aircraft = select(models.Aircraft.id).where(models.Aircraft.school_id == school_id)
    devices = select(models.TrainingDevice.id).where(models.TrainingDevice.school_id == school_id)
    return list(
        session.scalars(
            select(W).where(or_(W.person_id.in_(people), W.aircraft_id.in_(aircraft), W.device_id.in_(devices)))
        )
    )


def school_people_by_id(session: Session, school_id: int) -> list[models.Person]:
    """Everyone of the school in the order they were created (by id)."""
    return list(session.scalars(select(models.Person).where(models.Person.school_id == school_id).order_by(models.Person.id)))


def school_by_slug(session: Session, slug: str) -> models.School | None:
    """The school with this slug, if any."""
    return find_by(session, models.School, slug=slug)


def all_airfields(session: Session) -> list[models.Airfield]:
    """Every airfield, by identifier."""
    return list(session.scalars(select(models.Airfield).order_by(models.Airfield.ident)))


# ---------------------------------------------------------------- sign-in throttling


def sign_in_throttle(session: Session, email: str, address: str) -> models.SignInThrottle | None:
    """The failure counter for (email, address), if any."""
    return session.scalars(
        select(models.SignInThrottle).where(
            models.SignInThrottle.email == email, models.SignInThrottle.address == address
        )
    ).one_or_none()


def count_sign_in_failure(session: Session, email: str, address: str, now: datetime, window_start_before: datetime) -> models.SignInThrottle:
    """Add one failure to (email, address); a counter whose window began before ``window_start_before`` starts over.

    The increment is done by the database (``failures = failures + 1``) so that
    concurrent workers do not lose counts; a counter created at the same moment
    by another worker is picked up after a unique-constraint clash.
    """
    row = sign_in_throttle(session, email, address)
    if row is None:
        session.add(models.SignInThrottle(email=email, address=address, failures=0, window_started_at=now))
        try:
            session.flush()
        except IntegrityError:
            session.rollback()
        row = sign_in_throttle(session, email, address)
        assert row is not None
    if row.window_started_at < window_start_before:
        row.failures = 0
        row.window_started_at = now
        row.locked_until = None
        session.flush()
    row.failures = models.SignInThrottle.failures + 1  # type: ignore[assignment]
    session.flush()
    session.refresh(row)
    return row


def clear_sign_in_failures(session: Session, email: str, address: str) -> None:
    """Forget the failures of (email, address) after a successful sign-in."""
    row = sign_in_throttle(session, email, address)
    if row is not None:
        session.delete(row)
        session.flush()
