"""The structural diff: every change, each classed by the direction it breaks."""

from __future__ import annotations

from registry.schema import diff, parse


def record(*fields, name="Segment"):
    return {"type": "record", "name": name, "namespace": "brackwater", "fields": list(fields)}


MATERIAL = {"type": "enum", "name": "PipeMaterial",
            "symbols": ["CAST_IRON", "DUCTILE_IRON", "PVC", "HDPE", "ASBESTOS_CEMENT"]}


def changes(old, new):
    return [(c.path, c.kind, c.classification) for c in diff(parse(old), parse(new)).changes]


def test_identical_schemas_have_no_changes():
    schema = record({"name": "a", "type": "int"})
    assert changes(schema, schema) == []


def test_field_added_with_default_is_safe():
    assert changes(record({"name": "a", "type": "int"}),
                   record({"name": "a", "type": "int"},
                          {"name": "repairs_5y", "type": "int", "default": 0})) == [
        ("/fields/repairs_5y", "field-added", "safe")]


def test_field_added_without_default_breaks_readers():
    assert changes(record({"name": "a", "type": "int"}),
                   record({"name": "a", "type": "int"}, {"name": "b", "type": "int"})) == [
        ("/fields/b", "field-added", "breaking-for-readers")]


def test_field_removed_without_default_breaks_writers():
    assert changes(record({"name": "a", "type": "int"}, {"name": "b", "type": "int"}),
                   record({"name": "a", "type": "int"})) == [
        ("/fields/b", "field-removed", "breaking-for-writers")]


def test_rename_through_alias_is_readable_but_breaks_old_readers():
    old = record({"name": "mean_pressure_kpa", "type": "double"})
    new = record({"name": "mean_pressure_psi", "type": "double",
                  "aliases": ["mean_pressure_kpa"]})
    assert changes(old, new) == [("/fields/mean_pressure_psi", "field-renamed",
                                  "breaking-for-writers")]


def test_type_change_breaking_both_ways_is_listed_for_each():
    assert changes(record({"name": "diameter_mm", "type": "int"}),
                   record({"name": "diameter_mm", "type": "string"})) == [
        ("/fields/diameter_mm/type", "type-changed", "breaking-for-readers"),
        ("/fields/diameter_mm/type", "type-changed", "breaking-for-writers")]


def test_promotion_breaks_only_old_readers():
    assert changes(record({"name": "n", "type": "int"}),
                   record({"name": "n", "type": "long"})) == [
        ("/fields/n/type", "type-changed", "breaking-for-writers")]


def test_enum_symbols_added_and_removed():
    fewer = dict(MATERIAL, symbols=MATERIAL["symbols"][:4])
    assert changes(record({"name": "m", "type": MATERIAL}), record({"name": "m", "type": fewer})) \
        == [("/fields/m/type", "symbol-removed", "breaking-for-readers")]
    assert changes(record({"name": "m", "type": fewer}), record({"name": "m", "type": MATERIAL})) \
        == [("/fields/m/type", "symbol-added", "breaking-for-writers")]
    with_default = dict(MATERIAL, symbols=MATERIAL["symbols"][:4], default="CAST_IRON")
    assert changes(record({"name": "m", "type": MATERIAL}),
                   record({"name": "m", "type": with_default})) == [
        ("/fields/m/type", "symbol-removed", "safe"),
        ("/fields/m/type", "enum-default-changed", "safe")]


def test_union_widened_and_narrowed():
    assert changes(record({"name": "z", "type": ["null", "string"]}),
                   record({"name": "z", "type": ["null", "string", "long"]})) == [
        ("/fields/z/type/2", "union-branch-added", "breaking-for-writers")]
    assert changes(record({"name": "z", "type": ["null", "string", "long"]}),
                   record({"name": "z", "type": ["null", "string"]})) == [
        ("/fields/z/type", "union-branch-removed", "breaking-for-readers")]
    assert changes(record({"name": "z", "type": "string"}),
                   record({"name": "z", "type": ["null", "string"]})) == [
        ("/fields/z/type", "type-changed", "breaking-for-writers")]


def test_defaults_aliases_and_nested_records():
    old = record({"name": "where", "type": record({"name": "district", "type": "string"},
                                                  name="Location")},
                 {"name": "n", "type": "int", "default": 1})
    new = record({"name": "where", "type": record({"name": "district", "type": "string"},
                                                  {"name": "zone", "type": "string"},
                                                  name="Location")},
                 {"name": "n", "type": "int", "default": 2, "aliases": ["count"]})
    assert changes(old, new) == [
        ("/fields/where/type/fields/zone", "field-added", "breaking-for-readers"),
        ("/fields/n", "field-default-changed", "safe"),
        ("/fields/n", "field-aliases-changed", "safe"),
    ]


def test_fixed_size_and_decimal_changes():
    assert changes({"type": "fixed", "name": "Tag", "size": 2},
                   {"type": "fixed", "name": "Tag", "size": 3}) == [
        ("/", "size-changed", "breaking-for-readers"),
        ("/", "size-changed", "breaking-for-writers")]
    decimal = {"type": "bytes", "logicalType": "decimal", "precision": 6, "scale": 2}
    assert changes(decimal, dict(decimal, scale=3)) == [
        ("/", "logical-type-changed", "breaking-for-readers"),
        ("/", "logical-type-changed", "breaking-for-writers")]


def test_record_renamed_with_alias():
    assert changes(record({"name": "a", "type": "int"}, name="Segment"),
                   {"type": "record", "name": "brackwater.Main", "aliases": ["Segment"],
                    "fields": [{"name": "a", "type": "int"}]}) == [
        ("/", "renamed", "breaking-for-writers"), ("/", "aliases-changed", "safe")]


def test_deep_and_recursive_schemas_diff_without_recursion_limit():
    depth = 1500
    old: object = "int"
    new: object = "long"
    for _ in range(depth):
        old = {"type": "array", "items": old}
        new = {"type": "array", "items": new}
    (change,) = diff(parse(old), parse(new)).changes
    assert change.path.count("/items") == depth
    node = {"type": "record", "name": "Node", "fields": [
        {"name": "next", "type": ["null", "Node"]}]}
    assert diff(parse(node), parse(node)).changes == ()
