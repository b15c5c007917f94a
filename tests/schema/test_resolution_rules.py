"""One table per rule of the Avro specification's Schema Resolution section (1.11/1.12).

Each row names the rule's heading; the expectations follow the rule's text. Paths point into the
reader schema, writer paths into the writer schema.
"""

from __future__ import annotations

import pytest

from registry.schema import (
    check_against_all,
    check_backward,
    check_both,
    check_forward,
    parse,
    reads,
    resolve,
)


def record(name, *fields, **extra):
    return {"type": "record", "name": name, "fields": list(fields), **extra}


def field(name, type_, **extra):
    return {"name": name, "type": type_, **extra}


MATERIAL = ["CAST_IRON", "DUCTILE_IRON", "PVC", "HDPE", "ASBESTOS_CEMENT"]

# (rule heading, case, reader, writer, compatible, [(path, rule)] problems, [(path, rule)] notes)
RULES = [
    # -- "It is an error if the two schemas do not match" and the ways they match ---------------
    ("both schemas are arrays whose item types match", "same items",
     {"type": "array", "items": "int"}, {"type": "array", "items": "int"}, True, [], []),
    ("both schemas are arrays whose item types match", "items differ",
     {"type": "array", "items": "string"}, {"type": "array", "items": "int"}, False,
     [("/items", "type-mismatch")], []),
    ("both schemas are maps whose value types match", "same values",
     {"type": "map", "values": "double"}, {"type": "map", "values": "double"}, True, [], []),
    ("both schemas are maps whose value types match", "values differ",
     {"type": "map", "values": "boolean"}, {"type": "map", "values": "double"}, False,
     [("/values", "type-mismatch")], []),
    ("both schemas are enums whose (unqualified) names match", "namespaces differ",
     {"type": "enum", "name": "a.Soil", "symbols": ["LOW"]},
     {"type": "enum", "name": "b.Soil", "symbols": ["LOW"]}, True, [], []),
    ("both schemas are enums whose (unqualified) names match", "names differ",
     {"type": "enum", "name": "Soil", "symbols": ["LOW"]},
     {"type": "enum", "name": "Ground", "symbols": ["LOW"]}, False, [("/", "name-mismatch")], []),
    ("both schemas are fixed whose sizes and (unqualified) names match", "same",
     {"type": "fixed", "name": "a.Tag", "size": 4}, {"type": "fixed", "name": "b.Tag", "size": 4},
     True, [], []),
    ("both schemas are fixed whose sizes and (unqualified) names match", "sizes differ",
     {"type": "fixed", "name": "Tag", "size": 4}, {"type": "fixed", "name": "Tag", "size": 8},
     False, [("/", "fixed-size")], []),
    ("both schemas are fixed whose sizes and (unqualified) names match", "names differ",
     {"type": "fixed", "name": "Tag", "size": 4}, {"type": "fixed", "name": "Mark", "size": 4},
     False, [("/", "name-mismatch")], []),
    ("both schemas are records with the same (unqualified) name", "namespaces differ",
     record("a.Segment"), record("b.Segment"), True, [], []),
    ("both schemas are records with the same (unqualified) name", "names differ",
     record("Segment"), record("Main"), False, [("/", "name-mismatch")], []),
    ("both schemas have same primitive type", "each primitive reads itself",
     ["null", "boolean", "int", "long", "float", "double", "bytes", "string"],
     ["null", "boolean", "int", "long", "float", "double", "bytes", "string"], True, [], []),
    ("both schemas have same primitive type", "different primitives",
     "string", "boolean", False, [("/", "type-mismatch")], []),
    ("the writer's schema may be promoted to the reader's", "int to long",
     "long", "int", True, [], [("/", "promotion")]),
    ("the writer's schema may be promoted to the reader's", "int to float",
     "float", "int", True, [], [("/", "promotion")]),
    ("the writer's schema may be promoted to the reader's", "int to double",
     "double", "int", True, [], [("/", "promotion")]),
    ("the writer's schema may be promoted to the reader's", "long to float",
     "float", "long", True, [], [("/", "promotion")]),
    ("the writer's schema may be promoted to the reader's", "long to double",
     "double", "long", True, [], [("/", "promotion")]),
    ("the writer's schema may be promoted to the reader's", "float to double",
     "double", "float", True, [], [("/", "promotion")]),
    ("the writer's schema may be promoted to the reader's", "string to bytes",
     "bytes", "string", True, [], [("/", "promotion")]),
    ("the writer's schema may be promoted to the reader's", "bytes to string",
     "string", "bytes", True, [], [("/", "promotion")]),
    ("the writer's schema may be promoted to the reader's", "long is not demoted to int",
     "int", "long", False, [("/", "type-mismatch")], []),
    ("the writer's schema may be promoted to the reader's", "double is not demoted to float",
     "float", "double", False, [("/", "type-mismatch")], []),
    # -- if both are records ----------------------------------------------------------------------
    ("if both are records: the ordering of fields may be different", "reordered",
     record("R", field("a", "int"), field("b", "string")),
     record("R", field("b", "string"), field("a", "int")), True, [], []),
    ("if both are records: fields with the same name are resolved recursively", "nested fault",
     record("R", field("diameter_mm", "string")), record("R", field("diameter_mm", "int")), False,
     [("/fields/diameter_mm/type", "type-mismatch")], []),
    ("if both are records: a writer field not in the reader is ignored", "extra writer field",
     record("R", field("a", "int")), record("R", field("a", "int"), field("b", "string")), True,
     [], [("/", "writer-field-ignored")]),
    ("if both are records: a reader field missing in the writer uses its default", "default",
     record("R", field("a", "int"), field("repairs_5y", "int", default=0)),
     record("R", field("a", "int")), True, [], [("/fields/repairs_5y", "default-used")]),
    ("if both are records: a reader field missing in the writer without default is an error",
     "no default", record("R", field("a", "int"), field("repairs_5y", "int")),
     record("R", field("a", "int")), False, [("/fields/repairs_5y", "missing-field")], []),
    # -- if both are enums ------------------------------------------------------------------------
    ("if both are enums: an unknown writer symbol is an error without a reader default",
     "symbol removed", {"type": "enum", "name": "PipeMaterial", "symbols": MATERIAL[:4]},
     {"type": "enum", "name": "PipeMaterial", "symbols": MATERIAL}, False, [("/", "enum-symbol")],
     []),
    ("if both are enums: an unknown writer symbol reads as the reader's default", "enum default",
     {"type": "enum", "name": "PipeMaterial", "symbols": MATERIAL[:4], "default": "CAST_IRON"},
     {"type": "enum", "name": "PipeMaterial", "symbols": MATERIAL}, True, [],
     [("/", "enum-default-used")]),
    ("if both are enums: reader symbols the writer lacks are fine", "symbol added",
     {"type": "enum", "name": "PipeMaterial", "symbols": MATERIAL},
     {"type": "enum", "name": "PipeMaterial", "symbols": MATERIAL[:2]}, True, [], []),
    # -- if both are arrays / maps ----------------------------------------------------------------
    ("if both are arrays: resolved on the item schemas", "promoted items",
     {"type": "array", "items": "double"}, {"type": "array", "items": "int"}, True, [],
     [("/items", "promotion")]),
    ("if both are maps: resolved on the value schemas", "record values",
     {"type": "map", "values": record("R", field("a", "long"), field("b", "int", default=1))},
     {"type": "map", "values": record("R", field("a", "int"))}, True, [],
     [("/values/fields/a/type", "promotion"), ("/values/fields/b", "default-used")]),
    # -- if both are unions -----------------------------------------------------------------------
    ("if both are unions: the first matching reader branch is resolved", "same union",
     ["null", "int"], ["null", "int"], True, [], []),
    ("if both are unions: the first matching reader branch is resolved", "first match promotes",
     ["long", "int"], ["int"], True, [], [("/0", "promotion")]),
    ("if both are unions: a writer branch that matches none is an error", "narrowed",
     ["null", "string"], ["null", "int", "string"], False, [("/", "union-branch-unreadable")], []),
    # -- if reader's is a union, but writer's is not ----------------------------------------------
    ("if reader's is a union, but writer's is not", "matching branch",
     ["null", "long"], "int", True, [], [("/1", "promotion")]),
    ("if reader's is a union, but writer's is not", "no branch matches",
     ["null", "string"], "int", False, [("/", "no-matching-branch")], []),
    # -- if writer's is a union, but reader's is not ----------------------------------------------
    ("if writer's is a union, but reader's is not", "every branch readable",
     "double", ["int", "long", "float"], True, [], [("/", "promotion")]),
    ("if writer's is a union, but reader's is not", "a branch is not readable",
     "string", ["null", "string"], False, [("/", "union-branch-unreadable")], []),
    # -- Aliases ----------------------------------------------------------------------------------
    ("Aliases: a reader record alias names the writer's record", "renamed record",
     record("brackwater.Main", field("a", "int"), aliases=["Segment"]),
     record("brackwater.Segment", field("a", "int")), True, [], [("/", "alias-used")]),
    ("Aliases: a reader field alias names the writer's field", "renamed field",
     record("R", field("mean_pressure_psi", "double", aliases=["mean_pressure_kpa"])),
     record("R", field("mean_pressure_kpa", "double")), True, [],
     [("/fields/mean_pressure_psi", "field-alias-used")]),
    ("Aliases: a writer alias does not help the reader", "writer alias only",
     record("R", field("mean_pressure_kpa", "double")),
     record("R", field("mean_pressure_psi", "double", aliases=["mean_pressure_kpa"])), False,
     [("/fields/mean_pressure_kpa", "missing-field")], []),
    # -- Logical Types ----------------------------------------------------------------------------
    ("Logical Types: decimals match when scales and precisions match", "equal decimals",
     {"type": "bytes", "logicalType": "decimal", "precision": 6, "scale": 2},
     {"type": "bytes", "logicalType": "decimal", "precision": 6, "scale": 2}, True, [], []),
    ("Logical Types: decimals match when scales and precisions match", "scales differ",
     {"type": "bytes", "logicalType": "decimal", "precision": 6, "scale": 3},
     {"type": "bytes", "logicalType": "decimal", "precision": 6, "scale": 2}, False,
     [("/", "decimal-mismatch")], []),
    ("Logical Types: decimals match when scales and precisions match", "fixed precisions differ",
     {"type": "fixed", "name": "Money", "size": 4, "logicalType": "decimal", "precision": 8},
     {"type": "fixed", "name": "Money", "size": 4, "logicalType": "decimal", "precision": 9},
     False, [("/", "decimal-mismatch")], []),
    ("Logical Types: the underlying types resolve, the meaning changes", "millis read as micros",
     {"type": "long", "logicalType": "timestamp-micros"},
     {"type": "long", "logicalType": "timestamp-millis"}, True, [],
     [("/", "logical-type-change")]),
    ("Logical Types: an invalid logical type is ignored", "scale exceeds precision",
     {"type": "bytes", "logicalType": "decimal", "precision": 2, "scale": 3}, "bytes", True, [],
     [("/", "logical-type-ignored")]),
]


def _parse(obj):
    return parse(obj)


@pytest.mark.parametrize("heading, case, reader, writer, compatible, problems, notes", RULES,
                         ids=[f"{row[0]} | {row[1]}" for row in RULES])
def test_schema_resolution_rule(heading, case, reader, writer, compatible, problems, notes):
    # Avro specification, Schema Resolution: the rule named by `heading`.
    if isinstance(reader, list) and isinstance(writer, list) and all(
            isinstance(x, str) for x in reader + writer) and case == "each primitive reads itself":
        for kind in reader:
            assert resolve(parse(kind), parse(kind)).compatible
        return
    result = resolve(_parse(reader), _parse(writer))
    assert result.compatible is compatible, result
    assert [(p.path, p.rule) for p in result.problems] == problems
    found_notes = {(n.path, n.rule) for n in result.notes}
    assert set(notes) <= found_notes, result.notes


def test_union_writer_into_plain_reader_needs_every_branch():
    result = resolve(parse("string"), parse(["null", "string", "int"]))
    assert [p.witness for p in result.problems] == [{"union_branch": "null"},
                                                     {"union_branch": "int"}]
    assert [p.writer_path for p in result.problems] == ["/0", "/2"]


def test_every_problem_is_listed_not_just_the_first():
    reader = parse(record("Segment", field("diameter_mm", "string"),
                          field("pipe_material", {"type": "enum", "name": "PipeMaterial",
                                                  "symbols": MATERIAL[:3]}),
                          field("repairs_5y", "int")))
    writer = parse(record("Segment", field("diameter_mm", "int"),
                          field("pipe_material", {"type": "enum", "name": "PipeMaterial",
                                                  "symbols": MATERIAL})))
    result = resolve(reader, writer)
    assert [(p.path, p.rule, p.witness) for p in result.problems] == [
        ("/fields/diameter_mm/type", "type-mismatch", {"writer_field": "diameter_mm"}),
        ("/fields/pipe_material/type", "enum-symbol", {"enum_symbol": "HDPE"}),
        ("/fields/pipe_material/type", "enum-symbol", {"enum_symbol": "ASBESTOS_CEMENT"}),
        ("/fields/repairs_5y", "missing-field", {"reader_field": "repairs_5y"}),
    ]


def test_recursive_schemas_terminate():
    node = record("Node", field("value", "long"), field("next", ["null", "Node"]))
    older = record("Node", field("value", "int"), field("next", ["null", "Node"]))
    result = resolve(parse(node), parse(older))
    assert result.compatible
    assert [n.path for n in result.notes if n.rule == "promotion"] == ["/fields/value/type"]


def test_mutually_recursive_schemas_report_a_fault_once():
    reader = record("A", field("b", ["null", record("B", field("a", ["null", "A"]),
                                                    field("x", "string"))]))
    writer = record("A", field("b", ["null", record("B", field("a", ["null", "A"]),
                                                    field("x", "int"))]))
    result = resolve(parse(reader), parse(writer))
    assert [(p.path, p.writer_path) for p in result.problems] == [
        ("/fields/b/type/1/fields/x/type", "/fields/b/type/1/fields/x/type")]


def test_direction_helpers():
    old = parse(record("R", field("a", "int")))
    new = parse(record("R", field("a", "int"), field("b", "int")))
    assert not check_backward(new, old).compatible  # new reads old: b has no default
    assert check_forward(new, old).compatible  # old reads new: b is ignored
    both = check_both(new, old)
    assert not both.compatible and [p.direction for p in both.problems] == ["backward"]
    assert [(n.direction, n.rule) for n in both.notes] == [("forward", "writer-field-ignored")]
    assert reads(new, old) == resolve(new, old)
    assert [r.compatible for r in check_against_all(new, [old, new])] == [False, True]


def test_deep_nesting_resolves_and_describes_without_recursion_limit():
    deep: object = "int"
    for _ in range(3000):
        deep = {"type": "array", "items": deep}
    reader = parse(deep)
    result = resolve(reader, parse({"type": "map", "values": "int"}))
    assert result.problems[0].message.endswith("array of array of array of array of ...")
    assert repr(reader).startswith("Array(array of")
    assert resolve(reader, parse(deep)).compatible
