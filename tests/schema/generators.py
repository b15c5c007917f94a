"""Hypothesis strategies for the differential tests: random schemas, mutated copies, writer data.

Data is kept within what fastavro can round-trip (logical values in range, bytes as ASCII) so a
failure means a resolution failure, not a value conversion one.
"""

from __future__ import annotations

import copy
import itertools
from typing import Any

from hypothesis import strategies as st

from registry.schema import (
    Array,
    Enum,
    Fixed,
    Map,
    NamedSchema,
    Primitive,
    Record,
    Schema,
    Union,
)

PRIMITIVES = ["boolean", "int", "long", "float", "double", "bytes", "string"]
LOGICALS = [
    {"type": "int", "logicalType": "date"},
    {"type": "long", "logicalType": "timestamp-millis"},
    {"type": "long", "logicalType": "timestamp-micros"},
    {"type": "bytes", "logicalType": "decimal", "precision": 6, "scale": 2},
]
SYMBOLS = ["CAST_IRON", "DUCTILE_IRON", "PVC", "HDPE", "ASBESTOS_CEMENT"]
PROMOTE = {"int": ["long", "float", "double"], "long": ["float", "double"], "float": ["double"],
           "string": ["bytes"], "bytes": ["string"]}
DEMOTE = {"long": ["int"], "float": ["int", "long"], "double": ["int", "long", "float"],
          "bytes": ["string"], "string": ["bytes"]}
PRIMITIVE_DEFAULTS = {"boolean": False, "int": 0, "long": 7, "float": 1.5, "double": 2.5,
                      "bytes": "", "string": "n/a", "null": None}

NOTHING = object()


def default_for(type_json: Any) -> Any:
    """A valid default for a generated field type, or NOTHING when we give none."""
    if isinstance(type_json, str) and type_json in PRIMITIVE_DEFAULTS:
        return PRIMITIVE_DEFAULTS[type_json]
    if isinstance(type_json, list) and type_json and type_json[0] == "null":
        return None
    if isinstance(type_json, dict) and type_json.get("type") == "enum":
        return type_json["symbols"][0]
    if isinstance(type_json, dict) and type_json.get("type") == "array":
        return []
    return NOTHING


class Naming:
    def __init__(self) -> None:
        self.counter = itertools.count()

    def fresh(self, stem: str) -> str:
        return f"{stem}{next(self.counter)}"


@st.composite
def type_json(draw: Any, naming: Naming, depth: int, record_name: str) -> Any:
    choices = ["primitive"] * 4 + ["logical", "enum", "enum", "fixed", "union", "nullable"]
    if depth > 0:
        choices += ["array", "map", "record", "recursive"]
    choice = draw(st.sampled_from(choices))
    if choice == "primitive":
        return draw(st.sampled_from(PRIMITIVES))
    if choice == "logical":
        return copy.deepcopy(draw(st.sampled_from(LOGICALS)))
    if choice == "enum":
        symbols = draw(st.lists(st.sampled_from(SYMBOLS), min_size=1, max_size=4, unique=True))
        enum: dict[str, Any] = {"type": "enum", "name": naming.fresh("Material"),
                                "symbols": symbols}
        if draw(st.booleans()):
            enum["default"] = symbols[0]
        return enum
    if choice == "fixed":
        return {"type": "fixed", "name": naming.fresh("Tag"), "size": draw(st.integers(1, 4))}
    if choice == "union":
        kinds = draw(st.lists(st.sampled_from(["null", "int", "long", "double", "string",
                                               "bytes", "boolean"]),
                              min_size=2, max_size=3, unique=True))
        return kinds
    if choice == "nullable":
        inner = draw(type_json(naming, depth - 1 if depth else 0, record_name))
        if isinstance(inner, list):
            return inner if "null" in inner else ["null", *inner]
        return ["null", inner]
    if choice == "array":
        return {"type": "array", "items": draw(type_json(naming, depth - 1, record_name))}
    if choice == "map":
        return {"type": "map", "values": draw(type_json(naming, depth - 1, record_name))}
    if choice == "recursive":
        return ["null", record_name]
    return draw(record_json(naming, depth - 1))


@st.composite
def record_json(draw: Any, naming: Naming, depth: int) -> dict[str, Any]:
    name = naming.fresh("Segment")
    fields = []
    for index in range(draw(st.integers(1, 4))):
        field_type = draw(type_json(naming, depth, name))
        field: dict[str, Any] = {"name": f"f{index}", "type": field_type}
        default = default_for(field_type)
        if default is not NOTHING and draw(st.booleans()):
            field["default"] = default
        fields.append(field)
    return {"type": "record", "name": name, "namespace": "brackwater", "fields": fields}


def _records(obj: Any) -> list[dict[str, Any]]:
    found, stack = [], [obj]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            if item.get("type") == "record":
                found.append(item)
            stack.extend(item.values())
        elif isinstance(item, list):
            stack.extend(item)
    return found


def _enums(obj: Any) -> list[dict[str, Any]]:
    found, stack = [], [obj]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            if item.get("type") == "enum":
                found.append(item)
            stack.extend(item.values())
        elif isinstance(item, list):
            stack.extend(item)
    return found


def _typed(obj: Any, kind: str) -> list[dict[str, Any]]:
    return [item for item in _walk_dicts(obj) if item.get("type") == kind]


def _walk_dicts(obj: Any) -> list[dict[str, Any]]:
    found, stack = [], [obj]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            found.append(item)
            stack.extend(item.values())
        elif isinstance(item, list):
            stack.extend(item)
    return found


MUTATIONS = ["add-field", "remove-field", "rename-field", "promote", "demote", "break-type",
             "add-symbol", "remove-symbol", "enum-default", "widen", "narrow", "union-add",
             "union-remove", "rename-record", "fixed-size", "decimal-scale", "timestamp-unit",
             "nest"]


@st.composite
def mutated(draw: Any, schema: dict[str, Any], naming: Naming
            ) -> tuple[dict[str, Any], list[str]]:
    """A copy of `schema` with up to two more mutations, and their names."""
    result = copy.deepcopy(schema)
    applied = []
    for _ in range(draw(st.integers(0, 2))):
        mutation = draw(st.sampled_from(MUTATIONS))
        if _mutate(draw, result, mutation, naming):
            applied.append(mutation)
    return result, applied


def _mutate(draw: Any, schema: dict[str, Any], mutation: str, naming: Naming) -> bool:
    records = _records(schema)
    record = draw(st.sampled_from(records))
    fields = record["fields"]
    all_fields = [f for r in records for f in r["fields"]]
    if mutation == "add-field":
        field_type = draw(st.sampled_from(PRIMITIVES + [["null", "string"]]))
        field: dict[str, Any] = {"name": naming.fresh("added"), "type": field_type}
        if draw(st.booleans()):
            field["default"] = default_for(field_type)
        fields.insert(draw(st.integers(0, len(fields))), field)
        return True
    if mutation == "remove-field" and len(fields) > 1:
        del fields[draw(st.integers(0, len(fields) - 1))]
        return True
    if mutation == "rename-field":
        field = draw(st.sampled_from(all_fields))
        old = field["name"]
        field["name"] = naming.fresh("renamed")
        if draw(st.booleans()):
            field["aliases"] = [old]
        return True
    if mutation in ("promote", "demote", "break-type"):
        candidates = [f for f in all_fields if f["type"] in PRIMITIVES]
        if not candidates:
            return False
        field = draw(st.sampled_from(candidates))
        table = PROMOTE if mutation == "promote" else DEMOTE
        if mutation == "break-type":
            options = [p for p in PRIMITIVES if p != field["type"]]
        else:
            options = table.get(field["type"], [])
        if not options:
            return False
        field["type"] = draw(st.sampled_from(options))
        field.pop("default", None)
        return True
    if mutation in ("add-symbol", "remove-symbol", "enum-default"):
        enums = _enums(schema)
        if not enums:
            return False
        enum = draw(st.sampled_from(enums))
        if mutation == "add-symbol":
            spare = [s for s in SYMBOLS if s not in enum["symbols"]]
            if not spare:
                return False
            enum["symbols"].append(draw(st.sampled_from(spare)))
        elif mutation == "remove-symbol":
            if len(enum["symbols"]) < 2:
                return False
            removed = enum["symbols"].pop(draw(st.integers(0, len(enum["symbols"]) - 1)))
            if enum.get("default") == removed:
                enum["default"] = enum["symbols"][0]
        else:
            if "default" in enum:
                del enum["default"]
            else:
                enum["default"] = enum["symbols"][-1]
        return True
    if mutation == "widen":
        candidates = [f for f in all_fields if not isinstance(f["type"], list)]
        if not candidates:
            return False
        field = draw(st.sampled_from(candidates))
        field["type"] = ["null", field["type"]]
        field.pop("default", None)
        return True
    if mutation == "narrow":
        # Never narrow ["null", Self]: a record that must contain itself has no finite value.
        candidates = [f for f in all_fields if isinstance(f["type"], list) and len(f["type"]) > 1
                      and all(b in PRIMITIVES + ["null"] or isinstance(b, dict)
                              for b in f["type"])]
        if not candidates:
            return False
        field = draw(st.sampled_from(candidates))
        kept = [b for b in field["type"] if b != "null"] or field["type"][:1]
        field["type"] = kept[0] if len(kept) == 1 else kept
        field.pop("default", None)
        return True
    if mutation in ("union-add", "union-remove"):
        candidates = [f for f in all_fields if isinstance(f["type"], list)]
        if not candidates:
            return False
        field = draw(st.sampled_from(candidates))
        branches = field["type"]
        if mutation == "union-add":
            spare = [p for p in ("null", "int", "double", "string", "boolean")
                     if p not in branches]
            if not spare:
                return False
            branches.append(draw(st.sampled_from(spare)))
        else:
            if len(branches) < 2:
                return False
            branches.pop(draw(st.integers(1, len(branches) - 1)))
        return True
    if mutation == "rename-record":
        old = record["name"]
        record["name"] = naming.fresh("Renamed")
        if draw(st.booleans()):
            record["aliases"] = [old]
        _replace_references(schema, f"{record.get('namespace', 'brackwater')}.{old}", old,
                            record["name"])
        return True
    if mutation == "fixed-size":
        fixed = _typed(schema, "fixed")
        if not fixed:
            return False
        chosen = draw(st.sampled_from(fixed))
        chosen["size"] += 1
        return True
    if mutation == "decimal-scale":
        decimals = [d for d in _walk_dicts(schema) if d.get("logicalType") == "decimal"]
        if not decimals:
            return False
        draw(st.sampled_from(decimals))["scale"] = 3
        return True
    if mutation == "timestamp-unit":
        stamps = [d for d in _walk_dicts(schema)
                  if d.get("logicalType") in ("timestamp-millis", "timestamp-micros")]
        if not stamps:
            return False
        stamp = draw(st.sampled_from(stamps))
        stamp["logicalType"] = ("timestamp-micros" if stamp["logicalType"] == "timestamp-millis"
                                else "timestamp-millis")
        return True
    if mutation == "nest":
        candidates = [f for f in all_fields if f["type"] in PRIMITIVES]
        if not candidates:
            return False
        field = draw(st.sampled_from(candidates))
        field["type"] = {"type": "record", "name": naming.fresh("Wrapped"),
                         "fields": [{"name": "inner", "type": field["type"]}]}
        field.pop("default", None)
        return True
    return False


def _replace_references(obj: Any, full: str, simple: str, new_simple: str) -> None:
    """Point name references to a renamed record (recursive fields) at its new name."""
    stack = [obj]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            for key, value in item.items():
                if key in ("type", "items", "values") and value in (full, simple):
                    item[key] = new_simple
                else:
                    stack.append(value)
        elif isinstance(item, list):
            for position, value in enumerate(item):
                if value in (full, simple):
                    item[position] = new_simple
                else:
                    stack.append(value)


# A field each mutation needs, added to the random record so the mutation always applies.
INGREDIENTS = {
    "add-symbol": lambda n: {"type": "enum", "name": n.fresh("Soil"), "symbols": ["LOW", "HIGH"]},
    "remove-symbol": lambda n: {"type": "enum", "name": n.fresh("Soil"),
                                "symbols": ["LOW", "MODERATE", "HIGH"]},
    "enum-default": lambda n: {"type": "enum", "name": n.fresh("Soil"),
                               "symbols": ["LOW", "MODERATE", "HIGH"]},
    "narrow": lambda n: ["null", "double"],
    "union-add": lambda n: ["null", "long"],
    "union-remove": lambda n: ["null", "string", "long"],
    "fixed-size": lambda n: {"type": "fixed", "name": n.fresh("Tag"), "size": 2},
    "decimal-scale": lambda n: {"type": "bytes", "logicalType": "decimal", "precision": 6,
                                "scale": 2},
    "timestamp-unit": lambda n: {"type": "long", "logicalType": "timestamp-millis"},
    "promote": lambda n: "int",
    "demote": lambda n: "double",
    "break-type": lambda n: "int",
    "nest": lambda n: "long",
    "widen": lambda n: "string",
}


@st.composite
def schema_pairs(draw: Any, first: str | None = None
                 ) -> tuple[dict[str, Any], dict[str, Any], list[str]]:
    """(reader JSON, writer JSON, mutations): a random schema and a mutated copy, either way.

    `first` forces the first mutation (and adds a field it can apply to)."""
    naming = Naming()
    original = draw(record_json(naming, depth=2))
    if first in INGREDIENTS:
        original["fields"].append({"name": "ingredient", "type": INGREDIENTS[first](naming)})
    changed = copy.deepcopy(original)
    applied = []
    if first is not None and _mutate(draw, changed, first, naming):
        applied.append(first)
    more, extra = draw(mutated(changed, naming))
    changed, applied = more, applied + extra
    if draw(st.booleans()):
        return changed, original, applied
    return original, changed, applied


# -- data ---------------------------------------------------------------------------------------

def _logical_value(draw: Any, schema: Schema) -> Any:
    name = schema.logical.name if schema.logical else None
    if name == "date":
        return draw(st.integers(0, 30000))
    if name in ("timestamp-millis", "timestamp-micros"):
        return draw(st.integers(0, 10 ** 12))
    if name == "decimal":
        return draw(st.binary(max_size=2))
    return NOTHING


@st.composite
def datum_for(draw: Any, schema: Schema, depth: int = 0) -> Any:
    """A random datum for `schema`, with union values in fastavro's (branch, value) notation."""
    value = _logical_value(draw, schema)
    if value is not NOTHING:
        return value
    if isinstance(schema, Union):
        branches = list(enumerate(schema.branches))
        if depth > 3:
            nulls = [b for b in branches if b[1].kind == "null"]
            branches = nulls or branches
        _, branch = draw(st.sampled_from(branches))
        return (branch_name(branch), draw(datum_for(branch, depth + 1)))
    if isinstance(schema, Record):
        return {f.name: draw(datum_for(f.type, depth + 1)) for f in schema.fields}
    if isinstance(schema, Enum):
        return draw(st.sampled_from(schema.symbols))
    if isinstance(schema, Fixed):
        return draw(st.binary(min_size=schema.size, max_size=schema.size))
    if isinstance(schema, Array):
        return draw(st.lists(datum_for(schema.items, depth + 1), max_size=0 if depth > 3 else 2))
    if isinstance(schema, Map):
        return draw(st.dictionaries(st.text("abc", max_size=2),
                                    datum_for(schema.values, depth + 1),
                                    max_size=0 if depth > 3 else 2))
    return draw(primitive_value(schema.kind))


def primitive_value(kind: str) -> st.SearchStrategy[Any]:
    return {
        "null": st.none(),
        "boolean": st.booleans(),
        "int": st.integers(-(2 ** 31), 2 ** 31 - 1),
        "long": st.integers(-(2 ** 63), 2 ** 63 - 1),
        "float": st.floats(width=32, allow_nan=False),
        "double": st.floats(allow_nan=False),
        "bytes": st.binary(max_size=4).map(lambda b: bytes(x & 0x7F for x in b)),
        "string": st.text(max_size=4),
    }[kind]


def branch_name(schema: Schema) -> str:
    return schema.name if isinstance(schema, NamedSchema) else schema.kind


def minimal_datum(schema: Schema) -> Any:
    """The smallest datum of `schema`: null branches, empty arrays and maps, first symbols."""
    if schema.logical is not None and schema.logical.name == "decimal":
        return b""
    if isinstance(schema, Union):
        chosen = next((b for b in schema.branches if b.kind == "null"), schema.branches[0])
        return (branch_name(chosen), minimal_datum(chosen))
    if isinstance(schema, Record):
        return {f.name: minimal_datum(f.type) for f in schema.fields}
    if isinstance(schema, Enum):
        return schema.symbols[0]
    if isinstance(schema, Fixed):
        return bytes(schema.size)
    if isinstance(schema, Array):
        return []
    if isinstance(schema, Map):
        return {}
    assert isinstance(schema, Primitive)
    return {"null": None, "boolean": False, "int": 0, "long": 0, "float": 0.0, "double": 0.0,
            "bytes": b"", "string": ""}[schema.kind]


class _Choice(list):
    """[branch name, value] of a union while a witness is built; a fastavro tuple at the end."""


def witness_datum(writer: Schema, writer_path: str, witness: dict | None) -> Any:
    """A writer datum that reaches `writer_path` (taking the union branches it names) and holds
    the witness there; everything else minimal. Built top-down from the path's tokens."""
    tokens = [t for t in writer_path.split("/") if t]
    # Build along the path, remembering how to plug each level into its parent.
    root: list[Any] = [None]
    slot: tuple[Any, Any] = (root, 0)
    current = writer
    position = 0
    while position < len(tokens):
        container, key = slot
        token = tokens[position]
        if isinstance(current, Record) and token == "fields":
            name = tokens[position + 1]
            value = {f.name: minimal_datum(f.type) for f in current.fields if f.name != name}
            container[key] = value
            current = next(f.type for f in current.fields if f.name == name)
            slot = (value, name)
            position += 3  # fields, name, type
        elif isinstance(current, Union):
            branch = current.branches[int(token)]
            holder: list[Any] = _Choice([branch_name(branch), None])
            container[key] = holder
            slot = (holder, 1)
            current = branch
            position += 1
        elif isinstance(current, Array):
            items: list[Any] = [None]
            container[key] = items
            slot = (items, 0)
            current = current.items
            position += 1
        elif isinstance(current, Map):
            values: dict[str, Any] = {"k": None}
            container[key] = values
            slot = (values, "k")
            current = current.values
            position += 1
        else:
            raise AssertionError(f"cannot follow {writer_path} at {token}")
    container, key = slot
    if witness and "enum_symbol" in witness:
        container[key] = witness["enum_symbol"]
    else:
        container[key] = minimal_datum(current)
    return _tuples(root[0])


def _tuples(value: Any) -> Any:
    """Turn the [branch, value] holders used while building into fastavro's tuples."""
    if isinstance(value, _Choice):
        return (value[0], _tuples(value[1]))
    if isinstance(value, dict):
        return {k: _tuples(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_tuples(v) for v in value]
    return value
