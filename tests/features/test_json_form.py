"""Feature definitions in the JSON form the catalogue stores (docs/stored-shapes.md): a round
trip through registry.features, strict JSON, and the same checks a definitions file gets."""

import json
from pathlib import Path

import pytest

from registry import schema as avro
from registry.errors import UserError
from registry.features import (
    NumericRange,
    check_features,
    definitions_from_json,
    definitions_json,
    parse_feature_file,
)
from tests.features.test_definitions import FULL

SEED = Path(__file__).resolve().parents[2] / "seed_data"


def _strict(text: str):
    """RFC 8259 JSON only: no NaN or Infinity tokens, which Python's reader would accept."""
    def refuse(token):
        raise AssertionError(f"{token} is not JSON (RFC 8259)")

    return json.loads(text, parse_constant=refuse)


@pytest.mark.parametrize("path", sorted(SEED.glob("*/features/*.toml")), ids=lambda p: p.name)
def test_every_seed_definitions_file_round_trips_through_the_stored_form(path):
    definitions = parse_feature_file(path.read_text(encoding="utf-8"), origin=path.name)
    stored = definitions_json(definitions)
    items = _strict(stored)
    assert [item["path"] for item in items] == list(definitions.paths)
    assert definitions_from_json(stored, origin="stored") == definitions


def test_the_stored_form_names_every_key_of_a_definition():
    definitions = parse_feature_file(FULL, origin="v1.toml")
    items = _strict(definitions_json(definitions))
    assert items[0] == {
        "path": "mean_pressure_kpa", "description": "Mean pressure over seven days",
        "unit": "kPa", "range": [0, 1200], "nullable": True,
        "source": {"dataset": "brackwater-telemetry-extract", "column": "mean_pressure_kpa"},
        "transform": "mean of hourly readings", "owner": "priya.raman"}
    assert items[1] == {"path": "soil_corrosivity", "description": "Soil class",
                        "categories": ["LOW", "MODERATE", "HIGH"]}


def test_an_unbounded_range_end_is_null_and_reads_back_as_infinity():
    definitions = parse_feature_file(
        '[features.x]\ndescription = "x"\nunit = "1"\nrange = [-inf, 5]\n'
        '[features.y]\ndescription = "y"\nunit = "1"\nrange = [0, inf]\n', origin="f.toml")
    stored = definitions_json(definitions)
    assert [item["range"] for item in _strict(stored)] == [[None, 5], [0, None]]
    again = definitions_from_json(stored, origin="stored")
    assert again.get("x").domain == NumericRange(float("-inf"), 5)
    assert again.get("y").domain == NumericRange(0, float("inf"))


def test_the_stored_form_checks_against_the_schema_like_the_file():
    folder = SEED / "brackwater"
    definitions = parse_feature_file(
        (folder / "features" / "main-burst-risk-v2.toml").read_text(encoding="utf-8"),
        origin="v2")
    schema = avro.load((folder / "schemas" / "segment-v2.avsc").read_text())
    again = definitions_from_json(definitions_json(definitions), origin="stored")
    assert check_features(again, schema) == check_features(definitions, schema)


@pytest.mark.parametrize(("text", "message"), [
    ('{"path": "x"}', "must be a JSON array"),
    ('[{"description": "x"}]', "object with a path"),
    ('[{"path": "x", "description": "x"}, {"path": "x", "description": "y"}]', "defined twice"),
    ('[{"path": "x", "description": "x", "colour": "red"}]', "unknown keys colour"),
    ('[{"path": "x", "description": "x", "unit": "kpa"}]', "kpa"),
    ("[{", "not JSON"),
])
def test_unreadable_stored_definitions_are_a_clear_error(text, message):
    with pytest.raises(UserError, match=message):
        definitions_from_json(text, origin="stored")
