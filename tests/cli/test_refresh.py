"""`planner refresh`: re-evaluates exactly the stale kept statuses (new day, changed data, none yet) and reports counts."""

from __future__ import annotations

from datetime import date, timedelta
from pathlib import Path

import pytest
from sqlalchemy import text

from planner import CAUTION, services, status
from planner.cli import main
from planner.core import currency
from planner.db import migrate, models, repository
from planner.db import status as kept_rows
from planner.db.session import make_engine, make_session_factory

AS_OF = date(2026, 12, 1)
LATER = date(2027, 1, 15)


@pytest.fixture
def url(demo_seed: Path, tmp_path: Path, interchange, monkeypatch: pytest.MonkeyPatch) -> str:  # type: ignore[no-untyped-def]
    """The demo school (small logbooks), statuses kept as of AS_OF; the CLI pointed at it."""
    url = f"sqlite:///{tmp_path / 'refresh.sqlite3'}"
    migrate.upgrade(url)
    engine = make_engine(url)
    with make_session_factory(engine)() as session:
        services.load_demo(session, demo_seed, AS_OF, reader=interchange.read_json)
        session.commit()
    engine.dispose()
    monkeypatch.setenv("PLANNER_DATABASE_URL", url)
    return url


def run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def kept(url: str) -> dict[str, tuple[date, bool]]:
    """Each pilot's kept day, and whether the row equals a fresh evaluation for that day."""
    engine = make_engine(url)
    try:
        with make_session_factory(engine)() as session:
            out = {}
            for person in repository.school_people(session, repository.school_by_slug(session, "juniper-ridge").id,
                                                   pilots_only=True):
                row = kept_rows.kept_row(session, person.id)
                if row is None:
                    continue
                fresh = currency.evaluate(services.load_logbook(session, person.id), services.rule_sets_for(person), row.as_of)
                exact = row.revision == person.status_revision and status.report_from_json(row.report, row.as_of) == fresh
                out[person.name] = (row.as_of, exact)
            return out
    finally:
        engine.dispose()


def sql(url: str, statement: str) -> None:
    engine = make_engine(url)
    with engine.begin() as conn:
        conn.execute(text(statement))
    engine.dispose()


def test_refresh_for_a_later_day_re_evaluates_every_row_then_none(url: str, capsys: pytest.CaptureFixture[str]) -> None:
    assert {day for day, _ in kept(url).values()} == {AS_OF}
    code, out, err = run(capsys, "refresh", "--as-of", LATER.isoformat())
    assert code == 0
    assert out.splitlines() == [
        "checked 6 pilots as of 2027-01-15: 6 re-evaluated (0 had no stored status, 6 were for an earlier day, "
        "0 changed since, 0 under other rule files), 0 already current",
        CAUTION,
    ]
    assert err.splitlines() == ["checked 6/6 pilots, re-evaluated 6"]
    assert kept(url) == {name: (LATER, True) for name in kept(url)} and len(kept(url)) == 6

    code, out, _err = run(capsys, "refresh", "--as-of", LATER.isoformat())
    assert code == 0 and "0 re-evaluated" in out and "6 already current" in out


def test_refresh_counts_missing_and_changed_rows_and_leaves_later_ones(url: str, capsys: pytest.CaptureFixture[str]) -> None:
    run(capsys, "refresh", "--as-of", LATER.isoformat())
    sql(url, "DELETE FROM kept_statuses WHERE person_id = (SELECT id FROM people WHERE name = 'Dev Halloran')")
    # A change whose status update did not land (as if written by an older version of the app).
    sql(url, "UPDATE people SET status_revision = status_revision + 1 WHERE name = 'Signe Mbeki'")
    sql(url, "UPDATE kept_statuses SET rules_digest = 'older-rules' "
             "WHERE person_id = (SELECT id FROM people WHERE name = 'Mara Oyelaran')")
    code, out, _err = run(capsys, "refresh", "--as-of", AS_OF.isoformat())  # an earlier day than the rows
    assert code == 0
    assert out.splitlines()[0] == (
        "checked 6 pilots as of 2026-12-01: 3 re-evaluated (1 had no stored status, 0 were for an earlier day, "
        "1 changed since, 1 under other rule files), 3 already current"
    )
    rows = kept(url)
    assert all(exact for _day, exact in rows.values())
    assert {name for name, (day, _) in rows.items() if day == AS_OF} == {"Dev Halloran", "Signe Mbeki", "Mara Oyelaran"}
    assert {name for name, (day, _) in rows.items() if day == LATER} == {"Tobias Lindqvist", "Priya Castellano", "Rafael Okonkwo-Berg"}


def test_refresh_of_one_school_by_slug_or_id(url: str, capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(capsys, "refresh", "--school", "juniper-ridge", "--as-of", LATER.isoformat())
    assert code == 0 and out.startswith("checked 6 pilots as of 2027-01-15: 6 re-evaluated")
    engine = make_engine(url)
    with make_session_factory(engine)() as session:
        school_id = repository.school_by_slug(session, "juniper-ridge").id
        session.add(models.School(slug="empty-field", name="An empty school"))
        session.commit()
        empty_id = repository.school_by_slug(session, "empty-field").id
    engine.dispose()
    code, out, _ = run(capsys, "refresh", "--school", str(school_id), "--as-of", LATER.isoformat())
    assert code == 0 and out.startswith("checked 6 pilots as of 2027-01-15: 0 re-evaluated")
    code, out, _ = run(capsys, "refresh", "--school", str(empty_id))
    assert code == 0 and out.startswith("checked 0 pilots: 0 re-evaluated")


def test_refresh_of_an_unknown_school_fails_cleanly(url: str, capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = run(capsys, "refresh", "--school", "no-such-school")
    assert code == 1 and out == ""
    assert err.strip() == "planner refresh: no school 'no-such-school' (see `planner schools`)"


def test_a_bad_as_of_is_refused_naming_the_option(url: str, capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as exit_:
        main(["refresh", "--as-of", "2027-02-30"])
    assert exit_.value.code == 2
    assert "--as-of: expected a date YYYY-MM-DD, got '2027-02-30'" in capsys.readouterr().err


def test_without_as_of_each_pilot_is_evaluated_for_today_at_the_schools_home_airfield(
    url: str, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    asked: list[str | None] = []

    def pinned(zone: str | None) -> date:  # stands in for the clock
        asked.append(zone)
        return LATER

    monkeypatch.setattr("planner.cli.status.today_in", pinned)
    code, out, _ = run(capsys, "refresh")
    assert code == 0 and out.startswith("checked 6 pilots: 6 re-evaluated")
    assert asked == ["America/Denver"] * 6  # QJRR's zone (seed_demo/school.json)
    assert {day for day, _ in kept(url).values()} == {LATER}


def test_refresh_reports_progress_per_batch_and_commits_each(url: str) -> None:
    engine = make_engine(url)
    heard: list[str] = []
    checkpoints: list[int] = []
    try:
        with make_session_factory(engine)() as session:
            report = status.refresh(session, LATER, batch=4, progress=heard.append,
                                    checkpoint=lambda: checkpoints.append(len(heard)))
            session.commit()
    finally:
        engine.dispose()
    assert heard == ["checked 4/6 pilots, re-evaluated 4", "checked 6/6 pilots, re-evaluated 6"]
    assert checkpoints == [0, 1]  # a commit before each progress line
    assert (report.checked, report.evaluated, report.earlier, report.current) == (6, 6, 6, 0)


def test_refresh_explains_itself(capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as exit_:
        main(["refresh", "--help"])
    out = capsys.readouterr().out
    assert exit_.value.code == 0 and out.startswith("usage: planner refresh")
    assert "--school" in out and "--as-of" in out and "cron" in out
