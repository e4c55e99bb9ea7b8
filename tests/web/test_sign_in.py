"""Sign-in, sign-in throttling and the minimal home page (Flask test client)."""

from __future__ import annotations

import html
import shutil
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
from flask import Flask
from flask.testing import FlaskClient

from planner import CAUTION, services
from planner.config import Settings
from planner.db import migrate
from planner.db.session import make_engine, make_session_factory
from planner.web import create_app
from tests.conftest import build_demo_seed, reader_module
from tests.web.dash_fixtures import build_database, csrf, make_app

MARA = ("mara.oyelaran@juniper-ridge.example", "juniper-pilot-mara")


@pytest.fixture(scope="module")
def demo_database(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A SQLite file with the demo loaded, built once per module (password hashing is slow on purpose)."""
    base = tmp_path_factory.mktemp("web-demo")
    return build_database(base, build_demo_seed(base), reader=reader_module().read_json)


@pytest.fixture
def app(demo_database: Path, tmp_path: Path):  # type: ignore[no-untyped-def]
    path = tmp_path / "web.sqlite3"
    shutil.copy(demo_database, path)  # each test gets its own copy
    app = make_app(path, tmp_path)
    yield app
    app.extensions["planner.engine"].dispose()


@pytest.fixture
def client(app: Flask) -> FlaskClient:
    return app.test_client()


def _sign_in(client: FlaskClient, email: str, password: str):  # type: ignore[no-untyped-def]
    token = csrf(client.get("/login").get_data(as_text=True))
    return client.post("/login", data={"email": email, "password": password, "csrf_token": token})


def test_login_page_has_a_csrf_token_and_the_caution(client: FlaskClient) -> None:
    response = client.get("/login")
    page = response.get_data(as_text=True)
    assert response.status_code == 200
    assert len(csrf(page)) > 20
    footer = page.split("<footer", 1)[1]
    assert html.escape(CAUTION) in footer


def test_the_home_page_needs_a_signed_in_person(client: FlaskClient) -> None:
    response = client.get("/")
    assert response.status_code == 302 and "/login" in response.headers["Location"]


def test_sign_in_with_a_demo_password_shows_the_name_and_the_caution(client: FlaskClient) -> None:
    response = _sign_in(client, *MARA)
    assert response.status_code == 302
    cookie = response.headers["Set-Cookie"]
    assert "HttpOnly" in cookie and "SameSite=Lax" in cookie
    page = client.get("/").get_data(as_text=True)
    assert "Mara Oyelaran" in page
    assert html.escape(CAUTION) in page.split("<footer", 1)[1]


def test_email_is_matched_without_regard_to_case(client: FlaskClient) -> None:
    assert _sign_in(client, MARA[0].upper(), MARA[1]).status_code == 302


def test_a_wrong_password_redisplays_the_form_with_a_message(client: FlaskClient) -> None:
    response = _sign_in(client, MARA[0], "not-the-password")
    page = response.get_data(as_text=True)
    assert response.status_code == 401
    assert "do not match an account" in page
    assert MARA[0] in page  # what was typed is kept
    assert 'name="password"' in page and "not-the-password" not in page
    assert client.get("/").status_code == 302


def test_a_post_without_the_csrf_token_is_refused(client: FlaskClient) -> None:
    client.get("/login")
    response = client.post("/login", data={"email": MARA[0], "password": MARA[1]})
    assert response.status_code == 400
    assert client.get("/").status_code == 302


def test_sign_out_needs_a_post_and_ends_the_session(client: FlaskClient) -> None:
    _sign_in(client, *MARA)
    page = client.get("/").get_data(as_text=True)
    assert client.get("/logout").status_code == 405
    response = client.post("/logout", data={"csrf_token": csrf(page)})
    assert response.status_code == 302
    assert client.get("/").status_code == 302


def test_next_parameter_cannot_send_the_user_off_site(client: FlaskClient) -> None:
    token = csrf(client.get("/login").get_data(as_text=True))
    response = client.post(
        "/login?next=//evil.example/", data={"email": MARA[0], "password": MARA[1], "csrf_token": token}
    )
    assert response.status_code == 302 and response.headers["Location"] == "/"


def test_pages_forbid_framing_and_inline_scripts(client: FlaskClient) -> None:
    headers = client.get("/login").headers
    assert "frame-ancestors 'none'" in headers["Content-Security-Policy"]
    assert "'unsafe-inline'" not in headers["Content-Security-Policy"]
    assert headers["X-Content-Type-Options"] == "nosniff"


def test_the_stylesheet_is_served_locally(client: FlaskClient) -> None:
    page = client.get("/login").get_data(as_text=True)
    assert "http://" not in page and "https://" not in page
    response = client.get("/static/style.css")
    response.close()  # static files are streamed from an open file
    assert response.status_code == 200 and response.mimetype == "text/css"


# ------------------------------------------------------------------ throttling


class Clock:
    """An injected clock (the app reads it through the PLANNER_CLOCK config key)."""

    def __init__(self, start: datetime) -> None:
        self.now = start

    def __call__(self) -> datetime:
        return self.now


@pytest.fixture
def clock(app: Flask) -> Clock:
    c = Clock(datetime(2026, 12, 1, 15, 0, tzinfo=UTC))
    app.config.update(PLANNER_CLOCK=c, PLANNER_SIGNIN_MAX_FAILURES=3, PLANNER_SIGNIN_WINDOW_MINUTES=10,
                      PLANNER_SIGNIN_LOCKOUT_MINUTES=20)
    return c


def test_after_too_many_failures_even_the_right_password_is_refused_until_the_lockout_ends(client: FlaskClient, clock: Clock) -> None:
    for _ in range(2):
        assert _sign_in(client, MARA[0], "wrong-password").status_code == 401
    third = _sign_in(client, MARA[0], "wrong-password")
    assert third.status_code == 429 and "paused until 15:20 UTC" in third.get_data(as_text=True)
    clock.now += timedelta(minutes=19)
    refused = _sign_in(client, MARA[0], MARA[1])
    assert refused.status_code == 429
    assert client.get("/").status_code == 302  # still signed out
    clock.now += timedelta(minutes=1, seconds=1)
    assert _sign_in(client, MARA[0], MARA[1]).status_code == 302
    assert client.get("/").status_code == 200


def test_failures_spread_beyond_the_window_do_not_lock(client: FlaskClient, clock: Clock) -> None:
    for _ in range(5):
        assert _sign_in(client, MARA[0], "wrong-password").status_code == 401
        clock.now += timedelta(minutes=6)
    # A window runs 10 minutes from its first failure: failures at 0 and 6 count 2; 12 opens a new window
    # (12 and 18 count 2); 24 opens another. The limit of 3 is never reached.
    assert _sign_in(client, MARA[0], MARA[1]).status_code == 302


def test_a_successful_sign_in_clears_the_count(client: FlaskClient, app: Flask, clock: Clock) -> None:
    for _ in range(2):
        _sign_in(client, MARA[0], "wrong-password")
    assert _sign_in(client, MARA[0], MARA[1]).status_code == 302
    client.post("/logout", data={"csrf_token": csrf(client.get("/").get_data(as_text=True))})
    for _ in range(2):
        assert _sign_in(client, MARA[0], "wrong-password").status_code == 401  # a fresh count of 1, 2


def test_the_count_is_per_email_and_address_and_kept_in_the_database(client: FlaskClient, app: Flask, clock: Clock) -> None:
    for _ in range(3):
        _sign_in(client, MARA[0].upper(), "wrong-password")  # the email's case does not matter
    assert _sign_in(client, MARA[0], MARA[1]).status_code == 429
    # Another address is not locked out; another email from the locked address neither.
    other = app.test_client()
    token = csrf(other.get("/login").get_data(as_text=True))
    response = other.post("/login", data={"email": MARA[0], "password": MARA[1], "csrf_token": token},
                          environ_base={"REMOTE_ADDR": "192.0.2.7"})
    assert response.status_code == 302
    assert _sign_in(client, "tobias.lindqvist@juniper-ridge.example", "juniper-pilot-tobias").status_code == 302
    # A second app on the same database (another worker) sees the same lockout.
    second = create_app(Settings(database_url=app.extensions["planner.settings"].database_url, secret_key="test-secret",
                                 instance_dir=Path(app.instance_path), seed_dir=Path(app.instance_path)),
                        TESTING=True, PLANNER_CLOCK=clock)
    try:
        worker = second.test_client()
        token = csrf(worker.get("/login").get_data(as_text=True))
        locked = worker.post("/login", data={"email": MARA[0], "password": MARA[1], "csrf_token": token})
        assert locked.status_code == 429
    finally:
        second.extensions["planner.engine"].dispose()


def test_unknown_emails_are_throttled_like_known_ones(client: FlaskClient, clock: Clock) -> None:
    codes = [_sign_in(client, "nobody@juniper-ridge.example", "guess").status_code for _ in range(4)]
    assert codes == [401, 401, 429, 429]


@pytest.mark.parametrize("backend", ["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def test_the_throttle_revision_goes_up_and_down_keeping_other_data(backend: str, request: pytest.FixtureRequest, tmp_path: Path) -> None:
    from alembic.script import ScriptDirectory
    from sqlalchemy import inspect, text

    url = f"sqlite:///{tmp_path / 'm.sqlite3'}" if backend == "sqlite" else request.getfixturevalue("pg_url")
    script = ScriptDirectory.from_config(migrate.alembic_config())
    revision = next(r for r in script.walk_revisions() if "sign_in_throttles" in Path(r.path).name)
    migrate.upgrade(url, revision.down_revision)
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            conn.execute(text("INSERT INTO schools (slug, name) VALUES ('s', 'S')"))
        migrate.upgrade(url, revision.revision)
        with engine.begin() as conn:
            assert "sign_in_throttles" in inspect(conn).get_table_names()
            conn.execute(text("INSERT INTO sign_in_throttles (email, address, failures, window_started_at) "
                              "VALUES ('a@b.example', '127.0.0.1', 1, '2026-12-01 15:00:00')"))
        migrate.downgrade(url, revision.down_revision)
        with engine.begin() as conn:
            assert "sign_in_throttles" not in inspect(conn).get_table_names()
            assert conn.execute(text("SELECT count(*) FROM schools")).scalar_one() == 1
        migrate.upgrade(url)
        migrate.check(url)  # models and migrations agree (alembic check needs the head, which later revisions move)
    finally:
        engine.dispose()


@pytest.mark.postgres
def test_the_throttle_counts_and_locks_on_postgresql(pg_migrated_url: str) -> None:
    engine = make_engine(pg_migrated_url)
    policy = services.ThrottlePolicy(max_failures=3, window=timedelta(minutes=10), lockout=timedelta(minutes=20))
    start = datetime(2026, 12, 1, 15, 0, tzinfo=UTC)
    try:
        with make_session_factory(engine)() as s:
            results = [services.record_sign_in_failure(s, "Pg.User@Example.org", "192.0.2.1", start, policy) for _ in range(3)]
            s.commit()
        assert results == [None, None, start + timedelta(minutes=20)]
        with make_session_factory(engine)() as s:  # a new session, as another worker would have
            assert services.sign_in_locked_until(s, "pg.user@example.org", "192.0.2.1", start) == start + timedelta(minutes=20)
            assert services.sign_in_locked_until(s, "pg.user@example.org", "192.0.2.2", start) is None
            assert services.sign_in_locked_until(s, "pg.user@example.org", "192.0.2.1", start + timedelta(minutes=21)) is None
            services.record_sign_in_success(s, "pg.user@example.org", "192.0.2.1")
            s.commit()
            assert services.sign_in_locked_until(s, "pg.user@example.org", "192.0.2.1", start) is None
    finally:
        engine.dispose()
