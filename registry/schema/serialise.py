"""Schemas back to JSON: a normal form `parse` accepts again, and the Parsing Canonical Form.

Both walks use explicit stacks, so deep nesting is fine. A named type is written in full at its
first occurrence (depth-first, in document order) and by its full name afterwards.
"""

from __future__ import annotations

import json
from typing import Any

from registry.schema.model import (
    Array,
    Enum,
    Field,
    Fixed,
    Map,
    NamedSchema,
    Primitive,
    Record,
    Schema,
    Union,
)


def _logical_attributes(schema: Schema) -> dict[str, Any]:
    if schema.logical is not None:
        attrs: dict[str, Any] = {"logicalType": schema.logical.name}
        if schema.logical.precision is not None:
            attrs["precision"] = schema.logical.precision
            attrs["scale"] = schema.logical.scale
        return attrs
    if schema.ignored_logical is not None:
        return dict(schema.ignored_logical.attributes)
    return {}


def _naming(schema: NamedSchema, enclosing: str) -> dict[str, Any]:
    out: dict[str, Any] = {"type": schema.kind, "name": schema.name}
    if "." not in schema.name and enclosing:
        out["namespace"] = ""  # the null namespace, inside a namespaced definition
    if schema.aliases:
        out["aliases"] = list(schema.aliases)
    if schema.doc is not None:
        out["doc"] = schema.doc
    return out


def _field_json(field: Field) -> dict[str, Any]:
    """A record field's attributes; its type (None here) is filled in by the walk."""
    out: dict[str, Any] = {"name": field.name, "type": None}
    if field.has_default:
        out["default"] = field.default
    if field.aliases:
        out["aliases"] = list(field.aliases)
    if field.order != "ascending":
        out["order"] = field.order
    if field.doc is not None:
        out["doc"] = field.doc
    out.update(field.properties)
    return out


def _named_json(current: NamedSchema, enclosing: str,
                stack: list[tuple[Schema, str, Any, Any]]) -> dict[str, Any]:
    """A record, enum or fixed written in full; a record's field types go on the stack."""
    out = _naming(current, enclosing)
    if isinstance(current, Record):
        if current.is_error:
            out["type"] = "error"
        fields = [_field_json(field) for field in current.fields]
        out["fields"] = fields
        for field, field_out in reversed(list(zip(current.fields, fields, strict=True))):
            stack.append((field.type, current.namespace, field_out, "type"))
    elif isinstance(current, Enum):
        out["symbols"] = list(current.symbols)
        if current.default is not None:
            out["default"] = current.default
    elif isinstance(current, Fixed):
        out["size"] = current.size
    out.update(_logical_attributes(current))
    out.update(current.properties)
    return out


def to_json(schema: Schema) -> Any:
    """A normalised JSON form of `schema`: full names, all attributes, plain primitive names."""
    written: set[int] = set()
    root: list[Any] = [None]
    # Tasks: (schema, enclosing namespace, container, key)
    stack: list[tuple[Schema, str, Any, Any]] = [(schema, "", root, 0)]
    while stack:
        current, enclosing, container, key = stack.pop()
        out: Any
        if isinstance(current, NamedSchema) and id(current) in written:
            out = current.name
        elif isinstance(current, Primitive):
            extra = _logical_attributes(current)
            extra.update(current.properties)
            out = {"type": current.kind, **extra} if extra else current.kind
        elif isinstance(current, NamedSchema):
            written.add(id(current))
            out = _named_json(current, enclosing, stack)
        elif isinstance(current, Array):
            out = {"type": "array", "items": None, **_logical_attributes(current),
                   **dict(current.properties)}
            stack.append((current.items, enclosing, out, "items"))
        elif isinstance(current, Map):
            out = {"type": "map", "values": None, **_logical_attributes(current),
                   **dict(current.properties)}
            stack.append((current.values, enclosing, out, "values"))
        elif isinstance(current, Union):
            out = [None] * len(current.branches)
            for position in range(len(current.branches) - 1, -1, -1):
                stack.append((current.branches[position], enclosing, out, position))
        else:  # pragma: no cover - every Schema subclass is handled above
            raise TypeError(f"not a schema: {current!r}")
        container[key] = out
    return root[0]


def canonical_form(schema: Schema) -> str:
    """The Parsing Canonical Form (Avro specification, Parsing Canonical Form for Schemas).

    [PRIMITIVES] plain type names, [FULLNAMES], [STRIP] to name/type/fields/symbols/items/
    values/size, [ORDER] in that order, [STRINGS] and [WHITESPACE] as json.dumps compactly writes
    them, with non-ASCII characters left unescaped.
    """
    pieces: list[str] = []
    written: set[int] = set()
    stack: list[Schema | str] = [schema]

    def quoted(text: str) -> str:
        return json.dumps(text, ensure_ascii=False)

    while stack:
        current = stack.pop()
        if isinstance(current, str):
            pieces.append(current)
        elif isinstance(current, NamedSchema) and id(current) in written:
            pieces.append(quoted(current.name))
        elif isinstance(current, Primitive):
            pieces.append(f'"{current.kind}"')
        elif isinstance(current, Record):
            written.add(id(current))
            pieces.append(f'{{"name":{quoted(current.name)},"type":"record","fields":[')
            stack.append("]}")
            for position in range(len(current.fields) - 1, -1, -1):
                field = current.fields[position]
                stack.append("}")
                stack.append(field.type)
                stack.append(("," if position else "") + f'{{"name":{quoted(field.name)},"type":')
        elif isinstance(current, Enum):
            written.add(id(current))
            symbols = ",".join(quoted(symbol) for symbol in current.symbols)
            pieces.append(f'{{"name":{quoted(current.name)},"type":"enum","symbols":[{symbols}]}}')
        elif isinstance(current, Fixed):
            written.add(id(current))
            pieces.append(f'{{"name":{quoted(current.name)},"type":"fixed",'
                          f'"size":{current.size}}}')
        elif isinstance(current, Array):
            pieces.append('{"type":"array","items":')
            stack.append("}")
            stack.append(current.items)
        elif isinstance(current, Map):
            pieces.append('{"type":"map","values":')
            stack.append("}")
            stack.append(current.values)
        elif isinstance(current, Union):
            pieces.append("[")
            stack.append("]")
            for position in range(len(current.branches) - 1, -1, -1):
                stack.append(current.branches[position])
                if position:
                    stack.append(",")
        else:  # pragma: no cover
            raise TypeError(f"not a schema: {current!r}")
    return "".join(pieces)
