"""Calendar export (RFC 5545) on the real demo school, parsed back by two parsers.

vobject (an independent iCalendar parser from PyPI) and icalendar (the
writer's own library) both read the output; the properties checked are those
RFC 5545 requires or defines: VERSION and PRODID (3.7.4, 3.7.3), UID and
DTSTAMP per VEVENT (3.6.1), CRLF line ends and folding at 75 octets (3.1),
SEQUENCE (3.8.7.4), STATUS:CANCELLED (3.8.1.11), an all-day DTEND that is
exclusive (3.6.1), VALARM with ACTION:DISPLAY, DESCRIPTION and TRIGGER
(3.6.6), TZID with a VTIMEZONE (3.2.19, 3.6.5).
"""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta
from zoneinfo import ZoneInfo

import icalendar
import vobject
from sqlalchemy.orm import Session

from planner import CAUTION, planning
from planner.db import models, repository
from tests.demo_fixtures import db, demo_url  # noqa: F401

START, END = date(2026, 12, 1), date(2026, 12, 28)
NOW = datetime(2026, 12, 1, 6, tzinfo=UTC)
LATER = datetime(2026, 12, 2, 6, tzinfo=UTC)


def _mara_and_her_session(db: Session) -> tuple[models.Person, models.PracticeSession]:
    school = repository.find_by(db, models.School, slug="juniper-ridge")
    rows = planning.save_proposals(db, planning.propose_sessions(db, school.id, START, END, now=NOW), now=NOW)
    mara = repository.person_by_email(db, "mara.oyelaran@juniper-ridge.example")
    row = next(r for r in rows if mara.id in r.people_ids)
    return mara, row


def _export(db: Session, person_id: int, now: datetime = NOW) -> bytes:
    return planning.pilot_calendar_for(db, person_id, START, now=now)


def _vevents(data: bytes) -> list:
    return list(vobject.readOne(data.decode("utf-8")).vevent_list)


def test_lines_end_in_crlf_and_fold_at_75_octets(db: Session) -> None:
    mara, _ = _mara_and_her_session(db)
    data = _export(db, mara.id)
    assert data.endswith(b"\r\n")
    lines = data.split(b"\r\n")[:-1]
    assert all(b"\n" not in line and b"\r" not in line for line in lines)  # RFC 5545 3.1: CRLF only
    assert max(len(line) for line in lines) <= 75  # RFC 5545 3.1: 75 octets, line break excluded
    assert any(line.startswith(b" ") for line in lines)  # long descriptions were folded, not cut


def test_calendar_and_events_carry_the_required_properties_in_both_parsers(db: Session) -> None:
    mara, row = _mara_and_her_session(db)
    data = _export(db, mara.id)
    cal = vobject.readOne(data.decode("utf-8"))
    assert cal.version.value == "2.0" and cal.prodid.value
    events = _vevents(data)
    assert events
    for ev in events:
        assert ev.uid.value and isinstance(ev.dtstamp.value, datetime)
    parsed = icalendar.Calendar.from_ical(data)
    assert str(parsed["VERSION"]) == "2.0" and parsed["PRODID"]
    ical_events = list(parsed.walk("VEVENT"))
    assert {str(e["UID"]) for e in ical_events} == {ev.uid.value for ev in events}

    (session_ev,) = [ev for ev in events if ev.uid.value == row.uid]
    text = session_ev.description.value
    assert row.pilot_flying.name in text and row.safety_pilot.name in text
    assert CAUTION in text and "91.109(c)" in text and "Briefing" in text
    assert "Juniper Ridge Regional" in session_ev.location.value
    # TZID and the airfield's zone: vobject resolves the VTIMEZONE by itself
    start = session_ev.dtstart.value
    assert start.utcoffset() == timedelta(hours=-7)  # America/Denver in December (MST), from the VTIMEZONE
    assert start == row.starts_at
    assert b"DTSTART;TZID=America/Denver:" in data and b"BEGIN:VTIMEZONE" in data
    assert str(list(parsed.walk("VTIMEZONE"))[0]["TZID"]) == "America/Denver"


def test_deadlines_are_all_day_with_an_exclusive_end_and_alarms_fire_before(db: Session) -> None:
    mara, row = _mara_and_her_session(db)
    events = _vevents(_export(db, mara.id))
    all_day = [ev for ev in events if not isinstance(ev.dtstart.value, datetime)]
    assert all_day, "Mara has currency and practice deadlines"
    assert any(ev.summary.value.startswith("Currency ends: ") for ev in all_day)
    for ev in all_day:
        assert isinstance(ev.dtstart.value, date) and ev.dtend.value == ev.dtstart.value + timedelta(days=1)
        assert CAUTION in ev.description.value
    for ev in events:
        if ev.uid.value == row.uid or ev in all_day:
            (alarm,) = ev.valarm_list
            assert alarm.action.value == "DISPLAY" and alarm.description.value
            assert alarm.trigger.value < timedelta(0)  # before the start
    (session_ev,) = [ev for ev in events if ev.uid.value == row.uid]
    assert session_ev.valarm.trigger.value == timedelta(hours=-12)
    assert all_day[0].valarm.trigger.value == timedelta(days=-7)


def test_uids_are_stable_and_sequence_rises_after_a_move(db: Session) -> None:
    mara, row = _mara_and_her_session(db)
    first = {ev.uid.value: ev for ev in _vevents(_export(db, mara.id))}
    second = {ev.uid.value: ev for ev in _vevents(_export(db, mara.id, LATER))}
    assert set(first) == set(second)
    assert int(first[row.uid].sequence.value) == 0
    planning.move_session(db, row.id, row.starts_at + timedelta(days=1), now=LATER)
    moved = {ev.uid.value: ev for ev in _vevents(_export(db, mara.id, LATER))}
    assert row.uid in moved and int(moved[row.uid].sequence.value) == 1
    assert moved[row.uid].dtstart.value == first[row.uid].dtstart.value + timedelta(days=1)


def test_a_cancelled_session_stays_with_status_cancelled(db: Session) -> None:
    mara, row = _mara_and_her_session(db)
    planning.cancel_session(db, row.id, now=LATER)
    data = _export(db, mara.id, LATER)
    (ev,) = [e for e in _vevents(data) if e.uid.value == row.uid]
    assert ev.status.value == "CANCELLED" and int(ev.sequence.value) == 1
    (ic,) = [e for e in icalendar.Calendar.from_ical(data).walk("VEVENT") if str(e["UID"]) == row.uid]
    assert str(ic["STATUS"]) == "CANCELLED"


def test_the_safety_pilot_sees_the_session_in_their_calendar_too(db: Session) -> None:
    _, row = _mara_and_her_session(db)
    other = row.safety_pilot_id if row.pilot_flying.email.startswith("mara") else row.pilot_flying_id
    assert row.uid in {ev.uid.value for ev in _vevents(_export(db, other))}
    tz = ZoneInfo(row.timezone)
    assert row.starts_at.astimezone(tz).hour >= 7
