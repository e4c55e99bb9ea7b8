"""Browser tests: Debian's chromium driven by Playwright, the app served in a thread on a fresh demo database.

No ``playwright install``: the browser is /usr/bin/chromium (``apt-get install -y chromium``).
Its absence is a failure, never a skip.
"""

from __future__ import annotations

import shutil
import threading
from collections.abc import Iterator
from pathlib import Path

import pytest
from flask import Flask
from werkzeug.serving import make_server

from planner.config import REPO_ROOT
from tests.web.dash_fixtures import PASSWORDS, build_demo_database, make_app

CHROMIUM = Path("/usr/bin/chromium")
ARTIFACTS = REPO_ROOT / "test-artifacts"
LAUNCH_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update", "--disable-sync"]


@pytest.fixture(scope="session")
def browser():  # type: ignore[no-untyped-def]
    if not CHROMIUM.exists():
        pytest.fail(f"{CHROMIUM} is missing: run `apt-get install -y chromium` (never `playwright install`)")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        chromium = pw.chromium.launch(executable_path=str(CHROMIUM), args=LAUNCH_ARGS)
        yield chromium
        chromium.close()


@pytest.fixture(scope="session")
def demo_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return build_demo_database(tmp_path_factory.mktemp("e2e-demo"))


@pytest.fixture
def served_app(demo_file: Path, tmp_path: Path) -> Iterator[tuple[str, Flask]]:
    """The app on 127.0.0.1 and a free port, on a fresh copy of the demo database; yields (base URL, app)."""
    path = tmp_path / "e2e.sqlite3"
    shutil.copy(demo_file, path)
    app = make_app(path, tmp_path)
    server = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_port}", app
    finally:
        server.shutdown()
        thread.join(timeout=10)
        app.extensions["planner.engine"].dispose()


@pytest.fixture
def live_server(served_app: tuple[str, Flask]) -> str:
    """The base URL of the served app."""
    return served_app[0]


@pytest.fixture
def page(browser):  # type: ignore[no-untyped-def]
    context = browser.new_context(viewport={"width": 1280, "height": 900})
    tab = context.new_page()
    yield tab
    context.close()


@pytest.fixture
def artifacts() -> Path:
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS


def sign_in(page, base: str, who: str) -> None:  # type: ignore[no-untyped-def]
    email, password = PASSWORDS[who]
    page.goto(f"{base}/login")
    page.get_by_label("Email").fill(email)
    page.get_by_label("Password").fill(password)
    page.get_by_role("button", name="Sign in").click()
    page.wait_for_load_state()
