"""The `planner` data commands, run in-process against a temporary SQLite file."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from sqlalchemy import text

from planner import CAUTION
from planner.cli import main
from planner.db.base import Base
from planner.db.session import make_engine

from tests.conftest import small_logbook


@pytest.fixture
def db(sqlite_url: str, monkeypatch: pytest.MonkeyPatch) -> str:
    monkeypatch.setenv("PLANNER_DATABASE_URL", sqlite_url)
    return sqlite_url


def _counts(url: str) -> dict[str, int]:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return {t: conn.execute(text(f"SELECT count(*) FROM {t}")).scalar_one() for t in sorted(Base.metadata.tables)}
    finally:
        engine.dispose()


def _run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    status = main(list(argv))
    out, err = capsys.readouterr()
    return status, out, err


@pytest.fixture
def demo_db(db: str, capsys: pytest.CaptureFixture[str]) -> str:
    """A database holding the real demo scenario from seed_demo/."""
    assert _run(capsys, "init")[0] == 0
    assert _run(capsys, "demo")[0] == 0
    return db


def test_init_creates_the_database_and_can_run_again(db: str, capsys: pytest.CaptureFixture[str]) -> None:
    status, _, err = _run(capsys, "init")
    assert status == 0 and "database ready at revision" in err
    assert _run(capsys, "init")[0] == 0
    assert _counts(db)["people"] == 0


def test_commands_before_init_say_to_run_init(db: str, capsys: pytest.CaptureFixture[str]) -> None:
    status, out, err = _run(capsys, "pilots", "--json")
    assert status == 1 and out == ""
    assert "run `planner init` first" in err


def test_demo_twice_adds_nothing_the_second_time(
    db: str, demo_seed: Path, interchange, capsys: pytest.CaptureFixture[str]
) -> None:  # type: ignore[no-untyped-def]
    _run(capsys, "init")
    status, out, err = _run(capsys, "demo", "--seed-dir", str(demo_seed))
    assert status == 0
    assert "hollis.varga@juniper-ridge.example" in out and CAUTION in out
    assert "logbook 6/6" in err  # progress goes to stderr
    first = _counts(db)
    status, _, err = _run(capsys, "demo", "--seed-dir", str(demo_seed))
    assert status == 0 and "0 entries added" in err
    assert _counts(db) == first


def test_demo_json_lists_the_accounts(db: str, demo_seed: Path, interchange, capsys: pytest.CaptureFixture[str]) -> None:  # type: ignore[no-untyped-def]
    _run(capsys, "init")
    status, out, _ = _run(capsys, "demo", "--json", "--seed-dir", str(demo_seed))
    assert status == 0
    accounts = json.loads(out)
    assert len(accounts) == 8
    assert all(set(a) == {"email", "password", "role", "name"} for a in accounts)
    assert {a["role"] for a in accounts} == {"admin", "instructor", "pilot"}
    assert {"email": "wren.tamaki@juniper-ridge.example", "password": "juniper-admin-wren", "role": "admin",
            "name": "Wren Tamaki"} in accounts


def test_pilots_json_lists_the_demo_pilots(demo_db: str, capsys: pytest.CaptureFixture[str]) -> None:
    status, out, _ = _run(capsys, "pilots", "--json")
    assert status == 0
    pilots = json.loads(out)
    assert [p["name"] for p in pilots] == [
        "Mara Oyelaran", "Tobias Lindqvist", "Priya Castellano", "Dev Halloran", "Signe Mbeki", "Rafael Okonkwo-Berg",
    ]
    assert all(set(p) == {"id", "name", "email", "school"} and p["school"] == "juniper-ridge" for p in pilots)
    assert all(isinstance(p["id"], int) and p["email"].endswith("@juniper-ridge.example") for p in pilots)


def test_pilots_without_json_prints_a_table(demo_db: str, capsys: pytest.CaptureFixture[str]) -> None:
    status, out, _ = _run(capsys, "pilots")
    lines = out.splitlines()
    assert status == 0 and lines[0].split() == ["ID", "NAME", "EMAIL", "SCHOOL"]
    assert len(lines) == 7 and "Rafael Okonkwo-Berg" in out


@pytest.mark.parametrize("fmt", ["json", "csv"])
def test_export_import_export_is_byte_identical(
    fmt: str, demo_db: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    pilots = json.loads(_run(capsys, "pilots", "--json")[1])
    assert len(pilots) == 6
    first = tmp_path / f"first.{fmt}"
    for pilot in pilots:
        assert _run(capsys, "export", "--pilot", str(pilot["id"]), "--format", fmt, "-o", str(first))[0] == 0
        fresh = f"sqlite:///{tmp_path / ('fresh-' + str(pilot['id']) + '.sqlite3')}"
        monkeypatch.setenv("PLANNER_DATABASE_URL", fresh)
        _run(capsys, "init")
        status, out, _ = _run(capsys, "import", str(first))
        assert status == 0
        new_id = int(out.strip())
        status, second, _ = _run(capsys, "export", "--pilot", str(new_id), "--format", fmt)
        assert status == 0
        assert second.encode("utf-8") == first.read_bytes()
        monkeypatch.setenv("PLANNER_DATABASE_URL", demo_db)


def _write(path: Path, doc: dict) -> Path:
    path.write_text(json.dumps(doc, indent=2), encoding="utf-8")
    return path


def test_import_of_a_malformed_file_names_entry_and_field_and_changes_nothing(
    demo_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    doc = small_logbook("Ona Test", "ona")
    doc["entries"][1]["date"] = "2026-13-45"
    before = _counts(demo_db)
    status, out, err = _run(capsys, "import", str(_write(tmp_path / "bad.json", doc)))
    assert status == 2 and out == ""
    assert "ona-2" in err and "date" in err
    assert _counts(demo_db) == before


def test_import_of_ids_already_present_is_refused_and_changes_nothing(
    demo_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    mara = json.loads(_run(capsys, "pilots", "--json")[1])[0]
    doc = small_logbook("Mara Oyelaran", "mara")
    doc["entries"].insert(0, {"id": "brand-new", "date": "2026-11-30", "holds": 1})
    doc["entries"][1]["id"] = "mara-2025-06-13"  # already in her demo logbook
    before = _counts(demo_db)
    status, _, err = _run(capsys, "import", str(_write(tmp_path / "again.json", doc)), "--pilot", str(mara["id"]))
    assert status == 2
    assert "'mara-2025-06-13'" in err and "already present" in err
    assert _counts(demo_db) == before


def test_import_into_an_unknown_pilot_fails_cleanly(demo_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    before = _counts(demo_db)
    status, _, err = _run(capsys, "import", str(_write(tmp_path / "x.json", small_logbook("X", "x"))), "--pilot", "999")
    assert status == 1 and "no pilot with id 999" in err
    assert _counts(demo_db) == before


def test_import_prints_the_new_pilot_id_and_progress(demo_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    status, out, err = _run(capsys, "import", str(_write(tmp_path / "ona.json", small_logbook("Ona Test", "ona"))))
    assert status == 0 and "read 3 entries" in err and "imported 3 entries" in err
    pilots = json.loads(_run(capsys, "pilots", "--json")[1])
    assert {"id": int(out), "name": "Ona Test", "email": None, "school": None} in pilots


def test_export_of_an_unknown_pilot_fails_cleanly(demo_db: str, capsys: pytest.CaptureFixture[str]) -> None:
    status, out, err = _run(capsys, "export", "--pilot", "999")
    assert status == 1 and out == "" and "no pilot with id 999" in err


@pytest.mark.parametrize("command", ["init", "demo", "serve", "pilots", "export", "import"])
def test_every_subcommand_explains_itself(command: str, capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as exit_:
        main([command, "--help"])
    out = capsys.readouterr().out
    assert exit_.value.code == 0
    assert out.startswith(f"usage: planner {command}")
    assert len(out.splitlines()) >= 4


def test_top_level_help_lists_the_data_commands(capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit):
        main(["--help"])
    out = capsys.readouterr().out
    for command in ("init", "demo", "serve", "pilots", "export", "import"):
        assert f"    {command}" in out
