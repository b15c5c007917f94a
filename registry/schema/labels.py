"""A one-line label of an Avro type as declared in JSON (`array of double`, `enum Material`,
`null | int`, `long (timestamp-millis)`), for pages and reports. It reads any JSON without
parsing the schema, so a label can be shown for what does not parse."""

from __future__ import annotations

import json
from typing import Any

NAMED_KINDS = ("record", "error", "enum", "fixed")  # Avro specification, Names


def type_label(schema: Any) -> str:
    if isinstance(schema, str):
        return schema
    if isinstance(schema, list):  # a union: its branches in order
        return " | ".join(type_label(branch) for branch in schema)
    if isinstance(schema, dict):
        kind = schema.get("type")
        logical = schema.get("logicalType")
        if kind in NAMED_KINDS:
            label = f"{kind} {schema.get('name', '?')}"
        elif kind == "array":
            label = f"array of {type_label(schema.get('items'))}"
        elif kind == "map":
            label = f"map of {type_label(schema.get('values'))}"
        else:
            label = type_label(kind) if kind is not None else "?"
        return f"{label} ({logical})" if isinstance(logical, str) else label
    return json.dumps(schema)[:80]
