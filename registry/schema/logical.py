"""Logical types: the underlying types they annotate, and when to ignore them.

Avro specification, Logical Types: an unknown or invalid logical type is ignored and the
underlying type used; here it is kept as `IgnoredLogicalType` so the reports can say so.
"""

from __future__ import annotations

import math
from typing import Any, TypeGuard

from registry.schema.model import IgnoredLogicalType, LogicalType

# Logical type name -> the underlying types it may annotate ("fixed:N" a fixed of size N).
UNDERLYING = {
    "decimal": ("bytes", "fixed"),
    "big-decimal": ("bytes",),
    "uuid": ("string", "fixed:16"),
    "date": ("int",),
    "time-millis": ("int",),
    "time-micros": ("long",),
    "timestamp-millis": ("long",),
    "timestamp-micros": ("long",),
    "timestamp-nanos": ("long",),
    "local-timestamp-millis": ("long",),
    "local-timestamp-micros": ("long",),
    "local-timestamp-nanos": ("long",),
    "duration": ("fixed:12",),
}

LOGICAL_ATTRIBUTES = ("logicalType", "precision", "scale")


def max_decimal_precision(size: int) -> int:
    """Most decimal digits a two's-complement fixed of `size` bytes holds (Logical Types)."""
    if size <= 0:
        return 0
    return int(math.floor(math.log10(2 ** (8 * size - 1) - 1))) if size > 0 else 0


def _is_count(value: Any) -> TypeGuard[int]:
    return isinstance(value, int) and not isinstance(value, bool)


def interpret(attributes: dict[str, Any], underlying: str, size: int | None = None
              ) -> tuple[LogicalType | None, IgnoredLogicalType | None]:
    """Read logicalType/precision/scale of one schema object: a valid logical type, or why not."""
    name = attributes.get("logicalType")
    if name is None:
        return None, None
    kept = tuple((key, attributes[key]) for key in LOGICAL_ATTRIBUTES if key in attributes)

    def ignored(reason: str) -> tuple[None, IgnoredLogicalType]:
        return None, IgnoredLogicalType(name=str(name), reason=reason, attributes=kept)

    if not isinstance(name, str):
        return ignored("logicalType is not a string")
    allowed = UNDERLYING.get(name)
    if allowed is None:
        return ignored(f"unknown logical type {name!r}")
    shape = f"fixed:{size}" if underlying == "fixed" else underlying
    if underlying not in allowed and shape not in allowed:
        return ignored(f"logical type {name} cannot annotate {underlying}"
                       + (f" of size {size}" if underlying == "fixed" else ""))
    if name != "decimal":
        return LogicalType(name=name), None
    precision = attributes.get("precision")
    scale = attributes.get("scale", 0)
    if not _is_count(precision) or precision <= 0:
        return ignored("decimal precision must be a positive integer")
    if not _is_count(scale) or scale < 0:
        return ignored("decimal scale must be a non-negative integer")
    if scale > precision:
        return ignored(f"decimal scale {scale} exceeds its precision {precision}")
    if underlying == "fixed" and size is not None and precision > max_decimal_precision(size):
        return ignored(f"decimal precision {precision} does not fit a fixed of {size} bytes "
                       f"(at most {max_decimal_precision(size)} digits)")
    return LogicalType(name="decimal", precision=precision, scale=scale), None
