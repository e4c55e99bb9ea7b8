"""Web forms: the logbook entry form, the people form, and turning what was typed into core data.

Numbers are typed into text fields and parsed here (not by WTForms' number
fields) so that any garbage, huge value or "NaN" ends as a message at the
field, never as an exception. The entry built from the form is then checked
with the same rules the database and the interchange writer apply
(``repository.validate_entry`` and ``interchange.write_json``), and their
complaint is shown at the field it names.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from datetime import date
from typing import Any

from flask_wtf import FlaskForm
from wtforms import (
    IntegerField,
    BooleanField,
    DateField,
    EmailField,
    FieldList,
    Form,
    FormField,
    HiddenField,
    PasswordField,
    SelectField,
    StringField,
    SubmitField,
    TextAreaField,
)
from wtforms.fields.choices import SelectChoice
from wtforms.validators import DataRequired, Length, Optional, Regexp

from planner.core import logbook as core
from planner.db import models

MAX_APPROACH_ROWS = 30
MAX_COUNT = 99_999  # the interchange format's limit for counts
DEVICE_CHOICES = [
    ("aircraft", "Aircraft"),
    ("ffs", "Full flight simulator (FFS)"),
    ("ftd", "Flight training device (FTD)"),
    ("atd", "Aviation training device (ATD)"),
]
CATEGORY_CHOICES = [(c, c.replace("-", " ").capitalize()) for c in core.CATEGORIES]
CONDITION_CHOICES = [("", "Not logged"), ("actual", "Actual instrument"), ("simulated", "Simulated (view-limiting device)")]
APPROACH_CONDITION_CHOICES = [("", "As the entry"), ("actual", "Actual"), ("simulated", "Simulated")]
# Suggestions only (a datalist); anything else may be typed.
APPROACH_TYPES = ("ILS", "LOC", "LOC BC", "LDA", "SDF", "RNAV (GPS)", "RNAV (RNP)", "GLS", "VOR", "VOR/DME", "NDB", "PAR", "ASR")
CLASSES = ("single-engine-land", "multi-engine-land", "single-engine-sea", "multi-engine-sea")
CHECK_LABELS = {
    "ipc": "Instrument proficiency check",
    "flight-review": "Flight review",
    "instrument-practical-test": "Instrument practical test",
}
HOURS_FIELDS = (
    ("total_hours", "Total"),
    ("pic_hours", "Pilot in command"),
    ("dual_received_hours", "Dual received"),
    ("solo_hours", "Solo"),
    ("instrument_actual_hours", "Actual instrument"),
    ("instrument_simulated_hours", "Simulated instrument"),
)
COUNT_FIELDS = (
    ("landings", "Landings (day and night)"),
    ("night_full_stop_landings", "Night full-stop landings"),
    ("holds", "Holding procedures"),
    ("partial_panel_approaches", "Approaches on partial panel"),
    ("ua_nose_high", "Unusual-attitude recoveries, nose high"),
    ("ua_nose_low", "Unusual-attitude recoveries, nose low"),
    ("unlogged_approaches", "Approaches not logged one by one (count)"),
)
_HOURS = re.compile(r"^(\d{1,5})(?:[.,](\d{1,2}))?$|^[.,](\d{1,2})$")
_TIME = re.compile(r"^([01]\d|2[0-3]):[0-5]\d$")
_KEBAB = re.compile(r"^[a-z0-9]+(?:-[a-z0-9]+)*$")


def choices(pairs: list[tuple[str, str]]) -> list[SelectChoice]:
    """(value, label) pairs as WTForms select choices."""
    return [SelectChoice(value, label) for value, label in pairs]


def _number_kw() -> dict[str, str]:
    return {"inputmode": "numeric", "autocomplete": "off"}


def _hours_kw() -> dict[str, str]:
    return {"inputmode": "decimal", "autocomplete": "off", "placeholder": "0.0"}


class ApproachForm(Form):
    """One approach row (a sub-form: the CSRF token belongs to the entry form)."""

    type = StringField("Type", validators=[Length(max=64)], render_kw={"list": "approach-types"})
    airfield = StringField("Airfield", validators=[Length(max=64)], render_kw={"list": "airfields"})
    runway = StringField("Runway", validators=[Length(max=16)])
    conditions = SelectField("Conditions", choices=choices(APPROACH_CONDITION_CHOICES), default="")
    to_minimums = BooleanField("Flown to minimums")
    coupled = BooleanField("Coupled (flown by the autopilot)")
    remove = BooleanField("Leave this approach out")

    def is_blank(self) -> bool:
        return not any(((self.type.data or "").strip(), (self.airfield.data or "").strip(), (self.runway.data or "").strip(),
                        self.to_minimums.data, self.coupled.data, self.conditions.data))


class EntryForm(FlaskForm):
    """Everything the interchange format holds for one entry."""

    version = HiddenField()
    date = DateField("Date", validators=[DataRequired(message="Give the date of the flight.")])
    device = SelectField("Flown in", choices=choices(DEVICE_CHOICES), default="aircraft")
    category = SelectField("Category", choices=choices(CATEGORY_CHOICES), default="airplane")
    aircraft_class = StringField("Class", validators=[Length(max=32)], render_kw={"list": "classes"})
    aircraft = StringField("Aircraft or device", validators=[Length(max=64)], render_kw={"list": "machines"})
    conditions = SelectField("Instrument conditions", choices=choices(CONDITION_CHOICES), default="")
    route = StringField("Route", validators=[Length(max=200)])
    start_time = StringField("Start (local, HH:MM)", render_kw={"type": "time"})
    end_time = StringField("End (local, HH:MM)", render_kw={"type": "time"})
    total_hours = StringField("Total", render_kw=_hours_kw())
    pic_hours = StringField("Pilot in command", render_kw=_hours_kw())
    dual_received_hours = StringField("Dual received", render_kw=_hours_kw())
    solo_hours = StringField("Solo", render_kw=_hours_kw())
    instrument_actual_hours = StringField("Actual instrument", render_kw=_hours_kw())
    instrument_simulated_hours = StringField("Simulated instrument", render_kw=_hours_kw())
    landings = StringField("Landings (day and night)", render_kw=_number_kw())
    night_full_stop_landings = StringField("Night full-stop landings", render_kw=_number_kw())
    holds = StringField("Holding procedures", render_kw=_number_kw())
    course_tracking = BooleanField("Intercepted and tracked courses")
    partial_panel_approaches = StringField("Approaches on partial panel", render_kw=_number_kw())
    ua_nose_high = StringField("Unusual-attitude recoveries, nose high", render_kw=_number_kw())
    ua_nose_low = StringField("Unusual-attitude recoveries, nose low", render_kw=_number_kw())
    unlogged_approaches = StringField("Approaches not logged one by one (count)", render_kw=_number_kw())
    approaches = FieldList(FormField(ApproachForm), min_entries=1, max_entries=MAX_APPROACH_ROWS)
    check_ipc = BooleanField(CHECK_LABELS["ipc"])
    check_flight_review = BooleanField(CHECK_LABELS["flight-review"])
    check_instrument_practical_test = BooleanField(CHECK_LABELS["instrument-practical-test"])
    other_checks = StringField("Other checks (rule-set names, comma separated)", validators=[Length(max=400)])
    safety_pilot = StringField("Safety pilot", validators=[Length(max=200)], render_kw={"list": "people"})
    instructor = StringField("Instructor", validators=[Length(max=200)], render_kw={"list": "people"})
    remarks = TextAreaField("Remarks", validators=[Length(max=4000)])

    save = SubmitField("Save entry")
    check = SubmitField("Check what it counts toward")
    add_approach = SubmitField("Add another approach")


CHECK_FIELDS = (
    ("ipc", "check_ipc"),
    ("flight-review", "check_flight_review"),
    ("instrument-practical-test", "check_instrument_practical_test"),
)


@dataclass
class Built:
    """The result of reading an entry form: the entry, or the problems found, and where each approach came from."""

    entry: core.Entry | None
    approach_rows: list[int] = field(default_factory=list)  # approach i (0-based) came from form row approach_rows[i]


def add_error(form_field: Any, message: str) -> None:
    """Attach ``message`` to a field (works before or after validation)."""
    form_field.errors = [*form_field.errors, message]


def _text(value: str | None) -> str | None:
    text = (value or "").strip()
    return text or None


def _count(form_field: Any, problems: list[tuple[Any, str]]) -> int:
    text = (form_field.data or "").strip()
    if not text:
        return 0
    if not text.isascii() or not text.isdigit() or len(text) > 5 or int(text) > MAX_COUNT:
        problems.append((form_field, f"Give a whole number from 0 to {MAX_COUNT}."))
        return 0
    return int(text)


def _hours(form_field: Any, problems: list[tuple[Any, str]]) -> float:
    text = (form_field.data or "").strip()
    if not text:
        return 0.0
    match = _HOURS.match(text) if text.isascii() else None
    if not match:
        problems.append((form_field, "Give hours as a number with at most two decimals, e.g. 1.5."))
        return 0.0
    return float(text.replace(",", "."))


def _time(form_field: Any, problems: list[tuple[Any, str]]) -> str | None:
    text = (form_field.data or "").strip()
    if not text:
        return None
    if not _TIME.match(text):
        problems.append((form_field, "Give a local time as HH:MM, from 00:00 to 23:59."))
        return None
    return text


def entry_from_form(form: EntryForm, entry_id: str) -> Built:
    """Build the core ``Entry`` from a submitted form, or attach messages to the fields and return none.

    Call after ``form.validate()`` (which checks the date, the choices and the
    lengths). Blank approach rows and rows marked "leave out" are skipped.
    """
    problems: list[tuple[Any, str]] = []
    counts = {name: _count(getattr(form, name), problems) for name, _ in COUNT_FIELDS}
    hours = {name: _hours(getattr(form, name), problems) for name, _ in HOURS_FIELDS}
    start_time = _time(form.start_time, problems)
    end_time = _time(form.end_time, problems)
    approaches: list[core.Approach] = []
    rows: list[int] = []
    for index, row in enumerate(form.approaches.entries):
        sub = row.form
        if sub.remove.data or sub.is_blank():
            continue
        approaches.append(
            core.Approach(
                type=_text(sub.type.data),
                airfield=_text(sub.airfield.data),
                runway=_text(sub.runway.data),
                to_minimums=bool(sub.to_minimums.data),
                coupled=bool(sub.coupled.data),
                conditions=sub.conditions.data or None,
            )
        )
        rows.append(index)
    checks = [kind for kind, name in CHECK_FIELDS if getattr(form, name).data]
    for word in re.split(r"[,\s]+", (form.other_checks.data or "").strip().lower()):
        if not word:
            continue
        if not _KEBAB.match(word) or len(word) > 64:
            problems.append((form.other_checks, f'"{word[:40]}" is not a check name: use lowercase words joined by hyphens.'))
        elif word not in checks:
            checks.append(word)
    for form_field, message in problems:
        add_error(form_field, message)
    if problems or form.errors or not isinstance(form.date.data, date):
        return Built(None, rows)
    entry = core.Entry(
        id=entry_id,
        date=form.date.data,
        device=form.device.data,
        category=form.category.data,
        aircraft_class=_text(form.aircraft_class.data),
        conditions=form.conditions.data or None,
        approaches=tuple(approaches),
        course_tracking=bool(form.course_tracking.data),
        checks=tuple(checks),
        safety_pilot=_text(form.safety_pilot.data),
        instructor=_text(form.instructor.data),
        remarks=(form.remarks.data or "").strip().replace("\r\n", "\n"),
        aircraft=_text(form.aircraft.data),
        route=_text(form.route.data),
        start_time=start_time,
        end_time=end_time,
        **counts,
        **hours,
    )
    return Built(entry, rows)


def entry_form_data(entry: core.Entry, version: int | None = None) -> dict[str, Any]:
    """A core entry as the form's initial data (for the edit page)."""
    data: dict[str, Any] = {
        "version": "" if version is None else str(version),
        "date": entry.date,
        "device": entry.device,
        "category": entry.category,
        "aircraft_class": entry.aircraft_class or "",
        "aircraft": entry.aircraft or "",
        "conditions": entry.conditions or "",
        "route": entry.route or "",
        "start_time": entry.start_time or "",
        "end_time": entry.end_time or "",
        "course_tracking": entry.course_tracking,
        "safety_pilot": entry.safety_pilot or "",
        "instructor": entry.instructor or "",
        "remarks": entry.remarks,
        "approaches": [
            {
                "type": a.type or "",
                "airfield": a.airfield or "",
                "runway": a.runway or "",
                "conditions": a.conditions or "",
                "to_minimums": a.to_minimums,
                "coupled": a.coupled,
            }
            for a in entry.approaches
        ],
    }
    for name, _ in COUNT_FIELDS:
        value = getattr(entry, name)
        data[name] = str(value) if value else ""
    for name, _ in HOURS_FIELDS:
        value = getattr(entry, name)
        data[name] = f"{value:g}" if value else ""
    standard = {kind for kind, _ in CHECK_FIELDS}
    for kind, name in CHECK_FIELDS:
        data[name] = kind in entry.checks
    data["other_checks"] = ", ".join(k for k in entry.checks if k not in standard)
    return data


# Paths the validators report -> form field names.
_FIELD_ALIASES = {
    "class": "aircraft_class",
    "unusual_attitude_recoveries.nose_high": "ua_nose_high",
    "unusual_attitude_recoveries.nose_low": "ua_nose_low",
    "approaches": "unlogged_approaches",
    "checks": "other_checks",
}
_APPROACH_PATH = re.compile(r"^approaches\[(\d+)\](?:\.(\w+))?$")
_CHECK_PATH = re.compile(r"^checks\[(\d+)\]$")


def place_problem(form: EntryForm, built: Built, path: str, message: str) -> Any:
    """Attach a validator's ``message`` about ``path`` to the form field it concerns; return that field.

    Falls back to the date field (always shown first) when the path names
    nothing on the form, so no complaint is ever lost.
    """
    match = _APPROACH_PATH.match(path)
    target: Any = None
    if match:
        index = int(match.group(1)) - 1
        part = match.group(2) or "type"
        if 0 <= index < len(built.approach_rows):
            row = form.approaches.entries[built.approach_rows[index]].form
            target = getattr(row, part, None) or row.type
    elif _CHECK_PATH.match(path):
        target = form.other_checks
    else:
        name = _FIELD_ALIASES.get(path, path)
        for kind, check_name in CHECK_FIELDS:
            if name == kind:
                name = check_name
        target = form._fields.get(name) if name not in ("id", "version") else None
    if target is None:
        target = form.date
    add_error(target, message)
    return target


# ------------------------------------------------------------------ people (school admin)

ROLE_CHOICES = [("pilot", "Pilot"), ("instructor", "Instructor"), ("admin", "School admin")]
CERTIFICATE_CHOICES = [(c, "None" if c == "none" else c.upper() if c == "atp" else c.capitalize()) for c in models.CERTIFICATE_LEVELS]
MEDICAL_CHOICES = [("", "None")] + [(c, c.capitalize()) for c in models.MEDICAL_CLASSES]


class PersonForm(FlaskForm):
    """A person of the school: identity, roles, ratings, medical, home base."""

    name = StringField("Name", validators=[DataRequired(message="Give the person's name."), Length(max=200)])
    email = EmailField("Email", validators=[DataRequired(message="Give an email address to sign in with."),
                                            Regexp(r"^[^@\s]+@[^@\s]+\.[^@\s]+$", message="Give a valid email address."),
                                            Length(max=254)])
    is_pilot = BooleanField("Pilot (keeps a logbook)")
    is_instructor = BooleanField("Instructor")
    is_admin = BooleanField("School admin")
    certificate_level = SelectField("Certificate", choices=choices(CERTIFICATE_CHOICES), default="none")
    category_classes = StringField("Category/class ratings (comma separated, e.g. airplane/single-engine-land)",
                                   validators=[Length(max=400)])
    instrument_categories = StringField("Instrument rating categories (comma separated, e.g. airplane)",
                                        validators=[Length(max=200)])
    instructor_ratings = StringField("Instructor ratings (comma separated, e.g. cfi, cfii)", validators=[Length(max=200)])
    medical_class = SelectField("Medical certificate class", choices=choices(MEDICAL_CHOICES), default="")
    medical_expires = DateField("Medical valid through", validators=[Optional()])
    basicmed_expires = DateField("BasicMed valid through", validators=[Optional()])
    home_airfield = SelectField("Home airfield", choices=choices([("", "None")]), default="")
    timezone = StringField("Time zone (IANA name, e.g. America/Denver)", validators=[Length(max=64)],
                           render_kw={"list": "timezones"})
    password = PasswordField("Initial password", validators=[Length(max=200)],
                             render_kw={"autocomplete": "new-password"})
    submit = SubmitField("Save person")


class BoundedIntegerField(IntegerField):
    """An ``IntegerField`` that refuses a number of more than 12 digits as not a number.

    WTForms' ``NumberRange`` calls ``math.isnan`` on the value, which raises
    ``OverflowError`` for a huge integer: without this a posted
    "99999...9" was a server error instead of a field message.
    """

    MAX_DIGITS = 12

    def process_formdata(self, valuelist: list[Any]) -> None:
        if valuelist and isinstance(valuelist[0], str) and len(valuelist[0].strip().lstrip("+-")) > self.MAX_DIGITS:
            self.data = None
            raise ValueError(self.gettext("Not a valid integer value."))
        super().process_formdata(valuelist)
