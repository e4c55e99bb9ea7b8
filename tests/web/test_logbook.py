"""The logbook pages (Flask test client): list, entry form, show, edit, delete/restore, access by role.

"Today" is pinned with PLANNER_TODAY; no test reads the wall clock. The demo
school is loaded once per module; a second school (one instructor, one pilot)
is added to check that nobody sees another school's data.
"""

from __future__ import annotations

import html
import re
import shutil
from collections.abc import Iterator
from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import func, select
from werkzeug.security import generate_password_hash

from planner import services
from planner.db import models, repository
from planner.export import interchange
from tests.conftest import build_demo_seed, reader_module
from tests.web.dash_fixtures import build_database, csrf
from tests.web.dash_fixtures import make_app as make_dash_app

EMAILS = {
    "pilot": "mara.oyelaran@juniper-ridge.example",
    "other_pilot": "tobias.lindqvist@juniper-ridge.example",
    "instructor": "hollis.varga@juniper-ridge.example",
    "admin": "wren.tamaki@juniper-ridge.example",
    "other_instructor": "ines.farrow@cedar-flats.example",
    "other_school_pilot": "oskar.vale@cedar-flats.example",
}
PASSWORDS = {
    "pilot": "juniper-pilot-mara",
    "other_instructor": "cedar-cfii-ines",
    "other_school_pilot": "cedar-pilot-oskar",
}


# ------------------------------------------------------------------ fixtures (also used by test_admin.py)


def _add_second_school(session: Any) -> None:
    """An invented second school with one instructor and one pilot (with one entry)."""
    stamp = datetime(2026, 12, 1, tzinfo=UTC)
    school = models.School(slug="cedar-flats", name="Cedar Flats Aero Club")
    session.add(school)
    session.flush()
    common = dict(
        school_id=school.id, certificate_level="private", category_classes=["airplane/single-engine-land"],
        instrument_categories=["airplane"], instructor_ratings=[], rule_sets=["faa-part61"], practice_targets={},
        timezone="America/Denver", created_at=stamp,
    )
    session.add(models.Person(name="Ines Farrow", email=EMAILS["other_instructor"], is_pilot=False, is_instructor=True,
                              is_admin=False, password_hash=generate_password_hash(PASSWORDS["other_instructor"]), **common))
    oskar = models.Person(name="Oskar Vale", email=EMAILS["other_school_pilot"], is_pilot=True, is_instructor=False,
                          is_admin=False, password_hash=generate_password_hash(PASSWORDS["other_school_pilot"]), **common)
    session.add(oskar)
    session.flush()
    from planner.core.logbook import Entry

    repository.add_entries(session, oskar, [Entry(id="oskar-1", date=date(2026, 11, 2), landings=2, total_hours=1.1)], now=stamp)


@pytest.fixture(scope="module")
def web_database(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A SQLite file with the demo school (small test logbooks) and a second school, built once per module."""
    base = tmp_path_factory.mktemp("weblog-demo")
    return build_database(base, build_demo_seed(base), reader=reader_module().read_json, extra=_add_second_school)


def make_app(web_database: Path, tmp_path: Path, **overrides: Any) -> Flask:
    path = tmp_path / "web.sqlite3"
    shutil.copy(web_database, path)  # each test gets its own copy
    return make_dash_app(path, tmp_path, **overrides)


@pytest.fixture
def app(web_database: Path, tmp_path: Path) -> Iterator[Flask]:
    application = make_app(web_database, tmp_path)
    yield application
    application.extensions["planner.engine"].dispose()


@pytest.fixture
def client(app: Flask) -> FlaskClient:
    return app.test_client()


def person_id(app: Flask, role: str) -> int:
    with app.extensions["planner.sessions"]() as s:
        person = repository.person_by_email(s, EMAILS[role])
        assert person is not None
        return person.id


def act_as(client: FlaskClient, app: Flask, role: str) -> None:
    """Sign in without the password round trip (Flask-Login keeps the id in the session)."""
    if role == "anonymous":
        return
    pid = person_id(app, role)
    with client.session_transaction() as sess:
        sess["_user_id"] = str(pid)
        sess["_fresh"] = True


def db(app: Flask) -> Any:
    return app.extensions["planner.sessions"]()


def entry_count(app: Flask, pilot_id: int) -> int:
    with db(app) as s:
        return s.scalar(select(func.count()).select_from(models.Entry).where(models.Entry.pilot_id == pilot_id))


def form_data(**changes: Any) -> dict[str, Any]:
    """A complete, valid entry form with two approaches, as a browser would post it."""
    data = {
        "date": "2026-11-28",
        "device": "aircraft",
        "category": "airplane",
        "aircraft_class": "single-engine-land",
        "aircraft": "N417JR",
        "conditions": "simulated",
        "route": "QJRR-QPNV-QJRR",
        "start_time": "09:10",
        "end_time": "10:40",
        "total_hours": "1.5",
        "pic_hours": "1.5",
        "instrument_simulated_hours": "1.2",
        "landings": "2",
        "night_full_stop_landings": "0",
        "holds": "1",
        "course_tracking": "y",
        "approaches-0-type": "ILS",
        "approaches-0-airfield": "QJRR",
        "approaches-0-runway": "27",
        "approaches-0-to_minimums": "y",
        "approaches-1-type": "RNAV (GPS)",
        "approaches-1-airfield": "QPNV",
        "approaches-1-runway": "17",
        "approaches-1-conditions": "simulated",
        "safety_pilot": "Tobias Lindqvist",
        "remarks": "two approaches with a safety pilot",
        "save": "Save entry",
    }
    data.update(changes)
    return {k: v for k, v in data.items() if v is not None}


def post_form(client: FlaskClient, url: str, data: dict[str, Any], page_url: str | None = None):  # type: ignore[no-untyped-def]
    """GET the page for its CSRF token, then POST ``data`` with it."""
    token = csrf(client.get(page_url or url).get_data(as_text=True))
    return client.post(url, data={**data, "csrf_token": token})


def field_error(page: str, field_id: str) -> str:
    """The message shown at the field with ``field_id``."""
    match = re.search(rf'<p class="field-error" id="{re.escape(field_id)}-error"><strong>Problem:</strong> (.*?)</p>', page)
    assert match, f"no message at field {field_id}"
    return html.unescape(match.group(1))


# ------------------------------------------------------------------ list


def test_my_logbook_redirects_the_pilot_to_their_own_logbook(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    response = client.get("/logbook")
    assert response.status_code == 302
    assert response.headers["Location"] == f"/pilots/{person_id(app, 'pilot')}/logbook"


def test_the_list_shows_the_pilots_entries_newest_first(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    page = client.get(f"/pilots/{person_id(app, 'pilot')}/logbook").get_data(as_text=True)
    # The test seed gives Mara three entries: mara-1 (2026-06-03), mara-2 (2026-08-19), mara-3 (2026-11-07).
    dates = re.findall(r'/logbook/mara-\d">(\d{4}-\d\d-\d\d)</a>', page)
    assert dates == ["2026-11-07", "2026-08-19", "2026-06-03"]
    assert "3 entries." in page
    assert "Oskar" not in page and "tobias-1" not in page


@pytest.mark.parametrize(
    ("query", "expected"),
    [
        ("from=2026-08-01&to=2026-10-31", ["mara-2"]),
        ("device=atd", ["mara-2"]),
        ("q=night+pattern", ["mara-3"]),
        ("q=qpnv", ["mara-1"]),  # an approach airfield, any case
        ("approaches=1", ["mara-2", "mara-1"]),
        ("q=%25", []),  # a literal percent sign, not a wildcard
    ],
)
def test_the_list_filters_by_date_device_text_and_approaches(client: FlaskClient, app: Flask, query: str, expected: list[str]) -> None:
    act_as(client, app, "pilot")
    page = client.get(f"/pilots/{person_id(app, 'pilot')}/logbook?{query}").get_data(as_text=True)
    assert re.findall(r'/logbook/(mara-\d)"', page) == expected


def test_the_list_pages_through_many_entries(client: FlaskClient, app: Flask) -> None:
    pid = person_id(app, "pilot")
    from planner.core.logbook import Entry

    with db(app) as s:
        person = s.get(models.Person, pid)
        repository.add_entries(s, person, [Entry(id=f"bulk-{i:02d}", date=date(2025, 1, 1 + i)) for i in range(27)])
        s.commit()
    act_as(client, app, "pilot")
    first = client.get(f"/pilots/{pid}/logbook?q=bulk").get_data(as_text=True)
    second = client.get(f"/pilots/{pid}/logbook?q=bulk&page=2").get_data(as_text=True)
    on_first = re.findall(r"/logbook/(bulk-\d\d)\"", first)
    on_second = re.findall(r"/logbook/(bulk-\d\d)\"", second)
    assert len(on_first) == 25 and len(on_second) == 2
    assert set(on_first).isdisjoint(on_second)
    assert "Page 1 of 2" in first and "page=2" in first and "q=bulk" in first


@pytest.mark.parametrize("query", ["from=yesterday", "to=2026-02-30", "device=rocket", "page=abc", "page=-4",
                                   "page=99999999999999999999", "q=" + "x" * 5000, "approaches=maybe"])
def test_garbage_filters_never_break_the_list(client: FlaskClient, app: Flask, query: str) -> None:
    act_as(client, app, "pilot")
    assert client.get(f"/pilots/{person_id(app, 'pilot')}/logbook?{query}").status_code == 200


# ------------------------------------------------------------------ create


def test_a_new_entry_with_two_approaches_is_saved_listed_and_stored_with_two_approach_rows(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    response = post_form(client, f"/pilots/{pid}/logbook/new", form_data())
    assert response.status_code == 302
    assert response.headers["Location"] == f"/pilots/{pid}/logbook/2026-11-28"
    listing = client.get(f"/pilots/{pid}/logbook").get_data(as_text=True)
    assert "/logbook/2026-11-28" in listing
    with db(app) as s:
        row = repository.find_entry(s, pid, "2026-11-28")
        assert row is not None and row.version == 1
        assert [(a.position, a.type, a.airfield, a.runway, a.to_minimums, a.conditions) for a in row.approaches] == [
            (0, "ILS", "QJRR", "27", True, None),
            (1, "RNAV (GPS)", "QPNV", "17", False, "simulated"),
        ]
        assert (row.holds, row.landings, row.course_tracking, row.instrument_simulated_hundredths) == (1, 2, True, 120)
        # Linked to the school's aircraft and to the safety pilot's person row.
        assert row.aircraft_id is not None and row.safety_pilot_id == person_id(app, "other_pilot")
        # What was stored reads back through the interchange format unchanged.
        logbook = services.export_logbook(s, pid)
        again = interchange.read_json(interchange.write_json(logbook))
        assert [e for e in again.entries if e.id == "2026-11-28"] == [repository.entry_to_core(row)]


def test_a_second_entry_on_the_same_day_gets_its_own_ref(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    assert post_form(client, f"/pilots/{pid}/logbook/new", form_data()).status_code == 302
    response = post_form(client, f"/pilots/{pid}/logbook/new", form_data())
    assert response.headers["Location"] == f"/pilots/{pid}/logbook/2026-11-28-2"


def test_add_another_approach_redisplays_the_form_with_one_more_row_and_saves_nothing(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    before = entry_count(app, pid)
    data = form_data(save=None, add_approach="Add another approach")
    response = post_form(client, f"/pilots/{pid}/logbook/new", data)
    page = response.get_data(as_text=True)
    assert response.status_code == 200
    assert page.count('<fieldset class="approach"') == 3
    assert 'id="approaches-2-type"' in page
    assert 'value="RNAV (GPS)"' in page  # what was typed stays
    assert entry_count(app, pid) == before


def test_empty_approach_rows_are_left_out(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    data = form_data(**{"approaches-2-type": "", "approaches-2-airfield": "", "approaches-1-remove": "y"})
    assert post_form(client, f"/pilots/{pid}/logbook/new", data).status_code == 302
    with db(app) as s:
        assert [a.type for a in repository.find_entry(s, pid, "2026-11-28").approaches] == ["ILS"]


@pytest.mark.parametrize(
    ("changes", "field_id", "message_part"),
    [
        ({"holds": "three"}, "holds", "whole number"),
        ({"landings": "2", "night_full_stop_landings": "5"}, "night_full_stop_landings", "more than the 2 landings"),
        ({"total_hours": "1.555"}, "total_hours", "at most two decimals"),
        ({"total_hours": "1e400"}, "total_hours", "at most two decimals"),
        ({"pic_hours": "NaN"}, "pic_hours", "at most two decimals"),
        ({"landings": "99999999999999999999999"}, "landings", "0 to 99999"),
        ({"start_time": "25:00"}, "start_time", "HH:MM"),
        ({"date": "2026-02-30"}, "date", "date"),
        ({"date": ""}, "date", "date"),
        ({"aircraft_class": "Single Engine"}, "aircraft_class", "lowercase words"),
        ({"approaches-1-airfield": "QPNV|QJRR"}, "approaches-1-airfield", "must not contain"),
        ({"approaches-1-conditions": "foggy"}, "approaches-1-conditions", "Not a valid choice"),
        ({"partial_panel_approaches": "3"}, "partial_panel_approaches", "must not exceed the approaches logged (2)"),
        ({"unlogged_approaches": "4"}, "unlogged_approaches", "not both"),
        ({"other_checks": "IPC!"}, "other_checks", "not a check name"),
        ({"device": "rocket"}, "device", "Not a valid choice"),
        ({"route": "x" * 201}, "route", "200"),
    ],
)
def test_an_invalid_entry_redisplays_what_was_typed_with_a_message_at_the_field_and_writes_nothing(
    client: FlaskClient, app: Flask, changes: dict[str, str], field_id: str, message_part: str
) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    before = entry_count(app, pid)
    response = post_form(client, f"/pilots/{pid}/logbook/new", form_data(**changes))
    page = response.get_data(as_text=True)
    assert response.status_code == 422
    assert message_part.lower() in field_error(page, field_id).lower()
    assert 'class="error-summary"' in page and f'href="#{field_id}"' in page
    # What was typed is still there.
    assert 'value="two approaches with a safety pilot"' in page or "two approaches with a safety pilot</textarea>" in page
    assert 'value="RNAV (GPS)"' in page
    typed = changes.get(field_id, "")
    if typed and len(typed) < 60 and field_id not in ("device", "approaches-1-conditions"):
        assert f'value="{typed}"' in page.replace("&#34;", '"')
    assert entry_count(app, pid) == before


def test_an_instructor_recording_a_check_finds_themselves_preset_as_instructor(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "instructor")
    page = client.get(f"/pilots/{person_id(app, 'pilot')}/logbook/new").get_data(as_text=True)
    assert re.search(r'id="instructor"[^>]*value="Hollis Varga"', page)
    assert re.search(r'id="date"[^>]*value="2026-12-01"', page)  # the pinned today
    # The pilot themselves get an empty instructor field.
    act_as(client, app, "pilot")
    own = client.get(f"/pilots/{person_id(app, 'pilot')}/logbook/new").get_data(as_text=True)
    assert not re.search(r'id="instructor"[^>]*value="[^"]', own)


def test_the_form_offers_the_schools_aircraft_devices_and_people(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    page = client.get(f"/pilots/{person_id(app, 'pilot')}/logbook/new").get_data(as_text=True)
    machines = re.search(r'<datalist id="machines">(.*?)</datalist>', page).group(1)
    people = re.search(r'<datalist id="people">(.*?)</datalist>', page).group(1)
    assert all(m in machines for m in ("N417JR", "N82JR", "N650JR", "JR-ATD1"))
    assert "Hollis Varga" in people and "Tobias Lindqvist" in people
    assert "Ines Farrow" not in people and "Oskar Vale" not in people  # another school's people stay hidden


def test_every_form_field_has_a_label(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    page = client.get(f"/pilots/{person_id(app, 'pilot')}/logbook/new").get_data(as_text=True)
    ids = re.findall(r'<(?:input|select|textarea)[^>]*\bid="([^"]+)"', page)
    hidden = set(re.findall(r'<input[^>]*type="hidden"[^>]*id="([^"]+)"', page)) | set(
        re.findall(r'<input[^>]*id="([^"]+)"[^>]*type="hidden"', page))
    visible = [i for i in ids if i not in hidden and not i.endswith(("save", "check", "add_approach"))]
    assert len(visible) > 30
    for field_id in visible:
        assert f'for="{field_id}"' in page, field_id
    assert page.count("<fieldset") >= 7 and page.count("<legend>") >= 7


# ------------------------------------------------------------------ show, edit, delete, restore


def test_the_entry_page_shows_the_fields_and_the_approaches(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    page = client.get(f"/pilots/{person_id(app, 'pilot')}/logbook/mara-1").get_data(as_text=True)
    assert "Entry of 2026-06-03" in page
    assert "RNAV (GPS)" in page and "QPNV" in page and "Approaches (2)" in page
    assert "No changes since it was logged." in page


def test_an_edit_keeps_the_previous_version_in_the_history(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    edit_url = f"/pilots/{pid}/logbook/mara-3/edit"
    page = client.get(edit_url).get_data(as_text=True)
    assert re.search(r'id="version"[^>]*value="1"', page) or re.search(r'value="1"[^>]*id="version"', page)
    assert "night pattern work" in page  # the current values are in the form
    data = {
        "csrf_token": csrf(page), "version": "1", "date": "2026-11-07", "device": "aircraft", "category": "airplane",
        "aircraft_class": "single-engine-land", "aircraft": "N82JR", "landings": "4", "night_full_stop_landings": "3",
        "check_flight_review": "y", "instructor": "Hollis Varga", "total_hours": "1.4",
        "remarks": "night pattern work, one go-around", "save": "Save entry",
    }
    response = client.post(edit_url, data=data)
    assert response.status_code == 302
    with db(app) as s:
        row = repository.find_entry(s, pid, "mara-3")
        assert (row.version, row.landings, row.remarks) == (2, 4, "night pattern work, one go-around")
        revisions = repository.history(s, row)
        assert [(r.version, r.action, r.snapshot["landings"], r.changed_by_id) for r in revisions] == [(1, "edit", 3, pid)]
    shown = client.get(f"/pilots/{pid}/logbook/mara-3").get_data(as_text=True)
    assert "Mara Oyelaran" in shown and "landings, remarks" in shown


def test_a_save_from_a_stale_copy_is_refused_with_a_message_and_does_not_overwrite(client: FlaskClient, app: Flask) -> None:
    pid = person_id(app, "pilot")
    edit_url = f"/pilots/{pid}/logbook/mara-3/edit"
    base = {"date": "2026-11-07", "device": "aircraft", "category": "airplane", "landings": "3",
            "night_full_stop_landings": "3", "check_flight_review": "y", "save": "Save entry"}
    act_as(client, app, "pilot")
    stale_page = client.get(edit_url).get_data(as_text=True)  # the pilot opens the form (version 1)
    other = app.test_client()
    act_as(other, app, "instructor")  # meanwhile the instructor saves a change
    token = csrf(other.get(edit_url).get_data(as_text=True))
    assert other.post(edit_url, data={**base, "version": "1", "remarks": "instructor's note", "csrf_token": token}).status_code == 302
    response = client.post(edit_url, data={**base, "version": "1", "remarks": "pilot's late note", "csrf_token": csrf(stale_page)})
    page = response.get_data(as_text=True)
    assert response.status_code == 409
    assert "changed elsewhere" in page and "pilot&#39;s late note" in page
    with db(app) as s:
        row = repository.find_entry(s, pid, "mara-3")
        assert (row.version, row.remarks) == (2, "instructor's note")


def test_a_missing_or_garbled_version_is_treated_as_stale(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    url = f"/pilots/{pid}/logbook/mara-3/edit"
    for version in ("", "abc", "99999999999999999999"):
        response = post_form(client, url, {"date": "2026-11-07", "version": version, "remarks": "x", "save": "Save"})
        assert response.status_code == 409
    with db(app) as s:
        assert repository.find_entry(s, pid, "mara-3").version == 1


def test_delete_hides_the_entry_and_restore_brings_it_back_with_history(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    show_url = f"/pilots/{pid}/logbook/mara-2"
    response = post_form(client, f"{show_url}/delete", {"version": "1"}, page_url=show_url)
    assert response.status_code == 302
    assert "mara-2" not in client.get(f"/pilots/{pid}/logbook").get_data(as_text=True)
    with_deleted = client.get(f"/pilots/{pid}/logbook?deleted=1").get_data(as_text=True)
    assert "mara-2" in with_deleted and "Deleted" in with_deleted
    page = client.get(show_url).get_data(as_text=True)
    assert "Deleted</strong>" in page and "Restore" in page
    with db(app) as s:
        assert "mara-2" not in {e.id for e in services.load_logbook(s, pid).entries}
    assert client.get(f"{show_url}/edit").status_code == 302  # a deleted entry is restored before editing
    response = post_form(client, f"{show_url}/restore", {"version": "2"}, page_url=show_url)
    assert response.status_code == 302
    assert "mara-2" in client.get(f"/pilots/{pid}/logbook").get_data(as_text=True)
    with db(app) as s:
        row = repository.find_entry(s, pid, "mara-2")
        assert row.deleted_at is None and row.version == 3
        assert [r.action for r in repository.history(s, row)] == ["delete", "restore"]


def test_a_post_without_the_csrf_token_is_refused(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    before = entry_count(app, pid)
    assert client.post(f"/pilots/{pid}/logbook/new", data=form_data()).status_code == 400
    assert client.post(f"/pilots/{pid}/logbook/mara-1/delete", data={"version": "1"}).status_code == 400
    assert client.post(f"/pilots/{pid}/logbook/mara-1/edit", data=form_data(version="1")).status_code == 400
    assert entry_count(app, pid) == before
    with db(app) as s:
        assert repository.find_entry(s, pid, "mara-1").version == 1


# ------------------------------------------------------------------ one pilot cannot touch another's entries


def test_a_pilot_cannot_post_into_another_pilots_logbook(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    mine, theirs = person_id(app, "pilot"), person_id(app, "other_pilot")
    token = csrf(client.get(f"/pilots/{mine}/logbook/new").get_data(as_text=True))
    before = entry_count(app, theirs)
    assert client.post(f"/pilots/{theirs}/logbook/new", data={**form_data(), "csrf_token": token}).status_code == 404
    for action in ("edit", "delete", "restore"):
        response = client.post(f"/pilots/{theirs}/logbook/tobias-1/{action}", data={**form_data(version="1"), "csrf_token": token})
        assert response.status_code == 404
    # Another pilot's ref under my own id is simply not found.
    response = client.post(f"/pilots/{mine}/logbook/tobias-1/edit", data={**form_data(version="1"), "csrf_token": token})
    assert response.status_code == 404
    assert client.get(f"/pilots/{mine}/logbook/tobias-1").status_code == 404
    # Extra form fields naming another pilot are ignored: the entry lands in my own logbook.
    extra = {**form_data(), "pilot_id": str(theirs), "pilot": str(theirs), "csrf_token": token}
    assert client.post(f"/pilots/{mine}/logbook/new", data=extra).status_code == 302
    assert entry_count(app, theirs) == before
    with db(app) as s:
        assert repository.find_entry(s, theirs, "tobias-1").version == 1
        assert repository.find_entry(s, mine, "2026-11-28") is not None


@pytest.mark.parametrize(
    "url",
    [
        "/pilots/abc/logbook",
        "/pilots/-1/logbook",
        "/pilots/0/logbook",
        "/pilots/99999999999999999999999/logbook",
        "/pilots/2147483648/logbook/new",
        "/pilots/{pid}/logbook/no-such-entry",
        "/pilots/{pid}/logbook/" + "x" * 300,
        "/pilots/{pid}/logbook/no-such-entry/edit",
        "/pilots/{admin}/logbook",  # the admin keeps no logbook
    ],
)
def test_unknown_or_out_of_range_ids_and_refs_answer_404(client: FlaskClient, app: Flask, url: str) -> None:
    act_as(client, app, "pilot")
    url = url.format(pid=person_id(app, "pilot"), admin=person_id(app, "admin"))
    assert client.get(url).status_code == 404


GARBAGE = ["", " ", "-1", "1e9999", "0x10", "١٢", "\x00", "<script>", "9" * 400, "1,5", "..", "NaN", "inf"]


@pytest.mark.parametrize("value", GARBAGE, ids=range(len(GARBAGE)))
def test_garbage_in_any_field_never_answers_500(client: FlaskClient, app: Flask, value: str) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    token = csrf(client.get(f"/pilots/{pid}/logbook/new").get_data(as_text=True))
    names = [k for k in form_data() if k != "save"] + ["unlogged_approaches", "other_checks", "ua_nose_high",
                                                       "approaches-7-type", "approaches-99999999999-type", "version"]
    for name in names:
        for url in (f"/pilots/{pid}/logbook/new", f"/pilots/{pid}/logbook/mara-1/edit", f"/pilots/{pid}/logbook/credit"):
            response = client.post(url, data={**form_data(version="1"), name: value, "csrf_token": token})
            assert response.status_code < 500, (name, url, response.status_code)


def test_bytes_that_are_not_utf8_never_answer_500(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    token = csrf(client.get(f"/pilots/{pid}/logbook/new").get_data(as_text=True))
    body = f"csrf_token={token}&date=2026-11-28&remarks=%FF%FE&route=%C3&approaches-0-type=%ED%A0%80&save=Save"
    response = client.post(f"/pilots/{pid}/logbook/new", data=body, content_type="application/x-www-form-urlencoded")
    assert response.status_code in (302, 422)


def test_pressing_enter_in_a_field_saves_rather_than_adding_a_row(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    page = client.get(f"/pilots/{person_id(app, 'pilot')}/logbook/new").get_data(as_text=True)
    form = page.split('id="entry-form"', 1)[1]
    first_submit = re.search(r'<(?:button|input)[^>]*type="submit"[^>]*>', form).group(0)
    assert 'name="save"' in first_submit


# ------------------------------------------------------------------ credit feedback


def test_check_shows_what_the_entry_counts_toward_and_saves_nothing(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    before = entry_count(app, pid)
    response = post_form(client, f"/pilots/{pid}/logbook/new", form_data(save=None, check="Check"))
    page = html.unescape(response.get_data(as_text=True))
    assert response.status_code == 200
    # 14 CFR 61.57(c): the two approaches, the hold and the course tracking count (a safety pilot is named).
    assert re.search(r"<strong>Counts:</strong> Instrument experience[^<]*: 2 approaches, 1 holding procedure, "
                     r"intercepting and tracking courses", page)
    assert "Does not count:" not in page
    assert entry_count(app, pid) == before


def test_check_explains_why_simulated_work_without_a_safety_pilot_does_not_count(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    data = form_data(save=None, check="Check", safety_pilot="", **{"approaches-1-type": ""})
    page = html.unescape(post_form(client, f"/pilots/{pid}/logbook/new", data).get_data(as_text=True))
    # 14 CFR 91.109(c) (safety pilot) and 61.51(g) (type and place of each approach).
    assert "<strong>Does not count:</strong> Approach 1: simulated instrument work in an aircraft with neither safety pilot nor instructor" in page
    assert "Approach 2 has no type or airfield logged" in page
    assert not re.search(r"<strong>Counts:</strong> Instrument experience", page)


def test_the_credit_endpoint_answers_a_fragment_for_the_form_as_typed(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    response = post_form(client, f"/pilots/{pid}/logbook/credit", form_data(save=None), page_url=f"/pilots/{pid}/logbook/new")
    fragment = html.unescape(response.get_data(as_text=True))
    assert response.status_code == 200
    assert "<html" not in fragment and "Counts:</strong> Instrument experience" in fragment
    bad = post_form(client, f"/pilots/{pid}/logbook/credit", form_data(save=None, holds="x"), page_url=f"/pilots/{pid}/logbook/new")
    assert bad.status_code == 200 and "Not checked yet" in bad.get_data(as_text=True)
    assert client.post(f"/pilots/{pid}/logbook/credit", data=form_data(save=None)).status_code == 400  # no CSRF token
    assert entry_count(app, pid) == 3


def test_the_entry_page_shows_what_the_saved_entry_counts_toward(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    pid = person_id(app, "pilot")
    location = post_form(client, f"/pilots/{pid}/logbook/new", form_data()).headers["Location"]
    page = html.unescape(client.get(location).get_data(as_text=True))
    assert "Counts:</strong> Instrument experience" in page
    assert "Counts:</strong> Carrying passengers (takeoffs and landings)" in page  # 14 CFR 61.57(a): 2 landings logged
    assert "2 landings" in page


def test_the_form_loads_its_script_from_the_site_only(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "pilot")
    page = client.get(f"/pilots/{person_id(app, 'pilot')}/logbook/new").get_data(as_text=True)
    scripts = re.findall(r"<script[^>]*>", page)
    assert scripts == ['<script src="/static/logbook.js" defer>']
    assert 'data-credit-url="/pilots/' in page
    response = client.get("/static/logbook.js")
    body = response.get_data(as_text=True)
    response.close()
    assert response.status_code == 200 and "FormData" in body and "http" not in body
