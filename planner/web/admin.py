"""School administration: the school's people (pilots, instructors, admins).

Only school admins, and only for their own school: anyone else, and any
person of another school, gets 404 (as in ``planner.web.access``).
"""

from __future__ import annotations

import re
from zoneinfo import available_timezones

from flask import Blueprint, abort, flash, redirect, render_template, url_for
from flask_login import current_user, login_required

from planner import services
from planner.db import models, repository
from planner.web import access, db_session, forms

bp = Blueprint("admin", __name__)


def _require_admin() -> int:
    """The admin's school id; 404 for anyone who is not a school admin."""
    if not current_user.is_admin or current_user.school_id is None:
        abort(404)
    return current_user.school_id


def _person_or_404(person_id: int, school_id: int) -> models.Person:
    if not 0 < person_id <= access.MAX_ID:
        abort(404)
    person = db_session().get(models.Person, person_id)
    if person is None or person.school_id != school_id:
        abort(404)
    return person


def _split(text: str | None) -> tuple[str, ...]:
    words = [w.strip().lower() for w in re.split(r"[,;\s]+", text or "") if w.strip()]
    return tuple(dict.fromkeys(words))  # keep order, drop repeats


def _form(**kwargs) -> forms.PersonForm:  # type: ignore[no-untyped-def]
    form = forms.PersonForm(**kwargs)
    form.home_airfield.choices = forms.choices(
        [("", "None")] + [(str(a.id), f"{a.ident} – {a.name}") for a in repository.all_airfields(db_session())]
    )
    return form


def _details(form: forms.PersonForm) -> services.PersonDetails:
    airfield = form.home_airfield.data or ""
    return services.PersonDetails(
        name=(form.name.data or "").strip(),
        email=(form.email.data or "").strip(),
        is_pilot=bool(form.is_pilot.data),
        is_instructor=bool(form.is_instructor.data),
        is_admin=bool(form.is_admin.data),
        certificate_level=form.certificate_level.data or "none",
        category_classes=_split(form.category_classes.data),
        instrument_categories=_split(form.instrument_categories.data),
        instructor_ratings=_split(form.instructor_ratings.data),
        medical_class=form.medical_class.data or None,
        medical_expires=form.medical_expires.data,
        basicmed_expires=form.basicmed_expires.data,
        home_airfield_id=int(airfield) if airfield.isdigit() and len(airfield) < 10 else None,
        timezone=(form.timezone.data or "").strip() or None,
    )


def _render(form: forms.PersonForm, person: models.Person | None, status: int = 200):  # type: ignore[no-untyped-def]
    has_errors = any(f.errors for f in form)
    zones = sorted(z for z in available_timezones() if "/" in z and not z.startswith(("Etc/", "SystemV/")))
    return render_template("admin/person_form.html", form=form, person=person, has_errors=has_errors, zones=zones), status


def _save(form: forms.PersonForm, person: models.Person | None, school_id: int):  # type: ignore[no-untyped-def]
    """Validate and store; on a problem re-display the form with the message at the field."""
    if not form.validate():
        return _render(form, person, 422)
    details = _details(form)
    if person is not None and person.id == current_user.id and not details.is_admin:
        forms.add_error(form.is_admin, "You cannot remove your own admin role (ask another admin).")
        return _render(form, person, 422)
    session = db_session()
    try:
        if person is None:
            person = services.create_person(session, school_id, details, form.password.data or "")
        else:
            services.update_person(session, person, details, form.password.data or None)
        session.commit()
    except services.PersonRejected as exc:
        session.rollback()
        target = form._fields.get(exc.field, form.name)
        forms.add_error(target, exc.problem[:1].upper() + exc.problem[1:] + ".")
        return _render(form, person if person is not None and person.id else None, 422)
    flash(f"{person.name} saved.")
    return redirect(url_for("admin.people"))


@bp.route("/admin/people")
@login_required
def people():  # type: ignore[no-untyped-def]
    """The school's people with their roles, certificate, medical and home base."""
    school_id = _require_admin()
    session = db_session()
    everyone = repository.school_people(session, school_id)
    school = session.get(models.School, school_id)
    return render_template("admin/people.html", people=everyone, school=school)


@bp.route("/admin/people/new", methods=["GET", "POST"])
@login_required
def create_person():  # type: ignore[no-untyped-def]
    """Create a pilot, instructor or admin of the school with an initial password."""
    school_id = _require_admin()
    form = _form(data={"is_pilot": True})
    if form.is_submitted():
        if not form.password.data:
            form.validate()
            forms.add_error(form.password, "Give an initial password (the person can be told it in person).")
            return _render(form, None, 422)
        return _save(form, None, school_id)
    return _render(form, None)


@bp.route("/admin/people/<int:person_id>/edit", methods=["GET", "POST"])
@login_required
def edit_person(person_id: int):  # type: ignore[no-untyped-def]
    """Change a person of the school (a new password only when one is typed)."""
    school_id = _require_admin()
    person = _person_or_404(person_id, school_id)
    data = {
        "name": person.name,
        "email": person.email or "",
        "is_pilot": person.is_pilot,
        "is_instructor": person.is_instructor,
        "is_admin": person.is_admin,
        "certificate_level": person.certificate_level,
        "category_classes": ", ".join(person.category_classes or []),
        "instrument_categories": ", ".join(person.instrument_categories or []),
        "instructor_ratings": ", ".join(person.instructor_ratings or []),
        "medical_class": person.medical_class or "",
        "medical_expires": person.medical_expires,
        "basicmed_expires": person.basicmed_expires,
        "home_airfield": str(person.home_airfield_id or ""),
        "timezone": person.timezone or "",
    }
    form = _form(data=data)
    if form.is_submitted():
        return _save(form, person, school_id)
    return _render(form, person)
