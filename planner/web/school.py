"""The school overview for instructors and admins."""

from __future__ import annotations

from flask import Blueprint, render_template
from flask_login import login_required

bp = Blueprint("school", __name__)


@bp.route("/school")
@login_required
def overview():  # type: ignore[no-untyped-def]
    """Placeholder until this area is built."""
    return render_template("placeholder.html", title="School overview")
