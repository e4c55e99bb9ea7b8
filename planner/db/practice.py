"""Queries and writes for practice sessions, availability windows and calendar feed tokens.

Like ``repository``, nothing here commits. Session changes go through
``bump`` (``sequence`` and ``version`` raised together; a change made from a
stale copy raises ``SessionConflict``).

Booking (a session coming to hold people and an aircraft over a time) is
serialised per person and aircraft: ``lock_for_booking`` first, then
``check_free``, then the write, then the caller commits. The lock is what
makes the check hold when two instructors book at the same moment:

* PostgreSQL: ``SELECT ... FOR NO KEY UPDATE`` on the aircraft rows, then the
  people rows, each in id order (one global order, so two bookings never wait
  for each other in a cycle). Two bookings that share a person or an
  aircraft share a locked row, so the second waits until the first commits
  or rolls back; under READ COMMITTED (the default) its overlap query then
  sees the first one's session. ``NO KEY UPDATE`` rather than ``UPDATE``
  leaves inserts that merely reference the row (a logbook entry of that
  pilot) free to proceed.
* SQLite: a no-op ``UPDATE`` of the aircraft rows as the transaction's first
  write takes the database write lock before the overlap query runs (the
  driver starts the transaction on that statement); other bookings wait for
  it up to the connection's busy timeout.
"""

from __future__ import annotations

from collections.abc import Iterable
from datetime import datetime
from zoneinfo import ZoneInfo

from sqlalchemy import or_, select, update
from sqlalchemy.exc import OperationalError
from sqlalchemy.orm import Session
from sqlalchemy.orm.exc import StaleDataError

from planner.db import models

ACTIVE = ("proposed", "accepted")  # statuses that hold people and aircraft
BALANCE = ("accepted", "flown")  # statuses that count in the who-flew-for-whom balance


class SessionConflict(RuntimeError):
    """The session was changed elsewhere since it was loaded (stale version)."""


class SessionRejected(ValueError):
    """A change to a session is not possible; the message says why (``planning.SessionRejected``)."""


def windows(
    session: Session, *, person_ids: Iterable[int], aircraft_ids: Iterable[int], start: datetime, end: datetime
) -> list[models.AvailabilityWindow]:
    """Availability windows of these people and aircraft that overlap ``[start, end)``."""
    person_ids, aircraft_ids = list(person_ids), list(aircraft_ids)
    W = models.AvailabilityWindow
    return list(session.scalars(
        select(W)
        .where(or_(W.person_id.in_(person_ids), W.aircraft_id.in_(aircraft_ids)))
        .where(W.starts_at < end, W.ends_at > start)
        .order_by(W.starts_at, W.id)
    ))


def school_sessions(
    session: Session, school_id: int, *, start: datetime | None = None, end: datetime | None = None,
    statuses: Iterable[str] | None = None,
) -> list[models.PracticeSession]:
    """The school's practice sessions (overlapping ``[start, end)`` when given), by start."""
    P = models.PracticeSession
    q = select(P).where(P.school_id == school_id)
    if start is not None:
        q = q.where(P.ends_at > start)
    if end is not None:
        q = q.where(P.starts_at < end)
    if statuses is not None:
        q = q.where(P.status.in_(list(statuses)))
    return list(session.scalars(q.order_by(P.starts_at, P.id)))


def person_sessions(session: Session, person_id: int) -> list[models.PracticeSession]:
    """Every session the person is in (either seat), any status, by start."""
    P = models.PracticeSession
    return list(session.scalars(
        select(P)
        .where(or_(P.pilot_flying_id == person_id, P.safety_pilot_id == person_id))
        .order_by(P.starts_at, P.id)
    ))


def lock_for_booking(session: Session, *, person_ids: Iterable[int], aircraft_ids: Iterable[int]) -> None:
    """Hold these people and aircraft against other bookings until the transaction ends (see the module doc).

    Call it before reading what is booked, and before any other write of the
    transaction. On SQLite a lock not had within the busy timeout raises
    ``SessionRejected`` (try again) rather than a database error.
    """
    people, planes = sorted(set(person_ids)), sorted(set(aircraft_ids))
    A, P = models.Aircraft, models.Person
    if session.get_bind().dialect.name == "sqlite":
        try:
            session.execute(update(A.__table__).where(A.__table__.c.id.in_(planes or [0])).values(id=A.__table__.c.id))
        except OperationalError as exc:
            if "locked" not in str(exc.orig):
                raise
            raise SessionRejected("the database is busy with another booking; try again in a moment") from None
        return
    session.execute(select(A.id).where(A.id.in_(planes)).order_by(A.id).with_for_update(key_share=True)).all()
    session.execute(select(P.id).where(P.id.in_(people)).order_by(P.id).with_for_update(key_share=True)).all()


def _when(row: models.PracticeSession) -> str:
    tz = ZoneInfo(row.timezone)
    a, b = row.starts_at.astimezone(tz), row.ends_at.astimezone(tz)
    end = b.strftime("%H:%M") if b.date() == a.date() else b.strftime("%Y-%m-%d %H:%M")
    return f"{a:%Y-%m-%d %H:%M}-{end} {row.timezone}"


def check_free(
    session: Session, what: str, *, start: datetime, end: datetime, pilot_flying_id: int, safety_pilot_id: int,
    aircraft_id: int, exclude_id: int | None = None, against: Iterable[str] = ACTIVE,
) -> None:
    """Raise ``SessionRejected`` when a session with status in ``against`` holds one of these over ``[start, end)``.

    The message starts with ``what`` (the booking refused) and names the
    clashing session (id, status, local times) and each person (with their
    seat there) or the aircraft it already holds. Call ``lock_for_booking``
    first in the same transaction, or two bookings can both pass.
    """
    against = list(against)
    people = (pilot_flying_id, safety_pilot_id)
    P = models.PracticeSession
    q = (
        select(P)
        .where(P.status.in_(against), P.starts_at < end, P.ends_at > start)
        .where(or_(P.aircraft_id == aircraft_id, P.pilot_flying_id.in_(people), P.safety_pilot_id.in_(people)))
        .order_by(P.starts_at, P.id)
    )
    if exclude_id is not None:
        q = q.where(P.id != exclude_id)
    clash = session.scalars(q.limit(1).execution_options(populate_existing=True)).first()
    if clash is None:
        return
    held = []
    if clash.aircraft_id == aircraft_id:
        held.append(f"aircraft {clash.aircraft.registration}")
    for pid in people:
        if pid in clash.people_ids:
            seat = "safety pilot" if clash.safety_pilot_id == pid else "pilot flying"
            if clash.is_mutual:
                seat = "mutual session"
            person = clash.safety_pilot if clash.safety_pilot_id == pid else clash.pilot_flying
            held.append(f"{person.name} ({seat})")
    raise SessionRejected(
        f"{what}: practice session {clash.id} ({clash.status}, {_when(clash)}) already holds {' and '.join(held)} then"
    )


def schools(session: Session) -> list[models.School]:
    """Every school, by name."""
    return list(session.scalars(select(models.School).order_by(models.School.name, models.School.id)))


def get_session(session: Session, session_id: int) -> models.PracticeSession | None:
    return session.get(models.PracticeSession, session_id)


def bump(session: Session, row: models.PracticeSession, now: datetime) -> None:
    """Raise ``sequence`` and ``version`` (UPDATE ... WHERE version = <old>) and flush."""
    row.sequence = row.sequence + 1
    row.version = row.version + 1
    row.updated_at = now
    try:
        session.flush()
    except StaleDataError:
        raise SessionConflict(
            f"practice session {row.id} was changed by someone else since it was loaded; reload it"
        ) from None


# ---------------------------------------------------------------- calendar feed tokens


def feed_token_by_hash(session: Session, token_hash: str) -> models.CalendarFeedToken | None:
    return session.scalars(
        select(models.CalendarFeedToken).where(models.CalendarFeedToken.token_hash == token_hash)
    ).one_or_none()


def active_feed_tokens(session: Session, person_id: int) -> list[models.CalendarFeedToken]:
    T = models.CalendarFeedToken
    return list(session.scalars(
        select(T).where(T.person_id == person_id, T.revoked_at.is_(None)).order_by(T.created_at, T.id)
    ))
