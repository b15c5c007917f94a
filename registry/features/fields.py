"""The leaf fields of an input schema, seen the way feature definitions need them.

Feature rules ask of each leaf: its dotted path, its value type once null is taken out of a
union, whether it may be null, its enum symbols and its aliases. This module reads that from the
schema's JSON form, so it depends only on registry.schema's `to_json`.
"""

from __future__ import annotations

from collections.abc import Mapping
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


def leaf_fields_of(schema_json: Any) -> tuple[SchemaField, ...]:
    """The leaf fields of a record schema given as Avro JSON, in declaration order.

    Nested records (also optional ones, a union of null and a record) are walked into; every
    other field is a leaf. Named types defined once are found again by name.
    """
    named: dict[str, Any] = {}
    fields: list[SchemaField] = []
    _walk_record(_resolve(schema_json, named, None), "", named, fields)
    return tuple(fields)


def _full_name(name: str, namespace: str | None) -> str:
    if "." in name or not namespace:
        return name
    return f"{namespace}.{name}"


def _resolve(schema: Any, named: dict[str, Any], namespace: str | None) -> Any:
    """Register a named type, or look a name up; return the schema it stands for."""
    if isinstance(schema, str):
        return named.get(_full_name(schema, namespace), named.get(schema, schema))
    if isinstance(schema, Mapping) and schema.get("type") in ("record", "error", "enum",
                                                              "fixed"):
        space = schema.get("namespace", namespace)
        name = schema.get("name", "")
        full = _full_name(name, space)
        named[full] = schema
        named.setdefault(name.rsplit(".", 1)[-1], schema)
        schema = dict(schema)
        schema["_namespace"] = full.rsplit(".", 1)[0] if "." in full else space
    return schema


def _walk_record(record: Any, prefix: str, named: dict[str, Any],
                 out: list[SchemaField]) -> None:
    if not isinstance(record, Mapping) or record.get("type") not in ("record", "error"):
        return
    namespace = record.get("_namespace")
    for field in record.get("fields", ()):
        path = f"{prefix}{field['name']}"
        field_type = field["type"]
        branches = field_type if isinstance(field_type, list) else [field_type]
        resolved = [_resolve(branch, named, namespace) for branch in branches]
        nullable = any(_type_name(branch) == "null" for branch in resolved)
        others = [branch for branch in resolved if _type_name(branch) != "null"]
        if len(others) == 1 and _type_name(others[0]) in ("record", "error"):
            _walk_record(others[0], f"{path}.", named, out)
            continue
        aliases = tuple(alias.rsplit(".", 1)[-1] for alias in field.get("aliases", ()))
        if len(others) != 1:
            out.append(SchemaField(path, "union" if others else "null", nullable,
                                   aliases=aliases))
            continue
        value = others[0]
        item_type = None
        if _type_name(value) == "array":
            item_type = _type_name(_resolve(value["items"], named, namespace))
        elif _type_name(value) == "map":
            item_type = _type_name(_resolve(value["values"], named, namespace))
        symbols = tuple(value.get("symbols", ())) if _type_name(value) == "enum" else ()
        logical = value.get("logicalType") if isinstance(value, Mapping) else None
        out.append(SchemaField(path, _type_name(value), nullable, symbols=symbols,
                               aliases=aliases, logical_type=logical, item_type=item_type))


def _type_name(schema: Any) -> str:
    if isinstance(schema, Mapping):
        inner = schema.get("type")
        return inner if isinstance(inner, str) else _type_name(inner)
    if isinstance(schema, list):
        return "union"
    return str(schema)


def schema_fields(schema: Any) -> tuple[SchemaField, ...]:
    """Leaf fields of a registry.schema schema (or of Avro JSON already in hand)."""
    if isinstance(schema, (Mapping, list, str)):
        return leaf_fields_of(schema)
    from registry.schema import to_json

    return leaf_fields_of(to_json(schema))
