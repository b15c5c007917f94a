"""The value a `key=value` folder gives its records, typed as the schema's field says."""

from __future__ import annotations

import re
from typing import Any

import numpy as np

from registry.datasets.errors import ValueNotParsing
from registry.datasets.types import ValueType
from registry.errors import UserError

# Hive writes a null partition value as this folder name; pyarrow's hive partitioning reads it
# back as null.
NULL_TEXT = "__HIVE_DEFAULT_PARTITION__"
INT_RANGE = (-(2**31), 2**31 - 1)


_NOT_PARSING, _UNSUPPORTED = object(), object()
_INTEGER = re.compile(r"[+-]?[0-9]+")
_DECIMAL = re.compile(r"[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?|[+-]?(inf|infinity)|nan",
                      re.IGNORECASE)


def _parse(text: str, kind: str, symbols: tuple[str, ...]) -> Any:
    if kind == "string":
        return text
    if kind == "enum":
        return text if text in symbols else _NOT_PARSING
    if kind in ("int", "long"):
        if not _INTEGER.fullmatch(text):
            return _NOT_PARSING
        value = int(text)
        if kind == "int" and not INT_RANGE[0] <= value <= INT_RANGE[1]:
            return _NOT_PARSING
        return value
    if kind in ("float", "double"):
        if not _DECIMAL.fullmatch(text):
            return _NOT_PARSING
        return float(np.float32(text)) if kind == "float" else float(text)  # float is binary32
    if kind == "boolean":
        return {"true": True, "false": False}.get(text.lower(), _NOT_PARSING)
    return _UNSUPPORTED


def partition_value(text: str, value_type: ValueType, key: str, folder: str) -> Any:
    """The typed value of one partition folder, or an error naming the folder."""
    if text == NULL_TEXT:
        if value_type.nullable:
            return None
        raise ValueNotParsing(f"the field {key!r} is not nullable, but the folder gives it no "
                              "value", place=folder)
    kind = value_type.avro
    value = _parse(text, kind, value_type.symbols)
    if value is not _UNSUPPORTED:
        if value is _NOT_PARSING:
            raise ValueNotParsing(f"{text!r} is not a valid {kind} for the field {key!r}",
                                  place=folder)
        return value
    raise UserError(f"the field {key!r} is a {kind}; a partition folder can give only a string, "
                    "enum, number or boolean", place=folder)
