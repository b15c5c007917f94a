"""One process, local worker processes and a Dask cluster give the same fingerprint to the bit."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from dataset_files import SEGMENT_SCHEMA, segment_records, write_avro, write_parquet

from registry.datasets import fingerprint_dataset, plan
from registry.datasets import workers as workers_module
from registry.datasets.errors import ValueNotParsing

REPOSITORY = str(Path(__file__).parents[2])
OPTIONS = {"schema_json": SEGMENT_SCHEMA, "keys": ["segment_id"],
           "exclude": ["burst_within_90d"]}


@pytest.fixture
def folder(tmp_path, monkeypatch):
    """Parquet files of several row groups, one split into several jobs, and an Avro file."""
    monkeypatch.setattr(plan, "JOB_ROWS", 400)  # so the big file is split by its row groups
    records = segment_records(6000, seed=40)
    write_parquet(tmp_path / "big.parquet", records[:3000], row_group_size=250)
    for index in range(4):
        write_parquet(tmp_path / f"small-{index}.parquet",
                      records[3000 + index * 500:3500 + index * 500], row_group_size=125)
    write_avro(tmp_path / "rest.avro", records[5000:])
    return tmp_path


def test_the_big_file_is_split_by_its_row_groups(folder):
    planned = plan.plan_fingerprint([str(folder)], SEGMENT_SCHEMA)
    parts = [job.part for job in planned.jobs if job.relative_path == "big.parquet"]
    assert parts == [(i, 8) for i in range(8)]  # 3000 rows over 400 a job, 12 groups
    assert planned.total_rows is None  # the Avro file does not say how many it holds


def test_workers_give_the_fingerprint_of_one_process_to_the_bit(folder):
    here = fingerprint_dataset([str(folder)], **OPTIONS)
    one = fingerprint_dataset([str(folder)], workers=1, **OPTIONS)
    two = fingerprint_dataset([str(folder)], workers=2, **OPTIONS)
    assert here.fingerprint.rows == 6000
    assert one.fingerprint.to_dict() == here.fingerprint.to_dict()
    assert two.fingerprint.to_dict() == here.fingerprint.to_dict()
    assert one.sources == two.sources == here.sources


def test_files_hashed_while_the_kernels_load_are_listed_as_their_jobs_would(folder,
                                                                            monkeypatch):
    import hashlib

    from registry.datasets import file_digests, workers

    hashed = []

    class Patient(file_digests.DigestHelper):
        def stop(self):
            self._process.join()  # as if loading took long enough for every file
            digests = super().stop()
            hashed.append(len(digests))
            return digests

    monkeypatch.setattr(workers, "DigestHelper", Patient)
    here = fingerprint_dataset([str(folder)], **OPTIONS)
    two = fingerprint_dataset([str(folder)], workers=2, **OPTIONS)
    assert hashed == [6]
    assert two == here
    # the reference: hashlib over each file's bytes
    assert {s.relative_path: s.sha256 for s in two.sources} == {
        s.relative_path: hashlib.sha256((folder / s.relative_path).read_bytes()).hexdigest()
        for s in here.sources}


def test_the_digest_helper_goes_from_the_last_file_back_and_leaves_unreadable_files(tmp_path):
    import hashlib
    import multiprocessing

    from registry.datasets.file_digests import digest_until_stopped

    paths = [str(tmp_path / name) for name in ("a", "missing", "c")]
    for path in (paths[0], paths[2]):
        Path(path).write_bytes(path.encode() * 1000)
    for stopped, expected in ((False, {0, 2}), (True, set())):
        receiver, sender = multiprocessing.Pipe(duplex=False)
        stopping = multiprocessing.Event()
        if stopped:
            stopping.set()
        digest_until_stopped(paths, sender, stopping)
        digests = receiver.recv()
        assert set(digests) == expected
        assert list(digests) == sorted(digests, reverse=True)
        assert all(digests[i] == hashlib.sha256(Path(paths[i]).read_bytes()).hexdigest()
                   for i in digests)


@pytest.mark.parametrize("method", ["fork", "spawn"])
def test_forked_and_spawned_workers_agree(folder, monkeypatch, method):
    import multiprocessing

    from registry.datasets import workers

    monkeypatch.setattr(workers, "_start_method", lambda: multiprocessing.get_context(method))
    here = fingerprint_dataset([str(folder)], **OPTIONS)
    assert fingerprint_dataset([str(folder)], workers=3, **OPTIONS) == here


def test_progress_counts_every_row_byte_and_file(folder):
    seen = {"rows": 0, "bytes": 0, "files": 0}

    def progress(rows, done_bytes, files):
        seen["rows"] += rows
        seen["bytes"] += done_bytes
        seen["files"] += files

    run = fingerprint_dataset([str(folder)], workers=2, progress=progress, **OPTIONS)
    assert seen["rows"] == 6000 and seen["files"] == len(run.sources) == 6
    total = sum(source.size for source in run.sources)
    assert total - 8 <= seen["bytes"] <= total  # shares of a split file round down


def test_an_error_in_a_worker_comes_back_typed_and_naming_the_file(tmp_path):
    records = segment_records(300, seed=41)
    write_parquet(tmp_path / "a.parquet", records)
    records[7]["pipe_material"] = "COPPER"
    write_parquet(tmp_path / "b.parquet", records)
    with pytest.raises(ValueNotParsing) as raised:
        fingerprint_dataset([str(tmp_path)], workers=2, **OPTIONS)
    assert raised.value.place == "b.parquet, row 8, column pipe_material"


@pytest.fixture(scope="module")
def cluster_address():
    distributed = pytest.importorskip("distributed")
    before = os.environ.get("PYTHONPATH")
    os.environ["PYTHONPATH"] = os.pathsep.join(filter(None, [REPOSITORY, before]))  # for workers
    try:
        with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                      dashboard_address=None, silence_logs=40,
                                      host="127.0.0.1") as cluster:
            yield cluster.scheduler_address
    finally:
        if before is None:
            os.environ.pop("PYTHONPATH", None)
        else:
            os.environ["PYTHONPATH"] = before


@pytest.mark.timeout(180)
def test_a_dask_cluster_gives_the_fingerprint_of_one_process_to_the_bit(folder, cluster_address):
    here = fingerprint_dataset([str(folder)], **OPTIONS)
    seen = []
    remote = fingerprint_dataset([str(folder)], cluster=cluster_address,
                                 progress=lambda rows, done, files: seen.append(files), **OPTIONS)
    assert remote.fingerprint.to_dict() == here.fingerprint.to_dict()
    assert remote.sources == here.sources
    assert sum(seen) == 6
    import gc

    try:  # the command line's way: this process's heap set aside while the cluster works
        aside = fingerprint_dataset([str(folder)], cluster=cluster_address, set_heap_aside=True,
                                    **OPTIONS)
        assert gc.get_freeze_count() > 0
    finally:
        gc.unfreeze()
    assert aside.fingerprint.to_dict() == here.fingerprint.to_dict()


@pytest.mark.timeout(180)
def test_an_error_on_the_cluster_comes_back_typed_and_naming_the_file(tmp_path,
                                                                      cluster_address):
    records = segment_records(200, seed=42)
    write_parquet(tmp_path / "a.parquet", records)
    records[3]["pipe_material"] = "COPPER"
    write_parquet(tmp_path / "b.parquet", records)
    with pytest.raises(ValueNotParsing) as raised:
        fingerprint_dataset([str(tmp_path)], cluster=cluster_address, **OPTIONS)
    assert raised.value.place == "b.parquet, row 4, column pipe_material"


@pytest.mark.parametrize("workers", [None, 1, 2])
def test_the_heap_set_aside_for_a_run_gives_the_same_fingerprint(folder, workers, monkeypatch):
    """gc.freeze before the work (CPython's gc documentation: before a fork) changes what the
    collector walks, never a result."""
    import gc

    frozen_at_merge = []
    real_assemble = workers_module.assemble

    def assemble(*arguments):
        frozen_at_merge.append(gc.get_freeze_count() > 0)
        return real_assemble(*arguments)

    monkeypatch.setattr(workers_module, "assemble", assemble)
    plain = fingerprint_dataset([str(folder)], **OPTIONS)
    try:
        aside = fingerprint_dataset([str(folder)], **OPTIONS, workers=workers,
                                    set_heap_aside=True)
        assert gc.get_freeze_count() > 0
    finally:
        gc.unfreeze()
    assert aside.fingerprint.to_dict() == plain.fingerprint.to_dict()
    assert aside.sources == plain.sources
    assert frozen_at_merge == [False, True]  # set aside once the kernels were in, not before


def test_the_command_line_gives_the_heap_back_when_its_output_is_written(folder):
    import gc
    import json

    from tests.conftest import run_cli

    (folder / "schema.avsc").write_text(json.dumps(SEGMENT_SCHEMA))
    result = run_cli(["dataset", "fingerprint", str(folder / "big.parquet"), "--schema",
                      str(folder / "schema.avsc"), "--workers", "2", "--json"])
    assert result.exit_code == 0, result.output
    assert gc.get_freeze_count() == 0
