"""The practice-session revision runs up and down with rows in place, on SQLite and PostgreSQL."""

from __future__ import annotations

from datetime import UTC, date, datetime
from pathlib import Path

import pytest
from sqlalchemy import inspect, text

from planner import services
from planner.db import migrate, models, repository
from planner.db.session import make_engine, make_session_factory

BEFORE = "5cfc85de29b0"  # the revision this one chains after
NEW_TABLES = {"practice_sessions", "calendar_feed_tokens"}
STAMP = datetime(2026, 12, 1, 12, tzinfo=UTC)


def _tables(url: str) -> set[str]:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return set(inspect(conn).get_table_names())
    finally:
        engine.dispose()


def _count(url: str, table: str) -> int:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return conn.execute(text(f"SELECT count(*) FROM {table}")).scalar_one()
    finally:
        engine.dispose()


def _load_demo_and_a_session(url: str, seed: Path, reader) -> None:  # type: ignore[no-untyped-def]
    engine = make_engine(url)
    try:
        with make_session_factory(engine)() as session:
            services.load_demo(session, seed, date(2026, 12, 1), reader=reader)
            school = repository.find_by(session, models.School, slug="juniper-ridge")
            plane = repository.find_by(session, models.Aircraft, registration="N417JR")
            pf = repository.person_by_email(session, "dev.halloran@juniper-ridge.example")
            sp = repository.person_by_email(session, "mara.oyelaran@juniper-ridge.example")
            session.add(models.PracticeSession(
                school_id=school.id, airfield_id=school.home_airfield_id, aircraft_id=plane.id,
                starts_at=datetime(2026, 12, 5, 17, tzinfo=UTC), ends_at=datetime(2026, 12, 5, 19, tzinfo=UTC),
                timezone="America/Denver", pilot_flying_id=pf.id, safety_pilot_id=sp.id, is_mutual=False,
                status="proposed", content={"legs": []}, explanation="test", uid="test-uid@planner",
                sequence=0, version=1, created_at=STAMP, updated_at=STAMP,
            ))
            session.add(models.CalendarFeedToken(person_id=pf.id, token_hash="0" * 64, created_at=STAMP))
            session.commit()
    finally:
        engine.dispose()


def _round_trip(url: str, seed: Path, reader) -> None:  # type: ignore[no-untyped-def]
    migrate.upgrade(url)
    _load_demo_and_a_session(url, seed, reader)
    entries = _count(url, "entries")
    assert _count(url, "practice_sessions") == 1 and _count(url, "calendar_feed_tokens") == 1

    migrate.downgrade(url, BEFORE)
    assert migrate.current_revision(url) == BEFORE
    assert not (_tables(url) & NEW_TABLES)
    assert _count(url, "entries") == entries  # the rest of the data survives the downgrade

    migrate.upgrade(url)
    migrate.check(url)
    assert NEW_TABLES <= _tables(url)
    _load_demo_and_a_session(url, seed, reader)
    assert _count(url, "practice_sessions") == 1 and _count(url, "entries") == entries

    migrate.downgrade(url, "base")  # with rows in the new tables: foreign keys dropped in order
    assert _tables(url) <= {"alembic_version"}


def test_practice_session_revision_down_and_up_with_rows_on_sqlite(sqlite_url: str, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _round_trip(sqlite_url, demo_seed, interchange.read_json)


@pytest.mark.postgres
def test_practice_session_revision_down_and_up_with_rows_on_postgresql(pg_url: str, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _round_trip(pg_url, demo_seed, interchange.read_json)
