"""Currency evaluation: rule sets applied to a logbook, exact to the day.

Implements the semantics of 14 CFR 61.57(c)/(d) (instrument experience, grace
stage, IPC), 61.57(a)/(b) (90-day passenger rules), 61.56 (flight review) and,
through the same rule format, other regulators' recency and validity rules.
See ``planner.core.rules`` for the model and ``planner.core.windows`` for the
date arithmetic.

How a requirement is judged (for one scope, e.g. the airplane category):

1. Each creditable unit (approach, hold, landing, hour ...) done on day d counts
   from ``credit_start`` through ``credit_end`` of its path's window. A task is
   met on a day when at least its minimum of units count on that day; a path is
   met when all its tasks are and the path is in force on that day; the
   requirement's tasks are met when any path is.
2. A check of a listed kind on day c meets the requirement from c through the
   check window's end (or, inside an early-renewal span, from the old expiry).
3. Periods of currency are built forward in time: tasks establish currency
   before the first period in the records; once a period has ended, tasks
   restore it only as the requirement's ``regain`` policy allows (always, within
   the grace window, or never), while a check always restores it.

``as_of`` is the day asked about (the pilot's local date); entries dated after
it are ignored. State ``current`` means the privilege may be used on ``as_of``.
Windows include both edge days unless the rule says otherwise.

Algorithm: units are grouped per day and sorted once; for every day with units
the n-th most recent unit is found by binary search over prefix sums, which
gives the task's met intervals directly (no day-by-day loop). Work is
O(U log U) for U unit-days.
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from dataclasses import dataclass, field
from datetime import date
from functools import lru_cache
from typing import Iterable, Sequence

from planner.core import rules as r
from planner.core.logbook import Entry, Logbook
from planner.core.windows import Window, credit_end, credit_start, early_window_start, earliest_counting

CURRENT = "current"
GRACE = "grace"
LAPSED = "lapsed"
STATES = (CURRENT, GRACE, LAPSED)

_INF = 10**9  # an ordinal later than any date

# ----------------------------------------------------------------- results


@dataclass(frozen=True)
class RequirementStatus:
    """One requirement, for one scope, as of one day.

    ``valid_through``: last day of the current or most recent period of
    currency (None if never met). ``regain_by``: in the ``grace`` state, the last
    day on which tasks alone restore it. ``regain_with``: ``"tasks"`` or
    ``"check"`` when not current. ``missing``: task shortfalls (unit -> amount,
    hours for hour units) or ``{"check": [kinds]}``; empty when current.
    ``evidence``: ids of the entries behind ``valid_through``. ``warnings``:
    entries not credited, with the reason.
    """

    rule_set: str
    id: str
    scope: str
    title: str
    citation: str
    state: str
    valid_through: date | None
    regain_by: date | None
    regain_with: str | None
    missing: dict = field(default_factory=dict)
    evidence: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def key(self) -> tuple[str, str, str]:
        return (self.rule_set, self.id, self.scope)

    @property
    def is_current(self) -> bool:
        return self.state == CURRENT


@dataclass(frozen=True)
class CurrencyReport:
    """Every requirement of the chosen rule sets, for every scope, as of ``as_of``."""

    as_of: date
    rule_sets: tuple[str, ...]
    requirements: tuple[RequirementStatus, ...]
    planned: tuple[str, ...] = ()  # ids of planned (not yet flown) entries included

    def find(self, rule_set: str, requirement: str, scope: str | None = None) -> RequirementStatus:
        for status in self.requirements:
            if status.rule_set == rule_set and status.id == requirement and (scope is None or status.scope == scope):
                return status
        raise KeyError((rule_set, requirement, scope))


@dataclass(frozen=True)
class StateChange:
    """From ``date`` on (until the next change) the requirement stands like this."""

    date: date
    state: str
    valid_through: date | None
    regain_by: date | None
    regain_with: str | None


@dataclass(frozen=True)
class RequirementTimeline:
    rule_set: str
    id: str
    scope: str
    title: str
    citation: str
    changes: tuple[StateChange, ...]

    def at(self, day: date) -> StateChange:
        """The stand on ``day`` (within the timeline's range)."""
        i = bisect_right([c.date for c in self.changes], day) - 1
        if i < 0:
            raise ValueError(f"{day} is before the timeline starts")
        return self.changes[i]


@dataclass(frozen=True)
class TimelineReport:
    start: date
    end: date
    rule_sets: tuple[str, ...]
    requirements: tuple[RequirementTimeline, ...]
    planned: tuple[str, ...] = ()


@dataclass(frozen=True)
class RequirementMove:
    """How one requirement moves when the planned entries are flown."""

    before: RequirementStatus
    after: RequirementStatus

    @property
    def valid_through_days(self) -> int | None:
        """Days ``valid_through`` moves (None if either side was never met)."""
        if self.before.valid_through is None or self.after.valid_through is None:
            return None
        return (self.after.valid_through - self.before.valid_through).days


@dataclass(frozen=True)
class WhatIfReport:
    """``before``: recorded entries as of ``as_of``; ``after``: with the plan, as of ``plan_as_of``."""

    as_of: date
    plan_as_of: date
    rule_sets: tuple[str, ...]
    moves: tuple[RequirementMove, ...]
    before: CurrencyReport
    after: CurrencyReport


# ------------------------------------------------------- entry creditability

_NEEDS_LOGGING = "14 CFR 61.51(g)"


def _instrument_condition(entry: Entry) -> tuple[str | None, str | None]:
    """How the entry's instrument work was flown, or (None, reason) if it cannot be credited.

    Devices need no conditions and no safety pilot. In an aircraft, unlogged
    conditions are inferred from the instrument hours when only one kind is
    logged (or taken as simulated when a safety pilot/instructor is named).
    """
    if entry.device != "aircraft":
        return "device", None
    named = bool(entry.safety_pilot or entry.instructor)
    cond = entry.conditions
    if cond is None:
        has_actual = entry.instrument_actual_hours > 0
        has_sim = entry.instrument_simulated_hours > 0
        if has_actual and not has_sim:
            cond = "actual"
        elif has_sim and not has_actual:
            cond = "simulated"
        elif named:
            cond = "simulated"
        else:
            return None, "conditions (actual or simulated) not logged and not evident from the instrument time"
    if cond == "simulated" and not named:
        return None, "simulated instrument work in an aircraft with neither safety pilot nor instructor named (14 CFR 91.109(c), 61.51(g))"
    return cond, None


def _condition_ok(cond: str | None, wanted: str) -> bool:
    if wanted == r.CONDITIONS_ANY:
        return True
    if wanted == r.CONDITIONS_ACTUAL:
        return cond == "actual"
    return cond is not None


def _hundredths(hours: float) -> int:
    return round(hours * 100)


def units_on(entry: Entry, unit: str, conditions: str, hand_flown_only: bool = False) -> tuple[int, tuple[str, ...]]:
    """Creditable amount of ``unit`` on ``entry`` (hundredths of an hour for hour units),
    and the reasons any logged work of that unit was not credited."""
    problems: list[str] = []
    if unit == r.APPROACHES:
        count = 0
        entry_cond = entry_problem = None
        if conditions != r.CONDITIONS_ANY:
            entry_cond, entry_problem = _instrument_condition(entry)
        named = bool(entry.safety_pilot or entry.instructor)
        for i, ap in enumerate(entry.approaches, start=1):
            if not (ap.type and ap.airfield):
                problems.append(f"approach {i} has no type or airfield logged ({_NEEDS_LOGGING}; FAA InFO 15012)")
                continue
            if hand_flown_only and ap.coupled:
                continue
            if conditions != r.CONDITIONS_ANY:
                if entry.device != "aircraft" or ap.conditions is None:
                    cond, problem = entry_cond, entry_problem
                elif ap.conditions == "simulated" and not named:
                    cond = None
                    problem = "simulated instrument work in an aircraft with neither safety pilot nor instructor named (14 CFR 91.109(c), 61.51(g))"
                else:
                    cond, problem = ap.conditions, None
                if problem:
                    problems.append(f"approach {i}: {problem}")
                    continue
                if not _condition_ok(cond, conditions):
                    continue
            count += 1
        if entry.unlogged_approaches:
            problems.append(
                f"{entry.unlogged_approaches} approach(es) logged as a number without type and airfield ({_NEEDS_LOGGING}; FAA InFO 15012)"
            )
        return count, tuple(problems)

    if unit in (r.INSTRUMENT_HOURS, r.ACTUAL_INSTRUMENT_HOURS):
        actual = _hundredths(entry.instrument_actual_hours)
        sim = _hundredths(entry.instrument_simulated_hours)
        if unit == r.ACTUAL_INSTRUMENT_HOURS or conditions == r.CONDITIONS_ACTUAL:
            return (actual if entry.device == "aircraft" else 0), ()
        if conditions == r.CONDITIONS_ANY or entry.device != "aircraft":
            return actual + sim, ()
        if sim and not (entry.safety_pilot or entry.instructor):
            return actual, ("simulated instrument time in an aircraft with neither safety pilot nor instructor named (14 CFR 91.109(c), 61.51(g))",)
        return actual + sim, ()

    if unit == r.HOLDS:
        amount = entry.holds
    elif unit == r.COURSE_TRACKING:
        amount = 1 if entry.course_tracking else 0
    elif unit == r.LANDINGS:
        amount = entry.landings
    elif unit == r.NIGHT_FULL_STOP_LANDINGS:
        amount = entry.night_full_stop_landings
    elif unit == r.PARTIAL_PANEL_APPROACHES:
        amount = entry.partial_panel_approaches
    elif unit == r.UA_NOSE_HIGH:
        amount = entry.ua_nose_high
    elif unit == r.UA_NOSE_LOW:
        amount = entry.ua_nose_low
    else:  # pragma: no cover - the loader refuses unknown units
        raise ValueError(f"unknown task unit {unit!r}")
    if amount and conditions != r.CONDITIONS_ANY:
        cond, problem = _instrument_condition(entry)
        if problem:
            return 0, (problem,)
        if not _condition_ok(cond, conditions):
            return 0, ()
    return amount, ()


# ----------------------------------------------------------------- scopes


def scopes_for(requirement: r.Requirement, logbook: Logbook) -> tuple[str, ...]:
    """The scopes a requirement is judged in for this pilot.

    ``instrument-category``: each category of instrument rating held;
    ``category``/``category-class``: the pilot's category/class ratings (or, if
    none are recorded, those seen on aircraft entries); ``pilot``: one.
    """
    pilot = logbook.pilot
    if requirement.scope == r.SCOPE_PILOT:
        return ("pilot",)
    if requirement.scope == r.SCOPE_INSTRUMENT_CATEGORY:
        return tuple(dict.fromkeys(pilot.instrument_categories))
    pairs = list(pilot.category_classes)
    if not pairs:
        seen = {f"{e.category}/{e.aircraft_class}" for e in logbook.entries if e.device == "aircraft" and e.aircraft_class}
        pairs = sorted(seen)
    if requirement.scope == r.SCOPE_CATEGORY:
        scopes = tuple(dict.fromkeys(p.split("/", 1)[0] for p in pairs))
    else:
        scopes = tuple(dict.fromkeys(pairs))
    if requirement.not_required_with_instrument_rating:
        rated = set(pilot.instrument_categories)
        scopes = tuple(s for s in scopes if s.split("/", 1)[0] not in rated)
    return scopes


def _scope_filter(requirement: r.Requirement, scope: str):
    if requirement.scope == r.SCOPE_PILOT:
        return None, None
    if requirement.scope == r.SCOPE_CATEGORY_CLASS:
        cat, _, cls = scope.partition("/")
        return cat, cls or None
    return scope, None


# ----------------------------------------------------------- the logbook index


class _Index:
    """Entries sorted by date, with per-unit amounts computed once and shared."""

    def __init__(self, entries: Iterable[Entry]):
        self.entries: list[Entry] = sorted(entries, key=lambda e: (e.date, e.id))
        self.ords: list[int] = [e.date.toordinal() for e in self.entries]
        self._amounts: dict[tuple, list[tuple[int, int, tuple[str, ...]]]] = {}
        self._checks: list[tuple[int, int]] | None = None

    def upto(self, day_ord: int) -> int:
        """Number of entries dated on or before the ordinal ``day_ord``."""
        return bisect_right(self.ords, day_ord)

    def amounts(self, unit: str, conditions: str, hand: bool) -> list[tuple[int, int, tuple[str, ...]]]:
        """(entry index, amount, problems) for every entry with any of ``unit`` logged."""
        key = (unit, conditions, hand)
        cached = self._amounts.get(key)
        if cached is None:
            cached = []
            for i, e in enumerate(self.entries):
                if not _may_have(e, unit):
                    continue
                amount, problems = units_on(e, unit, conditions, hand)
                if amount or problems:
                    cached.append((i, amount, problems))
            self._amounts[key] = cached
        return cached

    def checks(self) -> list[tuple[int, int]]:
        """(entry index, ordinal) of entries with any check."""
        if self._checks is None:
            self._checks = [(i, self.ords[i]) for i, e in enumerate(self.entries) if e.checks]
        return self._checks


def _may_have(e: Entry, unit: str) -> bool:
    if unit == r.APPROACHES:
        return bool(e.approaches) or e.unlogged_approaches > 0
    if unit == r.HOLDS:
        return e.holds > 0
    if unit == r.COURSE_TRACKING:
        return e.course_tracking
    if unit == r.INSTRUMENT_HOURS:
        return e.instrument_actual_hours > 0 or e.instrument_simulated_hours > 0
    if unit == r.ACTUAL_INSTRUMENT_HOURS:
        return e.instrument_actual_hours > 0
    if unit == r.LANDINGS:
        return e.landings > 0
    if unit == r.NIGHT_FULL_STOP_LANDINGS:
        return e.night_full_stop_landings > 0
    if unit == r.PARTIAL_PANEL_APPROACHES:
        return e.partial_panel_approaches > 0
    if unit == r.UA_NOSE_HIGH:
        return e.ua_nose_high > 0
    if unit == r.UA_NOSE_LOW:
        return e.ua_nose_low > 0
    return True


# ----------------------------------------------------------- interval helpers


@lru_cache(maxsize=262144)
def _end(window: Window, o: int) -> int:
    return credit_end(window, date.fromordinal(o)).toordinal()


@lru_cache(maxsize=262144)
def _start(window: Window, o: int) -> int:
    return credit_start(window, date.fromordinal(o)).toordinal()


def _intersect(a: list[tuple[int, int]], b: list[tuple[int, int]]) -> list[tuple[int, int]]:
    out = []
    i = j = 0
    while i < len(a) and j < len(b):
        s = max(a[i][0], b[j][0])
        e = min(a[i][1], b[j][1])
        if s <= e:
            out.append((s, e))
        if a[i][1] < b[j][1]:
            i += 1
        else:
            j += 1
    return out


def _union(lists: Iterable[list[tuple[int, int]]]) -> list[tuple[int, int]]:
    items = sorted(x for lst in lists for x in lst)
    out: list[list[int]] = []
    for s, e in items:
        if out and s <= out[-1][1] + 1:
            if e > out[-1][1]:
                out[-1][1] = e
        else:
            out.append([s, e])
    return [(s, e) for s, e in out]


def _clip(intervals: list[tuple[int, int]], lo: int, hi: int) -> list[tuple[int, int]]:
    return [(max(s, lo), min(e, hi)) for s, e in intervals if e >= lo and s <= hi]


# ---------------------------------------------------------------- task series


class _TaskSeries:
    """One task of one path, for one scope: its unit-days and when it is met."""

    def __init__(self, task: r.Task, window: Window, days: list[int], amounts: list[int], ids: list[list[str]]):
        self.task = task
        self.window = window
        self.days = days
        self.amounts = amounts
        self.ids = ids
        need = task.minimum_units
        self.starts = [_start(window, d) for d in days]
        self.ends = [_end(window, d) for d in days]
        prefix = [0]
        for a in amounts:
            prefix.append(prefix[-1] + a)
        self.prefix = prefix
        # endl[j]: last day the task is met using units up to group j
        # (the n-th most recent unit's credit end), or -1 if too few units.
        endl = []
        for j in range(len(days)):
            target = prefix[j + 1] - need
            if target < 0:
                endl.append(-1)
            else:
                limit = bisect_right(prefix, target) - 1
                endl.append(_end(window, days[limit]))
        self.endl = endl

    def intervals(self) -> list[tuple[int, int]]:
        """Days on which the task is met (sorted, disjoint, inclusive ordinals)."""
        out: list[tuple[int, int]] = []
        n = len(self.days)
        for j in range(n):
            s = self.starts[j]
            e = self.endl[j]
            if j + 1 < n and self.starts[j + 1] - 1 < e:
                e = self.starts[j + 1] - 1
            if e >= s:
                if out and s <= out[-1][1] + 1:
                    out[-1] = (out[-1][0], max(out[-1][1], e))
                else:
                    out.append((s, e))
        return out

    def tail(self, day: int) -> list[tuple[int, int]]:
        """Days on/after ``day`` on which the task is met if nothing after ``day`` is logged."""
        last = bisect_right(self.days, day) - 1
        if last < 0:
            return []
        first = max(bisect_right(self.starts, day) - 1, 0)
        out = []
        for j in range(first, last + 1):
            s = max(self.starts[j], day)
            e = self.endl[j]
            if j < last and self.starts[j + 1] - 1 < e:
                e = self.starts[j + 1] - 1
            if e >= s:
                out.append((s, e))
        return _union([out])

    def active(self, day: int) -> tuple[int, int]:
        """(first, last) group index of the units counting on ``day``."""
        last = bisect_right(self.starts, day) - 1
        first = bisect_left(self.ends, day, 0, last + 1) if last >= 0 else 0
        return first, last

    def amount_on(self, day: int) -> int:
        first, last = self.active(day)
        if last < first:
            return 0
        return self.prefix[last + 1] - self.prefix[first]

    def evidence_on(self, day: int) -> list[str]:
        """Ids of the most recent units counting on ``day``, up to the task's minimum."""
        first, last = self.active(day)
        need = self.task.minimum_units
        got = 0
        ids: list[str] = []
        j = last
        while j >= first and got < need:
            ids.extend(self.ids[j])
            got += self.amounts[j]
            j -= 1
        return ids


# ---------------------------------------------------------- one requirement


@dataclass
class _Check:
    day: int
    expiry: int
    entry_id: str


class _Judged:
    """A requirement judged for one scope over the entries of an index (up to a limit)."""

    def __init__(self, rule_set: r.RuleSet, req: r.Requirement, scope: str, index: _Index, limit: int,
                 covered_scopes: tuple[str, ...]):
        self.rule_set = rule_set
        self.req = req
        self.scope = scope
        self.index = index
        self.limit = limit  # entries[:limit] are considered
        self.covered_scopes = covered_scopes
        cat, cls = _scope_filter(req, scope)
        self.cat, self.cls = cat, cls
        self.problems: list[tuple[int, str]] = []  # (entry index, message)

        self.paths: list[tuple[r.Path, list[_TaskSeries]]] = []
        path_sets = []
        for path in req.paths:
            series = [self._series(task, path.window) for task in path.tasks]
            met = series[0].intervals()
            for s in series[1:]:
                if not met:
                    break
                met = _intersect(met, s.intervals())
            lo = path.effective_from.toordinal() if path.effective_from else -_INF
            hi = path.effective_until.toordinal() if path.effective_until else _INF
            path_sets.append(_clip(met, lo, hi))
            self.paths.append((path, series))
        self.tasks_met = _union(path_sets)
        self.checks = self._checks()
        self.periods = self._periods()
        self._period_starts = [p[0] for p in self.periods]

    # -- building

    def _in_scope(self, e: Entry) -> bool:
        if self.cat is not None and e.category != self.cat:
            return False
        if self.cls is not None and e.aircraft_class != self.cls:
            return False
        return True

    def _series(self, task: r.Task, window: Window) -> _TaskSeries:
        entries = self.index.entries
        lo = task.entries_from.toordinal() if task.entries_from else -_INF
        hi = task.entries_until.toordinal() if task.entries_until else _INF
        devices = task.devices
        days: list[int] = []
        amounts: list[int] = []
        ids: list[list[str]] = []
        for i, amount, problems in self.index.amounts(task.unit, task.conditions, task.hand_flown_only):
            if i >= self.limit:
                break
            e = entries[i]
            if e.device not in devices:
                continue
            o = self.index.ords[i]
            if o < lo or o > hi:
                continue
            if not self._in_scope(e):
                if self.cat is not None and (amount or problems):
                    self._note_other_scope(i, e)
                continue
            for p in problems:
                self.problems.append((i, p))
            if not amount:
                continue
            if days and days[-1] == o:
                amounts[-1] += amount
                ids[-1].append(e.id)
            else:
                days.append(o)
                amounts.append(amount)
                ids.append([e.id])
        return _TaskSeries(task, window, days, amounts, ids)

    def _note_other_scope(self, i: int, e: Entry) -> None:
        if self.req.scope == r.SCOPE_CATEGORY_CLASS:
            if e.category == self.cat and e.aircraft_class is None and e.device == "aircraft":
                self.problems.append((i, "aircraft class not logged, so it cannot count for a class"))
            return
        others = {s.split("/", 1)[0] for s in self.covered_scopes}
        if e.category not in others:
            self.problems.append(
                (i, f"work in another category ({e.category}) is not credited: experience counts per aircraft category")
            )

    def _checks(self) -> list[_Check]:
        if not self.req.checks:
            return []
        out: list[_Check] = []
        expiry: int | None = None
        entries = self.index.entries
        for i, o in self.index.checks():
            if i >= self.limit:
                break
            e = entries[i]
            day = e.date
            for kind in e.checks:
                rule = next(
                    (c for c in self.req.checks if kind in c.kinds and c.is_in_force(day)
                     and (not c.same_category or self.cat is None or e.category == self.cat)),
                    None,
                )
                if rule is None:
                    continue
                if (
                    expiry is not None
                    and rule.early_renewal is not None
                    and early_window_start(rule.early_renewal, date.fromordinal(expiry)).toordinal() <= o <= expiry
                ):
                    new = _end(rule.window, expiry)
                else:
                    new = _end(rule.window, o)
                if expiry is not None and expiry >= o:
                    new = max(new, expiry)
                expiry = new
                out.append(_Check(o, new, e.id))
                break
        return out

    def _tasks_restore(self, start: int, last_current: int | None) -> bool:
        if last_current is None or start <= last_current + 1:
            return True
        if self.req.regain == r.REGAIN_TASKS:
            return True
        if self.req.regain == r.REGAIN_GRACE:
            return start <= _end(self.req.grace, last_current)
        return False

    def _periods(self) -> list[tuple[int, int]]:
        events = [(s, 1, e) for s, e in self.tasks_met] + [(c.day, 0, c.expiry) for c in self.checks]
        events.sort()
        periods: list[list[int]] = []
        pending: list[tuple[int, int]] = []
        for s, kind, e in events:
            last = periods[-1][1] if periods else None
            if kind == 1:
                if not self._tasks_restore(s, last):
                    pending.append((s, e))
                    continue
            else:
                for _ps, pe in pending:
                    if pe >= s and pe > e:
                        e = pe
                pending = []
            if periods and s <= periods[-1][1] + 1:
                if e > periods[-1][1]:
                    periods[-1][1] = e
            else:
                periods.append([s, e])
        return [(s, e) for s, e in periods]

    # -- reading

    def _grace_end(self, last_current: int) -> int | None:
        if self.req.regain == r.REGAIN_GRACE:
            return _end(self.req.grace, last_current)
        return None

    def stand(self, day: int, project: bool) -> tuple[str, int | None, int | None, str | None]:
        """(state, valid_through, regain_by, regain_with) on ``day``.

        With ``project``, a current period's end is recomputed as if nothing
        after ``day`` were logged (the view from that day).
        """
        k = bisect_right(self._period_starts, day) - 1
        if k >= 0 and day <= self.periods[k][1]:
            end = self._projected_end(day) if project else self.periods[k][1]
            return CURRENT, end, None, None
        if k < 0:
            return LAPSED, None, None, ("tasks" if self.req.paths else "check")
        last = self.periods[k][1]
        grace_end = self._grace_end(last)
        if grace_end is not None and day <= grace_end and self.req.paths:
            return GRACE, last, grace_end, "tasks"
        if self.req.regain == r.REGAIN_TASKS and self.req.paths:
            return LAPSED, last, None, "tasks"
        return LAPSED, last, None, "check"

    def _projected_end(self, day: int) -> int:
        sets = []
        for path, series in self.paths:
            met = series[0].tail(day)
            for s in series[1:]:
                if not met:
                    break
                met = _intersect(met, s.tail(day))
            lo = path.effective_from.toordinal() if path.effective_from else -_INF
            hi = path.effective_until.toordinal() if path.effective_until else _INF
            sets.append(_clip(met, lo, hi))
        expiry = None
        for c in self.checks:
            if c.day > day:
                break
            expiry = c.expiry if expiry is None else max(expiry, c.expiry)
        if expiry is not None and expiry >= day:
            sets.append([(day, expiry)])
        end = day
        for s, e in _union(sets):
            if s <= end + 1 and e > end:
                end = e
        return end

    def evidence(self, valid_through: int | None) -> list[str]:
        if valid_through is None:
            return []
        for c in reversed(self.checks):
            if c.day <= valid_through <= c.expiry:
                return [c.entry_id]
        for path, series in self.paths:
            if not path.is_in_force(date.fromordinal(valid_through)):
                continue
            if all(s.amount_on(valid_through) >= s.task.minimum_units for s in series):
                ids: list[str] = []
                for s in series:
                    ids.extend(i for i in s.evidence_on(valid_through) if i not in ids)
                return ids
        return []

    def missing(self, day: int, regain_with: str | None) -> dict:
        if regain_with is None:
            return {}
        if regain_with == "check":
            return {"check": list(self.req.check_kinds)}
        best: dict | None = None
        best_key = None
        the_day = date.fromordinal(day)
        for path, series in self.paths:
            if not path.is_in_force(the_day):
                continue
            short: dict = {}
            for s in series:
                gap = s.task.minimum_units - s.amount_on(day)
                if gap > 0:
                    short[s.task.unit] = gap / 100 if s.task.unit in r.HOUR_UNITS else gap
            key = len(short)
            if best is None or key < best_key:
                best, best_key = short, key
        return best or {}

    def warnings(self, day: int, valid_through: int | None, current: bool) -> list[str]:
        the_day = date.fromordinal(day)
        horizon = day
        refs = [the_day] if current or valid_through is None else [the_day, date.fromordinal(valid_through)]
        for path, _series in self.paths:
            for ref in refs:
                horizon = min(horizon, earliest_counting(path.window, ref).toordinal())
        out: list[str] = []
        seen: set[tuple[int, str]] = set()
        entries = self.index.entries
        for i, msg in sorted(self.problems, key=lambda p: (p[0], p[1])):
            if self.index.ords[i] < horizon or (i, msg) in seen:
                continue
            seen.add((i, msg))
            e = entries[i]
            out.append(f"entry {e.id} ({e.date.isoformat()}): {msg}")
        return out


# ----------------------------------------------------------------- public API


def _instances(logbook: Logbook, rule_sets: Sequence[r.RuleSet]):
    for rs in rule_sets:
        for req in rs.requirements:
            scopes = scopes_for(req, logbook)
            for scope in scopes:
                yield rs, req, scope, scopes


def _from_ord(o: int | None) -> date | None:
    return None if o is None else date.fromordinal(o)


def _merge(logbook: Logbook, planned: Sequence[Entry]) -> list[Entry]:
    entries = list(logbook.entries)
    if planned:
        ids = {e.id for e in entries}
        for p in planned:
            if p.id in ids:
                raise ValueError(f"planned entry id {p.id!r} is already used by a logged entry")
            ids.add(p.id)
        entries.extend(planned)
    return entries


def evaluate(
    logbook: Logbook, rule_sets: Sequence[r.RuleSet], as_of: date, planned: Sequence[Entry] = ()
) -> CurrencyReport:
    """Every requirement of ``rule_sets`` for every scope of the pilot, as of ``as_of``.

    ``as_of`` is the pilot's local date; entries (logged or ``planned``) dated
    after it are ignored. ``planned`` entries are treated exactly like logged
    ones (for what-if questions; see ``what_if``).
    """
    index = _Index(_merge(logbook, planned))
    limit = index.upto(as_of.toordinal())
    day = as_of.toordinal()
    statuses = []
    for rs, req, scope, scopes in _instances(logbook, rule_sets):
        judged = _Judged(rs, req, scope, index, limit, scopes)
        state, through, regain_by, regain_with = judged.stand(day, project=False)
        statuses.append(
            RequirementStatus(
                rule_set=rs.id,
                id=req.id,
                scope=scope,
                title=req.title,
                citation=req.citation,
                state=state,
                valid_through=_from_ord(through),
                regain_by=_from_ord(regain_by),
                regain_with=regain_with,
                missing=judged.missing(day, regain_with),
                evidence=tuple(judged.evidence(through)),
                warnings=tuple(judged.warnings(day, through, state == CURRENT)),
            )
        )
    return CurrencyReport(
        as_of=as_of,
        rule_sets=tuple(rs.id for rs in rule_sets),
        requirements=tuple(statuses),
        planned=tuple(p.id for p in planned),
    )


def timeline(
    logbook: Logbook, rule_sets: Sequence[r.RuleSet], start: date, end: date, planned: Sequence[Entry] = ()
) -> TimelineReport:
    """Every change of stand per requirement and scope from ``start`` through ``end``.

    The first change of each requirement is dated ``start``. On each day the
    stand is what ``evaluate`` would report with ``as_of`` = that day (state,
    valid_through, regain_by, regain_with), so a change is recorded whenever a
    new entry moves a date as well as when a state ends.
    """
    if end < start:
        raise ValueError("timeline end is before its start")
    index = _Index(_merge(logbook, planned))
    limit = index.upto(end.toordinal())
    lo, hi = start.toordinal(), end.toordinal()
    entry_days = sorted(set(index.ords[index.upto(lo - 1):limit]))
    out = []
    for rs, req, scope, scopes in _instances(logbook, rule_sets):
        judged = _Judged(rs, req, scope, index, limit, scopes)
        candidates = {lo}
        candidates.update(entry_days)
        for s, e in judged.periods:
            candidates.add(s)
            candidates.add(e + 1)
            g = judged._grace_end(e)
            if g is not None:
                candidates.add(g + 1)
        changes: list[StateChange] = []
        previous = None
        for day in sorted(c for c in candidates if lo <= c <= hi):
            stand = judged.stand(day, project=True)
            if stand != previous:
                state, through, regain_by, regain_with = stand
                changes.append(
                    StateChange(date.fromordinal(day), state, _from_ord(through), _from_ord(regain_by), regain_with)
                )
                previous = stand
        out.append(RequirementTimeline(rs.id, req.id, scope, req.title, req.citation, tuple(changes)))
    return TimelineReport(
        start=start,
        end=end,
        rule_sets=tuple(rs.id for rs in rule_sets),
        requirements=tuple(out),
        planned=tuple(p.id for p in planned),
    )


def what_if(
    logbook: Logbook, rule_sets: Sequence[r.RuleSet], as_of: date, planned: Sequence[Entry]
) -> WhatIfReport:
    """How each requirement moves if the ``planned`` entries are flown.

    ``before`` is the logbook as of ``as_of``; ``after`` adds the plan and is
    judged as of the later of ``as_of`` and the last planned date.
    """
    plan_as_of = max([as_of] + [p.date for p in planned])
    before = evaluate(logbook, rule_sets, as_of)
    after = evaluate(logbook, rule_sets, plan_as_of, planned)
    after_by_key = {s.key: s for s in after.requirements}
    moves = tuple(RequirementMove(b, after_by_key[b.key]) for b in before.requirements)
    return WhatIfReport(as_of, plan_as_of, before.rule_sets, moves, before, after)


# ------------------------------------------------------------ plain dicts


def _iso(d: date | None) -> str | None:
    return None if d is None else d.isoformat()


def status_to_json(s: RequirementStatus) -> dict:
    return {
        "rule_set": s.rule_set,
        "id": s.id,
        "scope": s.scope,
        "title": s.title,
        "citation": s.citation,
        "state": s.state,
        "valid_through": _iso(s.valid_through),
        "regain_by": _iso(s.regain_by),
        "regain_with": s.regain_with,
        "missing": dict(s.missing),
        "evidence": list(s.evidence),
        "warnings": list(s.warnings),
    }


def report_to_json(report: CurrencyReport) -> dict:
    """The evaluation as plain JSON-ready data (the ``planner evaluate --json`` contract)."""
    return {
        "as_of": report.as_of.isoformat(),
        "rule_sets": list(report.rule_sets),
        "requirements": [status_to_json(s) for s in report.requirements],
    }


def timeline_to_json(report: TimelineReport) -> dict:
    """The timeline as plain JSON-ready data (``planner timeline --json``)."""
    return {
        "from": report.start.isoformat(),
        "to": report.end.isoformat(),
        "rule_sets": list(report.rule_sets),
        "requirements": [
            {
                "rule_set": t.rule_set,
                "id": t.id,
                "scope": t.scope,
                "title": t.title,
                "citation": t.citation,
                "changes": [
                    {
                        "date": c.date.isoformat(),
                        "state": c.state,
                        "valid_through": _iso(c.valid_through),
                        "regain_by": _iso(c.regain_by),
                        "regain_with": c.regain_with,
                    }
                    for c in t.changes
                ],
            }
            for t in report.requirements
        ],
    }
