"""Definitions held against the input schema: coverage and consistency."""

import pytest

from registry.features import UnknownFeatureField, check_features, parse_feature_file


def record(*fields):
    return {"type": "record", "name": "Segment", "namespace": "brackwater.assets",
            "fields": list(fields)}


def definitions(text):
    return parse_feature_file(text, origin="f.toml")


def rules_of(check):
    return [(problem.path, problem.rule) for problem in check.problems]


def test_every_leaf_needs_a_definition_and_the_missing_ones_are_listed():
    schema = record({"name": "segment_id", "type": "string"},
                    {"name": "diameter_mm", "type": "int"})
    check = check_features(definitions('[features.segment_id]\ndescription = "key"\n'), schema)
    assert not check.passed
    assert check.missing == ("diameter_mm",)
    assert rules_of(check) == [("diameter_mm", "missing-definition")]
    assert (check.fields, check.defined) == (2, 1)


def test_a_definition_for_a_field_the_schema_lacks_is_an_error():
    schema = record({"name": "segment_id", "type": "string"})
    with pytest.raises(UnknownFeatureField) as caught:
        check_features(definitions('[features.segmentid]\ndescription = "typo"\n'), schema)
    assert caught.value.place == "f.toml [features.segmentid]"


def test_nested_records_are_addressed_by_dotted_path():
    location = {"type": "record", "name": "Location", "fields": [
        {"name": "easting", "type": "double"}]}
    schema = record({"name": "location", "type": location})
    check = check_features(definitions(
        '[features."location.easting"]\ndescription = "e"\nunit = "m"\n'), schema)
    assert check.passed


def test_categories_must_match_the_enum_symbols_both_ways():
    soil = {"type": "enum", "name": "SoilCorrosivity", "symbols": ["LOW", "MODERATE", "HIGH"]}
    schema = record({"name": "soil_corrosivity", "type": soil})
    check = check_features(definitions(
        '[features.soil_corrosivity]\ndescription = "s"\ncategories = ["LOW", "SEVERE"]\n'),
        schema)
    messages = [problem.message for problem in check.problems]
    assert rules_of(check) == [("soil_corrosivity", "categories-vs-symbols")] * 2
    assert "SEVERE" in messages[0] and "MODERATE, HIGH" in messages[1]


def test_nullability_must_match_a_union_with_null_both_ways():
    schema = record({"name": "a", "type": ["null", "double"]}, {"name": "b", "type": "double"})
    check = check_features(definitions(
        '[features.a]\ndescription = "a"\nunit = "m"\n'
        '[features.b]\ndescription = "b"\nunit = "m"\nnullable = true\n'), schema)
    assert rules_of(check) == [("a", "nullability"), ("b", "nullability")]


def test_a_numeric_field_needs_a_unit_and_a_text_field_may_not_have_one():
    schema = record({"name": "n", "type": "int"}, {"name": "s", "type": "string"})
    check = check_features(definitions(
        '[features.n]\ndescription = "n"\n[features.s]\ndescription = "s"\nunit = "m"\n'),
        schema)
    assert rules_of(check) == [("n", "unit-vs-type"), ("s", "unit-vs-type")]


@pytest.mark.parametrize(("field_type", "domain", "passes"), [
    ("int", "range = [0, 100]", True),
    ("int", "range = [0, inf]", True),
    # Avro specification, Primitive Types: int is a 32-bit signed integer.
    ("int", "range = [0, 3000000000]", False),
    ("long", "range = [0, 3000000000]", True),
    ("int", "range = [0.2, 0.8]", False),  # holds no integer
    ("double", "range = [0.2, 0.8]", True),
    ("float", "range = [0, 1e39]", False),  # beyond the largest IEEE 754 binary32 value
    ("string", "range = [0, 1]", False),
    ("string", 'categories = ["NORTHGATE", "RIVERSIDE"]', True),
    ("int", "categories = [0, 1]", True),
    ("int", 'categories = ["0", "1"]', False),
    ("double", "categories = [0, 1]", False),
])
def test_a_domain_must_suit_the_type(field_type, domain, passes):
    unit = 'unit = "1"\n' if field_type in ("int", "long", "float", "double") else ""
    schema = record({"name": "x", "type": field_type})
    check = check_features(definitions(f'[features.x]\ndescription = "x"\n{unit}{domain}\n'),
                           schema)
    assert check.passed is passes, check.problems
