"""Small helpers the page queries share: stored JSON read safely, times, plain numbers."""

from __future__ import annotations

import json
import math
from datetime import UTC, datetime
from typing import Any


def loads(text: str | bytes | None, default: Any = None) -> Any:
    """Stored JSON, or `default` when it is absent or unreadable (a page shows what it can)."""
    if text is None:
        return default
    try:
        return json.loads(text)
    except (TypeError, ValueError):
        return default


def moment(value: datetime | None) -> str:
    """ISO 8601 to the microsecond with its offset; SQLite hands back naive UTC times."""
    if value is None:
        return ""
    return (value if value.tzinfo else value.replace(tzinfo=UTC)).isoformat()


def number(value: Any) -> float | int | None:
    """A finite number, or None for anything else (booleans, text, NaN)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    return value if math.isfinite(value) else None
