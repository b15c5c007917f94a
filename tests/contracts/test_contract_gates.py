"""reads-live-feed, rollback-safe and output-readable against declared contracts: every feed
schema in flight (named by its feed version) and every declared consumer (named, with the path).
The verdicts are Avro Schema Resolution's (Avro specification, Schema Resolution: a reader field
absent from the writer needs a default; fields the reader lacks are ignored)."""

from __future__ import annotations

import json

from registry import gates
from registry.gates.contract_gates import consumers_read_output, reads_declared_feed
from tests.catalogue.helpers import OUTPUT_SCHEMA, write_version_files
from tests.catalogue.stage_helpers import register
from tests.contracts.contract_helpers import (APPROVER, INPUT_SCHEMA, set_up_contracts,
                                              with_field, write_schema)

DISTRICT = {"name": "district", "type": "string"}


def _gate(report: dict, gate: str) -> dict:
    return next(r for r in report["results"] if r["gate"] == gate)


def test_a_candidate_must_read_every_feed_schema_in_flight_named_by_feed_version(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    cli.json("feed", "publish", "segment-features",
             write_schema(tmp_path, "v2", with_field(INPUT_SCHEMA, DISTRICT)))
    # Reads v2 (which writes district) but not v1, whose records are still in flight.
    version = register(cli, tmp_path, "needs-district", schema=with_field(INPUT_SCHEMA, DISTRICT))
    report = cli.json("check", "m", str(version), "--to", "live", user=APPROVER, expect=1)
    result = _gate(report, "reads-live-feed")
    assert result["status"] == "failed"
    assert "/fields/district" in result["summary"] and "segment-features v1" in result["summary"]
    verdicts = {c["feed_version"]: c["compatible"] for c in result["evidence"]["checks"]}
    assert verdicts == {1: False, 2: True}


def test_the_first_version_into_live_is_checked_against_the_declared_feed(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    version = register(cli, tmp_path, "needs-district", schema=with_field(INPUT_SCHEMA, DISTRICT))
    report = cli.json("promote", "m", str(version), "--to", "live", user=APPROVER, expect=1)
    assert _gate(report["report"], "reads-live-feed")["status"] == "failed"
    assert cli.json("status", "m")["stages"]["live"] == []


def test_rollback_safe_asks_the_version_a_rollback_restores_to_read_the_feed(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    first = register(cli, tmp_path, "a")
    cli.json("promote", "m", str(first), "--to", "live", user=APPROVER)
    # The producer drops diameter_mm, waived by an approver; live v1 cannot read it.
    dropped = {**INPUT_SCHEMA, "fields": [INPUT_SCHEMA["fields"][0]]}
    cli.json("feed", "publish", "segment-features", write_schema(tmp_path, "v2", dropped),
             "--waive", "--reason", "diameter moves to the asset feed", user=APPROVER)
    optional = {**INPUT_SCHEMA, "fields": [INPUT_SCHEMA["fields"][0],
                                           {"name": "diameter_mm", "type": "int", "default": 0}]}
    second = register(cli, tmp_path, "b", schema=optional)
    report = cli.json("check", "m", str(second), "--to", "live", user=APPROVER, expect=1)
    assert _gate(report, "reads-live-feed")["status"] == "passed"
    rollback = _gate(report, "rollback-safe")
    assert rollback["status"] == "failed"
    assert "version 1" in rollback["summary"] and "segment-features v2" in rollback["summary"]


def test_a_model_without_a_declared_feed_keeps_the_incumbent_check(cli, tmp_path):
    set_up_contracts(cli, tmp_path, feed=None)
    first = register(cli, tmp_path, "a")
    cli.json("promote", "m", str(first), "--to", "live", user=APPROVER)
    second = register(cli, tmp_path, "b", schema=with_field(INPUT_SCHEMA, DISTRICT))
    report = cli.json("check", "m", str(second), "--to", "live", user=APPROVER, expect=1)
    result = _gate(report, "reads-live-feed")
    assert "written by version 1" in result["summary"]
    assert "feed" not in result["evidence"]


def test_a_manifest_may_name_its_own_feed(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    cli.json("feed", "create", "district-features")
    cli.json("feed", "publish", "district-features",
             write_schema(tmp_path, "d1", with_field(INPUT_SCHEMA, DISTRICT)))
    document, manifest = write_version_files(tmp_path / "own", document=b"own",
                                             manifest_extra='feed = "district-features"\n')
    (tmp_path / "own" / "input.avsc").write_text(json.dumps(with_field(INPUT_SCHEMA, DISTRICT)))
    version = cli.json("register", "m", str(document), "--manifest", str(manifest))["version"]
    report = cli.json("check", "m", str(version), "--to", "live", user=APPROVER)
    assert "district-features" in _gate(report, "reads-live-feed")["summary"]
    assert cli.json("audit", "verify")["ok"] is True  # the feed is part of the registration


def test_output_readable_names_each_declared_consumer_and_the_path(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    first = register(cli, tmp_path, "a")
    wants_band = with_field(OUTPUT_SCHEMA, {"name": "risk_band", "type": "string"})
    cli.json("consumer", "add", "work-order-planner", "--reads", "m", "--schema",
             write_schema(tmp_path, "planner", OUTPUT_SCHEMA), "--owner", "asset planning")
    cli.json("consumer", "add", "band-board", "--reads", "m", "--schema",
             write_schema(tmp_path, "band", wants_band))
    report = cli.json("check", "m", str(first), "--to", "live", user=APPROVER, expect=1)
    result = _gate(report, "output-readable")
    assert result["status"] == "failed"
    assert "band-board" in result["summary"] and "/fields/risk_band" in result["summary"]
    assert {c["consumer"]: c["compatible"] for c in result["evidence"]["checks"]} == {
        "band-board": False, "work-order-planner": True}
    cli.json("consumer", "remove", "band-board")
    report = cli.json("check", "m", str(first), "--to", "live", user=APPROVER)
    assert "work-order-planner" in _gate(report, "output-readable")["summary"]


def _evidence(**extra) -> gates.Evidence:
    return gates.Evidence(model="m", version=2, author="ines.okafor",
                          evaluated_at="2026-12-04T12:00:00+00:00", incumbent_version=1, **extra)


def test_a_declared_feed_without_any_schema_cannot_be_read():
    result = reads_declared_feed(_evidence(feed_name="segment-features"))
    assert not result.passed and "no published schema" in result.summary


def test_the_consumer_gate_reports_every_failing_consumer():
    problem = gates.SchemaProblem(path="/fields/risk_band", rule="missing-field",
                                  message="no default")
    checks = tuple(gates.ConsumerCheck(consumer=name, schema_version=1, owner="", version=2,
                                       compatible=False, problems=(problem,))
                   for name in ("a-board", "b-board"))
    result = consumers_read_output(_evidence(consumer_checks=checks))
    assert not result.passed and "a-board" in result.summary
    assert any("b-board" in note for note in result.notes)
    # The evidence is plain JSON in the gate report, like every other gate evidence.
    plain = gates.to_plain(_evidence(consumer_checks=checks))
    assert [c["consumer"] for c in plain["consumer_checks"]] == ["a-board", "b-board"]


def test_live_data_check_weighs_the_break_of_the_declared_feed():
    from registry.gates.schema_gates import live_data_check

    problem = gates.SchemaProblem(path="/fields/district", rule="missing-field",
                                  message="no default")
    checks = (gates.FeedSchemaCheck(feed="segment-features", feed_version=2,
                                    published_at="2026-12-04T12:00:00+00:00", is_current=True,
                                    version=2, compatible=True),
              gates.FeedSchemaCheck(feed="segment-features", feed_version=1,
                                    published_at="2026-12-01T12:00:00+00:00", is_current=False,
                                    version=2, compatible=False, problems=(problem,)))
    evidence = gates.Evidence(model="m", version=2, author="ines.okafor",
                              evaluated_at="2026-12-04T12:00:00+00:00",
                              feed_name="segment-features", feed_checks=checks)
    result = live_data_check(evidence, {"min_rows": 100, "unexercised_blocks": False}, "live")
    assert not result.passed and "/fields/district" in result.summary
