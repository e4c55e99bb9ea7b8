"""Per-pilot settings: rule sets, practice targets, home airfield and time zone, minimums, night practice."""

from __future__ import annotations

from decimal import Decimal
from typing import Any

from flask import Blueprint, abort, flash, redirect, render_template, url_for
from flask_login import current_user, login_required
from flask_wtf import FlaskForm
from wtforms import BooleanField, DecimalField, SelectField, SelectMultipleField, StringField, SubmitField
from wtforms.fields.choices import SelectChoice
from wtforms.validators import InputRequired, Length, NumberRange, Optional, StopValidation, ValidationError
from wtforms.widgets import CheckboxInput, ListWidget

from planner import planning, rulesets, services
from planner.core import rules as r
from planner.db import models, repository
from planner.rulesets import overrides
from planner.web import db_session, forms, now
from planner.web import status_words as words
from planner.web.access import pilot_or_404

bp = Blueprint("settings", __name__)

_UNIT_LABELS = {
    r.APPROACHES: "Approaches",
    r.PARTIAL_PANEL_APPROACHES: "Partial-panel approaches",
    r.UA_NOSE_HIGH: "Nose-high recoveries",
    r.UA_NOSE_LOW: "Nose-low recoveries",
    r.ACTUAL_INSTRUMENT_HOURS: "Actual instrument time (hours)",
    r.INSTRUMENT_HOURS: "Instrument time (hours)",
    r.HOLDS: "Holds",
    r.LANDINGS: "Landings",
}


def _finite(_form: FlaskForm, field: DecimalField) -> None:
    """Refuse NaN and infinities before any range check compares them."""
    if field.data is not None and not field.data.is_finite():
        raise StopValidation("Give a number.")


class _Base(FlaskForm):
    rule_sets = SelectMultipleField(
        "Rule sets followed",
        widget=ListWidget(prefix_label=False),
        option_widget=CheckboxInput(),
    )
    home_airfield = SelectField("Home airfield", validate_choice=True)
    timezone = StringField(
        "Time zone (IANA name, e.g. America/Denver)",
        validators=[InputRequired(message="Give the time zone of your home base."), Length(max=64)],
    )
    min_ceiling_ft = forms.BoundedIntegerField(
        "Ceiling, at least (ft above the airfield)",
        validators=[Optional(), NumberRange(0, services.MAX_CEILING_FT, f"From 0 to {services.MAX_CEILING_FT:,} ft.")],
    )
    min_visibility_sm = DecimalField(
        "Visibility, at least (statute miles)", places=2,
        validators=[Optional(), _finite, NumberRange(0, services.MAX_VISIBILITY_SM, f"From 0 to {services.MAX_VISIBILITY_SM} SM.")],
    )
    min_crosswind_kt = forms.BoundedIntegerField(
        "Crosswind component, at most (kt)",
        validators=[Optional(), NumberRange(0, services.MAX_CROSSWIND_KT, f"From 0 to {services.MAX_CROSSWIND_KT} kt.")],
    )
    night_practice = BooleanField("Allow practice under a view-limiting device at night")
    submit = SubmitField("Save settings")

    def validate_min_visibility_sm(self, field: DecimalField) -> None:
        if field.data is not None and field.data != field.data.quantize(Decimal("0.01")):
            raise ValidationError("At most two decimals (e.g. 1.5 or 0.75).")

    def validate_rule_sets(self, field: SelectMultipleField) -> None:
        if not field.data:
            raise ValidationError("Choose at least one rule set.")


def _targets() -> list[dict[str, Any]]:
    """The built-in practice targets, each with its form field names."""
    out = []
    for i, target in enumerate(overrides.describe(services.builtin_rule_set(services.PRACTICE_TARGETS))):
        target = dict(target)
        target["days_field"] = f"pt{i}_days"
        target["task_fields"] = [(f"pt{i}_{j}", unit, minimum) for j, (unit, minimum) in enumerate(target["tasks"])]
        out.append(target)
    return out


def _form_class(targets: list[dict[str, Any]]) -> type[FlaskForm]:
    attrs: dict[str, Any] = {}
    for t in targets:
        attrs[t["days_field"]] = forms.BoundedIntegerField(
            "Interval (days)",
            validators=[Optional(), NumberRange(1, overrides.MAX_DAYS, f"From 1 to {overrides.MAX_DAYS} days.")],
        )
        for name, unit, _minimum in t["task_fields"]:
            label = _UNIT_LABELS.get(unit, unit)
            if unit in r.HOUR_UNITS:
                attrs[name] = DecimalField(
                    f"{label}, at least", places=1,
                    validators=[Optional(), NumberRange(Decimal("0.1"), overrides.MAX_COUNT, "From 0.1 to 100.")],
                )
            else:
                attrs[name] = forms.BoundedIntegerField(
                    f"{label}, at least",
                    validators=[Optional(), NumberRange(1, overrides.MAX_COUNT, "From 1 to 100.")],
                )
    return type("SettingsForm", (_Base,), attrs)


def _window_words(window: Any) -> str:
    return window.describe() if window is not None else "—"


@bp.route("/settings", methods=["GET", "POST"])
@login_required
def index():  # type: ignore[no-untyped-def]
    """The signed-in pilot's own settings."""
    if not current_user.is_pilot:
        return render_template("settings/no_logbook.html")
    return _edit(pilot_or_404(current_user.id))


@bp.route("/pilots/<int:pilot_id>/settings", methods=["GET", "POST"])
@login_required
def pilot(pilot_id: int):  # type: ignore[no-untyped-def]
    """A pilot's settings, for the pilot and the instructors and admins of their school."""
    return _edit(pilot_or_404(pilot_id))


@bp.route("/settings/calendar-link", methods=["POST"])
@login_required
def create_feed():  # type: ignore[no-untyped-def]
    """A new calendar subscription link for the signed-in pilot (earlier links stop working); shown once."""
    if not current_user.is_pilot:
        abort(404)
    session = db_session()
    token = planning.create_feed_token(session, current_user.id, now=now())
    session.commit()
    url = url_for("calendar.feed", token=token, _external=True, _scheme="https")
    return _edit(pilot_or_404(current_user.id), feed_url=url)


@bp.route("/settings/calendar-link/revoke", methods=["POST"])
@login_required
def revoke_feed():  # type: ignore[no-untyped-def]
    """Stop the signed-in pilot's calendar subscription link."""
    if not current_user.is_pilot:
        abort(404)
    session = db_session()
    count = planning.revoke_feed_tokens(session, current_user.id, now=now())
    session.commit()
    flash("Calendar link revoked: calendars subscribed to it stop updating." if count else "There was no active calendar link.")
    return redirect(url_for("settings.index"))


def webcal(url: str) -> str:
    """The ``webcal://`` form of an https feed URL (calendar apps open it as a subscription)."""
    return "webcal://" + url.split("://", 1)[1]


def _edit(person: models.Person, *, feed_url: str | None = None):  # type: ignore[no-untyped-def]
    """The settings page; with ``feed_url`` (just created) it is only shown, never treated as a submission."""
    session = db_session()
    targets = _targets()
    form = _form_class(targets)(formdata=None) if feed_url else _form_class(targets)()
    form.rule_sets.choices = [
        SelectChoice(name, f"{services.builtin_rule_set(name).title}") for name in rulesets.builtin_names()
    ]
    form.home_airfield.choices = [SelectChoice("", "None")] + [
        SelectChoice(a.ident, f"{a.ident} · {a.name}") for a in repository.all_airfields(session)
    ]
    own = person.id == current_user.id
    action = url_for("settings.index") if own else url_for("settings.pilot", pilot_id=person.id)
    status = 200
    if feed_url is None and form.is_submitted():
        if form.validate():
            chosen: dict[str, Any] = {}
            for t in targets:
                spec: dict[str, Any] = {}
                days = form[t["days_field"]].data
                if days is not None and not (t["window"].unit == "days" and t["window"].length == days):
                    spec["days"] = days
                mins = {}
                for name, unit, default in t["task_fields"]:
                    value = form[name].data
                    if value is not None and float(value) != float(default):
                        mins[unit] = float(value) if unit in r.HOUR_UNITS else int(value)
                if mins:
                    spec["min"] = mins
                if spec:
                    chosen[t["id"]] = spec
            try:
                services.update_settings(
                    session, person.id,
                    rule_sets=form.rule_sets.data,
                    practice_targets=chosen,
                    home_airfield=form.home_airfield.data or None,
                    timezone=form.timezone.data,
                )
                services.update_minimums(
                    session, person.id,
                    ceiling_ft=form.min_ceiling_ft.data,
                    visibility_sm=form.min_visibility_sm.data,
                    crosswind_kt=form.min_crosswind_kt.data,
                )
                services.update_night_practice(session, person.id, allowed=bool(form.night_practice.data))
            except services.SettingsRejected as exc:
                session.rollback()
                target = form.timezone if exc.field == "timezone" else getattr(form, exc.field, None)
                if target is not None and exc.field != "practice_targets":
                    target.errors = [*target.errors, exc.message]
                else:
                    form.form_errors.append(exc.message)
            else:
                session.commit()
                flash("Settings saved.")
                return redirect(action)
        status = 400
    else:
        form.rule_sets.data = list(person.rule_sets or services.DEFAULT_RULE_SETS)
        form.home_airfield.data = person.home_airfield.ident if person.home_airfield else ""
        form.timezone.data = person.timezone or ""
        form.night_practice.data = bool(person.night_practice)
        baseline = services.baseline_minimums(person)
        if baseline is not None:
            form.min_ceiling_ft.data = baseline.ceiling_ft
            form.min_visibility_sm.data = Decimal(person.min_visibility_hundredths_sm) / 100
            form.min_crosswind_kt.data = person.min_crosswind_kt
        saved = person.practice_targets or {}
        for t in targets:
            spec = saved.get(t["id"], {})
            window = t["window"]
            default_days = window.length if window is not None and window.unit == "days" else None
            form[t["days_field"]].data = spec.get("days", default_days)
            for name, unit, default in t["task_fields"]:
                form[name].data = spec.get("min", {}).get(unit, default)
    for t in targets:
        t["default_words"] = ", ".join(
            [_window_words(t["window"]), words.missing_words({unit: m for _n, unit, m in t["task_fields"]})]
        )
    return (
        render_template(
            "settings/edit.html", form=form, person=person, own=own, targets=targets, action=action,
            scope_words=words.scope_words,
            feed=planning.feed_status(session, person.id) if own else None,
            feed_url=feed_url, webcal_url=webcal(feed_url) if feed_url else None,
        ),
        status,
    )
