"""Consumers with numbered reader schemas and their check, and `impact`: what changes if a
version enters a stage. Verdicts by Avro Schema Resolution; metric intervals by the evaluation
package (checked against scikit-learn and DeLong elsewhere)."""

from __future__ import annotations

from tests.catalogue.stage_helpers import register
from tests.contracts.contract_helpers import (APPROVER, INPUT_SCHEMA, OUTPUT_SCHEMA,
                                              audit_count, set_up_contracts, with_field,
                                              write_schema)

IMPACT_KEYS = ["model", "version", "stage", "incumbent", "feeds", "consumers", "features",
               "metrics", "slices", "datasets"]


def test_reader_schemas_are_numbered_and_the_current_one_again_changes_nothing(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    added = cli.json("consumer", "add", "work-order-planner", "--reads", "m", "--schema",
                     write_schema(tmp_path, "r1", OUTPUT_SCHEMA), "--owner", "asset planning")
    assert (added["schema_version"], added["owner"], added["model"]) == (1, "asset planning", "m")
    optional = with_field(OUTPUT_SCHEMA, {"name": "risk_band", "type": "string",
                                          "default": "unknown"})
    updated = cli.json("consumer", "update", "work-order-planner", "--schema",
                       write_schema(tmp_path, "r2", optional))
    assert updated["schema_version"] == 2 and updated["changed"] is True
    before = audit_count(cli)
    again = cli.json("consumer", "update", "work-order-planner", "--schema",
                     write_schema(tmp_path, "r2-again", optional))
    assert again["changed"] is False and again["schema_version"] == 2
    assert audit_count(cli) == before
    listed = cli.json("consumer", "list")["consumers"]
    assert [(c["consumer"], c["schema_version"]) for c in listed] == [("work-order-planner", 2)]
    cli.json("consumer", "remove", "work-order-planner")
    assert cli.json("consumer", "list")["consumers"] == []


def test_a_proposed_reader_needing_a_field_no_version_writes_breaks_live(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    first = register(cli, tmp_path, "a")
    cli.json("promote", "m", str(first), "--to", "live", user=APPROVER)
    register(cli, tmp_path, "b")
    cli.json("consumer", "add", "work-order-planner", "--reads", "m", "--schema",
             write_schema(tmp_path, "r1", OUTPUT_SCHEMA))
    wanting = with_field(OUTPUT_SCHEMA, {"name": "expected_repair_cost_gbp", "type": "double"})
    before = audit_count(cli)
    check = cli.json("consumer", "check", "work-order-planner",
                     write_schema(tmp_path, "r2", wanting), expect=1)
    assert check["passed"] is False and check["blocking"] == ["m@1:live"]
    assert check["unreadable"] == [{"stage": "live", "versions": [1]},
                                   {"stage": "candidate", "versions": [2]}]
    live = check["stages"][0]
    assert live["versions"][0]["problems"][0]["path"] == "/fields/expected_repair_cost_gbp"
    assert audit_count(cli) == before


def test_impact_has_exactly_the_keys_of_the_issue_and_changes_nothing(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    first = register(cli, tmp_path, "a")
    cli.json("promote", "m", str(first), "--to", "live", user=APPROVER)
    cli.json("consumer", "add", "work-order-planner", "--reads", "m", "--schema",
             write_schema(tmp_path, "r1", OUTPUT_SCHEMA))
    grown = with_field(INPUT_SCHEMA, {"name": "repairs_5y", "type": "int", "default": 0})
    cli.json("feed", "publish", "segment-features", write_schema(tmp_path, "v2", grown))
    second = register(cli, tmp_path, "b", schema=grown)
    before = audit_count(cli)
    found = cli.json("impact", "m", str(second), "--to", "live")
    assert list(found) == IMPACT_KEYS
    assert (found["model"], found["version"], found["stage"], found["incumbent"]) == (
        "m", second, "live", first)
    assert [(f["feed"], f["feed_version"], f["compatible"]) for f in found["feeds"]] == [
        ("segment-features", 2, True), ("segment-features", 1, True)]
    assert [(c["consumer"], c["compatible"]) for c in found["consumers"]] == [
        ("work-order-planner", True)]
    assert found["datasets"] == [] and found["slices"] == []
    assert audit_count(cli) == before
    text = cli("impact", "m", str(second), "--to", "live")
    assert text.exit_code == 0 and "what changes if m v2 goes to live" in text.output
    # A version is named N, vN or MODEL@N (DESIGN.md).
    assert cli.json("impact", f"m@{second}", "--to", "live") == found
    assert cli.json("impact", "m", f"v{second}", "--to", "live") == found
    for wrong in (("m", "two"), ("m@2", "2"), ("m",), ("m", "0")):
        assert cli("impact", *wrong, "--to", "live").exit_code == 2, wrong


def test_impact_on_the_demo_shows_metrics_and_slices_that_move(catalogue_url, cli):
    from click.testing import CliRunner

    from registry.cli import demo
    from registry.cli import main

    def run(arguments, user):
        return CliRunner().invoke(main, arguments, catch_exceptions=False).exit_code

    demo.play(catalogue_url, run, lambda line: None)
    found = cli.json("impact", "main-burst-risk", "2", "--to", "live")
    assert found["incumbent"] == 1
    auc = next(m for m in found["metrics"] if m["metric"] == "roc_auc")
    assert auc["moves"] == "better" and auc["ci_low"] > 0
    assert {"column": "district", "value": "SALTMARSH", "moves": "worse"}.items() <= next(
        s for s in found["slices"] if s["value"] == "SALTMARSH").items()
    assert all(s["moves"] != "steady" for s in found["slices"])
    assert [f["feed_version"] for f in found["feeds"]] == [2, 1]
    assert found["consumers"][0]["consumer"] == "work-order-planner"
