"""The engine's bulk shortcuts agree with plain, one-at-a-time answers.

The timeline works on whole lists at once (window ends a month of days at a
time, the days a task is met from running sums, approaches credited over one
flat list, entries read once into columns). Each shortcut is checked here
against an answer worked out plainly:

* window ends against python-dateutil's ``relativedelta`` (a general-purpose
  calendar library: month arithmetic that clamps to the month's last day) and
  the standard library's ``timedelta``;
* the days a task is met against a day-by-day count written in this file;
* creditable amounts against ``units_on`` entry by entry (the crediting policy
  the agreement tests check against the day-by-day reference);
* results independent of the order the entries come in.
"""

from __future__ import annotations

import random
from datetime import date, timedelta

import pytest
from dateutil.relativedelta import relativedelta
from hypothesis import given, settings
from hypothesis import strategies as st

from planner import rulesets
from planner.core import currency
from planner.core import rules as r
from planner.core.logbook import Approach, Entry, Logbook, Pilot
from planner.core.windows import CALENDAR_MONTHS, DAYS, MONTHS_TO_THE_DAY, YEARS_TO_THE_DAY, Window

# Days around leap days and month ends, plus a spread over 30 years.
_EDGE_DAYS = [
    date(2020, 2, 28), date(2020, 2, 29), date(2020, 3, 1), date(2023, 1, 31), date(2023, 2, 28),
    date(2023, 8, 31), date(2024, 1, 29), date(2024, 1, 31), date(2024, 2, 29), date(2024, 12, 31),
]
_SPREAD = [date(1995, 1, 1) + timedelta(days=random.Random(7).randrange(11_000)) for _ in range(1500)]
DAYS_TO_TRY = sorted(_EDGE_DAYS + _SPREAD + _SPREAD[:200])  # some days repeat, as several entries on a day do


def _expected_end(window: Window, d: date) -> date:
    """Last day work done on ``d`` counts, from relativedelta/timedelta."""
    if window.unit == CALENDAR_MONTHS:
        end = d + relativedelta(months=window.length, day=31)  # day=31 clamps to the month's last day
        return end  # calendar months always end on a month's last day (14 CFR 61.57(c) "calendar months")
    if window.unit == DAYS:
        end = d + timedelta(days=window.length)
    elif window.unit == MONTHS_TO_THE_DAY:
        end = d + relativedelta(months=window.length)
    else:
        end = d + relativedelta(years=window.length)
    return end if window.inclusive else end - timedelta(days=1)


WINDOWS = [
    Window(unit, length, inclusive=inclusive)
    for unit, lengths in ((CALENDAR_MONTHS, (0, 1, 6, 12, 24)), (DAYS, (0, 30, 90)),
                          (MONTHS_TO_THE_DAY, (0, 3, 6, 24)), (YEARS_TO_THE_DAY, (1, 2)))
    for length in lengths
    for inclusive in (True, False)
]


@pytest.mark.parametrize("window", WINDOWS, ids=lambda w: f"{w.describe()} inclusive={w.inclusive}")
def test_window_ends_of_many_days_match_dateutil(window):
    # Source: python-dateutil relativedelta (clamps 31 Jan + 1 month to 28/29 Feb, 29 Feb + 1 year to 28 Feb).
    ordinals = [d.toordinal() for d in DAYS_TO_TRY]
    got = currency._ends(window, ordinals)
    assert got == [_expected_end(window, d).toordinal() for d in DAYS_TO_TRY]


def test_window_end_spot_checks_from_dateutil():
    # Source: python-dateutil relativedelta; leap-year rows also in the worked examples (14 CFR 61.57(c)).
    six_calendar = Window(CALENDAR_MONTHS, 6)
    year_to_day = Window(YEARS_TO_THE_DAY, 1)
    assert currency._ends(six_calendar, [date(2023, 8, 14).toordinal()]) == [date(2024, 2, 29).toordinal()]
    assert currency._ends(year_to_day, [date(2024, 2, 29).toordinal()]) == [date(2025, 2, 28).toordinal()]
    assert currency._ends(Window(MONTHS_TO_THE_DAY, 1), [date(2023, 1, 31).toordinal()]) == [date(2023, 2, 28).toordinal()]


# ------------------------------------------------------- days a task is met


def _met_days_plainly(rows, window: Window, need: int, last_day: int) -> set[int]:
    """Every day on which at least ``need`` units count, one day at a time."""
    met = set()
    ends = [_expected_end(window, date.fromordinal(d)).toordinal() for d, _ in rows]
    for day in range(rows[0][0], last_day + 1):
        total = sum(n for (d, n), e in zip(rows, ends) if d <= day <= e)
        if total >= need:
            met.add(day)
    return met


def _as_intervals(days: set[int]) -> list[tuple[int, int]]:
    out: list[list[int]] = []
    for d in sorted(days):
        if out and d == out[-1][1] + 1:
            out[-1][1] = d
        else:
            out.append([d, d])
    return [(a, b) for a, b in out]


row_lists = st.lists(
    st.tuples(st.integers(0, 400), st.sampled_from([1, 1, 1, 2, 3, 6])), min_size=1, max_size=25
).map(lambda rows: sorted((date(2023, 11, 1).toordinal() + d, n) for d, n in rows))
window_st = st.sampled_from([Window(DAYS, 90), Window(DAYS, 30, inclusive=False), Window(CALENDAR_MONTHS, 6),
                             Window(CALENDAR_MONTHS, 2), Window(MONTHS_TO_THE_DAY, 6)])


@settings(max_examples=150, deadline=None)
@given(rows=row_lists, window=window_st, need=st.sampled_from([1, 2, 3, 6]))
def test_days_a_task_is_met_match_a_day_by_day_count(rows, window, need):
    days = [d for d, _ in rows]
    amounts = [n for _, n in rows]
    series = currency._TaskSeries(r.Task(r.LANDINGS, need), window, days, amounts, list(range(len(rows))), [])
    last_day = max(_expected_end(window, date.fromordinal(d)).toordinal() for d in days) + 2
    assert series.intervals() == _as_intervals(_met_days_plainly(rows, window, need, last_day))

    # Viewed from each day (nothing later logged): met from that day through tail_end, or not met on it.
    candidates = sorted(set(days) | {days[0] + k for k in range(0, 420, 13)})
    candidates = [c for c in candidates if c >= days[0]]
    position = {c: i for i, c in enumerate(candidates)}
    fast = series.tail_ends(candidates, position)
    assert fast == series.tail_ends(candidates) == [series.tail_end(c) for c in candidates]
    met_with: dict[int, set[int]] = {}  # number of rows logged so far -> days met
    for c, end in zip(candidates, fast):
        seen = [(d, n) for d, n in rows if d <= c]
        if len(seen) not in met_with:
            met_with[len(seen)] = _met_days_plainly(seen, window, need, last_day) if seen else set()
        met = met_with[len(seen)]
        if end >= c:
            assert all(x in met for x in range(c, end + 1)) and end + 1 not in met
        else:
            assert c not in met


# ------------------------------------------------------- creditable amounts

PILOT = Pilot(name="Generated Pilot", instrument_categories=("airplane",),
              category_classes=("airplane/single-engine-land",))

approach_st = st.builds(
    Approach,
    type=st.sampled_from(["ILS", "RNAV (GPS)", None]),
    airfield=st.sampled_from(["XQA1", None]),
    coupled=st.booleans(),
    conditions=st.sampled_from([None, "actual", "simulated"]),
)
entry_st = st.builds(
    Entry,
    id=st.uuids().map(str),
    date=st.dates(date(2022, 1, 1), date(2024, 12, 31)),
    device=st.sampled_from(["aircraft", "aircraft", "ffs", "ftd", "atd"]),
    category=st.sampled_from(["airplane", "airplane", "rotorcraft"]),
    aircraft_class=st.sampled_from(["single-engine-land", "multi-engine-land", None]),
    conditions=st.sampled_from([None, "actual", "simulated"]),
    approaches=st.lists(approach_st, max_size=4).map(tuple),
    unlogged_approaches=st.sampled_from([0, 0, 2]),
    holds=st.integers(0, 2),
    course_tracking=st.booleans(),
    instrument_actual_hours=st.sampled_from([0.0, 0.3, 1.2]),
    instrument_simulated_hours=st.sampled_from([0.0, 0.7, 1.5]),
    landings=st.integers(0, 3),
    night_full_stop_landings=st.integers(0, 1),
    partial_panel_approaches=st.integers(0, 1),
    ua_nose_high=st.integers(0, 1),
    ua_nose_low=st.integers(0, 1),
    safety_pilot=st.sampled_from([None, "A. Safety"]),
    instructor=st.sampled_from([None, None, "B. Instructor"]),
)
KINDS = [(unit, conditions, hand) for unit in r.TASK_UNITS for conditions in r.TASK_CONDITIONS for hand in (False, True)
         if not hand or unit == r.APPROACHES]


@settings(max_examples=150, deadline=None)
@given(entries=st.lists(entry_st, max_size=30), first=st.integers(0, 30))
def test_bulk_amounts_match_units_on_entry_by_entry(entries, first):
    index = currency._Index(entries)
    first = min(first, len(index.entries))
    for unit, conditions, hand in KINDS:
        # Read partly first (as evaluate's look-back does), then everything.
        for start in (first, 0):
            idxs, amounts, buckets, seen = index.rows(unit, conditions, hand, start)
            expected = [
                (i, currency.units_on(e, unit, conditions, hand)[0])
                for i, e in enumerate(index.entries)
                if i >= start and currency.units_on(e, unit, conditions, hand)[0]
            ]
            got = [(i, n) for i, n in zip(idxs, amounts) if i >= start]
            assert got == expected, (unit, conditions, hand, start)
            for i, b in zip(idxs, buckets):
                e = index.entries[i]
                assert index.bucket(b) == (e.device, e.category, e.aircraft_class)
            assert set(buckets) == set(seen)


@settings(max_examples=30, deadline=None)
@given(entries=st.lists(entry_st, max_size=30), seed=st.integers(0, 1000))
def test_results_do_not_depend_on_the_order_of_entries(entries, seed):
    shuffled = list(entries)
    random.Random(seed).shuffle(shuffled)
    sets = [rulesets.load_builtin(n) for n in rulesets.BUILTIN]
    start, end = date(2021, 12, 1), date(2025, 6, 30)
    a = currency.timeline(Logbook(PILOT, tuple(entries)), sets, start, end)
    b = currency.timeline(Logbook(PILOT, tuple(shuffled)), sets, start, end)
    assert currency.timeline_to_json(a) == currency.timeline_to_json(b)
    as_of = date(2023, 6, 30)
    assert currency.report_to_json(currency.evaluate(Logbook(PILOT, tuple(entries)), sets, as_of)) == \
        currency.report_to_json(currency.evaluate(Logbook(PILOT, tuple(shuffled)), sets, as_of))
