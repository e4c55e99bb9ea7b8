"""Gap analysis: what a pilot still has to fly, and by when, over a date range.

Answers "which tasks must I log, and by which day, to stay current (and on my
practice targets) from ``start`` through ``end``?" entirely from the currency
engine's own output (``planner.core.currency.evaluate``); no currency rule is
re-implemented here. The rules themselves (14 CFR 61.57(c)/(d), 61.56, other
regulators, the product's practice targets) live in the rule sets.

For each requirement and scope:

* **current**, with ``valid_through`` inside the range: the shortfall the
  engine reports for the day after ``valid_through`` is what must be flown on
  or before ``valid_through`` (e.g. the oldest of the six approaches ages out:
  two approaches by 31 Jul). A plan flying exactly that on the due day is then
  assumed and the next expiry inside the range is looked for, so a chain of
  gaps (each with its own due date) covers the whole range;
* **grace** (tasks still restore it): the shortfall as of ``regain_by`` (units
  keep ageing out until then), due ``regain_by``; the pilot is not current
  until it is flown;
* **lapsed**, restorable by tasks (passenger rules, practice targets): the
  shortfall now, due ``start`` (overdue);
* **only a check restores it** (after 61.57(d)'s grace, flight review):
  one need of unit ``"check"``, due ``start`` when already lapsed, or
  ``valid_through`` when it would lapse inside the range.

Each step of the chain is verified with the engine: after adding the assumed
entry the requirement must be current on the day the gap is about (the day
after ``valid_through``, or the due day). ``closes`` checks any proposed plan
the same way with ``currency.what_if``.

Dates are the pilot's local dates; ``start`` plays the role of ``as_of``
(entries after it are ignored unless passed as ``planned``).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from datetime import date, timedelta
from typing import Collection, Sequence

from planner.core import currency
from planner.core import rules as r
from planner.core.logbook import Approach, Entry, Logbook

CHECK = "check"  # the unit of a need that only a check meets
TARGET_RULE_SETS = ("practice-targets",)
_MAX_STEPS = 64  # more expiries than a range of a few years can hold
_ONE_DAY = timedelta(days=1)


@dataclass(frozen=True)
class Gap:
    """``count`` of ``unit`` (hours for hour units; one check for ``"check"``) needed by ``due`` (inclusive).

    ``state``: the requirement's state the need is about: ``current`` (fly it
    to stay current after ``due``), ``grace`` or ``lapsed`` (not current until
    it is flown). ``is_target``: a practice target, not a regulation.
    ``check_kinds``: for ``"check"`` needs, the kinds that restore it.
    ``step``: position in the requirement's chain (0: the need as logged; 1:
    the next need once step 0 is assumed flown on its due day, ...).
    """

    rule_set: str
    requirement: str
    scope: str
    unit: str
    count: float
    due: date
    reason: str
    state: str = currency.CURRENT
    is_target: bool = False
    citation: str = ""
    check_kinds: tuple[str, ...] = ()
    step: int = 0

    @property
    def key(self) -> tuple[str, str, str, str, str]:
        return (self.rule_set, self.requirement, self.scope, self.unit, self.due.isoformat())

    @property
    def judged_on(self) -> date:
        """The day the requirement must be current on once the gap is closed."""
        return self.due + _ONE_DAY if self.state == currency.CURRENT else self.due

    @property
    def is_overdue(self) -> bool:
        return self.state != currency.CURRENT


def _logged_by(logbook: Logbook, day: date | None) -> Logbook:
    if day is None:
        return logbook
    return replace(logbook, entries=tuple(e for e in logbook.entries if e.date <= day))


def _only(rule_set: r.RuleSet, requirement: r.Requirement) -> r.RuleSet:
    return replace(rule_set, requirements=(requirement,))


def _scope_category(requirement: r.Requirement, scope: str) -> tuple[str, str | None]:
    if requirement.scope == r.SCOPE_PILOT:
        return "airplane", None
    cat, _, cls = scope.partition("/")
    return cat, (cls or None)


def planned_entry(
    entry_id: str, day: date, needs: dict, category: str = "airplane", aircraft_class: str | None = None
) -> Entry:
    """An assumed (not flown) entry that credits ``needs`` (unit -> amount, or ``{"check": [kinds]}``).

    Instrument work is taken as flown in actual conditions by hand in an
    aircraft, which every instrument task accepts; approaches carry a type and
    an airfield so that they are creditable (14 CFR 61.51(g)).
    """
    fields: dict = dict(id=entry_id, date=day, category=category, aircraft_class=aircraft_class, remarks="planned")
    if CHECK in needs:
        kinds = tuple(needs[CHECK])
        return Entry(checks=kinds[:1], **fields)
    hours = max(float(needs.get(r.INSTRUMENT_HOURS, 0)), float(needs.get(r.ACTUAL_INSTRUMENT_HOURS, 0)))
    n_appr = int(needs.get(r.APPROACHES, 0))
    night = int(needs.get(r.NIGHT_FULL_STOP_LANDINGS, 0))
    instrument = any(u in needs for u in r.INSTRUMENT_UNITS) or r.ACTUAL_INSTRUMENT_HOURS in needs
    return Entry(
        conditions="actual" if instrument else None,
        instrument_actual_hours=hours if hours else (0.1 if instrument else 0.0),
        approaches=tuple(Approach(type="planned", airfield="planned") for _ in range(n_appr)),
        holds=int(needs.get(r.HOLDS, 0)),
        course_tracking=bool(needs.get(r.COURSE_TRACKING, 0)),
        landings=max(int(needs.get(r.LANDINGS, 0)), night),
        night_full_stop_landings=night,
        partial_panel_approaches=int(needs.get(r.PARTIAL_PANEL_APPROACHES, 0)),
        ua_nose_high=int(needs.get(r.UA_NOSE_HIGH, 0)),
        ua_nose_low=int(needs.get(r.UA_NOSE_LOW, 0)),
        **fields,
    )


def _describe(needs: dict) -> str:
    if CHECK in needs:
        return "a check (" + " or ".join(needs[CHECK]) + ")"
    return ", ".join(f"{k} {v:g}" for k, v in needs.items())


def _requirement_gaps(
    logbook: Logbook,
    rule_set: r.RuleSet,
    requirement: r.Requirement,
    scope: str,
    start: date,
    end: date,
    planned: Sequence[Entry],
    is_target: bool,
) -> list[Gap]:
    one = [_only(rule_set, requirement)]
    assumed: list[Entry] = list(planned)
    category, aircraft_class = _scope_category(requirement, scope)
    out: list[Gap] = []

    def status(day: date) -> currency.RequirementStatus:
        return currency.evaluate(logbook, one, day, assumed).find(rule_set.id, requirement.id, scope)

    day = start
    step = 0
    for _ in range(_MAX_STEPS):
        s = status(day)
        if s.state == currency.CURRENT:
            if s.valid_through is None or s.valid_through >= end:
                break
            due = s.valid_through
            after = status(due + _ONE_DAY)
            if after.state == currency.CURRENT:  # a new period starts the next day (e.g. a planned check)
                day = due + _ONE_DAY
                continue
            needs = dict(after.missing)
            state = currency.CURRENT
            what = "to stay current after" if not is_target else "to stay on target after"
            reason = f"current through {due.isoformat()}; {_describe(needs)} needed on or before that day {what} it"
        elif s.state == currency.GRACE:
            due = max(s.regain_by or day, day)
            needs = dict(status(due).missing)
            state = currency.GRACE
            reason = (
                f"not current since {(s.valid_through + _ONE_DAY).isoformat() if s.valid_through else 'the start'}; "
                f"{_describe(needs)} by {due.isoformat()} restore it (last day tasks still count); "
                "after that only a check"
            )
        else:
            due = day
            needs = dict(s.missing)
            state = currency.LAPSED
            if s.regain_with == CHECK:
                reason = f"lapsed; only {_describe(needs)} restores it"
            elif is_target:
                reason = f"target not met on {day.isoformat()}; {_describe(needs)} due now"
            else:
                reason = f"not current on {day.isoformat()}; {_describe(needs)} restore it"
        if not needs:  # the engine reports no shortfall: nothing we can plan
            break
        judged = due + _ONE_DAY if state == currency.CURRENT else due
        entry = planned_entry(f"gap-assumed-{len(assumed) + 1}", due, needs, category, aircraft_class)
        common = dict(
            rule_set=rule_set.id,
            requirement=requirement.id,
            scope=scope,
            due=due,
            reason=reason,
            state=state,
            is_target=is_target,
            citation=requirement.citation,
            step=step,
        )
        if CHECK in needs:
            out.append(Gap(unit=CHECK, count=1, check_kinds=tuple(needs[CHECK]), **common))
        else:
            out.extend(Gap(unit=u, count=v, **common) for u, v in needs.items())
        assumed.append(entry)
        if status(judged).state != currency.CURRENT:  # cannot model the fix as a plain entry: stop here
            break
        day = judged
        step += 1
        if day > end:
            break
    return out


def find_gaps(
    logbook: Logbook,
    rule_sets: Sequence[r.RuleSet],
    start: date,
    end: date,
    planned: Sequence[Entry] = (),
    target_rule_sets: Collection[str] = TARGET_RULE_SETS,
) -> tuple[Gap, ...]:
    """Every task (or check) the pilot needs from ``start`` through ``end`` (both inclusive), by due date.

    Logged entries dated after ``start`` are ignored (``start`` is the as-of
    day); ``planned`` entries (not yet flown) are counted as if logged, so
    ``find_gaps(..., planned=plan)`` is empty when ``plan`` covers the range.
    Requirements of ``target_rule_sets`` are marked ``is_target``.
    """
    if end < start:
        raise ValueError(f"end ({end.isoformat()}) is before start ({start.isoformat()})")
    logbook = _logged_by(logbook, start)
    out: list[Gap] = []
    for rs in rule_sets:
        for req in rs.requirements:
            for scope in currency.scopes_for(req, logbook):
                out.extend(
                    _requirement_gaps(logbook, rs, req, scope, start, end, planned, rs.id in target_rule_sets)
                )
    out.sort(key=lambda g: (g.due, g.step, g.is_target, g.rule_set, g.requirement, g.scope, g.unit))
    return tuple(out)


def closes(
    logbook: Logbook, rule_sets: Sequence[r.RuleSet], gap: Gap, planned: Sequence[Entry], as_of: date | None = None
) -> bool:
    """Whether flying ``planned`` makes the gap's requirement current on ``gap.judged_on``.

    Uses ``currency.what_if`` judged as of ``gap.judged_on`` (planned entries
    after that day do not count). With ``as_of`` (the day the gaps were found
    on), logged entries after it are ignored, as ``find_gaps`` ignores them.
    """
    logbook = _logged_by(logbook, as_of)
    judged = gap.judged_on
    usable = [p for p in planned if p.date <= judged]
    rs = next(x for x in rule_sets if x.id == gap.rule_set)
    req = next(x for x in rs.requirements if x.id == gap.requirement)
    report = currency.what_if(logbook, [_only(rs, req)], judged, usable)
    return report.after.find(gap.rule_set, gap.requirement, gap.scope).is_current
