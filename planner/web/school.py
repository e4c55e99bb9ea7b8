"""The school overview for instructors and admins: every pilot × every requirement, soonest lapse first."""

from __future__ import annotations

import csv
import io
from datetime import date, timedelta
from typing import NamedTuple

from flask import Blueprint, Response, abort, render_template, request
from flask_login import current_user, login_required

from planner import services
from planner.core import currency
from planner.db import models
from planner.web import db_session, today
from planner.web import status_words as words

bp = Blueprint("school", __name__)

FILTERS = {
    "": "All pilots",
    "30": "A requirement lapses within 30 days",
    "60": "A requirement lapses within 60 days",
    "90": "A requirement lapses within 90 days",
    "grace": "In grace (tasks can still restore it)",
    "check": "Needs a check",
    "practice": "Practice overdue",
}


def _school_or_404() -> models.School:
    """The signed-in instructor's or admin's school; others get 404."""
    if not (current_user.is_instructor or current_user.is_admin) or current_user.school_id is None:
        abort(404)
    school = db_session().get(models.School, current_user.school_id)
    if school is None:
        abort(404)
    return school


def _as_of(school: models.School) -> date:
    return today(school.home_airfield.timezone if school.home_airfield else None)


def matches(row: services.OverviewRow, show: str, as_of: date) -> bool:
    """Whether a pilot's row passes the filter ``show`` (a key of ``FILTERS``)."""
    legal = [s for s in row.statuses if not services.is_practice(s)]
    if show in ("30", "60", "90"):
        limit = as_of + timedelta(days=int(show))
        return any(s.state == currency.CURRENT and s.valid_through and s.valid_through <= limit for s in legal)
    if show == "grace":
        return any(s.state == currency.GRACE for s in legal)
    if show == "check":
        return any(s.state == currency.LAPSED and s.regain_with == "check" for s in legal)
    if show == "practice":
        return any(services.is_practice(s) and s.state != currency.CURRENT for s in row.statuses)
    return True


def _filtered() -> tuple[models.School, date, str, list[services.OverviewRow], str | None]:
    school = _school_or_404()
    as_of = _as_of(school)
    show = request.args.get("show", "")
    problem = None
    if show not in FILTERS:
        problem = "Unknown filter: showing all pilots."
        show = ""
    session = db_session()
    rows = [r for r in services.school_overview(session, school.id, as_of) if matches(r, show, as_of)]
    session.commit()  # keeps the statuses that were stale and have just been re-evaluated
    return school, as_of, show, rows, problem


def _columns(rows: list[services.OverviewRow]) -> list[tuple[str, str, str]]:
    """(rule set, requirement id, title) in first-seen order, regulation before practice."""
    seen: dict[tuple[str, str], str] = {}
    for row in rows:
        for s in row.statuses:
            seen.setdefault((s.rule_set, s.id), s.title)
    keys = sorted(seen, key=lambda k: k[0] == services.PRACTICE_TARGETS)
    return [(rs, rid, seen[(rs, rid)]) for rs, rid in keys]


class Cell(NamedTuple):
    """One requirement (in one scope) of one pilot, as the overview table prints it."""

    scope: str
    state: str
    state_word: str
    valid_through: str
    days_left: str


class Line(NamedTuple):
    """One pilot's row of the overview table: the pilot and one list of cells per column."""

    row: services.OverviewRow
    cells: list[list[Cell]]


def _cell(statuses: list[currency.RequirementStatus], as_of: date) -> list[Cell]:
    return [
        Cell(
            scope=words.short_label(s.rule_set, s.id, s.title, s.scope).partition(" · ")[2],
            state=s.state,
            state_word=words.STATE_WORDS[s.state],
            valid_through=words.fmt(s.valid_through),
            days_left=words.days_left(s, as_of),
        )
        for s in statuses
    ]


@bp.route("/school")
@login_required
def overview():  # type: ignore[no-untyped-def]
    """One table of every pilot of the school and every requirement, soonest lapse first."""
    school, as_of, show, rows, problem = _filtered()
    columns = _columns(rows)
    table = []
    for row in rows:
        by_column: dict[tuple[str, str], list[currency.RequirementStatus]] = {}
        for s in row.statuses:
            by_column.setdefault((s.rule_set, s.id), []).append(s)
        table.append(Line(row, [_cell(by_column.get((rs, rid), []), as_of) for rs, rid, _title in columns]))
    return render_template(
        "school/overview.html",
        school=school,
        as_of=as_of,
        show=show,
        filters=FILTERS,
        columns=columns,
        table=table,
        problem=problem,
        practice_id=services.PRACTICE_TARGETS,
    )


def _safe(value: str) -> str:
    # A cell starting with = + - @ would be run as a formula by spreadsheet programs.
    return "'" + value if value[:1] in ("=", "+", "-", "@", "\t", "\r") else value


@bp.route("/school/overview.csv")
@login_required
def overview_csv():  # type: ignore[no-untyped-def]
    """The overview (same filter) as CSV: one line per pilot and requirement."""
    school, as_of, show, rows, _problem = _filtered()
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\r\n")
    writer.writerow([
        "as_of", "pilot", "rule_set", "requirement", "scope", "state", "in_words", "valid_through", "days_left",
        "regain_by", "regain_with", "missing", "practice_target",
    ])
    for row in rows:
        for s in row.statuses:
            left = (s.valid_through - as_of).days if s.valid_through else ""
            writer.writerow([
                as_of.isoformat(), _safe(row.name), s.rule_set, s.id, s.scope, s.state,
                _safe(words.headline(s, services.is_practice(s))),
                words.fmt(s.valid_through) if s.valid_through else "", left,
                s.regain_by.isoformat() if s.regain_by else "", s.regain_with or "",
                _safe(words.missing_words(s.missing)), "yes" if services.is_practice(s) else "no",
            ])
    name = f"{school.slug}-overview-{as_of.isoformat()}{'-' + show if show else ''}.csv"
    return Response(
        out.getvalue(),
        mimetype="text/csv",
        headers={"Content-Disposition": f'attachment; filename="{name}"'},
    )
