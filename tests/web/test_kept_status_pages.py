"""The pages keep the stored statuses current: saves through the forms update them, reads keep what was stale,
and the school overview costs the same number of queries for 6 pilots as for 50.

Oracle: ``currency.evaluate`` run fresh on the logbook as stored, for the pinned day (PLANNER_TODAY).
"""

from __future__ import annotations

import shutil
from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import event, text

from planner import services, status
from planner.core import currency
from planner.core.logbook import Entry
from planner.db import models, repository
from planner.db import status as kept_rows
from tests.conftest import build_demo_seed, reader_module
from tests.web.dash_fixtures import build_database, make_app, sign_in
from tests.web.test_logbook import (  # noqa: F401
    act_as,
    app,
    client,
    form_data,
    person_id,
    post_form,
    web_database,
)

AS_OF = date(2026, 12, 1)  # PLANNER_TODAY in these apps


def assert_kept_exact(app: Flask, pilot_id: int, as_of: date = AS_OF) -> models.KeptStatus:
    """The pilot's kept row is for the latest data, for ``as_of``, and equals a fresh evaluation."""
    with app.extensions["planner.sessions"]() as session:
        person = session.get(models.Person, pilot_id)
        kept = kept_rows.kept_row(session, pilot_id)
        assert kept is not None and kept.as_of == as_of
        assert kept.revision == person.status_revision
        fresh = currency.evaluate(services.load_logbook(session, pilot_id), services.rule_sets_for(person), as_of)
        assert status.report_from_json(kept.report, as_of) == fresh
        return kept


def test_saving_editing_deleting_and_restoring_through_the_forms_keeps_the_status_exact(
    client: FlaskClient, app: Flask
) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    before = assert_kept_exact(app, pid).report
    assert post_form(client, f"/pilots/{pid}/logbook/new", form_data()).status_code == 302
    added = assert_kept_exact(app, pid).report
    assert added != before  # two more approaches, a hold and tracking on 2026-11-28
    show = f"/pilots/{pid}/logbook/mara-1"
    assert post_form(client, f"{show}/edit", form_data(version="1", date="2026-11-20"), page_url=f"{show}/edit").status_code == 302
    assert_kept_exact(app, pid)
    assert post_form(client, f"{show}/delete", {"version": "2"}, page_url=show).status_code == 302
    assert_kept_exact(app, pid)
    assert post_form(client, f"{show}/restore", {"version": "3"}, page_url=show).status_code == 302
    assert_kept_exact(app, pid)


def test_a_refused_save_leaves_the_status_untouched(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    before = assert_kept_exact(app, pid)
    response = post_form(client, f"/pilots/{pid}/logbook/new", form_data(landings="1", night_full_stop_landings="3"))
    assert response.status_code == 422  # refused with a message at the field
    after = assert_kept_exact(app, pid)
    assert (after.revision, after.report) == (before.revision, before.report)


def test_opening_the_dashboard_keeps_a_missing_status(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    with app.extensions["planner.engine"].begin() as conn:
        conn.execute(text("DELETE FROM kept_statuses WHERE person_id = :p"), {"p": pid})
    assert client.get(f"/pilots/{pid}").status_code == 200
    assert_kept_exact(app, pid)


def _logbook_reads(monkeypatch: pytest.MonkeyPatch) -> list[int]:
    """Record the pilot id of every read of a pilot's whole current logbook."""
    reads: list[int] = []
    real = repository.current_core_entries

    def counted(session: Any, pilot_id: int) -> tuple[Entry, ...]:
        reads.append(pilot_id)
        return real(session, pilot_id)

    monkeypatch.setattr(repository, "current_core_entries", counted)
    return reads


def test_the_dashboard_reads_the_logbook_once_for_the_status_timeline_and_minimums_card(
    client: FlaskClient, app: Flask, monkeypatch: pytest.MonkeyPatch
) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    assert_kept_exact(app, pid)
    reads = _logbook_reads(monkeypatch)
    page = client.get("/").get_data(as_text=True)
    assert 'id="advised-minimums"' in page and "<svg" in page  # the demo pilot has a baseline: the card is there
    assert reads == [pid]
    with app.extensions["planner.engine"].begin() as conn:  # stale now: re-evaluated from the same read
        conn.execute(text("DELETE FROM kept_statuses WHERE person_id = :p"), {"p": pid})
    reads.clear()
    assert client.get("/").status_code == 200
    assert reads == [pid]
    assert_kept_exact(app, pid)


def test_a_save_through_the_entry_form_reads_the_logbook_once_to_keep_the_status(
    client: FlaskClient, app: Flask, monkeypatch: pytest.MonkeyPatch
) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    reads = _logbook_reads(monkeypatch)
    assert post_form(client, f"/pilots/{pid}/logbook/new", form_data()).status_code == 302  # a GET, then the POST
    assert reads == [pid]  # the re-evaluation before the commit, and nothing else
    assert_kept_exact(app, pid)


def _more_pilots(count: int):  # type: ignore[no-untyped-def]
    """``extra`` for build_database: ``count`` more pilots of the demo school, each with a few entries."""

    def add(session: Any) -> None:
        school = repository.school_by_slug(session, "juniper-ridge")
        stamp = datetime(2026, 11, 30, tzinfo=UTC)
        for i in range(count):
            person = models.Person(
                school_id=school.id, name=f"Extra Pilot {i:02d}", is_pilot=True, is_instructor=False, is_admin=False,
                certificate_level="private", category_classes=["airplane/single-engine-land"],
                instrument_categories=["airplane"], instructor_ratings=[], rule_sets=["faa-part61", "practice-targets"],
                practice_targets={}, timezone="America/Denver", created_at=stamp,
            )
            session.add(person)
            session.flush()
            repository.add_entries(session, person, [
                Entry(id=f"x{i}-{k}", date=date(2026, 11, 1 + k), landings=1 + k, total_hours=1.0) for k in range(3)
            ], now=stamp)

    return add


@pytest.fixture(scope="module")
def schools(tmp_path_factory: pytest.TempPathFactory) -> dict[int, Path]:
    """The demo school with its 6 pilots, and the same school with 44 more (50 pilots)."""
    out = {}
    for pilots, extra in ((6, None), (50, _more_pilots(44))):
        base = tmp_path_factory.mktemp(f"overview-{pilots}")
        out[pilots] = build_database(base, build_demo_seed(base), reader=reader_module().read_json, extra=extra)
    return out


def _statements(app: Flask, client: FlaskClient, url: str) -> tuple[int, bytes]:
    seen: list[str] = []

    def count(_conn: Any, _cursor: Any, statement: str, *_rest: Any) -> None:
        seen.append(statement)

    engine = app.extensions["planner.engine"]
    event.listen(engine, "before_cursor_execute", count)
    try:
        response = client.get(url)
    finally:
        event.remove(engine, "before_cursor_execute", count)
    assert response.status_code == 200
    return len(seen), response.data


@pytest.mark.parametrize("url", ["/school", "/school/overview.csv", "/school?show=grace"])
def test_the_overview_sends_as_many_queries_for_50_pilots_as_for_6(
    schools: dict[int, Path], tmp_path: Path, url: str
) -> None:
    counts = {}
    for pilots, database in schools.items():
        path = tmp_path / f"{pilots}.sqlite3"
        shutil.copy(database, path)
        app = make_app(path, tmp_path)
        try:
            client = app.test_client()
            sign_in(client, "hollis")
            warm, _ = _statements(app, client, url)  # the added pilots have no kept status yet: this read keeps them
            counts[pilots], body = _statements(app, client, url)
            assert counts[pilots] < warm or pilots == 6
            if url == "/school":
                assert body.count(b'<th scope="row">') == pilots
        finally:
            app.extensions["planner.engine"].dispose()
    assert counts[6] == counts[50]
    assert counts[50] <= 5  # the signed-in person, the school and its airfield, the one overview query
