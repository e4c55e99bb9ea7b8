"""The planning page for instructors and admins: propose practice sessions, save them, accept, move, cancel.

Proposals are computed again when saved (the page keeps no server-side
state), from the same date range and options: pasted METAR/TAF text (read
with ``planning.read_reports``; an unreadable line is a message at the
field), the plan's practice minimums and the daylight-only choice. Every change is a POST with the CSRF
token and the version the visitor saw; a stale version is refused with a
message. Sessions of another school answer 404. A session is marked flown
by the school's staff or by either person in it.
"""

from __future__ import annotations

from datetime import date, datetime, timedelta
from typing import Any
from zoneinfo import ZoneInfo

from flask import Blueprint, abort, flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required
from flask_wtf import FlaskForm
from wtforms import BooleanField, DateField, DecimalField, SubmitField, TextAreaField
from wtforms.validators import InputRequired, Length, NumberRange, Optional, StopValidation

from planner import planning
from planner.core import weather
from planner.db import models
from planner.web import access, db_session, forms, now, today

bp = Blueprint("plan", __name__)

DEFAULT_DAYS = 28
MAX_DAYS = 93
SHOW_PAST_DAYS = 7


def _finite(_form: FlaskForm, field: DecimalField) -> None:
    """Refuse NaN and infinities before any range check compares them."""
    if field.data is not None and not field.data.is_finite():
        raise StopValidation("Give a number.")


class RangeForm(FlaskForm):
    """The date range to plan (local dates at the school's airfield, both inclusive) and the plan's options."""

    start = DateField("From", validators=[InputRequired(message="Give the first day to plan (YYYY-MM-DD).")])
    end = DateField("To", validators=[InputRequired(message="Give the last day to plan (YYYY-MM-DD).")])
    weather = TextAreaField(
        "Weather reports for the airfield (METAR/TAF text, optional)",
        validators=[Optional(), Length(max=planning.MAX_WEATHER_CHARS,
                                       message=f"At most {planning.MAX_WEATHER_CHARS:,} characters.")],
    )
    vmc_ceiling_ft = forms.BoundedIntegerField(
        "Practice minimum ceiling (ft above the airfield)",
        validators=[Optional(), NumberRange(0, planning.MAX_MIN_CEILING_FT,
                                            f"From 0 to {planning.MAX_MIN_CEILING_FT:,} ft.")],
    )
    vmc_visibility_sm = DecimalField(
        "Practice minimum visibility (statute miles)", places=2,
        validators=[Optional(), _finite, NumberRange(0, planning.MAX_MIN_VISIBILITY_SM,
                                                     f"From 0 to {planning.MAX_MIN_VISIBILITY_SM:g} SM.")],
    )
    daylight_only = BooleanField("Daylight only for this plan (whatever the pilots' night-practice settings)")
    submit = SubmitField("Propose sessions")


def _school_or_404() -> models.School:
    """The signed-in instructor's or admin's school; others get 404."""
    if not (current_user.is_instructor or current_user.is_admin) or current_user.school_id is None:
        abort(404)
    school = db_session().get(models.School, current_user.school_id)
    if school is None:
        abort(404)
    return school


def _tz(school: models.School) -> str:
    return school.home_airfield.timezone if school.home_airfield else "UTC"


def _checked_range(form: RangeForm, as_of: date) -> bool:
    """Validate the form and the range; messages go to the fields. True when usable."""
    ok = form.validate()
    start, end = form.start.data, form.end.data
    if ok and end < start:
        form.end.errors = [*form.end.errors, "The last day must not be before the first."]
        ok = False
    if ok and (end - start).days >= MAX_DAYS:
        form.end.errors = [*form.end.errors, f"Plan at most {MAX_DAYS} days at a time."]
        ok = False
    if ok and end < as_of:
        form.end.errors = [*form.end.errors, f"The range has passed: end it on {as_of.isoformat()} or later."]
        ok = False
    return ok


def _local(instant: datetime, tz: str) -> datetime:
    return instant.astimezone(ZoneInfo(tz))


def _name(key: str) -> str:
    return key.rsplit(" #", 1)[0]


def _row_view(row: models.PracticeSession) -> dict[str, Any]:
    start, end = _local(row.starts_at, row.timezone), _local(row.ends_at, row.timezone)
    names = {row.pilot_flying_id: row.pilot_flying.name, row.safety_pilot_id: row.safety_pilot.name}
    legs = [
        {"pf": names.get(leg.get("pilot_flying_id"), "?"), "sp": names.get(leg.get("safety_pilot_id"), "?"),
         "content": leg.get("items", []), "needs": leg.get("needs", []), "minutes": leg.get("total_minutes", 0)}
        for leg in row.content.get("legs", [])
    ]
    return {
        "id": row.id, "version": row.version, "status": row.status, "mutual": row.is_mutual,
        "start": start, "end": end, "timezone": row.timezone, "aircraft": row.aircraft.registration,
        "airfield": row.airfield.ident, "pf": row.pilot_flying.name, "sp": row.safety_pilot.name,
        "people": row.people_ids, "legs": legs, "explanation": row.explanation.splitlines(),
        "started": row.starts_at <= now(),
    }


def _index(school: models.School, *, form: RangeForm | None = None, errors: dict[int, str] | None = None,
           status: int = 200):  # type: ignore[no-untyped-def]
    as_of = today(_tz(school))
    if form is None:
        form = RangeForm(formdata=None, data={
            "start": as_of, "end": as_of + timedelta(days=DEFAULT_DAYS - 1),
            "vmc_ceiling_ft": weather.DEFAULT_MINIMUMS.ceiling_ft, "vmc_visibility_sm": weather.DEFAULT_MINIMUMS.visibility_sm,
        })
    rows = planning.school_sessions(db_session(), school.id, since=now() - timedelta(days=SHOW_PAST_DAYS))
    return render_template(
        "plan/index.html", school=school, as_of=as_of, form=form, sessions=[_row_view(r) for r in rows],
        errors=errors or {},
    ), status


@bp.route("/plan")
@login_required
def index():  # type: ignore[no-untyped-def]
    """The school's stored sessions and the form to propose more."""
    return _index(_school_or_404())


def _propose(school: models.School, form: RangeForm) -> planning.Proposal | None:
    """Run the scheduler for the form's range and options; None (with the message at a field) when refused."""
    try:
        reports = planning.read_reports(form.weather.data, now=now())
    except planning.WeatherRejected as exc:
        text = str(exc)
        form.weather.errors = [*form.weather.errors, text[:1].upper() + text[1:] + ". Nothing was planned."]
        return None
    try:
        minimums = planning.practice_minimums(form.vmc_ceiling_ft.data, form.vmc_visibility_sm.data)
    except planning.MinimumsRejected as exc:
        field = form.vmc_ceiling_ft if exc.field == "ceiling_ft" else form.vmc_visibility_sm
        field.errors = [*field.errors, str(exc)]
        return None
    try:
        return planning.propose_sessions(db_session(), school.id, form.start.data, form.end.data, now=now(),
                                         reports=reports, minimums=minimums, daylight_only=bool(form.daylight_only.data))
    except planning.SessionRejected as exc:
        form.end.errors = [*form.end.errors, str(exc)]
        return None


def _posted_proposal(school: models.School) -> tuple[RangeForm, planning.Proposal | None]:
    """The posted range form and the proposal for it; ``None`` when the form was refused (errors at its fields)."""
    form = RangeForm()
    if not _checked_range(form, today(_tz(school))):
        return form, None
    return form, _propose(school, form)


@bp.route("/plan/propose", methods=["POST"])
@login_required
def propose():  # type: ignore[no-untyped-def]
    """Propose sessions for the range and show each with its reasons; nothing is stored yet."""
    school = _school_or_404()
    form, proposal = _posted_proposal(school)
    if proposal is None:
        return _index(school, form=form, status=400)
    people = {pid: _name(key) for key, pid in proposal.person_ids.items()}
    labels = planning.need_labels(proposal)
    proposed = []
    for ps in proposal.plan.sessions:
        legs = []
        for leg in ps.legs:
            plan = proposal.leg_plans[(leg.pilot_flying, leg.safety_pilot)]
            legs.append({"pf": _name(leg.pilot_flying), "sp": _name(leg.safety_pilot),
                         "needs": [labels.get(n, n) for n in leg.needs], "content": plan.items,
                         "minutes": plan.total_minutes})
        proposed.append({
            "start": _local(ps.slot.start, proposal.timezone), "end": _local(ps.slot.end, proposal.timezone),
            "aircraft": ps.aircraft, "mutual": ps.is_mutual, "daylight": ps.slot.daylight, "vmc": ps.slot.vmc,
            "why_slot": ps.why_slot, "why_partner": ps.why_partner, "legs": legs,
            "weather": proposal.weather_note(ps), "night": proposal.night_note(ps),
            "source": planning.source_kind(proposal.vmc_basis[(ps.slot.start, ps.slot.end)]),
        })
    unmet = [{"pilot": _name(u.pilot), "need": labels.get(u.need, u.need), "due": u.due, "reason": u.reason}
             for u in proposal.plan.unmet]
    not_plannable = [{"pilot": people.get(n.person_id, "?"), "need": f"{n.gap.requirement} ({n.gap.scope})",
                      "due": n.gap.due, "reason": n.reason} for n in proposal.not_plannable]
    return render_template(
        "plan/proposals.html", school=school, form=form, proposed=proposed, unmet=unmet,
        not_plannable=not_plannable, vmc_source=proposal.vmc_source, timezone=proposal.timezone,
    )


@bp.route("/plan/save", methods=["POST"])
@login_required
def save():  # type: ignore[no-untyped-def]
    """Store the proposals for the range (computed again now, so they respect anything booked meanwhile)."""
    school = _school_or_404()
    form, proposal = _posted_proposal(school)
    if proposal is None:
        return _index(school, form=form, status=400)
    session = db_session()
    try:
        rows = planning.save_proposals(session, proposal, now=now())
        session.commit()
    except planning.SessionRejected as exc:
        # Someone booked one of these people or aircraft between this proposal and its save.
        session.rollback()
        form.end.errors = [*form.end.errors, f"Not saved: {exc}. Nothing was stored; propose again to plan around it."]
        return _index(school, form=form, status=409)
    flash(f"{len(rows)} proposed session{'s' if len(rows) != 1 else ''} saved. Accept each one to book it.")
    return redirect(url_for("plan.index"))


# ------------------------------------------------------------------ changes to one session


def _session_id() -> int | None:
    try:
        value = int(request.form.get("session_id", ""))
    except ValueError:
        return None
    return value if 0 < value <= access.MAX_ID else None


def _version() -> int:
    try:
        return int(request.form.get("version", ""))
    except ValueError:
        return -1  # no usable version: treat as stale rather than overwrite


def _staff_session(school: models.School) -> models.PracticeSession | None:
    """The posted session of the visitor's school, None when the id is missing; 404 for another school's."""
    sid = _session_id()
    if sid is None:
        return None
    row = planning.get_session(db_session(), sid)
    if row is None or row.school_id != school.id:
        abort(404)
    return row


def _change(verb: str, change: Any, done: str):  # type: ignore[no-untyped-def]
    school = _school_or_404()
    row = _staff_session(school)
    if row is None:
        return _index(school, status=400)
    session = db_session()
    sid = row.id
    try:
        change(session, row)
        session.commit()
    except planning.SessionConflict:
        session.rollback()
        return _index(school, errors={sid: f"Not {verb}: someone changed this session after you opened the page. "
                                           "It is shown as it is now; try again."}, status=409)
    except planning.SessionRejected as exc:
        session.rollback()
        return _index(school, errors={sid: f"Not {verb}: {exc}."}, status=400)
    flash(done.format(id=sid))
    return redirect(url_for("plan.index"))


@bp.route("/plan/accept", methods=["POST"])
@login_required
def accept():  # type: ignore[no-untyped-def]
    """Accept a proposed session: it is booked and counts in the who-flew-for-whom balance."""
    return _change("accepted", lambda s, row: planning.accept_session(
        s, row.id, expected_version=_version(), now=now()), "Session {id} accepted.")


@bp.route("/plan/cancel", methods=["POST"])
@login_required
def cancel():  # type: ignore[no-untyped-def]
    """Cancel a proposed or accepted session (calendars then show it as cancelled)."""
    return _change("cancelled", lambda s, row: planning.cancel_session(
        s, row.id, expected_version=_version(), now=now()), "Session {id} cancelled.")


def _new_start(row: models.PracticeSession) -> datetime:
    """The posted new start (local time at the session's airfield); SessionRejected with the reason otherwise."""
    text = (request.form.get("starts_at") or "").strip()
    try:
        local = datetime.fromisoformat(text)
    except ValueError:
        raise planning.SessionRejected(f"give the new start as date and time, e.g. 2026-12-14T09:00 (got “{text[:20]}”)") from None
    if local.tzinfo is not None:
        raise planning.SessionRejected("give the new start in the airfield's local time, without a zone")
    start = local.replace(tzinfo=ZoneInfo(row.timezone))
    if start < now():
        raise planning.SessionRejected("the new start has passed; choose a time from now on")
    return start


@bp.route("/plan/move", methods=["POST"])
@login_required
def move():  # type: ignore[no-untyped-def]
    """Move a session to a new start, keeping its length; refused when a person or the aircraft is busy then."""
    return _change("moved", lambda s, row: planning.move_session(
        s, row.id, _new_start(row), expected_version=_version(), now=now()), "Session {id} moved.")


# ------------------------------------------------------------------ after the flight


@bp.route("/plan/flown", methods=["POST"])
@login_required
def flown():  # type: ignore[no-untyped-def]
    """Mark an accepted session flown (staff of the school or either person in it); then draft the entries."""
    sid = _session_id()
    if sid is None:
        abort(400)
    session = db_session()
    row = planning.get_session(session, sid)
    staff = (current_user.is_instructor or current_user.is_admin) and row is not None \
        and row.school_id == current_user.school_id
    if row is None or not (staff or current_user.id in row.people_ids):
        abort(404)
    school = row.school_id
    try:
        planning.mark_flown(session, sid, expected_version=_version(), now=now())
        session.commit()
    except (planning.SessionConflict, planning.SessionRejected) as exc:
        session.rollback()
        stale = isinstance(exc, planning.SessionConflict)
        message = ("Not marked flown: someone changed this session after you opened the page; try again."
                   if stale else f"Not marked flown: {exc}.")
        if staff:
            return _index(session.get(models.School, school), errors={sid: message}, status=409 if stale else 400)
        flash(message)
        return redirect(url_for("dashboard.index"))
    flash("Session marked flown. Review the draft logbook entry, correct it to what was flown, then save it.")
    if current_user.id in row.people_ids and current_user.is_pilot:
        return redirect(url_for("logbook.from_session", pilot_id=current_user.id, session=sid))
    return redirect(url_for("plan.index"))
