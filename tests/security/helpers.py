"""Shared by the security tests: a real HTTP server for the app, a minimal cookie-keeping client, the database state."""

from __future__ import annotations

import http.client
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any
from urllib.parse import urlencode, urlsplit

from flask import Flask
from sqlalchemy import func, select
from werkzeug.serving import make_server

from planner.db import models

TABLES = (models.School, models.Airfield, models.Person, models.Aircraft, models.TrainingDevice, models.Entry,
          models.Approach, models.EntryCheck, models.EntryRevision, models.AvailabilityWindow, models.SignInThrottle,
          models.PracticeSession, models.CalendarFeedToken)


@contextmanager
def serve(app: Flask) -> Iterator[str]:
    """Serve ``app`` on a free loopback port in a thread; yield its base URL."""
    server = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_port}"
    finally:
        server.shutdown()
        server.server_close()
        thread.join()


class Browser:
    """Just enough of a browser over real HTTP: keeps cookies, never follows redirects."""

    def __init__(self, base: str) -> None:
        parts = urlsplit(base)
        self.host, self.port = parts.hostname or "127.0.0.1", parts.port or 80
        self.cookies: dict[str, str] = {}
        self.set_cookie_headers: list[str] = []

    def request(self, method: str, path: str, form: dict[str, Any] | None = None) -> tuple[int, Any, str]:
        conn = http.client.HTTPConnection(self.host, self.port, timeout=60)
        headers = {}
        body = None
        if self.cookies:
            headers["Cookie"] = "; ".join(f"{k}={v}" for k, v in self.cookies.items())
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
            self.set_cookie_headers.append(header)
            name, _, rest = header.partition("=")
            value = rest.split(";", 1)[0]
            if value and "expires=thu, 01 jan 1970" not in header.lower():
                self.cookies[name.strip()] = value
            else:
                self.cookies.pop(name.strip(), None)
        return response.status, response.headers, text


def state(app: Flask) -> dict[str, Any]:
    """Row counts of every table, plus each person's and each entry's changeable values."""
    with app.extensions["planner.sessions"]() as s:
        out: dict[str, Any] = {t.__tablename__: s.scalar(select(func.count()).select_from(t)) for t in TABLES}
        out["people values"] = sorted(
            (p.id, p.name, p.email, p.password_hash, p.roles, p.medical_class, p.medical_expires, p.timezone,
             p.home_airfield_id, tuple(p.rule_sets or ()), repr(p.practice_targets), tuple(p.category_classes or ()))
            for p in s.scalars(select(models.Person))
        )
        out["entry versions"] = sorted((e.id, e.version, e.deleted_at is not None) for e in s.scalars(select(models.Entry)))
        out["throttle failures"] = sorted((t.email, t.address, t.failures) for t in s.scalars(select(models.SignInThrottle)))
    return out
