"""Practice-session content and briefing, from gaps found by the engine."""

from __future__ import annotations

from dataclasses import replace

import pytest

from planner import rulesets
from planner.core import gaps, sessions
from planner.core.logbook import Entry

from tests.core._fixtures import D, book, ifr

RULES = list(rulesets.resolve("faa-part61,practice-targets"))
IFH = "FAA Instrument Flying Handbook, unusual attitudes"


def _gaps(*entries, start="2025-07-01", end="2025-08-31"):
    return gaps.find_gaps(book(*entries), RULES, D(start), D(end))


def _instrument_gaps(found):
    return [g for g in found if g.requirement in ("instrument", "partial-panel", "unusual-attitudes", "hand-flown-approach")]


GRACE = _gaps(ifr("a", "2024-09-05", instrument_actual_hours=1.0), start="2025-04-10", end="2025-05-31")


def test_grace_pilot_gets_six_approaches_both_kinds_a_partial_panel_non_precision_and_one_missed():
    # 14 CFR 61.57(c)/(d): six approaches, holding, tracking; Instrument Rating ACS: precision, non-precision,
    # approach with loss of primary flight instrument indicators.
    plan = sessions.plan_session(_instrument_gaps(GRACE), tas_kt=100)
    approaches = [i for i in plan.items if i.kind == "approach"]
    assert len(approaches) >= 6
    assert any(sessions.PRECISION in i.title for i in approaches)
    assert any(sessions.NON_PRECISION in i.title for i in approaches)
    pp = [i for i in approaches if "partial panel" in i.title]
    assert pp and all(sessions.NON_PRECISION in i.title for i in pp)
    assert sum("missed approach" in i.title for i in approaches) == 1


def test_partial_panel_only_when_it_is_due():
    # Product default target (practice-targets.toml): partial panel every 90 days; flown 1 Jun -> not due in July.
    recent_pp = Entry(id="pp", date=D("2025-06-01"), partial_panel_approaches=1, aircraft_class="single-engine-land")
    found = _gaps(ifr("a", "2025-01-10", n=6), recent_pp, start="2025-07-01", end="2025-07-31")
    assert not any(g.unit == "partial-panel-approaches" for g in found)
    plan = sessions.plan_session(found, tas_kt=100)
    assert not any("partial panel" in i.title for i in plan.items)


def test_holds_use_more_than_one_kind_of_entry():
    # FAA Instrument Flying Handbook: direct, teardrop and parallel entries.
    plan = sessions.plan_session(GRACE, tas_kt=100)
    entries = {e for i in plan.items if i.kind == "hold" for e in sessions.HOLD_ENTRIES if e in i.title}
    assert len(entries) >= 2


@pytest.mark.parametrize(
    ("nose", "order"),
    [
        pytest.param("nose high", ("power", "pitch", "bank"), id=f"nose high: power, pitch, bank ({IFH})"),
        pytest.param("nose low", ("power", "bank", "pitch"), id=f"nose low: power, bank, pitch ({IFH})"),
    ],
)
def test_unusual_attitude_recovery_order(nose, order):
    plan = sessions.plan_session(GRACE, tas_kt=100)
    (item,) = [i for i in plan.items if i.kind == "unusual-attitude" and nose in i.title]
    assert item.steps[:3] == order
    assert "1,500 ft AGL" in item.steps[3]


def test_practice_floor_is_a_setting_defaulting_to_1500_ft_agl():
    # Private Pilot ACS stall tasks: no lower than 1,500 ft AGL; some schools use 2,000 or 3,000 ft.
    assert sessions.SessionSettings().practice_floor_ft_agl == 1500
    plan = sessions.plan_session(GRACE, tas_kt=100, settings=sessions.SessionSettings(practice_floor_ft_agl=3000))
    assert plan.briefing.practice_floor_ft_agl == 3000
    assert all("3,000 ft AGL" in i.steps[-1] for i in plan.items if i.kind == "unusual-attitude")
    with pytest.raises(ValueError, match="practice_floor_ft_agl"):
        sessions.plan_session(GRACE, tas_kt=100, settings=sessions.SessionSettings(practice_floor_ft_agl=0))


def test_briefing_at_100_knots_matches_the_handbooks():
    # FAA PHAK load factor chart (30 deg 1.155, 45 deg 1.414), radius ~1,534 ft at 100 kt 30 deg;
    # IFH standard rate atan(V/364) = 15.4 deg; 0.5 deg/s drift reaches 30 deg in 60 s (domain notes 3).
    b = sessions.briefing(100)
    assert b.standard_rate_bank_deg == pytest.approx(15.4, abs=0.05)
    assert b.standard_rate_bank_15_percent_deg == pytest.approx(15.0)
    by_bank = {f.bank_deg: f for f in b.banks}
    assert by_bank[30].load_factor == pytest.approx(1.155, abs=0.001)
    assert by_bank[45].load_factor == pytest.approx(1.414, abs=0.001)
    assert by_bank[30].stall_speed_increase_percent == pytest.approx(7.5, abs=0.1)
    assert by_bank[45].stall_speed_increase_percent == pytest.approx(18.9, abs=0.1)
    assert by_bank[30].turn_radius_ft == pytest.approx(1534, abs=2)
    assert b.drift_seconds_to_30_deg == pytest.approx(60.0)
    assert b.threshold_drift_seconds_to_30_deg == pytest.approx(20.0)


def test_minutes_are_labelled_estimates_and_add_up():
    plan = sessions.plan_session(GRACE, tas_kt=100)
    assert plan.minutes_basis == "product estimate"
    assert all(i.minutes_basis == "product estimate" and i.minutes > 0 for i in plan.items)
    assert plan.total_minutes == sum(i.minutes for i in plan.items)


def test_every_gap_is_either_worked_on_by_an_item_or_explained():
    plan = sessions.plan_session(GRACE, tas_kt=100)
    explained = {g.key for g, _ in plan.not_covered}
    for g in GRACE:
        assert g.key in plan.closed_keys or g.key in explained, g
    assert not (plan.closed_keys & explained)
    assert all(reason for _, reason in plan.not_covered)
    # actual instrument time cannot be flown under a view-limiting device in VMC (practice-targets actual-imc)
    assert any(g.unit == "actual-instrument-hours" for g, _ in plan.not_covered)


def test_a_lapsed_pilot_needing_an_ipc_is_told_the_session_does_not_restore_currency():
    # 14 CFR 61.57(d): after the grace stage only an IPC restores it.
    found = _gaps(ifr("a", "2024-01-10"), start="2025-03-01", end="2025-03-31")
    plan = sessions.plan_session(found, tas_kt=100)
    ipc = [(g, why) for g, why in plan.not_covered if g.unit == "check" and g.requirement == "instrument"]
    assert ipc and "ipc" in ipc[0][1]


def test_items_reference_the_gaps_they_close():
    plan = sessions.plan_session(GRACE, tas_kt=100)
    keys = {g.key for g in GRACE}
    assert plan.closed_keys <= keys
    approach_gap = next(g for g in GRACE if g.requirement == "instrument" and g.unit == "approaches")
    assert all(approach_gap.key in i.closes for i in plan.items if i.kind == "approach")


def test_bad_practice_speed_is_refused():
    with pytest.raises(ValueError, match="airspeed"):
        sessions.plan_session(GRACE, tas_kt=0)
