"""`lockkeeper schema check|diff|fingerprint`: JSON shapes, exit codes and bad input."""

from __future__ import annotations

import json

import fastavro
import pytest
from click.testing import CliRunner

from registry.cli import main
from .test_parse import BAD_SCHEMAS

V1 = {"type": "record", "name": "Segment", "namespace": "brackwater", "fields": [
    {"name": "segment_id", "type": "string"},
    {"name": "diameter_mm", "type": "int"},
    {"name": "pipe_material", "type": {"type": "enum", "name": "PipeMaterial", "symbols": [
        "CAST_IRON", "DUCTILE_IRON", "PVC", "HDPE", "ASBESTOS_CEMENT"]}}]}
V2 = {**V1, "fields": V1["fields"] + [{"name": "repairs_5y", "type": "int", "default": 0}]}
V4 = {**V1, "fields": [V1["fields"][0], {"name": "diameter_mm", "type": "string"},
                       V1["fields"][2]]}


@pytest.fixture
def files(tmp_path):
    def write(name, content):
        path = tmp_path / name
        path.write_text(content if isinstance(content, str) else json.dumps(content))
        return str(path)
    return write


def run(*args):
    return CliRunner().invoke(main, ["schema", *args])


def test_check_compatible_exits_0_with_the_json_shape(files):
    result = run("check", files("v2.avsc", V2), files("v1.avsc", V1), "--json")
    assert result.exit_code == 0, result.stderr
    document = json.loads(result.stdout)
    assert document["compatible"] is True and document["problems"] == []
    assert {"path": "/fields/repairs_5y", "rule": "default-used"}.items() <= \
        document["notes"][0].items()


def test_check_incompatible_exits_1_naming_the_reader_path(files):
    result = run("check", files("v4.avsc", V4), files("v1.avsc", V1), "--json")
    assert result.exit_code == 1
    document = json.loads(result.stdout)
    assert document["compatible"] is False
    (problem,) = document["problems"]
    assert problem["path"] == "/fields/diameter_mm/type"
    assert {"path", "rule", "message"} <= problem.keys()


def test_check_text_output(files):
    result = run("check", files("v4.avsc", V4), files("v1.avsc", V1))
    assert result.exit_code == 1
    assert result.stdout.startswith("incompatible: 1 problem")


def test_diff_lists_classified_changes(files):
    result = run("diff", files("v1.avsc", V1), files("v4.avsc", V4), "--json")
    assert result.exit_code == 1  # a breaking change, as `features diff` and `schema check` say
    changes = json.loads(result.stdout)["changes"]
    assert [(c["path"], c["classification"]) for c in changes] == [
        ("/fields/diameter_mm/type", "breaking-for-readers"),
        ("/fields/diameter_mm/type", "breaking-for-writers")]
    assert set(changes[0]) == {"path", "kind", "message", "classification"}


def test_diff_with_only_safe_changes_exits_0(files):
    result = run("diff", files("v1.avsc", V1), files("v2.avsc", V2), "--json")
    assert result.exit_code == 0, result.output
    assert {c["classification"] for c in json.loads(result.stdout)["changes"]} <= {"safe"}


def test_fingerprint_json_matches_fastavro(files):
    result = run("fingerprint", files("v1.avsc", V1), "--json")
    assert result.exit_code == 0
    document = json.loads(result.stdout)
    assert set(document) == {"canonical_form", "crc64_avro", "sha256"}
    # fastavro.schema.to_parsing_canonical_form / fingerprint (the oracle)
    assert document["canonical_form"] == fastavro.schema.to_parsing_canonical_form(V1)
    assert document["crc64_avro"] == fastavro.schema.fingerprint(document["canonical_form"],
                                                                 "CRC-64-AVRO")


def _assert_one_line_exit_2(result, place):
    assert result.exit_code == 2
    if result.stdout:  # under --json the error is also the one JSON document on stdout
        error = json.loads(result.stdout)["error"]
        assert place in error["place"] and error["exit_code"] == 2
    else:
        assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert place in lines[0]
    assert "Traceback" not in result.stderr


@pytest.mark.parametrize("case, schema, place", BAD_SCHEMAS, ids=[c[0] for c in BAD_SCHEMAS])
def test_invalid_schema_exits_2_with_one_line_naming_the_place(files, case, schema, place):
    bad = files("bad.avsc", json.dumps(schema))
    _assert_one_line_exit_2(run("fingerprint", bad, "--json"), f"bad.avsc {place}")
    _assert_one_line_exit_2(run("check", bad, files("v1.avsc", V1)), f"bad.avsc {place}")
    _assert_one_line_exit_2(run("diff", files("v1.avsc", V1), bad), f"bad.avsc {place}")


@pytest.mark.parametrize("text, where", [
    ('{"type": "record", "name": "R" "fields": []}', "line 1, column 32"),
    ('{"type": "int"', "line 1, column 15"),
    ("{", "line 1, column 2"),
    ('{"type": "map",\n "values": long}', "line 2, column 12"),
])
def test_invalid_json_exits_2_naming_line_and_column(files, text, where):
    bad = files("bad.avsc", text)
    _assert_one_line_exit_2(run("check", files("v1.avsc", V1), bad, "--json"), where)


@pytest.mark.parametrize("content, message", [("", "is empty"), (" \n", "only white space")])
def test_an_empty_schema_file_is_refused_in_the_words_of_every_empty_file(files, content,
                                                                         message):
    result = run("fingerprint", files("empty.avsc", content))
    _assert_one_line_exit_2(result, "empty.avsc")
    assert message in result.stderr


def test_missing_file_exits_2(tmp_path):
    _assert_one_line_exit_2(run("fingerprint", str(tmp_path / "none.avsc")), "none.avsc")


def test_missing_argument_is_a_usage_error():
    assert run("check", "only-one.avsc").exit_code == 2


def test_the_installed_entry_point_runs_check_as_a_subprocess(files):
    import os
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    completed = subprocess.run(
        [sys.executable, "-m", "registry", "schema", "check", files("v4.avsc", V4),
         files("v1.avsc", V1), "--json"],
        capture_output=True, text=True, env={**os.environ, "PYTHONPATH": str(root)}, timeout=60)
    assert completed.returncode == 1, completed.stderr
    assert json.loads(completed.stdout)["compatible"] is False
