"""Gap analysis: tasks still needed over a range, with due dates, from the engine's own output."""

from __future__ import annotations

from dataclasses import replace
from datetime import date, timedelta

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner import rulesets
from planner.core import currency, gaps
from planner.core.logbook import Entry

from tests.core._fixtures import D, book, check, ifr

FAA = rulesets.load_builtin("faa-part61")
TARGETS = rulesets.load_builtin("practice-targets")


def _only(rule_set, requirement):
    return replace(rule_set, requirements=tuple(q for q in rule_set.requirements if q.id == requirement))


INSTRUMENT = _only(FAA, "instrument")
FLIGHT_REVIEW = _only(FAA, "flight-review")


def _as_dict(found):
    return {(g.due.isoformat(), g.unit): g.count for g in found}


def test_oldest_approaches_ageing_out_need_three_approaches_by_the_month_end():
    # 14 CFR 61.57(c); domain notes 1.3: each approach ages separately; the oldest three (Jan) leave the
    # window after 31 Jul, the March ones (with the hold and the tracking) after 30 Sep.
    lb = book(ifr("a", "2025-01-10", n=3, holds=0, tracking=False), ifr("b", "2025-03-02", n=3))
    found = gaps.find_gaps(lb, [INSTRUMENT], D("2025-07-01"), D("2025-08-31"))
    assert _as_dict(found) == {("2025-07-31", "approaches"): 3}
    (gap,) = found
    assert gap.state == currency.CURRENT and not gap.is_target
    assert gap.scope == "airplane" and gap.citation == "14 CFR 61.57(c), (d)"
    assert "2025-07-31" in gap.reason and gap.step == 0


def test_a_longer_range_chains_the_next_expiry_after_the_planned_approaches():
    # 14 CFR 61.57(c): after three approaches on 31 Jul, the March approaches, hold and tracking still expire 30 Sep.
    lb = book(ifr("a", "2025-01-10", n=3, holds=0, tracking=False), ifr("b", "2025-03-02", n=3))
    found = gaps.find_gaps(lb, [INSTRUMENT], D("2025-07-01"), D("2025-10-31"))
    assert _as_dict(found) == {
        ("2025-07-31", "approaches"): 3,
        ("2025-09-30", "approaches"): 3,
        ("2025-09-30", "holds"): 1,
        ("2025-09-30", "course-tracking"): 1,
    }
    assert [g.step for g in found] == [0, 1, 1, 1]


def test_no_gap_when_currency_outlasts_the_range():
    # 14 CFR 61.57(c): tasks on 5 Sep 2024 keep the pilot current through 31 Mar 2025.
    lb = book(ifr("a", "2024-09-05"))
    assert gaps.find_gaps(lb, [INSTRUMENT], D("2024-10-01"), D("2025-03-31")) == ()
    assert _as_dict(gaps.find_gaps(lb, [INSTRUMENT], D("2024-10-01"), D("2025-04-01"))) == {
        ("2025-03-31", "approaches"): 6,
        ("2025-03-31", "holds"): 1,
        ("2025-03-31", "course-tracking"): 1,
    }


def test_grace_stage_needs_the_full_set_by_regain_by():
    # 14 CFR 61.57(d): tasks 5 Sep 2024 -> current through 31 Mar 2025, grace through 30 Sep 2025.
    lb = book(ifr("a", "2024-09-05"))
    found = gaps.find_gaps(lb, [INSTRUMENT], D("2025-04-10"), D("2025-05-31"))
    assert _as_dict(found) == {
        ("2025-09-30", "approaches"): 6,
        ("2025-09-30", "holds"): 1,
        ("2025-09-30", "course-tracking"): 1,
    }
    assert all(g.state == currency.GRACE and g.is_overdue for g in found)
    assert "only a check" in found[0].reason


def test_after_the_grace_stage_only_an_ipc_restores_currency():
    # 14 CFR 61.57(d); 76 FR 78141: tasks in Jan 2024, grace ended 31 Jan 2025.
    lb = book(ifr("a", "2024-01-10"))
    (gap,) = gaps.find_gaps(lb, [INSTRUMENT], D("2025-03-01"), D("2025-03-31"))
    assert (gap.unit, gap.count, gap.due, gap.state) == ("check", 1, D("2025-03-01"), currency.LAPSED)
    assert gap.check_kinds == ("ipc", "instrument-practical-test")


def test_flight_review_expiring_in_the_range_is_a_check_due_on_the_month_end():
    # 14 CFR 61.56(c): a review on 15 Jun 2023 is good through 30 Jun 2025.
    lb = book(check("fr", "2023-06-15", "flight-review"))
    (gap,) = gaps.find_gaps(lb, [FLIGHT_REVIEW], D("2025-06-01"), D("2025-07-31"))
    assert (gap.unit, gap.due, gap.state) == ("check", D("2025-06-30"), currency.CURRENT)
    assert "flight-review" in gap.check_kinds


def test_practice_targets_due_date_and_overdue_targets():
    # Product default targets (practice-targets.toml, no regulation): partial panel every 90 days, counted
    # inclusive (day + 90: 1 Mar -> 30 May); unusual attitudes never flown -> due at the start of the range.
    lb = book(Entry(id="pp", date=D("2025-03-01"), partial_panel_approaches=1, aircraft_class="single-engine-land"))
    found = gaps.find_gaps(lb, [_only(TARGETS, "partial-panel"), _only(TARGETS, "unusual-attitudes")],
                           D("2025-05-01"), D("2025-06-30"))
    assert _as_dict(found) == {
        ("2025-05-01", "ua-nose-high"): 1,
        ("2025-05-01", "ua-nose-low"): 1,
        ("2025-05-30", "partial-panel-approaches"): 1,
    }
    assert all(g.is_target for g in found)
    ua = [g for g in found if g.unit.startswith("ua-")]
    assert all(g.state == currency.LAPSED and g.is_overdue for g in ua)


def test_a_plan_that_covers_the_range_leaves_no_gap_and_closes_each_gap_by_what_if():
    # 14 CFR 61.57(c): six approaches, a hold and tracking on 20 Jul keep the pilot current through 31 Jan.
    lb = book(ifr("a", "2025-01-10", n=3, holds=0, tracking=False), ifr("b", "2025-03-02", n=3))
    (gap,) = gaps.find_gaps(lb, [INSTRUMENT], D("2025-07-01"), D("2025-08-31"))
    plan = [replace(ifr("p", "2025-07-20"), remarks="planned")]
    assert gaps.find_gaps(lb, [INSTRUMENT], D("2025-07-01"), D("2025-08-31"), planned=plan) == ()
    assert gaps.closes(lb, [FAA], gap, plan)
    assert not gaps.closes(lb, [FAA], gap, [ifr("late", "2025-08-05")]), "flown after the due day"
    assert not gaps.closes(lb, [FAA], gap, [ifr("few", "2025-07-20", n=2)]), "one approach short"


def test_end_before_start_is_refused_with_both_dates():
    with pytest.raises(ValueError, match="2025-01-01.*2025-02-01"):
        gaps.find_gaps(book(), [FAA], D("2025-02-01"), D("2025-01-01"))


@settings(max_examples=80, deadline=None)
@given(
    st.lists(
        st.tuples(st.integers(0, 330), st.integers(0, 6), st.integers(0, 1), st.booleans()), min_size=1, max_size=6
    ),
    st.integers(200, 420),
)
def test_first_gap_count_is_exactly_enough_and_one_less_is_not(flights, start_offset):
    # The engine (14 CFR 61.57(c)) judges both: the reported count of the unit flown on the due day closes the
    # gap, one fewer does not (the count is the true shortfall, not a guess).
    base = date(2024, 1, 1)
    lb = book(*[
        ifr(f"e{i}", (base + timedelta(days=d)).isoformat(), n=n, holds=h, tracking=t)
        for i, (d, n, h, t) in enumerate(flights)
    ])
    start = base + timedelta(days=start_offset)
    found = gaps.find_gaps(lb, [INSTRUMENT], start, start + timedelta(days=120))
    if not found:
        assert currency.evaluate(lb, [INSTRUMENT], start).find("faa-part61", "instrument").valid_through >= (
            start + timedelta(days=120)
        )
        return
    first = [g for g in found if g.step == 0]
    first_due = first[0].due
    assert all(g.due == first_due for g in first)
    if first[0].unit == "check":
        assert currency.evaluate(lb, [INSTRUMENT], start).find("faa-part61", "instrument").regain_with == "check"
        return
    needs = {g.unit: g.count for g in first}
    enough = gaps.planned_entry("x", first_due, needs, "airplane")
    assert all(gaps.closes(lb, [FAA], g, [enough], as_of=start) for g in first)
    for unit in needs:
        fewer = dict(needs)
        fewer[unit] -= 1
        short = gaps.planned_entry("y", first_due, {u: v for u, v in fewer.items() if v}, "airplane")
        assert not gaps.closes(lb, [FAA], first[0], [short], as_of=start), unit


def test_entries_logged_after_the_start_are_not_counted():
    # start is the as-of day (14 CFR 61.57(d) grace from 1 Apr 2025); a flight logged later must not hide the need.
    lb = book(ifr("a", "2024-09-05"), ifr("later", "2025-04-20"))
    found = gaps.find_gaps(lb, [INSTRUMENT], D("2025-04-10"), D("2025-05-31"))
    assert _as_dict(found)[("2025-09-30", "approaches")] == 6
