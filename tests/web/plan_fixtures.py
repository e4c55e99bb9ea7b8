"""Fixtures for the calendar, planning and after-the-flight tests: the demo school with its December proposals saved.

The proposals come from ``planning.propose_sessions`` on the real demo
scenario (2026-12-01 .. 2026-12-28), stored as ``proposed``.
"""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from datetime import UTC, date, datetime
from pathlib import Path

import pytest
from flask import Flask
from sqlalchemy.orm import Session

from planner import planning
from planner.config import REPO_ROOT
from planner.db import models, repository
from planner.web import db_session
from tests.web.dash_fixtures import build_database, make_app

START, END = date(2026, 12, 1), date(2026, 12, 28)
NOW = datetime(2026, 12, 1, tzinfo=UTC)  # what planner.web.now() gives with PLANNER_TODAY=2026-12-01


def _save_december(s: Session) -> None:
    school = repository.find_by(s, models.School, slug="juniper-ridge")
    proposal = planning.propose_sessions(s, school.id, START, END, now=NOW)
    assert planning.save_proposals(s, proposal, now=NOW), "the demo school gets sessions in December"


@pytest.fixture(scope="module")
def plan_database(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return build_database(tmp_path_factory.mktemp("plan-demo"), REPO_ROOT / "seed_demo", extra=_save_december)


@pytest.fixture
def papp(plan_database: Path, tmp_path: Path) -> Iterator[Flask]:
    path = tmp_path / "web.sqlite3"
    shutil.copy(plan_database, path)
    application = make_app(path, tmp_path)
    yield application
    application.extensions["planner.engine"].dispose()


def stored_sessions(app: Flask) -> list[dict]:
    """Every stored session as plain data: id, uid, status, version, people and start."""
    with app.app_context():
        school = repository.find_by(db_session(), models.School, slug="juniper-ridge")
        return [
            {"id": r.id, "uid": r.uid, "status": r.status, "version": r.version, "sequence": r.sequence,
             "pf": r.pilot_flying.name, "sp": r.safety_pilot.name, "aircraft": r.aircraft.registration, "people": r.people_ids, "mutual": r.is_mutual,
             "starts_at": r.starts_at, "ends_at": r.ends_at}
            for r in planning.school_sessions(db_session(), school.id, since=datetime(2000, 1, 1, tzinfo=UTC))
        ]


def session_with(app: Flask, name: str) -> dict:
    """The first stored session with the person called ``name`` in either seat (or either leg)."""
    with app.app_context():
        pid = repository.person_by_email(db_session(), _email(name)).id
    return next(s for s in stored_sessions(app) if pid in s["people"])


def _email(name: str) -> str:
    from tests.web.dash_fixtures import PASSWORDS

    return PASSWORDS[name][0]
