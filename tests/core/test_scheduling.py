"""Practice scheduler: hard constraints checked independently, quality against the exhaustive optimum."""

from __future__ import annotations

from datetime import date, datetime, time, timedelta
from zoneinfo import ZoneInfo

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner.core import scheduling as s

TZ = ZoneInfo("America/Denver")
DAY0 = date(2025, 6, 2)
SEL = "airplane/single-engine-land"
MEL = "airplane/multi-engine-land"
FIELD = "XQA1"  # invented airfield


def at(day: int, hour: int, minute: int = 0) -> datetime:
    return datetime.combine(DAY0 + timedelta(days=day), time(hour, minute), tzinfo=TZ)


def slot(day: int, hour: int, hours: int = 3, daylight: bool = True, vmc: float | None = 0.8) -> s.SlotInfo:
    return s.SlotInfo(at(day, hour), at(day, hour) + timedelta(hours=hours), FIELD, daylight, vmc)


def always(days: int = 30) -> tuple[s.Window, ...]:
    return (s.Window(at(-1, 0), at(days, 0)),)


def pilot(id: str, needs=(), **kw) -> s.PilotInfo:
    kw.setdefault("category_classes", (SEL,))
    kw.setdefault("medical_until", DAY0 + timedelta(days=365))
    kw.setdefault("session_minutes", 90)
    return s.PilotInfo(id=id, needs=tuple(needs), **kw)


def need(id: str, due_day: int, overdue: bool = False) -> s.Need:
    return s.Need(id=id, due=DAY0 + timedelta(days=due_day), overdue=overdue)


PLANE = s.Aircraft("N-TEST1", SEL, dual_controls=True, airfield=FIELD)  # invented registration


def problem(pilots, slots, aircraft=(PLANE,), availability=None, bookings=(), balance=None) -> s.Problem:
    if availability is None:
        availability = {x.id: always() for x in list(pilots) + list(aircraft)}
    return s.Problem(tuple(pilots), tuple(aircraft), tuple(slots), availability, tuple(bookings), balance or {})


# ------------------------------------------------- an independent constraint checker

SP_CERTS = {"private", "commercial", "atp"}  # 14 CFR 91.109(c): at least a private pilot certificate


def violations(prob: s.Problem, result: s.SchedulePlan) -> list[str]:
    """Every hard constraint, re-checked from the problem data alone."""
    out: list[str] = []
    pilots = {p.id: p for p in prob.pilots}
    planes = {a.id: a for a in prob.aircraft}
    busy: dict[str, list[tuple[datetime, datetime, str]]] = {}
    for b in prob.bookings:
        busy.setdefault(b.resource, []).append((b.start, b.end, "booking"))
    flown: list[str] = []
    for n, ses in enumerate(result.sessions):
        sl, plane = ses.slot, planes[ses.aircraft]
        day = sl.start.date()
        if sl not in prob.slots:
            out.append(f"session {n}: slot not among the candidates")
        for rid in set(ses.people) | {ses.aircraft}:
            for a, b, what in busy.get(rid, []):
                if a < sl.end and sl.start < b:
                    out.append(f"session {n}: {rid} double-booked with {what}")
            busy.setdefault(rid, []).append((sl.start, sl.end, f"session {n}"))
            if not any(w.start <= sl.start and sl.end <= w.end for w in prob.availability.get(rid, ())):
                out.append(f"session {n}: {rid} not available")
        if not plane.dual_controls:
            out.append(f"session {n}: no dual controls (14 CFR 91.109)")
        if plane.airfield not in (None, sl.airfield):
            out.append(f"session {n}: aircraft based elsewhere")
        needed_minutes = 0
        for leg in ses.legs:
            pf, sp = pilots[leg.pilot_flying], pilots[leg.safety_pilot]
            flown.append(pf.id)
            needed_minutes += pf.session_minutes
            if pf.id == sp.id:
                out.append(f"session {n}: own safety pilot")
            if not sl.daylight and not pf.allow_night:
                out.append(f"session {n}: night session for {pf.id}")
            for who, role in ((sp, "safety pilot"), (pf, "pilot flying")):
                if who.certificate not in SP_CERTS:
                    out.append(f"session {n}: {role} {who.id} certificate {who.certificate}")
                if plane.category_class not in who.category_classes:
                    out.append(f"session {n}: {role} {who.id} lacks {plane.category_class}")
                if not any(d is not None and d >= day for d in (who.medical_until, who.basicmed_until)):
                    out.append(f"session {n}: {role} {who.id} has no medical on {day}")
            if not sp.willing_safety_pilot:
                out.append(f"session {n}: {sp.id} not willing")
        if sl.end - sl.start < timedelta(minutes=needed_minutes):
            out.append(f"session {n}: slot too short")
        if ses.is_mutual and {ses.legs[0].pilot_flying, ses.legs[0].safety_pilot} != {
            ses.legs[1].pilot_flying, ses.legs[1].safety_pilot
        }:
            out.append(f"session {n}: a mutual session must swap the same two seats")
    if len(flown) != len(set(flown)):
        out.append("a pilot flies in two sessions")
    return out


# ---------------------------------------------------------------- eligibility rows

ELIGIBILITY = [
    pytest.param(dict(), PLANE, (), id="private, SEL rating, medical, willing: eligible (14 CFR 91.109(c))"),
    pytest.param(dict(certificate="student"), PLANE, ("private pilot certificate",),
                 id="student certificate refused (14 CFR 91.109(c): at least private)"),
    pytest.param(dict(certificate="recreational"), PLANE, ("private pilot certificate",),
                 id="recreational certificate refused (14 CFR 91.109(c))"),
    pytest.param(dict(), s.Aircraft("N-TEST2", MEL), ("multi-engine-land rating",),
                 id="category right, class wrong refused (14 CFR 91.109(c): category and class)"),
    pytest.param(dict(medical_until=DAY0 - timedelta(days=1)), PLANE, ("no valid medical",),
                 id="expired medical refused (required crewmember; from memory)"),
    pytest.param(dict(medical_until=None, basicmed_until=DAY0), PLANE, (),
                 id="BasicMed valid on the day accepted (from memory)"),
    pytest.param(dict(willing_safety_pilot=False), PLANE, ("not willing",), id="unwilling refused"),
    pytest.param(dict(), s.Aircraft("N-TEST3", SEL, dual_controls=False), ("dual controls",),
                 id="no fully functioning dual controls refused (14 CFR 91.109)"),
]


@pytest.mark.parametrize(("fields", "plane", "words"), ELIGIBILITY)
def test_safety_pilot_eligibility(fields, plane, words):
    refusals = s.safety_pilot_refusals(pilot("sp", **fields), plane, DAY0)
    assert len(refusals) == len(words)
    for word, why in zip(words, refusals):
        assert word in why


# ------------------------------------------------------------------ behaviour


def test_two_pilots_in_need_are_paired_to_swap_seats():
    prob = problem(
        [pilot("ana", [need("a", 10)]), pilot("ben", [need("b", 10)]), pilot("cyd")],
        [slot(1, 9, hours=4)],
    )
    result = s.plan(prob)
    (ses,) = result.sessions
    assert ses.is_mutual and set(ses.people) == {"ana", "ben"}
    assert "swap seats" in ses.why_partner
    assert result.unmet == () and violations(prob, result) == []


def test_fairness_picks_the_safety_pilot_who_has_had_more_than_given():
    balance = {("eve", "x"): 3, ("x", "dan"): 2}  # eve has given 3; dan has received 2
    prob = problem([pilot("ana", [need("a", 10)]), pilot("dan"), pilot("eve"), pilot("x")], [slot(1, 9)],
                   balance=balance)
    result = s.plan(prob)
    (ses,) = result.sessions
    assert ses.legs[0].safety_pilot == "dan"
    assert "safety pilot dan" in ses.why_partner and "14 CFR 91.109(c)" in ses.why_partner
    assert result.balance_after[("dan", "ana")] == 1


def test_night_slots_only_for_pilots_who_allow_night():
    night = slot(1, 20, daylight=False)
    prob = problem([pilot("ana", [need("a", 10)]), pilot("sp")], [night])
    result = s.plan(prob)
    assert result.sessions == ()
    assert "night" in result.unmet[0].reason
    prob = problem([pilot("ana", [need("a", 10)], allow_night=True), pilot("sp")], [night])
    assert len(s.plan(prob).sessions) == 1


def test_no_session_after_a_hard_due_date_and_the_reason_says_so():
    prob = problem([pilot("ana", [need("a", 0)]), pilot("sp")], [slot(2, 9)])
    result = s.plan(prob)
    assert result.sessions == ()
    assert "before the due date" in result.unmet[0].reason


def test_overdue_need_is_served_late_but_earlier_is_better():
    prob = problem([pilot("ana", [need("a", 0, overdue=True)]), pilot("sp")], [slot(5, 9), slot(2, 9)])
    (ses,) = s.plan(prob).sessions
    assert ses.slot.start.date() == DAY0 + timedelta(days=2)
    assert "overdue" in ses.why_slot


def test_existing_bookings_are_respected():
    prob = problem([pilot("ana", [need("a", 10)]), pilot("sp")], [slot(1, 9), slot(3, 9)],
                   bookings=[s.Booking(PLANE.id, at(1, 8), at(1, 13), "maintenance")])
    (ses,) = s.plan(prob).sessions
    assert ses.slot.start.date() == DAY0 + timedelta(days=3)


def test_unmet_need_lists_why_each_candidate_cannot_be_safety_pilot():
    prob = problem([pilot("ana", [need("a", 10)]), pilot("stu", certificate="student"),
                    pilot("old", medical_until=DAY0 - timedelta(days=30))], [slot(1, 9)])
    result = s.plan(prob)
    assert result.sessions == ()
    (u,) = result.unmet
    assert "stu:" in u.reason and "old:" in u.reason and "91.109(c)" in u.reason


def test_likely_vmc_daylight_slot_preferred_at_equal_margin_cost():
    prob = problem([pilot("ana", [need("a", 30)]), pilot("sp")], [slot(1, 9, vmc=0.2), slot(1, 13, vmc=0.9)])
    (ses,) = s.plan(prob).sessions
    assert ses.slot.vmc == 0.9 and "VMC likelihood 90%" in ses.why_slot


def test_bad_slot_input_names_the_field():
    naive = s.SlotInfo(datetime(2025, 6, 3, 9), datetime(2025, 6, 3, 12), FIELD, True, 0.5)
    with pytest.raises(ValueError, match=r"slots\[0\].*time-zone"):
        s.plan(problem([pilot("ana", [need("a", 5)])], [naive]))
    with pytest.raises(ValueError, match=r"slots\[0\].*vmc"):
        s.plan(problem([pilot("ana", [need("a", 5)])], [slot(1, 9, vmc=1.5)]))


# ------------------------------------------------------- generated instances

CERTS = st.sampled_from(["private", "private", "private", "commercial", "atp", "student"])


@st.composite
def instances(draw, max_pilots=6, max_slots=8):
    """Small schools: mostly eligible pilots with generous but not total availability, so most instances
    have several sessions competing for pilots, safety pilots and aircraft."""
    n_slots = draw(st.integers(2, max_slots))
    slots = []
    for _ in range(n_slots):
        hour = draw(st.sampled_from([8, 9, 11, 14, 19]))
        slots.append(slot(draw(st.integers(0, 4)), hour, hours=draw(st.sampled_from([2, 3, 4])),
                          daylight=hour < 18, vmc=draw(st.sampled_from([None, 0.1, 0.5, 0.9]))))
    slots = list(dict.fromkeys(slots))
    planes = [PLANE]
    if draw(st.booleans()):
        planes.append(s.Aircraft("N-TEST4", draw(st.sampled_from([SEL, SEL, MEL])),
                                 dual_controls=draw(st.sampled_from([True, True, False])), airfield=FIELD))
    n_pilots = draw(st.integers(3, max_pilots))
    pilots = []
    for k in range(n_pilots):
        needs = [need(f"n{k}-{j}", draw(st.integers(-1, 6)), overdue=draw(st.sampled_from([False, False, True])))
                 for j in range(draw(st.sampled_from([0, 1, 1, 1, 2])))]
        pilots.append(pilot(
            f"p{k}", needs, certificate=draw(CERTS),
            category_classes=draw(st.sampled_from([(SEL,), (SEL,), (SEL, MEL), (MEL,)])),
            medical_until=DAY0 + timedelta(days=draw(st.sampled_from([-1, 2, 30, 30, 30, 30]))),
            willing_safety_pilot=draw(st.sampled_from([True, True, True, False])),
            allow_night=draw(st.booleans()),
            session_minutes=draw(st.sampled_from([60, 90, 120])),
        ))
    availability = {}
    for rid in [p.id for p in pilots] + [a.id for a in planes]:
        days = draw(st.lists(st.integers(0, 4), min_size=3, max_size=5, unique=True))
        availability[rid] = tuple(s.Window(at(d, draw(st.sampled_from([7, 7, 7, 10]))),
                                           at(d, draw(st.sampled_from([15, 23, 23, 23])))) for d in days)
    bookings = [s.Booking(draw(st.sampled_from(list(availability))), at(d, 9), at(d, 12))
                for d in draw(st.lists(st.integers(0, 4), max_size=2))]
    balance = {(a.id, b.id): draw(st.integers(0, 3)) for a in pilots for b in pilots if a is not b and draw(st.booleans())}
    return problem(pilots, slots, planes, availability, bookings, balance)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(instances())
def test_generated_plans_keep_every_hard_constraint(prob):
    result = s.plan(prob)
    assert violations(prob, result) == []
    assert s.objective_of(prob, result.sessions) == pytest.approx(result.objective)
    best = s.exhaustive_best(prob)
    assert result.objective <= best + 1e-6, "the exhaustive search missed a better plan"
    served = {(leg.pilot_flying, n) for ses in result.sessions for leg in ses.legs for n in leg.needs}
    for u in result.unmet:
        assert (u.pilot, u.need) not in served and u.reason
    for p in prob.pilots:
        for n in p.needs:
            assert ((p.id, n.id) in served) != any(u.pilot == p.id and u.need == n.id for u in result.unmet)


@settings(max_examples=500, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(instances())
def test_generated_plans_reach_95_percent_of_the_optimum(prob):
    """The issue's bound: on small schools the plan reaches at least 95 % of the exhaustive optimum."""
    result = s.plan(prob)
    best = s.exhaustive_best(prob)
    assert result.objective >= 0.95 * best - 1e-6


def test_regression_plan_reaches_95_percent_where_hypothesis_found_0_77():
    """The falsifying example hypothesis found for the property above, as a fixed instance.

    Two slots, one aircraft. p0 (60 min) needs practice by day 0 and day 1; p2 and p3 (90 min each) by
    day 1 (p3's other need, due the day before the first slot, cannot be served). p1 has no needs and an
    expired medical, so only pilots in need can be safety pilots. The optimum flies p0 on day 0 with p2
    or p3 as safety pilot and p2 and p3 together (swapping seats) in the 3-hour slot on day 1; the plan
    used to reach only 333.4 of 433.4.
    """
    days = (0, 1, 2)
    window = tuple(s.Window(at(d, 7), at(d, 15)) for d in days)
    pilots = [
        pilot("p0", [need("n0-0", 0), need("n0-1", 1)], medical_until=DAY0 + timedelta(days=2), session_minutes=60),
        pilot("p1", medical_until=DAY0 - timedelta(days=1), session_minutes=60),
        pilot("p2", [need("n2-0", 1)], medical_until=DAY0 + timedelta(days=2), session_minutes=90),
        pilot("p3", [need("n3-0", 1), need("n3-1", -1)], medical_until=DAY0 + timedelta(days=2),
              session_minutes=90),
    ]
    slots = [slot(0, 8, hours=2, vmc=None), slot(1, 8, hours=3, vmc=None)]
    availability = {rid: window for rid in ("p0", "p1", "p2", "p3", PLANE.id)}
    prob = problem(pilots, slots, availability=availability)
    result = s.plan(prob)
    assert violations(prob, result) == []
    assert s.objective_of(prob, result.sessions) == pytest.approx(result.objective)
    best = s.exhaustive_best(prob)
    assert best == pytest.approx(433.4, abs=0.05)  # the optimum reported with the falsifying example
    assert result.objective >= 0.95 * best - 1e-6


def test_regression_a_mutual_session_gives_way_to_three_single_sessions():
    """A school hypothesis found (reduced by hand) where the plan reached only 0.816 of the optimum.

    One aircraft, four slots: day 0 08-11 (VMC 0.5) and 08-10 (VMC 0.9), day 1 08-10 (VMC 0.9), day 3
    08-11 (VMC 0.1). p3 (unwilling to be safety pilot) needs practice by day 2 and day 3 and is free on days
    0 and 3; p4 (90 min) by day 3; p5 by day 1 and is overdue since day -1. The plan used to pair p4 and p5
    in a mutual session on day 0, leaving p3 only day 3 (its day-2 need unmet). The optimum flies three
    single sessions, p4 being safety pilot for p3 (day 0) and p5 (day 1) and p5 for p4 (day 3).

    Its value by hand from the objective in planner/core/scheduling.py's docstring (W_MEET 100, margin up
    to 20 over 14 days, 2 per day late, slot quality 10 x VMC + 5 in daylight, fairness 4 per unit):
    p3 on day 0: 100 + 20 x 2/14 + 100 + 20 x 3/14 + 14 = 221.143; p5 on day 1: 100 + (100 - 2 x 2) + 14 =
    210; p4 on day 3: 100 + 6 = 106; p4 ends one safety-pilot flight up and p3 one down, so the imbalance
    rises from 0 to 2: -8. Total 529.143.
    """
    days = {d: s.Window(at(d, 7), at(d, 15)) for d in (0, 1, 3)}
    pilots = [
        pilot("p3", [need("n3-0", 2), need("n3-1", 3)], willing_safety_pilot=False, session_minutes=60),
        pilot("p4", [need("n4-0", 3)], session_minutes=90),
        pilot("p5", [need("n5-0", 1), need("n5-1", -1, overdue=True)], session_minutes=60),
    ]
    availability = {"p3": (days[0], days[3]), "p4": tuple(days.values()), "p5": tuple(days.values()),
                    PLANE.id: tuple(days.values())}
    slots = [slot(0, 8, 3, vmc=0.5), slot(0, 8, 2, vmc=0.9), slot(1, 8, 2, vmc=0.9), slot(3, 8, 3, vmc=0.1)]
    prob = problem(pilots, slots, availability=availability)
    by_hand = 2 * 100 + 20 * 5 / 14 + 14 + 100 + 96 + 14 + 100 + 6 - 8
    assert s.exhaustive_best(prob) == pytest.approx(by_hand)
    result = s.plan(prob)
    assert violations(prob, result) == []
    assert s.objective_of(prob, result.sessions) == pytest.approx(result.objective)
    assert result.objective >= 0.95 * by_hand - 1e-6
    served = {(leg.pilot_flying, n) for ses in result.sessions for leg in ses.legs for n in leg.needs}
    assert ("p3", "n3-0") in served and ("p5", "n5-0") in served


@st.composite
def feasible_instances(draw):
    """Pilot i can fly slot i (own day, before its due date) with a universal safety pilot; extra availability
    and tighter or looser due dates are random, so a poor plan can steal someone's only slot."""
    k = draw(st.integers(2, 8))
    slots = [slot(i, 9) for i in range(k)]
    pilots, availability = [], {}
    for i in range(k):
        due = i + draw(st.integers(0, 3))
        pilots.append(pilot(f"p{i}", [need(f"n{i}", due)], willing_safety_pilot=False))
        extra = draw(st.lists(st.integers(0, k - 1), max_size=3))
        availability[f"p{i}"] = tuple(s.Window(at(d, 8), at(d, 13)) for d in sorted({i, *extra}))
    pilots.append(pilot("safety"))
    availability["safety"] = always()
    availability[PLANE.id] = always()
    return problem(pilots, slots, (PLANE,), availability)


@settings(max_examples=100, deadline=None)
@given(feasible_instances())
def test_every_deadline_is_met_when_a_plan_meeting_all_is_known_to_exist(prob):
    result = s.plan(prob)
    assert violations(prob, result) == []
    assert result.unmet == ()
