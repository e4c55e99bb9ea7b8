"""Competing bookings at the same moment: exactly one wins, every other gets a message naming the clash.

Each attempt runs in its own thread on its own database connection (no
connection pool), all released together by a barrier, on a SQLite file and on
the PostgreSQL server. An attempt is a real booking path: saving a proposal,
accepting a proposed session, or moving one. Afterwards the database itself is
asked how many active sessions hold the contested aircraft or person over the
contested time: exactly one.

The same races on logbook entries: many saves of one entry from the same
version, exactly one lands and the others are refused (version column).

The invented school here (people "Racer ...", aircraft "N7...") exists for
these tests only. Nothing here measures time: the barrier's timeout only keeps
a broken lock from hanging the run.
"""

from __future__ import annotations

import dataclasses
import itertools
import threading
from collections.abc import Callable, Iterator
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from datetime import UTC, date, datetime, timedelta
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import Engine, func, or_, select
from sqlalchemy.orm import Session
from sqlalchemy.pool import NullPool

from planner import planning
from planner.core import scheduling, sessions
from planner.core.logbook import Entry
from planner.db import migrate, models, repository
from planner.db.repository import EntryConflict
from planner.db.session import make_engine, make_session_factory

ATTEMPTS = 50
TZ = "America/Denver"
NOW = datetime(2027, 3, 1, 15, tzinfo=UTC)
BASE = datetime(2027, 3, 10, 16, tzinfo=UTC)  # 09:00 local (MST)
TWO_HOURS = timedelta(hours=2)
_schools = itertools.count(1)


# ------------------------------------------------------------------ databases


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def race_engine(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[Engine]:
    """A migrated database whose every session opens its own connection (NullPool).

    SQLite: a fresh file. PostgreSQL: this module's database; each test builds its own school in it.
    """
    extra = {}
    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path / 'race.sqlite3'}"
        migrate.upgrade(url)
        # 50 writers queue for SQLite's one write lock; the driver's 5 s wait could run out on a loaded
        # machine, which gives "busy, try again" (tested below) rather than the clash these tests look for.
        extra = {"connect_args": {"timeout": 60}}
    else:
        url = request.getfixturevalue("pg_migrated_url")
    engine = make_engine(url, poolclass=NullPool, **extra)
    yield engine
    engine.dispose()


@dataclass(frozen=True)
class School:
    id: int
    airfield_id: int
    ident: str
    people: tuple[tuple[int, str], ...]  # (id, name)
    aircraft: tuple[tuple[int, str], ...]  # (id, registration)


def build_school(engine: Engine, *, people: int = 2 * ATTEMPTS + 2, aircraft: int = ATTEMPTS) -> School:
    """An invented school with enough private pilots and dual-control aircraft for every attempt."""
    n = next(_schools)
    tag = f"{n:02d}{'p' if engine.dialect.name == 'postgresql' else 's'}"
    with make_session_factory(engine)() as s:
        field = models.Airfield(ident=f"QB{tag}", name=f"Race Field {tag}", latitude=39.5, longitude=-105.1,
                                elevation_ft=5800, timezone=TZ)
        school = models.School(slug=f"race-school-{tag}", name=f"Race Flying Club {tag}", home_airfield=field)
        s.add_all([field, school])
        s.flush()
        persons = [
            models.Person(school_id=school.id, name=f"Racer {tag}-{i:03d}", certificate_level="private",
                          category_classes=["airplane/single-engine-land"], instrument_categories=["airplane"],
                          instructor_ratings=[], rule_sets=[], practice_targets={}, created_at=NOW,
                          medical_class="third", medical_expires=date(2028, 3, 31))
            for i in range(people)
        ]
        planes = [
            models.Aircraft(school_id=school.id, registration=f"N7{i:02d}{tag}"[:16], category="airplane",
                            aircraft_class="single-engine-land", dual_controls=True, home_airfield=field)
            for i in range(aircraft)
        ]
        s.add_all(persons + planes)
        s.commit()
        return School(school.id, field.id, field.ident, tuple((p.id, p.name) for p in persons),
                      tuple((a.id, a.registration) for a in planes))


def proposal(school: School, *, pf: int, sp: int, plane: int, start: datetime) -> planning.Proposal:
    """A one-session proposal, as ``propose_sessions`` would give it (pf/sp/plane index the school's lists)."""
    (pf_id, pf_name), (sp_id, sp_name) = school.people[pf], school.people[sp]
    plane_id, reg = school.aircraft[plane]
    pf_key, sp_key = f"{pf_name} #{pf_id}", f"{sp_name} #{sp_id}"
    slot = scheduling.SlotInfo(start, start + TWO_HOURS, school.ident, True, None)
    session = scheduling.ProposedSession(slot, reg, (scheduling.Leg(pf_key, sp_key, ()),), 1.0,
                                         "the slot both are free", "an eligible safety pilot")
    return planning.Proposal(
        school_id=school.id, airfield_id=school.airfield_id, airfield_ident=school.ident, timezone=TZ,
        start=start.date(), end=start.date(),
        plan=scheduling.SchedulePlan(sessions=(session,), unmet=(), objective=1.0, balance_after={}),
        person_ids={pf_key: pf_id, sp_key: sp_id}, aircraft_ids={reg: plane_id}, gaps={pf_id: ()},
        leg_plans={(pf_key, sp_key): sessions.plan_session([], 100.0)}, not_plannable=(), vmc_source="unknown",
    )


def store(engine: Engine, prop: planning.Proposal, *, status: str = "proposed") -> int:
    """Save a proposal alone (no competition) and give the session the status; return its id."""
    with make_session_factory(engine)() as s:
        (row,) = planning.save_proposals(s, prop, now=NOW)
        row.status = status
        s.commit()
        return row.id


# ------------------------------------------------------------------ the race


@dataclass(frozen=True)
class Outcome:
    ok: bool
    error: Exception | None = None
    result: Any = None


def race(engine: Engine, attempts: list[Callable[[Session], Any]]) -> list[Outcome]:
    """Run every attempt in its own thread and connection, released together; commit each that succeeds."""
    barrier = threading.Barrier(len(attempts))
    factory = make_session_factory(engine)

    def run(attempt: Callable[[Session], Any]) -> Outcome:
        with factory() as s:
            s.connection()  # this attempt's own connection, opened before the start
            barrier.wait(timeout=120)
            try:
                result = attempt(s)
                s.commit()
            except (planning.SessionRejected, planning.SessionConflict, EntryConflict, repository.PilotBusy) as exc:
                s.rollback()
                return Outcome(False, exc)
            return Outcome(True, result=result)

    with ThreadPoolExecutor(max_workers=len(attempts)) as pool:
        return list(pool.map(run, attempts))


def saving(prop: planning.Proposal) -> Callable[[Session], int]:
    return lambda s: planning.save_proposals(s, prop, now=NOW)[0].id


def accepting(session_id: int, version: int | None = None) -> Callable[[Session], int]:
    return lambda s: planning.accept_session(s, session_id, expected_version=version, now=NOW).id


def moving(session_id: int, start: datetime) -> Callable[[Session], int]:
    return lambda s: planning.move_session(s, session_id, start, expected_version=1, now=NOW).id


def active_holding(engine: Engine, *, start: datetime, end: datetime, aircraft_id: int | None = None,
                   person_id: int | None = None, statuses: tuple[str, ...] = ("proposed", "accepted")) -> list[int]:
    """Ids of sessions (with these statuses) over ``[start, end)`` that hold the aircraft or the person: a plain query."""
    P = models.PracticeSession
    holds = P.aircraft_id == aircraft_id if aircraft_id is not None else or_(
        P.pilot_flying_id == person_id, P.safety_pilot_id == person_id)
    with make_session_factory(engine)() as s:
        return list(s.scalars(select(P.id).where(P.status.in_(statuses), P.starts_at < end, P.ends_at > start, holds)))


def one_winner(outcomes: list[Outcome]) -> Outcome:
    winners = [o for o in outcomes if o.ok]
    assert len(winners) == 1, [str(o.error) for o in outcomes if not o.ok][:3]
    assert len(outcomes) >= ATTEMPTS
    return winners[0]


def refusals(outcomes: list[Outcome]) -> list[str]:
    out = [str(o.error) for o in outcomes if not o.ok]
    assert all(isinstance(o.error, planning.SessionRejected) for o in outcomes if not o.ok), out[:3]
    return out


# ------------------------------------------------------------------ bookings


@pytest.mark.parametrize("stagger", [timedelta(0), timedelta(minutes=1)], ids=["same-slot", "overlapping-slots"])
def test_fifty_saves_of_the_same_aircraft_at_once_book_it_exactly_once(race_engine: Engine, stagger: timedelta) -> None:
    school = build_school(race_engine)
    plane_id, reg = school.aircraft[0]
    # Different people in each attempt: the aircraft is the only thing they share. With a stagger of a
    # minute the 50 two-hour slots all overlap each other without being the same.
    outcomes = race(race_engine, [saving(proposal(school, pf=2 * i, sp=2 * i + 1, plane=0, start=BASE + i * stagger))
                                  for i in range(ATTEMPTS)])
    winner = one_winner(outcomes)
    for message in refusals(outcomes):
        assert f"practice session {winner.result} (proposed, " in message
        assert f"already holds aircraft {reg} then" in message and "Racer" not in message.split("clashes:")[1]
    last_end = BASE + (ATTEMPTS - 1) * stagger + TWO_HOURS
    assert active_holding(race_engine, start=BASE, end=last_end, aircraft_id=plane_id) == [winner.result]
    with make_session_factory(race_engine)() as s:
        assert s.scalar(select(func.count()).select_from(models.PracticeSession)
                        .where(models.PracticeSession.school_id == school.id)) == 1, "the losers stored nothing"


@pytest.mark.parametrize("stagger", [timedelta(0), timedelta(minutes=1)], ids=["same-slot", "overlapping-slots"])
def test_fifty_saves_with_the_same_safety_pilot_at_once_book_them_exactly_once(race_engine: Engine,
                                                                                stagger: timedelta) -> None:
    school = build_school(race_engine)
    sp_id, sp_name = school.people[-1]
    # A different pilot flying and aircraft in each attempt: only the safety pilot is shared.
    outcomes = race(race_engine, [saving(proposal(school, pf=i, sp=len(school.people) - 1, plane=i,
                                                  start=BASE + i * stagger)) for i in range(ATTEMPTS)])
    winner = one_winner(outcomes)
    for message in refusals(outcomes):
        assert f"practice session {winner.result} (proposed, " in message
        assert f"already holds {sp_name} (safety pilot) then" in message
    last_end = BASE + (ATTEMPTS - 1) * stagger + TWO_HOURS
    assert active_holding(race_engine, start=BASE, end=last_end, person_id=sp_id) == [winner.result]


def test_fifty_moves_onto_the_same_aircraft_and_time_leave_exactly_one_there(race_engine: Engine) -> None:
    school = build_school(race_engine)
    plane_id, reg = school.aircraft[0]
    # 50 sessions in the same aircraft, one a day from the 11th of March, different people: no clash yet.
    ids = [store(race_engine, proposal(school, pf=2 * i, sp=2 * i + 1, plane=0, start=BASE + timedelta(days=1 + i)))
           for i in range(ATTEMPTS)]
    # Everyone moves theirs onto the 10th at once, a minute apart: every target overlaps every other.
    outcomes = race(race_engine, [moving(sid, BASE + i * timedelta(minutes=1)) for i, sid in enumerate(ids)])
    winner = one_winner(outcomes)
    for sid, outcome in zip(ids, outcomes, strict=True):
        if not outcome.ok:
            assert str(outcome.error).startswith(f"practice session {sid} cannot move to 2027-03-10T")
            assert f"practice session {winner.result} (proposed, 2027-03-10 " in str(outcome.error)
            assert f"already holds aircraft {reg} then" in str(outcome.error)
    refusals(outcomes)
    end = BASE + (ATTEMPTS - 1) * timedelta(minutes=1) + TWO_HOURS
    assert active_holding(race_engine, start=BASE, end=end, aircraft_id=plane_id) == [winner.result]
    with make_session_factory(race_engine)() as s:  # the losers stayed where they were, unchanged
        for i, sid in enumerate(ids):
            row = s.get(models.PracticeSession, sid)
            if sid != winner.result:
                assert (row.starts_at, row.version, row.sequence) == (BASE + timedelta(days=1 + i), 1, 0)


def test_fifty_accepts_of_sessions_sharing_a_safety_pilot_accept_exactly_one(race_engine: Engine) -> None:
    school = build_school(race_engine)
    sp_id, sp_name = school.people[-1]
    # Overlapping proposed sessions with one safety pilot, as stored before saves were checked:
    # written past the booking check on purpose, to race the accepts.
    with make_session_factory(race_engine)() as s:
        ids = []
        for i in range(ATTEMPTS):
            (row,) = planning.save_proposals(s, proposal(school, pf=i, sp=len(school.people) - 1, plane=i,
                                                         start=BASE + timedelta(days=100 + i)), now=NOW)
            row.starts_at, row.ends_at = BASE + i * timedelta(minutes=1), BASE + i * timedelta(minutes=1) + TWO_HOURS
            ids.append(row.id)
        s.commit()
    outcomes = race(race_engine, [accepting(sid, 1) for sid in ids])
    winner = one_winner(outcomes)
    for sid, outcome in zip(ids, outcomes, strict=True):
        if not outcome.ok:
            assert str(outcome.error).startswith(f"practice session {sid} cannot be accepted: practice session "
                                                 f"{winner.result} (accepted, 2027-03-10 ")
            assert f"already holds {sp_name} (safety pilot) then" in str(outcome.error)
    refusals(outcomes)
    end = BASE + ATTEMPTS * timedelta(minutes=1) + TWO_HOURS
    assert active_holding(race_engine, start=BASE, end=end, person_id=sp_id, statuses=("accepted",)) == [winner.result]


def test_fifty_accepts_of_one_session_from_the_same_version_accept_it_once(race_engine: Engine) -> None:
    school = build_school(race_engine, people=2, aircraft=1)
    sid = store(race_engine, proposal(school, pf=0, sp=1, plane=0, start=BASE))
    outcomes = race(race_engine, [accepting(sid, 1) for _ in range(ATTEMPTS)])
    one_winner(outcomes)
    losers = [o.error for o in outcomes if not o.ok]
    # Each loser read the session after the winner's commit: it is no longer version 1.
    assert all(isinstance(e, planning.SessionConflict) and "you saw version 1" in str(e) for e in losers)
    with make_session_factory(race_engine)() as s:
        row = s.get(models.PracticeSession, sid)
        assert (row.status, row.version, row.sequence) == ("accepted", 2, 1)


def test_saves_and_moves_racing_for_one_aircraft_leave_exactly_one_booking(race_engine: Engine) -> None:
    school = build_school(race_engine)
    plane_id, reg = school.aircraft[0]
    half = ATTEMPTS // 2
    ids = [store(race_engine, proposal(school, pf=2 * i, sp=2 * i + 1, plane=0, start=BASE + timedelta(days=1 + i)))
           for i in range(half)]
    attempts = [moving(sid, BASE + i * timedelta(minutes=2)) for i, sid in enumerate(ids)]
    attempts += [saving(proposal(school, pf=2 * (half + i), sp=2 * (half + i) + 1, plane=0,
                                 start=BASE + timedelta(minutes=2 * i + 1))) for i in range(ATTEMPTS - half)]
    outcomes = race(race_engine, attempts)
    winner = one_winner(outcomes)
    for message in refusals(outcomes):
        assert f"practice session {winner.result} (proposed, 2027-03-10 " in message
        assert f"already holds aircraft {reg} then" in message
    assert active_holding(race_engine, start=BASE, end=BASE + timedelta(hours=4), aircraft_id=plane_id) == [winner.result]


def test_a_save_that_clashes_with_a_stored_session_is_refused_whole(race_engine: Engine) -> None:
    school = build_school(race_engine, people=5, aircraft=3)
    first = store(race_engine, proposal(school, pf=0, sp=1, plane=0, start=BASE))
    free = proposal(school, pf=2, sp=3, plane=1, start=BASE)
    clash = proposal(school, pf=4, sp=1, plane=2, start=BASE + timedelta(hours=1))  # person 1 is in `first` then
    both = dataclasses.replace(
        free, plan=dataclasses.replace(free.plan, sessions=free.plan.sessions + clash.plan.sessions),
        person_ids={**free.person_ids, **clash.person_ids}, aircraft_ids={**free.aircraft_ids, **clash.aircraft_ids},
        gaps={**free.gaps, **clash.gaps}, leg_plans={**free.leg_plans, **clash.leg_plans},
    )
    with make_session_factory(race_engine)() as s:
        with pytest.raises(planning.SessionRejected) as caught:
            planning.save_proposals(s, both, now=NOW)
        s.rollback()
    name = school.people[1][1]
    assert str(caught.value) == (
        f"the proposed session 2027-03-10 10:00-12:00 in {school.aircraft[2][1]} ({school.people[4][1]} with {name}) "
        f"clashes: practice session {first} (proposed, 2027-03-10 09:00-11:00 {TZ}) already holds {name} (safety pilot) then"
    )
    with make_session_factory(race_engine)() as s:
        assert s.scalars(select(models.PracticeSession.id).where(models.PracticeSession.school_id == school.id)).all() == [first]


# ------------------------------------------------------------------ logbook entries (version column)

ENTRY = Entry(id="race-1", date=date(2027, 2, 20), aircraft_class="single-engine-land", conditions="simulated",
              holds=1, instrument_simulated_hours=1.0, total_hours=1.4, landings=1)


def _entry_pilot(engine: Engine) -> int:
    school = build_school(engine, people=1, aircraft=0)
    with make_session_factory(engine)() as s:
        pilot = s.get(models.Person, school.people[0][0])
        repository.add_entries(s, pilot, [ENTRY], now=NOW)
        s.commit()
        return pilot.id


def test_two_connections_saving_the_same_entry_the_later_save_is_refused(race_engine: Engine) -> None:
    pilot_id = _entry_pilot(race_engine)
    factory = make_session_factory(race_engine)
    with factory() as first, factory() as second:
        row1 = repository.find_entry(first, pilot_id, ENTRY.id)
        row2 = repository.find_entry(second, pilot_id, ENTRY.id)
        assert row1.version == row2.version == 1
        repository.revise_entry(first, row1, dataclasses.replace(ENTRY, holds=4), expected_version=1, now=NOW)
        first.commit()
        with pytest.raises(EntryConflict, match="changed by someone else since it was loaded"):
            repository.revise_entry(second, row2, dataclasses.replace(ENTRY, holds=7), expected_version=1, now=NOW)
        second.rollback()
    with factory() as s:
        row = repository.find_entry(s, pilot_id, ENTRY.id)
        assert (row.holds, row.version, len(repository.history(s, row))) == (4, 2, 1)


def test_fifty_saves_of_one_entry_from_the_same_version_land_once(race_engine: Engine) -> None:
    pilot_id = _entry_pilot(race_engine)

    def save(holds: int) -> Callable[[Session], int]:
        def attempt(s: Session) -> int:
            row = repository.find_entry(s, pilot_id, ENTRY.id)
            repository.revise_entry(s, row, dataclasses.replace(ENTRY, holds=holds), expected_version=1, now=NOW)
            return holds
        return attempt

    outcomes = race(race_engine, [save(10 + i) for i in range(ATTEMPTS)])
    winner = one_winner(outcomes)
    # A loser either read the entry before the winner's commit (its guarded UPDATE then matches nothing)
    # or after it (it sees version 2): refused either way, never overwriting.
    assert all(isinstance(o.error, EntryConflict) for o in outcomes if not o.ok)
    with make_session_factory(race_engine)() as s:
        row = repository.find_entry(s, pilot_id, ENTRY.id)
        assert (row.holds, row.version, len(repository.history(s, row))) == (winner.result, 2, 1)


def test_fifty_new_entries_for_one_pilot_and_day_at_once_all_land_under_different_refs(race_engine: Engine) -> None:
    # The entry form's save path (repository.add_new_entry): the id is the date, with a counter when the
    # day already has entries. Fifty saves for the same day at once must neither fail on the unique key
    # nor share an id: each is locked against the others and takes the next free one.
    pilot_id = _entry_pilot(race_engine)
    day = date(2027, 2, 21)

    def add(n: int) -> Callable[[Session], str]:
        def attempt(s: Session) -> str:
            pilot = s.get(models.Person, pilot_id)
            entry = dataclasses.replace(ENTRY, id="preview", date=day, holds=n % 5)
            return repository.add_new_entry(s, pilot, entry, base=day.isoformat(), now=NOW).external_id
        return attempt

    outcomes = race(race_engine, [add(i) for i in range(ATTEMPTS)])
    assert [str(o.error) for o in outcomes if not o.ok] == []
    refs = {o.result for o in outcomes}
    assert refs == {day.isoformat()} | {f"{day.isoformat()}-{n}" for n in range(2, ATTEMPTS + 1)}
    with make_session_factory(race_engine)() as s:
        stored = repository.entry_ids(s, pilot_id)
    assert stored == refs | {ENTRY.id}


def test_a_sqlite_entry_save_that_cannot_get_the_write_lock_is_refused_with_a_message(tmp_path: Path) -> None:
    import sqlite3

    path = tmp_path / "busy-entry.sqlite3"
    migrate.upgrade(f"sqlite:///{path}")
    engine = make_engine(f"sqlite:///{path}", poolclass=NullPool, connect_args={"timeout": 0.05})
    pilot_id = _entry_pilot(engine)
    holder = sqlite3.connect(path)
    try:
        holder.execute("BEGIN IMMEDIATE")  # another writer holds the database
        with make_session_factory(engine)() as s:
            pilot = s.get(models.Person, pilot_id)
            with pytest.raises(repository.PilotBusy, match="logbook is busy with another save; try again"):
                repository.add_new_entry(s, pilot, dataclasses.replace(ENTRY, id="x"), base="2027-02-22", now=NOW)
            s.rollback()
    finally:
        holder.rollback()
        holder.close()
    with make_session_factory(engine)() as s:
        assert repository.entry_ids(s, pilot_id) == {ENTRY.id}
    engine.dispose()


def test_a_sqlite_booking_that_cannot_get_the_write_lock_is_refused_with_a_message(tmp_path: Path) -> None:
    import sqlite3

    path = tmp_path / "busy.sqlite3"
    migrate.upgrade(f"sqlite:///{path}")
    engine = make_engine(f"sqlite:///{path}", poolclass=NullPool, connect_args={"timeout": 0.05})
    school = build_school(engine, people=2, aircraft=1)
    holder = sqlite3.connect(path)
    try:
        holder.execute("BEGIN IMMEDIATE")  # another writer holds the database
        with make_session_factory(engine)() as s:
            with pytest.raises(planning.SessionRejected, match="the database is busy with another booking; try again"):
                planning.save_proposals(s, proposal(school, pf=0, sp=1, plane=0, start=BASE), now=NOW)
            s.rollback()
    finally:
        holder.rollback()
        holder.close()
    with make_session_factory(engine)() as s:
        assert s.scalar(select(func.count()).select_from(models.PracticeSession)) == 0
    engine.dispose()
