"""Immutable Avro schema objects: the parsed, validated form every other module works on.

Named types (record, enum, fixed) compare by identity, since a recursive record contains itself;
compare schemas structurally with `canonical_form` or `to_json`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

PRIMITIVE_TYPES = ("null", "boolean", "int", "long", "float", "double", "bytes", "string")


class _NoDefault:
    """The absence of a field default (None would mean the JSON default null)."""

    _instance: _NoDefault | None = None

    def __new__(cls) -> _NoDefault:
        if cls._instance is None:
            cls._instance = super().__new__(cls)
        return cls._instance

    def __repr__(self) -> str:
        return "NO_DEFAULT"

    def __reduce__(self) -> str:
        return "NO_DEFAULT"


NO_DEFAULT: Any = _NoDefault()


@dataclass(frozen=True)
class LogicalType:
    """A logical type the specification defines, validated against its underlying type."""

    name: str
    precision: int | None = None
    scale: int | None = None


@dataclass(frozen=True)
class IgnoredLogicalType:
    """A declared logical type the specification says to ignore, and why (Logical Types)."""

    name: str
    reason: str
    attributes: tuple[tuple[str, Any], ...] = ()


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class Schema:
    """Any Avro schema; `kind` names its type (a primitive, record, enum, fixed, array, ...)."""

    logical: LogicalType | None = None
    ignored_logical: IgnoredLogicalType | None = None
    properties: tuple[tuple[str, Any], ...] = ()  # other attributes, kept as metadata

    kind = "schema"

    def __repr__(self) -> str:
        return f"{type(self).__name__}({self.describe()})"

    def describe(self) -> str:
        """A short human description: the type name, with the full name of a named type."""
        suffix = f" ({self.logical.name})" if self.logical else ""
        return self.kind + suffix


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class Primitive(Schema):
    kind: str  # one of PRIMITIVE_TYPES


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class NamedSchema(Schema):
    """A record, enum or fixed: `name` is the full name, `aliases` are full names too."""

    name: str
    aliases: tuple[str, ...] = ()
    doc: str | None = None

    @property
    def namespace(self) -> str:
        return self.name.rpartition(".")[0]

    @property
    def simple_name(self) -> str:
        return self.name.rpartition(".")[2]

    def describe(self) -> str:
        return f"{self.kind} {self.name}"


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class Fixed(NamedSchema):
    size: int
    kind = "fixed"


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class Enum(NamedSchema):
    symbols: tuple[str, ...]
    default: str | None = None  # the enum default of Schema Resolution, not a field default
    kind = "enum"


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class Field:
    """One field of a record; `default` is NO_DEFAULT when the field declares none."""

    name: str
    type: Schema
    default: Any = NO_DEFAULT
    aliases: tuple[str, ...] = ()
    order: str = "ascending"
    doc: str | None = None
    properties: tuple[tuple[str, Any], ...] = ()

    @property
    def has_default(self) -> bool:
        return self.default is not NO_DEFAULT

    def __repr__(self) -> str:
        return f"Field({self.name}: {self.type.describe()})"


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class Record(NamedSchema):
    # Set once while parsing (a record may contain itself), never changed afterwards.
    fields: tuple[Field, ...] = ()
    is_error: bool = False
    kind = "record"

    def field_named(self, name: str) -> Field | None:
        return self.fields_by_name().get(name)

    def fields_by_name(self) -> dict[str, Field]:
        """Fields keyed by name (built once; do not modify the returned dict)."""
        cached = self.__dict__.get("_by_name")
        if cached is None or len(cached) != len(self.fields):
            cached = {f.name: f for f in self.fields}
            object.__setattr__(self, "_by_name", cached)
        return cached


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class Array(Schema):
    items: Schema
    kind = "array"

    def describe(self) -> str:
        return _describe_nested(self)


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class Map(Schema):
    values: Schema
    kind = "map"

    def describe(self) -> str:
        return _describe_nested(self)


@dataclass(frozen=True, eq=False, repr=False, kw_only=True)
class Union(Schema):
    branches: tuple[Schema, ...]
    kind = "union"

    def describe(self) -> str:
        return "union [" + ", ".join(b.name if isinstance(b, NamedSchema) else
                                     _describe_nested(b, levels=1) for b in self.branches) + "]"


def _describe_nested(schema: Schema, levels: int = 3) -> str:
    """"array of map of int": a few levels of arrays and maps, then an ellipsis (no recursion)."""
    words: list[str] = []
    while isinstance(schema, (Array, Map)) and len(words) < levels:
        words.append("array of" if isinstance(schema, Array) else "map of")
        schema = schema.items if isinstance(schema, Array) else schema.values
    if isinstance(schema, (Array, Map, Union)):
        tail = f"{schema.kind} of ..." if not isinstance(schema, Union) else "union [...]"
    else:
        tail = schema.describe()
    return " ".join([*words, tail])


def make_field(name: str, type: Schema, default: Any, aliases: tuple[str, ...], order: str,
               doc: str | None, properties: tuple[tuple[str, Any], ...]) -> Field:
    """A Field built without the frozen-dataclass __init__ (the parser makes many of them)."""
    made = object.__new__(Field)
    made.__dict__.update(name=name, type=type, default=default, aliases=aliases, order=order,
                         doc=doc, properties=properties)
    return made


def branch_label(schema: Schema) -> str:
    """How a union branch is named in messages and witnesses: a full name or a type name."""
    return schema.name if isinstance(schema, NamedSchema) else schema.kind

