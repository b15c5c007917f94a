"""The plain JSON form (registry/plain.py): the quick path for exact built-in types gives what
the general rules give, and subclasses of them still take the general rules."""

from __future__ import annotations

import dataclasses
import enum
import json
from datetime import UTC, datetime

import numpy as np

from registry.plain import to_plain


class Level(enum.IntEnum):
    WARN = 1


class Colour(enum.Enum):
    RED = "red"


@dataclasses.dataclass(frozen=True)
class Point:
    x: float
    tags: tuple[str, ...]


def test_plain_values_pass_through_and_containers_become_lists_and_dicts():
    value = {"a": [1, 2.5, "x", None, True], 3: (4, (5,)), "p": Point(1.0, ("t",))}
    assert to_plain(value) == {"a": [1, 2.5, "x", None, True], "3": [4, [5]],
                               "p": {"x": 1.0, "tags": ["t"]}}


def test_subclasses_of_plain_types_take_the_general_rules():
    plain = to_plain([Level.WARN, Colour.RED, np.float64(0.25), np.int64(7), np.bool_(True),
                      {"b", "a"}, b"\x01\xff", datetime(2026, 12, 4, tzinfo=UTC)])
    assert plain == [1, "red", 0.25, 7, True, ["a", "b"], "01ff", "2026-12-04T00:00:00+00:00"]
    assert [type(v) for v in plain[:5]] == [int, str, float, int, bool]
    json.dumps(plain, allow_nan=False)  # every value is JSON (RFC 8259) as Python writes it
