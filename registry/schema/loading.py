"""Schemas from JSON text: decode (naming line and column of bad JSON), then parse."""

from __future__ import annotations

from registry.schema.errors import SchemaError
from registry.schema.jsontext import decode
from registry.schema.model import Schema
from registry.schema.names import Names
from registry.schema.parser import parse


def load(text: str, *, source: str = "", names: Names | None = None) -> Schema:
    """Parse the JSON text of a schema; `source` (a file name, say) is named in errors."""
    obj = decode(text, source)
    try:
        return parse(obj, names=names)
    except SchemaError as error:
        if source and not error.source:
            raise error.with_source(source) from None
        raise
