"""The signed-in home page (the dashboard arrives with the web issue)."""

from __future__ import annotations

from flask import Blueprint, render_template
from flask_login import current_user, login_required

bp = Blueprint("home", __name__)


@bp.route("/")
@login_required
def index():  # type: ignore[no-untyped-def]
    """The signed-in person's home page."""
    return render_template("home.html", account=current_user)
