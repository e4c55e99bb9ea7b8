"""The pilot's home page: currency and practice, evidence, timeline, what-if."""

from __future__ import annotations

from flask import Blueprint, render_template
from flask_login import login_required

bp = Blueprint("dashboard", __name__)


@bp.route("/")
@login_required
def index():  # type: ignore[no-untyped-def]
    """Placeholder until this area is built."""
    return render_template("placeholder.html", title="Dashboard")
