"""The `dataset fingerprint` and `dataset compare` commands: JSON shapes and bad input."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from dataset_files import SEGMENT_SCHEMA, segment_records, write_avro, write_csv, write_parquet

from registry.cli import main
from registry.cli import COMMANDS


def run(*args: str):
    return CliRunner().invoke(main, list(args))


@pytest.fixture
def schema_file(tmp_path):
    path = tmp_path / "segment-v1.avsc"
    path.write_text(json.dumps(SEGMENT_SCHEMA), encoding="utf-8")
    return str(path)


def test_the_dataset_group_lists_the_file_commands_and_the_catalogue_ones():
    assert {"fingerprint", "compare", "add", "show", "list", "recall"} <= set(
        COMMANDS["dataset"].lazy_commands)


def test_fingerprint_json_has_the_documented_shape(tmp_path, records, schema_file):
    path = write_csv(tmp_path / "training.csv", records)
    result = run("dataset", "fingerprint", str(path), "--schema", schema_file,
                 "--key", "segment_id", "--exclude", "burst_within_90d", "--json")
    assert result.exit_code == 0, result.stderr
    document = json.loads(result.stdout)
    assert {"rows", "content_digest", "schema_fingerprint", "profile", "sketch"} <= set(document)
    assert document["rows"] == len(records)
    assert len(document["content_digest"]) == 32
    assert len(document["schema_fingerprint"]) == 64
    assert set(document["profile"]) == {f["name"] for f in SEGMENT_SCHEMA["fields"]}
    assert document["keys"] == ["segment_id"]
    assert result.stderr == ""  # no progress bar when stderr is not a terminal


def test_fingerprint_reads_avro_and_parquet_without_a_schema(tmp_path, records):
    avro = run("dataset", "fingerprint", str(write_avro(tmp_path / "a.avro", records)), "--json")
    parquet = run("dataset", "fingerprint", str(write_parquet(tmp_path / "a.parquet", records)),
                  "--json")
    assert avro.exit_code == parquet.exit_code == 0
    assert json.loads(avro.stdout)["rows"] == json.loads(parquet.stdout)["rows"] == len(records)


def test_text_report_names_the_digest(tmp_path, records):
    result = run("dataset", "fingerprint", str(write_avro(tmp_path / "a.avro", records)))
    assert result.exit_code == 0
    assert "content digest" in result.stdout


def test_compare_json_has_overlap_and_drift(tmp_path, schema_file):
    training = write_avro(tmp_path / "training.avro", segment_records(800, seed=1))
    evaluation = write_csv(tmp_path / "evaluation.csv",
                           segment_records(400, seed=1)[:200] + segment_records(200, seed=2,
                                                                                start=5000))
    result = run("dataset", "compare", str(training), str(evaluation), "--schema", schema_file,
                 "--json")
    assert result.exit_code == 0, result.stderr
    document = json.loads(result.stdout)
    # containment: share of B's distinct records also in A (200 of 400 here, exactly)
    assert document["overlap"]["containment"] == pytest.approx(0.5)
    assert document["overlap"]["jaccard"] == pytest.approx(200 / 1000)
    assert set(document["drift"]) >= {"pipe_age_years", "district", "pipe_material"}
    assert all("psi" in column for column in document["drift"].values())


def test_compare_accepts_a_saved_fingerprint(tmp_path, records):
    avro = write_avro(tmp_path / "a.avro", records)
    saved = tmp_path / "a.fingerprint.json"
    saved.write_text(run("dataset", "fingerprint", str(avro), "--json").stdout)
    result = run("dataset", "compare", str(saved), str(avro), "--json")
    assert result.exit_code == 0, result.stderr
    assert json.loads(result.stdout)["overlap"]["jaccard"] == 1.0


def one_line_error(result) -> str:
    assert result.exit_code == 2, (result.stdout, result.stderr)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.stderr
    return lines[0]


def test_missing_file_is_one_line_and_exit_2(tmp_path):
    line = one_line_error(run("dataset", "fingerprint", str(tmp_path / "absent.avro")))
    assert "no such file" in line


@pytest.mark.parametrize("suffix, writer", [(".avro", write_avro), (".parquet", write_parquet)])
def test_truncated_file_is_one_line_and_exit_2(tmp_path, records, suffix, writer):
    path = writer(tmp_path / f"whole{suffix}", records)
    data = path.read_bytes()
    cut = tmp_path / f"cut{suffix}"
    cut.write_bytes(data[: len(data) * 2 // 3])
    line = one_line_error(run("dataset", "fingerprint", str(cut)))
    assert "truncated" in line


def test_value_not_parsing_names_row_and_column(tmp_path, records, schema_file):
    path = write_csv(tmp_path / "bad.csv", records[:20])
    lines = path.read_text().splitlines()
    fields = lines[12].split(",")
    fields[3] = "old"  # pipe_age_years of the 12th record
    lines[12] = ",".join(fields)
    path.write_text("\n".join(lines) + "\n")
    line = one_line_error(run("dataset", "fingerprint", str(path), "--schema", schema_file))
    assert "row 12, column pipe_age_years" in line


def test_unknown_enum_symbol_names_row_and_column(tmp_path, records, schema_file):
    changed = [dict(r) for r in records[:10]]
    changed[4]["pipe_material"] = "CLAY"
    path = write_parquet(tmp_path / "bad.parquet", changed)
    line = one_line_error(run("dataset", "fingerprint", str(path), "--schema", schema_file))
    assert "row 5, column pipe_material" in line


def test_columns_not_matching_the_schema_is_one_line_and_exit_2(tmp_path, records, schema_file):
    extra = write_parquet(tmp_path / "extra.parquet", [dict(r, colour="red") for r in records])
    line = one_line_error(run("dataset", "fingerprint", str(extra), "--schema", schema_file))
    assert "column colour" in line
    missing = write_parquet(tmp_path / "missing.parquet",
                            [{k: v for k, v in r.items() if k != "district"} for r in records])
    line = one_line_error(run("dataset", "fingerprint", str(missing), "--schema", schema_file))
    assert "column district" in line


def test_ragged_csv_row_is_one_line_and_exit_2(tmp_path, records, schema_file):
    path = write_csv(tmp_path / "ragged.csv", records[:10])
    lines = path.read_text().splitlines()
    lines[7] = lines[7].rsplit(",", 1)[0]
    path.write_text("\n".join(lines) + "\n")
    line = one_line_error(run("dataset", "fingerprint", str(path), "--schema", schema_file))
    assert "row 7" in line


@pytest.mark.parametrize("content", ["", "header-only"])
def test_empty_file_is_one_line_and_exit_2(tmp_path, schema_file, content):
    path = tmp_path / "empty.csv"
    if content:
        path.write_text(",".join(f["name"] for f in SEGMENT_SCHEMA["fields"]) + "\n")
    else:
        path.write_bytes(b"")
    line = one_line_error(run("dataset", "fingerprint", str(path), "--schema", schema_file))
    assert "empty" in line or "no records" in line


def test_empty_avro_file_is_one_line_and_exit_2(tmp_path):
    path = write_avro(tmp_path / "none.avro", [])
    assert "no records" in one_line_error(run("dataset", "fingerprint", str(path)))


def test_csv_without_schema_and_unknown_key_are_one_line(tmp_path, records, schema_file):
    path = write_csv(tmp_path / "a.csv", records[:5])
    assert "--schema" in one_line_error(run("dataset", "fingerprint", str(path)))
    line = one_line_error(run("dataset", "fingerprint", str(path), "--schema", schema_file,
                              "--key", "row_id"))
    assert "row_id" in line


def test_missing_schema_file_is_one_line(tmp_path, records):
    path = write_csv(tmp_path / "a.csv", records[:5])
    line = one_line_error(run("dataset", "fingerprint", str(path), "--schema",
                              str(tmp_path / "nope.avsc")))
    assert "schema" in line


def test_avro_file_not_readable_with_the_given_schema_is_one_line(tmp_path, records):
    import copy

    schema = copy.deepcopy(SEGMENT_SCHEMA)
    for field in schema["fields"]:
        if field["name"] == "diameter_mm":
            field["type"] = "string"  # an int cannot be read as a string (Schema Resolution)
    path = tmp_path / "v4.avsc"
    path.write_text(json.dumps(schema))
    avro = write_avro(tmp_path / "v1.avro", records)
    line = one_line_error(run("dataset", "fingerprint", str(avro), "--schema", str(path)))
    assert "cannot be read with the given schema" in line
