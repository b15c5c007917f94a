"""The plain JSON form of a result, shared by the command line's --json and the API's responses,
so both print the same document for the same result."""

from __future__ import annotations

import dataclasses
import enum
from collections.abc import Mapping
from typing import Any

# Exact types, looked up before any isinstance: a fingerprint's document holds tens of thousands
# of plain numbers, and subclasses (IntEnum, numpy's float64) still take the long way below.
_PLAIN_SCALARS = frozenset({str, int, float, bool, type(None)})


def to_plain(value: Any) -> Any:
    """Turn dataclasses, enums, tuples and sets into JSON-ready lists, dicts and scalars."""
    kind = type(value)
    if kind in _PLAIN_SCALARS:
        return value
    if kind is list or kind is tuple:
        return [to_plain(v) for v in value]
    if kind is dict:
        return {str(k): to_plain(v) for k, v in value.items()}
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: to_plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, enum.Enum):
        return to_plain(value.value)
    if isinstance(value, Mapping):
        return {str(k): to_plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [to_plain(v) for v in value]
    if isinstance(value, (set, frozenset)):
        return sorted(to_plain(v) for v in value)
    if isinstance(value, bytes):
        return value.hex()
    if hasattr(value, "isoformat"):
        return value.isoformat()
    if hasattr(value, "item") and callable(value.item):  # numpy scalars
        return value.item()
    return value
