"""Planning with pasted METAR/TAF text, practice minimums and the night-practice setting (real demo school).

References outside the planner: the TAF validity and change-group times are read off the report text by hand
(WMO No. 306 FM 51 code form); sunset comes from astral (a general-purpose library); 14 CFR 61.57(b) sets the
night-landing period (one hour after sunset to one hour before sunrise) and the 3 full-stop landings in 90 days.
"""

from __future__ import annotations

import re
from datetime import UTC, date, datetime, time, timedelta
from zoneinfo import ZoneInfo

import pytest
from astral import LocationInfo
from astral.sun import sun as astral_sun
from sqlalchemy.orm import Session

from planner import planning
from planner.core import weather
from planner.db import models, repository
from tests.demo_fixtures import db, demo_url  # noqa: F401

TZ = ZoneInfo("America/Denver")
NOW = datetime(2026, 12, 1, 6, tzinfo=UTC)
# Valid 1 Dec 12:00Z to 2 Dec 18:00Z; from 2 Dec 06:00Z sky clear, more than 6 SM.
GOOD_TAF = """TAF QJRR 011120Z 0112/0218 27012KT P6SM SCT050
  FM012000 30008KT 5SM BR BKN015
  FM020600 30008KT P6SM SKC"""
VALID_FROM, VALID_TO = datetime(2026, 12, 1, 12, tzinfo=UTC), datetime(2026, 12, 2, 18, tzinfo=UTC)


def _school(db: Session) -> models.School:
    return repository.find_by(db, models.School, slug="juniper-ridge")


def _person(db: Session, email: str) -> models.Person:
    return repository.person_by_email(db, email)


def _propose(db: Session, start: date, end: date, **options) -> planning.Proposal:  # type: ignore[no-untyped-def]
    return planning.propose_sessions(db, _school(db).id, start, end, now=NOW, **options)


# ------------------------------------------------------------------ weather text


def test_slots_inside_the_taf_validity_are_judged_from_the_report_and_the_rest_from_climatology(db: Session) -> None:
    reports = planning.read_reports(GOOD_TAF, now=NOW)
    prop = _propose(db, date(2026, 12, 1), date(2026, 12, 9), reports=reports)
    assert prop.vmc_basis
    for (start, end), basis in prop.vmc_basis.items():
        inside = VALID_FROM <= start and end <= VALID_TO
        assert planning.source_kind(basis) == ("report text" if inside else "climatology"), (start, basis)
        if inside and start >= datetime(2026, 12, 2, 6, tzinfo=UTC):
            assert basis.value == 1.0  # FM020600 P6SM SKC meets 3,000 ft / 5 SM
        if inside and datetime(2026, 12, 1, 20, tzinfo=UTC) <= start and end <= datetime(2026, 12, 2, 6, tzinfo=UTC):
            assert basis.value == 0.0  # FM012000 BKN015: below a 3,000 ft ceiling
    assert "1 pasted or imported report for QJRR" in prop.vmc_source
    # Priya (Wednesdays 07:00-11:00) flies on 2 Dec inside the TAF; the explanation names the report.
    inside = [ps for ps in prop.plan.sessions if VALID_FROM <= ps.slot.start and ps.slot.end <= VALID_TO]
    assert inside, "a session inside the TAF's validity"
    rows = planning.save_proposals(db, prop, now=NOW)
    for ps, row in zip(prop.plan.sessions, rows):
        weather_line = next(line for line in row.explanation.splitlines() if line.startswith("Weather: "))
        if ps in inside:
            assert weather_line.startswith("Weather: VMC likelihood 100% from the report text: TAF QJRR 011120Z")
        else:
            assert "from climatology (no report covers the slot)" in weather_line


def test_reports_for_another_station_are_ignored_and_said_so(db: Session) -> None:
    other = GOOD_TAF.replace("QJRR", "QKTM")
    prop = _propose(db, date(2026, 12, 1), date(2026, 12, 3), reports=planning.read_reports(other, now=NOW))
    assert all(planning.source_kind(b) == "climatology" for b in prop.vmc_basis.values())
    assert "Reports for other stations ignored (QKTM)" in prop.vmc_source


def test_unreadable_report_text_is_refused_naming_the_line() -> None:
    text = GOOD_TAF.replace("FM020600 30008KT P6SM SKC", "FM020600 30008KT P6SM SKX")
    with pytest.raises(planning.WeatherRejected, match=r"^line 3: .*'SKX'"):
        planning.read_reports(text, now=NOW)
    with pytest.raises(planning.WeatherRejected, match="at most 20,000"):
        planning.read_reports("METAR " * 5000, now=NOW)
    assert planning.read_reports("  \n", now=NOW) == ()


def test_the_plans_minimums_decide_report_and_climatology_likelihoods(db: Session) -> None:
    # OVC040 and 6+ SM: meets the default 3,000 ft / 5 SM, not a 5,000 ft ceiling (WMO code: OVC040 = 4,000 ft).
    taf = "TAF QJRR 011120Z 0112/0218 27012KT P6SM OVC040"
    reports = planning.read_reports(taf, now=NOW)
    start = end = date(2026, 12, 2)
    default = _propose(db, start, end, reports=reports)
    strict = _propose(db, start, end, reports=reports, minimums=planning.practice_minimums(5000, 5))
    slot = (datetime(2026, 12, 2, 8, tzinfo=TZ), datetime(2026, 12, 2, 10, tzinfo=TZ))
    assert default.vmc_basis[slot].value == 1.0 and strict.vmc_basis[slot].value == 0.0
    assert "ceiling 5,000 ft" in strict.vmc_source
    # Minimums of 0 ft and 0 SM are met by every observed hour: climatology gives 100 % (known answer).
    none = _propose(db, start, end, minimums=planning.practice_minimums(0, 0))
    assert {b.value for b in none.vmc_basis.values()} == {1.0}


@pytest.mark.parametrize(("ceiling", "visibility", "field"), [
    (-1, None, "ceiling_ft"), (10_001, None, "ceiling_ft"), (2500.5, None, "ceiling_ft"), (True, None, "ceiling_ft"),
    (None, -0.5, "visibility_sm"), (None, 10.5, "visibility_sm"), (None, float("nan"), "visibility_sm"),
    (None, "many", "visibility_sm"),
])
def test_practice_minimums_out_of_range_are_refused_naming_the_field(ceiling, visibility, field) -> None:  # type: ignore[no-untyped-def]
    with pytest.raises(planning.MinimumsRejected) as caught:
        planning.practice_minimums(ceiling, visibility)
    assert caught.value.field == field


def test_default_practice_minimums_are_3000_ft_and_5_sm() -> None:
    assert planning.practice_minimums() == weather.PracticeMinimums(3000, 5.0)  # issue 5 point 4 (product default)


# ------------------------------------------------------------------ night


MONDAY = date(2026, 12, 7)  # Tobias's weekday; Hollis does not instruct on Mondays


def _evening_for_tobias_and_hollis(db: Session) -> None:
    """Tobias, Hollis and N417JR are all available on Monday 7 Dec 17:00-22:00 local, and at no other time that day
    together (Tobias's own Monday window is 13:00-18:00)."""
    s, e = datetime.combine(MONDAY, time(17), TZ).astimezone(UTC), datetime.combine(MONDAY, time(22), TZ).astimezone(UTC)
    for who in ("tobias.lindqvist@juniper-ridge.example", "hollis.varga@juniper-ridge.example"):
        db.add(models.AvailabilityWindow(person_id=_person(db, who).id, starts_at=s, ends_at=e, timezone="America/Denver"))
    plane = repository.find_by(db, models.Aircraft, registration="N417JR")
    db.add(models.AvailabilityWindow(aircraft_id=plane.id, starts_at=s, ends_at=e, timezone="America/Denver"))
    db.flush()


def _astral(day: date) -> dict:
    field = LocationInfo("QJRR", "", "America/Denver", 40.41, -104.58)
    return astral_sun(field.observer, date=day, tzinfo=TZ)


def _sunset(day: date) -> datetime:
    return _astral(day)["sunset"]


def _tobias_sessions(prop: planning.Proposal, tobias: models.Person) -> list:
    return [ps for ps in prop.plan.sessions if any(prop.person_ids[leg.pilot_flying] == tobias.id for leg in ps.legs)]


def test_a_pilot_who_allows_night_gets_an_evening_session_with_the_61_57_b_note(db: Session) -> None:
    field = _school(db).home_airfield
    assert (round(field.latitude, 4), round(field.longitude, 4)) == (40.41, -104.58)  # the astral location above
    _evening_for_tobias_and_hollis(db)
    tobias = _person(db, "tobias.lindqvist@juniper-ridge.example")

    daylight = _propose(db, MONDAY, MONDAY)
    assert not _tobias_sessions(daylight, tobias), "daylight only by default"

    tobias.night_practice = True
    db.flush()
    night = _propose(db, MONDAY, MONDAY)
    (ps,) = _tobias_sessions(night, tobias)
    sunset = _sunset(MONDAY)
    assert ps.slot.start >= sunset - timedelta(minutes=2) and not ps.slot.daylight  # astral: after sunset
    note = night.night_note(ps)
    assert note and "14 CFR 61.57(b)" in note and "3 takeoffs and 3 landings to a full stop" in note
    # The counting period starts one hour after sunset (14 CFR 61.57(b)); astral's sunset within 2 minutes.
    until, since = re.search(r"in the period \(until (\d\d:\d\d) and from (\d\d:\d\d) local\)", note).groups()
    sky = _astral(MONDAY)
    for shown, expected in ((until, sky["sunrise"] - timedelta(hours=1)), (since, sky["sunset"] + timedelta(hours=1))):
        got = datetime.combine(MONDAY, datetime.strptime(shown, "%H:%M").time())
        assert abs(got - expected.replace(tzinfo=None)) <= timedelta(minutes=2), (got, expected)
    assert "Tobias Lindqvist's night landings" in note  # his 61.57(b) need, which a daylight session cannot serve
    assert "Evening slots included" in night.vmc_source
    row = next(r for p, r in zip(night.plan.sessions, planning.save_proposals(db, night, now=NOW)) if p == ps)
    assert f"Night: {note}" in row.explanation.splitlines()
    assert row.content["daylight"] is False

    plan_in_daylight = _propose(db, MONDAY, MONDAY, daylight_only=True)
    assert not _tobias_sessions(plan_in_daylight, tobias), "the plan option keeps everyone in daylight"
    assert "Daylight only for this plan" in plan_in_daylight.vmc_source


def test_landings_before_one_hour_after_sunset_are_said_not_to_count(db: Session) -> None:
    field = _school(db).home_airfield
    sunset = _sunset(MONDAY)
    early = planning.night_note(field, sunset - timedelta(minutes=30), sunset + timedelta(minutes=30))
    assert early and "do not count" in early and "14 CFR 61.57(b)" in early
    late = planning.night_note(field, sunset + timedelta(minutes=50), sunset + timedelta(minutes=70))
    assert late and "also builds night landing currency" in late
    noon = datetime.combine(MONDAY, time(11), TZ)
    assert planning.night_note(field, noon, noon + timedelta(hours=2)) is None


def test_a_move_into_the_dark_is_refused_unless_the_pilot_allows_night(db: Session) -> None:
    prop = _propose(db, date(2026, 12, 1), date(2026, 12, 28))
    rows = planning.save_proposals(db, prop, now=NOW)
    row = next(r for r in rows if not r.is_mutual)
    pilot = row.pilot_flying
    pilot.night_practice = False
    evening = datetime.combine(date(2026, 12, 22), time(19), TZ)  # after sunset in December at QJRR (astral)
    assert evening > _sunset(date(2026, 12, 22))
    with pytest.raises(planning.SessionRejected, match=f"not be in daylight.*{pilot.name} has not allowed night"):
        planning.move_session(db, row.id, evening, now=NOW)
    assert row.sequence == 0
    pilot.night_practice = True
    planning.move_session(db, row.id, evening, now=NOW)
    lines = row.explanation.splitlines()
    assert any(line.startswith("Moved: by hand to 2026-12-22 19:00") for line in lines)
    assert any(line.startswith("Night: ") and "61.57(b)" in line for line in lines)
    assert row.content["daylight"] is False
    noon = datetime.combine(date(2026, 12, 23), time(11), TZ)
    planning.move_session(db, row.id, noon, now=NOW)  # back into daylight: the night line goes
    assert not any(line.startswith("Night: ") for line in row.explanation.splitlines())
    assert row.content["daylight"] is True
