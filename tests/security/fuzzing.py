"""Generated hostile input for every POST route and for logbook imports, shared by tests/security/test_fuzz.py
(fixed seed, CI) and bench/fuzz.py (random seed, larger counts).

A request is a (visitor, route, form) triple: a complete, valid form for the
route with each field kept, dropped or replaced by garbage (unicode, huge,
numeric edge cases, markup, SQL), plus stray fields. An import is a valid
interchange file (JSON or CSV) mutated at the text level or the value level.

The invariants (``Fuzzer.post`` / ``Fuzzer.import_text``): no response is a
5xx and no exception escapes; whenever the answer is a refusal (4xx, or a
refused import), the database is exactly as before; an accepted import adds
exactly its entries and one pilot. CSRF is switched off in the fuzz app: it is
tested on its own in tests/security/test_csrf.py, and with it on nearly every
generated post would stop at the token.
"""

from __future__ import annotations

import hashlib
import json
import shutil
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path
from typing import Any

from flask import Flask
from flask.testing import FlaskClient
from hypothesis import strategies as st
from sqlalchemy import text

from planner import services
from planner.db import repository
from planner.export import interchange
from planner.web import db_session
from tests.conftest import small_logbook
from tests.web.dash_fixtures import build_demo_database, make_app, person_id
from tests.web.test_admin import person_form
from tests.web.test_logbook import form_data

KEEP, DROP = "\x00keep", "\x00drop"
EDGE_VALUES = (
    "", " ", "-1", "0", "1", "1.25", "1.255", "-0", "1e309", "-1e309", "nan", "NaN", "inf", "Infinity", "0x10",
    "99999", "100000", "2147483648", "99999999999999999999999", "1,5", "１２", "٣", "²", "1_000",
    "2026-02-30", "2026-13-01", "0000-00-00", "0001-01-01", "9999-12-31", "10000-01-01", "2026-12-01T10:00",
    "24:00", "23:60", "-1:00", "y", "n", "on", "true", "false", "None", "null",
    "<script>alert(1)</script>", "\"'><img src=x>", "'; DROP TABLE entries; --", "%00", "\x00", "\r\n", "\t",
    "../../etc/passwd", "{{7*7}}", "${7*7}", "ILS|QJRR", "a;b", "faa-part61", "tc-car401", "practice-targets",
    "America/Denver", "Not/AZone", "UTC", "QJRR", "N417JR", "JR-ATD1", "ipc", "flight-review",
    "mara.oyelaran@juniper-ridge.example", "x@y", "@", "a" * 255, "é" * 300, "\u202e\u0645\u0631\u062d\u0628\u0627",
    "\U0001f6e9\ufe0f", "\ud7ff", "\ufeff", "Ω" * 64,
)


@st.composite
def _huge(draw: st.DrawFn) -> str:
    unit = draw(st.sampled_from(["x", "9", "é", "\U0001f6e9", "<a>", "1.5 "]))
    return unit * draw(st.integers(1_000, 60_000))


GARBAGE = st.one_of(
    st.sampled_from(EDGE_VALUES),
    st.text(max_size=30),
    st.integers(-(10**20), 10**20).map(str),
    st.floats().map(repr),
    st.dates(min_value=date(1, 1, 1)).map(date.isoformat),
    _huge(),
)
VALUE = st.one_of(st.just(KEEP), st.just(KEEP), st.just(KEEP), st.just(DROP), GARBAGE)
STRAY_NAMES = st.one_of(st.sampled_from(["id", "pilot_id", "version", "is_admin", "password_hash", "school_id",
                                         "approaches-7-type", "approaches-999999-airfield", "entries-9-day",
                                         "rule_sets", "checks", "csrf_token", "next", "__class__"]),
                        st.text(min_size=1, max_size=12))


def form_strategy(base: dict[str, Any]) -> st.SearchStrategy[dict[str, Any]]:
    """``base`` with each field kept, dropped or replaced, and up to three stray fields."""
    fields = st.fixed_dictionaries({k: VALUE for k in base})
    stray = st.dictionaries(STRAY_NAMES, st.one_of(GARBAGE, st.lists(GARBAGE, max_size=3)), max_size=3)

    def build(choice: dict[str, str], extra: dict[str, Any]) -> dict[str, Any]:
        out = {}
        for k, v in choice.items():
            if v == KEEP:
                out[k] = base[k]
            elif v != DROP:
                out[k] = v
        out.update(extra)
        return out

    return st.builds(build, fields, stray)


WHAT_IF = {
    "entries-0-day": "2026-12-10", "entries-0-setting": "simulated", "entries-0-approaches": "6",
    "entries-0-approach_type": "ILS", "entries-0-approach_airfield": "QJRR", "entries-0-holds": "1",
    "entries-0-course_tracking": "y", "entries-0-instrument_hours": "1.5", "entries-0-partial_panel": "0",
    "entries-0-ua_nose_high": "0", "entries-0-ua_nose_low": "0", "entries-0-landings": "1", "entries-0-check": "",
    "entries-1-day": "2026-12-20", "add": "", "submit": "Show how the dates move",
}
SETTINGS = {"rule_sets": ["faa-part61", "practice-targets"], "home_airfield": "QJRR", "timezone": "America/Denver",
            "pt0_days": "60", "pt0_0": "2", "pt1_days": "90", "night_practice": "y", "submit": "Save settings"}
PLAN_RANGE = {"start": "2026-12-01", "end": "2026-12-03",  # short: a kept range runs the scheduler
              "weather": "METAR QJRR 011753Z 27012KT 10SM FEW045 12/01 A2990\n"
                         "TAF QJRR 011720Z 0118/0224 27012KT P6SM SCT050\n  TEMPO 0200/0204 3SM -SHRA BKN015",
              "vmc_ceiling_ft": "3000", "vmc_visibility_sm": "5", "daylight_only": "y"}
PLAN_SESSION = {"session_id": "1", "version": "1"}
SIGN_IN = {"email": "mara.oyelaran@juniper-ridge.example", "password": "not-the-password", "next": "/"}

# route name -> (visitors allowed to use it, URL template, base form)
ROUTES: dict[str, tuple[tuple[str, ...], str, dict[str, Any]]] = {
    "logbook.create": (("pilot", "instructor"), "/pilots/{mara}/logbook/new", form_data()),
    "logbook.edit": (("pilot", "instructor"), "/pilots/{mara}/logbook/{ref}/edit",
                     form_data(version="{version}", date="2026-06-03")),
    "logbook.delete": (("pilot", "instructor"), "/pilots/{mara}/logbook/{ref}/delete", {"version": "{version}"}),
    "logbook.restore": (("pilot", "instructor"), "/pilots/{mara}/logbook/{ref}/restore", {"version": "{version}"}),
    "logbook.credit": (("pilot", "instructor"), "/pilots/{mara}/logbook/credit", form_data()),
    "dashboard.what_if": (("pilot", "instructor", "admin"), "/pilots/{mara}/what-if", WHAT_IF),
    "settings.index": (("pilot", "instructor", "admin"), "/settings", SETTINGS),
    "settings.pilot": (("pilot", "instructor"), "/pilots/{mara}/settings", SETTINGS),
    "admin.create_person": (("admin",), "/admin/people/new", person_form()),
    "admin.edit_person": (("admin",), "/admin/people/{tobias}/edit",
                          person_form(name="Tobias Lindqvist", email="tobias.lindqvist@juniper-ridge.example", password="")),
    "auth.login": (("anonymous",), "/login", SIGN_IN),
    "auth.logout": (("pilot", "instructor", "admin"), "/logout", {}),
    "settings.create_feed": (("pilot", "instructor", "admin"), "/settings/calendar-link", {}),
    "settings.revoke_feed": (("pilot", "instructor", "admin"), "/settings/calendar-link/revoke", {}),
    "plan.propose": (("instructor", "admin", "pilot"), "/plan/propose", PLAN_RANGE),
    "plan.save": (("instructor", "admin"), "/plan/save", PLAN_RANGE),
    "plan.accept": (("instructor", "admin", "pilot"), "/plan/accept", PLAN_SESSION),
    "plan.cancel": (("instructor", "admin"), "/plan/cancel", PLAN_SESSION),
    "plan.move": (("instructor", "admin"), "/plan/move", dict(PLAN_SESSION, starts_at="2026-12-02T10:00")),
    "plan.flown": (("instructor", "pilot"), "/plan/flown", PLAN_SESSION),
}
ROUTE_GROUPS = {
    "logbook": ("logbook.create", "logbook.edit", "logbook.delete", "logbook.restore", "logbook.credit"),
    "settings and what-if": ("dashboard.what_if", "settings.index", "settings.pilot"),
    "admin and sign-in": ("admin.create_person", "admin.edit_person", "auth.login", "auth.logout"),
    "planning and calendar link": ("plan.propose", "plan.save", "plan.accept", "plan.cancel", "plan.move",
                                   "plan.flown", "settings.create_feed", "settings.revoke_feed"),
}


def request_strategy(routes: tuple[str, ...]) -> st.SearchStrategy[tuple[str, str, dict[str, Any]]]:
    """(route, visitor, form) for one of ``routes``."""
    return st.one_of(*(
        st.tuples(st.just(name), st.sampled_from(ROUTES[name][0]), form_strategy(ROUTES[name][2])) for name in routes
    ))


def _seed_texts() -> list[tuple[str, str]]:
    """Valid interchange files, JSON and CSV, to mutate."""
    out = []
    for n, (name, prefix) in enumerate((("Wilmer Osk", "wo"), ("Ånnika Løvås-Ñúñez", "al"))):
        logbook = interchange.read_json(json.dumps(small_logbook(name, prefix, safety_pilot="Dev Halloran" if n else None)))
        out.append(("logbook.json", interchange.write_json(logbook)))
        out.append(("logbook.csv", interchange.write_csv(logbook)))
    return out


SEED_TEXTS = _seed_texts()
JSON_VALUES = st.recursive(
    st.one_of(st.none(), st.booleans(), st.integers(-(10**20), 10**20), st.floats(allow_nan=False), GARBAGE),
    lambda inner: st.one_of(st.lists(inner, max_size=3), st.dictionaries(st.text(max_size=8), inner, max_size=3)),
    max_leaves=6,
)


@st.composite
def import_strategy(draw: st.DrawFn) -> tuple[str, str]:
    """(file name, text): a valid file, mutated at the text level or (JSON) at the value level."""
    name, body = draw(st.sampled_from(SEED_TEXTS))
    kind = draw(st.sampled_from(["text", "text", "value", "value", "valid"]))
    if kind == "value" and name.endswith(".json"):
        doc = json.loads(body)
        entry = draw(st.sampled_from(doc["entries"]))
        key = draw(st.one_of(st.sampled_from(sorted(entry) + ["approaches", "checks", "id", "date"]), st.text(max_size=8)))
        target = draw(st.sampled_from([entry, doc, doc["pilot"]]))
        target[key] = draw(JSON_VALUES)
        if draw(st.booleans()):
            doc["entries"].append(draw(st.sampled_from(doc["entries"])))  # a repeated entry
        return name, json.dumps(doc, ensure_ascii=draw(st.booleans()))
    if kind == "value":  # CSV: replace one cell
        lines = body.split("\r\n")
        row = draw(st.integers(0, max(len(lines) - 2, 0)))
        cells = lines[row].split(",")
        col = draw(st.integers(0, len(cells) - 1))
        cells[col] = draw(GARBAGE).replace("\x00", "")
        lines[row] = ",".join(cells)
        return name, "\r\n".join(lines)
    if kind == "text":
        for _ in range(draw(st.integers(1, 4))):
            pos = draw(st.integers(0, len(body)))
            op = draw(st.sampled_from(["insert", "delete", "replace", "truncate", "duplicate"]))
            if op == "insert":
                body = body[:pos] + draw(GARBAGE) + body[pos:]
            elif op == "delete":
                body = body[:pos] + body[pos + draw(st.integers(1, 40)):]
            elif op == "replace":
                body = body[:pos] + draw(st.sampled_from(list('{}[]",:0-.\n\r;|') + ["null", "true", "1e999"])) + body[pos + 1:]
            elif op == "truncate":
                body = body[:pos]
            else:
                end = draw(st.integers(pos, min(len(body), pos + 400)))
                body = body[:end] + body[pos:end] + body[end:]
    return name, body


@dataclass
class Tally:
    requests: int = 0
    imports: int = 0
    refused: int = 0
    failures: list[str] = field(default_factory=list)


class Fuzzer:
    """One app on a copy of the demo database, signed-in clients per visitor, and the invariant checks."""

    def __init__(self, base: Path) -> None:
        source = build_demo_database(base)
        path = base / "fuzz.sqlite3"
        shutil.copy(source, path)
        self.app: Flask = make_app(path, base, WTF_CSRF_ENABLED=False)
        self.ids = {who: person_id(self.app, name) for who, name in
                    (("pilot", "mara"), ("instructor", "hollis"), ("admin", "wren"), ("tobias", "tobias"))}
        with self.app.app_context():
            self.ref = repository.current_entries(db_session(), self.ids["pilot"])[0].external_id
        self.tally = Tally()
        self._clients: dict[str, FlaskClient] = {}
        self._known: tuple[Any, ...] | None = None  # the fingerprint after the last refusal (nothing changed since)

    def close(self) -> None:
        self.app.extensions["planner.engine"].dispose()

    def client(self, visitor: str) -> FlaskClient:
        if visitor not in self._clients:
            client = self.app.test_client()
            if visitor != "anonymous":
                with client.session_transaction() as session:
                    session["_user_id"] = str(self.ids[visitor])
                    session["_fresh"] = True
            self._clients[visitor] = client
        return self._clients[visitor]

    def _before(self) -> tuple[Any, ...]:
        known, self._known = self._known, None
        return known if known is not None else self.fingerprint()

    def fingerprint(self) -> tuple[Any, ...]:
        """Every table's row count, entry versions and deletions, and a digest of the school people's rows."""
        with self.app.extensions["planner.engine"].connect() as conn:
            counts = conn.execute(text(
                "SELECT (SELECT count(*) FROM schools), (SELECT count(*) FROM people), (SELECT count(*) FROM entries),"
                " (SELECT coalesce(sum(version), 0) FROM entries), (SELECT count(*) FROM entries WHERE deleted_at IS NULL),"
                " (SELECT count(*) FROM approaches), (SELECT count(*) FROM entry_checks),"
                " (SELECT count(*) FROM entry_revisions), (SELECT count(*) FROM availability_windows),"
                " (SELECT count(*) FROM aircraft), (SELECT count(*) FROM airfields),"
                " (SELECT count(*) FROM practice_sessions), (SELECT coalesce(sum(sequence), 0) FROM practice_sessions),"
                " (SELECT count(*) FROM calendar_feed_tokens),"
                " (SELECT count(*) FROM calendar_feed_tokens WHERE revoked_at IS NULL)"
            )).one()
            # Every school person's whole row (what a form can change); imported pilots, who pile up and whose
            # rows no form here edits, are covered by the count.
            people = conn.execute(text("SELECT * FROM people WHERE school_id IS NOT NULL ORDER BY id")).all()
        digest = hashlib.sha256(repr(people).encode()).hexdigest()
        return (*counts, digest)

    def _version(self) -> str:
        with self.app.extensions["planner.engine"].connect() as conn:
            return str(conn.execute(text("SELECT version FROM entries WHERE pilot_id = :p AND external_id = :r"),
                                    {"p": self.ids["pilot"], "r": self.ref}).scalar_one())

    def post(self, route: str, visitor: str, form: dict[str, Any]) -> None:
        """Make one request; record a failure if it answers 5xx, raises, or writes while refusing."""
        _, template, _ = ROUTES[route]
        url = template.format(mara=self.ids["pilot"], tobias=self.ids["tobias"], ref=self.ref)
        if "{version}" in repr(form):
            version = self._version()
            form = {k: (v.replace("{version}", version) if isinstance(v, str) else v) for k, v in form.items()}
        client = self.client(visitor)
        if route == "auth.logout":
            client = self.app.test_client()  # keep the shared client signed in
            with client.session_transaction() as session:
                session["_user_id"] = str(self.ids[visitor])
        before = self._before()
        self.tally.requests += 1
        try:
            response = client.post(url, data=form)
            status = response.status_code
            response.close()
        except Exception as exc:  # noqa: BLE001 - an exception escaping a view is a finding
            self.tally.failures.append(f"POST {url} as {visitor}: {type(exc).__name__}: {exc!s:.300} form={form!r:.500}")
            return
        if status >= 500:
            self.tally.failures.append(f"POST {url} as {visitor}: {status} form={form!r:.500}")
        elif status >= 400:
            self.tally.refused += 1
            after = self.fingerprint()
            if after != before:
                self.tally.failures.append(f"POST {url} as {visitor}: refused with {status} but wrote: {before} -> {after}")
            self._known = after

    def import_text(self, name: str, body: str) -> None:
        """Import through the service in one transaction; refused -> nothing written, accepted -> exactly its rows."""
        before = self._before()
        self.tally.imports += 1
        sessions = self.app.extensions["planner.sessions"]
        with sessions() as session:
            try:
                logbook = interchange.read(body, name)
                services.import_logbook(session, logbook)
                session.commit()
                accepted = True
            except (interchange.InterchangeError, services.EntryRejected, LookupError):
                session.rollback()
                accepted = False
            except Exception as exc:  # noqa: BLE001
                session.rollback()
                self.tally.failures.append(f"import {name}: {type(exc).__name__}: {exc!s:.300} text={body!r:.500}")
                return
        after = self.fingerprint()
        if not accepted:
            self.tally.refused += 1
            if after != before:
                self.tally.failures.append(f"import {name}: refused but wrote: {before} -> {after}")
            self._known = after
        elif (after[1] - before[1], after[2] - before[2]) != (1, len(logbook.entries)):
            self.tally.failures.append(f"import {name}: accepted but people/entries moved by "
                                       f"{after[1] - before[1]}/{after[2] - before[2]} for {len(logbook.entries)} entries")
