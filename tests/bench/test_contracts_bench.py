"""Benchmark: `feed check` against 1,000 models that read the feed, each holding a stage with
a 200-field input schema.

Issue 19 asks for the check within 1 s, and within 2x the time of the bare schema resolutions
it performs: parsing each holder's input schema and resolving the proposed writer schema
against it (Avro specification, Schema Resolution), timed in the same run without the
catalogue. Run with `python -m pytest tests/bench/test_contracts_bench.py -s`.
"""

from __future__ import annotations

import json
import statistics
import time
from datetime import UTC, datetime

import pytest
from sqlalchemy import insert

from registry import schema as avro
from registry.service.feeds import check_feed_schema
from registry.store import tables as t
from registry.store.catalogue import open_catalogue
from tests.conftest import run_cli

MODELS = 1_000
FIELDS = 200
LIMIT_SECONDS = 1.0
LIMIT_RATIO = 2.0
RUNS = 5
TYPES = ("double", "int", "string", "long", "boolean")


def _fields(count: int) -> list[dict]:
    return [{"name": f"feature_{i:03d}", "type": TYPES[i % len(TYPES)]} for i in range(count)]


def reader_schema(model: int) -> dict:
    """Each model reads a schema of its own (its last field, with a default, is named after
    it), so no holder's parse or resolution can stand in for another's."""
    fields = _fields(FIELDS)
    fields[-1] = {"name": f"feature_of_model_{model}", "type": "int", "default": 0}
    # Every tenth model does not read the column the proposal turns into a float.
    if model % 10 == 0:
        fields[FIELDS // 2 + 1] = {"name": "feature_dropped", "type": "int", "default": 0}
    return {"type": "record", "name": "Segment", "namespace": "bench",
            "doc": f"input of bench model {model}", "fields": fields}


def proposed_schema() -> dict:
    fields = _fields(FIELDS)
    fields[FIELDS // 2 + 1]["type"] = "float"  # an int column turned float breaks its readers
    fields.append({"name": "feature_new", "type": "string", "default": ""})
    return {"type": "record", "name": "Segment", "namespace": "bench", "fields": fields}


@pytest.fixture(scope="module")
def bench_catalogue(tmp_path_factory):
    url = f"sqlite:///{tmp_path_factory.mktemp('contracts-bench') / 'catalogue.db'}"
    assert run_cli(["--db", url, "init"]).exit_code == 0
    catalogue = open_catalogue(url)
    now = datetime(2026, 12, 4, tzinfo=UTC)
    texts = [json.dumps(reader_schema(m)) for m in range(MODELS)]
    with catalogue.engine.begin() as connection:
        connection.execute(insert(t.Blob), [{"digest": "0" * 64, "size": 0}])
        connection.execute(insert(t.Feed), [{"id": 1, "name": "bench-feed", "description": "",
                                             "retain_days": 7, "created_at": now,
                                             "created_by": "bench"}])
        connection.execute(insert(t.Model), [
            {"id": m + 1, "name": f"line-{m}", "description": "", "created_at": now,
             "created_by": "bench"} for m in range(MODELS)])
        connection.execute(insert(t.ModelFeed), [{"model_id": m + 1, "feed_id": 1}
                                                 for m in range(MODELS)])
        connection.execute(insert(t.Version), [
            {"id": m + 1, "model_id": m + 1, "number": 1, "document_digest": f"{m:064d}",
             "stored_blob_digest": "0" * 64, "document_kind": "bench",
             "document_summary_json": "{}", "input_schema_json": texts[m],
             "output_schema_json": None, "features_json": None, "description": "",
             "code_revision": "", "author": "bench", "parent_number": None,
             "registration_digest": f"{m:064d}", "created_at": now, "created_by": "bench"}
            for m in range(MODELS)])
        connection.execute(insert(t.StageHolding), [
            {"model_id": m + 1, "version_id": m + 1, "stage": "live", "is_exclusive": True,
             "since": now, "report_id": None, "previous_version_id": None}
            for m in range(MODELS)])
    yield catalogue, texts
    catalogue.close()


def _bare_resolutions(texts: list[str], proposed_text: str) -> list[bool]:
    writer = avro.load(proposed_text)
    return [avro.resolve(avro.parse(json.loads(text)), writer).compatible for text in texts]


def _timed(work) -> tuple[float, object]:
    started = time.perf_counter()
    result = work()
    return time.perf_counter() - started, result


def test_feed_check_of_a_thousand_holders(bench_catalogue):
    catalogue, texts = bench_catalogue
    proposed_text = json.dumps(proposed_schema())
    check_feed_schema(catalogue, "bench-feed", proposed_text)  # warm the connection pool
    checks, bares = [], []
    for _ in range(RUNS):  # interleaved, so both see the same machine load
        seconds, verdict = _timed(lambda: check_feed_schema(catalogue, "bench-feed",
                                                            proposed_text))
        checks.append(seconds)
        seconds, bare = _timed(lambda: _bare_resolutions(texts, proposed_text))
        bares.append(seconds)
    check_time, bare_time = statistics.median(checks), statistics.median(bares)
    ratio = check_time / bare_time
    print(f"\nfeed check of {MODELS} holders with {FIELDS}-field schemas: "
          f"{check_time * 1000:.0f} ms (median of {RUNS}); bare parse + resolve: "
          f"{bare_time * 1000:.0f} ms; ratio {ratio:.2f} (limits {LIMIT_SECONDS:.1f} s, "
          f"{LIMIT_RATIO:.1f}x)")
    assert len(verdict["holders"]) == MODELS
    assert [h["reads"] for h in verdict["holders"]] == [
        compatible for _, compatible in sorted(zip([f"line-{m}" for m in range(MODELS)], bare))]
    assert verdict["passed"] is False  # readers of the int column cannot take a float
    assert check_time < LIMIT_SECONDS
    assert ratio < LIMIT_RATIO
