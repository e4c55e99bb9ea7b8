"""Personal minimums: the settings fieldset and the dashboard's advisory card (real demo scenario, today 2026-12-01).

The card is checked against ``planner.core.minimums.advise`` run on the demo's own files (the seed's baseline
and the pilot's interchange logbook), not against numbers typed here. The size of each step is the FAA
personal-minimums guidance: "add at least 500 ft and 1/2 SM" per risk factor [hb: FAA-H-8083-9 Aviation
Instructor's Handbook, personal minimums checklist; FAA-H-8083-2].
"""

from __future__ import annotations

import html
import json
import re
from datetime import date

import pytest
from flask import Flask
from flask.testing import FlaskClient

from planner import CAUTION, services
from planner.config import REPO_ROOT
from planner.core import minimums
from planner.export import interchange
from planner.web import db_session
from tests.web.dash_fixtures import AS_OF, PILOTS, app, client, csrf, demo_database, person_id, sign_in  # noqa: F401
from tests.web.test_settings import _form as _base_form

SEED = REPO_ROOT / "seed_demo"
HANDBOOK_CEILING_STEP_FT = 500  # FAA-H-8083-9 personal minimums checklist: at least 500 ft per factor
HANDBOOK_VISIBILITY_STEP_SM = 0.5  # same source: at least 1/2 SM per factor


def _seed_person(slug: str) -> dict:
    school = json.loads((SEED / "school.json").read_text(encoding="utf-8"))
    return next(p for p in school["people"] if p.get("slug") == slug)


def _logbook_entries(slug: str):  # type: ignore[no-untyped-def]
    return interchange.read_json((SEED / "logbooks" / f"{slug}.json").read_text(encoding="utf-8")).entries


def _expected(slug: str) -> minimums.Advice | None:
    spec = _seed_person(slug).get("personal_minimums")
    if spec is None:
        return None
    baseline = minimums.Minimums(spec["ceiling_ft"], float(spec["visibility_sm"]), float(spec["crosswind_kt"]))
    return minimums.advise(baseline, minimums.recency_from(_logbook_entries(slug), AS_OF))


def _card(page: str) -> str:
    match = re.search(r'<section class="minimums" id="advised-minimums".*?</section>', page, re.S)
    assert match, "no advised-minimums card on the dashboard"
    return match.group(0)


def _cell(card: str, key: str, cls: str) -> float:
    row = re.search(rf'<tr id="min-{key}">.*?</tr>', card, re.S).group(0)
    return float(re.search(rf'<td class="{cls}" data-value="([^"]+)"', row).group(1))


def _adjustments(card: str) -> list[tuple[str, str, str]]:
    return [
        (factor, html.unescape(reason), html.unescape(source))
        for factor, reason, source in re.findall(
            r'<li class="adjustment" data-factor="([^"]+)">.*?<span class="reason">(.*?)</span>.*?'
            r'<span class="source">Source: (.*?)</span></li>', card, re.S)
    ]


def _stored(app: Flask, who: str) -> tuple:
    with app.app_context():
        p = services.get_pilot(db_session(), person_id(app, who))
        return (p.min_ceiling_ft, p.min_visibility_hundredths_sm, p.min_crosswind_kt, p.timezone, p.practice_targets)


def _form(client: FlaskClient, url: str) -> dict:
    """The whole settings form as the browser would post it, including the minimums fieldset."""
    data = _base_form(client, url)
    page = client.get(url).get_data(as_text=True)
    for name in ("min_ceiling_ft", "min_visibility_sm", "min_crosswind_kt"):
        data[name] = re.search(rf'<input[^>]* id="{name}"[^>]*value="([^"]*)"', page).group(1)
    return data


# ------------------------------------------------------------------ dashboard card


@pytest.mark.parametrize("who", [p for p in PILOTS if _seed_person(p).get("personal_minimums")])
def test_the_card_shows_baseline_and_advised_minimums_as_the_core_computes_them_from_the_demo_files(
    client: FlaskClient, who: str
) -> None:
    expected = _expected(who)
    assert expected is not None
    sign_in(client, who)
    card = _card(client.get("/").get_data(as_text=True))
    assert "Advised minimums today — advisory" in card and CAUTION in card
    for key, base, adv in (
        ("ceiling", expected.baseline.ceiling_ft, expected.advised.ceiling_ft),
        ("visibility", expected.baseline.visibility_sm, expected.advised.visibility_sm),
        ("crosswind", expected.baseline.crosswind_kt, expected.advised.crosswind_kt),
    ):
        assert _cell(card, key, "baseline") == pytest.approx(base)
        assert _cell(card, key, "advised") == pytest.approx(adv)
    shown = _adjustments(card)
    assert [f for f, _r, _s in shown] == [a.factor for a in expected.adjustments]
    assert [(r, s) for _f, r, s in shown] == [(a.reason, a.source) for a in expected.adjustments]
    # Never below the baseline (FAA-H-8083-9: minimums are raised for risk, never lowered).
    assert _cell(card, "ceiling", "advised") >= _cell(card, "ceiling", "baseline")
    assert _cell(card, "visibility", "advised") >= _cell(card, "visibility", "baseline")
    assert _cell(card, "crosswind", "advised") <= _cell(card, "crosswind", "baseline")
    if not expected.adjustments:
        assert "the advice is the baseline" in card


def test_the_demo_covers_raised_and_unraised_advice() -> None:
    advices = [_expected(p) for p in PILOTS]
    assert any(a is not None and a.is_raised for a in advices)
    assert any(a is not None and not a.is_raised for a in advices)
    assert any(a is None for a in advices)


def test_dev_without_partial_panel_or_unusual_attitude_practice_for_eight_months_is_advised_higher(client: FlaskClient) -> None:
    entries = _logbook_entries("dev")
    last_pp = max(e.date for e in entries if e.partial_panel_approaches > 0 and e.date <= AS_OF)
    last_ua = max(e.date for e in entries if e.ua_nose_high + e.ua_nose_low > 0 and e.date <= AS_OF)
    assert last_pp <= date(2026, 4, 1) and last_ua <= date(2026, 4, 1)  # eight months or more before 2026-12-01
    sign_in(client, "hollis")  # the instructor sees the same card on the pilot's dashboard
    card = _card(client.get(f"/pilots/{person_id(client.application, 'dev')}").get_data(as_text=True))
    shown = {f: (r, s) for f, r, s in _adjustments(card)}
    assert "no-emergency-practice-90d" in shown
    reason, source = shown["no-emergency-practice-90d"]
    assert f"partial panel last {(AS_OF - last_pp).days} days ago" in reason
    assert f"unusual attitudes last {(AS_OF - last_ua).days} days ago" in reason
    assert "FAA-H-8083-9" in source
    # Each factor adds at least 500 ft and 1/2 SM (FAA-H-8083-9 personal minimums checklist).
    steps = len(shown)
    assert _cell(card, "ceiling", "advised") >= _cell(card, "ceiling", "baseline") + steps * HANDBOOK_CEILING_STEP_FT
    assert _cell(card, "visibility", "advised") >= _cell(card, "visibility", "baseline") + steps * HANDBOOK_VISIBILITY_STEP_SM
    assert "+500 ft, +0.5 SM" in card


def test_without_a_baseline_the_card_says_so_links_to_settings_and_invents_nothing(client: FlaskClient) -> None:
    assert _seed_person("rafael").get("personal_minimums") is None
    sign_in(client, "rafael")
    card = _card(client.get("/").get_data(as_text=True))
    assert "No baseline personal minimums are set" in card
    assert 'href="/settings#personal-minimums"' in card
    assert 'id="min-ceiling"' not in card and "data-value" not in card and 'class="adjustment"' not in card
    assert CAUTION in card


# ------------------------------------------------------------------ settings


def test_the_settings_form_has_a_labelled_minimums_fieldset_with_the_pilots_baseline(client: FlaskClient) -> None:
    sign_in(client, "mara")
    page = client.get("/settings").get_data(as_text=True)
    fieldset = re.search(r'<fieldset id="personal-minimums">.*?</fieldset>', page, re.S).group(0)
    assert "<legend>Personal minimums (your own baseline)</legend>" in fieldset
    for name in ("min_ceiling_ft", "min_visibility_sm", "min_crosswind_kt"):
        assert f'<label for="{name}">' in fieldset
    spec = _seed_person("mara")["personal_minimums"]
    data = _form(client, "/settings")
    assert int(data["min_ceiling_ft"]) == spec["ceiling_ft"]
    assert float(data["min_visibility_sm"]) == spec["visibility_sm"]
    assert int(data["min_crosswind_kt"]) == spec["crosswind_kt"]


def test_saving_new_minimums_stores_them_and_the_dashboard_advises_from_them(app: Flask, client: FlaskClient) -> None:
    sign_in(client, "mara")
    data = _form(client, "/settings")
    data.update({"min_ceiling_ft": "1200", "min_visibility_sm": "2.75", "min_crosswind_kt": "11"})
    assert client.post("/settings", data=data).status_code == 302
    assert _stored(app, "mara")[:3] == (1200, 275, 11)
    card = _card(client.get("/").get_data(as_text=True))
    assert _cell(card, "ceiling", "baseline") == 1200
    assert _cell(card, "visibility", "baseline") == 2.75
    assert _cell(card, "crosswind", "baseline") == 11
    expected = minimums.advise(minimums.Minimums(1200, 2.75, 11.0), minimums.recency_from(_logbook_entries("mara"), AS_OF))
    assert _cell(card, "ceiling", "advised") == expected.advised.ceiling_ft
    assert _cell(card, "visibility", "advised") == pytest.approx(expected.advised.visibility_sm)


def test_clearing_all_three_removes_the_baseline_and_the_card_asks_for_one(app: Flask, client: FlaskClient) -> None:
    sign_in(client, "dev")
    data = _form(client, "/settings")
    data.update({"min_ceiling_ft": "", "min_visibility_sm": "", "min_crosswind_kt": ""})
    assert client.post("/settings", data=data).status_code == 302
    assert _stored(app, "dev")[:3] == (None, None, None)
    assert "No baseline personal minimums are set" in _card(client.get("/").get_data(as_text=True))


@pytest.mark.parametrize(
    ("changes", "field", "message"),
    [
        ({"min_ceiling_ft": "-100"}, "min_ceiling_ft", "From 0 to 10,000 ft."),
        ({"min_ceiling_ft": "10001"}, "min_ceiling_ft", "From 0 to 10,000 ft."),
        ({"min_ceiling_ft": "eight hundred"}, "min_ceiling_ft", "Not a valid integer value."),
        ({"min_visibility_sm": "10.5"}, "min_visibility_sm", "From 0 to 10 SM."),
        ({"min_visibility_sm": "1.125"}, "min_visibility_sm", "At most two decimals"),
        ({"min_visibility_sm": "NaN"}, "min_visibility_sm", "Give a number."),
        ({"min_crosswind_kt": "51"}, "min_crosswind_kt", "From 0 to 50 kt."),
        ({"min_crosswind_kt": "12.5"}, "min_crosswind_kt", "Not a valid integer value."),
        ({"min_visibility_sm": "", "min_crosswind_kt": ""}, "min_visibility_sm", "give all three minimums, or leave all three empty"),
        ({"min_ceiling_ft": ""}, "min_ceiling_ft", "give all three minimums, or leave all three empty"),
    ],
)
def test_bad_minimums_are_redisplayed_with_a_message_at_the_field_and_nothing_is_saved(
    app: Flask, client: FlaskClient, changes: dict, field: str, message: str
) -> None:
    before = _stored(app, "mara")
    sign_in(client, "mara")
    data = _form(client, "/settings")
    data.update({"timezone": "America/Boise", "pt1_0": "3", "min_crosswind_kt": "9"})  # valid changes alongside
    data.update(changes)
    response = client.post("/settings", data=data)
    page = response.get_data(as_text=True)
    assert response.status_code == 400
    error = re.search(rf'<p class="field-error" id="{field}-error">([^<]*)</p>', page)
    assert error and message in html.unescape(error.group(1))
    for name, typed in data.items():
        if name.startswith("min_"):
            assert re.search(rf'<input[^>]*id="{name}"[^>]*value="{re.escape(html.escape(typed))}"', page), f"{name} typed value kept"
    assert "America/Boise" in page
    assert _stored(app, "mara") == before


def test_an_instructor_sets_a_pilots_minimums_and_another_pilot_cannot(app: Flask, client: FlaskClient) -> None:
    pid = person_id(app, "rafael")
    sign_in(client, "hollis")
    data = _form(client, f"/pilots/{pid}/settings")
    data.update({"min_ceiling_ft": "900", "min_visibility_sm": "2", "min_crosswind_kt": "14"})
    assert client.post(f"/pilots/{pid}/settings", data=data).status_code == 302
    assert _stored(app, "rafael")[:3] == (900, 200, 14)
    other = app.test_client()
    sign_in(other, "mara")
    token = csrf(other.get("/settings").get_data(as_text=True))
    refused = other.post(f"/pilots/{pid}/settings", data={**data, "csrf_token": token, "min_ceiling_ft": "0"})
    assert refused.status_code == 404
    assert _stored(app, "rafael")[:3] == (900, 200, 14)
