"""Pilot calendars: the subscription feed (a secret token in the URL, no sign-in) and a signed-in download.

The feed looks the token up by its SHA-256 (only the hash is stored); an
unknown or revoked token answers 404 like any other missing page.
"""

from __future__ import annotations

from flask import Blueprint, Response, abort
from flask_login import login_required

from planner import planning
from planner.db import models
from planner.web import access, db_session, now, today

bp = Blueprint("calendar", __name__)

MIMETYPE = "text/calendar"


def _ics(person: models.Person, *, attachment: bool) -> Response:
    body = planning.pilot_calendar_for(db_session(), person.id, today(person.timezone), now=now())
    response = Response(body, content_type=f"{MIMETYPE}; charset=utf-8")
    # The feed URL is the credential: keep copies out of shared caches.
    response.headers["Cache-Control"] = "private, no-cache"
    if attachment:
        response.headers["Content-Disposition"] = f'attachment; filename="practice-{person.id}.ics"'
    return response


@bp.route("/calendar/<token>.ics")
def feed(token: str):  # type: ignore[no-untyped-def]
    """The pilot's calendar for subscription apps (no sign-in: the long random token is the key)."""
    person_id = planning.feed_person(db_session(), token)
    if person_id is None:
        abort(404)
    person = db_session().get(models.Person, person_id)
    if person is None or not person.is_pilot:
        abort(404)
    return _ics(person, attachment=False)


@bp.route("/pilots/<int:pilot_id>/calendar.ics")
@login_required
def download(pilot_id: int):  # type: ignore[no-untyped-def]
    """The pilot's calendar as a file, for whoever may see the pilot."""
    return _ics(access.pilot_or_404(pilot_id), attachment=True)
