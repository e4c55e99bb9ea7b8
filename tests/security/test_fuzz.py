"""Fuzz (hypothesis, fixed seed): 10,000 generated form posts and logbook imports, no 5xx, no partial write.

``derandomize=True`` makes every CI run generate the same inputs; ``bench/fuzz.py``
runs the same generators with a random seed and a larger count. CSRF is off in
the fuzz app (tested on its own in test_csrf.py). The strategies and the
invariant checks live in ``tests/security/fuzzing.py``.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings

from tests.security.fuzzing import ROUTE_GROUPS, ROUTES, Fuzzer, import_strategy, request_strategy

# Requests per test; together at least 10,000 (issue 6).
# Form posts cost 20-60 ms each (a what-if re-evaluates the logbook), an import about 4 ms: the split keeps the
# module under about two minutes on a 2-core machine.
BUDGET = {"logbook": 1100, "settings and what-if": 600, "admin and sign-in": 1100, "planning and calendar link": 300,
          "imports": 7200}
FIXED = settings(derandomize=True, database=None, deadline=None, print_blob=False,
                 suppress_health_check=list(HealthCheck))


@pytest.fixture(scope="module")
def fuzzer(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Fuzzer]:
    f = Fuzzer(tmp_path_factory.mktemp("fuzz"))
    yield f
    f.close()


def test_the_budget_covers_every_post_route_and_reaches_ten_thousand(fuzzer: Fuzzer) -> None:
    posts = {r.endpoint for r in fuzzer.app.url_map.iter_rules() if "POST" in (r.methods or set())}
    assert posts == set(ROUTES) == {r for group in ROUTE_GROUPS.values() for r in group}
    assert sum(BUDGET.values()) >= 10_000


@pytest.mark.parametrize("group", sorted(ROUTE_GROUPS))
def test_generated_form_posts_never_fail_and_refusals_write_nothing(fuzzer: Fuzzer, group: str) -> None:
    start = fuzzer.tally.requests

    @settings(FIXED, max_examples=BUDGET[group])
    @given(request=request_strategy(ROUTE_GROUPS[group]))
    def run(request: tuple) -> None:  # type: ignore[type-arg]
        fuzzer.post(*request)
        assert fuzzer.tally.failures == [], fuzzer.tally.failures[:3]

    run()
    assert fuzzer.tally.requests - start >= BUDGET[group]


def test_generated_imports_are_all_or_nothing(fuzzer: Fuzzer) -> None:
    start, refused = fuzzer.tally.imports, fuzzer.tally.refused

    @settings(FIXED, max_examples=BUDGET["imports"])
    @given(item=import_strategy())
    def run(item: tuple[str, str]) -> None:
        fuzzer.import_text(*item)
        assert fuzzer.tally.failures == [], fuzzer.tally.failures[:3]

    run()
    assert fuzzer.tally.imports - start >= BUDGET["imports"]
    # The mutations must mostly produce refusals, or the all-or-nothing check would rarely run.
    assert fuzzer.tally.refused - refused >= BUDGET["imports"] // 2


@pytest.mark.parametrize("field", ["entries-0-approaches", "entries-0-holds", "entries-0-landings"])
def test_a_huge_whole_number_in_the_what_if_form_is_a_field_error_not_a_server_error(fuzzer: Fuzzer, field: str) -> None:
    """Found by this fuzz: WTForms' NumberRange overflowed on a 400-digit integer (forms.BoundedIntegerField)."""
    from tests.security.fuzzing import WHAT_IF

    form = {k: v for k, v in WHAT_IF.items() if k != "add"}
    form[field] = "9" * 400
    response = fuzzer.client("pilot").post(f"/pilots/{fuzzer.ids['pilot']}/what-if", data=form)
    assert response.status_code == 400
    assert "From 0 to" in response.get_data(as_text=True) or "Not a valid integer" in response.get_data(as_text=True)


def test_a_huge_whole_number_in_the_settings_form_is_a_field_error_not_a_server_error(fuzzer: Fuzzer) -> None:
    from tests.security.fuzzing import SETTINGS

    before = fuzzer.fingerprint()
    response = fuzzer.client("pilot").post("/settings", data=dict(SETTINGS, pt0_days="9" * 400))
    assert response.status_code == 400
    assert fuzzer.fingerprint() == before


def test_a_csv_count_of_fifty_thousand_digits_is_refused_with_the_column_named(fuzzer: Fuzzer) -> None:
    """Found by this fuzz: the CSV reader let Python's int() limit escape as a bare ValueError."""
    from planner.export import interchange
    from tests.security.fuzzing import SEED_TEXTS

    name, body = next(t for t in SEED_TEXTS if t[0].endswith(".csv"))
    lines = body.split("\r\n")
    header = lines[3].split(",")
    cells = lines[4].split(",")
    cells[header.index("holds")] = "9" * 50_000
    lines[4] = ",".join(cells)
    with pytest.raises(interchange.InterchangeError, match="holds"):
        interchange.read("\r\n".join(lines), name)
