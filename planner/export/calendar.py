"""Per-pilot calendars (RFC 5545, written with icalendar): practice sessions and currency deadlines.

* a session is a timed event in the airfield's time zone (``TZID`` plus a
  ``VTIMEZONE``), with the airfield as ``LOCATION``, both people, the content
  and briefing of each leg, the safety-pilot requirements of 14 CFR 91.109(c)
  and the caution in ``DESCRIPTION``; a cancelled one has ``STATUS:CANCELLED``;
* a deadline (instrument currency ends, regain stage ends, practice due) is
  an all-day event: ``DTSTART;VALUE=DATE`` on the day and an exclusive
  ``DTEND`` on the next day (RFC 5545 3.6.1);
* each event has a ``VALARM`` (``ACTION:DISPLAY`` with ``DESCRIPTION`` and
  ``TRIGGER``) because subscribed feeds refresh slowly: 12 hours before a
  session, 7 days before a deadline;
* ``UID`` is stable (stored with the session; derived from pilot, rule and
  scope for a deadline), ``SEQUENCE`` comes from the database and rises on
  every change; ``DTSTAMP`` is the ``now`` the caller passes.

Takes plain data (no database here); ``planner.planning.pilot_calendar_for``
gathers it.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime, timedelta
from zoneinfo import ZoneInfo

from icalendar import Alarm, Calendar, Event

from planner import CAUTION

PRODID = "-//Instrument practice planner//planner//EN"
SESSION_ALARM = timedelta(hours=-12)
DEADLINE_ALARM = timedelta(days=-7)
SAFETY_PILOT_RULE = (
    "Safety pilot (14 CFR 91.109(c)): at least a private pilot certificate with category and class ratings "
    "appropriate to the aircraft, and adequate vision forward and to each side (or a competent observer); "
    "a valid medical or BasicMed as a required crewmember (from memory). The aircraft needs fully "
    "functioning dual controls (14 CFR 91.109). Fly under the view-limiting device only in VMC."
)
STATUSES = {"proposed": "TENTATIVE", "accepted": "CONFIRMED", "flown": "CONFIRMED", "cancelled": "CANCELLED"}


@dataclass(frozen=True)
class SessionEvent:
    """A practice session as the calendar shows it. ``start``/``end`` are aware; ``timezone`` an IANA name."""

    uid: str
    sequence: int
    status: str  # proposed | accepted | cancelled | flown
    start: datetime
    end: datetime
    timezone: str
    location: str
    summary: str
    people: str  # e.g. "Pilot flying: A; safety pilot: B"
    details: str  # content and briefing, plain text
    explanation: str = ""


@dataclass(frozen=True)
class Deadline:
    """An all-day deadline on ``day`` (the last day something can be done)."""

    uid: str
    day: date
    summary: str
    details: str


def _alarm(text: str, trigger: timedelta) -> Alarm:
    alarm = Alarm()
    alarm.add("action", "DISPLAY")
    alarm.add("description", text)
    alarm.add("trigger", trigger)
    return alarm


def pilot_calendar(pilot_name: str, sessions: Sequence[SessionEvent], deadlines: Sequence[Deadline], *,
                   now: datetime) -> bytes:
    """An iCalendar document (bytes, CRLF line ends, folded at 75 octets) for one pilot."""
    if now.tzinfo is None:
        raise ValueError("now must be timezone-aware")
    cal = Calendar()
    cal.add("prodid", PRODID)
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("x-wr-calname", f"Instrument practice: {pilot_name}")
    first, last = now.date(), now.date()
    for s in sessions:
        tz = ZoneInfo(s.timezone)
        ev = Event()
        ev.add("uid", s.uid)
        ev.add("dtstamp", now)
        ev.add("sequence", s.sequence)
        ev.add("dtstart", s.start.astimezone(tz))
        ev.add("dtend", s.end.astimezone(tz))
        ev.add("summary", ("Cancelled: " if s.status == "cancelled" else "") + s.summary)
        ev.add("location", s.location)
        ev.add("status", STATUSES[s.status])
        ev.add("description", "\n\n".join(x for x in (
            s.people, s.details, SAFETY_PILOT_RULE, s.explanation, CAUTION) if x))
        if s.status != "cancelled":
            ev.add_component(_alarm(f"In 12 hours: {s.summary} at {s.location}", SESSION_ALARM))
        cal.add_component(ev)
        first, last = min(first, s.start.date()), max(last, s.end.date())
    for d in deadlines:
        ev = Event()
        ev.add("uid", d.uid)
        ev.add("dtstamp", now)
        ev.add("sequence", 0)
        ev.add("dtstart", d.day)
        ev.add("dtend", d.day + timedelta(days=1))  # exclusive end of an all-day event (RFC 5545 3.6.1)
        ev.add("summary", d.summary)
        ev.add("transp", "TRANSPARENT")
        ev.add("description", f"{d.details}\n\n{CAUTION}")
        ev.add_component(_alarm(f"In 7 days: {d.summary}", DEADLINE_ALARM))
        cal.add_component(ev)
    cal.add_missing_timezones(first_date=first - timedelta(days=1), last_date=last + timedelta(days=2))
    return cal.to_ical()
