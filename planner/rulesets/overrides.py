"""A pilot's own practice targets: the built-in targets with intervals and counts changed.

Practice targets are a product choice, not regulation (see
``practice-targets.toml``). Each pilot may change, per target, the interval
(a window of N days) and the minimum of each counted unit. The overrides are
plain data, as stored on the pilot::

    {"partial-panel": {"days": 60, "min": {"partial-panel-approaches": 2}}}

``apply(rule_set, overrides)`` returns a new ``RuleSet``; the input is not
changed. Pure data transformation: no files, no clock.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from planner.core import rules as r
from planner.core.windows import DAYS, Window
from planner.rulesets import RuleSetError

MAX_DAYS = 3660  # ten years: longer intervals are almost certainly a typing slip
MAX_COUNT = 100


def _number(value: Any, unit: str, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise RuleSetError(f"{where}: expected a number, got {value!r}")
    if unit not in r.HOUR_UNITS and value != int(value):
        raise RuleSetError(f"{where}: expected a whole number for {unit}")
    if not 0 < value <= MAX_COUNT:
        raise RuleSetError(f"{where}: expected a number above 0 and at most {MAX_COUNT}")
    return float(value) if unit in r.HOUR_UNITS else int(value)


def validate(rule_set: r.RuleSet, overrides: dict[str, Any]) -> dict[str, Any]:
    """The overrides in canonical form; ``RuleSetError`` naming the target and key otherwise."""
    if not isinstance(overrides, dict):
        raise RuleSetError(f"{rule_set.id}: practice-target overrides must be a table")
    known = {req.id: req for req in rule_set.requirements}
    out: dict[str, Any] = {}
    for target, spec in overrides.items():
        where = f"{rule_set.id}: requirement {target!r}"
        req = known.get(target)
        if req is None:
            raise RuleSetError(f"{where}: no such target (known: {', '.join(known)})")
        if not isinstance(spec, dict) or set(spec) - {"days", "min"}:
            raise RuleSetError(f"{where}: expected a table with keys days and min")
        canon: dict[str, Any] = {}
        if spec.get("days") is not None:
            days = spec["days"]
            if isinstance(days, bool) or not isinstance(days, int) or not 1 <= days <= MAX_DAYS:
                raise RuleSetError(f"{where}: key 'days': expected a whole number from 1 to {MAX_DAYS}")
            canon["days"] = days
        mins = spec.get("min") or {}
        if not isinstance(mins, dict):
            raise RuleSetError(f"{where}: key 'min': expected a table of unit = number")
        units = {t.unit for p in req.paths for t in p.tasks}
        canon_min = {}
        for unit, value in mins.items():
            if unit not in units:
                raise RuleSetError(f"{where}: key 'min.{unit}': this target counts only {', '.join(sorted(units))}")
            canon_min[unit] = _number(value, unit, f"{where}: key 'min.{unit}'")
        if canon_min:
            canon["min"] = canon_min
        if canon:
            out[target] = canon
    return out


def apply(rule_set: r.RuleSet, overrides: dict[str, Any]) -> r.RuleSet:
    """``rule_set`` with each named target's window set to ``days`` days and its task minimums replaced.

    A target not named keeps its built-in values; so does any key left out.
    The new window counts the last day inclusively, as the built-in day windows do.
    Raises ``RuleSetError`` for an unknown target or unit, or a value out of range.
    """
    canon = validate(rule_set, overrides)
    if not canon:
        return rule_set
    requirements = []
    for req in rule_set.requirements:
        spec = canon.get(req.id)
        if spec is None:
            requirements.append(req)
            continue
        paths = []
        for path in req.paths:
            window = Window(unit=DAYS, length=spec["days"], inclusive=True) if "days" in spec else path.window
            tasks = tuple(
                replace(task, minimum=spec.get("min", {}).get(task.unit, task.minimum)) for task in path.tasks
            )
            paths.append(replace(path, window=window, tasks=tasks))
        requirements.append(replace(req, paths=tuple(paths)))
    return replace(rule_set, requirements=tuple(requirements))


def describe(rule_set: r.RuleSet) -> list[dict[str, Any]]:
    """Each target with its interval and minimums, for forms: id, title, window, tasks [(unit, minimum)]."""
    out = []
    for req in rule_set.requirements:
        path = req.paths[0] if req.paths else None
        out.append({
            "id": req.id,
            "title": req.title,
            "window": path.window if path else None,
            "tasks": [(t.unit, t.minimum) for t in path.tasks] if path else [],
        })
    return out
