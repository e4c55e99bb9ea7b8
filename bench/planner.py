"""Benchmark of the practice scheduler (issue 5 point 5).

Two measurements on invented, seeded data (an invented school at the invented
airfield XQA1; pilots are numbered, not named):

* speed: 200 pilots, 12 aircraft, 4 weeks of candidate slots (three daylight
  blocks and one night block a day), availability windows, existing bookings
  and a running safety-pilot balance; prints the planning time (target <= 2 s,
  best of ``--repeat`` runs) and how many pilots in need got a session;
* quality: many small instances (<= 6 pilots, <= 8 slots), the plan's objective
  against the exhaustive optimum of the same objective; prints the minimum and
  mean ratio (target >= 0.95 on every instance). Two families: ``small`` (the
  large school's generator on a few days) and ``dense small`` (drawn like the
  generated schools of the hypothesis property in tests/core/test_scheduling.py,
  where sessions compete harder for people and aircraft).

Run from the repository root: ``python bench/planner.py`` (``--small N`` and
``--dense N`` set the number of instances of each family).
"""

from __future__ import annotations

import argparse
import os
import random
import sys
import time
from datetime import date, datetime, timedelta, timezone

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from planner.core import scheduling as s  # noqa: E402

TZ = timezone(timedelta(hours=-7))  # a fixed offset keeps the benchmark independent of tz data
DAY0 = date(2025, 6, 2)
SEL = "airplane/single-engine-land"
MEL = "airplane/multi-engine-land"
FIELD = "XQA1"


def at(day: int, hour: int) -> datetime:
    return datetime(DAY0.year, DAY0.month, DAY0.day, hour, tzinfo=TZ) + timedelta(days=day)


def _pilot(rng: random.Random, k: int, days: int, need_share: float) -> s.PilotInfo:
    needs = []
    if rng.random() < need_share:
        for j in range(rng.choice([1, 1, 2, 3])):
            overdue = rng.random() < 0.15
            due = rng.randint(-1, 3) if overdue else rng.randint(0, days + 7)
            needs.append(s.Need(f"p{k}-n{j}", DAY0 + timedelta(days=due), overdue=overdue))
    return s.PilotInfo(
        id=f"p{k}",
        needs=tuple(needs),
        certificate=rng.choice(["private"] * 5 + ["commercial"] * 3 + ["atp", "student"]),
        category_classes=rng.choice([(SEL,)] * 6 + [(SEL, MEL)] * 3 + [(MEL,)]),
        medical_until=DAY0 + timedelta(days=rng.choice([-5, 10, 400, 400, 400, 400])),
        basicmed_until=DAY0 + timedelta(days=400) if rng.random() < 0.1 else None,
        willing_safety_pilot=rng.random() < 0.8,
        allow_night=rng.random() < 0.2,
        session_minutes=rng.choice([90, 120, 150]),
    )


def school(rng: random.Random, n_pilots: int, n_aircraft: int, days: int, blocks, need_share: float = 0.6,
           avail_days: tuple[int, int] = (4, 10)) -> s.Problem:
    pilots = [_pilot(rng, k, days, need_share) for k in range(n_pilots)]
    aircraft = [
        s.Aircraft(f"N{100 + i}XQ", MEL if i % 6 == 5 else SEL, dual_controls=rng.random() < 0.95, airfield=FIELD)
        for i in range(n_aircraft)
    ]
    slots = []
    for d in range(days):
        for hour, hours, daylight in blocks:
            slots.append(s.SlotInfo(at(d, hour), at(d, hour + hours), FIELD, daylight,
                                    rng.choice([None, 0.2, 0.5, 0.7, 0.9])))
    availability = {}
    for p in pilots:
        chosen = rng.sample(range(days), min(days, rng.randint(*avail_days)))
        availability[p.id] = tuple(s.Window(at(d, rng.choice([7, 8, 12])), at(d, rng.choice([13, 18, 23])))
                                   for d in sorted(chosen))
    for a in aircraft:
        availability[a.id] = (s.Window(at(-1, 0), at(days + 1, 0)),)
    bookings = []
    for _ in range(n_aircraft * days // 3):
        d, h = rng.randrange(days), rng.choice([8, 11, 14])
        bookings.append(s.Booking(rng.choice(aircraft).id, at(d, h), at(d, h + 3), "rental"))
    for _ in range(n_pilots // 4):
        d = rng.randrange(days)
        bookings.append(s.Booking(rng.choice(pilots).id, at(d, 8), at(d, 17), "work"))
    balance = {}
    for _ in range(n_pilots):
        a, b = rng.sample(pilots, 2)
        balance[(a.id, b.id)] = balance.get((a.id, b.id), 0) + 1
    return s.Problem(tuple(pilots), tuple(aircraft), tuple(slots), availability, tuple(bookings), balance)


LARGE_BLOCKS = ((8, 3, True), (11, 3, True), (14, 3, True), (19, 3, False))
SMALL_BLOCKS = ((8, 3, True), (11, 4, True), (19, 3, False))


def small_instance(rng: random.Random) -> s.Problem:
    n_slots_days = rng.randint(1, 3)
    prob = school(rng, rng.randint(3, 6), rng.randint(1, 2), n_slots_days, SMALL_BLOCKS, need_share=0.7,
                  avail_days=(1, n_slots_days))
    slots = prob.slots[:8]
    return s.Problem(prob.pilots, prob.aircraft, slots, prob.availability, prob.bookings, prob.balance)


def dense_instance(rng: random.Random) -> s.Problem:
    """A small school drawn like ``instances()`` in tests/core/test_scheduling.py: up to 6 pilots, up to 8
    slots over 5 days, mostly eligible pilots with generous but partial availability, so sessions compete
    for pilots, safety pilots and aircraft."""
    slots = []
    for _ in range(rng.randint(2, 8)):
        hour = rng.choice([8, 9, 11, 14, 19])
        start = at(rng.randint(0, 4), hour)
        slots.append(s.SlotInfo(start, start + timedelta(hours=rng.choice([2, 3, 4])), FIELD, hour < 18,
                                rng.choice([None, 0.1, 0.5, 0.9])))
    slots = list(dict.fromkeys(slots))
    planes = [s.Aircraft("N101XQ", SEL, dual_controls=True, airfield=FIELD)]
    if rng.random() < 0.5:
        planes.append(s.Aircraft("N102XQ", rng.choice([SEL, SEL, MEL]), dual_controls=rng.choice([True, True, False]),
                                 airfield=FIELD))
    pilots = []
    for k in range(rng.randint(3, 6)):
        needs = tuple(s.Need(f"p{k}-n{j}", DAY0 + timedelta(days=rng.randint(-1, 6)), overdue=rng.random() < 1 / 3)
                      for j in range(rng.choice([0, 1, 1, 1, 2])))
        pilots.append(s.PilotInfo(
            id=f"p{k}", needs=needs, certificate=rng.choice(["private"] * 3 + ["commercial", "atp", "student"]),
            category_classes=rng.choice([(SEL,), (SEL,), (SEL, MEL), (MEL,)]),
            medical_until=DAY0 + timedelta(days=rng.choice([-1, 2, 30, 30, 30, 30])),
            willing_safety_pilot=rng.random() < 0.75, allow_night=rng.random() < 0.5,
            session_minutes=rng.choice([60, 90, 120]),
        ))
    availability = {}
    for rid in [p.id for p in pilots] + [a.id for a in planes]:
        availability[rid] = tuple(s.Window(at(d, rng.choice([7, 7, 7, 10])), at(d, rng.choice([15, 23, 23, 23])))
                                  for d in rng.sample(range(5), rng.randint(3, 5)))
    bookings = [s.Booking(rng.choice(list(availability)), at(d, 9), at(d, 12))
                for d in (rng.randint(0, 4) for _ in range(rng.randint(0, 2)))]
    balance = {(a.id, b.id): rng.randint(0, 3) for a in pilots for b in pilots if a is not b and rng.random() < 0.5}
    return s.Problem(tuple(pilots), tuple(planes), tuple(slots), availability, tuple(bookings), balance)


def quality(label: str, make, rng: random.Random, count: int) -> None:
    """Print the plan's objective against the exhaustive optimum over ``count`` instances from ``make``."""
    ratios = []
    worst_exhaustive = worst_plan = 0.0
    for _ in range(count):
        prob = make(rng)
        t0 = time.perf_counter()
        got = s.plan(prob).objective
        worst_plan = max(worst_plan, time.perf_counter() - t0)
        t0 = time.perf_counter()
        best = s.exhaustive_best(prob)
        worst_exhaustive = max(worst_exhaustive, time.perf_counter() - t0)
        if best > 0:
            ratios.append(got / best)
    print(f"{label}: {count} instances, {len(ratios)} with at least one feasible session")
    if ratios:
        below = sum(1 for r in ratios if r < 1 - 1e-9)
        print(f"  plan / exhaustive optimum: min {min(ratios):.4f}, mean {sum(ratios) / len(ratios):.5f} "
              f"(target >= 0.95); below optimum on {below} instances; slowest plan {worst_plan:.3f} s, "
              f"slowest exhaustive search {worst_exhaustive:.3f} s")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--small", type=int, default=300, help="number of small instances for the quality ratio")
    ap.add_argument("--dense", type=int, default=2000, help="number of dense small instances for the quality ratio")
    ap.add_argument("--repeat", type=int, default=3, help="timing runs of the large instance (best is reported)")
    ap.add_argument("--seed", type=int, default=20250602)
    args = ap.parse_args()

    rng = random.Random(args.seed)
    big = school(rng, 200, 12, 28, LARGE_BLOCKS)
    times = []
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        result = s.plan(big)
        times.append(time.perf_counter() - t0)
    needing = sum(1 for p in big.pilots if p.needs)
    scheduled = len({leg.pilot_flying for ses in result.sessions for leg in ses.legs})
    mutual = sum(1 for ses in result.sessions if ses.is_mutual)
    needs = sum(len(p.needs) for p in big.pilots)
    print(f"large: 200 pilots ({needing} in need, {needs} needs), 12 aircraft, 28 days, {len(big.slots)} slots")
    print(f"  plan time: {min(times):.3f} s (best of {len(times)}; target <= 2 s)")
    print(f"  sessions: {len(result.sessions)} ({mutual} mutual); pilots in need scheduled: {scheduled}/{needing}; "
          f"needs unmet: {len(result.unmet)}/{needs}; objective {result.objective:.1f}")

    quality("small (<= 6 pilots, <= 8 slots)", small_instance, rng, args.small)
    quality("dense small (drawn like the generated schools of tests/core/test_scheduling.py)", dense_instance,
            random.Random(args.seed + 1), args.dense)

if __name__ == "__main__":
    main()
