"""The database refuses what a logbook must never hold, on SQLite and PostgreSQL.

These tests write ORM rows directly (bypassing the repository's own
validation) so that the constraints themselves are what is tested. On
PostgreSQL the module shares one database, so nothing here commits.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta, timezone
from typing import Any

import pytest
from sqlalchemy import Engine, select, text
from sqlalchemy.exc import IntegrityError, StatementError
from sqlalchemy.orm import Session

from planner.db import models
from planner.db.session import make_session_factory

NOW = datetime(2026, 12, 1, 12, 0, tzinfo=UTC)


def _person(session: Session, name: str = "Test Pilot", email: str | None = None) -> models.Person:
    person = models.Person(
        name=name, email=email, created_at=NOW, certificate_level="private",
        category_classes=[], instrument_categories=[], instructor_ratings=[], rule_sets=[], practice_targets={},
    )
    session.add(person)
    session.flush()
    return person


def _entry(pilot: models.Person, **overrides: Any) -> models.Entry:
    values: dict[str, Any] = dict(
        pilot=pilot, external_id="e1", date=date(2026, 11, 2), version=1, created_at=NOW, updated_at=NOW
    )
    values.update(overrides)
    return models.Entry(**values)


@pytest.fixture
def session(any_engine: Engine):  # type: ignore[no-untyped-def]
    with make_session_factory(any_engine)() as s:
        yield s
        s.rollback()


def _refused(session: Session, row: object) -> None:
    session.add(row)
    with pytest.raises(IntegrityError):
        session.flush()
    session.rollback()


@pytest.mark.parametrize(
    "field",
    ["holds", "landings", "night_full_stop_landings", "partial_panel_approaches", "ua_nose_high",
     "ua_nose_low", "unlogged_approaches", "total_hundredths", "instrument_simulated_hundredths"],
)
def test_negative_count_or_hours_is_refused(session: Session, field: str) -> None:
    pilot = _person(session)
    _refused(session, _entry(pilot, **{field: -1}))


def test_more_night_full_stop_landings_than_landings_is_refused(session: Session) -> None:
    pilot = _person(session)
    _refused(session, _entry(pilot, landings=1, night_full_stop_landings=2))


def test_night_full_stop_landings_equal_to_landings_is_accepted(session: Session) -> None:
    pilot = _person(session)
    session.add(_entry(pilot, landings=3, night_full_stop_landings=3))
    session.flush()
    assert session.scalars(select(models.Entry.night_full_stop_landings)).one() == 3


def test_duplicate_external_id_for_the_same_pilot_is_refused(session: Session) -> None:
    pilot = _person(session)
    session.add(_entry(pilot, external_id="dup"))
    session.flush()
    _refused(session, _entry(pilot, external_id="dup"))


def test_same_external_id_for_two_pilots_is_allowed(session: Session) -> None:
    a, b = _person(session, "A"), _person(session, "B")
    session.add_all([_entry(a, external_id="same"), _entry(b, external_id="same")])
    session.flush()
    assert session.scalar(select(text("count(*)")).select_from(models.Entry)) == 2


@pytest.mark.parametrize(
    "overrides",
    [
        {"device": "balloon"},
        {"category": "spaceship"},
        {"conditions": "foggy"},
        {"version": 0},
    ],
    ids=["device", "category", "conditions", "version"],
)
def test_values_outside_the_enumerations_are_refused(session: Session, overrides: dict[str, Any]) -> None:
    pilot = _person(session)
    _refused(session, _entry(pilot, **overrides))


def test_an_entry_links_an_aircraft_or_a_device_not_both(session: Session) -> None:
    pilot = _person(session)
    plane = models.Aircraft(registration="N1TEST", category="airplane", dual_controls=True, equipment_notes="")
    device = models.TrainingDevice(identifier="T-ATD", kind="atd", category="airplane", notes="")
    session.add_all([plane, device])
    session.flush()
    _refused(session, _entry(pilot, aircraft_id=plane.id, device_id=device.id))


def test_approach_positions_are_unique_per_entry(session: Session) -> None:
    pilot = _person(session)
    entry = _entry(pilot)
    session.add(entry)
    session.flush()
    session.add_all([
        models.Approach(entry_id=entry.id, position=0, type="ILS", airfield="QJRR", to_minimums=False, coupled=False),
        models.Approach(entry_id=entry.id, position=0, type="VOR", airfield="QJRR", to_minimums=False, coupled=False),
    ])
    with pytest.raises(IntegrityError):
        session.flush()
    session.rollback()


def test_email_is_unique(session: Session) -> None:
    _person(session, "A", "a@juniper-ridge.example")
    _refused(session, models.Person(
        name="B", email="a@juniper-ridge.example", created_at=NOW, certificate_level="none",
        category_classes=[], instrument_categories=[], instructor_ratings=[], rule_sets=[], practice_targets={},
    ))


def test_unknown_certificate_level_is_refused(session: Session) -> None:
    _refused(session, models.Person(
        name="C", created_at=NOW, certificate_level="astronaut",
        category_classes=[], instrument_categories=[], instructor_ratings=[], rule_sets=[], practice_targets={},
    ))


def test_foreign_keys_are_enforced(session: Session) -> None:
    # SQLite enforces them only with PRAGMA foreign_keys=ON, which the app's engine sets.
    _refused(session, models.Entry(
        pilot_id=987654, external_id="orphan", date=date(2026, 1, 1), version=1, created_at=NOW, updated_at=NOW
    ))


def test_availability_window_names_exactly_one_subject(session: Session) -> None:
    person = _person(session)
    plane = models.Aircraft(registration="N2TEST", category="airplane", dual_controls=True, equipment_notes="")
    session.add(plane)
    session.flush()
    start = NOW
    _refused(session, models.AvailabilityWindow(
        person_id=person.id, aircraft_id=plane.id, starts_at=start, ends_at=start + timedelta(hours=2),
        timezone="America/Denver", note="",
    ))


def test_availability_window_must_end_after_it_starts(session: Session) -> None:
    person = _person(session)
    _refused(session, models.AvailabilityWindow(
        person_id=person.id, starts_at=NOW, ends_at=NOW, timezone="America/Denver", note="",
    ))


def test_instants_come_back_as_the_same_utc_moment(session: Session) -> None:
    person = _person(session)
    denver_evening = datetime(2026, 12, 5, 17, 30, tzinfo=timezone(timedelta(hours=-7)))
    window = models.AvailabilityWindow(
        person_id=person.id, starts_at=denver_evening, ends_at=denver_evening + timedelta(hours=1),
        timezone="America/Denver", note="",
    )
    session.add(window)
    session.flush()
    session.expire_all()
    stored = session.scalars(select(models.AvailabilityWindow)).one()
    assert stored.starts_at == datetime(2026, 12, 6, 0, 30, tzinfo=UTC)
    assert stored.starts_at.utcoffset() == timedelta(0)


def test_naive_datetimes_are_refused(session: Session) -> None:
    person = _person(session)
    session.add(models.AvailabilityWindow(
        person_id=person.id, starts_at=datetime(2026, 12, 5, 9), ends_at=datetime(2026, 12, 5, 10),
        timezone="America/Denver", note="",
    ))
    with pytest.raises(StatementError, match="naive datetime"):
        session.flush()
    session.rollback()
