"""Does a JSON value fit its schema? Field defaults (Avro specification, Complex Types: field
defaults) and values in Avro's JSON encoding (Avro specification, Encodings: JSON Encoding), as
a PFA cell's `init` is written.

Values for bytes and fixed are strings of code points 0-255 in both. A union default may match
any branch (Avro 1.12; 1.11 asked for the first branch, which still passes); in the JSON
encoding a union value is null or an object of one member naming its branch, `{"double": 1.5}`.
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
    """None when the default `value` fits `schema`, else (JSON pointer into the value, message)."""
    return _check(schema, value, tagged_unions=False)


def check_json_encoded(schema: Schema, value: Any) -> tuple[str, str] | None:
    """None when `value` is `schema`'s JSON encoding of a datum, else (pointer, message)."""
    return _check(schema, value, tagged_unions=True)


def _branch_name(branch: Schema) -> str:
    if isinstance(branch, Primitive):
        return branch.kind
    if isinstance(branch, (Record, Enum, Fixed)):
        return branch.name
    return "array" if isinstance(branch, Array) else "map"


def _check(schema: Schema, value: Any, *, tagged_unions: bool) -> tuple[str, str] | None:
    stack: list[tuple[Schema, Any, str]] = [(schema, value, "")]
    while stack:
        current, datum, at = stack.pop()
        message = _problem_here(current, datum, at, stack, tagged_unions=tagged_unions)
        if message is not None:
            return at, message
    return None


def _problem_here(current: Schema, datum: Any, at: str, stack: list[tuple[Schema, Any, str]],
                  *, tagged_unions: bool) -> str | None:
    """What is wrong with `datum` itself, if anything; its parts go on `stack` to check later."""
    if isinstance(current, (Primitive, Enum, Fixed)):
        return _leaf_problem(current, datum)
    if isinstance(current, (Array, Map, Record)):
        return _container_problem(current, datum, at, stack)
    if isinstance(current, Union):
        return _union_problem(current, datum, at, stack, tagged_unions=tagged_unions)
    return None


def _leaf_problem(current: Primitive | Enum | Fixed, datum: Any) -> str | None:
    if isinstance(current, Primitive):
        return _primitive_problem(current.kind, datum)
    if isinstance(current, Enum):
        if datum not in current.symbols:
            return f"{datum!r} is not a symbol of enum {current.name}"
        return None
    if not _is_byte_string(datum) or len(datum) != current.size:
        return f"{datum!r} is not a string of {current.size} code points 0-255"
    return None


def _container_problem(current: Array | Map | Record, datum: Any, at: str,
                       stack: list[tuple[Schema, Any, str]]) -> str | None:
    if isinstance(current, Array):
        if not isinstance(datum, list):
            return f"{datum!r} is not a list"
        stack.extend((current.items, item, f"{at}/{i}") for i, item in enumerate(datum))
        return None
    if isinstance(current, Map):
        if not isinstance(datum, dict):
            return f"{datum!r} is not an object"
        stack.extend((current.values, item, f"{at}/{_pointer_token(key)}")
                     for key, item in datum.items())
        return None
    if not isinstance(datum, dict):
        return f"{datum!r} is not an object for record {current.name}"
    for field in current.fields:
        if field.name in datum:
            stack.append((field.type, datum[field.name], f"{at}/{field.name}"))
        elif not field.has_default:
            return f"field {field.name!r} of record {current.name} is missing"
    return None


def _union_problem(current: Union, datum: Any, at: str, stack: list[tuple[Schema, Any, str]],
                   *, tagged_unions: bool) -> str | None:
    if tagged_unions and datum is not None:
        names = {_branch_name(branch): branch for branch in current.branches}
        if not (isinstance(datum, dict) and len(datum) == 1 and next(iter(datum)) in names):
            return (f"a union value is null or an object naming its branch, one of "
                    f"{', '.join(names)}")
        (name, inner), = datum.items()
        stack.append((names[name], inner, f"{at}/{_pointer_token(name)}"))
        return None
    if not any(_check(branch, datum, tagged_unions=tagged_unions) is None
               for branch in current.branches):
        return f"{datum!r} fits no branch of the union"
    return None
