"""The dashboard on the real demo scenario, today pinned to 2026-12-01 (Flask test client).

Each page is compared with what the engine itself computes for that pilot
(``currency.evaluate`` on the pilot's logbook and rule sets), so the page can
only pass by showing the engine's states and dates.
"""

from __future__ import annotations

import html
import re

import pytest
from flask import Flask
from flask.testing import FlaskClient

from planner import CAUTION, rulesets, services
from planner.core import currency
from planner.db import repository
from planner.web import db_session
from tests.web.dash_fixtures import AS_OF, PILOTS, app, client, csrf, demo_database, person_id, sign_in  # noqa: F401

STATE_WORD = {"current": "Current", "grace": "Grace", "lapsed": "Lapsed"}


def _engine_report(app: Flask, pid: int) -> currency.CurrencyReport:
    """The engine's own answer, computed without the web layer."""
    with app.app_context():
        session = db_session()
        person = services.get_pilot(session, pid)
        logbook = services.load_logbook(session, pid)
        return currency.evaluate(logbook, rulesets.resolve(person.rule_sets), AS_OF)


def _article(page: str, status: currency.RequirementStatus) -> str:
    key = "-".join((status.rule_set, status.id, status.scope)).replace("/", "-")
    match = re.search(rf'<article[^>]*id="req-{re.escape(key)}".*?</article>', page, re.S)
    assert match, f"no block for {key}"
    return match.group(0)


def _text(fragment: str) -> str:
    return re.sub(r"\s+", " ", html.unescape(re.sub(r"<[^>]+>", " ", fragment)))


@pytest.mark.parametrize("who", PILOTS)
def test_each_demo_pilot_sees_exactly_the_states_and_dates_the_engine_computes(app: Flask, client: FlaskClient, who: str) -> None:
    pid = person_id(app, who)
    report = _engine_report(app, pid)
    sign_in(client, who)
    response = client.get("/")
    page = response.get_data(as_text=True)
    assert response.status_code == 200
    assert report.requirements, "the engine found requirements for every demo pilot"
    for status in report.requirements:
        block = _article(page, status)
        text = _text(block)
        assert f"badge-{status.state}" in block
        assert STATE_WORD[status.state] in text
        expected_date = status.valid_through.isoformat() if status.valid_through else "—"
        assert f"Valid through {expected_date}" in text
        if status.regain_by:
            assert status.regain_by.isoformat() in text
        assert html.escape(status.citation) in block
        hrefs = re.findall(r'<dd class="evidence">(.*?)</dd>', block, re.S)[0]
        linked = re.findall(r'href="/pilots/(\d+)/logbook/([^"]+)"', hrefs)
        assert linked == [(str(pid), ref) for ref in status.evidence]
        for warning in status.warnings:
            assert html.escape(warning) in block


def test_demo_states_in_words_match_the_scenario(app: Flask, client: FlaskClient) -> None:
    # Scenario anchored at 2026-12-01: tobias is in the 61.57(d) grace stage, priya needs an IPC.
    sign_in(client, "tobias")
    text = _text(client.get("/").get_data(as_text=True))
    assert "Grace: not current; regain with tasks until 2027-04-30" in text
    assert "Valid through 2026-10-31 (ended 31 days ago)" in text
    assert "6 approaches, 1 holding procedure, intercepting and tracking courses" in text
    client.post("/logout", data={"csrf_token": csrf(client.get("/").get_data(as_text=True))})
    sign_in(client, "priya")
    text = _text(client.get("/").get_data(as_text=True))
    assert "Lapsed: needs an instrument proficiency check or an instrument-rating practical test" in text
    client.post("/logout", data={"csrf_token": csrf(client.get("/").get_data(as_text=True))})
    sign_in(client, "mara")
    text = _text(client.get("/").get_data(as_text=True))
    assert "May fly IFR Valid through 2027-03-31 (120 days left)" in text


def test_caution_is_at_the_top_and_in_the_footer(client: FlaskClient) -> None:
    sign_in(client, "mara")
    page = client.get("/").get_data(as_text=True)
    main = page.split("<main", 1)[1].split("</main>", 1)[0]
    assert html.escape(CAUTION) in main.split("<h1", 1)[0]
    assert html.escape(CAUTION) in page.split("<footer", 1)[1]


def test_practice_targets_are_a_separate_section_labelled_not_regulation(client: FlaskClient) -> None:
    sign_in(client, "dev")
    page = client.get("/").get_data(as_text=True)
    practice = re.search(r'<section class="ruleset practice".*?</section>', page, re.S)
    assert practice and "Personal practice targets (not regulation)" in practice.group(0)
    # Dev: no partial-panel or unusual-attitude practice since 2026-03-21 (90-day target, product default).
    assert 'id="req-practice-targets-partial-panel-pilot"' in practice.group(0)
    assert "Valid through 2026-06-19" in _text(practice.group(0))
    regulatory = page.split('<section class="ruleset practice"', 1)[0]
    assert "practice-targets" not in regulatory.split("<main", 1)[1]


def test_a_pilot_under_two_regulators_sees_both_grouped(client: FlaskClient) -> None:
    sign_in(client, "rafael")
    page = client.get("/").get_data(as_text=True)
    faa = page.index('id="rs-faa-part61"')
    easa = page.index('id="rs-easa-fcl"')
    assert faa < easa
    assert page.index('id="req-faa-part61-instrument-airplane"') < easa < page.index('id="req-easa-fcl-instrument-rating-airplane"')


@pytest.mark.parametrize("who", PILOTS)
def test_every_evidence_link_opens_that_entry_of_that_pilot(app: Flask, client: FlaskClient, who: str) -> None:
    pid = person_id(app, who)
    report = _engine_report(app, pid)
    with app.app_context():
        dates = {e.id: e.date for e in services.load_logbook(db_session(), pid).entries}
    sign_in(client, who)
    page = client.get("/").get_data(as_text=True)
    followed = 0
    for status in report.requirements:
        block = _article(page, status)
        evidence = re.findall(r'<dd class="evidence">(.*?)</dd>', block, re.S)[0]
        links = re.findall(r'<a href="([^"]+)">([^<]+)</a>', evidence)
        assert [html.unescape(text) for _, text in links] == list(status.evidence)
        for href, text in links:
            ref = html.unescape(text)
            opened = client.get(html.unescape(href))
            assert opened.status_code == 200, href
            shown = opened.get_data(as_text=True)
            heading = _text(re.search(r"<h1>.*?</h1>", shown, re.S).group(0)).strip()
            # The page opened is that entry: its date (from the pilot's own logbook) and its id.
            assert heading == f"Entry of {dates[ref].isoformat()} ({ref})", href
            followed += 1
    assert followed > 0, f"{who}: the engine names no evidence at all"


def test_instructor_sees_a_pilot_of_the_school_and_lands_on_the_overview(app: Flask, client: FlaskClient) -> None:
    sign_in(client, "hollis")
    home = client.get("/")
    assert home.status_code == 302 and home.headers["Location"].endswith("/school")
    pid = person_id(app, "priya")
    page = client.get(f"/pilots/{pid}").get_data(as_text=True)
    assert "Priya Castellano: currency" in page
    assert "Lapsed: needs an instrument proficiency check" in _text(page)


def test_a_pilot_cannot_open_another_pilots_dashboard(app: Flask, client: FlaskClient) -> None:
    sign_in(client, "mara")
    assert client.get(f"/pilots/{person_id(app, 'tobias')}").status_code == 404
    assert client.get("/pilots/99999").status_code == 404


def test_timeline_is_inline_svg_without_scripts_with_a_title_and_description(app: Flask, client: FlaskClient) -> None:
    report = _engine_report(app, person_id(app, "tobias"))
    sign_in(client, "tobias")
    page = client.get("/").get_data(as_text=True)
    svg = re.search(r"<svg.*?</svg>", page, re.S).group(0)
    assert "<script" not in page and "style=" not in svg
    assert 'role="img"' in svg and "<title id=" in svg and "<desc id=" in svg
    assert svg.count('class="tl-row"') == len(report.requirements)
    desc = html.unescape(re.search(r"<desc[^>]*>(.*?)</desc>", svg, re.S).group(0))
    # The description states today's state of each row in words (same as the engine).
    assert "IFR experience · airplane: grace today, last valid day 2026-10-31, regain with tasks until 2027-04-30." in desc
    assert "Today 2026-12-01" in svg
    # Range: past 18 months and next 6.
    assert "Timeline from 2025-06-01 to 2027-06-01" in desc
    # Bands carry their state as words and a pattern, not colour alone.
    assert 'fill="url(#tl-grace)"' in svg and ">grace<" in svg
    assert "end of regain with tasks 2027-04-30" in svg


def _what_if_data(token: str, **overrides: str) -> dict[str, str]:
    data = {
        "csrf_token": token,
        "entries-0-day": "2026-12-10",
        "entries-0-setting": "simulated",
        "entries-0-approaches": "6",
        "entries-0-approach_type": "ILS",
        "entries-0-approach_airfield": "QJRR",
        "entries-0-holds": "1",
        "entries-0-course_tracking": "y",
        "entries-0-instrument_hours": "1.5",
        "entries-0-partial_panel": "0",
        "entries-0-ua_nose_high": "0",
        "entries-0-ua_nose_low": "0",
        "entries-0-landings": "1",
        "entries-0-check": "",
        "submit": "Show how the dates move",
    }
    data.update(overrides)
    return data


def _entry_count(app: Flask, pid: int) -> int:
    with app.app_context():
        return len(repository.all_entries(db_session(), pid))


def test_what_if_moves_the_dates_and_writes_nothing(app: Flask, client: FlaskClient) -> None:
    pid = person_id(app, "tobias")
    before = _entry_count(app, pid)
    sign_in(client, "tobias")
    token = csrf(client.get("/").get_data(as_text=True))
    response = client.post(f"/pilots/{pid}/what-if", data=_what_if_data(token))
    page = response.get_data(as_text=True)
    assert response.status_code == 200
    moves = _text(re.search(r'<table class="moves">.*?</table>', page, re.S).group(0))
    # 14 CFR 61.57(c)/(d): tasks flown in the grace stage (Dec 2026) restore currency
    # through the last day of the sixth following month: 2027-06-30.
    assert "Instrument experience to act as PIC under IFR (Airplane) Grace: not current; regain with tasks until 2027-04-30 2026-10-31 May fly IFR 2027-06-30 2026-10-31 → 2027-06-30 (+242 days)" in moves
    # The chart shows the planned date.
    assert "Planned (what-if) 2026-12-10" in page
    assert _entry_count(app, pid) == before
    # The plain dashboard is unchanged afterwards.
    assert "Grace: not current" in _text(client.get("/").get_data(as_text=True))


def test_what_if_a_check_in_the_ipc_only_stage_restores_currency(app: Flask, client: FlaskClient) -> None:
    pid = person_id(app, "priya")
    sign_in(client, "priya")
    token = csrf(client.get("/").get_data(as_text=True))
    data = _what_if_data(token, **{"entries-0-approaches": "0", "entries-0-approach_type": "", "entries-0-check": "ipc",
                                   "entries-0-day": "2026-12-15"})
    page = client.post(f"/pilots/{pid}/what-if", data=data).get_data(as_text=True)
    moves = _text(re.search(r'<table class="moves">.*?</table>', page, re.S).group(0))
    # An IPC in December re-establishes currency as if the tasks were met then: through 2027-06-30 (from memory, AC 61-98 series).
    assert "2026-02-28 → 2027-06-30" in moves


def test_what_if_refuses_an_approach_without_type_and_keeps_what_was_typed(app: Flask, client: FlaskClient) -> None:
    pid = person_id(app, "tobias")
    sign_in(client, "tobias")
    token = csrf(client.get("/").get_data(as_text=True))
    response = client.post(f"/pilots/{pid}/what-if", data=_what_if_data(token, **{"entries-0-approach_type": ""}))
    page = response.get_data(as_text=True)
    assert response.status_code == 400
    assert re.search(r'id="entries-0-approach_type-error">An approach needs its type', page)
    assert 'value="QJRR"' in page and 'value="2026-12-10"' in page
    assert '<table class="moves">' not in page


@pytest.mark.parametrize(
    ("field", "value", "message"),
    [
        ("entries-0-day", "2026-11-30", "Pick a date from today (2026-12-01) to 2027-12-02."),
        ("entries-0-day", "not a date", "Not a valid date value."),
        ("entries-0-holds", "-1", "From 0 to 20."),
        ("entries-0-approaches", "many", "Not a valid integer value."),
    ],
)
def test_what_if_bad_values_get_a_message_at_the_field(app: Flask, client: FlaskClient, field: str, value: str, message: str) -> None:
    pid = person_id(app, "tobias")
    sign_in(client, "tobias")
    token = csrf(client.get("/").get_data(as_text=True))
    response = client.post(f"/pilots/{pid}/what-if", data=_what_if_data(token, **{field: value}))
    page = response.get_data(as_text=True)
    assert response.status_code == 400
    assert f'id="{field}-error">{html.escape(message)}' in page


def test_what_if_without_the_csrf_token_is_refused(app: Flask, client: FlaskClient) -> None:
    pid = person_id(app, "tobias")
    sign_in(client, "tobias")
    response = client.post(f"/pilots/{pid}/what-if", data=_what_if_data(""))
    assert response.status_code == 400


def test_what_if_can_add_another_planned_entry(app: Flask, client: FlaskClient) -> None:
    pid = person_id(app, "tobias")
    sign_in(client, "tobias")
    token = csrf(client.get("/").get_data(as_text=True))
    data = _what_if_data(token, add="Add another planned entry")
    del data["submit"]
    page = client.post(f"/pilots/{pid}/what-if", data=data).get_data(as_text=True)
    assert page.count("<legend>Planned entry") == 2
    assert 'name="entries-1-day"' in page


def test_another_pilots_what_if_is_not_found(app: Flask, client: FlaskClient) -> None:
    sign_in(client, "mara")
    token = csrf(client.get("/").get_data(as_text=True))
    assert client.post(f"/pilots/{person_id(app, 'tobias')}/what-if", data=_what_if_data(token)).status_code == 404
