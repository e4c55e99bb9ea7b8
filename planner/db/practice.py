"""Queries and writes for practice sessions, availability windows and calendar feed tokens.

Like ``repository``, nothing here commits. Session changes go through
``bump`` (``sequence`` and ``version`` raised together; a change made from a
stale copy raises ``SessionConflict``).
"""

from __future__ import annotations

from collections.abc import Iterable
from datetime import datetime

from sqlalchemy import or_, select
from sqlalchemy.orm import Session
from sqlalchemy.orm.exc import StaleDataError

from planner.db import models

ACTIVE = ("proposed", "accepted")  # statuses that hold people and aircraft
BALANCE = ("accepted", "flown")  # statuses that count in the who-flew-for-whom balance


class SessionConflict(RuntimeError):
    """The session was changed elsewhere since it was loaded (stale version)."""


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


def overlapping(
    session: Session, *, start: datetime, end: datetime, person_ids: Iterable[int], aircraft_id: int,
    exclude_id: int | None = None,
) -> list[models.PracticeSession]:
    """Active sessions over ``[start, end)`` that use one of these people or this aircraft."""
    person_ids = list(person_ids)
    P = models.PracticeSession
    q = (
        select(P)
        .where(P.status.in_(ACTIVE), P.starts_at < end, P.ends_at > start)
        .where(or_(P.aircraft_id == aircraft_id, P.pilot_flying_id.in_(person_ids), P.safety_pilot_id.in_(person_ids)))
    )
    if exclude_id is not None:
        q = q.where(P.id != exclude_id)
    return list(session.scalars(q))


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
