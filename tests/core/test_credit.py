"""planner.core.credit.explain: what one entry counts toward, in words, from the engine's own crediting."""

from __future__ import annotations

from datetime import date

import pytest

from planner import rulesets
from planner.core import credit
from planner.core.logbook import Approach, Entry, Pilot

RULES = rulesets.resolve("faa-part61,practice-targets")
PILOT = Pilot("Test Pilot", "America/Denver", ("airplane",), ("airplane/single-engine-land",))
DAY = date(2026, 11, 28)


def _entry(**fields) -> Entry:  # type: ignore[no-untyped-def]
    base = dict(id="e", date=DAY, aircraft_class="single-engine-land")
    base.update(fields)
    return Entry(**base)


def _counts(notes: list[credit.CreditNote], rule_set: str, requirement: str) -> list[str]:
    return [n.text for n in notes if n.counts and n.rule_set == rule_set and n.requirement == requirement]


def _not_counted(notes: list[credit.CreditNote]) -> list[str]:
    return [n.text for n in notes if not n.counts]


def test_approaches_holds_and_tracking_with_a_safety_pilot_count_toward_instrument_experience() -> None:
    # 14 CFR 61.57(c)(1): approaches, holding procedures, intercepting and tracking courses.
    entry = _entry(conditions="simulated", safety_pilot="A. Safety", holds=1, course_tracking=True,
                   approaches=(Approach("ILS", "QJRR"), Approach("RNAV (GPS)", "QPNV")))
    notes = credit.explain(entry, PILOT, RULES)
    [text] = _counts(notes, "faa-part61", "instrument")
    assert "2 approaches" in text and "1 holding procedure" in text and "intercepting and tracking courses" in text
    assert "14 CFR 61.57(c)" in text
    assert _not_counted(notes) == []


def test_simulated_conditions_without_a_safety_pilot_or_instructor_do_not_count() -> None:
    # 14 CFR 91.109(c): simulated instrument flight needs a safety pilot; 61.51(g) logging.
    entry = _entry(conditions="simulated", holds=1, approaches=(Approach("ILS", "QJRR"),))
    notes = credit.explain(entry, PILOT, RULES)
    assert _counts(notes, "faa-part61", "instrument") == []
    reasons = " ".join(_not_counted(notes))
    assert "neither safety pilot nor instructor" in reasons and "91.109(c)" in reasons


def test_an_approach_without_type_or_airfield_is_named_as_not_counting() -> None:
    # 14 CFR 61.51(g)(1) and FAA InFO 15012: the type and location of each approach are logged.
    entry = _entry(conditions="actual", instrument_actual_hours=1.0,
                   approaches=(Approach("ILS", "QJRR"), Approach(None, "QPNV"), Approach("VOR", None)))
    notes = credit.explain(entry, PILOT, RULES)
    [text] = _counts(notes, "faa-part61", "instrument")
    assert "1 approach" in text
    reasons = _not_counted(notes)
    assert any(r.startswith("Approach 2 has no type or airfield") for r in reasons)
    assert any(r.startswith("Approach 3 has no type or airfield") for r in reasons)


def test_approaches_logged_only_as_a_number_are_explained() -> None:
    # 14 CFR 61.51(g)(1): a bare count has no type or location.
    notes = credit.explain(_entry(device="atd", unlogged_approaches=3), PILOT, RULES)
    assert _counts(notes, "faa-part61", "instrument") == []
    assert any("3 approach(es) logged as a number" in r for r in _not_counted(notes))


def test_landings_and_night_full_stop_landings_count_toward_passenger_currency() -> None:
    # 14 CFR 61.57(a) three takeoffs and landings; 61.57(b) night, to a full stop.
    notes = credit.explain(_entry(landings=3, night_full_stop_landings=3), PILOT, RULES)
    assert any("3 landings" in t for t in _counts(notes, "faa-part61", "passengers-day"))
    assert any("3 night full-stop landings" in t for t in _counts(notes, "faa-part61", "passengers-night"))


def test_a_check_is_reported_as_meeting_the_requirement() -> None:
    # 14 CFR 61.57(d): an instrument proficiency check; 61.56: flight review.
    notes = credit.explain(_entry(checks=("ipc", "flight-review"), instructor="H. Instructor"), PILOT, RULES)
    assert any("the check “ipc”" in t for t in _counts(notes, "faa-part61", "instrument"))
    assert any("the check “flight-review”" in t for t in _counts(notes, "faa-part61", "flight-review"))


def test_personal_targets_are_labelled_as_personal() -> None:
    notes = credit.explain(_entry(partial_panel_approaches=1, conditions="actual", approaches=(Approach("ILS", "QJRR"),)),
                           PILOT, RULES)
    personal = [n for n in notes if n.counts and n.rule_set == "practice-targets"]
    assert personal and all(n.personal and n.text.startswith("personal target") for n in personal)
    assert all(not n.personal for n in notes if n.rule_set == "faa-part61")


def test_work_in_a_category_the_pilot_holds_no_rating_in_is_explained() -> None:
    # Common practice (14 CFR 61.57(c) counts experience per aircraft category of the instrument rating).
    entry = _entry(category="rotorcraft", aircraft_class="helicopter", conditions="actual", instrument_actual_hours=1.0,
                   approaches=(Approach("ILS", "QJRR"),), landings=2)
    notes = credit.explain(entry, PILOT, RULES)
    assert _counts(notes, "faa-part61", "instrument") == []
    assert any("rotorcraft" in r for r in _not_counted(notes))


def test_an_empty_entry_counts_toward_nothing_and_raises_no_complaint() -> None:
    assert credit.explain(_entry(), PILOT, RULES) == []


@pytest.mark.parametrize("rule_set", rulesets.builtin_names())
def test_every_builtin_rule_set_can_be_explained(rule_set: str) -> None:
    entry = _entry(conditions="actual", instrument_actual_hours=1.5, holds=1, course_tracking=True, landings=1,
                   approaches=(Approach("ILS", "QJRR"),), checks=("ipc",))
    notes = credit.explain(entry, PILOT, rulesets.resolve(rule_set))
    assert all(isinstance(n.text, str) and n.text for n in notes)
