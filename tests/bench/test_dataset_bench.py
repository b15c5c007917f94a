"""Benchmarks of dataset fingerprinting against references measured in the same run.

Run with: PYTHONPATH=. python -m pytest tests/bench/test_dataset_bench.py -s
"""

from __future__ import annotations

import hashlib
import os
import subprocess
import sys
import time

import fastavro
import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from registry.datasets import fingerprint_file

ROWS = 2_000_000
COLUMNS = 8
AVRO_ROWS = 200_000
REPEATS = 5


def best_times(*actions) -> list[float]:
    """The best of REPEATS runs of each action, taken in turns so that all meet the same load
    on a shared machine."""
    best = [float("inf")] * len(actions)
    for _ in range(REPEATS):
        for index, action in enumerate(actions):
            start = time.perf_counter()
            action()
            best[index] = min(best[index], time.perf_counter() - start)
    return best


def numeric_table(rows: int, seed: int = 7) -> pa.Table:
    rng = np.random.default_rng(seed)
    columns = {}
    for index in range(COLUMNS):
        if index % 2:
            columns[f"reading_{index}"] = rng.integers(0, 100_000, rows)
        else:
            columns[f"reading_{index}"] = rng.normal(50.0, 12.0, rows)
    return pa.table(columns)


@pytest.fixture(scope="module")
def parquet_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("bench") / "readings.parquet"
    pq.write_table(numeric_table(ROWS), path)
    return str(path)


def test_parquet_fingerprint_against_pandas_sha256_and_read_table(parquet_file):
    pandas = pytest.importorskip("pandas")
    frame = pq.read_table(parquet_file).to_pandas()

    def pandas_reference():
        frame.describe()
        pandas.util.hash_pandas_object(frame).sum()

    def sha256_reference():
        digest = hashlib.sha256()
        with open(parquet_file, "rb") as handle:
            for chunk in iter(lambda: handle.read(1 << 20), b""):
                digest.update(chunk)
        digest.hexdigest()

    ours, pandas_time, sha_time, read_time = best_times(
        lambda: fingerprint_file(parquet_file, schema_json=None), pandas_reference,
        sha256_reference, lambda: pq.read_table(parquet_file))
    print(f"\nparquet {ROWS} rows x {COLUMNS} columns: fingerprint {ours:.3f}s, "
          f"pandas describe+hash {pandas_time:.3f}s (ratio {ours / pandas_time:.2f}), "
          f"sha256 {sha_time:.3f}s (ratio {ours / sha_time:.2f}), "
          f"read_table {read_time:.3f}s (ratio {ours / read_time:.2f})")
    assert ours <= 0.4 * pandas_time
    assert ours <= 3 * sha_time


def test_avro_fingerprint_against_iterating_fastavro(tmp_path):
    table = numeric_table(AVRO_ROWS)
    schema = {"type": "record", "name": "Reading", "fields": [
        {"name": name, "type": "double" if table.schema.field(name).type == pa.float64()
         else "long"} for name in table.column_names]}
    path = tmp_path / "readings.avro"
    with open(path, "wb") as handle:
        fastavro.writer(handle, fastavro.parse_schema(schema), table.to_pylist())

    def iterate():
        with open(path, "rb") as handle:
            for _ in fastavro.reader(handle):
                pass

    ours, reference = best_times(lambda: fingerprint_file(str(path), schema_json=None), iterate)
    print(f"\navro {AVRO_ROWS} rows: fingerprint {ours:.3f}s, fastavro.reader {reference:.3f}s "
          f"(ratio {ours / reference:.2f})")
    assert ours <= 2 * reference


# VmHWM, not ru_maxrss: Linux carries ru_maxrss over from the forking parent across exec.
PEAK_SCRIPT = """
import sys
from registry.datasets import fingerprint_file
fingerprint_file(sys.argv[1], schema_json=None)
with open("/proc/self/status") as status:
    print(next(line.split()[1] for line in status if line.startswith("VmHWM:")))
"""


def peak_kib(path: str) -> int:
    env = {**os.environ, "PYTHONPATH": os.getcwd()}
    done = subprocess.run([sys.executable, "-c", PEAK_SCRIPT, path], env=env, check=True,
                          capture_output=True, text=True)
    return int(done.stdout.strip())


def test_peak_memory_stays_flat_as_the_file_grows(tmp_path):
    small, large = tmp_path / "small.parquet", tmp_path / "large.parquet"
    for path, rows in ((small, 250_000), (large, 2_500_000)):
        writer = None
        for start in range(0, rows, 250_000):
            part = numeric_table(min(250_000, rows - start), seed=start)
            writer = writer or pq.ParquetWriter(path, part.schema)
            writer.write_table(part, row_group_size=250_000)
        writer.close()
    # The in-flight batches make one run's peak swing by a few tens of MiB (one run of the small
    # file peaked above a run of the large one): the lowest of three runs each, taken in turns.
    peaks: dict[str, list[int]] = {"small": [], "large": []}
    for _ in range(3):
        peaks["small"].append(peak_kib(str(small)))
        peaks["large"].append(peak_kib(str(large)))
    small_peak, large_peak = min(peaks["small"]), min(peaks["large"])
    grown = os.path.getsize(large) - os.path.getsize(small)
    print(f"\npeak RSS: {small_peak / 1024:.0f} MiB for 250k rows, {large_peak / 1024:.0f} MiB "
          f"for 2.5M rows; the file grew by {grown / 2**20:.0f} MiB")
    # Holding the records would cost at least what the file grew by.
    assert large_peak - small_peak < 0.5 * grown / 1024
