"""How deep a JSON value nests, counted without recursion, so input nested past Python's
recursion limit is measured and refused rather than met as a RecursionError."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any


def nesting_depth(value: Any) -> int:
    """How many objects and arrays deep `value` goes (a scalar: 0)."""
    deepest, stack = 0, [(value, 1)]
    while stack:
        current, depth = stack.pop()
        children = (current.values() if isinstance(current, Mapping)
                    else current if isinstance(current, list) else None)
        if children is None:
            continue
        deepest = max(deepest, depth)
        stack.extend((child, depth + 1) for child in children)
    return deepest
