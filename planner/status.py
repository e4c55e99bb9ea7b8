"""Kept-current status: each pilot's evaluated report, stored in ``kept_statuses`` and kept up to date.

A kept row holds the whole ``CurrencyReport`` of a pilot as of one day (as
JSON) with a few summary columns for lists. It is written

* when the pilot's data changes: ``planner.db.status`` raises
  ``people.status_revision`` in the flush that changes an entry, approach,
  check, rule-set choice, practice target or rating, and ``settle`` (run by
  the session just before every such commit) re-evaluates the row in the
  same transaction, as of the day it was for (or the day given to ``settle``);
* when the day moves on: ``refresh`` (the ``planner refresh`` command, meant
  for a daily scheduler) re-evaluates every stale row;
* on read, when stale: ``school_statuses`` and ``report_for`` re-evaluate
  the rows that are missing, for another day, older than the pilot's last
  change, or computed by other rule-set files or engine code, and store them.

So a page always shows exactly what ``currency.evaluate`` would answer now,
and a school overview is one query when every row is fresh. Nothing is kept
in process memory: the database is shared by every worker. Functions stage
writes; the caller commits.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import Any

from sqlalchemy.orm import Session

from planner import services
from planner.core import currency
from planner.core.logbook import Logbook
from planner.db import models, repository
from planner.db import status as rows

# Raise when the JSON shape of ``kept_statuses.report`` changes: every row is then re-evaluated once.
REPORT_FORMAT = 1
_PACKAGE = Path(__file__).resolve().parent


def _rules_digest() -> str:
    """A digest of what an evaluation depends on besides the pilot's data: the engine and the rule-set files."""
    digest = hashlib.sha256(f"kept-status/{REPORT_FORMAT}".encode())
    for pattern in ("core/*.py", "rulesets/*.py", "rulesets/*.toml"):
        for path in sorted(_PACKAGE.glob(pattern)):
            digest.update(path.relative_to(_PACKAGE).as_posix().encode() + b"\0" + path.read_bytes() + b"\0")
    return digest.hexdigest()[:16]


# The same in every worker running the same code; a deploy that changes a rule set or the engine makes every row stale.
RULES_DIGEST = _rules_digest()

AsOf = date | Callable[[str | None], date]
Progress = Callable[[str], None]


def _quiet(_message: str) -> None:
    pass


# ---------------------------------------------------------------- report <-> JSON


def _from_day(value: str | None) -> date | None:
    return date.fromisoformat(value) if value is not None else None


def report_to_json(report: currency.CurrencyReport) -> dict[str, Any]:
    """The report as JSON-ready data (every field of every requirement; ``currency.status_to_json`` per row)."""
    return {
        "rule_sets": list(report.rule_sets),
        "requirements": [
            {**currency.status_to_json(s),
             "missing": {unit: list(v) if isinstance(v, (list, tuple)) else v for unit, v in s.missing.items()}}
            for s in report.requirements
        ],
    }


def report_from_json(data: dict[str, Any], as_of: date) -> currency.CurrencyReport:
    """The ``CurrencyReport`` that ``report_to_json`` wrote, as of ``as_of``."""
    return currency.CurrencyReport(
        as_of=as_of,
        rule_sets=tuple(data["rule_sets"]),
        requirements=tuple(
            currency.RequirementStatus(
                rule_set=s["rule_set"],
                id=s["id"],
                scope=s["scope"],
                title=s["title"],
                citation=s["citation"],
                state=s["state"],
                valid_through=_from_day(s["valid_through"]),
                regain_by=_from_day(s["regain_by"]),
                regain_with=s["regain_with"],
                missing=dict(s["missing"]),
                evidence=tuple(s["evidence"]),
                warnings=tuple(s["warnings"]),
            )
            for s in data["requirements"]
        ),
    )


# ---------------------------------------------------------------- summary columns

_WORSE = {currency.CURRENT: 0, currency.GRACE: 1, currency.LAPSED: 2}


def soonest(report: currency.CurrencyReport) -> date | None:
    """The earliest ``valid_through`` among the regulatory requirements ever met (the overview's sort key)."""
    dates = [s.valid_through for s in report.requirements if not services.is_practice(s) and s.valid_through]
    return min(dates) if dates else None


def summary(report: currency.CurrencyReport) -> dict[str, Any]:
    """The summary columns of a kept row: ``worst_state``, ``soonest``, ``next_deadline``, ``practice_due``."""
    legal = [s for s in report.requirements if not services.is_practice(s)]
    deadlines = [s.valid_through for s in legal if s.state == currency.CURRENT and s.valid_through]
    deadlines += [s.regain_by for s in legal if s.state == currency.GRACE and s.regain_by]
    upcoming = [d for d in deadlines if d >= report.as_of]
    return {
        "worst_state": max((s.state for s in legal), key=_WORSE.__getitem__) if legal else None,
        "soonest": soonest(report),
        "next_deadline": min(upcoming) if upcoming else None,
        "practice_due": sum(1 for s in report.requirements if services.is_practice(s) and s.state != currency.CURRENT),
    }


def _values(person_id: int, revision: int, report: currency.CurrencyReport) -> dict[str, Any]:
    return {
        "person_id": person_id,
        "as_of": report.as_of,
        "revision": revision,
        "rules_digest": RULES_DIGEST,
        **summary(report),
        "report": report_to_json(report),
    }


# ---------------------------------------------------------------- staleness


def stale_reason(revision: int, kept: models.KeptStatus | None, as_of: date) -> str | None:
    """Why a kept row cannot answer for ``as_of`` (None: it can).

    ``"missing"``; ``"rules"`` (other rule-set files or engine code);
    ``"changed"`` (the pilot's data changed since: ``revision`` is the
    person's ``status_revision``); ``"earlier"`` / ``"later"`` (evaluated for
    another day).
    """
    if kept is None:
        return "missing"
    if kept.rules_digest != RULES_DIGEST:
        return "rules"
    if kept.revision != revision:
        return "changed"
    if kept.as_of < as_of:
        return "earlier"
    if kept.as_of > as_of:
        return "later"
    return None


def _evaluate(session: Session, person: models.Person, as_of: date, logbook: Logbook | None = None) -> currency.CurrencyReport:
    if logbook is None:
        logbook = repository.current_logbook(session, person)
    return currency.evaluate(logbook, services.rule_sets_for(person), as_of)


# ---------------------------------------------------------------- reads (re-evaluating what is stale)


@dataclass(frozen=True)
class KeptReport:
    """One pilot's status as a list needs it: the person, the report, its sort key, whether it was re-evaluated now."""

    person: models.Person
    report: currency.CurrencyReport
    soonest: date | None
    evaluated: bool


def school_statuses(session: Session, school_id: int, as_of: date) -> list[KeptReport]:
    """Every pilot of the school with their status as of ``as_of``, in pilot id order.

    One query reads the people and their kept rows; only stale rows are
    re-evaluated (and staged for storing; the caller commits), after one
    more query reads those pilots' settings.
    """
    out: list[KeptReport] = []
    fresh_values = []
    # The revision was read in the same statement as the row, before the entries are: a change
    # committed in between makes the stored label older than its content, never newer.
    listed = [(person, kept, person.status_revision) for person, kept in rows.school_rows(session, school_id)]
    rows.load_inputs(session, [p for p, kept, revision in listed if stale_reason(revision, kept, as_of) is not None])
    for person, kept, revision in listed:
        if stale_reason(revision, kept, as_of) is None:
            assert kept is not None
            out.append(KeptReport(person, report_from_json(kept.report, as_of), kept.soonest, False))
            continue
        report = _evaluate(session, person, as_of)
        fresh_values.append(_values(person.id, revision, report))
        out.append(KeptReport(person, report, soonest(report), True))
    rows.store(session, fresh_values)
    return out


def report_for(
    session: Session, person: models.Person, as_of: date, *, logbook: Logbook | None = None
) -> currency.CurrencyReport:
    """The pilot's report as of ``as_of``: the kept one when fresh, else evaluated now and staged for storing.

    ``logbook``: the pilot's logbook if the caller has already loaded it.
    """
    revision = rows.current_revision(session, person)
    kept = rows.kept_row(session, person.id)
    if stale_reason(revision, kept, as_of) is None:
        assert kept is not None
        return report_from_json(kept.report, as_of)
    report = _evaluate(session, person, as_of, logbook)
    rows.store(session, [_values(person.id, revision, report)])
    return report


# ---------------------------------------------------------------- writes after a change


def settle(session: Session, as_of: AsOf | None = None) -> int:
    """Re-evaluate the kept rows of the pilots whose data changed in this transaction; return how many.

    Each row is evaluated as of ``as_of`` when given (a date, or a function
    from a time-zone name, ``home_timezone``, to that zone's today), else as
    of the day it was last evaluated for; a pilot without a row gets one only
    when ``as_of`` is given (otherwise the next read or refresh evaluates
    them). Run automatically just before every commit that changed a pilot's
    data; callers that know today's date may call it first with ``as_of``.
    """
    people = rows.changed_pilots(session)
    if not people:
        return 0
    session.flush()
    values = []
    for person in sorted(people, key=lambda p: p.id or 0):
        if person.id is None or not person.is_pilot:
            continue
        day = as_of if as_of is None or isinstance(as_of, date) else as_of(home_timezone(person))
        if day is None:
            kept = rows.kept_row(session, person.id)
            if kept is None:
                continue
            day = kept.as_of
        revision = rows.current_revision(session, person)
        values.append(_values(person.id, revision, _evaluate(session, person, day)))
    rows.store(session, values)
    rows.forget_changes(session, people)
    return len(values)


def _settle_before_commit(session: Session) -> None:
    settle(session)


rows.on_commit(_settle_before_commit)


# ---------------------------------------------------------------- the daily refresh


@dataclass(frozen=True)
class RefreshReport:
    """What ``refresh`` did: pilots checked, and rows re-evaluated by reason (the rest were already current)."""

    checked: int
    missing: int
    earlier: int
    changed: int
    rules: int

    @property
    def evaluated(self) -> int:
        return self.missing + self.earlier + self.changed + self.rules

    @property
    def current(self) -> int:
        return self.checked - self.evaluated


def home_timezone(person: models.Person) -> str | None:
    """The zone whose date is "today" for the pilot's kept row: the school's home airfield's, else the pilot's own."""
    if person.school is not None and person.school.home_airfield is not None:
        return person.school.home_airfield.timezone
    return person.timezone


def refresh(
    session: Session,
    as_of: AsOf,
    *,
    school_id: int | None = None,
    batch: int = 100,
    progress: Progress = _quiet,
    checkpoint: Callable[[], None] | None = None,
) -> RefreshReport:
    """Re-evaluate every stale kept row (of one school, or all) so that it answers for ``as_of``.

    ``as_of``: a date, or a function from a time-zone name (``home_timezone``)
    to that zone's today. A row for a later day stays as it is (it is not
    stale yet). Pilots are taken ``batch`` at a time; after each batch
    ``progress`` hears the counts so far and ``checkpoint`` (e.g. the
    session's commit) is called, so that a long run holds no lock for long
    and keeps what it has done if stopped.
    """
    total = rows.count_pilots(session, school_id=school_id)
    counts = {"missing": 0, "earlier": 0, "changed": 0, "rules": 0}
    checked = 0
    after = 0
    while True:
        page: Sequence[tuple[models.Person, models.KeptStatus | None]] = rows.pilot_rows(
            session, school_id=school_id, after_id=after, limit=batch
        )
        if not page:
            break
        values = []
        for person, kept in page:
            day = as_of if isinstance(as_of, date) else as_of(home_timezone(person))
            revision = person.status_revision
            reason = stale_reason(revision, kept, day)
            if reason is not None and reason != "later":
                counts[reason] += 1
                values.append(_values(person.id, revision, _evaluate(session, person, day)))
        rows.store(session, values)
        checked += len(page)
        after = page[-1][0].id
        if checkpoint is not None:
            checkpoint()
        progress(f"checked {checked}/{total} pilots, re-evaluated {sum(counts.values())}")
    return RefreshReport(checked, **counts)
