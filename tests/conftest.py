"""Shared fixtures: throwaway SQLite files, fresh PostgreSQL databases, the interchange module, a demo seed."""

from __future__ import annotations

import importlib
import json
import os
import shutil
import uuid
from collections.abc import Iterator
from pathlib import Path
from types import ModuleType

import pytest
from sqlalchemy import Engine
from sqlalchemy.orm import Session

from planner.config import REPO_ROOT
from planner.db import migrate
from planner.db.session import make_engine, make_session_factory

PG_ADMIN_URL = os.environ.get("PLANNER_TEST_PG_ADMIN_URL", "postgresql+psycopg://postgres@127.0.0.1:5432/test")
DEMO_SLUGS = ("mara", "tobias", "priya", "dev", "signe", "rafael")


@pytest.fixture(autouse=True)
def _isolated_environment(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """No test reads the developer's settings or writes under the repository's instance/."""
    for name in ("PLANNER_DATABASE_URL", "PLANNER_SECRET_KEY", "PLANNER_SEED_DIR", "PLANNER_SECURE_COOKIES"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("PLANNER_INSTANCE_DIR", str(tmp_path / "instance"))


# ------------------------------------------------------------------ SQLite


@pytest.fixture
def sqlite_url(tmp_path: Path) -> str:
    """A URL for a SQLite file that does not exist yet (one per test)."""
    return f"sqlite:///{tmp_path / 'planner.sqlite3'}"


@pytest.fixture
def migrated_url(sqlite_url: str) -> str:
    """A SQLite database upgraded to the latest revision."""
    migrate.upgrade(sqlite_url)
    return sqlite_url


@pytest.fixture
def engine(migrated_url: str) -> Iterator[Engine]:
    eng = make_engine(migrated_url)
    yield eng
    eng.dispose()


@pytest.fixture
def session(engine: Engine) -> Iterator[Session]:
    with make_session_factory(engine)() as s:
        yield s


# ------------------------------------------------------------------ PostgreSQL


def _pg_admin() -> Engine:
    return make_engine(PG_ADMIN_URL, isolation_level="AUTOCOMMIT")


@pytest.fixture(scope="module")
def pg_url(request: pytest.FixtureRequest) -> Iterator[str]:
    """A fresh, empty PostgreSQL database for this test module, dropped afterwards.

    A missing server is a failure, never a skip: the test command starts it.
    """
    import sqlalchemy as sa

    admin = _pg_admin()
    name = f"planner_t_{uuid.uuid4().hex[:12]}"
    try:
        with admin.connect() as conn:
            conn.execute(sa.text(f'CREATE DATABASE "{name}"'))
    except sa.exc.OperationalError as exc:
        admin.dispose()
        pytest.fail(f"PostgreSQL is required and is not reachable at {PG_ADMIN_URL}: {exc}")
    url = PG_ADMIN_URL.rsplit("/", 1)[0] + f"/{name}"
    try:
        yield url
    finally:
        with admin.connect() as conn:
            conn.execute(sa.text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


@pytest.fixture(scope="module")
def pg_migrated_url(pg_url: str) -> str:
    """The module's PostgreSQL database upgraded to the latest revision."""
    migrate.upgrade(pg_url)
    return pg_url


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def any_engine(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[Engine]:
    """A migrated database on SQLite (fresh file) and on PostgreSQL (shared by the module: do not commit)."""
    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path / 'any.sqlite3'}"
        migrate.upgrade(url)
    else:
        url = request.getfixturevalue("pg_migrated_url")
    eng = make_engine(url)
    yield eng
    eng.dispose()


# ------------------------------------------------------------------ interchange


@pytest.fixture
def interchange() -> ModuleType:
    """``planner.export.interchange``, the module under test elsewhere."""
    return importlib.import_module("planner.export.interchange")


def small_logbook(name: str, prefix: str, *, safety_pilot: str | None = None) -> dict:
    """A minimal interchange-format document with three entries."""
    return {
        "format_version": 1,
        "pilot": {
            "name": name,
            "home_timezone": "America/Denver",
            "instrument_categories": ["airplane"],
            "category_classes": ["airplane/single-engine-land"],
        },
        "entries": [
            {
                "id": f"{prefix}-1",
                "date": "2026-06-03",
                "class": "single-engine-land",
                "conditions": "simulated",
                "approaches": [
                    {"type": "ILS", "airfield": "QJRR", "runway": "27"},
                    {"type": "RNAV (GPS)", "airfield": "QPNV", "runway": "17", "to_minimums": True},
                ],
                "holds": 1,
                "instrument_simulated_hours": 1.2,
                "landings": 2,
                "safety_pilot": safety_pilot,
                "aircraft": "N417JR",
                "total_hours": 1.6,
            },
            {
                "id": f"{prefix}-2",
                "date": "2026-08-19",
                "device": "atd",
                "approaches": 2,
                "holds": 1,
                "instrument_simulated_hours": 1.0,
                "aircraft": "JR-ATD1",
                "total_hours": 1.0,
            },
            {
                "id": f"{prefix}-3",
                "date": "2026-11-07",
                "class": "single-engine-land",
                "landings": 3,
                "night_full_stop_landings": 3,
                "checks": ["flight-review"],
                "instructor": "Hollis Varga",
                "aircraft": "N82JR",
                "total_hours": 1.4,
                "remarks": "night pattern work",
            },
        ],
    }


def reader_module() -> ModuleType:
    """The interchange module to read logbooks with."""
    return importlib.import_module("planner.export.interchange")


@pytest.fixture
def demo_seed(tmp_path: Path) -> Path:
    """The real ``seed_demo/school.json`` with small test logbooks (three entries per pilot)."""
    return build_demo_seed(tmp_path)


def build_demo_seed(base: Path) -> Path:
    """Write the test demo seed under ``base``; return its directory."""
    seed = base / "seed"
    (seed / "logbooks").mkdir(parents=True)
    shutil.copy(REPO_ROOT / "seed_demo" / "school.json", seed / "school.json")
    school = json.loads((seed / "school.json").read_text(encoding="utf-8"))
    names = {p["slug"]: p["name"] for p in school["people"] if "slug" in p}
    for slug in DEMO_SLUGS:
        doc = small_logbook(names[slug], slug, safety_pilot="Mara Oyelaran" if slug != "mara" else "Dev Halloran")
        (seed / "logbooks" / f"{slug}.json").write_text(json.dumps(doc, indent=2), encoding="utf-8")
    return seed
