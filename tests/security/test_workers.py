"""Several worker processes: no per-process state that would sign people out or split the throttle.

Sessions live in the signed cookie (one PLANNER_SECRET_KEY for every worker),
sign-in throttling in the database (tests/web/test_sign_in.py shares it
between two apps); the development key kept in the instance directory is the
same for workers that start at the same moment.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

from planner.config import REPO_ROOT, Settings
from planner.web import create_app
from tests.web.dash_fixtures import AS_OF, demo_database, sign_in  # noqa: F401

PRINT_KEY = "from planner.config import Settings; print(Settings.from_env().secret_key)"


def test_workers_starting_together_agree_on_the_generated_secret_key(tmp_path: Path) -> None:
    env = dict(os.environ, PLANNER_INSTANCE_DIR=str(tmp_path / "instance"), PYTHONPATH=str(REPO_ROOT))
    env.pop("PLANNER_SECRET_KEY", None)
    workers = [subprocess.Popen([sys.executable, "-c", PRINT_KEY], cwd=REPO_ROOT, env=env, stdout=subprocess.PIPE,
                                text=True) for _ in range(6)]
    keys = {w.communicate(timeout=60)[0].strip() for w in workers}
    assert len(keys) == 1 and len(next(iter(keys))) == 64
    assert sorted(p.name for p in (tmp_path / "instance").iterdir()) == ["secret_key"]
    assert (tmp_path / "instance" / "secret_key").stat().st_mode & 0o077 == 0


def test_a_session_from_one_worker_is_honoured_by_another(demo_database: Path, tmp_path: Path, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "shared.sqlite3"
    shutil.copy(demo_database, path)
    monkeypatch.setenv("PLANNER_DATABASE_URL", f"sqlite:///{path}")
    monkeypatch.setenv("PLANNER_SECRET_KEY", "one-key-for-every-worker-" + "x" * 20)
    first = create_app(PLANNER_TODAY=AS_OF.isoformat())
    second = create_app(Settings.from_env(), PLANNER_TODAY=AS_OF.isoformat())
    try:
        client = first.test_client()
        sign_in(client, "mara")
        other = second.test_client()
        other.set_cookie("session", client.get_cookie("session").value)
        assert other.get("/").status_code == 200
    finally:
        first.extensions["planner.engine"].dispose()
        second.extensions["planner.engine"].dispose()
