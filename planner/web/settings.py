"""Per-pilot settings: rule sets, practice targets, home airfield and time zone."""

from __future__ import annotations

from flask import Blueprint, render_template
from flask_login import login_required

from planner.web.access import pilot_or_404

bp = Blueprint("settings", __name__)


@bp.route("/settings")
@login_required
def index():  # type: ignore[no-untyped-def]
    """Placeholder until this area is built."""
    return render_template("placeholder.html", title="Settings")


@bp.route("/pilots/<int:pilot_id>/settings")
@login_required
def pilot(pilot_id: int):  # type: ignore[no-untyped-def]
    """Placeholder until this area is built."""
    pilot_or_404(pilot_id)
    return render_template("placeholder.html", title="Settings")
