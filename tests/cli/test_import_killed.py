"""A `planner import` process killed (SIGKILL) while it is writing leaves no trace in the database.

The import is one transaction: rows are flushed to the database in batches
(the process says "stored N/M entries (not yet committed)" on stderr after
each), and committed only at the end. The test waits for the first of those
lines, so the kill lands while uncommitted rows sit in the open transaction,
then checks from a fresh connection that every table is as before and that
no pilot was created; a small import afterwards shows the database is not
left locked or half-written (SQLite's hot journal is rolled back, PostgreSQL
aborts the dead connection's transaction).
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from datetime import date, timedelta
from pathlib import Path

import pytest
from sqlalchemy import func, select

from planner.config import REPO_ROOT
from planner.core.logbook import Approach, Entry, Logbook, Pilot
from planner.db import migrate, models
from planner.db.session import make_engine, make_session_factory
from planner.export import interchange
from tests.conftest import small_logbook

ENTRIES = 20_000
TABLES = (models.Person, models.Entry, models.Approach, models.EntryCheck, models.EntryRevision)


@pytest.fixture(scope="module")
def big_logbook(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A valid 20,000-entry logbook (invented pilot) in the interchange format."""
    start = date(1990, 1, 1)
    entries = tuple(
        Entry(
            id=f"gen-{i:05d}",
            date=start + timedelta(days=i // 3),
            conditions="simulated",
            approaches=(Approach("ILS", "QJRR", "27"),),
            holds=1,
            instrument_simulated_hours=1.2,
            safety_pilot="Quill Aberdane",
            landings=2,
            total_hours=1.5,
            checks=("ipc",) if i % 500 == 0 else (),
        )
        for i in range(ENTRIES)
    )
    pilot = Pilot("Ysolde Marrant", "America/Denver", ("airplane",), ("airplane/single-engine-land",))
    path = tmp_path_factory.mktemp("kill") / "big.json"
    path.write_text(interchange.write_json(Logbook(pilot, entries)), encoding="utf-8")
    return path


def _counts(url: str) -> dict[str, int]:
    engine = make_engine(url)
    try:
        with make_session_factory(engine)() as s:
            counts = {t.__tablename__: s.scalar(select(func.count()).select_from(t)) for t in TABLES}
            counts["pilots named in the file"] = s.scalar(
                select(func.count()).select_from(models.Person).where(models.Person.name == "Ysolde Marrant")
            )
            return counts
    finally:
        engine.dispose()


def _planner(url: str, tmp_path: Path, *args: str) -> subprocess.Popen[str]:
    env = dict(os.environ, PLANNER_DATABASE_URL=url, PLANNER_INSTANCE_DIR=str(tmp_path / "instance"),
               PYTHONPATH=str(REPO_ROOT), PYTHONUNBUFFERED="1")
    return subprocess.Popen(
        [sys.executable, "-m", "planner", *args],
        cwd=REPO_ROOT, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
    )


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def database_url(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """A migrated database holding one small logbook already (so 'unchanged' is not just 'empty')."""
    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path / 'killed.sqlite3'}"
        migrate.upgrade(url)
    else:
        url = request.getfixturevalue("pg_migrated_url")
    existing = tmp_path / "existing.json"
    existing.write_text(json.dumps(small_logbook("Hesper Clay", "hc")), encoding="utf-8")
    done = _planner(url, tmp_path, "import", str(existing))
    _out, err = done.communicate(timeout=120)
    assert done.returncode == 0, err
    return url


def test_import_killed_while_storing_leaves_no_partial_data(database_url: str, big_logbook: Path, tmp_path: Path) -> None:
    before = _counts(database_url)
    assert before["entries"] >= 3 and before["pilots named in the file"] == 0

    proc = _planner(database_url, tmp_path, "import", str(big_logbook))
    seen: list[str] = []
    deadline = time.monotonic() + 300
    assert proc.stderr is not None
    for line in proc.stderr:
        seen.append(line)
        if line.startswith("stored "):
            # Rows are in the open transaction now; kill without any chance to clean up.
            os.kill(proc.pid, signal.SIGKILL)
            break
        assert time.monotonic() < deadline, "no 'stored' progress line in time"
    out, _rest = proc.communicate(timeout=60)
    assert any(line.startswith("stored 1000/20000 entries") for line in seen), seen
    assert proc.returncode == -signal.SIGKILL, f"the import was not killed mid-write (exit {proc.returncode}): {seen}"
    assert out == "", "a killed import printed a pilot id"

    assert _counts(database_url) == before

    # The database is usable afterwards: no lock left, no half transaction in the way.
    small = tmp_path / "after.json"
    small.write_text(json.dumps(small_logbook("Orrin Tesk", "after")), encoding="utf-8")
    after = _planner(database_url, tmp_path, "import", str(small))
    out, err = after.communicate(timeout=120)
    assert after.returncode == 0, err
    counts = _counts(database_url)
    assert counts["entries"] == before["entries"] + 3
    assert counts["people"] == before["people"] + 1
    assert counts["pilots named in the file"] == 0
