"""Every route of the app × every kind of visitor, with the status each must get.

The routes are read from ``app.url_map``: a route (or method) added without a
row here fails ``test_every_route_has_a_row``. CSRF is switched off in this
module's app so that the answers show the access rule itself; CSRF is tested
with the forms (tests/web/test_sign_in.py, test_dashboard.py, test_settings.py).
Requests carry no form data: an allowed POST answers with its validation
status, never by changing anything.

Subjects: ``pilot`` is Mara (the pilot whose ids appear in the URLs); ``other
pilot`` is Tobias of the same school; ``instructor`` is Hollis (same school,
no logbook); ``instructor elsewhere`` teaches at a second, invented school;
``admin`` is Wren (same school, no logbook).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from flask import Flask

from planner.db import repository
from planner.web import db_session
from tests.web.dash_fixtures import OTHER_SCHOOL, add_other_school, make_app, person_id

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
    # Placeholders of areas built on other branches (rows to be replaced when they land).
    ("logbook.index", "GET"): (302, 200, 200, 200, 200, 200),
    ("admin.people", "GET"): (302, 200, 200, 200, 200, 200),
}


@pytest.fixture(scope="module")
def matrix_app(tmp_path_factory: pytest.TempPathFactory):  # type: ignore[no-untyped-def]
    from tests.web.dash_fixtures import build_demo_database

    base = tmp_path_factory.mktemp("matrix")
    path = base / "matrix.sqlite3"
    shutil.copy(build_demo_database(base), path)
    app = make_app(path, base, WTF_CSRF_ENABLED=False)
    ids = add_other_school(app)
    app.config["MATRIX_IDS"] = {
        "pilot": person_id(app, "mara"),
        "other_pilot": person_id(app, "tobias"),
        "instructor": person_id(app, "hollis"),
        "instructor_elsewhere": ids["instructor"],
        "admin": person_id(app, "wren"),
    }
    yield app
    app.extensions["planner.engine"].dispose()


def _routes(app: Flask) -> dict[tuple[str, str], str]:
    """(endpoint, method) -> URL rule, for every route but static files."""
    out = {}
    for rule in app.url_map.iter_rules():
        if rule.endpoint == "static":
            continue
        for method in sorted((rule.methods or set()) - {"HEAD", "OPTIONS"}):
            out[(rule.endpoint, method)] = rule.rule
    return out


def test_every_route_has_a_row(matrix_app: Flask) -> None:
    routes = set(_routes(matrix_app))
    assert routes - set(MATRIX) == set(), "routes without a row in the authorisation matrix"
    assert set(MATRIX) - routes == set(), "rows for routes that no longer exist"


def _url(app: Flask, rule: str) -> str:
    ids = app.config["MATRIX_IDS"]
    with app.app_context():
        ref = repository.current_entries(db_session(), ids["pilot"])[0].external_id
    return rule.replace("<int:pilot_id>", str(ids["pilot"])).replace("<ref>", ref).replace("<path:ref>", ref)


@pytest.mark.parametrize("role", ROLES)
@pytest.mark.parametrize("route", sorted(MATRIX), ids=lambda r: f"{r[1]} {r[0]}")
def test_route_answers_each_visitor_as_expected(matrix_app: Flask, route: tuple[str, str], role: str) -> None:
    rules = _routes(matrix_app)
    assert route in rules, f"{route} is not a route of the app"
    client = matrix_app.test_client()
    if role != "anonymous":
        with client.session_transaction() as session:
            session["_user_id"] = str(matrix_app.config["MATRIX_IDS"][role])
            session["_fresh"] = True
    endpoint, method = route
    response = client.open(_url(matrix_app, rules[route]), method=method, data={})
    expected = MATRIX[route][ROLES.index(role)]
    assert response.status_code == expected, f"{method} {endpoint} as {role}"
    if expected == 302 and role == "anonymous" and endpoint not in ("auth.logout",):
        assert "/login" in response.headers["Location"]


def test_the_second_school_exists_and_its_instructor_is_not_of_the_demo_school(matrix_app: Flask) -> None:
    from planner.db import models

    with matrix_app.app_context():
        other = db_session().get(models.Person, matrix_app.config["MATRIX_IDS"]["instructor_elsewhere"])
        mara = db_session().get(models.Person, matrix_app.config["MATRIX_IDS"]["pilot"])
        assert other.email == OTHER_SCHOOL["instructor"][0] and other.is_instructor
        assert other.school_id != mara.school_id
