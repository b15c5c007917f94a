"""The value types a dataset column may hold, read from an Avro record schema.

Every Avro type maps to one in-memory Arrow type, so the three file formats meet in one shape:
int and long as int64, float and double as float64, enum symbols as strings, fixed as binary.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

import pyarrow as pa
from fastavro.schema import expand_schema

from registry.errors import Unprocessable
from registry.nesting import nesting_depth

NUMERIC = frozenset({"int", "long", "float", "double"})
PRIMITIVES = frozenset({"null", "boolean", "int", "long", "float", "double", "bytes", "string"})


@dataclass(frozen=True)
class ValueType:
    """One Avro type, reduced to what reading, hashing and profiling need."""

    avro: str  # a primitive name, or enum, fixed, record, array, map, union
    nullable: bool = False
    is_union: bool = False  # written as a union in the schema (["null", T] or [T, "null"])
    symbols: tuple[str, ...] = ()  # enum
    fields: tuple[tuple[str, ValueType], ...] = ()  # record
    items: ValueType | None = None  # array items, map values
    default: Any = None
    has_default: bool = False
    branches: tuple[ValueType, ...] = ()  # a union of several types: its non-null branches
    name: str = ""  # the full name of a named type (enum, fixed, record)
    logical: str = ""  # the logical type of a primitive, if any (date, timestamp-millis ...)

    @property
    def branch_name(self) -> str:
        """How a union branch of this type is counted: its name if named, else its type."""
        return self.name or self.avro

    @property
    def branch_names(self) -> tuple[str, ...]:
        """Names of a several-type union's branches by type code: null (code 0) first."""
        return ("null",) + tuple(b.branch_name for b in self.branches)

    def arrow_type(self) -> pa.DataType:
        if self.avro == "boolean":
            return pa.bool_()
        if self.avro in ("int", "long"):
            return pa.int64()
        if self.avro in ("float", "double"):
            return pa.float64()
        if self.avro in ("string", "enum"):
            return pa.string()
        if self.avro in ("bytes", "fixed"):
            return pa.binary()
        if self.avro == "null":
            return pa.null()
        if self.avro == "record":
            return pa.struct([pa.field(n, t.arrow_type(), nullable=True) for n, t in self.fields])
        if self.avro in ("array", "map"):
            assert self.items is not None  # arrays and maps always have an item type
            if self.avro == "array":
                return pa.list_(self.items.arrow_type())
            return pa.map_(pa.string(), self.items.arrow_type())
        if self.avro == "union":  # type code 0 holds the nulls, 1.. the branches in order
            children = [pa.field("null", pa.null())] + [
                pa.field(f"branch_{i}", b.arrow_type()) for i, b in enumerate(self.branches, 1)]
            return pa.dense_union(children, type_codes=list(range(len(children))))
        raise AssertionError(self.avro)


@dataclass(frozen=True)
class RecordType:
    """The top-level record: its fields in schema order, and the schema they came from."""

    name: str
    fields: tuple[tuple[str, ValueType], ...]
    schema_json: Mapping[str, Any]

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(name for name, _ in self.fields)

    def field(self, name: str) -> ValueType:
        return dict(self.fields)[name]

    def arrow_schema(self) -> pa.Schema:
        return pa.schema([pa.field(n, t.arrow_type(), nullable=True) for n, t in self.fields])


MAX_NESTING = 200  # JSON levels; far deeper than any real record, well inside Python's recursion


def record_type(schema_json: Mapping[str, Any]) -> RecordType:
    """Read the dataset's record type from its Avro schema (named types expanded in place)."""
    depth = nesting_depth(schema_json)
    if depth > MAX_NESTING:
        raise Unprocessable(f"the schema nests {depth} levels deep; a dataset schema may nest "
                            f"at most {MAX_NESTING}", place="/")
    try:
        expanded = expand_schema(dict(schema_json))
    except Exception as error:  # fastavro raises several kinds for a bad schema
        raise Unprocessable(f"not a valid Avro schema: {error}", place="/") from error
    if not isinstance(expanded, dict) or expanded.get("type") != "record":
        raise Unprocessable("a dataset schema must be an Avro record", place="/type")
    fields = tuple(
        (field["name"], _field_type(field, f"/fields/{field['name']}", top_level=True))
        for field in expanded["fields"]
    )
    return RecordType(name=expanded.get("name", ""), fields=fields, schema_json=dict(schema_json))


def _full_name(named: Mapping[str, Any]) -> str:
    name = named.get("name", "")
    namespace = named.get("namespace")
    return f"{namespace}.{name}" if namespace and "." not in name else name


def _field_type(field: Mapping[str, Any], pointer: str, top_level: bool = False) -> ValueType:
    value_type = value_type_of(field["type"], pointer + "/type", top_level)
    if "default" in field:
        return replace(value_type, default=field["default"], has_default=True)
    return value_type


def value_type_of(avro: Any, pointer: str, top_level: bool = False) -> ValueType:
    if isinstance(avro, list):
        branches = [b for b in avro if b != "null"]
        if not branches:
            return ValueType(avro="null", nullable=True, is_union=True)
        if len(branches) == 1:
            inner = value_type_of(branches[0], pointer)
            return replace(inner, nullable="null" in avro, is_union=True)
        if not top_level or not branches:
            raise Unprocessable("a union of several types is supported only as a field of the "
                                "dataset's record", place=pointer)
        return ValueType(avro="union", nullable="null" in avro, is_union=True, branches=tuple(
            value_type_of(b, f"{pointer}/{i}") for i, b in enumerate(avro) if b != "null"))
    if isinstance(avro, str):
        if avro not in PRIMITIVES:
            raise Unprocessable(f"unknown type {avro!r}", place=pointer)
        return ValueType(avro=avro, nullable=avro == "null")
    if isinstance(avro, dict):
        # Avro specification, Logical Types: a logical type is read as its underlying type.
        kind = avro.get("type")
        if kind in PRIMITIVES:
            return replace(value_type_of(kind, pointer), logical=str(avro.get("logicalType", "")))
        if kind == "enum":
            return ValueType(avro="enum", symbols=tuple(avro["symbols"]), name=_full_name(avro))
        if kind == "fixed":
            return ValueType(avro="fixed", name=_full_name(avro))
        if kind == "record":
            return ValueType(avro="record", name=_full_name(avro), fields=tuple(
                (f["name"], _field_type(f, f"{pointer}/fields/{f['name']}"))
                for f in avro["fields"]))
        if kind == "array":
            return ValueType(avro="array", items=value_type_of(avro["items"], pointer + "/items"))
        if kind == "map":
            return ValueType(avro="map", items=value_type_of(avro["values"], pointer + "/values"))
    raise Unprocessable(f"unsupported type {avro!r}", place=pointer)


def schema_from_arrow(schema: pa.Schema, name: str = "Record") -> dict[str, Any]:
    """An Avro record schema for a Parquet file that came without one."""
    counter = iter(range(1, 10**6))

    def convert(arrow: pa.DataType) -> Any:
        if pa.types.is_boolean(arrow):
            return "boolean"
        if pa.types.is_integer(arrow):
            return "int" if arrow.bit_width <= 32 and arrow != pa.uint32() else "long"
        if pa.types.is_floating(arrow):
            return "float" if arrow.bit_width <= 32 else "double"
        if pa.types.is_string(arrow) or pa.types.is_large_string(arrow):
            return "string"
        if pa.types.is_binary(arrow) or pa.types.is_large_binary(arrow) or \
                pa.types.is_fixed_size_binary(arrow):
            return "bytes"
        if pa.types.is_dictionary(arrow):
            return convert(arrow.value_type)
        if pa.types.is_struct(arrow):
            return {"type": "record", "name": f"{name}{next(counter)}",
                    "fields": [{"name": f.name, "type": nullable(f)} for f in arrow]}
        if pa.types.is_map(arrow):
            return {"type": "map", "values": convert(arrow.item_type)}
        if pa.types.is_list(arrow) or pa.types.is_large_list(arrow):
            return {"type": "array", "items": convert(arrow.value_type)}
        raise Unprocessable(f"Parquet type {arrow} has no Avro counterpart here")

    def nullable(field: pa.Field) -> Any:
        return ["null", convert(field.type)] if field.nullable else convert(field.type)

    return {"type": "record", "name": name, "fields": [
        {"name": f.name, "type": nullable(f)} for f in schema]}
