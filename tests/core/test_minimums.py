"""Advised personal minimums (issue 5 point 7).

Source: [hb] FAA-H-8083-9 Aviation Instructor's Handbook, personal minimums
checklist - raise minimums when a risk factor applies (at least 500 ft and
1/2 SM here). Which facts count as risk factors and their day thresholds are
a product choice, named as such in each case id.
"""

from __future__ import annotations

from dataclasses import replace
from datetime import date, timedelta

import pytest
from hypothesis import given
from hypothesis import strategies as st

from planner.core.logbook import Approach, Entry
from planner.core.minimums import Advice, Minimums, Recency, advise, recency_from

AS_OF = date(2026, 5, 15)
BASE = Minimums(ceiling_ft=800, visibility_sm=2.0, crosswind_kt=15.0)
WELL_PRACTISED = Recency(
    as_of=AS_OF, approaches_30d=4, approaches_90d=12, days_since_approach_to_minimums=10,
    actual_hours_90d=3.0, simulated_hours_90d=2.0, device_hours_90d=1.5,
    days_since_partial_panel=20, days_since_unusual_attitudes=20,
)


def test_well_practised_pilot_keeps_the_baseline():
    advice = advise(BASE, WELL_PRACTISED)
    assert advice.advised == BASE and advice.adjustments == () and not advice.is_raised


FACTORS = [
    pytest.param({"approaches_30d": 0}, "no-approach-30d", 0.0, id="no approach in 30 days (product choice; [hb])"),
    pytest.param({"approaches_90d": 5}, "few-approaches-90d", 0.0, id="5 approaches in 90 days (product choice; [hb])"),
    pytest.param({"days_since_approach_to_minimums": 90}, "no-approach-to-minimums-90d", 0.0,
                 id="approach to minimums 90 days ago is outside the window (product choice; [hb])"),
    pytest.param({"days_since_approach_to_minimums": None}, "no-approach-to-minimums-90d", 0.0,
                 id="never flown to minimums (product choice; [hb])"),
    pytest.param({"actual_hours_90d": 0.0}, "no-actual-90d", 0.0, id="no actual instrument time (product choice; [hb])"),
    pytest.param({"days_since_partial_panel": 120}, "no-emergency-practice-90d", 0.0,
                 id="partial panel 120 days ago (product choice; [hb])"),
    pytest.param({"days_since_unusual_attitudes": None}, "no-emergency-practice-90d", 0.0,
                 id="no unusual-attitude practice on record (product choice; [hb])"),
]


@pytest.mark.parametrize(("change", "factor", "crosswind_cut"), FACTORS)
def test_each_risk_factor_adds_at_least_500_ft_and_half_a_mile_with_a_reason(change, factor, crosswind_cut):
    advice = advise(BASE, replace(WELL_PRACTISED, **change))
    assert [a.factor for a in advice.adjustments] == [factor]
    adj = advice.adjustments[0]
    assert adj.ceiling_ft >= 500 and adj.visibility_sm >= 0.5
    assert adj.reason and "FAA-H-8083-9" in adj.source and "product choice" in adj.source
    assert advice.advised == Minimums(BASE.ceiling_ft + 500, BASE.visibility_sm + 0.5, BASE.crosswind_kt - crosswind_cut)


def test_approach_to_minimums_89_days_ago_is_still_inside_the_window():
    assert advise(BASE, replace(WELL_PRACTISED, days_since_approach_to_minimums=89)).adjustments == ()


def test_no_recent_instrument_flying_at_all_stacks_every_factor_and_cuts_crosswind():
    rusty = Recency(AS_OF, 0, 0, None, 0.0, 0.0, 0.0, None, None)
    advice = advise(BASE, rusty)
    assert len(advice.adjustments) == 5
    assert advice.advised == Minimums(800 + 5 * 500, 2.0 + 5 * 0.5, 10.0)
    assert all(a.reason for a in advice.adjustments)


recencies = st.builds(
    Recency,
    as_of=st.just(AS_OF),
    approaches_30d=st.integers(0, 30),
    approaches_90d=st.integers(0, 90),
    days_since_approach_to_minimums=st.none() | st.integers(0, 2000),
    actual_hours_90d=st.floats(0, 100),
    simulated_hours_90d=st.floats(0, 100),
    device_hours_90d=st.floats(0, 100),
    days_since_partial_panel=st.none() | st.integers(0, 2000),
    days_since_unusual_attitudes=st.none() | st.integers(0, 2000),
)
baselines = st.builds(Minimums, ceiling_ft=st.integers(0, 5000), visibility_sm=st.floats(0, 10),
                      crosswind_kt=st.floats(0, 40))


@given(baseline=baselines, recency=recencies)
def test_advice_is_never_less_conservative_than_the_baseline(baseline, recency):
    advice = advise(baseline, recency)
    assert isinstance(advice, Advice)
    assert advice.advised.ceiling_ft >= baseline.ceiling_ft
    assert advice.advised.visibility_sm >= baseline.visibility_sm
    assert advice.advised.crosswind_kt <= baseline.crosswind_kt
    # every raise is explained, and the raise is exactly the sum of the explained steps
    assert advice.advised.ceiling_ft - baseline.ceiling_ft == 500 * len(advice.adjustments)
    assert (advice.advised == baseline) == (advice.adjustments == ())


def _approach(**kw):
    return Approach(type="ILS", airfield="QJRR", **kw)


def test_recency_from_logbook_entries():
    entries = [
        Entry(id="a", date=AS_OF, approaches=(_approach(), _approach(to_minimums=True)),
              instrument_actual_hours=1.2, conditions="actual"),
        Entry(id="b", date=AS_OF - timedelta(days=29), unlogged_approaches=2, instrument_simulated_hours=1.0,
              conditions="simulated", safety_pilot="Test Safety Pilot"),
        Entry(id="c", date=AS_OF - timedelta(days=30), device="atd", approaches=(_approach(),),
              instrument_simulated_hours=1.5, partial_panel_approaches=1),
        Entry(id="d", date=AS_OF - timedelta(days=89), device="ftd", instrument_actual_hours=0.0,
              instrument_simulated_hours=0.5, ua_nose_high=2, ua_nose_low=2, approaches=(_approach(),)),
        Entry(id="e", date=AS_OF - timedelta(days=90), approaches=(_approach(to_minimums=True),) * 3,
              instrument_actual_hours=2.0),
        Entry(id="future", date=AS_OF + timedelta(days=1), approaches=(_approach(to_minimums=True),),
              partial_panel_approaches=1, ua_nose_low=1, instrument_actual_hours=5.0),
    ]
    r = recency_from(entries, AS_OF)
    assert r == Recency(
        as_of=AS_OF,
        approaches_30d=4,  # a (2) + b (2); c is 30 days back, outside the last 30 days
        approaches_90d=6,  # + c (1) + d (1); e is 90 days back, outside
        days_since_approach_to_minimums=0,
        actual_hours_90d=1.2,
        simulated_hours_90d=1.0,
        device_hours_90d=2.0,
        days_since_partial_panel=30,
        days_since_unusual_attitudes=89,
    )
    # a month earlier: entries a, b, c lie after as_of and are ignored; e still gives "days since"
    earlier = recency_from(entries, AS_OF - timedelta(days=31))
    assert earlier.days_since_approach_to_minimums == 59  # e, flown to minimums
    assert (earlier.approaches_30d, earlier.approaches_90d) == (0, 4)  # d (1) + e (3)
    assert earlier.days_since_partial_panel is None and earlier.days_since_unusual_attitudes == 58


def test_recency_from_an_empty_logbook_feeds_every_factor():
    r = recency_from([], AS_OF)
    assert r == Recency(AS_OF, 0, 0, None, 0.0, 0.0, 0.0, None, None)
    assert len(advise(BASE, r).adjustments) == 5


def test_negative_minimums_are_rejected_by_name():
    with pytest.raises(ValueError, match="visibility_sm"):
        Minimums(ceiling_ft=500, visibility_sm=-1, crosswind_kt=10)
