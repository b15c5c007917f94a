"""Windows: the periods over which served rows and outcomes are summarised (`1d`, `6h`, `7d`).

Windows are aligned on the Unix epoch in UTC, so a day is a calendar day in UTC and the
windows of a longer period are whole multiples of the shorter ones: a week merges its days.
"""

from __future__ import annotations

import re
from datetime import UTC, datetime
from typing import TYPE_CHECKING

from registry.errors import UserError

if TYPE_CHECKING:
    import numpy as np

UNITS = {"h": 3600, "d": 86400}
SPELLING = re.compile(r"^([1-9][0-9]{0,3})([hd])$")
MICROS = 1_000_000


def window_seconds(text: str, *, place: str = "--window") -> int:
    """`1d` -> 86400; a whole number of hours or days."""
    match = SPELLING.match(text.strip()) if isinstance(text, str) else None
    if match is None:
        raise UserError(f"a window is a whole number of hours or days, such as 1d or 6h, "
                        f"not {text!r}", place=place)
    return int(match.group(1)) * UNITS[match.group(2)]


def spell_window(seconds: int) -> str:
    return f"{seconds // 86400}d" if seconds % 86400 == 0 else f"{seconds // 3600}h"


def window_starts(served_at_micros: np.ndarray, seconds: int) -> np.ndarray:
    """The start (seconds since the epoch) of the window each served time falls in."""
    return served_at_micros // (seconds * MICROS) * seconds  # numpy's floor division


def iso(seconds_or_micros: float, *, micros: bool = False) -> str:
    seconds = seconds_or_micros / MICROS if micros else seconds_or_micros
    return datetime.fromtimestamp(seconds, UTC).isoformat().replace("+00:00", "Z")


def parse_since(text: str, *, place: str = "--since") -> int:
    """An ISO 8601 date or time (UTC unless it says otherwise), as seconds since the epoch."""
    try:
        moment = datetime.fromisoformat(text.strip().replace("Z", "+00:00"))
    except ValueError:
        raise UserError(f"not an ISO 8601 date or time: {text!r}", place=place) from None
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return int(moment.timestamp())
