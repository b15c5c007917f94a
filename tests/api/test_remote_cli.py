"""The catalogue commands acting on a remote catalogue with --server URL --token T."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from registry.cli import main

from tests.api.api_helpers import make_api, served
from tests.catalogue.helpers import write_version_files
from tests.catalogue.stage_helpers import policy_keeping


@pytest.fixture
def remote(cli):
    api = make_api(cli)

    def run(role: str, *arguments: str, expect: int = 0):
        result = CliRunner().invoke(main, ["--server", url, "--token", api.secrets[role],
                                           *arguments, "--json"], catch_exceptions=False)
        assert result.exit_code == expect, result.output
        return json.loads(result.stdout) if result.stdout.strip() else None

    with served(api.client.application) as url:
        yield run


def test_a_version_climbs_to_live_through_the_remote_commands(remote, cli, tmp_path):
    assert remote("admin", "model", "create", "m", "--description", "remote")["name"] == "m"
    policy = tmp_path / "policy.toml"
    policy.write_text(policy_keeping({}, skippable=("shadow", "canary")))
    remote("admin", "model", "policy", "set", "m", str(policy))
    document, manifest = write_version_files(tmp_path / "v1")
    registered = remote("publisher", "register", "m", str(document), "--manifest", str(manifest))
    # The same version as a local registration of the same files would make.
    local = cli.json("model", "show", "m")["versions"][0]
    assert registered["document_digest"] == local["document_digest"]
    assert remote("reader", "check", "m", "1", "--to", "live")["would_move"] is True
    remote("approver", "approve", "m", "1", "--for", "live")
    assert remote("approver", "promote", "m", "1", "--to", "live")["moved"] is True
    assert remote("reader", "status", "m")["stages"]["live"] == [1]
    assert remote("reader", "audit", "verify")["ok"] is True
    assert [e["event"] for e in remote("reader", "history", "m")["events"]][-1] == "entered"


def test_remote_errors_keep_their_exit_codes(remote):
    remote("admin", "model", "create", "m")
    remote("admin", "model", "create", "m", expect=2)  # already exists
    remote("reader", "model", "create", "x", expect=2)  # a reader may not write


def test_init_refuses_a_remote_catalogue(remote):
    remote("admin", "init", expect=2)


def test_serving_commands_act_on_a_remote_catalogue(remote, cli, tmp_path):
    from datetime import timedelta

    from tests.after_release.served_files import now, shadow_day, write_outcomes

    remote("admin", "model", "create", "m")
    policy = tmp_path / "policy.toml"
    policy.write_text(policy_keeping({}, skippable=("shadow", "canary")))
    remote("admin", "model", "policy", "set", "m", str(policy))
    document, manifest = write_version_files(tmp_path / "v1")
    remote("publisher", "register", "m", str(document), "--manifest", str(manifest))
    remote("approver", "promote", "m", "1", "--to", "live")
    path, served = shadow_day(tmp_path / "day.parquet", now() + timedelta(milliseconds=5), 20,
                              versions=(1,))
    assert remote("publisher", "serving", "record", "m", str(path))["rows"] == 20
    later, _ = shadow_day(tmp_path / "later.parquet", now() + timedelta(days=1), 30,
                          versions=(1,), prefix="s")
    both = remote("publisher", "serving", "record", "m", str(path), str(later))
    assert [b["recorded"] for b in both["batches"]] == [False, True] and both["rows"] == 30
    outcomes = write_outcomes(tmp_path / "o.csv", served["ids"], [0, 1] * 10)
    assert remote("publisher", "serving", "outcomes", "m", str(outcomes))["joined"] == 20
    assert remote("reader", "serving", "report", "m")["versions"]["1"]["rows"] == 50
