"""Datasets in folders, globs and several paths, checked against pyarrow's dataset reader.

The oracle for which records a folder holds is `pyarrow.dataset` with hive partitioning (an
outside, general-purpose reader): its table, written to one file, must give our folder's
content digest, sketch and profile.
"""

from __future__ import annotations

import hashlib
import json
import random
from dataclasses import replace

import pyarrow as pa
import pyarrow.dataset as pads
import pyarrow.parquet as pq
import pytest
from dataset_files import SEGMENT_SCHEMA, segment_records, write_avro, write_parquet

from registry.datasets import fingerprint_dataset, fingerprint_file
from registry.datasets.profile import is_close_profile
from registry.cli.demo import BRACKWATER

NAMES = [field["name"] for field in SEGMENT_SCHEMA["fields"]]


def arrow_table(records: list[dict]) -> pa.Table:
    return pa.Table.from_pylist(records)


def write_hive(root, records: list[dict], keys: list[str], files_per_folder: int = 2,
               row_group_size: int | None = None) -> None:
    """Hive-partitioned Parquet written by pyarrow itself (an outside writer)."""
    per_file = max(1, len(records) // (5 * files_per_folder))
    pads.write_dataset(arrow_table(records), root, format="parquet",
                       partitioning=pads.partitioning(
                           pa.schema([(k, arrow_table(records).schema.field(k).type)
                                      for k in keys]), flavor="hive"),
                       max_rows_per_file=per_file,
                       max_rows_per_group=min(row_group_size or per_file, per_file),
                       min_rows_per_group=0, existing_data_behavior="overwrite_or_ignore")


def oracle_table(root, partition_schema: pa.Schema) -> pa.Table:
    """What pyarrow's dataset reader says the folder holds, columns in the schema's order."""
    table = pads.dataset(root, format="parquet",
                         partitioning=pads.partitioning(partition_schema, flavor="hive")).to_table()
    return table.select(NAMES)


def assert_profiles_agree(found, expected) -> None:
    """Counts, histograms and exact category counts equal; moments up to rounding; a
    heavy-hitters summary (past its cap) within its stated error bound, which is all
    Misra-Gries promises whatever the merge order (Agarwal et al. 2012)."""
    for name, column in expected.items():
        mine = found[name]
        if column.categories is not None and not column.categories.is_exact:
            a, b = mine.categories, column.categories
            assert a.total == b.total and not a.is_exact, name
            bound = max(a.error_bound, b.error_bound)
            for value, count in b.as_dict().items():
                assert abs(a.as_dict().get(value, 0) - count) <= bound, (name, value)
            mine, column = replace(mine, categories=None), replace(column, categories=None)
        assert is_close_profile(mine, column), name


def assert_same_dataset(folder, single) -> None:
    assert folder.rows == single.rows
    assert folder.content_digest == single.content_digest
    assert folder.feature_digest == single.feature_digest
    assert folder.key_digest == single.key_digest
    assert folder.sketch == single.sketch
    assert_profiles_agree(folder.profile, single.profile)


def test_a_hive_folder_holds_the_records_pyarrow_dataset_reads(tmp_path):
    records = segment_records(3000, seed=21)
    root = tmp_path / "segments"
    write_hive(root, records, ["district"])
    # oracle: pyarrow.dataset with hive partitioning, written to one file
    whole = tmp_path / "whole.parquet"
    pq.write_table(oracle_table(root, pa.schema([("district", pa.string())])), whole)
    options = {"schema_json": SEGMENT_SCHEMA, "keys": ["segment_id"],
               "exclude": ["burst_within_90d"]}
    folder = fingerprint_dataset([str(root)], **options)
    assert len(folder.sources) > 5  # several files in each district folder
    assert_same_dataset(folder.fingerprint, fingerprint_file(str(whole), **options))
    # and the very records we started from, whatever the partitioning did to their order
    assert folder.fingerprint.content_digest == fingerprint_file(
        str(write_avro(tmp_path / "records.avro", records)), schema_json=SEGMENT_SCHEMA
    ).content_digest


def test_two_partition_levels_take_their_types_from_the_schema(tmp_path):
    records = segment_records(2000, seed=22)
    root = tmp_path / "segments"
    write_hive(root, records, ["district", "diameter_mm"])
    assert any(path.name.startswith("diameter_mm=") for path in root.rglob("*"))
    oracle = oracle_table(root, pa.schema([("district", pa.string()),
                                           ("diameter_mm", pa.int32())]))
    pq.write_table(oracle, tmp_path / "whole.parquet")
    folder = fingerprint_dataset([str(root)], schema_json=SEGMENT_SCHEMA).fingerprint
    assert folder.profile["diameter_mm"].moments.count == 2000  # an int, not a string
    assert_same_dataset(folder, fingerprint_file(str(tmp_path / "whole.parquet"),
                                                 schema_json=SEGMENT_SCHEMA))


def test_a_null_partition_value_reads_as_null_as_pyarrow_reads_it(tmp_path):
    schema = {"type": "record", "name": "Reading", "fields": [
        {"name": "meter", "type": "string"}, {"name": "zone", "type": ["null", "string"]},
        {"name": "litres", "type": "double"}]}
    rows = [{"meter": f"M{i}", "zone": [None, "EAST", "WEST"][i % 3], "litres": i * 1.5}
            for i in range(90)]
    pads.write_dataset(arrow_table(rows), tmp_path / "readings", format="parquet",
                       partitioning=pads.partitioning(pa.schema([("zone", pa.string())]),
                                                      flavor="hive"))
    assert (tmp_path / "readings" / "zone=__HIVE_DEFAULT_PARTITION__").is_dir()
    oracle = pads.dataset(tmp_path / "readings", format="parquet", partitioning="hive").to_table()
    pq.write_table(oracle.select(["meter", "zone", "litres"]), tmp_path / "whole.parquet")
    folder = fingerprint_dataset([str(tmp_path / "readings")], schema_json=schema).fingerprint
    assert folder.profile["zone"].nulls == 30
    assert folder.content_digest == fingerprint_file(str(tmp_path / "whole.parquet"),
                                                     schema_json=schema).content_digest


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_the_digest_does_not_depend_on_partitioning_file_order_or_format(tmp_path, seed):
    records = segment_records(1200, seed=30)
    single = fingerprint_file(str(write_parquet(tmp_path / "one.parquet", records)),
                              schema_json=SEGMENT_SCHEMA)
    shuffled = records[:]
    random.Random(seed).shuffle(shuffled)
    pieces = random.Random(seed).randint(2, 9)
    folder = tmp_path / f"split-{seed}"
    (folder / "nested").mkdir(parents=True)
    for index in range(pieces):
        part = shuffled[index::pieces]
        target = folder / ("nested" if index % 2 else "") / f"p{index}"
        if index % 3 == 0:
            write_avro(target.with_suffix(".avro"), part)
        else:
            write_parquet(target.with_suffix(".parquet"), part, row_group_size=97)
    found = fingerprint_dataset([str(folder)], schema_json=SEGMENT_SCHEMA).fingerprint
    assert found.content_digest == single.content_digest
    assert found.sketch == single.sketch
    assert_profiles_agree(found.profile, single.profile)


def test_a_glob_and_several_paths_name_the_same_files_as_the_folder(tmp_path):
    records = segment_records(900, seed=23)
    for index in range(3):
        write_parquet(tmp_path / f"part-{index}.parquet", records[index::3])
    by_folder = fingerprint_dataset([str(tmp_path)])
    by_glob = fingerprint_dataset([str(tmp_path / "part-*.parquet")])
    by_paths = fingerprint_dataset([str(tmp_path / f"part-{i}.parquet") for i in (2, 0, 1)])
    assert by_folder.fingerprint == by_glob.fingerprint == by_paths.fingerprint
    assert by_folder.sources == by_glob.sources == by_paths.sources


def test_bookkeeping_files_and_other_extensions_are_left_out(tmp_path):
    records = segment_records(300, seed=24)
    write_parquet(tmp_path / "part-0.parquet", records)
    (tmp_path / "_SUCCESS").write_text("")
    (tmp_path / ".part-0.parquet.crc").write_bytes(b"\x00\x01")
    (tmp_path / "README.txt").write_text("how this extract was made\n")
    (tmp_path / "_temporary").mkdir()
    write_parquet(tmp_path / "_temporary" / "part-9.parquet", records[:10])
    run = fingerprint_dataset([str(tmp_path)])
    assert [source.relative_path for source in run.sources] == ["part-0.parquet"]
    assert run.fingerprint.rows == 300


def test_the_source_files_are_listed_with_size_and_sha256(tmp_path):
    records = segment_records(400, seed=25)
    (tmp_path / "district=NORTHGATE").mkdir()
    (tmp_path / "b").mkdir()
    paths = [write_parquet(tmp_path / "b" / "z.parquet", records[:100]),
             write_parquet(tmp_path / "a.parquet", records[100:])]
    run = fingerprint_dataset([str(tmp_path)])
    assert [s.relative_path for s in run.sources] == ["a.parquet", "b/z.parquet"]
    for source, path in zip(run.sources, reversed(paths)):
        assert source.size == path.stat().st_size
        assert source.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()  # hashlib


def test_one_empty_file_among_others_adds_no_records(tmp_path):
    records = segment_records(200, seed=26)
    write_parquet(tmp_path / "a.parquet", records)
    pq.write_table(arrow_table(records).slice(0, 0), tmp_path / "b.parquet")
    assert fingerprint_dataset([str(tmp_path)]).fingerprint.rows == 200


def test_the_demo_telemetry_folder_holds_the_records_of_the_single_file():
    data, schemas = BRACKWATER / "datasets", BRACKWATER / "schemas"
    schema = json.loads((schemas / "brackwater-telemetry-extract.avsc").read_text())
    folder = fingerprint_dataset([str(data / "brackwater-telemetry-extract")],
                                 schema_json=schema)
    single = fingerprint_file(str(data / "brackwater-telemetry-extract.avro"), schema_json=schema)
    assert [s.relative_path.split("/")[0] for s in folder.sources] == [
        "district=HILLCREST", "district=NORTHGATE", "district=OLD_TOWN", "district=RIVERSIDE",
        "district=SALTMARSH"]
    assert_same_dataset(folder.fingerprint, single)
