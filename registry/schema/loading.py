"""Schemas from JSON text: decode (naming line and column of bad JSON), then parse."""

from __future__ import annotations

from registry.schema.jsontext import decode
from registry.schema.model import Schema
from registry.schema.names import Names
from registry.schema.parser import parse


def load(text: str, *, source: str = "", names: Names | None = None) -> Schema:
    """Parse the JSON text of a schema; `source` (a file name, say) prefixes error places."""
    obj = decode(text, source)
    if not source:
        return parse(obj, names=names)
    try:
        return parse(obj, names=names)
    except Exception as error:  # prefix the file name to a schema error's place
        from registry.schema.errors import SchemaError

        if isinstance(error, SchemaError):
            raise SchemaError(error.message, place=f"{source} {error.place}") from None
        raise
