"""Who may see whose logbook: the one access rule every web area uses.

A pilot sees only their own logbook; an instructor or school admin sees the
pilots of their own school; nobody sees another school's data. Anything not
visible answers 404, so probing ids reveals nothing.
"""

from __future__ import annotations

from flask import abort
from flask_login import current_user

from planner.db import models
from planner.web import db_session

MAX_ID = 2**31 - 1  # ids are 32-bit INTEGER columns: larger ones cannot exist (and overflow the drivers)


def can_view(person: models.Person) -> bool:
    """Whether the signed-in account may read ``person``'s logbook and status."""
    if not current_user.is_authenticated:
        return False
    if person.id == current_user.id:
        return True
    staff = current_user.is_instructor or current_user.is_admin
    return staff and person.school_id is not None and person.school_id == current_user.school_id


def can_edit(person: models.Person) -> bool:
    """Whether the signed-in account may add or change entries in ``person``'s logbook.

    The pilot themselves, or an instructor of the same school (recording a check
    they gave or an instruction flight). School admins manage people, not logbooks.
    """
    if not current_user.is_authenticated:
        return False
    if person.id == current_user.id:
        return True
    return current_user.is_instructor and person.school_id is not None and person.school_id == current_user.school_id


def pilot_or_404(pilot_id: int, *, edit: bool = False) -> models.Person:
    """The pilot with ``pilot_id`` if the signed-in account may see (or edit) them, else abort 404."""
    if not 0 < pilot_id <= MAX_ID:
        abort(404)
    person = db_session().get(models.Person, pilot_id)
    if person is None or not person.is_pilot or not (can_edit(person) if edit else can_view(person)):
        abort(404)
    return person
