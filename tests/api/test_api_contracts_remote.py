"""The contract commands with --server: the same documents and exit codes over HTTP."""

from __future__ import annotations

import json
import threading

import pytest
from werkzeug.serving import make_server

from tests.api.api_helpers import make_api
from tests.catalogue.helpers import INPUT_SCHEMA, OUTPUT_SCHEMA
from tests.conftest import run_cli


@pytest.fixture
def remote(cli, tmp_path):
    api = make_api(cli)
    server = make_server("127.0.0.1", 0, api.client.application, threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    url = f"http://127.0.0.1:{server.server_port}"

    def run(*arguments: str, role: str = "publisher", expect: int = 0):
        result = run_cli(["--server", url, "--token", api.secrets[role], *arguments, "--json"])
        assert result.exit_code == expect, result.output
        return json.loads(result.stdout) if expect in (0, 1) else result

    try:
        yield run, api
    finally:
        server.shutdown()
        thread.join(5)


def test_feed_and_consumer_commands_work_against_a_server(remote, tmp_path):
    run, api = remote
    assert api.post("/models", {"name": "m"}).status_code == 201
    (tmp_path / "in.avsc").write_text(json.dumps(INPUT_SCHEMA))
    (tmp_path / "out.avsc").write_text(json.dumps(OUTPUT_SCHEMA))
    assert run("feed", "create", "segment-features", "--retain-days", "14")["retain_days"] == 14
    assert run("feed", "publish", "segment-features", str(tmp_path / "in.avsc"))[
        "feed_version"] == 1
    assert run("model", "set-feed", "m", "segment-features")["feed"] == "segment-features"
    assert run("feed", "check", "segment-features", str(tmp_path / "in.avsc"),
               role="reader")["passed"] is True
    assert run("feed", "list", role="reader")["feeds"][0]["current_version"] == 1
    assert run("consumer", "add", "planner", "--reads", "m", "--schema",
               str(tmp_path / "out.avsc"))["schema_version"] == 1
    assert run("consumer", "list", role="reader")["consumers"][0]["consumer"] == "planner"
    assert run("consumer", "check", "planner", str(tmp_path / "out.avsc"),
               role="reader")["passed"] is True
    assert run("consumer", "update", "planner", "--schema", str(tmp_path / "out.avsc"))[
        "changed"] is False
    assert run("feed", "show", "segment-features", role="reader")["in_flight"] == [1]
    assert run("consumer", "remove", "planner")["removed"] is True
    missing = run("feed", "show", "no-such-feed", role="reader", expect=2)
    assert "unknown feed" in missing.stderr
