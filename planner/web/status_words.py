"""How a requirement's status reads on the pages: in words, never by colour alone.

The engine says ``current`` / ``grace`` / ``lapsed`` with dates; these helpers
turn that into short sentences of our own, used by the dashboard, the school
overview and the CSV download.
"""

from __future__ import annotations

from datetime import date
from typing import Any

from planner.core import currency
from planner.core import rules as r

# What a met requirement lets the pilot do, by requirement id (any rule set).
_PRIVILEGE = {
    "instrument": "May fly IFR",
    "instrument-recency": "May fly IFR (recency met)",
    "instrument-check": "Instrument check within its period",
    "instrument-rating": "Instrument rating valid",
    "ipc": "Proficiency check valid",
    "passengers-day": "May carry passengers",
    "passengers": "May carry passengers",
    "passengers-night": "May carry passengers at night",
    "flight-review": "Flight review valid",
}

_CHECK_NAMES = {
    "ipc": "an instrument proficiency check",
    "instrument-practical-test": "an instrument-rating practical test",
    "flight-review": "a flight review",
    "practical-test": "a practical test for a certificate or rating",
    "wings-phase": "a completed phase of the pilot proficiency programme",
    "ir-proficiency-check": "an instrument-rating proficiency check",
    "ir-skill-test": "an instrument-rating skill test",
    "instrument-flight-test": "an instrument flight test",
    "casa-ipc": "an instrument proficiency check",
}

STATE_WORDS = {currency.CURRENT: "Current", currency.GRACE: "Grace", currency.LAPSED: "Lapsed"}


def fmt(day: date | None) -> str:
    """A date as the pages print it: ISO, unambiguous in every locale."""
    return day.isoformat() if day else "—"


def scope_words(scope: str) -> str:
    """'airplane/single-engine-land' -> 'Airplane, single-engine land'; 'pilot' -> ''."""
    if scope == "pilot":
        return ""
    category, _, cls = scope.partition("/")
    text = category.replace("-", " ").capitalize()
    if cls:
        head, _, tail = cls.rpartition("-")
        text += f", {head} {tail}" if head else f", {cls}"
    return text


def check_words(kinds: list[str] | tuple[str, ...]) -> str:
    """'an instrument proficiency check or an instrument-rating practical test'."""
    names = list(dict.fromkeys(_CHECK_NAMES.get(k, f"a check ({k})") for k in kinds))
    if not names:
        return "a check"
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " or " + names[-1]


def missing_words(missing: dict[str, Any]) -> str:
    """The engine's ``missing`` as a phrase: '6 approaches, 1 holding procedure, intercepting and tracking courses'."""
    return ", ".join(check_words(amount) if unit == "check" else r.amount_words(unit, amount)
                     for unit, amount in missing.items())


def days_between(a: date, b: date) -> int:
    return (b - a).days


def headline(status: currency.RequirementStatus, practice: bool = False) -> str:
    """The state in words, e.g. 'May fly IFR' / 'Grace: regain with tasks until 2027-04-30'."""
    if status.state == currency.CURRENT:
        if practice:
            return "On target"
        return _PRIVILEGE.get(status.id, "Requirement met")
    if status.state == currency.GRACE:
        return f"Grace: not current; regain with tasks until {fmt(status.regain_by)}"
    if practice:
        return "Practice due" if status.valid_through else "Practice due (none in the records)"
    if status.regain_with == "check":
        kinds = status.missing.get("check", [])
        return f"Lapsed: needs {check_words(kinds)}"
    if status.valid_through is None:
        return "Not met in the records"
    return "Lapsed: fly the missing tasks to regain"


def days_left(status: currency.RequirementStatus, as_of: date) -> str:
    """'120 days left' (current) or 'ended 31 days ago' or ''."""
    if status.valid_through is None:
        return ""
    n = days_between(as_of, status.valid_through)
    if status.state == currency.CURRENT:
        return "last day today" if n == 0 else f"{n} day{'s' if n != 1 else ''} left"
    ago = -n
    return f"ended {ago} day{'s' if ago != 1 else ''} ago"


def regain_words(status: currency.RequirementStatus) -> str:
    """The regain stage: what restores it and until when."""
    if status.state == currency.CURRENT:
        return ""
    if status.state == currency.GRACE:
        return f"Tasks alone restore it until {fmt(status.regain_by)}; after that only a check does."
    if status.regain_with == "check":
        return f"Only {check_words(status.missing.get('check', []))} restores it."
    return "The missing tasks restore it."


_SHORT = {
    "instrument": "IFR experience",
    "instrument-recency": "Instrument recency",
    "instrument-check": "Instrument check",
    "instrument-rating": "Instrument rating",
    "ipc": "Proficiency check",
    "passengers-day": "Passengers",
    "passengers": "Passengers",
    "passengers-night": "Night passengers",
    "flight-review": "Flight review",
    "partial-panel": "Partial panel",
    "unusual-attitudes": "Unusual attitudes",
    "hand-flown-approach": "Hand-flown approach",
    "actual-imc": "Actual IMC",
}
_CLASS_SHORT = {
    "single-engine-land": "SEL",
    "multi-engine-land": "MEL",
    "single-engine-sea": "SES",
    "multi-engine-sea": "MES",
}


def short_label(rule_set: str, requirement: str, title: str, scope: str) -> str:
    """A compact row label for charts: 'IFR experience · airplane', 'Passengers · airplane SEL'."""
    text = _SHORT.get(requirement, title)
    if scope != "pilot":
        category, _, cls = scope.partition("/")
        text += f" · {category}" + (f" {_CLASS_SHORT.get(cls, cls)}" if cls else "")
    return text
