"""Engine and session factory built from ``Settings``.

The caller owns the session and its transaction. SQLite connections of the
app get ``PRAGMA foreign_keys=ON``; migration connections must not (see
``migrations/env.py``), so ``make_engine(..., foreign_keys=False)`` exists for them.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from sqlalchemy import Engine, create_engine, event, inspect
from sqlalchemy.orm import Session, sessionmaker

from planner.config import Settings


def make_engine(url: str, *, foreign_keys: bool = True, **kwargs: Any) -> Engine:
    """An engine for ``url``; on SQLite, enforce foreign keys on each new connection unless told not to."""
    engine = create_engine(url, **kwargs)
    if engine.dialect.name == "sqlite" and foreign_keys:

        @event.listens_for(engine, "connect")
        def _enable_foreign_keys(dbapi_connection: Any, _record: Any) -> None:
            cursor = dbapi_connection.cursor()
            cursor.execute("PRAGMA foreign_keys=ON")
            cursor.close()

    return engine


def make_session_factory(engine: Engine) -> sessionmaker[Session]:
    """Sessions bound to ``engine``; objects stay readable after commit."""
    return sessionmaker(bind=engine, expire_on_commit=False)


class DatabaseNotReady(RuntimeError):
    """The database has no schema yet (``planner init`` has not been run)."""


def is_initialised(engine: Engine) -> bool:
    """Whether Alembic has stamped this database (any revision)."""
    with engine.connect() as conn:
        return inspect(conn).has_table("alembic_version")


@contextmanager
def session_scope(settings: Settings | None = None) -> Iterator[Session]:
    """One unit of work: commit if the block succeeds, roll back if it raises; dispose the engine after.

    Raises ``DatabaseNotReady`` when the database has not been initialised.
    """
    settings = settings or Settings.from_env()
    engine = make_engine(settings.database_url)
    try:
        if not is_initialised(engine):
            raise DatabaseNotReady(
                "the database has no tables yet: run `planner init` first "
                f"(database: {engine.url.render_as_string(hide_password=True)})"
            )
        with make_session_factory(engine)() as session:
            try:
                yield session
                session.commit()
            except BaseException:
                session.rollback()
                raise
    finally:
        engine.dispose()
