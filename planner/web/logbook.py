"""The pilot's logbook: list, entry form, history, reversible delete.

Who may see or change a logbook is decided by ``planner.web.access`` alone;
every view here starts with ``_pilot(pilot_id, edit=...)``. An entry is
always looked up within that pilot's logbook, so a ref of another pilot's
entry answers 404.
"""

from __future__ import annotations

from datetime import date
from typing import Any

from flask import Blueprint, abort, flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required

from planner import planning, services
from planner.core import logbook as core
from planner.db import models, repository
from planner.export import interchange
from planner.web import access, db_session, forms, today

bp = Blueprint("logbook", __name__)

PAGE_SIZE = 25
MAX_PAGE = 100_000


def _pilot(pilot_id: int, *, edit: bool = False) -> models.Person:
    """The pilot if the signed-in account may see (or edit) them; 404 otherwise (also for out-of-range ids)."""
    return access.pilot_or_404(pilot_id, edit=edit)


def _entry(pilot: models.Person, ref: str) -> models.Entry:
    """The pilot's entry with external id ``ref`` (deleted or not), else 404."""
    if not ref or len(ref) > 64:
        abort(404)
    row = repository.find_entry(db_session(), pilot.id, ref)
    if row is None:
        abort(404)
    return row


def _me() -> models.Person | None:
    return db_session().get(models.Person, current_user.id)


# ------------------------------------------------------------------ list


def _parse_date(text: str | None, label: str, problems: list[str]) -> date | None:
    if not text:
        return None
    try:
        return date.fromisoformat(text.strip())
    except ValueError:
        problems.append(f"{label}: give a date as YYYY-MM-DD (ignored “{text[:20]}”).")
        return None


@bp.route("/logbook")
@login_required
def mine():  # type: ignore[no-untyped-def]
    """The signed-in pilot's own logbook (staff without a logbook go to the school overview)."""
    if current_user.is_pilot:
        return redirect(url_for("logbook.index", pilot_id=current_user.id))
    if current_user.is_instructor or current_user.is_admin:
        return redirect(url_for("school.overview"))
    abort(404)


@bp.route("/pilots/<int:pilot_id>/logbook")
@login_required
def index(pilot_id: int):  # type: ignore[no-untyped-def]
    """The pilot's entries, newest first, filterable and paginated."""
    pilot = _pilot(pilot_id)
    args = request.args
    problems: list[str] = []
    date_from = _parse_date(args.get("from"), "From", problems)
    date_to = _parse_date(args.get("to"), "To", problems)
    device = args.get("device") or None
    if device is not None and device not in core.DEVICES:
        problems.append("Flown in: not a known device (ignored).")
        device = None
    text = (args.get("q") or "").strip()[:100] or None
    with_approaches = args.get("approaches") == "1"
    show_deleted = args.get("deleted") == "1"
    try:
        page = min(max(int(args.get("page", "1")), 1), MAX_PAGE)
    except ValueError:
        page = 1
    rows, total = repository.search_entries(
        db_session(),
        pilot.id,
        date_from=date_from,
        date_to=date_to,
        device=device,
        text=text,
        with_approaches=with_approaches,
        include_deleted=show_deleted,
        offset=(page - 1) * PAGE_SIZE,
        limit=PAGE_SIZE,
    )
    pages = max((total + PAGE_SIZE - 1) // PAGE_SIZE, 1)
    filters = {
        "from": date_from.isoformat() if date_from else "",
        "to": date_to.isoformat() if date_to else "",
        "device": device or "",
        "q": text or "",
        "approaches": "1" if with_approaches else "",
        "deleted": "1" if show_deleted else "",
    }
    active = {k: v for k, v in filters.items() if v}
    return render_template(
        "logbook/index.html",
        pilot=pilot,
        rows=rows,
        total=total,
        page=page,
        pages=pages,
        filters=filters,
        active=active,
        problems=problems,
        device_choices=forms.DEVICE_CHOICES,
        can_edit=access.can_edit(pilot),
    )


# ------------------------------------------------------------------ form helpers


def _choices(pilot: models.Person) -> dict[str, Any]:
    """What the form's datalists suggest: the school's aircraft, devices, people; airfields; approach types."""
    session = db_session()
    return {
        "machines": [a.registration for a in repository.school_aircraft(session, pilot.school_id)]
        + [d.identifier for d in repository.school_devices(session, pilot.school_id)],
        "people": [p.name for p in repository.school_people(session, pilot.school_id) if p.id != pilot.id],
        "airfields": [a.ident for a in repository.all_airfields(session)],
        "approach_types": forms.APPROACH_TYPES,
        "classes": forms.CLASSES,
    }


def _new_entry_id(pilot: models.Person, day: date) -> str:
    """The external id a new entry would get now: the date, with a counter when the day already has entries.

    Saving takes the id again under a lock (``repository.add_new_entry``), so
    two saves for the same day at the same moment get different ids.
    """
    return repository.fresh_entry_id(db_session(), pilot, day.isoformat())


def _checked(form: forms.EntryForm, entry_id: str, pilot: models.Person) -> tuple[forms.Built, bool]:
    """Build the entry and run every rule on it; on a problem, the message is at the field. Returns (built, ok)."""
    form.validate()
    built = forms.entry_from_form(form, entry_id)
    if built.entry is None:
        return built, False
    try:
        repository.validate_entry(built.entry)
    except repository.EntryRejected as exc:
        prefix = f"entry {exc.entry_id!r}, field {exc.field!r}: "
        forms.place_problem(form, built, exc.field, _sentence(str(exc).removeprefix(prefix)))
        return built, False
    try:
        # The interchange writer's rules too, so that every stored entry can be exported and read back.
        interchange.write_json(core.Logbook(core.Pilot(pilot.name), (built.entry,)))
    except interchange.InterchangeError as exc:
        path = exc.field or "id"
        message = str(exc)
        marker = f'field "{path}": '
        if marker in message:
            message = message.split(marker, 1)[1]
        forms.place_problem(form, built, path, _sentence(message))
        return built, False
    return built, True


def _sentence(text: str) -> str:
    text = text.strip()
    return (text[:1].upper() + text[1:]) if text else text


def _credit_notes(entry: core.Entry | None, pilot: models.Person) -> list[Any] | None:
    """What the entry will count toward for the pilot (the engine's own crediting; None when there is no entry)."""
    if entry is None:
        return None
    return services.explain_entry(pilot, entry)


def _render_form(form: forms.EntryForm, pilot: models.Person, *, row: models.Entry | None, status: int = 200,
                 notes: list[Any] | None = None, conflict: str | None = None):  # type: ignore[no-untyped-def]
    has_errors = _has_errors(form)
    return (
        render_template(
            "logbook/form.html",
            form=form,
            pilot=pilot,
            row=row,
            choices=_choices(pilot),
            notes=notes,
            conflict=conflict,
            has_errors=has_errors,
            count_fields=forms.COUNT_FIELDS,
            hours_fields=forms.HOURS_FIELDS,
            check_fields=forms.CHECK_FIELDS,
        ),
        status,
    )


def _has_errors(form: forms.EntryForm) -> bool:
    """Whether any field or approach sub-field carries a message (WTForms caches ``form.errors``)."""
    for f in form:
        if f.type == "FieldList":
            if any(sub.errors for row in f.entries for sub in row.form):
                return True
        elif f.errors:
            return True
    return False


def _add_row(form: forms.EntryForm) -> None:
    if len(form.approaches.entries) < forms.MAX_APPROACH_ROWS:
        form.approaches.append_entry()
    else:
        forms.add_error(form.approaches.entries[-1].form.type, f"At most {forms.MAX_APPROACH_ROWS} approaches per entry.")


# ------------------------------------------------------------------ create / show / edit


@bp.route("/pilots/<int:pilot_id>/logbook/new", methods=["GET", "POST"])
@login_required
def create(pilot_id: int):  # type: ignore[no-untyped-def]
    """The entry form for a new entry; "Add another approach" and "Check" re-display it without saving."""
    pilot = _pilot(pilot_id, edit=True)
    if request.method == "GET":
        data: dict[str, Any] = {"date": today(pilot.timezone)}
        if pilot.id != current_user.id:
            data["instructor"] = current_user.name  # an instructor recording a flight or check they gave
        form = forms.EntryForm(data=data)
        return _render_form(form, pilot, row=None)
    form = forms.EntryForm()
    if form.add_approach.data:
        _add_row(form)
        return _render_form(form, pilot, row=None)
    day = form.date.data if isinstance(form.date.data, date) else today(pilot.timezone)
    entry_id = _new_entry_id(pilot, day)
    built, ok = _checked(form, entry_id, pilot)
    if not ok:
        return _render_form(form, pilot, row=None, status=422)
    notes = _credit_notes(built.entry, pilot)
    if not form.save.data:
        return _render_form(form, pilot, row=None, notes=notes)
    session = db_session()
    try:
        row = repository.add_new_entry(session, pilot, built.entry, base=day.isoformat())
        saved_ref = row.external_id
        session.commit()
    except repository.EntryRejected as exc:
        session.rollback()
        forms.place_problem(form, built, exc.field, _sentence(str(exc).split(": ", 1)[-1]))
        return _render_form(form, pilot, row=None, status=422)
    except repository.PilotBusy as exc:
        session.rollback()
        flash(f"Not saved: {exc}.")
        return _render_form(form, pilot, row=None, status=409)
    flash(f"Entry of {built.entry.date.isoformat()} saved.")
    return redirect(url_for("logbook.show", pilot_id=pilot.id, ref=saved_ref))


@bp.route("/pilots/<int:pilot_id>/logbook/from-session")
@login_required
def from_session(pilot_id: int):  # type: ignore[no-untyped-def]
    """The entry form prefilled from a flown practice session (``?session=<id>``); saving goes through ``create``."""
    pilot = _pilot(pilot_id, edit=True)
    try:
        session_id = int(request.args.get("session", ""))
    except ValueError:
        abort(404)
    if not 0 < session_id <= access.MAX_ID:
        abort(404)
    try:
        entry = planning.draft_entry(db_session(), session_id, pilot.id)
    except LookupError:
        abort(404)
    except planning.SessionRejected as exc:
        flash(f"No draft: {exc}.")
        return redirect(url_for("logbook.index", pilot_id=pilot.id))
    form = forms.EntryForm(data=forms.entry_form_data(entry))
    flash(f"Draft from practice session {session_id}: check every field against what was flown, then save.")
    return _render_form(form, pilot, row=None, notes=_credit_notes(entry, pilot))


def _changes(older: dict[str, Any], newer: dict[str, Any]) -> list[str]:
    """Names of the fields that differ between two snapshots."""
    keys = [k for k in older if not k.startswith("_")]
    return [k.replace("_", " ") for k in keys if older.get(k) != newer.get(k)]


@bp.route("/pilots/<int:pilot_id>/logbook/<ref>")
@login_required
def show(pilot_id: int, ref: str):  # type: ignore[no-untyped-def]
    """One entry: every field, its approaches and its revision history."""
    pilot = _pilot(pilot_id)
    row = _entry(pilot, ref)
    session = db_session()
    entry = repository.entry_to_core(row)
    revisions = repository.history(session, row)
    current = repository.entry_snapshot(row)
    people = {p.id: p.name for p in repository.school_people(session, pilot.school_id)}
    history = []
    for i, rev in enumerate(revisions):
        newer = revisions[i + 1].snapshot if i + 1 < len(revisions) else current
        history.append(
            {
                "version": rev.version,
                "action": rev.action,
                "when": rev.changed_at,
                "by": people.get(rev.changed_by_id, "someone outside the school") if rev.changed_by_id else "not recorded",
                "changed": _changes(rev.snapshot, newer) if rev.action == "edit" else [],
            }
        )
    return render_template(
        "logbook/show.html",
        pilot=pilot,
        row=row,
        entry=entry,
        history=history,
        notes=_credit_notes(entry, pilot) if row.deleted_at is None else None,
        can_edit=access.can_edit(pilot),
        device_names=dict(forms.DEVICE_CHOICES),
        check_labels=forms.CHECK_LABELS,
    )


@bp.route("/pilots/<int:pilot_id>/logbook/<ref>/edit", methods=["GET", "POST"])
@login_required
def edit(pilot_id: int, ref: str):  # type: ignore[no-untyped-def]
    """Change an entry; the previous state is kept, and a save from a stale copy is refused."""
    pilot = _pilot(pilot_id, edit=True)
    row = _entry(pilot, ref)
    if row.deleted_at is not None:
        flash("This entry is deleted: restore it before editing.")
        return redirect(url_for("logbook.show", pilot_id=pilot.id, ref=row.external_id))
    if request.method == "GET":
        form = forms.EntryForm(data=forms.entry_form_data(repository.entry_to_core(row), row.version))
        return _render_form(form, pilot, row=row)
    form = forms.EntryForm()
    if form.add_approach.data:
        _add_row(form)
        return _render_form(form, pilot, row=row)
    built, ok = _checked(form, row.external_id, pilot)
    if not ok:
        return _render_form(form, pilot, row=row, status=422)
    notes = _credit_notes(built.entry, pilot)
    if not form.save.data:
        return _render_form(form, pilot, row=row, notes=notes)
    try:
        expected = int(form.version.data or "")
    except ValueError:
        expected = -1  # no usable version: treat as stale rather than overwrite
    session = db_session()
    try:
        repository.revise_entry(session, row, built.entry, expected_version=expected, changed_by=_me())
        session.commit()
    except repository.EntryConflict:
        session.rollback()
        message = (
            "Not saved: this entry was changed elsewhere after you opened it. "
            "Your changes are still in the form below; open the current entry, then apply them again."
        )
        return _render_form(form, pilot, row=row, status=409, conflict=message)
    except repository.EntryRejected as exc:
        session.rollback()
        forms.place_problem(form, built, exc.field, _sentence(str(exc).split(": ", 1)[-1]))
        return _render_form(form, pilot, row=row, status=422)
    flash("Changes saved; the previous version is kept in the history.")
    return redirect(url_for("logbook.show", pilot_id=pilot.id, ref=row.external_id))


# ------------------------------------------------------------------ delete / restore


def _expected_version() -> int | None:
    text = request.form.get("version", "")
    if not text:
        return None
    try:
        return int(text)
    except ValueError:
        return -1


def _delete_or_restore(pilot_id: int, ref: str, change: Any, verb: str, done: str):  # type: ignore[no-untyped-def]
    """Apply ``change`` (``repository.delete_entry`` or ``restore_entry``) to the entry; a stale copy is refused."""
    pilot = _pilot(pilot_id, edit=True)
    row = _entry(pilot, ref)
    session = db_session()
    try:
        change(session, row, expected_version=_expected_version(), changed_by=_me())
        session.commit()
    except repository.EntryConflict:
        session.rollback()
        flash(f"Not {verb}d: the entry changed since you opened it. Look at it again, then {verb}.")
        return redirect(url_for("logbook.show", pilot_id=pilot.id, ref=ref))
    flash(done)
    return redirect(url_for("logbook.show", pilot_id=pilot.id, ref=ref))


@bp.route("/pilots/<int:pilot_id>/logbook/<ref>/delete", methods=["POST"])
@login_required
def delete(pilot_id: int, ref: str):  # type: ignore[no-untyped-def]
    """Mark an entry deleted (it stays in the history and can be restored)."""
    return _delete_or_restore(
        pilot_id, ref, repository.delete_entry, "delete",
        "Entry deleted. It no longer counts toward anything; you can restore it from this page.",
    )


@bp.route("/pilots/<int:pilot_id>/logbook/<ref>/restore", methods=["POST"])
@login_required
def restore(pilot_id: int, ref: str):  # type: ignore[no-untyped-def]
    """Undo a delete."""
    return _delete_or_restore(pilot_id, ref, repository.restore_entry, "restore", "Entry restored.")


@bp.app_template_filter("hours")
def _hours_filter(value: float) -> str:
    return f"{value:.1f}" if value and round(value, 1) == value else (f"{value:g}" if value else "–")


@bp.route("/pilots/<int:pilot_id>/logbook/credit", methods=["POST"])
@login_required
def credit(pilot_id: int):  # type: ignore[no-untyped-def]
    """The credit notes for the form as typed so far (an HTML fragment; nothing is saved)."""
    pilot = _pilot(pilot_id, edit=True)
    form = forms.EntryForm()
    built, ok = _checked(form, "draft", pilot)
    if not ok:
        return render_template("logbook/_credit_problems.html", form=form), 200
    return render_template("logbook/_credit.html", notes=_credit_notes(built.entry, pilot))
