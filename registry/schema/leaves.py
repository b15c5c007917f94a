"""The leaf fields of a record schema: what feature definitions describe, one per input value."""

from __future__ import annotations

from dataclasses import dataclass

from registry.schema.model import Primitive, Record, Schema, Union


@dataclass(frozen=True)
class LeafField:
    """One leaf: dotted path from the top record (`location.district`), its non-null type."""

    path: str
    schema: Schema
    nullable: bool
    aliases: tuple[str, ...] = ()


def _without_null(schema: Schema) -> tuple[Schema, bool]:
    """The type a value has when present, and whether it may be null."""
    if isinstance(schema, Primitive) and schema.kind == "null":
        return schema, True
    if not isinstance(schema, Union):
        return schema, False
    others = tuple(b for b in schema.branches
                   if not (isinstance(b, Primitive) and b.kind == "null"))
    nullable = len(others) != len(schema.branches)
    if len(others) == 1:
        return others[0], nullable
    if not nullable:
        return schema, False
    return Union(branches=others), True


def leaf_fields(schema: Schema) -> tuple[LeafField, ...]:
    """Every leaf field, depth-first in field order; nested records, nullable or not, are opened.

    A record met again inside itself (a recursive type) is a leaf. A top-level schema that is not
    a record is one leaf with the empty path.
    """
    top, top_nullable = _without_null(schema)
    if not isinstance(top, Record):
        return (LeafField(path="", schema=top, nullable=top_nullable),)
    leaves: list[LeafField] = []
    # Frames: [record, next field index, path prefix, nullable so far]; `open_records` holds the
    # records on the way down, so a recursive record stops the descent.
    stack: list[list] = [[top, 0, "", top_nullable]]
    open_records = {id(top)}
    while stack:
        frame = stack[-1]
        record, index, prefix, inherited = frame
        if index >= len(record.fields):
            stack.pop()
            open_records.discard(id(record))
            continue
        frame[1] = index + 1
        field = record.fields[index]
        path = f"{prefix}{field.name}"
        value_type, nullable = _without_null(field.type)
        if isinstance(value_type, Record) and id(value_type) not in open_records:
            open_records.add(id(value_type))
            stack.append([value_type, 0, path + ".", inherited or nullable])
        else:
            leaves.append(LeafField(path=path, schema=value_type, nullable=inherited or nullable,
                                    aliases=field.aliases))
    return tuple(leaves)
