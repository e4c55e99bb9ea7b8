"""Over real HTTP (the app served on loopback): sign-in throttling, and no secret in any log or CLI output."""

from __future__ import annotations

import json
import logging
import re
import shutil
import subprocess
import sys
import os
from pathlib import Path

import pytest
from flask import Flask

from planner.config import REPO_ROOT, Settings
from planner.web import create_app
from tests.conftest import small_logbook
from tests.security.helpers import Browser, serve
from tests.web.dash_fixtures import AS_OF, PASSWORDS, demo_database  # noqa: F401

SECRET_KEY = "sk-" + "7f3c9a1e5b" * 4  # recognisable in any output


@pytest.fixture
def live_app(demo_database: Path, tmp_path: Path) -> Flask:  # type: ignore[misc]
    path = tmp_path / "live.sqlite3"
    shutil.copy(demo_database, path)
    settings = Settings(database_url=f"sqlite:///{path}", secret_key=SECRET_KEY, instance_dir=tmp_path, seed_dir=tmp_path)
    application = create_app(settings, PLANNER_TODAY=AS_OF.isoformat())
    yield application
    application.extensions["planner.engine"].dispose()


def _token(page: str) -> str:
    match = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page) or re.search(
        r'value="([^"]+)"[^>]*name="csrf_token"', page)
    assert match, "no CSRF token on the page"
    return match.group(1)


def _sign_in(browser: Browser, email: str, password: str) -> int:
    status, _headers, page = browser.request("GET", "/login")
    assert status in (200, 302)
    if status == 302:
        return status
    status, _headers, _body = browser.request("POST", "/login", {"email": email, "password": password,
                                                                "csrf_token": _token(page)})
    return status


def test_repeated_wrong_passwords_over_http_lock_the_sign_in_even_for_the_right_password(live_app: Flask) -> None:
    """Default policy (planner.services.ThrottlePolicy): 5 failures in 15 minutes lock for 15 minutes."""
    email, password = PASSWORDS["mara"]
    with serve(live_app) as base:
        attacker = Browser(base)
        codes = [_sign_in(attacker, email, f"guess-{n}-wrong") for n in range(6)]
        assert codes == [401, 401, 401, 401, 429, 429]
        # The right password from the same address is refused too, and signs no one in.
        assert _sign_in(attacker, email, password) == 429
        status, headers, _ = attacker.request("GET", "/")
        assert status == 302 and headers["Location"].startswith("/login")
        # Case and surrounding spaces do not reset the count.
        assert _sign_in(Browser(base), "  " + email.upper(), password) == 429
        # Another account from the same address is not locked by the attack on this one.
        other_email, other_password = PASSWORDS["tobias"]
        assert _sign_in(Browser(base), other_email, other_password) == 302


def test_no_password_or_secret_key_in_the_logs_over_http(
    live_app: Flask, caplog: pytest.LogCaptureFixture, capfd: pytest.CaptureFixture[str]
) -> None:
    email, password = PASSWORDS["mara"]
    wrong = "wrong-password-" + "q9" * 8
    caplog.set_level(logging.DEBUG)  # every logger, every level
    with serve(live_app) as base:
        assert _sign_in(Browser(base), email, wrong) == 401
        browser = Browser(base)
        assert _sign_in(browser, email, password) == 302
        status, _h, page = browser.request("GET", "/")
        assert status == 200
        browser.request("GET", "/no-such-page")
    out, err = capfd.readouterr()
    logged = caplog.text + out + err
    assert "POST /login" in logged, "the request log was not captured, so the check below would prove nothing"
    for secret in (password, wrong, SECRET_KEY):
        assert secret not in logged
    assert password not in page and SECRET_KEY not in page


def _cli(tmp_path: Path, env: dict[str, str], *args: str, stdin: str | None = None) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "planner", *args], cwd=REPO_ROOT, env=env, input=stdin,
                          capture_output=True, text=True, timeout=300)


def test_no_secret_in_cli_output(pg_url: str, tmp_path: Path) -> None:
    """The CLI with a database password in the URL and a secret key set: neither appears in its output or errors."""
    db_password = "pw-" + "3d8e1b" * 4
    url = pg_url.replace("postgresql+psycopg://postgres@", f"postgresql+psycopg://postgres:{db_password}@")
    assert db_password in url  # trust authentication on the test server ignores the password
    env = dict(os.environ, PLANNER_DATABASE_URL=url, PLANNER_SECRET_KEY=SECRET_KEY,
               PLANNER_INSTANCE_DIR=str(tmp_path / "instance"), PYTHONPATH=str(REPO_ROOT))
    logbook = tmp_path / "logbook.json"
    logbook.write_text(json.dumps(small_logbook("Perrin Vasko", "pv")), encoding="utf-8")
    runs = [
        _cli(tmp_path, dict(env, PLANNER_DATABASE_URL=url + "_missing"), "pilots"),  # not reachable: an error
        _cli(tmp_path, env, "init"),
        _cli(tmp_path, env, "import", str(logbook)),
        _cli(tmp_path, env, "pilots"),
        _cli(tmp_path, env, "export", "--pilot", "1"),
        _cli(tmp_path, env, "evaluate", "--pilot", "1", "--as-of", "2026-12-01"),
        _cli(tmp_path, env, "backup", "--school", "1", "-o", str(tmp_path / "b.json")),
        _cli(tmp_path, env, "import", str(tmp_path / "missing.json")),
    ]
    assert runs[1].returncode == 0 and runs[2].returncode == 0 and runs[4].returncode == 0
    assert runs[0].returncode != 0
    for run in runs:
        for secret in (db_password, SECRET_KEY):
            assert secret not in run.stdout and secret not in run.stderr, (run.args, run.stderr[-500:])
