"""Full names, namespaces and the registry of named types that several schemas may share.

Avro specification, Names: a full name is a dotted namespace plus a name; an unqualified
reference is taken in the namespace of the enclosing definition.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from typing import TypeGuard

from registry.schema.errors import SchemaError
from registry.schema.model import PRIMITIVE_TYPES, NamedSchema

NAME_PATTERN = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")


def is_valid_name(text: object) -> TypeGuard[str]:
    return isinstance(text, str) and NAME_PATTERN.fullmatch(text) is not None


def full_name(name: str, namespace: str | None) -> str:
    """The full name of `name` declared or used in `namespace` (Avro specification, Names)."""
    if "." in name or not namespace:
        return name
    return f"{namespace}.{name}"


def check_full_name(name: object, place: str, what: str = "name") -> str:
    """Validate a possibly dotted name; return it unchanged."""
    if not isinstance(name, str) or not name:
        raise SchemaError(f"{what} must be a non-empty string", place=place)
    parts = name.split(".")
    if not all(NAME_PATTERN.fullmatch(part) for part in parts):
        raise SchemaError(f"{what} {name!r} is not a valid Avro name "
                          "(each part must match [A-Za-z_][A-Za-z0-9_]*)", place=place)
    return name


def check_namespace(namespace: object, place: str) -> str:
    """Validate a namespace attribute; the empty string is the null namespace."""
    if namespace is None:
        return ""
    if not isinstance(namespace, str):
        raise SchemaError("namespace must be a string or null", place=place)
    if namespace and not all(NAME_PATTERN.fullmatch(part) for part in namespace.split(".")):
        raise SchemaError(f"namespace {namespace!r} is not a valid dotted Avro name", place=place)
    return namespace


class Names:
    """A mutable registry of named types, shared by schemas parsed into it.

    A PFA document, say, declares a record in its input schema and references it by name in its
    output, cells and functions: parse each part with the same `Names`.
    """

    def __init__(self) -> None:
        self._types: dict[str, NamedSchema] = {}

    def register(self, schema: NamedSchema, place: str) -> None:
        """Add a newly declared named type; a full name may be declared only once."""
        if schema.simple_name in PRIMITIVE_TYPES:
            raise SchemaError(f"{schema.simple_name!r} is a primitive type name and cannot name a "
                              f"{schema.kind}", place=place)
        if schema.name in self._types:
            raise SchemaError(f"{schema.name!r} is already defined", place=place)
        self._types[schema.name] = schema

    def lookup(self, name: str, namespace: str | None) -> NamedSchema | None:
        """The named type a reference means, or None when no such type is defined (yet)."""
        return self._types.get(full_name(name, namespace))

    def get(self, full: str) -> NamedSchema | None:
        return self._types.get(full)

    def __getitem__(self, full: str) -> NamedSchema:
        return self._types[full]

    def __contains__(self, full: object) -> bool:
        return full in self._types

    def __iter__(self) -> Iterator[str]:
        return iter(self._types)

    def __len__(self) -> int:
        return len(self._types)

    def copy(self) -> Names:
        """An independent registry with the same declarations (to try a parse, then discard it)."""
        twin = Names()
        twin._types = dict(self._types)
        return twin

    def __repr__(self) -> str:
        return f"Names({sorted(self._types)})"
