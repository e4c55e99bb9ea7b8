"""Services: import is all or nothing, export returns what was imported, the demo loads once."""

from __future__ import annotations

import dataclasses
import json
from datetime import date
from pathlib import Path

import pytest
from sqlalchemy import Engine, func, select, text
from sqlalchemy.orm import Session
from werkzeug.security import check_password_hash

from planner import services
from planner.core.logbook import Approach, Entry, Logbook, Pilot
from planner.db import models, repository
from planner.db.base import Base
from planner.db.session import make_session_factory

PILOT = Pilot("Priya Castellano", "America/Denver", ("airplane",), ("airplane/single-engine-land",))


def _entries(n: int) -> tuple[Entry, ...]:
    return tuple(
        Entry(
            id=f"p-{i:03d}",
            date=date(2026, 1, 1 + i),
            conditions="simulated",
            approaches=(Approach("RNAV (GPS)", "QPNV", "17"),),
            holds=1,
            instrument_simulated_hours=1.1,
            landings=1,
            safety_pilot="Mara Oyelaran",
            total_hours=1.5,
        )
        for i in range(n)
    )


def _dump(engine: Engine) -> dict[str, list[tuple]]:
    """Every row of every table, for comparing whole databases."""
    with engine.connect() as conn:
        return {
            name: sorted(tuple(map(str, row)) for row in conn.execute(text(f"SELECT * FROM {name}")))
            for name in sorted(Base.metadata.tables)
        }


def test_import_creates_the_pilot_and_export_returns_the_same_logbook(session: Session) -> None:
    book = Logbook(PILOT, _entries(4))
    pilot_id = services.import_logbook(session, book)
    session.commit()
    assert services.export_logbook(session, pilot_id) == book
    assert services.load_logbook(session, pilot_id) == book


def test_import_into_an_existing_pilot_adds_entries_and_ignores_the_pilot_block(session: Session) -> None:
    pilot_id = services.import_logbook(session, Logbook(PILOT, _entries(2)))
    more = tuple(dataclasses.replace(e, id=f"x-{e.id}") for e in _entries(2))
    assert services.import_logbook(session, Logbook(Pilot("Someone Else"), more), pilot_id) == pilot_id
    session.commit()
    book = services.load_logbook(session, pilot_id)
    assert book.pilot.name == "Priya Castellano"
    assert len(book.entries) == 4


def test_import_refuses_ids_the_pilot_already_has_and_changes_nothing(engine: Engine) -> None:
    factory = make_session_factory(engine)
    with factory() as s:
        pilot_id = services.import_logbook(s, Logbook(PILOT, _entries(3)))
        s.commit()
    before = _dump(engine)
    again = Logbook(PILOT, (Entry(id="new-1", date=date(2026, 5, 1)), *_entries(3)))
    with factory() as s:
        with pytest.raises(services.EntryRejected, match=r"entry 'p-000', field 'id': already present .*2 more"):
            services.import_logbook(s, again, pilot_id)
        s.rollback()
    assert _dump(engine) == before


def test_a_bad_entry_mid_way_leaves_the_database_unchanged(engine: Engine) -> None:
    factory = make_session_factory(engine)
    entries = list(_entries(6))
    entries[3] = dataclasses.replace(entries[3], landings=1, night_full_stop_landings=2)
    before = _dump(engine)
    with factory() as s:
        with pytest.raises(services.EntryRejected) as info:
            services.import_logbook(s, Logbook(PILOT, tuple(entries)))
        s.rollback()
    assert (info.value.entry_id, info.value.field) == ("p-003", "night_full_stop_landings")
    assert _dump(engine) == before


def test_a_database_refusal_mid_import_leaves_nothing_behind(engine: Engine, monkeypatch: pytest.MonkeyPatch) -> None:
    # Skip the repository's own checks so that the database itself refuses the fourth entry.
    monkeypatch.setattr(repository, "validate_entry", lambda entry: None)
    entries = list(_entries(6))
    entries[3] = dataclasses.replace(entries[3], holds=-2)
    before = _dump(engine)
    with make_session_factory(engine)() as s:
        with pytest.raises(Exception, match="holds"):
            services.import_logbook(s, Logbook(PILOT, tuple(entries)))
        s.rollback()
    assert _dump(engine) == before


def test_import_into_an_unknown_pilot_is_a_lookup_error(session: Session) -> None:
    with pytest.raises(LookupError, match="no pilot with id 42"):
        services.import_logbook(session, Logbook(PILOT, _entries(1)), 42)


def test_export_leaves_out_deleted_entries(session: Session) -> None:
    pilot_id = services.import_logbook(session, Logbook(PILOT, _entries(3)))
    row = repository.find_entry(session, pilot_id, "p-001")
    repository.delete_entry(session, row)
    session.commit()
    assert [e.id for e in services.export_logbook(session, pilot_id).entries] == ["p-000", "p-002"]


def test_list_pilots_gives_id_name_email_school(session: Session) -> None:
    pilot_id = services.import_logbook(session, Logbook(PILOT, ()))
    session.commit()
    assert services.list_pilots(session) == [
        {"id": pilot_id, "name": "Priya Castellano", "email": None, "school": None}
    ]


# ---------------------------------------------------------------- demo


def _load(engine: Engine, seed: Path, reader) -> list[services.DemoAccount]:  # type: ignore[no-untyped-def]
    with make_session_factory(engine)() as s:
        accounts = services.load_demo(s, seed, date(2026, 12, 1), reader=reader)
        s.commit()
    return accounts


def test_demo_loads_the_school_and_a_second_run_changes_nothing(engine: Engine, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    first = _load(engine, demo_seed, interchange.read_json)
    after_first = _dump(engine)
    second = _load(engine, demo_seed, interchange.read_json)
    assert _dump(engine) == after_first
    assert first == second
    counts = {name: len(rows) for name, rows in after_first.items()}
    assert counts["schools"] == 1 and counts["airfields"] == 3 and counts["aircraft"] == 3
    assert counts["training_devices"] == 1 and counts["people"] == 8 and counts["entries"] == 18


def test_demo_accounts_sign_in_with_the_printed_passwords(engine: Engine, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    accounts = _load(engine, demo_seed, interchange.read_json)
    assert [a.role for a in accounts].count("pilot") == 6
    assert {a.role for a in accounts} == {"admin", "instructor", "pilot"}
    with make_session_factory(engine)() as s:
        for account in accounts:
            person = s.get(models.Person, account.person_id)
            assert person.email == account.email and person.name == account.name
            assert check_password_hash(person.password_hash, account.password)
            assert not check_password_hash(person.password_hash, account.password + "x")


def test_demo_links_logged_names_and_machines_to_school_records(engine: Engine, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _load(engine, demo_seed, interchange.read_json)
    with make_session_factory(engine)() as s:
        tobias = s.scalars(select(models.Person).where(models.Person.name == "Tobias Lindqvist")).one()
        rows = {r.external_id: r for r in repository.current_entries(s, tobias.id)}
        assert rows["tobias-1"].safety_pilot_id is not None
        assert s.get(models.Person, rows["tobias-1"].safety_pilot_id).name == "Mara Oyelaran"
        assert s.get(models.Aircraft, rows["tobias-1"].aircraft_id).registration == "N417JR"
        assert s.get(models.TrainingDevice, rows["tobias-2"].device_id).identifier == "JR-ATD1"
        assert s.get(models.Person, rows["tobias-3"].instructor_id).name == "Hollis Varga"


def test_demo_scenario_has_the_cases_the_other_features_rely_on(engine: Engine, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    _load(engine, demo_seed, interchange.read_json)
    as_of = date(2026, 12, 1)
    with make_session_factory(engine)() as s:
        people = {p.name: p for p in s.scalars(select(models.Person))}
        # One pilot whose medical has run out and has no BasicMed: a safety pilot who may not act.
        lapsed = [
            p.name for p in people.values()
            if p.is_pilot and not any(d and d >= as_of for d in (p.medical_expires, p.basicmed_expires))
        ]
        assert lapsed == ["Dev Halloran"]
        assert people["Priya Castellano"].basicmed_expires is not None
        assert people["Rafael Okonkwo-Berg"].rule_sets == ["faa-part61", "easa-fcl"]
        assert "cfii" in people["Hollis Varga"].instructor_ratings and people["Hollis Varga"].is_instructor
        assert people["Wren Tamaki"].is_admin and not people["Wren Tamaki"].is_pilot
        device = s.scalars(select(models.TrainingDevice)).one()
        assert (device.kind, device.authorisation_expires) == ("atd", date(2027, 6, 30))
        qjrr = s.scalars(select(models.Airfield).where(models.Airfield.ident == "QJRR")).one()
        assert (qjrr.latitude, qjrr.longitude, qjrr.elevation_ft, qjrr.timezone) == (40.41, -104.58, 4720, "America/Denver")
        windows = list(s.scalars(select(models.AvailabilityWindow)))
        assert all(w.starts_at.year == 2026 and w.starts_at.month == 12 for w in windows)
        assert {bool(w.person_id) for w in windows} == {True, False}
        assert s.scalar(select(func.count()).where(models.AvailabilityWindow.aircraft_id.is_not(None))) > 0


def test_demo_window_times_are_local_to_denver(engine: Engine, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    from zoneinfo import ZoneInfo

    _load(engine, demo_seed, interchange.read_json)
    with make_session_factory(engine)() as s:
        hollis = s.scalars(select(models.Person).where(models.Person.name == "Hollis Varga")).one()
        first = s.scalars(
            select(models.AvailabilityWindow)
            .where(models.AvailabilityWindow.person_id == hollis.id)
            .order_by(models.AvailabilityWindow.starts_at)
        ).first()
    # 1 Dec 2026 is a Tuesday; 08:00 MST (UTC-7, no daylight saving in December) is 15:00 UTC.
    local = first.starts_at.astimezone(ZoneInfo("America/Denver"))
    assert (local.date(), local.hour, first.starts_at.hour) == (date(2026, 12, 1), 8, 15)


def test_a_malformed_school_file_names_the_key(engine: Engine, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    doc = json.loads((demo_seed / "school.json").read_text(encoding="utf-8"))
    doc["aircraft"][1]["colour"] = "blue"
    (demo_seed / "school.json").write_text(json.dumps(doc), encoding="utf-8")
    before = _dump(engine)
    with make_session_factory(engine)() as s:
        with pytest.raises(services.SeedError, match=r"aircraft\[1\]: unknown key 'colour'"):
            services.load_demo(s, demo_seed, date(2026, 12, 1), reader=interchange.read_json)
        s.rollback()
    assert _dump(engine) == before


def test_a_missing_logbook_file_is_named(engine: Engine, demo_seed: Path, interchange) -> None:  # type: ignore[no-untyped-def]
    (demo_seed / "logbooks" / "signe.json").unlink()
    with make_session_factory(engine)() as s:
        with pytest.raises(services.SeedError, match=r"signe\.json: not found \(logbook of Signe Mbeki\)"):
            services.load_demo(s, demo_seed, date(2026, 12, 1), reader=interchange.read_json)
