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
from operator import attrgetter
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


def units_on(
    entry: Entry, unit: str, conditions: str, hand_flown_only: bool = False, entry_condition: tuple | None = None
) -> tuple[int, tuple[str, ...]]:
    """Creditable amount of ``unit`` on ``entry`` (hundredths of an hour for hour units),
    and the reasons any logged work of that unit was not credited.

    ``entry_condition`` may pass a precomputed ``_instrument_condition(entry)``.
    """
    problems: list[str] = []
    if unit == r.APPROACHES:
        count = 0
        entry_cond = entry_problem = None
        if conditions != r.CONDITIONS_ANY:
            entry_cond, entry_problem = entry_condition or _instrument_condition(entry)
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
        cond, problem = entry_condition or _instrument_condition(entry)
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
    """Entries sorted by date, with per-unit amounts computed once and shared.

    Amounts are bucketed by (device, category, class) so that a task only
    looks at the entries it can credit.
    """

    def __init__(self, entries: Iterable[Entry]):
        self.entries: list[Entry] = sorted(entries, key=attrgetter("date", "id"))
        self.ords: list[int] = [e.date.toordinal() for e in self.entries]
        self._buckets: dict[tuple, tuple[int, dict]] = {}
        self._checks: list[tuple[int, int]] | None = None
        self.series_cache: dict[tuple, _TaskSeries] = {}
        self._conds: dict[int, tuple] = {}

    def upto(self, day_ord: int) -> int:
        """Number of entries dated on or before the ordinal ``day_ord``."""
        return bisect_right(self.ords, day_ord)

    def buckets(self, unit: str, conditions: str, hand: bool, first: int = 0) -> dict[tuple, tuple[list, list, list]]:
        """(device, category, class) -> (ordinals, amounts, entry indexes) of creditable work, by date.

        Covers at least the entries from index ``first`` on; older entries are
        read only when a caller asks for them.
        """
        key = (unit, conditions, hand)
        done_from, cached = self._buckets.get(key, (len(self.entries), {}))
        if first < done_from:
            older = self._bucket_range(unit, conditions, hand, first, done_from)
            for bucket_key, (o, a, i) in cached.items():
                b = older.get(bucket_key)
                if b is None:
                    older[bucket_key] = (o, a, i)
                else:
                    b[0].extend(o)
                    b[1].extend(a)
                    b[2].extend(i)
            cached = older
            done_from = first
            self._buckets[key] = (done_from, cached)
        return cached

    def _bucket_range(self, unit: str, conditions: str, hand: bool, lo: int, hi: int) -> dict:
        out: dict[tuple, tuple[list, list, list]] = {}
        ords = self.ords
        entries = self.entries
        attr = _SIMPLE_UNITS.get(unit)
        if attr is not None and conditions == r.CONDITIONS_ANY:
            rows = [(i, getattr(entries[i], attr)) for i in range(lo, hi) if getattr(entries[i], attr)]
            if attr == "course_tracking":
                rows = [(i, 1) for i, _ in rows]
        else:
            rows = []
            conds = self._conds
            for i in range(lo, hi):
                e = entries[i]
                if _may_have(e, unit):
                    c = conds.get(i)
                    if c is None:
                        c = conds[i] = _instrument_condition(e)
                    amount = units_on(e, unit, conditions, hand, c)[0]
                    if amount:
                        rows.append((i, amount))
        for i, amount in rows:
            e = entries[i]
            bucket_key = (e.device, e.category, e.aircraft_class)
            b = out.get(bucket_key)
            if b is None:
                b = out[bucket_key] = ([], [], [])
            b[0].append(ords[i])
            b[1].append(amount)
            b[2].append(i)
        return out

    def checks(self) -> list[tuple[int, int]]:
        """(entry index, ordinal) of entries with any check."""
        if self._checks is None:
            self._checks = [(i, self.ords[i]) for i, e in enumerate(self.entries) if e.checks]
        return self._checks


_SIMPLE_UNITS = {
    r.HOLDS: "holds",
    r.COURSE_TRACKING: "course_tracking",
    r.LANDINGS: "landings",
    r.NIGHT_FULL_STOP_LANDINGS: "night_full_stop_landings",
    r.PARTIAL_PANEL_APPROACHES: "partial_panel_approaches",
    r.UA_NOSE_HIGH: "ua_nose_high",
    r.UA_NOSE_LOW: "ua_nose_low",
}


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


_END_CACHE: dict[Window, dict[int, int]] = {}
_START_CACHE: dict[Window, dict[int, int]] = {}


def _end(window: Window, o: int) -> int:
    cache = _END_CACHE.get(window)
    if cache is None:
        cache = _END_CACHE[window] = {}
    v = cache.get(o)
    if v is None:
        v = cache[o] = credit_end(window, date.fromordinal(o)).toordinal()
    return v


def _start(window: Window, o: int) -> int:
    if window.unit != "calendar-months" or window.current_month_counts:
        return o
    cache = _START_CACHE.get(window)
    if cache is None:
        cache = _START_CACHE[window] = {}
    v = cache.get(o)
    if v is None:
        v = cache[o] = credit_start(window, date.fromordinal(o)).toordinal()
    return v


def clear_caches() -> None:
    """Forget memoised window arithmetic (for benchmarks)."""
    _END_CACHE.clear()
    _START_CACHE.clear()


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

    def __init__(self, task: r.Task, window: Window, days: list[int], amounts: list[int], idxs: list[int],
                 entries: list[Entry]):
        self.task = task
        self.window = window
        self.days = days
        self.amounts = amounts
        self.idxs = idxs  # entry index of each row (rows of one day are kept apart)
        self.entries = entries
        need = task.minimum_units
        self.simple = window.unit != "calendar-months" or window.current_month_counts
        self.starts = days if self.simple else [_start(window, d) for d in days]
        end_cache = _END_CACHE.get(window)
        if end_cache is None:
            end_cache = _END_CACHE[window] = {}
        ends = []
        for d in days:
            v = end_cache.get(d)
            if v is None:
                v = end_cache[d] = credit_end(window, date.fromordinal(d)).toordinal()
            ends.append(v)
        self.ends = ends
        prefix = [0]
        total = 0
        for a in amounts:
            total += a
            prefix.append(total)
        self.prefix = prefix
        # endl[j]: last day the task is met using units up to group j
        # (the n-th most recent unit's credit end), or -1 if too few units.
        endl = []
        limit = 0  # the n-th most recent row moves forward only: two pointers, no search
        for j in range(len(days)):
            target = prefix[j + 1] - need
            if target < 0:
                endl.append(-1)
                continue
            while prefix[limit + 1] <= target:
                limit += 1
            endl.append(ends[limit])
        self.endl = endl

    def tail_end(self, day: int) -> int:
        """Simple windows only: last day met if nothing after ``day`` is logged (-1: not met)."""
        last = bisect_right(self.days, day) - 1
        return self.endl[last] if last >= 0 else -1

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
        if self.simple:
            e = self.endl[last]
            return [(day, e)] if e >= day else []
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
            ids.append(self.entries[self.idxs[j]].id)
            got += self.amounts[j]
            j -= 1
        return ids


# ---------------------------------------------------------- one requirement


@dataclass
class _Check:
    day: int
    expiry: int
    entry_id: str


def _checks_for(req: r.Requirement, cat: str | None, index: _Index, limit: int) -> list[_Check]:
    """Checks that meet ``req`` (in category ``cat``), with the expiry each leaves, in date order."""
    if not req.checks:
        return []
    out: list[_Check] = []
    expiry: int | None = None
    entries = index.entries
    for i, o in index.checks():
        if i >= limit:
            break
        e = entries[i]
        day = e.date
        for kind in e.checks:
            rule = next(
                (c for c in req.checks if kind in c.kinds and c.is_in_force(day)
                 and (not c.same_category or cat is None or e.category == cat)),
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


class _Judged:
    """A requirement judged for one scope over the entries of an index.

    Entries after ``limit`` (an index into the sorted entries) are ignored;
    task work dated before the ordinal ``lower`` is ignored too (callers only
    pass a ``lower`` where the result does not depend on older work).
    """

    def __init__(self, rule_set: r.RuleSet, req: r.Requirement, scope: str, index: _Index, limit: int,
                 covered_scopes: tuple[str, ...], lower: int = -_INF, checks: list[_Check] | None = None):
        self.rule_set = rule_set
        self.req = req
        self.scope = scope
        self.index = index
        self.limit = limit  # entries[:limit] are considered
        self.limit_ord = index.ords[limit - 1] if limit else -_INF
        self.lower = lower
        self.covered_scopes = covered_scopes
        cat, cls = _scope_filter(req, scope)
        self.cat, self.cls = cat, cls

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
        self.checks = self._checks() if checks is None else checks
        self.periods = self._periods()
        self._period_starts = [p[0] for p in self.periods]
        self._path_bounds = [
            (
                path.effective_from.toordinal() if path.effective_from else -_INF,
                path.effective_until.toordinal() if path.effective_until else _INF,
                all(s.simple for s in series),
            )
            for path, series in self.paths
        ]
        self._check_days = [c.day for c in self.checks]
        reach = []
        for c in self.checks:
            reach.append(c.expiry if not reach or c.expiry > reach[-1] else reach[-1])
        self._check_reach = reach

    # -- building

    def _in_scope(self, e: Entry) -> bool:
        if self.cat is not None and e.category != self.cat:
            return False
        if self.cls is not None and e.aircraft_class != self.cls:
            return False
        return True

    def _series(self, task: r.Task, window: Window) -> _TaskSeries:
        lo = max(self.lower, task.entries_from.toordinal() if task.entries_from else -_INF)
        hi = min(self.limit_ord, task.entries_until.toordinal() if task.entries_until else _INF)
        first = bisect_left(self.index.ords, lo) if lo > -_INF else 0
        buckets = self.index.buckets(task.unit, task.conditions, task.hand_flown_only, first)
        chosen = tuple(
            k for k in buckets
            if k[0] in task.devices and (self.cat is None or k[1] == self.cat) and (self.cls is None or k[2] == self.cls)
        )
        cache_key = (task.unit, task.conditions, task.hand_flown_only, chosen, lo, hi, window, task.minimum_units)
        cached = self.index.series_cache.get(cache_key)
        if cached is None:
            cached = self.index.series_cache[cache_key] = self._build_series(task, window, buckets, chosen, lo, hi)
        return cached

    def _build_series(self, task: r.Task, window: Window, buckets: dict, chosen: tuple, lo: int, hi: int) -> _TaskSeries:
        parts = []
        for key in chosen:
            ords, amounts, idxs = buckets[key]
            a = bisect_left(ords, lo)
            b = bisect_right(ords, hi)
            if a < b:
                parts.append((ords, amounts, idxs, a, b))
        if not parts:
            return _TaskSeries(task, window, [], [], [], self.index.entries)
        if len(parts) == 1:
            ords, amounts, idxs, a, b = parts[0]
            return _TaskSeries(task, window, ords[a:b], amounts[a:b], idxs[a:b], self.index.entries)
        rows = sorted(
            zip(
                [o for p in parts for o in p[0][p[3]:p[4]]],
                [i for p in parts for i in p[2][p[3]:p[4]]],
                [x for p in parts for x in p[1][p[3]:p[4]]],
            )
        )
        days, idxs, sums = (list(t) for t in zip(*rows))
        return _TaskSeries(task, window, days, sums, idxs, self.index.entries)

    def _problems(self, first: int) -> list[tuple[int, str]]:
        """(entry index, reason) for work from entry ``first`` on that this requirement does not credit."""
        out: list[tuple[int, str]] = []
        tasks = {}
        for path in self.req.paths:
            for task in path.tasks:
                tasks.setdefault((task.unit, task.conditions, task.hand_flown_only), set()).update(task.devices)
        others = {s.split("/", 1)[0] for s in self.covered_scopes}
        entries = self.index.entries
        for i in range(first, self.limit):
            e = entries[i]
            for (unit, conditions, hand), devices in tasks.items():
                if e.device not in devices or not _may_have(e, unit):
                    continue
                amount, problems = units_on(e, unit, conditions, hand)
                if not (amount or problems):
                    continue
                if self._in_scope(e):
                    out.extend((i, p) for p in problems)
                elif self.req.scope == r.SCOPE_CATEGORY_CLASS:
                    if e.category == self.cat and e.aircraft_class is None and e.device == "aircraft":
                        out.append((i, "aircraft class not logged, so it cannot count for a class"))
                elif self.cat is not None and e.category not in others:
                    out.append(
                        (i, f"work in another category ({e.category}) is not credited: experience counts per aircraft category")
                    )
        return out

    def unit_days(self) -> set[int]:
        """Days on which anything this requirement counts was done or starts counting."""
        days = {c.day for c in self.checks}
        for _path, series in self.paths:
            for s in series:
                days.update(s.days)
                days.update(s.starts)
        return days

    def _checks(self) -> list[_Check]:
        return _checks_for(self.req, self.cat, self.index, self.limit)

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
        spans: list[tuple[int, int]] = []
        for (path, series), (lo, hi, simple) in zip(self.paths, self._path_bounds):
            if simple:
                if len(series) == 1:
                    e = series[0].tail_end(day)
                else:
                    e = min(s.tail_end(day) for s in series)
                start = day if day > lo else lo
                if e > hi:
                    e = hi
                if e >= start:
                    spans.append((start, e))
                continue
            met = series[0].tail(day)
            for s in series[1:]:
                if not met:
                    break
                met = _intersect(met, s.tail(day))
            if met:
                spans.extend(_clip(met, lo, hi))
        k = bisect_right(self._check_days, day) - 1
        if k >= 0 and self._check_reach[k] >= day:
            spans.append((day, self._check_reach[k]))
        end = day
        if len(spans) > 1:
            spans.sort()
        for s, e in spans:
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
        first = bisect_left(self.index.ords, horizon)
        for i, msg in self._problems(first):
            if (i, msg) in seen:
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


def _span_days(window: Window) -> int:
    """More days than can ever lie between work and the last day it counts."""
    if window.unit == "days":
        return window.length + 1
    if window.unit == "years-to-the-day":
        return 366 * window.length + 1
    return 31 * (window.length + 1)


def _judge_as_of(rs, req, scope, index: _Index, limit: int, day: int, scopes) -> _Judged:
    """Judge a requirement as of ``day`` looking back only as far as the answer needs.

    * Met only by checks: no task work to read.
    * Tasks always restore it: the state depends only on the work in the
      window; look back further (4x at a time) only to find when the most
      recent period ended.
    * Grace or check-only restoring: the history matters, but a check resets
      it: start from the work that still counts on the day of the last check.
    """
    if not req.paths:
        return _Judged(rs, req, scope, index, limit, scopes, lower=day + 1)
    cat = _scope_filter(req, scope)[0]
    checks = _checks_for(req, cat, index, limit)
    span = max(_span_days(p.window) for p in req.paths)
    first = index.ords[0] if index.ords else day
    if req.regain != r.REGAIN_TASKS:
        lower = checks[-1].day - span if checks else -_INF
        return _Judged(rs, req, scope, index, limit, scopes, lower=lower, checks=checks)
    lookback = span
    while True:
        lower = day - lookback
        judged = _Judged(rs, req, scope, index, limit, scopes, lower=lower, checks=checks)
        if lower <= first:
            return judged
        state, through, _by, _with = judged.stand(day, project=False)
        if state == CURRENT or (through is not None and through >= lower + span):
            return judged
        lookback *= 4


def evaluate(
    logbook: Logbook, rule_sets: Sequence[r.RuleSet], as_of: date, planned: Sequence[Entry] = ()
) -> CurrencyReport:
    """Every requirement of ``rule_sets`` for every scope of the pilot, as of ``as_of``.

    ``as_of`` is the pilot's local date; entries (logged or ``planned``) dated
    after it are ignored. ``planned`` entries are treated exactly like logged
    ones (for what-if questions; see ``what_if``).
    """
    index = _Index(e for e in _merge(logbook, planned) if e.date <= as_of)
    limit = len(index.entries)
    day = as_of.toordinal()
    statuses = []
    for rs, req, scope, scopes in _instances(logbook, rule_sets):
        judged = _judge_as_of(rs, req, scope, index, limit, day, scopes)
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
    index = _Index(e for e in _merge(logbook, planned) if e.date <= end)
    limit = len(index.entries)
    lo, hi = start.toordinal(), end.toordinal()
    out = []
    for rs, req, scope, scopes in _instances(logbook, rule_sets):
        judged = _Judged(rs, req, scope, index, limit, scopes)
        candidates = {lo}
        candidates.update(judged.unit_days())
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
