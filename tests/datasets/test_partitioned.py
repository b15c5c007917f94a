"""The Dask path: 8 partitions on a LocalCluster of 2 worker processes give the single-process
digest, profile and sketch."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from dataset_files import SEGMENT_SCHEMA, segment_records, write_avro, write_parquet

from registry.datasets import fingerprint_file, fingerprint_partitioned
from registry.datasets.profile import is_close_profile

distributed = pytest.importorskip("distributed")

REPOSITORY = str(Path(__file__).parents[2])


@pytest.fixture(scope="module")
def client():
    before = os.environ.get("PYTHONPATH")
    os.environ["PYTHONPATH"] = os.pathsep.join(filter(None, [REPOSITORY, before]))  # for workers
    try:
        cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                           dashboard_address=None, silence_logs=40)
        with distributed.Client(cluster) as connected:
            yield connected
        cluster.close()
    finally:
        if before is None:
            os.environ.pop("PYTHONPATH", None)
        else:
            os.environ["PYTHONPATH"] = before


def assert_same(single, partitioned):
    assert partitioned.rows == single.rows
    assert partitioned.content_digest == single.content_digest
    assert partitioned.feature_digest == single.feature_digest
    assert partitioned.key_digest == single.key_digest
    assert partitioned.sketch == single.sketch
    assert partitioned.feature_sketch == single.feature_sketch
    for name, column in single.profile.items():
        assert is_close_profile(partitioned.profile[name], column), name


@pytest.mark.timeout(180)
def test_eight_partitions_on_two_worker_processes_match_one_process(tmp_path, client):
    records = segment_records(4000, seed=8)
    path = str(write_parquet(tmp_path / "training.parquet", records, row_group_size=500))
    options = {"schema_json": SEGMENT_SCHEMA, "keys": ["segment_id"],
               "exclude": ["burst_within_90d"]}
    single = fingerprint_file(path, **options)
    partitioned = fingerprint_partitioned(path, partitions=8, client=client, **options)
    assert_same(single, partitioned)
    assert len(client.scheduler_info()["workers"]) == 2


@pytest.mark.timeout(180)
def test_eight_part_files_merge_into_the_fingerprint_of_their_union(tmp_path, client):
    records = segment_records(1600, seed=9)
    paths = [str(write_avro(tmp_path / f"part-{i}.avro", records[i * 200:(i + 1) * 200]))
             for i in range(8)]
    whole = str(write_parquet(tmp_path / "whole.parquet", records))
    single = fingerprint_file(whole, schema_json=SEGMENT_SCHEMA)
    partitioned = fingerprint_partitioned(paths, schema_json=SEGMENT_SCHEMA, client=client)
    assert_same(single, partitioned)
