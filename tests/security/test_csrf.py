"""Every POST route refuses a request without a valid CSRF token (400) and writes nothing.

The routes come from ``app.url_map``: a POST route added without a row in
``POST_ROUTES`` fails ``test_every_post_route_is_checked``. Each request is
made by someone allowed to use the route, with a complete, valid form: only
the missing (or forged) token stands between it and a write. The same
request with the page's real token goes through, so the refusal is the
token's doing.
"""

from __future__ import annotations

from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

from planner.db import repository
from planner.web import db_session
from tests.security.helpers import state
from tests.web.dash_fixtures import PASSWORDS, app, csrf, demo_database, person_id, sign_in  # noqa: F401
from tests.web.test_admin import person_form
from tests.web.test_logbook import form_data

# endpoint -> who may use it (None: an anonymous visitor)
POST_ROUTES: dict[str, str | None] = {
    "auth.login": None,
    "auth.logout": "mara",
    "dashboard.what_if": "mara",
    "settings.index": "mara",
    "settings.pilot": "mara",
    "logbook.create": "mara",
    "logbook.edit": "mara",
    "logbook.delete": "mara",
    "logbook.restore": "mara",
    "logbook.credit": "mara",
    "admin.create_person": "wren",
    "admin.edit_person": "wren",
    "settings.create_feed": "mara",
    "settings.revoke_feed": "mara",
    "plan.propose": "hollis",
    "plan.save": "hollis",
    "plan.accept": "hollis",
    "plan.cancel": "hollis",
    "plan.move": "hollis",
    "plan.flown": "hollis",
}
# The page whose form carries a real token, and the data of a request that then succeeds (302).
GOES_THROUGH = {"auth.login", "auth.logout", "logbook.create", "logbook.edit", "logbook.delete", "admin.create_person"}


def _post_rules(app: Flask) -> dict[str, str]:
    return {r.endpoint: r.rule for r in app.url_map.iter_rules() if "POST" in (r.methods or set())}


def _target(app: Flask) -> tuple[int, str, int]:
    mara = person_id(app, "mara")
    with app.app_context():
        row = repository.current_entries(db_session(), mara)[0]
        return mara, row.external_id, row.version


def _request(app: Flask, endpoint: str) -> tuple[str, dict[str, Any]]:
    mara, ref, version = _target(app)
    url = _post_rules(app)[endpoint].replace("<int:pilot_id>", str(mara)).replace("<int:person_id>", str(mara)).replace("<ref>", ref)
    email, password = PASSWORDS["mara"]
    data = {
        "auth.login": {"email": email, "password": password},
        "logbook.create": form_data(),
        "logbook.edit": form_data(version=str(version), date="2026-06-03"),
        "logbook.delete": {"version": str(version)},
        "logbook.restore": {"version": str(version)},
        "admin.create_person": person_form(),
        "admin.edit_person": person_form(name="Mara Oyelaran", email=email, password="", medical_expires="2029-01-31"),
        "dashboard.what_if": {"date": "2026-12-10", "approaches": "6", "holds": "1"},
        "plan.propose": {"start": "2026-12-01", "end": "2026-12-03", "weather": "METAR QJRR 011753Z 27012KT 10SM CLR 12/01 A2990",
                         "vmc_ceiling_ft": "3000", "vmc_visibility_sm": "5"},
        "plan.save": {"start": "2026-12-01", "end": "2026-12-03", "weather": "METAR QJRR 011753Z 27012KT 10SM CLR 12/01 A2990",
                      "vmc_ceiling_ft": "3000", "vmc_visibility_sm": "5"},
        "plan.accept": {"session_id": "1", "version": "1"},
        "plan.cancel": {"session_id": "1", "version": "1"},
        "plan.move": {"session_id": "1", "version": "1", "starts_at": "2026-12-02T10:00"},
        "plan.flown": {"session_id": "1", "version": "1"},
    }.get(endpoint, {})
    return url, data


def _client(app: Flask, who: str | None) -> FlaskClient:
    client = app.test_client()
    if who is not None:
        sign_in(client, who)
    return client


def test_every_post_route_is_checked(app: Flask) -> None:
    assert set(_post_rules(app)) == set(POST_ROUTES)


@pytest.mark.parametrize("endpoint", sorted(POST_ROUTES))
@pytest.mark.parametrize("token", ["missing", "forged"])
def test_a_post_without_a_valid_csrf_token_is_refused_and_writes_nothing(app: Flask, endpoint: str, token: str) -> None:
    client = _client(app, POST_ROUTES[endpoint])
    url, data = _request(app, endpoint)
    if token == "forged":
        data = dict(data, csrf_token="IjAwMDAwMDAwMDAwMDAwMDAwMDAwMDAwMDAwMDAwMDAwMDAwMDAwMDAi.aaaaaa.bbbbbbbbbbbbbbbbbbbbbbbbbbb")
    before = state(app)
    response = client.post(url, data=data)
    assert response.status_code == 400, f"POST {url} answered {response.status_code}"
    assert state(app) == before
    if POST_ROUTES[endpoint] is not None:
        # Still signed in as before: a refused sign-out does not sign out.
        assert client.get("/settings").status_code == 200


@pytest.mark.parametrize("endpoint", sorted(GOES_THROUGH))
def test_the_same_post_with_the_real_token_goes_through(app: Flask, endpoint: str) -> None:
    client = _client(app, POST_ROUTES[endpoint])
    url, data = _request(app, endpoint)
    page = client.get("/login" if endpoint == "auth.login" else
                      "/settings" if endpoint == "auth.logout" else
                      url.replace("/delete", "") if endpoint == "logbook.delete" else url)
    assert page.status_code == 200
    response = client.post(url, data=dict(data, csrf_token=csrf(page.get_data(as_text=True))))
    assert response.status_code == 302, f"POST {url} answered {response.status_code}"
