"""Practice planning on the real demo school (seed_demo/), December 2026.

Checks the proposals against things outside the scheduler: the people's
certificates, ratings and medical dates in the database (14 CFR 91.109(c)),
their availability windows, and sunrise/sunset from astral (a general-purpose
reference library) for the airfield.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta
from zoneinfo import ZoneInfo

import pytest
from astral import LocationInfo
from astral.sun import sun as astral_sun
from sqlalchemy.orm import Session

from planner import planning
from planner.db import models, practice, repository
from tests.demo_fixtures import db, demo_url  # noqa: F401

START, END = date(2026, 12, 1), date(2026, 12, 28)
NOW = datetime(2026, 12, 1, 6, tzinfo=UTC)
TZ = ZoneInfo("America/Denver")


def _school(db: Session) -> models.School:
    return repository.find_by(db, models.School, slug="juniper-ridge")


def _propose(db: Session) -> planning.Proposal:
    return planning.propose_sessions(db, _school(db).id, START, END, now=NOW)


def _person(db: Session, first: str) -> models.Person:
    return next(p for p in repository.school_people(db, _school(db).id) if p.name.split()[0] == first)


def test_every_pilot_with_plannable_needs_gets_a_session_or_a_reason(db: Session) -> None:
    prop = _propose(db)
    in_sessions = {prop.person_ids[leg.pilot_flying] for s in prop.plan.sessions for leg in s.legs}
    unmet = {prop.person_ids[u.pilot]: u.reason for u in prop.plan.unmet}
    needing = {pid for pid, gaps in prop.gaps.items() if gaps}
    assert needing, "the demo has pilots who need practice in December"
    for pid in needing:
        assert pid in in_sessions or unmet.get(pid), pid
    assert all(u.reason for u in prop.plan.unmet)
    assert prop.plan.sessions, "the demo school gets at least one session"
    # Priya needs an IPC (14 CFR 61.57(d)): that is not plannable as practice, and says so.
    priya = _person(db, "Priya").id
    assert any(n.person_id == priya and n.gap.unit == "check" and "ipc" in n.reason for n in prop.not_plannable)


def test_no_person_or_aircraft_is_in_two_sessions_at_once(db: Session) -> None:
    prop = _propose(db)
    busy: dict[str, list[tuple[datetime, datetime]]] = {}
    for s in prop.plan.sessions:
        for r in (*s.people, s.aircraft):
            for a, b in busy.get(r, []):
                assert not (a < s.slot.end and s.slot.start < b), (r, a, s.slot.start)
            busy.setdefault(r, []).append((s.slot.start, s.slot.end))


def test_safety_pilots_are_eligible_under_91_109_c_and_dev_never_is(db: Session) -> None:
    prop = _propose(db)
    dev = _person(db, "Dev").id
    planes = {a.registration: a for a in repository.school_aircraft(db, _school(db).id)}
    for s in prop.plan.sessions:
        plane = planes[s.aircraft]
        assert plane.dual_controls  # 14 CFR 91.109(c)
        for leg in s.legs:
            sp = db.get(models.Person, prop.person_ids[leg.safety_pilot])
            day = s.slot.day
            # 14 CFR 91.109(c): at least a private certificate with the aircraft's category and class.
            assert sp.certificate_level in ("private", "commercial", "atp")
            assert f"{plane.category}/{plane.aircraft_class}" in sp.category_classes
            # a required crewmember holds a valid medical or BasicMed (from memory)
            assert (sp.medical_expires and sp.medical_expires >= day) or (sp.basicmed_expires and sp.basicmed_expires >= day)
            assert sp.id != dev  # Dev's medical ran out on 2026-10-31
    dev_reasons = [u.reason for u in prop.plan.unmet if prop.person_ids[u.pilot] == dev]
    assert dev_reasons and all("no valid medical" in r for r in dev_reasons)


def test_sessions_lie_inside_everyones_availability_and_in_daylight(db: Session) -> None:
    prop = _propose(db)
    field = _school(db).home_airfield
    where = LocationInfo("QJRR", "", field.timezone, field.latitude, field.longitude)
    for s in prop.plan.sessions:
        ids = [prop.person_ids[p] for p in s.people]
        plane = prop.aircraft_ids[s.aircraft]
        for pid in ids:
            ws = practice.windows(db, person_ids=[pid], aircraft_ids=[], start=s.slot.start, end=s.slot.end)
            assert any(w.starts_at <= s.slot.start and s.slot.end <= w.ends_at for w in ws), pid
        ws = practice.windows(db, person_ids=[], aircraft_ids=[plane], start=s.slot.start, end=s.slot.end)
        assert any(w.starts_at <= s.slot.start and s.slot.end <= w.ends_at for w in ws)
        # astral (reference library), sunrise/sunset at the airfield in its own time zone
        times = astral_sun(where.observer, date=s.slot.day, tzinfo=TZ)
        assert times["sunrise"] - timedelta(minutes=2) <= s.slot.start and s.slot.end <= times["sunset"] + timedelta(minutes=2)


def test_saved_sessions_carry_content_briefing_and_explanation(db: Session) -> None:
    prop = _propose(db)
    rows = planning.save_proposals(db, prop, now=NOW)
    assert len(rows) == len(prop.plan.sessions)
    assert len({r.uid for r in rows}) == len(rows)
    for row in rows:
        assert (row.status, row.sequence, row.version) == ("proposed", 0, 1)
        assert "Why this slot" in row.explanation and "Why this partner" in row.explanation
        legs = row.content["legs"]
        assert len(legs) == (2 if row.is_mutual else 1)
        assert legs[0]["items"] and legs[0]["briefing"]["standard_rate_bank_deg"] > 0
        assert legs[0]["total_minutes"] == sum(i["minutes"] for i in legs[0]["items"])


def test_accept_move_cancel_raise_the_sequence_and_refuse_stale_versions(db: Session) -> None:
    row = planning.save_proposals(db, _propose(db), now=NOW)[0]
    planning.accept_session(db, row.id, expected_version=1, now=NOW)
    assert (row.status, row.sequence, row.version) == ("accepted", 1, 2)
    with pytest.raises(planning.SessionConflict):
        planning.move_session(db, row.id, row.starts_at + timedelta(hours=1), expected_version=1, now=NOW)
    old = row.starts_at
    planning.move_session(db, row.id, old + timedelta(days=7), expected_version=2, now=NOW)
    assert (row.starts_at, row.sequence, row.version) == (old + timedelta(days=7), 2, 3)
    planning.cancel_session(db, row.id, expected_version=3, now=NOW)
    assert (row.status, row.sequence) == ("cancelled", 3)
    with pytest.raises(planning.SessionRejected):
        planning.cancel_session(db, row.id, now=NOW)
    with pytest.raises(planning.SessionRejected):
        planning.accept_session(db, row.id, now=NOW)


def test_a_move_onto_another_session_is_refused(db: Session) -> None:
    rows = planning.save_proposals(db, _propose(db), now=NOW)
    assert len(rows) >= 2
    a, b = rows[0], rows[1]
    with pytest.raises(planning.SessionRejected, match="already holds"):
        planning.move_session(db, a.id, b.starts_at, now=NOW)  # the same aircraft or a person is in b then
    assert a.sequence == 0


def test_accepted_sessions_book_people_and_count_in_the_balance(db: Session) -> None:
    rows = planning.save_proposals(db, _propose(db), now=NOW)
    single = next(r for r in rows if not r.is_mutual)
    planning.accept_session(db, single.id, now=NOW)
    bal = planning.balance(db, _school(db).id)
    assert bal == {(single.safety_pilot_id, single.pilot_flying_id): 1}
    for r in rows:
        if r is not single:
            planning.cancel_session(db, r.id, now=NOW)
    again = _propose(db)
    # The accepted session is a booking, and its content is assumed flown: no second session for the same pilot.
    flyers = {again.person_ids[leg.pilot_flying] for s in again.plan.sessions for leg in s.legs}
    assert single.pilot_flying_id not in flyers
    for s in again.plan.sessions:
        assert not (s.slot.start < single.ends_at and single.starts_at < s.slot.end and s.aircraft == single.aircraft.registration)


def test_bad_ranges_and_unknown_schools_are_refused(db: Session) -> None:
    with pytest.raises(planning.SessionRejected, match="before"):
        planning.propose_sessions(db, _school(db).id, END, START, now=NOW)
    with pytest.raises(LookupError, match="no school"):
        planning.propose_sessions(db, 999, START, END, now=NOW)
