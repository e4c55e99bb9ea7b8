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

Algorithm: each entry is read once into flat per-field lists (``_Index``), and
the creditable amounts of each kind of work are worked out over those lists.
For every row of work the n-th most recent unit is found by binary search over
prefix sums, which gives the task's met intervals directly (no day-by-day
loop). Work is O(U log U) for U unit rows. The timeline looks only at days
where something can change: outside periods of currency the edges of periods
and grace stages; inside a period the days with work or a check, whose
projected ends are worked out together (``_Judged.changes``). The lists are
processed whole (map, compress, comprehensions) rather than element by element
in Python, and few objects are kept alive, which keeps garbage collection short.
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from functools import partial
from itertools import accumulate, chain, compress, islice, repeat
from operator import add, and_, attrgetter, eq, ge, gt, le, mul, ne, sub
from dataclasses import dataclass, field
from datetime import date
from typing import Iterable, Sequence

from planner.core import rules as r
from planner.core.logbook import Entry, Logbook
from planner.core.windows import (
    CALENDAR_MONTHS,
    DAYS,
    MONTHS_TO_THE_DAY,
    Window,
    credit_end,
    credit_start,
    early_window_start,
    earliest_counting,
    end_of_month_index,
    first_of_month_index,
    month_index,
)

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
    return _condition_of(
        entry.device,
        entry.conditions,
        entry.instrument_actual_hours,
        entry.instrument_simulated_hours,
        bool(entry.safety_pilot or entry.instructor),
    )


def _condition_of(device: str, cond: str | None, actual: float, simulated: float, named: bool) -> tuple:
    """``_instrument_condition`` from the entry's fields (``named``: a safety pilot or instructor is named)."""
    if device != "aircraft":
        return "device", None
    if cond is None:
        has_actual = actual > 0
        has_sim = simulated > 0
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
    return _CONDITION.get(cond) or (cond, None)


_CONDITION = {"actual": ("actual", None), "simulated": ("simulated", None)}  # shared results


def _condition_ok(cond: str | None, wanted: str) -> bool:
    if wanted == r.CONDITIONS_ANY:
        return True
    if wanted == r.CONDITIONS_ACTUAL:
        return cond == "actual"
    return cond is not None


def _hundredths(hours: float) -> int:
    return round(hours * 100)


def _count_approaches(
    approaches: tuple, device: str, named: bool, conditions: str, hand_flown_only: bool, entry_condition: tuple | None,
    problems: list | None,
) -> int:
    """Creditable approaches among an entry's ``approaches``; with a ``problems`` list, the reasons
    others were not credited are appended to it. ``entry_condition``: ``_instrument_condition`` of the
    entry (needed unless ``conditions`` is any); ``named``: a safety pilot or instructor is named.
    """
    count = 0
    entry_cond = entry_problem = None
    if conditions != r.CONDITIONS_ANY:
        entry_cond, entry_problem = entry_condition
    for i, ap in enumerate(approaches, start=1):
        if not (ap.type and ap.airfield):
            if problems is not None:
                problems.append(f"approach {i} has no type or airfield logged ({_NEEDS_LOGGING}; FAA InFO 15012)")
            continue
        if hand_flown_only and ap.coupled:
            continue
        if conditions != r.CONDITIONS_ANY:
            if device != "aircraft" or ap.conditions is None:
                cond, problem = entry_cond, entry_problem
            elif ap.conditions == "simulated" and not named:
                cond = None
                problem = "simulated instrument work in an aircraft with neither safety pilot nor instructor named (14 CFR 91.109(c), 61.51(g))"
            else:
                cond, problem = ap.conditions, None
            if problem:
                if problems is not None:
                    problems.append(f"approach {i}: {problem}")
                continue
            if not _condition_ok(cond, conditions):
                continue
        count += 1
    return count


def _hour_units(unit: str, conditions: str, device: str, actual_hours: float, simulated_hours: float, named: bool) -> int:
    """Creditable instrument time of an entry in hundredths of an hour (``named``: a safety pilot or instructor)."""
    actual = _hundredths(actual_hours)
    sim = _hundredths(simulated_hours)
    if unit == r.ACTUAL_INSTRUMENT_HOURS or conditions == r.CONDITIONS_ACTUAL:
        return actual if device == "aircraft" else 0
    if conditions == r.CONDITIONS_ANY or device != "aircraft":
        return actual + sim
    if sim and not named:
        return actual
    return actual + sim


def units_on(
    entry: Entry, unit: str, conditions: str, hand_flown_only: bool = False, entry_condition: tuple | None = None
) -> tuple[int, tuple[str, ...]]:
    """Creditable amount of ``unit`` on ``entry`` (hundredths of an hour for hour units),
    and the reasons any logged work of that unit was not credited.

    ``entry_condition`` may pass a precomputed ``_instrument_condition(entry)``.
    """
    named = bool(entry.safety_pilot or entry.instructor)
    if unit == r.APPROACHES:
        problems: list[str] = []
        entry_cond = None
        if conditions != r.CONDITIONS_ANY:
            entry_cond = entry_condition or _instrument_condition(entry)
        count = _count_approaches(entry.approaches, entry.device, named, conditions, hand_flown_only, entry_cond, problems)
        if entry.unlogged_approaches:
            problems.append(
                f"{entry.unlogged_approaches} approach(es) logged as a number without type and airfield ({_NEEDS_LOGGING}; FAA InFO 15012)"
            )
        return count, tuple(problems)

    if unit in (r.INSTRUMENT_HOURS, r.ACTUAL_INSTRUMENT_HOURS):
        amount = _hour_units(
            unit, conditions, entry.device, entry.instrument_actual_hours, entry.instrument_simulated_hours, named
        )
        if (
            unit == r.INSTRUMENT_HOURS
            and conditions not in (r.CONDITIONS_ANY, r.CONDITIONS_ACTUAL)
            and entry.device == "aircraft"
            and _hundredths(entry.instrument_simulated_hours)
            and not named
        ):
            return amount, (
                "simulated instrument time in an aircraft with neither safety pilot nor instructor named (14 CFR 91.109(c), 61.51(g))",
            )
        return amount, ()

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


def scope_filter(requirement: r.Requirement, scope: str) -> tuple[str | None, str | None]:
    """The (category, class) an entry must match to count for ``requirement`` in ``scope``; None matches any."""
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

    def __init__(self, entries: Iterable[Entry], until: date | None = None):
        """``entries`` dated on or before ``until`` (all if None), sorted by date and id."""
        entries = list(entries)
        dates, ids, checks = _fields(entries, _HEAD)
        if until is not None and dates and max(dates) > until:
            kept = list(compress(range(len(entries)), map(ge, repeat(until), dates)))
            entries = [entries[i] for i in kept]
            dates = [dates[i] for i in kept]
            ids = [ids[i] for i in kept]
            checks = [checks[i] for i in kept]
        in_order = all(map(le, dates, islice(dates, 1, None))) and not any(
            map(and_, map(eq, dates, islice(dates, 1, None)), map(gt, ids, islice(ids, 1, None)))
        )
        if not in_order:
            order = sorted(range(len(entries)), key=lambda i: (dates[i], ids[i]))  # stable, as sorting by (date, id)
            entries = [entries[i] for i in order]
            dates = [dates[i] for i in order]
            checks = [checks[i] for i in order]
        self.entries: list[Entry] = entries
        self.ords: list[int] = list(map(date.toordinal, dates))
        ords = self.ords
        self._checks: list[tuple[int, int]] = [(i, ords[i]) for i in compress(range(len(entries)), checks)]
        self._rows: dict[tuple, tuple] = {}
        self.series_cache: dict[tuple, _TaskSeries] = {}
        n = len(self.entries)
        self._cols: dict[str, list] = {name: [None] * n for name in _ROW_FIELDS + _DERIVED_FIELDS}
        self._cols_from = n  # columns are filled in for entries from this index on
        self._bucket_ids: dict[tuple, int] = {}  # (device, category, class) -> a small number
        self._buckets: list[tuple] = []
        self._approaches: dict[tuple[int, int], tuple] = {}
        self.units_memo: dict[tuple, dict[int, tuple]] = {}  # (unit, conditions, hand) -> entry index -> units_on

    def bucket(self, number: int) -> tuple:
        """The (device, category, class) with this number."""
        if len(self._buckets) != len(self._bucket_ids):
            self._buckets = list(self._bucket_ids)  # numbered in order of first sight
        return self._buckets[number]

    def upto(self, day_ord: int) -> int:
        """Number of entries dated on or before the ordinal ``day_ord``."""
        return bisect_right(self.ords, day_ord)

    def rows(self, unit: str, conditions: str, hand: bool, first: int = 0) -> tuple[list, list, list, tuple]:
        """Creditable work of one kind, by date: (entry indexes, amounts, bucket of each row,
        the buckets seen), where a bucket is the number of a (device, category, class),
        see ``bucket``.

        Covers at least the entries from index ``first`` on; older entries are
        read only when a caller asks for them.
        """
        key = (unit, conditions, hand)
        cached = self._rows.get(key)
        if cached is None or first < cached[0]:
            done = len(self.entries) if cached is None else cached[0]
            idxs, amounts = self._units_range(unit, conditions, hand, first, done)
            covered = bisect_left(idxs, self._cols_from)  # rows before this one are not in the columns
            ids = self._bucket_ids
            buckets = [ids.setdefault(k, len(ids)) for k in map(_BUCKET, map(self.entries.__getitem__, idxs[:covered]))]
            buckets.extend(map(self._cols["bucket"].__getitem__, idxs[covered:]))
            if cached is not None:
                idxs.extend(cached[1])
                amounts.extend(cached[2])
                buckets.extend(cached[3])
            cached = self._rows[key] = (first, idxs, amounts, buckets, tuple(dict.fromkeys(buckets)))
        return cached[1:]

    def _columns(self, lo: int) -> dict[str, list]:
        """The entry fields the engine counts, one list per field (plus ``named``, ``condition``
        and ``bucket``), filled in for at least the entries from index ``lo`` on.

        Reading each entry once into flat lists keeps the per-unit passes cheap.
        """
        cols = self._cols
        done = self._cols_from
        if lo < done:
            fields = [cols[name] for name in _ROW_FIELDS]
            entries = self.entries
            for start in range(lo, done, _CHUNK):  # in chunks: few objects alive at once
                stop = min(start + _CHUNK, done)
                for column, values in zip(fields, zip(*map(_ROW, entries[start:stop]))):
                    column[start:stop] = values
            named = [bool(sp or ins) for sp, ins in zip(cols["safety_pilot"][lo:done], cols["instructor"][lo:done])]
            cols["named"][lo:done] = named
            cols["condition"][lo:done] = map(
                _condition_of,
                cols["device"][lo:done],
                cols["conditions"][lo:done],
                cols["instrument_actual_hours"][lo:done],
                cols["instrument_simulated_hours"][lo:done],
                named,
            )
            ids = self._bucket_ids
            cols["bucket"][lo:done] = [
                ids.setdefault(k, len(ids))
                for k in zip(cols["device"][lo:done], cols["category"][lo:done], cols["aircraft_class"][lo:done])
            ]
            cols["actual_units"][lo:done] = map(round, map(mul, cols["instrument_actual_hours"][lo:done], repeat(100)))
            cols["simulated_units"][lo:done] = map(round, map(mul, cols["instrument_simulated_hours"][lo:done], repeat(100)))
            self._cols_from = lo
        return cols

    def _flat_approaches(self, lo: int, hi: int) -> tuple[list, ...]:
        """The approaches of entries lo..hi-1: (entries with approaches, offset of each entry's first
        approach (and one past the last), then per approach: its entry, type and airfield logged,
        coupled, conditions)."""
        approaches = self._cols["approaches"]
        holders = list(compress(range(lo, hi), approaches[lo:hi]))
        tuples = list(map(approaches.__getitem__, holders))
        offsets = [0]
        offsets.extend(accumulate(map(len, tuples)))
        owner = list(chain.from_iterable(map(repeat, holders, map(len, tuples))))
        flat = list(chain.from_iterable(tuples))
        types, fields, coupled, conditions = _fields(flat, ("type", "airfield", "coupled", "conditions"))
        logged = [bool(t and f) for t, f in zip(types, fields)]
        return holders, offsets, owner, logged, coupled, conditions

    def _units_range(self, unit: str, conditions: str, hand: bool, lo: int, hi: int) -> tuple[list, list]:
        """(entry indexes, amounts) of the entries lo..hi-1 with creditable work of one kind
        (as ``units_on``; hours in hundredths)."""
        span = range(lo, hi)
        attr = _SIMPLE_UNITS.get(unit)
        if attr is not None and conditions == r.CONDITIONS_ANY and lo < self._cols_from:
            # one field: read it directly rather than fill in every column (evaluate's long look-backs)
            values = list(map(attrgetter(attr), self.entries[lo:hi]))
            keep = list(compress(span, values))
            amounts = [1] * len(keep) if attr == "course_tracking" else [values[i - lo] for i in keep]
            return keep, amounts
        cols = self._columns(lo)
        if attr is not None:
            values = cols[attr]
            keep = compress(span, values[lo:hi])
            if conditions == r.CONDITIONS_ANY:
                keep = list(keep)
            else:
                condition = cols["condition"]
                if conditions == r.CONDITIONS_ACTUAL:
                    keep = [i for i in keep if values[i] > 0 and condition[i][0] == "actual"]
                else:
                    keep = [i for i in keep if values[i] > 0 and condition[i][0] is not None]
            amounts = [1] * len(keep) if attr == "course_tracking" else list(map(values.__getitem__, keep))
            return keep, amounts
        if unit in r.HOUR_UNITS:
            actual = cols["actual_units"][lo:hi]
            device = cols["device"][lo:hi]
            if unit == r.ACTUAL_INSTRUMENT_HOURS or conditions == r.CONDITIONS_ACTUAL:
                units = [a if d == "aircraft" else 0 for a, d in zip(actual, device)]
            elif conditions == r.CONDITIONS_ANY:
                units = list(map(add, actual, cols["simulated_units"][lo:hi]))
            else:
                units = [
                    a + s if (named or d != "aircraft" or not s) else a
                    for a, s, d, named in zip(actual, cols["simulated_units"][lo:hi], device, cols["named"][lo:hi])
                ]
            logged_actual = cols["instrument_actual_hours"]
            logged_sim = cols["instrument_simulated_hours"]
            if unit == r.ACTUAL_INSTRUMENT_HOURS:
                keep = [i for i in compress(span, units) if logged_actual[i] > 0]
            else:
                keep = [i for i in compress(span, units) if logged_actual[i] > 0 or logged_sim[i] > 0]
            return keep, [units[i - lo] for i in keep]
        if unit == r.APPROACHES:
            # Every approach of the entries lo..hi-1 in one flat list (as _count_approaches judges them).
            flat = self._approaches.get((lo, hi))
            if flat is None:
                flat = self._approaches[(lo, hi)] = self._flat_approaches(lo, hi)
            holders, offsets, owner, logged, coupled, ap_conditions = flat
            credited = logged
            if hand:
                credited = [a and not c for a, c in zip(credited, coupled)]
            if conditions != r.CONDITIONS_ANY:
                device = cols["device"]
                named = cols["named"]
                condition = cols["condition"]
                how = [
                    condition[i][0] if device[i] != "aircraft" or c is None
                    else None if c == "simulated" and not named[i]
                    else c
                    for i, c in zip(owner, ap_conditions)
                ]
                if conditions == r.CONDITIONS_ACTUAL:
                    credited = [a and h == "actual" for a, h in zip(credited, how)]
                else:
                    credited = [a and h is not None for a, h in zip(credited, how)]
            running = [0]
            running.extend(accumulate(credited))
            at = list(map(running.__getitem__, offsets))
            counts = list(map(sub, islice(at, 1, None), at))  # credited approaches of each holder
            return list(compress(holders, counts)), list(compress(counts, counts))
        raise ValueError(f"unknown task unit {unit!r}")  # pragma: no cover - the loader refuses unknown units

    def checks(self) -> list[tuple[int, int]]:
        """(entry index, ordinal) of entries with any check."""
        return self._checks


_ROW_FIELDS = (
    "device",
    "category",
    "aircraft_class",
    "conditions",
    "approaches",
    "holds",
    "course_tracking",
    "instrument_actual_hours",
    "instrument_simulated_hours",
    "landings",
    "night_full_stop_landings",
    "partial_panel_approaches",
    "ua_nose_high",
    "ua_nose_low",
    "safety_pilot",
    "instructor",
)
_ROW = attrgetter(*_ROW_FIELDS)
_CHUNK = 512
_NOTHING = (0, ())  # units_on of an entry without any work of the unit
_HEAD = ("date", "id", "checks")
_BUCKET = attrgetter("device", "category", "aircraft_class")


def _fields(entries: list[Entry], names: tuple[str, ...]) -> list[list]:
    """One list per field in ``names``, reading each entry once."""
    getter = attrgetter(*names)
    out: list[list] = [[] for _ in names]
    for start in range(0, len(entries), _CHUNK):  # in chunks: few objects alive at once
        for column, values in zip(out, zip(*map(getter, entries[start:start + _CHUNK]))):
            column.extend(values)
    return out
# Worked out from the fields: a safety pilot or instructor is named; _instrument_condition;
# (device, category, class); instrument hours in hundredths (as _hundredths).
_DERIVED_FIELDS = ("named", "condition", "bucket", "actual_units", "simulated_units")

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


def _month_start(index: int) -> int:
    """Ordinal of the first day of the month with this ``month_index``."""
    v = _MONTH_START.get(index)
    if v is None:
        v = _MONTH_START[index] = first_of_month_index(index).toordinal()
    return v


_MONTH_START: dict[int, int] = {}


def _ends(window: Window, days: list[int]) -> list[int]:
    """``_end(window, d)`` for each ordinal of the ascending list ``days``.

    Days windows are plain arithmetic. The other windows are worked out a
    month of ``days`` at a time: calendar months end on the same day for the
    whole month; to the day, the day of the month is kept (clamped to the
    target month's last day).
    """
    if window.unit == DAYS:
        return list(map(add, days, repeat(window.length if window.inclusive else window.length - 1, len(days))))
    out: list[int] = []
    n = len(days)
    i = 0
    if window.unit == CALENDAR_MONTHS:
        while i < n:
            month = month_index(date.fromordinal(days[i]))
            j = bisect_left(days, _month_start(month + 1), i)
            out.extend(repeat(_month_start(month + window.length + 1) - 1, j - i))
            i = j
        return out
    months = window.length if window.unit == MONTHS_TO_THE_DAY else 12 * window.length
    early = 0 if window.inclusive else 1
    while i < n:
        month = month_index(date.fromordinal(days[i]))
        start = _month_start(month)
        following = _month_start(month + 1)
        j = bisect_left(days, following, i)
        target = _month_start(month + months)
        target_last = _month_start(month + months + 1) - target - 1  # last day of the target month, from 0
        if following - start - 1 <= target_last:  # every day of this month exists in the target month
            out.extend(map(add, days[i:j], repeat(target - start - early, j - i)))
        else:
            out.extend([target + (d - start if d - start < target_last else target_last) - early for d in days[i:j]])
        i = j
    return out


def clear_caches() -> None:
    """Forget memoised window arithmetic (for benchmarks)."""
    _END_CACHE.clear()
    _START_CACHE.clear()
    _MONTH_START.clear()


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
        self.ends = ends = _ends(window, days)
        self._endl_ext: list[int] | None = None
        self._day_ends: tuple[list[int], list[int]] | None = None
        self.prefix = prefix = [0]
        prefix.extend(accumulate(amounts))
        # endl[j]: last day the task is met using units up to group j
        # (the n-th most recent unit's credit end), or -1 if too few units.
        if need >= 1 and amounts and min(amounts) >= need:
            # Every row alone holds enough units: the n-th most recent unit is in the row itself.
            self.endl = ends
            return
        if need >= 1 and amounts and min(amounts) > 0:
            # Prefix sums rise strictly: the row holding the n-th most recent unit is found by
            # binary search (the row j with prefix[j] <= target < prefix[j + 1]).
            targets = list(map(sub, islice(prefix, 1, None), repeat(need)))
            too_few = bisect_left(targets, 0)
            ends_after = [-1]
            ends_after.extend(ends)  # ends_after[j + 1] == ends[j]
            endl = [-1] * too_few
            endl.extend(map(ends_after.__getitem__, map(partial(bisect_right, prefix), islice(targets, too_few, None))))
            self.endl = endl
            return
        endl = []
        append = endl.append
        limit = 0  # the n-th most recent row moves forward only: two pointers, no search
        for j in range(len(days)):
            target = prefix[j + 1] - need
            if target < 0:
                append(-1)
                continue
            while prefix[limit + 1] <= target:
                limit += 1
            append(ends[limit])
        self.endl = endl

    def tail_end(self, day: int) -> int:
        """Simple windows only: last day met if nothing after ``day`` is logged (-1: not met)."""
        last = bisect_right(self.days, day) - 1
        return self.endl[last] if last >= 0 else -1

    def _unique_day_ends(self) -> tuple[list[int], list[int]]:
        """Each day with work, and the tail end from that day (from the day's last row)."""
        if self._day_ends is None:
            d = self.days
            last = list(compress(range(len(d)), map(ne, d, chain(islice(d, 1, None), (_INF,)))))
            self._day_ends = (list(map(d.__getitem__, last)), list(map(self.endl.__getitem__, last)))
        return self._day_ends

    def tail_ends(self, days: list[int], position: dict[int, int] | None = None) -> list[int]:
        """``tail_end`` of each of the ascending ``days``.

        ``position`` (day -> index in ``days``) allows a quicker path when
        ``days`` includes every day with work between its first and last day:
        the value then changes only on those days and is repeated in between.
        """
        if position is not None and days:
            unique, values = self._unique_day_ends()
            a = bisect_left(unique, days[0])
            b = bisect_right(unique, days[-1])
            before = values[a - 1] if a else -1
            at = list(map(position.get, unique[a:b]))
            if None not in at:
                if not at:
                    return [before] * len(days)
                out = [before] * at[0]
                following = at[1:]
                following.append(len(days))
                out.extend(chain.from_iterable(map(repeat, values[a:b], map(sub, following, at))))
                return out
        ext = self._endl_ext
        if ext is None:
            ext = self._endl_ext = [-1]
            ext.extend(self.endl)
        return list(map(ext.__getitem__, map(partial(bisect_right, self.days), days)))

    def intervals(self) -> list[tuple[int, int]]:
        """Days on which the task is met (sorted, disjoint, inclusive ordinals)."""
        if self.simple:
            # From each day with work the task is met through its tail end, but no further
            # than the next such day (which takes over); touching pieces join.
            unique, values = self._unique_day_ends()
            following = unique[1:]
            following.append(_INF)
            ends = [v if v < f else f - 1 for v, f in zip(values, following)]
            met = list(map(ge, ends, unique))
            joins = [a and b and e == f - 1 for a, b, e, f in zip(met, islice(met, 1, None), ends, following)]
            joins.append(False)  # joins[k]: piece k runs on into piece k + 1
            firsts = [m and not j for m, j in zip(met, chain((False,), joins))]
            lasts = [m and not j for m, j in zip(met, joins)]
            return list(zip(compress(unique, firsts), compress(ends, lasts)))
        out: list[tuple[int, int]] = []
        starts = self.starts
        nexts = starts[1:]
        nexts.append(_INF)
        cs = ce = None
        for s, e, nx in zip(starts, self.endl, nexts):
            if e >= nx:  # the next row's day takes over
                e = nx - 1
            if e < s:
                continue
            if ce is not None and s <= ce + 1:
                if e > ce:
                    ce = e
            else:
                if ce is not None:
                    out.append((cs, ce))
                cs, ce = s, e
        if ce is not None:
            out.append((cs, ce))
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
        cat, cls = scope_filter(req, scope)
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
        rows = self.index.rows(task.unit, task.conditions, task.hand_flown_only, first)
        bucket = self.index.bucket
        chosen = tuple(
            n for n, k in zip(rows[3], map(bucket, rows[3]))
            if k[0] in task.devices and (self.cat is None or k[1] == self.cat) and (self.cls is None or k[2] == self.cls)
        )
        cache_key = (task.unit, task.conditions, task.hand_flown_only, chosen, lo, hi, window, task.minimum_units)
        cached = self.index.series_cache.get(cache_key)
        if cached is None:
            cached = self.index.series_cache[cache_key] = self._build_series(task, window, rows, chosen, lo, hi)
        return cached

    def _build_series(self, task: r.Task, window: Window, rows: tuple, chosen: tuple, lo: int, hi: int) -> _TaskSeries:
        idxs, amounts, buckets, seen = rows
        ords = self.index.ords
        # rows of entries dated lo..hi (entry indexes follow the dates)
        a = bisect_left(idxs, bisect_left(ords, lo))
        b = bisect_left(idxs, bisect_right(ords, hi))
        if not chosen or a >= b:
            return _TaskSeries(task, window, [], [], [], self.index.entries)
        idxs = idxs[a:b]
        amounts = amounts[a:b]
        if len(chosen) < len(seen):
            mask = list(map(frozenset(chosen).__contains__, buckets[a:b]))
            idxs = list(compress(idxs, mask))
            amounts = list(compress(amounts, mask))
        return _TaskSeries(task, window, list(map(ords.__getitem__, idxs)), amounts, idxs, self.index.entries)

    def _problems(self, first: int) -> list[tuple[int, str]]:
        """(entry index, reason) for work from entry ``first`` on that this requirement does not credit."""
        out: list[tuple[int, str]] = []
        tasks = {}
        for path in self.req.paths:
            for task in path.tasks:
                tasks.setdefault((task.unit, task.conditions, task.hand_flown_only), set()).update(task.devices)
        others = {s.split("/", 1)[0] for s in self.covered_scopes}
        entries = self.index.entries
        # units_on of an entry is the same for every requirement and scope: worked out once per index
        judged = [(key, devices, self.index.units_memo.setdefault(key, {})) for key, devices in tasks.items()]
        for i in range(first, self.limit):
            e = entries[i]
            for (unit, conditions, hand), devices, memo in judged:
                if e.device not in devices:
                    continue
                found = memo.get(i)
                if found is None:
                    found = memo[i] = units_on(e, unit, conditions, hand) if _may_have(e, unit) else _NOTHING
                amount, problems = found
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
                if s.starts is not s.days:
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

    def _projected_ends(self, days: list[int]) -> list[int]:
        """``_projected_end`` of each of the ascending ``days``, all inside one period.

        With simple windows every path's projected end is a lookup per task
        (``tail_ends``), and the spans are merged for all days at once: spans
        of paths in force on the day (and of the check covering it) all start
        on the day, so the merged end is their maximum; spans of paths that
        come into force later join in order of their first day if they touch.
        """
        if not all(simple and series for (_path, series), (_lo, _hi, simple) in zip(self.paths, self._path_bounds)):
            return [self._projected_end(day) for day in days]
        n = len(days)
        columns = [days]
        later: list[tuple[int, int, list[int]]] = []  # (first day in force, split, ends) of paths not yet in force
        position = dict(zip(days, range(n)))
        for (_path, series), (lo, hi, _simple) in zip(self.paths, self._path_bounds):
            if hi < days[0]:
                continue  # no longer in force: its spans end before they start
            ends = series[0].tail_ends(days, position)
            for s in series[1:]:
                ends = [x if x < y else y for x, y in zip(ends, s.tail_ends(days, position))]
            if hi < _INF:
                ends = [x if x < hi else hi for x in ends]
            split = bisect_left(days, lo) if lo > -_INF else 0  # days[:split] are before the path is in force
            if split:
                later.append((lo, split, ends[:split]))
                ends = [-_INF] * split + ends[split:]
            columns.append(ends)
        if self.checks:
            reach = [-_INF]
            reach.extend(self._check_reach)
            columns.append(list(map(reach.__getitem__, map(partial(bisect_right, self._check_days), days))))
        merged = columns[0]
        for column in columns[1:]:
            merged = [x if x > y else y for x, y in zip(merged, column)]
        if merged is days:
            merged = list(days)
        for lo, split, ends in sorted(later, key=lambda t: t[0]):
            merged[:split] = [e if lo <= m + 1 and e > m else m for m, e in zip(merged[:split], ends)]
        return merged

    def changes(self, lo: int, hi: int) -> list[StateChange]:
        """The stand (viewed from each day, as ``stand(day, project=True)``) on each day from ``lo``
        through ``hi`` on which it differs from the day before; the first is on ``lo``.

        Outside periods of currency the stand changes only where a period starts
        or ends or a grace stage ends; inside a period only where work or a check
        is dated (or starts counting), so only those days are looked at, and
        inside a period the projected ends of all those days are worked out at once.
        """
        candidates = {lo}
        candidates.update(self.unit_days())
        for s, e in self.periods:
            candidates.add(s)
            candidates.add(e + 1)
            g = self._grace_end(e)
            if g is not None:
                candidates.add(g + 1)
        days = sorted(candidates)
        days = days[bisect_left(days, lo):bisect_right(days, hi)]
        out: list[StateChange] = []
        previous = None
        fromordinal = date.fromordinal

        def outside(days: list[int]) -> None:
            nonlocal previous
            for day in days:
                stand = self.stand(day, project=True)
                if stand != previous:
                    state, through, regain_by, regain_with = stand
                    out.append(StateChange(fromordinal(day), state, _from_ord(through), _from_ord(regain_by), regain_with))
                    previous = stand

        done = 0
        for s, e in self.periods:
            if e < lo or s > hi:
                continue
            first = bisect_left(days, s if s > lo else lo)
            last = bisect_right(days, e)
            outside(days[done:first])
            inside = days[first:last]
            ends = self._projected_ends(inside)
            steps = [] if previous == (CURRENT, ends[0], None, None) else [0]
            steps.extend(compress(range(1, len(ends)), map(ne, ends[1:], ends)))
            n = len(steps)
            out.extend(map(
                StateChange,
                map(fromordinal, map(inside.__getitem__, steps)),
                repeat(CURRENT, n),
                map(fromordinal, map(ends.__getitem__, steps)),
                repeat(None, n),
                repeat(None, n),
            ))
            previous = (CURRENT, ends[-1], None, None)
            done = last
        outside(days[done:])
        return out

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
    cat = scope_filter(req, scope)[0]
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
    index = _Index(_merge(logbook, planned), as_of)
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
    index = _Index(_merge(logbook, planned), end)
    limit = len(index.entries)
    lo, hi = start.toordinal(), end.toordinal()
    out = []
    for rs, req, scope, scopes in _instances(logbook, rule_sets):
        judged = _Judged(rs, req, scope, index, limit, scopes)
        changes = tuple(judged.changes(lo, hi))
        out.append(RequirementTimeline(rs.id, req.id, scope, req.title, req.citation, changes))
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
