"""`lockkeeper document inspect` and `lockkeeper features check|diff` through the command line."""

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from registry.cli import main
from .pfa_examples import LOGISTIC_REGRESSION
from tests.cli_errors import assert_one_line_error

SEED = Path(__file__).resolve().parents[2] / "seed_data"

SEGMENT = LOGISTIC_REGRESSION["input"]
FEATURES = """
[features.segment_id]
description = "Segment key"

[features.pipe_age_years]
description = "Age"
unit = "a"
range = [0, 150]

[features.mean_pressure_kpa]
description = "Mean pressure"
unit = "kPa"
range = [0, 1200]
"""


def run(*arguments):
    return CliRunner().invoke(main, [str(argument) for argument in arguments])


def write(path: Path, content) -> Path:
    if isinstance(content, (dict, list)):
        content = json.dumps(content, indent=2)
    path.write_text(content, encoding="utf-8")
    return path


@pytest.fixture
def files(tmp_path):
    (tmp_path / "schemas").mkdir()
    write(tmp_path / "schemas" / "segment.avsc", SEGMENT)
    write(tmp_path / "schemas" / "burst-risk.avsc", LOGISTIC_REGRESSION["output"])
    write(tmp_path / "v1.pfa.json", LOGISTIC_REGRESSION)
    write(tmp_path / "features.toml", FEATURES)
    write(tmp_path / "manifest.toml", 'input_schema = "schemas/segment.avsc"\n'
          'output_schema = "schemas/burst-risk.avsc"\nfeatures = "features.toml"\n')
    return tmp_path


def test_inspect_reports_one_json_document(files):
    result = run("document", "inspect", files / "v1.pfa.json", "--manifest",
                 files / "manifest.toml", "--json")
    assert result.exit_code == 0, result.output
    report = json.loads(result.stdout)
    assert report["kind"] == "pfa" and report["method"] == "map"
    assert report["input_schema"]["name"] == "brackwater.assets.Segment"
    assert report["cells"][0]["name"] == "model" and report["cells"][0]["items"] == 2
    assert len(report["digest"]) == 64 and report["function_count"] == 0


def test_inspect_prints_a_summary_for_a_person(files):
    result = run("document", "inspect", files / "v1.pfa.json")
    assert result.exit_code == 0
    assert "record brackwater.assets.Segment" in result.stdout
    assert "cell     model" in result.stdout


def test_inspect_of_malformed_json_names_line_and_column(files):
    write(files / "bad.pfa", '{"input": "int",\n "output": "int" "action": 1}')
    assert_one_line_error(run("document", "inspect", files / "bad.pfa"),
                          "bad.pfa line 2, column 18", "not valid JSON")


def test_inspect_of_a_document_without_input_names_the_place(files):
    document = {key: value for key, value in LOGISTIC_REGRESSION.items() if key != "input"}
    write(files / "no-input.pfa", document)
    assert_one_line_error(run("document", "inspect", files / "no-input.pfa"),
                          "no-input.pfa /input", "input schema")


def test_inspect_of_a_schema_error_names_its_path_in_the_document(files):
    document = json.loads(json.dumps(LOGISTIC_REGRESSION))
    document["input"]["fields"][2]["type"] = {"type": "fixed", "name": "F"}
    write(files / "broken.pfa", document)
    assert_one_line_error(run("document", "inspect", files / "broken.pfa"),
                          "broken.pfa /input/fields/2/type")


def test_inspect_with_a_contradicting_manifest_names_the_manifest_key(files):
    other = json.loads(json.dumps(SEGMENT))
    other["fields"][2]["name"] = "mean_pressure_psi"
    write(files / "schemas" / "segment.avsc", other)
    assert_one_line_error(
        run("document", "inspect", files / "v1.pfa.json", "--manifest", files / "manifest.toml"),
        "manifest input_schema", "contradicts")


def test_features_check_passes_and_reports_json(files):
    result = run("features", "check", files / "features.toml", "--schema",
                 files / "schemas" / "segment.avsc", "--json")
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout) == {"passed": True, "fields": 3, "defined": 3,
                                         "missing": [], "problems": []}


def test_features_check_reads_the_definitions_a_manifest_names(files):
    result = run("features", "check", files / "manifest.toml", "--schema",
                 files / "schemas" / "segment.avsc")
    assert result.exit_code == 0, result.output


def test_features_check_exits_1_when_coverage_fails(files):
    write(files / "partial.toml", FEATURES.split("[features.mean_pressure_kpa]")[0])
    result = run("features", "check", files / "partial.toml", "--schema",
                 files / "schemas" / "segment.avsc", "--json")
    assert result.exit_code == 1
    report = json.loads(result.stdout)
    assert report["missing"] == ["mean_pressure_kpa"] and not report["passed"]


def test_features_check_of_an_unknown_unit_names_the_definition(files):
    write(files / "bad-unit.toml", FEATURES.replace('"kPa"', '"kpa"'))
    assert_one_line_error(run("features", "check", files / "bad-unit.toml", "--schema",
                              files / "schemas" / "segment.avsc"),
                          "bad-unit.toml [features.mean_pressure_kpa].unit", "'kpa'")


def test_features_check_of_a_definition_for_a_missing_field_names_it(files):
    write(files / "extra.toml", FEATURES + '\n[features.repairs_5y]\ndescription = "r"\n'
          'unit = "{count}"\n')
    assert_one_line_error(run("features", "check", files / "extra.toml", "--schema",
                              files / "schemas" / "segment.avsc"),
                          "extra.toml [features.repairs_5y]", "no field 'repairs_5y'")


def test_features_diff_exits_1_on_a_breaking_change(files):
    renamed = json.loads(json.dumps(SEGMENT))
    renamed["fields"][2].update(name="mean_pressure_psi", aliases=["mean_pressure_kpa"])
    write(files / "schemas" / "segment-v2.avsc", renamed)
    write(files / "v2.toml", FEATURES.replace("mean_pressure_kpa]", "mean_pressure_psi]")
          .replace('"kPa"', '"[psi]"').replace("[0, 1200]", "[0, 175]"))
    result = run("features", "diff", files / "features.toml", files / "v2.toml",
                 "--old-schema", files / "schemas" / "segment.avsc",
                 "--new-schema", files / "schemas" / "segment-v2.avsc", "--json")
    assert result.exit_code == 1, result.output
    report = json.loads(result.stdout)
    assert report["verdict"] == "breaking" and report["breaking"] is True
    unit_change = next(c for c in report["changes"] if c["change"] == "unit-changed")
    # NIST SP 811, Appendix B.8: 1 psi = 6.894 757 kPa.
    assert unit_change["factor"] == pytest.approx(1 / 6.894757, rel=1e-6)
    assert unit_change["old_path"] == "mean_pressure_kpa"


def test_features_diff_of_identical_definitions_is_safe(files):
    result = run("features", "diff", files / "features.toml", files / "features.toml")
    assert result.exit_code == 0
    assert result.stdout.startswith("verdict: safe")


def test_features_diff_needs_both_schemas_or_neither(files):
    assert_one_line_error(run("features", "diff", files / "features.toml",
                              files / "features.toml", "--old-schema",
                              files / "schemas" / "segment.avsc"), "--new-schema")


def test_a_missing_file_is_one_line_naming_it(files):
    assert_one_line_error(run("document", "inspect", files / "nowhere.pfa"), "nowhere.pfa",
                          "no such file")


# --- the demo's feature definitions against the demo's schemas ------------------------------

def _seed(path: str) -> Path:
    full = SEED / path
    if not full.exists():
        pytest.skip(f"{path} is written by the seed data generator (another branch)")
    return full


@pytest.mark.parametrize(("features", "schema"), [
    ("brackwater/features/main-burst-risk-v1.toml", "brackwater/schemas/segment-v1.avsc"),
    ("brackwater/features/main-burst-risk-v2.toml", "brackwater/schemas/segment-v2.avsc"),
    ("brackwater/features/main-burst-risk-v3.toml", "brackwater/schemas/segment-v3.avsc"),
    ("brackwater/features/main-burst-risk-v4.toml", "brackwater/schemas/segment-v4.avsc"),
    ("night_flow/features/night-flow-leak-v1.toml", "night_flow/schemas/meter-area-v1.avsc"),
])
def test_the_demo_definitions_cover_their_schemas(features, schema):
    result = run("features", "check", SEED / features, "--schema", _seed(schema))
    assert result.exit_code == 0, result.output


def test_the_demo_catches_v3s_switch_from_kpa_to_psi():
    result = run("features", "diff", SEED / "brackwater/features/main-burst-risk-v2.toml",
                 SEED / "brackwater/features/main-burst-risk-v3.toml",
                 "--old-schema", _seed("brackwater/schemas/segment-v2.avsc"),
                 "--new-schema", _seed("brackwater/schemas/segment-v3.avsc"), "--json")
    assert result.exit_code == 1
    changes = json.loads(result.stdout)["changes"]
    assert {"renamed", "unit-changed"} <= {change["change"] for change in changes}


def test_the_demo_v2_only_adds_a_feature():
    result = run("features", "diff", SEED / "brackwater/features/main-burst-risk-v1.toml",
                 SEED / "brackwater/features/main-burst-risk-v2.toml", "--json")
    assert result.exit_code == 0
    changes = json.loads(result.stdout)["changes"]
    assert [(c["path"], c["change"]) for c in changes] == [("repairs_5y", "added")]


@pytest.mark.parametrize("version", [1, 2, 3, 4])
def test_the_demo_documents_agree_with_their_manifests(version):
    manifest = _seed(f"brackwater/manifests/main-burst-risk-v{version}.toml")
    document = _seed(f"brackwater/documents/main-burst-risk-v{version}.pfa.json")
    result = run("document", "inspect", document, "--manifest", manifest, "--json")
    assert result.exit_code == 0, result.output
    result = run("features", "check", manifest, "--schema",
                 _seed(f"brackwater/schemas/segment-v{version}.avsc"))
    assert result.exit_code == 0, result.output


def test_inspect_of_an_artifact_takes_its_schemas_from_the_manifest(files):
    (files / "model.onnx").write_bytes(b"\x08\x07onnx bytes")
    result = run("document", "inspect", files / "model.onnx", "--manifest",
                 files / "manifest.toml", "--json")
    assert result.exit_code == 0, result.output
    report = json.loads(result.stdout)
    assert report["kind"] == "artifact" and report["method"] is None
    assert report["input_schema"]["name"] == "brackwater.assets.Segment"
    assert_one_line_error(run("document", "inspect", files / "model.onnx"),
                          "manifest input_schema", "artifact")
    write(files / "estimator.json", {"weights": [1, 2]})
    result = run("document", "inspect", files / "estimator.json", "--kind", "artifact",
                 "--manifest", files / "manifest.toml", "--json")
    assert json.loads(result.stdout)["kind"] == "artifact"
