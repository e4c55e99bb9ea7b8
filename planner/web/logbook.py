"""The pilot's logbook: list, entry form, history, reversible delete."""

from __future__ import annotations

from flask import Blueprint, render_template
from flask_login import login_required

bp = Blueprint("logbook", __name__)


@bp.route("/logbook")
@login_required
def index():  # type: ignore[no-untyped-def]
    """Placeholder until this area is built."""
    return render_template("placeholder.html", title="Logbook")
