"""Subcommands for the currency engine: evaluate, timeline."""

from __future__ import annotations

import argparse
import json
import sys
from datetime import date, datetime

import planner
from planner import rulesets, services
from planner.cli.data import open_session
from planner.core import currency
from planner.core.logbook import Entry, Logbook
from planner.export import interchange


class CommandError(Exception):
    """A problem with the command's input; the message is shown as is."""


def _date_arg(text: str) -> date:
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a date YYYY-MM-DD, got {text!r}") from None


def _add_source(p: argparse.ArgumentParser) -> None:
    source = p.add_mutually_exclusive_group(required=True)
    source.add_argument("--logbook", metavar="FILE", help="a logbook file in the interchange format (.json or .csv)")
    source.add_argument("--pilot", metavar="ID", type=int, help="a pilot in the database")
    p.add_argument(
        "--rules",
        default="faa-part61",
        metavar="SETS",
        help="comma-separated built-in rule sets (%s) or paths to .toml rule files; default faa-part61"
        % ", ".join(rulesets.BUILTIN),
    )
    p.add_argument("--planned", metavar="FILE", help="planned entries (interchange JSON) for a what-if")


def register(sub: argparse._SubParsersAction) -> None:
    """Add this area's subcommands to the ``planner`` parser."""
    ev = sub.add_parser(
        "evaluate",
        help="evaluate currency as of a date",
        description="Evaluate each requirement of the chosen rule sets (state, valid-through date, what is missing, "
        "the entries behind it). With --planned, show how the dates move if the planned entries are flown. "
        "Advisory only: the pilot in command decides.",
    )
    _add_source(ev)
    ev.add_argument("--as-of", type=_date_arg, metavar="YYYY-MM-DD",
                    help="the day asked about (default: today in the pilot's home time zone)")
    ev.add_argument("--json", action="store_true", help="print JSON instead of a table")
    ev.set_defaults(func=cmd_evaluate)

    tl = sub.add_parser(
        "timeline",
        help="every change of currency state between two dates",
        description="List every change of state per requirement between two dates (the data behind a chart). "
        "Advisory only: the pilot in command decides.",
    )
    _add_source(tl)
    tl.add_argument("--from", dest="start", type=_date_arg, required=True, metavar="YYYY-MM-DD")
    tl.add_argument("--to", dest="end", type=_date_arg, required=True, metavar="YYYY-MM-DD")
    tl.add_argument("--json", action="store_true", help="print JSON instead of a table")
    tl.set_defaults(func=cmd_timeline)


# ------------------------------------------------------------------ loading


def _read_interchange(path: str) -> Logbook:
    """Read an interchange file (JSON or CSV, by its extension)."""
    try:
        return interchange.read(_read_file(path), path)
    except interchange.InterchangeError as exc:
        raise CommandError(f"{path}: {exc}") from exc


def _read_file(path: str) -> str:
    try:
        with open(path, encoding="utf-8") as fh:
            return fh.read()
    except OSError as exc:
        raise CommandError(f"{path}: cannot read: {exc.strerror or exc}") from exc


def _load_pilot_logbook(pilot_id: int) -> Logbook:
    with open_session() as session:
        try:
            return services.load_logbook(session, pilot_id)
        except LookupError as exc:
            raise CommandError(f"no pilot with id {pilot_id}") from exc


def _load(args) -> tuple[Logbook, tuple[Entry, ...]]:
    logbook = _read_interchange(args.logbook) if args.logbook else _load_pilot_logbook(args.pilot)
    planned = _read_interchange(args.planned).entries if args.planned else ()
    return logbook, planned


def _today(logbook: Logbook) -> date:
    """Today in the pilot's home time zone: the only place the clock is read."""
    tz = None
    if logbook.pilot.home_timezone:
        from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

        try:
            tz = ZoneInfo(logbook.pilot.home_timezone)
        except (ZoneInfoNotFoundError, ValueError):
            tz = None
    return datetime.now(tz).date()


def _rules(spec: str):
    try:
        return rulesets.resolve(spec)
    except rulesets.RuleSetError as exc:
        raise CommandError(str(exc)) from exc


def _run(fn, args) -> int:
    try:
        return fn(args)
    except CommandError as exc:
        print(f"planner {args.command}: error: {exc}", file=sys.stderr)
        return 2


# ------------------------------------------------------------------ evaluate


def cmd_evaluate(args) -> int:
    """Evaluate currency as of a date."""
    return _run(_evaluate, args)


def _evaluate(args) -> int:
    rule_sets = _rules(args.rules)
    logbook, planned = _load(args)
    as_of = args.as_of or _today(logbook)
    try:
        if planned:
            result = currency.what_if(logbook, rule_sets, as_of, planned)
            report = result.after
        else:
            result = None
            report = currency.evaluate(logbook, rule_sets, as_of)
    except ValueError as exc:
        raise CommandError(str(exc)) from exc
    if args.json:
        print(json.dumps(currency.report_to_json(report), indent=2))
        print(planner.CAUTION, file=sys.stderr)
        return 0
    out = sys.stdout
    if result is not None:
        _print_what_if(result, out)
    else:
        _print_report(report, out)
    print(f"\n{planner.CAUTION}", file=out)
    return 0


def _d(value: date | None) -> str:
    return value.isoformat() if value else "-"


def _regain(s: currency.RequirementStatus) -> str:
    if s.regain_with is None:
        return "-"
    if s.regain_by:
        return f"{s.regain_with} by {s.regain_by.isoformat()}"
    return s.regain_with


def _missing(s: currency.RequirementStatus) -> str:
    if "check" in s.missing:
        return "a check: " + " or ".join(s.missing["check"])
    return ", ".join(f"{unit} {amount:g}" for unit, amount in s.missing.items())


def _table(rows: list[list[str]], out) -> None:
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    for row in rows:
        print("  ".join(cell.ljust(w) for cell, w in zip(row, widths)).rstrip(), file=out)


def _notes(statuses, out) -> None:
    missing = [s for s in statuses if s.missing]
    if missing:
        print("\nTo regain:", file=out)
        for s in missing:
            print(f"  {s.rule_set} {s.id} [{s.scope}]: {_missing(s)}", file=out)
    evidence = [s for s in statuses if s.evidence]
    if evidence:
        print("\nBased on entries:", file=out)
        for s in evidence:
            print(f"  {s.rule_set} {s.id} [{s.scope}]: {', '.join(s.evidence)}", file=out)
    warned = [s for s in statuses if s.warnings]
    if warned:
        print("\nNot credited:", file=out)
        for s in warned:
            print(f"  {s.rule_set} {s.id} [{s.scope}]:", file=out)
            for w in s.warnings:
                print(f"    - {w}", file=out)


def _print_report(report: currency.CurrencyReport, out) -> None:
    print(f"Currency as of {report.as_of.isoformat()} (rule sets: {', '.join(report.rule_sets)})\n", file=out)
    if not report.requirements:
        print("No requirement applies to this pilot's recorded ratings.", file=out)
        return
    rows = [["RULE SET", "REQUIREMENT", "SCOPE", "STATE", "VALID THROUGH", "REGAIN"]]
    for s in report.requirements:
        rows.append([s.rule_set, s.id, s.scope, s.state.upper(), _d(s.valid_through), _regain(s)])
    _table(rows, out)
    _notes(report.requirements, out)


def _print_what_if(result: currency.WhatIfReport, out) -> None:
    print(
        f"What if the planned entries are flown: {result.as_of.isoformat()} (logged only) "
        f"-> {result.plan_as_of.isoformat()} (with plan)\n",
        file=out,
    )
    rows = [["RULE SET", "REQUIREMENT", "SCOPE", "STATE", "VALID THROUGH", "MOVES"]]
    for m in result.moves:
        b, a = m.before, m.after
        moved = "-" if m.valid_through_days in (None, 0) else f"{m.valid_through_days:+d} days"
        rows.append([
            b.rule_set, b.id, b.scope, f"{b.state.upper()} -> {a.state.upper()}",
            f"{_d(b.valid_through)} -> {_d(a.valid_through)}", moved,
        ])
    _table(rows, out)
    _notes(result.after.requirements, out)


# ------------------------------------------------------------------ timeline


def cmd_timeline(args) -> int:
    """Every change of currency state between two dates."""
    return _run(_timeline, args)


def _timeline(args) -> int:
    if args.end < args.start:
        raise CommandError("--to is before --from")
    rule_sets = _rules(args.rules)
    logbook, planned = _load(args)
    try:
        report = currency.timeline(logbook, rule_sets, args.start, args.end, planned)
    except ValueError as exc:
        raise CommandError(str(exc)) from exc
    if args.json:
        print(json.dumps(currency.timeline_to_json(report), indent=2))
        print(planner.CAUTION, file=sys.stderr)
        return 0
    out = sys.stdout
    print(f"Timeline {args.start.isoformat()} to {args.end.isoformat()} (rule sets: {', '.join(report.rule_sets)})",
          file=out)
    for t in report.requirements:
        print(f"\n{t.rule_set} {t.id} [{t.scope}] - {t.citation}", file=out)
        rows = [["FROM", "STATE", "VALID THROUGH", "REGAIN"]]
        for c in t.changes:
            regain = "-" if c.regain_with is None else (
                f"{c.regain_with} by {c.regain_by.isoformat()}" if c.regain_by else c.regain_with)
            rows.append([c.date.isoformat(), c.state.upper(), _d(c.valid_through), regain])
        _table(rows, out)
    print(f"\n{planner.CAUTION}", file=out)
    return 0
