"""End to end in chromium: an instructor plans the demo school's practice; a pilot manages the calendar link.

The checks use the page and, where the page shows only local text, the database behind it. The TAF is invented
for the demo airfield; its validity (1 Dec 12:00Z to 2 Dec 18:00Z) is read off the report by hand.
"""

from __future__ import annotations

import re
from datetime import UTC, datetime
from pathlib import Path

import pytest
from flask import Flask

from planner import planning
from planner.db import models
from planner.web import db_session
from tests.e2e.conftest import sign_in

pytestmark = pytest.mark.browser

TAF = ("TAF QJRR 011120Z 0112/0218 27012KT P6SM SCT050\n"
       "  FM012000 30008KT 5SM BR BKN015\n"
       "  FM020600 30008KT P6SM SKC")


def _tab_to(page, name: str, limit: int = 25) -> None:  # type: ignore[no-untyped-def]
    """Press Tab until the focused button's text (or a submit input's value) is ``name`` (keyboard only)."""
    for _ in range(limit):
        page.keyboard.press("Tab")
        label = page.evaluate("(e => e ? (e.tagName === 'INPUT' ? e.value : e.textContent).trim() : '')"
                              "(document.activeElement)")
        if label == name:
            return
    raise AssertionError(f"Tab never reached {name!r}")


def _sessions(app: Flask) -> list[models.PracticeSession]:
    with app.app_context():
        rows = planning.school_sessions(db_session(), 1, since=datetime(2000, 1, 1, tzinfo=UTC))
        for row in rows:
            db_session().expunge(row)
        return rows


def test_instructor_proposes_reviews_accepts_moves_and_cancels(page, served_app, artifacts: Path) -> None:  # type: ignore[no-untyped-def]
    base, app = served_app
    sign_in(page, base, "hollis")
    page.goto(base + "/plan")
    assert "Advisory." in page.locator(".caution-top").inner_text()
    assert page.locator("#start").input_value() == "2026-12-01" and page.locator("#end").input_value() == "2026-12-28"

    # Keyboard only: open the options, type the TAF, reach the button and press Enter.
    page.locator("summary", has_text="Weather reports").focus()
    page.keyboard.press("Enter")
    page.locator("#weather").focus()
    page.keyboard.type(TAF)
    _tab_to(page, "Propose sessions")
    page.keyboard.press("Enter")
    page.wait_for_url("**/plan/propose")
    page.wait_for_load_state()
    proposals = page.locator("article.proposal")
    count = proposals.count()
    assert count >= 2
    assert page.locator("text=Why this slot:").count() == count
    sources = page.locator("p.vmc-source strong").all_inner_texts()
    assert len(sources) == count and "Weather (report text):" in sources  # Priya's Wednesday 2 Dec
    assert "1 pasted or imported report for QJRR" in page.locator("#vmc-source").inner_text()
    assert page.locator("#weather").input_value().startswith("TAF QJRR 011120Z")  # kept for saving
    page.screenshot(path=str(artifacts / "plan-proposals.png"), full_page=True)

    page.get_by_role("button", name="Save proposals").click()
    page.wait_for_load_state()
    assert f"{count} proposed sessions saved" in page.locator("p.notice").inner_text()
    rows = _sessions(app)
    assert len(rows) == count and {r.status for r in rows} == {"proposed"}
    first, second = rows[0], rows[1]
    assert any(line.startswith("Weather: VMC likelihood") for line in first.explanation.splitlines())

    # Accept the first.
    page.locator(f"#session-{first.id}").get_by_role("button", name="Accept").click()
    page.wait_for_load_state()
    assert f"Session {first.id} accepted." in page.locator("p.notice").inner_text()
    assert page.locator(f"#session-{first.id} .tag").inner_text() == "accepted"

    # Move it with the keyboard: type the new local start and press Enter in the field.
    move = page.get_by_label("New start (local)").and_(page.locator(f"#move-{first.id}"))
    move.fill("2026-12-16T08:00")
    move.press("Enter")
    page.locator("p.notice", has_text=f"Session {first.id} moved.").wait_for()
    page.wait_for_load_state()
    assert f"Session {first.id} moved." in page.locator("p.notice").inner_text()
    moved = next(r for r in _sessions(app) if r.id == first.id)
    assert moved.starts_at.astimezone(UTC) == datetime(2026, 12, 16, 15, tzinfo=UTC)  # 08:00 MST = 15:00 UTC
    assert moved.ends_at - moved.starts_at == first.ends_at - first.starts_at
    assert re.search(r"2026-12-16 08:00", page.locator(f"#session-{first.id}-h").inner_text())

    # A move after sunset is refused for a pilot who keeps practice to daylight (the default setting).
    move = page.locator(f"#move-{first.id}")
    move.fill("2026-12-16T19:00")
    page.locator(f"#session-{first.id}").get_by_role("button", name="Move").click()
    page.wait_for_load_state()
    error = page.locator(f"#session-{first.id}-error").inner_text()
    assert "would not be in daylight" in error and "has not allowed night practice" in error

    # Cancel the second.
    page.locator(f"#session-{second.id}").get_by_role("button", name="Cancel").click()
    page.wait_for_load_state()
    assert f"Session {second.id} cancelled." in page.locator("p.notice").inner_text()
    assert page.locator(f"#session-{second.id} .tag").inner_text() == "cancelled"
    assert page.locator(f"#session-{second.id}").get_by_role("button", name="Cancel").count() == 0
    statuses = {r.id: r.status for r in _sessions(app)}
    assert statuses[first.id] == "accepted" and statuses[second.id] == "cancelled"
    page.screenshot(path=str(artifacts / "plan-stored.png"), full_page=True)


def test_unreadable_report_text_is_shown_at_the_field(page, live_server: str, artifacts: Path) -> None:  # type: ignore[no-untyped-def]
    sign_in(page, live_server, "hollis")
    page.goto(live_server + "/plan")
    page.locator("summary", has_text="Weather reports").click()
    page.fill("#weather", TAF.replace("P6SM SKC", "P6SM SKX"))
    page.get_by_role("button", name="Propose sessions").click()
    page.wait_for_load_state()
    assert page.locator("#weather-error").inner_text().startswith("Line 3: ")
    assert page.locator("#weather").get_attribute("aria-invalid") == "true"
    assert page.locator("details.plan-options").get_attribute("open") is not None  # the error is not hidden
    page.screenshot(path=str(artifacts / "plan-weather-error.png"), full_page=True)


def test_pilot_creates_uses_and_revokes_the_calendar_link_and_allows_night(page, served_app, artifacts: Path) -> None:  # type: ignore[no-untyped-def]
    base, app = served_app
    sign_in(page, base, "mara")
    page.goto(base + "/settings")
    section = page.locator("section.calendar-link")
    assert "No link is active." in section.inner_text()
    section.get_by_role("button", name="Create new link").click()
    page.wait_for_load_state()
    url = page.locator("#feed-url").inner_text()
    assert url.startswith("https://") and re.search(r"/calendar/[A-Za-z0-9_-]{43,}", url)
    assert page.locator("#feed-webcal").get_attribute("href") == "webcal://" + url.split("://", 1)[1]
    page.screenshot(path=str(artifacts / "settings-calendar-link.png"), full_page=True)
    plain = "http://" + url.split("://", 1)[1]  # the test server speaks plain HTTP
    feed = page.request.get(plain)
    assert feed.status == 200 and feed.headers["content-type"].startswith("text/calendar")
    assert feed.text().startswith("BEGIN:VCALENDAR")

    page.locator("section.calendar-link").get_by_role("button", name="Revoke").click()
    page.wait_for_load_state()
    assert "Calendar link revoked" in page.locator("p.notice").inner_text()
    assert "No link is active." in page.locator("section.calendar-link").inner_text()
    assert page.request.get(plain).status in (404, 410)

    # Night practice, with the keyboard: tick the box with Space, then reach Save and press Enter.
    box = page.get_by_label("Allow practice under a view-limiting device at night")
    assert not box.is_checked()
    box.focus()
    page.keyboard.press("Space")
    _tab_to(page, "Save settings")
    page.keyboard.press("Enter")
    page.locator("p.notice", has_text="Settings saved.").wait_for()
    page.wait_for_load_state()
    assert "Settings saved." in page.locator("p.notice").inner_text()
    assert page.get_by_label("Allow practice under a view-limiting device at night").is_checked()
    with app.app_context():
        from planner.db import repository

        assert repository.person_by_email(db_session(), "mara.oyelaran@juniper-ridge.example").night_practice is True
