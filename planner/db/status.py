"""Kept-current status rows: change tracking, the queries that read them, and the upsert that writes them.

Tracking. A ``before_flush`` listener on every ``Session`` notices any new,
changed or deleted entry, approach or check, and any change of a person's
rule sets, practice targets, ratings or time zone, and in the same flush
raises that pilot's ``people.status_revision`` by one (as SQL,
``status_revision + 1``: on PostgreSQL the row lock makes concurrent writers
of one pilot queue, and the later one sees the earlier one's entries). The
pilots touched are remembered in ``session.info`` until the transaction
ends; a settler registered with ``on_commit`` (``planner.status``) then
re-evaluates them just before the commit, in the same transaction.

A kept row is therefore stale exactly when it is missing, was evaluated for
another day, carries an older revision than the person, or was computed with
other rule-set files (``rules_digest``). Nothing here is cached in process
memory: every worker reads the same rows.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from typing import Any

from sqlalchemy import and_, event, func, inspect, or_, select
from sqlalchemy.orm import Session, load_only

from planner.db import models

CHANGED = "planner.status.changed"  # session.info key: the Person objects whose status inputs changed

# Person columns the evaluation reads (``repository.pilot_to_core`` and ``services.rule_sets_for``).
PERSON_INPUTS = ("rule_sets", "practice_targets", "instrument_categories", "category_classes", "timezone")

Settler = Callable[[Session], None]
_settlers: list[Settler] = []


def on_commit(settler: Settler) -> None:
    """Call ``settler(session)`` before each commit of a session in which some pilot's status inputs changed."""
    if settler not in _settlers:
        _settlers.append(settler)


def changed_pilots(session: Session) -> list[models.Person]:
    """The pilots whose status inputs changed in the session's current transaction (flushed or not)."""
    return list(session.info.get(CHANGED, {}).values())


def forget_changes(session: Session, people: Iterable[models.Person]) -> None:
    """Mark ``people`` as settled (their kept rows were re-evaluated after their last change)."""
    pending = session.info.get(CHANGED)
    if pending:
        for person in people:
            pending.pop(id(person), None)


def _entry_pilot(session: Session, entry: models.Entry | None, entry_id: int | None) -> models.Person | None:
    if entry is None and entry_id is not None:
        entry = session.get(models.Entry, entry_id)
    if entry is None:
        return None
    if entry.pilot is not None:
        return entry.pilot
    return session.get(models.Person, entry.pilot_id) if entry.pilot_id is not None else None


def _person_inputs_changed(person: models.Person) -> bool:
    state = inspect(person)
    return any(state.attrs[name].history.has_changes() for name in PERSON_INPUTS)


def _pilot_of(session: Session, obj: Any, is_new: bool) -> models.Person | None:
    if isinstance(obj, models.Entry):
        return _entry_pilot(session, obj, None)
    if isinstance(obj, (models.Approach, models.EntryCheck)):
        # An approach removed from its entry's list has lost ``entry`` but still holds ``entry_id``.
        return _entry_pilot(session, obj.entry, obj.entry_id)
    if isinstance(obj, models.Person) and not is_new and _person_inputs_changed(obj):
        return obj
    return None


@event.listens_for(Session, "before_flush")
def _track_changes(session: Session, _context: Any, _instances: Any) -> None:
    touched: dict[int, models.Person] = {}
    with session.no_autoflush:
        for objects, is_new in ((session.new, True), (session.dirty, False), (session.deleted, False)):
            for obj in list(objects):
                if not is_new and obj in session.dirty and not session.is_modified(obj):
                    continue
                person = _pilot_of(session, obj, is_new)
                if person is not None:
                    touched[id(person)] = person
    if not touched:
        return
    for person in touched.values():
        if inspect(person).persistent:
            person.status_revision = models.Person.status_revision + 1  # type: ignore[assignment]
    session.info.setdefault(CHANGED, {}).update(touched)


@event.listens_for(Session, "before_commit")
def _settle_before_commit(session: Session) -> None:
    if session.info.get(CHANGED):
        for settler in _settlers:
            settler(session)


@event.listens_for(Session, "after_commit")
@event.listens_for(Session, "after_rollback")
def _transaction_over(session: Session) -> None:
    session.info.pop(CHANGED, None)


# ---------------------------------------------------------------- reads


# The person columns a list of kept statuses reads; the others (the evaluation's inputs among them) load on
# first use, i.e. only for a pilot whose row is stale and is re-evaluated.
LIST_COLUMNS = ("id", "name", "school_id", "is_pilot", "status_revision")


def school_rows(session: Session, school_id: int) -> list[tuple[models.Person, models.KeptStatus | None]]:
    """Every pilot of the school with their kept row (None if missing): one query, by ``people.school_id``.

    Only ``LIST_COLUMNS`` of the people are read with it (not their JSON
    settings, password hash and the like, which a list of 500 pilots would
    otherwise decode for nothing).
    """
    K, P = models.KeptStatus, models.Person
    return [
        (person, kept)
        for person, kept in session.execute(
            select(P, K)
            .outerjoin(K, K.person_id == P.id)
            .where(P.school_id == school_id, P.is_pilot.is_(True))
            .order_by(P.id)
            .options(load_only(*(getattr(P, name) for name in LIST_COLUMNS)))
            .execution_options(populate_existing=True)
        )
    ]


def load_inputs(session: Session, people: list[models.Person]) -> None:
    """Read the columns that ``school_rows`` left unread (the evaluation's inputs among them) of ``people``.

    One query for them all; the columns already read (``status_revision``
    among them) keep the values they were read with.
    """
    ids = [person.id for person in people]
    if ids:
        session.execute(select(models.Person).where(models.Person.id.in_(ids))).all()


def pilot_rows(
    session: Session, *, school_id: int | None = None, after_id: int = 0, limit: int | None = None
) -> list[tuple[models.Person, models.KeptStatus | None]]:
    """Pilots (of one school, or all) with their kept row, by id from ``after_id`` on, at most ``limit``."""
    K = models.KeptStatus
    query = (
        select(models.Person, K)
        .outerjoin(K, K.person_id == models.Person.id)
        .where(models.Person.is_pilot.is_(True), models.Person.id > after_id)
        .order_by(models.Person.id)
        .execution_options(populate_existing=True)
    )
    if school_id is not None:
        query = query.where(models.Person.school_id == school_id)
    if limit is not None:
        query = query.limit(limit)
    return [(person, kept) for person, kept in session.execute(query)]


def count_pilots(session: Session, *, school_id: int | None = None) -> int:
    """How many pilots there are (of one school, or all)."""
    query = select(func.count()).select_from(models.Person).where(models.Person.is_pilot.is_(True))
    if school_id is not None:
        query = query.where(models.Person.school_id == school_id)
    return int(session.scalar(query) or 0)


def kept_row(session: Session, person_id: int) -> models.KeptStatus | None:
    """The pilot's kept row, read from the database (not from the session's memory), or None."""
    return session.scalars(
        select(models.KeptStatus)
        .where(models.KeptStatus.person_id == person_id)
        .execution_options(populate_existing=True)
    ).one_or_none()


def current_revision(session: Session, person: models.Person) -> int:
    """The person's ``status_revision`` as the database has it now (flushing pending changes first)."""
    session.flush()
    value = session.scalar(select(models.Person.status_revision).where(models.Person.id == person.id))
    return int(value or 0)


# ---------------------------------------------------------------- writes


def store(session: Session, values: list[dict[str, Any]]) -> None:
    """Insert or update kept rows (one dict of column values per pilot), in pilot order.

    An existing row is replaced only by one evaluated at a later revision, or
    by other rule-set files, or at the same revision for the same or a later
    day: a slow reader never overwrites what a writer stored after it, and a
    row never moves back to an earlier day for nothing.
    """
    if not values:
        return
    K = models.KeptStatus
    dialect = session.get_bind().dialect.name
    if dialect == "postgresql":
        from sqlalchemy.dialects.postgresql import insert
    elif dialect == "sqlite":
        from sqlalchemy.dialects.sqlite import insert
    else:  # pragma: no cover - the project runs on SQLite and PostgreSQL only
        raise RuntimeError(f"kept statuses are not supported on {dialect}")
    columns = [c.name for c in K.__table__.columns if c.name != "person_id"]
    for row in sorted(values, key=lambda v: v["person_id"]):
        stmt = insert(K).values(**row)
        new = stmt.excluded
        stmt = stmt.on_conflict_do_update(
            index_elements=[K.person_id],
            set_={name: getattr(new, name) for name in columns},
            where=or_(
                new.revision > K.revision,
                new.rules_digest != K.rules_digest,
                and_(new.revision == K.revision, new.as_of >= K.as_of),
            ),
        )
        session.execute(stmt)
