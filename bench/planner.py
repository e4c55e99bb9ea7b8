"""Benchmark of the practice scheduler (issue 5 point 5).

Two measurements on invented, seeded data (an invented school at the invented
airfield XQA1; pilots are numbered, not named):

* speed: 200 pilots, 12 aircraft, 4 weeks of candidate slots (three daylight
  blocks and one night block a day), availability windows, existing bookings
  and a running safety-pilot balance; prints the planning time (target <= 2 s,
  best of ``--repeat`` runs) and how many pilots in need got a session;
* quality: many small instances (<= 6 pilots, <= 8 slots), the plan's objective
  against the exhaustive optimum of the same objective; prints the minimum and
  mean ratio (target >= 0.95 on every instance).

Run from the repository root: ``python bench/planner.py`` (``--small N`` sets
the number of small instances).
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


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--small", type=int, default=300, help="number of small instances for the quality ratio")
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
          f"needs unmet: {len(result.unmet)}/{needs}")

    ratios = []
    nontrivial = 0
    worst_exhaustive = 0.0
    for _ in range(args.small):
        prob = small_instance(rng)
        got = s.plan(prob).objective
        t0 = time.perf_counter()
        best = s.exhaustive_best(prob)
        worst_exhaustive = max(worst_exhaustive, time.perf_counter() - t0)
        if best > 0:
            nontrivial += 1
            ratios.append(got / best)
    print(f"small: {args.small} instances (<= 6 pilots, <= 8 slots), {nontrivial} with at least one feasible session")
    if ratios:
        below = sum(1 for r in ratios if r < 1 - 1e-9)
        print(f"  plan / exhaustive optimum: min {min(ratios):.4f}, mean {sum(ratios) / len(ratios):.4f} "
              f"(target >= 0.95); below optimum on {below} instances; slowest exhaustive search {worst_exhaustive:.3f} s")


if __name__ == "__main__":
    main()
