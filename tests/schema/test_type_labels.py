"""Labels of declared Avro types, on the type forms of the Avro specification (Schema
Declaration: primitive names, records, enums, arrays, maps, unions, fixed; Logical Types)."""

from __future__ import annotations

from registry.schema.labels import type_label


def test_each_declared_form_has_a_label():
    assert type_label("double") == "double"
    assert type_label(["null", "int"]) == "null | int"
    assert type_label({"type": "enum", "name": "Material", "symbols": ["PVC"]}) == "enum Material"
    assert type_label({"type": "array", "items": {"type": "map", "values": "long"}}) == (
        "array of map of long")
    assert type_label({"type": "long", "logicalType": "timestamp-millis"}) == (
        "long (timestamp-millis)")
    assert type_label({"type": "fixed", "name": "Md5", "size": 16}) == "fixed Md5"


def test_json_that_is_no_type_still_gets_a_short_label():
    assert type_label({"fields": []}) == "?"
    assert type_label(3) == "3"
