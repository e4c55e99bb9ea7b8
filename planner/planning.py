"""Use cases for practice planning (issue 5): propose, store, accept, move and cancel sessions.

Builds the scheduler's ``Problem`` from the database and the pure core:

* needs: each pilot's gaps (``core.gaps.find_gaps`` with their rule sets);
  gaps a practice session under a view-limiting device cannot close (checks,
  actual instrument time, night landings in daylight) are kept aside as
  ``NotPlannable`` with the reason from ``core.sessions.plan_session``;
* people: everyone of the school holding a pilot certificate (possible safety
  pilots included), with ratings and medical / BasicMed dates;
* candidate slots: 2-hour slots starting on each full hour 07:00-17:00 local
  at the school's home airfield (to 20:00 when a pilot of the school allows
  night practice and the plan is not daylight-only); daylight from
  ``core.sun`` (sunrise to sunset, sea-level horizon: the conservative choice
  at a high airfield); VMC likelihood from pasted or imported METAR/TAF text
  for the airfield where the reports cover the slot, else from the
  climatology of ``<observations_dir>/<ident>.csv`` if that file exists
  (loaded once per file and minimums), otherwise unknown; the practice
  minimums (default ceiling 3,000 ft, visibility 5 SM) decide;
* night: a pilot's ``night_practice`` setting lets the scheduler place them
  after sunset; a night session's explanation says whether its closing
  full-stop landings count toward night landing currency (14 CFR 61.57(b));
* availability windows of people and aircraft; active sessions already in the
  database as bookings; the who-flew-for-whom balance from accepted and flown
  sessions (no separate counter).

Like ``planner.services``, nothing here commits.
"""

from __future__ import annotations

import dataclasses
import hashlib
import secrets
import uuid
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import UTC, date, datetime, time, timedelta
from functools import lru_cache
from pathlib import Path
from typing import Any
from zoneinfo import ZoneInfo

from sqlalchemy.orm import Session

from planner import services
from planner.config import REPO_ROOT
from planner.core import gaps as core_gaps
from planner.core import rules as r
from planner.core import currency, scheduling, sessions, sun, weather
from planner.core import logbook as core_logbook
from planner.db import models, practice, repository
from planner.db.practice import SessionConflict, SessionRejected

__all__ = [
    "NotPlannable",
    "WeatherRejected",
    "Proposal",
    "SessionConflict",
    "SessionRejected",
    "accept_session",
    "balance",
    "cancel_session",
    "create_feed_token",
    "draft_entry",
    "feed_person",
    "mark_flown",
    "revoke_feed_tokens",
    "list_schools",
    "move_session",
    "pilot_calendar_for",
    "practice_minimums",
    "propose_sessions",
    "read_reports",
    "save_proposals",
]

DEFAULT_OBSERVATIONS = REPO_ROOT / "seed_demo" / "observations"
SLOT_HOURS = 2
FIRST_START = time(7, 0)
LAST_END = time(19, 0)
NIGHT_LAST_END = time(22, 0)  # evening slots when night practice is allowed: product choice
MAX_WEATHER_CHARS = 20_000  # pasted report text: plenty for a day of METARs and a few TAFs
MAX_MIN_CEILING_FT = 10_000
MAX_MIN_VISIBILITY_SM = 10.0
# Practice true airspeed by aircraft class for the briefing: product defaults (no aircraft data holds them).
PRACTICE_TAS_KT = {"single-engine-land": 100.0, "multi-engine-land": 140.0}
DEFAULT_TAS_KT = 100.0
Progress = services.Progress


class WeatherRejected(SessionRejected):
    """Pasted or imported METAR/TAF text cannot be read; the message starts with the line ("line 3: ...")."""


class MinimumsRejected(SessionRejected):
    """Practice minimums out of range; ``field`` is "ceiling_ft" or "visibility_sm"."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field = field


@dataclass(frozen=True)
class NotPlannable:
    """A gap a practice session cannot close (e.g. only an IPC restores it)."""

    person_id: int
    gap: core_gaps.Gap
    reason: str


@dataclass(frozen=True)
class Proposal:
    """What ``propose_sessions`` found: the scheduler's plan plus what it needs to be stored and shown.

    Scheduler ids: people are ``"<name> #<id>"``, aircraft their registration.
    ``leg_plans[(pilot flying id, safety pilot id)]`` is the content of that leg.
    """

    school_id: int
    airfield_id: int
    airfield_ident: str
    timezone: str
    start: date
    end: date
    plan: scheduling.SchedulePlan
    person_ids: dict[str, int]
    aircraft_ids: dict[str, int]
    gaps: dict[int, tuple[core_gaps.Gap, ...]]
    leg_plans: dict[tuple[str, str], sessions.SessionPlan]
    not_plannable: tuple[NotPlannable, ...]
    vmc_source: str
    minimums: weather.PracticeMinimums = weather.DEFAULT_MINIMUMS
    daylight_only: bool = False
    # (slot start, slot end) -> what decided the slot's VMC likelihood; session (start, end) -> night note
    vmc_basis: dict[tuple[datetime, datetime], weather.Likelihood] = dataclasses.field(default_factory=dict)
    night_notes: dict[tuple[datetime, datetime], str] = dataclasses.field(default_factory=dict)

    def weather_note(self, ps: scheduling.ProposedSession) -> str:
        """Which source decided the VMC likelihood of a proposed session's slot, in words."""
        basis = self.vmc_basis.get((ps.slot.start, ps.slot.end))
        return weather_words(basis) if basis is not None else "VMC likelihood unknown"

    def night_note(self, ps: scheduling.ProposedSession) -> str | None:
        return self.night_notes.get((ps.slot.start, ps.slot.end))


# ---------------------------------------------------------------- inputs


@lru_cache(maxsize=8)
def _climatology(path: str, mtime: float, tz_name: str,
                 minimums: weather.PracticeMinimums = weather.DEFAULT_MINIMUMS) -> weather.Climatology:
    text = Path(path).read_text(encoding="utf-8")
    return weather.climatology(weather.observations_from_csv(text), ZoneInfo(tz_name), minimums)


def climatology_for(ident: str, tz_name: str, observations_dir: Path | None,
                    minimums: weather.PracticeMinimums = weather.DEFAULT_MINIMUMS) -> weather.Climatology | None:
    """The airfield's climatology from ``<observations_dir>/<ident>.csv``, or None when there is no file."""
    if observations_dir is None:
        return None
    path = Path(observations_dir) / f"{ident}.csv"
    if not path.is_file():
        return None
    return _climatology(str(path), path.stat().st_mtime, tz_name, minimums)


def read_reports(text: str | None, *, now: datetime) -> tuple[weather.Metar | weather.Taf, ...]:
    """METAR/SPECI and TAF reports from pasted or imported text (empty text: none).

    ``now`` (aware) places the reports' day-of-month in a month. Raises
    ``WeatherRejected`` whose message starts with the line that cannot be
    read ("line 3: ..."), or says the text is too long.
    """
    if text is None or not text.strip():
        return ()
    if len(text) > MAX_WEATHER_CHARS:
        raise WeatherRejected(f"the report text has {len(text):,} characters; at most {MAX_WEATHER_CHARS:,}")
    try:
        return weather.parse_reports(text, now)
    except weather.WeatherParseError as exc:
        raise WeatherRejected(str(exc)) from None


def practice_minimums(ceiling_ft: Any = None, visibility_sm: Any = None) -> weather.PracticeMinimums:
    """The plan's practice minimums; None keeps the default (ceiling 3,000 ft, visibility 5 SM).

    Ceiling: whole feet 0..10,000; visibility: statute miles 0..10. Raises
    ``MinimumsRejected`` naming the field.
    """
    default = weather.DEFAULT_MINIMUMS
    try:
        ceiling = default.ceiling_ft if ceiling_ft is None else services.whole_number(ceiling_ft)
        if not 0 <= ceiling <= MAX_MIN_CEILING_FT:
            raise ValueError
    except (TypeError, ValueError, OverflowError):
        raise MinimumsRejected("ceiling_ft", f"the ceiling minimum is whole feet from 0 to {MAX_MIN_CEILING_FT:,}") from None
    try:
        vis = default.visibility_sm if visibility_sm is None else float(visibility_sm)
        if not 0 <= vis <= MAX_MIN_VISIBILITY_SM:  # also refuses NaN
            raise ValueError
    except (TypeError, ValueError, OverflowError):
        raise MinimumsRejected("visibility_sm", f"the visibility minimum is statute miles from 0 to {MAX_MIN_VISIBILITY_SM:g}") from None
    return weather.PracticeMinimums(ceiling_ft=ceiling, visibility_sm=vis)


def candidate_slots(
    airfield: models.Airfield, start: date, end: date, climatology: weather.Climatology | None, not_before: datetime,
    *, reports: Sequence[weather.Metar | weather.Taf] = (),
    minimums: weather.PracticeMinimums = weather.DEFAULT_MINIMUMS, last_end: time = LAST_END,
) -> tuple[list[scheduling.SlotInfo], dict[tuple[datetime, datetime], weather.Likelihood]]:
    """2-hour slots on each full hour from 07:00 (last ending ``last_end``) local, ``start``..``end`` inclusive.

    Returns the slots and, per (start, end), what decided its VMC likelihood
    (``reports`` must all be for the airfield).
    """
    tz = ZoneInfo(airfield.timezone)
    out = []
    basis: dict[tuple[datetime, datetime], weather.Likelihood] = {}
    day = start
    while day <= end:
        sky = sun.sun_times(airfield.latitude, airfield.longitude, day, tz)
        t = datetime.combine(day, FIRST_START, tz)
        last = datetime.combine(day, last_end, tz)
        while t + timedelta(hours=SLOT_HOURS) <= last:
            s, e = t, t + timedelta(hours=SLOT_HOURS)
            if s >= not_before:
                likelihood = weather.vmc_likelihood(s, e, tz, reports, climatology, minimums)
                basis[(s, e)] = likelihood
                out.append(scheduling.SlotInfo(s, e, airfield.ident, sun.is_daylight(sky, s, e), likelihood.value))
            t += timedelta(hours=1)
        day += timedelta(days=1)
    return out, basis


def source_kind(likelihood: weather.Likelihood) -> str:
    """"report text", "climatology" or "unknown": what decided a slot's VMC likelihood."""
    if likelihood.value is None:
        return "unknown"
    return "report text" if likelihood.from_reports else "climatology"


def weather_words(likelihood: weather.Likelihood) -> str:
    """One line saying which source decided a slot's VMC likelihood, and why."""
    kind = source_kind(likelihood)
    if kind == "report text":
        return f"VMC likelihood {likelihood.value:.0%} from the report text: {likelihood.reason}"
    if kind == "climatology":
        return f"VMC likelihood {likelihood.value:.0%} from climatology (no report covers the slot): {likelihood.reason}"
    return f"VMC likelihood unknown: {likelihood.reason}"


def night_note(airfield: models.Airfield, start: datetime, end: datetime, *, due: Sequence[str] = ()) -> str | None:
    """For a session outside daylight: whether its closing full-stop landings count toward 14 CFR 61.57(b).

    None in daylight. The landings are taken to be in the session's last
    minutes. 61.57(b): 3 takeoffs and 3 landings to a full stop within the
    preceding 90 days, in the period from one hour after sunset to one hour
    before sunrise, to carry passengers at night. ``due`` lists, in words,
    night-landing needs of the pilots flying that the session could serve.
    """
    tz = ZoneInfo(airfield.timezone)
    day = start.astimezone(tz).date()
    sky = sun.sun_times(airfield.latitude, airfield.longitude, day, tz)
    if sun.is_daylight(sky, start, end):
        return None
    periods = sun.passenger_nights(airfield.latitude, airfield.longitude, day, day, tz)
    def span(p: sun.Interval) -> str:
        starts_day, ends_day = p.start.time() == time(0) and p.start.date() == day, p.end.date() > day
        if starts_day and ends_day:
            return "all day"
        if starts_day:
            return f"until {p.end:%H:%M}"
        if ends_day:
            return f"from {p.start:%H:%M}"
        return f"{p.start:%H:%M}-{p.end:%H:%M}"

    spans = " and ".join(span(p) for p in periods) or "none that day"
    sunset = f"sunset {sky.sunset:%H:%M}" if sky.sunset else "no sunset"
    sunrise = f"sunrise {sky.sunrise:%H:%M}" if sky.sunrise else "no sunrise"
    head = (f"Night session ({sunrise}, {sunset} at {airfield.ident}), allowed by the night-practice setting of "
            "the pilot(s) flying.")
    landing = end.astimezone(tz) - timedelta(minutes=1)
    rule = ("3 takeoffs and 3 landings to a full stop within the preceding 90 days, between one hour after sunset "
            "and one hour before sunrise, to carry passengers at night (14 CFR 61.57(b))")
    if any(p.contains(landing) for p in periods):
        text = (f"{head} Ending it with full-stop landings also builds night landing currency: each takeoff and "
                f"full-stop landing in the period ({spans} local) counts toward the {rule}.")
        if due:
            text += " Still needed, and served by such landings: " + "; ".join(due) + "."
        return text
    return (f"{head} Its closing landings fall outside the period that counts for night landing currency "
            f"({spans} local), so they do not count toward the {rule}.")


def _key(person: models.Person) -> str:
    return f"{person.name} #{person.id}"


def _need_id(g: core_gaps.Gap) -> str:
    return f"{g.rule_set}/{g.requirement}/{g.scope}/{g.due.isoformat()}"


def _need_label(g: core_gaps.Gap) -> str:
    kind = "practice target" if g.is_target else g.rule_set
    return f"{g.requirement} ({kind}, {g.scope})"


def _tas(aircraft: models.Aircraft | None) -> float:
    if aircraft is None:
        return DEFAULT_TAS_KT
    return PRACTICE_TAS_KT.get(aircraft.aircraft_class or "", DEFAULT_TAS_KT)


def balance(session: Session, school_id: int) -> dict[tuple[int, int], int]:
    """Times each (safety pilot, pilot flying) pair flew together in accepted or flown sessions (both ways if mutual)."""
    out: dict[tuple[int, int], int] = {}
    for row in practice.school_sessions(session, school_id, statuses=practice.BALANCE):
        pairs = [(row.safety_pilot_id, row.pilot_flying_id)]
        if row.is_mutual:
            pairs.append((row.pilot_flying_id, row.safety_pilot_id))
        for pair in pairs:
            out[pair] = out.get(pair, 0) + 1
    return out


def _credits(gaps: Sequence[core_gaps.Gap]) -> dict[str, float]:
    """Unit -> amount a session must fly: per requirement the chain summed, the largest requirement taken."""
    per: dict[tuple, float] = {}
    for g in gaps:
        k = (g.unit, g.rule_set, g.requirement, g.scope)
        per[k] = per.get(k, 0) + g.count
    out: dict[str, float] = {}
    for (unit, *_), v in per.items():
        out[unit] = max(out.get(unit, 0), v)
    return out


def _booked(logbook, rule_sets, gap: core_gaps.Gap, planned: Sequence) -> bool:  # type: ignore[no-untyped-def]
    """Whether an overdue gap is already met by an accepted session (current on that session's day).

    ``find_gaps`` judges an overdue need on ``start``, before any planned entry,
    so it would report the need again although a session is booked for it.
    """
    if not gap.is_overdue or not planned:
        return False
    rs = next(x for x in rule_sets if x.id == gap.rule_set)
    req = next(x for x in rs.requirements if x.id == gap.requirement)
    only = [dataclasses.replace(rs, requirements=(req,))]
    for entry in planned:
        status = currency.evaluate(logbook, only, entry.date, planned).find(gap.rule_set, gap.requirement, gap.scope)
        if status.is_current:
            return True
    return False


def _planned_entries(session: Session, person_id: int, rows: Sequence[models.PracticeSession]) -> list:
    """Accepted sessions the pilot flies, as planned (not yet flown) entries for the gap analysis."""
    out = []
    for row in rows:
        for leg in row.content.get("legs", []):
            if leg.get("pilot_flying_id") == person_id and leg.get("credits"):
                day = row.starts_at.astimezone(ZoneInfo(row.timezone)).date()
                out.append(core_gaps.planned_entry(f"session-{row.id}-{person_id}", day, leg["credits"]))
    return out


def need_labels(proposal: Proposal) -> dict[str, str]:
    """Scheduler need id -> words, for showing unmet needs."""
    return {_need_id(g): _need_label(g) for gaps in proposal.gaps.values() for g in gaps}


def list_schools(session: Session) -> list[dict[str, Any]]:
    """Every school: ``id``, ``name``, ``slug``."""
    return [{"id": s.id, "name": s.name, "slug": s.slug} for s in practice.schools(session)]


# ---------------------------------------------------------------- propose


def propose_sessions(
    session: Session,
    school_id: int,
    start: date,
    end: date,
    *,
    now: datetime,
    observations_dir: Path | None = DEFAULT_OBSERVATIONS,
    reports: Sequence[weather.Metar | weather.Taf] = (),
    minimums: weather.PracticeMinimums = weather.DEFAULT_MINIMUMS,
    daylight_only: bool = False,
    progress: Progress = services._quiet,
) -> Proposal:
    """Propose practice sessions for the school from ``start`` through ``end`` (local dates, inclusive).

    ``now`` (aware) excludes slots that have begun; gaps are found as of
    ``start``. ``reports`` (from ``read_reports``) decide a slot's VMC
    likelihood where they cover it; reports for other stations are ignored
    and said so. ``minimums`` are the practice minimums. ``daylight_only``
    keeps every session in daylight whatever the pilots' night settings.
    Raises ``LookupError`` for an unknown school and ``SessionRejected`` for
    a bad range or a school without a home airfield.
    """
    if now.tzinfo is None:
        raise ValueError("now must be timezone-aware")
    if end < start:
        raise SessionRejected(f"--to ({end.isoformat()}) is before --from ({start.isoformat()})")
    if (end - start).days > 92:
        raise SessionRejected("plan at most 93 days at a time")
    school = session.get(models.School, school_id)
    if school is None:
        raise LookupError(f"no school with id {school_id}")
    airfield = school.home_airfield
    if airfield is None:
        raise SessionRejected(f"school {school.name} has no home airfield: slots need one")
    tz = ZoneInfo(airfield.timezone)
    range_start = datetime.combine(start, time(0), tz).astimezone(UTC)
    range_end = datetime.combine(end + timedelta(days=1), time(0), tz).astimezone(UTC)

    people = [p for p in repository.school_people(session, school_id) if p.certificate_level != "none"]
    planes = [a for a in repository.school_aircraft(session, school_id)]
    keys = {_key(p): p.id for p in people}
    by_id = {p.id: p for p in people}
    active = practice.school_sessions(session, school_id, start=range_start, end=range_end, statuses=practice.ACTIVE)
    accepted = [row for row in practice.school_sessions(session, school_id, statuses=("accepted",))]

    pilots: list[scheduling.PilotInfo] = []
    all_gaps: dict[int, tuple[core_gaps.Gap, ...]] = {}
    not_plannable: list[NotPlannable] = []
    tas = _tas(planes[0] if planes else None)
    for n, person in enumerate(people, start=1):
        needs: tuple[scheduling.Need, ...] = ()
        minutes = 120
        if person.is_pilot:
            progress(f"gaps {n}/{len(people)}: {person.name}")
            logbook = services.load_logbook(session, person.id)
            sets = services.rule_sets_for(person)
            planned = _planned_entries(session, person.id, accepted)
            found = tuple(
                g for g in core_gaps.find_gaps(logbook, sets, start, end, planned=planned)
                if not _booked(logbook, sets, g, planned)
            )
            content = sessions.plan_session(found, tas)
            dropped = {g.key for g, _ in content.not_covered}
            not_plannable += [NotPlannable(person.id, g, why) for g, why in content.not_covered]
            usable = tuple(g for g in found if g.key not in dropped)
            all_gaps[person.id] = usable
            grouped: dict[str, list[core_gaps.Gap]] = {}
            for g in usable:
                grouped.setdefault(_need_id(g), []).append(g)
            needs = tuple(
                scheduling.Need(nid, gs[0].due, _need_label(gs[0]), overdue=gs[0].is_overdue) for nid, gs in grouped.items()
            )
            if usable:
                minutes = min(content.total_minutes, SLOT_HOURS * 60)
        pilots.append(scheduling.PilotInfo(
            id=_key(person),
            name=person.name,
            needs=needs,
            certificate=person.certificate_level,
            category_classes=tuple(person.category_classes or ()),
            medical_until=person.medical_expires,
            basicmed_until=person.basicmed_expires,
            allow_night=bool(person.night_practice) and person.is_pilot and not daylight_only,
            session_minutes=minutes,
        ))

    progress("availability, daylight and VMC likelihood per slot")
    plane_keys = {a.registration: a.id for a in planes}
    availability: dict[str, list[scheduling.Window]] = {}
    for w in practice.windows(session, person_ids=by_id, aircraft_ids=plane_keys.values(), start=range_start, end=range_end):
        key = _key(by_id[w.person_id]) if w.person_id is not None else next(
            reg for reg, i in plane_keys.items() if i == w.aircraft_id)
        availability.setdefault(key, []).append(scheduling.Window(w.starts_at, w.ends_at))
    clim = climatology_for(airfield.ident, airfield.timezone, observations_dir, minimums)
    here = tuple(rep for rep in reports if rep.station == airfield.ident)
    elsewhere = sorted({rep.station for rep in reports if rep.station != airfield.ident})
    night = any(p.allow_night for p in pilots)
    slots, basis = candidate_slots(airfield, start, end, clim, now, reports=here, minimums=minimums,
                                   last_end=NIGHT_LAST_END if night else LAST_END)
    bookings = []
    for row in active:
        for pid in row.people_ids:
            if pid in by_id:
                bookings.append(scheduling.Booking(_key(by_id[pid]), row.starts_at, row.ends_at, f"session {row.id}"))
        bookings.append(scheduling.Booking(row.aircraft.registration, row.starts_at, row.ends_at, f"session {row.id}"))
    bal = {
        (_key(by_id[sp]), _key(by_id[pf])): k for (sp, pf), k in balance(session, school_id).items()
        if sp in by_id and pf in by_id
    }
    problem = scheduling.Problem(
        pilots=tuple(pilots),
        aircraft=tuple(
            scheduling.Aircraft(a.registration, f"{a.category}/{a.aircraft_class}", a.dual_controls,
                                a.home_airfield.ident if a.home_airfield else None)
            for a in planes
        ),
        slots=tuple(slots),
        availability={k: tuple(v) for k, v in availability.items()},
        bookings=tuple(bookings),
        balance=bal,
    )
    progress(f"scheduling {sum(1 for p in pilots if p.needs)} pilots in need over {len(slots)} slots")
    plan = scheduling.plan(problem)

    leg_plans: dict[tuple[str, str], sessions.SessionPlan] = {}
    for ps in plan.sessions:
        plane = next(a for a in planes if a.registration == ps.aircraft)
        for leg in ps.legs:
            served = set(leg.needs)
            gs = [g for g in all_gaps[keys[leg.pilot_flying]] if _need_id(g) in served]
            leg_plans[(leg.pilot_flying, leg.safety_pilot)] = sessions.plan_session(
                gs, _tas(plane), sessions.SessionSettings(night=not ps.slot.daylight))
    night_due: dict[int, list[str]] = {}
    for n in not_plannable:
        if n.gap.unit == r.NIGHT_FULL_STOP_LANDINGS:
            night_due.setdefault(n.person_id, []).append(
                f"{by_id[n.person_id].name}'s night landings ({n.gap.rule_set}, {n.gap.count:g} to a full stop, "
                f"due {n.gap.due.isoformat()})")
    notes: dict[tuple[datetime, datetime], str] = {}
    for ps in plan.sessions:
        due = list(dict.fromkeys(text for leg in ps.legs for text in night_due.get(keys[leg.pilot_flying], [])))
        note = None if ps.slot.daylight else night_note(airfield, ps.slot.start, ps.slot.end, due=due)
        if note:
            notes[(ps.slot.start, ps.slot.end)] = note
    return Proposal(
        school_id=school_id, airfield_id=airfield.id, airfield_ident=airfield.ident, timezone=airfield.timezone,
        start=start, end=end, plan=plan, person_ids=keys, aircraft_ids=plane_keys, gaps=all_gaps,
        leg_plans=leg_plans, not_plannable=tuple(not_plannable),
        vmc_source=_vmc_summary(airfield.ident, basis, clim is not None, len(here), elsewhere, minimums, daylight_only,
                                night),
        minimums=minimums, daylight_only=daylight_only, vmc_basis=basis, night_notes=notes,
    )


def _vmc_summary(ident: str, basis: dict[tuple[datetime, datetime], weather.Likelihood], history: bool,
                 used: int, elsewhere: Sequence[str], minimums: weather.PracticeMinimums, daylight_only: bool,
                 night: bool) -> str:
    """How the plan judged VMC likelihood and daylight, in a few sentences."""
    counts = {"report text": 0, "climatology": 0, "unknown": 0}
    for likelihood in basis.values():
        counts[source_kind(likelihood)] += 1
    first = (f"{used} pasted or imported report{'s' if used != 1 else ''} for {ident} where they cover a slot "
             f"({counts['report text']} slots), otherwise " if used else "")
    second = (f"the {ident} observation history (climatology by month and hour; {counts['climatology']} slots)"
              if history else f"no observation history for {ident}")
    text = (f"VMC likelihood: {first}{second}; unknown for {counts['unknown']} slots. Practice minimums: ceiling "
            f"{minimums.ceiling_ft:,} ft, visibility {minimums.visibility_sm:g} SM")
    if elsewhere:
        text += f". Reports for other stations ignored ({', '.join(elsewhere)}): the sessions are at {ident}"
    if daylight_only:
        text += ". Daylight only for this plan, whatever the pilots' night settings"
    elif night:
        text += ". Evening slots included: night sessions only for pilots whose setting allows night practice"
    return text


# ---------------------------------------------------------------- store and change


def _jsonable(value: Any) -> Any:
    if dataclasses.is_dataclass(value):
        return {f.name: _jsonable(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, (list, tuple)):
        return [_jsonable(v) for v in value]
    if isinstance(value, dict):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, (date, datetime)):
        return value.isoformat()
    return value


def leg_content(plan: sessions.SessionPlan, gaps: Sequence[core_gaps.Gap]) -> dict[str, Any]:
    """A leg's session plan as JSON: items, briefing, total minutes, and the credits for later gap analyses."""
    return {
        "items": _jsonable(plan.items),
        "briefing": _jsonable(plan.briefing),
        "total_minutes": plan.total_minutes,
        "minutes_basis": plan.minutes_basis,
        "needs": [f"{_need_label(g)}: {g.unit} {g.count:g} by {g.due.isoformat()}" for g in gaps],
        "credits": _credits([g for g in gaps if g.unit != core_gaps.CHECK]),
    }


def _local_span(start: datetime, end: datetime, tz_name: str) -> str:
    tz = ZoneInfo(tz_name)
    a, b = start.astimezone(tz), end.astimezone(tz)
    return f"{a:%Y-%m-%d %H:%M}-{b:%H:%M}" if a.date() == b.date() else f"{a:%Y-%m-%d %H:%M}-{b:%Y-%m-%d %H:%M}"


def explanation(proposal: Proposal, ps: scheduling.ProposedSession) -> str:
    """The stored explanation of a proposed session: why this slot and partner, the weather source, night."""
    lines = [f"Why this slot: {ps.why_slot}", f"Why this partner: {ps.why_partner}",
             f"Weather: {proposal.weather_note(ps)}"]
    note = proposal.night_note(ps)
    if note:
        lines.append(f"Night: {note}")
    return "\n".join(lines)


def save_proposals(session: Session, proposal: Proposal, *, now: datetime) -> list[models.PracticeSession]:
    """Store every proposed session of ``proposal`` (status ``proposed``, sequence 0); return the rows.

    A booking: the people and aircraft are locked first, and a session that
    clashes with an active session stored meanwhile (another instructor's
    save, accept or move) raises ``SessionRejected`` naming the person or
    aircraft and that session; the caller rolls back, so nothing is stored.
    """
    people = {proposal.person_ids[k] for ps in proposal.plan.sessions for k in ps.people}
    planes = {proposal.aircraft_ids[ps.aircraft] for ps in proposal.plan.sessions}
    if proposal.plan.sessions:
        practice.lock_for_booking(session, person_ids=people, aircraft_ids=planes)
    rows = []
    for ps in proposal.plan.sessions:
        first = ps.legs[0]
        legs = []
        for leg in ps.legs:
            pf = proposal.person_ids[leg.pilot_flying]
            gs = [g for g in proposal.gaps[pf] if _need_id(g) in set(leg.needs)]
            legs.append({
                "pilot_flying_id": pf,
                "safety_pilot_id": proposal.person_ids[leg.safety_pilot],
                **leg_content(proposal.leg_plans[(leg.pilot_flying, leg.safety_pilot)], gs),
            })
        start, end = ps.slot.start.astimezone(UTC), ps.slot.end.astimezone(UTC)
        pf_id, sp_id = proposal.person_ids[first.pilot_flying], proposal.person_ids[first.safety_pilot]
        aircraft_id = proposal.aircraft_ids[ps.aircraft]
        # Checked one by one after the previous rows were flushed: the proposal's own sessions count too.
        practice.check_free(
            session,
            f"the proposed session {_local_span(start, end, proposal.timezone)} in {ps.aircraft} "
            f"({_name_of(first.pilot_flying)} with {_name_of(first.safety_pilot)}) clashes",
            start=start, end=end, pilot_flying_id=pf_id, safety_pilot_id=sp_id, aircraft_id=aircraft_id,
        )
        row = models.PracticeSession(
            school_id=proposal.school_id,
            airfield_id=proposal.airfield_id,
            aircraft_id=aircraft_id,
            starts_at=start,
            ends_at=end,
            timezone=proposal.timezone,
            pilot_flying_id=pf_id,
            safety_pilot_id=sp_id,
            is_mutual=ps.is_mutual,
            status="proposed",
            content={"legs": legs, "daylight": ps.slot.daylight, "vmc": ps.slot.vmc},
            explanation=explanation(proposal, ps),
            uid=f"{uuid.uuid4()}@planner",
            sequence=0,
            version=1,
            created_at=now,
            updated_at=now,
        )
        session.add(row)
        session.flush()
        rows.append(row)
    return rows


def _name_of(key: str) -> str:
    """The person's name from a scheduler id ``"<name> #<id>"``."""
    return key.rsplit(" #", 1)[0]


def _load(session: Session, session_id: int, expected_version: int | None) -> models.PracticeSession:
    row = practice.get_session(session, session_id)
    if row is None:
        raise LookupError(f"no practice session with id {session_id}")
    if expected_version is not None and row.version != expected_version:
        raise SessionConflict(
            f"practice session {session_id} was changed elsewhere (now version {row.version}, "
            f"you saw version {expected_version}); reload it"
        )
    return row


def _load_for_booking(session: Session, session_id: int, expected_version: int | None) -> models.PracticeSession:
    """The session, its people and aircraft locked against other bookings, read again after the lock."""
    row = practice.get_session(session, session_id)
    if row is None:
        raise LookupError(f"no practice session with id {session_id}")
    practice.lock_for_booking(session, person_ids=row.people_ids, aircraft_ids=[row.aircraft_id])
    session.refresh(row)  # a competing change may have committed while this one waited for the lock
    return _load(session, session_id, expected_version)


def accept_session(session: Session, session_id: int, *, expected_version: int | None = None,
                   now: datetime) -> models.PracticeSession:
    """Accept a proposed session (it then counts as a booking and in the balance).

    Refused (``SessionRejected``, naming the person or aircraft and the other
    session) when an accepted session holds one of its people or its aircraft
    then. Only accepted ones count here: a proposed session overlapping this
    one can only date from before bookings were checked, and of two such the
    first accepted wins.
    """
    row = _load_for_booking(session, session_id, expected_version)
    if row.status != "proposed":
        raise SessionRejected(f"practice session {session_id} is {row.status}; only a proposed one can be accepted")
    practice.check_free(
        session, f"practice session {session_id} cannot be accepted", start=row.starts_at, end=row.ends_at,
        pilot_flying_id=row.pilot_flying_id, safety_pilot_id=row.safety_pilot_id, aircraft_id=row.aircraft_id,
        exclude_id=row.id, against=("accepted",),
    )
    row.status = "accepted"
    practice.bump(session, row, now)
    return row


def cancel_session(session: Session, session_id: int, *, expected_version: int | None = None,
                   now: datetime) -> models.PracticeSession:
    """Cancel a proposed or accepted session; it stays (calendars show it as cancelled)."""
    row = _load(session, session_id, expected_version)
    if row.status not in practice.ACTIVE:
        raise SessionRejected(f"practice session {session_id} is {row.status}; it cannot be cancelled")
    row.status = "cancelled"
    practice.bump(session, row, now)
    return row


def move_session(session: Session, session_id: int, new_start: datetime, *, expected_version: int | None = None,
                 now: datetime) -> models.PracticeSession:
    """Move a proposed or accepted session to ``new_start`` (aware), keeping its length.

    Refused when either person or the aircraft is in another active session
    then, or when the new time is not in daylight and a pilot flying in it
    has not allowed night practice. The explanation gets a line saying the
    session was moved (and, at night, the night-landing note).
    """
    if new_start.tzinfo is None:
        raise SessionRejected("new start must be timezone-aware")
    row = _load_for_booking(session, session_id, expected_version)
    if row.status not in practice.ACTIVE:
        raise SessionRejected(f"practice session {session_id} is {row.status}; it cannot be moved")
    length = row.ends_at - row.starts_at
    start, end = new_start.astimezone(UTC), new_start.astimezone(UTC) + length
    practice.check_free(
        session, f"practice session {session_id} cannot move to {new_start.isoformat(timespec='minutes')}",
        start=start, end=end, pilot_flying_id=row.pilot_flying_id, safety_pilot_id=row.safety_pilot_id,
        aircraft_id=row.aircraft_id, exclude_id=row.id,
    )
    airfield = row.airfield
    tz = ZoneInfo(row.timezone)
    local = start.astimezone(tz)
    sky = sun.sun_times(airfield.latitude, airfield.longitude, local.date(), tz)
    daylight = sun.is_daylight(sky, start, end)
    if not daylight:
        flying = {leg.get("pilot_flying_id") for leg in row.content.get("legs", [])} or {row.pilot_flying_id}
        refusing = sorted(p.name for p in (session.get(models.Person, pid) for pid in flying)
                          if p is not None and not p.night_practice)
        if refusing:
            light = (f"sunrise {sky.sunrise:%H:%M}, sunset {sky.sunset:%H:%M}" if sky.sunrise and sky.sunset
                     else "no sunrise or sunset that day")
            raise SessionRejected(
                f"practice session {session_id} cannot move to {local:%Y-%m-%d %H:%M}: it would not be in daylight "
                f"({light} at {airfield.ident}) and {' and '.join(refusing)} "
                f"{'has' if len(refusing) == 1 else 'have'} not allowed night practice in their settings"
            )
    kept = [line for line in row.explanation.splitlines() if not line.startswith(("Night: ", "Moved: "))]
    kept.append(f"Moved: by hand to {local:%Y-%m-%d %H:%M} local; the reasons and weather above were for the "
                "time first proposed")
    note = night_note(airfield, start, end)
    if note:
        kept.append(f"Night: {note}")
    row.explanation = "\n".join(kept)
    row.content = {**row.content, "daylight": daylight}
    row.starts_at, row.ends_at = start, end
    practice.bump(session, row, now)
    return row


# ---------------------------------------------------------------- calendar


def _leg_text(n: int, leg: dict[str, Any], names: dict[int, str]) -> str:
    lines = [f"Leg {n}: {names.get(leg['pilot_flying_id'], '?')} flies, "
             f"{names.get(leg['safety_pilot_id'], '?')} is safety pilot"]
    lines += [f"  works toward: {x}" for x in leg.get("needs", [])]
    for item in leg.get("items", []):
        lines.append(f"  - {item['title']} ({item['minutes']} min)")
        lines += [f"      {step}" for step in item.get("steps", [])]
    b = leg.get("briefing") or {}
    if b:
        lines.append(f"  Briefing at {b['tas_kt']:g} kt TAS: standard rate about {b['standard_rate_bank_deg']:.0f} deg of bank, "
                     f"radius {b['standard_rate_radius_ft']:,.0f} ft")
        for f in b.get("banks", []):
            lines.append(f"    {f['bank_deg']:g} deg bank: load factor {f['load_factor']:.2f}, stall speed "
                         f"+{f['stall_speed_increase_percent']:.0f} %, radius {f['turn_radius_ft']:,.0f} ft")
        lines += [f"    {note}" for note in b.get("notes", [])]
    lines.append(f"  About {leg.get('total_minutes', 0)} minutes ({leg.get('minutes_basis', sessions.ESTIMATE)})")
    return "\n".join(lines)


def session_event(row: models.PracticeSession) -> "calendar.SessionEvent":
    """The calendar view of a stored session."""
    from planner.export import calendar

    names = {row.pilot_flying_id: row.pilot_flying.name, row.safety_pilot_id: row.safety_pilot.name}
    kind = "Mutual practice" if row.is_mutual else "Instrument practice"
    people = (f"Pilot flying: {row.pilot_flying.name}; safety pilot: {row.safety_pilot.name}"
              + ("; then seats swapped" if row.is_mutual else ""))
    legs = row.content.get("legs", [])
    return calendar.SessionEvent(
        uid=row.uid,
        sequence=row.sequence,
        status=row.status,
        start=row.starts_at,
        end=row.ends_at,
        timezone=row.timezone,
        location=f"{row.airfield.name} ({row.airfield.ident}), aircraft {row.aircraft.registration}",
        summary=f"{kind}: {row.pilot_flying.name} with {row.safety_pilot.name} in {row.aircraft.registration}",
        people=people,
        details="\n\n".join(_leg_text(n, leg, names) for n, leg in enumerate(legs, start=1)),
        explanation=row.explanation,
    )


def deadlines(session: Session, person_id: int, as_of: date) -> list["calendar.Deadline"]:
    """All-day deadlines from ``as_of`` on: currency ends (``valid_through``), regain stage ends
    (``regain_by``), practice due (a practice target's ``valid_through``)."""
    from planner.export import calendar

    person = services.get_pilot(session, person_id)
    report = currency.evaluate(services.load_logbook(session, person_id), services.rule_sets_for(person), as_of)
    out = []
    for s in report.requirements:
        target = services.is_practice(s)
        if s.state == currency.CURRENT and s.valid_through and s.valid_through >= as_of:
            day, kind = s.valid_through, ("practice due" if target else "currency ends")
            text = (f"{s.title} ({s.scope}): last day it is met is {day.isoformat()}"
                    + (" (a practice target, not a regulation)" if target else f" ({s.citation})"))
        elif s.state == currency.GRACE and s.regain_by and s.regain_by >= as_of:
            day, kind = s.regain_by, "regain stage ends"
            text = (f"{s.title} ({s.scope}): not current since {s.valid_through}; the tasks restore it through "
                    f"{day.isoformat()}, after that only a check ({s.citation})")
        else:
            continue
        title = f"{kind.capitalize()}: {s.title} ({s.scope})"
        uid = f"deadline-{person_id}-{s.rule_set}-{s.id}-{s.scope.replace('/', '-')}-{kind.replace(' ', '-')}-{day.isoformat()}@planner"
        out.append(calendar.Deadline(uid, day, title, text))
    return out


def pilot_calendar_for(session: Session, person_id: int, as_of: date, *, now: datetime) -> bytes:
    """The pilot's calendar: every session they are in (either seat, cancelled ones included) and their deadlines."""
    from planner.export import calendar

    person = services.get_pilot(session, person_id)
    events = [session_event(row) for row in practice.person_sessions(session, person_id)]
    return calendar.pilot_calendar(person.name, events, deadlines(session, person_id, as_of), now=now)


# ---------------------------------------------------------------- calendar feed tokens

FEED_TOKEN_BYTES = 32  # secrets.token_urlsafe(32): 256 bits of randomness


def _token_hash(token: str) -> str:
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


def create_feed_token(session: Session, person_id: int, *, now: datetime) -> str:
    """A new subscription token for the pilot; returns the raw token (shown once), stores only its SHA-256.

    Earlier active tokens of the pilot are revoked: one live link per pilot.
    """
    services.get_pilot(session, person_id)
    revoke_feed_tokens(session, person_id, now=now)
    token = secrets.token_urlsafe(FEED_TOKEN_BYTES)
    session.add(models.CalendarFeedToken(person_id=person_id, token_hash=_token_hash(token), created_at=now))
    session.flush()
    return token


def revoke_feed_tokens(session: Session, person_id: int, *, now: datetime) -> int:
    """Revoke every active subscription token of the pilot; returns how many were active."""
    rows = practice.active_feed_tokens(session, person_id)
    for row in rows:
        row.revoked_at = now
    session.flush()
    return len(rows)


def feed_status(session: Session, person_id: int) -> models.CalendarFeedToken | None:
    """The pilot's active subscription token row (its hash only), if any."""
    rows = practice.active_feed_tokens(session, person_id)
    return rows[-1] if rows else None


def feed_person(session: Session, token: str) -> int | None:
    """The id of the pilot whose active token ``token`` is, or None (unknown, revoked or malformed)."""
    if not token or len(token) > 128:
        return None
    row = practice.feed_token_by_hash(session, _token_hash(token))
    if row is None or row.revoked_at is not None:
        return None
    return row.person_id


# ---------------------------------------------------------------- lists for the pages


def school_sessions(session: Session, school_id: int, *, since: datetime) -> list[models.PracticeSession]:
    """The school's sessions that end after ``since`` (any status), by start."""
    return practice.school_sessions(session, school_id, start=since)


def person_sessions(session: Session, person_id: int, *, since: datetime) -> list[models.PracticeSession]:
    """Sessions the person is in (either seat) that end after ``since``, any status, by start."""
    return [row for row in practice.person_sessions(session, person_id) if row.ends_at > since]


def get_session(session: Session, session_id: int) -> models.PracticeSession | None:
    return practice.get_session(session, session_id)


# ---------------------------------------------------------------- after the flight


def mark_flown(session: Session, session_id: int, *, expected_version: int | None = None,
               now: datetime) -> models.PracticeSession:
    """Record that an accepted session was flown (it keeps counting in the who-flew-for-whom balance)."""
    row = _load(session, session_id, expected_version)
    if row.status != "accepted":
        raise SessionRejected(f"practice session {session_id} is {row.status}; only an accepted one can be marked flown")
    if row.starts_at > now:
        raise SessionRejected(f"practice session {session_id} has not begun yet; mark it flown after the flight")
    row.status = "flown"
    practice.bump(session, row, now)
    return row


# Approach types for the draft: the plan names the kind, the pilot corrects it to what was flown.
DRAFT_PRECISION_TYPE = "ILS"
DRAFT_NON_PRECISION_TYPE = "RNAV (GPS)"


def _hours(minutes: int) -> float:
    return round(minutes / 60, 1)


def draft_entry(session: Session, session_id: int, person_id: int) -> core_logbook.Entry:
    """A draft logbook entry for ``person_id``'s seat(s) in a flown session, from the session's content.

    Pilot flying: the planned approaches (type from the plan's precision /
    non-precision kind, at the session's airfield), holds, course tracking,
    partial-panel approaches, unusual-attitude recoveries, simulated
    instrument time (the instrument items' minutes), the safety pilot's name.
    Safety pilot: the flight time. A mutual session gives one entry with both
    seats. Times are the plan's estimates: the person reviews and corrects
    before saving. Raises ``LookupError`` when the person is not in the session
    and ``SessionRejected`` when it is not flown.
    """
    row = practice.get_session(session, session_id)
    if row is None or person_id not in row.people_ids:
        raise LookupError(f"no practice session {session_id} with person {person_id}")
    if row.status != "flown":
        raise SessionRejected(f"practice session {session_id} is {row.status}; mark it flown first")
    names = {row.pilot_flying_id: row.pilot_flying.name, row.safety_pilot_id: row.safety_pilot.name}
    legs = row.content.get("legs", [])
    approaches: list[core_logbook.Approach] = []
    holds = pp = nh = nl = 0
    course = False
    simulated_minutes = total_minutes = 0
    flew_with: list[str] = []
    safety_for: list[str] = []
    for leg in legs:
        total_minutes += int(leg.get("total_minutes", 0))
        if leg.get("pilot_flying_id") == person_id:
            flew_with.append(names.get(leg.get("safety_pilot_id"), "?"))
            for item in leg.get("items", []):
                kind, title = item.get("kind"), item.get("title", "")
                if kind not in ("depart", "return", "landing"):
                    simulated_minutes += int(item.get("minutes", 0))
                if kind == "approach":
                    precision = title.split(": ", 1)[-1].startswith("precision")
                    approaches.append(core_logbook.Approach(
                        type=DRAFT_PRECISION_TYPE if precision else DRAFT_NON_PRECISION_TYPE,
                        airfield=row.airfield.ident, conditions="simulated"))
                    pp += "partial panel" in title
                elif kind == "hold":
                    holds += 1
                elif kind == "course":
                    course = True
                elif kind == "unusual-attitude":
                    nh += "nose high" in title
                    nl += "nose low" in title
        elif leg.get("safety_pilot_id") == person_id:
            safety_for.append(names.get(leg.get("pilot_flying_id"), "?"))
    local = row.starts_at.astimezone(ZoneInfo(row.timezone))
    remarks = [f"Practice session {row.id} (draft from the plan: correct approach types, runways and times to what was flown)."]
    if safety_for:
        remarks.append(f"Safety pilot for {', '.join(safety_for)}.")
    plane = row.aircraft
    return core_logbook.Entry(
        id="draft",
        date=local.date(),
        device="aircraft",
        category=plane.category,
        aircraft_class=plane.aircraft_class,
        conditions="simulated" if flew_with else None,
        approaches=tuple(approaches),
        holds=holds,
        course_tracking=course,
        instrument_simulated_hours=_hours(simulated_minutes),
        partial_panel_approaches=pp,
        ua_nose_high=nh,
        ua_nose_low=nl,
        safety_pilot=", ".join(flew_with) or None,
        remarks=" ".join(remarks),
        aircraft=plane.registration,
        route=f"{row.airfield.ident}-{row.airfield.ident}",
        total_hours=_hours(total_minutes),
    )
