"""The school overview and its CSV on the real demo scenario, today pinned to 2026-12-01."""

from __future__ import annotations

import csv
import html
import io
import re
from datetime import date, timedelta

import pytest
from flask import Flask
from flask.testing import FlaskClient

from planner import rulesets, services
from planner.core import currency
from planner.web import db_session
from tests.web.dash_fixtures import (  # noqa: F401
    AS_OF,
    OTHER_SCHOOL,
    PILOTS,
    add_other_school,
    app,
    client,
    demo_database,
    person_id,
    sign_in,
    sign_in_as,
)


def _engine(app: Flask) -> dict[str, list[currency.RequirementStatus]]:
    """Each demo pilot's statuses straight from the engine, by name."""
    out = {}
    with app.app_context():
        session = db_session()
        for who in PILOTS:
            pid = person_id(app, who)
            person = services.get_pilot(session, pid)
            report = currency.evaluate(services.load_logbook(session, pid), rulesets.resolve(person.rule_sets), AS_OF)
            out[person.name] = list(report.requirements)
    return out


def _names(page: str) -> list[str]:
    return [html.unescape(n) for n in re.findall(r'<th scope="row"><a href="/pilots/\d+">([^<]+)</a>', page)]


def _legal(statuses):  # type: ignore[no-untyped-def]
    return [s for s in statuses if s.rule_set != "practice-targets"]


@pytest.mark.parametrize("who", ["hollis", "wren"])
def test_instructor_and_admin_see_every_pilot_sorted_by_soonest_lapse(app: Flask, client: FlaskClient, who: str) -> None:
    engine = _engine(app)

    def soonest(name: str) -> tuple:
        dates = [s.valid_through for s in _legal(engine[name]) if s.valid_through]
        return (not dates, min(dates) if dates else date.max, name)

    sign_in(client, who)
    response = client.get("/school")
    page = response.get_data(as_text=True)
    assert response.status_code == 200
    assert _names(page) == sorted(engine, key=soonest)
    # The scenario: priya's instrument currency ended 2026-02-28, tobias's 2026-10-31 (in grace).
    assert _names(page)[:2] == ["Priya Castellano", "Tobias Lindqvist"]


def test_each_cell_shows_the_engine_state_and_date(app: Flask, client: FlaskClient) -> None:
    engine = _engine(app)
    sign_in(client, "hollis")
    page = client.get("/school").get_data(as_text=True)
    for name, statuses in engine.items():
        row = re.search(rf"<tr>\s*<th scope=\"row\"><a [^>]*>{re.escape(html.escape(name))}</a>.*?</tr>", page, re.S).group(0)
        for s in statuses:
            word = {"current": "Current", "grace": "Grace", "lapsed": "Lapsed"}[s.state]
            day = s.valid_through.isoformat() if s.valid_through else "—"
            assert f'<div class="cell-{s.state}">' in row and f"<strong>{word}</strong> {day}" in row, (name, s.key)


@pytest.mark.parametrize("days", [30, 60, 90])
def test_filter_lapses_within_n_days(app: Flask, client: FlaskClient, days: int) -> None:
    engine = _engine(app)
    limit = AS_OF + timedelta(days=days)
    expected = {
        name for name, statuses in engine.items()
        if any(s.state == "current" and s.valid_through <= limit for s in _legal(statuses))
    }
    sign_in(client, "hollis")
    page = client.get(f"/school?show={days}").get_data(as_text=True)
    assert set(_names(page)) == expected
    if days == 60:
        # Dev's day passenger currency runs to 2027-01-29, 59 days ahead (14 CFR 61.57(a), 90 days).
        assert expected == {"Dev Halloran"}


@pytest.mark.parametrize(
    ("show", "expected"),
    [
        ("grace", {"Tobias Lindqvist"}),
        # Priya: instrument currency ended 2026-02-28, past the 61.57(d) grace stage, so only an IPC restores it.
        # (Rafael's EASA rating is valid to 2027-02-14 from his 2026-02-14 check, FCL.625: he needs none.)
        ("check", {"Priya Castellano"}),
        ("practice", {"Tobias Lindqvist", "Priya Castellano", "Dev Halloran", "Signe Mbeki"}),
    ],
)
def test_state_filters(app: Flask, client: FlaskClient, show: str, expected: set[str]) -> None:
    engine = _engine(app)
    predicate = {
        "grace": lambda s: s.rule_set != "practice-targets" and s.state == "grace",
        "check": lambda s: s.rule_set != "practice-targets" and s.state == "lapsed" and s.regain_with == "check",
        "practice": lambda s: s.rule_set == "practice-targets" and s.state != "current",
    }[show]
    assert {n for n, st in engine.items() if any(predicate(s) for s in st)} == expected
    sign_in(client, "hollis")
    assert set(_names(client.get(f"/school?show={show}").get_data(as_text=True))) == expected


def test_an_unknown_filter_shows_everyone_with_a_message(client: FlaskClient) -> None:
    sign_in(client, "hollis")
    response = client.get("/school?show=%3Cscript%3E")
    page = response.get_data(as_text=True)
    assert response.status_code == 200 and "Unknown filter" in page and "<script>" not in page
    assert len(_names(page)) == len(PILOTS)


def test_csv_has_one_line_per_pilot_and_requirement_with_the_engine_values(app: Flask, client: FlaskClient) -> None:
    engine = _engine(app)
    sign_in(client, "hollis")
    response = client.get("/school/overview.csv")
    assert response.status_code == 200 and response.mimetype == "text/csv"
    assert "attachment" in response.headers["Content-Disposition"]
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert len(rows) == sum(len(v) for v in engine.values())
    got = {(r["pilot"], r["rule_set"], r["requirement"], r["scope"]): r for r in rows}
    for name, statuses in engine.items():
        for s in statuses:
            r = got[(name, s.rule_set, s.id, s.scope)]
            assert r["state"] == s.state
            assert r["valid_through"] == (s.valid_through.isoformat() if s.valid_through else "")
            assert r["regain_by"] == (s.regain_by.isoformat() if s.regain_by else "")
            assert r["as_of"] == "2026-12-01"
    # Same order as the page: soonest lapse first.
    assert rows[0]["pilot"] == "Priya Castellano"


def test_csv_follows_the_filter(client: FlaskClient) -> None:
    sign_in(client, "hollis")
    rows = list(csv.DictReader(io.StringIO(client.get("/school/overview.csv?show=grace").get_data(as_text=True))))
    assert {r["pilot"] for r in rows} == {"Tobias Lindqvist"}


def test_csv_cells_cannot_start_a_spreadsheet_formula(app: Flask, client: FlaskClient) -> None:
    with app.app_context():
        session = db_session()
        services.get_pilot(session, person_id(app, "mara")).name = "=HYPERLINK(\"http://x.example\")"
        session.commit()
    sign_in(client, "hollis")
    text = client.get("/school/overview.csv").get_data(as_text=True)
    assert "\n=HYPERLINK" not in text and ",=HYPERLINK" not in text
    assert "'=HYPERLINK" in text


# Pilots get 404 from the overview and its CSV: tests/web/test_authorization_matrix.py.


def test_an_instructor_of_another_school_sees_only_their_own_pilots(app: Flask, client: FlaskClient) -> None:
    add_other_school(app)
    sign_in_as(client, *OTHER_SCHOOL["instructor"])
    page = client.get("/school").get_data(as_text=True)
    assert _names(page) == ["Osric Pemberton"]
    assert "Priya" not in client.get("/school/overview.csv").get_data(as_text=True)
    assert client.get(f"/pilots/{person_id(app, 'priya')}").status_code == 404
