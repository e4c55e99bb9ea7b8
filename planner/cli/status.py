"""Subcommand that keeps the stored statuses current: refresh (meant for a daily scheduler)."""

from __future__ import annotations

import argparse
from datetime import date, datetime
from zoneinfo import ZoneInfo

from planner import CAUTION
from planner.cli.data import EXIT_NOT_FOUND, CommandError, _err, _guarded, _help, open_session


def today_in(timezone: str | None) -> date:
    """Today's date in ``timezone`` (IANA name; UTC when None): the CLI's one clock read for statuses."""
    return datetime.now(ZoneInfo(timezone or "UTC")).date()


def _date_arg(text: str) -> date:
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a date YYYY-MM-DD, got {text!r}") from None


def _school_id(session, value: str) -> int:  # type: ignore[no-untyped-def]
    from planner.db import models, repository

    school = session.get(models.School, int(value)) if value.isdigit() else repository.school_by_slug(session, value)
    if school is None:
        raise CommandError(f"no school {value!r} (see `planner schools`)", EXIT_NOT_FOUND)
    return school.id


def cmd_refresh(args: argparse.Namespace) -> int:
    """Re-evaluate every pilot's stored status that is stale (a new day, changed data, none yet); prints the counts."""
    from planner import status

    as_of = args.as_of if args.as_of is not None else (lambda zone: today_in(zone))
    with open_session() as session:
        school_id = _school_id(session, args.school) if args.school else None
        report = status.refresh(session, as_of, school_id=school_id, progress=_err, checkpoint=session.commit)
    day = f" as of {args.as_of.isoformat()}" if args.as_of else ""
    print(
        f"checked {report.checked} pilot{'s' if report.checked != 1 else ''}{day}: "
        f"{report.evaluated} re-evaluated ({report.missing} had no stored status, {report.earlier} were for an "
        f"earlier day, {report.changed} changed since, {report.rules} under other rule files), "
        f"{report.current} already current"
    )
    print(CAUTION)
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    """Add this area's subcommands to the ``planner`` parser."""
    p = sub.add_parser(
        "refresh",
        help=_help(cmd_refresh),
        description=_help(cmd_refresh) + " Each status is kept as of a day; run this once a day shortly after "
        "midnight (e.g. from cron) so that the school overview finds every status current. Safe to repeat and "
        "to stop: it commits every 100 pilots.",
    )
    p.set_defaults(func=_guarded(cmd_refresh))
    p.add_argument("--school", metavar="ID", help="only this school's pilots (id or slug; default: every pilot)")
    p.add_argument(
        "--as-of", type=_date_arg, metavar="YYYY-MM-DD",
        help="the day to evaluate for (default: today in each school's home-airfield time zone, "
        "else the pilot's own, else UTC)",
    )
