"""What one logbook entry counts toward, and why some of it does not: words for the entry form.

No crediting rule lives here. The amounts and the reasons come from the
currency engine itself (``planner.core.currency.units_on`` for each task of
each requirement path in force on the entry's date, and ``scopes_for`` /
the engine's scope filter for which ratings a requirement is judged in), so
the form and the dashboard can never disagree. This module only groups and
words them. Pure: standard library and the core only; no clock (the entry's
own date decides which paths and check rules are in force).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from planner.core import currency
from planner.core import rules as r
from planner.core.logbook import Entry, Logbook, Pilot

@dataclass(frozen=True)
class CreditNote:
    """One line of feedback.

    ``counts``: True for "counts toward", False for "does not count". ``rule_set``
    and ``requirement`` are ids ("" when a reason concerns several requirements);
    ``personal``: the requirement is a personal practice target, not a regulation.
    """

    counts: bool
    text: str
    rule_set: str = ""
    requirement: str = ""
    personal: bool = False


def _amount(unit: str, amount: int) -> str:
    """Hour units arrive in hundredths of an hour."""
    return r.amount_words(unit, amount / 100 if unit in r.HOUR_UNITS else amount)


def _is_personal(rule_set: r.RuleSet) -> bool:
    return not rule_set.regulator or rule_set.regulator.lower().startswith("none")


def _in_scope(requirement: r.Requirement, scopes: tuple[str, ...], entry: Entry) -> bool:
    """Whether the entry is judged under one of the requirement's scopes for this pilot (engine's filter)."""
    for scope in scopes:
        category, aircraft_class = currency.scope_filter(requirement, scope)
        if (category is None or entry.category == category) and (aircraft_class is None or entry.aircraft_class == aircraft_class):
            return True
    return False


def explain(entry: Entry, pilot: Pilot, rule_sets: Sequence[r.RuleSet]) -> list[CreditNote]:
    """What ``entry`` counts toward under ``rule_sets`` for ``pilot``, then the reasons parts of it do not count.

    One "counts" note per requirement the entry adds to (with the amounts, or
    the check it meets); one "does not count" note per distinct reason,
    naming the requirements it concerns. Requirements the entry has nothing
    for are left out. Paths and check rules are taken as in force on the
    entry's date.
    """
    logbook = Logbook(pilot=pilot, entries=(entry,))
    counts: list[CreditNote] = []
    reasons: dict[str, list[str]] = {}
    for rule_set in rule_sets:
        personal = _is_personal(rule_set)
        for req in rule_set.requirements:
            scopes = currency.scopes_for(req, logbook)
            label = f"personal target “{req.title}”" if personal else f"{req.title} ({req.citation})"
            met_checks = [
                kind for kind in entry.checks
                if any(kind in rule.kinds and rule.is_in_force(entry.date) for rule in req.checks)
            ]
            amounts: dict[str, int] = {}
            problems: list[str] = []
            for path in req.paths:
                if not path.is_in_force(entry.date):
                    continue
                for task in path.tasks:
                    if entry.device not in task.devices:
                        continue
                    if (task.entries_from and entry.date < task.entries_from) or (
                        task.entries_until and entry.date > task.entries_until
                    ):
                        continue
                    amount, why = currency.units_on(entry, task.unit, task.conditions, task.hand_flown_only)
                    if amount:
                        amounts[task.unit] = max(amounts.get(task.unit, 0), amount)
                    problems.extend(p for p in why if p not in problems)
            if not (amounts or met_checks or problems):
                continue
            if not scopes or not _in_scope(req, scopes, entry):
                if amounts or met_checks:
                    reasons.setdefault(_scope_reason(req, scopes, entry), []).append(label)
                continue
            parts = [_amount(unit, amount) for unit, amount in amounts.items()]
            parts += [f"the check “{kind}”" for kind in met_checks]
            if parts:
                counts.append(
                    CreditNote(True, f"{label}: {', '.join(parts)}", rule_set.id, req.id, personal)
                )
            for problem in problems:
                reasons.setdefault(problem, []).append(label)
    notes = list(counts)
    for reason, labels in reasons.items():
        concerned = "; ".join(dict.fromkeys(labels))
        notes.append(CreditNote(False, f"{reason[:1].upper()}{reason[1:]} (for {concerned})"))
    return notes


def _scope_reason(requirement: r.Requirement, scopes: tuple[str, ...], entry: Entry) -> str:
    if not scopes:
        if requirement.scope == r.SCOPE_INSTRUMENT_CATEGORY:
            return "no instrument rating is recorded for this pilot, so instrument experience is not tracked"
        return "no matching category or class rating is recorded for this pilot"
    if requirement.scope == r.SCOPE_CATEGORY_CLASS and entry.aircraft_class is None:
        return "the aircraft class is not logged, so the entry cannot count toward a class"
    return f"work in {entry.category}{'/' + entry.aircraft_class if entry.aircraft_class else ''} does not count toward the pilot's {', '.join(scopes)} rating(s)"
