"""Fixtures for the dashboard, school and settings tests: the real demo scenario, today pinned to 2026-12-01."""

from __future__ import annotations

import re
import shutil
from collections.abc import Callable
from datetime import date
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy.orm import Session

from planner import services
from planner.config import REPO_ROOT, Settings
from planner.db import migrate
from planner.db.session import make_engine, make_session_factory
from planner.web import create_app

AS_OF = date(2026, 12, 1)
PASSWORDS = {
    "wren": ("wren.tamaki@juniper-ridge.example", "juniper-admin-wren"),
    "hollis": ("hollis.varga@juniper-ridge.example", "juniper-cfii-hollis"),
    "mara": ("mara.oyelaran@juniper-ridge.example", "juniper-pilot-mara"),
    "tobias": ("tobias.lindqvist@juniper-ridge.example", "juniper-pilot-tobias"),
    "priya": ("priya.castellano@juniper-ridge.example", "juniper-pilot-priya"),
    "dev": ("dev.halloran@juniper-ridge.example", "juniper-pilot-dev"),
    "signe": ("signe.mbeki@juniper-ridge.example", "juniper-pilot-signe"),
    "rafael": ("rafael.okonkwo-berg@juniper-ridge.example", "juniper-pilot-rafael"),
}
PILOTS = ("mara", "tobias", "priya", "dev", "signe", "rafael")


def build_database(base: Path, seed: Path, *, reader: Callable[..., Any] | None = None,
                   extra: Callable[[Session], None] | None = None) -> Path:
    """A migrated SQLite file under ``base`` with the demo school of ``seed`` loaded as of 2026-12-01.

    ``reader`` reads the seed's logbooks (the loader's default when None); ``extra`` adds rows before the commit.
    """
    path = base / "demo.sqlite3"
    load_demo_at(f"sqlite:///{path}", seed, reader=reader, extra=extra)
    return path


def load_demo_at(url: str, seed: Path, *, reader: Callable[..., Any] | None = None,
                 extra: Callable[[Session], None] | None = None) -> None:
    """Migrate the (empty) database at ``url`` and load the demo school of ``seed`` as of 2026-12-01."""
    migrate.upgrade(url)
    engine = make_engine(url)
    with make_session_factory(engine)() as s:
        services.load_demo(s, seed, AS_OF, **({"reader": reader} if reader else {}))
        if extra is not None:
            extra(s)
        s.commit()
    engine.dispose()


def build_demo_database(base: Path) -> Path:
    """A SQLite file with the real demo scenario (seed_demo/) loaded as of 2026-12-01."""
    return build_database(base, REPO_ROOT / "seed_demo")


def make_app(path: Path, tmp_path: Path, **config: object) -> Flask:
    return make_app_at(f"sqlite:///{path}", tmp_path, **config)


def make_app_at(url: str, tmp_path: Path, **config: object) -> Flask:
    """The app on the database at ``url`` (SQLite or PostgreSQL), today pinned to 2026-12-01."""
    settings = Settings(database_url=url, secret_key="test-secret", instance_dir=tmp_path, seed_dir=tmp_path)
    return create_app(settings, TESTING=True, PLANNER_TODAY=AS_OF.isoformat(), **config)


@pytest.fixture(scope="module")
def demo_database(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return build_demo_database(tmp_path_factory.mktemp("dash-demo"))


@pytest.fixture
def app(demo_database: Path, tmp_path: Path):  # type: ignore[no-untyped-def]
    path = tmp_path / "web.sqlite3"
    shutil.copy(demo_database, path)
    application = make_app(path, tmp_path)
    yield application
    application.extensions["planner.engine"].dispose()


@pytest.fixture
def client(app: Flask) -> FlaskClient:
    return app.test_client()


def csrf(page: str) -> str:
    match = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page) or re.search(
        r'type="hidden" name="csrf_token" value="([^"]+)"', page
    ) or re.search(r'id="csrf_token" name="csrf_token" type="hidden" value="([^"]+)"', page)
    assert match, "no CSRF token in the page"
    return match.group(1)


def sign_in(client: FlaskClient, who: str) -> None:
    email, password = PASSWORDS[who]
    token = csrf(client.get("/login").get_data(as_text=True))
    response = client.post("/login", data={"email": email, "password": password, "csrf_token": token})
    assert response.status_code == 302, f"sign-in as {who} failed"


def person_id(app: Flask, who: str) -> int:
    from planner.db import repository

    with app.app_context():
        from planner.web import db_session

        return repository.person_by_email(db_session(), PASSWORDS[who][0]).id


OTHER_SCHOOL = {
    "instructor": ("ines.halvorsen@larkspur-field.example", "larkspur-cfii-ines"),
    "pilot": ("osric.pemberton@larkspur-field.example", "larkspur-pilot-osric"),
}


def add_other_school(app: Flask) -> dict[str, int]:
    """A second (invented) school with one instructor and one pilot; returns their ids."""
    from datetime import UTC, datetime

    from werkzeug.security import generate_password_hash

    from planner.db import models
    from planner.web import db_session

    stamp = datetime(2026, 12, 1, tzinfo=UTC)
    with app.app_context():
        session = db_session()
        school = models.School(slug="larkspur-field", name="Larkspur Field Flying Club")
        session.add(school)
        session.flush()
        ids = {}
        for role, (email, password) in OTHER_SCHOOL.items():
            person = models.Person(
                school_id=school.id, name=email.split("@")[0].replace(".", " ").title(), email=email,
                password_hash=generate_password_hash(password), is_pilot=role == "pilot",
                is_instructor=role == "instructor", is_admin=False, certificate_level="private",
                category_classes=["airplane/single-engine-land"], instrument_categories=["airplane"],
                instructor_ratings=[], rule_sets=["faa-part61"], practice_targets={}, timezone="America/Denver",
                created_at=stamp,
            )
            session.add(person)
            session.flush()
            ids[role] = person.id
        session.commit()
    return ids


def sign_in_as(client: FlaskClient, email: str, password: str) -> None:
    token = csrf(client.get("/login").get_data(as_text=True))
    response = client.post("/login", data={"email": email, "password": password, "csrf_token": token})
    assert response.status_code == 302, f"sign-in as {email} failed"
