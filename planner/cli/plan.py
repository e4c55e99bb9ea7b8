"""Subcommands for practice planning: schools, plan, export-ics."""

from __future__ import annotations

import argparse
import json
import sys
from datetime import UTC, date, datetime
from pathlib import Path
from zoneinfo import ZoneInfo

from planner import CAUTION
from planner.cli.data import EXIT_BAD_INPUT, EXIT_NOT_FOUND, CommandError, _err, _guarded, _positive_int, open_session
from planner.config import Settings


def _date_arg(text: str) -> date:
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a date YYYY-MM-DD, got {text!r}") from None


def cmd_schools(args: argparse.Namespace) -> int:
    """List the schools: id, name, slug."""
    from planner import planning

    with open_session() as session:
        schools = planning.list_schools(session)
    if args.json:
        print(json.dumps(schools, indent=2, ensure_ascii=False))
        return 0
    for s in schools:
        print(f"{s['id']:>4}  {s['name']}  ({s['slug']})")
    if not schools:
        print("No schools yet. `planner demo` loads a demo school.")
    return 0


def _read_weather(name: str | None, now: datetime):  # type: ignore[no-untyped-def]
    """The reports in the --weather file ('-': standard input); CommandError naming the file and line."""
    from planner import planning

    if name is None:
        return ()
    label = "standard input" if name == "-" else name
    try:
        if name == "-":
            raw = sys.stdin.buffer.read(planning.MAX_WEATHER_CHARS * 4 + 1)
        else:
            with open(name, "rb") as fh:
                raw = fh.read(planning.MAX_WEATHER_CHARS * 4 + 1)
        if len(raw) > planning.MAX_WEATHER_CHARS * 4:
            raise CommandError(f"--weather {label}: more than {planning.MAX_WEATHER_CHARS:,} characters of report "
                               "text; give only the reports for the days planned", EXIT_BAD_INPUT)
        text = raw.decode("utf-8")
    except OSError as exc:
        raise CommandError(f"--weather: cannot read {label}: {exc.strerror}", EXIT_BAD_INPUT) from None
    except UnicodeDecodeError:
        raise CommandError(f"--weather {label}: not UTF-8 text", EXIT_BAD_INPUT) from None
    try:
        return planning.read_reports(text, now=now)
    except planning.WeatherRejected as exc:
        raise CommandError(f"--weather {label}: {exc}; nothing was planned", EXIT_BAD_INPUT) from None


def _local(moment: datetime, tz: str) -> str:
    return moment.astimezone(ZoneInfo(tz)).strftime("%a %Y-%m-%d %H:%M")


def _basis_json(prop, s) -> dict:  # type: ignore[no-untyped-def]
    """Which source decided the slot's VMC likelihood: "report text", "climatology" or "unknown"."""
    from planner import planning

    basis = prop.vmc_basis.get((s.slot.start, s.slot.end))
    if basis is None:
        return {"source": "unknown", "detail": None, "reason": "not assessed"}
    return {"source": planning.source_kind(basis), "detail": basis.source, "reason": basis.reason}


def _plan_json(prop, saved) -> dict:  # type: ignore[no-untyped-def]
    ids = prop.person_ids
    row_ids = [r.id for r in saved] or [None] * len(prop.plan.sessions)  # save_proposals keeps the order
    sessions = []
    for s, row_id in zip(prop.plan.sessions, row_ids):
        sessions.append({
            "id": row_id,
            "start": s.slot.start.isoformat(),
            "end": s.slot.end.isoformat(),
            "airfield": s.slot.airfield,
            "aircraft": s.aircraft,
            "daylight": s.slot.daylight,
            "vmc_likelihood": s.slot.vmc,
            "vmc_basis": _basis_json(prop, s),
            "night_note": prop.night_note(s),
            "mutual": s.is_mutual,
            "legs": [
                {
                    "pilot_flying": {"id": ids[leg.pilot_flying], "name": leg.pilot_flying.rsplit(" #", 1)[0]},
                    "safety_pilot": {"id": ids[leg.safety_pilot], "name": leg.safety_pilot.rsplit(" #", 1)[0]},
                    "needs": list(leg.needs),
                    "total_minutes": prop.leg_plans[(leg.pilot_flying, leg.safety_pilot)].total_minutes,
                    "items": [i.title for i in prop.leg_plans[(leg.pilot_flying, leg.safety_pilot)].items],
                }
                for leg in s.legs
            ],
            "why_slot": s.why_slot,
            "why_partner": s.why_partner,
        })
    return {
        "school_id": prop.school_id,
        "from": prop.start.isoformat(),
        "to": prop.end.isoformat(),
        "airfield": prop.airfield_ident,
        "vmc_source": prop.vmc_source,
        "practice_minimums": {"ceiling_ft": prop.minimums.ceiling_ft, "visibility_sm": prop.minimums.visibility_sm},
        "daylight_only": prop.daylight_only,
        "saved": bool(saved),
        "sessions": sessions,
        "unmet": [
            {"pilot": {"id": ids[u.pilot], "name": u.pilot.rsplit(" #", 1)[0]}, "need": u.need,
             "due": u.due.isoformat(), "reason": u.reason}
            for u in prop.plan.unmet
        ],
        "not_plannable": [
            {"pilot_id": n.person_id, "requirement": f"{n.gap.rule_set}/{n.gap.requirement}", "scope": n.gap.scope,
             "unit": n.gap.unit, "due": n.gap.due.isoformat(), "reason": n.reason}
            for n in prop.not_plannable
        ],
        "objective": prop.plan.objective,
        "caution": CAUTION,
    }


def _print_plan(prop, saved) -> None:  # type: ignore[no-untyped-def]
    names = {v: k.rsplit(" #", 1)[0] for k, v in prop.person_ids.items()}
    print(f"Practice plan, {prop.start.isoformat()} to {prop.end.isoformat()}, at {prop.airfield_ident} "
          f"(times local, {prop.timezone})")
    print(prop.vmc_source)
    print()
    if not prop.plan.sessions:
        print("No session could be proposed.")
    row_ids = [r.id for r in saved] or [None] * len(prop.plan.sessions)  # save_proposals keeps the order
    for s, row_id in zip(prop.plan.sessions, row_ids):
        vmc = "unknown" if s.slot.vmc is None else f"{s.slot.vmc:.0%}"
        head = f"{_local(s.slot.start, prop.timezone)}-{s.slot.end.astimezone(ZoneInfo(prop.timezone)):%H:%M}  {s.aircraft}"
        print(head + (f"  [saved as session {row_id}]" if row_id else "") + f"  VMC {vmc}"
              + ("  mutual" if s.is_mutual else ""))
        for leg in s.legs:
            plan = prop.leg_plans[(leg.pilot_flying, leg.safety_pilot)]
            print(f"    {names[prop.person_ids[leg.pilot_flying]]} flies, {names[prop.person_ids[leg.safety_pilot]]} "
                  f"safety pilot; about {plan.total_minutes} min")
        print(f"    why this slot: {s.why_slot}")
        print(f"    why this partner: {s.why_partner}")
        print(f"    weather: {prop.weather_note(s)}")
        if prop.night_note(s):
            print(f"    night: {prop.night_note(s)}")
        print()
    if prop.plan.unmet:
        print("Needs no session meets:")
        for u in prop.plan.unmet:
            print(f"    {names[prop.person_ids[u.pilot]]}: {u.need} (due {u.due.isoformat()}): {u.reason}")
        print()
    if prop.not_plannable:
        print("Not plannable as a practice session:")
        for n in prop.not_plannable:
            print(f"    {names.get(n.person_id, n.person_id)}: {n.gap.rule_set}/{n.gap.requirement} "
                  f"({n.gap.unit} {n.gap.count:g}, due {n.gap.due.isoformat()}): {n.reason}")
        print()
    if not saved:
        print("Proposals only; run again with --save to store them as proposed sessions.")
    print(CAUTION)


def cmd_plan(args: argparse.Namespace) -> int:
    """Propose practice sessions for a school over a date range (with --save, store them as proposed)."""
    from planner import planning

    settings = Settings.from_env()
    now = datetime.now(UTC)
    planning_now = now if args.now is None else args.now
    reports = _read_weather(args.weather, planning_now)
    try:
        minimums = planning.practice_minimums(args.min_ceiling, args.min_visibility)
    except planning.MinimumsRejected as exc:
        option = "--min-ceiling" if exc.field == "ceiling_ft" else "--min-visibility"
        raise CommandError(f"{option}: {exc}", EXIT_BAD_INPUT) from None
    with open_session(settings) as session:
        try:
            prop = planning.propose_sessions(
                session, args.school, args.start, args.end, now=planning_now,
                observations_dir=settings.seed_dir / "observations", reports=reports, minimums=minimums,
                daylight_only=args.daylight_only, progress=_err,
            )
        except LookupError as exc:
            raise CommandError(str(exc), EXIT_NOT_FOUND) from None
        except planning.SessionRejected as exc:
            raise CommandError(str(exc), EXIT_BAD_INPUT) from None
        try:
            saved = planning.save_proposals(session, prop, now=now) if args.save else []
        except planning.SessionRejected as exc:
            raise CommandError(f"{exc}; nothing was stored, run it again to plan around it", EXIT_BAD_INPUT) from None
        if args.json:
            print(json.dumps(_plan_json(prop, saved), indent=2, ensure_ascii=False))
        else:
            _print_plan(prop, saved)
    if saved:
        _err(f"stored {len(saved)} proposed sessions")
    return 0


def cmd_export_ics(args: argparse.Namespace) -> int:
    """Write a pilot's calendar (.ics): their practice sessions and currency deadlines."""
    from planner import planning, services

    now = datetime.now(UTC)
    with open_session() as session:
        try:
            person = services.get_pilot(session, args.pilot)
        except LookupError as exc:
            raise CommandError(str(exc), EXIT_NOT_FOUND) from None
        # Today is read from the clock here only, in the pilot's home time zone.
        as_of = args.as_of or now.astimezone(ZoneInfo(person.timezone or "UTC")).date()
        data = planning.pilot_calendar_for(session, person.id, as_of, now=now)
    if args.output:
        Path(args.output).write_bytes(data)
        _err(f"wrote {args.output}")
    else:
        sys.stdout.buffer.write(data)
        sys.stdout.flush()
    _err(CAUTION)
    return 0


def _number_arg(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}") from None
    if value != value:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}")
    return value


def _instant_arg(text: str) -> datetime:
    try:
        value = datetime.fromisoformat(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected an ISO date-time with an offset, got {text!r}") from None
    if value.tzinfo is None:
        raise argparse.ArgumentTypeError(f"give an offset (e.g. Z or -07:00): {text!r}")
    return value


def register(sub: argparse._SubParsersAction) -> None:
    """Add this area's subcommands to the ``planner`` parser."""
    p = sub.add_parser("schools", help="list the schools (id, name, slug)", description=cmd_schools.__doc__)
    p.add_argument("--json", action="store_true", help="print a JSON list of {id, name, slug}")
    p.set_defaults(func=_guarded(cmd_schools))

    p = sub.add_parser(
        "plan",
        help="propose practice sessions for a school",
        description="Propose practice sessions under a view-limiting device for a school from --from to --to: "
        "2-hour slots at the school's home airfield, in daylight unless the pilots' settings allow night, "
        "likely-VMC slots preferred (from --weather reports where they cover a slot, else the observation "
        "history), eligible safety pilots (14 CFR 91.109(c)), nobody and no aircraft double-booked. Explains "
        "each choice, says which source judged the weather, and lists the needs no session meets. Advisory "
        "only: the pilot in command decides.",
    )
    p.add_argument("--school", type=_positive_int, required=True, metavar="ID", help="school id (see `planner schools`)")
    p.add_argument("--from", dest="start", type=_date_arg, required=True, metavar="YYYY-MM-DD")
    p.add_argument("--to", dest="end", type=_date_arg, required=True, metavar="YYYY-MM-DD")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.add_argument("--save", action="store_true", help="store the proposals as proposed sessions")
    p.add_argument("--now", type=_instant_arg, metavar="DATETIME",
                   help="treat this instant as now (slots before it are skipped; default: the clock)")
    p.add_argument("--weather", metavar="FILE",
                   help="METAR/SPECI and TAF text for the school's airfield ('-': standard input): where the reports "
                   "cover a slot they decide its VMC likelihood, elsewhere the observation history does")
    p.add_argument("--min-ceiling", type=_number_arg, metavar="FT",
                   help="practice minimum ceiling in feet above the airfield (default 3000)")
    p.add_argument("--min-visibility", type=_number_arg, metavar="SM",
                   help="practice minimum visibility in statute miles (default 5)")
    p.add_argument("--daylight-only", action="store_true",
                   help="keep every session in daylight, whatever the pilots' night-practice settings")
    p.set_defaults(func=_guarded(cmd_plan))

    p = sub.add_parser(
        "export-ics",
        help="write a pilot's calendar (.ics)",
        description="Write an iCalendar file with the pilot's practice sessions (either seat; cancelled ones "
        "marked cancelled) and all-day deadlines (currency ends, regain stage ends, practice due), with alarms.",
    )
    p.add_argument("--pilot", type=_positive_int, required=True, metavar="ID", help="pilot id (see `planner pilots`)")
    p.add_argument("-o", "--output", metavar="FILE", help="write to FILE instead of standard output")
    p.add_argument("--as-of", type=_date_arg, metavar="YYYY-MM-DD",
                   help="deadlines from this day (default: today in the pilot's home time zone)")
    p.set_defaults(func=_guarded(cmd_export_ics))
