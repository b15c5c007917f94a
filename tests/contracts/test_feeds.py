"""Feeds as contracts: numbered immutable writer schemas, the retention window, the feed side's
check, and publishing refused unless an approver waives it. Every verdict is Avro Schema
Resolution's (Avro specification, Schema Resolution); fastavro is the oracle where data is read.
"""

from __future__ import annotations

import io
import json
from datetime import UTC, datetime, timedelta
from types import SimpleNamespace

import fastavro
import pytest
from fastavro.read import SchemaResolutionError

from registry.service.evidence_sources import in_flight
from tests.catalogue.stage_helpers import register
from tests.contracts.contract_helpers import (APPROVER, INPUT_SCHEMA, audit_count,
                                              last_audit_action,
                                              set_up_contracts, with_field, without_field,
                                              write_schema)


def test_published_schemas_are_numbered_and_shown_in_flight(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    grown = with_field(INPUT_SCHEMA, {"name": "repairs_5y", "type": "int", "default": 0})
    published = cli.json("feed", "publish", "segment-features",
                         write_schema(tmp_path, "v2", grown), "--note", "adds repairs_5y")
    assert (published["feed_version"], published["published"]) == (2, True)
    shown = cli.json("feed", "show", "segment-features")
    assert [v["feed_version"] for v in shown["versions"]] == [1, 2]
    assert shown["current_version"] == 2 and shown["in_flight"] == [1, 2]
    assert shown["versions"][1]["note"] == "adds repairs_5y"
    assert shown["versions"][0]["schema"] == INPUT_SCHEMA  # immutable: v1 is as published
    listed = cli.json("feed", "list")["feeds"]
    assert [(f["feed"], f["current_version"], f["retain_days"]) for f in listed] == [
        ("segment-features", 2, 14)]


def test_publishing_the_current_schema_again_changes_nothing_and_says_so(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    before = audit_count(cli)
    again = cli.json("feed", "publish", "segment-features",
                     write_schema(tmp_path, "same", INPUT_SCHEMA))
    assert again["published"] is False and again["feed_version"] == 1
    assert "identical" in again["summary"] and "nothing was published" in again["summary"]
    assert audit_count(cli) == before
    assert cli.json("feed", "show", "segment-features")["current_version"] == 1


def test_a_schema_live_cannot_read_is_refused_and_not_published(cli, catalogue_url, tmp_path):
    set_up_contracts(cli, tmp_path)
    version = register(cli, tmp_path, "a")
    cli.json("promote", "m", str(version), "--to", "live", user=APPROVER)
    dropped = write_schema(tmp_path, "v2", without_field(INPUT_SCHEMA, "diameter_mm"))

    check = cli.json("feed", "check", "segment-features", dropped, expect=1)
    assert check["passed"] is False and check["blocking"] == ["m@1:live"]
    live = check["holders"][0]
    assert (live["stage"], live["exclusive"], live["reads"]) == ("live", True, False)
    assert live["problems"][0]["path"] == "/fields/diameter_mm"
    # Avro specification, Schema Resolution: a reader field missing from the writer needs a
    # default; fastavro refuses the same data.
    written = io.BytesIO()
    fastavro.schemaless_writer(written, fastavro.parse_schema(without_field(INPUT_SCHEMA,
                                                                            "diameter_mm")),
                               {"segment_id": "BW-1"})
    written.seek(0)
    with pytest.raises(SchemaResolutionError):
        fastavro.schemaless_reader(written, fastavro.parse_schema(without_field(
            INPUT_SCHEMA, "diameter_mm")), fastavro.parse_schema(INPUT_SCHEMA))

    before = audit_count(cli)
    refused = cli.json("feed", "publish", "segment-features", dropped, expect=1)
    assert refused["refused"] is True and refused["published"] is False
    assert cli.json("feed", "show", "segment-features")["current_version"] == 1
    assert audit_count(cli) == before + 1  # the refused attempt is on the record
    assert last_audit_action(catalogue_url) == "feed.refuse"


def test_an_approver_may_waive_the_refusal_with_a_reason(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    version = register(cli, tmp_path, "a")
    cli.json("promote", "m", str(version), "--to", "live", user=APPROVER)
    dropped = write_schema(tmp_path, "v2", without_field(INPUT_SCHEMA, "diameter_mm"))
    # The publisher alone may not override the refusal.
    forbidden = cli("feed", "publish", "segment-features", dropped, "--waive", "--reason",
                    "the field moves to another feed", "--json")
    assert forbidden.exit_code == 2, forbidden.output
    assert cli.json("feed", "show", "segment-features")["current_version"] == 1
    missing_reason = cli("feed", "publish", "segment-features", dropped, "--waive", "--json",
                         user=APPROVER)
    assert missing_reason.exit_code == 2
    published = cli.json("feed", "publish", "segment-features", dropped, "--waive", "--reason",
                         "the field moves to another feed; live is replaced tonight",
                         user=APPROVER)
    assert published["published"] is True and published["feed_version"] == 2
    assert published["waiver"]["approver"] == APPROVER and published["waiver"]["used"] is True
    assert cli.json("audit", "verify")["ok"] is True


def test_the_check_lists_exclusive_stages_first_and_changes_nothing(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    first = register(cli, tmp_path, "a")
    cli.json("promote", "m", str(first), "--to", "live", user=APPROVER)
    register(cli, tmp_path, "b", schema=with_field(INPUT_SCHEMA,
                                                   {"name": "soil", "type": "string"}))
    before = audit_count(cli)
    check = cli.json("feed", "check", "segment-features",
                     write_schema(tmp_path, "v2", with_field(INPUT_SCHEMA,
                                                             {"name": "x", "type": "int"})))
    assert [(h["version"], h["stage"], h["reads"]) for h in check["holders"]] == [
        (1, "live", True), (2, "candidate", False)]
    assert check["passed"] is True  # only a holder of an exclusive stage refuses
    assert check["holders"][1]["problems"][0]["path"] == "/fields/soil"
    assert audit_count(cli) == before


def _schema_row(number: int, published_at: datetime):
    return SimpleNamespace(number=number, published_at=published_at)


def test_a_schema_stays_in_flight_until_its_successor_is_older_than_the_window():
    now = datetime(2026, 12, 4, 12, tzinfo=UTC)
    rows = [_schema_row(1, now - timedelta(days=40)), _schema_row(2, now - timedelta(days=20)),
            _schema_row(3, now - timedelta(days=3))]
    # v2 was superseded 3 days ago: records written under it may still be queued (14 days).
    assert [r.number for r in in_flight(rows, 14, now)] == [2, 3]
    assert [r.number for r in in_flight(rows, 30, now)] == [1, 2, 3]
    assert [r.number for r in in_flight(rows, 1, now)] == [3]
    assert in_flight([], 7, now) == []


def test_audit_verify_finds_a_feed_or_reader_schema_changed_behind_its_back(cli, catalogue_url,
                                                                            tmp_path):
    from sqlalchemy import create_engine, text

    from tests.catalogue.helpers import OUTPUT_SCHEMA

    set_up_contracts(cli, tmp_path)
    cli.json("consumer", "add", "work-order-planner", "--reads", "m", "--schema",
             write_schema(tmp_path, "reader", OUTPUT_SCHEMA))
    assert cli.json("audit", "verify")["ok"] is True
    engine = create_engine(catalogue_url)
    try:
        with engine.begin() as connection:
            connection.execute(text("UPDATE feed_schemas SET schema_json = :changed"),
                               {"changed": json.dumps(without_field(INPUT_SCHEMA,
                                                                    "diameter_mm"))})
            connection.execute(text("UPDATE consumer_schemas SET fingerprint = :forged"),
                               {"forged": "0" * 64})
    finally:
        engine.dispose()
    report = cli.json("audit", "verify", expect=1)
    places = {finding["place"] for finding in report["findings"]}
    assert {"feed/segment-features/version/1", "consumer/work-order-planner/version/1"} <= places
