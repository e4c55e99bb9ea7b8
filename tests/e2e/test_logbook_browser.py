"""End to end in chromium: a pilot logs a flight with two approaches through the form and the dashboard follows.

The expected states and dates come from the engine itself (``planner.core.currency.evaluate`` on the
pilot's logbook from the database plus the same flight built here as a core entry), never from the page.
"Today" is pinned to 2026-12-01 (PLANNER_TODAY).
"""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import pytest
from flask import Flask

from planner import rulesets, services
from planner.core import currency
from planner.core.logbook import Approach, Entry
from planner.db import models, repository
from planner.web import db_session
from tests.e2e.conftest import sign_in
from tests.web.dash_fixtures import AS_OF, PASSWORDS

pytestmark = pytest.mark.browser

STATE_WORD = {"current": "Current", "grace": "Grace", "lapsed": "Lapsed"}

# The flight typed into the form below, as the engine sees it: today, simulated instrument with a safety
# pilot, two hand-flown approaches (one to minimums), a hold, course tracking, two landings.
FLIGHT = Entry(
    id="typed-in-the-browser",
    date=AS_OF,
    device="aircraft",
    category="airplane",
    aircraft_class="single-engine-land",
    conditions="simulated",
    approaches=(Approach(type="ILS", airfield="QJRR", runway="27", to_minimums=True), Approach(type="RNAV (GPS)", airfield="QPNV")),
    holds=1,
    course_tracking=True,
    total_hours=1.5,
    pic_hours=1.5,
    instrument_simulated_hours=1.2,
    landings=2,
    safety_pilot="Mara Oyelaran",
)


def _key(status: currency.RequirementStatus) -> str:
    return "-".join((status.rule_set, status.id, status.scope)).replace("/", "-")


def _reports(app: Flask, who: str) -> tuple[currency.CurrencyReport, currency.CurrencyReport]:
    """The engine's answer for the pilot as of today, without and with FLIGHT."""
    with app.app_context():
        session = db_session()
        person = services.get_pilot(session, repository.person_by_email(session, PASSWORDS[who][0]).id)
        logbook = services.load_logbook(session, person.id)
        rule_sets = rulesets.resolve(person.rule_sets)
    before = currency.evaluate(logbook, rule_sets, AS_OF)
    after = currency.evaluate(dataclasses.replace(logbook, entries=(*logbook.entries, FLIGHT)), rule_sets, AS_OF)
    return before, after


def _shows(page, status: currency.RequirementStatus) -> None:  # type: ignore[no-untyped-def]
    """The requirement's block on the dashboard shows the engine's state (in words) and last valid day."""
    block = page.locator(f"#req-{_key(status)}")
    assert block.locator(".badge").text_content() == STATE_WORD[status.state]  # (shown in capitals by CSS)
    shown = block.locator(".valid-through").inner_text()
    expected = status.valid_through.isoformat() if status.valid_through else "—"
    assert shown.split(" ")[0] == expected, f"{_key(status)}: {shown!r}, engine {expected}"


def _entries(app: Flask, who: str) -> int:
    with app.app_context():
        session = db_session()
        pid = repository.person_by_email(session, PASSWORDS[who][0]).id
        return len(repository.current_entries(session, pid))


def test_a_flight_logged_through_the_form_moves_the_dashboard_dates_and_the_school_sees_it(  # type: ignore[no-untyped-def]
    page, served_app: tuple[str, Flask], artifacts: Path
) -> None:
    base, app = served_app
    before, after = _reports(app, "tobias")
    moved = [
        (b, a) for b, a in zip(before.requirements, after.requirements, strict=True)
        if (b.state, b.valid_through) != (a.state, a.valid_through)
    ]
    # The flight was chosen so that something visibly changes for Tobias (in the 61.57(d) grace stage):
    # two approaches alone do not restore IFR currency, but the hand-flown practice target flips.
    assert moved, "the chosen flight changes nothing for this pilot"
    assert any(b.state != a.state for b, a in moved)
    ifr = next(s for s in after.requirements if s.id == "instrument")
    assert ifr.state == "grace"
    count = _entries(app, "tobias")

    sign_in(page, base, "tobias")
    for status in before.requirements:
        _shows(page, status)

    # The entry form: one approach row at first; "Add another approach" adds the second.
    page.get_by_role("link", name="Logbook").click()
    page.get_by_role("link", name=re.compile("new entry", re.I)).first.click()
    page.wait_for_load_state()
    assert page.locator("#date").input_value() == AS_OF.isoformat()
    page.select_option("#device", "aircraft")
    page.select_option("#category", "airplane")
    page.fill("#aircraft_class", "single-engine-land")
    page.select_option("#conditions", "simulated")
    page.fill("#total_hours", "1.5")
    page.fill("#pic_hours", "1.5")
    page.fill("#instrument_simulated_hours", "1.2")
    page.fill("#landings", "2")
    page.fill("#holds", "1")
    page.check("#course_tracking")
    page.fill("#approaches-0-type", "ILS")
    page.fill("#approaches-0-airfield", "QJRR")
    page.fill("#approaches-0-runway", "27")
    page.check("#approaches-0-to_minimums")
    assert page.locator("fieldset.approach").count() == 1
    page.get_by_role("button", name="Add another approach").click()
    page.wait_for_load_state()
    assert page.locator("fieldset.approach").count() == 2
    # What was typed survives the round trip.
    assert page.locator("#approaches-0-airfield").input_value() == "QJRR"
    assert page.locator("#holds").input_value() == "1"
    page.fill("#approaches-1-type", "RNAV (GPS)")
    page.fill("#approaches-1-airfield", "QPNV")
    page.fill("#safety_pilot", "Mara Oyelaran")
    page.screenshot(path=str(artifacts / "entry-form.png"), full_page=True)
    page.locator("#entry-form .actions").get_by_role("button", name="Save entry").click()
    page.wait_for_load_state()

    # Saved: the entry page of the new entry, with both approaches.
    ref = page.url.rsplit("/", 1)[1]
    assert re.fullmatch(r"/pilots/\d+/logbook/[^/]+", page.url.removeprefix(base))
    assert f"Entry of {AS_OF.isoformat()}" in page.locator("h1").inner_text()
    assert "QJRR" in page.content() and "QPNV" in page.content()
    assert _entries(app, "tobias") == count + 1

    # The dashboard now shows what the engine computes with the flight, and the flight as evidence.
    page.get_by_role("link", name="Dashboard").click()
    page.wait_for_load_state()
    for status in after.requirements:
        _shows(page, status)
    for b, a in moved:
        if FLIGHT.id in a.evidence:
            assert ref in page.locator(f"#req-{_key(a)} .evidence").inner_text()
    page.screenshot(path=str(artifacts / "dashboard-after-entry.png"), full_page=True)

    # An invalid entry: the form comes back with the message at the field and what was typed; nothing is saved.
    page.get_by_role("link", name="Logbook").click()
    page.get_by_role("link", name=re.compile("new entry", re.I)).first.click()
    page.wait_for_load_state()
    page.fill("#landings", "two")
    page.fill("#approaches-0-airfield", "QJRR")
    page.fill("#approaches-0-type", "ILS")
    page.fill("#remarks", "typed before the mistake")
    page.locator("#entry-form .actions").get_by_role("button", name="Save entry").click()
    page.wait_for_load_state()
    assert page.locator("#landings-error").inner_text().startswith("Problem: Give a whole number")
    assert page.locator("#landings").get_attribute("aria-invalid") == "true"
    assert page.locator("#landings").input_value() == "two"
    assert page.locator("#remarks").input_value() == "typed before the mistake"
    assert page.locator("#approaches-0-airfield").input_value() == "QJRR"
    page.screenshot(path=str(artifacts / "entry-form-error.png"), full_page=True)
    assert _entries(app, "tobias") == count + 1

    # The instructor signs in, lands on the school overview and sees Tobias's new dates there.
    page.context.clear_cookies()
    sign_in(page, base, "hollis")
    assert page.url == base + "/school"
    row = page.locator("table.overview tbody tr", has_text="Tobias Lindqvist")
    text = re.sub(r"\s+", " ", row.inner_text())
    for _b, a in moved:
        assert f"{STATE_WORD[a.state]} {a.valid_through.isoformat() if a.valid_through else '—'}" in text
    with app.app_context():
        assert db_session().query(models.Entry).filter_by(external_id=ref).one().deleted_at is None
    page.screenshot(path=str(artifacts / "school-overview-after-entry.png"), full_page=True)
