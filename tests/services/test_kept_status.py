"""Kept-current statuses answer exactly what a fresh evaluation answers, after every kind of change and on every read.

The oracle is the currency engine run fresh: ``currency.evaluate`` on the logbook as loaded now, with the
pilot's rule sets as chosen now, for the day in question. A kept row must be identical to it (every field of
every requirement) for the day it is kept for, and every read must be identical to it for the day asked.
"""

from __future__ import annotations

import dataclasses
import shutil
import tempfile
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from datetime import UTC, date, datetime, timedelta
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sqlalchemy import Engine, event, text, update
from sqlalchemy.orm import Session

from planner import backup, rulesets, services, status
from planner.core import currency
from planner.core.logbook import Approach, Entry, Logbook, Pilot
from planner.db import migrate, models, repository
from planner.db import status as kept_rows
from planner.db.session import make_engine, make_session_factory
from tests.conftest import PG_ADMIN_URL, build_demo_seed, reader_module

AS_OF = date(2026, 12, 1)
CREATED = datetime(2026, 11, 30, 12, 0, tzinfo=UTC)
SCHOOL = "juniper-ridge"
OTHER_PILOT = Pilot("Imported Block", "America/Denver", ("airplane",), ("airplane/single-engine-land",))


# ------------------------------------------------------------------ databases


def load_demo(url: str, seed: Path, as_of: date = AS_OF) -> None:
    engine = make_engine(url)
    try:
        with make_session_factory(engine)() as session:
            services.load_demo(session, seed, as_of, reader=reader_module().read_json)
            session.commit()
    finally:
        engine.dispose()


@pytest.fixture(scope="module")
def template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A migrated SQLite file with the demo school (three entries per pilot), statuses kept as of AS_OF."""
    base = tmp_path_factory.mktemp("kept")
    path = base / "template.sqlite3"
    url = f"sqlite:///{path}"
    migrate.upgrade(url)
    load_demo(url, build_demo_seed(base))
    return path


def _copy(template: Path, into: Path) -> str:
    target = into / "copy.sqlite3"
    shutil.copy(template, target)
    return f"sqlite:///{target}"


@contextmanager
def pg_database(template: str | None = None) -> Iterator[str]:
    """A PostgreSQL database of its own (empty, or a copy of ``template``), dropped afterwards."""
    admin = make_engine(PG_ADMIN_URL, isolation_level="AUTOCOMMIT")
    name = f"planner_k_{uuid.uuid4().hex[:12]}"
    try:
        with admin.connect() as conn:
            conn.execute(text(f'CREATE DATABASE "{name}"' + (f' TEMPLATE "{template}"' if template else "")))
    except Exception as exc:  # noqa: BLE001 - a missing server is a failure, never a skip
        admin.dispose()
        pytest.fail(f"PostgreSQL is required and is not reachable at {PG_ADMIN_URL}: {exc}")
    try:
        yield PG_ADMIN_URL.rsplit("/", 1)[0] + f"/{name}"
    finally:
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


@pytest.fixture(scope="module")
def pg_template(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """The name of a PostgreSQL database with the demo school loaded, to copy per test."""
    with pg_database() as url:
        migrate.upgrade(url)
        load_demo(url, build_demo_seed(tmp_path_factory.mktemp("kept-pg")))
        yield url.rsplit("/", 1)[1]


@pytest.fixture
def fresh_pg_url() -> Iterator[str]:
    """An empty PostgreSQL database of its own for one test (these tests commit)."""
    with pg_database() as url:
        yield url


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def demo_url(request: pytest.FixtureRequest, template: Path, tmp_path: Path) -> Iterator[str]:
    """The demo school (three entries per pilot) on SQLite and on PostgreSQL, statuses kept as of AS_OF."""
    if request.param == "sqlite":
        yield _copy(template, tmp_path)
        return
    with pg_database(request.getfixturevalue("pg_template")) as url:
        yield url


class Db:
    """One engine; ``session()`` opens a session like a request or a command does."""

    def __init__(self, url: str) -> None:
        self.engine = make_engine(url)
        self.factory = make_session_factory(self.engine)

    def session(self) -> Session:
        return self.factory()

    def close(self) -> None:
        self.engine.dispose()


@pytest.fixture
def db(demo_url: str) -> Iterator[Db]:
    handle = Db(demo_url)
    yield handle
    handle.close()


# ------------------------------------------------------------------ the oracle


def fresh(session: Session, person: models.Person, as_of: date) -> currency.CurrencyReport:
    """What the engine answers now, for ``as_of``, from scratch."""
    return currency.evaluate(services.load_logbook(session, person.id), services.rule_sets_for(person), as_of)


def school_id(session: Session) -> int:
    school = repository.school_by_slug(session, SCHOOL)
    assert school is not None
    return school.id


def pilots(session: Session) -> list[models.Person]:
    return [p for p in repository.school_people(session, school_id(session), pilots_only=True)]


def assert_kept_rows_are_exact(db: Db, *, expect_rows: bool = True) -> int:
    """Every kept row is for the pilot's latest data and identical to a fresh evaluation for its day."""
    with db.session() as session:
        count = 0
        for person in pilots(session):
            kept = kept_rows.kept_row(session, person.id)
            if kept is None:
                assert not expect_rows, person.name
                continue
            count += 1
            assert kept.rules_digest == status.RULES_DIGEST
            assert kept.revision == person.status_revision, f"{person.name}: kept row not updated after a change"
            expected = fresh(session, person, kept.as_of)
            assert status.report_from_json(kept.report, kept.as_of) == expected, person.name
            summary = status.summary(expected)
            assert (kept.worst_state, kept.soonest, kept.next_deadline, kept.practice_due) == (
                summary["worst_state"], summary["soonest"], summary["next_deadline"], summary["practice_due"]
            ), person.name
        return count


def assert_overview_is_exact(db: Db, as_of: date) -> list[status.KeptReport]:
    """The school overview (and its stale-on-read path) answers what a fresh evaluation does for ``as_of``."""
    with db.session() as session:
        sid = school_id(session)
        overview = services.school_overview(session, sid, as_of)
        session.commit()
        by_id = {row.pilot_id: row for row in overview}
        assert set(by_id) == {p.id for p in pilots(session)}
        for person in pilots(session):
            expected = fresh(session, person, as_of)
            assert by_id[person.id].statuses == expected.requirements, person.name
            assert by_id[person.id].soonest == status.soonest(expected)
        return status.school_statuses(session, sid, as_of)


# ------------------------------------------------------------------ changes


def _details(person: models.Person, **changes: Any) -> services.PersonDetails:
    details = services.PersonDetails(
        name=person.name, email=person.email or "", is_pilot=person.is_pilot, is_instructor=person.is_instructor,
        is_admin=person.is_admin, certificate_level=person.certificate_level,
        category_classes=tuple(person.category_classes or ()), instrument_categories=tuple(person.instrument_categories or ()),
        instructor_ratings=tuple(person.instructor_ratings or ()), medical_class=person.medical_class,
        medical_expires=person.medical_expires, basicmed_expires=person.basicmed_expires,
        home_airfield_id=person.home_airfield_id, timezone=person.timezone,
    )
    return dataclasses.replace(details, **changes)


def make_entry(ident: str, spec: dict[str, Any]) -> Entry:
    """An entry from plain generated data (kinds that move the FAA, EASA, CASA, TC and practice requirements)."""
    day = AS_OF + timedelta(days=spec["offset"])
    kind = spec["kind"]
    n = spec["n"]
    common: dict[str, Any] = {"id": ident, "date": day, "total_hours": 1.0}
    if kind in ("simulated", "actual"):
        approaches = tuple(
            Approach("RNAV (GPS)" if i % 2 else "ILS", "QPNV", coupled=spec["coupled"] and i == 0) for i in range(n)
        )
        return Entry(
            **common, aircraft_class="single-engine-land", conditions=kind, approaches=approaches,
            holds=spec["holds"], course_tracking=spec["tracking"],
            instrument_simulated_hours=1.2 if kind == "simulated" else 0.0,
            instrument_actual_hours=1.2 if kind == "actual" else 0.0,
            safety_pilot="Mara Oyelaran" if kind == "simulated" else None,
            partial_panel_approaches=min(spec["practice"], n), ua_nose_high=spec["practice"], ua_nose_low=spec["practice"],
            landings=1,
        )
    if kind == "atd":
        return Entry(**common, device="atd", unlogged_approaches=n, holds=spec["holds"],
                     course_tracking=spec["tracking"], instrument_simulated_hours=1.0, aircraft="JR-ATD1")
    if kind == "check":
        return Entry(**common, aircraft_class="single-engine-land", conditions="simulated",
                     instrument_simulated_hours=1.0, checks=(spec["check"],), instructor="Hollis Varga", landings=2)
    return Entry(**common, aircraft_class=spec["class"], landings=n + 1, night_full_stop_landings=min(n, 3))


ENTRY = st.fixed_dictionaries({
    "offset": st.integers(-420, 3),
    "kind": st.sampled_from(["simulated", "actual", "atd", "check", "landings"]),
    "n": st.integers(0, 7),
    "holds": st.integers(0, 2),
    "tracking": st.booleans(),
    "coupled": st.booleans(),
    "practice": st.integers(0, 2),
    "check": st.sampled_from(["ipc", "flight-review", "ir-proficiency-check", "instrument-practical-test"]),
    "class": st.sampled_from(["single-engine-land", "multi-engine-land"]),
})
PILOT_INDEX = st.integers(0, 5)
RULE_SETS = st.lists(st.sampled_from(rulesets.BUILTIN), min_size=1, max_size=3, unique=True)
TARGETS = st.one_of(
    st.just({}),
    st.builds(lambda d, n: {"partial-panel": {"days": d, "min": {"partial-panel-approaches": n}}},
              st.integers(1, 400), st.integers(1, 3)),
    st.builds(lambda d: {"hand-flown-approach": {"days": d}}, st.integers(1, 120)),
)
CHANGE = st.one_of(
    st.tuples(st.just("add"), PILOT_INDEX, ENTRY),
    st.tuples(st.just("revise"), PILOT_INDEX, st.integers(0, 50), ENTRY),
    st.tuples(st.just("delete"), PILOT_INDEX, st.integers(0, 50)),
    st.tuples(st.just("restore"), PILOT_INDEX, st.integers(0, 50)),
    st.tuples(st.just("import"), PILOT_INDEX, st.lists(ENTRY, min_size=1, max_size=4)),
    st.tuples(st.just("settings"), PILOT_INDEX, RULE_SETS, TARGETS),
    st.tuples(st.just("ratings"), PILOT_INDEX, st.sampled_from([
        (("airplane",), ("airplane/single-engine-land",)),
        (("airplane",), ("airplane/single-engine-land", "airplane/multi-engine-land")),
        ((), ("airplane/single-engine-land",)),
        (("airplane", "rotorcraft"), ("airplane/single-engine-land", "rotorcraft/helicopter")),
    ])),
    st.tuples(st.just("dashboard"), PILOT_INDEX),
    st.tuples(st.just("overview"), st.integers(0, 400)),
)


class Scenario:
    """Applies generated changes the way the app does: one session and one commit per change."""

    def __init__(self, db: Db) -> None:
        self.db = db
        self.as_of = AS_OF
        self.serial = 0

    def _id(self) -> str:
        self.serial += 1
        return f"gen-{self.serial}"

    def apply(self, change: tuple[Any, ...]) -> None:
        kind = change[0]
        with self.db.session() as session:
            people = pilots(session)
            if kind == "overview":
                self.as_of += timedelta(days=change[1])
                services.school_overview(session, school_id(session), self.as_of)
            else:
                person = people[change[1] % len(people)]
                getattr(self, f"_{kind}")(session, person, *change[2:])
            session.commit()

    def _add(self, session: Session, person: models.Person, spec: dict[str, Any]) -> None:
        repository.add_entries(session, person, [make_entry(self._id(), spec)])

    def _rows(self, session: Session, person: models.Person) -> list[models.Entry]:
        return repository.all_entries(session, person.id)

    def _revise(self, session: Session, person: models.Person, index: int, spec: dict[str, Any]) -> None:
        live = [r for r in self._rows(session, person) if r.deleted_at is None]
        if live:
            row = live[index % len(live)]
            repository.revise_entry(session, row, make_entry(row.external_id, spec))

    def _delete(self, session: Session, person: models.Person, index: int) -> None:
        rows = self._rows(session, person)
        if rows:
            repository.delete_entry(session, rows[index % len(rows)])

    def _restore(self, session: Session, person: models.Person, index: int) -> None:
        gone = [r for r in self._rows(session, person) if r.deleted_at is not None]
        if gone:
            repository.restore_entry(session, gone[index % len(gone)])

    def _import(self, session: Session, person: models.Person, specs: list[dict[str, Any]]) -> None:
        book = Logbook(OTHER_PILOT, tuple(make_entry(self._id(), s) for s in specs))
        services.import_logbook(session, book, person.id)

    def _settings(self, session: Session, person: models.Person, names: list[str], targets: dict[str, Any]) -> None:
        services.update_settings(session, person.id, rule_sets=names, practice_targets=targets,
                                 home_airfield=None, timezone=person.timezone or "America/Denver")

    def _ratings(self, session: Session, person: models.Person, ratings: tuple[tuple[str, ...], tuple[str, ...]]) -> None:
        services.update_person(session, person, _details(person, instrument_categories=ratings[0], category_classes=ratings[1]))

    def _dashboard(self, session: Session, person: models.Person) -> None:
        result = services.pilot_status(session, person.id, self.as_of)
        assert result.report == fresh(session, person, self.as_of)


# ------------------------------------------------------------------ the property


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(changes=st.lists(CHANGE, min_size=1, max_size=8))
def test_kept_statuses_equal_a_fresh_evaluation_after_any_sequence_of_changes(template: Path, changes: list) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        db = Db(_copy(template, Path(tmp)))
        try:
            scenario = Scenario(db)
            for change in changes:
                scenario.apply(change)
                # Written with the change itself: no row is ever left behind the pilot's data.
                assert assert_kept_rows_are_exact(db) == 6
            # And a read for the current day answers exactly, whatever day the rows were kept for.
            assert_overview_is_exact(db, scenario.as_of)
            assert_kept_rows_are_exact(db)
        finally:
            db.close()


# ------------------------------------------------------------------ each kind of change, on both databases


def _pilot(session: Session, name: str) -> models.Person:
    return next(p for p in pilots(session) if p.name == name)


def _kept(db: Db, name: str) -> tuple[models.KeptStatus, int]:
    with db.session() as session:
        person = _pilot(session, name)
        kept = kept_rows.kept_row(session, person.id)
        assert kept is not None
        return kept, person.status_revision


def test_demo_load_keeps_a_status_for_every_pilot_with_a_logbook(db: Db) -> None:
    assert assert_kept_rows_are_exact(db) == 6
    kept, _revision = _kept(db, "Priya Castellano")
    assert kept.as_of == AS_OF


@pytest.mark.parametrize("change", ["add", "revise", "delete", "restore", "import", "settings", "targets", "ratings"])
def test_each_kind_of_change_updates_the_kept_status_in_the_same_commit(db: Db, change: str) -> None:
    name = "Tobias Lindqvist"
    if change == "restore":
        with db.session() as session:
            repository.delete_entry(session, repository.all_entries(session, _pilot(session, name).id)[-1])
            session.commit()
    before, revision_before = _kept(db, name)
    with db.session() as session:
        person = _pilot(session, name)
        rows = repository.all_entries(session, person.id)
        six = {"offset": -10, "kind": "simulated", "n": 6, "holds": 1, "tracking": True, "coupled": False,
               "practice": 1, "check": "ipc", "class": "single-engine-land"}
        if change == "add":
            repository.add_entries(session, person, [make_entry("new-1", six)])
        elif change == "revise":
            repository.revise_entry(session, rows[0], make_entry(rows[0].external_id, six))
        elif change == "delete":
            repository.delete_entry(session, rows[-1])
        elif change == "restore":
            repository.restore_entry(session, rows[-1])
        elif change == "import":
            services.import_logbook(session, Logbook(OTHER_PILOT, (make_entry("imp-1", six),)), person.id)
        elif change == "settings":
            services.update_settings(session, person.id, rule_sets=["easa-fcl", "practice-targets"],
                                     practice_targets={}, home_airfield=None, timezone="America/Denver")
        elif change == "targets":
            services.update_settings(session, person.id, rule_sets=list(person.rule_sets),
                                     practice_targets={"hand-flown-approach": {"days": 400}}, home_airfield=None,
                                     timezone=person.timezone or "America/Denver")
        else:
            services.update_person(session, person, _details(person, category_classes=("airplane/multi-engine-land",)))
        session.commit()
    after, revision_after = _kept(db, name)
    assert revision_after > revision_before
    assert after.revision == revision_after and after.as_of == before.as_of
    assert after.report != before.report  # every change above moves something Tobias is judged on
    assert_kept_rows_are_exact(db)


def test_a_rolled_back_change_leaves_the_kept_status_as_it_was(db: Db) -> None:
    before, revision = _kept(db, "Mara Oyelaran")
    with db.session() as session:
        person = _pilot(session, "Mara Oyelaran")
        repository.delete_entry(session, repository.all_entries(session, person.id)[0])
        session.rollback()
    after, revision_after = _kept(db, "Mara Oyelaran")
    assert (after.report, after.revision, revision_after) == (before.report, before.revision, revision)


def test_restore_from_backup_keeps_statuses_for_the_restored_pilots(db: Db, tmp_path: Path) -> None:
    with db.session() as session:
        text_ = backup.backup_school(session, school_id(session))
    target = f"sqlite:///{tmp_path / 'restored.sqlite3'}"
    migrate.upgrade(target)
    restored = Db(target)
    try:
        with restored.session() as session:
            backup.restore_school(session, text_, as_of=lambda zone: AS_OF + timedelta(days=3))
            session.commit()
        assert assert_kept_rows_are_exact(restored) == 6
        with restored.session() as session:
            assert {kept_rows.kept_row(session, p.id).as_of for p in pilots(session)} == {AS_OF + timedelta(days=3)}
    finally:
        restored.close()


def test_a_restore_without_a_day_leaves_statuses_to_the_first_read(db: Db, tmp_path: Path) -> None:
    with db.session() as session:
        text_ = backup.backup_school(session, school_id(session))
    target = f"sqlite:///{tmp_path / 'restored.sqlite3'}"
    migrate.upgrade(target)
    restored = Db(target)
    try:
        with restored.session() as session:
            backup.restore_school(session, text_)
            session.commit()
        assert assert_kept_rows_are_exact(restored, expect_rows=False) == 0
        reports = assert_overview_is_exact(restored, AS_OF)
        assert len(reports) == 6 and not any(r.evaluated for r in reports)  # the read stored them
        assert assert_kept_rows_are_exact(restored) == 6
    finally:
        restored.close()


# ------------------------------------------------------------------ stale on read


def test_a_new_day_makes_every_row_stale_and_the_read_re_evaluates_and_keeps_them(db: Db) -> None:
    later = AS_OF + timedelta(days=45)  # Tobias's grace and Dev's passenger currency both move by then
    with db.session() as session:
        first = status.school_statuses(session, school_id(session), later)
        session.commit()
    assert [r.evaluated for r in first] == [True] * 6
    reports = assert_overview_is_exact(db, later)
    assert [r.evaluated for r in reports] == [False] * 6  # the second read is the stored rows
    with db.session() as session:
        assert {kept_rows.kept_row(session, p.id).as_of for p in pilots(session)} == {later}
        # A read for an earlier day is answered exactly but does not move the rows back.
        earlier = status.school_statuses(session, school_id(session), AS_OF)
        assert all(r.evaluated for r in earlier)
        assert {r.person.id: r.report for r in earlier} == {p.id: fresh(session, p, AS_OF) for p in pilots(session)}
        session.commit()
        assert {kept_rows.kept_row(session, p.id).as_of for p in pilots(session)} == {later}


@pytest.mark.parametrize("why", ["missing", "changed", "rules"])
def test_a_row_missing_older_than_the_data_or_from_other_rule_files_is_re_evaluated_on_read(db: Db, why: str) -> None:
    with db.session() as session:
        person = _pilot(session, "Priya Castellano")
        pid = person.id
        if why == "missing":
            session.execute(text("DELETE FROM kept_statuses WHERE person_id = :p"), {"p": pid})
        elif why == "changed":
            # As if another writer had changed her data and its status update had not landed.
            session.execute(text("UPDATE entries SET landings = 0, night_full_stop_landings = 0 WHERE pilot_id = :p"), {"p": pid})
            session.execute(update(models.Person).where(models.Person.id == pid).values(
                status_revision=models.Person.status_revision + 1))
        else:
            session.execute(text("UPDATE kept_statuses SET rules_digest = 'older-rules' WHERE person_id = :p"), {"p": pid})
        session.commit()
    with db.session() as session:
        person = session.get(models.Person, pid)
        kept = kept_rows.kept_row(session, pid)
        assert status.stale_reason(person.status_revision, kept, AS_OF) == why
        reports = {r.person.id: r for r in status.school_statuses(session, school_id(session), AS_OF)}
        assert reports[pid].evaluated and not any(r.evaluated for p, r in reports.items() if p != pid)
        assert reports[pid].report == fresh(session, person, AS_OF)
        session.commit()
    assert_kept_rows_are_exact(db)


def test_the_dashboard_read_keeps_a_missing_status(db: Db) -> None:
    with db.session() as session:
        pid = _pilot(session, "Signe Mbeki").id
        session.execute(text("DELETE FROM kept_statuses WHERE person_id = :p"), {"p": pid})
        session.commit()
    day = AS_OF + timedelta(days=10)
    with db.session() as session:
        result = services.pilot_status(session, pid, day)
        assert result.report == fresh(session, session.get(models.Person, pid), day)
        session.commit()
        kept = kept_rows.kept_row(session, pid)
        assert kept is not None and kept.as_of == day


# ------------------------------------------------------------------ the overview is one query


def _school_of(session: Session, n: int, slug: str) -> int:
    """A school of ``n`` pilots with a few entries each, every status kept as of AS_OF."""
    school = models.School(slug=slug, name=f"Test school {slug}")
    session.add(school)
    session.flush()
    for i in range(n):
        person = models.Person(
            school_id=school.id, name=f"Pilot {i:03d}", is_pilot=True, is_instructor=False, is_admin=False,
            certificate_level="private", category_classes=["airplane/single-engine-land"],
            instrument_categories=["airplane"], instructor_ratings=[], rule_sets=["faa-part61", "practice-targets"],
            practice_targets={}, timezone="America/Denver", created_at=CREATED,
        )
        session.add(person)
        session.flush()
        spec = {"offset": -20 * (i % 9), "kind": "simulated", "n": 3 + i % 5, "holds": 1, "tracking": True,
                "coupled": False, "practice": i % 2, "check": "ipc", "class": "single-engine-land"}
        repository.add_entries(session, person, [make_entry(f"e{i}-{k}", {**spec, "offset": spec["offset"] - 30 * k}) for k in range(3)])
    status.settle(session, AS_OF)
    return school.id


class Statements:
    """Counts the SQL statements an engine sends."""

    def __init__(self, engine: Engine) -> None:
        self.engine = engine
        self.count = 0

    def _seen(self, *_args: Any) -> None:
        self.count += 1

    def __enter__(self) -> Statements:
        event.listen(self.engine, "before_cursor_execute", self._seen)
        return self

    def __exit__(self, *_exc: Any) -> None:
        event.remove(self.engine, "before_cursor_execute", self._seen)


def test_the_overview_is_one_query_whatever_the_number_of_pilots(db: Db) -> None:
    with db.session() as session:
        small, large = _school_of(session, 5, "five"), _school_of(session, 50, "fifty")
        session.commit()
    counts = {}
    for sid, n in ((small, 5), (large, 50)):
        with db.session() as session, Statements(db.engine) as seen:
            rows = services.school_overview(session, sid, AS_OF)
            session.commit()
        assert len(rows) == n
        counts[n] = seen.count
    assert counts[5] == counts[50] == 1
    # With some rows stale, only those are evaluated: the count grows with the stale rows, not the school.
    with db.session() as session:
        session.execute(text("DELETE FROM kept_statuses WHERE person_id IN "
                             "(SELECT id FROM people WHERE school_id = :s AND name IN ('Pilot 001', 'Pilot 002'))"),
                        {"s": large})
        session.commit()
    with db.session() as session, Statements(db.engine) as seen:
        reports = status.school_statuses(session, large, AS_OF)
        session.commit()
    assert sorted(r.person.name for r in reports if r.evaluated) == ["Pilot 001", "Pilot 002"]
    assert 1 < seen.count <= 1 + 2 * 5


# ------------------------------------------------------------------ several writers at once (PostgreSQL)


@pytest.mark.postgres
def test_two_writers_of_one_pilot_at_once_leave_a_status_with_both_entries(fresh_pg_url: str, tmp_path: Path) -> None:
    import threading

    migrate.upgrade(fresh_pg_url)
    load_demo(fresh_pg_url, build_demo_seed(tmp_path))
    db = Db(fresh_pg_url)
    try:
        spec = {"offset": -3, "kind": "simulated", "n": 6, "holds": 1, "tracking": True, "coupled": False,
                "practice": 1, "check": "ipc", "class": "single-engine-land"}
        first = db.session()
        person = _pilot(first, "Priya Castellano")
        repository.add_entries(first, person, [make_entry("writer-a", spec)])
        first.flush()  # holds the lock on Priya's people row until it commits
        errors: list[BaseException] = []

        def second_writer() -> None:
            try:
                with db.session() as other:
                    repository.add_entries(other, _pilot(other, "Priya Castellano"),
                                           [make_entry("writer-b", {**spec, "offset": -2})])
                    other.commit()
            except BaseException as exc:  # noqa: BLE001 - reported below
                errors.append(exc)

        thread = threading.Thread(target=second_writer)
        thread.start()
        for _ in range(300):  # the second writer must come to wait on the first one's row lock
            with db.engine.connect() as watch:  # a new transaction each time: the activity view is a snapshot
                waiting = watch.execute(text(
                    "SELECT count(*) FROM pg_stat_activity WHERE datname = current_database() AND wait_event_type = 'Lock'"
                )).scalar_one()
            if waiting or errors:
                break
            threading.Event().wait(0.1)
        assert waiting == 1 and not errors
        first.commit()
        first.close()
        thread.join(timeout=30)
        assert not errors and not thread.is_alive()
        assert_kept_rows_are_exact(db)
        with db.session() as session:
            book = services.load_logbook(session, _pilot(session, "Priya Castellano").id)
            assert {"writer-a", "writer-b"} <= {e.id for e in book.entries}
    finally:
        db.close()
