"""The demo pilots' logbooks (seed_demo/logbooks, an invented scenario) read, round-trip,
and tell the story they are meant to tell as of 2026-12-01.

The story checks below are a deliberately plain reading of the regulation text, written
here and not taken from the currency engine, so that a mistake in the scenario files is
caught independently of the engine:

- 14 CFR 61.57(c): within the 6 calendar months preceding the month of the flight, six
  instrument approaches, holding, intercepting and tracking courses, in actual or simulated
  instrument conditions, in an aircraft of the category or in an FFS/FTD/ATD representing it.
- 14 CFR 61.51(g): each approach logged with its type and location; simulated instrument
  time in an aircraft with the safety pilot's name (an instructor on board counts as named).
- 14 CFR 61.57(d): failing 61.57(c) for more than six calendar months, only an instrument
  proficiency check restores currency.
- 14 CFR 61.57(a)/(b): 3 takeoffs and landings (at night: to a full stop) in the preceding
  90 days to carry passengers.
- 14 CFR 61.56: flight review within the preceding 24 calendar months.
- 14 CFR 91.109(c): the safety pilot holds category and class ratings for the aircraft.
"""

from __future__ import annotations

from datetime import date, timedelta
from pathlib import Path

import pytest

from planner.core.logbook import Approach, Entry, Logbook
from planner.export import interchange as ix

LOGBOOKS = Path(__file__).parents[2] / "seed_demo" / "logbooks"
AS_OF = date(2026, 12, 1)
NAMES = {
    "mara": "Mara Oyelaran",
    "tobias": "Tobias Lindqvist",
    "priya": "Priya Castellano",
    "dev": "Dev Halloran",
    "signe": "Signe Mbeki",
    "rafael": "Rafael Okonkwo-Berg",
}
INSTRUCTOR = "Hollis Varga"  # the school's CFII (invented scenario)
FLEET = {"N417JR": "single-engine-land", "N82JR": "single-engine-land", "N650JR": "multi-engine-land"}
AIRFIELDS = {"QJRR", "QPNV", "QCTW"}


def load(slug: str) -> Logbook:
    return ix.read_json((LOGBOOKS / f"{slug}.json").read_text(encoding="utf-8"))


# ------------------------------------------------------- plain reference reading


def month_number(d: date) -> int:
    return d.year * 12 + d.month - 1


def counts_for_6157c(e: Entry) -> bool:
    """Instrument work that 61.57(c) and 61.51(g) let us credit at all (category airplane)."""
    if e.category != "airplane":
        return False
    if e.device != "aircraft":  # FFS/FTD/ATD representing an airplane
        return True
    if e.conditions == "actual":
        return True
    return e.conditions == "simulated" and bool(e.safety_pilot or e.instructor)


def logged_approaches(e: Entry) -> list[Approach]:
    """Approaches with type and location logged (61.51(g)); the integer shorthand never counts."""
    return [a for a in e.approaches if a.type and a.airfield]


def meets_6157c_for_flight_in(book: Logbook, month: int, *, devices: bool = True) -> bool:
    """6 calendar months preceding ``month``: >= 6 approaches, a hold, tracking."""
    window = [
        e
        for e in book.entries
        if month - 6 <= month_number(e.date) <= month - 1
        and counts_for_6157c(e)
        and (devices or e.device == "aircraft")
    ]
    approaches = sum(len(logged_approaches(e)) for e in window)
    return approaches >= 6 and any(e.holds for e in window) and any(e.course_tracking for e in window)


def last_month_current(book: Logbook) -> int | None:
    for month in range(month_number(AS_OF), month_number(date(2025, 6, 1)), -1):
        if meets_6157c_for_flight_in(book, month):
            return month
    return None


def stage_on_as_of(book: Logbook) -> str:
    """current / grace (tasks may still be flown) / ipc (61.57(d)); checks ignored here."""
    now = month_number(AS_OF)
    last = last_month_current(book)
    if last == now:
        return "current"
    if last is not None and now - last <= 6:
        return "grace"
    return "ipc"


def within_days(book: Logbook, days: int) -> list[Entry]:
    first = AS_OF - timedelta(days=days)
    return [e for e in book.entries if first <= e.date < AS_OF]


# ------------------------------------------------------- every file


@pytest.mark.parametrize("slug", sorted(NAMES))
def test_demo_logbook_reads_and_round_trips_in_both_formats(slug):
    text = (LOGBOOKS / f"{slug}.json").read_text(encoding="utf-8")
    book = ix.read_json(text)
    assert ix.write_json(book) == text  # the file is in canonical form
    csv_text = ix.write_csv(book)
    assert ix.read_csv(csv_text) == book
    assert ix.write_csv(ix.read_csv(csv_text)) == csv_text


def test_there_are_exactly_the_six_demo_logbooks():
    assert sorted(p.stem for p in LOGBOOKS.glob("*.json")) == sorted(NAMES)


@pytest.mark.parametrize("slug", sorted(NAMES))
def test_demo_logbook_is_consistent_with_the_scenario(slug):
    book = load(slug)
    assert book.pilot.name == NAMES[slug]
    assert book.pilot.home_timezone == "America/Denver"
    assert "airplane" in book.pilot.instrument_categories
    dates = [e.date for e in book.entries]
    assert date(2025, 6, 1) <= min(dates) < date(2025, 7, 1)
    assert date(2026, 11, 1) <= max(dates) < AS_OF  # 18 months, nothing after "today"
    assert len(book.entries) >= 20
    for e in book.entries:
        assert e.id.startswith(slug + "-")
        for a in e.approaches:
            assert a.airfield is None or a.airfield in AIRFIELDS, e.id
            assert a.type in {"ILS", "LOC", "RNAV (GPS)", "VOR", None}, e.id
        if e.device == "aircraft":
            assert e.aircraft in FLEET and e.aircraft_class == FLEET[e.aircraft], e.id
            assert e.landings >= 1 and e.total_hours > 0, e.id
            assert e.route and set(e.route.split("-")) <= AIRFIELDS, e.id
        if e.safety_pilot:
            assert e.safety_pilot != book.pilot.name, e.id
            assert e.safety_pilot in NAMES.values(), e.id
            if e.aircraft_class == "multi-engine-land":  # 14 CFR 91.109(c)
                holder = load(next(s for s, n in NAMES.items() if n == e.safety_pilot))
                assert "airplane/multi-engine-land" in holder.pilot.category_classes, e.id
        if e.instructor:
            assert e.instructor == INSTRUCTOR and e.dual_received_hours == e.total_hours, e.id
        assert e.instrument_actual_hours + e.instrument_simulated_hours <= max(e.total_hours, 2.0), e.id
    reviews = [e.date for e in book.entries if {"flight-review", "instrument-practical-test"} & set(e.checks)]
    # 14 CFR 61.56(a),(d): review or practical test within the 24 calendar months before Dec 2026
    assert reviews and month_number(max(reviews)) >= month_number(AS_OF) - 24


# ------------------------------------------------------- each pilot's story


def test_mara_is_instrument_current_with_margin_and_passenger_current():
    book = load("mara")
    window = [e for e in book.entries if date(2026, 6, 1) <= e.date <= date(2026, 11, 30)]
    credited = [a for e in window if counts_for_6157c(e) for a in logged_approaches(e)]
    assert len(credited) >= 6  # 14 CFR 61.57(c)(1)
    assert any(e.holds for e in window) and any(e.course_tracking for e in window)
    assert stage_on_as_of(book) == "current"
    # 14 CFR 61.57(a)/(b): preceding 90 days
    recent = within_days(book, 90)
    assert sum(e.landings for e in recent) >= 3
    assert sum(e.night_full_stop_landings for e in recent) >= 3
    # practice beyond currency within 90 days (product default target, domain notes §3)
    assert sum(e.partial_panel_approaches for e in recent) >= 1
    assert sum(e.ua_nose_high for e in recent) >= 1 and sum(e.ua_nose_low for e in recent) >= 1
    # the deliberate imperfection: approaches logged only as a number, never credited
    shorthand = [e for e in window if e.unlogged_approaches]
    assert shorthand and not any(logged_approaches(e) for e in shorthand)


def test_tobias_is_in_the_grace_stage():
    book = load("tobias")
    # last instrument task in April 2026: current through 31 Oct 2026 (61.57(c)),
    # tasks may still be flown until 30 Apr 2027 (61.57(d))
    tasks = [e for e in book.entries if e.approaches or e.holds or e.course_tracking]
    assert max(e.date for e in tasks).isoformat().startswith("2026-04")
    assert last_month_current(book) == month_number(date(2026, 10, 1))
    assert not meets_6157c_for_flight_in(book, month_number(date(2026, 11, 1)))
    assert stage_on_as_of(book) == "grace"


def test_priya_needs_an_ipc_and_still_flies_vfr():
    book = load("priya")
    tasks = [e for e in book.entries if e.approach_count or e.holds or e.course_tracking]
    assert max(e.date for e in tasks) < date(2025, 12, 1)
    assert last_month_current(book) == month_number(date(2026, 2, 1))  # tasks Aug/Sep 2025
    assert stage_on_as_of(book) == "ipc"  # 61.57(d): lapsed more than six calendar months
    assert not any("ipc" in e.checks for e in book.entries)
    assert sum(e.landings for e in within_days(book, 90)) >= 3  # 61.57(a), VFR flying


def test_dev_is_legally_current_but_has_no_partial_panel_or_unusual_attitudes_since_march():
    book = load("dev")
    assert stage_on_as_of(book) == "current"
    # even without the ATD sessions, the aircraft alone keep him current
    assert meets_6157c_for_flight_in(book, month_number(AS_OF), devices=False)
    assert any(e.device == "atd" and e.approaches for e in book.entries if e.date >= date(2026, 6, 1))
    practice = [e for e in book.entries if e.partial_panel_approaches or e.ua_nose_high or e.ua_nose_low]
    last = max(e.date for e in practice)
    assert last.isoformat().startswith("2026-03")
    assert (AS_OF - last).days >= 240  # about eight months
    # the deliberate imperfection: an approach with no location logged
    assert any(a.type and not a.airfield for e in book.entries for a in e.approaches)


def test_signe_passed_the_instrument_practical_test_in_october():
    book = load("signe")
    (test,) = [e for e in book.entries if "instrument-practical-test" in e.checks]
    assert test.date.isoformat().startswith("2026-10")
    assert len([e for e in book.entries if e.date > test.date]) <= 3
    before = [e for e in book.entries if date(2026, 1, 1) <= e.date < test.date]
    assert before and all(e.instructor == INSTRUCTOR for e in before if e.approaches)


def test_rafael_holds_two_licences_and_had_an_easa_check_in_february():
    book = load("rafael")
    (check,) = [e for e in book.entries if "ir-proficiency-check" in e.checks]
    assert check.date.isoformat().startswith("2026-02") and check.device == "ffs"
    assert "airplane/multi-engine-land" in book.pilot.category_classes
    assert stage_on_as_of(book) == "current"
    # the deliberate imperfection: simulated instrument time without the safety pilot's name
    assert any(
        e.device == "aircraft" and e.conditions == "simulated" and not (e.safety_pilot or e.instructor)
        for e in book.entries
    )
