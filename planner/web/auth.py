"""Sign-in (throttled: failed attempts are counted in the database) and sign-out."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

from flask import Blueprint, current_app, flash, redirect, render_template, request, session, url_for
from flask_login import UserMixin, current_user, login_user, logout_user
from flask_wtf import FlaskForm
from werkzeug.security import check_password_hash
from wtforms import EmailField, PasswordField, SubmitField
from wtforms.validators import DataRequired, Length

from planner import services
from planner.db import models, repository

bp = Blueprint("auth", __name__)


@dataclass(frozen=True)
class Account(UserMixin):
    """The signed-in person as the web layer sees them (no ORM object kept across requests)."""

    id: int
    name: str
    email: str
    roles: tuple[str, ...]
    school_id: int | None

    def get_id(self) -> str:
        return str(self.id)

    @property
    def is_pilot(self) -> bool:
        return "pilot" in self.roles

    @property
    def is_instructor(self) -> bool:
        return "instructor" in self.roles

    @property
    def is_admin(self) -> bool:
        return "admin" in self.roles


def _account(person: models.Person) -> Account:
    return Account(person.id, person.name, person.email or "", person.roles, person.school_id)


def load_account(user_id: str) -> Account | None:
    """Flask-Login's user loader: the person behind the session, if they still exist."""
    from planner.web import db_session

    try:
        person = db_session().get(models.Person, int(user_id))
    except ValueError:
        return None
    return _account(person) if person is not None and person.password_hash else None


class LoginForm(FlaskForm):
    email = EmailField("Email", validators=[DataRequired(), Length(max=254)])
    password = PasswordField("Password", validators=[DataRequired(), Length(max=200)])
    submit = SubmitField("Sign in")


def _safe_next(target: str | None) -> str:
    # Only same-site paths, never "//host" or "scheme://".
    if target and target.startswith("/") and not target.startswith("//") and "\\" not in target:
        return target
    return url_for("dashboard.index")


def _now() -> datetime:
    """The current instant; tests inject a clock with the ``PLANNER_CLOCK`` config key (a callable)."""
    clock = current_app.config.get("PLANNER_CLOCK")
    return clock() if clock is not None else datetime.now(UTC)


def _policy() -> services.ThrottlePolicy:
    config = current_app.config
    default = services.ThrottlePolicy()
    return services.ThrottlePolicy(
        max_failures=int(config.get("PLANNER_SIGNIN_MAX_FAILURES", default.max_failures)),
        window=timedelta(minutes=float(config.get("PLANNER_SIGNIN_WINDOW_MINUTES", default.window.total_seconds() / 60))),
        lockout=timedelta(minutes=float(config.get("PLANNER_SIGNIN_LOCKOUT_MINUTES", default.lockout.total_seconds() / 60))),
    )


def _locked_message(until: datetime) -> str:
    return (
        "Too many failed sign-ins for this email from this address. "
        f"Sign-in is paused until {until.astimezone(UTC):%H:%M} UTC; try again then."
    )


@bp.route("/login", methods=["GET", "POST"])
def login():  # type: ignore[no-untyped-def]
    """Show the sign-in form; sign the person in when the email and password match.

    Failed attempts are counted per email and client address in the database;
    after too many the address is refused for a while, even with the right password.
    """
    from planner.web import db_session

    if current_user.is_authenticated:
        return redirect(url_for("dashboard.index"))
    form = LoginForm()
    error = None
    status = 200
    if form.validate_on_submit():
        session_ = db_session()
        now, address = _now(), request.remote_addr
        locked = services.sign_in_locked_until(session_, form.email.data, address, now)
        if locked is not None:
            return render_template("auth/login.html", form=form, error=_locked_message(locked)), 429
        person = repository.person_by_email(session_, form.email.data)
        if person is not None and person.password_hash and check_password_hash(person.password_hash, form.password.data):
            services.record_sign_in_success(session_, form.email.data, address)
            session_.commit()
            session.clear()  # a fresh session at sign-in (no fixation)
            login_user(_account(person))
            return redirect(_safe_next(request.args.get("next")))
        locked = services.record_sign_in_failure(session_, form.email.data, address, now, _policy())
        session_.commit()
        if locked is not None:
            return render_template("auth/login.html", form=form, error=_locked_message(locked)), 429
        error = "That email and password do not match an account."
        status = 401
    elif request.method == "POST":
        error = "Please give your email and password."
        status = 401
    return render_template("auth/login.html", form=form, error=error), status


@bp.route("/logout", methods=["POST"])
def logout():  # type: ignore[no-untyped-def]
    """Sign out (POST with the CSRF token, so another site cannot sign you out)."""
    logout_user()
    session.clear()
    flash("You are signed out.")
    return redirect(url_for("auth.login"))
