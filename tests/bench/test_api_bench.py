"""Benchmark: the stage lookup against a constant-JSON endpoint, side by side, under gunicorn
with 2 workers and 16 concurrent keep-alive clients on loopback.

Run: PYTHONPATH=. python -m pytest tests/bench/test_api_bench.py -s
(set LOCKKEEPER_TEST_POSTGRES_URL to run it on PostgreSQL as well).
"""

from __future__ import annotations

import http.client
import os
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from tests.api.api_helpers import make_api, set_up_model

ROOT = Path(__file__).resolve().parents[2]
CLIENTS = 16
SECONDS = 2.0
ROUNDS = 5  # ping, lookup, ping, lookup ...: interleaved so drift in the machine hits both
REQUIRED_RATIO = 0.7


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def _wait_until_up(port: int, server: subprocess.Popen) -> None:
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        if server.poll() is not None:
            raise RuntimeError(f"gunicorn exited: {server.stderr.read().decode()[-2000:]}")
        try:
            connection = http.client.HTTPConnection("127.0.0.1", port, timeout=1)
            connection.request("GET", "/api/v1/ping")
            if connection.getresponse().status == 200:
                return
        except OSError:
            time.sleep(0.1)
    raise RuntimeError("gunicorn did not come up")


def _load(port: int, path: str, headers: dict[str, str], seconds: float
          ) -> tuple[int, list[float]]:
    """CLIENTS threads, each one keep-alive connection, asking `path` for `seconds`."""
    latencies: list[list[float]] = [[] for _ in range(CLIENTS)]
    errors: list[str] = []
    start = threading.Barrier(CLIENTS + 1)
    stop_at: list[float] = [0.0]

    def client(mine: list[float]) -> None:
        connection = http.client.HTTPConnection("127.0.0.1", port, timeout=30)
        start.wait()
        while time.monotonic() < stop_at[0]:
            began = time.perf_counter()
            connection.request("GET", path, headers=headers)
            response = connection.getresponse()
            response.read()
            if response.status != 200:
                errors.append(f"{response.status} from {path}")
                return
            mine.append(time.perf_counter() - began)
        connection.close()

    threads = [threading.Thread(target=client, args=(mine,)) for mine in latencies]
    for thread in threads:
        thread.start()
    stop_at[0] = time.monotonic() + seconds
    start.wait()
    for thread in threads:
        thread.join()
    assert not errors, errors[:3]
    flat = sorted(value for mine in latencies for value in mine)
    return len(flat), flat


def _percentile(sorted_values: list[float], share: float) -> float:
    return sorted_values[min(len(sorted_values) - 1, int(share * len(sorted_values)))]


def _measure(port: int, path: str, headers: dict[str, str]) -> dict[str, float]:
    count, latencies = _load(port, path, headers, SECONDS)
    return {"requests": count, "seconds": SECONDS, "latencies": latencies}


def _combine(runs: list[dict]) -> dict[str, float]:
    latencies = sorted(value for run in runs for value in run["latencies"])
    seconds = sum(run["seconds"] for run in runs)
    return {"throughput": sum(run["requests"] for run in runs) / seconds,
            "p50_ms": 1000 * _percentile(latencies, 0.50),
            "p99_ms": 1000 * _percentile(latencies, 0.99)}


@pytest.mark.timeout(300)
def test_stage_lookup_keeps_up_with_a_constant_answer(cli, tmp_path, request):
    api = make_api(cli)
    set_up_model(api, tmp_path)
    api.register("m", tmp_path)
    assert api.post("/models/m/versions/1/promote", {"stage": "live"},
                    role="approver").json["moved"]
    backend = request.node.callspec.params.get("empty_catalogue_url", "sqlite")

    port = _free_port()
    env = {**os.environ, "PYTHONPATH": str(ROOT), "LOCKKEEPER_DB": cli.url}
    server = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "--workers", "2", "--worker-class", "gthread",
         "--threads", "8", "--bind", f"127.0.0.1:{port}", "--keep-alive", "30",
         "--log-level", "warning", "registry.api.wsgi:app"],
        cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        _wait_until_up(port, server)
        reader = {"Authorization": f"Bearer {api.secrets['reader']}"}
        lookup = "/api/v1/models/m/stages/live"
        _load(port, lookup, reader, 0.5)  # warm both workers: engine, caches
        runs: dict[str, list] = {"ping": [], "lookup": []}
        for _ in range(ROUNDS):
            # The same request headers for both, so only the endpoint differs.
            runs["ping"].append(_measure(port, "/api/v1/ping", reader))
            runs["lookup"].append(_measure(port, lookup, reader))
    finally:
        server.terminate()
        server.wait(10)
    ping, found = _combine(runs["ping"]), _combine(runs["lookup"])
    ratio = found["throughput"] / ping["throughput"]
    print(f"\n[{backend}] gunicorn 2 workers, {CLIENTS} keep-alive clients, "
          f"{ROUNDS}x{SECONDS:.0f}s each, interleaved")
    for name, figures in (("ping (constant JSON)", ping), ("stage lookup (reader token)", found)):
        print(f"  {name:<28} {figures['throughput']:8.0f} req/s  p50 {figures['p50_ms']:6.2f} ms"
              f"  p99 {figures['p99_ms']:6.2f} ms")
    print(f"  throughput ratio lookup/ping: {ratio:.2f} (required >= {REQUIRED_RATIO})")
    assert ratio >= REQUIRED_RATIO
