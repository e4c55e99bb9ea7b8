"""Per-pilot settings pages (Flask test client, real demo scenario)."""

from __future__ import annotations

import html
import re

import pytest
from flask import Flask
from flask.testing import FlaskClient

from planner import services
from planner.web import db_session
from tests.web.dash_fixtures import app, client, csrf, demo_database, person_id, sign_in  # noqa: F401


def _form(client: FlaskClient, url: str) -> dict:
    page = client.get(url).get_data(as_text=True)
    data: dict = {"csrf_token": csrf(page), "rule_sets": re.findall(r'<input checked id="rule_sets-\d" name="rule_sets"[^>]*value="([^"]+)"', page)}
    for name, value in re.findall(r'<input id="(pt\d+_\w+)"[^>]*value="([^"]*)"', page):
        data[name] = value
    data["home_airfield"] = (re.search(r'<option selected value="([^"]*)"', page) or re.search(r'<option value="([^"]*)" selected', page)).group(1)
    data["timezone"] = re.search(r'name="timezone"[^>]*value="([^"]*)"', page).group(1)
    return data


def _person(app: Flask, who: str):  # type: ignore[no-untyped-def]
    with app.app_context():
        p = services.get_pilot(db_session(), person_id(app, who))
        return {"rule_sets": p.rule_sets, "targets": p.practice_targets, "tz": p.timezone,
                "home": p.home_airfield.ident if p.home_airfield else None}


def test_the_form_shows_the_pilots_current_settings(client: FlaskClient) -> None:
    sign_in(client, "mara")
    data = _form(client, "/settings")
    assert data["rule_sets"] == ["faa-part61", "practice-targets"]
    assert data["home_airfield"] == "QJRR" and data["timezone"] == "America/Denver"
    assert data["pt0_days"] == "90" and data["pt0_0"] == "1"


def test_saving_changes_rule_sets_targets_airfield_and_zone_and_the_dashboard_follows(app: Flask, client: FlaskClient) -> None:
    sign_in(client, "dev")
    data = _form(client, "/settings")
    data.update({"rule_sets": ["faa-part61", "easa-fcl", "practice-targets"], "pt0_days": "400", "pt0_0": "1",
                 "home_airfield": "QPNV", "timezone": "America/Boise"})
    response = client.post("/settings", data=data)
    assert response.status_code == 302
    saved = _person(app, "dev")
    assert saved == {"rule_sets": ["faa-part61", "easa-fcl", "practice-targets"],
                     "targets": {"partial-panel": {"days": 400}}, "tz": "America/Boise", "home": "QPNV"}
    page = client.get("/").get_data(as_text=True)
    assert 'id="rs-easa-fcl"' in page
    # Dev's last partial-panel approach was on 2026-03-21; with a 400-day interval it counts through 2027-04-25.
    block = re.search(r'id="req-practice-targets-partial-panel-pilot".*?</article>', page, re.S).group(0)
    assert "badge-current" in block and "2027-04-25" in block


def test_a_value_equal_to_the_default_stores_no_override(app: Flask, client: FlaskClient) -> None:
    sign_in(client, "mara")
    assert client.post("/settings", data=_form(client, "/settings")).status_code == 302
    assert _person(app, "mara")["targets"] == {}


@pytest.mark.parametrize(
    ("changes", "field", "message"),
    [
        ({"timezone": "Mars/Olympus_Mons"}, "timezone", "not a known IANA time zone name"),
        ({"timezone": "../../etc/passwd"}, "timezone", "not a known IANA time zone name"),
        ({"timezone": ""}, "timezone", "Give the time zone of your home base."),
        ({"rule_sets": []}, "rule_sets", "Choose at least one rule set."),
        ({"rule_sets": ["faa-part61", "no-such-set"]}, "rule_sets", "is not a valid choice"),
        ({"home_airfield": "ZZZZ"}, "home_airfield", "Not a valid choice"),
        ({"pt0_days": "0"}, "pt0_days", "From 1 to 3660 days."),
        ({"pt0_days": "ninety"}, "pt0_days", "Not a valid integer value."),
        ({"pt3_0": "-2"}, "pt3_0", "From 0.1 to 100."),
    ],
)
def test_bad_values_are_redisplayed_with_a_message_at_the_field_and_nothing_is_saved(
    app: Flask, client: FlaskClient, changes: dict, field: str, message: str
) -> None:
    before = _person(app, "mara")
    sign_in(client, "mara")
    data = _form(client, "/settings")
    data["pt1_0"] = "3"  # a valid change typed alongside the bad one
    data.update(changes)
    response = client.post("/settings", data=data)
    page = response.get_data(as_text=True)
    assert response.status_code == 400
    errors = re.search(rf'<p class="field-error" id="{field}-error">([^<]*)</p>', page)
    assert errors and message in html.unescape(errors.group(1))
    assert re.search(r'id="pt1_0"[^>]*value="3"', page), "what was typed is kept"
    if field != "timezone":
        assert html.escape(changes.get("timezone", "America/Denver")) in page
    assert _person(app, "mara") == before


def test_instructor_edits_a_pilots_settings_of_the_school(app: Flask, client: FlaskClient) -> None:
    pid = person_id(app, "signe")
    sign_in(client, "hollis")
    data = _form(client, f"/pilots/{pid}/settings")
    data["pt2_days"] = "45"
    response = client.post(f"/pilots/{pid}/settings", data=data)
    assert response.status_code == 302 and response.headers["Location"].endswith(f"/pilots/{pid}/settings")
    assert _person(app, "signe")["targets"] == {"hand-flown-approach": {"days": 45}}


def test_a_pilot_cannot_open_or_change_another_pilots_settings(app: Flask, client: FlaskClient) -> None:
    pid = person_id(app, "tobias")
    sign_in(client, "mara")
    token = csrf(client.get("/settings").get_data(as_text=True))
    assert client.get(f"/pilots/{pid}/settings").status_code == 404
    before = _person(app, "tobias")
    assert client.post(f"/pilots/{pid}/settings", data={"csrf_token": token, "rule_sets": ["casa-part61"], "timezone": "UTC"}).status_code == 404
    assert _person(app, "tobias") == before


def test_an_account_without_a_logbook_gets_a_plain_page(client: FlaskClient) -> None:
    sign_in(client, "wren")
    response = client.get("/settings")
    assert response.status_code == 200 and "keeps no logbook" in response.get_data(as_text=True)


def _night(app: Flask, who: str) -> bool:
    with app.app_context():
        return services.get_pilot(db_session(), person_id(app, who)).night_practice


def test_night_practice_is_off_by_default_and_the_pilot_or_an_instructor_can_allow_it(app: Flask, client: FlaskClient) -> None:
    sign_in(client, "mara")
    page = client.get("/settings").get_data(as_text=True)
    assert re.search(r'<input id="night_practice" name="night_practice" type="checkbox" value="y">', page)  # unticked
    assert "14 CFR 61.57(b)" in page and _night(app, "mara") is False
    data = _form(client, "/settings")
    assert client.post("/settings", data={**data, "night_practice": "y"}).status_code == 302
    assert _night(app, "mara") is True
    assert re.search(r'<input checked id="night_practice" name="night_practice" type="checkbox" value="y">',
                     client.get("/settings").get_data(as_text=True))
    assert client.post("/settings", data=_form(client, "/settings")).status_code == 302  # box left unticked
    assert _night(app, "mara") is False

    instructor = app.test_client()
    sign_in(instructor, "hollis")
    pid = person_id(app, "signe")
    data = _form(instructor, f"/pilots/{pid}/settings")
    assert instructor.post(f"/pilots/{pid}/settings", data={**data, "night_practice": "y"}).status_code == 302
    assert _night(app, "signe") is True


def test_a_refused_save_leaves_the_night_setting_as_it_was(app: Flask, client: FlaskClient) -> None:
    sign_in(client, "mara")
    data = _form(client, "/settings")
    response = client.post("/settings", data={**data, "night_practice": "y", "timezone": "Mars/Olympus_Mons"})
    assert response.status_code == 400 and _night(app, "mara") is False
    # what was ticked stays ticked on the redisplayed form
    assert re.search(r'<input checked id="night_practice"', response.get_data(as_text=True))
