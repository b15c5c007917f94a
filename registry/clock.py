"""The catalogue's clock: the time every row and audit event is stamped with.

It is the wall clock, except while the demo plays its story on a calendar of its own (the
fourteen days of served traffic happen in seconds): `travel_to` moves the clock to a moment of
the story, from where it runs on at the wall clock's pace. Only the demo moves it.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

_offset = timedelta(0)


def now() -> datetime:
    return datetime.now(UTC) + _offset


def travel_to(moment: datetime) -> None:
    """Move the clock forward to `moment` (never back: the audit chain's times only grow)."""
    global _offset
    if moment > now():
        _offset = moment - datetime.now(UTC)


def back_to_the_wall_clock() -> None:
    global _offset
    _offset = timedelta(0)


def start_story(moment: datetime) -> None:
    """Set the clock to the first moment of a story played on a fresh catalogue."""
    global _offset
    _offset = moment - datetime.now(UTC)
