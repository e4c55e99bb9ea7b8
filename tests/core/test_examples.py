"""Published and worked examples, one row per case, each naming its source.

Sources: regulation sections (14 CFR, CAR, Part-FCL, CASR), FAA guidance, and
the project's domain notes where a value is common practice or recalled
("from memory").
"""

from __future__ import annotations

from dataclasses import replace
from datetime import date

import pytest

from planner import rulesets
from planner.core import currency
from planner.core.logbook import Approach, Entry, Pilot

from tests.core._fixtures import AIRPLANE_PILOT, D, approaches, book, check, ifr, landings

FAA = rulesets.load_builtin("faa-part61")


def faa_status(lb, as_of: str, requirement: str = "instrument", scope: str | None = None, rule_sets=(FAA,)):
    rs = rule_sets[0]
    return currency.evaluate(lb, list(rule_sets), D(as_of)).find(rs.id, requirement, scope)


# --------------------------------------------------------------- 61.57(c)/(d)

INSTRUMENT_CASES = [
    # (entries, as_of, state, valid_through, regain_by, regain_with)
    pytest.param([ifr("a", "2024-09-05")], "2025-03-20", "current", "2025-03-31", None, None,
                 id="month-end: tasks 5 Sep keep a 20 Mar flight legal (14 CFR 61.57(c); common practice)"),
    pytest.param([ifr("a", "2024-09-05")], "2025-03-31", "current", "2025-03-31", None, None,
                 id="month-end: still current on 31 Mar (14 CFR 61.57(c))"),
    pytest.param([ifr("a", "2024-09-05")], "2025-04-01", "grace", "2025-03-31", "2025-09-30", "tasks",
                 id="grace starts the first day of m+7 (14 CFR 61.57(d))"),
    pytest.param([ifr("a", "2023-08-14")], "2024-02-29", "current", "2024-02-29", None, None,
                 id="leap year: Aug 2023 tasks current through 29 Feb 2024 (14 CFR 61.57(c); domain notes 1.3)"),
    pytest.param([ifr("a", "2023-08-14")], "2024-03-01", "grace", "2024-02-29", "2024-08-31", "tasks",
                 id="leap year: grace from 1 Mar 2024 (14 CFR 61.57(d))"),
    pytest.param([ifr("a", "2024-01-10")], "2025-01-31", "grace", "2024-07-31", "2025-01-31", "tasks",
                 id="last day of grace is the last day of m+12 (14 CFR 61.57(d); 76 FR 78141)"),
    pytest.param([ifr("a", "2024-01-10")], "2025-02-01", "lapsed", "2024-07-31", None, "check",
                 id="after the grace stage only an IPC (14 CFR 61.57(d); FAA Chief Counsel 2012)"),
    pytest.param([ifr("a", "2024-01-10"), ifr("b", "2025-01-31")], "2025-01-31", "current", "2025-07-31", None, None,
                 id="tasks on the last day of grace restore currency (14 CFR 61.57(d))"),
    pytest.param([ifr("a", "2024-01-10"), ifr("b", "2025-02-01")], "2025-02-01", "lapsed", "2024-07-31", None, "check",
                 id="tasks the day after grace do not restore currency (14 CFR 61.57(d); 76 FR 78141)"),
    pytest.param([ifr("a", "2024-01-10"), ifr("b", "2025-02-01"), check("c", "2025-06-03")], "2025-06-03", "current",
                 "2025-12-31", None, None,
                 id="IPC on 3 Jun: current through 31 Dec (14 CFR 61.57(d); AC 61-98, from memory)"),
    pytest.param([ifr("a", "2024-01-10"), check("c", "2025-03-17")], "2025-03-17", "current", "2025-09-30", None, None,
                 id="same-day check: an IPC on the day of the flight makes it legal (14 CFR 61.57(d); from memory)"),
    pytest.param([ifr("a", "2024-01-10"), check("c", "2025-03-17")], "2025-03-16", "lapsed", "2024-07-31", None, "check",
                 id="the day before the IPC the pilot is still lapsed (14 CFR 61.57(d))"),
    pytest.param([ifr("a", "2025-01-10", n=3, holds=0, tracking=False), ifr("b", "2025-03-02", n=3)], "2025-07-31",
                 "current", "2025-07-31", None, None,
                 id="six approaches age separately: oldest of the six in Jan limits to 31 Jul (14 CFR 61.57(c); domain notes 1.3)"),
    pytest.param([ifr("a", "2025-01-10", n=3, holds=0, tracking=False), ifr("b", "2025-03-02", n=3)], "2025-08-01",
                 "grace", "2025-07-31", "2026-01-31", "tasks",
                 id="six approaches age separately: grace once January leaves the window (14 CFR 61.57(c)/(d))"),
    pytest.param([ifr("a", "2025-03-02", holds=0), ifr("b", "2025-01-10", n=0, holds=1, tracking=False)], "2025-07-31",
                 "current", "2025-07-31", None, None,
                 id="the latest hold limits when it is the oldest item (14 CFR 61.57(c); domain notes 1.3)"),
    pytest.param([ifr("a", "2024-09-05"), ifr("late", "2025-03-25")], "2025-03-20", "current", "2025-03-31", None, None,
                 id="entries after as_of are ignored (issue 3 point 4)"),
    pytest.param([ifr("a", "2024-09-05", n=5)], "2024-09-05", "lapsed", None, None, "tasks",
                 id="five approaches are not six: never current, tasks establish it (14 CFR 61.57(c))"),
]


@pytest.mark.parametrize("entries, as_of, state, valid_through, regain_by, regain_with", INSTRUMENT_CASES)
def test_faa_instrument_experience_worked_examples(entries, as_of, state, valid_through, regain_by, regain_with):
    status = faa_status(book(*entries), as_of)
    assert (status.state, status.valid_through, status.regain_by, status.regain_with) == (
        state,
        D(valid_through) if valid_through else None,
        D(regain_by) if regain_by else None,
        regain_with,
    )


def test_current_month_counts_by_default_and_the_literal_reading_is_an_option():
    """Common practice counts tasks flown earlier in the flight's month; the literal reading does not (domain notes 1.3)."""
    lb = book(ifr("a", "2024-09-05"))
    assert faa_status(lb, "2024-09-20").state == "current"
    literal_text = (rulesets.resources.files("planner.rulesets") / "faa-part61.toml").read_text().replace(
        "current_month_counts = true", "current_month_counts = false"
    )
    literal = rulesets.parse(literal_text, "faa-literal.toml")
    on_20_sep = faa_status(lb, "2024-09-20", rule_sets=(literal,))
    assert on_20_sep.state == "lapsed" and on_20_sep.valid_through is None
    on_1_oct = faa_status(lb, "2024-10-01", rule_sets=(literal,))
    assert (on_1_oct.state, on_1_oct.valid_through) == ("current", D("2025-03-31"))


def test_devices_count_since_2018_without_safety_pilot_or_instructor():
    """Since 26 Nov 2018 an ATD counts for 61.57(c)(1) with no instructor (83 FR 30232)."""
    atd = Entry(id="atd1", date=D("2019-02-10"), device="atd", approaches=approaches(6), holds=1, course_tracking=True)
    status = faa_status(book(atd), "2019-02-10")
    assert (status.state, status.valid_through, status.evidence) == ("current", D("2019-08-31"), ("atd1",))


def test_atd_before_2018_needs_the_two_month_atd_path():
    """2009-2018 ATD path: 2 calendar months, 3 hours, unusual attitudes (14 CFR 61.57(c)(3) 2009-2018, from memory)."""
    base = Entry(id="atd1", date=D("2015-03-10"), device="atd", approaches=approaches(6), holds=1, course_tracking=True)
    assert faa_status(book(base), "2015-03-10").state == "lapsed"
    full = replace(base, instrument_simulated_hours=3.0, ua_nose_high=2, ua_nose_low=2)
    status = faa_status(book(full), "2015-03-10")
    assert (status.state, status.valid_through) == ("current", D("2015-05-31"))


def test_instrument_requirement_is_per_category_held():
    """Credit is per aircraft category (14 CFR 61.57(c); domain notes 1.1)."""
    pilot = Pilot(name="Two Ratings", instrument_categories=("airplane", "rotorcraft"))
    report = currency.evaluate(book(ifr("a", "2025-01-10"), pilot=pilot), [FAA], D("2025-02-01"))
    airplane = report.find("faa-part61", "instrument", "airplane")
    rotorcraft = report.find("faa-part61", "instrument", "rotorcraft")
    assert airplane.state == "current" and rotorcraft.state == "lapsed"


def test_multi_engine_privileges_stay_current_on_single_engine_experience():
    """Experience counts per category, not class (domain notes 1.1, from memory)."""
    pilot = replace(AIRPLANE_PILOT, category_classes=("airplane/multi-engine-land",))
    status = faa_status(book(ifr("a", "2025-01-10", aircraft_class="single-engine-land"), pilot=pilot), "2025-02-01")
    assert status.state == "current"


# ------------------------------------------------------------ not creditable


def test_uncreditable_work_is_named_with_the_reason():
    """Logged means logged: 14 CFR 61.51(g), FAA InFO 15012; safety pilot 91.109(c)."""
    no_type = Entry(id="n1", date=D("2025-01-05"), conditions="actual", aircraft_class="single-engine-land",
                    approaches=(Approach(None, "XQA1"),) + approaches(5), holds=1, course_tracking=True)
    shorthand = Entry(id="n2", date=D("2025-01-06"), conditions="actual", unlogged_approaches=4)
    hood = Entry(id="n3", date=D("2025-01-07"), conditions="simulated", approaches=approaches(2))
    unknown = Entry(id="n4", date=D("2025-01-08"), approaches=approaches(1))
    heli = Entry(id="n5", date=D("2025-01-09"), category="rotorcraft", conditions="actual", approaches=approaches(6))
    status = faa_status(book(no_type, shorthand, hood, unknown, heli), "2025-01-31")
    assert status.state == "lapsed"
    assert status.missing == {"approaches": 1}
    text = "\n".join(status.warnings)
    assert "entry n1 (2025-01-05): approach 1 has no type or airfield" in text
    assert "entry n2 (2025-01-06): 4 approach(es) logged as a number" in text
    assert "entry n3 (2025-01-07): approach 1: simulated instrument work in an aircraft with neither safety pilot nor instructor" in text
    assert "entry n4 (2025-01-08): approach 1: conditions (actual or simulated) not logged" in text
    assert "entry n5 (2025-01-09): work in another category (rotorcraft)" in text


def test_simulated_work_with_a_safety_pilot_counts_and_conditions_are_inferred_from_hours():
    """91.109(c) safety pilot; unlogged conditions read from the instrument hours (issue 3 seam note)."""
    hood = Entry(id="h", date=D("2025-01-07"), conditions="simulated", safety_pilot="C. Seat",
                 approaches=approaches(3), holds=1, course_tracking=True)
    inferred = Entry(id="i", date=D("2025-01-08"), instrument_actual_hours=0.8, approaches=approaches(3))
    status = faa_status(book(hood, inferred), "2025-01-31")
    assert (status.state, status.valid_through, set(status.evidence)) == ("current", D("2025-07-31"), {"h", "i"})


# ------------------------------------------------------------- 61.57(a)/(b)

PASSENGER_CASES = [
    pytest.param("passengers-day", [landings("l", "2025-01-01")], "2025-04-01", "current", "2025-04-01",
                 id="landing 1 Jan 2025 current through 1 Apr 2025 (14 CFR 61.57(a); common practice)"),
    pytest.param("passengers-day", [landings("l", "2025-01-01")], "2025-04-02", "lapsed", "2025-04-01",
                 id="lapsed on 2 Apr 2025 (14 CFR 61.57(a))"),
    pytest.param("passengers-day", [landings("a", "2024-12-01", 2), landings("b", "2025-01-15", 1)], "2025-03-01",
                 "current", "2025-03-01",
                 id="third-most-recent landing limits: 1 Dec + 90 days (14 CFR 61.57(a))"),
    pytest.param("passengers-night", [landings("l", "2024-02-01", 3, night_full_stop=3)], "2024-05-01", "current",
                 "2024-05-01", id="night full-stop landings, leap year (14 CFR 61.57(b); 29 Feb counted)"),
    pytest.param("passengers-night", [landings("l", "2024-02-01", 3, night_full_stop=2)], "2024-02-01", "lapsed", None,
                 id="two night full-stop landings are not three (14 CFR 61.57(b))"),
]


@pytest.mark.parametrize("requirement, entries, as_of, state, valid_through", PASSENGER_CASES)
def test_faa_passenger_currency_worked_examples(requirement, entries, as_of, state, valid_through):
    status = faa_status(book(*entries), as_of, requirement, "airplane/single-engine-land")
    assert (status.state, status.valid_through) == (state, D(valid_through) if valid_through else None)
    assert status.regain_with == (None if state == "current" else "tasks")


def test_stricter_ninety_day_reading_ends_a_day_earlier():
    """Stricter reading of 'within the preceding 90 days' (domain notes 1.4, common practice)."""
    text = (rulesets.resources.files("planner.rulesets") / "faa-part61.toml").read_text()
    strict = rulesets.parse(text.replace("inclusive = true", "inclusive = false"), "faa-strict.toml")
    status = faa_status(book(landings("l", "2025-01-01")), "2025-04-01", "passengers-day", rule_sets=(strict,))
    assert (status.state, status.valid_through) == ("lapsed", D("2025-03-31"))


def test_landings_in_another_class_do_not_count_for_the_class():
    """Same category and class (14 CFR 61.57(a)(1))."""
    lb = book(landings("l", "2025-01-01", aircraft_class="multi-engine-land"))
    assert faa_status(lb, "2025-01-02", "passengers-day", "airplane/single-engine-land").state == "lapsed"


# ------------------------------------------------------------------ 61.56

FLIGHT_REVIEW_CASES = [
    pytest.param([check("r", "2023-06-15", "flight-review")], "2025-06-30", "current", "2025-06-30",
                 id="review 15 Jun 2023 good through 30 Jun 2025 (14 CFR 61.56(c))"),
    pytest.param([check("r", "2023-06-15", "flight-review")], "2025-07-01", "lapsed", "2025-06-30",
                 id="review lapses 1 Jul 2025 (14 CFR 61.56(c))"),
    pytest.param([check("p", "2024-02-29", "instrument-practical-test")], "2026-02-28", "current", "2026-02-28",
                 id="instrument practical test substitutes (14 CFR 61.56(d)); leap-day start"),
    pytest.param([check("i", "2024-02-10", "ipc")], "2024-02-10", "lapsed", None,
                 id="an IPC alone does not substitute (14 CFR 61.56; from memory)"),
]


@pytest.mark.parametrize("entries, as_of, state, valid_through", FLIGHT_REVIEW_CASES)
def test_faa_flight_review_worked_examples(entries, as_of, state, valid_through):
    status = faa_status(book(*entries), as_of, "flight-review")
    assert (status.state, status.valid_through) == (state, D(valid_through) if valid_through else None)
    if state != "current":
        assert status.regain_with == "check"
        assert "flight-review" in status.missing["check"]


# ------------------------------------------------------------- other regulators

EASA = rulesets.load_builtin("easa-fcl")
CASA = rulesets.load_builtin("casa-part61")
TC = rulesets.load_builtin("tc-car401")

VALIDITY_CASES = [
    pytest.param(EASA, "instrument-rating", [check("t", "2024-03-15", "ir-skill-test")], "2025-03-15", "current",
                 "2025-03-15", id="IR valid 1 year (Part-FCL FCL.625(a); anniversary day from memory)"),
    pytest.param(EASA, "instrument-rating",
                 [check("t", "2024-03-15", "ir-skill-test"), check("p", "2025-01-20", "ir-proficiency-check")],
                 "2025-01-20", "current", "2026-03-15",
                 id="check within 3 months before expiry keeps the anniversary (FCL.625(b))"),
    pytest.param(EASA, "instrument-rating",
                 [check("t", "2024-03-15", "ir-skill-test"), check("p", "2024-11-01", "ir-proficiency-check")],
                 "2024-11-01", "current", "2025-11-01",
                 id="an earlier check runs from the check date (FCL.625; from memory)"),
    pytest.param(EASA, "instrument-rating",
                 [check("t", "2024-03-15", "ir-skill-test"), check("p", "2025-03-16", "ir-proficiency-check")],
                 "2025-03-16", "current", "2026-03-16",
                 id="after expiry a check renews from its date (FCL.625(c); from memory)"),
    pytest.param(CASA, "ipc", [check("i", "2024-03-10", "casa-ipc")], "2025-03-31", "current", "2025-03-31",
                 id="IPC valid to the end of the 12th month (CASR 61.880; from memory)"),
    pytest.param(CASA, "ipc", [check("i", "2024-03-10", "casa-ipc"), check("j", "2025-01-05", "casa-ipc")],
                 "2025-01-05", "current", "2026-03-31",
                 id="IPC renewed in the 3 months before expiry runs from the old expiry (CASR 61.880; from memory)"),
    pytest.param(CASA, "ipc", [check("i", "2024-03-10", "casa-ipc"), check("j", "2024-12-31", "casa-ipc")],
                 "2024-12-31", "current", "2025-12-31",
                 id="IPC renewed before the 3-month window runs from its month (CASR 61.880; from memory)"),
    pytest.param(TC, "instrument-check", [check("f", "2024-01-10", "instrument-flight-test")], "2026-01-10",
                 "current", "2026-01-10", id="flight test valid 24 months (CAR 401.05(3)(a); to the day from memory)"),
    pytest.param(TC, "instrument-recency", [check("f", "2024-01-10", "instrument-flight-test")], "2025-01-31",
                 "current", "2025-01-31", id="tasks needed from the first day of the 13th month (CAR 401.05(3)(b))"),
    pytest.param(TC, "instrument-recency", [check("f", "2024-01-10", "instrument-flight-test")], "2025-02-01",
                 "lapsed", "2025-01-31", id="13th month: 6-6-6 required (CAR 401.05(3)(b))"),
]


@pytest.mark.parametrize("rule_set, requirement, entries, as_of, state, valid_through", VALIDITY_CASES)
def test_other_regulators_worked_examples(rule_set, requirement, entries, as_of, state, valid_through):
    report = currency.evaluate(book(*entries), [rule_set], D(as_of))
    status = report.find(rule_set.id, requirement, "airplane")
    assert (status.state, status.valid_through) == (state, D(valid_through) if valid_through else None)


def test_tc_recency_by_six_hours_and_six_approaches():
    """CAR 401.05(3)(b): 6 hours and 6 approaches in the preceding 6 months (to the day, from memory)."""
    flights = [ifr(f"f{i}", f"2025-0{i + 1}-10", n=2, instrument_actual_hours=2.0) for i in range(3)]
    status = currency.evaluate(book(*flights), [TC], D("2025-04-01")).find("tc-car401", "instrument-recency")
    assert (status.state, status.valid_through) == ("current", D("2025-07-10"))


def test_easa_night_passengers_not_required_for_instrument_rated_pilots():
    """FCL.060(b)(2): the night requirement does not apply to an IR holder (from memory)."""
    rated = currency.evaluate(book(), [EASA], D("2025-01-01"))
    assert not [s for s in rated.requirements if s.id == "passengers-night"]
    vfr = replace(AIRPLANE_PILOT, instrument_categories=())
    unrated = currency.evaluate(book(pilot=vfr), [EASA], D("2025-01-01"))
    assert [s.scope for s in unrated.requirements if s.id == "passengers-night"] == ["airplane/single-engine-land"]


def test_tc_versions_each_judge_their_own_days():
    """Effective dates: the 6-approach version (placeholder date, unverified) judges days from 2026-09-01."""
    flights = [ifr(f"f{i}", f"2026-0{i + 5}-10", n=2, instrument_actual_hours=0.5) for i in range(3)]
    lb = book(*flights)
    assert currency.evaluate(lb, [TC], D("2026-08-31")).find("tc-car401", "instrument-recency").state == "lapsed"
    later = currency.evaluate(lb, [TC], D("2026-09-01")).find("tc-car401", "instrument-recency")
    assert (later.state, later.valid_through) == ("current", D("2026-11-10"))


# ------------------------------------------------------------- practice targets

PRACTICE = rulesets.load_builtin("practice-targets")


def test_practice_targets_are_met_by_practice_and_hand_flying():
    """Product defaults (no regulation): partial panel and unusual attitudes 90 days, hand-flown approach 30 days."""
    session = Entry(id="p", date=D("2025-01-10"), device="atd", partial_panel_approaches=1, ua_nose_high=1,
                    ua_nose_low=1, approaches=(Approach("ILS", "XQA1", coupled=True), Approach("VOR", "XQA1")))
    report = currency.evaluate(book(session), [PRACTICE], D("2025-02-09"))
    got = {s.id: (s.state, s.valid_through) for s in report.requirements}
    assert got == {
        "partial-panel": ("current", D("2025-04-10")),
        "unusual-attitudes": ("current", D("2025-04-10")),
        "hand-flown-approach": ("current", D("2025-02-09")),
        "actual-imc": ("lapsed", None),
    }


def test_coupled_approaches_do_not_count_as_hand_flown():
    session = Entry(id="p", date=D("2025-01-10"), device="atd", approaches=(Approach("ILS", "XQA1", coupled=True),))
    status = currency.evaluate(book(session), [PRACTICE], D("2025-01-10")).find("practice-targets", "hand-flown-approach")
    assert status.state == "lapsed" and status.missing == {"approaches": 1}


# ------------------------------------------------------------- timeline and what-if


def test_timeline_lists_each_state_change_with_its_date():
    """Instrument currency with grace, IPC-only stage and an IPC (14 CFR 61.57(c)/(d))."""
    lb = book(ifr("a", "2023-08-14"), check("c", "2024-10-02"))
    tl = currency.timeline(lb, [FAA], D("2023-08-01"), D("2025-06-30"))
    changes = [
        (c.date, c.state, c.valid_through, c.regain_by, c.regain_with)
        for c in next(t for t in tl.requirements if t.id == "instrument").changes
    ]
    assert changes == [
        (D("2023-08-01"), "lapsed", None, None, "tasks"),
        (D("2023-08-14"), "current", D("2024-02-29"), None, None),
        (D("2024-03-01"), "grace", D("2024-02-29"), D("2024-08-31"), "tasks"),
        (D("2024-09-01"), "lapsed", D("2024-02-29"), None, "check"),
        (D("2024-10-02"), "current", D("2025-04-30"), None, None),
        (D("2025-05-01"), "grace", D("2025-04-30"), D("2025-10-31"), "tasks"),
    ]


def test_what_if_shows_how_the_dates_move():
    lb = book(ifr("a", "2025-01-10"), landings("l", "2025-01-10"))
    planned = [ifr("plan-1", "2025-06-20"), landings("plan-2", "2025-06-20")]
    result = currency.what_if(lb, [FAA], D("2025-05-01"), planned)
    assert result.plan_as_of == D("2025-06-20")
    moves = {(m.before.id, m.before.scope): m for m in result.moves}
    instrument = moves[("instrument", "airplane")]
    assert (instrument.before.valid_through, instrument.after.valid_through) == (D("2025-07-31"), D("2025-12-31"))
    assert instrument.valid_through_days == 153
    day = moves[("passengers-day", "airplane/single-engine-land")]
    assert (day.before.state, day.after.state, day.after.valid_through) == ("lapsed", "current", D("2025-09-18"))
    assert result.after.planned == ("plan-1", "plan-2")


def test_planned_ids_must_not_clash_with_logged_ones():
    with pytest.raises(ValueError, match="planned entry id 'a'"):
        currency.evaluate(book(ifr("a", "2025-01-10")), [FAA], D("2025-05-01"), planned=[ifr("a", "2025-02-01")])


def test_report_json_has_exactly_the_contract_keys():
    report = currency.evaluate(book(ifr("a", "2025-01-10")), [FAA], date(2025, 2, 1))
    data = currency.report_to_json(report)
    assert list(data) == ["as_of", "rule_sets", "requirements"]
    assert data["as_of"] == "2025-02-01" and data["rule_sets"] == ["faa-part61"]
    assert list(data["requirements"][0]) == [
        "rule_set", "id", "scope", "title", "citation", "state", "valid_through", "regain_by", "regain_with",
        "missing", "evidence", "warnings",
    ]
    assert data["requirements"][0]["valid_through"] == "2025-07-31"
