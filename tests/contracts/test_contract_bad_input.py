"""Bad input to the contract commands: each is exit 2 with a one-line error naming its place,
and nothing in the catalogue changes (the audit log does not grow)."""

from __future__ import annotations

import pytest

from tests.catalogue.helpers import write_version_files
from tests.contracts.contract_helpers import (INPUT_SCHEMA, OUTPUT_SCHEMA, audit_count,
                                              set_up_contracts, write_schema)


@pytest.fixture
def ready(cli, tmp_path):
    set_up_contracts(cli, tmp_path)
    cli.json("consumer", "add", "work-order-planner", "--reads", "m", "--schema",
             write_schema(tmp_path, "reader", OUTPUT_SCHEMA))
    (tmp_path / "broken.avsc").write_text('{"type": "record", "name": "X", "fields": [')
    (tmp_path / "not-avro.avsc").write_text('{"type": "record", "name": "X", '
                                            '"fields": [{"name": "a", "type": "decimal128"}]}')
    return cli, tmp_path


def _refused(cli, *arguments: str, place: str) -> None:
    before = audit_count(cli)
    result = cli(*arguments)
    assert result.exit_code == 2, result.output
    message = result.stderr.strip()
    assert message.count("\n") == 0 and place in message, message
    assert audit_count(cli) == before


def test_an_unknown_feed(ready):
    cli, tmp_path = ready
    schema = write_schema(tmp_path, "s", INPUT_SCHEMA)
    for arguments in (("feed", "show", "no-such-feed"),
                      ("feed", "publish", "no-such-feed", schema),
                      ("feed", "check", "no-such-feed", schema)):
        _refused(cli, *arguments, place="unknown feed 'no-such-feed'")


def test_an_unknown_consumer(ready):
    cli, tmp_path = ready
    schema = write_schema(tmp_path, "s", OUTPUT_SCHEMA)
    for arguments in (("consumer", "update", "nobody", "--schema", schema),
                      ("consumer", "remove", "nobody"),
                      ("consumer", "check", "nobody", schema)):
        _refused(cli, *arguments, place="unknown consumer 'nobody'")


def test_a_consumer_of_an_unknown_model(ready):
    cli, tmp_path = ready
    _refused(cli, "consumer", "add", "dashboard", "--reads", "no-such-model", "--schema",
             write_schema(tmp_path, "s", OUTPUT_SCHEMA), place="unknown model 'no-such-model'")


@pytest.mark.parametrize("name", ["broken.avsc", "not-avro.avsc"])
def test_an_invalid_schema(ready, name):
    cli, tmp_path = ready
    path = str(tmp_path / name)
    _refused(cli, "feed", "publish", "segment-features", path, place=name)
    _refused(cli, "feed", "check", "segment-features", path, place=name)
    _refused(cli, "consumer", "add", "dashboard", "--reads", "m", "--schema", path, place=name)
    _refused(cli, "consumer", "update", "work-order-planner", "--schema", path, place=name)
    _refused(cli, "consumer", "check", "work-order-planner", path, place=name)
    assert cli.json("feed", "show", "segment-features")["current_version"] == 1


def test_a_model_naming_a_feed_that_does_not_exist(ready):
    cli, tmp_path = ready
    _refused(cli, "model", "set-feed", "m", "no-such-feed", place="unknown feed 'no-such-feed'")
    document, manifest = write_version_files(tmp_path / "v", manifest_extra='feed = "nowhere"\n')
    _refused(cli, "register", "m", str(document), "--manifest", str(manifest),
             place="manifest: feed")
    assert cli.json("model", "show", "m")["model"]["versions"] == 0


@pytest.mark.parametrize("days", ["0", "-3", "1.5", "many", "99999"])
def test_a_retention_that_is_not_a_positive_number_of_days(ready, days):
    cli, _ = ready
    before = audit_count(cli)
    result = cli("feed", "create", "other-feed", "--retain-days", days)
    assert result.exit_code == 2, result.output
    assert "retain-days" in result.output or "retain-days" in result.stderr
    assert audit_count(cli) == before
    assert [f["feed"] for f in cli.json("feed", "list")["feeds"]] == ["segment-features"]


def test_a_waiver_without_a_reason_and_a_second_feed_of_the_same_name(ready):
    cli, tmp_path = ready
    schema = write_schema(tmp_path, "s", INPUT_SCHEMA)
    _refused(cli, "feed", "publish", "segment-features", schema, "--waive", place="--waive")
    _refused(cli, "feed", "publish", "segment-features", schema, "--reason", "why",
             place="--reason")
    _refused(cli, "feed", "create", "segment-features", place="already exists")
    _refused(cli, "feed", "create", "Bad Name", place="invalid feed name")
