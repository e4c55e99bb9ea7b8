"""Benchmark of a school at scale (issue 6 point 3).

Generates an invented school (seeded; pilots are numbered, not named) of
500 pilots x 2,000 logbook entries each, into a fresh database whose schema
comes from the project's migrations (the real indexes), with SQLAlchemy Core
bulk inserts; then fills the kept-current statuses with the daily refresh
(``planner.status.refresh``, timed and printed). Then measures, in one run:

(a) the school overview page (Flask test client, signed in as the school's
    instructor) against a bare SELECT of the 500 pilots' kept status rows
    (target <= 3x);
(b) saving one entry through the app's service path (which re-evaluates the
    pilot's kept status before the commit, as the entry form does), and
    through the entry form (one POST), against a bare INSERT of one entry row;
(c) a load run: the app under gunicorn with several worker processes on
    loopback, driven from this process by client threads (each signed in as a
    pilot and as the instructor, CSRF tokens taken from the forms) with a mix
    of dashboard, overview and entry-save requests for a fixed time; prints
    requests per second, p50/p95/p99 per endpoint and the error count.

Timings (a) and (b) are the fastest of ``--runs`` (``--save-runs``) rounds in
which the measured functions take turns, as in bench/engine.py.

    python bench/school.py                                  # SQLite, full scale (cached generation)
    python bench/school.py --db postgresql+psycopg://postgres@127.0.0.1:5432/test
    python bench/school.py --pilots 20 --entries 100 --seconds 5   # a quick run

SQLite: the generated file is cached under the system's temp directory, keyed by
the parameters, the schema revision and the rules digest of the kept statuses;
each run works on a copy. PostgreSQL:
the URL names a server and an existing database to connect to; the benchmark
creates a throwaway database beside it and drops it at the end. The load run
needs gunicorn (``pip install -e '.[school]'``); ``--no-load`` skips it.
"""

from __future__ import annotations

import argparse
import http.client
import importlib.util
import json
import os
import platform
import random
import re
import secrets
import shlex
import shutil
import signal
import socket
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time
import uuid
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import UTC, date, datetime, timedelta
from pathlib import Path
from typing import Any
from urllib.parse import urlencode

REPO_ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO_ROOT))

import sqlalchemy as sa  # noqa: E402
from sqlalchemy.engine import Connection, Engine, make_url  # noqa: E402
from werkzeug.security import generate_password_hash  # noqa: E402

from planner.config import Settings  # noqa: E402
from planner.core import logbook as core  # noqa: E402
from planner.db import migrate, models, repository  # noqa: E402
from planner.db.session import make_engine, make_session_factory  # noqa: E402

AS_OF = date(2026, 12, 1)  # PLANNER_TODAY for every measurement (the demo scenario's date)
STAMP = datetime(2026, 12, 1, tzinfo=UTC)  # created_at / updated_at of generated rows
PASSWORD = "bench-school-password-1"  # every generated account's (invented) password
GENERATOR_VERSION = 3  # bump when the generated data changes, so cached files are rebuilt (3: kept statuses filled)
SCHOOL_SLUG = "bench-school"
TIMEZONE = "America/Denver"
# Invented airfields (the XQ.. identifiers are not real) and the runways their approaches use.
FIELDS = {"XQA1": ("9", "27", "17", "35"), "XQB2": ("3", "21"), "XQC3": ("12", "30"), "XQD4": ("8", "26")}
FIELD_IDENTS = tuple(FIELDS)
APPROACH_TYPES = ("ILS", "RNAV (GPS)", "RNAV (GPS)", "LOC", "VOR", "LOC BC", "NDB")
SEL, MEL = "single-engine-land", "multi-engine-land"
AIRCRAFT = [(f"N{101 + i}XQ", MEL if i % 5 == 4 else SEL) for i in range(10)]
DEVICES = [("XQ-ATD-1", "atd"), ("XQ-ATD-2", "atd"), ("XQ-FTD-1", "ftd")]
INSTRUCTORS = 4  # instructor accounts: the first one signs in for the overview
ENDPOINTS = ("dashboard", "overview", "save")
DEFAULT_MIX = "dashboard=6,overview=1,save=3"


def say(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


# ------------------------------------------------------------------ generation


@dataclass(frozen=True)
class Scale:
    pilots: int = 500
    entries: int = 2000
    seed: int = 20261201

    @property
    def key(self) -> str:
        return f"p{self.pilots}-e{self.entries}-s{self.seed}-g{GENERATOR_VERSION}"


def pilot_name(k: int) -> str:
    return f"Pilot {k + 1:04d}"


def pilot_email(k: int) -> str:
    return f"pilot{k + 1:04d}@bench-school.example"


def instructor_name(j: int) -> str:
    return f"Instructor {j + 1:02d}"


def instructor_email(j: int) -> str:
    return f"instructor{j + 1:02d}@bench-school.example"


class Dice(random.Random):
    """``random.Random`` with quicker ``choice`` and ``randrange`` built on ``random()`` (the generator's hot path)."""

    def choice(self, seq: Any) -> Any:
        return seq[int(self.random() * len(seq))]

    def randrange(self, start: int, stop: int | None = None, step: int = 1) -> int:  # type: ignore[override]
        if stop is None:
            start, stop = 0, start
        return start + step * int(self.random() * ((stop - start + step - 1) // step))

    def randint(self, a: int, b: int) -> int:
        return self.randrange(a, b + 1)


def _clock(minutes: int) -> str:
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def _approaches(rnd: Dice, n: int, conditions: str | None) -> tuple[core.Approach, ...]:
    out = []
    for _ in range(n):
        airfield = rnd.choice(FIELD_IDENTS)
        out.append(core.Approach(
            type=rnd.choice(APPROACH_TYPES),
            airfield=airfield,
            runway=rnd.choice(FIELDS[airfield]),
            to_minimums=rnd.random() < 0.35,
            coupled=rnd.random() < 0.15,
            conditions=None if rnd.random() < 0.9 else conditions,
        ))
    return tuple(out)


def pilot_logbook(scale: Scale, k: int) -> list[core.Entry]:
    """Pilot ``k``'s logbook: ``scale.entries`` entries, oldest first, ending shortly before or long before AS_OF.

    A realistic mix for an instrument pilot of a school: practice under a
    view-limiting device with a safety pilot (approaches, holds, tracking),
    flights in actual conditions, training-device sessions, visual flights
    with day and night landings, and now and then an instrument proficiency
    check or a flight review with an instructor. Deterministic in (seed, k).
    """
    rnd = Dice(f"{scale.seed}/{k}")
    gap = rnd.choice([rnd.randint(0, 20)] * 11 + [rnd.randint(20, 150)] * 5 + [rnd.randint(150, 800)] * 4)
    last = AS_OF - timedelta(days=gap)
    span = rnd.randint(6, 20) * 365
    first = last - timedelta(days=span)
    days = sorted(first + timedelta(days=rnd.randrange(span + 1)) for _ in range(scale.entries - 1)) + [last]
    multi = rnd.random() < 0.3  # also flies the multi-engine aircraft
    flown = [a for a in AIRCRAFT if multi or a[1] == SEL]
    others = [i for i in range(scale.pilots) if i != k] or [k]
    buddies = [pilot_name(i) for i in rnd.sample(others, min(3, len(others)))]
    entries: list[core.Entry] = []
    taken: set[str] = set()
    for day in days:
        ident, n = day.isoformat(), 1
        while ident in taken:
            n += 1
            ident = f"{day.isoformat()}-{n}"
        taken.add(ident)
        kind = rnd.choices(["hood", "actual", "device", "visual", "check"], [40, 12, 13, 33, 2])[0]
        start = rnd.randrange(7 * 60, 18 * 60, 5)
        total = round(rnd.uniform(0.8, 2.6), 1)
        reg, cls = rnd.choice(flown)
        route = "-".join(["XQA1", *rnd.sample(FIELD_IDENTS[1:], rnd.randint(0, 2)), "XQA1"])
        common: dict[str, Any] = dict(
            id=ident, date=day, category="airplane", aircraft_class=cls, aircraft=reg, route=route,
            start_time=_clock(start), end_time=_clock(start + round(total * 60)), total_hours=total,
            pic_hours=total,
        )
        if kind == "hood":
            n_app = rnd.choice([1, 2, 2, 3, 3, 4])
            entries.append(core.Entry(
                **common, conditions="simulated", approaches=_approaches(rnd, n_app, "simulated"),
                holds=rnd.choice([0, 1, 1, 2]), course_tracking=True,
                instrument_simulated_hours=round(total * rnd.uniform(0.5, 0.9), 1),
                landings=rnd.randint(1, 3), partial_panel_approaches=1 if rnd.random() < 0.15 else 0,
                ua_nose_high=1 if rnd.random() < 0.1 else 0, ua_nose_low=1 if rnd.random() < 0.1 else 0,
                safety_pilot=rnd.choice(buddies), remarks="Practice under a view-limiting device.",
            ))
        elif kind == "actual":
            entries.append(core.Entry(
                **common, conditions="actual", approaches=_approaches(rnd, rnd.choice([1, 1, 2]), "actual"),
                holds=rnd.choice([0, 0, 1]), course_tracking=True,
                instrument_actual_hours=round(total * rnd.uniform(0.2, 0.8), 1), landings=rnd.randint(1, 2),
                remarks="IFR flight plan, in cloud on the approach.",
            ))
        elif kind == "device":
            device_ident, device_kind = rnd.choice(DEVICES)
            hours = round(rnd.uniform(0.8, 1.5), 1)
            entries.append(core.Entry(
                id=ident, date=day, device=device_kind, category="airplane", aircraft_class=SEL,
                aircraft=device_ident, conditions="simulated", approaches=_approaches(rnd, rnd.randint(2, 6), None),
                holds=rnd.randint(1, 2), course_tracking=True, instrument_simulated_hours=hours,
                partial_panel_approaches=rnd.choice([0, 0, 1]),
                instructor=instructor_name(rnd.randrange(INSTRUCTORS)) if rnd.random() < 0.4 else None,
                remarks="Training-device session.",
            ))
        elif kind == "visual":
            landings = rnd.randint(1, 6)
            night = landings if rnd.random() < 0.15 else 0
            entries.append(core.Entry(**common, landings=landings, night_full_stop_landings=night, remarks=""))
        else:
            check = rnd.choice(["ipc", "ipc", "flight-review"])
            ipc = check == "ipc"
            entries.append(core.Entry(
                **{**common, "pic_hours": 0.0, "dual_received_hours": total},
                conditions="simulated" if ipc else None,
                approaches=_approaches(rnd, 3, "simulated") if ipc else (), holds=1 if ipc else 0,
                course_tracking=ipc, instrument_simulated_hours=round(total * 0.7, 1) if ipc else 0.0,
                landings=rnd.randint(1, 3), ua_nose_high=1, ua_nose_low=1, checks=(check,),
                instructor=instructor_name(rnd.randrange(INSTRUCTORS)),
                remarks="Instrument proficiency check." if ipc else "Flight review.",
            ))
    return entries


@dataclass
class Ids:
    """Primary keys handed out by the loader (the database is fresh, so they start at 1)."""

    entry: int = 0
    approach: int = 0
    check: int = 0


def entry_rows(entry: core.Entry, pilot_id: int, entry_id: int, links: dict[str, int], ids: Ids,
               ) -> tuple[dict[str, Any], list[dict[str, Any]], list[dict[str, Any]]]:
    """One core entry as the rows ``repository.add_entries`` would store (entry, approaches, checks)."""
    row: dict[str, Any] = {
        "id": entry_id, "pilot_id": pilot_id, "external_id": entry.id, "date": entry.date, "device": entry.device,
        "category": entry.category, "aircraft_class": entry.aircraft_class, "conditions": entry.conditions,
        "course_tracking": entry.course_tracking, "safety_pilot_name": entry.safety_pilot,
        "safety_pilot_id": links.get(entry.safety_pilot or ""), "instructor_name": entry.instructor,
        "instructor_id": links.get(entry.instructor or ""), "remarks": entry.remarks,
        "aircraft_ident": entry.aircraft, "route": entry.route, "start_time": entry.start_time,
        "end_time": entry.end_time, "version": 1, "deleted_at": None, "created_at": STAMP, "updated_at": STAMP,
        "aircraft_id": links.get(entry.aircraft or "") if entry.device == "aircraft" else None,
        "device_id": links.get(entry.aircraft or "") if entry.device != "aircraft" else None,
    }
    for name in repository.COUNT_FIELDS:
        row[name] = getattr(entry, name)
    for name, column in repository.HOURS_COLUMNS.items():
        row[column] = repository.to_hundredths(getattr(entry, name), entry.id, name)
    approaches = []
    for position, a in enumerate(entry.approaches):
        ids.approach += 1
        approaches.append({"id": ids.approach, "entry_id": entry_id, "position": position, "type": a.type,
                           "airfield": a.airfield, "runway": a.runway, "conditions": a.conditions,
                           "to_minimums": a.to_minimums, "coupled": a.coupled})
    checks = []
    for position, kind in enumerate(entry.checks):
        ids.check += 1
        checks.append({"id": ids.check, "entry_id": entry_id, "position": position, "kind": kind})
    return row, approaches, checks


def _person(id_: int, name: str, email: str, password_hash: str, *, pilot: bool, rnd: random.Random) -> dict[str, Any]:
    multi = rnd.random() < 0.3
    return {
        "id": id_, "school_id": 1, "name": name, "email": email, "password_hash": password_hash,
        "is_pilot": pilot, "is_instructor": not pilot, "is_admin": False,
        "certificate_level": rnd.choice(["private"] * 5 + ["commercial"] * 3 + ["atp"]) if pilot else "commercial",
        "category_classes": ["airplane/" + SEL] + (["airplane/" + MEL] if multi or not pilot else []),
        "instrument_categories": ["airplane"], "instructor_ratings": [] if pilot else ["cfi", "cfii"],
        "medical_class": rnd.choice(["first", "second", "third", "third"]),
        "medical_expires": AS_OF + timedelta(days=rnd.randint(-60, 900)), "basicmed_expires": None,
        "home_airfield_id": 1, "timezone": TIMEZONE,
        "rule_sets": ["faa-part61", "practice-targets"] if rnd.random() < 0.6 else ["faa-part61"],
        "practice_targets": {}, "min_ceiling_ft": None, "min_visibility_hundredths_sm": None,
        "min_crosswind_kt": None, "created_at": STAMP,
    }


def populate(url: str, scale: Scale, progress: Callable[[str], None] = say) -> dict[str, Any]:
    """Create the schema at ``url`` with the migrations, bulk-insert the generated school, fill the kept statuses.

    Entries go in with Core ``insert`` executemany, a few pilots per
    transaction; then ``after_load`` runs the daily refresh. Returns row
    counts and ``refresh_seconds``.
    """
    migrate.upgrade(url)
    engine = make_engine(url, foreign_keys=False)
    t = {name: models.Base.metadata.tables[name] for name in (
        "airfields", "schools", "aircraft", "training_devices", "people", "entries", "approaches", "entry_checks")}
    rnd = random.Random(f"{scale.seed}/school")
    password_hash = generate_password_hash(PASSWORD)
    links: dict[str, int] = {}
    counts: dict[str, Any] = {"pilots": scale.pilots, "instructors": INSTRUCTORS, "entries": 0, "approaches": 0,
                              "checks": 0}
    try:
        with engine.begin() as conn:
            conn.execute(sa.insert(t["airfields"]), [
                {"id": i + 1, "ident": ident, "name": f"Invented field {ident}", "latitude": 40.0 + i / 10,
                 "longitude": -104.5 - i / 10, "elevation_ft": 5000 + 50 * i, "timezone": TIMEZONE}
                for i, ident in enumerate(FIELDS)])
            conn.execute(sa.insert(t["schools"]), [
                {"id": 1, "slug": SCHOOL_SLUG, "name": "Bench Mesa Flight School (invented)", "home_airfield_id": 1}])
            conn.execute(sa.insert(t["aircraft"]), [
                {"id": i + 1, "school_id": 1, "registration": reg, "category": "airplane", "aircraft_class": cls,
                 "dual_controls": True, "equipment_notes": "", "home_airfield_id": 1}
                for i, (reg, cls) in enumerate(AIRCRAFT)])
            conn.execute(sa.insert(t["training_devices"]), [
                {"id": i + 1, "school_id": 1, "identifier": ident, "kind": kind, "category": "airplane",
                 "authorisation_expires": None, "notes": ""}
                for i, (ident, kind) in enumerate(DEVICES)])
            people = [_person(j + 1, instructor_name(j), instructor_email(j), password_hash, pilot=False, rnd=rnd)
                      for j in range(INSTRUCTORS)]
            people += [_person(INSTRUCTORS + k + 1, pilot_name(k), pilot_email(k), password_hash, pilot=True, rnd=rnd)
                       for k in range(scale.pilots)]
            conn.execute(sa.insert(t["people"]), people)
        links.update({p["name"]: p["id"] for p in people})
        links.update({reg: i + 1 for i, (reg, _cls) in enumerate(AIRCRAFT)})
        links.update({ident: i + 1 for i, (ident, _kind) in enumerate(DEVICES)})

        ids = Ids()
        started = last_report = time.perf_counter()
        making = 0.0  # seconds spent generating entries and rows in Python (the rest is the database)
        batch = max(1, min(25, 20_000 // max(scale.entries, 1)))
        for first in range(0, scale.pilots, batch):
            rows: list[dict[str, Any]] = []
            approach_rows: list[dict[str, Any]] = []
            check_rows: list[dict[str, Any]] = []
            t0 = time.perf_counter()
            for k in range(first, min(first + batch, scale.pilots)):
                for entry in pilot_logbook(scale, k):
                    ids.entry += 1
                    row, aps, chs = entry_rows(entry, INSTRUCTORS + k + 1, ids.entry, links, ids)
                    rows.append(row)
                    approach_rows.extend(aps)
                    check_rows.extend(chs)
            making += time.perf_counter() - t0
            with engine.begin() as conn:
                conn.execute(sa.insert(t["entries"]), rows)
                if approach_rows:
                    conn.execute(sa.insert(t["approaches"]), approach_rows)
                if check_rows:
                    conn.execute(sa.insert(t["entry_checks"]), check_rows)
            done = min(first + batch, scale.pilots)
            now = time.perf_counter()
            if now - last_report >= 5 or done == scale.pilots:
                last_report = now
                rate = ids.entry / (now - started)
                eta = (scale.pilots - done) * scale.entries / rate if rate else 0
                progress(f"  generated and stored {done}/{scale.pilots} pilots, {ids.entry:,} entries, "
                         f"{ids.approach:,} approaches ({rate:,.0f} entries/s, about {eta:.0f} s left)")
        counts.update(entries=ids.entry, approaches=ids.approach, checks=ids.check)
        progress(f"  {making:.0f} s generating rows in Python, {time.perf_counter() - started - making:.0f} s inserting")
        with engine.begin() as conn:
            if conn.dialect.name == "postgresql":
                # Explicit ids were given: move each table's id sequence past them so the app's inserts work.
                for name in t:
                    conn.execute(sa.text(
                        f"SELECT setval(pg_get_serial_sequence('{name}', 'id'), "
                        f"(SELECT COALESCE(MAX(id), 0) + 1 FROM {name}), false)"))
        if engine.dialect.name == "postgresql":
            with engine.connect().execution_options(isolation_level="AUTOCOMMIT") as conn:
                conn.execute(sa.text("ANALYZE"))  # what autovacuum would do soon after a bulk load
        counts["refresh_seconds"] = after_load(engine, progress)
    finally:
        engine.dispose()
    return counts


def after_load(engine: Engine, progress: Callable[[str], None] = say) -> float:
    """Fill the kept-current status rows as the scheduled ``planner refresh --as-of AS_OF`` would; return its seconds.

    The same code path as the command (``planner.status.refresh``, a commit
    every 100 pilots), so that the overview finds every pilot's status current
    and the figure printed is what a school of this size costs once a day.
    """
    from planner import status

    pilots = _count(engine, "SELECT COUNT(*) FROM people WHERE is_pilot = :yes", yes=True)
    entries = _count(engine, "SELECT COUNT(*) FROM entries")
    started = time.perf_counter()

    def told(message: str) -> None:
        progress(f"  refresh: {message} ({time.perf_counter() - started:.0f} s)")

    with make_session_factory(engine)() as session:
        report = status.refresh(session, AS_OF, progress=told, checkpoint=session.commit)
        session.commit()
    elapsed = time.perf_counter() - started
    if report.current != 0 or report.evaluated != pilots:
        raise RuntimeError(f"refresh after the load re-evaluated {report.evaluated} of {pilots} pilots")
    progress(f"  refresh of {pilots} pilots ({entries:,} entries) took {elapsed:.1f} s")
    return elapsed


def _count(engine: Engine, sql: str, **params: Any) -> int:
    with engine.connect() as conn:
        return int(conn.execute(sa.text(sql), params).scalar_one())


def schema_head() -> str:
    from alembic.script import ScriptDirectory

    return ScriptDirectory.from_config(migrate.alembic_config()).get_current_head() or "none"


def cache_key(scale: Scale) -> str:
    """What a cached SQLite file depends on: the scale, the schema's head revision and the rules digest.

    The digest changes with the engine and rule-set files; kept statuses made
    under another one would all be stale, and the first overview would
    re-evaluate the whole school.
    """
    from planner import status

    return f"{scale.key}-{schema_head()}-r{status.RULES_DIGEST}"


def sqlite_database(scale: Scale, work_dir: Path, cache_dir: Path | None) -> tuple[str, dict[str, float], bool]:
    """A SQLite copy of the generated school in ``work_dir``: (url, timings, came from cache).

    ``timings``: ``generated`` (seconds for migrations, inserts and refresh)
    and ``refresh`` (the refresh alone), measured when the file was made. With
    ``cache_dir`` the generated file is kept there (with its timings beside
    it), keyed by ``cache_key``, and later runs copy it instead of generating.
    """
    target = work_dir / "school.sqlite3"
    cached = cache_dir / f"school-{cache_key(scale)}.sqlite3" if cache_dir else None
    if cached is not None and cached.exists():
        shutil.copyfile(cached, target)
        try:
            timings = json.loads(cached.with_suffix(".json").read_text(encoding="utf-8"))
        except (OSError, ValueError):
            timings = {}
        return f"sqlite:///{target}", timings, True
    t0 = time.perf_counter()
    counts = populate(f"sqlite:///{target}", scale)
    timings = {"generated": time.perf_counter() - t0, "refresh": counts["refresh_seconds"]}
    if cached is not None:
        cached.parent.mkdir(parents=True, exist_ok=True)
        partial = cached.with_suffix(f".{os.getpid()}.partial")
        shutil.copyfile(target, partial)
        cached.with_suffix(".json").write_text(json.dumps(timings), encoding="utf-8")
        os.replace(partial, cached)  # never a half-written cache file
    return f"sqlite:///{target}", timings, False


@contextmanager
def throwaway_postgres(admin_url: str) -> Iterator[str]:
    """A fresh database on the server of ``admin_url`` (created beside its database), dropped afterwards."""
    admin = make_engine(admin_url, isolation_level="AUTOCOMMIT")
    name = f"planner_bench_{uuid.uuid4().hex[:10]}"
    try:
        with admin.connect() as conn:
            conn.execute(sa.text(f'CREATE DATABASE "{name}"'))
        yield make_url(admin_url).set(database=name).render_as_string(hide_password=False)
    finally:
        with admin.connect() as conn:
            conn.execute(sa.text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


# ------------------------------------------------------------------ in-process measurements


def bare_status_select(conn: Connection, school_id: int) -> list[Any]:
    """The baseline of the overview: one indexed SELECT of the school's pilots' kept status rows.

    The columns the overview reads: the pilot's id, name and ``status_revision``
    (to tell a stale row), and the kept row's day, revision, rules digest, sort
    key and whole report (JSON); by ``people.school_id`` like the overview's own query.
    """
    return list(conn.execute(
        sa.text("SELECT p.id, p.name, p.status_revision, k.as_of, k.revision, k.rules_digest, k.soonest, k.report "
                "FROM people p JOIN kept_statuses k ON k.person_id = p.id "
                "WHERE p.school_id = :school AND p.is_pilot = :yes ORDER BY p.id"),
        {"school": school_id, "yes": True},
    ))


BASELINE_NOTE = "the school's kept_statuses rows joined to their pilots: id, name, revisions, day, sort key, report JSON"


def timed(fns: dict[str, Callable[[], Any]], runs: int, budget: float) -> dict[str, tuple[float, int]]:
    """Fastest of up to ``runs`` rounds of each function, name -> (seconds, rounds run).

    The functions take turns round after round, so that a spell of load on the
    machine falls on all of them alike; rounds stop early once ``budget``
    seconds have passed (at least one round always runs).
    """
    best: dict[str, float] = {}
    started = time.perf_counter()
    rounds = 0
    while rounds < runs:
        for name, fn in fns.items():
            t0 = time.perf_counter()
            fn()
            elapsed = time.perf_counter() - t0
            best[name] = min(best.get(name, elapsed), elapsed)
        rounds += 1
        if time.perf_counter() - started > budget:
            break
    return {name: (seconds, rounds) for name, seconds in best.items()}


_TOKEN = re.compile(r'name="csrf_token" type="hidden" value="([^"]+)"|value="([^"]+)"[^>]*name="csrf_token"')


def csrf_token(page: str) -> str:
    match = _TOKEN.search(page)
    if not match:
        raise RuntimeError("no CSRF token on the page")
    return match.group(1) or match.group(2)


def make_app(url: str) -> Any:
    from planner.web import create_app

    tmp = Path(tempfile.gettempdir())
    settings = Settings(database_url=url, secret_key=secrets.token_hex(32), instance_dir=tmp, seed_dir=tmp,
                        today=AS_OF.isoformat())
    return create_app(settings)


def signed_in_client(app: Any, email: str) -> Any:
    client = app.test_client()
    token = csrf_token(client.get("/login").get_data(as_text=True))
    response = client.post("/login", data={"email": email, "password": PASSWORD, "csrf_token": token})
    if response.status_code != 302:
        raise RuntimeError(f"sign-in as {email} answered {response.status_code}")
    return client


def school_id(engine: Engine) -> int:
    with engine.connect() as conn:
        return conn.execute(sa.text("SELECT id FROM schools WHERE slug = :s"), {"s": SCHOOL_SLUG}).scalar_one()


def measure_overview(app: Any, engine: Engine, pilots: int, runs: int, budget: float) -> dict[str, Any]:
    """(a) The overview request, signed in as the instructor, against ``bare_status_select``.

    A first request warms up (templates, rule sets, connection pool); when it
    alone took longer than ``budget`` it is the measurement (one cold run).
    """
    client = signed_in_client(app, instructor_email(0))
    school = school_id(engine)
    pages: list[str] = []

    def request() -> None:
        response = client.get("/school")
        if response.status_code != 200:
            raise RuntimeError(f"overview answered {response.status_code}")
        pages[:] = [response.get_data(as_text=True)]

    conn = engine.connect()
    try:
        def select() -> None:
            rows = bare_status_select(conn, school)
            if len(rows) != pilots:
                raise RuntimeError(f"the bare SELECT returned {len(rows)} rows, not {pilots}")
            conn.rollback()  # end the read like a request ends its session

        t0 = time.perf_counter()
        request()
        first = time.perf_counter() - t0
        select()
        if first > budget:
            best = {"overview request": (first, 0), **timed({"bare SELECT": select}, runs, budget)}
        else:
            best = timed({"overview request": request, "bare SELECT": select}, runs, budget)
    finally:
        conn.close()
    shown = sum(1 for k in range(pilots) if f">{pilot_name(k)}<" in pages[0])
    return {"request": best["overview request"][0], "select": best["bare SELECT"][0],
            "rounds": best["overview request"][1], "pilots shown": shown}


def save_form(ref: int, pilot_k: int, pilots: int) -> dict[str, str]:
    """A complete entry form (what a browser posts): a hood-practice flight of today with two approaches."""
    buddy = pilot_name((pilot_k + 1) % pilots) if pilots > 1 else ""
    return {
        "date": AS_OF.isoformat(), "device": "aircraft", "category": "airplane", "aircraft_class": SEL,
        "aircraft": AIRCRAFT[0][0], "conditions": "simulated", "route": "XQA1-XQB2-XQA1", "start_time": "09:10",
        "end_time": "10:40", "total_hours": "1.5", "pic_hours": "1.5", "instrument_simulated_hours": "1.2",
        "landings": "2", "night_full_stop_landings": "0", "holds": "1", "course_tracking": "y",
        "approaches-0-type": "ILS", "approaches-0-airfield": "XQA1", "approaches-0-runway": "27",
        "approaches-0-to_minimums": "y", "approaches-1-type": "RNAV (GPS)", "approaches-1-airfield": "XQB2",
        "approaches-1-runway": "21", "safety_pilot": buddy, "remarks": f"Benchmark save {ref}.", "save": "Save entry",
    }


def saved_entry(ref: str, pilot_k: int, pilots: int) -> core.Entry:
    """The entry ``save_form`` describes, as a core entry with id ``ref``."""
    return core.Entry(
        id=ref, date=AS_OF, aircraft_class=SEL, aircraft=AIRCRAFT[0][0], conditions="simulated",
        route="XQA1-XQB2-XQA1", start_time="09:10", end_time="10:40", total_hours=1.5, pic_hours=1.5,
        instrument_simulated_hours=1.2, landings=2, holds=1, course_tracking=True,
        approaches=(core.Approach("ILS", "XQA1", "27", to_minimums=True), core.Approach("RNAV (GPS)", "XQB2", "21")),
        safety_pilot=pilot_name((pilot_k + 1) % pilots) if pilots > 1 else None, remarks=f"Benchmark save {ref}.",
    )


def service_save(sessions: Any, pilot_id: int, entry: core.Entry) -> None:
    """Save one entry the way the entry form's route does after checking it: stage it, then commit.

    As in ``planner.web.logbook.create``: ``repository.add_entries`` then
    ``commit``, whose before-commit hook (``planner.status.settle``)
    re-evaluates the pilot's kept status in the same transaction; so the
    status update is part of what is timed.
    """
    with sessions() as session:
        person = session.get(models.Person, pilot_id)
        repository.add_entries(session, person, [entry])
        session.commit()


def kept_status(engine: Engine, pilot_id: int) -> dict[str, Any] | None:
    """The pilot's kept row (day, revision) beside the person's ``status_revision``; None without a row."""
    with engine.connect() as conn:
        row = conn.execute(sa.text(
            "SELECT k.as_of, k.revision, p.status_revision FROM people p JOIN kept_statuses k ON k.person_id = p.id "
            "WHERE p.id = :id"), {"id": pilot_id}).one_or_none()
    if row is None:
        return None
    as_of = row.as_of if isinstance(row.as_of, date) else date.fromisoformat(row.as_of)
    return {"as_of": as_of, "revision": row.revision, "status_revision": row.status_revision}


def entry_count(engine: Engine) -> int:
    with engine.connect() as conn:
        return conn.execute(sa.text("SELECT COUNT(*) FROM entries")).scalar_one()


def measure_save(app: Any, engine: Engine, pilots: int, runs: int, budget: float) -> dict[str, Any]:
    """(b) Saving one entry: service path and form POST, against a bare INSERT of one entry row."""
    k = pilots - 1  # the last pilot records the benchmark's flights
    pilot_id = INSTRUCTORS + k + 1
    sessions = make_session_factory(engine)
    client = signed_in_client(app, pilot_email(k))
    token = csrf_token(client.get(f"/pilots/{pilot_id}/logbook/new").get_data(as_text=True))
    entries_table = models.Base.metadata.tables["entries"]
    counter = iter(range(1, 1_000_000))
    before = entry_count(engine)
    made = {"service": 0, "form": 0, "insert": 0}

    def service() -> None:
        service_save(sessions, pilot_id, saved_entry(f"bench-service-{next(counter)}", k, pilots))
        made["service"] += 1

    def form() -> None:
        response = client.post(f"/pilots/{pilot_id}/logbook/new",
                               data={**save_form(next(counter), k, pilots), "csrf_token": token})
        if response.status_code != 302:
            raise RuntimeError(f"the entry form answered {response.status_code}, not a redirect: not saved")
        made["form"] += 1

    conn = engine.connect()
    ids = Ids()

    def insert() -> None:
        row, _aps, _chs = entry_rows(saved_entry(f"bench-insert-{next(counter)}", k, pilots), pilot_id, 0, {}, ids)
        del row["id"]  # the database numbers it, as for the app's own inserts
        conn.execute(sa.insert(entries_table), row)
        conn.commit()
        made["insert"] += 1

    try:
        service(), form(), insert()  # warm-up
        best = timed({"service": service, "form": form, "insert": insert}, runs, budget)
    finally:
        conn.close()
    stored = entry_count(engine) - before
    if stored != sum(made.values()):
        raise RuntimeError(f"{sum(made.values())} saves made but {stored} entries stored")
    kept = kept_status(engine, pilot_id)
    if kept is None or kept["revision"] != kept["status_revision"] or kept["as_of"] != AS_OF:
        raise RuntimeError(f"the saves left the pilot's kept status stale: {kept}")
    return {"service": best["service"][0], "form": best["form"][0], "insert": best["insert"][0],
            "rounds": best["service"][1], "stored": stored}


# ------------------------------------------------------------------ load run over HTTP


def have_gunicorn() -> bool:
    return importlib.util.find_spec("gunicorn") is not None


GUNICORN_MISSING = (
    "gunicorn is not installed, and the load run serves the app with it.\n"
    "Install it with  pip install -e '.[school]'  (or  pip install 'gunicorn>=22'),\n"
    "or run with --no-load to measure only the overview and the entry save."
)


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@contextmanager
def gunicorn_server(url: str, workers: int, timeout: int) -> Iterator[str]:
    """The app under gunicorn with ``workers`` processes on a free loopback port; yields the base URL."""
    port = free_port()
    work = Path(tempfile.mkdtemp(prefix="planner-bench-gunicorn-"))
    env = dict(os.environ, PLANNER_DATABASE_URL=url, PLANNER_TODAY=AS_OF.isoformat(),
               PLANNER_SECRET_KEY=secrets.token_hex(32), PLANNER_INSTANCE_DIR=str(work),
               PYTHONPATH=os.pathsep.join([str(REPO_ROOT), os.environ.get("PYTHONPATH", "")]).rstrip(os.pathsep))
    log = open(work / "gunicorn.log", "w+b")
    process = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "--workers", str(workers), "--bind", f"127.0.0.1:{port}",
         "--timeout", str(timeout), "--log-level", "warning", "planner.web:create_app()"],
        cwd=REPO_ROOT, env=env, stdout=log, stderr=subprocess.STDOUT,
    )
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while True:
            if process.poll() is not None:
                log.seek(0)
                raise RuntimeError("gunicorn stopped at start:\n" + log.read().decode("utf-8", "replace")[-2000:])
            try:
                conn = http.client.HTTPConnection("127.0.0.1", port, timeout=5)
                conn.request("GET", "/login")
                if conn.getresponse().status == 200:
                    conn.close()
                    break
            except OSError:
                pass
            if time.monotonic() > deadline:
                raise RuntimeError("gunicorn did not answer within 60 s")
            time.sleep(0.2)
        yield base
    finally:
        if process.poll() is None:
            process.send_signal(signal.SIGTERM)  # graceful stop of the arbiter we started (and its workers)
            try:
                process.wait(timeout=30)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait()
        log.seek(0)
        errors = [line for line in log.read().decode("utf-8", "replace").splitlines() if "[ERROR]" in line]
        log.close()
        shutil.rmtree(work, ignore_errors=True)
        for line in errors[:5]:
            say("  gunicorn: " + line)


class HttpUser:
    """One signed-in visitor over plain HTTP: keeps cookies, never follows redirects."""

    def __init__(self, host: str, port: int, timeout: float) -> None:
        self.host, self.port, self.timeout = host, port, timeout
        self.cookies: dict[str, str] = {}

    def request(self, method: str, path: str, form: dict[str, str] | None = None) -> tuple[int, str]:
        conn = http.client.HTTPConnection(self.host, self.port, timeout=self.timeout)
        headers = {"Cookie": "; ".join(f"{k}={v}" for k, v in self.cookies.items())} if self.cookies else {}
        body = None
        if form is not None:
            body = urlencode(form)
            headers["Content-Type"] = "application/x-www-form-urlencoded"
        try:
            conn.request(method, path, body=body, headers=headers)
            response = conn.getresponse()
            text = response.read().decode("utf-8", "replace")
        finally:
            conn.close()
        for header in response.headers.get_all("Set-Cookie") or []:
            name, _, rest = header.partition("=")
            value = rest.split(";", 1)[0]
            if value and "expires=thu, 01 jan 1970" not in header.lower():
                self.cookies[name.strip()] = value
            else:
                self.cookies.pop(name.strip(), None)
        return response.status, text

    def sign_in(self, email: str) -> None:
        status, page = self.request("GET", "/login")
        if status != 200:
            raise RuntimeError(f"the sign-in page answered {status}")
        status, _ = self.request("POST", "/login", {"email": email, "password": PASSWORD,
                                                    "csrf_token": csrf_token(page)})
        if status != 302:
            raise RuntimeError(f"sign-in as {email} answered {status}")


@dataclass
class LoadReport:
    seconds: float = 0.0
    latencies: dict[str, list[float]] = field(default_factory=lambda: {name: [] for name in ENDPOINTS})
    errors: dict[str, int] = field(default_factory=lambda: {name: 0 for name in ENDPOINTS})
    samples: list[str] = field(default_factory=list)
    saved: int = 0
    stored: int = 0

    @property
    def requests(self) -> int:
        return sum(len(v) for v in self.latencies.values()) + sum(self.errors.values())

    @property
    def error_count(self) -> int:
        return sum(self.errors.values())


def parse_mix(text: str) -> list[str]:
    """"dashboard=6,overview=1,save=3" -> a deck of endpoint names (each client shuffles it per round)."""
    deck: list[str] = []
    for part in text.split(","):
        name, _, weight = part.partition("=")
        name = name.strip()
        if name not in ENDPOINTS or not weight.strip().isdigit():
            raise ValueError(f"--mix: give name=count pairs of {', '.join(ENDPOINTS)}; got {part!r}")
        deck += [name] * int(weight)
    if not deck:
        raise ValueError("--mix: at least one request kind")
    return deck


def percentile(values: list[float], p: float) -> float:
    """The nearest-rank ``p``-th percentile of ``values`` (non-empty)."""
    ordered = sorted(values)
    return ordered[max(0, min(len(ordered) - 1, -(-len(ordered) * p // 100) - 1))]


def drive(base: str, pilots: int, clients: int, *, seconds: float | None = None, rounds: int | None = None,
          mix: str = DEFAULT_MIX, timeout: float = 600, seed: int = 1) -> LoadReport:
    """Drive ``base`` from ``clients`` threads for ``seconds`` (or ``rounds`` passes over the mix each).

    Each client signs in as the instructor (overview) and as its own pilot
    (dashboard, entry save with the CSRF token taken from the entry form), then
    goes through the request mix in a shuffled order, round after round. An
    error is any answer other than the one expected (200 for pages, the 302
    redirect of a saved entry) or no answer.
    """
    host, port = base.removeprefix("http://").split(":")
    deck = parse_mix(mix)
    report = LoadReport()
    lock = threading.Lock()
    failures: list[BaseException] = []
    start_at: list[float] = []
    # Every client signs in first; the clock starts when the last one is ready.
    ready = threading.Barrier(clients + 1, action=lambda: start_at.append(time.perf_counter()))

    def client(n: int) -> None:
        try:
            k = n % pilots
            pilot_id = INSTRUCTORS + k + 1
            staff, pilot = HttpUser(host, int(port), timeout), HttpUser(host, int(port), timeout)
            staff.sign_in(instructor_email(0))
            pilot.sign_in(pilot_email(k))
            _status, page = pilot.request("GET", f"/pilots/{pilot_id}/logbook/new")
            token = csrf_token(page)
        except BaseException as exc:  # a client that cannot start makes the run invalid
            failures.append(exc)
            ready.abort()
            return
        try:
            ready.wait()
        except threading.BrokenBarrierError:
            return
        try:
            run(n, k, pilot_id, staff, pilot, token)
        except BaseException as exc:  # a bug in the client, not an answer of the app: the run is invalid
            failures.append(exc)

    def run(n: int, k: int, pilot_id: int, staff: HttpUser, pilot: HttpUser, token: str) -> None:
        rnd = random.Random(f"{seed}/{n}")
        done_rounds = 0
        saves = 0
        while True:
            order = deck[:]
            rnd.shuffle(order)
            for name in order:
                if seconds is not None and time.perf_counter() - start_at[0] >= seconds:
                    return
                t0 = time.perf_counter()
                try:
                    if name == "dashboard":
                        status, _ = pilot.request("GET", "/")
                        ok = status == 200
                    elif name == "overview":
                        status, _ = staff.request("GET", "/school")
                        ok = status == 200
                    else:
                        saves += 1
                        form = {**save_form(n * 1_000_000 + saves, k, pilots), "csrf_token": token}
                        status, _ = pilot.request("POST", f"/pilots/{pilot_id}/logbook/new", form)
                        ok = status == 302
                    problem = None if ok else f"{name}: answered {status}"
                except (OSError, http.client.HTTPException) as exc:
                    problem = f"{name}: {type(exc).__name__}: {exc}"
                elapsed = time.perf_counter() - t0
                with lock:
                    if problem is None:
                        report.latencies[name].append(elapsed)
                        report.saved += name == "save"
                    else:
                        report.errors[name] += 1
                        if len(report.samples) < 5:
                            report.samples.append(problem)
            done_rounds += 1
            if rounds is not None and done_rounds >= rounds:
                return

    threads = [threading.Thread(target=client, args=(n,), daemon=True) for n in range(clients)]
    for thread in threads:
        thread.start()
    try:
        ready.wait()
    except threading.BrokenBarrierError:
        pass
    for thread in threads:
        thread.join()
    if failures:
        raise RuntimeError(f"a load client failed: {failures[0]!r}") from failures[0]
    report.seconds = time.perf_counter() - start_at[0]
    return report


# ------------------------------------------------------------------ report


def machine_summary(engine: Engine) -> str:
    from importlib.metadata import version

    parts = [f"{os.cpu_count()} cores", f"{platform.system()} {platform.machine()}",
             f"Python {platform.python_version()}", f"SQLAlchemy {version('sqlalchemy')}", f"Flask {version('flask')}"]
    if engine.dialect.name == "postgresql":
        with engine.connect() as conn:
            parts.append("PostgreSQL " + conn.execute(sa.text("SHOW server_version")).scalar_one().split()[0])
        parts.append(f"psycopg {version('psycopg')}")
    else:
        parts.append(f"SQLite {sqlite3.sqlite_version}")
    if have_gunicorn():
        parts.append(f"gunicorn {version('gunicorn')}")
    return "machine: " + ", ".join(parts)


def print_load(report: LoadReport, workers: int, clients: int) -> None:
    rps = report.requests / report.seconds if report.seconds else 0.0
    print(f"(c) load run: gunicorn, {workers} workers; {clients} client threads in this process; "
          f"{report.seconds:.1f} s: {report.requests} requests, {rps:.1f} requests/s, errors {report.error_count} "
          f"(target 0)")
    for name in ENDPOINTS:
        values = report.latencies[name]
        if values:
            print(f"    {name:<10} {len(values):6d} ok  p50 {percentile(values, 50) * 1000:9.1f} ms  "
                  f"p95 {percentile(values, 95) * 1000:9.1f} ms  p99 {percentile(values, 99) * 1000:9.1f} ms  "
                  f"errors {report.errors[name]}")
        else:
            print(f"    {name:<10}      0 ok  errors {report.errors[name]}")
    print(f"    entries saved {report.saved}, found in the database {report.stored}")
    for sample in report.samples:
        print("    error: " + sample)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--db", default="sqlite",
                        help="'sqlite' (a generated file, default) or a PostgreSQL URL of a server and an existing "
                             "database, e.g. postgresql+psycopg://postgres@127.0.0.1:5432/test (a throwaway database "
                             "is created beside it and dropped)")
    parser.add_argument("--pilots", type=int, default=500)
    parser.add_argument("--entries", type=int, default=2000, help="entries per pilot")
    parser.add_argument("--seed", type=int, default=Scale.seed)
    parser.add_argument("--runs", type=int, default=5, help="timing rounds of (a); the fastest is used")
    parser.add_argument("--save-runs", type=int, default=20,
                        help="timing rounds of (b) (a commit's disk flush varies a lot); the fastest is used")
    parser.add_argument("--budget", type=float, default=300, help="stop adding timing rounds after this many seconds")
    parser.add_argument("--seconds", type=float, default=60, help="length of the load run")
    parser.add_argument("--workers", type=int, default=4, help="gunicorn worker processes")
    parser.add_argument("--clients", type=int, default=8, help="client threads of the load run")
    parser.add_argument("--mix", default=DEFAULT_MIX, help=f"request mix of the load run (default {DEFAULT_MIX})")
    parser.add_argument("--timeout", type=int, default=600, help="seconds a load-run request may take")
    parser.add_argument("--no-load", action="store_true", help="skip the load run (c)")
    parser.add_argument("--no-cache", action="store_true", help="generate the SQLite file afresh and do not keep it")
    args = parser.parse_args(argv)
    if args.pilots < 1 or args.entries < 1:
        parser.error("--pilots and --entries must be at least 1")
    if args.clients > args.pilots:
        # Each client records flights for a pilot of its own: two new entries saved for one pilot at the
        # same moment can be given the same ref, and the entry form does not yet handle that (answers 500).
        parser.error("--clients: at most one client per pilot (give at most --pilots clients)")
    try:
        parse_mix(args.mix)
    except ValueError as exc:
        parser.error(str(exc))
    if not args.no_load and not have_gunicorn():
        print(GUNICORN_MISSING, file=sys.stderr)
        return 2

    scale = Scale(args.pilots, args.entries, args.seed)
    postgres = args.db != "sqlite"
    if postgres and not args.db.startswith("postgresql"):
        parser.error("--db: 'sqlite' or a postgresql+psycopg:// URL")
    reproduce = "python bench/school.py" + (" " + shlex.join(argv if argv is not None else sys.argv[1:])
                                            if (argv if argv is not None else sys.argv[1:]) else "")
    say(f"school: {scale.pilots} pilots x {scale.entries} entries, seed {scale.seed}, "
        f"{'PostgreSQL' if postgres else 'SQLite'}")
    with tempfile.TemporaryDirectory(prefix="planner-bench-school-") as tmp, \
            (throwaway_postgres(args.db) if postgres else _nothing()) as pg_url:
        if postgres:
            t0 = time.perf_counter()
            counts = populate(pg_url, scale)
            url, from_cache = pg_url, False
            timings = {"generated": time.perf_counter() - t0, "refresh": counts["refresh_seconds"]}
        else:
            cache = None if args.no_cache else Path(tempfile.gettempdir()) / "planner-bench-school"
            url, timings, from_cache = sqlite_database(scale, Path(tmp), cache)
        engine = make_engine(url)
        app = make_app(url)
        try:
            total = entry_count(engine)
            print(f"school: {scale.pilots} pilots x {scale.entries} entries ({total:,} entries), "
                  f"{'PostgreSQL' if postgres else 'SQLite'}; "
                  + ("generation reused from the cache" if from_cache else
                     f"generated (migrations + bulk insert + refresh) in {timings['generated']:.1f} s"))
            if "refresh" in timings:
                print(f"refresh of {scale.pilots} pilots x {scale.entries:,} entries took {timings['refresh']:.1f} s "
                      f"(planner.status.refresh, as the daily `planner refresh`"
                      f"{'; measured when the cached file was made' if from_cache else ''})")
            say("measuring (a) the overview ...")
            a = measure_overview(app, engine, scale.pilots, args.runs, args.budget)
            print(f"(a) overview request (instructor, test client): {a['request'] * 1000:10.1f} ms; "
                  f"bare SELECT of {scale.pilots} status rows: {a['select'] * 1000:8.2f} ms "
                  f"[{BASELINE_NOTE}]")
            runs_used = f"fastest of {a['rounds']} runs" if a["rounds"] else "one cold run (longer than --budget)"
            print(f"    ratio overview/SELECT = {a['request'] / a['select']:.1f}  (target <= 3); {runs_used}; "
                  f"{a['pilots shown']}/{scale.pilots} pilots on the page")
            say("measuring (b) the entry save ...")
            b = measure_save(app, engine, scale.pilots, args.save_runs, args.budget)
            print(f"(b) entry save, service path: {b['service'] * 1000:8.1f} ms; entry form POST: "
                  f"{b['form'] * 1000:8.1f} ms; bare INSERT of one entry row: {b['insert'] * 1000:8.2f} ms")
            print(f"    ratio service/INSERT = {b['service'] / b['insert']:.1f}, form/INSERT = "
                  f"{b['form'] / b['insert']:.1f}; fastest of {b['rounds']} runs; {b['stored']} entries stored")
            if not args.no_load:
                say(f"load run (c): {args.seconds:.0f} s, {args.workers} workers, {args.clients} clients ...")
                before = entry_count(engine)
                with gunicorn_server(url, args.workers, args.timeout + 30) as base:
                    report = drive(base, scale.pilots, args.clients, seconds=args.seconds, mix=args.mix,
                                   timeout=args.timeout, seed=scale.seed)
                report.stored = entry_count(engine) - before
                print_load(report, args.workers, args.clients)
                if report.error_count or report.stored != report.saved:
                    status = 1
                else:
                    status = 0
            else:
                status = 0
            print(machine_summary(engine))
        finally:
            app.extensions["planner.engine"].dispose()
            engine.dispose()
    print(f"reproduce: {reproduce}")
    return status


@contextmanager
def _nothing() -> Iterator[None]:
    yield None


if __name__ == "__main__":
    sys.exit(main())
