"""Declarative base with a naming convention, and the column types that repeat.

The naming convention gives every constraint a stable name, which Alembic's
batch mode (SQLite) and downgrades need to find them again.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Annotated, Any

from sqlalchemy import JSON, DateTime, Integer, MetaData, String
from sqlalchemy.engine import Dialect
from sqlalchemy.orm import DeclarativeBase, mapped_column
from sqlalchemy.types import TypeDecorator

NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


class UTCDateTime(TypeDecorator[datetime]):
    """An instant, stored as UTC; always read back timezone-aware (UTC).

    SQLite keeps no offset and psycopg answers in the session's zone, so the
    conversion happens here, at the edge. Naive datetimes are refused.
    """

    impl = DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: datetime | None, dialect: Dialect) -> Any:
        if value is None:
            return None
        if value.tzinfo is None or value.utcoffset() is None:
            raise ValueError(f"naive datetime {value!r}: give a timezone-aware instant")
        value = value.astimezone(UTC)
        return value.replace(tzinfo=None) if dialect.name == "sqlite" else value

    def process_result_value(self, value: datetime | None, dialect: Dialect) -> datetime | None:
        if value is None:
            return None
        if value.tzinfo is None:
            return value.replace(tzinfo=UTC)
        return value.astimezone(UTC)


# Column types used across the models.
intpk = Annotated[int, mapped_column(Integer, primary_key=True)]
Name = Annotated[str, mapped_column(String(200))]
Ident = Annotated[str, mapped_column(String(64))]
Count = Annotated[int, mapped_column(Integer, default=0)]
# Hours are stored as integer hundredths of an hour: exact and portable.
Hundredths = Annotated[int, mapped_column(Integer, default=0)]
Instant = Annotated[datetime, mapped_column(UTCDateTime())]
JSONList = Annotated[list[str], mapped_column(JSON, default=list)]


class Base(DeclarativeBase):
    """Base class of every table."""

    metadata = MetaData(naming_convention=NAMING_CONVENTION)
