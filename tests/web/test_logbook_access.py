"""Who may do what in the logbook area: every route x {anonymous, pilot, other pilot, instructor same school,
instructor other school, admin}, on the pilot Mara's logbook.

The rule (planner.web.access): the pilot and instructors of the same school may read and write; the school
admin may read; everyone else gets 404 (so probing ids reveals nothing); anonymous visitors are sent to sign in.
CSRF is switched off here so that each case tests access alone (test_logbook.py checks CSRF refusal).
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from flask import Flask
from flask.testing import FlaskClient

from planner.db import repository
from tests.web.test_logbook import act_as, form_data, make_app, person_id, web_database  # noqa: F401  (fixture)

ROLES = ("anonymous", "pilot", "other_pilot", "instructor", "other_instructor", "admin")
LOGIN = 302

# route name -> (method, path template, extra form data)
ROUTES = {
    "index": ("GET", "/pilots/{pid}/logbook", {}),
    "create_form": ("GET", "/pilots/{pid}/logbook/new", {}),
    "create": ("POST", "/pilots/{pid}/logbook/new", form_data()),
    "show": ("GET", "/pilots/{pid}/logbook/mara-1", {}),
    "edit_form": ("GET", "/pilots/{pid}/logbook/mara-1/edit", {}),
    "edit": ("POST", "/pilots/{pid}/logbook/mara-1/edit", form_data(version="1", date="2026-06-03")),
    "delete": ("POST", "/pilots/{pid}/logbook/mara-1/delete", {"version": "1"}),
    "restore": ("POST", "/pilots/{pid}/logbook/mara-1/restore", {"version": "1"}),
    "credit": ("POST", "/pilots/{pid}/logbook/credit", form_data(save=None)),
}
READ = {"index", "show"}
# Expected status per role: readers see 200, writers also get 200 on forms and 302 after a POST.
WRITE_OK = {"index": 200, "create_form": 200, "create": 302, "show": 200, "edit_form": 200, "edit": 302,
            "delete": 302, "restore": 302, "credit": 200}
EXPECTED = {
    "anonymous": {name: LOGIN for name in ROUTES},
    "pilot": WRITE_OK,
    "other_pilot": {name: 404 for name in ROUTES},
    "instructor": WRITE_OK,
    "other_instructor": {name: 404 for name in ROUTES},
    "admin": {name: (200 if name in READ else 404) for name in ROUTES},
}


@pytest.fixture
def app(web_database: Path, tmp_path: Path) -> Iterator[Flask]:  # noqa: F811
    application = make_app(web_database, tmp_path, WTF_CSRF_ENABLED=False)
    yield application
    application.extensions["planner.engine"].dispose()


@pytest.mark.parametrize("route", list(ROUTES))
@pytest.mark.parametrize("role", ROLES)
def test_logbook_route_answers_by_role(app: Flask, role: str, route: str) -> None:
    client: FlaskClient = app.test_client()
    act_as(client, app, role)
    method, template, data = ROUTES[route]
    pid = person_id(app, "pilot")
    path = template.format(pid=pid)
    response = client.get(path) if method == "GET" else client.post(path, data=data)
    assert response.status_code == EXPECTED[role][route], (role, route)
    if role == "anonymous":
        assert "/login" in response.headers["Location"]
    with app.extensions["planner.sessions"]() as s:
        row = repository.find_entry(s, pid, "mara-1")
        changed = row.version != 1 or len(repository.current_entries(s, pid)) != 3
    # Only a write the role is allowed to make changes anything.
    assert changed == (route in ("edit", "delete", "create") and EXPECTED[role] is WRITE_OK)


@pytest.mark.parametrize(
    ("role", "target"),
    [("anonymous", "/login"), ("pilot", "/pilots/{pid}/logbook"), ("instructor", "/school"), ("admin", "/school"),
     ("other_instructor", "/school")],
)
def test_my_logbook_sends_each_role_somewhere_sensible(app: Flask, role: str, target: str) -> None:
    client = app.test_client()
    act_as(client, app, role)
    response = client.get("/logbook")
    assert response.status_code == 302
    assert response.headers["Location"].split("?")[0] == target.format(pid=person_id(app, "pilot"))


def test_an_instructor_of_another_school_cannot_see_that_schools_pilots_either_way(app: Flask) -> None:
    client = app.test_client()
    act_as(client, app, "instructor")
    oskar = person_id(app, "other_school_pilot")
    assert client.get(f"/pilots/{oskar}/logbook").status_code == 404
    assert client.get(f"/pilots/{oskar}/logbook/oskar-1").status_code == 404
    act_as(client, app, "other_instructor")
    assert client.get(f"/pilots/{oskar}/logbook").status_code == 200
    assert client.get(f"/pilots/{oskar}/logbook/oskar-1").status_code == 200
