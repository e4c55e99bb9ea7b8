"""After a flown session (issue 5 point 8): mark it flown, draft both seats' logbook entries, save through the logbook.

December demo sessions: Priya flies with Hollis (unusual attitudes and two
approaches); Rafael and Mara swap seats (Rafael: landings; Mara: two
approaches). What a draft must hold follows 14 CFR 61.51(g) (approach type
and place, safety pilot's name for simulated instrument time).
"""

from __future__ import annotations

from flask import Flask
from flask.testing import FlaskClient

from planner import planning
from planner.db import models, repository
from planner.web import db_session
from tests.web.dash_fixtures import csrf, person_id, sign_in
from tests.web.page_forms import form_fields
from tests.web.plan_fixtures import papp, plan_database, session_with, stored_sessions  # noqa: F401

AFTER = "2026-12-20"  # both December sessions have been flown by then


def _accept(app: Flask, sid: int) -> None:
    client = app.test_client()
    sign_in(client, "hollis")
    token = csrf(client.get("/plan").get_data(as_text=True))
    version = next(s for s in stored_sessions(app) if s["id"] == sid)["version"]
    assert client.post("/plan/accept", data={"csrf_token": token, "session_id": sid, "version": version}).status_code == 302


def _mark_flown(app: Flask, client: FlaskClient, sid: int):  # type: ignore[no-untyped-def]
    token = csrf(client.get("/settings").get_data(as_text=True))
    version = next(s for s in stored_sessions(app) if s["id"] == sid)["version"]
    return client.post("/plan/flown", data={"csrf_token": token, "session_id": sid, "version": version})


def _balance(app: Flask) -> dict:
    with app.app_context():
        school = repository.find_by(db_session(), models.School, slug="juniper-ridge")
        return planning.balance(db_session(), school.id)


def test_marking_flown_drafts_both_seats_and_the_balance_counts_the_flown_legs(papp: Flask) -> None:
    mutual = session_with(papp, "mara")
    assert mutual["mutual"] and {mutual["pf"], mutual["sp"]} == {"Mara Oyelaran", "Rafael Okonkwo-Berg"}
    mara, rafael = person_id(papp, "mara"), person_id(papp, "rafael")
    assert (mara, rafael) not in _balance(papp), "a proposed session does not count"
    _accept(papp, mutual["id"])
    papp.config["PLANNER_TODAY"] = AFTER
    client = papp.test_client()
    sign_in(client, "mara")
    response = _mark_flown(papp, client, mutual["id"])
    assert response.status_code == 302
    assert response.headers["Location"].endswith(f"/pilots/{mara}/logbook/from-session?session={mutual['id']}")
    assert next(s for s in stored_sessions(papp) if s["id"] == mutual["id"])["status"] == "flown"
    balance = _balance(papp)
    assert balance[(mara, rafael)] == 1 and balance[(rafael, mara)] == 1  # both ways: seats swapped

    page = client.get(response.headers["Location"]).get_data(as_text=True)
    data = form_fields(page, "entry-form")
    assert data["date"] == "2026-12-12" and data["aircraft"] == "N417JR" and data["conditions"] == "simulated"
    assert data["safety_pilot"] == "Rafael Okonkwo-Berg"
    assert [data["approaches-0-type"], data["approaches-1-type"]] == ["ILS", "RNAV (GPS)"]
    assert data["approaches-0-airfield"] == data["approaches-1-airfield"] == "QJRR"
    assert float(data["instrument_simulated_hours"]) > 0 and float(data["total_hours"]) >= float(data["instrument_simulated_hours"])

    # Mara reviews and saves through the normal entry form.
    data["save"] = "Save entry"
    saved = client.post(f"/pilots/{mara}/logbook/new", data=data)
    assert saved.status_code == 302
    with papp.app_context():
        row = repository.find_entry(db_session(), mara, saved.headers["Location"].rsplit("/", 1)[1])
        entry = repository.entry_to_core(row)
    assert len(entry.approaches) == 2 and entry.safety_pilot == "Rafael Okonkwo-Berg" and entry.conditions == "simulated"

    # Rafael's draft: his leg was landings (no approaches); he was Mara's safety pilot on the other leg.
    other = papp.test_client()
    sign_in(other, "rafael")
    draft = form_fields(other.get(f"/pilots/{rafael}/logbook/from-session?session={mutual['id']}").get_data(as_text=True), "entry-form")
    assert draft["safety_pilot"] == "Mara Oyelaran" and draft["approaches-0-type"] == ""
    assert "Safety pilot for Mara Oyelaran" in draft["remarks"] and float(draft["total_hours"]) > 0


def test_the_pilot_flyings_draft_holds_unusual_attitudes_and_the_safety_pilot_name(papp: Flask) -> None:
    s = session_with(papp, "priya")
    assert (s["pf"], s["sp"]) == ("Priya Castellano", "Hollis Varga")
    _accept(papp, s["id"])
    papp.config["PLANNER_TODAY"] = AFTER
    staff = papp.test_client()
    sign_in(staff, "hollis")  # staff of the school may mark it flown
    assert _mark_flown(papp, staff, s["id"]).status_code == 302
    with papp.app_context():
        entry = planning.draft_entry(db_session(), s["id"], person_id(papp, "priya"))
    assert (entry.ua_nose_high, entry.ua_nose_low) == (1, 1)
    assert len(entry.approaches) == 2 and entry.safety_pilot == "Hollis Varga"
    assert entry.aircraft == "N417JR" and entry.aircraft_class == "single-engine-land"


def test_a_session_cannot_be_marked_flown_before_it_begins_or_unless_accepted(papp: Flask) -> None:
    s = session_with(papp, "mara")
    client = papp.test_client()
    sign_in(client, "mara")
    response = _mark_flown(papp, client, s["id"])  # still proposed
    assert response.status_code == 302
    assert "only an accepted one can be marked flown" in client.get("/").get_data(as_text=True)
    _accept(papp, s["id"])
    response = _mark_flown(papp, client, s["id"])  # today is 2026-12-01, the session is on 2026-12-12
    assert "has not begun yet" in client.get(response.headers["Location"]).get_data(as_text=True)
    assert next(x for x in stored_sessions(papp) if x["id"] == s["id"])["status"] == "accepted"
    # No draft before it is flown; someone outside the session gets 404.
    assert "mark it flown first" in client.get(
        f"/pilots/{person_id(papp, 'mara')}/logbook/from-session?session={s['id']}", follow_redirects=True).get_data(as_text=True)
    outsider = papp.test_client()
    sign_in(outsider, "tobias")
    assert _mark_flown(papp, outsider, s["id"]).status_code == 404
    assert outsider.get(f"/pilots/{person_id(papp, 'tobias')}/logbook/from-session?session={s['id']}").status_code == 404
