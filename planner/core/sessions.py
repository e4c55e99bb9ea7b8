"""Practice-session content: from a pilot's gaps to a concrete profile and briefing.

What goes in (sources):

* approaches, holding, course intercepting and tracking: the tasks of
  14 CFR 61.57(c); the mix (precision and non-precision, one missed approach,
  a partial-panel non-precision approach when that practice is due) follows the
  Instrument Rating ACS areas (instrument approach procedures; approach with
  loss of primary flight instrument indicators);
* hold entries: direct, teardrop and parallel (FAA Instrument Flying Handbook /
  AIM holding procedures); at least two different kinds whenever holding is
  flown;
* unusual-attitude recoveries, in the order of the FAA Instrument Flying
  Handbook: nose-high power, pitch, bank; nose-low power, bank, pitch (pulling
  while banked first only tightens a spiral); flown no lower than the practice
  floor (a setting; default 1,500 ft AGL after the Private Pilot ACS stall
  tasks);
* a briefing computed for the aircraft's practice speed with
  ``planner.core.turns``.

Minutes per item are the product's own estimates, labelled ``"product
estimate"``; no published source sets them. Every item names the gaps it
closes (``Gap.key``). Gaps a practice session under a view-limiting device
cannot close (checks, actual instrument time, night landings in a daylight
session) are listed in ``not_covered`` with the reason.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from planner.core import rules as r
from planner.core import turns
from planner.core.gaps import CHECK, Gap

ESTIMATE = "product estimate"
NOSE_HIGH_ORDER = ("power", "pitch", "bank")  # FAA Instrument Flying Handbook, unusual attitudes
NOSE_LOW_ORDER = ("power", "bank", "pitch")  # FAA Instrument Flying Handbook, unusual attitudes
HOLD_ENTRIES = ("direct", "teardrop", "parallel")  # FAA Instrument Flying Handbook; AIM 5-3-8
PRECISION = "precision (ILS or LPV to DA)"
NON_PRECISION = "non-precision (LNAV, VOR or LOC to MDA)"

# Minutes per item: product estimates.
MINUTES = {
    "depart": 15,
    "course": 8,
    "hold": 7,
    "unusual-attitude": 4,
    "approach": 12,
    "missed-approach": 4,
    "landing": 5,
    "return": 10,
}


@dataclass(frozen=True)
class SessionSettings:
    """Per pilot or school. ``practice_floor_ft_agl``: no unusual-attitude work below it."""

    practice_floor_ft_agl: int = 1500
    briefed_banks_deg: tuple[float, ...] = (30.0, 45.0)
    drift_rate_deg_s: float = 0.5
    include_unusual_attitudes: bool = False  # also when not due
    night: bool = False  # a session flown at night (night landings can be credited)


@dataclass(frozen=True)
class SessionItem:
    kind: str  # depart | course | hold | unusual-attitude | approach | landing | return
    title: str
    minutes: int
    closes: tuple[tuple, ...] = ()  # keys of the gaps this item works toward
    steps: tuple[str, ...] = ()
    source: str = ""
    minutes_basis: str = ESTIMATE


@dataclass(frozen=True)
class BankFigures:
    bank_deg: float
    load_factor: float
    stall_speed_increase_percent: float
    turn_radius_ft: float
    rate_of_turn_deg_s: float


@dataclass(frozen=True)
class Briefing:
    """Turn figures for ``tas_kt`` (knots true), from ``planner.core.turns``."""

    tas_kt: float
    standard_rate_bank_deg: float
    standard_rate_bank_15_percent_deg: float
    standard_rate_bank_tenth_plus_seven_deg: float
    standard_rate_radius_ft: float
    banks: tuple[BankFigures, ...]
    drift_rate_deg_s: float
    drift_seconds_to_30_deg: float
    threshold_drift_seconds_to_30_deg: float
    practice_floor_ft_agl: int
    notes: tuple[str, ...]


@dataclass(frozen=True)
class SessionPlan:
    items: tuple[SessionItem, ...]
    briefing: Briefing
    total_minutes: int
    not_covered: tuple[tuple[Gap, str], ...]
    minutes_basis: str = ESTIMATE

    @property
    def closed_keys(self) -> frozenset:
        return frozenset(k for item in self.items for k in item.closes)


def briefing(tas_kt: float, settings: SessionSettings = SessionSettings()) -> Briefing:
    """Turn figures for the practice speed ``tas_kt`` (knots true airspeed)."""
    std = turns.standard_rate_bank(tas_kt)
    banks = tuple(
        BankFigures(
            bank_deg=b,
            load_factor=turns.load_factor(b),
            stall_speed_increase_percent=turns.stall_speed_increase_percent(b),
            turn_radius_ft=turns.turn_radius_ft(tas_kt, b),
            rate_of_turn_deg_s=turns.rate_of_turn(tas_kt, b),
        )
        for b in settings.briefed_banks_deg
    )
    drift = turns.drift_seconds(settings.drift_rate_deg_s)
    threshold = turns.drift_seconds(turns.VESTIBULAR_THRESHOLD_DEG_S)
    notes = (
        f"Standard rate at {tas_kt:g} kt: about {std:.0f} deg of bank (15 % rule {0.15 * tas_kt:.0f} deg; "
        f"TAS/10+7 {tas_kt / 10 + 7:.0f} deg, common practice).",
        f"A bank creeping in at {settings.drift_rate_deg_s:g} deg/s reaches 30 deg in {drift:.0f} s without being "
        f"felt (threshold about {turns.VESTIBULAR_THRESHOLD_DEG_S:g} deg/s, Benson et al. 1989: 30 deg in "
        f"{threshold:.0f} s); a steady turn stops being felt within about 20 s (FAA IFH ch. 1). Cross-check.",
        f"Unusual-attitude work no lower than {settings.practice_floor_ft_agl:,} ft AGL "
        "(practice floor; Private Pilot ACS stall tasks use 1,500 ft AGL).",
    )
    return Briefing(
        tas_kt=tas_kt,
        standard_rate_bank_deg=std,
        standard_rate_bank_15_percent_deg=turns.standard_rate_bank_fifteen_percent(tas_kt),
        standard_rate_bank_tenth_plus_seven_deg=turns.standard_rate_bank_tenth_plus_seven(tas_kt),
        standard_rate_radius_ft=turns.turn_radius_ft(tas_kt, std),
        banks=banks,
        drift_rate_deg_s=settings.drift_rate_deg_s,
        drift_seconds_to_30_deg=drift,
        threshold_drift_seconds_to_30_deg=threshold,
        practice_floor_ft_agl=settings.practice_floor_ft_agl,
        notes=notes,
    )


def _needed(gaps: Sequence[Gap], unit: str) -> tuple[float, tuple]:
    """Amount of ``unit`` one session should fly: the chain of each requirement summed, the largest taken."""
    per_req: dict[tuple, float] = {}
    keys = []
    for g in gaps:
        if g.unit == unit:
            k = (g.rule_set, g.requirement, g.scope)
            per_req[k] = per_req.get(k, 0) + g.count
            keys.append(g.key)
    return (max(per_req.values()) if per_req else 0), tuple(keys)


def plan_session(gaps: Sequence[Gap], tas_kt: float, settings: SessionSettings = SessionSettings()) -> SessionPlan:
    """A practice profile that works toward ``gaps`` (one pilot's), briefed for ``tas_kt`` knots true.

    Items are in flying order; minutes are product estimates; ``not_covered``
    lists the gaps this kind of session cannot close, with the reason.
    """
    if settings.practice_floor_ft_agl <= 0:
        raise ValueError("practice_floor_ft_agl must be a positive height in feet")
    brief = briefing(tas_kt, settings)
    not_covered: list[tuple[Gap, str]] = []
    usable: list[Gap] = []
    for g in gaps:
        if g.unit == CHECK:
            kinds = " or ".join(g.check_kinds) or "a check"
            not_covered.append((g, f"only {kinds} with an authorised instructor or examiner restores this"))
        elif g.unit == r.ACTUAL_INSTRUMENT_HOURS:
            not_covered.append((g, "needs actual instrument conditions; a VMC session under a view-limiting device does not count"))
        elif g.unit == r.NIGHT_FULL_STOP_LANDINGS and not settings.night:
            not_covered.append((g, "needs full-stop landings at night (14 CFR 61.57(b)); this is a daylight session"))
        else:
            usable.append(g)

    items: list[SessionItem] = [
        SessionItem("depart", "Depart, climb to the practice area, briefing and view-limiting device on", MINUTES["depart"])
    ]
    course_n, course_keys = _needed(usable, r.COURSE_TRACKING)
    holds_n, hold_keys = _needed(usable, r.HOLDS)
    nh_n, nh_keys = _needed(usable, r.UA_NOSE_HIGH)
    nl_n, nl_keys = _needed(usable, r.UA_NOSE_LOW)
    appr_n, appr_keys = _needed(usable, r.APPROACHES)
    pp_n, pp_keys = _needed(usable, r.PARTIAL_PANEL_APPROACHES)
    land_n, land_keys = _needed(usable, r.LANDINGS)
    night_n, night_keys = _needed(usable, r.NIGHT_FULL_STOP_LANDINGS)
    hours_gaps = [g for g in usable if g.unit == r.INSTRUMENT_HOURS]

    if course_n:
        items.append(SessionItem(
            "course", "Intercept and track a course (VOR radial or GPS track) to the holding fix", MINUTES["course"],
            course_keys, source="14 CFR 61.57(c)(1)",
        ))
    if holds_n:
        n = max(int(holds_n), 2)
        for i in range(n):
            entry = HOLD_ENTRIES[i % len(HOLD_ENTRIES)]
            items.append(SessionItem(
                "hold", f"Hold with a {entry} entry, one full circuit", MINUTES["hold"], hold_keys,
                source="14 CFR 61.57(c)(1); FAA Instrument Flying Handbook, holding entries",
            ))
    if nh_n or nl_n or settings.include_unusual_attitudes:
        floor = f"recover no lower than {settings.practice_floor_ft_agl:,} ft AGL"
        for _ in range(max(int(nh_n), 1)):
            items.append(SessionItem(
                "unusual-attitude", "Unusual attitude, nose high (climbing, airspeed decreasing)", MINUTES["unusual-attitude"],
                nh_keys, steps=NOSE_HIGH_ORDER + (floor,),
                source="FAA Instrument Flying Handbook, unusual attitudes; Instrument Rating ACS",
            ))
        for _ in range(max(int(nl_n), 1)):
            items.append(SessionItem(
                "unusual-attitude", "Unusual attitude, nose low (descending, airspeed increasing)", MINUTES["unusual-attitude"],
                nl_keys, steps=NOSE_LOW_ORDER + (floor,),
                source="FAA Instrument Flying Handbook, unusual attitudes; Instrument Rating ACS",
            ))
    if appr_n or pp_n:
        n = max(int(appr_n), int(pp_n) + 1, 2)
        pp_left = int(pp_n)
        for i in range(n):
            precision = i % 2 == 0
            closes = list(appr_keys)
            title = f"Approach {i + 1}: {PRECISION if precision else NON_PRECISION}, flown by hand"
            source = "14 CFR 61.57(c)(1); Instrument Rating ACS, instrument approach procedures"
            steps: tuple[str, ...] = ()
            if not precision and pp_left:
                title += ", partial panel (attitude and heading indicators covered)"
                closes += list(pp_keys)
                source = "Instrument Rating ACS, approach with loss of primary flight instrument indicators"
                steps = ("timed turns on the turn coordinator", "magnetic compass for heading")
                pp_left -= 1
            minutes = MINUTES["approach"]
            if i == 0:
                title += ", then the published missed approach"
                minutes += MINUTES["missed-approach"]
            items.append(SessionItem("approach", title, minutes, tuple(closes), steps=steps, source=source))
        while pp_left:  # more partial-panel approaches than approaches: add non-precision ones
            items.append(SessionItem(
                "approach", f"Approach: {NON_PRECISION}, partial panel", MINUTES["approach"], tuple(appr_keys + pp_keys),
                source="Instrument Rating ACS, approach with loss of primary flight instrument indicators",
            ))
            pp_left -= 1
    if land_n or night_n:
        n = int(max(land_n, night_n))
        items.append(SessionItem(
            "landing", f"{n} takeoffs and landings" + (" to a full stop, at night" if night_n else ""),
            MINUTES["landing"] * n, land_keys + night_keys, source="14 CFR 61.57(a), (b)",
        ))
    items.append(SessionItem("return", "Device off, return and land", MINUTES["return"]))

    instrument_minutes = sum(i.minutes for i in items if i.kind not in ("depart", "return", "landing"))
    for g in hours_gaps:
        if instrument_minutes / 60 >= g.count:
            # the session as a whole logs the time; the first instrument item carries the key
            first = next(k for k, i in enumerate(items) if i.kind not in ("depart",))
            it = items[first]
            items[first] = SessionItem(it.kind, it.title, it.minutes, it.closes + (g.key,), it.steps, it.source)
        else:
            not_covered.append((g, f"needs {g.count:g} h of instrument time; this profile gives about {instrument_minutes / 60:.1f} h"))
    return SessionPlan(
        items=tuple(items),
        briefing=brief,
        total_minutes=sum(i.minutes for i in items),
        not_covered=tuple(not_covered),
    )
