"""`planner backup` / `planner restore`: a whole school in one document, round trip byte for byte, all or nothing."""

from __future__ import annotations

import json
from datetime import UTC, date, datetime
from pathlib import Path

import pytest
from sqlalchemy import func, select
from werkzeug.security import check_password_hash

from planner import backup, planning, services
from planner.cli import main
from planner.config import REPO_ROOT
from planner.db import migrate, models, repository
from planner.db.session import make_engine, make_session_factory
from planner.export import interchange

SCHOOL = "juniper-ridge"
STAMP = datetime(2026, 12, 1, tzinfo=UTC)
TABLES = (models.School, models.Airfield, models.Person, models.Aircraft, models.TrainingDevice, models.Entry,
          models.Approach, models.EntryCheck, models.AvailabilityWindow, models.PracticeSession)
PLAN_FROM, PLAN_TO = date(2026, 12, 1), date(2026, 12, 28)


def _session(url: str):  # type: ignore[no-untyped-def]
    engine = make_engine(url)
    return engine, make_session_factory(engine)()


def counts(url: str) -> dict[str, int]:
    engine, s = _session(url)
    with s:
        out = {t.__tablename__: s.scalar(select(func.count()).select_from(t)) for t in TABLES}
    engine.dispose()
    return out


@pytest.fixture
def school_url(tmp_path: Path) -> str:
    """The demo school (seed_demo/) with one entry deleted (kept for the record), Mara's personal minimums,
    and its practice proposals saved (one of them mutual): December's first accepted and last cancelled,
    January's left proposed."""
    demo_seed = REPO_ROOT / "seed_demo"
    url = f"sqlite:///{tmp_path / 'source.sqlite3'}"
    migrate.upgrade(url)
    engine, s = _session(url)
    with s:
        services.load_demo(s, demo_seed, STAMP.date())
        mara = repository.person_by_email(s, "mara.oyelaran@juniper-ridge.example")
        rows = repository.current_entries(s, mara.id)
        repository.delete_entry(s, rows[0], now=STAMP)
        services.update_minimums(s, mara.id, ceiling_ft=1200, visibility_sm="2.75", crosswind_kt=12)
        school = repository.school_by_slug(s, SCHOOL)
        proposal = planning.propose_sessions(s, school.id, PLAN_FROM, PLAN_TO, now=STAMP)
        saved = planning.save_proposals(s, proposal, now=STAMP)
        assert len(saved) >= 2 and any(r.is_mutual for r in saved), "the demo school gets a mutual and another session"
        assert saved[0].id != saved[-1].id
        planning.accept_session(s, saved[0].id, expected_version=1, now=STAMP)
        planning.cancel_session(s, saved[-1].id, expected_version=1, now=STAMP)
        january = planning.propose_sessions(s, school.id, date(2026, 12, 29), date(2027, 1, 31), now=STAMP)
        assert planning.save_proposals(s, january, now=STAMP), "and more into January (left proposed)"
        s.commit()
    engine.dispose()
    return url


def leg_seats(db, row: models.PracticeSession) -> list[tuple[str, str]]:  # type: ignore[no-untyped-def]
    """Who flies and who is safety pilot in each leg of the session's content, by name."""
    return [(db.get(models.Person, leg["pilot_flying_id"]).name, db.get(models.Person, leg["safety_pilot_id"]).name)
            for leg in row.content["legs"]]


def run(monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str], url: str, *argv: str) -> tuple[int, str, str]:
    monkeypatch.setenv("PLANNER_DATABASE_URL", url)
    status = main(list(argv))
    out, err = capsys.readouterr()
    return status, out, err


def test_backup_restore_backup_is_byte_identical_on_sqlite_and_postgres(
    school_url: str, tmp_path: Path, pg_migrated_url: str, monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    first = tmp_path / "first.json"
    assert run(monkeypatch, capsys, school_url, "backup", "--school", SCHOOL, "-o", str(first))[0] == 0
    text = first.read_text(encoding="utf-8")
    assert '"deleted_entries"' in text and '"availability": []' not in text and '"practice_sessions": []' not in text
    assert '"min_visibility_hundredths_sm": 275' in text and '"pilot_flying_id"' not in text  # refs, not database ids

    # SQLite -> PostgreSQL (empty) -> backup.
    status, out, err = run(monkeypatch, capsys, pg_migrated_url, "restore", str(first))
    assert status == 0, err
    from_pg = tmp_path / "from-pg.json"
    assert run(monkeypatch, capsys, pg_migrated_url, "backup", "--school", out.strip(), "-o", str(from_pg))[0] == 0
    assert from_pg.read_bytes() == first.read_bytes()

    # PostgreSQL's backup -> a fresh SQLite file -> backup.
    fresh = f"sqlite:///{tmp_path / 'fresh.sqlite3'}"
    migrate.upgrade(fresh)
    status, out, err = run(monkeypatch, capsys, fresh, "restore", str(from_pg))
    assert status == 0, err
    again = tmp_path / "again.json"
    assert run(monkeypatch, capsys, fresh, "backup", "--school", out.strip(), "-o", str(again))[0] == 0
    assert again.read_bytes() == first.read_bytes()

    # Identical bytes could hide a backup that leaves things out: compare the databases themselves.
    assert counts(fresh) == counts(school_url) == counts(pg_migrated_url)
    for url in (fresh, pg_migrated_url):
        engine, s = _session(url)
        src_engine, src = _session(school_url)
        with s, src:
            for person in repository.school_people(src, src.scalars(select(models.School.id)).one()):
                twin = s.scalars(select(models.Person).where(models.Person.name == person.name)).one()
                assert (twin.email, twin.roles, twin.medical_expires, twin.rule_sets, twin.practice_targets,
                        twin.timezone, twin.created_at) == (person.email, person.roles, person.medical_expires,
                                                            person.rule_sets, person.practice_targets,
                                                            person.timezone, person.created_at)
                assert twin.password_hash is None, "password hashes are left out by default"
                assert (twin.min_ceiling_ft, twin.min_visibility_hundredths_sm, twin.min_crosswind_kt) == \
                    (person.min_ceiling_ft, person.min_visibility_hundredths_sm, person.min_crosswind_kt)
                if person.is_pilot:
                    assert interchange.write_json(services.export_logbook(s, twin.id)) == \
                        interchange.write_json(services.export_logbook(src, person.id))
                    deleted = lambda sess, pid: sorted(  # noqa: E731
                        r.external_id for r in repository.all_entries(sess, pid) if r.deleted_at is not None)
                    assert deleted(s, twin.id) == deleted(src, person.id)
            originals = src.scalars(select(models.PracticeSession).order_by(models.PracticeSession.uid)).all()
            copies = s.scalars(select(models.PracticeSession).order_by(models.PracticeSession.uid)).all()
            assert {r.status for r in originals} == {"proposed", "accepted", "cancelled"}
            assert len(copies) == len(originals)
            for twin, row in zip(copies, originals, strict=True):
                assert (twin.uid, twin.status, twin.sequence, twin.version, twin.starts_at, twin.ends_at, twin.timezone,
                        twin.is_mutual, twin.explanation, twin.created_at, twin.updated_at) == \
                    (row.uid, row.status, row.sequence, row.version, row.starts_at, row.ends_at, row.timezone,
                     row.is_mutual, row.explanation, row.created_at, row.updated_at)
                assert (twin.pilot_flying.name, twin.safety_pilot.name, twin.aircraft.registration, twin.airfield.ident) == \
                    (row.pilot_flying.name, row.safety_pilot.name, row.aircraft.registration, row.airfield.ident)
                # The legs point at the restored people: the calendar text (names per leg, content) is the same.
                assert planning.session_event(twin) == planning.session_event(row)
                assert leg_seats(s, twin) == leg_seats(src, row)
        engine.dispose()
        src_engine.dispose()


def test_backup_holds_no_password_hash_unless_asked(school_url: str) -> None:
    engine, s = _session(school_url)
    with s:
        school_id = repository.school_by_slug(s, SCHOOL).id
        plain = json.loads(backup.backup_school(s, school_id))
        with_hashes = json.loads(backup.backup_school(s, school_id, include_password_hashes=True))
    engine.dispose()
    assert all("password_hash" not in p for p in plain["people"])
    assert "pbkdf2" not in json.dumps(plain) and "scrypt" not in json.dumps(plain)
    mara = next(p for p in with_hashes["people"] if p["email"] == "mara.oyelaran@juniper-ridge.example")
    assert check_password_hash(mara["password_hash"], "juniper-pilot-mara")


def test_restore_with_hashes_lets_people_sign_in_with_their_old_password(school_url: str, tmp_path: Path) -> None:
    engine, s = _session(school_url)
    with s:
        text = backup.backup_school(s, repository.school_by_slug(s, SCHOOL).id, include_password_hashes=True)
    engine.dispose()
    target = f"sqlite:///{tmp_path / 'target.sqlite3'}"
    migrate.upgrade(target)
    engine, s = _session(target)
    with s:
        backup.restore_school(s, text, now=STAMP)
        s.commit()
        mara = repository.person_by_email(s, "mara.oyelaran@juniper-ridge.example")
        assert check_password_hash(mara.password_hash, "juniper-pilot-mara")
    engine.dispose()


def _backup_text(url: str) -> str:
    engine, s = _session(url)
    with s:
        text = backup.backup_school(s, repository.school_by_slug(s, SCHOOL).id)
    engine.dispose()
    return text


def _break_last_logbook(doc: dict) -> str:
    last = [p for p in doc["people"] if p.get("logbook")][-1]
    last["logbook"]["entries"][-1]["landings"] = -1
    return "people[{}].logbook".format(doc["people"].index(last))


def _break_last_window(doc: dict) -> str:
    doc["availability"][-1]["ends_at"] = doc["availability"][-1]["starts_at"]
    return f"availability[{len(doc['availability']) - 1}].ends_at"


def _unknown_key(doc: dict) -> str:
    doc["devices"][0]["colour"] = "green"
    return "devices[0].colour"


def _clashing_session(doc: dict) -> str:
    sessions = doc["practice_sessions"]
    held = next(x for x in sessions if x["status"] in ("proposed", "accepted"))
    sessions.append({**held, "uid": "copy@planner", "status": "proposed"})  # the same aircraft and people, same time
    return (f"practice_sessions[{len(sessions) - 1}]: aircraft {held['aircraft']} is also held by "
            f"practice_sessions[{sessions.index(held)}] at that time")


def _unknown_session_status(doc: dict) -> str:
    doc["practice_sessions"][0]["status"] = "pencilled"
    return "practice_sessions[0].status: must be one of proposed, accepted, cancelled, flown"


def _unknown_person_in_session(doc: dict) -> str:
    doc["practice_sessions"][0]["safety_pilot"] = "person-99"
    return "practice_sessions[0].safety_pilot: 'person-99' is not a person ref"


def _swapped_mutual_legs(doc: dict) -> str:
    i, mutual = next((i, x) for i, x in enumerate(doc["practice_sessions"]) if x["is_mutual"])
    mutual["content"]["legs"].reverse()
    return f"practice_sessions[{i}].content.legs[0]: the seats must be the session's own"


def _leg_item_without_minutes(doc: dict) -> str:
    del doc["practice_sessions"][-1]["content"]["legs"][0]["items"][0]["minutes"]
    return f"practice_sessions[{len(doc['practice_sessions']) - 1}].content.legs[0].items[0].minutes: must be a whole number"


def _minimums_out_of_range(doc: dict) -> str:
    doc["people"][-1]["min_crosswind_kt"] = 51
    return f"people[{len(doc['people']) - 1}].min_crosswind_kt: must be a whole number from 0 to 50"


def _night_practice_not_a_boolean(doc: dict) -> str:
    doc["people"][-1]["night_practice"] = "yes"
    return f"people[{len(doc['people']) - 1}].night_practice: must be true or false"


@pytest.mark.parametrize("damage", [_break_last_logbook, _break_last_window, _unknown_key, _clashing_session,
                                    _unknown_session_status, _unknown_person_in_session, _swapped_mutual_legs,
                                    _leg_item_without_minutes, _minimums_out_of_range, _night_practice_not_a_boolean])
def test_a_bad_document_restores_nothing_and_names_the_place(school_url: str, tmp_path: Path, damage) -> None:  # type: ignore[no-untyped-def]
    doc = json.loads(_backup_text(school_url))
    place = damage(doc)
    target = f"sqlite:///{tmp_path / 'target.sqlite3'}"
    migrate.upgrade(target)
    before = counts(target)
    engine, s = _session(target)
    with s:
        with pytest.raises(backup.BackupError) as caught:
            backup.restore_school(s, json.dumps(doc), now=STAMP)
        s.rollback()
    engine.dispose()
    assert str(caught.value).startswith(place), str(caught.value)
    assert counts(target) == before


def test_a_version_1_document_without_sessions_or_minimums_still_restores(school_url: str, tmp_path: Path) -> None:
    doc = json.loads(_backup_text(school_url))
    assert doc["format_version"] == 2
    minimum_keys = ("min_ceiling_ft", "min_visibility_hundredths_sm", "min_crosswind_kt")
    old = {**doc, "format_version": 1, "people": [{k: v for k, v in p.items() if k not in minimum_keys}
                                                   for p in doc["people"]]}
    del old["practice_sessions"]
    target = f"sqlite:///{tmp_path / 'target.sqlite3'}"
    migrate.upgrade(target)
    engine, s = _session(target)
    with s:
        with pytest.raises(backup.BackupError, match=r"^top level\.practice_sessions: unknown key"):
            backup.restore_school(s, json.dumps({**old, "practice_sessions": []}), now=STAMP)
        s.rollback()
        school_id = backup.restore_school(s, json.dumps(old), now=STAMP)
        s.commit()
        again = json.loads(backup.backup_school(s, school_id))
    engine.dispose()
    # Everything version 1 held comes back; what it could not hold is empty.
    assert again["practice_sessions"] == [] and counts(target)["practice_sessions"] == 0
    assert all(p[k] is None for p in again["people"] for k in minimum_keys)
    assert [{k: v for k, v in p.items() if k not in minimum_keys} for p in again["people"]] == old["people"]
    assert {k: v for k, v in again.items() if k not in ("format_version", "people", "practice_sessions")} == \
        {k: v for k, v in old.items() if k not in ("format_version", "people")}


def test_restore_into_a_database_that_has_the_school_is_refused_and_changes_nothing(
    school_url: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "school.json"
    path.write_text(_backup_text(school_url), encoding="utf-8")
    before = counts(school_url)
    status, out, err = run(monkeypatch, capsys, school_url, "restore", str(path))
    assert status == 2 and out == ""
    assert "school.slug" in err and "nothing was restored" in err
    assert counts(school_url) == before


def test_restore_refuses_an_email_already_taken_by_another_school(school_url: str, tmp_path: Path) -> None:
    doc = json.loads(_backup_text(school_url))
    doc["school"]["slug"] = "juniper-ridge-copy"
    for section, key in (("aircraft", "registration"), ("devices", "identifier")):
        for item in doc[section]:
            item[key] = item[key] + "X"
    before = counts(school_url)
    engine, s = _session(school_url)
    with s:
        with pytest.raises(backup.BackupError, match=r"^people\[0\]\.email: an account with"):
            backup.restore_school(s, json.dumps(doc), now=STAMP)
        s.rollback()
    engine.dispose()
    assert counts(school_url) == before


def test_backup_of_an_unknown_school_fails_with_a_message(
    school_url: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    status, _out, err = run(monkeypatch, capsys, school_url, "backup", "--school", "999", "-o", str(tmp_path / "x.json"))
    assert status == 1 and "no school with id 999" in err
    assert not (tmp_path / "x.json").exists()


def test_the_night_practice_setting_survives_backup_and_restore(school_url: str, tmp_path: Path) -> None:
    engine, s = _session(school_url)
    with s:
        mara = repository.person_by_email(s, "mara.oyelaran@juniper-ridge.example")
        mara.night_practice = True
        s.commit()
    engine.dispose()
    doc = json.loads(_backup_text(school_url))
    assert {p["name"]: p["night_practice"] for p in doc["people"]}["Mara Oyelaran"] is True
    assert sum(p["night_practice"] for p in doc["people"]) == 1  # everyone else: the default, daylight only
    without = {**doc, "people": [{k: v for k, v in p.items() if k != "night_practice"} for p in doc["people"]]}
    for text, expected in ((json.dumps(doc), True), (json.dumps(without), False)):  # absent reads as false
        target = f"sqlite:///{tmp_path / f'target-{expected}.sqlite3'}"
        migrate.upgrade(target)
        engine, s = _session(target)
        with s:
            backup.restore_school(s, text, now=STAMP)
            s.commit()
            assert repository.person_by_email(s, "mara.oyelaran@juniper-ridge.example").night_practice is expected
        engine.dispose()
