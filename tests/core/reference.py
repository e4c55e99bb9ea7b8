"""A plain, day-by-day reference evaluator, written independently of the engine.

It walks the calendar one day at a time and asks, for each day, the question
the regulation asks: "counting back from this day, is there enough work in the
window (or a check that still covers it)?". It is slow on purpose and shares no
code with ``planner.core.currency`` or ``planner.core.windows``: only the rule
objects and the logbook dataclasses.

Crediting policy (the same written policy the engine documents):
* an approach needs a type and an airfield; the integer shorthand never counts;
* instrument work in an aircraft needs actual conditions, or simulated
  conditions with a safety pilot or instructor named; unlogged conditions are
  read from the instrument hours when only one kind is logged, or taken as
  simulated when someone is named; devices need neither;
* hours are counted in hundredths.
"""

from __future__ import annotations

import bisect
import calendar
from datetime import date, timedelta
from functools import lru_cache

from planner.core.logbook import Entry, Logbook

ONE = timedelta(days=1)


# ---------------------------------------------------------------- calendar


def month_number(d: date) -> int:
    return d.year * 12 + d.month


@lru_cache(maxsize=None)
def same_day_months_later(d: date, months: int) -> date:
    y, m = d.year, d.month + months
    while m > 12:
        y, m = y + 1, m - 12
    while m < 1:
        y, m = y - 1, m + 12
    return date(y, m, min(d.day, calendar.monthrange(y, m)[1]))


def counts_on(window, done: date, day: date) -> bool:
    """Does work done on ``done`` count when judging ``day``?"""
    if done > day:
        return False
    if window.unit == "calendar-months":
        back = month_number(day) - month_number(done)
        if window.current_month_counts:
            return back <= window.length
        return 1 <= back <= window.length
    if window.unit == "days":
        gap = (day - done).days
        return gap <= window.length if window.inclusive else gap < window.length
    months = window.length if window.unit == "months-to-the-day" else 12 * window.length
    anniversary = same_day_months_later(done, months)
    return day <= anniversary if window.inclusive else day < anniversary


@lru_cache(maxsize=None)
def last_covered(window, done: date) -> date:
    """Walk forward from ``done`` to the last day on which it still counts."""
    day = done
    while not counts_on(window, done, day):  # the literal reading starts next month
        day += ONE
    while counts_on(window, done, day + ONE):
        day += ONE
    return day


def in_early_window(early, expiry: date, day: date) -> bool:
    if day > expiry:
        return False
    if early.unit == "calendar-months":
        return month_number(expiry) - month_number(day) < early.length
    if early.unit == "days":
        return (expiry - day).days < early.length
    months = early.length if early.unit == "months-to-the-day" else 12 * early.length
    return day > same_day_months_later(expiry, -months)


# ---------------------------------------------------------------- crediting


def _named(e: Entry) -> bool:
    return bool(e.safety_pilot or e.instructor)


def entry_conditions(e: Entry):
    if e.device != "aircraft":
        return "device"
    c = e.conditions
    if c is None:
        a, s = e.instrument_actual_hours > 0, e.instrument_simulated_hours > 0
        if a and not s:
            c = "actual"
        elif s and not a:
            c = "simulated"
        elif _named(e):
            c = "simulated"
        else:
            return None
    if c == "simulated" and not _named(e):
        return None
    return c


def _ok(cond, wanted):
    if wanted == "any":
        return True
    if wanted == "actual":
        return cond == "actual"
    return cond is not None


def amount(e: Entry, task) -> int:
    wanted = task.conditions
    u = task.unit
    if u == "approaches":
        n = 0
        for a in e.approaches:
            if not a.type or not a.airfield:
                continue
            if task.hand_flown_only and a.coupled:
                continue
            if wanted != "any":
                if e.device == "aircraft" and a.conditions is not None:
                    cond = a.conditions
                    if cond == "simulated" and not _named(e):
                        cond = None
                else:
                    cond = entry_conditions(e)
                if not _ok(cond, wanted):
                    continue
            n += 1
        return n
    if u in ("instrument-hours", "actual-instrument-hours"):
        act = round(e.instrument_actual_hours * 100)
        sim = round(e.instrument_simulated_hours * 100)
        if u == "actual-instrument-hours" or wanted == "actual":
            return act if e.device == "aircraft" else 0
        if wanted == "any" or e.device != "aircraft" or _named(e):
            return act + sim
        return act
    n = {
        "holds": e.holds,
        "course-tracking": 1 if e.course_tracking else 0,
        "landings": e.landings,
        "night-full-stop-landings": e.night_full_stop_landings,
        "partial-panel-approaches": e.partial_panel_approaches,
        "ua-nose-high": e.ua_nose_high,
        "ua-nose-low": e.ua_nose_low,
    }[u]
    if n and wanted != "any" and not _ok(entry_conditions(e), wanted):
        return 0
    return n


def needed(task) -> int:
    if task.unit in ("instrument-hours", "actual-instrument-hours"):
        return round(task.minimum * 100)
    return int(task.minimum)


def in_scope(e: Entry, requirement, scope: str) -> bool:
    if requirement.scope == "pilot":
        return True
    if requirement.scope == "category-class":
        cat, _, cls = scope.partition("/")
        return e.category == cat and e.aircraft_class == cls
    return e.category == scope


def in_force(thing, day: date) -> bool:
    return (thing.effective_from is None or thing.effective_from <= day) and (
        thing.effective_until is None or day <= thing.effective_until
    )


# ---------------------------------------------------------------- the walk


class Reference:
    """One requirement for one scope over a fixed set of entries."""

    def __init__(self, requirement, scope: str, entries):
        self.req = requirement
        self.scope = scope
        self.entries = sorted(entries, key=lambda e: (e.date, e.id))
        # per path, per task: list of (date, amount) of creditable work
        self.units = []
        for path in requirement.paths:
            per_task = []
            for task in path.tasks:
                lst = []
                for e in self.entries:
                    if e.device not in task.devices or not in_scope(e, requirement, scope):
                        continue
                    if task.entries_from and e.date < task.entries_from:
                        continue
                    if task.entries_until and e.date > task.entries_until:
                        continue
                    n = amount(e, task)
                    if n:
                        lst.append((e.date, n))
                per_task.append(lst)
            self.units.append(per_task)

    def have(self, path_index: int, task_index: int, day: date) -> int:
        window = self.req.paths[path_index].window
        units = self.units[path_index][task_index]
        # Skip work older than any window can reach (a plain bound: 31 days a month).
        reach = {"days": window.length + 1, "years-to-the-day": 366 * window.length + 1}.get(
            window.unit, 31 * (window.length + 1)
        )
        first = bisect.bisect_left(units, (day - timedelta(days=reach),))
        total = 0
        for d, n in units[first:]:
            if d > day:
                break  # units are in date order
            if counts_on(window, d, day):
                total += n
        return total

    def tasks_met(self, day: date) -> bool:
        for p, path in enumerate(self.req.paths):
            if not in_force(path, day):
                continue
            if all(self.have(p, t, day) >= needed(task) for t, task in enumerate(path.tasks)):
                return True
        return False

    def grace_end(self, last: date) -> date:
        return last_covered(self.req.grace, last)

    def walk(self, first: date, last: date):
        """Yield (day, current, last_current_day) for every day from ``first`` to ``last``."""
        expiry = None
        last_current = None
        checks_by_day = {}
        for e in self.entries:
            if e.checks:
                checks_by_day.setdefault(e.date, []).append(e)
        day = first
        while day <= last:
            for e in checks_by_day.get(day, []):
                for kind in e.checks:
                    rule = None
                    for c in self.req.checks:
                        if kind in c.kinds and in_force(c, day) and (
                            not c.same_category or self.req.scope == "pilot" or e.category == self.scope.partition("/")[0]
                        ):
                            rule = c
                            break
                    if rule is None:
                        continue
                    if expiry is not None and rule.early_renewal is not None and in_early_window(rule.early_renewal, expiry, day):
                        new = last_covered(rule.window, expiry)
                    else:
                        new = last_covered(rule.window, day)
                    if expiry is not None and expiry >= day and expiry > new:
                        new = expiry
                    expiry = new
                    break
            if expiry is not None and day <= expiry:
                current = True
            elif self.tasks_met(day):
                if last_current is None or last_current == day - ONE:
                    current = True
                elif self.req.regain == "tasks":
                    current = True
                elif self.req.regain == "grace":
                    current = day <= self.grace_end(last_current)
                else:
                    current = False
            else:
                current = False
            if current:
                last_current = day
            yield day, current, last_current
            day += ONE

    def stand(self, day: date, current: bool, last_current):
        """(state, regain_by, regain_with) on a day, given the walk's answer."""
        if current:
            return "current", None, None
        if last_current is None:
            return "lapsed", None, "tasks" if self.req.paths else "check"
        if self.req.regain == "grace" and day <= self.grace_end(last_current):
            return "grace", self.grace_end(last_current), "tasks"
        if self.req.regain == "tasks" and self.req.paths:
            return "lapsed", None, "tasks"
        return "lapsed", None, "check"

    def missing(self, day: date, regain_with):
        if regain_with is None:
            return {}
        if regain_with == "check":
            kinds = []
            for c in self.req.checks:
                kinds.extend(k for k in c.kinds if k not in kinds)
            return {"check": kinds}
        best = None
        for p, path in enumerate(self.req.paths):
            if not in_force(path, day):
                continue
            short = {}
            for t, task in enumerate(path.tasks):
                gap = needed(task) - self.have(p, t, day)
                if gap > 0:
                    short[task.unit] = gap / 100 if task.unit in ("instrument-hours", "actual-instrument-hours") else gap
            if best is None or len(short) < len(best):
                best = short
        return best or {}


def first_day(entries, fallback: date) -> date:
    return min((e.date for e in entries), default=fallback)


def evaluate(requirement, scope: str, logbook: Logbook, as_of: date):
    """(state, valid_through, regain_by, regain_with, missing) as of ``as_of``, day by day."""
    entries = [e for e in logbook.entries if e.date <= as_of]
    ref = Reference(requirement, scope, entries)
    start = min(first_day(entries, as_of), as_of)
    valid_through = None
    for day, current, last_current in ref.walk(start, as_of + timedelta(days=4000)):
        if day == as_of:
            state, regain_by, regain_with = ref.stand(as_of, current, last_current)
            valid_through = last_current
            if not current:
                break
        elif day > as_of:
            # Keep walking (no new entries) to find where the current period ends.
            if not current:
                break
            valid_through = day
    return state, valid_through, regain_by, regain_with, ref.missing(as_of, regain_with)
