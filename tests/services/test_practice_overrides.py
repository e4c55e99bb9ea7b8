"""A pilot's own practice targets: the built-in targets with intervals and counts changed (pure data)."""

from __future__ import annotations

from datetime import date, timedelta

import pytest

from planner import rulesets
from planner.core import currency
from planner.core.logbook import Entry, Logbook, Pilot
from planner.core.windows import DAYS
from planner.rulesets import RuleSetError, overrides

BUILTIN = rulesets.load_builtin("practice-targets")


def test_no_overrides_returns_the_built_in_rule_set_unchanged() -> None:
    assert overrides.apply(BUILTIN, {}) == BUILTIN


def test_an_override_changes_only_the_named_target_and_leaves_the_input_alone() -> None:
    before = rulesets.load_builtin("practice-targets")
    changed = overrides.apply(BUILTIN, {"partial-panel": {"days": 60, "min": {"partial-panel-approaches": 2}}})
    assert BUILTIN == before
    pp = next(r for r in changed.requirements if r.id == "partial-panel")
    assert pp.paths[0].window.unit == DAYS and pp.paths[0].window.length == 60
    assert [(t.unit, t.minimum) for t in pp.paths[0].tasks] == [("partial-panel-approaches", 2)]
    others = [r for r in changed.requirements if r.id != "partial-panel"]
    assert others == [r for r in BUILTIN.requirements if r.id != "partial-panel"]
    assert pp.citation == next(r for r in BUILTIN.requirements if r.id == "partial-panel").citation


def test_a_calendar_month_target_can_become_a_day_interval() -> None:
    changed = overrides.apply(BUILTIN, {"actual-imc": {"days": 45, "min": {"actual-instrument-hours": 0.5}}})
    imc = next(r for r in changed.requirements if r.id == "actual-imc")
    assert (imc.paths[0].window.unit, imc.paths[0].window.length) == (DAYS, 45)
    assert imc.paths[0].tasks[0].minimum == 0.5


def _evaluate(rule_set, entries, as_of):  # type: ignore[no-untyped-def]
    logbook = Logbook(Pilot("Test Pilot", "America/Denver", ("airplane",), ("airplane/single-engine-land",)), tuple(entries))
    return currency.evaluate(logbook, [rule_set], as_of).find("practice-targets", "partial-panel")


def test_the_engine_follows_the_changed_interval_and_count() -> None:
    # Day windows count the Nth day after the task (engine convention, common practice for "within N days").
    day = date(2026, 9, 1)
    entries = [Entry(id="e1", date=day, device="atd", partial_panel_approaches=1)]
    default = _evaluate(BUILTIN, entries, date(2026, 10, 1))
    assert default.state == "current" and default.valid_through == day + timedelta(days=90)
    shorter = overrides.apply(BUILTIN, {"partial-panel": {"days": 20}})
    status = _evaluate(shorter, entries, date(2026, 10, 1))
    assert status.state == "lapsed" and status.valid_through == day + timedelta(days=20)
    two = overrides.apply(BUILTIN, {"partial-panel": {"min": {"partial-panel-approaches": 2}}})
    status = _evaluate(two, entries, date(2026, 10, 1))
    assert status.state == "lapsed" and status.missing == {"partial-panel-approaches": 1}


@pytest.mark.parametrize(
    ("spec", "message"),
    [
        ({"no-such-target": {"days": 30}}, "no such target"),
        ({"partial-panel": {"days": 0}}, "key 'days'"),
        ({"partial-panel": {"days": 4000}}, "key 'days'"),
        ({"partial-panel": {"days": "30"}}, "key 'days'"),
        ({"partial-panel": {"min": {"holds": 1}}}, "key 'min.holds'"),
        ({"partial-panel": {"min": {"partial-panel-approaches": 1.5}}}, "whole number"),
        ({"partial-panel": {"min": {"partial-panel-approaches": 0}}}, "above 0"),
        ({"partial-panel": {"interval": 30}}, "keys days and min"),
        ({"partial-panel": {"min": {"partial-panel-approaches": True}}}, "expected a number"),
    ],
)
def test_bad_overrides_are_refused_naming_the_target_and_key(spec: dict, message: str) -> None:
    with pytest.raises(RuleSetError, match="practice-targets") as info:
        overrides.apply(BUILTIN, spec)
    assert message in str(info.value)
