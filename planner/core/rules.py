"""Rule sets as value objects: what a regulator (or a personal target) requires.

A rule set is a list of requirements. A requirement is met on a day when

* one of its **paths** (alternative ways of meeting it, each in force between
  optional dates) has all of its **tasks** (counted units such as approaches,
  holds or landings) within the path's window, or
* a **check** (IPC, flight review, proficiency check ...) still covers the day.

Once a period of currency ends, the requirement's **regain** policy says what
restores it: tasks at any time (``"tasks"``), tasks only within a grace window
after the end and a check afterwards (14 CFR 61.57(d)), or only a check
(``"check"``). Before the first period of currency in the records, tasks
establish currency.

These objects are built by ``planner.rulesets`` from TOML files; the core never
reads files.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date

from planner.core.logbook import DEVICES
from planner.core.windows import Window

# Counted task units and what they count on an entry.
APPROACHES = "approaches"
HOLDS = "holds"
COURSE_TRACKING = "course-tracking"  # entries with course intercepting and tracking
INSTRUMENT_HOURS = "instrument-hours"  # actual + simulated (hours)
ACTUAL_INSTRUMENT_HOURS = "actual-instrument-hours"  # hours, aircraft only
LANDINGS = "landings"  # takeoffs are taken to equal landings (common practice)
NIGHT_FULL_STOP_LANDINGS = "night-full-stop-landings"
PARTIAL_PANEL_APPROACHES = "partial-panel-approaches"
UA_NOSE_HIGH = "ua-nose-high"
UA_NOSE_LOW = "ua-nose-low"
TASK_UNITS = (
    APPROACHES,
    HOLDS,
    COURSE_TRACKING,
    INSTRUMENT_HOURS,
    ACTUAL_INSTRUMENT_HOURS,
    LANDINGS,
    NIGHT_FULL_STOP_LANDINGS,
    PARTIAL_PANEL_APPROACHES,
    UA_NOSE_HIGH,
    UA_NOSE_LOW,
)
HOUR_UNITS = (INSTRUMENT_HOURS, ACTUAL_INSTRUMENT_HOURS)

# How an amount of each counted unit reads (singular, plural), in the words of 14 CFR 61.57.
_UNIT_WORDS = {
    APPROACHES: ("approach", "approaches"),
    HOLDS: ("holding procedure", "holding procedures"),
    LANDINGS: ("landing", "landings"),
    NIGHT_FULL_STOP_LANDINGS: ("night full-stop landing", "night full-stop landings"),
    PARTIAL_PANEL_APPROACHES: ("partial-panel approach", "partial-panel approaches"),
    UA_NOSE_HIGH: ("nose-high recovery", "nose-high recoveries"),
    UA_NOSE_LOW: ("nose-low recovery", "nose-low recoveries"),
}


def amount_words(unit: str, amount: float) -> str:
    """An amount of a task unit as words: '2 approaches', '1 holding procedure', '1.5 h of instrument time'.

    Hour units take decimal hours; course tracking reads the same whatever the amount.
    """
    if unit == COURSE_TRACKING:
        return "intercepting and tracking courses"
    if unit in HOUR_UNITS:
        label = "actual instrument time" if unit == ACTUAL_INSTRUMENT_HOURS else "instrument time"
        return f"{amount:g} h of {label}"
    singular, plural = _UNIT_WORDS.get(unit, (unit, unit))
    return f"{amount:g} {singular if amount == 1 else plural}"
# Units that are instrument work: in an aircraft they need actual conditions, or
# simulated conditions with a safety pilot or instructor named.
INSTRUMENT_UNITS = (APPROACHES, HOLDS, COURSE_TRACKING, INSTRUMENT_HOURS, PARTIAL_PANEL_APPROACHES)

# Which entries a task looks at, by the conditions the work was flown in.
CONDITIONS_INSTRUMENT = "instrument"  # actual, or simulated with a safety pilot/instructor; any device
CONDITIONS_ACTUAL = "actual"  # actual instrument conditions in an aircraft
CONDITIONS_ANY = "any"  # no condition (practice, landings)
TASK_CONDITIONS = (CONDITIONS_INSTRUMENT, CONDITIONS_ACTUAL, CONDITIONS_ANY)

# One requirement status per ...
SCOPE_PILOT = "pilot"
SCOPE_CATEGORY = "category"  # aircraft category the pilot holds
SCOPE_INSTRUMENT_CATEGORY = "instrument-category"  # category of each instrument rating held
SCOPE_CATEGORY_CLASS = "category-class"  # category and class held
SCOPES = (SCOPE_PILOT, SCOPE_CATEGORY, SCOPE_INSTRUMENT_CATEGORY, SCOPE_CATEGORY_CLASS)

REGAIN_TASKS = "tasks"  # tasks restore currency at any time
REGAIN_CHECK = "check"  # once a period has ended only a check restores it
REGAIN_GRACE = "grace"  # tasks within ``grace`` after the end, then only a check
REGAIN_POLICIES = (REGAIN_TASKS, REGAIN_CHECK, REGAIN_GRACE)


def _in_force(start: date | None, until: date | None, day: date) -> bool:
    return (start is None or start <= day) and (until is None or day <= until)


@dataclass(frozen=True)
class Task:
    """At least ``minimum`` units of ``unit`` (hours for hour units) within the window."""

    unit: str
    minimum: float
    devices: tuple[str, ...] = DEVICES
    conditions: str = CONDITIONS_ANY
    hand_flown_only: bool = False  # approaches: exclude autopilot-coupled ones
    entries_from: date | None = None  # only entries dated on/after
    entries_until: date | None = None  # only entries dated on/before

    @property
    def minimum_units(self) -> int:
        """The minimum in counting units (hundredths of an hour for hour units)."""
        if self.unit in HOUR_UNITS:
            return round(self.minimum * 100)
        return int(self.minimum)


@dataclass(frozen=True)
class Path:
    """One way of meeting a requirement: every task within one window."""

    id: str
    window: Window
    tasks: tuple[Task, ...]
    effective_from: date | None = None  # the path judges days on/after this date
    effective_until: date | None = None  # ... and on/before this one
    citation: str = ""
    basis: str = ""  # e.g. "from memory"

    def is_in_force(self, day: date) -> bool:
        return _in_force(self.effective_from, self.effective_until, day)


@dataclass(frozen=True)
class CheckRule:
    """A check of one of ``kinds`` meets the requirement from its date for ``window``.

    With ``early_renewal``, a check within that span before the current expiry
    extends validity from the old expiry (the anniversary is kept), not from the
    check date. The rule in force on the date of the check applies.
    """

    kinds: tuple[str, ...]
    window: Window
    early_renewal: Window | None = None
    same_category: bool = True  # for category scopes: the check was in that category
    effective_from: date | None = None
    effective_until: date | None = None
    citation: str = ""
    basis: str = ""

    def is_in_force(self, day: date) -> bool:
        return _in_force(self.effective_from, self.effective_until, day)


@dataclass(frozen=True)
class Requirement:
    """One requirement of a rule set, e.g. 14 CFR 61.57(c) instrument experience."""

    id: str
    title: str
    citation: str
    scope: str = SCOPE_PILOT
    paths: tuple[Path, ...] = ()
    checks: tuple[CheckRule, ...] = ()
    regain: str = REGAIN_TASKS
    grace: Window | None = None  # for REGAIN_GRACE: how long after the end tasks still restore
    not_required_with_instrument_rating: bool = False  # e.g. EASA FCL.060(b)(2) night passengers
    basis: str = ""
    notes: str = ""

    @property
    def check_kinds(self) -> tuple[str, ...]:
        kinds: list[str] = []
        for rule in self.checks:
            kinds.extend(k for k in rule.kinds if k not in kinds)
        return tuple(kinds)


@dataclass(frozen=True)
class RuleSet:
    """A named list of requirements (one regulator, or the product's practice targets)."""

    id: str
    title: str
    requirements: tuple[Requirement, ...]
    regulator: str = ""
    notes: str = ""
    check_kinds: tuple[str, ...] = field(default=())  # rule-set-defined kinds of check
