"""Use cases: take a database session and plain arguments, load, call the core, stage writes.

The caller owns the session and the transaction (one per web request, one
per CLI command).
"""

from __future__ import annotations

from sqlalchemy.orm import Session

from planner.core.logbook import Logbook


def load_logbook(session: Session, pilot_id: int) -> Logbook:
    """The pilot's profile and all their current (not deleted) entries, as core data.

    Raises ``LookupError`` when there is no such pilot.
    """
    raise NotImplementedError  # filled by the foundation work
