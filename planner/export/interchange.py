"""Logbook interchange format, version 1: JSON and CSV readers and writers.

Pure functions over text: no database, no files, no clock. The readers turn a
document into a :class:`planner.core.logbook.Logbook` or raise
:class:`InterchangeError` naming the entry id (JSON) or line (CSV) and the
field; nothing is returned half-read. The writers validate the logbook with
the same rules, so whatever they write reads back.

JSON document::

    {"format_version": 1,
     "pilot": {"name", "home_timezone"?, "instrument_categories"?, "category_classes"?},
     "entries": [{"id", "date", "device"?, "category"?, "class"?, "conditions"?,
                  "approaches"?, "holds"?, "course_tracking"?,
                  "instrument_actual_hours"?, "instrument_simulated_hours"?,
                  "landings"?, "night_full_stop_landings"?, "partial_panel_approaches"?,
                  "unusual_attitude_recoveries"?: {"nose_high"?, "nose_low"?},
                  "checks"?, "safety_pilot"?, "instructor"?, "remarks"?,
                  # our extensions (record keeping; the engine does not use them)
                  "aircraft"?, "route"?, "start_time"?, "end_time"?,
                  "total_hours"?, "pic_hours"?, "dual_received_hours"?, "solo_hours"?}]}

Each approach is ``{"type", "airfield", "runway"?, "to_minimums"?, "coupled"?,
"conditions"?}`` (``conditions`` is our extension: "actual", "simulated" or
null = as the entry). ``approaches`` may instead be an integer: N approaches
whose type and place were not logged (kept, never credited by the engine).

Rules (the same for both formats; docs/interchange.md has the full list):

* unknown keys or columns are an error naming the key; duplicate JSON keys too;
* ``date`` is a real ``YYYY-MM-DD``; times are ``HH:MM`` (00:00-23:59);
* counts are whole numbers 0..99999 (booleans are not numbers); hours are
  0..99999.99 with at most two decimals;
* enums: device aircraft|ffs|ftd|atd; category airplane|rotorcraft|
  powered-lift|airship|glider; conditions actual|simulated;
* ``night_full_stop_landings`` <= ``landings``; ``partial_panel_approaches``
  <= the number of approaches;
* check kinds, classes and category/class pairs are lowercase words joined by
  hyphens (``ipc``, ``flight-review``, ``instrument-practical-test`` or a
  rule-set-defined kind such as ``ir-proficiency-check``);
* approach type, airfield and runway may not contain ``|`` or ``;`` (they
  separate approaches in a CSV cell) nor start or end with a space;
* optional text that is empty means "not logged": "" and null are the same,
  and the writers write null (JSON) or an empty cell (CSV).

Canonical output: entries sorted by (date, id), every field written in a fixed
order with its default, hours as the shortest number (``0``, ``1.5``, ``1.25``),
JSON indented by 2 with a trailing newline; CSV with RFC 4180 ``\\r\\n`` line ends. So
write -> read -> write is byte-identical, and the readers also return entries
sorted by (date, id).
"""

from __future__ import annotations

import csv
import io
import json
import math
import re
import unicodedata
from datetime import date
from functools import lru_cache
from typing import Any, Callable
from zoneinfo import available_timezones

from planner.core.logbook import (
    CATEGORIES,
    CONDITIONS,
    DEVICES,
    Approach,
    Entry,
    Logbook,
    Pilot,
)

FORMAT_VERSION = 1
MAX_COUNT = 99_999
MAX_HOURS = 99_999.99

__all__ = [
    "FORMAT_VERSION",
    "InterchangeError",
    "read",
    "read_csv",
    "read_json",
    "write_csv",
    "write_json",
    "CSV_PILOT_COLUMNS",
    "CSV_ENTRY_COLUMNS",
]


class InterchangeError(ValueError):
    """A document (or logbook) that is not valid interchange format version 1.

    The message names where (entry id, or CSV line) and the field. The parts
    are also available as attributes: ``entry_id``, ``line``, ``field``.
    """

    def __init__(
        self,
        message: str,
        *,
        entry_id: str | None = None,
        line: int | None = None,
        field: str | None = None,
    ) -> None:
        super().__init__(message)
        self.entry_id = entry_id
        self.line = line
        self.field = field


class _Bad(Exception):
    """Internal: a field-level problem, located by the caller."""

    def __init__(self, field: str, problem: str) -> None:
        super().__init__(f"{field}: {problem}")
        self.field = field
        self.problem = problem


# --------------------------------------------------------------------------
# Field vocabulary

ENTRY_KEYS = (
    "id",
    "date",
    "device",
    "category",
    "class",
    "conditions",
    "aircraft",
    "route",
    "start_time",
    "end_time",
    "total_hours",
    "pic_hours",
    "dual_received_hours",
    "solo_hours",
    "instrument_actual_hours",
    "instrument_simulated_hours",
    "approaches",
    "holds",
    "course_tracking",
    "landings",
    "night_full_stop_landings",
    "partial_panel_approaches",
    "unusual_attitude_recoveries",
    "checks",
    "safety_pilot",
    "instructor",
    "remarks",
)
APPROACH_KEYS = ("type", "airfield", "runway", "to_minimums", "coupled", "conditions")
PILOT_KEYS = ("name", "home_timezone", "instrument_categories", "category_classes")
TOP_KEYS = ("format_version", "pilot", "entries")
UA_KEYS = ("nose_high", "nose_low")

HOURS_FIELDS = (
    "total_hours",
    "pic_hours",
    "dual_received_hours",
    "solo_hours",
    "instrument_actual_hours",
    "instrument_simulated_hours",
)
COUNT_FIELDS = ("holds", "landings", "night_full_stop_landings", "partial_panel_approaches")
LINE_TEXT_FIELDS = ("aircraft", "route", "safety_pilot", "instructor")

_KEBAB = re.compile(r"[a-z0-9]+(?:-[a-z0-9]+)*\Z")
_DATE = re.compile(r"\d{4}-\d{2}-\d{2}\Z")
_TIME = re.compile(r"([01]\d|2[0-3]):[0-5]\d\Z")
_RESERVED_IN_APPROACH = ("|", ";")


def _show(value: Any) -> str:
    """A value as it appears in the message: JSON spelling, shortened."""
    try:
        text = json.dumps(value, ensure_ascii=False)
    except (TypeError, ValueError):
        text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _one_of(options: tuple[str, ...]) -> str:
    return "must be one of " + ", ".join(options)


# --------------------------------------------------------------------------
# Value validators shared by both formats (values are JSON-typed here)


def _text(value: Any, field: str, *, multiline: bool = False) -> str:
    if not isinstance(value, str):
        raise _Bad(field, f"must be text, got {_show(value)}")
    for ch in value:
        cat = unicodedata.category(ch)
        if cat == "Cs" or (cat == "Cc" and not (multiline and ch in "\n\r\t")):
            what = "control characters" if cat == "Cc" else "unpaired surrogates"
            if cat == "Cc" and not multiline and ch in "\n\r":
                what = "line breaks"
            raise _Bad(field, f"must not contain {what}, got {_show(value)}")
    return value


def _optional_text(value: Any, field: str) -> str | None:
    if value is None:
        return None
    text = _text(value, field)
    return text or None


def _count(value: Any, field: str) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or value < 0:
        raise _Bad(field, f"must be a whole number >= 0, got {_show(value)}")
    if value > MAX_COUNT:
        raise _Bad(field, f"must be at most {MAX_COUNT}, got {_show(value)}")
    return value


def _hours(value: Any, field: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise _Bad(field, f"must be a number of hours >= 0, got {_show(value)}")
    number = float(value)
    if not math.isfinite(number) or not 0 <= number <= MAX_HOURS:
        raise _Bad(field, f"must be a number of hours from 0 to {MAX_HOURS}, got {_show(value)}")
    if round(number, 2) != number:
        raise _Bad(field, f"must have at most 2 decimals, got {_show(value)}")
    return number


def _flag(value: Any, field: str) -> bool:
    if not isinstance(value, bool):
        raise _Bad(field, f"must be true or false, got {_show(value)}")
    return value


def _enum(value: Any, field: str, options: tuple[str, ...]) -> str:
    if not isinstance(value, str) or value not in options:
        raise _Bad(field, f"{_one_of(options)}, got {_show(value)}")
    return value


def _kebab(value: Any, field: str, example: str) -> str:
    if not isinstance(value, str) or not _KEBAB.match(value):
        raise _Bad(
            field,
            f'must be lowercase words joined by hyphens (e.g. "{example}"), got {_show(value)}',
        )
    return value


def _date(value: Any, field: str) -> date:
    if not isinstance(value, str) or not _DATE.match(value):
        raise _Bad(field, f"must be a date YYYY-MM-DD, got {_show(value)}")
    try:
        return date.fromisoformat(value)
    except ValueError:
        raise _Bad(field, f"is not a real date, got {_show(value)}") from None


def _time(value: Any, field: str) -> str | None:
    if value is None or value == "":
        return None
    if not isinstance(value, str) or not _TIME.match(value):
        raise _Bad(field, f"must be a local time HH:MM (00:00 to 23:59), got {_show(value)}")
    return value


def _list(value: Any, field: str) -> list[Any]:
    if not isinstance(value, list):
        raise _Bad(field, f"must be a list, got {_show(value)}")
    return value


def _unique(items: list[str], field: str) -> tuple[str, ...]:
    seen: set[str] = set()
    for item in items:
        if item in seen:
            raise _Bad(field, f"lists {_show(item)} twice")
        seen.add(item)
    return tuple(items)


def _approach_part(value: Any, field: str) -> str | None:
    text = _optional_text(value, field)
    if text is None:
        return None
    for ch in _RESERVED_IN_APPROACH:
        if ch in text:
            raise _Bad(
                field,
                f'must not contain "|" or ";" (they separate approaches in CSV), got {_show(text)}',
            )
    if text != text.strip():
        raise _Bad(field, f"must not start or end with a space, got {_show(text)}")
    return text


@lru_cache(maxsize=1)
def _zones() -> frozenset[str]:
    return frozenset(available_timezones())


def _timezone(value: Any, field: str) -> str | None:
    if value is None or value == "":
        return None
    if not isinstance(value, str) or value not in _zones():
        raise _Bad(
            field,
            f'must be an IANA time zone name such as "America/Denver", got {_show(value)}',
        )
    return value


class _Dict(dict):
    """A JSON object that remembers keys it saw more than once."""

    duplicates: tuple[str, ...] = ()


def _object_pairs(pairs: list[tuple[str, Any]]) -> _Dict:
    obj = _Dict()
    dups = []
    for key, value in pairs:
        if key in obj:
            dups.append(key)
        obj[key] = value
    obj.duplicates = tuple(dups)
    return obj


def _check_keys(obj: dict, allowed: tuple[str, ...], prefix: str = "") -> None:
    for key in getattr(obj, "duplicates", ()):
        raise _Bad(prefix + key, "appears twice in the same object")
    for key in obj:
        if key not in allowed:
            raise _Bad(prefix + str(key), "unknown field (allowed: " + ", ".join(allowed) + ")")


# --------------------------------------------------------------------------
# Mapping (JSON-shaped) -> core objects


def _approach_from(obj: Any, prefix: str) -> Approach:
    if not isinstance(obj, dict):
        raise _Bad(prefix.rstrip("."), f"must be an object with type and airfield, got {_show(obj)}")
    _check_keys(obj, APPROACH_KEYS, prefix)
    conditions = obj.get("conditions")
    if conditions is not None:
        conditions = _enum(conditions, prefix + "conditions", CONDITIONS)
    return Approach(
        type=_approach_part(obj.get("type"), prefix + "type"),
        airfield=_approach_part(obj.get("airfield"), prefix + "airfield"),
        runway=_approach_part(obj.get("runway"), prefix + "runway"),
        to_minimums=_flag(obj.get("to_minimums", False), prefix + "to_minimums"),
        coupled=_flag(obj.get("coupled", False), prefix + "coupled"),
        conditions=conditions,
    )


def _entry_from(obj: dict) -> Entry:
    """Validate one JSON-shaped entry (id already checked by the caller)."""
    _check_keys(obj, ENTRY_KEYS)
    if "date" not in obj:
        raise _Bad("date", "is required")
    when = _date(obj["date"], "date")
    kwargs: dict[str, Any] = {"id": obj["id"], "date": when}
    kwargs["device"] = _enum(obj.get("device", "aircraft"), "device", DEVICES)
    kwargs["category"] = _enum(obj.get("category", "airplane"), "category", CATEGORIES)
    cls = obj.get("class")
    kwargs["aircraft_class"] = (
        None if cls is None or cls == "" else _kebab(cls, "class", "single-engine-land")
    )
    cond = obj.get("conditions")
    kwargs["conditions"] = None if cond is None else _enum(cond, "conditions", CONDITIONS)

    approaches = obj.get("approaches", [])
    if isinstance(approaches, list):
        kwargs["approaches"] = tuple(
            _approach_from(a, f"approaches[{i}].") for i, a in enumerate(approaches, start=1)
        )
        kwargs["unlogged_approaches"] = 0
    elif isinstance(approaches, int) and not isinstance(approaches, bool):
        kwargs["approaches"] = ()
        kwargs["unlogged_approaches"] = _count(approaches, "approaches")
    else:
        raise _Bad(
            "approaches",
            f"must be a list of approaches or a whole number >= 0, got {_show(approaches)}",
        )

    for name in COUNT_FIELDS:
        kwargs[name] = _count(obj.get(name, 0), name)
    for name in HOURS_FIELDS:
        kwargs[name] = _hours(obj.get(name, 0), name)
    kwargs["course_tracking"] = _flag(obj.get("course_tracking", False), "course_tracking")

    ua = obj.get("unusual_attitude_recoveries", {})
    if not isinstance(ua, dict):
        raise _Bad(
            "unusual_attitude_recoveries",
            f"must be an object with nose_high and nose_low, got {_show(ua)}",
        )
    _check_keys(ua, UA_KEYS, "unusual_attitude_recoveries.")
    kwargs["ua_nose_high"] = _count(
        ua.get("nose_high", 0), "unusual_attitude_recoveries.nose_high"
    )
    kwargs["ua_nose_low"] = _count(ua.get("nose_low", 0), "unusual_attitude_recoveries.nose_low")

    checks = _list(obj.get("checks", []), "checks")
    kwargs["checks"] = _unique(
        [_kebab(c, f"checks[{i}]", "ipc") for i, c in enumerate(checks, start=1)], "checks"
    )
    for name in LINE_TEXT_FIELDS:
        kwargs[name] = _optional_text(obj.get(name), name)
    remarks = obj.get("remarks", "")
    kwargs["remarks"] = "" if remarks is None else _text(remarks, "remarks", multiline=True)
    kwargs["start_time"] = _time(obj.get("start_time"), "start_time")
    kwargs["end_time"] = _time(obj.get("end_time"), "end_time")

    if kwargs["night_full_stop_landings"] > kwargs["landings"]:
        raise _Bad(
            "night_full_stop_landings",
            f"must not exceed landings ({kwargs['landings']}), "
            f"got {kwargs['night_full_stop_landings']}",
        )
    n_approaches = len(kwargs["approaches"]) + kwargs["unlogged_approaches"]
    if kwargs["partial_panel_approaches"] > n_approaches:
        raise _Bad(
            "partial_panel_approaches",
            f"must not exceed the approaches logged ({n_approaches}), "
            f"got {kwargs['partial_panel_approaches']}",
        )
    return Entry(**kwargs)


def _pilot_from(obj: Any) -> Pilot:
    if not isinstance(obj, dict):
        raise _Bad("pilot", f"must be an object with at least a name, got {_show(obj)}")
    _check_keys(obj, PILOT_KEYS)
    if "name" not in obj:
        raise _Bad("name", "is required")
    name = _text(obj["name"], "name")
    if not name.strip():
        raise _Bad("name", "must not be empty")
    cats = _list(obj.get("instrument_categories", []), "instrument_categories")
    cats = [_enum(c, f"instrument_categories[{i}]", CATEGORIES) for i, c in enumerate(cats, 1)]
    pairs = _list(obj.get("category_classes", []), "category_classes")
    checked = []
    for i, pair in enumerate(pairs, start=1):
        field = f"category_classes[{i}]"
        if not isinstance(pair, str) or pair.count("/") != 1:
            raise _Bad(
                field,
                f'must be "category/class" such as "airplane/single-engine-land", got {_show(pair)}',
            )
        cat, cls = pair.split("/")
        _enum(cat, field + " (category)", CATEGORIES)
        _kebab(cls, field + " (class)", "single-engine-land")
        checked.append(pair)
    return Pilot(
        name=name,
        home_timezone=_timezone(obj.get("home_timezone"), "home_timezone"),
        instrument_categories=_unique(cats, "instrument_categories"),
        category_classes=_unique(checked, "category_classes"),
    )


def _sort_key(entry: Entry) -> tuple[date, str]:
    return (entry.date, entry.id)


def _logbook_from(
    doc: Any,
    *,
    locate: Callable[[int, Any], tuple[str, dict[str, Any]]],
    field_name: Callable[[str], str],
) -> Logbook:
    """Validate a JSON-shaped document.

    ``locate(index, entry_obj)`` gives the message prefix and InterchangeError
    keyword arguments for an entry; ``field_name`` turns a field path into the
    words used in the message (JSON: field "x"; CSV: column "x").
    """
    if not isinstance(doc, dict):
        raise InterchangeError(
            f"document: must be an object with format_version, pilot and entries, got {_show(doc)}"
        )
    try:
        _check_keys(doc, TOP_KEYS)
        if "format_version" not in doc:
            raise _Bad("format_version", "is required (this reader knows version 1)")
        version = doc["format_version"]
        if isinstance(version, bool) or version != FORMAT_VERSION or not isinstance(version, int):
            raise _Bad("format_version", f"must be 1, got {_show(version)}")
        if "pilot" not in doc:
            raise _Bad("pilot", "is required")
    except _Bad as bad:
        raise InterchangeError(
            f"document: {field_name(bad.field)}: {bad.problem}", field=bad.field
        ) from None
    try:
        pilot = _pilot_from(doc["pilot"])
    except _Bad as bad:
        raise InterchangeError(
            f"pilot: {field_name(bad.field)}: {bad.problem}", field=bad.field
        ) from None

    raw_entries = doc.get("entries", [])
    if not isinstance(raw_entries, list):
        raise InterchangeError(
            f"document: {field_name('entries')}: must be a list, got {_show(raw_entries)}",
            field="entries",
        )
    entries: list[Entry] = []
    seen: dict[str, str] = {}
    for index, obj in enumerate(raw_entries, start=1):
        where, info = locate(index, obj)
        try:
            if not isinstance(obj, dict):
                raise _Bad("entry", f"must be an object, got {_show(obj)}")
            if "id" not in obj:
                raise _Bad("id", "is required")
            ident = obj["id"]
            if not isinstance(ident, str) or not ident.strip():
                raise _Bad("id", f"must be non-empty text, got {_show(ident)}")
            _text(ident, "id")
            if ident != ident.strip():
                raise _Bad("id", f"must not start or end with a space, got {_show(ident)}")
            if ident in seen:
                raise _Bad("id", f"duplicate id {_show(ident)} (already used {seen[ident]})")
            seen[ident] = f"on line {info['line']}" if "line" in info else f"by entry #{index}"
            entries.append(_entry_from(obj))
        except _Bad as bad:
            raise InterchangeError(
                f"{where}: {field_name(bad.field)}: {bad.problem}", field=bad.field, **info
            ) from None
    entries.sort(key=_sort_key)
    return Logbook(pilot=pilot, entries=tuple(entries))


# --------------------------------------------------------------------------
# Core objects -> mapping (canonical)


def _hours_out(value: float) -> int | float:
    number = float(value)
    return int(number) if number.is_integer() and abs(number) < 1e15 else number


def _approach_to(a: Approach) -> dict[str, Any]:
    return {
        "type": a.type or None,
        "airfield": a.airfield or None,
        "runway": a.runway or None,
        "to_minimums": a.to_minimums,
        "coupled": a.coupled,
        "conditions": a.conditions,
    }


def _entry_to(e: Entry) -> dict[str, Any]:
    if e.approaches and e.unlogged_approaches:
        raise InterchangeError(
            f'entry "{e.id}": field "approaches": cannot hold both a list of approaches and '
            f"{e.unlogged_approaches} unlogged ones",
            entry_id=e.id,
            field="approaches",
        )
    approaches: Any = (
        e.unlogged_approaches if e.unlogged_approaches else [_approach_to(a) for a in e.approaches]
    )
    date_text = e.date.isoformat() if isinstance(e.date, date) else e.date
    return {
        "id": e.id,
        "date": date_text,
        "device": e.device,
        "category": e.category,
        "class": e.aircraft_class or None,
        "conditions": e.conditions,
        "aircraft": e.aircraft or None,
        "route": e.route or None,
        "start_time": e.start_time or None,
        "end_time": e.end_time or None,
        "total_hours": _hours_out(e.total_hours),
        "pic_hours": _hours_out(e.pic_hours),
        "dual_received_hours": _hours_out(e.dual_received_hours),
        "solo_hours": _hours_out(e.solo_hours),
        "instrument_actual_hours": _hours_out(e.instrument_actual_hours),
        "instrument_simulated_hours": _hours_out(e.instrument_simulated_hours),
        "approaches": approaches,
        "holds": e.holds,
        "course_tracking": e.course_tracking,
        "landings": e.landings,
        "night_full_stop_landings": e.night_full_stop_landings,
        "partial_panel_approaches": e.partial_panel_approaches,
        "unusual_attitude_recoveries": {"nose_high": e.ua_nose_high, "nose_low": e.ua_nose_low},
        "checks": list(e.checks),
        "safety_pilot": e.safety_pilot or None,
        "instructor": e.instructor or None,
        "remarks": e.remarks or "",
    }


def _document(logbook: Logbook) -> dict[str, Any]:
    """The canonical JSON-shaped document, validated with the reader's rules."""
    p = logbook.pilot
    doc = {
        "format_version": FORMAT_VERSION,
        "pilot": {
            "name": p.name,
            "home_timezone": p.home_timezone or None,
            "instrument_categories": list(p.instrument_categories),
            "category_classes": list(p.category_classes),
        },
        "entries": [_entry_to(e) for e in sorted(logbook.entries, key=_sort_key)],
    }
    _logbook_from(doc, locate=_json_locate, field_name=_json_field)
    return doc


# --------------------------------------------------------------------------
# JSON


def _json_locate(index: int, obj: Any) -> tuple[str, dict[str, Any]]:
    ident = obj.get("id") if isinstance(obj, dict) else None
    if isinstance(ident, str) and ident:
        return f"entry {_show(ident)}", {"entry_id": ident}
    return f"entry #{index} (no valid id)", {}


def _json_field(path: str) -> str:
    return f'field "{path}"'


def _no_constant(name: str) -> Any:
    raise ValueError(f"{name} is not a number in JSON")


def read_json(text: str) -> Logbook:
    """Read a version-1 JSON document; raise InterchangeError naming entry and field."""
    if text.startswith("\ufeff"):
        text = text[1:]
    try:
        doc = json.loads(text, object_pairs_hook=_object_pairs, parse_constant=_no_constant)
    except json.JSONDecodeError as err:
        raise InterchangeError(
            f"not valid JSON: line {err.lineno}, column {err.colno}: {err.msg}", line=err.lineno
        ) from None
    except ValueError as err:  # NaN / Infinity
        raise InterchangeError(f"not valid JSON: {err}") from None
    return _logbook_from(doc, locate=_json_locate, field_name=_json_field)


def write_json(logbook: Logbook) -> str:
    """Write the canonical JSON document (see the module docstring)."""
    doc = _document(logbook)
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


# --------------------------------------------------------------------------
# CSV
#
# Layout (docs/interchange.md):
#   line 1   pilot header   format_version,pilot_name,home_timezone,instrument_categories,category_classes
#   line 2   pilot values
#   line 3   empty
#   line 4   entry header   (CSV_ENTRY_COLUMNS)
#   line 5.. one row per entry
# Lists in a cell are separated by "; ". The approaches cell is either a whole
# number (approaches not logged in detail) or approaches separated by ";",
# each  type|airfield[|runway[|flags]]  with flags among
# "minimums coupled actual simulated" separated by spaces.

CSV_PILOT_COLUMNS = (
    "format_version",
    "pilot_name",
    "home_timezone",
    "instrument_categories",
    "category_classes",
)
_CSV_UA = {
    "unusual_attitude_nose_high": "unusual_attitude_recoveries.nose_high",
    "unusual_attitude_nose_low": "unusual_attitude_recoveries.nose_low",
}
CSV_ENTRY_COLUMNS = tuple(
    c
    for key in ENTRY_KEYS
    for c in (tuple(_CSV_UA) if key == "unusual_attitude_recoveries" else (key,))
)
_CSV_PILOT_FIELD = {"name": "pilot_name"}
_FLAG_WORDS = ("minimums", "coupled", "actual", "simulated")
_YES = ("yes", "true")
_NO = ("no", "false", "")


def _csv_field(path: str) -> str:
    """JSON field path -> the column words used in CSV messages."""
    if path.startswith("unusual_attitude_recoveries."):
        return f'column "unusual_attitude_{path.split(".", 1)[1]}"'
    match = re.match(r"approaches\[(\d+)\]\.(\w+)", path)
    if match:
        return f'column "approaches" (approach {match.group(1)}, {match.group(2)})'
    match = re.match(r"(\w+)\[(\d+)\](.*)", path)
    if match:
        return f'column "{_CSV_PILOT_FIELD.get(match.group(1), match.group(1))}" ' \
            f"(item {match.group(2)}{match.group(3)})"
    return f'column "{_CSV_PILOT_FIELD.get(path, path)}"'


def _cell_count(cell: str, column: str) -> int:
    s = cell.strip()
    if s == "":
        return 0
    if not s.isascii() or not s.isdigit():
        raise _Bad(column, f"must be a whole number >= 0, got {_show(cell)}")
    if len(s.lstrip("0")) > len(str(MAX_COUNT)):  # before int(): Python refuses very long digit strings itself
        raise _Bad(column, f"must be at most {MAX_COUNT}, got {_show(cell)}")
    return int(s)


def _cell_hours(cell: str, column: str) -> int | float:
    s = cell.strip()
    if s == "":
        return 0
    if not re.fullmatch(r"[0-9]+(\.[0-9]{1,2})?", s):
        raise _Bad(column, f"must be a number of hours >= 0 with at most 2 decimals, got {_show(cell)}")
    return float(s)


def _cell_flag(cell: str, column: str) -> bool:
    s = cell.strip().lower()
    if s in _YES:
        return True
    if s in _NO:
        return False
    raise _Bad(column, f"must be yes or no, got {_show(cell)}")


def _cell_list(cell: str) -> list[str]:
    return [part.strip() for part in cell.split(";")] if cell.strip() else []


def _cell_approaches(cell: str) -> Any:
    s = cell.strip()
    if s == "":
        return []
    if s.isascii() and s.isdigit():
        return _cell_count(s, "approaches")
    out = []
    for i, item in enumerate(s.split(";"), start=1):
        item = item.strip()
        parts = [p.strip() for p in item.split("|")]
        if len(parts) < 2 or len(parts) > 4:
            raise _Bad(
                "approaches",
                f"approach {i} must be type|airfield[|runway[|flags]], got {_show(item)}",
            )
        obj: dict[str, Any] = {"type": parts[0] or None, "airfield": parts[1] or None}
        obj["runway"] = parts[2] or None if len(parts) > 2 else None
        words = parts[3].split() if len(parts) > 3 else []
        for word in words:
            if word not in _FLAG_WORDS:
                raise _Bad(
                    "approaches",
                    f"approach {i}: unknown flag {_show(word)} "
                    f"(flags: {', '.join(_FLAG_WORDS)})",
                )
        if len(set(words)) != len(words) or {"actual", "simulated"} <= set(words):
            raise _Bad("approaches", f"approach {i}: flags repeated or contradictory: {_show(parts[3])}")
        obj["to_minimums"] = "minimums" in words
        obj["coupled"] = "coupled" in words
        obj["conditions"] = next((w for w in words if w in CONDITIONS), None)
        out.append(obj)
    return out


def _approaches_cell(value: Any) -> str:
    if isinstance(value, int):
        return str(value)
    items = []
    for a in value:
        flags = [w for w, on in (("minimums", a["to_minimums"]), ("coupled", a["coupled"])) if on]
        if a["conditions"]:
            flags.append(a["conditions"])
        parts = [a["type"] or "", a["airfield"] or ""]
        if a["runway"] or flags:
            parts.append(a["runway"] or "")
        if flags:
            parts.append(" ".join(flags))
        items.append("|".join(parts))
    return "; ".join(items)


def _row_to_entry_obj(row: dict[str, str]) -> dict[str, Any]:
    """CSV cells -> a JSON-shaped entry (cell syntax checked here, meaning later)."""
    obj: dict[str, Any] = {}
    ua: dict[str, Any] = {}
    for column, cell in row.items():
        if column in ("id", "date"):
            obj[column] = cell
        elif column in ("device", "category"):
            if cell.strip():
                obj[column] = cell.strip()
        elif column in ("class", "conditions", "start_time", "end_time"):
            obj[column] = cell.strip() or None
        elif column in HOURS_FIELDS:
            obj[column] = _cell_hours(cell, column)
        elif column in COUNT_FIELDS:
            obj[column] = _cell_count(cell, column)
        elif column == "course_tracking":
            obj[column] = _cell_flag(cell, column)
        elif column in _CSV_UA:
            ua[_CSV_UA[column].split(".")[1]] = _cell_count(cell, column)
        elif column == "approaches":
            obj[column] = _cell_approaches(cell)
        elif column == "checks":
            obj[column] = _cell_list(cell)
        elif column == "remarks":
            obj[column] = cell
        else:  # free single-line text
            obj[column] = cell or None
    obj["unusual_attitude_recoveries"] = ua
    return obj


def _csv_line_rows(text: str) -> list[tuple[int, list[str]]]:
    """(first physical line number, cells) for each CSV record; blank records dropped."""
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    rows = []
    start = 1
    while True:
        try:
            cells = next(reader)
        except StopIteration:
            break
        except csv.Error as err:
            raise InterchangeError(
                f"line {start}: not valid CSV: {err}", line=start
            ) from None
        if any(c.strip() for c in cells):
            rows.append((start, cells))
        start = reader.line_num + 1
    return rows


def _header(cells: list[str], line: int, allowed: tuple[str, ...], required: str) -> list[str]:
    names = [c.strip() for c in cells]
    while names and names[-1] == "":
        names.pop()
    for name in names:
        if name not in allowed:
            raise InterchangeError(
                f'line {line}: column "{name}": unknown column (allowed: {", ".join(allowed)})',
                line=line,
                field=name,
            )
        if names.count(name) > 1:
            raise InterchangeError(
                f'line {line}: column "{name}": appears twice in the header', line=line, field=name
            )
    if required not in names:
        raise InterchangeError(
            f'line {line}: column "{required}": missing from the header', line=line, field=required
        )
    return names


def _cells_by_name(names: list[str], cells: list[str], line: int) -> dict[str, str]:
    extra = cells[len(names):]
    if any(c.strip() for c in extra):
        raise InterchangeError(
            f"line {line}: has {len(cells)} cells but the header has {len(names)} columns",
            line=line,
        )
    cells = cells[: len(names)] + [""] * (len(names) - len(cells))
    return dict(zip(names, cells))


def read_csv(text: str) -> Logbook:
    """Read a version-1 CSV document; raise InterchangeError naming line and column."""
    if text.startswith("\ufeff"):
        text = text[1:]
    rows = _csv_line_rows(text)
    if not rows:
        raise InterchangeError('line 1: column "format_version": the file is empty', line=1)
    line, cells = rows[0]
    pilot_names = _header(cells, line, CSV_PILOT_COLUMNS, "format_version")
    if "pilot_name" not in pilot_names:
        raise InterchangeError(
            f'line {line}: column "pilot_name": missing from the header', line=line, field="pilot_name"
        )
    if len(rows) < 2:
        raise InterchangeError(
            f"line {line + 1}: the pilot row is missing below the pilot header", line=line + 1
        )
    pilot_line, cells = rows[1]
    pilot_cells = _cells_by_name(pilot_names, cells, pilot_line)
    version_cell = pilot_cells["format_version"].strip()
    pilot: dict[str, Any] = {"name": pilot_cells["pilot_name"]}
    if pilot_cells.get("home_timezone", "").strip():
        pilot["home_timezone"] = pilot_cells["home_timezone"].strip()
    for name in ("instrument_categories", "category_classes"):
        if name in pilot_cells:
            pilot[name] = _cell_list(pilot_cells[name])
    doc: dict[str, Any] = {
        # A short digit string is read as a number (and then checked); anything else is refused as given.
        "format_version": int(version_cell) if version_cell.isascii() and version_cell.isdigit() and len(version_cell) < 10
        else version_cell,
        "pilot": pilot,
        "entries": [],
    }

    entry_rows = rows[2:]
    lines: list[int] = []
    if entry_rows:
        header_line, cells = entry_rows[0]
        names = _header(cells, header_line, CSV_ENTRY_COLUMNS, "id")
        if "date" not in names:
            raise InterchangeError(
                f'line {header_line}: column "date": missing from the header',
                line=header_line,
                field="date",
            )
        for line, cells in entry_rows[1:]:
            row = _cells_by_name(names, cells, line)
            try:
                obj = _row_to_entry_obj(row)
            except _Bad as bad:
                ident = row.get("id", "")
                label = f"line {line} (entry {_show(ident)})" if ident else f"line {line}"
                raise InterchangeError(
                    f"{label}: {_csv_field(bad.field)}: {bad.problem}",
                    line=line,
                    field=bad.field,
                    entry_id=ident or None,
                ) from None
            doc["entries"].append(obj)
            lines.append(line)

    def locate(index: int, obj: Any) -> tuple[str, dict[str, Any]]:
        line = lines[index - 1]
        ident = obj.get("id") if isinstance(obj, dict) else None
        if isinstance(ident, str) and ident:
            return f"line {line} (entry {_show(ident)})", {"line": line, "entry_id": ident}
        return f"line {line}", {"line": line}

    try:
        return _logbook_from(doc, locate=locate, field_name=_csv_field)
    except InterchangeError as err:
        if err.line is None and err.entry_id is None:  # pilot block or version
            raise InterchangeError(
                f"line {pilot_line}: {str(err).split(': ', 1)[1]}", line=pilot_line, field=err.field
            ) from None
        raise


def write_csv(logbook: Logbook) -> str:
    """Write the canonical CSV document (see the module docstring)."""
    doc = _document(logbook)
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\r\n")  # RFC 4180; also makes csv quote a lone "\r"
    p = doc["pilot"]
    writer.writerow(CSV_PILOT_COLUMNS)
    writer.writerow(
        [
            str(FORMAT_VERSION),
            p["name"],
            p["home_timezone"] or "",
            "; ".join(p["instrument_categories"]),
            "; ".join(p["category_classes"]),
        ]
    )
    writer.writerow([])
    writer.writerow(CSV_ENTRY_COLUMNS)
    for e in doc["entries"]:
        row = []
        for column in CSV_ENTRY_COLUMNS:
            if column in _CSV_UA:
                value = e["unusual_attitude_recoveries"][_CSV_UA[column].split(".")[1]]
            else:
                value = e[column]
            if column == "approaches":
                row.append(_approaches_cell(value))
            elif column == "checks":
                row.append("; ".join(value))
            elif isinstance(value, bool):
                row.append("yes" if value else "no")
            elif value is None:
                row.append("")
            else:
                row.append(str(value))
        writer.writerow(row)
    return out.getvalue()


# --------------------------------------------------------------------------


def read(text: str, filename: str) -> Logbook:
    """Read either format: by extension (.json/.csv), else by the first character."""
    lower = filename.lower()
    if lower.endswith(".json"):
        return read_json(text)
    if lower.endswith(".csv"):
        return read_csv(text)
    return read_json(text) if text.lstrip("\ufeff \t\r\n").startswith("{") else read_csv(text)
