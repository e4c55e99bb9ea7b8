"""Rule sets as TOML data: the built-in files and a loader that validates them.

``load_builtin(name)`` reads ``planner/rulesets/<name>.toml``; ``load_file(path)``
reads a user's own file; ``resolve("faa-part61,practice-targets,my.toml")``
does either per comma-separated item. Every problem is reported as a
``RuleSetError`` naming the file, the requirement and the key.

File format (version 1), in short::

    format_version = 1
    id = "faa-part61"              # rule-set id (letters, digits, '-')
    title = "..."
    regulator = "..."              # optional
    notes = "..."                  # optional
    check_kinds = ["..."]          # optional: kinds of check this set defines

    [[requirement]]
    id = "instrument"
    title = "..."
    citation = "14 CFR 61.57(c)"   # required
    scope = "instrument-category"  # pilot | category | instrument-category | category-class
    regain = "grace"               # tasks | check | grace (then `grace` is required)
    grace = { unit = "calendar-months", length = 6 }
    not_required_with_instrument_rating = false
    basis = "from memory"          # optional marks: where a value comes from
    notes = "..."

    [[requirement.path]]           # alternatives: any one path in force meets it
    id = "any-device"
    window = { unit = "calendar-months", length = 6, current_month_counts = true }
    devices = ["aircraft", "ffs", "ftd", "atd"]     # default all
    effective_from = 2018-11-26    # optional TOML dates: days the path judges
    effective_until = 2018-11-25
    task = [ { unit = "approaches", min = 6 },
             { unit = "holds", min = 1, conditions = "instrument" } ]

    [[requirement.check]]          # checks that meet the requirement
    kinds = ["ipc", "instrument-practical-test"]
    window = { unit = "calendar-months", length = 6 }
    early_renewal = { unit = "months-to-the-day", length = 3 }   # optional
    same_category = true

Window units: calendar-months (options ``current_month_counts``), days,
months-to-the-day, years-to-the-day (option ``inclusive``). Task units:
see ``planner.core.rules.TASK_UNITS``; task options ``devices``,
``conditions`` (instrument | actual | any), ``hand_flown_only``,
``entries_from``, ``entries_until``.
"""

from __future__ import annotations

import re
import tomllib
from datetime import date
from importlib import resources
from pathlib import Path as FilePath
from typing import Any

from planner.core import rules as r
from planner.core.logbook import DEVICES, STANDARD_CHECKS
from planner.core.windows import CALENDAR_MONTHS, UNITS, Window

BUILTIN = ("faa-part61", "tc-car401", "easa-fcl", "casa-part61", "practice-targets")
_ID = re.compile(r"^[a-z0-9][a-z0-9-]*$")


class RuleSetError(ValueError):
    """A rule file could not be used; the message names file, requirement and key."""


def builtin_names() -> tuple[str, ...]:
    return BUILTIN


def load_builtin(name: str) -> r.RuleSet:
    """The built-in rule set ``name`` (see ``BUILTIN``)."""
    if name not in BUILTIN:
        raise RuleSetError(f"unknown rule set {name!r}; built-in rule sets: {', '.join(BUILTIN)}")
    text = resources.files(__package__).joinpath(f"{name}.toml").read_text(encoding="utf-8")
    return parse(text, source=f"{name}.toml")


def load_file(path: str | FilePath) -> r.RuleSet:
    """A user's rule file."""
    p = FilePath(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise RuleSetError(f"{p}: cannot read rule file: {exc.strerror or exc}") from exc
    return parse(text, source=str(p))


def resolve(spec: str | list[str] | tuple[str, ...]) -> tuple[r.RuleSet, ...]:
    """Rule sets named in ``spec``: comma-separated built-in names or file paths."""
    items = spec.split(",") if isinstance(spec, str) else list(spec)
    out: list[r.RuleSet] = []
    seen: set[str] = set()
    for raw in items:
        item = raw.strip()
        if not item:
            continue
        if item in BUILTIN:
            rule_set = load_builtin(item)
        elif item.endswith(".toml") or "/" in item or "\\" in item:
            rule_set = load_file(item)
        else:
            raise RuleSetError(
                f"unknown rule set {item!r}; built-in rule sets: {', '.join(BUILTIN)} "
                "(or give a path to a .toml file)"
            )
        if rule_set.id in seen:
            raise RuleSetError(f"rule set {rule_set.id!r} given twice")
        seen.add(rule_set.id)
        out.append(rule_set)
    if not out:
        raise RuleSetError("no rule set given")
    return tuple(out)


# ---------------------------------------------------------------- parsing


class _Ctx:
    def __init__(self, source: str, requirement: str | None = None, where: str = ""):
        self.source = source
        self.requirement = requirement
        self.where = where

    def at(self, where: str) -> _Ctx:
        return _Ctx(self.source, self.requirement, f"{self.where}.{where}" if self.where else where)

    def error(self, key: str, problem: str) -> RuleSetError:
        parts = [self.source]
        if self.requirement is not None:
            parts.append(f"requirement {self.requirement!r}")
        full = f"{self.where}.{key}" if self.where else key
        parts.append(f"key {full!r}")
        return RuleSetError(": ".join(parts) + f": {problem}")


def _check_keys(table: dict, allowed: set[str], required: set[str], ctx: _Ctx) -> None:
    for key in table:
        if key not in allowed:
            raise ctx.error(key, f"unknown key (allowed: {', '.join(sorted(allowed))})")
    for key in sorted(required):
        if key not in table:
            raise ctx.error(key, "missing")


def _str(table: dict, key: str, ctx: _Ctx, default: str | None = None) -> str:
    value = table.get(key, default)
    if not isinstance(value, str):
        raise ctx.error(key, f"expected a string, got {type(value).__name__}")
    return value


def _bool(table: dict, key: str, ctx: _Ctx, default: bool) -> bool:
    value = table.get(key, default)
    if not isinstance(value, bool):
        raise ctx.error(key, "expected true or false")
    return value


def _date(table: dict, key: str, ctx: _Ctx) -> date | None:
    value = table.get(key)
    if value is None:
        return None
    if isinstance(value, date) and not hasattr(value, "hour"):
        return value
    if isinstance(value, str):
        try:
            return date.fromisoformat(value)
        except ValueError:
            pass
    raise ctx.error(key, "expected a date (YYYY-MM-DD)")


def _str_list(table: dict, key: str, ctx: _Ctx, allowed: tuple[str, ...] | None, default) -> tuple:
    value = table.get(key, default)
    if not isinstance(value, (list, tuple)) or not value or not all(isinstance(v, str) for v in value):
        raise ctx.error(key, "expected a non-empty list of strings")
    if allowed is not None:
        for v in value:
            if v not in allowed:
                raise ctx.error(key, f"unknown value {v!r} (expected one of {', '.join(allowed)})")
    return tuple(value)


def _window(value: Any, key: str, ctx: _Ctx) -> Window:
    if not isinstance(value, dict):
        raise ctx.error(key, "expected a table { unit = ..., length = ... }")
    wctx = ctx.at(key)
    _check_keys(value, {"unit", "length", "current_month_counts", "inclusive"}, {"unit", "length"}, wctx)
    unit = _str(value, "unit", wctx)
    if unit not in UNITS:
        raise wctx.error("unit", f"unknown window unit {unit!r} (expected one of {', '.join(UNITS)})")
    length = value["length"]
    if not isinstance(length, int) or isinstance(length, bool) or length < 1:
        raise wctx.error("length", "expected a whole number of at least 1")
    if "current_month_counts" in value and unit != CALENDAR_MONTHS:
        raise wctx.error("current_month_counts", "only applies to calendar-months windows")
    if "inclusive" in value and unit == CALENDAR_MONTHS:
        raise wctx.error("inclusive", "does not apply to calendar-months windows (they end on a month end)")
    return Window(
        unit=unit,
        length=length,
        current_month_counts=_bool(value, "current_month_counts", wctx, True),
        inclusive=_bool(value, "inclusive", wctx, True),
    )


def _task(value: Any, index: int, path_devices: tuple[str, ...], ctx: _Ctx) -> r.Task:
    key = f"task[{index}]"
    if not isinstance(value, dict):
        raise ctx.error(key, "expected a table { unit = ..., min = ... }")
    tctx = ctx.at(key)
    _check_keys(
        value,
        {"unit", "min", "devices", "conditions", "hand_flown_only", "entries_from", "entries_until"},
        {"unit", "min"},
        tctx,
    )
    unit = _str(value, "unit", tctx)
    if unit not in r.TASK_UNITS:
        raise tctx.error("unit", f"unknown task unit {unit!r} (expected one of {', '.join(r.TASK_UNITS)})")
    minimum = value["min"]
    if isinstance(minimum, bool) or not isinstance(minimum, (int, float)) or minimum <= 0:
        raise tctx.error("min", "expected a positive number")
    if unit not in r.HOUR_UNITS and not isinstance(minimum, int):
        raise tctx.error("min", f"expected a whole number for {unit}")
    default_conditions = r.CONDITIONS_INSTRUMENT if unit in r.INSTRUMENT_UNITS else r.CONDITIONS_ANY
    conditions = _str(value, "conditions", tctx, default_conditions)
    if conditions not in r.TASK_CONDITIONS:
        raise tctx.error("conditions", f"unknown value {conditions!r} (expected one of {', '.join(r.TASK_CONDITIONS)})")
    hand = _bool(value, "hand_flown_only", tctx, False)
    if hand and unit != r.APPROACHES:
        raise tctx.error("hand_flown_only", "only applies to approaches")
    return r.Task(
        unit=unit,
        minimum=minimum,
        devices=_str_list(value, "devices", tctx, DEVICES, path_devices),
        conditions=conditions,
        hand_flown_only=hand,
        entries_from=_date(value, "entries_from", tctx),
        entries_until=_date(value, "entries_until", tctx),
    )


def _path(value: Any, index: int, ctx: _Ctx) -> r.Path:
    key = f"path[{index}]"
    if not isinstance(value, dict):
        raise ctx.error(key, "expected a table")
    pctx = ctx.at(key)
    _check_keys(
        value,
        {"id", "window", "devices", "effective_from", "effective_until", "citation", "basis", "task"},
        {"id", "window", "task"},
        pctx,
    )
    devices = _str_list(value, "devices", pctx, DEVICES, DEVICES)
    tasks_raw = value["task"]
    if not isinstance(tasks_raw, list) or not tasks_raw:
        raise pctx.error("task", "expected a non-empty list of tasks")
    tasks = tuple(_task(t, i, devices, pctx) for i, t in enumerate(tasks_raw))
    units = [t.unit for t in tasks]
    if len(set(units)) != len(units):
        raise pctx.error("task", "a unit appears twice in one path")
    eff_from, eff_until = _date(value, "effective_from", pctx), _date(value, "effective_until", pctx)
    if eff_from and eff_until and eff_until < eff_from:
        raise pctx.error("effective_until", "is before effective_from")
    return r.Path(
        id=_str(value, "id", pctx),
        window=_window(value["window"], "window", pctx),
        tasks=tasks,
        effective_from=eff_from,
        effective_until=eff_until,
        citation=_str(value, "citation", pctx, ""),
        basis=_str(value, "basis", pctx, ""),
    )


def _check(value: Any, index: int, kinds_known: tuple[str, ...], ctx: _Ctx) -> r.CheckRule:
    key = f"check[{index}]"
    if not isinstance(value, dict):
        raise ctx.error(key, "expected a table")
    cctx = ctx.at(key)
    _check_keys(
        value,
        {"kinds", "window", "early_renewal", "same_category", "effective_from", "effective_until", "citation", "basis"},
        {"kinds", "window"},
        cctx,
    )
    kinds = _str_list(value, "kinds", cctx, kinds_known, None)
    early = _window(value["early_renewal"], "early_renewal", cctx) if "early_renewal" in value else None
    eff_from, eff_until = _date(value, "effective_from", cctx), _date(value, "effective_until", cctx)
    if eff_from and eff_until and eff_until < eff_from:
        raise cctx.error("effective_until", "is before effective_from")
    return r.CheckRule(
        kinds=kinds,
        window=_window(value["window"], "window", cctx),
        early_renewal=early,
        same_category=_bool(value, "same_category", cctx, True),
        effective_from=eff_from,
        effective_until=eff_until,
        citation=_str(value, "citation", cctx, ""),
        basis=_str(value, "basis", cctx, ""),
    )


def _requirement(value: Any, index: int, source: str, kinds_known: tuple[str, ...]) -> r.Requirement:
    if not isinstance(value, dict):
        raise _Ctx(source).error(f"requirement[{index}]", "expected a table")
    rid = value.get("id")
    if not isinstance(rid, str) or not _ID.match(rid):
        raise _Ctx(source, f"#{index + 1}").error("id", "expected an id of lower-case letters, digits and '-'")
    ctx = _Ctx(source, rid)
    _check_keys(
        value,
        {"id", "title", "citation", "scope", "regain", "grace", "path", "check",
         "not_required_with_instrument_rating", "basis", "notes"},
        {"id", "title", "citation"},
        ctx,
    )
    scope = _str(value, "scope", ctx, r.SCOPE_PILOT)
    if scope not in r.SCOPES:
        raise ctx.error("scope", f"unknown scope {scope!r} (expected one of {', '.join(r.SCOPES)})")
    regain = _str(value, "regain", ctx, r.REGAIN_TASKS)
    if regain not in r.REGAIN_POLICIES:
        raise ctx.error("regain", f"unknown value {regain!r} (expected one of {', '.join(r.REGAIN_POLICIES)})")
    grace = None
    if regain == r.REGAIN_GRACE:
        if "grace" not in value:
            raise ctx.error("grace", "missing (required when regain = \"grace\")")
        grace = _window(value["grace"], "grace", ctx)
    elif "grace" in value:
        raise ctx.error("grace", "only allowed with regain = \"grace\"")
    paths_raw = value.get("path", [])
    checks_raw = value.get("check", [])
    if not isinstance(paths_raw, list):
        raise ctx.error("path", "expected a list of tables ([[requirement.path]])")
    if not isinstance(checks_raw, list):
        raise ctx.error("check", "expected a list of tables ([[requirement.check]])")
    paths = tuple(_path(p, i, ctx) for i, p in enumerate(paths_raw))
    checks = tuple(_check(c, i, kinds_known, ctx) for i, c in enumerate(checks_raw))
    if not paths and not checks:
        raise ctx.error("path", "a requirement needs at least one path or one check")
    ids = [p.id for p in paths]
    if len(set(ids)) != len(ids):
        raise ctx.error("path", "two paths share an id")
    if not paths and regain != r.REGAIN_CHECK:
        raise ctx.error("regain", "a requirement met only by checks must have regain = \"check\"")
    title = _str(value, "title", ctx)
    citation = _str(value, "citation", ctx)
    if not citation.strip():
        raise ctx.error("citation", "must not be empty")
    return r.Requirement(
        id=rid,
        title=title,
        citation=citation,
        scope=scope,
        paths=paths,
        checks=checks,
        regain=regain,
        grace=grace,
        not_required_with_instrument_rating=_bool(value, "not_required_with_instrument_rating", ctx, False),
        basis=_str(value, "basis", ctx, ""),
        notes=_str(value, "notes", ctx, ""),
    )


def parse(text: str, source: str = "<rules>") -> r.RuleSet:
    """A rule set from TOML text; ``source`` names it in error messages."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise RuleSetError(f"{source}: not valid TOML: {exc}") from exc
    ctx = _Ctx(source)
    _check_keys(
        data,
        {"format_version", "id", "title", "regulator", "notes", "check_kinds", "requirement"},
        {"format_version", "id", "title", "requirement"},
        ctx,
    )
    if data["format_version"] != 1:
        raise ctx.error("format_version", f"unsupported version {data['format_version']!r} (expected 1)")
    rid = _str(data, "id", ctx)
    if not _ID.match(rid):
        raise ctx.error("id", "expected an id of lower-case letters, digits and '-'")
    extra_kinds = _str_list(data, "check_kinds", ctx, None, ["ipc"]) if "check_kinds" in data else ()
    kinds_known = tuple(STANDARD_CHECKS) + tuple(k for k in extra_kinds if k not in STANDARD_CHECKS)
    reqs_raw = data["requirement"]
    if not isinstance(reqs_raw, list) or not reqs_raw:
        raise ctx.error("requirement", "expected at least one [[requirement]] table")
    reqs = tuple(_requirement(v, i, source, kinds_known) for i, v in enumerate(reqs_raw))
    seen: set[str] = set()
    for req in reqs:
        if req.id in seen:
            raise _Ctx(source, req.id).error("id", "two requirements share this id")
        seen.add(req.id)
    return r.RuleSet(
        id=rid,
        title=_str(data, "title", ctx),
        requirements=reqs,
        regulator=_str(data, "regulator", ctx, ""),
        notes=_str(data, "notes", ctx, ""),
        check_kinds=extra_kinds,
    )
