"""Subcommands for the database and the logbook data: init, demo, serve, pilots, export, import.

``open_session()`` is the one way CLI commands get a database session: one
session and one transaction per command, committed only if the command
succeeds.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from datetime import date
from pathlib import Path

from sqlalchemy.orm import Session

from planner import CAUTION
from planner.config import Settings

EXIT_NOT_FOUND = 1
EXIT_BAD_INPUT = 2


class CommandError(Exception):
    """A failure to report on stderr with an exit status (no traceback)."""

    def __init__(self, message: str, status: int = 1) -> None:
        super().__init__(message)
        self.status = status


def _err(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


@contextmanager
def open_session(settings: Settings | None = None) -> Iterator[Session]:
    """A session on the configured database; commits if the block succeeds, rolls back if it raises.

    Raises ``CommandError`` when the database has not been initialised.
    """
    from planner.db.session import DatabaseNotReady, session_scope

    try:
        with session_scope(settings) as session:
            yield session
    except DatabaseNotReady as exc:
        raise CommandError(str(exc), EXIT_NOT_FOUND) from None


def _guarded(func):  # type: ignore[no-untyped-def]
    """Turn ``CommandError`` into a message on stderr and an exit status."""

    def run(args: argparse.Namespace) -> int:
        try:
            return int(func(args) or 0)
        except CommandError as exc:
            _err(f"planner {args.command}: {exc}")
            return exc.status

    run.__doc__ = func.__doc__
    return run


def _help(func) -> str:  # type: ignore[no-untyped-def]
    return (func.__doc__ or "").strip()


# ---------------------------------------------------------------- commands


def cmd_init(args: argparse.Namespace) -> int:
    """Create the database, or upgrade it, to the latest schema revision (safe to repeat)."""
    from planner.db import migrate

    settings = Settings.from_env()
    migrate.upgrade(settings.database_url)
    _err(f"database ready at revision {migrate.current_revision(settings.database_url)}")
    return 0


def cmd_demo(args: argparse.Namespace) -> int:
    """Load the demo school (idempotent: a second run adds nothing) and print the demo sign-ins."""
    from planner import services

    settings = Settings.from_env()
    seed_dir = Path(args.seed_dir) if args.seed_dir else settings.seed_dir
    _err(f"loading the demo scenario from {seed_dir} ...")
    try:
        with open_session(settings) as session:
            accounts = services.load_demo(session, seed_dir, date.today(), progress=_err)
    except services.SeedError as exc:
        raise CommandError(str(exc), EXIT_BAD_INPUT) from None
    except ValueError as exc:  # a logbook file the interchange reader refused
        raise CommandError(f"demo logbook refused: {exc}", EXIT_BAD_INPUT) from None
    if args.json:
        print(json.dumps(
            [{"email": a.email, "password": a.password, "role": a.role, "name": a.name} for a in accounts],
            indent=2,
            ensure_ascii=False,
        ))
        return 0
    print("Demo sign-ins (invented school, people and data):")
    width = max(len(a.email) for a in accounts) if accounts else 0
    for a in accounts:
        print(f"  {a.role:<10} {a.email:<{width}}  password: {a.password}   ({a.name})")
    print()
    print(CAUTION)
    return 0


def cmd_serve(args: argparse.Namespace) -> int:
    """Run the web app (development server) on HOST:PORT."""
    from planner.web import create_app

    app = create_app()
    _err(f"serving on http://{args.host}:{args.port}/  (Ctrl-C stops)")
    _err(CAUTION)
    app.run(host=args.host, port=args.port, debug=False, use_reloader=False)
    return 0


def cmd_pilots(args: argparse.Namespace) -> int:
    """List the pilots: id, name, email, school."""
    from planner import services

    with open_session() as session:
        pilots = services.list_pilots(session)
    if args.json:
        print(json.dumps(pilots, indent=2, ensure_ascii=False))
        return 0
    if not pilots:
        print("No pilots yet. `planner demo` loads a demo school; `planner import FILE` adds a logbook.")
        return 0
    rows = [("ID", "NAME", "EMAIL", "SCHOOL")] + [
        (str(p["id"]), p["name"], p["email"] or "-", p["school"] or "-") for p in pilots
    ]
    widths = [max(len(r[i]) for r in rows) for i in range(4)]
    for r in rows:
        print("  ".join(cell.ljust(w) for cell, w in zip(r, widths)).rstrip())
    return 0


def cmd_export(args: argparse.Namespace) -> int:
    """Write a pilot's logbook in the interchange format (JSON, or CSV for spreadsheets)."""
    from planner import services
    from planner.export import interchange

    with open_session() as session:
        try:
            logbook = services.export_logbook(session, args.pilot)
        except LookupError as exc:
            raise CommandError(f"{exc} (see `planner pilots`)", EXIT_NOT_FOUND) from None
    text = interchange.write_csv(logbook) if args.format == "csv" else interchange.write_json(logbook)
    if args.output and args.output != "-":
        # newline="" keeps the writer's line endings exactly (CSV uses CRLF).
        with open(args.output, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
        _err(f"wrote {len(logbook.entries)} entries of {logbook.pilot.name} to {args.output}")
    else:
        sys.stdout.write(text)
        sys.stdout.flush()
    return 0


def cmd_import(args: argparse.Namespace) -> int:
    """Import a logbook file (JSON or CSV, interchange format); all or nothing. Prints the pilot id."""
    from planner import services
    from planner.export import interchange

    path = Path(args.file)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise CommandError(f"cannot read {path}: {exc.strerror}", EXIT_BAD_INPUT) from None
    except UnicodeDecodeError:
        raise CommandError(f"{path}: not UTF-8 text", EXIT_BAD_INPUT) from None
    try:
        logbook = interchange.read(text, path.name)
    except interchange.InterchangeError as exc:
        raise CommandError(f"{path}: {exc}; nothing was imported", EXIT_BAD_INPUT) from None
    _err(f"read {len(logbook.entries)} entries for {logbook.pilot.name} from {path}; storing ...")
    try:
        with open_session() as session:
            from planner.cli.status import today_in

            pilot_id = services.import_logbook(session, logbook, args.pilot, progress=_err, as_of=today_in)
    except LookupError as exc:
        raise CommandError(f"{exc} (see `planner pilots`); nothing was imported", EXIT_NOT_FOUND) from None
    except services.EntryRejected as exc:
        raise CommandError(f"{path}: {exc}", EXIT_BAD_INPUT) from None
    _err(f"imported {len(logbook.entries)} entries into pilot {pilot_id}")
    print(pilot_id)
    return 0


# ---------------------------------------------------------------- parser


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a whole number, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be 1 or more, got {value}")
    return value


def register(sub: argparse._SubParsersAction) -> None:
    """Add this area's subcommands to the ``planner`` parser."""

    def add(name: str, func, description: str | None = None) -> argparse.ArgumentParser:  # type: ignore[no-untyped-def]
        p = sub.add_parser(name, help=_help(func), description=description or _help(func))
        p.set_defaults(func=_guarded(func))
        return p

    add(
        "init",
        cmd_init,
        "Create the database, or upgrade it, to the latest schema revision (safe to repeat). "
        "The database is PLANNER_DATABASE_URL, by default a SQLite file under instance/.",
    )

    p = add(
        "demo",
        cmd_demo,
        "Load the invented demo school (Juniper Ridge Flight Academy: people, aircraft, a training "
        "device, logbooks, availability) and print the demo sign-ins. Running it again adds nothing. "
        "Needs `planner init` first.",
    )
    p.add_argument("--json", action="store_true", help="print the sign-ins as a JSON list of {email, password, role, name}")
    p.add_argument("--seed-dir", metavar="DIR", help="demo scenario directory (default: seed_demo/ or PLANNER_SEED_DIR)")

    p = add("serve", cmd_serve, "Run the web app with the development server (sign in with a demo account).")
    p.add_argument("--host", default="127.0.0.1", help="address to listen on (default: %(default)s)")
    p.add_argument("--port", type=_positive_int, default=5000, help="port to listen on (default: %(default)s)")

    p = add("pilots", cmd_pilots, "List the pilots with their id (used by export/import), name, email and school.")
    p.add_argument("--json", action="store_true", help="print a JSON list of {id, name, email, school}")

    p = add(
        "export",
        cmd_export,
        "Write a pilot's logbook (current entries) in the interchange format, version 1. "
        "JSON is the full format; CSV is the same data flattened for spreadsheets.",
    )
    p.add_argument("--pilot", type=_positive_int, required=True, metavar="ID", help="pilot id (see `planner pilots`)")
    p.add_argument("--format", choices=("json", "csv"), default="json", help="output format (default: %(default)s)")
    p.add_argument("-o", "--output", metavar="FILE", help="write to FILE instead of standard output")

    p = add(
        "import",
        cmd_import,
        "Import a logbook file in the interchange format (.json or .csv). All or nothing: a bad "
        "file changes nothing, and the message names the entry (or CSV line) and the field. "
        "Without --pilot a new pilot is created from the file's pilot block; its id is printed.",
    )
    p.add_argument("file", metavar="FILE", help="the logbook file (.json or .csv)")
    p.add_argument("--pilot", type=_positive_int, metavar="ID", help="add the entries to this existing pilot instead")
