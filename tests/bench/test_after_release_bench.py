"""Benchmarks after release, against references measured in the same run (issue 20).

- Recording 10,000,000 served rows (8 input fields) in 10 Parquet batches takes at most 3x
  pyarrow's `read_table` of the same files, and its peak memory is bounded by one batch (ten
  batches in one process peak no higher than one batch does, within a margin).
- A report over 90 daily windows (two versions, drift of 8 inputs, agreement, live quality)
  takes at most 200 ms.
- Catalogue growth per million served rows is printed (summaries plus the compact rows).

Run with: .venv/bin/python -m pytest tests/bench/test_after_release_bench.py -s
"""

from __future__ import annotations

import json
import subprocess
import sys
import time
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from tests.catalogue.stage_helpers import policy_keeping, set_up_people
from tests.conftest import Cli, run_cli

BATCHES = 10
BATCH_ROWS = 1_000_000
REPORT_DAYS = 90
REPORT_ROWS_PER_DAY = 2_000
REPEATS = 3
SCHEMA = {"type": "record", "name": "Reading", "fields": [
    {"name": "pressure", "type": "double"}, {"name": "flow", "type": "double"},
    {"name": "age", "type": "double"}, {"name": "temperature", "type": "double"},
    {"name": "transients", "type": "int"}, {"name": "diameter", "type": "int"},
    {"name": "district", "type": "string"},
    {"name": "material", "type": {"type": "enum", "name": "Material",
                                  "symbols": ["CI", "DI", "PVC", "HDPE", "AC"]}}]}
PUBLISHER = "ines.okafor"


def inputs(rng: np.random.Generator, rows: int, shift: float = 0.0) -> dict:
    return {
        "pressure": rng.normal(450 + shift, 50, rows), "flow": rng.gamma(2, 3, rows),
        "age": rng.uniform(5, 120, rows), "temperature": rng.normal(5, 4, rows),
        "transients": rng.poisson(2, rows).astype(np.int32),
        "diameter": rng.choice([80, 100, 150, 200], rows).astype(np.int32),
        "district": pa.array(rng.choice(["NG", "RS", "OT", "HC", "SM"], rows)),
        "material": pa.array(rng.choice(["CI", "DI", "PVC", "HDPE", "AC"], rows))}


def served_batch(rng, rows: int, first: datetime, day: int, versions=(1,), prefix="r",
                 shift: float = 0.0) -> pa.Table:
    base = rng.random(rows)
    fields = inputs(rng, rows, shift)
    parts = []
    for version in versions:
        score = base if version == versions[0] else np.clip(base + rng.normal(0, .03, rows), 0, 1)
        start = np.datetime64(first.replace(tzinfo=None), "us") + np.timedelta64(day, "D")
        parts.append(pa.table({
            "row_id": pa.array([f"{prefix}{day:03d}-{i:08d}" for i in range(rows)]),
            "served_at": pa.array(start + (np.arange(rows) * 40_000).astype("timedelta64[us]"),
                                  pa.timestamp("us", tz="UTC")),
            "version": pa.array(np.full(rows, version, np.int64)), "score": score, **fields}))
    return pa.concat_tables(parts)


def catalogue_with_live_version(folder: Path, versions: int = 1,
                                training: Path | None = None) -> str:
    """A catalogue where v1 is live (and v2 in shadow); returns its URL."""
    url = f"sqlite:///{folder / 'catalogue.db'}"
    cli = Cli(url)
    assert run_cli(["--db", url, "init"]).exit_code == 0
    set_up_people(cli)
    cli.json("model", "create", "m", user="mara.kowalczyk")
    (folder / "policy.toml").write_text(policy_keeping({}))
    cli.json("model", "policy", "set", "m", str(folder / "policy.toml"), user="mara.kowalczyk")
    (folder / "input.avsc").write_text(json.dumps(SCHEMA))
    (folder / "output.avsc").write_text(json.dumps(
        {"type": "record", "name": "Risk", "fields": [{"name": "p", "type": "double"}]}))
    trained = ""
    if training is not None:
        cli.json("dataset", "add", "training", str(training), "--role", "training")
        trained = 'trained_on = ["training"]\n'
    for number in range(1, versions + 1):
        (folder / f"v{number}.bin").write_bytes(f"model {number}".encode())
        (folder / f"v{number}.toml").write_text(
            f'description = "v{number}"\ninput_schema = "input.avsc"\n'
            f'output_schema = "output.avsc"\n{trained}')
        cli.json("register", "m", str(folder / f"v{number}.bin"), "--manifest",
                 str(folder / f"v{number}.toml"))
    for stage in ("shadow", "canary", "live"):
        cli.json("promote", "m", "1", "--to", stage, user="tomas.lindqvist")
    if versions > 1:
        cli.json("promote", "m", "2", "--to", "shadow", user="tomas.lindqvist")
    return url


@pytest.fixture(scope="module")
def batches(tmp_path_factory):
    folder = tmp_path_factory.mktemp("served")
    url = catalogue_with_live_version(folder)
    first = datetime.now(UTC) + timedelta(minutes=1)
    rng = np.random.default_rng(20)
    paths = []
    for day in range(BATCHES):
        path = folder / f"served-{day:02d}.parquet"
        pq.write_table(served_batch(rng, BATCH_ROWS, first, day), path)
        paths.append(path)
    return folder, url, paths


def _record(url: str, *paths: Path) -> None:
    """Record batches as `lockkeeper serving record m FILE...` does: one open catalogue, each
    file its own batch, the next read while one is written."""
    from registry.service.actors import Actor
    from registry.service.serving import record_served_batches
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(url)
    try:
        for _ in record_served_batches(catalogue, "m", [str(p) for p in paths],
                                       Actor(PUBLISHER, frozenset({"publisher"}))):
            pass
    finally:
        catalogue.close()


def _record_one_at_a_time(url: str, *paths: Path) -> None:
    """Record batches as a serving system sending one batch a call would (`record_served`)."""
    from registry.service.actors import Actor
    from registry.service.serving import record_served
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(url)
    try:
        for path in paths:
            record_served(catalogue, "m", str(path), Actor(PUBLISHER, frozenset({"publisher"})))
    finally:
        catalogue.close()


def _timed(record, url: str, folder: Path, paths: list[Path]) -> tuple[float, int]:
    """Seconds to record the batches into a catalogue that has seen one small batch (the
    kernels compiled, the modules loaded), and how many bytes the catalogue grew by."""
    warm = folder / "warm.parquet"
    if not warm.exists():
        pq.write_table(served_batch(np.random.default_rng(1), 1000,
                                    datetime.now(UTC) + timedelta(minutes=1), 0, prefix="w"),
                       warm)
    record(url, warm)
    size_before = Path(url.removeprefix("sqlite:///")).stat().st_size
    start = time.perf_counter()
    record(url, *paths)
    seconds = time.perf_counter() - start
    return seconds, Path(url.removeprefix("sqlite:///")).stat().st_size - size_before


def test_recording_ten_million_rows_within_three_times_read_table(batches):
    folder, url, paths = batches
    # The reference is read_table at its best of three, the files and pyarrow's memory warm;
    # so the process first records one full batch into a catalogue of its own (its memory
    # pools grown, its kernels loaded), and the first batch in a fresh process is printed apart.
    warm_up = catalogue_with_live_version(folder / "warm-up")
    started = time.perf_counter()
    _record(warm_up, paths[0])
    cold = time.perf_counter() - started
    reference = 0.0
    for path in paths:
        best = float("inf")
        for _ in range(REPEATS):
            start = time.perf_counter()
            pq.read_table(path)
            best = min(best, time.perf_counter() - start)
        reference += best
    one_at_a_time, _ = _timed(_record_one_at_a_time,
                              catalogue_with_live_version(folder / "one-at-a-time"), folder, paths)
    # Ours at its best of two runs, each into a catalogue of its own (a batch sent again would
    # change nothing), as the reference is at its best of three: these machines are noisy.
    first, grown = _timed(_record, url, folder, paths)
    second, _ = _timed(_record, catalogue_with_live_version(folder / "second"), folder, paths)
    ours = min(first, second)
    rows = BATCHES * BATCH_ROWS
    print(f"\nrecording {rows:,} served rows (8 inputs) in {BATCHES} Parquet batches: "
          f"{ours:.2f}s (runs {first:.2f}s, {second:.2f}s); pyarrow read_table of the same "
          f"files {reference:.2f}s; ratio {ours / reference:.2f} (limit 3)")
    print(f"the same batches one call each (no file read while another is written): "
          f"{one_at_a_time:.2f}s, ratio {one_at_a_time / reference:.2f}")
    print(f"the first batch this process recorded (its memory pools not grown yet): {cold:.2f}s")
    print(f"catalogue growth: {grown / 1e6:.1f} MB for {rows:,} rows in {BATCHES} windows, "
          f"{grown / rows * 1e6 / 1e6:.1f} MB per million served rows (compact rows kept for "
          f"the retention; the window summaries alone stay a few hundred kB per window)")
    assert ours <= 3 * reference


PEAK = """
import resource, sys
sys.path.insert(0, {root!r})
from tests.bench.test_after_release_bench import _record
_record(sys.argv[1], *sys.argv[2:])
print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


def _peak_kib(url: str, paths: list[Path]) -> int:
    script = PEAK.format(root=str(Path(__file__).resolve().parents[2]))
    done = subprocess.run([sys.executable, "-c", script, url, *map(str, paths)],
                          capture_output=True, text=True, check=True, timeout=900)
    return int(done.stdout.split()[-1])


def test_peak_memory_is_bounded_by_one_batch(tmp_path):
    first = datetime.now(UTC) + timedelta(minutes=1)
    url = catalogue_with_live_version(tmp_path)
    rng = np.random.default_rng(3)
    paths = []
    for day in range(4):
        paths.append(tmp_path / f"b{day}.parquet")
        pq.write_table(served_batch(rng, BATCH_ROWS, first, day), paths[-1])
    one = _peak_kib(url, paths[:1])
    url_many = catalogue_with_live_version(tmp_path / "many")
    many = _peak_kib(url_many, paths)
    batch_mib = paths[0].stat().st_size / 2**20
    print(f"\npeak RSS recording one batch {one / 1024:.0f} MiB, four batches in one process "
          f"{many / 1024:.0f} MiB (a batch file is {batch_mib:.0f} MiB)")
    assert many <= one * 1.15


@pytest.fixture(scope="module")
def ninety_days(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    rng = np.random.default_rng(90)
    training = folder / "training.parquet"
    pq.write_table(pa.table(inputs(rng, 20_000)), training)
    url = catalogue_with_live_version(folder, versions=2, training=training)
    first = datetime.now(UTC) + timedelta(minutes=1)
    from registry.service.actors import Actor
    from registry.service.serving import record_outcomes, record_served
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(url)
    actor = Actor(PUBLISHER, frozenset({"publisher"}))
    for day in range(REPORT_DAYS):
        path = folder / "day.parquet"
        table = served_batch(rng, REPORT_ROWS_PER_DAY, first, day, versions=(1, 2),
                             shift=2.0 * max(0, day - 60))
        pq.write_table(table, path)
        record_served(catalogue, "m", str(path), actor)
        scores = table.column("score").to_numpy()[:REPORT_ROWS_PER_DAY]
        labels = (rng.random(REPORT_ROWS_PER_DAY) < scores).astype(int)
        ids = table.column("row_id").to_pylist()[:REPORT_ROWS_PER_DAY]
        outcomes = folder / "outcomes.csv"
        outcomes.write_text("row_id,label\n" + "".join(f"{i},{v}\n" for i, v in zip(ids, labels)))
        record_outcomes(catalogue, "m", str(outcomes), actor)
    yield catalogue
    catalogue.close()


def test_a_report_over_ninety_daily_windows_within_200_ms(ninety_days):
    from registry.service.serving_reports import serving_report

    report = serving_report(ninety_days, "m")
    assert len(report["windows"]) == REPORT_DAYS
    best = float("inf")
    for _ in range(5):
        start = time.perf_counter()
        serving_report(ninety_days, "m")
        best = min(best, time.perf_counter() - start)
    states = {v: s["state"] for v, s in report["versions"].items()}
    print(f"\nreport over {REPORT_DAYS} daily windows, 2 versions, 8 inputs, agreement and live "
          f"quality: {best * 1000:.0f} ms (limit 200 ms); states {states}")
    assert best <= 0.200
