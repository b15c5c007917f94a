"""Benchmark: the cost of the fuller `audit verify` and of a signed checkpoint, on SQLite.

Figures the tamper-evidence issue asks for: verify time for the demo catalogue and for a
catalogue of 10,000 versions and 100,000 events, and the cost of a checkpoint. Each is printed
beside a reference timed in the same run: verify against recomputing the hash chain alone (what
`audit verify` did before rows were covered), a checkpointed write against the same write
without one. The issue sets no limit; the asserts only keep the costs within a small multiple.
Run with `python -m pytest tests/bench/test_tamper_bench.py -s`.
"""

from __future__ import annotations

import hashlib
import json
import time
from datetime import UTC, datetime, timedelta

import pytest
from click.testing import CliRunner
from sqlalchemy import insert

from registry.cli import demo
from registry.canonical_json import canonical_json, digest_of
from registry.cli import main
from registry.service.actors import Actor
from registry.service.integrity import verify_catalogue
from registry.service.registration import registration_record
from registry.service.roles import grant_role
from registry.store import sealing
from registry.store import tables as t
from registry.store.audit import GENESIS_HASH, event_hash, verify_chain
from registry.store.blob_store import chunk_rows
from registry.store.catalogue import open_catalogue
from registry.store.row_digests import column_digests
from registry.store.unit_of_work import UnitOfWork
from registry.service.integrity import AuditRecord  # noqa: F401 - the records verify walks
from tests.conftest import run_cli

VERSIONS = 10_000
EVENTS = 100_000
MODELS = 10  # their 10 creations make the chain 100,010 events long
BASE = datetime(2026, 11, 1, tzinfo=UTC)
INPUT_SCHEMA = json.dumps({"type": "record", "name": "Segment",
                           "fields": [{"name": "pipe_age_years", "type": "double"}]})


def _chain_only(catalogue) -> float:
    """The reference: recompute every event's hash and link, as verify did before."""
    from registry.store.audit import AuditRecord as Record
    from registry.service.row_coverage import parse_rows

    started = time.perf_counter()
    with UnitOfWork(catalogue, write=False) as uow:
        records = (Record(r.sequence, r.occurred_at, r.actor, r.action, r.subject,
                          json.loads(r.details_json), r.previous_hash, r.hash,
                          parse_rows(r.rows_json)) for r in uow.audit.events())
        breaks = verify_chain(records, uow.audit.head())
    assert not breaks
    return time.perf_counter() - started


def _timed_verify(catalogue) -> tuple[float, object]:
    started = time.perf_counter()
    report = verify_catalogue(catalogue)
    return time.perf_counter() - started, report


class _Chain:
    """Events as the catalogue writes them: each carries the digests of the rows it wrote."""

    def __init__(self) -> None:
        self.events: list[dict] = []
        self.previous = GENESIS_HASH

    def append(self, action: str, subject: str, details: dict, rows: list[tuple]) -> None:
        sequence = len(self.events) + 1
        at = (BASE + timedelta(seconds=sequence)).isoformat(timespec="microseconds")
        digests = [{"table": table.name, "key": [row["id"]],
                    "columns": column_digests(table, row)} for table, row in rows]
        digests.sort(key=lambda d: (d["table"], repr(tuple(d["key"]))))
        details = json.loads(canonical_json(details))
        digest = event_hash(sequence, at, "ines.okafor", action, subject, details,
                            self.previous, digests)
        self.events.append({"sequence": sequence, "occurred_at": at, "actor": "ines.okafor",
                            "action": action, "subject": subject,
                            "details_json": canonical_json(details).decode(),
                            "previous_hash": self.previous, "hash": digest,
                            "rows_json": canonical_json(digests).decode()})
        self.previous = digest


def _build_large(url: str) -> None:
    """10,000 versions over 10 models, each registered then moved nine times: 100,000 events,
    about 210,000 covered rows, written in bulk with the digests the catalogue would record."""
    assert run_cli(["--db", url, "init"]).exit_code == 0
    document = b'{"input": "double", "output": "double", "action": {"+": [1, "input"]}}'
    blob_digest = hashlib.sha256(document).hexdigest()
    chain = _Chain()
    rows: dict[str, list[dict]] = {name: [] for name in
                                   ("models", "versions", "gate_reports", "stage_holdings",
                                    "stage_events")}
    tables = t.Base.metadata.tables
    for m in range(1, MODELS + 1):
        model = {"id": m, "name": f"district-model-{m}", "description": "", "policy_toml": None,
                 "created_at": BASE, "created_by": "mara.kowalczyk"}
        rows["models"].append(model)
        chain.append("model.create", f"model/{model['name']}", {"description": ""},
                     [(tables["models"], model)])
    moves = (EVENTS - len(chain.events)) // VERSIONS  # registration + 9 moves each
    event_id = report_id = 0
    for v in range(1, VERSIONS + 1):
        m, number = (v - 1) % MODELS + 1, (v - 1) // MODELS + 1
        name = f"district-model-{m}"
        at = BASE + timedelta(minutes=v)
        registration = digest_of(registration_record(name, blob_digest, "other", INPUT_SCHEMA,
                                                     None, None, "", "", "ines.okafor", [], [],
                                                     None))
        version = {"id": v, "model_id": m, "number": number, "document_digest": blob_digest,
                   "stored_blob_digest": blob_digest, "document_kind": "other",
                   "document_summary_json": "{}", "input_schema_json": INPUT_SCHEMA,
                   "output_schema_json": None, "features_json": None, "description": "",
                   "code_revision": "", "author": "ines.okafor", "parent_number": None,
                   "registration_digest": registration, "created_at": at,
                   "created_by": "ines.okafor"}
        holding = {"id": v, "model_id": m, "version_id": v, "stage": "candidate",
                   "is_exclusive": False, "since": at, "report_id": None,
                   "previous_version_id": None}
        event_id += 1
        entered = {"id": event_id, "model_id": m, "version_id": v, "stage": "candidate",
                   "event": "entered", "details_json": "{}", "report_id": None,
                   "created_at": at, "created_by": "ines.okafor"}
        rows["versions"].append(version)
        rows["stage_events"].append(entered)
        chain.append("version.register", f"model/{name}/version/{number}",
                     {"registration_digest": registration, "document_digest": blob_digest,
                      "stored_blob_digest": blob_digest},
                     [(tables["versions"], version), (tables["stage_holdings"], holding),
                      (tables["stage_events"], entered)])
        for move in range(moves):
            stage = ("shadow", "candidate")[move % 2]
            report_id += 1
            event_id += 1
            report = {"id": report_id, "model_id": m, "version_id": v, "stage": stage,
                      "attempt": "promote", "passed": True, "report_json": "{}",
                      "created_at": at, "created_by": "tomas.lindqvist"}
            holding = {**holding, "stage": stage, "report_id": report_id}
            moved = {**entered, "id": event_id, "stage": stage, "report_id": report_id}
            rows["gate_reports"].append(report)
            rows["stage_events"].append(moved)
            chain.append("stage.promote", f"model/{name}/version/{number}", {"stage": stage},
                         [(tables["gate_reports"], report), (tables["stage_holdings"], holding),
                          (tables["stage_events"], moved)])
        rows["stage_holdings"].append(holding)
    catalogue = open_catalogue(url)
    with catalogue.engine.begin() as connection:
        connection.execute(insert(t.Blob), [{"digest": blob_digest, "size": len(document)}])
        connection.execute(insert(t.BlobChunk), chunk_rows(blob_digest, document))
        for name in ("models", "versions", "gate_reports", "stage_holdings", "stage_events"):
            connection.execute(insert(tables[name]), rows[name])
        connection.execute(insert(t.AuditEvent), chain.events)
        connection.execute(insert(t.AuditHead), [{"id": 1, "sequence": len(chain.events),
                                                  "hash": chain.previous}])
    catalogue.close()


def test_verify_cost_on_the_demo_and_on_a_large_catalogue(tmp_path, signing_key_file):
    demo_url = f"sqlite:///{tmp_path / 'demo.db'}"
    runner = CliRunner()
    demo.play(demo_url, lambda arguments, user: runner.invoke(main, arguments).exit_code,
              lambda line: None)
    large_url = f"sqlite:///{tmp_path / 'large.db'}"
    started = time.perf_counter()
    _build_large(large_url)
    print(f"\nbuilt {VERSIONS} versions and {EVENTS} events in "
          f"{time.perf_counter() - started:.1f} s")
    for label, url in (("demo catalogue", demo_url), ("10,000 versions, 100,000 events",
                                                      large_url)):
        catalogue = open_catalogue(url)
        try:
            reference = min(_chain_only(catalogue) for _ in range(2))
            elapsed, report = min((_timed_verify(catalogue) for _ in range(2)),
                                  key=lambda pair: pair[0])
        finally:
            catalogue.close()
        assert report.ok, report.findings[:3]
        print(f"{label}: verify {elapsed:.3f} s over {report.events} events and {report.rows} "
              f"rows; hash chain alone {reference:.3f} s; ratio {elapsed / reference:.1f}")
        assert elapsed / reference < 25


def test_checkpoint_cost_per_write(cli, signing_key_file, monkeypatch):
    admin = Actor("mara.kowalczyk", frozenset({"admin"}))
    cli.json("user", "grant", admin.name, "admin", user=admin.name)
    cli.json("key", "create", user=admin.name)
    catalogue = open_catalogue(cli.url)
    writes = 60

    def grants(prefix: str) -> float:
        started = time.perf_counter()
        for i in range(writes):
            grant_role(catalogue, f"{prefix}.{i}", "reader", admin)
        return (time.perf_counter() - started) / writes

    try:
        monkeypatch.setattr(sealing, "CHECKPOINT_EVERY", 10**9)
        without = min(grants("plain"), grants("plain-again"))
        monkeypatch.setattr(sealing, "CHECKPOINT_EVERY", 1)
        with_checkpoint = min(grants("signed"), grants("signed-again"))
        from registry.signing.checkpoints import sign_checkpoint

        started = time.perf_counter()
        for i in range(1000):
            sign_checkpoint(catalogue.signing_key, i, "0" * 64, BASE.isoformat())
        signing = (time.perf_counter() - started) / 1000
    finally:
        catalogue.close()
    print(f"\none write (a role grant) on {cli.url.split(':')[0]}: {without * 1000:.2f} ms "
          f"without a checkpoint, {with_checkpoint * 1000:.2f} ms with one; ratio "
          f"{with_checkpoint / without:.2f}; the Ed25519 signature alone "
          f"{signing * 1e6:.0f} microseconds")
    assert with_checkpoint / without < 2
