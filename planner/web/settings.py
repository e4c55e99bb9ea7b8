"""Per-pilot settings: rule sets, practice targets, home airfield and time zone."""

from __future__ import annotations

from flask import Blueprint, render_template
from flask_login import login_required

bp = Blueprint("settings", __name__)


@bp.route("/settings")
@login_required
def index():  # type: ignore[no-untyped-def]
    """Placeholder until this area is built."""
    return render_template("placeholder.html", title="Settings")
