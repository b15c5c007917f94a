"""Unions of several types: hashed as their values, their branches counted in the profile."""

from __future__ import annotations

import json

import canonical_reference as reference
from click.testing import CliRunner
from dataset_files import write_avro, write_parquet

from registry.cli import main
from registry.datasets import DatasetFingerprint, compare, fingerprint_file

SITE = {"type": "record", "name": "Site", "fields": [{"name": "x", "type": "double"}]}
READING = {"type": "record", "name": "Reading", "namespace": "brackwater.network", "fields": [
    {"name": "dma_id", "type": "string"},
    {"name": "flow", "type": ["null", "long", "double", "string", SITE]},
]}


def readings(values: list) -> list[dict]:
    return [{"dma_id": f"DMA-{i:03d}", "flow": value} for i, value in enumerate(values)]


def test_union_values_hash_as_the_plain_reference_says(tmp_path):
    records = readings([None, 12, 3.5, "sensor offline", {"x": -0.0}, 12, None])
    found = fingerprint_file(str(write_avro(tmp_path / "r.avro", records, schema=READING)),
                             schema_json=None)
    assert found.content_digest == reference.content_digest(READING, records)


def test_union_branches_are_counted(tmp_path):
    records = readings([None, 12, 3.5, "sensor offline", {"x": 1.0}, 12, None])
    found = fingerprint_file(str(write_avro(tmp_path / "r.avro", records, schema=READING)),
                             schema_json=None)
    flow = found.profile["flow"].to_dict()
    assert flow["branches"] == {"null": 2, "long": 2, "double": 1, "string": 1,
                                "brackwater.network.Site": 1}
    assert flow["nulls"] == 2
    assert DatasetFingerprint.from_dict(json.loads(json.dumps(found.to_dict()))) == found


def test_a_branch_the_reference_never_used_shows_as_drift(tmp_path):
    before = fingerprint_file(str(write_avro(tmp_path / "a.avro", readings([1, 2, 3.5] * 20),
                                             schema=READING)), schema_json=None)
    after = fingerprint_file(str(write_avro(tmp_path / "b.avro",
                                            readings([1, 2, 3.5] * 20 + ["offline"] * 30),
                                            schema=READING)), schema_json=None)
    drift = compare(before, after).drift["flow"]
    assert drift.new_categories == ("string",)
    assert drift.level == "alarm"


def test_a_union_of_several_types_cannot_be_read_from_parquet(tmp_path):
    path = write_parquet(tmp_path / "r.parquet", readings([1, 2]))
    schema = tmp_path / "reading.avsc"
    schema.write_text(json.dumps(READING))
    result = CliRunner().invoke(main, ["dataset", "fingerprint", str(path), "--schema",
                                       str(schema)])
    assert result.exit_code == 2
    assert result.stderr.strip().splitlines() == [
        "lockkeeper: column flow: a union of several types can be read from Avro files only"]
