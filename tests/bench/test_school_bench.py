"""The school benchmark's harness (bench/school.py) at toy scale, so that it does not rot.

Nothing here is timed: the figures come from running the script. These tests
check that the generated school is what the app itself would store, that each
measurement produces figures and really saves what it says, and that the load
client drives every kind of request over HTTP without an error.
"""

from __future__ import annotations

import importlib.util
import shutil
import sys
from collections.abc import Iterator
from pathlib import Path
from types import ModuleType

import pytest
from sqlalchemy import Engine, func, select

from planner import services, status
from planner.config import REPO_ROOT
from planner.core import currency
from planner.core.logbook import Logbook
from planner.db import models, repository
from planner.db import status as kept_rows
from planner.db.session import make_engine, make_session_factory
from planner.export import interchange
from tests.security.helpers import serve


def _load_bench() -> ModuleType:
    spec = importlib.util.spec_from_file_location("bench_school", REPO_ROOT / "bench" / "school.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules["bench_school"] = module  # dataclasses look their module up by name
    spec.loader.exec_module(module)
    return module


school = _load_bench()
SCALE = school.Scale(pilots=3, entries=30, seed=7)


@pytest.fixture(scope="module")
def generated(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, int]]:
    path = tmp_path_factory.mktemp("bench-school") / "toy.sqlite3"
    counts = school.populate(f"sqlite:///{path}", SCALE, progress=lambda _message: None)
    return path, counts


@pytest.fixture
def toy_url(generated: tuple[Path, dict[str, int]], tmp_path: Path) -> str:
    """A private copy of the generated school (the measurements write entries)."""
    path = tmp_path / "copy.sqlite3"
    shutil.copyfile(generated[0], path)
    return f"sqlite:///{path}"


@pytest.fixture
def engine(toy_url: str) -> Iterator[Engine]:
    eng = make_engine(toy_url)
    yield eng
    eng.dispose()


def _entries(engine: Engine) -> int:
    with make_session_factory(engine)() as s:
        return s.scalar(select(func.count()).select_from(models.Entry))


def test_the_generated_school_reads_back_through_the_app_exactly_as_generated(generated, engine) -> None:  # type: ignore[no-untyped-def]
    _path, counts = generated
    assert counts["entries"] == SCALE.pilots * SCALE.entries == _entries(engine)
    assert counts["approaches"] > counts["entries"] // 2 and counts["checks"] >= 0
    with make_session_factory(engine)() as s:
        for k in range(SCALE.pilots):
            expected = school.pilot_logbook(SCALE, k)
            for entry in expected:
                repository.validate_entry(entry)  # what the entry form and the importer enforce
            logbook = services.load_logbook(s, school.INSTRUCTORS + k + 1)
            assert logbook.entries == tuple(expected)
            interchange.read_json(interchange.write_json(Logbook(logbook.pilot, logbook.entries)))
            # Safety pilots and instructors are linked to their people, as the app links them on save.
            rows = repository.current_entries(s, school.INSTRUCTORS + k + 1)
            assert all((r.safety_pilot_id is not None) == (r.safety_pilot_name is not None) for r in rows)
            assert all((r.aircraft_id or r.device_id) is not None for r in rows)


def _fresh_evaluation_is_kept(engine: Engine, pilot_id: int) -> bool:
    """Whether the pilot's kept row is for AS_OF, at their current revision, and equal to a fresh evaluation."""
    with make_session_factory(engine)() as s:
        person = s.get(models.Person, pilot_id)
        row = kept_rows.kept_row(s, pilot_id)
        if row is None or row.as_of != school.AS_OF or row.revision != person.status_revision:
            return False
        fresh = currency.evaluate(services.load_logbook(s, pilot_id), services.rule_sets_for(person), school.AS_OF)
        return row.rules_digest == status.RULES_DIGEST and status.report_from_json(row.report, school.AS_OF) == fresh


def test_the_generated_school_has_every_status_kept_as_the_daily_refresh_leaves_it(generated, engine) -> None:  # type: ignore[no-untyped-def]
    _path, counts = generated
    assert counts["refresh_seconds"] > 0
    pilots = range(school.INSTRUCTORS + 1, school.INSTRUCTORS + SCALE.pilots + 1)
    assert all(_fresh_evaluation_is_kept(engine, pilot_id) for pilot_id in pilots)
    with engine.connect() as conn:
        rows = school.bare_status_select(conn, school.school_id(engine))
    assert [row.id for row in rows] == list(pilots)
    assert all(row.report and row.as_of for row in rows)


def test_a_cached_school_is_rebuilt_when_the_rules_digest_changes(monkeypatch) -> None:  # type: ignore[no-untyped-def]
    # Kept statuses made under other rule files would all be stale: the cache key carries the digest.
    before = school.cache_key(SCALE)
    monkeypatch.setattr(status, "RULES_DIGEST", "0123456789abcdef")
    assert school.cache_key(SCALE) != before and school.cache_key(SCALE).endswith("-r0123456789abcdef")


def test_the_overview_and_save_measurements_give_figures_and_store_every_save(engine, toy_url) -> None:  # type: ignore[no-untyped-def]
    app = school.make_app(toy_url)
    try:
        a = school.measure_overview(app, engine, SCALE.pilots, runs=1, budget=60)
        assert a["request"] > 0 and a["select"] > 0 and a["rounds"] == 1
        assert a["pilots shown"] == SCALE.pilots
        cold = school.measure_overview(app, engine, SCALE.pilots, runs=3, budget=0)  # over budget: the first run counts
        assert cold["request"] > 0 and cold["rounds"] == 0 and cold["pilots shown"] == SCALE.pilots
        before = _entries(engine)
        saver = school.INSTRUCTORS + SCALE.pilots  # the last pilot records the benchmark's flights
        revision = school.kept_status(engine, saver)["status_revision"]
        b = school.measure_save(app, engine, SCALE.pilots, runs=2, budget=60)
        assert b["service"] > 0 and b["form"] > 0 and b["insert"] > 0
        assert b["stored"] == 3 * 3 == _entries(engine) - before  # a warm-up and two rounds of three kinds of save
        # Each service and form save raised the pilot's revision and re-evaluated the kept row in its commit;
        # the bare INSERTs bypass the ORM and the status (the baseline is the row alone).
        assert school.kept_status(engine, saver) == {
            "as_of": school.AS_OF, "revision": revision + 6, "status_revision": revision + 6}
    finally:
        app.extensions["planner.engine"].dispose()


def test_the_load_client_makes_every_kind_of_request_over_http_without_an_error(engine, toy_url) -> None:  # type: ignore[no-untyped-def]
    app = school.make_app(toy_url)
    before = _entries(engine)
    try:
        with serve(app) as base:
            report = school.drive(base, SCALE.pilots, clients=2, rounds=1, mix="dashboard=2,overview=1,save=2")
    finally:
        app.extensions["planner.engine"].dispose()
    assert report.error_count == 0, report.samples
    assert {name: len(v) for name, v in report.latencies.items()} == {"dashboard": 4, "overview": 2, "save": 4}
    assert report.saved == 4 == _entries(engine) - before
    assert report.seconds > 0


def test_a_client_that_gets_a_wrong_answer_counts_an_error(engine, toy_url, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    # A pilot is not staff: the overview answers 404 to them, which the load client must count as an error.
    monkeypatch.setattr(school, "instructor_email", lambda _j: school.pilot_email(0))
    app = school.make_app(toy_url)
    try:
        with serve(app) as base:
            report = school.drive(base, SCALE.pilots, clients=1, rounds=1, mix="overview=2,dashboard=1")
    finally:
        app.extensions["planner.engine"].dispose()
    assert report.errors == {"dashboard": 0, "overview": 2, "save": 0}
    assert report.samples == ["overview: answered 404", "overview: answered 404"]


def test_without_gunicorn_the_script_says_how_to_install_it_before_generating_anything(monkeypatch, capsys) -> None:  # type: ignore[no-untyped-def]
    monkeypatch.setattr(school, "have_gunicorn", lambda: False)

    def must_not_run(*_args: object, **_kwargs: object) -> None:
        raise AssertionError("generated a school although the load run cannot start")

    monkeypatch.setattr(school, "populate", must_not_run)
    assert school.main(["--pilots", "2", "--entries", "3", "--clients", "1"]) == 2
    err = capsys.readouterr().err
    assert "gunicorn is not installed" in err and "pip install -e '.[school]'" in err and "--no-load" in err


@pytest.mark.postgres
def test_on_postgresql_the_app_saves_after_the_bulk_load(pg_url: str) -> None:
    # The loader gives explicit ids; the app's own inserts must still get fresh ones (sequences moved on).
    counts = school.populate(pg_url, school.Scale(pilots=2, entries=10, seed=3), progress=lambda _message: None)
    assert counts["entries"] == 20
    engine = make_engine(pg_url)
    app = school.make_app(pg_url)
    try:
        b = school.measure_save(app, engine, 2, runs=1, budget=0)
        assert b["stored"] == 6 and _entries(engine) == 26
        a = school.measure_overview(app, engine, 2, runs=1, budget=0)
        assert a["pilots shown"] == 2
    finally:
        app.extensions["planner.engine"].dispose()
        engine.dispose()


def test_the_script_refuses_more_load_clients_than_pilots(capsys) -> None:  # type: ignore[no-untyped-def]
    with pytest.raises(SystemExit) as stopped:
        school.main(["--pilots", "2", "--entries", "3", "--clients", "3"])
    assert stopped.value.code == 2
    assert "--clients: at most one client per pilot" in capsys.readouterr().err
