"""Practice-session scheduler: pilots, safety pilots, aircraft and slots.

Pure: every input is plain data (tz-aware datetimes, dates), nothing reads the
clock, the weather or a database. Daylight and VMC likelihood per slot come
from other modules as ``SlotInfo.daylight`` / ``SlotInfo.vmc``.

**Hard constraints** (never broken by a proposed session):

* nobody and no aircraft is in two overlapping sessions, nor in a session that
  overlaps one of their existing ``Booking``\\ s;
* every person and the aircraft have an availability window that contains the
  whole slot;
* the slot is in daylight unless every pilot flying in it allows night;
* the safety pilot is eligible under 14 CFR 91.109(c) on the date: at least a
  private pilot certificate, the aircraft's category *and* class rating, a
  valid medical or BasicMed (a required crewmember: from memory), willing;
  the aircraft has fully functioning dual controls (91.109);
* the pilot flying holds the aircraft's category and class rating and a valid
  medical or BasicMed (acting as pilot in command: common practice);
* the slot is long enough: ``session_minutes`` of the pilot flying, or of both
  pilots in a mutual session;
* each pilot flies (as pilot flying) in at most one proposed session; one
  session serves all of a pilot's needs due on or after its date.

**Objective** (maximised; the same function judges the greedy plan and the
exhaustive optimum):

* per need served: ``W_MEET`` (100) plus a margin bonus up to ``W_MARGIN``
  (20) growing linearly with the days between the session and the due date
  (capped at 14 days). A need is served by a session on or before its due
  date; an ``overdue`` need (already lapsed, due "now") by any session, less
  ``W_LATE`` (2) per day of delay, at most half of ``W_MEET``;
* per pilot flying: slot quality ``W_VMC`` (10) x VMC likelihood (unknown
  counts as 0.5) plus ``W_DAYLIGHT`` (5) in daylight;
* ``W_MUTUAL`` (10) per mutual session (two pilots who both need practice swap
  seats);
* fairness: ``W_FAIR`` (4) x the reduction of the school's total imbalance
  ``sum(|flown as safety pilot - had a safety pilot|)`` over all people, from
  the running balance plus the plan (mutual sessions leave it unchanged).

**Algorithm**: greedy by deadline (earliest hard due date first, then the
pilot with fewest options), each pilot taking the best-valued feasible option
(mutual with another pilot in need, or a safety pilot), from three pilot
orders; then local improvement: remove one or two sessions and re-insert the
affected and unscheduled pilots greedily, kept when the objective rises. On
instances with up to 40 pilots in need also ejection moves: put in one session
a pilot could fly (any slot, aircraft, safety pilot or mutual partner) that is
worth more to its own pilots than what they have, take out every session that
clashes with it and re-fill greedily; finally, on the best plan, the same move
followed by local improvement of the perturbed plan (catches chains such as
"A takes B's slot, B moves to C's, C pairs up with D"), most promising first,
within a fixed effort bound (``DEEP_WORK`` options evaluated). Last, on every
instance, a large-neighbourhood search: take out one session, two related
sessions, or on plans of up to ``LNS_TRIPLES`` sessions three, and re-plan by
branch and bound the pilots they freed with the unscheduled pilots who could use
the freed slots (at most ``SUB_PILOTS`` pilots; the rest of the plan stays), kept
when the objective rises (catches plans where a mutual session must give way to
two or three single sessions, which no greedy re-fill tries). Its effort is
bounded by ``SUB_WORK`` per re-plan and ``LNS_WORK`` in all, so on a large
school it stops early instead of growing exponentially. Everything is
deterministic (fixed orders, no random numbers).
``exhaustive_best`` finds the true optimum of the same objective by branch and
bound for small instances (measurement only; ``plan`` never calls it).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime
from typing import Mapping, Sequence

W_MEET = 100.0
W_MARGIN = 20.0
MARGIN_CAP_DAYS = 14
W_LATE = 2.0
W_VMC = 10.0
VMC_UNKNOWN = 0.5
W_DAYLIGHT = 5.0
W_MUTUAL = 10.0
W_FAIR = 4.0

SAFETY_PILOT_CERTIFICATES = ("private", "commercial", "atp")
CERTIFICATES = ("student", "sport", "recreational") + SAFETY_PILOT_CERTIFICATES
_PF_BOUND_EXTRA = max(W_MUTUAL / 2, 2 * W_FAIR)
DEEP_WORK = 20_000  # options the final deep ejection pass may evaluate (deterministic effort bound)
# large-neighbourhood search (``_lns``): explicit constants, so its effort has a fixed ceiling
SUB_PILOTS = 6  # pilots re-planned together in one neighbourhood
SUB_WORK = 4_000  # units of ``_State.work`` one neighbourhood's re-plan may spend
LNS_WORK = 100_000  # units of ``_State.work`` the whole search may spend (about 0.15 s on the bench's school)
LNS_TRIPLES = 8  # plans of at most this many sessions also have three related sessions re-planned together


# ----------------------------------------------------------------- inputs


@dataclass(frozen=True)
class Need:
    """Something a pilot must fly by ``due`` (inclusive, local date), e.g. from ``gaps.find_gaps``.

    ``overdue``: already lapsed and due now; a later session still serves it, with less value.
    """

    id: str
    due: date
    label: str = ""
    overdue: bool = False


@dataclass(frozen=True)
class PilotInfo:
    id: str
    name: str = ""
    needs: tuple[Need, ...] = ()
    certificate: str = "private"  # one of CERTIFICATES
    category_classes: tuple[str, ...] = ()  # e.g. ("airplane/single-engine-land",)
    medical_until: date | None = None  # last day a medical certificate is valid
    basicmed_until: date | None = None  # last day BasicMed privileges are valid
    willing_safety_pilot: bool = True
    allow_night: bool = False  # this pilot's setting: practice under the hood at night
    session_minutes: int = 120  # time needed as pilot flying (e.g. ``SessionPlan.total_minutes``)


@dataclass(frozen=True)
class Aircraft:
    id: str
    category_class: str  # e.g. "airplane/single-engine-land"
    dual_controls: bool = True  # fully functioning dual controls (14 CFR 91.109)
    airfield: str | None = None  # based at; slots elsewhere are not used


@dataclass(frozen=True)
class Window:
    """An availability window, tz-aware, ``start`` < ``end``; a session must lie inside one."""

    start: datetime
    end: datetime


@dataclass(frozen=True)
class SlotInfo:
    """A candidate slot; ``daylight`` and ``vmc`` (0..1 or None if unknown) come from other modules."""

    start: datetime
    end: datetime
    airfield: str
    daylight: bool
    vmc: float | None = None

    @property
    def day(self) -> date:
        """The local date of the slot (in the time zone of ``start``)."""
        return self.start.date()

    @property
    def minutes(self) -> float:
        return (self.end - self.start).total_seconds() / 60


@dataclass(frozen=True)
class Booking:
    """An existing commitment of a person or an aircraft (``resource`` is its id)."""

    resource: str
    start: datetime
    end: datetime
    label: str = ""


@dataclass(frozen=True)
class Problem:
    pilots: tuple[PilotInfo, ...]
    aircraft: tuple[Aircraft, ...]
    slots: tuple[SlotInfo, ...]
    availability: Mapping[str, tuple[Window, ...]]  # person or aircraft id -> windows (missing: never available)
    bookings: tuple[Booking, ...] = ()
    balance: Mapping[tuple[str, str], int] = field(default_factory=dict)  # (safety pilot, pilot flying) -> times


# ----------------------------------------------------------------- outputs


@dataclass(frozen=True)
class Leg:
    pilot_flying: str
    safety_pilot: str
    needs: tuple[str, ...]  # ids of the pilot flying's needs this leg serves


@dataclass(frozen=True)
class ProposedSession:
    slot: SlotInfo
    aircraft: str
    legs: tuple[Leg, ...]  # one leg, or two for a mutual session (seats swapped)
    value: float
    why_slot: str
    why_partner: str

    @property
    def is_mutual(self) -> bool:
        return len(self.legs) == 2

    @property
    def people(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(p for leg in self.legs for p in (leg.pilot_flying, leg.safety_pilot)))


@dataclass(frozen=True)
class UnmetNeed:
    pilot: str
    need: str
    due: date
    reason: str


@dataclass(frozen=True)
class SchedulePlan:
    sessions: tuple[ProposedSession, ...]
    unmet: tuple[UnmetNeed, ...]
    objective: float
    balance_after: Mapping[tuple[str, str], int]


# ------------------------------------------------------------ eligibility


def _medical_ok(p: PilotInfo, day: date) -> bool:
    return any(d is not None and d >= day for d in (p.medical_until, p.basicmed_until))


def safety_pilot_refusals(candidate: PilotInfo, aircraft: Aircraft, day: date) -> tuple[str, ...]:
    """Why ``candidate`` may not act as safety pilot in ``aircraft`` on ``day`` (empty: eligible).

    14 CFR 91.109(c): at least a private pilot certificate with category and
    class ratings appropriate to the aircraft; the aircraft has fully
    functioning dual controls; a required crewmember needs a valid medical or
    BasicMed (from memory); and the person must be willing.
    """
    out = []
    if candidate.certificate not in SAFETY_PILOT_CERTIFICATES:
        out.append(f"holds a {candidate.certificate} certificate; a safety pilot needs at least a private pilot certificate (14 CFR 91.109(c))")
    if aircraft.category_class not in candidate.category_classes:
        out.append(f"no {aircraft.category_class} rating: category and class of the aircraft are required (14 CFR 91.109(c))")
    if not _medical_ok(candidate, day):
        out.append(f"no valid medical or BasicMed on {day.isoformat()} (the safety pilot is a required crewmember; from memory)")
    if not candidate.willing_safety_pilot:
        out.append("not willing to act as safety pilot")
    if not aircraft.dual_controls:
        out.append(f"aircraft {aircraft.id} has no fully functioning dual controls (14 CFR 91.109)")
    return tuple(out)


def pilot_flying_refusals(pilot: PilotInfo, aircraft: Aircraft, day: date) -> tuple[str, ...]:
    """Why ``pilot`` may not fly ``aircraft`` as pilot in command on ``day`` (common practice checks)."""
    out = []
    if pilot.certificate not in SAFETY_PILOT_CERTIFICATES:
        out.append(f"holds a {pilot.certificate} certificate")
    if aircraft.category_class not in pilot.category_classes:
        out.append(f"no {aircraft.category_class} rating")
    if not _medical_ok(pilot, day):
        out.append(f"no valid medical or BasicMed on {day.isoformat()}")
    if not aircraft.dual_controls:
        out.append(f"aircraft {aircraft.id} has no fully functioning dual controls (14 CFR 91.109)")
    return tuple(out)


# ------------------------------------------------------------- the model


def need_value(need: Need, day: date) -> float:
    """Objective value of serving ``need`` with a session on ``day`` (0: not served)."""
    if need.overdue:
        late = max((day - need.due).days, 0)
        return W_MEET - min(W_LATE * late, W_MEET / 2)
    if day > need.due:
        return 0.0
    margin = min((need.due - day).days, MARGIN_CAP_DAYS)
    return W_MEET + W_MARGIN * margin / MARGIN_CAP_DAYS


def slot_quality(slot: SlotInfo) -> float:
    vmc = VMC_UNKNOWN if slot.vmc is None else slot.vmc
    return W_VMC * vmc + (W_DAYLIGHT if slot.daylight else 0.0)


def _inside(windows: Sequence[Window], start: datetime, end: datetime) -> bool:
    return any(w.start <= start and end <= w.end for w in windows)


def _overlaps(intervals, start: datetime, end: datetime) -> bool:
    return any(s < end and start < e for s, e in intervals)


class _Model:
    """Precomputed feasibility facts shared by the greedy, the local search and the exhaustive search."""

    def __init__(self, problem: Problem):
        self.problem = problem
        self.pilots = {p.id: p for p in problem.pilots}
        if len(self.pilots) != len(problem.pilots):
            raise ValueError("pilots: two pilots share an id")
        self.aircraft = {a.id: a for a in problem.aircraft}
        if len(self.aircraft) != len(problem.aircraft):
            raise ValueError("aircraft: two aircraft share an id")
        for i, s in enumerate(problem.slots):
            if s.start.tzinfo is None or s.end.tzinfo is None:
                raise ValueError(f"slots[{i}]: start and end must be time-zone aware")
            if not s.start < s.end:
                raise ValueError(f"slots[{i}]: end must be after start")
            if s.vmc is not None and not 0.0 <= s.vmc <= 1.0:
                raise ValueError(f"slots[{i}]: vmc must be between 0 and 1 or None")
        self.slots = problem.slots
        self.needing = [p.id for p in problem.pilots if p.needs]
        self.base_busy: dict[str, list] = {}
        for b in problem.bookings:
            self.base_busy.setdefault(b.resource, []).append((b.start, b.end))
        avail = problem.availability
        n = len(self.slots)
        # per slot: people and aircraft whose availability contains it, and who has no booking over it
        self.people_at: list[list[str]] = [[] for _ in range(n)]
        self.aircraft_at: list[list[str]] = [[] for _ in range(n)]
        for i, s in enumerate(self.slots):
            for p in problem.pilots:
                if _inside(avail.get(p.id, ()), s.start, s.end) and not _overlaps(self.base_busy.get(p.id, ()), s.start, s.end):
                    self.people_at[i].append(p.id)
            for a in problem.aircraft:
                if (
                    a.dual_controls
                    and (a.airfield is None or a.airfield == s.airfield)
                    and _inside(avail.get(a.id, ()), s.start, s.end)
                    and not _overlaps(self.base_busy.get(a.id, ()), s.start, s.end)
                ):
                    self.aircraft_at[i].append(a.id)
        # slots overlapping each slot in time (itself included): a session in one blocks its resources in these
        self.conflicts: list[tuple[int, ...]] = [
            tuple(j for j in range(n) if self.slots[j].start < si.end and si.start < self.slots[j].end)
            for si in self.slots
        ]
        self._sp: dict = {}
        self._pf: dict = {}
        self.value: dict[tuple[str, int], float] = {}
        self.served: dict[tuple[str, int], tuple[str, ...]] = {}
        for pid in self.needing:
            p = self.pilots[pid]
            for i, s in enumerate(self.slots):
                served = tuple(nd.id for nd in p.needs if need_value(nd, s.day) > 0)
                v = sum(need_value(nd, s.day) for nd in p.needs)
                if served:
                    v += slot_quality(s)
                self.value[(pid, i)] = v
                self.served[(pid, i)] = served
        self.pf_slots: dict[str, list[int]] = {}
        for pid in self.needing:
            p = self.pilots[pid]
            self.pf_slots[pid] = [
                i
                for i, s in enumerate(self.slots)
                if self.value[(pid, i)] > 0
                and pid in self.people_at[i]
                and (s.daylight or p.allow_night)
                and s.minutes >= p.session_minutes
            ]
        # static eligibility per slot: aircraft each pilot in need may fly, people eligible as safety pilot per aircraft
        self.pf_planes: dict[tuple[str, int], list[str]] = {
            (pid, i): [a for a in self.aircraft_at[i] if self.pf_ok(pid, a, self.slots[i].day)]
            for pid in self.needing
            for i in self.pf_slots[pid]
        }
        self.sp_at: list[dict[str, frozenset]] = [
            {a: frozenset(q for q in self.people_at[i] if self.sp_ok(q, a, self.slots[i].day)) for a in self.aircraft_at[i]}
            for i in range(n)
        ]
        self.pilots_at: list[list[str]] = [[] for _ in range(n)]  # pilots in need who could fly in slot i
        for pid in self.needing:
            for i in self.pf_slots[pid]:
                self.pilots_at[i].append(pid)
        self.ub = {pid: max((self.value[(pid, i)] for i in self.pf_slots[pid]), default=0.0) + _PF_BOUND_EXTRA for pid in self.needing}
        self.net0: dict[str, int] = {}
        for (sp, pf), k in problem.balance.items():
            self.net0[sp] = self.net0.get(sp, 0) + k
            self.net0[pf] = self.net0.get(pf, 0) - k

    def sp_ok(self, person: str, aircraft: str, day: date) -> bool:
        key = (person, aircraft, day)
        ok = self._sp.get(key)
        if ok is None:
            ok = not safety_pilot_refusals(self.pilots[person], self.aircraft[aircraft], day)
            self._sp[key] = ok
        return ok

    def pf_ok(self, person: str, aircraft: str, day: date) -> bool:
        key = (person, aircraft, day)
        ok = self._pf.get(key)
        if ok is None:
            ok = not pilot_flying_refusals(self.pilots[person], self.aircraft[aircraft], day)
            self._pf[key] = ok
        return ok


@dataclass
class _Session:
    slot: int
    aircraft: str
    pfs: tuple[str, ...]  # one or two
    sps: tuple[str, ...]  # safety pilot per leg
    value: float  # base value (without fairness)


class _State:
    def __init__(self, model: _Model):
        self.m = model
        self.sessions: list[_Session] = []
        self.blocked: dict[str, dict[int, int]] = {}  # resource -> slot index -> sessions blocking it
        self.flying: dict[str, _Session] = {}
        self.net: dict[str, int] = dict(model.net0)
        self._abs0 = sum(abs(v) for v in model.net0.values())
        self._abs = self._abs0
        self._base = 0.0
        self.work = 0  # options evaluated, people scanned, sessions tried: a deterministic measure of search effort

    def copy_sessions(self) -> list[_Session]:
        return list(self.sessions)

    def is_free(self, rid: str, slot: int) -> bool:
        b = self.blocked.get(rid)
        return not b or not b.get(slot)

    def fair_delta(self, sp: str, pf: str) -> float:
        a, b = self.net.get(sp, 0), self.net.get(pf, 0)
        return W_FAIR * ((abs(a) - abs(a + 1)) + (abs(b) - abs(b - 1)))

    def add(self, ses: _Session) -> None:
        self.sessions.append(ses)
        conflicts = self.m.conflicts[ses.slot]
        for rid in set(ses.pfs + ses.sps + (ses.aircraft,)):
            b = self.blocked.setdefault(rid, {})
            for j in conflicts:
                b[j] = b.get(j, 0) + 1
        for pf in ses.pfs:
            self.flying[pf] = ses
        self._base += ses.value
        if len(ses.pfs) == 1:
            self._shift(ses.sps[0], 1)
            self._shift(ses.pfs[0], -1)

    def _shift(self, person: str, by: int) -> None:
        old = self.net.get(person, 0)
        self.net[person] = old + by
        self._abs += abs(old + by) - abs(old)

    def remove(self, ses: _Session) -> None:
        self.sessions.remove(ses)
        conflicts = self.m.conflicts[ses.slot]
        for rid in set(ses.pfs + ses.sps + (ses.aircraft,)):
            b = self.blocked[rid]
            for j in conflicts:
                b[j] -= 1
        for pf in ses.pfs:
            del self.flying[pf]
        self._base -= ses.value
        if len(ses.pfs) == 1:
            self._shift(ses.sps[0], -1)
            self._shift(ses.pfs[0], 1)

    def objective(self) -> float:
        return self._base + W_FAIR * (self._abs0 - self._abs)

    # -- options for one pilot

    def options(self, pid: str, mutual_with: set | None = None, every_choice: bool = False):
        """Yield (value incl. fairness delta, _Session) for feasible ways ``pid`` can fly now.

        ``mutual_with``: if given, only these pilots are considered as mutual
        partners. Without ``every_choice`` only the best safety pilot per slot
        (one whose balance is negative, else the first eligible) and the first
        suitable aircraft are offered; with it, every safety pilot and aircraft
        (the exhaustive search needs them all).
        """
        m = self.m
        p = m.pilots[pid]
        blocked = self.blocked
        for i in m.pf_slots[pid]:
            if blocked.get(pid, {}).get(i):
                continue
            slot = m.slots[i]
            planes = [a for a in m.pf_planes[(pid, i)] if not blocked.get(a, {}).get(i)]
            if not planes:
                continue
            sp_at = m.sp_at[i]
            v_p = m.value[(pid, i)]
            for q in m.pilots_at[i]:
                if q == pid or q in self.flying or blocked.get(q, {}).get(i):
                    continue
                if mutual_with is not None and q not in mutual_with:
                    continue
                if slot.minutes < p.session_minutes + m.pilots[q].session_minutes:
                    continue
                q_planes = m.pf_planes[(q, i)]
                for a in planes:
                    if a in q_planes and q in sp_at[a] and pid in sp_at[a]:
                        val = v_p + m.value[(q, i)] + W_MUTUAL
                        yield val, _Session(i, a, (pid, q), (q, pid), val)
                        if not every_choice:
                            break
            chosen = None
            for q in m.people_at[i]:
                if q == pid or blocked.get(q, {}).get(i):
                    continue
                for a in planes:
                    if q in sp_at[a]:
                        if every_choice:
                            yield v_p + self.fair_delta(q, pid), _Session(i, a, (pid,), (q,), v_p)
                            continue
                        if chosen is None or self.net.get(q, 0) < 0:
                            chosen = (q, a)
                        break
                if chosen is not None and not every_choice and self.net.get(chosen[0], 0) < 0:
                    break
            if chosen is not None:
                q, a = chosen
                yield v_p + self.fair_delta(q, pid), _Session(i, a, (pid,), (q,), v_p)

    def best_option(self, pid: str):
        best = None
        for val, ses in self.options(pid):
            self.work += 1
            if best is None or val > best[0]:
                best = (val, ses)
        return best


# --------------------------------------------------------------- the solver


def _deadline(model: _Model, pid: str) -> date:
    p = model.pilots[pid]
    hard = [n.due for n in p.needs if not n.overdue]
    soft = [n.due for n in p.needs if n.overdue]
    return min(hard + soft)


def _greedy(model: _Model, order: Sequence[str]) -> _State:
    st = _State(model)
    for pid in order:
        if pid in st.flying:
            continue
        best = st.best_option(pid)
        if best is not None:
            st.add(best[1])
    return st


def _fill(st: _State, pids: Sequence[str]) -> None:
    for pid in pids:
        if pid in st.flying:
            continue
        best = st.best_option(pid)
        if best is not None:
            st.add(best[1])


def _improve(st: _State, order: Sequence[str], max_rounds: int, pair_moves: bool) -> None:
    """Local improvement; every move is kept only when the objective rises.

    * remove one session (with ``pair_moves`` also two), re-insert the freed
      and the affected unscheduled pilots greedily in a few orders;
    * with ``pair_moves`` (small instances) also a one-step look-ahead: remove a
      session and force each alternative option of its first pilot, then fill
      greedily.
    """
    for _ in range(max_rounds):
        improved = False
        current = st.objective()
        for ses in list(st.sessions):
            if ses not in st.sessions:
                continue
            groups = [[ses]]
            if pair_moves:
                groups += [[ses, other] for other in st.sessions if other != ses]
            for group in groups:
                if any(g not in st.sessions for g in group):
                    continue
                if _try_refill(st, group, order, current):
                    current = st.objective()
                    improved = True
                    break
            if pair_moves and ses in st.sessions and _try_lookahead(st, ses, order, current):
                current = st.objective()
                improved = True
        if not improved:
            break


def _touched(st: _State, group: Sequence[_Session], order: Sequence[str], freed: Sequence[str]) -> list[str]:
    touched = {p for g in group for j in st.m.conflicts[g.slot] for p in st.m.pilots_at[j]}
    return [p for p in order if p in touched and p not in st.flying and p not in freed]


def _try_refill(st: _State, group: list[_Session], order: Sequence[str], current: float) -> bool:
    for g in group:
        st.remove(g)
    freed = [pf for g in group for pf in g.pfs]
    unscheduled = _touched(st, group, order, freed)
    mark = len(st.sessions)
    for attempt in (freed + unscheduled, unscheduled + freed, list(reversed(freed)) + unscheduled):
        _fill(st, attempt)
        if st.objective() > current + 1e-9:
            return True
        for extra in st.sessions[mark:]:
            st.remove(extra)
    for g in group:
        st.add(g)
    return False


def _try_lookahead(st: _State, ses: _Session, order: Sequence[str], current: float) -> bool:
    st.remove(ses)
    freed = list(ses.pfs)
    unscheduled = _touched(st, [ses], order, freed)
    mark = len(st.sessions)
    for _val, forced in list(st.options(freed[0])):
        if forced.slot == ses.slot and forced.pfs == ses.pfs and forced.sps == ses.sps:
            continue
        st.add(forced)
        _fill(st, freed + unscheduled)
        if st.objective() > current + 1e-9:
            return True
        for extra in st.sessions[mark:]:
            st.remove(extra)
    st.add(ses)
    return False


def _catalogue(model: _Model) -> dict[str, list[_Session]]:
    """Every session each pilot in need could fly in an empty plan (every slot, aircraft, partner)."""
    empty = _State(model)
    return {pid: [ses for _val, ses in empty.options(pid, every_choice=True)] for pid in model.needing}


def _resources(ses: _Session) -> set[str]:
    return {*ses.pfs, *ses.sps, ses.aircraft}


def _try_insert(st: _State, cand: _Session, order: Sequence[str], current: float, deep: bool) -> bool:
    """Ejection move: put ``cand`` in, take out every session that clashes with it, re-fill greedily."""
    m = st.m
    before = list(st.sessions)
    res = _resources(cand)
    clash = [
        g for g in st.sessions
        if set(g.pfs) & set(cand.pfs) or (cand.slot in m.conflicts[g.slot] and _resources(g) & res)
    ]
    for g in clash:
        st.remove(g)
    st.add(cand)
    freed = [pf for g in clash for pf in g.pfs if pf not in cand.pfs]
    unscheduled = _touched(st, clash + [cand], order, freed)
    mark = len(st.sessions)
    for attempt in (freed + unscheduled, unscheduled + freed):
        _fill(st, attempt)
        if st.objective() > current + 1e-9:
            return True
        for extra in st.sessions[mark:]:
            st.remove(extra)
    if deep:
        # the greedy re-fill alone was not enough: improve the perturbed plan locally before judging it
        _fill(st, freed + unscheduled)
        _improve(st, order, 1, True)
        if st.objective() > current + 1e-9:
            return True
        _restore(st, before)
        return False
    st.remove(cand)
    for g in clash:
        st.add(g)
    return False


def _restore(st: _State, sessions: Sequence[_Session]) -> None:
    for g in list(st.sessions):
        st.remove(g)
    for g in sessions:
        st.add(g)


def _pilot_worth(st: _State, pid: str) -> float:
    ses = st.flying.get(pid)
    if ses is None:
        return 0.0
    return st.m.value[(pid, ses.slot)] + (W_MUTUAL / 2 if len(ses.pfs) == 2 else 0.0)


def _promising(st: _State, cand: _Session) -> bool:
    """Whether ``cand`` gives its own pilots more than they have now (others may lose; the move judges that)."""
    gain = sum(st.m.value[(pf, cand.slot)] - _pilot_worth(st, pf) for pf in cand.pfs)
    return gain + (W_MUTUAL if len(cand.pfs) == 2 else 0.0) > 1e-9


def _insertion_pass(st: _State, order: Sequence[str], catalogue: dict[str, list[_Session]]) -> bool:
    improved = False
    current = st.objective()
    for pid in order:
        for cand in catalogue[pid]:
            if cand in st.sessions or not _promising(st, cand):
                continue
            if _try_insert(st, cand, order, current, False):
                current = st.objective()
                improved = True
    return improved


def _deep_pass(st: _State, order: Sequence[str], catalogue: dict[str, list[_Session]], budget: int) -> None:
    """Ejection moves followed by local improvement of the perturbed plan, most promising first.

    Costlier than ``_insertion_pass``: stops once the state has evaluated ``budget`` options.
    """
    def gain(cand: _Session) -> float:
        return sum(st.m.value[(pf, cand.slot)] - _pilot_worth(st, pf) for pf in cand.pfs)

    cands = sorted(
        (c for pid in order for c in catalogue[pid] if c not in st.sessions and _promising(st, c)),
        key=lambda c: -gain(c),
    )
    current = st.objective()
    for cand in cands:
        if st.work >= budget:
            break
        if cand in st.sessions or not _promising(st, cand):
            continue
        if _try_insert(st, cand, order, current, True):
            current = st.objective()


# ------------------------------------------- neighbourhood re-optimisation
#
# Large-neighbourhood search: take one session, two related sessions or (on plans of up to ``LNS_TRIPLES``
# sessions) three out, then re-plan by branch and bound the pilots they freed together with the unscheduled
# pilots who could use the freed slots (at most ``SUB_PILOTS`` pilots), every other session staying where it
# is. A re-plan may spend ``SUB_WORK`` and the whole pass ``LNS_WORK`` units of ``_State.work`` (options
# generated, people scanned, sessions tried), so its effort has a fixed ceiling whatever the size of the
# school; a re-plan is kept only when the objective rises.


def _planes_by_class(m: _Model, planes: Sequence[str], k: int) -> list[str]:
    """At most ``k`` aircraft of each category and class (aircraft of one class are interchangeable here)."""
    seen: dict[str, int] = {}
    out = []
    for a in planes:
        cc = m.aircraft[a].category_class
        if seen.get(cc, 0) < k:
            seen[cc] = seen.get(cc, 0) + 1
            out.append(a)
    return out


def _sub_options(st: _State, pid: str, partners: Sequence[str], group: frozenset, k: int):
    """Feasible sessions for ``pid`` in the current state, for the neighbourhood search.

    Mutual sessions only with ``partners`` (pilots of the neighbourhood not placed yet). To keep the search
    small, safety pilots are every eligible pilot of the neighbourhood ``group`` and only the ``k`` others
    best for the balance, and at most ``k`` aircraft of each category and class are offered (the
    neighbourhood has fewer than ``k`` other sessions to compete with for them).
    """
    m = st.m
    p = m.pilots[pid]
    out = []
    for i in m.pf_slots[pid]:
        if not st.is_free(pid, i):
            continue
        slot = m.slots[i]
        planes = _planes_by_class(m, [a for a in m.pf_planes[(pid, i)] if st.is_free(a, i)], k)
        if not planes:
            continue
        sp_at = m.sp_at[i]
        v_p = m.value[(pid, i)]
        for q in partners:
            q_planes = m.pf_planes.get((q, i))
            if not q_planes or not st.is_free(q, i) or slot.minutes < p.session_minutes + m.pilots[q].session_minutes:
                continue
            for a in planes:
                if a in q_planes and q in sp_at[a] and pid in sp_at[a]:
                    val = v_p + m.value[(q, i)] + W_MUTUAL
                    out.append((val, len(out), _Session(i, a, (pid, q), (q, pid), val)))
        free = [q for q in m.people_at[i] if q != pid and st.is_free(q, i)]
        st.work += len(free)
        for a in planes:
            inside, others = [], []
            for n, q in enumerate(free):
                if q in sp_at[a]:
                    (inside if q in group else others).append((-st.fair_delta(q, pid), n, q))
            others.sort()
            for neg, _n, q in inside + others[:k]:
                out.append((v_p - neg, len(out), _Session(i, a, (pid,), (q,), v_p)))
    st.work += len(out)
    return [(val, ses) for val, _n, ses in out]


def _open_bound(st: _State, pid: str) -> float:
    """An upper bound of what ``pid`` can add to the current state, like ``_Model.ub`` but over the slots
    still open to the pilot and an aircraft (adding sessions only closes slots, so it stays valid)."""
    m = st.m
    open_values = [
        m.value[(pid, i)] for i in m.pf_slots[pid]
        if st.is_free(pid, i) and any(st.is_free(a, i) for a in m.pf_planes[(pid, i)])
    ]
    return max(open_values) + _PF_BOUND_EXTRA if open_values else 0.0


def _subsolve(st: _State, pilots: Sequence[str], incumbent: float, limit: int) -> tuple[float, list[_Session]]:
    """Sessions to add for ``pilots`` to the current state worth more than ``incumbent``, by branch and bound.

    Stops early once ``st.work`` reaches ``limit``; returns (objective gain, sessions), the sessions empty
    when nothing beats the incumbent, and leaves the state's sessions as they were.
    """
    m = st.m
    ub = {q: _open_bound(st, q) for q in pilots}
    order = sorted(pilots, key=lambda q: -ub[q])
    group = frozenset(pilots)
    k = len(pilots)
    best: list = [incumbent, []]
    chosen: list[_Session] = []

    def dfs(n: int, value: float) -> None:
        if value > best[0] + 1e-9:
            best[0], best[1] = value, list(chosen)
        if n == len(order) or st.work >= limit:
            return
        if value + sum(ub[q] for q in order[n:] if q not in st.flying) <= best[0] + 1e-9:
            return
        pid = order[n]
        if pid in st.flying:
            dfs(n + 1, value)
            return
        later = [q for q in order[n + 1 :] if q not in st.flying]
        rest = sum(ub[q] for q in later)
        # most promising first: what an option adds beyond the bound of the partner it takes along
        options = sorted(
            ((val - sum(ub[q] for q in ses.pfs[1:]), n_opt, val, ses)
             for n_opt, (val, ses) in enumerate(_sub_options(st, pid, later, group, k))),
            key=lambda o: (-o[0], o[1]),
        )
        for promise, _n_opt, val, ses in options:
            if st.work >= limit:
                break
            if value + promise + rest <= best[0] + 1e-9:
                break  # sorted: none of the remaining options can beat the incumbent either
            st.work += 1
            st.add(ses)
            chosen.append(ses)
            dfs(n + 1, value + val)
            chosen.pop()
            st.remove(ses)
        dfs(n + 1, value)

    dfs(0, 0.0)
    return best[0], best[1]


def _try_replan(st: _State, ruin: Sequence[_Session], order: Sequence[str], limit: int) -> bool:
    """Take ``ruin`` out and re-plan its neighbourhood by branch and bound; keep it only if the objective rises."""
    current = st.objective()
    st.work += 1
    for g in ruin:
        st.remove(g)
    freed = [pf for g in ruin for pf in g.pfs]
    pilots = (freed + _touched(st, ruin, order, freed))[:SUB_PILOTS]
    base = st.objective()
    _gain, sessions = _subsolve(st, pilots, current - base, min(limit, st.work + SUB_WORK))
    if sessions:
        for g in sessions:
            st.add(g)
        if st.objective() > current + 1e-9:
            return True
        for g in sessions:
            st.remove(g)
    for g in ruin:
        st.add(g)
    return False


def _related(m: _Model, a: _Session, b: _Session) -> bool:
    """Whether ``a`` and ``b`` interact directly: overlapping slots, a person in both, or a pilot of one
    who could fly in the other's slot (re-planning unrelated sessions together rarely finds more)."""
    if a.slot in m.conflicts[b.slot] or set(a.pfs + a.sps) & set(b.pfs + b.sps):
        return True
    return any((pf, b.slot) in m.pf_planes for pf in a.pfs) or any((pf, a.slot) in m.pf_planes for pf in b.pfs)


def _neighbourhoods(st: _State, limit: int):
    """Ruins to try, lazily (each relation test counts as work, none once ``st.work`` reaches ``limit``):
    each session, each two related sessions, and on plans of up to ``LNS_TRIPLES`` sessions each three
    sessions linked by two relations."""
    m = st.m
    ses = list(st.sessions)
    for a in ses:
        yield (a,)
    for n in range(len(ses)):
        for k in range(n + 1, len(ses)):
            if st.work >= limit:
                return
            st.work += 1
            if _related(m, ses[n], ses[k]):
                yield (ses[n], ses[k])
    if len(ses) <= LNS_TRIPLES:
        rel = {(n, k) for n in range(len(ses)) for k in range(n + 1, len(ses)) if _related(m, ses[n], ses[k])}
        for n in range(len(ses)):
            for k in range(n + 1, len(ses)):
                for j in range(k + 1, len(ses)):
                    if ((n, k) in rel) + ((n, j) in rel) + ((k, j) in rel) >= 2:
                        yield (ses[n], ses[k], ses[j])


def _lns(st: _State, order: Sequence[str], limit: int) -> None:
    """Neighbourhood re-optimisation until no ruin improves the plan or ``st.work`` reaches ``limit``."""
    while st.work < limit:
        improved = False
        for ruin in _neighbourhoods(st, limit):
            if st.work >= limit:
                break
            if any(g not in st.sessions for g in ruin):
                continue
            improved = _try_replan(st, ruin, order, limit) or improved
        if not improved:
            break


def _orders(model: _Model) -> list[list[str]]:
    by_deadline = sorted(model.needing, key=lambda p: (_deadline(model, p), len(model.pf_slots[p]), p))
    by_options = sorted(model.needing, key=lambda p: (len(model.pf_slots[p]), _deadline(model, p), p))
    by_value = sorted(model.needing, key=lambda p: (-model.ub[p], p))
    out = []
    for o in (by_deadline, by_options, by_value):
        if o not in out:
            out.append(o)
    return out


def plan(problem: Problem, max_rounds: int = 3, pair_moves: bool | None = None) -> SchedulePlan:
    """Propose practice sessions for ``problem`` (see the module docstring for constraints and objective).

    ``max_rounds`` bounds the local-improvement passes; ``pair_moves`` (default:
    on for up to 40 pilots in need) also tries removing two sessions at once,
    and the ejection moves (``_insertion_pass``, ``_deep_pass``). The
    large-neighbourhood search (``_lns``) runs last on every instance, within
    its fixed effort bound.
    """
    model = _Model(problem)
    if pair_moves is None:
        pair_moves = len(model.needing) <= 40
    best: _State | None = None
    catalogue = _catalogue(model) if pair_moves else None
    best_order: Sequence[str] = ()
    for order in _orders(model):
        st = _greedy(model, order)
        _improve(st, order, max_rounds, pair_moves)
        if catalogue is not None:
            for _ in range(max_rounds):
                if not _insertion_pass(st, order, catalogue):
                    break
                _improve(st, order, max_rounds, pair_moves)
        if best is None or st.objective() > best.objective() + 1e-9:
            best, best_order = st, order
    if best is None:
        best = _State(model)
    elif catalogue is not None:
        budget = best.work + DEEP_WORK
        for _ in range(max_rounds):
            before = best.objective()
            _deep_pass(best, best_order, catalogue, budget)
            if best.work >= budget or best.objective() <= before + 1e-9:
                break
    _lns(best, best_order, best.work + LNS_WORK)
    return _report(model, best)


def exhaustive_best(problem: Problem) -> float:
    """The optimum of the objective over every feasible plan (branch and bound; small instances only)."""
    model = _Model(problem)
    order = sorted(model.needing, key=lambda p: -model.ub[p])
    st = _State(model)
    best = [0.0]

    def dfs(k: int, value: float) -> None:
        if value > best[0]:
            best[0] = value
        if k == len(order):
            return
        bound = value + sum(model.ub[p] for p in order[k:] if p not in st.flying)
        if bound <= best[0] + 1e-9:
            return
        pid = order[k]
        if pid in st.flying:
            dfs(k + 1, value)
            return
        later = {q for q in order[k + 1 :] if q not in st.flying}
        for val, ses in list(st.options(pid, mutual_with=later, every_choice=True)):
            st.add(ses)
            dfs(k + 1, value + val)
            st.remove(ses)
        dfs(k + 1, value)

    dfs(0, 0.0)
    return best[0]


# ------------------------------------------------------------- reporting


def _fmt_slot(s: SlotInfo) -> str:
    vmc = "VMC likelihood unknown" if s.vmc is None else f"VMC likelihood {s.vmc:.0%}"
    light = "daylight" if s.daylight else "night (allowed by the pilot's setting)"
    return f"{s.start.isoformat(timespec='minutes')} to {s.end.strftime('%H:%M')} at {s.airfield}, {light}, {vmc}"


def _report(model: _Model, st: _State) -> SchedulePlan:
    balance: dict[tuple[str, str], int] = dict(model.problem.balance)
    sessions: list[ProposedSession] = []
    for ses in sorted(st.sessions, key=lambda x: (model.slots[x.slot].start, x.aircraft)):
        slot = model.slots[ses.slot]
        legs = tuple(Leg(pf, sp, model.served[(pf, ses.slot)]) for pf, sp in zip(ses.pfs, ses.sps))
        bits = []
        for pf in ses.pfs:
            p = model.pilots[pf]
            for nd in p.needs:
                if nd.id in model.served[(pf, ses.slot)]:
                    if nd.overdue:
                        bits.append(f"{pf}: {nd.label or nd.id} is overdue since {nd.due.isoformat()}")
                    else:
                        bits.append(f"{pf}: {nd.label or nd.id} due {nd.due.isoformat()}, {(nd.due - slot.day).days} days of margin")
        why_slot = (
            f"{_fmt_slot(slot)}; {'; '.join(bits)}; highest-valued feasible slot left when the earliest deadlines were placed first"
        )
        if len(ses.pfs) == 2:
            a, b = ses.pfs
            why_partner = (
                f"mutual session: {a} and {b} both need practice and swap seats (each the other's safety pilot, "
                f"both eligible under 14 CFR 91.109(c)); the who-flew-for-whom balance is unchanged"
            )
            balance[(b, a)] = balance.get((b, a), 0) + 1
            balance[(a, b)] = balance.get((a, b), 0) + 1
        else:
            pf, sp = ses.pfs[0], ses.sps[0]
            given = sum(k for (x, _), k in model.problem.balance.items() if x == sp)
            had = sum(k for (_, y), k in model.problem.balance.items() if y == sp)
            owed = model.problem.balance.get((pf, sp), 0) - model.problem.balance.get((sp, pf), 0)
            sp_p = model.pilots[sp]
            why_partner = (
                f"safety pilot {sp}: {sp_p.certificate} certificate, {model.aircraft[ses.aircraft].category_class} rating, "
                f"medical or BasicMed valid on {slot.day.isoformat()}, willing (14 CFR 91.109(c)); "
                f"before this plan {sp} had flown safety pilot {given} times and had one {had} times"
                + (f"; {pf} had flown for {sp} {owed} more times than the reverse" if owed > 0 else "")
            )
            balance[(sp, pf)] = balance.get((sp, pf), 0) + 1
        sessions.append(ProposedSession(slot, ses.aircraft, legs, ses.value, why_slot, why_partner))

    unmet: list[UnmetNeed] = []
    for pid in model.needing:
        p = model.pilots[pid]
        ses = st.flying.get(pid)
        served = set(model.served[(pid, ses.slot)]) if ses else set()
        reason_all = None if ses else _why_not(model, st, pid)
        for nd in p.needs:
            if nd.id in served:
                continue
            if ses:
                reason = (
                    f"the session on {model.slots[ses.slot].day.isoformat()} is after the due date; "
                    "no earlier feasible slot was left"
                )
            else:
                reason = reason_all
            unmet.append(UnmetNeed(pid, nd.id, nd.due, reason))
    return SchedulePlan(tuple(sessions), tuple(unmet), st.objective(), balance)


def _why_not(model: _Model, st: _State, pid: str) -> str:
    p = model.pilots[pid]
    slots = [i for i, s in enumerate(model.slots) if model.value.get((pid, i), 0) > 0]
    if not slots:
        return "no candidate slot on or before the due date"
    avail = [i for i in slots if pid in model.people_at[i]]
    if not avail:
        return "not available (or already booked) in any candidate slot before the due date"
    light = [i for i in avail if model.slots[i].daylight or p.allow_night]
    if not light:
        return "available only in night slots and the pilot's setting does not allow night practice"
    long_enough = [i for i in light if model.slots[i].minutes >= p.session_minutes]
    if not long_enough:
        return f"no available slot is long enough ({p.session_minutes} minutes needed)"
    flyable = [(i, a) for i in long_enough for a in model.aircraft_at[i] if model.pf_ok(pid, a, model.slots[i].day)]
    if not flyable:
        refusals = {
            r for i in long_enough for a in model.problem.aircraft for r in pilot_flying_refusals(p, a, model.slots[i].day)
        }
        if refusals:
            return "cannot fly any available aircraft: " + "; ".join(sorted(refusals))
        return "no aircraft with dual controls is available in those slots"
    eligible = [
        (i, a) for i, a in flyable for q in model.people_at[i] if q != pid and model.sp_ok(q, a, model.slots[i].day)
    ]
    if not eligible:
        refusals = sorted({
            f"{q}: {r}" for i, a in flyable for q in model.people_at[i] if q != pid
            for r in safety_pilot_refusals(model.pilots[q], model.aircraft[a], model.slots[i].day)
        })
        if refusals:
            return "no eligible safety pilot is available with the pilot: " + "; ".join(refusals[:6])
        return "nobody else is available in the pilot's slots to act as safety pilot"
    return "every feasible slot, aircraft or safety pilot is taken by sessions for earlier deadlines"


def objective_of(problem: Problem, sessions: Sequence[ProposedSession]) -> float:
    """The objective of any list of sessions (constraints not checked), for tests and benchmarks."""
    model = _Model(problem)
    st = _State(model)
    index = {s: i for i, s in enumerate(model.slots)}
    for ses in sessions:
        i = index[ses.slot]
        pfs = tuple(leg.pilot_flying for leg in ses.legs)
        sps = tuple(leg.safety_pilot for leg in ses.legs)
        value = sum(model.value[(pf, i)] for pf in pfs) + (W_MUTUAL if len(pfs) == 2 else 0.0)
        st.add(_Session(i, ses.aircraft, pfs, sps, value))
    return st.objective()
