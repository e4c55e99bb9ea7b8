"""Repository: core entries survive a trip through the database; edits keep history; deletes are reversible."""

from __future__ import annotations

import dataclasses
from datetime import UTC, date, datetime, timedelta

import pytest
from sqlalchemy import Engine, func, select
from sqlalchemy.orm import Session

from planner.core.logbook import Approach, Entry, Pilot
from planner.db import models, repository
from planner.db.repository import EntryConflict, EntryRejected
from planner.db.session import make_session_factory

T0 = datetime(2026, 12, 1, 15, 0, tzinfo=UTC)

RICH = Entry(
    id="2026-11-14-a",
    date=date(2026, 11, 14),
    device="aircraft",
    category="airplane",
    aircraft_class="single-engine-land",
    conditions="simulated",
    approaches=(
        Approach(type="ILS", airfield="QJRR", runway="27", to_minimums=True, coupled=False),
        Approach(type="RNAV (GPS)", airfield="QPNV", runway="17", to_minimums=False, coupled=True, conditions="actual"),
        Approach(type=None, airfield=None),
    ),
    holds=2,
    course_tracking=True,
    instrument_actual_hours=0.3,
    instrument_simulated_hours=1.15,
    landings=4,
    night_full_stop_landings=1,
    partial_panel_approaches=1,
    ua_nose_high=2,
    ua_nose_low=3,
    checks=("ipc", "flight-review"),
    safety_pilot="Mara Oyelaran",
    instructor="Hollis Varga",
    remarks="Piñon Valley hold, wind 250/18 — partial panel on the second approach",
    aircraft="N417JR",
    route="QJRR QPNV QJRR",
    start_time="08:05",
    end_time="10:10",
    total_hours=2.1,
    pic_hours=2.1,
    dual_received_hours=0.0,
    solo_hours=0.0,
)


def _pilot(session: Session, name: str = "Signe Mbeki", school: models.School | None = None) -> models.Person:
    person = models.Person(
        name=name, school=school, created_at=T0, certificate_level="private", category_classes=[],
        instrument_categories=[], instructor_ratings=[], rule_sets=[], practice_targets={},
    )
    session.add(person)
    session.flush()
    return person


@pytest.fixture
def any_session(any_engine: Engine):  # type: ignore[no-untyped-def]
    with make_session_factory(any_engine)() as s:
        yield s
        s.rollback()


def test_a_rich_entry_reads_back_field_for_field(any_session: Session) -> None:
    pilot = _pilot(any_session)
    repository.add_entries(any_session, pilot, [RICH], now=T0)
    any_session.flush()
    any_session.expire_all()
    (row,) = repository.current_entries(any_session, pilot.id)
    assert repository.entry_to_core(row) == RICH


def test_hours_are_stored_as_exact_hundredths(session: Session) -> None:
    pilot = _pilot(session)
    repository.add_entries(session, pilot, [RICH], now=T0)
    row = session.scalars(select(models.Entry)).one()
    assert (row.instrument_simulated_hundredths, row.total_hundredths, row.instrument_actual_hundredths) == (115, 210, 30)


def test_hours_finer_than_hundredths_are_refused_naming_entry_and_field(session: Session) -> None:
    pilot = _pilot(session)
    bad = dataclasses.replace(RICH, total_hours=1.234)
    with pytest.raises(EntryRejected, match=r"entry '2026-11-14-a', field 'total_hours'"):
        repository.add_entries(session, pilot, [bad])


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"holds": -1}, "holds"),
        ({"night_full_stop_landings": 5}, "night_full_stop_landings"),
        ({"device": "balloon"}, "device"),
        ({"conditions": "murky"}, "conditions"),
        ({"start_time": "25:00"}, "start_time"),
        ({"unlogged_approaches": 2}, "approaches"),
        ({"checks": ("ipc", "")}, "checks[2]"),
        ({"aircraft": "X" * 65}, "aircraft"),
    ],
)
def test_bad_values_are_refused_before_the_database_sees_them(session: Session, change: dict, field: str) -> None:
    pilot = _pilot(session)
    with pytest.raises(EntryRejected) as info:
        repository.add_entries(session, pilot, [dataclasses.replace(RICH, **change)])
    assert info.value.field == field and info.value.entry_id == RICH.id
    assert session.scalar(select(func.count()).select_from(models.Entry)) == 0


def test_an_id_already_in_the_logbook_is_refused_with_the_id_named(session: Session) -> None:
    pilot = _pilot(session)
    repository.add_entries(session, pilot, [RICH])
    with pytest.raises(EntryRejected, match="2026-11-14-a.*already present in Signe Mbeki's logbook"):
        repository.add_entries(session, pilot, [dataclasses.replace(RICH, remarks="again")])


def test_logged_text_is_linked_to_known_aircraft_and_school_people(session: Session) -> None:
    school = models.School(slug="s", name="S")
    plane = models.Aircraft(registration="N417JR", category="airplane", dual_controls=True, equipment_notes="")
    session.add_all([school, plane])
    pilot = _pilot(session, school=school)
    mara = _pilot(session, "Mara Oyelaran", school=school)
    _pilot(session, "Hollis Varga", school=school)
    _pilot(session, "Hollis Varga", school=school)  # two people of that name: no link, the text stays
    (row,) = repository.add_entries(session, pilot, [RICH])
    assert row.aircraft_id == plane.id and row.device_id is None
    assert row.safety_pilot_id == mara.id
    assert row.instructor_id is None and row.instructor_name == "Hollis Varga"


def test_an_edit_keeps_the_previous_state_as_a_revision(session: Session) -> None:
    pilot = _pilot(session)
    (row,) = repository.add_entries(session, pilot, [RICH], now=T0)
    edited = dataclasses.replace(RICH, holds=3, approaches=RICH.approaches[:1], checks=("ipc",))
    repository.revise_entry(session, row, edited, expected_version=1, changed_by=pilot, now=T0 + timedelta(hours=1))
    session.commit()
    session.expire_all()

    assert row.version == 2
    assert repository.entry_to_core(row) == edited
    (rev,) = repository.history(session, row)
    assert (rev.version, rev.action, rev.changed_by_id) == (1, "edit", pilot.id)
    assert rev.changed_at == T0 + timedelta(hours=1)
    assert repository.entry_from_snapshot(rev.snapshot) == RICH
    # Old approach rows are replaced, not left behind.
    assert session.scalar(select(func.count()).select_from(models.Approach)) == 1


def test_an_edit_from_a_stale_version_is_refused_and_changes_nothing(session: Session) -> None:
    pilot = _pilot(session)
    (row,) = repository.add_entries(session, pilot, [RICH])
    repository.revise_entry(session, row, dataclasses.replace(RICH, holds=5), expected_version=1)
    with pytest.raises(EntryConflict, match="changed elsewhere"):
        repository.revise_entry(session, row, dataclasses.replace(RICH, holds=9), expected_version=1)
    assert row.holds == 5 and row.version == 2
    assert len(repository.history(session, row)) == 1


def test_two_sessions_saving_the_same_entry_the_later_save_fails(engine: Engine) -> None:
    factory = make_session_factory(engine)
    with factory() as s:
        pilot = _pilot(s)
        repository.add_entries(s, pilot, [RICH])
        s.commit()
        pilot_id = pilot.id
    with factory() as first, factory() as second:
        row1 = repository.find_entry(first, pilot_id, RICH.id)
        row2 = repository.find_entry(second, pilot_id, RICH.id)
        repository.revise_entry(first, row1, dataclasses.replace(RICH, holds=4))
        first.commit()
        # The second session still holds version 1: its UPDATE ... WHERE version = 1 matches nothing.
        with pytest.raises(EntryConflict, match="changed by someone else"):
            repository.revise_entry(second, row2, dataclasses.replace(RICH, holds=7))
        second.rollback()
    with factory() as s:
        row = repository.find_entry(s, pilot_id, RICH.id)
        assert (row.holds, row.version) == (4, 2)


def test_a_delete_is_reversible_and_recorded(session: Session) -> None:
    pilot = _pilot(session)
    other = dataclasses.replace(RICH, id="keep", date=date(2026, 11, 20))
    row, _ = repository.add_entries(session, pilot, [RICH, other])
    repository.delete_entry(session, row, expected_version=1, now=T0)
    session.commit()

    assert [e.id for e in repository.to_logbook(pilot, repository.all_entries(session, pilot.id)).entries] == ["keep"]
    assert [r.external_id for r in repository.current_entries(session, pilot.id)] == ["keep"]
    assert session.get(models.Entry, row.id) is not None  # still there
    with pytest.raises(EntryRejected, match="deleted; restore it"):
        repository.revise_entry(session, row, dataclasses.replace(RICH, holds=1))

    repository.restore_entry(session, row, expected_version=2, now=T0 + timedelta(minutes=5))
    session.commit()
    assert [r.external_id for r in repository.current_entries(session, pilot.id)] == [RICH.id, "keep"]
    assert repository.entry_to_core(row) == RICH
    assert [(r.version, r.action) for r in repository.history(session, row)] == [(1, "delete"), (2, "restore")]
    assert row.version == 3


def test_a_deleted_entry_keeps_its_id_reserved(session: Session) -> None:
    pilot = _pilot(session)
    (row,) = repository.add_entries(session, pilot, [RICH])
    repository.delete_entry(session, row)
    with pytest.raises(EntryRejected, match="already present"):
        repository.add_entries(session, pilot, [RICH])


def test_to_logbook_carries_the_pilot_block(session: Session) -> None:
    pilot = _pilot(session)
    repository.apply_pilot(
        pilot,
        Pilot(name="Signe Mbeki", home_timezone="America/Denver", instrument_categories=("airplane",),
              category_classes=("airplane/single-engine-land",)),
    )
    book = repository.to_logbook(pilot, [])
    assert book.pilot == Pilot("Signe Mbeki", "America/Denver", ("airplane",), ("airplane/single-engine-land",))


def test_the_plain_row_reader_gives_the_logbook_the_orm_rows_give(any_session: Session) -> None:
    # current_logbook reads entries, approaches and checks as plain rows (no ORM objects); it must give
    # exactly what to_logbook(current_entries(...)) gives: same entries, same order, same values.
    pilot = _pilot(any_session)
    other = _pilot(any_session, "Odile Brannock")
    same_day = dataclasses.replace(RICH, id="2026-11-14-b", approaches=RICH.approaches[::-1], checks=("ipc",))
    older = dataclasses.replace(RICH, id="2019-03-02", date=date(2019, 3, 2), approaches=(), checks=(),
                                conditions=None, course_tracking=False, instrument_simulated_hours=0.0)
    gone = dataclasses.replace(RICH, id="gone", date=date(2025, 1, 1))
    edited = dataclasses.replace(RICH, id="edited", date=date(2024, 6, 30))
    rows = repository.add_entries(any_session, pilot, [RICH, same_day, older, gone, edited], now=T0)
    repository.add_entries(any_session, other, [dataclasses.replace(RICH, remarks="not hers")], now=T0)
    repository.delete_entry(any_session, rows[3], now=T0)
    changed = dataclasses.replace(edited, approaches=(Approach(type="VOR", airfield="QPNV"),), checks=("flight-review",))
    repository.revise_entry(any_session, rows[4], changed, now=T0)
    rows[2].remarks = "changed, not yet flushed"  # the reader flushes first, as an ORM query would
    expected = (dataclasses.replace(older, remarks="changed, not yet flushed"), changed, RICH, same_day)

    assert repository.current_logbook(any_session, pilot).entries == expected
    assert repository.current_logbook(any_session, pilot) == repository.to_logbook(
        pilot, repository.current_entries(any_session, pilot.id)
    )
    assert repository.current_core_entries(any_session, other.id) == (dataclasses.replace(RICH, remarks="not hers"),)
    assert repository.current_core_entries(any_session, 999_999) == ()
