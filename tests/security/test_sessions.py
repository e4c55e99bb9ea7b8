"""Session fixation and cookie flags.

Flask keeps the session in a signed cookie, so "the session id" is the
cookie's value. Sign-in clears whatever the session held and starts a new
one (planner/web/auth.py): a cookie given to, or captured from, the browser
before sign-in never carries the signed-in identity afterwards.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from flask import Flask

from planner.config import Settings
from planner.web import create_app
from tests.web.dash_fixtures import AS_OF, PASSWORDS, app, csrf, demo_database, sign_in  # noqa: F401


def _session_cookie(client) -> str | None:  # type: ignore[no-untyped-def]
    cookie = client.get_cookie("session")
    return cookie.value if cookie is not None else None


def test_sign_in_replaces_the_session_and_drops_what_it_held(app: Flask) -> None:
    client = app.test_client()
    client.get("/login")
    with client.session_transaction() as session:
        session["planted"] = "by someone else"  # e.g. a value an attacker managed to put in the victim's session
    before = _session_cookie(client)
    assert before
    sign_in(client, "mara")
    after = _session_cookie(client)
    assert after and after != before
    with client.session_transaction() as session:
        assert "planted" not in session
        assert session.get("_user_id")


def test_a_cookie_from_before_sign_in_does_not_carry_the_signed_in_identity(app: Flask) -> None:
    victim = app.test_client()
    victim.get("/login")
    planted = _session_cookie(victim)  # what an attacker saw or planted before the victim signed in
    sign_in(victim, "mara")
    assert victim.get("/").status_code == 200

    attacker = app.test_client()
    attacker.set_cookie("session", planted)
    response = attacker.get("/")
    assert response.status_code == 302 and response.headers["Location"].startswith("/login")
    assert attacker.get("/settings").status_code == 302


def test_a_tampered_cookie_is_ignored(app: Flask) -> None:
    client = app.test_client()
    sign_in(client, "mara")
    value = _session_cookie(client)
    other = app.test_client()
    other.set_cookie("session", value[:-2] + ("AA" if not value.endswith("AA") else "BB"))
    assert other.get("/").status_code == 302


def test_sign_out_ends_the_session_in_the_browser(app: Flask) -> None:
    client = app.test_client()
    sign_in(client, "mara")
    token = csrf(client.get("/settings").get_data(as_text=True))
    assert client.post("/logout", data={"csrf_token": token}).status_code == 302
    assert client.get("/").status_code == 302


def _set_cookie_of(response, name: str) -> str:  # type: ignore[no-untyped-def]
    headers = [h for h in response.headers.getlist("Set-Cookie") if h.startswith(f"{name}=")]
    assert headers, f"no {name} cookie set"
    return headers[-1]


def test_the_session_cookie_is_httponly_and_samesite_and_not_secure_by_default(app: Flask) -> None:
    client = app.test_client()
    token = csrf(client.get("/login").get_data(as_text=True))
    email, password = PASSWORDS["mara"]
    response = client.post("/login", data={"email": email, "password": password, "csrf_token": token})
    assert response.status_code == 302
    flags = [f.strip().lower() for f in _set_cookie_of(response, "session").split(";")]
    assert "httponly" in flags
    assert "samesite=lax" in flags
    assert "secure" not in flags  # plain http in development; PLANNER_SECURE_COOKIES turns it on


@pytest.mark.parametrize(("value", "secure"), [("1", True), ("true", True), ("on", True), ("0", False), ("", False)])
def test_planner_secure_cookies_reads_on_and_off(value: str, secure: bool, tmp_path: Path) -> None:
    settings = Settings.from_env({"PLANNER_SECURE_COOKIES": value, "PLANNER_SECRET_KEY": "k" * 32,
                                  "PLANNER_INSTANCE_DIR": str(tmp_path)})
    assert settings.secure_cookies is secure


def test_with_planner_secure_cookies_the_session_cookie_is_secure(demo_database: Path, tmp_path: Path) -> None:
    import shutil

    path = tmp_path / "secure.sqlite3"
    shutil.copy(demo_database, path)
    settings = Settings.from_env({"PLANNER_SECURE_COOKIES": "1", "PLANNER_SECRET_KEY": "s" * 32,
                                  "PLANNER_DATABASE_URL": f"sqlite:///{path}", "PLANNER_INSTANCE_DIR": str(tmp_path)})
    application = create_app(settings, TESTING=True, PLANNER_TODAY=AS_OF.isoformat())
    try:
        client = application.test_client()
        # The browser would only send a Secure cookie back over https: talk https to the test app.
        token = csrf(client.get("/login", base_url="https://localhost").get_data(as_text=True))
        email, password = PASSWORDS["mara"]
        # (Over https Flask-WTF also checks that the Referer is this site, as a browser sends it.)
        response = client.post("/login", base_url="https://localhost", headers={"Referer": "https://localhost/login"},
                               data={"email": email, "password": password, "csrf_token": token})
        assert response.status_code == 302
        flags = [f.strip().lower() for f in _set_cookie_of(response, "session").split(";")]
        assert {"secure", "httponly", "samesite=lax"} <= set(flags)
    finally:
        application.extensions["planner.engine"].dispose()
