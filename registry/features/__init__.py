"""Feature definitions: what each input field means, and how that meaning changes."""

from registry.features.definitions import (
    Categories,
    FeatureDefinition,
    FeatureDefinitionError,
    FeatureDefinitions,
    NumericRange,
    Source,
    features_from_manifest,
    load_feature_definitions,
    parse_feature_file,
    parse_feature_table,
    render_feature_file,
)
from registry.features.diff import FeatureChange, FeatureDiff, diff_features
from registry.features.fields import SchemaField, schema_fields
from registry.features.json_form import (
    definitions_from_json,
    definitions_json,
    feature_list,
    parse_feature_list,
)
from registry.features.rules import (
    FeatureCheck,
    FeatureProblem,
    UnknownFeatureField,
    check_features,
)
from registry.features.units import Unit, UnitComparison, UnknownUnit, compare_units, parse_unit

__all__ = [
    "Categories", "FeatureChange", "FeatureCheck", "FeatureDefinition",
    "FeatureDefinitionError", "FeatureDefinitions", "FeatureDiff", "FeatureProblem",
    "NumericRange", "SchemaField", "Source", "Unit", "UnitComparison", "UnknownFeatureField",
    "UnknownUnit", "check_features", "compare_units", "definitions_from_json",
    "definitions_json", "diff_features", "feature_list", "features_from_manifest",
    "load_feature_definitions", "parse_feature_file", "parse_feature_list",
    "parse_feature_table", "parse_unit", "render_feature_file", "schema_fields",
]
