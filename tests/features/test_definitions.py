"""Feature definitions read from TOML: every key, dotted paths, each error with its place."""

import pytest

from registry.features import (Categories, FeatureDefinitionError, NumericRange, Source,
                               render_feature_file,
                               UnknownUnit, features_from_manifest, parse_feature_file)

FULL = """
[features.mean_pressure_kpa]
description = "Mean pressure over seven days"
unit = "kPa"
range = [0, 1200]
nullable = true
source = { dataset = "brackwater-telemetry-extract", column = "mean_pressure_kpa" }
transform = "mean of hourly readings"
owner = "priya.raman"

[features.soil_corrosivity]
description = "Soil class"
categories = ["LOW", "MODERATE", "HIGH"]
"""


def test_every_key_of_a_definition_is_read():
    definitions = parse_feature_file(FULL, origin="v1.toml")
    pressure = definitions.get("mean_pressure_kpa")
    assert pressure.unit == "kPa"
    assert pressure.domain == NumericRange(0, 1200)
    assert pressure.nullable is True
    assert pressure.source == Source("brackwater-telemetry-extract", "mean_pressure_kpa")
    assert pressure.transform == "mean of hourly readings"
    assert pressure.owner == "priya.raman"
    soil = definitions.get("soil_corrosivity")
    assert soil.domain == Categories(("LOW", "MODERATE", "HIGH"))
    assert soil.nullable is False and soil.unit is None
    assert definitions.paths == ("mean_pressure_kpa", "soil_corrosivity")


def test_dotted_paths_may_be_quoted_or_nested_tables():
    text = """
[features."location.easting"]
description = "Easting"
unit = "m"

[features.location.northing]
description = "Northing"
unit = "m"
"""
    definitions = parse_feature_file(text, origin="f.toml")
    assert definitions.paths == ("location.easting", "location.northing")


def test_an_open_ended_range_uses_inf():
    definitions = parse_feature_file(
        '[features.x]\ndescription = "x"\nunit = "1"\nrange = [0, inf]\n', origin="f.toml")
    assert definitions.get("x").domain == NumericRange(0, float("inf"))


@pytest.mark.parametrize(("body", "place", "message"), [
    ('description = "x"\ncolour = "red"', "f.toml [features.x]", "unknown keys colour"),
    ('unit = "m"', "f.toml [features.x].description", "description"),
    ('description = "x"\nrange = [1]', "f.toml [features.x].range", "two numbers"),
    ('description = "x"\nrange = [5, 1]', "f.toml [features.x].range", "greater"),
    ('description = "x"\nrange = [0, 1]\ncategories = ["a"]', "f.toml [features.x]",
     "not both"),
    ('description = "x"\ncategories = ["a", "a"]', "f.toml [features.x].categories", "repeat"),
    ('description = "x"\ncategories = ["a", 1]', "f.toml [features.x].categories", "all be"),
    ('description = "x"\nnullable = "yes"', "f.toml [features.x].nullable", "true or false"),
    ('description = "x"\nsource = { dataset = "d" }', "f.toml [features.x].source.column",
     "column"),
])
def test_a_bad_definition_names_its_place(body, place, message):
    with pytest.raises(FeatureDefinitionError, match=message) as caught:
        parse_feature_file(f"[features.x]\n{body}\n", origin="f.toml")
    assert caught.value.place == place


def test_an_unknown_unit_names_the_definition_and_key():
    with pytest.raises(UnknownUnit) as caught:
        parse_feature_file('[features.p]\ndescription = "p"\nunit = "kpa"\n', origin="f.toml")
    assert caught.value.place == "f.toml [features.p].unit"


def test_a_file_holds_only_a_features_table():
    with pytest.raises(FeatureDefinitionError, match="unknown top-level keys owner"):
        parse_feature_file('owner = "x"\n[features.x]\ndescription = "x"\n', origin="f.toml")
    with pytest.raises(FeatureDefinitionError, match="not valid TOML"):
        parse_feature_file("[features.x\n", origin="f.toml")


def test_a_manifest_may_name_a_file_or_hold_the_table(tmp_path):
    (tmp_path / "features").mkdir()
    (tmp_path / "features" / "v1.toml").write_text(FULL)
    by_path = features_from_manifest({"features": "features/v1.toml"},
                                     manifest_path=tmp_path / "m.toml")
    inline = features_from_manifest(
        {"features": {"x": {"description": "x", "unit": "mm"}}},
        manifest_path=tmp_path / "m.toml")
    assert by_path.paths == ("mean_pressure_kpa", "soil_corrosivity")
    assert inline.get("x").place == "m.toml [features.x]"
    assert features_from_manifest({}, manifest_path=tmp_path / "m.toml") is None


def test_rendered_definitions_read_back_unchanged():
    text = FULL + """
[features."location.easting"]
description = "Easting, \\"projected\\"\\tmetres é"
unit = "m"
range = [-inf, 1.5]
"""
    definitions = parse_feature_file(text, origin="f.toml")
    rendered = render_feature_file(definitions)
    assert parse_feature_file(rendered, origin="again.toml") == definitions
