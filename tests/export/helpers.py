"""Small builders for interchange tests."""

from __future__ import annotations

import json
from typing import Any

from planner.core.logbook import Entry


def doc(*entries: dict[str, Any], pilot: dict[str, Any] | None = None, **top: Any) -> str:
    """A JSON document with the given entries (and overrides of the top level)."""
    body: dict[str, Any] = {
        "format_version": 1,
        "pilot": pilot if pilot is not None else {"name": "Test Pilot"},
        "entries": list(entries),
    }
    body.update(top)
    return json.dumps(body, indent=2)


def entry(ident: str = "e1", **fields: Any) -> dict[str, Any]:
    return {"id": ident, "date": "2026-06-15", **fields}


def only(entries: tuple[Entry, ...]) -> Entry:
    (single,) = entries
    return single
