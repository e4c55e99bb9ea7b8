"""Advised personal minimums for today from a baseline and recent practice (issue 5 point 7).

Follows the FAA personal-minimums material [hb]: FAA-H-8083-9 Aviation
Instructor's Handbook, personal minimums checklist (and FAA-H-8083-2): the
pilot sets baseline minimums and raises them when a risk factor applies -
by at least 500 ft of ceiling and 1/2 SM of visibility per factor. Advisory
only; the pilot in command decides (``planner.CAUTION``).

Risk factors and thresholds here are a **product choice** (no regulation
sets them); each adjustment carries its reason and source:

* no instrument approach in the last 30 days: +500 ft, +1/2 SM;
* fewer than 6 approaches in the last 90 days: +500 ft, +1/2 SM; with none
  at all in 90 days also the crosswind limit is lowered by 5 kt;
* no approach flown to minimums in the last 90 days: +500 ft, +1/2 SM;
* no actual instrument time in the last 90 days (only simulated or device
  time): +500 ft, +1/2 SM;
* no partial-panel or no unusual-attitude practice in the last 90 days:
  +500 ft, +1/2 SM (one factor for the pair).

The advice is never less conservative than the baseline: ceiling and
visibility never lower, crosswind never higher.

Windows: "the last N days" means the N days ending on and including
``as_of`` (a local date); entries after ``as_of`` are ignored.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date, timedelta

from planner.core.logbook import Entry

HANDBOOK = "[hb] FAA-H-8083-9 Aviation Instructor's Handbook, personal minimums checklist"
CEILING_STEP_FT = 500
VISIBILITY_STEP_SM = 0.5
CROSSWIND_STEP_KT = 5.0
# product choice thresholds
RECENT_DAYS = 30
WINDOW_DAYS = 90
MIN_APPROACHES_90 = 6


@dataclass(frozen=True)
class Minimums:
    """Personal minimums: ceiling feet AGL, visibility SM, maximum crosswind component knots."""

    ceiling_ft: int
    visibility_sm: float
    crosswind_kt: float

    def __post_init__(self) -> None:
        for name in ("ceiling_ft", "visibility_sm", "crosswind_kt"):
            if getattr(self, name) < 0:
                raise ValueError(f"{name} must not be negative")


@dataclass(frozen=True)
class Recency:
    """Recent instrument practice as of a date (see ``recency_from``).

    ``days_since_*`` are None when nothing is on record. Hours are decimal.
    """

    as_of: date
    approaches_30d: int
    approaches_90d: int
    days_since_approach_to_minimums: int | None
    actual_hours_90d: float
    simulated_hours_90d: float
    device_hours_90d: float
    days_since_partial_panel: int | None
    days_since_unusual_attitudes: int | None

    @property
    def instrument_hours_90d(self) -> float:
        return self.actual_hours_90d + self.simulated_hours_90d + self.device_hours_90d


@dataclass(frozen=True)
class Adjustment:
    """One risk factor and what it adds (ceiling, visibility) or removes (crosswind)."""

    factor: str  # stable key, e.g. "no-approach-30d"
    reason: str
    ceiling_ft: int
    visibility_sm: float
    crosswind_kt: float  # reduction of the crosswind limit, >= 0
    source: str


@dataclass(frozen=True)
class Advice:
    """Baseline, advised minimums for today and every adjustment that led there."""

    as_of: date
    baseline: Minimums
    advised: Minimums
    adjustments: tuple[Adjustment, ...]

    @property
    def is_raised(self) -> bool:
        return bool(self.adjustments)


def _stale(days: int | None) -> bool:
    return days is None or days >= WINDOW_DAYS  # day 0 is as_of; the window holds days 0..89


def _since(days: int | None) -> str:
    return "none on record" if days is None else f"last {days} days ago"


def advise(baseline: Minimums, recency: Recency) -> Advice:
    """Advised minimums for ``recency.as_of``: baseline plus one step per applying risk factor."""
    src = f"{HANDBOOK}; threshold: product choice"
    adjustments: list[Adjustment] = []

    def add(factor: str, reason: str, crosswind: float = 0.0) -> None:
        adjustments.append(Adjustment(factor, reason, CEILING_STEP_FT, VISIBILITY_STEP_SM, crosswind, src))

    if recency.approaches_30d == 0:
        add("no-approach-30d", f"no instrument approach in the last {RECENT_DAYS} days")
    if recency.approaches_90d < MIN_APPROACHES_90:
        none = recency.approaches_90d == 0
        add("few-approaches-90d",
            f"{recency.approaches_90d} instrument approaches in the last {WINDOW_DAYS} days (fewer than "
            f"{MIN_APPROACHES_90})" + ("; crosswind limit lowered as well" if none else ""),
            CROSSWIND_STEP_KT if none else 0.0)
    if _stale(recency.days_since_approach_to_minimums):
        add("no-approach-to-minimums-90d",
            f"no approach flown to minimums in the last {WINDOW_DAYS} days "
            f"({_since(recency.days_since_approach_to_minimums)})")
    if recency.actual_hours_90d <= 0:
        add("no-actual-90d",
            f"no actual instrument time in the last {WINDOW_DAYS} days (simulated "
            f"{recency.simulated_hours_90d:g} h, device {recency.device_hours_90d:g} h)")
    if _stale(recency.days_since_partial_panel) or _stale(recency.days_since_unusual_attitudes):
        parts = []
        if _stale(recency.days_since_partial_panel):
            parts.append(f"partial panel {_since(recency.days_since_partial_panel)}")
        if _stale(recency.days_since_unusual_attitudes):
            parts.append(f"unusual attitudes {_since(recency.days_since_unusual_attitudes)}")
        add("no-emergency-practice-90d",
            f"no partial-panel or unusual-attitude practice in the last {WINDOW_DAYS} days ({'; '.join(parts)})")

    ceiling = baseline.ceiling_ft + sum(a.ceiling_ft for a in adjustments)
    visibility = baseline.visibility_sm + sum(a.visibility_sm for a in adjustments)
    crosswind = max(0.0, baseline.crosswind_kt - sum(a.crosswind_kt for a in adjustments))
    advised = Minimums(
        ceiling_ft=max(ceiling, baseline.ceiling_ft),
        visibility_sm=max(visibility, baseline.visibility_sm),
        crosswind_kt=min(crosswind, baseline.crosswind_kt),
    )
    return Advice(as_of=recency.as_of, baseline=baseline, advised=advised, adjustments=tuple(adjustments))


def recency_from(entries: Iterable[Entry], as_of: date) -> Recency:
    """Recency facts from core logbook entries up to and including ``as_of``.

    Approaches: every approach logged on an entry (``Entry.approach_count``,
    aircraft and training devices alike, creditable or not - this is about
    practice, not legal currency). Actual / simulated hours: instrument hours
    on aircraft entries; device hours: instrument hours (actual + simulated)
    on FFS/FTD/ATD entries. Partial panel: entries with partial-panel
    approaches; unusual attitudes: entries with nose-high or nose-low recoveries.
    """
    recent_start = as_of - timedelta(days=RECENT_DAYS - 1)
    window_start = as_of - timedelta(days=WINDOW_DAYS - 1)
    approaches_30 = approaches_90 = 0
    actual = simulated = device = 0.0
    last_minimums: date | None = None
    last_pp: date | None = None
    last_ua: date | None = None

    def latest(current: date | None, day: date) -> date:
        return day if current is None or day > current else current

    for e in entries:
        if e.date > as_of:
            continue
        if e.date >= window_start:
            approaches_90 += e.approach_count
            if e.date >= recent_start:
                approaches_30 += e.approach_count
            if e.device == "aircraft":
                actual += e.instrument_actual_hours
                simulated += e.instrument_simulated_hours
            else:
                device += e.instrument_actual_hours + e.instrument_simulated_hours
        if any(a.to_minimums for a in e.approaches):
            last_minimums = latest(last_minimums, e.date)
        if e.partial_panel_approaches > 0:
            last_pp = latest(last_pp, e.date)
        if e.ua_nose_high + e.ua_nose_low > 0:
            last_ua = latest(last_ua, e.date)

    def days(d: date | None) -> int | None:
        return None if d is None else (as_of - d).days

    return Recency(
        as_of=as_of,
        approaches_30d=approaches_30,
        approaches_90d=approaches_90,
        days_since_approach_to_minimums=days(last_minimums),
        actual_hours_90d=round(actual, 2),
        simulated_hours_90d=round(simulated, 2),
        device_hours_90d=round(device, 2),
        days_since_partial_panel=days(last_pp),
        days_since_unusual_attitudes=days(last_ua),
    )
