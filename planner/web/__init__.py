"""The web app: ``create_app(settings=None)``.

One database session per request (closed at teardown); Flask-Login keeps
the signed-in person's id in the signed session cookie; Flask-WTF puts a
CSRF token on every form. Blueprints live in ``planner.web.<area>``.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, time
from typing import Any
from zoneinfo import ZoneInfo

from flask import Flask, g
from flask_login import LoginManager
from flask_wtf import CSRFProtect
from sqlalchemy.orm import Session

from planner import CAUTION
from planner.config import REPO_ROOT, Settings
from planner.db.session import make_engine, make_session_factory


def db_session() -> Session:
    """The current request's database session (opened on first use)."""
    from flask import current_app

    if "db_session" not in g:
        g.db_session = current_app.extensions["planner.sessions"]()
    return g.db_session


def today(timezone: str | None) -> date:
    """Today's date in ``timezone`` (IANA name; UTC when None).

    With ``now()``, the only places the web app reads the clock. Tests and demos pin it with
    the ``PLANNER_TODAY`` config key (an ISO date).
    """
    from flask import current_app

    pinned = current_app.config.get("PLANNER_TODAY")
    if pinned:
        return date.fromisoformat(str(pinned))
    return datetime.now(ZoneInfo(timezone or "UTC")).date()


def now() -> datetime:
    """The current instant (aware, UTC), for stamps and "has it begun" checks.

    With ``PLANNER_TODAY`` pinned it is 00:00 UTC of that date, so that pages
    and tests that pin the day see a fixed instant too.
    """
    from flask import current_app

    pinned = current_app.config.get("PLANNER_TODAY")
    if pinned:
        return datetime.combine(date.fromisoformat(str(pinned)), time(0), UTC)
    return datetime.now(UTC)


def create_app(settings: Settings | None = None, **overrides: Any) -> Flask:
    """Build the app for ``settings`` (default: from the environment); ``overrides`` go into app.config."""
    settings = settings or Settings.from_env()
    app = Flask(
        __name__,
        template_folder=str(REPO_ROOT / "templates"),
        static_folder="static",
    )
    app.config.update(
        SECRET_KEY=settings.secret_key,
        SESSION_COOKIE_HTTPONLY=True,
        SESSION_COOKIE_SAMESITE="Lax",
        REMEMBER_COOKIE_HTTPONLY=True,
        REMEMBER_COOKIE_SAMESITE="Lax",
        SESSION_COOKIE_SECURE=settings.secure_cookies,
        REMEMBER_COOKIE_SECURE=settings.secure_cookies,
        WTF_CSRF_ENABLED=True,
    )
    if settings.today:
        app.config["PLANNER_TODAY"] = settings.today
    app.config.update(overrides)

    engine = make_engine(settings.database_url)
    app.extensions["planner.engine"] = engine
    app.extensions["planner.sessions"] = make_session_factory(engine)
    app.extensions["planner.settings"] = settings

    @app.teardown_appcontext
    def _close_session(_exc: BaseException | None) -> None:
        session = g.pop("db_session", None)
        if session is not None:
            session.close()

    CSRFProtect(app)
    login = LoginManager(app)
    login.login_view = "auth.login"
    login.login_message = "Please sign in to continue."

    from planner.web import admin, auth, dashboard, logbook, plan, school
    from planner.web import calendar as calendar_area
    from planner.web import settings as settings_area

    login.user_loader(auth.load_account)
    for area in (auth, dashboard, logbook, school, settings_area, admin, calendar_area, plan):
        app.register_blueprint(area.bp)

    @app.context_processor
    def _caution() -> dict[str, str]:
        return {"caution": CAUTION}

    @app.after_request
    def _headers(response):  # type: ignore[no-untyped-def]
        # No inline scripts or third-party resources anywhere; refuse framing.
        response.headers.setdefault(
            "Content-Security-Policy",
            "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
            "frame-ancestors 'none'; form-action 'self'; base-uri 'self'",
        )
        response.headers.setdefault("X-Content-Type-Options", "nosniff")
        response.headers.setdefault("Referrer-Policy", "same-origin")
        return response

    return app
