"""Parsing and validation of schemas (Avro specification, Schema Declaration, Names, Aliases)."""

import json

import pytest

from registry.errors import Unprocessable
from registry.schema import (
    NO_DEFAULT,
    Array,
    Enum,
    Fixed,
    Map,
    Names,
    Primitive,
    Record,
    SchemaError,
    Union,
    leaf_fields,
    load,
    parse,
    to_json,
)

SEGMENT = {
    "type": "record", "name": "Segment", "namespace": "brackwater.mains",
    "fields": [
        {"name": "segment_id", "type": "string"},
        {"name": "pipe_material", "type": {"type": "enum", "name": "PipeMaterial", "symbols": [
            "CAST_IRON", "DUCTILE_IRON", "PVC", "HDPE", "ASBESTOS_CEMENT"]}},
        {"name": "location", "type": {"type": "record", "name": "Location", "fields": [
            {"name": "district", "type": "string"},
            {"name": "zone", "type": ["null", "string"], "default": None}]}},
        {"name": "diameter_mm", "type": "int", "aliases": ["diameter"]},
        {"name": "repairs_5y", "type": "int", "default": 0},
        {"name": "installed", "type": ["null", {"type": "int", "logicalType": "date"}],
         "default": None},
    ],
}


def test_record_parses_into_immutable_named_types_with_full_names():
    schema = parse(SEGMENT)
    assert isinstance(schema, Record)
    assert schema.name == "brackwater.mains.Segment"
    material = schema.fields[1].type
    assert isinstance(material, Enum) and material.name == "brackwater.mains.PipeMaterial"
    assert schema.fields[4].default == 0 and schema.fields[0].default is NO_DEFAULT
    assert schema.fields[5].type.branches[1].logical.name == "date"
    with pytest.raises(AttributeError):
        schema.name = "other"  # type: ignore[misc]


def test_to_json_round_trips_through_parse():
    first = to_json(parse(SEGMENT))
    assert to_json(parse(first)) == first
    assert first["name"] == "brackwater.mains.Segment"


def test_names_are_shared_between_schemas():
    # A PFA document declares a type in its input and refers to it from its output.
    names = Names()
    parse(SEGMENT, names=names)
    output = parse({"type": "array", "items": "brackwater.mains.PipeMaterial"}, names=names)
    assert isinstance(output, Array) and output.items is names["brackwater.mains.PipeMaterial"]
    in_namespace = parse("Location", names=names, namespace="brackwater.mains")
    assert in_namespace is names["brackwater.mains.Location"]


def test_failed_parse_leaves_names_unchanged():
    names = Names()
    with pytest.raises(SchemaError):
        parse({"type": "record", "name": "A", "fields": [{"name": "x", "type": "Nope"}]},
              names=names)
    assert "A" not in names


def test_recursive_record_refers_to_itself():
    schema = parse({"type": "record", "name": "Node", "fields": [
        {"name": "value", "type": "long"}, {"name": "next", "type": ["null", "Node"]}]})
    assert schema.fields[1].type.branches[1] is schema
    assert to_json(schema)["fields"][1]["type"] == ["null", "Node"]


def test_null_namespace_inside_a_namespace_survives_to_json():
    schema = parse({"type": "record", "name": "a.Outer", "fields": [
        {"name": "inner", "type": {"type": "fixed", "name": "Tag", "namespace": "", "size": 2}}]})
    assert schema.fields[0].type.name == "Tag"
    again = parse(to_json(schema))
    assert again.fields[0].type.name == "Tag"


def test_aliases_of_named_types_take_the_namespace_of_the_type():
    # Avro specification, Aliases: aliases may be fully qualified or relative to the namespace.
    schema = parse({"type": "enum", "name": "x.E", "aliases": ["Old", "y.Other"],
                    "symbols": ["A"]})
    assert schema.aliases == ("x.Old", "y.Other")


def test_invalid_decimal_is_ignored_and_falls_back_to_its_underlying_type():
    # Avro specification, Logical Types: an invalid logical type is ignored.
    schema = parse({"type": "bytes", "logicalType": "decimal", "precision": 3, "scale": 5})
    assert isinstance(schema, Primitive) and schema.logical is None
    assert "exceeds" in schema.ignored_logical.reason
    fixed = parse({"type": "fixed", "name": "F", "size": 2, "logicalType": "decimal",
                   "precision": 5})
    assert isinstance(fixed, Fixed) and fixed.logical is None
    assert "does not fit" in fixed.ignored_logical.reason
    assert parse({"type": "fixed", "name": "G", "size": 2, "logicalType": "decimal",
                  "precision": 4}).logical.precision == 4


def test_unknown_logical_type_is_ignored():
    schema = parse({"type": "string", "logicalType": "postcode"})
    assert schema.logical is None and schema.ignored_logical.name == "postcode"


def test_union_default_may_match_any_branch():
    # Avro specification 1.12, Unions: the default matches one of the branches.
    parse({"type": "record", "name": "R", "fields": [
        {"name": "zone", "type": ["null", "string"], "default": "north"}]})


def test_leaf_fields_open_nested_records_with_dotted_paths():
    leaves = leaf_fields(parse(SEGMENT))
    assert [leaf.path for leaf in leaves] == [
        "segment_id", "pipe_material", "location.district", "location.zone", "diameter_mm",
        "repairs_5y", "installed"]
    zone = leaves[3]
    assert zone.nullable and zone.schema.kind == "string"
    assert leaves[4].aliases == ("diameter",)
    assert leaves[6].schema.logical.name == "date"


def test_leaf_fields_stop_at_a_recursive_record():
    schema = parse({"type": "record", "name": "Node", "fields": [
        {"name": "value", "type": "long"}, {"name": "next", "type": ["null", "Node"]}]})
    leaves = leaf_fields(schema)
    assert [leaf.path for leaf in leaves] == ["value", "next"]
    assert leaves[1].nullable and leaves[1].schema is schema


def test_leaves_under_a_nullable_record_are_nullable():
    schema = parse({"type": "record", "name": "R", "fields": [
        {"name": "where", "type": ["null", {"type": "record", "name": "W", "fields": [
            {"name": "district", "type": "string"}]}]}]})
    (leaf,) = leaf_fields(schema)
    assert leaf.path == "where.district" and leaf.nullable


def test_deep_nesting_parses_without_recursion_limit():
    depth = 2000
    text = ""
    for level in range(depth):
        text += f'{{"type":"record","name":"R{level}","fields":[{{"name":"f","type":'
    text += '"int"' + "}]}" * depth
    schema = load(text)
    assert isinstance(schema, Record)
    assert len(leaf_fields(schema)) == 1
    assert to_json(schema)["name"] == "R0"


# -- bad input: each rejected with a SchemaError naming the place ------------------------------

BAD_SCHEMAS = [
    ("unknown type name", "Nope", "/"),
    ("not a schema", 42, "/"),
    ("record without name", {"type": "record", "fields": []}, "/"),
    ("record without fields", {"type": "record", "name": "R"}, "/"),
    ("invalid record name", {"type": "record", "name": "9lives", "fields": []}, "/name"),
    ("invalid namespace", {"type": "record", "name": "R", "namespace": "a..b", "fields": []},
     "/namespace"),
    ("duplicate field", {"type": "record", "name": "R", "fields": [
        {"name": "x", "type": "int"}, {"name": "x", "type": "long"}]}, "/fields/1/name"),
    ("invalid field name", {"type": "record", "name": "R", "fields": [
        {"name": "pipe-age", "type": "int"}]}, "/fields/0/name"),
    ("field without type", {"type": "record", "name": "R", "fields": [{"name": "x"}]},
     "/fields/0"),
    ("bad field order", {"type": "record", "name": "R", "fields": [
        {"name": "x", "type": "int", "order": "sideways"}]}, "/fields/0/order"),
    ("duplicate enum symbol", {"type": "enum", "name": "E", "symbols": ["A", "B", "A"]},
     "/symbols/2"),
    ("invalid enum symbol", {"type": "enum", "name": "E", "symbols": ["A", "B C"]}, "/symbols/1"),
    ("enum default not a symbol", {"type": "enum", "name": "E", "symbols": ["A"],
                                   "default": "Z"}, "/default"),
    ("enum default not a string", {"type": "enum", "name": "E", "symbols": ["A"],
                                   "default": ["A"]}, "/default"),
    ("enum without symbols", {"type": "enum", "name": "E"}, "/"),
    ("fixed without size", {"type": "fixed", "name": "F"}, "/"),
    ("negative fixed size", {"type": "fixed", "name": "F", "size": -1}, "/size"),
    ("fractional fixed size", {"type": "fixed", "name": "F", "size": 1.5}, "/size"),
    ("array without items", {"type": "array"}, "/"),
    ("map without values", {"type": "map"}, "/"),
    ("union with duplicate unnamed type", ["null", "string", "null"], "/2"),
    ("union with two arrays", [{"type": "array", "items": "int"},
                               {"type": "array", "items": "long"}], "/1"),
    ("union with two logical ints", ["int", {"type": "int", "logicalType": "date"}], "/1"),
    ("nested union", ["null", ["int", "string"]], "/1"),
    ("redefined name", {"type": "record", "name": "R", "fields": [
        {"name": "a", "type": {"type": "fixed", "name": "F", "size": 1}},
        {"name": "b", "type": {"type": "fixed", "name": "F", "size": 2}}]}, "/fields/1/type/name"),
    ("primitive name redefined", {"type": "fixed", "name": "int", "size": 4}, "/name"),
    ("name used before definition", {"type": "record", "name": "R", "fields": [
        {"name": "a", "type": "F"},
        {"name": "b", "type": {"type": "fixed", "name": "F", "size": 2}}]}, "/fields/0/type"),
    ("default of wrong type", {"type": "record", "name": "R", "fields": [
        {"name": "age", "type": "double", "default": "old"}]}, "/fields/0/default"),
    ("int default out of range", {"type": "record", "name": "R", "fields": [
        {"name": "n", "type": "int", "default": 2 ** 31}]}, "/fields/0/default"),
    ("union default fits no branch", {"type": "record", "name": "R", "fields": [
        {"name": "n", "type": ["null", "int"], "default": "x"}]}, "/fields/0/default"),
    ("record default missing field", {"type": "record", "name": "R", "fields": [
        {"name": "w", "type": {"type": "record", "name": "W", "fields": [
            {"name": "a", "type": "int"}]}, "default": {}}]}, "/fields/0/default"),
    ("fixed default of wrong length", {"type": "record", "name": "R", "fields": [
        {"name": "f", "type": {"type": "fixed", "name": "F", "size": 2}, "default": "abc"}]},
     "/fields/0/default"),
    ("enum default of field not a symbol", {"type": "record", "name": "R", "fields": [
        {"name": "e", "type": {"type": "enum", "name": "E", "symbols": ["A"]}, "default": "B"}]},
     "/fields/0/default"),
    ("array default item of wrong type", {"type": "record", "name": "R", "fields": [
        {"name": "xs", "type": {"type": "array", "items": "int"}, "default": [1, "two"]}]},
     "/fields/0/default/1"),
    ("complex type name as a string", "record", "/"),
    ("type attribute not a string", {"type": 7}, "/type"),
    ("object without type", {"name": "x"}, "/"),
    ("aliases not a list", {"type": "enum", "name": "E", "symbols": ["A"], "aliases": "Old"},
     "/aliases"),
]


@pytest.mark.parametrize("case, schema, place", BAD_SCHEMAS, ids=[c[0] for c in BAD_SCHEMAS])
def test_invalid_schema_is_rejected_naming_the_place(case, schema, place):
    with pytest.raises(SchemaError) as caught:
        parse(schema)
    assert caught.value.place == place, caught.value.one_line()
    assert isinstance(caught.value, Unprocessable)
    assert "\n" not in caught.value.one_line()


def test_place_prefix_of_an_embedded_schema():
    with pytest.raises(SchemaError) as caught:
        parse({"type": "map", "values": "Nope"}, place="/input")
    assert caught.value.place == "/input/values"


@pytest.mark.parametrize("text, where", [
    ('{"type": "record",\n "name": "R" "fields": []}', "line 2, column 14"),
    ('{"type": "int"', "line 1, column 15"),
    ("", "line 1, column 1"),
])
def test_invalid_json_names_line_and_column(text, where):
    with pytest.raises(SchemaError) as caught:
        load(text, source="feed.avsc")
    error = caught.value
    assert error.place == where and error.source == "feed.avsc"
    assert f"line {error.line}, column {error.column}" == where
    assert "invalid JSON" in error.message
    assert error.one_line().startswith(f"feed.avsc {where}: invalid JSON")


def test_load_names_the_source_and_keeps_the_pointer():
    with pytest.raises(SchemaError) as caught:
        load('{"type": "map", "values": "Nope"}', source="feed.avsc")
    assert caught.value.place == "/values" and caught.value.source == "feed.avsc"
    assert caught.value.one_line().startswith("feed.avsc /values: undefined type name")


def test_deep_invalid_json_names_line_and_column():
    text = '{"type":"array","items":' * 2000 + '"int"' + "}" * 1999 + "]"
    with pytest.raises(SchemaError) as caught:
        load(text)
    assert caught.value.place.startswith("line 1, column ")


def test_load_accepts_what_json_accepts():
    assert to_json(load(json.dumps(SEGMENT))) == to_json(parse(SEGMENT))
    assert isinstance(load('{"type": "map", "values": "long"}'), Map)
    assert isinstance(load('["null", "string"]'), Union)


def test_map_default_places_escape_the_key():
    with pytest.raises(SchemaError) as caught:
        parse({"type": "record", "name": "R", "fields": [
            {"name": "m", "type": {"type": "map", "values": "int"}, "default": {"a/b": "x"}}]})
    assert caught.value.place == "/fields/0/default/a~1b"
