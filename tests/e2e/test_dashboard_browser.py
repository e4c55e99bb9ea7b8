"""End to end in chromium: dashboard, what-if, settings messages, school overview, phone width and keyboard."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.e2e.conftest import sign_in

pytestmark = pytest.mark.browser


def test_pilot_sees_the_dashboard_and_the_dates_move_with_planned_tasks(page, live_server: str, artifacts: Path) -> None:  # type: ignore[no-untyped-def]
    sign_in(page, live_server, "tobias")
    assert page.url.rstrip("/") == live_server
    ifr = page.locator("#req-faa-part61-instrument-airplane")
    assert "Grace: not current; regain with tasks until 2027-04-30" in ifr.inner_text()
    assert "2026-10-31" in ifr.locator(".valid-through").inner_text()
    page.screenshot(path=str(artifacts / "dashboard.png"), full_page=True)

    # What-if: six approaches, a hold and course tracking on 2026-12-10, flown with a safety pilot.
    page.fill("#entries-0-day", "2026-12-10")
    page.fill("#entries-0-approaches", "6")
    page.fill("#entries-0-approach_type", "RNAV (GPS)")
    page.fill("#entries-0-approach_airfield", "QPNV")
    page.fill("#entries-0-holds", "1")
    page.check("#entries-0-course_tracking")
    page.get_by_role("button", name="Show how the dates move").click()
    page.wait_for_load_state()
    row = page.locator("table.moves tr", has_text="Instrument experience")
    # 14 CFR 61.57(c)/(d): tasks in the grace stage restore currency to the end of the 6th month after: 2027-06-30.
    assert "2026-10-31 → 2027-06-30" in row.inner_text()
    assert page.locator("svg.timeline .tl-planned").count() == 1
    page.screenshot(path=str(artifacts / "dashboard-what-if.png"), full_page=True)
    # Nothing was saved: the plain dashboard still shows grace.
    page.goto(live_server + "/")
    assert "Grace" in page.locator("#req-faa-part61-instrument-airplane").inner_text()


def test_an_invalid_planned_entry_shows_the_message_at_the_field(page, live_server: str, artifacts: Path) -> None:  # type: ignore[no-untyped-def]
    sign_in(page, live_server, "mara")
    page.fill("#entries-0-approaches", "2")
    page.fill("#entries-0-approach_airfield", "QJRR")
    page.get_by_role("button", name="Show how the dates move").click()
    page.wait_for_load_state()
    message = page.locator("#entries-0-approach_type-error")
    assert message.inner_text().startswith("An approach needs its type")
    assert page.locator("#entries-0-approach_type").get_attribute("aria-invalid") == "true"
    assert page.locator("#entries-0-approach_airfield").input_value() == "QJRR"
    page.screenshot(path=str(artifacts / "what-if-form-error.png"), full_page=True)


def test_settings_refuse_an_unknown_time_zone_at_the_field(page, live_server: str, artifacts: Path) -> None:  # type: ignore[no-untyped-def]
    sign_in(page, live_server, "signe")
    page.goto(live_server + "/settings")
    page.fill("#timezone", "Europe/Atlantis")
    page.fill("#pt2_days", "21")
    page.get_by_role("button", name="Save settings").click()
    page.wait_for_load_state()
    assert "not a known IANA time zone name" in page.locator("#timezone-error").inner_text()
    assert page.locator("#pt2_days").input_value() == "21"
    page.screenshot(path=str(artifacts / "settings-form-error.png"), full_page=True)
    page.fill("#timezone", "America/Denver")
    page.get_by_role("button", name="Save settings").click()
    page.wait_for_load_state()
    assert "Settings saved." in page.content()


def test_instructor_lands_on_the_school_overview_and_filters_it(page, live_server: str, artifacts: Path) -> None:  # type: ignore[no-untyped-def]
    sign_in(page, live_server, "hollis")
    assert page.url.endswith("/school")
    names = page.locator("table.overview tbody th a").all_inner_texts()
    assert names[:2] == ["Priya Castellano", "Tobias Lindqvist"]
    page.screenshot(path=str(artifacts / "school-overview.png"), full_page=True)
    page.select_option("#show", "grace")
    page.get_by_role("button", name="Apply").click()
    page.wait_for_load_state()
    assert page.locator("table.overview tbody th a").all_inner_texts() == ["Tobias Lindqvist"]
    page.get_by_role("link", name="Tobias Lindqvist").click()
    page.wait_for_load_state()
    assert "Tobias Lindqvist: currency" in page.locator("h1").inner_text()


def test_the_dashboard_fits_a_phone_and_works_from_the_keyboard(browser, live_server: str, artifacts: Path) -> None:  # type: ignore[no-untyped-def]
    context = browser.new_context(viewport={"width": 390, "height": 844}, is_mobile=True)
    page = context.new_page()
    try:
        sign_in(page, live_server, "priya")
        overflow = page.evaluate("document.documentElement.scrollWidth - document.documentElement.clientWidth")
        assert overflow <= 0, f"the page scrolls sideways by {overflow}px on a phone"
        assert "Lapsed: needs an instrument proficiency check" in page.locator("#req-faa-part61-instrument-airplane").inner_text()
        page.screenshot(path=str(artifacts / "dashboard-phone.png"), full_page=True)
        page.keyboard.press("Tab")
        assert page.evaluate("document.activeElement.textContent") == "Skip to content"
        page.keyboard.press("Enter")
        assert page.url.endswith("#main")
        # Keyboard only: tab to the first evidence link and follow it.
        page.goto(live_server + "/")
        link = page.locator("#req-faa-part61-passengers-day-airplane-single-engine-land .evidence a").first
        ref = link.inner_text()
        link.focus()
        with page.expect_navigation():
            page.keyboard.press("Enter")
        assert page.url.endswith(f"/logbook/{ref}")
    finally:
        context.close()


def test_the_navigation_wraps_on_a_phone_with_tap_sized_links_and_a_visible_focus(browser, live_server: str, artifacts: Path) -> None:  # type: ignore[no-untyped-def]
    context = browser.new_context(viewport={"width": 360, "height": 740}, is_mobile=True)
    page = context.new_page()
    try:
        sign_in(page, live_server, "wren")  # the admin has the most links
        links = page.locator("nav[aria-label=Main] a")
        assert links.all_inner_texts() == ["Dashboard", "Logbook", "School", "Planning", "Settings", "People"]
        overflow = page.evaluate("document.documentElement.scrollWidth - document.documentElement.clientWidth")
        assert overflow <= 0, f"the page scrolls sideways by {overflow}px on a phone"
        boxes = [links.nth(i).bounding_box() for i in range(links.count())]
        # Every link lies inside the screen and is at least 44 px tall (common practice for touch targets).
        assert all(b["x"] >= 0 and b["x"] + b["width"] <= 360 and b["height"] >= 44 for b in boxes), boxes
        assert len({round(b["y"]) for b in boxes}) > 1, "the links should wrap onto more than one row"
        page.keyboard.press("Tab")  # skip link
        page.keyboard.press("Tab")  # first nav link
        assert page.evaluate("document.activeElement.textContent") == "Dashboard"
        outline = page.evaluate("getComputedStyle(document.activeElement).outlineStyle + ' ' + getComputedStyle(document.activeElement).outlineWidth")
        assert outline.startswith("solid") and not outline.endswith(" 0px"), outline
        page.screenshot(path=str(artifacts / "navigation-phone.png"))
    finally:
        context.close()
