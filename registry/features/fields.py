"""The leaf fields of an input schema, seen the way feature definitions need them.

Feature rules ask of each leaf: its dotted path, its value type once null is taken out of a
union, whether it may be null, its enum symbols and its aliases (registry.schema.leaf_fields).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

NUMERIC_TYPES = frozenset({"int", "long", "float", "double"})
# Avro specification, Logical Types: these annotate int/long values that are instants or
# durations on a calendar, measured in the unit the logical type itself names.
TEMPORAL_LOGICAL_TYPES = frozenset({
    "date", "time-millis", "time-micros", "timestamp-millis", "timestamp-micros",
    "timestamp-nanos", "local-timestamp-millis", "local-timestamp-micros",
    "local-timestamp-nanos"})
# Avro specification, Primitive Types: the ranges the integer types can hold.
INTEGER_LIMITS = {"int": (-(2**31), 2**31 - 1), "long": (-(2**63), 2**63 - 1)}
FLOAT_LIMIT = 3.4028234663852886e38  # largest finite IEEE 754 binary32 value


@dataclass(frozen=True)
class SchemaField:
    """One leaf of a record schema, addressed by its dotted path."""

    path: str
    type: str  # avro type of the value, null taken out: "double", "enum", "array", "union" ...
    nullable: bool
    symbols: tuple[str, ...] = ()  # enum symbols
    aliases: tuple[str, ...] = ()  # the field's own aliases (bare names)
    logical_type: str | None = None
    item_type: str | None = None  # element type of an array or value type of a map

    @property
    def is_numeric(self) -> bool:
        """A number that carries a unit: a numeric type, or an array or map of them."""
        if self.logical_type in TEMPORAL_LOGICAL_TYPES:
            return False
        if self.logical_type == "decimal":
            return True
        value_type = self.item_type if self.type in ("array", "map") else self.type
        return value_type in NUMERIC_TYPES

    @property
    def numeric_type(self) -> str | None:
        value_type = self.item_type if self.type in ("array", "map") else self.type
        return value_type if value_type in NUMERIC_TYPES else None

    @property
    def name(self) -> str:
        return self.path.rsplit(".", 1)[-1]

    @property
    def parent(self) -> str:
        return self.path.rsplit(".", 1)[0] if "." in self.path else ""


def schema_fields(schema: Any) -> tuple[SchemaField, ...]:
    """Leaf fields of an input schema (a registry.schema Schema, or Avro JSON to parse)."""
    from registry.schema import Schema, leaf_fields, parse

    if not isinstance(schema, Schema):
        schema = parse(schema)
    return tuple(_as_field(leaf) for leaf in leaf_fields(schema))


def _as_field(leaf: Any) -> SchemaField:
    from registry.schema import Array, Enum, Map, Union

    value = leaf.schema
    item_type = None
    if isinstance(value, (Array, Map)):
        inner = value.items if isinstance(value, Array) else value.values
        if isinstance(inner, Union):  # an array of optional numbers still carries a unit
            kinds = [branch.kind for branch in inner.branches if branch.kind != "null"]
            item_type = kinds[0] if len(kinds) == 1 else "union"
        else:
            item_type = inner.kind
    logical = value.logical.name if value.logical is not None else None
    return SchemaField(
        path=leaf.path,
        type=value.kind,
        nullable=leaf.nullable,
        symbols=value.symbols if isinstance(value, Enum) else (),
        aliases=tuple(alias.rpartition(".")[2] for alias in leaf.aliases),
        logical_type=logical,
        item_type=item_type,
    )
