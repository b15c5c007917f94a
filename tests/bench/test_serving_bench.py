"""Benchmarks of the serving handoff, each against a reference measured in the same run:

- a 50 MB document fetched through gunicorn, against the same gunicorn streaming the same bytes
  from a file with a bare WSGI app (required: within 1.5x), the API as production runs it (its
  document cache on); printed beside it, not required: the same API reading every byte from the
  catalogue, and the first fetch of a document (read from the catalogue while its copy is made);
- 200 requests waiting on the stage lookup see a promotion or rollback (required: 99th
  percentile within 1 s of the commit);
- `release verify`'s check of a statement, against the `cryptography` library's bare Ed25519
  verify plus one SHA-256 of the document (required: within 2x).

Run: .venv/bin/python -m pytest tests/bench/test_serving_bench.py -s
"""

from __future__ import annotations

import dataclasses
import hashlib
import http.client
import os
import statistics
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from registry.signing import dsse
from registry.signing.keys import key_id_of
from registry.signing.release_check import check_release
from registry.signing.statements import PAYLOAD_TYPE

from tests.api.api_helpers import make_api, set_up_model, upload_parts
from tests.bench.test_api_bench import _free_port, _percentile, _wait_until_up
from tests.catalogue.helpers import write_version_files
from tests.signing.statement_examples import STATEMENT, rfc8032_key

ROOT = Path(__file__).resolve().parents[2]
DOCUMENT_SIZE = 50 * 1024 * 1024
FETCH_ROUNDS = 5
FETCH_RATIO = 1.5
WAITERS = 200
WAIT_ROUNDS = 3
WAIT_P99_SECONDS = 1.0
VERIFY_RATIO = 2.0


def _gunicorn(port: int, env: dict[str, str], threads: int) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "--workers", "2", "--worker-class", "gthread",
         "--threads", str(threads), "--bind", f"127.0.0.1:{port}", "--keep-alive", "60",
         "--timeout", "120", "--log-level", "warning", "tests.bench.serving_apps:app"],
        cwd=ROOT, env={**os.environ, "PYTHONPATH": str(ROOT), **env},
        stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)


def _register(api, tmp_path: Path, tag: str, content: bytes) -> None:
    document, manifest = write_version_files(tmp_path / tag, document=content, description=tag)
    response = api.post("/models/m/versions", role="publisher",
                        data=upload_parts(document, manifest),
                        content_type="multipart/form-data")
    assert response.status_code == 201, response.data


def _fetch_seconds(port: int, path: str, headers: dict[str, str], expected: str) -> float:
    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=120)
    began = time.perf_counter()
    connection.request("GET", path, headers=headers)
    response = connection.getresponse()
    assert response.status == 200, response.read()[:500]
    digest = hashlib.sha256()
    while chunk := response.read(1024 * 1024):
        digest.update(chunk)
    elapsed = time.perf_counter() - began
    connection.close()
    assert digest.hexdigest() == expected
    return elapsed


@pytest.mark.timeout(600)
def test_a_50_mb_document_streams_nearly_as_fast_as_a_bare_file_app(cli, tmp_path, request):
    api = make_api(cli)
    set_up_model(api, tmp_path)
    block = hashlib.sha256(b"brackwater").digest() * 32768  # 1 MiB, not compressible to nothing
    content = block * (DOCUMENT_SIZE // len(block))
    expected = hashlib.sha256(content).hexdigest()
    _register(api, tmp_path, "big", content)
    file = tmp_path / "document.bin"
    file.write_bytes(content)
    del content
    backend = request.node.callspec.params.get("empty_catalogue_url", "sqlite")
    port = _free_port()
    copies = tmp_path / "document-copies"
    server = _gunicorn(port, {"LOCKKEEPER_DB": cli.url, "BENCH_DOCUMENT_FILE": str(file),
                              "LOCKKEEPER_DOCUMENT_CACHE": str(copies)}, 4)
    reader = {"Authorization": f"Bearer {api.secrets['reader']}"}
    document = "/api/v1/models/m/versions/1/document"
    paths = {"bare": "/bare/document", "lockkeeper": document,
             "uncached": f"/uncached{document}"}
    if backend == "postgresql":
        paths["database"] = "/bare-database/document"
    times: dict[str, list[float]] = {name: [] for name in [*paths, "first"]}
    try:
        _wait_until_up(port, server)
        for name, path in paths.items():  # warm every app (the copy is made here)
            _fetch_seconds(port, path, reader, expected)
        for _ in range(4):  # each worker process hashes the copy once before trusting it
            _fetch_seconds(port, document, reader, expected)
        for _ in range(FETCH_ROUNDS):
            for name, path in paths.items():
                times[name].append(_fetch_seconds(port, path, reader, expected))
        for _ in range(FETCH_ROUNDS):  # a document no worker has a copy of yet
            for copy in copies.iterdir():
                copy.unlink()
            times["first"].append(_fetch_seconds(port, document, reader, expected))
    finally:
        server.terminate()
        server.wait(10)
    bare, ours = statistics.median(times["bare"]), statistics.median(times["lockkeeper"])
    ratio = ours / bare
    print(f"\n[{backend}] 50 MB document through gunicorn (2 gthread workers), median of "
          f"{FETCH_ROUNDS}, interleaved")
    print(f"  bare WSGI app streaming the file     {1000 * bare:8.1f} ms "
          f"({DOCUMENT_SIZE / bare / 2**20:7.0f} MiB/s)")
    print(f"  GET .../versions/1/document         {1000 * ours:8.1f} ms "
          f"({DOCUMENT_SIZE / ours / 2**20:7.0f} MiB/s)")
    for name, label in (("uncached", "  the same, no document cache       "),
                        ("first", "  the same, first fetch (copy made) ")):
        seconds = statistics.median(times[name])
        print(f"{label} {1000 * seconds:8.1f} ms ({DOCUMENT_SIZE / seconds / 2**20:7.0f} MiB/s, "
              f"{seconds / bare:.2f}x, not required)")
    if backend == "postgresql":
        whole = statistics.median(times["database"])
        print(f"  bare WSGI app, every piece at once  {1000 * whole:8.1f} ms "
              f"({DOCUMENT_SIZE / whole / 2**20:7.0f} MiB/s)")
    print(f"  time ratio lockkeeper/bare: {ratio:.2f} (required <= {FETCH_RATIO})")
    assert ratio <= FETCH_RATIO


class _Waiter(threading.Thread):
    def __init__(self, port: int, headers: dict[str, str]) -> None:
        super().__init__(daemon=True)
        self.port, self.headers = port, headers
        self.status: int | None = None
        self.answered_at: float | None = None
        self.sent = threading.Event()

    def run(self) -> None:
        connection = http.client.HTTPConnection("127.0.0.1", self.port, timeout=60)
        connection.request("GET", "/api/v1/models/m/stages/live?wait=30", headers=self.headers)
        self.sent.set()
        response = connection.getresponse()
        response.read()
        self.answered_at = time.monotonic()
        self.status = response.status
        connection.close()


@pytest.mark.timeout(600)
def test_two_hundred_waiting_requests_see_a_change_within_a_second(cli, tmp_path, request):
    api = make_api(cli)
    set_up_model(api, tmp_path)
    _register(api, tmp_path, "v1", b"v1")
    _register(api, tmp_path, "v2", b"v2")
    assert api.post("/models/m/versions/1/promote", {"stage": "live"},
                    role="approver").json["moved"]
    backend = request.node.callspec.params.get("empty_catalogue_url", "sqlite")
    port = _free_port()
    server = _gunicorn(port, {"LOCKKEEPER_DB": cli.url, "BENCH_DOCUMENT_FILE": "/dev/null",
                              "LOCKKEEPER_MAX_WAITING": str(WAITERS)}, WAITERS + 16)
    reader = {"Authorization": f"Bearer {api.secrets['reader']}"}
    latencies: list[float] = []
    moves = [lambda: api.post("/models/m/versions/2/promote", {"stage": "live"},
                              role="approver"),
             lambda: api.post("/models/m/stages/live/rollback", role="approver")]
    try:
        _wait_until_up(port, server)
        for round_number in range(WAIT_ROUNDS):
            connection = http.client.HTTPConnection("127.0.0.1", port, timeout=10)
            connection.request("GET", "/api/v1/models/m/stages/live", headers=reader)
            response = connection.getresponse()
            response.read()
            etag = response.getheader("ETag")
            connection.close()
            waiters = [_Waiter(port, {**reader, "If-None-Match": etag}) for _ in range(WAITERS)]
            for waiter in waiters:
                waiter.start()
            for waiter in waiters:
                waiter.sent.wait(10)
            time.sleep(2.0)  # every request is in a worker, waiting
            assert all(w.status is None for w in waiters), "answered before the change"
            moved = moves[round_number % 2]()
            assert moved.status_code == 200 and moved.json["moved"], moved.data
            committed = time.monotonic()
            for waiter in waiters:
                waiter.join(30)
                assert waiter.status == 200, waiter.status
                latencies.append(max(0.0, waiter.answered_at - committed))
    finally:
        server.terminate()
        server.wait(10)
    latencies.sort()
    p50, p99 = _percentile(latencies, 0.50), _percentile(latencies, 0.99)
    print(f"\n[{backend}] {WAITERS} requests waiting (?wait=30) on 2 gunicorn workers, "
          f"{WAIT_ROUNDS} changes (promote, rollback, ...) made by another process")
    print(f"  time from commit to answer: p50 {1000 * p50:6.0f} ms  p99 {1000 * p99:6.0f} ms  "
          f"max {1000 * latencies[-1]:6.0f} ms (required p99 <= {WAIT_P99_SECONDS:.0f} s)")
    assert p99 <= WAIT_P99_SECONDS


def _best_of(function, repeats: int = 7, number: int = 200) -> float:
    """Seconds per call: the best of `repeats` runs of `number` calls (timeit's advice)."""
    best = float("inf")
    for _ in range(repeats):
        began = time.perf_counter()
        for _ in range(number):
            function()
        best = min(best, (time.perf_counter() - began) / number)
    return best


@pytest.mark.parametrize("size", [6 * 1024, 1024 * 1024])
def test_verifying_a_statement_costs_little_more_than_the_signature_and_the_hash(size):
    document = (b"brackwater " * (size // 11 + 1))[:size]
    key = rfc8032_key()
    statement = dataclasses.replace(STATEMENT,
                                    document_sha256=hashlib.sha256(document).hexdigest())
    envelope = dsse.sign(PAYLOAD_TYPE, statement.to_payload(), key_id_of(key.public_key()),
                         key.sign)
    envelope_bytes = envelope.to_json()
    public = key.public_key()
    message = dsse.pae(PAYLOAD_TYPE, envelope.payload)
    signature = envelope.signatures[0].signature

    def bare() -> None:
        hashlib.sha256(document).hexdigest()
        public.verify(signature, message)

    def ours() -> None:
        verdict = check_release(hashlib.sha256(document).hexdigest(), dsse.parse(envelope_bytes),
                                public, model="main-burst-risk", stage="live")
        assert verdict.verified

    number = 200 if size < 100_000 else 40
    reference, measured = _best_of(bare, number=number), _best_of(ours, number=number)
    ratio = measured / reference
    print(f"\n  document {size // 1024} KiB: bare Ed25519 verify + SHA-256 "
          f"{1e6 * reference:8.1f} us, release check {1e6 * measured:8.1f} us, "
          f"ratio {ratio:.2f} (required <= {VERIFY_RATIO})")
    assert ratio <= VERIFY_RATIO
