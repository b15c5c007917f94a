"""The schema side of the demo story (DESIGN.md): main-burst-risk versions 1 to 4."""

from __future__ import annotations

import copy

from registry.schema import check_backward, check_both, check_forward, diff, parse

MATERIALS = ["CAST_IRON", "DUCTILE_IRON", "PVC", "HDPE", "ASBESTOS_CEMENT"]
V1 = {"type": "record", "name": "MainSegment", "namespace": "brackwater.mains", "fields": [
    {"name": "segment_id", "type": "string"},
    {"name": "district", "type": "string"},
    {"name": "pipe_material", "type": {"type": "enum", "name": "PipeMaterial",
                                       "symbols": MATERIALS}},
    {"name": "pipe_age_years", "type": "double"},
    {"name": "diameter_mm", "type": "int"},
    {"name": "mean_pressure_kpa", "type": "double"},
    {"name": "pressure_transients_7d", "type": "int"},
    {"name": "soil_corrosivity", "type": {"type": "enum", "name": "SoilCorrosivity",
                                          "symbols": ["LOW", "MODERATE", "HIGH"]}},
    {"name": "min_air_temp_c_7d", "type": "double"},
]}


def version(changes):
    schema = copy.deepcopy(V1)
    changes(schema["fields"])
    return parse(schema)


def add_repairs(fields):
    fields.append({"name": "repairs_5y", "type": "int", "default": 0})


def rename_pressure(fields):
    add_repairs(fields)
    fields[5] = {"name": "mean_pressure_psi", "type": "double", "aliases": ["mean_pressure_kpa"]}


def stringify_diameter(fields):
    add_repairs(fields)
    fields[4] = {"name": "diameter_mm", "type": "string"}


def test_v2_adds_a_field_with_a_default_both_ways_compatible():
    assert check_both(version(add_repairs), parse(V1)).compatible


def test_v3_reads_the_feed_through_the_alias_but_v2_cannot_read_v3_data():
    v2, v3 = version(add_repairs), version(rename_pressure)
    assert check_backward(v3, v2).compatible
    forward = check_forward(v3, v2)
    assert [(p.path, p.rule) for p in forward.problems] == [
        ("/fields/mean_pressure_kpa", "missing-field")]


def test_v4_turning_diameter_into_a_string_is_refused_both_ways():
    v2, v4 = version(add_repairs), version(stringify_diameter)
    both = check_both(v4, v2)
    assert [(p.direction, p.path, p.rule) for p in both.problems] == [
        ("backward", "/fields/diameter_mm/type", "type-mismatch"),
        ("forward", "/fields/diameter_mm/type", "type-mismatch")]
    assert [c.classification for c in diff(v2, v4).changes] == [
        "breaking-for-readers", "breaking-for-writers"]
