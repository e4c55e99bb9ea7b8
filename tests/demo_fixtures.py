"""A module-scoped SQLite database holding the real demo scenario, and a session on it per test.

Import both fixtures into a test module: ``from tests.demo_fixtures import db, demo_url  # noqa: F401``.
"""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from sqlalchemy.orm import Session

from planner.cli import main
from planner.db.session import make_engine, make_session_factory


@pytest.fixture(scope="module")
def demo_url(tmp_path_factory: pytest.TempPathFactory) -> str:
    url = f"sqlite:///{tmp_path_factory.mktemp('demo') / 'demo.sqlite3'}"
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("PLANNER_DATABASE_URL", url)
        assert main(["init"]) == 0 and main(["demo"]) == 0
    return url


@pytest.fixture
def db(demo_url: str) -> Iterator[Session]:
    engine = make_engine(demo_url)
    with make_session_factory(engine)() as s:
        yield s
        s.rollback()  # every test leaves the module's database as the demo loaded it
    engine.dispose()
