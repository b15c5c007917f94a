"""`document get` and `status --watch`, locally and against a server."""

from __future__ import annotations

import hashlib
import json
import subprocess
import sys
import time

import pytest
from click.testing import CliRunner

from registry.cli import main
from registry.cli.document_get_commands import write_checked
from registry.errors import Refusal

from tests.api.api_helpers import make_api, served
from tests.catalogue.stage_helpers import register, set_up_model

APPROVER = "tomas.lindqvist"


@pytest.fixture
def two_versions(cli, tmp_path):
    set_up_model(cli, tmp_path, {}, skippable=("shadow", "canary"))
    register(cli, tmp_path, "v1")
    register(cli, tmp_path, "v2")
    cli.json("promote", "m", "1", "--to", "live", user=APPROVER)
    return cli


@pytest.fixture
def server(cli):
    api = make_api(cli)
    with served(api.client.application) as url:
        yield url, api.secrets["reader"]


@pytest.mark.parametrize("names", [("m", "1"), ("m@1",), ("m", "v1"), ("m", "--stage", "live")])
def test_document_get_writes_the_registered_bytes(two_versions, tmp_path, names):
    target = tmp_path / "out" / "model.bin"
    target.parent.mkdir()
    result = two_versions.json("document", "get", *names, "-o", str(target))
    assert target.read_bytes() == b"v1"
    assert result["sha256"] == hashlib.sha256(b"v1").hexdigest() and result["version"] == 1
    assert list(target.parent.iterdir()) == [target]  # no temporary file left behind


def test_document_get_from_a_server(two_versions, tmp_path, server):
    url, token = server
    target = tmp_path / "live.bin"
    result = CliRunner().invoke(main, ["--server", url, "--token", token, "document", "get",
                                       "m", "--stage", "live", "-o", str(target), "--json"],
                                catch_exceptions=False)
    assert result.exit_code == 0, result.output
    assert target.read_bytes() == b"v1" and json.loads(result.stdout)["version"] == 1
    missing = CliRunner().invoke(main, ["--server", url, "--token", token, "document", "get",
                                        "m", "--stage", "canary", "-o", str(target)])
    assert missing.exit_code == 2 and "holds" in missing.stderr


@pytest.mark.parametrize("arguments, fragment", [
    (("m", "1", "--stage", "live"), "not both"),
    (("m",), "not both"),
    (("m", "x"), "version number"),
    (("nobody", "1"), "unknown model"),
    (("m", "9"), "no version 9"),
    (("m", "--stage", "canary"), "holds"),
    (("m", "--stage", "attic"), "no stage"),
])
def test_document_get_bad_input_is_one_line_and_exit_2(two_versions, tmp_path, arguments,
                                                       fragment):
    target = tmp_path / "out.bin"
    result = two_versions("document", "get", *arguments, "-o", str(target))
    assert result.exit_code == 2, result.output
    assert fragment in result.stderr and len(result.stderr.strip().splitlines()) == 1
    assert not target.exists()


def test_bytes_that_do_not_match_the_digest_never_take_the_files_name(tmp_path):
    target = tmp_path / "model.bin"
    target.write_bytes(b"the previous document")
    with pytest.raises(Refusal):
        write_checked([b"tampered"], target, hashlib.sha256(b"original").hexdigest(), 8)
    assert target.read_bytes() == b"the previous document"
    assert list(tmp_path.iterdir()) == [target]


def _watch(arguments: list[str]) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "registry", *arguments, "status", "m",
                             "--watch", "--changes", "1", "--json"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


@pytest.mark.parametrize("where", ["local", "server"])
def test_status_watch_prints_each_change_as_it_happens(two_versions, server, where):
    url, token = server
    watcher = _watch(["--db", two_versions.url] if where == "local"
                     else ["--server", url, "--token", token])
    try:
        first = json.loads(watcher.stdout.readline())
        assert first["stages"]["live"] == [1]
        two_versions.json("promote", "m", "2", "--to", "live", user=APPROVER)
        moved = time.monotonic()
        second = json.loads(watcher.stdout.readline())
        assert time.monotonic() - moved < 2.0
        assert second["stages"]["live"] == [2]
        assert watcher.wait(10) == 0
    finally:
        watcher.kill()
        watcher.communicate()
