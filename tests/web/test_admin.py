"""The school admin's people pages: list, create, edit; only admins, only their own school."""

from __future__ import annotations

import re
from datetime import date
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from werkzeug.security import check_password_hash

from planner.db import models, repository
from tests.web.test_logbook import (  # noqa: F401  (app, client and web_database are fixtures)
    EMAILS,
    act_as,
    app,
    client,
    csrf,
    db,
    field_error,
    person_id,
    web_database,
)

def person_form(**changes: Any) -> dict[str, Any]:
    data = {
        "name": "Nadia Quell",
        "email": "nadia.quell@juniper-ridge.example",
        "is_pilot": "y",
        "certificate_level": "private",
        "category_classes": "airplane/single-engine-land, airplane/multi-engine-land",
        "instrument_categories": "airplane",
        "instructor_ratings": "",
        "medical_class": "third",
        "medical_expires": "2028-05-31",
        "basicmed_expires": "",
        "home_airfield": "",
        "timezone": "America/Denver",
        "password": "a-long-initial-password",
        "submit": "Save person",
    }
    data.update(changes)
    return {k: v for k, v in data.items() if v is not None}


def post(client: FlaskClient, url: str, data: dict[str, Any]):  # type: ignore[no-untyped-def]
    token = csrf(client.get(url).get_data(as_text=True))
    return client.post(url, data={**data, "csrf_token": token})


# Which visitor may open or post each people page: tests/web/test_authorization_matrix.py (the app's one matrix).


def test_an_admin_cannot_reach_people_of_another_school(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "admin")
    other = person_id(app, "other_instructor")
    assert client.get(f"/admin/people/{other}/edit").status_code == 404
    assert client.get("/admin/people/99999999999999999999/edit").status_code == 404
    page = client.get("/admin/people").get_data(as_text=True)
    assert "Hollis Varga" in page and "Mara Oyelaran" in page
    assert "Ines Farrow" not in page and "Oskar Vale" not in page


def test_an_admin_creates_a_pilot_who_can_then_sign_in(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "admin")
    response = post(client, "/admin/people/new", person_form())
    assert response.status_code == 302
    with db(app) as s:
        person = repository.person_by_email(s, "nadia.quell@juniper-ridge.example")
        assert person is not None
        assert person.school_id == s.get(models.Person, person_id(app, "admin")).school_id
        assert person.roles == ("pilot",)
        assert person.category_classes == ["airplane/single-engine-land", "airplane/multi-engine-land"]
        assert (person.medical_class, person.medical_expires, person.timezone) == ("third", date(2028, 5, 31), "America/Denver")
        assert person.password_hash != "a-long-initial-password"
        assert check_password_hash(person.password_hash, "a-long-initial-password")
    fresh = app.test_client()
    token = csrf(fresh.get("/login").get_data(as_text=True))
    signed_in = fresh.post("/login", data={"email": "nadia.quell@juniper-ridge.example",
                                          "password": "a-long-initial-password", "csrf_token": token})
    assert signed_in.status_code == 302


def test_an_admin_creates_an_instructor_with_ratings_and_a_home_airfield(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "admin")
    page = client.get("/admin/people/new").get_data(as_text=True)
    airfield_id = re.search(r'<option value="(\d+)">QPNV', page).group(1)
    data = person_form(name="Bram Oduya", email="bram.oduya@juniper-ridge.example", is_pilot=None, is_instructor="y",
                       instructor_ratings="CFI, cfii", home_airfield=airfield_id, medical_class="second")
    assert post(client, "/admin/people/new", data).status_code == 302
    with db(app) as s:
        person = repository.person_by_email(s, "bram.oduya@juniper-ridge.example")
        assert person.roles == ("instructor",) and person.instructor_ratings == ["cfi", "cfii"]
        assert person.home_airfield.ident == "QPNV"


@pytest.mark.parametrize(
    ("changes", "field", "message"),
    [
        ({"email": "mara.oyelaran@juniper-ridge.example"}, "email", "already uses this email"),
        ({"email": "not-an-email"}, "email", "valid email"),
        ({"name": ""}, "name", "name"),
        ({"is_pilot": None}, "is_pilot", "at least one role"),
        ({"category_classes": "boat/sail"}, "category_classes", "category/class"),
        ({"instrument_categories": "submarine"}, "instrument_categories", "not one of"),
        ({"timezone": "Mars/Olympus"}, "timezone", "IANA"),
        ({"medical_expires": "2027-02-30"}, "medical_expires", "date"),
        ({"password": "short"}, "password", "at least 10"),
        ({"password": ""}, "password", "initial password"),
        ({"certificate_level": "astronaut"}, "certificate_level", "Not a valid choice"),
        ({"home_airfield": "99999999999"}, "home_airfield", "Not a valid choice"),
    ],
)
def test_a_bad_person_redisplays_the_form_with_the_message_at_the_field_and_stores_nothing(
    client: FlaskClient, app: Flask, changes: dict[str, Any], field: str, message: str
) -> None:
    act_as(client, app, "admin")
    with db(app) as s:
        before = len(repository.school_people(s, 1)) + len(repository.school_people(s, 2))
    response = post(client, "/admin/people/new", person_form(**changes))
    page = response.get_data(as_text=True)
    assert response.status_code == 422
    assert message.lower() in field_error(page, field).lower()
    assert "Nadia Quell" in page or field == "name"  # what was typed stays
    with db(app) as s:
        assert len(repository.school_people(s, 1)) + len(repository.school_people(s, 2)) == before


def test_an_admin_edits_a_person_and_an_empty_password_keeps_the_old_one(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "admin")
    target = person_id(app, "pilot")
    page = client.get(f"/admin/people/{target}/edit").get_data(as_text=True)
    assert 'value="Mara Oyelaran"' in page and "airplane/single-engine-land" in page
    data = person_form(name="Mara Oyelaran", email=EMAILS["pilot"], password="", basicmed_expires="2027-01-31")
    assert post(client, f"/admin/people/{target}/edit", data).status_code == 302
    with db(app) as s:
        person = s.get(models.Person, target)
        assert person.basicmed_expires == date(2027, 1, 31)
        assert check_password_hash(person.password_hash, "juniper-pilot-mara")


def test_an_admin_cannot_drop_their_own_admin_role_nor_a_pilots_role_while_they_keep_a_logbook(client: FlaskClient, app: Flask) -> None:
    act_as(client, app, "admin")
    me = person_id(app, "admin")
    data = person_form(name="Wren Tamaki", email=EMAILS["admin"], password="", is_pilot=None, is_instructor="y")
    response = post(client, f"/admin/people/{me}/edit", data)
    assert response.status_code == 422 and "own admin role" in field_error(response.get_data(as_text=True), "is_admin")
    target = person_id(app, "pilot")
    data = person_form(name="Mara Oyelaran", email=EMAILS["pilot"], password="", is_pilot=None, is_instructor="y")
    response = post(client, f"/admin/people/{target}/edit", data)
    assert response.status_code == 422 and "keeps a logbook" in field_error(response.get_data(as_text=True), "is_pilot")
    with db(app) as s:
        assert s.get(models.Person, target).roles == ("pilot",)
        assert s.get(models.Person, me).is_admin
