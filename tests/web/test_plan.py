"""The planning page (issue 5 point 9): propose, save, accept, move, cancel; on the demo school's December proposals.

The expectations come from the stored sessions themselves and from the
planner's own rules: a stale version is refused, a move keeps the length, a
person or aircraft is never in two active sessions at once.
"""

from __future__ import annotations

import html
import re
from datetime import UTC, date, datetime, timedelta
from zoneinfo import ZoneInfo

import pytest
from flask import Flask
from flask.testing import FlaskClient

from planner import planning
from planner.db import models, repository
from planner.web import db_session
from tests.web.dash_fixtures import OTHER_SCHOOL, add_other_school, csrf, person_id, sign_in, sign_in_as
from tests.web.plan_fixtures import NOW, papp, plan_database, session_with, stored_sessions  # noqa: F401


def _staff(app: Flask) -> tuple[FlaskClient, str]:
    client = app.test_client()
    sign_in(client, "hollis")
    page = client.get("/plan")
    assert page.status_code == 200
    return client, csrf(page.get_data(as_text=True))


def test_the_page_lists_the_schools_sessions_with_their_actions_for_staff_only(papp: Flask) -> None:
    client, _ = _staff(papp)
    page = client.get("/plan").get_data(as_text=True)
    for s in stored_sessions(papp):
        assert f'id="session-{s["id"]}"' in page
    assert page.count(">Accept</button>") == len(stored_sessions(papp))
    assert "advisory" in page.lower()
    pilot = papp.test_client()
    sign_in(pilot, "mara")
    assert pilot.get("/plan").status_code == 404


def test_proposing_shows_reasons_and_unmet_needs_and_stores_nothing(papp: Flask) -> None:
    client, token = _staff(papp)
    before = stored_sessions(papp)
    response = client.post("/plan/propose", data={"csrf_token": token, "start": "2026-12-01", "end": "2026-12-28"})
    page = response.get_data(as_text=True)
    assert response.status_code == 200
    assert page.count("Why this slot:") == page.count("Why this partner:")
    # Priya's lapsed instrument currency needs an IPC (14 CFR 61.57(d)): listed as not plannable, with the reason.
    assert re.search(r"<td>Priya Castellano</td><td>instrument \(airplane\)</td><td>[\d-]+</td><td>only ipc or instrument-practical-test", page)
    assert stored_sessions(papp) == before


def test_saving_stores_what_the_proposal_showed(papp: Flask) -> None:
    client, token = _staff(papp)
    data = {"csrf_token": token, "start": "2026-12-14", "end": "2026-12-31"}
    shown = client.post("/plan/propose", data=data).get_data(as_text=True).count("Why this slot:")
    assert shown > 0, "the demo school still has needs to plan after mid-December"
    before = {s["id"] for s in stored_sessions(papp)}
    response = client.post("/plan/save", data=data)
    assert response.status_code == 302 and response.headers["Location"].endswith("/plan")
    new = [s for s in stored_sessions(papp) if s["id"] not in before]
    assert len(new) == shown and all(s["status"] == "proposed" and s["version"] == 1 for s in new)


def test_a_save_that_another_instructor_booked_first_is_refused_with_the_clash_and_stores_nothing(
    papp: Flask, monkeypatch: pytest.MonkeyPatch
) -> None:
    client, token = _staff(papp)
    data = {"csrf_token": token, "start": "2026-12-14", "end": "2026-12-31"}
    with papp.app_context():  # our proposal, computed before the other instructor's save below
        school = repository.find_by(db_session(), models.School, slug="juniper-ridge")
        ours = planning.propose_sessions(db_session(), school.id, date(2026, 12, 14), date(2026, 12, 31), now=NOW)
    assert ours.plan.sessions
    assert client.post("/plan/save", data=data).status_code == 302  # the other instructor's save lands first
    before = stored_sessions(papp)
    monkeypatch.setattr(planning, "propose_sessions", lambda *args, **kwargs: ours)
    response = client.post("/plan/save", data=data)
    assert response.status_code == 409
    error = re.search(r'<p class="field-error" id="end-error">([^<]*)</p>', response.get_data(as_text=True))
    assert error, "the refusal is shown at the form"
    text = html.unescape(error.group(1))
    assert text.startswith("Not saved: the proposed session 2026-12-") and "clashes: practice session " in text
    assert re.search(r"already holds (aircraft N\w+|[A-Z][a-z]+ [A-Z][a-z]+ \([a-z ]+\))", text), text
    assert text.endswith("Nothing was stored; propose again to plan around it.")
    assert stored_sessions(papp) == before


def test_bad_dates_get_a_message_at_the_field_and_nothing_is_stored(papp: Flask) -> None:
    client, token = _staff(papp)
    before = stored_sessions(papp)
    cases = [
        ({"start": "2026-13-01", "end": "2026-12-28"}, "start", "Not a valid date value."),
        ({"start": "", "end": "2026-12-28"}, "start", "Give the first day to plan"),
        ({"start": "2026-12-28", "end": "2026-12-01"}, "end", "must not be before the first"),
        ({"start": "2026-12-01", "end": "2027-06-01"}, "end", "at most 93 days"),
        ({"start": "2026-10-01", "end": "2026-10-05"}, "end", "The range has passed"),
    ]
    for url in ("/plan/propose", "/plan/save"):
        for fields, field, message in cases:
            response = client.post(url, data={"csrf_token": token, **fields})
            assert response.status_code == 400, (url, fields)
            error = re.search(rf'<p class="field-error" id="{field}-error">([^<]*)</p>', response.get_data(as_text=True))
            assert error and message in error.group(1), (url, fields)
    assert stored_sessions(papp) == before


def test_accept_with_the_current_version_books_it_and_a_stale_version_is_refused(papp: Flask) -> None:
    client, token = _staff(papp)
    s = stored_sessions(papp)[0]
    stale = client.post("/plan/accept", data={"csrf_token": token, "session_id": s["id"], "version": s["version"] - 1 or 99})
    assert stale.status_code == 409 and "someone changed this session" in stale.get_data(as_text=True)
    assert stored_sessions(papp)[0]["status"] == "proposed"
    ok = client.post("/plan/accept", data={"csrf_token": token, "session_id": s["id"], "version": s["version"]})
    assert ok.status_code == 302
    now = stored_sessions(papp)[0]
    assert (now["status"], now["version"], now["sequence"]) == ("accepted", s["version"] + 1, s["sequence"] + 1)
    again = client.post("/plan/accept", data={"csrf_token": token, "session_id": s["id"], "version": now["version"]})
    assert again.status_code == 400 and "only a proposed one can be accepted" in again.get_data(as_text=True)


def test_cancel_keeps_the_session_as_cancelled(papp: Flask) -> None:
    client, token = _staff(papp)
    s = stored_sessions(papp)[0]
    assert client.post("/plan/cancel", data={"csrf_token": token, "session_id": s["id"], "version": s["version"]}).status_code == 302
    assert stored_sessions(papp)[0]["status"] == "cancelled"


def test_move_keeps_the_length_and_refuses_bad_times_and_clashes(papp: Flask) -> None:
    client, token = _staff(papp)
    first, second = stored_sessions(papp)[:2]
    base = {"csrf_token": token, "session_id": first["id"], "version": first["version"]}
    for text, message in [("next tuesday", "give the new start as date and time"),
                          ("2026-11-20T09:00", "the new start has passed"),
                          ("2026-12-20T09:00+01:00", "without a zone")]:
        response = client.post("/plan/move", data={**base, "starts_at": text})
        assert response.status_code == 400 and message in response.get_data(as_text=True), text
    # Onto the other session's time: both December sessions use the aircraft N417JR, so it is busy then.
    assert first["aircraft"] == second["aircraft"]
    clash_start = second["starts_at"].astimezone(ZoneInfo("America/Denver")).strftime("%Y-%m-%dT%H:%M")
    response = client.post("/plan/move", data={**base, "starts_at": clash_start})
    text = response.get_data(as_text=True)
    # The message names the clashing session and what it holds (the aircraft, here).
    assert response.status_code == 400 and f"practice session {second['id']} (proposed, " in text
    assert "already holds aircraft N417JR" in text
    assert stored_sessions(papp)[0]["starts_at"] == first["starts_at"]
    moved = client.post("/plan/move", data={**base, "starts_at": "2026-12-21T10:00"})
    assert moved.status_code == 302
    after = stored_sessions(papp)
    row = next(s for s in after if s["id"] == first["id"])
    assert row["starts_at"] == datetime(2026, 12, 21, 17, tzinfo=UTC)  # 10:00 MST = 17:00 UTC
    assert row["ends_at"] - row["starts_at"] == first["ends_at"] - first["starts_at"]


def test_changes_need_the_csrf_token_and_another_schools_instructor_gets_404(papp: Flask) -> None:
    client, _ = _staff(papp)
    s = stored_sessions(papp)[0]
    assert client.post("/plan/accept", data={"session_id": s["id"], "version": s["version"]}).status_code == 400
    add_other_school(papp)
    elsewhere = papp.test_client()
    sign_in_as(elsewhere, *OTHER_SCHOOL["instructor"])
    token = csrf(elsewhere.get("/plan").get_data(as_text=True))
    for url in ("/plan/accept", "/plan/cancel", "/plan/move"):
        assert elsewhere.post(url, data={"csrf_token": token, "session_id": s["id"], "version": s["version"],
                                         "starts_at": "2026-12-22T10:00"}).status_code == 404
    assert stored_sessions(papp)[0] == s


def test_a_pilot_sees_their_own_sessions_on_the_dashboard_with_the_calendar_link(papp: Flask) -> None:
    client = papp.test_client()
    sign_in(client, "mara")
    page = client.get("/").get_data(as_text=True)
    s = session_with(papp, "mara")
    assert f'id="my-session-{s["id"]}"' in page and "with Rafael Okonkwo-Berg" in page
    assert f'/pilots/{person_id(papp, "mara")}/calendar.ics' in page
    dev = papp.test_client()
    sign_in(dev, "dev")
    assert "No practice session planned." in dev.get("/").get_data(as_text=True)


# A TAF for the demo airfield, valid 1 Dec 12:00Z to 2 Dec 18:00Z (read off its validity group by hand).
TAF = "TAF QJRR 011120Z 0112/0218 27012KT P6SM SCT050\n  FM012000 30008KT 5SM BR BKN015\n  FM020600 30008KT P6SM SKC\n"


def test_pasted_reports_decide_the_slots_they_cover_and_the_page_says_which_source(papp: Flask) -> None:
    client, token = _staff(papp)
    # Free Priya's Wednesday 2 Dec again (the fixture stored a proposal there), so a session falls inside the TAF.
    for s in stored_sessions(papp):
        assert client.post("/plan/cancel", data={"csrf_token": token, "session_id": s["id"],
                                                 "version": s["version"]}).status_code == 302
    data = {"csrf_token": token, "start": "2026-12-01", "end": "2026-12-16", "weather": TAF,
            "vmc_ceiling_ft": "3000", "vmc_visibility_sm": "5"}
    page = client.post("/plan/propose", data=data).get_data(as_text=True)
    heads = re.findall(r'<h2 id="proposal-\d+-h">(\d{4}-\d\d-\d\d \d\d:\d\d)', page)
    sources = re.findall(r'<p class="vmc-source source-([a-z-]+)"><strong>Weather \(([a-z ]+)\):</strong>', page)
    assert heads and len(sources) == len(heads) == page.count("Why this slot:")
    for head, (_, source) in zip(heads, sources):
        start = datetime.fromisoformat(head).replace(tzinfo=ZoneInfo("America/Denver"))
        inside = datetime(2026, 12, 1, 12, tzinfo=UTC) <= start and start + timedelta(hours=2) <= datetime(2026, 12, 2, 18, tzinfo=UTC)
        assert source == ("report text" if inside else "climatology"), head
    assert "report text" in {source for _, source in sources}, "Priya's Wednesday 2 Dec lies inside the TAF"
    assert "1 pasted or imported report for QJRR" in page
    # Saving uses the same reports: the stored explanation names the TAF for the session inside its validity.
    before = {s["id"] for s in stored_sessions(papp)}
    assert client.post("/plan/save", data=data).status_code == 302
    with papp.app_context():
        from planner.db import models
        from planner.web import db_session

        rows = [db_session().get(models.PracticeSession, s["id"]) for s in stored_sessions(papp) if s["id"] not in before]
        lines = [line for row in rows for line in row.explanation.splitlines() if line.startswith("Weather: ")]
    assert any(line.startswith("Weather: VMC likelihood 100% from the report text: TAF QJRR 011120Z") for line in lines)


def test_unreadable_reports_and_bad_minimums_get_a_message_at_the_field_and_nothing_is_stored(papp: Flask) -> None:
    client, token = _staff(papp)
    before = stored_sessions(papp)
    base = {"csrf_token": token, "start": "2026-12-01", "end": "2026-12-28"}
    cases = [
        ({"weather": TAF.replace("P6SM SKC", "P6SM SKX")}, "weather", "Line 3: "),
        ({"weather": "hello\nMETAR QJRR 011753Z 27012KT 10SM CLR 12/11 A2990"}, "weather", "Line 1: not the start of a report"),
        ({"weather": "METAR " * 5000}, "weather", "At most 20,000 characters."),
        ({"vmc_ceiling_ft": "20000"}, "vmc_ceiling_ft", "From 0 to 10,000 ft."),
        ({"vmc_ceiling_ft": "9" * 40}, "vmc_ceiling_ft", "Not a valid integer value."),
        ({"vmc_visibility_sm": "nan"}, "vmc_visibility_sm", "Give a number."),
        ({"vmc_visibility_sm": "12"}, "vmc_visibility_sm", "From 0 to 10 SM."),
    ]
    for url in ("/plan/propose", "/plan/save"):
        for fields, field, message in cases:
            response = client.post(url, data={**base, **fields})
            assert response.status_code == 400, (url, fields)
            text = response.get_data(as_text=True)
            error = re.search(rf'<p class="field-error" id="{field}-error">([^<]*)</p>', text)
            assert error and message in error.group(1), (url, fields, error and error.group(1))
            assert 'aria-invalid="true"' in text
    assert stored_sessions(papp) == before


def test_the_daylight_only_option_is_kept_on_the_proposals_page(papp: Flask) -> None:
    client, token = _staff(papp)
    page = client.post("/plan/propose", data={"csrf_token": token, "start": "2026-12-01", "end": "2026-12-10",
                                              "daylight_only": "y"}).get_data(as_text=True)
    assert "Daylight only for this plan, whatever the pilots&#39; night settings" in page
    assert re.search(r'<input checked id="daylight_only" name="daylight_only" type="checkbox" value="y">', page)
