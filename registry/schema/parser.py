"""Parse JSON-decoded Avro schemas into immutable Schema objects, validated as the spec asks.

Avro specification, Schema Declaration and Names. The walk uses an explicit stack, so nesting
depth is limited by memory rather than by Python's recursion limit.
"""

from __future__ import annotations

from typing import Any

from registry.schema.defaults import check_default
from registry.schema.errors import SchemaError
from registry.schema.logical import LOGICAL_ATTRIBUTES, interpret
from registry.schema.model import (
    NO_DEFAULT,
    PRIMITIVE_TYPES,
    Array,
    Enum,
    Fixed,
    Map,
    NamedSchema,
    Primitive,
    Record,
    Schema,
    Union,
    make_field,
)
from registry.schema.names import (
    Names,
    check_full_name,
    check_namespace,
    full_name,
    is_valid_name,
)

PLAIN_PRIMITIVES = {name: Primitive(kind=name) for name in PRIMITIVE_TYPES}
FIELD_ORDERS = ("ascending", "descending", "ignore")
# Caches of immutable results: names already found valid, unions of plain primitives.
_VALID_NAMES: set[str] = set()
_PLAIN_UNIONS: dict[tuple[str, ...], Union] = {}

_RECORD_KEYS = {"type", "name", "namespace", "aliases", "doc", "fields"}
_ENUM_KEYS = {"type", "name", "namespace", "aliases", "doc", "symbols", "default"}
_FIXED_KEYS = {"type", "name", "namespace", "aliases", "doc", "size"}
_FIELD_KEYS = {"name", "type", "default", "aliases", "order", "doc"}
# Each nested type's place (a JSON pointer) is longer than its parent's, so a schema nested
# 100,000 deep would hold gigabytes of places. This bound (records 2,000 deep pass) keeps a
# hostile schema to a few hundred megabytes at most.
MAX_PLACE_LENGTH = 32_768


def parse(obj: Any, *, names: Names | None = None, place: str = "",
          namespace: str | None = None) -> Schema:
    """Parse a JSON-decoded schema, registering the named types it declares into `names`.

    `place` prefixes every JSON pointer in errors (the schema's own place in a larger document);
    `namespace` is the enclosing namespace for unqualified names. On error `names` is unchanged.
    """
    registry = names if names is not None else Names()
    scratch = registry.copy()
    schema = _Parser(scratch).run(obj, place, namespace or "")
    if names is not None:
        for full in scratch:
            if full not in names:
                names.register(scratch[full], place or "/")
    return schema


def _extra_properties(obj: dict[str, Any], known: set[str]) -> tuple[tuple[str, Any], ...]:
    return tuple((key, value) for key, value in obj.items()
                 if key not in known and key not in LOGICAL_ATTRIBUTES)


class _Parser:
    """One parse: an explicit stack of tasks, and defaults to check once every type is built."""

    def __init__(self, names: Names) -> None:
        self.names = names
        self.pending_defaults: list[tuple[Schema, Any, str]] = []

    def run(self, obj: Any, place: str, namespace: str) -> Schema:
        root: list[Any] = [None]
        # Each task: (action, payload...). "parse" tasks write their result into slot[index].
        stack: list[tuple[Any, ...]] = [("parse", obj, place, namespace, root, 0)]
        while stack:
            task = stack.pop()
            action = task[0]
            if action == "parse":
                self._parse_one(task[1], task[2], task[3], task[4], task[5], stack)
            elif action == "array":
                _, holder, attrs, at, slot, index = task
                logical, ignored = interpret(attrs, "array")
                slot[index] = Array(items=holder[0], logical=logical, ignored_logical=ignored,
                                    properties=_extra_properties(attrs, {"type", "items"}))
            elif action == "map":
                _, holder, attrs, at, slot, index = task
                logical, ignored = interpret(attrs, "map")
                slot[index] = Map(values=holder[0], logical=logical, ignored_logical=ignored,
                                  properties=_extra_properties(attrs, {"type", "values"}))
            elif action == "union":
                _, holder, at, slot, index = task
                slot[index] = self._build_union(holder, at)
            elif action == "record":
                self._finish_record(*task[1:])
        for schema, value, at in self.pending_defaults:
            problem = check_default(schema, value)
            if problem is not None:
                sub_place, message = problem
                raise SchemaError(f"default does not fit the field's type: {message}",
                                  place=at + sub_place)
        return root[0]

    # -- one JSON value -------------------------------------------------------------------------

    def _parse_one(self, obj: Any, place: str, namespace: str, slot: list[Any], index: int,
                   stack: list[tuple[Any, ...]]) -> None:
        if len(place) > MAX_PLACE_LENGTH:
            raise SchemaError(f"the schema nests types too deeply (the JSON pointer to this place "
                              f"is over {MAX_PLACE_LENGTH:,} characters long); name the inner "
                              "types and refer to them instead", place=place[:120] + "...")
        if isinstance(obj, str):
            slot[index] = self._reference(obj, place, namespace)
        elif isinstance(obj, list):
            plain_union = self._plain_union(obj, place)
            if plain_union is not None:
                slot[index] = plain_union
                return
            holder: list[Any] = [None] * len(obj)
            stack.append(("union", holder, place, slot, index))
            plain = PLAIN_PRIMITIVES
            for position in range(len(obj) - 1, -1, -1):
                branch = obj[position]
                if branch.__class__ is str and branch in plain:
                    holder[position] = plain[branch]
                else:
                    stack.append(("parse", branch, f"{place}/{position}", namespace, holder,
                                  position))
        elif isinstance(obj, dict):
            self._parse_object(obj, place, namespace, slot, index, stack)
        else:
            raise SchemaError(f"a schema must be a type name, an object or a union list, "
                              f"not {type(obj).__name__} {obj!r}", place=place or "/")

    def _reference(self, name: str, place: str, namespace: str) -> Schema:
        if name in PLAIN_PRIMITIVES:
            return PLAIN_PRIMITIVES[name]
        if name in ("record", "enum", "fixed", "array", "map", "error"):
            raise SchemaError(f"{name!r} is a complex type and must be written as an object "
                              f'{{"type": "{name}", ...}}', place=place or "/")
        check_full_name(name, place or "/", "type name")
        found = self.names.lookup(name, namespace)
        if found is None:
            raise SchemaError(f"undefined type name {full_name(name, namespace)!r} "
                              "(a named type must be defined before it is used)",
                              place=place or "/")
        return found

    def _parse_object(self, obj: dict[str, Any], place: str, namespace: str, slot: list[Any],
                      index: int, stack: list[tuple[Any, ...]]) -> None:
        if "type" not in obj:
            raise SchemaError('a schema object needs a "type"', place=place or "/")
        kind = obj["type"]
        at = place or "/"
        if not isinstance(kind, str):
            raise SchemaError('"type" of a schema object must be a string naming the type',
                              place=f"{place}/type")
        if kind in PRIMITIVE_TYPES:
            logical, ignored = interpret(obj, kind)
            extra = _extra_properties(obj, {"type"})
            if logical is None and ignored is None and not extra:
                slot[index] = PLAIN_PRIMITIVES[kind]
            else:
                slot[index] = Primitive(kind=kind, logical=logical, ignored_logical=ignored,
                                        properties=extra)
        elif kind == "array":
            if "items" not in obj:
                raise SchemaError('an array needs "items"', place=at)
            holder: list[Any] = [None]
            stack.append(("array", holder, obj, place, slot, index))
            stack.append(("parse", obj["items"], f"{place}/items", namespace, holder, 0))
        elif kind == "map":
            if "values" not in obj:
                raise SchemaError('a map needs "values"', place=at)
            holder = [None]
            stack.append(("map", holder, obj, place, slot, index))
            stack.append(("parse", obj["values"], f"{place}/values", namespace, holder, 0))
        elif kind in ("record", "error"):
            self._start_record(obj, place, namespace, slot, index, stack)
        elif kind == "enum":
            slot[index] = self._enum(obj, place, namespace)
        elif kind == "fixed":
            slot[index] = self._fixed(obj, place, namespace)
        else:
            # {"type": "SomeName"} refers to a named type, as a plain string would.
            slot[index] = self._reference(kind, f"{place}/type", namespace)

    # -- named types ----------------------------------------------------------------------------

    def _naming(self, obj: dict[str, Any], place: str, namespace: str
                ) -> tuple[str, str, tuple[str, ...]]:
        """Full name, own namespace and full-name aliases of a named type (Names, Aliases)."""
        if "name" not in obj:
            raise SchemaError(f'a {obj["type"]} needs a "name"', place=place or "/")
        name = check_full_name(obj["name"], f"{place}/name")
        if "." in name:
            full = name
        else:
            own = (check_namespace(obj["namespace"], f"{place}/namespace")
                   if "namespace" in obj else namespace)
            full = full_name(name, own)
        own_namespace = full.rpartition(".")[0]
        aliases_obj = obj.get("aliases", [])
        if not isinstance(aliases_obj, list):
            raise SchemaError("aliases must be a list of names", place=f"{place}/aliases")
        aliases = []
        for position, alias in enumerate(aliases_obj):
            check_full_name(alias, f"{place}/aliases/{position}", "alias")
            aliases.append(full_name(alias, own_namespace))
        return full, own_namespace, tuple(aliases)

    def _doc(self, obj: dict[str, Any], place: str) -> str | None:
        doc = obj.get("doc")
        if doc is not None and not isinstance(doc, str):
            raise SchemaError("doc must be a string", place=f"{place}/doc")
        return doc

    def _start_record(self, obj: dict[str, Any], place: str, namespace: str, slot: list[Any],
                      index: int, stack: list[tuple[Any, ...]]) -> None:
        full, own_namespace, aliases = self._naming(obj, place, namespace)
        fields_obj = obj.get("fields")
        if not isinstance(fields_obj, list):
            raise SchemaError('a record needs "fields", a list of field objects',
                              place=f"{place}/fields" if "fields" in obj else place or "/")
        logical, ignored = interpret(obj, "record")
        record = Record(name=full, aliases=aliases, doc=self._doc(obj, place),
                        is_error=obj["type"] == "error", logical=logical,
                        ignored_logical=ignored, properties=_extra_properties(obj, _RECORD_KEYS))
        # Registered before its fields are parsed, so a field may refer to the record itself.
        self.names.register(record, f"{place}/name")
        slot[index] = record
        holder: list[Any] = [None] * len(fields_obj)
        seen: dict[str, int] = {}
        known = _VALID_NAMES
        for position, field_obj in enumerate(fields_obj):
            if field_obj.__class__ is not dict:
                raise SchemaError("a field must be an object with a name and a type",
                                  place=f"{place}/fields/{position}")
            field_name = field_obj.get("name")
            if not (field_name.__class__ is str and field_name in known):
                if not is_valid_name(field_name):
                    raise SchemaError(f"field name {field_name!r} is not a valid Avro name "
                                      "([A-Za-z_][A-Za-z0-9_]*)",
                                      place=f"{place}/fields/{position}/name")
                if len(known) < 100_000:
                    known.add(field_name)
            assert isinstance(field_name, str)  # a known name or a valid one, checked above
            if field_name in seen:
                raise SchemaError(f"duplicate field name {field_name!r} (also field "
                                  f"{seen[field_name]})", place=f"{place}/fields/{position}/name")
            seen[field_name] = position
            if "type" not in field_obj:
                raise SchemaError(f'field {field_name!r} needs a "type"',
                                  place=f"{place}/fields/{position}")
        stack.append(("record", record, fields_obj, holder, place))
        plain = PLAIN_PRIMITIVES
        for position in range(len(fields_obj) - 1, -1, -1):
            field_type = fields_obj[position]["type"]
            if field_type.__class__ is str and field_type in plain:
                holder[position] = plain[field_type]  # the common case, without a task
            else:
                stack.append(("parse", field_type, f"{place}/fields/{position}/type",
                              own_namespace, holder, position))

    def _finish_record(self, record: Record, fields_obj: list[dict[str, Any]],
                       holder: list[Schema], place: str) -> None:
        fields = []
        for position, field_obj in enumerate(fields_obj):
            aliases: tuple[str, ...] = ()
            order = "ascending"
            default = NO_DEFAULT
            doc = None
            properties: tuple[tuple[str, Any], ...] = ()
            if len(field_obj) > 2:  # more than name and type: check the optional attributes
                at = f"{place}/fields/{position}"
                aliases_obj = field_obj.get("aliases", [])
                if not isinstance(aliases_obj, list) or not all(map(is_valid_name, aliases_obj)):
                    raise SchemaError("field aliases must be a list of valid Avro names",
                                      place=f"{at}/aliases")
                aliases = tuple(aliases_obj)
                order = field_obj.get("order", "ascending")
                if order not in FIELD_ORDERS:
                    raise SchemaError(f"field order must be one of {', '.join(FIELD_ORDERS)}",
                                      place=f"{at}/order")
                default = field_obj.get("default", NO_DEFAULT)
                if default is not NO_DEFAULT:
                    self.pending_defaults.append((holder[position], default, f"{at}/default"))
                doc = self._doc(field_obj, at)
                properties = tuple((k, v) for k, v in field_obj.items() if k not in _FIELD_KEYS)
            fields.append(make_field(field_obj["name"], holder[position], default, aliases, order,
                                     doc, properties))
        object.__setattr__(record, "fields", tuple(fields))

    def _enum(self, obj: dict[str, Any], place: str, namespace: str) -> Enum:
        full, _, aliases = self._naming(obj, place, namespace)
        symbols = obj.get("symbols")
        if not isinstance(symbols, list):
            raise SchemaError('an enum needs "symbols", a list of names',
                              place=f"{place}/symbols" if "symbols" in obj else place or "/")
        seen: set[str] = set()
        for position, symbol in enumerate(symbols):
            if not is_valid_name(symbol):
                raise SchemaError(f"enum symbol {symbol!r} is not a valid Avro name "
                                  "([A-Za-z_][A-Za-z0-9_]*)", place=f"{place}/symbols/{position}")
            if symbol in seen:
                raise SchemaError(f"duplicate enum symbol {symbol!r}",
                                  place=f"{place}/symbols/{position}")
            seen.add(symbol)
        default = obj.get("default")
        if "default" in obj and not (isinstance(default, str) and default in seen):
            raise SchemaError(f"enum default {default!r} is not one of its symbols",
                              place=f"{place}/default")
        logical, ignored = interpret(obj, "enum")
        enum = Enum(name=full, aliases=aliases, doc=self._doc(obj, place), symbols=tuple(symbols),
                    default=default, logical=logical, ignored_logical=ignored,
                    properties=_extra_properties(obj, _ENUM_KEYS))
        self.names.register(enum, f"{place}/name")
        return enum

    def _fixed(self, obj: dict[str, Any], place: str, namespace: str) -> Fixed:
        full, _, aliases = self._naming(obj, place, namespace)
        size = obj.get("size")
        if not isinstance(size, int) or isinstance(size, bool) or size < 0:
            raise SchemaError('a fixed needs "size", a non-negative integer number of bytes',
                              place=f"{place}/size" if "size" in obj else place or "/")
        logical, ignored = interpret(obj, "fixed", size)
        fixed = Fixed(name=full, aliases=aliases, doc=self._doc(obj, place), size=size,
                      logical=logical, ignored_logical=ignored,
                      properties=_extra_properties(obj, _FIXED_KEYS))
        self.names.register(fixed, f"{place}/name")
        return fixed

    # -- unions ---------------------------------------------------------------------------------

    def _plain_union(self, obj: list[Any], place: str) -> Union | None:
        """A union of plain primitive names, shared between uses (schemas are immutable)."""
        plain = PLAIN_PRIMITIVES
        for branch in obj:
            if not (branch.__class__ is str and branch in plain):
                return None
        key = tuple(obj)
        union = _PLAIN_UNIONS.get(key)
        if union is None:
            union = self._build_union([plain[name] for name in obj], place)
            if len(_PLAIN_UNIONS) < 10_000:
                _PLAIN_UNIONS[key] = union
        return union

    def _build_union(self, branches: list[Schema], place: str) -> Union:
        """Avro specification, Unions: no nested union, one schema per unnamed type or name."""
        seen: dict[str, int] = {}
        for position, branch in enumerate(branches):
            at = f"{place}/{position}"
            if isinstance(branch, Union):
                raise SchemaError("a union may not immediately contain another union", place=at)
            key = branch.name if isinstance(branch, NamedSchema) else branch.kind
            if key in seen:
                what = f"named type {key!r}" if isinstance(branch, NamedSchema) else f"type {key}"
                raise SchemaError(f"a union may hold {what} only once (also branch "
                                  f"{seen[key]})", place=at)
            seen[key] = position
        return Union(branches=tuple(branches))

