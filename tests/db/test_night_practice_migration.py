"""The night-practice revision runs up and down with rows in place, on SQLite and PostgreSQL."""

from __future__ import annotations

from datetime import date
from pathlib import Path

import pytest
from sqlalchemy import inspect, text

from planner import services
from planner.db import migrate
from planner.db.session import make_engine, make_session_factory

REVISION = "b7d41c9e2a53"
BEFORE = "5e875a743417"  # the revision this one chains after (kept statuses)
MARA = "mara.oyelaran@juniper-ridge.example"
SIGNE = "signe.mbeki@juniper-ridge.example"


def _columns(url: str) -> set[str]:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return {c["name"] for c in inspect(conn).get_columns("people")}
    finally:
        engine.dispose()


def _scalar(url: str, sql: str, **params: object) -> object:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return conn.execute(text(sql), params).scalar_one()
    finally:
        engine.dispose()


def _execute(url: str, sql: str, **params: object) -> None:
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            conn.execute(text(sql), params)
    finally:
        engine.dispose()


def _load_demo(url: str, seed: Path, reader) -> None:  # type: ignore[no-untyped-def]
    engine = make_engine(url)
    try:
        with make_session_factory(engine)() as session:
            services.load_demo(session, seed, date(2026, 12, 1), reader=reader)
            session.commit()
    finally:
        engine.dispose()


def _night_count(url: str) -> object:
    return _scalar(url, "SELECT count(*) FROM people WHERE night_practice = :yes", yes=True)


def _round_trip(url: str, seed: Path, reader) -> None:  # type: ignore[no-untyped-def]
    migrate.upgrade(url, REVISION)
    assert migrate.current_revision(url) == REVISION
    _load_demo(url, seed, reader)
    people = _scalar(url, "SELECT count(*) FROM people")
    entries = _scalar(url, "SELECT count(*) FROM entries")
    assert _night_count(url) == 0  # the demo leaves everyone on daylight-only practice
    _execute(url, "UPDATE people SET night_practice = :yes WHERE email IN (:a, :b)", yes=True, a=MARA, b=SIGNE)
    assert _night_count(url) == 2

    migrate.downgrade(url, BEFORE)
    assert migrate.current_revision(url) == BEFORE
    assert "night_practice" not in _columns(url)
    assert _scalar(url, "SELECT count(*) FROM people") == people  # the rebuild keeps every row
    assert _scalar(url, "SELECT count(*) FROM entries") == entries  # and the rows that point at people
    # the previous revision's column keeps its value through the rebuild (Mara's 2 SM as 200 hundredths)
    assert _scalar(url, "SELECT min_visibility_hundredths_sm FROM people WHERE email = :e", e=MARA) == 200

    migrate.upgrade(url, REVISION)
    migrate.check(url)
    assert "night_practice" in _columns(url)
    assert _night_count(url) == 0  # back with the default: daylight only for everyone
    assert _scalar(url, "SELECT count(*) FROM people WHERE night_practice IS NULL") == 0
    assert _scalar(url, "SELECT count(*) FROM people") == people
    _execute(url, "UPDATE people SET night_practice = :yes WHERE email = :e", yes=True, e=MARA)
    assert _night_count(url) == 1

    migrate.downgrade(url, "base")
    assert _scalar(url, "SELECT count(*) FROM alembic_version") == 0


def test_night_practice_revision_down_and_up_with_rows_on_sqlite(sqlite_url: str, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _round_trip(sqlite_url, demo_seed, interchange.read_json)


@pytest.mark.postgres
def test_night_practice_revision_down_and_up_with_rows_on_postgresql(pg_url: str, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _round_trip(pg_url, demo_seed, interchange.read_json)
