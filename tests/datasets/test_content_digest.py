"""The content digest: one value for the same records in any format and order, and mergeable."""

from __future__ import annotations

import random

import pytest
from dataset_files import SEGMENT_SCHEMA, segment_records, write_avro, write_csv, write_parquet

from registry.datasets import fingerprint_file, key_set_digest, merge_fingerprints


def digest(path, schema=SEGMENT_SCHEMA, **options):
    return fingerprint_file(str(path), schema_json=schema, **options)


def test_same_records_from_avro_parquet_and_csv_give_one_digest(tmp_path, records):
    avro = digest(write_avro(tmp_path / "s.avro", records))
    parquet = digest(write_parquet(tmp_path / "s.parquet", records))
    csv = digest(write_csv(tmp_path / "s.csv", records))
    assert avro.content_digest == parquet.content_digest == csv.content_digest
    assert avro.sketch == parquet.sketch == csv.sketch
    assert avro.rows == parquet.rows == csv.rows == len(records)


def test_digest_ignores_row_order(tmp_path, records):
    shuffled = records[:]
    random.Random(5).shuffle(shuffled)
    assert digest(write_avro(tmp_path / "a.avro", records)).content_digest == \
        digest(write_parquet(tmp_path / "b.parquet", shuffled)).content_digest


@pytest.mark.parametrize("change", ["value", "added", "removed", "duplicated", "swapped"])
def test_digest_changes_with_any_changed_added_removed_or_duplicated_record(tmp_path, records,
                                                                           change):
    changed = [dict(r) for r in records]
    if change == "value":
        changed[17]["pipe_age_years"] += 0.01
    elif change == "added":
        changed.append(segment_records(1, seed=99, start=10_000)[0])
    elif change == "removed":
        del changed[3]
    elif change == "duplicated":
        changed.append(dict(changed[0]))
    else:  # two records trade one field: the same column values, different records
        changed[0]["district"], changed[1]["district"] = "NORTHGATE", "SALTMARSH"
        records = [dict(r) for r in records]
        records[0]["district"], records[1]["district"] = "SALTMARSH", "NORTHGATE"
    before = digest(write_parquet(tmp_path / "before.parquet", records)).content_digest
    after = digest(write_parquet(tmp_path / "after.parquet", changed)).content_digest
    assert before != after


def test_negative_zero_and_every_nan_hash_as_zero_and_one_nan(tmp_path, records):
    plain = [dict(r, pipe_age_years=0.0, mean_pressure_kpa=float("nan")) for r in records[:5]]
    signed = [dict(r, pipe_age_years=-0.0, mean_pressure_kpa=-float("nan")) for r in records[:5]]
    assert digest(write_avro(tmp_path / "a.avro", plain)).content_digest == \
        digest(write_avro(tmp_path / "b.avro", signed)).content_digest


def test_digests_of_partitions_merge_into_the_digest_of_the_whole(tmp_path, records):
    whole = digest(write_parquet(tmp_path / "whole.parquet", records), keys=["segment_id"])
    first = digest(write_avro(tmp_path / "first.avro", records[:250]), keys=["segment_id"])
    second = digest(write_csv(tmp_path / "second.csv", records[250:]), keys=["segment_id"])
    merged = merge_fingerprints(first, second)
    assert merged.content_digest == whole.content_digest
    assert merged.feature_digest == whole.feature_digest
    assert merged.key_digest == whole.key_digest
    assert merged.sketch == whole.sketch
    assert merged.rows == whole.rows


def test_feature_digest_leaves_out_key_and_label(tmp_path, records):
    relabelled = [dict(r, segment_id=f"X-{i}", burst_within_90d=1 - r["burst_within_90d"])
                  for i, r in enumerate(records)]
    options = {"keys": ["segment_id"], "exclude": ["burst_within_90d"]}
    a = digest(write_parquet(tmp_path / "a.parquet", records), **options)
    b = digest(write_parquet(tmp_path / "b.parquet", relabelled), **options)
    assert a.content_digest != b.content_digest
    assert a.feature_digest == b.feature_digest
    assert a.feature_sketch == b.feature_sketch
    assert a.sketch != b.sketch


def test_key_set_digest_of_the_key_values_equals_the_key_digest(tmp_path, records):
    found = digest(write_avro(tmp_path / "a.avro", records), keys=["segment_id"])
    ids = [r["segment_id"] for r in records]
    random.Random(1).shuffle(ids)
    assert key_set_digest(ids) == found.key_digest
    assert key_set_digest(ids[1:]) != found.key_digest


def test_fingerprint_survives_a_round_trip_through_json(tmp_path, records):
    import json

    from registry.datasets import DatasetFingerprint

    found = digest(write_avro(tmp_path / "a.avro", records), keys=["segment_id"])
    loaded = DatasetFingerprint.from_dict(json.loads(json.dumps(found.to_dict())))
    assert loaded == found


def test_a_batch_whose_string_column_is_all_null_gets_the_digest_of_the_same_records(tmp_path):
    from dataset_files import write_avro as avro_file, write_parquet as parquet_file

    schema = {"type": "record", "name": "Note", "fields": [
        {"name": "n", "type": "long"}, {"name": "text", "type": ["null", "string"]}]}
    rows = [{"n": i, "text": None if i < 50 else f"t{i}"} for i in range(80)]
    parquet = parquet_file(tmp_path / "notes.parquet", rows, row_group_size=50)
    avro = avro_file(tmp_path / "notes.avro", rows, schema=schema)
    from registry.datasets import fingerprint_file as digest_of_file

    assert (digest_of_file(str(parquet), schema_json=schema).content_digest
            == digest_of_file(str(avro), schema_json=schema).content_digest)
