"""Fuzz the web app and the importer with a random seed: the CI fuzz (tests/security/test_fuzz.py), larger.

    python bench/fuzz.py [COUNT] [--seed N]

COUNT (default 20000) is split like the CI run: form posts to every POST route
by each kind of visitor, and interchange imports (JSON and CSV, mutated). Prints
the seed, the counts of requests, refusals and failures (a 5xx, an exception, or
a write by a refused request); exits 1 if there was any failure, printing the
first few. Rerun with the printed --seed to reproduce.
"""

from __future__ import annotations

import argparse
import random
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import seed as hypothesis_seed  # noqa: E402

from tests.security.fuzzing import ROUTE_GROUPS, Fuzzer, import_strategy, request_strategy  # noqa: E402
from tests.security.test_fuzz import BUDGET  # noqa: E402


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("count", nargs="?", type=int, default=20_000, help="total requests and imports (default 20000)")
    parser.add_argument("--seed", type=int, default=None, help="hypothesis seed (default: random)")
    args = parser.parse_args()
    run_seed = args.seed if args.seed is not None else random.randrange(2**32)
    total = sum(BUDGET.values())
    share = {group: max(1, args.count * n // total) for group, n in BUDGET.items()}
    base = settings(database=None, deadline=None, print_blob=True, suppress_health_check=list(HealthCheck))
    print(f"seed {run_seed}; planned {sum(share.values())} ({', '.join(f'{g}: {n}' for g, n in share.items())})")

    with tempfile.TemporaryDirectory() as tmp:
        fuzzer = Fuzzer(Path(tmp))
        started = time.perf_counter()
        try:
            for group, routes in ROUTE_GROUPS.items():
                @hypothesis_seed(run_seed)
                @settings(base, max_examples=share[group])
                @given(request=request_strategy(routes))
                def posts(request: tuple) -> None:  # type: ignore[type-arg]
                    fuzzer.post(*request)

                posts()

            @hypothesis_seed(run_seed)
            @settings(base, max_examples=share["imports"])
            @given(item=import_strategy())
            def imports(item: tuple[str, str]) -> None:
                fuzzer.import_text(*item)

            imports()
        finally:
            fuzzer.close()
        elapsed = time.perf_counter() - started
    t = fuzzer.tally
    print(f"form posts {t.requests}, imports {t.imports}, refused {t.refused}, failures {len(t.failures)}, "
          f"{elapsed:.0f} s ({(t.requests + t.imports) / elapsed:.0f} per second)")
    for failure in t.failures[:5]:
        print("  " + failure)
    return 1 if t.failures else 0


if __name__ == "__main__":
    sys.exit(main())
