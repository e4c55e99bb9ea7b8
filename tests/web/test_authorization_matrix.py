"""Every route of the app × every kind of visitor, with the status each must get: the app's one access matrix.

The routes are read from ``app.url_map``: a route (or method) added without a
row here fails ``test_every_route_has_a_row``. CSRF is switched off in this
module's app so that the answers show the access rule itself; CSRF is tested
with the forms (tests/web/test_sign_in.py, test_logbook.py, test_dashboard.py,
test_settings.py, test_admin.py).

The rule (planner.web.access and planner.web.admin): a pilot sees and edits
their own logbook; an instructor of the same school views and edits it; the
school admin of the same school views it but does not edit it, and alone
manages the school's people; anyone else gets 404 (so probing ids reveals
nothing); anonymous visitors are sent to sign in.

Writes (new entry, edit, delete, restore, new person, edit person) post a
complete, valid form, so an allowed write answers with its success redirect;
every other POST carries no form data and answers with its validation status.
Each case then checks the database: only a write the visitor is allowed to
make changes anything, and it changes what it should.

The matrix runs on SQLite and on PostgreSQL (the module's database fixture is
parametrised over both; each case gets its own copy of the built database).

Subjects: ``pilot`` is Mara (the pilot whose ids appear in the URLs); ``other
pilot`` is Tobias of the same school; ``instructor`` is Hollis (same school,
no logbook); ``instructor elsewhere`` teaches at a second, invented school;
``admin`` is Wren (same school, no logbook).
"""

from __future__ import annotations

import shutil
import uuid
from collections.abc import Callable, Iterator
from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from sqlalchemy import func, select, text
from sqlalchemy.engine import make_url

from planner.core.logbook import Entry
from planner.db import models, repository
from planner.web import db_session
from planner.config import REPO_ROOT
from tests.conftest import _pg_admin
from tests.web.dash_fixtures import (OTHER_SCHOOL, add_other_school, build_demo_database, load_demo_at, make_app_at,
                                     person_id)
from tests.web.test_admin import person_form
from tests.web.test_logbook import form_data

ROLES = ("anonymous", "pilot", "other_pilot", "instructor", "instructor_elsewhere", "admin")

# (endpoint, method): statuses in ROLES order.
MATRIX: dict[tuple[str, str], tuple[int, ...]] = {
    # Sign-in: signed-in visitors are sent on; an empty sign-in form is refused.
    ("auth.login", "GET"): (200, 302, 302, 302, 302, 302),
    ("auth.login", "POST"): (401, 302, 302, 302, 302, 302),
    ("auth.logout", "POST"): (302, 302, 302, 302, 302, 302),
    # Dashboard: own at "/" (staff without a logbook go to the school overview).
    ("dashboard.index", "GET"): (302, 200, 200, 302, 302, 302),
    ("dashboard.pilot", "GET"): (302, 200, 404, 200, 404, 200),
    ("dashboard.what_if", "POST"): (302, 400, 404, 400, 404, 400),
    # School overview: instructors and admins only, each of their own school.
    ("school.overview", "GET"): (302, 404, 404, 200, 200, 200),
    ("school.overview_csv", "GET"): (302, 404, 404, 200, 200, 200),
    # Settings: own (a plain page for accounts without a logbook) and per pilot.
    ("settings.index", "GET"): (302, 200, 200, 200, 200, 200),
    ("settings.index", "POST"): (302, 400, 400, 200, 200, 200),
    ("settings.pilot", "GET"): (302, 200, 404, 200, 404, 200),
    ("settings.pilot", "POST"): (302, 400, 404, 400, 404, 400),
    # Logbook: "/logbook" sends each visitor on (see test_my_logbook_sends_each_visitor_somewhere_sensible).
    ("logbook.mine", "GET"): (302, 302, 302, 302, 302, 302),
    # Reading: the pilot, and the instructors and the admin of the same school.
    ("logbook.index", "GET"): (302, 200, 404, 200, 404, 200),
    ("logbook.show", "GET"): (302, 200, 404, 200, 404, 200),
    # Writing: the pilot and the instructors of the same school; not the admin.
    ("logbook.create", "GET"): (302, 200, 404, 200, 404, 404),
    ("logbook.create", "POST"): (302, 302, 404, 302, 404, 404),
    ("logbook.edit", "GET"): (302, 200, 404, 200, 404, 404),
    ("logbook.edit", "POST"): (302, 302, 404, 302, 404, 404),
    ("logbook.delete", "POST"): (302, 302, 404, 302, 404, 404),
    ("logbook.restore", "POST"): (302, 302, 404, 302, 404, 404),
    # The live credit notes need write access too (they belong to the entry form).
    ("logbook.credit", "POST"): (302, 200, 404, 200, 404, 404),
    # People of the school: its admin only.
    ("admin.people", "GET"): (302, 404, 404, 404, 404, 200),
    ("admin.create_person", "GET"): (302, 404, 404, 404, 404, 200),
    ("admin.create_person", "POST"): (302, 404, 404, 404, 404, 302),
    ("admin.edit_person", "GET"): (302, 404, 404, 404, 404, 200),
    ("admin.edit_person", "POST"): (302, 404, 404, 404, 404, 302),
    # Calendars: the feed needs no sign-in (an unknown token answers 404 to everyone); the download follows reading.
    ("calendar.feed", "GET"): (404, 404, 404, 404, 404, 404),
    ("calendar.download", "GET"): (302, 200, 404, 200, 404, 200),
    # The subscription link: each pilot's own (accounts without a logbook have none).
    ("settings.create_feed", "POST"): (302, 200, 200, 404, 404, 404),
    ("settings.revoke_feed", "POST"): (302, 302, 302, 404, 404, 404),
    # Planning: instructors and admins, each of their own school; an empty form is refused with its status.
    ("plan.index", "GET"): (302, 404, 404, 200, 200, 200),
    ("plan.propose", "POST"): (302, 404, 404, 400, 400, 400),
    ("plan.save", "POST"): (302, 404, 404, 400, 400, 400),
    ("plan.accept", "POST"): (302, 404, 404, 400, 400, 400),
    ("plan.cancel", "POST"): (302, 404, 404, 400, 400, 400),
    ("plan.move", "POST"): (302, 404, 404, 400, 400, 400),
    # Marking flown is also open to the two people of a session: without a session id it is refused for everyone.
    ("plan.flown", "POST"): (302, 400, 400, 400, 400, 400),
    # A draft entry from a flown session: write access to the logbook, and the session must be named (none here).
    ("logbook.from_session", "GET"): (302, 404, 404, 404, 404, 404),
}

NEW_PERSON = "nadia.quell@juniper-ridge.example"  # the email in person_form()


# ------------------------------------------------------------------ fixtures


class MatrixSource:
    """The built matrix database and fresh copies of it: file copies on SQLite, template clones on PostgreSQL."""

    def __init__(self, kind: str, url: str) -> None:
        self.kind, self.url = kind, url
        self._shared: str | None = None
        self._admin = _pg_admin() if kind == "postgres" else None

    def copy(self, tmp_path: Path, *, read_only: bool) -> str:
        """A URL for a copy of the database. On PostgreSQL, read-only cases (GET) share one clone."""
        if self.kind == "sqlite":
            path = tmp_path / "matrix.sqlite3"
            shutil.copy(make_url(self.url).database, path)
            return f"sqlite:///{path}"
        if read_only:
            if self._shared is None:
                self._shared = self._clone()
            return self._shared
        return self._clone()

    def _clone(self) -> str:
        name = f"{make_url(self.url).database}_{uuid.uuid4().hex[:8]}"
        with self._admin.connect() as conn:
            conn.execute(text(f'CREATE DATABASE "{name}" TEMPLATE "{make_url(self.url).database}"'))
        return self.url.rsplit("/", 1)[0] + f"/{name}"

    def discard(self, url: str) -> None:
        """Drop a per-case clone (the shared one lives until the module ends)."""
        if self.kind == "postgres" and url != self._shared:
            with self._admin.connect() as conn:
                conn.execute(text(f'DROP DATABASE IF EXISTS "{make_url(url).database}" WITH (FORCE)'))

    def close(self) -> None:
        if self._admin is not None:
            if self._shared is not None:
                self._shared, shared = None, self._shared
                with self._admin.connect() as conn:
                    conn.execute(text(f'DROP DATABASE IF EXISTS "{make_url(shared).database}" WITH (FORCE)'))
            self._admin.dispose()


@pytest.fixture(scope="module", params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def matrix_database(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> Iterator[MatrixSource]:
    """The demo school and a second, invented school, built once per module on SQLite and on PostgreSQL."""
    base = tmp_path_factory.mktemp("matrix")
    if request.param == "sqlite":
        path = base / "matrix.sqlite3"
        shutil.copy(build_demo_database(base), path)
        url = f"sqlite:///{path}"
    else:
        url = request.getfixturevalue("pg_url")  # a fresh database, used as the template of each copy
        load_demo_at(url, REPO_ROOT / "seed_demo")
    app = make_app_at(url, base)
    add_other_school(app)
    app.extensions["planner.engine"].dispose()
    source = MatrixSource(request.param, url)
    yield source
    source.close()


@pytest.fixture
def matrix_app(matrix_database: MatrixSource, tmp_path: Path, request: pytest.FixtureRequest) -> Iterator[Flask]:
    """A fresh copy per case, so that an allowed write cannot leak into the next case.

    (On PostgreSQL a GET case, which must not write and is checked for it, uses a shared copy: cloning a
    database per case costs a third of a second.)
    """
    callspec = getattr(request.node, "callspec", None)
    route = callspec.params.get("route") if callspec is not None else None
    url = matrix_database.copy(tmp_path, read_only=route is not None and route[1] == "GET")
    app = make_app_at(url, tmp_path, WTF_CSRF_ENABLED=False)
    with app.app_context():
        other = {p.email: p.id for p in db_session().scalars(select(models.Person).where(models.Person.email.like("%@larkspur-field.example")))}
    app.config["MATRIX_IDS"] = {
        "pilot": person_id(app, "mara"),
        "other_pilot": person_id(app, "tobias"),
        "instructor": person_id(app, "hollis"),
        "instructor_elsewhere": other[OTHER_SCHOOL["instructor"][0]],
        "admin": person_id(app, "wren"),
        "pilot_elsewhere": other[OTHER_SCHOOL["pilot"][0]],
    }
    with app.app_context():
        # The entry whose ref appears in the URLs: Mara's first current entry.
        app.config["MATRIX_REF"] = repository.current_entries(db_session(), app.config["MATRIX_IDS"]["pilot"])[0].external_id
    yield app
    app.extensions["planner.engine"].dispose()
    matrix_database.discard(url)


def _routes(app: Flask) -> dict[tuple[str, str], str]:
    """(endpoint, method) -> URL rule, for every route but static files."""
    out = {}
    for rule in app.url_map.iter_rules():
        if rule.endpoint == "static":
            continue
        for method in sorted((rule.methods or set()) - {"HEAD", "OPTIONS"}):
            out[(rule.endpoint, method)] = rule.rule
    return out


def _act_as(app: Flask, role: str):  # type: ignore[no-untyped-def]
    client = app.test_client()
    if role != "anonymous":
        with client.session_transaction() as session:
            session["_user_id"] = str(app.config["MATRIX_IDS"][role])
            session["_fresh"] = True
    return client


# ------------------------------------------------------------------ the entry and person each case works on


def _ref(app: Flask) -> str:
    return app.config["MATRIX_REF"]


def _target_entry(app: Flask) -> models.Entry:
    """The entry whose ref appears in the URLs (deleted or not)."""
    return repository.find_entry(db_session(), app.config["MATRIX_IDS"]["pilot"], _ref(app))


def _delete_target(app: Flask) -> None:
    """Set-up for restore: the entry must be deleted first."""
    with app.app_context():
        session = db_session()
        repository.delete_entry(session, _target_entry(app), now=datetime(2026, 11, 30, tzinfo=UTC))
        session.commit()


def _request_data(app: Flask, route: tuple[str, str]) -> dict[str, Any]:
    """A complete, valid form for each write; no data for every other POST."""
    with app.app_context():
        version = str(_target_entry(app).version)
        mara = db_session().get(models.Person, app.config["MATRIX_IDS"]["pilot"])
        mara_email = mara.email
    return {
        ("logbook.create", "POST"): form_data(),
        ("logbook.edit", "POST"): form_data(version=version, date="2026-06-03"),
        ("logbook.delete", "POST"): {"version": version},
        ("logbook.restore", "POST"): {"version": version},
        ("admin.create_person", "POST"): person_form(),
        ("admin.edit_person", "POST"): person_form(name="Mara Oyelaran", email=mara_email, password="",
                                                   medical_expires="2029-01-31"),
    }.get(route, {})


def _url(app: Flask, rule: str) -> str:
    ids = app.config["MATRIX_IDS"]
    return (
        rule.replace("<int:pilot_id>", str(ids["pilot"]))
        .replace("<int:person_id>", str(ids["pilot"]))
        .replace("<ref>", _ref(app))
    )


# ------------------------------------------------------------------ what a write may change


def _state(app: Flask) -> dict[str, Any]:
    """Everything a route could change: people (incl. settings) and every entry's version and deletion."""
    with app.extensions["planner.sessions"]() as s:
        people = {
            p.email: (p.name, p.is_pilot, p.is_instructor, p.is_admin, p.password_hash, p.medical_class, p.medical_expires,
                      p.timezone, p.home_airfield_id, tuple(p.rule_sets or ()), repr(p.practice_targets))
            for p in s.scalars(select(models.Person))
        }
        entries = {
            (e.pilot_id, e.external_id): (e.version, e.deleted_at is not None, e.date)
            for e in s.scalars(select(models.Entry))
        }
        revisions = s.scalar(select(func.count()).select_from(models.EntryRevision))
    return {"people": people, "entries": entries, "revisions": revisions}


def _diff(before: dict[str, Any], after: dict[str, Any]) -> set[str]:
    """Which parts of the state differ."""
    return {key for key in before if before[key] != after[key]}


Effect = Callable[[Flask, dict[str, Any], dict[str, Any]], None]


def _one_more_entry_for_mara(app: Flask, before: dict[str, Any], after: dict[str, Any]) -> None:
    pid = app.config["MATRIX_IDS"]["pilot"]
    new = set(after["entries"]) - set(before["entries"])
    assert len(new) == 1 and next(iter(new))[0] == pid
    assert after["entries"][next(iter(new))][2] == date(2026, 11, 28)


def _target_edited(app: Flask, before: dict[str, Any], after: dict[str, Any]) -> None:
    key = (app.config["MATRIX_IDS"]["pilot"], _ref(app))
    assert after["entries"][key][0] == before["entries"][key][0] + 1
    assert after["entries"][key][2] == date(2026, 6, 3)


def _target_deleted(app: Flask, before: dict[str, Any], after: dict[str, Any]) -> None:
    key = (app.config["MATRIX_IDS"]["pilot"], _ref(app))
    assert (before["entries"][key][1], after["entries"][key][1]) == (False, True)


def _target_restored(app: Flask, before: dict[str, Any], after: dict[str, Any]) -> None:
    key = (app.config["MATRIX_IDS"]["pilot"], _ref(app))
    assert (before["entries"][key][1], after["entries"][key][1]) == (True, False)


def _person_created(app: Flask, before: dict[str, Any], after: dict[str, Any]) -> None:
    assert set(after["people"]) - set(before["people"]) == {NEW_PERSON}


def _mara_changed(app: Flask, before: dict[str, Any], after: dict[str, Any]) -> None:
    email = next(e for e in before["people"] if e.startswith("mara."))
    assert before["people"][email][6] != date(2029, 1, 31) and after["people"][email][6] == date(2029, 1, 31)
    assert before["people"][email][4] == after["people"][email][4], "an empty password keeps the old one"


# (endpoint, method) -> (parts of the state an allowed write changes, how)
WRITES: dict[tuple[str, str], tuple[set[str], Effect]] = {
    ("logbook.create", "POST"): ({"entries"}, _one_more_entry_for_mara),  # history keeps earlier versions: none yet
    # (placeholder),
    ("logbook.edit", "POST"): ({"entries", "revisions"}, _target_edited),
    ("logbook.delete", "POST"): ({"entries", "revisions"}, _target_deleted),
    ("logbook.restore", "POST"): ({"entries", "revisions"}, _target_restored),
    ("admin.create_person", "POST"): ({"people"}, _person_created),
    ("admin.edit_person", "POST"): ({"people"}, _mara_changed),
}


# ------------------------------------------------------------------ the matrix


def test_every_route_has_a_row(matrix_app: Flask) -> None:
    routes = set(_routes(matrix_app))
    assert routes - set(MATRIX) == set(), "routes without a row in the authorisation matrix"
    assert set(MATRIX) - routes == set(), "rows for routes that no longer exist"
    assert set(WRITES) <= set(MATRIX)


@pytest.mark.parametrize("role", ROLES)
@pytest.mark.parametrize("route", sorted(MATRIX), ids=lambda r: f"{r[1]} {r[0]}")
def test_route_answers_each_visitor_as_expected(matrix_app: Flask, route: tuple[str, str], role: str) -> None:
    rules = _routes(matrix_app)
    assert route in rules, f"{route} is not a route of the app"
    endpoint, method = route
    if route == ("logbook.restore", "POST"):
        _delete_target(matrix_app)
    url = _url(matrix_app, rules[route])
    data = _request_data(matrix_app, route)
    client = _act_as(matrix_app, role)
    before = _state(matrix_app)
    response = client.open(url, method=method, data=data)
    expected = MATRIX[route][ROLES.index(role)]
    assert response.status_code == expected, f"{method} {endpoint} as {role}"
    if expected == 302 and role == "anonymous" and endpoint not in ("auth.logout",):
        assert response.headers["Location"].split("?")[0] == "/login"
    changed = _diff(before, _state(matrix_app))
    allowed_write = route in WRITES and role != "anonymous" and expected == 302
    if allowed_write:
        parts, effect = WRITES[route]
        assert changed == parts, f"{method} {endpoint} as {role} changed {changed}"
        effect(matrix_app, before, _state(matrix_app))
    else:
        # A refused request (or one that only reads, checks or validates) changes nothing.
        assert changed == set(), f"{method} {endpoint} as {role} changed {changed}"


@pytest.mark.parametrize(
    ("role", "target"),
    [
        ("anonymous", "/login"),
        ("pilot", "/pilots/{pilot}/logbook"),
        ("other_pilot", "/pilots/{other_pilot}/logbook"),
        ("instructor", "/school"),
        ("instructor_elsewhere", "/school"),
        ("admin", "/school"),
    ],
)
def test_my_logbook_sends_each_visitor_somewhere_sensible(matrix_app: Flask, role: str, target: str) -> None:
    response = _act_as(matrix_app, role).get("/logbook")
    assert response.status_code == 302
    assert response.headers["Location"].split("?")[0] == target.format(**matrix_app.config["MATRIX_IDS"])


def test_the_second_school_exists_and_its_instructor_is_not_of_the_demo_school(matrix_app: Flask) -> None:
    with matrix_app.app_context():
        other = db_session().get(models.Person, matrix_app.config["MATRIX_IDS"]["instructor_elsewhere"])
        mara = db_session().get(models.Person, matrix_app.config["MATRIX_IDS"]["pilot"])
        assert other.email == OTHER_SCHOOL["instructor"][0] and other.is_instructor
        assert other.school_id != mara.school_id


def test_the_other_schools_instructor_sees_their_own_pilot_and_the_demo_instructor_does_not(matrix_app: Flask) -> None:
    """The 404s above come from the school boundary, not from the instructor elsewhere lacking any access."""
    osric = matrix_app.config["MATRIX_IDS"]["pilot_elsewhere"]
    with matrix_app.app_context():
        session = db_session()
        person = session.get(models.Person, osric)
        repository.add_entries(session, person, [Entry(id="osric-1", date=date(2026, 11, 2), landings=2, total_hours=1.1)],
                               now=datetime(2026, 11, 2, tzinfo=UTC))
        session.commit()
    paths = (f"/pilots/{osric}", f"/pilots/{osric}/logbook", f"/pilots/{osric}/logbook/osric-1",
             f"/pilots/{osric}/logbook/osric-1/edit")
    demo_instructor = _act_as(matrix_app, "instructor")
    assert [demo_instructor.get(p).status_code for p in paths] == [404, 404, 404, 404]
    own_instructor = _act_as(matrix_app, "instructor_elsewhere")
    assert [own_instructor.get(p).status_code for p in paths] == [200, 200, 200, 200]
