"""The tables. Every one is created by an Alembic revision in ``migrations/``.

Conventions: singular class names, plural snake-case tables, ``<thing>_id``
foreign keys. Hours are integer hundredths of an hour (``*_hundredths``).
Instants are UTC (see ``UTCDateTime``); local dates are plain dates.
A logbook is a legal record: entries are never overwritten or hard-deleted;
each edit or delete stores the previous state in ``entry_revisions``.
"""

from __future__ import annotations

from datetime import date, datetime
from typing import Any

from sqlalchemy import (
    JSON,
    Boolean,
    CheckConstraint,
    Date,
    Float,
    ForeignKey,
    Index,
    Integer,
    String,
    Text,
    UniqueConstraint,
    false,
)
from sqlalchemy.orm import Mapped, mapped_column, relationship

from planner.core.logbook import CATEGORIES, CONDITIONS, DEVICES
from planner.db.base import Base, Count, Hundredths, Ident, Instant, JSONList, Name, UTCDateTime, intpk

CERTIFICATE_LEVELS = ("none", "student", "sport", "recreational", "private", "commercial", "atp")
MEDICAL_CLASSES = ("first", "second", "third")
DEVICE_KINDS = ("ffs", "ftd", "atd")  # training devices; DEVICES adds "aircraft"
REVISION_ACTIONS = ("edit", "delete", "restore")


def _in(column: str, values: tuple[str, ...], nullable: bool = False) -> str:
    """SQL for ``column IN (...)``, optionally allowing NULL."""
    listed = ", ".join(f"'{v}'" for v in values)
    clause = f"{column} IN ({listed})"
    return f"{column} IS NULL OR {clause}" if nullable else clause


class School(Base):
    """A flight school or club: the boundary of who sees whose data."""

    __tablename__ = "schools"

    id: Mapped[intpk]
    slug: Mapped[Ident] = mapped_column(unique=True)
    name: Mapped[Name]
    home_airfield_id: Mapped[int | None] = mapped_column(ForeignKey("airfields.id"))

    home_airfield: Mapped[Airfield | None] = relationship()


class Airfield(Base):
    """An airfield under our own identifier, with what sun times and local dates need."""

    __tablename__ = "airfields"
    __table_args__ = (
        CheckConstraint("latitude >= -90 AND latitude <= 90", name="latitude_range"),
        CheckConstraint("longitude >= -180 AND longitude <= 180", name="longitude_range"),
    )

    id: Mapped[intpk]
    ident: Mapped[str] = mapped_column(String(16), unique=True)
    name: Mapped[Name]
    latitude: Mapped[float] = mapped_column(Float)
    longitude: Mapped[float] = mapped_column(Float)
    elevation_ft: Mapped[int] = mapped_column(Integer)
    timezone: Mapped[str] = mapped_column(String(64))  # IANA name


class Person(Base):
    """Anyone with an account or a logbook: pilot, instructor, school admin (several roles allowed)."""

    __tablename__ = "people"
    __table_args__ = (
        CheckConstraint(_in("certificate_level", CERTIFICATE_LEVELS), name="certificate_level"),
        CheckConstraint(_in("medical_class", MEDICAL_CLASSES, nullable=True), name="medical_class"),
        CheckConstraint(
            "min_ceiling_ft IS NULL OR (min_ceiling_ft >= 0 AND min_ceiling_ft <= 10000)", name="min_ceiling_range"
        ),
        CheckConstraint(
            "min_visibility_hundredths_sm IS NULL OR "
            "(min_visibility_hundredths_sm >= 0 AND min_visibility_hundredths_sm <= 1000)",
            name="min_visibility_range",
        ),
        CheckConstraint(
            "min_crosswind_kt IS NULL OR (min_crosswind_kt >= 0 AND min_crosswind_kt <= 50)", name="min_crosswind_range"
        ),
    )

    id: Mapped[intpk]
    school_id: Mapped[int | None] = mapped_column(ForeignKey("schools.id"), index=True)
    name: Mapped[Name]
    # NULL for a pilot created by an import, who has no account yet.
    email: Mapped[str | None] = mapped_column(String(254), unique=True)
    password_hash: Mapped[str | None] = mapped_column(String(255))
    is_pilot: Mapped[bool] = mapped_column(Boolean, default=True)
    is_instructor: Mapped[bool] = mapped_column(Boolean, default=False)
    is_admin: Mapped[bool] = mapped_column(Boolean, default=False)
    certificate_level: Mapped[str] = mapped_column(String(16), default="none")
    # "category/class" strings, e.g. "airplane/single-engine-land".
    category_classes: Mapped[JSONList]
    instrument_categories: Mapped[JSONList]  # e.g. ["airplane"]
    instructor_ratings: Mapped[JSONList]  # e.g. ["cfi", "cfii"]
    medical_class: Mapped[str | None] = mapped_column(String(8))
    medical_expires: Mapped[date | None] = mapped_column(Date)  # last valid day
    basicmed_expires: Mapped[date | None] = mapped_column(Date)  # the alternative to a medical
    home_airfield_id: Mapped[int | None] = mapped_column(ForeignKey("airfields.id"))
    timezone: Mapped[str | None] = mapped_column(String(64))  # IANA name
    rule_sets: Mapped[JSONList]  # names of the rule sets followed, e.g. ["faa-part61"]
    # Personal practice targets (product choice, not regulation); shape owned by the planner.
    practice_targets: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    # The pilot's own baseline personal minimums (set in settings; NULL = not set). Visibility is
    # stored as integer hundredths of a statute mile (exact and portable, like hours).
    min_ceiling_ft: Mapped[int | None] = mapped_column(Integer)
    min_visibility_hundredths_sm: Mapped[int | None] = mapped_column(Integer)
    min_crosswind_kt: Mapped[int | None] = mapped_column(Integer)
    # The pilot allows practice under a view-limiting device at night (set in settings; default daylight only).
    night_practice: Mapped[bool] = mapped_column(Boolean, default=False, server_default=false())
    created_at: Mapped[Instant]
    # Counts the changes that can move the pilot's evaluated status (entries, approaches, checks, rule
    # sets, practice targets, ratings); raised by ``planner.db.status`` in the same flush, as
    # ``status_revision + 1`` in SQL, so concurrent writers of one pilot queue on this row.
    status_revision: Mapped[int] = mapped_column(Integer, default=0, server_default="0")

    school: Mapped[School | None] = relationship()
    home_airfield: Mapped[Airfield | None] = relationship()

    @property
    def roles(self) -> tuple[str, ...]:
        """The person's roles, in a fixed order."""
        flags = (("admin", self.is_admin), ("instructor", self.is_instructor), ("pilot", self.is_pilot))
        return tuple(name for name, held in flags if held)


class Aircraft(Base):
    """An aircraft a school flies."""

    __tablename__ = "aircraft"
    __table_args__ = (CheckConstraint(_in("category", CATEGORIES), name="category"),)

    id: Mapped[intpk]
    school_id: Mapped[int | None] = mapped_column(ForeignKey("schools.id"), index=True)
    registration: Mapped[str] = mapped_column(String(16), unique=True)
    category: Mapped[str] = mapped_column(String(16))
    aircraft_class: Mapped[str | None] = mapped_column(String(32))  # e.g. "single-engine-land"
    dual_controls: Mapped[bool] = mapped_column(Boolean, default=False)
    equipment_notes: Mapped[str] = mapped_column(Text, default="")
    home_airfield_id: Mapped[int | None] = mapped_column(ForeignKey("airfields.id"))

    home_airfield: Mapped[Airfield | None] = relationship()


class TrainingDevice(Base):
    """A full flight simulator, flight training device or aviation training device."""

    __tablename__ = "training_devices"
    __table_args__ = (
        CheckConstraint(_in("kind", DEVICE_KINDS), name="kind"),
        CheckConstraint(_in("category", CATEGORIES), name="category"),
    )

    id: Mapped[intpk]
    school_id: Mapped[int | None] = mapped_column(ForeignKey("schools.id"), index=True)
    identifier: Mapped[str] = mapped_column(String(32), unique=True)
    kind: Mapped[str] = mapped_column(String(8))
    category: Mapped[str] = mapped_column(String(16))  # the aircraft category it represents
    authorisation_expires: Mapped[date | None] = mapped_column(Date)  # last valid day
    notes: Mapped[str] = mapped_column(Text, default="")


ENTRY_COUNT_COLUMNS = (
    "unlogged_approaches",
    "holds",
    "landings",
    "night_full_stop_landings",
    "partial_panel_approaches",
    "ua_nose_high",
    "ua_nose_low",
)
_ENTRY_HOURS = (
    "instrument_actual_hundredths",
    "instrument_simulated_hundredths",
    "total_hundredths",
    "pic_hundredths",
    "dual_received_hundredths",
    "solo_hundredths",
)


class Entry(Base):
    """One logbook entry (flight or device session), as the pilot logged it.

    ``external_id`` is the interchange ``id``, unique per pilot. ``version``
    counts saves (optimistic locking: a save from a stale copy is refused).
    ``deleted_at`` marks a reversible delete.
    """

    __tablename__ = "entries"
    __table_args__ = (
        UniqueConstraint("pilot_id", "external_id"),
        Index("ix_entries_pilot_id_date", "pilot_id", "date"),
        CheckConstraint(_in("device", DEVICES), name="device"),
        CheckConstraint(_in("category", CATEGORIES), name="category"),
        CheckConstraint(_in("conditions", CONDITIONS, nullable=True), name="conditions"),
        CheckConstraint("night_full_stop_landings <= landings", name="night_within_landings"),
        CheckConstraint("NOT (aircraft_id IS NOT NULL AND device_id IS NOT NULL)", name="one_machine"),
        CheckConstraint("version >= 1", name="version_positive"),
        *(CheckConstraint(f"{c} >= 0", name=f"{c}_nonneg") for c in ENTRY_COUNT_COLUMNS + _ENTRY_HOURS),
    )

    id: Mapped[intpk]
    pilot_id: Mapped[int] = mapped_column(ForeignKey("people.id"))
    external_id: Mapped[Ident]
    date: Mapped[date] = mapped_column(Date)
    device: Mapped[str] = mapped_column(String(16), default="aircraft")
    category: Mapped[str] = mapped_column(String(16), default="airplane")
    aircraft_class: Mapped[str | None] = mapped_column(String(32))
    conditions: Mapped[str | None] = mapped_column(String(16))
    unlogged_approaches: Mapped[Count]
    holds: Mapped[Count]
    course_tracking: Mapped[bool] = mapped_column(Boolean, default=False)
    instrument_actual_hundredths: Mapped[Hundredths]
    instrument_simulated_hundredths: Mapped[Hundredths]
    landings: Mapped[Count]
    night_full_stop_landings: Mapped[Count]
    partial_panel_approaches: Mapped[Count]
    ua_nose_high: Mapped[Count]
    ua_nose_low: Mapped[Count]
    # The name as logged, and a link when it matches a known person.
    safety_pilot_name: Mapped[str | None] = mapped_column(String(200))
    safety_pilot_id: Mapped[int | None] = mapped_column(ForeignKey("people.id"))
    instructor_name: Mapped[str | None] = mapped_column(String(200))
    instructor_id: Mapped[int | None] = mapped_column(ForeignKey("people.id"))
    remarks: Mapped[str] = mapped_column(Text, default="")
    # The registration or device identifier as logged, and a link when known.
    aircraft_ident: Mapped[str | None] = mapped_column(String(64))
    aircraft_id: Mapped[int | None] = mapped_column(ForeignKey("aircraft.id"))
    device_id: Mapped[int | None] = mapped_column(ForeignKey("training_devices.id"))
    route: Mapped[str | None] = mapped_column(String(200))
    start_time: Mapped[str | None] = mapped_column(String(5))  # local "HH:MM"
    end_time: Mapped[str | None] = mapped_column(String(5))
    total_hundredths: Mapped[Hundredths]
    pic_hundredths: Mapped[Hundredths]
    dual_received_hundredths: Mapped[Hundredths]
    solo_hundredths: Mapped[Hundredths]
    version: Mapped[int] = mapped_column(Integer)
    deleted_at: Mapped[datetime | None] = mapped_column(UTCDateTime())
    created_at: Mapped[Instant]
    updated_at: Mapped[Instant]

    pilot: Mapped[Person] = relationship(foreign_keys=[pilot_id])
    approaches: Mapped[list[Approach]] = relationship(
        order_by="Approach.position", cascade="all, delete-orphan", back_populates="entry"
    )
    checks: Mapped[list[EntryCheck]] = relationship(
        order_by="EntryCheck.position", cascade="all, delete-orphan", back_populates="entry"
    )
    revisions: Mapped[list[EntryRevision]] = relationship(
        order_by="EntryRevision.version", back_populates="entry"
    )

    # The repository sets ``version`` itself; SQLAlchemy adds "AND version = <old>"
    # to every UPDATE, so a save from a stale copy fails instead of overwriting.
    __mapper_args__ = {"version_id_col": version, "version_id_generator": False}


class Approach(Base):
    """One logged approach of an entry, in the order logged."""

    __tablename__ = "approaches"
    __table_args__ = (
        UniqueConstraint("entry_id", "position"),
        CheckConstraint(_in("conditions", CONDITIONS, nullable=True), name="conditions"),
        CheckConstraint("position >= 0", name="position_nonneg"),
    )

    id: Mapped[intpk]
    entry_id: Mapped[int] = mapped_column(ForeignKey("entries.id", ondelete="CASCADE"))
    position: Mapped[int] = mapped_column(Integer)
    type: Mapped[str | None] = mapped_column(String(64))
    airfield: Mapped[str | None] = mapped_column(String(64))  # as logged
    runway: Mapped[str | None] = mapped_column(String(16))
    conditions: Mapped[str | None] = mapped_column(String(16))  # NULL: as the entry
    to_minimums: Mapped[bool] = mapped_column(Boolean, default=False)
    coupled: Mapped[bool] = mapped_column(Boolean, default=False)

    entry: Mapped[Entry] = relationship(back_populates="approaches")


class EntryCheck(Base):
    """A check passed on an entry: "ipc", "flight-review", "instrument-practical-test" or a rule-set kind."""

    __tablename__ = "entry_checks"
    __table_args__ = (
        UniqueConstraint("entry_id", "position"),
        CheckConstraint("kind <> ''", name="kind_not_empty"),
    )

    id: Mapped[intpk]
    entry_id: Mapped[int] = mapped_column(ForeignKey("entries.id", ondelete="CASCADE"))
    position: Mapped[int] = mapped_column(Integer)
    kind: Mapped[str] = mapped_column(String(64), index=True)

    entry: Mapped[Entry] = relationship(back_populates="checks")


class EntryRevision(Base):
    """The state of an entry before a change: ``snapshot`` is that state, ``version`` its version."""

    __tablename__ = "entry_revisions"
    __table_args__ = (
        UniqueConstraint("entry_id", "version"),
        CheckConstraint(_in("action", REVISION_ACTIONS), name="action"),
    )

    id: Mapped[intpk]
    entry_id: Mapped[int] = mapped_column(ForeignKey("entries.id"), index=True)
    version: Mapped[int] = mapped_column(Integer)
    action: Mapped[str] = mapped_column(String(16))
    snapshot: Mapped[dict[str, Any]] = mapped_column(JSON)
    changed_at: Mapped[Instant]
    changed_by_id: Mapped[int | None] = mapped_column(ForeignKey("people.id"))

    entry: Mapped[Entry] = relationship(back_populates="revisions")


class AvailabilityWindow(Base):
    """When a person, an aircraft or a training device is available (UTC instants + display zone)."""

    __tablename__ = "availability_windows"
    __table_args__ = (
        CheckConstraint(
            "(person_id IS NOT NULL AND aircraft_id IS NULL AND device_id IS NULL)"
            " OR (person_id IS NULL AND aircraft_id IS NOT NULL AND device_id IS NULL)"
            " OR (person_id IS NULL AND aircraft_id IS NULL AND device_id IS NOT NULL)",
            name="exactly_one_subject",
        ),
        CheckConstraint("ends_at > starts_at", name="ends_after_start"),
    )

    id: Mapped[intpk]
    person_id: Mapped[int | None] = mapped_column(ForeignKey("people.id"), index=True)
    aircraft_id: Mapped[int | None] = mapped_column(ForeignKey("aircraft.id"), index=True)
    device_id: Mapped[int | None] = mapped_column(ForeignKey("training_devices.id"), index=True)
    starts_at: Mapped[Instant]
    ends_at: Mapped[Instant]
    timezone: Mapped[str] = mapped_column(String(64))  # IANA zone the window was given in
    note: Mapped[str] = mapped_column(Text, default="")


class SignInThrottle(Base):
    """Failed sign-ins per (email, client address): counted in a window, then a lockout.

    Kept in the database rather than in process memory so that every worker
    and host serving the app sees the same counts.
    """

    __tablename__ = "sign_in_throttles"
    __table_args__ = (
        UniqueConstraint("email", "address"),
        CheckConstraint("failures >= 0", name="failures_nonneg"),
    )

    id: Mapped[intpk]
    email: Mapped[str] = mapped_column(String(254))  # as typed, lower-cased (may match no account)
    address: Mapped[str] = mapped_column(String(64))  # the client's IP address as the app sees it
    failures: Mapped[int] = mapped_column(Integer, default=0)
    window_started_at: Mapped[Instant]
    locked_until: Mapped[datetime | None] = mapped_column(UTCDateTime())


SESSION_STATUSES = ("proposed", "accepted", "cancelled", "flown")


class PracticeSession(Base):
    """A planned practice session under a view-limiting device, one row per session.

    ``pilot_flying_id`` flies the first leg with ``safety_pilot_id`` beside them;
    a mutual session (``is_mutual``) has a second leg with the seats swapped.
    ``content`` holds each leg's session plan (items, briefing) as JSON.
    ``uid`` is the calendar UID (stable for the life of the session);
    ``sequence`` is the RFC 5545 SEQUENCE, raised on every change;
    ``version`` refuses a change made from a stale copy.
    Times are UTC instants; ``timezone`` is the airfield's IANA zone.
    """

    __tablename__ = "practice_sessions"
    __table_args__ = (
        CheckConstraint(_in("status", SESSION_STATUSES), name="status"),
        CheckConstraint("ends_at > starts_at", name="ends_after_start"),
        CheckConstraint("pilot_flying_id <> safety_pilot_id", name="two_people"),
        CheckConstraint("sequence >= 0", name="sequence_nonneg"),
        CheckConstraint("version >= 1", name="version_positive"),
        Index("ix_practice_sessions_school_id_starts_at", "school_id", "starts_at"),
    )

    id: Mapped[intpk]
    school_id: Mapped[int] = mapped_column(ForeignKey("schools.id"))
    airfield_id: Mapped[int] = mapped_column(ForeignKey("airfields.id"))
    aircraft_id: Mapped[int] = mapped_column(ForeignKey("aircraft.id"), index=True)
    starts_at: Mapped[Instant]
    ends_at: Mapped[Instant]
    timezone: Mapped[str] = mapped_column(String(64))
    pilot_flying_id: Mapped[int] = mapped_column(ForeignKey("people.id"), index=True)
    safety_pilot_id: Mapped[int] = mapped_column(ForeignKey("people.id"), index=True)
    is_mutual: Mapped[bool] = mapped_column(Boolean, default=False)
    status: Mapped[str] = mapped_column(String(16), default="proposed")
    content: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    explanation: Mapped[str] = mapped_column(Text, default="")
    uid: Mapped[str] = mapped_column(String(128), unique=True)
    sequence: Mapped[int] = mapped_column(Integer, default=0)
    version: Mapped[int] = mapped_column(Integer)
    created_at: Mapped[Instant]
    updated_at: Mapped[Instant]

    airfield: Mapped[Airfield] = relationship()
    aircraft: Mapped[Aircraft] = relationship()
    pilot_flying: Mapped[Person] = relationship(foreign_keys=[pilot_flying_id])
    safety_pilot: Mapped[Person] = relationship(foreign_keys=[safety_pilot_id])

    __mapper_args__ = {"version_id_col": version, "version_id_generator": False}

    @property
    def people_ids(self) -> tuple[int, int]:
        return (self.pilot_flying_id, self.safety_pilot_id)


class CalendarFeedToken(Base):
    """A pilot's calendar subscription link: only the SHA-256 of the token is stored.

    The token itself (``secrets.token_urlsafe(32)``, 256 bits) is shown once
    when created; ``revoked_at`` ends it.
    """

    __tablename__ = "calendar_feed_tokens"

    id: Mapped[intpk]
    person_id: Mapped[int] = mapped_column(ForeignKey("people.id"), index=True)
    token_hash: Mapped[str] = mapped_column(String(64), unique=True)  # hex SHA-256
    created_at: Mapped[Instant]
    revoked_at: Mapped[datetime | None] = mapped_column(UTCDateTime())


STATUS_STATES = ("current", "grace", "lapsed")


class KeptStatus(Base):
    """A pilot's evaluated status, kept current (see ``planner.status`` and ``docs/data.md``).

    ``report`` is the whole ``CurrencyReport`` as of ``as_of`` as JSON (every
    requirement: rule set, id, scope, title, citation, state, dates, missing,
    evidence, warnings). It was computed from the pilot's data at
    ``people.status_revision`` = ``revision`` and with the rule-set files and
    engine whose digest is ``rules_digest``; if any of these three moved on,
    the row is stale. The other columns summarise ``report`` for lists:
    ``worst_state`` of the regulatory requirements (NULL: none), ``soonest``
    their earliest ``valid_through`` (the overview's sort key), ``next_deadline``
    the next day one of them ends (``valid_through`` of a current one,
    ``regain_by`` of one in grace, from ``as_of`` on), ``practice_due`` how many
    practice targets are not met.
    """

    __tablename__ = "kept_statuses"
    __table_args__ = (
        CheckConstraint(_in("worst_state", STATUS_STATES, nullable=True), name="worst_state"),
        CheckConstraint("revision >= 0", name="revision_nonneg"),
        CheckConstraint("practice_due >= 0", name="practice_due_nonneg"),
    )

    person_id: Mapped[int] = mapped_column(ForeignKey("people.id", ondelete="CASCADE"), primary_key=True)
    as_of: Mapped[date] = mapped_column(Date, index=True)
    revision: Mapped[int] = mapped_column(Integer)
    rules_digest: Mapped[str] = mapped_column(String(16))
    worst_state: Mapped[str | None] = mapped_column(String(8))
    soonest: Mapped[date | None] = mapped_column(Date)
    next_deadline: Mapped[date | None] = mapped_column(Date)
    practice_due: Mapped[int] = mapped_column(Integer, default=0)
    report: Mapped[dict[str, Any]] = mapped_column(JSON)


# Keeps ``status_revision`` moving with every change of a pilot's data (a session event).
from planner.db import status as _status  # noqa: E402,F401
