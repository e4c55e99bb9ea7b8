"""The engine agrees with the plain day-by-day reference on generated logbooks.

For every built-in rule set, hypothesis generates small logbooks (a few dozen
entries at most, over about two years, around dates where the rules change)
and compares, for every requirement and scope:

* every day of the engine's timeline (state, regain_by, regain_with, and
  valid_through outside current periods) with the reference's walk, and
* full evaluations (including valid_through of current periods and the missing
  tasks) on sampled days.
"""

from __future__ import annotations

import calendar
import os
from datetime import date, timedelta

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner import rulesets
from planner.core import currency
from planner.core.logbook import Approach, Entry, Logbook, Pilot

from tests.core import reference

EXAMPLES = int(os.environ.get("PLANNER_AGREEMENT_EXAMPLES", "800"))

PILOT = Pilot(
    name="Generated Pilot",
    instrument_categories=("airplane",),
    category_classes=("airplane/single-engine-land", "airplane/multi-engine-land"),
)

# Around interesting dates: leap days, the 2018 FAA change, the (placeholder) 2026 TC change.
BASES = (date(2017, 10, 1), date(2023, 6, 1), date(2026, 2, 1))
def _kinds(name: str) -> tuple[str, ...]:
    rule_set = rulesets.load_builtin(name)
    kinds = {k for req in rule_set.requirements for k in req.check_kinds}
    return tuple(sorted(kinds | {"flight-review", "ipc"}))



approach_st = st.builds(
    Approach,
    type=st.sampled_from(["ILS", "RNAV (GPS)", "VOR", "LOC", "NDB", None]),
    airfield=st.sampled_from(["XQA1", "XQB2", "XQC3", "XQD4", "XQE5", None]),
    coupled=st.booleans(),
    conditions=st.sampled_from([None, None, "actual", "simulated"]),
)


def _entry_fields(landings: int):
    return st.fixed_dictionaries(
        {
            "month": st.integers(0, 17),
            "day": st.sampled_from([1, 1, 2, 10, 20, 28, 29, 30, 31, 31]),
            "device": st.sampled_from(["aircraft", "aircraft", "aircraft", "ffs", "ftd", "atd"]),
            "category": st.sampled_from(["airplane"] * 6 + ["rotorcraft"]),
            "aircraft_class": st.sampled_from(["single-engine-land", "single-engine-land", "multi-engine-land", None]),
            "conditions": st.sampled_from([None, "actual", "simulated", "simulated"]),
            "approaches": st.lists(approach_st, max_size=6).map(tuple),
            "unlogged_approaches": st.sampled_from([0, 0, 0, 0, 2]),
            "holds": st.integers(0, 2),
            "course_tracking": st.booleans(),
            "instrument_actual_hours": st.sampled_from([0.0, 0.0, 0.3, 1.2, 2.5]),
            "instrument_simulated_hours": st.sampled_from([0.0, 0.0, 0.7, 1.5, 3.1]),
            "landings": st.just(landings),
            "night_full_stop_landings": st.integers(0, landings),
            "partial_panel_approaches": st.integers(0, 1),
            "ua_nose_high": st.integers(0, 2),
            "ua_nose_low": st.integers(0, 2),
            "checks": st.just(()),
            "safety_pilot": st.sampled_from([None, "A. Safety"]),
            "instructor": st.sampled_from([None, None, None, "B. Instructor"]),
        }
    )


# An entry that alone meets most instrument and landing tasks, so that periods
# of currency (and their edges) are common in the generated logbooks.
COMPLETE = st.fixed_dictionaries(
    {
        "month": st.integers(0, 17),
        "day": st.sampled_from([1, 1, 2, 15, 28, 29, 30, 31, 31]),
        "device": st.sampled_from(["aircraft", "aircraft", "ffs", "atd"]),
        "aircraft_class": st.just("single-engine-land"),
        "conditions": st.just("actual"),
        "approaches": st.just(tuple(Approach("ILS", "XQA1") for _ in range(6))),
        "holds": st.just(1),
        "course_tracking": st.just(True),
        "instrument_actual_hours": st.just(3.0),
        "landings": st.just(3),
        "night_full_stop_landings": st.just(3),
        "partial_panel_approaches": st.just(1),
        "ua_nose_high": st.just(2),
        "ua_nose_low": st.just(2),
    }
)
FIELDS = st.one_of(COMPLETE, *[_entry_fields(n) for n in range(4)])


def _day(base: date, months: int, day: int) -> date:
    y, m = divmod(base.month - 1 + months, 12)
    year, month = base.year + y, m + 1
    return date(year, month, min(day, calendar.monthrange(year, month)[1]))


@st.composite
def logbook_st(draw, kinds: tuple[str, ...]) -> Logbook:
    base = draw(st.sampled_from(BASES))
    # Entries cluster around a few months, leaving gaps that let periods lapse.
    # Gaps near the rules' month counts (6/7, 12/13, 24/25) are the interesting ones.
    gaps = draw(st.lists(st.sampled_from([1, 2, 5, 6, 7, 11, 12, 13, 23, 24]), max_size=3))
    anchors = [0]
    for gap in gaps:
        if anchors[-1] + gap <= 26:
            anchors.append(anchors[-1] + gap)
    entries = []
    for i, fields in enumerate(draw(st.lists(FIELDS, max_size=24))):
        fields = dict(fields)
        if draw(st.integers(0, 3)) == 0:
            fields["checks"] = (draw(st.sampled_from(kinds)),)
        month = fields.pop("month")
        day = _day(base, anchors[month % len(anchors)] + (month // 8) % 2, fields.pop("day"))
        entries.append(Entry(id=f"e{i}", date=day, **fields))
    return Logbook(pilot=PILOT, entries=tuple(entries))


def _agree(rule_set_name: str, logbook: Logbook, data) -> None:
    rule_set = rulesets.load_builtin(rule_set_name)
    if logbook.entries:
        first = min(e.date for e in logbook.entries)
        last = max(e.date for e in logbook.entries)
    else:
        first = last = BASES[0]
    start, end = first - timedelta(days=3), last + timedelta(days=400)
    report = currency.timeline(logbook, [rule_set], start, end)
    by_key = {(t.id, t.scope): t for t in report.requirements}
    for req in rule_set.requirements:
        for scope in currency.scopes_for(req, logbook):
            tl = by_key[(req.id, scope)]
            ref = reference.Reference(req, scope, logbook.entries)
            changes = list(tl.changes)
            k = 0
            for day, current, last_current in ref.walk(start, end):
                while k + 1 < len(changes) and changes[k + 1].date <= day:
                    k += 1
                got = changes[k]
                state, regain_by, regain_with = ref.stand(day, current, last_current)
                assert (got.state, got.regain_by, got.regain_with) == (state, regain_by, regain_with), (req.id, scope, day)
                if not current:
                    assert got.valid_through == last_current, (req.id, scope, day)
            # Full evaluations on sampled days.
            for offset in data.draw(st.lists(st.integers(0, (end - start).days), min_size=1, max_size=1)):
                as_of = start + timedelta(days=offset)
                status = currency.evaluate(logbook, [rule_set], as_of).find(rule_set.id, req.id, scope)
                expected = reference.evaluate(req, scope, logbook, as_of)
                assert (status.state, status.valid_through, status.regain_by, status.regain_with, status.missing) == expected, (
                    req.id, scope, as_of,
                )
                assert timeline_at(tl, as_of) == expected[:4], (req.id, scope, as_of)


def timeline_at(tl, day):
    c = tl.at(day)
    return (c.state, c.valid_through, c.regain_by, c.regain_with)


_SETTINGS = settings(
    max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large]
)


@_SETTINGS
@given(logbook=logbook_st(_kinds("faa-part61")), data=st.data())
def test_faa_part61_agrees_with_day_by_day_reference(logbook, data):
    _agree("faa-part61", logbook, data)


@_SETTINGS
@given(logbook=logbook_st(_kinds("tc-car401")), data=st.data())
def test_tc_car401_agrees_with_day_by_day_reference(logbook, data):
    _agree("tc-car401", logbook, data)


@_SETTINGS
@given(logbook=logbook_st(_kinds("easa-fcl")), data=st.data())
def test_easa_fcl_agrees_with_day_by_day_reference(logbook, data):
    _agree("easa-fcl", logbook, data)


@_SETTINGS
@given(logbook=logbook_st(_kinds("casa-part61")), data=st.data())
def test_casa_part61_agrees_with_day_by_day_reference(logbook, data):
    _agree("casa-part61", logbook, data)


@_SETTINGS
@given(logbook=logbook_st(_kinds("practice-targets")), data=st.data())
def test_practice_targets_agree_with_day_by_day_reference(logbook, data):
    _agree("practice-targets", logbook, data)


@st.composite
def edge_logbook_st(draw) -> Logbook:
    """Few complete entries on first/last days of months, gaps near the rules' month counts."""
    base = draw(st.sampled_from(BASES))
    month = 0
    entries = []
    for i in range(draw(st.integers(1, 4))):
        fields = dict(draw(COMPLETE))
        fields.pop("month")
        fields.pop("day")
        fields["device"] = "aircraft"
        fields["checks"] = (draw(st.sampled_from(["ipc", "flight-review", "casa-ipc", "ir-proficiency-check"])),) if draw(
            st.integers(0, 3)
        ) == 0 else ()
        entries.append(Entry(id=f"x{i}", date=_day(base, month, draw(st.sampled_from([1, 31]))), **fields))
        month += draw(st.sampled_from([3, 6, 7, 9, 12, 13]))
    return Logbook(pilot=PILOT, entries=tuple(entries))


@settings(max_examples=300, deadline=None)
@given(logbook=edge_logbook_st(), data=st.data(), name=st.sampled_from(rulesets.BUILTIN))
def test_engine_agrees_with_reference_at_month_edges(logbook, data, name):
    _agree(name, logbook, data)
