"""Subcommands to back up and restore a whole school: backup, restore (format: docs/backup.md)."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from planner.cli.data import EXIT_BAD_INPUT, EXIT_NOT_FOUND, CommandError, _err, _guarded, _help, open_session


def _school_id(session, value: str) -> int:  # type: ignore[no-untyped-def]
    from planner.db import repository

    if value.isdigit():
        return int(value)
    school = repository.school_by_slug(session, value)
    if school is None:
        raise CommandError(f"no school {value!r}", EXIT_NOT_FOUND)
    return school.id


def cmd_backup(args: argparse.Namespace) -> int:
    """Write a whole school (people, aircraft, devices, availability, practice sessions, every logbook) to one JSON file."""
    from planner import backup

    with open_session() as session:
        try:
            text = backup.backup_school(session, _school_id(session, args.school),
                                        include_password_hashes=args.include_password_hashes)
        except LookupError as exc:
            raise CommandError(str(exc), EXIT_NOT_FOUND) from None
    if args.output == "-":
        sys.stdout.write(text)
        sys.stdout.flush()
        return 0
    # Written next to the target, then renamed: a crash never leaves a half-written backup under the name.
    target = Path(args.output)
    partial = target.with_name(target.name + ".partial")
    mode = 0o600 if args.include_password_hashes else 0o644
    fd = os.open(partial, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, mode)
    with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
        fh.write(text)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(partial, target)
    _err(f"wrote the school backup to {target}")
    return 0


def cmd_restore(args: argparse.Namespace) -> int:
    """Restore a school from a backup file into this database; all or nothing. Prints the school id."""
    from planner import backup

    path = Path(args.file)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise CommandError(f"cannot read {path}: {exc.strerror}", EXIT_BAD_INPUT) from None
    except UnicodeDecodeError:
        raise CommandError(f"{path}: not UTF-8 text", EXIT_BAD_INPUT) from None
    try:
        with open_session() as session:
            from planner.cli.status import today_in

            school_id = backup.restore_school(session, text, as_of=today_in)
    except backup.BackupError as exc:
        raise CommandError(f"{path}: {exc}; nothing was restored", EXIT_BAD_INPUT) from None
    _err(f"restored the school from {path} as school {school_id}")
    print(school_id)
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    """Add this area's subcommands to the ``planner`` parser."""
    p = sub.add_parser(
        "backup",
        help=_help(cmd_backup),
        description=_help(cmd_backup) + " Password hashes are left out unless --include-password-hashes is given.",
    )
    p.set_defaults(func=_guarded(cmd_backup))
    p.add_argument("--school", required=True, metavar="ID", help="school id or slug (see `planner pilots`)")
    p.add_argument("-o", "--output", required=True, metavar="FILE", help="the backup file ('-' for standard output)")
    p.add_argument("--include-password-hashes", action="store_true",
                   help="keep the accounts' password hashes (treat the file like the database itself)")

    p = sub.add_parser(
        "restore",
        help=_help(cmd_restore),
        description=_help(cmd_restore) + " Refused, with nothing written, if the school, an email, an aircraft "
        "or a device already exists here.",
    )
    p.set_defaults(func=_guarded(cmd_restore))
    p.add_argument("file", metavar="FILE", help="a backup written by `planner backup`")
