"""`planner backup` / `planner restore`: a whole school in one document, round trip byte for byte, all or nothing."""

from __future__ import annotations

import json
from datetime import UTC, datetime
from pathlib import Path

import pytest
from sqlalchemy import func, select
from werkzeug.security import check_password_hash

from planner import backup, services
from planner.cli import main
from planner.db import migrate, models, repository
from planner.db.session import make_engine, make_session_factory
from planner.export import interchange

SCHOOL = "juniper-ridge"
STAMP = datetime(2026, 12, 1, tzinfo=UTC)
TABLES = (models.School, models.Airfield, models.Person, models.Aircraft, models.TrainingDevice, models.Entry,
          models.Approach, models.EntryCheck, models.AvailabilityWindow)


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
def school_url(demo_seed: Path, tmp_path: Path) -> str:
    """The demo school (small logbooks) with one entry edited and one deleted (kept for the record)."""
    url = f"sqlite:///{tmp_path / 'source.sqlite3'}"
    migrate.upgrade(url)
    engine, s = _session(url)
    with s:
        services.load_demo(s, demo_seed, STAMP.date())
        mara = repository.person_by_email(s, "mara.oyelaran@juniper-ridge.example")
        rows = repository.current_entries(s, mara.id)
        repository.delete_entry(s, rows[0], now=STAMP)
        s.commit()
    engine.dispose()
    return url


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
    assert '"deleted_entries"' in first.read_text(encoding="utf-8") and '"availability": []' not in first.read_text(encoding="utf-8")

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
                if person.is_pilot:
                    assert interchange.write_json(services.export_logbook(s, twin.id)) == \
                        interchange.write_json(services.export_logbook(src, person.id))
                    deleted = lambda sess, pid: sorted(  # noqa: E731
                        r.external_id for r in repository.all_entries(sess, pid) if r.deleted_at is not None)
                    assert deleted(s, twin.id) == deleted(src, person.id)
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


@pytest.mark.parametrize("damage", [_break_last_logbook, _break_last_window, _unknown_key])
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
    assert str(caught.value).startswith(place)
    assert counts(target) == before


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
