"""Security headers on every response, and pages that need no inline script.

Every GET route of ``app.url_map`` is fetched by each kind of visitor, plus
an unknown page, a static file and a refused POST. Each response must carry
a Content-Security-Policy whose scripts are limited to the site itself
(no 'unsafe-inline', no 'unsafe-eval'), ``frame-ancestors 'none'`` (no
framing) and ``X-Content-Type-Options: nosniff``. Every HTML page is also
parsed: no inline ``<script>`` body and no ``on...=`` handler attributes,
which that policy would block anyway.
"""

from __future__ import annotations

from html.parser import HTMLParser

import pytest
from flask import Flask

from planner.db import repository
from planner.web import db_session
from tests.web.dash_fixtures import app, demo_database, person_id, sign_in  # noqa: F401

VISITORS = (None, "mara", "hollis", "wren")


def _policy(header: str) -> dict[str, list[str]]:
    directives: dict[str, list[str]] = {}
    for part in header.split(";"):
        words = part.split()
        if words:
            directives[words[0].lower()] = words[1:]
    return directives


def check_headers(response, what: str) -> None:  # type: ignore[no-untyped-def]
    csp = response.headers.get("Content-Security-Policy")
    assert csp, f"{what}: no Content-Security-Policy"
    policy = _policy(csp)
    scripts = policy.get("script-src", policy.get("default-src"))
    assert scripts is not None, f"{what}: no script-src or default-src"
    assert "'unsafe-inline'" not in scripts and "'unsafe-eval'" not in scripts and "*" not in scripts, what
    assert policy.get("frame-ancestors") == ["'none'"], what
    assert response.headers.get("X-Content-Type-Options") == "nosniff", what


class _Scripts(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.problems: list[str] = []
        self._in_script = False

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        names = {k.lower() for k, _ in attrs}
        handlers = sorted(n for n in names if n.startswith("on"))
        if handlers:
            self.problems.append(f"<{tag}> with {handlers}")
        if any((v or "").strip().lower().startswith("javascript:") for _, v in attrs):
            self.problems.append(f"<{tag}> with a javascript: URL")
        self._in_script = tag == "script"
        if tag == "script" and "src" not in names:
            self.problems.append("<script> without src")

    def handle_endtag(self, tag: str) -> None:
        self._in_script = False

    def handle_data(self, data: str) -> None:
        if self._in_script and data.strip():
            self.problems.append("inline script body")


def _get_urls(app: Flask) -> list[str]:
    mara = person_id(app, "mara")
    with app.app_context():
        ref = repository.current_entries(db_session(), mara)[0].external_id
    urls = []
    for rule in app.url_map.iter_rules():
        if rule.endpoint != "static" and "GET" in (rule.methods or set()):
            urls.append(rule.rule.replace("<int:pilot_id>", str(mara)).replace("<int:person_id>", str(mara)).replace("<ref>", ref))
    return sorted(urls)


@pytest.mark.parametrize("visitor", VISITORS, ids=lambda v: v or "anonymous")
def test_every_page_carries_the_security_headers_and_no_inline_script(app: Flask, visitor: str | None) -> None:
    client = app.test_client()
    if visitor:
        sign_in(client, visitor)
    urls = _get_urls(app) + ["/no-such-page", "/static/style.css", "/static/logbook.js"]
    assert len(urls) >= 15
    seen_html = 0
    for url in urls:
        with client.get(url) as response:  # static files are streamed: close them
            check_headers(response, f"GET {url} as {visitor}")
            if response.mimetype == "text/html" and response.status_code == 200:
                seen_html += 1
                parser = _Scripts()
                parser.feed(response.get_data(as_text=True))
                assert parser.problems == [], f"GET {url} as {visitor}: {parser.problems}"
    assert seen_html >= 1


def test_refused_posts_and_errors_carry_the_headers_too(app: Flask) -> None:
    client = app.test_client()
    check_headers(client.post("/login", data={}), "POST /login without a token")
    sign_in(client, "mara")
    check_headers(client.post(f"/pilots/{person_id(app, 'mara')}/logbook/new", data={}), "POST new entry without a token")
    check_headers(client.get("/pilots/999999"), "GET an unknown pilot")
