"""The kept-status revision runs up and down with rows in place, on SQLite and PostgreSQL."""

from __future__ import annotations

from datetime import date
from pathlib import Path

import pytest
from alembic.script import ScriptDirectory
from sqlalchemy import inspect, text
from sqlalchemy.exc import IntegrityError

from planner import services
from planner.db import migrate
from planner.db.session import make_engine, make_session_factory

REVISION = "5e875a743417"
BEFORE = "0ae28a74e876"  # the revision this one chains after
AS_OF = date(2026, 12, 1)


def _tables(url: str) -> set[str]:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return set(inspect(conn).get_table_names())
    finally:
        engine.dispose()


def _people_columns(url: str) -> set[str]:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return {c["name"] for c in inspect(conn).get_columns("people")}
    finally:
        engine.dispose()


def _scalar(url: str, sql: str) -> object:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return conn.execute(text(sql)).scalar_one()
    finally:
        engine.dispose()


def _school_overview(url: str) -> int:
    """Read the demo school's overview (which keeps what was stale); how many pilots it lists."""
    engine = make_engine(url)
    try:
        with make_session_factory(engine)() as session:
            school_id = session.execute(text("SELECT id FROM schools WHERE slug = 'juniper-ridge'")).scalar_one()
            rows = services.school_overview(session, school_id, AS_OF)
            session.commit()
            return len(rows)
    finally:
        engine.dispose()


def _load_demo(url: str, seed: Path, reader) -> None:  # type: ignore[no-untyped-def]
    engine = make_engine(url)
    try:
        with make_session_factory(engine)() as session:
            services.load_demo(session, seed, AS_OF, reader=reader)
            session.commit()
    finally:
        engine.dispose()


def _bad_rows_are_refused(url: str) -> None:
    engine = make_engine(url)
    try:
        for column, value in (("worst_state", "'unknown'"), ("practice_due", "-1"), ("revision", "-1")):
            with engine.connect() as conn, pytest.raises(IntegrityError):
                conn.execute(text(f"UPDATE kept_statuses SET {column} = {value}"))
    finally:
        engine.dispose()


def _round_trip(url: str, seed: Path, reader) -> None:  # type: ignore[no-untyped-def]
    migrate.upgrade(url)
    script = ScriptDirectory.from_config(migrate.alembic_config())
    assert REVISION in {r.revision for r in script.iterate_revisions(migrate.current_revision(url), "base")}
    _load_demo(url, seed, reader)
    people = _scalar(url, "SELECT count(*) FROM people")
    entries = _scalar(url, "SELECT count(*) FROM entries")
    assert _scalar(url, "SELECT count(*) FROM kept_statuses") == 6  # every demo pilot, kept by the load itself
    assert _scalar(url, "SELECT count(*) FROM people WHERE status_revision > 0") == 6  # their logbooks were written
    assert _scalar(url, "SELECT count(*) FROM kept_statuses k JOIN people p ON p.id = k.person_id "
                        "WHERE k.revision = p.status_revision") == 6
    _bad_rows_are_refused(url)

    migrate.downgrade(url, BEFORE)
    assert migrate.current_revision(url) == BEFORE
    assert "kept_statuses" not in _tables(url)
    assert "status_revision" not in _people_columns(url)
    assert _scalar(url, "SELECT count(*) FROM people") == people  # the rebuild keeps every row
    assert _scalar(url, "SELECT count(*) FROM entries") == entries  # and the rows that point at people

    migrate.upgrade(url)
    migrate.check(url)
    assert _scalar(url, "SELECT count(*) FROM kept_statuses") == 0  # nothing kept yet: every row is "missing"
    assert _scalar(url, "SELECT count(*) FROM people WHERE status_revision <> 0") == 0  # the server default
    assert _school_overview(url) == 6  # the first read evaluates and keeps them
    assert _scalar(url, "SELECT count(*) FROM kept_statuses") == 6
    _bad_rows_are_refused(url)

    migrate.downgrade(url, "base")  # with rows in the new table
    assert _scalar(url, "SELECT count(*) FROM alembic_version") == 0


def test_kept_status_revision_down_and_up_with_rows_on_sqlite(sqlite_url: str, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _round_trip(sqlite_url, demo_seed, interchange.read_json)


@pytest.mark.postgres
def test_kept_status_revision_down_and_up_with_rows_on_postgresql(pg_url: str, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _round_trip(pg_url, demo_seed, interchange.read_json)
