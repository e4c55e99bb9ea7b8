"""The personal-minimums revision runs up and down with rows in place, on SQLite and PostgreSQL."""

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

REVISION = "0ae28a74e876"
BEFORE = "23a7302a47fb"  # the revision this one chains after
NEW_COLUMNS = {"min_ceiling_ft", "min_visibility_hundredths_sm", "min_crosswind_kt"}
MARA = "mara.oyelaran@juniper-ridge.example"


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


def _load_demo(url: str, seed: Path, reader) -> None:  # type: ignore[no-untyped-def]
    engine = make_engine(url)
    try:
        with make_session_factory(engine)() as session:
            services.load_demo(session, seed, date(2026, 12, 1), reader=reader)
            session.commit()
    finally:
        engine.dispose()


def _out_of_range_is_refused(url: str) -> None:
    engine = make_engine(url)
    try:
        for column, value in (("min_ceiling_ft", -1), ("min_visibility_hundredths_sm", 1001), ("min_crosswind_kt", 51)):
            with engine.connect() as conn, pytest.raises(IntegrityError):
                conn.execute(text(f"UPDATE people SET {column} = :v WHERE email = :e"), {"v": value, "e": MARA})
    finally:
        engine.dispose()


def _round_trip(url: str, seed: Path, reader) -> None:  # type: ignore[no-untyped-def]
    migrate.upgrade(url)
    # at head, which is this revision or one chained after it (the demo loads with the head's models)
    script = ScriptDirectory.from_config(migrate.alembic_config())
    assert migrate.current_revision(url) == script.get_current_head()
    assert REVISION in {r.revision for r in script.iterate_revisions(script.get_current_head(), "base")}
    _load_demo(url, seed, reader)
    people = _scalar(url, "SELECT count(*) FROM people")
    entries = _scalar(url, "SELECT count(*) FROM entries")
    with_baseline = _scalar(url, "SELECT count(*) FROM people WHERE min_ceiling_ft IS NOT NULL")
    assert with_baseline == 5  # the demo school file gives five pilots a baseline
    # Mara's 2 SM are stored exactly, as 200 hundredths.
    assert _scalar(url, "SELECT min_visibility_hundredths_sm FROM people WHERE email = :e", e=MARA) == 200
    _out_of_range_is_refused(url)

    migrate.downgrade(url, BEFORE)
    assert migrate.current_revision(url) == BEFORE
    assert not (_columns(url) & NEW_COLUMNS)
    assert _scalar(url, "SELECT count(*) FROM people") == people  # the rebuild keeps every row
    assert _scalar(url, "SELECT count(*) FROM entries") == entries  # and the rows that point at people

    migrate.upgrade(url)
    migrate.check(url)
    assert NEW_COLUMNS <= _columns(url)
    assert _scalar(url, "SELECT count(*) FROM people WHERE min_ceiling_ft IS NOT NULL") == 0  # nullable, empty
    assert _scalar(url, "SELECT count(*) FROM people") == people
    _out_of_range_is_refused(url)

    migrate.downgrade(url, "base")
    assert _scalar(url, "SELECT count(*) FROM alembic_version") == 0


def test_personal_minimums_revision_down_and_up_with_rows_on_sqlite(sqlite_url: str, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _round_trip(sqlite_url, demo_seed, interchange.read_json)


@pytest.mark.postgres
def test_personal_minimums_revision_down_and_up_with_rows_on_postgresql(pg_url: str, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _round_trip(pg_url, demo_seed, interchange.read_json)
