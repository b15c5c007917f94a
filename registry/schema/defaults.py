"""Does a JSON default value fit its schema? (Avro specification, Complex Types: field defaults.)

Default values for bytes and fixed are strings of code points 0-255; a union default may match
any branch (Avro 1.12; 1.11 asked for the first branch, which still passes).
"""

from __future__ import annotations

from typing import Any

from registry.schema.model import Array, Enum, Fixed, Map, Primitive, Record, Schema, Union

INT_RANGE = (-(2 ** 31), 2 ** 31 - 1)
LONG_RANGE = (-(2 ** 63), 2 ** 63 - 1)


def _is_integer(value: Any) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _is_byte_string(value: Any) -> bool:
    return isinstance(value, str) and all(ord(ch) < 256 for ch in value)


def _primitive_problem(kind: str, value: Any) -> str | None:
    if kind == "null":
        return None if value is None else f"{value!r} is not null"
    if kind == "boolean":
        return None if isinstance(value, bool) else f"{value!r} is not a boolean"
    if kind in ("int", "long"):
        low, high = INT_RANGE if kind == "int" else LONG_RANGE
        if not _is_integer(value):
            return f"{value!r} is not an integer"
        return None if low <= value <= high else f"{value} is out of range for {kind}"
    if kind in ("float", "double"):
        ok = isinstance(value, (int, float)) and not isinstance(value, bool)
        return None if ok else f"{value!r} is not a number"
    if kind == "string":
        return None if isinstance(value, str) else f"{value!r} is not a string"
    if kind == "bytes":
        return None if _is_byte_string(value) else (
            f"{value!r} is not a string of code points 0-255")
    return f"unknown type {kind}"


def _pointer_token(key: str) -> str:
    """A map key as one JSON pointer token (RFC 6901: ~ and / are escaped)."""
    return key.replace("~", "~0").replace("/", "~1")


def check_default(schema: Schema, value: Any) -> tuple[str, str] | None:
    """None when `value` fits `schema`, else (JSON pointer into the value, message)."""
    stack: list[tuple[Schema, Any, str]] = [(schema, value, "")]
    while stack:
        current, datum, at = stack.pop()
        if isinstance(current, (Array, Map, Record)):
            message = _open_container(current, datum, at, stack)
        else:
            message = _leaf_problem(current, datum)
        if message is not None:
            return at, message
    return None


def _leaf_problem(current: Schema, datum: Any) -> str | None:
    """What is wrong with `datum` as a value of a schema that holds no fields or items."""
    if isinstance(current, Primitive):
        return _primitive_problem(current.kind, datum)
    if isinstance(current, Enum):
        if datum not in current.symbols:
            return f"{datum!r} is not a symbol of enum {current.name}"
    elif isinstance(current, Fixed):
        if not _is_byte_string(datum) or len(datum) != current.size:
            return f"{datum!r} is not a string of {current.size} code points 0-255"
    elif isinstance(current, Union):
        if not any(check_default(branch, datum) is None for branch in current.branches):
            return f"{datum!r} fits no branch of the union"
    return None


def _open_container(current: Array | Map | Record, datum: Any, at: str,
                    stack: list[tuple[Schema, Any, str]]) -> str | None:
    """What is wrong with `datum` as an array, map or record; its parts go on the stack."""
    if isinstance(current, Array):
        if not isinstance(datum, list):
            return f"{datum!r} is not a list"
        stack.extend((current.items, item, f"{at}/{i}") for i, item in enumerate(datum))
    elif isinstance(current, Map):
        if not isinstance(datum, dict):
            return f"{datum!r} is not an object"
        stack.extend((current.values, item, f"{at}/{_pointer_token(key)}")
                     for key, item in datum.items())
    else:
        if not isinstance(datum, dict):
            return f"{datum!r} is not an object for record {current.name}"
        for field in current.fields:
            if field.name in datum:
                stack.append((field.type, datum[field.name], f"{at}/{field.name}"))
            elif not field.has_default:
                return f"field {field.name!r} of record {current.name} is missing"
    return None
