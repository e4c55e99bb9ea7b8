"""The ``planner`` command: a thin adapter over the services and the core.

Each area registers its own subcommands (``register(subparsers)`` in
``planner.cli.<area>``); this module only builds the parser and dispatches.
"""

from __future__ import annotations

import argparse
import sys

from planner.cli import backup, currency, data, plan, status


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="planner",
        description=(
            "Keeps instrument pilots and flight schools current and proficient: "
            "records the logbook, computes every currency window, and plans practice. "
            "Advisory only: the pilot in command decides; the regulation text, your "
            "regulator, instructors and local practice prevail."
        ),
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    data.register(sub)
    currency.register(sub)
    plan.register(sub)
    backup.register(sub)
    status.register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    return int(args.func(args) or 0)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
