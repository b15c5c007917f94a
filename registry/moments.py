"""Moments people write on the command line: a span from now (`30d`, `12h`, `15m`) or an ISO 8601
date or time, read as UTC when it gives no offset."""

from __future__ import annotations

import re
from datetime import UTC, datetime, timedelta

from registry.errors import UserError

SPAN = re.compile(r"(\d{1,5})([dhm])")
UNITS = {"d": "days", "h": "hours", "m": "minutes"}


def parse_moment(text: str, *, now: datetime, later: bool, place: str,
                 units: str = "dhm") -> datetime:
    """The moment `text` names: a span counts forward from `now` when `later`, else back."""
    match = SPAN.fullmatch(text.strip())
    if match and match.group(2) in units:
        span = timedelta(**{UNITS[match.group(2)]: int(match.group(1))})
        return now + span if later else now - span
    try:
        moment = datetime.fromisoformat(text.strip())
    except ValueError:
        spans = " or ".join(f"12{unit}" for unit in units)
        raise UserError(f"invalid time {text!r}: use a span like {spans}, or an ISO date like "
                        "2027-01-31", place=place) from None
    return moment if moment.tzinfo else moment.replace(tzinfo=UTC)


def utc_iso(moment: datetime) -> str:
    """ISO 8601 with its offset: SQLite hands timestamps back without one, and they are UTC."""
    return (moment if moment.tzinfo else moment.replace(tzinfo=UTC)).isoformat()
