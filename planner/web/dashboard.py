"""The pilot's home page: currency and practice, evidence, timeline, what-if."""

from __future__ import annotations

from datetime import date
from typing import Any

from datetime import timedelta
from zoneinfo import ZoneInfo

from dateutil.relativedelta import relativedelta
from flask import Blueprint, redirect, render_template, url_for
from flask_login import current_user, login_required
from flask_wtf import FlaskForm
from wtforms import (
    BooleanField,
    DateField,
    DecimalField,
    FieldList,
    Form,
    FormField,
    SelectField,
    StringField,
    SubmitField,
)
from wtforms.fields.choices import SelectChoice
from wtforms.validators import InputRequired, Length, NumberRange, Optional, ValidationError

from planner import planning, services
from planner.core import currency
from planner.core.logbook import Approach, Entry, Logbook
from planner.db import models
from planner.web import access, chart, db_session, forms, now, today
from planner.web import status_words as words
from planner.web.access import pilot_or_404

bp = Blueprint("dashboard", __name__)

PAST_MONTHS = 18
NEXT_MONTHS = 6
MAX_PLANNED = 5
PLAN_HORIZON_DAYS = 366
PLANNED_SAFETY_PILOT = "(planned safety pilot)"

SETTINGS = [
    SelectChoice("simulated", "Aircraft, simulated instrument, safety pilot aboard"),
    SelectChoice("actual", "Aircraft, actual instrument conditions"),
    SelectChoice("atd", "Aviation training device"),
    SelectChoice("ftd", "Flight training device"),
    SelectChoice("ffs", "Full flight simulator"),
]
CHECKS = [
    SelectChoice("", "No check"),
    SelectChoice("ipc", "Instrument proficiency check"),
    SelectChoice("instrument-practical-test", "Instrument-rating practical test"),
    SelectChoice("flight-review", "Flight review"),
    SelectChoice("ir-proficiency-check", "Instrument-rating proficiency check (EASA)"),
]


class PlannedEntryForm(Form):
    """One hypothetical entry (nothing is saved)."""

    day = DateField("Date", validators=[InputRequired(message="Give the date of the planned flight.")])
    setting = SelectField("Flown in", choices=SETTINGS, default="simulated")
    approaches = forms.BoundedIntegerField("Approaches", default=0, validators=[Optional(), NumberRange(0, 20, "From 0 to 20.")])
    approach_type = StringField("Approach type (e.g. ILS, RNAV)", validators=[Length(max=40)])
    approach_airfield = StringField("Approach airfield", validators=[Length(max=16)])
    holds = forms.BoundedIntegerField("Holds", default=0, validators=[Optional(), NumberRange(0, 20, "From 0 to 20.")])
    course_tracking = BooleanField("Course intercepting and tracking")
    instrument_hours = DecimalField(
        "Instrument time (hours)", default=0, places=1, validators=[Optional(), NumberRange(0, 12, "From 0 to 12 hours.")]
    )
    partial_panel = forms.BoundedIntegerField(
        "Partial-panel approaches", default=0, validators=[Optional(), NumberRange(0, 20, "From 0 to 20.")]
    )
    ua_nose_high = forms.BoundedIntegerField("Nose-high recoveries", default=0, validators=[Optional(), NumberRange(0, 20, "From 0 to 20.")])
    ua_nose_low = forms.BoundedIntegerField("Nose-low recoveries", default=0, validators=[Optional(), NumberRange(0, 20, "From 0 to 20.")])
    landings = forms.BoundedIntegerField("Landings", default=0, validators=[Optional(), NumberRange(0, 50, "From 0 to 50.")])
    check = SelectField("Check passed", choices=CHECKS, default="")

    def validate_approach_type(self, field: StringField) -> None:
        if (self.approaches.data or 0) > 0 and not (field.data or "").strip():
            raise ValidationError("An approach needs its type to count (14 CFR 61.51(g)).")

    def validate_approach_airfield(self, field: StringField) -> None:
        if (self.approaches.data or 0) > 0 and not (field.data or "").strip():
            raise ValidationError("An approach needs its airfield to count (14 CFR 61.51(g)).")


class WhatIfForm(FlaskForm):
    """The what-if panel: up to five hypothetical entries."""

    entries = FieldList(FormField(PlannedEntryForm), min_entries=1, max_entries=MAX_PLANNED)
    add = SubmitField("Add another planned entry")
    submit = SubmitField("Show how the dates move")


# ------------------------------------------------------------------ views


@bp.route("/")
@login_required
def index():  # type: ignore[no-untyped-def]
    """The signed-in pilot's dashboard; staff without a logbook go to the school overview."""
    if current_user.is_pilot:
        return _page(pilot_or_404(current_user.id))
    if current_user.is_instructor or current_user.is_admin:
        return redirect(url_for("school.overview"))
    return render_template("dashboard/no_logbook.html")


@bp.route("/pilots/<int:pilot_id>")
@login_required
def pilot(pilot_id: int):  # type: ignore[no-untyped-def]
    """A pilot's dashboard, for the pilot and the instructors and admins of their school."""
    return _page(pilot_or_404(pilot_id))


@bp.route("/pilots/<int:pilot_id>/what-if", methods=["POST"])
@login_required
def what_if(pilot_id: int):  # type: ignore[no-untyped-def]
    """Evaluate with hypothetical entries added; shows how each date moves and saves nothing."""
    person = pilot_or_404(pilot_id)
    as_of = today(person.timezone)
    form = WhatIfForm()
    if form.add.data:  # CSRF is checked for every POST by the app; the entries are checked on "show"
        if len(form.entries) < MAX_PLANNED:
            form.entries.append_entry({"day": form.entries[-1].day.data})
        return _page(person, form=form)
    if not form.validate_on_submit():
        return _page(person, form=form, status=400)
    if _outside_horizon(form, as_of):
        return _page(person, form=form, status=400)
    planned = _planned(form, person)
    return _page(person, form=form, planned=planned)


# ------------------------------------------------------------------ helpers


def _outside_horizon(form: WhatIfForm, as_of: date) -> bool:
    """Mark planned dates outside today .. one year ahead; True if any."""
    last = as_of + relativedelta(days=PLAN_HORIZON_DAYS)
    found = False
    for sub in form.entries:
        day = sub.form.day.data
        if day is not None and not as_of <= day <= last:
            sub.form.day.errors = [f"Pick a date from today ({as_of.isoformat()}) to {last.isoformat()}."]
            found = True
    return found


def _planned(form: WhatIfForm, person: models.Person) -> list[Entry]:
    """Core entries for the hypothetical flights, in the pilot's first category and class."""
    categories = list(person.instrument_categories or []) or ["airplane"]
    category = categories[0]
    cls = next(
        (cc.split("/", 1)[1] for cc in person.category_classes or [] if cc.startswith(category + "/")), None
    )
    out = []
    for i, sub in enumerate(form.entries, start=1):
        f = sub.form
        setting = f.setting.data
        device = setting if setting in ("atd", "ftd", "ffs") else "aircraft"
        conditions = setting if device == "aircraft" else None
        hours = float(f.instrument_hours.data or 0)
        n = f.approaches.data or 0
        approaches = tuple(
            Approach(type=f.approach_type.data.strip(), airfield=f.approach_airfield.data.strip()) for _ in range(n)
        )
        out.append(
            Entry(
                id=f"what-if-{i}",
                date=f.day.data,
                device=device,
                category=category,
                aircraft_class=cls if device == "aircraft" else None,
                conditions=conditions,
                approaches=approaches,
                holds=f.holds.data or 0,
                course_tracking=bool(f.course_tracking.data),
                instrument_actual_hours=hours if conditions == "actual" else 0.0,
                instrument_simulated_hours=hours if conditions != "actual" else 0.0,
                landings=(f.landings.data or 0) if device == "aircraft" else 0,
                partial_panel_approaches=f.partial_panel.data or 0,
                ua_nose_high=f.ua_nose_high.data or 0,
                ua_nose_low=f.ua_nose_low.data or 0,
                checks=(f.check.data,) if f.check.data else (),
                safety_pilot=PLANNED_SAFETY_PILOT if conditions == "simulated" else None,
            )
        )
    return out


def _label(regulators: dict[str, str]):  # type: ignore[no-untyped-def]
    """Row labels for the chart; the regulator is named when the pilot follows several."""
    several = len([k for k in regulators if k != services.PRACTICE_TARGETS]) > 1

    def label(row: Any) -> str:
        text = words.short_label(row.rule_set, row.id, row.title, row.scope)
        if row.rule_set == services.PRACTICE_TARGETS:
            return text + " (practice)"
        return text + (f" ({regulators[row.rule_set]})" if several else "")

    return label


def _item(status: currency.RequirementStatus, as_of: date, pilot_id: int) -> dict[str, Any]:
    practice = services.is_practice(status)
    return {
        "key": "-".join((status.rule_set, status.id, status.scope)).replace("/", "-"),
        "title": status.title,
        "scope": words.scope_words(status.scope),
        "state": status.state,
        "state_word": words.STATE_WORDS[status.state],
        "headline": words.headline(status, practice),
        "valid_through": words.fmt(status.valid_through),
        "days_left": words.days_left(status, as_of),
        "missing": words.missing_words(status.missing),
        "regain": words.regain_words(status) if not practice else "",
        "regain_by": status.regain_by,
        "citation": status.citation,
        "warnings": status.warnings,
        "evidence": [(ref, url_for("logbook.show", pilot_id=pilot_id, ref=ref)) for ref in status.evidence],
    }


def _move(move: currency.RequirementMove, practice: bool) -> dict[str, Any]:
    before, after = move.before, move.after
    days = move.valid_through_days
    if before.valid_through is None and after.valid_through is not None:
        change = "now met"
    elif days is None:
        change = "still not met"
    elif days == 0 and before.state == after.state:
        change = "no change"
    else:
        change = f"{days:+d} days" if days else f"{words.STATE_WORDS[before.state]} → {words.STATE_WORDS[after.state]}"
    scope = words.scope_words(before.scope)
    return {
        "title": before.title + (f" ({scope})" if scope else ""),
        "practice": practice,
        "before": words.headline(before, practice),
        "before_date": words.fmt(before.valid_through),
        "after": words.headline(after, practice),
        "after_date": words.fmt(after.valid_through),
        "change": change,
        "moved": change not in ("no change", "still not met"),
    }


def _minimums(person: models.Person, as_of: date, logbook: Logbook | None) -> dict[str, Any] | None:
    """The advised-minimums card: baseline -> advised per item and each adjustment; None without a baseline.

    ``logbook``: the pilot's logbook as the page already loaded it.
    """
    advice = services.advised_minimums(db_session(), person.id, as_of, logbook=logbook)
    if advice is None:
        return None
    base, adv = advice.baseline, advice.advised
    rows = [
        ("ceiling", "Ceiling, at least", base.ceiling_ft, adv.ceiling_ft, "ft"),
        ("visibility", "Visibility, at least", base.visibility_sm, adv.visibility_sm, "SM"),
        ("crosswind", "Crosswind component, at most", base.crosswind_kt, adv.crosswind_kt, "kt"),
    ]
    return {
        "raised": advice.is_raised,
        "rows": [
            {"key": key, "label": label, "baseline": base_v, "advised": adv_v, "unit": unit,
             "baseline_words": f"{base_v:,g} {unit}", "advised_words": f"{adv_v:,g} {unit}", "changed": base_v != adv_v}
            for key, label, base_v, adv_v, unit in rows
        ],
        "adjustments": [
            {"factor": a.factor, "reason": a.reason, "source": a.source,
             "change": ", ".join(
                 part for part in (
                     f"+{a.ceiling_ft:,} ft" if a.ceiling_ft else "",
                     f"+{a.visibility_sm:g} SM" if a.visibility_sm else "",
                     f"crosswind −{a.crosswind_kt:g} kt" if a.crosswind_kt else "",
                 ) if part
             )}
            for a in advice.adjustments
        ],
    }


RECENT_SESSION_DAYS = 14


def _sessions(person: models.Person) -> list[dict[str, Any]]:
    """The pilot's practice sessions from two weeks ago on (cancelled ones only while still ahead)."""
    instant = now()
    out = []
    for row in planning.person_sessions(db_session(), person.id, since=instant - timedelta(days=RECENT_SESSION_DAYS)):
        if row.status == "cancelled" and row.ends_at <= instant:
            continue
        tz = ZoneInfo(row.timezone)
        partner = row.safety_pilot if row.pilot_flying_id == person.id else row.pilot_flying
        seat = "flying" if row.pilot_flying_id == person.id else "safety pilot"
        if row.is_mutual:
            seat = "flying and safety pilot (seats swapped)"
        out.append({
            "id": row.id, "version": row.version, "status": row.status,
            "start": row.starts_at.astimezone(tz), "end": row.ends_at.astimezone(tz), "timezone": row.timezone,
            "aircraft": row.aircraft.registration, "airfield": row.airfield.ident, "partner": partner.name,
            "seat": seat, "started": row.starts_at <= instant,
        })
    return out


def _page(
    person: models.Person,
    *,
    form: WhatIfForm | None = None,
    planned: list[Entry] | None = None,
    status: int = 200,
):  # type: ignore[no-untyped-def]
    as_of = today(person.timezone)
    start = as_of - relativedelta(months=PAST_MONTHS)
    end = as_of + relativedelta(months=NEXT_MONTHS)
    result = services.pilot_status(db_session(), person.id, as_of, timeline_range=(start, end), planned=planned or ())
    db_session().commit()  # keeps the pilot's status if it was stale and has just been re-evaluated
    regulators = {rs.id: rs.regulator or rs.id for rs in result.rule_sets}
    groups = []
    for rs in result.rule_sets:
        items = [_item(s, as_of, person.id) for s in result.report.requirements if s.rule_set == rs.id]
        groups.append({
            "id": rs.id,
            "title": rs.title,
            "regulator": rs.regulator,
            "practice": rs.id == services.PRACTICE_TARGETS,
            "reqs": items,
        })
    svg = None
    if result.timeline is not None:
        svg = chart.render(
            result.timeline, as_of, label=_label(regulators), planned=[p.date for p in planned or ()]
        )
    moves = None
    if result.what_if is not None:
        moves = [_move(m, services.is_practice(m.before)) for m in result.what_if.moves]
    if form is None:
        form = WhatIfForm(formdata=None)
        form.entries[0].form.day.data = as_of
    own = person.id == current_user.id
    return (
        render_template(
            "dashboard/index.html",
            person=person,
            own=own,
            as_of=as_of,
            regulatory=[g for g in groups if not g["practice"]],
            practice=[g for g in groups if g["practice"]],
            chart=svg,
            form=form,
            moves=moves,
            plan_as_of=result.what_if.plan_as_of if result.what_if else None,
            planned=planned or [],
            max_planned=MAX_PLANNED,
            action=url_for("dashboard.what_if", pilot_id=person.id),
            sessions=_sessions(person),
            minimums=_minimums(person, as_of, result.logbook),
            can_edit=access.can_edit(person),
        ),
        status,
    )
