"""School administration: people (pilots, instructors, admins)."""

from __future__ import annotations

from flask import Blueprint, render_template
from flask_login import login_required

bp = Blueprint("admin", __name__)


@bp.route("/admin/people")
@login_required
def people():  # type: ignore[no-untyped-def]
    """Placeholder until this area is built."""
    return render_template("placeholder.html", title="People")
