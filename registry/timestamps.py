"""Timestamps as text: one form for JSON, exports and row digests, whatever the database."""

from __future__ import annotations

from datetime import UTC, datetime


def utc_iso(value: datetime | None) -> str | None:
    """ISO 8601 in UTC with microseconds. SQLite hands back naive datetimes that were written as
    UTC; PostgreSQL aware ones: both give the same text."""
    if value is None:
        return None
    aware = value.replace(tzinfo=UTC) if value.tzinfo is None else value.astimezone(UTC)
    return aware.isoformat(timespec="microseconds")
