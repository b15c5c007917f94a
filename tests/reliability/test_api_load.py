"""Load on the HTTP API: 32 loopback clients poll the `live` holder while 4 clients register
and promote. No 5xx; every lookup names a version that held `live` while it was asked."""

from __future__ import annotations

import json
import threading
import time
import logging
from datetime import UTC, datetime

import pytest
from sqlalchemy import text
from werkzeug.serving import make_server

from registry.app import create_app
from registry.cli.remote import ApiClient
from registry.errors import LockkeeperError
from tests.api.api_helpers import make_tokens
from tests.catalogue.helpers import write_version_files
from tests.catalogue.stage_helpers import register, set_up_model

pytestmark = pytest.mark.reliability
POLLERS, WRITERS, SECONDS = 32, 4, 8.0
# A version stays visible after its leaving event was written until that transaction commits.
COMMIT_LAG_ALLOWED = 2.0


def _serve(url: str):
    logging.getLogger("werkzeug").setLevel(logging.WARNING)  # one line per request otherwise
    server = make_server("127.0.0.1", 0, create_app(url, pages=False), threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    return server, f"http://127.0.0.1:{server.server_port}"


def _intervals(catalogue) -> dict[int, list[list[float | None]]]:
    """When each version held `live`, from the stage_events timeline."""
    spans: dict[int, list[list[float | None]]] = {}
    with catalogue.engine.connect() as connection:
        rows = connection.execute(text(
            "SELECT v.number, e.event, e.created_at FROM stage_events e JOIN versions v ON "
            "v.id = e.version_id WHERE e.stage = 'live' ORDER BY e.id")).all()
    for number, event, created_at in rows:
        if isinstance(created_at, str):  # SQLite hands back the stored text
            created_at = datetime.fromisoformat(created_at)
        moment = (created_at.replace(tzinfo=UTC) if created_at.tzinfo is None
                  else created_at).timestamp()
        if event in ("entered", "restored"):
            spans.setdefault(number, []).append([moment, None])
        else:
            spans[number][-1][1] = moment
    return spans


def test_lookups_under_load_never_name_a_version_that_did_not_hold_the_stage(cli, tmp_path,
                                                                            catalogue):
    set_up_model(cli, tmp_path, {}, skippable=("shadow", "canary"))
    first = register(cli, tmp_path, "first")
    cli.json("promote", "m", str(first), "--to", "live", user="tomas.lindqvist")
    secrets = make_tokens(cli.url)
    server, base = _serve(cli.url)
    stop = time.monotonic() + SECONDS
    lookups: list[tuple[float, float, int, int | None]] = []
    writes: list[tuple[str, str]] = []
    failures: list[str] = []

    def poll() -> None:
        client = ApiClient(base, secrets["reader"])
        mine = []
        while time.monotonic() < stop:
            asked = time.time()
            try:
                status, _, document = client.request("GET", "/models/m/stages/live")
                mine.append((asked, time.time(), status, document["version"]))
            except LockkeeperError as error:
                mine.append((asked, time.time(), getattr(error, "status", 0) or 0, None))
                failures.append(f"{type(error).__name__}: {error.one_line()}")
        lookups.extend(mine)

    def write(number: int) -> None:
        publisher = ApiClient(base, secrets["publisher"], timeout=120)
        approver = ApiClient(base, secrets["approver"], timeout=120)
        step = 0
        while time.monotonic() < stop:
            step += 1
            tag = f"writer-{number}-{step}"
            document, manifest = write_version_files(tmp_path / tag, document=tag.encode(),
                                                     description=tag)
            try:
                version = publisher.register("m", document, manifest)["version"]
                approver.promote("m", version, "live")
                writes.append(("promote", "ok"))
            except LockkeeperError as error:  # a lost race is a clean 409
                writes.append(("promote", type(error).__name__))
                if getattr(error, "http_status", 0) >= 500 or getattr(error, "status", 0) >= 500:
                    failures.append(f"writer: {error.one_line()}")

    threads = [threading.Thread(target=poll) for _ in range(POLLERS)]
    threads += [threading.Thread(target=write, args=(n,)) for n in range(WRITERS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=SECONDS + 300)
    server.shutdown()
    assert not failures, failures[:5]
    assert all(status == 200 for _, _, status, _ in lookups)
    spans = _intervals(catalogue)
    worst_lag = 0.0
    for asked, answered, _, version in lookups:
        fitting = [(start, end) for start, end in spans.get(version, []) if start <= answered]
        assert fitting, f"v{version} had not entered live when it was answered"
        lag = min(0.0 if end is None else max(0.0, asked - end) for _, end in fitting)
        worst_lag = max(worst_lag, lag)
    assert worst_lag <= COMMIT_LAG_ALLOWED, f"a lookup named a holder {worst_lag:.2f} s after " \
                                            "it left"
    latencies = sorted(answered - asked for asked, answered, _, _ in lookups)
    figures = {"lookups": len(lookups), "versions_live": len(spans),
               "promotions": sum(1 for _, outcome in writes if outcome == "ok"),
               "writer_refusals": sum(1 for _, outcome in writes if outcome != "ok"),
               "p50_ms": round(1000 * latencies[len(latencies) // 2], 1),
               "p99_ms": round(1000 * latencies[int(len(latencies) * 0.99)], 1),
               "worst_lag_after_leaving_ms": round(1000 * worst_lag, 1)}
    print("API load", json.dumps(figures))
    assert figures["promotions"] > 0
