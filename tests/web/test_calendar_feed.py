"""Calendar subscription feed and download (issue 5 point 6), on the demo school with its December proposals.

The feeds are parsed by vobject, an independent iCalendar (RFC 5545) parser;
the token's hash is checked with hashlib's SHA-256 (standard library).
"""

from __future__ import annotations

import base64
import hashlib
import re

import vobject
from sqlalchemy import select
from flask import Flask
from flask.testing import FlaskClient

from planner import planning
from planner.db import models
from planner.web import db_session
from tests.web.dash_fixtures import csrf, person_id, sign_in
from tests.web.plan_fixtures import NOW, papp, plan_database, session_with  # noqa: F401


def _create_link(client: FlaskClient) -> str:
    """Create a link from the settings page; return the https URL shown once."""
    token = csrf(client.get("/settings").get_data(as_text=True))
    response = client.post("/settings/calendar-link", data={"csrf_token": token})
    assert response.status_code == 200
    page = response.get_data(as_text=True)
    url = re.search(r'<code id="feed-url">([^<]+)</code>', page).group(1)
    webcal = re.search(r'<a id="feed-webcal" href="([^"]+)"', page).group(1)
    assert url.startswith("https://") and url.endswith(".ics")
    assert webcal == "webcal://" + url.removeprefix("https://")
    return url


def _path(url: str) -> str:
    return "/" + url.split("://", 1)[1].split("/", 1)[1]


def _uids(body: bytes) -> set[str]:
    cal = vobject.readOne(body.decode("utf-8"))
    return {ev.uid.value for ev in cal.contents.get("vevent", [])}


def test_a_new_token_carries_at_least_128_bits_and_only_its_sha256_is_stored(papp: Flask) -> None:
    with papp.app_context():
        session = db_session()
        mara = person_id(papp, "mara")
        token = planning.create_feed_token(session, mara, now=NOW)
        session.commit()
        raw = base64.urlsafe_b64decode(token + "=" * (-len(token) % 4))
        assert len(raw) * 8 >= 128
        rows = list(session.scalars(select(models.CalendarFeedToken)))
        assert [r.token_hash for r in rows] == [hashlib.sha256(token.encode()).hexdigest()]
        assert planning.feed_person(session, token) == mara
        assert planning.feed_person(session, token[:-1]) is None


def test_the_settings_link_serves_the_pilots_calendar_without_sign_in_and_it_parses(papp: Flask) -> None:
    client = papp.test_client()
    sign_in(client, "mara")
    page = client.get("/settings").get_data(as_text=True)
    assert "Calendar subscription" in page and "No link is active." in page
    url = _create_link(client)
    anonymous = papp.test_client()
    response = anonymous.get(_path(url))
    assert response.status_code == 200
    assert response.headers["Content-Type"] == "text/calendar; charset=utf-8"
    cal = vobject.readOne(response.get_data(as_text=True))
    assert cal.x_wr_calname.value == "Instrument practice: Mara Oyelaran"
    assert session_with(papp, "mara")["uid"] in _uids(response.data)
    # Afterwards the page says a link is active but never shows it again.
    again = client.get("/settings").get_data(as_text=True)
    assert "A link is active since 2026-12-01" in again and _path(url) not in again


def test_revoking_the_link_makes_the_feed_answer_404(papp: Flask) -> None:
    client = papp.test_client()
    sign_in(client, "mara")
    url = _create_link(client)
    assert papp.test_client().get(_path(url)).status_code == 200
    token = csrf(client.get("/settings").get_data(as_text=True))
    response = client.post("/settings/calendar-link/revoke", data={"csrf_token": token})
    assert response.status_code == 302
    assert papp.test_client().get(_path(url)).status_code == 404
    assert "No link is active." in client.get("/settings").get_data(as_text=True)


def test_a_new_link_replaces_the_old_one(papp: Flask) -> None:
    client = papp.test_client()
    sign_in(client, "mara")
    first = _create_link(client)
    second = _create_link(client)
    assert first != second
    assert papp.test_client().get(_path(first)).status_code == 404
    assert papp.test_client().get(_path(second)).status_code == 200


def test_another_pilots_token_shows_only_that_pilots_calendar(papp: Flask) -> None:
    mara_client, priya_client = papp.test_client(), papp.test_client()
    sign_in(mara_client, "mara")
    sign_in(priya_client, "priya")
    mara_feed = papp.test_client().get(_path(_create_link(mara_client)))
    priya_feed = papp.test_client().get(_path(_create_link(priya_client)))
    mara_uid, priya_uid = session_with(papp, "mara")["uid"], session_with(papp, "priya")["uid"]
    assert mara_uid != priya_uid
    assert mara_uid in _uids(mara_feed.data) and priya_uid not in _uids(mara_feed.data)
    assert priya_uid in _uids(priya_feed.data) and mara_uid not in _uids(priya_feed.data)
    cal = vobject.readOne(priya_feed.get_data(as_text=True))
    assert cal.x_wr_calname.value == "Instrument practice: Priya Castellano"
    assert "Mara" not in "".join(ev.summary.value for ev in cal.contents["vevent"])


def test_unknown_and_malformed_tokens_answer_404(papp: Flask) -> None:
    client = papp.test_client()
    assert client.get("/calendar/" + "A" * 43 + ".ics").status_code == 404
    assert client.get("/calendar/" + "A" * 500 + ".ics").status_code == 404
    assert client.get("/calendar/.ics").status_code == 404


def test_creating_or_revoking_a_link_needs_the_csrf_token(papp: Flask) -> None:
    client = papp.test_client()
    sign_in(client, "mara")
    assert client.post("/settings/calendar-link", data={}).status_code == 400
    assert client.post("/settings/calendar-link/revoke", data={}).status_code == 400
    with papp.app_context():
        assert planning.feed_status(db_session(), person_id(papp, "mara")) is None


def test_the_signed_in_download_follows_the_access_rule(papp: Flask) -> None:
    mara = person_id(papp, "mara")
    client = papp.test_client()
    sign_in(client, "mara")
    response = client.get(f"/pilots/{mara}/calendar.ics")
    assert response.status_code == 200 and response.headers["Content-Type"] == "text/calendar; charset=utf-8"
    assert "attachment" in response.headers["Content-Disposition"]
    assert session_with(papp, "mara")["uid"] in _uids(response.data)
    other = papp.test_client()
    sign_in(other, "tobias")
    assert other.get(f"/pilots/{mara}/calendar.ics").status_code == 404
    instructor = papp.test_client()
    sign_in(instructor, "hollis")
    assert instructor.get(f"/pilots/{mara}/calendar.ics").status_code == 200
