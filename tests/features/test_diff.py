"""The semantic diff of feature definitions between versions, each change classed."""

import pytest

from registry.features import diff_features, parse_feature_file

SEGMENT_V2 = {"type": "record", "name": "Segment", "namespace": "brackwater.assets", "fields": [
    {"name": "segment_id", "type": "string"},
    {"name": "mean_pressure_kpa", "type": "double"},
]}
SEGMENT_V3 = {"type": "record", "name": "Segment", "namespace": "brackwater.assets", "fields": [
    {"name": "segment_id", "type": "string"},
    {"name": "mean_pressure_psi", "type": "double", "aliases": ["mean_pressure_kpa"]},
]}
KEY = '[features.segment_id]\ndescription = "key"\n'


def definitions(text):
    return parse_feature_file(text, origin="f.toml")


def one(name, body):
    return definitions(f'[features.{name}]\ndescription = "d"\n{body}\n')


def changes_of(diff):
    return [(change.change, change.severity) for change in diff.changes]


def test_a_rename_through_an_alias_with_a_new_unit_is_breaking_with_the_factor():
    old = definitions(KEY + '[features.mean_pressure_kpa]\ndescription = "p"\nunit = "kPa"\n')
    new = definitions(KEY + '[features.mean_pressure_psi]\ndescription = "p"\nunit = "[psi]"\n')
    diff = diff_features(old, SEGMENT_V2, new, SEGMENT_V3)
    assert diff.verdict == "breaking" and diff.is_breaking
    assert changes_of(diff) == [("renamed", "safe"), ("unit-changed", "breaking")]
    unit_change = diff.changes[1]
    assert (unit_change.path, unit_change.old_path) == ("mean_pressure_psi", "mean_pressure_kpa")
    # NIST SP 811, Appendix B.8: 1 psi = 6.894 757 kPa, so a kPa value times 0.145 037 7.
    assert unit_change.factor == pytest.approx(0.1450377, rel=1e-6)


def test_a_rename_through_an_alias_keeping_its_meaning_is_safe():
    old = definitions(KEY + '[features.mean_pressure_kpa]\ndescription = "p"\nunit = "kPa"\n')
    new = definitions(KEY + '[features.mean_pressure_psi]\ndescription = "p"\nunit = "kPa"\n')
    diff = diff_features(old, SEGMENT_V2, new, SEGMENT_V3)
    assert diff.verdict == "safe"
    assert changes_of(diff) == [("renamed", "safe")]


def test_without_schemas_a_rename_is_a_removal_and_an_addition():
    old = definitions('[features.mean_pressure_kpa]\ndescription = "p"\nunit = "kPa"\n')
    new = definitions('[features.mean_pressure_psi]\ndescription = "p"\nunit = "[psi]"\n')
    diff = diff_features(old, None, new, None)
    assert changes_of(diff) == [("added", "safe"), ("removed", "safe")]


@pytest.mark.parametrize(("before", "after", "expected"), [
    ('unit = "mm"', 'unit = "kPa"', [("unit-changed", "breaking")]),
    ('unit = "m/s"', 'unit = "m.s-1"', [("unit-respelled", "safe")]),
    ('unit = "{count}"', 'unit = "{repairs}"', [("unit-annotation-changed", "needs-review")]),
    ('unit = "Cel"', 'unit = "[degF]"', [("unit-changed", "breaking")]),
    ('unit = "1"', "", [("unit-removed", "needs-review")]),
    ('unit = "1"\nrange = [0, 10]', 'unit = "1"\nrange = [0, 20]', [("domain-widened", "safe")]),
    ('unit = "1"\nrange = [0, 10]', 'unit = "1"\nrange = [2, 8]',
     [("domain-narrowed", "needs-review")]),
    ('unit = "1"\nrange = [0, 10]', 'unit = "1"\nrange = [5, 15]',
     [("domain-shifted", "needs-review")]),
    ('unit = "1"', 'unit = "1"\nrange = [0, 1]', [("domain-added", "needs-review")]),
    ('categories = ["A", "B"]', 'categories = ["B", "A", "C"]', [("categories-added", "safe")]),
    ('categories = ["A", "B"]', 'categories = ["A"]', [("categories-removed", "breaking")]),
    ('unit = "1"\nrange = [0, 1]', 'unit = "1"\ncategories = [0, 1]',
     [("domain-kind-changed", "breaking")]),
    ("nullable = false", "nullable = true", [("nullability-changed", "safe")]),
    ("nullable = true", "nullable = false", [("nullability-changed", "breaking")]),
    ('transform = "mean"', 'transform = "median"', [("transform-changed", "needs-review")]),
    ('source = { dataset = "a", column = "x" }', 'source = { dataset = "b", column = "x" }',
     [("source-changed", "needs-review")]),
    ('owner = "ines.okafor"', 'owner = "priya.raman"', [("owner-changed", "safe")]),
])
def test_each_kind_of_change_is_classed(before, after, expected):
    diff = diff_features(one("x", before), None, one("x", after), None)
    assert changes_of(diff) == expected


def test_a_range_is_compared_in_the_new_unit():
    # 1200 kPa is 174.045 psi (NIST SP 811, B.8), so [0, 175] psi widens [0, 1200] kPa.
    diff = diff_features(one("p", 'unit = "kPa"\nrange = [0, 1200]'), None,
                         one("p", 'unit = "[psi]"\nrange = [0, 175]'), None)
    assert changes_of(diff) == [("unit-changed", "breaking"), ("domain-widened", "safe")]
    assert diff.changes[1].before[1] == pytest.approx(1200 / 6.894757, rel=1e-6)


def test_a_changed_field_type_needs_review():
    old_schema = {"type": "record", "name": "R", "fields": [{"name": "d", "type": "int"}]}
    new_schema = {"type": "record", "name": "R", "fields": [{"name": "d", "type": "string"}]}
    diff = diff_features(one("d", 'unit = "mm"'), old_schema, one("d", ""), new_schema)
    assert ("type-changed", "needs-review") in changes_of(diff)


def test_identical_definitions_have_no_changes():
    text = KEY + '[features.mean_pressure_kpa]\ndescription = "p"\nunit = "kPa"\n'
    diff = diff_features(definitions(text), SEGMENT_V2, definitions(text), SEGMENT_V2)
    assert diff.verdict == "safe" and diff.changes == ()


def test_with_schemas_a_definition_for_a_missing_field_is_an_error():
    from registry.features import UnknownFeatureField

    with pytest.raises(UnknownFeatureField) as caught:
        diff_features(one("nowhere", ""), SEGMENT_V2, one("segment_id", ""), SEGMENT_V2)
    assert caught.value.place == "f.toml [features.nowhere]"
