"""Read-only look-ups the school overview and the settings pages need."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from planner.db import models


def school_pilots(session: Session, school_id: int) -> list[models.Person]:
    """The people of one school who keep a logbook, by name."""
    return list(
        session.scalars(
            select(models.Person)
            .where(models.Person.school_id == school_id, models.Person.is_pilot.is_(True))
            .order_by(models.Person.name, models.Person.id)
        )
    )


def airfields(session: Session) -> list[models.Airfield]:
    """Every airfield known to this installation, by identifier."""
    return list(session.scalars(select(models.Airfield).order_by(models.Airfield.ident)))
